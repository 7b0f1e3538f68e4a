"""Granger causality between gas flux and magma output, both directions, with stationarity checks.

x "Granger-causes" y when lagged x improves the prediction of y beyond y's own lags (Granger
1969): an F-test of the restricted OLS (constant + p lags of y) against the unrestricted one
(+ p lags of x). The F statistic and p-value computed here are those of statsmodels'
``grangercausalitytests(...)[p][0]["ssr_ftest"]`` (which tests whether its *second* column causes
the first; the tests pin the equality). The lag order p is chosen by a VAR information criterion
(statsmodels ``VAR.select_order``) up to ``max_lag``.

Granger causality is predictive precedence, not physical causation, and needs (approximately)
stationary series: ADF (null: unit root) and KPSS (null: stationary) are run on both series and
reported beside the test; with ``difference="auto"`` both series are differenced once when either
looks non-stationary. The test runs on the longest stretch where both series are valid.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import stats

from degas.errors import DegasError, NotEnoughDataError
from degas.grid import contiguous_runs


@dataclass(frozen=True)
class StationarityCheck:
    """ADF and KPSS on one series; ``stationary`` when ADF rejects (p < alpha) and KPSS does not."""

    series: str
    adf_stat: float
    adf_p: float
    kpss_stat: float
    kpss_p: float
    stationary: bool


@dataclass(frozen=True)
class GrangerDirection:
    """One direction: does ``cause`` help predict ``effect``? F test with (df_num, df_den)."""

    cause: str
    effect: str
    lag: int
    f_stat: float
    p_value: float
    df_num: int
    df_den: int


@dataclass(frozen=True)
class GrangerResult:
    """Granger tests both ways plus the stationarity checks behind them."""

    gas_to_magma: GrangerDirection
    magma_to_gas: GrangerDirection
    lag_order: int
    order_ic: str
    max_lag: int
    step: pd.Timedelta
    differenced: bool
    stationarity: tuple[StationarityCheck, ...]
    n_obs: int
    start: pd.Timestamp | None
    end: pd.Timestamp | None
    notes: tuple[str, ...] = field(default=())

    def to_frame(self) -> pd.DataFrame:
        """One row per direction: cause, effect, lag (bins), lag_s, F, p, df."""
        rows = []
        for d in (self.gas_to_magma, self.magma_to_gas):
            rows.append(
                {
                    "cause": d.cause,
                    "effect": d.effect,
                    "lag_bins": d.lag,
                    "lag_s": d.lag * self.step.total_seconds(),
                    "f_stat": d.f_stat,
                    "p_value": d.p_value,
                    "df_num": d.df_num,
                    "df_den": d.df_den,
                    "differenced": self.differenced,
                }
            )
        return pd.DataFrame(rows)

    def stationarity_frame(self) -> pd.DataFrame:
        return pd.DataFrame([s.__dict__ for s in self.stationarity])


def stationarity(x, name: str, *, alpha: float = 0.05) -> StationarityCheck:
    """ADF (autolag AIC, constant) and KPSS (constant, automatic lags) on a gap-free series."""
    from statsmodels.tools.sm_exceptions import InterpolationWarning
    from statsmodels.tsa.stattools import adfuller, kpss

    x = np.asarray(x, dtype="float64")
    adf = adfuller(x, autolag="AIC", result_object=False)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", InterpolationWarning)  # p outside the table: bounded, noted below
        kp = kpss(x, regression="c", nlags="auto", result_object=False)
    adf_stat, adf_p, kp_stat, kp_p = float(adf[0]), float(adf[1]), float(kp[0]), float(kp[1])
    return StationarityCheck(name, adf_stat, adf_p, kp_stat, kp_p, bool(adf_p < alpha and kp_p >= alpha))


def granger_f_test(effect, cause, lag: int) -> tuple[float, float, int, int]:
    """SSR-based F test that ``lag`` lags of ``cause`` improve an OLS of ``effect`` on its own lags.

    Returns (F, p, df_num, df_den); same definition as statsmodels' ``ssr_ftest``.
    """
    y = np.asarray(effect, dtype="float64")
    x = np.asarray(cause, dtype="float64")
    n = y.size
    p = int(lag)
    rows = n - p
    if rows <= 2 * p + 1:
        raise NotEnoughDataError(f"{n} samples are too few for a Granger test with {p} lags")
    target = y[p:]
    own = np.column_stack([y[p - i : n - i] for i in range(1, p + 1)])
    other = np.column_stack([x[p - i : n - i] for i in range(1, p + 1)])
    const = np.ones((rows, 1))
    xr = np.hstack([own, const])
    xu = np.hstack([own, other, const])
    rss_r = float(np.sum((target - xr @ np.linalg.lstsq(xr, target, rcond=None)[0]) ** 2))
    rss_u = float(np.sum((target - xu @ np.linalg.lstsq(xu, target, rcond=None)[0]) ** 2))
    df_den = rows - 2 * p - 1
    f = ((rss_r - rss_u) / p) / (rss_u / df_den)
    return float(f), float(stats.f.sf(f, p, df_den)), p, int(df_den)


def granger_test(
    gas,
    magma,
    *,
    max_lag: int | str | pd.Timedelta = 10,
    step: str | pd.Timedelta | None = None,
    ic: str = "aic",
    difference: bool | str = "auto",
    alpha: float = 0.05,
    gas_name: str = "gas",
    magma_name: str = "magma output",
) -> GrangerResult:
    """Granger causality gas -> magma output and magma output -> gas.

    Parameters
    ----------
    gas, magma : pandas Series on one regular grid (or arrays with ``step``); NaN = missing.
    max_lag : largest lag order tried (bins or a duration such as "10D").
    ic : VAR information criterion for the order: "aic", "bic", "hqic" or "fpe".
    difference : True, False, or "auto" (difference both once when ADF/KPSS flag either series).
    alpha : level used for the stationarity verdicts.
    """
    from statsmodels.tsa.api import VAR

    from degas.analysis.xcorr import _lag_bins, _pair

    if ic not in ("aic", "bic", "hqic", "fpe"):
        raise DegasError(f"unknown information criterion {ic!r}; valid: aic, bic, hqic, fpe")
    if difference not in (True, False, "auto"):
        raise DegasError("difference must be True, False or 'auto'")
    g, m, idx, step_td = _pair(gas, magma, step)
    maxp = max(1, _lag_bins(max_lag, step_td))
    runs = contiguous_runs(np.isfinite(g) & np.isfinite(m))
    if not runs:
        raise NotEnoughDataError(f"the {gas_name} and {magma_name} series have no common valid bins")
    a, b = max(runs, key=lambda r: r[1] - r[0])
    notes = []
    if b - a < len(g) * 0.9 and len(runs) > 1:
        notes.append(f"tested on the longest gap-free common stretch, {b - a} of {len(g)} bins")
    gs, ms = g[a:b], m[a:b]
    need = max(30, 5 * maxp)
    if gs.size < need:
        raise NotEnoughDataError(
            f"the longest gap-free common stretch is {gs.size} bins; a Granger test up to {maxp} lags needs {need}"
        )
    for name, x in ((gas_name, gs), (magma_name, ms)):
        if np.std(x) == 0:
            raise DegasError(f"the {name} series is constant; a Granger test is undefined")
    checks = [stationarity(gs, gas_name, alpha=alpha), stationarity(ms, magma_name, alpha=alpha)]
    diff = difference is True or (difference == "auto" and not all(c.stationary for c in checks))
    if diff:
        gs, ms = np.diff(gs), np.diff(ms)
        flagged = [c.series for c in checks if not c.stationary]
        notes.append(
            "non-stationary (" + ", ".join(flagged) + "): differenced" if flagged else "differenced on request"
        )
        checks += [stationarity(gs, f"diff {gas_name}", alpha=alpha),
                   stationarity(ms, f"diff {magma_name}", alpha=alpha)]
        if not all(c.stationary for c in checks[2:]):
            notes.append("caution: still non-stationary after differencing; Granger p-values are unreliable")
    elif not all(c.stationary for c in checks):
        notes.append("caution: a series looks non-stationary (ADF/KPSS); Granger p-values are unreliable")
    data = np.column_stack([gs, ms])
    maxp = int(min(maxp, (gs.size - 1) // 5))
    sel = VAR(data).select_order(maxlags=maxp)
    p = max(1, int(sel.selected_orders[ic]))
    f1, p1, dn1, dd1 = granger_f_test(ms, gs, p)
    f2, p2, dn2, dd2 = granger_f_test(gs, ms, p)
    notes.append("Granger causality is predictive precedence, not physical causation")
    return GrangerResult(
        gas_to_magma=GrangerDirection(gas_name, magma_name, p, f1, p1, dn1, dd1),
        magma_to_gas=GrangerDirection(magma_name, gas_name, p, f2, p2, dn2, dd2),
        lag_order=p,
        order_ic=ic,
        max_lag=maxp,
        step=step_td,
        differenced=bool(diff),
        stationarity=tuple(checks),
        n_obs=int(gs.size),
        start=None if idx is None else idx[a],
        end=None if idx is None else idx[b - 1],
        notes=tuple(notes),
    )

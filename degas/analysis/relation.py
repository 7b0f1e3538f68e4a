"""The gas–magma relation: gas(t) = g0 + k·Q(t + τ), fitted robustly, with block-bootstrap intervals.

* ``g0`` (kg/s) is the background (passive) degassing extrapolated to zero magma output;
* ``k`` is the excess gas per unit magma output: kg/s per m³/s DRE, i.e. kg SO2 per m³ DRE (or kg/s per unit
  eruptive fraction when the output is a chronology);
* ``τ`` is the lag. The issue text writes the relation as gas = g0 + k·Q(t − τ'); degas keeps its one lag
  convention instead: **a positive τ means gas leads magma output**, gas(t) responds to Q(t + τ) (τ' = −τ).

The fit is Huber's M-estimator (Huber 1964; t = 1.345, scale = MAD about 0 re-estimated each iteration)
computed by iteratively reweighted least squares exactly as statsmodels ``RLM(..., M=HuberT()).fit()`` does;
:func:`huber_irls` is a vectorised copy (checked against statsmodels in the tests) so that every bootstrap
replicate is fitted at once. Intervals are percentile intervals of a moving-block bootstrap (Künsch 1989)
over the fitted days, with blocks at least the decorrelation length of the residuals (common practice:
twice the AR(1) integral time scale (1 + φ)/(1 − φ), never under 7 days).

The record-level verdict is "gas independent of magma output" when k's interval includes 0 or the relation
explains almost nothing (R² on the fitted days below ``min_r2``, default 0.05, a project default, not a
published value). With petrological inputs, k is set beside the melt-inclusion expectation
(Devine, Sigurdsson & Davis 1984): the expected kg SO2 per m³ DRE of degassed magma.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from degas.errors import DegasError, NotEnoughDataError

HUBER_T = 1.345  # Huber's tuning constant (95 % efficiency at the normal; statsmodels' default)
MAD_NORMAL = 0.6744897501960817  # Φ⁻¹(3/4)
INDEPENDENT = "gas independent of magma output"
RELATED = "gas tracks magma output"
MAGMA_UNITS = {"extrusion_rate": "m³/s DRE", "extrusion_rate_unknown_basis": "m³/s (DRE/bulk basis unknown)",
               "eruptive_fraction": "eruptive fraction"}


@dataclass(frozen=True)
class RelationResult:
    """The fitted relation gas(t) = g0 + k·Q(t + lag) and the record-level verdict.

    Attributes
    ----------
    g0_kg_s, g0_ci : background at zero output (kg/s) and its bootstrap interval (the given value, twice,
        when the background was given).
    k, k_ci : excess gas per unit output (kg/s per m³/s = kg/m³, or kg/s per unit eruptive fraction).
    lag : τ (positive: gas leads). r_squared : 1 − SS_res/SS_tot on the fitted days.
    n_days : days with both values; n_fit_days : days used by the fit (pieces consistent with one relation).
    residual_scale_kg_s : robust scale of the daily residuals; residual_phi : their lag-1 autocorrelation.
    block_days : bootstrap block length; n_boot : replicates; ci_level : interval level.
    background_given : g0 was set by the user (project or ``--gas-background``), not estimated.
    magma_measure : key of :data:`MAGMA_UNITS`. verdict : :data:`INDEPENDENT` or :data:`RELATED`.
    petrological_k, petrological_k_ci : Devine et al. (1984) expectation, kg SO2 per m³ DRE (NaN without
        petrology or when the output is not a DRE rate).
    boot : bootstrap replicates of (g0, k), shape (n_boot, 2), for prediction intervals.
    """

    g0_kg_s: float
    g0_ci: tuple[float, float]
    k: float
    k_ci: tuple[float, float]
    lag: pd.Timedelta
    r_squared: float
    n_days: int
    n_fit_days: int
    residual_scale_kg_s: float
    residual_phi: float
    block_days: int
    n_boot: int
    ci_level: float
    background_given: bool
    magma_measure: str
    verdict: str
    petrological_k: float = np.nan
    petrological_k_ci: tuple[float, float] = (np.nan, np.nan)
    boot: np.ndarray = field(default_factory=lambda: np.empty((0, 2)), repr=False)
    notes: tuple[str, ...] = field(default=())

    @property
    def independent(self) -> bool:
        return self.verdict == INDEPENDENT

    @property
    def lag_days(self) -> float:
        return self.lag / pd.Timedelta("1D")

    def predict(self, q) -> np.ndarray:
        """Predicted gas flux (kg/s) for output ``q`` (m³/s DRE or eruptive fraction)."""
        return self.g0_kg_s + self.k * np.asarray(q, dtype=float)

    def predict_se(self, q) -> np.ndarray:
        """Bootstrap standard error of the predicted mean gas at output ``q`` (kg/s)."""
        q = np.atleast_1d(np.asarray(q, dtype=float))
        if len(self.boot) < 2:
            return np.zeros_like(q)
        pred = self.boot[:, :1] + self.boot[:, 1:2] * q[None, :]
        return np.nanstd(pred, axis=0, ddof=1)

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame([self.summary()])

    def summary(self) -> dict:
        return {"verdict": self.verdict, "g0_kg_s": self.g0_kg_s, "g0_low_kg_s": self.g0_ci[0],
                "g0_high_kg_s": self.g0_ci[1], "k": self.k, "k_low": self.k_ci[0], "k_high": self.k_ci[1],
                "lag_days": self.lag_days, "r_squared": self.r_squared, "n_days": self.n_days,
                "n_fit_days": self.n_fit_days, "block_days": self.block_days, "n_boot": self.n_boot,
                "background_given": self.background_given, "magma_measure": self.magma_measure,
                "petrological_k": self.petrological_k, "petrological_k_low": self.petrological_k_ci[0],
                "petrological_k_high": self.petrological_k_ci[1]}


def huber_irls(x: np.ndarray, y: np.ndarray, *, intercept: bool = True, t: float = HUBER_T,
               maxiter: int = 50, tol: float = 1e-8) -> np.ndarray:
    """Huber M-estimate of y = a + b·x (or y = b·x) for many data sets at once.

    Iteratively reweighted least squares as in statsmodels ``RLM(y, X, M=HuberT(t)).fit()`` (start from OLS;
    each step: scale = median|r|/Φ⁻¹(3/4), weights min(1, t/|r/scale|), weighted least squares; stop when the
    sum of Huber ρ changes by less than ``tol``). Rows are data sets: ``x``, ``y`` of shape (m, n) (NaN
    entries are left out). Returns (m, 2) [a, b] (a = 0 without intercept).
    """
    x = np.atleast_2d(np.asarray(x, dtype=float))
    y = np.atleast_2d(np.asarray(y, dtype=float))
    ok = np.isfinite(x) & np.isfinite(y)
    x = np.where(ok, x, 0.0)
    y = np.where(ok, y, 0.0)
    w = ok.astype(float)
    active = np.ones(x.shape[0], dtype=bool)

    def wls(w):
        sw = w.sum(1)
        if intercept:
            with np.errstate(all="ignore"):
                mx = (w * x).sum(1) / sw
                my = (w * y).sum(1) / sw
                sxx = (w * (x - mx[:, None]) ** 2).sum(1)
                b = (w * (x - mx[:, None]) * (y - my[:, None])).sum(1) / sxx
            return my - b * mx, b
        with np.errstate(all="ignore"):
            b = (w * x * y).sum(1) / (w * x * x).sum(1)
        return np.zeros_like(b), b

    a, b = wls(w)
    prev = np.full(x.shape[0], np.inf)
    median = np.median if ok.all() else np.nanmedian  # nanmedian is several times slower
    for _ in range(maxiter):
        r = np.where(ok, y - a[:, None] - b[:, None] * x, np.nan)
        scale = median(np.abs(r), axis=1) / MAD_NORMAL
        scale = np.where(scale > 0, scale, np.nan)
        u = np.abs(r) / scale[:, None]
        wt = np.where(ok, np.where(u <= t, 1.0, t / np.where(u > 0, u, 1.0)), 0.0)
        a_new, b_new = wls(wt)
        a = np.where(active, a_new, a)
        b = np.where(active, b_new, b)
        r = np.where(ok, y - a[:, None] - b[:, None] * x, np.nan)
        scale = median(np.abs(r), axis=1) / MAD_NORMAL
        u = np.abs(r) / np.where(scale > 0, scale, np.nan)[:, None]
        dev = np.nansum(np.where(u <= t, 0.5 * u**2, t * u - 0.5 * t**2), axis=1)
        active &= ~(np.abs(dev - prev) <= tol)
        prev = dev
        if not active.any():
            break
    return np.column_stack([a, b])


def block_length(resid: np.ndarray, *, minimum: int = 7) -> tuple[int, float]:
    """Bootstrap block length (bins): twice the decorrelation length of ``resid``, at least ``minimum``.

    The decorrelation length is the first lag at which the autocorrelation falls below 1/e (the e-folding
    time; common practice), which also covers smooth pulses whose lag-1 autocorrelation alone would
    understate it. Returns (block, φ) with φ the lag-1 autocorrelation, clipped to [0, 0.95].
    """
    r = np.asarray(resid, dtype=float)
    r = r - np.nanmean(r) if np.isfinite(r).any() else r
    ok = np.isfinite(r)
    z = np.where(ok, r, 0.0)
    n = int(ok.sum())
    if n < 8 or not np.any(z):
        return minimum, 0.0
    c0 = float(np.dot(z, z))
    acf = [1.0]
    for k in range(1, max(2, n // 3)):
        acf.append(float(np.dot(z[:-k], z[k:])) / c0)
        if acf[-1] < np.exp(-1):
            break
    phi = float(np.clip(acf[1], 0.0, 0.95))
    return max(minimum, 2 * (len(acf) - 1)), phi


def block_starts(n: int, block: int, n_boot: int, rng: np.random.Generator) -> np.ndarray:
    """Moving-block bootstrap (Künsch 1989) block starts, shape (n_boot, ceil(n / block)): for each replicate,
    enough blocks of ``block`` consecutive bins (1 <= block <= n), drawn with replacement from the n - block + 1
    possible starts. The one draw behind :func:`block_indices`, ``xcorr``'s weights and ``stretch_lags``."""
    return rng.integers(0, n - block + 1, size=(n_boot, int(np.ceil(n / block))))


def block_indices(n: int, block: int, n_boot: int, rng: np.random.Generator) -> np.ndarray:
    """Moving-block bootstrap (Künsch 1989) index arrays, shape (n_boot, n): the blocks of
    :func:`block_starts` laid end to end and cut to n."""
    block = max(1, min(block, n))
    starts = block_starts(n, block, n_boot, rng)
    idx = (starts[:, :, None] + np.arange(block)[None, None, :]).reshape(n_boot, -1)
    return idx[:, :n]


def petrological_expectation(petrology, *, n_draws: int = 4000, seed: int | None = 0) -> tuple[float, tuple]:
    """Devine, Sigurdsson & Davis (1984): expected kg SO2 per m³ DRE and a 95 % Monte Carlo interval.

    ``petrology`` is a :class:`degas.analysis.budget.PetrologyInputs` (its central value is
    ``so2_per_m3``; the interval draws each input from a normal with its 1-sigma) or a
    :class:`degas.analysis.budget.SampledPetrology` (inclusion S populations: the median of its draws, the
    interval from resampling them), exactly as the gas budget reads it.
    """
    draws = petrology.sample_so2_per_m3(n_draws, seed)  # the budget's own sampler (same clipping)
    lo, hi = np.percentile(draws, [2.5, 97.5])
    return float(petrology.so2_per_m3), (float(lo), float(hi))


def fit_relation(
    gas: pd.Series,
    magma: pd.Series,
    *,
    lag: pd.Timedelta | str | int = 0,
    fit_mask: pd.Series | np.ndarray | None = None,
    gas_background: float | None = None,
    magma_measure: str = "extrusion_rate",
    n_boot: int = 300,
    ci_level: float = 0.95,
    min_r2: float = 0.05,
    petrology=None,
    seed: int | None = 0,
) -> RelationResult:
    """Fit gas(t) = g0 + k·Q(t + lag) by Huber regression on the daily grid, with block-bootstrap intervals.

    Parameters
    ----------
    gas : gas flux, kg/s, on a regular UTC grid. magma : magma output on the same grid (m³/s DRE, or
        eruptive fraction 0-1).
    lag : τ (duration, or whole bins); positive = gas leads: gas(t) is paired with Q(t + τ).
    fit_mask : boolean per bin (gas time), True where the bin enters the fit (default: every bin with both
        values). Regime classification passes the days of pieces consistent with one relation.
    gas_background : given background g0 (kg/s): only k is fitted (regression through g0).
    magma_measure : ``"extrusion_rate"``, ``"extrusion_rate_unknown_basis"`` or ``"eruptive_fraction"``.
    n_boot : block-bootstrap replicates (0: no intervals). min_r2 : R² below this → independent.
    petrology : :class:`~degas.analysis.budget.PetrologyInputs` or :class:`~degas.analysis.budget.SampledPetrology`
        for the Devine et al. (1984) expectation.
    """
    if magma_measure not in MAGMA_UNITS:
        raise DegasError(f"unknown magma measure {magma_measure!r}; valid: {', '.join(MAGMA_UNITS)}")
    if not gas.index.equals(magma.index):
        raise DegasError("gas and magma output must be on the same grid (align them first)")
    g = gas.to_numpy(dtype=float)
    q = _shift(magma.to_numpy(dtype=float), _lag_bins(lag, gas.index))
    lag_td = _lag_td(lag, gas.index)
    both = np.isfinite(g) & np.isfinite(q)
    n_days = int(both.sum())
    sel = both if fit_mask is None else both & np.asarray(fit_mask, dtype=bool)
    if sel.sum() < 10:
        raise NotEnoughDataError(f"only {int(sel.sum())} bins with both gas and magma output to fit the relation")
    notes: list[str] = []
    xs, ys = q[sel], g[sel]
    given = gas_background is not None
    if given:
        if gas_background < 0:
            raise DegasError("the gas background must be 0 or more (t/d); change --gas-background")
        coef = huber_irls(xs, ys - gas_background, intercept=False)[0]
        coef[0] = gas_background
    else:
        if np.ptp(xs) <= 0:
            raise NotEnoughDataError("magma output does not vary over the fitted days: no relation can be fitted")
        coef = huber_irls(xs, ys)[0]
    g0, k = float(coef[0]), float(coef[1])
    resid = ys - g0 - k * xs
    ss_tot = float(np.sum((ys - ys.mean()) ** 2))
    r2 = 1.0 - float(np.sum(resid**2)) / ss_tot if ss_tot > 0 else 0.0
    full_resid = np.where(sel, g - g0 - k * q, np.nan)
    block, phi = block_length(full_resid[sel])
    scale = float(np.median(np.abs(resid)) / MAD_NORMAL)
    boot = np.empty((0, 2))
    alpha = (1 - ci_level) / 2
    g0_ci, k_ci = (g0, g0), (np.nan, np.nan)
    if n_boot > 0:
        idx = block_indices(len(xs), block, n_boot, np.random.default_rng(seed))
        bx, by = xs[idx], ys[idx]
        if given:
            boot = huber_irls(bx, by - gas_background, intercept=False)
            boot[:, 0] = gas_background
        else:
            boot = huber_irls(bx, by)
        lo, hi = np.nanpercentile(boot, [100 * alpha, 100 * (1 - alpha)], axis=0)
        k_ci = (float(lo[1]), float(hi[1]))
        if not given:
            g0_ci = (float(lo[0]), float(hi[0]))
    else:
        notes.append("no bootstrap: no intervals, and the verdict rests on R² alone")
    independent = r2 < min_r2 or not np.isfinite(k) or k <= 0 or (np.isfinite(k_ci[0]) and k_ci[0] <= 0)
    verdict = INDEPENDENT if independent else RELATED
    if independent:
        why = []
        if np.isfinite(k_ci[0]) and k_ci[0] <= 0:
            why.append(f"the {ci_level:.0%} interval of k includes 0")
        if r2 < min_r2:
            why.append(f"R² = {r2:.2f} < {min_r2:g}")
        if k <= 0:
            why.append("k is not positive")
        notes.append(f"{INDEPENDENT}: {'; '.join(why) or 'no relation'}")
    pk, pk_ci = np.nan, (np.nan, np.nan)
    if petrology is not None and magma_measure == "extrusion_rate":
        pk, pk_ci = petrological_expectation(petrology, seed=seed)
        notes.append(f"k beside the petrological expectation (Devine et al. 1984): {k:.4g} (95 % {k_ci[0]:.4g} to "
                     f"{k_ci[1]:.4g}) vs {pk:.4g} (95 % {pk_ci[0]:.4g} to {pk_ci[1]:.4g}) kg SO2/m³ DRE; the "
                     "petrological value is a minimum (melt-inclusion sulphur only)")
    if magma_measure == "extrusion_rate_unknown_basis":
        notes.append("the extrusion rate's DRE/bulk basis is unknown: k is per m³ of that unknown basis")
    if fit_mask is not None and sel.sum() < both.sum():
        notes.append(f"fitted on {int(sel.sum())} of {n_days} days (pieces consistent with one relation)")
    return RelationResult(g0, g0_ci, k, k_ci, lag_td, float(r2), n_days, int(sel.sum()), scale, phi, block,
                          int(n_boot), ci_level, given, magma_measure, verdict, pk, pk_ci, boot, tuple(notes))


def _lag_bins(lag, index: pd.Index) -> int:
    if isinstance(lag, int | np.integer):
        return int(lag)
    step = pd.Timedelta(index[1] - index[0]) if len(index) > 1 else pd.Timedelta("1D")
    return int(round(pd.Timedelta(lag) / step))


def _lag_td(lag, index: pd.Index) -> pd.Timedelta:
    step = pd.Timedelta(index[1] - index[0]) if len(index) > 1 else pd.Timedelta("1D")
    return _lag_bins(lag, index) * step


def _shift(q: np.ndarray, lag_bins: int) -> np.ndarray:
    """Q(t + lag) on the grid of t (NaN beyond the ends)."""
    out = np.full_like(q, np.nan)
    if lag_bins >= 0:
        out[: len(q) - lag_bins] = q[lag_bins:]
    else:
        out[-lag_bins:] = q[: len(q) + lag_bins]
    return out

"""Rolling coupling: the lagged cross-correlation of :mod:`degas.analysis.xcorr` in moving windows.

Each window (default 60 days, moved by 7 days) gets its own prewhitening fit, its peak
correlation, best lag (positive = gas leads magma output) and a surrogate p-value of the maximum
|r| over lags (default 200 surrogates per window, fewer than the 1,000 of a single analysis, to keep
the run short; stated in the result). No bootstrap interval is computed per window. Windows with
too few valid pairs are kept as rows with NaN and the reason.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from degas.analysis.xcorr import _lag_bins, _pair, cross_correlate
from degas.errors import DegasError


@dataclass(frozen=True)
class CouplingResult:
    """Time series of coupling in moving windows.

    ``windows`` columns: start, end, centre (UTC), n_valid (bins with both values), peak_r,
    best_lag (Timedelta), best_lag_days, p_value, significant (p < alpha), prewhitening_order,
    reason (why a window has no result, else empty).
    """

    windows: pd.DataFrame
    window: pd.Timedelta
    step: pd.Timedelta
    max_lag: pd.Timedelta
    n_surrogates: int
    variant: str
    alpha: float
    notes: tuple[str, ...] = field(default=())

    def to_frame(self) -> pd.DataFrame:
        return self.windows.copy()


def rolling_coupling(
    gas: pd.Series,
    magma: pd.Series,
    *,
    window: str | pd.Timedelta = "60D",
    step: str | pd.Timedelta = "7D",
    max_lag: str | pd.Timedelta | int = "15D",
    n_surrogates: int = 200,
    variant: str = "prewhitened",
    alpha: float = 0.05,
    min_valid: float = 0.7,
    max_ar_order: int = 5,
    seed: int | None = 0,
    gas_name: str = "gas",
    magma_name: str = "magma output",
) -> CouplingResult:
    """Cross-correlation peak, best lag and significance in moving windows.

    Parameters
    ----------
    gas, magma : pandas Series on one regular UTC grid (gas flux kg/s; magma output m³/s or 0-1).
    window, step : window length and shift (durations).
    max_lag : lag search range within each window.
    n_surrogates : phase-randomised surrogates per window (0 disables the p-value).
    variant : as in :func:`degas.analysis.xcorr.cross_correlate`.
    alpha : level for the ``significant`` column.
    min_valid : windows where fewer than this share of bins have both values are skipped.
    """
    g, m, idx, grid_step = _pair(gas, magma, None)
    if idx is None:
        raise DegasError("rolling coupling needs series indexed by UTC time")
    w_bins = int(pd.Timedelta(window) // grid_step)
    s_bins = int(pd.Timedelta(step) // grid_step)
    L = _lag_bins(max_lag, grid_step)
    if s_bins < 1 or w_bins < 1:
        raise DegasError("window and step must be at least one grid step")
    if w_bins < 2 * L + 10:
        raise DegasError(f"window of {w_bins} bins is too short for lags up to ±{L} bins; need {2 * L + 10}")
    if w_bins > len(g):
        raise DegasError(f"window ({pd.Timedelta(window)}) is longer than the series ({len(g)} bins)")
    seeds = np.random.SeedSequence(seed).spawn(max(1, (len(g) - w_bins) // s_bins + 1))
    rows = []
    for i, a in enumerate(range(0, len(g) - w_bins + 1, s_bins)):
        b = a + w_bins
        gi, mi = g[a:b], m[a:b]
        both = np.isfinite(gi) & np.isfinite(mi)
        row = {"start": idx[a], "end": idx[b - 1] + grid_step, "centre": idx[a] + (w_bins * grid_step) / 2,
               "n_valid": int(both.sum()), "peak_r": np.nan, "best_lag": pd.NaT, "best_lag_days": np.nan,
               "p_value": np.nan, "significant": False, "prewhitening_order": np.nan, "reason": ""}
        if both.mean() < min_valid:
            row["reason"] = f"only {both.mean():.0%} of bins have both values (< {min_valid:.0%})"
            rows.append(row)
            continue
        try:
            res = cross_correlate(
                pd.Series(gi, idx[a:b]), pd.Series(mi, idx[a:b]), max_lag=L, variant=variant,
                n_surrogates=n_surrogates, n_boot=0, seed=int(seeds[i].generate_state(1)[0]),
                max_ar_order=max_ar_order, gas_name=gas_name, magma_name=magma_name,
            )
        except DegasError as exc:
            row["reason"] = str(exc)
            rows.append(row)
            continue
        row.update(peak_r=res.peak_r, best_lag=res.best_lag, best_lag_days=res.best_lag / pd.Timedelta("1D"),
                   p_value=res.p_value, significant=bool(res.p_value < alpha) if n_surrogates else False,
                   prewhitening_order=res.prewhitening.order if res.prewhitening else np.nan)
        rows.append(row)
    df = pd.DataFrame(rows)
    notes = [f"{n_surrogates} surrogates per window; p-values are not corrected across windows"]
    skipped = int((df["reason"] != "").sum())
    if skipped:
        notes.append(f"{skipped} of {len(df)} windows without a result (see 'reason')")
    return CouplingResult(df, pd.Timedelta(window), pd.Timedelta(step), L * grid_step, int(n_surrogates), variant,
                          alpha, tuple(notes))

"""Rolling coupling: the lagged cross-correlation of :mod:`degas.analysis.xcorr` in moving windows.

Each window (default 60 days, moved by 7 days) gets its own prewhitening fit, its peak
correlation, best lag (positive = gas leads magma output) and a surrogate p-value of the maximum
|r| over lags (default 200 surrogates per window, fewer than the 1,000 of a single analysis, to keep
the run short; stated in the result). No bootstrap interval is computed per window. Windows with
too few valid pairs are kept as rows with NaN and the reason.

Each window is the single analysis of :func:`degas.analysis.xcorr.cross_correlate` on that window
(same preparation, same r, same surrogates and seed, same test); only the evaluation of the
surrogates' r is specialised (:func:`_surrogate_max32`: one circular FFT frame per surrogate, single
precision), which makes a window about twice as fast. The null of each window is its own: phase
surrogates from the window's gap-corrected spectrum, not the whole record's.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import scipy.fft as sfft

from degas.analysis.surrogates import gapped_amplitudes, iter_phase_spectra
from degas.analysis.xcorr import (
    MIN_PAIRS,
    VARIANTS,
    Prewhitening,
    _lag_bins,
    _LagBasis,
    _pair,
    _pearson_rows,
    _prepare,
    _test_length,
    _wrap_is_cheap,
    surrogate_test,
)
from degas.errors import DegasError, NotEnoughDataError


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


def _window(gi: np.ndarray, mi: np.ndarray, L: int, n_surrogates: int, seed: int, variant: str,
            max_ar_order: int, gas_name: str, magma_name: str) -> tuple[float, int, float, Prewhitening | None]:
    """(peak r, best lag in bins, surrogate p-value, prewhitening) of one window.

    The pair is prepared, and r(k) computed, exactly as :func:`degas.analysis.xcorr.cross_correlate`
    does for the window alone. The p-value is the test of :func:`degas.analysis.xcorr.surrogate_test`
    with the same seed and the same surrogates, the surrogates' r evaluated by :func:`_surrogate_max32`;
    windows that the single analysis sends down another route (complete data with a short lag range)
    use :func:`surrogate_test` itself.
    """
    g, m, *_, pw, _ = _prepare(gi, mi, L, variant, max_ar_order, gas_name, magma_name)
    basis = _LagBasis(m, L)
    gvalid = np.isfinite(g)
    r_obs = _pearson_rows(g[None, :], gvalid, basis)[0][0]
    if not np.isfinite(r_obs).any():
        raise NotEnoughDataError(f"fewer than {MIN_PAIRS} valid pairs at every lag")
    j = int(np.nanargmax(np.abs(r_obs)))
    peak, best = float(r_obs[j]), j - L
    if not n_surrogates:
        return peak, best, np.nan, pw
    rng = np.random.default_rng(seed)
    n = _test_length(g.size)
    if n < g.size:
        g, m = g[:n], m[:n]
        basis = _LagBasis(m, L)
        gvalid = np.isfinite(g)
        r_obs = _pearson_rows(g[None, :], gvalid, basis)[0][0]
    if gvalid.all() and basis.complete and _wrap_is_cheap(basis):
        return peak, best, surrogate_test(g, m, L, n_surrogates=n_surrogates, seed=rng)[0], pw
    t_obs = float(np.nanmax(np.abs(r_obs)))
    t_s = _surrogate_max32(g, m, gvalid, L, n_surrogates, rng)
    return peak, best, (1 + int(np.sum(t_s >= t_obs))) / (n_surrogates + 1), pw


def _frame(k: int) -> int:
    """Smallest length >= k of the form m·2^j, m in {1, 3, 5, 9, 15} (pocketfft is fastest on these)."""
    return min(m * 2 ** max(0, math.ceil(math.log2(k / m))) for m in (1, 3, 5, 9, 15))


def _surrogate_max32(g: np.ndarray, m: np.ndarray, gvalid: np.ndarray, L: int, n_surrogates: int,
                     rng: np.random.Generator) -> np.ndarray:
    """max_k |r(k)| of ``n_surrogates`` gapped phase surrogates of ``g`` against ``m`` (NaN = missing).

    Same surrogates and statistic as the gapped route of :func:`degas.analysis.xcorr.surrogate_max_stat`
    (Theiler et al. 1992 phases on the gap-corrected amplitudes of Parzen 1963, gas mask re-imposed); the
    lagged sums Σ g·b, Σ g·m, Σ g²·b (b = magma mask) are circular correlations on a frame P ≥ n + L
    (no wrap for |k| ≤ L), in float32; the pair counts and magma sums are exact (float64, once).
    """
    n = g.size
    mvalid = np.isfinite(m)
    P = _frame(n + L)
    lag_idx = np.arange(-L, L + 1) % P
    mc = float(m[mvalid].mean())
    mz = np.where(mvalid, m - mc, 0.0)
    Y = sfft.rfft(np.vstack([mvalid.astype(float), mz, mz * mz]), P, axis=1, workers=1)
    a = gvalid.astype(float)
    A = np.conj(sfft.rfft(a, P, workers=1))
    N, Sm, Smm = (sfft.irfft(A[None, :] * Y, P, axis=1, workers=1)[:, lag_idx])
    N = np.rint(N)
    with np.errstate(invalid="ignore"):
        dm = N * Smm - Sm**2
    Yb, Ym = Y[0].astype(np.complex64), Y[1].astype(np.complex64)
    gz = (g - np.nanmean(g)) / np.nanstd(g)
    amp = gapped_amplitudes(gz)
    chunk = max(1, min(64, int(2_000_000 // n)))
    out = np.empty(n_surrogates)
    i = 0
    na = max(a.sum(), 1.0)
    a32 = a.astype(np.float32)
    for z in iter_phase_spectra(gz, n_surrogates, seed=rng, chunk_size=chunk, amplitudes=amp):
        S = sfft.irfft(z.astype(np.complex64), n, axis=1, workers=1)
        S *= a32
        gc = S.sum(axis=1, keepdims=True) / np.float32(na)  # centring: conditioning only
        S -= gc
        S *= a32
        U = np.conj(sfft.rfft(S, P, axis=1, workers=1))
        S *= S
        U2 = np.conj(sfft.rfft(S, P, axis=1, workers=1))
        Sg = sfft.irfft(U * Yb, P, axis=1, workers=1)[:, lag_idx].astype(float)
        U *= Ym
        Sgm = sfft.irfft(U, P, axis=1, workers=1)[:, lag_idx].astype(float)
        U2 *= Yb
        Sgg = sfft.irfft(U2, P, axis=1, workers=1)[:, lag_idx].astype(float)
        with np.errstate(invalid="ignore", divide="ignore"):
            den = (N * Sgg - Sg**2) * dm
            r = np.abs(N * Sgm - Sg * Sm) / np.sqrt(np.where(den > 0, den, np.nan))
        r = np.where(N >= MIN_PAIRS, np.minimum(r, 1.0), np.nan)
        out[i : i + r.shape[0]] = np.nanmax(r, axis=1)
        i += r.shape[0]
    return out


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
    if variant not in VARIANTS:
        raise DegasError(f"unknown variant {variant!r}; valid: {', '.join(VARIANTS)}")
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
            peak, best, p, pw = _window(gi, mi, L, n_surrogates, int(seeds[i].generate_state(1)[0]), variant,
                                        max_ar_order, gas_name, magma_name)
        except DegasError as exc:
            row["reason"] = str(exc)
            rows.append(row)
            continue
        row.update(peak_r=peak, best_lag=best * grid_step, best_lag_days=best * grid_step / pd.Timedelta("1D"),
                   p_value=p, significant=bool(p < alpha) if n_surrogates else False,
                   prewhitening_order=pw.order if pw else np.nan)
        rows.append(row)
    df = pd.DataFrame(rows)
    notes = [f"{n_surrogates} surrogates per window; p-values are not corrected across windows"]
    skipped = int((df["reason"] != "").sum())
    if skipped:
        notes.append(f"{skipped} of {len(df)} windows without a result (see 'reason')")
    return CouplingResult(df, pd.Timedelta(window), pd.Timedelta(step), L * grid_step, int(n_surrogates), variant,
                          alpha, tuple(notes))

"""Lags where they mean something: the gas–magma lag inside coupled stretches, as a profile fit of the relation.

Across a whole record, regime steps (a pause, a new eruptive phase) dominate any cross-correlation: two
series that step together correlate at every lag near the step, so the peak says little about a lead or lag.
Inside coupled stretches the relation gas(t) = g0_s + k·Q(t + L) + e(t) holds with one intercept g0_s per
intercept group s (a segment, or a whole coupled stretch) and one common slope k. For every lag L it is
fitted by least squares over the pairs (gas(t), Q(t + L)) of the selected days — the intercepts taken out by
centring both members of the pairs within each group *over the pairs present at that lag* (the within, or
fixed-effects, estimator; e.g. Wooldridge 2010, ch. 10) — and the lag is the one that maximises the fit: the
profile least-squares estimate of τ (the pooled within-group r² is 1 − RSS/TSS of that fit, so its argmax is
the argmin of the residual sum of squares: profile least squares over a nonlinear parameter, Seber & Wild
1989). The gas never carries a step between groups into the fit, so regime steps cannot make r; the output's
level changes *inside* a group stay in, and they carry the lag as much as its pulses do. **A positive lag means
gas leads magma output** (r(L) = corr(gas(t), Q(t + L))). ``k_within`` is k at the best lag.

The interval of the lag (and of ``k_within``) is a percentile interval of a moving-block bootstrap
(Künsch 1989) over the selected days, blocks twice the decorrelation length of the demeaned gas (see
:func:`degas.analysis.relation.block_length`), at least 7 days; each replicate re-fits the profile and re-picks
its own best lag.

Prewhitening both series with the AR filter of the residuals (Cochrane & Orcutt 1949, order by AIC) before the
profile was tried on the scenario bank of issue 9 and made the lag worse (13 → 8 of 20 high-background
records, with per-segment intercepts): smooth output pulses lose most of their power to the filter, and each
missing gas day costs one more filtered day, so it is not used.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import scipy.fft as sfft

from degas.analysis.relation import block_length, block_starts
from degas.analysis.surrogates import gapped_amplitudes, iter_phase_spectra
from degas.errors import NotEnoughDataError

DAY = pd.Timedelta("1D")


@dataclass(frozen=True)
class StretchLagResult:
    """Lag (positive: gas leads) and within-segment slope inside the selected (coupled) stretches.

    ``r_by_lag`` columns: lag_days, r (pooled within the intercept groups, centred per group and lag).
    ``lag_ci`` and ``k_within_ci`` are block-bootstrap percentile intervals (None without bootstrap).
    ``k_within`` is kg/s of gas per m³/s of output (kg/m³). ``step_share`` is the share of the variance of
    each series (gas, output) carried by the group means over the whole record: when both are large, a
    whole-record CCF is dominated by regime changes. ``p_value`` : share of phase-randomised surrogates of the
    output whose largest correlation over the lags searched reaches the observed peak (NaN without
    surrogates).
    """

    lag: pd.Timedelta
    lag_ci: tuple[pd.Timedelta, pd.Timedelta] | None
    peak_r: float
    r_by_lag: pd.DataFrame
    k_within: float
    k_within_ci: tuple[float, float] | None
    n_days: int
    block_days: int
    n_boot: int
    step_share: tuple[float, float]
    ci_level: float = 0.95
    notes: tuple[str, ...] = field(default=())
    p_value: float = np.nan
    n_surrogates: int = 0

    @property
    def lag_days(self) -> float:
        return self.lag / DAY

    @property
    def ci_width_days(self) -> float:
        return np.nan if self.lag_ci is None else (self.lag_ci[1] - self.lag_ci[0]) / DAY

    @property
    def steps_dominate(self) -> bool:
        """True when segment means carry most of both series' variance (whole-record CCF = regime steps)."""
        return min(self.step_share) > 0.5

    def to_frame(self) -> pd.DataFrame:
        return self.r_by_lag.copy()


def _demean(x: np.ndarray, seg: np.ndarray) -> np.ndarray:
    out = np.full_like(x, np.nan)
    ok = np.isfinite(x) & (seg >= 0)
    if not ok.any():
        return out
    n = np.bincount(seg[ok], minlength=seg.max() + 1)
    s = np.bincount(seg[ok], weights=x[ok], minlength=seg.max() + 1)
    with np.errstate(all="ignore"):
        mean = s / n
    out[ok] = x[ok] - mean[seg[ok]]
    return out


def _step_share(x: np.ndarray, seg: np.ndarray) -> float:
    d = _demean(x, seg)
    ok = np.isfinite(d)
    tot = np.nanvar(x[ok]) if ok.sum() > 1 else 0.0
    return float(1 - np.var(d[ok]) / tot) if tot > 0 else 0.0


def stretch_lags(
    gas: pd.Series,
    magma: pd.Series,
    segment_id: np.ndarray,
    select: np.ndarray,
    *,
    max_lag: str | pd.Timedelta = "15D",
    n_boot: int = 300,
    ci_level: float = 0.95,
    seed: int | None = 0,
    magma_segment_id: np.ndarray | None = None,
    n_surrogates: int = 200,
) -> StretchLagResult:
    """Profile least-squares lag of gas = g0_group + k·Q(t + lag) on the selected days (pooled within-group r).

    Parameters
    ----------
    gas, magma : gas flux (kg/s) and magma output (m³/s DRE or eruptive fraction) on one regular UTC grid.
    segment_id : int per bin (gas time), the intercept group each bin belongs to (-1: none): one g0 per group,
        fitted at every lag (a segment, or a whole coupled stretch).
    select : bool per bin (gas time): days whose pairs enter (e.g. the coupled stretches).
    magma_segment_id : optional segments of the output on its own time axis: its means are removed per segment
        before the fit and bins with -1 never enter a pair (e.g. -1 where the output is inactive, so that the
        days after a stretch's end cannot pull the lag). Default: the output as it is, every bin usable.
    n_surrogates : phase-randomised surrogates of the output (Theiler et al. 1992) for the p-value of the
        largest correlation over all lags searched (0: no p-value): generated on the full grid from the
        gap-corrected spectrum (Parzen 1963; :func:`degas.analysis.surrogates.gapped_amplitudes`) and the
        output's gaps re-imposed, not with gaps set to the mean (which whitens the surrogates).
    max_lag : lag search range (±). n_boot : block-bootstrap replicates (0: no interval).
    """
    step = pd.Timedelta(gas.index[1] - gas.index[0]) if len(gas) > 1 else DAY
    L = int(pd.Timedelta(max_lag) // step)
    seg = np.asarray(segment_id, dtype=int)
    gd = _demean(gas.to_numpy(dtype=float), seg)
    q = magma.to_numpy(dtype=float)
    qd = q.copy() if magma_segment_id is None else _demean(q, np.asarray(magma_segment_id, int))
    n = len(gd)
    lags = np.arange(-L, L + 1)
    pos = np.flatnonzero(np.asarray(select, dtype=bool) & np.isfinite(gd))
    if len(pos) < max(20, 4 * L):
        raise NotEnoughDataError(f"only {len(pos)} selected days with gas: too few for lags up to ±{L} bins")
    _, grp = np.unique(seg[pos], return_inverse=True)  # intercept group (segment) of each selected gas day
    n_grp = int(grp.max()) + 1
    # per selected day and lag: valid, g, q, g², q², g·q (pairs with Q(t + lag))
    j = pos[:, None] + lags[None, :]
    inside = (j >= 0) & (j < n)
    qv = np.where(inside, qd[np.clip(j, 0, n - 1)], np.nan)
    gv = np.broadcast_to(gd[pos][:, None], qv.shape)
    ok = np.isfinite(qv)
    gz, qz = np.where(ok, gv, 0.0), np.where(ok, qv, 0.0)
    parts = np.stack([ok.astype(float), gz, qz, gz * gz, qz * qz, gz * qz], axis=-1)  # (m, lags, 6)
    member = grp[None, :] == np.arange(n_grp)[:, None]  # (groups, m)

    def corr(s):
        """Profile fit over (..., groups, lags, 6) sums: one intercept per group and lag, one common slope."""
        c, sg, sq, sgg, sqq, sgq = (s[..., i] for i in range(6))
        with np.errstate(all="ignore"):
            has = c > 1
            cs_ = np.where(has, c, 1.0)
            cov = np.where(has, sgq - sg * sq / cs_, 0.0).sum(axis=-2)
            vg = np.where(has, sgg - sg**2 / cs_, 0.0).sum(axis=-2)
            vq = np.where(has, sqq - sq**2 / cs_, 0.0).sum(axis=-2)
            return cov / np.sqrt(vg * vq), cov / vq

    tot = np.einsum("gm,mlk->glk", member.astype(float), parts)
    r, slope = corr(tot)
    r = np.where(np.isfinite(r), r, -np.inf)
    best = int(np.argmax(r))
    notes = []
    if not np.isfinite(r[best]):
        raise NotEnoughDataError("magma output does not vary inside the selected segments: no lag can be measured")
    p_value = np.nan
    if n_surrogates > 0:
        # phase surrogates of the output (Theiler et al. 1992) on the full grid from its gap-corrected spectrum
        # (Parzen 1963, degas.analysis.surrogates.gapped_amplitudes), the output's gaps re-imposed; the gas is
        # left as observed, so every surrogate keeps the observed pair structure (as in xcorr and coupling)
        rng = np.random.default_rng(None if seed is None else seed + 1)
        qok = np.isfinite(qd)
        amp = gapped_amplitudes(qd)
        sur = np.vstack([sfft.irfft(z, n=n, axis=1, workers=1)
                         for z in iter_phase_spectra(qd, n_surrogates, seed=rng, amplitudes=amp)])
        sur[:, ~qok] = np.nan
        # sums per surrogate, group and lag, in chunks of surrogates so memory stays O(m·lags) (issue 12)
        memberf = member.astype(float)
        jc = np.clip(j, 0, n - 1)
        ss = np.empty((n_surrogates, n_grp, len(lags), 6))
        chunk = max(1, 2_000_000 // max(1, j.size))
        for c0 in range(0, n_surrogates, chunk):
            qs_ = np.where(inside[None], sur[c0:c0 + chunk][:, jc], np.nan)  # (chunk, m, lags)
            oks = np.isfinite(qs_)
            gzs = np.where(oks, gv[None], 0.0)
            qzs = np.where(oks, qs_, 0.0)
            for k, x in enumerate((oks.astype(float), gzs, qzs, gzs * gzs, qzs * qzs, gzs * qzs)):
                ss[c0:c0 + chunk, :, :, k] = np.tensordot(memberf, x, axes=([1], [1])).transpose(1, 0, 2)
        rs, _ = corr(ss)
        p_value = float((1 + np.sum(np.nanmax(rs, axis=1) >= r[best])) / (1 + n_surrogates))
    block, _ = block_length(gd[pos])
    block = min(block, max(1, len(pos) // 4))
    lag_ci = k_ci = None
    if n_boot > 0:
        # moving blocks (Künsch 1989) summed through cumulative sums per group: ceil(m / block) whole blocks
        rng = np.random.default_rng(seed)
        starts = block_starts(len(pos), block, n_boot, rng)
        cs = np.concatenate([np.zeros((n_grp, 1, len(lags), 6)),
                             np.cumsum(member[:, :, None, None] * parts[None], axis=1)], axis=1)
        # each replicate's sum = Σ over its chosen starts of one block's sums: a count per start and one product,
        # so no (groups, B, blocks, lags, 6) array is ever built (issue 12: memory)
        counts = np.zeros((n_boot, len(pos) - block + 1))
        np.add.at(counts, (np.arange(n_boot)[:, None], starts), 1.0)
        block_sums = cs[:, block:] - cs[:, : len(pos) - block + 1]  # (groups, starts, lags, 6)
        rb, sb = corr(np.tensordot(counts, block_sums, axes=([1], [1])))  # (B, groups, lags, 6)
        rb = np.where(np.isfinite(rb), rb, -np.inf)
        bl = lags[np.argmax(rb, axis=1)]
        a = (1 - ci_level) / 2
        lo, hi = np.percentile(bl, [100 * a, 100 * (1 - a)])
        lag_ci = (int(np.floor(lo)) * step, int(np.ceil(hi)) * step)
        kb = sb[:, best]
        k_ci = tuple(float(v) for v in np.nanpercentile(kb, [100 * a, 100 * (1 - a)]))
    if best in (0, len(lags) - 1):
        notes.append(f"the best lag is at the edge of the search range (±{L} bins): widen the range")
    share = (_step_share(gas.to_numpy(dtype=float), seg), _step_share(magma.to_numpy(dtype=float), seg))
    frame = pd.DataFrame({"lag_days": lags * step / DAY, "r": np.where(np.isfinite(r), r, np.nan)})
    return StretchLagResult(int(lags[best]) * step, lag_ci, float(r[best]), frame, float(slope[best]), k_ci,
                            int(len(pos)), int(block), int(n_boot), share, ci_level, tuple(notes), p_value,
                            int(n_surrogates))

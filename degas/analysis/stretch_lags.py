"""Lags where they mean something: the gas–magma lag inside coupled stretches, segment means removed.

Across a whole record, regime steps (a pause, a new eruptive phase) dominate any cross-correlation: two
series that step together correlate at every lag near the step, so the peak says little about a lead or lag.
Inside coupled stretches, with each segment's mean removed from both series (so that no step can make r),
what remains is the co-variation of pulses, and its peak is the lag. The correlation at lag L is the pooled
Pearson r of (gas(t) − segment mean, Q(t + L) − segment mean) over the selected days; **a positive lag means
gas leads magma output**. The slope of the same pairs at the best lag, ``k_within``, is the excess gas per
unit output seen in the pulses alone.

The interval of the lag (and of ``k_within``) is a percentile interval of a moving-block bootstrap
(Künsch 1989) over the selected days, blocks twice the decorrelation length of the demeaned gas (see
:func:`degas.analysis.relation.block_length`), at least 7 days. Each replicate re-picks its own best lag.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from degas.analysis.relation import block_length
from degas.errors import NotEnoughDataError

DAY = pd.Timedelta("1D")


@dataclass(frozen=True)
class StretchLagResult:
    """Lag (positive: gas leads) and within-segment slope inside the selected (coupled) stretches.

    ``r_by_lag`` columns: lag_days, r (pooled, segment means removed). ``lag_ci`` and ``k_within_ci`` are
    block-bootstrap percentile intervals (None without bootstrap). ``k_within`` is kg/s of gas per m³/s of
    output (kg/m³). ``step_share`` is the share of the variance of each series (gas, output) carried by the
    segment means over the whole record: when both are large, a whole-record CCF is dominated by regime
    changes. ``p_value`` : share of phase-randomised surrogates of the output whose largest correlation over
    the lags searched reaches the observed peak (NaN without surrogates).
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
    """Pooled within-segment lagged correlation of gas against magma output on the selected days.

    Parameters
    ----------
    gas, magma : gas flux (kg/s) and magma output (m³/s DRE or eruptive fraction) on one regular UTC grid.
    segment_id : int per bin, the segment each bin belongs to (-1: none); means are removed per segment.
    select : bool per bin (gas time): days whose pairs enter (e.g. the coupled stretches).
    magma_segment_id : segments of the output on its own time axis (default ``segment_id``): when gas leads by
        τ, the output's steps come τ later, and removing its means at its own change times keeps a step from
        pulling the lag towards 0.
    n_surrogates : phase-randomised surrogates of the demeaned output (Theiler et al. 1992; generated on the
        full grid with missing days set to 0, the segment mean, and the gaps re-imposed) for the p-value of the
        largest correlation over all lags searched (0: no p-value).
    max_lag : lag search range (±). n_boot : block-bootstrap replicates (0: no interval).
    """
    step = pd.Timedelta(gas.index[1] - gas.index[0]) if len(gas) > 1 else DAY
    L = int(pd.Timedelta(max_lag) // step)
    seg = np.asarray(segment_id, dtype=int)
    gd = _demean(gas.to_numpy(dtype=float), seg)
    qd = _demean(magma.to_numpy(dtype=float), seg if magma_segment_id is None else np.asarray(magma_segment_id, int))
    n = len(gd)
    lags = np.arange(-L, L + 1)
    pos = np.flatnonzero(np.asarray(select, dtype=bool) & np.isfinite(gd))
    if len(pos) < max(20, 4 * L):
        raise NotEnoughDataError(f"only {len(pos)} selected days with gas: too few for lags up to ±{L} bins")
    # per selected day and lag: valid, g, q, g², q², g·q (pairs with Q(t + lag))
    j = pos[:, None] + lags[None, :]
    inside = (j >= 0) & (j < n)
    qv = np.where(inside, qd[np.clip(j, 0, n - 1)], np.nan)
    gv = np.broadcast_to(gd[pos][:, None], qv.shape)
    ok = np.isfinite(qv)
    gz, qz = np.where(ok, gv, 0.0), np.where(ok, qv, 0.0)
    parts = np.stack([ok.astype(float), gz, qz, gz * gz, qz * qz, gz * qz], axis=-1)  # (m, lags, 6)

    def corr(s):
        c, sg, sq, sgg, sqq, sgq = (s[..., i] for i in range(6))
        with np.errstate(all="ignore"):
            cov = sgq - sg * sq / c
            vg = sgg - sg**2 / c
            vq = sqq - sq**2 / c
            return cov / np.sqrt(vg * vq), cov / vq

    tot = parts.sum(axis=0)
    r, slope = corr(tot)
    r = np.where(np.isfinite(r), r, -np.inf)
    best = int(np.argmax(r))
    notes = []
    if not np.isfinite(r[best]):
        raise NotEnoughDataError("magma output does not vary inside the selected segments: no lag can be measured")
    p_value = np.nan
    if n_surrogates > 0:
        rng = np.random.default_rng(None if seed is None else seed + 1)
        spec = np.fft.rfft(np.where(np.isfinite(qd), qd, 0.0))
        ph = rng.uniform(0, 2 * np.pi, size=(n_surrogates, len(spec)))
        ph[:, 0] = 0.0
        if n % 2 == 0:
            ph[:, -1] = 0.0
        sur = np.fft.irfft(spec[None, :] * np.exp(1j * ph), n=n, axis=1)
        sur[:, ~np.isfinite(qd)] = np.nan
        qs_ = np.where(inside[None], sur[:, np.clip(j, 0, n - 1)], np.nan)  # (S, m, lags)
        oks = np.isfinite(qs_)
        gzs = np.where(oks, gv[None], 0.0)
        qzs = np.where(oks, qs_, 0.0)
        ss = np.stack([oks.sum(1), gzs.sum(1), qzs.sum(1), (gzs * gzs).sum(1), (qzs * qzs).sum(1),
                       (gzs * qzs).sum(1)], axis=-1).astype(float)
        rs, _ = corr(ss)
        p_value = float((1 + np.sum(np.nanmax(rs, axis=1) >= r[best])) / (1 + n_surrogates))
    block, _ = block_length(gd[pos])
    block = min(block, max(1, len(pos) // 4))
    lag_ci = k_ci = None
    if n_boot > 0:
        # moving blocks (Künsch 1989) summed through cumulative sums: whole blocks, ceil(m / block) of them
        rng = np.random.default_rng(seed)
        n_blocks = int(np.ceil(len(pos) / block))
        starts = rng.integers(0, len(pos) - block + 1, size=(n_boot, n_blocks))
        cs = np.concatenate([np.zeros((1, len(lags), 6)), np.cumsum(parts, axis=0)])
        sums = (cs[starts + block] - cs[starts]).sum(axis=1)  # (B, lags, 6)
        rb, sb = corr(sums)
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

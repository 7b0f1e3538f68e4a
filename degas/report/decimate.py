"""Display-only reduction of long series: min-max decimation per pixel bin.

Ten years of 10-minute data (525,600 points) cannot be drawn point by point in a responsive page. For
display only, the time axis is cut into ``n_bins`` equal bins and each bin keeps its first, minimum, maximum
and last sample (in time order), so peaks and troughs survive and the line looks the same at screen
resolution. Gaps (bins without data) stay gaps. The analysis always uses the full data.
"""

from __future__ import annotations

import numpy as np


def minmax_decimate(t_ns: np.ndarray, y: np.ndarray, n_bins: int = 2000) -> np.ndarray:
    """Indices of the samples to draw: first, min, max and last of each of ``n_bins`` time bins.

    Parameters
    ----------
    t_ns : sample times as int64 nanoseconds, sorted ascending.
    y : values (NaN allowed; NaN samples are skipped).
    n_bins : number of horizontal bins (about the plot width in pixels).

    Returns
    -------
    Sorted unique indices into the inputs; all indices when there are at most 4·n_bins samples.
    """
    t_ns = np.asarray(t_ns)
    y = np.asarray(y, dtype=float)
    n = t_ns.size
    if n <= 4 * n_bins:
        return np.arange(n)
    ok = np.flatnonzero(np.isfinite(y))
    if ok.size == 0:
        return np.array([], dtype=int)
    t = t_ns[ok].astype("float64")
    span = t[-1] - t[0]
    if span <= 0:
        return ok[:1]
    b = np.minimum(((t - t[0]) / span * n_bins).astype(np.int64), n_bins - 1)
    starts = np.flatnonzero(np.r_[True, b[1:] != b[:-1]])
    ends = np.r_[starts[1:], b.size]
    yy = y[ok]
    mins = np.minimum.reduceat(yy, starts)
    maxs = np.maximum.reduceat(yy, starts)
    # position of the min and max inside each bin
    seg = np.repeat(np.arange(starts.size), ends - starts)
    is_min = yy == mins[seg]
    is_max = yy == maxs[seg]
    first_min = _first_true_per_segment(is_min, starts, ends)
    first_max = _first_true_per_segment(is_max, starts, ends)
    keep = np.unique(np.concatenate([starts, ends - 1, first_min, first_max]))
    return ok[keep]


def _first_true_per_segment(mask: np.ndarray, starts: np.ndarray, ends: np.ndarray) -> np.ndarray:
    idx = np.flatnonzero(mask)
    pos = np.searchsorted(idx, starts)
    return idx[np.minimum(pos, idx.size - 1)]


def gaps_as_breaks(t_ns: np.ndarray, y: np.ndarray, max_gap_ns: float) -> tuple[np.ndarray, np.ndarray]:
    """Insert a NaN after every step longer than ``max_gap_ns`` so that plotted lines break at data gaps."""
    t_ns = np.asarray(t_ns, dtype="int64")
    y = np.asarray(y, dtype=float)
    if t_ns.size < 2:
        return t_ns, y
    jumps = np.flatnonzero(np.diff(t_ns) > max_gap_ns)
    if jumps.size == 0:
        return t_ns, y
    t_out = np.insert(t_ns, jumps + 1, t_ns[jumps] + 1)
    y_out = np.insert(y, jumps + 1, np.nan)
    return t_out, y_out

"""Regular time grids: the one place where irregular records become evenly spaced bins.

Shared by change-point detection, coupling and seismicity. Rules:

* bins are left-closed ``[start, start + step)``, labelled by their start (UTC);
* point samples are averaged (``how="mean"``) or summed (``how="sum"``), with the sample
  count and a coverage fraction per bin;
* interval rows (survey-based extrusion rates) are time-weighted over their overlap with
  each bin, coverage = covered fraction of the bin;
* a bin whose coverage is below ``min_coverage`` is missing (NaN) - never interpolated;
* ``event_counts`` is the only way from a catalogue to a series; ``eruptive_fraction`` is
  the only way from a chronology to a series.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from degas.classcounts import ClassCounts
from degas.errors import DegasError
from degas.model import Chronology, EventCatalog, TimeSeries


@dataclass(frozen=True)
class Grid:
    """A regular grid: ``n`` bins of width ``step`` starting at ``origin`` (UTC)."""

    origin: pd.Timestamp
    step: pd.Timedelta
    n: int

    @property
    def starts(self) -> pd.DatetimeIndex:
        return pd.date_range(self.origin, periods=self.n, freq=self.step, tz="UTC")

    @property
    def step_s(self) -> float:
        return self.step.total_seconds()


# Largest grid laid: 10 million bins (19 years of 1-minute bins; about 300 MB of float64 work arrays per
# series in the analyses). Larger grids come from a mistyped year or a step far too fine for the span.
MAX_BINS = 10_000_000


def to_timedelta(step: str | pd.Timedelta) -> pd.Timedelta:
    """Parse "1D", "10min", "7D", "6h" into a Timedelta; reject non-positive or calendar steps."""
    try:
        td = pd.Timedelta(step)
    except (ValueError, TypeError):
        raise DegasError(f"cannot read time step {step!r}; use e.g. '1D', '6h', '10min'") from None
    if td <= pd.Timedelta(0):
        raise DegasError(f"time step must be positive, got {step!r}")
    return td


def make_grid(start: pd.Timestamp, end: pd.Timestamp, step: str | pd.Timedelta) -> Grid:
    """Grid covering [start, end] with bins aligned to whole steps since the Unix epoch."""
    td = to_timedelta(step)
    start = pd.Timestamp(start).tz_convert("UTC") if pd.Timestamp(start).tzinfo else pd.Timestamp(start, tz="UTC")
    end = pd.Timestamp(end).tz_convert("UTC") if pd.Timestamp(end).tzinfo else pd.Timestamp(end, tz="UTC")
    epoch = pd.Timestamp(0, tz="UTC")
    try:
        k0 = (start - epoch) // td
        origin = epoch + k0 * td
        n = int((end - origin) // td) + 1
    except (OverflowError, ValueError, pd.errors.OutOfBoundsDatetime, pd.errors.OutOfBoundsTimedelta):
        raise DegasError(f"cannot lay a grid from {start} to {end} with step {td}: the span is outside what "
                         "nanosecond timestamps represent (a mistyped year?)") from None
    if n > MAX_BINS:
        raise DegasError(f"a grid from {start:%Y-%m-%d} to {end:%Y-%m-%d} with step {td} needs {n:,} bins, more "
                         f"than {MAX_BINS:,}; choose a coarser step or a shorter episode (a mistyped year?)")
    return Grid(origin, td, max(n, 0))


def bin_index(times: pd.Series, grid: Grid) -> np.ndarray:
    """Index of the bin of each time (may be < 0 or >= grid.n for times outside the grid)."""
    ns = times.to_numpy(dtype="datetime64[ns]").astype("int64")
    return (ns - grid.origin.value) // grid.step.value


def grid_for(records, step: str | pd.Timedelta, start=None, end=None) -> Grid:
    """A grid covering all given records (or [start, end] when given)."""
    lo, hi = [], []
    for r in records:
        a, b = r.span
        if a is not None:
            lo.append(a)
            ends = r.data["end"] if "end" in r.data.columns else None
            if ends is not None and ends.notna().any() and b == ends.max():
                b = b - pd.Timedelta(1, "ns")  # interval ends are exclusive: no empty bin after them
            hi.append(b)
    if start is None:
        if not lo:
            raise DegasError("no data to put on a grid")
        start = min(lo)
    if end is None:
        if not hi:
            raise DegasError("no data to put on a grid")
        end = max(hi)
    return make_grid(start, end, step)


def resample(
    series: TimeSeries,
    step: str | pd.Timedelta = "1D",
    *,
    how: str = "mean",
    min_coverage: float = 0.0,
    grid: Grid | None = None,
) -> pd.DataFrame:
    """Put a series on a regular grid.

    Parameters
    ----------
    series : TimeSeries in its canonical unit.
    step : bin width (pandas offset string or Timedelta).
    how : "mean" (flux, ratio, amplitude; the default) or "sum" (counts) for point samples;
        interval rows are always time-weighted means.
    min_coverage : bins with coverage below this fraction (0-1) become NaN.
    grid : an existing grid to use instead of one spanning the series.

    Returns
    -------
    DataFrame indexed by bin start (UTC) with columns ``value`` (canonical unit; NaN where
    missing), ``uncertainty`` (standard error of the bin value from sample uncertainties, NaN if
    unknown), ``count`` (samples in bin) and ``coverage`` (0-1).
    """
    if how not in ("mean", "sum"):
        raise DegasError(f"unknown aggregation {how!r}; valid: mean, sum")
    if grid is None:
        grid = grid_for([series], step)
    df = series.data
    out_val = np.full(grid.n, np.nan)
    out_unc = np.full(grid.n, np.nan)
    count = np.zeros(grid.n, dtype="int64")
    coverage = np.zeros(grid.n)
    if len(df) == 0 or grid.n == 0:
        return _frame(grid, out_val, out_unc, count, coverage)
    if series.is_interval:
        _resample_intervals(df, grid, out_val, out_unc, count, coverage)
    else:
        idx = bin_index(df["time"], grid)
        ok = (idx >= 0) & (idx < grid.n) & np.isfinite(df["value"].to_numpy())
        idx = idx[ok]
        v = df["value"].to_numpy()[ok]
        u = df["uncertainty"].to_numpy()[ok]
        count = np.bincount(idx, minlength=grid.n).astype("int64")
        s = np.bincount(idx, weights=v, minlength=grid.n)
        has_u = np.isfinite(u)
        su2 = np.bincount(idx[has_u], weights=u[has_u] ** 2, minlength=grid.n)
        nu = np.bincount(idx[has_u], minlength=grid.n)
        with np.errstate(invalid="ignore", divide="ignore"):
            if how == "mean":
                out_val = np.where(count > 0, s / count, np.nan)
                out_unc = np.where((nu == count) & (count > 0), np.sqrt(su2) / count, np.nan)
            else:
                out_val = np.where(count > 0, s, np.nan)
                out_unc = np.where((nu == count) & (count > 0), np.sqrt(su2), np.nan)
        coverage = _point_coverage(df["time"], count, grid)
    if min_coverage > 0:
        low = coverage < min_coverage
        out_val = np.where(low, np.nan, out_val)
        out_unc = np.where(low, np.nan, out_unc)
    return _frame(grid, out_val, out_unc, count, coverage)


def nominal_interval(times: pd.Series) -> pd.Timedelta | None:
    """Median spacing of sample times (the instrument's nominal interval), None if < 2 samples."""
    if len(times) < 2:
        return None
    d = np.diff(np.sort(times.to_numpy(dtype="datetime64[ns]").astype("int64")))
    d = d[d > 0]
    if d.size == 0:
        return None
    return pd.Timedelta(int(np.median(d)), unit="ns")


def _point_coverage(times: pd.Series, count: np.ndarray, grid: Grid) -> np.ndarray:
    """Coverage of point samples: count × nominal interval / bin width, capped at 1.

    A series sampled more coarsely than the grid gets coverage 1 in bins holding a sample.
    """
    dt = nominal_interval(times)
    if dt is None:
        return (count > 0).astype(float)
    frac = count * min(dt.total_seconds(), grid.step_s) / grid.step_s
    return np.minimum(frac, 1.0)


def _resample_intervals(df, grid, out_val, out_unc, count, coverage) -> None:
    starts = df["time"].to_numpy(dtype="datetime64[ns]").astype("int64")
    ends = df["end"].to_numpy(dtype="datetime64[ns]").astype("int64")
    vals = df["value"].to_numpy()
    uncs = df["uncertainty"].to_numpy()
    g0, w = grid.origin.value, grid.step.value
    acc = np.zeros(grid.n)
    accu = np.zeros(grid.n)
    cov = np.zeros(grid.n)
    unc_known = np.ones(grid.n, dtype=bool)
    for s, e, v, u in zip(starts, ends, vals, uncs, strict=True):
        if not np.isfinite(v) or e <= s:
            continue
        b0 = max(int((s - g0) // w), 0)
        b1 = min(int((e - 1 - g0) // w), grid.n - 1)
        for b in range(b0, b1 + 1):
            lo = max(s, g0 + b * w)
            hi = min(e, g0 + (b + 1) * w)
            if hi <= lo:
                continue
            f = (hi - lo) / w
            acc[b] += v * f
            cov[b] += f
            count[b] += 1
            if np.isfinite(u):
                accu[b] += (u * f) ** 2
            else:
                unc_known[b] = False
    with np.errstate(invalid="ignore", divide="ignore"):
        out_val[:] = np.where(cov > 0, acc / cov, np.nan)
        out_unc[:] = np.where((cov > 0) & unc_known, np.sqrt(accu) / cov, np.nan)
    coverage[:] = np.minimum(cov, 1.0)


def _frame(grid, val, unc, count, coverage) -> pd.DataFrame:
    return pd.DataFrame(
        {"value": val, "uncertainty": unc, "count": count, "coverage": coverage},
        index=pd.Index(grid.starts, name="time"),
    )


def event_counts(
    catalog: EventCatalog | ClassCounts,
    step: str | pd.Timedelta = "1D",
    *,
    grid: Grid | None = None,
    classes: tuple[str, ...] | None = None,
) -> pd.DataFrame:
    """Events per bin and per class.

    Returns a DataFrame indexed by bin start (UTC) with one integer column per event class
    (``classes`` or every class present) and ``total``.
    """
    if grid is None:
        grid = grid_for([catalog], step)
    if isinstance(catalog, ClassCounts):  # counts by class: summed as given, NaN = not counted
        return catalog.binned(grid, classes)
    df = catalog.data
    if classes is None:
        classes = tuple(sorted(df["event_class"].dropna().unique()))
    idx = bin_index(df["time"], grid)
    inside = (idx >= 0) & (idx < grid.n)
    codes, uniques = pd.factorize(df["event_class"].to_numpy()[inside], use_na_sentinel=True)
    k = len(uniques)
    flat = np.bincount(codes[codes >= 0] * grid.n + idx[inside][codes >= 0], minlength=k * grid.n)
    per_class = flat.reshape(k, grid.n) if k else np.zeros((0, grid.n), dtype="int64")
    position = {str(u): i for i, u in enumerate(uniques)}
    out = {}
    for c in classes:
        i = position.get(c)
        out[c] = per_class[i].astype("int64") if i is not None else np.zeros(grid.n, dtype="int64")
    out["total"] = np.bincount(idx[inside], minlength=grid.n).astype("int64")
    return pd.DataFrame(out, index=pd.Index(grid.starts, name="time"))


def _interval_cover(starts: np.ndarray, ends: np.ndarray, g0: int, w: int, n: int) -> np.ndarray:
    """Σ over intervals [start, end) (ns) of their overlap with each bin, in bins (vectorised).

    The overlap of [s, e) with bin b is H_s(b) - H_e(b), where H_a(b) = (b + 1 - a)+ - (b - a)+ with
    a in bin units: 1 for a point at or before the bin start, the uncovered share of the bin for a
    point inside it, 0 after. Summed over points by a cumulative count plus a bincount: O(n + k).
    """
    total = np.zeros(n)
    for points, sign in ((starts, 1.0), (ends, -1.0)):
        q, r = np.divmod(points - g0, w)
        full = np.cumsum(np.bincount(np.clip(q + 1, 0, n), minlength=n + 1))[:n]
        inside = (q >= 0) & (q < n)
        part = np.bincount(q[inside], weights=(w - r[inside]) / w, minlength=n)
        total += sign * (full + part)
    return total


def eruptive_fraction(chronology: Chronology, step: str | pd.Timedelta = "1D", *, grid: Grid | None = None,
                      now: pd.Timestamp | None = None) -> pd.DataFrame:
    """Fraction (0-1) of each bin in an eruptive state, and the fraction with a known state.

    Open-ended phases run to ``now`` (default: the grid end). Returns columns ``eruptive`` and
    ``known``; ``eruptive`` is NaN where no phase covers the bin.
    """
    if grid is None:
        grid = grid_for([chronology], step)
    g0, w = grid.origin.value, grid.step.value
    grid_end = g0 + grid.n * w
    stop = grid_end if now is None else pd.Timestamp(now).value
    df = chronology.data
    starts = df["start"].to_numpy(dtype="datetime64[ns]").astype("int64")
    ends = df["end"].to_numpy(dtype="datetime64[ns]")
    ends = np.where(np.isnat(ends), np.datetime64(stop, "ns"), ends).astype("int64")
    state = df["state"].astype("string").fillna("unknown").to_numpy(dtype=object)
    use = (state != "unknown") & (ends > starts)
    known = _interval_cover(starts[use], ends[use], g0, w, grid.n)
    er = use & (state == "eruptive")
    erupt = _interval_cover(starts[er], ends[er], g0, w, grid.n)
    known = np.minimum(known, 1.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.where(known > 0, np.minimum(erupt, known) / known, np.nan)
    return pd.DataFrame({"eruptive": frac, "known": known}, index=pd.Index(grid.starts, name="time"))


def contiguous_runs(valid: np.ndarray, max_gap_bins: int = 0) -> list[tuple[int, int]]:
    """Runs [i0, i1) of valid bins; gaps of more than ``max_gap_bins`` missing bins split runs.

    Short gaps (≤ max_gap_bins) stay inside a run as missing values; they are not filled.
    """
    idx = np.flatnonzero(valid)
    if idx.size == 0:
        return []
    breaks = np.flatnonzero(np.diff(idx) > max_gap_bins + 1)
    starts = np.concatenate([[idx[0]], idx[breaks + 1]])
    ends = np.concatenate([idx[breaks] + 1, [idx[-1] + 1]])
    return list(zip(starts.tolist(), ends.tolist(), strict=True))

"""Event rates from published counts by class (kind ``event_counts``) instead of an event catalogue.

The rates are the counts as published, binned on the analysis grid (:meth:`degas.classcounts.ClassCounts.binned`);
bins that were not counted stay missing. There are no event times, so there are no inter-event statistics,
and no magnitudes, so no energy, completeness or b-value: the notes say so instead of inventing events.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from degas.classcounts import ClassCounts
from degas.grid import Grid, event_counts, grid_for
from degas.model import SeriesMeta, TimeSeries, make_series

NO_MAGNITUDES = "the seismicity is given as counts by class, which carry no magnitudes"


def rates_from_counts(counts: ClassCounts, step: str | pd.Timedelta, classes: tuple[str, ...],
                      grid: Grid | None = None):
    """:class:`~degas.analysis.seismicity.RateResult` from counts by class (NaN = not counted)."""
    from degas.analysis.seismicity import RateResult

    if grid is None:
        grid = grid_for([counts], step)
    binned = event_counts(counts, grid.step, grid=grid, classes=classes)
    n_events = int(np.nansum(binned["total"].to_numpy()))
    inter = pd.DataFrame(
        {"n_events": [int(np.nansum(binned[c].to_numpy())) for c in (*classes, "total")],
         "median_s": np.nan, "mean_s": np.nan, "cv": np.nan},
        index=pd.Index([*classes, "total"], name="event_class"))
    notes = ["rates from published counts by event class: no event times, so no inter-event statistics"]
    missing = int(binned["total"].isna().sum())
    if missing:
        notes.append(f"{missing} of {grid.n} bins not (fully) counted: missing, not zero")
    absent = [c for c in classes if c not in counts.classes]
    if absent:
        notes.append(f"classes not counted by the source: {', '.join(absent)} (missing, not zero)")
    return RateResult(grid.step, classes, binned, binned.cumsum(), inter, n_events, tuple(notes))


def rate_series_from_counts(counts: ClassCounts, step: str | pd.Timedelta, classes: Sequence[str],
                            grid: Grid | None = None) -> TimeSeries:
    """Events per day of ``classes`` (summed) from counts by class; a bin with any class not counted is NaN."""
    if grid is None:
        grid = grid_for([counts], step)
    binned = event_counts(counts, grid.step, grid=grid, classes=tuple(classes))
    days = grid.step.value / 86400e9
    value = binned[list(classes)].sum(axis=1, min_count=len(classes)).to_numpy(dtype="float64") / days
    starts = grid.starts
    meta = SeriesMeta(kind="other", quantity="_".join(c.lower() for c in classes) + "_rate", unit="1/d",
                      display_unit="1/d",
                      description=f"events per day of class {'+'.join(classes)} in bins of {grid.step} "
                                  "(from published counts)")
    return make_series(meta, starts, value, end=starts + grid.step, provenance=counts.provenance)


def metrics_from_counts(counts: ClassCounts, step: str | pd.Timedelta, classes: tuple[str, ...],
                        grid: Grid | None = None) -> pd.DataFrame:
    """The per-bin seismic metrics table for counts by class: count columns and the rate; no magnitudes."""
    if grid is None:
        grid = grid_for([counts], step)
    binned = event_counts(counts, grid.step, grid=grid, classes=classes)
    out = pd.DataFrame({f"count_{c}": binned[c].to_numpy() for c in classes}, index=binned.index)
    out["count_total"] = binned["total"].to_numpy()
    out["rate_per_day"] = out["count_total"] / (grid.step.value / 86400e9)
    out.attrs["notes"] = (f"energy, Benioff strain and depths not given: {NO_MAGNITUDES}",)
    out.attrs["step"] = str(grid.step)
    return out


def review_counts(counts: ClassCounts, periods) -> tuple:
    """Window-against-baseline rate ratios from counts by class, over the days actually counted.

    The exposure of each period is the number of counted days (a day not counted is neither an event nor a
    day without events); the ratio and its exact interval are those of
    :func:`degas.analysis.review.poisson_rate_ratio` (exact conditional method, Ulm 1990).
    """
    from degas.analysis.review import RateComparison, poisson_rate_ratio
    from degas.grid import make_grid

    grid = make_grid(periods.baseline_start, periods.window_end - pd.Timedelta("1ns"), "1D")
    binned = event_counts(counts, "1D", grid=grid, classes=counts.classes)
    in_w = np.asarray(binned.index >= periods.window_start)
    out = []
    for c in binned.columns:
        v = binned[c].to_numpy()
        ok = np.isfinite(v)
        t1, t2 = float((ok & in_w).sum()), float((ok & ~in_w).sum())
        if t1 == 0 or t2 == 0:
            continue
        n1, n2 = int(v[ok & in_w].sum()), int(v[ok & ~in_w].sum())
        r, lo, hi, p = poisson_rate_ratio(n1, t1, n2, t2)
        out.append(RateComparison(c, n1, n2, n1 / t1, n2 / t2, r, lo, hi, p))
    return tuple(out)

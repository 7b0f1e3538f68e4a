"""Seismicity given as counts by event class (kind ``event_counts``), gathered for the rate analyses.

:class:`ClassCounts` holds the stored per-class count series of one source side by side. It is accepted
wherever a catalogue is turned into rates (:func:`degas.grid.event_counts`, and through it ``quakes``, the
report's seismicity section, the LP + hybrid change detection and the regimes). It holds no events: analyses
that need magnitudes, depths or locations (energy, b-value, completeness) say that counts cannot give them.

A bin's count is the sum of the counting intervals that start in it. A bin is missing (NaN) when any of its
intervals was not counted or counted intervals do not fill it: "not counted" is never read as "no event".
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from degas.errors import DegasError
from degas.model import Provenance, SeriesMeta, TimeSeries


@dataclass(frozen=True)
class ClassCounts:
    """Counts by event class: a tidy table (time, end, event_class, count; NaN = not counted)."""

    data: pd.DataFrame
    meta: SeriesMeta
    provenance: tuple[Provenance, ...] = field(default=())

    def __len__(self) -> int:
        return len(self.data)

    @property
    def classes(self) -> tuple[str, ...]:
        return tuple(dict.fromkeys(self.data["event_class"].tolist()))

    @property
    def span(self) -> tuple[pd.Timestamp | None, pd.Timestamp | None]:
        if self.data.empty:
            return None, None
        return self.data["time"].min(), self.data["end"].max()

    def with_data(self, data: pd.DataFrame) -> ClassCounts:
        return ClassCounts(data, self.meta, self.provenance)

    @classmethod
    def from_series(cls, series: Sequence[TimeSeries]) -> ClassCounts:
        """Gather ``event_counts`` series (one per class) into one table."""
        from degas.io.counts import class_of_quantity

        frames, prov = [], []
        station = None
        for s in series:
            if s.meta.kind != "event_counts":
                raise DegasError(f"{s.meta.series_id} is a {s.meta.kind} series, not event_counts")
            c = class_of_quantity(s.meta.quantity) or "other"
            end = s.data["end"].where(s.data["end"].notna(), s.data["time"] + pd.Timedelta("1D"))
            frames.append(pd.DataFrame({"time": s.data["time"], "end": end, "event_class": c,
                                        "count": s.data["value"].astype("float64")}))
            prov.extend(s.provenance)
            station = station or s.meta.station
        if not frames:
            raise DegasError("no event_counts series to gather")
        data = pd.concat(frames, ignore_index=True).sort_values(["time", "event_class"], kind="stable")
        meta = SeriesMeta(kind="event_counts", quantity="events_by_class", station=station)
        return cls(data.reset_index(drop=True), meta, tuple(prov))

    def binned(self, grid, classes: Sequence[str] | None = None) -> pd.DataFrame:
        """Counts per bin of ``grid`` and per class (float; NaN = not counted), plus ``total``.

        ``total`` is the sum over the classes the source counts, missing when any of them is missing.
        A class the source does not count at all is NaN throughout (never 0).
        """
        from degas.grid import bin_index

        df = self.data
        present = self.classes
        want = tuple(classes) if classes is not None else tuple(sorted(present))
        idx = bin_index(df["time"], grid)
        inside = (idx >= 0) & (idx < grid.n)
        out: dict[str, np.ndarray] = {}
        per: dict[str, np.ndarray] = {}
        for c in present:
            sel = inside & (df["event_class"] == c).to_numpy()
            v = df["count"].to_numpy()[sel]
            i = idx[sel]
            ok = np.isfinite(v)
            total = np.bincount(i[ok], weights=v[ok], minlength=grid.n)
            dur = (df["end"] - df["time"]).to_numpy()[sel].astype("timedelta64[ns]").astype("float64")
            covered = np.bincount(i[ok], weights=dur[ok], minlength=grid.n)
            n_nan = np.bincount(i[~ok], minlength=grid.n)
            # a bin is counted only when counted intervals fill it (a 7-day bin needs its 7 daily counts)
            per[c] = np.where((covered >= 0.999 * grid.step.value) & (n_nan == 0), total, np.nan)
        for c in want:
            out[c] = per.get(c, np.full(grid.n, np.nan))
        out["total"] = (np.sum([per[c] for c in present], axis=0) if present else np.full(grid.n, np.nan))
        return pd.DataFrame(out, index=pd.Index(grid.starts, name="time"))

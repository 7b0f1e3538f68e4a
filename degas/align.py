"""Put several records on one regular time grid, each with the aggregation its kind needs.

Built on :mod:`degas.grid` (all binning happens there):

* gas flux, gas ratio, amplitude and other point series: bin mean (``grid.resample``), with the
  sample count and coverage fraction;
* extrusion rate given over survey intervals: time-weighted mean over each bin (``grid.resample``
  on interval rows), coverage = covered share of the bin;
* chronology: fraction of each bin in an eruptive state (``grid.eruptive_fraction``), coverage =
  share of the bin with a known state;
* seismic catalogue: counts per event class (``grid.event_counts``) and summed radiated energy
  (log10 E[J] = 1.5 M + 4.8, the Gutenberg & Richter (1956) Ms-energy relation, approximate).

A bin whose coverage is below ``min_coverage`` is missing (NaN); nothing is interpolated.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np
import pandas as pd

from degas.classcounts import ClassCounts
from degas.errors import DegasError, NotEnoughDataError
from degas.grid import Grid, bin_index, eruptive_fraction, event_counts, grid_for, resample
from degas.model import Chronology, EventCatalog, TimeSeries

#: Kinds that can stand for magma output in a coupling analysis.
MAGMA_OUTPUT_KINDS = ("extrusion_rate", "chronology")
GAS_KINDS = ("gas_flux",)


def event_energy_j(magnitude) -> np.ndarray:
    """Radiated energy (J) from magnitude; the relation lives in the seismicity module (one place)."""
    from degas.analysis.seismicity import energy_from_magnitude

    return energy_from_magnitude(magnitude)


@dataclass(frozen=True)
class AlignedTable:
    """Records on one grid.

    ``frame`` is indexed by bin start (UTC). Per series ``name`` it holds ``name`` (the value:
    canonical SI unit, eruptive fraction 0-1, or event total count), ``name_coverage`` (0-1) and,
    for point series, ``name_count`` and ``name_uncertainty``; catalogues add ``name_<class>``
    counts and ``name_energy_j``. ``kinds`` maps each name to its record kind.
    """

    frame: pd.DataFrame
    grid: Grid
    kinds: Mapping[str, str]
    min_coverage: float
    notes: tuple[str, ...] = field(default=())

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(self.kinds)

    def to_frame(self) -> pd.DataFrame:
        return self.frame.copy()

    def series(self, name: str) -> pd.Series:
        """The value column of ``name`` (NaN = missing bin)."""
        if name not in self.kinds:
            raise DegasError(f"no series {name!r} in the aligned table; have: {', '.join(self.kinds)}")
        return self.frame[name].astype("float64")

    def pair(self, gas: str, magma: str, *, min_valid: int = 1) -> tuple[pd.Series, pd.Series]:
        """Gas flux and magma-output columns, checking kinds and that both have data."""
        for name in (gas, magma):
            if name not in self.kinds:
                raise DegasError(f"no series {name!r} in the aligned table; have: {', '.join(self.kinds)}")
        if self.kinds[gas] not in GAS_KINDS:
            raise DegasError(f"{gas!r} is a {self.kinds[gas]} record; the gas side needs a gas_flux series")
        if self.kinds[magma] not in MAGMA_OUTPUT_KINDS:
            raise DegasError(
                f"{magma!r} is a {self.kinds[magma]} record; the magma-output side needs an "
                f"{' or '.join(MAGMA_OUTPUT_KINDS)} record"
            )
        g, m = self.series(gas), self.series(magma)
        for name, s in ((gas, g), (magma, m)):
            if int(s.notna().sum()) < min_valid:
                raise NotEnoughDataError(
                    f"{name!r} has no bins with coverage >= {self.min_coverage:g} on the {self.grid.step} grid"
                )
        if not (g.notna() & m.notna()).any():
            raise NotEnoughDataError(f"{gas!r} and {magma!r} have no bin in common: they do not overlap in time")
        return g, m


def align(
    records: Mapping[str, TimeSeries | Chronology | EventCatalog],
    step: str | pd.Timedelta = "1D",
    *,
    min_coverage: float = 0.5,
    start: pd.Timestamp | None = None,
    end: pd.Timestamp | None = None,
    event_classes: tuple[str, ...] | None = None,
) -> AlignedTable:
    """Put ``records`` (name -> record) on one regular grid.

    Parameters
    ----------
    records : mapping of column name to TimeSeries, Chronology or EventCatalog.
    step : bin width (pandas offset string such as "1D", "6h", or a Timedelta).
    min_coverage : bins with coverage below this fraction (0-1) become missing.
    start, end : grid span (UTC); default: the union of all records.
    event_classes : event classes to count (default: every class present).

    Returns
    -------
    AlignedTable
    """
    if not records:
        raise DegasError("nothing to align: no records given")
    if not 0 <= min_coverage <= 1:
        raise DegasError(f"min_coverage must be between 0 and 1, got {min_coverage}")
    nonempty = [r for r in records.values() if len(r)]
    if not nonempty:
        raise NotEnoughDataError("every record to align is empty")
    grid = grid_for(nonempty, step, start, end)
    cols: dict[str, np.ndarray] = {}
    kinds: dict[str, str] = {}
    notes: list[str] = []
    for name, rec in records.items():
        kinds[name] = rec.meta.kind
        if isinstance(rec, EventCatalog):
            counts = event_counts(rec, grid=grid, classes=event_classes)
            cols[name] = counts["total"].to_numpy().astype(float)
            for c in counts.columns:
                if c != "total":
                    cols[f"{name}_{c}"] = counts[c].to_numpy()
            cols[f"{name}_energy_j"] = _energy_per_bin(rec, grid)
            cols[f"{name}_coverage"] = np.ones(grid.n)
            notes.append(f"{name}: a catalogue carries no coverage; a zero count means no event listed")
            continue
        if isinstance(rec, ClassCounts):  # counts by class: rates as published, no magnitudes
            counts = event_counts(rec, grid=grid, classes=event_classes)
            cols[name] = counts["total"].to_numpy()
            for c in counts.columns:
                if c != "total":
                    cols[f"{name}_{c}"] = counts[c].to_numpy()
            cols[f"{name}_energy_j"] = np.full(grid.n, np.nan)
            cols[f"{name}_coverage"] = np.isfinite(cols[name]).astype(float)
            notes.append(f"{name}: counts by event class; a bin not counted is missing, not zero")
            continue
        if isinstance(rec, Chronology):
            ef = eruptive_fraction(rec, grid=grid)
            val = ef["eruptive"].to_numpy()
            cov = ef["known"].to_numpy()
            val = np.where(cov >= min_coverage if min_coverage > 0 else cov > 0, val, np.nan)
            cols[name] = val
            cols[f"{name}_coverage"] = cov
        else:
            rs = resample(rec, grid=grid, how="mean", min_coverage=min_coverage)
            cols[name] = rs["value"].to_numpy()
            cols[f"{name}_uncertainty"] = rs["uncertainty"].to_numpy()
            cols[f"{name}_count"] = rs["count"].to_numpy()
            cols[f"{name}_coverage"] = rs["coverage"].to_numpy()
            if rec.meta.kind == "erupted_volume":
                notes.append(f"{name}: erupted volume averaged per bin; derive an extrusion rate for budgets")
        miss = int(np.isnan(cols[name]).sum())
        if miss == grid.n:
            notes.append(f"{name}: all {grid.n} bins missing after alignment (coverage < {min_coverage:g})")
        elif miss:
            notes.append(f"{name}: {miss} of {grid.n} bins missing (coverage < {min_coverage:g}); not interpolated")
    frame = pd.DataFrame(cols, index=pd.Index(grid.starts, name="time"))
    return AlignedTable(frame, grid, MappingProxyType(kinds), float(min_coverage), tuple(notes))


def _energy_per_bin(catalog: EventCatalog, grid: Grid) -> np.ndarray:
    df = catalog.data
    b = bin_index(df["time"], grid)
    mag = df["magnitude"].to_numpy(dtype="float64", na_value=np.nan)
    ok = (b >= 0) & (b < grid.n) & np.isfinite(mag)
    return np.bincount(b[ok], weights=event_energy_j(mag[ok]), minlength=grid.n)

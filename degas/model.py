"""The canonical data model: every input, whatever its source, ends up as one of these.

* :class:`TimeSeries` - sampled values (gas flux, gas ratio, extrusion rate, cumulative
  erupted volume, continuous amplitude, anything numeric). Columns:
  ``time`` (datetime64[ns, UTC]; the start of the interval for interval-valued rows),
  ``end`` (datetime64[ns, UTC], NaT for point samples), ``value`` (float64, canonical SI unit),
  ``uncertainty`` (float64, same unit, NaN if unknown), ``quality`` (string flag or <NA>).
* :class:`Chronology` - eruption phases and pauses as intervals. Columns: ``start``, ``end``
  (NaT = still open), ``state`` (eruptive / pause / unknown), ``style``
  (effusive / explosive / mixed / unknown), ``note``.
* :class:`EventCatalog` - seismic events. Columns: ``time``, ``latitude_deg``,
  ``longitude_deg``, ``depth_m`` (positive down), ``magnitude``, ``magnitude_type``,
  ``event_class`` (see :data:`EVENT_CLASSES`), ``event_id``, ``source_type`` (the
  label in the file, before mapping).

Each carries :class:`SeriesMeta` (what it is) and a tuple of :class:`Provenance`
(where every part came from). Objects are frozen; functions return new ones.
"""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass, field
from typing import ClassVar

import numpy as np
import pandas as pd

from degas.errors import DegasError
from degas.vocabulary import EVENT_CLASSES  # noqa: F401  (re-exported; light module for the CLI help)

KINDS: tuple[str, ...] = (
    "gas_flux",
    "gas_ratio",
    "extrusion_rate",
    "erupted_volume",
    "chronology",
    "seismic_catalog",
    "amplitude",
    "other",
    "event_counts",
    "melt_inclusions",
)

#: Canonical (stored) unit per kind, as pint spellings. ``None``: the file's own unit is kept.
CANONICAL_UNIT: dict[str, str | None] = {
    "gas_flux": "kg/s",
    "gas_ratio": "mol/mol",
    "extrusion_rate": "m^3/s",
    "erupted_volume": "m^3",
    "chronology": None,
    "seismic_catalog": None,
    "amplitude": None,
    "other": None,
    "event_counts": None,
    "melt_inclusions": "kg/kg",
}

#: Unit shown to people, per kind.
DISPLAY_UNIT: dict[str, str | None] = {
    "gas_flux": "t/d",
    "gas_ratio": "mol/mol",
    "extrusion_rate": "m³/s",
    "erupted_volume": "m³",
    "chronology": None,
    "seismic_catalog": None,
    "amplitude": None,
    "other": None,
    "event_counts": None,
    "melt_inclusions": "ppm",
}

ERUPTIVE_STATES: tuple[str, ...] = ("eruptive", "pause", "unknown")
ERUPTIVE_STYLES: tuple[str, ...] = ("effusive", "explosive", "mixed", "unknown")
GAS_SPECIES: tuple[str, ...] = ("SO2", "CO2", "H2S", "H2O", "HCl", "HF")
VOLUME_BASES: tuple[str, ...] = ("dre", "bulk")

SERIES_COLUMNS = ("time", "end", "value", "uncertainty", "quality")
CHRONOLOGY_COLUMNS = ("start", "end", "state", "style", "note")
CATALOG_COLUMNS = (
    "time",
    "latitude_deg",
    "longitude_deg",
    "depth_m",
    "magnitude",
    "magnitude_type",
    "event_class",
    "event_id",
    "source_type",
)


@dataclass(frozen=True)
class Provenance:
    """Where (part of) a record came from.

    ``assumptions`` lists everything the reader had to assume (e.g. "naive times taken as UTC").
    """

    source_name: str
    sha256: str
    reader: str
    rows_accepted: int
    rows_rejected: int
    original_unit: str | None = None
    assumptions: tuple[str, ...] = ()
    ingested_at: str | None = None
    options: tuple[tuple[str, str], ...] = ()

    def to_dict(self) -> dict:
        d = dataclasses.asdict(self)
        d["assumptions"] = list(self.assumptions)
        d["options"] = [list(o) for o in self.options]
        return d

    @classmethod
    def from_dict(cls, d: dict) -> Provenance:
        d = dict(d)
        d["assumptions"] = tuple(d.get("assumptions", ()))
        d["options"] = tuple(tuple(o) for o in d.get("options", ()))
        return cls(**d)


@dataclass(frozen=True)
class SeriesMeta:
    """What a record is.

    ``quantity`` is a short snake-case name such as ``so2_flux`` or ``co2_so2_ratio``;
    ``unit`` is the stored (canonical) unit; ``volume_basis`` is ``dre`` or ``bulk`` for
    volumes and extrusion rates (``bulk`` means not yet converted, and says so).
    """

    kind: str
    quantity: str
    station: str | None = None
    species: str | None = None
    unit: str | None = None
    display_unit: str | None = None
    volume_basis: str | None = None
    description: str | None = None

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise DegasError(f"unknown kind {self.kind!r}; valid kinds: {', '.join(KINDS)}")
        if self.volume_basis is not None and self.volume_basis not in VOLUME_BASES:
            raise DegasError(f"unknown volume basis {self.volume_basis!r}; valid: dre, bulk")

    @property
    def series_id(self) -> str:
        """Stable identifier used as the archive key: ``kind.quantity.station``.

        Injective: a part that is already a safe name (letters, digits, ``_``, ``-``; at most
        :data:`SLUG_MAX` characters) is kept as it is; any other part becomes a readable slug plus
        ``~`` and a short SHA-256 of the original text, so ``VLM.N``, ``VLM N`` and ``VLM-N`` stay
        three series. ``~`` never occurs in an unchanged part, so the two forms cannot meet; the
        archive refuses the (2^-32) case of two originals with the same hash.
        """
        parts = [self.kind, self.quantity, self.station or "all"]
        return ".".join(_slug(p) for p in parts)

    @property
    def legacy_series_id(self) -> str:
        """The lossy id of archives written before ids were injective (read, never written)."""
        parts = [self.kind, self.quantity, self.station or "all"]
        return ".".join(_legacy_slug(p) for p in parts)

    def to_dict(self) -> dict:
        return dataclasses.asdict(self)

    @classmethod
    def from_dict(cls, d: dict) -> SeriesMeta:
        names = {f.name for f in dataclasses.fields(cls)}
        return cls(**{k: v for k, v in d.items() if k in names})


SLUG_MAX = 64  # characters of readable slug kept in an id; file names stay far below NAME_MAX (255 bytes)
_SAFE_PART = re.compile(r"[A-Za-z0-9_][A-Za-z0-9_-]*")


def _legacy_slug(text: str) -> str:
    s = re.sub(r"[^A-Za-z0-9_-]+", "-", str(text)).strip("-")
    return s or "x"


def _slug(text: str) -> str:
    """``text`` itself when it is a safe name, else a readable slug + ``~`` + 8 hex digits of its SHA-256."""
    import hashlib

    text = str(text)
    if len(text) <= SLUG_MAX and _SAFE_PART.fullmatch(text) and not text.endswith("-"):
        return text
    readable = _legacy_slug(text)[:SLUG_MAX].strip("-") or "x"
    return f"{readable}~{hashlib.sha256(text.encode('utf-8', 'surrogatepass')).hexdigest()[:8]}"


@dataclass(frozen=True)
class _Record:
    """Common part of the three record types: a tidy table plus metadata and provenance."""

    data: pd.DataFrame
    meta: SeriesMeta
    provenance: tuple[Provenance, ...] = field(default=())

    COLUMNS: ClassVar[tuple[str, ...]] = ()
    TIME_COLUMN: ClassVar[str] = "time"

    def __post_init__(self) -> None:
        missing = [c for c in self.COLUMNS if c not in self.data.columns]
        if missing:
            raise DegasError(f"{type(self).__name__} table lacks columns {missing}")
        t = self.data[self.TIME_COLUMN]
        if not isinstance(t.dtype, pd.DatetimeTZDtype) or str(t.dt.tz) != "UTC":
            raise DegasError(f"{type(self).__name__}.{self.TIME_COLUMN} must be tz-aware UTC, got {t.dtype}")

    def __len__(self) -> int:
        return len(self.data)

    @property
    def span(self) -> tuple[pd.Timestamp | None, pd.Timestamp | None]:
        """First and last time (UTC), or (None, None) when empty."""
        t = self.data[self.TIME_COLUMN]
        if t.empty:
            return None, None
        last = t.max()
        if "end" in self.data.columns and self.data["end"].notna().any():
            last = max(last, self.data["end"].max())
        return t.min(), last

    def with_data(self, data: pd.DataFrame):
        return dataclasses.replace(self, data=data)


@dataclass(frozen=True)
class TimeSeries(_Record):
    """Sampled values in the canonical SI unit of their kind (see module docstring)."""

    COLUMNS: ClassVar[tuple[str, ...]] = SERIES_COLUMNS

    @property
    def is_interval(self) -> bool:
        """True when rows are values over intervals [time, end) rather than point samples."""
        return bool(self.data["end"].notna().any())

    def values_in(self, unit: str) -> np.ndarray:
        """Values converted to ``unit`` (e.g. ``"t/d"``) for display."""
        from degas.units import conversion_factor

        if self.meta.unit is None:
            return self.data["value"].to_numpy()
        return self.data["value"].to_numpy() * conversion_factor(self.meta.unit, unit)


@dataclass(frozen=True)
class Chronology(_Record):
    """Eruptive phases and pauses as [start, end) intervals; end NaT means still open."""

    COLUMNS: ClassVar[tuple[str, ...]] = CHRONOLOGY_COLUMNS
    TIME_COLUMN: ClassVar[str] = "start"


@dataclass(frozen=True)
class EventCatalog(_Record):
    """Seismic events; depth in metres positive down, magnitude with its type kept."""

    COLUMNS: ClassVar[tuple[str, ...]] = CATALOG_COLUMNS


Record = TimeSeries | Chronology | EventCatalog

#: Analysis types of a melt-inclusion table row.
ANALYSIS_TYPES: tuple[str, ...] = ("inclusion", "matrix_glass", "embayment")
#: Major oxides kept from melt-inclusion tables (stored as mass fractions, column ``<oxide>_frac``).
OXIDES: tuple[str, ...] = ("SiO2", "TiO2", "Al2O3", "Fe2O3", "FeO", "MnO", "MgO", "CaO", "Na2O", "K2O", "P2O5")
#: Volatiles of a melt-inclusion table, stored as mass fractions (kg/kg) with 1-sigma columns.
INCLUSION_VOLATILES: tuple[str, ...] = ("h2o", "co2", "s", "cl")
INCLUSION_COLUMNS = (
    "time", "phase", "sample_id", "analysis_id", "host", "analysis_type",
    *(c for v in INCLUSION_VOLATILES for c in (f"{v}_frac", f"{v}_sd_frac")),
    *(f"{o.lower()}_frac" for o in OXIDES),
    "oxide_total_frac",
)


@dataclass(frozen=True)
class MeltInclusions(_Record):
    """Melt-inclusion, embayment and matrix-glass analyses, one row each.

    ``time`` is the eruption (or sampling) date, NaT when only a phase is given; ``phase`` is the
    eruptive phase label; volatiles and oxides are mass fractions (kg/kg, SI; 1 wt% = 0.01,
    1 ppm = 1e-6) with NaN when not measured; ``*_sd_frac`` are analytical 1-sigma values.
    """

    COLUMNS: ClassVar[tuple[str, ...]] = INCLUSION_COLUMNS


RECORD_TYPE_FOR_KIND: dict[str, type] = {
    "chronology": Chronology,
    "seismic_catalog": EventCatalog,
    "melt_inclusions": MeltInclusions,
}


def record_type(kind: str) -> type:
    """The record class that holds a kind."""
    return RECORD_TYPE_FOR_KIND.get(kind, TimeSeries)


def empty_series_frame() -> pd.DataFrame:
    """An empty TimeSeries table with the canonical dtypes."""
    return pd.DataFrame(
        {
            "time": pd.Series([], dtype="datetime64[ns, UTC]"),
            "end": pd.Series([], dtype="datetime64[ns, UTC]"),
            "value": pd.Series([], dtype="float64"),
            "uncertainty": pd.Series([], dtype="float64"),
            "quality": pd.Series([], dtype="string"),
        }
    )


def make_series(
    meta: SeriesMeta,
    time,
    value,
    *,
    end=None,
    uncertainty=None,
    quality=None,
    provenance: tuple[Provenance, ...] = (),
) -> TimeSeries:
    """Build a TimeSeries from array-likes already in UTC and the canonical unit."""
    n = len(value)
    t = pd.to_datetime(pd.Series(time), utc=True).astype("datetime64[ns, UTC]").reset_index(drop=True)
    e = (
        pd.Series(pd.NaT, index=range(n), dtype="datetime64[ns, UTC]")
        if end is None
        else pd.to_datetime(pd.Series(end), utc=True).astype("datetime64[ns, UTC]").reset_index(drop=True)
    )
    df = pd.DataFrame(
        {
            "time": t,
            "end": e,
            "value": np.asarray(value, dtype="float64"),
            "uncertainty": np.full(n, np.nan) if uncertainty is None else np.asarray(uncertainty, dtype="float64"),
            "quality": pd.Series([pd.NA] * n if quality is None else list(quality), dtype="string"),
        }
    )
    return TimeSeries(df, meta, tuple(provenance))

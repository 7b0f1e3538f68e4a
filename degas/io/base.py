"""What every reader takes and returns.

A reader is a module in ``degas/io/`` with two functions and one registry line
(see ``degas/io/__init__.py``): ``is_<fmt>(head: bytes, path: Path) -> bool`` looks at the
first bytes and never raises, ``read_<fmt>(path: Path, options: ReadOptions) -> ReadResult``
returns records in the canonical model (UTC, SI) plus every rejected row.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from datetime import UTC
from functools import lru_cache
from pathlib import Path

import pandas as pd

from degas.errors import ConfigError
from degas.model import Provenance, Record

REJECT_COLUMNS = ("file", "line", "column", "reason", "raw")

# (option, low, high, low open?, high open?, what): bounds of physically meaningful reader options.
# Vesicularity is a void fraction, below 1 by definition; rock densities between 100 kg/m³ (pumice-like
# froth) and 5000 kg/m³ (above any silicate melt or rock; basalt is about 2800-3000 kg/m³, from memory).
_NUMERIC_BOUNDS = (
    ("vesicularity", 0.0, 1.0, False, True, "a void fraction"),
    ("bulk_density", 100.0, 5000.0, False, False, "a density in kg/m³"),
    ("dense_density", 100.0, 5000.0, False, False, "a density in kg/m³"),
)


def check_timezone(name: str) -> None:
    """ConfigError unless ``name`` is an IANA zone or a fixed offset such as "+01:00"."""
    import re
    import zoneinfo

    if isinstance(name, str):
        if re.fullmatch(r"\s*[+-]\d\d:?\d\d\s*", name):
            return
        try:
            zoneinfo.ZoneInfo(name)
            return
        except (zoneinfo.ZoneInfoNotFoundError, ValueError, OSError):  # a folder such as "America" is OSError
            pass
        try:  # spellings pandas accepts too ("utc")
            pd.Timestamp("2000-01-01").tz_localize(name)
            return
        except Exception:  # noqa: BLE001 - pandas raises several types for unknown zones
            pass
    raise ConfigError(f"--tz / timezone = {name!r}: not a time zone; give an IANA name such as 'UTC' or "
                      "'Etc/GMT+5', or a fixed offset such as '+01:00'")


@dataclass(frozen=True)
class ReadOptions:
    """Reader options; every field left as ``None`` is detected from the file.

    Parameters
    ----------
    kind : one of degas.model.KINDS, or None to detect.
    species : gas species (SO2, CO2, H2S) when the header does not say.
    station : station / instrument id when the file has no station column.
    columns : explicit column mapping, role -> header in the file. Roles: time, end, value,
        uncertainty, quality, station, state, style, latitude, longitude, depth, magnitude,
        magnitude_type, event_class, event_id.
    units : role -> unit spelling, overriding units read from headers (e.g. {"value": "t/d"}).
    timezone : IANA zone (or fixed offset like "+01:00") for naive timestamps; None = UTC, recorded.
    dayfirst : read ambiguous dates such as 03/04/2024 as day first.
    time_format : "iso", "excel" (serial days), "decimal_year", "unix" (seconds), or a strftime
        pattern; None = detect.
    class_map : local event-type code -> degas class (VT, LP, hybrid, rockfall, explosion, tremor, other).
    vesicularity : void fraction (0-1) for bulk -> DRE volume conversion.
    bulk_density, dense_density : kg/m³, the alternative bulk -> DRE conversion.
    volume_basis : "dre" or "bulk" when the header does not say.
    allow_negative : keep negative fluxes/rates instead of rejecting them.
    magnitude_type : magnitude type for catalogues whose file does not give one.
    sheet : workbook sheet to read: a name, a 1-based number, or "all" (sheets of one layout stacked).
    time_origin : origin date of numeric day/hour/second counts (e.g. "1995-01-01"), with ``time_unit``.
    time_unit : unit of numeric times counted from ``time_origin``: "D" (days), "h" or "s".
    accept_approximate_dates : keep dates such as "c. 1910" or "1830s" with a precision flag instead of
        rejecting them.
    depth_positive : "down" (depth below the datum, the default) or "up" (height above it) for catalogue depths.
    state_map : free-text activity state -> degas state (eruptive, pause, unknown), over the default words.
    """

    kind: str | None = None
    species: str | None = None
    station: str | None = None
    columns: dict[str, str] = field(default_factory=dict)
    units: dict[str, str] = field(default_factory=dict)
    timezone: str | None = None
    dayfirst: bool = False
    time_format: str | None = None
    class_map: dict[str, str] = field(default_factory=dict)
    vesicularity: float | None = None
    bulk_density: float | None = None
    dense_density: float | None = None
    volume_basis: str | None = None
    allow_negative: bool = False
    magnitude_type: str | None = None
    sheet: str | None = None
    time_origin: str | None = None
    time_unit: str | None = None
    accept_approximate_dates: bool = False
    depth_positive: str | None = None
    state_map: dict[str, str] = field(default_factory=dict)

    def __post_init__(self) -> None:
        """One-line errors for values that cannot be meant, naming the CLI option and the mapping key."""
        if self.timezone is not None:
            check_timezone(self.timezone)
        for name, lo, hi, lo_open, hi_open, what in _NUMERIC_BOUNDS:
            v = getattr(self, name)
            if v is None:
                continue
            ok = isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)
            ok = ok and (v > lo if lo_open else v >= lo) and (v < hi if hi_open else v <= hi)
            if not ok:
                rng = f"{'(' if lo_open else '['}{lo:g}, {hi:g}{')' if hi_open else ']'}"
                raise ConfigError(f"--{name.replace('_', '-')} / {name} = {v!r}: must be {what} in {rng}")

    def as_pairs(self) -> tuple[tuple[str, str], ...]:
        """Options that were actually set, as (name, text) pairs for provenance."""
        out = []
        for name, value in self.__dict__.items():
            if value in (None, False, {}, ""):
                continue
            out.append((name, str(value)))
        return tuple(out)


@dataclass
class ReadResult:
    """What a reader returns: records, rejected rows (file, line, column, reason, raw), notes."""

    records: list[Record]
    rejects: pd.DataFrame
    notes: list[str] = field(default_factory=list)
    #: per record (same order), the file line of each of its rows, when the reader knows them
    lines: list = field(default_factory=list)

    @property
    def n_rejected(self) -> int:
        return len(self.rejects)


def empty_rejects() -> pd.DataFrame:
    return pd.DataFrame({c: pd.Series([], dtype="object") for c in REJECT_COLUMNS})


def rejects_frame(rows: list[tuple]) -> pd.DataFrame:
    """Build a rejects table from (file, line, column, reason, raw) tuples."""
    if not rows:
        return empty_rejects()
    return pd.DataFrame(rows, columns=list(REJECT_COLUMNS))


def file_sha256(path: Path) -> str:
    """SHA-256 of a file, read in 1 MiB blocks (cached per path, size and modification time)."""
    st = Path(path).stat()
    return _sha256_cached(str(Path(path).resolve()), st.st_size, st.st_mtime_ns)


@lru_cache(maxsize=256)
def _sha256_cached(path: str, size: int, mtime_ns: int) -> str:
    import hashlib

    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def make_provenance(path: Path, reader: str, accepted: int, rejected: int, original_unit: str | None,
                    assumptions, options: ReadOptions) -> Provenance:
    """Provenance of one read: file name and SHA-256, reader, row counts, assumptions (deduplicated), options."""
    from datetime import datetime

    return Provenance(
        source_name=path.name,
        sha256=file_sha256(path),
        reader=reader,
        rows_accepted=accepted,
        rows_rejected=rejected,
        original_unit=original_unit,
        assumptions=tuple(dict.fromkeys(assumptions)),
        ingested_at=datetime.now(UTC).isoformat(timespec="seconds"),
        options=options.as_pairs(),
    )

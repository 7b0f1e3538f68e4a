"""Local seismic event-type labels -> the degas event classes (VT, LP, hybrid, ...).

Observatories label volcanic earthquakes with their own codes ("VT", "VTA", "B-type", "HYB",
"RF", "EXP", ...), and QuakeML has no volcanic vocabulary at all: its EventType enumeration
(QuakeML BED 1.2, 2013) knows "earthquake", "explosion", "landslide" and so on, but no VT, LP,
hybrid, rockfall or tremor (REFERENCES.md section 4.1). This module translates every such label,
once, at the edge, into one of :data:`degas.model.EVENT_CLASSES`.

Matching ignores case, whitespace and punctuation: "Volcano-Tectonic", "volcano tectonic" and
"VOLCANOTECTONIC" are the same key. A user map wins over the defaults. Labels that match
nothing become "other" and are reported, so that nothing is silently reclassified.

Mapping choices that are interpretations rather than synonyms (each is recorded as an assumption
whenever a label it covers occurs in the data):

* QuakeML "earthquake" -> VT: at a volcano observatory a plain "earthquake" is usually a
  volcano-tectonic event written with the only valid QuakeML term (common practice).
* "A-type" -> VT and "B-type" -> LP: common practice after Minakami's classification of
  volcanic earthquakes (Minakami 1960; citation from memory).
* "MP" (multiphase) -> hybrid: common practice at dome-building volcanoes.
* "PF" (pyroclastic flow), landslide, rockslide, avalanche, debris avalanche, slide and
  collapse -> rockfall: surficial mass-movement signals (REFERENCES.md section 3.8).
* "volcanic eruption" -> explosion.
* The remaining QuakeML EventType values (anthropogenic, atmospheric, ice quake, ...) -> other.

The second part of the module, :func:`build_catalog`, is the table assembly shared by the
catalogue readers (``quakeml.py``, ``fdsn_text.py``): it validates the raw text columns, turns
bad rows into rejects, maps the classes and returns the canonical EventCatalog table.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from degas.errors import ConfigError
from degas.model import EVENT_CLASSES

#: QuakeML BED 1.2 EventType enumeration (44 values; REFERENCES.md section 4.1).
QUAKEML_EVENT_TYPES: tuple[str, ...] = (
    "not existing", "not reported", "earthquake", "anthropogenic event", "collapse",
    "cavity collapse", "mine collapse", "building collapse", "explosion", "accidental explosion",
    "chemical explosion", "controlled explosion", "experimental explosion", "industrial explosion",
    "mining explosion", "quarry blast", "road cut", "blasting levee", "nuclear explosion",
    "induced or triggered event", "rock burst", "reservoir loading", "fluid injection",
    "fluid extraction", "crash", "plane crash", "train crash", "boat crash", "other event",
    "atmospheric event", "sonic boom", "sonic blast", "acoustic noise", "thunder", "avalanche",
    "snow avalanche", "debris avalanche", "hydroacoustic event", "ice quake", "slide", "landslide",
    "rockslide", "meteorite", "volcanic eruption",
)  # fmt: skip

_LOCAL_ALIASES: dict[str, str] = {
    # volcano-tectonic
    "VT": "VT", "VTA": "VT", "VTB": "VT", "VT-A": "VT", "VT-B": "VT", "volcano-tectonic": "VT",
    "volcanotectonic": "VT", "volcano tectonic earthquake": "VT", "A-type": "VT", "type A": "VT",
    "high-frequency": "VT", "HF": "VT",
    # long-period / low-frequency
    "LP": "LP", "LF": "LP", "long-period": "LP", "long period event": "LP", "low-frequency": "LP",
    "low frequency event": "LP", "B-type": "LP", "type B": "LP",
    # hybrid
    "HB": "hybrid", "HY": "hybrid", "HYB": "hybrid", "hybrid": "hybrid", "hybrid event": "hybrid",
    "MP": "hybrid", "multiphase": "hybrid", "multi-phase": "hybrid",
    # rockfall and other mass movements
    "RF": "rockfall", "ROCKFALL": "rockfall", "rock fall": "rockfall", "PF": "rockfall",
    "pyroclastic flow": "rockfall", "dome collapse": "rockfall",
    # explosion
    "EX": "explosion", "EXP": "explosion", "EXPL": "explosion", "explosion": "explosion",
    "explosion earthquake": "explosion", "eruption": "explosion",
    # tremor
    "TR": "tremor", "TRE": "tremor", "tremor": "tremor", "tremor episode": "tremor",
    "volcanic tremor": "tremor", "harmonic tremor": "tremor", "spasmodic tremor": "tremor",
    # the class names themselves
    "other": "other",
}  # fmt: skip

_QUAKEML_CLASSES: dict[str, str] = {
    "earthquake": "VT",
    "explosion": "explosion",
    "volcanic eruption": "explosion",
    "landslide": "rockfall",
    "rockslide": "rockfall",
    "avalanche": "rockfall",
    "debris avalanche": "rockfall",
    "slide": "rockfall",
    "collapse": "rockfall",
}

#: Default label -> class table (keys as usually spelled; matching is case-, space- and
#: punctuation-insensitive). Every QuakeML EventType value is present.
DEFAULT_CLASS_ALIASES: dict[str, str] = {
    **{t: _QUAKEML_CLASSES.get(t, "other") for t in QUAKEML_EVENT_TYPES},
    **_LOCAL_ALIASES,
}

# normalised key -> assumption text, recorded whenever the label occurs (defaults only).
_ASSUMPTION_BY_KEY: dict[str, str] = {}


def _assume(labels: tuple[str, ...], text: str) -> None:
    for label in labels:
        _ASSUMPTION_BY_KEY[normalise_label(label)] = text


def normalise_label(label: str) -> str:
    """Matching key of a label: lower case, without whitespace or punctuation."""
    return re.sub(r"[\W_]+", "", str(label)).casefold()


_assume(
    ("earthquake",),
    "event type 'earthquake' read as VT (QuakeML has no volcanic classes; common practice)",
)
_assume(
    ("A-type", "type A", "B-type", "type B"),
    "A-type read as VT and B-type as LP (common practice after Minakami's classification)",
)
_assume(("MP", "multiphase"), "multiphase (MP) events read as hybrid (common practice)")
_assume(("PF", "pyroclastic flow"), "pyroclastic-flow (PF) signals counted as rockfall")
_assume(
    ("landslide", "rockslide", "avalanche", "debris avalanche", "slide", "collapse", "dome collapse"),
    "landslide/rockslide/avalanche/collapse types counted as rockfall",
)
_assume(("volcanic eruption", "eruption"), "'volcanic eruption' events counted as explosion")
_assume(("HF", "high-frequency"), "high-frequency (HF) events read as VT")

_DEFAULT_BY_KEY: dict[str, str] = {normalise_label(k): v for k, v in DEFAULT_CLASS_ALIASES.items()}


@dataclass(frozen=True)
class ClassMapping:
    """Result of :func:`map_event_classes`.

    Attributes
    ----------
    classes : pd.Series of string dtype, same index as the labels, values in EVENT_CLASSES.
    unknown : labels (as found, sorted) that matched no alias and fell back to "other".
    assumptions : interpretive choices that were applied to labels present in the data.
    """

    classes: pd.Series
    unknown: tuple[str, ...]
    assumptions: tuple[str, ...]


def _valid_class(value: object, key: object) -> str:
    by_fold = {c.casefold(): c for c in EVENT_CLASSES}
    cls = by_fold.get(str(value).strip().casefold())
    if cls is None:
        raise ConfigError(
            f"class map entry {key!r} -> {value!r}: unknown event class; valid classes: {', '.join(EVENT_CLASSES)}"
        )
    return cls


def resolve_class_map(user_map: dict[str, str] | None) -> dict[str, str]:
    """Normalised lookup table: defaults overridden by ``user_map`` (validated).

    Raises
    ------
    ConfigError
        When a user map value is not one of EVENT_CLASSES, or a key is empty.
    """
    table = dict(_DEFAULT_BY_KEY)
    for key, value in (user_map or {}).items():
        norm = normalise_label(key)
        if not norm:
            raise ConfigError(f"class map key {key!r} is empty after removing spaces and punctuation")
        table[norm] = _valid_class(value, key)
    return table


def lookup_class(label: str, table: dict[str, str]) -> str | None:
    """Class of one label in a table from :func:`resolve_class_map`, or None if unknown."""
    return table.get(normalise_label(label))


def map_event_classes(labels: pd.Series, user_map: dict[str, str] | None = None) -> ClassMapping:
    """Map event-type labels to degas event classes.

    Parameters
    ----------
    labels : labels as found in the file (strings; missing values allowed and classed as "other"
        without being reported as unknown).
    user_map : local code -> class; keys are matched like the defaults (case-, space- and
        punctuation-insensitive) and win over them. Values must be one of EVENT_CLASSES
        (case-insensitive).

    Returns
    -------
    ClassMapping
        Classes (string dtype, index of ``labels``), unknown labels and assumptions.

    Raises
    ------
    ConfigError
        When a user map value is not a valid class.
    """
    table = resolve_class_map(user_map)
    user_keys = {normalise_label(k) for k in (user_map or {})}
    codes, uniques = pd.factorize(labels, use_na_sentinel=True)
    uniq_classes = np.empty(len(uniques) + 1, dtype=object)
    uniq_classes[-1] = "other"  # code -1: missing label
    unknown: list[str] = []
    assumptions: list[str] = []
    by_user = 0
    for i, label in enumerate(uniques):
        key = normalise_label(label)
        cls = table.get(key)
        if cls is None:
            if key:
                unknown.append(str(label))
            cls = "other"
        elif key in user_keys:
            by_user += 1
        elif key in _ASSUMPTION_BY_KEY and _ASSUMPTION_BY_KEY[key] not in assumptions:
            assumptions.append(_ASSUMPTION_BY_KEY[key])
        uniq_classes[i] = cls
    codes = np.asarray(codes)
    classes = pd.Series(uniq_classes[codes], index=labels.index, dtype="string")
    if by_user:
        assumptions.append(f"{by_user} label(s) classed by the user class map")
    blank = np.array([normalise_label(u) == "" for u in uniques] + [True], dtype=bool)
    if blank[codes].any():
        assumptions.append("events without a type label classed as other")
    if unknown:
        shown = ", ".join(sorted(unknown)[:20]) + (", ..." if len(unknown) > 20 else "")
        assumptions.append(f"unknown event types mapped to other: {shown}")
    return ClassMapping(classes=classes, unknown=tuple(sorted(unknown)), assumptions=tuple(assumptions))


# --- catalogue assembly shared by the catalogue readers (quakeml.py, fdsn_text.py) ------------------

_ZONE_RE = r"(?:[Zz]|[+-]\d\d(?::?\d\d)?)$"
_ISO_TIME_RE = r"\d{4}-\d\d-\d\d[T ]\d\d:\d\d(?::\d\d(?:\.\d{1,9})?)?(?:[Zz]|[+-]\d\d(?::?\d\d)?)?"


@dataclass(frozen=True)
class CatalogColumns:
    """Raw catalogue columns as text, one entry per candidate event, before validation.

    ``depth_scale`` converts the file's depth unit to metres (1000 for km, 1 for m).
    ``line`` is the 1-based file line of each event; ``raw`` is the text shown in rejects.
    """

    time: list | pd.Series
    latitude: list | pd.Series
    longitude: list | pd.Series
    depth: list | pd.Series
    magnitude: list | pd.Series
    magnitude_type: list | pd.Series
    label: list | pd.Series
    event_id: list | pd.Series
    line: np.ndarray
    raw: Sequence[str]
    depth_scale: float = 1.0


@dataclass(frozen=True)
class BuiltCatalog:
    """A validated, sorted EventCatalog table plus its rejects, notes and assumptions."""

    data: pd.DataFrame
    rejects: list[tuple]
    notes: tuple[str, ...]
    assumptions: tuple[str, ...]


def _text(values: list | pd.Series) -> pd.Series:
    s = pd.Series(values, dtype="string").reset_index(drop=True)
    return s.str.strip()


def _number(text: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """Float values and a mask of cells that hold text but are not a finite number.

    ``text`` is stripped; empty cells and <NA> are missing (NaN, not bad).
    """
    present = (text.fillna("") != "").to_numpy()
    try:  # fast path: pyarrow parses the whole column or raises
        arr = pa.array(text.mask(~present), type=pa.string(), from_pandas=True)
        values = pc.cast(arr, pa.float64()).to_numpy(zero_copy_only=False)
    except (pa.ArrowInvalid, pa.ArrowTypeError, ValueError, TypeError):
        num = pd.to_numeric(text, errors="coerce").astype("Float64")
        values = num.to_numpy(dtype="float64", na_value=np.nan)
    values = np.asarray(values, dtype="float64")
    bad = present & ~np.isfinite(values)
    return values, bad


def build_catalog(
    cols: CatalogColumns,
    *,
    source: str,
    class_map: dict[str, str] | None = None,
    magnitude_type: str | None = None,
) -> BuiltCatalog:
    """Validate raw catalogue text columns and build the canonical EventCatalog table.

    Parameters
    ----------
    cols : raw columns; depth in the file's unit (scaled to metres by ``cols.depth_scale``).
    source : file name used in rejects.
    class_map : user label -> class map (see :func:`map_event_classes`).
    magnitude_type : type given to magnitudes whose file gives none (ReadOptions.magnitude_type).

    Returns
    -------
    BuiltCatalog
        Rows with an unparseable or missing time, non-numeric latitude/longitude/depth/magnitude,
        or latitude outside [-90, 90] / longitude outside [-180, 360] degrees become rejects
        ``(file, line, column, reason, raw)``; the rest, sorted by time, form the table.
    """
    time_text = _text(cols.time)
    n = len(time_text)
    # only full ISO 8601 date-times: pandas would also accept "now", "today" or a bare year
    iso = time_text.str.fullmatch(_ISO_TIME_RE).fillna(False).astype(bool)
    times = pd.to_datetime(time_text.where(iso), format="ISO8601", utc=True, errors="coerce")
    lo, hi = pd.Timestamp.min.tz_localize("UTC"), pd.Timestamp.max.tz_localize("UTC")
    times = times.where(times.notna() & (times >= lo) & (times <= hi)).astype("datetime64[ns, UTC]")
    cells = {
        "time": time_text,
        "latitude": _text(cols.latitude),
        "longitude": _text(cols.longitude),
        "depth": _text(cols.depth),
        "magnitude": _text(cols.magnitude),
    }
    lat, lat_bad = _number(cells["latitude"])
    lon, lon_bad = _number(cells["longitude"])
    depth, depth_bad = _number(cells["depth"])
    mag, mag_bad = _number(cells["magnitude"])
    lat_bad |= np.abs(lat) > 90
    lon_bad |= (lon < -180) | (lon > 360)

    reason = np.full(n, "", dtype=object)
    column = np.full(n, "", dtype=object)
    time_bad = times.isna().to_numpy()
    checks = (
        ("magnitude", mag_bad, "non-numeric magnitude"),
        ("depth", depth_bad, "non-numeric depth"),
        ("longitude", lon_bad, "longitude not a number in [-180, 360] degrees"),
        ("latitude", lat_bad, "latitude not a number in [-90, 90] degrees"),
        ("time", time_bad, "missing, unparseable or out-of-range (1677-2262) time"),
    )
    for name, mask, why in checks:  # last assignment wins: time first, then latitude, ...
        reason[mask] = why
        column[mask] = name
    bad = reason != ""
    raw = cols.raw
    line = np.asarray(cols.line)
    rejects = [
        (source, int(line[i]), column[i], f"{reason[i]}: {cells[column[i]].iloc[i]!r}", raw[i])
        for i in np.flatnonzero(bad)
    ]
    rejects = [(f, ln, c, r.replace(": <NA>", ": empty"), w) for f, ln, c, r, w in rejects]

    # the same event id twice: keep the first in file order, reject the others
    ids = _text(cols.event_id)
    cand = (~bad & ids.notna().to_numpy() & (ids.fillna("") != "").to_numpy()).astype(bool)
    dup = np.zeros(n, dtype=bool)
    dup[cand] = ids[cand].duplicated(keep="first").to_numpy()
    if dup.any():
        first = dict(zip(ids[cand & ~dup].tolist(), line[cand & ~dup].tolist(), strict=True))
        for i in np.flatnonzero(dup):
            eid = ids.iloc[i]
            rejects.append(
                (source, int(line[i]), "event_id", f"duplicate event id {eid!r} (first on line {first[eid]})", raw[i])
            )
        rejects.sort(key=lambda r: r[1])
        bad |= dup

    keep = ~bad
    labels = _text(cols.label)[keep].reset_index(drop=True)
    labels = labels.mask(labels == "")
    mapping = map_event_classes(labels, class_map)
    mtype = _text(cols.magnitude_type)[keep].reset_index(drop=True)
    mtype = mtype.mask(mtype == "")
    notes: list[str] = []
    assumptions: list[str] = list(mapping.assumptions)
    if magnitude_type is not None and mtype.isna().any():
        k = int(mtype.isna().sum())
        mtype = mtype.fillna(magnitude_type)
        assumptions.append(f"magnitude type {magnitude_type!r} given to {k} magnitude(s) without one")
    data = pd.DataFrame(
        {
            "time": times[keep].reset_index(drop=True),
            "latitude_deg": lat[keep],
            "longitude_deg": lon[keep],
            "depth_m": depth[keep] * float(cols.depth_scale),
            "magnitude": mag[keep],
            "magnitude_type": mtype.astype("string"),
            "event_class": mapping.classes.astype("string"),
            "event_id": ids[keep].reset_index(drop=True).fillna("").astype("string"),
            "source_type": labels.astype("string"),
        }
    )
    if not data["time"].is_monotonic_increasing:
        data = data.sort_values("time", kind="mergesort").reset_index(drop=True)

    naive = int((~time_text[keep].str.contains(_ZONE_RE, regex=True).fillna(False)).sum())
    if naive:
        assumptions.append(f"{naive} time(s) without a zone designator taken as UTC")
    n_nomag = int(np.isnan(data["magnitude"].to_numpy()).sum())
    if n_nomag:
        notes.append(f"{_events(n_nomag)} had no magnitude: counted, excluded from energy and b-value later")
    for name, col in (("latitude", "latitude_deg"), ("longitude", "longitude_deg"), ("depth", "depth_m")):
        k = int(data[col].isna().sum())
        if k:
            notes.append(f"{_events(k)} had no {name}: kept with {name} empty")
    return BuiltCatalog(data=data, rejects=rejects, notes=tuple(notes), assumptions=tuple(assumptions))


def _events(k: int) -> str:
    return f"{k} event" if k == 1 else f"{k} events"


def finish_notes(source: str, notes: list[str], assumptions: list[str], rejects: list[tuple]) -> list[str]:
    """Reader notes in the house form ``"<file>: <note>"``: notes, a rejects summary, assumptions."""
    out = list(notes)
    if rejects:
        counts = pd.Series([r[2] or "field count" for r in rejects], dtype=object).value_counts()
        parts = ", ".join(f"{k} {v}" for k, v in counts.items())
        out.append(f"{_events(len(rejects))} rejected (see rejects; by field: {parts})")
    out.extend(dict.fromkeys(assumptions))
    return [f"{source}: {n}" for n in out]

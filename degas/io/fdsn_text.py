"""FDSN web-service event text format (fdsnws-event 1.2) -> :class:`degas.model.EventCatalog`.

Structure as summarised in REFERENCES.md section 4.2 (fdsnws-event 1.2, 2019; the specification
document itself was not opened): one event per line, fields separated by ``|``, lines starting
with ``#`` are comments, and the first ``#`` line that names the fields is the header::

    #EventID|Time|Latitude|Longitude|Depth/km|Author|Catalog|Contributor|ContributorID|MagType|Magnitude|MagAuthor|EventLocationName

Fields are found by header name, case-insensitively (``Depth/Km`` too), so an appended 14th
``EventType`` column and reordered columns are fine; Time, Latitude and Longitude are required.
Times with or without ``Z`` and with 0-9 fractional digits are UTC. Depth is in kilometres here
(metres in QuakeML) and is converted to metres. Empty fields are missing values; empty cells after
the last header field are tolerated. A row with another number of fields, a time that is not a full
ISO 8601 date-time within 1677-2262, a non-numeric latitude/longitude/depth/magnitude, or an EventID
seen on an earlier line is rejected with its file line number.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv

from degas.errors import InputError
from degas.io.base import ReadOptions, ReadResult, make_provenance, rejects_frame
from degas.io.event_classes import CatalogColumns, build_catalog, finish_notes
from degas.model import EventCatalog, SeriesMeta

READER = "seismic_catalog/fdsn_text"
_REQUIRED = ("time", "latitude", "longitude")
_RAW_MAX = 300


def _header_fields(line: str) -> list[str] | None:
    """Lower-cased field names if ``line`` is an FDSN event header, else None."""
    if not line.startswith("#"):
        return None
    fields = [f.strip().casefold() for f in line[1:].split("|")]
    while fields and fields[-1] == "":
        fields.pop()
    if "eventid" not in fields or not all(r in fields for r in _REQUIRED) or len(fields) < 5:
        return None
    return fields


def is_fdsn_text(head: bytes, path: Path) -> bool:
    """True when an FDSN event-text header is the first ``#`` line naming fields in ``head``.

    Blank lines and other ``#`` comment lines may come first; any other line before the header
    means "not FDSN text". Never raises.
    """
    try:
        text = head.decode("utf-8", errors="replace").lstrip("\ufeff")
        for line in text.splitlines()[:200]:
            line = line.strip()
            if not line:
                continue
            if not line.startswith("#"):
                return False
            if _header_fields(line) is not None:
                return True
        return False
    except Exception:  # noqa: BLE001 - a detector must never raise
        return False


class _Lines(Sequence[str]):
    """Decoded text of selected file lines, built only when asked for (rejects)."""

    def __init__(self, data: bytes, starts: np.ndarray, ends: np.ndarray, index: np.ndarray) -> None:
        self._data, self._starts, self._ends, self._index = data, starts, ends, index

    def __len__(self) -> int:
        return len(self._index)

    def __getitem__(self, k):  # type: ignore[override]
        i = self._index[k]
        text = self._data[self._starts[i] : self._ends[i]].decode("utf-8", errors="replace")
        return text[:_RAW_MAX]


def _split_rows(payload, n_fields: int, n_rows: int, keep: list[int]) -> pd.DataFrame:
    """Split ``n_rows`` newline-terminated lines of exactly ``n_fields`` fields; return columns
    ``c<i>`` for the field positions in ``keep`` only.

    pyarrow's CSV reader with quoting and escapes switched off does the work.
    """
    names = [f"c{i}" for i in range(n_fields)]
    wanted = [names[i] for i in keep]
    table = pacsv.read_csv(
        pa.BufferReader(pa.py_buffer(payload)),
        read_options=pacsv.ReadOptions(column_names=names, block_size=1 << 24),
        parse_options=pacsv.ParseOptions(delimiter="|", quote_char=False, escape_char=False),
        convert_options=pacsv.ConvertOptions(
            column_types=dict.fromkeys(wanted, pa.string()), strings_can_be_null=False, include_columns=wanted
        ),
    )
    if table.num_rows != n_rows:  # cannot happen for lines without CR/LF; never misalign line numbers
        raise ValueError(f"split {table.num_rows} rows from {n_rows} lines")
    return table.to_pandas(types_mapper={pa.string(): pd.StringDtype("pyarrow")}.get)


_SCAN = 1 << 24  # bytes scanned at a time, to bound temporary arrays on large files


def _positions(arr: np.ndarray, byte: int) -> np.ndarray:
    """Offsets of every ``byte`` in ``arr`` (int64), scanning in blocks."""
    parts = [np.flatnonzero(arr[o : o + _SCAN] == byte) + o for o in range(0, len(arr), _SCAN)]
    return np.concatenate(parts) if parts else np.empty(0, dtype=np.int64)


def _fields_per_line(arr: np.ndarray, ends: np.ndarray) -> np.ndarray:
    """Number of '|'-separated fields on each line (lines end at ``ends``), scanning in blocks."""
    counts = np.ones(len(ends), dtype=np.int64)
    for o in range(0, len(arr), _SCAN):
        pipes = np.flatnonzero(arr[o : o + _SCAN] == ord("|")) + o
        if pipes.size:
            counts += np.bincount(np.searchsorted(ends, pipes), minlength=len(ends))[: len(ends)]
    return counts


def _classify_lines(data: bytes, arr: np.ndarray, starts: np.ndarray, ends: np.ndarray) -> np.ndarray:
    """Per line: 0 data, 1 comment ('#' first non-blank character), 2 blank."""
    lengths = ends - starts
    first = np.full(len(starts), 10, dtype=np.uint8)
    nonempty = lengths > 0
    first[nonempty] = arr[starts[nonempty]]
    kind = np.zeros(len(starts), dtype=np.int8)
    kind[first == ord("#")] = 1
    kind[~nonempty] = 2
    for i in np.flatnonzero(np.isin(first, (9, 11, 12, 32))):  # leading blanks: look closer (rare)
        text = data[starts[i] : ends[i]].decode("utf-8", errors="replace").strip()
        kind[i] = 2 if not text else (1 if text.startswith("#") else 0)
    return kind


def read_fdsn_text(path: Path, options: ReadOptions) -> ReadResult:
    """Read an FDSN event-text file into one EventCatalog (depth converted km -> m, times UTC).

    Parameters
    ----------
    path : the ``|``-separated FDSN event text file.
    options : ReadOptions; ``station`` names the catalogue, ``class_map`` maps EventType labels
        to classes, ``magnitude_type`` fills missing MagType cells.

    Returns
    -------
    ReadResult
        ``records`` = [EventCatalog]; bad rows in ``rejects`` with their file line number.

    Raises
    ------
    InputError
        No header, or no event rows at all ("no events").
    ConfigError
        When ``options.class_map`` names an unknown class.
    """
    path = Path(path)
    name = path.name
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise InputError(name, f"cannot read file: {exc.strerror or exc}") from None
    assumptions: list[str] = []
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    try:
        data.decode("utf-8")
    except UnicodeDecodeError:
        data = data.decode("utf-8", errors="replace").encode("utf-8")
        assumptions.append("bytes that are not UTF-8 replaced by U+FFFD")
    if b"\r" in data:
        data = data.replace(b"\r\n", b"\n").replace(b"\r", b"\n")
    if not data.strip():
        raise InputError(name, "no events: the file is empty")
    if not data.endswith(b"\n"):
        data += b"\n"

    arr = np.frombuffer(data, dtype=np.uint8)
    ends = _positions(arr, ord("\n"))
    starts = np.concatenate(([0], ends[:-1] + 1))
    kind = _classify_lines(data, arr, starts, ends)

    def line_text(i: int) -> str:
        return data[starts[i] : ends[i]].decode("utf-8", errors="replace")

    header: list[str] | None = None
    header_at = -1
    for i in range(len(kind)):
        if kind[i] == 0:
            break
        if kind[i] == 1:
            header = _header_fields(line_text(i).strip())
            if header is not None:
                header_at = i
                break
    if header is None:
        data_lines = np.flatnonzero(kind == 0)
        where = int(data_lines[0]) + 1 if data_lines.size else None
        raise InputError(
            name,
            "not FDSN event text: no '#EventID|Time|Latitude|Longitude|...' header before the data",
            line=where,
        )
    is_data = kind == 0
    is_data[: header_at + 1] = False
    if not is_data.any():
        raise InputError(name, "no events: the file has a header but no event rows")

    n_fields = len(header)
    counts = _fields_per_line(arr, ends)
    good = is_data & (counts == n_fields)
    # Tolerate empty cells after the last header field: drop them from over-long rows.
    fixed: dict[int, bytes] = {}
    for i in np.flatnonzero(is_data & (counts > n_fields)):
        parts = data[starts[i] : ends[i]].split(b"|")
        if not any(p.strip() for p in parts[n_fields:]):
            fixed[int(i)] = b"|".join(parts[:n_fields])
            good[i] = True
    rejects: list[tuple] = [
        (name, int(i) + 1, None, f"expected {n_fields} '|'-separated fields, found {int(counts[i])}",
         line_text(int(i))[:_RAW_MAX])
        for i in np.flatnonzero(is_data & ~good)
    ]  # fmt: skip

    used = ("eventid", "time", "latitude", "longitude", "depth/km", "catalog", "magtype", "magnitude", "eventtype")
    keep = sorted({header.index(f) for f in used if f in header})
    order = np.flatnonzero(good)
    if order.size:
        modified = np.zeros(len(ends), dtype=bool)
        modified[list(fixed)] = True
        breaks = np.flatnonzero((np.diff(order) != 1) | modified[order[1:]] | modified[order[:-1]]) + 1
        view = memoryview(data)
        pieces = []
        for seg in np.split(order, breaks):
            first = int(seg[0])
            if modified[first]:
                pieces.append(fixed[first] + b"\n")
            else:
                pieces.append(view[starts[first] : ends[int(seg[-1])] + 1])
        payload = pieces[0] if len(pieces) == 1 else b"".join(pieces)
        frame = _split_rows(payload, n_fields, order.size, keep)
    else:
        frame = pd.DataFrame({f"c{i}": pd.Series([], dtype="string") for i in keep})

    def col(field: str) -> pd.Series:
        if field in header:
            return frame[f"c{header.index(field)}"]
        return pd.Series(pd.NA, index=frame.index, dtype="string")

    notes: list[str] = []
    if "depth/km" in header:
        assumptions.insert(0, "FDSN text Depth/km converted to metres (x1000), positive down")
    else:
        notes.append("no Depth/km column: depths left empty")
    label = col("eventtype")
    if "eventtype" not in header:
        notes.append("no EventType column: every event classed as other")
    built = build_catalog(
        CatalogColumns(
            time=col("time"),
            latitude=col("latitude"),
            longitude=col("longitude"),
            depth=col("depth/km"),
            magnitude=col("magnitude"),
            magnitude_type=col("magtype"),
            label=label,
            event_id=col("eventid"),
            line=order + 1,
            raw=_Lines(data, starts, ends, order),
            depth_scale=1000.0,
        ),
        source=name,
        class_map=options.class_map,
        magnitude_type=options.magnitude_type,
    )
    rejects = sorted(rejects + built.rejects, key=lambda r: r[1])
    assumptions.extend(built.assumptions)
    if options.timezone:
        assumptions.append(f"timezone option {options.timezone!r} ignored: times in this format are UTC")
    notes = finish_notes(name, notes + list(built.notes), assumptions, rejects)

    station = options.station
    if station is None:
        cats = col("catalog").str.strip()
        uniq = cats[cats.fillna("") != ""].unique()
        station = str(uniq[0]) if len(uniq) == 1 else None
    meta = SeriesMeta(kind="seismic_catalog", quantity="events", station=station)
    prov = make_provenance(path, READER, len(built.data), len(rejects), "km", assumptions, options)
    catalog = EventCatalog(built.data, meta, (prov,))
    return ReadResult(records=[catalog], rejects=rejects_frame(rejects), notes=notes)

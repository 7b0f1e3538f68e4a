"""Tabular exports (CSV, TSV, semicolon, pipe; Excel .xlsx; Parquet) -> canonical records.

One reader serves every tabular kind (gas flux, gas ratio, extrusion rate, erupted volume,
amplitude/other series, eruption chronology, seismic catalogue): the kind is told
(``ReadOptions.kind``) or detected from the headers. Every row that cannot be used is
reported in the rejects table with its file line; nothing is dropped silently.

Preamble lines before the header ("# station: VLM-N", "# vesicularity: 0.15") are read as
metadata; keys understood: station, species, kind, timezone/times, vesicularity,
bulk density, dense density, volume basis, magnitude type.
"""

from __future__ import annotations

import codecs
import csv
import hashlib
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from degas.errors import DegasError, InputError, UnitError
from degas.io.base import ReadOptions, ReadResult, make_provenance, rejects_frame
from degas.io.columns import (
    MAGNITUDE_TYPE_HEADERS,
    Header,
    guess_kind,
    match_role,
    species_in,
    split_header,
    volume_basis_in,
)
from degas.io.timeparse import parse_times
from degas.model import (
    CANONICAL_UNIT,
    DISPLAY_UNIT,
    ERUPTIVE_STATES,
    ERUPTIVE_STYLES,
    KINDS,
    Chronology,
    EventCatalog,
    SeriesMeta,
    TimeSeries,
)
from degas.units import conversion_factor

HEAD_BYTES = 64 * 1024
# Missing-value codes that instrument exports use (common practice); only negative ones, so that a real
# 9999 counts or 9999 t/d is never thrown away. Other codes: map them with a mapping file or clean first.
MISSING_CODES = (-999.0, -9999.0, -99999.0)
SERIES_KINDS = ("gas_flux", "gas_ratio", "extrusion_rate", "erupted_volume", "amplitude", "other", "event_counts")
NONNEGATIVE_KINDS = ("gas_flux", "extrusion_rate", "erupted_volume")


# --------------------------------------------------------------------------- detection


def is_delimited(head: bytes, path: Path) -> bool:
    """Loose check: decodable text whose first non-comment line has a delimiter."""
    if b"\x00" in head[:4096] or not head.strip():
        return False
    try:
        text = _decode(head)
    except UnicodeDecodeError:
        text = _decode_legacy(head)  # the reader falls back to Windows-1252 / Latin-1 the same way
        if _binary_like(text):
            return False
    if text.lstrip().startswith("<"):
        return False
    lines = [ln for ln in split_lines(text) if ln.strip() and not ln.lstrip().startswith("#")]
    if not lines:  # only comments: let the reader say so
        return True
    return any(d in lines[0] for d in (",", ";", "\t", "|"))


def is_excel(head: bytes, path: Path) -> bool:
    return head[:4] == b"PK\x03\x04" and path.suffix.lower() in (".xlsx", ".xlsm")


def is_parquet(head: bytes, path: Path) -> bool:
    return head[:4] == b"PAR1"


# --------------------------------------------------------------------------- raw loading


@dataclass
class RawTable:
    """Cells as read, before any interpretation."""

    frame: pd.DataFrame
    headers: list[str]
    lines: np.ndarray  # file line (1-based; Excel row; Parquet row) of each frame row
    meta: dict[str, str] = field(default_factory=dict)
    rejects: list[tuple] = field(default_factory=list)
    line_label: str = "line"
    delimiter: str | None = None
    notes: list[str] = field(default_factory=list)  # what loading decided (sheet read, unit row, ...)
    precision: dict = field(default_factory=dict)  # time column -> per-row date precision ("" = exact)


# What a line is, for the sniffer and the loader alike: ends at LF, CR LF or a lone CR (as the CSV parser
# of pyarrow reads them). NEL, U+2028/U+2029, form feed and vertical tab are characters inside a line.
_EOL = re.compile(r"\r\n|\r|\n")
_EOL_BYTES = re.compile(rb"\r\n|\r|\n")
_NON_BLANK = re.compile(rb"\S")
# bytes that Windows-1252 leaves undefined; a file holding any of them is read as Latin-1 instead
_CP1252_UNDEFINED = (b"\x81", b"\x8d", b"\x8f", b"\x90", b"\x9d")


def split_lines(text: str) -> list[str]:
    """Lines of ``text`` by the rule above (no empty last item for a final line end)."""
    lines = _EOL.split(text)
    if lines and lines[-1] == "":
        lines.pop()
    return lines


def _legacy_encoding(data: bytes) -> str:
    """Encoding of text that is not UTF-8: Windows-1252 (the usual 8-bit export) unless it holds a byte that
    Windows-1252 leaves undefined, then Latin-1 (every byte a character)."""
    return "latin-1" if any(b in data for b in _CP1252_UNDEFINED) else "cp1252"


def _decode_legacy(data: bytes) -> str:
    return data.decode(_legacy_encoding(data))


def _binary_like(text: str) -> bool:
    """More than 8 control characters (other than line ends and tabs) in the first 4096 characters."""
    return sum(ch < " " and ch not in "\r\n\t\f" for ch in text[:4096]) > 8


def _decode(data: bytes) -> str:
    if data.startswith(codecs.BOM_UTF8):
        return data[len(codecs.BOM_UTF8):].decode("utf-8")
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        if exc.start >= len(data) - 4:  # cut in the middle of a character at the end of the head
            return data[: exc.start].decode("utf-8")
        raise


_META = re.compile(r"^\s*#+\s*([A-Za-z][A-Za-z0-9 _/\-]*?)\s*[:=]\s*(.+?)\s*$")


def _sniff(path: Path, data: bytes | None = None) -> tuple[str, int, dict[str, str], str]:
    """Encoding, number of preamble lines, preamble metadata and delimiter.

    The encoding is decided on the whole file (``data``, read when not given): UTF-8 when all of it is
    valid UTF-8, else Windows-1252 or Latin-1 (see :func:`_legacy_encoding`), so the loader never meets an
    invalid byte half-way.
    """
    if data is None:
        data = path.read_bytes()
    head = data[:HEAD_BYTES]
    if not head.strip():
        raise InputError(path.name, "empty file")
    if b"\x00" in head[:4096]:
        raise InputError(path.name, "binary data, not a text table (wrong file?)")
    if _valid_utf8_bytes(data):
        text = _decode(head)
        encoding = "utf-8-sig" if head.startswith(codecs.BOM_UTF8) else "utf-8"
    else:
        encoding = _legacy_encoding(data)
        text = head.decode(encoding)
        if _binary_like(text):
            raise InputError(path.name, "binary data, not a text table (wrong file?)") from None
    lines = split_lines(text)
    meta: dict[str, str] = {}
    n_pre = 0
    for ln in lines:
        if ln.strip() == "" or ln.lstrip().startswith("#"):
            m = _META.match(ln)
            if m:
                meta[m.group(1).strip().lower()] = m.group(2)
            n_pre += 1
            continue
        break
    if n_pre >= len(lines):
        raise InputError(path.name, "no header or data lines (only comments)")
    header_line = lines[n_pre]
    counts = {d: header_line.count(d) for d in (",", ";", "\t", "|")}
    delim = max(counts, key=counts.get)
    if counts[delim] == 0:
        raise InputError(path.name, "no column delimiter (, ; tab |) in the header line", line=n_pre + 1)
    return encoding, n_pre, meta, delim


def load_delimited(path: Path) -> RawTable:
    """Read a delimited text file as strings, keeping the file line of every row."""
    import pyarrow as pa
    import pyarrow.csv as pcsv

    data = path.read_bytes()
    encoding, n_pre, meta, delim = _sniff(path, data)
    if encoding not in ("utf-8", "utf-8-sig"):
        meta["encoding"] = f"{'windows-1252' if encoding == 'cp1252' else encoding} (not valid UTF-8)"
    bad: list[tuple[int, str]] = []
    # the header line and the data that follow it, found by the sniffer's line rule
    ends = _EOL_BYTES.finditer(data)
    start = 0
    header_end = len(data)
    for i, m in enumerate(ends):
        if i < n_pre:
            start = m.end()
            continue
        header_end, body = m.start(), m.end()
        break
    else:
        body = len(data)
    header_bytes = data[start:header_end]
    if n_pre == 0 and header_bytes.startswith(codecs.BOM_UTF8):
        header_bytes = header_bytes[len(codecs.BOM_UTF8):]
    pa_encoding = "utf8" if encoding.startswith("utf-8") else encoding
    offset = n_pre + 1  # file lines before the first data line

    def on_invalid(row) -> str:
        text = row.text or ""
        if text.strip() and not text.lstrip().startswith("#"):
            bad.append((None if row.number is None else row.number + offset, text))
        return "skip"

    try:
        header = next(csv.reader([header_bytes.decode(encoding, errors="replace")], delimiter=delim))
    except csv.Error as exc:
        raise InputError(path.name, f"cannot read the header line: {exc}", line=n_pre + 1) from None
    header = [h.strip() for h in header]
    while header and header[-1] == "":
        header.pop()
    if len(set(header)) != len(header):
        dup = sorted({h for h in header if header.count(h) > 1})
        raise InputError(path.name, f"duplicate column names {dup}", line=n_pre + 1)
    buffer = pa.py_buffer(data).slice(body)

    def _read(threads: bool):
        return pcsv.read_csv(
            pa.BufferReader(buffer),
            read_options=pcsv.ReadOptions(
                skip_rows=0, column_names=header, use_threads=threads, encoding=pa_encoding,
                block_size=1 << 24,
            ),
            parse_options=pcsv.ParseOptions(delimiter=delim, invalid_row_handler=on_invalid,
                                            ignore_empty_lines=False),
            convert_options=pcsv.ConvertOptions(
                column_types={h: pa.string() for h in header}, strings_can_be_null=False,
                quoted_strings_can_be_null=False,
            ),
        )

    try:
        # multi-threaded first; invalid rows carry no line number then, so such files are read again
        if _NON_BLANK.search(data, body) is None:  # a header and nothing else: the builders say "no data rows"
            table = pa.table({h: pa.array([], pa.string()) for h in header})
        else:
            table = _read(True)
        if bad:
            bad.clear()
            table = _read(False)
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError, UnicodeError) as exc:
        text = " ".join(str(exc).split())[:200]
        raise InputError(path.name, f"cannot read as a delimited table: {text}") from None
    first_data_line = n_pre + 2
    n = table.num_rows
    if bad:
        bad_lines = np.array(sorted(b[0] for b in bad if b[0] is not None), dtype="int64")
        all_lines = np.arange(first_data_line, first_data_line + n + len(bad), dtype="int64")
        lines = np.setdiff1d(all_lines, bad_lines, assume_unique=True)[:n]
    else:
        lines = np.arange(first_data_line, first_data_line + n, dtype="int64")
    frame = table.to_pandas()
    rejects = [
        (path.name, num, None, f"wrong number of fields (expected {len(header)})",
         text[:200])
        for num, text in bad
    ]
    # drop blank lines (all cells empty) silently: they are not data
    if len(frame):
        first = frame.columns[0]
        blank = (frame[first].str.len() == 0).to_numpy().copy()
        if blank.any():  # one vectorised pass over the candidate rows, however wide the file
            cells = frame.loc[blank].to_numpy(dtype=str)
            blank[blank] = (np.char.strip(cells) == "").all(axis=1)
        if blank.any():
            frame = frame.loc[~blank].reset_index(drop=True)
            lines = lines[~blank]
    return RawTable(frame, header, lines, meta, rejects, delimiter=delim)


def _valid_utf8_bytes(data: bytes) -> bool:
    """True when ``data`` decodes as UTF-8 (checked in 1 MiB blocks, without one big copy)."""
    dec = codecs.getincrementaldecoder("utf-8")()
    view = memoryview(data)
    try:
        for i in range(0, len(view), 1 << 20):
            dec.decode(view[i:i + (1 << 20)])
        dec.decode(b"", final=True)
    except UnicodeDecodeError:
        return False
    return True


def load_excel(path: Path, sheet: str | int | None = None) -> RawTable:
    """Read the first sheet (or ``sheet``: name, 1-based number or "all") of an .xlsx or .xls workbook."""
    from degas.io.workbook import load_workbook

    return load_workbook(path, None if sheet is None else str(sheet))


def load_parquet(path: Path) -> RawTable:
    import pyarrow.parquet as pq

    try:
        table = pq.read_table(path)
    except Exception as exc:
        raise InputError(path.name, f"cannot read as Parquet: {exc}") from None
    meta = {}
    if table.schema.metadata:
        for k, v in table.schema.metadata.items():
            key = k.decode(errors="ignore").lower()
            if key.startswith("degas.") or key in ("station", "species", "vesicularity"):
                meta[key.removeprefix("degas.")] = v.decode(errors="ignore")
    try:
        frame = table.to_pandas()
    except Exception as exc:  # noqa: BLE001 - corrupt pandas metadata and the like: the file is refused in one line
        text = " ".join(str(exc).split())[:200]
        raise InputError(path.name, f"cannot convert the Parquet table ({type(exc).__name__}: {text})") from None
    frame.columns = [str(c) for c in frame.columns]
    return RawTable(frame, list(frame.columns), np.arange(1, len(frame) + 1), meta, [], line_label="row")


# --------------------------------------------------------------------------- column plan

MAX_VALUE_COLUMNS = 50  # series one file may create; a wider table is almost surely not meant column by column


def _shown(names, limit: int = 12) -> str:
    """Column names for a message: all of them when few, else the first ``limit`` and the count."""
    names = list(names)
    if len(names) <= limit:
        return repr(names)
    return repr(names[:limit])[:-1] + f", ... ({len(names):,} columns in all)]"


@dataclass
class Plan:
    kind: str
    roles: dict[str, str]  # role -> column
    values: list[tuple[str, Header]]  # value columns with parsed headers
    uncertainty_for: dict[str, str]  # value column -> uncertainty column
    classes: dict[str, str] = field(default_factory=dict)  # event_counts: value column -> event class


def _headers(raw: RawTable) -> dict[str, Header]:
    return {h: split_header(h) for h in raw.frame.columns}


def plan_columns(raw: RawTable, options: ReadOptions, source: str) -> Plan:
    hdrs = _headers(raw)
    roles: dict[str, str] = {}
    for role, col in options.columns.items():
        if col not in raw.frame.columns:
            raise InputError(source, f"mapped column {col!r} (for {role}) not found; columns are {_shown(hdrs)}")
        roles[role] = col
    taken = set(roles.values())

    def find(role: str, alias_role: str | None = None) -> str | None:
        if role in roles:
            return roles[role]
        for col, h in hdrs.items():
            if col not in taken and match_role(h, alias_role or role):
                roles[role] = col
                taken.add(col)
                return col
        return None

    kind = options.kind or raw.meta.get("kind")
    if kind is not None and kind not in KINDS:
        raise InputError(source, f"unknown kind {kind!r}; valid kinds: {', '.join(KINDS)}")
    # chronology?
    has_start = any(match_role(h, "start") for h in hdrs.values()) or "start" in roles
    has_state = any(match_role(h, "state") for h in hdrs.values()) or "state" in roles
    if kind == "chronology" or (kind is None and has_start and has_state):
        find("start", "start") or find("start", "time")
        if "start" in roles:
            roles["time"] = roles.pop("start")
        find("end")
        find("state")
        find("style")
        find("location")
        find("note")
        if "time" not in roles:
            raise InputError(source, f"no start column for a chronology; columns are {_shown(hdrs)}")
        if "state" not in roles and "style" not in roles:
            raise InputError(source, f"no state/activity or style column, so this is not an eruption chronology "
                                     f"(wrong file or wrong --kind?); columns are {_shown(hdrs)}")
        return Plan("chronology", roles, [], {})

    find("time")
    if "time" not in roles:
        find("time", "start")
    if "time" not in roles:
        raise InputError(source, f"no time column found; columns are {_shown(hdrs)} "
                                 "(name one with --time-col or [columns] time = ... in a mapping file)")
    if kind in (None, "event_counts"):
        from degas.io.counts import count_columns

        by_class = count_columns(hdrs, taken, options.class_map, told=kind == "event_counts")
        if kind == "event_counts" or len(by_class) >= 2:
            return _plan_counts(source, hdrs, roles, taken, find, by_class, options)
    cat_roles = ("magnitude", "latitude", "longitude", "event_class", "magnitude_type", "event_id")
    looks_catalog = any(any(match_role(h, r) for r in ("magnitude", "latitude", "event_class"))
                        for c, h in hdrs.items() if c not in taken)
    if kind == "seismic_catalog" or (kind is None and looks_catalog):
        for r in (*cat_roles, "depth", "station"):
            find(r)
        return Plan("seismic_catalog", roles, [], {})

    find("end")
    find("quality")
    find("station")
    unc_cols = [c for c, h in hdrs.items() if c not in taken and match_role(h, "uncertainty")]
    unc_cols += [c for c, h in hdrs.items() if c not in taken and c not in unc_cols
                 and (re.search(r"\b(err|error|unc|sigma|sd|std)\b", h.name)
                      or re.fullmatch(r"(so2|co2|h2s|h2o)\s?(err|error|unc|sigma|sd|std)", h.name))]
    if "uncertainty" in roles:
        unc_cols = [roles["uncertainty"]]
    value_cols: list[str] = []
    if "value" in roles:
        value_cols = [roles["value"]]
    else:
        for c, h in hdrs.items():
            if c in taken or c in unc_cols:
                continue
            if kind is None and guess_kind(h) is not None:
                value_cols.append(c)
            elif kind is not None and (guess_kind(h) in (kind, None) or len(hdrs) - len(taken) == 1):
                value_cols.append(c)
        if kind is not None and not value_cols:
            rest = [c for c in hdrs if c not in taken and c not in unc_cols]
            if len(rest) == 1:
                value_cols = rest
        if kind is not None and len(value_cols) > 1:
            strict = [c for c in value_cols if guess_kind(hdrs[c]) == kind]
            value_cols = strict or value_cols
    if len(value_cols) > MAX_VALUE_COLUMNS:
        raise InputError(source, f"{len(value_cols):,} columns would each become a series (at most "
                                 f"{MAX_VALUE_COLUMNS}); pick the value column with --value-col, or ingest a "
                                 "file holding only the wanted columns")
    if not value_cols:
        raise InputError(source, f"no value column recognised; columns are {_shown(hdrs)} "
                                 "(say which with --value-col and --kind)")
    if kind is None:
        kinds = {guess_kind(hdrs[c]) for c in value_cols} - {None}
        if len(kinds) != 1:
            raise InputError(source, f"cannot tell what kind of series this is (columns {_shown(value_cols)}); "
                                     f"pass --kind ({', '.join(SERIES_KINDS)})")
        kind = kinds.pop()
    if kind not in SERIES_KINDS:
        raise InputError(source, f"file looks like a {kind}-free series table but --kind {kind} was given; "
                                 f"columns are {_shown(hdrs)}")
    unc_for: dict[str, str] = {}
    for v in value_cols:
        if len(value_cols) == 1 and unc_cols:
            unc_for[v] = unc_cols[0]
            continue
        sp = species_in(hdrs[v].words)
        for u in unc_cols:
            if sp and species_in(_unc_words(hdrs[u])) == sp:
                unc_for[v] = u
    order = list(hdrs)
    for u in unc_cols:  # "±" or "sd" with no species: the value column just left of it
        if u in unc_for.values() or species_in(_unc_words(hdrs[u])):
            continue
        left = order[order.index(u) - 1] if order.index(u) > 0 else None
        if left in value_cols and left not in unc_for:
            unc_for[left] = u
    for u in unc_cols:
        taken.add(u)
    return Plan(kind, roles, [(c, hdrs[c]) for c in value_cols], unc_for)


def _plan_counts(source, hdrs, roles, taken, find, by_class, options) -> Plan:
    """Plan of a counts-by-class table: time (and end, station) plus one column per event class."""
    find("end")
    find("station")
    if "value" in roles:
        from degas.io.counts import class_of_header

        col = roles["value"]
        by_class = {col: class_of_header(hdrs[col], options.class_map) or "other"}
    by_class = {c: k for c, k in by_class.items() if c not in taken or c == roles.get("value")}
    if not by_class:
        raise InputError(source, f"no column of counts by event class found; columns are {list(hdrs)} (name the "
                                 "classes VT, LP, hybrid, rockfall, explosion, tremor, or map local codes with "
                                 "[class_map] in a --map file)")
    seen: dict[str, str] = {}
    for c, k in by_class.items():
        if k in seen:
            raise InputError(source, f"columns {seen[k]!r} and {c!r} both hold {k} counts; map them apart with "
                                     "[class_map] in a --map file")
        seen[k] = c
    return Plan("event_counts", roles, [(c, hdrs[c]) for c in by_class], {}, dict(by_class))


def _unc_words(h: Header) -> str:
    """Words of an uncertainty header with a glued suffix split off ("so2err" -> "so2 err")."""
    return re.sub(r"^(so2|co2|h2s|h2o)(err|error|unc|sigma|sd|std)$", r"\1 \2", h.words)


# --------------------------------------------------------------------------- helpers


class _Rejects:
    """Collects rejected rows; each row is rejected once, with its first reason."""

    def __init__(self, source: str, raw: RawTable):
        self.source = source
        self.raw = raw
        self.rows: list[tuple] = list(raw.rejects)
        self.alive = np.ones(len(raw.frame), dtype=bool)

    def reject(self, mask: np.ndarray, column: str | None, reason, values: pd.Series | None = None) -> None:
        mask = np.asarray(mask, dtype=bool) & self.alive
        if not mask.any():
            return
        idx = np.flatnonzero(mask)
        vals = values.to_numpy()[idx] if values is not None else [None] * len(idx)
        for i, v in zip(idx, vals, strict=True):
            r = reason(i) if callable(reason) else reason
            self.rows.append((self.source, int(self.raw.lines[i]), column, r, None if v is None else str(v)[:200]))
        self.alive &= ~mask


def _numeric(col: pd.Series, decimal_comma: bool = False) -> pd.Series:
    """Cells -> float64; unparseable -> NaN. Decimal commas ("1,25") only when ``decimal_comma`` (files
    separated by semicolons or tabs); elsewhere "1,250" is ambiguous (a thousands separator?) and rejected."""
    if pd.api.types.is_numeric_dtype(col.dtype) and not pd.api.types.is_bool_dtype(col.dtype):
        return col.astype("float64")
    fast = _arrow_float(col)
    if fast is not None:
        return fast
    s = col.astype("string").str.strip()
    out = pd.to_numeric(s, errors="coerce").astype("float64")
    bad = out.isna() & s.notna() & (s != "")
    if bad.any() and decimal_comma:
        comma = s[bad].str.fullmatch(r"-?\d+,\d+")
        if comma.any():
            fixed = pd.to_numeric(s[bad][comma].str.replace(",", ".", regex=False), errors="coerce")
            out.loc[fixed.index] = fixed
    return out


def _arrow_float(col: pd.Series) -> pd.Series | None:
    """Fast path: a column whose every cell is a plain number; None when any cell needs care."""
    import pyarrow as pa
    import pyarrow.compute as pc

    try:
        arr = pa.array(col, type=pa.string(), from_pandas=True)
        if arr.null_count:
            return None
        out = pc.cast(arr, pa.float64())
    except (pa.ArrowInvalid, pa.ArrowTypeError, pa.ArrowNotImplementedError, TypeError):
        return None
    return pd.Series(out.to_numpy(zero_copy_only=False), index=col.index, dtype="float64")


def _blank(col: pd.Series) -> np.ndarray:
    if pd.api.types.is_numeric_dtype(col.dtype) or pd.api.types.is_datetime64_any_dtype(col.dtype):
        return col.isna().to_numpy()
    s = col.astype("string")
    return (s.isna() | (s.str.strip() == "")).to_numpy()


def _unit_for(role_unit: str | None, header: Header | None, meta_unit: str | None) -> str | None:
    return role_unit or (header.unit if header else None) or meta_unit


_UTC_OFFSET = re.compile(r"\b(?:utc|gmt)\s*([+-])\s*(\d{1,2})(?::?(\d\d))?", re.I)


def _zone_from_text(text: str) -> str | None:
    """"UTC-05:00" / "GMT+2" -> "-05:00" / "+02:00"; plain "UTC" -> "UTC"; else None."""
    m = _UTC_OFFSET.search(text)
    if m:
        return f"{m.group(1)}{int(m.group(2)):02d}:{m.group(3) or '00'}"
    if re.search(r"\butc\b|\bgmt\b", text, re.I) and not re.search(r"offset|local", text, re.I):
        return "UTC"
    return None


def _times(raw: RawTable, col: str, options: ReadOptions, rej: _Rejects, source: str) -> tuple[pd.Series, tuple]:
    from degas.io.timebase import checked_times

    return checked_times(raw, col, options, rej, source, _times_parsed)


def _times_parsed(raw: RawTable, col: str, options: ReadOptions, rej: _Rejects, source: str
                  ) -> tuple[pd.Series, tuple]:
    tz = options.timezone or raw.meta.get("timezone") or raw.meta.get("time zone")
    extra: tuple[str, ...] = ()
    if tz is None:
        for text, where in ((raw.meta.get("times", ""), "file header"), (col, "column name")):
            tz = _zone_from_text(text)
            if tz is not None:
                extra = (f"naive timestamps taken in {tz} (from the {where} {text!r})",)
                break
    try:
        parsed = parse_times(raw.frame[col], time_format=options.time_format, timezone=tz, dayfirst=options.dayfirst)
    except DegasError as exc:
        raise InputError(source, str(exc), column=col) from None
    except (ValueError, TypeError) as exc:
        raise InputError(source, f"cannot read times with format {options.time_format!r}: {exc}",
                         column=col) from None
    if tz is None and re.search(r"local", col, re.I) and any(a.startswith("naive timestamps taken as UTC")
                                                             for a in parsed.assumptions):
        raise InputError(source, f"column {col!r} holds local times and no zone was given; pass --tz (an IANA "
                                 "zone or an offset such as -05:00), or tz = ... in a mapping file", column=col)
    if parsed.format == "decimal_year" and options.time_format is None:
        from degas.io.timebase import NUMERIC_TIME_HELP, header_says_year

        if not header_says_year(col):
            raise InputError(source, f"column {col!r} holds plain numbers; they look like years but the header "
                                     f"does not say so, and degas does not guess: {NUMERIC_TIME_HELP}", column=col)
    if parsed.format in ("excel", "unix") and options.time_format is None:
        from degas.io.timebase import NUMERIC_TIME_HELP, header_says_elapsed

        if header_says_elapsed(col):  # "seconds" 20000-80000 are not Excel serial days
            raise InputError(source, f"column {col!r} holds elapsed time counted from an origin the file does not "
                                     f"give; degas does not guess it: {NUMERIC_TIME_HELP}", column=col)
    t = parsed.times
    if not t.isna().any():  # every cell parsed: nothing to explain
        return t, _merge_zone(parsed, extra)
    blank = _blank(raw.frame[col])
    if parsed.format in ("iso", "dayfirst") or "%" in parsed.format:
        from degas.io.timebase import approximate_rows

        approximate_rows(raw, col, options, rej, t, blank)
    rej.reject(blank, col, "missing time")
    if parsed.local_invalid is not None:
        rej.reject(parsed.local_invalid, col, f"ambiguous or nonexistent local time in {tz} (daylight-saving "
                                              "change); give times in UTC or with an offset", raw.frame[col])
    rej.reject(t.isna().to_numpy() & ~blank, col, "unparseable time", raw.frame[col])
    return t, _merge_zone(parsed, extra)


def _merge_zone(parsed, extra: tuple[str, ...]) -> tuple[str, ...]:
    """The parser's assumptions, with its generic zone note replaced by where the zone came from."""
    assumptions = parsed.assumptions
    if extra and any(a.startswith("naive timestamps taken in") for a in assumptions):
        assumptions = tuple(a for a in assumptions if not a.startswith("naive timestamps taken in")) + extra
    return assumptions


def _dedupe_and_sort(df: pd.DataFrame, lines: np.ndarray, key: list[str], compare: list[str], source: str,
                     rejects: list, notes: list[str], what: str,
                     label: str | None = None, sort_by: str | None = None) -> tuple[pd.DataFrame, np.ndarray]:
    """Reject later duplicates of a key (same or conflicting values), then sort by time."""
    if len(df) == 0:
        return df, lines
    df, lines = reject_duplicates(df, lines, key, compare, source, rejects, what, label)
    t = _sortable(df[sort_by or key[0]])
    if len(t) > 1 and (t[1:] < t[:-1]).any():
        order = np.argsort(t, kind="stable")
        n_out = int((t[1:] < t[:-1]).sum())
        notes.append(f"{source}: {n_out} row(s) out of time order; sorted")
        df = df.iloc[order]
        lines = lines[order]
    return df.reset_index(drop=True), lines


def reject_duplicates(df: pd.DataFrame, lines: np.ndarray, key: list[str], compare: list[str], source: str,
                      rejects: list, what: str, label: str | None = None) -> tuple[pd.DataFrame, np.ndarray]:
    """Keep the first row of each ``key``; every later one becomes a reject (file, line, column ``label``)
    saying whether it repeats that row ("duplicate of line N") or differs from it in a ``compare`` column
    ("duplicate <what> with a different value than line N")."""
    if len(df) == 0:
        return df, lines
    k0 = df[key[0]]
    if len(key) == 1 and isinstance(k0.dtype, pd.DatetimeTZDtype) and k0.notna().all():
        t = k0.to_numpy(dtype="datetime64[ns]").astype("int64")
        if len(t) < 2 or bool(np.all(t[1:] >= t[:-1])):  # sorted (the usual case): duplicates are neighbours
            dup = np.r_[False, t[1:] == t[:-1]] if len(t) else np.zeros(0, dtype=bool)
        else:
            dup = df.duplicated(subset=key, keep="first").to_numpy()
    else:
        dup = df.duplicated(subset=key, keep="first").to_numpy()
    if dup.any():  # vectorised: each later duplicate is compared with the first row of its key
        codes = df.groupby(key, sort=False, dropna=False).ngroup().to_numpy()
        _, first_of_code = np.unique(codes, return_index=True)
        di = np.flatnonzero(dup)
        dj = first_of_code[codes[di]]
        same = np.ones(len(di), dtype=bool)
        for c in compare:
            col = df[c].to_numpy()
            same &= _same_vec(col[di], col[dj])
        raw_key = df[key[0]].to_numpy()[di]
        where = label or key[0]
        rejects.extend(
            (source, int(lines[i]), where,
             f"duplicate of line {lines[j]}" if s_ else f"duplicate {what} with a different value than line {lines[j]}",
             str(k))
            for i, j, s_, k in zip(di, dj, same, raw_key, strict=True))
        df = df.loc[~dup]
        lines = lines[~dup]
    return df, lines


def _sortable(col: pd.Series) -> np.ndarray:
    if isinstance(col.dtype, pd.DatetimeTZDtype):
        return col.to_numpy(dtype="datetime64[ns]")
    return col.to_numpy()


def _same_vec(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Element-wise :func:`_same` (equal, or both missing)."""
    sa = pd.Series(a, dtype=object if a.dtype == object else None)
    sb = pd.Series(b, dtype=object if b.dtype == object else None)
    both_na = (sa.isna() & sb.isna()).to_numpy()
    try:
        eq = (sa == sb).fillna(False).to_numpy(dtype=bool)
    except TypeError:
        eq = np.array([x == y for x, y in zip(a, b, strict=True)], dtype=bool)
    return eq | both_na


# --------------------------------------------------------------------------- builders


def read_table(path: Path, options: ReadOptions, fmt: str) -> ReadResult:
    """Read a tabular file in format ``fmt`` ("delimited", "excel" or "parquet")."""
    loader = {"delimited": load_delimited, "excel": load_excel, "xls": load_excel, "parquet": load_parquet}[fmt]
    raw = load_excel(path, options.sheet) if fmt in ("excel", "xls") else loader(path)
    source = path.name
    from degas.io.headers import merge_unit_row

    raw = merge_unit_row(raw, source)
    if raw.frame.empty:
        raise InputError(source, "no data rows (header only)" if not raw.rejects else
                         f"no usable data rows ({len(raw.rejects)} malformed)")
    reader = f"table/{fmt}"
    from degas.io.inclusions import build_melt_inclusions, looks_like_inclusions

    kind = options.kind or raw.meta.get("kind")
    if kind == "melt_inclusions" or (kind is None and looks_like_inclusions(raw.frame.columns)):
        result = build_melt_inclusions(path, raw, options, reader)
        result.notes[:0] = raw.notes
        return result
    plan = plan_columns(raw, options, source)
    if plan.kind == "chronology":
        result = _build_chronology(path, raw, plan, options, reader)
    elif plan.kind == "seismic_catalog":
        result = _build_catalog(path, raw, plan, options, reader)
    else:
        result = _build_series(path, raw, plan, options, reader)
    result.notes[:0] = raw.notes
    if raw.meta.get("encoding"):
        result.notes.append(f"{source}: text read as {raw.meta['encoding']}")
    return result


def _meta_float(raw: RawTable, *keys: str) -> float | None:
    for k in keys:
        if k in raw.meta:
            m = re.match(r"\s*([-+]?\d*\.?\d+(?:[eE][-+]?\d+)?)", raw.meta[k])
            if m:
                return float(m.group(1))
    return None


def _build_series(path: Path, raw: RawTable, plan: Plan, options: ReadOptions, reader: str) -> ReadResult:
    from degas.io.counts import counts_quantity

    source = path.name
    kind = plan.kind
    rej = _Rejects(source, raw)
    notes: list[str] = []
    times, assumptions = _times(raw, plan.roles["time"], options, rej, source)
    assumptions = list(assumptions)
    ends = None
    if "end" in plan.roles:
        ends, _ = _times(raw, plan.roles["end"], options, rej, source)
        bad_order = (ends <= times).to_numpy() & ends.notna().to_numpy()
        rej.reject(bad_order, plan.roles["end"], "end is not after start", raw.frame[plan.roles["end"]])
    station_col = plan.roles.get("station")
    quality = raw.frame[plan.roles["quality"]].astype("string").str.strip() if "quality" in plan.roles else None
    prec = raw.precision.get(plan.roles["time"])
    if prec is not None:  # --accept-approximate-dates: the precision flag goes into the quality column
        flag = ("date precision: " + prec.astype("string")).where(prec != "", pd.NA)
        quality = flag if quality is None else quality.where(flag.isna(), (quality.fillna("") + "; " + flag)
                                                              .str.lstrip("; "))
        assumptions.append("approximate dates kept at the start of their span, flagged in the quality column "
                           "(--accept-approximate-dates)")
    base_alive = rej.alive.copy()
    all_rows: list[tuple] = list(rej.rows)
    records: list[TimeSeries] = []
    record_lines: list[np.ndarray] = []
    canonical = CANONICAL_UNIT[kind]
    for col, header in plan.values:
        rej.alive = base_alive.copy()
        rej.rows = []
        unit = _unit_for(options.units.get("value"), header, raw.meta.get("unit"))
        species = options.species or raw.meta.get("species") or _species_for(kind, header)
        basis = None
        factor = 1.0
        if kind == "gas_ratio":
            unit, factor, a = _ratio_unit(unit, header, species)
            assumptions.extend(a)
        elif canonical is not None:
            if unit is None:
                raise InputError(source, f"no unit for column {col!r}; state it in the header, e.g. "
                                         f"'{header.name} ({DISPLAY_UNIT[kind]})', or pass --unit",
                                 column=col)
            try:
                factor = conversion_factor(unit, canonical)
            except UnitError as exc:
                raise InputError(source, str(exc), column=col) from None
        if kind in ("erupted_volume", "extrusion_rate"):
            basis = options.volume_basis or volume_basis_in(header) or _basis_from_meta(raw)
        values = _numeric(raw.frame[col], raw.delimiter in (";", "\t"))
        v = values.to_numpy()
        if kind == "event_counts":
            from degas.io.counts_build import check_counts

            check_counts(raw, col, v, rej, notes, source, _blank(raw.frame[col]))
        elif np.isnan(v).any():  # only then look at why (the clean case skips the string work)
            blank = _blank(raw.frame[col])
            rej.reject(blank, col, "missing value")
            nan_text = (raw.frame[col].astype("string").str.strip().str.lower()
                        .isin(["nan", "na", "n/a", "null", "none"]))
            rej.reject(nan_text.to_numpy(dtype=bool, na_value=False), col, "missing value (NaN)", raw.frame[col])
            rej.reject(np.isnan(v) & ~blank, col, "not a number", raw.frame[col])
        rej.reject(np.isin(v, MISSING_CODES), col, lambda i, _v=v: f"missing-value code {_v[i]:g}", raw.frame[col])
        rej.reject(np.isinf(v), col, "infinite value", raw.frame[col])
        if kind in NONNEGATIVE_KINDS and not options.allow_negative:
            rej.reject(v < 0, col, "negative value (use --allow-negative to keep)", raw.frame[col])
        unc = None
        if col in plan.uncertainty_for:
            ucol = plan.uncertainty_for[col]
            uh = split_header(ucol)
            uunit = options.units.get("uncertainty") or uh.unit or unit
            ufactor = factor if kind == "gas_ratio" else (conversion_factor(uunit, canonical) if canonical else 1.0)
            unc = _numeric(raw.frame[ucol], raw.delimiter in (";", "\t")).to_numpy() * ufactor
            neg_u = unc < 0
            rej.reject(neg_u, ucol, "negative uncertainty", raw.frame[ucol])
        values_si = v * factor
        if kind in ("erupted_volume", "extrusion_rate") and basis == "bulk":
            dre = _dre_factor(options, raw, source)
            if dre is not None:
                f_dre, text = dre
                values_si = values_si * f_dre
                if unc is not None:
                    unc = unc * f_dre
                assumptions.append(text)
                basis = "dre"
            else:
                notes.append(f"{source}: column {col!r} holds BULK volumes and no vesicularity or densities were "
                             "given: stored as bulk, not converted to DRE")
        elif kind in ("erupted_volume", "extrusion_rate") and basis is None:
            notes.append(f"{source}: column {col!r} does not say whether volumes are DRE or bulk; stored "
                         "unconverted with the basis unknown")
        if kind == "event_counts" and ends is None:
            from degas.io.counts_build import count_interval_ends

            ends = count_interval_ends(times, assumptions)
        df = pd.DataFrame({
            "time": times,
            "end": ends if ends is not None else pd.Series(pd.NaT, index=times.index, dtype="datetime64[ns, UTC]"),
            "value": values_si,
            "uncertainty": unc if unc is not None else np.full(len(v), np.nan),
            "quality": quality if quality is not None else pd.Series(pd.NA, index=times.index, dtype="string"),
        })
        if station_col and options.station:  # --station wins over a station-like column, and says so
            notes.append(f"{source}: station {options.station!r} from --station; column {station_col!r} not used")
            station_col = None
        elif station_col and col == plan.values[0][0]:
            notes.append(f"{source}: station taken from column {station_col!r}")
        stations = (raw.frame[station_col].astype("string").str.strip() if station_col
                    else pd.Series(options.station or raw.meta.get("station"), index=times.index, dtype="object"))
        alive = rej.alive
        if not alive.all():
            df = df.loc[alive]
        lines = raw.lines[alive]
        st = stations[alive]
        rows = rej.rows
        for station in pd.unique(st.to_numpy()) if len(st) else [options.station]:
            sel = (st == station).to_numpy() if station is not None and not pd.isna(station) else st.isna().to_numpy()
            if kind == "erupted_volume":
                from degas.io.surveys import flag_out_of_order

                flag_out_of_order(df.loc[sel], lines[sel], source, notes)
            part, plines = _dedupe_and_sort(df.loc[sel], lines[sel], ["time"], ["value", "end"], source, rows, notes,
                                            "timestamp", plan.roles["time"])
            if kind == "erupted_volume":
                from degas.io.surveys import reject_decreases

                part, plines = reject_decreases(part, plines, source, rows, col)
            part = part.astype({"time": "datetime64[ns, UTC]", "end": "datetime64[ns, UTC]"})
            record_lines.append(plines)  # file line of each row, for conflicts found in the archive
            station_s = None if station is None or pd.isna(station) else str(station)
            meta = SeriesMeta(
                kind=kind,
                quantity=_quantity(kind, species, header) if kind != "event_counts" else
                counts_quantity(plan.classes[col]),
                station=station_s,
                species=species if kind in ("gas_flux", "gas_ratio") else None,
                unit=canonical if canonical else unit,
                display_unit=DISPLAY_UNIT[kind] if canonical else unit,
                volume_basis=basis,
                description=header.raw,
            )
            records.append(TimeSeries(part, meta))
        all_rows.extend(rows)
        first_unit = unit
    n_rej = len(all_rows)
    prov_assumptions = assumptions
    out = []
    for r in records:
        prov = make_provenance(path, reader, len(r.data), n_rej, first_unit, prov_assumptions, options)
        out.append(TimeSeries(r.data, r.meta, (prov,)))
    notes.extend(f"{source}: {a}" for a in dict.fromkeys(prov_assumptions))
    return ReadResult(out, rejects_frame(all_rows), notes, record_lines)


def _species_for(kind: str, header: Header) -> str | None:
    sp = species_in(header.words)
    if kind == "gas_flux":
        return sp[0] if sp else None
    if kind == "gas_ratio":
        return "/".join(sp) if sp else None
    return None


def _quantity(kind: str, species: str | None, header: Header) -> str:
    if kind == "gas_flux":
        return f"{(species or 'gas').lower()}_flux"
    if kind == "gas_ratio":
        return (species or "gas").lower().replace("/", "_") + "_ratio"
    if kind == "extrusion_rate":
        return "extrusion_rate"
    if kind == "erupted_volume":
        return "cumulative_volume"
    name = re.sub(r"[^a-z0-9]+", "_", header.name.lower()).strip("_")
    return name or kind


def _ratio_unit(unit: str | None, header: Header, species: str | None) -> tuple[str, float, list[str]]:
    """Gas ratios are stored molar (mol/mol); mass ratios are converted with IUPAC molar masses."""
    words = header.words + " " + (unit or "")
    if re.search(r"\bmass\b|\bkg/kg\b|\bg/g\b|\bwt\b", words):
        from degas.chem import mass_to_molar_ratio

        sp = (species or "").split("/")
        if len(sp) == 2 and all(s in ("SO2", "CO2", "H2S", "H2O") for s in sp):
            f = mass_to_molar_ratio(1.0, sp[0], sp[1])
            return "mol/mol", f, [f"mass ratio {species} converted to molar with IUPAC molar masses (x{f:.6f})"]
        raise InputError(header.raw, "mass ratio given but the two species are not recognised; cannot convert")
    if unit in (None, "", "molar", "mol/mol") or re.search(r"\bmolar\b", words):
        return "mol/mol", 1.0, ([] if re.search(r"\bmolar\b|mol/mol", words) else
                                [f"ratio column {header.raw!r} taken as molar (header did not say)"])
    return "mol/mol", conversion_factor(unit, "mol/mol"), []


def _basis_from_meta(raw: RawTable) -> str | None:
    text = (raw.meta.get("volume basis") or raw.meta.get("basis") or "").lower()
    if "dre" in text or "dense" in text:
        return "dre"
    if "bulk" in text:
        return "bulk"
    return None


def _dre_factor(options: ReadOptions, raw: RawTable, source: str) -> tuple[float, str] | None:
    """Factor bulk -> DRE from options or the file's preamble; None when nothing was stated."""
    from degas.volumes import dre_factor

    ves = options.vesicularity if options.vesicularity is not None else _meta_float(raw, "vesicularity")
    rb = options.bulk_density if options.bulk_density is not None else _meta_float(raw, "bulk density")
    rd = options.dense_density if options.dense_density is not None else _meta_float(raw, "dense density",
                                                                                    "dre density")
    try:
        if ves is not None:
            where = "option" if options.vesicularity is not None else "file header"
            return dre_factor(vesicularity=ves), (f"bulk volume converted to DRE with vesicularity {ves:g} "
                                                  f"(from {where}): V_DRE = V_bulk (1 - φ)")
        if rb is not None and rd is not None:
            return dre_factor(bulk_density=rb, dense_density=rd), (
                f"bulk volume converted to DRE with densities {rb:g}/{rd:g} kg/m³: V_DRE = V_bulk ρ_bulk/ρ_DRE")
    except DegasError as exc:
        raise InputError(source, str(exc)) from None
    return None


def _build_chronology(path: Path, raw: RawTable, plan: Plan, options: ReadOptions, reader: str) -> ReadResult:
    from degas.io import chronology as ch
    from degas.io.timebase import is_sentinel_end

    source = path.name
    rej = _Rejects(source, raw)
    notes: list[str] = []
    start, assumptions = _times(raw, plan.roles["time"], options, rej, source)
    assumptions = list(assumptions)
    note = (raw.frame[plan.roles["note"]].astype("string") if "note" in plan.roles
            else pd.Series(pd.NA, index=start.index, dtype="string"))
    state_col = raw.frame.get(plan.roles.get("state"))
    said = (state_col.astype("string").fillna("") if state_col is not None
            else pd.Series("", index=start.index, dtype="string")) + " " + note.fillna("")
    endcol = raw.frame[plan.roles["end"]] if "end" in plan.roles else None
    if endcol is not None:
        blank_end = _blank(endcol)
        sentinel = is_sentinel_end(endcol)
        open_end, point = ch.open_or_point(start, endcol, blank_end, sentinel, said)
        given = ~(open_end | point)
        tmp = _Rejects(source, raw)
        end, _ = _times(raw.__class__(raw.frame.assign(**{plan.roles["end"]: endcol.where(given, "2000-01-01")}),
                                      raw.headers, raw.lines, raw.meta), plan.roles["end"], options, tmp, source)
        end = end.where(given, pd.NaT)
        for row in tmp.rows:
            rej.rows.append(row)
        rej.alive &= tmp.alive
        rej.reject((end <= start).to_numpy() & given, plan.roles["end"], "end is not after start", endcol)
        if sentinel.any():
            notes.append(f"{source}: {int(sentinel.sum())} end date(s) like 9999-12-31 read as open (ongoing)")
    else:
        end = pd.Series(pd.NaT, index=start.index, dtype="datetime64[ns, UTC]")
        open_end, point = ch.open_or_point(start, None, np.ones(len(start), bool), np.zeros(len(start), bool), said)
    if point.any():
        end = end.where(~point, start)
        notes.append(f"{source}: {int((point & rej.alive).sum())} row(s) with a start and no end read as point "
                     "events (end = start); write 'ongoing' in the end, state or note for an open phase")
    if (open_end & ~point).any() and endcol is not None:
        n_open = int((open_end & rej.alive).sum())
        if n_open:
            notes.append(f"{source}: {n_open} phase(s) open (ongoing): no end stored")
    state, unmapped = ch.map_states(state_col, len(start), options.state_map)
    state.index = start.index
    style = _vocab(raw.frame.get(plan.roles.get("style")), STYLE_WORDS, "unknown")
    if plan.roles.get("state") is None:
        notes.append(f"{source}: no state column; every interval marked unknown")
        # only a recognised style says "eruptive" then ("explosive" -> eruptive), and the note says so
        inferred = (state == "unknown") & style.isin(["effusive", "explosive", "mixed"])
        if inferred.any():
            state = state.where(~inferred, "eruptive")
            notes.append(f"{source}: {int(inferred.sum())} row(s) with an effusive/explosive style marked eruptive")
    if unmapped:
        shown = ", ".join(repr(u) for u in sorted(set(unmapped))[:10])
        notes.append(f"{source}: state(s) {shown} not understood: kept unknown (map them with [state_map] in a "
                     "--map file)")
    prec = raw.precision.get(plan.roles["time"])
    if prec is not None:
        flag = prec.astype("string").fillna("")
        note = note.where(flag == "", ("date precision: " + flag + "; " + note.fillna("")).str.rstrip("; "))
        assumptions.append("approximate dates kept at the start of their span with a precision flag in the note "
                           "(--accept-approximate-dates)")
    location = (raw.frame[plan.roles["location"]].astype("string").str.strip() if "location" in plan.roles
                else pd.Series(options.station or raw.meta.get("station"), index=start.index, dtype="object"))
    df = pd.DataFrame({"start": start, "end": end.astype("datetime64[ns, UTC]"), "state": state.astype("string"),
                       "style": style.astype("string"), "note": note})
    alive = rej.alive
    df = df.loc[alive]
    lines_all = raw.lines[alive]
    loc = location[alive]
    rows = rej.rows
    records, record_lines = [], []
    groups = pd.unique(loc.to_numpy()) if len(loc) else [None]
    if "location" in plan.roles and len(groups) > 1:
        notes.append(f"{source}: {len(groups)} locations ({', '.join(map(str, groups))}): one chronology each")
    for g in groups:
        sel = (loc == g).to_numpy() if g is not None and not pd.isna(g) else loc.isna().to_numpy()
        part, lines = _dedupe_and_sort(df.loc[sel], lines_all[sel], ["start"], ["end", "state"], source, rows,
                                       notes, "phase start", plan.roles["time"])
        ov = (part["start"].iloc[1:].to_numpy()
              < part["end"].iloc[:-1].fillna(pd.Timestamp.max.tz_localize("UTC")).to_numpy())
        if ov.any():
            notes.append(f"{source}: {int(ov.sum())} phase(s) overlap the previous one (kept as given)")
        station = None if g is None or pd.isna(g) else str(g)
        records.append((part, station))
        record_lines.append(lines)
    out = []
    for part, station in records:
        meta = SeriesMeta(kind="chronology", quantity="eruptive_state", station=station)
        prov = make_provenance(path, reader, len(part), len(rows), None, assumptions, options)
        out.append(Chronology(part, meta, (prov,)))
    notes.extend(f"{source}: {a}" for a in dict.fromkeys(assumptions))
    return ReadResult(out, rejects_frame(rows), notes, record_lines)


STATE_WORDS = {
    "eruptive": ("eruptive", "eruption", "erupting", "active", "extrusion", "extruding", "effusive", "explosive",
                 "dome growth", "growth", "lava", "on"),
    "pause": ("pause", "paused", "repose", "quiet", "quiescent", "hiatus", "inactive", "no extrusion", "off", "rest"),
    "unknown": ("unknown", "?", "uncertain", "n/a", "na", ""),
}
STYLE_WORDS = {
    "effusive": ("effusive", "dome", "dome growth", "lava flow", "extrusion", "lava"),
    "explosive": ("explosive", "explosion", "vulcanian", "plinian", "ash", "strombolian"),
    "mixed": ("mixed", "effusive-explosive", "explosive-effusive", "both"),
    "unknown": ("unknown", "?", "n/a", "na", "", "none", "-"),
}


def _vocab(col: pd.Series | None, words: dict[str, tuple[str, ...]], default: str) -> pd.Series:
    if col is None:
        return pd.Series(default, dtype="string")
    s = col.astype("string").str.strip().str.lower().fillna("")
    lookup = {w: k for k, ws in words.items() for w in ws}
    out = s.map(lambda x: lookup.get(x) or next((k for w, k in lookup.items() if w and w in x), default))
    assert set(out.unique()) <= set(ERUPTIVE_STATES) | set(ERUPTIVE_STYLES)
    return out.astype("string")


def _build_catalog(path: Path, raw: RawTable, plan: Plan, options: ReadOptions, reader: str) -> ReadResult:
    from degas.io.event_classes import map_event_classes

    source = path.name
    rej = _Rejects(source, raw)
    notes: list[str] = []
    times, assumptions = _times(raw, plan.roles["time"], options, rej, source)
    assumptions = list(assumptions)
    n = len(raw.frame)

    def num(role: str) -> np.ndarray:
        if role not in plan.roles:
            return np.full(n, np.nan)
        col = raw.frame[plan.roles[role]]
        v = _numeric(col, raw.delimiter in (";", "\t")).to_numpy()
        bad = np.isnan(v) & ~_blank(col)
        rej.reject(bad | np.isinf(v), plan.roles[role], f"{role} is not a number", col)
        return v

    lat, lon, mag = num("latitude"), num("longitude"), num("magnitude")
    rej.reject(np.abs(lat) > 90, plan.roles.get("latitude"), "latitude outside [-90, 90]")
    rej.reject(np.abs(lon) > 360, plan.roles.get("longitude"), "longitude outside [-180, 360]")
    depth = num("depth")
    if "depth" in plan.roles:
        dh = split_header(plan.roles["depth"])
        dunit = options.units.get("depth") or dh.unit
        if dunit is None:
            dunit = "km"
            assumptions.append("depth unit not stated; taken as km (common practice for catalogue exports)")
        depth = depth * conversion_factor(dunit, "m")
        from degas.io.catalog_rules import apply_depth_sign

        depth = apply_depth_sign(depth, options.depth_positive, assumptions)
    if "magnitude_type" in plan.roles:
        mtype = raw.frame[plan.roles["magnitude_type"]].astype("string").str.strip()
        mtype = mtype.where(mtype != "", pd.NA)
    else:
        mh = split_header(plan.roles["magnitude"]).name if "magnitude" in plan.roles else ""
        mt = options.magnitude_type or raw.meta.get("magnitude type") or MAGNITUDE_TYPE_HEADERS.get(mh)
        mtype = pd.Series(mt if mt else pd.NA, index=raw.frame.index, dtype="string")
    mtype = mtype.where(~np.isnan(mag), pd.NA)
    if "event_class" in plan.roles:
        labels = raw.frame[plan.roles["event_class"]].astype("string").str.strip().fillna("")
    else:
        labels = pd.Series("", index=raw.frame.index, dtype="string")
        notes.append(f"{source}: no event type column; every event classed as other")
    mapping = map_event_classes(labels, options.class_map)
    assumptions.extend(mapping.assumptions)
    if "event_id" in plan.roles:
        ids = raw.frame[plan.roles["event_id"]].astype("string").str.strip()
        blank_id = ids.isna() | (ids == "")
    else:
        blank_id = pd.Series(True, index=raw.frame.index)
        ids = pd.Series(pd.NA, index=raw.frame.index, dtype="string")
    if blank_id.any():
        gen = _event_ids(times, lat, lon, mag, labels)
        ids = ids.where(~blank_id, gen)
    df = pd.DataFrame({
        "time": times, "latitude_deg": lat, "longitude_deg": lon, "depth_m": depth, "magnitude": mag,
        "magnitude_type": mtype.astype("string"), "event_class": mapping.classes.astype("string").to_numpy(),
        "event_id": ids.astype("string"), "source_type": labels.astype("string"),
    })
    alive = rej.alive
    df = df.loc[alive]
    lines = raw.lines[alive]
    rows = rej.rows
    df, lines = _dedupe_and_sort(df, lines, ["event_id"], ["time", "magnitude"], source, rows, notes, "event id",
                                 plan.roles.get("event_id"), sort_by="time")
    no_mag = int(df["magnitude"].isna().sum())
    if no_mag:
        notes.append(f"{source}: {no_mag} event(s) without magnitude: counted, but excluded from energy and b-value")
    meta = SeriesMeta(kind="seismic_catalog", quantity="events", station=options.station or raw.meta.get("station"))
    prov = make_provenance(path, reader, len(df), len(rows), None, assumptions, options)
    notes.extend(f"{source}: {a}" for a in dict.fromkeys(assumptions))
    return ReadResult([EventCatalog(df, meta, (prov,))], rejects_frame(rows), notes, [lines])


def _event_ids(times: pd.Series, lat, lon, mag, labels: pd.Series) -> pd.Series:
    """Stable ids for events without one: a hash of origin time, place and label (not the magnitude, so that
    a re-export with a revised magnitude is recognised as the same event and reported as a conflict)."""
    t = times.to_numpy(dtype="datetime64[ns]").astype("int64")
    out = []
    for ti, a, b, lab in zip(t, lat, lon, labels.to_numpy(), strict=True):
        key = f"{ti}|{a:.5f}|{b:.5f}|{lab}"
        out.append("h" + hashlib.sha1(key.encode()).hexdigest()[:16])
    return pd.Series(out, index=times.index, dtype="string")


__all__ = ["is_delimited", "is_excel", "is_parquet", "load_delimited", "load_excel", "load_parquet", "read_table"]

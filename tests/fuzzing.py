"""Hostile inputs for the readers and the CLI (issue 10), shared by tests/test_fuzz.py (CI, derandomised) and
tests/benchmarks/bench_fuzz.py (on demand, ≥ 10,000 cases).

Every case is a file (random bytes, or a table with random headers, cells, delimiters, line ends, encodings,
preamble lines and byte damage, wide or long; an XML document; FDSN event text; an .xlsx workbook; a Parquet
file, sometimes with corrupt pandas metadata) plus random reader options (kind, station, time zone, time
format, unit, a random TOML mapping). The promise checked:

* the Python reader returns a ReadResult or raises DegasError, and prints nothing;
* the CLI (``degas ingest``, run in-process through the same ``run(argv)`` the console script calls) exits
  with 0 or 2, writes at most one line to stderr and never a traceback;
* afterwards the archive opens, and every series the input did not touch keeps its row count.
"""

from __future__ import annotations

import collections
import contextlib
import io
import json
import random
import tempfile
import warnings
from pathlib import Path
from unittest import mock

from hypothesis import strategies as st

from degas.errors import DegasError
from degas.io import read
from degas.io.base import ReadOptions, ReadResult
from degas.model import KINDS

HEADERS = ["time", "Date/Time", "date", "origin time (UTC)", "SO2 flux (t/d)", "CO2 flux (kg/s)", "flux error (t/d)",
           "QC flag", "station", "CO2/SO2 (molar)", "extrusion rate (m3/s DRE)", "cumulative volume (Mm3, bulk)",
           "start", "end", "state", "style", "Md", "depth (km)", "lat", "lon", "type", "event id", "RSAM", "value",
           "x", "", "H2S flux (g/s)", "volume (km3)", "SO2 (kg/s)", "ML", "time (UTC)", "fecha"]
CELLS = ["", " ", "nan", "NaN", "inf", "-inf", "1e154", "-1e308", "1e308", "-999", "0", "-1", "1,5", "1.2.3", "NA",
         "null", "2023-05-01", "1723-05-04T00:00Z", "2023-05-01T07:15:00-05:00", "44000.5", "2024.5", "1700000000",
         '"quoted, comma"', "=cmd|' /C calc'!A0", "<iframe src=javascript:alert(1)>", "VT", "LP", "eruptive",
         "pause", "effusive", "2262-04-12T00:00Z", "1677-09-21", "9" * 40, "good", "\u2028", "\x85", "é", "€"]
EOLS = ["\n", "\r\n", "\r"]
ENCODINGS = ["utf-8"] * 10 + ["utf-8-sig", "utf-8-sig", "cp1252", "cp1252", "latin-1", "utf-16"]
ODD = ["\u2028", "\u2029", "\x85", "\x0c", "\x0b", "\x1c", "\r", ""]
TZS = [None] * 30 + ["UTC", "+01:00", "America", "Europe/Madrid", "Nowhere/Else", "-25:00", ""]
TIME_FORMATS = [None] * 20 + ["iso", "excel", "decimal_year", "unix", "%d/%m/%Y", "%Q", "nonsense"]
UNITS = [None] * 6 + ["t/d", "kg/s", "m3/s", "zorks", "ppm", "Mm3", "1/0", "t/d/d"]
STATIONS = [None] * 4 + ["VLM-N", "VLM.N", "VLM N", "ÑÑ", "S" * 300, "<b>x</b>", "../../etc", "a/b", "\u2028x"]


def _cell(rng: random.Random) -> str:
    r = rng.random()
    if r < 0.55:
        return rng.choice(CELLS)
    if r < 0.7:
        return repr(rng.choice([rng.uniform(-1e3, 1e3), 10.0 ** rng.randint(-320, 308), -(10.0 ** rng.randint(0, 308)),
                                float("nan"), float("inf")]))
    if r < 0.85:
        y = rng.randint(1, 9999)
        return f"{y:04d}-{rng.randint(1, 12):02d}-{rng.randint(1, 28):02d}T{rng.randint(0, 23):02d}:00Z"
    if r < 0.93:
        return str(rng.randint(-10**20, 10**20))
    return "".join(chr(rng.choice([rng.randint(32, 126), rng.randint(0, 0x2FFF)])) for _ in range(rng.randint(0, 8)))


def _damage(rng: random.Random, data: bytes) -> bytes:
    if not data:
        return data
    pos = rng.randrange(len(data))
    return data[:pos] + bytes(rng.randrange(256) for _ in range(rng.randint(1, 6))) + data[pos + 1:]


@st.composite
def table_bytes(draw) -> tuple[str, bytes]:
    """A delimited text file: random preamble, header, rows, delimiter, line ends, encoding and damage.

    Hypothesis draws the shape and a seed; the cells come from ``random.Random(seed)`` (fast, repeatable)."""
    shape = draw(st.sampled_from(["small"] * 12 + ["wide", "long"]))
    rng = random.Random(draw(st.integers(0, 2**32 - 1)))
    n_cols = {"small": rng.choice([1, 2, 2, 3, 3, 4, 5, 6, 7]), "wide": rng.randint(60, 1500), "long": 3}[shape]
    n_rows = {"small": rng.randint(0, 25), "wide": rng.randint(0, 3), "long": rng.randint(500, 3000)}[shape]
    delim = rng.choice([","] * 5 + [";", ";", "\t", "|", " "])
    eol = rng.choice(EOLS)
    if rng.random() < 0.8:  # mostly distinct names (duplicates are refused early)
        headers = rng.sample(HEADERS, min(n_cols, 8))
    else:
        headers = [rng.choice(HEADERS) if rng.random() < 0.85 else _cell(rng) for _ in range(min(n_cols, 8))]
    if rng.random() < 0.6:  # a recognisable table, so that the deeper code is exercised too
        pair = [rng.choice(HEADERS[:4]), rng.choice(HEADERS[4:12] + ["RSAM", "Md"])]
        headers = pair + [h for h in headers if h not in pair]
        n_cols = max(n_cols, 2)
        headers = headers[:n_cols]
    headers += [f"c{i}" for i in range(n_cols - len(headers))]
    lines = [f"# {rng.choice(['station', 'kind', 'timezone', 'vesicularity', 'note'])}: "
             f"{rng.choice(CELLS)}{rng.choice(ODD)}" for _ in range(rng.choice([0, 0, 1, 2, 3]))]
    lines.append(delim.join(headers))
    if shape == "long":
        import pandas as pd

        base = rng.choice(["2023-01-01T00:00Z", "1723-01-01", "2023-01-01"])
        t = pd.date_range(base.rstrip("Z"), periods=n_rows, freq="min")
        v = rng.choice(["1", "1e154", "nan", "-5", "1e7"])
        lines += [f"{x.isoformat()}Z{delim}{v}{delim}{i % 3}" for i, x in enumerate(t)]
        if rng.random() < 0.5:
            lines += lines[-n_rows // 2:]  # within-file duplicates
        if rng.random() < 0.3:
            lines.insert(rng.randrange(1, len(lines)), "1723-05-04T00:00Z" + delim + "2" + delim + "x")
    else:
        for _ in range(n_rows):
            k = n_cols + rng.choice([0, 0, 0, -1, 1])
            cells = [_cell(rng) for _ in range(min(k, 8))] + ["1"] * max(k - 8, 0)
            if cells and rng.random() < 0.6:
                cells[0] = f"20{rng.randint(0, 30):02d}-{rng.randint(1, 12):02d}-{rng.randint(1, 28):02d}T00:00Z"
            if len(cells) > 1 and rng.random() < 0.6:
                cells[1] = repr(rng.uniform(0, 5000))
            lines.append(delim.join(cells))
    if rng.random() < 0.2:  # mixed line ends
        text = "".join(ln + rng.choice(EOLS) for ln in lines)
    else:
        text = eol.join(lines) + (eol if rng.random() < 0.7 else "")
    data = text.encode(rng.choice(ENCODINGS), errors="replace")
    if rng.random() < 0.1:
        data = _damage(rng, data)
    return rng.choice([".csv", ".csv", ".txt", ".tsv", ".dat"]), data


@st.composite
def xml_bytes(draw) -> tuple[str, bytes]:
    rng = random.Random(draw(st.integers(0, 2**32 - 1)))
    body = rng.choice([
        '<?xml version="1.0"?><q:quakeml xmlns:q="http://quakeml.org/xmlns/quakeml/1.2" '
        'xmlns="http://quakeml.org/xmlns/bed/1.2"><eventParameters publicID="x">{}</eventParameters></q:quakeml>',
        '<?xml version="1.0"?><!DOCTYPE a [<!ENTITY e "{}">]><a>&e;</a>', "<html><body>{}</body></html>",
    ])
    ev = ('<event publicID="smi:e/{i}"><origin publicID="o{i}"><time><value>{t}</value></time>'
          '<latitude><value>{v}</value></latitude><longitude><value>1</value></longitude></origin>'
          '<magnitude><mag><value>{v}</value></mag></magnitude><type>{c}</type></event>')
    events = "".join(ev.format(i=i, t=_cell(rng), v=_cell(rng),
                               c=rng.choice(["earthquake", "volcanic eruption", "<x>", ""]))
                     for i in range(rng.randint(0, 5)))
    data = body.replace("{}", events).encode("utf-8", errors="replace")
    if rng.random() < 0.5:
        data = _damage(rng, data)
    return ".xml", data


@st.composite
def parquet_bytes(draw) -> tuple[str, bytes]:
    import pyarrow as pa
    import pyarrow.parquet as pq

    rng = random.Random(draw(st.integers(0, 2**32 - 1)))
    n = rng.randint(0, 6)
    cols = {}
    for name in rng.sample(HEADERS[:12], rng.randint(1, 4)):
        cols[name] = pa.array([_cell(rng) for _ in range(n)], pa.string()) if rng.random() < 0.5 else \
            pa.array([rng.choice([rng.uniform(-1e3, 1e3), float("nan"), 1e300]) for _ in range(n)], pa.float64())
    table = pa.table(cols)
    if rng.random() < 0.5:
        table = table.replace_schema_metadata({b"pandas": rng.choice(
            [b"{bad", b'{"columns": 1}', b"[]", b'{"index_columns": [], "columns": []}'])})
    buf = io.BytesIO()
    pq.write_table(table, buf)
    return ".parquet", buf.getvalue()


FDSN_HEADER = ("#EventID|Time|Latitude|Longitude|Depth/km|Author|Catalog|Contributor|ContributorID|MagType|"
               "Magnitude|MagAuthor|EventLocationName|EventType")


@st.composite
def fdsn_bytes(draw) -> tuple[str, bytes]:
    """FDSN event text: the standard header, then rows of random (often plausible) cells."""
    rng = random.Random(draw(st.integers(0, 2**32 - 1)))
    rows = []
    for i in range(rng.randint(0, 12)):
        cells = [f"ev{i}", rng.choice(["2024-01-01T00:00:00", _cell(rng)]), rng.choice(["1.2", _cell(rng)]),
                 rng.choice(["102.3", _cell(rng)]), rng.choice(["3.0", _cell(rng)]), "A", "C", "C", "1",
                 rng.choice(["ML", "Md", ""]), rng.choice(["1.5", "12", _cell(rng)]), "A", "Velmarra area",
                 rng.choice(["earthquake", "volcanic eruption", _cell(rng)])]
        k = len(cells) + rng.choice([0, 0, 0, -3, 2])
        rows.append("|".join((cells + ["x"] * 3)[:k]))
    text = rng.choice(EOLS).join([FDSN_HEADER, *rows]) + "\n"
    data = text.encode(rng.choice(ENCODINGS[:12]), errors="replace")
    if rng.random() < 0.2:
        data = _damage(rng, data)
    return rng.choice([".txt", ".fdsn", ".csv"]), data


@st.composite
def xlsx_bytes(draw) -> tuple[str, bytes]:
    """A small workbook (openpyxl) with a random preamble, header and cells of mixed types."""
    import datetime as dt

    from openpyxl import Workbook
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    def ok(v):  # a workbook cannot hold control characters at all: such text never reaches a reader
        return ILLEGAL_CHARACTERS_RE.sub("", v) if isinstance(v, str) else v

    rng = random.Random(draw(st.integers(0, 2**32 - 1)))
    wb = Workbook()
    ws = wb.active
    for _ in range(rng.choice([0, 0, 1, 2])):
        ws.append([ok(f"# station: {rng.choice(CELLS)}")])
    ws.append(rng.sample(HEADERS, rng.randint(1, 4)))
    for _ in range(rng.randint(0, 10)):
        ws.append([ok(rng.choice([dt.datetime(rng.randint(1900, 2100), 1, rng.randint(1, 28)), _cell(rng),
                                  rng.uniform(-1e3, 1e6), None, 1e300])) for _ in range(rng.randint(1, 5))])
    buf = io.BytesIO()
    wb.save(buf)
    return ".xlsx", buf.getvalue()


def random_file():
    return st.one_of(
        table_bytes(), table_bytes(), table_bytes(), table_bytes(), table_bytes(), table_bytes(),
        st.tuples(st.sampled_from([".csv", ".xlsx", ".bin", ".xml", ".parquet"]), st.binary(max_size=300)),
        xml_bytes(), parquet_bytes(), fdsn_bytes(), xlsx_bytes(),
    )


def toml_value():
    return st.one_of(st.integers(-10**15, 10**15), st.floats(), st.text(max_size=6), st.booleans(),
                     st.sampled_from(["1ns", "1e12D", "America", "nan", "t/d"]), st.lists(st.integers(), max_size=2))


@st.composite
def mapping_toml(draw) -> str:
    keys = ["kind", "species", "station", "timezone", "dayfirst", "time_format", "vesicularity", "bulk_density",
            "dense_density", "allow_negative", "volume_basis", "magnitude_type", "colour"]
    lines = []
    for k in draw(st.lists(st.sampled_from(keys), max_size=4, unique=True)):
        lines.append(f"{k} = {_toml(draw(toml_value()))}")
    if draw(st.booleans()):
        lines.append("[columns]")
        lines.append(f"{draw(st.sampled_from(['time', 'value', 'colour']))} = "
                     f"{_toml(draw(st.sampled_from(HEADERS)))}")
    if draw(st.integers(0, 20)) == 0:
        lines.append("deep = " + "[" * 40 + "]" * 40)
    return "\n".join(lines) + "\n"


def _toml(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return {"nan": "nan", "inf": "inf", "-inf": "-inf"}.get(repr(v), repr(v))
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, list):
        return "[" + ", ".join(_toml(x) for x in v) + "]"
    return str(v)


@st.composite
def cli_options(draw) -> list[str]:
    args: list[str] = []
    kind = draw(st.sampled_from([None] * 8 + [*KINDS, "lava"]))
    if kind:
        args += ["--kind", kind]
    for opt, pool in (("--tz", TZS), ("--time-format", TIME_FORMATS), ("--unit", UNITS), ("--station", STATIONS)):
        v = draw(st.sampled_from(pool))
        if v is not None:
            args += [opt, v]
    if draw(st.booleans()):
        args.append("--dayfirst")
    return args


@st.composite
def reader_options(draw) -> dict:
    d = {}
    for k, pool in (("kind", [None] * 8 + list(KINDS)), ("timezone", TZS), ("time_format", TIME_FORMATS),
                    ("station", STATIONS)):
        v = draw(st.sampled_from(pool))
        if v is not None:
            d[k] = v
    return d


# ------------------------------------------------------------------ drivers


COUNTS: collections.Counter = collections.Counter()
MESSAGES: collections.Counter = collections.Counter()  # kinds of one-line errors met (for the benchmark)


def _gist(msg: str) -> str:
    """The problem part of a message, without file, line and quoted values."""
    import re

    msg = msg.split(": ", 1)[-1]
    return re.sub(r"'[^']*'|\"[^\"]*\"|\[[^\]]*\]|\d+", "…", msg)[:70]


@contextlib.contextmanager
def _quiet_fsync():
    """The fuzzer checks outcomes, not durability (the kill test does): skip fsync to keep cases fast."""
    with mock.patch("degas.store.os.fsync", lambda fd: None):
        yield


def check_reader(workdir: Path, case: tuple[str, bytes], opts: dict) -> None:
    """read() returns a ReadResult or raises DegasError, and prints nothing."""
    suffix, data = case
    p = workdir / f"in{suffix}"
    p.write_bytes(data)
    err = io.StringIO()
    with contextlib.redirect_stderr(err), warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            res = read(p, ReadOptions(**opts) if opts else None)
        except DegasError as exc:
            assert "\n" not in str(exc), str(exc)
            COUNTS["reader: one-line error"] += 1
            MESSAGES[_gist(str(exc))] += 1
        else:
            assert isinstance(res, ReadResult)
            COUNTS["reader: read"] += 1
            COUNTS["reader: rows rejected"] += len(res.rejects)
    assert err.getvalue() == "", err.getvalue()


def _snapshot(root: Path) -> dict:
    m = json.loads((root / "manifest.json").read_text())
    return {sid: e["n_rows"] for sid, e in m["series"].items()}, set(m["sources"])


def check_cli(workdir: Path, archive: Path, case: tuple[str, bytes], args: list[str], mapping: str | None) -> None:
    """``degas ingest`` exits 0 or 2 with at most one stderr line and no traceback; untouched series keep
    their row counts and the archive stays readable."""
    from degas.cli import main  # noqa: F401  (registers every command)
    from degas.cli._app import run
    from degas.store import Archive

    suffix, data = case
    p = workdir / f"in{suffix}"
    p.write_bytes(data)
    argv = ["ingest", str(p), "--into", str(archive), "--show-rejects", "1", *args]
    if mapping is not None:
        m = workdir / "map.toml"
        m.write_text(mapping, encoding="utf-8")
        argv += ["--map", str(m)]
    before, sources_before = _snapshot(archive)
    err, out = io.StringIO(), io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(out), _quiet_fsync():
        code = run(argv)
    text = err.getvalue()
    lines = text.splitlines()  # blank lines count too
    assert code in (0, 2), (code, text)
    assert len(lines) <= 1, text
    assert "Traceback" not in text and "Exception ignored" not in text, text
    COUNTS[f"cli: exit {code}"] += 1
    after, sources_after = _snapshot(archive)
    m = json.loads((archive / "manifest.json").read_text())
    touched = set()
    for sha in sources_after - sources_before:
        touched |= set(m["sources"][sha].get("series", []))
    assert set(before) <= set(after), "a stored series disappeared"
    arc = Archive.open(archive)
    for sid, n in after.items():
        if sid not in touched:
            assert before.get(sid) == n, f"{sid}: {before.get(sid)} -> {n} rows without being touched"
        else:
            assert len(arc.load(sid)) == n
            COUNTS["cli: series touched"] += 1


def seeded_archive(root: Path) -> Path:
    """An archive with two series that no fuzz case writes to (other kinds or stations would be new series)."""
    from degas.store import Archive

    arc = Archive.create(root)
    src = root.parent / "seed.csv"
    src.write_text("time,SO2 flux (t/d)\n" + "".join(f"2020-01-{d:02d}T00:00Z,{100 + d}\n" for d in range(1, 29)),
                   encoding="utf-8")
    arc.ingest_file(src, ReadOptions(station="SEED-1"))
    src.write_text("time,RSAM\n" + "".join(f"2020-02-{d:02d}T00:00Z,{d}\n" for d in range(1, 29)), encoding="utf-8")
    arc.ingest_file(src, ReadOptions(station="SEED-2", kind="amplitude"))
    return root


def new_workdir() -> Path:
    return Path(tempfile.mkdtemp(prefix="degas-fuzz-"))

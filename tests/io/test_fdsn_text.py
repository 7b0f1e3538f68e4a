"""FDSN event text reader (degas.io.fdsn_text).

Test files in tests/data/seismic_catalog/ are hand-written after the fdsnws-event 1.2 (2019)
text format summarised in REFERENCES.md section 4.2; the specification document itself was not
opened. Names (network XV, catalogue QXVOCAT, "Demo Peak") are invented.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from degas.errors import ConfigError, InputError
from degas.io.base import REJECT_COLUMNS, ReadOptions, ReadResult, file_sha256
from degas.io.fdsn_text import is_fdsn_text, read_fdsn_text
from tests.io.catalog_checks import check_catalog, head

DATA = Path(__file__).resolve().parent.parent / "data" / "seismic_catalog"
BASIC = DATA / "fdsn_text_basic.txt"
AWKWARD = DATA / "fdsn_text_awkward_14col.txt"
HEADER13 = (
    "#EventID|Time|Latitude|Longitude|Depth/km|Author|Catalog|Contributor|ContributorID|MagType|Magnitude"
    "|MagAuthor|EventLocationName"
)
HEADER14 = HEADER13 + "|EventType"



# --- detection ------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", ["fdsn_text_basic.txt", "fdsn_text_awkward_14col.txt", "fdsn_text_header_only.txt"])
def test_is_fdsn_text_accepts_fdsn_text(name: str) -> None:
    p = DATA / name
    assert is_fdsn_text(head(p), p)


@pytest.mark.parametrize(
    "name", ["catalog_as_csv.csv", "quakeml_basic.xml", "not_quakeml_stationxml.xml", "fdsn_text_empty.txt"]
)
def test_is_fdsn_text_rejects_other_files(name: str) -> None:
    p = DATA / name
    assert not is_fdsn_text(head(p), p)


def test_is_fdsn_text_rejects_comment_then_data_without_header() -> None:
    head = b"# a note\nqx1|2024-01-01T00:00:00|1|2|3\n" + HEADER13.encode() + b"\n"
    assert not is_fdsn_text(head, Path("x.txt"))
    assert not is_fdsn_text(b"#EventID,Time,Latitude,Longitude\n", Path("x.csv"))


@settings(max_examples=100, deadline=None)
@given(st.binary(max_size=300))
def test_is_fdsn_text_never_raises(head: bytes) -> None:
    assert is_fdsn_text(head, Path("x.txt")) in (True, False)


# --- basic and awkward files ----------------------------------------------------------------------


def test_basic_file() -> None:
    res = read_fdsn_text(BASIC, ReadOptions())
    assert isinstance(res, ReadResult) and len(res.records) == 1
    cat = res.records[0]
    check_catalog(cat)
    df = cat.data
    assert df["event_id"].tolist() == ["qx2024aa02", "qx2024aa01", "qx2024aa03"]  # sorted by time
    # Depth/km -> m: 20 km is 20000 m (REFERENCES.md section 4.2: km here, metres in QuakeML)
    assert df["depth_m"].tolist() == [500.0, 20000.0, 0.0]
    assert df["time"].iloc[0] == pd.Timestamp("2024-03-01T04:00:05.25Z")  # no "Z": UTC
    assert np.isnan(df["magnitude"].iloc[0]) and pd.isna(df["magnitude_type"].iloc[0])
    assert df["magnitude"].iloc[1] == 2.4 and df["magnitude_type"].iloc[1] == "ML"
    assert (df["event_class"] == "other").all()  # 13 columns: no EventType
    assert df["source_type"].isna().all()
    assert f"{BASIC.name}: no EventType column: every event classed as other" in res.notes
    assert res.rejects.empty and list(res.rejects.columns) == list(REJECT_COLUMNS)
    assert cat.meta.kind == "seismic_catalog" and cat.meta.quantity == "events"
    assert cat.meta.station == "QXVOCAT"  # the single Catalog value in the file
    (prov,) = cat.provenance
    assert prov.reader == "seismic_catalog/fdsn_text"
    assert prov.sha256 == file_sha256(BASIC) and prov.source_name == BASIC.name
    assert (prov.rows_accepted, prov.rows_rejected) == (3, 0)
    assert prov.original_unit == "km"
    assert any("converted to metres" in a for a in prov.assumptions)


@pytest.fixture(scope="module")
def awkward() -> ReadResult:
    return read_fdsn_text(AWKWARD, ReadOptions())


def test_awkward_accepted_rows(awkward: ReadResult) -> None:
    cat = awkward.records[0]
    check_catalog(cat)
    df = cat.data.set_index("event_id")
    assert df.index.tolist() == ["qx2024bb01", "qx2024bb02", "qx2024bb03", "qx2024bb04", "qx2024bb05", "qx2024bb10"]
    # 0, 1, 6, 2, 3, 4 fractional digits, with and without Z: all UTC, exact to the microsecond
    assert df.loc["qx2024bb01", "time"] == pd.Timestamp("2024-04-01T00:00:00Z")
    assert df.loc["qx2024bb02", "time"] == pd.Timestamp("2024-04-01T00:00:01.5Z")
    assert df.loc["qx2024bb03", "time"] == pd.Timestamp("2024-04-01T00:00:02.123456Z")
    assert df.loc["qx2024bb04", "time"] == pd.Timestamp("2024-04-01T00:00:03.12Z")
    assert df.loc["qx2024bb05", "time"] == pd.Timestamp("2024-04-01T00:00:04.123Z")
    assert df.loc["qx2024bb10", "time"] == pd.Timestamp("2024-04-01T00:00:09.1234Z")
    # Depth/Km capitalisation, km -> m, empty depth kept as NaN
    assert df.loc["qx2024bb01", "depth_m"] == 20000.0
    assert df.loc["qx2024bb03", "depth_m"] == 1250.0
    assert np.isnan(df.loc["qx2024bb04", "depth_m"])
    # empty MagType / Magnitude
    assert np.isnan(df.loc["qx2024bb03", "magnitude"]) and pd.isna(df.loc["qx2024bb03", "magnitude_type"])
    # EventType (14th column) -> classes
    assert df["event_class"].tolist() == ["VT", "LP", "hybrid", "VT", "rockfall", "other"]
    assert df["source_type"].tolist() == ["VT", "LP", "hybrid", "earthquake", "RF", "glacier calving"]
    assert cat.meta.station == "QXVOCAT"


def test_awkward_rejects_carry_file_line_numbers(awkward: ReadResult) -> None:
    rej = awkward.rejects
    assert list(rej.columns) == list(REJECT_COLUMNS)
    assert (rej["file"] == AWKWARD.name).all()
    lines = AWKWARD.read_text(encoding="utf-8").splitlines()
    got = {int(r.line): (r.column, r.reason) for r in rej.itertuples()}
    assert sorted(got) == [13, 14, 15, 16, 18]
    assert got[13][0] == "time" and "not-a-time" in got[13][1]
    assert got[14][0] == "latitude" and "north" in got[14][1]
    assert pd.isna(got[15][0]) and "expected 14" in got[15][1] and "found 7" in got[15][1]
    assert got[16][0] == "depth" and "deep" in got[16][1]
    assert "found 15" in got[18][1]  # a non-empty 15th cell is not a trailing empty cell
    for r in rej.itertuples():
        assert r.raw == lines[r.line - 1]
    prov = awkward.records[0].provenance[0]
    assert (prov.rows_accepted, prov.rows_rejected) == (6, 5)


def test_awkward_notes(awkward: ReadResult) -> None:
    name = AWKWARD.name
    assert f"{name}: 1 event had no magnitude: counted, excluded from energy and b-value later" in awkward.notes
    assert f"{name}: unknown event types mapped to other: glacier calving" in awkward.notes
    assert (
        f"{name}: 5 events rejected (see rejects; by field: field count 2, time 1, latitude 1, depth 1)"
        in awkward.notes
    )
    assert all(n.startswith(f"{name}: ") and "\n" not in n for n in awkward.notes)


def test_crlf_line_endings_give_the_same_result(tmp_path: Path, awkward: ReadResult) -> None:
    p = tmp_path / AWKWARD.name
    p.write_bytes(AWKWARD.read_bytes().replace(b"\n", b"\r\n"))
    res = read_fdsn_text(p, ReadOptions())
    pd.testing.assert_frame_equal(res.records[0].data, awkward.records[0].data)
    assert res.rejects["line"].tolist() == awkward.rejects["line"].tolist()


def test_header_names_are_case_insensitive_and_order_free(tmp_path: Path) -> None:
    p = tmp_path / "reordered.txt"
    p.write_text(
        "#  magnitude | depth/KM|TIME|eventid|LONGITUDE|latitude|MAGTYPE|eventtype|\n"
        "2.1|7|2024-05-01T10:00:00Z|qx1|-45.5|12.5|Md|LF|\n"
        "1.0|0|2024-05-01T09:00:00.000001|qx2|-45.4|12.4||rockfall\n",
        encoding="utf-8",
    )
    assert is_fdsn_text(head(p), p)
    df = read_fdsn_text(p, ReadOptions()).records[0].data
    assert df["event_id"].tolist() == ["qx2", "qx1"]
    assert df["depth_m"].tolist() == [0.0, 7000.0]
    assert df["latitude_deg"].tolist() == [12.4, 12.5]
    assert df["event_class"].tolist() == ["rockfall", "LP"]
    assert df["time"].iloc[0] == pd.Timestamp("2024-05-01T09:00:00.000001Z")


def test_trailing_empty_cells_are_tolerated(tmp_path: Path) -> None:
    p = tmp_path / "trailing.txt"
    row = "qx1|2024-05-01T10:00:00Z|12.5|-45.5|3|||||ML|1.0||Demo Peak"
    p.write_text(f"{HEADER13}\n{row}\n{row.replace('qx1', 'qx2')}|\n{row.replace('qx1', 'qx3')}| | |\n")
    res = read_fdsn_text(p, ReadOptions())
    assert res.rejects.empty
    assert res.records[0].data["event_id"].tolist() == ["qx1", "qx2", "qx3"]


def test_out_of_range_coordinates_and_bad_magnitude_are_rejected(tmp_path: Path) -> None:
    p = tmp_path / "range.txt"
    rows = [
        "qx1|2024-05-01T10:00:00Z|95|-45.5|3|||||ML|1.0||x",
        "qx2|2024-05-01T10:00:00Z|12|-400|3|||||ML|1.0||x",
        "qx3|2024-05-01T10:00:00Z|12|-45|3|||||ML|big||x",
        "qx4|2024-05-01T10:00:00Z|12|-45|inf|||||ML|1||x",
        "qx5|2024-05-01T10:00:00Z|12|-45|3|||||ML|1||x",
    ]
    p.write_text(HEADER13 + "\n" + "\n".join(rows) + "\n")
    res = read_fdsn_text(p, ReadOptions())
    assert res.rejects["column"].tolist() == ["latitude", "longitude", "magnitude", "depth"]
    assert res.rejects["line"].tolist() == [2, 3, 4, 5]
    assert res.records[0].data["event_id"].tolist() == ["qx5"]


def test_only_full_iso_times_are_accepted(tmp_path: Path) -> None:
    # pandas alone would read "now"/"today" as the current time and "2024" as 1 January
    p = tmp_path / "times.txt"
    times = ["now", "today", "2024", "2024-05-01", "20240501T101010", "2024-05-01T10:10:10,5", "2300-01-01T00:00:00"]
    good = ["2024-05-01T10:10:10+01:00", "2024-05-01 10:10", "2024-05-01T10:10:10.123456789Z"]
    rows = [f"qx{i}|{t}|12|-45|3|||||ML|1||x" for i, t in enumerate(times + good)]
    p.write_text(HEADER13 + "\n" + "\n".join(rows) + "\n")
    res = read_fdsn_text(p, ReadOptions())
    assert res.rejects["line"].tolist() == list(range(2, 2 + len(times)))
    assert (res.rejects["column"] == "time").all()
    got = res.records[0].data.set_index("event_id")["time"]
    assert got["qx7"] == pd.Timestamp("2024-05-01T09:10:10Z")
    assert got["qx8"] == pd.Timestamp("2024-05-01T10:10:00Z")
    assert got["qx9"] == pd.Timestamp("2024-05-01T10:10:10.123456789Z")


def test_duplicate_event_ids_keep_the_first(tmp_path: Path) -> None:
    p = tmp_path / "dups.txt"
    rows = [
        "qx1|2024-05-01T10:00:00Z|12|-45|3|||||ML|1.0||x",
        "qx2|2024-05-01T09:00:00Z|12|-45|3|||||ML|1.0||x",
        "qx1|2024-05-01T11:00:00Z|12|-45|3|||||ML|1.5||x",
        "|2024-05-01T12:00:00Z|12|-45|3|||||ML|1.5||x",
        "|2024-05-01T13:00:00Z|12|-45|3|||||ML|1.5||x",
    ]
    p.write_text(HEADER13 + "\n" + "\n".join(rows) + "\n")
    res = read_fdsn_text(p, ReadOptions())
    (r,) = res.rejects.itertuples()
    assert (r.line, r.column) == (4, "event_id")
    assert r.reason == "duplicate event id 'qx1' (first on line 2)"
    df = res.records[0].data
    assert df["event_id"].tolist() == ["qx2", "qx1", "", ""]  # empty ids are not duplicates of each other
    assert df["magnitude"].tolist() == [1.0, 1.0, 1.5, 1.5]


def test_all_rows_bad_gives_an_empty_catalog(tmp_path: Path) -> None:
    p = tmp_path / "allbad.txt"
    p.write_text(f"{HEADER13}\nqx1|2024-05-01T10:00:00Z|12\nqx2|yesterday|12|-45|3|||||ML|1||x\n")
    res = read_fdsn_text(p, ReadOptions())
    cat = res.records[0]
    check_catalog(cat)
    assert len(cat) == 0
    assert res.rejects["line"].tolist() == [2, 3]
    assert (cat.provenance[0].rows_accepted, cat.provenance[0].rows_rejected) == (0, 2)


def test_timezone_option_is_ignored_and_says_so() -> None:
    res = read_fdsn_text(BASIC, ReadOptions(timezone="+05:00"))
    assert res.records[0].data["time"].iloc[0] == pd.Timestamp("2024-03-01T04:00:05.25Z")
    assert any("timezone option '+05:00' ignored" in a for a in res.records[0].provenance[0].assumptions)


def test_options(tmp_path: Path) -> None:
    opts = ReadOptions(station="XV-OTHER", class_map={"glacier calving": "rockfall"}, magnitude_type="ML")
    res = read_fdsn_text(AWKWARD, opts)
    df = res.records[0].data.set_index("event_id")
    assert res.records[0].meta.station == "XV-OTHER"
    assert df.loc["qx2024bb10", "event_class"] == "rockfall"
    assert df.loc["qx2024bb03", "magnitude_type"] == "ML"
    assert not any("unknown event types" in n for n in res.notes)
    with pytest.raises(ConfigError, match="valid classes"):
        read_fdsn_text(AWKWARD, ReadOptions(class_map={"VT": "quake"}))


def test_many_rows_keep_their_line_numbers(tmp_path: Path) -> None:
    # interleave good rows, rows with trailing empty cells, comments, blanks and bad rows
    rng = np.random.default_rng(11)
    lines = [HEADER14]
    expect_bad, expect_good = [], []
    for i in range(20000):
        n = len(lines) + 1
        r = rng.random()
        base = f"L{n}|2024-01-01T00:00:{i % 60:02d}.{i % 1000:03d}Z|12.1|-45.1|{i % 7}|||||ML|1.1||x|VT"
        if r < 0.05:
            lines.append(f"L{n}|2024-01-01|12.1")
            expect_bad.append(n)
        elif r < 0.10:
            lines.append(base.replace("|12.1|", "|abc|"))
            expect_bad.append(n)
        elif r < 0.15:
            lines.append("# comment")
        elif r < 0.18:
            lines.append("")
        elif r < 0.30:
            lines.append(base + "||")
            expect_good.append(f"L{n}")
        else:
            lines.append(base)
            expect_good.append(f"L{n}")
    p = tmp_path / "many.txt"
    p.write_text("\n".join(lines))  # no final newline
    res = read_fdsn_text(p, ReadOptions())
    assert res.rejects["line"].tolist() == expect_bad
    assert sorted(res.records[0].data["event_id"]) == sorted(expect_good)
    df = res.records[0].data
    # every accepted row's depth matches the value written on its own line
    ids = df["event_id"].str.slice(1).astype(int)
    src = [lines[i - 1].split("|")[4] for i in ids]
    np.testing.assert_array_equal(df["depth_m"].to_numpy(), np.array(src, dtype=float) * 1000.0)


# --- files that are not event text ---------------------------------------------------------------


def test_empty_file_has_no_events() -> None:
    with pytest.raises(InputError, match="no events"):
        read_fdsn_text(DATA / "fdsn_text_empty.txt", ReadOptions())


def test_header_only_has_no_events() -> None:
    with pytest.raises(InputError, match="no events"):
        read_fdsn_text(DATA / "fdsn_text_header_only.txt", ReadOptions())


def test_header_and_comments_only_has_no_events(tmp_path: Path) -> None:
    p = tmp_path / "c.txt"
    p.write_text(f"# note\n{HEADER14}\n# nothing today\n\n")
    with pytest.raises(InputError, match="no events"):
        read_fdsn_text(p, ReadOptions())


@pytest.mark.parametrize("name", ["catalog_as_csv.csv", "quakeml_basic.xml"])
def test_wrong_kind_of_file(name: str) -> None:
    with pytest.raises(InputError, match="not FDSN event text"):
        read_fdsn_text(DATA / name, ReadOptions())


def test_binary_garbage(tmp_path: Path) -> None:
    p = tmp_path / "garbage.txt"
    p.write_bytes(np.random.default_rng(5).integers(0, 256, 4096, dtype=np.uint8).tobytes())
    assert not is_fdsn_text(head(p), p)
    with pytest.raises(InputError, match="garbage.txt"):
        read_fdsn_text(p, ReadOptions())


def test_missing_file() -> None:
    with pytest.raises(InputError, match="cannot read"):
        read_fdsn_text(DATA / "does_not_exist.txt", ReadOptions())


# --- properties -----------------------------------------------------------------------------------

_cell = st.one_of(
    st.sampled_from(["", " ", "12.5", "-45.1", "nan", "inf", "1e400", "2024-01-01T00:00:00Z", "VT", "é", '"']),
    st.text(alphabet=st.characters(blacklist_categories=("Cs",), blacklist_characters="\r\n|"), max_size=8),
)
_row = st.one_of(
    st.lists(_cell, min_size=0, max_size=16).map("|".join),
    st.builds(
        lambda t, la, lo, d, m, ty: f"qx|{t}|{la}|{lo}|{d}|||||ML|{m}||x|{ty}",
        st.one_of(st.datetimes().map(lambda d: d.isoformat()), _cell),
        st.one_of(st.floats(-100, 100).map(str), _cell),
        st.one_of(st.floats(-200, 400).map(str), _cell),
        st.one_of(st.floats(allow_nan=True).map(str), _cell),
        st.one_of(st.floats(-2, 9).map(str), _cell),
        _cell,
    ),
    st.sampled_from(["", "#", "# comment|with|pipes", "   ", "\t"]),
)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(rows=st.lists(_row, max_size=12))
def test_random_rows_give_result_or_input_error(tmp_path: Path, rows: list[str]) -> None:
    p = tmp_path / "random.txt"
    p.write_text(HEADER14 + "\n" + "\n".join(rows) + "\n", encoding="utf-8")
    n_data = sum(1 for r in rows if r.strip() and not r.strip().startswith("#"))
    try:
        res = read_fdsn_text(p, ReadOptions())
    except InputError as exc:
        assert "\n" not in str(exc)
        assert n_data == 0 and "no events" in str(exc)
        return
    cat = res.records[0]
    check_catalog(cat)
    # every data line is accounted for: accepted or rejected, never lost or duplicated
    assert len(cat) + len(res.rejects) == n_data
    assert cat.provenance[0].rows_accepted == len(cat)
    assert cat.provenance[0].rows_rejected == len(res.rejects)
    assert res.rejects["line"].between(2, len(rows) + 1).all()
    assert np.isfinite(cat.data["latitude_deg"].dropna()).all()


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_random_corruption_gives_result_or_input_error(tmp_path: Path, data: st.DataObject) -> None:
    raw = bytearray(AWKWARD.read_bytes())
    for _ in range(data.draw(st.integers(1, 6))):
        op = data.draw(st.sampled_from(["cut", "flip", "insert", "truncate"]))
        at = data.draw(st.integers(0, max(len(raw) - 1, 0)))
        if op == "cut":
            del raw[at : at + data.draw(st.integers(1, 60))]
        elif op == "flip":
            if raw:
                raw[at] = data.draw(st.integers(0, 255))
        elif op == "insert":
            raw[at:at] = data.draw(st.sampled_from([b"|", b"\n", b"\r", b"#", b"\x00", b"\xff\xfe", b"||||"]))
        else:
            del raw[at:]
    p = tmp_path / "corrupt.txt"
    p.write_bytes(bytes(raw))
    try:
        res = read_fdsn_text(p, ReadOptions())
    except InputError as exc:
        assert "\n" not in str(exc)
        return
    assert isinstance(res, ReadResult)
    check_catalog(res.records[0])

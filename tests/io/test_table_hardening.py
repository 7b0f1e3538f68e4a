"""Line ends, encodings and wide shapes in the tabular reader (issue 10): the sniffer and the loader agree
on what a line is; Windows-1252 / Latin-1 text; blank-row and duplicate checks stay vectorised."""

from __future__ import annotations

import warnings

import pandas as pd
import pytest

from degas.errors import DegasError
from degas.io import read
from degas.io.table import split_lines

BODY = ["# station: VLM-N", "time,SO2 flux (t/d)", "2024-01-01T00:00Z,86.4", "not a time,1",
        "2024-01-03T00:00Z,172.8"]


@pytest.mark.parametrize("eol", ["\n", "\r\n", "\r"])
def test_every_line_end_gives_the_same_rows_and_line_numbers(write, eol):
    res = read(write("f.csv", eol.join(BODY) + eol))
    (ts,) = res.records
    assert ts.meta.station == "VLM-N"
    assert ts.data["value"].tolist() == pytest.approx([1.0, 2.0])
    assert res.rejects["line"].tolist() == [4]


@pytest.mark.parametrize("odd", ["\u2028", "\u2029", "\x85", "\x0c", "\x0b", "\x1c"])
def test_odd_separators_inside_comments_are_characters_not_lines(write, odd):
    lines = [f"# note: calibrated{odd}then moved", *BODY]
    res = read(write("f.csv", "\n".join(lines) + "\n"))
    (ts,) = res.records
    assert len(ts) == 2 and res.rejects["line"].tolist() == [5]


def test_split_lines_rule():
    assert split_lines("a\r\nb\rc\nd\u2028e\x85f\n") == ["a", "b", "c", "d\u2028e\x85f"]


def test_windows_1252_text_is_read_and_said(write):
    text = "# station: Cráter Sur – 2\r\ntime,SO2 flux (t/d),note\r\n2024-01-01T00:00Z,86.4,“cloud”\r\n"
    res = read(write("f.csv", text.encode("cp1252")))
    (ts,) = res.records
    assert ts.meta.station == "Cráter Sur – 2"
    assert any("windows-1252 (not valid UTF-8)" in n for n in res.notes)


def test_invalid_utf8_far_beyond_the_sniffed_head_falls_back_without_noise(write, capfd):
    rows = "".join(f"2024-01-01T{h:02d}:{m:02d}Z,86.4\n" for h in range(24) for m in range(60))
    text = ("time,SO2 flux (t/d)\n" + rows * 3).encode() + b"2024-01-05T00:00Z,8\xe9.4\n" \
        + b"2024-01-06T00:00Z,8\xe9,4,5\n"  # a malformed row holding the invalid byte (was "Exception ignored")
    assert len(text) > 64 * 1024
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        res = read(write("f.csv", text))
    err = capfd.readouterr().err
    assert "Exception ignored" not in err and "Traceback" not in err
    assert len(res.records[0]) >= 1440
    rej = res.rejects.set_index("line")
    assert "not a number" in rej.loc[4322, "reason"]  # "8é.4", on its own line
    assert "wrong number of fields" in rej.loc[4323, "reason"]


def test_latin1_with_bytes_windows_1252_leaves_undefined(write):
    res = read(write("f.csv", b"# station: S\x81d\ntime,SO2 flux (t/d)\n2024-01-01T00:00Z,86.4\n"))
    assert res.records[0].meta.station == "S\x81d"


def test_a_wide_file_blank_rows_are_dropped_in_one_pass(write):
    n = 3000
    head = "time,SO2 flux (t/d)," + ",".join(f"c{i}" for i in range(n)) + "\n"
    blank = "," * (n + 1) + "\n"
    row = "2024-01-01T00:00Z,86.4," + ",".join("x" for _ in range(n)) + "\n"
    res = read(write("w.csv", head + blank + row + blank))
    assert len(res.records[0]) == 1 and len(res.rejects) == 0


def test_many_within_file_duplicates_are_reported_each_with_its_first_line(write):
    t = pd.date_range("2024-01-01", periods=50, freq="h", tz="UTC")
    body = "".join(f"{x.isoformat()},{86.4 + i}\n" for i, x in enumerate(t))
    dup = "".join(f"{x.isoformat()},{86.4 + i + (i % 2)}\n" for i, x in enumerate(t))
    res = read(write("d.csv", "time,SO2 flux (t/d)\n" + body + dup))
    assert len(res.records[0]) == 50
    rej = res.rejects.sort_values("line")
    assert rej["line"].tolist() == list(range(52, 102))
    assert rej["reason"].iloc[0] == "duplicate of line 2"
    assert rej["reason"].iloc[1] == "duplicate timestamp with a different value than line 3"


def test_header_only_and_garbage_are_one_line_errors(write):
    for content in ("time,SO2 flux (t/d)\r", "a,b\r\x85\x85\r"):
        with pytest.raises(DegasError) as ei:
            read(write("g.csv", content))
        assert "\n" not in str(ei.value)


@pytest.mark.parametrize("pandas_meta", [b"{not json", b'{"columns": 5}', b'{"index_columns": [{"kind": "zz"}]}',
                                         b'{"columns": [{"name": "x", "pandas_type": "nope", "metadata": 3}]}'])
def test_parquet_with_corrupt_pandas_metadata_is_a_one_line_reject(tmp_path, pandas_meta):
    import pyarrow as pa
    import pyarrow.parquet as pq

    table = pa.table({"time": pa.array(["2024-01-01T00:00Z"]), "SO2 flux (t/d)": pa.array([86.4])})
    table = table.replace_schema_metadata({b"pandas": pandas_meta})
    p = tmp_path / "f.parquet"
    pq.write_table(table, p)
    with pytest.raises(DegasError) as ei:
        read(p)
    assert "\n" not in str(ei.value) and "f.parquet: cannot convert the Parquet table" in str(ei.value)


def test_kind_given_for_a_wide_file_is_capped_with_advice(write):
    from degas.io.base import ReadOptions

    n = 1000
    head = "time," + ",".join(f"ch{i}" for i in range(n)) + "\n"
    row = "2024-01-01T00:00Z," + ",".join("1" for _ in range(n)) + "\n"
    with pytest.raises(DegasError) as ei:
        read(write("w.csv", head + row), ReadOptions(kind="amplitude"))
    msg = str(ei.value)
    assert "1,000 columns would each become a series" in msg and "--value-col" in msg and len(msg) < 400
    res = read(write("w.csv", head + row), ReadOptions(kind="amplitude", columns={"value": "ch7"}))
    assert len(res.records) == 1


def test_messages_listing_columns_stay_short(write):
    head = ",".join(f"c{i}" for i in range(5000)) + "\n"
    with pytest.raises(DegasError) as ei:
        read(write("w.csv", head + ",".join("x" for _ in range(5000)) + "\n"))
    assert "(5,000 columns in all)" in str(ei.value) and len(str(ei.value)) < 500


def test_a_workbook_with_duplicate_header_names_is_a_one_line_error(tmp_path):
    from openpyxl import Workbook

    wb = Workbook()
    wb.active.append(["time", "SO2 flux (t/d)", "time"])
    wb.active.append(["2024-01-01", 86.4, "x"])
    p = tmp_path / "d.xlsx"
    wb.save(p)
    with pytest.raises(DegasError, match="duplicate column names \\['time'\\]"):
        read(p)

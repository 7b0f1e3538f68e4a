"""'degas forget': undo one ingested file as a new generation, atomic, listed in the manifest."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from degas.cli import app
from degas.errors import ArchiveError
from degas.store import Archive, forget

A = "time,SO2 flux (t/d)\n2024-01-01,100\n2024-01-02,110\n2024-01-03,120\n"
B = "time,SO2 flux (t/d)\n2024-01-03,120\n2024-01-04,130\n"  # one row A already gave, one new


@pytest.fixture
def arc(tmp_path: Path):
    (tmp_path / "a.csv").write_text(A)
    (tmp_path / "b.csv").write_text(B)
    a = Archive.create(tmp_path / "arc")
    opts = None
    a.ingest_file(tmp_path / "a.csv", opts)
    a.ingest_file(tmp_path / "b.csv", opts)
    return a, tmp_path


def test_forget_removes_only_the_rows_that_file_added(arc):
    a, tmp = arc
    (sid,) = [e.series_id for e in a.entries()]
    gen = a._manifest["generation"]
    rep = forget(a, tmp / "b.csv")
    assert rep.removed == {sid: 1} and rep.generation == gen + 1
    again = Archive.open(a.root)
    data = again.load(sid).data
    assert data["value"].tolist() == pytest.approx([100 / 86.4, 110 / 86.4, 120 / 86.4])  # A's row 3 kept
    assert {p.source_name for p in again.entry(sid).provenance} == {"a.csv"}
    m = json.loads((a.root / "manifest.json").read_text())
    assert [s["name"] for s in m["sources"].values()] == ["a.csv"]
    assert m["forgotten"][0]["name"] == "b.csv" and m["forgotten"][0]["generation"] == gen + 1
    # the file can be ingested again afterwards
    rep2 = again.ingest_file(tmp / "b.csv")
    assert not rep2.skipped and sum(o.added for o in rep2.outcomes) == 1


def test_forgetting_the_only_source_removes_the_series_and_its_files(arc):
    a, tmp = arc
    forget(a, "b.csv")
    forget(a, "a.csv")
    again = Archive.open(a.root)
    assert again.entries() == [] and again.sources() == {}
    assert list((a.root / "series").iterdir()) == []


def test_unknown_source_is_a_clear_error_and_changes_nothing(arc):
    a, tmp = arc
    before = (a.root / "manifest.json").read_text()
    with pytest.raises(ArchiveError, match="no source named 'c.csv'.*ingested files: a.csv, b.csv"):
        forget(a, "c.csv")
    (tmp / "c.csv").write_text("time,SO2 flux (t/d)\n2024-01-09,1\n")
    with pytest.raises(ArchiveError, match="was never ingested"):
        forget(a, tmp / "c.csv")
    assert (a.root / "manifest.json").read_text() == before


def test_a_failed_write_leaves_the_archive_as_it_was(arc, monkeypatch):
    import degas.store as store

    a, tmp = arc
    before = (a.root / "manifest.json").read_text()
    (sid,) = [e.series_id for e in a.entries()]
    rows = len(a.load(sid))

    def boom(*args, **kwargs):
        raise OSError("disk full")

    monkeypatch.setattr(store, "_atomic_write_text", boom)
    with pytest.raises(OSError):
        forget(a, "b.csv")
    monkeypatch.undo()
    again = Archive.open(a.root)
    assert (a.root / "manifest.json").read_text() == before and len(again.load(sid)) == rows


def test_cli_forget(arc, capsys):
    from degas.cli._app import run

    a, tmp = arc
    res = CliRunner().invoke(app, ["forget", str(a.root), str(tmp / "b.csv")])
    assert res.exit_code == 0, res.output
    assert "b.csv: forgotten (generation 3); 1 row(s) removed from 1 series" in res.output
    assert run(["forget", str(a.root), "zzz.csv"]) == 2
    err = capsys.readouterr().err
    assert "degas: error: no source named 'zzz.csv'" in err and "Traceback" not in err


def test_a_second_value_column_of_the_same_file_is_not_refused(tmp_path):
    from degas.io.base import ReadOptions

    (tmp_path / "two.csv").write_text("time,SO2 flux (t/d),CO2 flux (t/d)\n2024-01-01,100,900\n2024-01-02,90,800\n")
    a = Archive.create(tmp_path / "arc")
    r1 = a.ingest_file(tmp_path / "two.csv", ReadOptions(columns={"value": "SO2 flux (t/d)"}, kind="gas_flux"))
    assert [o.series_id for o in r1.outcomes] == ["gas_flux.so2_flux.all"]
    again = a.ingest_file(tmp_path / "two.csv", ReadOptions(columns={"value": "SO2 flux (t/d)"}, kind="gas_flux"))
    assert again.skipped
    r2 = a.ingest_file(tmp_path / "two.csv", ReadOptions(columns={"value": "CO2 flux (t/d)"}, kind="gas_flux"))
    assert not r2.skipped and [o.series_id for o in r2.outcomes] == ["gas_flux.co2_flux.all"]
    assert {e.series_id for e in a.entries()} == {"gas_flux.so2_flux.all", "gas_flux.co2_flux.all"}
    rep = forget(a, tmp_path / "two.csv")
    assert rep.dropped == ["gas_flux.so2_flux.all"] and any("another reading" in n for n in rep.notes)
    rep = forget(a, tmp_path / "two.csv")
    assert rep.dropped == ["gas_flux.co2_flux.all"] and Archive.open(a.root).entries() == []


def test_forget_keeps_rows_another_remaining_file_also_gave(arc):
    # review: forgetting a.csv removed 2024-01-03 although b.csv, still in the archive, holds that same row
    a, tmp = arc
    (sid,) = [e.series_id for e in a.entries()]
    rep = forget(a, tmp / "a.csv")
    assert rep.removed == {sid: 2}
    data = Archive.open(a.root).load(sid).data
    assert data["value"].tolist() == pytest.approx([120 / 86.4, 130 / 86.4])  # all of b.csv's rows remain
    # and forgetting b.csv afterwards empties the series: no file is left that gave 2024-01-03
    rep2 = forget(Archive.open(a.root), tmp / "b.csv")
    assert rep2.dropped == [sid]


def test_forget_after_a_refused_conflict_removes_the_row(tmp_path):
    # a value b.csv tried to change was kept out (conflict): that row is a.csv's alone
    (tmp_path / "a.csv").write_text(A)
    (tmp_path / "b.csv").write_text("time,SO2 flux (t/d)\n2024-01-03,999\n2024-01-04,130\n")
    a = Archive.create(tmp_path / "arc")
    a.ingest_file(tmp_path / "a.csv")
    a.ingest_file(tmp_path / "b.csv")
    (sid,) = [e.series_id for e in a.entries()]
    rep = forget(a, tmp_path / "a.csv")
    assert rep.removed == {sid: 3}
    assert Archive.open(a.root).load(sid).data["value"].tolist() == pytest.approx([130 / 86.4])


def test_another_sheet_of_a_workbook_already_read_is_read(tmp_path):
    # review: after reading the first sheet (the default), '--sheet 2023' or '--sheet all' was refused as
    # "already in the archive (same SHA-256)" with exit code 0, so per-year workbooks could not be completed.
    import pandas as pd

    from degas.io.base import ReadOptions

    wb = tmp_path / "flux.xlsx"
    with pd.ExcelWriter(wb) as w:
        pd.DataFrame({"time": pd.to_datetime(["2022-01-01", "2022-01-02"]), "SO2 flux (t/d)": [100, 110]}).to_excel(
            w, sheet_name="2022", index=False)
        pd.DataFrame({"time": pd.to_datetime(["2023-01-01", "2023-01-02"]), "SO2 flux (t/d)": [200, 210]}).to_excel(
            w, sheet_name="2023", index=False)
    a = Archive.create(tmp_path / "arc")
    assert a.ingest_file(wb).accepted == 2
    second = a.ingest_file(wb, ReadOptions(sheet="2023"))
    assert not second.skipped and second.accepted == 2
    assert a.ingest_file(wb, ReadOptions(sheet="2023")).skipped  # the same sheet again adds nothing
    both = a.ingest_file(wb, ReadOptions(sheet="all"))
    assert not both.skipped
    (sid,) = [e.series_id for e in a.entries()]
    assert len(a.load(sid).data) == 4  # rows read twice are stored once


def test_row_keys_keep_the_recorded_format(arc):
    # the column-wise key strings (review: the row-wise join took ~10 s per 200k rows at every ingest) must equal
    # the row-wise ones already written to contrib/ files of existing archives
    from degas.store import _key_frame, _key_strings, conform

    a, _ = arc
    (sid,) = [e.series_id for e in a.entries()]
    df = conform(a.load(sid).data, "TimeSeries")
    kf = _key_frame(df, ["time", "end"])
    assert _key_strings(df, "TimeSeries") == kf.astype(str).agg("|".join, axis=1).tolist()

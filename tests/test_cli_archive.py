"""The ingest / inventory / formats commands: one line per file, clear errors, exit codes."""

from __future__ import annotations

import json

import pytest

from degas.cli import main  # noqa: F401  (registers every command)
from degas.cli._app import run

FLUX = "time,SO2 flux (t/d),flag\n2024-01-01T00:00Z,100,good\n2024-01-02T00:00Z,abc,good\n2024-01-03,120,good\n"


def test_ingest_prints_one_summary_line_per_file_and_the_utc_assumption(write, tmp_path, capsys):
    f = write("f.csv", FLUX)
    rc = run(["ingest", str(f), "--into", str(tmp_path / "arc"), "--station", "VLM-N"])
    out = capsys.readouterr().out
    assert rc == 0
    assert "f.csv: 2 rows read, 2 added to gas_flux.so2_flux.VLM-N; 1 rejected" in out
    assert "rejected f.csv:3 [SO2 flux (t/d)]: not a number" in out
    assert "UTC" in out  # the naive timestamp on line 4 was taken as UTC, and the output says so


def test_inventory_table_and_json(write, tmp_path, capsys):
    run(["ingest", str(write("f.csv", FLUX)), "--into", str(tmp_path / "arc")])
    capsys.readouterr()
    assert run(["inventory", str(tmp_path / "arc"), "--json"]) == 0
    rows = json.loads(capsys.readouterr().out)
    assert rows[0]["kind"] == "gas_flux" and rows[0]["count"] == 2 and rows[0]["unit"] == "t/d"
    assert rows[0]["largest_gap_days"] == pytest.approx(2.0)
    assert run(["inventory", str(tmp_path / "arc")]) == 0
    assert "1 series from 1 file(s); 1 rejected row(s) on record" in capsys.readouterr().out


@pytest.mark.parametrize(
    "content,fragment",
    [("", "empty file"), (b"\x89PNG\r\n\x1a\n\x00\x00", "not a format degas reads"),
     ("time,SO2 flux (zorks)\n2024-01-01,1\n", "unknown unit 'zorks'")],
)
def test_bad_files_give_one_line_errors_and_exit_2(write, tmp_path, capsys, content, fragment):
    rc = run(["ingest", str(write("x.csv", content)), "--into", str(tmp_path / "arc")])
    err = capsys.readouterr().err
    assert rc == 2
    assert fragment in err
    assert "Traceback" not in err
    first = [ln for ln in err.splitlines() if ln.startswith("degas: error:")]
    assert len(first) == 1 and "x.csv" in first[0]


def test_unknown_kind_and_missing_archive(tmp_path, capsys, write):
    assert run(["ingest", str(write("f.csv", FLUX)), "--into", str(tmp_path / "a"), "--kind", "lava"]) == 2
    assert "valid kinds" in capsys.readouterr().err
    assert run(["inventory", str(tmp_path / "nope")]) == 2
    assert "not a degas archive" in capsys.readouterr().err


def test_mapping_file(write, tmp_path, capsys):
    f = write("m.txt", "fecha;flujo\n01/02/2024 10:00;5\n")
    m = write("map.toml", 'kind = "gas_flux"\nspecies = "SO2"\ndayfirst = true\ntimezone = "UTC"\n'
                          '[columns]\ntime = "fecha"\nvalue = "flujo"\n[units]\nvalue = "kg/s"\n')
    assert run(["ingest", str(f), "--into", str(tmp_path / "a"), "--map", str(m)]) == 0
    assert "1 added to gas_flux.so2_flux.all" in capsys.readouterr().out
    bad = write("bad.toml", 'kind = "gas_flux"\ncolour = "red"\n')
    assert run(["ingest", str(f), "--into", str(tmp_path / "b"), "--map", str(bad)]) == 2
    assert "unknown option(s) ['colour']" in capsys.readouterr().err


def test_formats_lists_readers(capsys):
    assert run(["formats"]) == 0
    out = capsys.readouterr().out
    assert "seismic_catalog/quakeml" in out and "table/delimited" in out

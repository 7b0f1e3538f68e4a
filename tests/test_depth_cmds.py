"""`degas depths ARCHIVE` on a small archive: the table, --project, --model errors, --csv/--json."""

from __future__ import annotations

import json
from pathlib import Path

from degas.cli import main  # noqa: F401  (registers every command)
from degas.cli._app import run
from degas.store import Archive

DATA = Path(__file__).parent / "data" / "melt_inclusions"


def test_depths_prints_the_table_and_writes_files(tmp_path, capsys):
    arc = Archive.create(tmp_path / "arc")
    arc.ingest_file(DATA / "inclusions_good.csv")
    proj = tmp_path / "p.toml"
    proj.write_text('[inclusions]\ntemperature_c = [800, 850]\ncrust_density_kg_m3 = 2500\nvent_elevation_m = 1000\n'
                    'draws = 50\n')
    code = run(["depths", str(tmp_path / "arc"), "--project", str(proj), "--csv", str(tmp_path / "i.csv"),
                "--json", str(tmp_path / "p.json")])
    out = capsys.readouterr().out
    assert code == 0
    assert "phase 1" in out and "below sea level" in out and "vent at 1000 m" in out
    assert "no seismic catalogue" in out
    rows = json.loads((tmp_path / "p.json").read_text())
    assert {r["phase"] for r in rows} == {"phase 1", "phase 2"}
    assert (tmp_path / "i.csv").read_text().startswith("analysis_id,")


def test_depths_errors_are_one_line(tmp_path, capsys):
    arc = Archive.create(tmp_path / "arc")
    assert run(["depths", str(tmp_path / "arc")]) == 2
    assert "holds no melt-inclusion analyses" in capsys.readouterr().err
    arc.ingest_file(DATA / "inclusions_good.csv")
    assert run(["depths", str(tmp_path / "arc"), "--model", "Bogus"]) == 2
    err = capsys.readouterr().err
    assert "valid: Liu" in err and "Traceback" not in err

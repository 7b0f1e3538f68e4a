"""`--project` on the archive commands (issue 13: every command takes the project): ingest reads a file named in
the project's [[file]] list with that entry's options, or the whole list when no file is given; inventory says
which stored series the report uses."""

from __future__ import annotations

import shutil

from degas.cli import main  # noqa: F401  (registers every command)
from degas.cli._app import run
from degas.store import Archive
from tests.conftest import REPO

PROJECT = """[volcano]
name = "Velmarra"
[[file]]
path = "{path}"
station = "TR-CAM"
"""


def _setup(tmp_path):
    src = tmp_path / "camera_rates.csv"
    shutil.copy(REPO / "demo_series" / "extrusion_rate_camera_daily.csv", src)
    proj = tmp_path / "velmarra_test.toml"
    proj.write_text(PROJECT.format(path=src.as_posix()), encoding="utf-8")
    return src, proj


def test_ingest_uses_the_project_file_entry(tmp_path, capsys):
    src, proj = _setup(tmp_path)
    assert run(["ingest", str(src), "--into", str(tmp_path / "a"), "--project", str(proj)]) == 0
    assert "reader options from the project's [[file]] entry" in capsys.readouterr().out
    assert [e.series_id for e in Archive.open(tmp_path / "a").entries()] == ["extrusion_rate.extrusion_rate.TR-CAM"]


def test_ingest_without_files_takes_the_project_list(tmp_path):
    _, proj = _setup(tmp_path)
    assert run(["ingest", "--into", str(tmp_path / "b"), "--project", str(proj)]) == 0
    assert len(Archive.open(tmp_path / "b").entries()) == 1


def test_ingest_without_files_or_project_is_one_line_error(tmp_path, capsys):
    assert run(["ingest", "--into", str(tmp_path / "c")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--project" in err[0]


def test_inventory_names_the_project_roles(tmp_path, capsys):
    src, proj = _setup(tmp_path)
    assert run(["ingest", "--into", str(tmp_path / "d"), "--project", str(proj)]) == 0
    capsys.readouterr()
    assert run(["inventory", str(tmp_path / "d"), "--project", str(proj)]) == 0
    assert "project magma: extrusion_rate.extrusion_rate.TR-CAM" in capsys.readouterr().out


def test_retired_project_key_is_one_note_line(tmp_path, capsys):
    src, proj = _setup(tmp_path)
    proj.write_text(proj.read_text(encoding="utf-8") + "[regimes]\ngas_factor = 2.0\n", encoding="utf-8")
    assert run(["ingest", "--into", str(tmp_path / "e"), "--project", str(proj)]) == 0
    err = capsys.readouterr().err.strip().splitlines()
    assert err == [f"degas: note: {proj}: [regimes] gas_factor is no longer used (regimes come from the fitted "
                   "gas–output relation)"]

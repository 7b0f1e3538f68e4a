"""The weekly and report commands on the demo archive."""

from __future__ import annotations

import pandas as pd

from degas.cli import main  # noqa: F401  (registers every command)
from degas.cli._app import run
from tests.conftest import REPO

PROJECT = str(REPO / "demo_series" / "velmarra.toml")


def test_weekly_prints_the_review_before_the_explosion(demo_archive, tmp_path, capsys):
    out_csv = tmp_path / "week.csv"
    rc = run(["weekly", str(demo_archive.root), "--project", PROJECT, "--before", "2025-03-10", "--csv", str(out_csv)])
    out = capsys.readouterr().out
    assert rc == 0
    assert "Week 2025-03-03 to 2025-03-09" in out
    assert "possible sealing" in out  # the week before the explosive event is gas-poor output
    table = pd.read_csv(out_csv)
    so2 = table[table["series"] == "gas_flux.so2_flux.VLM-N"].iloc[0]
    assert so2["ratio"] < 1  # SO2 is lower than in the 90 days before


def test_report_weekly_with_appendix(demo_archive, tmp_path, capsys):
    rc = run(["report", str(demo_archive.root), "--project", PROJECT, "--before", "2025-03-10", "--out",
              str(tmp_path), "--appendix", str(tmp_path / "app")])
    out = capsys.readouterr().out
    assert rc == 0
    path = tmp_path / "degas-velmarra-week-20250303-20250309-run" f"{pd.Timestamp.now(tz='UTC'):%Y%m%d}.html"
    assert path.exists() and f"report: {path}" in out
    assert (tmp_path / "app" / "weekly_review.csv").exists()


def test_report_errors_are_one_line(demo_archive, tmp_path, capsys):
    assert run(["report", str(demo_archive.root), "--before", "2025-03-10", "--start", "2024-01-01"]) == 2
    assert "either --before" in capsys.readouterr().err
    assert run(["report", str(demo_archive.root), "--start", "yesterday-ish"]) == 2
    assert "cannot read the date" in capsys.readouterr().err
    bad = tmp_path / "p.toml"
    bad.write_text('[volcano]\nname = "X"\ncolour = "red"\n')
    assert run(["report", str(demo_archive.root), "--project", str(bad)]) == 2
    assert "unknown key(s) ['colour'] in [volcano]" in capsys.readouterr().err


def test_couple_runs_on_the_demo_archive_with_its_defaults(demo_archive, capsys):
    rc = run(["couple", str(demo_archive.root), "--gas", "gas_flux.so2_flux.VLM-N", "--magma",
              "extrusion_rate.extrusion_rate.VLM-CAM", "--variant", "raw", "--surrogates", "200", "--boot", "0",
              "--max-lag", "20D", "--no-granger"])
    out = capsys.readouterr().out
    assert rc == 0 and "positive lag = gas leads" in out


def test_project_files_are_ingested_before_the_run(tmp_path, capsys):
    rows = "".join(f"2024-0{m}-{d:02d}T12:00Z,{100 + d}\n" for m in (1, 2, 3, 4) for d in range(1, 29))
    (tmp_path / "so2.csv").write_text("time,SO2 flux (t/d)\n" + rows)
    proj = tmp_path / "p.toml"
    proj.write_text('[volcano]\nname = "Testberg"\n[[file]]\npath = "so2.csv"\nstation = "TB-1"\n')
    arc = tmp_path / "arc"
    assert run(["weekly", str(arc), "--project", str(proj), "--before", "2024-04-29"]) == 0
    out = capsys.readouterr().out
    assert "so2.csv: 112 rows read, 112 added to gas_flux.so2_flux.TB-1" in out
    assert "SO2 flux at TB-1" in out
    assert run(["weekly", str(arc), "--project", str(proj), "--before", "2024-04-29"]) == 0
    assert "already in the archive" in capsys.readouterr().out
    bad = tmp_path / "bad.toml"
    bad.write_text('[analysis]\nmin_coverage = "0.5"\n')
    assert run(["weekly", str(arc), "--project", str(bad)]) == 2
    assert "min_coverage must be number" in capsys.readouterr().err
    bad.write_text('[[file]]\npath = "so2.csv"\nstaton = "x"\n')
    assert run(["weekly", str(arc), "--project", str(bad)]) == 2
    assert "unknown option(s) ['staton']" in capsys.readouterr().err

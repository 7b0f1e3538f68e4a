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
    (path,) = tmp_path.glob("degas-velmarra-week-20250303-20250309-run*.html")  # run date: today (no midnight race)
    assert f"report: {path}" in out
    assert (tmp_path / "app" / "weekly_review.csv").exists()
    # static figures (issue 13): PNG and SVG per figure and one PDF of them where kaleido and Chromium exist,
    # else one line saying what to install
    from degas.report.appendix import static_export_problem

    problem = static_export_problem()
    if problem:
        assert problem in out
        return
    static = tmp_path / "app" / "static"
    assert (static / "fig-overview.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert b"<svg" in (static / "fig-overview.svg").read_bytes()[:500]
    pdf = (static / "figures.pdf").read_bytes()
    assert pdf[:5] == b"%PDF-" and pdf.count(b"/Type /Page") - pdf.count(b"/Type /Pages") >= 2


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


def test_demo_never_deletes_an_archive_it_did_not_build(tmp_path, capsys):
    from degas.io.base import ReadOptions
    from degas.store import Archive

    real = tmp_path / "real"
    f = tmp_path / "so2.csv"
    f.write_text("time,SO2 flux (t/d)\n2024-01-01T00:00Z,100\n")
    Archive.create(real).ingest_file(f, ReadOptions(station="TB-1"))
    assert run(["demo", "--archive", str(real), "--out", str(tmp_path / "o")]) == 2
    assert "was not built by 'degas demo'" in capsys.readouterr().err
    assert [e.series_id for e in Archive.open(real).entries()] == ["gas_flux.so2_flux.TB-1"]


def test_more_user_mistakes_are_one_line_errors(demo_archive, tmp_path, capsys):
    not_a_dir = tmp_path / "file.txt"
    not_a_dir.write_text("x")
    cases = [
        (["report", str(demo_archive.root), "--before", "2025-03-10", "--out", str(not_a_dir)], "cannot write"),
        (["weekly", str(demo_archive.root), "--before", ""], "cannot read the date"),
    ]
    bad = tmp_path / "p.toml"
    bad.write_text('[series]\ncatalog = "gas_flux.so2_flux.VLM-N"\n')
    cases.append((["weekly", str(demo_archive.root), "--project", str(bad)], "must be seismic_catalog"))
    bad2 = tmp_path / "p2.toml"
    bad2.write_text('[analysis]\nmax_lag = "xx"\n')
    cases.append((["weekly", str(demo_archive.root), "--project", str(bad2)], "not a positive duration"))
    for argv, fragment in cases:
        assert run(argv) == 2, argv
        err = capsys.readouterr().err
        assert fragment in err and "Traceback" not in err, (argv, err)


def test_a_thin_archive_gives_a_report_that_says_what_it_could_not_do(tmp_path, capsys):
    rows = "".join(f"2024-01-{d:02d}T12:00Z,{100 + 3 * d}\n" for d in range(1, 22))
    f = tmp_path / "so2.csv"
    f.write_text("time,SO2 flux (t/d)\n" + rows)
    arc = tmp_path / "arc"
    assert run(["ingest", str(f), "--into", str(arc), "--station", "<b>X&Y</b>"]) == 0
    assert run(["report", str(arc), "--out", str(tmp_path / "out")]) == 0
    (path,) = (tmp_path / "out").glob("*.html")
    html = path.read_text()
    assert "not run" in html and "nan" not in html.split('<section id="summary">')[1].split("</section>")[0]
    assert "<b>X&Y</b>" not in html  # not in the page text nor in the plotly legend (escaped)

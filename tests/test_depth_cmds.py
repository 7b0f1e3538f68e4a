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


def test_phase_window_found_in_any_vents_chronology(tmp_path):
    # review: only the first stored chronology was used; with one chronology per location (issue 11) the
    # phase of the other vent was missed and its window fell back to the padded inclusion dates.
    import pandas as pd

    from degas.depths import depth_context
    from degas.io.base import ReadOptions
    from degas.project import Project

    (tmp_path / "chron.csv").write_text("start,end,activity,location\n"
                                        "2023-01-01,2023-02-01,eruption,east vent\n"
                                        "2023-03-01,2023-09-01,eruption,west vent\n")
    (tmp_path / "mi.csv").write_text("Sample,Phase,Eruption date,Type,H2O (wt%),CO2 (ppm)\n"
                                     "W1,west,2023-06-01,MI,4.0,300\nW2,west,2023-06-01,MI,4.2,350\n")
    arc = Archive.create(tmp_path / "arc")
    arc.ingest_file(tmp_path / "chron.csv", ReadOptions(kind="chronology"))
    arc.ingest_file(tmp_path / "mi.csv", ReadOptions(kind="melt_inclusions"))
    assert len(arc.find(kind="chronology")) == 2
    ctx = depth_context(arc, Project())
    row = ctx.comparison.table.set_index("phase").loc["west"]
    assert (row["start"], row["end"]) == (pd.Timestamp("2023-03-01", tz="UTC"), pd.Timestamp("2023-09-01", tz="UTC"))


def test_budget_sentence_says_whether_a_budget_used_the_draws(tmp_path):
    # review: the section said "the gas budget's observed/expected ratio uses these draws" in a report whose
    # gas budget had not run (no extrusion rate)
    import dataclasses

    from degas.depths import depth_context
    from degas.io.base import ReadOptions
    from degas.project import Project
    from degas.report.depth_section import depth_sentences

    (tmp_path / "mi.csv").write_text("Sample,Phase,Eruption date,Type,H2O (wt%),CO2 (ppm),S (ppm)\n"
                                     + "".join(f"I{i},p,2023-06-01,MI,4.{i},300,250\n" for i in range(4))
                                     + "".join(f"G{i},p,2023-06-01,matrix glass,0.2,,5{i}\n" for i in range(4)))
    arc = Archive.create(tmp_path / "arc")
    arc.ingest_file(tmp_path / "mi.csv", ReadOptions(kind="melt_inclusions"))
    ctx = depth_context(arc, Project())
    last = {k: depth_sentences(ctx, k)[-1] for k in (True, False, None)}
    assert last[True].endswith("the gas budget's observed/expected ratio uses these draws.")
    assert "no gas budget was run here" in last[False]
    assert "a report's gas budget uses these draws" in last[None]
    off = dataclasses.replace(ctx, settings=dataclasses.replace(ctx.settings, budget_from_inclusions=False))
    assert "does not use it" in depth_sentences(off, True)[-1]


def test_negative_depth_ranges_read_cleanly():
    from degas.report.depth_section import _km_range

    assert _km_range(1200.0, 3400.0) == "1.2–3.4"
    assert _km_range(-300.0, 1900.0) == "−0.3 to 1.9"  # not "-0.3–1.9"

"""The ``depths`` command: melt-inclusion storage pressures and depths beside the VT depths, per phase."""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import typer
from rich.table import Table

from degas.cli._app import app, console
from degas.cli._out import jsonable
from degas.errors import DegasError


@app.command("depths")
def depths(
    archive_dir: Path = typer.Argument(..., help="Archive directory holding melt-inclusion analyses."),
    project: Path | None = typer.Option(None, help="Project TOML ([inclusions]: model, temperature, crust density, "
                                                   "vent elevation, hypocentre datum)."),
    model: str | None = typer.Option(None, help="Solubility model instead of the project's (e.g. Liu; an unknown "
                                                "name lists the valid ones)."),
    csv: Path | None = typer.Option(None, "--csv", help="Write the per-inclusion table to this CSV file."),
    json_out: Path | None = typer.Option(None, "--json", help="Write the per-phase table as JSON."),
) -> None:
    """Storage pressure and depth of melt inclusions per phase, beside the located VT depths."""
    from degas.analysis.petrology import check_model
    from degas.depths import depth_context
    from degas.project import Project, load_project
    from degas.report.depth_section import depth_sentences, phase_table
    from degas.store import Archive

    archive = Archive.open(archive_dir)
    proj = load_project(project) if project is not None else Project()
    if model is not None:
        check_model(model)
        proj = dataclasses.replace(proj, inclusions=dataclasses.replace(proj.inclusions, model=model))
    ctx = depth_context(archive, proj, proj.catalog, None)
    if ctx is None:
        raise DegasError(f"{archive_dir}: the archive holds no melt-inclusion analyses (ingest a table with "
                         "--kind melt_inclusions)")
    shown = phase_table(ctx)
    shown.columns = ["phase", "n", "P MPa (5–95 %)", "km b.s.l. (5–95 %)", "VT", "VT km b.s.l. 5/25/50/75/95 %",
                     "overlap", "inside"]
    table = Table(title=f"Storage depth and VT depth per phase ({ctx.series_id})")
    for c in shown.columns:
        table.add_column(str(c))
    for row in shown.itertuples(index=False):
        table.add_row(*(str(v) for v in row))
    console.print(table)
    for s in depth_sentences(ctx):
        console.print(f"- {s}", markup=False)
    for n in (*ctx.notes, *ctx.storage.notes, *ctx.comparison.notes):
        console.print(f"  note: {n}", markup=False)
    if csv is not None:
        ctx.storage.inclusions.to_csv(csv, index=False)
        console.print(f"per-inclusion table: {csv}", markup=False)
    if json_out is not None:
        rows = ctx.comparison.table.to_dict(orient="records")
        json_out.write_text(json.dumps(jsonable(rows), indent=2) + "\n", encoding="utf-8")
        console.print(f"per-phase table: {json_out}", markup=False)

"""The ``forget`` command: undo one ingested file as a new archive generation."""

from __future__ import annotations

from pathlib import Path

import typer

from degas.cli._app import app, console


@app.command("forget")
def forget(
    archive_dir: Path = typer.Argument(..., help="Archive directory."),
    source_file: Path = typer.Argument(..., help="The ingested file (its path, matched by SHA-256, or its name "
                                                 "as 'degas inventory' lists it)."),
) -> None:
    """Remove what one ingested file contributed (a new generation, atomic, listed in the manifest)."""
    from degas.store import Archive
    from degas.store import forget as forget_source

    rep = forget_source(Archive.open(archive_dir), source_file)
    console.print(rep.summary(), markup=False)
    for sid, n in rep.removed.items():
        console.print(f"  {sid}: {n} row(s) removed", markup=False)
    for note in rep.notes:
        console.print(f"  note: {note}", markup=False)

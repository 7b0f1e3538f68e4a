"""``quakes`` on published counts by event class (kind ``event_counts``): rates only, said plainly."""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
from rich.table import Table

from degas.classcounts import ClassCounts
from degas.cli._app import console
from degas.cli._out import jsonable
from degas.errors import DegasError


def counts_from_archive(archive) -> ClassCounts:
    """The counts by class of the station with most rows in ``archive``."""
    from degas.pipeline import _counts_role

    sids = _counts_role(archive.entries())
    return ClassCounts.from_series([archive.load(s) for s in sids])


def counts_from_file(source: Path) -> tuple[ClassCounts, list[str]] | None:
    """Counts by class read from a file, or None when the file is not a counts table."""
    from degas.io import read
    from degas.io.base import ReadOptions

    try:
        result = read(source, ReadOptions())
    except DegasError:
        return None
    recs = [r for r in result.records if r.meta.kind == "event_counts"]
    if not recs:
        return None
    notes = list(result.notes)
    if result.n_rejected:
        notes.append(f"{result.n_rejected} rows of {source.name} rejected while reading")
    return ClassCounts.from_series(recs), notes


def quakes_from_counts(counts: ClassCounts, read_notes: list[str], step: str, classes, csv: Path | None,
                       json_out: Path | None) -> None:
    """Print the rates by class; energy, completeness and b-value need magnitudes, which counts lack."""
    from degas.analysis import seismicity as sz
    from degas.analysis.count_rates import NO_MAGNITUDES

    present = classes or tuple(c for c in counts.classes)
    rates = sz.event_rates(counts, step, classes=present)
    per = rates.counts
    days = rates.step / pd.Timedelta("1D")
    start, end = counts.span
    table = Table(title=f"Seismicity from counts by class, {start:%Y-%m-%d} to {end:%Y-%m-%d}, bins of {step}")
    for col in ("class", "events", "bins counted", "per day", f"peak per {step}"):
        table.add_column(col, justify="left" if col == "class" else "right")
    summary = {}
    for c in (*rates.classes, "total"):
        v = per[c]
        counted = int(v.notna().sum())
        n = int(v.sum(skipna=True)) if counted else None  # no bin counted: unknown, not zero
        rate = n / (counted * days) if counted else float("nan")
        peak = "-" if not counted else str(int(v.max()))
        table.add_row(c, "-" if n is None else str(n), f"{counted}/{len(v)}", "-" if not counted else f"{rate:.3g}",
                      peak)
        summary[c] = {"events": n, "bins_counted": counted, "per_day": rate}
    console.print(table)
    console.print("total: only bins in which every class shown was counted", markup=False)
    console.print(f"energy, completeness and b-value not available: {NO_MAGNITUDES}", markup=False)
    notes = list(dict.fromkeys([*read_notes, *rates.notes]))
    for note in notes:
        console.print(f"  note: {note}", markup=False)
    if csv is not None:
        sz.seismic_metrics(counts, step, classes=present).reset_index().to_csv(csv, index=False)
        console.print(f"wrote {csv}", markup=False)
    if json_out is not None:
        out = {"source": "counts by event class", "start": start, "end": end, "step": step, "classes": summary,
               "energy_j": None, "b_value": None, "b_value_problem": NO_MAGNITUDES, "notes": notes}
        json_out.write_text(json.dumps(jsonable(out), indent=2))
        console.print(f"wrote {json_out}", markup=False)

"""The ``quakes`` command: seismicity summary of a catalogue (rates by class, Mc, b-value, energy)."""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import TYPE_CHECKING

import typer
from rich.table import Table

from degas.cli._app import app, console
from degas.cli._out import jsonable
from degas.errors import DegasError, NotEnoughDataError
from degas.vocabulary import EVENT_CLASSES

if TYPE_CHECKING:  # imported inside the commands: `degas --help` stays free of pandas (issue 12)
    from degas.model import EventCatalog


def _load_catalog(source: Path, series: str | None) -> tuple[EventCatalog, list[str]]:
    """A catalogue from an archive directory or from a catalogue file, plus reading notes."""
    if source.is_dir():
        from degas.store import Archive

        archive = Archive.open(source)
        entries = archive.find(kind="seismic_catalog")
        if not entries and series is None and archive.find(kind="event_counts"):
            from degas.cli.counts_cmds import counts_from_archive

            return counts_from_archive(archive), []
        if series is not None:
            entries = [e for e in entries if e.series_id == series]
        if not entries:
            what = f"series {series!r}" if series else "seismic catalogue"
            raise DegasError(f"{source}: the archive holds no {what}")
        if len(entries) > 1:
            ids = ", ".join(e.series_id for e in entries)
            raise DegasError(f"{source}: the archive holds several seismic catalogues ({ids}); "
                             "choose one with --series")
        return archive.load(entries[0].series_id), []
    from degas.cli.counts_cmds import counts_from_file
    from degas.io import read
    from degas.io.base import ReadOptions
    from degas.model import EventCatalog

    counts = counts_from_file(source)
    if counts is not None:
        return counts
    result = read(source, ReadOptions(kind="seismic_catalog"))
    cats = [r for r in result.records if isinstance(r, EventCatalog)]
    if not cats:
        raise DegasError(f"{source.name}: no seismic catalogue in the file")
    notes = list(result.notes)
    if result.n_rejected:
        notes.append(f"{result.n_rejected} rows of {source.name} rejected while reading")
    return cats[0], notes


def _parse_classes(text: str | None) -> tuple[str, ...] | None:
    if text is None:
        return None
    out = tuple(c.strip() for c in text.split(",") if c.strip())
    bad = [c for c in out if c not in EVENT_CLASSES]
    if bad:
        raise DegasError(f"unknown event class {', '.join(bad)}; valid: {', '.join(EVENT_CLASSES)}")
    return out


def _num(x: float, fmt: str = ".3g") -> str:
    return "-" if x is None or (isinstance(x, float) and not math.isfinite(x)) else format(x, fmt)


@app.command("quakes")
def quakes(
    source: Path = typer.Argument(..., help="Archive directory or a catalogue file (QuakeML, FDSN text, "
                                            "CSV, ...)."),
    series: str | None = typer.Option(None, help="Series id of the catalogue if the archive holds several."),
    project: Path | None = typer.Option(None, "--project", help="Project TOML: catalogue, bin width and b-value "
                                                                "window as in the report."),
    step: str | None = typer.Option(None, help="Bin width for rates and energy, e.g. '1D', '7D', '6h' (default: "
                                               "project, else 1D)."),
    classes: str | None = typer.Option(None, help="Comma-separated classes (default all) for the rates, totals and "
                                                  "energy; the b-value uses these classes except rockfall "
                                                  "(default VT): " + ", ".join(EVENT_CLASSES) + "."),
    mc_method: str = typer.Option("maxc", help="Completeness method: maxc (+0.2) or gft."),
    mc: float | None = typer.Option(None, help="Magnitude of completeness to use instead of estimating it."),
    bin_width: float = typer.Option(0.1, help="Magnitude bin width."),
    b_method: str = typer.Option("utsu", help="b-value estimator: utsu, tinti_mulargia, aki."),
    window_events: int | None = typer.Option(None, help="Events per window for the b-value through time "
                                                        "(default: project, else 500)."),
    min_events: int = typer.Option(50, help="Fewest events above Mc for a b-value."),
    allow_mixed_types: bool | None = typer.Option(None, help="Accept a catalogue mixing magnitude types (default: "
                                                             "yes with --project, as the report; else no)."),
    csv: Path | None = typer.Option(None, "--csv", help="Write the per-bin metrics table to this CSV file."),
    json_out: Path | None = typer.Option(None, "--json", help="Write the summary as JSON."),
) -> None:
    """Seismicity of a catalogue: event rates per class, completeness, b-value ± sigma, energy."""
    import pandas as pd  # here, not at module level: `degas --help` stays free of pandas (issue 12)

    from degas.analysis import seismicity as sz

    if project is not None:
        from degas.project import load_project

        pj = load_project(project)
        series = series or pj.catalog
        step = step or pj.step
        window_events = window_events or pj.b_window_events
        allow_mixed_types = True if allow_mixed_types is None else allow_mixed_types
    step = step or "1D"
    window_events = window_events or 500
    allow_mixed_types = bool(allow_mixed_types)
    catalog, read_notes = _load_catalog(source, series)
    cls = _parse_classes(classes)
    from degas.classcounts import ClassCounts

    if isinstance(catalog, ClassCounts):
        from degas.cli.counts_cmds import quakes_from_counts

        return quakes_from_counts(catalog, read_notes, step, cls, csv, json_out)
    b_cls, b_notes = sz.b_value_classes(catalog, cls)  # VT by default; rockfalls never
    if cls is not None:  # --classes filters the totals and the energy too, not only the rate table
        catalog, sel_notes = sz.select_classes(catalog, cls)
        read_notes = [*read_notes, *sel_notes]
    read_notes = [*read_notes, *(f"b-value: {n}" for n in b_notes)]
    rates = sz.event_rates(catalog, step, classes=cls)
    energy = sz.seismic_energy(catalog, step, classes=cls, allow_mixed_types=allow_mixed_types)
    metrics = sz.seismic_metrics(catalog, step, classes=cls, allow_mixed_types=allow_mixed_types)
    bval = bseries = None
    b_problem = series_problem = None
    try:
        bval = sz.estimate_b_value(catalog, mc=mc, bin_width=bin_width, method=b_method, mc_method=mc_method,
                                   min_events=min_events, classes=b_cls, allow_mixed_types=allow_mixed_types)
    except NotEnoughDataError as exc:
        b_problem = str(exc)
    if bval is not None:
        try:
            bseries = sz.b_value_series(catalog, window=window_events, mc=bval.mc, bin_width=bin_width,
                                        method=b_method, classes=b_cls, allow_mixed_types=allow_mixed_types)
        except NotEnoughDataError as exc:
            series_problem = str(exc)

    days = rates.step / pd.Timedelta("1D")
    start, end = catalog.span
    table = Table(title=f"Seismicity, {len(catalog)} events, {start:%Y-%m-%d} to {end:%Y-%m-%d}, "
                        f"bins of {step}")
    columns = ("class", "events", "per day", f"peak per {step}", "with mag.", "energy (J)", "Benioff (J^0.5)")
    for col in columns:
        table.add_column(col, justify="left" if col == "class" else "right")
    mags = energy.events
    for c in (*rates.classes, "total"):
        n = int(rates.counts[c].sum())
        n_mag = len(mags) if c == "total" else int((mags["event_class"] == c).sum())
        table.add_row(c, str(n), _num(n / (len(rates.counts) * days)), str(int(rates.counts[c].max())),
                      str(n_mag), _num(float(energy.energy_j[c].sum())),
                      _num(float(energy.cumulative_benioff[c].iloc[-1])))
    console.print(table)
    if bval is not None:
        comp = bval.completeness
        how = f"{comp.method}, +{comp.correction:g}" if comp is not None else "given"
        console.print(f"{'+'.join(b_cls)} events: Mc = {bval.mc:g} ({how}); b = {bval.b:.3f} ± {bval.sigma:.3f} "
                      f"(Shi & Bolt), a = {bval.a:.2f}, n = {bval.n}, method {bval.method}", markup=False)
    else:
        console.print(f"b-value not available: {b_problem}", markup=False)
    if bseries is not None:
        f = bseries.frame
        console.print(f"b through time: {len(f)} windows of {bseries.window} events (step {bseries.step}); "
                      f"b from {f['b'].min():.2f} to {f['b'].max():.2f}; last {f['b'].iloc[-1]:.2f} ± "
                      f"{f['sigma'].iloc[-1]:.2f} at {f['time'].iloc[-1]:%Y-%m-%d}", markup=False)
    elif series_problem:
        console.print(f"b through time not available: {series_problem}", markup=False)
    if math.isfinite(energy.total_moment_nm):
        console.print(f"total seismic moment {energy.total_moment_nm:.3g} N·m", markup=False)
    notes = list(dict.fromkeys([*read_notes, *rates.notes, *energy.notes, *(bval.notes if bval else ()),
                                *(bseries.notes if bseries else ())]))
    for note in notes:
        console.print(f"  note: {note}", markup=False)

    if csv is not None:
        metrics.reset_index().to_csv(csv, index=False)
        console.print(f"wrote {csv}", markup=False)
    if json_out is not None:
        summary = {
            "events": len(catalog),
            "start": start, "end": end, "step": step,
            "counts": {c: int(rates.counts[c].sum()) for c in (*rates.classes, "total")},
            "interevent": rates.interevent.reset_index().to_dict(orient="records"),
            "energy_j": float(energy.total_energy_j),
            "moment_nm": energy.total_moment_nm,
            "completeness": None if bval is None or bval.completeness is None
            else bval.completeness.to_frame().iloc[0].to_dict(),
            "b_value": None if bval is None else bval.to_frame().iloc[0].to_dict(),
            "b_value_classes": list(b_cls),
            "b_value_problem": b_problem,
            "b_series": None if bseries is None else bseries.frame.to_dict(orient="records"),
            "notes": notes,
        }
        json_out.write_text(json.dumps(jsonable(summary), indent=2))
        console.print(f"wrote {json_out}", markup=False)

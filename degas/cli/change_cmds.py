"""The ``shifts`` command: change points of archived series (has anything changed, and since when?)."""

from __future__ import annotations

import json
import math
from pathlib import Path

import typer
from rich.table import Table

from degas.cli._app import app, console
from degas.cli._out import jsonable
from degas.errors import DegasError


def _penalty(text: str) -> str | float:
    try:
        return float(text)
    except ValueError:
        return text


def _display_factor(meta) -> tuple[float, str]:
    """Factor from the canonical unit to the display unit of a series, and the unit label."""
    unit, disp = meta.unit, meta.display_unit
    if unit and disp and unit != disp:
        from degas.units import conversion_factor

        try:
            return conversion_factor(unit, disp), disp
        except DegasError:
            return 1.0, unit
    return 1.0, disp or unit or ""


def _num(x, fmt: str = ".3g") -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "-"
    if 100 <= abs(x) < 1e7:
        return f"{x:.0f}"
    return format(x, fmt)


@app.command("shifts")
def shifts(
    archive: Path = typer.Argument(..., help="Archive directory."),
    series: list[str] = typer.Argument(..., help="Series id(s); several ids are segmented jointly "
                                                 "(shared changes)."),
    project: Path | None = typer.Option(None, "--project", help="Project TOML: grid step, minimum segment, "
                                                                "longest gap and penalty as in the report."),
    step: str | None = typer.Option(None, help="Grid step, e.g. '1D', '10min' (default: project, else from the "
                                               "sampling)."),
    min_segment: str | None = typer.Option(None, "--min-segment", help="Shortest segment, e.g. '3D' "
                                                                       "(default: project, else 3 bins)."),
    max_gap: str | None = typer.Option(None, "--max-gap", help="Longest gap bridged; longer gaps split the "
                                                               "signal (default: project, else 5 bins)."),
    penalty: str | None = typer.Option(None, help="bic3, bic, mbic, or a number (per change, in units of σ²; "
                                                  "default: project, else bic3)."),
    method: str = typer.Option("exact", help="exact, pelt, binseg, window, dynp or kernel."),
    transform: str | None = typer.Option(None, help="log, anscombe or identity (default: by kind)."),
    noise: str = typer.Option("auto", help="Noise estimate: auto (autocorrelation-aware) or mad_diff."),
    confidence: float = typer.Option(0.95, help="Level of the change-time and ratio intervals."),
    csv: Path | None = typer.Option(None, "--csv", help="Write the change table to this CSV file."),
    json_out: Path | None = typer.Option(None, "--json", help="Write changes, segments and settings as JSON."),
) -> None:
    """Change points of one series (or several jointly): change times with intervals and level ratios."""
    import pandas as pd  # here, not at module level: `degas --help` stays free of pandas (issue 12)

    from degas.analysis.changepoints import detect_changepoints, format_duration
    from degas.model import TimeSeries
    from degas.store import Archive

    if project is not None:
        from degas.project import load_project

        pj = load_project(project)
        step = step or pj.step
        min_segment = min_segment or pj.min_segment
        max_gap = max_gap or pj.max_gap
        penalty = penalty or str(pj.penalty)
    penalty = penalty or "bic3"
    arc = Archive.open(archive)
    records = []
    for sid in series:
        rec = arc.load(sid)
        if not isinstance(rec, TimeSeries):
            raise DegasError(f"{sid}: is a {type(rec).__name__}, not a time series; change points need a series "
                             "(for a seismic catalogue, build an event-rate series first)")
        records.append(rec)
    if len(records) == 1 and records[0].meta.kind == "erupted_volume":
        _volume_slopes(records[0], csv)  # a cumulative volume changes slope, not level
        return
    res = detect_changepoints(records if len(records) > 1 else records[0], step=step, min_segment=min_segment,
                              max_gap=max_gap, penalty=_penalty(penalty), method=method, transform=transform,
                              noise=noise, confidence=confidence)
    units = {name: _display_factor(r.meta) for name, r in zip(res.columns, records, strict=True)}
    tf = "%Y-%m-%d" if res.step % pd.Timedelta("1D") == pd.Timedelta(0) else "%Y-%m-%d %H:%M"

    title = (f"Change points of {', '.join(series)}: {res.n_changes} found ({res.method}, penalty "
             f"{res.penalty_name} = {res.penalty:.3g} σ², step {format_duration(res.step)}, minimum segment "
             f"{format_duration(res.min_segment)})")
    table = Table(title=title)
    for col in ("change (UTC)", f"{confidence:.0%} range (UTC)", "series", "before", "after", "ratio",
                "ratio range"):
        table.add_column(col)
    for _, r in res.to_frame().iterrows():
        f, u = units[r["series"]]
        table.add_row(f"{r['time']:{tf}}", f"{r['ci_start']:{tf}} - {r['ci_end']:{tf}}",
                      r["series"], f"{_num(r['level_before'] * f)} {u}", f"{_num(r['level_after'] * f)} {u}",
                      f"×{_num(r['ratio'])}", f"{_num(r['ratio_low'])} - {_num(r['ratio_high'])}")
    console.print(table)
    seg_table = Table(title="Segments")
    for col in ("start (UTC)", "end (UTC)", "series", "bins", "level", "spread", "change vs previous"):
        seg_table.add_column(col)
    for _, r in res.segments_frame().iterrows():
        f, u = units[r["series"]]
        rel = "-" if not math.isfinite(r["relative_change"]) else f"{r['relative_change']:+.0%}"
        seg_table.add_row(f"{r['start']:{tf}}", f"{r['end']:{tf}}", r["series"], str(r["count"]),
                          f"{_num(r['level'] * f)} {u}", f"{_num(r['spread'] * f)} {u}", rel)
    console.print(seg_table)
    for note in res.notes:
        console.print(f"note: {note}", markup=False)
    console.print("A retrospective statistical description, not a forecast.", markup=False)

    if csv is not None:
        res.to_frame().to_csv(csv, index=False, date_format="%Y-%m-%dT%H:%M:%SZ")
        console.print(f"wrote {csv}", markup=False)
    if json_out is not None:
        doc = {
            "series": list(series), "columns": list(res.columns), "transforms": list(res.transforms),
            "method": res.method, "cost": res.cost_name, "penalty_name": res.penalty_name,
            "penalty_sigma2": res.penalty, "total_cost": res.cost, "step": res.step, "min_size_bins": res.min_size,
            "min_segment": res.min_segment, "max_gap": res.max_gap, "sigma": list(res.sigma),
            "n_samples": res.n_samples, "confidence": res.confidence, "notes": list(res.notes),
            "changes": res.to_frame().to_dict(orient="records"),
            "segments": res.segments_frame().to_dict(orient="records"),
        }
        json_out.write_text(json.dumps(jsonable(doc), indent=2, ensure_ascii=False))
        console.print(f"wrote {json_out}", markup=False)


def _volume_slopes(rec, csv: Path | None) -> None:
    """Print the changes of output rate of a survey cumulative volume (changes of slope)."""
    from degas.analysis.volume_slopes import detect_slope_changes

    res = detect_slope_changes(rec)
    unit = "m³/s DRE" if res.volume_basis == "dre" else "m³/s (basis bulk)" if res.volume_basis == "bulk" else \
        "m³/s (DRE/bulk basis unknown)"
    table = Table(title=f"Changes of slope of {rec.meta.series_id}: {len(res.change_times)} found (piecewise-linear "
                        f"fit of the cumulative volume; mean output rate per segment)")
    for col in ("start (UTC)", "end (UTC)", "surveys", f"rate ({unit})"):
        table.add_column(col)
    for r in res.segments.itertuples():
        table.add_row(f"{r.start:%Y-%m-%d}", f"{r.end:%Y-%m-%d}", str(r.n_surveys), _num(r.rate_m3_s))
    console.print(table)
    for note in res.notes:
        console.print(f"note: {note}", markup=False)
    if csv is not None:
        res.to_frame().to_csv(csv, index=False, date_format="%Y-%m-%dT%H:%M:%SZ")
        console.print(f"wrote {csv}", markup=False)

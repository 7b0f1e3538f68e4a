"""Commands of the weekly routine: ``weekly`` (the review table and summary) and ``report`` (the HTML)."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import typer
from rich import box
from rich.console import Console
from rich.table import Table

from degas.cli._app import app, console, err_console
from degas.errors import DegasError

if TYPE_CHECKING:  # imported inside the commands: `degas --help` stays free of pandas (issue 12)
    from degas.project import Project
    from degas.store import Archive


def _project(project: Path | None, archive: Archive) -> Project:
    from degas.project import Project, load_project

    if project is not None:
        return load_project(project)
    return Project(volcano=archive.root.resolve().name)


def _run(archive_dir: Path, project: Path | None, before: str | None, start: str | None, end: str | None):
    import pandas as pd

    from degas.pipeline import run_all
    from degas.project import load_project
    from degas.store import Archive

    proj = load_project(project) if project is not None else None
    if proj is not None and proj.files:
        from degas.cli.archive_cmds import ingest_files, project_file_items

        ingest_files(Archive.create(archive_dir), project_file_items(proj), accept_conflicts=False, show_rejects=3)
    archive = Archive.open(archive_dir)
    proj = proj or _project(None, archive)
    if (start or end) and before:
        raise DegasError("give either --before (weekly review) or --start/--end (retrospective), not both")
    mode = "retrospective" if (start or end) else "weekly"

    def _ts(x):
        if x is None:
            return None
        try:
            t = pd.Timestamp(x)
        except ValueError:
            raise DegasError(f"cannot read the date {x!r}; use YYYY-MM-DD") from None
        if pd.isna(t):
            raise DegasError(f"cannot read the date {x!r}; use YYYY-MM-DD")
        return t.tz_localize("UTC") if t.tzinfo is None else t.tz_convert("UTC")

    end_ts = _ts(end)
    if end_ts is not None:
        end_ts = end_ts.floor("D") + pd.Timedelta("1D")  # --end names the last day; the run's end is exclusive
    with err_console.status("running the analyses") as status:
        bundle = run_all(archive, proj, mode=mode, before=_ts(before), start=_ts(start), end=end_ts,
                         progress=lambda name: status.update(f"running: {name}"))
    return bundle


def print_brief(bundle) -> None:
    """The one-screen brief in the terminal: rows by what matters, thresholds crossed, the regime."""
    import numpy as np
    import pandas as pd

    from degas.report.brief import THRESHOLD_NOTE, brief_rows, regime_line

    rows = brief_rows(bundle)
    per = bundle.periods
    t = Table(title=f"Brief: week {per.window_start:%Y-%m-%d} to {(per.window_end - pd.Timedelta('1D')):%Y-%m-%d} "
                    f"(last day included)", box=box.SIMPLE_HEAD)
    for c in ("series", "unit", "weeks (oldest → this)", "this week", "last week", "baseline", "× baseline (95 %)",
              "coverage", "threshold"):
        t.add_column(c, no_wrap=True)

    def g(x) -> str:
        return "-" if x is None or not np.isfinite(x) else (f"{x:,.0f}" if abs(x) >= 1000 else f"{x:.3g}")

    for r in rows:
        ci = f" ({g(r.ratio_low)}-{g(r.ratio_high)})" if np.isfinite(r.ratio_low) else ""
        t.add_row(r.name, r.unit, " ".join(g(v) for v in r.weeks["value"]), g(r.now), g(r.last), g(r.baseline),
                  ("-" if not np.isfinite(r.ratio) else f"{g(r.ratio)}{ci}"),
                  "-" if r.coverage is None else f"{r.coverage:.0%}", "CROSSED" if r.crossed else "")
    out = Console(width=max(console.width, 150), highlight=False)
    out.print(t)
    out.print(regime_line(bundle), markup=False)
    for r in rows:
        for c in r.crossed:
            out.print(f"threshold crossed: {r.name}: {c}", markup=False)
    if not bundle.project.thresholds:
        out.print("no working thresholds in the project file ([thresholds])", markup=False)
    out.print(THRESHOLD_NOTE, markup=False)


def print_summary(bundle) -> None:
    from degas.report.summary import summarise

    for s in summarise(bundle):
        console.print(f"- {s.text}", markup=False)


@app.command("weekly")
def weekly(
    archive_dir: Path = typer.Argument(..., help="Archive directory."),
    project: Path | None = typer.Option(None, help="Project TOML of the volcano (series, thresholds, petrology)."),
    before: str | None = typer.Option(None, help="Review the last complete 7 UTC days before this date "
                                                 "(default: after the newest datum)."),
    csv: Path | None = typer.Option(None, "--csv", help="Write the review table to CSV."),
) -> None:
    """The Monday review: each series' week against its 90-day baseline, seismic rates, and a summary."""
    import numpy as np
    import pandas as pd

    from degas.safecsv import protect_frame

    bundle = _run(archive_dir, project, before, None, None)
    print_brief(bundle)
    per = bundle.periods
    t = Table(title=f"Week {per.window_start:%Y-%m-%d} to {(per.window_end - pd.Timedelta('1D')):%Y-%m-%d} vs "
                    f"{per.baseline_days:.0f}-day baseline", box=box.SIMPLE_HEAD)
    for c in ("series", "unit", "week", "baseline", "ratio (95 %)", "robust z", "trend/day", "MK p", "of 24 h"):
        t.add_column(c, no_wrap=True)
    from degas.analysis.weekly import ROLE_OF_KIND as role
    from degas.analysis.weekly import ROLE_ORDER

    rows = sorted((r.to_row() for r in bundle.review),
                  key=lambda r: (ROLE_ORDER.index(role.get(r["kind"], "other")), r["series"]))

    def f(x, spec: str) -> str:
        if x is None or not np.isfinite(x):
            return "-"
        return f"{x:,.0f}" if spec == ".3g" and abs(x) >= 1000 else format(x, spec)

    for r in rows:
        ratio = "-" if not np.isfinite(r["ratio"]) else (
            f"{r['ratio']:.2f} ({f(r['ratio_low'], '.2f')}-{f(r['ratio_high'], '.2f')})"
            if np.isfinite(r["ratio_low"]) else f"{r['ratio']:.2f} (per sample)")
        t.add_row(r["series"], r["unit"], f(r["level_window"], ".3g"), f(r["level_baseline"], ".3g"), ratio,
                  f(r["robust_z"], ".2f"), f(r["trend_per_day"], "+.3g"), f(r["mann_kendall_p"], ".2f"),
                  f(r["coverage_window"], ".0%"))
    Console(width=max(console.width, 150), highlight=False).print(t)
    print_summary(bundle)
    if csv is not None:
        protect_frame(pd.DataFrame(rows)).to_csv(csv, index=False)
        console.print(f"wrote {csv}", markup=False)


@app.command("report")
def report(
    archive_dir: Path = typer.Argument(..., help="Archive directory."),
    project: Path | None = typer.Option(None, help="Project TOML of the volcano."),
    before: str | None = typer.Option(None, help="Weekly review of the 7 days before this date (default)."),
    start: str | None = typer.Option(None, help="Retrospective: first day of the episode."),
    end: str | None = typer.Option(None, help="Retrospective: last day of the episode."),
    out: Path = typer.Option(Path("reports"), help="Folder for the HTML report."),
    appendix: Path | None = typer.Option(None, help="Also write tables (CSV, Markdown, LaTeX) and figures here."),
    static: bool = typer.Option(True, "--static/--no-static", help="With --appendix: also PNG/SVG figures and one "
                                                                   "PDF of them (needs the [static] extra and a "
                                                                   "system Chromium)."),
) -> None:
    """Write the self-contained HTML report (weekly review, or a retrospective with --start/--end)."""
    from degas.report import write_report

    bundle = _run(archive_dir, project, before, start, end)
    messages: list[str] = []
    path = write_report(bundle, out, appendix, messages, static=static)
    if bundle.mode == "weekly":
        print_brief(bundle)
    print_summary(bundle)
    for m in messages:
        console.print(m, markup=False)
    console.print(f"report: {path}", markup=False)
    if appendix is not None:
        console.print(f"appendix: {appendix}", markup=False)

"""Commands that build and list the archive: ingest, inventory, demo."""

from __future__ import annotations

import json
import shutil
from pathlib import Path
from typing import TYPE_CHECKING

import typer
from rich import box
from rich.console import Console
from rich.table import Table

from degas.cli._app import app, console, err_console, one_line, os_error_line
from degas.errors import DegasError

if TYPE_CHECKING:  # imported inside the commands: `degas --help` stays free of pandas (issue 12)
    from rich.progress import Progress

    from degas.io.base import ReadOptions
    from degas.store import Archive, FileReport


def _progress() -> Progress:
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    return Progress(TextColumn("{task.description}"), BarColumn(), TextColumn("{task.completed}/{task.total}"),
                    TimeElapsedColumn(), console=err_console, transient=True,
                    disable=not err_console.is_terminal)  # no stray blank line on a redirected stderr


def _print_report(rep: FileReport, show_rejects: int) -> None:
    console.print(rep.summary(), markup=False)
    for note in rep.notes:
        console.print(f"  note: {note}", markup=False)
    if rep.rejects is not None and len(rep.rejects) and show_rejects:
        for row in rep.rejects.head(show_rejects).itertuples(index=False):
            where = f"{row.file}:{row.line}" if row.line is not None and str(row.line) != "nan" else f"{row.file}"
            col = f" [{row.column}]" if isinstance(row.column, str) and row.column else ""
            console.print(f"  rejected {where}{col}: {row.reason}", markup=False)
        if len(rep.rejects) > show_rejects:
            console.print(f"  ... {len(rep.rejects) - show_rejects} more rejected rows (see the archive's rejects/)",
                          markup=False)


def ingest_files(archive: Archive, items: list[tuple[Path, ReadOptions, str | None]], *, accept_conflicts: bool,
                 show_rejects: int) -> list[FileReport]:
    """Ingest several files one transaction each, with a progress bar; print a line per file."""
    reports = []
    with _progress() as bar:
        task = bar.add_task("ingesting", total=len(items))
        for path, options, fmt in items:
            bar.update(task, description=f"ingesting {path.name}")
            rep = archive.ingest_file(path, options, format=fmt, accept_conflicts=accept_conflicts)
            reports.append(rep)
            bar.advance(task)
            _print_report(rep, show_rejects)
    return reports


@app.command("ingest")
def ingest(
    files: list[Path] | None = typer.Argument(None, help="Files to ingest (CSV/TSV/semicolon text, .xlsx, .xls, "
                                                         "Parquet, QuakeML, FDSN event text); with --project and "
                                                         "no files: the project's [[file]] list."),
    into: Path = typer.Option(..., "--into", help="Archive directory (created when missing)."),
    kind: str | None = typer.Option(None, help="gas_flux, gas_ratio, extrusion_rate, erupted_volume, chronology, "
                                               "seismic_catalog, event_counts, amplitude, other (default: "
                                               "detect)."),
    species: str | None = typer.Option(None, help="Gas species when the header does not say (SO2, CO2, H2S)."),
    station: str | None = typer.Option(None, help="Station / instrument id when the file has no station column."),
    mapping: Path | None = typer.Option(None, "--map", help="TOML mapping file (columns, units, options)."),
    time_col: str | None = typer.Option(None, help="Header of the time column."),
    value_col: str | None = typer.Option(None, help="Header of the value column."),
    unit: str | None = typer.Option(None, help="Unit of the value column, e.g. 't/d', 'kg/s', 'm3/s'."),
    tz: str | None = typer.Option(None, "--tz", help="Time zone of naive timestamps (default: UTC, recorded)."),
    dayfirst: bool = typer.Option(False, help="Read 03/04/2024 as 3 April."),
    time_format: str | None = typer.Option(None, help="iso, excel, decimal_year, unix, datenum (MATLAB) or a strftime "
                                                           "pattern."),
    vesicularity: float | None = typer.Option(None, help="Void fraction (0-1) for bulk -> DRE volumes."),
    bulk_density: float | None = typer.Option(None, help="Bulk density (kg/m³) for bulk -> DRE volumes."),
    dense_density: float | None = typer.Option(None, help="Dense-rock density (kg/m³) for bulk -> DRE volumes."),
    allow_negative: bool = typer.Option(False, help="Keep negative fluxes/rates instead of rejecting them."),
    accept_conflicts: bool = typer.Option(False, help="Let new values replace conflicting stored ones."),
    fmt: str | None = typer.Option(None, "--format", help="Force a reader (see 'degas formats')."),
    show_rejects: int = typer.Option(5, help="How many rejected rows to print per file."),
    sheet: str | None = typer.Option(None, help="Workbook sheet: a name, a number (1 = first) or 'all' to stack "
                                                "sheets of one layout (default: the first, with a note)."),
    time_origin: str | None = typer.Option(None, help="Origin date of numeric times counted in --time-unit, "
                                                      "e.g. 1995-01-01."),
    time_unit: str | None = typer.Option(None, help="Unit of numeric times from --time-origin: D (days), h, s."),
    accept_approximate_dates: bool = typer.Option(False, help="Keep dates like 'c. 1910' or '1830s' with a "
                                                              "precision flag instead of rejecting them."),
    depth_positive: str | None = typer.Option(None, help="Catalogue depths positive 'down' (below the datum, "
                                                         "default) or 'up' (height above it)."),
    lock_timeout: float = typer.Option(60.0, "--lock-timeout", min=0.0, max=86400.0,
                                       help="Seconds to wait while another process writes to the archive."),
    project: Path | None = typer.Option(None, "--project", help="Project TOML: a file named in its [[file]] list "
                                                                "is read with that entry's options (options given "
                                                                "here still apply on top)."),
) -> None:
    """Read monitoring exports into the archive (UTC, SI units, provenance); report every rejected row."""
    from degas.io.base import ReadOptions
    from degas.io.mapping import load_mapping, merge_options, options_from_dict
    from degas.store import Archive

    base = load_mapping(mapping) if mapping else ReadOptions()
    if kind is not None:
        options_from_dict({"kind": kind}, "--kind")  # validates the name before anything is read
    columns = {k: v for k, v in (("time", time_col), ("value", value_col)) if v}
    given = dict(
        kind=kind, species=species, station=station, columns=columns, units={"value": unit} if unit else None,
        timezone=tz, dayfirst=dayfirst or None, time_format=time_format, vesicularity=vesicularity,
        bulk_density=bulk_density, dense_density=dense_density, allow_negative=allow_negative or None,
        **_extra_options(sheet, time_origin, time_unit, accept_approximate_dates, depth_positive),
    )
    listed = {}
    if project is not None:
        from degas.project import load_project

        listed = {p.name: (o, f) for p, o, f in project_file_items(load_project(project))}
    if not files:
        if not listed:
            raise typer.BadParameter("give the files to ingest, or --project with a [[file]] list")
        files = [p for p, _, _ in project_file_items(load_project(project))]
    items = []
    for f in files:
        pbase, pfmt = listed.get(f.name, (None, None))
        if pbase is not None:
            console.print(f"{f.name}: reader options from the project's [[file]] entry", markup=False)
        items.append((f, merge_options(base if pbase is None else pbase, **given), fmt or pfmt))
    archive = Archive.create(into, lock_timeout=lock_timeout)
    failed = 0
    for item in items:
        try:
            ingest_files(archive, [item], accept_conflicts=accept_conflicts, show_rejects=show_rejects)
        except DegasError as exc:
            failed += 1
            err_console.print(f"degas: error: {one_line(str(exc), 2000)}", markup=False)
        except OSError as exc:
            failed += 1
            err_console.print(f"degas: error: {os_error_line(exc)}", markup=False)
    if failed:
        if len(files) > 1:  # one file: its error line says it all (one line on stderr)
            err_console.print(f"degas: {failed} of {len(files)} file(s) not ingested; the archive keeps everything "
                              "stored before", markup=False)
        raise typer.Exit(2)


def project_file_items(proj) -> list[tuple[Path, ReadOptions, str | None]]:
    """The project's [[file]] entries as (path, reader options, format) for ingest_files."""
    from degas.io.mapping import options_from_dict

    items = []
    for i, f in enumerate(proj.files):
        entry = dict(f)
        path = Path(entry.pop("path"))
        fmt = entry.pop("format", None)
        items.append((path, options_from_dict(entry, f"project [[file]] #{i + 1}"), fmt))
    return items


def _extra_options(sheet, time_origin, time_unit, accept_approximate_dates, depth_positive) -> dict:
    """Validated values of the workbook, time-base, date-precision and depth options (None = not given).

    Each error names the command-line option (``--time-origin``), never the Python argument.
    """
    checked = (("--time-origin", "time_origin", time_origin), ("--time-unit", "time_unit", time_unit),
               ("--depth-positive", "depth_positive", depth_positive))
    if any(v is not None for _, _, v in checked):
        from degas.io.mapping import option_problem

        for flag, key, value in checked:
            problem = None if value is None else option_problem(key, value)
            if problem:
                raise typer.BadParameter(f"{flag} {problem}")
    if (time_origin is None) != (time_unit is None):
        raise typer.BadParameter("--time-origin and --time-unit go together")
    return {"sheet": sheet, "time_origin": time_origin, "time_unit": time_unit,
            "accept_approximate_dates": accept_approximate_dates or None, "depth_positive": depth_positive}


@app.command("inventory")
def inventory(
    archive_dir: Path = typer.Argument(..., help="Archive directory."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
    project: Path | None = typer.Option(None, "--project", help="Project TOML: also say which stored series the "
                                                                "report and the analysis commands use as gas, "
                                                                "magma output, ratio and catalogue."),
) -> None:
    """List every stored series: kind, quantity, station, time span, count, largest gap, units, sources."""
    from degas.store import Archive

    archive = Archive.open(archive_dir)
    print_inventory(archive, as_json=as_json)
    if project is not None and not as_json:
        from degas.pipeline import choose_roles
        from degas.project import load_project

        roles = choose_roles(archive, load_project(project))
        for role in ("gas", "magma", "ratio", "catalog"):
            val = roles.get(role)
            shown = ", ".join(val) if isinstance(val, list | tuple) else (val or "(none)")
            console.print(f"project {role}: {shown}", markup=False)


def print_inventory(archive: Archive, *, as_json: bool = False) -> None:
    from degas.store import entry_display

    rows = [entry_display(e) for e in archive.entries()]
    if as_json:
        console.print_json(json.dumps(rows))
        return
    table = Table(title=f"degas archive {archive.root}", box=box.SIMPLE_HEAD, pad_edge=False)
    table.add_column("series", no_wrap=True)
    for col in ("from", "to", "count", "gap", "unit"):
        table.add_column(col, no_wrap=True, justify="right" if col in ("count", "gap") else "left")
    table.add_column("sources", overflow="fold")
    for r in rows:
        gap = "" if r["largest_gap_days"] is None else f"{r['largest_gap_days']:.1f} d"
        unit = r["unit"] + (f" {r['basis'].upper()}" if r["basis"] else "")
        table.add_row(r["series"], (r["first"] or "")[:10], (r["last"] or "")[:10], str(r["count"]), gap, unit,
                      ", ".join(r["sources"]))
    Console(width=max(console.width, 150), highlight=False).print(table)
    n_rej = len(archive.rejects())
    console.print(f"{len(rows)} series from {len(archive.sources())} file(s); {n_rej} rejected row(s) on record",
                  markup=False)


@app.command("formats")
def formats() -> None:
    """List the readers degas has, in detection order."""
    from degas.io import FORMATS

    for f in FORMATS:
        console.print(f"{f.name:28s} {', '.join(f.kinds)}", markup=False)
    from degas.io.options_doc import options_lines

    console.print("\ningest options for real exports (CLI flag, mapping-file key, meaning):", markup=False)
    for line in options_lines():
        console.print(line, markup=False, soft_wrap=True)


DEMO_MARKER = ".degas-demo"


def demo_source_dir() -> Path:
    """demo_series/ of the working directory or the repository; generated on the fly when missing."""
    for cand in (Path.cwd() / "demo_series", Path(__file__).resolve().parents[2] / "demo_series"):
        if (cand / "demo_ingest.toml").exists():
            return cand
    from degas.demo import write_demo

    out = Path.cwd() / "demo_series"
    write_demo(out)
    return out


def build_demo_archive(src: Path, archive_dir: Path) -> Archive:
    """A fresh archive from the demo files, with the per-file options of demo_ingest.toml."""
    if archive_dir.exists():
        if not archive_dir.is_dir():
            raise DegasError(f"{archive_dir}: is a file, not a directory; choose another --archive")
        if (archive_dir / DEMO_MARKER).exists():
            shutil.rmtree(archive_dir)  # only an archive that an earlier demo built is rebuilt
        elif any(archive_dir.iterdir()):
            raise DegasError(f"{archive_dir}: exists and was not built by 'degas demo'; it is left untouched "
                             "(choose another --archive)")
    from degas.io.mapping import load_toml, options_from_dict
    from degas.store import Archive

    plan = load_toml(src / "demo_ingest.toml").get("file", [])
    items = []
    for i, entry in enumerate(plan):
        entry = dict(entry)
        path = src / entry.pop("path")
        fmt = entry.pop("format", None)
        items.append((path, options_from_dict(entry, f"demo_ingest.toml file #{i + 1}"), fmt))
    archive = Archive.create(archive_dir)
    (archive_dir / DEMO_MARKER).write_text("built by 'degas demo' from the invented demo series; safe to rebuild\n")
    ingest_files(archive, items, accept_conflicts=False, show_rejects=0)
    return archive


@app.command("demo")
def demo(
    archive_dir: Path = typer.Option(Path("reports/demo-archive"), "--archive", help="Where to build the archive."),
    out: Path = typer.Option(Path("reports"), help="Folder for the report."),
    appendix: Path | None = typer.Option(None, help="Also write the appendix tables and figures here."),
) -> None:
    """The main job on the bundled invented volcano: ingest demo_series/, run every analysis, write the report."""
    from degas.pipeline import run_all
    from degas.project import load_project
    from degas.report import write_report

    src = demo_source_dir()
    console.print(f"demo data: {src}", markup=False)
    archive = build_demo_archive(src, archive_dir)
    print_inventory(archive)
    project = load_project(src / "velmarra.toml")
    with err_console.status("running the analyses") as status:
        bundle = run_all(archive, project, mode="retrospective",
                         progress=lambda name: status.update(f"running: {name}"))
    path = write_report(bundle, out, appendix)
    from degas.cli.report_cmds import print_summary

    print_summary(bundle)
    console.print(f"report: {path}", markup=False)


from degas.cli import forget_cmds  # noqa: E402,F401  (registers the forget command)

"""The report: one self-contained HTML file from a run's results, plus appendix files.

This package reads results; analysis never imports it. Static images: none are written. plotly's static
export needs kaleido, which drives a Chrome browser of its own at run time, and a second plotting stack
(matplotlib) would duplicate every figure; the appendix gives each figure as a standalone HTML page instead
(sharing one local copy of plotly.js, so it opens offline) and every table as CSV, Markdown and LaTeX.
"""

from __future__ import annotations

import re
from pathlib import Path

import pandas as pd

import degas
from degas.report import figures as F
from degas.report.cautions import STANDING_CAUTIONS
from degas.report.depth_section import add_depth_section
from degas.report.html import Page, esc, table_html
from degas.report.summary import summarise
from degas.report.tables import write_table
from degas.units import KG_S_TO_T_D

DAY = pd.Timedelta("1D")
#: display unit of the levels in the change-point and segment tables, per analysed series
CHANGE_UNITS = {"gas": "t/d", "ratio": "mol/mol"}


def last_day(bundle) -> pd.Timestamp:
    """The last instant the run covers (its end is exclusive)."""
    return bundle.end - pd.Timedelta(1, "ns")


def report_name(bundle) -> str:
    """File name with the volcano, the window or episode, and the run date."""
    vol = re.sub(r"[^A-Za-z0-9]+", "-", bundle.project.volcano).strip("-").lower() or "volcano"
    if bundle.mode == "weekly":
        span = f"week-{bundle.periods.window_start:%Y%m%d}-{(bundle.periods.window_end - DAY):%Y%m%d}"
    else:
        span = f"episode-{bundle.start:%Y%m%d}-{last_day(bundle):%Y%m%d}"
    return f"degas-{vol}-{span}-run{pd.Timestamp(bundle.run_time):%Y%m%d}.html"


def tables(bundle) -> dict[str, pd.DataFrame]:
    """Every appendix table, in display units where a column says so."""
    out: dict[str, pd.DataFrame] = {}
    cps, segs = [], []
    for name, cp in bundle.changepoints.items():
        ch = cp.to_frame().assign(series=name)
        seg = cp.segments_frame().assign(series=name)
        if name == "gas":
            for c in ("level_before", "level_after"):
                ch[c] = ch[c] * KG_S_TO_T_D
            seg["level"] = seg["level"] * KG_S_TO_T_D
            seg["spread"] = seg["spread"] * KG_S_TO_T_D
        unit = CHANGE_UNITS.get(name, "")
        if name == "lp_hybrid_rate":
            unit = "events per day" if pd.Timedelta(bundle.project.step) == DAY else f"events per {bundle.project.step}"
        if name == "magma":
            unit = "m³/s DRE" if bundle.aligned.kinds.get("magma") == "extrusion_rate" else "eruptive fraction"
        cps.append(ch.assign(unit=unit))
        segs.append(seg.assign(unit=unit))
    if cps:
        out["change_points"] = pd.concat(cps, ignore_index=True)
        out["segments"] = pd.concat(segs, ignore_index=True)
    lag_rows = []
    if bundle.xcorr is not None:
        lag_rows.append({"interval": "whole record", **bundle.xcorr.summary()})
    for s, e, label, res in bundle.xcorr_intervals:
        lag_rows.append({"interval": f"{s:%Y-%m-%d} to {e:%Y-%m-%d} ({label})", **res.summary()})
    if lag_rows:
        out["lag_results"] = pd.DataFrame(lag_rows)
    if bundle.regimes is not None:
        out["regimes"] = bundle.regimes.to_frame()
    if getattr(bundle, "volume_slopes", None) is not None:
        out["volume_slope_changes"] = bundle.volume_slopes.to_frame()
    if bundle.budget is not None:
        out["budget"] = bundle.budget.to_frame()
    if bundle.review:
        out["weekly_review"] = pd.DataFrame([r.to_row() for r in bundle.review])
    if bundle.review_events:
        out["weekly_event_rates"] = pd.DataFrame([r.__dict__ for r in bundle.review_events])
    if "catalog" in bundle.records:
        from degas.analysis.seismicity import seismic_metrics

        out["seismic_metrics"] = seismic_metrics(bundle.records["catalog"], bundle.project.step,
                                                 allow_mixed_types=True).reset_index()
    return out


def build_figures(bundle) -> dict[str, tuple[object, str]]:
    """Figure id -> (plotly figure, caption)."""
    figs: dict[str, tuple[object, str]] = {"fig-overview": (F.overview_figure(bundle), "All series share the time "
                                           "axis. Scan-level points are reduced for display only (min-max per "
                                           "pixel bin); every analysis used the full data.")}
    from degas.report.relation_figure import relation_scatter

    rel_fig = relation_scatter(bundle)
    if rel_fig is not None:
        figs["fig-relation"] = (rel_fig, "Each point is a day: SO2 flux against the magma output at the relation's "
                                         "lag, coloured by regime; the line is the fitted relation gas = g0 + k·Q.")
    if bundle.xcorr is not None:
        figs["fig-xcorr"] = (F.xcorr_figure(bundle.xcorr), "Correlation of SO2 flux with magma output at each lag; "
                             "positive lag: gas changes first. Grey band: white-noise 95 % band; the surrogate "
                             "p-value accounts for searching over all lags.")
    for i, (s, e, _label, res) in enumerate(bundle.xcorr_intervals):
        figs[f"fig-xcorr-{i + 1}"] = (F.xcorr_figure(res, f"Lagged cross-correlation, coupled interval "
                                                           f"{s:%Y-%m-%d} to {e:%Y-%m-%d}"), "")
    if bundle.rolling is not None:
        figs["fig-rolling"] = (F.rolling_figure(bundle.rolling), "Coupling through time; grey markers: windows "
                               "whose peak is not significant against surrogates.")
    if bundle.budget is not None:
        figs["fig-budget"] = (F.budget_figure(bundle.budget), "")
        if bundle.budget.petrology is not None:
            figs["fig-excess"] = (F.excess_figure(bundle.budget), "Above 1: more SO2 than the erupted melt can "
                                  "supply (un-erupted magma or pre-existing vapour); below 1: less (gas retained).")
    if "fmd" in bundle.seismic:
        figs["fig-fmd"] = (F.fmd_figure(bundle.seismic["fmd"], bundle.seismic.get("b_value")), "")
    if "b_series" in bundle.seismic:
        figs["fig-bseries"] = (F.bseries_figure(bundle.seismic["b_series"]), "")
    return figs


def _methods(bundle) -> str:
    p = bundle.project.parameters()
    prm = pd.DataFrame({"parameter": list(p), "value": [str(v) for v in p.values()]})
    src = pd.DataFrame([{"file": v["name"], "sha256": k, "reader": v.get("reader"), "ingested": v.get("ingested_at"),
                         "rows accepted": v.get("accepted"), "rows rejected": v.get("rejected")}
                        for k, v in bundle.sources.items()])
    roles = {k: (", ".join(v) if isinstance(v, tuple) else v) for k, v in bundle.roles.items()}
    lines = [
        f"<p>degas {esc(degas.__version__)}; run at {esc(bundle.run_time)} UTC on archive "
        f"<code>{esc(bundle.archive_root)}</code>; mode {esc(bundle.mode)}; data {esc(f'{bundle.start:%Y-%m-%d}')} to "
        f"{esc(f'{last_day(bundle):%Y-%m-%d}')} (last day included).</p>",
        "<p>Internally every value is SI (gas flux kg/s, extrusion m³/s DRE) and every time UTC; the report shows t/d "
        "and m³/s. Positive lags mean gas leads magma output. Change points: exact penalised least-squares "
        "segmentation (Killick, Fearnhead &amp; Eckley 2012 optimum) on log SO2, on extrusion rate and on "
        "Anscombe-transformed LP+hybrid counts. Cross-correlation after the stated variant, with phase-randomised "
        "surrogates (Theiler et al. 1992) for the lag-search p-value and a moving-block bootstrap for the lag "
        "interval. Granger tests via statsmodels. Petrological SO2 after Devine, Sigurdsson &amp; Davis (1984). "
        "b-value by Aki (1965) with the Utsu (1966) binning correction and Shi &amp; Bolt (1982) uncertainty; Mc by "
        "maximum curvature + 0.2 (Wiemer &amp; Wyss 2000; Woessner &amp; Wiemer 2005). Seismic energy from "
        "log10 E = 1.5 M + 4.8 (Gutenberg &amp; Richter 1956, approximate).</p>",
        "<p>Coupling: SO2 = g0 + k·output(t + τ) fitted by Huber regression (Huber 1964) on the days of the pieces "
        "consistent with one relation, intervals from a moving-block bootstrap (Künsch 1989); gas and output "
        "segmented jointly, each piece labelled against the relation's prediction band; τ from a profile "
        "least-squares fit of the relation inside the coupled stretches, one intercept per stretch; survey "
        "volumes segmented by changes of slope.</p>",
        "<h3>Cautions</h3><ul>" + "".join(f"<li>{esc(c)}</li>" for c in STANDING_CAUTIONS) + "</ul>",
        "<h3>Series used</h3>" + table_html(pd.DataFrame({"role": list(roles), "series": [str(v) for v in
                                                                                      roles.values()]})),
        "<h3>Parameters</h3>" + table_html(prm),
        "<h3>Input files</h3>" + table_html(src),
        "<h3>Assumptions recorded at ingest</h3><ul>" + "".join(f"<li>{esc(a)}</li>" for a in bundle.assumptions)
        + "</ul>",
        "<h3>Archive inventory</h3>" + table_html(pd.DataFrame([{k: (", ".join(v) if isinstance(v, list) else v)
                                                                  for k, v in r.items()} for r in bundle.inventory])),
        "<h3>Run steps</h3>" + table_html(pd.DataFrame(bundle.timings, columns=["step", "seconds"])),
    ]
    return "".join(lines)


def _notes_html(bundle) -> list[str]:
    notes = list(bundle.notes) + list(bundle.skipped)
    for obj in (bundle.aligned, bundle.regimes, bundle.xcorr, bundle.rolling, bundle.granger, bundle.budget):
        notes += list(getattr(obj, "notes", ()) or ())
    for name, cp in bundle.changepoints.items():
        notes += [f"{name}: {n}" for n in cp.notes]
    return list(dict.fromkeys(notes))


def render_report(bundle) -> tuple[str, dict]:
    """The HTML of the report and its figures (id -> (figure, caption))."""
    per = bundle.periods
    if bundle.mode == "weekly":
        sub = (f"Weekly review {per.window_start:%Y-%m-%d} to {(per.window_end - DAY):%Y-%m-%d} against the "
               f"{per.baseline_days:.0f} days before")
    else:
        sub = f"Retrospective of {bundle.start:%Y-%m-%d} to {last_day(bundle):%Y-%m-%d}"
    obs = f" · {bundle.project.observatory}" if bundle.project.observatory else ""
    page = Page(title=f"{bundle.project.volcano}: is gas tracking magma output?", subtitle=sub + obs)
    sentences = summarise(bundle)
    page.add("summary", "Summary", '<ul class="summary">' + "".join(
        f'<li data-key="{esc(s.key)}">{esc(s.text)}</li>' for s in sentences) + "</ul>")
    figs = build_figures(bundle)
    order = [("fig-overview", "series", "Monitoring series"), ("fig-relation", "relation", "Gas against magma output")]
    order += [(k, "lag", "Lag between gas and magma output") for k in figs if k.startswith("fig-xcorr")]
    order += [("fig-rolling", "rolling", "Coupling through time"), ("fig-budget", "budget", "Gas budget"),
              ("fig-excess", "budget", "Gas budget"), ("fig-fmd", "seismicity", "Seismicity"),
              ("fig-bseries", "seismicity", "Seismicity")]
    sections: dict[str, tuple[str, list[str]]] = {}
    for fid, sid, heading in order:
        if fid in figs:
            fig, cap = figs[fid]
            sections.setdefault(sid, (heading, []))[1].append(page.figure(fig, fid, cap))
    tabs = tables(bundle)
    if "regimes" in tabs:
        r = tabs["regimes"]
        munit = "m³/s DRE" if bundle.regimes.magma_measure == "extrusion_rate" else "eruptive fraction"
        shown = pd.DataFrame({"start": r["start"], "end (exclusive)": r["end"], "days": r["duration_days"],
                              "label": r["label"], "SO2 (t/d)": r["gas_t_d"],
                              "× passive level": r["gas_to_baseline"], f"magma output ({munit})": r["magma_level"],
                              "gas per magma vs coupled": r["ratio_vs_expected"], "evidence": r["evidence"]})
        sections.setdefault("series", ("Monitoring series", []))[1].append(
            "<h3>Regime intervals</h3>" + table_html(shown)
            + '<p class="caption">Every column, with the thresholds used, is in the appendix file regimes.csv.</p>')
    if "change_points" in tabs:
        sections["series"][1].append("<h3>Change points</h3>" + table_html(tabs["change_points"]))
    if "lag_results" in tabs:
        sections.setdefault("lag", ("Lag between gas and magma output", []))[1].append(table_html(tabs["lag_results"]))
    if bundle.granger is not None:
        sections["lag"][1].append("<h3>Granger tests (predictive precedence, not physical causation)</h3>"
                                  + table_html(bundle.granger.to_frame()))
    if "budget" in tabs:
        bt = tabs["budget"]
        shown = pd.DataFrame({"start": bt["start"], "end (exclusive)": bt["end"], "days": bt["duration_days"],
                              "SO2 (kt)": bt["so2_mass_kg"] / 1e6,
                              "± kt (independent / correlated errors)": [
                                  f"{a / 1e6:.3g} / {c / 1e6:.3g}" for a, c in
                                  zip(bt["so2_mass_sd_independent_kg"], bt["so2_mass_sd_correlated_kg"], strict=True)],
                              "DRE (Mm³)": bt["dre_volume_m3"] / 1e6, "kg SO2 per m³": bt["ratio_kg_per_m3"]})
        if "excess_factor" in bt:
            shown["expected SO2 (kt, 95%)"] = [
                "" if pd.isna(e) else f"{e / 1e6:.3g} ({lo / 1e6:.3g}-{hi / 1e6:.3g})" for e, lo, hi in
                zip(bt["expected_so2_kg"], bt["expected_so2_p2_5_kg"], bt["expected_so2_p97_5_kg"], strict=True)]
            shown["observed / expected (95%)"] = [
                "" if pd.isna(e) else f"{e:.2f} ({lo:.2f}-{hi:.2f})" for e, lo, hi in
                zip(bt["excess_factor"], bt["excess_p2_5"], bt["excess_p97_5"], strict=True)]
            shown["finding"] = bt["finding"]
        sections.setdefault("budget", ("Gas budget", []))[1].append(
            table_html(shown) + '<p class="caption">Last row: the whole span. SI values in the appendix file '
            "budget.csv.</p>")
    for sid, (heading, parts) in sections.items():
        page.add(sid, heading, "".join(parts))
    add_depth_section(page, bundle)  # "Storage depth and gas source" (melt inclusions), when the run has them
    rev = []
    if "weekly_review" in tabs:
        wr = tabs["weekly_review"].drop(columns=["notes"])
        wr["window_end"] = wr["window_end"] - DAY
        rev.append(table_html(wr.rename(columns={"window_end": "window_last_day"})))
    if "weekly_event_rates" in tabs:
        rev.append("<h3>Event rates, week against baseline</h3>" + table_html(tabs["weekly_event_rates"]))
    if rev:
        page.add("review", "Weekly review table", "".join(rev))
    notes = _notes_html(bundle)
    page.add("notes", "What the analysis could not do or had to assume",
             "<ul>" + "".join(f"<li>{esc(n)}</li>" for n in notes) + "</ul>")
    page.add("methods", "Methods and provenance", _methods(bundle))
    gaps = [s.text for s in sentences if s.key.startswith("gap:") or s.key == "skipped"]
    digest = [
        f"{len(bundle.assumptions)} assumption(s) were made when the data were read (listed under Methods), e.g.: "
        + "; ".join(bundle.assumptions[:2]) + "." if bundle.assumptions else "",
        "Regime labels and thresholds are this project's defaults, judged against the record's own coupled "
        "intervals; the petrological SO2 is a minimum estimate (Devine et al. 1984); missing days count as zero in "
        "the mass totals, which are therefore lower bounds.",
    ]
    html = page.render(cautions_extra=gaps + [d for d in digest if d])
    return html, figs


def write_report(bundle, out_dir: str | Path = "reports", appendix: str | Path | None = None) -> Path:
    """Write the report (and optionally the appendix) and return the report's path."""
    from degas.errors import DegasError

    out_dir = Path(out_dir)
    html, figs = render_report(bundle)
    path = out_dir / report_name(bundle)
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
        tmp = path.with_name(path.name + ".tmp")
        tmp.write_text(html, encoding="utf-8")
        tmp.replace(path)
        if appendix is not None:
            write_appendix(bundle, Path(appendix), figs)
    except OSError as exc:
        raise DegasError(f"cannot write the report: {exc.strerror or exc}: {exc.filename or out_dir}") from None
    return path


def write_appendix(bundle, directory: Path, figs: dict | None = None) -> list[Path]:
    """Tables as CSV (formula-protected), Markdown and LaTeX; figures as standalone HTML pages."""
    directory.mkdir(parents=True, exist_ok=True)
    paths: list[Path] = []
    for name, df in tables(bundle).items():
        df = df.copy()
        for c in df.columns:
            if pd.api.types.is_timedelta64_dtype(df[c]):
                df[c] = df[c] / DAY
                df = df.rename(columns={c: f"{c}_days"})
        paths += write_table(df, directory, name, caption=f"{bundle.project.volcano}: {name.replace('_', ' ')}")
    figs = figs if figs is not None else build_figures(bundle)
    for fid, (fig, _cap) in figs.items():
        p = directory / f"{fid}.html"
        fig.write_html(p, include_plotlyjs="directory", full_html=True)
        paths.append(p)
    return paths


__all__ = ["render_report", "report_name", "tables", "write_appendix", "write_report"]

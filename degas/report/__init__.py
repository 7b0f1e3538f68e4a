"""The report: one self-contained HTML file from a run's results, plus appendix files.

This package reads results; analysis never imports it. The appendix gives each figure as a standalone HTML page
(sharing one local copy of plotly.js, so it opens offline), every table as CSV, Markdown and LaTeX, print tables in
display units, and - with the optional ``[static]`` extra and a system Chromium - PNG, SVG and one PDF of the
figures (:mod:`degas.report.appendix`). A weekly report opens with the one-screen brief
(:mod:`degas.report.brief`).
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
from degas.safecsv import protect_frame
from degas.units import KG_S_TO_T_D

DAY = pd.Timedelta("1D")
NS = pd.Timedelta(1, "ns")  # an end is exclusive: its last day is the day of end - 1 ns
#: display unit of the levels in the change-point and segment tables, per analysed series
CHANGE_UNITS = {"gas": "t/d", "ratio": "mol/mol"}


def _stations_section(bundle) -> str:
    from degas.report.appendix import stations_table

    t = stations_table(bundle)
    return "" if t.empty else table_html(t)


#: sections after the analysis sections: (id, heading, builder(bundle) -> HTML or "", modes). A new section
#: is one line here.
EXTRA_SECTIONS: list[tuple[str, str, object, tuple[str, ...]]] = [
    ("stations", "Stations and instruments", _stations_section, ("weekly", "retrospective")),
]


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
        lag_rows.append({"interval": f"{s:%Y-%m-%d} to {(e - NS):%Y-%m-%d} ({label})", **res.summary()})
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
    for i, (s, e, _label, res) in enumerate(bundle.xcorr_intervals if bundle.mode != "weekly" else ()):
        figs[f"fig-xcorr-{i + 1}"] = (F.xcorr_figure(res, f"Lagged cross-correlation, coupled interval "
                                                           f"{s:%Y-%m-%d} to {(e - NS):%Y-%m-%d}"), "")
    if bundle.rolling is not None:
        figs["fig-rolling"] = (F.rolling_figure(bundle.rolling), "Coupling through time; grey markers: windows "
                               "whose peak is not significant against surrogates.")
    if bundle.budget is not None:
        figs["fig-budget"] = (F.budget_figure(bundle.budget), "")
        if bundle.budget.petrology is not None:
            figs["fig-excess"] = (F.excess_figure(bundle.budget), "Above 1: more SO2 than the erupted melt can "
                                  "supply (un-erupted magma or pre-existing vapour); below 1: less (gas retained).")
    b_cls = "+".join(bundle.seismic.get("b_classes", ("VT",)))
    if "fmd" in bundle.seismic and bundle.mode != "weekly":
        figs["fig-fmd"] = (F.fmd_figure(bundle.seismic["fmd"], bundle.seismic.get("b_value")),
                           f"{b_cls} events only: rockfalls and other surface events never enter b or Mc.")
    if "b_series" in bundle.seismic:
        figs["fig-bseries"] = (F.bseries_figure(bundle.seismic["b_series"]), f"{b_cls} events only.")
    from degas.report import seismic_figures as SF

    for fid, fig, cap in SF.location_figures(bundle):
        figs[fid] = (fig, cap)
    return figs


def _methods(bundle) -> str:
    p = bundle.project.parameters()
    structured = ("petrology", "thresholds", "capability", "systematic_by_station")
    prm = pd.DataFrame({"parameter": [k for k in p if k not in structured],
                        "value": [", ".join(map(str, v)) if isinstance(v, list | tuple) else str(v)
                                  for k, v in p.items() if k not in structured]})
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
        _project_tables(bundle),
        "<h3>Input files</h3>" + table_html(src),
        "<h3>Assumptions recorded at ingest</h3><ul>" + "".join(f"<li>{esc(a)}</li>" for a in bundle.assumptions)
        + "</ul>",
        "<h3>Archive inventory</h3>" + table_html(pd.DataFrame([{k: (", ".join(v) if isinstance(v, list) else v)
                                                                  for k, v in r.items()} for r in bundle.inventory])),
        "<h3>Run steps</h3>" + table_html(pd.DataFrame(bundle.timings, columns=["step", "seconds"])),
    ]
    return "".join(lines)


def _project_tables(bundle) -> str:
    """Petrological inputs, working thresholds, instrument capability and systematic errors as labelled tables."""
    pr = bundle.project
    out = []
    out.append(_petrology_table(bundle))
    if pr.thresholds:
        out.append("<h3>Working thresholds (the observatory's own, not official alert levels)</h3>" + table_html(
            pd.DataFrame([{"series or role": t.series, "label": t.label, "crossed when": t.describe()}
                          for t in pr.thresholds])))
    sysd = dict(pr.systematic_by_station)
    rows = [{"series": sid, "systematic flux error (1σ)": f"{sysd.get(sid, pr.systematic):.0%}"}
            for sid in bundle.roles.get("gas", ())]
    if rows:
        out.append("<h3>Gas budget: systematic error per station</h3>" + table_html(pd.DataFrame(rows))
                   + f'<p class="caption">Plume speed and geometry, fully correlated within a station; default '
                   f"{pr.systematic:.0%} (common practice). Scans flagged other than "
                   f"{', '.join(pr.good_flags)} are excluded from the budget.</p>")
    if pr.capability:
        out.append("<h3>Instrument capability (coverage is judged against it)</h3>" + table_html(
            pd.DataFrame([{"series": k, "share of 24 h the instrument can cover": f"{v:.0%}"}
                          for k, v in pr.capability])))
    return "".join(out)


def _petrology_table(bundle) -> str:
    """The run's one petrological input (the verdict's and the budget's) with where each value comes from."""
    pr = bundle.project
    run_petro = getattr(bundle, "petrology", None)
    if run_petro is not None and run_petro.origin == "inclusions":
        sp = run_petro.inputs
        analyses = f"{sp.n_mi} inclusion and {sp.n_mg} matrix-glass analyses ({run_petro.series_id})"
        rows = [("S in melt inclusions", f"{sp.s_mi_ppm:.4g}", f"{sp.s_mi_se_ppm:.2g}", "ppm",
                 f"mean of {sp.n_mi} inclusion analyses ({run_petro.series_id}); 1σ: standard error"),
                ("S in matrix glass", f"{sp.s_mg_ppm:.4g}", f"{sp.s_mg_se_ppm:.2g}", "ppm",
                 f"mean of {sp.n_mg} matrix-glass analyses ({run_petro.series_id}); 1σ: standard error"),
                ("DRE density", f"{sp.density_kg_m3:g}", f"{sp.density_sd:g}", "kg/m³", "project [inclusions]"),
                ("crystal volume fraction", f"{sp.crystal_fraction:g}", f"{sp.crystal_fraction_sd:g}", "0-1",
                 "project [inclusions]"),
                ("expected SO2 per m³ DRE (Devine et al. 1984)", f"{sp.so2_per_m3:.4g}",
                 f"{pd.Series(sp.draws_kg_m3).std(ddof=0):.2g}", "kg/m³",
                 f"median of {len(sp.draws_kg_m3)} bootstrap draws over the {analyses}")]
        caption = (f"Source: the S populations of {analyses}, used by the record-level verdict and the gas budget"
                   + ("; the project's typed [petrology] values are not used in this run" if pr.petrology is not None
                      else "") + ".")
    elif pr.petrology is not None:
        pet = pr.petrology
        rows = [("S in melt inclusions", f"{pet.s_melt_inclusion * 1e6:g}", f"{pet.s_melt_inclusion_sd * 1e6:g}",
                 "ppm", "typed [petrology]"),
                ("S in matrix glass", f"{pet.s_matrix_glass * 1e6:g}", f"{pet.s_matrix_glass_sd * 1e6:g}", "ppm",
                 "typed [petrology]"),
                ("DRE density", f"{pet.density_kg_m3:g}", f"{pet.density_sd:g}", "kg/m³", "typed [petrology]"),
                ("crystal volume fraction", f"{pet.crystal_fraction:g}", f"{pet.crystal_fraction_sd:g}", "0-1",
                 "typed [petrology]"),
                ("expected SO2 per m³ DRE (Devine et al. 1984)", f"{pet.so2_per_m3:.4g}", "", "kg/m³",
                 "typed [petrology]")]
        unused = run_petro is not None and run_petro.sulfur is not None
        caption = ("Source: the project's typed [petrology] values, used by the record-level verdict and the gas "
                   "budget" + ("; the archive's inclusion S analyses are not used (budget_from_inclusions = false "
                               "in [inclusions], or no S lost between inclusions and matrix glass)" if unused else "")
                   + ".")
    else:
        return ""
    return ("<h3>Petrological inputs</h3>" + table_html(pd.DataFrame(rows, columns=["input", "value", "1σ", "unit",
                                                                                    "source"]))
            + f'<p class="caption">{esc(caption)}</p>')


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
    if bundle.mode == "weekly" and bundle.periods is not None:
        from degas.report.brief import brief_html
        from degas.report.cautions import SHORT_CAUTION

        page.lead = ('<section id="brief"><h2>This week at a glance</h2>'
                     f'<p class="short-caution">{esc(SHORT_CAUTION)}</p>{brief_html(bundle)}</section>')
    sentences = summarise(bundle)
    page.add("summary", "Summary", '<ul class="summary">' + "".join(
        f'<li data-key="{esc(s.key)}">{esc(s.text)}</li>' for s in sentences) + "</ul>")
    figs = build_figures(bundle)
    order = [("fig-overview", "series", "Monitoring series"), ("fig-relation", "relation", "Gas against magma output")]
    order += [(k, "lag", "Lag between gas and magma output") for k in figs if k.startswith("fig-xcorr")]
    order += [("fig-rolling", "rolling", "Coupling through time"), ("fig-budget", "budget", "Gas budget"),
              ("fig-excess", "budget", "Gas budget"), ("fig-fmd", "seismicity", "Seismicity"),
              ("fig-bseries", "seismicity", "Seismicity"), ("fig-depth-time", "seismicity", "Seismicity"),
              ("fig-epicentres", "seismicity", "Seismicity")]
    sections: dict[str, tuple[str, list[str]]] = {}
    for fid, sid, heading in order:
        if fid in figs:
            fig, cap = figs[fid]
            sections.setdefault(sid, (heading, []))[1].append(page.figure(fig, fid, cap))
    tabs = tables(bundle)
    if "regimes" in tabs:
        r = tabs["regimes"]
        from degas.analysis.relation import MAGMA_UNITS

        rel = getattr(bundle.regimes, "relation", None)
        measure = rel.magma_measure if rel is not None else bundle.regimes.magma_measure
        munit = MAGMA_UNITS.get(measure, "eruptive fraction")
        cols = {"first day": r["start"], "last day": (r["end"] - NS).dt.floor("D"), "days": r["duration_days"],
                "label": r["label"], "SO2 (t/d)": r["gas_t_d"]}
        if "predicted_t_d" in r.columns:  # judged against the gas–magma relation (its prediction and band)
            cols["predicted SO2 (t/d)"] = r["predicted_t_d"]
            cols["band (t/d)"] = [f"{lo:.0f}–{hi:.0f}" for lo, hi in zip(r["band_low_t_d"], r["band_high_t_d"],
                                                                       strict=True)]
        cols.update({"× background g0": r["gas_to_baseline"], f"magma output ({munit})": r["magma_level"],
                     "excess gas per output ÷ k": r["ratio_vs_expected"], "evidence": r["evidence"]})
        shown = pd.DataFrame(cols)
        sections.setdefault("series", ("Monitoring series", []))[1].append(
            "<h3>Regime intervals</h3>" + table_html(shown)
            + '<p class="caption">Every column, with the thresholds used, is in the appendix file regimes.csv.</p>')
    if "change_points" in tabs:
        sections["series"][1].append("<h3>Change points</h3>" + table_html(tabs["change_points"]))
    if "lag_results" in tabs:
        sections.setdefault("lag", ("Lag between gas and magma output", []))[1].append(table_html(tabs["lag_results"]))
    if bundle.granger is not None and bundle.mode != "weekly":
        gr = bundle.granger.to_frame()
        gr = pd.DataFrame({"cause": gr["cause"], "effect": gr["effect"], "lag (days)": gr["lag_s"] / 86400.0,
                           "F": gr["f_stat"], "p": gr["p_value"], "df": [f"{a:.0f}, {b:.0f}" for a, b in
                                                                        zip(gr["df_num"], gr["df_den"], strict=True)],
                           "differenced": gr["differenced"]})
        sections["lag"][1].append("<h3>Granger tests (predictive precedence, not physical causation)</h3>"
                                  + table_html(gr))
    if "budget" in tabs:
        bt = tabs["budget"]
        shown = pd.DataFrame({"first day": bt["start"],
                              "last day": (pd.to_datetime(bt["end"], utc=True) - NS).dt.floor("D"),
                              "SO2 (kt, lower bound)": [f"{m / 1e6:.3g} ± {t / 1e6:.2g} ({c:.0%} of days)" for m, t, c
                                                        in zip(bt["so2_mass_kg"], bt["so2_mass_sd_total_kg"],
                                                               bt["gas_coverage"], strict=True)],
                              "DRE (Mm³)": [f"{v / 1e6:.3g} ± {sd / 1e6:.2g}" for v, sd in
                                            zip(bt["dre_volume_m3"], bt["dre_volume_sd_m3"], strict=True)],
                              "on days with both: SO2 (kt) / DRE (Mm³)": [
                                  f"{a / 1e6:.3g} / {b / 1e6:.3g}" for a, b in
                                  zip(bt["so2_mass_both_kg"], bt["dre_volume_both_m3"], strict=True)],
                              "kg SO2 per m³ (95%)": [
                                  "" if pd.isna(r) else f"{r:.3g} ({lo:.3g}–{hi:.3g})" for r, lo, hi in
                                  zip(bt["ratio_kg_per_m3"], bt["ratio_p2_5_kg_per_m3"], bt["ratio_p97_5_kg_per_m3"],
                                      strict=True)]})
        if "excess_factor" in bt:
            shown["expected SO2 on those days (kt, 95%)"] = [
                "" if pd.isna(e) else f"{e / 1e6:.3g} ({lo / 1e6:.3g}-{hi / 1e6:.3g})" for e, lo, hi in
                zip(bt["expected_so2_kg"], bt["expected_so2_p2_5_kg"], bt["expected_so2_p97_5_kg"], strict=True)]
            shown["observed / expected (95%)"] = [
                "" if pd.isna(e) else f"{e:.2f} ({lo:.2f}-{hi:.2f})" for e, lo, hi in
                zip(bt["excess_factor"], bt["excess_p2_5"], bt["excess_p97_5"], strict=True)]
            shown["finding"] = bt["finding"]
        sections.setdefault("budget", ("Gas budget", []))[1].append(
            table_html(shown) + '<p class="caption">Last row: the whole span. SO2 totals count missing days as '
            "zero (lower bounds, with the share of days covered); ± is 1σ: the scans' random error and the "
            "systematic plume-speed/geometry term per station (project [budget]), fully correlated within a station; "
            "for DRE, the extrusion rate's daily 1σ added in quadrature (independent between days). "
            "Scans flagged by the instrument (e.g. cloud, low wind) are excluded. The ratio divides the SO2 and DRE "
            "of the days with both, as printed; its interval is on the log scale. SI values in the appendix file "
            "budget.csv.</p>")
    if bundle.volumes is not None:
        v = bundle.volumes
        vt = pd.DataFrame([{"first survey": v.start, "last survey": v.end,
                            "surveys (Mm³ DRE)": f"{v.survey_m3 / 1e6:.3g} ± {v.survey_sd_m3 / 1e6:.2g}",
                            "rate series (Mm³ DRE)": f"{v.rate_m3 / 1e6:.3g} ± {v.rate_sd_m3 / 1e6:.2g}" + (
                                " (lower bound)" if v.rate_is_lower_bound else ""),
                            "rate coverage": f"{v.rate_coverage:.0%}",
                            "difference rate − surveys (Mm³)": f"{v.difference_m3 / 1e6:.3g} ± "
                                                               f"{v.difference_sd_m3 / 1e6:.2g}",
                            "rate / surveys": v.ratio}])
        sections.setdefault("budget", ("Gas budget", []))[1].append(
            "<h3>Erupted volume two ways</h3>" + table_html(vt) + '<p class="caption">Survey difference and the '
            "summed rate series over the same days; a rate series with missing days gives a lower bound. ± is 1σ: "
            "the two surveys' in quadrature; the rate series' daily 1σ in quadrature (independent between days); "
            "the difference's σ = √(σ_surveys² + σ_rate²), assuming the surveys' and the rate series' errors "
            "independent (different instruments).</p>")
    b_rows = [(f"{'+'.join(bundle.seismic.get('b_classes', ('VT',)))}", bundle.seismic.get("b_value")),
              ("+".join(bundle.project.lp_classes), bundle.seismic.get("b_value_lp"))]
    b_rows = [{"events": k, "b ± σ (Shi & Bolt 1982)": f"{v.b:.2f} ± {v.sigma:.2f}", "Mc": v.mc, "events ≥ Mc": v.n}
              for k, v in b_rows if v is not None]
    if b_rows:
        sections.setdefault("seismicity", ("Seismicity", []))[1].append(
            "<h3>b-value and Mc by event class</h3>" + table_html(pd.DataFrame(b_rows))
            + '<p class="caption">Rockfalls and other surface events never enter b or Mc; LP + hybrid events are '
            "estimated separately from VT events.</p>")
    for sid, (heading, parts) in sections.items():
        page.add(sid, heading, "".join(parts))
    add_depth_section(page, bundle)  # "Storage depth and gas source" (melt inclusions), when the run has them
    for sid, heading, build, modes in EXTRA_SECTIONS:
        body = build(bundle) if bundle.mode in modes else ""
        if body:
            page.add(sid, heading, body)
    rev = []
    if "weekly_review" in tabs:
        wr = tabs["weekly_review"]
        rev.append(table_html(pd.DataFrame({
            "series": wr["series"], "unit": wr["unit"], "week": wr["level_window"], "baseline": wr["level_baseline"],
            "ratio (95%)": [f"{r:.3g} ({lo:.3g}–{hi:.3g})" if pd.notna(lo) else ("" if pd.isna(r) else f"{r:.3g}")
                            for r, lo, hi in zip(wr["ratio"], wr["ratio_low"], wr["ratio_high"], strict=True)],
            "robust z": wr["robust_z"], "trend per day (95%)": [
                "" if pd.isna(t) else f"{t:+.3g} ({lo:+.3g} to {hi:+.3g})" for t, lo, hi in
                zip(wr["trend_per_day"], wr["trend_low"], wr["trend_high"], strict=True)],
            "of 24 h": [f"{c:.0%}" for c in wr["coverage_window"]], "per": wr["reviewed_per"]}))
            + f'<p class="caption">Window {per.window_start:%Y-%m-%d} to {(per.window_end - DAY):%Y-%m-%d} (last day '
            "included). All columns in the appendix file weekly_review.csv.</p>")
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


def write_report(bundle, out_dir: str | Path = "reports", appendix: str | Path | None = None,
                 messages: list[str] | None = None, static: bool = True) -> Path:
    """Write the report (and optionally the appendix) and return the report's path; lines for the user (e.g.
    why static figures were not written) are appended to ``messages``."""
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
            write_appendix(bundle, Path(appendix), figs, messages, static=static)
    except OSError as exc:
        raise DegasError(f"cannot write the report: {exc.strerror or exc}: {exc.filename or out_dir}") from None
    return path


def write_appendix(bundle, directory: Path, figs: dict | None = None, messages: list[str] | None = None,
                   static: bool = True) -> list[Path]:
    """Tables as CSV (formula-protected, SI), Markdown and LaTeX; print tables in display units; the daily
    aligned-series CSV with coverage; figures as standalone HTML pages and, where kaleido and a Chromium are
    installed, as PNG, SVG and PDF (otherwise one line in ``messages`` says what to install)."""
    from degas.report import appendix as A

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
    for name, df in A.display_tables(bundle).items():
        paths += write_table(df, directory, name, caption=f"{bundle.project.volcano}: "
                                                          f"{name.removeprefix('print_').replace('_', ' ')}")
    daily = A.aligned_daily(bundle)
    if not daily.empty:
        p = directory / "aligned_daily.csv"
        protect_frame(daily).to_csv(p, index=False)
        paths.append(p)
    if not static:
        return paths
    static_paths, problem = A.write_static_figures(
        figs, directory / "static", title=f"{bundle.project.volcano}: figures of {report_name(bundle)}")
    paths += static_paths
    if problem and messages is not None:
        messages.append(problem)
    return paths


__all__ = ["render_report", "report_name", "tables", "write_appendix", "write_report"]

"""Report section "Storage depth and gas source": inclusion storage depths beside VT depths, the isobar plot,
the per-phase table and plain-language sentences with numbers.

Reads :class:`degas.depths.DepthContext` (``bundle.depths``); draws with plotly; never computes findings beyond
formatting. Depths are shown in km below sea level (the hypocentres' datum), stated once in the section.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from degas.report.html import esc, table_html

PHASE_COLOURS = ("#1f5f8b", "#c0612b", "#6b8e23", "#7d4e9e", "#2f8f8f", "#9e4e4e")
ISOBARS_MPA = (25, 50, 100, 150, 200, 250, 300)
LAYOUT = dict(template="plotly_white", font=dict(family="system-ui, sans-serif", size=12),
              margin=dict(l=70, r=20, t=50, b=40), legend=dict(orientation="h", y=-0.15))
CAUTIONS = (
    "Saturation pressures are minimum entrapment pressures: an inclusion may have trapped melt that was not "
    "fluid-saturated, and CO2 moves into shrinkage bubbles and diffuses out after trapping, which lowers the "
    "apparent pressure (Moore et al. 2015, Am. Mineral. 100, 806-823, from memory; common practice to "
    "reconstruct bubble CO2 before trusting the deepest levels).",
    "The solubility model matters: pressures from different models for the same inclusion can differ by tens of "
    "per cent, most for CO2-rich melts. Liu et al. (2005) is calibrated for rhyolitic melts only.",
    "Depths assume lithostatic pressure with the stated crustal density; a magma body under extra pressure or in "
    "a less dense crust sits shallower than computed.",
)


def _km(m: float) -> str:
    return "n/a" if not np.isfinite(m) else f"{m / 1000:.1f}"


def _km_range(a: float, b: float) -> str:
    """A depth range in km for a sentence; a negative depth (above the datum) with a true minus and "to"."""
    if np.isfinite(a) and a < 0:
        return f"{_km(a).replace('-', '−')} to {_km(b).replace('-', '−')}"
    return f"{_km(a)}–{_km(b)}"


def depth_sentences(ctx, budget_ran: bool | None = None) -> list[str]:
    """Plain-language sentences with numbers, one per phase, plus the budget from the inclusions.

    ``budget_ran`` : whether the run's gas budget ran (None: no run, e.g. ``degas depths``)."""
    out = []
    crust = ctx.storage.crust
    out.append(f"Depths are in km below sea level, the datum of the hypocentres (vent at "
               f"{crust.vent_elevation_m:g} m above sea level); pressures are volatile saturation pressures from "
               f"{MODEL_LABELS.get(ctx.storage.model, ctx.storage.model)} at {_trange(ctx.storage.temperature_c)}.")
    vent = crust.vent_elevation_m
    for r in ctx.comparison.table.itertuples():
        s = (f"Inclusions from {r.phase} ({r.n_inclusions}) record {r.storage_p5_mpa:.0f}–{r.storage_p95_mpa:.0f} MPa "
             f"(5–95 %, median {r.storage_p50_mpa:.0f} MPa), {_km_range(r.storage_p5_m, r.storage_p95_m)} km below "
             f"sea level ({_km_range(r.storage_p5_m + vent, r.storage_p95_m + vent)} km below the vent)")
        if np.isfinite(r.vt_p5_m):
            rel = ("inside" if r.storage_p5_m >= r.vt_p5_m and r.storage_p95_m <= r.vt_p95_m else
                   "deeper than" if r.storage_p5_m > r.vt_p95_m else
                   "shallower than" if r.storage_p95_m < r.vt_p5_m else "partly inside")
            s += (f", {rel} the VT 5–95 % depth range of that phase ({_km_range(r.vt_p5_m, r.vt_p95_m)} km, "
                  f"{r.n_vt} located VT events); {r.overlap_share:.0%} of the inclusions' 95 % depth intervals "
                  f"overlap it and {r.inside_share:.0%} of their median depths lie inside it.")
        else:
            s += f"; too few located VT events in that phase ({r.n_vt}) to compare."
        out.append(s)
    if ctx.storage.alt_model is not None:
        ph = ctx.storage.phases
        for r in ph.itertuples():
            out.append(f"Model spread, {r.phase}: median {r.pressure_p50_mpa:.0f} MPa with {ctx.storage.model}, "
                       f"{r.pressure_alt_p50_mpa:.0f} MPa with {ctx.storage.alt_model}.")
    if ctx.sulfur is not None:
        lo, hi = ctx.sulfur.interval()
        out.append(f"Petrological SO2 from the inclusions (Devine et al. 1984): {ctx.sulfur.so2_per_m3:.2f} kg per "
                   f"m³ DRE (95 % {lo:.2f}–{hi:.2f}; S {ctx.sulfur.s_mi_ppm:.0f} ppm in {ctx.sulfur.n_mi} "
                   f"inclusions, {ctx.sulfur.s_mg_ppm:.0f} ppm in {ctx.sulfur.n_mg} matrix-glass analyses), a "
                   f"minimum; {_budget_use(ctx, budget_ran)}.")
    return out


def _budget_use(ctx, budget_ran: bool | None) -> str:
    """Whether the gas budget uses the inclusion draws, said truthfully."""
    from degas.depths import inclusion_petrology

    if not ctx.settings.budget_from_inclusions:
        return "the gas budget does not use it (budget_from_inclusions = false in [inclusions])"
    if inclusion_petrology(ctx) is None:
        return "too small for the gas budget to use (no S lost between inclusions and matrix glass)"
    if budget_ran is None:
        return "a report's gas budget uses these draws for its observed/expected ratio"
    if not budget_ran:
        return "no gas budget was run here, so no observed/expected ratio uses it"
    return "the gas budget's observed/expected ratio uses these draws"


MODEL_LABELS = {"Liu": "Liu et al. (2005)", "Dixon": "Dixon (1997, via VESIcal)",
                "IaconoMarziano": "Iacono-Marziano et al. (2012, via VESIcal)",
                "ShishkinaIdealMixing": "Shishkina et al. (2014, via VESIcal)", "VESIcal-Liu": "Liu et al. (2005, via "
                "VESIcal)"}


def _trange(t: tuple[float, float]) -> str:
    return f"{t[0]:g} °C" if t[0] == t[1] else f"{t[0]:g}–{t[1]:g} °C"


def isobar_figure(ctx, mi_data: pd.DataFrame | None = None) -> go.Figure:
    """CO2 (ppm) against H2O (wt%) of inclusions and matrix glass, with Liu et al. (2005) isobars."""
    from degas.analysis.petrology import isobars

    st = ctx.storage
    t_mid = 0.5 * (st.temperature_c[0] + st.temperature_c[1])
    iso_all = isobars(st.model, ISOBARS_MPA, t_mid)
    fig = go.Figure()
    inc = st.inclusions
    hmax = max(float(np.nanmax(inc["h2o_wt_pct"])) * 1.15, 2.0)
    cmax = max(float(np.nanmax(inc["co2_ppm"])) * 1.2, 100.0)
    for p in ISOBARS_MPA:
        iso = iso_all[iso_all["pressure_mpa"] == p].reset_index(drop=True)
        if iso.empty:
            continue
        if iso["h2o_wt_pct"].min() > hmax and iso["co2_ppm"].min() > cmax:
            continue
        fig.add_trace(go.Scatter(x=iso["h2o_wt_pct"], y=iso["co2_ppm"], mode="lines", line=dict(color="#bbb",
                                 width=1), name=f"{p} MPa", showlegend=False, hoverinfo="name"))
        k = int(np.argmin(np.abs(iso["co2_ppm"] - 0.15 * cmax)))
        fig.add_annotation(x=float(iso["h2o_wt_pct"].iloc[k]), y=float(iso["co2_ppm"].iloc[k]), text=f"{p} MPa",
                           showarrow=False, font=dict(size=10, color="#888"), xshift=18)
    for i, ph in enumerate(pd.unique(inc["phase"])):
        for kind, symbol in (("inclusion", "circle"), ("embayment", "diamond")):
            d = inc[(inc["phase"] == ph) & (inc["analysis_type"] == kind)]
            if d.empty:
                continue
            fig.add_trace(go.Scatter(x=d["h2o_wt_pct"], y=d["co2_ppm"], mode="markers",
                                     marker=dict(color=PHASE_COLOURS[i % 6], symbol=symbol, size=8),
                                     name=f"{ph}: {kind}s", text=d["analysis_id"]))
    if mi_data is not None:
        g = mi_data[mi_data["analysis_type"] == "matrix_glass"]
        if not g.empty:
            fig.add_trace(go.Scatter(x=g["h2o_frac"] * 100, y=(g["co2_frac"] * 1e6).fillna(0.0), mode="markers",
                                     marker=dict(color="#444", symbol="x", size=7), name="matrix glass"))
    label = MODEL_LABELS.get(st.model, st.model)
    fig.update_layout(**LAYOUT, title=f"Dissolved CO2 against H2O, isobars of {label} at {t_mid:g} °C",
                      xaxis_title="H2O (wt%)", yaxis_title="CO2 (ppm)", height=480)
    fig.update_xaxes(range=[0, hmax])
    fig.update_yaxes(range=[0, cmax])
    return fig


def depth_time_figure(ctx) -> go.Figure:
    """Located VT depths through time with each phase's inclusion storage-depth band (km below sea level)."""
    fig = go.Figure()
    vt = ctx.comparison.vt_events
    if len(vt):
        fig.add_trace(go.Scattergl(x=vt["time"], y=vt["depth_m"] / 1000, mode="markers",
                                   marker=dict(size=3, color="#3b6ea5", opacity=0.35), name="VT hypocentres"))
    tt = ctx.comparison.vt_through_time
    if len(tt):
        fig.add_trace(go.Scatter(x=tt["time"], y=tt["p50_m"] / 1000, mode="lines+markers",
                                 line=dict(color="#222", width=2), name="VT median depth per 30 days"))
    for i, r in enumerate(ctx.comparison.table.itertuples()):
        if pd.isna(r.start):
            continue
        col = PHASE_COLOURS[i % 6]
        fig.add_shape(type="rect", x0=r.start, x1=r.end, y0=r.storage_p5_m / 1000, y1=r.storage_p95_m / 1000,
                      fillcolor=col, opacity=0.18, line_width=0, layer="below")
        fig.add_trace(go.Scatter(x=[r.start, r.end], y=[r.storage_p50_m / 1000] * 2, mode="lines",
                                 line=dict(color=col, width=3), name=f"{r.phase}: inclusion storage (median, 5–95 %)"))
    inc = ctx.storage.inclusions
    inc = inc[(inc["analysis_type"] == "inclusion") & inc["time"].notna()]
    if len(inc):
        fig.add_trace(go.Scatter(
            x=inc["time"], y=inc["depth_bsl_m"] / 1000, mode="markers", name="inclusions (95 % interval)",
            marker=dict(size=7, color="#222", symbol="diamond-open"), text=inc["analysis_id"],
            error_y=dict(type="data", symmetric=False, array=(inc["depth_p97_5_m"] - inc["depth_bsl_m"]) / 1000,
                         arrayminus=(inc["depth_bsl_m"] - inc["depth_p2_5_m"]) / 1000, thickness=1, width=0)))
    fig.update_layout(**LAYOUT, title="VT depths and inclusion storage depths (km below sea level)", height=420,
                      yaxis_title="depth (km below sea level)")
    fig.update_yaxes(autorange="reversed")
    return fig


def phase_table(ctx) -> pd.DataFrame:
    """The per-phase table in display units (MPa, km below sea level)."""
    t = ctx.comparison.table
    return pd.DataFrame({
        "phase": t["phase"], "inclusions": t["n_inclusions"],
        "pressure MPa, median (5–95 %)": [f"{a:.0f} ({b:.0f}–{c:.0f})" for a, b, c in
                                          zip(t["storage_p50_mpa"], t["storage_p5_mpa"], t["storage_p95_mpa"],
                                              strict=True)],
        "storage km b.s.l., median (5–95 %)": [f"{_km(a)} ({_km(b)}–{_km(c)})" for a, b, c in
                                               zip(t["storage_p50_m"], t["storage_p5_m"], t["storage_p95_m"],
                                                   strict=True)],
        "VT events": t["n_vt"],
        "VT km b.s.l., 5/25/50/75/95 %": ["n/a" if not np.isfinite(a) else
                                          " / ".join(_km(x) for x in (a, b, c, d, e)) for a, b, c, d, e in
                                          zip(t["vt_p5_m"], t["vt_p25_m"], t["vt_p50_m"], t["vt_p75_m"],
                                              t["vt_p95_m"], strict=True)],
        "overlap share": ["n/a" if not np.isfinite(x) else f"{x:.0%}" for x in t["overlap_share"]],
        "inside share": ["n/a" if not np.isfinite(x) else f"{x:.0%}" for x in t["inside_share"]],
    })


def add_depth_section(page, bundle) -> None:
    """Add "Storage depth and gas source" to the page when the run has inclusion results."""
    ctx = getattr(bundle, "depths", None)
    if ctx is None:
        return
    mi = None
    if bundle.archive is not None:
        mi = bundle.archive.load(ctx.series_id).data
    parts = ['<ul class="summary">' + "".join(f"<li>{esc(s)}</li>" for s in depth_sentences(
        ctx, getattr(bundle, "budget", None) is not None)) + "</ul>"]
    parts.append(page.figure(isobar_figure(ctx, mi), "fig-isobars",
                             "Each point is one analysis; grey lines are isobars (fluid from pure CO2 to pure H2O). "
                             "Matrix glass sits near the origin: degassed."))
    parts.append(page.figure(depth_time_figure(ctx), "fig-storage-depth-time",
                             "Shaded: the 5–95 % range of the inclusions' storage depths in each phase's time "
                             "window; coloured line: median; diamonds: each inclusion at its eruption date. Points: "
                             "every located VT hypocentre; black line: their median depth per 30 days."))
    parts.append("<h3>Storage depth and VT depths per phase</h3>" + table_html(phase_table(ctx))
                 + '<p class="caption">Overlap share: inclusions whose 95 % depth interval overlaps the VT '
                   "5–95 % depth range of the same phase; inside share: inclusions whose median depth lies inside "
                   "that range.</p>")
    br = getattr(ctx, "by_regime", None)
    if br is not None and len(br):
        shown = pd.DataFrame({"regime": br["label"], "VT events": br["n_vt"],
                              "VT km b.s.l., 5/25/50/75/95 %": [
                                  "n/a" if not np.isfinite(a) else " / ".join(_km(x) for x in (a, b, c, d, e))
                                  for a, b, c, d, e in zip(br["vt_p5_m"], br["vt_p25_m"], br["vt_p50_m"],
                                                           br["vt_p75_m"], br["vt_p95_m"], strict=True)]})
        parts.append("<h3>VT depths per regime</h3>" + table_html(shown))
    inc = ctx.storage.inclusions
    per = pd.DataFrame({"analysis": inc["analysis_id"], "phase": inc["phase"], "type": inc["analysis_type"],
                        "H2O wt%": inc["h2o_wt_pct"], "CO2 ppm": inc["co2_ppm"], "T °C": inc["temperature_c"],
                        "P MPa": inc["pressure_mpa"], "P 2.5 %": inc["pressure_p2_5_mpa"],
                        "P 97.5 %": inc["pressure_p97_5_mpa"], "depth km b.s.l.": inc["depth_bsl_m"] / 1000,
                        "2.5 %": inc["depth_p2_5_m"] / 1000, "97.5 %": inc["depth_p97_5_m"] / 1000,
                        "x H2O fluid": inc["x_h2o_fluid"]})
    parts.append(f"<details><summary>Per-inclusion saturation pressures and depths ({ctx.storage.n_draws} Monte "
                 f"Carlo draws each, seed {ctx.storage.seed})</summary>" + table_html(per) + "</details>")
    notes = [*ctx.notes, *ctx.storage.notes, *ctx.comparison.notes, *(ctx.sulfur.notes if ctx.sulfur else ()),
             *CAUTIONS]
    if ctx.storage.alt_model is None:
        notes.append("Only one solubility model was run; set alt_model in [inclusions] (with the degas[petrology] "
                     "extra installed) to see the spread between two models.")
    parts.append("<h3>Cautions and assumptions</h3><ul>" + "".join(f"<li>{esc(n)}</li>"
                                                                      for n in dict.fromkeys(notes)) + "</ul>")
    page.add("depths", "Storage depth and gas source", "".join(parts))

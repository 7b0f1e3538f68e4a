"""Plotly figures from analysis results. Display units (t/d, m³/s) are applied here, at the edge.

Long series are reduced for display only (min-max per pixel bin, :mod:`degas.report.decimate`).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from degas.report.decimate import gaps_as_breaks, minmax_decimate
from degas.report.html import REGIME_LABELS, esc, regime_colour
from degas.units import KG_S_TO_T_D

STATION_COLOURS = ("#1f5f8b", "#c0612b", "#6b8e23", "#7d4e9e", "#2f8f8f", "#9e4e4e")
# one distinct colour per class (no two reds): blue, orange, purple, brown, black, teal, grey
CLASS_COLOURS = {"VT": "#3b6ea5", "LP": "#d9822b", "hybrid": "#8e5ea2", "rockfall": "#8c6d31",
                 "explosion": "#1a1a1a", "tremor": "#2a9d8f", "other": "#9a9a9a"}
#: the classes of each events-per-day panel of the overview
EVENT_PANELS = (("events_lp", "LP + hybrid per day", ("LP", "hybrid")),
                ("events_rockfall", "rockfalls per day", ("rockfall",)),
                ("events_other", "VT and other events per day", ("VT", "explosion", "tremor", "other")))
LAYOUT = dict(template="plotly_white", font=dict(family="system-ui, sans-serif", size=12),
              margin=dict(l=70, r=20, t=50, b=40), legend=dict(orientation="h", y=-0.06))
DAY = pd.Timedelta("1D")


def _points(times: pd.Series, values: np.ndarray, n_bins: int = 1500, max_gap: pd.Timedelta = pd.Timedelta("3D")):
    """Display-reduced (x, y) with breaks at gaps longer than ``max_gap``."""
    t = times.to_numpy(dtype="datetime64[ns]").astype("int64")
    keep = minmax_decimate(t, values, n_bins)
    tt, yy = gaps_as_breaks(t[keep], np.asarray(values)[keep], max_gap.value)
    return pd.to_datetime(tt, utc=True), yy


def _shade_regimes(fig: go.Figure, regimes, rows: int) -> None:
    if regimes is None:
        return
    seen = set()
    for r in regimes.intervals.itertuples():
        fig.add_vrect(x0=r.start, x1=r.end, fillcolor=regime_colour(r.label), line_width=0,
                      layer="below", row="all", col=1)
        if r.label not in seen:
            seen.add(r.label)
            fig.add_trace(go.Scatter(x=[None], y=[None], mode="markers", name=REGIME_LABELS.get(r.label, r.label),
                                     marker=dict(symbol="square", size=14, color=regime_colour(r.label)),
                                     legendgroup="regimes", showlegend=True), row=1, col=1)


def _changes(fig: go.Figure, result, row: int, colour: str = "#333") -> None:
    if result is None:
        return
    for _, c in result.changes.drop_duplicates("time").iterrows():
        fig.add_vline(x=c["time"], line=dict(color=colour, width=1.2, dash="dash"), row=row, col=1)
        if pd.notna(c["ci_start"]) and pd.notna(c["ci_end"]) and c["ci_end"] > c["ci_start"]:
            fig.add_vrect(x0=c["ci_start"], x1=c["ci_end"], fillcolor="rgba(40,40,40,0.10)", line_width=0, row=row,
                          col=1)


def overview_figure(bundle) -> go.Figure:
    """Stacked time series on one time axis: SO2 per station, ratio, extrusion, eruptive state, events, energy."""
    recs = bundle.records
    al = bundle.aligned
    rows: list[tuple[str, str]] = []
    if bundle.roles["gas"]:
        rows.append(("gas", "SO2 flux (t/d)"))
    if "ratio" in recs:
        rows.append(("ratio", "CO2/SO2 (molar)"))
    if "magma" in recs and recs["magma"].meta.kind == "extrusion_rate":
        rows.append(("magma", "extrusion (m³/s DRE)"))
    if "chronology" in recs:
        rows.append(("chronology", "eruptive fraction"))
    if "catalog" in recs:
        rr = bundle.seismic.get("rates")
        for key, label, classes in EVENT_PANELS:
            if rr is None or any(c in rr.counts and rr.counts[c].sum() > 0 for c in classes):
                rows.append((key, label))
        rows.append(("energy", "cumulative seismic energy (J)"))
        if "b_series" in bundle.seismic:
            rows.append(("bvalue", f"b-value ({'+'.join(bundle.seismic.get('b_classes', ('VT',)))})"))
    for sid in bundle.roles["amplitude"]:
        rows.append((sid, esc(f"seismic amplitude ({recs[sid].meta.unit or 'counts'})")))
    if not rows:
        return go.Figure()
    fig = make_subplots(rows=len(rows), cols=1, shared_xaxes=True, vertical_spacing=0.025,
                        subplot_titles=[label for _, label in rows])
    for i, (key, _label) in enumerate(rows, start=1):
        if key == "gas":
            for j, sid in enumerate(bundle.roles["gas"]):
                rec = recs[sid]
                x, y = _points(rec.data["time"], rec.data["value"].to_numpy() * KG_S_TO_T_D)
                fig.add_trace(go.Scattergl(x=x, y=y, mode="markers", marker=dict(size=2, opacity=0.35,
                                                                                color=STATION_COLOURS[j % 6]),
                                           name=esc(f"{rec.meta.station or sid} scans"), legendgroup="gas"),
                              row=i, col=1)
            if al is not None and "gas" in al.frame:
                fig.add_trace(go.Scatter(x=al.frame.index, y=al.frame["gas"] * KG_S_TO_T_D, mode="lines",
                                         line=dict(color="#10232e", width=1.6), name="SO2 daily mean",
                                         connectgaps=False), row=i, col=1)
            fig.update_yaxes(type="log", row=i, col=1)
            _changes(fig, bundle.changepoints.get("gas"), i)
        elif key == "ratio":
            rec = recs["ratio"]
            fig.add_trace(go.Scatter(x=rec.data["time"], y=rec.data["value"], mode="markers+lines",
                                     marker=dict(size=4, color="#6b8e23"), line=dict(width=0.8),
                                     error_y=dict(array=rec.data["uncertainty"], visible=True, thickness=0.6),
                                     name="CO2/SO2"), row=i, col=1)
            _changes(fig, bundle.changepoints.get("ratio"), i)
        elif key == "magma":
            rec = recs["magma"]
            if rec.is_interval:
                xs, ys = [], []
                for r in rec.data.itertuples():
                    xs += [r.time, r.end, None]
                    ys += [r.value, r.value, None]
                fig.add_trace(go.Scatter(x=xs, y=ys, mode="lines", line=dict(color="#8a3b12", width=2),
                                         name="extrusion between surveys"), row=i, col=1)
            else:
                x, y = _points(rec.data["time"], rec.data["value"].to_numpy())
                fig.add_trace(go.Scatter(x=x, y=y, mode="lines", line=dict(color="#8a3b12", width=1.4),
                                         name="extrusion rate"), row=i, col=1)
            _changes(fig, bundle.changepoints.get("magma"), i)
        elif key == "chronology" and al is not None and "chronology" in al.frame:
            fig.add_trace(go.Scatter(x=al.frame.index, y=al.frame["chronology"], mode="lines", fill="tozeroy",
                                     line=dict(color="#b5651d", width=1), name="eruptive fraction"), row=i, col=1)
            fig.update_yaxes(range=[0, 1.05], row=i, col=1)
        elif key.startswith("events_"):
            rr = bundle.seismic.get("rates")
            classes = dict((k, c) for k, _l, c in EVENT_PANELS)[key]
            if rr is not None:
                per_day = rr.counts / (rr.step / DAY)
                for c in classes:
                    if c in per_day and per_day[c].sum() > 0:
                        fig.add_trace(go.Scatter(x=per_day.index, y=per_day[c], mode="lines", name=f"{c} per day",
                                                 line=dict(width=1.1, color=CLASS_COLOURS.get(c, "#555")),
                                                 legendgroup=key), row=i, col=1)
            if key == "events_lp":
                _changes(fig, bundle.changepoints.get("lp_hybrid_rate"), i, CLASS_COLOURS["LP"])
        elif key == "energy":
            er = bundle.seismic.get("energy")
            if er is not None and "total" in er.cumulative_energy_j:
                # linear: the steps of the cumulative curve are the energetic episodes (a log axis hides them)
                fig.add_trace(go.Scatter(x=er.cumulative_energy_j.index, y=er.cumulative_energy_j["total"],
                                         mode="lines", line=dict(color="#444", width=1.4), name="cumulative energy"),
                              row=i, col=1)
        elif key == "bvalue":
            f = bundle.seismic["b_series"].frame
            fig.add_trace(go.Scatter(x=np.r_[f["time"], f["time"][::-1]], y=np.r_[f["b_upper"], f["b_lower"][::-1]],
                                     fill="toself", fillcolor="rgba(59,110,165,0.18)", line=dict(width=0),
                                     name="b ± σ", showlegend=False), row=i, col=1)
            fig.add_trace(go.Scatter(x=f["time"], y=f["b"], mode="lines", line=dict(color=CLASS_COLOURS["VT"]),
                                     name="b-value"), row=i, col=1)
        else:
            rec = recs[key]
            x, y = _points(rec.data["time"], rec.data["value"].to_numpy())
            fig.add_trace(go.Scatter(x=x, y=y, mode="lines", line=dict(color="#2f8f8f", width=1),
                                     name=esc(f"seismic amplitude {rec.meta.station or ''}".strip())), row=i, col=1)
            fig.update_yaxes(type="log", row=i, col=1)
    _shade_regimes(fig, bundle.regimes, len(rows))
    fig.update_layout(**LAYOUT, height=190 * len(rows) + 120, hovermode="x unified",
                      title="Monitoring series on one time axis (dashed: change points; shading: regimes, colours "
                            "with no alert-level meaning)")
    fig.update_yaxes(exponentformat="power", showexponent="all")  # readable ticks: no "10B" for 10^10
    _legends_beside_panels(fig, len(rows))
    return fig


def _legends_beside_panels(fig: go.Figure, n_rows: int) -> None:
    """One legend per panel, placed at the right of the panel it names (plotly's multiple legends)."""
    rows_of, shading = {}, []
    for tr in fig.data:
        if tr.legendgroup == "regimes":
            shading.append(tr)
            continue
        ya = getattr(tr, "yaxis", None) or "y"
        rows_of.setdefault(ya, []).append(tr)
    k = -1
    for k, (ya, traces) in enumerate(sorted(rows_of.items(), key=lambda kv: int(kv[0][1:] or 1))):
        name = "legend" if k == 0 else f"legend{k + 1}"
        axis = fig.layout["yaxis" + ya[1:]]
        top = axis.domain[1] if axis.domain else 1.0
        for tr in traces:
            tr.legend = name
        fig.layout[name] = dict(x=1.01, xanchor="left", y=top, yanchor="top", font=dict(size=10),
                                bgcolor="rgba(255,255,255,0.6)", orientation="v")
    if shading:  # the regime key, on the figure, above the panels
        name = "legend" if k < 0 else f"legend{k + 2}"
        for tr in shading:
            tr.legend = name
        fig.layout[name] = dict(x=0, xanchor="left", y=1.0, yanchor="bottom", orientation="h", font=dict(size=10),
                                title=dict(text="regime shading:", side="top"), entrywidth=0.5,
                                entrywidthmode="fraction")
    fig.update_layout(margin=dict(r=230, t=150), title=dict(y=1.0, yref="container", yanchor="top",
                                                            pad=dict(t=12)))


def xcorr_figure(res, title: str = "Lagged cross-correlation (positive lag = gas leads magma output)") -> go.Figure:
    days = res.lags * (res.step / DAY)
    fig = go.Figure()
    fig.add_trace(go.Scatter(x=np.r_[days, days[::-1]], y=np.r_[res.band, -res.band[::-1]], fill="toself",
                             fillcolor="rgba(120,120,120,0.18)", line=dict(width=0),
                             name="white-noise 95 % band (±1.96/√n)"))
    fig.add_trace(go.Bar(x=days, y=res.r, marker_color="#1f5f8b", name=f"r ({res.variant})"))
    fig.add_vline(x=res.best_lag / DAY, line=dict(color="#c0612b", dash="dash"))
    p = "n/a" if not np.isfinite(res.p_value) else f"{res.p_value:.3g}"
    ci = "" if res.lag_ci is None else (f", {res.ci_level:.0%} interval {res.lag_ci[0] / DAY:+.0f} to "
                                        f"{res.lag_ci[1] / DAY:+.0f} d")
    fig.add_annotation(x=res.best_lag / DAY, y=res.peak_r, text=f"best lag {res.best_lag / DAY:+.0f} d{ci}<br>"
                       f"peak r = {res.peak_r:.2f}; surrogate p = {p} ({res.n_surrogates} {res.surrogate_method})",
                       showarrow=True, arrowhead=2, ax=60, ay=-40)
    fig.update_layout(**LAYOUT, height=380, title=title, xaxis_title="lag (days)", yaxis_title="correlation r")
    return fig


def rolling_figure(res) -> go.Figure:
    w = res.windows
    fig = make_subplots(rows=2, cols=1, shared_xaxes=True, subplot_titles=["peak correlation", "best lag (days)"])
    sig = w["significant"].astype(bool)
    fig.add_trace(go.Scatter(x=w["centre"], y=w["peak_r"], mode="lines+markers", line=dict(color="#1f5f8b"),
                             marker=dict(color=np.where(sig, "#1f5f8b", "#bbbbbb"), size=6),
                             name="peak r (grey: p ≥ α)"), row=1, col=1)
    fig.add_trace(go.Scatter(x=w["centre"], y=w["best_lag_days"], mode="markers", marker=dict(
        color=np.where(sig, "#c0612b", "#bbbbbb"), size=6), name="best lag"), row=2, col=1)
    fig.update_layout(**LAYOUT, height=420, title=f"Rolling coupling: {res.window / DAY:.0f}-day windows every "
                      f"{res.step / DAY:.0f} days, lags within ±{res.max_lag / DAY:.0f} d")
    return fig


def budget_figure(res) -> go.Figure:
    cum = res.cumulative
    fig = make_subplots(specs=[[{"secondary_y": True}]])
    fig.add_trace(go.Scatter(x=cum.index, y=cum["so2_cum_kg"] / 1e6, name="cumulative SO2 (kt)",
                             line=dict(color="#1f5f8b")), secondary_y=False)
    fig.add_trace(go.Scatter(x=cum.index, y=cum["dre_cum_m3"] / 1e6, name="cumulative DRE (Mm³)",
                             line=dict(color="#8a3b12")), secondary_y=True)
    fig.update_yaxes(title_text="SO2 (kt)", secondary_y=False)
    fig.update_yaxes(title_text="DRE volume (Mm³)", secondary_y=True)
    fig.update_layout(**LAYOUT, height=360, title="Cumulative SO2 mass and erupted DRE volume")
    return fig


def excess_figure(res) -> go.Figure:
    seg = res.segments
    fig = go.Figure()
    if "excess_factor" in seg and seg["excess_factor"].notna().any():
        lab = [f"{s:%Y-%m-%d} to {e:%Y-%m-%d}" for s, e in zip(seg["start"], seg["end"], strict=True)]
        err_hi = (seg["excess_p97_5"] - seg["excess_factor"]).to_numpy()
        err_lo = (seg["excess_factor"] - seg["excess_p2_5"]).to_numpy()
        fig.add_trace(go.Bar(x=lab, y=seg["excess_factor"], marker_color="#6b8e23",
                             error_y=dict(type="data", array=err_hi, arrayminus=err_lo), name="observed / expected"))
        fig.add_hline(y=1.0, line=dict(color="#333", dash="dash"))
    fig.update_layout(**LAYOUT, height=360, yaxis_type="log", title="Excess degassing: observed SO2 / petrological "
                      "expectation (Devine et al. 1984), 95 % Monte Carlo interval")
    return fig


def fmd_figure(fmd, bval=None) -> go.Figure:
    fig = go.Figure()
    ok = fmd.count > 0
    fig.add_trace(go.Scatter(x=fmd.magnitude[ok], y=fmd.count[ok], mode="markers", name="per bin",
                             marker=dict(color="#9a9a9a", size=6)))
    okc = fmd.cumulative > 0
    fig.add_trace(go.Scatter(x=fmd.magnitude[okc], y=fmd.cumulative[okc], mode="markers", name="cumulative N(≥M)",
                             marker=dict(color="#1f5f8b", size=6)))
    if bval is not None and np.isfinite(bval.b):
        m = np.linspace(bval.mc, float(np.nanmax(fmd.magnitude)), 20)
        fig.add_trace(go.Scatter(x=m, y=10 ** (bval.a - bval.b * m), mode="lines", line=dict(color="#c0612b"),
                                 name=f"b = {bval.b:.2f} ± {bval.sigma:.2f}, Mc = {bval.mc:.1f}"))
        fig.add_vline(x=bval.mc, line=dict(color="#c0612b", dash="dot"))
    fig.update_layout(**LAYOUT, height=360, yaxis_type="log", xaxis_title="magnitude", yaxis_title="events",
                      title="Frequency-magnitude distribution (Aki 1965 / Utsu 1966 b, Shi & Bolt 1982 σ)")
    return fig


def bseries_figure(bs) -> go.Figure:
    f = bs.frame
    fig = go.Figure()
    tcol = "time" if "time" in f else f.columns[0]
    fig.add_trace(go.Scatter(x=np.r_[f[tcol], f[tcol][::-1]], y=np.r_[f["b_upper"], f["b_lower"][::-1]],
                             fill="toself", fillcolor="rgba(31,95,139,0.18)", line=dict(width=0), name="± σ"))
    fig.add_trace(go.Scatter(x=f[tcol], y=f["b"], mode="lines", line=dict(color="#1f5f8b"), name="b"))
    fig.update_layout(**LAYOUT, height=320, title=f"b-value through time ({bs.window} events per window, Mc = "
                      f"{bs.mc:.1f})", yaxis_title="b")
    return fig

"""The picture a scientist checks first: gas against lagged magma output, coloured by regime.

Each point is one day: SO2 flux (t/d) against the magma output τ days later (the relation's lag; positive =
gas leads), coloured by the regime label of that day, with the fitted relation gas = g0 + k·Q(t + τ) and its
relative band drawn over it.
"""

from __future__ import annotations

import re

import numpy as np
import plotly.graph_objects as go

from degas.report.html import REGIME_COLOURS, REGIME_LABELS
from degas.units import KG_S_TO_T_D


def _solid(rgba: str) -> str:
    """The regime colour at marker opacity."""
    return re.sub(r"rgba\(([^,]+),([^,]+),([^,]+),[^)]+\)", r"rgba(\1,\2,\3, 0.75)", rgba)


def relation_scatter(bundle) -> go.Figure | None:
    """Scatter of daily gas against lagged output by regime, with the fitted line; None without a relation."""
    reg = bundle.regimes
    rel = getattr(reg, "relation", None)
    if rel is None:
        return None
    from degas.analysis.relation import MAGMA_UNITS, _shift

    al = bundle.aligned_full
    mname = "magma" if "magma" in al.kinds else "chronology"
    g = al.frame["gas"].to_numpy(dtype=float) * KG_S_TO_T_D
    q = _shift(al.frame[mname].to_numpy(dtype=float), int(round(rel.lag_days)))
    t = al.frame.index
    fig = go.Figure()
    for label in REGIME_COLOURS:
        sel = np.zeros(len(t), dtype=bool)
        for r in reg.intervals[reg.intervals["label"] == label].itertuples():
            sel |= (t >= r.start) & (t < r.end)
        sel &= np.isfinite(g) & np.isfinite(q)
        if sel.any():
            fig.add_trace(go.Scattergl(x=q[sel], y=g[sel], mode="markers", name=REGIME_LABELS[label],
                                       marker={"size": 5, "color": _solid(REGIME_COLOURS[label])},
                                       text=[f"{x:%Y-%m-%d}" for x in t[sel]],
                                       hovertemplate="%{text}: %{y:.0f} t/d at %{x:.3g}<extra></extra>"))
    qmax = float(np.nanmax(q)) if np.isfinite(q).any() else 1.0
    xs = np.linspace(0, qmax, 50)
    line = rel.predict(xs) * KG_S_TO_T_D
    verdict = "gas independent of magma output" if rel.independent else "gas tracks magma output"
    fig.add_trace(go.Scatter(x=xs, y=line, mode="lines", line={"color": "#23343b", "width": 2},
                             name=f"relation: g0 {rel.g0_kg_s * KG_S_TO_T_D:.0f} t/d + k·Q ({verdict})"))
    band = getattr(reg, "band", 0.0)
    if band:
        fig.add_trace(go.Scatter(x=np.r_[xs, xs[::-1]], y=np.r_[line * (1 + band), (line * (1 - band))[::-1]],
                                 fill="toself", fillcolor="rgba(35, 52, 59, 0.08)", line={"width": 0},
                                 name=f"±{band:.0%} band (floor of the prediction interval)", hoverinfo="skip"))
    unit = MAGMA_UNITS.get(rel.magma_measure, "")
    fig.update_layout(title=f"SO2 flux against magma output {rel.lag_days:+.0f} d later, by regime",
                      xaxis_title=f"magma output at t {rel.lag_days:+.0f} d ({unit})", yaxis_title="SO2 flux (t/d)",
                      template="plotly_white", height=460, legend={"orientation": "h", "y": -0.2})
    return fig

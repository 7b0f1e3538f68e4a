"""Where the located events are: a depth-time plot and a plan view of epicentres in km from the vent.

No basemap (the page stays offline). Distances use a local equirectangular projection about the vent,
x = R·Δλ·cos φ0, y = R·Δφ, with the IUGG mean Earth radius R = 6371.0088 km (Moritz 2000); over the few tens
of km around a volcano its error is far below location uncertainties.
"""

from __future__ import annotations

import numpy as np
import plotly.graph_objects as go

from degas.report.figures import CLASS_COLOURS, LAYOUT

EARTH_RADIUS_KM = 6371.0088


def offsets_km(lat_deg, lon_deg, lat0_deg: float, lon0_deg: float) -> tuple[np.ndarray, np.ndarray]:
    """East and north offsets (km) of points from (lat0, lon0), local equirectangular projection."""
    lat = np.radians(np.asarray(lat_deg, dtype=float))
    lon = np.radians(np.asarray(lon_deg, dtype=float))
    phi0, lam0 = np.radians(lat0_deg), np.radians(lon0_deg)
    dlam = (lon - lam0 + np.pi) % (2 * np.pi) - np.pi
    return EARTH_RADIUS_KM * dlam * np.cos(phi0), EARTH_RADIUS_KM * (lat - phi0)


def location_figures(bundle) -> list[tuple[str, go.Figure, str]]:
    """(id, figure, caption) for the depth-time plot and the plan view; empty without located events."""
    cat = bundle.records.get("catalog")
    if cat is None:
        return []
    d = cat.data
    ok = d["latitude_deg"].notna() & d["longitude_deg"].notna()
    if not ok.any():
        return []
    d = d.loc[ok]
    p = bundle.project
    if p.vent_latitude is not None and p.vent_longitude is not None:
        lat0, lon0, ref = p.vent_latitude, p.vent_longitude, "the vent (project file)"
    else:
        lat0, lon0 = float(d["latitude_deg"].median()), float(d["longitude_deg"].median())
        ref = "the median epicentre (no vent position in the project file)"
    x, y = offsets_km(d["latitude_deg"], d["longitude_deg"], lat0, lon0)
    depth_km = d["depth_m"].to_numpy(dtype=float) / 1000.0
    cls = d["event_class"].astype("string").fillna("other").to_numpy()
    dt = go.Figure()
    plan = go.Figure()
    for c in ("VT", "hybrid", "LP", "explosion", "tremor", "rockfall", "other"):
        sel = cls == c
        if not sel.any():
            continue
        mk = dict(size=4, opacity=0.6, color=CLASS_COLOURS.get(c, "#555"))
        if np.isfinite(depth_km[sel]).any():
            dt.add_trace(go.Scattergl(x=d["time"][sel], y=depth_km[sel], mode="markers", marker=mk, name=c,
                                      visible=True if c == "VT" else "legendonly"))
        plan.add_trace(go.Scattergl(x=x[sel], y=y[sel], mode="markers", marker=mk, name=c,
                                    visible=True if c == "VT" else "legendonly"))
    plan.add_trace(go.Scatter(x=[0], y=[0], mode="markers", marker=dict(symbol="triangle-up", size=13,
                                                                         color="#111"), name="vent"))
    dt.update_layout(**LAYOUT, height=340, title="Depth of located events through time (VT shown; click the "
                     "legend for other classes)", yaxis=dict(title="depth below sea level (km)", autorange="reversed"))
    plan.update_layout(**LAYOUT, height=520, width=620, title=f"Epicentres in km from {ref.split(' (')[0]}",
                       xaxis=dict(title="km east", zeroline=True), yaxis=dict(title="km north", scaleanchor="x",
                                                                              scaleratio=1, zeroline=True))
    cap = f"Distances from {ref}, local flat projection; no basemap so that the page stays offline."
    return [("fig-depth-time", dt, "Depth is below sea level as the catalogue gives it."),
            ("fig-epicentres", plan, cap)]

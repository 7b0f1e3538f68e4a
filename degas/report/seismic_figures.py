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
#: most events drawn per location figure (a seeded random subset beyond it, said in the caption); display only
MAX_POINTS = 20_000


def _subset(d):
    """At most MAX_POINTS rows (seeded, order kept) and the caption note."""
    if len(d) <= MAX_POINTS:
        return d, ""
    keep = np.sort(np.random.default_rng(0).choice(len(d), MAX_POINTS, replace=False))
    return d.iloc[keep], f" Display only: {MAX_POINTS:,} of {len(d):,} events drawn (random subset)."


def offsets_km(lat_deg, lon_deg, lat0_deg: float, lon0_deg: float) -> tuple[np.ndarray, np.ndarray]:
    """East and north offsets (km) of points from (lat0, lon0), local equirectangular projection."""
    lat = np.radians(np.asarray(lat_deg, dtype=float))
    lon = np.radians(np.asarray(lon_deg, dtype=float))
    phi0, lam0 = np.radians(lat0_deg), np.radians(lon0_deg)
    dlam = (lon - lam0 + np.pi) % (2 * np.pi) - np.pi
    return EARTH_RADIUS_KM * dlam * np.cos(phi0), EARTH_RADIUS_KM * (lat - phi0)


def _catalogues(bundle) -> list:
    """The run's catalogue first, then any other catalogue in the archive (clipped to the run's span)."""
    from degas.model import EventCatalog

    out = [bundle.records["catalog"]] if isinstance(bundle.records.get("catalog"), EventCatalog) else []
    if bundle.archive is not None:
        used = {c.meta.series_id for c in out}
        for e in bundle.archive.find(kind="seismic_catalog"):
            if e.series_id not in used:
                c = bundle.archive.load(e.series_id)
                t = c.data["time"]
                out.append(c.with_data(c.data.loc[(t >= bundle.start) & (t < bundle.end)].reset_index(drop=True)))
    return out


def _traces(fig: go.Figure, d, x, y) -> None:
    cls = d["event_class"].astype("string").fillna("other").to_numpy()
    for c in ("VT", "hybrid", "LP", "explosion", "tremor", "rockfall", "other"):
        sel = (cls == c) & np.isfinite(np.asarray(y, dtype=float))
        if sel.any():
            fig.add_trace(go.Scattergl(x=np.asarray(x)[sel], y=np.asarray(y)[sel], mode="markers", name=c,
                                       marker=dict(size=4, opacity=0.6, color=CLASS_COLOURS.get(c, "#555")),
                                       visible=True if c == "VT" else "legendonly"))


def location_figures(bundle) -> list[tuple[str, go.Figure, str]]:
    """(id, figure, caption) for the depth-time plot and the plan view, each from the first catalogue (the
    run's own, then the archive's others) that has depths or epicentres; empty without located events."""
    out = []
    cats = _catalogues(bundle)
    deep = next((c for c in cats if c.data["depth_m"].notna().any()), None)
    if deep is not None:
        d, more = _subset(deep.data.loc[deep.data["depth_m"].notna()])
        fig = go.Figure()
        _traces(fig, d, d["time"], d["depth_m"].to_numpy(dtype=float) / 1000.0)
        fig.update_layout(**LAYOUT, height=340, title="Depth of located events through time (VT shown; click the "
                          "legend for other classes)", yaxis=dict(title="depth below sea level (km)",
                                                                  autorange="reversed"))
        out.append(("fig-depth-time", fig, f"Catalogue {deep.meta.series_id}; depth below sea level as the "
                                           "catalogue gives it." + more))
    located = next((c for c in cats if (c.data["latitude_deg"].notna() & c.data["longitude_deg"].notna()).any()),
                   None)
    if located is not None:
        d, more = _subset(located.data.loc[located.data["latitude_deg"].notna()
                                           & located.data["longitude_deg"].notna()])
        p = bundle.project
        if p.vent_latitude is not None and p.vent_longitude is not None:
            lat0, lon0, ref = p.vent_latitude, p.vent_longitude, "the vent (position from the project file)"
        else:
            lat0, lon0 = float(d["latitude_deg"].median()), float(d["longitude_deg"].median())
            ref = "the median epicentre (no vent position in the project file)"
        x, y = offsets_km(d["latitude_deg"], d["longitude_deg"], lat0, lon0)
        fig = go.Figure()
        _traces(fig, d, x, y)
        fig.add_trace(go.Scatter(x=[0], y=[0], mode="markers", name="vent",
                                 marker=dict(symbol="triangle-up", size=13, color="#111")))
        fig.update_layout(**LAYOUT, height=520, title=f"Epicentres in km from {ref.split(' (')[0]}",
                          xaxis=dict(title="km east", zeroline=True),
                          yaxis=dict(title="km north", scaleanchor="x", scaleratio=1, zeroline=True))
        out.append(("fig-epicentres", fig, f"Catalogue {located.meta.series_id}; distances from {ref}, local flat "
                                           "projection; no basemap so that the page stays offline." + more))
    return out

"""The print-ready appendix: tables in display units (at most ~10 columns, rounded for print), the daily
aligned-series CSV with coverage, a station/instrument table, and static figures (PNG, SVG, PDF).

Static figures use plotly's own exporter (kaleido >= 1), which drives a Chromium browser. degas never
downloads a browser: it points kaleido at the system Chromium (``BROWSER_PATH``, read by kaleido's
browser helper, choreographer) and, without one, says in one line what to install. The full-precision SI
tables stay as CSV beside the display tables.
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import numpy as np
import pandas as pd

from degas.units import KG_S_TO_T_D

DAY = pd.Timedelta("1D")
NS = pd.Timedelta(1, "ns")  # ends are exclusive; the last day is the day of end - 1 ns
BROWSERS = ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable", "chrome")
STATIC_HINT = ("static figures not written: install the extra and a browser: pip install 'degas-volcano[static]' "
               "and apt-get install chromium (or set BROWSER_PATH to a Chrome/Chromium binary)")


def stations_table(bundle) -> pd.DataFrame:
    """Station / instrument table from the archive's metadata: id, kind, what, location, first/last datum."""
    rows = []
    for r in bundle.inventory:
        loc = "not recorded in the archive"
        rec = bundle.records.get("catalog")
        if (r["kind"] == "seismic_catalog" and rec is not None and hasattr(rec, "data")
                and "latitude_deg" in rec.data and r["series"] == getattr(rec.meta, "series_id", None)):
            d = rec.data
            if d["latitude_deg"].notna().any():
                loc = (f"epicentres around {d['latitude_deg'].median():.3f}°, {d['longitude_deg'].median():.3f}° "
                       "(median)")
        first, last = pd.Timestamp(r["first"]) if r["first"] else None, pd.Timestamp(r["last"]) if r["last"] else None
        rows.append({"station / id": r["station"] or r["series"], "kind": r["kind"].replace("_", " "),
                     "quantity": r["quantity"].replace("_", " "), "unit": r["unit"], "location": loc,
                     "first datum": first, "last datum": last, "records": r["count"]})
    return pd.DataFrame(rows)


def _day(ts) -> str:
    return "" if ts is None or pd.isna(ts) else pd.Timestamp(ts).strftime("%Y-%m-%d")


def _g(x, digits: int = 3) -> str:
    if x is None or (isinstance(x, float) and not np.isfinite(x)):
        return ""
    return f"{x:,.0f}" if abs(x) >= 1000 else f"{x:.{digits}g}"


def display_tables(bundle) -> dict[str, pd.DataFrame]:
    """Tables for print: display units, rounded, at most ~10 columns, end dates as inclusive last days."""
    out: dict[str, pd.DataFrame] = {}
    if bundle.budget is not None:
        bt = bundle.budget.to_frame()
        out["print_budget"] = pd.DataFrame({
            "first day": [_day(x) for x in bt["start"]],
            "last day": [_day(pd.Timestamp(x) - NS) for x in bt["end"]],
            "SO2 kt": [_g(x / 1e6) for x in bt["so2_mass_kg"]],
            "± kt (1σ total)": [_g(x / 1e6, 2) for x in bt["so2_mass_sd_total_kg"]],
            "gas days %": [f"{x:.0%}" for x in bt["gas_coverage"]],
            "DRE Mm³ (± 1σ)": [f"{_g(x / 1e6)} ± {_g(sd / 1e6, 2)}" for x, sd in
                               zip(bt["dre_volume_m3"], bt["dre_volume_sd_m3"], strict=True)],
            "SO2 kt (both)": [_g(x / 1e6) for x in bt["so2_mass_both_kg"]],
            "DRE Mm³ (both)": [_g(x / 1e6) for x in bt["dre_volume_both_m3"]],
            "kg/m³ (95%)": [f"{_g(r)} ({_g(lo)}–{_g(hi)})" if pd.notna(r) else "" for r, lo, hi in
                            zip(bt["ratio_kg_per_m3"], bt["ratio_p2_5_kg_per_m3"], bt["ratio_p97_5_kg_per_m3"],
                                strict=True)],
            "obs/exp (95%)": [f"{e:.2f} ({lo:.2f}–{hi:.2f})" if pd.notna(e) else "" for e, lo, hi in
                              zip(bt.get("excess_factor", pd.Series(np.nan, index=bt.index)),
                                  bt.get("excess_p2_5", pd.Series(np.nan, index=bt.index)),
                                  bt.get("excess_p97_5", pd.Series(np.nan, index=bt.index)), strict=True)],
        })
    if bundle.regimes is not None:
        r = bundle.regimes.to_frame()
        out["print_regimes"] = pd.DataFrame({
            "first day": [_day(x) for x in r["start"]], "last day": [_day(pd.Timestamp(x) - NS) for x in r["end"]],
            "days": [f"{x:.0f}" for x in r["duration_days"]], "label": r["label"],
            "SO2 t/d": [_g(x) for x in r["gas_t_d"]], "× passive": [_g(x, 2) for x in r["gas_to_baseline"]],
            "magma output": [_g(x, 2) for x in r["magma_level"]],
            "gas/magma vs coupled": [_g(x, 2) for x in r["ratio_vs_expected"]]})
    if bundle.review:
        rows = []
        for x in bundle.review:
            ci = (f"{_g(x.ratio, 2)} ({_g(x.ratio_low, 2)}–{_g(x.ratio_high, 2)})" if np.isfinite(x.ratio_low)
                  else _g(x.ratio, 2))
            rows.append({"series": x.series_id, "unit": x.display_unit or "", "week": _g(x.level_window),
                         "baseline": _g(x.level_baseline), "ratio (95%)": ci, "robust z": _g(x.robust_z, 2),
                         "coverage": f"{x.coverage_window:.0%}", "per": "sample" if x.per_sample else "day",
                         "last day": _day(x.periods.window_end - DAY)})
        out["print_weekly_review"] = pd.DataFrame(rows)
    if bundle.volumes is not None:
        v = bundle.volumes
        out["print_volumes"] = pd.DataFrame([{
            "first survey": _day(v.start), "last survey": _day(v.end), "surveys Mm³ DRE": _g(v.survey_m3 / 1e6),
            "± Mm³": _g(v.survey_sd_m3 / 1e6, 2),
            "rate series Mm³ DRE": f"{_g(v.rate_m3 / 1e6)} ± {_g(v.rate_sd_m3 / 1e6, 2)}",
            "rate coverage": f"{v.rate_coverage:.0%}", "rate total": "lower bound" if v.rate_is_lower_bound else
            "complete", "difference Mm³ (± 1σ)": f"{_g(v.difference_m3 / 1e6)} ± {_g(v.difference_sd_m3 / 1e6, 2)}",
            "rate / surveys": _g(v.ratio, 3)}])
    st = stations_table(bundle)
    if not st.empty:
        st = st.copy()
        st["first datum"] = [_day(x) for x in st["first datum"]]
        st["last datum"] = [_day(x) for x in st["last datum"]]
        out["print_stations"] = st
    return out


def aligned_daily(bundle) -> pd.DataFrame:
    """Every analysed series on the project grid with its coverage (SI units; gas also in t/d)."""
    al = bundle.aligned
    if al is None:
        return pd.DataFrame()
    f = al.frame.copy()
    if "gas" in f:
        f["gas_t_d"] = f["gas"] * KG_S_TO_T_D
    f.index.name = "bin_start_utc"
    return f.reset_index()


def find_browser() -> str | None:
    """The Chrome/Chromium that kaleido should drive: ``BROWSER_PATH`` if set, else the system one on PATH."""
    env = os.environ.get("BROWSER_PATH")
    if env and Path(env).exists():
        return env
    for name in BROWSERS:
        p = shutil.which(name)
        if p:
            return p
    return None


def static_export_problem() -> str | None:
    """None when static export can run, else the one line saying what to install."""
    try:
        import kaleido  # noqa: F401
    except ImportError:
        return STATIC_HINT
    return None if find_browser() else STATIC_HINT


def write_static_figures(figs: dict, directory: Path, formats: tuple[str, ...] = ("png", "svg"),
                         width: int = 1100, scale: float = 1.5, title: str = "Figures"
                         ) -> tuple[list[Path], str | None]:
    """Write every figure as PNG and SVG with plotly's exporter, and one PDF of all figures (the SVGs with their
    captions, printed by the same Chromium); returns (paths, problem line or None)."""
    problem = static_export_problem()
    if problem:
        return [], problem
    os.environ.setdefault("BROWSER_PATH", find_browser() or "")
    directory.mkdir(parents=True, exist_ok=True)
    items, paths = [], []
    for fid, (fig, _cap) in figs.items():
        fig = _without_webgl(fig)
        h = fig.layout.height or 450
        for fmt in formats:
            p = directory / f"{fid}.{fmt}"
            items.append((fig, p, fmt, h))
            paths.append(p)
    specs = [dict(fig=fig.to_plotly_json(), path=path, opts=dict(format=fmt, width=width, height=h,
                                                                 scale=scale if fmt == "png" else 1.0))
             for fig, path, fmt, h in items]
    problem = None
    for _attempt in range(2):  # a loaded machine can time a render out once; a second try usually passes
        try:
            import kaleido

            # plotly's own exporter; a generous timeout per figure (kaleido's default is 90 s)
            kaleido.write_fig_from_object_sync(specs, kopts={"timeout": 300})
            problem = None
            break
        except Exception as exc:  # noqa: BLE001 - the exporter's failures (browser crash, timeout) become one line
            first = str(exc).splitlines()[0] if str(exc) else ""
            problem = f"static figures not written: {type(exc).__name__}: {first}"
    if problem:
        return [], problem
    if "svg" in formats:
        pdf, problem = _figures_pdf(figs, directory, title)
        if pdf is None:
            return paths, problem
        paths.append(pdf)
    return paths, None


def _without_webgl(fig):
    """The figure with WebGL scatter traces drawn as SVG scatter (a headless browser renders WebGL slowly in
    software, and vector output needs SVG traces anyway); the page's interactive figure is unchanged."""
    import plotly.graph_objects as go

    if not any(t.type == "scattergl" for t in fig.data):
        return fig
    d = fig.to_dict()
    for t in d["data"]:
        if t.get("type") == "scattergl":
            t["type"] = "scatter"
    return go.Figure(d)


def _figures_pdf(figs: dict, directory: Path, title: str) -> tuple[Path | None, str | None]:
    """One PDF of every figure (SVG, vector) with its caption, printed by headless Chromium."""
    import html
    import subprocess
    import tempfile

    parts = [f"<h1>{html.escape(title)}</h1>"]
    for fid, (_fig, cap) in figs.items():
        parts.append(f'<figure><img src="{fid}.svg" alt="{html.escape(fid)}"><figcaption>{html.escape(fid)}. '
                     f"{html.escape(cap or '')}</figcaption></figure>")
    page = directory / "figures-print.html"
    page.write_text("<!DOCTYPE html><html><head><meta charset='utf-8'><style>body{font-family:sans-serif;"
                    "font-size:10pt}figure{margin:0 0 14pt;break-inside:avoid}img{width:100%}"
                    "figcaption{font-size:9pt;color:#333}</style></head><body>" + "".join(parts) + "</body></html>",
                    encoding="utf-8")
    out = directory / "figures.pdf"
    with tempfile.TemporaryDirectory() as prof:
        try:
            subprocess.run([find_browser() or "chromium", "--headless", "--no-sandbox", "--disable-gpu",
                            "--no-first-run", f"--user-data-dir={prof}", "--no-pdf-header-footer",
                            f"--print-to-pdf={out}", page.resolve().as_uri()], capture_output=True, timeout=180)
        except (OSError, subprocess.SubprocessError) as exc:
            return None, f"figures.pdf not written: {exc}"
    page.unlink(missing_ok=True)
    if not out.exists() or out.stat().st_size == 0:
        return None, "figures.pdf not written: the browser printed nothing"
    return out, None

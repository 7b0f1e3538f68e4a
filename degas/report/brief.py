"""The one-screen weekly brief: this week against the last few weeks, the regime, the project's thresholds.

Rows are ordered by what matters on a Monday (gas, magma output, LP + hybrid, VT, amplitude, ratios), each with
a sparkline of its weekly values, this week, last week, the baseline, the ratio to the baseline with its 95 %
interval, and coverage judged against what the instrument can deliver. Thresholds are the project's working
values (``[thresholds]``), never official alert levels. The numbers come from :mod:`degas.analysis.review` and
:mod:`degas.analysis.weekly`; this module only arranges them.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from degas.analysis.review import display_factor
from degas.analysis.weekly import ROLE_OF_KIND, ROLE_ORDER, coverage_vs_capability, week_over_week
from degas.report.html import REGIME_LABELS, esc

DAY = pd.Timedelta("1D")
THRESHOLD_NOTE = ("Thresholds are this observatory's own working values from the project file, not official alert "
                  "levels; alert levels come only from the responsible observatory and civil-protection authorities.")
_NAMES = {"so2_flux": "SO2 flux", "co2_flux": "CO2 flux", "h2s_flux": "H2S flux", "extrusion_rate": "extrusion rate",
          "co2_so2_ratio": "CO2/SO2", "rsam": "seismic amplitude", "ssam": "seismic spectral amplitude"}


@dataclass
class BriefRow:
    """One line of the brief (display units)."""

    key: str  # series id or event group
    role: str
    name: str
    unit: str
    weeks: pd.DataFrame  # week_over_week(): week_start, last_day, value, days
    now: float
    last: float
    baseline: float
    ratio: float
    ratio_low: float
    ratio_high: float
    coverage: float | None
    coverage_note: str = ""
    crossed: list[str] = field(default_factory=list)


def _daily(bundle, series) -> tuple[pd.Series, str, bool]:
    """Daily values (display unit) over the brief's weeks, or the samples themselves for sparse series."""
    from degas.grid import make_grid, resample

    per, n = bundle.periods, bundle.project.brief_weeks
    start = per.window_end - pd.Timedelta(days=7 * n)
    factor, unit = display_factor(series)
    review = next((r for r in bundle.review if r.series_id == series.meta.series_id), None)
    if review is not None and review.per_sample:
        d = series.data
        sel = (d["time"] >= start) & (d["time"] < per.window_end)
        return pd.Series(d.loc[sel, "value"].to_numpy(float) * factor, index=pd.DatetimeIndex(d.loc[sel, "time"])), \
            unit or "", True
    grid = make_grid(start, per.window_end - pd.Timedelta(1, "ns"), "1D")
    daily = resample(series, "1D", grid=grid, min_coverage=bundle.project.min_coverage)
    return daily["value"] * factor, unit or "", False


def _series_rows(bundle) -> list[BriefRow]:
    per, n = bundle.periods, bundle.project.brief_weeks
    cap = dict(bundle.project.capability)
    rows = []
    for r in bundle.review:
        if bundle.archive is None:
            break
        try:
            rec = bundle.records.get(r.series_id) or bundle.archive.load(r.series_id)
        except Exception:  # noqa: BLE001 - a series the archive cannot load is simply left out of the brief
            continue
        if rec.meta.series_id != r.series_id:
            rec = bundle.archive.load(r.series_id)
        daily, unit, sparse = _daily(bundle, rec)
        weeks = week_over_week(daily, per.window_end, n)
        c = cap.get(r.series_id, cap.get(r.station or "", None))
        cov = coverage_vs_capability(r.coverage_window, c)
        note = (f"of the {c:.0%} of the day the instrument can cover" if c is not None else
                ("of the samples expected" if sparse else "of the week"))
        name = _NAMES.get(r.quantity, r.quantity.replace("_", " "))
        if r.kind == "amplitude":
            name = "seismic amplitude"
        if r.station:
            name += f" {r.station}"
        rows.append(BriefRow(r.series_id, ROLE_OF_KIND.get(r.kind, "other"), name, unit, weeks,
                             r.level_window, weeks["value"].iloc[-2] if len(weeks) > 1 else np.nan, r.level_baseline,
                             r.ratio, r.ratio_low, r.ratio_high, cov, note))
    return rows


def _event_rows(bundle) -> list[BriefRow]:
    from degas.grid import event_counts, make_grid
    from degas.model import EventCatalog

    cat = bundle.records.get("catalog")
    if cat is None:
        return []
    per, n = bundle.periods, bundle.project.brief_weeks
    start = per.window_end - pd.Timedelta(days=7 * n)
    grid = make_grid(start, per.window_end - pd.Timedelta(1, "ns"), "1D")
    if isinstance(cat, EventCatalog):
        counts = event_counts(cat, "1D", grid=grid, classes=("VT", "LP", "hybrid", "rockfall"))
    else:  # counts published by class, not a catalogue: rates from the review only, no weekly line
        counts = pd.DataFrame()
    rates = {r.event_class: r for r in bundle.review_events}
    rows = []
    lp = tuple(bundle.project.lp_classes)
    for key, role, classes in (("lp_hybrid", "lp_hybrid", lp), ("VT", "vt", ("VT",))):
        cols = [c for c in classes if c in counts]
        daily = (counts[cols].sum(axis=1).astype(float) if cols else
                 pd.Series(np.nan, index=pd.date_range(start, per.window_end, freq="D", inclusive="left")))
        weeks = week_over_week(daily, per.window_end, n, how="mean")
        rc = [rates[c] for c in classes if c in rates]
        if not rc and not np.nansum(daily.to_numpy()):
            continue
        from degas.analysis.review import poisson_rate_ratio

        n1, n2 = sum(x.n_window for x in rc), sum(x.n_baseline for x in rc)
        ratio, lo, hi, _p = poisson_rate_ratio(n1, per.window_days, n2, per.baseline_days)
        rows.append(BriefRow(key, role, "+".join(classes).replace("+", " + ") + " events", "per day", weeks,
                             n1 / per.window_days, weeks["value"].iloc[-2] if len(weeks) > 1 else np.nan,
                             n2 / per.baseline_days, ratio, lo, hi, None, "catalogue"))
    return rows


def brief_rows(bundle) -> list[BriefRow]:
    """Every row of the brief, in the order of :data:`ROLE_ORDER`, with the thresholds each crosses."""
    rows = _series_rows(bundle) + _event_rows(bundle)
    for row in rows:
        for t in bundle.project.thresholds:
            if t.series in (row.key, row.role) and t.crossed(row.now, row.ratio):
                row.crossed.append(f"{t.label} ({t.describe()})")
    return sorted(rows, key=lambda r: (ROLE_ORDER.index(r.role), r.key))


def sparkline(values, width: int = 120, height: int = 26) -> str:
    """A small inline SVG line of the weekly values (newest dot filled); empty weeks leave gaps."""
    v = np.asarray(values, dtype=float)
    ok = np.isfinite(v)
    if ok.sum() == 0:
        return '<span class="muted">no data</span>'
    lo, hi = float(np.nanmin(v)), float(np.nanmax(v))
    span = hi - lo or 1.0
    xs = np.linspace(4, width - 4, v.size)
    ys = height - 4 - (v - lo) / span * (height - 8)
    segs, cur = [], []
    for x, y, good in zip(xs, ys, ok, strict=True):
        if good:
            cur.append(f"{x:.1f},{y:.1f}")
        elif cur:
            segs.append(cur)
            cur = []
    if cur:
        segs.append(cur)
    lines = "".join(f'<polyline points="{" ".join(s)}"/>' for s in segs if len(s) > 1)
    last = np.flatnonzero(ok)[-1]
    return (f'<svg class="spark" width="{width}" height="{height}" viewBox="0 0 {width} {height}" role="img" '
            f'aria-label="weekly values">{lines}<circle cx="{xs[last]:.1f}" cy="{ys[last]:.1f}" r="2.6"/></svg>')


def _n(x: float) -> str:
    if x is None or not np.isfinite(x):
        return "–"
    return f"{x:,.0f}" if abs(x) >= 1000 else f"{x:.3g}"


def _ratio(r: BriefRow) -> str:
    if not np.isfinite(r.ratio):
        return "–"
    ci = f" ({_n(r.ratio_low)}–{_n(r.ratio_high)})" if np.isfinite(r.ratio_low) and np.isfinite(r.ratio_high) else ""
    return f"×{_n(r.ratio)}{ci}"


def regime_line(bundle) -> str:
    now, prev = bundle.review_regime.get("window"), bundle.review_regime.get("previous")
    if bundle.regimes is None:
        return "Regime: not labelled (the regime step did not run)."
    return (f"Regime this week: {REGIME_LABELS.get(now, now or 'no label')}; last week: "
            f"{REGIME_LABELS.get(prev, prev or 'no label')}.")


def brief_html(bundle, rows: list[BriefRow] | None = None) -> str:
    """The brief as HTML (one screen: a short list and one table of at most nine columns)."""
    rows = brief_rows(bundle) if rows is None else rows
    per = bundle.periods
    n = bundle.project.brief_weeks
    crossed = [(r.name, c) for r in rows for c in r.crossed]
    if not bundle.project.thresholds:
        th = "<li>No working thresholds are set in the project file ([thresholds]).</li>"
    elif crossed:
        th = "".join(f'<li class="crossed">Threshold crossed: {esc(name)}: {esc(c)}</li>' for name, c in crossed)
    else:
        th = f"<li>None of the project's {len(bundle.project.thresholds)} working thresholds is crossed.</li>"
    head = "".join(f"<th>{h}</th>" for h in (
        "series", f"last {n} weeks", "this week", "last week", f"{per.baseline_days:.0f}-day baseline",
        "× baseline (95 %)", "coverage", "threshold"))
    body = []
    for r in rows:
        cov = "–" if r.coverage is None else f"{r.coverage:.0%}"
        title = esc(r.coverage_note)
        mark = "crossed" if r.crossed else ""
        body.append(f'<tr class="{mark}"><td class="t">{esc(r.name)} <span class="unit">{esc(r.unit)}</span></td>'
                    f"<td>{sparkline(r.weeks['value'])}</td><td>{_n(r.now)}</td><td>{_n(r.last)}</td>"
                    f"<td>{_n(r.baseline)}</td><td>{_ratio(r)}</td><td title=\"{title}\">{cov}</td>"
                    f'<td class="t">{esc("; ".join(c.split(" (")[0] for c in r.crossed))}</td></tr>')
    return (f'<p class="brief-week">Week {per.window_start:%Y-%m-%d} to {(per.window_end - DAY):%Y-%m-%d} '
            f"(last day included), against the {n} weeks before and the {per.baseline_days:.0f}-day baseline.</p>"
            f'<ul class="brief-list"><li>{esc(regime_line(bundle))}</li>{th}</ul>'
            f'<div class="scroll"><table class="data brief">'
            f'<thead><tr>{head}</tr></thead><tbody>{"".join(body)}</tbody></table></div>'
            f'<p class="caption">{esc(THRESHOLD_NOTE)} Levels are medians of daily values (weekly-sampled series: '
            "of their samples); event rates are means per day. Coverage is judged against what each instrument can "
            "deliver (project [coverage]). Rate-ratio intervals are exact Poisson; level-ratio intervals are "
            "bootstrap percentiles; both are ratios of positive numbers and never go below zero.</p>")


def brief_table(rows: list[BriefRow]) -> pd.DataFrame:
    """The brief as a plain table (terminal and CSV)."""
    return pd.DataFrame([{"series": r.name, "unit": r.unit, "this week": r.now, "last week": r.last,
                          "baseline": r.baseline, "ratio": r.ratio, "ratio_low": r.ratio_low,
                          "ratio_high": r.ratio_high, "coverage": r.coverage,
                          "thresholds crossed": "; ".join(r.crossed)} for r in rows])

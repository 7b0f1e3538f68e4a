"""The main job: every analysis on an archive, gathered for the report.

This module only strings library calls together (like the CLI, but returning values): pick the series,
align them, detect change points, label regimes, cross-correlate, test Granger, run the budget, the
seismicity metrics and the weekly review. A step that cannot run (too little data, say) is recorded with its
reason instead of stopping the whole run: a report that says what it could not do is more useful on a
Monday morning than no report.
"""

from __future__ import annotations

import dataclasses
import time
import warnings
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from degas.errors import DegasError, NotEnoughDataError
from degas.project import Project
from degas.store import Archive, SeriesEntry, entry_display


@dataclass
class RunBundle:
    """Results of one run (mutable while the run fills it; read-only by convention afterwards)."""

    project: Project
    archive_root: str
    mode: str  # "weekly" or "retrospective"
    start: pd.Timestamp
    end: pd.Timestamp
    run_time: str
    inventory: list[dict]
    sources: dict
    assumptions: list[str]
    roles: dict[str, str | tuple[str, ...]]
    records: dict = field(default_factory=dict)  # name -> canonical record used (full data)
    archive: Archive | None = None
    aligned: object | None = None  # AlignedTable on the analysis grid, over the span of the run
    aligned_full: object | None = None  # the same over the whole record up to the run's end (for regimes)
    changepoints: dict = field(default_factory=dict)  # name -> ChangePointResult
    regimes: object | None = None
    volume_slopes: object | None = None  # SlopeChangeResult of survey cumulative volumes (changes of slope)
    xcorr: object | None = None
    xcorr_intervals: list = field(default_factory=list)  # (start, end, label, CrossCorrelationResult)
    rolling: object | None = None
    granger: object | None = None
    budget: object | None = None
    co2: object | None = None
    volumes: object | None = None  # VolumeComparison: survey volumes vs the summed rate series
    seismic: dict = field(default_factory=dict)
    periods: object | None = None
    review: list = field(default_factory=list)
    review_events: tuple = ()
    review_regime: dict = field(default_factory=dict)
    timings: list[tuple[str, float]] = field(default_factory=list)
    skipped: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    depths: object | None = None  # degas.depths.DepthContext: inclusion storage depths beside VT depths
    petrology: object | None = None  # degas.depths.RunPetrology: the one petrological input of the run


def _pick(entries: list[SeriesEntry], kind: str, prefer_species: str | None = None) -> list[SeriesEntry]:
    out = [e for e in entries if e.meta.kind == kind]
    if prefer_species:
        out = [e for e in out if (e.meta.species or "").upper() == prefer_species] or out
    return out


def choose_roles(archive: Archive, project: Project) -> dict:
    """Which stored series are the gas, magma-output, ratio and catalogue of this run."""
    entries = archive.entries()
    ids = {e.series_id for e in entries}
    for sid in (*project.gas, project.magma, project.ratio, project.catalog):
        if sid and sid not in ids:
            stored = ", ".join(sorted(ids))
            raise DegasError(f"project names series {sid!r}, which is not in the archive; stored: {stored}")
    want = {"gas": ("gas_flux",), "magma": ("extrusion_rate", "erupted_volume", "chronology"),
            "ratio": ("gas_ratio",), "catalog": ("seismic_catalog",)}
    for role, kinds in want.items():
        for sid in (project.gas if role == "gas" else (getattr(project, role),)):
            if sid and archive.entry(sid).meta.kind not in kinds:
                raise DegasError(f"project [series] {role} = {sid!r} is a {archive.entry(sid).meta.kind} series; "
                                 f"{role} must be {' or '.join(kinds)}")
    gas = project.gas or tuple(e.series_id for e in _pick(entries, "gas_flux", "SO2")
                               if (e.meta.species or "").upper() == "SO2")
    magma = project.magma
    magma_is = None
    if magma is None:
        for kind in ("extrusion_rate", "erupted_volume", "chronology"):
            cands = _pick(entries, kind)
            if cands:
                magma = max(cands, key=lambda e: e.n_rows).series_id
                magma_is = kind
                break
    ratio = project.ratio or next((e.series_id for e in _pick(entries, "gas_ratio")), None)
    cats = _pick(entries, "seismic_catalog")
    catalog = project.catalog or (max(cats, key=lambda e: e.n_rows).series_id if cats else None)
    chron = next((e.series_id for e in _pick(entries, "chronology")), None)
    amps = tuple(e.series_id for e in _pick(entries, "amplitude"))
    if magma is not None and magma_is is None:
        magma_is = archive.entry(magma).meta.kind
    counts = () if catalog else _counts_role(entries)  # counts by class stand in for a catalogue
    return {"gas": tuple(gas), "magma": magma, "magma_kind": magma_is, "ratio": ratio, "catalog": catalog,
            "chronology": chron, "amplitude": amps, "counts": counts}


def _counts_role(entries: list[SeriesEntry]) -> tuple[str, ...]:
    """The event_counts series (one per class) of the station with the most rows, when there is no catalogue."""
    counts = _pick(entries, "event_counts")
    if not counts:
        return ()
    by_station: dict = {}
    for e in counts:
        by_station.setdefault(e.meta.station, []).append(e)
    best = max(by_station.values(), key=lambda es: sum(e.n_rows for e in es))
    return tuple(e.series_id for e in best)


def run_all(archive: Archive, project: Project, *, mode: str = "weekly", before: pd.Timestamp | None = None,
            start: pd.Timestamp | None = None, end: pd.Timestamp | None = None, progress=None,
            only: tuple[str, ...] | None = None) -> RunBundle:
    """Run every analysis. ``mode`` "weekly": review window before ``before`` (default: the day after the last
    datum); "retrospective": the episode from ``start`` to ``end`` (default: the whole record). ``only`` names
    the steps to run after loading and aligning (the commands use it to print exactly what the report says)."""
    from degas.analysis.review import review_periods

    if mode not in ("weekly", "retrospective"):
        raise DegasError(f"unknown mode {mode!r}; valid: weekly, retrospective")
    roles = choose_roles(archive, project)
    if not roles["gas"] and roles["magma"] is None and roles["catalog"] is None and not roles.get("counts"):
        raise DegasError(f"{archive.root}: no gas, magma-output or seismic series to analyse")
    inv = [entry_display(e) for e in archive.entries()]
    spans = [(pd.Timestamp(r["first"]), pd.Timestamp(r["last"])) for r in inv
             if r["first"] and r["kind"] != "melt_inclusions"]  # inclusion dates do not set the run span
    data_start = min(s for s, _ in spans)
    data_end = max(e for _, e in spans)
    assumptions = sorted({a for e in archive.entries() for p in e.provenance for a in p.assumptions})
    b = RunBundle(project, str(archive.root), mode, data_start, data_end,
                  pd.Timestamp.now(tz="UTC").isoformat(timespec="seconds"), inv, archive.sources(), assumptions, roles,
                  archive=archive)
    if mode == "weekly":
        before = pd.Timestamp(before) if before is not None else (data_end + pd.Timedelta("1D")).floor("D")
        before = before.tz_localize("UTC") if before.tzinfo is None else before
        b.periods = review_periods(before, window_days=project.window_days, baseline_days=project.baseline_days)
        b.end = min(data_end, b.periods.window_end)
    else:
        def utc(x):
            t = pd.Timestamp(x)
            return t.tz_localize("UTC") if t.tzinfo is None else t.tz_convert("UTC")

        # the episode is [start, end): ``end`` is exclusive (the CLI passes the day after the last day)
        b.start = utc(start) if start is not None else data_start
        b.end = utc(end) if end is not None else data_end + pd.Timedelta(1, "ns")
        if b.end <= b.start:
            raise DegasError("the episode end must be after its start")
        # the review table of a retrospective covers the last days of the episode
        b.periods = review_periods(b.end.ceil("D"), window_days=project.window_days,
                                   baseline_days=project.baseline_days)

    def step(name: str, fn) -> None:
        if only is not None and name != "load and align" and name not in only:
            return
        t0 = time.perf_counter()
        if progress:
            progress(name)
        if b.aligned is None and name != "load and align":
            b.skipped.append(f"{name}: not run: the series could not be loaded and aligned")
            return
        try:
            fn()
        except DegasError as exc:
            b.skipped.append(f"{name}: not run: {exc}")
        except Exception as exc:  # noqa: BLE001 - a library failing inside a step is recorded, never fatal
            text = " ".join(str(exc).split())[:300]
            b.skipped.append(f"{name}: not run: {type(exc).__name__} inside the analysis: {text}")
        b.timings.append((name, time.perf_counter() - t0))

    step("load and align", lambda: _align(archive, b))
    step("change points", lambda: _changepoints(b))
    step("regimes", lambda: _regimes(b))
    step("cross-correlation", lambda: _xcorr(b))
    step("rolling coupling", lambda: _rolling(b))
    step("Granger tests", lambda: _granger(b))
    step("storage depths", lambda: _depths(archive, b))
    step("gas budget", lambda: _budget(b))
    step("erupted volume", lambda: _volumes(b))
    step("seismicity", lambda: _seismicity(b))
    step("weekly review", lambda: _review(b))
    return b


def _clip(rec, start, end):
    """Rows that overlap [start, end]: a phase or survey interval that began earlier but runs into the span
    is kept (the grid then counts only its part inside)."""
    col = "start" if "start" in rec.data.columns and "value" not in rec.data.columns else "time"
    t = rec.data[col]
    keep = t <= end
    if "end" in rec.data.columns:
        e = rec.data["end"]
        keep &= (t >= start) | (e > start) | (e.isna() & (col == "start"))
    else:
        keep &= t >= start
    return rec.with_data(rec.data.loc[keep].reset_index(drop=True))


def _align(archive: Archive, b: RunBundle) -> None:
    from degas.volumes import rates_from_cumulative

    recs = {}
    for sid in b.roles["gas"]:
        recs[sid] = archive.load(sid)
    if b.roles["magma"]:
        m = archive.load(b.roles["magma"])
        if m.meta.kind == "erupted_volume":
            m = rates_from_cumulative(m)
            b.notes.append(f"magma output: mean extrusion rate between surveys of {b.roles['magma']}")
        recs["magma"] = m
    if b.roles["chronology"]:
        recs["chronology"] = archive.load(b.roles["chronology"])
    if b.roles["ratio"]:
        recs["ratio"] = archive.load(b.roles["ratio"])
    if b.roles["catalog"]:
        recs["catalog"] = archive.load(b.roles["catalog"])
    elif b.roles.get("counts"):
        from degas.classcounts import ClassCounts

        recs["catalog"] = ClassCounts.from_series([archive.load(sid) for sid in b.roles["counts"]])
        b.notes.append("seismicity: published counts by event class (" + ", ".join(b.roles["counts"]) + "), "
                       "taken as rates; no magnitudes, so no energy or b-value")
    for sid in b.roles["amplitude"]:
        recs[sid] = archive.load(sid)
    last = b.end - pd.Timedelta(1, "ns") if b.mode == "retrospective" else b.periods.window_end - pd.Timedelta(1, "ns")
    # everything known up to the end of the run (a weekly review sees nothing after its window)
    history = {k: _clip(r, pd.Timestamp.min.tz_localize("UTC"), last) for k, r in recs.items()}
    recs = {k: _clip(r, b.start, last) for k, r in history.items()} if b.mode == "retrospective" else history
    b.records = recs
    b.aligned = _aligned(b, recs, start=b.start if b.mode == "retrospective" else None,
                         end=last if b.mode == "retrospective" else None)
    b.aligned_full = _aligned(b, history) if b.mode == "retrospective" else b.aligned


def _aligned(b: RunBundle, recs: dict, start=None, end=None):
    """Align records and add the combined daily gas flux (mean of the stations available each bin)."""
    from degas.align import align

    p = b.project
    table = align(recs, p.step, min_coverage=p.min_coverage, start=start, end=end)
    gas_cols = [sid for sid in b.roles["gas"]]
    if gas_cols:
        f = table.frame
        vals = f[gas_cols].to_numpy(dtype=float)
        with np.errstate(all="ignore"), warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # days without any station: NaN, on purpose
            combined = np.nanmean(vals, axis=1) if vals.size else np.full(len(f), np.nan)
        table.frame["gas"] = combined
        unc = f[[f"{c}_uncertainty" for c in gas_cols]].to_numpy(dtype=float)
        n = np.sum(np.isfinite(vals), axis=1)
        with np.errstate(all="ignore"):
            table.frame["gas_uncertainty"] = np.sqrt(np.nansum(unc**2, axis=1)) / np.where(n > 0, n, np.nan)
        kinds = dict(table.kinds)
        kinds["gas"] = "gas_flux"
        object.__setattr__(table, "kinds", kinds)
        note = f"gas flux: mean of the stations available in each bin ({', '.join(gas_cols)})"
        if len(gas_cols) > 1 and note not in b.notes:
            b.notes.append(note)
    return table


def _series(b: RunBundle, name: str) -> pd.Series:
    return b.aligned.series(name)


def _changepoints(b: RunBundle) -> None:
    from degas.analysis.changepoints import detect_changepoints

    p = b.project
    kw = {"min_segment": p.min_segment, "max_gap": p.max_gap, "penalty": p.penalty}
    al = b.aligned_full  # segments come from the whole history, so that a short episode keeps its context
    targets = {}
    if "gas" in al.kinds:
        targets["gas"] = (al.frame[["gas"]], {"gas": "log"})
    if "magma" in al.kinds:
        kind = al.kinds["magma"]
        targets["magma"] = (al.frame[["magma"]], {"magma": "identity"})
        if kind == "chronology":
            targets.pop("magma")
    # a chronology needs no change points: its phase boundaries are the magma-output changes (see _regimes)
    if "ratio" in al.kinds:
        targets["ratio"] = (al.frame[["ratio"]], {"ratio": "identity"})
    if "catalog" in al.kinds:
        cls = [c for c in p.lp_classes if f"catalog_{c}" in al.frame.columns]
        if cls:
            lp = al.frame[[f"catalog_{c}" for c in cls]].sum(axis=1, min_count=len(cls)).to_frame("lp_hybrid_rate")
            targets["lp_hybrid_rate"] = (lp, {"lp_hybrid_rate": "anscombe"})
    if b.roles.get("magma_kind") == "erupted_volume" and b.archive is not None:
        # survey volumes: a change of output rate is a change of slope of the cumulative volume, not a level shift
        from degas.analysis.volume_slopes import detect_slope_changes

        targets.pop("magma", None)
        try:
            b.volume_slopes = detect_slope_changes(b.archive.load(b.roles["magma"]))
        except DegasError as exc:
            b.skipped.append(f"slope changes of the survey volumes: not run: {exc}")
    for name, (frame, transform) in targets.items():
        try:
            b.changepoints[name] = detect_changepoints(frame, transform=transform, **kw)
        except DegasError as exc:
            b.skipped.append(f"change points of {name}: not run: {exc}")


def _regimes(b: RunBundle) -> None:
    """Regimes from the fitted gas–magma relation (issue 9), labelled on the whole history."""
    from degas.analysis.regimes import classify_from_relation
    from degas.units import KG_S_TO_T_D

    al = b.aligned_full
    if "gas" not in al.kinds:
        raise DegasError("needs the gas flux")
    mname = "magma" if "magma" in al.kinds else "chronology" if "chronology" in al.kinds else None
    if mname is None:
        raise DegasError("needs a magma output (extrusion rate, survey volumes or an eruption chronology)")
    measure = "eruptive_fraction" if al.kinds[mname] == "chronology" else "extrusion_rate"
    rec = b.records.get("magma")
    if measure == "extrusion_rate" and rec is not None and getattr(rec.meta, "volume_basis", "dre") is None:
        measure = "extrusion_rate_unknown_basis"
    p = b.project
    g, m = al.pair("gas", mname)
    bg = None if p.gas_background is None else p.gas_background / KG_S_TO_T_D
    res = classify_from_relation(g, m, magma_measure=measure, gas_background=bg, magma_threshold=p.magma_threshold,
                                 band=p.relation_band, max_lag=p.rolling_max_lag, min_segment=p.min_segment,
                                 max_gap=p.max_gap, penalty=p.penalty, n_boot=p.bootstrap,
                                 petrology=_petrology(b).inputs,
                                 seed=p.seed)
    if b.mode == "retrospective":  # labelled on the whole history, shown for the episode only
        iv = res.intervals
        iv = iv[(iv["end"] > b.start) & (iv["start"] < b.end)].copy()
        iv["start"] = iv["start"].clip(lower=b.start)
        iv["end"] = iv["end"].clip(upper=b.end)
        iv["duration_days"] = (iv["end"] - iv["start"]) / pd.Timedelta("1D")
        res = dataclasses.replace(res, intervals=iv.reset_index(drop=True))
    b.regimes = res


def _gas_magma(b: RunBundle) -> tuple[pd.Series, pd.Series]:
    if "gas" not in b.aligned.kinds:
        raise DegasError("no gas flux series in the archive")
    mname = "magma" if "magma" in b.aligned.kinds else "chronology"
    if mname not in b.aligned.kinds:
        raise DegasError("no magma-output series (extrusion rate, survey volumes or chronology)")
    return b.aligned.pair("gas", mname)


def _xcorr(b: RunBundle) -> None:
    from degas.analysis.xcorr import cross_correlate

    p = b.project
    g, m = _gas_magma(b)
    b.xcorr = cross_correlate(g, m, max_lag=p.max_lag, variant=p.variant, n_surrogates=p.surrogates,
                              n_boot=p.bootstrap, seed=p.seed, gas_name="SO2 flux", magma_name="magma output")
    if b.regimes is not None:
        for r in b.regimes.intervals.itertuples():
            if r.label != "coupled" or r.duration_days < 60:
                continue
            sel = (g.index >= r.start) & (g.index < r.end)
            try:
                res = cross_correlate(g[sel], m[sel], max_lag=p.rolling_max_lag, variant=p.variant,
                                      n_surrogates=p.surrogates, n_boot=p.bootstrap, seed=p.seed,
                                      gas_name="SO2 flux", magma_name="magma output")
            except DegasError as exc:
                b.skipped.append(f"lag in coupled interval {r.start:%Y-%m-%d}: not run: {exc}")
                continue
            b.xcorr_intervals.append((r.start, r.end, r.label, res))


def _rolling(b: RunBundle) -> None:
    from degas.analysis.coupling import rolling_coupling

    p = b.project
    g, m = _gas_magma(b)
    b.rolling = rolling_coupling(g, m, window=p.rolling_window, step=p.rolling_step, max_lag=p.rolling_max_lag,
                                 n_surrogates=p.rolling_surrogates, variant=p.variant, seed=p.seed,
                                 gas_name="SO2 flux", magma_name="magma output")


def _granger(b: RunBundle) -> None:
    from degas.analysis.granger import granger_test

    g, m = _gas_magma(b)
    try:
        b.granger = granger_test(g, m, max_lag="10D", gas_name="SO2 flux", magma_name="magma output")
    except NotEnoughDataError as exc:  # short gap-free stretches: try a shorter lag order before giving up
        b.granger = granger_test(g, m, max_lag="4D", gas_name="SO2 flux", magma_name="magma output")
        b.notes.append(f"Granger tests limited to lag orders up to 4 days ({exc}); weak evidence either way")


def _budget(b: RunBundle) -> None:
    from degas.analysis.budget import co2_flux, gas_budget

    if b.aligned.kinds.get("magma") != "extrusion_rate":
        raise DegasError("the budget needs an extrusion rate or survey volumes (a chronology gives no volume)")
    g, q = b.aligned.pair("gas", "magma")
    seg = None
    if b.regimes is not None:
        seg = b.regimes.intervals[["start", "end"]]
    elif "gas" in b.changepoints:
        seg = b.changepoints["gas"].segments[["start", "end"]]
    run_petro = _petrology(b)  # the verdict's input too: S populations of the inclusions beat three typed numbers
    petro = run_petro.inputs
    if run_petro.origin == "inclusions":
        b.notes.append(f"petrological SO2 from the inclusions: {petro.source}")
    unc = b.aligned.frame.get("magma_uncertainty")
    g, gu, stations, systematic = _budget_gas(b, g)
    b.budget = gas_budget(g, q, so2_uncertainty=gu, extrusion_uncertainty=unc,
                          segments=seg, petrology=petro, seed=b.project.seed, station_flux=stations,
                          systematic=systematic)
    if "ratio" in b.aligned.kinds:
        b.co2 = co2_flux(g, b.aligned.series("ratio"), max_gap="7D")


def _depths(archive: Archive, b: RunBundle) -> None:
    from degas.depths import depth_context

    b.depths = depth_context(archive, b.project, b.roles["catalog"], b.roles["chronology"], b.regimes,
                             petrology=_petrology(b))


def _petrology(b: RunBundle):
    """The run's one petrological input (degas.depths.run_petrology), chosen once, before the regimes step, so
    that the verdict, the budget and the report's table use the same values."""
    from degas.depths import RunPetrology, run_petrology

    if b.petrology is None:
        typed = b.project.petrology
        b.petrology = RunPetrology(typed, "typed" if typed is not None else "none")
        try:
            if b.archive is not None:
                b.petrology = run_petrology(b.archive, b.project)
        except DegasError as exc:
            b.notes.append(f"petrological SO2 from the inclusions not used: {exc}")
    return b.petrology


def _volumes(b: RunBundle) -> None:
    """Survey volumes and the rate series side by side, when the archive holds both."""
    from degas.analysis.budget import compare_volumes

    if b.aligned.kinds.get("magma") != "extrusion_rate" or b.archive is None:
        return
    surveys = [e for e in b.archive.entries() if e.meta.kind == "erupted_volume"]
    if not surveys:
        return
    rec = b.archive.load(surveys[0].series_id)
    d = rec.data
    b.volumes = compare_volumes(d["time"], d["value"].to_numpy(), b.aligned.series("magma"),
                                d["uncertainty"].to_numpy() if "uncertainty" in d else None,
                                rate_sd_m3_s=b.aligned.frame.get("magma_uncertainty"))


def _budget_gas(b: RunBundle, g: pd.Series):
    """Daily SO2 flux for the budget from quality-screened scans, per station, and each station's systematic
    1σ (project [budget]); flagged scans are excluded and the notes say how many (issue 13)."""
    from degas.align import align
    from degas.analysis.budget import usable_scans

    p = b.project
    recs, dropped = {}, {}
    for sid in b.roles["gas"]:
        rec = b.records[sid]
        ok, bad = usable_scans(rec.data["quality"] if "quality" in rec.data else pd.Series(pd.NA, index=rec.data.index),
                               p.good_flags)
        recs[sid] = rec.with_data(rec.data.loc[ok].reset_index(drop=True)) if not ok.all() else rec
        for k, v in bad.items():
            dropped[k] = dropped.get(k, 0) + v
    idx = b.aligned.frame.index
    try:
        tab = align(recs, p.step, min_coverage=p.min_coverage, start=idx[0], end=idx[-1] + (idx[1] - idx[0])
                    - pd.Timedelta(1, "ns"))
    except DegasError:
        return g, b.aligned.frame["gas_uncertainty"], None, 0.0
    f = tab.frame.reindex(idx)
    cols = list(b.roles["gas"])
    vals = f[cols].to_numpy(dtype=float)
    n = np.sum(np.isfinite(vals), axis=1)
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        gas = pd.Series(np.nanmean(vals, axis=1), idx)
        unc = f[[f"{c}_uncertainty" for c in cols]].to_numpy(dtype=float)
        gu = pd.Series(np.sqrt(np.nansum(unc**2, axis=1)) / np.where(n > 0, n, np.nan), idx)
    if dropped:
        b.notes.append("gas budget: scans flagged " + ", ".join(f"{k!r} ({v})" for k, v in sorted(dropped.items()))
                       + f" excluded; scans with no flag or one of {', '.join(p.good_flags)} used")
    by = dict(p.systematic_by_station)
    systematic = {}
    for sid in cols:
        st = b.records[sid].meta.station or sid
        systematic[sid] = float(by.get(sid, by.get(st, p.systematic)))
    return gas, gu, f[cols], systematic


def _seismicity(b: RunBundle) -> None:
    from degas.analysis import seismicity as s
    from degas.classcounts import ClassCounts

    if "catalog" not in b.records:
        raise DegasError("no seismic catalogue in the archive")
    cat = b.records["catalog"]
    p = b.project
    b.seismic["rates"] = s.event_rates(cat, p.step)
    if isinstance(cat, ClassCounts):
        from degas.analysis.count_rates import NO_MAGNITUDES

        b.skipped.append(f"seismic energy, b-value and depths: not run: {NO_MAGNITUDES}")
        return
    b.seismic["energy"] = s.seismic_energy(cat, p.step, allow_mixed_types=True)
    b_cls, b_notes = s.b_value_classes(cat)  # VT by default; rockfalls never (issue 13)
    b.seismic["b_classes"] = b_cls
    b.notes.extend(f"b-value: {n}" for n in b_notes)
    b.seismic["fmd"] = s.frequency_magnitude(cat, classes=b_cls, allow_mixed_types=True)
    try:
        b.seismic["b_value"] = s.estimate_b_value(cat, classes=b_cls, allow_mixed_types=True)
        b.seismic["b_series"] = s.b_value_series(cat, window=p.b_window_events, classes=b_cls,
                                                 mc=b.seismic["b_value"].mc, allow_mixed_types=True)
    except DegasError as exc:
        b.skipped.append(f"b-value ({'+'.join(b_cls)}): not run: {exc}")
    try:  # LP + hybrid separately, never mixed with VT
        b.seismic["b_value_lp"] = s.estimate_b_value(cat, classes=p.lp_classes, allow_mixed_types=True)
    except DegasError as exc:
        b.notes.append(f"b-value of {'+'.join(p.lp_classes)}: not computed: {exc}")
    try:
        b.seismic["depths"] = s.summarise_depths(cat, "30D")
    except DegasError as exc:
        b.skipped.append(f"depth summary: not run: {exc}")


def _review(b: RunBundle) -> None:
    from degas.analysis.review import review_events, review_series
    from degas.analysis.seismicity import estimate_b_value
    from degas.classcounts import ClassCounts

    per = b.periods
    # every sampled series in the archive, not only those the coupling analysis uses
    used = {getattr(r.meta, "series_id", None): r for r in b.records.values()}
    for e in b.archive.entries() if b.archive is not None else []:
        if e.record_type != "TimeSeries" or e.meta.kind == "erupted_volume":
            continue  # a cumulative volume has no "level" to compare; its rate is reviewed as extrusion
        rec = used.get(e.series_id)
        if rec is None or rec.meta.kind != e.meta.kind:
            rec = _clip(b.archive.load(e.series_id), per.baseline_start, per.window_end - pd.Timedelta(1, "ns"))
        b.review.append(review_series(rec, per, min_coverage=b.project.min_coverage, seed=b.project.seed))
    if "catalog" in b.records and isinstance(b.records["catalog"], ClassCounts):
        from degas.analysis.count_rates import review_counts

        b.review_events = review_counts(b.records["catalog"], per)
    elif "catalog" in b.records:
        cat = b.records["catalog"]
        b.review_events = review_events(cat, per)
        t = cat.data["time"]
        for label, sel in (("window", (t >= per.window_start) & (t < per.window_end)),
                           ("baseline", (t >= per.baseline_start) & (t < per.window_start))):
            try:
                b.review_regime[f"b_{label}"] = estimate_b_value(cat.with_data(cat.data.loc[sel]),
                                                                 classes=b.seismic.get("b_classes", ("VT",)),
                                                                 allow_mixed_types=True, min_events=30)
            except DegasError as exc:
                b.review_regime[f"b_{label}"] = str(exc)
    if b.regimes is not None:
        iv = b.regimes.intervals

        def label_at(ts):
            hit = iv[(iv["start"] <= ts) & (iv["end"] > ts)]
            return None if hit.empty else hit["label"].iloc[0]

        b.review_regime["window"] = label_at(min(per.window_end, b.end) - pd.Timedelta("1s"))
        b.review_regime["previous"] = label_at(per.window_start - pd.Timedelta(days=per.window_days) / 2)

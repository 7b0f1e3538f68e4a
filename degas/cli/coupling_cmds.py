"""Commands on gas-versus-magma coupling: ``couple`` (lag, significance, Granger, rolling),
``regimes`` (coupled / quiet / gas_only / magma_only intervals) and ``budget`` (gas budget,
petrological expectation, CO2 flux). Each aligns archive series, calls the library and prints.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import typer
from rich.table import Table

from degas.cli._app import app, console
from degas.errors import DegasError
from degas.units import KG_S_TO_T_D

DAY = pd.Timedelta("1D")


def _pick(archive, series_id: str | None, kinds: tuple[str, ...], role: str):
    """The entry for ``series_id``, or the only series of the given kinds."""
    if series_id is not None:
        e = archive.entry(series_id)
        if e.meta.kind not in kinds:
            raise DegasError(f"{series_id!r} is a {e.meta.kind} series; the {role} must be {' or '.join(kinds)}")
        return e
    entries = [e for k in kinds for e in archive.find(kind=k)]
    if role == "extrusion rate":
        entries = [e for e in entries if e.meta.kind == "extrusion_rate"] or entries
    if role == "gas flux":
        so2 = [e for e in entries if (e.meta.species or "").upper() == "SO2"]
        entries = so2 or entries
    if not entries:
        raise DegasError(f"the archive holds no {role} series ({' or '.join(kinds)})")
    if len(entries) > 1:
        ids = ", ".join(e.series_id for e in entries)
        raise DegasError(f"the archive holds several {role} series ({ids}); choose one by id")
    return entries[0]


def _aligned(archive_dir: Path, picks: dict[str, tuple[str | None, tuple[str, ...], str]], step: str,
             min_coverage: float):
    from degas.align import align
    from degas.store import Archive

    archive = Archive.open(archive_dir)
    entries = {name: _pick(archive, sid, kinds, role) for name, (sid, kinds, role) in picks.items()}
    records = {name: archive.load(e.series_id) for name, e in entries.items()}
    for name, rec in list(records.items()):
        if rec.meta.kind == "erupted_volume":  # survey volumes -> mean rate over each survey interval
            from degas.volumes import rates_from_cumulative

            records[name] = rates_from_cumulative(rec)
    return align(records, step, min_coverage=min_coverage), entries


def _fmt(v, spec: str = ".3g") -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "-"
    if isinstance(v, pd.Timedelta):
        return f"{v / DAY:+g} d"
    if isinstance(v, pd.Timestamp):
        return v.strftime("%Y-%m-%d")
    if isinstance(v, float | np.floating):
        return format(float(v), spec)
    return str(v)


def _notes(notes) -> None:
    for n in notes:
        console.print(f"  note: {n}", markup=False)


def _json_default(o):
    if isinstance(o, pd.Timestamp):
        return o.isoformat()
    if isinstance(o, pd.Timedelta):
        return o.total_seconds()
    if isinstance(o, np.integer | np.floating | np.bool_):
        return o.item()
    return str(o)


def _write(frame: pd.DataFrame, csv: Path | None, payload: dict, json_out: Path | None) -> None:
    if csv is not None:
        out = frame.copy()
        for c in out.columns:
            if pd.api.types.is_timedelta64_dtype(out[c]):
                out[c] = out[c].dt.total_seconds() / 86400.0
                out = out.rename(columns={c: f"{c}_days"})
        out.to_csv(csv, index=False)
        console.print(f"wrote {csv}", markup=False)
    if json_out is not None:
        json_out.write_text(json.dumps(_clean(payload), indent=2, default=_json_default))
        console.print(f"wrote {json_out}", markup=False)


def _clean(obj):
    if isinstance(obj, dict):
        return {str(k): _clean(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [_clean(v) for v in obj]
    if isinstance(obj, float | np.floating) and not math.isfinite(float(obj)):
        return None
    if obj is pd.NaT:
        return None
    return obj


@app.command("couple")
def couple(
    archive_dir: Path = typer.Argument(..., help="Archive directory."),
    gas: str | None = typer.Option(None, help="Series id of the gas flux (default: the only SO2 flux)."),
    magma: str | None = typer.Option(None, help="Series id of magma output: extrusion rate or chronology "
                                                "(default: the only one)."),
    step: str = typer.Option("1D", help="Grid step, e.g. '1D', '6h'."),
    min_coverage: float = typer.Option(0.3, help="Bins with less coverage (0-1) are missing (a daylight-only "
                                                 "scanner covers about 0.4 of a day)."),
    max_lag: str = typer.Option("60D", help="Lag search range (positive lag = gas leads magma output)."),
    variant: str = typer.Option("prewhitened", help="prewhitened, raw or differenced."),
    surrogates: int = typer.Option(1000, min=0, max=100_000, help="Surrogates for the significance test (0: none)."),
    surrogate_method: str = typer.Option("phase", "--surrogate-method", help="phase or iaaft."),
    boot: int = typer.Option(500, min=0, max=100_000,
                             help="Block-bootstrap replicates for the best-lag interval (0: none)."),
    seed: int = typer.Option(0, min=0, max=2**32 - 1, help="Random seed."),
    granger: bool = typer.Option(True, help="Also run Granger tests both ways."),
    granger_max_lag: str = typer.Option("10D", help="Largest Granger lag order (duration)."),
    rolling: bool = typer.Option(False, help="Also compute rolling coupling."),
    window: str = typer.Option("60D", help="Rolling window."),
    window_step: str = typer.Option("7D", help="Rolling window shift."),
    window_max_lag: str = typer.Option("15D", help="Lag range inside each rolling window."),
    window_surrogates: int = typer.Option(200, min=0, max=100_000, help="Surrogates per rolling window."),
    csv: Path | None = typer.Option(None, "--csv", help="Write the cross-correlation per lag (or the rolling "
                                                        "table with --rolling) to CSV."),
    json_out: Path | None = typer.Option(None, "--json", help="Write the summary as JSON."),
) -> None:
    """Lagged cross-correlation of gas flux against magma output, with surrogates, bootstrap and Granger."""
    from degas.analysis.coupling import rolling_coupling
    from degas.analysis.granger import granger_test
    from degas.analysis.xcorr import cross_correlate

    kinds = ("extrusion_rate", "chronology")
    tab, entries = _aligned(archive_dir, {"gas": (gas, ("gas_flux",), "gas flux"),
                                          "magma": (magma, kinds, "magma output")}, step, min_coverage)
    g, m = tab.pair("gas", "magma")
    gname, mname = entries["gas"].series_id, entries["magma"].series_id
    res = cross_correlate(g, m, max_lag=max_lag, variant=variant, n_surrogates=surrogates, surrogate=surrogate_method,
                          n_boot=boot, seed=seed, gas_name=gname, magma_name=mname)
    t = Table(title=f"Cross-correlation {gname} vs {mname} (positive lag = gas leads)")
    for c in ("variant", "best lag", "lag CI", "peak r", "p (max |r|)", "white-noise band", "bins"):
        t.add_column(c)
    s = res.summary()
    ci = "-" if res.lag_ci is None else f"{_fmt(res.lag_ci[0])} .. {_fmt(res.lag_ci[1])}"
    t.add_row(res.variant, _fmt(res.best_lag), ci, _fmt(res.peak_r), _fmt(res.p_value, ".3g"),
              f"±{s['white_noise_band']:.3f}", str(res.n_bins))
    console.print(t)
    _notes(tab.notes + res.notes)
    payload: dict = {"cross_correlation": s, "notes": list(tab.notes + res.notes)}
    frame = res.to_frame()
    if granger:
        try:
            gr = granger_test(g, m, max_lag=granger_max_lag, gas_name=gname, magma_name=mname)
        except DegasError as exc:
            console.print(f"  granger: not run: {exc}", markup=False)
            payload["granger"] = {"error": str(exc)}
        else:
            gt = Table(title=f"Granger (lag order {gr.lag_order} by {gr.order_ic.upper()})")
            for c in ("cause", "effect", "F", "p", "differenced"):
                gt.add_column(c)
            for row in gr.to_frame().itertuples():
                gt.add_row(row.cause, row.effect, _fmt(row.f_stat), _fmt(row.p_value), str(row.differenced))
            console.print(gt)
            _notes(gr.notes)
            payload["granger"] = {"tests": gr.to_frame().to_dict("records"),
                                  "stationarity": gr.stationarity_frame().to_dict("records"),
                                  "notes": list(gr.notes)}
    if rolling:
        rc = rolling_coupling(g, m, window=window, step=window_step, max_lag=window_max_lag,
                              n_surrogates=window_surrogates, variant=variant, seed=seed, gas_name=gname,
                              magma_name=mname)
        rt = Table(title=f"Rolling coupling ({window} windows every {window_step})")
        for c in ("start", "end", "peak r", "best lag", "p", "significant"):
            rt.add_column(c)
        for row in rc.windows.itertuples():
            rt.add_row(_fmt(row.start), _fmt(row.end), _fmt(row.peak_r), _fmt(row.best_lag), _fmt(row.p_value),
                       "yes" if row.significant else ("-" if row.reason else "no"))
        console.print(rt)
        _notes(rc.notes)
        payload["rolling"] = rc.windows.to_dict("records")
        frame = rc.to_frame()
    _write(frame, csv, payload, json_out)


def _segments(series: pd.Series, name: str) -> pd.DataFrame:
    from degas.analysis.changepoints import detect_changepoints
    from degas.analysis.regimes import segments_table

    return segments_table(detect_changepoints(pd.DataFrame({name: series})), name)


@app.command("regimes")
def regimes(
    archive_dir: Path = typer.Argument(..., help="Archive directory."),
    gas: str | None = typer.Option(None, help="Series id of the SO2 flux (default: the only one)."),
    magma: str | None = typer.Option(None, help="Series id of extrusion rate or chronology (default: the only)."),
    step: str = typer.Option("1D", help="Grid step."),
    min_coverage: float = typer.Option(0.3, help="Bins with less coverage (0-1) are missing (a daylight-only "
                                                 "scanner covers about 0.4 of a day)."),
    gas_baseline: float | None = typer.Option(None, help="Passive-degassing baseline, t/d (default: the lowest "
                                                         "gas segment)."),
    gas_factor: float = typer.Option(2.0, help="Gas is active at this multiple of the baseline."),
    magma_threshold: float | None = typer.Option(None, help="Magma output active at/above this (default 0.1 m³/s "
                                                            "or eruptive fraction 0.5)."),
    expected_ratio: float | None = typer.Option(None, help="Expected excess gas per magma output, kg SO2 per m³ "
                                                           "DRE (default: from the record)."),
    csv: Path | None = typer.Option(None, "--csv", help="Write the intervals to CSV."),
    json_out: Path | None = typer.Option(None, "--json", help="Write the intervals and notes as JSON."),
) -> None:
    """Label intervals coupled / quiet / gas_only / magma_only from change-point segments."""
    from degas.analysis.regimes import classify_regimes

    tab, entries = _aligned(archive_dir, {"gas": (gas, ("gas_flux",), "gas flux"),
                                          "magma": (magma, ("extrusion_rate", "chronology"), "magma output")},
                            step, min_coverage)
    g, m = tab.pair("gas", "magma")
    measure = "eruptive_fraction" if entries["magma"].meta.kind == "chronology" else "extrusion_rate"
    res = classify_regimes(_segments(g, "gas"), _segments(m, "magma"), magma_measure=measure,
                           gas_baseline=None if gas_baseline is None else gas_baseline / KG_S_TO_T_D,
                           gas_factor=gas_factor, magma_threshold=magma_threshold, expected_ratio=expected_ratio)
    t = Table(title=f"Regimes: {entries['gas'].series_id} vs {entries['magma'].series_id}")
    for c in ("start", "end", "days", "label", "gas t/d", "magma", "vs expected", "evidence"):
        t.add_column(c)
    for r in res.intervals.itertuples():
        t.add_row(_fmt(r.start), _fmt(r.end), f"{r.duration_days:.0f}", r.label, f"{r.gas_t_d:.0f}",
                  _fmt(r.magma_level), _fmt(r.ratio_vs_expected, ".2f"), r.evidence)
    console.print(t)
    _notes(tab.notes + res.notes)
    _write(res.to_frame(), csv, {"intervals": res.to_frame().to_dict("records"), "notes": list(res.notes)},
           json_out)


@app.command("budget")
def budget(
    archive_dir: Path = typer.Argument(..., help="Archive directory."),
    gas: str | None = typer.Option(None, help="Series id of the SO2 flux (default: the only one)."),
    extrusion: str | None = typer.Option(None, help="Series id of the extrusion rate, or of cumulative survey "
                                                    "volumes (DRE) turned into rates (default: the only one)."),
    ratio: str | None = typer.Option(None, help="Series id of a CO2/SO2 molar ratio: adds the CO2 flux total."),
    ratio_max_gap: str = typer.Option("7D", help="Longest distance a ratio measurement is carried."),
    step: str = typer.Option("1D", help="Grid step."),
    min_coverage: float = typer.Option(0.3, help="Bins with less coverage (0-1) are missing (a daylight-only "
                                                 "scanner covers about 0.4 of a day)."),
    segments: str = typer.Option("changepoints", help="'changepoints' (on the gas flux) or 'none'."),
    s_mi: float | None = typer.Option(None, help="S in melt inclusions, ppm (enables the petrological method)."),
    s_mi_sd: float = typer.Option(0.0, help="1-sigma of S in melt inclusions, ppm."),
    s_mg: float = typer.Option(0.0, help="S in matrix glass, ppm."),
    s_mg_sd: float = typer.Option(0.0, help="1-sigma of S in matrix glass, ppm."),
    density: float = typer.Option(2600.0, help="DRE density, kg/m³."),
    density_sd: float = typer.Option(0.0, help="1-sigma of the DRE density, kg/m³."),
    crystals: float = typer.Option(0.0, help="Crystal volume fraction, 0-1."),
    crystals_sd: float = typer.Option(0.0, help="1-sigma of the crystal fraction."),
    error_correlation: str = typer.Option("independent", help="Flux errors 'independent' per bin or 'correlated'."),
    n_mc: int = typer.Option(10_000, "--monte-carlo", min=1, max=100_000, help="Monte Carlo draws."),
    seed: int = typer.Option(0, min=0, max=2**32 - 1, help="Random seed."),
    csv: Path | None = typer.Option(None, "--csv", help="Write the per-segment budget to CSV."),
    json_out: Path | None = typer.Option(None, "--json", help="Write the budget and notes as JSON."),
) -> None:
    """Cumulative SO2 and DRE, kg SO2 per m³ DRE per segment, petrological excess factor, CO2 flux."""
    from degas.analysis.budget import PetrologyInputs, co2_flux, gas_budget

    if segments not in ("changepoints", "none"):
        raise DegasError(f"unknown segments option {segments!r}; valid: changepoints, none")
    picks = {"gas": (gas, ("gas_flux",), "gas flux"),
             "q": (extrusion, ("extrusion_rate", "erupted_volume"), "extrusion rate")}
    if ratio is not None:
        picks["ratio"] = (ratio, ("gas_ratio",), "gas ratio")
    tab, entries = _aligned(archive_dir, picks, step, min_coverage)
    g, q = tab.pair("gas", "q")
    seg = _segments(g, "gas")[["start", "end"]] if segments == "changepoints" else None
    petro = None
    if s_mi is not None:
        petro = PetrologyInputs.from_ppm(s_mi, s_mg, s_mi_sd_ppm=s_mi_sd, s_mg_sd_ppm=s_mg_sd, density_kg_m3=density,
                                         density_sd=density_sd, crystal_fraction=crystals,
                                         crystal_fraction_sd=crystals_sd)
    res = gas_budget(g, q, so2_uncertainty=tab.frame["gas_uncertainty"], extrusion_uncertainty=None, segments=seg,
                     petrology=petro, error_correlation=error_correlation, n_monte_carlo=n_mc, seed=seed)
    t = Table(title=f"Gas budget: {entries['gas'].series_id} vs {entries['q'].series_id}")
    cols = ["start", "end", "SO2 kt", "± kt (indep.)", "DRE Mm³", "kg SO2 / m³"]
    if petro is not None:
        cols += ["expected kt", "excess", "finding"]
    for c in cols:
        t.add_column(c)
    frame = res.to_frame()
    for r in frame.to_dict("records"):
        row = [_fmt(r["start"]), _fmt(r["end"]), f"{r['so2_mass_kg'] / 1e6:.3g}",
               _fmt(r["so2_mass_sd_independent_kg"] / 1e6), f"{r['dre_volume_m3'] / 1e6:.3g}",
               _fmt(r["ratio_kg_per_m3"])]
        if petro is not None:
            row += [_fmt(r["expected_so2_kg"] / 1e6), _fmt(r["excess_factor"], ".2f"), r["finding"]]
        t.add_row(*row)
    console.print(t)
    notes = list(tab.notes + res.notes)
    payload: dict = {"segments": frame.to_dict("records"), "notes": notes}
    if ratio is not None:
        co2 = co2_flux(g, tab.series("ratio"), max_gap=ratio_max_gap)
        total = float(np.nansum(co2.flux.to_numpy()) * tab.grid.step_s)
        console.print(f"CO2 emitted (bins with a ratio within {ratio_max_gap}): {total / 1e6:.4g} kt", markup=False)
        notes += list(co2.notes)
        payload["co2_total_kg"] = total
    _notes(notes)
    _write(frame, csv, payload, json_out)

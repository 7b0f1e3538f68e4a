"""Commands on gas-versus-magma coupling: ``couple`` (lag, significance, Granger, rolling),
``regimes`` (coupled / quiet / gas_only / magma_only intervals) and ``budget`` (gas budget,
petrological expectation, CO2 flux). Each aligns archive series, calls the library and prints.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import TYPE_CHECKING

import typer
from rich.table import Table

from degas.cli._app import app, console
from degas.errors import DegasError

if TYPE_CHECKING:  # numpy/pandas are imported inside the commands: `degas --help` stays light (issue 12)
    import pandas as pd


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
             min_coverage: float, good_flags: tuple[str, ...] | None = None, notes: list[str] | None = None):
    from degas.align import align
    from degas.store import Archive

    archive = Archive.open(archive_dir)
    entries = {name: _pick(archive, sid, kinds, role) for name, (sid, kinds, role) in picks.items()}
    records = {name: archive.load(e.series_id) for name, e in entries.items()}
    for name, rec in list(records.items()):
        if rec.meta.kind == "erupted_volume":  # survey volumes -> mean rate over each survey interval
            from degas.volumes import rates_from_cumulative

            records[name] = rates_from_cumulative(rec)
        elif rec.meta.kind == "gas_flux" and good_flags is not None:  # flagged scans out (budget, issue 13)
            from degas.analysis.budget import usable_scans

            ok, bad = usable_scans(rec.data["quality"], good_flags)
            records[name] = rec.with_data(rec.data.loc[ok].reset_index(drop=True))
            if bad and notes is not None:
                notes.append(f"{rec.meta.series_id}: scans flagged " + ", ".join(f"{k!r} ({v})" for k, v in
                                                                                sorted(bad.items())) + " excluded")
    return align(records, step, min_coverage=min_coverage), entries


def _fmt(v, spec: str = ".3g") -> str:
    import numpy as np
    import pandas as pd

    DAY = pd.Timedelta("1D")
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
    import numpy as np
    import pandas as pd

    if isinstance(o, pd.Timestamp):
        return o.isoformat()
    if isinstance(o, pd.Timedelta):
        return o.total_seconds()
    if isinstance(o, np.integer | np.floating | np.bool_):
        return o.item()
    return str(o)


def _write(frame: pd.DataFrame, csv: Path | None, payload: dict, json_out: Path | None) -> None:
    import pandas as pd

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
    import numpy as np
    import pandas as pd

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
    project: Path | None = typer.Option(None, "--project", help="Project TOML: series and analysis settings as "
                                                                "in the report (options given here override)."),
    gas: str | None = typer.Option(None, help="Series id of the gas flux (default: the only SO2 flux)."),
    magma: str | None = typer.Option(None, help="Series id of magma output: extrusion rate or chronology "
                                                "(default: the only one)."),
    step: str | None = typer.Option(None, help="Grid step, e.g. '1D', '6h' (default: project, else 1D)."),
    min_coverage: float | None = typer.Option(None, help="Bins with less coverage (0-1) are missing (a "
                                                         "daylight-only scanner covers about 0.4 of a day; default: "
                                                         "project, else 0.3)."),
    max_lag: str | None = typer.Option(None, help="Lag search range (positive lag = gas leads magma output; "
                                                  "default: project, else 60D)."),
    variant: str | None = typer.Option(None, help="prewhitened, raw or differenced (default: project, else "
                                                  "prewhitened)."),
    surrogates: int | None = typer.Option(
        None, min=0, max=100_000, help="Surrogates for the significance test (0: none; default: "
        "project, else 1000)."),
    surrogate_method: str = typer.Option("phase", "--surrogate-method", help="phase or iaaft."),
    boot: int | None = typer.Option(
        None, min=0, max=100_000, help="Block-bootstrap replicates for the best-lag interval (0: none; "
        "default: project, else 500)."),
    seed: int | None = typer.Option(None, min=0, max=2**32 - 1, help="Random seed (default: project, else 0)."),
    granger: bool = typer.Option(True, help="Also run Granger tests both ways."),
    granger_max_lag: str = typer.Option("10D", help="Largest Granger lag order (duration)."),
    rolling: bool = typer.Option(False, help="Also compute rolling coupling."),
    window: str | None = typer.Option(None, help="Rolling window (default: project, else 60D)."),
    window_step: str | None = typer.Option(None, help="Rolling window shift (default: project, else 7D)."),
    window_max_lag: str | None = typer.Option(None, help="Lag range inside each rolling window (default: project, "
                                                         "else 15D)."),
    window_surrogates: int | None = typer.Option(
        None, min=0, max=100_000, help="Surrogates per rolling window (default: project, "
        "else 200)."),
    csv: Path | None = typer.Option(None, "--csv", help="Write the cross-correlation per lag (or the rolling "
                                                        "table with --rolling) to CSV."),
    json_out: Path | None = typer.Option(None, "--json", help="Write the summary as JSON."),
) -> None:
    """Lagged cross-correlation of gas flux against magma output, with surrogates, bootstrap and Granger."""
    import pandas as pd

    from degas.analysis.coupling import rolling_coupling
    from degas.analysis.granger import granger_test
    from degas.analysis.xcorr import cross_correlate
    from degas.project import load_project

    DAY = pd.Timedelta("1D")
    pj = load_project(project) if project is not None else None

    def pick(value, key, default):
        return value if value is not None else getattr(pj, key) if pj is not None else default

    step, min_coverage = pick(step, "step", "1D"), pick(min_coverage, "min_coverage", 0.3)
    max_lag, variant = pick(max_lag, "max_lag", "60D"), pick(variant, "variant", "prewhitened")
    surrogates, boot, seed = pick(surrogates, "surrogates", 1000), pick(boot, "bootstrap", 500), pick(seed, "seed", 0)
    window, window_step = pick(window, "rolling_window", "60D"), pick(window_step, "rolling_step", "7D")
    window_max_lag = pick(window_max_lag, "rolling_max_lag", "15D")
    window_surrogates = pick(window_surrogates, "rolling_surrogates", 200)
    from degas.store import Archive

    arch = Archive.open(archive_dir)
    if gas is not None:
        _pick(arch, gas, ("gas_flux",), "gas flux (--gas)")
    if magma is not None:
        _pick(arch, magma, ("extrusion_rate", "erupted_volume", "chronology"), "magma output (--magma)")
    payload: dict = {}
    # the series, grid, relation and lag inside coupled stretches exactly as the report computes them
    b = _run_project(archive_dir, project, ("regimes",), gas=gas, magma=magma, step=step, min_coverage=min_coverage,
                     seed=seed)
    mname = "magma" if "magma" in b.aligned.kinds else "chronology"
    if "gas" not in b.aligned.kinds or mname not in b.aligned.kinds:
        raise DegasError("couple needs a gas flux and a magma output (extrusion rate, survey volumes or chronology); "
                         "choose them with --gas and --magma")
    tab = b.aligned
    g, m = tab.pair("gas", mname)
    gname = ", ".join(b.roles["gas"]) or "gas"
    mname = b.roles["magma"] or mname
    for sk in b.skipped:
        console.print(f"  {sk}", markup=False)
    reg = b.regimes
    if reg is not None:
        _relation_lines(b)
        payload["relation"] = reg.relation.summary()
        if reg.lags is not None and reg.lags.lag_ci is not None:
            payload["lag_in_coupled_stretches"] = {"lag_days": reg.lags.lag_days, "ci_days": [
                reg.lags.lag_ci[0] / DAY, reg.lags.lag_ci[1] / DAY], "peak_r": reg.lags.peak_r}
    res = cross_correlate(g, m, max_lag=max_lag, variant=variant, n_surrogates=surrogates, surrogate=surrogate_method,
                          n_boot=boot, seed=seed, gas_name=gname, magma_name=mname)
    context = ""
    if reg is not None and reg.steps_dominate:
        context = (f"; context only: regime changes dominate (segment means carry {reg.step_share[0]:.0%} / "
                   f"{reg.step_share[1]:.0%} of the variance)")
    t = Table(title=f"Whole-record cross-correlation {gname} vs {mname} (positive lag = gas leads{context})")
    for c in ("variant", "best lag", "lag CI", "peak r", "p (max |r|)", "white-noise band", "bins"):
        t.add_column(c)
    s = res.summary()
    ci = "-" if res.lag_ci is None else f"{_fmt(res.lag_ci[0])} .. {_fmt(res.lag_ci[1])}"
    t.add_row(res.variant, _fmt(res.best_lag), ci, _fmt(res.peak_r), _fmt(res.p_value, ".3g"),
              f"±{s['white_noise_band']:.3f}", str(res.n_bins))
    console.print(t)
    _notes(tab.notes + res.notes)
    payload.update({"cross_correlation": s, "notes": list(tab.notes + res.notes)})
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
    import pandas as pd

    from degas.analysis.changepoints import detect_changepoints
    from degas.analysis.regimes import segments_table

    return segments_table(detect_changepoints(pd.DataFrame({name: series})), name)


def _run_project(archive_dir: Path, project_path: Path | None, only: tuple[str, ...], **overrides):
    """The report's own steps on the whole record, with the project's settings (CLI values override)."""
    import dataclasses

    from degas.pipeline import run_all
    from degas.project import Project, load_project
    from degas.store import Archive

    project = load_project(project_path) if project_path is not None else Project()
    archive = Archive.open(archive_dir)
    for _opt, sid in (("--gas", overrides.get("gas")), ("--magma", overrides.get("magma"))):
        if sid is not None:
            archive.entry(sid)  # names the stored series when the id is wrong
    if overrides.get("gas") is not None:
        overrides["gas"] = (overrides["gas"],)
    project = dataclasses.replace(project, **{k: v for k, v in overrides.items() if v is not None})
    return run_all(archive, project, mode="retrospective", only=only)


def _relation_lines(b) -> None:
    from degas.report.summary import verdict_sentence

    v = verdict_sentence(b)
    if v is not None:
        console.print(v.text, markup=False)


@app.command("regimes")
def regimes(
    archive_dir: Path = typer.Argument(..., help="Archive directory."),
    project: Path | None = typer.Option(None, "--project", help="Project TOML: series, grid, change-point and "
                                                                "regime settings as in the report."),
    gas: str | None = typer.Option(None, help="Series id of the SO2 flux (default: the project's or every SO2 "
                                              "flux, averaged per bin)."),
    magma: str | None = typer.Option(None, help="Series id of extrusion rate, survey volumes or chronology "
                                                "(default: the project's or the only one)."),
    step: str | None = typer.Option(None, help="Grid step (default: project, else 1D)."),
    min_coverage: float | None = typer.Option(None, help="Bins with less coverage (0-1) are missing (default: "
                                                         "project, else 0.3)."),
    gas_background: float | None = typer.Option(None, "--gas-background", help="Background (passive) degassing "
                                                "at zero output, t/d; overrides the fitted intercept g0."),
    magma_threshold: float | None = typer.Option(None, "--magma-threshold", help="Output counted as active "
                                                 "at/above this (default 0.1 m³/s DRE or eruptive fraction 0.5)."),
    band: float | None = typer.Option(None, "--band", help="Relative floor of the prediction band, 0-1 (default: "
                                                          "project, else 0.25)."),
    boot: int | None = typer.Option(None, "--boot", help="Block-bootstrap replicates (default: project, else 300)."),
    csv: Path | None = typer.Option(None, "--csv", help="Write the intervals to CSV."),
    json_out: Path | None = typer.Option(None, "--json", help="Write the relation, intervals and notes as JSON."),
) -> None:
    """Fit gas = g0 + k·output(t + lag) and label intervals coupled / quiet / gas_only / magma_only from it."""
    import pandas as pd

    from degas.analysis.relation import MAGMA_UNITS

    DAY = pd.Timedelta("1D")

    if band is not None and not 0 <= band < 1:
        raise DegasError(f"--band must be between 0 and 1, got {band}")
    if gas_background is not None and gas_background < 0:
        raise DegasError(f"--gas-background must be 0 or more (t/d), got {gas_background}")
    b = _run_project(archive_dir, project, ("regimes",), gas=gas, magma=magma, step=step, min_coverage=min_coverage,
                     gas_background=gas_background, magma_threshold=magma_threshold, relation_band=band,
                     bootstrap=boot)
    if b.regimes is None:
        raise DegasError("; ".join(b.skipped) or "regimes could not be computed")
    res = b.regimes
    _relation_lines(b)
    unit = MAGMA_UNITS[res.relation.magma_measure]
    t = Table(title=f"Regimes from the gas–magma relation (output in {unit})")
    for c in ("start", "end", "days", "label", "gas t/d", "output", "predicted t/d", "band t/d"):
        t.add_column(c)
    for r in res.intervals.itertuples():
        t.add_row(_fmt(r.start), _fmt(r.end), f"{r.duration_days:.0f}", r.label, f"{r.gas_t_d:.0f}",
                  _fmt(r.magma_level), f"{r.predicted_t_d:.0f}", f"{r.band_low_t_d:.0f}-{r.band_high_t_d:.0f}")
    console.print(t)
    for r in res.intervals.itertuples():
        console.print(f"  {_fmt(r.start)} {r.label}: {r.evidence}", markup=False)
    notes = list(b.notes) + list(res.notes) + list(res.relation.notes)
    _notes(notes)
    payload = {"relation": res.relation.summary(), "intervals": res.to_frame().to_dict("records"), "notes": notes}
    if res.lags is not None:
        payload["lag_in_coupled_stretches"] = {"lag_days": res.lags.lag_days, "ci_days": [
            res.lags.lag_ci[0] / DAY, res.lags.lag_ci[1] / DAY] if res.lags.lag_ci else None,
            "k_within": res.lags.k_within}
    _write(res.to_frame(), csv, payload, json_out)


@app.command("budget")
def budget(
    archive_dir: Path = typer.Argument(..., help="Archive directory."),
    project: Path | None = typer.Option(None, "--project", help="Project TOML: series, petrology and segments "
                                                                "(the regimes) exactly as in the report."),
    gas: str | None = typer.Option(None, help="Series id of the SO2 flux (default: the only one)."),
    extrusion: str | None = typer.Option(None, help="Series id of the extrusion rate, or of cumulative survey "
                                                    "volumes (DRE) turned into rates (default: the only one)."),
    ratio: str | None = typer.Option(None, help="Series id of a CO2/SO2 molar ratio: adds the CO2 flux total."),
    ratio_max_gap: str = typer.Option("7D", help="Longest distance a ratio measurement is carried."),
    step: str | None = typer.Option(None, help="Grid step (default: project, else 1D)."),
    min_coverage: float | None = typer.Option(None, help="Bins with less coverage (0-1) are missing (a "
                                                         "daylight-only scanner covers about 0.4 of a day; default: "
                                                         "project, else 0.3)."),
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
    systematic: float = typer.Option(0.20, help="Fractional 1-sigma systematic flux error (plume speed, geometry), "
                                                "fully correlated over the record; 0.20 is common practice."),
    good_flags: str = typer.Option("good,ok,valid,buena", help="Comma-separated quality flags of scans that enter "
                                                               "the budget (scans without a flag always do)."),
    n_mc: int = typer.Option(10_000, "--monte-carlo", min=1, max=100_000, help="Monte Carlo draws."),
    seed: int = typer.Option(0, min=0, max=2**32 - 1, help="Random seed."),
    csv: Path | None = typer.Option(None, "--csv", help="Write the per-segment budget to CSV."),
    json_out: Path | None = typer.Option(None, "--json", help="Write the budget and notes as JSON."),
) -> None:
    """Cumulative SO2 and DRE, kg SO2 per m³ DRE per segment, petrological excess factor, CO2 flux."""
    import numpy as np

    from degas.analysis.budget import PetrologyInputs, co2_flux, gas_budget

    if segments not in ("changepoints", "none"):
        raise DegasError(f"unknown --segments {segments!r}; valid: changepoints, none")
    petro = None
    if s_mi is not None:
        petro = PetrologyInputs.from_ppm(s_mi, s_mg, s_mi_sd_ppm=s_mi_sd, s_mg_sd_ppm=s_mg_sd, density_kg_m3=density,
                                         density_sd=density_sd, crystal_fraction=crystals,
                                         crystal_fraction_sd=crystals_sd)
    flag_notes: list[str] = []
    if project is not None:  # the report's budget: regimes as segments, the project's petrology and series
        b = _run_project(archive_dir, project, ("regimes", "storage depths", "gas budget"), gas=gas,
                         magma=extrusion, step=step, min_coverage=min_coverage, petrology=petro)
        if b.budget is None:
            raise DegasError("; ".join(b.skipped) or "the budget could not be computed")
        res, tab, petro = b.budget, b.aligned, b.budget.petrology  # the verdict's petrology too (one per run)
        title = f"Gas budget: {', '.join(b.roles['gas'])} vs {b.roles['magma']} (segments: the regimes)"
        if petro is not None:  # the verdict's expectation and interval, as the report prints them
            from degas.analysis.relation import petrological_expectation

            mid, (lo, hi) = petrological_expectation(petro, seed=b.project.seed)
            console.print(f"petrological SO2 (Devine et al. 1984): {mid:.4g} kg per m³ DRE (95 % {lo:.3g}–{hi:.3g}), "
                          f"{b.petrology.label}", markup=False)
        g = tab.series("gas")
    else:
        picks = {"gas": (gas, ("gas_flux",), "gas flux"),
                 "q": (extrusion, ("extrusion_rate", "erupted_volume"), "extrusion rate")}
        if ratio is not None:
            picks["ratio"] = (ratio, ("gas_ratio",), "gas ratio")
        tab, entries = _aligned(archive_dir, picks, step or "1D", 0.3 if min_coverage is None else min_coverage,
                                tuple(f.strip().lower() for f in good_flags.split(",") if f.strip()), flag_notes)
        g, q = tab.pair("gas", "q")
        seg = _segments(g, "gas")[["start", "end"]] if segments == "changepoints" else None
        res = gas_budget(g, q, so2_uncertainty=tab.frame["gas_uncertainty"],
                         extrusion_uncertainty=tab.frame.get("q_uncertainty"),
                         segments=seg, petrology=petro, error_correlation=error_correlation, n_monte_carlo=n_mc,
                         seed=seed, systematic=systematic)
        title = f"Gas budget: {entries['gas'].series_id} vs {entries['q'].series_id}"
    t = Table(title=title)
    cols = ["start", "end", "SO2 kt", "± kt (indep.)", "± kt (total)", "DRE Mm³", "± Mm³", "kg SO2 / m³"]
    if petro is not None:
        cols += ["expected kt", "excess", "finding"]
    for c in cols:
        t.add_column(c)
    frame = res.to_frame()
    for r in frame.to_dict("records"):
        row = [_fmt(r["start"]), _fmt(r["end"]), f"{r['so2_mass_kg'] / 1e6:.3g}",
               _fmt(r["so2_mass_sd_independent_kg"] / 1e6), _fmt(r["so2_mass_sd_total_kg"] / 1e6),
               f"{r['dre_volume_m3'] / 1e6:.3g}", _fmt(r["dre_volume_sd_m3"] / 1e6),
               _fmt(r["ratio_kg_per_m3"])]
        if petro is not None:
            row += [_fmt(r["expected_so2_kg"] / 1e6), _fmt(r["excess_factor"], ".2f"), r["finding"]]
        t.add_row(*row)
    console.print(t)
    notes = list(tab.notes + res.notes) + flag_notes
    payload: dict = {"segments": frame.to_dict("records"), "notes": notes}
    if ratio is not None and "ratio" in tab.kinds:
        co2 = co2_flux(g, tab.series("ratio"), max_gap=ratio_max_gap)
        total = float(np.nansum(co2.flux.to_numpy()) * tab.grid.step_s)
        console.print(f"CO2 emitted (bins with a ratio within {ratio_max_gap}): {total / 1e6:.4g} kt", markup=False)
        notes += list(co2.notes)
        payload["co2_total_kg"] = total
    _notes(notes)
    _write(frame, csv, payload, json_out)

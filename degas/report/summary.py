"""Plain-language summary: short sentences, each with its number, its uncertainty and its source result.

Sentences are built only from analysis results (never invented). Each is returned with a ``key`` so that
tests (and the browser test) can check the numbers against the results they came from.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from degas.report.html import REGIME_LABELS

DAY = pd.Timedelta("1D")
NS = pd.Timedelta(1, "ns")  # ends are exclusive: the last day shown is the day of end - 1 ns


@dataclass(frozen=True)
class Sentence:
    key: str
    text: str


def _d(ts) -> str:
    return pd.Timestamp(ts).strftime("%Y-%m-%d")


def _num(x: float, digits: int = 3) -> str:
    """Three significant digits, but whole numbers with thousands separators from 1000 up."""
    if x is None or not np.isfinite(x):
        return "n/a"
    if abs(x) >= 1000:
        return f"{x:,.0f}"
    return f"{x:.{digits}g}"


QUANTITY_NAMES = {"so2_flux": "SO2 flux", "co2_flux": "CO2 flux", "h2s_flux": "H2S flux",
                  "extrusion_rate": "extrusion rate", "co2_so2_ratio": "CO2/SO2 ratio", "rsam": "seismic amplitude",
                  "ssam": "seismic spectral amplitude", "amplitude": "seismic amplitude"}


def _name(quantity: str) -> str:
    return QUANTITY_NAMES.get(quantity, quantity.replace("_", " "))


def _coverage(bundle, r) -> str:
    """Coverage judged against what the instrument can deliver (project [coverage]), or of the samples due."""
    from degas.analysis.weekly import coverage_vs_capability

    if getattr(r, "per_sample", False):
        return f"{r.days_window} sample(s) in the week, reviewed per sample"
    cap = dict(getattr(bundle.project, "capability", ())).get(r.series_id)
    if cap is None:
        return f"coverage {r.coverage_window:.0%}"
    return f"coverage {coverage_vs_capability(r.coverage_window, cap):.0%} of what the instrument can deliver"


def _p(p: float) -> str:
    if not np.isfinite(p):
        return "n/a"
    return "< 0.001" if p < 0.001 else f"= {p:.3f}"


def lag_sentence(key: str, res, where: str) -> Sentence:
    ci = "" if res.lag_ci is None else (f" ({res.ci_level:.0%} interval {res.lag_ci[0] / DAY:+.0f} to "
                                        f"{res.lag_ci[1] / DAY:+.0f} d)")
    significant = np.isfinite(res.p_value) and res.p_value < 0.05
    excludes_zero = res.lag_ci is not None and (res.lag_ci[0] > pd.Timedelta(0) or res.lag_ci[1] < pd.Timedelta(0))
    if not significant:
        lead = "no coupling shown against surrogates (p ≥ 0.05)"
    elif not excludes_zero:
        lead = "no clear lead either way (the interval includes 0)"
    else:
        lead = "gas leads magma output" if res.best_lag > pd.Timedelta(0) else "gas lags magma output"
    return Sentence(key, f"{where}: best lag {res.best_lag / DAY:+.0f} d{ci}, {lead}; peak r = {res.peak_r:.2f}, "
                         f"surrogate p {_p(res.p_value)} ({res.n_surrogates} {res.surrogate_method} surrogates).")


def regime_sentences(bundle) -> list[Sentence]:
    """One sentence per decoupled interval (gas_only, magma_only) of at least a week, with its evidence."""
    out = []
    if bundle.regimes is None:
        return out
    iv = bundle.regimes.intervals
    munit = "m³/s DRE" if bundle.regimes.magma_measure == "extrusion_rate" else "(eruptive fraction)"
    rel = getattr(bundle.regimes, "relation", None)
    if rel is not None:  # the relation knows whether the DRE/bulk basis is known
        from degas.analysis.relation import MAGMA_UNITS

        munit = MAGMA_UNITS[rel.magma_measure] if rel.magma_measure != "eruptive_fraction" else "(eruptive fraction)"
    lp = bundle.changepoints.get("lp_hybrid_rate")
    for label, key in (("gas_only", "decoupled"), ("magma_only", "sealing")):
        for r in iv[iv["label"] == label].itertuples():
            if r.duration_days < 7:
                continue
            if label == "gas_only":
                what = (f"Gas without magma output (decoupled degassing) from {_d(r.start)} to {_d(r.end - NS)} "
                        f"({r.duration_days:.0f} days): SO2 {_num(r.gas_t_d)} t/d, {r.gas_to_baseline:.1f}× the "
                        f"background g0 of the gas–magma relation"
                        + (f" and above the {_num(r.predicted_t_d)} t/d it predicts"
                           if "predicted_t_d" in iv.columns else "")
                        + f", while magma output was {r.magma_level:.2g} {munit}.")
            else:
                if not np.isfinite(r.ratio_vs_expected):
                    continue  # without a reference gas-per-magma ratio the label is not supported: no sentence
                what = (f"Magma output without matching gas (gas-poor output, possible sealing) from {_d(r.start)} "
                        f"to {_d(r.end - NS)} ({r.duration_days:.0f} days): magma output {r.magma_level:.2g} {munit} "
                        f"with SO2 {_num(r.gas_t_d)} t/d, "
                        + (f"below the {_num(r.predicted_t_d)} t/d the gas–magma relation predicts "
                           f"(band {_num(r.band_low_t_d)} to {_num(r.band_high_t_d)})"
                           if "predicted_t_d" in iv.columns else "")
                        + (f"; excess gas per output {_num(r.ratio_vs_expected, 2)}× the relation's k."
                           if r.ratio_vs_expected > 0 else "; gas at or below the background g0."))
                if lp is not None:
                    near = lp.changes[(lp.changes["time"] >= r.start - pd.Timedelta("21D"))
                                      & (lp.changes["time"] <= r.end)]
                    if len(near):
                        first, last = near.iloc[0], near.iloc[-1]
                        per = "day" if pd.Timedelta(bundle.project.step) == DAY else f"{bundle.project.step} bin"
                        verb = "rose" if last["level_after"] > first["level_before"] else "changed"
                        what += (f" LP + hybrid events {verb} from {first['level_before']:.1f} to "
                                 f"{last['level_after']:.1f} per {per}, in {len(near)} step(s) from "
                                 f"{_d(first['time'])} (95% range {_d(first['ci_start'])} to "
                                 f"{_d(first['ci_end'])}).")
            out.append(Sentence(f"{key}:{_d(r.start)}", what))
    return out


def verdict_sentence(bundle) -> Sentence | None:
    """The record-level answer (issue 9): does gas track magma output? From the fitted relation."""
    rel = getattr(bundle.regimes, "relation", None)
    if rel is None:
        return None
    from degas.units import KG_S_TO_T_D

    fraction = rel.magma_measure == "eruptive_fraction"
    kunit = "t/d per unit eruptive fraction" if fraction else "kg SO2 per m³"
    kscale = KG_S_TO_T_D if fraction else 1.0
    if rel.magma_measure == "extrusion_rate":
        kunit += " DRE"
    elif rel.magma_measure == "extrusion_rate_unknown_basis":
        kunit += " (DRE/bulk basis unknown)"
    k = (f"k = {_num(rel.k * kscale)} {kunit} (95% {_num(rel.k_ci[0] * kscale)} to {_num(rel.k_ci[1] * kscale)})")
    g0 = (f"background g0 = {_num(rel.g0_kg_s * KG_S_TO_T_D)} t/d "
          + ("(given)" if rel.background_given else
             f"(95% {_num(rel.g0_ci[0] * KG_S_TO_T_D)} to {_num(rel.g0_ci[1] * KG_S_TO_T_D)})"))
    fit = f"SO2 = g0 + k·output(t {rel.lag_days:+.0f} d): {g0}, {k}, R² = {rel.r_squared:.2f} on {rel.n_fit_days} days"
    petro = ""
    if np.isfinite(rel.petrological_k):
        run_petro = getattr(bundle, "petrology", None)  # the budget's input too (one source per run)
        src = f", {run_petro.label}" if run_petro is not None and run_petro.inputs is not None else ""
        petro = (f"; petrological expectation (Devine et al. 1984{src}) {_num(rel.petrological_k)} kg SO2 per m³ DRE "
                 f"(95% {_num(rel.petrological_k_ci[0])} to {_num(rel.petrological_k_ci[1])})")
    if rel.independent:
        text = (f"Record-level verdict: gas independent of magma output ({fit}{petro}); no stretch is labelled "
                "coupled.")
    else:
        lags = getattr(bundle.regimes, "lags", None)
        lag = ""
        if lags is not None and lags.lag_ci is not None:
            lag = (f"; inside the coupled stretches gas leads output by {lags.lag_days:+.0f} d (95% "
                   f"{lags.lag_ci[0] / DAY:+.0f} to {lags.lag_ci[1] / DAY:+.0f} d; positive = gas leads)")
        text = f"Record-level verdict: gas tracks magma output ({fit}{petro}){lag}."
    return Sentence("verdict", text)


def summarise(bundle) -> list[Sentence]:
    """The summary sentences for a run, most important first (the record-level verdict first of all)."""
    out: list[Sentence] = []
    v = verdict_sentence(bundle)
    if v is not None:
        out.append(v)
    per = bundle.periods
    if per is not None and bundle.regimes is not None:
        now, prev = bundle.review_regime.get("window"), bundle.review_regime.get("previous")
        if now:
            change = "unchanged from" if now == prev else f"after {REGIME_LABELS.get(prev, prev or 'no label')} in"
            out.append(Sentence("regime:window", f"Week {_d(per.window_start)} to {_d(per.window_end - DAY)}: "
                                                 f"{REGIME_LABELS.get(now, now)} ({change} the week before)."))
    out += regime_sentences(bundle)
    for r in bundle.review:
        if r.kind not in ("gas_flux", "extrusion_rate", "gas_ratio", "amplitude") or not np.isfinite(r.level_window):
            continue
        name = f"{_name(r.quantity)} at {r.station}" if r.station else _name(r.quantity)
        tr = ""
        if r.trend is not None:
            tr = (f"; trend {r.trend.slope_per_day:+.3g} {r.display_unit}/day (95% {r.trend.slope_low:+.3g} to "
                  f"{r.trend.slope_high:+.3g}), Mann-Kendall p {_p(r.trend.mann_kendall.p_value)}")
        out.append(Sentence(f"level:{r.series_id}",
                            f"{name}: median {_num(r.level_window)} {r.display_unit} in the week, "
                            f"{_num(r.ratio, 2)}× the {r.periods.baseline_days:.0f}-day baseline of "
                            f"{_num(r.level_baseline)} ({r.days_baseline} "
                            f"{'samples' if getattr(r, 'per_sample', False) else 'days with data'}) "
                            + (f"(95% {_num(r.ratio_low, 2)} to {_num(r.ratio_high, 2)}), " if np.isfinite(r.ratio_low)
                               else "(no interval: too few values), ")
                            + f"robust z = "
                            f"{_num(r.robust_z, 2)}{tr}; {_coverage(bundle, r)}."))
    for rc in bundle.review_events:
        if rc.event_class in ("LP", "hybrid", "VT", "explosion") and (rc.n_window or rc.n_baseline):
            out.append(Sentence(f"rate:{rc.event_class}",
                                f"{rc.event_class} events: {rc.rate_window_per_day:.1f} per day in the week vs "
                                f"{rc.rate_baseline_per_day:.1f} in the baseline (×{_num(rc.ratio, 2)}, 95% "
                                f"{_num(rc.ratio_low, 2)} to {_num(rc.ratio_high, 2)}, p {_p(rc.p_value)})."))
    bw, bb = bundle.review_regime.get("b_window"), bundle.review_regime.get("b_baseline")
    if hasattr(bw, "b") and hasattr(bb, "b"):
        out.append(Sentence("b:window", f"b-value {bw.b:.2f} ± {bw.sigma:.2f} ({bw.n} events above Mc {bw.mc:.1f}) in "
                                        f"the week vs {bb.b:.2f} ± {bb.sigma:.2f} in the baseline."))
    if bundle.xcorr is not None:
        span = ("Whole record" if bundle.mode == "weekly" else
                f"Episode {_d(bundle.start)} to {_d(bundle.end - pd.Timedelta(1, 'ns'))}")
        reg = bundle.regimes
        if reg is not None and getattr(reg, "steps_dominate", False):
            span += (f" (context only: regime changes dominate, segment means carry {reg.step_share[0]:.0%} of the "
                     f"SO2 and {reg.step_share[1]:.0%} of the output variance)")
        out.append(lag_sentence("lag:record", bundle.xcorr, f"{span}, SO2 against magma output"))
    for s, e, _label, res in bundle.xcorr_intervals:
        out.append(lag_sentence(f"lag:{_d(s)}", res, f"Coupled interval {_d(s)} to {_d(e - NS)}"))
    if bundle.budget is not None:
        o = bundle.budget.overall
        if np.isfinite(o.get("excess_factor", np.nan)):
            al = bundle.aligned.frame
            both = int((al["gas"].notna() & al["magma"].notna()).sum()) if "magma" in al else 0
            both = int(o.get("days_both", both))  # the budget's own days (flagged scans excluded)
            out.append(Sentence(
                "budget:overall",
                f"Gas budget {_d(o['start'])} to {_d(o['end'] - NS)}: {_num(o['so2_mass_kg'] / 1e6)} ± "
                f"{_num(o['so2_mass_sd_total_kg'] / 1e6)} kt SO2 (1σ, scan errors and per-station systematic "
                f"plume-speed/geometry terms; flagged scans excluded; lower bound, "
                f"gas coverage {o['gas_coverage']:.0%}) and {o['dre_volume_m3'] / 1e6:.3g} ± "
                f"{o['dre_volume_sd_m3'] / 1e6:.2g} Mm³ DRE erupted (1σ); on the "
                f"{both} days with both, {o['ratio_kg_per_m3']:.3g} kg SO2 per m³ DRE (95% "
                f"{o['ratio_p2_5_kg_per_m3']:.3g} to {o['ratio_p97_5_kg_per_m3']:.3g}); "
                f"observed/petrological SO2 = {o['excess_factor']:.2f} (95% {o['excess_p2_5']:.2f} to "
                f"{o['excess_p97_5']:.2f}): {o['finding'] or 'no finding'}."))
    for name, cp in bundle.changepoints.items():
        if per is None:
            continue
        inside = [t for t in cp.change_times if per.window_start <= t < per.window_end]
        if inside:
            out.append(Sentence(f"change:{name}", f"Change point in {name.replace('_', ' ')} inside the week: "
                                                  + ", ".join(_d(t) for t in inside) + "."))
    out += unknowns(bundle)
    return out


def unknowns(bundle) -> list[Sentence]:
    """What the run does not know: low coverage, missing data, steps that could not run."""
    out = []
    for r in bundle.review:
        for n in r.notes:
            if "no data" in n or "only" in n:
                out.append(Sentence(f"gap:{r.series_id}", f"{r.series_id}: {n}."))
    for label in ("window", "baseline"):
        msg = bundle.review_regime.get(f"b_{label}")
        if isinstance(msg, str):
            out.append(Sentence(f"gap:b_{label}", f"b-value of the {'week' if label == 'window' else 'baseline'} "
                                                  f"not computed: {msg}."))
    for s in bundle.skipped:
        out.append(Sentence("skipped", s + "."))
    return out

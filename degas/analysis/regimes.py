"""Coupling regimes: label every interval by what gas and magma output are doing together.

The labels come from the fitted gas–output relation gas = g0 + k·Q(t + τ) (:mod:`degas.analysis.relation`):
the record is cut into joint segments and each piece gets one of four labels by where its gas level falls
against the relation's prediction band (:func:`classify_from_relation`):

* ``"coupled"``    - gas within the relation's prediction interval;
* ``"quiet"``      - no magma output and gas at or below the background;
* ``"gas_only"``   - gas above the relation's prediction (e.g. without magma output): decoupled degassing;
* ``"magma_only"`` - magma output without matching gas (below the prediction): gas-poor output, possibly
  sealing (one interpretation among several: declining supply, scrubbing or plume geometry can look the same).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from degas.analysis.robust import MAD_TO_SD
from degas.errors import DegasError, NotEnoughDataError
from degas.units import KG_S_TO_T_D

LABELS = ("coupled", "quiet", "gas_only", "magma_only")


@dataclass(frozen=True)
class RegimeResult:
    """Labelled intervals (the base of :class:`RelationRegimeResult`).

    ``intervals`` columns: start, end, duration_days, label, gas_t_d, gas_kg_s, magma_level,
    gas_to_baseline, excess_ratio (kg/s excess gas per magma unit), ratio_vs_expected,
    gas_threshold_t_d, magma_threshold, evidence. ``gas_baseline_kg_s`` is the background g0 (kg/s),
    ``expected_ratio`` the slope k (kg/s per magma unit), ``ratio_low`` and ``ratio_high`` the relative floor of
    the coupled band (1 ∓ band).
    """

    intervals: pd.DataFrame
    magma_measure: str
    gas_baseline_kg_s: float
    magma_threshold: float
    expected_ratio: float
    ratio_low: float
    ratio_high: float
    notes: tuple[str, ...] = field(default=())

    def to_frame(self) -> pd.DataFrame:
        return self.intervals.copy()

    def durations(self) -> pd.Series:
        """Total duration (days) per label."""
        return self.intervals.groupby("label")["duration_days"].sum().reindex(LABELS, fill_value=0.0)


def segments_table(result, series: str | None = None) -> pd.DataFrame:
    """start/end/level segments from a change-point result (anything with a ``segments`` table).

    Thin adapter for :class:`degas.analysis.changepoints.ChangePointResult` (duck-typed, not imported):
    with several series in the result, ``series`` picks one (its ``series`` column).
    """
    seg = getattr(result, "segments", result)
    if not isinstance(seg, pd.DataFrame):
        raise DegasError("expected a change-point result or a DataFrame with start, end, level")
    if "series" in seg.columns:
        names = list(dict.fromkeys(seg["series"]))
        if series is None:
            if len(names) > 1:
                raise DegasError(f"the change-point result holds several series; pick one of: {', '.join(names)}")
        elif series not in names:
            raise DegasError(f"no series {series!r} in the change-point result; have: {', '.join(names)}")
        else:
            seg = seg[seg["series"] == series]
    return seg[["start", "end", "level"]].reset_index(drop=True)


# --------------------------------------------------------------------------------------------
# regimes from the fitted gas–magma relation

#: wording of each label (keys unchanged so that reports keep their colours)
LABEL_TEXT = {"coupled": "coupled: gas within the relation's prediction interval",
              "quiet": "quiet: no magma output and gas at or below the background",
              "gas_only": "gas without magma output (above the relation's prediction)",
              "magma_only": "magma output without matching gas (below the relation's prediction)"}


@dataclass(frozen=True)
class RelationRegimeResult(RegimeResult):
    """:class:`RegimeResult` labelled from the fitted relation (see :func:`classify_from_relation`).

    Extra attributes: ``relation`` (:class:`~degas.analysis.relation.RelationResult`), ``lags``
    (:class:`~degas.analysis.stretch_lags.StretchLagResult` inside the coupled stretches, or None),
    ``pieces`` (the joint segments with their own levels, prediction and label), ``band`` (relative floor of
    the prediction band), ``verdict`` (record level) and ``step_share`` (share of the gas and output variance
    carried by the segment means). ``intervals`` add predicted_t_d, band_low_t_d,
    band_high_t_d and n_days; gas_t_d and magma_level are the data's own means over each interval.
    """

    relation: object = None
    lags: object = None
    pieces: pd.DataFrame = field(default_factory=pd.DataFrame)
    band: float = 0.25
    verdict: str = ""
    step_share: tuple[float, float] = (np.nan, np.nan)

    @property
    def steps_dominate(self) -> bool:
        """Segment means carry most of the variance of both series: a whole-record CCF reflects regime steps."""
        return bool(min(self.step_share) > 0.5)


def _segment_ids(result, index: pd.DatetimeIndex) -> np.ndarray:
    seg = result.segments
    seg = seg[seg["series"] == seg["series"].iloc[0]]
    ids = np.full(len(index), -1, dtype=int)
    t = pd.DatetimeIndex(index).as_unit("ns").asi8
    for i, r in enumerate(seg.itertuples()):
        ids[(t >= r.start.value) & (t < r.end.value)] = i
    return ids


def _joint_segments(g, qs, index, magma_measure, min_segment, max_gap, penalty, thr) -> np.ndarray:
    try:
        return _joint_segments_(g, qs, index, magma_measure, min_segment, max_gap, penalty, thr)
    except DegasError as exc:  # user-facing: no Python argument names in the message
        raise type(exc)(str(exc).split("; pass ")[0]) from None


def _joint_segments_(g, qs, index, magma_measure, min_segment, max_gap, penalty, thr) -> np.ndarray:
    """Segment ids per bin: gas and output segmented jointly (shared change times, exact solver of
    :mod:`degas.analysis.changepoints` with its default noise model), then cut wherever the output switches
    between active and inactive (below ``thr``) for at least a minimum segment: a pause in output is a regime
    boundary by definition, however smooth. An eruptive fraction is a step function already: the gas is
    segmented alone and cut at every change of the fraction (its phase boundaries)."""
    from degas.analysis.changepoints import detect_changepoints

    kw = {"min_segment": min_segment, "max_gap": max_gap, "penalty": penalty}
    m = max(2, int(np.ceil(pd.Timedelta(min_segment) / pd.Timedelta(index[1] - index[0]))))
    if magma_measure == "eruptive_fraction":
        res = detect_changepoints(pd.DataFrame({"gas": g}, index), transform={"gas": "log"}, **kw)
        q = np.where(np.isfinite(qs), qs, -1.0)
        cut = np.r_[0, np.cumsum(np.diff(q) != 0)]
    else:
        dq = np.diff(qs)
        dq = dq[np.isfinite(dq)]
        if dq.size and np.mean(dq == 0) > 0.5:
            # step-wise output (rates between surveys, constant for weeks): gas segmented alone, output on/off cuts
            res = detect_changepoints(pd.DataFrame({"gas": g}, index), transform={"gas": "log"}, **kw)
        else:
            frame = pd.DataFrame({"gas": g, "magma": qs}, index)
            res = detect_changepoints(frame, transform={"gas": "log", "magma": "identity"}, **kw)
        on = pd.Series(qs >= thr).where(np.isfinite(qs)).ffill().bfill().fillna(0).to_numpy(dtype=bool)
        on = _debounce(on, m)
        cut = np.r_[0, np.cumsum(np.diff(on.astype(int)) != 0)]
    ids = _segment_ids(res, index)
    out = np.where(ids >= 0, ids * (cut.max() + 1) + cut, -1)
    _, inv = np.unique(out, return_inverse=True)
    return np.where(out >= 0, inv - (1 if (out < 0).any() else 0), -1)


def _stretch_ids(coupled: np.ndarray) -> np.ndarray:
    """Ids of the contiguous runs of ``coupled`` bins (0, 1, …; -1 elsewhere)."""
    c = np.asarray(coupled, bool)
    run = np.cumsum(np.r_[c[:1], c[1:] & ~c[:-1]]) - 1
    return np.where(c, run, -1)


def _debounce(on: np.ndarray, m: int) -> np.ndarray:
    """Runs shorter than m bins take the state of the run before them (the first run is kept)."""
    on = on.copy()
    for _ in range(3):
        edges = np.flatnonzero(np.diff(on.astype(int))) + 1
        starts, ends = np.r_[0, edges], np.r_[edges, len(on)]
        changed = False
        for a, b in zip(starts[1:], ends[1:], strict=True):
            if b - a < m:
                on[a:b] = on[a - 1]
                changed = True
        if not changed:
            break
    return on


def _pieces(g, qs, ids, index, step) -> pd.DataFrame:
    rows = []
    for i in range(ids.max() + 1):
        sel = np.flatnonzero(ids == i)
        ok = sel[np.isfinite(g[sel]) & np.isfinite(qs[sel])]
        if len(ok) == 0:
            continue
        rows.append({"piece": i, "start": index[sel[0]], "end": index[sel[-1]] + step, "n_days": len(ok),
                     "gas_kg_s": float(g[ok].mean()), "magma_lagged": float(qs[ok].mean()),
                     "magma_median": float(np.median(qs[ok]))})
    return pd.DataFrame(rows)


def _wmedian(x: np.ndarray, w: np.ndarray) -> float:
    o = np.argsort(x)
    cw = np.cumsum(w[o])
    return float(x[o][np.searchsorted(cw, cw[-1] / 2)])


def _label_pieces(p: pd.DataFrame, g0, k, se_fit, scale, phi, band, z, thr, independent, given,
                  fraction=False) -> pd.DataFrame:
    p = p.copy()
    # an eruptive fraction says on/off, not how much: gas is judged against the background band only
    pred = g0 + (0.0 if fraction else k) * p["magma_lagged"].to_numpy()
    infl = (1 + phi) / (1 - phi)
    se = np.sqrt(np.asarray(se_fit) ** 2 + scale**2 * infl / p["n_days"].to_numpy())
    half = np.maximum(z * se, band * np.abs(pred))
    G = p["gas_kg_s"].to_numpy()
    active = p["magma_median"].to_numpy() >= thr  # median: a lag-shifted step does not make a quiet piece active
    above, below = G > pred + half, G < pred - half
    if independent:
        lab = np.where(~active & ~above & given, "quiet", "gas_only")
    elif fraction:
        lab = np.where(active, np.where(above, "coupled", "magma_only"), np.where(above, "gas_only", "quiet"))
        p["predicted_kg_s"], p["band_low_kg_s"], p["band_high_kg_s"] = pred, pred - half, pred + half
        p["label"] = lab
        p["consistent"] = np.where(active, above, ~above & ~below)
        return p
    else:
        lab = np.where(active, np.where(above, "gas_only", np.where(below, "magma_only", "coupled")),
                       np.where(above, "gas_only", "quiet"))
    p["predicted_kg_s"], p["band_low_kg_s"], p["band_high_kg_s"] = pred, pred - half, pred + half
    p["label"] = lab
    p["consistent"] = ~above & ~below
    return p


def classify_from_relation(
    gas: pd.Series,
    magma: pd.Series,
    *,
    magma_measure: str = "extrusion_rate",
    gas_background: float | None = None,
    magma_threshold: float | None = None,
    band: float = 0.25,
    z: float = 1.96,
    max_lag: str | pd.Timedelta = "15D",
    min_segment: str | pd.Timedelta = "14D",
    max_gap: str | pd.Timedelta = "10D",
    penalty: str | float = "bic3",
    n_boot: int = 300,
    min_r2: float = 0.05,
    petrology=None,
    seed: int | None = 0,
) -> RelationRegimeResult:
    """Label the record coupled / quiet / gas_only / magma_only against the fitted gas–magma relation.

    1. Gas (log) and magma output are segmented **jointly** (shared change times, the exact solver of
       :mod:`degas.analysis.changepoints`); a first lag τ is the profile least-squares lag with one intercept
       per segment (:func:`degas.analysis.stretch_lags.stretch_lags`); every piece has one gas level and one level of
       the output τ later, measured over the same days.
    2. The relation gas = g0 + k·Q(t + τ) (:func:`degas.analysis.relation.fit_relation`) is fitted on the
       days of the pieces consistent with it: starting from k of the pulses inside segments and g0 the
       duration-weighted median of gas − k·Q over pieces with output, pieces outside the prediction band are
       left out and the fit repeated until the set of pieces stops changing.
    3. Per piece: output active (mean ≥ ``magma_threshold``) and gas within the band → coupled; above →
       gas_only (including output ≈ 0 with gas clearly above g0); below while output is active →
       magma_only; no output and gas not above the band → quiet. The band is the 95 % prediction interval of
       the piece mean (bootstrap error of the line, residual scale inflated for AR(1) autocorrelation, over
       the piece's days) widened to at least ``band`` × the prediction (a project default, not a published
       value). With the verdict "gas independent of magma output" nothing is labelled coupled. An eruptive
       fraction says on/off, not how much: there gas is judged against the background band alone (eruptive
       phase with gas above it → coupled, not above → magma_only; pause above → gas_only, else quiet), and the
       starting background is the lower duration-weighted quartile of the pause levels.
    4. The reported lag and its interval: the profile least-squares lag of the relation over the coupled days
       with one intercept per contiguous coupled stretch (the relation holds across its pieces, so the
       output's level changes inside a stretch place the lag too), output days counted only where the output
       is active (so that a pause after a stretch cannot pull the lag).

    Parameters
    ----------
    gas : gas flux, kg/s; magma : output (m³/s DRE, or eruptive fraction) on the same regular UTC grid.
    gas_background : given background g0, kg/s (overrides the estimate).
    magma_threshold : output counted as active at/above this (default 0.1 m³/s or fraction 0.5).
    """
    from degas.analysis.relation import INDEPENDENT, MAGMA_UNITS, _shift, fit_relation
    from degas.analysis.stretch_lags import _step_share, stretch_lags

    if magma_measure not in MAGMA_UNITS:
        raise DegasError(f"unknown magma measure {magma_measure!r}; valid: {', '.join(MAGMA_UNITS)}")
    if not gas.index.equals(magma.index) or len(gas) < 3:
        raise DegasError("gas and magma output must be aligned on one regular grid")
    if not 0 <= band < 1:
        raise DegasError(f"the relative band must be in [0, 1), got {band}")
    index = gas.index
    step = pd.Timedelta(index[1] - index[0])
    unit = MAGMA_UNITS[magma_measure]
    thr = (0.5 if magma_measure == "eruptive_fraction" else 0.1) if magma_threshold is None else float(magma_threshold)
    g = gas.to_numpy(dtype=float)
    q = magma.to_numpy(dtype=float)
    notes: list[str] = []
    fraction = magma_measure == "eruptive_fraction"
    given = gas_background is not None
    # 1. joint segments on the days both were observed, and the lag inside them
    ids = _joint_segments(g, q, index, magma_measure, min_segment, max_gap, penalty, thr)
    tau, k_w = 0, np.nan
    ids_g, ids_q = ids, ids  # segments for removing means: gas on its axis, output on its own (τ later)
    if magma_measure != "eruptive_fraction":
        try:
            sl = stretch_lags(gas, magma, ids, ids >= 0, max_lag=max_lag, n_boot=0, n_surrogates=0)
            tau, k_w = int(round(sl.lag / step)), sl.k_within
            for _ in range(2):  # segments of gas against the output τ later, the output's own segments τ later
                if tau == 0:
                    break
                ids_g = _joint_segments(g, _shift(q, tau), index, magma_measure, min_segment, max_gap, penalty, thr)
                ids_q = _shift(ids_g.astype(float), -tau)
                ids_q = np.where(np.isfinite(ids_q), ids_q, -1).astype(int)
                sl = stretch_lags(gas, magma, ids_g, ids_g >= 0, max_lag=max_lag, n_boot=0, magma_segment_id=ids_q,
                                  n_surrogates=0)
                new_tau = int(round(sl.lag / step))
                tau, k_w = new_tau, sl.k_within
        except NotEnoughDataError as exc:
            notes.append(f"no lag inside segments ({exc}); τ = 0")
    qs = _shift(q, tau)
    p = _pieces(g, qs, ids, index, step)
    if p.empty:
        raise NotEnoughDataError("no segment has both a gas and a magma-output level")
    Q, G, w = p["magma_lagged"].to_numpy(), p["gas_kg_s"].to_numpy(), p["n_days"].to_numpy(dtype=float)
    act = p["magma_median"].to_numpy() >= thr
    # 2. starting line, then fit on consistent pieces until the set stops changing
    if given:
        g0 = float(gas_background)
        k = _wmedian((G[act] - g0) / Q[act], w[act]) if act.any() else 0.0
    else:
        k = k_w if np.isfinite(k_w) and k_w > 0 else np.nan
        if fraction and (~act).any():
            # background: the quieter inactive phases (lower duration-weighted quartile of their gas levels)
            o = np.argsort(G[~act])
            cw = np.cumsum(w[~act][o])
            g0 = float(G[~act][o][np.searchsorted(cw, cw[-1] / 4)])
            k = _wmedian(G[act], w[act]) - g0 if act.any() else 0.0
        elif not np.isfinite(k):
            if act.any() and (~act).any() and np.ptp(Q) > 0:
                k = (_wmedian(G[act], w[act]) - _wmedian(G[~act], w[~act])) / (
                    _wmedian(Q[act], w[act]) - _wmedian(Q[~act], w[~act]))
            else:
                k = 0.0
        if not (fraction and (~act).any()):
            g0 = _wmedian(G[act] - k * Q[act], w[act]) if act.any() else _wmedian(G, w)
    scale = float(MAD_TO_SD * np.nanmedian(np.abs(g - g0 - k * qs)))
    lab = _label_pieces(p, g0, k, 0.0, scale, 0.0, band, z, thr, False, given, fraction)
    inl = lab["consistent"].to_numpy()
    rel = None
    for _ in range(8):
        mask = np.isin(ids, p["piece"].to_numpy()[inl])
        try:
            rel = fit_relation(gas, magma, lag=tau, fit_mask=mask, gas_background=gas_background,
                               magma_measure=magma_measure, n_boot=0, min_r2=min_r2, seed=seed)
        except NotEnoughDataError:
            break
        lab = _label_pieces(p, rel.g0_kg_s, rel.k, 0.0, rel.residual_scale_kg_s, rel.residual_phi, band, z, thr,
                            False, given, fraction)
        new = lab["consistent"].to_numpy()
        if (new == inl).all():
            break
        inl = new
    mask = np.isin(ids, p["piece"].to_numpy()[inl])
    try:
        rel = fit_relation(gas, magma, lag=tau, fit_mask=mask, gas_background=gas_background,
                           magma_measure=magma_measure, n_boot=n_boot, min_r2=min_r2, petrology=petrology, seed=seed)
    except NotEnoughDataError:
        rel = fit_relation(gas, magma, lag=tau, gas_background=gas_background, magma_measure=magma_measure,
                           n_boot=n_boot, min_r2=min_r2, petrology=petrology, seed=seed)
        notes.append("the consistent pieces alone do not vary in output: the relation is fitted on every day")
    lab = _label_pieces(p, rel.g0_kg_s, rel.k, rel.predict_se(Q), rel.residual_scale_kg_s, rel.residual_phi,
                        band, z, thr, rel.independent, given, fraction)
    # 3. the lag inside the coupled stretches (profile fit, one intercept per stretch), with its bootstrap interval
    lags = None
    if magma_measure != "eruptive_fraction" and not rel.independent and (lab["label"] == "coupled").any():
        coupled = np.isin(ids, lab.loc[lab["label"] == "coupled", "piece"].to_numpy())
        try:
            # one intercept per contiguous coupled stretch (the relation holds across its pieces, so the
            # output's level changes inside it inform the lag); output pairs only where the output is active
            on = pd.Series(q >= thr).where(np.isfinite(q)).ffill().bfill().fillna(0).to_numpy(dtype=bool)
            on = _debounce(on, max(2, int(np.ceil(pd.Timedelta(min_segment) / step))))
            lags = stretch_lags(gas, magma, _stretch_ids(coupled), coupled, max_lag=max_lag, n_boot=n_boot,
                                seed=seed, magma_segment_id=np.where(on, 0, -1))
        except NotEnoughDataError as exc:
            notes.append(f"lag inside coupled stretches not measured: {exc}")
        weak = lags is not None and ((lags.k_within_ci is not None and lags.k_within_ci[0] <= 0)
                                     or (np.isfinite(lags.p_value) and lags.p_value >= 0.05))
        if weak:
            import dataclasses

            why = (f"{INDEPENDENT}: inside the coupled stretches gas does not follow the output's pulses "
                   f"(peak r = {lags.peak_r:.2f} at {lags.lag_days:+.0f} d, surrogate p = {lags.p_value:.3f} over "
                   f"lags ±{(len(lags.r_by_lag) - 1) // 2} bins"
                   + ("" if lags.k_within_ci is None else
                      f"; within-stretch k interval {lags.k_within_ci[0]:.3g} to {lags.k_within_ci[1]:.3g}") + ")")
            rel = dataclasses.replace(rel, verdict=INDEPENDENT, notes=rel.notes + (why,))
            lab = _label_pieces(p, rel.g0_kg_s, rel.k, rel.predict_se(Q), rel.residual_scale_kg_s,
                                rel.residual_phi, band, z, thr, True, given, fraction)
            lags = None
    if given:
        notes.append(f"gas background given: {rel.g0_kg_s * KG_S_TO_T_D:.4g} t/d")
    else:
        notes.append(f"gas background g0 = {rel.g0_kg_s * KG_S_TO_T_D:.4g} t/d, the relation's intercept at zero "
                     f"output ({rel.ci_level:.0%} interval {rel.g0_ci[0] * KG_S_TO_T_D:.4g} to "
                     f"{rel.g0_ci[1] * KG_S_TO_T_D:.4g})")
    iv = _intervals(lab, g, q, qs, index, step, rel, thr, unit, band)
    short = iv["duration_days"] < 3
    if short.any():
        notes.append(f"{int(short.sum())} interval(s) shorter than 3 days; labels there rest on few samples")
    return RelationRegimeResult(iv, "eruptive_fraction" if magma_measure == "eruptive_fraction" else
                                "extrusion_rate", float(rel.g0_kg_s), thr, float(rel.k), 1 - band, 1 + band,
                                tuple(notes), relation=rel, lags=lags, pieces=lab, band=band, verdict=rel.verdict,
                                step_share=(_step_share(g, ids), _step_share(q, ids)))


def _intervals(lab, g, q, qs, index, step, rel, thr, unit, band) -> pd.DataFrame:
    groups = (lab["label"] != lab["label"].shift()).cumsum()
    rows = []
    t = pd.DatetimeIndex(index).as_unit("ns").asi8
    for _, grp in lab.groupby(groups, sort=False):
        a, b = grp["start"].iloc[0], grp["end"].iloc[-1]
        sel = (t >= a.value) & (t < b.value)
        gm = float(np.nanmean(g[sel])) if np.isfinite(g[sel]).any() else np.nan
        qm = float(np.nanmean(q[sel])) if np.isfinite(q[sel]).any() else np.nan
        ql = float(np.nanmean(qs[sel])) if np.isfinite(qs[sel]).any() else np.nan
        qmed = float(np.nanmedian(qs[sel])) if np.isfinite(qs[sel]).any() else np.nan
        w = grp["n_days"].to_numpy(dtype=float)
        lo = float(np.sum(w * grp["band_low_kg_s"]) / w.sum())
        hi = float(np.sum(w * grp["band_high_kg_s"]) / w.sum())
        pr = float(np.sum(w * grp["predicted_kg_s"]) / w.sum())
        rows.append({"start": a, "end": b, "label": grp["label"].iloc[0], "gas_kg_s": gm, "magma_level": qm,
                     "magma_lagged": ql, "predicted_kg_s": pr,
                     "band_low_kg_s": lo, "band_high_kg_s": hi, "n_days": int(grp["n_days"].sum()),
                     "magma_median": qmed})
    df = pd.DataFrame(rows)
    # pieces touch: a short hole between them (missing days) belongs to the interval before it
    nxt = df["start"].shift(-1)
    close = (nxt - df["end"]) <= pd.Timedelta("10D")
    df.loc[close, "end"] = nxt[close]
    df["duration_days"] = (df["end"] - df["start"]) / pd.Timedelta("1D")
    df["gas_t_d"] = df["gas_kg_s"] * KG_S_TO_T_D
    df["gas_to_baseline"] = df["gas_kg_s"] / rel.g0_kg_s if rel.g0_kg_s > 0 else np.nan
    with np.errstate(all="ignore"):
        df["excess_ratio"] = np.where(df["magma_median"] >= thr, (df["gas_kg_s"] - rel.g0_kg_s) / df["magma_lagged"],
                                      np.nan)
        df["ratio_vs_expected"] = df["excess_ratio"] / rel.k if rel.k > 0 else np.nan
    df["predicted_t_d"] = df["predicted_kg_s"] * KG_S_TO_T_D
    df["band_low_t_d"] = df["band_low_kg_s"] * KG_S_TO_T_D
    df["band_high_t_d"] = df["band_high_kg_s"] * KG_S_TO_T_D
    df["gas_threshold_t_d"] = df["band_high_t_d"]
    df["magma_threshold"] = thr
    lag = f"{rel.lag_days:+.0f} d"
    df["evidence"] = [
        (f"gas {r.gas_t_d:.0f} t/d vs {r.predicted_t_d:.0f} t/d predicted (band {r.band_low_t_d:.0f}-"
         f"{r.band_high_t_d:.0f}) at magma output {r.magma_lagged:.3g} {unit} (lag {lag}); "
         f"output {'active' if r.magma_median >= thr else 'not active'} (median {r.magma_median:.3g}, "
         f"threshold {thr:g})"
         + ("; record-level verdict: gas independent of magma output" if rel.independent else ""))
        for r in df.itertuples()]
    cols = ["start", "end", "duration_days", "label", "gas_t_d", "gas_kg_s", "magma_level", "magma_lagged",
            "predicted_t_d", "band_low_t_d", "band_high_t_d", "gas_to_baseline", "excess_ratio", "ratio_vs_expected",
            "gas_threshold_t_d", "magma_threshold", "n_days", "evidence"]
    return df[cols].reset_index(drop=True)

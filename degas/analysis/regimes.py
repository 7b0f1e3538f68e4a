"""Coupling regimes: label every interval by what gas and magma output are doing together.

Inputs are two change-point segment tables (columns ``start``, ``end``, ``level``): SO2 flux in
kg/s and magma output as extrusion rate (m³/s DRE) or eruptive-state fraction (0-1). The two
segmentations are intersected; each piece gets one of four labels:

* ``"coupled"``    - gas active and magma output active, with excess gas per unit magma output
  within [ratio_low, ratio_high] × the expected ratio;
* ``"quiet"``      - neither active;
* ``"gas_only"``   - gas active without magma output, or far more gas than the output explains
  (ratio > ratio_high × expected): decoupled degassing;
* ``"magma_only"`` - magma output without matching gas, either gas not active or ratio <
  ratio_low × expected: gas-poor output, possibly sealing (one interpretation among several:
  declining supply, scrubbing or plume geometry can look the same).

Thresholds, all configurable and reported per interval. The defaults are this project's starting points,
not published values (no standard exists; tune them per volcano with its observatory):

* gas baseline (kg/s): given, or the level of the lowest gas segment (stated in the notes);
* gas active: level >= ``gas_factor`` × baseline (default 2);
* magma active: extrusion rate >= 0.1 m³/s, or eruptive fraction >= 0.5 (defaults);
* expected ratio (kg/s of excess gas per m³/s, i.e. kg SO2 per m³ DRE; or kg/s per unit eruptive
  fraction): given (e.g. petrological, :mod:`degas.analysis.budget`), or the duration-weighted
  median over intervals where both are active (then coupled is defined relative to the record itself).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from degas.errors import DegasError, NotEnoughDataError
from degas.units import KG_S_TO_T_D

LABELS = ("coupled", "quiet", "gas_only", "magma_only")
MAGMA_MEASURES = {"extrusion_rate": ("m³/s", 0.1), "eruptive_fraction": ("fraction", 0.5)}


@dataclass(frozen=True)
class RegimeResult:
    """Labelled intervals.

    ``intervals`` columns: start, end, duration_days, label, gas_t_d, gas_kg_s, magma_level,
    gas_to_baseline, excess_ratio (kg/s excess gas per magma unit), ratio_vs_expected,
    gas_threshold_t_d, magma_threshold, evidence.
    """

    intervals: pd.DataFrame
    magma_measure: str
    gas_baseline_kg_s: float
    gas_factor: float
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


def _check_segments(df: pd.DataFrame, what: str) -> pd.DataFrame:
    if not isinstance(df, pd.DataFrame):
        raise DegasError(f"{what} segments must be a DataFrame with columns start, end, level")
    missing = [c for c in ("start", "end", "level") if c not in df.columns]
    if missing:
        raise DegasError(f"{what} segments lack columns {missing} (need start, end, level)")
    df = df.dropna(subset=["start", "end", "level"]).sort_values("start").reset_index(drop=True)
    for c in ("start", "end"):
        t = pd.to_datetime(df[c], utc=True)
        df[c] = t.astype("datetime64[ns, UTC]")
    if df.empty:
        raise NotEnoughDataError(f"no {what} segments with a level")
    if (df["end"] <= df["start"]).any():
        raise DegasError(f"{what} segments must have end > start")
    return df


def _level_at(df: pd.DataFrame, t0, t1) -> float:
    """Duration-weighted level of segments overlapping [t0, t1) (NaN when none)."""
    s = df["start"].to_numpy(dtype="datetime64[ns]").astype("int64")
    e = df["end"].to_numpy(dtype="datetime64[ns]").astype("int64")
    w = (np.minimum(e, pd.Timestamp(t1).value) - np.maximum(s, pd.Timestamp(t0).value)).clip(min=0).astype(float)
    if w.sum() <= 0:
        return np.nan
    return float(np.sum(w * df["level"].to_numpy(dtype="float64")) / w.sum())


def classify_regimes(
    gas_segments: pd.DataFrame,
    magma_segments: pd.DataFrame,
    *,
    magma_measure: str = "extrusion_rate",
    gas_baseline: float | None = None,
    gas_factor: float = 2.0,
    magma_threshold: float | None = None,
    expected_ratio: float | None = None,
    ratio_low: float = 0.3,
    ratio_high: float = 3.0,
    merge: bool = True,
) -> RegimeResult:
    """Label the intersection of gas and magma-output segments with the four regime names.

    Parameters
    ----------
    gas_segments : start, end (UTC), level (SO2 flux, kg/s).
    magma_segments : start, end (UTC), level (m³/s DRE, or eruptive fraction 0-1).
    magma_measure : "extrusion_rate" or "eruptive_fraction".
    gas_baseline : passive-degassing baseline, kg/s; default: the lowest gas segment level.
    gas_factor : gas is active at level >= gas_factor × baseline.
    magma_threshold : magma output is active at level >= this (default 0.1 m³/s or 0.5).
    expected_ratio : expected excess gas per magma unit (kg/s per m³/s = kg/m³); default: the
        duration-weighted median over intervals where both are active.
    ratio_low, ratio_high : band around the expected ratio counted as coupled.
    merge : merge consecutive intervals with the same label.
    """
    if magma_measure not in MAGMA_MEASURES:
        raise DegasError(f"unknown magma measure {magma_measure!r}; valid: {', '.join(MAGMA_MEASURES)}")
    if not 0 < ratio_low < 1 < ratio_high:
        raise DegasError("need 0 < ratio_low < 1 < ratio_high")
    gs = _check_segments(gas_segments, "gas")
    ms = _check_segments(magma_segments, "magma-output")
    unit, default_thr = MAGMA_MEASURES[magma_measure]
    thr = default_thr if magma_threshold is None else float(magma_threshold)
    notes: list[str] = []
    if gas_baseline is None:
        gas_baseline = float(gs["level"].min())
        notes.append(f"gas baseline = level of the lowest gas segment, {gas_baseline * KG_S_TO_T_D:.4g} t/d")
    if gas_baseline <= 0:
        raise DegasError("the gas baseline must be positive; give a positive --gas-baseline (t/d)")
    t0 = max(gs["start"].min(), ms["start"].min())
    t1 = min(gs["end"].max(), ms["end"].max())
    if t1 <= t0:
        raise NotEnoughDataError("the gas and magma-output segments do not overlap in time")
    cuts = pd.DatetimeIndex(
        sorted({t for t in pd.concat([gs["start"], gs["end"], ms["start"], ms["end"]]) if t0 <= t <= t1})
    )
    rows = []
    for a, b in zip(cuts[:-1], cuts[1:], strict=True):
        gl, ml = _level_at(gs, a, b), _level_at(ms, a, b)
        if np.isnan(gl) or np.isnan(ml):
            continue
        rows.append({"start": a, "end": b, "gas_kg_s": gl, "magma_level": ml})
    if not rows:
        raise NotEnoughDataError("no interval has both a gas and a magma-output level")
    df = pd.DataFrame(rows)
    gas_thr = gas_factor * gas_baseline
    g_on = df["gas_kg_s"] >= gas_thr
    m_on = df["magma_level"] >= thr
    with np.errstate(divide="ignore", invalid="ignore"):
        excess = np.where(m_on, (df["gas_kg_s"] - gas_baseline).clip(lower=0) / df["magma_level"], np.nan)
    df["excess_ratio"] = excess
    if expected_ratio is None:
        both = (g_on & m_on).to_numpy()
        if both.any():
            w = (df["end"] - df["start"]).dt.total_seconds().to_numpy()[both]
            r = excess[both]
            o = np.argsort(r)
            cw = np.cumsum(w[o])
            expected_ratio = float(r[o][np.searchsorted(cw, cw[-1] / 2)])
            notes.append(
                f"expected gas per magma output = duration-weighted median over both-active intervals, "
                f"{expected_ratio:.4g} kg/s per {unit}; coupling judged relative to this record"
            )
        else:
            expected_ratio = np.nan
            notes.append("no interval with both gas and magma output active: no expected ratio")
    rve = excess / expected_ratio if expected_ratio and np.isfinite(expected_ratio) else np.full(len(df), np.nan)
    labels = []
    for gon, mon, q in zip(g_on, m_on, rve, strict=True):
        if mon and (not gon or (np.isfinite(q) and q < ratio_low)):
            labels.append("magma_only")
        elif gon and (not mon or (np.isfinite(q) and q > ratio_high)):
            labels.append("gas_only")
        elif gon and mon:
            labels.append("coupled")
        else:
            labels.append("quiet")
    df["label"] = labels
    df["ratio_vs_expected"] = rve
    if merge:
        df = _merge(df, gas_baseline, expected_ratio)
    df["duration_days"] = (df["end"] - df["start"]) / pd.Timedelta("1D")
    df["gas_t_d"] = df["gas_kg_s"] * KG_S_TO_T_D
    df["gas_to_baseline"] = df["gas_kg_s"] / gas_baseline
    df["gas_threshold_t_d"] = gas_thr * KG_S_TO_T_D
    df["magma_threshold"] = thr
    df["evidence"] = [
        _evidence(r, gas_baseline, gas_thr, thr, unit, ratio_low, ratio_high) for r in df.itertuples()
    ]
    cols = ["start", "end", "duration_days", "label", "gas_t_d", "gas_kg_s", "magma_level", "gas_to_baseline",
            "excess_ratio", "ratio_vs_expected", "gas_threshold_t_d", "magma_threshold", "evidence"]
    short = df["duration_days"] < 3
    if short.any():
        notes.append(f"{int(short.sum())} interval(s) shorter than 3 days; labels there rest on few samples")
    return RegimeResult(df[cols].reset_index(drop=True), magma_measure, float(gas_baseline), float(gas_factor),
                        thr, float(expected_ratio), ratio_low, ratio_high, tuple(notes))


def _merge(df: pd.DataFrame, baseline: float, expected: float) -> pd.DataFrame:
    groups = (df["label"] != df["label"].shift()).cumsum()
    out = []
    for _, g in df.groupby(groups, sort=False):
        w = (g["end"] - g["start"]).dt.total_seconds().to_numpy()
        gl = float(np.sum(w * g["gas_kg_s"]) / w.sum())
        ml = float(np.sum(w * g["magma_level"]) / w.sum())
        ex = max(gl - baseline, 0.0) / ml if ml > 0 and np.isfinite(g["excess_ratio"]).any() else np.nan
        out.append(
            {
                "start": g["start"].iloc[0],
                "end": g["end"].iloc[-1],
                "gas_kg_s": gl,
                "magma_level": ml,
                "excess_ratio": ex,
                "ratio_vs_expected": ex / expected if np.isfinite(expected) and expected else np.nan,
                "label": g["label"].iloc[0],
            }
        )
    return pd.DataFrame(out)


def _evidence(r, baseline, gas_thr, thr, unit, lo, hi) -> str:
    g = f"gas {r.gas_kg_s * KG_S_TO_T_D:.0f} t/d = {r.gas_kg_s / baseline:.1f}× baseline"
    g += " (active)" if r.gas_kg_s >= gas_thr else f" (< {gas_thr * KG_S_TO_T_D:.0f} t/d, not active)"
    m = f"magma output {r.magma_level:.3g} {unit}" + (" (active)" if r.magma_level >= thr else f" (< {thr:g})")
    q = ""
    if np.isfinite(r.ratio_vs_expected):
        q = f"; excess gas per output = {r.ratio_vs_expected:.2f}× expected (coupled band {lo:g}-{hi:g})"
    return f"{g}; {m}{q}"

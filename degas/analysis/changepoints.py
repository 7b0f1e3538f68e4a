"""Change points: has the level of a series changed, and since when (with honest uncertainty)?

:func:`detect_changepoints` takes a :class:`~degas.model.TimeSeries` (or several aligned ones for
joint detection) and returns a frozen :class:`ChangePointResult`. The steps, in order:

1. **Regular grid.** The series is put on a regular grid with :func:`degas.grid.resample`
   (bins ``[start, start + step)``, labelled by their start, UTC). Missing bins are never
   interpolated: within a run they are left out of the cost (the solver sees the valid bins in
   order, their times are kept), and a gap longer than ``max_gap`` splits the signal into pieces
   segmented separately (a piece boundary is not a change point).
2. **Transform per kind** (:data:`DEFAULT_TRANSFORMS`, overridable): gas fluxes change
   multiplicatively, so detection runs on ``ln(flux)`` (values ≤ 0 are left out, with a note);
   event rates (quantity ``*_rate``/``*_count``) are Poisson-like counts per bin, so detection runs
   on the Anscombe (1948) transform ``2·sqrt(count + 3/8)`` (variance ≈ 1); ratios, extrusion
   rates and amplitudes stay on their own scale.
3. **Noise scale** σ (transformed unit), per series; each series is divided by its σ before the
   search. The floor (and, with ``noise="mad_diff"``, the estimate) is the median absolute
   deviation of first differences within pieces: for i.i.d. noise a difference has variance 2σ²
   and MAD·1.4826 estimates a normal standard deviation (1.4826 = 1/Φ⁻¹(3/4)), so
   ``σ = 1.4826·MAD(Δx)/√2``; a level shift touches one difference only. Monitoring series are
   autocorrelated, which makes that estimate too small and the detector over-segment (on the
   TCPD benchmark it scores far below predicting nothing). The default ``noise="auto"`` therefore
   uses the AR(1) long-run scale of the fitted model's residuals, ``SD·sqrt((1+φ)/(1-φ))`` with
   φ their lag-1 autocorrelation (clipped to [0, 0.95]; common practice for change points under
   dependence), floored at the MAD value: it starts from the one-segment fit (σ = SD about the
   mean), segments, re-estimates σ from the residuals, and repeats until the segmentation
   repeats (at most :data:`NOISE_MAX_ITER` times). For independent noise it converges to σ.
4. **Penalty on the standardised scale** (so it does not depend on the units), convention of the
   R ``changepoint`` package (``penalty_decision.R``; the project's reference sheet §5.7), with
   p = number of means changing (the number of series d) and n the number of valid bins:
   ``"bic"`` = (p+1)·ln n per change (2·ln n for one series); ``"mbic"`` (Zhang & Siegmund 2007) =
   (p+2)·ln n per change plus ``ln(n_i)`` added to every segment's cost (exact with our solver;
   ruptures methods get the per-change part only, with a note); ``"bic3"`` (the default) =
   (p+2)·ln n per change without the segment term, i.e. MBIC's per-change part. A float is the
   penalty per change in units of σ². On the unscaled l2 sum of squares all of these are
   multiplied by σ². The default bic3 + auto was chosen on the TCPD benchmark (one global
   setting, see tests/benchmarks/bench_tcpd.py), where bic + mad_diff under-performs.
5. **Search** by name (:data:`METHODS`): ``"exact"`` (default) is our exact solver of the
   penalised l2 cost (:mod:`degas.analysis._fastpath`: functional pruning for one series,
   geometric functional pruning (GeomFPOP, Pishchagina, Rigaill & Runge 2024) with PELT's
   min-size-correct rule for several series or MBIC); ``"pelt"``, ``"binseg"``,
   ``"window"``, ``"dynp"`` and ``"kernel"`` call ruptures (Truong, Oudre & Vayatis 2020) with
   the l2 cost (``kernel`` = ``KernelCPD(kernel="linear")``, the same optimum as l2).
   ``min_segment`` is a duration converted to bins.
6. **Uncertainty.** The confidence interval of each change time is the likelihood-ratio profile
   of its location within its two neighbouring segments: every position s where splitting there
   instead raises the standardised cost by at most q = -2·ln(1 - sqrt(confidence)) (7.35 at 95 %,
   see :func:`_location_threshold`), reported as a UTC time range. On synthetic series with
   independent noise the nominal 95 % range held the true change in 97-98 % of detected cases
   (tests). The strength of a change is the ratio of the levels after/before: for log-transformed
   series ``exp(Δmean)`` with interval ``exp(Δ ± z·σ·sqrt(1/n₁ + 1/n₂))``; for the other
   transforms the ratio of back-transformed means with a delta-method interval. With the
   long-run σ both intervals allow for AR(1)-like autocorrelation only approximately.

A change point is the UTC start time of the first bin of the new segment. ruptures returns end
indices with ``bkps[-1] == n_samples``; :func:`_bkps_to_rows` is the one place that translates them.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import stats

from degas.analysis.robust import MAD_TO_SD
from degas.errors import DegasError, NotEnoughDataError
from degas.grid import contiguous_runs, grid_for, nominal_interval, resample, to_timedelta
from degas.model import TimeSeries

#: Default transform for each kind (event-rate quantities are detected as counts, see _default_transform).
DEFAULT_TRANSFORMS: dict[str, str] = {
    "gas_flux": "log",
    "gas_ratio": "identity",
    "extrusion_rate": "identity",
    "erupted_volume": "identity",
    "amplitude": "identity",
    "other": "identity",
}
TRANSFORM_NAMES: tuple[str, ...] = ("log", "anscombe", "identity")
PENALTY_NAMES: tuple[str, ...] = ("bic3", "bic", "mbic")
#: Noise estimates: "auto" (long-run σ from the residuals of the fit, iterated; the default) or
#: "mad_diff" (MAD of first differences, assumes independent noise).
NOISE_NAMES: tuple[str, ...] = ("auto", "mad_diff")
NOISE_MAX_ITER = 20
NOISE_MAX_PHI = 0.95
#: Nice grid steps tried, in order, when ``step`` is not given.
_NICE_STEPS = ("1min", "10min", "1h", "6h", "1D", "7D", "30D")
#: Default minimum segment length and maximum bridged gap, in bins of the grid.
DEFAULT_MIN_SEGMENT_BINS = 3
DEFAULT_MAX_GAP_BINS = 5
#: Lag-1 autocorrelation of residuals above which the intervals are flagged as too narrow.
_AUTOCORR_NOTE = 0.3


# --------------------------------------------------------------------------------------------
# result


@dataclass(frozen=True, eq=False)
class ChangePointResult:
    """Change points of one series (or several, jointly) and the segments between them.

    Attributes
    ----------
    change_times : UTC start times of the new segments, ascending.
    changes : one row per change and series: ``change`` (0-based), ``time``, ``ci_start``,
        ``ci_end`` (UTC, the confidence range of the change time, bin starts), ``series``,
        ``level_before``, ``level_after`` (canonical unit), ``ratio`` (after/before),
        ``ratio_low``, ``ratio_high`` (its interval), ``relative_change`` (ratio - 1).
    segments : one row per segment and series: ``segment``, ``piece``, ``series``, ``start``
        (UTC, first bin), ``end`` (UTC, end of the last bin), ``count`` (valid bins), ``level``
        (canonical unit; geometric mean for log, back-transformed Anscombe mean for counts),
        ``spread`` (standard deviation of the canonical values), ``relative_change``
        (level / previous level - 1, NaN for the first segment).
    columns : series names (quantity or column name).
    transforms : transform applied to each series.
    method, cost_name : search method and cost (always ``"l2"``).
    penalty_name : ``"bic"``, ``"mbic"`` or ``"user"``; penalty : penalty per change on the
        standardised scale (multiples of σ²); cost : total penalised cost on that scale.
    step : grid step; min_size : minimum segment length in bins (min_segment as a duration);
        max_gap : longest gap bridged inside a piece.
    sigma : noise scale of each series on the transformed scale.
    n_samples : valid bins used; pieces : (start, end) UTC of each piece segmented separately.
    confidence : level of the change-time and ratio intervals.
    notes : caveats computed from the data.
    """

    change_times: tuple[pd.Timestamp, ...]
    changes: pd.DataFrame
    segments: pd.DataFrame
    columns: tuple[str, ...]
    transforms: tuple[str, ...]
    method: str
    cost_name: str
    penalty_name: str
    penalty: float
    cost: float
    step: pd.Timedelta
    min_size: int
    min_segment: pd.Timedelta
    max_gap: pd.Timedelta
    sigma: tuple[float, ...]
    n_samples: int
    pieces: tuple[tuple[pd.Timestamp, pd.Timestamp], ...]
    confidence: float
    notes: tuple[str, ...]

    @property
    def n_changes(self) -> int:
        return len(self.change_times)

    def to_frame(self) -> pd.DataFrame:
        """The changes as a tidy table (a copy of :attr:`changes`)."""
        return self.changes.copy()

    table = to_frame

    def segments_frame(self) -> pd.DataFrame:
        """The segments as a tidy table (a copy of :attr:`segments`)."""
        return self.segments.copy()

    def summary(self) -> str:
        """A few lines of text: settings, each change with its interval and ratio, and notes."""
        lines = [
            f"Change points of {', '.join(self.columns)}: {self.n_changes} found "
            f"({self.method}, l2 cost, penalty {self.penalty_name} = {self.penalty:.3g} σ², "
            f"transform {', '.join(self.transforms)}, step {_td(self.step)}, "
            f"minimum segment {_td(self.min_segment)}, {self.n_samples} bins)",
        ]
        for _, r in self.changes.iterrows():
            lines.append(
                f"  {r['time']:%Y-%m-%d %H:%M} UTC ({self.confidence:.0%} range {r['ci_start']:%Y-%m-%d %H:%M}"
                f" to {r['ci_end']:%Y-%m-%d %H:%M}) {r['series']}: ×{r['ratio']:.3g}"
                f" [{r['ratio_low']:.3g}, {r['ratio_high']:.3g}]"
            )
        lines.extend(f"  note: {n}" for n in self.notes)
        return "\n".join(lines)


# --------------------------------------------------------------------------------------------
# transforms


def _t_log(y: np.ndarray, scale: float) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(y > 0, np.log(np.where(y > 0, y, 1.0)), np.nan)


def _t_anscombe(y: np.ndarray, scale: float) -> np.ndarray:
    c = y * scale
    with np.errstate(invalid="ignore"):
        return np.where(c >= 0, 2.0 * np.sqrt(np.where(c >= 0, c, 0.0) + 0.375), np.nan)


def _t_identity(y: np.ndarray, scale: float) -> np.ndarray:
    return y.astype("float64", copy=True)


_TRANSFORMS: dict[str, Callable[[np.ndarray, float], np.ndarray]] = {
    "log": _t_log,
    "anscombe": _t_anscombe,
    "identity": _t_identity,
}


def _default_transform(kind: str, quantity: str) -> str:
    if kind == "other" and (quantity.endswith("_rate") or quantity.endswith("_count")):
        return "anscombe"
    return DEFAULT_TRANSFORMS.get(kind, "identity")


# --------------------------------------------------------------------------------------------
# search methods: each takes (z (n, d) standardised, beta, min_size, seg_coef) -> end indices


def _search_exact(z: np.ndarray, beta: float, m: int, seg_coef: float) -> list[int]:
    from degas.analysis._fastpath import fpop_l2, geom_l2

    if z.shape[1] == 1 and seg_coef == 0.0:
        return fpop_l2(z[:, 0], beta, m)[0]
    return geom_l2(z, beta, m, seg_coef)[0]


def _ruptures_call(fn: Callable[[], list[int]], name: str) -> list[int]:
    from ruptures.exceptions import BadSegmentationParameters, NotEnoughPoints

    try:
        return [int(b) for b in fn()]
    except (BadSegmentationParameters, NotEnoughPoints) as exc:
        raise NotEnoughDataError(f"ruptures {name}: {exc or 'segment too short for the minimum length'}") from None


def _search_pelt(z, beta, m, seg_coef):
    import ruptures as rpt

    return _ruptures_call(lambda: rpt.Pelt(model="l2", min_size=m, jump=1).fit(z).predict(pen=beta), "pelt")


def _search_binseg(z, beta, m, seg_coef):
    import ruptures as rpt

    return _ruptures_call(lambda: rpt.Binseg(model="l2", min_size=m, jump=1).fit(z).predict(pen=beta), "binseg")


def _search_window(z, beta, m, seg_coef):
    import ruptures as rpt

    width = max(2 * m, 10)
    if len(z) <= width:
        return [len(z)]
    return _ruptures_call(
        lambda: rpt.Window(width=width, model="l2", min_size=m, jump=1).fit(z).predict(pen=beta), "window"
    )


def _search_kernel(z, beta, m, seg_coef):
    import ruptures as rpt

    return _ruptures_call(lambda: rpt.KernelCPD(kernel="linear", min_size=m).fit(z).predict(pen=beta), "kernel")


#: dynp has no penalised mode: the number of changes (≤ this) minimising cost + β·k is chosen.
DYNP_MAX_CHANGES = 10
DYNP_MAX_SAMPLES = 3000


def _search_dynp(z, beta, m, seg_coef):
    import ruptures as rpt

    from degas.analysis._fastpath import segmentation_cost

    n = len(z)
    if n > DYNP_MAX_SAMPLES:
        raise DegasError(f"method 'dynp' is O(K·n²) in Python; {n} bins is above its limit of {DYNP_MAX_SAMPLES}: "
                         "use method 'exact' (same optimum, fast)")
    algo = rpt.Dynp(model="l2", min_size=m, jump=1).fit(z)
    best, best_cost = [n], segmentation_cost(z, [n], beta)
    for k in range(1, min(DYNP_MAX_CHANGES, n // m - 1) + 1):
        try:
            bk = [int(b) for b in algo.predict(n_bkps=k)]
        except Exception:  # ruptures raises when k segments of min_size do not fit
            break
        c = segmentation_cost(z, bk, beta)
        if c < best_cost:
            best, best_cost = bk, c
    return best


METHODS: dict[str, Callable[[np.ndarray, float, int, float], list[int]]] = {
    "exact": _search_exact,
    "pelt": _search_pelt,
    "binseg": _search_binseg,
    "window": _search_window,
    "dynp": _search_dynp,
    "kernel": _search_kernel,
}


# --------------------------------------------------------------------------------------------
# input preparation


@dataclass(frozen=True)
class _Prepared:
    times: pd.DatetimeIndex      # bin starts of the grid
    values: np.ndarray           # (n_bins, d) canonical unit, NaN = missing
    names: tuple[str, ...]
    transforms: tuple[str, ...]
    count_scale: tuple[float, ...]   # canonical value × scale = count per bin (anscombe)
    step: pd.Timedelta


def _lookup(name: str, table: Mapping, what: str):
    try:
        return table[name]
    except (KeyError, TypeError):
        raise DegasError(f"unknown {what} {name!r}; valid: {', '.join(table)}") from None


def _choose_step(series: Sequence[TimeSeries]) -> pd.Timedelta:
    nominal = [nominal_interval(s.data["time"]) for s in series]
    nominal = [d for d in nominal if d is not None]
    if not nominal:
        return pd.Timedelta("1D")
    d = max(nominal)
    for s in _NICE_STEPS:
        if pd.Timedelta(s) >= d * 0.99:
            return pd.Timedelta(s)
    return pd.Timedelta(_NICE_STEPS[-1])


def _transform_for(name: str, transform, kind: str, quantity: str) -> str:
    if transform is None:
        t = _default_transform(kind, quantity)
    elif isinstance(transform, str):
        t = transform
    elif isinstance(transform, Mapping):
        t = transform.get(name) or _default_transform(kind, quantity)
    else:
        raise DegasError(f"transform must be a name or a mapping of series name to name, got {transform!r}")
    _lookup(t, _TRANSFORMS, "transform")
    return t


def _count_scale(series: TimeSeries | None, step: pd.Timedelta) -> float:
    unit = (series.meta.unit or "").replace(" ", "") if series is not None else ""
    days = step.total_seconds() / 86400.0
    if unit in ("1/d", "d-1", "1/day"):
        return days
    if unit in ("1/h", "h-1"):
        return days * 24.0
    if unit in ("1/s", "s-1", "Hz"):
        return step.total_seconds()
    return 1.0


def _prepare(series, step, transform) -> _Prepared:
    if isinstance(series, TimeSeries):
        series = [series]
    if isinstance(series, pd.DataFrame):
        return _prepare_frame(series, step, transform)
    if not isinstance(series, Sequence) or not series or not all(isinstance(s, TimeSeries) for s in series):
        raise DegasError("detect_changepoints takes a TimeSeries, a list of TimeSeries or a DataFrame of "
                         "aligned series")
    for s in series:
        if s.data["value"].notna().sum() == 0:
            raise NotEnoughDataError(f"{s.meta.series_id}: every value is missing; nothing to segment")
    td = _choose_step(series) if step is None else to_timedelta(step)
    grid = grid_for(series, td)
    names, cols, trans, scales = [], [], [], []
    for s in series:
        name = s.meta.quantity if s.meta.quantity not in names else s.meta.series_id
        names.append(name)
        cols.append(resample(s, td, how="mean", grid=grid)["value"].to_numpy(dtype="float64"))
        t = _transform_for(name, transform, s.meta.kind, s.meta.quantity)
        trans.append(t)
        scales.append(_count_scale(s, td) if t == "anscombe" else 1.0)
    return _Prepared(grid.starts, np.column_stack(cols), tuple(names), tuple(trans), tuple(scales), td)


def _prepare_frame(df: pd.DataFrame, step, transform) -> _Prepared:
    idx = df.index
    if not isinstance(idx, pd.DatetimeIndex) or idx.tz is None:
        raise DegasError("a DataFrame of aligned series needs a tz-aware (UTC) DatetimeIndex of bin starts")
    if len(idx) < 2:
        raise NotEnoughDataError(f"{len(idx)} rows: too few to segment")
    idx = idx.tz_convert("UTC").as_unit("ns")
    d = np.diff(idx.asi8)
    td = pd.Timedelta(int(d.min()), unit="ns") if step is None else to_timedelta(step)
    if d.min() <= 0 or np.any(d % td.value != 0):
        raise DegasError("the DataFrame index must be increasing on a regular grid (resample the series first, "
                         "e.g. with degas.grid.resample)")
    full = pd.date_range(idx[0], idx[-1], freq=td, tz="UTC").as_unit("ns")
    df = df.set_axis(idx).reindex(full)
    names = tuple(str(c) for c in df.columns)
    trans = tuple(_transform_for(n, transform, "other", n) for n in names)
    values = np.column_stack([pd.to_numeric(df[c], errors="coerce").to_numpy(dtype="float64") for c in df.columns])
    return _Prepared(full, values, names, trans, tuple(1.0 for _ in names), td)


def _bins(duration, step: pd.Timedelta, default_bins: int, what: str) -> tuple[int, pd.Timedelta]:
    if duration is None:
        return default_bins, step * default_bins
    try:
        td = pd.Timedelta(duration)
    except (ValueError, TypeError):
        raise DegasError(f"cannot read {what} {duration!r}; use a duration such as '3D' or '12h'") from None
    if td < pd.Timedelta(0):
        raise DegasError(f"{what} must not be negative, got {duration!r}")
    return int(math.ceil(td / step - 1e-9)), td


# --------------------------------------------------------------------------------------------
# main entry


_MAX_SEGMENTABLE = 1e100  # largest |value| whose squares and their sums stay finite in float64


def detect_changepoints(
    series: TimeSeries | Sequence[TimeSeries] | pd.DataFrame,
    *,
    step: str | pd.Timedelta | None = None,
    min_segment: str | pd.Timedelta | None = None,
    max_gap: str | pd.Timedelta | None = None,
    penalty: str | float = "bic3",
    method: str = "exact",
    transform: str | Mapping[str, str] | None = None,
    noise: str = "auto",
    sigma: float | Sequence[float] | None = None,
    confidence: float = 0.95,
) -> ChangePointResult:
    """Find the times where the level of a series changes, with intervals and strengths.

    Parameters
    ----------
    series : a TimeSeries (canonical unit), a list of TimeSeries (joint detection on a common
        grid: shared changes of all series) or a DataFrame of aligned series on a regular UTC
        DatetimeIndex of bin starts (values in any unit; columns are series; a column given the
        ``"anscombe"`` transform must hold counts per bin, default transform ``identity``).
    step : grid step (e.g. ``"1D"``, ``"10min"``); default: the smallest of 1 min, 10 min, 1 h,
        6 h, 1 D, 7 D, 30 D not shorter than the series' median sampling interval.
    min_segment : minimum segment duration (``"3D"``), rounded up to whole bins; default 3 bins.
    max_gap : longest run of missing bins bridged inside a piece (duration); a longer gap splits
        the signal; default 5 bins.
    penalty : ``"bic3"`` (default), ``"bic"``, ``"mbic"`` or a float (penalty per change in units of σ²).
    method : one of :data:`METHODS` (default ``"exact"``).
    transform : ``"log"``, ``"anscombe"``, ``"identity"``, a mapping series name → transform, or
        None for the per-kind default (:data:`DEFAULT_TRANSFORMS`).
    noise : ``"auto"`` (long-run σ of the residuals, iterated; default) or ``"mad_diff"`` (MAD of first
        differences, for independent noise); see the module docstring.
    sigma : noise scale(s) on the transformed scale, overriding the estimate.
    confidence : level (0-1) of the change-time and ratio intervals.

    Returns
    -------
    ChangePointResult

    Raises
    ------
    NotEnoughDataError : all values missing, too few valid bins for the minimum segment length,
        a constant series, or a zero noise estimate.
    DegasError : an unknown method, transform or penalty name (the message lists the valid ones).
    """
    search = _lookup(method, METHODS, "method")
    if not 0.0 < confidence < 1.0:
        raise DegasError(f"confidence must be between 0 and 1, got {confidence}")
    prep = _prepare(series, step, transform)
    notes: list[str] = []
    n_bins, d = prep.values.shape
    m, min_td = _bins(min_segment, prep.step, DEFAULT_MIN_SEGMENT_BINS, "min_segment")
    m = max(m, 1)
    gap_bins, gap_td = _bins(max_gap, prep.step, DEFAULT_MAX_GAP_BINS, "max_gap")

    # transform
    z = np.empty_like(prep.values)
    for j in range(d):
        y = prep.values[:, j]
        z[:, j] = _TRANSFORMS[prep.transforms[j]](y, prep.count_scale[j])
        lost = int(np.sum(np.isfinite(y) & ~np.isfinite(z[:, j])))
        if lost:
            why = "values ≤ 0 have no logarithm" if prep.transforms[j] == "log" else "negative counts"
            notes.append(f"{prep.names[j]}: {lost} bins left out ({why})")
    valid = np.all(np.isfinite(z), axis=1)
    n_valid = int(valid.sum())
    if n_valid == 0:
        raise NotEnoughDataError(f"{', '.join(prep.names)}: no valid values on the grid; nothing to segment")
    # segment costs are sums of squares: beyond 1e100 they overflow float64 (a unit or typing error upstream)
    z_big = float(np.max(np.abs(z[valid]))) if n_valid else 0.0
    if z_big > _MAX_SEGMENTABLE:
        raise DegasError(f"{', '.join(prep.names)}: values up to {z_big:.3g} (after the {'/'.join(prep.transforms)} "
                         f"transform) are too large to segment in float64 (limit {_MAX_SEGMENTABLE:g}); check the "
                         "units of the series")
    if n_valid < m:
        raise NotEnoughDataError(
            f"{n_valid} valid bins of {_td(prep.step)} is shorter than the minimum segment {_td(min_td)} ({m} bins)"
        )
    runs = [np.flatnonzero(valid[a:b]) + a for a, b in contiguous_runs(valid, gap_bins)]
    kept = [r for r in runs if len(r) >= m]
    if len(kept) < len(runs):
        short = len(runs) - len(kept)
        notes.append(f"{short} piece(s) between long gaps are shorter than the minimum segment and are not segmented")
    if not kept:
        raise NotEnoughDataError(
            f"every piece between gaps longer than {_td(gap_td)} is shorter than the minimum segment {_td(min_td)}"
        )
    if len(kept) > 1:
        notes.append(f"gaps longer than {_td(gap_td)} split the signal into {len(kept)} pieces segmented separately")
    frac_missing = 1.0 - n_valid / n_bins
    if frac_missing > 0.2:
        notes.append(f"{frac_missing:.0%} of the bins are missing (left out of the cost, not interpolated)")

    # penalty on the standardised scale
    beta, seg_coef, pname = _penalty(penalty, d, n_valid)
    if seg_coef and method != "exact":
        notes.append(f"MBIC with method {method!r}: ruptures has no segment-length term, so only the "
                     "(p+2)·ln n penalty per change is applied (an approximation of MBIC)")
        seg_coef_used = 0.0
    else:
        seg_coef_used = seg_coef

    # noise scale: the MAD of first differences is the floor (and the white-noise estimate)
    _lookup(noise, {k: k for k in NOISE_NAMES}, "noise estimate")
    sig_mad = np.empty(d)
    for j in range(d):
        vals = z[valid, j]
        if np.ptp(vals) == 0:
            raise NotEnoughDataError(f"{prep.names[j]}: the series is constant; there is no change to find")
        s_mad = _mad_diff_sigma(z[:, j], kept)
        if s_mad > 0:
            sig_mad[j] = s_mad
        elif prep.transforms[j] == "anscombe":
            sig_mad[j] = 1.0
            notes.append(f"{prep.names[j]}: most successive counts are equal (MAD of differences 0); "
                         "σ = 1, the Anscombe (1948) variance, is used as the noise floor")
        elif sigma is None:
            raise NotEnoughDataError(
                f"{prep.names[j]}: noise estimate is zero (more than half of the successive differences are 0, "
                f"e.g. a step-wise or repeated series); no change can be judged against a zero noise scale"
            )
    if sigma is not None:
        sig = np.broadcast_to(np.asarray(sigma, dtype="float64"), (d,)).copy()
        if not np.all(sig > 0):
            raise DegasError(f"sigma must be positive, got {sigma!r}")
        starts_rows, total_cost = _segment(z / sig, kept, search, beta, m, seg_coef_used, seg_coef, method)
    elif noise == "mad_diff":
        sig = sig_mad
        starts_rows, total_cost = _segment(z / sig, kept, search, beta, m, seg_coef_used, seg_coef, method)
    else:
        sig = np.array([_pooled_sd(z[:, j], kept) for j in range(d)])
        sig = np.maximum(sig, sig_mad)
        seen = []
        for _ in range(NOISE_MAX_ITER):
            starts_rows, total_cost = _segment(z / sig, kept, search, beta, m, seg_coef_used, seg_coef, method)
            if starts_rows in seen:
                break
            seen.append(starts_rows)
            sig = np.maximum(_long_run_sigma(z, kept, starts_rows), sig_mad)
        else:
            notes.append(f"the noise estimate did not settle in {NOISE_MAX_ITER} iterations; the last fit is shown")
    zs = z / sig
    changes, segments, change_times, resid_ac = _describe(prep, z, zs, sig, kept, starts_rows, m, confidence)
    if resid_ac > _AUTOCORR_NOTE:
        if noise == "auto" and sigma is None:
            notes.append(f"residuals are autocorrelated (lag-1 r = {resid_ac:.2f}): σ is their long-run (AR(1)) "
                         "value, so penalty and intervals allow for it only approximately; some changes may be "
                         "slow drifts")
        else:
            notes.append(f"residuals are autocorrelated (lag-1 r = {resid_ac:.2f}): the intervals assume "
                         "independent noise and are too narrow; some changes may be slow drifts")
    seg_counts = segments.drop_duplicates("segment")["count"]
    if len(seg_counts) and int(seg_counts.min()) < 2 * m:
        notes.append(f"some segments hold fewer than {2 * m} bins; their levels are rough")
    if not change_times:
        notes.append("no change found at this penalty")
    pieces = tuple((prep.times[r[0]], prep.times[r[-1]] + prep.step) for r in kept)
    return ChangePointResult(
        change_times=tuple(change_times), changes=changes, segments=segments, columns=prep.names,
        transforms=prep.transforms, method=method, cost_name="l2", penalty_name=pname, penalty=float(beta),
        cost=float(total_cost), step=prep.step, min_size=m, min_segment=min_td, max_gap=gap_td,
        sigma=tuple(float(s) for s in sig), n_samples=n_valid, pieces=pieces, confidence=confidence,
        notes=tuple(notes),
    )



def _penalty(penalty, d: int, n: int) -> tuple[float, float, str]:
    """(β per change, segment-length coefficient, name) on the standardised (unit-variance) scale."""
    if isinstance(penalty, str):
        pname = _lookup(penalty, {p: p for p in PENALTY_NAMES}, "penalty")
        if pname == "bic":
            return (d + 1) * math.log(n), 0.0, pname
        if pname == "bic3":
            return (d + 2) * math.log(n), 0.0, pname
        return (d + 2) * math.log(n), 1.0, pname
    try:
        beta = float(penalty)
    except (TypeError, ValueError):
        raise DegasError(f"penalty must be one of {', '.join(PENALTY_NAMES)} or a number, got {penalty!r}") from None
    if not (math.isfinite(beta) and beta >= 0):
        raise DegasError(f"penalty must be a finite non-negative number, got {penalty!r}")
    return beta, 0.0, "user"


def _segment(zs, kept, search, beta, m, seg_coef_used, seg_coef, method) -> tuple[list[list[int]], float]:
    """Search every piece; return the start rows (within each piece's valid samples) and the cost."""
    from degas.analysis._fastpath import segmentation_cost

    starts_rows: list[list[int]] = []
    total = 0.0
    for r in kept:
        x = np.ascontiguousarray(zs[r])
        bk = [len(r)] if len(r) < 2 * m else search(x, beta, m, seg_coef_used)
        _check_bkps(bk, len(r), m, method)
        starts_rows.append(_bkps_to_rows(bk))
        total += segmentation_cost(x, bk, beta, seg_coef)
    return starts_rows, total


def _mad_diff_sigma(zj: np.ndarray, kept: list[np.ndarray]) -> float:
    """σ = 1.4826·MAD(Δx)/√2 from first differences of consecutive valid samples within pieces."""
    diffs = np.concatenate([np.diff(zj[r]) for r in kept if len(r) > 1] or [np.array([])])
    if diffs.size == 0:
        return 0.0
    return MAD_TO_SD * float(np.median(np.abs(diffs - np.median(diffs)))) / math.sqrt(2.0)


def _pooled_sd(zj: np.ndarray, kept: list[np.ndarray]) -> float:
    """Standard deviation about each piece's mean (the one-segment fit), pooled over pieces."""
    res = np.concatenate([zj[r] - zj[r].mean() for r in kept])
    return float(np.sqrt(np.mean(res**2)))


def _long_run_sigma(z: np.ndarray, kept, starts_rows) -> np.ndarray:
    """Long-run σ per column from the residuals of a fit: SD·sqrt((1+φ)/(1-φ)), φ = lag-1 autocorrelation
    of the residuals clipped to [0, 0.95] (the AR(1) long-run variance, common practice)."""
    d = z.shape[1]
    out = np.empty(d)
    for j in range(d):
        ss = lag = 0.0
        cnt = 0
        for r, starts in zip(kept, starts_rows, strict=True):
            zj = z[r, j]
            bounds = [0, *starts, len(r)]
            res = np.concatenate([zj[a:b] - zj[a:b].mean() for a, b in zip(bounds[:-1], bounds[1:], strict=True)])
            ss += float(res @ res)
            lag += float(res[1:] @ res[:-1])
            cnt += len(res)
        phi = min(max(lag / ss, 0.0), NOISE_MAX_PHI) if ss > 0 else 0.0
        out[j] = math.sqrt(ss / cnt) * math.sqrt((1 + phi) / (1 - phi)) if cnt else 0.0
    return out

def _check_bkps(bk: list[int], n: int, m: int, method: str) -> None:
    if not bk or bk[-1] != n:
        raise DegasError(f"internal: method {method!r} returned {bk!r} for {n} samples")


def _bkps_to_rows(bkps: list[int]) -> list[int]:
    """ruptures' end indices (``bkps[-1] == n``) → row of the first sample of each new segment.

    The one place that knows ruptures' convention: the end index of a segment is the row where
    the next one starts, so the start rows are every end index but the last.
    """
    return [int(b) for b in bkps[:-1]]


# --------------------------------------------------------------------------------------------
# description: segments, intervals, strengths


def _location_threshold(confidence: float) -> float:
    """Cost-increase threshold q of the likelihood-ratio interval of a change location.

    Moving a change of size δ (σ units) by h samples changes the standardised cost by
    δ²|h| - 2δ·Σε; with u = δ²h this is |u| - 2W(u) for a two-sided standard Brownian motion W.
    The true location is inside {s : D(s) ≤ q} iff max_u (2W(u) - |u|) ≤ q. Each one-sided
    supremum of a Brownian motion with variance 4 and drift -1 is exponential with rate 1/2,
    and the two sides are independent, so P(cover) = (1 - exp(-q/2))² and
    ``q = -2 ln(1 - sqrt(confidence))`` (7.35 at 95 %, not the χ²₁ value 3.84, which covers only
    ~87 % in our simulations). The limit is for small shifts; larger shifts on a discrete grid
    are covered more often (conservative). Setting of Hinkley (1970) (value derived here).
    """
    return -2.0 * math.log(1.0 - math.sqrt(confidence))


def _back(t: str, mean: float, scale: float) -> float:
    if t == "log":
        return math.exp(mean)
    if t == "anscombe":
        return max((mean / 2.0) ** 2 - 0.375, 0.0) / scale
    return mean


def _back_slope(t: str, mean: float, scale: float) -> float:
    if t == "log":
        return math.exp(mean)
    if t == "anscombe":
        return (mean / 2.0) / scale if mean > 0 else 0.0
    return 1.0


def _cost(cs: np.ndarray, cq: np.ndarray, a: int, b: int) -> float:
    ln = b - a
    s = cs[b] - cs[a]
    return float(cq[b] - cq[a] - np.dot(s, s) / ln)


def _describe(prep: _Prepared, z, zs, sig, kept, starts_rows, m, confidence):
    zq = stats.norm.ppf(0.5 + confidence / 2.0)
    chi = _location_threshold(confidence)
    change_rows, seg_rows = [], []
    change_times = []
    seg_id = 0
    ci = 0
    prev_level = [math.nan] * len(prep.names)
    prev_seg = None
    resid_num = resid_den = 0.0
    for piece, (r, starts) in enumerate(zip(kept, starts_rows, strict=True)):
        x = zs[r]
        cs = np.vstack([np.zeros((1, x.shape[1])), np.cumsum(x, axis=0)])
        cq = np.concatenate([[0.0], np.cumsum(np.sum(x * x, axis=1))])
        bounds = [0, *starts, len(r)]
        resid = np.empty(len(r))
        for k in range(len(bounds) - 1):
            a, b = bounds[k], bounds[k + 1]
            seg = x[a:b]
            resid[a:b] = (seg - seg.mean(axis=0))[:, 0]
            this_seg = []
            for j, name in enumerate(prep.names):
                t, sc = prep.transforms[j], prep.count_scale[j]
                zj = z[r[a:b], j]
                level = _back(t, float(zj.mean()), sc)
                raw = prep.values[r[a:b], j]
                rel = level / prev_level[j] - 1.0 if prev_level[j] and np.isfinite(prev_level[j]) else math.nan
                seg_rows.append({
                    "segment": seg_id, "piece": piece, "series": name,
                    "start": prep.times[r[a]], "end": prep.times[r[b - 1]] + prep.step,
                    "count": int(b - a), "level": level,
                    "spread": float(np.std(raw, ddof=1)) if b - a > 1 else math.nan,
                    "relative_change": rel,
                })
                this_seg.append((float(zj.mean()), b - a, level))
                prev_level[j] = level
            if k > 0 and prev_seg is not None:
                # interval of the change at row a, between segments [bounds[k-1], a) and [a, b)
                lo_b, c, hi_b = bounds[k - 1], a, b
                base = _cost(cs, cq, lo_b, c) + _cost(cs, cq, c, hi_b)
                pos = np.arange(lo_b + m, hi_b - m + 1)
                left = cq[pos] - cq[lo_b] - np.sum((cs[pos] - cs[lo_b]) ** 2, axis=1) / (pos - lo_b)
                right = cq[hi_b] - cq[pos] - np.sum((cs[hi_b] - cs[pos]) ** 2, axis=1) / (hi_b - pos)
                ok = pos[left + right - base <= chi]
                s_lo, s_hi = (int(ok.min()), int(ok.max())) if ok.size else (c, c)
                t_change = prep.times[r[c]]
                change_times.append(t_change)
                for j, name in enumerate(prep.names):
                    t, sc = prep.transforms[j], prep.count_scale[j]
                    (m1, n1, l1), (m2, n2, l2) = prev_seg[j], this_seg[j]
                    se = sig[j] * math.sqrt(1.0 / n1 + 1.0 / n2)
                    if t == "log":
                        ratio = math.exp(m2 - m1)
                        rl, rh = math.exp(m2 - m1 - zq * se), math.exp(m2 - m1 + zq * se)
                    else:
                        ratio = l2 / l1 if l1 != 0 else math.nan
                        se1 = abs(_back_slope(t, m1, sc)) * sig[j] / math.sqrt(n1)
                        se2 = abs(_back_slope(t, m2, sc)) * sig[j] / math.sqrt(n2)
                        # interval on the log scale (delta method: var ln R = (se1/l1)² + (se2/l2)²), so that
                        # it never reaches below zero; undefined when a level is not positive (issue 13)
                        if l1 > 0 and l2 > 0:
                            s_ln = math.sqrt((se1 / l1) ** 2 + (se2 / l2) ** 2)
                            w = zq * s_ln
                            rl, rh = ratio * math.exp(-w), (ratio * math.exp(w) if w < 700 else math.inf)
                        else:
                            rl, rh = math.nan, math.nan
                    change_rows.append({
                        "change": ci, "time": t_change, "ci_start": prep.times[r[s_lo]],
                        "ci_end": prep.times[r[s_hi]], "series": name, "level_before": l1, "level_after": l2,
                        "ratio": ratio, "ratio_low": rl, "ratio_high": rh, "relative_change": ratio - 1.0,
                    })
                ci += 1
            prev_seg = this_seg
            seg_id += 1
        prev_seg = None  # a piece boundary is not a change
        if len(resid) > 2:
            resid_num += float(np.dot(resid[1:], resid[:-1]))
            resid_den += float(np.dot(resid, resid))
    ac = resid_num / resid_den if resid_den > 0 else 0.0
    changes = pd.DataFrame(change_rows, columns=[
        "change", "time", "ci_start", "ci_end", "series", "level_before", "level_after", "ratio", "ratio_low",
        "ratio_high", "relative_change"])
    segments = pd.DataFrame(seg_rows, columns=[
        "segment", "piece", "series", "start", "end", "count", "level", "spread", "relative_change"])
    for frame, cols in ((changes, ("time", "ci_start", "ci_end")), (segments, ("start", "end"))):
        for c in cols:
            frame[c] = pd.to_datetime(frame[c], utc=True).astype("datetime64[ns, UTC]")
    return changes, segments, change_times, ac


def format_duration(td: pd.Timedelta) -> str:
    """A duration as a short offset string ("3D", "6h", "10min") when whole, else pandas' text."""
    s = td.total_seconds()
    for unit, sec in (("D", 86400), ("h", 3600), ("min", 60)):
        if s >= sec and s % sec == 0:
            return f"{int(s // sec)}{unit}"
    return str(td)


_td = format_duration

"""Weekly review: a review window against a baseline, for one series or one catalogue.

Defaults follow the team's Monday routine: the window is the last complete 7 UTC days before a given
date, the baseline the 90 days before the window. For each series: level (median of daily values) and its
ratio to the baseline with a bootstrap interval, a robust z-score, the trend inside the window
(Theil-Sen slope, Mann-Kendall test), and data coverage. For a catalogue: event rates per class in the
window against the baseline, with exact Poisson intervals for the rate ratio.

Trend statistics:

* Mann-Kendall S = Σ_{k<j} sgn(x_j − x_k); Var(S) = [n(n−1)(2n+5) − Σ t(t−1)(2t+5)]/18 with tie groups t;
  Z = (S − sgn S)/√Var(S); two-sided p from the normal distribution (Mann 1945; Kendall 1975).
* Theil-Sen slope: median of pairwise slopes (Theil 1950; Sen 1968), via scipy.stats.theilslopes, with its
  95 % interval.
* Robust z = (median_window − median_baseline) / (1.4826 · MAD_baseline); 1.4826 makes the MAD a consistent
  estimator of the standard deviation for normal data.
Serial correlation inflates Mann-Kendall significance (Hamed & Rao 1998); with 7 daily values the test is
rough in any case, and the result says so.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import stats

from degas.analysis.robust import MAD_TO_SD
from degas.errors import DegasError
from degas.grid import event_counts, make_grid, resample
from degas.model import EVENT_CLASSES, EventCatalog, TimeSeries
from degas.units import conversion_factor


@dataclass(frozen=True)
class ReviewPeriods:
    """The review window [window_start, window_end) and baseline [baseline_start, window_start), UTC."""

    baseline_start: pd.Timestamp
    window_start: pd.Timestamp
    window_end: pd.Timestamp

    @property
    def window_days(self) -> float:
        return (self.window_end - self.window_start) / pd.Timedelta("1D")

    @property
    def baseline_days(self) -> float:
        return (self.window_start - self.baseline_start) / pd.Timedelta("1D")


def review_periods(before: str | pd.Timestamp, *, window_days: int = 7, baseline_days: int = 90) -> ReviewPeriods:
    """The last complete ``window_days`` UTC days before ``before`` (floored to midnight UTC) and the baseline."""
    t = pd.Timestamp(before)
    t = t.tz_localize("UTC") if t.tzinfo is None else t.tz_convert("UTC")
    end = t.floor("D")
    if window_days <= 0 or baseline_days <= 0:
        raise DegasError("window and baseline lengths must be positive numbers of days")
    start = end - pd.Timedelta(days=window_days)
    return ReviewPeriods(start - pd.Timedelta(days=baseline_days), start, end)


@dataclass(frozen=True)
class MannKendallResult:
    """Mann-Kendall trend test: S, Var(S) with tie correction, Z with continuity correction, two-sided p, τ."""

    s: float
    var_s: float
    z: float
    p_value: float
    tau: float
    n: int


def mann_kendall(x: np.ndarray) -> MannKendallResult:
    """Mann-Kendall test on values in time order (NaNs dropped). Needs at least 3 values."""
    x = np.asarray(x, dtype=float)
    x = x[np.isfinite(x)]
    n = x.size
    if n < 3:
        raise DegasError(f"Mann-Kendall needs at least 3 values, have {n}")
    diff = np.sign(x[None, :] - x[:, None])
    s = float(np.triu(diff, 1).sum())
    _, counts = np.unique(x, return_counts=True)
    ties = counts[counts > 1]
    var = (n * (n - 1) * (2 * n + 5) - float(np.sum(ties * (ties - 1) * (2 * ties + 5)))) / 18.0
    if var <= 0:
        z = 0.0
    else:
        z = 0.0 if s == 0 else (s - np.sign(s)) / np.sqrt(var)
    p = float(2 * stats.norm.sf(abs(z)))
    return MannKendallResult(s, var, float(z), p, s / (n * (n - 1) / 2), n)


@dataclass(frozen=True)
class TrendResult:
    """Theil-Sen slope (unit per day) with its 95 % interval, and the Mann-Kendall test."""

    slope_per_day: float
    slope_low: float
    slope_high: float
    intercept: float
    mann_kendall: MannKendallResult | None


def trend(times: pd.Series | pd.DatetimeIndex, values: np.ndarray) -> TrendResult:
    """Trend of values against time in days (Theil-Sen slope, Mann-Kendall); NaNs dropped."""
    t = pd.DatetimeIndex(times)
    v = np.asarray(values, dtype=float)
    ok = np.isfinite(v)
    if ok.sum() < 3:
        raise DegasError(f"a trend needs at least 3 values, have {int(ok.sum())}")
    days = (t[ok] - t[ok][0]) / pd.Timedelta("1D")
    res = stats.theilslopes(v[ok], np.asarray(days, dtype=float), alpha=0.95)
    return TrendResult(float(res.slope), float(res.low_slope), float(res.high_slope), float(res.intercept),
                       mann_kendall(v[ok]))


def robust_z(window: np.ndarray, baseline: np.ndarray) -> float:
    """(median of window − median of baseline) / (1.4826 · MAD of baseline); NaN when the MAD is 0."""
    w = np.asarray(window, dtype=float)
    b = np.asarray(baseline, dtype=float)
    w, b = w[np.isfinite(w)], b[np.isfinite(b)]
    if w.size == 0 or b.size < 2:
        return float("nan")
    mad = np.median(np.abs(b - np.median(b)))
    if mad == 0:
        return float("nan")
    return float((np.median(w) - np.median(b)) / (MAD_TO_SD * mad))


@dataclass(frozen=True)
class SeriesReview:
    """Review of one series. Levels are medians of daily values, in ``display_unit``."""

    series_id: str
    kind: str
    quantity: str
    station: str | None
    display_unit: str | None
    periods: ReviewPeriods
    level_window: float
    level_baseline: float
    ratio: float
    ratio_low: float
    ratio_high: float
    robust_z: float
    trend: TrendResult | None
    coverage_window: float
    coverage_baseline: float
    days_window: int
    days_baseline: int
    notes: tuple[str, ...] = field(default=())
    #: a series sampled less often than daily (e.g. weekly ratios) is reviewed per sample: counts are samples
    per_sample: bool = False
    sample_interval_days: float = 1.0

    def to_row(self) -> dict:
        """One tidy row for the review table."""
        mk = self.trend.mann_kendall if self.trend else None
        return {
            "series": self.series_id, "kind": self.kind, "station": self.station or "", "unit": self.display_unit or "",
            "window_start": self.periods.window_start, "window_end": self.periods.window_end,
            "level_window": self.level_window, "level_baseline": self.level_baseline,
            "ratio": self.ratio, "ratio_low": self.ratio_low, "ratio_high": self.ratio_high, "robust_z": self.robust_z,
            "trend_per_day": self.trend.slope_per_day if self.trend else np.nan,
            "trend_low": self.trend.slope_low if self.trend else np.nan,
            "trend_high": self.trend.slope_high if self.trend else np.nan,
            "mann_kendall_p": mk.p_value if mk else np.nan,
            "coverage_window": self.coverage_window, "coverage_baseline": self.coverage_baseline,
            "days_window": self.days_window, "days_baseline": self.days_baseline,
            "reviewed_per": "sample" if self.per_sample else "day",
            "notes": " ".join(self.notes),
        }


def review_series(series: TimeSeries, periods: ReviewPeriods, *, min_coverage: float = 0.1,
                  n_boot: int = 2000, seed: int = 0) -> SeriesReview:
    """Compare a series' daily values in the window with the baseline.

    Parameters
    ----------
    series : canonical TimeSeries (SI units).
    periods : window and baseline (see :func:`review_periods`).
    min_coverage : daily bins with less coverage (0-1) count as missing.
    n_boot : bootstrap resamples (of days, independently in window and baseline) for the ratio interval.
    seed : seed of the bootstrap.
    """
    interval = sample_interval_days(series)
    if interval >= PER_SAMPLE_DAYS:
        return _review_samples(series, periods, interval, n_boot, seed)
    grid = make_grid(periods.baseline_start, periods.window_end - pd.Timedelta("1ns"), "1D")
    daily = resample(series, "1D", grid=grid, min_coverage=min_coverage)
    unit = series.meta.display_unit or series.meta.unit
    factor = 1.0
    if series.meta.unit and unit and series.meta.unit != unit:
        try:
            factor = conversion_factor(series.meta.unit, unit.replace("³", "^3"))
        except DegasError:  # keep SI values, and say so in the label rather than show them as display units
            factor, unit = 1.0, series.meta.unit
    vals = daily["value"].to_numpy() * factor
    in_w = np.asarray(daily.index >= periods.window_start)
    w, b = vals[in_w], vals[~in_w]
    cov_w = float(np.nanmean(daily["coverage"].to_numpy()[in_w])) if in_w.any() else 0.0
    cov_b = float(np.nanmean(daily["coverage"].to_numpy()[~in_w])) if (~in_w).any() else 0.0
    notes: list[str] = []
    wf, bf = w[np.isfinite(w)], b[np.isfinite(b)]
    if wf.size == 0:
        notes.append("no data in the review window")
    if bf.size == 0:
        notes.append("no data in the baseline")
    if wf.size and wf.size < 0.5 * len(w):
        notes.append(f"only {wf.size} of {len(w)} days in the window have data")
    if bf.size and bf.size < 0.5 * len(b):
        notes.append(f"only {bf.size} of {len(b)} baseline days have data")
    lw = float(np.median(wf)) if wf.size else np.nan
    lb = float(np.median(bf)) if bf.size else np.nan
    ratio, lo, hi = _ratio_ci(wf, bf, n_boot, seed)
    tr = None
    if wf.size >= 3:
        tr = trend(daily.index[in_w][np.isfinite(w)], wf)
        if wf.size < 10:
            notes.append(f"trend from {wf.size} daily values: Mann-Kendall normal approximation is rough")
    z = robust_z(wf, bf)
    return SeriesReview(series.meta.series_id, series.meta.kind, series.meta.quantity, series.meta.station, unit,
                        periods, lw, lb, ratio, lo, hi, z, tr, cov_w, cov_b, int(wf.size), int(bf.size), tuple(notes))


#: series whose typical spacing is this many days or more are reviewed per sample, not per day
PER_SAMPLE_DAYS = 2.0


def sample_interval_days(series: TimeSeries) -> float:
    """Median spacing of the series' samples in days (1 when it cannot tell)."""
    t = series.data["time"].dropna().sort_values().to_numpy(dtype="datetime64[ns]").astype("int64")
    if t.size < 3:
        return 1.0
    d = np.diff(t)
    d = d[d > 0]
    return float(np.median(d) / 86_400e9) if d.size else 1.0


def display_factor(series: TimeSeries) -> tuple[float, str | None]:
    """Factor from the stored SI unit to the display unit, and the unit label (SI kept if it cannot convert)."""
    unit = series.meta.display_unit or series.meta.unit
    if series.meta.unit and unit and series.meta.unit != unit:
        try:
            return conversion_factor(series.meta.unit, unit.replace("³", "^3")), unit
        except DegasError:
            return 1.0, series.meta.unit
    return 1.0, unit


def _review_samples(series: TimeSeries, periods: ReviewPeriods, interval: float, n_boot: int, seed: int
                    ) -> SeriesReview:
    """Review of a series sampled every few days: the window's samples against the baseline's samples.

    No bootstrap interval from fewer than two samples on either side (a single value has no spread).
    Coverage is samples received / samples expected at the series' own interval.
    """
    factor, unit = display_factor(series)
    d = series.data
    t = d["time"]
    v = d["value"].to_numpy(dtype=float) * factor
    in_w = np.asarray((t >= periods.window_start) & (t < periods.window_end))
    in_b = np.asarray((t >= periods.baseline_start) & (t < periods.window_start))
    wf, bf = v[in_w & np.isfinite(v)], v[in_b & np.isfinite(v)]
    notes = [f"sampled about every {interval:.0f} days: reviewed per sample ({wf.size} in the window, "
             f"{bf.size} in the baseline)"]
    if wf.size == 0:
        notes.append("no data in the review window")
    if bf.size == 0:
        notes.append("no data in the baseline")
    lw = float(np.median(wf)) if wf.size else np.nan
    lb = float(np.median(bf)) if bf.size else np.nan
    if wf.size >= 2 and bf.size >= 2:
        ratio, lo, hi = _ratio_ci(wf, bf, n_boot, seed)
    else:
        ratio, lo, hi = (lw / lb if wf.size and bf.size and lb != 0 else np.nan), np.nan, np.nan
        if wf.size and bf.size:
            notes.append("no interval for the ratio: fewer than two samples on one side")
    exp_w = max(periods.window_days / interval, 1.0)
    exp_b = max(periods.baseline_days / interval, 1.0)
    z = robust_z(wf, bf)
    return SeriesReview(series.meta.series_id, series.meta.kind, series.meta.quantity, series.meta.station, unit,
                        periods, lw, lb, ratio, lo, hi, z, None, float(min(1.0, wf.size / exp_w)),
                        float(min(1.0, bf.size / exp_b)), int(wf.size), int(bf.size), tuple(notes), True, interval)


def _ratio_ci(w: np.ndarray, b: np.ndarray, n_boot: int, seed: int) -> tuple[float, float, float]:
    """Ratio of medians (window / baseline) and its 95 % percentile-bootstrap interval.

    The percentiles are taken of the log ratio (the interval is the same for a percentile bootstrap, but
    it is stated on the log scale and never reaches below zero for positive levels)."""
    if w.size == 0 or b.size == 0:
        return np.nan, np.nan, np.nan
    mb = np.median(b)
    if mb == 0:
        return np.nan, np.nan, np.nan
    ratio = float(np.median(w) / mb)
    rng = np.random.default_rng(seed)
    bw = np.median(w[rng.integers(0, w.size, (n_boot, w.size))], axis=1)
    bb = np.median(b[rng.integers(0, b.size, (n_boot, b.size))], axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = bw / bb
    r = r[np.isfinite(r)]
    if r.size == 0:
        return ratio, np.nan, np.nan
    return ratio, float(np.quantile(r, 0.025)), float(np.quantile(r, 0.975))


@dataclass(frozen=True)
class RateComparison:
    """Events of one class per day in window and baseline, the rate ratio and its exact 95 % interval."""

    event_class: str
    n_window: int
    n_baseline: int
    rate_window_per_day: float
    rate_baseline_per_day: float
    ratio: float
    ratio_low: float
    ratio_high: float
    p_value: float


def poisson_rate_ratio(n1: int, t1: float, n2: int, t2: float, level: float = 0.95
                       ) -> tuple[float, float, float, float]:
    """Ratio of two Poisson rates (n1/t1)/(n2/t2) with its exact conditional interval and two-sided p.

    Conditional on n1 + n2, n1 is binomial with p = t1·λ1 / (t1·λ1 + t2·λ2); the Clopper-Pearson interval
    for p maps to the rate ratio (the exact conditional method; e.g. Ulm 1990; formula from memory).
    p tests equal rates (binomial test with p0 = t1/(t1 + t2)).
    """
    n = n1 + n2
    if n == 0 or t1 <= 0 or t2 <= 0:
        return np.nan, np.nan, np.nan, np.nan
    a = (1 - level) / 2
    lo_p = stats.beta.ppf(a, n1, n2 + 1) if n1 > 0 else 0.0
    hi_p = stats.beta.ppf(1 - a, n1 + 1, n2) if n2 > 0 else 1.0
    scale = t2 / t1
    ratio = (n1 / t1) / (n2 / t2) if n2 > 0 else np.inf
    low = lo_p / (1 - lo_p) * scale if lo_p < 1 else np.inf
    high = hi_p / (1 - hi_p) * scale if hi_p < 1 else np.inf
    p = float(stats.binomtest(n1, n, t1 / (t1 + t2)).pvalue)
    return float(ratio), float(low), float(high), p


def review_events(catalog: EventCatalog, periods: ReviewPeriods, classes: tuple[str, ...] | None = None
                  ) -> tuple[RateComparison, ...]:
    """Event rates per class (and in total) in the window against the baseline."""
    grid = make_grid(periods.baseline_start, periods.window_end - pd.Timedelta("1ns"), "1D")
    counts = event_counts(catalog, "1D", grid=grid, classes=classes or EVENT_CLASSES)
    in_w = np.asarray(counts.index >= periods.window_start)
    out = []
    for c in counts.columns:
        n1 = int(counts[c].to_numpy()[in_w].sum())
        n2 = int(counts[c].to_numpy()[~in_w].sum())
        if n1 == 0 and n2 == 0 and c != "total":
            continue
        r, lo, hi, p = poisson_rate_ratio(n1, periods.window_days, n2, periods.baseline_days)
        out.append(RateComparison(c, n1, n2, n1 / periods.window_days, n2 / periods.baseline_days, r, lo, hi, p))
    return tuple(out)


def rates_frame(rates: tuple[RateComparison, ...]) -> pd.DataFrame:
    """The rate comparisons as a tidy table."""
    return pd.DataFrame([r.__dict__ for r in rates])

"""Weekly review statistics against published check values and reference libraries."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from statsmodels.stats import rates as sm_rates
from statsmodels.stats.proportion import proportion_confint

from degas.analysis.review import (
    mann_kendall,
    poisson_rate_ratio,
    review_events,
    review_periods,
    review_series,
    robust_z,
    trend,
)
from degas.model import EventCatalog, SeriesMeta, make_series


def test_mann_kendall_check_values_without_ties():
    # x = [1..5]: S = 10, Var = 16.667, Z = 2.2045, p = 0.02749 (Mann 1945 / Kendall 1975 formulas; values
    # derived in the shared reference sheet §5.6 and cross-checked there against R trend::mk.test docs)
    r = mann_kendall(np.array([1, 2, 3, 4, 5.0]))
    assert r.s == 10 and r.var_s == pytest.approx(16.6667, rel=1e-4)
    assert r.z == pytest.approx(2.2045, abs=1e-4) and r.p_value == pytest.approx(0.02749, abs=1e-5)
    assert r.tau == pytest.approx(1.0)


def test_mann_kendall_check_values_with_a_tie():
    # x = [1,2,2,3,5,4,6]: S = 18, Var = 43.333, Z = 2.5825, p = 0.00981 (shared reference sheet §5.6)
    r = mann_kendall(np.array([1, 2, 2, 3, 5, 4, 6.0]))
    assert r.s == 18 and r.var_s == pytest.approx(43.3333, rel=1e-4)
    assert r.z == pytest.approx(2.5825, abs=1e-4) and r.p_value == pytest.approx(0.00981, abs=1e-5)


def test_theil_sen_matches_scipy_check_value():
    # Sen slope 0.8, intercept 0.6 for the tie example (scipy.stats.theilslopes; shared reference sheet §5.6)
    t = pd.date_range("2024-01-01", periods=7, freq="D", tz="UTC")
    r = trend(t, np.array([1, 2, 2, 3, 5, 4, 6.0]))
    assert r.slope_per_day == pytest.approx(0.8) and r.intercept == pytest.approx(0.6)
    assert r.slope_low <= 0.8 <= r.slope_high


def test_robust_z():
    base = np.array([1, 2, 3, 4, 5.0])  # median 3, MAD 1
    assert robust_z(np.array([6.0, 6.0]), base) == pytest.approx(3 / 1.4826)
    assert np.isnan(robust_z(np.array([1.0]), np.ones(5)))


def test_review_periods_last_complete_week_before_a_date():
    p = review_periods("2025-03-10 09:30")
    assert p.window_start == pd.Timestamp("2025-03-03", tz="UTC")
    assert p.window_end == pd.Timestamp("2025-03-10", tz="UTC")
    assert p.baseline_start == pd.Timestamp("2024-12-03", tz="UTC")
    assert (p.window_days, p.baseline_days) == (7, 90)


def test_poisson_rate_ratio_matches_statsmodels_exact_conditional():
    # exact conditional (binomial) interval and test; reference: statsmodels.stats.rates
    n1, t1, n2, t2 = 35, 7.0, 90, 90.0
    r, lo, hi, p = poisson_rate_ratio(n1, t1, n2, t2)
    assert r == pytest.approx((35 / 7) / (90 / 90))
    # conditional on n1 + n2, n1 is binomial with π = R t1 / (R t1 + t2): map the Clopper-Pearson interval of π
    # (statsmodels proportion_confint, method "beta") to R = π/(1 − π) · t2/t1 by hand
    p_lo, p_hi = proportion_confint(n1, n1 + n2, alpha=0.05, method="beta")
    assert (lo, hi) == pytest.approx((p_lo / (1 - p_lo) * t2 / t1, p_hi / (1 - p_hi) * t2 / t1), rel=1e-9)
    ref_p = sm_rates.test_poisson_2indep(n1, t1, n2, t2, method="exact-cond", compare="ratio").pvalue
    assert p == pytest.approx(ref_p, rel=1e-6)


def _flux(values_t_d, start="2024-01-01"):
    meta = SeriesMeta("gas_flux", "so2_flux", "VLM-N", "SO2", "kg/s", "t/d")
    t = pd.date_range(start, periods=len(values_t_d), freq="D", tz="UTC") + pd.Timedelta("12h")
    return make_series(meta, t, np.asarray(values_t_d) / 86.4)


def test_review_series_detects_a_doubling_in_display_units():
    rng = np.random.default_rng(3)
    vals = np.r_[rng.normal(1000, 50, 90), rng.normal(2000, 50, 7)]
    s = _flux(vals)
    p = review_periods("2024-04-07")  # window = the last 7 days of the series
    r = review_series(s, p)
    assert r.display_unit == "t/d"
    assert r.level_baseline == pytest.approx(1000, rel=0.05)
    assert r.ratio == pytest.approx(2.0, rel=0.06) and r.ratio_low < r.ratio < r.ratio_high
    assert r.robust_z > 10 and r.days_window == 7 and r.days_baseline == 90
    assert r.coverage_window == pytest.approx(1.0)
    assert any("rough" in n for n in r.notes)


def test_review_series_says_what_it_does_not_know():
    s = _flux(np.full(90, 1000.0))
    r = review_series(s, review_periods("2024-04-07"))
    assert "no data in the review window" in r.notes
    assert np.isnan(r.ratio)


def test_review_events_rates_per_class():
    t = pd.to_datetime(["2024-03-01"] * 10 + ["2024-04-03"] * 14, utc=True)
    cls = ["LP"] * 10 + ["LP"] * 7 + ["VT"] * 7
    df = pd.DataFrame({"time": t, "latitude_deg": np.nan, "longitude_deg": np.nan, "depth_m": np.nan,
                       "magnitude": np.nan, "magnitude_type": pd.Series([pd.NA] * 24, dtype="string"),
                       "event_class": pd.Series(cls, dtype="string"),
                       "event_id": pd.Series([f"e{i}" for i in range(24)], dtype="string"),
                       "source_type": pd.Series(cls, dtype="string")})
    cat = EventCatalog(df, SeriesMeta("seismic_catalog", "events"))
    rates = {r.event_class: r for r in review_events(cat, review_periods("2024-04-07"))}
    assert rates["LP"].n_window == 7 and rates["LP"].n_baseline == 10
    assert rates["LP"].rate_window_per_day == pytest.approx(1.0)
    assert rates["VT"].n_baseline == 0 and np.isinf(rates["VT"].ratio)
    assert rates["total"].n_window == 14

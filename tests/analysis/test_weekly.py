"""The weekly brief's numbers: per-sample review, week-over-week levels, thresholds, coverage vs capability."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from degas.analysis.review import review_periods, review_series
from degas.analysis.weekly import Threshold, coverage_vs_capability, parse_thresholds, week_over_week
from degas.errors import ConfigError
from degas.model import SeriesMeta, make_series


def _weekly_ratio():
    t = pd.date_range("2031-01-03", periods=20, freq="7D", tz="UTC")
    v = np.r_[np.full(19, 2.0), 4.0]
    meta = SeriesMeta(kind="gas_ratio", quantity="co2_so2_ratio", unit="mol mol-1", station="MG")
    return make_series(meta, t, v)


def test_weekly_sampled_series_is_reviewed_per_sample_without_a_bootstrap_from_one_value():
    s = _weekly_ratio()
    per = review_periods(s.data["time"].iloc[-1] + pd.Timedelta("1D"), window_days=7, baseline_days=90)
    r = review_series(s, per)
    assert r.per_sample and r.sample_interval_days == pytest.approx(7.0)
    assert r.days_window == 1 and r.coverage_window == pytest.approx(1.0)  # 1 of 1 expected, not "1 of 7 days"
    assert r.ratio == pytest.approx(2.0)
    assert np.isnan(r.ratio_low) and np.isnan(r.ratio_high)
    assert not any("of 7 days" in n for n in r.notes)
    assert any("per sample" in n for n in r.notes)


def test_week_over_week_medians_and_inclusive_last_days():
    idx = pd.date_range("2031-01-01", periods=28, freq="D", tz="UTC")
    daily = pd.Series(np.repeat([1.0, 2.0, 3.0, 4.0], 7), idx)
    daily.iloc[22] = np.nan
    w = week_over_week(daily, idx[-1] + pd.Timedelta("1D"), 4)
    assert list(w["value"]) == [1.0, 2.0, 3.0, 4.0]
    assert list(w["days"]) == [7, 7, 7, 6]
    assert w["last_day"].iloc[-1] == idx[-1]


def test_thresholds_from_the_project_and_crossings():
    th = parse_thresholds({"gas": {"above": 2000, "label": "SO2 working level"},
                           "lp_hybrid": {"ratio_above": 3, "label": "LP swarm"}})
    assert th[0] == Threshold("gas", "SO2 working level", above=2000.0)
    assert th[0].crossed(2500, 1.0) and not th[0].crossed(1500, 10.0)
    assert th[1].crossed(np.nan, 3.5) and not th[1].crossed(100.0, 2.0)
    with pytest.raises(ConfigError, match="unknown key"):
        parse_thresholds({"gas": {"level": 3}})
    with pytest.raises(ConfigError, match="needs above"):
        parse_thresholds({"gas": {"label": "x"}})


def test_coverage_against_what_the_instrument_can_deliver():
    # a daylight-only scanner (half of each day) that scanned 45 % of the day covered 90 % of what it can
    assert coverage_vs_capability(0.45, 0.5) == pytest.approx(0.9)
    assert coverage_vs_capability(0.6, 0.5) == 1.0
    assert coverage_vs_capability(0.45, None) == 0.45

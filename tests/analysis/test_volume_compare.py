"""Erupted volume two ways: survey difference against the summed rate series (issue 13).

Mean output rate V/Δt and its inverse, volume = Σ rate × Δt (Harris, Dehn & Calvari 2007 terminology);
the numbers are hand-computed.
"""

import numpy as np
import pandas as pd
import pytest

from degas.analysis.budget import compare_volumes

DAY = 86400.0


def test_survey_and_rate_totals_side_by_side_with_a_lower_bound():
    idx = pd.date_range("2031-01-01", periods=30, freq="D", tz="UTC")
    q = pd.Series(np.full(30, 2.0), idx)  # 2 m³/s DRE
    q.iloc[10:15] = np.nan  # five missing days
    surveys = pd.Series(pd.to_datetime(["2031-01-01", "2031-01-21"], utc=True))
    vol = np.array([1.0e6, 1.0e6 + 20 * DAY * 2.0])  # the true 20-day volume: 3.456 Mm³
    res = compare_volumes(surveys, vol, q, survey_sd_m3=np.array([3e4, 4e4]))
    assert res.survey_m3 == pytest.approx(20 * DAY * 2.0)
    assert res.rate_m3 == pytest.approx(15 * DAY * 2.0)  # 15 of the 20 days have a rate
    assert res.rate_coverage == pytest.approx(0.75)
    assert res.rate_is_lower_bound
    assert res.difference_m3 == pytest.approx(-5 * DAY * 2.0)
    assert res.ratio == pytest.approx(0.75)
    assert res.survey_sd_m3 == pytest.approx(5e4)  # ends in quadrature
    assert "lower bound" in res.notes[0]


def test_full_coverage_is_not_a_lower_bound():
    idx = pd.date_range("2031-01-01", periods=10, freq="D", tz="UTC")
    res = compare_volumes(pd.Series(pd.to_datetime(["2031-01-02", "2031-01-08"], utc=True)),
                          np.array([0.0, 6 * DAY]), pd.Series(np.ones(10), idx))
    assert not res.rate_is_lower_bound and res.ratio == pytest.approx(1.0)


def test_rate_total_and_difference_carry_a_1_sigma():
    # GUM (JCGM 100:2008, eq. 10): uncorrelated terms add in quadrature. Daily rate errors are taken as
    # independent between days, and the surveys' errors as independent of the rate series' (different
    # instruments): σ_rate² = Σ (σ_q·Δt)² over the days with a rate, σ_diff² = σ_survey² + σ_rate².
    idx = pd.date_range("2031-01-01", periods=30, freq="D", tz="UTC")
    q = pd.Series(np.full(30, 2.0), idx)
    q.iloc[10:15] = np.nan  # missing days carry no error either
    q_sd = pd.Series(np.full(30, 0.2), idx)  # 0.2 m³/s per day
    surveys = pd.Series(pd.to_datetime(["2031-01-01", "2031-01-21"], utc=True))
    vol = np.array([1.0e6, 1.0e6 + 20 * DAY * 2.0])
    res = compare_volumes(surveys, vol, q, survey_sd_m3=np.array([3e4, 4e4]), rate_sd_m3_s=q_sd)
    rate_sd = np.sqrt(15) * 0.2 * DAY  # 15 days with a rate: 66 921 m³ by hand
    assert res.rate_sd_m3 == pytest.approx(rate_sd)
    assert res.difference_sd_m3 == pytest.approx(np.sqrt(5e4**2 + rate_sd**2))  # 83 557 m³
    assert res.to_frame()["difference_sd_m3"].iloc[0] == pytest.approx(res.difference_sd_m3)
    # without rate uncertainties the difference's σ is the surveys' alone, and a note says so
    bare = compare_volumes(surveys, vol, q, survey_sd_m3=np.array([3e4, 4e4]))
    assert bare.rate_sd_m3 == 0.0 and bare.difference_sd_m3 == pytest.approx(5e4)
    assert any("no uncertainties" in n for n in bare.notes)

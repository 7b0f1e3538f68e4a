"""Gas-budget uncertainty with systematic per-station terms, same-day ratios, log-scale intervals (issue 13).

Hand computation follows the GUM propagation rules (JCGM 100:2008, §5.1-5.2): fully correlated components add
linearly, independent components add in quadrature. The 25 % systematic term is an invented test input.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy.stats import norm

from degas.analysis.budget import gas_budget, log_normal_interval

DAY = 86400.0


def _two_stations():
    idx = pd.date_range("2031-03-01", periods=10, freq="D", tz="UTC")
    a = np.full(10, 100.0)  # kg/s
    b = np.r_[np.full(5, 50.0), np.full(5, np.nan)]  # station B misses the last five days
    st = pd.DataFrame({"A": a, "B": b}, index=idx)
    combined = pd.Series(np.nanmean(st.to_numpy(), axis=1), idx)  # 75 kg/s, then 100 kg/s
    unc = pd.Series(np.full(10, 10.0), idx)  # random 1σ of each day's mean, kg/s
    q = pd.Series(np.full(10, 1.0), idx)  # m³/s DRE
    return idx, st, combined, unc, q


def test_budget_with_a_25_percent_systematic_term_by_hand():
    idx, st, g, unc, q = _two_stations()
    res = gas_budget(g, q, so2_uncertainty=unc, station_flux=st, systematic={"A": 0.25, "B": 0.25})
    o = res.overall
    mass = (5 * 75 + 5 * 100) * DAY
    assert o["so2_mass_kg"] == pytest.approx(mass)
    # station shares of the mass: A = 5·50 + 5·100 = 750 kg/s·d, B = 5·25 = 125 kg/s·d
    sys_sd = np.sqrt((0.25 * 750 * DAY) ** 2 + (0.25 * 125 * DAY) ** 2)  # correlated within, independent between
    rnd_sd = np.sqrt(10) * 10 * DAY  # independent daily random errors
    assert o["so2_mass_sd_systematic_kg"] == pytest.approx(sys_sd, rel=1e-12)
    assert o["so2_mass_sd_independent_kg"] == pytest.approx(rnd_sd, rel=1e-12)
    assert o["so2_mass_sd_total_kg"] == pytest.approx(np.hypot(rnd_sd, sys_sd), rel=1e-12)
    assert o["so2_mass_sd_total_kg"] / mass == pytest.approx(0.2202, abs=5e-4)  # 192.7 / 875 ≈ 22 %, not ±0.1 %
    # the ratio interval carries the total error, on the log scale
    ratio = mass / (10 * DAY)
    rel = np.hypot(rnd_sd, sys_sd) / mass
    s_ln = np.sqrt(np.log1p(rel**2))
    assert o["ratio_p2_5_kg_per_m3"] == pytest.approx(ratio * np.exp(-norm.ppf(0.975) * s_ln), rel=1e-9)
    assert o["ratio_p97_5_kg_per_m3"] == pytest.approx(ratio * np.exp(norm.ppf(0.975) * s_ln), rel=1e-9)


def test_systematic_is_per_station_and_zero_gives_the_old_random_error():
    idx, st, g, unc, q = _two_stations()
    only_b = gas_budget(g, q, so2_uncertainty=unc, station_flux=st, systematic={"A": 0.0, "B": 0.4})
    assert only_b.overall["so2_mass_sd_systematic_kg"] == pytest.approx(0.4 * 125 * DAY)
    none = gas_budget(g, q, so2_uncertainty=unc)
    assert none.overall["so2_mass_sd_systematic_kg"] == 0.0
    assert none.overall["so2_mass_sd_total_kg"] == pytest.approx(none.overall["so2_mass_sd_independent_kg"])


def test_ratio_uses_the_same_days_and_divides_as_printed():
    idx, st, g, unc, q = _two_stations()
    q = q.copy()
    q.iloc[7:] = np.nan  # magma output missing on three days with gas
    o = gas_budget(g, q, so2_uncertainty=unc).overall
    assert o["so2_mass_both_kg"] == pytest.approx((5 * 75 + 2 * 100) * DAY)
    assert o["dre_volume_both_m3"] == pytest.approx(7 * DAY)
    assert o["ratio_kg_per_m3"] == pytest.approx(o["so2_mass_both_kg"] / o["dre_volume_both_m3"], rel=1e-12)


@pytest.mark.parametrize("rel", [0.05, 0.5, 1.5, 10.0])
def test_ratio_intervals_never_go_below_zero(rel):
    lo, hi = log_normal_interval(67.0, rel * 67.0)
    assert 0 < lo < 67.0 < hi
    # a symmetric ±1.96σ interval would read e.g. "-23 to 157" for rel = 0.7; the log-scale one cannot
    assert lo * hi == pytest.approx(67.0**2)  # symmetric on the log scale about the median


def test_large_systematic_term_keeps_ratio_bounds_positive():
    idx, st, g, unc, q = _two_stations()
    o = gas_budget(g, q, so2_uncertainty=unc, station_flux=st, systematic=1.5).overall
    assert o["ratio_p2_5_kg_per_m3"] > 0


def test_change_point_level_ratios_have_log_scale_intervals_above_zero():
    # a level stepping from near zero (a paused extrusion) to a few m³/s: the old symmetric interval read like
    # "-23 to 157"; on the log scale (delta method for ln R) the lower bound stays positive
    from degas.analysis.changepoints import detect_changepoints

    rng = np.random.default_rng(1)
    idx = pd.date_range("2031-01-01", periods=120, freq="D", tz="UTC")
    x = np.r_[np.abs(rng.normal(0.05, 0.05, 60)) + 0.01, rng.normal(3.0, 0.5, 60)]
    res = detect_changepoints(pd.DataFrame({"q": x}, index=idx), transform={"q": "identity"}, min_segment="14D")
    ch = res.changes
    assert len(ch) >= 1
    assert (ch["ratio_low"] > 0).all() and (ch["ratio_low"] < ch["ratio"]).all()
    assert (ch["ratio"] < ch["ratio_high"]).all()
    # symmetric on the log scale about the estimate
    assert np.allclose(ch["ratio_low"] * ch["ratio_high"], ch["ratio"] ** 2)

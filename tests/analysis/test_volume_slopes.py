"""Changes of slope in survey cumulative volumes (degas.analysis.volume_slopes) against ruptures."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import ruptures as rpt

from degas.analysis.volume_slopes import detect_slope_changes
from degas.errors import NotEnoughDataError


def _surveys(seed=0):
    rng = np.random.default_rng(seed)
    gaps = rng.integers(14, 36, size=40)
    days = np.r_[0, np.cumsum(gaps)]
    rate = np.where(days < 400, 2.0, np.where(days < 700, 0.0, 3.5))  # m³/s: eruptive, pause, eruptive
    vol = np.r_[0, np.cumsum(rate[:-1] * np.diff(days) * 86400.0)]
    t = pd.Timestamp("2040-01-01", tz="UTC") + pd.to_timedelta(days, unit="D")
    return pd.Series(vol + rng.normal(0, 2e5, len(vol)), t), days


def test_finds_the_changes_of_slope_and_the_rates():
    s, days = _surveys()
    res = detect_slope_changes(s)
    assert len(res.change_times) == 2
    for true, got in zip((400, 700), res.change_times, strict=True):
        assert abs((got - s.index[0]).days - true) <= 72  # within two survey intervals (14-35 days each)
    assert res.segments["rate_m3_s"].to_numpy() == pytest.approx([2.0, 0.0, 3.5], abs=0.1)


def test_same_breaks_as_ruptures_dynp_with_the_linear_cost():
    # the reference: ruptures' exact dynamic programming with the same cost and the number of changes given
    s, days = _surveys(1)
    res = detect_slope_changes(s)
    sig = np.column_stack([s.to_numpy(), np.ones(len(s)), days.astype(float)])
    ref = rpt.Dynp(custom_cost=rpt.costs.CostLinear(), min_size=3, jump=1).fit(sig).predict(n_bkps=2)
    assert [s.index.get_loc(t) for t in res.change_times] == ref[:-1]


def test_too_few_surveys():
    s, _ = _surveys()
    with pytest.raises(NotEnoughDataError):
        detect_slope_changes(s.iloc[:5])

"""Granger causality: equality with statsmodels' grangercausalitytests (ssr_ftest) both ways."""

import numpy as np
import pandas as pd
import pytest
from scipy.signal import lfilter
from statsmodels.tsa.stattools import grangercausalitytests

from degas.analysis.granger import granger_f_test, granger_test, stationarity
from degas.errors import DegasError, NotEnoughDataError


def _pair(n=600, lead=2, seed=0):
    rng = np.random.default_rng(seed)
    gas = lfilter([1.0], [1.0, -0.5], rng.standard_normal(n))
    magma = np.zeros(n)
    magma[lead:] = 0.8 * gas[:-lead]
    magma += 0.5 * rng.standard_normal(n)
    idx = pd.date_range("2031-01-01", periods=n, freq="D", tz="UTC")
    return pd.Series(gas, idx), pd.Series(magma, idx)


@pytest.mark.parametrize("lag", [1, 3, 5])
def test_f_test_equals_statsmodels_ssr_ftest(lag):
    # statsmodels grangercausalitytests tests whether the 2nd column causes the 1st (REFERENCES §5.5).
    gas, magma = _pair()
    g, m = gas.to_numpy(), magma.to_numpy()
    sm = grangercausalitytests(np.column_stack([m, g]), maxlag=[lag])[lag][0]["ssr_ftest"]
    f, p, dn, dd = granger_f_test(m, g, lag)
    assert f == pytest.approx(sm[0], rel=1e-10)
    assert p == pytest.approx(sm[1], rel=1e-8, abs=1e-300)
    assert (dd, dn) == (sm[2], sm[3])
    sm2 = grangercausalitytests(np.column_stack([g, m]), maxlag=[lag])[lag][0]["ssr_ftest"]
    f2, p2, _, _ = granger_f_test(g, m, lag)
    assert f2 == pytest.approx(sm2[0], rel=1e-10) and p2 == pytest.approx(sm2[1], rel=1e-8)


def test_granger_both_ways_on_planted_lead():
    gas, magma = _pair(lead=2, seed=1)
    res = granger_test(gas, magma, max_lag=8)
    assert res.gas_to_magma.p_value < 1e-6
    assert res.magma_to_gas.p_value > 0.01
    assert res.lag_order >= 2
    sm = grangercausalitytests(
        np.column_stack([magma.to_numpy(), gas.to_numpy()]), maxlag=[res.lag_order]
    )[res.lag_order][0]["ssr_ftest"]
    assert res.gas_to_magma.f_stat == pytest.approx(sm[0], rel=1e-10)
    assert not res.differenced
    assert any("not physical causation" in n for n in res.notes)
    assert len(res.to_frame()) == 2 and len(res.stationarity_frame()) == 2


def test_random_walk_is_differenced_with_a_note():
    rng = np.random.default_rng(3)
    idx = pd.date_range("2031-01-01", periods=500, freq="D", tz="UTC")
    gas = pd.Series(np.cumsum(rng.standard_normal(500)), idx)
    magma = pd.Series(rng.standard_normal(500), idx)
    assert not stationarity(gas.to_numpy(), "gas").stationary
    res = granger_test(gas, magma, max_lag=5)
    assert res.differenced
    assert any("non-stationary (gas): differenced" in n for n in res.notes)
    res2 = granger_test(gas, magma, max_lag=5, difference=False)
    assert any(n.startswith("caution") for n in res2.notes)


def test_bad_input():
    idx = pd.date_range("2031-01-01", periods=40, freq="D", tz="UTC")
    with pytest.raises(NotEnoughDataError, match="gap-free common stretch is 40 bins"):
        granger_test(pd.Series(np.arange(40.0), idx), pd.Series(np.arange(40.0) ** 2, idx), max_lag=10)
    with pytest.raises(DegasError, match="valid: aic, bic"):
        granger_test(pd.Series(np.arange(40.0), idx), pd.Series(np.arange(40.0), idx), ic="xx")

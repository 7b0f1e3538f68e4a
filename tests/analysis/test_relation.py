"""The gas–magma relation fit (degas.analysis.relation) against statsmodels and published values."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from scipy import stats

from degas.analysis.budget import PetrologyInputs
from degas.analysis.relation import INDEPENDENT, RELATED, block_indices, fit_relation, huber_irls


def _data(seed=0, n=300, k=40.0, g0=5.0, lag=3, noise=1.0):
    rng = np.random.default_rng(seed)
    idx = pd.date_range("2031-01-01", periods=n, freq="D", tz="UTC")
    q = np.clip(2 + np.cumsum(rng.normal(0, 0.2, n)) * 0.3, 0.2, None)
    qs = np.r_[q[lag:], np.full(lag, np.nan)]
    g = g0 + k * qs + rng.normal(0, noise, n)
    g[rng.random(n) < 0.05] += 60  # a few outliers the robust fit must resist
    return pd.Series(g, idx), pd.Series(q, idx)


def test_huber_irls_matches_statsmodels_rlm():
    # statsmodels RLM with HuberT (Huber 1964), MAD scale: the reference implementation
    rng = np.random.default_rng(3)
    for _ in range(5):
        x = rng.uniform(0, 5, 200)
        y = 2 + 3 * x + rng.standard_t(2, 200)
        ref = sm.RLM(y, sm.add_constant(x), M=sm.robust.norms.HuberT()).fit()
        ours = huber_irls(x, y)[0]
        np.testing.assert_allclose(ours, ref.params, rtol=1e-5, atol=1e-6)
        ref0 = sm.RLM(y, x[:, None], M=sm.robust.norms.HuberT()).fit()
        np.testing.assert_allclose(huber_irls(x, y, intercept=False)[0, 1], ref0.params[0], rtol=1e-5)


def test_fit_recovers_relation_and_agrees_with_theil_sen():
    gas, q = _data()
    res = fit_relation(gas, q, lag="3D", n_boot=200)
    assert res.verdict == RELATED
    assert res.k_ci[0] < 40 < res.k_ci[1] and res.g0_ci[0] < 5 < res.g0_ci[1]
    # Theil (1950) / Sen (1968) slope from scipy on the same pairs: a second robust estimator agrees
    qs = q.shift(-3)
    ok = gas.notna() & qs.notna()
    ts = stats.theilslopes(gas[ok], qs[ok])
    assert res.k == pytest.approx(ts.slope, rel=0.02)
    assert res.lag == pd.Timedelta("3D") and res.r_squared > 0.3  # outliers count in R²


def test_given_background_fits_k_only():
    gas, q = _data()
    res = fit_relation(gas, q, lag=3, gas_background=5.0, n_boot=100)
    assert res.g0_kg_s == 5.0 and res.g0_ci == (5.0, 5.0) and res.background_given
    assert res.k == pytest.approx(40, rel=0.02)


def test_independent_gas_gives_the_verdict():
    rng = np.random.default_rng(1)
    idx = pd.date_range("2031-01-01", periods=300, freq="D", tz="UTC")
    q = pd.Series(np.abs(rng.normal(2, 1, 300)), idx)
    gas = pd.Series(10 + rng.normal(0, 1, 300), idx)
    res = fit_relation(gas, q, n_boot=200)
    assert res.verdict == INDEPENDENT and res.independent
    assert res.k_ci[0] <= 0 <= res.k_ci[1] or res.r_squared < 0.05


def test_block_bootstrap_indices_are_contiguous_blocks():
    idx = block_indices(100, 10, 5, np.random.default_rng(0))
    assert idx.shape == (5, 100)
    d = np.diff(idx[:, :10], axis=1)
    assert (d == 1).all()


def test_petrological_expectation_beside_k():
    # Devine et al. (1984) check value of the reference sheet §1.2: 1500 -> 200 ppm S, 2600 kg/m³, 40 %
    # crystals: 12.156 kg/s at 3 m³/s, i.e. 4.052 kg SO2 per m³ DRE
    petro = PetrologyInputs.from_ppm(1500, 200, density_kg_m3=2600, crystal_fraction=0.4, s_mi_sd_ppm=150)
    gas, q = _data()
    res = fit_relation(gas, q, lag=3, n_boot=50, petrology=petro)
    assert res.petrological_k == pytest.approx(12.156 / 3, abs=1e-3)
    assert res.petrological_k_ci[0] < res.petrological_k < res.petrological_k_ci[1]

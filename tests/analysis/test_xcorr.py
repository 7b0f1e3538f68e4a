"""Lagged cross-correlation: sign convention, equality with statsmodels/numpy, prewhitening, tests."""

import numpy as np
import pandas as pd
import pytest
from scipy.signal import lfilter
from statsmodels.tsa.ar_model import AutoReg
from statsmodels.tsa.stattools import ccf

from degas.analysis.xcorr import (
    _LagBasis,
    _pearson_rows,
    cross_correlate,
    fit_prewhitening,
    lagged_correlation,
)
from degas.errors import DegasError, NotEnoughDataError


def _ar1(n, phi=0.7, seed=0):
    rng = np.random.default_rng(seed)
    e = rng.standard_normal(n)
    return lfilter([1.0], [1.0, -phi], e)


def _lead_pair(n=600, lead=3, seed=0, noise=0.3):
    """gas_t = x_t, magma_t = x_{t-lead} + noise: gas leads magma output by ``lead`` bins."""
    x = _ar1(n + lead, seed=seed)
    rng = np.random.default_rng(seed + 1)
    gas = x[lead:]
    magma = x[:n] + noise * rng.standard_normal(n)
    idx = pd.date_range("2030-01-01", periods=n, freq="D", tz="UTC")
    return pd.Series(gas, idx), pd.Series(magma, idx)


def test_lag_direction_mapping_to_statsmodels_ccf():
    # statsmodels ccf(x, y)[k] = corr(x_{t+k}, y_t) (statsmodels docs; REFERENCES §5.1).
    # Ours: r(k) = corr(gas_t, magma_{t+k}), positive k = gas leads. So
    #   r(+k) = ccf(magma, gas)[k]   and   r(-k) = ccf(gas, magma)[k].
    gas, magma = _lead_pair(lead=3)
    g, m = gas.to_numpy(), magma.to_numpy()
    L = 10
    lags, r, n_pairs = lagged_correlation(g, m, L, normalisation="biased")
    pos = ccf(m, g, adjusted=False)[: L + 1]
    neg = ccf(g, m, adjusted=False)[: L + 1]
    np.testing.assert_allclose(r[lags >= 0], pos, rtol=0, atol=1e-12)
    np.testing.assert_allclose(r[lags <= 0][::-1], neg, rtol=0, atol=1e-12)
    assert lags[np.argmax(r)] == 3  # magma_t = gas_{t-3}: gas leads by +3
    np.testing.assert_array_equal(n_pairs, len(g) - np.abs(lags))


def test_adjusted_normalisation_equals_statsmodels_default():
    gas, magma = _lead_pair(lead=2, seed=4)
    g, m = gas.to_numpy(), magma.to_numpy()
    lags, r, _ = lagged_correlation(g, m, 8, normalisation="adjusted")
    np.testing.assert_allclose(r[lags >= 0], ccf(m, g)[:9], atol=1e-12)  # ccf default adjusted=True
    np.testing.assert_allclose(r[lags <= 0][::-1], ccf(g, m)[:9], atol=1e-12)


def test_equals_numpy_correlate():
    # numpy.correlate(a, v, "full")[i] = sum_t a_{t+k} v_t with k = i - (n - 1);
    # with a = magma, v = gas (both centred) that is n * std * std * r_biased(k).
    gas, magma = _lead_pair(lead=5, seed=2)
    g, m = gas.to_numpy(), magma.to_numpy()
    n, L = len(g), 12
    full = np.correlate(m - m.mean(), g - g.mean(), "full") / (n * m.std() * g.std())
    ref = full[n - 1 - L : n + L]
    lags, r, _ = lagged_correlation(g, m, L, normalisation="biased")
    np.testing.assert_allclose(r, ref, atol=1e-12)
    assert lags[np.argmax(r)] == 5


def test_pearson_pairwise_with_gaps_equals_manual():
    gas, magma = _lead_pair(n=300, lead=4, seed=3)
    g, m = gas.to_numpy().copy(), magma.to_numpy().copy()
    rng = np.random.default_rng(9)
    g[rng.choice(300, 40, replace=False)] = np.nan
    m[rng.choice(300, 25, replace=False)] = np.nan
    lags, r, n_pairs = lagged_correlation(g, m, 6)
    for k, rk, nk in zip(lags, r, n_pairs, strict=True):
        a, b = (g[: len(g) - k], m[k:]) if k >= 0 else (g[-k:], m[: len(m) + k])
        ok = np.isfinite(a) & np.isfinite(b)
        assert nk == ok.sum()
        assert rk == pytest.approx(np.corrcoef(a[ok], b[ok])[0, 1], abs=1e-10)


def test_fast_and_masked_paths_agree():
    gas, magma = _lead_pair(n=200, seed=5)
    g, m = gas.to_numpy(), magma.to_numpy()
    basis = _LagBasis(m, 7)
    rows = np.vstack([g, g[::-1], np.sin(np.arange(200))])
    fast, n1 = _pearson_rows(rows, np.ones(200, bool), basis)
    slow, n2 = _pearson_rows(rows, np.ones(200, bool), basis, W=np.ones((3, 200)))
    np.testing.assert_allclose(fast, slow, atol=1e-10)
    np.testing.assert_array_equal(n1, n2)


def test_prewhitening_equals_filtering_by_statsmodels_ar_coefficients():
    # Box & Jenkins prewhitening: filter both series by the AR polynomial fitted to the input.
    x = lfilter([1.0], [1.0, -0.6, 0.2], np.random.default_rng(0).standard_normal(800))
    y = np.roll(x, 2) + np.random.default_rng(1).standard_normal(800)
    pw = fit_prewhitening(x, max_order=8)
    assert pw.order >= 2
    phi = AutoReg(x, lags=pw.order, trend="c").fit().params[1:]
    np.testing.assert_allclose(pw.coefficients, phi, rtol=1e-12)
    b = np.r_[1.0, -phi]
    p = pw.order
    np.testing.assert_allclose(pw.apply(x)[p:], lfilter(b, [1.0], x)[p:], atol=1e-12)
    np.testing.assert_allclose(pw.apply(y)[p:], lfilter(b, [1.0], y)[p:], atol=1e-12)
    assert np.isnan(pw.apply(y)[:p]).all()


def test_prewhitening_fits_on_longest_gap_free_stretch():
    x = _ar1(500, seed=2)
    x[100] = np.nan
    pw = fit_prewhitening(x)
    assert (pw.fit_start, pw.fit_stop) == (101, 500)
    out = pw.apply(x)
    assert np.isnan(out[100 : 101 + pw.order]).all()  # NaN only spreads over p bins


def test_recovers_planted_lead_and_significance():
    gas, magma = _lead_pair(n=700, lead=5, seed=11, noise=0.5)
    res = cross_correlate(gas, magma, max_lag="20D", n_surrogates=300, n_boot=200, seed=1)
    assert res.best_lag == pd.Timedelta("5D")
    assert res.peak_r > 0.5
    assert res.p_value == pytest.approx(1 / 301)  # no surrogate reaches the observed peak
    assert res.lag_ci[0] <= pd.Timedelta("5D") <= res.lag_ci[1]
    assert res.variant == "prewhitened" and res.prewhitening.order >= 1
    frame = res.to_frame()
    assert list(frame.columns[:4]) == ["lag", "lag_s", "r", "n_pairs"]
    assert frame.loc[frame.r.idxmax(), "lag"] == pd.Timedelta("5D")


def test_magma_leading_gives_negative_lag():
    gas, magma = _lead_pair(n=500, lead=4, seed=12)
    res = cross_correlate(magma, gas, max_lag=15, n_surrogates=50, n_boot=0, variant="raw")
    assert res.best_lag == pd.Timedelta("-4D")
    assert any("white-noise band" in n for n in res.notes)


def test_independent_series_not_significant():
    idx = pd.date_range("2030-01-01", periods=800, freq="D", tz="UTC")
    a = pd.Series(_ar1(800, 0.9, seed=21), idx)
    b = pd.Series(_ar1(800, 0.9, seed=22), idx)
    res = cross_correlate(a, b, max_lag=30, n_surrogates=200, n_boot=0, variant="raw", seed=3)
    assert res.p_value > 0.05


def test_iaaft_and_differenced_variants_run():
    gas, magma = _lead_pair(n=400, lead=2, seed=13)
    res = cross_correlate(gas, magma, max_lag=10, surrogate="iaaft", n_surrogates=30, n_boot=0,
                          variant="differenced")
    assert res.variant == "differenced" and res.surrogate_method == "iaaft"
    assert res.best_lag == pd.Timedelta("2D")


def test_edge_note():
    gas, magma = _lead_pair(n=400, lead=8, seed=14)
    res = cross_correlate(gas, magma, max_lag=8, n_surrogates=0, n_boot=0)
    assert res.best_lag == pd.Timedelta("8D")
    assert any("edge of the search window" in n for n in res.notes)


def test_bad_inputs_say_what_is_missing():
    idx = pd.date_range("2030-01-01", periods=200, freq="D", tz="UTC")
    g = pd.Series(np.where(np.arange(200) < 100, _ar1(200), np.nan), idx)
    m = pd.Series(np.where(np.arange(200) >= 100, _ar1(200, seed=1), np.nan), idx)
    with pytest.raises(NotEnoughDataError, match="do not overlap"):
        cross_correlate(g, m, max_lag=5, n_surrogates=0)
    m2 = pd.Series(np.where(np.arange(200) >= 80, _ar1(200, seed=1), np.nan), idx)
    with pytest.raises(NotEnoughDataError, match="overlap for 20 bins"):
        cross_correlate(g, m2, max_lag="10D", n_surrogates=0)
    with pytest.raises(DegasError, match="constant"):
        cross_correlate(pd.Series(np.ones(200), idx), pd.Series(_ar1(200), idx), max_lag=5, n_surrogates=0)
    with pytest.raises(NotEnoughDataError, match="no valid values"):
        cross_correlate(pd.Series(np.full(200, np.nan), idx), pd.Series(_ar1(200), idx), max_lag=5)
    with pytest.raises(DegasError, match="valid: prewhitened, raw, differenced"):
        cross_correlate(g, m, variant="smooth")
    with pytest.raises(DegasError, match="same time grid"):
        cross_correlate(g, m.iloc[1:], max_lag=5)


@pytest.mark.parametrize("n", [257, 300])
@pytest.mark.parametrize("normalisation", ["pearson", "biased", "adjusted"])
def test_fft_surrogate_path_equals_lag_matrix_path(n, normalisation):
    # The FFT route (complete data) and the lag-matrix route (used with gaps) give the same statistic.
    from degas.analysis.surrogates import iter_surrogates
    from degas.analysis.xcorr import _fixed_norm_rows, surrogate_max_stat

    gas, magma = _lead_pair(n=n, lead=3, seed=7)
    g, m = gas.to_numpy(), magma.to_numpy()
    L = 9
    fast = surrogate_max_stat(g, _LagBasis(m, L), n_surrogates=20, seed=5, normalisation=normalisation)
    gz = (g - g.mean()) / g.std()
    S = np.vstack(list(iter_surrogates(gz, 20, seed=5)))
    basis = _LagBasis(m, L)
    if normalisation == "pearson":
        r, _ = _pearson_rows(S, np.ones(n, bool), basis, W=np.ones_like(S))
    else:
        r = _fixed_norm_rows(S, basis, adjusted=normalisation == "adjusted")
    np.testing.assert_allclose(fast, np.nanmax(np.abs(r), axis=1), atol=1e-10)


def test_surrogate_stat_with_gaps_matches_observed_structure():
    from degas.analysis.xcorr import surrogate_max_stat

    gas, magma = _lead_pair(n=300, lead=3, seed=8)
    g = gas.to_numpy().copy()
    g[50:60] = np.nan
    stat = surrogate_max_stat(g, _LagBasis(magma.to_numpy(), 5), n_surrogates=30, seed=0)
    assert stat.shape == (30,) and np.isfinite(stat).all() and (stat < 0.5).all()


def test_long_series_trimmed_to_fast_length_for_surrogate_test(monkeypatch):
    import degas.analysis.xcorr as xc

    monkeypatch.setattr(xc, "FAST_TRIM_ABOVE", 500)
    gas, magma = _lead_pair(n=1031, lead=2, seed=15)  # 1031 is prime: a slow FFT length
    p, t_obs, t_s, n_used = xc.surrogate_test(gas.to_numpy(), magma.to_numpy(), 10, n_surrogates=20)
    assert 1031 - 11 <= n_used < 1031 and t_s.shape == (20,) and p == pytest.approx(1 / 21)
    res = xc.cross_correlate(gas, magma, max_lag=10, variant="raw", n_surrogates=20, n_boot=0)
    assert any(f"first {n_used} of 1031 bins" in n for n in res.notes)

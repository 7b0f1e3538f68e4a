"""Gap-aware lag statistics: masked FFT lag sums, gap-respecting surrogates and the test's size.

References: the gapped (amplitude-modulated) correlogram, sums over the pairs present at each lag
divided by their count (Parzen 1963); phase-randomised surrogates (Theiler et al. 1992); the
surrogate p-value (1 + #{T_s ≥ T})/(N + 1) (REFERENCES §5.4, from memory). The null pairs of the
calibration test are independent Gaussian AR(1) series made with scipy.signal.lfilter (the AR
recursion of Box & Jenkins), not with any degas code.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import lfilter

from degas.analysis._lagsums import LagSums
from degas.analysis.surrogates import gapped_amplitudes
from degas.analysis.xcorr import (
    _bootstrap_weights,
    _LagBasis,
    _pearson_rows,
    _pearson_rows_lagmatrix,
    cross_correlate,
    surrogate_test,
)
from tests.analysis.null_pairs import gapped_red_noise_pairs


def _gappy(n, seed, share=0.25):
    rng = np.random.default_rng(seed)
    g = 10.0 + 3.0 * lfilter([1.0], [1.0, -0.7], rng.standard_normal(n))
    m = 0.4 * np.roll(g, 3) + rng.standard_normal(n)
    g[rng.random(n) < share * 0.6] = np.nan
    a = rng.integers(0, n - n // 10)
    g[a : a + n // 10] = np.nan
    m[rng.random(n) < 0.1] = np.nan
    return g, m


@pytest.mark.parametrize(("n", "L"), [(30, 5), (700, 20), (6000, 60), (4000, 1500)])
def test_masked_fft_equals_the_lag_matrix_result(n, L):
    g, m = _gappy(n, seed=n)
    basis, gv = _LagBasis(m, L), np.isfinite(g)
    rows = np.vstack([g, np.random.default_rng(1).normal(size=(3, n))])
    r1, n1 = _pearson_rows(rows, gv, basis)
    r2, n2 = _pearson_rows_lagmatrix(rows, gv, basis)
    np.testing.assert_array_equal(np.isnan(r1), np.isnan(r2))
    np.testing.assert_allclose(np.nan_to_num(r1), np.nan_to_num(r2), rtol=0, atol=1e-10)
    np.testing.assert_array_equal(n1, n2)
    W = _bootstrap_weights(n, 7, 3, np.random.default_rng(2))
    b1, _ = _pearson_rows(np.broadcast_to(g, (3, n)), gv, basis, W=W)
    b2, _ = _pearson_rows_lagmatrix(np.broadcast_to(g, (3, n)), gv, basis, W=W)
    np.testing.assert_allclose(np.nan_to_num(b1), np.nan_to_num(b2), rtol=0, atol=1e-10)


def test_lag_sums_against_direct_sums():
    rng = np.random.default_rng(3)
    n, L = 5000, 40
    u, v = rng.normal(size=(2, n)), rng.normal(size=n)
    ls = LagSums(v[None, :], L)
    (got,) = ls.sums(ls.spectra(u), 0)
    for i, k in enumerate(range(-L, L + 1)):
        lo, hi = max(0, -k), min(n, n - k)
        want = u[:, lo:hi] @ v[lo + k : hi + k]
        np.testing.assert_allclose(got[:, i], want, rtol=1e-11, atol=1e-9)


def test_gapped_amplitudes_are_the_periodogram_without_gaps():
    x = lfilter([1.0], [1.0, -0.8], np.random.default_rng(4).standard_normal(501))
    np.testing.assert_allclose(gapped_amplitudes(x)[1:], np.abs(np.fft.rfft(x - x.mean()))[1:], rtol=1e-8, atol=1e-8)


def test_gapped_amplitudes_keep_the_low_frequency_power_of_a_red_series():
    # mean-filling 40 % of an AR(1) series adds a white floor that takes power from the low frequencies;
    # the gap-corrected estimate keeps their share near the full series' periodogram
    rng = np.random.default_rng(5)
    x = lfilter([1.0], [1.0, -0.9], rng.standard_normal(20000))
    gaps = rng.random(x.size) < 0.4
    xg = np.where(gaps, np.nan, x)
    filled = np.where(gaps, np.nanmean(xg), xg)
    lo = slice(1, x.size // 50)

    def low_share(a):
        return float((a[lo] ** 2).sum() / (a[1:] ** 2).sum())

    truth = low_share(np.abs(np.fft.rfft(x - x.mean())))
    ours = low_share(gapped_amplitudes(xg))
    filled_share = low_share(np.abs(np.fft.rfft(filled - filled.mean())))
    assert abs(ours - truth) < abs(filled_share - truth)
    assert ours == pytest.approx(truth, rel=0.25)


def test_cross_correlate_with_gaps_runs_on_the_fft_path():
    g, m = _gappy(3000, seed=9)
    res = cross_correlate(g, m, max_lag=20, step="1D", variant="raw", n_surrogates=99, n_boot=50)
    assert res.best_lag_bins == -3 or abs(res.best_lag_bins) <= 20
    assert res.p_value < 0.05


def test_surrogate_test_keeps_its_size_with_gaps():
    # 800 independent pairs of red noise (gas AR(1) φ in 0.5-0.9, magma φ in 0.3-0.9), 25 % of the gas
    # bins missing (random scans plus one outage), 5 % of the magma bins: the 5 % test must reject
    # 5 ± 1.5 % of them. Filling the gaps with the mean (the old surrogates) whitens the surrogates.
    rng = np.random.default_rng(20261202)
    n, L, n_pairs, n_surr = 300, 8, 800, 199
    rejected = 0
    for i, (g, m) in enumerate(gapped_red_noise_pairs(rng, n, n_pairs)):
        p = surrogate_test(g, m, L, n_surrogates=n_surr, seed=i)[0]
        rejected += p <= 0.05
    rate = rejected / n_pairs
    assert 0.035 <= rate <= 0.065, rate

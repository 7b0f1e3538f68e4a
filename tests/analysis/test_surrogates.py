"""Surrogates: phase randomisation (Theiler et al. 1992) and IAAFT (Schreiber & Schmitz 1996)."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from degas.analysis.surrogates import iaaft, iter_surrogates, phase_randomised
from degas.errors import DegasError, NotEnoughDataError


def _ar1(n, phi=0.8, seed=0):
    rng = np.random.default_rng(seed)
    e = rng.standard_normal(n)
    x = np.empty(n)
    x[0] = e[0]
    for i in range(1, n):
        x[i] = phi * x[i - 1] + e[i]
    return x


@settings(max_examples=50, deadline=None)
@given(n=st.integers(8, 300), seed=st.integers(0, 10_000))
def test_phase_surrogates_keep_the_periodogram_exactly(n, seed):
    # Theiler et al. (1992): FT surrogates have the same Fourier amplitudes; DC (mean) and the
    # Nyquist term stay real.
    x = _ar1(n, seed=seed) + 3.0
    s = phase_randomised(x, 5, seed=seed)
    assert s.shape == (5, n)
    want = np.broadcast_to(np.abs(np.fft.rfft(x)), (5, n // 2 + 1))
    np.testing.assert_allclose(np.abs(np.fft.rfft(s, axis=1)), want, atol=1e-8 * n)
    np.testing.assert_allclose(s.mean(axis=1), x.mean(), atol=1e-9)
    assert np.isrealobj(s)


def test_phase_surrogates_are_seeded_and_differ():
    x = _ar1(256)
    a = phase_randomised(x, 3, seed=7)
    b = phase_randomised(x, 3, seed=7)
    np.testing.assert_array_equal(a, b)
    assert not np.allclose(a[0], a[1])
    assert not np.allclose(phase_randomised(x, 1, seed=8)[0], a[0])


def test_phase_surrogates_destroy_cross_correlation():
    # With y = x, the surrogate's lag-0 correlation with x is near zero on average.
    x = _ar1(2000, phi=0.5)
    s = phase_randomised(x, 200, seed=1)
    r0 = np.array([np.corrcoef(x, row)[0, 1] for row in s])
    assert abs(r0.mean()) < 0.05


def test_chunking_covers_all_surrogates():
    x = _ar1(100)
    chunks = list(iter_surrogates(x, 23, chunk_size=5, seed=0))
    assert [c.shape[0] for c in chunks] == [5, 5, 5, 5, 3]


def test_iaaft_keeps_values_and_nearly_the_spectrum():
    # Schreiber & Schmitz (1996): exact value distribution, approximately the same spectrum.
    x = np.exp(_ar1(512, phi=0.9) / 3)  # skewed
    s = iaaft(x, 4, seed=3)
    for row in s:
        np.testing.assert_array_equal(np.sort(row), np.sort(x))
        ax, ar = np.abs(np.fft.rfft(x))[1:], np.abs(np.fft.rfft(row))[1:]
        assert np.corrcoef(ax, ar)[0, 1] > 0.95


def test_bad_input():
    with pytest.raises(DegasError, match="missing"):
        phase_randomised([1.0, np.nan, 2.0, 3.0, 4.0], 2)
    with pytest.raises(NotEnoughDataError):
        phase_randomised([1.0, 2.0], 2)
    with pytest.raises(DegasError, match="valid: phase, iaaft"):
        list(iter_surrogates(np.arange(10.0), 2, method="aaft"))


def test_phase_output_does_not_depend_on_chunk_size():
    x = _ar1(64)
    a = np.vstack(list(iter_surrogates(x, 10, chunk_size=3, seed=4)))
    b = np.vstack(list(iter_surrogates(x, 10, chunk_size=10, seed=4)))
    np.testing.assert_allclose(a, b, atol=1e-12)

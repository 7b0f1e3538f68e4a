"""Surrogate series for significance tests: same autocorrelation, no cross-correlation.

* :func:`phase_randomised` - Fourier-transform surrogates (Theiler et al. 1992): the amplitude of
  every Fourier coefficient is kept, the phases of the positive frequencies are replaced by
  independent uniform phases; Hermitian symmetry is kept by using the real FFT, and the DC term
  (the mean) and, for even lengths, the Nyquist term stay real and unchanged. The periodogram
  (hence the circular autocorrelation) of each surrogate equals the original's exactly.
* :func:`iaaft` - iterative amplitude-adjusted FT surrogates (Schreiber & Schmitz 1996): the same
  value distribution as the original and (nearly) the same spectrum.

* :func:`gapped_amplitudes` - for a series with gaps, the Fourier amplitudes of the full grid
  from the gap-corrected autocovariance (each lag's sum of products over the pairs where both
  values exist, divided by their count: the gapped correlogram of Parzen 1963), tapered by
  (n - k)/n like the ordinary biased estimate. Without gaps this is exactly the periodogram.
  Phase surrogates are made on the full grid and the caller re-imposes the gap mask: filling
  gaps with the mean instead adds a white component and whitens the surrogates (too many false
  alarms for red series). The gapped estimate has a noisy floor at high frequencies (negative
  values clipped), which matters little for red series.

Both are vectorised over surrogates (one row each) and seeded by a ``numpy.random.Generator``.
:func:`iter_surrogates` yields chunks so that 1,000 surrogates of a long series never need to be
in memory at once. Input must be finite: fill gaps (and say so) before making surrogates.
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np
import scipy.fft as sfft

from degas.errors import DegasError, NotEnoughDataError

SURROGATE_METHODS = ("phase", "iaaft")


def _rng(seed: int | np.random.Generator | None) -> np.random.Generator:
    return seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)


def _check(x) -> np.ndarray:
    x = np.asarray(x, dtype="float64")
    if x.ndim != 1:
        raise DegasError("surrogates need a one-dimensional series")
    if x.size < 4:
        raise NotEnoughDataError(f"surrogates need at least 4 samples, got {x.size}")
    if not np.all(np.isfinite(x)):
        raise DegasError("surrogates need a series without missing values; fill or trim the gaps first")
    return x


def _random_phase_spectrum(spec: np.ndarray, n: int, count: int, rng: np.random.Generator) -> np.ndarray:
    """``count`` copies of the half spectrum ``spec`` with random phases; DC and Nyquist kept as is.

    A uniform phase is drawn as the direction of an isotropic Gaussian pair (a + ib)/|a + ib| (exactly
    uniform on [0, 2π), cheaper than cos/sin of a uniform angle).
    """
    z = rng.standard_normal((count, 2 * spec.size)).view(np.complex128)
    scale = np.abs(z)
    np.divide(np.abs(spec)[None, :], scale, out=scale)
    z *= scale
    z[:, 0] = spec[0]
    if n % 2 == 0:
        z[:, -1] = spec[-1]
    return z


def gapped_amplitudes(x) -> np.ndarray:
    """Fourier amplitudes (rfft layout, length n//2 + 1) of the full grid of ``x`` (NaN = missing).

    The autocovariance of the centred valid values is estimated per lag k from the pairs where both
    values exist, divided by their count (gapped correlogram, Parzen 1963), times (n - k)/n as the
    ordinary biased estimate; its Fourier transform on the n-point grid is the spectrum S_j (negative
    values, possible with gaps, are set to 0) and the amplitudes are sqrt(n·S_j); DC amplitude 0
    (centred). Without gaps this is exactly the periodogram |rfft(x - mean)|. O(n log n) time.
    """
    x = np.asarray(x, dtype="float64")
    if x.ndim != 1 or x.size < 4:
        raise NotEnoughDataError("surrogates need a one-dimensional series of at least 4 samples")
    valid = np.isfinite(x)
    if valid.sum() < 4:
        raise NotEnoughDataError(f"surrogates need at least 4 valid samples, got {int(valid.sum())}")
    n = x.size
    xc = np.where(valid, x - x[valid].mean(), 0.0)
    nfft = sfft.next_fast_len(2 * n - 1, real=True)
    X = sfft.rfft(xc, nfft)
    A = sfft.rfft(valid.astype(float), nfft)
    prod = sfft.irfft(X * X.conj(), nfft)[:n]
    cnt = np.rint(sfft.irfft(A * A.conj(), nfft)[:n])
    acov = np.where(cnt > 0, prod / np.maximum(cnt, 1.0), 0.0) * (n - np.arange(n)) / n
    spec = 2.0 * sfft.rfft(acov).real - acov[0]
    amp = np.sqrt(n * np.clip(spec, 0.0, None))
    amp[0] = 0.0
    return amp


def iter_phase_spectra(
    x, n_surrogates: int, *, seed: int | np.random.Generator | None = 0, chunk_size: int | None = None,
    amplitudes: np.ndarray | None = None,
) -> Iterator[np.ndarray]:
    """Yield half spectra (rfft layout) of phase-randomised surrogates of ``x`` in chunks of rows.

    ``irfft(chunk, n=len(x))`` gives exactly the chunks of :func:`iter_surrogates` for the same seed.
    ``amplitudes`` (from :func:`gapped_amplitudes`, for series with gaps) replaces the spectrum of
    ``x``; ``x`` may then hold NaN and only its length is used.
    """
    if amplitudes is None:
        x = _check(x)
    else:
        x = np.asarray(x, dtype="float64")
    rng = _rng(seed)
    n = x.size
    if chunk_size is None:
        chunk_size = max(1, int(8_000_000 // n))
    spec = sfft.rfft(x) if amplitudes is None else np.asarray(amplitudes, dtype=complex)
    done = 0
    while done < n_surrogates:
        c = min(chunk_size, n_surrogates - done)
        yield _random_phase_spectrum(spec, n, c, rng)
        done += c


def phase_randomised(x, n_surrogates: int = 1000, *, seed: int | np.random.Generator | None = 0) -> np.ndarray:
    """Phase-randomised surrogates of ``x`` (Theiler et al. 1992).

    Parameters
    ----------
    x : 1-D array of finite values (any unit).
    n_surrogates : number of surrogates (rows).
    seed : int or numpy Generator.

    Returns
    -------
    ndarray, shape (n_surrogates, len(x)), same unit as ``x``.
    """
    return np.vstack(list(iter_surrogates(x, n_surrogates, method="phase", seed=seed)))


def iaaft(
    x,
    n_surrogates: int = 100,
    *,
    seed: int | np.random.Generator | None = 0,
    max_iter: int = 100,
) -> np.ndarray:
    """IAAFT surrogates of ``x`` (Schreiber & Schmitz 1996).

    Iterates (i) impose the original Fourier amplitudes keeping the current phases, (ii) rank-order
    remap to the original values, until no rank changes or ``max_iter``. The value distribution is
    exactly the original's; the spectrum matches approximately.

    Returns
    -------
    ndarray, shape (n_surrogates, len(x)).
    """
    return np.vstack(list(iter_surrogates(x, n_surrogates, method="iaaft", seed=seed, max_iter=max_iter)))


def iter_surrogates(
    x,
    n_surrogates: int,
    *,
    method: str = "phase",
    seed: int | np.random.Generator | None = 0,
    chunk_size: int | None = None,
    max_iter: int = 100,
) -> Iterator[np.ndarray]:
    """Yield surrogates of ``x`` in chunks of rows (default: chunks of about 8 million values).

    For ``method="phase"`` the concatenated output depends only on the seed, not on ``chunk_size``
    (the phases are drawn row after row from one Generator). For IAAFT pass the same ``chunk_size``
    to reproduce a run exactly.
    """
    if method not in SURROGATE_METHODS:
        raise DegasError(f"unknown surrogate method {method!r}; valid: {', '.join(SURROGATE_METHODS)}")
    x = _check(x)
    if n_surrogates < 1:
        raise DegasError("n_surrogates must be at least 1")
    n = x.size
    if method == "phase":
        for z in iter_phase_spectra(x, n_surrogates, seed=seed, chunk_size=chunk_size):
            yield sfft.irfft(z, n=n, axis=1, workers=1)
        return
    rng = _rng(seed)
    if chunk_size is None:
        chunk_size = max(1, int(8_000_000 // n))
    amp = np.abs(sfft.rfft(x))
    sorted_x = np.sort(x)
    done = 0
    while done < n_surrogates:
        c = min(chunk_size, n_surrogates - done)
        yield _iaaft_chunk(x, amp, sorted_x, c, rng, max_iter)
        done += c


def _iaaft_chunk(x, amp, sorted_x, c, rng, max_iter) -> np.ndarray:
    n = x.size
    s = rng.permuted(np.broadcast_to(x, (c, n)), axis=1)
    ranks = np.argsort(np.argsort(s, axis=1), axis=1)
    for _ in range(max_iter):
        z = sfft.rfft(s, axis=1, workers=1)
        z = amp[None, :] * np.exp(1j * np.angle(z))
        s = sfft.irfft(z, n=n, axis=1, workers=1)
        new_ranks = np.argsort(np.argsort(s, axis=1), axis=1)
        s = sorted_x[new_ranks]
        if np.array_equal(new_ranks, ranks):
            break
        ranks = new_ranks
    return s

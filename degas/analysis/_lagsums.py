"""Lagged sums Σ_t u_t·v_{t+k}, |k| ≤ L, for many rows u against a few fixed series v, by block FFTs.

The masked (pairwise-complete) cross-correlation needs, per lag, the pair count and the sums of
the gas values, their squares, the magma values, their squares and the cross products over the
pairs where both are valid. Each of these is a linear cross-correlation of a zero-filled series
with a zero-filled series or a mask (the gapped-data correlogram of Parzen 1963, normalised by
the overlap count per lag), so it can be computed by FFT instead of an n × (2L+1) lag matrix.

Overlap-add in the frequency domain: the time axis is cut into blocks of B samples; block b of u,
at the start of a zero frame of P ≥ B + 2L samples, is correlated circularly with the stretch
``v[bB - L, bB + B + L)`` of v (lag k at index k + L). For |k| ≤ L no product wraps round the frame, and the
correlation is linear in u, so the sum over blocks is one inverse FFT of
``Σ_b conj(U_b)·V_b``. Cost per row: forward FFTs of total length ≈ n·P/B (O(n log P)), n complex
products per fixed series, one inverse FFT of length P; memory O(n) per row, independent of L.
"""

from __future__ import annotations

import numpy as np
import scipy.fft as sfft

#: Smallest block (samples); blocks grow to 8·L for long lag ranges so the frame overhead stays small.
MIN_BLOCK = 4096


class LagSums:
    """Fixed series ``v`` (rows of ``fixed``, length n) prepared for lagged sums up to ±L.

    Parameters
    ----------
    fixed : array (q, n), zero where missing (any unit).
    L : largest |lag| in samples (0 ≤ L < n).
    """

    def __init__(self, fixed: np.ndarray, L: int):
        fixed = np.atleast_2d(np.asarray(fixed, dtype="float64"))
        self.q, self.n = fixed.shape
        self.L = int(L)
        n, L = self.n, self.L
        P = sfft.next_fast_len(min(max(MIN_BLOCK, 8 * L), n) + 2 * L, real=True)
        self.B = P - 2 * L
        self.P = P
        self.nb = -(-n // self.B)
        # stretches v[bB - L, bB + B + L) of every fixed series, zero outside [0, n)
        pad = np.zeros((self.q, self.nb * self.B + 2 * L))
        pad[:, L : L + n] = fixed
        starts = np.arange(self.nb) * self.B
        idx = starts[:, None] + np.arange(self.B + 2 * L)[None, :]
        frames = np.zeros((self.q, self.nb, P))
        frames[:, :, : self.B + 2 * L] = pad[:, idx]
        self.V = sfft.rfft(frames, axis=-1, workers=1)  # (q, nb, F)
        # each block of u sits at the start of its frame, so lag k lands at index k + L (no wrap)
        self._lag_index = np.arange(0, 2 * L + 1)

    def spectra(self, rows: np.ndarray) -> np.ndarray:
        """Block spectra (c, nb, F) of rows (c, n), each block zero-padded to the frame length P."""
        rows = np.atleast_2d(rows)
        c = rows.shape[0]
        if self.nb * self.B == self.n:
            body = rows
        else:
            body = np.zeros((c, self.nb * self.B))
            body[:, : self.n] = rows
        return sfft.rfft(body.reshape(c, self.nb, self.B), n=self.P, axis=-1, workers=1)

    def sums(self, U: np.ndarray, *js: int) -> list[np.ndarray]:
        """Σ_t u_t·v_{j, t+k} for k = -L..L (c, 2L+1) for each fixed series j, from block spectra ``U``
        of the rows. ``U`` is conjugated in place (consumed)."""
        np.conjugate(U, out=U)
        tmp = np.empty_like(U)
        out = []
        for j in js:
            np.multiply(U, self.V[j][None], out=tmp)
            prod = tmp[:, 0] if self.nb == 1 else tmp.sum(axis=1)
            out.append(sfft.irfft(prod, n=self.P, axis=-1, workers=1)[:, self._lag_index])
        return out

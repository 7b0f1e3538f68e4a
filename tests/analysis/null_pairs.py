"""Independent red-noise pairs with realistic gaps: the null family for surrogate-size (calibration) tests.

Generated with scipy's ``lfilter`` (AR(1) filters), independently of the methods under test: gas φ in
0.5-0.9, magma φ in 0.3-0.9, 25 % of the gas bins missing (15 % random scans plus one outage of a tenth of
the record) and 5 % of the magma bins.
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np
from scipy.signal import lfilter

PHIS_GAS = (0.5, 0.8, 0.9)
PHIS_MAGMA = (0.3, 0.7, 0.9)


def gapped_red_noise_pairs(rng: np.random.Generator, n: int, n_pairs: int) -> Iterator[tuple[np.ndarray, np.ndarray]]:
    """Yield ``n_pairs`` independent (gas, magma) arrays of length ``n`` with NaN gaps."""
    for i in range(n_pairs):
        g = lfilter([1.0], [1.0, -PHIS_GAS[i % 3]], rng.standard_normal(n + 200))[200:]
        m = lfilter([1.0], [1.0, -PHIS_MAGMA[(i // 3) % 3]], rng.standard_normal(n + 200))[200:]
        miss = rng.random(n) < 0.15
        a = int(rng.integers(0, n - n // 10))
        miss[a : a + n // 10] = True
        g[miss] = np.nan
        m[rng.random(n) < 0.05] = np.nan
        yield g, m

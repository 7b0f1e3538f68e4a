"""The exact penalised-l2 solvers against exhaustive optimal partitioning and ruptures.

Reference: optimal partitioning (Jackson et al. 2005; the exact recursion that PELT speeds up,
Killick, Fearnhead & Eckley 2012) written plainly below, O(n²) over every legal last change.
ruptures (Truong, Oudre & Vayatis 2020) is compared only where its answer is optimal: with a
minimum segment length above one its Pelt can prune wrongly (a case is kept below).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import ruptures as rpt
from hypothesis import given, settings
from hypothesis import strategies as st

from degas.analysis._fastpath import fpop_l2, geom_l2, pelt_l2, segmentation_cost


def optimal_partitioning(x, beta, min_size, seg_coef=0.0):
    """Exhaustive O(n²) DP: F(t) = min_{τ ≤ t-m, F(τ) finite} F(τ) + C(τ, t) + β, F(0) = -β."""
    x = np.asarray(x, dtype=float)
    if x.ndim == 1:
        x = x[:, None]
    n = len(x)
    F = [math.inf] * (n + 1)
    F[0] = -beta
    for t in range(min_size, n + 1):
        for tau in range(0, t - min_size + 1):
            if F[tau] == math.inf:
                continue
            seg = x[tau:t]
            c = float(((seg - seg.mean(axis=0)) ** 2).sum()) + (seg_coef * math.log(t - tau) if seg_coef else 0.0)
            F[t] = min(F[t], F[tau] + c + beta)
    return F[n]


@st.composite
def problems(draw, max_n=60, dims=1):
    n = draw(st.integers(1, max_n))
    m = draw(st.integers(1, 8))
    n = max(n, m)
    seed = draw(st.integers(0, 2**31 - 1))
    rng = np.random.default_rng(seed)
    k = draw(st.integers(1, 5))
    levels = rng.normal(scale=draw(st.sampled_from([0.0, 0.5, 2.0, 5.0])), size=(k, dims))
    cuts = np.sort(rng.integers(0, n, size=k - 1))
    mean = np.repeat(levels, np.diff(np.concatenate([[0], cuts, [n]])), axis=0)
    x = mean + rng.normal(size=(n, dims))
    if draw(st.booleans()):
        x = np.round(x, 1)  # ties and repeated values
    beta = draw(st.floats(0.0, 25.0))
    return (x[:, 0] if dims == 1 else x), beta, m


def _close(a, b):
    return abs(a - b) <= 1e-9 * max(1.0, abs(b))


def _legal(bkps, n, m):
    return bkps[-1] == n and all(b - a >= m for a, b in zip([0, *bkps[:-1]], bkps, strict=True))


@settings(max_examples=200, deadline=None)
@given(problems())
def test_fpop_cost_equals_optimal_partitioning(p):
    x, beta, m = p
    bkps, cost = fpop_l2(x, beta, m)
    assert _legal(bkps, len(x), m)
    assert _close(cost, optimal_partitioning(x, beta, m))
    assert _close(cost, segmentation_cost(x, bkps, beta))


@settings(max_examples=120, deadline=None)
@given(problems())
def test_pelt_cost_equals_optimal_partitioning(p):
    x, beta, m = p
    bkps, cost = pelt_l2(x, beta, m)
    assert _legal(bkps, len(x), m)
    assert _close(cost, optimal_partitioning(x, beta, m))


@settings(max_examples=80, deadline=None)
@given(problems(max_n=40, dims=3))
def test_multivariate_pelt_equals_optimal_partitioning(p):
    x, beta, m = p
    bkps, cost = pelt_l2(x, beta, m)
    assert _legal(bkps, len(x), m)
    assert _close(cost, optimal_partitioning(x, beta, m))


@settings(max_examples=100, deadline=None)
@given(problems(max_n=45), st.floats(0.1, 3.0))
def test_pelt_with_mbic_segment_term_equals_optimal_partitioning(p, seg_coef):
    # MBIC segment-length term s·ln(n_i) (Zhang & Siegmund 2007, changepoint-package form)
    x, beta, m = p
    bkps, cost = pelt_l2(x, beta, m, seg_coef)
    assert _legal(bkps, len(x), m)
    assert _close(cost, optimal_partitioning(x, beta, m, seg_coef))


@settings(max_examples=150, deadline=None)
@given(problems(max_n=50))
def test_same_change_points_as_ruptures_where_ruptures_is_optimal(p):
    x, beta, m = p
    if len(x) < 2 * m:
        return
    ours, cost = fpop_l2(x, beta, m)
    theirs = rpt.Pelt(model="l2", min_size=m, jump=1).fit(x).predict(pen=beta)
    their_cost = segmentation_cost(x, theirs, beta)
    assert cost <= their_cost + 1e-9 * max(1.0, their_cost)  # ours is never worse
    if _close(their_cost, cost) and not np.any(np.diff(np.round(x, 12)) == 0):
        assert ours == theirs


# A signal (rounded normal noise, seed 80 of a search over 3000 small random signals, in which
# ruptures' Pelt was suboptimal 23 times) where ruptures' Pelt(l2, min_size=4) prunes wrongly.
RUPTURES_SUBOPTIMAL = [
    -0.58, -1.2, -1.18, 2.55, 0.13, 0.11, 0.87, 0.29, -0.93, -0.99, 0.42, -0.67, 0.93, -0.51,
    -0.92, -0.26, -0.83, -0.05, -2.08, -0.51, 1.34, -0.43, 1.71, 2.05, -0.46, 0.9, -0.46,
]


def test_case_where_ours_is_optimal_and_ruptures_pelt_is_not():
    x = np.array(RUPTURES_SUBOPTIMAL)
    beta, m = 0.58, 4
    best = optimal_partitioning(x, beta, m)
    ours, cost = fpop_l2(x, beta, m)
    theirs = rpt.Pelt(model="l2", min_size=m, jump=1).fit(x).predict(pen=beta)
    assert _close(cost, best)
    assert ours == [13, 20, 27]
    assert segmentation_cost(x, theirs, beta) > best + 0.1  # ruptures: [8, 14, 20, 27], cost 25.083
    assert _close(pelt_l2(x, beta, m)[1], best)


def test_long_signal_recovers_planted_changes_and_matches_kernelcpd():
    rng = np.random.default_rng(3)
    true = [2000, 5000, 9000, 12000, 16000]
    n = 20000
    x = rng.normal(size=n) + np.repeat([0.0, 2.0, -1.0, 1.0, 3.0, 0.0], np.diff([0, *true, n]))
    beta = 2 * math.log(n)
    bkps, cost = fpop_l2(x, beta, 5)
    assert all(min(abs(b - t) for b in bkps) <= 5 for t in true)
    ref = rpt.KernelCPD(kernel="linear", min_size=5).fit(x[:4000]).predict(pen=beta)
    ours, c2 = fpop_l2(x[:4000], beta, 5)
    assert _close(c2, segmentation_cost(x[:4000], ref, beta)) or c2 < segmentation_cost(x[:4000], ref, beta)


def test_constant_and_tiny_inputs():
    assert fpop_l2(np.ones(10), 1.0, 3)[0] == [10]
    assert fpop_l2(np.array([1.0]), 1.0, 1)[0] == [1]
    assert pelt_l2(np.ones((5, 2)), 1.0, 2)[0] == [5]
    with pytest.raises(ValueError, match="fewer than the minimum segment"):
        fpop_l2(np.ones(3), 1.0, 4)
    with pytest.raises(ValueError, match="non-negative"):
        fpop_l2(np.ones(3), -1.0, 1)


def test_scale_invariance_of_the_optimum():
    rng = np.random.default_rng(5)
    x = rng.normal(size=300) + np.repeat([0, 3, 1], 100)
    b1, c1 = fpop_l2(x, 10.0, 3)
    b2, c2 = fpop_l2(x * 1e6 + 1e9, 10.0 * 1e12, 3)
    assert b1 == b2
    assert _close(c2 / 1e12, c1)


@pytest.mark.parametrize("m", [1, 5, 20])
def test_fpop_and_pelt_agree_on_longer_signals(m):
    # two independent exact solvers (functional pruning vs PELT with retired-at-t+m pruning)
    rng = np.random.default_rng(m)
    n = 3000
    x = np.repeat(rng.normal(scale=1.5, size=30), 100) + rng.standard_t(4, size=n)
    for beta in (1.0, 2 * math.log(n), 50.0):
        b1, c1 = fpop_l2(x, beta, m)
        b2, c2 = pelt_l2(x, beta, m)
        assert _legal(b1, n, m) and _legal(b2, n, m)
        assert _close(c1, c2)


# GeomFPOP-style geometric pruning (Pishchagina, Rigaill & Runge 2024) for joint and MBIC detection:
# the optimum must equal exhaustive optimal partitioning whatever the comparison schedule and seed.


@settings(max_examples=100, deadline=None)
@given(problems(max_n=50, dims=2), st.sampled_from([0.0, 0.7, 2.0]), st.integers(1, 3), st.integers(0, 9))
def test_geom_joint_equals_optimal_partitioning(p, seg_coef, every, seed):
    x, beta, m = p
    bkps, cost = geom_l2(x, beta, m, seg_coef, seed=seed, every=every)
    assert _legal(bkps, len(x), m)
    assert _close(cost, optimal_partitioning(x, beta, m, seg_coef))


@settings(max_examples=100, deadline=None)
@given(problems(max_n=50), st.floats(0.1, 3.0), st.integers(1, 3))
def test_geom_mbic_equals_optimal_partitioning(p, seg_coef, every):
    x, beta, m = p
    bkps, cost = geom_l2(x, beta, m, seg_coef, every=every)
    assert _legal(bkps, len(x), m)
    assert _close(cost, optimal_partitioning(x, beta, m, seg_coef))


@settings(max_examples=40, deadline=None)
@given(problems(max_n=35, dims=3), st.sampled_from([0.0, 1.0]))
def test_geom_three_series_equals_optimal_partitioning(p, seg_coef):
    x, beta, m = p
    bkps, cost = geom_l2(x, beta, m, seg_coef, every=1)
    assert _close(cost, optimal_partitioning(x, beta, m, seg_coef))


@pytest.mark.parametrize("m", [1, 5, 20])
@pytest.mark.parametrize("seg_coef", [0.0, 1.0])
def test_geom_and_pelt_agree_on_longer_joint_signals(m, seg_coef):
    # few changes and many: the geometric pruning against the O(n²) PELT reference
    rng = np.random.default_rng(10 + m)
    n = 2500
    x = np.repeat(rng.normal(scale=1.5, size=(5, 2)), n // 5, axis=0) + rng.standard_t(4, size=(n, 2))
    for beta in (1.0, 4 * math.log(n), 60.0):
        for xs in (x, x[:, 0]):
            b1, c1 = geom_l2(xs, beta, m, seg_coef)
            b2, c2 = pelt_l2(xs, beta, m, seg_coef)
            assert _legal(b1, n, m)
            assert _close(c1, c2)

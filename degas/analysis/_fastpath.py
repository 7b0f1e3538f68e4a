"""Exact solvers for the penalised l2 (mean-shift) change-point cost, compiled with numba.

Problem (Killick, Fearnhead & Eckley 2012, eq. 2, with the l2 cost of ruptures' ``CostL2``):
for samples ``x[0:n]`` find end indices ``0 < t_1 < ... < t_k < n`` minimising

    Σ_segments Σ_{i in seg} ||x_i - mean(seg)||²  +  β·k  (+ s·Σ ln(n_seg) for MBIC)

with every segment at least ``m`` samples long. Two solvers return the same optimum as
exhaustive optimal partitioning (the tests check this on many random signals):

* :func:`fpop_l2` - univariate, no segment-length term: functional pruning (FPOP, Maidstone,
  Hocking, Rigaill & Fearnhead 2017) adapted to a minimum segment length.
* :func:`geom_l2` - multivariate and/or with the MBIC segment-length term: geometric functional
  pruning (GeomFPOP, Pishchagina, Rigaill & Runge 2024, rectangle variant with random
  comparisons) on top of PELT's inequality pruning; the default for these cases.
* :func:`pelt_l2` - multivariate and/or with the MBIC segment-length term: PELT with the
  pruning rule made correct for ``m > 1`` (O(n²) with few changes; kept as a reference).

Why the FPOP adaptation is exact
--------------------------------
Write ``F(t)`` for the optimal cost of ``x[0:t]`` (``F(0) = -β``). A candidate last change
``τ`` is *eligible* at time ``t`` iff ``t - τ ≥ m`` and ``F(τ) < ∞`` (``τ = 0`` or ``τ ≥ m``).
For each candidate keep the function of the last segment's mean μ

    f_τ,t(μ) = F(τ) + β + Σ_{τ ≤ i < t} (x_i - μ)²,   F(t) = min_{eligible τ} min_μ f_τ,t(μ).

1. Candidate ``τ`` is inserted when it becomes eligible, at ``t = τ + m``; from then on it is
   eligible for ever. So the eligible set only grows, and at time ``t`` it is exactly
   ``{τ ≤ t - m : F(τ) < ∞}`` minus pruned candidates.
2. For two inserted candidates ``f_τ,t - f_τ',t`` does not depend on ``t`` (every ``f`` gains the
   same ``(x_t - μ)²``). Hence if at some time ``τ`` is nowhere (for no μ) strictly below the
   lower envelope of the other eligible candidates, it stays so for every later ``t``: dropping
   it never changes ``F``. This is FPOP's functional pruning; restricting it to *eligible*
   candidates is what makes it valid with ``m > 1`` (a candidate that is not yet eligible is
   never compared, so it cannot be pruned by a point it could not legally follow).
3. μ is restricted to ``[min x, max x]``: each ``f_τ,t`` attains its minimum at a segment mean,
   which lies in that interval, so the envelope minimum there equals the unrestricted one.

The envelope is stored as a sorted list of (interval, candidate) pieces. Two different
quadratics cross at most twice, so the lower envelope of ``k`` of them has at most ``2k - 1``
pieces (Davenport-Schinzel sequences of order 2): memory is linear in ``n``. With few changes
the envelope holds a handful of pieces and the run time is close to linear.

Why the PELT rule is exact with ``m > 1``
-----------------------------------------
PELT (Killick et al. 2012, Theorem 3.1) drops ``τ`` at time ``t`` when
``F(τ) + C(τ, t) - K > F(t)``, where ``C(a, b) + C(b, c) ≤ C(a, c) + K`` for all ``a < b < c``
(``K = 0`` for l2; ``K = s·ln n`` with the MBIC term ``s·ln(len)``, because
``ln x + ln y ≤ ln(x + y) + ln min(x, y)``). Then for every later ``T``,
``F(τ) + C(τ, T) ≥ F(τ) + C(τ, t) + C(t, T) - K > F(t) + C(t, T)``. The argument compares ``τ``
with the alternative "last change at ``t``", which is legal only at times ``T ≥ t + m``. So a
candidate pruned at ``t`` must stay usable until ``t + m - 1``; removing it at once (what a naive
implementation does) can return a segmentation that is not optimal. Here a pruned candidate is
retired only at ``t + m``.

Why the geometric pruning is exact (d series, optionally with the MBIC term)
---------------------------------------------------------------------------
With ``f_τ,t(μ) = F(τ) + β + Σ_{τ ≤ i < t} ||x_i - μ||² (+ s·ln(t - τ))`` for μ in R^d, two
eligible candidates ``a < b`` differ by ``D(μ) = (b - a)·||μ||² - 2<S(a,b), μ> + Q(a,b) + F(a) - F(b)``
(independent of t) plus ``s·[ln(t - a) - ln(t - b)]``, which is ≥ 0 and decreases towards 0.
``{D < 0}`` is a ball (centre = mean of ``x[a:b]``).

* ``a`` can be strictly below ``b`` at a later time only inside the ball ``{D < 0}``.
* ``b`` can be strictly below ``a`` at a later time ``T ≥ t`` only outside the ball
  ``{D + s·ln((t - a)/(t - b)) ≤ 0}`` (the log term is largest at ``T = t``).

So the living set of a candidate (where it may still be the unique best) lies in the data box
``[min x, max x]`` (every segment mean is there, as for FPOP), inside the balls of its newer
candidates and outside those of its older ones (GeomFPOP, Pishchagina, Rigaill & Runge 2024).
Each candidate keeps an axis-aligned box containing its living set, shrunk to the bounding box of
(box ∩ ball) or (box minus ball) by a few comparisons per step: the newest candidate, the current
best last change and one random older and newer candidate, every :data:`GEOM_EVERY` steps. Any
subset of comparisons only keeps more candidates (a superset of the living set), never fewer, so
the result is exact whatever the random choices; a candidate is dropped when its box is empty.
PELT's inequality rule (above, retired at ``t + m``) is applied as well. With few changes the
number of kept candidates stays around a hundred at 525,600 points for two series.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit


@njit(cache=True, nogil=True)
def _fpop_core(x, beta, m):
    n = x.shape[0]
    S = np.zeros(n + 1)
    Q = np.zeros(n + 1)
    for i in range(n):
        S[i + 1] = S[i] + x[i]
        Q[i + 1] = Q[i] + x[i] * x[i]
    lo = x.min()
    hi = x.max()
    if hi <= lo:  # constant signal: any interval holding the (single) mean is exact
        hi = lo + 1.0
    F = np.full(n + 1, np.inf)
    F[0] = -beta
    last = np.full(n + 1, -1, dtype=np.int64)
    cap = 64  # grown on demand; the envelope never exceeds 2k - 1 pieces for k candidates
    La = np.empty(cap)
    Ra = np.empty(cap)
    Ca = np.empty(cap, dtype=np.int64)
    Lb = np.empty(cap)
    Rb = np.empty(cap)
    Cb = np.empty(cap, dtype=np.int64)
    npc = 0
    max_pieces = 0
    for t in range(m, n + 1):
        tn = t - m
        if F[tn] < np.inf:
            if npc == 0:
                La[0] = lo
                Ra[0] = hi
                Ca[0] = tn
                npc = 1
            else:
                if 3 * npc + 3 > cap:  # each piece splits into at most three
                    cap = 2 * (3 * npc + 3)
                    La2 = np.empty(cap)
                    Ra2 = np.empty(cap)
                    Ca2 = np.empty(cap, dtype=np.int64)
                    La2[:npc] = La[:npc]
                    Ra2[:npc] = Ra[:npc]
                    Ca2[:npc] = Ca[:npc]
                    La, Ra, Ca = La2, Ra2, Ca2
                    Lb = np.empty(cap)
                    Rb = np.empty(cap)
                    Cb = np.empty(cap, dtype=np.int64)
                k = 0
                for p in range(npc):
                    tau = Ca[p]
                    a = La[p]
                    b = Ra[p]
                    # d(mu) = f_new - f_tau = A mu^2 + B mu + C, independent of t; A < 0.
                    A = float(tau - tn)
                    B = 2.0 * (S[tn] - S[tau])
                    C = Q[tau] - Q[tn] + F[tn] - F[tau]
                    disc = B * B - 4.0 * A * C
                    if disc <= 0.0:
                        # d <= 0 everywhere: the new candidate is at least as good on [a, b]
                        seg_l = a
                        seg_r = b
                        owner = tn
                        if k > 0 and Cb[k - 1] == owner:
                            Rb[k - 1] = seg_r
                        else:
                            Lb[k] = seg_l
                            Rb[k] = seg_r
                            Cb[k] = owner
                            k += 1
                        continue
                    sq = math.sqrt(disc)
                    r1 = (-B + sq) / (2.0 * A)
                    r2 = (-B - sq) / (2.0 * A)
                    if r1 > r2:
                        r1, r2 = r2, r1
                    # new wins where mu < r1 or mu > r2; the old candidate keeps [r1, r2]
                    for part in range(3):
                        if part == 0:
                            seg_l = a
                            seg_r = min(r1, b)
                            owner = tn
                        elif part == 1:
                            seg_l = max(a, r1)
                            seg_r = min(b, r2)
                            owner = tau
                        else:
                            seg_l = max(a, r2)
                            seg_r = b
                            owner = tn
                        if seg_r <= seg_l:
                            continue
                        if k > 0 and Cb[k - 1] == owner:
                            Rb[k - 1] = seg_r
                        else:
                            Lb[k] = seg_l
                            Rb[k] = seg_r
                            Cb[k] = owner
                            k += 1
                La, Lb = Lb, La
                Ra, Rb = Rb, Ra
                Ca, Cb = Cb, Ca
                npc = k
                if npc > max_pieces:
                    max_pieces = npc
        best = np.inf
        arg = -1
        for p in range(npc):
            tau = Ca[p]
            ln = t - tau
            s = S[t] - S[tau]
            mu = s / ln
            if mu < La[p]:
                mu = La[p]
            elif mu > Ra[p]:
                mu = Ra[p]
            val = F[tau] + beta + ln * mu * mu - 2.0 * s * mu + (Q[t] - Q[tau])
            if val < best:
                best = val
                arg = tau
        F[t] = best
        last[t] = arg
    return F, last, max_pieces


@njit(cache=True)
def _seg_cost(S, Q, a, b, seg_coef):
    ln = b - a
    d = S.shape[1]
    c = Q[b] - Q[a]
    for j in range(d):
        s = S[b, j] - S[a, j]
        c -= s * s / ln
    if seg_coef != 0.0:
        c += seg_coef * math.log(ln)
    return c


@njit(cache=True)
def _pelt_core(X, beta, m, seg_coef, K):
    n = X.shape[0]
    d = X.shape[1]
    S = np.zeros((n + 1, d))
    Q = np.zeros(n + 1)
    for i in range(n):
        q = 0.0
        for j in range(d):
            S[i + 1, j] = S[i, j] + X[i, j]
            q += X[i, j] * X[i, j]
        Q[i + 1] = Q[i] + q
    F = np.full(n + 1, np.inf)
    F[0] = -beta
    last = np.full(n + 1, -1, dtype=np.int64)
    cand = np.empty(n + 1, dtype=np.int64)
    kill = np.empty(n + 1, dtype=np.int64)
    vals = np.empty(n + 1)
    nc = 0
    big = n + m + 10
    max_cand = 0
    for t in range(m, n + 1):
        tn = t - m
        if F[tn] < np.inf:
            cand[nc] = tn
            kill[nc] = big
            nc += 1
        best = np.inf
        arg = -1
        for j in range(nc):
            tau = cand[j]
            v = F[tau] + _seg_cost(S, Q, tau, t, seg_coef)
            vals[j] = v
            if v + beta < best:
                best = v + beta
                arg = tau
        F[t] = best
        last[t] = arg
        if nc > max_cand:
            max_cand = nc
        # prune (retire at t + m, see module docstring) and compact candidates retired by t + 1
        w = 0
        for j in range(nc):
            if vals[j] - K > F[t] and kill[j] > t + m:
                kill[j] = t + m
            if kill[j] > t + 1:
                cand[w] = cand[j]
                kill[w] = kill[j]
                w += 1
        nc = w
    return F, last, max_cand


#: Geometric pruning runs every this many steps (any schedule is exact; sparser is faster per step
#: but keeps more candidates; 12 was fastest at 525,600 points × 2 series once the per-step evaluation
#: read contiguous candidate data, 8 before).
GEOM_EVERY = 12


@njit(cache=True)
def _ball(S, Q, F, a, b, c):
    """Centre (into ``c``) and squared radius of the ball {D < 0} of candidates a < b."""
    d = S.shape[1]
    L = float(b - a)
    r2 = 0.0
    for j in range(d):
        c[j] = (S[b, j] - S[a, j]) / L
        r2 += c[j] * c[j]
    return r2 - (Q[b] - Q[a] + F[a] - F[b]) / L


@njit(cache=True)
def _box_and_ball(lo, hi, c, r2):
    """Shrink the box [lo, hi] to the bounding box of (box ∩ ball(c, √r2)); False if that is empty."""
    d = lo.shape[0]
    tot = 0.0
    for j in range(d):
        u = lo[j] - c[j]
        v = c[j] - hi[j]
        e = max(u, v, 0.0)
        tot += e * e
    if tot > r2:
        return False
    for j in range(d):
        u = lo[j] - c[j]
        v = c[j] - hi[j]
        e = max(u, v, 0.0)
        s2 = r2 - (tot - e * e)
        s = math.sqrt(s2) if s2 > 0.0 else 0.0
        lo[j] = max(lo[j], c[j] - s)
        hi[j] = min(hi[j], c[j] + s)
    return True


@njit(cache=True)
def _box_minus_ball(lo, hi, c, r2):
    """Shrink the box [lo, hi] towards the bounding box of (box minus ball(c, √r2)); False if the ball
    covers the box. A side moves only when a whole slab of the box lies in the ball (conservative)."""
    if r2 <= 0.0:
        return True
    d = lo.shape[0]
    far = 0.0
    for j in range(d):
        e = max(abs(lo[j] - c[j]), abs(hi[j] - c[j]))
        far += e * e
    for k in range(d):
        e = max(abs(lo[k] - c[k]), abs(hi[k] - c[k]))
        s2 = r2 - (far - e * e)
        if s2 <= 0.0:
            continue
        s = math.sqrt(s2)
        if lo[k] >= c[k] - s and hi[k] <= c[k] + s:
            return False
        if lo[k] >= c[k] - s:
            lo[k] = c[k] + s
        elif hi[k] <= c[k] + s:
            hi[k] = c[k] - s
    return True


@njit(cache=True)
def _older_wins_r2(r2, a, b, t, seg_coef):
    """Squared radius of the ball where the older a stays at or below b at every time ≥ t."""
    r2 = r2 - 1e-9 * (1.0 + abs(r2))
    if seg_coef != 0.0:
        r2 -= seg_coef * math.log((t - a) / float(t - b)) / float(b - a)
    return r2


@njit(cache=True, nogil=True)
def _geom_core(X, beta, m, seg_coef, K, every, seed):
    n = X.shape[0]
    d = X.shape[1]
    np.random.seed(seed)
    S = np.zeros((n + 1, d))
    Q = np.zeros(n + 1)
    lo0 = np.empty(d)
    hi0 = np.empty(d)
    for j in range(d):
        lo0[j] = X[0, j]
        hi0[j] = X[0, j]
    for i in range(n):
        q = 0.0
        for j in range(d):
            v = X[i, j]
            S[i + 1, j] = S[i, j] + v
            q += v * v
            lo0[j] = min(lo0[j], v)
            hi0[j] = max(hi0[j], v)
        Q[i + 1] = Q[i] + q
    F = np.full(n + 1, np.inf)
    F[0] = -beta
    last = np.full(n + 1, -1, dtype=np.int64)
    cap = 64
    cand = np.empty(cap, dtype=np.int64)
    kill = np.empty(cap, dtype=np.int64)
    lo = np.empty((cap, d))
    hi = np.empty((cap, d))
    vals = np.empty(cap)
    cF = np.empty(cap)  # F[tau] - Q[tau] and S[tau] of each candidate, kept beside it (contiguous reads)
    cS = np.empty((cap, d))
    c = np.empty(d)
    nlo = np.empty(d)
    nhi = np.empty(d)
    nc = 0
    big = n + m + 10
    max_cand = 0
    for t in range(m, n + 1):
        tn = t - m
        if F[tn] < np.inf:
            nlo[:] = lo0
            nhi[:] = hi0
            nalive = True
            w = nc
            if t % every == 0:
                pc = last[t - 1]
                w = 0
                for p in range(nc):
                    tau = cand[p]
                    r2 = _ball(S, Q, F, tau, tn, c)
                    if nalive:  # the new candidate loses where the older tau stays below it
                        nalive = _box_minus_ball(nlo, nhi, c, _older_wins_r2(r2, tau, tn, t, seg_coef))
                    if not _box_and_ball(lo[p], hi[p], c, r2 + 1e-9 * (1.0 + abs(r2))):
                        continue  # tau is at or above tn wherever it could be best: dropped for good
                    if 0 <= pc < tau:  # the current best last change
                        r2 = _ball(S, Q, F, pc, tau, c)
                        if not _box_minus_ball(lo[p], hi[p], c, _older_wins_r2(r2, pc, tau, t, seg_coef)):
                            continue
                    if p > 0:  # a random older candidate
                        q = cand[np.random.randint(0, p)]
                        r2 = _ball(S, Q, F, q, tau, c)
                        if not _box_minus_ball(lo[p], hi[p], c, _older_wins_r2(r2, q, tau, t, seg_coef)):
                            continue
                    if p + 1 < nc:  # a random newer candidate
                        q = cand[np.random.randint(p + 1, nc)]
                        r2 = _ball(S, Q, F, tau, q, c)
                        if not _box_and_ball(lo[p], hi[p], c, r2 + 1e-9 * (1.0 + abs(r2))):
                            continue
                    cand[w] = cand[p]
                    kill[w] = kill[p]
                    cF[w] = cF[p]
                    for j in range(d):
                        lo[w, j] = lo[p, j]
                        hi[w, j] = hi[p, j]
                        cS[w, j] = cS[p, j]
                    w += 1
            nc = w
            if nalive:
                if nc + 1 > cap:
                    cap *= 2
                    cand2 = np.empty(cap, dtype=np.int64)
                    kill2 = np.empty(cap, dtype=np.int64)
                    lo2 = np.empty((cap, d))
                    hi2 = np.empty((cap, d))
                    cF2 = np.empty(cap)
                    cS2 = np.empty((cap, d))
                    cand2[:nc] = cand[:nc]
                    kill2[:nc] = kill[:nc]
                    lo2[:nc] = lo[:nc]
                    hi2[:nc] = hi[:nc]
                    cF2[:nc] = cF[:nc]
                    cS2[:nc] = cS[:nc]
                    cand, kill, lo, hi, cF, cS = cand2, kill2, lo2, hi2, cF2, cS2
                    vals = np.empty(cap)
                cand[nc] = tn
                kill[nc] = big
                cF[nc] = F[tn] - Q[tn]
                for j in range(d):
                    lo[nc, j] = nlo[j]
                    hi[nc, j] = nhi[j]
                    cS[nc, j] = S[tn, j]
                nc += 1
        best = np.inf
        arg = -1
        for p in range(nc):
            tau = cand[p]
            ln = t - tau
            v = cF[p] + Q[t]
            for j in range(d):
                s = S[t, j] - cS[p, j]
                v -= s * s / ln
            if seg_coef != 0.0:
                v += seg_coef * math.log(ln)
            vals[p] = v
            if v + beta < best:
                best = v + beta
                arg = tau
        F[t] = best
        last[t] = arg
        max_cand = max(max_cand, nc)
        # PELT's inequality pruning, retired at t + m (see above)
        w = 0
        for p in range(nc):
            if vals[p] - K > F[t] and kill[p] > t + m:
                kill[p] = t + m
            if kill[p] > t + 1:
                if w != p:
                    cand[w] = cand[p]
                    kill[w] = kill[p]
                    cF[w] = cF[p]
                    for j in range(d):
                        lo[w, j] = lo[p, j]
                        hi[w, j] = hi[p, j]
                        cS[w, j] = cS[p, j]
                w += 1
        nc = w
    return F, last, max_cand


def _backtrack(last: np.ndarray, n: int) -> list[int]:
    out = []
    t = n
    while t > 0:
        tau = int(last[t])
        if tau < 0:
            raise RuntimeError("internal error: no feasible segmentation")  # guarded by callers
        out.append(t)
        t = tau
    return out[::-1]


def segmentation_cost(x: np.ndarray, bkps: list[int], beta: float, seg_coef: float = 0.0) -> float:
    """Penalised l2 cost of a segmentation given as end indices (``bkps[-1] == n``).

    Computed segment by segment with two-pass sums (accurate), on ``x`` of shape (n,) or (n, d).
    """
    x = np.asarray(x, dtype="float64")
    if x.ndim == 1:
        x = x[:, None]
    total = 0.0
    start = 0
    for end in bkps:
        seg = x[start:end]
        total += float(((seg - seg.mean(axis=0)) ** 2).sum())
        if seg_coef:
            total += seg_coef * math.log(end - start)
        start = end
    return total + beta * (len(bkps) - 1)


def _standardise(x: np.ndarray) -> tuple[np.ndarray, float]:
    centre = np.median(x, axis=0)
    scale = float(np.max(np.abs(x - centre))) if x.size else 1.0
    if not np.isfinite(scale) or scale == 0.0:
        scale = 1.0
    return (x - centre) / scale, scale


def fpop_l2(x: np.ndarray, beta: float, min_size: int = 1) -> tuple[list[int], float]:
    """Exact penalised univariate l2 segmentation by functional pruning.

    Parameters
    ----------
    x : 1-d array of finite samples (any unit u).
    beta : penalty per change, in u² (same scale as the sum of squares).
    min_size : minimum number of samples per segment (≥ 1).

    Returns
    -------
    (bkps, cost): end indices in ruptures' convention (``bkps[-1] == len(x)``) and the total
    penalised cost in u² (recomputed from the segments).
    """
    x = np.ascontiguousarray(x, dtype="float64")
    n = x.shape[0]
    m = max(int(min_size), 1)
    _check(n, m, beta)
    z, scale = _standardise(x)
    _, last, _ = _fpop_core(z, float(beta) / scale**2, m)
    bkps = _backtrack(last, n)
    return bkps, segmentation_cost(x, bkps, beta)


def pelt_l2(x: np.ndarray, beta: float, min_size: int = 1, seg_coef: float = 0.0) -> tuple[list[int], float]:
    """Exact penalised (multivariate) l2 segmentation by PELT with correct min-size pruning.

    Parameters
    ----------
    x : array (n,) or (n, d) of finite samples (unit u).
    beta : penalty per change in u².
    min_size : minimum samples per segment (≥ 1).
    seg_coef : coefficient s of the MBIC segment-length term ``s·ln(len)`` added to every
        segment cost (u²); 0 for a plain penalty.

    Returns
    -------
    (bkps, cost) as :func:`fpop_l2`. Worst case O(n²) time when there are few changes
    (PELT prunes little then); memory O(n·d).
    """
    return _solve_multi(x, beta, min_size, seg_coef, lambda z, b, m, s, K: _pelt_core(z, b, m, s, K)[1])


def _solve_multi(x, beta: float, min_size: int, seg_coef: float, core) -> tuple[list[int], float]:
    """Shared steps of the (n, d) solvers: checks, standardisation, ``core(z, β, m, s, K) -> last``,
    backtracking and the cost on the original scale."""
    x = np.asarray(x, dtype="float64")
    if x.ndim == 1:
        x = x[:, None]
    x = np.ascontiguousarray(x)
    n = x.shape[0]
    m = max(int(min_size), 1)
    _check(n, m, beta)
    z, scale = _standardise(x)
    s2 = scale**2
    K = float(seg_coef) * math.log(n) / s2 if seg_coef else 0.0
    last = core(z, float(beta) / s2, m, float(seg_coef) / s2, K)
    bkps = _backtrack(last, n)
    return bkps, segmentation_cost(x, bkps, beta, seg_coef)


def geom_l2(x: np.ndarray, beta: float, min_size: int = 1, seg_coef: float = 0.0,
            *, seed: int = 0, every: int = GEOM_EVERY) -> tuple[list[int], float]:
    """Exact penalised (multivariate) l2 segmentation by geometric functional pruning.

    GeomFPOP (Pishchagina, Rigaill & Runge 2024; rectangle boxes, random comparisons) plus PELT's
    inequality rule with correct min-size retirement; see the module docstring for why it is exact.
    Same optimum as :func:`pelt_l2`, near-linear time when changes are few.

    Parameters
    ----------
    x : array (n,) or (n, d) of finite samples (unit u).
    beta : penalty per change in u².
    min_size : minimum samples per segment (≥ 1).
    seg_coef : coefficient s of the MBIC segment-length term ``s·ln(len)`` (u²); 0 for none.
    seed : seed of the random comparisons (changes the run time only, never the optimum).
    every : run the geometric comparisons every this many steps (run time only).

    Returns
    -------
    (bkps, cost) as :func:`fpop_l2`. Memory O(n·d).
    """
    every, seed = max(int(every), 1), int(seed)
    return _solve_multi(x, beta, min_size, seg_coef,
                        lambda z, b, m, s, K: _geom_core(z, b, m, s, K, every, seed)[1])


def _check(n: int, m: int, beta: float) -> None:
    if n < m:
        raise ValueError(f"{n} samples is fewer than the minimum segment length {m}")
    if not np.isfinite(beta) or beta < 0:
        raise ValueError(f"penalty must be a finite non-negative number, got {beta}")

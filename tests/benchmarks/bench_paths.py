"""Benchmark: the paths real records take (issue 12), with references measured in the same run.

Prints, for each path, the time and traced peak memory at sizes from 10^4 to 525,600 points, the
fitted scaling exponent (least squares of log time on log n), and the ratio against the reference:

1. joint detection (2 series, 5 changes) and MBIC detection (1 series) by geometric functional
   pruning (:func:`degas.analysis._fastpath.geom_l2`) against the O(n²) PELT of
   :func:`degas.analysis._fastpath.pelt_l2` (same optimal cost; up to 10^5 points) and ruptures'
   ``Pelt(model="l2")`` (pure Python; at 2,000 points);
2. the surrogate test (±60 lags, 1,000 phase surrogates at 525,600 points, fewer below) with
   gaps (15 % missing scans plus one 4,000-bin outage per 100,000 bins in gas, 5 % missing
   magma) against the same
   test without gaps;
3. rolling coupling with gaps (window 90 days, step 7 days, 200 surrogates per window, 10-minute
   bins) against its gap-free run at the sizes where both are timed, and against the previous
   route (a fresh :func:`degas.analysis.xcorr.cross_correlate` per window, the same test) at 4×10^4
   points; ``--full`` adds the run at 525,600 points (about a minute of CPU);
4. eruptive fraction of a 527-row chronology over two centuries against the old per-bin loop.

BLAS/OpenMP are limited to one thread and times are CPU seconds of the process (the machine is
shared; wall time under load would mislead). Ratios are what count.

Run on demand:  .venv/bin/python tests/benchmarks/bench_paths.py [--quick]
"""

from __future__ import annotations

import math
import os
import sys
import time
import tracemalloc

for _v in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
import pytest  # noqa: E402
from scipy.signal import lfilter  # noqa: E402

SIZES = (10_000, 30_000, 100_000, 300_000, 525_600)


def measure(fn, mem_fn=None):
    """(result, CPU seconds of this process, traced peak MiB).

    CPU time, not wall time: the machine is shared by several developers and every path here runs on
    one thread. Tracing slows numba code and numpy allocation, so the time comes from an untraced run
    and the peak from a second, traced run of ``mem_fn`` (default ``fn``; NaN when ``mem_fn`` is False).
    """
    t0 = time.process_time()
    out = fn()
    dt = time.process_time() - t0
    if mem_fn is False:
        return out, dt, math.nan
    tracemalloc.start()
    (mem_fn or fn)()
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return out, dt, peak / 2**20


def exponent(ns, ts) -> float:
    ns, ts = np.log(np.asarray(ns, float)), np.log(np.asarray(ts, float))
    return float(np.polyfit(ns, ts, 1)[0]) if len(ns) > 1 else math.nan


def steps(n: int, k: int, d: int, seed: int = 0) -> np.ndarray:
    rng = np.random.default_rng(seed)
    cuts = np.sort(rng.choice(np.arange(100, n - 100), size=k, replace=False))
    lv = rng.normal(scale=2.0, size=(k + 1, d))
    return np.repeat(lv, np.diff(np.concatenate([[0], cuts, [n]])), axis=0) + rng.normal(size=(n, d))


def red_pair(n: int, gaps: bool, seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    x = lfilter([1.0], [1.0, -0.7], rng.standard_normal(n + 5))
    g, m = x[5:].copy(), x[:n] + 0.5 * rng.standard_normal(n)
    if gaps:
        miss = rng.random(n) < 0.15
        length = min(4000, n // 20)  # outages: one per 100,000 bins, at most 4,000 bins (~4 weeks) each
        for s in rng.integers(0, n - length, size=max(1, n // 100_000)):
            miss[s : s + length] = True
        g[miss] = np.nan
        m[rng.random(n) < 0.05] = np.nan
    return g, m


def detection(quick: bool) -> None:
    import ruptures as rpt

    from degas.analysis._fastpath import geom_l2, pelt_l2, segmentation_cost

    geom_l2(steps(2000, 2, 2), 30.0, 5)
    pelt_l2(steps(2000, 2, 2), 30.0, 5)
    for label, d, seg in (("joint, 2 series", 2, 0.0), ("MBIC, 1 series", 1, 1.0)):
        print(f"\n[{label}, 5 changes, min size 5, penalty (d+2)·ln n]")
        ns, ts = [], []
        for n in SIZES[:3] if quick else SIZES:
            x = steps(n, 5, d, seed=n)
            x = x if d > 1 else x[:, 0]
            beta = (d + 2) * math.log(n)
            (bk, cost), t, mem = measure(lambda x=x, beta=beta, seg=seg: geom_l2(x, beta, 5, seg))
            ns.append(n)
            ts.append(t)
            line = f"  n={n:>7}: geom {t:7.3f} s, {mem:6.1f} MiB"
            if n <= 100_000:
                (bk2, cost2), t2, _ = measure(lambda x=x, beta=beta, seg=seg: pelt_l2(x, beta, 5, seg), False)
                same = math.isclose(cost, cost2, rel_tol=1e-9)
                line += f" | today's PELT {t2:7.2f} s, ratio {t2 / t:6.1f}x, same cost {same}"
            print(line, flush=True)
        print(f"  fitted exponent (time ~ n^b): b = {exponent(ns, ts):.2f}")
        if d > 1 and not quick:
            whole_detection(steps(525_600, 5, d, seed=525_600))
        n = 2000
        x = steps(n, 5, d, seed=1)
        x = x if d > 1 else x[:, 0]
        beta = (d + 2) * math.log(n)
        (bk, cost), t, _ = measure(lambda x=x, beta=beta, seg=seg: geom_l2(x, beta, 5, seg), False)
        xr = x if d > 1 else x[:, None]
        rb, tr, _ = measure(lambda xr=xr, beta=beta: rpt.Pelt(model="l2", min_size=5, jump=1).fit(xr).predict(pen=beta),
                            False)
        cr = segmentation_cost(x, rb, beta, seg)
        note = "" if not seg else " (ruptures has no segment-length term: penalty per change only)"
        print(f"  n=2000: geom {t:.4f} s, ruptures Pelt(l2) {tr:.2f} s, ratio {tr / t:.0f}x; "
              f"cost ours {cost:.3f} vs ruptures {cr:.3f}{note}")


def whole_detection(x: np.ndarray) -> None:
    """The whole joint :func:`degas.analysis.changepoints.detect_changepoints` (grid, noise iteration: two or
    more exact solves, intervals) on 2 × 525,600 10-minute bins, against the solver alone in the same run."""
    from degas.analysis._fastpath import geom_l2
    from degas.analysis.changepoints import detect_changepoints

    idx = pd.date_range("2015-01-01", periods=len(x), freq="10min", tz="UTC")
    df = pd.DataFrame(x, index=idx, columns=["gas", "output"])
    res, t, mem = measure(lambda: detect_changepoints(df))
    _, ts, _ = measure(lambda: geom_l2(x, 4 * math.log(len(x)), 3), False)
    print(f"  whole detect_changepoints, 2 x 525,600 bins: {t:.2f} s, {mem:.0f} MiB, {len(res.change_times)} "
          f"changes | one solve {ts:.2f} s (ratio {t / ts:.1f}: the noise iteration solves at least twice)")


def surrogates(quick: bool) -> None:
    from degas.analysis.xcorr import surrogate_test

    print("\n[surrogate test, ±60 lags, phase surrogates; with gaps vs without]")
    ns, tg = [], []
    sizes = SIZES[:3] if quick else SIZES
    for n in sizes:
        n_s = 1000 if n == 525_600 else 200
        g0, m0 = red_pair(n, False, seed=n)
        g1, m1 = red_pair(n, True, seed=n)
        _, t0, mem0 = measure(lambda g0=g0, m0=m0, n_s=n_s: surrogate_test(g0, m0, 60, n_surrogates=n_s, seed=1),
                              lambda g0=g0, m0=m0: surrogate_test(g0, m0, 60, n_surrogates=100, seed=1))
        _, t1, mem1 = measure(lambda g1=g1, m1=m1, n_s=n_s: surrogate_test(g1, m1, 60, n_surrogates=n_s, seed=1),
                              lambda g1=g1, m1=m1: surrogate_test(g1, m1, 60, n_surrogates=100, seed=1))
        ns.append(n)
        tg.append(t1 / n_s)
        print(f"  n={n:>7}, {n_s} surrogates: gaps {t1:7.2f} s {mem1:6.0f} MiB | gap-free {t0:7.2f} s "
              f"{mem0:6.0f} MiB | ratio gaps/gap-free {t1 / t0:.2f}", flush=True)
    print(f"  fitted exponent of the gapped time per surrogate: b = {exponent(ns, tg):.2f} "
          "(peak memory from a run with 100 surrogates: it is per chunk, not per surrogate)")


def _rolling_per_window(g, m, idx, w: int, s: int, L: int) -> list[float]:
    """The previous route: one full single analysis per window (same seeds, same test)."""
    from degas.analysis.xcorr import cross_correlate

    starts = range(0, g.size - w + 1, s)
    seeds = np.random.SeedSequence(0).spawn(len(starts))
    ps = []
    for i, a in enumerate(starts):
        gi, mi = g[a : a + w], m[a : a + w]
        if (np.isfinite(gi) & np.isfinite(mi)).mean() < 0.7:
            ps.append(math.nan)
            continue
        res = cross_correlate(pd.Series(gi, idx[a : a + w]), pd.Series(mi, idx[a : a + w]), max_lag=L,
                              n_surrogates=200, n_boot=0, seed=int(seeds[i].generate_state(1)[0]), max_ar_order=5)
        ps.append(res.p_value)
    return ps


def rolling(quick: bool, full: bool = False) -> None:
    from degas.analysis.coupling import rolling_coupling

    print("\n[rolling coupling, window 90 D, step 7 D, max lag 15 D, 200 surrogates per window, 10-min bins]")
    ns, ts = [], []
    for n in (20_000, 40_000) if quick else (20_000, 40_000, 80_000):
        idx = pd.date_range("2015-01-01", periods=n, freq="10min", tz="UTC")
        g, m = red_pair(n, True, seed=n)
        res, t, mem = measure(lambda g=g, m=m, idx=idx: rolling_coupling(pd.Series(g, idx), pd.Series(m, idx),
                                                                        window="90D", step="7D"),
                              None if n == 20_000 else False)
        g0, m0 = red_pair(n, False, seed=n)
        _, t0, _ = measure(lambda g0=g0, m0=m0, idx=idx: rolling_coupling(pd.Series(g0, idx), pd.Series(m0, idx),
                                                                          window="90D", step="7D"), False)
        ns.append(n)
        ts.append(t)
        print(f"  n={n:>7}: gaps {t:7.2f} s, {mem:6.0f} MiB, {len(res.windows)} windows "
              f"({t / max(len(res.windows), 1):.2f} s per window) | gap-free {t0:7.2f} s", flush=True)
        if n == 40_000:
            ps, tr, _ = measure(lambda g=g, m=m, idx=idx: _rolling_per_window(g, m, idx, 12_960, 1_008, 2_160), False)
            same = np.allclose(res.windows.p_value.to_numpy(float), ps, equal_nan=True)
            print(f"             previous route (cross_correlate per window) {tr:7.2f} s: ratio {tr / t:.2f}; "
                  f"same p-values: {same}", flush=True)
    b = exponent(ns, ts)
    per = ts[-1] / ns[-1]
    print(f"  fitted exponent b = {b:.2f}; linear extrapolation to 525,600 points: {per * 525_600:.0f} s")
    if full:
        n = 525_600
        idx = pd.date_range("2015-01-01", periods=n, freq="10min", tz="UTC")
        g, m = red_pair(n, True, seed=n)
        res, t, _ = measure(lambda: rolling_coupling(pd.Series(g, idx), pd.Series(m, idx), window="90D", step="7D"),
                            False)
        print(f"  n={n:>7}: gaps {t:7.2f} s CPU, {len(res.windows)} windows ({t / len(res.windows):.3f} s per window)")


def chronology() -> None:
    from degas.grid import eruptive_fraction, make_grid
    from degas.model import Chronology, SeriesMeta

    sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
    from test_grid_volumes import _eruptive_fraction_loop

    print("\n[eruptive fraction, 527-row chronology over two centuries, daily grid]")
    rng = np.random.default_rng(0)
    k = 527
    origin = pd.Timestamp("1800-01-01", tz="UTC")
    starts = origin + pd.to_timedelta(np.sort(rng.integers(0, 220 * 365 * 86400, size=k)), unit="s")
    ends = pd.Series(starts + pd.to_timedelta(rng.exponential(200 * 86400, size=k).astype("int64"), unit="s"))
    df = pd.DataFrame({"start": starts, "end": ends,
                       "state": pd.Series(rng.choice(["eruptive", "pause"], size=k), dtype="string"),
                       "style": pd.Series(["unknown"] * k, dtype="string"),
                       "note": pd.Series([pd.NA] * k, dtype="string")})
    ch = Chronology(df, SeriesMeta("chronology", "eruptive_state"))
    g = make_grid(origin, starts[-1] + pd.Timedelta("400D"), "1D")
    _, t, mem = measure(lambda: eruptive_fraction(ch, grid=g))
    _, t0, _ = measure(lambda: _eruptive_fraction_loop(df, g.origin.value, g.step.value, g.n,
                                                       g.origin.value + g.n * g.step.value))
    print(f"  {g.n} days: vectorised {t:.4f} s, {mem:.0f} MiB | old loop {t0:.2f} s | ratio {t0 / t:.0f}x")


def startup() -> None:
    import subprocess
    import tempfile

    exe = os.path.join(os.path.dirname(sys.executable), "degas")
    root = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

    import resource

    def best(cmd, reps=3):
        out = []
        for _ in range(reps):
            r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
            subprocess.run(cmd, capture_output=True, check=True)
            r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
            out.append(r1.ru_utime - r0.ru_utime + r1.ru_stime - r0.ru_stime)
        return min(out)

    print("\n[start-up, CPU seconds of the command (user + system), best of 3]")
    ref = best([sys.executable, "-c", "import pandas"])
    hlp = best([exe, "--help"])
    with tempfile.TemporaryDirectory() as tmp:
        arc = os.path.join(tmp, "archive")
        subprocess.run([exe, "demo", "--archive", arc, "--out", os.path.join(tmp, "out")], capture_output=True,
                       check=True, cwd=root)
        inv = best([exe, "inventory", arc])
    print(f"  degas --help {hlp:.2f} s; degas inventory (demo archive) {inv:.2f} s; "
          f"reference `python -c 'import pandas'` {ref:.2f} s")


PARTS = {"detection": detection, "surrogates": surrogates,
         "rolling": lambda quick: rolling(quick, "--full" in sys.argv),
         "chronology": lambda quick: chronology(), "startup": lambda quick: startup()}


def main(argv: list[str]) -> None:
    """Run every part, or only the parts named on the command line (e.g. ``surrogates rolling``)."""
    quick = "--quick" in argv
    names = [a for a in argv if a in PARTS] or list(PARTS)
    for name in names:
        PARTS[name](quick)


@pytest.mark.benchmark
def test_bench_paths():
    main(["--quick"])


if __name__ == "__main__":
    main(sys.argv[1:])

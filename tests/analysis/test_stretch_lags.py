"""Lags inside coupled stretches (degas.analysis.stretch_lags): convention, step immunity, significance."""

from __future__ import annotations

import numpy as np
import pandas as pd
import statsmodels.api as sm

from degas.analysis.stretch_lags import stretch_lags


def _pulses(rng, n, width=3.0):
    k = np.exp(-0.5 * (np.arange(-12, 13) / width) ** 2)
    x = np.convolve(rng.standard_normal(n + 25), k, mode="same")[:n]
    return x / x.std()


def _ar1(rng, n, phi=0.5):
    """AR(1) noise e(t) = phi·e(t - 1) + N(0, 1), drawn sample by sample."""
    e = np.empty(n)
    e[0] = rng.standard_normal()
    for j in range(1, n):
        e[j] = phi * e[j - 1] + rng.standard_normal()
    return e


def _pair(seed=0, lag=4, n=400, step_at=200):
    rng = np.random.default_rng(seed)
    idx = pd.date_range("2042-01-01", periods=n, freq="D", tz="UTC")
    q = 2 + 0.5 * _pulses(rng, n + lag)
    q[step_at + lag:] += 3  # a regime step in output
    g = 10 + 4 * q[lag: lag + n] + rng.normal(0, 0.5, n)  # gas(t) follows output at t + lag: gas leads
    seg = (np.arange(n) >= step_at).astype(int)
    return pd.Series(g, idx), pd.Series(q[:n], idx), seg


def test_lag_sign_and_value_match_statsmodels_ccf():
    g, q, seg = _pair()
    res = stretch_lags(g, q, seg, np.ones(len(g), bool), max_lag="10D", n_boot=200, n_surrogates=100)
    assert res.lag_days == 4 and res.lag_ci[0] <= pd.Timedelta("4D") <= res.lag_ci[1]
    assert res.p_value < 0.05 and res.k_within_ci[0] < 4 < res.k_within_ci[1]
    # statsmodels ccf(x, y)[k] = corr(x(t + k), y(t)): with x = output, y = gas it is corr(gas(t), Q(t + k)),
    # the project convention; on one stretch (no step) its peak is at the same lag
    a, b = q.to_numpy()[:200], g.to_numpy()[:200]
    assert int(np.argmax(sm.tsa.stattools.ccf(a - a.mean(), b - b.mean(), adjusted=False)[:11])) == 4


def test_regime_step_does_not_make_the_correlation():
    # gas steps with output but has no pulses: segment means removed, nothing is left to correlate
    g, q, seg = _pair()
    rng = np.random.default_rng(5)
    g2 = pd.Series(10 + 12 * seg + rng.normal(0, 0.5, len(g)), g.index)
    res = stretch_lags(g2, q, seg, np.ones(len(g), bool), max_lag="10D", n_boot=100, n_surrogates=200)
    assert res.p_value >= 0.05
    assert res.step_share[0] > 0.9  # the step carries the gas variance: a whole-record CCF would be all step


def _null_rate(seed: int, pair, **kw) -> float:
    """Share of p < 0.05 over 200 null pairs of 300 days: ``pair(rng, n)`` draws (gas, output, output segments)."""
    rng = np.random.default_rng(seed)
    n = 300
    idx = pd.date_range("2045-01-01", periods=n, freq="D", tz="UTC")
    ps = []
    for i in range(200):
        g, q, off = pair(rng, n)
        r = stretch_lags(pd.Series(g, idx), pd.Series(q, idx), np.zeros(n, int), np.ones(n, bool), n_boot=0,
                         n_surrogates=99, seed=i, magma_segment_id=off, **kw)
        ps.append(r.p_value)
    return float(np.mean(np.array(ps) < 0.05))


def test_surrogate_p_value_keeps_its_size_with_gaps():
    """Null pairs (independent AR(1) gas, smooth output), 25 % of gas days missing: the share of p < 0.05 stays
    at or below the nominal 5 % (+ the binomial allowance of 200 pairs: 5 % + 2·1.5 %). Surrogates: phase
    randomisation (Theiler et al. 1992) generated on the full grid with the gaps re-imposed."""

    def pair(rng, n):
        q = 2 + 0.6 * _pulses(rng, n, 4.0)
        g = 10 + _ar1(rng, n)
        g[rng.random(n) < 0.25] = np.nan
        return g, q, None

    rate = _null_rate(123, pair)
    print(f"\nstretch-lag surrogate test: false-alarm rate {rate:.3f} at 5 % over 200 null pairs with 25 % gaps")
    assert rate <= 0.08


def test_surrogate_p_value_keeps_its_size_with_output_gaps():
    """Null pairs as above, now with the gaps in the *output*: 20 % of its days missing and two long stretches
    marked inactive (-1, taken out of every pair) as the regime run does; lags ±7 d. The output's surrogates
    come from its gap-corrected spectrum (Parzen 1963) with the gaps re-imposed (degas.analysis.surrogates);
    the share of p < 0.05 stays at or below 5 % + 2·1.5 % (binomial allowance of 200 pairs)."""

    def pair(rng, n):
        q = 2 + 0.6 * _pulses(rng, n, 4.0)
        q[rng.random(n) < 0.2] = np.nan
        g = 10 + _ar1(rng, n)
        off = np.zeros(n, int)
        a, b = rng.integers(0, 100), rng.integers(150, 220)
        off[a:a + 50] = -1
        off[b:b + 60] = -1
        return g, q, off

    rate = _null_rate(321, pair, max_lag="7D")
    print(f"\nstretch-lag surrogate test: false-alarm rate {rate:.3f} at 5 % over 200 null pairs with output gaps")
    assert rate <= 0.08


def test_profile_fit_matches_statsmodels_ols_with_one_intercept_per_group():
    """r(L) is the partial correlation of gas and Q(t + L) given one intercept per group, from the ordinary
    least-squares fits gas ~ group dummies (+ Q(t + L)) over the pairs present at L (statsmodels OLS), and
    k_within is the OLS slope of Q at the best lag (the within / fixed-effects estimator, Wooldridge 2010)."""
    g, q, seg = _pair(seed=3, n=240, step_at=120)
    gv, qv = g.to_numpy().copy(), q.to_numpy()
    gv[::11] = np.nan
    g = pd.Series(gv, g.index)
    res = stretch_lags(g, q, seg, np.ones(len(g), bool), max_lag="6D", n_boot=0, n_surrogates=0)
    n = len(gv)
    for L, r in zip(res.r_by_lag["lag_days"].astype(int), res.r_by_lag["r"], strict=True):
        t = np.arange(n)
        t = t[(t + L >= 0) & (t + L < n)]
        t = t[np.isfinite(gv[t])]
        dummies = np.stack([(seg[t] == s).astype(float) for s in (0, 1)], axis=1)
        base = sm.OLS(gv[t], dummies).fit()
        full = sm.OLS(gv[t], np.column_stack([dummies, qv[t + L]])).fit()
        want = np.sign(full.params[-1]) * np.sqrt(1 - full.ssr / base.ssr)
        assert abs(r - want) < 1e-9
        if L == res.lag_days:
            assert abs(res.k_within - full.params[-1]) < 1e-9


def test_level_change_inside_a_stretch_carries_the_lag_and_inactive_output_is_left_out():
    # one coupled stretch, output steps up inside it, gas follows 5 days ahead with noise and no pulses
    rng = np.random.default_rng(2)
    n = 200
    idx = pd.date_range("2043-01-01", periods=n, freq="D", tz="UTC")
    q = np.where(np.arange(n + 5) >= 100, 3.0, 1.0)
    g = 10 + 4 * q[5: 5 + n] + rng.normal(0, 1.0, n)
    one = np.zeros(n, int)
    res = stretch_lags(pd.Series(g, idx), pd.Series(q[:n], idx), one, np.ones(n, bool), max_lag="10D",
                       n_boot=0, n_surrogates=0)
    assert res.lag_days == 5  # (one step is one event: its block-bootstrap interval is wide, not tested here)
    # output marked unusable (-1) on days 90-109 around its step: those pairs never enter, so every lag from
    # -5 to +10 d pairs low gas with low output and high with high (the step no longer locates the lag)
    mask = np.where((np.arange(n) >= 90) & (np.arange(n) < 110), -1, 0)
    res2 = stretch_lags(pd.Series(g, idx), pd.Series(q[:n], idx), one, np.ones(n, bool), max_lag="10D",
                        n_boot=0, n_surrogates=0, magma_segment_id=mask)
    r = res2.r_by_lag.set_index("lag_days")["r"]
    assert np.ptp(r.loc[-5:10]) < 0.02 < r.loc[-5] - r.loc[-10]

"""Lagged cross-correlation of gas flux against magma output, with prewhitening and surrogates.

Sign convention (the project's, see :mod:`degas.analysis`): a **positive lag means gas leads
magma output**; the function reported is r(k) = corr(gas_t, magma_{t+k}).

Mapping to statsmodels (the only place in degas that knows it): ``statsmodels.tsa.stattools.ccf(x,
y)[k]`` is corr(x_{t+k}, y_t), lags k >= 0 only. Hence

* r(+k) = ``ccf(magma, gas)[k]``  and  r(-k) = ``ccf(gas, magma)[k]``.

Normalisations (``normalisation=``):

* ``"pearson"`` (default): the Pearson correlation of the pairwise-complete pairs at each lag, each
  lag with its own means and standard deviations; missing values are skipped pairwise and the number
  of pairs per lag is reported (``n_pairs``).
* ``"biased"``: statsmodels' ``ccf(..., adjusted=False)``: full-series means and (ddof=0) standard
  deviations, the lagged sum divided by n. Needs complete data.
* ``"adjusted"``: statsmodels' ``ccf(..., adjusted=True)`` (its default): as ``"biased"`` but divided
  by n - |k|. Needs complete data.

Variants (``variant=``): ``"prewhitened"`` (default; Box & Jenkins: an AR(p) model, order by AIC, is
fitted to the *magma output* series - the input of the transfer - and both series are filtered by
the same AR polynomial), ``"raw"`` and ``"differenced"`` (first differences of both). The result
says which was used.

Significance two ways: the large-sample white-noise band ±1.96/sqrt(n_pairs) and a surrogate test:
the gas series (after the variant's transform) is replaced by phase-randomised (Theiler et al.
1992) or IAAFT (Schreiber & Schmitz 1996) surrogates, which keep its autocorrelation but destroy
any relation to magma output; the statistic is T = max over |k| <= L of |r(k)|, so the p-value
accounts for the search over lags: p = (1 + #{T_surr >= T_obs}) / (N_surr + 1) (the usual
surrogate/Monte Carlo p-value; REFERENCES §5.4 marks the formula as from memory).

Missing values: the default "pearson" statistic skips incomplete pairs at each lag. Its per-lag
pair count and sums are correlations of the zero-filled series and their masks, computed by block
FFTs and normalised by the overlap count at each lag (:mod:`degas.analysis._lagsums`; O(n log n)
time, O(n) memory, for the observed series, the surrogates and the bootstrap alike). For the
surrogate test with gaps, phase surrogates are made on the full grid from the gap-corrected
spectrum of the gas series (gapped correlogram, Parzen 1963) and the gas gap mask is re-imposed,
so every surrogate has exactly the observed pair structure and the series' autocorrelation
(filling the gaps with the mean would whiten the surrogates and inflate the false-alarm rate).
Prewhitening is fitted on the longest gap-free stretch of magma output; the filter spreads each
gap over p further bins.

The best lag gets a percentile confidence interval from a moving-block bootstrap over time of the
aligned pairs (the same resampled times for every lag).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import scipy.fft as sfft
from numpy.lib.stride_tricks import sliding_window_view

from degas.analysis._lagsums import LagSums
from degas.analysis.relation import block_indices
from degas.analysis.surrogates import SURROGATE_METHODS, gapped_amplitudes, iter_phase_spectra, iter_surrogates
from degas.errors import DegasError, NotEnoughDataError
from degas.grid import contiguous_runs

VARIANTS = ("prewhitened", "raw", "differenced")
NORMALISATIONS = ("pearson", "biased", "adjusted")
#: Fewest pairs at one lag for which a correlation is reported (else NaN).
MIN_PAIRS = 10


# --------------------------------------------------------------------------- inputs


def _pair(gas, magma, step) -> tuple[np.ndarray, np.ndarray, pd.DatetimeIndex | None, pd.Timedelta]:
    """Two aligned float arrays, their common index (or None) and the grid step."""
    if isinstance(gas, pd.Series) and isinstance(magma, pd.Series):
        if not gas.index.equals(magma.index):
            raise DegasError("gas and magma-output series are not on the same time grid; align them first")
        idx = gas.index
        if step is None:
            if isinstance(idx, pd.DatetimeIndex) and len(idx) >= 2:
                step = idx[1] - idx[0]
                if not (idx[1:] - idx[:-1] == step).all():
                    raise DegasError("the time grid is not regular; align the series first")
            else:
                raise DegasError("cannot infer the time step of the series; give --step (e.g. 1D)")
        g = gas.to_numpy(dtype="float64", na_value=np.nan)
        m = magma.to_numpy(dtype="float64", na_value=np.nan)
        return g, m, idx if isinstance(idx, pd.DatetimeIndex) else None, pd.Timedelta(step)
    g = np.asarray(gas, dtype="float64")
    m = np.asarray(magma, dtype="float64")
    if g.shape != m.shape or g.ndim != 1:
        raise DegasError(
            f"gas and magma-output arrays must have the same 1-D length, got {g.shape} and {m.shape}"
        )
    return g, m, None, pd.Timedelta(step if step is not None else "1D")


def _lag_bins(max_lag, step: pd.Timedelta) -> int:
    if isinstance(max_lag, int | np.integer):
        L = int(max_lag)
    else:
        td = pd.Timedelta(max_lag)
        L = int(td // step)
    if L < 0:
        raise DegasError("max_lag must be non-negative")
    return L


# --------------------------------------------------------------------------- lag machinery


class _LagBasis:
    """Lag matrices of the magma series: column j holds magma_{t+k}, k = j - L (zero outside)."""

    def __init__(self, m: np.ndarray, L: int):
        self.n = m.size
        self.L = L
        self.valid = np.isfinite(m)
        self.m0 = np.where(self.valid, m, 0.0)
        self.complete = bool(self.valid.all())
        self._cache: dict[str, np.ndarray] = {}

    def _lagged(self, v: np.ndarray) -> np.ndarray:
        pad = np.zeros(self.n + 2 * self.L)
        pad[self.L : self.L + self.n] = v
        return np.ascontiguousarray(sliding_window_view(pad, 2 * self.L + 1)[: self.n])

    def masked(self) -> _MaskedPearson:
        """The block-FFT lag sums of this magma series (built once)."""
        if "_masked" not in self._cache:
            self._cache["_masked"] = _MaskedPearson(self.m0, self.valid, self.L)
        return self._cache["_masked"]

    def matrix(self, name: str) -> np.ndarray:
        if name not in self._cache:
            src = {"m": self.m0, "m2": self.m0**2, "mask": self.valid.astype(float)}[name]
            self._cache[name] = self._lagged(src)
        return self._cache[name]


class _MaskedPearson:
    """Pairwise-complete Pearson r(k) with gaps from masked FFT lag sums (Parzen 1963 gapped correlogram).

    With a = gas mask (times bootstrap weights), b = magma mask and zero-filled, centred values, the
    pair count and the five sums per lag are correlations of (a, a·g, a·g²) with (b, m, m²); the
    magma side is transformed once (:class:`degas.analysis._lagsums.LagSums`).
    """

    def __init__(self, m0: np.ndarray, mvalid: np.ndarray, L: int):
        self.L = L
        self.mc = float(m0[mvalid].mean()) if mvalid.any() else 0.0
        mz = np.where(mvalid, m0 - self.mc, 0.0)
        self.sums = LagSums(np.vstack([mvalid.astype(float), mz, mz * mz]), L)
        self._plain: dict[bytes, tuple[np.ndarray, np.ndarray, np.ndarray]] = {}

    def _mask_sums(self, a: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        N, Sm, Smm = self.sums.sums(self.sums.spectra(a), 0, 1, 2)
        return N, Sm, Smm

    def pearson(self, G0: np.ndarray, gvalid: np.ndarray, W: np.ndarray | None = None):
        """r (rows, 2L+1) and pair counts N for rows ``G0`` (zero where ``gvalid`` is False)."""
        a = gvalid.astype(float)
        gc = G0.sum(axis=1, keepdims=True) / max(a.sum(), 1.0)  # centring: conditioning only
        Gc = np.where(gvalid[None, :], G0 - gc, 0.0)
        if W is None:
            key = np.packbits(gvalid).tobytes()
            if key not in self._plain:
                self._plain = {key: self._mask_sums(a[None, :])}
            N, Sm, Smm = self._plain[key]
            Wa = a[None, :]
        else:
            Wa = W * a[None, :]
            N, Sm, Smm = self._mask_sums(Wa)
        Sg, Sgm = self.sums.sums(self.sums.spectra(Wa * Gc), 0, 1)
        (Sgg,) = self.sums.sums(self.sums.spectra(Wa * Gc * Gc), 0)
        N = np.rint(N)  # integer counts (weights are multiplicities); FFT round-off removed
        with np.errstate(invalid="ignore", divide="ignore"):
            num = N * Sgm - Sg * Sm
            den = (N * Sgg - Sg**2) * (N * Smm - Sm**2)
            r = num / np.sqrt(np.where(den > 0, den, np.nan))
        r = np.where(N >= MIN_PAIRS, r, np.nan)
        return np.clip(r, -1.0, 1.0), np.broadcast_to(N, r.shape).copy()


def _edge_sums(rows: np.ndarray, L: int, total: np.ndarray | float | None = None) -> np.ndarray:
    """Per row and lag, the sum over t of ``rows`` for t whose partner t+k lies inside [0, n).

    ``total`` (per row) may be given when already known; only the first and last L values are read then.
    """
    total = rows.sum(axis=1, keepdims=True) if total is None else np.broadcast_to(
        np.asarray(total, dtype=float).reshape(-1, 1), (rows.shape[0], 1))
    n = rows.shape[1]
    head = np.concatenate([np.zeros((rows.shape[0], 1)), np.cumsum(rows[:, :L], axis=1)], axis=1)
    tail = np.concatenate(
        [np.zeros((rows.shape[0], 1)), np.cumsum(rows[:, n - L :][:, ::-1], axis=1)], axis=1
    ) if L > 0 else np.zeros((rows.shape[0], 1))
    out = np.empty((rows.shape[0], 2 * L + 1))
    for j in range(2 * L + 1):
        k = j - L
        out[:, j] = (total - tail[:, [k]]).ravel() if k >= 0 else (total - head[:, [-k]]).ravel()
    return out


class _FftPair:
    """FFT route for complete data: linear r(k) of many rows against one magma series, no lag matrix.

    The circular cross-correlation from one inverse FFT is turned into the linear (zero-padded) one by
    subtracting the <= L wrapped products at the ends; partial sums come from the first/last L values.
    """

    def __init__(self, m: np.ndarray, L: int):
        self.n, self.L = m.size, L
        mu, sd = m.mean(), m.std()
        self.mz = (m - mu) / sd
        self.M = sfft.rfft(self.mz)
        ks = np.arange(0, L + 1)
        i = np.arange(L)[:, None]
        # wrap for k > 0: sum_j s_{n-k+j} m_j = T @ a_pos, T = s[:, n-L:]
        jpos = i - L + ks[None, :]
        self.a_pos = np.where((jpos >= 0) & (jpos < ks[None, :]), self.mz[np.clip(jpos, 0, None)], 0.0)
        # wrap for k = -q < 0: sum_{t<q} s_t m_{n-q+t} = H @ a_neg, H = s[:, :L]
        jneg = self.n - ks[None, :] + i
        self.a_neg = np.where(i < ks[None, :], self.mz[np.clip(jneg, 0, self.n - 1)], 0.0)
        self.sm = _edge_sums(self.mz[None, :], L)[:, ::-1][0]
        self.smm = _edge_sums(self.mz[None, :] ** 2, L)[:, ::-1][0]
        self.N = (self.n - np.abs(np.arange(-L, L + 1))).astype(float)

    def rows(self, S: np.ndarray, Z: np.ndarray | None = None, normalisation: str = "pearson",
             totals: tuple[float, float] | None = None) -> np.ndarray:
        """r(k), k = -L..L, for each row of ``S`` (time domain).

        ``Z`` = rfft(S) when already known (it is overwritten); ``totals`` = (sum, sum of squares) of
        every row when known (phase surrogates share them: the DC term and Parseval).
        """
        n, L = self.n, self.L
        if Z is None:
            Z = sfft.rfft(S, axis=1, workers=1)
        np.conjugate(Z, out=Z)
        Z *= self.M[None, :]
        C = sfft.irfft(Z, n=n, axis=1, workers=1)
        circ = np.concatenate([C[:, n - L :], C[:, : L + 1]], axis=1) if L > 0 else C[:, :1]
        wrap_pos = S[:, n - L :] @ self.a_pos if L > 0 else np.zeros((S.shape[0], 1))
        wrap_neg = S[:, :L] @ self.a_neg if L > 0 else np.zeros((S.shape[0], 1))
        wrap = np.concatenate([wrap_neg[:, 1:][:, ::-1], wrap_pos], axis=1)
        sgm = circ - wrap
        tot, totsq = (None, None) if totals is None else totals
        sg = _edge_sums(S, L, tot)
        N = self.N[None, :]
        with np.errstate(invalid="ignore", divide="ignore"):
            if normalisation == "pearson":
                if totsq is None:
                    sgg = _edge_sums(S * S, L)
                else:
                    edges = np.concatenate([S[:, :L], S[:, n - L :]], axis=1) if L > 0 else S[:, :0]
                    sgg = _edge_sums(edges * edges, L, totsq) if L > 0 else np.full((S.shape[0], 1), totsq)
                num = N * sgm - sg * self.sm[None, :]
                den = (N * sgg - sg**2) * (N * self.smm[None, :] - self.sm[None, :] ** 2)
                r = num / np.sqrt(np.where(den > 0, den, np.nan))
                return np.clip(np.where(N >= MIN_PAIRS, r, np.nan), -1.0, 1.0)
            sbar = S.mean(axis=1, keepdims=True)
            mbar = self.mz.mean()
            cov = sgm - sbar * self.sm[None, :] - mbar * sg + N * sbar * mbar
            d = N if normalisation == "adjusted" else float(n)
            return cov / d / (S.std(axis=1, keepdims=True) * self.mz.std())


def _pearson_rows(G: np.ndarray, gvalid: np.ndarray, basis: _LagBasis, W: np.ndarray | None = None):
    """Pairwise-complete Pearson r(k) per row of ``G`` against the magma basis, and the pair counts.

    ``gvalid`` (n,) masks missing gas bins; ``W`` (rows, n) are optional bootstrap weights. Complete
    data go through :class:`_FftPair`; gaps and weights through the masked block-FFT lag sums
    (:mod:`degas.analysis._lagsums`), O(n log n) time and O(n) memory per row.
    """
    L = basis.L
    G0 = np.where(gvalid[None, :], G, 0.0)
    if W is None and basis.complete and gvalid.all() and _wrap_is_cheap(basis):
        N = np.broadcast_to((basis.n - np.abs(np.arange(-L, L + 1))).astype(float), (G.shape[0], 2 * L + 1))
        return _FftPair(basis.m0, L).rows(G0), np.asarray(N)
    return basis.masked().pearson(G0, gvalid, W)


def _wrap_is_cheap(basis: _LagBasis) -> bool:
    """True when :class:`_FftPair`'s O(L²) wrap correction per row is cheap next to an FFT (L² ≤ 8·n);
    longer lag ranges (e.g. ±15 days of 10-minute bins) take the block-FFT lag sums even without gaps."""
    return basis.L * basis.L <= 8 * basis.n


def _pearson_rows_lagmatrix(G: np.ndarray, gvalid: np.ndarray, basis: _LagBasis, W: np.ndarray | None = None):
    """The lag-matrix form of :func:`_pearson_rows` for gaps (n × (2L+1) memory): the tests' reference."""
    G0 = np.where(gvalid[None, :], G, 0.0)
    Wg = gvalid[None, :].astype(float) if W is None else W * gvalid[None, :]
    Wg = np.broadcast_to(Wg, G.shape)
    Lmask, Lm, Lm2 = basis.matrix("mask"), basis.matrix("m"), basis.matrix("m2")
    WG = Wg * G0
    N = Wg @ Lmask
    Sg = WG @ Lmask
    Sgg = (WG * G0) @ Lmask
    Sm = Wg @ Lm
    Smm = Wg @ Lm2
    Sgm = WG @ Lm
    with np.errstate(invalid="ignore", divide="ignore"):
        num = N * Sgm - Sg * Sm
        den = (N * Sgg - Sg**2) * (N * Smm - Sm**2)
        r = num / np.sqrt(np.where(den > 0, den, np.nan))
    r = np.where(N >= MIN_PAIRS, r, np.nan)
    return np.clip(r, -1.0, 1.0), np.asarray(N)


def _fixed_norm_rows(G: np.ndarray, basis: _LagBasis, adjusted: bool) -> np.ndarray:
    """statsmodels-style r(k): full-series means and std, divided by n (or n - |k|)."""
    n, L = basis.n, basis.L
    Gc = G - G.mean(axis=1, keepdims=True)
    mc = basis.m0 - basis.m0.mean()
    if "mc" not in basis._cache:
        basis._cache["mc"] = basis._lagged(mc)
    Lm = basis._cache["mc"]
    d = (n - np.abs(np.arange(-L, L + 1))) if adjusted else np.full(2 * L + 1, n)
    with np.errstate(invalid="ignore", divide="ignore"):
        return (Gc @ Lm) / d[None, :] / (Gc.std(axis=1, keepdims=True) * mc.std())


def lagged_correlation(
    gas, magma, max_lag: int, *, normalisation: str = "pearson"
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Cross-correlation r(k) = corr(gas_t, magma_{t+k}) for k = -max_lag..max_lag (bins).

    Parameters
    ----------
    gas, magma : 1-D arrays on the same regular grid (any units; NaN = missing).
    max_lag : largest |k| in bins.
    normalisation : "pearson" (pairwise complete, per-lag means and std), "biased" or "adjusted"
        (statsmodels ``ccf`` with ``adjusted=False`` / ``True``; complete data only).

    Returns
    -------
    lags (int bins), r (dimensionless, NaN where fewer than MIN_PAIRS pairs), n_pairs per lag.
    """
    if normalisation not in NORMALISATIONS:
        raise DegasError(f"unknown normalisation {normalisation!r}; valid: {', '.join(NORMALISATIONS)}")
    g = np.asarray(gas, dtype="float64")
    m = np.asarray(magma, dtype="float64")
    L = int(max_lag)
    if L >= g.size:
        raise NotEnoughDataError(f"max_lag {L} bins is not shorter than the series ({g.size} bins)")
    basis = _LagBasis(m, L)
    gvalid = np.isfinite(g)
    lags = np.arange(-L, L + 1)
    if normalisation == "pearson":
        r, N = _pearson_rows(g[None, :], gvalid, basis)
        return lags, r[0], N[0].astype("int64")
    if not (gvalid.all() and basis.complete):
        raise DegasError(f"normalisation {normalisation!r} needs complete series; use 'pearson' for gaps")
    r = _fixed_norm_rows(g[None, :], basis, adjusted=normalisation == "adjusted")[0]
    return lags, r, (g.size - np.abs(lags)).astype("int64")


# --------------------------------------------------------------------------- prewhitening


@dataclass(frozen=True)
class Prewhitening:
    """An AR(p) prewhitening filter: e_t = x_t - sum_i phi_i x_{t-i} (intercept dropped).

    ``fitted_on`` names the series it was fitted to; ``fit_start``/``fit_stop`` are the bin indices
    of the contiguous valid stretch used for the fit.
    """

    order: int
    coefficients: tuple[float, ...]
    intercept: float
    fitted_on: str
    fit_start: int
    fit_stop: int
    ic: str

    def apply(self, x) -> np.ndarray:
        """Filter ``x`` with the AR polynomial; NaN where any input value needed is missing."""
        x = np.asarray(x, dtype="float64")
        p = self.order
        out = np.full(x.size, np.nan)
        if p == 0:
            return x.copy()
        if x.size <= p:
            return out
        acc = x[p:].copy()
        for i, phi in enumerate(self.coefficients, start=1):
            acc -= phi * x[p - i : x.size - i]
        out[p:] = acc
        return out


def fit_prewhitening(x, *, max_order: int = 10, ic: str = "aic", name: str = "magma output") -> Prewhitening:
    """Fit the prewhitening AR(p) to ``x`` on its longest contiguous valid stretch.

    The order p (0..max_order) is chosen by ``ic`` with ``statsmodels.tsa.ar_model.ar_select_order``
    (trend "c"); the coefficients are then those of ``AutoReg(x_run, lags=p, trend="c").fit()``.
    """
    from statsmodels.tsa.ar_model import AutoReg, ar_select_order

    x = np.asarray(x, dtype="float64")
    runs = contiguous_runs(np.isfinite(x))
    if not runs:
        raise NotEnoughDataError(f"no valid values in the {name} series to fit a prewhitening filter")
    a, b = max(runs, key=lambda r: r[1] - r[0])
    run = x[a:b]
    max_order = int(min(max_order, max((run.size - 1) // 5, 0)))
    if run.size < 10:
        raise NotEnoughDataError(
            f"longest gap-free stretch of the {name} series is {run.size} bins; "
            "prewhitening needs at least 10"
        )
    if np.nanstd(run) == 0:
        raise DegasError(f"the {name} series is constant over its longest gap-free stretch")
    p = 0
    if max_order > 0:
        sel = ar_select_order(run, max_order, ic=ic, trend="c")
        p = int(max(sel.ar_lags)) if sel.ar_lags else 0
    if p == 0:
        return Prewhitening(0, (), float(run.mean()), name, a, b, ic)
    params = np.asarray(AutoReg(run, lags=p, trend="c").fit().params)
    return Prewhitening(p, tuple(float(v) for v in params[1:]), float(params[0]), name, a, b, ic)


def _difference(x: np.ndarray) -> np.ndarray:
    out = np.full(x.size, np.nan)
    out[1:] = x[1:] - x[:-1]
    return out


# --------------------------------------------------------------------------- result


@dataclass(frozen=True)
class CrossCorrelationResult:
    """Lagged cross-correlation of gas flux against magma output.

    Attributes
    ----------
    lags : int bins, -L..L; lag k > 0 means gas leads magma output by k bins.
    step : grid step (one bin).
    r : correlation per lag (dimensionless).
    n_pairs : number of valid (gas, magma) pairs per lag.
    band : white-noise 95 % half-width 1.96/sqrt(n_pairs) per lag.
    best_lag : lag of the largest |r| (Timedelta; positive = gas leads).
    peak_r : r at the best lag (signed).
    p_value : surrogate p-value of max |r| over all lags (NaN if no surrogates).
    lag_ci : (low, high) percentile interval of the best lag from the block bootstrap.
    """

    gas_name: str
    magma_name: str
    variant: str
    normalisation: str
    lags: np.ndarray
    step: pd.Timedelta
    r: np.ndarray
    n_pairs: np.ndarray
    band: np.ndarray
    best_lag: pd.Timedelta
    best_lag_bins: int
    peak_r: float
    p_value: float
    n_surrogates: int
    surrogate_method: str
    seed: int | None
    lag_ci: tuple[pd.Timedelta, pd.Timedelta] | None
    ci_level: float
    n_boot: int
    block_length: int
    prewhitening: Prewhitening | None
    start: pd.Timestamp | None
    end: pd.Timestamp | None
    n_bins: int
    notes: tuple[str, ...] = field(default=())

    @property
    def max_lag(self) -> pd.Timedelta:
        return int(self.lags.max()) * self.step

    def to_frame(self) -> pd.DataFrame:
        """One row per lag: lag (Timedelta), lag_s, r, n_pairs, band (white-noise 95 % half-width)."""
        lag_td = pd.to_timedelta(self.lags * self.step.value, unit="ns")
        return pd.DataFrame(
            {
                "lag": lag_td,
                "lag_s": self.lags * self.step.total_seconds(),
                "r": self.r,
                "n_pairs": self.n_pairs,
                "band": self.band,
                "significant_white_noise": np.abs(self.r) > self.band,
            }
        )

    def summary(self) -> dict:
        """Headline numbers as a flat dict (display units: days)."""
        day = pd.Timedelta("1D")
        return {
            "gas": self.gas_name,
            "magma_output": self.magma_name,
            "variant": self.variant,
            "best_lag_days": self.best_lag / day,
            "lag_ci_low_days": None if self.lag_ci is None else self.lag_ci[0] / day,
            "lag_ci_high_days": None if self.lag_ci is None else self.lag_ci[1] / day,
            "peak_r": self.peak_r,
            "p_value": self.p_value,
            "n_surrogates": self.n_surrogates,
            "white_noise_band": float(self.band[self.lags == self.best_lag_bins][0]),
            "n_bins": self.n_bins,
            "prewhitening_order": None if self.prewhitening is None else self.prewhitening.order,
        }


# --------------------------------------------------------------------------- main entry


def surrogate_max_stat(
    g: np.ndarray,
    basis: _LagBasis,
    *,
    n_surrogates: int,
    method: str = "phase",
    seed: int | np.random.Generator | None = 0,
    normalisation: str = "pearson",
    chunk_size: int | None = None,
) -> np.ndarray:
    """max_k |r(k)| for ``n_surrogates`` surrogates of ``g`` against the magma ``basis``.

    With gaps, phase surrogates are made on the full grid from the gap-corrected spectrum
    (:func:`degas.analysis.surrogates.gapped_amplitudes`) and the gas gap mask is re-imposed, so each
    surrogate has the observed pair structure and the series' autocorrelation; IAAFT surrogates
    still fill gaps with the gas mean (which whitens them slightly).
    """
    gvalid = np.isfinite(g)
    out = np.empty(n_surrogates)
    i = 0
    if gvalid.all() and basis.complete and _wrap_is_cheap(basis):
        fft = _FftPair(basis.m0, basis.L)
        gz = (g - g.mean()) / g.std()
        if method == "phase":
            # every phase surrogate has the sum (DC term) and sum of squares (Parseval) of gz
            totals = (float(gz.sum()), float(np.dot(gz, gz)))
            for z in iter_phase_spectra(gz, n_surrogates, seed=seed, chunk_size=chunk_size):
                S = sfft.irfft(z, n=g.size, axis=1, workers=1)
                r = fft.rows(S, z, normalisation, totals=totals)
                out[i : i + S.shape[0]] = np.nanmax(np.abs(r), axis=1)
                i += S.shape[0]
        else:
            for S in iter_surrogates(gz, n_surrogates, method=method, seed=seed, chunk_size=chunk_size):
                out[i : i + S.shape[0]] = np.nanmax(np.abs(fft.rows(S, None, normalisation)), axis=1)
                i += S.shape[0]
        return out
    if method == "phase" and normalisation == "pearson":
        # gaps (or a long lag range): surrogates on the full grid from the gap-corrected spectrum, the gap
        # mask re-imposed, r by masked FFT lag sums (O(n log n) time, O(n) memory per surrogate)
        gz = (g - np.nanmean(g)) / np.nanstd(g)
        amp = gapped_amplitudes(gz)
        chunk_size = chunk_size or max(1, int(2_000_000 // g.size))
        for z in iter_phase_spectra(gz, n_surrogates, seed=seed, chunk_size=chunk_size, amplitudes=amp):
            S = sfft.irfft(z, n=g.size, axis=1, workers=1)
            r, _ = _pearson_rows(S, gvalid, basis)
            out[i : i + S.shape[0]] = np.nanmax(np.abs(r), axis=1)
            i += S.shape[0]
        return out
    fill = np.where(gvalid, g, np.nanmean(g))
    for chunk in iter_surrogates(fill, n_surrogates, method=method, seed=seed, chunk_size=chunk_size):
        if normalisation == "pearson":
            r, _ = _pearson_rows(chunk, gvalid, basis)
        else:
            r = _fixed_norm_rows(chunk, basis, adjusted=normalisation == "adjusted")
        out[i : i + chunk.shape[0]] = np.nanmax(np.abs(r), axis=1)
        i += chunk.shape[0]
    return out


#: Series longer than this are trimmed to a fast FFT length for the surrogate test (<= 1 % dropped).
FAST_TRIM_ABOVE = 65_536


def _test_length(n: int) -> int:
    """Largest fast FFT length <= n when n is large and at most 1 % shorter; otherwise n."""
    if n <= FAST_TRIM_ABOVE:
        return n
    k = sfft.prev_fast_len(n, real=True)
    return k if n - k <= 0.01 * n else n


def surrogate_test(
    g: np.ndarray,
    m: np.ndarray,
    max_lag: int,
    *,
    n_surrogates: int = 1000,
    method: str = "phase",
    seed: int | np.random.Generator | None = 0,
    normalisation: str = "pearson",
) -> tuple[float, float, np.ndarray, int]:
    """Surrogate test of T = max_{|k| <= L} |r(k)|; returns (p, T_obs, T_surrogates, bins used).

    p = (1 + #{T_surr >= T_obs}) / (N + 1). Long series are trimmed at the end to a fast FFT length
    (at most 1 % of the bins) for both the observed and the surrogate statistic.
    """
    n_use = _test_length(g.size)
    g, m = g[:n_use], m[:n_use]
    basis = _LagBasis(m, max_lag)
    gvalid = np.isfinite(g)
    if normalisation == "pearson":
        r_obs = _pearson_rows(g[None, :], gvalid, basis)[0][0]
    else:
        r_obs = _fixed_norm_rows(g[None, :], basis, adjusted=normalisation == "adjusted")[0]
    t_obs = float(np.nanmax(np.abs(r_obs)))
    t_s = surrogate_max_stat(g, basis, n_surrogates=n_surrogates, method=method, seed=seed,
                             normalisation=normalisation)
    return (1 + int(np.sum(t_s >= t_obs))) / (n_surrogates + 1), t_obs, t_s, n_use


def _bootstrap_weights(n: int, block: int, count: int, rng: np.random.Generator) -> np.ndarray:
    """Moving-block bootstrap multiplicities (count, n): how often each bin enters each replicate of
    :func:`degas.analysis.relation.block_indices` (blocks of ``block`` bins drawn with replacement)."""
    idx = block_indices(n, block, count, rng)
    flat = (idx + (np.arange(count) * n)[:, None]).ravel()
    return np.bincount(flat, minlength=count * n).reshape(count, n).astype(float)


def _prepare(g: np.ndarray, m: np.ndarray, L: int, variant: str, max_ar_order: int, gas_name: str,
             magma_name: str) -> tuple[np.ndarray, np.ndarray, int, int, int, Prewhitening | None, list[str]]:
    """The pair as :func:`cross_correlate` correlates it: trimmed to the overlap [lo, hi) of n bins, transformed
    by ``variant`` (prewhitening filter ``pw`` fitted here) and trimmed of bins lost to the filter; with notes."""
    notes: list[str] = []
    gv, mv = np.isfinite(g), np.isfinite(m)
    if not gv.any():
        raise NotEnoughDataError(f"the {gas_name} series has no valid values on the grid")
    if not mv.any():
        raise NotEnoughDataError(f"the {magma_name} series has no valid values on the grid")
    lo = max(np.flatnonzero(gv)[0], np.flatnonzero(mv)[0])
    hi = min(np.flatnonzero(gv)[-1], np.flatnonzero(mv)[-1]) + 1
    if hi <= lo:
        raise NotEnoughDataError(f"the {gas_name} and {magma_name} series do not overlap in time")
    g, m = g[lo:hi], m[lo:hi]
    n = g.size
    need = 2 * L + MIN_PAIRS
    if n < need:
        raise NotEnoughDataError(
            f"the {gas_name} and {magma_name} series overlap for {n} bins; "
            f"lags up to ±{L} bins need at least {need}"
        )
    for name, x in ((gas_name, g), (magma_name, m)):
        if np.nanstd(x) == 0:
            raise DegasError(f"the {name} series is constant over the overlap; a correlation is undefined")
    both = np.isfinite(g) & np.isfinite(m)
    missing_share = 1 - both.mean()
    if missing_share > 0.2:
        notes.append(
            f"{missing_share:.0%} of the overlapping bins lack a gas or magma value; pairs skipped, not filled"
        )

    pw = None
    if variant == "prewhitened":
        pw = fit_prewhitening(m, max_order=max_ar_order, name=magma_name)
        m_f = pw.apply(m)
        explained = 1.0 - np.nanvar(m_f) / np.nanvar(m)
        if explained > 0.99:
            notes.append(
                f"the prewhitening AR({pw.order}) explains {explained:.1%} of the {magma_name} variance (a nearly "
                "deterministic, smooth input): the filter amplifies noise in the gas series that the input does "
                "not share; compare the raw and differenced variants"
            )
        g, m = pw.apply(g), m_f
        notes.append(
            f"prewhitened with AR({pw.order}) fitted by {pw.ic.upper()} to {magma_name} "
            f"(bins {pw.fit_start}-{pw.fit_stop} of the overlap); both series filtered"
        )
    elif variant == "differenced":
        g, m = _difference(g), _difference(m)
        notes.append("first differences of both series")
    else:
        notes.append("raw series: the white-noise band understates the spread of r for autocorrelated series")

    ok = np.flatnonzero(np.isfinite(g) & np.isfinite(m))
    if ok.size == 0:
        raise NotEnoughDataError(f"no valid ({gas_name}, {magma_name}) pairs after the {variant} transform")
    g, m = g[ok[0] : ok[-1] + 1], m[ok[0] : ok[-1] + 1]  # drop bins lost to the filter at the ends
    return g, m, int(lo), int(hi), n, pw, notes


def cross_correlate(
    gas,
    magma,
    *,
    max_lag: int | str | pd.Timedelta = "60D",
    step: str | pd.Timedelta | None = None,
    variant: str = "prewhitened",
    normalisation: str = "pearson",
    n_surrogates: int = 1000,
    surrogate: str = "phase",
    seed: int | None = 0,
    n_boot: int = 500,
    block_length: int | None = None,
    ci_level: float = 0.95,
    max_ar_order: int = 10,
    gas_name: str = "gas",
    magma_name: str = "magma output",
) -> CrossCorrelationResult:
    """Cross-correlate gas flux with magma output over lags -max_lag..max_lag.

    Parameters
    ----------
    gas, magma : pandas Series on the same regular UTC grid (e.g. two columns of an AlignedTable),
        or 1-D arrays with ``step``. Gas flux in kg/s, magma output in m³/s or eruptive fraction
        (units do not affect r). NaN = missing bin.
    max_lag : largest lag, as a duration ("60D") or a number of bins.
    step : grid step; inferred from a DatetimeIndex.
    variant : "prewhitened" (AR(p) by AIC fitted to magma output, both filtered), "raw",
        "differenced".
    normalisation : "pearson" (pairwise complete), "biased", "adjusted" (statsmodels-compatible).
    n_surrogates : surrogates for the max-|r| test (0 disables it).
    surrogate : "phase" (Theiler et al. 1992) or "iaaft" (Schreiber & Schmitz 1996).
    seed : seed of the numpy Generator used for surrogates and bootstrap.
    n_boot : block-bootstrap replicates for the best-lag interval (0 disables it).
    block_length : bootstrap block length in bins; default max(5, round(n ** (1/3))).
    ci_level : level of the best-lag percentile interval.
    max_ar_order : largest AR order tried for prewhitening.

    Returns
    -------
    CrossCorrelationResult
    """
    if variant not in VARIANTS:
        raise DegasError(f"unknown variant {variant!r}; valid: {', '.join(VARIANTS)}")
    if normalisation not in NORMALISATIONS:
        raise DegasError(f"unknown normalisation {normalisation!r}; valid: {', '.join(NORMALISATIONS)}")
    if surrogate not in SURROGATE_METHODS:
        raise DegasError(f"unknown surrogate method {surrogate!r}; valid: {', '.join(SURROGATE_METHODS)}")
    g, m, idx, step_td = _pair(gas, magma, step)
    L = _lag_bins(max_lag, step_td)
    g, m, lo, hi, n, pw, notes = _prepare(g, m, L, variant, max_ar_order, gas_name, magma_name)
    basis = _LagBasis(m, L)
    gvalid = np.isfinite(g)
    if normalisation == "pearson":
        r_obs, N = _pearson_rows(g[None, :], gvalid, basis)
        r_obs, N = r_obs[0], N[0].astype("int64")
    else:
        if not (gvalid.all() and basis.complete):
            raise DegasError(f"normalisation {normalisation!r} needs complete series; use 'pearson' for gaps")
        r_obs = _fixed_norm_rows(g[None, :], basis, adjusted=normalisation == "adjusted")[0]
        N = (g.size - np.abs(np.arange(-L, L + 1))).astype("int64")
    if not np.isfinite(r_obs).any():
        raise NotEnoughDataError(f"fewer than {MIN_PAIRS} valid pairs at every lag")
    lags = np.arange(-L, L + 1)
    with np.errstate(divide="ignore"):
        band = 1.96 / np.sqrt(N.astype(float))
    j = int(np.nanargmax(np.abs(r_obs)))
    best = int(lags[j])
    peak = float(r_obs[j])
    if L > 0 and abs(best) == L:
        notes.append("best lag is at the edge of the search window; widen max_lag")

    rng = np.random.default_rng(seed)
    p = float("nan")
    if n_surrogates > 0:
        p, _, _, n_used = surrogate_test(g, m, L, n_surrogates=n_surrogates, method=surrogate, seed=rng,
                                         normalisation=normalisation)
        if n_used < g.size:
            notes.append(f"surrogate test on the first {n_used} of {g.size} bins (a fast FFT length)")

    if block_length is None:
        block_length = max(5, round(g.size ** (1 / 3)))
    ci = None
    if n_boot > 0:
        blags = np.empty(n_boot, dtype="int64")
        chunk = max(1, int(4_000_000 // g.size))
        done = 0
        while done < n_boot:
            c = min(chunk, n_boot - done)
            W = _bootstrap_weights(g.size, min(block_length, g.size), c, rng)
            rb, _ = _pearson_rows(np.broadcast_to(g, (c, g.size)), gvalid, basis, W=W)
            absr = np.where(np.isfinite(rb), np.abs(rb), -1.0)
            blags[done : done + c] = lags[np.argmax(absr, axis=1)]
            done += c
        a = (1 - ci_level) / 2
        ci = (int(np.quantile(blags, a, method="lower")) * step_td,
              int(np.quantile(blags, 1 - a, method="higher")) * step_td)
        spread = np.mean(np.abs(blags - best) > 0)
        if spread > 0.5:
            notes.append(
                f"the best lag is unstable under resampling ({spread:.0%} of bootstrap peaks elsewhere)"
            )

    if n_surrogates > 0 and not np.isnan(p) and p >= 0.05 and np.any(np.abs(r_obs) > band):
        notes.append(
            "some lags exceed the white-noise band but the surrogate test (max over lags) is not significant"
        )

    start = end = None
    if idx is not None:
        start, end = idx[lo], idx[hi - 1]
    return CrossCorrelationResult(
        gas_name=gas_name,
        magma_name=magma_name,
        variant=variant,
        normalisation=normalisation,
        lags=lags,
        step=step_td,
        r=r_obs,
        n_pairs=N,
        band=band,
        best_lag=best * step_td,
        best_lag_bins=best,
        peak_r=peak,
        p_value=p,
        n_surrogates=int(n_surrogates),
        surrogate_method=surrogate,
        seed=seed,
        lag_ci=ci,
        ci_level=ci_level,
        n_boot=int(n_boot),
        block_length=int(block_length),
        prewhitening=pw,
        start=start,
        end=end,
        n_bins=n,
        notes=tuple(notes),
    )

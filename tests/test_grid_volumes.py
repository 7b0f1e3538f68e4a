"""The regular grid and the volume helpers, against hand computations and published check values."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from degas.errors import DegasError
from degas.grid import contiguous_runs, eruptive_fraction, make_grid, resample
from degas.model import Chronology, SeriesMeta, make_series
from degas.volumes import dre_factor, mean_output_rate

DAY = pd.Timedelta("1D")


def test_mean_output_rate_reproduces_published_phase_rates():
    # Phase volumes and durations of a long-lived andesite dome eruption (Geol. Soc. London Memoirs 39, 2014,
    # Table 1.1, as listed in the shared reference sheet §6.2): V/Δt = 4.53 and 2.90 m³/s (derived there)
    t0 = pd.Timestamp("2000-01-01", tz="UTC")
    assert mean_output_rate(331e6, t0, t0 + 846 * DAY) == pytest.approx(4.53, abs=0.005)
    assert mean_output_rate(336e6, t0, t0 + 1339 * DAY) == pytest.approx(2.90, abs=0.005)
    with pytest.raises(DegasError):
        mean_output_rate(1.0, t0, t0)


def test_dre_factor_definitions_and_refusals():
    # V_DRE = V_bulk (1 - φ) and V_bulk ρ_bulk/ρ_DRE (shared reference sheet §6.3)
    assert dre_factor(vesicularity=0.3) == pytest.approx(0.7)
    assert dre_factor(bulk_density=1600, dense_density=2600) == pytest.approx(1600 / 2600)
    for kw in ({"vesicularity": 1.0}, {"bulk_density": 2700, "dense_density": 2600}, {}):
        with pytest.raises(DegasError):
            dre_factor(**kw)


def _series(times, values):
    return make_series(SeriesMeta("other", "counts", unit="1"), pd.to_datetime(times, utc=True), values)


def test_resample_sum_and_mean():
    s = _series(["2024-01-01 01:00", "2024-01-01 05:00", "2024-01-02 03:00"], [1.0, 2.0, 5.0])
    g = make_grid(pd.Timestamp("2024-01-01", tz="UTC"), pd.Timestamp("2024-01-03 23:00", tz="UTC"), "1D")
    summed = resample(s, grid=g, how="sum")
    assert summed["value"].tolist()[:2] == [3.0, 5.0] and np.isnan(summed["value"].iloc[2])
    assert summed["count"].tolist() == [2, 1, 0]
    mean = resample(s, grid=g, how="mean")
    assert mean["value"].iloc[0] == pytest.approx(1.5)
    with pytest.raises(DegasError, match="unknown aggregation"):
        resample(s, grid=g, how="median")


def test_eruptive_fraction_with_open_and_overlapping_phases():
    df = pd.DataFrame({"start": pd.to_datetime(["2024-01-01 12:00", "2024-01-02 00:00", "2024-01-03 06:00"], utc=True),
                       "end": pd.to_datetime(["2024-01-02 00:00", "2024-01-02 12:00", None], utc=True),
                       "state": pd.Series(["eruptive", "pause", "eruptive"], dtype="string"),
                       "style": pd.Series(["effusive", "unknown", "explosive"], dtype="string"),
                       "note": pd.Series([pd.NA] * 3, dtype="string")})
    ch = Chronology(df, SeriesMeta("chronology", "eruptive_state"))
    g = make_grid(pd.Timestamp("2024-01-01", tz="UTC"), pd.Timestamp("2024-01-04 12:00", tz="UTC"), "1D")
    ef = eruptive_fraction(ch, grid=g)
    # day 1: 12 h eruptive of 12 h known -> 1; day 2: 12 h pause known, no eruption -> 0, known 0.5;
    # day 3: open phase from 06:00 -> 18 h of 18 h known; day 4: open phase runs to the grid end
    assert ef["eruptive"].tolist() == pytest.approx([1.0, 0.0, 1.0, 1.0])
    assert ef["known"].tolist() == pytest.approx([0.5, 0.5, 0.75, 1.0])
    ef_now = eruptive_fraction(ch, grid=g, now=pd.Timestamp("2024-01-04 06:00", tz="UTC"))
    assert ef_now["known"].iloc[3] == pytest.approx(0.25)


def test_contiguous_runs_split_only_at_long_gaps():
    valid = np.array([1, 1, 0, 1, 0, 0, 0, 1, 1], dtype=bool)
    assert contiguous_runs(valid, 0) == [(0, 2), (3, 4), (7, 9)]
    assert contiguous_runs(valid, 1) == [(0, 4), (7, 9)]
    assert contiguous_runs(valid, 3) == [(0, 9)]
    assert contiguous_runs(np.zeros(3, dtype=bool)) == []


def test_robust_z_scale_matches_scipy():
    from scipy.stats import median_abs_deviation

    from degas.analysis.robust import MAD_TO_SD

    x = np.random.default_rng(0).normal(size=1001)
    # 1.4826 ≈ 1/Φ⁻¹(3/4), the normal-consistency constant that scipy applies with scale="normal"
    assert MAD_TO_SD * median_abs_deviation(x) == pytest.approx(median_abs_deviation(x, scale="normal"),
                                                                   rel=1e-4)


def _eruptive_fraction_loop(df, g0, w, n, stop):
    """The per-bin loop that eruptive_fraction used before it was vectorised (the reference)."""
    erupt, known = np.zeros(n), np.zeros(n)
    for s, e, state in zip(df["start"], df["end"], df["state"], strict=True):
        s_ns, e_ns = s.value, stop if pd.isna(e) else e.value
        if state == "unknown" or e_ns <= s_ns:
            continue
        for b in range(max((s_ns - g0) // w, 0), min((e_ns - 1 - g0) // w, n - 1) + 1):
            lo, hi = max(s_ns, g0 + b * w), min(e_ns, g0 + (b + 1) * w)
            if hi > lo:
                known[b] += (hi - lo) / w
                if state == "eruptive":
                    erupt[b] += (hi - lo) / w
    known = np.minimum(known, 1.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(known > 0, np.minimum(erupt, known) / known, np.nan), known


@pytest.mark.parametrize("seed", [0, 1])
def test_vectorised_eruptive_fraction_equals_the_loop_on_a_long_chronology(seed):
    rng = np.random.default_rng(seed)
    k = 527
    origin = pd.Timestamp("1800-01-01", tz="UTC")
    starts = origin + pd.to_timedelta(np.sort(rng.integers(0, 200 * 365 * 86400, size=k)), unit="s")
    lengths = pd.to_timedelta(rng.exponential(60 * 86400, size=k).astype("int64"), unit="s")
    ends = pd.Series(starts + lengths)
    ends[rng.random(k) < 0.01] = pd.NaT  # open phases, overlaps and zero-length rows included
    df = pd.DataFrame({"start": starts, "end": ends,
                       "state": pd.Series(rng.choice(["eruptive", "pause", "unknown"], size=k), dtype="string"),
                       "style": pd.Series(["unknown"] * k, dtype="string"),
                       "note": pd.Series([pd.NA] * k, dtype="string")})
    ch = Chronology(df, SeriesMeta("chronology", "eruptive_state"))
    for step in ("1D", "7h"):
        g = make_grid(origin - pd.Timedelta("3D"), starts[-1] + pd.Timedelta("400D"), step)
        ef = eruptive_fraction(ch, grid=g)
        end = g.origin.value + g.n * g.step.value
        frac, known = _eruptive_fraction_loop(df, g.origin.value, g.step.value, g.n, end)
        np.testing.assert_allclose(ef["known"].to_numpy(), known, rtol=0, atol=1e-9)
        np.testing.assert_array_equal(np.isnan(ef["eruptive"].to_numpy()), np.isnan(frac))
        np.testing.assert_allclose(ef["eruptive"].to_numpy(), frac, rtol=0, atol=1e-9, equal_nan=True)

"""Regime labels from gas and magma-output segment tables."""

import numpy as np
import pandas as pd
import pytest

from degas.analysis.regimes import LABELS, classify_regimes
from degas.errors import DegasError, NotEnoughDataError

T_D = 86.4  # kg/s -> t/d (exact, BIPM SI Brochure)


def _seg(edges, levels):
    t = pd.to_datetime(edges, utc=True)
    return pd.DataFrame({"start": t[:-1], "end": t[1:], "level": levels})


def _scenario():
    # invented: quiet (100 t/d, no output) -> coupled (1100 t/d, 2 m3/s) -> sealing (150 t/d, 2 m3/s)
    # -> decoupled degassing (900 t/d, no output)
    edges = ["2034-01-01", "2034-02-01", "2034-04-01", "2034-05-01", "2034-06-15"]
    gas = _seg(edges, np.array([100, 1100, 150, 900]) / T_D)
    magma = _seg(["2034-01-01", "2034-01-31", "2034-04-01", "2034-05-02", "2034-06-15"], [0.0, 2.0, 2.0, 0.01])
    return gas, magma


def test_four_labels_with_evidence():
    gas, magma = _scenario()
    res = classify_regimes(gas, magma, expected_ratio=1000 / T_D / 2.0)
    f = res.intervals
    assert set(f.label) <= set(LABELS)
    # the 1-day pieces where the two segmentations disagree (31 Jan, 1 May) are labelled too
    assert f.label.tolist() == ["quiet", "magma_only", "coupled", "magma_only", "coupled", "gas_only"]
    assert any("shorter than 3 days" in n for n in res.notes)
    coupled = f[f.label == "coupled"].iloc[0]
    assert coupled.start == pd.Timestamp("2034-02-01", tz="UTC")
    assert coupled.ratio_vs_expected == pytest.approx(1.0)
    assert coupled.gas_t_d == pytest.approx(1100)
    assert "11.0× baseline" in coupled.evidence and "(active)" in coupled.evidence
    sealing = f.iloc[3]
    # excess gas over the baseline per magma output, against the expected ratio, by hand:
    # ((150 - 100) t/d / 86.4) / 2 m³/s = 0.2894 kg/m³ vs 1000 / 86.4 / 2 = 5.787 kg/m³ -> 0.05
    assert sealing.label == "magma_only" and sealing.gas_t_d == pytest.approx(150)
    assert sealing.ratio_vs_expected == pytest.approx(((150 - 100) / T_D / 2.0) / (1000 / T_D / 2.0))
    assert res.gas_baseline_kg_s == pytest.approx(100 / T_D)
    assert any("lowest gas segment" in n for n in res.notes)
    d = res.durations()
    assert d["coupled"] == pytest.approx(59 + 1)


def test_gas_rich_output_is_decoupled_and_poor_is_magma_only():
    edges = ["2034-01-01", "2034-02-01", "2034-03-01", "2034-04-01"]
    gas = _seg(edges, np.array([100, 5000, 300]) / T_D)
    magma = _seg(edges, [1.0, 1.0, 1.0])
    res = classify_regimes(gas, magma, expected_ratio=1000 / T_D, gas_baseline=100 / T_D, merge=False)
    # excess 4900 t/d per m3/s = 4.9x expected -> gas_only; 200 t/d = 0.2x -> magma_only
    assert res.intervals.label.tolist() == ["magma_only", "gas_only", "magma_only"]


def test_default_expected_ratio_and_eruptive_fraction():
    edges = ["2034-01-01", "2034-02-01", "2034-03-01"]
    gas = _seg(edges, np.array([100, 800]) / T_D)
    frac = _seg(edges, [0.0, 1.0])
    res = classify_regimes(gas, frac, magma_measure="eruptive_fraction")
    assert res.intervals.label.tolist() == ["quiet", "coupled"]
    assert res.magma_threshold == 0.5
    assert any("duration-weighted median" in n for n in res.notes)


def test_bad_input():
    gas, magma = _scenario()
    with pytest.raises(DegasError, match="lack columns"):
        classify_regimes(gas.drop(columns="level"), magma)
    with pytest.raises(DegasError, match="valid: extrusion_rate, eruptive_fraction"):
        classify_regimes(gas, magma, magma_measure="volume")
    late = magma.assign(start=magma.start + pd.Timedelta("3000D"), end=magma.end + pd.Timedelta("3000D"))
    with pytest.raises(NotEnoughDataError, match="do not overlap"):
        classify_regimes(gas, late)


def test_demo_regimes_recovered_from_change_point_segments():
    # Known truth: the demo's regime labels (coupled, gas_only = decoupled degassing, magma_only =
    # sealing, quiet). Segments come from the project's change-point module on the true daily series.
    demo = pytest.importorskip("degas.demo")
    cp = pytest.importorskip("degas.analysis.changepoints")
    from degas.analysis.regimes import segments_table

    sc = demo.generate_scenario()
    idx = sc.days
    gas = cp.detect_changepoints(pd.DataFrame({"so2": sc.so2_kg_s}, index=idx))
    q = cp.detect_changepoints(pd.DataFrame({"q": sc.extrusion_m3_s}, index=idx))
    res = classify_regimes(segments_table(gas), segments_table(q, "q"))
    f = res.intervals
    day = pd.Timedelta("1D")
    for truth in sc.truth["regimes"]:
        s = pd.Timestamp(truth["start"], tz="UTC")
        e = pd.Timestamp(truth["end"], tz="UTC") if truth["end"] else idx[-1] + day
        if e - s < pd.Timedelta("7D"):
            continue  # the one-day explosive event is shorter than any change-point segment
        overlap = (np.minimum(f.end, e) - np.maximum(f.start, s)).clip(lower=pd.Timedelta(0))
        share = overlap.groupby(f.label).sum() / (e - s)
        assert share.idxmax() == truth["regime"], (truth, share)
        assert share.max() >= 0.85
    sealing = f[f.label == "magma_only"].iloc[0]
    assert sealing.ratio_vs_expected < 0.3


def test_relation_regimes_with_a_given_background():
    # invented record (tests/analysis/scenario_bank.py): 120-day pause in output with sustained degassing
    from degas.analysis.regimes import classify_from_relation
    from tests.analysis.scenario_bank import make_record

    rec = make_record("pause_sustained_degassing", 0)
    g0 = rec["truth"]["g0_t_d"] / T_D
    res = classify_from_relation(rec["gas"], rec["magma"], gas_background=g0, n_boot=100)
    assert res.relation.background_given and res.relation.g0_kg_s == g0 and res.gas_baseline_kg_s == g0
    mid = res.intervals[(res.intervals["start"] <= pd.Timestamp("2040-07-01", tz="UTC"))
                        & (res.intervals["end"] > pd.Timestamp("2040-07-01", tz="UTC"))]
    assert mid["label"].iloc[0] == "gas_only"
    # levels are the data's own means over each regime
    sel = (rec["gas"].index >= mid["start"].iloc[0]) & (rec["gas"].index < mid["end"].iloc[0])
    assert mid["gas_t_d"].iloc[0] == pytest.approx(rec["gas"][sel].mean() * T_D)
    with pytest.raises(DegasError, match="band"):
        classify_from_relation(rec["gas"], rec["magma"], band=1.5)

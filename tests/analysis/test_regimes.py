"""Regime labels from the fitted gas–output relation, and the change-point segment adapter."""

import numpy as np
import pandas as pd
import pytest

from degas.analysis.regimes import segments_table
from degas.errors import DegasError

T_D = 86.4  # kg/s -> t/d (exact, BIPM SI Brochure)


def test_segments_table_picks_one_series_of_a_change_point_result():
    # the CLI's --segments changepoints path: start/end/level of one series from degas.analysis.changepoints
    cp = pytest.importorskip("degas.analysis.changepoints")
    idx = pd.date_range("2034-01-01", periods=120, freq="D", tz="UTC")
    rng = np.random.default_rng(0)
    x = np.where(np.arange(120) < 60, 1.0, 5.0) + rng.normal(0, 0.1, 120)
    res = cp.detect_changepoints(pd.DataFrame({"so2": x, "q": x[::-1]}, index=idx))
    seg = segments_table(res, "so2")
    assert list(seg.columns) == ["start", "end", "level"] and len(seg) == 2
    assert seg["level"].iloc[0] == pytest.approx(1.0, abs=0.1) and seg["level"].iloc[1] == pytest.approx(5.0, abs=0.1)
    with pytest.raises(DegasError, match="several series; pick one of: so2, q"):
        segments_table(res)
    with pytest.raises(DegasError, match="no series 'co2'"):
        segments_table(res, "co2")


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

"""Seismicity on the invented demo catalogue (demo_series/, synthetic; truth in truth.json).

The sealing episode (2024-12-16 to the explosion on 2025-03-10) is an exponential acceleration of
the LP + hybrid rate from ~2/day to ~30/day while SO2 falls; these tests check that the seismicity
module shows it and that the project's change-point module finds it from ``event_rate_series``.
"""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
import pytest

from degas.analysis import seismicity as sz

DEMO = Path(__file__).resolve().parents[2] / "demo_series"
pytestmark = pytest.mark.skipif(not (DEMO / "truth.json").exists(), reason="demo_series/ not present")


@pytest.fixture(scope="module")
def truth() -> dict:
    return json.loads((DEMO / "truth.json").read_text())


@pytest.fixture(scope="module")
def local_catalogue():
    from degas.io import read
    from degas.io.mapping import load_toml, options_from_dict

    entry = next(dict(e) for e in load_toml(DEMO / "demo_ingest.toml")["file"]
                 if e["path"] == "seismic_observatory_local.csv")
    path = DEMO / entry.pop("path")
    return read(path, options_from_dict(entry)).records[0]


def _sealing(truth):
    onset = pd.Timestamp(truth["change_dates"]["lp_hybrid_rate"][0], tz="UTC")
    explosion = pd.Timestamp(truth["change_dates"]["lp_hybrid_rate"][1])
    return onset, explosion


def test_demo_lp_hybrid_rates_rise_during_sealing(local_catalogue, truth):
    onset, explosion = _sealing(truth)
    rates = sz.event_rates(local_catalogue, "1D")
    lp = rates.counts["LP"] + rates.counts["hybrid"]
    before = lp[(lp.index >= onset - pd.Timedelta("90D")) & (lp.index < onset)].mean()
    last_month = lp[(lp.index >= explosion - pd.Timedelta("30D")) & (lp.index < explosion.floor("D"))].mean()
    after = lp[(lp.index > explosion) & (lp.index < explosion + pd.Timedelta("30D"))].mean()
    background = truth["seismicity"]["lp_hybrid_rate_per_day"]["background"]
    assert before == pytest.approx(background, rel=0.35)
    assert last_month > 5 * before  # accelerating towards ~30/day
    assert after < 0.5 * last_month  # the swarm stops with the explosion
    vt = rates.counts["VT"]
    vt_before = vt[(vt.index >= onset - pd.Timedelta("90D")) & (vt.index < onset)].mean()
    vt_during = vt[(vt.index >= onset) & (vt.index < explosion.floor("D"))].mean()
    assert vt_during < 1.6 * vt_before  # VT does not share the swarm


def test_demo_change_point_of_the_lp_hybrid_rate(local_catalogue, truth):
    cp = pytest.importorskip("degas.analysis.changepoints")
    onset, explosion = _sealing(truth)
    ts = sz.event_rate_series(local_catalogue, "1D")
    res = cp.detect_changepoints(ts)  # count model (Anscombe transform) chosen from quantity/unit
    times = pd.DatetimeIndex(res.change_times)
    assert len(times) >= 2
    first_after = times[times >= onset - pd.Timedelta("7D")][0]
    # the swarm steps from ~2/day to ~6/day at the onset: the change point falls in the onset week
    assert abs(first_after - onset) < pd.Timedelta("7D")
    row = res.changes.loc[res.changes["time"] == first_after].iloc[0]
    assert row["level_after"] > 1.5 * row["level_before"]
    # the end of the swarm: the first whole day after the explosion
    assert any(abs(t - explosion) <= pd.Timedelta("1D") for t in times)
    # no change point in the quiet first four months
    assert not any(t < pd.Timestamp("2023-05-01", tz="UTC") for t in times)


def test_demo_b_values_and_completeness(local_catalogue, truth):
    seis = truth["seismicity"]
    vt = sz.estimate_b_value(local_catalogue, classes=("VT",))
    # MAXC + 0.2 (Wiemer & Wyss 2000; Woessner & Wiemer 2005) vs the generator's completeness
    assert vt.mc == pytest.approx(seis["completeness_magnitude_local"], abs=0.1 + 1e-9)
    # Aki (1965) / Utsu (1966) b within two Shi & Bolt (1982) sigmas of the generator's b
    assert abs(vt.b - seis["b_values"]["VT"]) < 2 * vt.sigma
    onset, explosion = _sealing(truth)
    t = local_catalogue.data["time"]
    sealing = local_catalogue.with_data(local_catalogue.data[(t >= onset) & (t < explosion)].reset_index(drop=True))
    lp = sz.estimate_b_value(sealing, classes=("LP", "hybrid"))
    assert abs(lp.b - seis["b_values"]["LP_hybrid_sealing"]) < 2 * lp.sigma
    assert any("no magnitude" in n for n in vt.notes)
    energy = sz.seismic_energy(local_catalogue, "7D")
    assert any("Md" in n and "no seismic moment" in n for n in energy.notes)

"""Counts by event class run through the whole chain in place of a catalogue (no fake events)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from degas.io.counts import counts_quantity
from degas.model import SeriesMeta, make_series
from degas.store import Archive

DAYS = pd.date_range("2023-01-01", periods=160, freq="D", tz="UTC")
ONSET = 100  # LP + hybrid rate rises from 2 to 12 per day on this day


@pytest.fixture(scope="module")
def archive(tmp_path_factory):
    rng = np.random.default_rng(11)
    root = tmp_path_factory.mktemp("counts") / "arc"
    a = Archive.create(root)
    so2 = 10 + rng.normal(0, 0.5, len(DAYS))
    so2[ONSET:] -= 4
    a.add(make_series(SeriesMeta("gas_flux", "so2_flux", "OBS-N", "SO2", "kg/s", "t/d"), DAYS, so2))
    q = np.where(np.arange(len(DAYS)) < 60, 1.0, 3.0) + rng.normal(0, 0.1, len(DAYS))
    a.add(make_series(SeriesMeta("extrusion_rate", "extrusion_rate", "CAM", None, "m^3/s", "m³/s", "dre"),
                      DAYS, q))
    lam = np.where(np.arange(len(DAYS)) < ONSET, 1.0, 6.0)
    for cls, scale in (("LP", 1.0), ("hybrid", 1.0), ("VT", 0.5)):
        v = rng.poisson(lam * scale).astype(float)
        v[[20, 21, 130]] = np.nan  # not counted those days
        meta = SeriesMeta("event_counts", counts_quantity(cls), "OBS-S", unit="count", display_unit="count")
        a.add(make_series(meta, DAYS, v, end=DAYS + pd.Timedelta("1D")))
    return a


def test_counts_stand_in_for_the_catalogue(archive):
    from degas.classcounts import ClassCounts
    from degas.pipeline import choose_roles, run_all
    from degas.project import Project

    roles = choose_roles(archive, Project())
    assert roles["catalog"] is None and len(roles["counts"]) == 3
    b = run_all(archive, Project(), mode="retrospective")
    assert isinstance(b.records["catalog"], ClassCounts)
    lp = b.aligned_full.frame["catalog_LP"]
    assert np.isnan(lp.iloc[20]) and np.isnan(lp.iloc[130])  # not counted stays missing
    cp = b.changepoints["lp_hybrid_rate"]
    found = list(cp.change_times)
    assert any(abs((t - DAYS[ONSET]).days) <= 3 for t in found), found
    rates = b.seismic["rates"]
    assert rates.counts["LP"].iloc[:5].notna().all() and np.isnan(rates.counts["LP"].iloc[20])
    assert any("no magnitudes" in s for s in b.skipped)
    assert "energy" not in b.seismic and "b_value" not in b.seismic


def test_report_renders_with_counts(archive, tmp_path):
    from degas.pipeline import run_all
    from degas.project import Project
    from degas.report import write_report

    b = run_all(archive, Project(), mode="retrospective")
    path = write_report(b, tmp_path)
    html = path.read_text(encoding="utf-8")
    assert "counts by event class" in html


def test_weekly_review_with_counts(archive):
    from degas.pipeline import run_all
    from degas.project import Project

    b = run_all(archive, Project(), mode="weekly")
    rates = {r.event_class: r for r in b.review_events}
    assert {"LP", "hybrid", "VT", "total"} <= set(rates)
    # the window lies after the onset: LP rate up (about 6/d against a baseline that straddles the onset)
    assert rates["LP"].rate_window_per_day > rates["LP"].rate_baseline_per_day

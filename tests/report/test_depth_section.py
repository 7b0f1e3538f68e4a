"""The report section "Storage depth and gas source" on the demo run, checked against the demo's truth."""

from __future__ import annotations

import re

import pytest


def test_demo_run_recovers_the_two_storage_levels(demo_bundle, demo_truth):
    ctx = demo_bundle.depths
    assert ctx is not None and ctx.series_id.startswith("melt_inclusions")
    truth = demo_truth["melt_inclusions"]["levels"]
    ph = ctx.storage.phases.set_index("phase")
    # phase 1 tapped only the shallow level; phase 2 the shallow and the deep one (truth.json)
    assert ph.loc["phase 1", "depth_p50_m"] == pytest.approx(truth["shallow"]["depth_bsl_m"], abs=400)
    assert ph.loc["phase 2", "depth_p95_m"] > truth["deep"]["depth_bsl_m"] - 500
    assert ph.loc["phase 2", "depth_p5_m"] < truth["shallow"]["depth_bsl_m"] + 500
    cmp = ctx.comparison.table.set_index("phase")
    assert cmp.loc["phase 1", "overlap_share"] == 1.0  # the demo's VT cloud (3 km median) holds the shallow level
    assert cmp.loc["phase 2", "overlap_share"] < 0.8
    # the budget used the inclusion S draws, whose sample means are the suggested defaults
    assert ctx.sulfur.s_mi_ppm == pytest.approx(1500.0, abs=1) and ctx.sulfur.s_mg_ppm == pytest.approx(200.0, abs=1)
    assert any("petrological SO2 from the inclusions" in n for n in demo_bundle.notes)


def test_report_has_the_section_with_numbers_and_cautions(demo_report):
    path, _ = demo_report
    html = path.read_text(encoding="utf-8")
    assert '<section id="depths"><h2>Storage depth and gas source</h2>' in html
    assert 'id="fig-isobars"' in html and 'id="fig-storage-depth-time"' in html
    assert re.search(r"Inclusions from phase 1 \(16\) record \d+–\d+ MPa", html)
    assert "below sea level" in html and "minimum entrapment pressures" in html and "shrinkage bubbles" in html
    assert "Devine et al. 1984" in html
    # the "share of inclusions inside the VT 5-95 % range" (central depths) beside the interval overlap
    assert "inside share" in html and re.search(r"\d+% of their median depths lie inside it", html)

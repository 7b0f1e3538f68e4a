"""Recovery of the invented demo scenario's true change dates (degas.demo, default seed).

The truth is the generator's own (``truth["change_dates"]``); the one-day explosive episode
(2025-03-10 → 2025-03-11) is shorter than the 3-day minimum segment, so its two dates count as
one change. Stated margin: ±14 days for joint detection (SO2 flux + extrusion rate); ±1 day for
the extrusion rate alone. Invented data is not the sole proof here: see test_fastpath.py
(exactness against optimal partitioning and ruptures) and bench_tcpd.py (human annotations).
"""

from __future__ import annotations

import pandas as pd
import pytest

demo = pytest.importorskip("degas.demo")

from degas.analysis.changepoints import detect_changepoints  # noqa: E402
from degas.analysis.scoring import precision_recall  # noqa: E402
from degas.model import SeriesMeta, make_series  # noqa: E402


@pytest.fixture(scope="module")
def scenario():
    sc = demo.generate_scenario()
    so2 = make_series(SeriesMeta(kind="gas_flux", quantity="so2_flux", species="SO2", unit="kg/s"),
                      sc.days, sc.so2_kg_s)
    ex = make_series(SeriesMeta(kind="extrusion_rate", quantity="extrusion_rate", unit="m^3/s"),
                     sc.days, sc.extrusion_m3_s)
    truth = sorted({pd.Timestamp(d, tz="UTC") for d in sc.truth["change_dates"]["so2_flux"]})
    truth = [t for i, t in enumerate(truth) if i == 0 or t - truth[i - 1] > pd.Timedelta("3D")]
    return so2, ex, truth


def test_joint_detection_recovers_every_demo_change_within_14_days(scenario):
    so2, ex, truth = scenario
    assert len(truth) == 5
    r = detect_changepoints([so2, ex])
    p, rec, _ = precision_recall(truth, list(r.change_times), "14D")
    assert (p, rec) == (1.0, 1.0)
    # four of the five within one day; the sealing onset is gradual in SO2 (falls over weeks)
    assert precision_recall(truth, list(r.change_times), "1D")[2] >= 4


def test_extrusion_rate_alone_recovers_its_steps_within_one_day(scenario):
    _, ex, truth = scenario
    r = detect_changepoints(ex)
    p, rec, tp = precision_recall(truth, list(r.change_times), "1D")
    assert p == 1.0 and tp >= 4  # the 2 → 1.5 m³/s step at the sealing onset is not found alone


def test_so2_alone_finds_the_large_steps_without_false_alarms(scenario):
    so2, _, truth = scenario
    r = detect_changepoints(so2)
    p, rec, tp = precision_recall(truth, list(r.change_times), "14D")
    assert p == 1.0 and tp >= 3  # the ~25 % steps at phase boundaries hide in week-long pulses

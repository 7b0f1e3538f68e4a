"""b-value and Mc by event class: VT by default, rockfalls never, LP + hybrid separately (issue 13).

The check values are computed by hand from the Aki (1965) maximum-likelihood estimator with the Utsu
(1966) half-bin correction, b = log10(e) / (mean(M) - (Mc - ΔM/2)) (REFERENCES.md §3.2), on the VT
magnitudes alone; a rockfall swarm of many small events sits in the same catalogue.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from degas.analysis import seismicity as sz
from degas.cli import app
from tests.analysis.test_seismicity import make_catalog


def _swarm_catalog(seed: int = 3):
    rng = np.random.default_rng(seed)
    n_vt, n_lp, n_rf = 400, 300, 1500
    # VT: Gutenberg-Richter with b = 1 above 1.0 (exponential, beta = b ln 10), binned to 0.1
    vt = np.round(0.95 + rng.exponential(1 / math.log(10), n_vt), 1)
    lp = np.round(0.55 + rng.exponential(1 / (1.8 * math.log(10)), n_lp), 1)
    rf = np.round(rng.normal(0.8, 0.15, n_rf), 1)  # rockfall swarm: many small, narrow-range "magnitudes"
    mags = np.r_[vt, lp, rf]
    classes = ["VT"] * n_vt + ["LP"] * (n_lp // 2) + ["hybrid"] * (n_lp - n_lp // 2) + ["rockfall"] * n_rf
    times = pd.Timestamp("2031-01-01", tz="UTC") + pd.to_timedelta(rng.uniform(0, 60, mags.size), unit="D")
    return make_catalog(times, mags, classes), vt, lp, rf


def _aki_utsu(m: np.ndarray, mc: float, dm: float = 0.1) -> float:
    above = m[m >= mc - 1e-9]
    return math.log10(math.e) / (above.mean() - (mc - dm / 2))  # Aki 1965, Utsu 1966


def test_b_value_defaults_to_vt_and_ignores_the_rockfall_swarm():
    cat, vt, lp, rf = _swarm_catalog()
    cls, notes = sz.b_value_classes(cat)
    assert cls == ("VT",)
    res = sz.estimate_b_value(cat, mc=1.0, classes=cls)
    assert res.n == int((vt >= 1.0 - 1e-9).sum())
    assert res.b == pytest.approx(_aki_utsu(vt, 1.0), rel=1e-12)
    assert 0.85 < res.b < 1.15  # the planted b = 1, within sampling error of 400 events (Shi & Bolt 1982)
    mixed = sz.estimate_b_value(cat, mc=1.0)  # every class: the swarm and the LPs bias it
    assert abs(mixed.b - res.b) > 0.1
    # Mc is estimated on VT alone too (maximum curvature + 0.2, Woessner & Wiemer 2005)
    est = sz.estimate_b_value(cat, classes=cls)
    assert est.mc == pytest.approx(sz.estimate_completeness(vt).mc)


def test_rockfall_never_enters_even_when_asked_and_lp_hybrid_is_separate():
    cat, vt, lp, rf = _swarm_catalog()
    cls, notes = sz.b_value_classes(cat, ("LP", "hybrid", "rockfall"))
    assert cls == ("LP", "hybrid")
    assert any("rockfall" in n for n in notes)
    res = sz.estimate_b_value(cat, mc=0.6, classes=cls)
    assert res.b == pytest.approx(_aki_utsu(lp, 0.6), rel=1e-12)
    with pytest.raises(sz.DegasError, match="rockfall"):
        sz.b_value_classes(cat, ("rockfall",))


def test_quakes_classes_filter_b_totals_and_energy(tmp_path):
    cat, vt, lp, rf = _swarm_catalog()
    path = tmp_path / "cat.csv"
    d = cat.data
    pd.DataFrame({"time": d["time"].dt.strftime("%Y-%m-%dT%H:%M:%S.%fZ"), "latitude": d["latitude_deg"],
                  "longitude": d["longitude_deg"], "depth_km": d["depth_m"] / 1000, "magnitude": d["magnitude"],
                  "magnitude_type": d["magnitude_type"], "type": d["event_class"]}).to_csv(path, index=False)
    out = tmp_path / "q.json"
    r = CliRunner().invoke(app, ["quakes", str(path), "--classes", "LP,hybrid", "--mc", "0.6", "--json", str(out)])
    assert r.exit_code == 0, r.output
    js = json.loads(out.read_text())
    assert js["counts"]["total"] == lp.size  # the totals row counts only the chosen classes
    assert js["events"] == lp.size
    assert js["b_value_classes"] == ["LP", "hybrid"]
    assert js["b_value"]["b"] == pytest.approx(_aki_utsu(lp, 0.6), rel=1e-9)
    # energy: log10 E = 1.5 M + 4.8 (Gutenberg & Richter 1956) summed over the LP + hybrid events only
    assert js["energy_j"] == pytest.approx(float(np.sum(10 ** (1.5 * lp + 4.8))), rel=1e-9)
    r2 = CliRunner().invoke(app, ["quakes", str(path), "--mc", "1.0", "--json", str(out)])
    assert r2.exit_code == 0, r2.output
    js = json.loads(out.read_text())
    assert js["b_value_classes"] == ["VT"]
    assert js["b_value"]["b"] == pytest.approx(_aki_utsu(vt, 1.0), rel=1e-9)

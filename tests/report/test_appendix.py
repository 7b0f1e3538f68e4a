"""The print-ready appendix, the station table, the location figures' geometry, and the static export."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from degas.report.appendix import display_tables, stations_table
from degas.report.seismic_figures import offsets_km


def test_offsets_km_against_the_mean_earth_radius():
    # 1° of latitude = 2πR/360 with the IUGG mean radius R = 6371.0088 km (Moritz 2000): 111.195 km
    x, y = offsets_km([1.0], [0.0], 0.0, 0.0)
    assert y[0] == pytest.approx(111.195, abs=1e-3) and x[0] == pytest.approx(0.0)
    # 1° of longitude at 60° is half that (cos 60° = 0.5)
    x, y = offsets_km([60.0], [1.0], 60.0, 0.0)
    assert x[0] == pytest.approx(111.195 / 2, abs=1e-3)
    x, _ = offsets_km([0.0], [-179.5], 0.0, 179.5)  # across the antimeridian: 1°, not 359°
    assert x[0] == pytest.approx(111.195, abs=1e-3)


def test_print_tables_are_in_display_units_and_narrow(demo_bundle):
    tabs = display_tables(demo_bundle)
    assert {"print_budget", "print_regimes", "print_weekly_review", "print_stations"} <= set(tabs)
    for name, df in tabs.items():
        assert df.shape[1] <= 10, (name, list(df.columns))
    bud = tabs["print_budget"]
    o = demo_bundle.budget.overall
    assert bud["SO2 kt"].iloc[-1] == f"{o['so2_mass_kg'] / 1e6:,.0f}"  # kg -> kt
    assert bud["last day"].iloc[-1] == (o["end"] - pd.Timedelta(1, "ns")).strftime("%Y-%m-%d")  # inclusive


def test_volume_comparison_in_the_demo_run(demo_bundle):
    v = demo_bundle.volumes
    assert v is not None and v.survey_m3 > 0 and 0 < v.rate_coverage <= 1
    assert v.difference_m3 == pytest.approx(v.rate_m3 - v.survey_m3)


def test_station_table_from_archive_metadata(demo_bundle):
    st = stations_table(demo_bundle)
    assert {"VLM-N", "VLM-S", "VLM-CAM"} <= set(st["station / id"])
    assert st["first datum"].notna().all()


def test_appendix_writes_aligned_daily_csv_and_static_figures(demo_report):
    _, app = demo_report
    daily = pd.read_csv(app / "aligned_daily.csv")
    assert "gas_t_d" in daily and any(c.endswith("coverage") for c in daily.columns)
    assert np.allclose(daily["gas_t_d"], daily["gas"] * 86.4, equal_nan=True)  # 1 kg/s = 86.4 t/d
    assert not (app / "static").exists()  # the fixture skips the export; the CLI test checks it


def test_without_a_browser_one_line_says_what_to_install(monkeypatch, tmp_path):
    from degas.report import appendix as A

    monkeypatch.setattr(A, "find_browser", lambda: None)
    paths, problem = A.write_static_figures({}, tmp_path)
    assert paths == [] and "apt-get install chromium" in problem and "[static]" in problem
    assert "\n" not in problem


def test_location_figures_draw_a_bounded_number_of_points(demo_bundle, monkeypatch):
    from degas.report import seismic_figures as SF

    monkeypatch.setattr(SF, "MAX_POINTS", 100)
    figs = SF.location_figures(demo_bundle)
    assert {f[0] for f in figs} == {"fig-depth-time", "fig-epicentres"}
    for _fid, fig, cap in figs:
        assert sum(len(t.x) for t in fig.data if t.name != "vent") <= 100
        assert "random subset" in cap

"""Absurd values (issue 10): time-axis outliers and impossible magnitudes are rejected at ingest with a
stated rule; the grid refuses spans it cannot represent; the segmenter refuses values it cannot sum; a step
of the run that fails inside a library records why."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from degas.errors import DegasError
from degas.grid import MAX_BINS, make_grid
from degas.io import read
from degas.io.sanity import PHYSICAL_BOUNDS
from degas.model import SeriesMeta, make_series

HEAD = "time,SO2 flux (t/d)\n"


def _rows(dates, values) -> str:
    return HEAD + "".join(f"{d},{v}\n" for d, v in zip(dates, values, strict=True))


def test_a_mistyped_year_is_rejected_as_a_time_axis_outlier_with_its_line(write):
    dates = [f"2023-05-0{i}T00:00Z" for i in range(1, 8)]
    dates[3] = "1723-05-04T00:00Z"
    res = read(write("f.csv", _rows(dates, [100] * 7)))
    assert len(res.records[0]) == 6
    (row,) = res.rejects.itertuples(index=False)
    assert row.line == 5 and "outlier of the time axis" in row.reason and "300 years" in row.reason
    assert res.records[0].provenance[0].rows_rejected == 1


def test_a_genuine_restart_after_a_long_gap_is_kept(write):
    t1 = pd.date_range("2015-01-01", periods=400, freq="D", tz="UTC")
    t2 = pd.date_range("2021-01-01", periods=30, freq="D", tz="UTC")
    dates = [x.isoformat() for x in t1.append(t2)]
    res = read(write("f.csv", _rows(dates, [100] * len(dates))))
    assert len(res.records[0]) == 430 and len(res.rejects) == 0


def test_two_rows_are_not_judged(write):
    res = read(write("f.csv", _rows(["1723-01-01T00:00Z", "2023-01-01T00:00Z"], [1, 2])))
    assert len(res.records[0]) == 2


@pytest.mark.parametrize("value,kept", [("1e154", False), ("2e8", False), ("5e7", True), ("inf", False)])
def test_gas_flux_above_its_physical_bound_is_rejected(write, value, kept):
    dates = [f"2023-05-0{i}T00:00Z" for i in range(1, 5)]
    res = read(write("f.csv", _rows(dates, [100, value, 100, 100])))
    assert (len(res.records[0]) == 4) is kept
    if not kept:
        assert res.rejects["line"].tolist() == [3]


def test_every_kind_states_a_bound_and_its_basis():
    for kind in ("gas_flux", "gas_ratio", "extrusion_rate", "erupted_volume", "amplitude", "other"):
        bound, text, basis = PHYSICAL_BOUNDS[kind]
        assert np.isfinite(bound) and bound > 0 and text and basis
    # 1e8 t/d in kg/s: t/d = 1000 kg / 86400 s (BIPM SI Brochure 2019)
    assert PHYSICAL_BOUNDS["gas_flux"][0] == pytest.approx(1e8 * 1000 / 86400)


def test_catalogue_magnitudes_beyond_any_earthquake_are_rejected(write):
    head = "origin time (UTC),type,Md,depth (km),lat,lon\n"
    res = read(write("c.csv", head + "2024-01-01 00:10,VT,1.2,3,1.2,102\n2024-01-01 00:20,VT,12,3,1.2,102\n"
                                     "2024-01-01 00:30,VT,0.4,3,1.2,102\n"))
    assert len(res.records[0]) == 2 and res.rejects["line"].tolist() == [3]


def test_the_grid_refuses_spans_it_cannot_represent():
    with pytest.raises(DegasError, match="mistyped year"):
        make_grid(pd.Timestamp("1723-01-01", tz="UTC"), pd.Timestamp("2023-01-01", tz="UTC"), "1min")
    with pytest.raises(DegasError, match="12,[0-9,]+ bins, more than 10,000,000"):
        make_grid(pd.Timestamp("2000-01-01", tz="UTC"), pd.Timestamp("2023-01-01", tz="UTC"), "1min")
    assert MAX_BINS == 10_000_000
    g = make_grid(pd.Timestamp("2023-01-01", tz="UTC"), pd.Timestamp("2023-01-08", tz="UTC"), "1D")
    assert g.n == 8


def test_the_segmenter_refuses_values_whose_squares_overflow():
    from degas.analysis.changepoints import detect_changepoints

    meta = SeriesMeta("other", "x", "S")
    rng = np.random.default_rng(0)
    v = np.r_[rng.normal(1, 0.1, 30), rng.normal(2, 0.1, 30)]
    v[10] = 1e160
    s = make_series(meta, pd.date_range("2024-01-01", periods=60, freq="D", tz="UTC"), v)
    with pytest.raises(DegasError, match="too large to segment"):
        detect_changepoints(s, transform="identity")
    # a huge but representable offset is segmented like any other series
    s2 = make_series(meta, s.data["time"], np.r_[rng.normal(1, 0.1, 30), rng.normal(2, 0.1, 30)] * 1e90)
    res = detect_changepoints(s2, transform="identity")
    assert len(res.changes) == 1


def test_a_step_that_fails_inside_a_library_records_its_reason(monkeypatch, tmp_path):
    import degas.pipeline as pl
    from degas.project import Project
    from degas.store import Archive

    arc = Archive.create(tmp_path / "a")
    meta = SeriesMeta("gas_flux", "so2_flux", "S", "SO2", "kg/s", "t/d")
    t = pd.date_range("2024-01-01", periods=60, freq="D", tz="UTC")
    arc.add(make_series(meta, t, np.r_[np.full(30, 10.0), np.full(30, 20.0)] + np.sin(np.arange(60))))

    def boom(b):
        raise FloatingPointError("overflow inside a solver")

    monkeypatch.setattr(pl, "_changepoints", boom)
    b = pl.run_all(arc, Project(), mode="retrospective")
    assert any("change points: not run: FloatingPointError" in s for s in b.skipped)

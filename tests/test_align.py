"""Multi-series alignment on one grid (built on degas.grid)."""

import numpy as np
import pandas as pd
import pytest

from degas.align import align, event_energy_j
from degas.errors import DegasError, NotEnoughDataError
from degas.model import Chronology, EventCatalog, SeriesMeta, make_series

UTC = "UTC"


def _gas(times, values, unc=None):
    return make_series(SeriesMeta("gas_flux", "so2_flux", station="north"), times, values, uncertainty=unc)


def _extrusion(starts, ends, values):
    return make_series(SeriesMeta("extrusion_rate", "extrusion_rate", volume_basis="dre"), starts, values, end=ends)


def _chron(rows):
    df = pd.DataFrame(
        {
            "start": pd.to_datetime([r[0] for r in rows], utc=True).astype("datetime64[ns, UTC]"),
            "end": pd.to_datetime([r[1] for r in rows], utc=True).astype("datetime64[ns, UTC]"),
            "state": pd.Series([r[2] for r in rows], dtype="string"),
            "style": pd.Series(["effusive"] * len(rows), dtype="string"),
            "note": pd.Series([pd.NA] * len(rows), dtype="string"),
        }
    )
    return Chronology(df, SeriesMeta("chronology", "eruption_chronology"))


def _catalog(times, mags, classes):
    n = len(times)
    df = pd.DataFrame(
        {
            "time": pd.to_datetime(times, utc=True).astype("datetime64[ns, UTC]"),
            "latitude_deg": np.zeros(n),
            "longitude_deg": np.zeros(n),
            "depth_m": np.full(n, 2000.0),
            "magnitude": np.asarray(mags, float),
            "magnitude_type": pd.Series(["ML"] * n, dtype="string"),
            "event_class": pd.Series(classes, dtype="string"),
            "event_id": pd.Series([f"e{i}" for i in range(n)], dtype="string"),
            "source_type": pd.Series(classes, dtype="string"),
        }
    )
    return EventCatalog(df, SeriesMeta("seismic_catalog", "events"))


def test_flux_mean_count_coverage_and_threshold():
    # Hourly samples: day 1 complete (24), day 2 only 6 samples -> coverage 0.25 < 0.5 -> missing.
    t1 = pd.date_range("2033-01-01", periods=24, freq="h", tz=UTC)
    t2 = pd.date_range("2033-01-02", periods=6, freq="h", tz=UTC)
    gas = _gas(t1.append(t2), np.r_[np.full(24, 10.0), np.full(6, 20.0)], np.ones(30))
    tab = align({"so2": gas}, "1D", min_coverage=0.5)
    f = tab.frame
    assert f["so2"].iloc[0] == 10.0 and np.isnan(f["so2"].iloc[1])
    assert list(f["so2_count"]) == [24, 6]
    assert f["so2_coverage"].tolist() == pytest.approx([1.0, 0.25])
    assert f["so2_uncertainty"].iloc[0] == pytest.approx(1 / np.sqrt(24))
    assert any("1 of 2 bins missing" in n for n in tab.notes)


def test_extrusion_time_weighted_and_chronology_fraction():
    ext = _extrusion(["2033-01-01T00:00", "2033-01-02T12:00"], ["2033-01-02T12:00", "2033-01-04T00:00"], [2.0, 4.0])
    chron = _chron([("2033-01-01T06:00", "2033-01-02T00:00", "eruptive"),
                    ("2033-01-02T00:00", "2033-01-04T00:00", "pause")])
    # end is given: an interval ending on a bin boundary would otherwise add an empty last bin
    tab = align({"q": ext, "erupt": chron}, "1D", min_coverage=0.5, end=pd.Timestamp("2033-01-03T00:00", tz=UTC))
    f = tab.frame
    assert f["q"].tolist() == pytest.approx([2.0, 3.0, 4.0])  # day 2: half at 2, half at 4
    assert f["erupt"].iloc[0] == pytest.approx(1.0)  # 18 h eruptive of 18 h known
    assert f["erupt_coverage"].iloc[0] == pytest.approx(0.75)
    assert f["erupt"].iloc[1] == 0.0


def test_events_counts_per_class_and_energy():
    cat = _catalog(["2033-01-01T01:00", "2033-01-01T02:00", "2033-01-02T00:00"], [2.0, 4.0, 1.0],
                   ["VT", "LP", "VT"])
    gas = _gas(pd.date_range("2033-01-01", periods=2, freq="D", tz=UTC), [1.0, 2.0])
    tab = align({"eq": cat, "so2": gas}, "1D")
    f = tab.frame
    assert f["eq"].tolist() == [2.0, 1.0]
    assert f["eq_VT"].tolist() == [1, 1] and f["eq_LP"].tolist() == [1, 0]
    # log10 E[J] = 1.5 M + 4.8 (Gutenberg & Richter 1956, approx.): M2 -> 6.31e7 J, M4 -> 6.31e10 J
    # (REFERENCES §3.5 [D])
    assert f["eq_energy_j"].iloc[0] == pytest.approx(6.3096e7 + 6.3096e10, rel=1e-4)
    assert event_energy_j(6.0) == pytest.approx(6.3096e13, rel=1e-4)


def test_any_step_and_pair_checks():
    t = pd.date_range("2033-01-01", periods=48, freq="h", tz=UTC)
    gas = _gas(t, np.arange(48.0))
    gas2 = _gas(t, np.arange(48.0) * 2)
    ext = _extrusion([t[0]], [t[-1] + pd.Timedelta("1h")], [1.0])
    tab = align({"so2": gas, "so2b": gas2, "q": ext}, "6h", end=t[-1])
    assert len(tab.frame) == 8
    assert tab.frame["so2"].iloc[0] == pytest.approx(2.5)
    g, m = tab.pair("so2", "q")
    assert g.index.equals(m.index)
    with pytest.raises(DegasError, match="magma-output side needs an extrusion_rate or chronology"):
        tab.pair("so2", "so2b")
    with pytest.raises(DegasError, match="gas side needs a gas_flux"):
        tab.pair("q", "q")
    with pytest.raises(DegasError, match="have: so2, so2b, q"):
        tab.pair("so2", "nope")


def test_all_missing_and_no_overlap():
    gas = _gas(pd.date_range("2033-01-01", periods=3, freq="D", tz=UTC), [1.0, 2.0, 3.0])
    ext = _extrusion(["2033-02-01"], ["2033-02-05"], [1.0])
    tab = align({"so2": gas, "q": ext}, "1D")
    with pytest.raises(NotEnoughDataError, match="do not overlap in time"):
        tab.pair("so2", "q")
    sparse = _gas(pd.date_range("2033-01-01", periods=3, freq="D", tz=UTC), [1.0, 2.0, 3.0])
    tab2 = align({"so2": sparse, "q": ext}, "1h", min_coverage=0.9)  # daily samples on an hourly grid
    assert tab2.frame["so2"].notna().sum() == 3  # coarser sampling -> coverage 1 where a sample is
    with pytest.raises(DegasError, match="nothing to align"):
        align({})
    empty = _gas([], [])
    with pytest.raises(NotEnoughDataError, match="empty"):
        align({"so2": empty})

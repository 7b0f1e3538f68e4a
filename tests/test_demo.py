"""Tests of the invented demo volcano (degas.demo) and the committed demo_series/ files.

The scenario is invented, so it is never the sole proof of a scientific number: every formula the
checks use is the published one, cited beside it (REFERENCES.md sections in brackets).
"""

from __future__ import annotations

import hashlib
import json
import math
import re
import tomllib
import unicodedata
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from degas.demo import (
    DEFAULT_SEED,
    FILES,
    PETROLOGY,
    REGIMES,
    VESICULARITY,
    generate_scenario,
    petrological_so2_kg_s,
    write_demo,
    write_large,
)
from degas.errors import DegasError
from degas.model import EVENT_CLASSES
from degas.units import KG_S_TO_T_D

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "demo_series"
DATA_FILES = [f for f in FILES if f not in ("truth.json", "demo_ingest.toml", "README.md")]
UTC = "UTC"


@pytest.fixture(scope="module")
def scenario():
    return generate_scenario(DEFAULT_SEED)


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo_a")
    write_demo(out, DEFAULT_SEED)
    return out


@pytest.fixture(scope="module")
def truth():
    return json.loads((DEMO / "truth.json").read_text(encoding="utf-8"))


def _ts(s):
    return pd.Timestamp(s, tz=UTC)


def _phase(truth, name):
    return next(p for p in truth["phases"] if p["name"] == name)


# --------------------------------------------------------------------------- determinism and sync


def test_same_seed_gives_byte_identical_files(written, tmp_path):
    write_demo(tmp_path, DEFAULT_SEED)
    for name in FILES:
        assert (tmp_path / name).read_bytes() == (written / name).read_bytes(), name


def test_committed_demo_series_is_what_the_generator_writes(written):
    for name in FILES:
        assert (DEMO / name).exists(), f"demo_series/{name} missing: run python -m degas.demo demo_series"
        assert (DEMO / name).read_bytes() == (written / name).read_bytes(), (
            f"demo_series/{name} is stale: regenerate with python -m degas.demo demo_series")


def test_other_seed_changes_the_noise_not_the_story():
    a, b = generate_scenario(1), generate_scenario(2)
    assert not np.allclose(a.so2_kg_s, b.so2_kg_s)
    assert [p["start"] for p in a.truth["phases"]] == [p["start"] for p in b.truth["phases"]]


def test_scenario_is_fast_and_pure(scenario):
    import time

    t0 = time.perf_counter()
    again = generate_scenario(DEFAULT_SEED)
    assert time.perf_counter() - t0 < 5.0
    np.testing.assert_array_equal(again.so2_kg_s, scenario.so2_kg_s)
    pd.testing.assert_frame_equal(again.events, scenario.events)
    assert str(scenario.events["time"].dtype) == "datetime64[ns, UTC]"


def test_sub_span_and_bad_span():
    sc = generate_scenario(start="2024-01-01", end="2024-12-31")
    assert len(sc.days) == 366
    assert [p.name for p in sc.phases] == ["pause", "eruptive_2", "sealing"]
    with pytest.raises(DegasError):
        generate_scenario(start="2024-02-01", end="2024-01-01")


# --------------------------------------------------------------------------- truth vs files


def test_truth_chronology_matches_the_chronology_file(truth):
    df = pd.read_csv(DEMO / "eruption_chronology.csv", dtype=str, keep_default_na=False)
    assert list(df.columns) == ["start", "end", "activity", "style", "remarks"]
    rows = [{"start": r.start, "end": r.end or None, "activity": r.activity, "style": r.style or None}
            for r in df.itertuples()]
    assert rows == truth["chronology"]
    assert rows[-1]["end"] is None  # the last phase is open
    # every chronology boundary is a boundary of the story phases
    starts = {p["start"] for p in truth["phases"]}
    assert {r["start"] for r in rows} <= starts
    ex = [r for r in rows if r["style"] == "explosive"]
    assert len(ex) == 1 and ex[0]["start"] == truth["explosive_event"]["date"]
    seal = _phase(truth, "sealing")
    assert (seal["start"], seal["end"]) == (truth["sealing"]["start"], truth["sealing"]["end"])


def test_truth_phases_are_contiguous_and_labelled(truth):
    phases = truth["phases"]
    for a, b in zip(phases, phases[1:], strict=False):
        assert a["end"] == b["start"]
    assert phases[0]["start"] == truth["generator"]["start"] == "2023-01-01"
    assert truth["generator"]["end"] == "2025-12-31"
    assert {r["regime"] for r in truth["regimes"]} <= set(REGIMES)
    assert {r["regime"] for r in truth["regimes"]} == set(REGIMES)
    assert truth["generator"]["seed"] == DEFAULT_SEED
    assert truth["volumes"]["vesicularity"] == VESICULARITY
    assert [d["lag_days"] for d in truth["lags_days"]] == [4, 3, 5]


def _preamble(path: Path) -> dict[str, str]:
    meta = {}
    for line in path.read_text(encoding="utf-8").splitlines():
        if not line.startswith("#"):
            break
        m = re.match(r"#\s*([^:]+):\s*(.+)", line)
        if m:
            meta[m.group(1).strip()] = m.group(2).strip()
    return meta


def test_survey_volumes_integrate_the_true_extrusion_rate(scenario, truth):
    path = DEMO / "dome_surveys.csv"
    meta = _preamble(path)
    assert meta["volume basis"] == "bulk"
    phi = float(meta["vesicularity"])
    df = pd.read_csv(path, comment="#")
    assert 35 <= len(df) <= 50
    dates = pd.to_datetime(df["survey date"]).dt.tz_localize(UTC)
    # V_DRE = V_bulk (1 - phi) (REFERENCES section 6.3, dense-rock-equivalent definition)
    dre_obs = df["cumulative volume (Mm3)"].to_numpy() * 1e6 * (1 - phi)
    sigma = df["uncertainty (Mm3)"].to_numpy() * 1e6 * (1 - phi)
    cum = np.concatenate([[0.0], np.cumsum(scenario.extrusion_m3_s * 86_400.0)])
    idx = (dates - scenario.days[0]).dt.days.to_numpy()
    dre_true = cum[idx]
    z = (dre_obs - dre_true) / sigma
    assert np.all(np.abs(z) < 4.0)
    assert 0.2 < np.mean(z**2) < 3.0  # noise of the stated size, not larger, not absent
    assert math.isclose(truth["volumes"]["dre_volume_m3"], cum[-1], rel_tol=1e-9)
    assert math.isclose(truth["volumes"]["bulk_volume_m3"], cum[-1] / (1 - phi), rel_tol=1e-9)
    # surveys: every 2-5 weeks while the dome grows, sparser in pauses
    gaps = np.diff(dates.to_numpy()).astype("timedelta64[D]").astype(int)
    assert gaps.min() >= 14 and gaps.max() <= 70


def _xcorr_peak(gas: np.ndarray, magma: np.ndarray, idx: np.ndarray, max_lag: int = 15) -> int:
    """Lag k maximising corr(gas(t), magma(t + k)); k > 0 means gas leads (project convention)."""
    lags = np.arange(-max_lag, max_lag + 1)
    r = [np.corrcoef(gas[idx], magma[idx + k])[0, 1] for k in lags]
    return int(lags[int(np.argmax(r))])


def test_coupled_phase_lag_visible_in_true_daily_series(scenario, truth):
    d = scenario.days
    for lag in truth["lags_days"]:
        start = _ts(lag["start"]) + pd.Timedelta(days=10)  # skip the explosion's SO2 spike in the last phase
        end = _ts(lag["end"]) if lag["end"] else d[-1]
        idx = np.flatnonzero((d >= start) & (d < end - pd.Timedelta(days=16)))
        assert len(idx) > 100
        assert _xcorr_peak(scenario.so2_kg_s, scenario.extrusion_m3_s, idx) == lag["lag_days"], lag
        # the pulses themselves (first differences) line up at that lag
        dg, dq = np.diff(scenario.so2_kg_s), np.diff(scenario.extrusion_m3_s)
        assert np.corrcoef(dg[idx], dq[idx + lag["lag_days"]])[0, 1] > 0.8


def test_lag_recoverable_from_the_files(truth):
    """Daily SO2 (median of the north-rim scans) against the daily camera extrusion rates."""
    df = pd.read_csv(DEMO / "so2_flux_north_rim_scans.csv", comment="#", na_values=["NaN"])
    t = pd.to_datetime(df["Date/Time"], utc=True)
    days = pd.date_range("2023-01-01", "2025-12-31", freq="D", tz=UTC).as_unit("ns")
    so2 = df["SO2 flux (t/d)"].groupby(t.dt.floor("D").dt.as_unit("ns")).median().reindex(days).to_numpy()
    cam = pd.read_csv(DEMO / "extrusion_rate_camera_daily.csv", comment="#")
    ct = pd.to_datetime(cam["date"]).dt.tz_localize(UTC).dt.as_unit("ns")
    q = cam["extrusion rate (m3/s DRE)"].set_axis(ct).reindex(days).to_numpy()
    for lag in truth["lags_days"]:
        start = _ts(lag["start"]) + pd.Timedelta(days=10)
        end = _ts(lag["end"]) if lag["end"] else days[-1]
        idx = np.flatnonzero((days >= start) & (days < end - pd.Timedelta(days=16)))
        lags = np.arange(-15, 16)
        r = []
        for k in lags:
            a, b = so2[idx], q[idx + k]
            ok = ~np.isnan(a) & ~np.isnan(b)
            r.append(np.corrcoef(a[ok], b[ok])[0, 1])
        assert abs(int(lags[int(np.argmax(r))]) - lag["lag_days"]) <= 1, (lag, np.round(r, 2))


def test_sealing_is_gas_poor_output(scenario, truth):
    # magma_only: extrusion continues while SO2 falls (REFERENCES section 6.7, sealing signature)
    df = scenario.daily_frame().set_index("time")
    seal, before = _phase(truth, "sealing"), _phase(truth, "eruptive_2")
    last_month = df.loc[_ts(seal["end"]) - pd.Timedelta(days=30): _ts(seal["end"]) - pd.Timedelta(days=1)]
    prev = df.loc[_ts(before["start"]): _ts(before["end"]) - pd.Timedelta(days=1)]
    assert last_month["so2_t_d"].mean() < 0.35 * prev["so2_t_d"].mean()
    assert last_month["extrusion_m3_s"].mean() > 0.4 * prev["extrusion_m3_s"].mean()
    assert seal["regime"] == "magma_only" and _phase(truth, "pause")["regime"] == "gas_only"


def test_change_dates_are_where_the_true_levels_step(scenario, truth):
    df = scenario.daily_frame().set_index("time")
    for date in truth["change_dates"]["extrusion_rate"]:
        t = _ts(date)
        before = df.loc[t - pd.Timedelta(days=30): t - pd.Timedelta(days=1), "extrusion_m3_s"].mean()
        after = df.loc[t: t + pd.Timedelta(days=29), "extrusion_m3_s"].mean()
        assert abs(after - before) > 0.3, date
    for date in truth["change_dates"]["so2_flux"]:
        t = _ts(date)
        before = df.loc[t - pd.Timedelta(days=30): t - pd.Timedelta(days=1), "so2_t_d"].mean()
        after = df.loc[t: t + pd.Timedelta(days=29), "so2_t_d"].mean()
        assert abs(math.log(after / before)) > 0.15, date


def test_rsam_rises_during_sealing(truth):
    df = pd.read_csv(DEMO / "rsam_VLM1_hourly.csv", comment="#")
    t = pd.to_datetime(df["time (UTC)"]).dt.tz_localize(UTC)
    v = df["RSAM (counts)"]
    seal_end = _ts(truth["sealing"]["end"])
    late = v[(t >= seal_end - pd.Timedelta(days=14)) & (t < seal_end)].median()
    phase2 = v[(t >= _ts("2024-07-01")) & (t < _ts("2024-12-01"))].median()
    assert late > 3 * phase2
    assert v[(t >= _ts(truth["explosive_event"]["date"])) & (t < seal_end + pd.Timedelta(days=1))].max() > 10 * late


# --------------------------------------------------------------------------- physics


def test_petrological_flux_reproduces_reference_check_value():
    # REFERENCES.md section 1.2 [D] (Devine et al. 1984 method): Q = 3.0 m3/s, 2600 kg/m3, 40 % crystals,
    # 1500 -> 200 ppm S  ->  SO2 = 12.156 kg/s = 1050.3 t/d
    phi = petrological_so2_kg_s(3.0, petrology=PETROLOGY)
    assert float(phi) == pytest.approx(12.156, abs=5e-4)
    assert float(phi) * KG_S_TO_T_D == pytest.approx(1050.3, abs=0.05)


def test_excess_degassing_above_one_in_pause_below_one_in_sealing(scenario, truth):
    # observed / petrological SO2 (REFERENCES section 1.3: ratios > 1 are excess degassing)
    pause, seal = _phase(truth, "pause"), _phase(truth, "sealing")
    assert pause["excess_degassing_factor"] is None  # no magma output at all
    assert pause["observed_so2_mass_t"] > 1e5 and pause["petrological_so2_mass_t"] == 0
    assert seal["excess_degassing_factor"] < 1.0
    for name in ("eruptive_1", "eruptive_2", "eruptive_3"):
        assert _phase(truth, name)["excess_degassing_factor"] > 1.0
    # recomputed from the true daily arrays
    sel = (scenario.days >= _ts(seal["start"])) & (scenario.days < _ts(seal["end"]))
    obs = scenario.so2_kg_s[sel].sum()
    pet = petrological_so2_kg_s(scenario.extrusion_m3_s[sel]).sum()
    assert obs / pet == pytest.approx(seal["excess_degassing_factor"], rel=1e-3)
    assert truth["petrology_defaults"] == PETROLOGY


def test_plausible_magnitudes(scenario, truth):
    so2 = scenario.so2_kg_s * KG_S_TO_T_D
    # passive-degassing band 1-20 000 t/d (REFERENCES section 6.1, band from memory there)
    assert so2.min() >= 1 and so2.max() <= 20_000
    # dome extrusion 0.1-10 m3/s DRE while erupting effusively (REFERENCES section 6.2, from memory)
    q = scenario.extrusion_m3_s
    assert q.max() <= 10 and q[q > 0].min() >= 0.1
    # CO2/SO2 0.5-20 molar (REFERENCES section 6.6, working band from memory)
    assert 0.5 <= scenario.co2_so2.min() and scenario.co2_so2.max() <= 20
    levels = {p["name"]: p["mean_so2_t_d"] for p in truth["phases"]}
    assert levels["quiet"] == pytest.approx(150, rel=0.15)
    assert levels["eruptive_1"] == pytest.approx(1200, rel=0.15)
    pause = _phase(truth, "pause")["nominal_co2_so2_molar"]
    assert pause == [1.5, 4.0]


def test_explosion_spike_and_sealing_drop_seen_in_the_scans(truth):
    df = pd.read_csv(DEMO / "so2_flux_north_rim_scans.csv", comment="#", na_values=["NaN"])
    t = pd.to_datetime(df["Date/Time"], utc=True)
    v = df["SO2 flux (t/d)"]
    daily = v.groupby(t.dt.floor("D")).median()
    assert daily[_ts("2025-03-10")] > 3000  # several thousand t/d
    assert daily[_ts("2025-02-10"): _ts("2025-03-09")].median() < 300
    assert daily[_ts("2025-04-01"): _ts("2025-05-31")].median() == pytest.approx(1500, rel=0.3)
    # daylight scans only, 12:00-22:00 UTC
    hours = t.dt.hour + t.dt.minute / 60
    assert hours.min() >= 11.9 and hours.max() <= 22.1


# --------------------------------------------------------------------------- seismicity


def _local_catalog():
    df = pd.read_csv(DEMO / "seismic_observatory_local.csv", keep_default_na=False, dtype=str)
    df["t"] = pd.to_datetime(df["origin time (UTC)"]).dt.tz_localize(UTC)
    df["md"] = pd.to_numeric(df["Md"].replace("", np.nan))
    return df


def _b_aki_utsu(m: np.ndarray, mc: float, dm: float = 0.1) -> tuple[float, int]:
    # Aki (1965) maximum likelihood with Utsu's half-bin shift for binned magnitudes (REFERENCES 3.2)
    m = m[m >= mc - dm / 2 + 1e-9]
    return math.log10(math.e) / (m.mean() - (mc - dm / 2)), len(m)


def test_b_values_recovered_from_local_catalogue(truth):
    df = _local_catalog()
    mc = truth["seismicity"]["completeness_magnitude_local"]
    vt = df["md"][(df["type"] == "VT")].dropna().to_numpy()
    b_vt, n_vt = _b_aki_utsu(vt, mc)
    # sigma ~ b / sqrt(n) (Aki 1965; value from memory, REFERENCES 3.3)
    assert abs(b_vt - truth["seismicity"]["b_values"]["VT"]) < 3 * b_vt / math.sqrt(n_vt)
    seal = (df["t"] >= _ts(truth["sealing"]["start"])) & (df["t"] < _ts(truth["sealing"]["end"]))
    lph = df["type"].isin(["LP", "lp", "HB", "Hyb"])
    m = df["md"][lph & seal].dropna().to_numpy()
    b_lp, n_lp = _b_aki_utsu(m, mc)
    assert abs(b_lp - truth["seismicity"]["b_values"]["LP_hybrid_sealing"]) < 3 * b_lp / math.sqrt(n_lp)
    assert b_lp > b_vt + 0.2  # volcanic high-b for LP/hybrid (McNutt 2005)


def test_completeness_near_stated_value(truth):
    df = _local_catalog()
    m = df["md"][df["type"] == "VT"].dropna().to_numpy()
    # MAXC (Wiemer & Wyss 2000) + 0.2 correction (Woessner & Wiemer 2005), REFERENCES 3.4
    bins = np.round(m, 1)
    vals, counts = np.unique(bins, return_counts=True)
    mc = vals[np.argmax(counts)] + 0.2
    assert abs(mc - truth["seismicity"]["completeness_magnitude_local"]) <= 0.15
    assert (bins < 0.5).sum() > 50  # a roll-off below completeness, not a hard cut


def test_lp_hybrid_rate_accelerates_during_sealing(truth):
    df = _local_catalog()
    lph = df[df["type"].isin(["LP", "lp", "HB", "Hyb"])]
    per_day = lph.groupby(lph["t"].dt.floor("D")).size()
    per_day = per_day.reindex(pd.date_range("2023-01-01", "2025-12-31", freq="D", tz=UTC).as_unit(
        per_day.index.unit), fill_value=0)
    s = _ts(truth["sealing"]["start"])
    e = _ts(truth["sealing"]["end"])
    first = per_day[s: s + pd.Timedelta(days=13)].mean()
    last = per_day[e - pd.Timedelta(days=14): e - pd.Timedelta(days=1)].mean()
    background = per_day[_ts("2025-04-01"):].mean()
    before = per_day[s - pd.Timedelta(days=14): s - pd.Timedelta(days=1)].mean()
    # the swarm steps up at the onset (about 3x background) and then accelerates to ~30/day
    assert before < 3 and first > 2 * background and last > 2 * first and last > 15
    assert 1.2 < background < 2.8
    assert truth["change_dates"]["lp_hybrid_rate"][0] == truth["sealing"]["start"]


def test_local_codes_and_missing_fields():
    df = _local_catalog()
    assert list(df.columns[:4]) == ["origin time (UTC)", "type", "Md", "depth (km)"]
    codes = set(df["type"])
    assert {"VT", "LP", "lp", "HB", "Hyb", "RF", "EX", "TR", "?"} <= codes
    assert (df["Md"] == "").mean() > 0.2 and (df["depth (km)"] == "").mean() > 0.3
    assert df["t"].is_monotonic_increasing


def test_quakeml_structure(truth):
    from defusedxml import ElementTree

    path = DEMO / "seismic_regional_network.xml"
    root = ElementTree.parse(path, forbid_dtd=True).getroot()
    q = "{http://quakeml.org/xmlns/quakeml/1.2}"
    bed = "{http://quakeml.org/xmlns/bed/1.2}"
    assert root.tag == f"{q}quakeml"
    events = root.find(f"{bed}eventParameters").findall(f"{bed}event")
    assert len(events) == truth["files"]["seismic_regional_network.xml"]["n_events"]
    assert 500 < len(events) < 5000
    types = {}
    for ev in events:
        origin = ev.find(f"{bed}origin")
        assert ev.findtext(f"{bed}preferredOriginID") == origin.get("publicID")
        assert ev.findtext(f"{bed}preferredMagnitudeID") == ev.find(f"{bed}magnitude").get("publicID")
        depth = float(origin.findtext(f"{bed}depth/{bed}value"))
        assert 0 <= depth <= 10_000  # metres (QuakeML BED 1.2)
        assert origin.findtext(f"{bed}time/{bed}value").endswith("Z")
        assert ev.findtext(f"{bed}magnitude/{bed}type") == "ML"
        t = ev.findtext(f"{bed}type")
        types[t] = types.get(t, 0) + 1
    assert set(types) == {"earthquake", "explosion", "volcanic eruption"}
    assert types["explosion"] + types["volcanic eruption"] == truth["seismicity"]["explosion_events"]


# --------------------------------------------------------------------------- messiness facts


def test_south_flank_messiness(truth):
    lines = (DEMO / "so2_flux_south_flank_scans.txt").read_text(encoding="utf-8").splitlines()
    assert lines[0] == "fecha_hora;SO2_kg_s;err_kg_s;calidad"
    rows = lines[1:]
    facts = truth["files"]["so2_flux_south_flank_scans.txt"]
    assert sum(r.split(";")[1] == "-999" for r in rows) == facts["missing_code_rows"] == 5
    assert len(rows) - len(set(rows)) == facts["exact_duplicate_rows"] == 6
    keys = [r.split(";")[0] for r in rows]
    assert len(keys) - len(set(keys)) == 7  # 6 exact + 1 conflicting
    t = pd.to_datetime(pd.Series(keys), format="%d/%m/%Y %H:%M")
    assert (t.diff() < pd.Timedelta(0)).sum() >= 1  # an unsorted block
    days = set(t.dt.normalize())
    assert not any(pd.Timestamp("2025-06-01") <= d < pd.Timestamp("2025-08-01") for d in days)


def test_north_rim_messiness(truth):
    path = DEMO / "so2_flux_north_rim_scans.csv"
    assert "ISO 8601 with offset" in _preamble(path)["times"]
    df = pd.read_csv(path, comment="#", dtype=str, keep_default_na=False)
    assert list(df.columns) == ["Date/Time", "SO2 flux (t/d)", "flux error (t/d)", "QC flag"]
    v = df["SO2 flux (t/d)"]
    assert (v == "NaN").sum() == 4 and (v == "").sum() == 3
    assert (pd.to_numeric(v, errors="coerce") < 0).sum() == 2
    assert df["Date/Time"].str.endswith("-05:00").all()
    assert set(df["QC flag"]) == {"good", "cloud", "low-wind"}
    t = pd.to_datetime(df["Date/Time"], utc=True)
    gap = (t >= _ts("2024-08-05")) & (t < _ts("2024-08-26"))
    assert not gap.any()


def test_ratio_workbook():
    from openpyxl import load_workbook

    wb = load_workbook(DEMO / "co2_so2_ratio_weekly.xlsx")
    ws = wb.active
    rows = list(ws.iter_rows(values_only=True))
    header = next(i for i, r in enumerate(rows) if r[0] == "Date")
    assert header >= 1  # a title row above the header
    assert rows[header] == ("Date", "CO2/SO2 (molar)", "1 sigma")
    import datetime as dt

    data = rows[header + 1:]
    assert all(isinstance(r[0], dt.datetime) for r in data)
    ratio = np.array([r[1] for r in data])
    assert 0.5 <= ratio.min() and ratio.max() <= 20  # REFERENCES 6.6 working band (from memory)


def test_file_sizes():
    sizes = {f: (DEMO / f).stat().st_size for f in FILES}
    assert max(sizes.values()) < 2.5e6, sizes
    assert sum(sizes.values()) < 8e6


# --------------------------------------------------------------------------- names


# SHA-256 (first 16 hex digits) of the lower-case names of real volcanoes and observatories that must
# never appear in the demo: the names themselves are not written here.
_DENY = {
    "041b0e2d3e3bda12", "04ada5b35d930dd9", "04f32e0cadbd2f22", "07c365db1aa38e3f", "08603a11a7ad8784",
    "0928eb94acd58fe5", "0a11c745eeeb835f", "0bf2acc6cecf39ba", "0fc226118263e65d", "10ae42c37be4322a",
    "13b44482ab7ca6bc", "142b0388c783cef2", "14ed1e1662f31106", "1583b9b63926dfd8", "1634e4eca0b25018",
    "1abba1444b9879a1", "1d2e2bd11a5895f9", "1d87574385f8d7e5", "2844f62816315c9a", "2c28262684832c72",
    "2ea70c9eac2a3d67", "30e55c580b8b5351", "32c1556b31c484e0", "36a930a5dbbe198a", "38abbcfd1f8f8c7d",
    "38d9667b1b61401e", "3b56fceb6cd9b30b", "3dda6f2e372faad8", "3eeceb71042dec77", "400d499d46e7492f",
    "49fd6c17d3e01b28", "4c796428062f7795", "4cff8deea7f27227", "536b2779410de623", "5545e950653c3d3f",
    "555e29cdd48af6da", "575e3724076a2528", "5b9e727d419da1ba", "6088dc4bec1727eb", "62837a2fa87ac1de",
    "6443a2187fd16ab3", "6640b1e6b631be00", "6c49a9ec4b6f4a73", "6cf6b12f64aab5cf", "781c158b874d7138",
    "7bd65a0ca26e5042", "7cb5377b9a92c704", "7d3b460ae25841e7", "7d4ecc346d93dc58", "7ee3dcd7efbbf533",
    "7f97c60de3de52a0", "7fac0d0407d16331", "7fc477095c344ed3", "7fdf4767fd0fe724", "85f7961a8882367f",
    "8657f8d73d6f366f", "87b4988ab933a31e", "87c6653a57be7b25", "8aec0650ef3feb28", "8b650c28e6414078",
    "8bcc65f31587625b", "8cd9e4f678fe0ecd", "8f364b3ed097f044", "90048862b9cc6583", "9290d073ecca1fff",
    "96c37c40afc57439", "9815170dc9aee21c", "9ba0180150de82af", "9d43d9c9aa6e45bd", "a0cc839f9b1e40d7",
    "a23edc9bfb606083", "a4261182773773d1", "a586f7d503dce1ee", "a6d11e126c613085", "a8d92ff55b76e0bf",
    "aa693ff15a0ad3ca", "aaa3289bf95f1a42", "b0627d632d861c83", "b124caec7d92b51b", "b144f9e77ed3e9e5",
    "b3a9f7b3b04e84af", "b81f00bbef4477da", "b96e81a33cbd08c2", "be0dc0b807172871", "bebce81d5ca331fc",
    "bf16cb199bf7c53e", "c1473d3b10a125a6", "c625eafe31b2916d", "ca0fc1261bc8aa17", "cc434fd892b2cfa1",
    "ceae5cd8a81e93a9", "ceaed8a7ccb04c57", "d3b636fb4e307960", "d57d9851cc61a234", "dadb5f449f1528f6",
    "e3f50815c81d3c4d", "e47464d7c006a3c1", "e5f61013d6f5260d", "e91bd811174d5705", "ed06547c760ab8c3",
    "eda2b4a73e79b090", "edb463844ff4832b", "f151411e599e75c4", "f24fd3749c136832", "f6cded3afbccecd9",
    "fb84a7f3e9e2bb8d", "fdf761fba54eb2dd"
}
_INVENTED_STATIONS = {"VLM-N", "VLM-S", "VLM-MG", "VLM-CAM", "VLM1", "VLM2", "VLM3", "VLM4"}


def _texts() -> dict[str, str]:
    from openpyxl import load_workbook

    texts = {f: (DEMO / f).read_text(encoding="utf-8") for f in FILES if not f.endswith(".xlsx")}
    wb = load_workbook(DEMO / "co2_so2_ratio_weekly.xlsx")
    cells = [str(c) for ws in wb for row in ws.iter_rows(values_only=True) for c in row if isinstance(c, str)]
    texts["co2_so2_ratio_weekly.xlsx"] = "\n".join(cells + [ws.title for ws in wb])
    texts["degas/demo.py"] = (REPO / "degas" / "demo.py").read_text(encoding="utf-8")
    return texts


def test_no_real_names_only_invented_ones():
    for name, text in _texts().items():
        folded = unicodedata.normalize("NFKD", text).encode("ascii", "ignore").decode().lower()
        tokens = set(re.findall(r"[a-z]+", folded))
        hits = {hashlib.sha256(t.encode()).hexdigest()[:16] for t in tokens} & _DENY
        assert not hits, f"{name}: a real volcano or observatory name appears"
        stations = set(re.findall(r"\bVLM(?:-[A-Z]+|\d+)", text))
        assert stations <= _INVENTED_STATIONS, (name, stations - _INVENTED_STATIONS)
    readme = (DEMO / "README.md").read_text(encoding="utf-8")
    assert "synthetic" in readme and "invented" in readme and "Velmarra" in readme
    for f in FILES:
        if f != "README.md":
            assert f"`{f}`" in readme, f


# --------------------------------------------------------------------------- ingest options


_ALLOWED_FIELDS = {"path", "kind", "species", "station", "timezone", "dayfirst", "time_format", "volume_basis",
                   "vesicularity", "bulk_density", "dense_density", "allow_negative", "magnitude_type", "columns",
                   "units", "class_map"}
_ROLES = {"time", "end", "value", "uncertainty", "quality", "station", "state", "style", "latitude", "longitude",
          "depth", "magnitude", "magnitude_type", "event_class", "event_id"}


def test_ingest_toml_covers_every_data_file():
    cfg = tomllib.loads((DEMO / "demo_ingest.toml").read_text(encoding="utf-8"))
    files = cfg["file"]
    assert sorted(f["path"] for f in files) == sorted(DATA_FILES)
    for f in files:
        assert set(f) <= _ALLOWED_FIELDS, f["path"]
        assert set(f.get("columns", {})) <= _ROLES, f["path"]
        assert set(f.get("class_map", {}).values()) <= set(EVENT_CLASSES)
    south = next(f for f in files if f["path"] == "so2_flux_south_flank_scans.txt")
    assert south["dayfirst"] is True and south["timezone"] == "UTC"
    local = next(f for f in files if f["path"] == "seismic_observatory_local.csv")
    assert local["class_map"]["Hyb"] == "hybrid"


def test_every_demo_file_reads_with_its_ingest_options(truth):
    """Integration: the project readers accept every demo file with demo_ingest.toml."""
    from degas.io import read
    from degas.io.mapping import options_from_dict

    cfg = tomllib.loads((DEMO / "demo_ingest.toml").read_text(encoding="utf-8"))
    got = {}
    for f in cfg["file"]:
        res = read(DEMO / f["path"], options_from_dict(f, f["path"]))
        got[f["path"]] = res
        assert res.records, f["path"]
    north = got["so2_flux_north_rim_scans.csv"]
    assert north.n_rejected == 4 + 3 + 2  # NaN, empty, negative
    south = got["so2_flux_south_flank_scans.txt"]
    assert south.n_rejected == 5 + 7  # -999 codes, 6 exact duplicates + 1 conflict
    assert south.rejects["reason"].str.contains("missing-value code").sum() == 5
    s_rec = south.records[0]
    assert s_rec.data["time"].is_monotonic_increasing
    assert s_rec.data["time"].iloc[0] == pd.Timestamp("2023-01-01 12:09", tz=UTC)  # naive times are UTC
    hours = s_rec.data["time"].dt.hour
    assert hours.min() >= 12 and hours.max() <= 22  # day-first dates read right, no shift
    assert s_rec.data["time"].dt.month.nunique() == 12
    n_rec = north.records[0]
    assert n_rec.data["time"].iloc[0] == pd.Timestamp("2023-01-01 12:00", tz=UTC)  # 07:00-05:00
    vol = got["dome_surveys.csv"].records[0]
    assert vol.meta.volume_basis == "dre"
    loc = got["seismic_observatory_local.csv"].records[0]
    assert len(loc) == truth["files"]["seismic_observatory_local.csv"]["n_events"]
    assert set(loc.data["event_class"].unique()) <= set(EVENT_CLASSES)
    assert (loc.data["event_class"] == "hybrid").sum() > 1000
    reg = got["seismic_regional_network.xml"].records[0]
    assert len(reg) == truth["files"]["seismic_regional_network.xml"]["n_events"]
    chron = got["eruption_chronology.csv"].records[0]
    assert chron.data["end"].isna().sum() == 1


# --------------------------------------------------------------------------- large variant


def test_write_large_small_variant(tmp_path):
    paths = write_large(tmp_path, years=1, step="1h", n_events=5000, seed=3)
    assert [p.name for p in paths] == ["large_so2_flux_VLM-N.csv", "large_so2_flux_VLM-S.csv",
                                       "large_extrusion_rate_daily.csv", "large_seismic_catalog.csv"]
    flux = pd.read_csv(paths[0])
    assert list(flux.columns) == ["time", "so2_flux_t_d", "uncertainty_t_d", "flag"]
    assert len(flux) == 365 * 24 and flux["time"].str.endswith("Z").all()
    q = pd.read_csv(paths[2])
    assert len(q) == 365 and (q["extrusion rate (m3/s DRE)"] >= 0).all()
    cat = pd.read_csv(paths[3])
    assert len(cat) == 5000
    again = write_large(tmp_path / "b", years=1, step="1h", n_events=5000, seed=3)
    assert all(a.read_bytes() == b.read_bytes() for a, b in zip(paths, again, strict=True))

"""The ``degas quakes`` command (degas/cli/seismic_cmds.py) on a catalogue file and on an archive."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

import degas.cli.seismic_cmds  # noqa: F401  (registers the command on the app)
from degas.cli._app import app
from degas.model import EventCatalog, SeriesMeta

runner = CliRunner()


def _catalog(n=800, seed=4, mtype="ML") -> EventCatalog:
    rng = np.random.default_rng(seed)
    t0 = pd.Timestamp("2030-01-01", tz="UTC")
    times = t0 + pd.to_timedelta(np.sort(rng.uniform(0, 60 * 86400.0, n)), unit="s")
    # Gutenberg-Richter magnitudes, b = 1, lowest complete bin 1.0 (REFERENCES §3.1)
    mags = np.round(np.round((0.95 + rng.exponential(1 / math.log(10), n)) / 0.1) * 0.1, 1)
    classes = rng.choice(["VT", "LP", "hybrid", "rockfall"], n)
    df = pd.DataFrame({
        "time": times,
        "latitude_deg": np.full(n, 10.0),
        "longitude_deg": np.full(n, 20.0),
        "depth_m": rng.uniform(500, 4000, n),
        "magnitude": mags,
        "magnitude_type": pd.Series([mtype] * n, dtype="string"),
        "event_class": pd.Series(classes, dtype="string"),
        "event_id": pd.Series([f"ev{i}" for i in range(n)], dtype="string"),
        "source_type": pd.Series(classes, dtype="string"),
    })
    return EventCatalog(df, SeriesMeta(kind="seismic_catalog", quantity="events"))


def _write_csv(cat: EventCatalog, path, *, unknown_rows: int = 0):
    d = cat.data
    out = pd.DataFrame({
        "time": d["time"].dt.strftime("%Y-%m-%dT%H:%M:%SZ"),
        "latitude": d["latitude_deg"], "longitude": d["longitude_deg"],
        "depth_km": d["depth_m"] / 1000.0, "magnitude": d["magnitude"],
        "mag_type": d["magnitude_type"], "type": d["event_class"],
    })
    if unknown_rows:
        out.loc[out.index[:unknown_rows], "type"] = "mystery"
    out.to_csv(path, index=False)
    return path


def test_quakes_on_a_file_writes_csv_and_json(tmp_path):
    src = _write_csv(_catalog(), tmp_path / "events.csv", unknown_rows=3)
    out_csv, out_json = tmp_path / "metrics.csv", tmp_path / "summary.json"
    res = runner.invoke(app, ["quakes", str(src), "--step", "7D", "--window-events", "50",
                              "--csv", str(out_csv), "--json", str(out_json)])
    assert res.exit_code == 0, res.output
    assert "Seismicity, 800 events" in res.output
    assert "b = " in res.output and "Shi & Bolt" in res.output
    assert "b through time" in res.output
    assert "mystery" in res.output  # unknown class listed
    metrics = pd.read_csv(out_csv)
    assert metrics["count_total"].sum() == 800 and "energy_j" in metrics.columns
    summary = json.loads(out_json.read_text())
    assert summary["counts"]["total"] == 800
    assert summary["counts"]["other"] == 3
    b = summary["b_value"]
    # synthetic b = 1: within 3 Shi & Bolt (1982) standard errors
    assert abs(b["b"] - 1.0) < 3 * b["sigma"]
    assert summary["completeness"]["method"] == "maxc"
    assert len(summary["b_series"]) > 1


def test_quakes_on_an_archive(tmp_path):
    from degas.store import Archive

    arch = Archive.create(tmp_path / "arch")
    arch.add(_catalog(n=300))
    argv = ["quakes", str(tmp_path / "arch"), "--classes", "LP,hybrid", "--mc-method", "gft"]
    res = runner.invoke(app, argv)
    assert res.exit_code == 0, res.output
    assert "LP" in res.output and "hybrid" in res.output
    assert "b through time not available" in res.output  # 300 events < one window of 500


def test_quakes_too_few_events_says_how_many(tmp_path):
    src = _write_csv(_catalog(n=30), tmp_path / "few.csv")
    res = runner.invoke(app, ["quakes", str(src)])
    assert res.exit_code == 0, res.output
    assert "b-value not available" in res.output and "need at least 50 events" in res.output


def test_quakes_bad_class_and_mixed_types(tmp_path):
    src = _write_csv(_catalog(n=50), tmp_path / "ok.csv")
    res = runner.invoke(app, ["quakes", str(src), "--classes", "VT,LF"])
    assert res.exit_code != 0
    assert "valid: VT" in str(res.exception) or "valid: VT" in res.output
    mixed = _catalog(n=50)
    data = mixed.data.copy()
    data.loc[:9, "magnitude_type"] = "Mw"
    src2 = _write_csv(mixed.with_data(data), tmp_path / "mixed.csv")
    res = runner.invoke(app, ["quakes", str(src2)])
    assert res.exit_code != 0
    text = str(res.exception) + res.output
    assert "mixes magnitude types" in text and "--allow-mixed-types" in text
    res = runner.invoke(app, ["quakes", str(src2), "--allow-mixed-types"])
    assert res.exit_code == 0, res.output


@pytest.mark.parametrize("argv", [["--help"]])
def test_quakes_help(argv):
    res = runner.invoke(app, ["quakes", *argv])
    assert res.exit_code == 0 and "--window-events" in res.output


def test_quakes_archive_with_two_catalogues_needs_series(tmp_path):
    import dataclasses

    from degas.store import Archive

    arch = Archive.create(tmp_path / "arch")
    a = _catalog(n=100)
    b = _catalog(n=120, seed=5)
    b = dataclasses.replace(b, meta=SeriesMeta(kind="seismic_catalog", quantity="events", station="regional"))
    arch.add(a)
    arch.add(b)
    res = runner.invoke(app, ["quakes", str(tmp_path / "arch")])
    assert res.exit_code != 0 and "--series" in str(res.exception)
    res = runner.invoke(app, ["quakes", str(tmp_path / "arch"), "--series", b.meta.series_id])
    assert res.exit_code == 0, res.output
    assert "Seismicity, 120 events" in res.output

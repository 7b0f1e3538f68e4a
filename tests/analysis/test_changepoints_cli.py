"""The ``degas shifts`` command (degas/cli/change_cmds.py) on an archive."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

import degas.cli.change_cmds  # noqa: F401  (registers the command on the app)
from degas.cli._app import app, run
from degas.model import SeriesMeta, make_series

runner = CliRunner()


@pytest.fixture()
def archive(tmp_path):
    from degas.store import Archive

    rng = np.random.default_rng(0)
    days = pd.date_range("2030-01-01", periods=200, freq="1D", tz="UTC")
    so2 = np.exp(np.where(np.arange(200) < 80, np.log(10.0), np.log(30.0)) + rng.normal(0, 0.15, 200))
    q = np.where(np.arange(200) < 80, 1.0, 2.0) + rng.normal(0, 0.1, 200)
    arch = Archive.create(tmp_path / "arch")
    s1 = make_series(SeriesMeta(kind="gas_flux", quantity="so2_flux", station="N", species="SO2", unit="kg/s",
                                display_unit="t/d"), days, so2)
    s2 = make_series(SeriesMeta(kind="extrusion_rate", quantity="extrusion_rate", unit="m^3/s",
                                display_unit="m^3/s", volume_basis="dre"), days, q)
    arch.add(s1)
    arch.add(s2)
    return tmp_path / "arch", s1.meta.series_id, s2.meta.series_id


def test_shifts_prints_the_table_and_writes_csv_and_json(archive, tmp_path):
    root, sid, _ = archive
    out_csv, out_json = tmp_path / "c.csv", tmp_path / "c.json"
    res = runner.invoke(app, ["shifts", str(root), sid, "--min-segment", "5D", "--csv", str(out_csv),
                              "--json", str(out_json)])
    assert res.exit_code == 0, res.output
    assert "2030-03-22" in res.output  # day 80: the first day of the new level
    assert "t/d" in res.output  # display unit at the edge (canonical kg/s inside)
    df = pd.read_csv(out_csv)
    assert df["time"].tolist() == ["2030-03-22T00:00:00Z"]
    doc = json.loads(out_json.read_text())
    assert doc["min_size_bins"] == 5 and doc["transforms"] == ["log"]
    assert len(doc["segments"]) == 2 and doc["changes"][0]["ratio"] == pytest.approx(3.0, rel=0.1)


def test_shifts_joint_detection_of_two_series(archive):
    root, sid, sid2 = archive
    res = runner.invoke(app, ["shifts", str(root), sid, sid2])
    assert res.exit_code == 0, res.output
    assert "so2_flux" in res.output and "extrusion_rate" in res.output


def test_shifts_bad_options_give_one_line_errors(archive, capsys):
    root, sid, _ = archive
    assert run(["shifts", str(root), sid, "--method", "cusum"]) == 2
    err = capsys.readouterr().err
    assert "unknown method 'cusum'; valid: exact, pelt" in err and "Traceback" not in err
    assert run(["shifts", str(root), "gas_flux.nothing.all"]) == 2
    assert run(["shifts", str(root), sid, "--min-segment", "500D"]) == 2
    assert "shorter than the minimum segment" in capsys.readouterr().err

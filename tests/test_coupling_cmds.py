"""CLI: degas couple / regimes / budget on a small archive built from the demo truth."""

import json

import numpy as np
import pandas as pd
import pytest

import degas.cli.coupling_cmds  # noqa: F401  (registers the commands)
from degas.cli._app import run
from degas.model import SeriesMeta, make_series

store = pytest.importorskip("degas.store")
demo = pytest.importorskip("degas.demo")


@pytest.fixture(scope="module")
def archive(tmp_path_factory):
    sc = demo.generate_scenario()
    root = tmp_path_factory.mktemp("arch") / "a"
    arch = store.Archive.create(root)
    rng = np.random.default_rng(0)
    so2 = sc.so2_kg_s
    arch.add(make_series(SeriesMeta("gas_flux", "so2_flux", station="n", species="SO2", unit="kg/s"), sc.days, so2,
                         uncertainty=0.1 * so2))
    arch.add(make_series(SeriesMeta("extrusion_rate", "extrusion_rate", unit="m^3/s", volume_basis="dre"),
                         sc.days, sc.extrusion_m3_s))
    arch.add(make_series(SeriesMeta("gas_flux", "co2_flux", station="n", species="CO2", unit="kg/s"), sc.days,
                         so2 * (1 + 0.01 * rng.standard_normal(so2.size))))
    surveys = sc.days[::14]
    cum = np.cumsum(sc.extrusion_m3_s) * 86400.0
    arch.add(make_series(SeriesMeta("erupted_volume", "dome_volume", unit="m^3", volume_basis="dre"), surveys,
                         np.r_[0.0, cum[13::14]][: len(surveys)]))  # volume erupted before each survey
    return root


def test_couple_command(archive, tmp_path, capsys):
    out = tmp_path / "c.json"
    csv = tmp_path / "c.csv"
    code = run(["couple", str(archive), "--variant", "raw", "--max-lag", "20D", "--surrogates", "50", "--boot", "20",
                "--json", str(out), "--csv", str(csv)])
    assert code == 0, capsys.readouterr().err
    text = capsys.readouterr().out
    assert "positive lag = gas leads" in text and "Granger" in text
    payload = json.loads(out.read_text())
    assert payload["cross_correlation"]["variant"] == "raw"
    assert len(pd.read_csv(csv)) == 41


def test_regimes_and_budget_commands(archive, tmp_path, capsys):
    out = tmp_path / "r.csv"
    assert run(["regimes", str(archive), "--csv", str(out)]) == 0
    labels = set(pd.read_csv(out)["label"])
    assert {"coupled", "quiet", "gas_only", "magma_only"} <= labels
    j = tmp_path / "b.json"
    code = run(["budget", str(archive), "--s-mi", "1500", "--s-mg", "200", "--crystals", "0.4", "--monte-carlo",
                "500", "--json", str(j)])
    assert code == 0, capsys.readouterr().err
    payload = json.loads(j.read_text())
    assert payload["segments"][-1]["segment"] == "all"
    # the same budget from survey volumes (differenced to rates, time-weighted onto the grid)
    j2 = tmp_path / "b2.json"
    assert run(["budget", str(archive), "--extrusion", "erupted_volume.dome_volume.all", "--segments", "none",
                "--json", str(j2)]) == 0
    assert run(["budget", str(archive), "--segments", "none", "--json", str(j)]) == 0
    v_rates = json.loads(j.read_text())["segments"][0]["dre_volume_m3"]
    v_surveys = json.loads(j2.read_text())["segments"][0]["dre_volume_m3"]
    assert v_surveys == pytest.approx(v_rates, rel=0.05)


def test_clear_errors(archive, capsys):
    # two gas series where one must be magma output
    code = run(["couple", str(archive), "--gas", "gas_flux.so2_flux.n", "--magma", "gas_flux.co2_flux.n"])
    assert code == 2
    # survey volumes are magma output too (issue 9), and the message names the option to change
    assert "magma output (--magma) must be extrusion_rate or erupted_volume or chronology" in capsys.readouterr().err
    assert run(["budget", str(archive), "--extrusion", "gas_flux.so2_flux.n"]) == 2
    assert "extrusion rate must be extrusion_rate" in capsys.readouterr().err
    assert run(["regimes", str(archive), "--gas", "nope"]) == 2
    assert "no series 'nope'" in capsys.readouterr().err

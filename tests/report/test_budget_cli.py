"""`degas budget` on the demo archive: flagged scans excluded, the systematic term in the total (issue 13)."""

from __future__ import annotations

import json

import pytest

from degas.cli import main  # noqa: F401  (registers every command)
from degas.cli._app import run


def test_budget_excludes_flagged_scans_and_carries_the_systematic_term(demo_archive, tmp_path, capsys):
    out = tmp_path / "b.json"
    rc = run(["budget", str(demo_archive.root), "--gas", "gas_flux.so2_flux.VLM-N", "--extrusion",
              "extrusion_rate.extrusion_rate.VLM-CAM", "--segments", "none", "--systematic", "0.25",
              "--json", str(out)])
    text = capsys.readouterr().out
    assert rc == 0, text
    assert "scans flagged 'cloud'" in text and "excluded" in text
    seg = json.loads(out.read_text())["segments"][-1]
    # one station, 25 % fully correlated over the record: σ_sys = 0.25 × mass (GUM, JCGM 100:2008)
    assert abs(seg["so2_mass_sd_systematic_kg"] - 0.25 * seg["so2_mass_kg"]) < 1e-6 * seg["so2_mass_kg"]
    assert seg["so2_mass_sd_total_kg"] ** 2 == pytest.approx(
        seg["so2_mass_sd_independent_kg"] ** 2 + seg["so2_mass_sd_systematic_kg"] ** 2, rel=1e-9)
    assert seg["ratio_p2_5_kg_per_m3"] > 0


def test_budget_prints_the_dre_volume_with_its_1_sigma(demo_archive, tmp_path, capsys):
    import numpy as np
    import pandas as pd

    out = tmp_path / "b.json"
    rc = run(["budget", str(demo_archive.root), "--gas", "gas_flux.so2_flux.VLM-N", "--extrusion",
              "extrusion_rate.extrusion_rate.VLM-CAM", "--segments", "none", "--json", str(out)])
    text = capsys.readouterr().out
    assert rc == 0, text
    assert "± Mm³" in text
    seg = json.loads(out.read_text())["segments"][-1]
    # the camera's daily 1σ × 1 day, added in quadrature over the days with a rate (independent days; GUM)
    rec = demo_archive.load("extrusion_rate.extrusion_rate.VLM-CAM").data
    days = pd.DatetimeIndex(rec["time"])
    sel = (days >= pd.Timestamp(seg["start"])) & (days < pd.Timestamp(seg["end"])) & rec["value"].notna().to_numpy()
    by_hand = float(np.sqrt(np.nansum((rec["uncertainty"].to_numpy()[sel] * 86400.0) ** 2)))
    assert seg["dre_volume_sd_m3"] == pytest.approx(by_hand, rel=1e-6)
    assert f"{seg['dre_volume_sd_m3'] / 1e6:.3g}" in text  # shown in Mm³ beside the volume

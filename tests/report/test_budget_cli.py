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

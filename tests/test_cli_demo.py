"""`degas demo` end to end on the committed demo files."""

from __future__ import annotations

import json

import pytest

from degas.cli import main  # noqa: F401  (registers every command)
from degas.cli._app import run
from degas.store import Archive


@pytest.mark.slow
def test_demo_builds_the_archive_and_prints_the_inventory(tmp_path, capsys):
    arc = tmp_path / "demo-archive"
    assert run(["demo", "--archive", str(arc), "--out", str(tmp_path / "reports")]) == 0
    out = capsys.readouterr().out
    assert "degas archive" in out and "10 series from 10 file(s)" in out
    (report,) = (tmp_path / "reports").glob("degas-velmarra-episode-*.html")
    assert f"report: {report}" in out and "possible sealing" in out
    a = Archive.open(arc)
    kinds = sorted({e.meta.kind for e in a.entries()})
    assert kinds == ["amplitude", "chronology", "erupted_volume", "extrusion_rate", "gas_flux", "gas_ratio",
                     "melt_inclusions", "seismic_catalog"]
    # the dome surveys were bulk with a stated vesicularity: stored as DRE, and the provenance says how
    (vol,) = a.find(kind="erupted_volume")
    assert vol.meta.volume_basis == "dre"
    assert any("vesicularity 0.15" in x for p in vol.provenance for x in p.assumptions)
    # every demo file is recorded with its SHA-256
    assert len(a.sources()) == 10 and all(len(sha) == 64 for sha in a.sources())
    # a second run rebuilds from scratch and gives the same manifest series
    before = json.loads((arc / "manifest.json").read_text())["series"].keys()
    assert run(["demo", "--archive", str(arc), "--out", str(tmp_path / "reports")]) == 0
    assert json.loads((arc / "manifest.json").read_text())["series"].keys() == before

"""One petrological S content per run: the verdict, the gas budget and the report's table use the same values.

Review finding: the record-level verdict computed its petrological expectation from the typed [petrology] values
while the budget used the melt-inclusion S populations (Devine, Sigurdsson & Davis 1984, bootstrap over analyses).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from degas.analysis.budget import PetrologyInputs
from degas.io.base import ReadOptions
from degas.model import SeriesMeta, make_series
from degas.project import Project
from degas.store import Archive

# REFERENCES §1.2 worked check (arithmetic from Devine et al. 1984): S_MI 1500 ppm, S_MG 200 ppm, ρ 2600 kg/m³,
# φ 0.40 -> 12.156 kg/s of SO2 at 3.0 m³/s DRE, i.e. 4.0521 kg SO2 per m³ DRE
DEVINE_K = 12.156 / 3.0


@pytest.fixture(scope="module")
def archive(tmp_path_factory):
    from degas.demo import generate_scenario

    tmp = tmp_path_factory.mktemp("petro")
    sc = generate_scenario()
    arc = Archive.create(tmp / "a")
    so2 = sc.so2_kg_s
    arc.add(make_series(SeriesMeta("gas_flux", "so2_flux", station="n", species="SO2", unit="kg/s"), sc.days, so2,
                        uncertainty=0.1 * so2))
    arc.add(make_series(SeriesMeta("extrusion_rate", "extrusion_rate", unit="m^3/s", volume_basis="dre"),
                        sc.days, sc.extrusion_m3_s))
    # every analysis at the worked example's S contents: the bootstrap draws are all the Devine value
    (tmp / "mi.csv").write_text("Sample,Phase,Eruption date,Type,H2O (wt%),CO2 (ppm),S (ppm)\n"
                                + "".join(f"I{i},p,2023-06-01,MI,4.{i},300,1500\n" for i in range(5))
                                + "".join(f"G{i},p,2023-06-01,matrix glass,0.2,,200\n" for i in range(4)))
    arc.ingest_file(tmp / "mi.csv", ReadOptions(kind="melt_inclusions"))
    return arc


def _project(**inclusions) -> Project:
    p = Project(volcano="Testvolcano", bootstrap=50, surrogates=50, rolling_surrogates=20,
                # typed values far from the inclusions' (9.3 kg/m³ against 4.05): a mix-up cannot pass unseen
                petrology=PetrologyInputs.from_ppm(3000.0, 100.0, s_mi_sd_ppm=100.0, density_kg_m3=2700.0,
                                                   crystal_fraction=0.3))
    inc = dataclasses.replace(p.inclusions, dense_density_kg_m3=2600.0, dense_density_sd_kg_m3=0.0,
                              crystal_fraction=0.40, crystal_fraction_sd=0.0, bootstrap=200, **inclusions)
    return dataclasses.replace(p, inclusions=inc)


def _run(archive, project):
    from degas.pipeline import run_all

    return run_all(archive, project, mode="retrospective", only=("regimes", "gas budget"))


def test_verdict_and_budget_use_the_inclusions(archive):
    from degas.report import _methods
    from degas.report.summary import _num, verdict_sentence

    b = _run(archive, _project())
    assert b.petrology.origin == "inclusions"
    rel = b.regimes.relation
    k_budget = b.budget.petrology.so2_per_m3
    assert rel.petrological_k == k_budget  # one source: the same number, not two close ones
    assert k_budget == pytest.approx(DEVINE_K, rel=1e-4)  # REFERENCES §1.2 (Devine et al. 1984)
    o = b.budget.overall
    assert o["expected_so2_kg"] / o["dre_volume_both_m3"] == pytest.approx(rel.petrological_k, rel=1e-12)
    text = verdict_sentence(b).text
    assert f"from 5 inclusion and 4 matrix-glass S analyses) {_num(rel.petrological_k)} kg SO2 per m³ DRE" in text
    html = _methods(b)
    table = html[html.index("<h3>Petrological inputs</h3>"):]
    table = table[:table.index("</p>")]
    assert "mean of 5 inclusion analyses" in table and "mean of 4 matrix-glass analyses" in table
    assert "typed [petrology] values are not used" in table
    assert "3000" not in table  # the typed S content is not shown as if it were used


def test_typed_values_when_the_inclusions_are_not_used(archive):
    from degas.report import _methods
    from degas.report.summary import verdict_sentence

    b = _run(archive, _project(budget_from_inclusions=False))
    assert b.petrology.origin == "typed"
    typed = b.project.petrology
    assert b.regimes.relation.petrological_k == b.budget.petrology.so2_per_m3 == typed.so2_per_m3
    # Devine et al. (1984) with M_SO2/M_S = 1.998 (IUPAC): 1.998 × 2900e-6 × 2700 × 0.7
    assert typed.so2_per_m3 == pytest.approx(1.99807 * 2900e-6 * 2700.0 * 0.7, rel=1e-4)
    assert "from the project's typed [petrology] values" in verdict_sentence(b).text
    html = _methods(b)
    table = html[html.index("<h3>Petrological inputs</h3>"):]
    table = table[:table.index("</p>")]
    assert "typed [petrology]" in table and "inclusion analyses" not in table
    assert "inclusion S analyses are not used" in table


def test_budget_command_with_project_prints_the_verdicts_petrology(archive, tmp_path, capsys):
    import json
    import re

    from degas.cli import main  # noqa: F401  (registers every command)
    from degas.cli._app import run
    from degas.project import load_project

    proj = tmp_path / "p.toml"
    proj.write_text("[analysis]\nbootstrap = 50\nsurrogates = 50\n[petrology]\ns_melt_inclusion_ppm = 3000\n"
                    "s_matrix_glass_ppm = 100\n"
                    "[inclusions]\ndense_density_kg_m3 = 2600\ncrystal_fraction = 0.40\nbootstrap = 200\n")
    out = tmp_path / "b.json"
    assert run(["budget", str(archive.root), "--project", str(proj), "--json", str(out)]) == 0
    text = capsys.readouterr().out
    line = re.search(r"4\.052 kg per m³ DRE \(95 % ([\d.]+)–([\d.]+)\), from 5 inclusion and 4 matrix-glass S "
                     r"analyses", text)
    assert line, text
    # the interval is the verdict's own (the report's), not a second draw
    b = _run(archive, load_project(proj))
    lo, hi = b.regimes.relation.petrological_k_ci
    assert (float(line[1]), float(line[2])) == (float(f"{lo:.3g}"), float(f"{hi:.3g}"))
    seg = json.loads(out.read_text())["segments"][-1]
    assert seg["expected_so2_kg"] / seg["dre_volume_both_m3"] == pytest.approx(DEVINE_K, rel=1e-4)
    assert np.isfinite(seg["excess_factor"])

"""The relation in the whole run: survey volumes as magma output, the verdict first in the summary."""

from __future__ import annotations

import pandas as pd
import pytest

from tests.conftest import REPO


@pytest.fixture(scope="module")
def archive(tmp_path_factory):
    from degas.cli.archive_cmds import build_demo_archive

    return build_demo_archive(REPO / "demo_series", tmp_path_factory.mktemp("rel") / "archive")


def test_survey_volumes_give_slope_changes_and_regimes(archive):
    from degas.pipeline import run_all
    from degas.project import Project

    (vol,) = archive.find(kind="erupted_volume")
    p = Project(volcano="Velmarra", gas=("gas_flux.so2_flux.VLM-N", "gas_flux.so2_flux.VLM-S"), magma=vol.series_id,
                bootstrap=100)
    b = run_all(archive, p, mode="retrospective", only=("change points", "regimes"))
    sl = b.volume_slopes
    assert sl is not None and "magma" not in b.changepoints  # slopes of the volume, not level shifts of rates
    # the demo's output stops on 2023-12-01 and resumes on 2024-06-01 (truth.json): changes of slope near both
    for true in ("2023-12-01", "2024-06-01"):
        assert min(abs(t - pd.Timestamp(true, tz="UTC")) for t in sl.change_times) <= pd.Timedelta("75D")
    pause = sl.segments[(sl.segments["start"] >= pd.Timestamp("2023-12-01", tz="UTC"))
                        & (sl.segments["end"] <= pd.Timestamp("2024-06-01", tz="UTC"))]
    assert (pause["rate_m3_s"].abs() < 0.3).all()
    iv = b.regimes.intervals
    mid = iv[(iv["start"] <= pd.Timestamp("2024-03-01", tz="UTC")) & (iv["end"] > pd.Timestamp("2024-03-01", tz="UTC"))]
    assert mid["label"].iloc[0] == "gas_only"


def test_summary_first_line_is_the_verdict(archive):
    from degas.pipeline import run_all
    from degas.project import load_project
    from degas.report.summary import summarise

    b = run_all(archive, load_project(REPO / "demo_series" / "velmarra.toml"), mode="retrospective",
                only=("change points", "regimes"))
    first = summarise(b)[0]
    assert first.key == "verdict" and first.text.startswith("Record-level verdict: gas tracks magma output")
    rel = b.regimes.relation
    assert f"k = {rel.k:.3g} kg SO2 per m³ DRE" in first.text and "Devine et al. 1984" in first.text
    # the demo's coupled phases have gas leading by 3-5 days (truth.json)
    assert 3 <= rel.lag_days <= 5 and 3 <= b.regimes.lags.lag_days <= 5


def test_report_has_the_scatter_of_gas_against_lagged_output(archive):
    from degas.pipeline import run_all
    from degas.project import load_project
    from degas.report.relation_figure import relation_scatter

    b = run_all(archive, load_project(REPO / "demo_series" / "velmarra.toml"), mode="retrospective",
                only=("change points", "regimes"))
    fig = relation_scatter(b)
    names = [t.name for t in fig.data]
    assert any(n.startswith("coupled") for n in names) and any(n.startswith("gas without") for n in names)
    assert any(n.startswith("relation: g0") for n in names)
    assert "later" in fig.layout.title.text and fig.layout.yaxis.title.text == "SO2 flux (t/d)"


def test_shifts_on_survey_volumes_reports_changes_of_slope(archive, capsys):
    from degas.cli import main  # noqa: F401  (registers every command)
    from degas.cli._app import run

    (vol,) = archive.find(kind="erupted_volume")
    assert run(["shifts", str(archive.root), vol.series_id]) == 0
    out = capsys.readouterr().out
    assert "Changes of slope" in out and "m³/s DRE" in out

"""One demo run shared by the report tests (building it takes a few seconds)."""

from __future__ import annotations

import json

import pytest

from degas.cli.archive_cmds import build_demo_archive
from tests.conftest import REPO


@pytest.fixture(scope="session")
def demo_truth() -> dict:
    return json.loads((REPO / "demo_series" / "truth.json").read_text())


@pytest.fixture(scope="session")
def demo_archive(tmp_path_factory):
    root = tmp_path_factory.mktemp("demo")
    return build_demo_archive(REPO / "demo_series", root / "archive")


def _demo_run(archive, mode: str):
    from degas.pipeline import run_all
    from degas.project import load_project

    return run_all(archive, load_project(REPO / "demo_series" / "velmarra.toml"), mode=mode)


@pytest.fixture(scope="session")
def demo_bundle(demo_archive):
    return _demo_run(demo_archive, "retrospective")


@pytest.fixture(scope="session")
def demo_report(demo_bundle, tmp_path_factory):
    from degas.report import write_report

    out = tmp_path_factory.mktemp("report")
    # static figures are exported (and checked) once, by the CLI test of `degas report --appendix`
    path = write_report(demo_bundle, out, appendix=out / "appendix", static=False)
    return path, out / "appendix"


@pytest.fixture(scope="session")
def demo_weekly_bundle(demo_archive):
    return _demo_run(demo_archive, "weekly")


@pytest.fixture(scope="session")
def demo_weekly_report(demo_weekly_bundle, tmp_path_factory):
    from degas.report import write_report

    out = tmp_path_factory.mktemp("weekly")
    return write_report(demo_weekly_bundle, out)

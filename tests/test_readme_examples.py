"""Every `degas ...` example line of README.md runs as written on the demo archive (issue 9)."""

from __future__ import annotations

import os
import re
import shlex

import pytest

from degas.cli import main  # noqa: F401  (registers every command)
from degas.cli._app import run
from tests.conftest import REPO


def _examples() -> list[str]:
    text = (REPO / "README.md").read_text(encoding="utf-8")
    lines = []
    for block in re.findall(r"```\n(.*?)```", text, flags=re.S):
        for line in block.splitlines():
            line = line.split("  #")[0].strip()
            if line.startswith("degas ") and line != "degas demo":
                lines.append(line)
    return lines


def test_readme_has_examples():
    ex = _examples()
    assert any(e.startswith("degas regimes") for e in ex) and any("--project" in e for e in ex)


@pytest.fixture(scope="module")
def workdir(tmp_path_factory):
    from degas.cli.archive_cmds import build_demo_archive

    root = tmp_path_factory.mktemp("readme")
    (root / "reports").mkdir()
    build_demo_archive(REPO / "demo_series", root / "reports" / "demo-archive")  # what `degas demo` builds
    (root / "demo_series").symlink_to(REPO / "demo_series")
    return root


@pytest.mark.parametrize("line", _examples())
def test_readme_example_runs(line, workdir, monkeypatch, capsys):
    monkeypatch.chdir(workdir)
    args = shlex.split(line)[1:]
    if args[0] == "couple":
        args += ["--surrogates", "100", "--boot", "50"]  # the same code path, fewer replicates (test time only)
    code = run(args)
    captured = capsys.readouterr()
    assert code == 0, f"{line}\n{captured.err}"
    assert "Traceback" not in captured.out + captured.err
    assert os.getcwd() == str(workdir)

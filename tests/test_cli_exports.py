"""The README's everyday examples for real exports run as written (sheet, time origin, counts, forget)."""

from __future__ import annotations

import os
import shlex
from pathlib import Path

from degas.cli._app import run

ROOT = Path(__file__).resolve().parents[1]
NEW = ("so2_flux_by_year.xlsx", "so2_flux_day_numbers.csv", "seismic_daily_counts.csv", "degas forget", "formats")


def _examples() -> list[list[str]]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    block = text.split("## Everyday use", 1)[1].split("```", 2)[1]
    out = []
    for line in block.splitlines():
        cmd = line.split("#", 1)[0].strip()
        if cmd.startswith("degas ") and any(k in line for k in NEW):
            out.append(shlex.split(cmd)[1:])
    return out


def test_readme_export_examples_run_as_written(tmp_path, capsys):
    examples = _examples()
    assert [e[0] for e in examples] == ["ingest", "ingest", "ingest", "quakes", "forget", "formats"]
    (tmp_path / "demo_series").symlink_to(ROOT / "demo_series")
    cwd = os.getcwd()
    os.chdir(tmp_path)
    try:
        for args in examples:
            assert run(args) == 0, (args, capsys.readouterr())
    finally:
        os.chdir(cwd)
    out = capsys.readouterr().out
    assert "--sheet NAME|N|all" in out and "read all 3 sheets" in out
    assert "times are days counted from 2023-01-01 UTC" in out
    assert "Seismicity from counts by class" in out and "so2_flux_day_numbers.csv: forgotten" in out

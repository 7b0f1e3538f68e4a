"""Start-up stays light (issue 12, target 5): `degas --help` and every command's --help import no pandas/numpy.

Not a timed test (times live in tests/benchmarks/bench_paths.py startup): it checks ``sys.modules`` of a fresh
interpreter, so a module-level ``import pandas`` added anywhere on the help path fails here.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

HEAVY = ("pandas", "numpy", "scipy", "statsmodels", "plotly", "numba", "pint", "pyarrow", "degas.model")

SCRIPT = f"""
import json, sys
from degas.cli import app
from degas.cli._app import run

codes = {{"": run(["--help"])}}
for cmd in app.registered_commands:
    name = cmd.name or cmd.callback.__name__.replace("_", "-")
    codes[name] = run([name, "--help"])
print(json.dumps({{"codes": codes, "heavy": sorted(m for m in {HEAVY!r} if m in sys.modules)}}))
"""


def test_help_of_the_app_and_of_every_command_imports_no_heavy_module():
    proc = subprocess.run([sys.executable, "-c", SCRIPT], capture_output=True, text=True, check=True,
                          env={**os.environ, "COLUMNS": "100"})
    got = json.loads(proc.stdout.strip().splitlines()[-1])
    assert got["heavy"] == []
    assert len(got["codes"]) >= 12  # the app and each registered command were asked for help
    assert set(got["codes"].values()) == {0}


def test_the_facade_still_offers_the_model_classes():
    import degas
    from degas.model import TimeSeries

    assert degas.TimeSeries is TimeSeries
    assert "TimeSeries" in degas.__all__

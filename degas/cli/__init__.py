"""The thin command-line interface: each command parses options, calls the library, prints.

Commands live in one module each under ``degas/cli/`` and register themselves on ``app``.
User errors (DegasError) end with a one-line message and exit code 2, never a traceback.
"""

from __future__ import annotations

import sys

# Command modules register on import; keep this list in sync with the files in this folder.
import degas.cli.depth_cmds  # noqa: E402,F401  (issue 14: degas depths)
from degas.cli import archive_cmds, change_cmds, coupling_cmds, report_cmds, seismic_cmds  # noqa: E402,F401
from degas.cli._app import app, console  # noqa: F401


def main() -> None:
    """Console-script entry point."""
    from degas.cli._app import run

    sys.exit(run())

"""The typer application object and the error boundary shared by every command."""

from __future__ import annotations

import typer
from rich.console import Console

from degas.errors import DegasError

app = typer.Typer(
    name="degas",
    help="Gas-versus-magma coupling for volcano monitoring: ingest, analyse, report.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)
console = Console(highlight=False, soft_wrap=True)
err_console = Console(stderr=True, highlight=False, soft_wrap=True)


def run(argv: list[str] | None = None) -> int:
    """Run the app; DegasError becomes a one-line message and exit code 2, never a traceback."""
    try:
        app(args=argv, prog_name="degas")
    except SystemExit as exc:
        code = exc.code
        return code if isinstance(code, int) else (0 if code is None else 1)
    except DegasError as exc:
        err_console.print(f"degas: error: {exc}", markup=False)
        return 2
    except KeyboardInterrupt:
        err_console.print("degas: interrupted; the archive keeps its last completed write", markup=False)
        return 130
    return 0

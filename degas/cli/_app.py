"""The typer application object and the error boundary shared by every command."""

from __future__ import annotations

import sys

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
console = Console(highlight=False)
err_console = Console(stderr=True, highlight=False)


def run(argv: list[str] | None = None) -> int:
    """Run the app; turn DegasError (and bad files) into a one-line message and exit code 2."""
    try:
        app(args=argv, standalone_mode=False)
    except DegasError as exc:
        err_console.print(f"degas: error: {exc}", markup=False)
        return 2
    except typer.Exit as exc:
        return int(exc.exit_code or 0)
    except typer.Abort:
        err_console.print("degas: aborted", markup=False)
        return 130
    except KeyboardInterrupt:
        err_console.print("degas: interrupted; the archive is unchanged unless a write had completed", markup=False)
        return 130
    except Exception as exc:  # click usage errors and the like
        import click

        if isinstance(exc, click.exceptions.ClickException):
            exc.show(file=sys.stderr)
            return exc.exit_code
        raise
    return 0

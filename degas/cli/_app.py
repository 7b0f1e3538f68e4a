"""The typer application object and the error boundary shared by every command."""

from __future__ import annotations

import warnings

import typer
from rich.console import Console

from degas.errors import DegasError, SettingNotUsedWarning

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
    """Run the app; DegasError becomes a one-line message and exit code 2, never a traceback.

    A :class:`~degas.errors.SettingNotUsedWarning` (e.g. a retired project key) is printed as one line
    ``degas: note: …`` on standard error, once per command even when a file is read twice; other warnings
    keep Python's own display.
    """
    with warnings.catch_warnings():
        warnings.simplefilter("always", SettingNotUsedWarning)
        shown, said = warnings.showwarning, set()

        def note(message, category, filename, lineno, file=None, line=None):
            if issubclass(category, SettingNotUsedWarning):
                if str(message) not in said:
                    said.add(str(message))
                    err_console.print(f"degas: note: {one_line(str(message))}", markup=False)
            else:
                shown(message, category, filename, lineno, file, line)

        warnings.showwarning = note
        return _run(argv)


def _run(argv: list[str] | None) -> int:
    try:
        code = app(args=argv, prog_name="degas", standalone_mode=False)
        return code if isinstance(code, int) else 0
    except SystemExit as exc:
        code = exc.code
        return code if isinstance(code, int) else (0 if code is None else 1)
    except _USAGE_ERROR as exc:  # a mistyped command line: one line, with where to look
        if not exc.format_message().strip():  # no arguments: the help was shown
            return 2
        ctx = getattr(exc, "ctx", None)
        where = f" (see '{ctx.command_path} --help')" if ctx is not None else " (see 'degas --help')"
        err_console.print(f"degas: error: {one_line(exc.format_message())}{where}", markup=False)
        return 2
    except DegasError as exc:
        err_console.print(f"degas: error: {one_line(str(exc), 2000)}", markup=False)
        return 2
    except KeyboardInterrupt:
        err_console.print("degas: interrupted; the archive keeps its last completed write", markup=False)
        return 130
    except OSError as exc:  # disk full, read-only archive, unwritable folder, name too long, missing file
        err_console.print(f"degas: error: {os_error_line(exc)}", markup=False)
        return 2
    except Exception as exc:  # noqa: BLE001 - last resort: a bug, still one line, never a traceback
        err_console.print(f"degas: internal error ({type(exc).__name__}: {one_line(str(exc))}); please report "
                          "this with the command that caused it", markup=False)
        return 3
    return 0


# The usage-error class of the click that typer ships (typer.BadParameter derives from it); named through the
# public typer.BadParameter so that no private module is imported.
_USAGE_ERROR = typer.BadParameter.__mro__[1]


def one_line(text: str, limit: int = 400) -> str:
    """``text`` with every run of white space (newlines included) as one space, cut to ``limit``."""
    text = " ".join(str(text).split())
    return text if len(text) <= limit else text[: limit - 1] + "…"


def os_error_line(exc: OSError) -> str:
    """An OSError as one line naming the path: "<path>: <problem>"."""
    what = exc.strerror or one_line(str(exc)) or type(exc).__name__
    hints = {28: "the disk is full", 30: "the file system is read-only", 13: "permission denied",
             36: "a file name is too long for the file system", 21: "is a folder, not a file"}
    if exc.errno in hints and hints[exc.errno].lower() not in what.lower():
        what = f"{what} ({hints[exc.errno]})"
    path = exc.filename if exc.filename is not None else None
    if exc.filename2 is not None:
        path = f"{exc.filename} -> {exc.filename2}"
    return f"{path}: {what}" if path is not None else what

"""Errors that degas reports to its users as one line, never as a traceback."""

from __future__ import annotations


class DegasError(Exception):
    """Base class of every error meant for the user; ``str()`` is one line."""

    def __str__(self) -> str:
        text = super().__str__()
        # a library's multi-line text quoted inside a message still gives one line
        return " ".join(text.split()) if ("\n" in text or "\r" in text) else text


class InputError(DegasError):
    """A problem with an input file: names the file, the line (1-based) and the problem."""

    def __init__(self, source: str, problem: str, line: int | None = None, column: str | None = None):
        self.source = source
        self.problem = problem
        self.line = line
        self.column = column
        where = source if line is None else f"{source}:{line}"
        if column:
            where += f" [{column}]"
        super().__init__(f"{where}: {problem}")


class UnitError(DegasError):
    """A unit that is unknown, ambiguous or of the wrong dimension; lists accepted spellings."""


class UnknownFormatError(DegasError):
    """No reader recognises a file, or an unknown reader/kind name was asked for."""


class NotEnoughDataError(DegasError):
    """Too few (valid) samples for the analysis asked for."""


class ArchiveError(DegasError):
    """The archive is missing, locked by another writer, or inconsistent."""


class ConfigError(DegasError):
    """A mapping or configuration file that cannot be used."""


class SettingNotUsedWarning(UserWarning):
    """A setting in a project file that degas accepts but no longer reads; the CLI prints it as one note line."""

"""Readers: one module per format, found by name or by looking at the first bytes.

A format is two functions and one line in ``FORMATS`` below: ``is_<fmt>(head, path)``
looks at the first 64 KiB and never raises; ``read_<fmt>(path, options)`` returns a
:class:`~degas.io.base.ReadResult` in the canonical model. Detection tries strict formats
first and the permissive delimited-text reader last.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from degas.errors import InputError, UnknownFormatError
from degas.io.base import ReadOptions, ReadResult


@dataclass(frozen=True)
class Format:
    """A registered reader: its name, what it can hold, a detector and a reader."""

    name: str
    kinds: tuple[str, ...]
    detect: Callable[[bytes, Path], bool]
    read: Callable[[Path, ReadOptions], ReadResult]


def _table(fmt: str) -> Callable[[Path, ReadOptions], ReadResult]:
    def read(path: Path, options: ReadOptions) -> ReadResult:
        from degas.io.table import read_table

        return read_table(path, options, fmt)

    return read


def _lazy(module: str, func: str) -> Callable:
    def call(*args, **kwargs):
        import importlib

        return getattr(importlib.import_module(module), func)(*args, **kwargs)

    return call


TABLE_KINDS = ("gas_flux", "gas_ratio", "extrusion_rate", "erupted_volume", "chronology", "seismic_catalog",
               "amplitude", "other", "event_counts", "melt_inclusions")

#: Registry in detection order: strict formats first, the loose delimited-text reader last.
FORMATS: tuple[Format, ...] = (
    Format("seismic_catalog/quakeml", ("seismic_catalog",), _lazy("degas.io.quakeml", "is_quakeml"),
           _lazy("degas.io.quakeml", "read_quakeml")),
    Format("seismic_catalog/fdsn_text", ("seismic_catalog",), _lazy("degas.io.fdsn_text", "is_fdsn_text"),
           _lazy("degas.io.fdsn_text", "read_fdsn_text")),
    Format("table/parquet", TABLE_KINDS, _lazy("degas.io.table", "is_parquet"), _table("parquet")),
    Format("table/excel", TABLE_KINDS, _lazy("degas.io.table", "is_excel"), _table("excel")),
    Format("table/xls", TABLE_KINDS, _lazy("degas.io.workbook", "is_xls"), _table("xls")),
    Format("table/delimited", TABLE_KINDS, _lazy("degas.io.table", "is_delimited"), _table("delimited")),
)


def list_formats() -> list[str]:
    """Names of every registered reader, in detection order."""
    return [f.name for f in FORMATS]


def get_format(name: str) -> Format:
    for f in FORMATS:
        if f.name == name or f.name.split("/")[-1] == name:
            return f
    raise UnknownFormatError(f"unknown format {name!r}; valid formats: {', '.join(list_formats())}")


def detect_format(path: Path, head: bytes | None = None) -> Format:
    """The first registered format whose detector accepts the file."""
    if head is None:
        with open(path, "rb") as fh:
            head = fh.read(64 * 1024)
    if not head.strip():
        raise InputError(path.name, "empty file")
    for f in FORMATS:
        try:
            if f.detect(head, path):
                return f
        except Exception:  # a detector must never stop detection
            continue
    raise UnknownFormatError(
        f"{path.name}: not a format degas reads (binary or unrecognised); known formats: {', '.join(list_formats())}"
    )


def read(path: str | Path, options: ReadOptions | None = None, format: str | None = None) -> ReadResult:
    """Read one file into canonical records (UTC, SI), with rejected rows and notes.

    Parameters
    ----------
    path : the file.
    options : reader options (kind, species, station, column mapping, units, time zone, ...).
    format : a registered format name (see :func:`list_formats`); None to detect.
    """
    path = Path(path)
    if not path.exists():
        raise InputError(str(path), "file not found")
    if path.is_dir():
        raise InputError(str(path), "is a directory, not a file")
    options = options or ReadOptions()
    if format is None and path.suffix.lower() in (".xls", ".xlsx", ".xlsm"):
        from degas.io.workbook import workbook_engine

        workbook_engine(path)  # a clear error when a workbook-named file is neither .xls nor .xlsx
    fmt = get_format(format) if format else detect_format(path)
    if options.kind is not None and options.kind not in fmt.kinds:
        raise InputError(path.name, f"looks like {fmt.name}, which cannot hold {options.kind} data (wrong file?)")
    import numpy as np

    from degas.io.sanity import screen

    with np.errstate(all="ignore"):  # overflow to inf / invalid to NaN: such cells are rejected row by row
        result = fmt.read(path, options)
        result = screen(result, path.name)  # impossible magnitudes and time-axis outliers become rejects
    if options.kind is not None:
        wrong = [r.meta.kind for r in result.records if r.meta.kind != options.kind]
        if wrong:
            raise InputError(path.name, f"holds {wrong[0]} data, not {options.kind} (wrong file or wrong --kind?)")
    return result


__all__ = ["FORMATS", "Format", "ReadOptions", "ReadResult", "detect_format", "get_format", "list_formats", "read"]

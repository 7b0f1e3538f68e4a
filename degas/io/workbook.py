"""Workbooks: .xlsx (openpyxl) and legacy .xls (xlrd) -> a raw table of cells, sheet by sheet.

A workbook may hold several sheets (per-year sheets are common). One is chosen with ``--sheet NAME|INDEX``
(or ``sheet = ...`` in a mapping file); ``--sheet all`` stacks every sheet of the same layout. With no choice
the first sheet is read and a note names it and lists the others, so nothing is skipped without a word.
Rows above the header row (a single cell each, "station: VLM-N") are read as metadata, like a text preamble.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from degas.errors import InputError

XLS_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"  # OLE2 compound document (BIFF .xls)
ZIP_MAGIC = b"PK\x03\x04"


def is_xls(head: bytes, path: Path) -> bool:
    """A legacy BIFF workbook: the OLE2 signature and an .xls suffix."""
    return head[:8] == XLS_MAGIC and path.suffix.lower() == ".xls"


def workbook_engine(path: Path) -> str:
    """'xlrd' for a BIFF .xls, 'openpyxl' for an .xlsx; an InputError when the bytes are neither."""
    with open(path, "rb") as fh:
        head = fh.read(8)
    if head == XLS_MAGIC:
        return "xlrd"
    if head[:4] == ZIP_MAGIC:
        return "openpyxl"
    raise InputError(path.name, "named like a workbook but is neither an .xlsx nor a legacy .xls file "
                                "(a text export renamed? rename it to .csv)")


def sheet_names(path: Path, engine: str) -> list[str]:
    try:
        if engine == "xlrd":
            import xlrd

            with xlrd.open_workbook(str(path), on_demand=True) as book:
                return [str(s) for s in book.sheet_names()]
        with pd.ExcelFile(path, engine=engine) as book:
            return [str(s) for s in book.sheet_names]
    except InputError:
        raise
    except Exception as exc:  # openpyxl / xlrd raise many types for broken files
        raise InputError(path.name, f"cannot read as an Excel workbook: {str(exc).splitlines()[0]}") from None


def choose_sheets(path: Path, names: list[str], sheet: str | None) -> tuple[list[str], list[str]]:
    """The sheets to read for ``--sheet`` (name, 1-based index, "all" or None) and notes on the choice."""
    if not names:
        raise InputError(path.name, "workbook has no sheets")
    listing = ", ".join(repr(n) for n in names)
    if sheet is None:
        notes = []
        if len(names) > 1:
            notes.append(f"{path.name}: read sheet {names[0]!r} (the first of {len(names)}); other sheets: "
                         f"{', '.join(repr(n) for n in names[1:])} (choose with --sheet NAME|INDEX|all)")
        return [names[0]], notes
    text = str(sheet).strip()
    if text.lower() == "all":
        return list(names), [f"{path.name}: read all {len(names)} sheets ({listing}) as one table"]
    if text in names:
        return [text], [f"{path.name}: read sheet {text!r}"]
    if text.isdigit():
        i = int(text)
        if 1 <= i <= len(names):
            return [names[i - 1]], [f"{path.name}: read sheet {names[i - 1]!r} (number {i})"]
    raise InputError(path.name, f"no sheet {text!r} (--sheet); sheets are {listing} (or a number 1-{len(names)}, "
                                "or all)")


def load_workbook(path: Path, sheet: str | None = None):
    """Read the chosen sheet(s) as a :class:`~degas.io.table.RawTable` (row numbers as in the spreadsheet)."""
    from degas.io.table import RawTable

    engine = workbook_engine(path)
    names = sheet_names(path, engine)
    chosen, notes = choose_sheets(path, names, sheet)
    parts = []
    for name in chosen:
        try:
            grid = (_xls_grid(path, name) if engine == "xlrd" else
                    pd.read_excel(path, sheet_name=name, header=None, dtype=object, engine=engine))
        except Exception as exc:
            raise InputError(path.name, f"cannot read sheet {name!r}: {str(exc).splitlines()[0]}") from None
        if grid.empty or grid.dropna(how="all").empty:
            if len(chosen) == 1:
                raise InputError(path.name, f"sheet {name!r} is empty")
            notes.append(f"{path.name}: sheet {name!r} is empty; skipped")
            continue
        parts.append((name, _grid_to_frame(path, name, grid, notes)))
    if not parts:
        raise InputError(path.name, "every sheet is empty")
    first_name, (frame, lines, meta) = parts[0]
    frames, all_lines = [frame], [lines]
    offset = int(lines.max()) if len(lines) else 0
    shifts = []
    for name, (f, ln, m) in parts[1:]:
        if list(f.columns) != list(frame.columns):
            raise InputError(path.name, f"--sheet all: sheet {name!r} has columns {list(f.columns)}, sheet "
                                        f"{first_name!r} has {list(frame.columns)}; read the sheets one by one")
        frames.append(f)
        all_lines.append(ln + offset)  # numbered on after the previous sheet, so a reject row names one sheet
        shifts.append(f"sheet {name!r} row N is row N+{offset}")
        offset += int(ln.max()) if len(ln) else 0
        for k, v in m.items():
            meta.setdefault(k, v)
    if len(parts) > 1:
        notes.append(f"{path.name}: rows of the stacked sheets are numbered on, one sheet after the other "
                     f"(sheet {first_name!r} as in the workbook; {'; '.join(shifts)})")
    frame = pd.concat(frames, ignore_index=True) if len(frames) > 1 else frame
    for c in frame.columns:
        col = frame[c]
        if len(col) and col.map(lambda v: isinstance(v, pd.Timestamp) or hasattr(v, "isoformat")).all():
            frame[c] = pd.to_datetime(col)
    raw = RawTable(frame, list(frame.columns), np.concatenate(all_lines).astype("int64"), meta, [],
                   line_label="row")
    raw.notes.extend(notes)
    return raw


def _xls_grid(path: Path, name: str) -> pd.DataFrame:
    """Cells of one sheet of a BIFF .xls read with xlrd; date cells become datetimes, empty cells NaN."""
    import xlrd

    with xlrd.open_workbook(str(path), on_demand=True) as book:
        sh = book.sheet_by_name(name)
        rows = []
        for i in range(sh.nrows):
            row = []
            for cell in sh.row(i):
                if cell.ctype in (xlrd.XL_CELL_EMPTY, xlrd.XL_CELL_BLANK):
                    row.append(np.nan)
                elif cell.ctype == xlrd.XL_CELL_DATE:
                    row.append(pd.Timestamp(xlrd.xldate_as_datetime(cell.value, book.datemode)))
                elif cell.ctype == xlrd.XL_CELL_ERROR:
                    row.append(np.nan)
                else:
                    row.append(cell.value)
            rows.append(row)
    return pd.DataFrame(rows, dtype=object)


def _grid_to_frame(path: Path, sheet: str, grid: pd.DataFrame,
                   notes: list[str]) -> tuple[pd.DataFrame, np.ndarray, dict]:
    """Header row (the first with two or more text cells), data rows below it, metadata rows above it.

    A column with values under an empty header cell is left out with a note in ``notes`` naming its letter.
    """
    from degas.io.table import _META

    meta: dict[str, str] = {}
    header_row = None
    for i in range(min(len(grid), 50)):
        cells = [c for c in grid.iloc[i].tolist() if isinstance(c, str) and c.strip()]
        if len(cells) >= 2:
            header_row = i
            break
        if cells:
            m = _META.match("# " + cells[0].lstrip("# "))
            if m:
                meta[m.group(1).strip().lower()] = m.group(2)
    if header_row is None:
        raise InputError(path.name, f"no header row found in the first 50 rows of sheet {sheet!r}")
    header = [str(c).strip() if c is not None and not (isinstance(c, float) and np.isnan(c)) else ""
              for c in grid.iloc[header_row].tolist()]
    keep = [i for i, h in enumerate(header) if h]
    notes.extend(_unnamed_column_notes(path, sheet, grid.iloc[header_row + 1:], header))
    names = [header[i] for i in keep]
    if len(set(names)) != len(names):
        dup = sorted({h for h in names if names.count(h) > 1})
        raise InputError(path.name, f"duplicate column names {dup} in sheet {sheet!r}", line=header_row + 1)
    frame = grid.iloc[header_row + 1:, keep].copy()
    frame.columns = names
    frame = frame.dropna(how="all")
    lines = (frame.index.to_numpy() + 1).astype("int64")  # spreadsheet row numbers
    return frame.reset_index(drop=True), lines, meta


def _unnamed_column_notes(path: Path, sheet: str, body: pd.DataFrame, header: list[str]) -> list[str]:
    """One note per column that holds values below an empty header cell (such a column is not read)."""
    from openpyxl.utils import get_column_letter

    notes = []
    for i, h in enumerate(header):
        if h:
            continue
        cells = body.iloc[:, i]
        n = int((cells.notna() & ~cells.map(lambda v: isinstance(v, str) and not v.strip())).sum())
        if n:
            notes.append(f"{path.name}: sheet {sheet!r} column {get_column_letter(i + 1)} has {n} value(s) under an "
                         "empty header; left out (give it a header in the workbook to read it)")
    return notes

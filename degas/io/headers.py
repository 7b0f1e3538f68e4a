"""Two-row headers: a name row followed by a unit row ("SO2 flux" over "t/d"), as many loggers export.

The unit row is recognised only when every filled cell of the first data row reads as a unit (or a time-zone
word such as "UTC") and none is a number; its units are folded into the headers ("SO2 flux (t/d)") so that the
ordinary header parsing of :mod:`degas.io.columns` applies, and a note says so.
"""

from __future__ import annotations

import re

import pandas as pd

from degas.io.columns import _is_unit_text, split_header

_ZONE_WORDS = re.compile(r"^(utc|gmt|local|local ?time|lt|z|utc[+-]\d{1,2}(:?\d\d)?)$", re.I)


def _cell_text(v) -> str:
    if v is None or (isinstance(v, float) and pd.isna(v)) or v is pd.NA or v is pd.NaT:
        return ""
    if not isinstance(v, str):
        return "\x00"  # a number or a date: not a unit row
    return v.strip()


def _unit_like(text: str) -> bool:
    inner = text.strip("()[]{} ")
    if not inner or re.fullmatch(r"[-+]?\d+([.,]\d*)?([eE][-+]?\d+)?", inner):
        return False
    return bool(_ZONE_WORDS.match(inner)) or _is_unit_text(inner) or inner.lower() in ("mol/mol", "counts", "count")


def merge_unit_row(raw, source: str):
    """``raw`` with its first data row folded into the headers when that row is a unit row (else unchanged)."""
    frame = raw.frame
    if len(frame) < 2:
        return raw
    cells = [_cell_text(v) for v in frame.iloc[0].tolist()]
    filled = [c for c in cells if c]
    if not filled or any(c == "\x00" or not _unit_like(c) for c in filled):
        return raw
    renamed: dict[str, str] = {}
    for col, cell in zip(frame.columns, cells, strict=True):
        if not cell:
            continue
        inner = cell.strip("()[]{} ")
        if split_header(col).unit is None:
            renamed[col] = f"{col} ({inner})"
    new = frame.iloc[1:].reset_index(drop=True).rename(columns=renamed)
    if len(set(new.columns)) != len(new.columns):
        return raw
    raw.frame = new
    raw.headers = list(new.columns)
    raw.lines = raw.lines[1:]
    shown = ", ".join(f"{a!r} -> {b!r}" for a, b in renamed.items()) or "no header changed"
    raw.notes.append(f"{source}: second header row read as units ({shown})")
    return raw

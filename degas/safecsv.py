"""Cells that are safe to open in a spreadsheet (no formula injection from input text)."""

from __future__ import annotations

import re

import pandas as pd

_FORMULA_START = re.compile(r"^[=+\-@\t\r|%]")


def protect_cell(value):
    """Text a spreadsheet would run as a formula (starting with = + - @ tab CR | %) gets a leading apostrophe.

    Numbers stay numbers: "-5" and "+1.2e3" are left alone because they parse as floats (common practice,
    following the OWASP guidance on CSV injection, from memory).
    """
    if not isinstance(value, str) or not _FORMULA_START.match(value):
        return value
    try:
        float(value)
        return value
    except ValueError:
        return "'" + value


def protect_frame(df: pd.DataFrame) -> pd.DataFrame:
    """A copy of ``df`` whose text cells are safe to open in a spreadsheet."""
    out = df.copy()
    for c in out.columns:
        if out[c].dtype == object or pd.api.types.is_string_dtype(out[c].dtype):
            out[c] = out[c].map(protect_cell)
    out.columns = [protect_cell(str(c)) for c in out.columns]
    return out

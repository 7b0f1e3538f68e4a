"""Row checks for counts by event class (see :mod:`degas.io.counts`): blanks kept as "not counted"."""

from __future__ import annotations

import numpy as np
import pandas as pd


def check_counts(raw, col: str, v: np.ndarray, rej, notes: list[str], source: str, blank: np.ndarray) -> None:
    """Reject text, negative, fractional or infinite counts; keep empty cells as NaN (not counted, not 0)."""
    text = raw.frame[col].astype("string").str.strip().str.lower()
    na_text = text.isin(["nan", "na", "n/a", "null", "none", "-", "--"]).to_numpy(dtype=bool, na_value=False)
    not_counted = blank | na_text
    rej.reject(np.isnan(v) & ~not_counted, col, "count is not a number", raw.frame[col])
    rej.reject(np.isinf(v), col, "infinite count", raw.frame[col])
    finite = np.isfinite(v)
    rej.reject(finite & (v < 0), col, "negative count", raw.frame[col])
    rej.reject(finite & (v != np.round(v)), col, "count is not a whole number", raw.frame[col])
    n_nc = int((not_counted & rej.alive).sum())
    if n_nc:
        notes.append(f"{source}: column {col!r}: {n_nc} empty cell(s) kept as 'not counted' (NaN), not as 0")


def count_interval_ends(times: pd.Series, assumptions: list[str]) -> pd.Series:
    """End of each counting interval when the file gives none: the start plus the usual spacing of the rows."""
    t = times.dropna().sort_values()
    step = pd.Timedelta("1D")
    if len(t) > 1:
        d = t.diff().dropna()
        d = d[d > pd.Timedelta(0)]
        if len(d):
            step = d.median()
    assumptions.append(f"each count covers {_fmt(step)} from its time stamp (the usual spacing of the rows)")
    return (times + step).astype("datetime64[ns, UTC]")


def _fmt(step: pd.Timedelta) -> str:
    if step % pd.Timedelta("1D") == pd.Timedelta(0):
        n = step // pd.Timedelta("1D")
        return "one day" if n == 1 else f"{n} days"
    return str(step)

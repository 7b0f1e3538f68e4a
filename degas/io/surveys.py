"""Checks on survey files of cumulative erupted volume: a cumulative total never decreases, and surveys come
in date order. Both are flagged, never silently repaired (a decrease is usually a re-survey with a new method
or a typo; an out-of-order row is usually a mistyped date)."""

from __future__ import annotations

import numpy as np
import pandas as pd


def flag_out_of_order(df: pd.DataFrame, lines: np.ndarray, source: str, notes: list[str]) -> None:
    """A note naming the file lines of surveys dated before the survey above them."""
    t = df["time"].to_numpy(dtype="datetime64[ns]")
    if len(t) < 2:
        return
    before = np.r_[False, t[1:] < np.maximum.accumulate(t)[:-1]]
    if before.any():
        shown = ", ".join(str(int(x)) for x in lines[before][:10])
        notes.append(f"{source}: survey(s) on line(s) {shown} dated before an earlier row of the file: check "
                     "those dates (kept, in date order)")


def reject_decreases(part: pd.DataFrame, lines: np.ndarray, source: str, rejects: list, column: str
                     ) -> tuple[pd.DataFrame, np.ndarray]:
    """Reject each survey (in date order) whose cumulative volume is below the largest volume before it."""
    v = part["value"].to_numpy(dtype="float64")
    if len(v) < 2:
        return part, lines
    prior = np.maximum.accumulate(np.where(np.isfinite(v), v, -np.inf))
    drop = np.r_[False, v[1:] < prior[:-1]]
    if not drop.any():
        return part, lines
    for i in np.flatnonzero(drop):
        j = int(np.flatnonzero(v[:i] == prior[i - 1])[-1])
        rejects.append((source, int(lines[i]), column, f"cumulative volume decreases from line {int(lines[j])} "
                                                       "(a cumulative total cannot fall; check the survey)",
                        str(part["time"].iloc[i])))
    return part.loc[~drop].reset_index(drop=True), lines[~drop]

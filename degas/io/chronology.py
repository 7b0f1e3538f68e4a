"""Eruption chronologies as published: point events, open phases, free-text states, several locations.

* A row with a start and **no end** is a **point event** (an explosion, a collapse: end = start) unless the end
  cell, the state or the note says the phase is ongoing ("ongoing", "continuing", "to date", "present") or the
  end is a far-future sentinel (9999-01-01, 9999-12-31): then it is an open interval (end NaT).
* Free-text states go through a word table (defaults below, extended or overridden by the user's
  ``[state_map]``); whole words and phrases are matched, longest first, so "no extrusion" is a pause and
  "emission" is not "on". A state nothing maps stays ``unknown`` and the note lists it.
* Rows that differ only by location (vent, crater, sector) are distinct records: one chronology per location.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

ONGOING = re.compile(r"\b(?:ongoing|on-going|continuing|continues|still|to date|present|current|until now|open)\b",
                     re.I)

STATE_WORDS: dict[str, tuple[str, ...]] = {
    "eruptive": ("eruptive", "eruption", "erupting", "active", "extrusion", "extruding", "effusive", "explosive",
                 "dome growth", "growth", "lava", "on", "eruptive phase", "ongoing eruption", "explosion",
                 "explosions", "lava flow", "dome extrusion"),
    "pause": ("pause", "paused", "repose", "quiet", "quiescent", "quiescence", "hiatus", "inactive",
              "no extrusion", "no eruption", "off", "rest", "dormant", "dormancy", "end of eruption"),
    "unknown": ("unknown", "?", "uncertain", "n/a", "na", ""),
}


def state_table(user_map: dict[str, str] | None) -> dict[str, str]:
    """Lower-case phrase -> state: the defaults, then the user's ``[state_map]`` (which wins)."""
    table = {w: k for k, ws in STATE_WORDS.items() for w in ws}
    table.update({str(k).strip().lower(): v for k, v in (user_map or {}).items()})
    return table


def map_states(col: pd.Series | None, n: int, user_map: dict[str, str] | None) -> tuple[pd.Series, list[str]]:
    """States of each row and the texts that could not be mapped (kept ``unknown``)."""
    if col is None:
        return pd.Series("unknown", index=range(n), dtype="string"), []
    table = state_table(user_map)
    phrases = sorted((p for p in table if p), key=len, reverse=True)
    pattern = re.compile(r"(?<![\w-])(" + "|".join(re.escape(p) for p in phrases) + r")(?![\w-])")
    s = col.astype("string").str.strip().str.lower().fillna("")
    cache: dict[str, str] = {}
    unmapped: list[str] = []
    out = []
    for text in s.to_numpy():
        if text not in cache:
            if text in table:
                cache[text] = table[text]
            else:
                m = pattern.search(text)
                cache[text] = table[m.group(1)] if m else "unknown"
                if not m:
                    unmapped.append(text)
        out.append(cache[text])
    return pd.Series(out, index=col.index, dtype="string"), unmapped


def open_or_point(start: pd.Series, end_col: pd.Series | None, blank_end: np.ndarray, sentinel: np.ndarray,
                  said: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """(open, point) masks: open when the end is a sentinel or an ongoing word, or is blank and the state or
    note says ongoing; a point event when the end is blank otherwise."""
    end_text = (end_col.astype("string").str.strip().fillna("") if end_col is not None
                else pd.Series("", index=start.index, dtype="string"))
    ongoing_end = end_text.str.contains(ONGOING).to_numpy(dtype=bool, na_value=False)
    ongoing_said = said.str.contains(ONGOING).to_numpy(dtype=bool, na_value=False)
    open_ = sentinel | ongoing_end | (blank_end & ongoing_said)
    point = blank_end & ~open_
    return open_, point

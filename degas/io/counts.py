"""Daily counts by event class (VT, LP, hybrid, rockfall, ...) as observatories publish them.

A counts table has a time column and one column per event class ("VT", "LP", "Hybrid", "N rockfalls").
Each class column becomes one ``event_counts`` series (value = events counted in the row's interval). An empty
cell means "not counted" and is kept as NaN, never turned into 0; a 0 means "none". No events are invented:
analyses take these counts as rates through :func:`degas.grid.event_counts`.
"""

from __future__ import annotations

import re

from degas.io.columns import Header
from degas.io.event_classes import lookup_class, resolve_class_map
from degas.model import EVENT_CLASSES

_DECOR = re.compile(r"\b(number of|no of|nb of|n of|n|no|nb|count|counts|daily|events?|per day|num|#)\b")


def class_of_header(header: Header, class_map: dict[str, str] | None = None) -> str | None:
    """The event class a column of counts holds ("LP count", "N hybrid", "Rockfalls"), or None."""
    table = resolve_class_map(class_map)
    name = _DECOR.sub(" ", header.name.replace("#", " # ")).strip()
    for cand in (name, name.rstrip("s"), header.name):
        if not cand:
            continue
        cls = lookup_class(cand, table)
        if cls is not None and (cls != "other" or cand.strip().lower() == "other"):
            return cls
    return None


#: Frequency-band names that also label amplitude bands (RSAM "HF", "LF"): counts only when --kind says so.
_BAND_NAMES = {"hf", "lf", "high frequency", "low frequency"}


def count_columns(hdrs: dict[str, Header], taken: set[str], class_map: dict[str, str] | None,
                  *, told: bool = False) -> dict[str, str]:
    """Column -> event class for every untaken column that names an event class (band names only if ``told``)."""
    out = {}
    for col, h in hdrs.items():
        if col in taken or (not told and h.name in _BAND_NAMES and h.name not in (class_map or {})):
            continue
        cls = class_of_header(h, class_map)
        if cls is not None:
            out[col] = cls
    return out


def counts_quantity(cls: str) -> str:
    """Stored quantity name of the counts of one class ("LP" -> "lp_events")."""
    return f"{cls.lower()}_events"


def class_of_quantity(quantity: str) -> str | None:
    """Inverse of :func:`counts_quantity`."""
    stem = quantity.removesuffix("_events")
    return next((c for c in EVENT_CLASSES if c.lower() == stem), None)

"""Catalogue rules shared by the readers: man-made sources and depth sign.

* QuakeML EventType values for man-made sources ("quarry blast", "mining explosion", "nuclear explosion",
  "chemical explosion", ... - QuakeML BED 1.2 EventType enumeration, REFERENCES.md section 4.1), and an
  ``explosion`` whose certainty, description or comment says it is man-made, are classed ``other`` with a note,
  never as the volcanic ``explosion`` class.
* Catalogue depth is stored in metres positive down (below the datum). A negative depth is read as above the
  datum (a shallow event under a summit above sea level) and a note says so; ``--depth-positive up`` says that
  the file counts heights instead, and the sign is flipped.
"""

from __future__ import annotations

import re
from collections import Counter

import numpy as np

MAN_MADE_TYPES = frozenset((
    "anthropogenic event", "accidental explosion", "chemical explosion", "controlled explosion",
    "experimental explosion", "industrial explosion", "mining explosion", "quarry blast", "road cut",
    "blasting levee", "nuclear explosion", "induced or triggered event", "mine collapse", "rock burst",
))
_MAN_MADE_WORDS = re.compile(r"man[- ]?made|anthropogenic|artificial|quarry|mining|blast(ing)?\b|nuclear|"
                             r"chemical|industrial|controlled|human", re.I)


def is_man_made(ev: dict) -> bool:
    """True for a man-made QuakeML event type, or an ``explosion`` said to be man-made in its certainty,
    description or comment text."""
    label = (ev.get("type") or "").strip().lower()
    if label in MAN_MADE_TYPES:
        return True
    if label != "explosion":
        return False
    texts = [ev.get("type_certainty") or ""] + [d.get("desc_text") or "" for d in ev.get("desc", [])]
    texts += list(ev.get("comment", []))
    return any(_MAN_MADE_WORDS.search(t) for t in texts)


def man_made_note(labels: list[str]) -> str:
    counts = Counter(labels)
    shown = ", ".join(f"{n} {k or 'untyped'}" for k, n in sorted(counts.items()))
    return f"man-made sources classed as other, not as volcanic explosions: {shown}"


def apply_depth_sign(depth_m: np.ndarray, positive: str | None, assumptions: list[str]) -> np.ndarray:
    """Depth positive down; flip with ``--depth-positive up``; note negative depths (above the datum)."""
    if positive == "up":
        assumptions.append("depths given positive up (height above the datum): sign flipped to depth below it "
                           "(--depth-positive up)")
        depth_m = -depth_m
    neg = int(np.sum(depth_m < 0))
    if neg:
        hint = ("" if positive == "up" else "; if the file counts heights, use --depth-positive up")
        assumptions.append(f"{neg} event(s) with a negative depth read as above the datum (e.g. above sea "
                           f"level){hint}")
    return depth_m

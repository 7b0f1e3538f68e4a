"""The standing cautions every report carries, in degas's own words, and the caveats of each result.

This module never invents findings: it adds the fixed wording and lists the notes that the analysis
results computed from the data (gaps, assumptions, low coverage).
"""

from __future__ import annotations

STANDING_CAUTIONS: tuple[str, ...] = (
    "This report is produced automatically from the data listed under Provenance. It supports, and does not "
    "replace, the judgement of the scientists responsible for monitoring this volcano.",
    "It is a statistical description of past observations, not a forecast and not a hazard assessment. "
    "A p-value or a regime label is not a probability of eruption.",
    "Official alert levels, exclusion zones and public advice come only from the responsible volcano observatory "
    "and the civil-protection authorities. Follow their instructions and local codes and practice.",
    "Monitoring signals are ambiguous: falling SO2 can mean a sealing conduit, but also a declining supply, "
    "plume geometry or wind effects on the measurement, or scrubbing by a hydrothermal system. Unrest often ends "
    "without an eruption, and a quiet week is no proof of safety.",
)

SHORT_CAUTION = ("Decision support only — not a forecast or an official warning. Alert levels and public advice come "
                 "from the responsible observatory and civil-protection authorities.")


def caution_list(extra: list[str] | tuple[str, ...] = ()) -> list[str]:
    """The standing cautions followed by data-specific ones (gaps, assumptions), without duplicates."""
    seen: dict[str, None] = {}
    for text in (*STANDING_CAUTIONS, *extra):
        if text and text not in seen:
            seen[text] = None
    return list(seen)

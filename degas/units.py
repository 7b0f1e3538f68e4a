"""Units: parse the spellings found in monitoring exports with pint and convert to SI.

Internally degas stores every value in one canonical SI unit per kind (see
``degas.model.CANONICAL_UNIT``). Conversion happens once, in the readers, and
back to display units (t/d, m³/s DRE) only when presenting results.

Trade spellings that pint would misread are rewritten first: ``Mm3`` in
volcanology means a million cubic metres (not cubic megametres), ``kt`` means
kilotonnes (not knots) and ``tpd`` means tonnes per day. The ambiguous
``ton``/``tons`` (short, long or metric?) is refused.
"""

from __future__ import annotations

import hashlib
import re
from functools import lru_cache
from typing import TYPE_CHECKING

from degas.errors import UnitError

if TYPE_CHECKING:
    import pint


@lru_cache(maxsize=1)
def _registry() -> pint.UnitRegistry:
    """The unit registry, built on first use (pint and its registry take ~0.2 s to load)."""
    import pint

    reg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    reg.define("million_cubic_metre = 1e6 * meter ** 3")
    reg.define("kilotonne = 1e6 * kilogram = kt_")
    reg.define("megatonne = 1e9 * kilogram")
    return reg


def __getattr__(name: str):
    if name == "UREG":  # the registry under its old module-level name, loaded lazily
        return _registry()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

#: Exact conversion factor, kg/s -> t/d (1 t = 1000 kg, 1 d = 86 400 s; BIPM SI Brochure, 9th ed. 2019, table 8).
KG_S_TO_T_D = 86.4

# Whole-token rewrites applied before pint sees the string (case-sensitive where it matters).
_REWRITES: tuple[tuple[str, str], ...] = (
    (r"\bMm\s*(\^|\*\*)?\s*3\b|\bMm³", "million_cubic_metre"),
    (r"\b10\s*(\^|\*\*)\s*6\s*m\s*(\^|\*\*)?\s*3\b|\b10⁶\s*m³|\b1e6\s*m\s*(\^|\*\*)?3\b", "million_cubic_metre"),
    (r"\bkt\b", "kilotonne"),
    (r"\bMt\b", "megatonne"),
    (r"\btpd\b", "t/d"),
    (r"\btons?\s*/\s*day\b", "__ambiguous_ton__"),
    (r"\btons?\b", "__ambiguous_ton__"),
    (r"\bwt\.?\s*%|\bweight\s*%|\bmass\s*%", "percent"),
    (r"\bppmw\b", "ppm"),
    (r"\bm³", "m**3"),
    (r"\bm²", "m**2"),
    (r"\bmin\b", "minute"),
    (r"\bdays?\b", "day"),
    (r"\bd\b", "day"),
    (r"\bh\b", "hour"),
    (r"\byr\b|\ba\b(?=\s*$)", "year"),
)

#: Spellings shown to the user when a unit is not understood.
ACCEPTED_EXAMPLES: dict[str, tuple[str, ...]] = {
    "mass/time": ("t/d", "Mg/d", "kg/s", "kg s-1", "g/s", "kt/d", "tpd"),
    "volume/time": ("m3/s", "m^3/s", "m3 s-1", "m3/d", "Mm3/d"),
    "volume": ("m3", "m^3", "Mm3", "km3", "10^6 m3"),
    "dimensionless": ("mol/mol", "molar", "ppm", "%", "(none)"),
    "length": ("m", "km"),
}

_EXPONENT = re.compile(r"(?<=[A-Za-z])(-?\d+)(?![\d.])")


def _normalise(text: str) -> str:
    s = text.strip().replace("·", " ").replace("µ", "u").replace("−", "-")
    for pattern, repl in _REWRITES:
        s = re.sub(pattern, repl, s)
    # "kg s-1", "m3" -> "kg s**-1", "m**3" (not inside our own identifiers)
    s = _EXPONENT.sub(lambda m: "**" + m.group(1), s)
    s = re.sub(r"(?<=[A-Za-z0-9)])\s+(?=[A-Za-z(])", " * ", s)
    return s


@lru_cache(maxsize=512)
def parse_unit(text: str) -> pint.Unit:
    """Parse a unit spelling into a pint unit; raise UnitError listing accepted spellings."""
    raw = (text or "").strip()
    if raw.lower() in {"", "-", "none", "mol/mol", "molar", "mol mol-1", "ratio", "dimensionless", "1"}:
        return _registry().dimensionless
    if raw == "%":
        return _registry().percent
    s = _normalise(raw)
    if "__ambiguous_ton__" in s:
        raise UnitError(
            f"unit {raw!r} is ambiguous (short, long or metric ton?); write t (tonne) or Mg, e.g. 't/d'"
        )
    try:
        q = _registry().parse_expression(s)
    except Exception:  # pint raises several unrelated exception types here
        raise UnitError(f"unknown unit {raw!r}; accepted spellings include {_accepted_text()}") from None
    import pint

    if not isinstance(q, pint.Quantity):
        return _registry().dimensionless
    if q.magnitude != 1:
        return _scaled_unit(q, raw)
    return q.units


def _scaled_unit(q: pint.Quantity, raw: str) -> pint.Unit:
    name = "scaled_" + hashlib.sha1(raw.encode()).hexdigest()[:12]
    if name not in _registry():
        _registry().define(f"{name} = {q.magnitude} * {q.units}")
    return _registry().Unit(name)


def _accepted_text() -> str:
    return "; ".join(f"{dim}: {', '.join(ex)}" for dim, ex in ACCEPTED_EXAMPLES.items())


def conversion_factor(from_unit: str, to_unit: str) -> float:
    """Multiplicative factor that converts values in ``from_unit`` to ``to_unit``.

    Raises UnitError when the dimensions differ (e.g. a volume given for a flux).
    """
    from pint import DimensionalityError

    src = parse_unit(from_unit)
    dst = parse_unit(to_unit)
    try:
        return float(_registry().Quantity(1.0, src).to(dst).magnitude)
    except DimensionalityError:
        raise UnitError(
            f"unit {from_unit!r} ({_dim(src)}) cannot be converted to {to_unit!r} ({_dim(dst)})"
        ) from None
    except (KeyError, ValueError, ZeroDivisionError, pint.PintError):  # e.g. a unit text scaled by 0
        raise UnitError(f"unit {from_unit!r} cannot be converted to {to_unit!r}") from None


def _dim(u: pint.Unit) -> str:
    d = str(_registry().Quantity(1.0, u).dimensionality)
    return "dimensionless" if d == "dimensionless" else d


def same_dimension(unit_a: str, unit_b: str) -> bool:
    """True when two unit spellings measure the same kind of quantity."""
    try:
        conversion_factor(unit_a, unit_b)
    except UnitError:
        return False
    return True


def kg_s_to_t_d(values):
    """Convert gas flux from kg/s (canonical) to t/d (display), exact factor 86.4."""
    return values * KG_S_TO_T_D


def t_d_to_kg_s(values):
    """Convert gas flux from t/d (display) to kg/s (canonical)."""
    return values / KG_S_TO_T_D

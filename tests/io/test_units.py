"""Unit parsing and conversion against exact and published values."""

from __future__ import annotations

import pytest

from degas.errors import UnitError
from degas.units import KG_S_TO_T_D, conversion_factor, kg_s_to_t_d, t_d_to_kg_s


def test_kg_per_s_to_t_per_d_is_exactly_86_4():
    # 1 t = 1000 kg, 1 d = 86 400 s (BIPM SI Brochure, 9th ed. 2019, non-SI units accepted for use with the SI)
    assert KG_S_TO_T_D == 86.4
    assert conversion_factor("kg/s", "t/d") == pytest.approx(86.4, rel=1e-15)
    assert t_d_to_kg_s(1000.0) == pytest.approx(11.574074074074074, rel=1e-15)
    assert kg_s_to_t_d(t_d_to_kg_s(1234.5)) == pytest.approx(1234.5, rel=1e-15)


@pytest.mark.parametrize(
    "spelling,factor_to_kg_s",
    [
        ("t/d", 1 / 86.4), ("t d-1", 1 / 86.4), ("Mg/d", 1 / 86.4),  # t ≡ Mg (identity)
        ("tpd", 1 / 86.4), ("kg/s", 1.0), ("kg s-1", 1.0), ("kg s^-1", 1.0), ("g/s", 1e-3),
        ("kt/d", 1e6 / 86400),  # kilotonnes, not knots
        ("tonne/day", 1 / 86.4),
    ],
)
def test_flux_spellings(spelling, factor_to_kg_s):
    assert conversion_factor(spelling, "kg/s") == pytest.approx(factor_to_kg_s, rel=1e-12)


@pytest.mark.parametrize(
    "spelling,factor",
    [("Mm3", 1e6), ("Mm^3", 1e6), ("10^6 m3", 1e6), ("m3", 1.0), ("m³", 1.0), ("km3", 1e9)],
)
def test_volume_spellings_use_the_trade_meaning_of_mm3(spelling, factor):
    # In volcanology "Mm3" is a million cubic metres (common practice), not a cubic megametre.
    assert conversion_factor(spelling, "m^3") == pytest.approx(factor, rel=1e-12)


def test_rates_and_lengths():
    assert conversion_factor("m3/d", "m^3/s") == pytest.approx(1 / 86400, rel=1e-12)
    assert conversion_factor("Mm3/d", "m^3/s") == pytest.approx(1e6 / 86400, rel=1e-12)
    assert conversion_factor("km", "m") == 1000.0
    assert conversion_factor("ppm", "mol/mol") == pytest.approx(1e-6)
    assert conversion_factor("%", "mol/mol") == pytest.approx(0.01)


@pytest.mark.parametrize("ambiguous", ["tons/day", "ton/d", "tons"])
def test_ambiguous_tons_are_refused(ambiguous):
    # A US short ton is 907.18474 kg (value from memory); refusing beats guessing.
    with pytest.raises(UnitError, match="ambiguous"):
        conversion_factor(ambiguous, "kg/s")


def test_unknown_unit_lists_accepted_spellings():
    with pytest.raises(UnitError, match="accepted spellings include"):
        conversion_factor("blorps/day", "kg/s")


def test_wrong_dimension_is_refused():
    with pytest.raises(UnitError, match="cannot be converted"):
        conversion_factor("m3/s", "kg/s")

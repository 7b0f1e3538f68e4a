"""Molar masses against IUPAC 2021 conventional atomic weights (Prohaska et al. 2022)."""

import pytest

from degas import chem
from degas.errors import DegasError


def test_atomic_weights_are_iupac_2021_conventional():
    # Prohaska et al. (2022), Pure Appl. Chem. 94, 573-600: conventional values.
    assert chem.ATOMIC_WEIGHT == {"H": 1.008, "C": 12.011, "O": 15.999, "S": 32.06}


@pytest.mark.parametrize(
    "species,expected",
    # Derived from the Prohaska et al. (2022) weights; REFERENCES §2.2 [D].
    [("SO2", 64.058), ("CO2", 44.009), ("H2O", 18.015), ("H2S", 34.076), ("SO3", 80.057), ("S", 32.06)],
)
def test_molar_masses(species, expected):
    assert chem.molar_mass(species) == pytest.approx(expected, abs=1e-9)


def test_ratios():
    # REFERENCES §2.2 [D], from Prohaska et al. (2022) weights.
    assert chem.SO2_PER_S == pytest.approx(1.998066, rel=1e-6)
    assert chem.CO2_PER_SO2_MASS == pytest.approx(0.687018, rel=1e-6)
    assert chem.SO2_PER_CO2_MASS == pytest.approx(1.455566, rel=1e-6)
    assert chem.S_PER_SO3 == pytest.approx(0.40047, rel=1e-4)


def test_ratio_conversions_round_trip():
    m = chem.molar_to_mass_ratio(2.0, "CO2", "SO2")
    assert m == pytest.approx(2.0 * 0.687018, rel=1e-6)
    assert chem.mass_to_molar_ratio(m, "CO2", "SO2") == pytest.approx(2.0)


def test_unknown_species_lists_valid():
    with pytest.raises(DegasError, match="valid: S, SO2"):
        chem.molar_mass("HCl")

"""Molar masses of volcanic gas species from IUPAC standard atomic weights.

Atomic weights are the IUPAC 2021 *conventional* values (Prohaska et al. 2022, Standard atomic
weights of the elements 2021, Pure Appl. Chem. 94, 573-600, doi:10.1515/pac-2019-0603):
H 1.008, C 12.011, O 15.999, S 32.06 g/mol. Every molar mass below is derived from them, so a
change of convention is one edit here. Units: g/mol (numerically equal to kg/kmol); ratios are
dimensionless.
"""

from __future__ import annotations

from types import MappingProxyType

from degas.errors import DegasError

#: IUPAC 2021 conventional standard atomic weights, g/mol (Prohaska et al. 2022).
ATOMIC_WEIGHT = MappingProxyType({"H": 1.008, "C": 12.011, "O": 15.999, "S": 32.06})

_FORMULAS: dict[str, dict[str, int]] = {
    "S": {"S": 1},
    "SO2": {"S": 1, "O": 2},
    "SO3": {"S": 1, "O": 3},
    "CO2": {"C": 1, "O": 2},
    "H2S": {"H": 2, "S": 1},
    "H2O": {"H": 2, "O": 1},
}


def molar_mass(species: str) -> float:
    """Molar mass of ``species`` (one of S, SO2, SO3, CO2, H2S, H2O) in g/mol."""
    try:
        formula = _FORMULAS[species]
    except KeyError:
        raise DegasError(f"unknown species {species!r}; valid: {', '.join(_FORMULAS)}") from None
    return sum(ATOMIC_WEIGHT[el] * k for el, k in formula.items())


M_S = molar_mass("S")
M_SO2 = molar_mass("SO2")  # 64.058 g/mol
M_SO3 = molar_mass("SO3")  # 80.057 g/mol
M_CO2 = molar_mass("CO2")  # 44.009 g/mol
M_H2S = molar_mass("H2S")  # 34.076 g/mol
M_H2O = molar_mass("H2O")  # 18.015 g/mol

#: Mass of SO2 per mass of S (≈ 1.998; the common "× 2" shortcut over-estimates by 0.1 %).
SO2_PER_S = M_SO2 / M_S
#: Mass of S per mass of SO3 (microprobe SO3 wt% -> S wt%).
S_PER_SO3 = M_S / M_SO3
#: Mass-ratio factor CO2/SO2: (CO2/SO2)_mass = (CO2/SO2)_molar × CO2_PER_SO2_MASS.
CO2_PER_SO2_MASS = M_CO2 / M_SO2
#: Inverse: (CO2/SO2)_molar = (CO2/SO2)_mass × SO2_PER_CO2_MASS.
SO2_PER_CO2_MASS = M_SO2 / M_CO2


def molar_to_mass_ratio(ratio_molar: float, numerator: str, denominator: str) -> float:
    """Convert a molar ratio numerator/denominator (mol/mol) to a mass ratio (kg/kg)."""
    return ratio_molar * molar_mass(numerator) / molar_mass(denominator)


def mass_to_molar_ratio(ratio_mass: float, numerator: str, denominator: str) -> float:
    """Convert a mass ratio numerator/denominator (kg/kg) to a molar ratio (mol/mol)."""
    return ratio_mass * molar_mass(denominator) / molar_mass(numerator)

"""Molar masses from chemical formulas (IUPAC standard atomic weights).

.. math::

    M = \\sum_e n_e\\,A_r(e)\\;M_u, \\qquad M_u = 1\\ \\mathrm{g/mol} = 10^{-3}\\ \\mathrm{kg/mol}

with :math:`n_e` the count of element *e* in the formula (:func:`uqthermo.thermo.formula.parse_formula`)
and :math:`A_r(e)` its standard atomic weight.

Source of the atomic weights: IUPAC Commission on Isotopic Abundances and Atomic Weights (CIAAW),
*Standard atomic weights of the elements 2021* (T. Prohaska et al., Pure Appl. Chem. 94 (2022)
573-600). For the elements whose standard atomic weight is an interval (H, Li, B, C, N, O,
Mg, Si, S, Cl, Ar, Br, Tl) the table holds the CIAAW *conventional* values (e.g. H 1.008,
C 12.011, O 15.999) meant for commerce and general use; the others are the single standard
values, truncated to at most six decimals. Elements without a standard atomic weight
(no stable isotope and no characteristic terrestrial composition: Tc, Pm, Po and beyond U,
except Th, Pa) are refused. The values were transcribed for this module; the tests check every
entry against the element data shipped with the ``chemicals`` package (an earlier IUPAC table)
to 3×10⁻⁴ relative, and common molar masses against the 2021 values.

Units: kg/mol (engine units); the electron mass of ions is neglected (< 6×10⁻⁴ g/mol per charge).
"""

from __future__ import annotations

from collections.abc import Mapping

from ..errors import PhysicsError
from .formula import parse_formula

__all__ = ["STANDARD_ATOMIC_WEIGHTS", "molar_mass", "formula_molar_mass"]

#: IUPAC/CIAAW 2021 standard atomic weights (conventional values for interval elements), A_r
STANDARD_ATOMIC_WEIGHTS: dict[str, float] = {
    "H": 1.008, "He": 4.002602, "Li": 6.94, "Be": 9.0121831, "B": 10.81, "C": 12.011, "N": 14.007,
    "O": 15.999, "F": 18.998403, "Ne": 20.1797, "Na": 22.989769, "Mg": 24.305, "Al": 26.981538,
    "Si": 28.085, "P": 30.973762, "S": 32.06, "Cl": 35.45, "Ar": 39.95, "K": 39.0983, "Ca": 40.078,
    "Sc": 44.955907, "Ti": 47.867, "V": 50.9415, "Cr": 51.9961, "Mn": 54.938043, "Fe": 55.845,
    "Co": 58.933194, "Ni": 58.6934, "Cu": 63.546, "Zn": 65.38, "Ga": 69.723, "Ge": 72.630,
    "As": 74.921595, "Se": 78.971, "Br": 79.904, "Kr": 83.798, "Rb": 85.4678, "Sr": 87.62,
    "Y": 88.905838, "Zr": 91.222, "Nb": 92.90637, "Mo": 95.95, "Ru": 101.07, "Rh": 102.90549,
    "Pd": 106.42, "Ag": 107.8682, "Cd": 112.414, "In": 114.818, "Sn": 118.710, "Sb": 121.760,
    "Te": 127.60, "I": 126.90447, "Xe": 131.293, "Cs": 132.905452, "Ba": 137.327, "La": 138.90547,
    "Ce": 140.116, "Pr": 140.90766, "Nd": 144.242, "Sm": 150.36, "Eu": 151.964, "Gd": 157.249,
    "Tb": 158.925354, "Dy": 162.500, "Ho": 164.930329, "Er": 167.259, "Tm": 168.934219,
    "Yb": 173.045, "Lu": 174.9668, "Hf": 178.486, "Ta": 180.94788, "W": 183.84, "Re": 186.207,
    "Os": 190.23, "Ir": 192.217, "Pt": 195.084, "Au": 196.96657, "Hg": 200.592, "Tl": 204.38,
    "Pb": 207.2, "Bi": 208.9804, "Th": 232.0377, "Pa": 231.03588, "U": 238.02891,
}


def molar_mass(elements: Mapping[str, float]) -> float:
    """Molar mass of a composition, kg/mol: :math:`M = 10^{-3}\\sum_e n_e A_r(e)` (module docstring).

    Parameters
    ----------
    elements : mapping element symbol → count
        E.g. ``{"H": 2, "O": 1}`` (from :func:`~uqthermo.thermo.formula.parse_formula`).

    Raises
    ------
    PhysicsError
        An element without an IUPAC standard atomic weight, or an empty composition.
    """
    total = 0.0
    for el, n in elements.items():
        ar = STANDARD_ATOMIC_WEIGHTS.get(el)
        if ar is None:
            raise PhysicsError(f"element {el!r} has no IUPAC standard atomic weight (no stable isotope); "
                               "its molar mass cannot be computed from the formula")
        total += float(n) * ar
    if not total > 0:
        raise PhysicsError("the formula has no elements, so it has no molar mass")
    return total * 1e-3


def formula_molar_mass(formula: str) -> float:
    """Molar mass of a formula (``"H2O"``, ``"CuSO4*5H2O"``), kg/mol."""
    return molar_mass(parse_formula(formula))

"""Molar masses from formulas (uqthermo.thermo.composition).

References: the element data shipped with `chemicals` (chemicals.elements.periodic_table, MW:
an earlier IUPAC table, so agreement to 3e-4 relative is expected, not identity) and
chemicals.elements.molecular_weight for whole formulas; the IUPAC/CIAAW 2021 conventional atomic
weights H 1.008, C 12.011, N 14.007, O 15.999, Cl 35.45 (Prohaska et al., Pure Appl. Chem. 94
(2022) 573; values recalled from that table) for the exact molar masses below.
"""

from __future__ import annotations

import pytest

from uqthermo.errors import PhysicsError
from uqthermo.thermo.composition import STANDARD_ATOMIC_WEIGHTS, formula_molar_mass, molar_mass


def test_every_atomic_weight_against_chemicals_element_data():
    from chemicals.elements import periodic_table

    for el, ar in STANDARD_ATOMIC_WEIGHTS.items():
        ref = getattr(periodic_table, el).MW
        assert ar == pytest.approx(ref, rel=3e-4), el


@pytest.mark.parametrize("formula", ["H2O", "C8H8O", "C8H10O2", "CH4", "CO2", "NH3", "CuSO4*5H2O", "C6H5Cl",
                                     "Fe(OH)3", "C12H22O11"])
def test_formula_molar_mass_against_chemicals(formula):
    from chemicals.elements import molecular_weight, nested_formula_parser

    ref = molecular_weight(nested_formula_parser(formula.split("*")[0]))
    if "*" in formula:
        ref += 5 * molecular_weight({"H": 2, "O": 1})
    assert formula_molar_mass(formula) * 1e3 == pytest.approx(ref, rel=3e-4)


def test_iupac_2021_conventional_values():
    # 2 x 1.008 + 15.999 = 18.015 g/mol; 12.011 + 4 x 1.008 = 16.043; 6 x 12.011 + 5 x 1.008 + 35.45 = 112.556
    assert formula_molar_mass("H2O") == pytest.approx(18.015e-3, abs=1e-12)
    assert formula_molar_mass("CH4") == pytest.approx(16.043e-3, abs=1e-12)
    assert formula_molar_mass("C6H5Cl") == pytest.approx(112.556e-3, abs=1e-12)
    assert formula_molar_mass("SO4^2-") == pytest.approx((32.06 + 4 * 15.999) * 1e-3)


def test_unknown_elements_are_refused():
    with pytest.raises(PhysicsError, match="standard atomic weight"):
        molar_mass({"Tc": 1})
    with pytest.raises(PhysicsError):
        molar_mass({})

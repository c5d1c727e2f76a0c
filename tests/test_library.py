"""Tests of the built-in data library against the `chemicals` package's own tables and functions
(ATcT 1.112, JANAF 1998, NIST WebBook Shomate), read independently of uqthermo.case.library."""

from __future__ import annotations

import numpy as np
import pytest

from uqthermo.errors import InputError
from uqthermo.case import library as lib

chem_reaction = pytest.importorskip("chemicals.reaction")
chem_hc = pytest.importorskip("chemicals.heat_capacity")


@pytest.mark.parametrize(
    "ident, phase, cas",
    [("CH4", "g", "74-82-8"), ("H2O", "g", "7732-18-5"), ("H2O", "l", "7732-18-5"),
     ("124-38-9", "g", "124-38-9"), ("carbon dioxide", "g", "124-38-9"), ("CH3CH2OH", "l", "64-17-5")],
)
def test_atct_formation_enthalpy_matches_chemicals_rows(ident, phase, cas):
    # Reference: chemicals' ATcT 1.112 data frames (Hfg_ATcT_data / Hfl_ATcT_data), same row;
    # ATcT "±" is a 95 % expanded uncertainty -> u = U/2.
    df = chem_reaction.Hfg_ATcT_data if phase == "g" else chem_reaction.Hfl_ATcT_data
    col = "Hfg" if phase == "g" else "Hfl"
    v = lib.lookup_formation_enthalpy(ident, phase, "ATcT")
    assert v.cas == cas
    assert v.value == float(df.loc[cas, col])
    assert v.expanded_uncertainty == float(df.loc[cas, "uncertainty"])
    assert v.u == pytest.approx(float(df.loc[cas, "uncertainty"]) / 2.0)
    assert v.coverage_factor == 2.0
    assert v.dataset == "ATcT" and v.version == "1.112" and v.unit == "J/mol"
    assert "1.112" in v.provenance and "chemicals" in v.provenance
    # and the same number through chemicals' public look-up function
    f = chem_reaction.Hfg if phase == "g" else chem_reaction.Hfl
    assert v.value == f(cas, method="ATCT_G" if phase == "g" else "ATCT_L")


def test_atct_known_values():
    # Reference: the ATcT 1.112 rows as shipped (CH4(g) -74534 ± 57, H2O(l) -285825 ± 27 J/mol).
    v = lib.lookup_formation_enthalpy("CH4", "g")
    assert (v.value, v.expanded_uncertainty, v.u) == (-74534.0, 57.0, 28.5)
    w = lib.lookup_formation_enthalpy("H2O", "l")
    assert (w.value, w.u) == (-285825.0, 13.5)


def test_reference_element_is_exact():
    # ATcT lists H2(g) as 0 with uncertainty 0: formation enthalpy zero by definition.
    v = lib.lookup_formation_enthalpy("H2", "g")
    assert v.value == 0.0 and v.u == 0.0


def test_janaf_values_match_chemicals():
    # Reference: chemicals.reaction.Hfg/Hfl/S0g with method "JANAF" (JANAF 1998 tables).
    cas = "7732-18-5"
    hg = lib.lookup_formation_enthalpy("H2O", "g", "JANAF")
    hl = lib.lookup_formation_enthalpy("water", "l", "janaf")
    sg = lib.lookup_standard_entropy("H2O", "g")
    assert hg.value == chem_reaction.Hfg(cas, method="JANAF") == -241826.0
    assert hl.value == chem_reaction.Hfl(cas, method="JANAF")
    assert sg.value == chem_reaction.S0g(cas, method="JANAF")
    assert sg.unit == "J/(mol*K)"
    assert hg.u is None and sg.u is None  # JANAF in chemicals states no uncertainty
    assert "JANAF" in hg.provenance and "1998" in hg.version
    g = lib.lookup_formation_gibbs_energy("CO2", "g")
    assert g.value == float(chem_reaction.Hfg_sources["JANAF"].loc["124-38-9", "Gfg"])


def test_webbook_shomate_h2o_gas():
    # Reference: chemicals' WebBook Shomate data for H2O(g) (stored for T in K) and the NIST
    # WebBook coefficients of H2O(g), 500-1700 K, as quoted in chemicals' Shomate() docstring
    # (A 30.09200, B 6.832514, C 6.793435, D -2.534480, E 0.082139, t = T/1000).
    c = lib.lookup_heat_capacity("H2O", "g", "shomate")
    assert c.model == "shomate" and c.u is None
    assert [(lo, hi) for lo, hi, _ in c.ranges] == [(500.0, 1700.0), (1700.0, 6000.0)]
    np.testing.assert_allclose(c.ranges[0][2], [30.092, 6.832514, 6.793435, -2.53448, 0.082139], rtol=1e-12)
    ref = chem_hc.WebBook_Shomate_gases["7732-18-5"]
    for T in (500.0, 800.0, 1500.0, 2500.0, 5000.0):
        assert float(c.cp(np.array([T]))[0]) == pytest.approx(ref.force_calculate(T), rel=1e-12)
    m = c.to_cp_model()  # thermo.cp ShomateCp from the same ranges
    np.testing.assert_allclose(m.cp(np.array([800.0, 2500.0])), [ref.force_calculate(800.0), ref.force_calculate(2500.0)],
                               rtol=1e-12)
    d = c.to_case_dict()
    assert d["ranges"][0]["T"] == ["500 K", "1700 K"] and len(d["ranges"][0]["coefficients"]) == 5


def test_shomate_liquid_and_solid_phases():
    # Reference: chemicals.heat_capacity.WebBook_Shomate_liquids / _solids for the same CAS.
    c = lib.lookup_heat_capacity("H2O", "l")
    ref = chem_hc.WebBook_Shomate_liquids["7732-18-5"]
    assert float(c.cp(np.array([350.0]))[0]) == pytest.approx(ref.force_calculate(350.0), rel=1e-12)
    s = lib.lookup_heat_capacity("Fe3O4", "cr")
    assert s.phase == "s" and s.cas == "1309-38-2"


def test_janaf_cp_table_fit():
    # Reference: chemicals' JANAF 1998 Cp table of CO2(g); the fitted Shomate curve must follow
    # the tabulated points closely over the fitted range.
    c = lib.lookup_heat_capacity("124-38-9", "g", "janaf", T_range=(298.15, 1200.0))
    T, cp = (np.asarray(v) for v in chem_hc.Cp_dict_JANAF_gas["124-38-9"])
    sel = (T >= 298.15) & (T <= 1200.0)
    np.testing.assert_allclose(c.cp(T[sel]), cp[sel], atol=0.05)
    assert c.t_min == 298.15 and c.t_max == 1200.0
    assert "largest deviation" in c.note


def test_ambiguous_formula_lists_candidates():
    # ATcT 1.112 has both ethanol (64-17-5) and dimethyl ether (115-10-6) as C2H6O(g).
    with pytest.raises(lib.LibraryLookupError) as e:
        lib.lookup_formation_enthalpy("C2H6O", "g", "ATcT")
    msg = str(e.value)
    assert "64-17-5" in msg and "115-10-6" in msg and "CAS" in msg
    assert {m.cas for m in e.value.candidates} == {"64-17-5", "115-10-6"}
    assert isinstance(e.value, InputError)
    assert lib.lookup_formation_enthalpy("ethanol", "g").cas == "64-17-5"
    # CO2 is ambiguous in ATcT too (isomers); the hint marks the one also in JANAF/shomate
    with pytest.raises(lib.LibraryLookupError, match=r"124-38-9 \(Carbon Dioxide; also in JANAF, shomate\)"):
        lib.lookup_formation_enthalpy("CO2", "g", "ATcT")


def test_missing_phase_and_unknown():
    with pytest.raises(lib.LibraryLookupError, match="phases available: g"):
        lib.lookup_formation_enthalpy("CH4", "l", "ATcT")
    with pytest.raises(InputError, match="unknown data library"):
        lib.lookup_formation_enthalpy("CH4", "g", "nonsense")
    with pytest.raises(InputError, match="unknown phase"):
        lib.lookup_formation_enthalpy("CH4", "plasma")
    with pytest.raises(lib.LibraryLookupError, match="no standard entropy"):
        lib.lookup_standard_entropy("CH4", "g", "ATcT")
    with pytest.raises(lib.LibraryLookupError, match="not found"):
        lib.lookup_formation_enthalpy("999-99-9", "g")


@pytest.mark.parametrize("formula", ["CH3C(O)OH", "NaCl", "HBr", "(CH3)3N", "CH2(CH2CH2)", "C6H5CH3", "CuSO4"])
def test_hill_formula_against_chemicals(formula):
    # Reference: chemicals.elements.atoms_to_Hill(nested_formula_parser(...)).
    from chemicals.elements import atoms_to_Hill, nested_formula_parser

    assert lib.hill_formula(formula) == atoms_to_Hill(nested_formula_parser(formula))


def test_hill_formula_charges_and_suffixes():
    assert lib.hill_formula("[CN]-") == "CN-"
    assert lib.hill_formula("[He]+2") == "He+2"
    assert lib.hill_formula("H2O (g)") == "H2O"
    assert lib.hill_formula("CuSO4.5H2O") == "CuH10O9S"
    with pytest.raises(ValueError):
        lib.hill_formula("water")


def test_search():
    res = lib.search("CO2")
    assert res[0].cas in {"124-38-9", "138832-57-2", "791121-04-5"}
    co2 = next(m for m in res if m.cas == "124-38-9")
    assert co2.formula == "CO2"
    assert co2.datasets["formation_enthalpy"]["ATcT"] == ("g",)
    assert "shomate" in co2.datasets["heat_capacity"]
    names = [m.name for m in lib.search("methane")]
    assert "Methane" in names
    assert "124-38-9" in lib.format_matches(res)
    assert lib.search("74-82-8")[0].name == "Methane"


def test_datasets_metadata():
    assert lib.DATASETS["ATcT"].version == "1.112"
    assert "u = U/2" in lib.DATASETS["ATcT"].uncertainty
    assert set(lib.DATASETS) == {"ATcT", "JANAF", "shomate"}

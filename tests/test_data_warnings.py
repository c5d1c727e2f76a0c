"""Warnings a process-safety reviewer asked for: library sources that disagree widely without a
majority, and liquids held above their normal boiling point. Checked against the `chemicals`
package's own tables and functions (chemicals.reaction.Hfg by method, chemicals.Tb,
chemicals.vapor_pressure's Wagner (McGarry 1983), Perry DIPPR 101 and Poling Antoine tables) and
IAPWS-95 (chemicals.iapws95_Psat)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from uqthermo.case.library.identify import identify
from uqthermo.case.library.selection import select_value
from uqthermo.case.loader import load_case
from conftest import write_case

chem = pytest.importorskip("chemicals")
chem_reaction = pytest.importorskip("chemicals.reaction")
chem_vp = pytest.importorskip("chemicals.vapor_pressure")

ROOT = Path(__file__).resolve().parents[1]


def _load(tmp_path, text, name="case.toml"):
    return load_case(str(write_case(tmp_path, text, name)))


def _wide(case):
    return [w for w in case.warnings if "disagree widely" in w]


def _boil(case):
    return [w for w in case.warnings if "taken as liquid" in w]


DNT = '''title = "2,4-dinitrotoluene sublimation (test)"
[species.DNT]
cas = "121-14-2"
[species.DNT.g]
formation_enthalpy = { library = "auto" }
heat_capacity = { model = "constant", value = "170 J/(mol*K)", T = ["250 K", "500 K"], source = "INVENTED" }
[species.DNT.cr]
formation_enthalpy = { library = "auto" }
heat_capacity = { model = "constant", value = "200 J/(mol*K)", T = ["250 K", "340 K"], source = "INVENTED" }
[reaction.sub]
equation = "DNT(cr) -> DNT(g)"
[[output]]
name = "h"
kind = "reaction_enthalpy"
reaction = "sub"
temperature = "298.15 K"
'''


# ------------------------------------------------------------------ sources that disagree widely
def test_dinitrotoluene_gas_formation_enthalpy_two_values_no_majority_warns(tmp_path):
    """2,4-DNT ΔfH°(g) in chemicals' tables (chemicals.reaction.Hfg): WebBook 33.2 = CRC 33.2 (one
    value reprinted, counted once) against Yaws -64.2 kJ/mol. Two independent values, no majority:
    u = half the spread = 48.7 kJ/mol, beyond the 5 kJ/mol limit (5 × the 1 kJ/mol assumed for a
    compilation, the outlier screen's floor)."""
    ref = {m: chem_reaction.Hfg("121-14-2", method=m) for m in ("WEBBOOK", "CRC", "YAWS")}
    assert ref["WEBBOOK"] == ref["CRC"] and ref["YAWS"] == pytest.approx(-64200.0)
    sel = select_value(identify(cas="121-14-2"), "formation_enthalpy", "g")
    assert sel.uncertainty.basis == "spread"
    assert sel.uncertainty.u == pytest.approx(0.5 * (max(ref.values()) - min(ref.values())))
    prov = sel.provenance()
    assert prov["wide_spread"] == {"quantity": "formation_enthalpy", "phase": "g", "limit": pytest.approx(5.0),
                                   "unit": "kJ/mol", "distinct_values": 2}
    case = _load(tmp_path, DNT)
    (line,) = _wide(case)
    assert line.startswith("DNT.g.formation_enthalpy: the sources of the formation enthalpy of 2,4-dinitrotoluene (g) "
                           "disagree widely (only two independent values, no majority)")
    for src, m in (("WebBook NIST SRD 69", "WEBBOOK"), ("CRC 95th ed. (2014)", "CRC"), ("Yaws 2nd ed. (2014)", "YAWS")):
        assert f"{src} {ref[m] / 1000:.4g}" in line
    assert "u = 48.7 kJ/mol (half their spread) is beyond 5 kJ/mol" in line
    assert line.endswith("check the primary literature or measure it")
    # the library's u is not the user's slip: no "u is 147 % of the value ... written as u" warning
    assert not any("of the value; a relative uncertainty" in w for w in case.warnings)
    # the solid's two values agree (-65.46 and -66.4 kJ/mol): no wide-spread warning for it
    assert select_value(identify(cas="121-14-2"), "formation_enthalpy", "s").provenance()["wide_spread"] is None


def test_data_command_marks_the_wide_spread(capsys):
    """``uqthermo data 121-14-2`` shows the same rule on the chosen gas-phase ΔfH° row (two independent
    values, chemicals.reaction.Hfg WEBBOOK/CRC 33.2 against YAWS -64.2 kJ/mol), and not on the solid's."""
    from uqthermo.cli import main

    assert main(["data", "121-14-2", "--limit", "1"]) == 0
    out = capsys.readouterr().out
    assert out.count("WIDE SPREAD (u > 5 kJ/mol)") == 1
    note = " ".join(out[out.index("WIDE SPREAD: "):].split())
    assert note.startswith("WIDE SPREAD: the sources disagree widely without a majority, so u (half their spread) is "
                           "beyond 5 times the uncertainty assumed for a compilation (our rule)")


def test_well_agreeing_methane_formation_enthalpy_does_not_warn(tmp_path):
    """Methane ΔfH°(g): chemicals' ATcT, JANAF, CRC, WebBook, API-TDB and Yaws values lie within
    0.4 kJ/mol (chemicals.reaction.Hfg). ATcT states its uncertainty; with CRC named, the spread rule
    applies and stays far below 5 kJ/mol: no warning either way."""
    good = [chem_reaction.Hfg("74-82-8", method=m) for m in ("ATCT_G", "JANAF", "CRC", "WEBBOOK", "API_TDB_G", "YAWS")]
    assert max(good) - min(good) < 500.0
    for src in ("auto", "CRC"):
        prov = select_value(identify(cas="74-82-8"), "formation_enthalpy", "g", source=src).provenance()
        assert prov["wide_spread"] is None
    text = ('title = "methane combustion (test)"\n'
            + "".join(f'[species.{s}]\ncas = "{c}"\n[species.{s}.g]\nformation_enthalpy = {{ library = "CRC" }}\n'
                      f'heat_capacity = {{ library = "auto" }}\n'
                      for s, c in (("CH4", "74-82-8"), ("CO2", "124-38-9"), ("H2O", "7732-18-5")))
            + '[species.O2]\n[species.O2.g]\nformation_enthalpy = "0 kJ/mol"\nheat_capacity = { library = "auto" }\n'
              '[reaction.burn]\nequation = "CH4(g) + 2 O2(g) -> CO2(g) + 2 H2O(g)"\n'
              '[[output]]\nname = "h"\nkind = "reaction_enthalpy"\nreaction = "burn"\ntemperature = "500 K"\n')
    case = _load(tmp_path, text)
    assert _wide(case) == []


def test_wide_spread_limit_is_the_outlier_floor():
    """The rule: u (basis spread) beyond OUTLIER_FACTOR × the assumed u of a compilation — the outlier
    screen's floor (ΔfH° 5 kJ/mol; ΔvapH 5 % of the value; a Cp curve 10 %, relative)."""
    from uqthermo.case.library.uncertainty import OUTLIER_FACTOR, Uncertainty, outlier_floor, wide_spread_limit

    assert OUTLIER_FACTOR == 5.0 and outlier_floor("formation_enthalpy") == (0.0, 5000.0)
    assert wide_spread_limit("formation_enthalpy", Uncertainty(5001.0, False, "spread", "")) == 5000.0
    assert wide_spread_limit("formation_enthalpy", Uncertainty(4999.0, False, "spread", "")) is None
    assert wide_spread_limit("formation_enthalpy", Uncertainty(9000.0, False, "assumed", "")) is None
    assert wide_spread_limit("vaporization_enthalpy", Uncertainty(2100.0, False, "spread", ""), 40000.0) == 2000.0
    assert wide_spread_limit("heat_capacity", Uncertainty(0.12, True, "spread", "")) == pytest.approx(0.10)
    assert wide_spread_limit("heat_capacity", Uncertainty(0.08, True, "spread", "")) is None


# ------------------------------------------------------------------ liquids above their boiling point
ESTER = '''title = "ethyl acetate and water heated as liquids (test)"
[species.EtOAc]
cas = "141-78-6"
[species.EtOAc.l]
formation_enthalpy = { library = "auto" }
heat_capacity = { model = "constant", value = "170 J/(mol*K)", T = ["250 K", "450 K"], source = "INVENTED" }
[species.W]
name = "water"
[species.W.l]
formation_enthalpy = { library = "auto" }
heat_capacity = { library = "auto" }
[[output]]
name = "warm_ester"
kind = "heating_enthalpy"
species = "EtOAc(l)"
from = "20 degC"
to = "140 degC"
[[output]]
name = "warm_ester_less"
kind = "heating_enthalpy"
species = "EtOAc(l)"
from = "20 degC"
to = "120 degC"
[[output]]
name = "warm_water"
kind = "heating_enthalpy"
species = "W(l)"
from = "20 degC"
to = "80 degC"
'''


def test_liquid_ethyl_acetate_at_140_C_warns_once_with_its_vapour_pressure(tmp_path):
    """Tb of ethyl acetate 350.25 K (chemicals.Tb: CRC); its vapour pressure at 413.15 K from the
    Wagner equation of McGarry's table (chemicals.vapor_pressure.Wagner_original on
    Psat_data_WagnerMcGarry: 5.57 bar), which Perry's DIPPR 101 (Table 2-8) and Poling's Antoine
    coefficients confirm within 1 %. Water at 80 °C (Tb 373.124 K, IAPWS-95) does not warn."""
    tb = chem.Tb("141-78-6")
    assert tb == pytest.approx(350.25)
    T = 413.15
    w = chem_vp.Psat_data_WagnerMcGarry.loc["141-78-6"]
    p_ref = chem_vp.Wagner_original(T, w.Tc, w.Pc, w.A, w.B, w.C, w.D)
    p8 = chem_vp.Psat_data_Perrys2_8.loc["141-78-6"]
    from chemicals.dippr import EQ101

    assert EQ101(T, p8.C1, p8.C2, p8.C3, p8.C4, p8.C5) == pytest.approx(p_ref, rel=0.01)
    a = chem_vp.Psat_data_AntoinePoling.loc["141-78-6"]
    assert chem_vp.Antoine(T, a.A, a.B, a.C) == pytest.approx(p_ref, rel=0.01)
    from uqthermo.case.library.vapour_pressure import vapour_pressure

    p, label = vapour_pressure("141-78-6", T)
    assert p == pytest.approx(p_ref, rel=1e-9) and "McGarry" in label

    case = _load(tmp_path, ESTER)
    (line,) = _boil(case)              # one warning per species, at its highest temperature (140 °C, not 120 °C)
    assert line == (f"output.warm_ester: EtOAc is taken as liquid at T = 413.15 K (140 °C), above its normal boiling "
                    f"point Tb = {tb:.5g} K (CRC 95th ed. (2014)): this needs a pressure above its vapour pressure there "
                    f"(about {p_ref / 1e5:.2g} bar by the Wagner equation of McGarry (1983)) — check the operating "
                    "pressure, or give the vapour phase / a transition")
    assert f"{p_ref / 1e5:.2g}" == "5.6"


WATER_HOT = '''title = "liquid water in a reaction at 150 degC (test)"
[species.H2O]
formula = "H2O"
name = "water"
[species.H2O.l]
formation_enthalpy = {{ library = "auto" }}
heat_capacity = {{ library = "auto" }}
[species.H2O.g]
formation_enthalpy = {{ library = "auto" }}
heat_capacity = {{ library = "auto" }}
{transition}
[reaction.vap]
equation = "H2O(l) -> H2O(g)"
[[output]]
name = "dvap"
kind = "reaction_enthalpy"
reaction = "vap"
temperatures = {{ from = "{lo}", to = "{hi}", step = "25 K" }}
'''


def test_liquid_water_in_a_reaction_above_100_C_warns_with_the_iapws_vapour_pressure(tmp_path):
    """ΔvapH of water held as liquid up to 150 °C: the warning's vapour pressure against IAPWS-95
    (chemicals.iapws95_Psat(423.15 K) = 4.76 bar). A reaction output up to 100 °C — 0.026 K above
    Tb = 373.124 K (chemicals.Tb: IAPWS-95), within the 1 K margin — does not warn."""
    case = _load(tmp_path, WATER_HOT.format(transition="", lo="100 degC", hi="150 degC"))
    (line,) = _boil(case)
    p_ref = chem.iapws95_Psat(423.15)
    assert p_ref == pytest.approx(4.76e5, rel=0.002)
    assert line.startswith("output.dvap: H2O is taken as liquid at T = 423.15 K (150 °C), above its normal boiling "
                           f"point Tb = {chem.Tb('7732-18-5'):.5g} K")
    got = float(line.split("(about ")[1].split(" bar")[0])
    assert got == pytest.approx(p_ref / 1e5, rel=0.02)          # two significant digits
    case = _load(tmp_path, WATER_HOT.format(transition="", lo="50 degC", hi="100 degC"))
    assert _boil(case) == []


def test_heating_through_a_transition_and_the_demos_do_not_warn(tmp_path):
    """A liquid heated past its boiling point through an l → g transition is gas above Tb (no warning);
    neither shipped demo gains a warning (the epoxide batch's water reaches 100 °C = Tb + 0.026 K in a
    reaction output, and its adiabatic rise heats the charge past Tb without evaporative cooling by
    definition)."""
    text = ('title = "water to steam (test)"\n[species.H2O]\nname = "water"\n'
            '[species.H2O.l]\nformation_enthalpy = { library = "auto" }\nheat_capacity = { library = "auto" }\n'
            '[species.H2O.g]\nheat_capacity = { library = "auto" }\n'
            '[[species.H2O.transition]]\nfrom = "l"\nto = "g"\ntemperature = { library = "auto" }\n'
            'enthalpy = { library = "auto" }\n'
            '[[output]]\nname = "steam"\nkind = "heating_enthalpy"\nspecies = "H2O(l)"\nfrom = "20 degC"\nto = "150 degC"\n')
    assert _boil(_load(tmp_path, text)) == []
    for demo in ("epoxide_hydration_batch.toml", "methanation_reactor.toml"):
        case = load_case(str(ROOT / "inputs" / demo))
        assert _boil(case) == [] and _wide(case) == []


def test_run_prints_and_writes_both_warnings(tmp_path, capsys):
    """End to end: `run` prints both warnings and writes them to results.json `warnings`."""
    from uqthermo.cli import main

    p = tmp_path / "c.toml"
    p.write_text(DNT + '''[species.EtOAc]
cas = "141-78-6"
[species.EtOAc.l]
heat_capacity = { model = "constant", value = "170 J/(mol*K)", T = ["250 K", "450 K"], source = "INVENTED" }
[[output]]
name = "warm_ester"
kind = "heating_enthalpy"
species = "EtOAc(l)"
from = "20 degC"
to = "140 degC"
''', encoding="utf-8")
    out = tmp_path / "out"
    assert main(["run", str(p), "--out", str(out), "--samples", "500", "--method", "linear", "--no-report"]) == 0
    printed = " ".join(capsys.readouterr().out.split())
    assert "DNT.g.formation_enthalpy: the sources of the formation enthalpy" in printed
    assert "output.warm_ester: EtOAc is taken as liquid at T = 413.15 K" in printed
    warnings = json.loads((out / "results.json").read_text(encoding="utf-8"))["warnings"]
    assert any(w.startswith("DNT.g.formation_enthalpy: the sources") for w in warnings)
    assert any(w.startswith("output.warm_ester: EtOAc is taken as liquid") and "bar by" in w for w in warnings)

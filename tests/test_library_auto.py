"""``library = "auto"``: selection, uncertainty rules, identification, starter cases and the data
command, checked against sources outside uqthermo: the `chemicals` package's own tables and
functions (ATcT 1.112, JANAF 1998, NIST WebBook, CRC, Yaws, TRC, Zabransky, Perry/DIPPR), CoolProp's
reference equations of state, Cantera's GRI-Mech 3.0 NASA-7 data and the `thermo` package's
Joback implementation."""

from __future__ import annotations

import json
import math
import subprocess
import sys

import numpy as np
import pytest

from uqthermo.case.library.identify import identify
from uqthermo.case.library.selection import select_curve, select_value
from uqthermo.cli import main
from conftest import write_case

chem_reaction = pytest.importorskip("chemicals.reaction")
chem_hc = pytest.importorskip("chemicals.heat_capacity")
chem_pc = pytest.importorskip("chemicals.phase_change")


# ------------------------------------------------------------------ a dozen species written out
# (species, quantity, phase, source the rules must choose, reference value from chemicals' own
#  look-up functions or tables, uncertainty basis)
DOZEN = [
    ("methane", "formation_enthalpy", "g", "ATcT", lambda: chem_reaction.Hfg("74-82-8", method="ATCT_G"), "stated"),
    ("water", "formation_enthalpy", "l", "ATcT", lambda: chem_reaction.Hfl("7732-18-5", method="ATCT_L"), "stated"),
    ("ethanol", "formation_enthalpy", "l", "ATcT", lambda: chem_reaction.Hfl("64-17-5", method="ATCT_L"), "stated"),
    ("toluene", "formation_enthalpy", "l", "ATcT", lambda: chem_reaction.Hfl("108-88-3", method="ATCT_L"), "stated"),
    ("ethyl acetate", "formation_enthalpy", "g", "WebBook", lambda: chem_reaction.Hfg("141-78-6", method="WEBBOOK"),
     "spread"),
    ("nitrobenzene", "formation_enthalpy", "l", "WebBook", lambda: chem_reaction.Hfl("98-95-3", method="WEBBOOK"),
     "assumed"),
    ("aniline", "formation_enthalpy", "g", "WebBook", lambda: chem_reaction.Hfg("62-53-3", method="WEBBOOK"), "spread"),
    ("cyclohexene", "standard_entropy", "l", "WebBook", lambda: chem_reaction.S0l("110-83-8", method="WEBBOOK"),
     "assumed"),
    ("methylcyclohexane", "standard_entropy", "g", "WebBook", lambda: chem_reaction.S0g("108-87-2", method="WEBBOOK"),
     "assumed"),
    ("benzene", "standard_entropy", "l", "WebBook", lambda: chem_reaction.S0l("71-43-2", method="WEBBOOK"), "assumed"),
    ("ethanol", "standard_entropy", "g", "CRC", lambda: chem_reaction.S0g("64-17-5", method="CRC"), "spread"),
    ("water", "boiling_temperature", "l-g", "HEOS", lambda: chem_pc.Tb("7732-18-5", method="HEOS"), "assumed"),
]


@pytest.mark.parametrize("name, quantity, phase, source, ref, basis", DOZEN)
def test_dozen_species_chosen_source_and_uncertainty(name, quantity, phase, source, ref, basis):
    sel = select_value(identify(name=name), quantity, phase)
    assert sel.chosen.source.key == source
    assert sel.value == pytest.approx(ref(), rel=1e-12)
    assert sel.uncertainty.basis == basis
    u = sel.uncertainty.u
    if basis == "stated":       # ATcT: the published ± is a 95 % expanded uncertainty, u = U/2
        cas = sel.identity.cas
        df = chem_reaction.Hfg_ATcT_data if phase == "g" else chem_reaction.Hfl_ATcT_data
        assert u == pytest.approx(float(df.loc[cas, "uncertainty"]) / 2.0)
    elif basis == "spread":     # half the spread of the sources' values (one per source)
        vals = [c.value for c in sel.considered if not c.estimate]   # estimates shown, never counted
        assert u == pytest.approx(0.5 * (max(vals) - min(vals)))
        assert len(vals) >= 2
    else:                       # assumed: flagged
        assert sel.uncertainty.assumed and u > 0
    prov = sel.provenance()
    assert prov["selected"].startswith(source) and prov["uncertainty_basis"] == basis
    assert {s["source"].split()[0] for s in prov["sources"]} >= {source}


def test_spread_of_ethyl_acetate_gas_formation_enthalpy_written_out():
    # Reference values: chemicals.reaction.Hfg with methods WEBBOOK, CRC, YAWS, and the TRC table's
    # 0 K column left out (its values are 0 K formation enthalpies).
    cas = "141-78-6"
    vals = [chem_reaction.Hfg(cas, method=m) for m in ("WEBBOOK", "CRC", "YAWS")]
    sel = select_value(identify(cas=cas), "formation_enthalpy", "g")
    used = {c.source.key for c in sel.considered if not c.estimate}
    assert "TRC" not in used and "Joback" not in used
    assert all(c.estimate for c in sel.considered if c.source.key == "Joback")
    assert sel.uncertainty.u >= 0.5 * (max(vals) - min(vals)) - 1e-9


def test_h2_entropy_is_the_codata_reference_value():
    # CODATA 1989 S°(H2, g) = 130.680 ± 0.003 J/(mol K) (recalled from memory); independent copies:
    # chemicals' WebBook and Yaws tables (130.68), and Cantera's GRI-Mech 3.0 NASA-7 H2 at 298.15 K.
    ct = pytest.importorskip("cantera")
    sel = select_value(identify(formula="H2"), "standard_entropy", "g")
    assert sel.chosen.source.key == "CODATA" and sel.value == 130.680 and sel.uncertainty.u == 0.003
    assert sel.value == pytest.approx(chem_reaction.S0g("1333-74-0", method="WEBBOOK"), abs=0.01)
    gas = ct.Solution("gri30.yaml")
    sp = gas.species("H2")
    assert sel.value == pytest.approx(sp.thermo.s(298.15) / 1000.0, abs=0.05)
    # GRI-Mech's own N2 fit gives 191.51 J/(mol K) at 298.15 K, 0.1 below CODATA: 0.15 tolerance
    for f, cas in (("O2", "7782-44-7"), ("N2", "7727-37-9")):
        s = select_value(identify(cas=cas), "standard_entropy", "g").value
        assert s == pytest.approx(gas.species(f).thermo.s(298.15) / 1000.0, abs=0.15)
    assert select_value(identify(name="hydrogen"), "formation_enthalpy", "g").uncertainty.basis == "exact"


def test_liquid_heat_capacities_match_the_source_functions():
    # Zabransky spline for ethanol and aniline (chemicals' PiecewiseHeatCapacity objects), DIPPR 100
    # for cyclohexene (Perry Table 2-153 via chemicals), TRC for toluene gas (chemicals.TRCCp).
    T = np.array([300.0, 330.0, 350.0])
    for cas in ("64-17-5", "62-53-3"):
        sel = select_curve(identify(cas=cas), "l", (298.15, 350.0))
        assert sel.chosen.source.key == "Zabransky"
        ref = chem_hc.zabransky_dicts["Zabransky spline, constant-pressure"][cas]
        np.testing.assert_allclose(sel.chosen.cp(T), [ref.force_calculate(t) for t in T], rtol=1e-10)
        ranges, _ = sel.chosen.shomate()
        from uqthermo.case.library.candidates import shomate_eval

        np.testing.assert_allclose(shomate_eval(ranges, T), [ref.force_calculate(t) for t in T], rtol=1e-10)
    sel = select_curve(identify(name="cyclohexene"), "l", (298.15, 350.0))
    assert sel.chosen.source.key == "Perry-DIPPR"
    A, B, C, D, E = (float(chem_hc.Cp_data_Perry_Table_153_100.loc["110-83-8", k]) for k in "ABCDE")
    np.testing.assert_allclose(sel.chosen.cp(T), (A + B * T + C * T**2 + D * T**3 + E * T**4) / 1000.0, rtol=1e-12)
    sel = select_curve(identify(name="toluene"), "g", (298.15, 700.0))
    assert sel.chosen.source.key == "TRC"
    row = chem_hc.TRC_gas_data.loc["108-88-3"]
    coef = [float(row[f"a{i}"]) for i in range(8)]
    Tg = np.array([300.0, 500.0, 700.0])
    np.testing.assert_allclose(sel.chosen.cp(Tg), [chem_hc.TRCCp(t, *coef) for t in Tg], rtol=1e-10)
    ranges, note = sel.chosen.shomate()
    from uqthermo.case.library.candidates import FIT_TOLERANCE, shomate_eval

    grid = np.linspace(sel.chosen.t_min, sel.chosen.t_max, 400)
    assert np.max(np.abs(shomate_eval(ranges, grid) / sel.chosen.cp(grid) - 1)) <= FIT_TOLERANCE * 1.05
    assert "largest deviation" in note


def test_water_gas_curve_covers_the_liquid_path_temperatures():
    # The WebBook Shomate curve of H2O(g) starts at 500 K (chemicals' WebBook data); it must not be
    # picked for a window starting at 298.15 K: the JANAF table (100-6000 K) covers it.
    w = identify(name="water")
    sel = select_curve(w, "g", (298.15, 450.0))
    assert sel.chosen.source.key == "JANAF" and sel.chosen.covers(298.15, 450.0)
    prov = sel.provenance()
    rows = {r["source"].split()[0]: r for r in prov["sources"]}
    assert rows["shomate"]["covers_window"] is False and rows["JANAF"]["covers_window"] is True
    liq = select_curve(w, "l", (298.15, 370.0))
    assert liq.chosen.covers(298.15, 370.0)


# ------------------------------------------------------------------ outside references end to end
COOLPROP_FLUIDS = [("Water", "water", 420.0), ("Ethanol", "ethanol", 400.0), ("Benzene", "benzene", 400.0),
                   ("Toluene", "toluene", 430.0)]


@pytest.mark.parametrize("fluid, name, T2", COOLPROP_FLUIDS)
def test_heating_liquid_to_vapour_through_boiling_against_coolprop(tmp_path, fluid, name, T2):
    # Reference: CoolProp's reference equations of state (IAPWS-95 for water; the Helmholtz-energy
    # equations of ethanol, benzene and toluene), H(T2, 1 atm, vapour) - H(300 K, 1 atm, liquid).
    # The library path is liquid Cp + ΔvapH at Tb + ideal-gas Cp; the real-gas departure of the
    # vapour at 1 atm is well inside the expanded uncertainty the library data carry.
    CP = pytest.importorskip("CoolProp.CoolProp")
    T1 = 300.0
    ref = (CP.PropsSI("Hmolar", "T", T2, "P", 101325.0, fluid) - CP.PropsSI("Hmolar", "T", T1, "P", 101325.0, fluid)) / 1e3
    p = write_case(tmp_path, f'''title = "heat {name} through boiling"
[species.X]
name = "{name}"
[species.X.l]
formation_enthalpy = {{ library = "auto" }}
heat_capacity = {{ library = "auto" }}
[species.X.g]
heat_capacity = {{ library = "auto" }}
[[species.X.transition]]
from = "l"
to = "g"
temperature = {{ library = "auto" }}
enthalpy = {{ library = "auto" }}
[settings]
method = "linear"
[[output]]
name = "h"
kind = "heating_enthalpy"
species = "X(l)"
from = "{T1} K"
to = "{T2} K"
''')
    out = tmp_path / "out"
    assert main(["run", str(p), "--out", str(out), "--method", "linear", "--quiet", "--no-report"]) == 0
    res = json.loads((out / "results.json").read_text())
    pt = res["outputs"][0]["points"][0]["linear"]
    assert abs(pt["estimate"] - ref) <= 2.0 * pt["standard_uncertainty"]
    assert abs(pt["estimate"] - ref) <= 0.02 * ref
    by = {i["datum"]: i for i in res["inputs"]}
    assert by["X.transition.l-g.temperature"]["provenance"]["selected"]
    assert by["X.l.heat_capacity"]["provenance"]["window_K"][1] == pytest.approx(
        by["X.transition.l-g.temperature"]["estimate"])


GAS_REACTIONS = {"combustion": ("CH4(g) + 2 O2(g) -> CO2(g) + 2 H2O(g)", {"CH4": -1, "O2": -2, "CO2": 1, "H2O": 2}),
                 "shift": ("CO(g) + H2O(g) -> CO2(g) + H2(g)", {"CO": -1, "H2O": -1, "CO2": 1, "H2": 1})}


def test_gas_reaction_enthalpies_against_cantera_gri30(tmp_path):
    # Reference: Cantera's GRI-Mech 3.0 NASA-7 standard enthalpies, ΔrH(T) = Σ ν h°(T), 300-1000 K.
    ct = pytest.importorskip("cantera")
    gas = ct.Solution("gri30.yaml")
    sp = "\n".join(f'''[species.{s}]
[species.{s}.g]
formation_enthalpy = {{ library = "auto" }}
heat_capacity = {{ library = "auto" }}''' for s in ("CH4", "O2", "CO2", "H2O", "CO", "H2"))
    sp = sp.replace("[species.CO2]", '[species.CO2]\ncas = "124-38-9"').replace("[species.CO]\n", '[species.CO]\ncas = "630-08-0"\n')
    rx = "\n".join(f'[reaction.{k}]\nequation = "{eq}"' for k, (eq, _) in GAS_REACTIONS.items())
    outs = "\n".join(f'''[[output]]
name = "{k}"
kind = "reaction_enthalpy"
reaction = "{k}"
temperatures = {{ from = "300 K", to = "1000 K", step = "100 K" }}''' for k in GAS_REACTIONS)
    p = write_case(tmp_path, f'title = "gas reactions from the library"\n[settings]\nmethod = "linear"\n{sp}\n{rx}\n{outs}\n')
    out = tmp_path / "out"
    assert main(["run", str(p), "--out", str(out), "--method", "linear", "--quiet", "--no-report"]) == 0
    res = json.loads((out / "results.json").read_text())
    for o in res["outputs"]:
        nu = GAS_REACTIONS[o["name"]][1]
        for pt in o["points"]:
            T = pt["temperature_K"]
            ref = sum(n * gas.species(s).thermo.h(T) for s, n in nu.items()) / 1e6
            lin = pt["linear"]
            assert abs(lin["estimate"] - ref) <= max(2.0 * lin["standard_uncertainty"], 0.3), (o["name"], T)


# ------------------------------------------------------------------ case files
def test_formula_filled_in_from_cas_or_name(tmp_path):
    from uqthermo.case.loader import load_case

    p = write_case(tmp_path, '''title = "names"
[species.toluene]
cas = "108-88-3"
[species.toluene.l]
formation_enthalpy = { library = "auto" }
[species.ethyl_acetate]
name = "ethyl acetate"
[species.ethyl_acetate.l]
formation_enthalpy = { library = "auto" }
[species.aniline]
[species.aniline.l]
formation_enthalpy = { library = "auto" }
[[output]]
name = "h"
kind = "heating_enthalpy"
species = "toluene(l)"
from = "300 K"
to = "300 K"
''')
    case = load_case(p)
    # Reference formulas: chemicals.identifiers (pubchem database) for the CAS numbers
    from chemicals.identifiers import search_chemical

    assert case.species["toluene"].formula == search_chemical("108-88-3").formula == "C7H8"
    assert case.species["ethyl_acetate"].formula == "C4H8O2"
    assert case.species["aniline"].formula == "C6H7N"
    d = case.data["ethyl_acetate.l.formation_enthalpy"]
    assert d.provenance["cas"] == "141-78-6" and d.library.startswith("WebBook")


BAD = {
    "unknown_cas": ('[species.X]\ncas = "108-88-4"\n[species.X.l]\nformation_enthalpy = { library = "auto" }\n',
                    "species.X.cas", "check digit"),
    "unknown_valid_cas": ('[species.X]\ncas = "9999998-88-9"\n[species.X.l]\nformation_enthalpy = { library = "auto" }\n',
                          "species.X.cas", "unknown CAS"),
    "ambiguous_formula": ('[species.X]\nformula = "C2H6O"\n[species.X.g]\nformation_enthalpy = { library = "auto" }\n',
                          "species.X.formula", "64-17-5"),
    "unknown_name": ('[species.X]\nname = "tolune"\n[species.X.l]\nformation_enthalpy = { library = "auto" }\n',
                     "species.X.name", "toluene"),
    "not_covering": ('[species.X]\nname = "methylcyclohexane"\n[species.X.l]\nformation_enthalpy = { library = "auto" }\n'
                     'heat_capacity = { library = "auto", T = ["298.15 K", "450 K"] }\n',
                     "species.X.l.heat_capacity", "Zabransky 144-353.2 K"),
    "source_lacks_phase": ('[species.X]\nname = "toluene"\n[species.X.l]\nformation_enthalpy = { library = "Yaws" }\n',
                           "species.X.l.formation_enthalpy", "sources that have it: ATcT"),
    "no_phase_data": ('[species.X]\nname = "hydrogen"\n[species.X.l]\nformation_enthalpy = { library = "auto" }\n',
                      "species.X.l.formation_enthalpy", "phases with data: g"),
    "unknown_source": ('[species.X]\nname = "toluene"\n[species.X.l]\nformation_enthalpy = { library = "NIST-X" }\n',
                       "species.X.l.formation_enthalpy.library", "unknown data source"),
}


@pytest.mark.parametrize("which", sorted(BAD))
def test_bad_library_input_is_a_keyed_exit_2_error(tmp_path, capsys, which):
    body, key, text = BAD[which]
    p = write_case(tmp_path, f'title = "bad"\n{body}[[output]]\nname = "h"\nkind = "heating_enthalpy"\n'
                         f'species = "X(l)"\nfrom = "300 K"\nto = "301 K"\n')
    rc = main(["check", str(p)])
    err = capsys.readouterr().err
    assert rc == 2 and "Traceback" not in err
    line = next(ln for ln in err.splitlines() if ln.startswith(f"{p}: {key}: "))
    assert text in line


def test_ambiguous_formula_lists_alternatives():
    from uqthermo.case.library.base import LibraryLookupError

    with pytest.raises(LibraryLookupError) as e:
        identify(formula="C2H6O")
    cas = {m.cas for m in e.value.candidates}
    assert {"64-17-5", "115-10-6"} <= cas
    assert identify(formula="CO2").cas == "124-38-9"      # ATcT's CO2 isomers count only as a last resort


# ------------------------------------------------------------------ starter case and data command
def test_starter_case_from_an_equation_checks_and_runs(tmp_path, capsys):
    case = tmp_path / "starter.toml"
    rc = main(["data", "--case", "C6H5CH3(l) + 3 H2(g) -> C6H11CH3(l)", "--T", "150 degC", "--out", str(case)])
    assert rc == 0, capsys.readouterr().err
    text = case.read_text()
    assert 'cas = "108-88-3"' in text and 'cas = "108-87-2"' in text and 'cas = "1333-74-0"' in text
    assert text.count('library = "auto"') >= 9 and "# formation enthalpy: 12.36 kJ/mol from ATcT" in text
    assert "extrapolate = true" in text        # no liquid Cp of methylcyclohexane reaches 423 K
    assert main(["check", str(case)]) == 0
    out = tmp_path / "out"
    assert main(["run", str(case), "--out", str(out), "--method", "linear", "--quiet", "--no-report"]) == 0
    res = json.loads((out / "results.json").read_text())
    # Reference at 298.15 K: Σ ν ΔfH°(l/g) with chemicals' ATcT (toluene l) and WebBook (MCH l) values
    # plus ΔrCp(298.15 K) × 125 K with the CRC Cp values at 298.15 K (chemicals' CRC table): Cp varies
    # over the 125 K, hence 2.5 kJ/mol
    dh298 = (chem_reaction.Hfl("108-87-2", method="WEBBOOK") - chem_reaction.Hfl("108-88-3", method="ATCT_L")) / 1e3
    crc = chem_hc.CRC_standard_data
    dcp = crc.at["108-87-2", "Cpl"] - crc.at["108-88-3", "Cpl"] - 3 * crc.at["1333-74-0", "Cpg"]
    est = res["outputs"][0]["points"][0]["linear"]["estimate"]
    assert est == pytest.approx(dh298 + dcp * (423.15 - 298.15) / 1e3, abs=2.5)
    assert all(i.get("provenance") for i in res["inputs"])
    # bad equation and missing --T are keyed errors
    assert main(["data", "--case", "C6H5CH3 + H2 -> C6H11CH3", "--T", "400 K"]) == 2
    assert main(["data", "--case", "C6H5CH3(l) + 3 H2(g) -> C6H11CH3(l)"]) == 2
    err = capsys.readouterr().err
    assert "--case" in err and "--T" in err


def test_data_shows_ranges_and_coverage(capsys):
    assert main(["data", "water", "--T", "298.15K..700K", "--limit", "1"]) == 0
    out = capsys.readouterr().out
    assert "covers 298.15-700 K" in out
    line = next(ln for ln in out.splitlines() if "NIST WebBook Shomate" in ln and "500-6000 K" in ln)
    assert " no " in line
    assert "★ JANAF" in out
    assert 'heat_capacity = { library = "auto" }' in out
    assert main(["data", "water", "--T", "banana"]) == 2
    assert "--T" in capsys.readouterr().err


def test_help_does_not_load_the_datasets():
    code = ("import sys, uqthermo.cli as c\n"
            "try:\n    c.main(['--help'])\nexcept SystemExit:\n    pass\n"
            "print('chemicals' in sys.modules, 'pandas' in sys.modules)")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert r.stdout.strip().splitlines()[-1] == "False False"


# ------------------------------------------------------------------ estimates (optional extra)
def test_joback_estimate_from_smiles_flagged_in_results(tmp_path):
    pytest.importorskip("rdkit")
    joback = pytest.importorskip("thermo.group_contribution.joback")
    smiles = "CC(O)CC(=O)OC"   # an intermediate of our own choosing, here with no measured data
    J = joback.Joback(smiles)
    p = write_case(tmp_path, f'''title = "estimate"
[species.M]
smiles = "{smiles}"
[species.M.g]
formation_enthalpy = {{ library = "auto" }}
standard_entropy = {{ library = "auto" }}
heat_capacity = {{ library = "auto" }}
[settings]
method = "linear"
[[output]]
name = "h"
kind = "heating_enthalpy"
species = "M(g)"
from = "300 K"
to = "500 K"
''')
    out = tmp_path / "out"
    rc = main(["run", str(p), "--out", str(out), "--method", "linear", "--quiet", "--no-report"])
    assert rc == 0
    res = json.loads((out / "results.json").read_text())
    by = {i["datum"]: i for i in res["inputs"]}
    hf = by["M.g.formation_enthalpy"]
    # Reference: the thermo package's Joback implementation (Joback & Reid 1987)
    assert hf["estimate"] == pytest.approx(J.Hf(J.counts) / 1000.0)
    assert hf["provenance"]["estimate"] is True and hf["provenance"]["selected"].startswith("Joback")
    assert hf["standard_uncertainty"] == pytest.approx(math.hypot(2.2, 2.0) * 4.184, rel=1e-9)
    assert by["M.g.heat_capacity"]["provenance"]["estimate"] is True
    assert any("ESTIMATES" in w for w in res["warnings"])
    # S° = (ΔfH° - ΔfG°)/T + Σ S°(elements): Joback's ΔfG°, CODATA element entropies
    s = by["M.g.standard_entropy"]["estimate"]
    s_el = 5 * 5.74 + 10 / 2 * 130.680 + 3 / 2 * 205.152
    assert s == pytest.approx((J.Hf(J.counts) - J.Gf(J.counts)) / 298.15 + s_el)


def test_starter_case_refuses_an_unbalanced_equation(tmp_path, capsys):
    """QA: ``data --case`` wrote a case for N2 + H2 -> NH3 and exited 0. Element balance (N: 2 on the
    left, 1 on the right; H: 2 left, 3 right) is plain arithmetic on the formulas."""
    target = tmp_path / "u.toml"
    rc = main(["data", "--case", "N2(g) + H2(g) -> NH3(g)", "--T", "400 K", "--out", str(target)])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and not target.exists()
    assert len(err) == 1 and err[0].startswith("--case: the equation 'N2(g) + H2(g) -> NH3(g)' does not balance")
    assert "N -1" in err[0] and "H +1" in err[0] and "Traceback" not in err[0]
    assert main(["data", "--case", "N2(g) + 3 H2(g) -> 2 NH3(g)", "--T", "400 K", "--out", str(target)]) == 0


def test_assumed_uncertainty_warnings_per_used_datum_with_reason_and_curve_kind(tmp_path):
    """QA: the warning listed standard entropies no reaction-enthalpy output uses, gave "sources do not
    disagree by more" for a 5 % extrapolation assumption, and called a Zabransky spline "the whole
    shomate curve". The range in the reason is chemicals' own Zabransky table (zabransky_dict_iso_s,
    methylcyclohexane 108-87-2)."""
    from uqthermo.case.loader import load_case
    from uqthermo.case.starter import starter_case

    case_path = write_case(tmp_path, starter_case("C6H5CH3(l) + 3 H2(g) -> C6H11CH3(l)", (423.15,), "150 degC"))
    case = load_case(str(case_path))
    lines = [w for w in case.warnings if "assumed uncertainty" in w]
    assert lines and all(": assumed uncertainty, " in w for w in lines)
    assert not any("standard_entropy" in w for w in lines)          # ΔrH needs no S°
    assert not any("do not disagree" in w or "whole shomate curve" in w for w in case.warnings)
    chem_hc._load_Cp_data()
    z = chem_hc.zabransky_dict_iso_s["108-87-2"]
    mch = next(w for w in lines if w.startswith("C6H11CH3.l.heat_capacity:"))
    assert "relative u = 5 % on the whole Zabransky cubic spline (isobaric) curve (Zabransky" in mch
    assert f"curve extrapolated beyond its range {z.Tmin:g}-{z.Tmax:g} K: 5 % assumed" in mch
    h2 = next(w for w in lines if w.startswith("H2.g.heat_capacity:"))
    assert "no source states an uncertainty; 1 % assumed" in h2 and "Shomate" in h2
    # with a Gibbs-energy output the entropies are used, so their assumed u is reported
    text = case_path.read_text().replace('kind = "reaction_enthalpy"', 'kind = "reaction_gibbs_energy"')
    g = load_case(str(write_case(tmp_path, text, "g.toml")))
    assert any(w.startswith("C6H5CH3.l.standard_entropy: assumed uncertainty, u = 0.2 J/(mol*K)") for w in g.warnings)


# ------------------------------------------------------------------ outliers do not set the spread
def test_single_point_outlier_does_not_set_the_spread_of_an_evaluated_curve(tmp_path):
    """QA: acetic anhydride liquid Cp — Poling's value at 298.15 K only (124.1 J/(mol*K)) against the
    DIPPR 100 curve of Perry's Table 2-153 (≈189) set u = 17 % on the whole curve. The value kept is
    checked against chemicals' own data: Perry Table 2-153 DIPPR-100 coefficients
    (chemicals.heat_capacity.Cp_data_Perry_Table_153_100) and, independently, the Rowlinson–Poling
    corresponding-states estimate (chemicals.heat_capacity.Rowlinson_Poling, with chemicals' Tc, ω and
    TRC ideal-gas Cp), which Poling et al. report within 2.5 % AARD for non-associating liquids."""
    from chemicals import Tc, omega

    chem_hc._load_Cp_data()
    cas = "108-24-7"
    sel = select_curve(identify(cas=cas), "l", (298.15, 340.0))
    assert sel.chosen.source.key == "Perry-DIPPR"
    perry = chem_hc.Cp_data_Perry_Table_153_100.loc[cas]
    dippr = (perry.A + perry.B * 298.15) / 1000.0                    # J/(kmol K) → J/(mol K)
    assert float(sel.chosen.cp([298.15])[0]) == pytest.approx(dippr, rel=1e-12)
    cpg = chem_hc.TRC_gas_data.loc[cas]
    cpg298 = chem_hc.TRCCp(298.15, *cpg[["a0", "a1", "a2", "a3", "a4", "a5", "a6", "a7"]])
    csp = chem_hc.Rowlinson_Poling(298.15, Tc(cas), omega(cas), cpg298)
    assert abs(dippr / csp - 1) < 0.10                                 # the kept curve agrees
    poling = chem_hc.Cp_data_Poling.at[cas, "Cpl"]
    assert poling == pytest.approx(124.1) and abs(poling / csp - 1) > 0.25   # the single value does not
    # the rule: Poling is screened out, the curve keeps the 2 % assumed for correlations
    u = sel.uncertainty
    assert u.u == pytest.approx(0.02) and u.basis == "assumed"
    (out,) = u.outliers
    assert out["source"].startswith("Poling") and out["value"] == pytest.approx(poling)
    assert out["deviation_percent"] == pytest.approx(100 * (poling / dippr - 1), rel=1e-9)
    assert "Poling 5th ed. (2001) disagrees by -34 % at 298.15 K" in u.reason and "treated as an outlier" in u.reason
    prov = sel.provenance()
    assert prov["outliers"][0]["unit"] == "J/(mol*K)"
    assert [r["outlier"] for r in prov["sources"]] == [False, True]
    # the run warns, naming the datum and both sources
    text = ('title = "acetic anhydride warming (test)"\n[species.AA]\ncas = "108-24-7"\n[species.AA.l]\n'
            'formation_enthalpy = { library = "auto" }\nheat_capacity = { library = "auto" }\n'
            '[[output]]\nname = "h"\nkind = "heating_enthalpy"\nspecies = "AA(l)"\nfrom = "25 degC"\nto = "340 K"\n')
    from uqthermo.case.loader import load_case

    case = load_case(str(write_case(tmp_path, text)))
    line = next(w for w in case.warnings if "outlier" in w)
    assert line.startswith("AA.l.heat_capacity: Poling 5th ed. (2001) gives 124.1 J/(mol*K) at 298.15 K, -34 % from "
                           "Perry-DIPPR 8th ed. (2008)")
    assert case.data["AA.l.heat_capacity"].distributions[0].std == pytest.approx(0.02)


def _curve(key, value, t=(250.0, 400.0)):
    from uqthermo.case.library.candidates import CurveCandidate, SourceInfo

    src = SourceInfo(key=key, title=key, version="", citation="", kind="compilation", uncertainty="")
    return CurveCandidate(source=src, phase="l", cas="0-00-0", t_min=t[0], t_max=t[1],
                          function=lambda T, v=value: np.full_like(np.asarray(T, float), v), form="constant")


@pytest.mark.parametrize("chosen, others, flagged", [
    (100.0, [(101.0, None), (130.0, None)], ["c2"]),           # 3 sources: 130 far from the median 101
    (100.0, [(101.0, None), (108.0, None)], []),               # within 10 % of the median: kept
    (100.0, [(112.0, None)], []),                              # two curves: no majority, spread kept
    (100.0, [(115.0, 298.15)], ["c1"]),                        # one value at 298.15 K only, 15 % off
    (100.0, [(108.0, 298.15)], []),                            # ... 8 % off: kept
    (130.0, [(100.0, None), (101.0, None)], []),               # the selected curve is the odd one: spread stays
])
def test_outlier_rule_median_mad_and_single_values(chosen, others, flagged):
    """The screening rule of uqthermo.case.library.uncertainty on invented constant curves: a robust 3σ
    (1.4826 × MAD, Rousseeuw & Croux 1993) with a 10 % floor for ≥ 3 sources; a single value against
    the selected curve for 2."""
    from uqthermo.case.library.uncertainty import curve_uncertainty, screen_outliers

    sel = _curve("c0", chosen)
    oth = [_curve(f"c{i + 1}", v, (t, t) if t else (250.0, 400.0)) for i, (v, t) in enumerate(others)]
    grid = np.array([298.15, 320.0, 350.0])
    assert [o["source"] for o in screen_outliers(sel, oth, grid)] == flagged
    u, spread = curve_uncertainty(sel, oth, (298.15, 350.0))
    kept = [v for (v, _), o in zip(others, oth) if o.source.label not in flagged]
    expect = 0.5 * (max([chosen] + kept) - min([chosen] + kept)) / chosen
    assert spread == pytest.approx(expect)
    assert u.u == pytest.approx(max(0.02, expect))


def test_data_command_marks_the_outlier_and_shows_the_basis(capsys):
    # the basis "[assumed]" was eaten as rich markup; the outlier row says what was done with it
    assert main(["data", "acetic anhydride", "--T", "298.15K..340K"]) == 0
    out = capsys.readouterr().out
    assert "u = 2 % [assumed]" in out and "outlier: -34 % from ★" in out


# ------------------------------------------------------------------ extrapolation warnings name the curve's form
@pytest.mark.parametrize("cas, form, table", [
    ("108-87-2", "Zabransky cubic spline (isobaric)", "zabransky"),     # methylcyclohexane(l)
    ("108-24-7", "DIPPR 100 polynomial (Perry Table 2-153)", "perry"),  # acetic anhydride(l)
])
def test_extrapolation_warning_names_the_library_curve_form_and_datum(tmp_path, cas, form, table):
    """QA: a library liquid curve (held in Shomate form inside) evaluated beyond its range warned about
    "the shomate heat capacity". The warning names the source's own form, the species/phase and the
    datum; the range is chemicals' own (zabransky_dict_iso_s, Cp_data_Perry_Table_153_100)."""
    from uqthermo.case.loader import load_case
    from uqthermo.pipeline.job import prepare_model

    chem_hc._load_Cp_data()
    if table == "zabransky":
        z = chem_hc.zabransky_dict_iso_s[cas]
        lo, hi = z.Tmin, z.Tmax
    else:
        row = chem_hc.Cp_data_Perry_Table_153_100.loc[cas]
        lo, hi = float(row.Tmin), float(row.Tmax)
    T = hi + 25.0
    text = (f'title = "liquid warmed past its Cp range (test)"\n[species.X]\ncas = "{cas}"\n[species.X.l]\n'
            'formation_enthalpy = { library = "auto" }\nheat_capacity = { library = "auto", extrapolate = true }\n'
            f'[[output]]\nname = "h"\nkind = "heating_enthalpy"\nspecies = "X(l)"\nfrom = "298.15 K"\nto = "{T:g} K"\n')
    case = load_case(str(write_case(tmp_path, text)))
    _, warnings = prepare_model(case)
    (line,) = [w for w in warnings if "validity range" in w]
    assert line.startswith("output.h: extrapolated beyond a correlation's validity range")
    assert f"X(l): T = {T:g} K outside the validity range {lo:g}-{hi:g} K of the {form} heat capacity" in line
    assert line.endswith("(datum X.l.heat_capacity)")
    assert "shomate" not in line.lower()


# ------------------------------------------------------------------ outliers among scalar values
def _scalar(key, value, kind="compilation", quantity="formation_enthalpy"):
    from uqthermo.case.library.candidates import ScalarCandidate, SourceInfo

    src = SourceInfo(key=key, title=key, version="", citation="", kind=kind, uncertainty="")
    return ScalarCandidate(source=src, quantity=quantity, phase="g", cas="74-82-8", value=value)


def test_scalar_outlier_rule_on_methane_formation_enthalpies_from_chemicals():
    """Methane ΔfH°(g) from chemicals' own tables (chemicals.reaction.Hfg with ATCT_G, JANAF, CRC,
    WEBBOOK, API_TDB_G, YAWS: -74.5 to -74.9 kJ/mol) and, as the wrong value, the TRC table's Hfg
    column (-66.6 kJ/mol: a 0 K formation enthalpy, the kind of slip a user's copied value can
    carry). The rule of uqthermo.case.library.uncertainty: median ± max(3 × 1.4826 × MAD, 5 kJ/mol)."""
    from uqthermo.case.library.uncertainty import robust_outliers, scalar_uncertainty

    good = {m: chem_reaction.Hfg("74-82-8", method=m) for m in ("JANAF", "ATCT_G", "CRC", "WEBBOOK", "API_TDB_G", "YAWS")}
    wrong = chem_reaction.Hfg("74-82-8", method="TRC")
    assert wrong == pytest.approx(-66600.0) and max(good.values()) - min(good.values()) < 500.0
    chosen = _scalar("JANAF", good["JANAF"], kind="evaluated")          # no stated u: the spread rule applies
    others = [_scalar(m, v) for m, v in good.items() if m != "JANAF"]
    plain = scalar_uncertainty(chosen, others)
    # no outlier: exactly the rule as before — max(assumed 0.5 kJ/mol, half the spread)
    assert plain.outliers == ()
    assert plain.u == pytest.approx(max(500.0, 0.5 * (max(good.values()) - min(good.values()))))
    assert plain.basis == "assumed" and "disagrees" not in plain.reason
    # the 0 K value joins: left out, named, the uncertainty unchanged (unscreened it would be 4.1 kJ/mol)
    screened = scalar_uncertainty(chosen, others + [_scalar("TRC", wrong)])
    (out,) = screened.outliers
    assert out["source"] == "TRC" and out["value"] == wrong
    assert out["deviation"] == pytest.approx(wrong - good["JANAF"])
    assert out["deviation_percent"] == pytest.approx(100 * (wrong - good["JANAF"]) / abs(good["JANAF"]))
    assert screened.u == plain.u and screened.basis == plain.basis
    assert screened.reason.startswith(plain.reason + "; TRC disagrees by +8.27 kJ/mol")
    assert "treated as an outlier (median/MAD of 7 sources, beyond 5 kJ/mol" in screened.reason
    # the shared rule itself: two values give no majority; the selected value (index 0) is never flagged
    assert robust_outliers([1.0, 50.0], absolute=5.0)[0] == []
    assert robust_outliers([wrong] + list(good.values()), absolute=5000.0)[0] == []


def test_scalar_outlier_in_the_shipped_tables_is_left_out_and_warned(tmp_path, capsys):
    """Acetic acid gas S° in chemicals' tables (chemicals.reaction.S0g): WebBook 282.84, CRC 283.5 and
    Yaws 312.3 J/(mol*K). Yaws is screened out: u is half the spread of the other two, not 14.7."""
    from uqthermo.case.loader import load_case
    from uqthermo.pipeline.job import prepare_model

    vals = {m: chem_reaction.S0g("64-19-7", method=m) for m in ("WEBBOOK", "CRC", "YAWS")}
    sel = select_value(identify(cas="64-19-7"), "standard_entropy", "g")
    assert sel.chosen.source.key == "WebBook" and sel.value == pytest.approx(vals["WEBBOOK"])
    assert sel.uncertainty.basis == "spread"
    assert sel.uncertainty.u == pytest.approx(0.5 * abs(vals["CRC"] - vals["WEBBOOK"]))
    prov = sel.provenance()
    (out,) = prov["outliers"]
    assert out["source"].startswith("Yaws") and out["value"] == pytest.approx(vals["YAWS"])
    assert out["unit"] == "J/(mol*K)" and out["temperature_K"] == pytest.approx(298.15)
    assert [s["outlier"] for s in prov["sources"]] == [False, False, True]
    # a value without outliers keeps an empty list (and the spread of every source)
    ea = select_value(identify(cas="141-78-6"), "formation_enthalpy", "g").provenance()
    assert ea["outliers"] == [] and not any(s["outlier"] for s in ea["sources"])
    # the run warns with species, datum and both sources (the entropy is used by a Gibbs-energy output)
    text = ('title = "acetic acid vapour combustion (test)"\n'
            '[species.AcOH]\ncas = "64-19-7"\n[species.O2]\n[species.CO2]\ncas = "124-38-9"\n[species.H2O]\ncas = "7732-18-5"\n'
            + "".join(f'[species.{s}.g]\nformation_enthalpy = {{ library = "auto" }}\nstandard_entropy = {{ library = "auto" }}\n'
                      f'heat_capacity = {{ library = "auto" }}\n' for s in ("AcOH", "O2", "CO2", "H2O"))
            + '[reaction.burn]\nequation = "AcOH(g) + 2 O2(g) -> 2 CO2(g) + 2 H2O(g)"\n'
              '[[output]]\nname = "g"\nkind = "reaction_gibbs_energy"\nreaction = "burn"\ntemperature = "298.15 K"\n')
    case = load_case(str(write_case(tmp_path, text)))
    _, warnings = prepare_model(case)
    line = next(w for w in case.warnings + warnings if "outlier" in w)
    assert line.startswith("AcOH.g.standard_entropy: Yaws 2nd ed. (2014) gives 312.3 J/(mol*K) at 298.15 K, "
                           "+29.5 J/(mol*K) (+10 %) from the 282.8 J/(mol*K) of WebBook NIST SRD 69")
    assert case.data["AcOH.g.standard_entropy"].distributions[0].std == pytest.approx(sel.uncertainty.u)
    # the data command marks it
    assert main(["data", "64-19-7"]) == 0
    assert "outlier: +29.46 J/(mol*K) from ★, left out of u" in capsys.readouterr().out


def test_reprinted_values_make_no_majority_for_the_outlier_rule():
    """Tetramethylsilane ΔfH°(g) in chemicals' tables (chemicals.reaction.Hfg): JANAF -286.604, WebBook
    -286.60, Yaws -286.60 and CRC -239.1 kJ/mol. The first three are one evaluation reprinted (the
    WebBook's gas-phase values of such species are JANAF's), so there are two independent values, not
    a majority of three against one: CRC is not screened out and u stays half the spread (23.75 kJ/mol),
    not the 0.5 kJ/mol assumed for JANAF. Sulfur S(g) in the same tables: JANAF 276.98 (= Yaws), WebBook
    277.04, CRC 277.2 and API-TDB -20.63 kJ/mol: four distinct values, so API-TDB is still left out."""
    from uqthermo.case.library.uncertainty import copy_groups

    tms = {m: chem_reaction.Hfg("75-76-3", method=m) for m in ("JANAF", "WEBBOOK", "YAWS", "CRC")}
    assert max(tms[m] for m in ("JANAF", "WEBBOOK", "YAWS")) - min(tms[m] for m in ("JANAF", "WEBBOOK", "YAWS")) <= 10.0
    assert copy_groups(list(tms.values()), "formation_enthalpy") == [[0, 1, 2], [3]]
    sel = select_value(identify(cas="75-76-3"), "formation_enthalpy", "g")
    assert sel.chosen.source.key == "JANAF" and sel.value == pytest.approx(tms["JANAF"])
    assert sel.uncertainty.outliers == () and sel.uncertainty.basis == "spread"
    assert sel.uncertainty.u == pytest.approx(0.5 * (tms["CRC"] - tms["JANAF"]))
    assert "give the same value to 0.01 kJ/mol (one evaluation reprinted: counted once)" in sel.uncertainty.reason
    assert not any(s["outlier"] for s in sel.provenance()["sources"])

    s = {m: chem_reaction.Hfg("7704-34-9", method=m) for m in ("JANAF", "WEBBOOK", "CRC", "YAWS", "API_TDB_G")}
    assert s["JANAF"] == s["YAWS"] and s["API_TDB_G"] == pytest.approx(-20630.0)
    sel = select_value(identify(cas="7704-34-9"), "formation_enthalpy", "g")
    (out,) = sel.uncertainty.outliers
    assert out["source"].startswith("API-TDB") and out["value"] == pytest.approx(s["API_TDB_G"])
    assert out["rule"] == "median/MAD of 4 distinct values from 5 sources, equal values counted once"


def test_extrapolation_warning_names_every_curve_the_output_extrapolates(tmp_path):
    """QA: a reaction enthalpy above the range of three liquid curves named only the first one met.
    Ranges from chemicals' Perry Table 2-153 (Cp_data_Perry_Table_153_100): ethanol 159.05-390 K,
    acetic acid 289.81-391.05 K, ethyl acetate 189.6-350.21 K; water's Zabransky curve reaches 644.6 K."""
    from uqthermo.case.loader import load_case
    from uqthermo.pipeline.job import prepare_model

    chem_hc._load_Cp_data()
    perry = chem_hc.Cp_data_Perry_Table_153_100
    cas = {"EtOH": "64-17-5", "AcOH": "64-19-7", "EtOAc": "141-78-6", "H2O": "7732-18-5"}
    text = ('title = "esterification above the liquid curves (test)"\n[settings]\nallow_extrapolation = true\n'
            + "".join(f'[species.{s}]\ncas = "{c}"\n[species.{s}.l]\nformation_enthalpy = {{ library = "auto" }}\n'
                      'heat_capacity = { library = "auto" }\n' for s, c in cas.items())
            + '[reaction.r]\nequation = "EtOH(l) + AcOH(l) -> EtOAc(l) + H2O(l)"\n'
              '[[output]]\nname = "h"\nkind = "reaction_enthalpy"\nreaction = "r"\ntemperature = "413.15 K"\n')
    case = load_case(str(write_case(tmp_path, text)))
    _, warnings = prepare_model(case)
    (line,) = [w for w in warnings if w.startswith("output.h: extrapolated")]
    assert line.startswith("output.h: extrapolated beyond the validity ranges of 3 correlations")
    for s in ("EtOH", "AcOH", "EtOAc"):
        row = perry.loc[cas[s]]
        assert (f"{s}(l): T = 413.15 K outside the validity range {float(row.Tmin):g}-{float(row.Tmax):g} K of the "
                f"DIPPR 100 polynomial (Perry Table 2-153) heat capacity (datum {s}.l.heat_capacity)") in line
    assert "H2O" not in line
    # the switches are restored: with extrapolation allowed the run evaluates
    assert all(p.cp.allow_extrapolation for sp in case.species.values() for p in sp.phases.values() if p.cp)

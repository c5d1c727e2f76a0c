"""Case files using ``{ library = "..." }`` references, checked against the `chemicals` package's
own tables and functions (ATcT 1.112 via chemicals.reaction.Hfg/Hfl and Hfg_ATcT_data, JANAF 1998
via chemicals.reaction.S0g, NIST WebBook Shomate via chemicals.heat_capacity)."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from uqthermo.case.loader import load_case
from uqthermo.cli import main
from uqthermo.errors import InputError
from conftest import write_case

chem_reaction = pytest.importorskip("chemicals.reaction")
chem_hc = pytest.importorskip("chemicals.heat_capacity")

CAS = {"CH4": "74-82-8", "CO2": "124-38-9", "H2": "1333-74-0", "H2O": "7732-18-5"}


def _atct_u(cas, phase="g"):
    """Standard uncertainty from chemicals' ATcT table: the published ± is a 95 % expanded
    uncertainty, k = 2 (ATcT documentation, recalled from memory)."""
    df = chem_reaction.Hfg_ATcT_data if phase == "g" else chem_reaction.Hfl_ATcT_data
    return float(df.loc[cas, "uncertainty"]) / 2.0


OUT = """
[[output]]
name = "h"
kind = "heating_enthalpy"
species = "{sp}"
from = "300 K"
to = "400 K"
"""


def _case_problems(path, **kw):
    with pytest.raises(InputError) as ei:
        load_case(path, **kw)
    return ei.value.problems


def test_ch4_by_cas_equals_chemicals_atct(tmp_path):
    p = write_case(tmp_path, """title = "CH4 from the library"
[species.CH4]
cas = "74-82-8"
[species.CH4.g]
formation_enthalpy = { library = "ATcT" }
heat_capacity = { library = "shomate", relative_u = "1 %" }
""" + OUT.format(sp="CH4(g)"))
    case = load_case(p)
    d = case.data["CH4.g.formation_enthalpy"]
    # Reference: chemicals.reaction.Hfg with the ATcT gas table
    assert case.species["CH4"].phases["g"].formation_enthalpy == chem_reaction.Hfg("74-82-8", method="ATCT_G")
    assert d.distributions[0].estimate == chem_reaction.Hfg("74-82-8", method="ATCT_G")
    assert d.distributions[0].std == pytest.approx(_atct_u("74-82-8"), rel=1e-12)
    assert "ATcT 1.112" in d.library and "chemicals" in d.library
    assert "74-82-8" in d.source and not d.assumed
    # the Shomate curve is the WebBook one (chemicals.heat_capacity.Shomate with its stored coefficients)
    cp = case.species["CH4"].phases["g"].cp
    T = np.array([300.0, 700.0, 1250.0, 2000.0])
    ref = []
    for t in T:
        rng = next(r for r in chem_hc.WebBook_Shomate_coefficients["74-82-8"][2] if r[0] <= t <= r[1])
        ref.append(chem_hc.Shomate(t, *rng[2:7]))
    np.testing.assert_allclose(cp.cp(T), ref, rtol=1e-12)
    hc = case.data["CH4.g.heat_capacity"]
    assert hc.assumed and "Shomate" in hc.library and hc.distributions[0].std == pytest.approx(0.01)


def test_water_liquid_atct_and_janaf_entropy(tmp_path):
    p = write_case(tmp_path, """title = "liquid water from the library"
[species.H2O]
cas = "7732-18-5"
[species.H2O.l]
formation_enthalpy = { library = "ATcT" }
standard_entropy = { library = "JANAF", u = "0.1 J/(mol*K)" }
heat_capacity = { library = "shomate", relative_u = "1 %" }
""" + OUT.format(sp="H2O(l)"))
    case = load_case(p)
    ph = case.species["H2O"].phases["l"]
    # Reference: chemicals.reaction.Hfl (ATcT liquid table) and S0l (JANAF 1998)
    assert ph.formation_enthalpy == chem_reaction.Hfl("7732-18-5", method="ATCT_L") == -285825.0
    assert case.data["H2O.l.formation_enthalpy"].distributions[0].std == pytest.approx(_atct_u("7732-18-5", "l"))
    assert ph.standard_entropy == pytest.approx(chem_reaction.S0l("7732-18-5", method="JANAF"), rel=1e-12)
    s = case.data["H2O.l.standard_entropy"]
    assert s.assumed and s.distributions[0].std == pytest.approx(0.1)
    assert any("H2O.l.standard_entropy" in w and "no uncertainty" in w for w in case.warnings)


def test_user_uncertainty_replaces_the_datasets(tmp_path):
    p = write_case(tmp_path, """title = "override"
[species.CH4]
cas = "74-82-8"
[species.CH4.g]
formation_enthalpy = { library = "ATcT", U = "0.4 kJ/mol", k = 2 }
heat_capacity = { library = "shomate", relative_u = "2 %" }
""" + OUT.format(sp="CH4(g)"))
    d = load_case(p).data["CH4.g.formation_enthalpy"]
    assert d.distributions[0].estimate == chem_reaction.Hfg("74-82-8", method="ATCT_G")
    assert d.distributions[0].std == pytest.approx(200.0)
    assert "replaces" in d.source and not d.assumed


METHANATION = """title = "CO2 methanation with library formation enthalpies"
[species.CO2]
cas = "124-38-9"
[species.CO2.g]
formation_enthalpy = { library = "ATcT" }
heat_capacity = { library = "shomate", relative_u = "1 %" }
[species.H2]
cas = "1333-74-0"
[species.H2.g]
formation_enthalpy = { library = "ATcT" }
heat_capacity = { library = "shomate", relative_u = "1 %" }
[species.CH4]
cas = "74-82-8"
[species.CH4.g]
formation_enthalpy = { library = "ATcT" }
heat_capacity = { library = "shomate", relative_u = "1.5 %" }
[species.H2O]
cas = "7732-18-5"
[species.H2O.g]
formation_enthalpy = { library = "ATcT" }
heat_capacity = { library = "janaf", relative_u = "1 %", T = ["298.15 K", "1500 K"] }
[reaction.methanation]
equation = "CO2(g) + 4 H2(g) -> CH4(g) + 2 H2O(g)"
[settings]
method = "linear"
[[output]]
name = "dH"
kind = "reaction_enthalpy"
reaction = "methanation"
temperatures = { from = "298.15 K", to = "698.15 K", step = "400 K" }
"""


def test_methanation_reaction_enthalpy_equals_sum_of_chemicals_atct(tmp_path, capsys):
    p = write_case(tmp_path, METHANATION)
    # Reference: ΔrH°(298.15 K) = Σ ν ΔfH° from chemicals.reaction.Hfg (ATcT 1.112 gas table);
    # u from the same table (± / 2), independent data → root sum of squares.
    hf = {s: chem_reaction.Hfg(c, method="ATCT_G") for s, c in CAS.items()}
    nu = {"CO2": -1, "H2": -4, "CH4": 1, "H2O": 2}
    ref = sum(nu[s] * hf[s] for s in nu)
    u_ref = math.sqrt(sum((nu[s] * _atct_u(CAS[s])) ** 2 for s in nu))
    out = tmp_path / "out"
    rc = main(["run", str(p), "--out", str(out), "--method", "linear", "--quiet", "--no-report"])
    assert rc == 0, capsys.readouterr().err
    res = json.loads((out / "results.json").read_text())
    pt = res["outputs"][0]["points"][0]
    assert pt["temperature_K"] == pytest.approx(298.15)
    assert pt["linear"]["estimate"] == pytest.approx(ref / 1000.0, abs=1e-9)
    assert pt["linear"]["standard_uncertainty"] == pytest.approx(u_ref / 1000.0, rel=1e-6)
    # the input table names the dataset and version
    by = {i["datum"]: i for i in res["inputs"]}
    for s in nu:
        i = by[f"{s}.g.formation_enthalpy"]
        assert i["library"].startswith("ATcT 1.112 via chemicals")
        assert CAS[s] in i["source"]
    assert "JANAF" in by["H2O.g.heat_capacity"]["library"] and by["H2O.g.heat_capacity"]["assumed"] is True
    # at 698.15 K the Cp path counts: compare with the WebBook Shomate / JANAF integrals
    # (chemicals.heat_capacity.Shomate_integral; JANAF Cp table integrated by the trapezoid rule)
    T1, T2 = 298.15, 698.15

    def shomate_int(cas):
        rngs = chem_hc.WebBook_Shomate_coefficients[cas][2]
        tot = 0.0
        for lo, hi, *c in rngs:
            a, b = max(lo, T1), min(hi, T2)
            if b > a:
                tot += chem_hc.Shomate_integral(b, *c[:5]) - chem_hc.Shomate_integral(a, *c[:5])
        return tot

    Tj, Cpj = (np.asarray(v, float) for v in chem_hc.Cp_dict_JANAF_gas[CAS["H2O"]])
    sel = (Tj > T1 + 1e-9) & (Tj < T2 - 1e-9)
    Tg = np.concatenate([[T1], Tj[sel], [T2]])
    Cg = np.interp(Tg, Tj, Cpj)
    h_h2o = float(np.sum(0.5 * (Cg[1:] + Cg[:-1]) * np.diff(Tg)))
    dcp = shomate_int(CAS["CH4"]) + 2 * h_h2o - shomate_int(CAS["CO2"]) - 4 * shomate_int(CAS["H2"])
    hi = res["outputs"][0]["points"][1]
    assert hi["temperature_K"] == pytest.approx(T2)
    # JANAF table steps (100 K) make the trapezoid rule approximate: 20 J/mol tolerance
    assert hi["linear"]["estimate"] == pytest.approx((ref + dcp) / 1000.0, abs=0.02)


def test_ambiguous_formula_exits_2_naming_candidates(tmp_path, capsys):
    p = write_case(tmp_path, """title = "ambiguous"
[species.CO2]
[species.CO2.g]
formation_enthalpy = { library = "ATcT" }
""" + OUT.format(sp="CO2(g)"))
    rc = main(["check", str(p)])
    err = capsys.readouterr().err
    assert rc == 2
    line = next(ln for ln in err.splitlines() if "formation_enthalpy" in ln)
    assert line.startswith(f"{p}: species.CO2.g.formation_enthalpy: ")
    # ATcT 1.112 lists three CO2 isomers (chemicals' Hfg_ATcT_data)
    for cas in ("124-38-9", "138832-57-2", "791121-04-5"):
        assert cas in line
    assert "cas =" in line and "Traceback" not in err


def test_library_problems_listed_with_key_paths(tmp_path, capsys):
    p = write_case(tmp_path, """title = "problems"
[species.CH4]
cas = "74-82-8"
[species.CH4.g]
formation_enthalpy = { library = "NASA" }
standard_entropy = { library = "JANAF" }
heat_capacity = { library = "shomate" }
[species.H2O]
cas = "7732-18-5"
[species.H2O.l]
formation_enthalpy = { library = "ATcT", value = "-285.8 kJ/mol" }
standard_entropy = { library = "ATcT", u = "0.1 J/(mol*K)" }
heat_capacity = { library = "shomate", relative_u = "1 %", u = [0.1, 0.1, 0.1, 0.1, 0.1] }
[species.Q]
formula = "C9H9Xe"
[species.Q.g]
formation_enthalpy = { library = "ATcT", u = "1 kJ/mol" }
[species.R]
formula = "CH4"
[species.R.aq]
formation_enthalpy = { library = "ATcT", u = "1 kJ/mol" }
[species.S]
cas = "74-82-8"
[species.S.cr]
formation_enthalpy = { library = "ATcT", u = "1 kJ/mol" }
""" + OUT.format(sp="CH4(g)"))
    rc = main(["check", str(p)])
    err = capsys.readouterr().err
    assert rc == 2
    keys = {ln.split(": ")[1] for ln in err.splitlines() if ln.startswith(str(p))}
    assert {"species.CH4.g.formation_enthalpy.library", "species.CH4.g.standard_entropy",
            "species.CH4.g.heat_capacity", "species.H2O.l.formation_enthalpy.value",
            "species.H2O.l.standard_entropy.library", "species.H2O.l.heat_capacity.u",
            "species.Q.g.formation_enthalpy", "species.R.aq.formation_enthalpy",
            "species.S.cr.formation_enthalpy"} <= keys
    assert "states no uncertainty" in err and "relative_u" in err
    assert "phases available: g" in err           # methane has no solid ATcT entry
    assert "Traceback" not in err


def test_library_disabled(tmp_path):
    p = write_case(tmp_path, """title = "off"
[species.CH4]
cas = "74-82-8"
[species.CH4.g]
formation_enthalpy = { library = "ATcT" }
heat_capacity = { library = "shomate", relative_u = "1 %" }
""" + OUT.format(sp="CH4(g)"))
    probs = _case_problems(p, library=False)
    assert {pr.key for pr in probs} == {"species.CH4.g.formation_enthalpy", "species.CH4.g.heat_capacity"}
    assert all("disabled" in pr.message for pr in probs)


def test_reference_element_is_exact(tmp_path):
    p = write_case(tmp_path, """title = "H2"
[species.H2]
cas = "1333-74-0"
[species.H2.g]
formation_enthalpy = { library = "ATcT" }
heat_capacity = { library = "shomate", relative_u = "1 %" }
""" + OUT.format(sp="H2(g)"))
    d = load_case(p).data["H2.g.formation_enthalpy"]
    # ATcT lists H2(g) as 0 ± 0 (reference element): exact
    assert d.distributions[0].estimate == 0.0 and not d.uncertain

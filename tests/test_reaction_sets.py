"""Large reaction sets in a case: ``[reaction_set] file = …`` and ``reactions = ["*"]`` (batch mode).

Outside reference: Cantera's GRI-Mech 3.0 data (gri30.yaml) — the species' NASA-7 curves are
copied into the case, and every reaction enthalpy must equal Cantera's standard reaction
enthalpy (``Solution.delta_standard_enthalpy``) within 1 J/mol.
"""

from __future__ import annotations

import json

import pytest

ct = pytest.importorskip("cantera")

from conftest import main_in_process  # noqa: E402

SPECIES = ("H2", "O2", "H2O", "OH", "H", "O", "HO2", "H2O2", "CO", "CO2", "CH4", "CH3", "CH2O", "HCO")


def _case(gas, folder, reactions):
    blocks = ['title = "Reaction set from GRI-Mech 3.0 species data (test)"',
              '[settings]\nsamples = 2000\nseed = 11\nwhat_if = false\nsensitivity = "linear"\n',
              '[reaction_set]\nfile = "set.csv"\nsource = "equations of gri30.yaml reactions"\n']
    for name in SPECIES:
        sp = gas.species(name)
        c = sp.thermo.coeffs
        fmt = lambda a: ", ".join(repr(float(x)) for x in a)  # noqa: E731
        blocks.append(f'[species.{name}]\nformula = "{name}"\n[species.{name}.g]\n'
                      f'heat_capacity = {{ model = "nasa7", relative_u = "0.3 %", ranges = [\n'
                      f'  {{ T = ["{sp.thermo.min_temp} K", "{c[0]} K"], coefficients = [{fmt(c[8:15])}] }},\n'
                      f'  {{ T = ["{c[0]} K", "{sp.thermo.max_temp} K"], coefficients = [{fmt(c[1:8])}] }} ] }}\n')
    blocks.append('[[output]]\nname = "dH"\nkind = "reaction_enthalpy"\nreactions = ["*"]\n'
                  'temperatures = ["500 K", "1500 K", "2500 K"]\n')
    (folder / "set.csv").write_text("name,equation\n" + "".join(f"{n},{eq}\n" for n, eq in reactions), encoding="utf-8")
    path = folder / "set.toml"
    path.write_text("\n".join(blocks), encoding="utf-8")
    return path


def test_reaction_set_file_and_star_outputs_match_cantera(tmp_path):
    gas = ct.Solution("gri30.yaml")
    keep = set(SPECIES)
    picked = []
    for i, r in enumerate(gas.reactions()):
        if set(r.reactants) | set(r.products) <= keep and "M" not in r.equation and "(+" not in r.equation:
            lhs = " + ".join(f"{v:g} {k}(g)" for k, v in r.reactants.items())
            rhs = " + ".join(f"{v:g} {k}(g)" for k, v in r.products.items())
            picked.append((i, f"R{i}", f"{lhs} -> {rhs}"))
    assert len(picked) >= 10
    case = _case(gas, tmp_path, [(n, eq) for _, n, eq in picked])
    out = tmp_path / "out"
    code, _, err = main_in_process("run", case, "--out", out, "--quiet", "--no-report")
    assert code == 0, err
    res = json.loads((out / "results.json").read_text())
    by_name = {o["name"]: o for o in res["outputs"]}
    assert len(by_name) == len(picked)
    for i, name, _ in picked:
        o = by_name[f"dH[{name}]"]
        for p in o["points"]:
            gas.TP = p["temperature_K"], ct.one_atm
            ref = gas.delta_standard_enthalpy[i] / 1e6          # J/kmol → kJ/mol
            assert p["linear"]["estimate"] == pytest.approx(ref, abs=1e-3), (name, p["temperature_K"])


def test_reaction_set_problems_name_the_line(tmp_path):
    gas = ct.Solution("gri30.yaml")
    case = _case(gas, tmp_path, [("A", "H2(g) + O2(g) -> 2 OH(g)"), ("A", "H2(g) -> 2 H(g)"), ("B", "")])
    code, _, err = main_in_process("check", case)
    assert code == 2
    assert "reaction_set.file: line 3" in err and "defined twice" in err
    assert "reaction_set.file: line 4" in err
    (tmp_path / "set.csv").unlink()
    code, _, err = main_in_process("check", case)
    assert code == 2 and "reaction_set.file" in err and "not found" in err

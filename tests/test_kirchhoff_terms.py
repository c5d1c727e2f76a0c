"""Kirchhoff's law term by term (uqthermo.thermo.kirchhoff): at reference + sensible + latent.

Outside references:
* closed form of Kirchhoff's law with constant heat capacities and one phase change on the
  route (Atkins' Physical Chemistry, "Kirchhoff's law"):
  ΔrH(T) = Σν ΔfH(T_ref) + Σν Cp,l (T_b − T_ref) + Σν Cp,g (T − T_b) + ν ΔvapH;
* Cantera with GRI-Mech 3.0 (gri30.yaml, NASA-7): ``delta_standard_enthalpy`` at 298.15 K is
  the "at reference" term and its change from 298.15 K to T the sensible term.
"""

from __future__ import annotations

import numpy as np
import pytest

from uqthermo.thermo import ConstantCp, Nasa7Cp, Phase, Reaction, Species, Transition, reaction_enthalpy
from uqthermo.thermo.kirchhoff import reaction_enthalpy_terms, species_enthalpy_terms

T_REF = 298.15

# invented constant-Cp species (closed-form test only)
CP_L, CP_G, DH_F, T_B, DH_VAP = 140.0, 95.0, -250e3, 350.0, 33e3


def _solvent() -> Species:
    return Species("S", "C2H6O", {
        "l": Phase("l", ConstantCp(CP_L, 200.0, 400.0), formation_enthalpy=DH_F),
        "g": Phase("g", ConstantCp(CP_G, 300.0, 900.0)),
    }, [Transition("l", "g", T_B, DH_VAP)])


def _species() -> dict[str, Species]:
    return {
        "S": _solvent(),
        "O2": Species("O2", "O2", {"g": Phase("g", ConstantCp(29.4, 200.0, 2000.0), formation_enthalpy=0.0)}),
        "P": Species("P", "C2H4O2", {"g": Phase("g", ConstantCp(70.0, 200.0, 2000.0), formation_enthalpy=-430e3)}),
        "W": Species("W", "H2O", {"g": Phase("g", ConstantCp(33.6, 200.0, 2000.0), formation_enthalpy=-241.8e3)}),
    }


def test_closed_form_with_a_phase_change_on_the_route():
    sp = _species()
    r = Reaction("ox", "S(g) + O2(g) -> P(g) + W(g)")
    T = np.array([360.0, 450.0, 600.0])
    t = reaction_enthalpy_terms(r, sp, T, T_REF)
    at_ref = -430e3 - 241.8e3 - DH_F - 0.0
    dcp_g = 70.0 + 33.6 - 29.4 - CP_G
    # S(g) is reached from the anchored liquid: −[Cp,l (T_b − T_ref) + Cp,g (T − T_b)]; the others from T_ref
    sensible = -(CP_L * (T_B - T_REF) + CP_G * (T - T_B)) + (70.0 + 33.6 - 29.4) * (T - T_REF)
    assert np.allclose(t.at_reference, at_ref, rtol=0, atol=1e-9)
    assert np.allclose(t.sensible, sensible, rtol=0, atol=1e-8)
    assert np.allclose(t.latent, -DH_VAP, rtol=0, atol=1e-9)
    assert [(lt.species, lt.transition, lt.coefficient) for lt in t.latent_terms] == [("S", "l-g", -1.0)]
    assert np.allclose(t.latent_terms[0].value, -DH_VAP)
    # the terms sum to the engine's reaction enthalpy
    assert np.allclose(t.total, reaction_enthalpy(r, sp, T, T_REF), rtol=0, atol=1e-8)
    assert dcp_g != 0  # (the case is not degenerate)


def test_species_terms_with_sampled_transition_and_data():
    """Sampled transition temperature, ΔvapH and Cp move the terms; the sum stays the engine's enthalpy."""
    s = _solvent()
    rng = np.random.default_rng(1)
    n = 64
    vals = {"transition.l-g.temperature": rng.normal(T_B, 2.0, (n, 1)),
            "transition.l-g.enthalpy": rng.normal(DH_VAP, 300.0, (n, 1)),
            "l.formation_enthalpy": rng.normal(DH_F, 500.0, (n, 1)),
            "l.heat_capacity": rng.normal(CP_L, 3.0, (n, 1, 1)),
            "g.heat_capacity": rng.normal(CP_G, 3.0, (n, 1, 1))}
    T = np.array([380.0, 500.0])
    t = species_enthalpy_terms(s, "g", T, T_REF, vals)
    assert t.total.shape == (n, 2)
    assert np.allclose(t.total, s.enthalpy("g", T, T_REF, vals), rtol=0, atol=1e-8)
    tb = vals["transition.l-g.temperature"]
    expected = vals["l.heat_capacity"][:, :, 0] * (tb - T_REF) + vals["g.heat_capacity"][:, :, 0] * (T - tb)
    assert np.allclose(t.sensible, expected, rtol=0, atol=1e-8)
    assert np.allclose(t.latent, vals["transition.l-g.enthalpy"], rtol=0, atol=0)


def test_measured_anchor_terms():
    sp = _species()
    r = Reaction("m", "S(l) + O2(g) -> P(g) + W(g)", measured_enthalpy=(-420e3, 320.0))
    T = np.array([330.0, 380.0])
    t = reaction_enthalpy_terms(r, sp, T, T_REF)
    assert t.anchor == "measured" and t.reference_temperature == 320.0
    assert np.allclose(t.at_reference, -420e3)
    assert np.allclose(t.sensible, (70.0 + 33.6 - 29.4 - CP_L) * (T - 320.0))
    assert np.allclose(t.latent, 0.0) and not t.latent_terms
    assert np.allclose(t.total, reaction_enthalpy(r, sp, T, T_REF), rtol=0, atol=1e-8)


ct = pytest.importorskip("cantera")


def test_terms_against_cantera_gri30():
    """Cantera gri30.yaml (NASA-7, a6-anchored species): at reference = ΔrH°(298.15 K); sensible = ΔrH°(T) − ΔrH°(298.15 K)."""
    gas = ct.Solution("gri30.yaml")

    def nasa(name):
        s = gas.species(name)
        c = s.thermo.coeffs
        return Species(name, "".join(f"{el}{n:g}" for el, n in s.composition.items() if n),
                       {"g": Phase("g", Nasa7Cp.from_two_ranges(s.thermo.min_temp, c[0], s.thermo.max_temp,
                                                                c[8:15], c[1:8]))})

    sp = {n: nasa(n) for n in ("CO2", "H2", "CH4", "H2O")}
    r = Reaction("methanation", "CO2(g) + 4 H2(g) -> CH4(g) + 2 H2O(g)")
    nu = {"CO2": -1, "H2": -4, "CH4": 1, "H2O": 2}

    def cantera_dH(T):
        gas.TP = T, ct.one_atm
        h = dict(zip(gas.species_names, gas.standard_enthalpies_RT * ct.gas_constant * T / 1000.0))  # J/mol
        return sum(v * h[k] for k, v in nu.items())

    T = np.array([400.0, 623.15, 900.0, 1200.0])
    t = reaction_enthalpy_terms(r, sp, T, T_REF)
    assert np.allclose(t.at_reference, cantera_dH(T_REF), rtol=0, atol=1e-3)
    assert np.allclose(t.sensible, [cantera_dH(x) - cantera_dH(T_REF) for x in T], rtol=0, atol=1e-3)
    assert np.allclose(t.latent, 0.0)


# ---------------------------------------------------------------------------
# results.json: kirchhoff_terms per reaction-enthalpy point, with GUM uncertainties
# ---------------------------------------------------------------------------

CASE = '''title = "Kirchhoff terms (test, invented constant-Cp data)"
[settings]
method = "linear"
what_if = false
sensitivity = "linear"
[species.S]
formula = "C2H6O"
[species.S.l]
formation_enthalpy = { value = "-250 kJ/mol", u = "0.4 kJ/mol" }
heat_capacity = { model = "constant", value = "140 J/(mol*K)", u = "2 J/(mol*K)", T = ["200 K", "400 K"] }
[species.S.g]
heat_capacity = { model = "constant", value = "95 J/(mol*K)", u = "1.5 J/(mol*K)", T = ["300 K", "900 K"] }
[[species.S.transition]]
from = "l"
to = "g"
temperature = "350 K"
enthalpy = { value = "33 kJ/mol", u = "0.3 kJ/mol" }
[species.O2]
formula = "O2"
[species.O2.g]
formation_enthalpy = "0 kJ/mol"
heat_capacity = { model = "constant", value = "29.4 J/(mol*K)", T = ["200 K", "2000 K"] }
[species.P]
formula = "C2H4O2"
[species.P.g]
formation_enthalpy = { value = "-430 kJ/mol", u = "0.9 kJ/mol" }
heat_capacity = { model = "constant", value = "70 J/(mol*K)", u = "1 J/(mol*K)", T = ["200 K", "2000 K"] }
[species.W]
formula = "H2O"
[species.W.g]
formation_enthalpy = { value = "-241.826 kJ/mol", u = "0.02 kJ/mol" }
heat_capacity = { model = "constant", value = "33.6 J/(mol*K)", T = ["200 K", "2000 K"] }
[reaction.ox]
equation = "S(g) + O2(g) -> P(g) + W(g)"
[[output]]
name = "dH"
kind = "reaction_enthalpy"
reaction = "ox"
temperatures = { from = "400 K", to = "600 K", step = "100 K" }
[[output]]
name = "dH_mass"
kind = "reaction_enthalpy"
reaction = "ox"
temperature = "500 K"
basis = "mass"
mass_of = "P"
'''


def test_results_carry_kirchhoff_terms_with_closed_form_uncertainties(tmp_path):
    """u of each term by the GUM law of propagation, checked against the closed form of independent inputs."""
    from uqthermo.pipeline.job import run_case

    path = tmp_path / "case.toml"
    path.write_text(CASE, encoding="utf-8")
    res = run_case(path).results
    pts = res["outputs"][0]["points"]
    assert len(pts) == 3
    for p in pts:
        T = p["temperature_K"]
        k = p["kirchhoff_terms"]
        assert set(k) == {"at_reference", "sensible", "latent"}
        total = sum(k[x]["estimate"] for x in k)
        assert total == pytest.approx(p["linear"]["estimate"], abs=1e-9)
        # closed forms (kJ/mol): ΔfH of S(l), P(g), W(g); Cp of S(l), S(g), P(g); ΔvapH of S
        assert k["at_reference"]["estimate"] == pytest.approx(-430 - 241.826 + 250)
        assert k["at_reference"]["standard_uncertainty"] == pytest.approx(np.sqrt(0.4**2 + 0.9**2 + 0.02**2), rel=1e-6)
        sens = -(140 * (350 - T_REF) + 95 * (T - 350)) / 1e3 + (70 + 33.6 - 29.4) * (T - T_REF) / 1e3
        assert k["sensible"]["estimate"] == pytest.approx(sens, abs=1e-9)
        u_sens = np.sqrt((2 * (350 - T_REF)) ** 2 + (1.5 * (T - 350)) ** 2 + (1 * (T - T_REF)) ** 2) / 1e3
        assert k["sensible"]["standard_uncertainty"] == pytest.approx(u_sens, rel=1e-6)
        assert k["latent"]["estimate"] == pytest.approx(-33.0)
        assert k["latent"]["standard_uncertainty"] == pytest.approx(0.3, rel=1e-6)
        assert [(t["species"], t["transition"], t["coefficient"]) for t in k["latent"]["terms"]] == [("S", "l-g", -1.0)]
        assert k["at_reference"]["temperature_K"] == T_REF and k["at_reference"]["anchor"] == "formation"
        # independent terms: u(y)² = Σ u(term)²
        u2 = sum(k[x]["standard_uncertainty"] ** 2 for x in k)
        assert np.sqrt(u2) == pytest.approx(p["linear"]["standard_uncertainty"], rel=1e-6)

    # per kg of P (C2H4O2, M = 60.052 g/mol from the IUPAC standard atomic weights C 12.011, H 1.008, O 15.999):
    # the terms are in the output's unit, kJ/kg, and still sum to its estimate
    out = res["outputs"][1]
    assert out["unit"] == "kJ/kg"
    p = out["points"][0]
    k = p["kirchhoff_terms"]
    assert sum(k[x]["estimate"] for x in k) == pytest.approx(p["linear"]["estimate"], rel=1e-12)
    assert k["at_reference"]["estimate"] == pytest.approx((-430 - 241.826 + 250) / 0.060052, rel=2e-5)

"""Formulas, equations, element balance and reaction properties (Kirchhoff's law).

Species data for the algebra checks (values at 298.15 K, recalled from memory; NIST WebBook /
CODATA): ΔfH/(kJ/mol): CO2 -393.51, CH4 -74.87, H2O(g) -241.83, H2 0, CO -110.53;
S°/(J/(mol K)): CO2 213.79, H2 130.68, CH4 186.25, H2O(g) 188.84, CO 197.66;
Cp/(J/(mol K)): CO2 37.1, H2 28.8, CH4 35.7, H2O(g) 33.6, CO 29.1 (held constant on purpose,
so that Kirchhoff's law has the closed form ΔrH(T) = ΔrH(T0) + ΔrCp (T - T0), Atkins'
Physical Chemistry).
"""

import numpy as np
import pytest

from uqthermo.errors import BalanceError, PathError, PhysicsError
from uqthermo.thermo import (
    R, ConstantCp, Participant, Phase, Reaction, Species, batch_reaction_property, check_balance,
    formula_charge, ln_equilibrium_constant, parse_equation, parse_formula, reaction_enthalpy,
    reaction_entropy, reaction_gibbs_energy, reaction_heat_capacity, species_enthalpies,
    stoichiometric_matrix,
)

DATA = {  # name: (ΔfH J/mol, S° J/(mol K), Cp J/(mol K))
    "CO2": (-393.51e3, 213.79, 37.1),
    "H2": (0.0, 130.68, 28.8),
    "CH4": (-74.87e3, 186.25, 35.7),
    "H2O": (-241.83e3, 188.84, 33.6),
    "CO": (-110.53e3, 197.66, 29.1),
}


@pytest.fixture
def species():
    return {n: Species(n, n, {"g": Phase("g", ConstantCp(cp, t_min=250, t_max=1500), h, s)})
            for n, (h, s, cp) in DATA.items()}


METHANATION = "CO2(g) + 4 H2(g) -> CH4(g) + 2 H2O(g)"
SHIFT = "CO(g) + H2O(g) = CO2(g) + H2(g)"


# ----------------------------------------------------------------------------- formulas
@pytest.mark.parametrize("formula, expected", [
    ("CH3COOH", {"C": 2, "H": 4, "O": 2}),
    ("Ca3(PO4)2", {"Ca": 3, "P": 2, "O": 8}),
    ("K4[Fe(CN)6]", {"K": 4, "Fe": 1, "C": 6, "N": 6}),
    ("((CH3)3C)2O", {"C": 8, "H": 18, "O": 1}),
    ("CuSO4·5H2O", {"Cu": 1, "S": 1, "O": 9, "H": 10}),
    ("CuSO4*5H2O", {"Cu": 1, "S": 1, "O": 9, "H": 10}),
    ("Fe0.947O", {"Fe": 0.947, "O": 1}),
    ("H2O(g)", {"H": 2, "O": 1}),
    ("SO4^2-", {"S": 1, "O": 4}),
    ("NH4+", {"N": 1, "H": 4}),
    ("[Fe(CN)6]4-", {"Fe": 1, "C": 6, "N": 6}),
    ("Co", {"Co": 1}),
    ("CO", {"C": 1, "O": 1}),
])
def test_parse_formula(formula, expected):
    assert parse_formula(formula) == pytest.approx(expected)


def test_formula_charges():
    assert formula_charge("SO4^2-") == -2
    assert formula_charge("SO4-2") == -2
    assert formula_charge("NH4+") == 1
    assert formula_charge("Fe+3") == 3
    assert formula_charge("[Fe(CN)6]4-") == -4
    assert formula_charge("H2O") == 0


@pytest.mark.parametrize("bad", ["Xx2", "H2O)", "(H2O", "2H2O", "", "H2O·", "()2", "h2o"])
def test_parse_formula_errors(bad):
    with pytest.raises(PhysicsError):
        parse_formula(bad)


# ----------------------------------------------------------------------------- equations
def test_parse_equation_basic():
    ps = parse_equation(METHANATION)
    assert ps == [Participant(-1, "CO2", "g"), Participant(-4, "H2", "g"),
                  Participant(1, "CH4", "g"), Participant(2, "H2O", "g")]


@pytest.mark.parametrize("text", [
    "H2(g) + 1/2 O2(g) -> H2O(l)",
    "H2(g) + 0.5 O2(g) = H2O(l)",
    "H2(g) + (1/2) O2(g) → H2O(l)",
    "H2(g) + .5 O2(g) <=> H2O(l)",
    "H2(g)+0.5O2(g)=>H2O(l)",
])
def test_parse_equation_arrows_and_fractions(text):
    ps = parse_equation(text)
    assert [(p.nu, p.species, p.phase) for p in ps] == [(-1, "H2", "g"), (-0.5, "O2", "g"), (1, "H2O", "l")]


def test_parse_equation_names_states_and_compact_forms():
    ps = parse_equation("2H2O(l) + CH2(S)(g) + C2H6(g) -> 1-butene(g) + 3 Fe(OH)3(cr) + NaCl(aq) + X(s)")
    assert [(p.nu, p.species, p.phase) for p in ps] == [
        (-2, "H2O", "l"), (-1, "CH2(S)", "g"), (-1, "C2H6", "g"),
        (1, "1-butene", "g"), (3, "Fe(OH)3", "cr"), (1, "NaCl", "aq"), (1, "X", "s")]
    ions = parse_equation("Na+(aq) + Cl-(aq) -> NaCl(cr)")
    assert [p.species for p in ions] == ["Na+", "Cl-", "NaCl"]
    nostate = parse_equation("CO + H2O = CO2 + H2")
    assert all(p.phase is None for p in nostate) and nostate[0].key == "CO"


@pytest.mark.parametrize("bad, match", [
    ("CO2 + H2", "exactly one arrow"),
    ("A -> B -> C", "exactly one arrow"),
    (" -> CO2", "empty left side"),
    ("CO2 + -> CO", "empty term"),
    ("0 H2 -> H2", "must be positive"),
    ("2 H2 O2 -> 2 H2O", "no spaces"),
])
def test_parse_equation_errors(bad, match):
    with pytest.raises(PhysicsError, match=match):
        parse_equation(bad)


def test_reaction_parses_and_keys_errors():
    r = Reaction("R1", METHANATION)
    assert len(r.participants) == 4 and r.anchor == "formation"
    with pytest.raises(PhysicsError) as e:
        Reaction("R2", "CO2 + H2")
    assert e.value.key == "reaction.R2.equation"


# ----------------------------------------------------------------------------- balance
def test_balance_ok_and_errors(species):
    check_balance(Reaction("R1", METHANATION), species)
    with pytest.raises(BalanceError) as e:
        check_balance(Reaction("bad", "CO2(g) + 4 H2(g) -> CH4(g) + H2O(g)"), species)
    msg = str(e.value)
    assert "H -2" in msg and "O -1" in msg and "C " not in msg.split(":")[1]
    assert e.value.key == "reaction.bad.equation"
    with pytest.raises(PhysicsError, match="unknown species 'O2'"):
        check_balance(Reaction("R3", "2 H2(g) + O2(g) -> 2 H2O(g)"), species)
    ions = {"Na+": Species("Na+", "Na+", {"aq": Phase("aq")}), "Na": Species("Na", "Na", {"cr": Phase("cr")})}
    with pytest.raises(BalanceError, match="charge -1"):
        check_balance(Reaction("ion", "Na+(aq) -> Na(cr)"), ions)


# ----------------------------------------------------------------------------- properties
def closed_form(T):
    dH0 = -74.87e3 + 2 * -241.83e3 - -393.51e3
    dS0 = 186.25 + 2 * 188.84 - 213.79 - 4 * 130.68
    dCp = 35.7 + 2 * 33.6 - 37.1 - 4 * 28.8
    dH = dH0 + dCp * (T - 298.15)
    dS = dS0 + dCp * np.log(T / 298.15)
    return dH, dS, dCp


def test_reaction_properties_kirchhoff_closed_form(species):
    r = Reaction("M", METHANATION)
    T = np.array([298.15, 500.0, 623.15, 900.0])
    dH, dS, dCp = closed_form(T)
    np.testing.assert_allclose(reaction_enthalpy(r, species, T), dH, rtol=1e-13)
    np.testing.assert_allclose(reaction_entropy(r, species, T), dS, rtol=1e-12)
    np.testing.assert_allclose(reaction_gibbs_energy(r, species, T), dH - T * dS, rtol=1e-12)
    np.testing.assert_allclose(ln_equilibrium_constant(r, species, T), -(dH - T * dS) / (R * T), rtol=1e-12)
    np.testing.assert_allclose(reaction_heat_capacity(r, species, T), dCp, rtol=1e-13)
    assert float(reaction_enthalpy(r, species, 298.15)) == pytest.approx(-165.02e3)


def test_measured_anchor_equals_formation_route(species):
    r = Reaction("M", METHANATION)
    for Tm in (298.15, 500.0):
        dHm = float(reaction_enthalpy(r, species, Tm))
        rm = Reaction("M", METHANATION, measured_enthalpy=(dHm, Tm))
        assert rm.anchor == "measured"
        T = np.linspace(300, 1200, 7)
        np.testing.assert_allclose(reaction_enthalpy(rm, species, T), reaction_enthalpy(r, species, T), rtol=1e-12)
    # the measured anchor does not need formation enthalpies
    bare = {n: Species(n, n, {"g": Phase("g", ConstantCp(d[2]))}) for n, d in DATA.items()}
    rm = Reaction("M", METHANATION, measured_enthalpy=(-165.0e3, 298.15))
    assert float(reaction_enthalpy(rm, bare, 700.0)) == pytest.approx(-165.0e3 + closed_form(700.0)[2] * (700 - 298.15))
    # sampled measured value
    vals = {"reaction.M.measured_enthalpy": np.array([[-166.0e3], [-164.0e3]])}
    out = reaction_enthalpy(rm, bare, np.array([400.0, 700.0]), values=vals)
    assert out.shape == (2, 2)
    assert out[0, 1] - out[1, 1] == pytest.approx(-2000.0)


def test_sampled_species_values_broadcast(species):
    r = Reaction("M", METHANATION)
    N = 4
    u = np.linspace(-1, 1, N)[:, None]
    vals = {"CH4": {"g.formation_enthalpy": -74.87e3 + 300 * u},
            "H2O": {"g.heat_capacity": (33.6 + u)[:, :, None]}}
    T = np.array([400.0, 800.0])
    out = reaction_enthalpy(r, species, T, values=vals)
    assert out.shape == (N, 2)
    dH = closed_form(T)[0]
    np.testing.assert_allclose(out, dH + 300 * u + 2 * u * (T - 298.15), rtol=1e-12)


def test_phase_resolution_in_equations(species):
    r = Reaction("S", "CO + H2O = CO2 + H2")
    assert float(reaction_enthalpy(r, species, 298.15)) == pytest.approx(-393.51e3 + 110.53e3 + 241.83e3)
    two = dict(species)
    two["H2O"] = Species("H2O", "H2O", {"g": species["H2O"].phases["g"], "l": Phase("l", ConstantCp(75.3), -285.83e3)})
    with pytest.raises(PathError, match="state the phase"):
        reaction_enthalpy(r, two, 400.0)


def test_batch_form_shares_species_samples(species):
    rxs = [Reaction("M", METHANATION), Reaction("S", SHIFT)]
    keys = ["CO2(g)", "H2(g)", "CH4(g)", "H2O(g)", ("CO", "g")]
    nu = stoichiometric_matrix(rxs, keys)
    np.testing.assert_array_equal(nu, [[-1, -4, 1, 2, 0], [1, 1, 0, -1, -1]])
    T = np.array([400.0, 700.0, 1000.0])
    N = 3
    u = np.array([[-1.0], [0.0], [2.0]])
    vals = {"H2O": {"g.formation_enthalpy": -241.83e3 + 100 * u}}
    H = species_enthalpies(species, keys, T, values=vals)
    assert H.shape == (N, 5, 3)
    Y = batch_reaction_property(H, nu)
    assert Y.shape == (N, 2, 3)
    for j, r in enumerate(rxs):
        np.testing.assert_allclose(Y[:, j, :], reaction_enthalpy(r, species, T, values=vals), rtol=1e-12)
    # the shared H2O sample correlates the two reactions perfectly (opposite signs)
    assert np.corrcoef(Y[:, 0, 0], Y[:, 1, 0])[0, 1] == pytest.approx(-1.0)
    with pytest.raises(PhysicsError, match="not among the species keys"):
        stoichiometric_matrix(rxs, keys[:4])
    with pytest.raises(PhysicsError, match="do not match"):
        batch_reaction_property(H[:, :4], nu)

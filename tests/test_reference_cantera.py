"""Reference checks against Cantera with GRI-Mech 3.0 (gri30.yaml, NASA-7 polynomials).

Source of the reference values: Cantera's ``Solution.delta_standard_enthalpy``,
``delta_standard_entropy`` and ``delta_standard_gibbs`` (J/kmol, J/(kmol K)) for the
reactions of gri30.yaml; our species are built from the same coefficients
(``species.thermo.coeffs`` = [T_mid, high a1..a7, low a1..a7]).

Range boundary: Cantera evaluates a NASA-7 species with the LOW range for T <= T_mid; our
Nasa7Cp does the same, so H(T) from the a6 anchor matches to rounding. The Kirchhoff route
(ΔfH at 298.15 K + piecewise ∫Cp dT) differs by the ranges' enthalpy mismatch at T_mid
(< 0.2 J/mol per species in gri30), well inside the 1 J/mol requirement.
"""

import cantera as ct
import numpy as np
import pytest

from uqthermo.thermo import (
    Nasa7Cp, Phase, Reaction, Species, batch_reaction_property, check_balance, ln_equilibrium_constant,
    reaction_enthalpy, reaction_entropy, reaction_gibbs_energy, species_enthalpies, stoichiometric_matrix,
)

GAS = ct.Solution("gri30.yaml")
T_GRID = np.concatenate([np.arange(300.0, 3001.0, 100.0), [1368.0, 1382.0, 1478.0, 999.999, 1000.001]])
# 12 reactions of gri30 (indices into gas.reactions()), chosen to cover H/O, C1, C2, N chemistry
PICKED = [0, 2, 5, 10, 30, 37, 84, 98, 118, 177, 240, 286]


def _formula(sp) -> str:
    return "".join(f"{el}{n:g}" for el, n in sp.composition.items() if n)


def _nasa(sp, extrapolate=False) -> Nasa7Cp:
    c = sp.thermo.coeffs
    return Nasa7Cp.from_two_ranges(sp.thermo.min_temp, c[0], sp.thermo.max_temp, c[8:15], c[1:8],
                                   allow_extrapolation=extrapolate)


def _equation(r) -> str:
    lhs = " + ".join(f"{nu:g} {name}(g)" for name, nu in r.reactants.items())
    rhs = " + ".join(f"{nu:g} {name}(g)" for name, nu in r.products.items())
    return f"{lhs} -> {rhs}"


def species_absolute():
    """Species anchored by the NASA-7 a6/a7 constants (no formation data given)."""
    return {sp.name: Species(sp.name, _formula(sp), {"g": Phase("g", _nasa(sp))}) for sp in GAS.species()}


def species_kirchhoff():
    """Species anchored by ΔfH(298.15 K), S°(298.15 K) taken from Cantera; heated by ∫Cp dT.

    Species whose NASA data start at 300 K are extrapolated by 1.85 K down to 298.15 K (as
    Cantera itself does when asked for 298.15 K).
    """
    GAS.TP = 298.15, ct.one_atm
    h0 = GAS.standard_enthalpies_RT * ct.gas_constant * 298.15 / 1000.0
    s0 = GAS.standard_entropies_R * ct.gas_constant / 1000.0
    out = {}
    for i, sp in enumerate(GAS.species()):
        cp = _nasa(sp, extrapolate=sp.thermo.min_temp > 298.15)
        out[sp.name] = Species(sp.name, _formula(sp), {"g": Phase("g", cp, float(h0[i]), float(s0[i]))})
    return out


def cantera_reaction_values(T_values):
    H, S, G = [], [], []
    for T in T_values:
        GAS.TP = T, ct.one_atm
        H.append(GAS.delta_standard_enthalpy / 1000.0)
        S.append(GAS.delta_standard_entropy / 1000.0)
        G.append(GAS.delta_standard_gibbs / 1000.0)
    return np.array(H).T, np.array(S).T, np.array(G).T  # (R, M)


REF_H, REF_S, REF_G = cantera_reaction_values(T_GRID)


@pytest.mark.parametrize("species_factory", [species_absolute, species_kirchhoff])
def test_reaction_enthalpy_matches_cantera_within_1_J(species_factory):
    species = species_factory()
    for i in PICKED:
        r = GAS.reaction(i)
        rx = Reaction(f"R{i}", _equation(r))
        check_balance(rx, species)
        ours = reaction_enthalpy(rx, species, T_GRID)
        # requirement: |ΔrH(ours) - ΔrH(Cantera)| <= 1 J/mol from 300 to 3000 K
        np.testing.assert_allclose(ours, REF_H[i], rtol=0, atol=1.0, err_msg=f"{r.equation}")


def test_absolute_route_matches_cantera_to_rounding_and_entropy_gibbs_lnK():
    species = species_absolute()
    for i in PICKED:
        rx = Reaction(f"R{i}", _equation(GAS.reaction(i)))
        np.testing.assert_allclose(reaction_enthalpy(rx, species, T_GRID), REF_H[i], rtol=1e-9, atol=1e-3)
        np.testing.assert_allclose(reaction_entropy(rx, species, T_GRID), REF_S[i], rtol=1e-9, atol=1e-6)
        np.testing.assert_allclose(reaction_gibbs_energy(rx, species, T_GRID), REF_G[i], rtol=1e-9, atol=1e-3)
        # ln K° = -ΔrG°/(RT) with Cantera's gas constant (same CODATA value)
        lnK_ref = -REF_G[i] * 1000.0 / (ct.gas_constant * T_GRID)
        np.testing.assert_allclose(ln_equilibrium_constant(rx, species, T_GRID), lnK_ref, rtol=1e-9, atol=1e-9)


def test_kirchhoff_route_entropy_matches_cantera():
    species = species_kirchhoff()
    for i in PICKED:
        rx = Reaction(f"R{i}", _equation(GAS.reaction(i)))
        np.testing.assert_allclose(reaction_entropy(rx, species, T_GRID), REF_S[i], rtol=0, atol=1e-3)


def test_batch_form_all_gri30_reactions():
    """All 325 gri30 reactions at once: species samples @ stoichiometric matrix."""
    species = species_kirchhoff()
    reactions = [Reaction(f"R{i}", _equation(r)) for i, r in enumerate(GAS.reactions())]
    keys = [f"{sp.name}(g)" for sp in GAS.species()]
    nu = stoichiometric_matrix(reactions, keys)
    H = species_enthalpies(species, keys, T_GRID)
    Y = batch_reaction_property(H, nu)
    assert Y.shape == (GAS.n_reactions, T_GRID.size)
    np.testing.assert_allclose(Y, REF_H, rtol=0, atol=1.0)


def test_water_formation_enthalpy_against_janaf():
    """ΔfH°(H2O, g) = H(H2O) - H(H2) - ½H(O2) with gri30 NASA-7 data, Kirchhoff route from
    ΔfH°(298.15 K) = -241.826 kJ/mol. JANAF (Chase 1998) tabulates -242.85, -243.83 and
    -247.86 kJ/mol at 400, 500 and 1000 K (JANAF values recalled from memory; the table
    rounds to 0.01 kJ/mol, hence the 0.02 kJ/mol tolerance)."""
    gas = {sp.name: sp for sp in GAS.species()}
    species = {
        "H2O": Species("H2O", "H2O", {"g": Phase("g", _nasa(gas["H2O"]), -241.826e3)}),
        "H2": Species("H2", "H2", {"g": Phase("g", _nasa(gas["H2"]), 0.0)}),
        "O2": Species("O2", "O2", {"g": Phase("g", _nasa(gas["O2"]), 0.0)}),
    }
    rx = Reaction("formation", "H2(g) + 1/2 O2(g) -> H2O(g)")
    check_balance(rx, species)
    got = reaction_enthalpy(rx, species, np.array([400.0, 500.0, 1000.0])) / 1000.0
    np.testing.assert_allclose(got, [-242.85, -243.83, -247.86], atol=0.02)

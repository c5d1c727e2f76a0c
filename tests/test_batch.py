"""Batch mode: reaction properties from shared species samples through the stoichiometric matrix.

References: the reaction-by-reaction sums of :mod:`uqthermo.thermo.reaction` (the
definition ΔrH = Σ ν_i H_i, IUPAC Green Book 2.11) evaluated on the same inputs, and
Cantera's gri30.yaml (NASA-7) for a set of reactions sharing species.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from uqthermo.case.model.builder import BLOCK_ROWS, build_model
from uqthermo.case.model.layout import build_inputs, values_decoder
from uqthermo.case.model.reaction_table import ReactionTable
from uqthermo.case.loader import load_case, parse_case
from uqthermo.thermo import reaction as rx

ROOT = Path(__file__).resolve().parents[1]
CASES = ["methanation_reactor.toml", "epoxide_hydration_batch.toml"]


def _rows(model, n, seed=7):
    U = np.random.default_rng(seed).random((n, len(model.inputs)))
    return model.inputs.from_uniform(U)


@pytest.mark.parametrize("name", CASES)
def test_batch_equals_reaction_by_reaction(name):
    # reference: the same case evaluated output by output, reaction by reaction (batch=False)
    case = load_case(ROOT / "inputs" / name)
    X = _rows(build_model(case), 3000)
    Yb = build_model(case).evaluate(X)
    Yd = build_model(case, batch=False).evaluate(X)
    np.testing.assert_allclose(Yb, Yd, rtol=1e-12, atol=1e-9)


@pytest.mark.parametrize("name", CASES)
def test_block_size_does_not_change_results(name):
    # the model acts row by row: blocks of 4096 rows vs one block (rounding only)
    case = load_case(ROOT / "inputs" / name)
    m = build_model(case)
    X = _rows(m, BLOCK_ROWS + 1234)
    Y1 = m.evaluate(X)
    Y2 = build_model(case, block_rows=10 ** 9).evaluate(X)
    np.testing.assert_allclose(Y1, Y2, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(m.evaluate(X[:5]), Y1[:5], rtol=1e-12, atol=1e-9)


def _many_reactions_case() -> dict:
    """Six reactions over five species, data from Cantera's gri30.yaml (NASA-7, a6/a7 anchors)."""
    import cantera as ct

    gas = ct.Solution("gri30.yaml")
    species = {}
    for name in ["CH4", "O2", "CO2", "H2O", "CO", "H2"]:
        sp = gas.species(name)
        c = sp.thermo.coeffs  # [T_mid, high a1..a7, low a1..a7]
        t_lo, t_hi = sp.thermo.min_temp, sp.thermo.max_temp
        ranges = [{"T": [f"{t_lo} K", f"{c[0]} K"], "coefficients": list(c[8:15])},
                  {"T": [f"{c[0]} K", f"{t_hi} K"], "coefficients": list(c[1:8])}]
        species[name] = {"formula": name, "g": {"heat_capacity": {"model": "nasa7", "ranges": ranges,
                                                                    "relative_u": "1 %"}}}
    eqs = {"combustion": "CH4(g) + 2 O2(g) -> CO2(g) + 2 H2O(g)",
           "shift": "CO(g) + H2O(g) -> CO2(g) + H2(g)",
           "reforming": "CH4(g) + H2O(g) -> CO(g) + 3 H2(g)",
           "h2_ox": "2 H2(g) + O2(g) -> 2 H2O(g)",
           "co_ox": "2 CO(g) + O2(g) -> 2 CO2(g)",
           "dry": "CH4(g) + CO2(g) -> 2 CO(g) + 2 H2(g)"}
    outputs = []
    for r in eqs:
        outputs.append({"name": f"dH_{r}", "kind": "reaction_enthalpy", "reaction": r,
                        "temperatures": {"from": "400 K", "to": "1400 K", "step": "200 K"}})
    outputs.append({"name": "lnK_reforming", "kind": "equilibrium_constant", "reaction": "reforming",
                    "temperatures": {"from": "600 K", "to": "1200 K", "step": "300 K"}})
    outputs.append({"name": "dG_shift", "kind": "reaction_gibbs_energy", "reaction": "shift",
                    "temperature": "800 K"})
    return {"title": "shared species (gri30 data)", "settings": {"samples": 1000, "seed": 3},
            "species": species, "reaction": {k: {"equation": v} for k, v in eqs.items()}, "output": outputs}


def test_many_reactions_share_species_and_match_cantera():
    case = parse_case(_many_reactions_case(), "many.toml", library=False)
    m = build_model(case)
    x0 = np.asarray(m.inputs.estimates, dtype=float)[None, :]
    y0 = m.evaluate(x0)[0]
    # reference: Cantera gri30 standard enthalpies, ΔrH = Σ ν h°_i (kJ/mol)
    import cantera as ct

    gas = ct.Solution("gri30.yaml")
    j = 0
    for o in case.outputs:
        r = case.reactions[o.reaction]
        for T in o.temperatures:
            h = {p.species: gas.species(p.species).thermo.h(T) / 1e6 for p in r.participants}   # J/kmol → kJ/mol
            s = {p.species: gas.species(p.species).thermo.s(T) / 1e6 for p in r.participants}   # kJ/(mol K)
            dH = sum(p.nu * h[p.species] for p in r.participants)
            dG = dH - T * sum(p.nu * s[p.species] for p in r.participants)
            ref = {"reaction_enthalpy": dH, "reaction_gibbs_energy": dG,
                   "equilibrium_constant": -dG * 1e3 / (8.314462618 * T) / np.log(10)}[o.kind]
            # a few 0.1 J/mol of range mismatch at T_mid for the piecewise Cp integral (see cp.Nasa7Cp)
            assert y0[j] == pytest.approx(ref, abs=2e-3 if o.kind != "equilibrium_constant" else 1e-4), (o.name, T)
            j += 1
    X = _rows(m, 2000)
    np.testing.assert_allclose(m.evaluate(X), build_model(case, batch=False).evaluate(X), rtol=1e-12, atol=1e-9)


def test_shared_samples_give_the_covariance_of_a_linear_combination():
    # h2_ox - co_ox = 2 H2 + 2 CO2 - 2 H2O - 2 CO = -2 x shift, sample by sample: the batch path
    # uses one species sample for every reaction, so the identity holds exactly (and the
    # covariance matrix of the reactions is that of a linear map of the species samples).
    case = parse_case(_many_reactions_case(), "many.toml", library=False)
    m = build_model(case)
    Y = m.evaluate(_rows(m, 4000))
    cols = {o.name: m.output_columns(i) for i, o in enumerate(case.outputs)}
    lhs = Y[:, cols["dH_h2_ox"]] - Y[:, cols["dH_co_ox"]]
    np.testing.assert_allclose(lhs, -2.0 * Y[:, cols["dH_shift"]], rtol=0, atol=1e-9)
    var = np.var(lhs, axis=0)
    a, b = Y[:, cols["dH_h2_ox"]], Y[:, cols["dH_co_ox"]]
    cov = np.mean((a - a.mean(0)) * (b - b.mean(0)), axis=0)
    np.testing.assert_allclose(var, a.var(0) + b.var(0) - 2 * cov, rtol=1e-8)


def test_table_plan():
    case = parse_case(_many_reactions_case(), "many.toml", library=False)
    inputs, cols = build_inputs(case)
    tab = ReactionTable(case, [(o.reaction, o.temperatures, o.kind != "reaction_enthalpy") for o in case.outputs],
                        inputs, values_decoder(case, cols))
    assert tab.nu.shape == (6, 6)
    assert tab.entropy and tab.linear
    np.testing.assert_array_equal(tab.temperatures, np.unique(tab.temperatures))
    i = tab.keys.index(("H2O", "g"))
    assert tab.nu[tab.row("combustion"), i] == 2


def test_stoichiometric_product_sparse_equals_dense():
    rng = np.random.default_rng(0)
    R, S = 300, 60
    nu = np.zeros((R, S))
    for r in range(R):
        idx = rng.choice(S, 4, replace=False)
        nu[r, idx] = rng.integers(-3, 4, 4)
    H = rng.normal(size=(S, 50, 7))
    ref = np.einsum("rs,snm->rnm", nu, H)   # definition Σ_s ν_rs H_s
    np.testing.assert_allclose(rx.stoichiometric_product(nu, H), ref, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(rx.batch_reaction_property(np.moveaxis(H, 0, 1), nu),
                               np.moveaxis(ref, 0, 1), rtol=1e-12, atol=1e-9)
    with pytest.raises(Exception):
        rx.stoichiometric_product(nu, H[:5])


def test_uncertain_transition_temperature_falls_back_to_direct_species():
    # EPX3(g) (fictitious; gas-phase data INVENTED for this test) has no anchor of its own and
    # is reached from the liquid through l-g at an uncertain temperature: the species
    # enthalpy is then not affine in the data, and the table evaluates it directly
    import tomllib

    raw = tomllib.loads((ROOT / "inputs" / "epoxide_hydration_batch.toml").read_text())
    epx = raw["species"]["EPX3"]
    epx["g"] = {"heat_capacity": {"model": "polynomial", "coefficients": {"a": 150.0, "b": 0.2},
                                  "relative_u": "2 %"}}
    epx["transition"] = [{"from": "l", "to": "g", "temperature": {"value": "420 K", "u": "3 K"},
                          "enthalpy": {"value": "45 kJ/mol", "u": "1 kJ/mol"}}]
    raw["reaction"]["evaporation"] = {"equation": "EPX3(l) -> EPX3(g)"}
    raw["output"] = [o for o in raw["output"] if o["kind"] == "reaction_enthalpy"] + [
        {"name": "dH_evap", "kind": "reaction_enthalpy", "reaction": "evaporation",
         "temperatures": {"from": "400 K", "to": "440 K", "step": "20 K"}}]
    raw.pop("candidate", None)
    raw["settings"].pop("plan_target", None)
    case = parse_case(raw, "evap.toml", library=False)
    inputs, cols = build_inputs(case)
    tab = ReactionTable(case, [(o.reaction, o.temperatures, False) for o in case.outputs], inputs,
                        values_decoder(case, cols))
    assert not tab.linear
    m = build_model(case)
    X = _rows(m, 3000)
    Y = m.evaluate(X)
    assert np.std(Y[:, -1]) > 0
    np.testing.assert_allclose(Y, build_model(case, batch=False).evaluate(X), rtol=1e-12, atol=1e-9)


def test_path_outside_validity_raises_at_evaluation_not_at_build():
    # gri30 NASA-7 data start at 200 K: the error must come from evaluate (where check_model
    # turns it into a keyed input error), as on the reaction-by-reaction path
    from uqthermo.errors import ValidityError

    raw = _many_reactions_case()
    raw["output"] = [{"name": "cold", "kind": "reaction_enthalpy", "reaction": "shift", "temperature": "150 K"}]
    case = parse_case(raw, "cold.toml", library=False)
    for batch in (True, False):
        m = build_model(case, batch=batch)
        with pytest.raises(ValidityError):
            m.evaluate(np.asarray(m.inputs.estimates, dtype=float)[None, :])

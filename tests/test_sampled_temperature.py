"""Reaction enthalpy at an uncertain temperature as one polynomial in T (case/model/sampled_temperature.py).

References: the Kirchhoff integral ΔrH(T) = ΔrH(T_ref) + ∫ Σ ν_i Cp_i dT by numerical
quadrature (``scipy.integrate.quad``) of the demo's published Cp curves (NIST WebBook Shomate,
GRI-Mech 3.0 NASA-7, as in inputs/methanation_reactor.toml), and the species-by-species
reference path of the thermo layer (``build_model(batch=False)``) on the same input rows.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

import numpy as np
import pytest
from scipy import integrate

from uqthermo.case.loader import load_case, parse_case
from uqthermo.case.model.builder import build_model
from uqthermo.case.model.layout import build_inputs, values_decoder
from uqthermo.case.model.sampled_temperature import SampledTemperatureEnthalpy
from uqthermo.thermo.cp import ConstantCp, Nasa7Cp, PolynomialCp, ShomateCp

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "inputs" / "methanation_reactor.toml"


def _demo_operating(temperature: dict | None = None) -> dict:
    raw = tomllib.loads(DEMO.read_text(encoding="utf-8"))
    raw["output"] = [o for o in raw["output"] if o["name"] == "dH_operating"]
    if temperature is not None:
        raw["output"][0]["temperature"] = temperature
    raw.pop("candidate", None)
    raw["settings"].pop("plan_target", None)
    return raw


@pytest.mark.parametrize("cp", [
    ConstantCp(29.1),
    PolynomialCp(a=20.0, b=0.05, c=-1e-5, d=2e-9, e=-1e5),
    ShomateCp([(298.0, 1200.0, [24.99735, 55.18696, -33.69137, 7.948387, -0.136638]),
               (1200.0, 6000.0, [58.16639, 2.720074, -0.492289, 0.038844, -6.447293])]),
    Nasa7Cp([(200.0, 1000.0, [4.19864056, -2.0364341e-3, 6.52040211e-6, -5.48797062e-9, 1.77197817e-12, 0, 0]),
             (1000.0, 3500.0, [3.03399249, 2.17691804e-3, -1.64072518e-7, -9.7041987e-11, 1.68200992e-14, 0, 0])]),
], ids=["constant", "polynomial", "shomate", "nasa7"])
def test_monomials_reproduce_the_antiderivative_basis(cp):
    # term k of the clipped antiderivative basis in the range containing T = factor_k T**exponent_k
    mono = cp.enthalpy_monomials()
    n = len(mono)
    for T in (350.0, 623.15, 1500.0):
        r = int(cp.range_index(T))
        B = cp.enthalpy_antiderivative_basis(np.array([T]))[0, r * n:(r + 1) * n]
        want = np.array([0.0 if m is None else m[1] * T ** m[0] for m in mono])
        np.testing.assert_allclose(B, want, rtol=1e-13)


def test_nominal_enthalpy_at_sampled_temperatures_matches_quadrature():
    # ΔrH(T) = Σ ν ΔfH + ∫_{T_ref}^{T} Σ ν Cp dT, the integral by scipy.integrate.quad (outside
    # reference for the polynomial form, including a temperature in the upper range of H2)
    case = parse_case(_demo_operating(), "op.toml", library=False)
    inputs, cols = build_inputs(case)
    decode = values_decoder(case, cols)
    reaction = case.reactions["methanation"]
    column = cols[case.outputs[0].temperature_datum][0]
    ev = SampledTemperatureEnthalpy.build(reaction, case.species, 298.15, column, decode, len(inputs))
    assert ev is not None
    temps = np.array([450.0, 623.15, 900.0, 1100.0])
    X = np.tile(np.asarray(inputs.estimates, dtype=float), (temps.size, 1))
    X[:, column] = temps
    got = np.array([ev.enthalpy(X[i:i + 1])[0] for i in range(temps.size)])
    parts = [(p.nu, case.species[p.species].phases[p.phase]) for p in reaction.participants]
    h0 = sum(nu * ph.formation_enthalpy for nu, ph in parts)
    want = [h0 + integrate.quad(lambda t: sum(nu * float(ph.cp.cp(t)) for nu, ph in parts), 298.15, T,
                                epsabs=1e-9, epsrel=1e-13, points=[1000.0])[0] for T in temps]
    np.testing.assert_allclose(got, want, rtol=1e-11)


@pytest.mark.parametrize("temperature", [None, {"value": "1000 K", "u": "60 K", "distribution": "normal"}],
                         ids=["demo", "across-H2-range-boundary"])
def test_model_equals_species_by_species_path(temperature):
    # the same rows through the reference path (batch=False); with T around H2's 1000 K range
    # boundary some blocks cross it and go the reference path, the others the polynomial
    case = parse_case(_demo_operating(temperature), "op.toml", library=False)
    m = build_model(case)
    X = m.inputs.from_uniform(np.random.default_rng(5).random((3 * 4096 + 77, len(m.inputs))))
    _, cols = build_inputs(case)
    X = X[np.argsort(X[:, cols[case.outputs[0].temperature_datum][0]])]   # blocks on either side
    np.testing.assert_allclose(m.evaluate(X), build_model(case, batch=False).evaluate(X), rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(m.evaluate(X[:300]), m.evaluate(X)[:300], rtol=1e-12)


def test_validity_error_still_raised():
    # a bed temperature below the Shomate ranges (298 K): the block goes the reference path,
    # which raises the validity error as before
    from uqthermo.errors import ValidityError

    case = parse_case(_demo_operating(), "op.toml", library=False)
    m = build_model(case)
    X = np.asarray(m.inputs.estimates, dtype=float)[None, :].copy()
    _, cols = build_inputs(case)
    X[0, cols[case.outputs[0].temperature_datum][0]] = 250.0
    with pytest.raises(ValidityError):
        m.evaluate(X)


def test_phase_reached_through_a_transition_is_not_served():
    # EPX3(g) (gas-phase data INVENTED for this test) is reached from the liquid through l-g:
    # the one-polynomial form does not hold, the reference path is used
    raw = tomllib.loads((ROOT / "inputs" / "epoxide_hydration_batch.toml").read_text())
    epx = raw["species"]["EPX3"]
    epx["g"] = {"heat_capacity": {"model": "polynomial", "coefficients": {"a": 150.0, "b": 0.2}}}
    epx["transition"] = [{"from": "l", "to": "g", "temperature": "420 K", "enthalpy": "45 kJ/mol"}]
    raw["reaction"]["evaporation"] = {"equation": "EPX3(l) -> EPX3(g)"}
    raw["output"] = [{"name": "dH_evap", "kind": "reaction_enthalpy", "reaction": "evaporation",
                      "temperature": {"value": "430 K", "u": "3 K"}}]
    raw.pop("candidate", None)
    raw["settings"].pop("plan_target", None)
    case = parse_case(raw, "evap.toml", library=False)
    inputs, cols = build_inputs(case)
    column = cols[case.outputs[0].temperature_datum][0]
    assert SampledTemperatureEnthalpy.build(case.reactions["evaporation"], case.species, 298.15, column,
                                            values_decoder(case, cols), len(inputs)) is None
    m = build_model(case)
    X = m.inputs.from_uniform(np.random.default_rng(2).random((500, len(m.inputs))))
    np.testing.assert_allclose(m.evaluate(X), build_model(case, batch=False).evaluate(X), rtol=1e-12)


def test_demo_output_is_served():
    case = load_case(DEMO)
    inputs, cols = build_inputs(case)
    o = next(o for o in case.outputs if o.name == "dH_operating")
    ev = SampledTemperatureEnthalpy.build(case.reactions[o.reaction], case.species, 298.15,
                                          cols[o.temperature_datum][0], values_decoder(case, cols), len(inputs),
                                          np.asarray(inputs.estimates, dtype=float)[None, :])
    assert ev is not None

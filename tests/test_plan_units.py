"""`uqthermo plan` with several outputs of different units (issue: never compare kJ/mol with kW).

References: the exact linear propagation (JCGM 100:2008 eq. (13)) through the planner's own
linear what-if — with a target per output, the planner's worst value must equal
max_i U_i / T_i computed from each output's linear U; with a relative target, U / |y| · 100.
"""

from __future__ import annotations

import pytest

from uqthermo.case.loader import load_case
from uqthermo.errors import InputError
from uqthermo.pipeline.purchase_plan import compute_plan, resolve_plan_request
from uqthermo.pipeline.job import prepare_model
from uqthermo.uq.linear import propagate_linear

CASE = "inputs/epoxide_hydration_batch.toml"


@pytest.fixture(scope="module")
def built():
    case = load_case(CASE)
    model, _ = prepare_model(case)
    return case, model


def test_budget_over_mixed_units_is_refused_with_a_keyed_message(built):
    case, model = built
    with pytest.raises(InputError) as e:
        resolve_plan_request(case, model, budget=20000.0)
    (p,) = e.value.problems
    assert p.key == "--budget" and "different units" in p.message and "--output" in p.message
    assert "dT_adiabatic [K]" in p.message and "--relative" in p.message


def test_cli_refuses_mixed_unit_budget_with_exit_2(capsys):
    from uqthermo.cli import main

    code = main(["plan", CASE, "--budget", "20000"])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and ": --budget: the outputs have different units" in err


def test_per_output_targets_compare_each_output_with_its_own_target(built):
    case, model = built
    lin = propagate_linear(model.f_reported, model.inputs, coverage=case.settings.coverage_probability)
    plan = compute_plan(case, model, target=["dT_adiabatic: U95 <= 5 K", "dH_25C: U95 <= 10 kJ/mol"], linear=lin)
    assert plan["target"]["unit"] == "of target" and plan["target"]["U"] == 1.0
    # now: worst of U_i / T_i; dH_25C is linear (linear planner U = k u with the normal k)
    from scipy import stats

    names = [o.name for o in case.outputs]
    j = model.output_columns(names.index("dH_25C"))[0]
    k = stats.norm.ppf(0.975)
    ratio_dh = k * lin.standard_uncertainty[j] / 10.0
    assert plan["U_now"] >= ratio_dh * (1 - 1e-9)


def test_relative_target_is_u_as_percent_of_the_estimate(built):
    case, model = built
    lin = propagate_linear(model.f_reported, model.inputs, coverage=case.settings.coverage_probability)
    plan = compute_plan(case, model, target="U95 <= 10 %", output_name="dH_25C", linear=lin)
    j = model.output_columns([o.name for o in case.outputs].index("dH_25C"))[0]
    from scipy import stats

    exact = 100 * stats.norm.ppf(0.975) * lin.standard_uncertainty[j] / abs(lin.estimate[j])
    assert plan["target"]["unit"] == "%"
    assert plan["U_now"] == pytest.approx(exact, rel=1e-9)   # linear planner, JCGM 100 eq. (13)


def test_target_for_an_unknown_output_is_refused(built):
    case, model = built
    with pytest.raises(InputError) as e:
        resolve_plan_request(case, model, target=["nope: U95 <= 5 K"])
    assert e.value.problems[0].key == "--target" and "no output named 'nope'" in e.value.problems[0].message


# QA: a candidate u = "0.2 kJ/mol" was labelled "(u=200)" (engine J/mol, no unit), and u = "1 kg" on an
# extent written in kg was refused. Molar mass of C2H4O from the IUPAC/CIAAW 2021 conventional atomic
# weights (C 12.011, H 1.008, O 15.999): 44.053 g/mol. All numbers INVENTED test inputs.
MASS_CASE = '''title = "candidate units (test, invented data)"
[settings]
samples = 2000
what_if = true
[species.A]
formula = "C2H4O"
[species.A.l]
formation_enthalpy = { value = "-100 kJ/mol", u = "1 kJ/mol" }
heat_capacity = { model = "constant", value = "90 J/(mol*K)", T = ["250 K", "1000 K"] }
[species.P]
formula = "C2H4O"
[species.P.l]
formation_enthalpy = { value = "-180 kJ/mol", u = "0.1 kJ/mol" }
heat_capacity = { model = "constant", value = "90 J/(mol*K)", T = ["250 K", "1000 K"] }
[reaction.R]
equation = "A(l) -> P(l)"
[[output]]
name = "rise"
kind = "adiabatic_temperature_rise"
reaction = "R"
start_temperature = "300 K"
extent = { value = "4.4053 kg", u = "0.44053 kg" }
extent_species = "A"
charge = { "P(l)" = "40 kg" }
[[candidate]]
datum = "A.l.formation_enthalpy"
u = "0.2 kJ/mol"
cost = 100
[[candidate]]
datum = "output.rise.extent"
u = "0.088106 kg"
cost = 10
'''


def test_candidate_u_keeps_the_users_unit_and_a_mass_for_a_mass_extent(tmp_path):
    p = tmp_path / "c.toml"
    p.write_text(MASS_CASE, encoding="utf-8")
    case = load_case(str(p))
    ext, h = case.candidates[1], case.candidates[0]
    # 0.088106 kg / 44.053 g/mol = 2 mol (|ν_A| = 1); the extent itself is 100 ± 10 mol
    assert ext.u == pytest.approx(2.0, rel=1e-4) and ext.u_text == "0.088106 kg"
    assert case.data["output.rise.extent"].nominal == pytest.approx(100.0, rel=1e-4)
    assert h.u == pytest.approx(0.2) and h.u_text == "0.2 kJ/mol"
    model, _ = prepare_model(case)
    plan = compute_plan(case, model, budget=1000.0, output_name="rise")
    actions = {r["datum"]: r for r in plan["candidates"]}
    assert actions["A.l.formation_enthalpy"]["action"] == "A.l.formation_enthalpy (u = 0.2 kJ/mol)"
    assert actions["output.rise.extent"]["action"] == "output.rise.extent (u = 0.088106 kg)"
    assert actions["output.rise.extent"]["factor"] == pytest.approx(0.2, rel=1e-4)     # 2 mol / 10 mol
    assert actions["A.l.formation_enthalpy"]["factor"] == pytest.approx(0.2)            # 0.2 / 1 kJ/mol
    # a mass where the datum has no molar mass is still a keyed problem, with the way out
    bad = MASS_CASE.replace('u = "0.2 kJ/mol"', 'u = "1 kg"')
    p.write_text(bad, encoding="utf-8")
    with pytest.raises(InputError) as e:
        load_case(str(p))
    assert "candidate[0].u" in str(e.value)

"""The Python entry point (run_case / RunResult), purchase planning from a case, and run-level warnings.

Outside references named beside the checks: the linear planner against a direct GUM
re-computation with the ``uncertainties`` package; exact Gaussian tail probabilities (scipy)
for the linear exceedance fallback.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from conftest import BASE_CASE, main_in_process, write_case
from uqthermo.pipeline.job import run_case

PLAN_CASE = BASE_CASE.replace('what_if = false\n', 'what_if = true\nplan_target = "U95 <= 0.25 kJ/mol"\n') + '''
[[candidate]]
datum = "CO.g.formation_enthalpy"
u = "0.005 kJ/mol"
cost = 500
note = "better CO formation enthalpy"

[[candidate]]
datum = "H2O.g.heat_capacity"
factor = 0.2
cost = 300
lead_time = "2 weeks"

[[candidate]]
datum = "CO2.g.heat_capacity"
factor = 0.2
cost = 300

[[candidate]]
datum = "CO.g.heat_capacity"
factor = 0.2
cost = 300
'''


@pytest.fixture(scope="module")
def plan_result(tmp_path_factory):
    d = tmp_path_factory.mktemp("plan")
    return run_case(write_case(d, PLAN_CASE), samples=4000)


def test_run_result_renders_in_notebooks_and_as_dataframe(plan_result):
    html = plan_result._repr_html_()
    assert "<table" in html and "dH_700K" in html
    df = plan_result.to_dataframe()
    assert len(df) == sum(len(o["points"]) for o in plan_result.results["outputs"])


def test_plan_section_in_results_meets_target(plan_result):
    plan = plan_result.results["plan"]
    assert plan["target"]["U"] == pytest.approx(0.25)
    best = plan["best"]
    assert best is not None and best["meets_target"]
    assert best["U"] <= 0.25 + 1e-12
    # the front is sorted by cost and non-dominated
    costs = [p["cost"] for p in plan["front"]]
    assert costs == sorted(costs)
    us = [p["U"] for p in plan["front"]]
    assert all(a > b for a, b in zip(us, us[1:]))


def test_plan_best_matches_direct_gum_recomputation(plan_result):
    # Outside reference: the `uncertainties` package propagates the purchased uncertainties
    # through the model's sensitivity coefficients (GUM law of propagation, JCGM 100 eq. (10)).
    from uncertainties import correlated_values

    res = plan_result
    lin = res.linear
    inputs = res.model.inputs
    plan = res.results["plan"]
    cands = {c["id"]: c for c in plan["candidates"]}
    factors = np.ones(len(inputs.variables))
    for cid in plan["best"]["set"]:
        for i in inputs.groups[cands[cid]["datum"]]:
            factors[i] = cands[cid]["factor"]
    cov = inputs.covariance() * np.outer(factors, factors)
    x = correlated_values(np.asarray(inputs.estimates, dtype=float), cov)
    cols = res.model.output_columns(0)
    worst = 0.0
    for j in cols:
        y = sum(float(c) * xi for c, xi in zip(lin.sensitivity[j], x))
        worst = max(worst, 1.959963984540054 * y.std_dev)
    assert plan["best"]["U"] == pytest.approx(worst, rel=1e-6)


def test_plan_command_writes_json_csv_and_figure(tmp_path):
    case = write_case(tmp_path, PLAN_CASE)
    out = tmp_path / "plan"
    code, stdout, stderr = main_in_process("plan", case, "--target", "U95 <= 250 J/mol", "--out", out)
    assert code == 0, stderr
    assert "recommended" in stdout
    doc = json.loads((out / "plan.json").read_text())
    assert doc["plan"]["target"]["U"] == pytest.approx(0.25)      # J/mol converted to kJ/mol
    assert (out / "plan.csv").read_text().startswith("cost,")
    assert (out / "figures" / "plan-front.png").stat().st_size > 1000
    # an unreachable target is reported, exit 1
    code, stdout, _ = main_in_process("plan", case, "--target", "U95 <= 1e-6 kJ/mol")
    assert code == 1 and "no selection" in stdout
    # a target whose unit fits no output is an input error naming --target
    code, _, stderr = main_in_process("plan", case, "--target", "U95 <= 2 K")
    assert code == 2 and "--target" in stderr


def test_negative_cp_samples_are_flagged(tmp_path):
    # per-coefficient uncertainties wide enough that sampled curves dip below zero
    text = BASE_CASE.replace('relative_u = "0.3 %" }', 'u = { a = 60.0, b = 0.001 } }', 1)
    assert text != BASE_CASE
    res = run_case(write_case(tmp_path, text), samples=2000)
    assert any("Cp ≤ 0" in w and "H2O.l.heat_capacity" in w for w in res.results["warnings"])


def test_duration_and_reproducibility_fields(plan_result):
    run = plan_result.results["run"]
    assert plan_result.run_log["duration_s"] > 0 and "duration_s" not in run    # volatile: in run-log.json
    assert run["seed"] == 7 and run["samples"] == 4000 and run["sampling"] == "sobol"
    assert len(plan_result.results["case"]["sha256"]) == 64


def test_linear_exceedance_fallback_uses_the_normal_tail(tmp_path):
    # method = linear: no Monte Carlo, the exceedance probability is the Gaussian tail (scipy.stats.norm)
    from scipy import stats

    text = BASE_CASE + '''
[species.S]
formula = "C7H8"
[species.S.l]
formation_enthalpy = { value = "12 kJ/mol", u = "1 kJ/mol" }
heat_capacity = { model = "constant", value = "157 J/(mol*K)", u = "3 J/(mol*K)", T = ["250 K", "500 K"] }

[[output]]
name = "rise"
kind = "adiabatic_temperature_rise"
reaction = "shift"
start_temperature = "320 K"
extent = { value = "0.5 mol", u = "0.01 mol" }
charge = { "S(l)" = "10 mol" }
limit = "340 K"
'''
    res = run_case(write_case(tmp_path, text), method="linear")
    o = next(o for o in res.results["outputs"] if o["name"] == "rise")
    pt = o["points"][0]
    lin = pt["linear"]
    z = (340.0 - 320.0 - lin["estimate"]) / lin["standard_uncertainty"]
    assert pt["exceedance_probability"] == pytest.approx(float(stats.norm.sf(z)), rel=1e-9)
    assert math.isfinite(pt["final_temperature_K"])


PLATEAU_CASE = '''title = "Adiabatic rise onto a boiling plateau (test)"
[settings]
samples = 4000
seed = 3
what_if = false
sensitivity = "linear"
[species.A]
formula = "C2H4O"
[species.A.l]
formation_enthalpy = { value = "-100 kJ/mol", u = "0.1 kJ/mol" }
heat_capacity = { model = "constant", value = "90 J/(mol*K)", T = ["250 K", "400 K"] }
[species.P]
formula = "C2H4O"
[species.P.l]
formation_enthalpy = { value = "-180 kJ/mol", u = "0.1 kJ/mol" }
heat_capacity = { model = "constant", value = "100 J/(mol*K)", T = ["250 K", "400 K"] }
[species.S]
formula = "CH4O"
[species.S.l]
formation_enthalpy = "-239 kJ/mol"
heat_capacity = { model = "constant", value = "80 J/(mol*K)", T = ["250 K", "400 K"] }
[species.S.g]
heat_capacity = { model = "constant", value = "45 J/(mol*K)", T = ["250 K", "600 K"] }
[[species.S.transition]]
from = "l"
to = "g"
temperature = { value = "350 K", u = "5 K" }
enthalpy = "35 kJ/mol"
[reaction.R]
equation = "A(l) -> P(l)"
[[output]]
name = "rise"
kind = "adiabatic_temperature_rise"
reaction = "R"
start_temperature = "300 K"
extent = "1 mol"
charge = { "S(l)" = "10 mol" }
'''


def test_adiabatic_plateau_follows_the_sampled_boiling_point(tmp_path):
    # 80 kJ released (ΔrH(300 K) = -80 kJ/mol + ΔrCp·1.85 K, ΔrCp = 10 J/(mol K)). Without evaporative cooling
    # (the ΔT_ad of the MTSR, Stoessel 2008: Cp continued through the boiling point) the closed form is
    # ΔT_ad = -ΔrH/(n Cp) = 79981.5 J / 800 J/K = 99.977 K. The boiling-limited balance instead ends on the
    # plateau: T_end = T_b (u = 5 K, exact by construction) with (79981.5 - 800 (T_b - 300)) / 35000 mol boiled off.
    res = run_case(write_case(tmp_path, PLATEAU_CASE))
    pt = res.results["outputs"][0]["points"][0]
    dT = (80000.0 - 10.0 * 1.85) / 800.0
    assert pt["monte_carlo"]["mean"] == pytest.approx(dT, abs=0.02)
    assert pt["linear"]["estimate"] == pytest.approx(dT, rel=1e-6)
    bl = pt["boiling_limited"]
    assert bl["final_temperature_K"]["mean"] == pytest.approx(350.0, abs=0.3)
    assert bl["final_temperature_K"]["standard_uncertainty"] == pytest.approx(5.0, rel=0.03)
    assert bl["p_tempering_point_reached"] == pytest.approx(1.0)
    ev = bl["evaporated"][0]
    assert ev["species"] == "S" and ev["phase"] == "l"
    assert ev["mol"]["mean"] == pytest.approx((80000.0 - 18.5 - 800.0 * 50.0) / 35000.0, abs=0.01)
    assert ev["mol"]["standard_uncertainty"] == pytest.approx(800.0 * 5.0 / 35000.0, rel=0.05)
    # molar mass of CH4O from the IUPAC 2021 conventional atomic weights: 12.011 + 4·1.008 + 15.999 g/mol
    assert ev["kg"]["mean"] == pytest.approx(ev["mol"]["mean"] * 32.042e-3, rel=1e-9)
    assert pt["p_phase_change"] == pytest.approx(1.0)

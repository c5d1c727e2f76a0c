"""Design and safety numbers that hold up in a review (issue 14): one regression test per reproduced
problem, and the features the job needs, each against a closed form or an outside library.

Sources of the closed forms (named beside each check):
* MTSR = T_p + X_ac·ΔT_ad, ΔT_ad = −ξ·Δ_rH/(Σ n C_p) without evaporative cooling, criticality
  classes: F. Stoessel, *Thermal Safety of Chemical Processes*, Wiley-VCH, 2008;
* one-sided Clopper–Pearson bound: Clopper & Pearson, Biometrika 26 (1934) 404, via scipy.stats.beta;
  for no hit 1 − 0.05^(1/N);
* Gaussian tails of linear models: scipy.stats.norm;
* open-system duty (heat-of-reaction method): Felder & Rousseau, *Elementary Principles of
  Chemical Processes*, 3rd ed. 2005, §9.5;
* constant-volume rise and vessel pressure: Cantera (gri30.yaml NASA-7) with UV at frozen composition;
* molar masses: IUPAC/CIAAW 2021 conventional atomic weights (H 1.008, C 12.011, O 15.999).
All plant numbers here are INVENTED test inputs.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pytest
from scipy import stats

from conftest import BASE_CASE, main_in_process, write_case
from conftest import INVENTED_HEAD as HEAD
from conftest import INVENTED_SPECIES as SPECIES
from conftest import invented_case_text as case_text
from uqthermo.errors import InputError
from uqthermo.pipeline.job import run_case

M_H2O = 18.015e-3      # kg/mol, 2·1.008 + 15.999 (IUPAC 2021 conventional values)
M_CH4O = 32.042e-3     # 12.011 + 4·1.008 + 15.999

def adiabatic(extent='{ value = "1 mol", u = "0.05 mol" }', charge='{ "S(l)" = "10 mol" }', more="") -> str:
    return f'''
[[output]]
name = "rise"
kind = "adiabatic_temperature_rise"
reaction = "R"
start_temperature = "300 K"
extent = {extent}
charge = {charge}
{more}
'''


def run(tmp_path, text, **kw):
    return run_case(write_case(tmp_path, text), **kw)


def point(res, name="rise", k=0):
    return next(o for o in res.results["outputs"] if o["name"] == name)["points"][k]


# Δ_rH(300 K) = -80 kJ/mol (ΔrCp = 0); 10 mol of S at 80 J/(mol K): ΔT_ad = ξ·80000/800 = 100 K per mol of extent
DRH = -80000.0
C = 800.0


# ---------------------------------------------------------------- 1. MTSR is not capped at the boiling point

def test_1_mtsr_uses_the_rise_without_evaporative_cooling(tmp_path):
    # ξ ~ N(0.55, 0.05) mol: ΔT_ad = 100 K/mol·ξ is normal, N(55, 5) K; MTSR = 300 + ΔT_ad (X_ac = 1).
    # MTT = 350 K is the boiling point: the boiling-limited balance stops there, the MTSR does not
    # (Stoessel 2008). P(MTSR > MTT) = P(ΔT_ad > 50 K) = Φ(1) = 0.841 (scipy.stats.norm).
    text = case_text(output=adiabatic(extent='{ value = "0.55 mol", u = "0.05 mol" }',
                                      more='process_temperature = "300 K"\nmtt = "350 K"\ntd24 = "370 K"'))
    pt = point(run(tmp_path, text))
    assert pt["linear"]["estimate"] == pytest.approx(-0.55 * DRH / C, rel=1e-9)
    assert pt["mtsr_K"] == pytest.approx(300 + pt["monte_carlo"]["mean"], rel=1e-12)
    p_exact = stats.norm.sf(50.0, 55.0, 5.0)
    assert pt["p_mtsr_above_mtt"] == pytest.approx(p_exact, abs=4 * math.sqrt(p_exact * (1 - p_exact) / 20000))
    # class 3 (MTT <= MTSR < TD24) and class 4/5 from all trials, consistent with the two probabilities
    cp = pt["criticality_class_probabilities"]
    assert pt["criticality_class_probabilities_basis"] == "all 20000 Monte Carlo trials"
    assert sum(cp.values()) == pytest.approx(1.0)
    assert cp["3"] == pytest.approx(pt["p_mtsr_above_mtt"] - pt["p_mtsr_above_td24"], abs=1e-12)
    assert cp["3"] == pytest.approx(stats.norm.cdf(70, 55, 5) - stats.norm.cdf(50, 55, 5), abs=0.01)
    # the boiling-limited end state is reported beside it, not instead of it
    bl = pt["boiling_limited"]
    assert bl["final_temperature_K"]["P95"] <= 350.0 + 1e-6
    assert bl["p_tempering_point_reached"] == pytest.approx(pt["p_mtsr_above_mtt"], abs=1e-9)
    # the solvent boiled off: (q − C (T_b − T0)) / Δ_vapH with q = 80 kJ·ξ (closed form above, mean over ξ)
    mol = bl["evaporated"][0]["mol"]["mean"]
    expect = np.mean(np.clip((80000 * np.random.default_rng(1).normal(0.55, 0.05, 400000) - C * 50) / 35000, 0, None))
    assert mol == pytest.approx(expect, rel=0.02)
    assert bl["evaporated"][0]["kg"]["mean"] == pytest.approx(mol * M_CH4O, rel=1e-12)


def test_1_mtt_equal_to_the_boiling_point_is_reached(tmp_path):
    # The reproduced case: MTT a hair above the boiling point (373.15 vs 373.124 K in the demo; here
    # 350.026 vs 350 K). The old balance stopped at the boiling point and gave P(MTSR > MTT) = 0.
    text = case_text(output=adiabatic(extent='{ value = "0.45 mol", u = "0.05 mol" }',
                                      more='process_temperature = "300 K"\nmtt = "350.026 K"\ntd24 = "400 K"'))
    pt = point(run(tmp_path, text))
    p_exact = stats.norm.sf(50.026, 45.0, 5.0)          # ≈ 0.158
    assert pt["p_mtsr_above_mtt"] == pytest.approx(p_exact, abs=0.01)
    assert pt["criticality_class_probabilities"]["3"] == pytest.approx(p_exact, abs=0.01)
    assert pt["p_phase_change"] == pytest.approx(stats.norm.sf(50.0, 45.0, 5.0), abs=0.01)


# ---------------------------------------------------------------- 2. no hit is not "0 %"

def test_2_zero_hits_report_the_upper_bound(tmp_path, capsys):
    # T_f = 300 K + ΔT_ad ~ N(400, 5) K: 450 K is 10 standard deviations away, no trial reaches it
    text = case_text(samples=50000, output=adiabatic(more='limit = "450 K"'))
    res = run(tmp_path, text)
    pt = point(res)
    assert pt["exceedance_probability"] == 0.0
    assert pt["exceedance_upper_bound"] == pytest.approx(1 - 0.05 ** (1 / 50000), rel=1e-12)   # closed form
    assert pt["exceedance_trials"] == 50000
    assert "Clopper-Pearson" in res.results["run"]["bound_method"]
    from uqthermo.commands.terminal import print_summary

    print_summary(res.results)
    out = capsys.readouterr().out
    assert "P(final temperature > 450 K) < 6×10⁻⁵ (95 % upper bound, 50 000 trials)" in out
    assert "= 0 " not in out and "0 %" not in out.split("P(final temperature")[1].split("\n")[0]


# ---------------------------------------------------------------- 3. limits on every kind

def test_3_limits_on_heat_release_reaction_enthalpy_and_log10K(tmp_path):
    # Q = ξ̇·(−Δ_rH) with ξ̇ ~ N(2, 0.1) mol/s and Δ_rH ~ N(−80, 0.1·√2) kJ/mol: linearised (GUM eq. 10)
    # u²(Q) = (80·0.1)² + (2·0.1·√2)² kW²; P(Q > 170 kW) = Φ(−10/u(Q)). P(Δ_rH > −79.9 kJ/mol) = Φ(−0.1/0.1414).
    out = '''
[[output]]
name = "duty"
kind = "heat_release"
temperature = "300 K"
extent_rate = { R = { value = "2 mol/s", u = "0.1 mol/s" } }
cooling_capacity = "170 kW"

[[output]]
name = "dH"
kind = "reaction_enthalpy"
reaction = "R"
temperature = "300 K"
limit = "-79.9 kJ/mol"
limit_side = "above"
'''
    text = case_text(uA="0.1 kJ/mol", output=out).replace('formation_enthalpy = "-239 kJ/mol"', 'formation_enthalpy = "-239 kJ/mol"')
    for method in ("linear", "both"):
        res = run(tmp_path, text, method=method)
        q = point(res, "duty")
        d = point(res, "dH")
        pq, pd = stats.norm.sf(10 / math.sqrt(64 + 4 * 0.02)), stats.norm.sf(0.1 / math.sqrt(0.02))
        if method == "linear":
            assert q["exceedance_probability"] == pytest.approx(pq, rel=1e-6)
            assert d["exceedance_probability"] == pytest.approx(pd, rel=1e-6)
        else:
            assert q["exceedance_probability"] == pytest.approx(pq, abs=4 * math.sqrt(pq * (1 - pq) / 20000))
            assert d["exceedance_probability"] == pytest.approx(pd, abs=4 * math.sqrt(pd * (1 - pd) / 20000))
            assert q["exceedance_upper_bound"] > q["exceedance_probability"]
    o = next(o for o in res.results["outputs"] if o["name"] == "duty")
    assert o["limit"]["label"] == "cooling capacity" and o["limit"]["unit"] == "kW" and o["limit"]["as_written"] == "170 kW"


def test_3_limit_below_on_log10K(tmp_path):
    # log10 K = −Δ_rG/(RT ln10); a lower limit: P(log10 K < L), checked against the linear normal tail
    text = BASE_CASE + '''
[[output]]
name = "lgK"
kind = "equilibrium_constant"
reaction = "shift"
temperature = "700 K"
limit = 1.0
limit_side = "below"
'''
    text = text.replace("[species.CO.g]\n", "[species.CO.g]\nstandard_entropy = { value = \"197.66 J/(mol*K)\", u = \"0.5 J/(mol*K)\" }\n")
    for sp, s0 in (("CO2", "213.79"), ("H2", "130.68")):
        text = text.replace(f"[species.{sp}.g]\n", f"[species.{sp}.g]\nstandard_entropy = \"{s0} J/(mol*K)\"\n")
    text = text.replace("[species.H2O.g]\n", "[species.H2O.g]\nstandard_entropy = \"188.83 J/(mol*K)\"\n", 1)
    res = run(tmp_path, text, method="linear")
    pt = point(res, "lgK")
    lin = pt["linear"]
    assert pt["exceedance_probability"] == pytest.approx(stats.norm.cdf((1.0 - lin["estimate"]) / lin["standard_uncertainty"]),
                                                         rel=1e-6)


# ---------------------------------------------------------------- 4. uncertain limits enter probabilities and drivers

def test_4_uncertain_limit_and_td24(tmp_path):
    # ΔT_ad = ξ·(−Δ_rH)/C with ξ ~ N(1, 0.05) mol, Δ_rH ~ N(−80, 0.1·√2) kJ/mol: from a start at 300 K,
    # T_f ≈ N(400, v) K with v = 5² + (0.1414/0.8)² K² (GUM eq. 10). Limit L ~ N(405, 5) K:
    # P(T_f > L) = Φ(−5/√(v + 25)) (difference of independent normals); TD24 ~ N(410, 10) K:
    # P(MTSR > TD24) = Φ(−10/√(v + 100)).
    text = case_text(output=adiabatic(more='limit = { value = "405 K", u = "5 K" }\nprocess_temperature = "300 K"\n'
                                           'mtt = "350 K"\ntd24 = { value = "410 K", u = "10 K" }'),
                     s_lo="250 K").replace('"S(l)" = "10 mol"', '"S(l)" = "10 mol"')
    text = text.replace('T = ["250 K", "400 K"] }\n[species.S.g]', 'T = ["250 K", "500 K"] }\n[species.S.g]')
    for method in ("linear", "both"):
        pt = point(run(tmp_path, text, method=method))
        v = 25 + (0.1 * math.sqrt(2) / 0.8) ** 2
        p1, p2 = stats.norm.cdf(-5 / math.sqrt(v + 25)), stats.norm.cdf(-10 / math.sqrt(v + 100))
        tol = 1e-6 if method == "linear" else 4 * math.sqrt(0.25 / 20000)
        assert pt["exceedance_probability"] == pytest.approx(p1, abs=tol)
        if method == "both":
            assert pt["p_mtsr_above_td24"] == pytest.approx(p2, abs=tol)
        # the limit is a datum among the drivers of the exceedance: share u²(L)/(u²(T_f)+u²(L)) = 1/2 (GUM)
        shares = {d["datum"]: d["share"] for d in pt["exceedance_drivers"]}
        assert shares["output.rise.limit"] == pytest.approx(25 / (v + 25), rel=1e-6)
        shares = {d["datum"]: d["share"] for d in pt["p_mtsr_above_td24_drivers"]}
        assert shares["output.rise.td24"] == pytest.approx(100 / (v + 100), rel=1e-6)


# ---------------------------------------------------------------- 5. masses for charges, extents and feeds

def test_5_mass_charges_extents_and_feeds_equal_the_molar_case(tmp_path):
    # 10 mol S = 10·32.042 g; ξ = 1 mol A = 44.053 g (C2H4O: 2·12.011 + 4·1.008 + 15.999)
    m_a = 2 * 12.011 + 4 * 1.008 + 15.999
    molar = case_text(output=adiabatic(extent='{ value = "1 mol", u = "0.05 mol" }', charge='{ "S(l)" = "10 mol" }'))
    mass = case_text(output=adiabatic(extent=f'{{ value = "{m_a} g", u = "{0.05 * m_a} g" }}\nextent_species = "A"',
                                      charge=f'{{ "S(l)" = "{10 * M_CH4O} kg" }}'))
    a, b = point(run(tmp_path, molar)), point(run(tmp_path, mass))
    assert b["linear"]["estimate"] == pytest.approx(a["linear"]["estimate"], rel=1e-12)
    assert b["linear"]["standard_uncertainty"] == pytest.approx(a["linear"]["standard_uncertainty"], rel=1e-9)
    feed = '''
[[output]]
name = "duty"
kind = "heat_release"
temperature = "300 K"
[output.extent_rate.R]
feed = { value = "%s", u = "%s" }
conversion = 0.5
key = "A"
'''
    a = point(run(tmp_path, case_text(output=feed % ("2 mol/s", "0.1 mol/s"))), "duty")
    b = point(run(tmp_path, case_text(output=feed % (f"{2 * m_a * 3.6} kg/h", f"{0.1 * m_a * 3.6} kg/h"))), "duty")
    assert b["linear"]["estimate"] == pytest.approx(a["linear"]["estimate"], rel=1e-12) == pytest.approx(80.0, rel=1e-9)


def test_5_mass_without_species_is_refused_with_a_hint(tmp_path):
    text = case_text(output=adiabatic(extent='"44 g"'))
    with pytest.raises(InputError, match=r"output\.rise\.extent.*is a mass.*extent_species"):
        run(tmp_path, text)


def test_5_mass_basis_outputs(tmp_path):
    # Stoessel 2008: ΔT_ad = Q'_r / c'_p with Q'_r = ξ(−Δ_rH)/m (kJ/kg of reaction mass), c'_p = Σ n C_p / m.
    out = adiabatic(extent='"1 mol"', more='basis = "mass"') + '''
[[output]]
name = "dH_kg"
kind = "reaction_enthalpy"
reaction = "R"
temperature = "300 K"
basis = "mass"
mass_of = "A"
'''
    pt_res = run(tmp_path, case_text(output=out))
    pt = point(pt_res)
    m = 10 * M_CH4O
    assert pt["specific_heat_of_reaction"]["estimate"] == pytest.approx(80.0 / m, rel=1e-9)           # kJ/kg
    assert pt["specific_heat_capacity"]["estimate"] == pytest.approx(C / m / 1e3, rel=1e-6)           # J/(g K)
    assert pt["linear"]["estimate"] == pytest.approx(pt["specific_heat_of_reaction"]["estimate"]
                                                      / pt["specific_heat_capacity"]["estimate"], rel=1e-6)
    m_a = (2 * 12.011 + 4 * 1.008 + 15.999) * 1e-3
    kg = point(pt_res, "dH_kg")
    assert kg["linear"]["estimate"] == pytest.approx(DRH / 1e3 / m_a, rel=1e-9)                      # kJ/kg of A
    assert next(o for o in pt_res.results["outputs"] if o["name"] == "dH_kg")["unit"] == "kJ/kg"


# ---------------------------------------------------------------- 6. temperature drops

def test_6_endothermic_step_and_negative_extent_give_a_drop(tmp_path):
    # Δ_rH = +20 kJ/mol: ΔT_ad = −ξ·20000/800 = −25 K per mol (closed form, Stoessel 2008); ξ ~ N(0.2, 0.2)
    # is negative in 16 % of the samples, which then warm up: still one normal, N(−5, 5) K.
    text = case_text(hP="-80 kJ/mol", output=adiabatic(extent='{ value = "0.2 mol", u = "0.2 mol" }'))
    res = run(tmp_path, text)
    pt = point(res)
    assert pt["linear"]["estimate"] == pytest.approx(-5.0, rel=1e-9)
    assert pt["monte_carlo"]["mean"] == pytest.approx(-5.0, abs=0.05)
    assert pt["monte_carlo"]["standard_uncertainty"] == pytest.approx(5.0, rel=0.02)
    assert any("temperature drops" in w for w in res.results["warnings"])


def test_6_search_stays_in_the_validity_range_and_says_where_it_would_end(tmp_path):
    # a drop of 2.4 mol·25 K = 60 K from 300 K ends at 240 K, below the solvent data (from 250 K):
    # the message gives the would-be final temperature 240 K (Cp held constant, closed form here)
    text = case_text(hP="-80 kJ/mol", output=adiabatic(extent='"2.4 mol"'))
    code, out, err = main_in_process("check", write_case(tmp_path, text))
    assert code == 2
    assert re.search(r"output\.rise: the energy balance ends below 250 K .*S\(l\).*would be about 240 K", err), err
    assert "1 K" not in err


# ---------------------------------------------------------------- 7. check runs the probes of run

def test_7_check_and_run_fail_early_on_a_wide_datum(tmp_path, monkeypatch):
    # u(Δ_fH(A)) = 50 kJ/mol: the 1e-9 tail (±6σ = ±300 kJ/mol) drives the balance far beyond the data
    text = case_text(uA="50 kJ/mol", output=adiabatic(extent='"1 mol"'))
    case = write_case(tmp_path, text)
    code, out, err = main_in_process("check", case)
    assert code == 2 and err.startswith(f"{case}: species.A.l.formation_enthalpy: ") and "tail quantile" in err
    import uqthermo.uq.montecarlo as mc

    monkeypatch.setattr(mc, "propagate_monte_carlo", lambda *a, **k: pytest.fail("the Monte Carlo must not start"))
    code, out, err = main_in_process("run", case, "--out", tmp_path / "o")
    assert code == 2 and "species.A.l.formation_enthalpy" in err and not (tmp_path / "o").exists()


def test_7_candidate_variant_is_probed(tmp_path):
    text = case_text(uA="0.1 kJ/mol", output=adiabatic(extent='"1 mol"')) + '''
[[candidate]]
datum = "A.l.formation_enthalpy"
u = "50 kJ/mol"
cost = 100
'''
    code, out, err = main_in_process("check", write_case(tmp_path, text))
    assert code == 2 and ": candidate[0].u: " in err and "what-if study of candidate[0]" in err


# ---------------------------------------------------------------- 8. dubious input is flagged, never refused

@pytest.mark.parametrize("old,new,key,slip", [
    ('u = "0.1 kJ/mol" }}\nheat_capacity', 'u = "300 kJ/mol" }}\nheat_capacity', "species.A.l.formation_enthalpy",
     "relative uncertainty written as u"),
    ('formation_enthalpy = { value = "-180 kJ/mol", u = "0.1 kJ/mol" }',
     'formation_enthalpy = { value = "-180 kJ/mol", U = "0.2 kJ/mol", k = 200 }', "species.P.l.formation_enthalpy.k",
     "coverage factor k = 200"),
    ("seed = 11\n", 'seed = 11\nreference_temperature = "298.15 degC"\n', "settings.reference_temperature",
     "looks like a kelvin value"),
    ('start_temperature = "300 K"', 'start_temperature = "300 K"\nlimit = { value = "120 degC", relative_u = "1 %" }',
     "output.rise.limit.relative_u", "of the absolute value"),
    # 10 ± 4 mol (normal): P(n < 0) = Φ(−2.5) = 0.62 % (scipy.stats.norm.cdf(-2.5) = 0.00621)
    ('charge = { "S(l)" = "10 mol" }', 'charge = { "S(l)" = { value = "10 mol", u = "4 mol" } }', "output.rise.charge.S(l)",
     "puts 0.621 % of its probability below 0, where an amount cannot lie"),
    ('charge = { "S(l)" = "10 mol" }', 'charge = { "S(l)" = "10 mol", "A(l)" = { value = "0 mol", u = "0.1 mol" } }',
     "output.rise.charge.A(l)", "a value at its bound with an uncertainty around it"),
])
def test_8_dubious_input_warnings(tmp_path, old, new, key, slip):
    text = case_text(output=adiabatic())
    text = text.replace(old.replace("}}", "}"), new.replace("}}", "}"), 1)
    assert new.replace("}}", "}") in text
    code, out, err = main_in_process("check", write_case(tmp_path, text))
    joined = " ".join(out.split())
    assert f"warning: {key}: " in joined and slip in joined, out + err


def test_8_distributions_outside_the_physical_range():
    """P(outside) against scipy.stats: a conversion 0.98 ± 0.02 (normal) is above 1 with
    probability norm.sf(1) = 15.9 %; rectangular 0.95 ± 0.1 (half-width) is above 1 with 25 %;
    a feed 5 ± 1 (normal) is below 0 with norm.cdf(-5) = 2.9e-7, no warning."""
    import math

    from scipy import stats

    from uqthermo.case.readers.distributions import normal, rectangular
    from uqthermo.case.readers.fields import outside_bounds_warning

    note = outside_bounds_warning(normal(0.98, 0.02), 0.98, (0.0, 1.0), "a conversion")
    assert f"puts {100 * stats.norm.sf(1.0):.3g} % of its probability above 1, where a conversion cannot lie" in note
    assert "truncated-normal" in note and "lognormal" not in note      # no lognormal for a bounded range
    note = outside_bounds_warning(rectangular(0.95, 0.1), 0.95, (0.0, 1.0), "a conversion")
    assert "puts 25 % of its probability above 1" in note
    assert outside_bounds_warning(normal(5.0, 1.0), 5.0, (0.0, math.inf), "a feed flow") == ""


def test_8_formation_enthalpy_in_J_and_a_backward_reaction(tmp_path):
    # −285.825 J/mol for H2O(l): 1000× smaller than ATcT's −285.825 kJ/mol (chemicals' ATcT table)
    text = BASE_CASE.replace('value = "-285.825 kJ/mol", U = "0.027 kJ/mol"', 'value = "-285.825 J/mol", U = "0.027 J/mol"')
    text = text.replace('equation = "CO(g) + H2O(g) -> CO2(g) + H2(g)"', 'equation = "CO2(g) + H2(g) -> CO(g) + H2O(g)"')
    text += '''
[[output]]
name = "duty"
kind = "heat_release"
temperature = "700 K"
extent_rate = { shift = "1 mol/s" }
'''
    code, out, err = main_in_process("check", write_case(tmp_path, text))
    joined = " ".join(out.split())
    assert code == 0, err
    assert "warning: species.H2O.l.formation_enthalpy: " in joined and "J/mol written for kJ/mol" in joined
    assert "warning: output.duty: the heat to remove is negative" in joined and "written the way the reaction runs" in joined


# ---------------------------------------------------------------- open-system duty of a continuous reactor

def test_open_system_duty_with_feeds_and_latent_heat(tmp_path):
    # Heat-of-reaction method at the reactor temperature (Felder & Rousseau 2005, §9.5): the duty is
    # −ξ̇Δ_rH(T_out) − Σ ṅ ΔH(T_in → T_out). Feed 1: A(l) 2 mol/s at 300 K, heated to 320 K: 2·90·20 J/s.
    # Feed 2: S(l) 1 mol/s at 300 K to 380 K crosses its boiling point (350 K): 80·50 + 35000 + 45·30 J/mol.
    out = '''
[[output]]
name = "duty"
kind = "heat_release"
temperature = "%s"
extent_rate = { R = "1.5 mol/s" }
[[output.feed]]
temperature = "300 K"
flows = { "A(l)" = "2 mol/s" }
[[output.feed]]
temperature = { value = "300 K", u = "1 K" }
flows = { "S(l)" = "%s" }
'''
    res = run(tmp_path, case_text(output=out % ("320 K", "1 mol/s")), method="linear")
    # ΔrH(320 K) = ΔrH(300) (ΔrCp = 0)
    assert point(res, "duty")["linear"]["estimate"] == pytest.approx((1.5 * 80000 - 2 * 90 * 20 - 1 * 80 * 20) / 1e3, rel=1e-9)
    text = case_text(output=out % ("380 K", f"{M_CH4O * 3600} kg/h")).replace('T = ["250 K", "400 K"] }\n[species.P]',
                                                                              'T = ["250 K", "400 K"] }\n[species.P]')
    res = run(tmp_path, text, method="linear")
    q = 1.5 * 80000 - 2 * 90 * 80 - (80 * 50 + 35000 + 45 * 30)
    pt = point(res, "duty")
    assert pt["linear"]["estimate"] == pytest.approx(q / 1e3, rel=1e-9)
    # u² = (ξ̇ u(Δ_rH))² + (C_p,l u(T_in))²: 1.5 mol/s · 0.1·√2 kJ/mol and ∂Q/∂T_in = C_p,l = 80 W/K · 1 K (GUM eq. 10)
    assert pt["linear"]["standard_uncertainty"] == pytest.approx(math.hypot(1.5 * 0.1 * math.sqrt(2), 0.080), rel=1e-6)


_FEED = ('\n[[output]]\nname = "duty"\nkind = "heat_release"\ntemperature = "320 K"\nextent_rate = { R = "1.5 mol/s" }\n'
         'feed = [ { temperature = "300 K", flows = %s } ]\n')


@pytest.mark.parametrize("output, key, message", [
    (_FEED % '{ "S(l)" = "-1 mol/s" }', "output.duty.feed[0].flows.S(l)", "a feed flow must not be negative"),
    (_FEED % '{ "S(l)" = "1 mol/s", "S( l )" = "1 kg/h" }', "output.duty.feed[0].flows.S( l )",
     "species listed twice in one stream"),
    (_FEED % "{}", "output.duty.feed[0].flows", "must be a table of flows, e.g. "),
    (_FEED % '{ "Q(l)" = "1 mol/s" }', "output.duty.feed[0].flows.Q(l)", "unknown species 'Q'"),
    (_FEED % '{ "S(l)" = "1 mol" }', "output.duty.feed[0].flows.S(l)", "mol/s or kmol/h"),
    (adiabatic(charge='{ "S(l)" = "-10 mol" }'), "output.rise.charge.S(l)", "amount must not be negative"),
    (adiabatic(charge='{ "S(l)" = "10 mol", "S( l )" = "1 kg" }'), "output.rise.charge.S( l )", "species listed twice"),
    (adiabatic(charge="[]"), "output.rise.charge", "must be a table of amounts, e.g. "),
    (adiabatic(charge='{ "S(x)" = "10 mol" }'), "output.rise.charge.S(x)", "S(x) has no phase data"),
    # QA: a charge or a stream of zeros only, and an amount without unit (the hint names the mass form)
    (adiabatic(charge='{ "S(l)" = "0 kg" }'), "output.rise.charge", "every amount is 0"),
    (_FEED % '{ "S(l)" = "0 kg/h" }', "output.duty.feed[0].flows", "every flow of this stream is 0"),
    (adiabatic(charge='{ "S(l)" = "0.7" }'), "output.rise.charge.S(l)",
     "'0.7' has no unit; write it with a unit of amount of substance, e.g. \"0.7 mol\" (or kmol); a mass such as "
     "\"0.7 kg\" is converted with the molar mass"),
    (_FEED % '{ "S(l)" = 12 }', "output.duty.feed[0].flows.S(l)",
     "12 has no unit; write it with a unit of amount rate, e.g. \"12 mol/s\" (or kmol/h); a mass flow such as "
     "\"12 kg/h\" is converted"),
])
def test_amounts_of_charges_and_feeds_read_by_one_parser(tmp_path, output, key, message):
    """The charge of an adiabatic rise and the flows of a feed stream are read by one parser
    (uqthermo/case/readers/amounts.py): each slip is one line FILE: KEY: message (a species written
    twice no longer also says that its datum is defined twice)."""
    path = write_case(tmp_path, case_text(output=output))
    code, _, err = main_in_process("check", path)
    lines = [ln for ln in err.splitlines() if ln.strip() and not ln.endswith("problem(s) found")]
    assert code == 2 and len(lines) == 1 and lines[0].startswith(f"{path}: {key}: "), err
    assert message in lines[0] and "defined twice" not in err


def test_feed_flows_given_as_mass_keep_their_molar_mass_for_candidates(tmp_path):
    # S is CH4O: 32.042 g/mol (IUPAC standard atomic weights); 3600·M kg/h is 1 mol/s, and a candidate may
    # state its u as a mass flow like the flow itself (as it may for a charge)
    from uqthermo.case.loader import load_case

    text = case_text(output=_FEED % f'{{ "S(l)" = {{ value = "{M_CH4O * 3600} kg/h", u = "{M_CH4O * 360} kg/h" }} }}',
                     extra=f'[[candidate]]\ndatum = "output.duty.feed[0].S.l"\nu = "{M_CH4O * 36} kg/h"\ncost = 1\n')
    case = load_case(str(write_case(tmp_path, text)))
    d = case.data["output.duty.feed[0].S.l"]
    assert d.nominal == pytest.approx(1.0, rel=1e-12) and d.molar_mass == pytest.approx(M_CH4O, rel=1e-4)
    assert d.distributions[0].std == pytest.approx(0.1, rel=1e-12)
    assert case.candidates[0].u == pytest.approx(0.01, rel=1e-12)


# ---------------------------------------------------------------- constant volume and vessel pressure

def test_constant_volume_rise_and_pressure_against_cantera(tmp_path):
    ct = pytest.importorskip("cantera")
    gas = ct.Solution("gri30.yaml")
    names = ["CO", "O2", "CO2", "N2"]
    blocks = []
    for nm in names:
        sp = gas.species(nm)
        c = sp.thermo.coeffs
        lo, hi = c[8:15], c[1:8]
        blocks.append(f'''
[species.{nm}]
formula = "{"".join(f"{e}{n:g}" for e, n in sp.composition.items())}"
[species.{nm}.g]
heat_capacity = {{ model = "nasa7", ranges = [
  {{ T = ["{sp.thermo.min_temp} K", "{c[0]} K"], coefficients = [{", ".join(repr(float(x)) for x in lo)}] }},
  {{ T = ["{c[0]} K", "{sp.thermo.max_temp} K"], coefficients = [{", ".join(repr(float(x)) for x in hi)}] }} ] }}
''')
    n0 = {"CO": 2.0, "O2": 1.0, "CO2": 0.0, "N2": 4.0}
    xi = 0.5                                                   # mol of 2 CO + O2 -> 2 CO2
    nf = {"CO": 2.0 - 2 * xi, "O2": 1.0 - xi, "CO2": 2 * xi, "N2": 4.0}
    charge = ", ".join(f'"{k}(g)" = "{v} mol"' for k, v in nf.items())
    text = HEAD.format(title="closed vessel", samples=1000, sens="none") + "".join(blocks) + f'''
[reaction.ox]
equation = "2 CO(g) + O2(g) -> 2 CO2(g)"
[[output]]
name = "uv"
kind = "adiabatic_temperature_rise"
reaction = "ox"
start_temperature = "300 K"
extent = "{xi} mol"
charge = {{ {charge} }}
constant_volume = true
initial_pressure = "1 bar"
[[output]]
name = "hp"
kind = "adiabatic_temperature_rise"
reaction = "ox"
start_temperature = "300 K"
extent = "{xi} mol"
charge = {{ {charge} }}
'''
    res = run(tmp_path, text, method="linear")
    uv, hp = point(res, "uv"), point(res, "hp")
    # Cantera: the same mass at the same internal energy (enthalpy) with the composition frozen at the products
    X0 = {k: v for k, v in n0.items() if v}
    gas.TPX = 300.0, 1e5, X0
    u0, v0, h0 = gas.int_energy_mass, gas.volume_mass, gas.enthalpy_mass
    m0 = gas.mean_molecular_weight * sum(n0.values())
    gas.TPX = 300.0, 1e5, nf
    scale = gas.mean_molecular_weight * sum(nf.values()) / m0      # same mass (mass balance)
    assert scale == pytest.approx(1.0, rel=1e-9)
    gas.UV = u0, v0
    assert 300.0 + uv["linear"]["estimate"] == pytest.approx(gas.T, abs=0.02)
    assert uv["final_pressure"]["estimate"] == pytest.approx(gas.P / 1e3, rel=1e-4)      # kPa
    gas.TPX = 300.0, 1e5, nf
    gas.HP = h0, 1e5
    assert 300.0 + hp["linear"]["estimate"] == pytest.approx(gas.T, abs=0.02)


def test_adaptive_run_stops_on_the_outputs_not_on_rare_class_indicators(tmp_path):
    # P(MTSR > TD24) ≈ Φ(−(440 − 400)/5) ≈ 6e-16 and P(class 3) ≈ 1.3e-3: indicator columns whose batch
    # standard deviations cannot settle to two digits; the JCGM 101 §7.9 test looks at ΔT_ad only.
    text = case_text(output=adiabatic(more='process_temperature = "300 K"\nmtt = "415 K"\ntd24 = "440 K"'))
    text = text.replace("samples = 20000", 'samples = "adaptive"\nmax_samples = 400000')
    res = run(tmp_path, text, method="monte-carlo")
    assert res.results["run"]["mc_converged"] is True
    pt = point(res)
    assert pt["p_mtsr_above_td24"] == 0.0
    assert pt["p_mtsr_above_td24_upper_bound"] == pytest.approx(1 - 0.05 ** (1 / pt["p_mtsr_above_td24_trials"]))


# ---------------------------------------------------------------- fractions in percent, every fraction key alike

@pytest.mark.parametrize("written", ['"60 %"', '"60%"', '"60 percent"', "0.6"])
def test_accumulation_and_other_fractions_accept_percent(tmp_path, written):
    # QA: accumulation = "60 %" was refused while relative_u = "2 %" was accepted. MTSR = T_p + X_ac·ΔT_ad
    # (Stoessel 2008) with X_ac = 0.6 and ΔT_ad = 100 K per mol of extent (closed form above): 300 + 60 K.
    settings = f'coverage_probability = {written.replace("60", "95") if written != "0.6" else "0.95"}\n'
    text = (HEAD.format(title="fractions", samples=2000, sens="linear") + settings
            + SPECIES.format(uA="0.1 kJ/mol", hP="-180 kJ/mol", s_lo="250 K")
            + adiabatic(extent='{ value = "1 mol", u = "0.05 mol" }',
                        more=f'process_temperature = "300 K"\naccumulation = {written}')
            + f'[[candidate]]\ndatum = "output.rise.extent"\nfactor = {written.replace("60", "30") if written != "0.6" else "0.3"}\n'
              'cost = 10\n')
    res = run(tmp_path, text, method="linear")
    pt = point(res)
    assert pt["mtsr_K"] == pytest.approx(300 + 0.6 * (-DRH / C), rel=1e-9)
    assert res.case.settings.coverage_probability == pytest.approx(0.95)
    assert res.case.candidates[0].factor == pytest.approx(0.3)


@pytest.mark.parametrize("written, why", [('"160 %"', "[0, 1]"), ('"sixty"', "[0, 1]"), ("true", "[0, 1]")])
def test_accumulation_out_of_range_is_one_keyed_line(tmp_path, written, why):
    text = case_text(output=adiabatic(more=f'process_temperature = "300 K"\naccumulation = {written}'))
    with pytest.raises(InputError) as e:
        run(tmp_path, text)
    msg = str(e.value)
    assert "output.rise.accumulation" in msg and why in msg and "60 %" in msg

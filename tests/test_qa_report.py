"""Regressions of a QA pass over the report and terminal wording (labels, probabilities, counts, legends).

The checks are on presentation: the numbers behind them are checked elsewhere against outside
references. Where a number is compared here, its source is named beside the check.
"""

from __future__ import annotations

import pytest

from conftest import check_report_numbering, run_written_case

# An ammonia-synthesis case of our own (data from the shipped library, `library = "auto"`),
# with a limit on log10 K and a cooling capacity on a heat-release output.
NH3_CASE = '''title = "Ammonia loop at 450 degC (test case)"
[settings]
samples = 4000
seed = 7

[species.N2]
cas = "7727-37-9"
[species.N2.g]
formation_enthalpy = { library = "auto" }
standard_entropy = { library = "auto" }
heat_capacity = { library = "auto" }

[species.H2]
cas = "1333-74-0"
[species.H2.g]
formation_enthalpy = { library = "auto" }
standard_entropy = { library = "auto" }
heat_capacity = { library = "auto" }

[species.NH3]
cas = "7664-41-7"
[species.NH3.g]
formation_enthalpy = { library = "auto" }
standard_entropy = { library = "auto" }
heat_capacity = { library = "auto" }

[reaction.syn]
equation = "N2(g) + 3 H2(g) -> 2 NH3(g)"

[[output]]
name = "dH_kg"
kind = "reaction_enthalpy"
reaction = "syn"
temperature = "450 degC"
basis = "mass"
mass_of = "NH3"

[[output]]
name = "logK"
kind = "equilibrium_constant"
reaction = "syn"
temperature = { value = "450 degC", u = "3 K" }
limit = { value = -4.5, u = 0.05 }
limit_side = "below"

[[output]]
name = "duty"
kind = "heat_release"
temperature = "450 degC"
cooling_capacity = { value = "2.0 MW", u = "0.1 MW" }
[output.extent_rate.syn]
feed = { value = "1000 kg/h", u = "20 kg/h" }
conversion = { value = 0.25, u = 0.02 }
key = "N2"
'''


def _run(base, *extra):
    got = run_written_case(base, NH3_CASE, *extra, name="nh3.toml")
    assert got["code"] == 0, got["stderr"]
    return dict(got, md=(got["out"] / "report.md").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def nh3_run(tmp_path_factory):
    return _run(tmp_path_factory.mktemp("qa-nh3"))


# --------------------------------------------------------------------------- 1. the limit's quantity symbol

def test_log10k_limit_is_labelled_with_the_output_quantity(nh3_run):
    """An equilibrium-constant output is log10 K: its limit reads P(log₁₀ K < -4.5), never P(K < -4.5)."""
    from uqthermo.report.tables.design import limit_text

    logk = next(o for o in nh3_run["results"]["outputs"] if o["name"] == "logK")
    assert limit_text(logk) == "log₁₀ K < -4.5"
    for where, txt in (("terminal", nh3_run["stdout"]), ("report.md", nh3_run["md"])):
        assert "P(K <" not in txt and "P(K &lt;" not in txt, where
    assert "logK: P(log₁₀ K < -4.5)" in nh3_run["stdout"]
    md = nh3_run["md"]
    assert md.count("P(log₁₀ K &lt; -4.5)") >= 3      # summary sentence, Table 1, appendix


# --------------------------------------------------------------------------- 2. probabilities near 1 and 0

@pytest.mark.parametrize("p, ub, n, want", [
    (0.99864, 0.99889, 50000, "99.86 % (95 % upper bound 99.89 %, 50 000 trials)"),
    (0.996, None, None, "99.6 % (normal approximation)"),
    (1 - 2e-5, 1 - 2e-6, 50000, "99.998 % (95 % upper bound 99.9998 %, 50 000 trials)"),
    (1 - 1e-8, None, None, "> 99.9999 % (normal approximation)"),
    (0.97, None, None, "97 % (normal approximation)"),
])
def test_probability_below_one_never_shows_as_100_percent(p, ub, n, want):
    """A probability that is not exactly 1 keeps enough digits to differ from 100 % (its distance from
    100 % to two significant digits; an upper bound's distance rounded down, so it stays outward)."""
    from uqthermo.report.style import probability_text

    assert probability_text(p, ub, n) == want


def test_probability_rounded_at_its_standard_error_never_shows_0_or_100_percent():
    from uqthermo.report.rounding import fmt_probability

    assert fmt_probability(0.99864, 0.00016) == "99.864 %"
    assert fmt_probability(0.99996) == "99.9960 %"
    assert fmt_probability(0.99996, 0.3) == "99.9960 %"
    assert fmt_probability(1 - 1e-9) == "> 99.9999 %"
    assert fmt_probability(2e-5, 0.3) == "0.0020 %"
    assert fmt_probability(1.0) == "100 %" and fmt_probability(0.0) == "0 %"
    assert fmt_probability(0.5) == "50.0 %"         # unchanged away from the ends


def test_criticality_class_probability_099864_shows_digits_in_table_and_terminal():
    """run.toml of the QA pass: P(class 1) = 0.99864 printed "100 % (95 % upper bound 100 %)"."""
    from uqthermo.commands.terminal import safety_lines
    from uqthermo.report.tables.design import safety_table

    pt = {"temperature_K": 313.15, "mtsr_K": 346.0, "criticality_class": 1,
          "criticality_class_probabilities": {"1": 0.99864, "2": 0.00136},
          "criticality_class_probabilities_upper_bounds": {"1": 0.99889, "2": 0.00162},
          "monte_carlo": {"samples": 50000}}
    out = {"name": "runaway", "kind": "adiabatic_temperature_rise", "unit": "K", "points": [pt]}
    line = " ".join(safety_lines({"outputs": [out]}))
    assert "1: 99.86 % (95 % upper bound 99.89 %)" in line and "100 %" not in line
    t = safety_table({"outputs": [out]}, out, "t")
    cells = {r[0]: r[1] for r in t.rows}
    assert cells["P(criticality class 1)"] == "99.86 % (95 % upper bound 99.89 %, 50 000 trials)"
    pt.pop("criticality_class_probabilities_upper_bounds")
    cells = {r[0]: r[1] for r in safety_table({"outputs": [out]}, out, "t").rows}
    assert "100" not in cells["P(criticality class 1)"]


# --------------------------------------------------------------------------- 3. normal tails far out

def test_normal_tail_probability_below_floor_is_not_printed_with_false_precision(tmp_path):
    """`--method linear`: P(Q̇ > 2.0 MW) from the normal tail is ~1e-65 (z ≈ 17; scipy.stats.norm.sf(17)
    = 4e-65): printed as "< 10⁻⁹ (… normal approximation)", results.json keeps the number."""
    from scipy.stats import norm

    from uqthermo.report.style import NORMAL_TAIL_FLOOR, probability_text

    assert probability_text(3.8e-65, None, None, basis="linear normal approximation") == \
        "< 10⁻⁹ (linear normal approximation)"
    assert probability_text(2e-9, None, None) == "2.0×10⁻⁹ (normal approximation)"
    assert probability_text(2e-6, 2.5e-6, 50000).startswith("2.0×10⁻⁶")    # Monte Carlo counts: no floor
    run = _run(tmp_path, "--method", "linear")
    duty = next(o for o in run["results"]["outputs"] if o["name"] == "duty")["points"][0]
    p = duty["exceedance_probability"]
    # z = (2000 − 260 kW)/√(22² + 100²) ≈ 17: scipy.stats.norm.sf(17) ≈ 4e-65
    assert 0 < p < NORMAL_TAIL_FLOOR and 1e-3 * norm.sf(17) < p < 1e3 * norm.sf(17)
    assert "duty: P(Q̇ > cooling capacity 2.0 MW) < 10⁻⁹ (linear normal approximation)" in run["stdout"]
    for txt in (run["stdout"], run["md"], (run["out"] / "report.html").read_text(encoding="utf-8")):
        assert "×10⁻⁶⁵" not in txt and "×10⁻⁶⁴" not in txt
        assert "= &lt; 10⁻⁹" not in txt and "= < 10⁻⁹" not in txt


# --------------------------------------------------------------------------- 4. per kg of what

def test_mass_basis_result_says_per_kg_of_what(nh3_run):
    """`basis = "mass"`, `mass_of = "NH3"`: ΔrH / (|ν| M) per kg of NH3 converted (docs §11.6) — the
    statement, the appendix heading and overview table, and the terminal say so."""
    from uqthermo.report.fields import mass_basis, unit_with_basis

    out = next(o for o in nh3_run["results"]["outputs"] if o["name"] == "dH_kg")
    assert unit_with_basis(out) == "kJ/kg of NH3 converted"
    md = nh3_run["md"]
    head = next(line for line in md.splitlines() if line.startswith("- **dH\\_kg: ΔrH(450 °C) = "))
    assert " kJ/kg of NH3 converted, U = " in head
    assert "dH\\_kg — reaction enthalpy in kJ/kg of NH3 converted" in md
    assert "| kJ/kg of NH3 converted |" in md
    assert "dH_kg [kJ/kg]: per kg of NH3 converted" in nh3_run["stdout"]
    # a molar output has no basis; a heating enthalpy per kg is per kg of the species heated
    assert unit_with_basis({"kind": "reaction_enthalpy", "unit": "kJ/mol"}) == "kJ/mol"
    assert mass_basis({"kind": "heating_enthalpy", "unit": "kJ/kg", "basis": "mass", "species": "H2O(l)"}) == "H2O(l)"
    assert mass_basis({"kind": "adiabatic_temperature_rise", "unit": "K", "basis": "mass"}) == ""


def test_specific_heat_of_reaction_says_per_kg_of_reaction_mass():
    from uqthermo.commands.terminal import safety_lines

    out = {"name": "runaway", "kind": "adiabatic_temperature_rise", "unit": "K",
           "points": [{"temperature_K": 313.15, "specific_heat_of_reaction": {"mean": 187.2, "standard_uncertainty": 3.3}}]}
    assert "runaway: Q'_r = 187.2 ± 3.3 kJ/kg of reaction mass" in safety_lines({"outputs": [out]})


# --------------------------------------------------------------------------- 5. "other data" counted one way

def test_drivers_list_only_data_the_output_can_depend_on(nh3_run):
    """The drivers and what-if rows of an output list the data its value can depend on
    (case/model/dependence.py::value_data), the same data as its GUM budget — not another output's
    extents or limits, not its own limit, not entropies for an enthalpy — so every "N other data"
    counts the same set."""
    outs = {o["name"]: o for o in nh3_run["results"]["outputs"]}
    for name, o in outs.items():
        for pt in o["points"]:
            drivers = [d["datum"] for d in pt["drivers"]]
            assert not [d for d in drivers if d.startswith("output.") and not d.startswith(f"output.{name}.")], name
            assert f"output.{name}.limit" not in drivers and f"output.{name}.cooling_capacity" not in drivers
            assert {w["datum"] for w in pt["whatif"]} <= set(drivers), name
            assert set(drivers) == {r["datum"] for r in pt["budget"]["rows"]}, name
    assert not [d for d in outs["dH_kg"]["points"][0]["drivers"] if d["datum"].endswith("standard_entropy")]
    n = len(outs["logK"]["points"][0]["drivers"])
    block = nh3_run["stdout"].split("logK [1]")[1].split("duty [kW]")[0]        # the cell may wrap
    assert f"{n - 3}otherdata" in "".join(block.replace("│", " ").split())


def test_other_data_row_counts_every_datum_not_named():
    from uqthermo.report.drivers import driver_rows

    pt = {"drivers_method": "linear", "drivers": [{"datum": "a", "share": 0.9}, {"datum": "b", "share": 0.09},
                                                  {"datum": "c", "share": 0.01}, {"datum": "d", "share": 0.0}]}
    assert driver_rows(pt, max_data=1)[-1].label == "3 other data"


# --------------------------------------------------------------------------- 6. which legend applies to which rows

def _summary_text(results) -> str:
    from rich.console import Console

    from uqthermo.commands.terminal import print_summary

    console = Console(record=True, width=200, file=open("/dev/null", "w"))
    print_summary(results, console)
    return console.export_text()


def test_mixed_linear_and_sobol_drivers_are_tagged_in_rows_and_legends(nh3_run):
    import copy

    res = copy.deepcopy(nh3_run["results"])
    plain = _summary_text(res)
    assert "[u²]" not in plain and "[S1]" not in plain           # one method: one legend, no tags
    logk = next(o for o in res["outputs"] if o["name"] == "logK")
    for pt in logk["points"]:
        pt["drivers_method"] = "sobol"
        pt["covariance_terms"] = []
    txt = _summary_text(res)
    rows = {line.split("│")[1].strip(): line for line in txt.splitlines() if line.startswith("│") and line.split("│")[1].strip()}
    assert "[S1] output.logK.temperature" in rows["logK [1]"]
    assert "[u²] " in rows["duty [kW]"] and "[S1]" not in rows["duty [kW]"]
    assert "top drivers: [u²] shares of u²(y)" in txt
    assert "top drivers: [S1] first-order Sobol' indices S1" in txt


def test_overview_table_marks_share_method_when_mixed(nh3_run):
    import copy

    from uqthermo.report.tables.overview import summary_table

    res = copy.deepcopy(nh3_run["results"])
    assert not any("(S1)" in r[-1] or "(u²)" in r[-1] for r in summary_table(res).rows)
    next(o for o in res["outputs"] if o["name"] == "logK")["points"][0]["drivers_method"] = "sobol"
    t = summary_table(res)
    shares = {r[0]: r[-1] for r in t.rows}
    assert shares["logK"].endswith(" (S1)") and shares["duty"].endswith(" (u²)")
    assert any("(S1) its first-order Sobol' index" in n for n in t.notes)


# --------------------------------------------------------------------------- 7. MTT off scale, uncertain limits as bands

def test_distribution_figure_says_where_mtt_is_reached_and_draws_uncertain_limits_as_bands(tmp_path):
    """MTSR = T_process + accumulation·ΔT_ad (Stoessel): with T_process 40 °C and accumulation 0.6,
    MTT 100 °C is reached at ΔT_ad = (100 − 40)/0.6 = 100 K; the legend says so. A limit with
    u = 2 K is a band ± 2u, not a sharp line."""
    import matplotlib.pyplot as plt
    from matplotlib.patches import Polygon, Rectangle

    from uqthermo.report.figures.distribution import draw_distribution

    counts = [5, 40, 120, 200, 120, 40, 5]
    edges = [52.0 + 0.5 * i for i in range(len(counts) + 1)]
    pt = {"temperature_K": 313.15, "linear": {"estimate": 54.8, "standard_uncertainty": 1.0, "coverage_interval": [52.8, 56.8]},
          "monte_carlo": {"mean": 54.8, "standard_uncertainty": 1.0, "coverage_interval": [52.8, 56.8], "samples": 530,
                          "histogram": {"edges": edges, "counts": counts, "samples": 530}},
          "exceedance_probability": 0.46, "exceedance_upper_bound": 0.48, "exceedance_trials": 530}
    out = {"name": "runaway", "kind": "adiabatic_temperature_rise", "unit": "K", "start_temperature_K": 313.15,
           "process_temperature_K": 313.15, "accumulation": 0.6, "mtt_K": 373.15, "td24_K": 403.15,
           "mtt": {"value": 373.15, "standard_uncertainty": 0.0, "unit": "K", "as_written": "100 degC"},
           "td24": {"value": 403.15, "standard_uncertainty": 10.0, "unit": "K", "as_written": "130 degC"},
           "limit_K": 368.15, "limit_applies_to": "final_temperature",
           "limit": {"value": 368.15, "standard_uncertainty": 2.0, "unit": "K", "as_written": "95 degC", "side": "above"},
           "points": [pt]}
    results = {"display_units": {"temperature": "degC"}, "outputs": [out], "run": {"samples": 530}}
    fig = draw_distribution(results, out, pt)
    try:
        ax = fig.axes[0]
        labels = ax.get_legend_handles_labels()[1]
        mtt = next(lab for lab in labels if lab.startswith("MTT"))
        assert "off scale" in mtt and "0.6·ΔT_ad reaches MTT at ΔT_ad = 100 K" in mtt
        assert any(lab.startswith("T_D24 130 °C (u = 10 K): off scale") for lab in labels), labels
        lim = next(lab for lab in labels if lab.startswith("limit:"))
        assert "95 °C" in lim and "band ± 2u = ± 4 K" in lim
        spans = [p for p in ax.patches if isinstance(p, (Polygon, Rectangle)) and (p.get_alpha() or 1) < 0.5]
        xs = [list(p.get_xy()[:, 0]) if isinstance(p, Polygon) else [p.get_x(), p.get_x() + p.get_width()] for p in spans]
        assert any(min(x) == pytest.approx(55.0 - 4.0) and max(x) == pytest.approx(55.0 + 4.0) for x in xs), xs
    finally:
        plt.close(fig)


# --------------------------------------------------------------------------- 8. cosmetics

def test_library_uncertainty_is_stated_in_the_report_unit_to_two_digits(nh3_run):
    """A u the library chose reads "u = 0.50 kJ/mol" or "U = 0.10 kJ/mol (k = 2)", never "u = 500 J/mol" or
    "u = 0.875665000000012 J/(mol*K)" (GUM 7.2.6: two significant digits); the value used is unrounded."""
    import re

    for i in nh3_run["results"]["inputs"]:
        st = i.get("stated") or ""
        m = re.match(r"^[uU] = ([0-9.eE+-]+) (\S+)", st)
        if not m or not i.get("library"):
            continue
        assert m.group(2) == i["unit"], (i["datum"], st)
        digits = m.group(1).lstrip("0.").replace(".", "")
        assert len(digits) <= 2, (i["datum"], st)


def test_inputs_table_shows_a_limit_as_the_case_wrote_it():
    from uqthermo.report.tables.inputs import inputs_table

    res = {"inputs": [{"datum": "output.runaway.limit", "quantity": "limit", "stated": "u = 2 K", "estimate": 368.15,
                       "standard_uncertainty": 2.0, "unit": "K", "distribution": "normal, u 2 K"}],
           "outputs": [{"name": "runaway", "limit": {"value": 368.15, "standard_uncertainty": 2.0, "unit": "K",
                                                     "as_written": "95 degC", "datum": "output.runaway.limit"}}]}
    assert inputs_table(res).rows[0][2] == "368.15 (95 °C)"


def test_plan_front_values_keep_digits_to_differ():
    from uqthermo.report.rounding import distinct_sig
    from uqthermo.report.tables.plan import plan_front_table

    assert distinct_sig([1.0727, 1.0677]) == 4 and distinct_sig([1.45, 1.22]) == 3
    plan = {"target": {"U": 1.0, "unit": "of target"}, "front": [
        {"cost": 2800, "U": 1.0727, "set": ["C1", "C3"]}, {"cost": 11500, "U": 1.0677, "set": ["C1", "C2"]}]}
    us = [r[1] for r in plan_front_table(plan).rows]
    assert us == ["1.073", "1.068"]


def test_linear_limit_probability_states_its_basis_once(tmp_path):
    run = _run(tmp_path, "--method", "linear")
    assert "(limit); linear normal approximation" not in run["md"]
    assert "linear normal approximation) (limit)" in run["md"]


def test_tables_and_figures_are_numbered_in_document_order(nh3_run):
    out = nh3_run["out"]
    html = (out / "report.html").read_text(encoding="utf-8")
    docx = out / "report.docx" if (out / "report.docx").is_file() else None
    n_tab, n_fig = check_report_numbering(html, nh3_run["md"], docx)
    assert n_tab > 10 and n_fig > 3

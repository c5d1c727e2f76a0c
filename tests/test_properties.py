"""Property-based tests (hypothesis), issue 9.

Robustness:
* the case loader: random TOML-ish text, and random mutations of a valid case (a value
  replaced by any TOML value, a key deleted, an unknown key added), either load (and
  then build and check) or raise :class:`InputError` — never another exception;
* the equation and formula parsers raise only :class:`UqthermoError` subclasses;
* the unit parser raises only its ``UnitProblem``.

Physical invariants (exact identities of Kirchhoff's law, Atkins' Physical Chemistry):
* ΔrH of A → B plus ΔrH of B → A is zero at any temperature (enthalpy is a state function);
* heating from T1 to T2 equals heating T1 → Tm plus Tm → T2 from the phase reached at Tm,
  for any Tm, across phase changes and across NASA-7 range boundaries;
* results do not depend on the units written in the case file (kJ/mol, kcal/mol, J/mol,
  kJ/kmol; K, degC, degF, degR) — conversion factors from pint's definitions
  (1 cal = 4.184 J, thermochemical; T/K = t/°C + 273.15 = (t/°F + 459.67)·5/9).
"""

from __future__ import annotations

import copy
import math
import re
import string
import tomllib

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import BASE_CASE, write_case
from uqthermo.case.loader import load_case, parse_case
from uqthermo.case.units import UnitProblem, parse_quantity
from uqthermo.pipeline.job import prepare_model
from uqthermo.errors import InputError, UqthermoError
from uqthermo.thermo.formula import parse_formula
from uqthermo.thermo.reaction import Reaction, parse_equation, reaction_enthalpy

def fast(n: int) -> settings:
    return settings(max_examples=n, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture,
                                           HealthCheck.data_too_large, HealthCheck.filter_too_much])
BASE_RAW = tomllib.loads(BASE_CASE)


@pytest.fixture(scope="module")
def base_case(tmp_path_factory):
    return load_case(write_case(tmp_path_factory.mktemp("prop"), BASE_CASE))


def _load_build_check(raw: dict) -> None:
    """parse → build → check; only InputError may escape."""
    try:
        case = parse_case(raw, "fuzz.toml", library=False)
        prepare_model(case)          # build + check, as `uqthermo run` and `check` do
    except InputError as e:
        assert e.problems, "InputError without problems"
        for p in e.problems:
            assert p.file == "fuzz.toml"
            assert isinstance(p.key, str) and isinstance(p.message, str) and p.message.strip()


# --------------------------------------------------------------------------- loader fuzz

toml_scalars = st.one_of(
    st.integers(min_value=-(2**63), max_value=2**63 - 1), st.floats(allow_nan=True, allow_infinity=True),
    st.booleans(), st.text(max_size=30),
    st.sampled_from(["", "0 K", "-5 K", "1e400 kJ/mol", "nan K", "700 K", "25 degC", "1 %", "150 %", "2 mol/s",
                     "-74.6 kJ/mol", "75 J/(mol*K)", "H2O(l)", "CO(g) + H2O(g) -> CO2(g) + H2(g)", "adaptive",
                     "sobol", "normal", "rectangular", "lognormal", "constant", "nasa7", "shift", "g", "l",
                     "CO.g.formation_enthalpy", "3 kelvinz", "K", "kJ/mol", "1 degC/mol", "7e12"]),
)
toml_values = st.recursive(toml_scalars, lambda inner: st.one_of(
    st.lists(inner, max_size=4), st.dictionaries(st.sampled_from(["value", "u", "U", "k", "T", "model", "from", "to",
                                                                  "x", "ranges", "coefficients", "half_width",
                                                                  "distribution", "relative_u", "temperature"]),
                                                 inner, max_size=4)), max_leaves=8)


def _paths(node, prefix=()):
    """Every (path, value) in a parsed TOML document (tables, arrays and leaves)."""
    yield prefix, node
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _paths(v, prefix + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from _paths(v, prefix + (i,))


ALL_PATHS = [p for p, _ in _paths(BASE_RAW) if p]


def _set(doc, path, value=None, delete=False):
    node = doc
    for k in path[:-1]:
        node = node[k]
    if delete:
        if isinstance(node, dict):
            del node[path[-1]]
        else:
            node.pop(path[-1])
    else:
        node[path[-1]] = value


@fast(250)
@given(st.lists(st.tuples(st.sampled_from(ALL_PATHS), st.sampled_from(["replace", "delete", "add"]), toml_values),
                min_size=1, max_size=3))
def test_mutated_valid_case_loads_or_raises_input_error(mutations):
    doc = copy.deepcopy(BASE_RAW)
    for path, op, value in mutations:
        try:
            if op == "replace":
                _set(doc, path, value)
            elif op == "delete":
                _set(doc, path, delete=True)
            else:
                node = doc
                for k in path[:-1]:
                    node = node[k]
                if isinstance(node, dict):
                    node[f"{path[-1]}_x"] = value
        except (KeyError, IndexError, TypeError, AttributeError):
            continue     # an earlier mutation removed or replaced the parent (e.g. by a number)
    _load_build_check(doc)


TOML_ALPHABET = string.ascii_letters[:12] + string.digits + ' =[]{}",.\n#-+_\'' + "é°→₂\u00a0"


@fast(200)
@given(text=st.text(alphabet=TOML_ALPHABET, max_size=200))
def test_random_text_loads_or_raises_input_error(tmp_path_factory, text):
    path = tmp_path_factory.mktemp("fz") / "fuzz.toml"
    path.write_text(text, encoding="utf-8")
    try:
        load_case(path, library=False)
    except InputError as e:
        assert e.problems and all(str(p).startswith(f"{path}: ") for p in e.problems)


@fast(100)
@given(data=st.binary(max_size=300))
def test_random_bytes_load_or_raise_input_error(tmp_path_factory, data):
    path = tmp_path_factory.mktemp("fzb") / "fuzz.toml"
    path.write_bytes(data)
    try:
        load_case(path, library=False)
    except InputError as e:
        assert e.problems


@fast(150)
@given(st.dictionaries(st.sampled_from(["title", "settings", "species", "reaction", "output", "correlation",
                                        "candidate", "description", "zzz"]), toml_values, max_size=6))
def test_random_documents_raise_only_input_error(doc):
    _load_build_check(doc)


# --------------------------------------------------------------------------- parser fuzz

EQ_ALPHABET = "ABCHNOSabcglrsq()[]{}0123456789 .+-=<>→⇌*·^²₂,/e\t"


@fast(400)
@given(st.one_of(st.text(alphabet=EQ_ALPHABET, max_size=60), st.text(max_size=40)))
def test_parse_equation_raises_only_our_errors(text):
    try:
        parts = parse_equation(text)
    except UqthermoError:
        return
    for p in parts:
        assert isinstance(p.species, str) and p.species
        assert isinstance(p.nu, float) and math.isfinite(p.nu) and p.nu != 0


@fast(400)
@given(st.one_of(st.text(alphabet="HCONSClBrFeMgcaq()[]{}0123456789.·*+-^ ", max_size=30), st.text(max_size=20)))
def test_parse_formula_raises_only_our_errors(text):
    try:
        el = parse_formula(text)
    except UqthermoError:
        return
    assert all(isinstance(k, str) and math.isfinite(v) for k, v in el.items())


@pytest.mark.parametrize("text", ["H-.", "NaCl+.", "H^.+", "H2O^-."])
def test_formula_charge_with_lone_dot(text):
    try:
        parse_formula(text)
    except UqthermoError:
        pass


@fast(300)
@given(st.one_of(st.text(max_size=30), st.text(alphabet="0123456789.eE+- kJmolKdegCF/*()%^", max_size=25)),
       st.sampled_from(["molar_energy", "molar_entropy", "temperature", "amount", "amount_rate", "dimensionless"]),
       st.booleans())
def test_parse_quantity_raises_only_unit_problem(text, dimension, difference):
    try:
        v = parse_quantity(text, dimension, difference=difference)
    except UnitProblem:
        return
    assert isinstance(v, float) and math.isfinite(v)


@fast(40)
@given(st.sampled_from(["CH3COOH", "Ca(OH)2", "C8H10O2", "H2O", "Fe2(SO4)3", "C6H5CH2OH"]),
       st.integers(min_value=1, max_value=9))
def test_parse_formula_counts_scale_with_multiplied_groups(formula, n):
    """(F)n holds n times every element of F (definition of a formula unit count)."""
    base = parse_formula(formula)
    assert parse_formula(f"({formula}){n}") == pytest.approx({k: v * n for k, v in base.items()})


# --------------------------------------------------------------------------- physical invariants

def _reversed(eq: str) -> str:
    lhs, rhs = eq.split("->")
    return f"{rhs.strip()} -> {lhs.strip()}"


@fast(60)
@given(st.floats(min_value=280.0, max_value=3400.0), st.floats(min_value=0.9, max_value=1.1))
def test_forward_plus_reverse_reaction_enthalpy_is_zero(base_case, T, scale):
    eq = base_case.reactions["shift"].equation
    fwd = Reaction("f", eq, parse_equation(eq))
    rev = Reaction("r", _reversed(eq), parse_equation(_reversed(eq)))
    # sampled overrides too: a scaled H2O(g) curve and a shifted vaporisation enthalpy
    cp = base_case.species["H2O"].phases["g"].cp
    values = {"H2O": {"g.heat_capacity": np.asarray(cp.coefficients) * scale,
                      "transition.l-g.enthalpy": 40651.0 * scale}}
    h_f = reaction_enthalpy(fwd, base_case.species, T, 298.15, values)
    h_r = reaction_enthalpy(rev, base_case.species, T, 298.15, values)
    assert abs(float(h_f) + float(h_r)) <= 1e-9 * max(1.0, abs(float(h_f)))
    assert abs(float(h_f)) > 1e3     # a real, non-zero reaction enthalpy (-37.8 kJ/mol at 700 K)


@fast(80)
@given(st.floats(min_value=280.0, max_value=372.0), st.floats(min_value=374.0, max_value=3400.0),
       st.floats(min_value=0.0, max_value=1.0))
def test_heating_path_split_anywhere_gives_the_same_enthalpy(base_case, T1, T2, frac):
    """H2O from liquid at T1 (below boiling) to steam at T2: split at Tm anywhere, even at the transition."""
    water = base_case.species["H2O"]
    Tm = T1 + frac * (T2 - T1)
    if frac > 0.5:
        Tm = 373.124 if frac > 0.9 else Tm      # hit the transition temperature itself now and then
    whole = float(water.heating_enthalpy("l", T1, T2))
    mid = water.final_phase("l", T1, Tm)
    parts = float(water.heating_enthalpy("l", T1, Tm)) + float(water.heating_enthalpy(mid, Tm, T2))
    assert parts == pytest.approx(whole, rel=1e-10, abs=1e-6)
    # and cooling back returns to the start: H(T1→T2) + H(T2→T1) = 0
    back = float(water.heating_enthalpy(water.final_phase("l", T1, T2), T2, T1))
    assert back == pytest.approx(-whole, rel=1e-10, abs=1e-6)


@fast(60)
@given(st.floats(min_value=200.0, max_value=3500.0), st.floats(min_value=200.0, max_value=3500.0),
       st.floats(min_value=0.0, max_value=1.0))
def test_gas_heating_split_across_nasa_range_boundary(base_case, T1, T2, frac):
    co = base_case.species["CO"]
    Tm = T1 + frac * (T2 - T1)
    whole = float(co.heating_enthalpy("g", T1, T2))
    parts = float(co.heating_enthalpy("g", T1, Tm)) + float(co.heating_enthalpy("g", Tm, T2))
    assert parts == pytest.approx(whole, rel=1e-10, abs=1e-6)


# unit choice ------------------------------------------------------------------------

_ENERGY = re.compile(r'"(-?[0-9.]+(?:e-?[0-9]+)?) kJ/mol"')
_TEMP = re.compile(r'"(-?[0-9.]+(?:e-?[0-9]+)?) K"')
ENERGY_UNITS = {"kJ/mol": 1.0, "kcal/mol": 1 / 4.184, "J/mol": 1e3, "kJ/kmol": 1e3, "MJ/kmol": 1.0}
TEMP_UNITS = {"K": lambda t: t, "degC": lambda t: t - 273.15, "degF": lambda t: (t - 273.15) * 9 / 5 + 32,
              "degR": lambda t: t * 9 / 5}


def _rewrite(text: str, energy: list[str], temp: list[str]) -> str:
    it_e, it_t = iter(energy * 100), iter(temp * 100)

    def sub_e(m):
        u = next(it_e)
        return f'"{float(m.group(1)) * ENERGY_UNITS[u]!r} {u}"'

    def sub_t(m):
        u = next(it_t)
        return f'"{TEMP_UNITS[u](float(m.group(1)))!r} {u}"'

    return _TEMP.sub(sub_t, _ENERGY.sub(sub_e, text))


def _evaluate(path):
    case = load_case(path, library=False)
    model, _ = prepare_model(case)
    x0 = np.asarray(model.inputs.estimates, dtype=float)[None, :]
    return model.evaluate(x0)[0], np.asarray(model.inputs.stds, dtype=float), [v.name for v in model.inputs.variables]


@pytest.fixture(scope="module")
def reference_values(tmp_path_factory):
    return _evaluate(write_case(tmp_path_factory.mktemp("units"), BASE_CASE))


@fast(25)
@given(st.lists(st.sampled_from(sorted(ENERGY_UNITS)), min_size=1, max_size=8),
       st.lists(st.sampled_from(sorted(TEMP_UNITS)), min_size=1, max_size=8))
def test_results_do_not_depend_on_the_units_written(reference_values, tmp_path_factory, energy, temp):
    text = _rewrite(BASE_CASE, energy, temp)
    assert text != BASE_CASE or (set(energy) == {"kJ/mol"} and set(temp) == {"K"})
    y, u, names = _evaluate(write_case(tmp_path_factory.mktemp("units"), text))
    y0, u0, names0 = reference_values
    assert names == names0
    np.testing.assert_allclose(y, y0, rtol=1e-9, atol=1e-9)
    np.testing.assert_allclose(u, u0, rtol=1e-9, atol=1e-12)


def test_unit_rewrite_really_changes_the_file():
    text = _rewrite(BASE_CASE, ["kcal/mol"], ["degF"])
    assert "kJ/mol\"" not in text.split("[reaction")[0].replace("J/(mol*K)", "")
    assert " degF\"" in text and " kcal/mol\"" in text


@fast(40)
@given(st.floats(min_value=300.0, max_value=3000.0), st.sampled_from(["CO(g)", "H2(g)", "CO2(g)", "H2O(g)"]),
       st.sampled_from(["0.5", "1", "2", "3.25"]))
def test_spectator_on_both_sides_changes_nothing(base_case, T, spectator, n):
    """Adding n X to both sides leaves ΔrH unchanged (ν of X cancels; Green Book 2.11 definition ΔrH = Σ ν_i H_i)."""
    eq = base_case.reactions["shift"].equation
    lhs, rhs = (s.strip() for s in eq.split("->"))
    eq2 = f"{lhs} + {n} {spectator} -> {rhs} + {n} {spectator}"
    r1 = Reaction("a", eq, parse_equation(eq))
    r2 = Reaction("b", eq2, parse_equation(eq2))
    h1 = float(reaction_enthalpy(r1, base_case.species, T))
    h2 = float(reaction_enthalpy(r2, base_case.species, T))
    assert h2 == pytest.approx(h1, rel=1e-10, abs=1e-7)


@pytest.mark.parametrize("temperature", [
    '{ value = "700 K", u = "5 K" }',
    '{ value = "426.85 degC", u = "5 degC" }',          # a temperature difference in degC is kelvin-sized
    '{ value = "800.33 degF", u = "9 degF" }',          # 9 °F of difference = 5 K
    '{ value = "1260 degR", u = "9 degR" }',
    '{ value = "426.85 °C", u = "5 K" }',
])
def test_uncertain_temperature_in_any_unit(tmp_path, temperature):
    text = BASE_CASE.replace('temperature = "700 K"', f"temperature = {temperature}")
    case = load_case(write_case(tmp_path, text), library=False)
    d = case.data["output.dH_700K.temperature"]
    assert d.nominal == pytest.approx(700.0, abs=1e-9)
    assert d.distributions[0].std == pytest.approx(5.0, rel=1e-12)


@pytest.mark.parametrize("relative", ['"0.5 %"', "0.005", '"5e-3"', '"0.5 percent"'])
def test_relative_uncertainty_spellings(tmp_path, relative):
    text = BASE_CASE.replace('relative_u = "0.5 %"', f"relative_u = {relative}", 1)
    case = load_case(write_case(tmp_path, text), library=False)
    assert case.data["CO.g.heat_capacity"].distributions[0].std == pytest.approx(0.005, rel=1e-12)

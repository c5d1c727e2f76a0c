"""Bad and hostile input (issues 4 and 9): every case gives exit 2, one ``FILE: KEY: message``
line per problem on stderr naming the expected key path, no traceback, and nothing
written (the --out folder is not even created, and no temporary sibling is left).

The cases are generated from the table ``CASES`` below: each is a distinct case file,
mostly a one-line mutation of the fast water-gas-shift case of conftest.py (which loads
and runs cleanly), some written whole or as raw bytes. Each goes through both
``uqthermo run`` and ``uqthermo check``. ``test_bad_input_counts`` asserts the figures
and the session summary prints them (``bad inputs: N case files tried in K classes,
M rejected cleanly ...``).

Figures at the time of writing: 166 bad case files in 17 classes (syntax, duplicates,
types, units, nan-inf, magnitudes, empty, unicode, transitions, correlations,
temperatures, samples, equations, missing-data, validity, uncertainties, sizes), all
rejected cleanly; plus 8 bad command lines, 14 bad results.json files for
``uqthermo report``, a multi-problem file, missing/directory/pipe/device case files and
an accepted-Unicode control.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

import pytest

from conftest import BAD_INPUT_STATS, BASE_CASE, H2O_L_CP, main_in_process

# anchors in BASE_CASE (each replaced at its first occurrence)
CO_FH = 'formation_enthalpy = { value = "-110.525 kJ/mol", U = "0.026 kJ/mol", k = 2, source = "ATcT via chemicals" }'
CO2_FH = 'formation_enthalpy = { value = "-393.474 kJ/mol", U = "0.015 kJ/mol", k = 2, source = "ATcT via chemicals" }'
H2O_FH = 'formation_enthalpy = { value = "-285.825 kJ/mol", U = "0.027 kJ/mol", k = 2, source = "ATcT via chemicals" }'
CO_CP_HEAD = 'heat_capacity = { model = "nasa7", relative_u = "0.5 %", source = "gri30.yaml", ranges = [\n  { T = ["200 K", "1000 K"], coefficients = [3.57953347,'
TR_T = 'temperature = "373.124 K"'
TR_H = 'enthalpy = { value = "40.651 kJ/mol", u = "0.02 kJ/mol", source = "IAPWS-95 via chemicals" }'
TR_BLOCK = '[[species.H2O.transition]]\nfrom = "l"\nto = "g"\n' + TR_T + '\n' + TR_H + '\n'
EQ = 'equation = "CO(g) + H2O(g) -> CO2(g) + H2(g)"'
OUT_T = 'temperature = "700 K"'
SETTINGS = '[settings]\nsamples = 20000\n'
H2O_G_CP_START = '[species.H2O.g]\nheat_capacity = { model = "nasa7"'
STEAM_FROM = 'from = "300 K"\nto = "450 K"'


def _block(start: str, end: str) -> str:
    """The text of BASE_CASE from ``start`` up to (not including) ``end``."""
    i = BASE_CASE.index(start)
    return BASE_CASE[i:BASE_CASE.index(end, i)]


CO_CP = _block('heat_capacity = { model = "nasa7"', "\n\n[species.CO2]")
H2O_G_CP = _block("[species.H2O.g]\n", "\n[[species.H2O.transition]]")[len("[species.H2O.g]\n"):]
H2_FH = 'formation_enthalpy = "0 kJ/mol"'

ADIABATIC = '''
[[output]]
name = "rise"
kind = "adiabatic_temperature_rise"
reaction = "shift"
start_temperature = "700 K"
extent = { value = "1 mol", u = "0.01 mol" }
charge = { "CO2(g)" = "%s" }
'''
MINIMAL_TAIL = '''
[reaction.shift]
equation = "CO(g) + H2O(g) -> CO2(g) + H2(g)"
[[output]]
name = "x"
kind = "reaction_enthalpy"
reaction = "shift"
temperature = "700 K"
'''


@dataclass
class Bad:
    id: str
    cls: str
    key: str                                # expected key path (a line starts with "FILE: KEY"); "" = whole file
    replace: list = field(default_factory=list)
    append: str = ""
    text: str | None = None                 # whole document instead of a mutation of BASE_CASE
    raw: bytes | None = None                # raw bytes (encoding tests)
    msg: str = ""                           # regex the message of that line must match (case-insensitive)
    xfail: str = ""                         # known bug outside the case layer (reason)

    def document(self) -> bytes:
        if self.raw is not None:
            return self.raw
        t = BASE_CASE if self.text is None else self.text
        for old, new in self.replace:
            assert old in t, f"{self.id}: anchor {old[:40]!r} not in the base case"
            t = t.replace(old, new, 1)
        return (t + self.append).encode("utf-8")


def R(old, new):
    return (old, new)


CASES: list[Bad] = [
    # --- syntax
    Bad("syntax-unterminated-string", "syntax", "title", replace=[R('title = "Water-gas', 'title = "Water-gas\n')], msg="TOML syntax error"),
    Bad("syntax-missing-equals", "syntax", "settings", replace=[R("samples = 20000", "samples 20000")], msg="line \\d+"),
    Bad("syntax-unclosed-table-header", "syntax", "reaction.shift", replace=[R("[reaction.shift]", "[reaction.shift")], msg="TOML syntax error"),
    Bad("syntax-unclosed-array", "syntax", "", replace=[R('T = ["273.16 K", "373.2 K"]', 'T = ["273.16 K", "373.2 K"')], msg="TOML syntax error"),
    Bad("syntax-bare-word-value", "syntax", "reaction.shift.equation", replace=[R(EQ, "equation = CO + H2O -> CO2 + H2")], msg="line"),
    Bad("syntax-deep-nesting", "syntax", "", append="\nx = " + "[" * 3000 + "]" * 3000 + "\n", msg="TOML|nesting"),
    Bad("syntax-not-utf8", "syntax", "", raw=b"title = \"caf\xe9\"\n", msg="UTF-8"),
    Bad("syntax-binary-garbage", "syntax", "", raw=bytes(range(256)) * 4, msg="UTF-8|TOML"),
    Bad("syntax-nul-bytes", "syntax", "", raw=b"title = \"a\x00b\"\n", msg="TOML"),
    Bad("syntax-huge-file", "syntax", "", text="# " + "x" * (6 * 1024 * 1024) + "\n", msg="MB"),
    # --- duplicate keys and names
    Bad("dup-toml-key-title", "duplicates", "title", replace=[R("[settings]", 'title = "again"\n[settings]')], msg="twice"),
    Bad("dup-toml-key-in-phase", "duplicates", "species.CO.g.formation_enthalpy",
        replace=[R(CO_FH, CO_FH + '\nformation_enthalpy = "-110 kJ/mol"')], msg="twice"),
    Bad("dup-toml-table", "duplicates", "species.CO2", append='[species.CO2]\nformula = "CO2"\n', msg="twice"),
    Bad("dup-inline-key", "duplicates", "species.H2O.transition",
        replace=[R(TR_H, 'enthalpy = { value = "40.651 kJ/mol", u = "0.02 kJ/mol", u = "0.03 kJ/mol" }')], msg="Duplicate"),
    Bad("dup-output-name", "duplicates", "output.dH_700K.name", replace=[R('name = "steam"', 'name = "dH_700K"')], msg="twice"),
    Bad("dup-correlation-pair", "duplicates", "correlation[1].between",
        append='[[correlation]]\nbetween = ["CO.g.formation_enthalpy", "CO2.g.formation_enthalpy"]\ncoefficient = 0.2\n'
               '[[correlation]]\nbetween = ["CO2.g.formation_enthalpy", "CO.g.formation_enthalpy"]\ncoefficient = 0.3\n',
        msg="twice"),
    Bad("dup-transition", "duplicates", "species.H2O.transition[1]", replace=[R(TR_BLOCK, TR_BLOCK + TR_BLOCK)], msg="twice"),
    # --- wrong types
    Bad("type-title-number", "types", "title", replace=[R('title = "Water-gas shift at 700 K (test case, published data)"', "title = 42")]),
    Bad("type-settings-string", "types", "settings", replace=[R(SETTINGS, 'settings = "fast"\n[settingz]\n')]),
    Bad("type-samples-string", "types", "settings.samples", replace=[R("samples = 20000", 'samples = "many"')]),
    Bad("type-samples-float", "types", "settings.samples", replace=[R("samples = 20000", "samples = 2.5e4")]),
    Bad("type-seed-negative", "types", "settings.seed", replace=[R("seed = 7", "seed = -1")]),
    Bad("type-seed-bool", "types", "settings.seed", replace=[R("seed = 7", "seed = true")]),
    Bad("type-coverage-above-1", "types", "settings.coverage_probability", append="", replace=[R(SETTINGS, SETTINGS + "coverage_probability = 1.5\n")]),
    Bad("type-unknown-sampling", "types", "settings.sampling", replace=[R('sampling = "sobol"', 'sampling = "quasi"')]),
    Bad("type-value-bare-number", "types", "species.CO.g.formation_enthalpy.value", replace=[R('value = "-110.525 kJ/mol"', "value = -110.525")], msg="no unit"),
    Bad("type-cp-string", "types", "species.H2O.l.heat_capacity", replace=[R(H2O_L_CP, 'heat_capacity = "75 J/(mol*K)"')]),
    Bad("type-cp-unknown-model", "types", "species.H2O.l.heat_capacity.model", replace=[R('model = "polynomial"', 'model = "spline"')]),
    Bad("type-coefficient-string", "types", "species.CO.g.heat_capacity.ranges[0].coefficients[0]", replace=[R("coefficients = [3.57953347,", 'coefficients = ["3.58",')]),
    Bad("type-coefficients-too-few", "types", "species.CO.g.heat_capacity.ranges[0].coefficients", replace=[R("coefficients = [3.57953347, -6.1035368e-4,", "coefficients = [")]),
    Bad("type-equation-number", "types", "reaction.shift.equation", replace=[R(EQ, "equation = 42")]),
    Bad("type-formula-number", "types", "species.CO.formula", replace=[R('formula = "CO"', "formula = 12")]),
    Bad("type-unknown-phase-symbol", "types", "species.H2.gas", replace=[R('[species.H2.g]\n' + H2_FH, '[species.H2.gas]\nformation_enthalpy = "0 kJ/mol"')]),
    Bad("type-phase-string", "types", "species.H2.g", replace=[R('[species.H2.g]\n' + H2_FH + "\nheat_capacity", 'g = "gas"\nx_heat_capacity')], msg="table"),
    Bad("type-unknown-top-key", "types", "import", replace=[R("[settings]", 'import = "os"\n[settings]')], msg="unknown key"),
    Bad("type-unknown-output-kind", "types", "output.steam.kind", replace=[R('kind = "heating_enthalpy"', 'kind = "heating"')], msg="did you mean"),
    Bad("type-output-not-array", "types", "output", text=BASE_CASE.split("[[output]]")[0] + '[output]\nname = "x"\n'),
    # --- units of the wrong dimension
    Bad("unit-energy-not-molar", "units", "species.CO.g.formation_enthalpy.value", replace=[R('"-110.525 kJ/mol"', '"-110.525 kJ"')], msg="wrong dimension"),
    Bad("unit-temperature-as-energy", "units", "output.dH_700K.temperature", replace=[R(OUT_T, 'temperature = "700 kJ/mol"')], msg="not a temperature"),
    Bad("unit-u-in-kelvin", "units", "species.H2O.transition[0].enthalpy.u", replace=[R('u = "0.02 kJ/mol"', 'u = "0.02 K"')]),
    Bad("unit-unknown", "units", "output.dH_700K.temperature", replace=[R(OUT_T, 'temperature = "700 kelvinz"')], msg="unknown unit"),
    Bad("unit-relative-u-with-unit", "units", "species.CO.g.heat_capacity.relative_u", replace=[R('relative_u = "0.5 %"', 'relative_u = "0.5 kJ/mol"')]),
    Bad("unit-cp-in-energy", "units", "species.H2O.transition[0].enthalpy.value", replace=[R('value = "40.651 kJ/mol"', 'value = "40.651 J/(mol*K)"')]),
    Bad("unit-offset-compound", "units", "species.CO.g.formation_enthalpy.value", replace=[R('"-110.525 kJ/mol"', '"-110.525 degC/mol"')]),
    Bad("unit-extent-rate-as-amount", "units", "output.q.extent_rate.shift",
        append='[[output]]\nname = "q"\nkind = "heat_release"\ntemperature = "700 K"\nextent_rate = { shift = "2 mol" }\n'),
    # --- NaN, infinity, unreadable numbers
    Bad("nan-string", "nan-inf", "species.CO.g.formation_enthalpy.value", replace=[R('"-110.525 kJ/mol"', '"nan kJ/mol"')]),
    Bad("nan-toml-coefficient", "nan-inf", "species.CO.g.heat_capacity.ranges[0].coefficients[0]", replace=[R("coefficients = [3.57953347,", "coefficients = [nan,")]),
    Bad("inf-toml-correlation", "nan-inf", "correlation[0].coefficient",
        append='[[correlation]]\nbetween = ["CO.g.formation_enthalpy", "CO2.g.formation_enthalpy"]\ncoefficient = inf\n'),
    Bad("inf-overflow-literal", "nan-inf", "species.CO.g.formation_enthalpy.value", replace=[R('"-110.525 kJ/mol"', '"-1e400 kJ/mol"')], msg="finite"),
    Bad("inf-string", "nan-inf", "output.dH_700K.temperature", replace=[R(OUT_T, 'temperature = "inf K"')]),
    Bad("nan-u", "nan-inf", "species.H2O.transition[0].enthalpy.u", replace=[R('u = "0.02 kJ/mol"', 'u = "NaN kJ/mol"')]),
    Bad("fullwidth-digits", "nan-inf", "output.dH_700K.temperature", replace=[R(OUT_T, 'temperature = "７００ K"')]),
    Bad("nan-k", "nan-inf", "species.CO.g.formation_enthalpy.k", replace=[R("k = 2, source", "k = nan, source")]),
    # --- absurd magnitudes
    Bad("huge-formation-enthalpy", "magnitudes", "species.CO.g.formation_enthalpy", replace=[R('"-110.525 kJ/mol"', '"-1e9 kJ/mol"')], msg="plausible"),
    Bad("huge-temperature", "magnitudes", "output.dH_700K.temperature", replace=[R(OUT_T, 'temperature = "1e7 K"')], msg="beyond"),
    Bad("huge-transition-enthalpy", "magnitudes", "species.H2O.transition[0].enthalpy", replace=[R('value = "40.651 kJ/mol"', 'value = "5000 MJ/mol"')], msg="plausible"),
    Bad("huge-constant-cp", "magnitudes", "species.H2O.l.heat_capacity.value",
        replace=[R(H2O_L_CP, 'heat_capacity = { model = "constant", value = "1e6 J/(mol*K)", T = ["273.16 K", "373.2 K"] }')], msg="plausible"),
    Bad("huge-charge", "magnitudes", "output.rise.charge.CO2(g)", append=ADIABATIC % "1e12 mol", msg="implausibly large"),
    Bad("limit-below-start", "temperatures", "output.rise.limit", append=(ADIABATIC % "5 mol") + 'limit = "90 K"\n', msg="degC"),
    Bad("huge-curve-points", "magnitudes", "output.c.temperatures.step",
        append='[[output]]\nname = "c"\nkind = "reaction_enthalpy"\nreaction = "shift"\ntemperatures = { from = "300 K", to = "3000 K", step = "0.001 K" }\n'),
    Bad("negative-constant-cp", "magnitudes", "species.H2O.l.heat_capacity.value",
        replace=[R(H2O_L_CP, 'heat_capacity = { model = "constant", value = "-75 J/(mol*K)", T = ["273.16 K", "373.2 K"] }')], msg="positive"),
    Bad("negative-amount", "magnitudes", "output.rise.charge.CO2(g)", append=ADIABATIC % "-5 mol", msg="negative"),
    # --- empty sections
    Bad("empty-file", "empty", "title", text=""),
    Bad("comment-only-file", "empty", "species", text="# nothing but a comment\n\n   \n"),
    Bad("empty-species-table", "empty", "species", text='title = "t"\n[species]\n' + MINIMAL_TAIL),
    Bad("empty-species-entry", "empty", "species.CO2", replace=[R("[species.CO2]\nformula = \"CO2\"\n[species.CO2.g]\n" + CO2_FH,
                                                                   "[species.CO2]\n[species.CO2x]\nformula = \"CO2\"\n[species.CO2x.g]\n" + CO2_FH)]),
    Bad("empty-reaction", "empty", "reaction.shift.equation", replace=[R(EQ, "")]),
    Bad("empty-equation", "empty", "reaction.shift.equation", replace=[R(EQ, 'equation = "   "')]),
    Bad("empty-output-table", "empty", "output[2].name", append="[[output]]\n"),
    Bad("no-outputs", "empty", "output", text=BASE_CASE.split("[[output]]")[0]),
    Bad("empty-ranges", "empty", "species.CO.g.heat_capacity.ranges", replace=[R(CO_CP, 'heat_capacity = { model = "nasa7", relative_u = "0.5 %", ranges = [] }')]),
    Bad("empty-title", "empty", "title", replace=[R('title = "Water-gas shift at 700 K (test case, published data)"', 'title = "   "')]),
    Bad("empty-mixture", "empty", "output.m.mixture", append='[[output]]\nname = "m"\nkind = "heating_enthalpy"\nmixture = {}\nfrom = "300 K"\nto = "400 K"\n'),
    # --- Unicode in names
    Bad("unicode-species-name", "unicode", "species.CO₂", replace=[R("[species.CO2]\n", '[species."CO₂"]\n')]),
    Bad("unicode-output-name", "unicode", "output[0].name", replace=[R('name = "dH_700K"', 'name = "ΔH_700K"')]),
    Bad("unicode-reaction-name", "unicode", "reaction.réaction", append='[reaction."réaction"]\nequation = "CO(g) + H2O(g) -> CO2(g) + H2(g)"\n'),
    Bad("unicode-homoglyph-unit", "unicode", "output.dH_700K.temperature", replace=[R(OUT_T, 'temperature = "700 \u039a"')], msg="unknown unit"),
    Bad("unicode-rtl-override-in-name", "unicode", "output[0].name", replace=[R('name = "dH_700K"', 'name = "dH\u202e_700K"')]),
    Bad("unicode-species-in-equation", "unicode", "reaction.shift.equation", replace=[R(EQ, 'equation = "CO(g) + H₂O(g) -> CO2(g) + H2(g)"')]),
    # --- phase transitions
    Bad("transition-circular-pair", "transitions", "species.H2O.transition[1]",
        replace=[R(TR_BLOCK, TR_BLOCK + '[[species.H2O.transition]]\nfrom = "g"\nto = "l"\ntemperature = "400 K"\nenthalpy = "-40 kJ/mol"\n')]),
    Bad("transition-cycle-of-three", "transitions", "species.H2O.transition",
        replace=[R(TR_BLOCK, TR_BLOCK + '[species.H2O.cr]\nheat_capacity = { model = "constant", value = "38 J/(mol*K)", T = ["200 K", "273.2 K"] }\n'
                   '[[species.H2O.transition]]\nfrom = "cr"\nto = "l"\ntemperature = "273.15 K"\nenthalpy = "6.01 kJ/mol"\n'
                   '[[species.H2O.transition]]\nfrom = "g"\nto = "cr"\ntemperature = "500 K"\nenthalpy = "-50 kJ/mol"\n')]),
    Bad("transition-temperatures-fall", "transitions", "species.H2O.transition",
        replace=[R(TR_BLOCK, TR_BLOCK + '[species.H2O.cr]\nheat_capacity = { model = "constant", value = "38 J/(mol*K)", T = ["200 K", "273.2 K"] }\n'
                   '[[species.H2O.transition]]\nfrom = "cr"\nto = "l"\ntemperature = "400 K"\nenthalpy = "6.01 kJ/mol"\n')], msg="rise"),
    Bad("transition-to-self", "transitions", "species.H2O.transition[0]", replace=[R('from = "l"\nto = "g"', 'from = "l"\nto = "l"')]),
    Bad("transition-unknown-phase", "transitions", "species.H2O.transition[0].to", replace=[R('from = "l"\nto = "g"', 'from = "l"\nto = "vapour"')]),
    Bad("transition-phase-without-data", "transitions", "species.H2O.transition[0].to", replace=[R('from = "l"\nto = "g"', 'from = "l"\nto = "cr"')]),
    Bad("transition-negative-vaporisation", "transitions", "species.H2O.transition[0].enthalpy", replace=[R('value = "40.651 kJ/mol"', 'value = "-40.651 kJ/mol"')]),
    Bad("transition-missing-enthalpy", "transitions", "species.H2O.transition[0]", replace=[R(TR_H, "")]),
    Bad("transition-zero-kelvin", "transitions", "species.H2O.transition[0].temperature", replace=[R(TR_T, 'temperature = "0 K"')]),
    Bad("transition-outside-liquid-range", "transitions", "output.steam", replace=[R(TR_T, 'temperature = "420 K"')], msg="range|validity"),
    Bad("transition-below-path-start", "transitions", "output.steam", replace=[R(TR_T, 'temperature = "250 K"')]),
    Bad("transition-not-a-table", "transitions", "species.H2O.transition",
        replace=[R(TR_BLOCK, ""), R('[species.H2O]\nformula = "H2O"', '[species.H2O]\nformula = "H2O"\ntransition = "l->g at 373 K"')]),
    # --- correlations
    Bad("corr-above-1", "correlations", "correlation[0].coefficient",
        append='[[correlation]]\nbetween = ["CO.g.formation_enthalpy", "CO2.g.formation_enthalpy"]\ncoefficient = 1.5\n', msg="outside"),
    Bad("corr-below-minus-1", "correlations", "correlation[0].coefficient",
        append='[[correlation]]\nbetween = ["CO.g.formation_enthalpy", "CO2.g.formation_enthalpy"]\ncoefficient = -1.01\n'),
    Bad("corr-with-itself", "correlations", "correlation[0].between",
        append='[[correlation]]\nbetween = ["CO.g.formation_enthalpy", "CO.g.formation_enthalpy"]\ncoefficient = 0.5\n'),
    Bad("corr-unknown-datum", "correlations", "correlation[0].between",
        append='[[correlation]]\nbetween = ["CO.g.formation_enthalpy", "CO3.g.formation_enthalpy"]\ncoefficient = 0.5\n', msg="unknown datum"),
    Bad("corr-exact-datum", "correlations", "correlation[0].between",
        append='[[correlation]]\nbetween = ["CO.g.formation_enthalpy", "H2.g.formation_enthalpy"]\ncoefficient = 0.5\n', msg="exact"),
    Bad("corr-three-not-psd", "correlations", "correlation",
        append='[[correlation]]\nbetween = ["CO.g.formation_enthalpy", "CO2.g.formation_enthalpy"]\ncoefficient = 0.9\n'
               '[[correlation]]\nbetween = ["CO.g.formation_enthalpy", "H2O.l.formation_enthalpy"]\ncoefficient = 0.9\n'
               '[[correlation]]\nbetween = ["CO2.g.formation_enthalpy", "H2O.l.formation_enthalpy"]\ncoefficient = -0.9\n',
        msg="(?=.*CO\\.g\\.formation_enthalpy)(?=.*H2O\\.l\\.formation_enthalpy)"),
    Bad("corr-cp-matrix-not-psd", "correlations", "species.H2O.l.heat_capacity",
        replace=[R(H2O_L_CP, 'heat_capacity = { model = "polynomial", coefficients = { a = 175.632840, b = -0.866781703, c = 2.46447230e-3 }, '
                   'T = ["273.16 K", "373.2 K"], u = [1.0, 0.01, 1e-5], correlation = [[1, 0.9, 0.9], [0.9, 1, -0.9], [0.9, -0.9, 1]] }')]),
    Bad("corr-cp-matrix-asymmetric", "correlations", "species.H2O.l.heat_capacity.correlation",
        replace=[R(H2O_L_CP, 'heat_capacity = { model = "polynomial", coefficients = { a = 175.632840, b = -0.866781703 }, '
                   'T = ["273.16 K", "373.2 K"], u = [1.0, 0.01], correlation = [[1, 0.5], [0.2, 1]] }')], msg="symmetric"),
    Bad("corr-cp-entry-above-1", "correlations", "species.H2O.l.heat_capacity.correlation",
        replace=[R(H2O_L_CP, 'heat_capacity = { model = "polynomial", coefficients = { a = 175.632840, b = -0.866781703 }, '
                   'T = ["273.16 K", "373.2 K"], u = [1.0, 0.01], correlation = [[1, 1.2], [1.2, 1]] }')]),
    Bad("corr-covariance-negative-variance", "correlations", "species.H2O.l.heat_capacity.covariance",
        replace=[R(H2O_L_CP, 'heat_capacity = { model = "polynomial", coefficients = { a = 175.632840, b = -0.866781703 }, '
                   'T = ["273.16 K", "373.2 K"], covariance = [[-1.0, 0.0], [0.0, 1e-4]] }')], msg="negative"),
    Bad("corr-wrong-shape", "correlations", "species.H2O.l.heat_capacity.correlation",
        replace=[R(H2O_L_CP, 'heat_capacity = { model = "polynomial", coefficients = { a = 175.632840, b = -0.866781703 }, '
                   'T = ["273.16 K", "373.2 K"], u = [1.0, 0.01], correlation = [[1, 0.5, 0], [0.5, 1, 0]] }')]),
    # --- temperatures
    Bad("temp-zero-kelvin", "temperatures", "output.dH_700K.temperature", replace=[R(OUT_T, 'temperature = "0 K"')], msg="absolute zero"),
    Bad("temp-negative-kelvin", "temperatures", "output.dH_700K.temperature", replace=[R(OUT_T, 'temperature = "-5 K"')]),
    Bad("temp-below-absolute-zero-degC", "temperatures", "output.dH_700K.temperature", replace=[R(OUT_T, 'temperature = "-300 degC"')]),
    Bad("temp-reference-zero", "temperatures", "settings.reference_temperature", replace=[R(SETTINGS, SETTINGS + 'reference_temperature = "0 K"\n')]),
    Bad("temp-heating-from-zero", "temperatures", "output.steam.from", replace=[R(STEAM_FROM, 'from = "0 degF"\nto = "450 K"'), R('from = "0 degF"', 'from = "-500 degF"')]),
    Bad("temp-range-step-zero", "temperatures", "output.c.temperatures.step",
        append='[[output]]\nname = "c"\nkind = "reaction_enthalpy"\nreaction = "shift"\ntemperatures = { from = "300 K", to = "900 K", step = "0 K" }\n'),
    Bad("temp-range-reversed", "temperatures", "output.c.temperatures",
        append='[[output]]\nname = "c"\nkind = "reaction_enthalpy"\nreaction = "shift"\ntemperatures = { from = "900 K", to = "300 K", step = "10 K" }\n'),
    Bad("temp-cp-range-reversed", "temperatures", "species.H2O.l.heat_capacity.T", replace=[R('T = ["273.16 K", "373.2 K"]', 'T = ["373.2 K", "273.16 K"]')]),
    Bad("temp-uncertain-reaches-zero", "temperatures", "output.dH_700K.temperature", msg="absolute zero",
        replace=[R(OUT_T, 'temperature = { value = "700 K", u = "300 K" }')]),
    Bad("temp-uncertain-leaves-validity", "validity", "output.dH_700K",
        replace=[R(OUT_T, 'temperature = { value = "300 K", u = "40 K" }')], msg="tail quantile"),
    Bad("temp-uncertain-temperature-zero-u", "temperatures", "output.dH_700K.temperature.u", replace=[R(OUT_T, 'temperature = { value = "700 K", u = "0 K" }')]),
    # --- sample counts
    Bad("samples-huge", "samples", "settings.samples", replace=[R("samples = 20000", "samples = 1000000000000")], msg="limit"),
    Bad("samples-too-few", "samples", "settings.samples", replace=[R("samples = 20000", "samples = 3")]),
    Bad("samples-max-huge", "samples", "settings.max_samples", replace=[R(SETTINGS, SETTINGS + "max_samples = 1000000000000000\n")]),
    Bad("samples-int64-overflow", "samples", "settings.samples", replace=[R("samples = 20000", "samples = 9223372036854775807")]),
    # --- equations
    Bad("eq-unbalanced", "equations", "reaction.shift.equation", replace=[R(EQ, 'equation = "CO(g) + H2O(g) -> CO2(g)"')], msg="H"),
    Bad("eq-unknown-species", "equations", "reaction.shift.equation", replace=[R(EQ, 'equation = "CO(g) + H2O(g) -> CO2(g) + H3(g)"')], msg="unknown species"),
    Bad("eq-unknown-phase", "equations", "reaction.shift.equation", replace=[R(EQ, 'equation = "CO(l) + H2O(g) -> CO2(g) + H2(g)"')], msg="CO\\(l\\)"),
    Bad("eq-garbage", "equations", "reaction.shift.equation", replace=[R(EQ, 'equation = "CO + + -> -> H2"')]),
    Bad("eq-no-arrow", "equations", "reaction.shift.equation", replace=[R(EQ, 'equation = "CO(g) + H2O(g) CO2(g) + H2(g)"')]),
    Bad("eq-infinite-coefficient", "equations", "reaction.shift.equation", replace=[R(EQ, 'equation = "1e400 CO(g) + H2O(g) -> CO2(g) + H2(g)"')]),
    Bad("eq-cancels-out", "equations", "reaction.shift.equation", replace=[R(EQ, 'equation = "CO(g) -> CO(g)"')], msg="cancels"),
    Bad("eq-wrong-case-species", "equations", "reaction.shift.equation", replace=[R(EQ, 'equation = "co(g) + H2O(g) -> CO2(g) + H2(g)"')],
        msg="did you mean 'CO'"),
    Bad("eq-bad-formula", "equations", "species.CO.formula", replace=[R('formula = "CO"', 'formula = "Xq9(("')]),
    Bad("eq-formula-lone-dot-charge", "equations", "species.CO.formula", replace=[R('formula = "CO"', 'formula = "CO-."')]),
    Bad("eq-name-with-space", "equations", "reaction.my shift", append='[reaction."my shift"]\nequation = "CO(g) + H2O(g) -> CO2(g) + H2(g)"\n'),
    Bad("eq-unknown-reaction-in-output", "equations", "output.dH_700K.reaction", replace=[R('reaction = "shift"', 'reaction = "shfit"')], msg="did you mean"),
    Bad("eq-measured-without-temperature", "equations", "reaction.shift.measured_enthalpy",
        replace=[R(EQ, EQ + '\nmeasured_enthalpy = { value = "-41.2 kJ/mol", u = "0.1 kJ/mol" }')]),
    # --- missing data for the path
    Bad("missing-gas-cp", "missing-data", "output.dH_700K", replace=[R(H2O_G_CP, 'note = "no data"')]),
    Bad("missing-transition", "missing-data", "output.steam", replace=[R(TR_BLOCK, "")]),
    Bad("missing-formation-enthalpy", "missing-data", "output.dH_700K",
        replace=[R(CO_FH, ""), R(CO_CP, 'heat_capacity = { model = "constant", value = "29.1 J/(mol*K)", T = ["200 K", "1000 K"] }')]),
    Bad("missing-heating-to", "missing-data", "output.steam", replace=[R(STEAM_FROM, 'from = "300 K"')]),
    Bad("missing-phase-in-output", "missing-data", "output.steam.species", replace=[R('species = "H2O(l)"', 'species = "H2O(cr)"')]),
    # --- validity range without permission
    Bad("validity-above-nasa-range", "validity", "output.dH_700K", replace=[R(OUT_T, 'temperature = "4000 K"')], msg="extrapolat"),
    Bad("validity-anchor-below-cp-range", "validity", "output.dH_700K", msg="298.15 K",
        replace=[R('  { T = ["200 K", "1000 K"], coefficients = [2.34433112, 7.98052075e-3, -1.9478151e-5, 2.01572094e-8, '
                   '-7.37611761e-12, -917.935173, 0.683010238] },\n', "")]),
    Bad("validity-liquid-below-range", "validity", "output.steam", replace=[R(STEAM_FROM, 'from = "250 K"\nto = "450 K"')], msg="extrapolat"),
    Bad("validity-extrapolate-not-bool", "validity", "species.H2O.l.heat_capacity.extrapolate",
        replace=[R('relative_u = "0.3 %" }', 'relative_u = "0.3 %", extrapolate = "yes" }')]),
    # --- uncertainties
    Bad("u-negative", "uncertainties", "species.H2O.transition[0].enthalpy.u", replace=[R('u = "0.02 kJ/mol"', 'u = "-0.02 kJ/mol"')], msg="positive"),
    Bad("u-zero", "uncertainties", "species.H2O.transition[0].enthalpy.u", replace=[R('u = "0.02 kJ/mol"', 'u = "0 kJ/mol"')]),
    Bad("u-zero-half-width", "uncertainties", "species.CO.g.formation_enthalpy.half_width",
        replace=[R('U = "0.026 kJ/mol", k = 2', 'half_width = "0 kJ/mol", distribution = "rectangular"')]),
    Bad("u-relative-zero", "uncertainties", "species.CO.g.heat_capacity.relative_u", replace=[R('relative_u = "0.5 %"', 'relative_u = "0 %"')]),
    Bad("u-relative-150-percent", "uncertainties", "species.CO.g.heat_capacity.relative_u", replace=[R('relative_u = "0.5 %"', 'relative_u = "150 %"')]),
    Bad("u-expanded-without-k", "uncertainties", "species.CO.g.formation_enthalpy.k", replace=[R("k = 2, source", "source")]),
    Bad("u-k-zero", "uncertainties", "species.CO.g.formation_enthalpy.k", replace=[R("k = 2, source", "k = 0, source")]),
    Bad("u-unknown-distribution", "uncertainties", "species.CO.g.formation_enthalpy.distribution", replace=[R("k = 2, source", 'k = 2, distribution = "gaussian", source')]),
    Bad("u-student-t-dof-1", "uncertainties", "species.H2O.transition[0].enthalpy.dof",
        replace=[R('u = "0.02 kJ/mol"', 'u = "0.02 kJ/mol", distribution = "student-t", dof = 1')]),
    Bad("u-two-kinds", "uncertainties", "species.H2O.transition[0].enthalpy", replace=[R('u = "0.02 kJ/mol"', 'u = "0.02 kJ/mol", U = "0.04 kJ/mol", k = 2')], msg="only one"),
    Bad("u-lognormal-negative", "uncertainties", "species.CO.g.formation_enthalpy.distribution", replace=[R("k = 2, source", 'k = 2, distribution = "lognormal", source')]),
    Bad("u-half-width-without-shape", "uncertainties", "species.CO.g.formation_enthalpy.distribution",
        replace=[R('U = "0.026 kJ/mol", k = 2', 'half_width = "0.05 kJ/mol"')]),
    Bad("u-cp-per-coefficient-all-zero", "uncertainties", "species.H2O.l.heat_capacity.u",
        replace=[R(H2O_L_CP, 'heat_capacity = { model = "polynomial", coefficients = { a = 175.632840, b = -0.866781703 }, T = ["273.16 K", "373.2 K"], u = [0.0, 0.0] }')]),
    Bad("u-missing-value", "uncertainties", "species.H2O.transition[0].enthalpy", replace=[R('value = "40.651 kJ/mol", ', "")], msg="value"),
    Bad("u-conversion-above-1", "uncertainties", "output.q.extent_rate.shift.conversion",
        append='[[output]]\nname = "q"\nkind = "heat_release"\ntemperature = "700 K"\nextent_rate = { shift = { feed = "2 mol/s", conversion = { value = 1.2, u = 0.01 } } }\n'),
]

# --- hostile sizes (issue 15, item 8): small files asking for huge work; limits in uqthermo/case/limits.py
_MANY_SPECIES = "".join(f'[species.S{i}]\nformula = "H2"\n' for i in range(5001))
_MANY_OUTPUTS = "".join(f'[[output]]\nname = "o{i}"\nkind = "reaction_enthalpy"\nreaction = "shift"\n'
                        f'temperature = "700 K"\n' for i in range(5001))
_MANY_POINTS = "".join(f'[[output]]\nname = "c{i}"\nkind = "reaction_enthalpy"\nreaction = "shift"\n'
                       f'temperatures = {{ from = "400 K", to = "2399 K", step = "1 K" }}\n' for i in range(26))
_MANY_REACTIONS = "".join(f'[reaction.r{i}]\nequation = "CO(g) + H2O(g) -> CO2(g) + H2(g)"\n' for i in range(20001))
CASES += [
    Bad("size-species-name-200000", "sizes", "species", replace=[R("[species.CO2]\n", "[species." + "C" * 200000 + "]\n")],
        msg="200000 characters long; at most 100"),
    Bad("size-reaction-name-101", "sizes", "reaction", append=f'[reaction.{"r" * 101}]\n{EQ}\n', msg="at most 100"),
    Bad("size-output-name-101", "sizes", "output[0].name", replace=[R('name = "dH_700K"', f'name = "{"d" * 101}"')],
        msg="at most 100"),
    Bad("size-dotted-key-200000-deep", "sizes", "", append=".".join(["a"] * 200000) + " = 1\n",
        msg="nested more than 20 levels"),
    Bad("size-table-header-deep", "sizes", "", append="[" + ".".join(["a"] * 5000) + "]\n", msg="nested more than 20"),
    Bad("size-inline-tables-deep", "sizes", "", append="x = " + "{a = " * 30 + "1" + "}" * 30 + "\n", msg="nesting too deep"),
    Bad("size-5001-species", "sizes", "species", append=_MANY_SPECIES, msg="at most 5000"),
    Bad("size-5001-outputs", "sizes", "output", append=_MANY_OUTPUTS, msg="at most 5000"),
    Bad("size-52000-points", "sizes", "output", append=_MANY_POINTS, msg="output points.*at most 50000"),
    Bad("size-20001-reactions", "sizes", "reaction", append=_MANY_REACTIONS, msg="at most 20000"),
    Bad("type-seed-2-64", "types", "settings.seed", replace=[R("seed = 7", f"seed = {2**64}")], msg=r"2\^63 - 1"),
    Bad("type-seed-1e30", "types", "settings.seed", replace=[R("seed = 7", "seed = 1" + "0" * 30)], msg=r"2\^63 - 1"),
]

# bad command lines (no case problem): (id, args after the case file, expected text)
CLI_CASES = [
    ("cli-samples-huge", ["--samples", "1e12"], "--samples"),
    ("cli-samples-overflow", ["--samples", "1e999"], "--samples"),
    ("cli-samples-not-a-number", ["--samples", "lots"], "--samples"),
    ("cli-seed-negative", ["--seed", "-3"], "--seed"),
    ("cli-seed-2-64", ["--seed", str(2**64)], "--seed must be a whole number from 0 to 2^63 - 1"),
    ("cli-seed-1e30", ["--seed", "1" + "0" * 30], "--seed must be a whole number from 0 to 2^63 - 1"),
    ("cli-unknown-method", ["--method", "guess"], "--method"),
    ("cli-out-is-a-file", None, "--out"),
]

_LINE = re.compile(r"^(?P<file>.+?): (?P<rest>.*)$")


def _check_lines(stderr: str, fname: str) -> list[str]:
    lines = [ln for ln in stderr.splitlines() if ln.strip()]
    assert lines, "nothing on stderr"
    assert "Traceback" not in stderr
    body = [ln for ln in lines if not re.match(r"^\d+ problem\(s\) found$", ln)]
    for ln in body:
        assert ln.startswith(f"{fname}: "), f"not a 'FILE: KEY: message' line: {ln!r}"
    return [ln[len(fname) + 2:] for ln in body]


def _assert_expected(bad: Bad, rest: list[str]) -> None:
    if bad.key:
        hits = [r for r in rest if r == bad.key or r.startswith(bad.key + ": ") or r.startswith(bad.key + ".")
                or r.startswith(bad.key + "[")]
    else:
        hits = rest
    assert hits, f"{bad.id}: no line names key {bad.key!r}; got:\n" + "\n".join(rest)
    if bad.msg:
        assert any(re.search(bad.msg, h, re.IGNORECASE) for h in hits), f"{bad.id}: no message matches {bad.msg!r}: {hits}"


@pytest.mark.parametrize("bad", [pytest.param(b, marks=pytest.mark.xfail(reason=b.xfail, strict=False)) if b.xfail else b
                                 for b in CASES], ids=[b.id for b in CASES])
def test_bad_case_is_rejected_cleanly(bad: Bad, tmp_path):
    path = tmp_path / f"{bad.id}.toml"
    path.write_bytes(bad.document())
    stats = BAD_INPUT_STATS
    stats.setdefault("tried", set()).add(bad.id)
    stats.setdefault("classes", set()).add(bad.cls)
    out = tmp_path / "out"
    code, stdout, stderr = main_in_process("run", path, "--out", out, "--quiet")
    assert code == 2, f"exit {code}; stderr:\n{stderr}"
    rest = _check_lines(stderr, str(path))
    _assert_expected(bad, rest)
    assert not out.exists(), "--out was created for a bad case"
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".out")], "temporary folder left behind"
    # check: the same problem, same exit code, still nothing written anywhere
    code, stdout, stderr = main_in_process("check", path)
    assert code == 2
    rest = _check_lines(stderr, str(path))
    _assert_expected(bad, rest)
    assert sorted(p.name for p in tmp_path.iterdir()) == [path.name]
    stats.setdefault("rejected", set()).add(bad.id)


@pytest.mark.parametrize("cid,args,expect", CLI_CASES, ids=[c[0] for c in CLI_CASES])
def test_bad_command_line(cid, args, expect, make_case, tmp_path):
    case = make_case()
    out = tmp_path / "out"
    if args is None:
        out.write_text("a file, not a folder")
        args = []
    code, stdout, stderr = main_in_process("run", case, "--out", out, *args)
    assert code == 2, stderr
    assert expect in stderr and "Traceback" not in stderr
    if args:
        assert not out.exists()
    else:
        assert out.read_text() == "a file, not a folder"
    BAD_INPUT_STATS.setdefault("cli", set()).add(cid)


def test_bad_input_counts():
    """At least 40 distinct bad case files, in every class the issues list."""
    ids = [b.id for b in CASES]
    assert len(ids) == len(set(ids)), "duplicate case ids"
    docs = [b.document() for b in CASES]
    assert len(set(docs)) == len(docs), "two cases are the same file"
    classes = {b.cls for b in CASES}
    assert len(CASES) >= 40
    assert {"syntax", "types", "units", "nan-inf", "magnitudes", "empty", "unicode", "duplicates", "transitions",
            "correlations", "temperatures", "samples", "equations", "missing-data", "validity",
            "uncertainties", "sizes"} <= classes
    print(f"bad inputs: {len(CASES)} case files in {len(classes)} classes, plus {len(CLI_CASES)} bad command lines")


def test_readme_reliability_table_is_true():
    """The README's reliability table gives the counts of this file (issue 15: keep it true)."""
    text = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    m = re.search(r"(\d+) distinct files in (\d+) classes", text)
    assert m and int(m.group(1)) == len(CASES) and int(m.group(2)) == len({b.cls for b in CASES})
    m = re.search(r"(\d+) command lines", text)
    assert m and int(m.group(1)) == len(CLI_CASES)
    m = re.search(r"(\d+) broken results\.json files", text)
    assert m and int(m.group(1)) == len(BAD_RESULTS)


def test_check_lists_every_problem_at_once(make_case):
    """Several independent problems in one file: `check` reports each on its own line."""
    path = make_case(replace=[
        (OUT_T, 'temperature = "-5 K"'),                                       # output temperature
        ('u = "0.02 kJ/mol"', 'u = "-0.02 kJ/mol"'),                          # transition enthalpy u
        (EQ, 'equation = "CO(g) + H2O(g) -> CO2(g)"'),                          # unbalanced
        ("seed = 7", "seed = -1"),                                              # settings
        ('relative_u = "0.5 %"', 'relative_u = "0.5 kJ/mol"'),                 # wrong dimension
    ], append='[[correlation]]\nbetween = ["CO.g.formation_enthalpy", "CO2.g.formation_enthalpy"]\ncoefficient = 3\n')
    code, stdout, stderr = main_in_process("check", path)
    assert code == 2
    rest = _check_lines(stderr, str(path))
    keys = ["output.dH_700K.temperature", "species.H2O.transition[0].enthalpy.u", "reaction.shift.equation",
            "settings.seed", "species.CO.g.heat_capacity.relative_u", "correlation[0].coefficient"]
    for k in keys:
        assert any(r.startswith(k + ": ") for r in rest), (k, rest)
    assert f"{len(rest)} problem(s) found" in stderr or len(rest) >= len(keys)


def test_valid_unicode_text_is_fine(make_case, tmp_path):
    """Unicode in free text (title, description, source) and °C/µ/− in units is accepted."""
    path = make_case(replace=[
        ('title = "Water-gas shift at 700 K (test case, published data)"',
         'title = "Konvertierung CO → CO₂ bei 426,85 °C — ΔrH 😀"\ndescription = "données publiées; 水性ガス"'),
        (OUT_T, 'temperature = "426.85 °C"'),
        ('source = "IAPWS-95 via chemicals"', 'source = "IAPWS‑95 (ΔvapH), über chemicals"'),
        ('value = "40.651 kJ/mol"', 'value = "40.651 kJ·mol⁻¹"' if False else 'value = "40651 J/mol"'),
    ])
    code, stdout, stderr = main_in_process("check", path)
    assert code == 0, stderr


def test_missing_and_directory_case_files(tmp_path):
    """Missing file, a folder, a named pipe (would block) and /dev/zero (would never end)."""
    import os

    targets = [(tmp_path / "nope.toml", "not found"), (tmp_path, "directory")]
    if hasattr(os, "mkfifo"):
        os.mkfifo(tmp_path / "pipe.toml")
        targets.append((tmp_path / "pipe.toml", "not a regular file"))
    if Path("/dev/zero").exists():
        targets.append((Path("/dev/zero"), "not a regular file"))
    for target, msg in targets:
        out = tmp_path / "out"
        code, stdout, stderr = main_in_process("run", target, "--out", out)
        assert code == 2 and msg in stderr and "Traceback" not in stderr
        assert stderr.startswith(f"{target}: ")
        assert not out.exists()


def test_command_line_and_case_file_share_the_sample_limit():
    from uqthermo import cli
    from uqthermo.case import limits
    from uqthermo.case.readers import settings

    assert cli.MAX_SAMPLES_LIMIT == settings.MAX_SAMPLES_LIMIT
    assert cli.MAX_SEED == limits.MAX_SEED and cli.SEED_RANGE_TEXT == limits.SEED_RANGE_TEXT


def test_seed_range_is_one_range(make_case, tmp_path):
    """The largest seed is accepted on the command line and in the case file; one more is refused by
    both with the same words."""
    big = 2**63 - 1
    code, _, err = main_in_process("check", make_case(replace=[("seed = 7", f"seed = {big}")]))
    assert code == 0, err
    code, _, err = main_in_process("run", make_case(), "--out", tmp_path / "out", "--seed", str(big), "--samples", "200",
                                   "--quiet", "--no-report")
    assert code == 0, err
    code, _, err_case = main_in_process("check", make_case(replace=[("seed = 7", f"seed = {big + 1}")]))
    code2, _, err_cli = main_in_process("run", make_case(), "--out", tmp_path / "o2", "--seed", str(big + 1))
    assert code == code2 == 2
    words = "must be a whole number from 0 to 2^63 - 1 (9223372036854775807)"
    assert f"settings.seed: {words}, got {big + 1}" in err_case and f"--seed {words}, got {big + 1}" in err_cli


def test_plain_number_relative_u_is_flagged(make_case):
    """relative_u = 0.5 means 50 %: accepted (it is a valid fraction) but flagged, since "0.5 %" was likely meant."""
    code, out, err = main_in_process("check", make_case(replace=[('relative_u = "0.5 %"', "relative_u = 0.5")]))
    assert code == 0, err
    assert "species.CO.g.heat_capacity.relative_u" in out and "50 %" in out
    code, out, err = main_in_process("check", make_case(replace=[('relative_u = "0.5 %"', "relative_u = 0.005")]))
    assert code == 0 and "fraction" not in out


# --------------------------------------------------------------------------- bad results.json for `uqthermo report`

BAD_RESULTS = [
    ("not-json", b"{ not json", "", "not a readable"),
    ("deep-nesting", b"[" * 100000, "", "nested too deep"),
    ("wrong-format", b'{"format": "other/1"}', "format", "not a uqthermo results file"),
    ("case-not-table", b'{"format": "uqthermo.results/1", "case": 3}', "case", "table"),
    ("outputs-not-list", b'{"format": "uqthermo.results/1", "outputs": "x"}', "outputs", "list"),
    ("points-not-list", b'{"format": "uqthermo.results/1", "outputs": [{"name": "a", "points": 1}]}',
     "outputs[0].points", "list"),
    ("driver-not-table", b'{"format": "uqthermo.results/1", "outputs": [{"name": "a", "points": [{"drivers": [0]}]}]}',
     "outputs[0].points[0].drivers", "list of tables"),
    ("driver-datum-list", b'{"format": "uqthermo.results/1", "outputs": [{"name": "a", "points": '
                          b'[{"drivers": [{"datum": [1], "share": 1}]}]}]}', "outputs[0].points[0].drivers[0].datum", "string"),
    ("not-utf8", b'{"format": "uqthermo.results/1", "case": {"title": "\xff"}}', "", "not a readable"),
    # issue 15, item 10: values the report cannot draw
    ("convergence-garbage", b'{"format": "uqthermo.results/1", "convergence": {"a": [["x", 1]]}}', "convergence.a[0]",
     "pair [trials, u]"),
    ("convergence-not-pairs", b'{"format": "uqthermo.results/1", "convergence": {"a": "garbage"}}', "convergence.a",
     "list of [trials, u] pairs"),
    ("plan-front-not-tables", b'{"format": "uqthermo.results/1", "plan": {"front": 5}}', "plan.front",
     "list of tables"),
    ("plan-not-table", b'{"format": "uqthermo.results/1", "plan": [1]}', "plan", "must be a table"),
    ("estimate-10-400", b'{"format": "uqthermo.results/1", "outputs": [{"name": "a", "points": [{"linear": {"estimate": 1'
                        + b"0" * 400 + b'}}]}]}', "outputs[0].points[0].linear.estimate", "too large"),
]


@pytest.mark.parametrize("rid,data,key,msg", BAD_RESULTS, ids=[b[0] for b in BAD_RESULTS])
def test_report_command_rejects_bad_results_json(tmp_path, rid, data, key, msg):
    path = tmp_path / "results.json"
    path.write_bytes(data)
    out = tmp_path / "out"
    code, stdout, stderr = main_in_process("report", path, "--out", out)
    assert code == 2, stderr
    assert stderr.startswith(f"{path}: {key + ': ' if key else ''}") and msg in stderr and "Traceback" not in stderr
    assert not out.exists()


def test_report_command_survives_huge_numbers(fast_run, tmp_path):
    import json

    doc = json.loads(json.dumps(fast_run["results"]))
    pt = doc["outputs"][0]["points"][0]
    pt["monte_carlo"]["mean"] = pt["linear"]["estimate"] = 1e30      # u stays small: 2 decimals wanted
    pt["monte_carlo"]["coverage_interval"] = pt["linear"]["coverage_interval"] = [1e30, 1e30]
    path = tmp_path / "results.json"
    path.write_text(json.dumps(doc))
    code, stdout, stderr = main_in_process("report", path, "--out", tmp_path / "out")
    assert code == 0, stderr

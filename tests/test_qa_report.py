"""Regressions of a QA pass over the report and terminal wording (labels, probabilities, counts, legends).

The checks are on presentation: the numbers behind them are checked elsewhere against outside
references. Where a number is compared here, its source is named beside the check.
"""

from __future__ import annotations

import json

import pytest

from conftest import main_in_process, write_case

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
    case = write_case(base, NH3_CASE, "nh3.toml")
    out = base / "out"
    code, stdout, stderr = main_in_process("run", case, "--out", out, *extra)
    assert code == 0, stderr
    return {"stdout": stdout, "out": out, "results": json.loads((out / "results.json").read_text(encoding="utf-8")),
            "md": (out / "report.md").read_text(encoding="utf-8")}


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

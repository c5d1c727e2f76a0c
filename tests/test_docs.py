"""Keep docs/case-format.md honest.

* every ```toml block of the document is valid TOML;
* every block that is a complete case (it has a top-level ``title``) passes ``uqthermo check``;
* the worked example in the document is byte-for-byte docs/worked-example.toml;
* the data written in the worked example are the ones its comments name (the ``chemicals``
  package: ATcT 1.112 formation enthalpy, NIST WebBook Shomate coefficients and S°);
* the worked example runs, and its reaction enthalpy at 298.15 K equals 2 ΔfH(NH3, g) of ATcT
  (chemicals ``Hfg_ATcT_data``), with u = 2 · U/2 (ATcT ± read as 95 %, k = 2); at 450 °C it
  equals Kirchhoff's law integrated by chemicals' own Shomate code, and log10 K follows from
  chemicals' integrals and the WebBook S° values as well.
"""

from __future__ import annotations

import json
import math
import re
import tomllib
from pathlib import Path

import pytest

from uqthermo.cli import main

DOCS = Path(__file__).resolve().parents[1] / "docs"
DOC = DOCS / "case-format.md"
EXAMPLE = DOCS / "worked-example.toml"
_BLOCK = re.compile(r"^```toml[ \t]*\n(.*?)^```[ \t]*$", re.S | re.M)

CAS = {"N2": "7727-37-9", "H2": "1333-74-0", "NH3": "7664-41-7"}
R = 8.314462618  # J/(mol K), CODATA 2018 (exact in the 2019 SI)


def _blocks() -> list[str]:
    return _BLOCK.findall(DOC.read_text(encoding="utf-8"))


def _is_case(text: str) -> bool:
    return "title" in tomllib.loads(text)


BLOCKS = _blocks()
CASES = [b for b in BLOCKS if _is_case(b)]


def test_document_has_blocks():
    assert len(BLOCKS) >= 20, "case-format.md lost its examples"
    assert len(CASES) >= 3
    for b in CASES:   # complete cases are written title-first, as the document says
        assert b.startswith("title ="), b.splitlines()[0]


@pytest.mark.parametrize("i", range(len(BLOCKS)))
def test_every_toml_block_parses(i):
    tomllib.loads(BLOCKS[i])


@pytest.mark.parametrize("i", range(len(CASES)))
def test_complete_cases_pass_check(i, tmp_path, capsys):
    path = tmp_path / f"case{i}.toml"
    path.write_text(CASES[i], encoding="utf-8")
    rc = main(["check", str(path)])
    err = capsys.readouterr().err
    assert rc == 0, err


# ------------------------------------------------------------------ fragments in context
# Fragments are checked inside a small host case, so that a documented key that the loader
# refuses (or a model that cannot be evaluated) fails here, not in a user's file.

_HOST_SPECIES = """title = "fragment host"
[species.Z]
formula = "N2"
[species.Z.g]
formation_enthalpy = "0 kJ/mol"
{fragment}
[[output]]
name = "h"
kind = "heating_enthalpy"
species = "Z(g)"
from = "300 K"
to = "370 K"
"""

_HOST_TEMPERATURE = """
[[output]]
name = "fragment_point"
kind = "reaction_enthalpy"
reaction = "synthesis"
{fragment}
"""

_HOST_RELEASE = """
[[output]]
name = "fragment_release"
kind = "heat_release"
temperature = "350 degC"
{fragment}
"""

INPUTS = Path(__file__).resolve().parents[1] / "inputs"
DEMOS = ["methanation_reactor.toml", "epoxide_hydration_batch.toml"]


def _check_text(tmp_path: Path, name: str, text: str) -> tuple[int, str]:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    import contextlib
    import io

    err = io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        rc = main(["check", str(path)])
    return rc, err.getvalue()


HEAT_CAPACITY = [b for b in BLOCKS if b.startswith("heat_capacity =")]
TEMPERATURE = [b for b in BLOCKS if b.startswith(("temperature =", "temperatures ="))]
OUTPUTS = [b for b in BLOCKS if b.startswith("[[output]]")]
RELEASE_TABLES = [b for b in BLOCKS if b.startswith("[output.extent_rate.")]
SETTINGS = [b for b in BLOCKS if b.startswith("[settings]")]


def test_fragment_kinds_are_present():
    assert len(HEAT_CAPACITY) >= 5 and len(TEMPERATURE) == 4 and len(OUTPUTS) >= 4
    assert RELEASE_TABLES and SETTINGS


@pytest.mark.parametrize("i", range(len(HEAT_CAPACITY)))
def test_heat_capacity_fragments_check_in_a_case(i, tmp_path):
    rc, err = _check_text(tmp_path, "hc.toml", _HOST_SPECIES.format(fragment=HEAT_CAPACITY[i]))
    assert rc == 0, err


@pytest.mark.parametrize("i", range(len(TEMPERATURE)))
def test_temperature_fragments_check_in_the_worked_example(i, tmp_path):
    text = EXAMPLE.read_text(encoding="utf-8") + _HOST_TEMPERATURE.format(fragment=TEMPERATURE[i])
    rc, err = _check_text(tmp_path, "t.toml", text)
    assert rc == 0, err


def test_settings_fragment_checks(tmp_path):
    text = CASES[0] + "\n" + SETTINGS[0]
    rc, err = _check_text(tmp_path, "s.toml", text)
    assert rc == 0, err


@pytest.mark.parametrize("i", range(len(OUTPUTS) + len(RELEASE_TABLES)))
def test_output_fragments_check_in_a_demo(i, tmp_path):
    """Output fragments use the demo scenarios' species and reactions: one demo must accept them."""
    frag = (OUTPUTS + [_HOST_RELEASE.format(fragment=b) for b in RELEASE_TABLES])[i]
    demos = [INPUTS / d for d in DEMOS if (INPUTS / d).is_file()]
    if not demos:
        pytest.skip("demo scenarios not present")
    errors = []
    for demo in demos:
        rc, err = _check_text(tmp_path, f"o-{demo.name}", demo.read_text(encoding="utf-8") + "\n" + frag)
        if rc == 0:
            return
        errors.append(err)
    pytest.fail("\n".join(errors))


# ------------------------------------------------------------------ the worked example

def test_worked_example_file_is_the_documented_one():
    text = EXAMPLE.read_text(encoding="utf-8")
    assert text in CASES


def _example() -> dict:
    return tomllib.loads(EXAMPLE.read_text(encoding="utf-8"))


def _value(text: str) -> float:
    return float(text.split()[0])


def test_worked_example_data_are_the_cited_ones():
    chem_hc = pytest.importorskip("chemicals.heat_capacity")
    chem_rx = pytest.importorskip("chemicals.reaction")
    case = _example()
    # ATcT 1.112 via chemicals (Hfg_ATcT_data, J/mol; its ± is a 95 % value)
    row = chem_rx.Hfg_ATcT_data.loc[CAS["NH3"]]
    fh = case["species"]["NH3"]["g"]["formation_enthalpy"]
    assert _value(fh["value"]) * 1e3 == pytest.approx(float(row["Hfg"]), abs=1e-9)
    assert _value(fh["U"]) * 1e3 == pytest.approx(float(row["uncertainty"]), abs=1e-9)
    assert fh["k"] == 2
    for name, cas in CAS.items():
        ph = case["species"][name]["g"]
        # NIST WebBook Shomate via chemicals: stored for T in K (A, B/1e3, C/1e6, D/1e9, E*1e6)
        models = chem_hc.WebBook_Shomate_gases[cas].models
        for rng in ph["heat_capacity"]["ranges"]:
            lo = _value(rng["T"][0])
            m = min(models, key=lambda m: abs(m.Tmin - lo))
            A, B, C, D, E = m.coeffs
            assert rng["coefficients"] == pytest.approx([A, B * 1e3, C * 1e6, D * 1e9, E / 1e6], rel=1e-9)
            assert _value(rng["T"][1]) == pytest.approx(m.Tmax)
        # S° from the NIST WebBook as shipped in chemicals (method WEBBOOK), written to 0.01 J/(mol K)
        s0 = chem_rx.S0g(cas, method="WEBBOOK")
        assert _value(ph["standard_entropy"]["value"]) == pytest.approx(s0, abs=0.006)


@pytest.fixture(scope="module")
def example_results(tmp_path_factory):
    out = tmp_path_factory.mktemp("worked") / "out"
    rc = main(["run", str(EXAMPLE), "--out", str(out), "--samples", "5000", "--quiet"])
    assert rc == 0
    assert (out / "report.html").is_file() and (out / "report.md").is_file()
    return json.loads((out / "results.json").read_text(encoding="utf-8"))


def _point(res: dict, name: str, T: float | None = None) -> dict:
    out = next(o for o in res["outputs"] if o["name"] == name)
    if T is None:
        return out["points"][0]
    return next(p for p in out["points"] if abs(p["temperature_K"] - T) < 1e-6)


def test_worked_example_enthalpy_at_reference_is_two_atct_formation_enthalpies(example_results):
    chem_rx = pytest.importorskip("chemicals.reaction")
    row = chem_rx.Hfg_ATcT_data.loc[CAS["NH3"]]
    # N2 + 3 H2 -> 2 NH3: elements in their reference states have ΔfH = 0 (ATcT rows are 0 too)
    assert chem_rx.Hfg_ATcT_data.loc[CAS["N2"], "Hfg"] == 0 and chem_rx.Hfg_ATcT_data.loc[CAS["H2"], "Hfg"] == 0
    expected = 2 * float(row["Hfg"]) / 1e3                       # kJ/mol
    u_expected = 2 * float(row["uncertainty"]) / 2 / 1e3         # ATcT ± is 95 %: u = U/2 per NH3
    pt = _point(example_results, "dH_ref")
    assert pt["temperature_K"] == pytest.approx(298.15)
    assert pt["linear"]["estimate"] == pytest.approx(expected, abs=1e-9)
    assert pt["linear"]["standard_uncertainty"] == pytest.approx(u_expected, rel=1e-6)
    mc = pt["monte_carlo"]
    assert abs(mc["mean"] - expected) < 3 * mc["standard_uncertainty"] / math.sqrt(mc["samples"])
    assert pt["drivers"][0]["datum"] == "NH3.g.formation_enthalpy"


def _kirchhoff_chemicals(T: float) -> tuple[float, float]:
    """ΔrH (J/mol) and ΔrS (J/(mol K)) of N2 + 3 H2 -> 2 NH3 at T, integrated by chemicals'
    Shomate objects (independent code) from the ATcT ΔfH and the WebBook S° at 298.15 K."""
    chem_hc = pytest.importorskip("chemicals.heat_capacity")
    chem_rx = pytest.importorskip("chemicals.reaction")
    nu = {"N2": -1, "H2": -3, "NH3": 2}
    dH = 2 * float(chem_rx.Hfg_ATcT_data.loc[CAS["NH3"], "Hfg"])
    dS = 0.0
    for name, n in nu.items():
        cp = chem_hc.WebBook_Shomate_gases[CAS[name]]
        dH += n * cp.force_calculate_integral(298.15, T)
        dS += n * (round(chem_rx.S0g(CAS[name], method="WEBBOOK"), 2) + cp.force_calculate_integral_over_T(298.15, T))
    return dH, dS


def test_worked_example_at_450C_matches_chemicals_integration(example_results):
    T = 723.15
    dH, dS = _kirchhoff_chemicals(T)
    window = _point(example_results, "dH_window", T)
    assert window["linear"]["estimate"] == pytest.approx(dH / 1e3, abs=1e-6)
    bed = _point(example_results, "dH_bed")     # uncertain temperature, nominal 450 °C
    assert bed["linear"]["estimate"] == pytest.approx(dH / 1e3, abs=1e-6)
    log10K = -(dH - T * dS) / (R * T) / math.log(10)
    assert _point(example_results, "log10K_bed")["linear"]["estimate"] == pytest.approx(log10K, abs=1e-6)
    # heat release: extent rate = N2 feed × conversion / |ν(N2)|, Q = ξ̇ (−ΔrH), kW
    xi = 1800e3 / 3600 * 0.22
    assert _point(example_results, "bed_heat")["linear"]["estimate"] == pytest.approx(xi * -dH / 1e3, rel=1e-9)

"""End to end through the command line (contract §1 and §3, issue 4).

Both demo scenarios run once per session through ``python -m uqthermo.cli run`` with
``--samples 20000`` (fixture ``demo_runs`` in conftest.py, the two runs in parallel);
the fast water-gas-shift case of conftest.py runs in-process. The checks are the
contract's: exit codes, every §3 key of results.json, the report files, and the
numbers of the two propagation methods agreeing where the model is linear.

Statistical tolerances: the Monte Carlo mean of N trials has standard error u/√N; the
sample standard deviation of N normal trials has relative standard error ≈ 1/√(2N)
(exact sampling distributions of the mean and of s for a normal sample). Sobol'
sampling only makes both smaller, so the random-sampling bounds are conservative.
"""

from __future__ import annotations

import json
import math

import pytest

from conftest import DEMOS, DEMO_SAMPLES, main_in_process, run_cli

FORMAT = "uqthermo.results/1"
KINDS = {"reaction_enthalpy", "heating_enthalpy", "heat_release", "adiabatic_temperature_rise",
         "reaction_gibbs_energy", "equilibrium_constant"}
UNITS = {"reaction_enthalpy": {"kJ/mol"}, "reaction_gibbs_energy": {"kJ/mol"}, "heating_enthalpy": {"kJ/mol", "kJ"},
         "heat_release": {"kW"}, "adiabatic_temperature_rise": {"K"}, "equilibrium_constant": {"1"}}


def _num(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def _interval(iv) -> bool:
    return isinstance(iv, list) and len(iv) == 2 and all(_num(v) for v in iv) and iv[0] <= iv[1]


def check_contract_keys(doc: dict, samples: int, share_range: bool = True) -> None:
    """Every key of contract §3, with the documented types."""
    assert doc["format"] == FORMAT
    assert isinstance(doc["case"]["title"], str) and doc["case"]["title"]
    sha = doc["case"]["sha256"]
    assert isinstance(sha, str) and len(sha) == 64 and all(ch in "0123456789abcdef" for ch in sha)
    run = doc["run"]
    assert isinstance(run["seed"], int) and not isinstance(run["seed"], bool)
    assert run["samples"] == samples
    assert run["sampling"] in ("sobol", "random", "latin-hypercube")
    assert isinstance(run["version"], str) and run["version"]
    assert isinstance(doc["warnings"], list) and all(isinstance(w, str) for w in doc["warnings"])
    assert doc["outputs"], "no outputs"
    for out in doc["outputs"]:
        assert isinstance(out["name"], str) and out["name"]
        assert out["kind"] in KINDS
        assert out["unit"] in UNITS[out["kind"]], (out["name"], out["unit"])
        assert out["points"]
        for pt in out["points"]:
            where = f"{out['name']} at {pt.get('temperature_K')}"
            assert _num(pt["temperature_K"]) and pt["temperature_K"] > 0, where
            lin = pt["linear"]
            assert _num(lin["estimate"]) and _num(lin["standard_uncertainty"]) and lin["standard_uncertainty"] >= 0, where
            assert _interval(lin["coverage_interval"]), where
            mc = pt["monte_carlo"]
            assert _num(mc["mean"]) and _num(mc["standard_uncertainty"]) and mc["standard_uncertainty"] >= 0, where
            assert _interval(mc["coverage_interval"]), where
            assert mc["samples"] == samples, where
            assert pt["coverage_probability"] == pytest.approx(0.95), where
            # true / false, or null where the JCGM 101 §8 comparison is undecided (Monte Carlo not stable to δ)
            assert isinstance(pt["linear_validated"], bool) or (
                pt["linear_validated"] is None and pt["validation"]["verdict"] == "undecided"), where
            assert pt["validation"]["verdict"] in ("validated", "not validated", "undecided"), where
            assert pt["reported"] in ("linear", "monte_carlo"), where
            drivers = pt["drivers"]
            assert isinstance(drivers, list) and drivers, where
            for d in drivers:
                assert isinstance(d["datum"], str) and d["datum"], where
                assert _num(d["share"]), (where, d)
                if share_range and not any(c["share"] < 0 for c in pt.get("covariance_terms") or []):
                    # above 1 only beside negative covariance rows (JCGM 100 §5.2.2)
                    assert -1e-9 <= d["share"] <= 1 + 1e-9, (where, d)
            shares = [d["share"] for d in drivers]
            assert shares == sorted(shares, reverse=True), f"{where}: drivers not sorted, largest first: {shares}"
            assert len({d["datum"] for d in drivers}) == len(drivers), where
            if out["kind"] == "adiabatic_temperature_rise" and out.get("limit_K") is not None:
                p = pt["exceedance_probability"]
                assert _num(p) and 0 <= p <= 1, where


# --------------------------------------------------------------------------- the demos

@pytest.mark.parametrize("name", sorted(DEMOS))
def test_demo_exits_0_and_writes_everything(demo_runs, name):
    run = demo_runs[name]
    proc = run["proc"]
    assert proc.returncode == 0, proc.stderr[-3000:]
    assert "Traceback" not in proc.stderr and "Traceback" not in proc.stdout
    out = run["out"]
    for f in ("results.json", "report.html", "report.md"):
        assert (out / f).is_file() and (out / f).stat().st_size > 0, f
    pngs = list((out / "figures").glob("*.png"))
    svgs = list((out / "figures").glob("*.svg"))
    assert pngs and svgs, "figures (PNG and SVG) missing"
    assert list((out / "tables").glob("*.csv")), "CSV tables missing"
    assert not list(out.parent.glob(f".{out.name}.*")), "temporary folders left next to --out"
    assert [p.name for p in out.rglob(".*")] == [".uqthermo-manifest.json"], "temporary files left inside --out"
    manifest = json.loads((out / ".uqthermo-manifest.json").read_text())
    assert manifest["format"] == "uqthermo.manifest/1"
    assert sorted(f["path"] for f in manifest["files"]) == sorted(
        p.relative_to(out).as_posix() for p in out.rglob("*") if p.is_file() and p.name != ".uqthermo-manifest.json")
    # the terminal summary names every output
    for o in run["results"]["outputs"]:
        assert o["name"][:8] in proc.stdout


def test_epoxide_terminal_explains_the_driver_shares_once(demo_runs):
    """The note under the summary table says once what the driver shares are, covariance rows included."""
    stdout = demo_runs["epoxide"]["proc"].stdout
    notes = [line for line in stdout.splitlines() if line.startswith("top drivers:")]
    assert len(notes) == 1 and "covariance rows" in notes[0], notes


@pytest.mark.parametrize("name", sorted(DEMOS))
def test_demo_results_have_every_contract_key(demo_runs, name):
    doc = demo_runs[name]["results"]
    assert doc is not None
    check_contract_keys(doc, DEMO_SAMPLES)
    # the case hash is the hash of the file's bytes (reproducibility record)
    import hashlib

    assert doc["case"]["sha256"] == hashlib.sha256(DEMOS[name].read_bytes()).hexdigest()


@pytest.mark.parametrize("name", sorted(DEMOS))
def test_demo_driver_shares_lie_in_0_1(demo_runs, name):
    """Contract §3: share is the datum's share of the output variance u²(y). It lies in 0-1, except
    where correlations between data remove variance: then the signed covariance rows
    (``covariance_terms``) are negative and the rows sum to 1 (JCGM 100 §5.2.2)."""
    for out in demo_runs[name]["results"]["outputs"]:
        for pt in out["points"]:
            negative = any(c["share"] < 0 for c in pt.get("covariance_terms") or [])
            for d in pt["drivers"]:
                assert -1e-9 <= d["share"] <= (math.inf if negative else 1 + 1e-9), (out["name"], pt["temperature_K"], d)
            if pt.get("drivers_method") == "linear" and pt["drivers"]:
                total = sum(d["share"] for d in pt["drivers"]) + sum(c["share"] for c in pt.get("covariance_terms") or [])
                assert total == pytest.approx(1.0, abs=1e-9)


@pytest.mark.parametrize("name", sorted(DEMOS))
def test_demo_mc_mean_agrees_with_linear_estimate(demo_runs, name):
    """Linear outputs: |mean_MC - y_linear| <= 3 u/√N (standard error of the mean)."""
    doc = demo_runs[name]["results"]
    n = doc["run"]["samples"]
    checked = 0
    for out in doc["outputs"]:
        if not out.get("linear_model"):
            continue
        for pt in out["points"]:
            lin, mc = pt["linear"], pt["monte_carlo"]
            se = mc["standard_uncertainty"] / math.sqrt(n)
            assert abs(mc["mean"] - lin["estimate"]) <= 3 * se + 1e-12, (out["name"], pt["temperature_K"])
            checked += 1
    assert checked > 0, "no linear output in the demo"


@pytest.mark.parametrize("name", sorted(DEMOS))
def test_demo_linear_and_mc_u_agree(demo_runs, name):
    """Linear outputs: u_MC = u_linear within 4/√(2N) relative (s of a normal sample; conservative for the
    lighter-tailed rectangular mixtures of the epoxide demo). With all inputs normal the output is normal
    and the coverage intervals agree too."""
    doc = demo_runs[name]["results"]
    n = doc["run"]["samples"]
    tol = 4 / math.sqrt(2 * n)
    shape = {i["datum"]: i["distribution"] for i in doc["inputs"]}
    checked = 0
    for out in doc["outputs"]:
        if not out.get("linear_model"):
            continue
        for pt in out["points"]:
            ul, um = pt["linear"]["standard_uncertainty"], pt["monte_carlo"]["standard_uncertainty"]
            assert um == pytest.approx(ul, rel=tol), (out["name"], pt["temperature_K"])
            # the data this point depends on (share > 0) are all normal: the output is normal
            if all(shape.get(d["datum"], "").startswith(("normal", "exact")) for d in pt["drivers"] if d["share"] > 1e-12):
                for a, b in zip(pt["linear"]["coverage_interval"], pt["monte_carlo"]["coverage_interval"]):
                    assert abs(a - b) <= 0.05 * ul
            checked += 1
    assert checked


def test_fast_case_linear_and_mc_agree(fast_run):
    """The water-gas-shift case (all inputs normal, all outputs linear)."""
    assert fast_run["code"] == 0, fast_run["stderr"]
    doc = fast_run["results"]
    check_contract_keys(doc, 20000)
    n = 20000
    for out in doc["outputs"]:
        assert out["linear_model"] is True
        for pt in out["points"]:
            lin, mc = pt["linear"], pt["monte_carlo"]
            assert abs(mc["mean"] - lin["estimate"]) <= 3 * mc["standard_uncertainty"] / math.sqrt(n)
            assert mc["standard_uncertainty"] == pytest.approx(lin["standard_uncertainty"], rel=4 / math.sqrt(2 * n))
            # exact linear model, normal inputs: never "not validated"; "undecided" only where the Monte Carlo
            # endpoints are not stable to δ (JCGM 101 §7.9.4), and then the linear result is the one reported
            v = pt["validation"]
            assert pt["linear_validated"] is True or (pt["linear_validated"] is None and v["verdict"] == "undecided"
                                                      and not v["monte_carlo_stable"] and pt["reported"] == "linear")
            # linear shares of a linear model with independent inputs add up to 1
            assert sum(d["share"] for d in pt["drivers"]) == pytest.approx(1.0, abs=1e-6)


def test_fast_case_against_cantera(fast_run):
    """ΔrH(700 K) of the water-gas shift vs Cantera gri30 (NASA-7 for all four gases).

    Our water is anchored in the liquid (ATcT) and crosses the IAPWS-95 vaporisation at
    373.124 K; gri30 anchors H2O(g) directly. The routes differ by the anchor data
    (ATcT ΔfH(g) - ΔfH(l) - ... ≈ 0.1 kJ/mol), so 0.5 kJ/mol is the tolerance.
    """
    ct = pytest.importorskip("cantera")
    gas = ct.Solution("gri30.yaml")
    h = {s: gas.species(s).thermo.h(700.0) / 1e6 for s in ("CO", "H2O", "CO2", "H2")}   # J/kmol → kJ/mol
    ref = h["CO2"] + h["H2"] - h["CO"] - h["H2O"]
    est = fast_run["results"]["outputs"][0]["points"][0]["linear"]["estimate"]
    assert est == pytest.approx(ref, abs=0.5)


def test_stated_correlation_is_the_sampled_pearson_correlation():
    """A stated correlation coefficient is a Pearson correlation (GUM 5.2.2, r(x_i, x_j) = u(x_i, x_j)/(u_i u_j)).

    Both methods must use the same one: the linear method's covariance diag(u) R diag(u)
    and the Monte Carlo sample's covariance. For a rectangular and a normal input with
    r = 0.5 the Gaussian copula realises r·√(3/π) ≈ 0.4886 (exact, for a normal and a
    uniform transform of jointly normal scores); the sample's r has standard error
    (1 - r²)/√N ≈ 0.002 at N = 2^17, so 0.004 separates the two.
    """
    import numpy as np

    from uqthermo.uq.distributions import Normal, Rectangular
    from uqthermo.uq.inputs import InputSet, InputVariable

    inputs = InputSet([InputVariable("a", "a", Rectangular(-58.0, 15.0)), InputVariable("b", "b", Normal(-432.0, 8.0))],
                      np.array([[1.0, 0.5], [0.5, 1.0]]))
    U = np.random.default_rng(1).random((1 << 17, 2))
    X = inputs.from_uniform(U)
    r = np.corrcoef(X.T)[0, 1]
    assert r == pytest.approx(0.5, abs=0.004)


@pytest.mark.parametrize("name", sorted(DEMOS))
def test_input_distribution_text_is_in_the_stated_unit(demo_runs, name):
    import re

    checked = 0
    for item in demo_runs[name]["results"]["inputs"]:
        text, u = item["distribution"], item["standard_uncertainty"]
        checked += bool(re.match(r"(normal|rectangular), ", text))
        m = re.match(r"normal, u ([0-9.eE+-]+)( .+)?$", text)
        if m and isinstance(u, (int, float)):
            assert float(m.group(1)) == pytest.approx(u, rel=1e-3), (item["datum"], text, u, item["unit"])
        m = re.match(r"rectangular, half-width ([0-9.eE+-]+)( .+)?$", text)
        if m and isinstance(u, (int, float)):
            assert float(m.group(1)) == pytest.approx(u * math.sqrt(3), rel=1e-3), (item["datum"], text, u, item["unit"])
    assert checked > 0


def test_demo_exceedance_probability_is_a_probability(demo_runs):
    doc = demo_runs["epoxide"]["results"]
    out = next(o for o in doc["outputs"] if o["kind"] == "adiabatic_temperature_rise")
    pt = out["points"][0]
    assert 0 < pt["exceedance_probability"] < 1
    # consistent with the kept distribution: P(T_final > limit) ≈ P(ΔT > limit - T0)
    assert out["limit_K"] > pt["temperature_K"]


# --------------------------------------------------------------------------- commands and exit codes

def test_help_on_every_command():
    for args in (["--help"], ["run", "--help"], ["check", "--help"], ["plan", "--help"], ["fit", "--help"],
                 ["data", "--help"], ["report", "--help"]):
        code, out, err = main_in_process(*args)
        assert code == 0, args
        assert "usage" in out.lower(), args


def test_help_through_the_entry_point():
    proc = run_cli("--help", timeout=60)
    assert proc.returncode == 0 and "run" in proc.stdout and "check" in proc.stdout
    proc = run_cli("--version", timeout=60)
    assert proc.returncode == 0 and "uqthermo" in proc.stdout


def test_no_command_and_unknown_option():
    code, out, err = main_in_process()
    assert code == 2
    code, out, err = main_in_process("run", "x.toml", "--out", "y", "--samples", "ten")
    assert code == 2 and "--samples" in err and "Traceback" not in err


def test_check_exit_codes(tmp_path, make_case):
    good = make_case()
    code, out, err = main_in_process("check", good)
    assert code == 0 and "OK" in out and err == ""
    for demo in DEMOS.values():
        assert main_in_process("check", demo)[0] == 0
    bad = make_case(replace=[('temperature = "700 K"', 'temperature = "-5 K"')])
    code, out, err = main_in_process("check", good, bad)
    assert code == 2
    assert str(bad) in err and str(good) not in err
    assert "output.dH_700K.temperature" in err
    code, out, err = main_in_process("check", tmp_path / "missing.toml")
    assert code == 2 and "missing.toml" in err and "not found" in err


def test_run_writes_report_from_results_json(fast_run, tmp_path):
    """`uqthermo report` re-renders a report from results.json alone."""
    out = tmp_path / "re"
    code, stdout, err = main_in_process("report", fast_run["out"] / "results.json", "--out", out)
    assert code == 0, err
    assert (out / "report.html").is_file() and (out / "report.md").is_file()
    assert json.loads((out / "results.json").read_text()) == fast_run["results"]


def test_report_rejects_non_results_json(tmp_path):
    p = tmp_path / "x.json"
    p.write_text('{"format": "something else"}')
    code, out, err = main_in_process("report", p, "--out", tmp_path / "o")
    assert code == 2 and "format" in err and not (tmp_path / "o").exists()


def test_linear_only_and_mc_only_methods(make_case, tmp_path):
    case = make_case()
    for method in ("linear", "monte-carlo"):
        out = tmp_path / method
        code, stdout, err = main_in_process("run", case, "--out", out, "--samples", "2000", "--method", method,
                                            "--quiet", "--no-report")
        assert code == 0, err
        doc = json.loads((out / "results.json").read_text())
        assert doc["run"]["method"] == method
        pt = doc["outputs"][0]["points"][0]
        assert pt["linear" if method == "linear" else "monte_carlo"] is not None


def test_adaptive_sample_count(make_case, tmp_path):
    """--samples adaptive (JCGM 101 §7.9): run.samples records the trials actually used."""
    out = tmp_path / "adaptive"
    code, stdout, err = main_in_process("run", make_case(), "--out", out, "--samples", "adaptive", "--quiet",
                                        "--no-report")
    assert code == 0, err
    doc = json.loads((out / "results.json").read_text())
    assert doc["run"]["adaptive"] is True
    n = doc["run"]["samples"]
    assert isinstance(n, int) and n >= 10000
    check_contract_keys(doc, n)
    for out_ in doc["outputs"]:
        for pt in out_["points"]:
            lin, mc = pt["linear"], pt["monte_carlo"]
            assert abs(mc["mean"] - lin["estimate"]) <= 3 * mc["standard_uncertainty"] / math.sqrt(n)


def test_adaptive_intervals_setting(make_case, tmp_path):
    """settings.adaptive_intervals = "symmetric" stops on the JCGM 101 §7.9.4 quantities only
    (y, u(y), probabilistically symmetric interval): never later than checking both intervals."""
    used = {}
    for choice in ("both", "symmetric"):
        case = make_case(replace=[("samples = 20000", f'samples = "adaptive"\nadaptive_intervals = "{choice}"')])
        out = tmp_path / choice
        code, _, err = main_in_process("run", case, "--out", out, "--quiet", "--no-report")
        assert code == 0, err
        doc = json.loads((out / "results.json").read_text())
        assert doc["run"]["adaptive_intervals"] == choice
        used[choice] = doc["run"]["samples"]
    assert used["symmetric"] <= used["both"]
    bad = make_case(replace=[("samples = 20000", 'samples = "adaptive"\nadaptive_intervals = "shortest"')])
    code, _, err = main_in_process("check", bad)
    assert code == 2 and "settings.adaptive_intervals" in err and "symmetric" in err


def test_sobol_rotation_setting(make_case, tmp_path):
    """settings.sobol_rotation: recorded in results.json and named in the report's method text;
    switched off, the run uses one Sobol' coordinate per input; both runs agree within their
    Monte Carlo error (the rotation is a sampling design, not a different input distribution)."""
    docs = {}
    for flag in ("true", "false"):
        case = make_case(replace=[("samples = 20000", f"samples = 20000\nsobol_rotation = {flag}")])
        out = tmp_path / flag
        code, _, err = main_in_process("run", case, "--out", out, "--quiet")
        assert code == 0, err
        docs[flag] = json.loads((out / "results.json").read_text())
        assert docs[flag]["run"]["sobol_rotation"] is (flag == "true")
        report = (out / "report.md").read_text(encoding="utf-8")
        assert ("linear sensitivity directions" in report) is (flag == "true")
    for a, b in zip(docs["true"]["outputs"], docs["false"]["outputs"]):
        for pa, pb in zip(a["points"], b["points"]):
            ma, mb = pa["monte_carlo"], pb["monte_carlo"]
            assert abs(ma["mean"] - mb["mean"]) <= 4 * ma["standard_uncertainty"] / math.sqrt(20000)
            assert ma["standard_uncertainty"] == pytest.approx(mb["standard_uncertainty"], rel=0.03)
    bad = make_case(replace=[("samples = 20000", 'samples = 20000\nsobol_rotation = "yes"')])
    code, _, err = main_in_process("check", bad)
    assert code == 2 and "settings.sobol_rotation" in err and "true or false" in err

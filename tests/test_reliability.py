"""Nothing lost, nothing executed, the same answer twice (issue 9).

* outputs are written atomically: a failure while writing (fault injected into the
  report writer, the JSON writer, a rename of a --force replacement) leaves no --out
  folder, no ``.partial`` temporary, and an existing folder untouched;
* an existing non-empty --out is never replaced without --force; with --force only the
  files an earlier run listed in its manifest are replaced, after the new run succeeded;
* SIGTERM and SIGINT (Ctrl-C) during a long Monte Carlo run: exit 130, a message on
  stderr, no output folder and no temporary folder;
* the same case and seed give the same results.json byte for byte (date, duration, host
  and versions go to run-log.json), also across processes with different hash seeds;
* case files are data: text that looks like code stays text (in results.json and the
  escaped HTML report), and unit strings are never evaluated;
* physical sanity warnings: skewness, linear method not validated, extrapolation,
  sampled Cp ≤ 0.

Faults injected: 4 (report writer, JSON writer, rename, exception inside the build with
an existing folder and --force) plus 2 signals. Races, locks, killed runs, SIGHUP and
repeated signals: tests/test_publish.py.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from conftest import BASE_CASE, REPO, cli_env, main_in_process, write_case

def _leftovers(folder: Path, name: str) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.startswith(f".{name}."))


# --------------------------------------------------------------------------- existing folders

def test_existing_non_empty_out_is_kept_without_force(make_case, tmp_path):
    case = make_case()
    out = tmp_path / "out"
    out.mkdir()
    (out / "old.txt").write_text("previous result")
    code, stdout, err = main_in_process("run", case, "--out", out, "--quiet", "--no-report")
    assert code == 2
    assert f"{out}: --out: " in err and "--force" in err and "Traceback" not in err
    assert sorted(p.name for p in out.iterdir()) == ["old.txt"]
    assert (out / "old.txt").read_text() == "previous result"


def test_existing_empty_out_is_used(make_case, tmp_path):
    case = make_case()
    out = tmp_path / "out"
    out.mkdir()
    code, stdout, err = main_in_process("run", case, "--out", out, "--quiet", "--no-report", "--samples", "1000")
    assert code == 0, err
    assert (out / "results.json").is_file()


def _old_output(out: Path) -> None:
    """An earlier output folder (published by the tool, with its manifest) plus a file of the user's."""
    from uqthermo.pipeline.output_files import publish_dir

    publish_dir(lambda tmp: (tmp / "results.json").write_text('{"format": "uqthermo.results/1", "old": true}'), out)
    (out / "old.txt").write_text("previous result")


OLD = [".uqthermo-manifest.json", "old.txt", "results.json"]


def test_force_replaces_the_files_it_wrote_and_keeps_the_rest(make_case, tmp_path):
    case = make_case()
    out = tmp_path / "out"
    _old_output(out)
    code, stdout, err = main_in_process("run", case, "--out", out, "--quiet", "--no-report", "--samples", "1000",
                                        "--force")
    assert code == 0, err
    assert (out / "old.txt").read_text() == "previous result"          # not uqthermo's: kept, and said so
    assert "kept 1 item(s)" in err and "old.txt" in err
    assert json.loads((out / "results.json").read_text())["run"]["samples"] == 1000
    assert _leftovers(tmp_path, "out") == []


def test_bad_case_with_force_keeps_the_old_folder(make_case, tmp_path):
    case = make_case(replace=[('temperature = "700 K"', 'temperature = "0 K"')])
    out = tmp_path / "out"
    _old_output(out)
    code, stdout, err = main_in_process("run", case, "--out", out, "--force", "--quiet")
    assert code == 2
    assert sorted(p.name for p in out.iterdir()) == OLD
    assert (out / "old.txt").read_text() == "previous result"
    assert _leftovers(tmp_path, "out") == []


@pytest.mark.parametrize("target", ["case-folder", "cwd", "foreign-folder", "parent-of-case"])
def test_force_never_deletes_user_files(tmp_path, monkeypatch, target):
    """--force replaces a whole folder: never the case file's folder, the working folder, or a non-output folder."""
    proj = tmp_path / "proj"
    proj.mkdir()
    case = write_case(proj, BASE_CASE)
    (proj / "notes.txt").write_text("precious")
    monkeypatch.chdir(proj)
    if target == "case-folder":
        out = proj
    elif target == "cwd":
        out = Path(".")
        case = write_case(tmp_path, BASE_CASE, "elsewhere.toml")
    elif target == "parent-of-case":
        out = tmp_path
    else:
        out = tmp_path / "foreign"
        out.mkdir()
        (out / "thesis.docx").write_text("years of work")
    before = sorted(str(p) for p in tmp_path.rglob("*"))
    code, stdout, err = main_in_process("run", case, "--out", out, "--force", "--quiet", "--no-report",
                                        "--samples", "1000")
    assert code == 2, err
    assert ": --out: --force" in err and "Traceback" not in err
    assert sorted(str(p) for p in tmp_path.rglob("*")) == before
    assert (proj / "notes.txt").read_text() == "precious"


# --------------------------------------------------------------------------- injected faults

class Boom(RuntimeError):
    pass


@pytest.mark.parametrize("force", [False, True], ids=["new-folder", "existing-folder-force"])
def test_failure_in_report_writer_leaves_nothing(make_case, tmp_path, monkeypatch, force):
    """The report writer writes part of its files, then fails: exit 1, nothing published."""
    import uqthermo.report as report

    def broken_write_report(results, folder):
        (Path(folder) / "report.html").write_text("<html>half")
        raise Boom("disk full (injected)")

    monkeypatch.setattr(report, "write_report", broken_write_report)
    case = make_case()
    out = tmp_path / "out"
    if force:
        _old_output(out)
    args = ["run", case, "--out", out, "--quiet", "--samples", "1000"] + (["--force"] if force else [])
    code, stdout, err = main_in_process(*args)
    assert code == 1
    assert "disk full (injected)" in err and "Traceback" not in err
    if force:
        assert sorted(p.name for p in out.iterdir()) == OLD
    else:
        assert not out.exists()
    assert _leftovers(tmp_path, "out") == []


def test_failure_in_json_writer_leaves_no_temp_file(tmp_path, monkeypatch):
    """write_json_atomic: a failure during the dump removes the temporary file and keeps the old file."""
    from uqthermo.pipeline import output_files as runmod

    target = tmp_path / "results.json"
    target.write_text('{"old": true}')

    def broken_dump(obj, fh, **kw):
        fh.write('{"half":')
        raise Boom("injected")

    monkeypatch.setattr(runmod.json, "dump", broken_dump)
    with pytest.raises(Boom):
        runmod.write_json_atomic(target, {"new": 1})
    assert target.read_text() == '{"old": true}'
    assert sorted(p.name for p in tmp_path.iterdir()) == ["results.json"]


@pytest.mark.parametrize("fail_at", [1, 2, 3, 4])
def test_failure_in_a_rename_of_a_force_replacement_restores_the_old_output(tmp_path, monkeypatch, fail_at):
    """publish_dir with --force: whichever rename of the replacement fails, the earlier output is put back."""
    from uqthermo.pipeline import output_files as runmod
    from uqthermo.pipeline import publish

    out = tmp_path / "out"
    _old_output(out)
    before = {p.relative_to(out): p.read_bytes() for p in out.rglob("*") if p.is_file()}
    real_rename = os.rename
    calls = {"n": 0}

    def flaky_rename(src, dst):
        calls["n"] += 1
        if calls["n"] == fail_at:   # earlier results.json and manifest out, new files in, new manifest last
            raise OSError("injected rename failure")
        return real_rename(src, dst)

    def build(tmp):
        (tmp / "results.json").write_text("{}")
        (tmp / "tables").mkdir()
        (tmp / "tables" / "t.csv").write_text("a\n")

    monkeypatch.setattr(publish.os, "rename", flaky_rename)
    with pytest.raises(OSError):
        runmod.publish_dir(build, out, force=True)
    monkeypatch.setattr(publish.os, "rename", real_rename)
    assert {p.relative_to(out): p.read_bytes() for p in out.rglob("*") if p.is_file()} == before
    assert [p.name for p in tmp_path.iterdir()] == ["out"]


# --------------------------------------------------------------------------- interruption

def _cpu_seconds(pid: int) -> float:
    """User + system CPU time of a process (Linux /proc; wall-clock fallback elsewhere)."""
    try:
        fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
        return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")
    except (OSError, IndexError, ValueError):
        time.sleep(4.0)
        return 1e9


@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGINT], ids=["SIGTERM", "SIGINT"])
def test_interrupted_run_exits_130_and_leaves_nothing(tmp_path, sig):
    case = write_case(tmp_path, BASE_CASE)
    out = tmp_path / "out"
    proc = subprocess.Popen([sys.executable, "-m", "uqthermo.cli", "run", str(case), "--out", str(out),
                             "--samples", "100000000", "--quiet"], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True, env=cli_env(), cwd=str(REPO))
    # wait until the process has used ~4 s of CPU (imports, loading and the linear method take
    # ~2.5 s; the Monte Carlo of 1e8 trials far longer), whatever the load on the machine
    deadline = time.time() + 60
    while time.time() < deadline and proc.poll() is None and _cpu_seconds(proc.pid) < 4.0:
        time.sleep(0.1)
    assert proc.poll() is None, "the long run finished before it could be interrupted"
    proc.send_signal(sig)
    try:
        stdout, stderr = proc.communicate(timeout=30)
    except subprocess.TimeoutExpired:
        proc.kill()
        raise
    assert proc.returncode == 130, stderr
    assert "interrupted" in stderr and "Traceback" not in stderr
    assert not out.exists()
    assert _leftovers(tmp_path, "out") == []


# --------------------------------------------------------------------------- reproducibility

def test_same_case_and_seed_reproduce_results_bit_for_bit(tmp_path):
    """Two processes with different hash seeds, what-if and driver ranking on: results.json is the same
    file byte for byte (compared with filecmp, as ``cmp`` would); date, duration, host and versions are
    in run-log.json (README, "Reproducibility")."""
    import filecmp

    text = BASE_CASE.replace("what_if = false\n", "").replace('sensitivity = "linear"\n', "")
    case = write_case(tmp_path, text)
    procs = []
    for i, hashseed in enumerate(("1", "2")):
        env = cli_env()
        env["PYTHONHASHSEED"] = hashseed
        out = tmp_path / f"out{i}"
        procs.append((subprocess.Popen([sys.executable, "-m", "uqthermo.cli", "run", str(case), "--out", str(out),
                                        "--samples", "20000", "--seed", "99", "--quiet", "--no-report"],
                                       stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env,
                                       cwd=str(REPO)), out))
    docs = []
    for p, out in procs:
        _, err = p.communicate(timeout=180)
        assert p.returncode == 0, err
        docs.append(json.loads((out / "results.json").read_text(encoding="utf-8")))
    assert filecmp.cmp(tmp_path / "out0" / "results.json", tmp_path / "out1" / "results.json", shallow=False)
    for out in ("out0", "out1"):
        log = json.loads((tmp_path / out / "run-log.json").read_text())
        assert log["format"] == "uqthermo.run-log/1" and {"date", "duration_s", "host", "python", "numpy"} <= set(log)
    a = docs[0]
    assert not {"date", "duration_s", "python", "numpy", "platform", "host"} & set(a["run"])
    assert a["run"]["seed"] == 99
    assert a["outputs"][0]["points"][0].get("whatif"), "what-if scenarios were not computed"


def test_report_rendering_is_deterministic(fast_run, tmp_path):
    """The same results.json renders to the same files, byte for byte (HTML, Markdown, CSV, PNG, SVG)."""
    src = fast_run["out"] / "results.json"
    outs = []
    for name in ("a", "b"):
        out = tmp_path / name
        code, stdout, err = main_in_process("report", src, "--out", out)
        assert code == 0, err
        outs.append(out)
    files = sorted(p.relative_to(outs[0]) for p in outs[0].rglob("*") if p.is_file() and p.name != ".uqthermo-manifest.json")
    assert files == sorted(p.relative_to(outs[1]) for p in outs[1].rglob("*") if p.is_file()
                           and p.name != ".uqthermo-manifest.json")
    assert any(f.suffix == ".csv" for f in files) and any(f.suffix == ".svg" for f in files)
    for f in files:
        assert (outs[0] / f).read_bytes() == (outs[1] / f).read_bytes(), f
    assert [p.name for p in outs[0].rglob(".*")] == [".uqthermo-manifest.json"], "temporary files left in the output folder"


def test_in_process_reproduces_and_another_seed_differs(fast_run, tmp_path):
    out = tmp_path / "again"
    code, stdout, err = main_in_process("run", fast_run["case"], "--out", out, "--samples", "20000", "--quiet",
                                        "--no-report")
    assert code == 0, err
    again = json.loads((out / "results.json").read_text())
    first = fast_run["results"]
    assert again["outputs"] == first["outputs"]
    assert again["case"]["sha256"] == first["case"]["sha256"]
    out2 = tmp_path / "other-seed"
    code, stdout, err = main_in_process("run", fast_run["case"], "--out", out2, "--samples", "20000", "--seed", "8",
                                        "--quiet", "--no-report")
    assert code == 0, err
    other = json.loads((out2 / "results.json").read_text())
    assert other["outputs"][0]["points"][0]["monte_carlo"]["mean"] != first["outputs"][0]["points"][0]["monte_carlo"]["mean"]


# --------------------------------------------------------------------------- no code from data

def test_code_in_case_text_stays_text(tmp_path):
    marker = tmp_path / "pwned"
    payload = f"__import__('os').system('touch {marker}')"
    title = f"{payload} <script>alert(1)</script> {{{{ 7*7 }}}} ${{HOME}} $(touch {marker})"
    text = BASE_CASE.replace('title = "Water-gas shift at 700 K (test case, published data)"',
                             "title = " + json.dumps(title) + "\ndescription = " + json.dumps("<img src=x onerror=alert(2)>"))
    text = text.replace('source = "IAPWS-95 via chemicals"', "source = " + json.dumps(f"<b>{payload}</b>"))
    case = write_case(tmp_path, text)
    out = tmp_path / "out"
    code, stdout, err = main_in_process("run", case, "--out", out, "--samples", "1000", "--quiet")
    assert code == 0, err
    assert not marker.exists()
    doc = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert doc["case"]["title"] == title
    html = (out / "report.html").read_text(encoding="utf-8")
    assert "<script>alert(1)</script>" not in html and "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert "<img src=x" not in html
    assert "<b>__import__" not in html
    md = (out / "report.md").read_text(encoding="utf-8")
    assert "<script>" not in md and "<img src=x" not in md
    assert "{{ 7*7 }}" in html or "{{ 7*7 }}" in html.replace("&#123;", "{").replace("&#125;", "}")
    assert not marker.exists()


@pytest.mark.parametrize("where", ["unit", "formula", "equation", "datum"])
def test_code_in_values_is_never_evaluated(tmp_path, where):
    marker = tmp_path / "pwned"
    payload = f"__import__(\"os\").system(\"touch {marker}\")"
    text = BASE_CASE
    if where == "unit":
        text = text.replace('temperature = "700 K"', "temperature = " + json.dumps(f"700 {payload}"))
    elif where == "formula":
        text = text.replace('formula = "CO"', "formula = " + json.dumps(payload))
    elif where == "equation":
        text = text.replace('equation = "CO(g) + H2O(g) -> CO2(g) + H2(g)"', "equation = " + json.dumps(payload))
    else:
        text += "[[correlation]]\nbetween = [" + json.dumps(payload) + ', "CO.g.formation_enthalpy"]\ncoefficient = 0.1\n'
    case = write_case(tmp_path, text)
    code, stdout, err = main_in_process("check", case)
    assert code == 2 and "Traceback" not in err
    assert not marker.exists()


# --------------------------------------------------------------------------- physical sanity warnings

def _run_warnings(make_case, tmp_path, name, samples="4096", **kw) -> list[str]:
    case = make_case(**kw)
    out = tmp_path / name
    code, stdout, err = main_in_process("run", case, "--out", out, "--samples", samples, "--quiet", "--no-report")
    assert code == 0, err
    return json.loads((out / "results.json").read_text())["warnings"]


def test_warning_extrapolation(make_case, tmp_path):
    w = _run_warnings(make_case, tmp_path, "extrap", replace=[
        ('temperature = "700 K"', 'temperature = "3600 K"'), ("[settings]\n", "[settings]\nallow_extrapolation = true\n")])
    assert any("output.dH_700K" in x and "extrapolat" in x for x in w), w


def test_warning_linear_not_validated_and_skewed(make_case, tmp_path):
    """A heat release with a lognormal extent rate of 60 % relative u: the output is skewed
    (lognormal skewness 3v + v³ ≈ 2.0 for v = 0.6), so the symmetric ±U interval fails JCGM 101 §8."""
    w = _run_warnings(make_case, tmp_path, "skew", samples="20000", append=(
        '[[output]]\nname = "q"\nkind = "heat_release"\ntemperature = "700 K"\n'
        'extent_rate = { shift = { value = "2 mol/s", u = "1.2 mol/s", distribution = "lognormal" } }\n'))
    assert any("output.q" in x and "skew" in x for x in w), w
    assert any("output.q" in x and "differs from the Monte Carlo interval" in x and "JCGM 101 §8" in x for x in w), w


def test_warning_negative_cp_per_coefficient(make_case, tmp_path):
    """Per-coefficient u on a liquid Cp polynomial large enough that sampled curves dip below zero."""
    w = _run_warnings(make_case, tmp_path, "negcp", replace=[(
        'coefficients = { a = 175.632840, b = -0.866781703, c = 2.46447230e-3, d = -2.29904777e-6 }, '
        'T = ["273.16 K", "373.2 K"], relative_u = "0.3 %" }',
        'coefficients = { a = 60.0, b = 0.05 }, T = ["273.16 K", "373.2 K"], u = [40.0, 0.01] }')])
    assert any("H2O.l.heat_capacity" in x and "Cp ≤ 0" in x for x in w), w


def test_warning_negative_cp_constant_model(make_case, tmp_path):
    w = _run_warnings(make_case, tmp_path, "negcp-const", replace=[(
        'heat_capacity = { model = "polynomial", coefficients = { a = 175.632840, b = -0.866781703, c = 2.46447230e-3, '
        'd = -2.29904777e-6 }, T = ["273.16 K", "373.2 K"], relative_u = "0.3 %" }',
        'heat_capacity = { model = "constant", value = "10 J/(mol*K)", u = "6 J/(mol*K)", T = ["273.16 K", "373.2 K"] }')])
    assert any("H2O.l.heat_capacity" in x and "Cp ≤ 0" in x for x in w), w


def test_plan_force_never_deletes_user_files(tmp_path, monkeypatch):
    proj = tmp_path / "proj"
    proj.mkdir()
    case = write_case(proj, BASE_CASE + '\n[[candidate]]\ndatum = "H2O.transition.l-g.enthalpy"\nu = "0.005 kJ/mol"\n'
                                         'cost = 100\n')
    (proj / "notes.txt").write_text("precious")
    monkeypatch.chdir(proj)
    code, stdout, err = main_in_process("plan", case.name, "--budget", "1000", "--out", ".", "--force")
    assert (proj / "notes.txt").exists() and (proj / case.name).exists()
    assert code == 2, err

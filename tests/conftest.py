"""Shared fixtures: a small fast case (and a factory for variants), CLI helpers, and one
session-wide run of each demo through the command line (started in parallel, reused by
every end-to-end test so the demos run only once per session).

The fast case is the water-gas shift CO(g) + H2O(g) -> CO2(g) + H2(g) at 700 K with
published data:

* formation enthalpies: ATcT values and expanded uncertainties (k = 2) as shipped in the
  ``chemicals`` package (``chemicals.reaction.Hfg_ATcT_data`` / ``Hfl_ATcT_data``);
* gas heat capacities: GRI-Mech 3.0 NASA-7 coefficients from Cantera's ``gri30.yaml``
  (200–1000 K and 1000–3500 K), 0.5 % relative uncertainty (assumed);
* liquid water Cp: the IAPWS-95 polynomial fit of the epoxide demo (``inputs/``);
  vaporisation at 101.325 kPa from IAPWS-95 via ``chemicals`` (as in the demo).

Its water is anchored in the liquid, so the reaction and the heating output both follow
the l → g transition on the way to 700 K.
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import subprocess
import sys
import time
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
INPUTS = REPO / "inputs"
DEMOS = {
    "epoxide": INPUTS / "epoxide_hydration_batch.toml",
    "methanation": INPUTS / "methanation_reactor.toml",
}
DEMO_SAMPLES = 20000

# --------------------------------------------------------------------------- fast case

H2O_L_CP = ('heat_capacity = { model = "polynomial", coefficients = { a = 175.632840, b = -0.866781703, '
            'c = 2.46447230e-3, d = -2.29904777e-6 }, T = ["273.16 K", "373.2 K"], relative_u = "0.3 %" }')

BASE_CASE = '''title = "Water-gas shift at 700 K (test case, published data)"

[settings]
samples = 20000
seed = 7
sampling = "sobol"
what_if = false
sensitivity = "linear"

[species.CO]
formula = "CO"
[species.CO.g]
formation_enthalpy = { value = "-110.525 kJ/mol", U = "0.026 kJ/mol", k = 2, source = "ATcT via chemicals" }
heat_capacity = { model = "nasa7", relative_u = "0.5 %", source = "gri30.yaml", ranges = [
  { T = ["200 K", "1000 K"], coefficients = [3.57953347, -6.1035368e-4, 1.01681433e-6, 9.07005884e-10, -9.04424499e-13, -14344.086, 3.50840928] },
  { T = ["1000 K", "3500 K"], coefficients = [2.71518561, 2.06252743e-3, -9.98825771e-7, 2.30053008e-10, -2.03647716e-14, -14151.8724, 7.81868772] } ] }

[species.CO2]
formula = "CO2"
[species.CO2.g]
formation_enthalpy = { value = "-393.474 kJ/mol", U = "0.015 kJ/mol", k = 2, source = "ATcT via chemicals" }
heat_capacity = { model = "nasa7", relative_u = "0.5 %", source = "gri30.yaml", ranges = [
  { T = ["200 K", "1000 K"], coefficients = [2.35677352, 8.98459677e-3, -7.12356269e-6, 2.45919022e-9, -1.43699548e-13, -48371.9697, 9.90105222] },
  { T = ["1000 K", "3500 K"], coefficients = [3.85746029, 4.41437026e-3, -2.21481404e-6, 5.23490188e-10, -4.72084164e-14, -48759.166, 2.27163806] } ] }

[species.H2]
formula = "H2"
[species.H2.g]
formation_enthalpy = "0 kJ/mol"
heat_capacity = { model = "nasa7", relative_u = "0.5 %", source = "gri30.yaml", ranges = [
  { T = ["200 K", "1000 K"], coefficients = [2.34433112, 7.98052075e-3, -1.9478151e-5, 2.01572094e-8, -7.37611761e-12, -917.935173, 0.683010238] },
  { T = ["1000 K", "3500 K"], coefficients = [3.3372792, -4.94024731e-5, 4.99456778e-7, -1.79566394e-10, 2.00255376e-14, -950.158922, -3.20502331] } ] }

[species.H2O]
formula = "H2O"
[species.H2O.l]
formation_enthalpy = { value = "-285.825 kJ/mol", U = "0.027 kJ/mol", k = 2, source = "ATcT via chemicals" }
''' + H2O_L_CP + '''
[species.H2O.g]
heat_capacity = { model = "nasa7", relative_u = "0.5 %", source = "gri30.yaml", ranges = [
  { T = ["200 K", "1000 K"], coefficients = [4.19864056, -2.0364341e-3, 6.52040211e-6, -5.48797062e-9, 1.77197817e-12, -30293.7267, -0.849032208] },
  { T = ["1000 K", "3500 K"], coefficients = [3.03399249, 2.17691804e-3, -1.64072518e-7, -9.7041987e-11, 1.68200992e-14, -30004.2971, 4.9667701] } ] }
[[species.H2O.transition]]
from = "l"
to = "g"
temperature = "373.124 K"
enthalpy = { value = "40.651 kJ/mol", u = "0.02 kJ/mol", source = "IAPWS-95 via chemicals" }

[reaction.shift]
equation = "CO(g) + H2O(g) -> CO2(g) + H2(g)"

[[output]]
name = "dH_700K"
kind = "reaction_enthalpy"
reaction = "shift"
temperature = "700 K"

[[output]]
name = "steam"
kind = "heating_enthalpy"
species = "H2O(l)"
from = "300 K"
to = "450 K"
'''


def write_case(folder: Path, text: str, name: str = "case.toml") -> Path:
    """Write ``text`` as a case file in ``folder`` and return its path."""
    p = Path(folder) / name
    p.write_text(text, encoding="utf-8")
    return p


@pytest.fixture
def base_case_text() -> str:
    return BASE_CASE


@pytest.fixture
def make_case(tmp_path):
    """Factory: ``make_case(text=BASE_CASE, replace=[(old, new), ...], append="", name="case.toml")``."""
    counter = {"n": 0}

    def factory(text: str | None = None, *, replace=(), append: str = "", name: str | None = None) -> Path:
        t = BASE_CASE if text is None else text
        for old, new in replace:
            assert old in t, f"fixture text has no {old!r}"
            t = t.replace(old, new, 1)
        t = t + append
        counter["n"] += 1
        return write_case(tmp_path, t, name or f"case{counter['n']}.toml")

    return factory


# --------------------------------------------------------------------------- running the CLI

def cli_env() -> dict:
    env = dict(os.environ)
    env.pop("UQTHERMO_DEBUG", None)
    env["PYTHONHASHSEED"] = "0"
    env.setdefault("MPLBACKEND", "Agg")
    return env


def run_cli(*args: str, timeout: float = 300, **kw) -> subprocess.CompletedProcess:
    """Run ``python -m uqthermo.cli ARGS`` in a subprocess (the real entry path)."""
    return subprocess.run([sys.executable, "-m", "uqthermo.cli", *map(str, args)], capture_output=True, text=True,
                          timeout=timeout, env=cli_env(), cwd=str(REPO), **kw)


def main_in_process(*args: str) -> tuple[int, str, str]:
    """Call ``uqthermo.cli.main`` in this process; return (exit code, stdout, stderr)."""
    from uqthermo.cli import main

    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main([str(a) for a in args])
    return code, out.getvalue(), err.getvalue()


@pytest.fixture(scope="session")
def demo_runs(tmp_path_factory):
    """Both demos run once through the CLI (in parallel), ``--samples 20000``.

    Returns ``{name: {"proc": CompletedProcess-like, "out": Path, "results": dict | None}}``.
    """
    base = tmp_path_factory.mktemp("demos")
    procs = {}
    for name, case in DEMOS.items():
        out = base / name
        procs[name] = (subprocess.Popen([sys.executable, "-m", "uqthermo.cli", "run", str(case), "--out", str(out),
                                         "--samples", str(DEMO_SAMPLES)], stdout=subprocess.PIPE,
                                        stderr=subprocess.PIPE, text=True, env=cli_env(), cwd=str(REPO)), out)
    runs = {}
    t0 = time.time()
    for name, (p, out) in procs.items():
        stdout, stderr = p.communicate(timeout=600)
        res = None
        if (out / "results.json").exists():
            res = json.loads((out / "results.json").read_text(encoding="utf-8"))
        runs[name] = {"proc": subprocess.CompletedProcess(p.args, p.returncode, stdout, stderr), "out": out,
                      "results": res, "wall_s": time.time() - t0}
    return runs


@pytest.fixture(scope="session")
def fast_run(tmp_path_factory):
    """The fast case run once in-process through the CLI with the report (exit code, out folder, results)."""
    return run_written_case(tmp_path_factory.mktemp("fast"), BASE_CASE, "--samples", "20000", "--quiet")


def run_written_case(base: Path, text: str, *args, name: str = "case.toml") -> dict:
    """Write ``text`` as ``base/name``, run it in-process through the CLI into ``base/out`` with ``args``;
    ``{"code", "stdout", "stderr", "out", "case", "results"}`` (results: the parsed results.json, or None)."""
    case = write_case(base, text, name)
    out = base / "out"
    code, stdout, stderr = main_in_process("run", case, "--out", out, *args)
    res = json.loads((out / "results.json").read_text(encoding="utf-8")) if (out / "results.json").exists() else None
    return {"code": code, "stdout": stdout, "stderr": stderr, "out": out, "case": case, "results": res}


# --------------------------------------------------------------------------- an invented reaction case

INVENTED_HEAD = '''title = "{title} (test, invented data)"
[settings]
samples = {samples}
seed = 11
what_if = false
sensitivity = "{sens}"
'''
INVENTED_SPECIES = '''
[species.A]
formula = "C2H4O"
[species.A.l]
formation_enthalpy = {{ value = "-100 kJ/mol", u = "{uA}" }}
heat_capacity = {{ model = "constant", value = "90 J/(mol*K)", T = ["250 K", "400 K"] }}
[species.P]
formula = "C2H4O"
[species.P.l]
formation_enthalpy = {{ value = "{hP}", u = "0.1 kJ/mol" }}
heat_capacity = {{ model = "constant", value = "90 J/(mol*K)", T = ["250 K", "400 K"] }}
[species.S]
formula = "CH4O"
[species.S.l]
formation_enthalpy = "-239 kJ/mol"
heat_capacity = {{ model = "constant", value = "80 J/(mol*K)", T = ["{s_lo}", "400 K"] }}
[species.S.g]
heat_capacity = {{ model = "constant", value = "45 J/(mol*K)", T = ["250 K", "600 K"] }}
[[species.S.transition]]
from = "l"
to = "g"
temperature = "350 K"
enthalpy = "35 kJ/mol"
[reaction.R]
equation = "A(l) -> P(l)"
'''


def invented_case_text(*, title="rise", samples=20000, sens="linear", uA="0.1 kJ/mol", hP="-180 kJ/mol",
                       s_lo="250 K", output="", extra="") -> str:
    """A case of invented data: A(l) -> P(l) (ΔrH(298 K) = −80 kJ/mol, ΔrCp = 0) and a solvent S that boils at
    350 K, with ``output`` and ``extra`` (TOML) appended; used by the safety-number and amounts tests."""
    return (INVENTED_HEAD.format(title=title, samples=samples, sens=sens)
            + INVENTED_SPECIES.format(uA=uA, hP=hP, s_lo=s_lo) + output + extra)


# --------------------------------------------------------------------------- report numbering

def _plain(s: str) -> str:
    return " ".join(s.split())


def check_report_numbering(page: str, md: str | None, docx_path: Path | None, user_text: tuple[str, ...] = ()) -> tuple[int, int]:
    """Assert that the report's tables and figures run 1, 2, 3… in the order they appear in the HTML
    page, the Markdown and the Word file (read back with python-docx; each skipped when None),
    with the same captions in the same order in all three, and that every "Table N"/"Figure N" the
    report writes points to an existing caption of that number (a figure reference also names that
    figure's title; ``user_text``: strings of the case, left out of that last check).
    Returns (number of tables, number of figures)."""
    import html as html_mod
    import re

    def run(found: list[str], what: str) -> int:
        assert found == [str(i) for i in range(1, len(found) + 1)], (what, found)
        return len(found)

    # HTML: anchors, captions and alt texts
    n_tab = run(re.findall(r'<table id="table-([^"]*)"', page), "html table anchors")
    caps = re.findall(r"<caption>Table ([^.<]*)\. (.*?)</caption>", page)
    assert [c[0] for c in caps] == [str(i) for i in range(1, n_tab + 1)], caps
    n_fig = run(re.findall(r'<figure id="figure-([^"]*)"', page), "html figure anchors")
    run(re.findall(r'<figcaption><b>Figure ([^.<]*)\.</b>', page), "html figure captions")
    alts = re.findall(r'alt="Figure ([^:"]*): ([^"]*)"', page)
    assert [a[0] for a in alts] == [str(i) for i in range(1, n_fig + 1)], alts
    html_titles = {int(n): html_mod.unescape(t) for n, t in alts}
    html_caps = [_plain(html_mod.unescape(re.sub(r"<[^>]+>", "", c))) for _, c in caps]
    html_fig_caps = [_plain(html_mod.unescape(re.sub(r"<[^>]+>", "", c)))
                     for c in re.findall(r"<figcaption><b>Figure \d+\.</b> (.*?)</figcaption>", page, re.S)]
    for n, title in re.findall(r"Figure (\d+) \(section [^)]*\) shows (.*?)\.</p>", page):
        assert html_titles.get(int(n)) == html_mod.unescape(title), (n, title)
    for kind, n in re.findall(r'href="#(table|figure)-([^"]*)"', page):
        assert n.isdigit() and 1 <= int(n) <= (n_tab if kind == "table" else n_fig), (kind, n)
    text = html_mod.unescape(re.sub(r"<[^>]+>", " ", page.split("<body", 1)[1].replace("<wbr>", "")))
    for t in user_text:
        text = text.replace(t, " ")
    for word, n in re.findall(r"\b(Table|Figure) (\d+)(?![\d-]|\.\d)", text):
        assert 1 <= int(n) <= (n_tab if word == "Table" else n_fig), (word, n)

    # Markdown: the same numbers, captions and references
    if md is not None:
        unmd = lambda s: _plain(re.sub(r"\\(.)", r"\1", s).replace("&lt;", "<").replace("&amp;", "&"))
        md_caps = re.findall(r"^\*\*Table ([^.]*)\. (.*)\*\*$", md, re.M)
        assert [c[0] for c in md_caps] == [str(i) for i in range(1, n_tab + 1)], md_caps
        assert [unmd(c) for _, c in md_caps] == html_caps
        md_alts = re.findall(r"^!\[Figure ([^:]*): (.*)\]\(figures/", md, re.M)
        assert [a[0] for a in md_alts] == [str(i) for i in range(1, n_fig + 1)], md_alts
        md_fig_caps = re.findall(r"^\*Figure (\d+)\. (.*)\*$", md, re.M)
        assert [c[0] for c in md_fig_caps] == [str(i) for i in range(1, n_fig + 1)]
        assert [unmd(c) for _, c in md_fig_caps] == html_fig_caps
        md_titles = {int(n): unmd(t) for n, t in md_alts}
        refs = re.findall(r"^\*Figure (\d+) \(section [^)]*\) shows (.*)\.\*$", md, re.M)
        assert len(refs) == len(re.findall(r"Figure \d+ \(section ", page))
        for n, title in refs:
            assert md_titles.get(int(n)) == unmd(title), (n, title)

    # Word: caption paragraphs in the same order with the same text as the HTML's
    if docx_path is not None:
        import docx

        d = docx.Document(str(docx_path))
        paras = [_plain(p.text) for p in d.paragraphs]
        doc_caps = [_plain(p.text) for p in d.paragraphs if p.style.name == "Caption"]
        assert [c for c in doc_caps if c.startswith("Table ")] == [f"Table {i + 1}. {c}" for i, c in enumerate(html_caps)]
        assert [c for c in doc_caps if c.startswith("Figure ")] == [f"Figure {i + 1}. {c}" for i, c in enumerate(html_fig_caps)]
        doc_refs = [m for p in paras for m in re.findall(r"^Figure (\d+) \(section [^)]*\) shows (.*)\.$", p)]
        assert doc_refs == [(n, html_mod.unescape(t)) for n, t in re.findall(
            r"Figure (\d+) \(section [^)]*\) shows (.*?)\.</p>", page)]
    return n_tab, n_fig


# --------------------------------------------------------------------------- figures for the summary

#: filled by tests/test_bad_inputs.py: ids tried/rejected, classes, bad command lines
BAD_INPUT_STATS: dict[str, set] = {}


def pytest_terminal_summary(terminalreporter, exitstatus, config):
    s = BAD_INPUT_STATS
    if s.get("tried"):
        terminalreporter.write_sep("-", "bad-input suite")
        terminalreporter.write_line(
            f"bad inputs: {len(s['tried'])} case files tried in {len(s.get('classes', ()))} classes, "
            f"{len(s.get('rejected', ()))} rejected cleanly (exit 2, FILE: KEY: message, nothing written); "
            f"{len(s.get('cli', ()))} bad command lines")

"""The concise section, the statement of result, budgets, Kirchhoff terms, units, document control and report.docx.

Checked against outside rules and references:
* JCGM 100:2008 (GUM) §7.2.3/§7.2.6 — the form of a statement of result (y, U, k, coverage
  probability, method) and the rounding of U to two significant digits with y at the same
  decimal position; §5.2.2 — a budget's rows and covariance rows add up to u²(y);
* ISO 80000-5 — t/°C = T/K − 273.15 (exact);
* python-docx reads the Word file back (tables, headings, embedded pictures);
* the NIST WebBook Shomate coefficients as implemented in ``chemicals`` (``chemicals.heat_capacity.Shomate``)
  for the Cp(T) curve written to results.json.

Every number of the concise section carries the path of its value in results.json
(``span.num[data-path]``); the checker below recomputes each one independently.
"""

from __future__ import annotations

import json
import math
import re
from html.parser import HTMLParser
from pathlib import Path

import pandas as pd
import pytest

from conftest import check_report_numbering
from uqthermo.report import write_report
from uqthermo.report.sections import budget as bud
from uqthermo.report.sections.ranking import cut
from uqthermo.report.sections.warnings import grouped

THIN = "\u202f"


# ---------------------------------------------------------------------------
# an independent reader of the concise section
# ---------------------------------------------------------------------------

class _Concise(HTMLParser):
    """Collects, inside <section id="concise">: the numbers (span.num), the statements and the numeric cells."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.depth = 0            # nesting inside the concise section (0 = outside)
        self.stack: list[tuple[str, dict]] = []
        self.nums: list[dict] = []
        self.cur_num: dict | None = None
        self.blocks: list[dict] = []      # statements (p.stmt / p.detail) and td.r cells: text with and without numbers
        self.cur_block: dict | None = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "section" and a.get("id") == "concise":
            self.depth = 1
        elif self.depth and tag not in ("wbr", "img", "br", "meta"):
            self.depth += 1
        self.stack.append((tag, a))
        if not self.depth:
            return
        cls = set((a.get("class") or "").split())
        if tag == "span" and "num" in cls:
            self.cur_num = {"path": a.get("data-path", ""), "op": a.get("data-op", ""), "text": ""}
        if (tag == "p" and cls & {"stmt", "detail"}) or (tag == "td" and "r" in cls):
            self.cur_block = {"tag": tag, "cls": " ".join(sorted(cls)), "all": "", "bare": ""}

    def handle_endtag(self, tag):
        if self.stack:
            self.stack.pop()
        if not self.depth:
            return
        if tag == "span" and self.cur_num is not None:
            self.nums.append(self.cur_num)
            self.cur_num = None
        if tag in ("p", "td") and self.cur_block is not None:
            self.blocks.append(self.cur_block)
            self.cur_block = None
        self.depth -= 1

    def handle_data(self, data):
        if not self.depth:
            return
        if self.cur_num is not None:
            self.cur_num["text"] += data
        if self.cur_block is not None:
            self.cur_block["all"] += data
            if self.cur_num is None:
                self.cur_block["bare"] += data


def concise(page: str) -> _Concise:
    c = _Concise()
    c.feed(page)
    return c


def at(doc, path: str):
    node = doc
    for k in path.split("/"):
        node = node[int(k)] if isinstance(node, list) else node[k]
    return node


_NUM = re.compile(r"-?\d+(?:\.\d+)?(?:e[-+]\d+)?")


def shown(text: str) -> tuple[float, int]:
    """The first number of a printed text and its decimals (thin-space digit groups allowed)."""
    t = text.replace(THIN, "").replace("\u2212", "-")
    m = _NUM.search(t)
    assert m, f"no number in {text!r}"
    s = m.group(0)
    if "e" in s:
        mant = s.split("e")[0]
        dec = (len(mant.split(".")[1]) if "." in mant else 0) - int(s.split("e")[1])
    elif "." in s:
        dec = len(s.split(".")[1])
    else:                       # an integer rounded to significant digits: 1250 is 1247.4 to three digits
        dec = -(len(s) - len(s.rstrip("0"))) if s.strip("-0") else 0
    return float(s), dec


def expected(doc, num: dict) -> float:
    paths = num["path"].split()
    op = num["op"]

    def val(p):
        v = at(doc, p)
        if isinstance(v, list):                       # an interval: its half-width
            return (v[1] - v[0]) / 2
        return v

    if op == "as_written":
        return at(doc, paths[0])
    if op in ("value", "count", "dof"):
        return val(paths[0])
    if op == "degC":
        return val(paths[0]) - 273.15                  # ISO 80000-5
    if op == "degF":
        return 1.8 * val(paths[0]) - 459.67
    if op == "percent":
        return 100 * val(paths[0])
    if op == "halfwidth":
        lo, hi = at(doc, paths[0])
        return (hi - lo) / 2
    if op == "ratio":
        return val(paths[0]) / val(paths[1])
    if op == "product":
        return val(paths[0]) * val(paths[1])
    if op == "sum_percent":
        return 100 * sum(val(p) for p in paths)
    if op == "rss":
        return math.sqrt(sum(val(p) ** 2 for p in paths))
    if op == "probability":
        v = at(doc, paths[0])
        if num["text"].strip().startswith("<"):       # zero hits: the text is the upper bound
            return at(doc, paths[1])
        return v
    raise AssertionError(f"unknown op {op!r}")


def check_num(doc, num: dict) -> None:
    want = expected(doc, num)
    text = num["text"]
    if num["op"] == "as_written":       # the user's own text, unit symbols made readable
        pretty = re.sub(r"\bdegC\b", "°C", re.sub(r"\bdegF\b", "°F", " ".join(want.split())))
        assert text == pretty, (num, want)
        return
    if text.strip() == "∞":
        assert want is None or want > 1e6
        return
    got, dec = shown(text)
    if num["op"] == "probability":
        got = got / 100 if "%" in text else got
        m = re.search(r"(\d+(?:\.\d+)?)×10([⁻⁰¹²³⁴⁵⁶⁷⁸⁹]+)", text)
        if m:
            sup = str.maketrans("⁻⁰¹²³⁴⁵⁶⁷⁸⁹", "-0123456789")
            got = float(m.group(1)) * 10.0 ** int(m.group(2).translate(sup))
        assert got == pytest.approx(want, rel=0.06, abs=1e-12), (num, want)
        return
    if num["op"] == "sum_percent" or num["op"] == "rss":
        tol = 0.5 * 10.0 ** -dec + 1e-9
    else:
        tol = 0.5 * 10.0 ** -dec * (1 + 1e-9) + 1e-12 * abs(want)
    if num["op"] in ("ratio",):          # k = U/u from two rounded-at-source values: judge at its two decimals
        tol = 0.5 * 10.0 ** -dec + 1e-9
    assert abs(got - want) <= tol, (num, want)


# ---------------------------------------------------------------------------
# the two demos, run once per session (tests/conftest.py, 20 000 trials)
# ---------------------------------------------------------------------------

@pytest.fixture(scope="module", params=["epoxide", "methanation"])
def demo(request, demo_runs):
    run = demo_runs[request.param]
    assert run["proc"].returncode == 0, run["proc"].stderr
    page = (run["out"] / "report.html").read_text(encoding="utf-8")
    return {"name": request.param, "out": run["out"], "results": run["results"], "page": page}


def test_every_number_of_the_concise_section_equals_results_json(demo):
    c = concise(demo["page"])
    assert len(c.nums) > 40, len(c.nums)
    for num in c.nums:
        assert num["path"], num
        check_num(demo["results"], num)
    # statements and number cells hold no number that is not tied to results.json
    names = sorted((str(o["name"]) for o in demo["results"]["outputs"]), key=len, reverse=True)
    for b in c.blocks:
        bare = b["bare"]
        for name in names:      # a statement starts with its output's name (text, not a number)
            bare = bare.replace(f"{name}: ", "")
        bare = re.sub(r"JCGM 10[01](:2008)?|§\d+(\.\d+)*|u²\(y\)|log₁₀|\b[A-Z][a-z]?\d", "", bare)
        assert not re.search(r"\d", bare), b


def test_statements_follow_the_gum_form(demo):
    c = concise(demo["page"])
    stmts = [b["all"] for b in c.blocks if b["tag"] == "p" and "stmt" in b["cls"]]
    res = demo["results"]
    assert len(stmts) >= len(res["outputs"])
    names = "|".join(re.escape(str(o["name"])) for o in res["outputs"])
    form = re.compile(rf"^({names}): (ΔrH|ΔH|Q̇|ΔT_ad|log₁₀ K|ΔrG)(\(.+?\)| from .+?)? = -?[\d.]+( \S+)?, "
                      r"(U = [\d.]+( \S+)? \(k = \d\.\d\d, 95 %, (Monte Carlo, [\d\u202f]+ trials|linear propagation \(GUM\).*)\)"
                      r"|95 % coverage interval \[.+\].*\(Monte Carlo, [\d\u202f]+ trials; .+\))"
                      r"( (Monte Carlo reported|linear validated|linear vs Monte Carlo not decided))?$")
    for s, o in zip(stmts[: len(res["outputs"])], res["outputs"]):
        assert form.match(s.strip()), s
        assert s.startswith(f"{o['name']}: "), s       # the output's name tells two Q̇(350 °C) lines apart
    # GUM 7.2.6: U to two significant digits, y at the same decimal position
    for s in stmts:
        m = re.search(r"= (-?[\d.]+)(?: \S+)?, U = ([\d.]+)", s)
        if not m:
            continue
        y, U = m.group(1), m.group(2)
        sig = len(U.replace(".", "").lstrip("0"))
        assert sig <= 2 or U.endswith("0") and sig == 3, s
        dec = lambda x: len(x.split(".")[1]) if "." in x else 0
        assert dec(y) == dec(U), s


def test_temperatures_in_the_case_unit_and_limits_unrounded(demo):
    c = concise(demo["page"])
    text = " ".join(b["all"] for b in c.blocks)
    if demo["name"] == "epoxide":
        assert "ΔrH(25 °C)" in text and "ΔT_ad from 20 °C" in text
        assert "limit 90 °C" in re.sub(r"<[^>]+>", "", demo["page"])
        assert "363.15 K" not in text
    else:
        assert "ΔrH(350 °C)" in text
    # the appendix keeps kelvin
    appendix = demo["page"].split('<section id="appendix"', 1)[1]
    assert "T / K" in appendix and "623.15" in appendix or "293.15" in appendix


def test_document_control_and_sha256_in_the_header_block(demo):
    head = demo["page"].split('<section id="concise"', 1)[0]
    res = demo["results"]
    assert res["case"]["sha256"] in head
    for key, label in (("reference", "Reference"), ("revision", "Revision"), ("prepared_by", "Prepared by"),
                       ("checked_by", "Checked by"), ("date", "Date")):
        assert label in head and res["document"][key] in head


def test_kirchhoff_and_cp_data_in_the_report(demo):
    res = demo["results"]
    page = demo["page"]
    assert "Kirchhoff breakdown" in page and (demo["out"] / "tables" / "kirchhoff.csv").is_file()
    df = pd.read_csv(demo["out"] / "tables" / "kirchhoff.csv")
    for o in res["outputs"]:
        for p in o["points"]:
            if o["kind"] != "reaction_enthalpy":
                assert "kirchhoff_terms" not in p
                continue
            k = p["kirchhoff_terms"]
            assert sum(k[t]["estimate"] for t in ("at_reference", "sensible", "latent")) == pytest.approx(
                p["linear"]["estimate"], abs=1e-9)
            rows = df[(df.output == o["name"]) & (df.temperature_K == p["temperature_K"])]
            assert set(rows.term) >= {"at_reference", "sensible", "latent", "total"}
    assert "Heat-capacity data used" in page and (demo["out"] / "figures" / "cp-data.png").is_file()
    species = {c["species"] for c in res["heat_capacity_curves"]}
    assert species == ({"H2O", "EPX3", "DIOL3"} if demo["name"] == "epoxide" else {"CO2", "H2", "CH4", "CO", "H2O"})


def test_cp_curve_against_chemicals_shomate(demo_runs):
    """CO2(g) of the methanation demo: Cp(T) = NIST WebBook Shomate (as in ``chemicals``); u = 1 % of Cp (relative_u)."""
    from chemicals.heat_capacity import Shomate

    res = demo_runs["methanation"]["results"]
    co2 = next(c for c in res["heat_capacity_curves"] if c["species"] == "CO2")
    ph = co2["phases"][0]
    A, B, C, D, E = (24.99735, 55.18696, -33.69137, 7.948387, -0.136638)   # the case's 298-1200 K range (WebBook, t = T/1000)
    si = (A, B / 1e3, C / 1e6, D / 1e9, E * 1e6)                            # chemicals' Shomate takes SI coefficients
    for T, cp, u in zip(ph["temperature_K"], ph["cp"], ph["standard_uncertainty"]):
        if T <= 1200:
            assert cp == pytest.approx(Shomate(T, *si), rel=1e-10)
            assert u == pytest.approx(0.01 * cp, rel=1e-6)
    assert ph["ranges_K"] == [[298.0, 1200.0], [1200.0, 6000.0]]
    assert ph["used_K"][0] == pytest.approx(298.15) and ph["used_K"][1] == pytest.approx(723.15)


def test_docx_holds_what_the_html_holds(demo):
    docx = pytest.importorskip("docx")
    d = docx.Document(str(demo["out"] / "report.docx"))
    page = demo["page"]
    n_tables = len(re.findall(r"<table[ >]", page))
    n_img = len(re.findall(r"<img ", page))
    assert len(d.tables) >= n_tables            # + one-cell tables for the callouts, two-column for <dl>
    assert len(d.inline_shapes) == n_img
    heads = [p.text for p in d.paragraphs if p.style.name.startswith("Heading")]
    assert "1. Uncertainty and sensitivity summary" in heads
    assert any(h.startswith("Appendix A") for h in heads)
    assert any(h.startswith("1.1 ") for h in heads) and any(h.startswith("A.1 ") for h in heads)
    # the statements carry the same numbers as the HTML
    html_stmts = [re.sub(r"\s+", " ", b["all"]).strip() for b in concise(page).blocks if b["tag"] == "p"]
    doc_text = "\n".join(re.sub(r"\s+", " ", p.text).strip() for p in d.paragraphs)
    for s in html_stmts:
        core = s.split("  [")[0]
        core = core.split(" linear vs Monte Carlo not decided")[0]
        assert core.split(" Monte Carlo reported")[0].split(" linear validated")[0] in doc_text, s
    # captions of the concise tables are the HTML's
    caps = re.findall(r"<caption>(Table \d+\.[^<]*)</caption>", page)
    doc_caps = [p.text for p in d.paragraphs if p.style.name == "Caption"]
    for cap in caps:
        assert any(c.startswith(cap.replace("&#39;", "'")[:40]) for c in doc_caps), cap
    props = d.core_properties
    assert props.identifier == demo["results"]["document"]["reference"]
    assert demo["results"]["case"]["sha256"] in props.comments


def test_demo_reports_number_tables_and_figures_in_document_order(demo):
    """Both demos render, with tables and figures 1, 2, 3… in reading order in report.html, report.md and
    report.docx, the same captions in all three, and every figure reference pointing at its figure."""
    out = demo["out"]
    docx = out / "report.docx" if (out / "report.docx").is_file() else None
    n_tab, n_fig = check_report_numbering(demo["page"], (out / "report.md").read_text(encoding="utf-8"), docx)
    assert n_tab >= 30 and n_fig >= 10
    assert len(re.findall(r"Figure \d+ \(section 1\.\d+\) shows", demo["page"])) == len(demo["results"]["outputs"])


# ---------------------------------------------------------------------------
# units of the report layer
# ---------------------------------------------------------------------------

def test_cut_at_99_percent():
    items = [("a", 0.6), ("b", 0.3), ("c", 0.095), ("d", 0.003), ("e", 0.002)]
    kept, rest = cut(items, lambda x: x[1])
    assert [k for k, _ in kept] == ["a", "b", "c"] and [k for k, _ in rest] == ["d", "e"]
    kept, rest = cut(items[:4], lambda x: x[1])      # a single leftover is listed, not summarised
    assert len(kept) == 4 and not rest
    kept, rest = cut([("n", -0.5), ("p", 1.4), ("z", 0.001), ("y", 0.0)], lambda x: x[1])
    assert [k for k, _ in kept] == ["p", "n"]


def test_grouped_warnings_one_line_per_output():
    res = {"outputs": [{"name": "dH_window", "points": [{}] * 11}, {"name": "x", "points": [{}]}],
           "warnings": [f"output.dH_window at {T:.2f} K: the linear (GUM) interval differs from the Monte Carlo interval by "
                        f"0.00{k + 5} kJ/mol, more than δ = 0.005 kJ/mol (JCGM 101 §8); the Monte Carlo result is reported"
                        for k, T in enumerate([523.15, 548.15, 573.15])]
           + ["H2.g.heat_capacity: assumed uncertainty"]
           + ["output.x at 300.00 K: the linear (GUM) interval is not validated by Monte Carlo (JCGM 101 §8, δ = 0.05); "
              "report the Monte Carlo result"]
           + [f"output.dH_window at {T:.2f} K: the Monte Carlo distribution is skewed (skewness {s}); use the Monte Carlo "
              "interval, not ±U" for T, s in ((523.15, 0.61), (548.15, 0.55))]}
    lines = grouped(res)
    assert len(lines) == 4
    assert lines[0].startswith("output.dH_window at 3 of 11 temperatures (523.15–573.15 K): the linear (GUM) interval "
                               "differs from the Monte Carlo interval by 0.005–0.007 kJ/mol, more than the numerical "
                               "tolerance δ = 0.005 kJ/mol")
    assert lines[1] == "H2.g.heat_capacity: assumed uncertainty"
    assert lines[2].startswith("output.x at 300 K:") and "δ = 0.05" in lines[2]
    assert "skewness 0.55–0.61" in lines[3]


def _budget_results() -> dict:
    """A three-input additive model y = x1 − x2 + 2·x3 with r(x1, x2) = 0.5 (invented numbers)."""
    u = [0.4, 0.3, 0.01]
    c = [1.0, -1.0, 2.0]
    rows = []
    for i, (ui, ci) in enumerate(zip(u, c)):
        rows.append({"quantity": f"X{i + 1}", "datum": f"D{i + 1}", "estimate": 10.0 * (i + 1), "standard_uncertainty": ui,
                     "unit": "kJ/mol", "sensitivity_coefficient": ci, "contribution": ci * ui, "variance": (ci * ui) ** 2,
                     "dof": None})
    cov = 2 * c[0] * c[1] * u[0] * u[1] * 0.5
    var = sum(r["variance"] for r in rows) + cov
    for r in rows:
        r["share"] = r["variance"] / var
    rows.sort(key=lambda r: -r["variance"])
    budget = {"method": "linear", "unit": "kJ/mol", "variance": var, "standard_uncertainty": math.sqrt(var), "rows": rows,
              "covariance_rows": [{"between": ["X1", "X2"], "correlation": 0.5, "variance": cov, "share": cov / var}]}
    pt = {"temperature_K": 500.0, "linear": {"estimate": -5.0, "standard_uncertainty": math.sqrt(var),
                                             "coverage_factor": 1.959963984540054},
          "coverage_probability": 0.95, "budget": budget, "drivers": []}
    return {"format": "uqthermo.results/1", "case": {"title": "budget test"}, "display_units": {"temperature": "degC"},
            "outputs": [{"name": "y", "kind": "reaction_enthalpy", "unit": "kJ/mol", "points": [pt]}], "warnings": []}


def test_budget_table_and_csv_from_the_budget_block(tmp_path):
    res = _budget_results()
    b = res["outputs"][0]["points"][0]["budget"]
    # GUM 5.2.2: rows and covariance rows add up to u²(y)
    assert sum(r["variance"] for r in b["rows"]) + sum(r["variance"] for r in b["covariance_rows"]) == pytest.approx(b["variance"])
    t = bud.budget_table(res["outputs"][0], 0, 0, "budget-y", "y")
    assert t.columns[4] == "Sensitivity c_i" and t.columns[5].startswith("Contribution c_i·u(x_i)")
    names = [str(r[0]) for r in t.rows]
    assert names[:3] == ["X1", "X2", "X3"]     # X3 is beyond 99 %, but a single leftover row is listed, not summarised
    assert any(n.startswith("correlation r(X1, X2) = 0.5") for n in names)
    assert names[-1] == "Combined standard uncertainty u(y)"
    assert str(t.rows[-1][5]) == f"{math.sqrt(b['variance']):.2f}"
    x1 = t.rows[0]
    assert [str(x) for x in x1[1:6]] == ["10.00", "0.40", "kJ/mol", "1.00", "0.40"]
    written = write_report(res, tmp_path, formats=("html",), figures=False)
    df = pd.read_csv(written["tables/budget-y.csv"])
    assert {"sensitivity_coefficient", "contribution", "variance", "share", "dof"} <= set(df.columns)
    q = df[df.row == "quantity"]
    assert list(q.quantity) == ["X1", "X2", "X3"] and q.sensitivity_coefficient.tolist() == [1.0, -1.0, 2.0]
    assert q.variance.sum() + df[df.row == "covariance"].variance.sum() == pytest.approx(b["variance"])
    page = written["report.html"].read_text(encoding="utf-8")
    for num in concise(page).nums:
        check_num(res, num)


def test_budget_keeps_rows_up_to_99_percent():
    res = _budget_results()
    # with a third row of 5 % it stays; the summary row appears when two or more rows fall beyond 99 %
    b = res["outputs"][0]["points"][0]["budget"]
    extra = [{"quantity": f"Z{k}", "datum": "Z", "estimate": 1.0, "standard_uncertainty": 1e-4, "unit": "1",
              "sensitivity_coefficient": 1.0, "contribution": 1e-4, "variance": 1e-8, "share": 1e-8 / b["variance"],
              "dof": None} for k in range(5)]
    b["rows"] += extra
    t = bud.budget_table(res["outputs"][0], 0, 0, "budget-y", "y")
    names = [str(r[0]) for r in t.rows]
    assert "6 other quantities (together)" in names


def test_document_keys_are_validated(make_case, tmp_path):
    from uqthermo.case.loader import load_case
    from uqthermo.errors import InputError

    ok = make_case(append='\n[document]\nreference = "CALC-0417"\nrevision = 2\nprepared_by = "A. Engineer"\n'
                          'checked_by = "B. Checker"\ndate = 2026-03-14\n')
    case = load_case(ok)
    assert case.document == {"reference": "CALC-0417", "revision": "2", "prepared_by": "A. Engineer",
                             "checked_by": "B. Checker", "date": "2026-03-14"}
    bad = make_case(append='\n[document]\nreference = 417\nchecked = "x"\ndate = ["2026"]\n')
    with pytest.raises(InputError) as e:
        load_case(bad)
    keys = {p.key for p in e.value.problems}
    assert {"document.reference", "document.checked", "document.date"} <= keys
    assert any("did you mean 'checked_by'" in p.message for p in e.value.problems)


def test_temperature_unit_of_a_case():
    from uqthermo.case.readers.document import temperature_unit

    assert temperature_unit({"output": [{"temperature": "350 degC"}, {"temperatures": {"from": "250 °C", "to": "450 °C"}}]}) == "degC"
    assert temperature_unit({"output": [{"temperature": {"value": "700 K", "u": "5 K"}}]}) == "K"
    assert temperature_unit({"output": [{"kind": "heat_release"}]}) == "K"


def test_terminal_summary_words(demo_runs):
    out = demo_runs["epoxide"]["proc"].stdout
    assert "linear ok" not in out and " NO " not in out
    assert "linear vs MC" in out and ("differs > δ" in out or "not decided" in out)
    assert "the Monte Carlo result is the one reported" in out.replace("\n", " ")
    nv = [ln for ln in out.splitlines() if "differs from the Monte Carlo interval" in ln]
    # one line per output (dH_curve's nine temperatures folded into one)
    assert len([ln for ln in nv if "dH_curve" in ln]) <= 1


def test_figures_from_forked_workers_equal_the_serial_drawing():
    """Same bytes, same order, whether the figures are drawn here or by forked workers."""
    from uqthermo.report.figures.assembly import figure_specs, render_figure
    from uqthermo.report.figures.parallel import render_all

    res = json.loads((Path(__file__).parent / "fixtures" / "results_sample.json").read_text(encoding="utf-8"))
    specs = [s for s in figure_specs(res) if s.name.startswith(("drivers-", "distribution-"))][:4]
    assert len(specs) == 4
    serial = render_all(specs, render_figure, processes=1)
    forked = render_all(specs, render_figure, processes=2)
    assert [f.name for f in forked] == [s.name for s in specs]
    assert [f.png for f in forked] == [f.png for f in serial] and [f.svg for f in forked] == [f.svg for f in serial]
    # anything the pool cannot do falls back to drawing here
    assert render_all(list(range(6)), lambda i: i * i, processes=2) == [i * i for i in range(6)]

"""Tests of the report layer (uqthermo.report), rendered from tests/fixtures/results_sample.json.

The fixture holds INVENTED demo numbers (a toy benzene-hydrogenation model); it is a
results dict shaped like the run's output, not a physics reference.

Outside references used here:
* GUM (JCGM 100:2008) 7.2.6 — a standard uncertainty is stated with (at most) two
  significant digits and the estimate is rounded to the same decimal position; the
  test re-implements that rule independently of uqthermo.report.rounding.
* CommonMark 0.31 — backslash escapes (§2.4), entity references (§2.5) and table
  cells of the GFM table extension (pipes escaped as ``\\|``).
* OWASP "CSV injection" — text cells starting with = + @ are neutralised.
"""

from __future__ import annotations

import copy
import html
import json
import math
import re
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
from pathlib import Path

import pandas as pd
import pytest

from conftest import check_report_numbering, main_in_process, write_case
from uqthermo.errors import InputError
from uqthermo.report import ResultsView, make_figures, render_html, render_markdown, results_table, write_report
from uqthermo.report.figures import assembly as figmod
from uqthermo.report.render import md_escape
from uqthermo.report.rounding import fmt_fixed, fmt_sig, uncertainty_decimals
from uqthermo.report.style import mpl_text

FIXTURE = Path(__file__).parent / "fixtures" / "results_sample.json"


@pytest.fixture(scope="module")
def results() -> dict:
    return json.loads(FIXTURE.read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def report_dir(results, tmp_path_factory) -> tuple[Path, dict]:
    out = tmp_path_factory.mktemp("report")
    written = write_report(results, out)
    return out, written


@pytest.fixture(scope="module")
def md(results) -> str:
    return render_markdown(results)


# ---------------------------------------------------------------------------
# helpers: the GUM 7.2.6 rule, re-implemented; a Markdown table reader
# ---------------------------------------------------------------------------

def gum_decimals(u: float) -> int:
    """Decimals that keep two significant digits of u (GUM 7.2.6), independent implementation."""
    d = 1 - math.floor(math.log10(abs(u)))
    if round(abs(u), d) >= 10 ** (2 - d):  # rounding carried to a third digit: 0.0996 -> 0.10
        d -= 1
    return d


def check_number(cell: str, value: float, decimals: int, what: str) -> None:
    """The printed number has exactly ``decimals`` decimals and equals ``value`` rounded."""
    cell = cell.strip()
    assert re.fullmatch(r"-?\d+(\.\d+)?", cell), f"{what}: not a plain number: {cell!r}"
    got = float(cell)
    shown = len(cell.split(".")[1]) if "." in cell else 0
    assert shown == max(decimals, 0), f"{what}: {cell!r} has {shown} decimals, rule says {decimals}"
    assert abs(got - value) <= 0.5 * 10.0 ** (-decimals) * (1 + 1e-9) + 1e-12, f"{what}: {cell} vs {value}"


def check_interval(cell: str, iv, decimals: int, what: str) -> None:
    m = re.fullmatch(r"\[(.+), (.+)\]", cell.strip())
    assert m, f"{what}: not an interval: {cell!r}"
    check_number(m.group(1), iv[0], decimals, what + " low")
    check_number(m.group(2), iv[1], decimals, what + " high")


_MD_UNESCAPE = re.compile(r"\\([!-/:-@\[-`{-~])")  # CommonMark §2.4: backslash before ASCII punctuation


def md_unescape(s: str) -> str:
    return html.unescape(_MD_UNESCAPE.sub(r"\1", s))


def md_cells(line: str) -> list[str]:
    parts = re.split(r"(?<!\\)\|", line.strip())
    assert parts[0] == "" and parts[-1] == "", f"table row must start and end with a pipe: {line!r}"
    return [md_unescape(c.strip()) for c in parts[1:-1]]


def md_tables(md: str) -> dict[str, tuple[list[str], list[list[str]]]]:
    """{caption (unescaped, without "Table n. "): (header, rows)} for every numbered table."""
    lines = md.splitlines()
    out = {}
    for i, line in enumerate(lines):
        m = re.fullmatch(r"\*\*Table \d+\. (.*)\*\*", line.strip())
        if not m:
            continue
        cap = md_unescape(m.group(1))
        j = i + 1
        while not lines[j].startswith("|"):
            j += 1
        header = md_cells(lines[j])
        assert re.fullmatch(r"\|( :?-{3}:? \|)+", lines[j + 1].strip()), lines[j + 1]
        rows = []
        k = j + 2
        while k < len(lines) and lines[k].startswith("|"):
            row = md_cells(lines[k])
            assert len(row) == len(header), f"{cap}: row has {len(row)} cells, header {len(header)}"
            rows.append(row)
            k += 1
        out[cap] = (header, rows)
    return out


def kept_99(drivers: list[dict]) -> list[dict]:
    """The drivers a table lists: largest |share| first until 99 % of Σ|share| (a single leftover is listed too)."""
    total = sum(abs(d["share"]) for d in drivers)
    kept, acc = [], 0.0
    for d in sorted(drivers, key=lambda d: -abs(d["share"])):
        if kept and acc >= 0.99 * total:
            break
        kept.append(d)
        acc += abs(d["share"])
    if len(drivers) - len(kept) == 1:
        kept = sorted(drivers, key=lambda d: -abs(d["share"]))
    return kept


def table(tables, prefix: str):
    hits = [v for k, v in tables.items() if k.startswith(prefix)]
    assert len(hits) >= 1, f"no table starting with {prefix!r}; have {list(tables)}"
    return hits


# ---------------------------------------------------------------------------
# rounding helpers (GUM 7.2.6)
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("u, dec", [(0.98, 2), (7.43, 1), (0.0995, 2), (0.0994, 3), (12.3, 0), (1234.0, -2), (0.00052, 5)])
def test_uncertainty_decimals_follow_gum_7_2_6(u, dec):
    # two significant digits; a carry into a third digit moves the position (0.0995 -> 0.10)
    assert uncertainty_decimals(u) == dec == gum_decimals(u)


def test_fixed_and_significant_formatting():
    assert fmt_fixed(-215.360148, 2) == "-215.36"
    assert fmt_fixed(-0.004, 2) == "0.00"            # no negative zero
    assert fmt_fixed(2.675, 2) == "2.68"             # half away from zero on the decimal repr (float would give 2.67)
    assert fmt_fixed(123456.0, -2) == "123500"
    assert fmt_fixed(3.2e-9, 10) == "3.2e-09"        # more than 6 decimals switches to e-notation
    assert fmt_sig(0.0049999, 2) == "0.0050"
    assert fmt_sig(9.996, 3) == "10.0"
    assert fmt_fixed(None, 2) == "—"


# ---------------------------------------------------------------------------
# files written
# ---------------------------------------------------------------------------

def test_write_report_writes_every_file(report_dir, results):
    out, written = report_dir
    assert {"report.html", "report.md"} <= set(written)
    for key, p in written.items():
        assert p == out / key and p.is_file() and p.stat().st_size > 0
    figs = {k for k in written if k.startswith("figures/")}
    # one curve (10 points), two distributions, two driver charts, the Cp data, convergence, planner front; PNG + SVG each
    stems = {Path(k).stem for k in figs}
    assert stems == {"curve-hydrogenation_dH", "distribution-hydrogenation_dH", "distribution-batch_rise",
                     "drivers-hydrogenation_dH", "drivers-batch_rise", "cp-data", "convergence", "plan-front"}
    for k in figs:
        data = written[k].read_bytes()
        if k.endswith(".png"):
            assert data[:8] == b"\x89PNG\r\n\x1a\n"
        else:
            root = ET.fromstring(data)
            assert root.tag.endswith("svg")
            assert b"<script" not in data.lower()
    tables = {k for k in written if k.startswith("tables/")}
    assert {"tables/inputs.csv", "tables/results-hydrogenation_dH.csv", "tables/results-batch_rise.csv",
            "tables/drivers.csv", "tables/whatif.csv", "tables/plan.csv"} <= tables
    # atomic writes leave no temporary files behind
    assert not [p for p in out.rglob("*") if p.name.endswith(".tmp")]


def test_csv_tables_have_full_precision(report_dir, results):
    out, _ = report_dir
    df = pd.read_csv(out / "tables" / "results-hydrogenation_dH.csv")
    pts = results["outputs"][0]["points"]
    assert len(df) == len(pts) == 10
    assert df["mc_mean"].tolist() == pytest.approx([p["monte_carlo"]["mean"] for p in pts], rel=0, abs=0)
    inp = pd.read_csv(out / "tables" / "inputs.csv")
    assert list(inp["datum"]) == [i["datum"] for i in results["inputs"]]
    plan = pd.read_csv(out / "tables" / "plan.csv")
    assert len(plan) == len(results["plan"]["front"]) and plan["best"].sum() == 1


def test_csv_neutralises_formula_injection(tmp_path, results):
    r = copy.deepcopy(results)
    r["inputs"][0]["source"] = "=HYPERLINK(\"http://x\",\"click\")"
    r["inputs"][1]["source"] = "-2+3"
    r["inputs"][2]["source"] = "-5.5"
    written = write_report(r, tmp_path, formats=("md",), figures=False)
    inp = pd.read_csv(written["tables/inputs.csv"])
    assert inp["source"][0].startswith("'=")
    assert inp["source"][1] == "'-2+3"
    assert str(inp["source"][2]) == "-5.5"   # a plain negative number stays a number


def test_html_is_self_contained(report_dir):
    out, _ = report_dir
    page = (out / "report.html").read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>")
    assert "Content-Security-Policy" in page and "default-src 'none'" in page
    assert "<script" not in page.lower()
    # every src/href is a data URI or an in-page anchor: nothing to fetch, readable offline
    for attr, val in re.findall(r'\s(src|href)="([^"]*)"', page):
        assert val.startswith("data:") or val.startswith("#"), (attr, val[:60])
    assert page.count('src="data:image/png;base64,') == 8
    assert "@media print" in page and "break-inside: avoid" in page


def test_markdown_references_written_figures(report_dir):
    out, written = report_dir
    text = (out / "report.md").read_text(encoding="utf-8")
    refs = re.findall(r"!\[[^\n]*?\]\(([^)\s]+)\)", text)
    assert len(refs) == 8
    for r in refs:
        assert r.startswith("figures/") and r.endswith(".png")
        assert (out / r).is_file()


# ---------------------------------------------------------------------------
# numbering: tables and figures 1, 2, 3… in document order; user text as written
# ---------------------------------------------------------------------------

def test_tables_and_figures_numbered_in_document_order_in_every_format(report_dir):
    """HTML, Markdown and Word: tables 1..n and figures 1..m in the order they appear, the same captions
    in the same order, and every "Table N"/"Figure N" pointing at an existing caption (the sample has a
    plan and a convergence figure, so every kind of table and figure is in it)."""
    pytest.importorskip("docx")
    out, written = report_dir
    page = (out / "report.html").read_text(encoding="utf-8")
    md = (out / "report.md").read_text(encoding="utf-8")
    n_tab, n_fig = check_report_numbering(page, md, written["report.docx"])
    assert n_fig == 8 and n_tab >= 20
    # document order is the reader's: the input data (appendix A.3) come before the results summary (A.4)
    keys = re.findall(r'<table id="table-\d+" data-key="([^"]*)"', page)
    assert keys.index("inputs") < keys.index("summary")
    figs = re.findall(r'<figure id="figure-\d+">\s*<img src="[^"]*" alt="Figure \d+: ([^"]*)"', page)
    assert figs.index("Heat-capacity data used") < figs.index("Monte Carlo convergence") < figs.index("Data purchase plan")


def test_a_figure_not_drawn_leaves_no_gap(results):
    """A figure the page cannot embed takes no number and no reference; the others close up (the concise
    section then shows the output's distribution instead of its missing curve)."""
    from uqthermo.report.figures.assembly import RenderedFigure, figure_specs

    specs = figure_specs(results)
    drop = {"cp-data", specs[0].name}
    fake = [RenderedFigure(s.name, s.section, s.output_index, s.title, s.caption, b"png", b"") for s in specs
            if s.name not in drop]
    page = render_html(results, _rendered=fake)
    _, n_fig = check_report_numbering(page, None, None)
    assert n_fig == len(specs) - len(drop)
    assert "Heat-capacity data used" not in page
    budgets = page.split('<section id="budgets">', 1)[1].split("</section>", 1)[0]
    assert 'alt="Figure 1: hydrogenation_dH: output distribution"' in budgets


USER_TEXT = {
    "title": "Water-gas shift to NIST-JANAF Table 5 and Figure 2 (table-3)",
    "source": "ATcT via chemicals; cf NIST-JANAF Table 5 and see Figure 2 of the vendor sheet (table-3)",
    "reference": "CALC Table 5 rev table-3",
    "checked_by": "see Figure 2 team",
    "description": "as in Figure 2 of the vendor sheet, Table 5 and table-3",
    "output": "table-3",
}


@pytest.fixture(scope="module")
def user_text_run(tmp_path_factory):
    """The fast case (conftest) with user text that looks like a table or figure reference in its title,
    a datum's source, [document] keys, an output's name and description; 1024 trials."""
    from conftest import BASE_CASE

    text = (BASE_CASE.replace('title = "Water-gas shift at 700 K (test case, published data)"', f'title = "{USER_TEXT["title"]}"', 1)
            .replace('source = "ATcT via chemicals"', f'source = "{USER_TEXT["source"]}"', 1)
            .replace('name = "dH_700K"', f'name = "{USER_TEXT["output"]}"\ndescription = "{USER_TEXT["description"]}"', 1))
    text += f'\n[document]\nreference = "{USER_TEXT["reference"]}"\nchecked_by = "{USER_TEXT["checked_by"]}"\n'
    base = tmp_path_factory.mktemp("user-text")
    case = write_case(base, text)
    out = base / "out"
    code, _, err = main_in_process("run", case, "--out", out, "--samples", "1024", "--quiet")
    assert code == 0, err
    return out


def test_user_text_that_looks_like_a_reference_is_printed_as_written(user_text_run):
    docx = pytest.importorskip("docx")
    out = user_text_run
    res = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert res["case"]["title"] == USER_TEXT["title"] and res["document"]["reference"] == USER_TEXT["reference"]
    page = (out / "report.html").read_text(encoding="utf-8")
    md = (out / "report.md").read_text(encoding="utf-8")
    d = docx.Document(str(out / "report.docx"))
    n_tab, n_fig = check_report_numbering(page, md, out / "report.docx", user_text=tuple(USER_TEXT.values()))
    assert n_tab > 5 and n_fig > 2       # "Table 5", "Figure 2", "table-3" are numbers in use in this report
    html_text = html.unescape(re.sub(r"<[^>]+>", " ", page.replace("<wbr>", "")))
    md_text = re.sub(r"\\(.)", r"\1", md)
    doc_text = "\n".join([p.text for p in d.paragraphs] + [c.text for t in d.tables for r in t.rows for c in r.cells]
                         + [p.text for p in d.sections[0].header.paragraphs])
    for key, s in USER_TEXT.items():
        for name, txt in (("html", html_text), ("md", md_text), ("docx", doc_text)):
            assert s in txt, (name, key, s)
    assert f"<h4>{USER_TEXT['output']} " in page and f"#### {USER_TEXT['output']} —" in md


# ---------------------------------------------------------------------------
# content: the numbers in report.md are the numbers in results.json
# ---------------------------------------------------------------------------

def test_markdown_numbers_equal_results_json(md, results):
    tables = md_tables(md)
    for o in results["outputs"]:
        pts = o["points"]
        unit = o["unit"]
        # Monte Carlo table
        (hdr, rows), = [v for k, v in tables.items() if k == f"Monte Carlo results (JCGM 101), in {unit}" and len(v[1]) == len(pts)]
        assert hdr[:4] == ["T / K", "Mean", "u", "95 % interval (prob.-symmetric)"]
        for row, p in zip(rows, pts):
            mc = p["monte_carlo"]
            d = gum_decimals(mc["standard_uncertainty"])
            assert float(row[0]) == pytest.approx(p["temperature_K"])
            check_number(row[1], mc["mean"], d, f"{o['name']} MC mean")
            check_number(row[2], mc["standard_uncertainty"], d, f"{o['name']} MC u")
            check_interval(row[3], mc["coverage_interval"], d, f"{o['name']} MC interval")
            check_interval(row[4], mc["shortest_coverage_interval"], d, f"{o['name']} shortest interval")
            check_number(row[5], mc["median"], d, "median")
            assert int(row[7]) == mc["samples"]
        # linear table
        (hdr, rows), = [v for k, v in tables.items() if k.startswith("Linear propagation (GUM)") and k.endswith(f"in {unit}")
                        and len(v[1]) == len(pts)]
        for row, p in zip(rows, pts):
            lin = p["linear"]
            d = gum_decimals(lin["standard_uncertainty"])
            check_number(row[1], lin["estimate"], d, "linear estimate")
            check_number(row[2], lin["standard_uncertainty"], d, "linear u")
            nu = lin["effective_dof"]
            assert row[3] == ("∞" if nu is None else str(round(nu)))
            check_number(row[4], lin["coverage_factor"], 2, "k")
            check_number(row[5], lin["expanded_uncertainty"], d, "U")
            check_interval(row[6], lin["coverage_interval"], d, "linear interval")
            assert row[10] == ("validated" if p["linear_validated"] else "not validated")
        # one-sided bounds
        (hdr, rows), = [v for k, v in tables.items() if k == f"One-sided bounds and design margins, in {unit}"
                        and len(v[1]) == len(pts)]
        for row, p in zip(rows, pts):
            d = gum_decimals(p["monte_carlo"]["standard_uncertainty"])
            mg = p["margins"]
            for cell, key in zip(row[1:5], ("lower_P99", "lower_P95", "upper_P95", "upper_P99")):
                check_number(cell, mg[key], d, key)
            for cell, key in zip(row[5:9], ("lower_P95_margin", "upper_P95_margin", "lower_P99_margin", "upper_P99_margin")):
                check_number(cell, mg[key], d, key)


def test_markdown_summary_and_drivers_equal_results_json(md, results):
    tables = md_tables(md)
    (hdr, rows), = table(tables, "Results at a glance")
    by_name = {o["name"]: o for o in results["outputs"]}
    assert [r[0] for r in rows] == list(by_name)
    for row in rows:
        o = by_name[row[0]]
        # headline point: the largest standard uncertainty (single point: that one)
        p = max(o["points"], key=lambda q: q["monte_carlo"]["standard_uncertainty"])
        assert float(row[2].rstrip(" *")) == pytest.approx(p["temperature_K"])
        d = gum_decimals(p["monte_carlo"]["standard_uncertainty"])
        check_number(row[3], p["monte_carlo"]["mean"], d, "summary estimate")
        check_number(row[4], p["monte_carlo"]["standard_uncertainty"], d, "summary u")
        check_interval(row[5], p["monte_carlo"]["coverage_interval"], d, "summary interval")
        assert row[8] == p["drivers"][0]["datum"]
        check_number(row[9], 100 * p["drivers"][0]["share"], 1, "summary share")
    # driver tables: shares in percent with one decimal, same order as results.json
    for o in results["outputs"]:
        p = max(o["points"], key=lambda q: q["monte_carlo"]["standard_uncertainty"])
        T = f"{p['temperature_K']:g}"
        (hdr, rows), = table(tables, f"Driver ranking at T = {T} K")
        drivers = kept_99(p["drivers"])
        assert [r[1] for r in rows[: len(drivers)]] == [d["datum"] for d in drivers]
        rest = [d for d in p["drivers"] if d not in drivers]
        if rest:        # the data beyond 99 % of the variance: one row with their summed share
            assert rows[len(drivers)][1] == f"{len(rest)} other data (together)"
            check_number(rows[len(drivers)][2], 100 * sum(d["share"] for d in rest), 1, "other data")
        for r, dv in zip(rows, drivers):
            check_number(r[2], 100 * dv["share"], 1, "share")
            if dv["share_ci"] is not None:
                check_interval(r[3], [100 * dv["share_ci"][0], 100 * dv["share_ci"][1]], 1, "share CI")
        # covariance terms between correlated data: their own signed rows (JCGM 100 §5.2.2), and
        # the rows sum to 100 %
        for r, c in zip(rows[len(drivers) + (1 if rest else 0):], p.get("covariance_terms") or []):
            assert r[1] == f"covariance {c['between'][0]} ~ {c['between'][1]}"
            check_number(r[2], 100 * c["share"], 1, "covariance share")
        if p.get("drivers_method") == "linear":
            total = (sum(d["share"] for d in drivers) + sum(d["share"] for d in rest)
                     + sum(c["share"] for c in p.get("covariance_terms") or []))
            assert total == pytest.approx(1.0, abs=2e-3)
        # what-if, at the decimal position of the point's linear u
        (hdr, rows), = table(tables, f"What-if: expanded uncertainty U (95 %) at T = {T} K")
        d = gum_decimals(p["linear"]["standard_uncertainty"])
        listed = {dv["datum"] for dv in drivers}
        whatif = sorted([w for w in p["whatif"] if w["datum"] in listed], key=lambda w: [dv["datum"] for dv in drivers].index(w["datum"]))
        assert [r[0] for r in rows[: len(whatif)]] == [w["datum"] for w in whatif]
        for r, w in zip(rows, whatif):
            for cell, key in zip(r[1:4], ("U_now", "U_halved", "U_removed")):
                if cell == "no measurable change":      # a Monte Carlo what-if change below 2 standard errors
                    assert (w.get("measurable") or {}).get(key) is False
                    continue
                check_number(cell, w[key], d, key)
        others = [w for w in p["whatif"] if w["datum"] not in listed]
        if others:
            assert rows[-1][0].startswith(f"{len(others)} other data (together")


def test_markdown_inputs_and_exceedance_equal_results_json(md, results):
    tables = md_tables(md)
    (hdr, rows), = table(tables, "Input data")
    assert [r[0] for r in rows] == [i["datum"] for i in results["inputs"]]
    for r, i in zip(rows, results["inputs"]):
        est, u = i["estimate"], i["standard_uncertainty"]
        if isinstance(est, (int, float)) and isinstance(u, (int, float)) and u > 0:
            d = gum_decimals(u)
            check_number(r[2], est, d, i["datum"] + " value")
            check_number(r[4], u, d, i["datum"] + " u")
        assert r[6] == i["distribution"]
    (hdr, rows), = table(tables, "Probability of exceeding the limit")
    p = results["outputs"][1]["points"][0]
    # the probability with its one-sided 95 % Clopper-Pearson upper bound (scipy.stats.beta quantile), the bound
    # rounded up at two significant digits, and the trials; the standard error at the GUM rounding of itself
    from scipy import stats

    n = p["exceedance_trials"]
    k = round(p["exceedance_probability"] * n)
    m = re.fullmatch(r"([\d.]+) % \(95 % upper bound ([\d.]+) %, ([\d ]+) trials\)", md_unescape(rows[0][2]))
    assert m, rows[0][2]
    assert float(m.group(1)) == float(f"{100 * p['exceedance_probability']:.2g}")     # two significant digits
    ub = 100 * stats.beta.ppf(0.95, k + 1, n - k)
    step = 10.0 ** (math.floor(math.log10(ub)) - 1)          # the bound rounded up at two significant digits
    assert ub <= float(m.group(2)) < ub + step
    assert int(m.group(3).replace(" ", "")) == n
    se = 100 * p["exceedance_standard_error"]
    check_number(rows[0][3].rstrip(" %"), se, gum_decimals(se), "standard error")
    # planner front: U to three significant digits
    (hdr, rows), = table(tables, "Cost–uncertainty front")
    for r, f in zip(rows, results["plan"]["front"]):
        assert float(r[0]) == f["cost"]
        exp = math.floor(math.log10(f["U"]))
        assert len(r[1].replace(".", "").lstrip("0")) == 3                     # three significant digits
        assert abs(float(r[1]) - f["U"]) <= 0.5 * 10.0 ** (exp - 2) * (1 + 1e-9)


def test_report_states_case_method_and_rounding(md, results):
    for needle in (results["case"]["sha256"], "JCGM 101", "JCGM 100:2008", "Kirchhoff", "Welch–Satterthwaite",
                   "clause 8", "GUM 7.2.6", "20000", "Gaussian copula", "Sobol'"):
        assert needle in md_unescape(md), needle
    assert "reaction calorimetry" in md and "local codes" in md   # cautions: adiabatic output with a limit


def test_cautions_only_where_results_feed_safety(results):
    r = copy.deepcopy(results)
    r["outputs"] = r["outputs"][:1]           # reaction enthalpy only, no limit
    r["cautions"] = []
    r.pop("plan")
    text = render_markdown(r, figures=False)
    assert "Cautions" not in text and "Safety use" not in text
    r["outputs"][0]["kind"] = "heat_release"   # heat release always gets the cautions, with the defaults
    text = render_markdown(r, figures=False)
    assert "Cautions for safety use" in text and "reaction calorimetry" in text and "licensed engineering practice" in text


# ---------------------------------------------------------------------------
# escaping of user-supplied text
# ---------------------------------------------------------------------------

HOSTILE = {
    "title": "<script>alert(1)</script> Plant & Co. *urgent* | [x](javascript:alert(2))",
    "name": "<img src=x onerror=alert(3)>",
    "source": "# heading\n- list | pipe `code` $x$ &lt;b&gt; [link](http://example.invalid)",
    "warning": "<script>alert(4)</script>",
}


def hostile(results: dict) -> dict:
    r = copy.deepcopy(results)
    r["case"]["title"] = HOSTILE["title"]
    r["outputs"][1]["name"] = HOSTILE["name"]
    r["convergence"][HOSTILE["name"]] = r["convergence"].pop("batch_rise")
    r["inputs"][0]["source"] = HOSTILE["source"]
    r["inputs"][1]["datum"] = "x_$y$_<b>"
    r["warnings"].append(HOSTILE["warning"])
    return r


class _Tags(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags: set[str] = set()
        self.attrs: set[str] = set()

    def handle_starttag(self, tag, attrs):
        self.tags.add(tag)
        self.attrs |= {a for a, _ in attrs}


def test_html_escapes_user_text(results):
    page = render_html(hostile(results), figures=False)
    assert "<script" not in page.lower()
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page
    assert "&lt;img src=x onerror=alert(3)&gt;" in page
    p = _Tags()
    p.feed(page)
    assert "script" not in p.tags and "iframe" not in p.tags
    assert not [a for a in p.attrs if a.startswith("on")], p.attrs
    assert p.tags <= {"html", "head", "meta", "title", "link", "style", "body", "main", "header", "div", "h1", "h2", "h3",
                      "h4", "nav", "strong", "ol", "li", "a", "section", "p", "span", "dl", "dt", "dd", "code", "table",
                      "caption", "thead", "tbody", "tr", "th", "td", "sub", "sup", "i", "ul", "figure", "img", "figcaption",
                      "b", "footer", "wbr", "h5"}


def test_markdown_escapes_user_text(results):
    text = render_markdown(hostile(results), figures=False)
    assert "<script" not in text and "<img" not in text and "<b>" not in text
    assert "&lt;script>alert(1)&lt;/script>" in text
    assert r"\[x\](javascript:alert(2))" in text         # no link can be formed
    assert r"&amp;lt;b&amp;gt;" in text                  # entity-like text stays literal
    first = text.splitlines()[0]
    assert first.startswith("# ") and md_unescape(first[2:]) == HOSTILE["title"]
    # the pipe and newline in the source did not break the input table
    tables = md_tables(text)
    (hdr, rows), = table(tables, "Input data")
    assert rows[0][7] == " ".join(HOSTILE["source"].split())
    assert rows[1][0] == "x_$y$_<b>"


@pytest.mark.parametrize("raw, escaped", [
    ("-205.3", "-205.3"), ("- item", r"\- item"), ("# h", r"\# h"), ("1. x", r"1\. x"), ("12) x", r"12\) x"),
    ("---", r"\---"), ("> q", r"\> q"), ("a|b", r"a\|b"), ("*x*_y_", r"\*x\*\_y\_"), ("$5", r"\$5"),
    ("<b>", "&lt;b>"), ("&amp;", "&amp;amp;"), ("R&D", "R&D"), ("two\nlines", "two lines"),
])
def test_md_escape(raw, escaped):
    assert md_escape(raw) == escaped
    assert md_unescape(md_escape(raw)) == " ".join(raw.split())


def test_figures_draw_dollar_signs_literally(results, tmp_path):
    r = copy.deepcopy(results)
    r["outputs"][0]["name"] = "cost $ and $x^2$ unbalanced $"
    for p in r["outputs"][0]["points"]:
        p["drivers"][0]["datum"] = "$\\alpha$"
    specs = [s for s in figmod.figure_specs(r) if s.output_index == 0]
    assert len(specs) == 3
    for s in specs:
        fig = figmod.render_figure(s)   # a mathtext parse error would raise here
        assert fig.png[:4] == b"\x89PNG"
    assert mpl_text("a $b$") == r"a \$b\$"


# ---------------------------------------------------------------------------
# other entry points and robustness
# ---------------------------------------------------------------------------

def test_results_table_one_row_per_point(results):
    df = results_table(results)
    assert len(df) == 11
    row = df[(df.output == "batch_rise")].iloc[0]
    p = results["outputs"][1]["points"][0]
    assert row.estimate == p["monte_carlo"]["mean"] and row.method == "monte_carlo"
    assert row.exceedance_probability == p["exceedance_probability"]
    assert row.top_driver == p["drivers"][0]["datum"]
    assert not row.linear_validated


def test_notebook_view(results):
    v = ResultsView(hostile(results))
    h = v._repr_html_()
    assert "<script" not in h and "&lt;script&gt;" in h and "uqt-view" in h
    pd.testing.assert_frame_equal(v.to_dataframe(), results_table(hostile(results)))
    assert "batch" in repr(ResultsView(results))
    with pytest.raises(InputError):
        ResultsView([1, 2])


def test_minimal_contract_results_render(tmp_path):
    # only the keys of contract section 3; linear-only point without Monte Carlo in the second output
    r = {"format": "uqthermo.results/1", "case": {"title": "minimal", "sha256": "0" * 64},
         "run": {"seed": 1, "samples": 1000, "sampling": "random", "version": "0.1.0"},
         "outputs": [
             {"name": "R1_dH", "kind": "reaction_enthalpy", "unit": "kJ/mol", "points": [
                 {"temperature_K": 623.15,
                  "linear": {"estimate": -165.1, "standard_uncertainty": 0.41, "coverage_interval": [-165.9, -164.3]},
                  "monte_carlo": {"mean": -165.1, "standard_uncertainty": 0.42, "coverage_interval": [-165.92, -164.28], "samples": 1000},
                  "coverage_probability": 0.95, "linear_validated": True,
                  "drivers": [{"datum": "CH4.g.heat_capacity", "share": 0.41}]}]},
             {"name": "lin_only", "kind": "heating_enthalpy", "unit": "kJ/mol", "points": [
                 {"temperature_K": 400.0, "linear": {"estimate": 3.1, "standard_uncertainty": 0.05, "coverage_interval": [3.0, 3.2]},
                  "coverage_probability": 0.95, "linear_validated": None, "drivers": []}]}],
         "warnings": []}
    written = write_report(r, tmp_path, figures=False)
    assert (tmp_path / "report.html").is_file() and (tmp_path / "report.md").is_file()
    text = written["report.md"].read_text(encoding="utf-8")
    assert "-165.10" in text and "0.42" in text and "No warnings were raised." in text
    assert "Cautions" not in text
    names = make_figures(r, tmp_path / "figs")
    assert {"distribution-R1_dH", "drivers-R1_dH", "distribution-lin_only"} <= set(names)
    # empty results: still a valid (short) report
    assert "<h1>Uncertainty report</h1>" in render_html({"outputs": []}, figures=False)


def test_bad_arguments_raise_project_errors(results, tmp_path):
    with pytest.raises(InputError):
        write_report(results, tmp_path, formats=("pdf",))
    with pytest.raises(InputError):
        render_html("not a dict")  # type: ignore[arg-type]


def test_edge_cases_render(tmp_path):
    # exact output (u = 0), a huge equilibrium constant, missing pieces everywhere, Monte Carlo only
    r = {"run": {"method": "monte-carlo", "samples": "adaptive", "adaptive": True, "coverage_probability": 0.99},
         "outputs": [
             {"name": "exact", "kind": "heating_enthalpy", "unit": "kJ/mol", "points": [
                 {"temperature_K": 350.0, "linear": {"estimate": 2.5, "standard_uncertainty": 0.0, "coverage_interval": [2.5, 2.5],
                                                      "expanded_uncertainty": 0.0, "coverage_factor": None, "effective_dof": None}}]},
             {"name": "K_eq", "kind": "equilibrium_constant", "unit": "1", "phase_changes": [{"species": "X"}], "points": [
                 {"temperature_K": 500.0 + 10 * i,
                  "monte_carlo": {"mean": 1.234e12 * (1 + i), "standard_uncertainty": 3.1e10, "coverage_interval": [1.17e12, 1.30e12],
                                  "samples": 20000, "histogram": {"edges": [], "counts": []}},
                  "drivers": [{"datum": "A", "share": None}, {"datum": "B", "share": 0.5, "share_ci": [0.4, None]}]}
                 for i in range(3)]},
             {"name": "Q", "kind": "heat_release", "unit": "kW", "points": []}],
         "convergence": {"K_eq": [[1000, 3.0e10], [2000, None], [4000, 3.1e10]], "missing": []},
         "plan": {"front": [{"cost": 0, "U": 2.0, "set": []}, {"cost": None, "U": 1.0}], "best": {}},
         "warnings": None, "cautions": None}
    written = write_report(r, tmp_path)
    text = written["report.md"].read_text(encoding="utf-8")
    assert "adaptive" in text and "99 %" in text
    assert "1.234e+12" in text and "3.1e+10" in text          # e-notation keeps the GUM digits
    assert "Cautions for safety use" in text                  # heat_release output
    assert {"curve-K_eq", "convergence", "plan-front"} <= {Path(k).stem for k in written if k.startswith("figures/")}

"""HTML and Markdown rendering of a results dict, and the report writer.

Both formats are rendered from one context built by :func:`build_context`, so they
carry the same content and the same rounded numbers (rounding rule:
:mod:`uqthermo.report.rounding`).

Escaping
--------
* HTML: Jinja2 with autoescaping; user text is never marked safe. The page also
  carries a Content-Security-Policy that forbids scripts and any external resource
  (``default-src 'none'; img-src data:; style-src 'unsafe-inline'``).
* Markdown: every ``{{ … }}`` expression passes through :func:`md_escape` (the
  environment's ``finalize``), which backslash-escapes Markdown punctuation, writes
  ``<`` as ``&lt;``, neutralises entity-like ``&…;`` and line-start block markers,
  and folds newlines, so user text cannot create markup, links, HTML or tables.
"""

from __future__ import annotations

import base64
import re
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import jinja2
from markupsafe import Markup, escape

from . import files, style
from .fields import (
    SAFETY_KINDS, check_results, coverage_probability, headline_index, kind_label, num, outputs, point_estimate, point_u,
    points, safety_relevant, slugs, text, unit_with_basis,
)
from .numbering import number, table_entry
from .rounding import (
    fmt_cost, fmt_fixed, fmt_interval, fmt_k, fmt_probability, fmt_sig, fmt_temperature, fmt_u, fmt_value, pct_label,
    uncertainty_decimals,
)
from .sections import kirchhoff as kh
from .sections import ranking
from .sections.concise import concise_context
from .sections.warnings import grouped as grouped_warnings
from .tables.design import bounds_table, exceedance_table, limit_text, probability_cell, safety_table
from .tables.display import unit_suffix
from .tables.drivers_whatif import drivers_note
from .tables.frames import frames
from .tables.inputs import correlations_table, inputs_table, reactions_table
from .tables.overview import summary_table
from .tables.plan import plan_candidates_table, plan_front_table
from .tables.propagation import linear_table, mc_table
from .units import fmt_T, temperature_unit

_TEMPLATES = Path(__file__).with_name("templates")

DEFAULT_CAUTIONS = [
    "These estimates support, and never replace, reaction calorimetry of the actual process mixture and a hazard "
    "review by qualified people.",
    "Defer to local codes, standards and licensed engineering practice for every design and safety decision.",
    "The results hold only for the model, the stated data and their stated uncertainties: secondary reactions, "
    "decomposition, gas evolution, boiling and mixing effects that the case does not describe are not covered.",
]
LIMIT_CAUTION = ("An exceedance probability is conditional on the model and the input uncertainties stated in the case; "
                 "it is not the frequency of an incident and it is not a safety margin by itself.")


# ---------------------------------------------------------------------------
# escaping
# ---------------------------------------------------------------------------

_MD_ESCAPE_CHARS = set("\\`*_[]{}|~$")
# block markers that matter at the start of a line (CommonMark 4.x/5.x): list items,
# ATX headings, block quotes, ordered lists, setext underlines / thematic breaks
_LINE_START = re.compile(r"^(\s*)(?:[-+*](?=\s|$)|#{1,6}(?=\s|$)|>|\d{1,9}[.)](?=\s|$)|[-=_*](?=[-=_*\s]*$))")
_ENTITY = re.compile(r"&(?=#?[A-Za-z0-9]+;)")


def md_escape(value: Any) -> str:
    """Escape text for Markdown (CommonMark/GFM) so it renders literally.

    Backslash-escapes ``\\ ` * _ [ ] { } | ~ $``, writes ``<`` as ``&lt;``, turns an
    entity-like ``&name;`` into ``&amp;name;``, escapes a leading block marker
    (``- ``, ``+ ``, ``# ``, ``>``, ``1. ``, a line of ``-``/``=``) and folds all
    whitespace (newlines included) to single spaces. Numbers such as ``-205.3``
    are left alone.
    """
    if isinstance(value, Markup):
        return str(value)
    s = " ".join(str(value).split())
    s = _ENTITY.sub("&amp;", s)
    out = []
    for ch in s:
        if ch in _MD_ESCAPE_CHARS:
            out.append("\\" + ch)
        elif ch == "<":
            out.append("&lt;")
        else:
            out.append(ch)
    s = "".join(out)
    m = _LINE_START.match(s)
    if m:
        i = m.end(1)
        while i < len(s) and s[i].isdigit():  # ordered list: escape the "." or ")" after the digits
            i += 1
        s = s[:i] + "\\" + s[i:]
    return s


def _md_finalize(value: Any) -> Any:
    if value is None:
        return ""
    if isinstance(value, Markup):
        return value
    return md_escape(value)


def html_breakable(value: Any) -> Markup:
    """HTML-escape ``value``, then allow line breaks after ``.``, ``_`` and ``/`` (``<wbr>``).

    Long datum ids such as ``C6H12.transition.l-g.enthalpy`` can then wrap in narrow
    (printed) tables. Escaping happens first, so no user markup survives.
    """
    return Markup(re.sub(r"([._/])", r"\1<wbr>", str(escape(text(value)))))


def environment(kind: str) -> jinja2.Environment:
    """The Jinja2 environment of the report's templates: ``"html"`` (autoescaped) or ``"md"`` (every value through :func:`md_escape`)."""
    from .sections.numbers import Num, Parts

    loader = jinja2.FileSystemLoader(str(_TEMPLATES))
    if kind == "html":
        env = jinja2.Environment(loader=loader, autoescape=True, trim_blocks=True, lstrip_blocks=True,
                                 undefined=jinja2.StrictUndefined)
        env.filters["breakable"] = html_breakable
    else:
        env = jinja2.Environment(loader=loader, autoescape=False, finalize=_md_finalize, trim_blocks=True,
                                 lstrip_blocks=True, keep_trailing_newline=True, undefined=jinja2.StrictUndefined)
        env.filters["md"] = md_escape
    env.tests["num"] = lambda x: isinstance(x, Num)
    env.tests["parts"] = lambda x: isinstance(x, Parts)
    return env


# ---------------------------------------------------------------------------
# context
# ---------------------------------------------------------------------------

def _run_method(run: Mapping) -> tuple[bool, bool]:
    m = str(run.get("method") or "both").lower().replace("_", "-")
    return m in {"linear", "both"}, m in {"monte-carlo", "montecarlo", "mc", "both"}


def _sampling_text(sampling: str | None, rotated: bool = False) -> str:
    if rotated and (sampling or "").lower() == "sobol":
        return ("scrambled Sobol' low-discrepancy sequence (quasi-random) whose leading coordinates follow the "
                "directions in which the model varies most (an orthogonal rotation of the inputs' independent normal "
                "scores along their linear sensitivity directions, which leaves the joint distribution of the inputs "
                "unchanged), mapped to the input distributions by their inverse distribution functions")
    return {
        "sobol": "scrambled Sobol' low-discrepancy sequence (quasi-random), mapped to the input distributions by their "
                 "inverse distribution functions",
        "random": "independent pseudo-random numbers (JCGM 101 annex C), mapped by the inverse distribution functions",
        "latin-hypercube": "Latin hypercube sampling (one draw per equal-probability stratum of every input), mapped by "
                           "the inverse distribution functions",
    }.get((sampling or "").lower(), text(sampling) or "not stated")


def _span_text(o: Mapping, tunit: str = "K") -> str:
    ts = [num(p.get("temperature_K")) for p in points(o)]
    ts = [t for t in ts if t is not None]
    if not ts:
        return ""
    if len(ts) == 1:
        return f"at {fmt_T(ts[0], tunit)}"
    return f"from {fmt_T(min(ts), tunit, with_symbol=False)} to {fmt_T(max(ts), tunit)} ({len(ts)} temperatures)"


def job_sentence(results: Mapping) -> str:
    """The job of the report in one sentence (plain text; temperatures in the case's unit)."""
    run = results.get("run") or {}
    tunit = temperature_unit(results)
    parts = []
    said: set[str] = set()
    for o in outputs(results):
        s = f"the {kind_label(o.get('kind'))} “{text(o.get('name'))}”"
        eq = text(o.get("equation") or o.get("reaction"))
        if eq and eq not in said:
            s += f" of {eq}"
            said.add(eq)
        elif eq:
            s += " of the same reaction"
        sp = _span_text(o, tunit)
        if sp:
            if o.get("kind") in ("adiabatic_temperature_rise", "heating_enthalpy"):
                sp = sp.replace("at ", "from ", 1) if o.get("kind") == "adiabatic_temperature_rise" else sp
            s += " " + sp
        if limit_text(o):
            s += f", with P({limit_text(o)})"
        parts.append(s)
    if not parts:
        what = "no outputs"
    elif len(parts) == 1:
        what = parts[0]
    else:
        what = ", ".join(parts[:-1]) + " and " + parts[-1]
    lin, mc = _run_method(run)
    how = []
    if lin:
        how.append("the GUM law of propagation of uncertainty")
    if mc:
        n = run.get("samples")
        how.append(f"a JCGM 101 Monte Carlo simulation ({'adaptive' if run.get('adaptive') or n == 'adaptive' else fmt_value(n) + ' trials'})")
    return (f"This report estimates {what} by Kirchhoff's law, with standard and expanded uncertainties from "
            f"{' and '.join(how) or 'the stated method'}, and ranks the input data that drive the spread.")


def _case_rows(results: Mapping) -> list[dict]:
    case = results.get("case") or {}
    run = results.get("run") or {}
    rows = [
        ("Title", case.get("title"), False),
        ("Description", case.get("description"), False),
        ("Case file", case.get("file"), True),
        ("SHA-256 of the case file", case.get("sha256"), True),
        ("Run date", run.get("date"), False),
        ("uqthermo version", run.get("version"), False),
        ("Seed", run.get("seed"), True),
        ("Method", {"both": "linear (GUM) and Monte Carlo (JCGM 101)", "linear": "linear (GUM) only",
                    "monte-carlo": "Monte Carlo (JCGM 101) only"}.get(str(run.get("method") or "").lower(), run.get("method")), False),
        ("Monte Carlo trials N", ("adaptive (JCGM 101 7.9)" + (f", {fmt_value(run.get('samples'))} used" if isinstance(run.get("samples"), (int, float)) else ""))
         if run.get("adaptive") else (fmt_value(run.get("samples")) if run.get("samples") is not None else None), False),
        ("Trials requested", fmt_value(run.get("samples_requested"))
         if isinstance(run.get("samples_requested"), (int, float)) and run.get("samples_requested") != run.get("samples") else None, False),
        ("Adaptive run converged", run.get("mc_converged") if run.get("adaptive") else None, False),
        ("Sampling", run.get("sampling"), False),
        ("Quantiles", run.get("quantile_method"), False),
        ("Significant digits for the validation tolerance", run.get("significant_digits"), False),
        ("Uncertain data / input variables",
         f"{fmt_value(run.get('n_data'))} / {fmt_value(run.get('n_variables'))}" if run.get("n_data") is not None else None, False),
        ("Coverage probability", pct_label(coverage_probability(results)), False),
        ("Reference temperature", f"{fmt_temperature(run.get('reference_temperature_K'))} K" if run.get("reference_temperature_K") is not None else None, False),
        ("Engine", run.get("engine"), False),
        ("Run time", f"{fmt_fixed(run.get('duration_s'), 1)} s" if num(run.get("duration_s")) is not None else None, False),
        ("Python / numpy", " / ".join(text(x) for x in (run.get("python"), run.get("numpy")) if x), False),
        ("Platform", run.get("platform"), False),
        ("Results format", results.get("format"), True),
    ]
    return [{"label": a, "value": text(b), "mono": m} for a, b, m in rows if b not in (None, "")]


def _method(results: Mapping) -> dict:
    run = results.get("run") or {}
    lin, mc = _run_method(run)
    tref = run.get("reference_temperature_K")
    n = run.get("samples")
    adaptive = bool(run.get("adaptive")) or n == "adaptive"
    kinds = {o.get("kind") for o in outputs(results)}
    has_pc = any(o.get("phase_changes") for o in outputs(results))
    methods = sorted({str(p.get("drivers_method")) for o in outputs(results) for p in points(o) if p.get("drivers_method")})
    return {
        "linear": lin, "mc": mc, "adaptive": adaptive,
        "samples": fmt_value(n) if isinstance(n, (int, float)) else "",
        "sampling": _sampling_text(run.get("sampling"), bool(run.get("sobol_rotation"))),
        "sampling_name": text(run.get("sampling")),
        "tref": fmt_temperature(tref) if tref is not None else "298.15",
        "p": pct_label(coverage_probability(results)),
        "has_phase_changes": has_pc,
        "safety_kinds": bool(kinds & SAFETY_KINDS),
        "drivers_methods": methods,
    }


def _headline(results: Mapping, o: Mapping, p: Mapping) -> dict:
    mc = p.get("monte_carlo") or {}
    lin = p.get("linear") or {}
    unit = unit_suffix(o.get("unit"))
    p_cov = pct_label(coverage_probability(results, p))
    items = []
    if mc:
        d = uncertainty_decimals(mc.get("standard_uncertainty"))
        items.append({
            "label": "Monte Carlo (JCGM 101)",
            "value": f"{fmt_fixed(mc.get('mean'), d)}{unit}",
            "detail": f"u = {fmt_u(mc.get('standard_uncertainty'))}{unit}; {p_cov} interval {fmt_interval(mc.get('coverage_interval'), d)}",
            "badge": None,
        })
    if lin:
        d = uncertainty_decimals(lin.get("standard_uncertainty"))
        v = p.get("linear_validated")
        items.append({
            "label": "Linear (GUM)",
            "value": f"{fmt_fixed(lin.get('estimate'), d)}{unit}",
            "detail": f"u = {fmt_u(lin.get('standard_uncertainty'))}{unit}; U = {fmt_fixed(lin.get('expanded_uncertainty'), d)}{unit} "
                      f"(k = {fmt_k(lin.get('coverage_factor'))}); {p_cov} interval {fmt_interval(lin.get('coverage_interval'), d)}",
            "badge": ("ok", "validated") if v is True else (("no", "not validated") if v is False else (
                ("na", "not decided") if (p.get("validation") or {}).get("verdict") == "undecided" else ("na", "not checked"))),
        })
    if p.get("exceedance_probability") is not None:
        se = num(p.get("exceedance_standard_error"))
        value = probability_cell(p, "exceedance_probability")
        basis = text(p.get("exceedance_basis"))
        items.append({
            "label": f"P({limit_text(o) or 'beyond the limit'})",
            "value": value,
            "detail": (f"standard error {fmt_probability(se, se)}; the bound is one-sided" if se else
                       "no trial beyond the limit: the value shown is the one-sided upper bound"
                       if num(p.get("exceedance_upper_bound")) is not None else "" if basis in value else basis),
            "badge": ("no", "limit") if (num(p.get("exceedance_probability")) or 0) > 0 else ("ok", "limit"),
        })
    return {"T": fmt_temperature(p.get("temperature_K")), "items": items}


def _summary_card(results: Mapping, o: Mapping, p: Mapping) -> dict:
    mc = p.get("monte_carlo") or {}
    lin = p.get("linear") or {}
    unit = unit_suffix(o.get("unit"))
    u = point_u(p)
    d = uncertainty_decimals(u)
    src = "Monte Carlo" if num(mc.get("mean")) is not None and p.get("reported") != "linear" else "linear"
    iv = mc.get("coverage_interval") if src == "Monte Carlo" else lin.get("coverage_interval")
    details = [f"u = {fmt_u(u)}{unit} · {pct_label(coverage_probability(results, p))} interval {fmt_interval(iv, d)} ({src})"]
    if num(lin.get("expanded_uncertainty")) is not None:
        dl = uncertainty_decimals(lin.get("standard_uncertainty"))
        details.append(f"linear: U = {fmt_fixed(lin.get('expanded_uncertainty'), dl)}{unit} (k = {fmt_k(lin.get('coverage_factor'))})")
    if p.get("exceedance_probability") is not None:
        ptxt = probability_cell(p, "exceedance_probability")
        details.append(f"P({limit_text(o) or 'beyond the limit'}) {'' if ptxt.startswith('<') else '= '}{ptxt}")
    if num(p.get("mtsr_K")) is not None:
        details.append(f"MTSR (no evaporative cooling) {fmt_fixed(p.get('mtsr_K'), d)} K"
                       + (f"; P(MTSR > MTT) = {probability_cell(p, 'p_mtsr_above_mtt')}" if p.get("p_mtsr_above_mtt") is not None else ""))
    bl = p.get("boiling_limited")
    if isinstance(bl, Mapping) and isinstance(bl.get("final_temperature_K"), Mapping):
        ft = bl["final_temperature_K"]
        v = ft.get("mean") if num(ft.get("mean")) is not None else ft.get("estimate")
        details.append(f"boiling-limited end temperature {fmt_fixed(v, d)} K")
    v = p.get("linear_validated")
    badge = ("ok", "linear validated") if v is True else (("no", "linear not validated") if v is False else (
        ("na", "linear vs MC not decided") if (p.get("validation") or {}).get("verdict") == "undecided" else None))
    return {"T": fmt_temperature(p.get("temperature_K")), "value": f"{fmt_fixed(point_estimate(p), d)}{unit}",
            "details": details, "badge": badge}


def _figure_entry(name: str, rendered: Mapping[str, Any] | None, spec_titles: Mapping[str, tuple[str, str]]) -> dict | None:
    """A figure entry, unnumbered (:func:`.numbering.number` numbers it); None when the results have no such
    figure, or when the page embeds its figures (``rendered``) and this one was not drawn."""
    if name not in spec_titles or (rendered is not None and name not in rendered):
        return None
    title, caption = spec_titles[name]
    e = {"name": name, "n": None, "title": title, "caption": caption, "path": f"figures/{name}.png", "src": None}
    if rendered is not None:
        e["src"] = "data:image/png;base64," + base64.b64encode(rendered[name].png).decode("ascii")
    return e


def build_context(results: Mapping, figures: bool = True, rendered: Sequence | None = None) -> dict:
    """Everything the templates print, as plain strings (escaping is the template's job).

    ``figures``: include figure entries; ``rendered``: list of
    :class:`~uqthermo.report.figures.assembly.RenderedFigure` to embed (HTML); without it
    the entries carry only their relative path ``figures/NAME.png`` (Markdown).

    Tables and figures are numbered last, in the order the templates print them
    (:func:`uqthermo.report.numbering.number`), so captions, anchors and references agree.
    """
    from .figures.assembly import figure_specs

    check_results(results)
    specs = figure_specs(results) if figures else []
    spec_titles = {s.name: (s.title, s.caption) for s in specs}
    rmap = {f.name: f for f in rendered} if rendered is not None else None
    case = results.get("case") or {}
    run = results.get("run") or {}
    p_cov = coverage_probability(results)

    ctx: dict[str, Any] = {
        "title": text(case.get("title")) or "Uncertainty report",
        "job": job_sentence(results),
        "case_rows": _case_rows(results),
        "method": _method(results),
        "version": text(run.get("version")),
        "date": text(run.get("date")),
        "p_label": pct_label(p_cov),
        "css": Markup(style.REPORT_CSS),
    }
    used_figures: dict[str, dict] = {}

    def concise_figure(name: str) -> dict | None:
        f = _figure_entry(name, rmap, spec_titles)
        if f is not None:
            used_figures[name] = f
        return f

    ctx["concise"] = concise_context(results, concise_figure)
    ctx["summary"] = table_entry(summary_table(results))
    inp = inputs_table(results)
    ctx["inputs"] = table_entry(inp) if inp else None
    corr = correlations_table(results)
    ctx["correlations"] = table_entry(corr) if corr else None
    reac = reactions_table(results)
    ctx["reactions"] = table_entry(reac) if reac else None

    outs = []
    for oi, (o, slug) in enumerate(zip(outputs(results), slugs(results))):
        pts = points(o)
        entry: dict[str, Any] = {
            "anchor": f"out-{oi + 1}", "number": oi + 1, "name": text(o.get("name")), "kind": kind_label(o.get("kind")),
            "unit": unit_with_basis(o), "description": text(o.get("description")), "reaction": text(o.get("reaction")),
            "equation": text(o.get("equation")), "span": _span_text(o), "first": oi == 0,
            "figures": [], "tables": [], "headline": None, "summary_card": None, "headline_note": "",
            "drivers_table": None, "drivers_figure": None, "whatif_table": None, "not_validated": [], "drivers_note": "", "limit": "", "phase_changes": [],
            "figure_refs": [], "kirchhoff_table": None,
        }
        for pc in o.get("phase_changes") or []:
            if not isinstance(pc, Mapping) or num(pc.get("temperature_K")) is None:
                continue
            entry["phase_changes"].append(f"{text(pc.get('species'))} {text(pc.get('transition')).replace('-', ' → ')} at {fmt_temperature(pc.get('temperature_K'))} K")
        lim_block = o.get("limit") if isinstance(o.get("limit"), Mapping) else {}
        below = lim_block.get("side") == "below"
        if num(o.get("limit_K")) is not None:
            if o.get("kind") == "adiabatic_temperature_rise" and o.get("limit_applies_to", "final_temperature") != "rise":
                start = num(o.get("start_temperature_K"))
                if start is None and pts:
                    start = num(pts[0].get("temperature_K"))
                entry["limit"] = (f"Limit: the final temperature (start {fmt_temperature(start)} K + rise) must stay "
                                  f"{'above' if below else 'below'} {fmt_temperature(o.get('limit_K'))} K"
                                  + (f" ({text(lim_block.get('as_written')).replace('degC', '°C').replace('degF', '°F')} as written)"
                                     if lim_block.get("as_written") else "")
                                  + (f", i.e. a rise of at most {fmt_temperature((num(o.get('limit_K')) or 0) - (start or 0))} K." if not below else "."))
            else:
                entry["limit"] = f"Limit: {fmt_temperature(o.get('limit_K'))} K."
        elif limit_text(o):
            entry["limit"] = f"Limit: the probability that {limit_text(o)} is computed at every point."
        if pts:
            hi = headline_index(o)
            hp = pts[hi]
            entry["headline"] = _headline(results, o, hp)
            entry["summary_card"] = _summary_card(results, o, hp)
            entry["headline_note"] = ("" if len(pts) == 1 else
                                      f"Headline values at {fmt_temperature(hp.get('temperature_K'))} K, the temperature with the largest standard uncertainty.")
            for fname in (f"curve-{slug}", f"distribution-{slug}"):
                if fname in used_figures:       # drawn in the concise section: referred to, not repeated
                    entry["figure_refs"].append(used_figures[fname])
                    continue
                f = _figure_entry(fname, rmap, spec_titles)
                if f:
                    entry["figures"].append(f)
            for t in (mc_table(results, o, f"mc-{slug}"), linear_table(results, o, f"linear-{slug}"),
                      bounds_table(results, o, f"bounds-{slug}"), exceedance_table(results, o, f"exceedance-{slug}"),
                      safety_table(results, o, f"safety-{slug}")):
                if t:
                    entry["tables"].append(table_entry(t))
            entry["drivers_note"] = drivers_note(results, hp)
            entry["drivers_figure"] = _figure_entry(f"drivers-{slug}", rmap, spec_titles)
            if o.get("kind") == "reaction_enthalpy":
                kt = kh.point_table(o, f"kirchhoff-{slug}")
                entry["kirchhoff_table"] = table_entry(kt) if kt else None
            dt = ranking.drivers_table(o, hp, f"drivers-{slug}")
            entry["drivers_table"] = table_entry(dt) if dt else None
            wt = ranking.whatif_table(o, hp, f"whatif-{slug}", coverage_probability(results, hp))
            entry["whatif_table"] = table_entry(wt) if wt else None
            entry["not_validated"] = [fmt_temperature(p.get("temperature_K")) for p in pts if p.get("linear_validated") is False]
        outs.append(entry)
    ctx["outputs"] = outs
    ctx["data_figures"] = [f for f in (_figure_entry(s_.name, rmap, spec_titles) for s_ in specs
                                       if s_.section == "data") if f]
    ctx["convergence_figure"] = _figure_entry("convergence", rmap, spec_titles)

    plan = results.get("plan")
    ctx["plan"] = None
    if not (isinstance(plan, Mapping) and plan) and results.get("candidates"):
        plan = {"candidates": results.get("candidates")}   # candidates stated, planner not run
    elif isinstance(plan, Mapping) and plan and not plan.get("candidates") and results.get("candidates"):
        plan = dict(plan, candidates=results.get("candidates"))
    if isinstance(plan, Mapping) and plan:
        tgt = plan.get("target") or {}
        best = plan.get("best") or {}
        unit = text(tgt.get("unit"))
        cur = text(plan.get("currency")) or "cost units"
        lines = []
        if num(tgt.get("U")) is not None:
            s = f"Target: U ≤ {fmt_sig(tgt.get('U'), 3)} {unit} ({pct_label(num(tgt.get('coverage_probability')) or p_cov)})"
            if tgt.get("output"):
                s += f" for {text(tgt.get('output'))}"
            if num(tgt.get("temperature_K")) is not None:
                s += f" at {fmt_temperature(tgt.get('temperature_K'))} K"
            lines.append(s + ".")
        if num(plan.get("U_now")) is not None:
            lines.append(f"Now: U = {fmt_sig(plan.get('U_now'), 3)} {unit}.")
        if num(plan.get("budget")) is not None:
            lines.append(f"Budget: {fmt_cost(plan.get('budget'))} {cur}.")
        rec = None
        if best:
            st = " + ".join(text(x) for x in best.get("set") or []) or "no purchase"
            meets = best.get("meets_target")
            rec = (f"Recommended: {st}, cost {fmt_cost(best.get('cost'))} {cur}, giving U = {fmt_sig(best.get('U'), 3)} {unit}"
                   + ("" if meets is None else (" (meets the target)." if meets else " (the target is not reached within the candidates).")))
            if meets is None:
                rec += "."
        cand = plan_candidates_table(plan)
        front = plan_front_table(plan)
        ctx["plan"] = {
            "lines": lines, "recommendation": rec,
            "method": text(plan.get("method")),
            "figure": _figure_entry("plan-front", rmap, spec_titles),
            "candidates": table_entry(cand) if cand else None,
            "front": table_entry(front) if front else None,
        }

    ctx["warnings"] = [text(w) for w in grouped_warnings(results) if text(w)]
    notes = []
    for e in outs:
        said = any(e["name"] and e["name"] in w and ("validat" in w or "linear (GUM) interval" in w) for w in ctx["warnings"])
        if e.get("not_validated") and not said:
            notes.append(f"{e['name']}: the linear method is not validated at {len(e['not_validated'])} of "
                         f"{len(points(outputs(results)[e['number'] - 1]))} point(s) (T = {', '.join(e['not_validated'])} K); use the Monte Carlo results there.")
    ctx["auto_notes"] = notes
    safety = safety_relevant(results)
    cautions = [text(c) for c in results.get("cautions") or [] if text(c)]
    ctx["safety"] = safety
    ctx["cautions_needed"] = safety or bool(cautions)
    if safety:
        # defaults, unless the run's own cautions already say the same thing
        low = " ".join(cautions).lower()
        for c, word in zip(DEFAULT_CAUTIONS, ("calorimetry", "codes", "model")):
            if word not in low:
                cautions.append(c)
        if any(limit_text(o) or any(p.get("exceedance_probability") is not None for p in points(o))
               for o in outputs(results)) and "exceedance" not in low:
            bm = (results.get("run") or {}).get("bound_method")
            cautions.append(LIMIT_CAUTION + (f" Each probability is shown with its one-sided 95 % upper bound ({text(bm)})."
                                             if bm else ""))
    ctx["cautions"] = cautions
    ctx["cautions_title"] = "Cautions for safety use" if safety else "Cautions"

    c = ctx["concise"]
    part1 = [("statements", "Results")]
    if c["design"]:
        part1.append(("design", "Design and safety numbers"))
    if c["kirchhoff"]:
        part1.append(("kirchhoff", "Kirchhoff breakdown"))
    if c["per_output"]:
        part1.append(("budgets", "Uncertainty budgets"))
    part1.append(("brief", "Method in brief"))
    part1.append(("cautions", ctx["cautions_title"] if ctx["cautions_needed"] else "Warnings"))
    part2 = [("case", "Case and provenance"), ("method", "Method"), ("inputs", "Input data"), ("results", "Results in full")]
    if ctx["plan"]:
        part2.append(("plan", "Data purchase plan"))
    part2.append(("warnings", "Warnings and notes"))
    ctx["toc"] = ([{"id": a, "n": f"1.{i + 1}", "label": b} for i, (a, b) in enumerate(part1)]
                  + [{"id": a, "n": f"A.{i + 1}", "label": b} for i, (a, b) in enumerate(part2)])
    ctx["sec"] = {t["id"]: t["n"] for t in ctx["toc"]}
    number(ctx)         # tables and figures 1, 2, 3… in the order the templates print them
    return ctx


# ---------------------------------------------------------------------------
# public entry points
# ---------------------------------------------------------------------------

def render_html(results: Mapping, figures: bool = True, _rendered: Sequence | None = None) -> str:
    """The report as one self-contained HTML page (figures embedded as base64 PNG).

    Parameters
    ----------
    results : dict
        A results dict (format ``uqthermo.results/1``).
    figures : bool
        Draw and embed the figures (default True).
    """
    check_results(results)
    if figures and _rendered is None:
        from .figures.assembly import render_figures

        _rendered = render_figures(results)
    ctx = build_context(results, figures=figures, rendered=_rendered if figures else None)
    return environment("html").get_template("report.html.j2").render(**ctx)


def render_markdown(results: Mapping, figures: bool = True) -> str:
    """The report as Markdown; figures are referenced as ``figures/NAME.png``."""
    ctx = build_context(results, figures=figures, rendered=None)
    return environment("md").get_template("report.md.j2").render(**ctx)


def write_tables(results: Mapping, out_dir: Path) -> dict[str, Path]:
    """Write the CSV tables (``tables/*.csv``: inputs, results per output, drivers, what-if,
    GUM budgets, Kirchhoff terms, plan) into ``out_dir``, each atomically, through the tool's one CSV writer
    (:func:`uqthermo.text_safety.csv_frame_text`: formula-like text neutralised, cells with
    CR/LF quoted). Returns the paths keyed by their path relative to ``out_dir``."""
    from ..text_safety import csv_frame_text

    written: dict[str, Path] = {}
    for stem, df in report_frames(results).items():
        written[f"tables/{stem}.csv"] = files.atomic_write(Path(out_dir) / "tables" / f"{stem}.csv", csv_frame_text(df))
    return written


def write_report(results: Mapping, out_dir: Path, formats: Sequence[str] = ("html", "md", "docx"),
                 figures: bool = True) -> dict[str, Path]:
    """Write the report files into ``out_dir``.

    Writes ``report.html`` (self-contained), ``report.md``, ``report.docx`` (Word, built
    from the HTML page; only when python-docx is installed — see
    :func:`uqthermo.report.docx.available`), ``figures/*.png`` and ``figures/*.svg`` (when
    ``figures``), and ``tables/*.csv`` (inputs, results per output, drivers, what-if,
    GUM budgets, Kirchhoff terms, plan). Every file is written atomically.

    Returns
    -------
    dict[str, Path]
        Path of every file written, keyed by its path relative to ``out_dir``
        (e.g. ``"report.html"``, ``"figures/curve-R1.png"``, ``"tables/inputs.csv"``).
    """
    from ..errors import InputError
    from .figures.assembly import make_figures, render_figures

    check_results(results)
    formats = tuple(formats)
    bad = [f for f in formats if f not in ("html", "md", "docx")]
    if bad:
        raise InputError(f"unknown report format(s) {', '.join(map(str, bad))}; use 'html', 'md' and/or 'docx'", key="formats")
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    written: dict[str, Path] = {}
    rendered = render_figures(results) if figures else None
    if figures:
        for name, paths in make_figures(results, out_dir / "figures", _rendered=rendered).items():
            for ext, p in paths.items():
                written[f"figures/{name}.{ext}"] = p
    written.update(write_tables(results, out_dir))
    page = None
    if "html" in formats or "docx" in formats:
        page = render_html(results, figures=figures, _rendered=rendered)
    if "html" in formats:
        written["report.html"] = files.atomic_write(out_dir / "report.html", page)
    if "docx" in formats:
        from . import docx as wd

        if wd.available():
            written["report.docx"] = files.atomic_write(out_dir / "report.docx", wd.html_to_docx(page, results))
    if "md" in formats:
        written["report.md"] = files.atomic_write(out_dir / "report.md", render_markdown(results, figures=figures))
    return written


def report_frames(results: Mapping) -> dict:
    """Every CSV table: :func:`uqthermo.report.tables.frames.frames` plus ``budget-<output>`` and ``kirchhoff``."""
    from .sections.budget import budget_frames

    out = dict(frames(results))
    out.update(budget_frames(results))
    k = kh.kirchhoff_frame(results)
    if len(k):
        out["kirchhoff"] = k
    return out


__all__ = ["render_html", "render_markdown", "write_report", "write_tables", "build_context", "md_escape", "environment",
           "job_sentence", "report_frames"]

"""The concise section: the part of the report a design or safety file takes over.

About two printed pages for a typical case, in this order:

1. the document-control header block ([document] keys, case sha256, tool version, run date);
2. the statement of result per output (JCGM 100 §7.2 form, :mod:`.statement`);
3. the design and safety numbers (one-sided bounds, final temperature, MTSR, exceedance
   probabilities), where the case has them;
4. the Kirchhoff breakdown of the reaction enthalpies (:mod:`.kirchhoff`);
5. per output, its GUM uncertainty budget (:mod:`.budget`) and one figure;
6. the method in one paragraph, the warnings (grouped) and the cautions.

Absolute temperatures are in the unit the case used (``display_units.temperature``); the
appendix keeps kelvin. Every number is a :class:`~.numbers.Num` that names its place in
results.json (the browser test checks each one).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

from ..fields import coverage_probability, headline_index, kind_label, num, outputs, points, slugs, text
from ..numbering import table_entry
from ..rounding import fmt_fixed, pct_label, uncertainty_decimals
from ..tables.design import limit_text
from ..tables.display import DisplayTable
from ..units import fmt_T, symbol, temperature_unit
from . import budget as bud
from . import kirchhoff as kh
from . import numbers as N
from .numbers import Num, Parts
from .probability import probability_parts
from .ranking import cut
from .statement import statements, symbol_of

DOCUMENT_LABELS = (("reference", "Reference"), ("revision", "Revision"), ("prepared_by", "Prepared by"),
                   ("checked_by", "Checked by"), ("date", "Date"))


def document_rows(results: Mapping) -> list[tuple[str, str, bool]]:
    """(label, value, monospace) of the header block: [document] keys, then the case and run identity."""
    doc = results.get("document") if isinstance(results.get("document"), Mapping) else {}
    case = results.get("case") or {}
    run = results.get("run") or {}
    rows = [(label, text(doc.get(k)), False) for k, label in DOCUMENT_LABELS if text(doc.get(k))]
    rows.append(("Case file", text(case.get("file")), True))
    rows.append(("SHA-256 of the case file", text(case.get("sha256")), True))
    rows.append(("Calculated", " · ".join(x for x in (f"uqthermo {text(run.get('version'))}" if run.get("version") else "",
                                                       text(run.get("date"))) if x), False))
    return [r for r in rows if r[1]]


def shares_table(output: Mapping, oi: int, k: int, key: str) -> DisplayTable:
    """Fallback when a point has no ``budget`` block: variance shares by datum (99 % rule)."""
    p = points(output)[k]
    t = DisplayTable(key, f"Variance shares of {text(output.get('name'))} by datum", ["Datum", "Share of u²(y) / %"], ["l", "r"])
    ds = [(j, d) for j, d in enumerate(p.get("drivers") or []) if isinstance(d, Mapping)]
    kept, rest = cut(ds, lambda jd: jd[1].get("share"))
    base = N.path("outputs", oi, "points", k, "drivers")
    for j, d in kept:
        t.rows.append([text(d.get("datum")), N.percent(d.get("share"), 1, N.path(base, j, "share"))])
    if rest:
        t.rows.append([f"{len(rest)} other data (together)",
                       Num(fmt_fixed(100 * sum(num(d.get("share")) or 0 for _, d in rest), 1),
                           " ".join(N.path(base, j, "share") for j, _ in rest), "sum_percent")])
    cs = num(p.get("correlation_share"))
    if cs:
        t.rows.append(["correlations between data (net)", N.percent(cs, 1, N.path("outputs", oi, "points", k, "correlation_share"))])
    t.notes.append("The full GUM budget (sensitivity coefficients and contributions) is not in this results.json; "
                   "the shares are the run's driver ranking.")
    return t


def _bound(p: Mapping, which: str) -> tuple[Any, str]:
    mg = p.get("margins") or {}
    if num(mg.get(which)) is not None:
        return mg.get(which), N.path("margins", which)
    os_ = (p.get("monte_carlo") or {}).get("one_sided") or {}
    alt = {"upper_P95": "P95", "upper_P99": "P99"}.get(which)
    if alt and num(os_.get(alt)) is not None:
        return os_.get(alt), N.path("monte_carlo", "one_sided", alt)
    return None, ""


def design_table(results: Mapping, key: str, tunit: str) -> DisplayTable:
    """Design and safety numbers of heat-release and adiabatic outputs (and any output with a limit)."""
    t = DisplayTable(key, "Design and safety numbers", ["Output", "Quantity", "Value", "Basis"], ["l", "w", "r", "w"])
    for oi, o in enumerate(outputs(results)):
        pts = points(o)
        kind = o.get("kind")
        if not pts or kind not in ("heat_release", "adiabatic_temperature_rise") and p_exceed(pts) is None:
            continue
        k = headline_index(o)
        p = pts[k]
        base = N.path("outputs", oi, "points", k)
        unit = text(o.get("unit"))
        us = "" if unit in ("", "1") else f" {unit}"
        d = uncertainty_decimals((p.get("monte_carlo") or {}).get("standard_uncertainty")
                                 or (p.get("linear") or {}).get("standard_uncertainty"))
        name = text(o.get("name"))
        basis = ("Monte Carlo quantile" if str((p.get("margins") or {}).get("basis") or "").startswith("Monte")
                 or p.get("monte_carlo") else "linear (normal) approximation")
        sym = symbol_of(o)

        def row(label, value, basis_text=""):
            t.rows.append([name if not any(r[0] == name for r in t.rows) else "", label, value, basis_text])

        for which, lab in (("upper_P95", "one-sided 95 % upper bound"), ("upper_P99", "one-sided 99 % upper bound")):
            v, rel = _bound(p, which)
            if v is not None and kind in ("heat_release", "adiabatic_temperature_rise"):
                row(f"{sym}: {lab}", Parts([N.value(v, d, N.path(base, rel)), us]), basis)
        if kind == "adiabatic_temperature_rise":
            no_evap = "boiling_limited" in p or p.get("mtsr_basis")
            if num(p.get("final_temperature_K")) is not None:
                row("final temperature T_start + ΔT_ad" + (" (no evaporative cooling)" if no_evap else ""),
                    N.temperature(p.get("final_temperature_K"), tunit, N.path(base, "final_temperature_K"), dec=d), "estimate")
            if num(p.get("mtsr_K")) is not None:
                row("MTSR (maximum temperature of the synthesis reaction)",
                    N.temperature(p.get("mtsr_K"), tunit, N.path(base, "mtsr_K"), dec=d),
                    "estimate; rise without evaporative cooling (Stoessel)" if p.get("mtsr_basis") else "estimate")
            for k2, lab in (("mtt", "MTT (maximum technical temperature), stated"), ("td24", "T_D24, stated")):
                written = (o.get(k2) or {}).get("as_written") if isinstance(o.get(k2), Mapping) else None
                if isinstance(written, str) and written.strip():
                    from ..units import as_written

                    row(lab, Num(as_written(written), N.path("outputs", oi, k2, "as_written"), "as_written"), "case")
                elif num(o.get(f"{k2}_K")) is not None:
                    row(lab, N.temperature(o.get(f"{k2}_K"), tunit, N.path("outputs", oi, f"{k2}_K")), "case")
            if p.get("criticality_class") is not None:
                row("criticality class (Stoessel, 1 lowest to 5 highest)",
                    Num(text(p.get("criticality_class")), N.path(base, "criticality_class")), "at the estimates")
            probs = p.get("criticality_class_probabilities")
            if isinstance(probs, Mapping) and probs:
                ubs = p.get("criticality_class_probabilities_upper_bounds")
                ubs = ubs if isinstance(ubs, Mapping) else {}
                for c, v in probs.items():
                    if num(v):
                        view = {"p": v, "p_upper_bound": ubs.get(c), "p_trials": (p.get("monte_carlo") or {}).get("samples")}
                        parts = probability_parts(view, "p", "")
                        if parts and isinstance(parts[0], Num):      # point the number at its place in results.json
                            paths = [N.path(base, "criticality_class_probabilities", c)]
                            if ubs.get(c) is not None:
                                paths.append(N.path(base, "criticality_class_probabilities_upper_bounds", c))
                            parts = [Num(parts[0].text, " ".join(paths), parts[0].op)]
                        row(f"P(criticality class {text(c)})", Parts(parts), "Monte Carlo, all trials")
            for k2, lab in (("p_mtsr_above_mtt", "P(MTSR > MTT)"), ("p_mtsr_above_td24", "P(MTSR > T_D24)"),
                            ("p_phase_change", "P(the charge reaches a phase change on its real path)")):
                if p.get(k2) is not None:
                    row(lab, Parts(probability_parts(p, k2, base)), "Monte Carlo")
            bl = p.get("boiling_limited")
            if isinstance(bl, Mapping):
                bbase = N.path(base, "boiling_limited")
                ft = bl.get("final_temperature_K") if isinstance(bl.get("final_temperature_K"), Mapping) else {}
                if num(ft.get("estimate")) is not None:
                    row("final temperature with evaporative cooling (boiling-limited end state)",
                        N.temperature(ft.get("estimate"), tunit, N.path(bbase, "final_temperature_K", "estimate"),
                                      dec=uncertainty_decimals(ft.get("standard_uncertainty"))),
                        "estimate; the charge may boil, open system")
                if bl.get("p_tempering_point_reached") is not None:
                    row("P(the tempering point is reached)", Parts(probability_parts(bl, "p_tempering_point_reached", bbase)),
                        "Monte Carlo")
                for ei, ev in enumerate(bl.get("evaporated") or []):
                    kg = ev.get("kg") if isinstance(ev.get("kg"), Mapping) else {}
                    if num(kg.get("P95")) is not None:
                        row(f"{text(ev.get('species'))} evaporated, one-sided 95 % upper bound",
                            Parts([Num(fmt_fixed(kg.get("P95"), 3), N.path(bbase, "evaporated", ei, "kg", "P95")), " kg"]),
                            "Monte Carlo quantile")
            for k2, lab in (("specific_heat_of_reaction", "heat of reaction per mass of charge"),
                            ("specific_heat_capacity", "specific heat capacity of the charge"),
                            ("charge_mass", "mass of the charge"), ("final_pressure", "final pressure of the closed vessel")):
                blk = p.get(k2) if isinstance(p.get(k2), Mapping) else None
                if not blk or num(blk.get("estimate")) is None:
                    continue
                u2 = num(blk.get("standard_uncertainty"))
                d2 = uncertainty_decimals(u2) if u2 else None
                val = N.value(blk.get("estimate"), d2, N.path(base, k2, "estimate")) if d2 is not None else \
                    Num(fmt_fixed(blk.get("estimate"), None), N.path(base, k2, "estimate"))
                b_text: list[Any] = ["estimate"]
                if d2 is not None:
                    b_text += ["; u = ", N.value(u2, d2, N.path(base, k2, "standard_uncertainty")), f" {text(blk.get('unit'))}"]
                row(lab, Parts([val, f" {text(blk.get('unit'))}"]), Parts(b_text))
        worst = max((q for q in range(len(pts)) if pts[q].get("exceedance_probability") is not None),
                    key=lambda q: num(pts[q].get("exceedance_probability")) or 0.0, default=None)
        if worst is not None:
            pw = pts[worst]
            wbase = N.path("outputs", oi, "points", worst)
            label: list[Any] = ["P(", limit_text(o) or "beyond the limit", ")"]
            if len(pts) > 1:
                label += [" at ", N.temperature(pw.get("temperature_K"), tunit, N.path(wbase, "temperature_K")),
                          " (the highest over the window)"]
            row(Parts(label), Parts(probability_parts(pw, "exceedance", wbase)),
                "Monte Carlo" if pw.get("monte_carlo") else "linear (normal) approximation")
    if t.rows:
        t.notes.append("Estimates from the stated data and model; they support, and never replace, calorimetry and a "
                       "qualified hazard review (see the cautions).")
    return t


def p_exceed(pts) -> Any:
    return next((p.get("exceedance_probability") for p in pts if p.get("exceedance_probability") is not None), None)


def method_parts(results: Mapping) -> Parts:
    run = results.get("run") or {}
    m = str(run.get("method") or "both").lower()
    parts: list[Any] = ["Uncertainties were propagated "]
    if m in ("both", "linear"):
        parts.append("by the GUM law of propagation of uncertainty (JCGM 100:2008)")
    if m == "both":
        parts.append(" and ")
    if m in ("both", "monte-carlo"):
        parts.append("by a JCGM 101:2008 Monte Carlo simulation with ")
        if run.get("adaptive"):
            parts += ["an adaptive number of trials (JCGM 101 §7.9; ", N.count(run.get("samples"), "run/samples"), " used)"]
        else:
            parts += [N.count(run.get("samples"), "run/samples"), " trials"]
        if run.get("sampling"):
            parts.append(f" ({text(run.get('sampling'))} sampling, seed ")
            parts += [Num(str(run.get("seed")), "run/seed", "count") if num(run.get("seed")) is not None else "—", ")"]
    parts.append(". ")
    if m == "both":
        parts.append("The linear result is checked against Monte Carlo (JCGM 101 §8); where they differ by more than the "
                     "numerical tolerance the Monte Carlo result is stated. ")
    parts.append("Input data, their sources and stated uncertainties, the method in full and every result are in the "
                 "appendix; results.json holds every number at full precision.")
    return Parts(parts)


def concise_context(results: Mapping, figure: Callable[[str], dict | None]) -> dict:
    """The concise section's context. Tables become table entries, ``figure(name)`` gives a figure entry
    (or None); both are numbered later, in document order (:func:`uqthermo.report.numbering.number`)."""
    tunit = temperature_unit(results)
    ctx: dict[str, Any] = {"tunit": symbol(tunit), "document_rows": document_rows(results)}
    ctx["statements"] = statements(results, tunit)
    dt = design_table(results, "design", tunit)
    ctx["design"] = table_entry(dt) if dt else None
    kt = kh.concise_table(results, "kirchhoff", tunit)
    ctx["kirchhoff"] = table_entry(kt) if kt else None
    per = []
    for oi, (o, slug) in enumerate(zip(outputs(results), slugs(results))):
        pts = points(o)
        if not pts:
            continue
        k = headline_index(o)
        p = pts[k]
        label = f" at {fmt_T(p.get('temperature_K'), tunit)}" if num(p.get("temperature_K")) is not None else ""
        if bud.has_budget(p):
            tb = bud.budget_table(o, oi, k, f"budget-{slug}", slug, label)
        else:
            tb = shares_table(o, oi, k, f"shares-{slug}")
        fig = figure(f"curve-{slug}") if len(pts) > 1 else None
        fig = fig or figure(f"distribution-{slug}")
        per.append({"name": text(o.get("name")), "kind": kind_label(o.get("kind")), "anchor": f"concise-{oi + 1}",
                    "table": table_entry(tb) if tb else None, "figure": fig})
    ctx["per_output"] = per
    ctx["method"] = method_parts(results)
    ctx["p_label"] = pct_label(coverage_probability(results))
    return ctx


__all__ = ["concise_context", "document_rows", "design_table", "shares_table", "method_parts"]

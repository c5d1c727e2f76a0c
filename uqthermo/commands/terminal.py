"""What the commands print on the terminal: the summary table of a run, its safety lines and the notes of
an output folder. Every user string passes through :mod:`uqthermo.text_safety` before the terminal library sees it."""

from __future__ import annotations

import sys

from ..pipeline.publish import OutputFolder


def make_console(stderr: bool = False):
    import shutil

    from rich.console import Console

    width = max(shutil.get_terminal_size((150, 40)).columns, 120)
    return Console(stderr=stderr, highlight=False, width=width, emoji=False)


def sig(x: float | None, u: float | None = None, digits: int = 2) -> str:
    """Round ``x`` to match ``u`` given to ``digits`` significant digits (GUM 7.2.6)."""
    import math

    if x is None or not isinstance(x, (int, float)) or not math.isfinite(x):
        return "—"
    if u is None or not isinstance(u, (int, float)) or not math.isfinite(u) or u <= 0:
        return f"{x:.{digits + 2}g}"
    dec = digits - 1 - math.floor(math.log10(u))
    if round(u, dec) >= 10 ** (digits - dec):   # e.g. 0.0999 with 2 digits rounds to 0.10
        dec -= 1
    if dec > 6 or abs(x) >= 1e9:
        return f"{x:.{max(digits - 1, 0) + max(0, math.floor(math.log10(abs(x) or 1)) - math.floor(math.log10(u)))}e}"
    return f"{round(x, dec):.{max(dec, 0)}f}"


def _reported(pt: dict) -> str:
    """How the linear interval compared with Monte Carlo (JCGM 101 §8), in words; the row shows Monte Carlo."""
    ok = pt.get("linear_validated")
    if not pt.get("monte_carlo"):
        return "linear only"
    if ok is None:
        return "not decided" if (pt.get("validation") or {}).get("verdict") == "undecided" else "—"
    return "within δ" if ok else "differs > δ"


def print_summary(results: dict, console=None) -> None:
    """The compact terminal table: estimate, u, coverage interval, top drivers per output point.

    Every string of ``results`` is user text or derived from it: it is shown through
    :func:`uqthermo.text_safety.markup_view` (control characters made visible, markup escaped).
    """
    from rich.table import Table

    from ..report.drivers import driver_rows, rows_sum_note, share_text
    from ..text_safety import markup_view, terminal_text

    raw, results = results, markup_view(results)
    console = console or make_console()
    p = None
    # one legend line per ranking method; for linear shares the wording with covariance rows covers the plain one
    notes: dict[str | None, str] = {}
    table = Table(title=results["case"]["title"], title_justify="left", header_style="bold", show_lines=False)
    # linear shares and Sobol' indices in one table: each row and each legend line carry a tag ("[u²]",
    # "[S1]") so that every legend visibly applies to its rows (rich markup: a backslash makes "[" literal)
    methods = {pt.get("drivers_method") for out in results["outputs"] for pt in out["points"] if pt.get("drivers")}
    tags = {"linear": "\\[u²] ", "sobol": "\\[S1] "} if len(methods - {None}) > 1 else {}
    for col in ("output", "T / K", "estimate", "u", "coverage interval", "linear vs MC", "top drivers (share)"):
        table.add_column(col, justify="right" if col in ("T / K", "estimate", "u") else "left", no_wrap=col == "linear vs MC")
    for out in results["outputs"]:
        pts = out["points"]
        show = pts if len(pts) <= 6 else [pts[0], pts[len(pts) // 2], pts[-1]]
        for pt in show:
            p = pt.get("coverage_probability", 0.95)
            src = (pt.get("linear") if pt.get("reported") == "linear" else None) or pt.get("monte_carlo") or pt.get("linear") or {}
            est = src.get("mean", src.get("estimate"))
            u = src.get("standard_uncertainty")
            ci = src.get("coverage_interval") or [None, None]
            drivers = ", ".join(f"{r.label} {share_text(r.share)} %" for r in driver_rows(pt, max_data=3, skip_zero=True))
            tag = tags.get(pt.get("drivers_method"), "")
            if drivers:
                drivers = tag + drivers
            method = pt.get("drivers_method")
            if drivers and rows_sum_note(pt) and (method not in notes or pt.get("covariance_terms")):
                notes[method] = tag + rows_sum_note(pt)
            table.add_row(f"{out['name']} \\[{out['unit']}]", f"{pt['temperature_K']:.2f}", sig(est, u), sig(u, u),
                          f"[{sig(ci[0], u)}, {sig(ci[1], u)}]",
                          _reported(pt), drivers)
        if len(pts) > len(show):
            table.add_row(f"  … {len(pts) - len(show)} more temperatures in results.json", "", "", "", "", "", "")
    console.print(table)
    for n in notes.values():
        console.print(f"top drivers: {n}")
    from ..report.fields import mass_basis

    for out in raw["outputs"]:       # per kg of what (the table's column has room for the unit only)
        if mass_basis(out):
            console.print(terminal_text(f"{out['name']} [{out['unit']}]: per kg of {mass_basis(out)}"),
                          highlight=False, markup=False)
    for line in safety_lines(raw):     # plain text: control characters made visible, no markup
        console.print(terminal_text(line), highlight=False, markup=False)
    if p is not None:
        console.print(f"coverage probability {p:g}; estimate and u from Monte Carlo where run "
                      f"({results['run']['samples']} trials, {results['run']['sampling']}), else the linear method; "
                      "'linear vs MC': whether the linear (GUM) interval agrees with Monte Carlo within the numerical "
                      "tolerance δ (JCGM 101 §8) — where it differs, the Monte Carlo result is the one reported; "
                      "'not decided': the Monte Carlo is not stable to δ (JCGM 101 §7.9), the row shows the linear result")
    from ..report.sections.warnings import grouped

    for w in grouped(results):      # per-temperature repeats folded into one line per output
        console.print(f"[yellow]warning:[/yellow] {w}")
    if results.get("cautions"):
        console.print("[bold]caution:[/bold] " + results["cautions"][0])


def safety_lines(results: dict) -> list[str]:
    """Design and safety numbers under the summary table: every probability with its one-sided
    upper bound (report.style.probability_text), the MTSR (no evaporative cooling) and, separately,
    the boiling-limited end state."""
    from ..report.style import count_text, probability_text
    from ..report.tables.design import limit_text, probability_cell

    def P(label: str, txt: str) -> str:
        return f"P({label}) {'' if txt.startswith('<') else '= '}{txt}"

    lines = []
    for out in results.get("outputs", []):
        name = out.get("name")
        pts = out.get("points") or []
        lim = limit_text(out)
        probs = [pt for pt in pts if pt.get("exceedance_probability") is not None]
        if probs:
            worst = max(probs, key=lambda pt: pt["exceedance_probability"])
            where = "" if len(pts) == 1 else f" (highest of {len(pts)} temperatures, at {worst['temperature_K']:.2f} K)"
            lines.append(f"{name}: {P(lim or 'beyond the limit', probability_cell(worst, 'exceedance_probability'))}{where}")
        if out.get("kind") != "adiabatic_temperature_rise" or not pts:
            continue
        pt = pts[0]
        if pt.get("mtsr_K") is not None:
            parts = [f"MTSR {pt['mtsr_K']:.1f} K (rise without evaporative cooling)"]
            for key, lab in (("p_mtsr_above_mtt", "MTSR > MTT"), ("p_mtsr_above_td24", "MTSR > TD24")):
                if pt.get(key) is not None:
                    parts.append(P(lab, probability_cell(pt, key)))
            if pt.get("criticality_class") is not None:
                cp = pt.get("criticality_class_probabilities") or {}
                ub = pt.get("criticality_class_probabilities_upper_bounds") or {}
                n = (pt.get("monte_carlo") or {}).get("samples")
                shown = [f"{k}: {probability_text(v, ub.get(k), None)}" for k, v in cp.items() if v]
                parts.append(f"criticality class {pt['criticality_class']} at the estimates" +
                             (f" (class probabilities {', '.join(shown)}; {count_text(n)} trials)" if shown and n else ""))
            lines.append(f"{name}: " + "; ".join(parts))
        bl = pt.get("boiling_limited")
        if bl:
            ft = bl.get("final_temperature_K") or {}
            t_end = ft.get("mean", ft.get("estimate"))
            parts = ["boiling-limited end state (evaporative cooling)"]
            if bl.get("p_tempering_point_reached") is not None:
                parts.append(P("tempering point reached", probability_text(
                    bl["p_tempering_point_reached"], bl.get("p_tempering_point_reached_upper_bound"), bl.get("trials"))))
            if t_end is not None:
                parts.append(f"end temperature {t_end:.1f} K")
            for ev in bl.get("evaporated") or []:
                mol, kg = ev.get("mol") or {}, ev.get("kg") or {}
                m = mol.get("mean", mol.get("estimate"))
                if m is None:
                    continue
                txt = f"{ev['species']}({ev['phase']}) evaporated: mean {m:.3g} mol"
                if kg.get("mean", kg.get("estimate")) is not None:
                    txt += f" ({kg.get('mean', kg.get('estimate')):.3g} kg)"
                if mol.get("P95") is not None:
                    txt += f", 95th percentile {mol['P95']:.3g} mol"
                parts.append(txt)
            lines.append(f"{name}: " + "; ".join(parts))
        for key, lab, unit in (("specific_heat_of_reaction", "Q'_r", "kJ/kg of reaction mass"), ("specific_heat_capacity", "c'_p", "J/(g*K)"),
                               ("final_pressure", "final pressure of the closed vessel (ideal gas)", "kPa")):
            blk = pt.get(key)
            if blk:
                v = blk.get("mean", blk.get("estimate"))
                u = blk.get("standard_uncertainty")
                lines.append(f"{name}: {lab} = {sig(v, u)}" + (f" ± {sig(u, u)}" if u else "") + f" {unit}")
    return lines


def print_publish_notes(folder: OutputFolder) -> None:
    """What ``--force`` replaced and which files it left alone (stderr)."""
    from ..text_safety import terminal_text

    if folder.outcome is not None:
        for line in folder.outcome.notes():
            print(f"uqthermo: {terminal_text(line)}", file=sys.stderr)


__all__ = ["make_console", "sig", "print_summary", "safety_lines", "print_publish_notes"]

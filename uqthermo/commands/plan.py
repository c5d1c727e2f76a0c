"""``uqthermo plan``: print and write the cheapest data purchases that meet a target."""

from __future__ import annotations

from pathlib import Path

from ..case.loader import load_case
from ..errors import InputError, Problem


def _fmt(x, digits: int = 3) -> str:
    return "—" if x is None else f"{x:.{digits}g}"


def execute(args) -> int:
    import math

    if args.budget is not None and not (math.isfinite(args.budget) and args.budget >= 0):
        raise InputError([Problem(args.case, "--budget", f"must be a finite non-negative number, got {args.budget!r}")])
    if not args.target and args.budget is None:
        raise InputError([Problem(args.case, "--target", "give a target (--target \"U95 <= 2 kJ/mol\") or a budget "
                                                         "(--budget 10000), or both")])
    if getattr(args, "relative", False) and args.target:
        raise InputError([Problem(args.case, "--relative", "--relative is for a budget without target; write a "
                                                           "relative target as \"U95 <= 5 %\" instead")])
    folder = None
    if args.out:
        from ..pipeline.publish import OutputFolder

        # checked and locked before any computation, released at the end
        folder = OutputFolder(args.out, force=args.force, protected=(args.case,), command="plan").open()
    try:
        return _plan(args, folder)
    except InputError as e:
        # problems found outside the case reader (the target, the planner) belong to the case file too
        raise InputError([p if p.file else Problem(str(args.case), {"target": "--target", "budget": "--budget"}.get(
            p.key, p.key), p.message) for p in e.problems]) from None
    finally:
        if folder is not None:
            folder.close()


def _plan(args, folder) -> int:
    from rich.console import Console
    from rich.table import Table

    from ..pipeline.purchase_plan import compute_plan
    from ..pipeline.job import prepare_model
    from ..text_safety import markup, markup_view

    case = load_case(args.case)
    model, _ = prepare_model(case)
    raw_plan = compute_plan(case, model, target=args.target, budget=args.budget, output_name=args.output_name,
                            relative=getattr(args, "relative", False))
    plan = markup_view(raw_plan)         # user text (names, notes, units) printed as written, never as markup
    console = Console(highlight=False, width=140, emoji=False)
    unit = plan["target"]["unit"]
    metric = plan["target"]["metric"]
    label = {"U": f"U{round(100 * (plan['target']['coverage_probability'] or 0.95))}", "u": "u",
             "halfwidth": "half-width"}.get(metric, metric)
    console.print(f"[bold]{markup(case.title)}[/bold]")
    console.print(f"planned for: {plan['target']['output']}  ({plan['method']})")
    if unit == "of target":
        label = f"{label}/target"
        unit = ""
    elif unit == "%":
        label = f"{label} as % of the estimate"
        unit = "%"
    console.print(f"now: worst {label} = {_fmt(plan['U_now'])} {unit} at {plan['target']['worst_point_now']}")
    if plan["target"]["text"]:
        console.print(f"target: {plan['target']['text']}")
    if plan["budget"] is not None:
        console.print(f"budget: {plan['budget']:g}")
    cands = Table(title="candidate measurements", title_justify="left")
    for c in ("id", "datum", "what", "new u / old u", "cost", "lead time (days)"):
        cands.add_column(c)
    for c in plan["candidates"]:
        cands.add_row(c["id"], c["datum"], c["action"], f"{c['factor']:.3g}", f"{c['cost']:g}", _fmt(c["lead_time_days"]))
    console.print(cands)
    front = Table(title=f"Pareto front: cost against worst-point {label}" + (f" ({unit})" if unit else ""),
                  title_justify="left")
    for c in ("cost", label, "buy", "meets target"):
        front.add_column(c)
    best = plan["best"]
    from ..report.rounding import distinct_sig

    digits = distinct_sig([p["U"] for p in plan["front"]] + [plan["target"]["U"]])
    for p in plan["front"]:
        chosen = best is not None and p["set"] == best["set"] and p["cost"] == best["cost"]
        meets = "—" if plan["target"]["U"] is None else ("yes" if p["U"] <= plan["target"]["U"] else "no")
        style = "bold" if chosen else None
        front.add_row(f"{p['cost']:g}", _fmt(p["U"], digits), ", ".join(p["set"]) or "(nothing)", meets, style=style)
    console.print(front)
    if best is None:
        console.print("[red]no selection of the candidates meets the target[/red]" if plan["target"]["U"] is not None
                      else "no selection fits the budget")
    else:
        console.print(f"[bold]recommended:[/bold] buy {', '.join(best['set']) or 'nothing'} for {best['cost']:g} "
                      f"→ worst {label} = {_fmt(best['U'])} {unit}")
    for w in plan["warnings"]:
        console.print(f"[yellow]warning:[/yellow] {w}")
    if folder is not None:
        from .terminal import print_publish_notes

        _write(raw_plan, case, folder, args.force)
        print_publish_notes(folder)
        out = markup(folder.given)
        console.print(f"wrote {out}/plan.json, {out}/plan.csv and {out}/figures/plan-front.png|svg")
    return 0 if (best is not None) else 1


def _write(plan: dict, case, out, force: bool) -> None:
    from ..report.figures.plan_front import draw_plan
    from ..report.style import figure_style
    from ..pipeline.output_files import publish_dir, write_json_atomic
    from ..text_safety import csv_text

    def build(tmp: Path):
        write_json_atomic(tmp / "plan.json", {"format": "uqthermo.plan/1", "case": {"title": case.title,
                                              "sha256": case.sha256, "file": case.path}, "plan": plan})
        rows = []
        for p in plan["front"]:
            meets = "" if plan["target"]["U"] is None else p["U"] <= plan["target"]["U"]
            rows.append([p["cost"], p["U"], plan["target"]["unit"], " ".join(p["set"]), meets])
        (tmp / "plan.csv").write_text(csv_text(["cost", "worst_U", "unit", "set", "meets_target"], rows),
                                      encoding="utf-8")
        (tmp / "figures").mkdir()
        with figure_style():
            fig = draw_plan(plan)
            fig.savefig(tmp / "figures" / "plan-front.png", dpi=160)
            fig.savefig(tmp / "figures" / "plan-front.svg")
        import matplotlib.pyplot as plt

        plt.close(fig)

    publish_dir(build, out, force)

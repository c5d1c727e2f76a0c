"""Implementations of the CLI commands (argument parsing lives in :mod:`uqthermo.cli`)."""

from __future__ import annotations

import json
import sys
from pathlib import Path

from .errors import InputError, Problem, UqthermoError
from .run import SAFETY_CAUTIONS, prepare_out_dir, publish_dir, run_case, write_json_atomic, write_outputs


def _console(stderr: bool = False):
    import shutil

    from rich.console import Console

    width = max(shutil.get_terminal_size((150, 40)).columns, 120)
    return Console(stderr=stderr, highlight=False, width=width)


def _sig(x: float | None, u: float | None = None, digits: int = 2) -> str:
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


def print_summary(results: dict, console=None) -> None:
    """The compact terminal table: estimate, u, coverage interval, top drivers per output point."""
    from rich.table import Table

    from .report.drivers import driver_rows, rows_sum_note, share_text

    console = console or _console()
    p = None
    notes: dict[str, None] = {}
    table = Table(title=results["case"]["title"], title_justify="left", header_style="bold", show_lines=False)
    for col in ("output", "T / K", "estimate", "u", "coverage interval", "linear ok", "top drivers (share)"):
        table.add_column(col, justify="right" if col in ("T / K", "estimate", "u") else "left")
    for out in results["outputs"]:
        pts = out["points"]
        show = pts if len(pts) <= 6 else [pts[0], pts[len(pts) // 2], pts[-1]]
        for pt in show:
            p = pt.get("coverage_probability", 0.95)
            src = pt.get("monte_carlo") or pt.get("linear") or {}
            est = src.get("mean", src.get("estimate"))
            u = src.get("standard_uncertainty")
            ci = src.get("coverage_interval") or [None, None]
            ok = pt.get("linear_validated")
            drivers = ", ".join(f"{r.label} {share_text(r.share)} %" for r in driver_rows(pt, max_data=3, skip_zero=True))
            if drivers and rows_sum_note(pt):
                notes[rows_sum_note(pt)] = None
            table.add_row(f"{out['name']} [{out['unit']}]", f"{pt['temperature_K']:.2f}", _sig(est, u), _sig(u, u),
                          f"[{_sig(ci[0], u)}, {_sig(ci[1], u)}]",
                          "—" if ok is None else ("yes" if ok else "NO"), drivers)
            if "exceedance_probability" in pt and pt["exceedance_probability"] is not None:
                se = pt.get("exceedance_standard_error")
                table.add_row("", "", "", "", f"P(T_final > {out.get('limit_K'):.1f} K) = "
                              f"{pt['exceedance_probability']:.3g}" + (f" ± {se:.1g}" if se else ""), "", "")
            if pt.get("p_phase_change") is not None:
                table.add_row("", "", "", "", f"P(phase change of the charge) = {pt['p_phase_change']:.3g}", "", "")
        if len(pts) > len(show):
            table.add_row(f"  … {len(pts) - len(show)} more temperatures in results.json", "", "", "", "", "", "")
    console.print(table)
    for n in notes:
        console.print(f"top drivers: {n}")
    if p is not None:
        console.print(f"coverage probability {p:g}; estimate and u from Monte Carlo where run "
                      f"({results['run']['samples']} trials, {results['run']['sampling']}), else the linear method")
    for w in results.get("warnings", []):
        console.print(f"[yellow]warning:[/yellow] {w}")
    if results.get("cautions"):
        console.print("[bold]caution:[/bold] " + results["cautions"][0])


#: what an earlier uqthermo output folder holds at its top (run, report, plan, fit)
def cmd_run(args) -> int:
    out = prepare_out_dir(args.out, args.force, (args.case,))
    quiet = args.quiet or not sys.stderr.isatty()
    progress = None
    bar = None
    if not args.quiet:
        from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

        bar = Progress(TextColumn("Monte Carlo"), BarColumn(), MofNCompleteColumn(), TimeRemainingColumn(),
                       console=_console(stderr=True), transient=True, disable=quiet)
        task = bar.add_task("mc", total=None)

        def progress(done: int, total: int | None) -> None:
            bar.update(task, completed=done, total=total)

    if bar is not None:
        bar.start()
    try:
        result = run_case(args.case, samples=args.samples, seed=args.seed, method=args.method, sampling=args.sampling,
                          engine=args.engine, scheduler=args.scheduler, progress=progress)
    finally:
        if bar is not None:
            bar.stop()
    write_outputs(result, out, force=args.force, report=not args.no_report)
    if not args.quiet:
        print_summary(result.results)
        _console().print(f"wrote {out}/results.json" + ("" if args.no_report else f", {out}/report.html, {out}/report.md, "
                                                                                    f"figures/ and tables/"))
    return 0


def cmd_check(args) -> int:
    from .case.loader import load_case
    from .run import prepare_model

    problems: list[Problem] = []
    console = _console()
    for path in args.cases:
        try:
            case = load_case(path)
            model, model_warnings = prepare_model(case)
            warnings = case.warnings + model_warnings
        except InputError as e:
            problems += e.problems
            continue
        n_unc = sum(1 for d in case.data.values() if d.uncertain)
        console.print(f"{path}: OK — {len(case.species)} species, {len(case.reactions)} reactions, "
                      f"{len(case.outputs)} outputs, {n_unc} uncertain data ({len(model.inputs.variables)} variables)")
        for w in warnings:
            console.print(f"{path}: warning: {w}")
    if problems:
        for p in problems:
            print(str(p), file=sys.stderr)
        print(f"{len(problems)} problem(s) found", file=sys.stderr)
        return 2
    return 0


def cmd_plan(args) -> int:
    from .planning_cli import run_plan

    return run_plan(args)


def cmd_fit(args) -> int:
    from .fit_cli import run_fit

    return run_fit(args)


def cmd_data(args) -> int:
    from .data_cli import run_data

    return run_data(args)


_OUTPUT_TYPES = {"phase_changes": (list, dict), "points": (list, dict)}
_POINT_TYPES = {"linear": dict, "monte_carlo": dict, "validation": dict, "margins": dict, "sensitivity": dict,
                "drivers": (list, dict), "whatif": (list, dict)}


def _results_shape(doc: dict, fname: str) -> list[Problem]:
    """The containers the report reads must have the types of contract §3 (a hand-edited file may not)."""
    problems = []

    def check(node: dict, key: str, spec, where: str) -> bool:
        if key not in node or node[key] is None:
            return True
        v = node[key]
        ok = isinstance(v, list) and all(isinstance(x, spec[1]) for x in v) if isinstance(spec, tuple) else isinstance(v, spec)
        if not ok:
            problems.append(Problem(fname, f"{where}{key}", "must be " + ("a list of tables" if isinstance(spec, tuple)
                                                                           else "a table" if spec is dict else "a list")))
        return ok

    for key, typ in (("case", dict), ("run", dict), ("outputs", (list, dict)), ("inputs", (list, dict)),
                     ("warnings", list), ("correlations", (list, dict)), ("reactions", (list, dict)),
                     ("convergence", dict), ("cautions", list)):
        check(doc, key, typ, "")
    if problems:
        return problems
    for i, out in enumerate(doc.get("outputs") or []):
        for key, typ in _OUTPUT_TYPES.items():
            check(out, key, typ, f"outputs[{i}].")
        if problems:
            continue
        for j, pt in enumerate(out.get("points") or []):
            where = f"outputs[{i}].points[{j}]."
            ok = [check(pt, key, typ, where) for key, typ in _POINT_TYPES.items()]
            if not all(ok):
                continue
            for d, drv in enumerate(pt.get("drivers") or []):
                if not isinstance(drv.get("datum"), str):
                    problems.append(Problem(fname, f"{where}drivers[{d}].datum", "must be a string"))
    return problems


def cmd_report(args) -> int:
    path = Path(args.results)
    if path.exists() and not path.is_file():   # a folder, pipe or device
        raise InputError([Problem(str(path), "", "is not a regular file; give the results.json written by 'uqthermo run'")])
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError([Problem(str(path), "", "file not found")]) from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as e:
        raise InputError([Problem(str(path), "", f"not a readable results.json ({e})")]) from None
    except RecursionError:
        raise InputError([Problem(str(path), "", "not a readable results.json (nested too deep)")]) from None
    if not isinstance(doc, dict) or doc.get("format") != "uqthermo.results/1":
        raise InputError([Problem(str(path), "format", "not a uqthermo results file (format uqthermo.results/1)")])
    problems = _results_shape(doc, str(path))
    if problems:
        raise InputError(problems)
    out = prepare_out_dir(args.out, args.force, (args.results,))
    from .report import write_report

    def build(tmp: Path):
        write_json_atomic(tmp / "results.json", doc)
        return write_report(doc, tmp)

    publish_dir(build, out, args.force)
    _console().print(f"wrote {out}/report.html and {out}/report.md")
    return 0


__all__ = ["cmd_run", "cmd_check", "cmd_plan", "cmd_fit", "cmd_data", "cmd_report", "print_summary", "SAFETY_CAUTIONS",
           "UqthermoError"]

"""Implementations of the CLI commands (argument parsing lives in :mod:`uqthermo.cli`)."""

from __future__ import annotations

import json
import sys
from pathlib import Path

from .errors import InputError, Problem, UqthermoError
from .pipeline.publish import OutputFolder
from .run import RUN_LOG, SAFETY_CAUTIONS, run_case, with_run_log, write_json_atomic, write_outputs


def _console(stderr: bool = False):
    import shutil

    from rich.console import Console

    width = max(shutil.get_terminal_size((150, 40)).columns, 120)
    return Console(stderr=stderr, highlight=False, width=width, emoji=False)


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
    """The compact terminal table: estimate, u, coverage interval, top drivers per output point.

    Every string of ``results`` is user text or derived from it: it is shown through
    :func:`uqthermo.text_safety.markup_view` (control characters made visible, markup escaped).
    """
    from rich.table import Table

    from .report.drivers import driver_rows, rows_sum_note, share_text
    from .text_safety import markup_view, terminal_text

    raw, results = results, markup_view(results)
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
            table.add_row(f"{out['name']} \\[{out['unit']}]", f"{pt['temperature_K']:.2f}", _sig(est, u), _sig(u, u),
                          f"[{_sig(ci[0], u)}, {_sig(ci[1], u)}]",
                          "—" if ok is None else ("yes" if ok else "NO"), drivers)
        if len(pts) > len(show):
            table.add_row(f"  … {len(pts) - len(show)} more temperatures in results.json", "", "", "", "", "", "")
    console.print(table)
    for n in notes:
        console.print(f"top drivers: {n}")
    for line in safety_lines(raw):     # plain text: control characters made visible, no markup
        console.print(terminal_text(line), highlight=False, markup=False)
    if p is not None:
        console.print(f"coverage probability {p:g}; estimate and u from Monte Carlo where run "
                      f"({results['run']['samples']} trials, {results['run']['sampling']}), else the linear method")
    for w in results.get("warnings", []):
        console.print(f"[yellow]warning:[/yellow] {w}")
    if results.get("cautions"):
        console.print("[bold]caution:[/bold] " + results["cautions"][0])


def safety_lines(results: dict) -> list[str]:
    """Design and safety numbers under the summary table: every probability with its one-sided
    upper bound (report.style.probability_text), the MTSR (no evaporative cooling) and, separately,
    the boiling-limited end state."""
    from .report.style import count_text, probability_text
    from .report.tables import limit_text, probability_cell

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
        for key, lab, unit in (("specific_heat_of_reaction", "Q'_r", "kJ/kg"), ("specific_heat_capacity", "c'_p", "J/(g*K)"),
                               ("final_pressure", "final pressure of the closed vessel (ideal gas)", "kPa")):
            blk = pt.get(key)
            if blk:
                v = blk.get("mean", blk.get("estimate"))
                u = blk.get("standard_uncertainty")
                lines.append(f"{name}: {lab} = {_sig(v, u)}" + (f" ± {_sig(u, u)}" if u else "") + f" {unit}")
    return lines


def cmd_run(args) -> int:
    # the output folder is checked and locked before any computation, released at the end
    folder = OutputFolder(args.out, force=args.force, protected=(args.case,), command="run").open()
    try:
        return _run_into(args, folder)
    finally:
        folder.close()


def print_publish_notes(folder: OutputFolder) -> None:
    """What ``--force`` replaced and which files it left alone (stderr)."""
    from .text_safety import terminal_text

    if folder.outcome is not None:
        for line in folder.outcome.notes():
            print(f"uqthermo: {terminal_text(line)}", file=sys.stderr)


def _run_into(args, folder: OutputFolder) -> int:
    from .text_safety import markup

    out = markup(folder.given)
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
    write_outputs(result, folder, report=not args.no_report)
    print_publish_notes(folder)
    if not args.quiet:
        print_summary(result.results)
        _console().print(f"wrote {out}/results.json, {out}/run-log.json" + (
            f" and {out}/tables/" if args.no_report else f", {out}/report.html, {out}/report.md, figures/ and tables/"))
    return 0


def cmd_check(args) -> int:
    from .case.loader import load_case
    from .run import prepare_model

    from .text_safety import markup, terminal_text

    problems: list[Problem] = []
    console = _console()
    for path in args.cases:
        case = None
        try:
            case = load_case(path)
            model, model_warnings = prepare_model(case)
            warnings = case.warnings + model_warnings
        except InputError as e:
            problems += e.problems
            # the warnings often name the slip behind the problems (e.g. a reference temperature in degC)
            for w in (case.warnings if case is not None else getattr(e, "warnings", [])):
                console.print(f"{path}: warning: {w}")
            continue
        n_unc = sum(1 for d in case.data.values() if d.uncertain)
        console.print(f"{markup(path)}: OK — {len(case.species)} species, {len(case.reactions)} reactions, "
                      f"{len(case.outputs)} outputs, {n_unc} uncertain data ({len(model.inputs.variables)} variables)")
        for w in warnings:
            console.print(f"{markup(path)}: warning: {markup(w)}")
    if problems:
        for p in problems:
            print(terminal_text(str(p)), file=sys.stderr)
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
    if not problems:
        from .pipeline.results_check import results_value_problems

        problems = results_value_problems(doc, str(path))
    if problems:
        raise InputError(problems)
    log = _read_run_log(path.with_name(RUN_LOG))
    from .report import write_report
    from .text_safety import markup

    def build(tmp: Path):
        write_json_atomic(tmp / "results.json", doc)
        if log:
            write_json_atomic(tmp / RUN_LOG, log)
        try:
            return write_report(with_run_log(doc, log), tmp)
        except (TypeError, ValueError, KeyError, IndexError, AttributeError, OverflowError, ZeroDivisionError) as e:
            # the file passed the checks above but still holds something the report cannot draw: it is the
            # input that is wrong (a hand-edited value), not the run
            raise InputError([Problem(str(path), "", f"cannot render this results.json ({type(e).__name__}: {e}); was "
                                                     "it edited by hand? (if it was written by uqthermo unchanged, "
                                                     "please report it)")]) from None

    with OutputFolder(args.out, force=args.force, protected=(args.results,), command="report") as folder:
        folder.publish(build)
    print_publish_notes(folder)
    _console().print(f"wrote {markup(args.out)}/report.html and {markup(args.out)}/report.md")
    return 0


def _read_run_log(path: Path) -> dict | None:
    """The run log beside a results.json (date, duration, versions for the report), if there is a valid one."""
    try:
        if not path.is_file() or path.stat().st_size > 1_000_000:
            return None
        log = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError, UnicodeDecodeError, RecursionError):
        return None
    if not isinstance(log, dict) or log.get("format") != "uqthermo.run-log/1":
        return None
    return {k: v for k, v in log.items() if isinstance(v, (str, int, float)) and not isinstance(v, bool)}


__all__ = ["cmd_run", "cmd_check", "cmd_plan", "cmd_fit", "cmd_data", "cmd_report", "print_summary", "SAFETY_CAUTIONS",
           "UqthermoError"]

"""``uqthermo check CASE...``: load and validate case files and build their models, without propagating."""

from __future__ import annotations

import sys

from ..errors import InputError, Problem
from .terminal import make_console


def execute(args) -> int:
    """Check every case in ``args.cases``; exit code 2 when any has problems."""
    from ..case.loader import load_case
    from ..pipeline.job import prepare_model

    from ..text_safety import markup, terminal_text

    problems: list[Problem] = []
    console = make_console()
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
        n_var = len(model.inputs.variables)
        console.print(f"{markup(path)}: OK — {len(case.species)} species, {_count(len(case.reactions), 'reaction')}, "
                      f"{_count(len(case.outputs), 'output')}, {n_unc} uncertain data ({_count(n_var, 'variable')})")
        for w in warnings:
            console.print(f"{markup(path)}: warning: {markup(w)}")
    if problems:
        for p in problems:
            print(terminal_text(str(p)), file=sys.stderr)
        print(f"{len(problems)} problem(s) found", file=sys.stderr)
        return 2
    return 0


def _count(n: int, noun: str) -> str:
    """``n`` with ``noun``, plural unless one: "1 reaction", "2 reactions"."""
    return f"{n} {noun}" + ("" if n == 1 else "s")

"""Checks of a results.json read back by ``uqthermo report`` (a file that may have been edited by hand).

:func:`results_value_problems` complements the container checks of the ``report``
command: numbers that no double can hold (``10**400`` is valid JSON), the convergence
record (``{output: [[N, u], ...]}``) and the ``plan`` section. Each problem is keyed by its
path in the file (``outputs[0].points[0].linear.estimate``), so the command exits 2 with
one ``FILE: KEY: message`` line per problem instead of failing while drawing.
"""

from __future__ import annotations

import math
from typing import Any

from ..errors import Problem

__all__ = ["results_shape_problems", "results_value_problems"]

#: problems listed at most (a file full of garbage would otherwise print thousands of lines)
MAX_PROBLEMS = 20


_OUTPUT_TYPES = {"phase_changes": (list, dict), "points": (list, dict)}
_POINT_TYPES = {"linear": dict, "monte_carlo": dict, "validation": dict, "margins": dict, "sensitivity": dict,
                "drivers": (list, dict), "whatif": (list, dict)}


def results_shape_problems(doc: dict, fname: str) -> list[Problem]:
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


def _number(x: Any) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def _finite(x: Any) -> bool:
    if not _number(x):
        return False
    try:
        return math.isfinite(float(x))
    except OverflowError:
        return False


def _huge_numbers(node: Any, path: str, out: list[str]) -> None:
    stack = [(node, path)]
    while stack and len(out) < MAX_PROBLEMS:
        v, p = stack.pop()
        if isinstance(v, dict):
            stack.extend((x, f"{p}.{k}" if p else str(k)) for k, x in reversed(list(v.items())))
        elif isinstance(v, list):
            stack.extend((x, f"{p}[{i}]") for i, x in reversed(list(enumerate(v))))
        elif isinstance(v, int) and not isinstance(v, bool):
            try:
                float(v)
            except OverflowError:
                out.append(p)


def _table_list(v: Any) -> bool:
    return isinstance(v, list) and all(isinstance(x, dict) for x in v)


def results_value_problems(doc: dict, fname: str) -> list[Problem]:
    """Problems with the values of a results.json document (see the module docstring)."""
    problems: list[Problem] = []
    huge: list[str] = []
    _huge_numbers(doc, "", huge)
    for p in huge:
        problems.append(Problem(fname, p, "number too large for a double-precision value (at most about 1.8e308)"))
    conv = doc.get("convergence")
    if isinstance(conv, dict):
        for name, rows in conv.items():
            key = f"convergence.{name}"
            if not isinstance(rows, list):
                problems.append(Problem(fname, key, "must be a list of [trials, u] pairs"))
                continue
            for i, row in enumerate(rows):
                ok = (isinstance(row, list) and len(row) == 2 and _finite(row[0]) and 0 < float(row[0]) <= 1e15
                      and (row[1] is None or (_finite(row[1]) and float(row[1]) >= 0)))
                if not ok:
                    problems.append(Problem(fname, f"{key}[{i}]", "must be a pair [trials, u]: a positive number of "
                                                                  "trials and a non-negative u (or null)"))
                    break
    plan = doc.get("plan")
    if plan is not None and not isinstance(plan, dict):
        problems.append(Problem(fname, "plan", "must be a table"))
    elif isinstance(plan, dict):
        for key in ("front", "candidates", "evaluated"):
            if plan.get(key) is not None and not _table_list(plan[key]):
                problems.append(Problem(fname, f"plan.{key}", "must be a list of tables"))
        for key in ("best", "target"):
            if plan.get(key) is not None and not isinstance(plan[key], dict):
                problems.append(Problem(fname, f"plan.{key}", "must be a table"))
        for i, p in enumerate(plan.get("front") or [] if _table_list(plan.get("front")) else []):
            if p.get("set") is not None and not (isinstance(p["set"], list) and all(isinstance(s, str) for s in p["set"])):
                problems.append(Problem(fname, f"plan.front[{i}].set", "must be a list of candidate ids"))
            for k in ("cost", "U"):
                if p.get(k) is not None and not _finite(p[k]):
                    problems.append(Problem(fname, f"plan.front[{i}].{k}", "must be a number"))
    for i, out in enumerate(doc.get("outputs") or []):
        if not isinstance(out, dict):
            continue
        for j, pt in enumerate(out.get("points") or []):
            if not isinstance(pt, dict):
                continue
            mc = pt.get("monte_carlo")
            if isinstance(mc, dict) and mc.get("histogram") is not None and not isinstance(mc["histogram"], dict):
                problems.append(Problem(fname, f"outputs[{i}].points[{j}].monte_carlo.histogram", "must be a table"))
    return problems[:MAX_PROBLEMS]

"""Data-purchase planning for a case: candidate measurements → cheapest set meeting a target.

Orchestration only: it maps the case's ``[[candidate]]`` entries and a target such as
``"U95 <= 2 kJ/mol"`` onto :func:`uqthermo.uq.planning.planner.plan_purchases` (exact enumeration
for small candidate sets, a greedy + local-search heuristic beyond), choosing the linear
quadratic-form planner when every planned output is linear in its inputs and common-random-
number Monte Carlo otherwise, and shapes the result for results.json and the report.
"""

from __future__ import annotations

import re

import numpy as np

from ..case.model.layout import Model
from ..case.schema import Case
from ..errors import InputError, Problem

_LEAD = re.compile(r"^\s*([0-9]*\.?[0-9]+)\s*([A-Za-z]+)\s*$")
_DAYS = {"d": 1, "day": 1, "days": 1, "wk": 7, "week": 7, "weeks": 7, "w": 7, "month": 30.4, "months": 30.4,
         "h": 1 / 24, "hour": 1 / 24, "hours": 1 / 24}


def lead_time_days(text: str) -> float | None:
    """``"6 weeks"`` → 42.0 (days); ``None`` for empty or unreadable text."""
    m = _LEAD.match(text or "")
    if not m or m.group(2).lower() not in _DAYS:
        return None
    return float(m.group(1)) * _DAYS[m.group(2).lower()]


def _convert_target(target, unit_out: str, path: str):
    """Convert the target's number to the output's unit (pint); a bare number is taken in the output unit."""
    if not target.unit:
        return target.with_value(target.value, unit_out)
    from ..case.units import ureg

    reg = ureg()
    try:
        src = reg.parse_units(target.unit.replace("°C", "degC"))
        dst = reg.parse_units("dimensionless" if unit_out == "1" else unit_out)
        if "degC" in target.unit or "degF" in target.unit:
            src = reg.parse_units(target.unit.replace("degC", "delta_degC").replace("degF", "delta_degF"))
        value = reg.Quantity(target.value, src).to(dst).magnitude
    except Exception:
        raise InputError([Problem(path, "--target", f"unit {target.unit!r} does not fit the output unit {unit_out}")]) from None
    return target.with_value(float(value), unit_out)


_NAMED = re.compile(r"^\s*([A-Za-z_][A-Za-z0-9_.\-]*)\s*:\s*(.+)$")


def _is_relative(tgt) -> bool:
    return tgt.unit.strip() in ("%", "percent")


def resolve_plan_request(case: Case, model: Model, *, target=None, budget: float | None = None,
                         output_name: str | None = None, relative: bool = False, key: str = "--target"):
    """Which outputs a plan covers and how their uncertainties are made comparable.

    Targets: ``"U95 <= 2 kJ/mol"`` (absolute, for the outputs whose unit it fits),
    ``"U95 <= 5 %"`` (relative: U as a percentage of |estimate| at each point, every output), or
    one per output, ``"NAME: U95 <= 2 kJ/mol"`` (each may be absolute or relative; the planner
    then works on U / target, so outputs in different units meet their own targets). A budget
    without a target compares the outputs' U directly, which needs one unit: with outputs in
    different units it needs ``output_name``, ``relative`` or per-output targets, and is
    refused otherwise (never a comparison of kJ/mol with kW).

    Returns
    -------
    outs : list of int
        Output indices.
    scale : ndarray (columns)
        Factor on each planned column's values (1, 100/|y| for relative, or 1/target).
    tgt : Target or None
        In the scaled units.
    unit : str
        Unit of the scaled values (the output unit, "%" or "of target").

    Raises
    ------
    InputError
        ``FILE: KEY: message`` for an unknown output, mixed units, a relative target of an
        output whose estimate is zero, or targets of different metrics.
    """
    from ..uq.planning.candidates import parse_target

    s = case.settings
    path = case.path

    def bad(k, msg):
        return InputError([Problem(path, k, msg)])

    names = [o.name for o in case.outputs]
    outs = list(range(len(case.outputs)))
    if output_name is not None:
        outs = [i for i, o in enumerate(case.outputs) if o.name == output_name]
        if not outs:
            raise bad("--output", f"no output named {output_name!r}; outputs: " + ", ".join(names))
    texts = [] if target is None else ([target] if isinstance(target, str) else list(target))
    parsed = []
    for t in texts:
        m = _NAMED.match(t) if isinstance(t, str) else None
        name = None
        if m:
            if m.group(1) not in names:
                raise bad(key, f"no output named {m.group(1)!r}; outputs: " + ", ".join(names))
            name, t = m.group(1), m.group(2)
        try:
            parsed.append((name, parse_target(t, s.coverage_probability)))
        except InputError as e:
            raise bad(key, e.problems[0].message if getattr(e, "problems", None) else str(e)) from None
    if len({(tg.metric, tg.probability) for _, tg in parsed}) > 1:
        raise bad(key, "all targets of one plan must use the same measure (e.g. all U95)")
    named = [(n, t) for n, t in parsed if n is not None]
    unnamed = [t for n, t in parsed if n is None]
    if named and unnamed or len(unnamed) > 1:
        raise bad(key, "give one target for all outputs, or one per output written 'NAME: U95 <= …'")
    if len({n for n, _ in named}) < len(named):
        raise bad(key, "two targets for the same output")
    cols_of = {i: model.output_columns(i) for i in range(len(case.outputs))}
    y0 = np.asarray(model.f_reported(np.asarray(model.inputs.estimates, dtype=float)[None, :])[0], dtype=float)

    def rel_scale(i):
        est = np.abs(y0[cols_of[i]])
        if np.any(est <= 1e-300):
            raise bad(key if parsed else "--relative",
                      f"output {case.outputs[i].name!r} has an estimate of zero; a relative target (U as % of the "
                      "estimate) has no meaning there — give it an absolute target")
        return 100.0 / est

    if named:
        outs = [names.index(n) for n, _ in named if output_name is None or n == output_name]
        if not outs:
            raise bad(key, f"no target names the output {output_name!r}")
        scale, tgts = [], {}
        for n, tg in named:
            i = names.index(n)
            if i not in outs:
                continue
            if _is_relative(tg):
                scale.append(rel_scale(i) / tg.value)
            else:
                scale.append(np.full(len(cols_of[i]), 1.0 / _convert_target(tg, model.units[i], path).value))
            tgts[i] = tg
        first = named[0][1]
        text = "; ".join(f"{n}: {t.text}" for n, t in named)
        tgt = first.with_value(1.0, "of target")
        from dataclasses import replace

        tgt = replace(tgt, text=text)
        return outs, np.concatenate(scale), tgt, "of target"
    if unnamed:
        tg = unnamed[0]
        if _is_relative(tg):
            return outs, np.concatenate([rel_scale(i) for i in outs]), tg.with_value(tg.value, "%"), "%"
        if tg.unit and output_name is None:
            fits = []
            for i in outs:
                try:
                    _convert_target(tg, model.units[i], path)
                    fits.append(i)
                except InputError:
                    pass
            if not fits:
                raise bad(key, f"no output has a unit that fits {tg.unit!r}")
            outs = fits
        units = {model.units[i] for i in outs}
        if len(units) > 1:
            raise bad("--output", "the outputs planned for have different units "
                                  f"({', '.join(sorted(units))}); choose one with --output, give a target per output "
                                  "('NAME: U95 <= …') or a relative one ('U95 <= 5 %')")
        tg = _convert_target(tg, model.units[outs[0]], path)
        return outs, np.ones(sum(len(cols_of[i]) for i in outs)), tg, model.units[outs[0]]
    # budget only
    if relative:
        return outs, np.concatenate([rel_scale(i) for i in outs]), None, "%"
    units = {model.units[i] for i in outs}
    if len(units) > 1:
        listed = ", ".join(f"{case.outputs[i].name} [{model.units[i]}]" for i in outs)
        how = ("Plan for one output with --output NAME, give a target per output (--target 'NAME: U95 <= …'), "
               "or compare relative uncertainties with --relative (U95 as % of the estimate)") if key == "--target" else (
               "Give settings.plan_target per output ([\"NAME: U95 <= …\", …]) or as a relative target "
               "(\"U95 <= 5 %\", U95 as % of the estimate)")
        raise bad("--budget" if key == "--target" else key,
                  f"the outputs have different units ({listed}); their uncertainties cannot be compared. {how}")
    return outs, np.ones(sum(len(cols_of[i]) for i in outs)), None, model.units[outs[0]]


def compute_plan(case: Case, model: Model, *, target=None, budget: float | None = None,
                 output_name: str | None = None, linear=None, relative: bool = False) -> dict:
    """Plan purchases and return the results.json ``plan`` section (see uqthermo.report).

    ``target`` is one target text or a list of them (see :func:`resolve_plan_request`).
    """
    from ..uq.planning.candidates import Candidate
    from ..uq.planning.planner import plan_purchases

    s = case.settings
    if not case.candidates:
        raise InputError([Problem(case.path, "candidate", "no [[candidate]] measurements in the case to plan with")])
    outs, scale, tgt, unit = resolve_plan_request(case, model, target=target, budget=budget, output_name=output_name,
                                                  relative=relative)
    cols = [j for i in outs for j in model.output_columns(i)]
    labels = [f"{case.outputs[model.columns[j].output].name} @ {model.columns[j].temperature:.2f} K" for j in cols]
    cands = []
    for c in case.candidates:
        if c.datum not in model.inputs.groups:
            why = "is exact" if not case.data[c.datum].uncertain else "is not used by any output"
            raise InputError([Problem(case.path, "candidate", f"datum {c.datum!r} {why}; a measurement cannot improve "
                                                              "the outputs through it")])
        d = case.data[c.datum]
        std = None if c.u is None else c.u / d.to_report
        label = c.note or (f"{c.datum} (u = {c.u_text})" if c.u_text else None)   # the user's unit, not the engine's
        cands.append(Candidate(datum=c.datum, cost=c.cost, std=std, factor=c.factor,
                               lead_time=lead_time_days(c.lead_time), label=label))
    linear_model = all(model.linear_in_inputs[i] for i in outs)

    def f(X: np.ndarray) -> np.ndarray:
        return model.f_reported(X)[:, cols] * scale[None, :]

    lin = None
    if linear is not None and linear_model:
        from types import SimpleNamespace

        lin = SimpleNamespace(sensitivity=np.asarray(linear.sensitivity)[cols] * scale[:, None],
                              estimate=np.asarray(linear.estimate)[cols] * scale)
    plan = plan_purchases(f, model.inputs, cands, target=tgt, budget=budget,
                          method="linear" if linear_model else "monte-carlo", linear=lin,
                          coverage=s.coverage_probability, seed=s.seed, output_labels=labels,
                          samples=4096, rotate=s.sobol_rotation)
    out = shape_plan(plan, case, model, outs, tgt)
    out["target"]["unit"] = unit
    out["target"]["comparison"] = {"%": "relative (U as % of |estimate|)", "of target": "U / own target"}.get(
        unit, "absolute")
    return out


def shape_plan(plan, case: Case, model: Model, outs: list[int], tgt) -> dict:
    """The planner's result in the report's ``plan`` shape, plus the planner's own full record."""
    raw = plan.to_dict()
    unit = model.units[outs[0]]
    cand_rows = []
    for k, c in enumerate(plan.candidates):
        cand_rows.append({"id": f"C{k + 1}", "datum": c.datum, "action": c.label or c.name,
                          "factor": float(plan.factors[k]), "cost": c.cost, "lead_time_days": c.lead_time})
    ids = {k: f"C{k + 1}" for k in range(len(plan.candidates))}

    def pt(p):
        return {"cost": p.cost, "U": float(p.worst), "set": [ids[i] for i in p.indices],
                "lead_time_days": p.lead_time, "worst_point": (plan.output_labels or [None])[p.worst_output]
                if plan.output_labels else p.worst_output}

    best = plan.selection
    worst_label = plan.output_labels[plan.baseline.worst_output] if plan.output_labels else ""
    out = {
        "target": {"output": ", ".join(case.outputs[i].name for i in outs), "temperature_K": None,
                   "U": None if tgt is None else tgt.value, "unit": unit,
                   "coverage_probability": plan.probability, "metric": plan.metric,
                   "text": None if tgt is None else tgt.text, "worst_point_now": worst_label},
        "currency": "cost units",
        "budget": plan.budget,
        "U_now": float(plan.baseline.worst),
        "method": plan.method,
        "engine": plan.engine,
        "feasible": plan.feasible,
        "candidates": cand_rows,
        "front": [pt(p) for p in plan.pareto],
        "best": None if best is None else dict(pt(best), meets_target=None if tgt is None else bool(tgt.met(best.worst))),
        "n_evaluated": plan.n_evaluated,
        "warnings": list(plan.warnings),
        "planner": raw,
    }
    return out


__all__ = ["compute_plan", "shape_plan", "lead_time_days"]

"""Data-purchase planning for a case: candidate measurements → cheapest set meeting a target.

Orchestration only: it maps the case's ``[[candidate]]`` entries and a target such as
``"U95 <= 2 kJ/mol"`` onto :func:`uqthermo.uq.planning.plan_purchases` (exact enumeration
for small candidate sets, a greedy + local-search heuristic beyond), choosing the linear
quadratic-form planner when every planned output is linear in its inputs and common-random-
number Monte Carlo otherwise, and shapes the result for results.json and the report.
"""

from __future__ import annotations

import re

import numpy as np

from .case.builder import Model
from .case.schema import Case
from .errors import InputError, Problem

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
    from .case.units import ureg

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


def compute_plan(case: Case, model: Model, *, target: str | None = None, budget: float | None = None,
                 output_name: str | None = None, linear=None) -> dict:
    """Plan purchases and return the results.json ``plan`` section (see uqthermo.report)."""
    from .uq.planning import Candidate, parse_target, plan_purchases

    s = case.settings
    if not case.candidates:
        raise InputError([Problem(case.path, "candidate", "no [[candidate]] measurements in the case to plan with")])
    outs = list(range(len(case.outputs)))
    if output_name is not None:
        outs = [i for i, o in enumerate(case.outputs) if o.name == output_name]
        if not outs:
            raise InputError([Problem(case.path, "--output", f"no output named {output_name!r}; outputs: "
                                                             + ", ".join(o.name for o in case.outputs))])
    tgt = None
    if target is not None:
        tgt = parse_target(target, s.coverage_probability)
        if tgt.unit and output_name is None:
            # plan for the outputs whose unit the target's unit fits
            fits = []
            for i in outs:
                try:
                    _convert_target(tgt, model.units[i], case.path)
                    fits.append(i)
                except InputError:
                    pass
            if not fits:
                raise InputError([Problem(case.path, "--target", f"no output has a unit that fits {tgt.unit!r}")])
            outs = fits
        units = {model.units[i] for i in outs}
        if len(units) > 1:
            raise InputError([Problem(case.path, "--output", "the outputs planned for have different units "
                                                             f"({', '.join(sorted(units))}); choose one with --output")])
        tgt = _convert_target(tgt, model.units[outs[0]], case.path)
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
        cands.append(Candidate(datum=c.datum, cost=c.cost, std=std, factor=c.factor,
                               lead_time=lead_time_days(c.lead_time), label=(c.note or None)))
    linear_model = all(model.linear_in_inputs[i] for i in outs)

    def f(X: np.ndarray) -> np.ndarray:
        return model.f_reported(X)[:, cols]

    lin = None
    if linear is not None and linear_model:
        from types import SimpleNamespace

        lin = SimpleNamespace(sensitivity=np.asarray(linear.sensitivity)[cols], estimate=np.asarray(linear.estimate)[cols])
    plan = plan_purchases(f, model.inputs, cands, target=tgt, budget=budget,
                          method="linear" if linear_model else "monte-carlo", linear=lin,
                          coverage=s.coverage_probability, seed=s.seed, output_labels=labels,
                          samples=4096, rotate=s.sobol_rotation)
    return shape_plan(plan, case, model, outs, tgt)


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

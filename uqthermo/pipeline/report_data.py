"""Results.json blocks that let the report show where the numbers come from.

* :func:`kirchhoff_terms` — per ``reaction_enthalpy`` point, the terms of Kirchhoff's law
  (at reference, sensible, latent and each latent term) with their standard uncertainties
  from the GUM law of propagation (JCGM 100:2008, 5.2.2) on the run's inputs.

These are orchestration helpers: they combine the case layer (the term functions) with
the statistics layer (linear propagation) and return plain dicts for results.json.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..case.model.breakdown import kirchhoff_function
from ..case.model.layout import Model
from ..case.schema import Case


def _f(x) -> float | None:
    x = float(x)
    return x if np.isfinite(x) else None


def kirchhoff_terms(case: Case, model: Model) -> dict[tuple[int, int], dict[str, Any]]:
    """``{(output index, point index): kirchhoff_terms}`` for every reaction-enthalpy point.

    Each block is ``{"at_reference": {...}, "sensible": {...}, "latent": {...}}`` with
    ``estimate`` and ``standard_uncertainty`` in the output's unit (kJ/mol; kJ/kg on a mass basis); ``at_reference`` also carries the
    ``temperature_K`` and ``anchor`` ("formation" or "measured"), ``latent`` the list
    ``terms`` of the phase changes met (species, transition, temperature_K, coefficient =
    ν·(±1), estimate, standard_uncertainty). The estimates are the terms at the best
    estimates of the inputs and sum to the linear estimate of the point; the uncertainties
    come from the GUM law of propagation with the model's inputs (sensitivity coefficients
    by central differences; the terms may be correlated, e.g. through an uncertain
    temperature, so their u do not add in quadrature to u(y) in general).
    """
    f, layout = kirchhoff_function(case, model)
    if not layout:
        return {}
    inputs = model.inputs
    if len(inputs.variables):
        from ..uq.linear import propagate_linear

        lin = propagate_linear(f, inputs)
        est, u = np.asarray(lin.estimate, dtype=float), np.asarray(lin.standard_uncertainty, dtype=float)
    else:
        est = f(np.zeros((1, 0)))[0]
        u = np.zeros_like(est)

    def term(c: int) -> dict[str, Any]:
        return {"estimate": _f(est[c]), "standard_uncertainty": _f(u[c])}

    out: dict[tuple[int, int], dict[str, Any]] = {}
    for lay in layout:
        latent = term(lay.latent)
        latent["terms"] = [dict(species=sp, transition=tr, temperature_K=t, coefficient=coef, **term(c))
                           for sp, tr, t, coef, c in lay.latent_terms]
        out[(lay.output, lay.point)] = {
            "at_reference": dict(term(lay.at_reference), temperature_K=lay.reference_temperature, anchor=lay.anchor),
            "sensible": term(lay.sensible),
            "latent": latent,
        }
    return out


def _final_temperatures(case: Case, outputs: list[dict]) -> dict[int, float]:
    """Upper end of the final temperature of each adiabatic output (P99 of Monte Carlo, else estimate + 3u)."""
    finals = {}
    for i, (o, doc) in enumerate(zip(case.outputs, outputs)):
        if o.kind != "adiabatic_temperature_rise" or not doc.get("points"):
            continue
        pt = doc["points"][0]
        mc = pt.get("monte_carlo") or {}
        lin = pt.get("linear") or {}
        rise = (mc.get("one_sided") or {}).get("P99")
        if rise is None and lin.get("estimate") is not None:
            rise = lin["estimate"] + 3.0 * (lin.get("standard_uncertainty") or 0.0)
        if rise is not None and np.isfinite(rise):
            finals[i] = o.start_temperature + float(rise)
    return finals


def heat_capacity_curves(case: Case, model: Model, outputs: list[dict]) -> list[dict[str, Any]]:
    """The heat-capacity data the outputs use, per species: Cp(T) with u over the span used.

    One entry per species: ``{"species", "name", "phases": [...], "transitions": [...]}``;
    each phase ``{"phase", "datum", "model", "ranges_K", "extrapolation_allowed", "used_K",
    "temperature_K", "cp", "standard_uncertainty", "unit", "source", "stated"}`` with Cp and u
    in J/(mol·K) on a grid reaching a little beyond the span used (within the validity range
    unless extrapolation is allowed); u from the GUM law of propagation on the run's inputs
    (exact here: Cp is linear in its coefficients). Transitions: ``{"transition", "from",
    "to", "temperature_K", "enthalpy", "unit"}`` (enthalpy in kJ/mol).
    """
    from ..case.model.cp_curves import cp_function, curve_specs

    specs = curve_specs(case, _final_temperatures(case, outputs))
    if not specs:
        return []
    f = cp_function(case, model, specs)
    if len(model.inputs.variables):
        from ..uq.linear import propagate_linear

        lin = propagate_linear(f, model.inputs)
        est, u = np.asarray(lin.estimate, dtype=float), np.asarray(lin.standard_uncertainty, dtype=float)
    else:
        est = f(np.zeros((1, 0)))[0]
        u = np.zeros_like(est)
    by_species: dict[str, dict[str, Any]] = {}
    start = 0
    for s in specs:
        n = s.grid.size
        d = case.data.get(s.datum)
        sp = case.species[s.species]
        entry = by_species.setdefault(s.species, {
            "species": s.species, "name": _species_name(case, s.species),
            "phases": [],
            "transitions": [{"transition": t.label, "from": t.from_phase, "to": t.to_phase,
                             "temperature_K": float(t.temperature), "enthalpy": float(t.enthalpy) / 1e3,
                             "unit": "kJ/mol"} for t in sp.transitions],
        })
        entry["phases"].append({
            "phase": s.phase, "datum": s.datum, "model": s.model,
            "ranges_K": [[float(a), float(b) if np.isfinite(b) else None] for a, b in s.ranges],
            "extrapolation_allowed": s.extrapolation_allowed, "used_K": [s.used[0], s.used[1]],
            "temperature_K": [float(t) for t in s.grid],
            "cp": [_f(v) for v in est[start:start + n]],
            "standard_uncertainty": [_f(v) for v in u[start:start + n]],
            "unit": "J/(mol*K)",
            "source": (d.source if d is not None else "") or "",
            "stated": (d.stated if d is not None else "exact") or "",
        })
        start += n
    for entry in by_species.values():
        entry["phases"].sort(key=lambda ph: ph["used_K"][0])     # along the path: low-temperature phase first
    return list(by_species.values())


def _species_name(case: Case, species: str) -> str:
    node = (case.raw.get("species") or {}).get(species) if isinstance(case.raw, dict) else None
    name = node.get("name") if isinstance(node, dict) else None
    return name if isinstance(name, str) else ""

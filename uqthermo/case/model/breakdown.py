"""Kirchhoff breakdown of the reaction-enthalpy outputs as a function of the model's inputs.

:func:`kirchhoff_function` returns ``f(X[N, D]) -> T[N, K]``: for every point of every
``reaction_enthalpy`` output, the terms of Kirchhoff's law
(:func:`uqthermo.thermo.kirchhoff.reaction_enthalpy_terms`) — at reference, sensible, latent
and each latent term — in the output's unit (kJ/mol, or kJ/kg on a mass basis), from the same decoded inputs as the model, so that the
orchestration can propagate them with the model's :class:`~uqthermo.uq.inputs.InputSet`
(the terms at the best estimates sum to the model's value there). :class:`TermLayout` says
which column is which.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from ...thermo.kirchhoff import reaction_enthalpy_terms
from ..schema import Case
from .layout import Model, output_temperature, reaction_values, values_decoder

__all__ = ["TermLayout", "kirchhoff_function"]


@dataclass
class TermLayout:
    """Columns of the breakdown of one output point (indices into the function's result)."""

    output: int                  # index into case.outputs
    point: int                   # index of the point within the output
    at_reference: int
    sensible: int
    latent: int
    latent_terms: list[tuple[str, str, float, float, int]] = field(default_factory=list)
    # (species, transition "from-to", nominal temperature K, coefficient ν·(±1), column)
    reference_temperature: float = 298.15
    anchor: str = "formation"


def kirchhoff_function(case: Case, model: Model) -> tuple[Callable[[np.ndarray], np.ndarray], list[TermLayout]]:
    """``(f, layout)`` for the reaction-enthalpy outputs of ``case`` (empty layout when there are none)."""
    decode = values_decoder(case, model.inputs.groups)
    Tref = case.settings.reference_temperature
    wanted = [i for i, o in enumerate(case.outputs) if o.kind == "reaction_enthalpy"]
    layout: list[TermLayout] = []
    plan = []   # (output index, [layout per point])
    ncol = 0
    x0 = np.asarray(model.inputs.estimates, dtype=float)[None, :]
    sv0, ov0 = decode(x0)
    for i in wanted:
        o = case.outputs[i]
        temps = o.temperatures if o.temperatures is not None else np.array([o.temperature_nominal])
        probe = reaction_enthalpy_terms(case.reactions[o.reaction], case.species, np.asarray(temps, dtype=float), Tref,
                                        reaction_values(sv0, ov0, o.reaction))
        rows = []
        for k, _t in enumerate(temps):
            lay = TermLayout(i, k, ncol, ncol + 1, ncol + 2, reference_temperature=probe.reference_temperature,
                             anchor=probe.anchor)
            ncol += 3
            for lt in probe.latent_terms:
                lay.latent_terms.append((lt.species, lt.transition, lt.temperature, lt.coefficient, ncol))
                ncol += 1
            rows.append(lay)
        layout += rows
        plan.append((i, rows))

    def f(X: np.ndarray) -> np.ndarray:
        X = np.asarray(X, dtype=float)
        n = X.shape[0]
        out = np.empty((n, ncol))
        sv, ov = decode(X)
        for i, rows in plan:
            o = case.outputs[i]
            T = output_temperature(o, ov, n)
            t = reaction_enthalpy_terms(case.reactions[o.reaction], case.species, T, Tref, reaction_values(sv, ov, o.reaction))

            # J/mol -> kJ/mol, or kJ/kg on a mass basis (the output's own unit: the builder divides by the same mass)
            scale = 1e3 * (o.mass_per_unit if getattr(o, "basis", "") == "mass" and getattr(o, "mass_per_unit", None) else 1.0)

            def col(a, scale=scale):
                return np.broadcast_to(np.asarray(a, dtype=float), (n, len(rows))) / scale

            at, se, la = col(t.at_reference), col(t.sensible), col(t.latent)
            lts = {(lt.species, lt.transition): col(lt.value) for lt in t.latent_terms}
            for k, lay in enumerate(rows):
                out[:, lay.at_reference] = at[:, k]
                out[:, lay.sensible] = se[:, k]
                out[:, lay.latent] = la[:, k]
                for sp, tr, _tt, _c, c in lay.latent_terms:
                    v = lts.get((sp, tr))
                    out[:, c] = 0.0 if v is None else v[:, k]
        return out

    return f, layout

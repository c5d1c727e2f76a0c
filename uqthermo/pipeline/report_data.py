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

from ..case.breakdown import kirchhoff_function
from ..case.builder import Model
from ..case.schema import Case


def _f(x) -> float | None:
    x = float(x)
    return x if np.isfinite(x) else None


def kirchhoff_terms(case: Case, model: Model) -> dict[tuple[int, int], dict[str, Any]]:
    """``{(output index, point index): kirchhoff_terms}`` for every reaction-enthalpy point.

    Each block is ``{"at_reference": {...}, "sensible": {...}, "latent": {...}}`` with
    ``estimate`` and ``standard_uncertainty`` in kJ/mol; ``at_reference`` also carries the
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

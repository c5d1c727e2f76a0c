"""The GUM uncertainty budget of one output: one row per input quantity, covariance rows signed.

For a measurement model y = f(x_1, …, x_N) linearised at the best estimates, the law of
propagation of uncertainty for correlated input quantities (JCGM 100:2008, §5.2.2, eq. (16))
reads

    u²(y) = Σ_i c_i² u²(x_i)  +  2 Σ_{i<j} c_i c_j u(x_i) u(x_j) r(x_i, x_j)

with c_i = ∂f/∂x_i the sensitivity coefficients and r the correlation coefficients. The budget
lists each term as its own row: per input quantity the estimate x_i, u(x_i), c_i, the signed
contribution u_i(y) = c_i u(x_i) (JCGM 100 §5.1.3, eq. (11b)), the variance c_i² u²(x_i) and its
share of u²(y); then one row per correlated pair with the signed covariance term
2 c_i c_j u_i u_j r_ij. Rows and covariance rows add up to u²(y) exactly, so their shares add up
to 1 — a negative covariance row is variance that the correlation removes, and then single rows
can exceed 100 %.

Drivers are ranked by *datum* (all coefficients of one curve count as one); :func:`datum_terms`
groups a budget by datum: each datum's own variance c_gᵀ Σ_gg c_g (its rows plus the covariance
rows inside it) and the covariance terms between data, again summing to u²(y).

This module is model-agnostic: it never imports the physics, the case layer or the report.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ..errors import StatisticsError

__all__ = ["BudgetQuantity", "gum_budget", "datum_terms"]


@dataclass(frozen=True)
class BudgetQuantity:
    """One input quantity as the budget shows it (presentation units).

    Attributes
    ----------
    quantity : str
        Input quantity id (e.g. ``CH4.g.formation_enthalpy`` or ``CH4.g.heat_capacity.a``).
    datum : str
        The datum it belongs to.
    estimate : float
        Best estimate x_i.
    standard_uncertainty : float
        u(x_i).
    unit : str
        Unit of x_i and u(x_i).
    dof : float
        Degrees of freedom ν_i (``inf`` for a known distribution).
    """

    quantity: str
    datum: str
    estimate: float
    standard_uncertainty: float
    unit: str
    dof: float = math.inf


def _f(x: float) -> float:
    return float(x)


def gum_budget(sensitivity: Sequence[float], correlation: np.ndarray, quantities: Sequence[BudgetQuantity],
               unit: str) -> dict:
    """The budget block of one output point (JCGM 100:2008 §5.2.2; module docstring).

    Parameters
    ----------
    sensitivity : (D,)
        c_i = ∂y/∂x_i in output unit per unit of x_i (the units of ``quantities``).
    correlation : (D, D)
        Correlation matrix r(x_i, x_j) of the inputs.
    quantities : sequence of BudgetQuantity, length D
    unit : str
        Output unit.

    Returns
    -------
    dict
        ``{"method": "linear", "unit", "variance", "standard_uncertainty", "rows": [...],
        "covariance_rows": [...]}``; rows are the quantities with c_i u(x_i) ≠ 0, largest
        variance first, each ``{"quantity", "datum", "estimate", "standard_uncertainty",
        "unit", "sensitivity_coefficient", "contribution", "variance", "share", "dof"}``
        (``dof`` None = infinite); covariance rows ``{"between": [q_i, q_j], "correlation",
        "variance", "share"}`` for every pair with r_ij ≠ 0 among those rows, largest
        magnitude first. ``share`` = variance / u²(y) (0 when u(y) = 0). Σ variances = u²(y).
    """
    c = np.asarray(sensitivity, dtype=float).ravel()
    R = np.asarray(correlation, dtype=float)
    D = c.size
    if R.shape != (D, D) or len(quantities) != D:
        raise StatisticsError(f"budget: {D} sensitivity coefficients, correlation {R.shape}, {len(quantities)} quantities")
    u = np.array([q.standard_uncertainty for q in quantities], dtype=float)
    contrib = c * u                                  # u_i(y), signed
    live = np.flatnonzero(contrib != 0.0)
    V = np.outer(contrib[live], contrib[live]) * R[np.ix_(live, live)]
    total = float(V.sum())
    variance = max(total, 0.0)
    safe = variance if variance > 0 else 1.0
    rows = []
    for k in sorted(range(live.size), key=lambda k: -V[k, k]):
        i = int(live[k])
        q = quantities[i]
        rows.append({"quantity": q.quantity, "datum": q.datum, "estimate": _f(q.estimate),
                     "standard_uncertainty": _f(q.standard_uncertainty), "unit": q.unit,
                     "sensitivity_coefficient": _f(c[i]), "contribution": _f(contrib[i]),
                     "variance": _f(V[k, k]), "share": _f(V[k, k] / safe) if variance > 0 else 0.0,
                     "dof": None if not math.isfinite(q.dof) else _f(q.dof)})
    cov = []
    for a in range(live.size):
        for b in range(a + 1, live.size):
            r = R[live[a], live[b]]
            if r == 0.0:
                continue
            v = 2.0 * V[a, b]
            cov.append({"between": [quantities[live[a]].quantity, quantities[live[b]].quantity],
                        "correlation": _f(r), "variance": _f(v), "share": _f(v / safe) if variance > 0 else 0.0})
    cov.sort(key=lambda r: -abs(r["variance"]))
    return {"method": "linear", "unit": unit, "variance": variance, "standard_uncertainty": math.sqrt(variance),
            "rows": rows, "covariance_rows": cov}


def datum_terms(budget: dict) -> tuple[dict[str, float], list[dict]]:
    """A budget grouped by datum: own variances and the covariance terms between data.

    A datum's own variance is c_gᵀ Σ_gg c_g: its rows plus the covariance rows between two of its
    own quantities (e.g. correlated coefficients of one curve). Covariance rows between quantities
    of two different data are summed per pair of data.

    Returns
    -------
    own : dict datum -> variance
        In the order of first appearance in ``budget["rows"]``.
    between : list of dict
        ``{"between": [datum_a, datum_b], "variance", "share"}`` (signed), largest magnitude
        first. Σ own + Σ between = ``budget["variance"]``.
    """
    datum_of = {r["quantity"]: r["datum"] for r in budget.get("rows") or []}
    own: dict[str, float] = {}
    for r in budget.get("rows") or []:
        own[r["datum"]] = own.get(r["datum"], 0.0) + float(r["variance"])
    pairs: dict[tuple[str, str], float] = {}
    for r in budget.get("covariance_rows") or []:
        a, b = (datum_of.get(q, q) for q in r["between"])
        if a == b:
            own[a] = own.get(a, 0.0) + float(r["variance"])
        else:
            key = (a, b) if (a, b) in pairs or (b, a) not in pairs else (b, a)
            pairs[key] = pairs.get(key, 0.0) + float(r["variance"])
    var = float(budget.get("variance") or 0.0)
    between = [{"between": [a, b], "variance": v, "share": v / var if var > 0 else 0.0} for (a, b), v in pairs.items()]
    between.sort(key=lambda r: -abs(r["variance"]))
    return own, between

"""Which ranking to trust: the linearity check and the automatic choice of method.

:func:`rank_drivers` uses the linear variance shares (:mod:`.linear_shares`) when every
uncertain input is normal and the model is linear over the input spread
(:func:`linearity_check`, the GUM linearisation of JCGM 100:2008 §5.1.2 tested on a small
scrambled-Sobol' sample) or when the data an output depends on are correlated with each
other (Sobol' indices need independent factors); grouped Sobol' indices (:mod:`.sobol`)
otherwise. :class:`Ranking` carries the drivers per output and the keys of a results.json point.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ...errors import StatisticsError
from .driver import Driver
from .evaluation import U_HIGH, U_LOW, Model, evaluate_in_chunks
from .linear_shares import LinearShares, linear_shares
from .sobol import SobolResult, sobol_indices

__all__ = ["Ranking", "rank_drivers", "linearity_check", "LINEARITY_TOLERANCE"]

#: Distribution class names treated as normal by the automatic method choice.
_NORMAL_KINDS = {"Normal", "Exact"}

#: Default tolerance on the nonlinear residual variance fraction (our choice, see
#: :func:`linearity_check`).
LINEARITY_TOLERANCE = 0.01


def _is_normal(dist: Any) -> bool:
    if getattr(dist, "std", 1.0) == 0.0:
        return True
    return type(dist).__name__ in _NORMAL_KINDS


def linearity_check(
    f: Model,
    inputs: Any,
    estimate: np.ndarray,
    sensitivity: np.ndarray,
    n: int = 512,
    seed: int | None = None,
    chunk_size: int = 16384,
) -> dict:
    """Quick test whether the model is linear over the input spread.

    On ``n`` scrambled-Sobol' rows ``X = inputs.from_uniform(U)`` it compares the model with
    its first-order Taylor expansion ``y_lin = f(x̂) + C (X − x̂)`` (the GUM linearisation,
    JCGM 100:2008 §5.1.2) on the same rows (common random numbers):

        residual_fraction_m = Var(y_m − y_lin,m) / Var(y_m)
        u_ratio_m           = u_lin(y_m) / s(y_m),   u_lin² = c_mᵀ Σ c_m

    The model is judged linear when ``max_m residual_fraction_m ≤ 0.01`` (our choice; it is
    a much sharper test than comparing u_lin with a small Monte Carlo u, whose own relative
    standard error is about 1/√(2n)).

    Returns
    -------
    dict
        ``{"n", "residual_fraction": list (M), "u_ratio": list (M), "max_residual_fraction"}``.
    """
    from scipy.stats import qmc

    D = len(inputs.stds)
    C = np.atleast_2d(np.asarray(sensitivity, dtype=float))
    est = np.asarray(inputs.estimates, dtype=float)
    y0 = np.atleast_1d(np.asarray(estimate, dtype=float))
    m_pow = max(1, int(math.ceil(math.log2(max(2, n)))))
    U = qmc.Sobol(d=D, scramble=True, seed=seed).random_base2(m_pow)
    X = inputs.from_uniform(np.clip(U, U_LOW, U_HIGH))
    Y = evaluate_in_chunks(f, X, chunk_size=chunk_size)
    Ylin = y0[None, :] + (X - est) @ C.T
    vy = Y.var(axis=0)
    vr = (Y - Ylin).var(axis=0)
    tiny = vy <= 1e-300
    frac = np.where(tiny, 0.0, vr / np.where(tiny, 1.0, vy))
    ulin = np.sqrt(np.maximum(np.einsum("mi,ij,mj->m", C, inputs.covariance(), C), 0.0))
    ratio = np.where(tiny, 1.0, ulin / np.sqrt(np.where(tiny, 1.0, vy)))
    return {"n": int(U.shape[0]), "residual_fraction": frac.tolist(), "u_ratio": ratio.tolist(),
            "max_residual_fraction": float(frac.max()) if frac.size else 0.0}


@dataclass
class Ranking:
    """Result of :func:`rank_drivers`.

    Attributes
    ----------
    drivers : list (M) of list of Driver
        Per output column, largest share first.
    method : str
        ``"linear"`` or ``"sobol"``.
    reason : str
        Why that method was used.
    correlation_part : ndarray (M,) or None
        Linear cross-datum correlation part (reported whatever the ranking method).
    linear : LinearShares or None
    sobol : SobolResult or None
    linearity : dict or None
        Result of :func:`linearity_check` when it was run.
    warnings : list of str
    """

    drivers: list[list[Driver]]
    method: str
    reason: str
    correlation_part: np.ndarray | None
    linear: LinearShares | None
    sobol: SobolResult | None
    linearity: dict | None
    warnings: list[str] = field(default_factory=list)

    def point(self, m: int) -> dict:
        """The keys of a results.json point for output column ``m``.

        ``{"drivers": [{"datum", "share", "share_ci"}], "drivers_method", "drivers_reason",
        "correlation_share", "sensitivity": {"method", "S1", "ST", "delta", "linear", ...} | None}``
        """
        sens: dict[str, Any] | None = None
        if self.sobol is not None:
            sens = self.sobol.indices(m)
        if self.linear is not None:
            sens = sens or {"method": "linear", "S1": None, "ST": None, "delta": None}
            sens["linear"] = {n: float(self.linear.shares[m, j]) for j, n in enumerate(self.linear.data)}
        return {
            "drivers": [d.to_dict() for d in self.drivers[m]],
            "drivers_method": self.method,
            "drivers_reason": self.reason,
            "correlation_share": None if self.correlation_part is None else float(self.correlation_part[m]),
            "sensitivity": sens,
        }

    def to_dict(self) -> dict:
        """``{"method", "reason", "linearity", "warnings", "points": [point(m) ...]}``."""
        return {"method": self.method, "reason": self.reason, "linearity": self.linearity,
                "warnings": list(self.warnings), "points": [self.point(m) for m in range(len(self.drivers))]}


def rank_drivers(
    f: Model,
    inputs: Any,
    linear: Any = None,
    method: str = "auto",
    n_base: int = 2048,
    seed: int | None = None,
    nonlinear_hint: bool | None = None,
    *,
    global_indices: bool | None = None,
    delta: bool = True,
    n_check: int = 512,
    tolerance: float = LINEARITY_TOLERANCE,
    num_resamples: int = 100,
    conf_level: float = 0.95,
    chunk_size: int = 16384,
) -> Ranking:
    """Rank the data that drive each output's spread.

    ``method="auto"`` uses the linear shares when every uncertain input is normal and the
    model is linear — taken from ``nonlinear_hint`` when the caller knows (``False`` =
    linear), otherwise judged by :func:`linearity_check` (nonlinear residual variance ≤
    ``tolerance`` of u²(y) on ``n_check`` rows) — and grouped Sobol' indices otherwise.
    Under exactly those conditions the output is normal and the first-order Sobol' index of a
    datum equals its linear share (additive model, independent data: S_g = ST_g = share_g),
    so the cheap method loses nothing.

    Parameters
    ----------
    f : callable
        ``f(X[N, D]) -> Y[N, M]``.
    inputs : InputSet
    linear : LinearResult, optional
        Gives ``estimate`` (M,) and ``sensitivity`` (M, D); computed with
        :func:`uqthermo.uq.linear.propagate_linear` when omitted.
    method : {"auto", "linear", "sobol"}
    n_base, seed : int
        Sobol' base sample size and seed.
    nonlinear_hint : bool, optional
        The caller's knowledge of the model (True = nonlinear); skips the linearity check.
    global_indices : bool, optional
        Compute Sobol'/delta indices even when the ranking is linear (default: only when
        the ranking uses them).

    Returns
    -------
    Ranking
    """
    if method not in ("auto", "linear", "sobol"):
        raise StatisticsError(f"unknown ranking method {method!r}; use auto, linear or sobol")
    if linear is None:
        from ..linear import propagate_linear  # helper B's module

        linear = propagate_linear(f, inputs)
    C = np.atleast_2d(np.asarray(linear.sensitivity, dtype=float))
    est = np.atleast_1d(np.asarray(linear.estimate, dtype=float))
    ls = linear_shares(C, inputs.covariance(), inputs.groups, inputs.data)
    warn: list[str] = []

    linearity = None
    if method == "auto":
        stds = np.asarray(inputs.stds, dtype=float)
        # only inputs the outputs actually depend on decide (a rectangular input of another output does not)
        active = np.any(np.abs(C) * stds[None, :] > 0, axis=0) if C.size else np.zeros(len(stds), bool)
        odd = sorted({v.datum for v, s, a in zip(inputs.variables, stds, active)
                      if s > 0 and a and not _is_normal(v.distribution)})
        if nonlinear_hint is None and not odd:
            linearity = linearity_check(f, inputs, est, C, n=n_check, seed=seed, chunk_size=chunk_size)
            is_linear = linearity["max_residual_fraction"] <= tolerance
            how = (f"nonlinear residual variance {linearity['max_residual_fraction']:.2g} of u²(y) "
                   f"on a {linearity['n']}-row check (tolerance {tolerance:g})")
        else:
            is_linear = not bool(nonlinear_hint)
            how = "as stated by the caller"
        # correlations between data the output depends on: Sobol' indices need independent factors
        R = np.asarray(inputs.correlation, dtype=float)
        act = np.flatnonzero(active & (stds > 0))
        names = [inputs.variables[i].datum for i in act]
        linked = sorted({tuple(sorted((names[a], names[b]))) for a in range(len(act)) for b in range(a + 1, len(act))
                         if names[a] != names[b] and R[act[a], act[b]] != 0.0})
        if linked:
            chosen = "linear"
            pairs = ", ".join(f"{x} ~ {y}" for x, y in linked[:3]) + (f" and {len(linked) - 3} more" if len(linked) > 3 else "")
            caveat = ""
            if odd or not is_linear:
                caveat = (" (the model is nonlinear or has non-normal inputs, so these first-order shares are a guide; "
                          "the Monte Carlo interval remains the result)")
            reason = (f"the data it depends on are correlated with each other ({pairs}); Sobol' indices need "
                      f"independent factors, so the ranking uses the linear variance shares with the correlation "
                      f"part shown separately{caveat}")
        elif odd:
            chosen = "sobol"
            kinds = sorted({type(v.distribution).__name__ for v in inputs.variables
                            if v.datum in odd and not _is_normal(v.distribution)})
            listed = ", ".join(odd[:4]) + (f" and {len(odd) - 4} more" if len(odd) > 4 else "")
            reason = f"non-normal inputs ({', '.join(kinds).lower()}: {listed}); grouped Sobol' indices"
        elif not is_linear:
            chosen = "sobol"
            reason = f"the model is nonlinear ({how}); grouped Sobol' indices"
        else:
            chosen = "linear"
            reason = f"every input is normal and the model is linear ({how}); linear variance shares"
    else:
        chosen = method
        reason = f"{method} ranking requested"

    sob = None
    if chosen == "sobol" or global_indices:
        sob = sobol_indices(f, inputs, n_base=n_base, seed=seed, delta=delta, sensitivity=C,
                            num_resamples=num_resamples, conf_level=conf_level, chunk_size=chunk_size)
        warn.extend(sob.notes)
    if chosen == "sobol" and sob is not None:
        drivers = [sob.drivers(m) for m in range(C.shape[0])]
        if sob.cross_datum_correlation:
            reason += " (cross-datum correlations were left out of the Sobol' sample; see the linear shares and correlation_share)"
    else:
        active = [j for j, name in enumerate(ls.data) if np.any(np.asarray(inputs.stds)[np.asarray(inputs.groups[name], dtype=int)] > 0)]
        drivers = []
        for m in range(C.shape[0]):
            order = sorted(active, key=lambda j: -ls.shares[m, j])
            drivers.append([Driver(ls.data[j], float(ls.shares[m, j]), None, "linear") for j in order])
    return Ranking(drivers, chosen, reason, ls.correlation_part, ls, sob, linearity, warn)

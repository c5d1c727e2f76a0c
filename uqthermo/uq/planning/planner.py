"""Planning entry points: the output uncertainty of a selection, linear or by Monte Carlo.

**Linear models.** With sensitivity matrix C (M, D), input covariance Σ and per-datum
factors a_g, the output variance is a quadratic form in a (GUM law of propagation, JCGM
100:2008 eq. (13)):

    u²_m(a) = Σ_{g,h} a_g a_h V_m[g, h],   V_m[g, h] = c_{m,g}ᵀ Σ_gh c_{m,h}

(data without candidates are lumped into one block with a = 1). V is precomputed once, so
exact enumeration of all 2^K selections costs one small einsum per chunk of selections.

**Monte Carlo.** For nonlinear models the same search runs on a common-random-number Monte
Carlo evaluator (:class:`uqthermo.uq.whatif.CommonSample`, x-space scaling): every selection
is evaluated on the very same input sample, so comparisons are not blurred by sampling
noise. Each evaluation costs N model calls; the default exact limit is therefore 6.

Both feed :func:`~uqthermo.uq.planning.search.run_search`.
"""

from __future__ import annotations

from typing import Any, Callable, Mapping, Sequence

import numpy as np
from scipy import stats

from ...errors import StatisticsError
from .candidates import Candidate, Target, parse_target, resolve_candidates
from .search import PurchasePlan, run_search

__all__ = ["QuadraticVariance", "plan_linear", "plan_purchases"]


class QuadraticVariance:
    """Precomputed per-datum and cross terms of the linear output variance.

    ``V[m, g, h] = c_{m,g}ᵀ Σ_gh c_{m,h}`` for the listed data g, h plus a last "rest"
    block holding every other column; ``u²_m(a) = ãᵀ V_m ã`` with ``ã = (a, 1)``
    (GUM, JCGM 100:2008 eq. (13) with Σ' = diag(a) Σ diag(a)).

    Parameters
    ----------
    sensitivity : (M, D)
    covariance : (D, D)
    groups : mapping datum -> column indices
    data : sequence of str
        The data that can change (candidate data), in the column order of ``a``.
    """

    def __init__(self, sensitivity: np.ndarray, covariance: np.ndarray, groups: Mapping[str, Sequence[int]],
                 data: Sequence[str]):
        C = np.atleast_2d(np.asarray(sensitivity, dtype=float))
        Sig = np.asarray(covariance, dtype=float)
        M, D = C.shape
        if Sig.shape != (D, D):
            raise StatisticsError(f"covariance has shape {Sig.shape}, expected ({D}, {D})")
        self.data = list(data)
        G = len(self.data)
        P = np.zeros((D, G + 1))
        used = np.zeros(D, dtype=bool)
        for g, d in enumerate(self.data):
            idx = np.asarray(list(groups[d]), dtype=int)
            P[idx, g] = 1.0
            used[idx] = True
        P[~used, G] = 1.0
        CP = C[:, :, None] * P[None, :, :]  # (M, D, G+1)
        self.V = np.einsum("mig,ij,mjh->mgh", CP, Sig, CP)
        self.M = M

    def variance(self, A: np.ndarray, chunk: int = 8192) -> np.ndarray:
        """u² (S, M) for factor rows A (S, G)."""
        A = np.atleast_2d(np.asarray(A, dtype=float))
        S = A.shape[0]
        out = np.empty((S, self.M))
        for s in range(0, S, chunk):
            a = np.concatenate([A[s:s + chunk], np.ones((min(chunk, S - s), 1))], axis=1)
            out[s:s + chunk] = np.einsum("sg,mgh,sh->sm", a, self.V, a, optimize=True)
        return np.maximum(out, 0.0)


def _metric_setup(target: Target | None, coverage: float) -> tuple[str, float | None]:
    if target is None:
        return "U", coverage
    if target.metric == "u":
        return "u", None
    return target.metric, (target.probability if target.probability is not None else coverage)


# ---------------------------------------------------------------------------------------
# public entry points
# ---------------------------------------------------------------------------------------
def plan_linear(
    candidates: Sequence[Candidate],
    sensitivity: np.ndarray,
    covariance: np.ndarray,
    groups: Mapping[str, Sequence[int]],
    stds: np.ndarray | None = None,
    *,
    target: Target | str | None = None,
    budget: float | None = None,
    coverage: float = 0.95,
    coverage_factor: float | np.ndarray | None = None,
    exact_limit: int = 16,
    max_lead_time: float | None = None,
    output_labels: Sequence[str] | None = None,
) -> PurchasePlan:
    """Plan purchases for a linear model given as plain arrays.

    Metric: ``u_m = sqrt(ãᵀ V_m ã)`` (:class:`QuadraticVariance`); ``U_m = k u_m`` with
    ``k = coverage_factor`` when given (scalar or (M,), e.g. the linear result's k), else
    ``k = Φ⁻¹((1 + p)/2)`` (normal, GUM G.1.3) for the target's probability p.

    Parameters
    ----------
    candidates : sequence of Candidate
    sensitivity : (M, D); covariance : (D, D); groups : datum -> columns
    stds : (D,), optional
        Needed when a candidate states an achievable standard uncertainty.
    target : Target or str, optional
        A parsed target (value in output units) or text for :func:`parse_target` with no
        unit (or with a unit the caller has already matched).
    budget : float, optional
    exact_limit : int
        Largest number of (lead-time-allowed) candidates enumerated exactly.

    Returns
    -------
    PurchasePlan
    """
    if isinstance(target, str):
        target = parse_target(target, coverage)
    factors, warns = resolve_candidates(candidates, groups, None if stds is None else np.asarray(stds, float))
    data = list(dict.fromkeys(c.datum for c in candidates))
    qv = QuadraticVariance(sensitivity, covariance, groups, data)
    metric, p = _metric_setup(target, coverage)
    if metric == "u":
        k = 1.0
    elif coverage_factor is not None:
        k = np.asarray(coverage_factor, dtype=float)
    else:
        k = float(stats.norm.ppf((1.0 + p) / 2.0))

    def evaluate(A):
        return k * np.sqrt(qv.variance(A))

    return run_search(candidates, factors, evaluate, target=target, budget=budget, max_lead_time=max_lead_time,
                exact_limit=exact_limit, engine="linear", metric=metric, probability=p,
                output_labels=None if output_labels is None else list(output_labels), warns=warns)


def plan_purchases(
    f: Callable[[np.ndarray], np.ndarray],
    inputs: Any,
    candidates: Sequence[Candidate],
    *,
    target: Target | str | None = None,
    budget: float | None = None,
    method: str = "linear",
    linear: Any = None,
    coverage: float = 0.95,
    samples: int = 4096,
    sampling: str = "sobol",
    seed: int = 0,
    exact_limit: int | None = None,
    max_lead_time: float | None = None,
    output_labels: Sequence[str] | None = None,
    chunk_size: int = 65536,
    rotate: bool = True,
) -> PurchasePlan:
    """Plan purchases for a model ``f(X[N, D]) -> Y[N, M]`` with inputs ``inputs``.

    ``method="linear"``: the quadratic-form planner of :func:`plan_linear` with the
    sensitivities of ``linear`` (or a fresh ``propagate_linear``) and
    ``inputs.covariance()``; for U targets the coverage factor is the normal one for the
    target's probability. ``method="monte-carlo"``: each selection is evaluated with
    common random numbers on one shared sample of ``samples`` rows
    (:class:`uqthermo.uq.whatif.CommonSample`); U is the half-width of the probabilistically
    symmetric coverage interval (JCGM 101 §7.7), u the sample standard deviation. Exact
    enumeration up to ``exact_limit`` candidates (default 16 linear, 6 Monte Carlo).
    """
    if isinstance(target, str):
        target = parse_target(target, coverage)
    if method in ("linear", "gum"):
        if linear is None:
            from ..linear import propagate_linear  # helper B's module

            linear = propagate_linear(f, inputs, coverage=coverage)
        return plan_linear(candidates, linear.sensitivity, inputs.covariance(), inputs.groups, inputs.stds,
                           target=target, budget=budget, coverage=coverage,
                           exact_limit=16 if exact_limit is None else exact_limit, max_lead_time=max_lead_time,
                           output_labels=output_labels)
    if method not in ("monte-carlo", "montecarlo", "mc"):
        raise StatisticsError(f"unknown planning method {method!r}; use linear or monte-carlo")
    from ..whatif import CommonSample

    factors, warns = resolve_candidates(candidates, inputs.groups, np.asarray(inputs.stds, dtype=float))
    data = list(dict.fromkeys(c.datum for c in candidates))
    metric, p = _metric_setup(target, coverage)
    shared = CommonSample(f, inputs, samples, sampling=sampling, seed=seed, chunk_size=chunk_size, rotate=rotate)
    D = len(inputs.stds)
    cols = [np.asarray(list(inputs.groups[d]), dtype=int) for d in data]

    def evaluate(A):
        full = np.ones((A.shape[0], D))
        for g, idx in enumerate(cols):
            full[:, idx] = A[:, [g]]
        u, iv = shared.evaluate(full, p if p is not None else coverage)
        if metric == "u":
            return u
        return 0.5 * (iv[..., 1] - iv[..., 0])

    plan = run_search(candidates, factors, evaluate, target=target, budget=budget, max_lead_time=max_lead_time,
                exact_limit=6 if exact_limit is None else exact_limit, engine="monte-carlo", metric=metric,
                probability=p, output_labels=None if output_labels is None else list(output_labels), warns=warns)
    return plan

"""The purchase planner's optimiser: which selection of candidates, and the cost/uncertainty front.

A *selection* is a subset of the candidates; buying two candidates for the same datum keeps
the better one (smallest factor). The search finds the cheapest selection whose worst-point
uncertainty meets the target (optionally within a budget), or with only a budget the
selection with the smallest worst-point uncertainty that fits it, and the Pareto front of
cost against the worst-point uncertainty (:class:`PurchasePlan`). It sees the model only
through a metric of factor rows (see :mod:`uqthermo.uq.planning.planner`).

**Search.** K ≤ ``exact_limit`` (default 16): exact enumeration. Beyond: greedy forward
selection by reduction of the worst-point uncertainty per unit cost (ties/zero gains broken
by the reduction of the summed variance), followed by local improvement (drop / add / swap
one candidate while it lowers the cost at a met target, or lowers the uncertainty within the
budget) — a standard first-improvement neighbourhood search; it returns a locally optimal,
not necessarily globally optimal, selection, and its front is an approximation (said so in
``method``). Note that u² is not monotone in the factors when contributions are negatively
correlated, so bound-based pruning is not used.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, Sequence

import numpy as np

from ...errors import StatisticsError
from .candidates import Candidate, Target

__all__ = ["PlanPoint", "PurchasePlan", "run_search"]


class _Evaluator:
    """metric(A (S, G)) -> (S, M) in target units; counts evaluations."""

    def __init__(self, fn: Callable[[np.ndarray], np.ndarray]):
        self.fn = fn
        self.count = 0

    def __call__(self, A: np.ndarray) -> np.ndarray:
        A = np.atleast_2d(A)
        self.count += A.shape[0]
        return self.fn(A)


@dataclass
class PlanPoint:
    """One selection of candidates.

    Attributes
    ----------
    indices : tuple of int
        Candidate indices (into ``PurchasePlan.candidates``).
    labels, data : list of str
    cost : float
    lead_time : float or None
        Largest lead time of the members (None if none is given; 0 for an empty set).
    values : ndarray (M,)
        Target metric per output point.
    worst : float
        ``max(values)``.
    worst_output : int
        Index of the worst point.
    """

    indices: tuple[int, ...]
    labels: list[str]
    data: list[str]
    cost: float
    lead_time: float | None
    values: np.ndarray
    worst: float
    worst_output: int

    def to_dict(self, scale: float = 1.0, output_labels: Sequence[str] | None = None) -> dict:
        d = {"candidates": list(self.labels), "indices": list(self.indices), "data": list(self.data),
             "cost": self.cost, "lead_time": self.lead_time, "worst": float(self.worst * scale),
             "worst_output": int(self.worst_output), "values": [float(v * scale) for v in self.values]}
        if output_labels is not None:
            d["worst_output_label"] = output_labels[self.worst_output]
        return d


@dataclass
class PurchasePlan:
    """Result of the data-purchase planner (see :mod:`uqthermo.uq.planning`).

    Attributes
    ----------
    candidates : list of Candidate
    factors : ndarray (K,)
        Resolved factor of each candidate on its datum's uncertainty.
    metric : str
        ``"U"``, ``"u"`` or ``"halfwidth"``; ``probability`` its coverage probability.
    target : Target or None
    budget : float or None
    max_lead_time : float or None
    engine : str
        ``"linear"`` or ``"monte-carlo"``.
    method : str
        ``"exact enumeration"`` or ``"greedy + local improvement (approximate)"``.
    baseline : PlanPoint
        Nothing bought.
    selection : PlanPoint or None
        The recommended selection (None when the target cannot be met / no goal given).
    feasible : bool or None
        Whether a selection meets the target (and budget); None without a goal.
    pareto : list of PlanPoint
        Non-dominated (cost, worst) selections, cheapest first.
    n_evaluated : int
        Number of selections evaluated.
    output_labels : list of str or None
    warnings : list of str
    """

    candidates: list[Candidate]
    factors: np.ndarray
    metric: str
    probability: float | None
    target: Target | None
    budget: float | None
    max_lead_time: float | None
    engine: str
    method: str
    baseline: PlanPoint
    selection: PlanPoint | None
    feasible: bool | None
    pareto: list[PlanPoint]
    n_evaluated: int
    output_labels: list[str] | None = None
    warnings: list[str] = field(default_factory=list)

    def rows(self, scale: float = 1.0) -> list[dict]:
        """Table rows of the Pareto front: ``{"cost", "lead_time", "worst", "worst_output",
        "candidates" (joined text), "meets_target", "selected"}``."""
        sel = None if self.selection is None else self.selection.indices
        out = []
        for p in self.pareto:
            out.append({"cost": p.cost, "lead_time": p.lead_time, "worst": float(p.worst * scale),
                        "worst_output": (self.output_labels[p.worst_output] if self.output_labels
                                         else p.worst_output),
                        "candidates": ", ".join(p.labels) if p.labels else "(none)",
                        "meets_target": None if self.target is None else bool(self.target.met(p.worst)),
                        "selected": p.indices == sel})
        return out

    def to_dict(self, scale: float = 1.0) -> dict:
        """JSON-ready dict: ``{"engine", "method", "metric", "probability", "target", "budget",
        "max_lead_time", "feasible", "baseline", "selection", "pareto", "candidates",
        "n_evaluated", "output_labels", "warnings"}`` (uncertainties multiplied by ``scale``)."""
        ol = self.output_labels
        return {"engine": self.engine, "method": self.method, "metric": self.metric,
                "probability": self.probability,
                "target": None if self.target is None else self.target.to_dict(),
                "budget": self.budget, "max_lead_time": self.max_lead_time, "feasible": self.feasible,
                "baseline": self.baseline.to_dict(scale, ol),
                "selection": None if self.selection is None else self.selection.to_dict(scale, ol),
                "pareto": [p.to_dict(scale, ol) for p in self.pareto],
                "candidates": [dict(c.to_dict(), factor_applied=float(self.factors[k]))
                               for k, c in enumerate(self.candidates)],
                "n_evaluated": self.n_evaluated, "output_labels": ol, "warnings": list(self.warnings)}


class _Problem:
    def __init__(self, cands, factors, evaluate, target, budget, max_lead_time):
        self.cands = cands
        self.K = len(cands)
        self.factors = factors
        self.cost = np.array([float(c.cost) for c in cands])
        self.lead = np.array([np.nan if c.lead_time is None else float(c.lead_time) for c in cands])
        self.data = list(dict.fromkeys(c.datum for c in cands))
        self.col = np.array([self.data.index(c.datum) for c in cands], dtype=int)
        self.evaluate = evaluate
        self.target = target
        self.budget = budget
        self._cache: dict[bytes, np.ndarray] = {}
        self.allowed = np.ones(self.K, dtype=bool)
        if max_lead_time is not None:
            self.allowed &= ~(self.lead > max_lead_time)  # NaN lead time: allowed

    def factor_rows(self, masks: np.ndarray) -> np.ndarray:
        masks = np.atleast_2d(masks)
        A = np.ones((masks.shape[0], len(self.data)))
        for k in range(self.K):
            g = self.col[k]
            A[:, g] = np.where(masks[:, k], np.minimum(A[:, g], self.factors[k]), A[:, g])
        return A

    def values(self, masks: np.ndarray) -> np.ndarray:
        masks = np.atleast_2d(np.asarray(masks, dtype=bool))
        if masks.shape[0] > 4096:  # bulk enumeration: no caching
            return self.evaluate(self.factor_rows(masks))
        keys = [m.tobytes() for m in masks]
        todo = [i for i, k in enumerate(keys) if k not in self._cache]
        if todo:
            vals = self.evaluate(self.factor_rows(masks[todo]))
            for j, i in enumerate(todo):
                self._cache[keys[i]] = vals[j]
        return np.array([self._cache[k] for k in keys])

    def point(self, mask: np.ndarray, values: np.ndarray | None = None) -> PlanPoint:
        mask = np.asarray(mask, dtype=bool)
        if values is None:
            values = self.values(mask[None, :])[0]
        idx = tuple(int(i) for i in np.flatnonzero(mask))
        lt = self.lead[list(idx)]
        if not idx:
            lead = 0.0
        elif np.all(np.isnan(lt)):
            lead = None
        else:
            lead = float(np.nanmax(lt))
        w = int(np.argmax(values)) if values.size else 0
        return PlanPoint(idx, [self.cands[i].name for i in idx], sorted({self.cands[i].datum for i in idx}),
                         float(self.cost[list(idx)].sum()) if idx else 0.0, lead, np.asarray(values, dtype=float),
                         float(values[w]) if values.size else 0.0, w)

    def ok(self, worst: np.ndarray, cost: np.ndarray) -> np.ndarray:
        good = np.ones(np.shape(worst), dtype=bool)
        if self.target is not None:
            good &= self.target.met(worst)
        if self.budget is not None:
            good &= cost <= self.budget * (1 + 1e-12)
        return good


def _pareto(masks: np.ndarray, cost: np.ndarray, worst: np.ndarray) -> list[int]:
    n_items = masks.sum(axis=1)
    order = np.lexsort((n_items, worst, cost))
    keep = []
    best = np.inf
    for i in order:
        if worst[i] < best * (1 - 1e-12) or (not keep and worst[i] <= best):
            keep.append(int(i))
            best = worst[i]
    return keep


def _choose(prob: _Problem, masks: np.ndarray, cost: np.ndarray, worst: np.ndarray) -> int | None:
    if prob.target is None and prob.budget is None:
        return None
    good = prob.ok(worst, cost)
    if not good.any():
        return None
    idx = np.flatnonzero(good)
    n_items = masks[idx].sum(axis=1)
    if prob.target is not None:
        order = np.lexsort((n_items, worst[idx], cost[idx]))  # cheapest, then lowest worst
    else:
        order = np.lexsort((n_items, cost[idx], worst[idx]))  # lowest worst within budget, then cheapest
    return int(idx[order[0]])


def _enumerate(prob: _Problem, chunk: int = 1 << 15):
    allowed = np.flatnonzero(prob.allowed)
    Ka = allowed.size
    n = 1 << Ka
    all_cost = np.empty(n); all_worst = np.empty(n); all_masks = np.zeros((n, prob.K), dtype=bool)
    for s in range(0, n, chunk):
        ids = np.arange(s, min(n, s + chunk))
        bits = ((ids[:, None] >> np.arange(Ka)[None, :]) & 1).astype(bool)
        masks = np.zeros((ids.size, prob.K), dtype=bool)
        masks[:, allowed] = bits
        vals = prob.values(masks)
        all_masks[ids] = masks
        all_cost[ids] = masks @ prob.cost
        all_worst[ids] = vals.max(axis=1) if vals.shape[1] else 0.0
    return all_masks, all_cost, all_worst


def _heuristic(prob: _Problem):
    """Greedy forward selection + first-improvement local search (see module docstring)."""
    K = prob.K
    seen_masks: list[np.ndarray] = []
    seen_cost: list[float] = []
    seen_worst: list[float] = []
    cache: dict[bytes, tuple[float, float]] = {}

    def evaluate(masks: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        masks = np.atleast_2d(masks)
        keys = [m.tobytes() for m in masks]
        todo = [i for i, k in enumerate(keys) if k not in cache]
        if todo:
            vals = prob.values(masks[todo])
            for j, i in enumerate(todo):
                if keys[i] in cache:  # duplicate row within this batch
                    continue
                cache[keys[i]] = (float(vals[j].max()) if vals.shape[1] else 0.0, float(np.sum(vals[j] ** 2)))
                seen_masks.append(masks[i].copy())
                seen_cost.append(float(masks[i] @ prob.cost))
                seen_worst.append(cache[keys[i]][0])
        worst = np.array([cache[k][0] for k in keys])
        sumsq = np.array([cache[k][1] for k in keys])
        return worst, sumsq

    cur = np.zeros(K, dtype=bool)
    cw, cs = evaluate(cur[None])
    cw, cs = cw[0], cs[0]
    chain = [cur.copy()]
    budget = prob.budget
    while True:
        free = np.flatnonzero(prob.allowed & ~cur)
        if budget is not None:
            free = free[(cur @ prob.cost) + prob.cost[free] <= budget * (1 + 1e-12)]
        if free.size == 0:
            break
        trial = np.repeat(cur[None], free.size, axis=0)
        trial[np.arange(free.size), free] = True
        w, s = evaluate(trial)
        gain_w = cw - w
        gain_s = cs - s
        c = np.maximum(prob.cost[free], 1e-300)
        if np.any(gain_w > 1e-12 * max(cw, 1e-300)):
            score = np.where(gain_w > 0, gain_w / c, -np.inf)
        elif np.any(gain_s > 1e-12 * max(cs, 1e-300)):
            score = np.where(gain_s > 0, gain_s / c, -np.inf)
        else:
            break
        j = int(np.argmax(score))
        cur = trial[j]
        cw, cs = w[j], s[j]
        chain.append(cur.copy())  # the whole chain traces the (approximate) front

    # starting point for local search
    chain_masks = np.array(chain)
    cw_chain, _ = evaluate(chain_masks)
    cost_chain = chain_masks @ prob.cost
    start = _choose(prob, chain_masks, cost_chain, cw_chain)
    best = None
    if start is not None:
        best = _local_search(prob, chain_masks[start].copy(), evaluate)
    masks = np.array(seen_masks)
    return masks, np.array(seen_cost), np.array(seen_worst), best


def _local_search(prob: _Problem, cur: np.ndarray, evaluate) -> np.ndarray:

    def key(mask):
        w, _ = evaluate(mask[None])
        c = float(mask @ prob.cost)
        if prob.target is not None:
            return (c, w[0])  # minimise cost (target kept feasible)
        return (w[0], c)  # minimise worst within budget

    cur_key = key(cur)
    improved = True
    while improved:
        improved = False
        neigh = []
        on = np.flatnonzero(cur)
        off = np.flatnonzero(prob.allowed & ~cur)
        for i in on:
            m = cur.copy(); m[i] = False; neigh.append(m)
        for j in off:
            m = cur.copy(); m[j] = True; neigh.append(m)
        for i in on:
            for j in off:
                m = cur.copy(); m[i] = False; m[j] = True; neigh.append(m)
        if not neigh:
            break
        N = np.array(neigh)
        w, _ = evaluate(N)
        c = N @ prob.cost
        good = prob.ok(w, c)
        if not good.any():
            break
        keys = [(c[i], w[i]) if prob.target is not None else (w[i], c[i]) for i in range(len(N))]
        cand = [i for i in np.flatnonzero(good) if keys[i] < cur_key and not _same(keys[i], cur_key)]
        if cand:
            i = min(cand, key=lambda t: keys[t])
            cur = N[i].copy()
            cur_key = keys[i]
            improved = True
    return cur


def _same(a, b) -> bool:
    return all(abs(x - y) <= 1e-12 * max(1.0, abs(x), abs(y)) for x, y in zip(a, b))


def run_search(cands, factors, evaluate_metric, *, target, budget, max_lead_time, exact_limit, engine, metric,
         probability, output_labels, warns) -> PurchasePlan:
    """Search the selections of ``cands`` (factors ``factors``) for the plan.

    ``evaluate_metric(A (S, G)) -> (S, M)``: the target metric per output point for factor rows
    A over the candidate data. Exact enumeration when at most ``exact_limit`` candidates are
    allowed by ``max_lead_time``, else greedy + local improvement (module docstring).
    """
    if budget is not None:
        budget = float(budget)
        if not math.isfinite(budget) or budget < 0:
            raise StatisticsError(f"budget must be a finite number >= 0, got {budget}", key="budget")
    ev = _Evaluator(evaluate_metric)
    prob = _Problem(list(cands), factors, ev, target, budget, max_lead_time)
    if max_lead_time is not None and not prob.allowed.all():
        dropped = [prob.cands[i].name for i in np.flatnonzero(~prob.allowed)]
        warns.append(f"left out for lead time > {max_lead_time:g}: {', '.join(dropped)}")
    base = prob.point(np.zeros(prob.K, dtype=bool))
    if int(prob.allowed.sum()) <= exact_limit:
        masks, cost, worst = _enumerate(prob)
        method = "exact enumeration"
        pick = _choose(prob, masks, cost, worst)
        sel_mask = None if pick is None else masks[pick]
    else:
        masks, cost, worst, sel_mask = _heuristic(prob)
        method = "greedy + local improvement (approximate)"
    front = [prob.point(masks[i]) for i in _pareto(masks, cost, worst)]
    selection = None if sel_mask is None else prob.point(sel_mask)
    feasible = None if (target is None and budget is None) else selection is not None
    if feasible is False:
        if target is not None:
            best = min(front, key=lambda p: p.worst) if front else base
            warns.append(f"the target cannot be met with these candidates"
                         f"{' within the budget' if budget is not None else ''}; the best reachable worst-point "
                         f"value is {best.worst:.4g} at cost {best.cost:g}")
        else:
            warns.append("no selection fits the budget")
    return PurchasePlan(list(cands), factors, metric, probability, target, budget, max_lead_time, engine, method,
                        base, selection, feasible, front, ev.count, output_labels, warns)

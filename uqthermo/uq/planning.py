"""Data-purchase planning: the cheapest set of measurements that meets an uncertainty target.

Each *candidate* is a measurement one could buy for one datum: the datum's standard
uncertainty would become ``std`` (or be multiplied by ``factor``) at a ``cost`` (and an
optional lead time). A *selection* is a subset of the candidates; buying two candidates
for the same datum keeps the better one (smallest factor). The planner finds

* the cheapest selection whose output uncertainty meets the target **at every output
  point** (the worst point decides: for a curve, the worst temperature), optionally within
  a budget; or, with only a budget, the selection with the smallest worst-point uncertainty
  that fits the budget;
* the Pareto front of cost against the worst-point uncertainty.

**Linear models.** With sensitivity matrix C (M, D), input covariance Σ and per-datum
factors a_g, the output variance is a quadratic form in a (GUM law of propagation, JCGM
100:2008 eq. (13)):

    u²_m(a) = Σ_{g,h} a_g a_h V_m[g, h],   V_m[g, h] = c_{m,g}ᵀ Σ_gh c_{m,h}

(data without candidates are lumped into one block with a = 1). V is precomputed once, so
exact enumeration of all 2^K selections costs one small einsum per chunk of selections.

**Search.** K ≤ ``exact_limit`` (default 16): exact enumeration. Beyond: greedy forward
selection by reduction of the worst-point uncertainty per unit cost (ties/zero gains broken
by the reduction of the summed variance), followed by local improvement (drop / add / swap
one candidate while it lowers the cost at a met target, or lowers the uncertainty within the
budget) — a standard first-improvement neighbourhood search; it returns a locally optimal,
not necessarily globally optimal, selection, and its front is an approximation (said so in
``method``). Note that u² is not monotone in the factors when contributions are negatively
correlated, so bound-based pruning is not used.

**Monte Carlo.** For nonlinear models the same search runs on a common-random-number Monte
Carlo evaluator (:class:`uqthermo.uq.whatif.CommonSample`, x-space scaling): every selection
is evaluated on the very same input sample, so comparisons are not blurred by sampling
noise. Each evaluation costs N model calls; the default exact limit is therefore 6.

The module never imports the physics, the case layer or the report.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Any, Callable, Mapping, Sequence

import numpy as np
from scipy import stats

from ..errors import InputError, StatisticsError

__all__ = ["Candidate", "Target", "parse_target", "PlanPoint", "PurchasePlan", "QuadraticVariance",
           "plan_linear", "plan_purchases"]


# ---------------------------------------------------------------------------------------
# target and candidates
# ---------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Target:
    """An uncertainty target, e.g. ``U95 <= 2 kJ/mol``.

    Attributes
    ----------
    metric : str
        ``"U"`` expanded uncertainty, ``"u"`` standard uncertainty, ``"halfwidth"``
        half-width of the coverage interval (equal to U for the linear method; for Monte
        Carlo U is defined as that half-width too).
    probability : float or None
        Coverage probability for U / halfwidth (None: the run's coverage probability).
    comparator : str
        ``"<="`` or ``"<"``.
    value : float
        Threshold in the units the caller evaluates in (convert ``unit`` first).
    unit : str
        Unit text that followed the number ("" if none) — for the caller to convert.
    text : str
        The original text.
    """

    metric: str
    probability: float | None
    comparator: str
    value: float
    unit: str = ""
    text: str = ""

    def with_value(self, value: float, unit: str = "") -> "Target":
        """The same target with the threshold converted by the caller."""
        return Target(self.metric, self.probability, self.comparator, float(value), unit, self.text)

    def met(self, x: np.ndarray) -> np.ndarray:
        """Whether values ``x`` meet the target (vectorised).

        ``<=`` allows a relative rounding slack of 1e-10 (a value equal to the limit up to
        floating-point rounding of the variance sum meets it); ``<`` is strict.
        """
        x = np.asarray(x, dtype=float)
        if self.comparator == "<=":
            return x <= self.value * (1.0 + 1e-10)
        return x < self.value

    def to_dict(self) -> dict:
        return {"text": self.text, "metric": self.metric, "probability": self.probability,
                "comparator": self.comparator, "value": self.value, "unit": self.unit}


_TARGET_RE = re.compile(
    r"^\s*(?P<metric>U|u|ci[-_ ]?half[-_ ]?width|half[-_ ]?width)(?P<p>\d+(?:\.\d+)?)?\s*"
    r"(?:\(\s*(?P<p2>\d+(?:\.\d+)?)\s*%\s*\))?\s*"
    r"(?P<cmp><=|≤|=<|<|>=|≥|>)\s*"
    r"(?P<value>[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*(?P<unit>.*?)\s*$"
)


def parse_target(text: str, default_probability: float | None = None) -> Target:
    """Parse a target such as ``"U95 <= 2 kJ/mol"``.

    Grammar: ``METRIC[PP] COMPARATOR NUMBER [UNIT]`` where METRIC is ``U`` (expanded
    uncertainty), ``u`` (standard uncertainty) or ``ci-halfwidth`` / ``halfwidth``
    (coverage-interval half-width), PP an optional coverage probability in percent
    (``U95``, ``U99``, ``ci-halfwidth99``, or ``U(95 %)``) and COMPARATOR ``<=``/``≤``/``<``.
    Units are returned verbatim in ``Target.unit`` for the caller to convert.

    Raises
    ------
    InputError
        With key ``"target"`` for anything else (e.g. ``>=``: an uncertainty target is an
        upper limit; ``u95``: a standard uncertainty has no coverage probability).
    """
    if not isinstance(text, str):
        raise InputError(f"target must be text like 'U95 <= 2 kJ/mol', got {text!r}", key="target")
    m = _TARGET_RE.match(text)
    if not m:
        raise InputError(f"cannot read target {text!r}; write e.g. 'U95 <= 2 kJ/mol', 'u < 0.8 kJ/mol' "
                         "or 'ci-halfwidth99 <= 3 kJ/mol'", key="target")
    metric = m.group("metric")
    metric = "U" if metric == "U" else ("u" if metric == "u" else "halfwidth")
    cmp_ = {"≤": "<=", "=<": "<="}.get(m.group("cmp"), m.group("cmp"))
    if cmp_ in (">=", ">", "≥"):
        raise InputError(f"target {text!r}: an uncertainty target must be an upper limit (<= or <)", key="target")
    pct = m.group("p") or m.group("p2")
    if metric == "u" and pct:
        raise InputError(f"target {text!r}: a standard uncertainty u has no coverage probability; "
                         "use U95 or ci-halfwidth95", key="target")
    prob = None if metric == "u" else (float(pct) / 100.0 if pct else default_probability)
    if prob is not None and not (0.0 < prob < 1.0):
        raise InputError(f"target {text!r}: coverage probability must lie between 0 and 100 %", key="target")
    value = float(m.group("value"))
    if not math.isfinite(value) or value <= 0:
        raise InputError(f"target {text!r}: the limit must be a positive number", key="target")
    return Target(metric, prob, cmp_, value, m.group("unit"), text.strip())


@dataclass(frozen=True)
class Candidate:
    """A measurement that could be bought.

    Attributes
    ----------
    datum : str
        Datum id it improves.
    cost : float
        Cost (any currency/effort unit; ≥ 0).
    std : float, optional
        Achievable standard uncertainty (single-parameter data; input units).
    factor : float, optional
        Or a factor on the datum's standard uncertainties (e.g. 0.3).
    lead_time : float, optional
        Lead time (any unit; the selection's lead time is the largest of its members —
        measurements are assumed to run in parallel).
    label : str, optional
        Name in tables (default: derived from datum and std/factor).
    """

    datum: str
    cost: float
    std: float | None = None
    factor: float | None = None
    lead_time: float | None = None
    label: str | None = None

    @property
    def name(self) -> str:
        if self.label:
            return self.label
        if self.std is not None:
            return f"{self.datum} (u={self.std:g})"
        if self.factor is not None:
            return f"{self.datum} (x{self.factor:g})"
        return self.datum

    def to_dict(self) -> dict:
        return {"label": self.name, "datum": self.datum, "std": self.std, "factor": self.factor,
                "cost": self.cost, "lead_time": self.lead_time}


def _resolve_candidates(cands: Sequence[Candidate], groups: Mapping[str, Sequence[int]],
                        stds: np.ndarray | None) -> tuple[np.ndarray, list[str]]:
    factors = np.ones(len(cands))
    warns: list[str] = []
    for k, c in enumerate(cands):
        if not isinstance(c, Candidate):
            raise StatisticsError(f"candidates must be Candidate objects, got {type(c).__name__}")
        if c.datum not in groups:
            raise StatisticsError(f"candidate {c.name!r}: unknown datum {c.datum!r}", key=c.datum)
        cost = float(c.cost)
        if not math.isfinite(cost) or cost < 0:
            raise StatisticsError(f"candidate {c.name!r}: cost must be a finite number >= 0", key=c.datum)
        if c.lead_time is not None and (not math.isfinite(float(c.lead_time)) or float(c.lead_time) < 0):
            raise StatisticsError(f"candidate {c.name!r}: lead time must be >= 0", key=c.datum)
        if (c.std is None) == (c.factor is None):
            raise StatisticsError(f"candidate {c.name!r}: give exactly one of an achievable standard "
                                  "uncertainty or a factor", key=c.datum)
        if c.factor is not None:
            fac = float(c.factor)
        else:
            idx = list(groups[c.datum])
            if len(idx) != 1:
                raise StatisticsError(f"candidate {c.name!r}: datum {c.datum!r} has {len(idx)} parameters; "
                                      "give a factor on its uncertainty instead of a standard uncertainty",
                                      key=c.datum)
            if stds is None:
                raise StatisticsError("candidate standard uncertainties need the inputs' stds", key=c.datum)
            now = float(stds[idx[0]])
            u = float(c.std)
            if not math.isfinite(u) or u < 0:
                raise StatisticsError(f"candidate {c.name!r}: achievable uncertainty must be >= 0", key=c.datum)
            fac = 0.0 if (now == 0 or u == 0) else u / now
        if not math.isfinite(fac) or fac < 0:
            raise StatisticsError(f"candidate {c.name!r}: factor must be >= 0", key=c.datum)
        if fac > 1:
            warns.append(f"candidate {c.name!r} would not improve {c.datum} (factor {fac:.3g} > 1); "
                         "it is treated as no change")
            fac = 1.0
        factors[k] = fac
    return factors, warns


# ---------------------------------------------------------------------------------------
# evaluators
# ---------------------------------------------------------------------------------------
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


class _Evaluator:
    """metric(A (S, G)) -> (S, M) in target units; counts evaluations."""

    def __init__(self, fn: Callable[[np.ndarray], np.ndarray]):
        self.fn = fn
        self.count = 0

    def __call__(self, A: np.ndarray) -> np.ndarray:
        A = np.atleast_2d(A)
        self.count += A.shape[0]
        return self.fn(A)


# ---------------------------------------------------------------------------------------
# result
# ---------------------------------------------------------------------------------------
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
    """Result of the data-purchase planner (see the module docstring).

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


# ---------------------------------------------------------------------------------------
# search core
# ---------------------------------------------------------------------------------------
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


def _run(cands, factors, evaluate_metric, *, target, budget, max_lead_time, exact_limit, engine, metric,
         probability, output_labels, warns) -> PurchasePlan:
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
    factors, warns = _resolve_candidates(candidates, groups, None if stds is None else np.asarray(stds, float))
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

    return _run(candidates, factors, evaluate, target=target, budget=budget, max_lead_time=max_lead_time,
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
            from .linear import propagate_linear  # helper B's module

            linear = propagate_linear(f, inputs, coverage=coverage)
        return plan_linear(candidates, linear.sensitivity, inputs.covariance(), inputs.groups, inputs.stds,
                           target=target, budget=budget, coverage=coverage,
                           exact_limit=16 if exact_limit is None else exact_limit, max_lead_time=max_lead_time,
                           output_labels=output_labels)
    if method not in ("monte-carlo", "montecarlo", "mc"):
        raise StatisticsError(f"unknown planning method {method!r}; use linear or monte-carlo")
    from .whatif import CommonSample

    factors, warns = _resolve_candidates(candidates, inputs.groups, np.asarray(inputs.stds, dtype=float))
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

    plan = _run(candidates, factors, evaluate, target=target, budget=budget, max_lead_time=max_lead_time,
                exact_limit=6 if exact_limit is None else exact_limit, engine="monte-carlo", metric=metric,
                probability=p, output_labels=None if output_labels is None else list(output_labels), warns=warns)
    return plan

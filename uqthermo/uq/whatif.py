"""What a better (or worse) datum would buy: output uncertainty under data-quality scenarios.

A *scenario* multiplies the standard uncertainty of one or more data by a factor
(0.5 = "halved", 0 = "removed"), or sets a single-parameter datum's standard uncertainty to
a stated value. For every scenario and output the module reports the standard and the
expanded uncertainty (and the coverage interval).

* **Linear** (GUM law of propagation, JCGM 100:2008 eq. (13)): with the factors a_i of the
  variables, ``Σ' = diag(a) Σ diag(a)`` and ``u²(y_m) = c_mᵀ Σ' c_m`` — exact, analytic,
  vectorised over scenarios and outputs; correlations are kept (scaling a variable's
  uncertainty scales its covariances, the correlation coefficients stay).
* **Monte Carlo** (JCGM 101) with **common random numbers**: every scenario uses the very
  same uniform base sample U, so scenario differences carry (almost) no sampling noise
  (e.g. Glasserman, *Monte Carlo Methods in Financial Engineering*, 2004, §4.1).
  Two ways of scaling (``scaling=``):

  - ``"x-space"`` (default): one input sample ``X = inputs.from_uniform(U)`` is shared and
    each variable's deviation from its estimate is scaled, ``x' = x̂ + a (x − x̂)``. This
    keeps the copula realisation identical in every scenario (also when a correlated datum
    is removed). For normal, rectangular, triangular and Student-t marginals it is exactly
    a sample of the scaled distribution (they are location-scale families about the
    estimate); for lognormal and truncated marginals it is the affine image (same mean, u
    scaled by a, shape kept) rather than a re-fitted distribution of that kind.
  - ``"distribution"``: each scenario is a fresh Monte Carlo run of
    ``inputs.with_scaled_uncertainty(factors)`` (every marginal re-parametrised) with the
    same seed — identical to a direct re-run. Removing a datum that is correlated with
    other data changes the copula factor of the remaining ones, so common random numbers
    then hold only approximately for those data.

**Standard error of a Monte Carlo what-if.** With ``batches = h ≥ 2`` the shared sample is h
independent replicates of n/h rows (for Sobol' sampling h independently scrambled nets, seeds
:func:`uqthermo.uq.montecarlo.batch_seed` — randomised quasi-Monte Carlo, Owen 1997; the same
batches as the adaptive procedure of JCGM 101 §7.9). Every scenario is evaluated on all of
them; the change ΔU = U_scenario − U_now is computed per replicate b (common random numbers
inside each replicate); the reported change is their average and its standard error
``s(ΔU_b) / √h`` (JCGM 101 §7.9.4: the standard deviation of the average of h batch results), so
U_scenario = U_now + mean ΔU_b with U_now, u and the intervals from the pooled n rows. (A
pooled quantile would not average a small perturbation down: it rests on the few rows near the
interval's ends.) A change smaller than k standard errors, k = max(2, t_0.975(h − 1)) (2.36 for h = 8, the
Student-t factor the adaptive procedure uses too), is *not measurable* at this sample size
(``measurable`` false): the report says "no measurable change" instead of printing noise.
Linear what-if values are exact (standard error 0).

The module never imports the physics, the case layer or the report.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Callable, Iterable, Mapping, Sequence

import numpy as np

from ..errors import StatisticsError
from .sensitivity.evaluation import evaluate_in_chunks

__all__ = ["Scenario", "WhatIfResult", "what_if", "CommonSample", "standard_scenarios", "linear_uncertainty",
           "scenario_coverage_factor", "scenario_factor_matrix"]

Model = Callable[[np.ndarray], np.ndarray]


# ---------------------------------------------------------------------------------------
# scenarios
# ---------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Scenario:
    """A data-quality scenario.

    Attributes
    ----------
    label : str
        Short name for tables (e.g. ``"CH4.g.heat_capacity halved"``).
    factors : mapping datum -> float
        Factor (≥ 0) on the datum's standard uncertainties.
    stds : mapping datum -> float
        Stated standard uncertainty of a *single-parameter* datum (input units); turned into
        a factor ``u_new / u_now`` by :meth:`resolve`.
    datum : str or None
        The datum the scenario is about (for per-datum table rows).
    kind : str
        ``"halved"``, ``"removed"``, ``"stated"``, ``"scaled"`` or ``"custom"``.
    """

    label: str
    factors: Mapping[str, float] = field(default_factory=dict)
    stds: Mapping[str, float] = field(default_factory=dict)
    datum: str | None = None
    kind: str = "custom"

    @classmethod
    def halved(cls, datum: str) -> "Scenario":
        return cls(f"{datum} halved", {datum: 0.5}, {}, datum, "halved")

    @classmethod
    def removed(cls, datum: str) -> "Scenario":
        return cls(f"{datum} removed", {datum: 0.0}, {}, datum, "removed")

    @classmethod
    def scaled(cls, datum: str, factor: float) -> "Scenario":
        return cls(f"{datum} x{factor:g}", {datum: float(factor)}, {}, datum, "scaled")

    @classmethod
    def stated(cls, datum: str, std: float, label: str | None = None) -> "Scenario":
        """``std`` in the input's units; ``label`` (default ``"DATUM u=STD"``) names the scenario, e.g.
        with the uncertainty as the user wrote it."""
        return cls(label or f"{datum} u={std:g}", {}, {datum: float(std)}, datum, "stated")

    def resolve(self, inputs: Any) -> dict[str, float]:
        """Factors by datum, with stated uncertainties converted (``u_new / u_now``).

        Raises
        ------
        StatisticsError
            Unknown datum, negative or non-finite factor, a stated value for a datum with
            several parameters (give a factor instead) or for an exact datum.
        """
        groups = inputs.groups
        stds = np.asarray(inputs.stds, dtype=float)
        out: dict[str, float] = {}
        for d, fac in self.factors.items():
            if d not in groups:
                raise StatisticsError(f"what-if scenario {self.label!r}: unknown datum {d!r}", key=str(d))
            fac = float(fac)
            if not math.isfinite(fac) or fac < 0:
                raise StatisticsError(f"what-if scenario {self.label!r}: factor must be >= 0, got {fac:g}", key=d)
            out[d] = fac
        for d, u in self.stds.items():
            if d not in groups:
                raise StatisticsError(f"what-if scenario {self.label!r}: unknown datum {d!r}", key=str(d))
            idx = list(groups[d])
            if len(idx) != 1:
                raise StatisticsError(
                    f"datum {d!r} has {len(idx)} parameters; state a factor on its uncertainty instead "
                    "of a standard uncertainty", key=d)
            u = float(u)
            if not math.isfinite(u) or u < 0:
                raise StatisticsError(f"stated standard uncertainty of {d!r} must be >= 0, got {u:g}", key=d)
            now = stds[idx[0]]
            if now == 0:
                if u == 0:
                    out[d] = 0.0
                    continue
                raise StatisticsError(f"datum {d!r} is exact; a stated uncertainty cannot be applied as a factor",
                                      key=d)
            out[d] = u / now
        return out


def standard_scenarios(inputs: Any, data: Iterable[str] | None = None,
                       stated: Mapping[str, float] | None = None) -> list[Scenario]:
    """Halved and removed scenarios for every uncertain datum (plus stated ones if given).

    Parameters
    ----------
    inputs : InputSet
    data : iterable of str, optional
        Data to include (default: every datum with a non-zero uncertainty).
    stated : mapping datum -> standard uncertainty, optional
        Adds a ``"stated"`` scenario for each listed single-parameter datum.
    """
    stds = np.asarray(inputs.stds, dtype=float)
    if data is None:
        data = [d for d in inputs.data if np.any(stds[list(inputs.groups[d])] > 0)]
    out: list[Scenario] = []
    for d in data:
        out.append(Scenario.halved(d))
        out.append(Scenario.removed(d))
        if stated and d in stated:
            out.append(Scenario.stated(d, stated[d]))
    return out


def scenario_factor_matrix(inputs: Any, factor_maps: Sequence[Mapping[str, float]]) -> np.ndarray:
    """Per-variable factor matrix A (S, D) from datum factor maps (missing data: 1)."""
    D = len(inputs.stds)
    A = np.ones((len(factor_maps), D))
    for s, fm in enumerate(factor_maps):
        for d, fac in fm.items():
            A[s, list(inputs.groups[d])] = fac
    return A


# ---------------------------------------------------------------------------------------
# linear helpers
# ---------------------------------------------------------------------------------------
def linear_uncertainty(sensitivity: np.ndarray, covariance: np.ndarray, factors: np.ndarray) -> np.ndarray:
    """Standard uncertainties under scaled input uncertainties (analytic, GUM eq. (13)).

    ``u²_sm = Σ_ij C_mi a_si Σ_ij a_sj C_mj`` i.e. ``cᵀ diag(a) Σ diag(a) c``.

    Parameters
    ----------
    sensitivity : (M, D)
    covariance : (D, D)
    factors : (S, D) factors on the variables' standard uncertainties

    Returns
    -------
    ndarray (S, M)
    """
    C = np.atleast_2d(np.asarray(sensitivity, dtype=float))
    S = np.asarray(covariance, dtype=float)
    A = np.atleast_2d(np.asarray(factors, dtype=float))
    CA = C[None, :, :] * A[:, None, :]  # (S, M, D)
    var = np.einsum("smi,ij,smj->sm", CA, S, CA)
    return np.sqrt(np.maximum(var, 0.0))


def scenario_coverage_factor(sensitivity: np.ndarray, stds: np.ndarray, dofs: np.ndarray, u: np.ndarray,
                             coverage: float = 0.95) -> np.ndarray:
    """Coverage factor k_p per scenario and output, as the linear method computes it.

    ``ν_eff = u⁴(y) / Σ_i (c_i a_i u_i)⁴ / ν_i`` (Welch–Satterthwaite, GUM JCGM 100:2008
    eq. (G.2b)) and ``k_p = t_{ν_eff}((1 + p)/2)`` (normal quantile for ν_eff = ∞) — the very
    functions :func:`uqthermo.uq.linear.welch_satterthwaite` and
    :func:`uqthermo.uq.linear.coverage_factor` use, so a scenario equals a re-run of
    ``propagate_linear`` with the scaled inputs.

    Parameters
    ----------
    sensitivity : (S, M, D)
        Sensitivities already multiplied by the scenario factors (c_i a_i).
    stds, dofs : (D,)
    u : (S, M)
    """
    from .linear import coverage_factor, welch_satterthwaite  # helper B's module

    CA = np.asarray(sensitivity, dtype=float)
    S, M, D = CA.shape
    contrib = np.abs(CA * np.asarray(stds, dtype=float)[None, None, :]).reshape(S * M, D)
    nu = welch_satterthwaite(contrib, np.asarray(dofs, dtype=float), np.asarray(u, dtype=float).reshape(S * M))
    return np.atleast_1d(coverage_factor(coverage, nu)).astype(float).reshape(S, M)


# ---------------------------------------------------------------------------------------
# result
# ---------------------------------------------------------------------------------------
@dataclass
class WhatIfResult:
    """Output uncertainty under each scenario.

    Attributes
    ----------
    method : str
        ``"linear"`` or ``"monte-carlo"``.
    coverage : float
        Coverage probability p of the expanded uncertainties / intervals.
    scenarios : list of Scenario
    factors : list of dict
        Resolved datum factors of each scenario.
    u_now, U_now : ndarray (M,)
        Standard and expanded uncertainty as stated (baseline).
    interval_now : ndarray (M, 2)
    u, U : ndarray (S, M)
        Per scenario. Linear: U = k u (Welch–Satterthwaite k). Monte Carlo: U = half the
        width of the probabilistically symmetric 100p % coverage interval.
    interval : ndarray (S, M, 2)
    samples, seed, sampling, scaling : Monte Carlo settings (None for linear)
    U_se : ndarray (S, M) or None
        Standard error of the change U − U_now per scenario (Monte Carlo with ``batches`` ≥ 2;
        zeros for the exact linear method; None when not estimated).
    batches : int or None
        Independent replicates behind ``U_se``.
    """

    method: str
    coverage: float
    scenarios: list[Scenario]
    factors: list[dict[str, float]]
    u_now: np.ndarray
    U_now: np.ndarray
    interval_now: np.ndarray
    u: np.ndarray
    U: np.ndarray
    interval: np.ndarray
    samples: int | None = None
    seed: int | None = None
    sampling: str | None = None
    scaling: str | None = None
    U_se: np.ndarray | None = None
    batches: int | None = None

    #: a change is measurable when |ΔU| ≥ k standard errors, k = max(MEASURABLE_SE, t_0.975(h − 1))
    #: for h replicates (2.36 for h = 8): at least two standard errors, and a two-sided 95 % test
    #: that allows for the few degrees of freedom of the standard error
    MEASURABLE_SE = 2.0

    def measurable_factor(self) -> float:
        """k of :meth:`change` (``MEASURABLE_SE`` without replicates)."""
        if not self.batches or self.batches < 2:
            return self.MEASURABLE_SE
        from scipy import stats

        return max(self.MEASURABLE_SE, float(stats.t.ppf(0.975, self.batches - 1)))

    def change(self, s: int, m: int) -> tuple[float | None, bool]:
        """Standard error of ΔU = U[s, m] − U_now[m] and whether the change is measurable.

        Linear (exact): standard error 0, measurable when ΔU is not zero to rounding
        (|ΔU| > 1e-9 U_now). Monte Carlo: measurable when |ΔU| ≥ k standard errors
        (:meth:`measurable_factor`, at least 2); without a standard error (``batches`` < 2) the
        standard error is None and every change counts.
        """
        d = float(self.U[s, m] - self.U_now[m])
        if self.method == "linear":
            return 0.0, abs(d) > 1e-9 * abs(float(self.U_now[m]))
        if self.U_se is None:
            return None, True
        se = float(self.U_se[s, m])
        return se, abs(d) >= self.measurable_factor() * se and d != 0.0

    def rows(self, m: int, scale: float = 1.0) -> list[dict]:
        """Per-datum table rows for output column ``m`` (the contract's ``"whatif"`` list).

        Each row: ``{"datum", "U_now", "U_halved", "U_removed"}`` plus ``"U_stated"`` /
        ``"u_stated_factor"`` when a stated scenario exists and ``"U_scaled"`` entries
        (``{factor: U}``) for scaled ones; ``"method"`` (``"linear"`` exact, or
        ``"monte-carlo"``), ``"standard_error"`` and ``"measurable"``: for each U key above
        the standard error of its change from U_now and whether that change is measurable
        (:meth:`change`; the same nesting for ``U_scaled``). Values are multiplied by
        ``scale`` (unit conversion). Rows are ordered by the gain of removal, largest first.
        """
        by: dict[str, dict] = {}
        for s, sc in enumerate(self.scenarios):
            if sc.datum is None:
                continue
            row = by.setdefault(sc.datum, {"datum": sc.datum, "U_now": float(self.U_now[m] * scale),
                                           "U_halved": None, "U_removed": None, "method": self.method,
                                           "standard_error": {}, "measurable": {}})
            val = float(self.U[s, m] * scale)
            se, ok = self.change(s, m)
            se = None if se is None else se * abs(scale)
            if sc.kind in ("halved", "removed", "stated"):
                key = f"U_{sc.kind}"
                row[key] = val
                row["standard_error"][key] = se
                row["measurable"][key] = ok
                if sc.kind == "stated":
                    row["u_stated_factor"] = float(self.factors[s].get(sc.datum, 1.0))
            elif sc.kind == "scaled":
                fk = f"{self.factors[s].get(sc.datum, 1.0):g}"
                row.setdefault("U_scaled", {})[fk] = val
                row["standard_error"].setdefault("U_scaled", {})[fk] = se
                row["measurable"].setdefault("U_scaled", {})[fk] = ok
            else:
                row.setdefault("U_custom", {})[sc.label] = val
                row["standard_error"].setdefault("U_custom", {})[sc.label] = se
                row["measurable"].setdefault("U_custom", {})[sc.label] = ok
        rows = list(by.values())
        rows.sort(key=lambda r: (r["U_removed"] if r["U_removed"] is not None else r["U_now"]))
        return rows

    def scenario_rows(self, m: int, scale: float = 1.0) -> list[dict]:
        """One row per scenario: ``{"label", "kind", "datum", "factors", "u", "U", "interval",
        "standard_error", "measurable"}``."""
        out = []
        for s, sc in enumerate(self.scenarios):
            se, ok = self.change(s, m)
            out.append({"label": sc.label, "kind": sc.kind, "datum": sc.datum, "factors": dict(self.factors[s]),
                        "u": float(self.u[s, m] * scale), "U": float(self.U[s, m] * scale),
                        "interval": [float(self.interval[s, m, 0] * scale), float(self.interval[s, m, 1] * scale)],
                        "standard_error": None if se is None else se * abs(scale), "measurable": ok})
        return out

    def to_dict(self, m: int | None = None, scale: float = 1.0) -> Any:
        """``rows(m)`` for one output; with ``m=None`` the whole study:
        ``{"method", "coverage", "samples", "seed", "sampling", "scaling",
        "outputs": [{"u_now", "U_now", "interval_now", "rows", "scenarios"}]}``."""
        if m is not None:
            return self.rows(m, scale)
        return {"method": self.method, "coverage": self.coverage, "samples": self.samples, "seed": self.seed,
                "sampling": self.sampling, "scaling": self.scaling, "batches": self.batches,
                "outputs": [{"u_now": float(self.u_now[k] * scale), "U_now": float(self.U_now[k] * scale),
                             "interval_now": [float(v * scale) for v in self.interval_now[k]],
                             "rows": self.rows(k, scale), "scenarios": self.scenario_rows(k, scale)}
                            for k in range(self.u_now.size)]}


# ---------------------------------------------------------------------------------------
# main entry
# ---------------------------------------------------------------------------------------
def _mc_stats(Y: np.ndarray, coverage: float) -> tuple[np.ndarray, np.ndarray]:
    from .stats import intervals_from_sorted  # helper B's module

    u = Y.std(axis=0, ddof=1) if Y.shape[0] > 1 else np.zeros(Y.shape[1])
    sym, _ = intervals_from_sorted(np.sort(Y, axis=0), coverage)
    return u, sym


def what_if(
    f: Model,
    inputs: Any,
    scenarios: Sequence[Scenario] | None = None,
    method: str = "linear",
    *,
    coverage: float = 0.95,
    linear: Any = None,
    samples: int = 2**14,
    sampling: str = "sobol",
    seed: int = 0,
    scaling: str = "x-space",
    chunk_size: int = 65536,
    rotate: bool = True,
    batches: int = 1,
) -> WhatIfResult:
    """Output uncertainty if data were measured better (or not at all).

    Parameters
    ----------
    f : callable
        ``f(X[N, D]) -> Y[N, M]``.
    inputs : InputSet
    scenarios : sequence of Scenario, optional
        Default: :func:`standard_scenarios` (each uncertain datum halved and removed).
    method : {"linear", "monte-carlo"}
        Linear: analytic from the sensitivity matrix (``linear.sensitivity`` or a fresh
        :func:`uqthermo.uq.linear.propagate_linear`) and the scaled covariance, with
        U = k u (Welch–Satterthwaite k, :func:`scenario_coverage_factor`). Monte Carlo: common
        random numbers, see the module docstring.
    coverage : float
        Coverage probability p.
    linear : LinearResult, optional
        Supplies ``estimate`` and ``sensitivity`` (M, D) for the linear method.
    samples : int
        Monte Carlo trials per scenario (a fixed number: adaptive stopping would break
        common random numbers).
    sampling, seed : str, int
        Uniform generator (:func:`uqthermo.uq.sampling.uniform_sample`).
    scaling : {"x-space", "distribution"}
        Monte Carlo scaling scheme (module docstring).
    chunk_size : int
        Rows per model call.
    rotate : bool
        Sobol' score rotation of the shared sample (x-space scaling; see
        :func:`uqthermo.uq.montecarlo.score_rotation`). Distribution scaling always uses
        the plain Sobol' axes: each input then keeps its own coordinate in every scenario,
        even when a datum is removed, so the scenarios share their random numbers.
    batches : int
        Monte Carlo with x-space scaling: split ``samples`` into this many independent
        replicates (independently scrambled nets for Sobol' sampling) to estimate the standard
        error of each change (module docstring). 1 (default): one shared sample, the very rows
        :func:`uqthermo.uq.montecarlo.propagate_monte_carlo` draws, and no standard error.

    Returns
    -------
    WhatIfResult
    """
    if not (0.0 < coverage < 1.0):
        raise StatisticsError(f"coverage probability must lie in (0, 1), got {coverage}")
    if scenarios is None:
        scenarios = standard_scenarios(inputs)
    scenarios = list(scenarios)
    for sc in scenarios:
        if not isinstance(sc, Scenario):
            raise StatisticsError(f"what-if scenarios must be Scenario objects, got {type(sc).__name__}")
    fmaps = [sc.resolve(inputs) for sc in scenarios]
    A = scenario_factor_matrix(inputs, fmaps)
    if method in ("linear", "gum"):
        return _what_if_linear(f, inputs, scenarios, fmaps, A, coverage, linear)
    if method in ("monte-carlo", "montecarlo", "mc"):
        if isinstance(samples, str) or int(samples) < 2:
            raise StatisticsError("what-if by Monte Carlo needs a fixed number of samples (>= 2); "
                                  "adaptive stopping would break common random numbers")
        if scaling not in ("x-space", "distribution"):
            raise StatisticsError(f"unknown what-if scaling {scaling!r}; use x-space or distribution")
        if int(batches) < 1 or (int(batches) > 1 and int(samples) // int(batches) < 2):
            raise StatisticsError(f"what-if batches must be >= 1 with at least 2 samples each, got {batches}")
        return _what_if_mc(f, inputs, scenarios, fmaps, A, coverage, int(samples), sampling, seed, scaling,
                           chunk_size, rotate, int(batches))
    raise StatisticsError(f"unknown what-if method {method!r}; use linear or monte-carlo")


def _what_if_linear(f, inputs, scenarios, fmaps, A, coverage, linear):
    if linear is None:
        from .linear import propagate_linear  # helper B's module

        linear = propagate_linear(f, inputs, coverage=coverage)
    C = np.atleast_2d(np.asarray(linear.sensitivity, dtype=float))
    y = np.atleast_1d(np.asarray(linear.estimate, dtype=float))
    Sig = inputs.covariance()
    stds = np.asarray(inputs.stds, dtype=float)
    dofs = np.asarray([v.distribution.dof for v in inputs.variables], dtype=float)
    ones = np.ones((1, C.shape[1]))
    u_now = linear_uncertainty(C, Sig, ones)[0]
    k_now = scenario_coverage_factor(C[None, :, :], stds, dofs, u_now[None, :], coverage)[0]
    u = linear_uncertainty(C, Sig, A)
    k = scenario_coverage_factor(C[None, :, :] * A[:, None, :], stds, dofs, u, coverage)
    U = k * u
    U_now = k_now * u_now
    interval = np.stack([y[None, :] - U, y[None, :] + U], axis=-1)
    interval_now = np.stack([y - U_now, y + U_now], axis=-1)
    return WhatIfResult("linear", coverage, list(scenarios), fmaps, u_now, U_now, interval_now, u, U, interval,
                        U_se=np.zeros_like(U))


class CommonSample:
    """One shared Monte Carlo input sample for common-random-number studies (x-space scaling).

    ``X = inputs.from_uniform(U, W)`` with ``U = uniform_sample(samples, D, sampling, seed)``
    and W the Sobol' score rotation of ``f`` (``rotate=True``; None otherwise): with Sobol' or
    Latin-hypercube sampling the same rows :func:`uqthermo.uq.montecarlo.propagate_monte_carlo`
    draws for ``f``, that seed and a fixed sample size when all inputs are sampled
    (pseudo-random runs draw their normal scores directly, see :mod:`uqthermo.uq.trials`). :meth:`evaluate` applies per-variable factors a to the
    deviations, ``x' = x̂ + a (x − x̂)``, evaluates the model and summarises each scenario:
    u = sample standard deviation (JCGM 101 §7.6) and the probabilistically symmetric
    100p % coverage interval (JCGM 101 §7.7). X is kept in memory when N·D ≤ 2.5e7 values,
    otherwise regenerated chunk by chunk (bit-identical).
    """

    def __init__(self, f: Model, inputs: Any, samples: int, sampling: str = "sobol", seed: int = 0,
                 chunk_size: int = 65536, rotate: bool = True):
        self.f = f
        self.inputs = inputs
        self.n = int(samples)
        self.sampling = sampling
        self.seed = seed
        self.chunk_size = int(chunk_size)
        self.D = len(inputs.stds)
        self.est = np.asarray(inputs.estimates, dtype=float)
        self.n_evaluations = 0
        from .montecarlo import sobol_rotation
        from .sampling import sampling_method

        self._rotation = sobol_rotation(f, inputs, sampling_method(sampling), rotate)
        self._X = None
        if self.n * self.D <= 25_000_000:
            self._X = np.concatenate(list(self._blocks()))

    def _blocks(self):
        from .sampling import iter_uniform_chunks  # helper B's module

        if self._X is not None:
            for s in range(0, self.n, self.chunk_size):
                yield self._X[s:s + self.chunk_size]
            return
        for U in iter_uniform_chunks(self.n, self.D, method=self.sampling, seed=self.seed,
                                     chunk_size=self.chunk_size):
            yield self.inputs.from_uniform(U, self._rotation)

    def values(self, a: np.ndarray | None) -> np.ndarray:
        """Model values Y (N, M) with per-variable factors ``a`` (D,) (None: as stated)."""
        parts = []
        for X in self._blocks():
            Xs = X if a is None or np.all(np.asarray(a) == 1.0) else self.est + np.asarray(a, dtype=float) * (X - self.est)
            parts.append(evaluate_in_chunks(self.f, Xs, chunk_size=self.chunk_size))
        self.n_evaluations += self.n
        return np.concatenate(parts)

    def evaluate(self, factors: np.ndarray, coverage: float = 0.95) -> tuple[np.ndarray, np.ndarray]:
        """Standard uncertainty (S, M) and symmetric coverage interval (S, M, 2) per factor row (S, D)."""
        A = np.atleast_2d(np.asarray(factors, dtype=float))
        us, ivs = [], []
        for a in A:
            u, iv = _mc_stats(self.values(a), coverage)
            us.append(u)
            ivs.append(iv)
        return np.array(us), np.array(ivs)


def _half_widths(Y: np.ndarray, coverage: float) -> np.ndarray:
    """U = half the width of the probabilistically symmetric interval of each column of Y."""
    _, iv = _mc_stats(Y, coverage)
    return 0.5 * (iv[:, 1] - iv[:, 0])


def _what_if_mc(f, inputs, scenarios, fmaps, A, coverage, n, sampling, seed, scaling, chunk_size, rotate, batches=1):
    D = len(inputs.stds)
    S = len(scenarios)
    U_se = None
    if scaling == "distribution":
        from .montecarlo import propagate_monte_carlo  # helper B's module

        def run(fm):
            r = propagate_monte_carlo(f, inputs.with_scaled_uncertainty(fm) if fm else inputs, samples=n,
                                      sampling=sampling, seed=seed, coverage=coverage, chunk_size=chunk_size,
                                      rotate=False)   # common random numbers across scenarios
            ci = np.asarray(r.coverage_interval, dtype=float)
            return np.asarray(r.standard_uncertainty, dtype=float), ci

        u_now, iv_now = run({})
        res = [run(fm) for fm in fmaps]
    elif batches > 1:
        from .montecarlo import batch_seed

        m = n // batches
        reps = [CommonSample(f, inputs, m, sampling=sampling, seed=batch_seed(seed, b), chunk_size=chunk_size,
                             rotate=rotate) for b in range(batches)]
        rows = np.vstack([np.ones((1, D)), A])
        res, Ub = [], []
        for a in rows:
            parts = [r.values(a) for r in reps]
            res.append(_mc_stats(np.concatenate(parts), coverage))
            Ub.append([_half_widths(p, coverage) for p in parts])
        Ub = np.asarray(Ub)                                   # (S + 1, batches, M)
        dU = Ub[1:] - Ub[:1]                                  # per-replicate changes (S, batches, M)
        U_se = dU.std(axis=1, ddof=1) / np.sqrt(batches)
        dU_mean = dU.mean(axis=1)                             # (S, M)
        u_now, iv_now = res[0]
        res = res[1:]
        n = m * batches
    else:
        shared = CommonSample(f, inputs, n, sampling=sampling, seed=seed, chunk_size=chunk_size, rotate=rotate)
        uu, ivv = shared.evaluate(np.vstack([np.ones((1, D)), A]), coverage)
        u_now, iv_now = uu[0], ivv[0]
        res = [(uu[s + 1], ivv[s + 1]) for s in range(S)]
    M = u_now.size
    u = np.array([r[0] for r in res]).reshape(S, M)
    interval = np.array([r[1] for r in res]).reshape(S, M, 2)
    U = 0.5 * (interval[..., 1] - interval[..., 0])
    U_now = 0.5 * (iv_now[:, 1] - iv_now[:, 0])
    if U_se is not None:
        # the change is the mean of the replicates' changes (its standard error is U_se); a
        # pooled quantile would not average a small perturbation down (it rests on the few rows
        # near the interval's ends), so U = U_now + mean ΔU_b
        U = U_now[None, :] + dU_mean
    return WhatIfResult("monte-carlo", coverage, list(scenarios), fmaps, u_now, U_now, iv_now, u, U, interval,
                        samples=n, seed=seed, sampling=sampling, scaling=scaling,
                        U_se=None if U_se is None else U_se.reshape(S, M), batches=batches if U_se is not None else None)

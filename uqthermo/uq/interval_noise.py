"""How much of a Monte Carlo coverage interval is sampling noise (JCGM 101:2008 §7.9).

A Monte Carlo coverage interval [y_low, y_high] is itself an estimate: its endpoints move
from run to run. Two verdicts of a run depend on that noise and use this module:

* the JCGM 101 §8 comparison with the linear interval (:mod:`uqthermo.uq.validation`) is
  only conclusive when the endpoints are stable to the numerical tolerance δ (§7.9.4:
  2·s ≤ δ, s the standard deviation of the endpoint);
* the statement of result calls the distribution asymmetric about the estimate only when
  the endpoint asymmetry A = (y − y_low) − (y_high − y) exceeds its noise (:data:`ASYMMETRY_Z`
  standard errors).

Standard errors, per output:

* **Adaptive runs** (§7.9.4): s of the endpoints and of the mean from the spread of the batch
  values, s_z = [Σ_r (z⁽ʳ⁾ − z̄)² / (h(h − 1))]^{1/2} (the run records k·s_z with
  k = :func:`~uqthermo.uq.montecarlo.stability_factor`); s(A) = (4 s_y² + s_low² + s_high²)^{1/2}
  (covariances left out; for a symmetric distribution they only reduce it).
* **Fixed N**: the large-sample variance of a sample p-quantile, Var(q̂_p) = p(1 − p)/(N f(q_p)²)
  (asymptotic normality of sample quantiles; e.g. Serfling, *Approximation Theorems of
  Mathematical Statistics*, 1980, §2.3.3 — recalled from memory), with 1/f(q_p) = dQ/dp taken as
  [Q(p + h) − Q(p − h)]/(2h), h = (p(1 − p)/N)^{1/2}; so s(q̂_p) is half the distance between the
  order statistics at ranks Np ± (Np(1 − p))^{1/2}, the distribution-free binomial-rank interval
  of a quantile. Var(A) from the Bahadur representation q̂_p ≈ q_p + (p − F_N(q_p))/f(q_p): A is
  an average of the influence values 2(y − μ) − IF_low(y) − IF_high(y), IF_p(y) = (p − 1{y ≤ q_p})/f_p, so

      N·Var(A) = 4u² + p_l(1 − p_l) g_l² + p_h(1 − p_h) g_h² + 2 p_l(1 − p_h) g_l g_h
                 + 4 g_l T_l + 4 g_h T_h,

  g = 1/f, T_l = E[(Y − μ) 1{Y ≤ q_l}], T_h = −E[(Y − μ) 1{Y > q_h}] (read off the stored
  tails). For a normal output this is 10.6 u²/N (s(A) = 3.26 u/√N). In histogram mode (no
  tails) the mean terms are replaced by the conservative 4u² alone.

  These are the values for independent trials; Sobol' and Latin-hypercube designs usually make
  the endpoints less variable, so for them the numbers are upper bounds in practice (use
  ``samples = "adaptive"`` to measure the spread instead).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["IntervalNoise", "interval_noise", "quantile_standard_error", "STABILITY_K", "ASYMMETRY_Z"]

#: JCGM 101 §7.9.4: a quantity is stable to δ when 2·s ≤ δ
STABILITY_K = 2.0
#: the endpoint asymmetry is called real only beyond this many standard errors (common practice: a 3σ rule)
ASYMMETRY_Z = 3.0


@dataclass(frozen=True)
class IntervalNoise:
    """Standard errors of a Monte Carlo run's symmetric-interval endpoints, per output (M,).

    ``low``, ``high``: s(y_low), s(y_high); ``asymmetry``: A = (y − y_low) − (y_high − y);
    ``asymmetry_se``: s(A); ``basis``: "batches" (adaptive, §7.9.4) or "order statistics"
    (fixed N, independent-trials formula).
    """

    low: np.ndarray
    high: np.ndarray
    asymmetry: np.ndarray
    asymmetry_se: np.ndarray
    basis: str

    def subset(self, m: int) -> IntervalNoise:
        """The first ``m`` outputs."""
        return IntervalNoise(self.low[:m], self.high[:m], self.asymmetry[:m], self.asymmetry_se[:m], self.basis)

    def significant_asymmetry(self) -> np.ndarray:
        """|A| > :data:`ASYMMETRY_Z` · s(A), per output (bool)."""
        return np.abs(self.asymmetry) > ASYMMETRY_Z * self.asymmetry_se


def quantile_standard_error(mc, p: float) -> tuple[np.ndarray, np.ndarray]:
    """(s(q̂_p), dQ/dp) per output for independent trials (see the module docstring).

    ``mc``: a :class:`~uqthermo.uq.montecarlo_result.MonteCarloResult` (exact or histogram).
    """
    n = int(mc.samples_used)
    h = float(np.sqrt(p * (1.0 - p) / n))
    a, b = max(0.5 / n, p - h), min(1.0 - 0.5 / n, p + h)
    q = np.asarray(mc.quantile(np.array([a, b])), dtype=float)
    g = (q[1] - q[0]) / (b - a) if b > a else np.zeros(q.shape[1])
    return h * g, g


def interval_noise(mc) -> IntervalNoise:
    """Standard errors of the probabilistically symmetric interval's endpoints and of its asymmetry.

    Independent-trials formulas for every output; an adaptive run's batch values replace them
    for the outputs its §7.9 test covered.
    """
    y = np.asarray(mc.mean, dtype=float)
    lo, hi = mc.coverage_interval[:, 0], mc.coverage_interval[:, 1]
    A = (y - lo) - (hi - y)
    u = np.asarray(mc.standard_uncertainty, dtype=float)
    n = int(mc.samples_used)
    p = float(mc.coverage_probability)
    pl, ph = (1.0 - p) / 2, (1.0 + p) / 2
    s_lo, g_l = quantile_standard_error(mc, pl)
    s_hi, g_h = quantile_standard_error(mc, ph)
    var = 4 * u**2 + pl * (1 - pl) * g_l**2 + ph * (1 - ph) * g_h**2 + 2 * pl * (1 - ph) * g_l * g_h
    tails = mc.tail_sums(lo, hi)
    if tails is not None:
        T_l, T_h = tails[0] / n, -tails[1] / n
        var_b = var + 4 * g_l * T_l + 4 * g_h * T_h
        var = np.where(var_b > 0, var_b, var)     # a negative value is rounding: keep the conservative one
    s_A = np.sqrt(np.maximum(var, 0.0) / n)
    st = mc.stability or {}
    if mc.adaptive and mc.batches >= 2 and all(key in st for key in ("mean", "low", "high")):
        from .montecarlo import stability_factor

        k = stability_factor(mc.batches)
        b_lo, b_hi, b_y = (np.asarray(st[key], dtype=float) / k for key in ("low", "high", "mean"))
        m = min(b_lo.shape[0], y.shape[0])
        s_lo, s_hi, s_A = s_lo.copy(), s_hi.copy(), s_A.copy()
        s_lo[:m], s_hi[:m] = b_lo[:m], b_hi[:m]
        s_A[:m] = np.sqrt(4 * b_y[:m]**2 + b_lo[:m]**2 + b_hi[:m]**2)
        return IntervalNoise(s_lo, s_hi, A, s_A, "batches")
    return IntervalNoise(s_lo, s_hi, A, s_A, "order statistics")

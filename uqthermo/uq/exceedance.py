"""Probabilities read off a Monte Carlo sample: estimate, standard error and a one-sided bound.

A Monte Carlo estimate of a probability, p̂ = k/N (k trials out of N beyond a limit), says
nothing useful on its own when k is 0 or small: "0 %, standard error 0 %" hides that N
trials cannot show a probability below about 3/N. Every such probability is therefore
reported with its **one-sided upper confidence bound** (Clopper & Pearson, Biometrika 26
(1934) 404-413, "exact" binomial bound):

.. math::

    p_\\mathrm{up} = B^{-1}(\\gamma;\\, k + 1,\\, N - k) \\quad (k < N), \\qquad p_\\mathrm{up} = 1 \\quad (k = N),

with :math:`B^{-1}(\\cdot; a, b)` the quantile function of the beta distribution
(``scipy.stats.beta.ppf``) and γ the confidence level (0.95). For k = 0 this is the closed
form :math:`p_\\mathrm{up} = 1 - (1 - \\gamma)^{1/N}` ≈ 3.0/N for γ = 0.95 (the "rule of
three", Hanley & Lippman-Hand, JAMA 249 (1983) 1743-1745). The lower bound, used for a
probability close to one, is :math:`B^{-1}(1 - \\gamma;\\, k,\\, N - k + 1)` (0 for k = 0).

Which bound, for which sampling. The Clopper–Pearson bound is exact for N independent
trials (``sampling = "random"``). For Latin-hypercube and scrambled Sobol' points the
trials are not independent; the same bound is then used on the N trials as if they were,
and the results say so (:func:`bound_method`): for an indicator (a discontinuous function)
these designs reduce the variance of p̂ in practice, but no exact binomial bound exists for
them, so the stated bound is an approximation there.

This module is model-agnostic statistics (no thermo, case or report imports).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import StatisticsError

__all__ = [
    "BOUND_CONFIDENCE",
    "clopper_pearson_upper",
    "clopper_pearson_lower",
    "hits",
    "bound_method",
    "ProbabilityEstimate",
    "probability_estimate",
    "margin_shares",
]

#: confidence level of the one-sided bounds written to results.json
BOUND_CONFIDENCE = 0.95


def _check(k, n, confidence):
    k = np.asarray(k, dtype=float)
    n = np.asarray(n, dtype=float)
    if np.any(n <= 0) or np.any(k < 0) or np.any(k > n) or np.any(k != np.round(k)):
        raise StatisticsError("a binomial bound needs whole numbers 0 <= hits <= trials and trials > 0")
    if not (0.0 < float(confidence) < 1.0):
        raise StatisticsError(f"confidence must lie in (0, 1), got {confidence!r}")
    return k, n


def clopper_pearson_upper(k, n, confidence: float = BOUND_CONFIDENCE):
    r"""One-sided upper Clopper–Pearson bound of a binomial proportion.

    .. math:: p_\mathrm{up} = B^{-1}(\gamma;\, k + 1,\, n - k)\ (k < n), \qquad 1\ (k = n)

    (C. J. Clopper and E. S. Pearson, Biometrika 26 (1934) 404-413). P(X ≤ k | p_up) = 1 − γ
    for X ~ Bin(n, p_up), so p ≤ p_up with confidence γ. k = 0 gives 1 − (1 − γ)^{1/n}.

    Parameters
    ----------
    k : int or array_like
        Trials beyond the limit ("hits").
    n : int or array_like
        Trials.
    confidence : float
        γ in (0, 1) (default 0.95).

    Returns
    -------
    float or ndarray
    """
    from scipy.stats import beta

    k, n = _check(k, n, confidence)
    with np.errstate(invalid="ignore", divide="ignore"):
        up = np.where(k >= n, 1.0, beta.ppf(confidence, k + 1.0, np.maximum(n - k, 1.0)))
    return float(up) if up.ndim == 0 else up


def clopper_pearson_lower(k, n, confidence: float = BOUND_CONFIDENCE):
    r"""One-sided lower Clopper–Pearson bound: :math:`B^{-1}(1-\gamma;\, k,\, n - k + 1)` (0 for k = 0)."""
    from scipy.stats import beta

    k, n = _check(k, n, confidence)
    with np.errstate(invalid="ignore", divide="ignore"):
        lo = np.where(k <= 0, 0.0, beta.ppf(1.0 - confidence, np.maximum(k, 1.0), n - k + 1.0))
    return float(lo) if lo.ndim == 0 else lo


def hits(p, n):
    """Number of trials k behind a Monte Carlo proportion p = k/n (rounded to a whole number)."""
    p = np.asarray(p, dtype=float)
    k = np.rint(np.clip(p, 0.0, 1.0) * float(n))
    return int(k) if k.ndim == 0 else k.astype(int)


def bound_method(sampling: str, confidence: float = BOUND_CONFIDENCE) -> str:
    """Plain-text statement of the bound used for a sampling scheme (for results.json ``bound_method``)."""
    level = f"{100 * confidence:g} %"
    base = (f"one-sided {level} Clopper-Pearson bound (Clopper & Pearson 1934; beta quantile, scipy.stats.beta) "
            "on the Monte Carlo trials")
    s = str(sampling or "").lower()
    if s == "random":
        return base + " (independent pseudo-random trials: exact)"
    design = "scrambled Sobol' points" if s == "sobol" else ("Latin-hypercube points" if "latin" in s else f"{s} sampling")
    return (base + f", treated as independent trials; with {design} they are not independent and no exact binomial "
                   "bound exists, so the bound is an approximation (such designs usually make the estimate "
                   "less variable, not more)")


@dataclass(frozen=True)
class ProbabilityEstimate:
    """A probability estimated from N trials, with its standard error and one-sided bounds."""

    probability: float
    standard_error: float
    upper_bound: float
    lower_bound: float
    hits: int
    trials: int
    confidence: float = BOUND_CONFIDENCE


def probability_estimate(p: float, n: int, confidence: float = BOUND_CONFIDENCE) -> ProbabilityEstimate:
    r"""Estimate, binomial standard error :math:`\sqrt{\hat p(1-\hat p)/N}` and Clopper–Pearson bounds.

    Parameters
    ----------
    p : float
        Monte Carlo proportion k/N (the mean of an indicator over all N trials).
    n : int
        Trials N (> 0).
    """
    n = int(n)
    if n <= 0:
        raise StatisticsError("a probability needs at least one trial")
    p = float(p)
    if not (math.isfinite(p) and -1e-12 <= p <= 1 + 1e-12):
        raise StatisticsError(f"a proportion must lie in [0, 1], got {p!r}")
    k = hits(p, n)
    ph = k / n
    return ProbabilityEstimate(probability=ph, standard_error=math.sqrt(ph * (1.0 - ph) / n),
                               upper_bound=clopper_pearson_upper(k, n, confidence),
                               lower_bound=clopper_pearson_lower(k, n, confidence), hits=k, trials=n,
                               confidence=confidence)


def margin_shares(c_output, c_limit, covariance, groups: dict[str, list[int]], sign: float = 1.0) -> tuple[dict[str, float], float]:
    r"""Variance shares of the linearised margin between a limit and an output, by datum.

    The margin :math:`g = s\,(L - y)` (s = +1 for "y must stay below L", −1 for "above")
    decides an exceedance (g < 0). Linearised at the estimates (GUM 5.1.2, 5.2.2),
    :math:`u^2(g) = c_g^\mathsf{T} \Sigma c_g` with :math:`c_g = s\,(c_L - c_y)`; a datum's
    share is :math:`c_{g,G}^\mathsf{T}\Sigma_{GG}c_{g,G} / u^2(g)` and the rest (covariances
    between data) is the correlation share — the importance measures of a first-order
    reliability analysis (O. Ditlevsen and H. O. Madsen, *Structural Reliability Methods*,
    Wiley 1996, ch. 5: squared direction cosines of the limit-state function).

    Parameters
    ----------
    c_output : array_like (D,)
        Sensitivity coefficients of the output (the output's row of the linear result).
    c_limit : array_like (D,)
        Sensitivity coefficients of the limit (1 on the limit's own variable, 0 elsewhere;
        or a combination, e.g. MTT − MTSR).
    covariance : array_like (D, D)
        Input covariance.
    groups : mapping datum → column indices
    sign : float
        Orientation of the margin (does not change the shares).

    Returns
    -------
    (shares by datum, correlation share)
    """
    c = sign * (np.asarray(c_limit, dtype=float) - np.asarray(c_output, dtype=float))
    S = np.asarray(covariance, dtype=float)
    var = float(c @ S @ c)
    if not var > 0:
        return {}, 0.0
    shares = {}
    total = 0.0
    for datum, cols in groups.items():
        cg = c[cols]
        v = float(cg @ S[np.ix_(cols, cols)] @ cg)
        total += v
        if v > 0:
            shares[datum] = v / var
    return shares, (var - total) / var

"""Validation of the linear (GUM uncertainty framework) result by Monte Carlo (JCGM 101 §8).

JCGM 101 §8.2: with the linear coverage interval y ± U_p and the Monte Carlo interval
[y_low, y_high] for the same coverage probability, form

    d_low = |y − U_p − y_low|,   d_high = |y + U_p − y_high|,

and regard the linear method as validated when both are no larger than the numerical
tolerance δ associated with u(y) for ``ndigits`` significant digits (§7.9.2). Here y and
U_p are the linear estimate and expanded uncertainty, [y_low, y_high] the Monte Carlo
probabilistically symmetric interval (the linear interval is probabilistically symmetric
too), and δ is computed from the Monte Carlo u(y). §8.2 presumes the Monte Carlo run
itself is stable to well within δ (use the adaptive procedure with the same ``ndigits``).

That presumption is checked here (JCGM 101 §7.9.4: an endpoint is stable to δ when 2·s ≤ δ,
s its standard deviation, from :func:`uqthermo.uq.interval_noise.interval_noise`: the
adaptive batches, or the order-statistic variance p(1 − p)/(N f(q)²) at fixed N). Verdict:

* Monte Carlo stable to δ: validated when d_low, d_high ≤ δ, else not validated (§8.2);
* not stable: not validated only when an endpoint difference exceeds δ by more than the
  noise, d > δ + 2·s; otherwise **undecided** (``linear_validated`` None): the comparison
  cannot tell, so the linear method is not declared failed — increase the trials or run the
  adaptive procedure.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import StatisticsError
from .interval_noise import STABILITY_K, IntervalNoise, interval_noise
from .linear import LinearResult
from .montecarlo_result import MonteCarloResult
from .stats import numerical_tolerance

__all__ = ["ValidationResult", "validate_linear", "VERDICTS"]

#: the three outcomes of the comparison
VERDICTS = ("validated", "not validated", "undecided")


@dataclass(frozen=True)
class ValidationResult:
    """JCGM 101 §8 comparison for one output.

    Attributes
    ----------
    output : int            index of the output
    tolerance : float       δ (from the Monte Carlo u(y), ``ndigits`` digits)
    d_low, d_high : float   endpoint differences
    linear_validated : bool or None
        True: both ≤ δ with the Monte Carlo stable to δ; False: not validated; None: undecided
        (the Monte Carlo is not stable to δ and the differences are within its noise)
    ndigits : int
    interval : str          Monte Carlo interval compared ("symmetric" or "shortest")
    se_low, se_high : float standard errors of the Monte Carlo endpoints (None: not known)
    monte_carlo_stable : bool  2·s ≤ δ for both endpoints (JCGM 101 §7.9.4)
    noise_basis : str       where the standard errors come from ("batches", "order statistics")
    """

    output: int
    tolerance: float
    d_low: float
    d_high: float
    linear_validated: bool | None
    ndigits: int = 2
    interval: str = "symmetric"
    se_low: float | None = None
    se_high: float | None = None
    monte_carlo_stable: bool = True
    noise_basis: str = ""

    @property
    def validated(self) -> bool | None:
        return self.linear_validated

    @property
    def verdict(self) -> str:
        """"validated", "not validated" or "undecided"."""
        return VERDICTS[0] if self.linear_validated else (VERDICTS[2] if self.linear_validated is None else VERDICTS[1])

    def as_dict(self) -> dict:
        """The results.json ``validation`` block (tolerance, d_low, d_high, verdict and the endpoints' noise)."""
        out = {"tolerance": self.tolerance, "d_low": self.d_low, "d_high": self.d_high, "verdict": self.verdict,
               "monte_carlo_stable": bool(self.monte_carlo_stable)}
        if self.se_low is not None and self.se_high is not None:
            out.update(endpoint_standard_errors=[self.se_low, self.se_high], noise_basis=self.noise_basis)
        return out


def validate_linear(linear: LinearResult, mc: MonteCarloResult, ndigits: int = 2,
                    interval: str = "symmetric", noise: IntervalNoise | None = None) -> list[ValidationResult]:
    """Compare linear and Monte Carlo coverage intervals per output (JCGM 101 §8.2).

    Parameters
    ----------
    linear : LinearResult
    mc : MonteCarloResult
        Same outputs and the same coverage probability as ``linear``.
    ndigits : int
        Significant digits of u(y) that must be reproduced.
    interval : {"symmetric", "shortest"}
        Monte Carlo interval to compare with (default the probabilistically symmetric one).
    noise : IntervalNoise, optional
        Standard errors of the Monte Carlo endpoints (default :func:`interval_noise` of ``mc``;
        give them when ``mc`` is not a full :class:`MonteCarloResult`). For the shortest
        interval those of the symmetric one are used (same tail probabilities in total).

    Returns
    -------
    list of ValidationResult, one per output.
    """
    if linear.estimate.shape != mc.mean.shape:
        raise StatisticsError(f"linear and Monte Carlo results have different outputs "
                              f"({linear.estimate.shape[0]} vs {mc.mean.shape[0]})")
    if abs(linear.coverage_probability - mc.coverage_probability) > 1e-12:
        raise StatisticsError("linear and Monte Carlo results use different coverage probabilities")
    if interval not in ("symmetric", "shortest"):
        raise StatisticsError(f"interval must be 'symmetric' or 'shortest', got {interval!r}")
    iv = mc.coverage_interval if interval == "symmetric" else mc.shortest_interval
    y = linear.estimate
    U = linear.expanded_uncertainty
    d_low = np.abs(y - U - iv[:, 0])
    d_high = np.abs(y + U - iv[:, 1])
    delta = np.atleast_1d(numerical_tolerance(mc.standard_uncertainty, ndigits))
    if noise is None:
        noise = interval_noise(mc)
    s_lo, s_hi = np.asarray(noise.low, dtype=float), np.asarray(noise.high, dtype=float)
    out = []
    for j in range(y.shape[0]):
        stable = bool(STABILITY_K * s_lo[j] <= delta[j] and STABILITY_K * s_hi[j] <= delta[j])
        within = bool(d_low[j] <= delta[j] and d_high[j] <= delta[j])
        beyond = bool(d_low[j] > delta[j] + STABILITY_K * s_lo[j] or d_high[j] > delta[j] + STABILITY_K * s_hi[j])
        verdict = within if stable else (False if beyond else None)
        out.append(ValidationResult(int(j), float(delta[j]), float(d_low[j]), float(d_high[j]), verdict, int(ndigits),
                                    interval, float(s_lo[j]), float(s_hi[j]), stable, noise.basis))
    return out

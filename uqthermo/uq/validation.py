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
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import StatisticsError
from .linear import LinearResult
from .montecarlo_result import MonteCarloResult
from .stats import numerical_tolerance

__all__ = ["ValidationResult", "validate_linear"]


@dataclass(frozen=True)
class ValidationResult:
    """JCGM 101 §8 comparison for one output.

    Attributes
    ----------
    output : int            index of the output
    tolerance : float       δ (from the Monte Carlo u(y), ``ndigits`` digits)
    d_low, d_high : float   endpoint differences
    linear_validated : bool both ≤ δ
    ndigits : int
    interval : str          Monte Carlo interval compared ("symmetric" or "shortest")
    """

    output: int
    tolerance: float
    d_low: float
    d_high: float
    linear_validated: bool
    ndigits: int = 2
    interval: str = "symmetric"

    @property
    def validated(self) -> bool:
        return self.linear_validated

    def as_dict(self) -> dict:
        """The results.json ``validation`` block (tolerance, d_low, d_high)."""
        return {"tolerance": self.tolerance, "d_low": self.d_low, "d_high": self.d_high}


def validate_linear(linear: LinearResult, mc: MonteCarloResult, ndigits: int = 2,
                    interval: str = "symmetric") -> list[ValidationResult]:
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
    return [ValidationResult(int(j), float(delta[j]), float(d_low[j]), float(d_high[j]),
                             bool(d_low[j] <= delta[j] and d_high[j] <= delta[j]), int(ndigits), interval)
            for j in range(y.shape[0])]

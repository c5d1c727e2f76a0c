"""Design margins: one-sided bounds at stated probabilities and the margin to the estimate.

For a probability p (e.g. 0.95, 0.99):

* upper one-sided bound ``b⁺_p`` with ``P(Y ≤ b⁺_p) = p`` and lower bound ``b⁻_p`` with
  ``P(Y ≥ b⁻_p) = p``;
* margin ``b − ŷ`` (bound minus estimate: positive above, negative below).

Monte Carlo: ``b⁺_p = G⁻¹(p)`` and ``b⁻_p = G⁻¹(1 − p)`` from the distribution function of
the model values (JCGM 101 §7.5 — the run's ``quantile(p)``), estimate = the Monte Carlo
mean (JCGM 101 §7.6) unless given. Linear: ``b± = y ± k_p u`` with the one-sided factor
``k_p = Φ⁻¹(p)`` for a normal output, or ``t_ν⁻¹(p)`` with the effective degrees of freedom
(GUM, JCGM 100:2008 G.3–G.4, applied one-sided).

Keys: the bound at probability level q is named ``"P" + 100 q`` — ``P95``/``P99`` upper
bounds, ``P05``/``P01`` the matching lower bounds (as in the contract's ``one_sided``).

For a curve (one output per temperature) :func:`curve_band` gives the band and the worst
temperature in a window: the largest upper bound and the smallest lower bound.

The module never imports the physics, the case layer or the report.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np
from scipy import stats

from ..errors import StatisticsError

__all__ = ["Margins", "CurveBand", "level_key", "margins_from_monte_carlo", "margins_from_samples",
           "margins_from_linear", "curve_band", "DEFAULT_PROBABILITIES"]

DEFAULT_PROBABILITIES = (0.95, 0.99)


def level_key(q: float) -> str:
    """``0.95 → "P95"``, ``0.05 → "P05"``, ``0.999 → "P99.9"``, ``0.001 → "P0.1"``."""
    v = round(100.0 * float(q), 10)
    if abs(v - round(v)) < 1e-9:
        return f"P{int(round(v)):02d}"
    return f"P{v:g}"


def _check_probabilities(probabilities: Sequence[float]) -> tuple[float, ...]:
    ps = tuple(float(p) for p in probabilities)
    if not ps:
        raise StatisticsError("give at least one probability for the design margins")
    for p in ps:
        if not (0.5 < p < 1.0) or not math.isfinite(p):
            raise StatisticsError(f"one-sided bound probability must lie in (0.5, 1), got {p:g}")
    return ps


@dataclass
class Margins:
    """One-sided bounds and margins for M outputs.

    Attributes
    ----------
    method : str
        ``"monte-carlo"`` or ``"linear"``.
    probabilities : tuple of float
        The stated probabilities p (each in (0.5, 1)).
    estimate : ndarray (M,)
    upper : ndarray (P, M)
        ``P(Y ≤ upper[k]) = p_k``.
    lower : ndarray (P, M)
        ``P(Y ≥ lower[k]) = p_k``.
    """

    method: str
    probabilities: tuple[float, ...]
    estimate: np.ndarray
    upper: np.ndarray
    lower: np.ndarray

    @property
    def upper_margin(self) -> np.ndarray:
        """``upper − estimate`` (P, M)."""
        return self.upper - self.estimate[None, :]

    @property
    def lower_margin(self) -> np.ndarray:
        """``lower − estimate`` (P, M) (negative: the bound lies below the estimate)."""
        return self.lower - self.estimate[None, :]

    def point(self, m: int, scale: float = 1.0) -> dict:
        """Margins of output ``m``: ``{"method", "estimate", "P95": margin, "P99": ..., "P05": ...,
        "P01": ..., "bounds": {"P95": bound, ...}}`` (margins = bound − estimate; × ``scale``)."""
        out: dict[str, Any] = {"method": self.method, "estimate": float(self.estimate[m] * scale)}
        bounds: dict[str, float] = {}
        for k, p in enumerate(self.probabilities):
            out[level_key(p)] = float(self.upper_margin[k, m] * scale)
            bounds[level_key(p)] = float(self.upper[k, m] * scale)
        for k, p in enumerate(self.probabilities):
            out[level_key(1 - p)] = float(self.lower_margin[k, m] * scale)
            bounds[level_key(1 - p)] = float(self.lower[k, m] * scale)
        out["bounds"] = bounds
        return out

    def to_dict(self, scale: float = 1.0) -> dict:
        """``{"method", "probabilities", "points": [point(m) ...]}``."""
        return {"method": self.method, "probabilities": list(self.probabilities),
                "points": [self.point(m, scale) for m in range(self.estimate.size)]}


def margins_from_samples(Y: np.ndarray, probabilities: Sequence[float] = DEFAULT_PROBABILITIES,
                         estimate: np.ndarray | None = None) -> Margins:
    """Bounds from model values Y (N, M) via the JCGM 101 §7.5.2 distribution function.

    ``G(y_(r)) = (r − ½)/N`` with linear interpolation (numpy ``method="hazen"``);
    estimate = sample mean unless given.
    """
    ps = _check_probabilities(probabilities)
    Y = np.asarray(Y, dtype=float)
    if Y.ndim == 1:
        Y = Y[:, None]
    if Y.ndim != 2 or Y.shape[0] < 2:
        raise StatisticsError("design margins need at least two model values per output")
    up = np.quantile(Y, ps, axis=0, method="hazen")
    lo = np.quantile(Y, [1 - p for p in ps], axis=0, method="hazen")
    est = Y.mean(axis=0) if estimate is None else np.atleast_1d(np.asarray(estimate, dtype=float))
    return Margins("monte-carlo", ps, est, np.atleast_2d(up), np.atleast_2d(lo))


def margins_from_monte_carlo(mc: Any, probabilities: Sequence[float] = DEFAULT_PROBABILITIES,
                             estimate: np.ndarray | None = None) -> Margins:
    """Bounds from a Monte Carlo result: ``mc.quantile(p)`` (M,) and ``mc.mean`` (M,)."""
    ps = _check_probabilities(probabilities)
    up = np.array([np.atleast_1d(np.asarray(mc.quantile(p), dtype=float)) for p in ps])
    lo = np.array([np.atleast_1d(np.asarray(mc.quantile(1 - p), dtype=float)) for p in ps])
    est = np.atleast_1d(np.asarray(mc.mean if estimate is None else estimate, dtype=float))
    return Margins("monte-carlo", ps, est, up, lo)


def margins_from_linear(estimate: Any, standard_uncertainty: np.ndarray | None = None,
                        effective_dof: np.ndarray | None = None,
                        probabilities: Sequence[float] = DEFAULT_PROBABILITIES) -> Margins:
    """Bounds ``y ± k_p u`` of the linear method (normal, or Student t with ν_eff).

    ``estimate`` may be a LinearResult (uses ``estimate``, ``standard_uncertainty``,
    ``effective_dof``) or an array (M,) with ``standard_uncertainty`` (M,) and optional
    ``effective_dof`` (M,; default ∞). ``k_p = Φ⁻¹(p)`` or ``t_ν⁻¹(p)``.
    """
    ps = _check_probabilities(probabilities)
    if standard_uncertainty is None:
        lin = estimate
        y = np.atleast_1d(np.asarray(lin.estimate, dtype=float))
        u = np.atleast_1d(np.asarray(lin.standard_uncertainty, dtype=float))
        nu = getattr(lin, "effective_dof", None)
    else:
        y = np.atleast_1d(np.asarray(estimate, dtype=float))
        u = np.atleast_1d(np.asarray(standard_uncertainty, dtype=float))
        nu = effective_dof
    nu = np.full(y.shape, np.inf) if nu is None else np.broadcast_to(np.asarray(nu, dtype=float), y.shape)
    fin = np.isfinite(nu) & (nu > 0)
    k = np.array([np.where(fin, stats.t.ppf(p, np.where(fin, nu, 1.0)), stats.norm.ppf(p)) for p in ps])
    return Margins("linear", ps, y, y[None, :] + k * u[None, :], y[None, :] - k * u[None, :])


@dataclass
class CurveBand:
    """Band of one-sided bounds along a curve and its worst points in a window.

    Attributes
    ----------
    x : ndarray (M,)
        Abscissa (e.g. temperature, K).
    margins : Margins
    window : (float, float)
        The window searched for the worst points (inclusive).
    worst_upper, worst_lower : ndarray (P,) of int
        Index of the largest upper bound / smallest lower bound in the window per p.
    """

    x: np.ndarray
    margins: Margins
    window: tuple[float, float]
    worst_upper: np.ndarray
    worst_lower: np.ndarray

    def to_dict(self, scale: float = 1.0, x_scale: float = 1.0) -> dict:
        """``{"x", "estimate", "window", "bands": {"P95": {"upper": [...], "lower": [...]}},
        "worst": {"P95": {"upper": {"x", "bound", "margin"}, "lower": {...}}}}``."""
        mg = self.margins
        bands, worst = {}, {}
        for k, p in enumerate(mg.probabilities):
            key = level_key(p)
            bands[key] = {"upper": [float(v * scale) for v in mg.upper[k]],
                          "lower": [float(v * scale) for v in mg.lower[k]]}
            iu, il = int(self.worst_upper[k]), int(self.worst_lower[k])
            worst[key] = {"upper": {"x": float(self.x[iu] * x_scale), "index": iu,
                                    "bound": float(mg.upper[k, iu] * scale),
                                    "margin": float(mg.upper_margin[k, iu] * scale)},
                          "lower": {"x": float(self.x[il] * x_scale), "index": il,
                                    "bound": float(mg.lower[k, il] * scale),
                                    "margin": float(mg.lower_margin[k, il] * scale)}}
        return {"x": [float(v * x_scale) for v in self.x], "estimate": [float(v * scale) for v in mg.estimate],
                "window": [float(self.window[0] * x_scale), float(self.window[1] * x_scale)],
                "bands": bands, "worst": worst}


def curve_band(margins: Margins, x: Sequence[float], window: tuple[float, float] | None = None) -> CurveBand:
    """Band and worst points of a curve of outputs.

    Parameters
    ----------
    margins : Margins
        For the M points of the curve.
    x : (M,)
        Abscissa of each point.
    window : (lo, hi), optional
        Only points with lo ≤ x ≤ hi are searched (default: all).

    Raises
    ------
    StatisticsError
        If the lengths differ or the window contains no point.
    """
    x = np.asarray(x, dtype=float)
    if x.shape != margins.estimate.shape:
        raise StatisticsError(f"curve has {margins.estimate.size} points but {x.size} abscissa values")
    if window is None:
        window = (float(np.min(x)), float(np.max(x)))
    lo, hi = float(window[0]), float(window[1])
    inside = (x >= lo) & (x <= hi)
    if not inside.any():
        raise StatisticsError(f"the window [{lo:g}, {hi:g}] contains no point of the curve")
    idx = np.flatnonzero(inside)
    wu = idx[np.argmax(margins.upper[:, idx], axis=1)]
    wl = idx[np.argmin(margins.lower[:, idx], axis=1)]
    return CurveBand(x, margins, (lo, hi), wu, wl)

"""GUM law of propagation of uncertainty (linear method), including covariances.

For outputs Y = f(X) with input estimates x̂, covariance Σ and sensitivity matrix
C_ki = ∂f_k/∂x_i at x̂ (GUM §5.1.3, §5.2.2; JCGM 102 §6.2.1.3 for several outputs):

    y = f(x̂),   U_y = C Σ Cᵀ,   u(y_k) = √(U_y)_kk.

Coverage factor: k_p = t_{ν_eff}((1 + p)/2) with the Welch–Satterthwaite effective degrees
of freedom ν_eff = u⁴(y) / Σ_i (c_i u(x_i))⁴/ν_i (GUM G.4.1, eq. (G.2b)); ν_eff = ∞
(all inputs with infinite dof) gives the normal quantile (GUM G.6.4). The formula assumes
independent inputs; with correlated finite-dof inputs it is used as the usual
approximation. Non-integer ν_eff is used as is (GUM G.4.1 note 1 allows interpolation).

Contributions by datum g (a block of variables): u_g²(y) = c_g Σ_gg c_gᵀ (within-datum
covariances included); the remainder u²(y) − Σ_g u_g²(y) = 2 Σ_{g<h} c_g Σ_gh c_hᵀ is the
*correlation part* between data, so shares Σ_g u_g²/u² + correlation share = 1.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
from scipy import special, stats

from ..errors import StatisticsError
from .inputs import InputSet

__all__ = ["LinearResult", "propagate_linear", "coverage_factor", "welch_satterthwaite"]


def coverage_factor(p: float, dof=math.inf):
    """Coverage factor k_p for coverage probability p (GUM G.3 and G.6.4).

    k_p = t_ν((1 + p)/2), the two-sided Student t quantile (normal quantile for ν = ∞).
    Vectorised over ``dof``.
    """
    p = _check_p(p)
    dof = np.asarray(dof, dtype=float)
    q = 0.5 * (1.0 + p)
    with np.errstate(invalid="ignore"):
        k = np.where(np.isinf(dof), special.ndtri(q), stats.t.ppf(q, np.where(np.isinf(dof), 1.0, dof)))
    return k if k.ndim else float(k)


def welch_satterthwaite(contrib_u: np.ndarray, dofs: np.ndarray, u_total: np.ndarray) -> np.ndarray:
    """Effective degrees of freedom ν_eff = u⁴(y) / Σ_i u_i(y)⁴/ν_i (GUM G.4.1, eq. (G.2b)).

    ``contrib_u`` (M, D) = |c_i u(x_i)|, ``dofs`` (D,), ``u_total`` (M,). Inputs with
    ν = ∞ add nothing to the denominator; a zero denominator (or u = 0) gives ∞.
    """
    finite = np.isfinite(dofs)
    denom = np.zeros(contrib_u.shape[0])
    if np.any(finite):
        denom = np.sum(contrib_u[:, finite] ** 4 / dofs[finite][None, :], axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        nu = np.where((denom > 0) & (u_total > 0), u_total**4 / np.where(denom > 0, denom, 1.0), np.inf)
    return nu


def _check_p(p: float) -> float:
    try:
        p = float(p)
    except (TypeError, ValueError):
        raise StatisticsError(f"coverage probability must be a number, got {p!r}") from None
    if not 0.0 < p < 1.0:
        raise StatisticsError(f"coverage probability must lie in (0, 1), got {p:g}")
    return p


@dataclass
class LinearResult:
    """Result of :func:`propagate_linear` for M outputs, D variables and G data.

    Attributes
    ----------
    estimate : (M,) y = f(x̂)
    sensitivity : (M, D) sensitivity coefficients c_ki = ∂f_k/∂x_i (0 for exact inputs)
    input_covariance : (D, D) input covariance Σ
    covariance : (M, M) output covariance C Σ Cᵀ (property, formed when asked for)
    standard_uncertainty : (M,) u(y)
    coverage_factor : (M,) k_p
    effective_dof : (M,) ν_eff (inf when all inputs have infinite dof)
    coverage_interval : (M, 2) [y − k u, y + k u]
    expanded_uncertainty : (M,) U_p = k u
    coverage_probability : float
    contributions : (M, G) variance contributed by each datum (within-datum covariance included)
    correlation_part : (M,) variance from correlations between different data (may be < 0)
    shares : (M, G) contributions / u² (0 where u = 0)
    correlation_share : (M,) correlation_part / u²
    data : list[str] datum ids (order of the G columns)
    names : list[str] variable names (order of the D columns)
    steps : (D,) finite-difference steps used (0 for exact inputs)
    """

    estimate: np.ndarray
    sensitivity: np.ndarray
    input_covariance: np.ndarray
    standard_uncertainty: np.ndarray
    coverage_factor: np.ndarray
    effective_dof: np.ndarray
    coverage_interval: np.ndarray
    expanded_uncertainty: np.ndarray
    coverage_probability: float
    contributions: np.ndarray
    correlation_part: np.ndarray
    shares: np.ndarray
    correlation_share: np.ndarray
    data: list[str] = field(default_factory=list)
    names: list[str] = field(default_factory=list)
    steps: np.ndarray | None = None

    @property
    def covariance(self) -> np.ndarray:
        """Output covariance C Σ Cᵀ (M, M), formed on demand (M² values: large for long curves)."""
        C = self.sensitivity
        cov = C @ self.input_covariance @ C.T
        return 0.5 * (cov + cov.T)

    @property
    def n_outputs(self) -> int:
        return int(self.estimate.shape[0])

    def correlation(self) -> np.ndarray:
        """Output correlation matrix (M, M) (0 off-diagonal where a u is 0)."""
        u = self.standard_uncertainty
        s = np.where(u > 0, u, 1.0)
        r = self.covariance / s[:, None] / s[None, :]
        r[u == 0, :] = 0.0
        r[:, u == 0] = 0.0
        np.fill_diagonal(r, 1.0)
        return r

    def drivers(self, output: int = 0) -> list[tuple[str, float]]:
        """(datum, share) for one output, largest share first."""
        s = self.shares[output]
        order = sorted(range(len(self.data)), key=lambda g: (-s[g], g))
        return [(self.data[g], float(s[g])) for g in order]


def propagate_linear(f: Callable[[np.ndarray], np.ndarray], inputs: InputSet, coverage: float = 0.95,
                     rel_step: float = 1e-3) -> LinearResult:
    """Propagate input uncertainties through f by the GUM law of propagation (linear method).

    Parameters
    ----------
    f : callable
        Vectorised model ``f(X[N, D]) -> Y[N, M]`` (a 1-D result is taken as M = 1).
    inputs : InputSet
        Estimates, standard uncertainties, correlations and data grouping.
    coverage : float
        Coverage probability p of the interval.
    rel_step : float
        Central-difference step relative to u(x_i): h_i = rel_step·u(x_i) (raised, if
        needed, to 10³·ε·|x̂_i| so that x̂ ± h stays resolvable). The model is called
        **once** with the 2K + 1 points x̂, x̂ ± h_i e_i (K uncertain inputs);
        c_i = [f(x̂ + h_i e_i) − f(x̂ − h_i e_i)] / (2 h_i) (GUM 5.1.3 note 2 uses h = u;
        a smaller step gives the derivative the law of propagation asks for).

    Returns
    -------
    LinearResult
    """
    p = _check_p(coverage)
    if not isinstance(inputs, InputSet):
        raise StatisticsError("inputs must be an InputSet")
    try:
        rel_step = float(rel_step)
    except (TypeError, ValueError):
        raise StatisticsError(f"rel_step must be a number, got {rel_step!r}") from None
    if not (math.isfinite(rel_step) and rel_step > 0):
        raise StatisticsError(f"rel_step must be positive, got {rel_step:g}")
    Sigma = inputs.covariance()  # raises for infinite u
    x0 = np.asarray(inputs.estimates, dtype=float)
    u = np.asarray(inputs.stds, dtype=float)
    d = x0.size
    unc = np.flatnonzero(u > 0)
    k = unc.size
    h = np.zeros(d)
    h[unc] = np.maximum(rel_step * u[unc], 1e3 * np.finfo(float).eps * np.abs(x0[unc]))
    X = np.tile(x0, (2 * k + 1, 1))
    rows = np.arange(k)
    X[1 + rows, unc] = x0[unc] + h[unc]
    X[1 + k + rows, unc] = x0[unc] - h[unc]
    denom = X[1 + rows, unc] - X[1 + k + rows, unc]  # exactly representable step 2h
    Y = _call(f, X)
    m = Y.shape[1]
    y0 = Y[0]
    if not np.all(np.isfinite(y0)):
        raise StatisticsError("model returned non-finite values at the input estimates")
    bad = ~np.all(np.isfinite(Y[1:]), axis=1)
    if np.any(bad):
        i = int(np.flatnonzero(bad)[0])
        name = inputs.names[int(unc[i % k])]
        raise StatisticsError(f"model returned non-finite values when stepping {name} by ±{h[unc[i % k]]:.3g}",
                              key=inputs.variables[int(unc[i % k])].datum)
    C = np.zeros((m, d))
    if k:
        C[:, unc] = ((Y[1:1 + k] - Y[1 + k:]) / denom[:, None]).T
    # u²(y_k) = c_k Σ c_kᵀ, row by row: the (M, M) output covariance is formed only when asked for
    var = np.clip(np.einsum("mi,mi->m", C @ Sigma, C), 0.0, None)
    uy = np.sqrt(var)
    nu = welch_satterthwaite(np.abs(C * u[None, :]), np.asarray(inputs.dofs, dtype=float), uy)
    kp = np.atleast_1d(coverage_factor(p, nu)).astype(float)
    U = kp * uy
    interval = np.stack([y0 - U, y0 + U], axis=1)
    contrib = np.zeros((m, len(inputs.data)))
    for g, datum in enumerate(inputs.data):
        cols = inputs.groups[datum]
        Cg = C[:, cols]
        contrib[:, g] = np.einsum("mi,ij,mj->m", Cg, Sigma[np.ix_(cols, cols)], Cg)
    # the part of u² from correlations between different data (JCGM 100 eq. 13, cross-datum terms);
    # exactly zero when no two data are correlated (then 1 − Σ shares is only rounding residue)
    group_of = np.empty(d, dtype=int)
    for g, datum in enumerate(inputs.data):
        group_of[inputs.groups[datum]] = g
    cross = (group_of[:, None] != group_of[None, :]) & (Sigma != 0.0)
    corr_part = var - contrib.sum(axis=1) if cross.any() else np.zeros(m)
    with np.errstate(divide="ignore", invalid="ignore"):
        shares = np.where(var[:, None] > 0, contrib / np.where(var > 0, var, 1.0)[:, None], 0.0)
        corr_share = np.where(var > 0, corr_part / np.where(var > 0, var, 1.0), 0.0)
    return LinearResult(
        estimate=y0.copy(), sensitivity=C, input_covariance=Sigma, standard_uncertainty=uy, coverage_factor=kp,
        effective_dof=nu, coverage_interval=interval, expanded_uncertainty=U, coverage_probability=p,
        contributions=contrib, correlation_part=corr_part, shares=shares, correlation_share=corr_share,
        data=list(inputs.data), names=list(inputs.names), steps=h,
    )


def _call(f, X: np.ndarray) -> np.ndarray:
    Y = np.asarray(f(X), dtype=float)
    if Y.ndim == 1:
        Y = Y[:, None]
    if Y.ndim != 2 or Y.shape[0] != X.shape[0]:
        raise StatisticsError(f"model must return an array of shape (N, M) for N = {X.shape[0]} input rows, "
                              f"got shape {Y.shape}")
    return Y

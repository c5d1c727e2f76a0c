"""Correlation matrices of the inputs: their validation and the Gaussian copula's correlation scale.

:func:`check_correlation` validates a stated correlation matrix (shape, symmetry, unit
diagonal, |r| ≤ 1, positive semidefiniteness) and names the offending entries; nothing is
ever repaired. The NORTA relation (Cario & Nelson 1997) converts between the Pearson
correlation of two inputs, as the GUM states it, and the correlation of their normal scores
in the Gaussian copula of :class:`~uqthermo.uq.inputs.InputSet`
(:func:`pearson_from_normal_score`, :func:`normal_score_from_pearson`); a stated rank
correlation maps to normal scores by :func:`normal_score_from_spearman`.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from typing import Any

import numpy as np

from ..errors import CorrelationError
from .distributions import Distribution

__all__ = ["check_correlation", "pearson_from_normal_score", "normal_score_from_pearson", "normal_score_from_spearman",
           "SYMMETRY_TOL", "PSD_TOL"]

#: tolerances of the matrix checks
SYMMETRY_TOL = 1e-10
PSD_TOL = 1e-10


def _fmt_pair(a: str, b: str, r: float) -> str:
    return f"{a} ~ {b} (r = {r:.4g})"


def check_correlation(R: Any, names: Sequence[str], what: str = "correlation matrix") -> np.ndarray:
    """Validate a correlation matrix and return it as a float array.

    Checks (in this order): square shape matching ``names``; finite entries; symmetry
    (|R_ij − R_ji| ≤ 1e-10); unit diagonal; |R_ij| ≤ 1; positive semidefiniteness
    (smallest eigenvalue ≥ −1e-10·max(1, D)). A failure raises
    :class:`~uqthermo.errors.CorrelationError` naming the offending entries; for a
    matrix that is not positive semidefinite these are the entries among the variables
    that carry the eigenvector of the most negative eigenvalue (components ≥ 10 % of the
    largest one). Nothing is ever "repaired".

    The error object carries ``.entries`` (list of (name_a, name_b, r)) and ``.variables``;
    raised from :class:`InputSet` it also carries ``.data`` (the datum ids involved) and its
    ``key`` is the datum of the first offending entry.
    """
    names = list(names)
    d = len(names)
    try:
        R = np.array(R, dtype=float)
    except (TypeError, ValueError):
        raise CorrelationError(f"{what} must be a numeric matrix") from None
    if R.shape != (d, d):
        raise CorrelationError(f"{what} has shape {R.shape}, expected ({d}, {d}) for {d} variables")
    if d == 0:
        return R

    def fail(msg: str, pairs: list[tuple[int, int]], variables: Iterable[int] | None = None):
        ents = [(names[i], names[j], float(R[i, j])) for i, j in pairs]
        err = CorrelationError(msg, key=names[pairs[0][0]] if pairs else None)
        err.entries = ents  # type: ignore[attr-defined]
        err.variables = [names[i] for i in (variables if variables is not None else
                                            sorted({k for p in pairs for k in p}))]  # type: ignore[attr-defined]
        raise err

    bad = np.argwhere(~np.isfinite(R))
    if bad.size:
        pairs = [(int(i), int(j)) for i, j in bad[:5]]
        fail(f"{what} has non-finite entries: " + ", ".join(f"{names[i]} ~ {names[j]}" for i, j in pairs), pairs)
    asym = np.argwhere(np.triu(np.abs(R - R.T) > SYMMETRY_TOL, 1))
    if asym.size:
        pairs = [(int(i), int(j)) for i, j in asym[:5]]
        fail(f"{what} is not symmetric: " + ", ".join(
            f"{names[i]} ~ {names[j]} ({R[i, j]:.4g} vs {R[j, i]:.4g})" for i, j in pairs), pairs)
    diag = np.flatnonzero(np.abs(np.diag(R) - 1.0) > SYMMETRY_TOL)
    if diag.size:
        pairs = [(int(i), int(i)) for i in diag[:5]]
        fail(f"{what} must have a unit diagonal: " + ", ".join(
            f"{names[i]} ({R[i, i]:.4g})" for i, _ in pairs), pairs)
    over = np.argwhere(np.triu(np.abs(R) > 1.0 + SYMMETRY_TOL, 1))
    if over.size:
        pairs = [(int(i), int(j)) for i, j in over[:5]]
        fail(f"{what} has coefficients with |r| > 1: " + ", ".join(
            _fmt_pair(names[i], names[j], R[i, j]) for i, j in pairs), pairs)
    R = 0.5 * (R + R.T)
    np.fill_diagonal(R, 1.0)
    if d > 1:
        w, V = np.linalg.eigh(R)
        tol = PSD_TOL * max(1.0, d)
        if w[0] < -tol:
            v = np.abs(V[:, 0])
            idx = [int(i) for i in np.flatnonzero(v >= 0.1 * v.max())]
            pairs = [(i, j) for a, i in enumerate(idx) for j in idx[a + 1:] if R[i, j] != 0.0]
            ents = ", ".join(_fmt_pair(names[i], names[j], R[i, j]) for i, j in pairs[:10])
            more = f" and {len(pairs) - 10} more" if len(pairs) > 10 else ""
            fail(f"{what} is not positive semidefinite (smallest eigenvalue {w[0]:.3g}); "
                 f"inconsistent coefficients among {', '.join(names[i] for i in idx)}: {ents}{more}",
                 pairs, idx)
    return R


# ---------------------------------------------------------------------------------------------
# Pearson correlation ↔ normal-score correlation of the Gaussian copula (NORTA)
# ---------------------------------------------------------------------------------------------
_GH_X, _GH_W = np.polynomial.hermite_e.hermegauss(64)      # ∫ f(z) φ(z) dz ≈ Σ w f(x) / √(2π)
_GH_W = _GH_W / math.sqrt(2.0 * math.pi)
_NORMAL_KINDS = ("normal", "exact")


def _is_normal_marginal(dist: Distribution) -> bool:
    return getattr(dist, "kind", "") in _NORMAL_KINDS or type(dist).__name__ in ("Normal", "Exact")


def pearson_from_normal_score(da: Distribution, db: Distribution, r: float) -> float:
    """Pearson correlation of (X_a, X_b) when their normal scores have correlation ``r``.

    .. math:: \\rho(r) = \\frac{E[G_a^{-1}(\\Phi(Z_1))\\,G_b^{-1}(\\Phi(r Z_1 + \\sqrt{1-r^2} Z_2))] - \\mu_a\\mu_b}
              {\\sigma_a \\sigma_b}

    evaluated by 64×64-point Gauss–Hermite quadrature (the NORTA relation: Cario & Nelson,
    "Modeling and generating random vectors with arbitrary marginal distributions and
    correlation matrix", Northwestern Univ. tech. report, 1997; for normal marginals ρ = r).
    """
    if _is_normal_marginal(da) and _is_normal_marginal(db):
        return float(r)
    z1 = _GH_X[:, None]
    z2 = _GH_X[None, :]
    W = _GH_W[:, None] * _GH_W[None, :]
    xa = da.from_standard_normal(np.broadcast_to(z1, W.shape))
    xb = db.from_standard_normal(r * z1 + math.sqrt(max(1.0 - r * r, 0.0)) * z2)
    ma, mb = float(np.sum(W * xa)), float(np.sum(W * xb))
    va, vb = float(np.sum(W * (xa - ma) ** 2)), float(np.sum(W * (xb - mb) ** 2))
    if va <= 0 or vb <= 0:
        return 0.0
    return float(np.sum(W * (xa - ma) * (xb - mb)) / math.sqrt(va * vb))


def normal_score_from_pearson(da: Distribution, db: Distribution, rho: float, names: tuple[str, str] = ("a", "b")) -> float:
    """The normal-score correlation r that gives Pearson correlation ``rho`` (inverse of
    :func:`pearson_from_normal_score`, by Brent's method; ρ(r) is increasing in r).

    Raises
    ------
    CorrelationError
        When ``rho`` cannot be attained with these marginals (e.g. −1 between two lognormals).
    """
    if _is_normal_marginal(da) and _is_normal_marginal(db) or rho == 0.0:
        return float(rho)
    from scipy.optimize import brentq

    lo, hi = pearson_from_normal_score(da, db, -1.0), pearson_from_normal_score(da, db, 1.0)
    if not (lo - 1e-9 <= rho <= hi + 1e-9):
        err = CorrelationError(f"correlation {rho:g} between {names[0]} and {names[1]} cannot be realised with their "
                               f"distributions (attainable range {lo:.3f} to {hi:.3f})", key=names[0])
        err.entries = [(names[0], names[1], rho)]  # type: ignore[attr-defined]
        raise err
    if rho >= hi:
        return 1.0
    if rho <= lo:
        return -1.0
    return float(brentq(lambda r: pearson_from_normal_score(da, db, r) - rho, -1.0, 1.0, xtol=1e-12))


def normal_score_from_spearman(rho_s: float) -> float:
    """Normal-score correlation of a Gaussian copula with Spearman rank correlation ρ_S:
    r = 2 sin(π ρ_S / 6) (Pearson 1907; Kruskal 1958, J. Am. Stat. Assoc. 53, 814)."""
    return 2.0 * math.sin(math.pi * rho_s / 6.0)

"""Linear contribution shares by datum (GUM law of propagation of uncertainty).

JCGM 100:2008 §5.2, eq. (13). With sensitivity matrix ``C`` (M, D) and input covariance
``Σ`` (D, D) the output variance is ``u²(y_m) = c_mᵀ Σ c_m``. Splitting ``Σ`` into the
within-datum blocks ``Σ_gg`` and the cross-datum blocks ``Σ_gh`` (g ≠ h) gives

    share_g(m)        = c_{m,g}ᵀ Σ_gg c_{m,g} / u²(y_m)
    correlation_part  = Σ_{g≠h} c_{m,g}ᵀ Σ_gh c_{m,h} / u²(y_m)

so that ``Σ_g share_g + correlation_part = 1`` exactly. The correlation part (which can be
negative) is reported separately instead of being hidden inside the shares.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from ...errors import StatisticsError
from .driver import Driver
from .evaluation import datum_groups

__all__ = ["LinearShares", "linear_shares"]


@dataclass
class LinearShares:
    """Linear (GUM) variance shares by datum.

    Attributes
    ----------
    data : list of str
        Datum ids, in the order of the columns of ``shares``.
    shares : ndarray, shape (M, G)
        ``c_gᵀ Σ_gg c_g / u²(y)`` per output and datum (0 for an exact output).
    correlation_part : ndarray, shape (M,)
        ``Σ_{g≠h} c_gᵀ Σ_gh c_h / u²(y)``; ``shares.sum(1) + correlation_part == 1``.
    variance : ndarray, shape (M,)
        ``u²(y) = cᵀ Σ c`` in output units squared.
    contributions : ndarray, shape (M, G)
        The within-datum variance terms ``c_gᵀ Σ_gg c_g`` (output units squared).
    """

    data: list[str]
    shares: np.ndarray
    correlation_part: np.ndarray
    variance: np.ndarray
    contributions: np.ndarray

    def drivers(self, m: int) -> list["Driver"]:
        """Drivers of output ``m``, largest share first (``method = "linear"``)."""
        order = np.argsort(-self.shares[m], kind="stable")
        return [Driver(self.data[j], float(self.shares[m, j]), None, "linear") for j in order]


def linear_shares(
    sensitivity: np.ndarray,
    covariance: np.ndarray,
    groups: Mapping[str, Sequence[int]],
    data: Sequence[str] | None = None,
) -> LinearShares:
    """Linear variance shares by datum plus the cross-datum correlation part.

    ``u²(y_m) = Σ_{i,j} C_mi Σ_ij C_mj`` (GUM, JCGM 100:2008, eq. (13));
    ``share_g = Σ_{i,j∈g} C_mi Σ_ij C_mj / u²(y_m)``; the rest (terms with i and j in
    different data) is the correlation part. Vectorised over the M outputs.

    Parameters
    ----------
    sensitivity : array_like, shape (M, D) or (D,)
        Sensitivity coefficients ``∂y_m/∂x_i`` (output units per input unit).
    covariance : array_like, shape (D, D)
        Input covariance matrix (input units squared).
    groups : mapping datum -> column indices
        Columns belonging to each datum (e.g. ``InputSet.groups``).
    data : sequence of str, optional
        Datum order of the result (default: the mapping's order).

    Returns
    -------
    LinearShares
    """
    C = np.atleast_2d(np.asarray(sensitivity, dtype=float))
    S = np.asarray(covariance, dtype=float)
    d = C.shape[1]
    if S.shape != (d, d):
        raise StatisticsError(f"covariance has shape {S.shape}, expected ({d}, {d})")
    g = datum_groups(groups, d)
    names = list(data) if data is not None else list(g)
    total = np.einsum("mi,ij,mj->m", C, S, C)
    contrib = np.zeros((C.shape[0], len(names)))
    for j, name in enumerate(names):
        idx = g[name]
        if idx.size:
            Cg = C[:, idx]
            contrib[:, j] = np.einsum("mi,ij,mj->m", Cg, S[np.ix_(idx, idx)], Cg)
    # exact outputs (u = 0): shares 0, correlation part 0
    scale = np.abs(total) + np.abs(contrib).sum(axis=1)
    zero = scale <= 1e-300
    safe = np.where(zero | (total <= 0), 1.0, total)
    shares = np.where(zero[:, None], 0.0, contrib / safe[:, None])
    corr = np.where(zero, 0.0, (total - contrib.sum(axis=1)) / safe)
    return LinearShares(names, shares, corr, np.maximum(total, 0.0), contrib)

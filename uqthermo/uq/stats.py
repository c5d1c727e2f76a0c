"""Mergeable summary statistics and coverage-interval helpers used by the Monte Carlo method.

* :class:`Moments` -- running count, mean, second and third central moment sums per
  output, merged chunk by chunk with the pairwise update formulas of Chan, Golub &
  LeVeque (1979/1983) and Pébay (2008, Sandia report SAND2008-6212), so the result does
  not depend on the chunk size beyond rounding.
* :func:`numerical_tolerance` -- δ of JCGM 101 §7.9.2.
* :func:`intervals_from_sorted` -- probabilistically symmetric and shortest coverage
  intervals from sorted model values (JCGM 101 §7.7).
* :func:`quantile_sorted` -- p-quantile of the JCGM 101 §7.5.2 continuous distribution
  function (linear interpolation with plotting positions (r − ½)/M; numpy's "hazen").
* :class:`BinnedCDF` -- a fixed, fine, mergeable histogram for quantiles of very large
  samples (edges from a pilot sample at equal pilot-probability steps).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import StatisticsError

__all__ = ["Moments", "numerical_tolerance", "intervals_from_sorted", "quantile_sorted", "BinnedCDF"]


def numerical_tolerance(z, ndigits: int = 2):
    """Numerical tolerance δ associated with a value z (JCGM 101 §7.9.2).

    Write |z| = c × 10^l with c an ``ndigits``-digit integer (rounding |z| to ``ndigits``
    significant digits); then δ = ½ × 10^l. Illustration: z = 1.6 with ndigits = 2 gives
    c = 16, l = −1, δ = 0.05; z = 0.0123 with ndigits = 1 gives c = 1, l = −2, δ = 0.005.
    z = 0 gives δ = 0. Vectorised.
    """
    if int(ndigits) != ndigits or ndigits < 1:
        raise StatisticsError(f"ndigits must be a positive integer, got {ndigits!r}")
    z = np.abs(np.asarray(z, dtype=float))
    out = np.zeros_like(z)
    pos = (z > 0) & np.isfinite(z)
    if np.any(pos):
        zp = z[pos]
        l = np.floor(np.log10(zp)) - (ndigits - 1)
        c = np.round(zp / 10.0**l)
        l = np.where(c >= 10**ndigits, l + 1, l)  # rounding carried into a new digit (e.g. 9.96 → 10)
        l = np.where(c < 10 ** (ndigits - 1), l - 1, l)  # guard against log10 rounding below
        out[pos] = 0.5 * 10.0**l
    out[~np.isfinite(z)] = np.inf
    return out if out.ndim else float(out)


class Moments:
    """Running moments per output, mergeable across chunks.

    Stores n, mean (M,), M2 = Σ(y − ȳ)² (M,), M3 = Σ(y − ȳ)³ (M,), min and max.
    Pairwise merge (Chan et al. 1979; Pébay 2008, eqs. 1.1–1.3)::

        δ = ȳ_B − ȳ_A, n = n_A + n_B
        ȳ = ȳ_A + δ n_B/n
        M2 = M2_A + M2_B + δ² n_A n_B/n
        M3 = M3_A + M3_B + δ³ n_A n_B (n_A − n_B)/n² + 3δ (n_A M2_B − n_B M2_A)/n
    """

    def __init__(self, m: int):
        self.n = 0
        self.mean = np.zeros(m)
        self.m2 = np.zeros(m)
        self.m3 = np.zeros(m)
        self.min = np.full(m, np.inf)
        self.max = np.full(m, -np.inf)

    def add(self, Y: np.ndarray) -> None:
        """Merge a chunk Y[n, M]."""
        nb = Y.shape[0]
        if nb == 0:
            return
        mb = Y.mean(axis=0)
        dev = Y - mb
        m2b = np.einsum("ij,ij->j", dev, dev)
        m3b = np.einsum("ij,ij,ij->j", dev, dev, dev)
        self.min = np.minimum(self.min, Y.min(axis=0))
        self.max = np.maximum(self.max, Y.max(axis=0))
        na = self.n
        if na == 0:
            self.n, self.mean, self.m2, self.m3 = nb, mb, m2b, m3b
            return
        n = na + nb
        d = mb - self.mean
        self.m3 = (self.m3 + m3b + d**3 * na * nb * (na - nb) / n**2
                   + 3.0 * d * (na * m2b - nb * self.m2) / n)
        self.m2 = self.m2 + m2b + d**2 * na * nb / n
        self.mean = self.mean + d * nb / n
        self.n = n

    @property
    def std(self) -> np.ndarray:
        """Sample standard deviation with divisor n − 1 (JCGM 101 §7.6 eq. (13))."""
        if self.n < 2:
            return np.full_like(self.mean, np.nan)
        return np.sqrt(self.m2 / (self.n - 1))

    @property
    def skewness(self) -> np.ndarray:
        """Sample skewness g1 = m3 / m2^{3/2} (moment estimator, m_k = M_k/n); 0 when u = 0."""
        with np.errstate(divide="ignore", invalid="ignore"):
            g = (self.m3 / self.n) / (self.m2 / self.n) ** 1.5
        return np.where(self.m2 > 0, g, 0.0)


def _q_count(p: float, m: int) -> int:
    """q of JCGM 101 §7.7.1: q = pM if integer, else the integer part of pM + ½."""
    pm = p * m
    r = round(pm)
    if abs(pm - r) < 1e-9 * max(1.0, pm):
        return int(r)
    return int(math.floor(pm + 0.5))


def intervals_from_sorted(ys: np.ndarray, p: float) -> tuple[np.ndarray, np.ndarray]:
    """Probabilistically symmetric and shortest 100p % coverage intervals (JCGM 101 §7.7).

    Parameters
    ----------
    ys : array (N, M)
        Model values sorted along axis 0.
    p : float
        Coverage probability.

    Returns
    -------
    symmetric, shortest : arrays (M, 2)
        With q from :func:`_q_count` and 1-based order statistics y_(r):
        symmetric = [y_(r), y_(r+q)] with r = (N − q)/2 if integer, else ⌊(N − q + 1)/2⌋
        (§7.7.1); shortest = [y_(r*), y_(r*+q)] with r* minimising y_(r+q) − y_(r),
        r = 1 … N − q (§7.7.2). When q ≥ N the full range is returned.
    """
    n, m = ys.shape
    q = _q_count(p, n)
    if q >= n:
        full = np.stack([ys[0], ys[-1]], axis=1)
        return full, full.copy()
    if (n - q) % 2 == 0:
        r = (n - q) // 2
    else:
        r = (n - q + 1) // 2
    r = max(r, 1)
    sym = np.stack([ys[r - 1], ys[r - 1 + q]], axis=1)
    widths = ys[q:] - ys[: n - q]  # index i ↔ r = i + 1
    rstar = np.argmin(widths, axis=0)
    cols = np.arange(m)
    short = np.stack([ys[rstar, cols], ys[rstar + q, cols]], axis=1)
    return sym, short


def quantile_sorted(ys: np.ndarray, p) -> np.ndarray:
    """p-quantile(s) of sorted values ys (N, M) from the JCGM 101 §7.5.2 distribution function.

    G(y_(r)) = (r − ½)/N with linear interpolation in between; outside [½/N, 1 − ½/N]
    the extreme values are returned. Returns shape (M,) for scalar p, else (len(p), M).
    """
    return np.quantile(ys, p, axis=0, method="hazen")


class BinnedCDF:
    """Fixed fine histogram per output, for quantiles when not all values can be kept.

    Edges are set once from a pilot sample (N_p, M) at equally spaced pilot probabilities
    (so bins are narrow where the density is high and at most ``bins`` + 2 per output),
    and then stay fixed: counts from any number of chunks simply add, which makes the
    estimate mergeable and independent of the chunk size. Values below the first or above
    the last edge are counted in two open tail bins bounded by the running min / max.

    Quantiles invert the piecewise-linear CDF through the bin edges; the error of a
    quantile is at most the width of the bin it falls in (and much less for a smooth
    density). :meth:`resolution` reports that width so callers can check it is far below
    the numerical tolerance δ (JCGM 101 §7.9.2).
    """

    def __init__(self, pilot: np.ndarray, bins: int = 100_000):
        pilot = np.sort(np.asarray(pilot, dtype=float), axis=0)
        n, m = pilot.shape
        bins = int(max(16, bins))
        # pilot quantiles at equal probability steps by linear interpolation of the sorted pilot
        pos = np.linspace(0.0, 1.0, bins + 1) * (n - 1)
        i0 = np.minimum(np.floor(pos).astype(np.int64), max(n - 2, 0))
        frac = (pos - i0)[:, None]
        i1 = np.minimum(i0 + 1, n - 1)
        edges = (pilot[i0] * (1.0 - frac) + pilot[i1] * frac).T  # (M, bins+1)
        # make edges strictly increasing (ties in the pilot) with a tiny relative spread
        span = np.maximum(edges[:, -1] - edges[:, 0], np.finfo(float).tiny)
        eps = span * 1e-12
        edges = np.maximum.accumulate(edges + eps[:, None] * np.arange(bins + 1)[None, :], axis=1)
        self.edges = edges
        self.counts = np.zeros((m, bins + 2), dtype=np.int64)  # [below, bins..., above]
        self.n = 0
        self.min = np.full(m, np.inf)
        self.max = np.full(m, -np.inf)
        self.add(pilot)

    def add(self, Y: np.ndarray) -> None:
        """Count a chunk Y[n, M]."""
        if Y.shape[0] == 0:
            return
        nb = self.counts.shape[1]
        Ys = np.sort(Y.T, axis=1)  # sorted needles make the binary searches cache-friendly
        for j in range(Y.shape[1]):
            idx = np.searchsorted(self.edges[j], Ys[j], side="right")  # 0 = below, nb-1 = above
            self.counts[j] += np.bincount(idx, minlength=nb)
        self.min = np.minimum(self.min, Y.min(axis=0))
        self.max = np.maximum(self.max, Y.max(axis=0))
        self.n += Y.shape[0]

    def _knots(self, j: int) -> tuple[np.ndarray, np.ndarray]:
        e = self.edges[j]
        lo = min(self.min[j], e[0])
        hi = max(self.max[j], e[-1])
        x = np.concatenate([[lo], e, [hi]])
        c = np.concatenate([[0], np.cumsum(self.counts[j])]).astype(float) / max(self.n, 1)
        return x, c

    def quantile(self, p) -> np.ndarray:
        """Quantile(s) per output: shape (M,) for scalar p, else (len(p), M)."""
        p_arr = np.atleast_1d(np.asarray(p, dtype=float))
        out = np.empty((p_arr.size, self.edges.shape[0]))
        for j in range(self.edges.shape[0]):
            x, c = self._knots(j)
            keep = np.concatenate([[True], np.diff(c) > 0])  # drop empty bins for a strictly rising CDF
            out[:, j] = np.interp(p_arr, c[keep], x[keep])
        return out[0] if np.ndim(p) == 0 else out

    def cdf(self, y) -> np.ndarray:
        """P(Y ≤ y) per output (y scalar or (M,))."""
        y = np.broadcast_to(np.asarray(y, dtype=float), (self.edges.shape[0],))
        out = np.empty(self.edges.shape[0])
        for j in range(self.edges.shape[0]):
            x, c = self._knots(j)
            out[j] = np.interp(y[j], x, c, left=0.0, right=1.0)
        return out

    def intervals(self, p: float, grid: int = 4001) -> tuple[np.ndarray, np.ndarray]:
        """Probabilistically symmetric and shortest 100p % intervals from the binned CDF."""
        sym = np.stack([self.quantile((1 - p) / 2), self.quantile((1 + p) / 2)], axis=1)
        a = np.linspace(0.0, 1.0 - p, grid)
        lo = self.quantile(a)
        hi = self.quantile(a + p)
        k = np.argmin(hi - lo, axis=0)
        cols = np.arange(lo.shape[1])
        short = np.stack([lo[k, cols], hi[k, cols]], axis=1)
        return sym, short

    def resolution(self, values: np.ndarray) -> np.ndarray:
        """Width of the bins holding the given values, max over rows: values (k, M) → (M,).

        Call it with the quantiles that are reported (e.g. the coverage-interval endpoints);
        an open tail bin counts with its extent to the running min / max.
        """
        v = np.atleast_2d(np.asarray(values, dtype=float))
        out = np.zeros(self.edges.shape[0])
        for j in range(self.edges.shape[0]):
            x, _ = self._knots(j)
            i = np.clip(np.searchsorted(x, v[:, j], side="right"), 1, len(x) - 1)
            out[j] = np.max(x[i] - x[i - 1])
        return out

    def histogram(self, j: int, bins: int = 50, range_p: tuple[float, float] = (0.0005, 0.9995)):
        """Coarse histogram (edges, counts) of output j, rebinned from the fine bins."""
        lo, hi = self.quantile(range_p[0])[j], self.quantile(range_p[1])[j]
        if not hi > lo:
            hi = lo + 1.0
        edges = np.linspace(lo, hi, bins + 1)
        x, c = self._knots(j)
        cum = np.interp(edges, x, c) * self.n
        counts = np.round(np.diff(cum)).astype(np.int64)
        return edges, counts

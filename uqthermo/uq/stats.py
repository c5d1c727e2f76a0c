"""Mergeable summary statistics and coverage-interval helpers used by the Monte Carlo method.

* :class:`Moments` -- running count, mean, second and third central moment sums per
  output, merged chunk by chunk with the pairwise update formulas of Chan, Golub &
  LeVeque (1979/1983) and Pébay (2008, Sandia report SAND2008-6212), so the result does
  not depend on the chunk size beyond rounding.
* :func:`numerical_tolerance` -- δ of JCGM 101 §7.9.2.
* :func:`intervals_from_sorted`, :func:`quantile_sorted`, :class:`OrderStatistics` -- exact
  coverage intervals and quantiles, from :mod:`uqthermo.uq.order_statistics` (re-exported).
* :class:`BinLayout`, :class:`BinnedCDF` -- a fixed, fine, mergeable histogram for
  quantiles of very large samples (edges from a pilot sample; equal-width bins over the
  central range so that a value's bin is found by arithmetic, not by search).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import StatisticsError
from .order_statistics import SELECT_MIN, OrderStatistics, intervals_from_sorted, quantile_sorted, select_row
from .scratch import scratch

__all__ = ["Moments", "numerical_tolerance", "intervals_from_sorted", "quantile_sorted", "OrderStatistics",
           "BinLayout", "BinnedCDF"]


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


#: largest scratch buffer kept between calls (elements); larger ones are made per call
SCRATCH_KEEP = 1 << 22


#: adding 1.5·2⁵² rounds a double |t| < 2⁵¹ to an integer held in its low mantissa bits
_ROUND = 1.5 * 2.0**52
_ROUND_BITS = int(np.float64(_ROUND).view(np.int64))


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
        YT = np.ascontiguousarray(Y.T)   # one output per contiguous row (free for Fortran-ordered Y)
        mb = YT.mean(axis=1)
        dev = YT - mb[:, None]
        # row by row: a dot product per row is a single SIMD pass (einsum of three operands is not)
        m2b, m3b, sq = np.empty(dev.shape[0]), np.empty(dev.shape[0]), np.empty(dev.shape[1])
        for i, r in enumerate(dev):
            m2b[i] = np.dot(r, r)
            np.multiply(r, r, out=sq)
            m3b[i] = np.dot(sq, r)
        self.min = np.minimum(self.min, YT.min(axis=1))
        self.max = np.maximum(self.max, YT.max(axis=1))
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


#: probability in each open end of the pilot that gets equal-probability bins (see BinLayout)
TAIL_PROBABILITY = 1e-4
#: BinLayout.from_pilot with ndigits: central bin width at most WIDTH_SHARE × δ(U_SHRINK × s)
#: (half the δ/10 above which a run warns that its bins are too coarse), at least this many bins
WIDTH_SHARE = 0.05
U_SHRINK = 0.8
MIN_CENTRAL_BINS = 2000


def _sorted_tails(parts: list[np.ndarray], count: int) -> tuple[np.ndarray, np.ndarray] | None:
    """(lowest, highest) ``count`` values of every column of the rows of ``parts`` (n_i, M),
    each sorted, as (count, M) arrays, by the pilot thresholds of
    :func:`~uqthermo.uq.order_statistics.select_row` (a column the pilot missed is sorted in
    full); None for fewer than :data:`~uqthermo.uq.order_statistics.SELECT_MIN` rows."""
    n, m = sum(q.shape[0] for q in parts), parts[0].shape[1]
    if n < SELECT_MIN:
        return None
    low, high = [], []
    for j in range(m):
        y = parts[0][:, j] if len(parts) == 1 else np.concatenate([q[:, j] for q in parts])
        got = select_row(y, count, count, [])
        lo_part, hi_part = got[:2] if got is not None else (np.sort(y),) * 2
        low.append(lo_part[:count])
        high.append(hi_part[hi_part.size - count:])
    return np.stack(low, axis=1), np.stack(high, axis=1)


@dataclass(frozen=True)
class BinLayout:
    """Fixed bin edges per output for :class:`BinnedCDF`, with a fast counting rule.

    Built once from a sorted pilot sample (N_p, M) by :meth:`from_pilot`. Per output the
    bins are: ``n_tail`` bins at equal pilot probability below the pilot quantile
    c_lo = G⁻¹(a) and above c_hi = G⁻¹(1 − a) (a = max(10⁻⁴, 20/N_p)), and between them
    ``k`` bins of equal width w = (c_hi − c_lo)/k. A value y falls in central bin
    ⌊(y − c_lo)/w⌋, found by arithmetic; only the rare values outside [c_lo, c_hi) are
    located by binary search. Values below the first or above the last edge go to two open
    tail bins. Counts have shape (M, n_edges + 1): [below, bins..., above].

    Attributes
    ----------
    edges : (M, B + 1) strictly increasing per row
    lo, inv_width : (M,) c_lo and 1/w
    k : int, central bins; first : int, index in ``edges`` of c_lo
    """

    edges: np.ndarray
    lo: np.ndarray
    inv_width: np.ndarray
    k: int
    first: int

    @classmethod
    def from_pilot(cls, pilot, bins: int = 100_000, *, is_sorted: bool = False,
                   ndigits: int | None = None, spread=None) -> "BinLayout":
        """Layout from a pilot (N_p, M) — or a list of row blocks (n_i, M) that make it up —
        with at most ``bins`` bins per output. ``is_sorted``: the pilot is one array sorted
        along axis 0 (else only its two tails are sorted, see :func:`_sorted_tails`).

        With ``ndigits`` the central bins are only as fine as the results need: per output
        their width is at most :data:`WIDTH_SHARE` × δ(:data:`U_SHRINK` × s), δ the numerical
        tolerance of JCGM 101 §7.9.2 and s the pilot's standard deviation (``spread``, if the
        caller has it; so a final u a
        little below the pilot's still gets bins far finer than its own δ), and there are no
        more central bins than the output that needs most of them asks for (at least
        :data:`MIN_CENTRAL_BINS`, at most what ``bins`` allows). Fewer counters are counted
        faster; a quantile's error stays within one bin width.
        """
        parts = [np.asarray(q, dtype=float) for q in pilot] if isinstance(pilot, list) else [np.asarray(pilot, dtype=float)]
        parts = [q for q in parts if q.shape[0]] or parts[:1]
        n = sum(q.shape[0] for q in parts)
        ps = parts[0] if len(parts) == 1 else None      # the pilot as one array, made only if needed
        bins = int(max(16, bins))
        a = min(0.05, max(TAIL_PROBABILITY, 20.0 / max(n, 1)))
        n_tail = int(min(1000, bins // 10, max(1, round(a * n))))
        k = bins - 2 * n_tail
        # only the pilot's two tails are read: its lowest and highest values, sorted
        tails = (ps, ps) if is_sorted and ps is not None else _sorted_tails(parts, int(np.ceil(a * n)) + 2)
        if tails is None:
            ps = np.sort(np.concatenate(parts, axis=0), axis=0)
            tails = (ps, ps)
        low_v, high_v = tails
        lo_q = quantile_sorted(low_v, np.linspace(0.0, a, n_tail + 1), n=n)          # (n_tail+1, M)
        hi_q = quantile_sorted(high_v, np.linspace(1.0 - a, 1.0, n_tail + 1), n=n, first=n - high_v.shape[0])
        lo_q[0], hi_q[-1] = low_v[0], high_v[-1]
        c_lo, c_hi = lo_q[-1], hi_q[0]
        first_v, last_v = low_v[0], high_v[-1]
        if ndigits is not None and n > 1 and k > MIN_CENTRAL_BINS:
            if spread is None:
                mom = Moments(parts[0].shape[1])
                for q in parts:
                    mom.add(q)
                spread = mom.std
            s = np.asarray(spread, dtype=float)
            limit = WIDTH_SHARE * np.atleast_1d(numerical_tolerance(U_SHRINK * s, ndigits))
            ok = limit > 0
            need = int(np.ceil(np.max((c_hi - c_lo)[ok] / limit[ok]))) if np.any(ok) else 0
            k = int(min(k, max(MIN_CENTRAL_BINS, need)))
        scale = np.maximum(np.maximum(np.abs(first_v), np.abs(last_v)), 1e-300)
        tiny = np.maximum(last_v - first_v, scale * 1e-9) * 1e-12
        width = np.maximum(c_hi - c_lo, tiny * k) / k
        central = c_lo[None, :] + width[None, :] * np.arange(k + 1)[:, None]  # (k+1, M)
        # tails strictly increasing, meeting the central block exactly (ties in the pilot,
        # discrete outputs): e_i = min_{j >= i}(e_j + t(n - j)) - t(n - i) below, mirrored above
        r = tiny[None, :] * np.arange(n_tail, -1, -1)[:, None]
        lo_q[-1] = c_lo
        low = np.minimum.accumulate((lo_q + r)[::-1], axis=0)[::-1] - r
        hi_q[0] = central[-1]
        r = tiny[None, :] * np.arange(n_tail + 1)[:, None]
        high = np.maximum.accumulate(hi_q - r, axis=0) + r
        edges = np.concatenate([low[:-1], central, high[1:]], axis=0).T.copy()  # (M, B+1)
        return cls(edges=edges, lo=c_lo.copy(), inv_width=1.0 / width, k=k, first=n_tail)

    @property
    def n_counts(self) -> int:
        return self.edges.shape[1] + 1

    def indices(self, Y: np.ndarray, out: np.ndarray | None = None) -> np.ndarray:
        """Flat counts index j·n_counts + b (output j, bin b) of every value of Y[n, M].

        Returns shape (M·n,) int64, written into ``out`` when given (a 1-D int64 array of that size).
        A value's central bin is i = ⌊t⌋, t = y/w − c_lo/w (or (y − c_lo)/w where |c_lo/w| ≥ 2³⁶,
        so that the three roundings stay below 10⁻⁴ of a bin). ⌊t⌋ is taken as round(t − ½) by adding
        1.5·2⁵² and reading the double's bits as an integer, two vectorised passes where a
        float-to-int64 cast is one scalar conversion per value on AVX2 (a value exactly on an edge
        may go to the bin below: rounding distance). An i outside [0, k) marks a value outside
        [c_lo, c_hi) (far out or not finite: any bits, never inside): those few are placed by
        binary search of the edges.
        """
        n, m = Y.shape
        size = m * n
        nc = self.n_counts
        t = scratch("bin_t", (m, n), keep=SCRATCH_KEEP)
        c = self.lo * self.inv_width
        if np.all(np.abs(c) < 2.0**36):
            np.multiply(Y.T, self.inv_width[:, None], out=t)
            t -= (c + 0.5)[:, None]
        else:
            np.subtract(Y.T, self.lo[:, None], out=t)
            t *= self.inv_width[:, None]
            t -= 0.5
        t += _ROUND
        bin_ = t.view(np.int64)
        bin_ -= _ROUND_BITS                 # i, in place (garbage, never in [0, k), for |t| ≥ 2⁵¹ or NaN)
        mask = scratch("bin_mask", (m, n), np.bool_, keep=SCRATCH_KEEP)
        np.greater_equal(bin_.view(np.uint64), self.k, out=mask)
        flat = np.empty(size, dtype=np.int64) if out is None else out
        np.add(bin_, (self.first + 1 + np.arange(m, dtype=np.int64) * nc)[:, None], out=flat.reshape(m, n))
        outside = np.flatnonzero(mask)      # the rare values outside [c_lo, c_hi)
        if outside.size:
            rows = outside // n
            for j in np.unique(rows):
                pos = outside[rows == j]
                flat[pos] = j * nc + np.searchsorted(self.edges[j], Y[pos - j * n, j], side="right")
        return flat

    def count(self, Y: np.ndarray) -> np.ndarray:
        """Bin counts (M, n_edges + 1) of a chunk Y[n, M]."""
        m = Y.shape[1]
        return np.bincount(self.indices(Y), minlength=m * self.n_counts).reshape(m, self.n_counts)


class BinnedCDF:
    """Fixed fine histogram per output, for quantiles when not all values can be kept.

    Edges are set once from a pilot sample (N_p, M) (see :class:`BinLayout`: equal-width
    bins over the central pilot range, equal-probability bins in the two far tails) and
    then stay fixed: counts from any number of chunks simply add, which makes the
    estimate mergeable and independent of the chunk size. Values below the first or above
    the last edge are counted in two open tail bins bounded by the running min / max.

    Quantiles invert the piecewise-linear CDF through the bin edges; the error of a
    quantile is at most the width of the bin it falls in (and much less for a smooth
    density). :meth:`resolution` reports that width so callers can check it is far below
    the numerical tolerance δ (JCGM 101 §7.9.2).
    """

    def __init__(self, pilot: np.ndarray | None = None, bins: int = 100_000, *, layout: BinLayout | None = None):
        if layout is None:
            pilot = np.sort(np.asarray(pilot, dtype=float), axis=0)
            layout = BinLayout.from_pilot(pilot, bins, is_sorted=True)
        self.layout = layout
        m = layout.edges.shape[0]
        self.counts = np.zeros((m, layout.n_counts), dtype=np.int64)  # [below, bins..., above]
        self.n = 0
        self.min = np.full(m, np.inf)
        self.max = np.full(m, -np.inf)
        if pilot is not None:
            self.add_sorted(pilot)

    def add_sorted(self, ys: np.ndarray) -> None:
        """Count values ys (N, M) already sorted along axis 0, by binary search of the edges.

        Bin b holds e_{b−1} ≤ y < e_b, so its count is L(e_b) − L(e_{b−1}) with L(e) the
        number of values below e: O(B log N) work instead of O(N).
        """
        n = ys.shape[0]
        if n == 0:
            return
        for j in range(ys.shape[1]):
            below = np.searchsorted(ys[:, j], self.layout.edges[j], side="left")
            self._counts[j] += np.diff(below, prepend=0, append=n)
        self.min = np.minimum(self.min, ys[0])
        self.max = np.maximum(self.max, ys[-1])
        self.n += n
        self._knot_cache.clear()

    @classmethod
    def from_counts(cls, layout: BinLayout, counts: np.ndarray, n: int, minimum, maximum) -> "BinnedCDF":
        """A histogram with given layout and (merged) counts."""
        b = cls(layout=layout)
        b.counts = np.asarray(counts, dtype=np.int64)
        b.n = int(n)
        b.min = np.asarray(minimum, dtype=float).copy()
        b.max = np.asarray(maximum, dtype=float).copy()
        return b

    @property
    def edges(self) -> np.ndarray:
        return self.layout.edges

    def add(self, Y: np.ndarray, extremes: tuple[np.ndarray, np.ndarray] | None = None) -> None:
        """Count a chunk Y[n, M] (``extremes``: the running (min, max) if the caller keeps them).

        Bin indices are buffered (up to 8 per counter, at most 2²³ of them) and counted
        together, so the cost of one ``bincount`` over all M·B counters is shared by many chunks.
        """
        if Y.shape[0] == 0:
            return
        size = Y.shape[0] * Y.shape[1]
        if self._buf is None:
            self._buf = np.empty(max(self._counts.size, min(8 * self._counts.size, 1 << 23)), dtype=np.int64)
        if size > self._buf.size:
            self._flush()
            self._counts += self.layout.count(Y)
        else:
            if self._n_pending + size > self._buf.size:
                self._flush()
            self.layout.indices(Y, out=self._buf[self._n_pending:self._n_pending + size])
            self._n_pending += size
        if extremes is None:
            YT = Y.T
            extremes = (np.minimum(self.min, YT.min(axis=1)), np.maximum(self.max, YT.max(axis=1)))
        self.min, self.max = extremes
        self.n += Y.shape[0]
        self._knot_cache.clear()

    def _flush(self) -> None:
        if self._n_pending:
            c = np.bincount(self._buf[:self._n_pending], minlength=self._counts.size)
            self._counts += c.reshape(self._counts.shape)
            self._n_pending = 0

    @property
    def counts(self) -> np.ndarray:
        """Counts (M, n_edges + 1): [below, bins..., above] per output."""
        self._flush()
        return self._counts

    @counts.setter
    def counts(self, value) -> None:
        self._buf, self._n_pending = None, 0
        self._knot_cache: dict = {}
        self._counts = np.asarray(value, dtype=np.int64)

    def _knots(self, j: int) -> tuple[np.ndarray, np.ndarray]:
        """(x, G(x)) of output j's piecewise-linear distribution function, kept until values are added."""
        if j not in self._knot_cache:
            e = self.edges[j]
            lo = min(self.min[j], e[0])
            hi = max(self.max[j], e[-1])
            x = np.concatenate([[lo], e, [hi]])
            c = np.concatenate([[0], np.cumsum(self.counts[j])]).astype(float) / max(self.n, 1)
            self._knot_cache[j] = (x, c)
        return self._knot_cache[j]

    def quantile(self, p) -> np.ndarray:
        """Quantile(s) per output: shape (M,) for scalar p, else (len(p), M).

        Inverse of the piecewise-linear CDF: p in (c_{i−1}, c_i] lies in bin i, at
        x_{i−1} + (p − c_{i−1})/(c_i − c_{i−1})·(x_i − x_{i−1}); empty bins are jumped over.
        """
        p_arr = np.atleast_1d(np.asarray(p, dtype=float))
        out = np.empty((p_arr.size, self.edges.shape[0]))
        for j in range(self.edges.shape[0]):
            x, c = self._knots(j)
            i = np.clip(np.searchsorted(c, p_arr, side="left"), 1, len(c) - 1)
            c0, c1 = c[i - 1], c[i]
            frac = np.where(c1 > c0, (p_arr - c0) / np.where(c1 > c0, c1 - c0, 1.0), 0.0)
            out[:, j] = x[i - 1] + np.clip(frac, 0.0, 1.0) * (x[i] - x[i - 1])
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

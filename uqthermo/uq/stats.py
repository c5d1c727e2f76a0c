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
* :class:`BinLayout`, :class:`BinnedCDF` -- a fixed, fine, mergeable histogram for
  quantiles of very large samples (edges from a pilot sample; equal-width bins over the
  central range so that a value's bin is found by arithmetic, not by search).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from ..errors import StatisticsError

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
        m2b = np.einsum("ij,ij->i", dev, dev)
        m3b = np.einsum("ij,ij,ij->i", dev, dev, dev)
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
    return _intervals_from_tails(ys[: n - q], ys[q:], n, q)


def _intervals_from_tails(low: np.ndarray, high: np.ndarray, n: int, q: int) -> tuple[np.ndarray, np.ndarray]:
    """The two §7.7 intervals from low = y_(1) … y_(N−q) and high = y_(q+1) … y_(N), each (N − q, M).

    y_(r) = low[r − 1] and y_(r+q) = high[r − 1]: every order statistic the two intervals
    can use lies in these two sorted tails (q < N).
    """
    r = (n - q) // 2 if (n - q) % 2 == 0 else (n - q + 1) // 2
    r = max(r, 1)
    sym = np.stack([low[r - 1], high[r - 1]], axis=1)
    widths = high - low  # index i ↔ r = i + 1
    rstar = np.argmin(widths, axis=0)
    cols = np.arange(low.shape[1])
    short = np.stack([low[rstar, cols], high[rstar, cols]], axis=1)
    return sym, short


def quantile_sorted(ys: np.ndarray, p) -> np.ndarray:
    """p-quantile(s) of sorted values ys (N, M) from the JCGM 101 §7.5.2 distribution function.

    G(y_(r)) = (r − ½)/N with linear interpolation in between; outside [½/N, 1 − ½/N]
    the extreme values are returned (numpy's ``method="hazen"``). The values are already
    sorted, so the quantile is read off directly (no partition). Returns shape (M,) for
    scalar p, else (len(p), M).
    """
    i0, i1, frac = _hazen_ranks(ys.shape[0], p)
    out = ys[i0] + (ys[i1] - ys[i0]) * frac
    return out[0] if np.ndim(p) == 0 else out


def _hazen_ranks(n: int, p) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """0-based ranks i0, i1 and weights (len(p), 1) of the §7.5.2 quantile(s) p of n values."""
    pa = np.atleast_1d(np.asarray(p, dtype=float))
    pos = np.clip(pa * n - 0.5, 0.0, n - 1.0)            # 0-based fractional rank
    i0 = np.minimum(np.floor(pos).astype(np.intp), max(n - 2, 0))
    i1 = np.minimum(i0 + 1, n - 1)
    return i0, i1, (pos - i0)[:, None]


#: rows at least this long find their tails by thresholds from a pilot (:class:`OrderStatistics`)
SELECT_MIN = 2**14
#: pilot values per row, and the probability margins its thresholds leave: about 5.6
#: binomial standard deviations of a pilot quantile near 5 % for the tails, 5 near ½ for the
#: band around the median (a miss only costs a partition of that row)
SELECT_PILOT = 2**16
SELECT_MARGIN = 0.005
MEDIAN_MARGIN = 0.01
#: values marked per step of that pass (kept in cache)
SELECT_BLOCK = 2**15


class OrderStatistics:
    """Exact order statistics of N values per output without sorting them all.

    ``rows`` (M, N), one row per output; with q of JCGM 101 §7.7.1 and a = N − q, the lowest
    a values and the highest N − q values of each row (every order statistic of the
    probabilistically symmetric and the shortest 100p % interval, p ≥ ½) are found and
    sorted, and the median's ranks are placed. Any other rank is selected when asked for
    (one partition, cached). All results equal those of a full sort exactly.

    How the tails are found. Long rows (N ≥ :data:`SELECT_MIN`): thresholds t_lo, t_hi and a
    band [m_lo, m_hi] around the median are read off a sorted pilot of every ⌈N/2¹⁴⌉-th value,
    :data:`SELECT_MARGIN` beyond the probabilities needed; one pass marks the values ≤ t_lo,
    ≥ t_hi or in the band, and only those (about 7 % + 7 % + 3 % of the row) are gathered and
    sorted. If fewer than a values lie at or below t_lo — or fewer than N − q at or above
    t_hi, or the median ranks fall outside the band — the pilot was unlucky and the row is
    partitioned instead; so the result never depends on the pilot. The rows keep their order.
    Shorter rows are rearranged in place: ``np.partition`` (introselect) at ranks a − 1, the
    median's and q, then the two tails are sorted.
    """

    def __init__(self, rows: np.ndarray, p: float):
        self.rows = rows
        self.m, self.n = rows.shape
        self.q = _q_count(p, self.n)
        self.a = self.n - self.q
        self._middle: dict[int, np.ndarray] = {}
        self._low = self._high = None        # (M, a), (M, N − q), sorted; None: read them from rows
        if self.q >= self.n or self.a >= self.q or self.n < 256:
            rows.sort(axis=1)
            self.a = self.q = self.n
            self._layout = "sorted"
            return
        i0, i1, _ = _hazen_ranks(self.n, 0.5)          # the median's ranks are placed too
        med = sorted({int(i0[0]), int(i1[0])})
        if self.n >= SELECT_MIN:
            self._layout = "selected"
            lows, highs = [], []
            mid = np.empty((len(med), self.m))
            for j in range(self.m):
                got = _select_row(rows[j], self.a, self.n - self.q, med)
                if got is None:
                    y = rows[j].copy()
                    y.partition(sorted({self.a - 1, *med, self.q}))
                    got = np.sort(y[:self.a]), np.sort(y[self.q:]), y[med]
                lows.append(got[0])
                highs.append(got[1])
                mid[:, j] = got[2]
            # the tails as far as every row has them (the pilot's margin: the ranks a little
            # beyond the intervals' own, e.g. the one-sided 5 %/95 % quantiles, come free)
            lo_n, hi_n = min(v.size for v in lows), min(v.size for v in highs)
            self._low = np.stack([v[:lo_n] for v in lows])
            self._high = np.stack([v[v.size - hi_n:] for v in highs])
            self._middle = {r: mid[k].copy() for k, r in enumerate(med)}
            return
        self._layout = "partitioned"                     # rows[:, :a] and rows[:, q:] sorted
        rows.partition(sorted({self.a - 1, *med, self.q}), axis=1)
        self._middle = {r: rows[:, r].copy() for r in med}
        rows[:, :self.a].sort(axis=1)
        rows[:, self.q:].sort(axis=1)

    @property
    def low(self) -> np.ndarray:
        """The a = N − q lowest values of each output, sorted, (M, a)."""
        return self._low[:, :self.a] if self._low is not None else self.rows[:, :self.a]

    @property
    def high(self) -> np.ndarray:
        """The N − q highest values of each output, sorted, (M, N − q)."""
        return self._high[:, self._high.shape[1] - (self.n - self.q):] if self._high is not None \
            else self.rows[:, self.q:]

    def at(self, ranks: np.ndarray) -> np.ndarray:
        """Order statistics at 0-based ``ranks`` (K,), shape (K, M)."""
        ranks = np.asarray(ranks, dtype=np.intp)
        out = np.empty((ranks.size, self.m))
        lo_n, hi_n = self.a, self.n - self.q          # ranks [0, lo_n) and [n − hi_n, n) are stored
        if self._low is not None:
            lo_n, hi_n = self._low.shape[1], self._high.shape[1]
        low = self._low if self._low is not None else self.rows[:, :lo_n]
        high = self._high if self._high is not None else self.rows[:, self.n - hi_n:]
        for i, r in enumerate(ranks.tolist()):
            if r < lo_n:
                out[i] = low[:, r]
            elif r >= self.n - hi_n:
                out[i] = high[:, r - (self.n - hi_n)]
        mid = (ranks >= lo_n) & (ranks < self.n - hi_n)
        need = sorted({int(r) for r in ranks[mid]} - set(self._middle))
        if need:
            if self._layout == "selected":       # by pilot bands; a row the pilot missed is partitioned
                vals = np.empty((len(need), self.m))
                for j in range(self.m):
                    got = _select_bands(self.rows[j], need)
                    vals[:, j] = got if got is not None else np.partition(self.rows[j], need)[need]
                self._middle.update({r: vals[i].copy() for i, r in enumerate(need)})
            else:
                part = np.partition(self.rows[:, self.a:self.q], [r - self.a for r in need], axis=1)
                self._middle.update({r: part[:, r - self.a].copy() for r in need})
        for i in np.flatnonzero(mid):
            out[i] = self._middle[int(ranks[i])]
        return out

    def quantile(self, p) -> np.ndarray:
        """As :func:`quantile_sorted` of the fully sorted values."""
        i0, i1, frac = _hazen_ranks(self.n, p)
        lo, hi = self.at(i0), self.at(i1)
        out = lo + (hi - lo) * frac
        return out[0] if np.ndim(p) == 0 else out

    def intervals(self, p: float) -> tuple[np.ndarray, np.ndarray]:
        """As :func:`intervals_from_sorted` of the fully sorted values. For another p than the
        one given at construction the rows are sorted in full first."""
        q = _q_count(p, self.n)
        if self._layout == "sorted" or q != self.q:
            if self._layout != "sorted":
                self.rows.sort(axis=1)
                self.a = self.q = self.n
                self._low = self._high = None
                self._middle = {}
                self._layout = "sorted"
            return intervals_from_sorted(self.rows.T, p)
        return _intervals_from_tails(self.low.T, self.high.T, self.n, q)

    def tail_sums(self, low: np.ndarray, high: np.ndarray, center: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(Σ_{y ≤ low} (y − c), Σ_{y > high} (y − c)) per output, (M,) each.

        ``low`` (M,) at or below the a-th lowest value and ``high`` (M,) at or above the q-th
        (the endpoints of the 100p % intervals are), so only the stored tails are read.
        """
        c = np.asarray(center, dtype=float)[:, None]
        lo_v, hi_v = (self.rows, self.rows) if self._layout == "sorted" else (self.low, self.high)
        s_lo = np.sum(np.where(lo_v <= np.asarray(low, dtype=float)[:, None], lo_v - c, 0.0), axis=1)
        s_hi = np.sum(np.where(hi_v > np.asarray(high, dtype=float)[:, None], hi_v - c, 0.0), axis=1)
        return s_lo, s_hi

    def count_at_most(self, limits: np.ndarray) -> np.ndarray:
        """Number of values ≤ limit per output, (M,)."""
        return np.count_nonzero(self.rows <= np.asarray(limits, dtype=float)[:, None], axis=1)


@functools.lru_cache(maxsize=8)
def pilot_positions(n: int) -> np.ndarray:
    """The pilot of a row of n values: min(n, :data:`SELECT_PILOT`) distinct positions drawn
    at random with a fixed seed, in increasing order. A stride would not do: the values of a
    Sobol' run come in sequence order, and every 2^k-th point of a digital sequence lies in
    a 2⁻ᵏ-wide slice of its leading coordinates."""
    k = min(int(n), SELECT_PILOT)
    idx = np.random.Generator(np.random.PCG64(0x70696C6F74)).choice(int(n), k, replace=False, shuffle=False)
    idx.sort()
    idx.setflags(write=False)
    return idx


def _pilot_quantile(y: np.ndarray):
    """prob ↦ the pilot's value at probability prob (clamped to the pilot's range) for row y."""
    pilot = np.sort(y[pilot_positions(y.size)])
    k = pilot.size
    return lambda prob: float(pilot[min(k - 1, max(0, int(prob * k)))])


def _select_bands(y: np.ndarray, ranks: list[int]) -> np.ndarray | None:
    """Values of row y at the 0-based ``ranks`` (sorted), by pilot thresholds: a band of
    ±:data:`MEDIAN_MARGIN` in probability around each rank (overlapping bands merged), one
    marking pass that counts the values below each band and gathers those inside, one sort of
    the gathered values. None when the pilot missed (a rank outside its band)."""
    n = y.size
    at = _pilot_quantile(y)
    bands: list[list] = []                      # [lo, hi, ranks]
    for r in ranks:
        lo, hi = at(r / n - MEDIAN_MARGIN), at((r + 1) / n + MEDIAN_MARGIN)
        if bands and lo <= bands[-1][1]:
            bands[-1][1] = max(bands[-1][1], hi)
            bands[-1][2].append(r)
        else:
            bands.append([lo, hi, [r]])
    size = min(n, SELECT_BLOCK)
    mark, tmp, inb = (np.empty(size, dtype=bool) for _ in range(3))
    parts, below = [], [0] * len(bands)
    for s in range(0, n, size):
        v = y[s:s + size]
        mk, tm, ib = mark[:v.size], tmp[:v.size], inb[:v.size]
        mk[:] = False
        for i, (lo, hi, _) in enumerate(bands):
            np.greater_equal(v, lo, out=ib)
            below[i] += v.size - int(np.count_nonzero(ib))
            np.less_equal(v, hi, out=tm)
            ib &= tm
            mk |= ib
        parts.append(v[np.flatnonzero(mk)])
    c = np.concatenate(parts)
    c.sort()
    out = np.empty(len(ranks))
    i = 0
    for (lo, hi, rs), nb in zip(bands, below):
        start, stop = int(np.searchsorted(c, lo, "left")), int(np.searchsorted(c, hi, "right"))
        for r in rs:
            j = r - nb
            if not 0 <= j < stop - start:
                return None
            out[i] = c[start + j]
            i += 1
    return out


def _select_row(y: np.ndarray, n_low: int, n_high: int, med: list[int]):
    """(lowest values sorted, highest values sorted, values at the ranks ``med``) of one row by
    pilot thresholds (see :class:`OrderStatistics`), or None when the pilot missed. The tails
    hold at least ``n_low`` and ``n_high`` values: all those at or beyond the thresholds."""
    n = y.size
    at = _pilot_quantile(y)

    t_lo, t_hi = at(n_low / n + SELECT_MARGIN), at(1.0 - n_high / n - SELECT_MARGIN)
    m_lo, m_hi = at(min(med) / n - MEDIAN_MARGIN), at(max(med) / n + MEDIAN_MARGIN)
    if not (t_lo < m_lo and m_hi < t_hi):
        return None
    # one marking pass in cache-sized blocks: values ≤ t_lo, ≥ t_hi or in [m_lo, m_hi]
    size = min(n, SELECT_BLOCK)
    mark, tmp = np.empty(size, dtype=bool), np.empty(size, dtype=bool)
    parts, below = [], 0
    for s in range(0, n, size):
        v = y[s:s + size]
        mk, tm = mark[:v.size], tmp[:v.size]
        np.greater_equal(v, m_lo, out=mk)
        below += v.size - int(np.count_nonzero(mk))
        np.less_equal(v, m_hi, out=tm)
        mk &= tm
        np.less_equal(v, t_lo, out=tm)
        mk |= tm
        np.greater_equal(v, t_hi, out=tm)
        mk |= tm
        parts.append(v[np.flatnonzero(mk)])
    # sorted once, the marked values split at the thresholds (no masks over them again)
    c = np.concatenate(parts)
    c.sort()
    i_lo, i_hi = int(np.searchsorted(c, t_lo, "right")), int(np.searchsorted(c, t_hi, "left"))
    b_lo, b_hi = int(np.searchsorted(c, m_lo, "left")), int(np.searchsorted(c, m_hi, "right"))
    if i_lo < n_low or c.size - i_hi < n_high:
        return None
    r = [i - below for i in med]
    if min(r) < 0 or max(r) >= b_hi - b_lo:
        return None
    return c[:i_lo], c[i_hi:], c[b_lo:b_hi][r]


#: probability in each open end of the pilot that gets equal-probability bins (see BinLayout)
TAIL_PROBABILITY = 1e-4


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
    def from_pilot(cls, pilot: np.ndarray, bins: int = 100_000, *, is_sorted: bool = False) -> "BinLayout":
        ps = np.asarray(pilot, dtype=float)
        if not is_sorted:
            ps = np.sort(ps, axis=0)
        n, m = ps.shape
        bins = int(max(16, bins))
        a = min(0.05, max(TAIL_PROBABILITY, 20.0 / max(n, 1)))
        n_tail = int(min(1000, bins // 10, max(1, round(a * n))))
        k = bins - 2 * n_tail
        lo_q = quantile_sorted(ps, np.linspace(0.0, a, n_tail + 1))          # (n_tail+1, M)
        hi_q = quantile_sorted(ps, np.linspace(1.0 - a, 1.0, n_tail + 1))
        lo_q[0], hi_q[-1] = ps[0], ps[-1]
        c_lo, c_hi = lo_q[-1], hi_q[0]
        scale = np.maximum(np.maximum(np.abs(ps[0]), np.abs(ps[-1])), 1e-300)
        tiny = np.maximum(ps[-1] - ps[0], scale * 1e-9) * 1e-12
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
        """
        n, m = Y.shape
        nc = self.n_counts
        t = np.ascontiguousarray(Y.T) - self.lo[:, None]    # (M, n): one output per row
        t *= self.inv_width[:, None]
        np.clip(t, -1.0, float(self.k), out=t)
        flat = np.empty(m * n, dtype=np.int64) if out is None else out
        idx = flat.reshape(m, n)
        # truncation = floor for t >= 0; values with t < 0 are outside and re-binned below.
        # int64: what bincount takes without a conversion
        np.copyto(idx, t, casting="unsafe")
        idx += (self.first + 1 + np.arange(m, dtype=np.int64) * nc)[:, None]
        outside = np.flatnonzero((t < 0) | (t >= self.k))    # the rare values outside [c_lo, c_hi)
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
        self._counts = np.asarray(value, dtype=np.int64)

    def _knots(self, j: int) -> tuple[np.ndarray, np.ndarray]:
        e = self.edges[j]
        lo = min(self.min[j], e[0])
        hi = max(self.max[j], e[-1])
        x = np.concatenate([[lo], e, [hi]])
        c = np.concatenate([[0], np.cumsum(self.counts[j])]).astype(float) / max(self.n, 1)
        return x, c

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

"""Exact order statistics of Monte Carlo values: coverage intervals and quantiles (JCGM 101 §7.7).

:func:`intervals_from_sorted` and :func:`quantile_sorted` work on sorted values;
:class:`OrderStatistics` finds the order statistics the intervals need without sorting every
value (thresholds from a pilot sample, one marking pass, one sort of the gathered values).
"""

from __future__ import annotations

import functools
import math

import numpy as np

__all__ = ["q_count", "intervals_from_sorted", "intervals_from_tails", "quantile_sorted", "hazen_ranks",
           "OrderStatistics", "pilot_positions", "select_row", "SELECT_MIN", "SELECT_PILOT", "SELECT_MARGIN", "MEDIAN_MARGIN",
           "SELECT_BLOCK"]


def q_count(p: float, m: int) -> int:
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
        With q from :func:`q_count` and 1-based order statistics y_(r):
        symmetric = [y_(r), y_(r+q)] with r = (N − q)/2 if integer, else ⌊(N − q + 1)/2⌋
        (§7.7.1); shortest = [y_(r*), y_(r*+q)] with r* minimising y_(r+q) − y_(r),
        r = 1 … N − q (§7.7.2). When q ≥ N the full range is returned.
    """
    n, m = ys.shape
    q = q_count(p, n)
    if q >= n:
        full = np.stack([ys[0], ys[-1]], axis=1)
        return full, full.copy()
    return intervals_from_tails(ys[: n - q], ys[q:], n, q)


def intervals_from_tails(low: np.ndarray, high: np.ndarray, n: int, q: int) -> tuple[np.ndarray, np.ndarray]:
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


def quantile_sorted(ys: np.ndarray, p, *, n: int | None = None, first: int = 0) -> np.ndarray:
    """p-quantile(s) of sorted values ys (N, M) from the JCGM 101 §7.5.2 distribution function.

    G(y_(r)) = (r − ½)/N with linear interpolation in between; outside [½/N, 1 − ½/N]
    the extreme values are returned (numpy's ``method="hazen"``). The values are already
    sorted, so the quantile is read off directly (no partition). Returns shape (M,) for
    scalar p, else (len(p), M). With ``n``, ys holds only the 0-based ranks first …
    first + len(ys) − 1 of n sorted values (e.g. one tail), which must include the ranks p needs.
    """
    i0, i1, frac = hazen_ranks(ys.shape[0] if n is None else n, p)
    i0, i1 = i0 - first, i1 - first
    out = ys[i0] + (ys[i1] - ys[i0]) * frac
    return out[0] if np.ndim(p) == 0 else out


def hazen_ranks(n: int, p) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
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
        self.q = q_count(p, self.n)
        self.a = self.n - self.q
        self._middle: dict[int, np.ndarray] = {}
        self._low = self._high = None        # (M, a), (M, N − q), sorted; None: read them from rows
        if self.q >= self.n or self.a >= self.q or self.n < 256:
            rows.sort(axis=1)
            self.a = self.q = self.n
            self._layout = "sorted"
            return
        i0, i1, _ = hazen_ranks(self.n, 0.5)          # the median's ranks are placed too
        med = sorted({int(i0[0]), int(i1[0])})
        if self.n >= SELECT_MIN:
            self._layout = "selected"
            lows, highs = [], []
            mid = np.empty((len(med), self.m))
            for j in range(self.m):
                got = select_row(rows[j], self.a, self.n - self.q, med)
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
        i0, i1, frac = hazen_ranks(self.n, p)
        lo, hi = self.at(i0), self.at(i1)
        out = lo + (hi - lo) * frac
        return out[0] if np.ndim(p) == 0 else out

    def intervals(self, p: float) -> tuple[np.ndarray, np.ndarray]:
        """As :func:`intervals_from_sorted` of the fully sorted values. For another p than the
        one given at construction the rows are sorted in full first."""
        q = q_count(p, self.n)
        if self._layout == "sorted" or q != self.q:
            if self._layout != "sorted":
                self.rows.sort(axis=1)
                self.a = self.q = self.n
                self._low = self._high = None
                self._middle = {}
                self._layout = "sorted"
            return intervals_from_sorted(self.rows.T, p)
        return intervals_from_tails(self.low.T, self.high.T, self.n, q)

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


def select_row(y: np.ndarray, n_low: int, n_high: int, med: list[int]):
    """(lowest values sorted, highest values sorted, values at the ranks ``med``) of one row by
    pilot thresholds (see :class:`OrderStatistics`), or None when the pilot missed. The tails
    hold at least ``n_low`` and ``n_high`` values: all those at or beyond the thresholds.
    With ``med`` empty only the tails are found."""
    n = y.size
    at = _pilot_quantile(y)

    t_lo, t_hi = at(n_low / n + SELECT_MARGIN), at(1.0 - n_high / n - SELECT_MARGIN)
    if med:
        m_lo, m_hi = at(min(med) / n - MEDIAN_MARGIN), at(max(med) / n + MEDIAN_MARGIN)
        if not (t_lo < m_lo and m_hi < t_hi):
            return None
    else:                                   # an empty band: nothing is marked in it
        m_lo, m_hi = np.inf, -np.inf
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
    if r and (min(r) < 0 or max(r) >= b_hi - b_lo):
        return None
    return c[:i_lo], c[i_hi:], c[b_lo:b_hi][r]

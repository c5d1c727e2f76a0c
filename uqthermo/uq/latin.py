"""Latin-hypercube designs drawn straight as normal scores and uniforms.

A Latin-hypercube design of m points (McKay, Beckman & Conover 1979, Technometrics 21(2)
239-245; the random-within-stratum form, as ``scipy.stats.qmc.LatinHypercube(scramble=True)``)
puts exactly one point of every column in each stratum [k/m, (k+1)/m):

    u_ij = (π_j(i) + v_ij) / m,    v_ij ~ U[0, 1),  π_j an independent uniform random permutation.

The Monte Carlo engine needs the normal scores z_ij = Φ⁻¹(u_ij) of its normal inputs. Drawing
u and mapping it through ``scipy.special.ndtri`` costs a random permutation per value plus
Φ⁻¹ per value (about four times a ziggurat normal variate). Here a column is built in stratum
order instead — the value of stratum k is Φ⁻¹((k + v_k)/m) — and then shuffled in place
(numpy's ``Generator.shuffle``, Fisher-Yates), which is the same design: a uniformly random
permutation applied to the stratum values. Built in stratum order, Φ⁻¹ is one cubic per
value from a table shared by all columns of the design:

    z = t_k + s Δ_k + s (1 − s) (a_k + s c_k),   s = v_k  (evaluated in Horner's form),

the cubic Hermite interpolant of Φ⁻¹ on [k/m, (k+1)/m] (values t_k = Φ⁻¹(k/m), slopes
h/φ(t_k), h = 1/m; Δ_k = t_{k+1} − t_k, a_k = h/φ(t_k) − Δ_k, b_k = h/φ(t_{k+1}) − Δ_k,
c_k = −(a_k + b_k)). Its error is at most h⁴ max|f⁗|/384 on the stratum (f = Φ⁻¹,
f⁗ = z (7 + 6z²)/φ(z)⁴; e.g. Burden & Faires, *Numerical Analysis*, §3.4), so the cubic is
used only on the central strata where that bound is below 2⁻⁵⁴ |z| (a few ulp with the
rounding of the evaluation); the outer strata are computed with ``ndtri`` — the upper ones as
−Φ⁻¹((m − 1 − k + 1 − v)/m), which keeps the full relative precision of the upper tail that
Φ⁻¹(u) loses where u rounds near 1. Checked against ``ndtri`` over every stratum in
``tests/test_latin.py``.

:class:`LatinScoreStream` has the interface of :class:`~uqthermo.uq.sampling.ScoreStream`:
rows (z, v) with one generator per column label, so a column's numbers do not depend on which
other columns are drawn. A ``draw(n)`` (or ``chunks(n, size)``) of n points is one design made
of ⌈n/2¹⁸⌉ equal blocks (each a Latin hypercube of its own, column c of block b seeded from
``SFC64(SeedSequence(seed, spawn_key=(position, b, c)))``), so memory stays bounded and chunked
iteration is chunk-size independent. :func:`latin_uniform_blocks` gives the same design as
uniforms for :class:`~uqthermo.uq.sampling.UniformStream`.
"""

from __future__ import annotations

import functools
from collections.abc import Iterator, Sequence

import numpy as np
from scipy import special

from ..errors import StatisticsError
from .inputs import U_CLIP
from .streams import ColumnStreams, column_generator

__all__ = ["LatinScoreStream", "latin_uniform_blocks", "stratum_scores", "LHS_BLOCK", "block_sizes", "stratified_scores",
           "NET_MIN"]

#: largest number of points in one Latin-hypercube block
LHS_BLOCK = 2**18
#: strata evaluated per pass (a slice of the table stays in cache across the columns)
_PASS = 32768
#: largest uniform of a design (the engine's clip of uniforms, ``inputs.U_CLIP``, below 1)
U_MAX = 1.0 - U_CLIP
#: the cubic is used where its error bound is at most this fraction of |z|
_REL_TOL = 2.0**-54


def block_sizes(n: int) -> list[int]:
    """Sizes of the ⌈n/2¹⁸⌉ equal blocks (differing by at most one) of an n-point design."""
    nb = max(1, -(-n // LHS_BLOCK))
    return [n // nb + (1 if b < n % nb else 0) for b in range(nb)]


@functools.lru_cache(maxsize=4)
def _table(m: int) -> tuple[int, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(K0, t, e1, e2, e3) for the strata K0 … m − K0 − 1 of an m-point design: the cubic of the
    module docstring in Horner's form z = t + s (e1 + s (e2 + s e3)), e1 = Δ + a,
    e2 = −2a − b, e3 = a + b.

    t_k = Φ⁻¹(k/m) from ``ndtri`` on the lower half and mirrored (t_{m−k} = −t_k), so the
    table is exactly antisymmetric. K0 is the first stratum k ≥ 1 of the lower half whose cubic
    error bound relative to |z|, h⁴ (7 + 6 t_k²) φ(t_k)⁻⁴ / 384 (f⁗/z at the stratum's outer
    end, where it is largest), is at most 2⁻⁵⁴; when no stratum qualifies, K0 = ⌈m/2⌉ and
    every stratum is computed with ``ndtri``.
    """
    half = m // 2
    k = np.arange(1, half + 1, dtype=float)
    tl = special.ndtri(k / m)                       # t_1 … t_half (t_half = 0 for even m)
    slope = np.sqrt(2.0 * np.pi) * np.exp(0.5 * tl * tl)     # dΦ⁻¹/dp = 1/φ(t)
    h = 1.0 / m
    rel = h**4 * (7.0 + 6.0 * tl * tl) * slope**4 / 384.0
    ok = np.flatnonzero(rel <= _REL_TOL)
    k0 = int(ok[0]) + 1 if len(ok) else half
    if k0 >= half:                                  # no stratum for the cubic: all exact
        return (m + 1) // 2, *(np.empty(0),) * 4
    t = np.empty(m + 1)                             # t_j, j = 0 … m (t_0, t_m never used: k0 ≥ 1)
    d = np.empty(m + 1)                             # slopes 1/φ(t_j)
    t[1:half + 1], d[1:half + 1] = tl, slope
    t[m - half:m][::-1] = -tl                       # t_{m−j} = −t_j, j = 1 … half
    d[m - half:m][::-1] = slope
    t[0], t[m], d[0], d[m] = -np.inf, np.inf, np.inf, np.inf
    lo, hi = k0, m - k0
    tk, tk1 = t[lo:hi], t[lo + 1:hi + 1]
    delta = tk1 - tk
    a = h * d[lo:hi] - delta
    b = h * d[lo + 1:hi + 1] - delta
    # z = t + s Δ + s(1 − s)(a − s(a + b)) = t + s(e1 + s(e2 + s e3)), Horner's form
    return k0, tk.copy(), delta + a, -2.0 * a - b, a + b


def stratum_scores(v: np.ndarray, m: int, start: int = 0) -> np.ndarray:
    """Φ⁻¹((k + v_k)/m) for the strata k = start … start + len(v) − 1 of an m-point design,
    in place of ``v`` (a float64 array), and returned."""
    k0, t, e1, e2, e3 = _table(m)
    end = start + len(v)
    lo_end = min(end, k0)
    if start < lo_end:                              # lower tail: Φ⁻¹((k + v)/m)
        seg = v[:lo_end - start]
        seg += np.arange(start, lo_end, dtype=float)
        seg /= m
        np.maximum(seg, U_CLIP, out=seg)             # v = 0 in stratum 0: Φ⁻¹(2⁻⁵³), not −∞
        special.ndtri(seg, out=seg)
    hi_start = max(start, m - k0, k0)
    if hi_start < end:                              # upper tail: −Φ⁻¹((m − 1 − k + 1 − v)/m)
        seg = v[hi_start - start:]
        np.subtract(1.0, seg, out=seg)
        seg += np.arange(m - 1 - hi_start, m - 1 - end, -1, dtype=float)
        seg /= m
        special.ndtri(seg, out=seg)
        np.negative(seg, out=seg)
    a0, a1 = max(start, k0), min(end, m - k0)
    if a0 < a1:                                     # the cubic on the central strata
        s = v[a0 - start:a1 - start]
        i, j = a0 - k0, a1 - k0
        w = np.multiply(s, e3[i:j])
        w += e2[i:j]
        w *= s
        w += e1[i:j]
        w *= s
        np.add(w, t[i:j], out=s)
    return v


#: smallest power-of-two column that :func:`stratified_scores` maps through the stratum table
#: (below about 10⁴ strata the cubic's error bound holds nowhere and every stratum is exact)
NET_MIN = 2**14


def stratified_scores(u: np.ndarray, out: np.ndarray) -> bool:
    """z = Φ⁻¹(u) into ``out`` for a column of m = 2^k uniforms with exactly one value in each
    stratum [j/m, (j + 1)/m), as :func:`stratum_scores` computes it; False (``out`` untouched)
    when m is not a power of two of at least :data:`NET_MIN` or the column is not so stratified.

    The one-value-per-stratum property holds for every coordinate of 2^k consecutive points of
    a scrambled Sobol' sequence that start at a multiple of 2^k: each coordinate of a digital
    (t, s)-sequence in base 2 is a (0, 1)-sequence, and those blocks are (0, k, 1)-nets, which
    Owen's and Matoušek's scrambles preserve (Dick & Pillichshammer 2010, *Digital Nets and
    Sequences*, ch. 4 and 13). With k_i = ⌊m u_i⌋ and s_i = m u_i − k_i (exact: m is a power of
    two), the offsets are scattered into stratum order, mapped there, and gathered back.
    """
    m = u.shape[0]
    if m < NET_MIN or m & (m - 1):
        return False
    x = u * float(m)
    k = x.astype(np.intp)
    if k.min() < 0 or k.max() >= m:                # u outside [0, 1) (or NaN): not a column of uniforms
        return False
    x -= k
    s = np.full(m, np.nan)
    s[k] = x
    if not np.isfinite(np.add.reduce(s)):          # a stratum without a value (NaN): not stratified
        return False
    for a in range(0, m, _PASS):
        stratum_scores(s[a:a + _PASS], m, a)
    np.take(s, k, out=out)
    return True


def _generators(seed: int, position: int, block: int, labels: Sequence[int]) -> list[np.random.Generator]:
    return [column_generator(seed, (position, block, c)) for c in labels]


def _fill_column(col: np.ndarray, gen: np.random.Generator, scores: bool) -> None:
    """One column of an m-point block in place: values in stratum order, then shuffled."""
    m = col.shape[0]
    gen.random(out=col)
    for a in range(0, m, _PASS):
        b = min(m, a + _PASS)
        if scores:
            stratum_scores(col[a:b], m, a)
        else:
            seg = col[a:b]
            seg += np.arange(a, b, dtype=float)
            seg *= 1.0 / m
            np.minimum(seg, U_MAX, out=seg)         # k + v rounds to m for v → 1 in the top stratum
    gen.shuffle(col)


def _check(n, skip) -> tuple[int, int]:
    if int(skip) != skip or skip < 0:
        raise StatisticsError(f"skip must be a non-negative integer, got {skip!r}")
    if int(n) != n or n < 0:
        raise StatisticsError(f"number of samples must be a non-negative integer, got {n!r}")
    return int(n), int(skip)


def latin_uniform_blocks(n: int, d: int, seed: int, position: int) -> Iterator[np.ndarray]:
    """The uniforms u (m, d) of each block of the n-point design that starts at ``position``
    (columns labelled 0 … d − 1; C-ordered rows)."""
    n, position = _check(n, position)
    if n == 0:
        return
    for b, m in enumerate(block_sizes(n)):
        U = np.empty((d, m))
        for col, gen in zip(U, _generators(seed, position, b, range(d))):
            _fill_column(col, gen, scores=False)
        yield U.T.copy()


class LatinScoreStream(ColumnStreams):
    """Latin-hypercube rows (z, v): normal scores and uniforms, one design per ``draw``/``chunks`` call.

    Parameters
    ----------
    normal, uniform : sequences of int
        Column labels of the normal scores and of the uniforms (distinct, non-negative).
    seed : int
    skip : int
        Position in the stream; different positions give independent designs.
    """

    def _blocks(self, n: int) -> Iterator[tuple[np.ndarray, np.ndarray]]:
        start = self.position
        self.position += n
        if n == 0:
            return
        for b, m in enumerate(block_sizes(n)):
            Z = np.empty((m, self.k), order="F")
            V = np.empty((m, self.m), order="F")
            gens = _generators(self.seed, start, b, self.normal + self.uniform)
            for i, g in enumerate(gens[:self.k]):
                _fill_column(Z[:, i], g, scores=True)
            for i, g in enumerate(gens[self.k:]):
                _fill_column(V[:, i], g, scores=False)
            yield Z, V

    def draw(self, n: int) -> tuple[np.ndarray, np.ndarray]:
        """One design of ``n`` points as (Z (n, k), V (n, m)), column-major."""
        n, _ = _check(n, 0)
        parts = list(self._blocks(n))
        if len(parts) == 1:
            return parts[0]
        if not parts:
            return np.empty((0, self.k), order="F"), np.empty((0, self.m), order="F")
        return (np.asfortranarray(np.concatenate([p[0] for p in parts])),
                np.asfortranarray(np.concatenate([p[1] for p in parts])))

    def chunks(self, n: int, chunk_size: int) -> Iterator[tuple[np.ndarray, np.ndarray]]:
        """One design of ``n`` points in consecutive pieces of at most ``chunk_size`` rows (views
        of a block, valid until the next piece; a block's last piece may be shorter); their
        concatenation equals ``draw(n)``."""
        n, _ = _check(n, 0)
        if int(chunk_size) <= 0:
            raise StatisticsError(f"chunk size must be positive, got {chunk_size}")
        chunk_size = int(chunk_size)
        for Z, V in self._blocks(n):
            for a in range(0, Z.shape[0], chunk_size):
                yield Z[a:a + chunk_size], V[a:a + chunk_size]

"""Uniform sample generators on the unit hypercube: pseudo-random, Latin hypercube, scrambled Sobol'.

All generators are seeded and deterministic: the same ``(method, seed, skip)`` gives
bit-identical numbers, and drawing a sample in chunks gives exactly the same rows as
drawing it at once, whatever the chunk size.

* ``"random"`` -- numpy ``Generator(PCG64(seed))``; rows are drawn sequentially, one
  64-bit output per number, so ``skip`` rows are jumped with ``PCG64.advance(skip·d)``
  (O'Neill 2014, PCG; numpy docs). Values in [0, 1) at 2⁻⁵³ resolution.
* ``"sobol"`` -- ``scipy.stats.qmc.Sobol`` with Owen-type (LMS + digital shift)
  scrambling seeded by ``seed`` (Sobol' 1967; Joe & Kuo 2008 direction numbers; Owen 1995);
  ``skip`` uses ``fast_forward``. The 30-bit points k·2⁻³⁰ are shifted by half a cell
  (+2⁻³¹) so that no value is exactly 0; at most 2³⁰ points per sequence.
* ``"latin-hypercube"`` -- random-within-stratum Latin hypercube (McKay, Beckman & Conover
  1979; the design of ``scipy.stats.qmc.LatinHypercube(scramble=True)``), built by
  :mod:`uqthermo.uq.latin`. A design is stratified over the points drawn *together*: one call of
  :func:`uniform_sample` (or one ``draw`` of a :class:`UniformStream`) of n points is one
  design, built from ⌈n/2¹⁸⌉ equal blocks of at most 2¹⁸ points (each block an LHS of its
  own, column c seeded from ``(seed, skip, block, c)``) so that memory stays bounded; chunked
  iteration slices these blocks and is therefore chunk-size independent too.
  Different ``skip`` values give independent designs.

:class:`ScoreStream` is the pseudo-random stream of the Monte Carlo engine: it draws standard
normal scores directly with ``Generator.standard_normal`` (numpy's ziggurat) instead of
uniforms through Φ⁻¹, and uniforms for the inputs that are not driven by a normal score. Its
rows come in blocks of :data:`SCORE_BLOCK` rows, each column of a block with its own seeded
generator, so that any row range can be drawn on its own (``skip``), chunked draws equal one
draw, and a column's numbers do not depend on the other columns.
"""

from __future__ import annotations

import warnings
from collections.abc import Iterator

import numpy as np
from scipy.stats import qmc

from ..errors import StatisticsError
from .latin import LHS_BLOCK, latin_uniform_blocks
from .streams import BlockSeeds, ColumnStreams, check_seed, column_generator, seeded_generators

__all__ = ["METHODS", "UniformStream", "ScoreStream", "uniform_sample", "iter_uniform_chunks", "LHS_BLOCK",
           "SCORE_BLOCK", "sampling_method"]

METHODS = ("random", "latin-hypercube", "sobol")
SOBOL_BITS = 30
SOBOL_MAX = 2**SOBOL_BITS
#: rows per block of :class:`ScoreStream` (each block has its own generators)
SCORE_BLOCK = 2**16

_ALIASES = {"lhs": "latin-hypercube", "latin_hypercube": "latin-hypercube", "pseudo-random": "random",
            "qmc": "sobol", "sobol'": "sobol"}


def sampling_method(method: str) -> str:
    """The method of :data:`METHODS` a name stands for (case-insensitive; ``"lhs"``, ``"qmc"`` and
    the other aliases accepted), or :class:`~uqthermo.errors.StatisticsError` for an unknown one."""
    m = _ALIASES.get(str(method).lower(), str(method).lower())
    if m not in METHODS:
        raise StatisticsError(f"unknown sampling method {method!r} (choose random, latin-hypercube or sobol)")
    return m


class UniformStream:
    """A reproducible stream of uniform points in [0, 1)^d.

    Parameters
    ----------
    d : int
        Dimension (number of input variables).
    method : {"random", "latin-hypercube", "sobol"}
    seed : int
        Non-negative seed.
    skip : int
        Number of points (rows) to skip at the start of the stream.

    ``draw(n)`` returns the next n rows. For random and Sobol' sampling consecutive draws
    continue one sequence (drawing 10 + 20 rows equals drawing 30). For Latin hypercube
    each ``draw`` is a new stratified design of n points (seeded from the stream position).
    """

    def __init__(self, d: int, method: str = "sobol", seed: int = 0, skip: int = 0):
        if int(d) != d or d < 0:
            raise StatisticsError(f"dimension must be a non-negative integer, got {d!r}")
        if int(skip) != skip or skip < 0:
            raise StatisticsError(f"skip must be a non-negative integer, got {skip!r}")
        self.d = int(d)
        self.method = sampling_method(method)
        self.seed = check_seed(seed)
        self.position = int(skip)
        self._engine = None
        if self.d == 0:
            return
        if self.method == "random":
            bg = np.random.PCG64(self.seed)
            if self.position:
                bg.advance(self.position * self.d)
            self._engine = np.random.Generator(bg)
        elif self.method == "sobol":
            if self.d > 21201:
                raise StatisticsError(f"Sobol' sampling supports at most 21201 dimensions, got {self.d}")
            self._engine = qmc.Sobol(self.d, scramble=True, bits=SOBOL_BITS,
                                     rng=np.random.Generator(np.random.PCG64(self.seed)))
            if self.position:
                self._check_sobol(0)
                self._engine.fast_forward(self.position)

    def _check_sobol(self, n: int) -> None:
        if self.position + n > SOBOL_MAX:
            raise StatisticsError(f"Sobol' sampling supports at most 2^{SOBOL_BITS} points; "
                                  "use sampling = \"random\" for more")

    def draw(self, n: int) -> np.ndarray:
        """The next ``n`` rows, shape (n, d)."""
        if int(n) != n or n < 0:
            raise StatisticsError(f"number of samples must be a non-negative integer, got {n!r}")
        n = int(n)
        if self.d == 0 or n == 0:
            self.position += n
            return np.empty((n, self.d))
        if self.method == "random":
            out = self._engine.random((n, self.d))
        elif self.method == "sobol":
            self._check_sobol(n)
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # balance-property warning for n not a power of 2
                out = self._engine.random(n)
            out += 2.0 ** -(SOBOL_BITS + 1)
        else:
            out = np.concatenate(list(latin_uniform_blocks(n, self.d, self.seed, self.position)), axis=0)
        self.position += n
        return out

    def chunks(self, n: int, chunk_size: int) -> Iterator[np.ndarray]:
        """Draw ``n`` rows as consecutive chunks of at most ``chunk_size`` rows.

        The concatenated chunks equal ``draw(n)`` for every method (for Latin hypercube
        the n points form one design, whatever the chunk size).
        """
        n, chunk_size = int(n), int(chunk_size)
        if chunk_size <= 0:
            raise StatisticsError(f"chunk size must be positive, got {chunk_size}")
        if self.method != "latin-hypercube" or self.d == 0:
            done = 0
            while done < n:
                m = min(chunk_size, n - done)
                yield self.draw(m)
                done += m
            return
        start = self.position
        self.position += n
        buf: list[np.ndarray] = []
        have = 0
        for block in latin_uniform_blocks(n, self.d, self.seed, start):
            buf.append(block)
            have += len(block)
            while have >= chunk_size:
                allb = np.concatenate(buf, axis=0) if len(buf) > 1 else buf[0]
                yield allb[:chunk_size]
                rest = allb[chunk_size:]
                buf, have = ([rest] if len(rest) else []), len(rest)
        if have:
            yield np.concatenate(buf, axis=0) if len(buf) > 1 else buf[0]


def uniform_sample(n: int, d: int, method: str = "sobol", seed: int = 0, skip: int = 0) -> np.ndarray:
    """Uniform sample U[n, d] on [0, 1)^d.

    Parameters
    ----------
    n, d : int
        Number of points and dimension.
    method : {"sobol", "random", "latin-hypercube"}
        See the module docstring.
    seed : int
        Non-negative seed (record it: the same seed gives bit-identical samples).
    skip : int
        Rows to skip (random, Sobol': continue the sequence; Latin hypercube: selects an
        independent design).
    """
    return UniformStream(d, method, seed, skip).draw(n)


def iter_uniform_chunks(n: int, d: int, method: str = "sobol", seed: int = 0, chunk_size: int = 65536,
                        skip: int = 0) -> Iterator[np.ndarray]:
    """Yield ``uniform_sample(n, d, method, seed, skip)`` in consecutive chunks of ≤ ``chunk_size`` rows.

    The concatenation is bit-identical to the single draw for every method and chunk size.
    """
    yield from UniformStream(d, method, seed, skip).chunks(n, chunk_size)


class ScoreStream(ColumnStreams):
    """A reproducible pseudo-random stream of rows (z, v): standard normal scores and uniforms.

    Parameters
    ----------
    normal, uniform : sequences of int
        Column labels (e.g. input column indices) of the normal scores and of the uniforms;
        every label has its own generators, so a column's numbers do not depend on which
        other columns are drawn (common random numbers across runs that differ in them).
    seed : int
        Non-negative seed.
    skip : int
        Rows to skip at the start of the stream.

    The rows are grouped in blocks of :data:`SCORE_BLOCK`. In block b, column label c draws
    its values one after the other from ``SFC64(SeedSequence(seed, spawn_key=(b, c)))``
    (:func:`~uqthermo.uq.streams.column_generator`; the states are computed 64 blocks at a
    time by :class:`~uqthermo.uq.streams.BlockSeeds`, bit for bit the same):
    normal scores with ``Generator.standard_normal`` (numpy's ziggurat method, Marsaglia &
    Tsang 2000, J. Stat. Softw. 5(8)), uniforms with ``Generator.random`` ([0, 1) at 2⁻⁵³
    resolution) — independent streams in the sense of numpy's ``SeedSequence.spawn``. A row
    range that starts inside a block is reached by drawing and discarding that block's
    earlier rows (a ziggurat draw consumes a variable number of 64-bit outputs, and SFC64
    has no jump-ahead). ``draw(10)`` then ``draw(20)`` equals ``draw(30)``.
    """

    def __init__(self, normal, uniform=(), seed: int = 0, skip: int = 0):
        super().__init__(normal, uniform, seed, skip)
        self._block = -1
        self._gens: list = []
        self._seeds = BlockSeeds(self.seed, self.normal + self.uniform)

    def _open(self, block: int) -> None:
        """Generators of ``block``, advanced to the current position."""
        states = self._seeds.states(block)
        if states is None:
            self._gens = [column_generator(self.seed, (block, c)) for c in self.normal + self.uniform]
        else:                                     # the same streams, seeded in a vectorised pass
            self._gens = seeded_generators(states, reuse=self._gens)
        self._block = block
        lead = self.position - block * SCORE_BLOCK
        if lead:                                  # SFC64 has no jump-ahead: draw and discard
            waste = np.empty(min(lead, SCORE_BLOCK))
            for i, g in enumerate(self._gens):
                if i < self.k:
                    g.standard_normal(out=waste[:lead])
                else:
                    g.random(out=waste[:lead])

    def draw(self, n: int, out: tuple[np.ndarray, np.ndarray] | None = None) -> tuple[np.ndarray, np.ndarray]:
        """The next ``n`` rows as (Z (n, k), V (n, m)), column-major; ``out``: such arrays to fill instead."""
        if int(n) != n or n < 0:
            raise StatisticsError(f"number of samples must be a non-negative integer, got {n!r}")
        n = int(n)
        Z, V = out if out is not None else (np.empty((n, self.k), order="F"), np.empty((n, self.m), order="F"))
        done = 0
        while done < n:
            block = self.position // SCORE_BLOCK
            if block != self._block:
                self._open(block)
            t = min(n - done, (block + 1) * SCORE_BLOCK - self.position)
            for i, g in enumerate(self._gens[:self.k]):
                g.standard_normal(out=Z[done:done + t, i])
            for i, g in enumerate(self._gens[self.k:]):
                g.random(out=V[done:done + t, i])
            done += t
            self.position += t
        return Z, V

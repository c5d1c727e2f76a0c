"""What the seeded random streams of the sampling designs share: seeds, per-column generators, labels.

The pseudo-random (:class:`~uqthermo.uq.sampling.ScoreStream`) and Latin-hypercube
(:class:`~uqthermo.uq.latin.LatinScoreStream`) streams both give rows (z, v) of normal scores and
uniforms, one generator per labelled column and block, so that a column's numbers do not depend on
which other columns are drawn (common random numbers across runs that differ in them).
"""

from __future__ import annotations

import numpy as np

from ..errors import StatisticsError

__all__ = ["check_seed", "column_generator", "sfc64_seed_states", "seeded_generators", "BlockSeeds", "ColumnStreams"]


def check_seed(seed) -> int:
    """``seed`` as a non-negative int, or :class:`~uqthermo.errors.StatisticsError`."""
    if seed is None:
        raise StatisticsError("a seed is required for reproducible sampling")
    try:
        s = int(seed)
    except (TypeError, ValueError):
        raise StatisticsError(f"seed must be a non-negative integer, got {seed!r}") from None
    if s < 0 or s != seed:
        raise StatisticsError(f"seed must be a non-negative integer, got {seed!r}")
    return s


# numpy.random.SeedSequence's hash constants (O'Neill's seed_seq_fe, as numpy implements it)
_INIT_A, _MULT_A, _INIT_B, _MULT_B = 0x43B0D7E5, 0x931E8875, 0x8B51F9DD, 0x58F38DED
_MIX_L, _MIX_R = 0xCA01F9DD, 0x4973F715
_M32 = 0xFFFFFFFF
_POOL = 4


def _words(x: int) -> list[int]:
    """An int as numpy's SeedSequence reads it: 32-bit words, least significant first ([0] for 0)."""
    out = [x & _M32]
    x >>= 32
    while x:
        out.append(x & _M32)
        x >>= 32
    return out


def sfc64_seed_states(seed: int, keys) -> np.ndarray:
    """The SFC64 states (K, 4) uint64 of ``SFC64(SeedSequence(seed, spawn_key=key))`` for K keys
    of equal length whose entries are below 2³², in one vectorised pass.

    Equal, bit for bit, to what numpy computes one generator at a time (checked in
    ``tests/test_streams.py``): the entropy pool of SeedSequence (the seed's words padded to the
    pool size of 4, then the spawn key's words, each hashed in and mixed into every pool word),
    three 64-bit words drawn from the pool (``generate_state(3, uint64)``), the SFC64 state
    (a, b, c, counter 1) and the twelve stirring steps of numpy's ``sfc64_set_seed``. Creating a
    SeedSequence and its generator cost about 30 µs; one pass for 64 blocks of 7 columns about
    2 µs per generator.
    """
    keys = np.asarray(keys, dtype=np.uint64)
    if keys.ndim != 2 or (keys.size and int(keys.max()) > _M32):
        raise ValueError("keys must be a (K, L) array of integers below 2**32")
    hc = _INIT_A

    def hashmix(v):                     # on Python ints (shared words) or uint32 arrays (key words)
        nonlocal hc
        v = v ^ hc
        hc = (hc * _MULT_A) & _M32
        v = (v * hc) & _M32 if isinstance(v, int) else v * np.uint32(hc)
        return v ^ (v >> 16)

    def mix(x, y):
        r = ((_MIX_L * x - _MIX_R * y) & _M32) if isinstance(x, int) else x * np.uint32(_MIX_L) - y * np.uint32(_MIX_R)
        return r ^ (r >> 16)

    run = _words(int(seed))
    entropy = run + [0] * (_POOL - len(run)) if keys.shape[1] else run
    mixer = [hashmix(entropy[i] if i < len(entropy) else 0) for i in range(_POOL)]
    for i_src in range(_POOL):
        for i_dst in range(_POOL):
            if i_src != i_dst:
                mixer[i_dst] = mix(mixer[i_dst], hashmix(mixer[i_src]))
    for w in entropy[_POOL:]:
        for i_dst in range(_POOL):
            mixer[i_dst] = mix(mixer[i_dst], hashmix(w))
    k = keys.shape[0]
    pool = [np.full(k, m, dtype=np.uint32) for m in mixer]
    with np.errstate(over="ignore"):
        for j in range(keys.shape[1]):
            w = keys[:, j].astype(np.uint32)
            for i_dst in range(_POOL):
                pool[i_dst] = mix(pool[i_dst], hashmix(w))
        words, hb = [], _INIT_B
        for i in range(6):                  # generate_state(3, uint64): six 32-bit words from the pool
            v = pool[i % _POOL] ^ np.uint32(hb)
            hb = (hb * _MULT_B) & _M32
            v = v * np.uint32(hb)
            words.append((v ^ (v >> np.uint32(16))).astype(np.uint64))
        a, b, c = (words[2 * i] | (words[2 * i + 1] << np.uint64(32)) for i in range(3))
        w = np.ones(k, dtype=np.uint64)
        for _ in range(12):                 # sfc64_set_seed: stir the state twelve times
            tmp = a + b + w
            w += np.uint64(1)
            a = b ^ (b >> np.uint64(11))
            b = c + (c << np.uint64(3))
            c = ((c << np.uint64(24)) | (c >> np.uint64(40))) + tmp
    return np.stack([a, b, c, w], axis=1)


_STATE_TEMPLATE = {"bit_generator": "SFC64", "has_uint32": 0, "uinteger": 0}


def seeded_generators(states: np.ndarray, reuse: list[np.random.Generator] | None = None) -> list[np.random.Generator]:
    """Generators on SFC64 set to the given states (K, 4) (from :func:`sfc64_seed_states`).

    ``reuse``: K generators on SFC64 to set in place instead of making new ones (setting a
    state costs about 1 µs; making an SFC64 generator about 30 µs)."""
    gens = reuse if reuse is not None and len(reuse) == len(states) else \
        [np.random.Generator(np.random.SFC64(0)) for _ in states]
    for g, st in zip(gens, states):
        g.bit_generator.state = {**_STATE_TEMPLATE, "state": {"state": st.copy()}}
    return gens


class BlockSeeds:
    """The SFC64 states of the columns ``labels`` of blocks b, b + 1, … of a stream seeded with
    ``seed``: those of ``SFC64(SeedSequence(seed, spawn_key=(b, c)))``, computed
    :data:`BATCH` blocks at a time by :func:`sfc64_seed_states` (one vectorised pass for 64 blocks
    of 7 columns costs about 1 ms, as much as 50 SeedSequences; it replaces 448 of them)."""

    BATCH = 64

    def __init__(self, seed: int, labels):
        self.seed, self.labels = int(seed), [int(c) for c in labels]
        self._first, self._states = -1, np.empty((0, len(self.labels), 4), dtype=np.uint64)

    def states(self, block: int) -> np.ndarray | None:
        """(len(labels), 4) uint64, or None when the key words do not fit 32 bits (seed those
        one by one through SeedSequence)."""
        if max([block + self.BATCH, *self.labels]) > _M32:
            return None
        if not 0 <= block - self._first < len(self._states):
            keys = [(b, c) for b in range(block, block + self.BATCH) for c in self.labels]
            self._states = sfc64_seed_states(self.seed, keys).reshape(self.BATCH, len(self.labels), 4)
            self._first = block
        return self._states[block - self._first]


def column_generator(seed: int, key: tuple[int, ...]) -> np.random.Generator:
    """The generator of one column of a block: ``SFC64(SeedSequence(seed, spawn_key=key))``.

    SFC64 (Doty-Humphrey's Small Fast Chaotic generator, 256-bit state; numpy's ``SFC64``) passes
    the PractRand and TestU01 BigCrush batteries and draws a ziggurat normal variate in about
    0.8 of the time of numpy's default PCG64 here (benchmarks/RESULTS.md §6); streams seeded by
    distinct spawn keys are independent in the sense of ``SeedSequence.spawn``. It has no
    jump-ahead, so a stream is positioned by drawing (see ``ScoreStream``)."""
    return np.random.Generator(np.random.SFC64(np.random.SeedSequence(seed, spawn_key=key)))


class ColumnStreams:
    """Labelled columns of normal scores (``normal``) and uniforms (``uniform``), a seed and a
    position (rows already drawn, ``skip`` at the start)."""

    def __init__(self, normal, uniform=(), seed: int = 0, skip: int = 0):
        if int(skip) != skip or skip < 0:
            raise StatisticsError(f"skip must be a non-negative integer, got {skip!r}")
        self.normal = [int(c) for c in normal]
        self.uniform = [int(c) for c in uniform]
        labels = self.normal + self.uniform
        if len(set(labels)) != len(labels) or any(c < 0 for c in labels):
            raise StatisticsError("column labels of a score stream must be distinct non-negative integers")
        self.seed = check_seed(seed)
        self.position = int(skip)

    @property
    def k(self) -> int:
        """Number of normal-score columns."""
        return len(self.normal)

    @property
    def m(self) -> int:
        """Number of uniform columns."""
        return len(self.uniform)

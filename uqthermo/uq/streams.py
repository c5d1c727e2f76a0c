"""What the seeded random streams of the sampling designs share: seeds, per-column generators, labels.

The pseudo-random (:class:`~uqthermo.uq.sampling.ScoreStream`) and Latin-hypercube
(:class:`~uqthermo.uq.latin.LatinScoreStream`) streams both give rows (z, v) of normal scores and
uniforms, one generator per labelled column and block, so that a column's numbers do not depend on
which other columns are drawn (common random numbers across runs that differ in them).
"""

from __future__ import annotations

import numpy as np

from ..errors import StatisticsError

__all__ = ["check_seed", "column_generator", "ColumnStreams"]


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

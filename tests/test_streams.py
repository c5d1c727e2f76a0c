"""The score streams' generators, seeded in a vectorised pass, are numpy's own streams.

Reference: numpy's ``SFC64(SeedSequence(seed, spawn_key=key))`` (NumPy's documented seeding
of independent streams), drawn one generator at a time; the fast seeding must give the same
64-bit outputs for every seed size and key the streams use.
"""

import numpy as np
import pytest

from uqthermo.uq.sampling import SCORE_BLOCK, ScoreStream
from uqthermo.uq.streams import BlockSeeds, column_generator, seeded_generators, sfc64_seed_states


@pytest.mark.parametrize("seed", [0, 1, 20261202, 2**32 - 1, 2**32, 2**64 + 3, 2**128 + 9, 2**160 + 1])
@pytest.mark.parametrize("key_length", [1, 2, 3])
def test_vectorised_seeding_equals_numpy_seedsequence(seed, key_length):
    rng = np.random.default_rng(key_length)
    keys = [tuple(int(x) for x in rng.integers(0, 2**32, key_length)) for _ in range(6)]
    keys += [(0,) * key_length, (2**32 - 1,) * key_length]
    for key, g in zip(keys, seeded_generators(sfc64_seed_states(seed, keys))):
        ref = column_generator(seed, key)
        assert np.array_equal(g.bit_generator.random_raw(8), ref.bit_generator.random_raw(8))
        assert g.standard_normal() == ref.standard_normal()


def test_score_stream_across_blocks_equals_one_seedsequence_per_block():
    """Row ranges that start inside a block and cross several (and a batch of BlockSeeds)."""
    start = SCORE_BLOCK * (BlockSeeds.BATCH - 1) + 5
    Z, V = ScoreStream([3, 0, 5], [2], seed=11, skip=start).draw(2 * SCORE_BLOCK + 7)
    blocks = range(BlockSeeds.BATCH - 1, BlockSeeds.BATCH + 2)
    for j, c in enumerate([3, 0, 5]):
        ref = np.concatenate([column_generator(11, (b, c)).standard_normal(SCORE_BLOCK) for b in blocks])
        np.testing.assert_array_equal(Z[:, j], ref[5:5 + Z.shape[0]])
    ref = np.concatenate([column_generator(11, (b, 2)).random(SCORE_BLOCK) for b in blocks])
    np.testing.assert_array_equal(V[:, 0], ref[5:5 + V.shape[0]])


def test_seeding_refuses_keys_beyond_32_bits():
    with pytest.raises(ValueError):
        sfc64_seed_states(1, [(2**32,)])
    assert BlockSeeds(1, [0, 2**32]).states(0) is None

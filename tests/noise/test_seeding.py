"""The seeding contract: block b of seed s is SeedSequence(s, spawn_key=(b,))."""

import numpy as np
import pytest

from noise import SeedRecord, block_rng


def test_block_stream_is_numpy_spawn_child():
    # NumPy documentation ("Parallel random number generation"; SeedSequence.spawn):
    # the i-th child of SeedSequence(s).spawn has spawn_key (i,). Our block streams
    # must be exactly those children, whatever order they are requested in.
    children = np.random.SeedSequence(12345).spawn(6)
    for b in [5, 0, 3]:
        ref = np.random.Generator(np.random.PCG64(children[b])).standard_normal(7)
        np.testing.assert_array_equal(block_rng(12345, b).standard_normal(7), ref)


def test_order_independent_and_distinct():
    a = [block_rng(9, b).standard_normal(4) for b in range(4)]
    b = [block_rng(9, b).standard_normal(4) for b in reversed(range(4))][::-1]
    np.testing.assert_array_equal(np.array(a), np.array(b))
    assert not np.array_equal(a[0], a[1])
    assert not np.array_equal(block_rng(9, 0).standard_normal(4), block_rng(10, 0).standard_normal(4))
    # seed + block is not a stream identity (the unsafe scheme numpy warns about)
    assert not np.array_equal(block_rng(9, 1).standard_normal(4), block_rng(10, 0).standard_normal(4))


def test_seed_record_roundtrip():
    r = SeedRecord.for_block(77, 4)
    assert r == SeedRecord(77, (4,))
    d = r.to_dict()
    assert d == {"entropy": 77, "spawn_key": [4]}
    assert SeedRecord.from_dict(d) == r
    np.testing.assert_array_equal(r.generator().random(3), block_rng(77, 4).random(3))
    assert r.seed_sequence().spawn_key == (4,)


@pytest.mark.parametrize(
    "seed, block, exc, match",
    [
        (-1, 0, ValueError, r"`seed` must be a non-negative integer, got -1"),
        (1.5, 0, TypeError, r"`seed` must be a non-negative integer, got 1\.5"),
        (True, 0, TypeError, r"`seed` must be a non-negative integer"),
        ("3", 0, TypeError, r"`seed`"),
        (1, -2, ValueError, r"`block` must be a non-negative integer, got -2"),
        (1, None, TypeError, r"`block` must be a non-negative integer"),
    ],
)
def test_validation(seed, block, exc, match):
    with pytest.raises(exc, match=match):
        block_rng(seed, block)


def test_record_validation():
    with pytest.raises(ValueError, match=r"`entropy` must be a non-negative integer"):
        SeedRecord(-5)
    with pytest.raises(ValueError, match=r"`spawn_key` must be a non-negative integer"):
        SeedRecord(5, (1, -1))
    with pytest.raises(TypeError, match=r"`spawn_key` must be a tuple"):
        SeedRecord(5, 3)


def test_numpy_integers_accepted():
    np.testing.assert_array_equal(
        block_rng(np.int64(3), np.uint8(2)).random(2), block_rng(3, 2).random(2)
    )

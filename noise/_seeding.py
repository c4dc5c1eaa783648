"""Seeds and block streams.

The seeding contract (README.md, "Reproducibility"): sample block ``b`` of a run with seed ``s``
draws from ``SeedSequence(s, spawn_key=(b,))``, the ``b``-th child that
``SeedSequence(s).spawn`` would make. A block's stream therefore depends only on
``(s, b)``, never on how many blocks there are or in which order, or on which worker,
they are computed.

References
----------
.. [1] NumPy documentation, "Parallel random number generation" (SeedSequence
   spawning; ``root_seed + worker_id`` is unsafe).
.. [2] M. E. O'Neill, "PCG: A family of simple fast space-efficient statistically
   good algorithms for random number generation", HMC-CS-2014-0905 (2014).
"""

from __future__ import annotations

import numbers
from dataclasses import dataclass

import numpy as np

from ._errors import ArgumentError, ArgumentTypeError

__all__ = ["block_rng", "SeedRecord", "rng_iv"]


def rng_iv(rng) -> np.random.Generator:
    """The ``rng`` argument of every sampling function, as ``numpy.random.default_rng``
    reads it: None (fresh entropy), a seed (an integer >= 0), a SeedSequence, a
    BitGenerator or a Generator (used as it is); anything else is refused with
    :class:`ArgumentTypeError` / :class:`ArgumentError` naming ``rng``, never numpy's
    message about SeedSequence entropy."""
    rule = "None, an integer seed >= 0, a SeedSequence, a BitGenerator or a Generator"
    if rng is None or isinstance(rng, (np.random.Generator, np.random.BitGenerator,
                                       np.random.SeedSequence)):
        return np.random.default_rng(rng)
    if isinstance(rng, (bool, np.bool_)) or not isinstance(rng, numbers.Integral):
        raise ArgumentTypeError("rng", f"got {rng!r}; expected {rule}",
                                f"`rng` must be {rule}, got {rng!r}.")
    if rng < 0:
        raise ArgumentError("rng", f"got {rng!r}; expected {rule}",
                            f"`rng` must be {rule}, got {rng!r}.")
    return np.random.default_rng(rng)


def _nonneg_int(value, name: str) -> int:
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        raise TypeError(f"`{name}` must be a non-negative integer, got {value!r}.")
    if value < 0:
        raise ValueError(f"`{name}` must be a non-negative integer, got {value!r}.")
    return int(value)


def _block_rng_iv(seed, block):
    return _nonneg_int(seed, "seed"), _nonneg_int(block, "block")


def block_rng(seed: int, block: int) -> np.random.Generator:
    """The generator of block ``block`` of a run seeded with ``seed``.

    ``Generator(PCG64(SeedSequence(seed, spawn_key=(block,))))``.

    Examples
    --------
    >>> a = block_rng(7, 3).standard_normal(2)
    >>> b = np.random.Generator(np.random.PCG64(np.random.SeedSequence(7).spawn(4)[3]))
    >>> bool(np.all(a == b.standard_normal(2)))
    True
    """
    seed, block = _block_rng_iv(seed, block)
    return SeedRecord(seed, (block,)).generator()


@dataclass(frozen=True)
class SeedRecord:
    """What is needed to replay a stream: the root entropy and the spawn key.

    Parameters
    ----------
    entropy : int
        The run's seed (a non-negative integer).
    spawn_key : tuple of int
        ``(block,)`` for a block stream; ``()`` for the root.
    """

    entropy: int
    spawn_key: tuple[int, ...] = ()

    def __post_init__(self):
        object.__setattr__(self, "entropy", _nonneg_int(self.entropy, "entropy"))
        if isinstance(self.spawn_key, (str, bytes)):
            raise TypeError(f"`spawn_key` must be a tuple of non-negative integers, got {self.spawn_key!r}.")
        try:
            key = tuple(self.spawn_key)
        except TypeError:
            raise TypeError(
                f"`spawn_key` must be a tuple of non-negative integers, got {self.spawn_key!r}."
            ) from None
        object.__setattr__(self, "spawn_key", tuple(_nonneg_int(k, "spawn_key") for k in key))

    @classmethod
    def for_block(cls, seed: int, block: int) -> "SeedRecord":
        """The record of block ``block`` of a run seeded with ``seed``."""
        seed, block = _block_rng_iv(seed, block)
        return cls(seed, (block,))

    def seed_sequence(self) -> np.random.SeedSequence:
        return np.random.SeedSequence(self.entropy, spawn_key=self.spawn_key)

    def generator(self) -> np.random.Generator:
        """A fresh ``Generator(PCG64(...))`` at the start of this stream."""
        return np.random.Generator(np.random.PCG64(self.seed_sequence()))

    def to_dict(self) -> dict:
        """JSON-ready ``{"entropy": int, "spawn_key": [int, ...]}``."""
        return {"entropy": self.entropy, "spawn_key": list(self.spawn_key)}

    @classmethod
    def from_dict(cls, d) -> "SeedRecord":
        """Inverse of :meth:`to_dict`."""
        return cls(d["entropy"], tuple(d.get("spawn_key", ())))

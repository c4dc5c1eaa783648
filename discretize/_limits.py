"""The size limits of loops: vertices of a sampled curve (``sides``) and traversals
(``turns``), one rule shared by the :class:`~discretize.Loop` constructors, the
arrangement, the exact routes and the spec (``loops[i].circle.sides``,
``loops[i].turns``), so that the Python API accepts exactly what the spec accepts.

Both bound work and memory that grow linearly with them (a lattice path is unrolled
over its turns; a sampled curve holds one vertex per side) and are far above what a
run on one machine can use.
"""

from __future__ import annotations

import numbers

import numpy as np

from noise import ArgumentError, ArgumentTypeError

__all__ = ["MAX_SIDES", "MAX_TURNS", "MAX_LATTICE_STEPS", "MAX_TOTAL_LATTICE_STEPS",
           "sides_iv", "turns_iv"]

MAX_SIDES = 100_000      # vertices of a sampled circle, ellipse or curve
MAX_TURNS = 1000         # times one loop is traversed (its lattice path grows with it)
#: unit steps of one loop's lattice path, all turns included (its snapped edges x
#: turns): snapping, the exact routes and every sample walk it, and the commands finish
#: within about a minute per loop up to this size (benchmarks/bench_limits.py); checked
#: on the problem's grid before snapping (``holonomy.lattice_steps``)
MAX_LATTICE_STEPS = 10**6
#: the same summed over the loops of one problem (all lattice loops are held at once:
#: 16 bytes per step and more for their winding numbers and plans)
MAX_TOTAL_LATTICE_STEPS = 10**7


def _bounded_int(value, name: str, low: int, high: int) -> int:
    rule = f"an integer from {low} to {high}"
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Integral):
        raise ArgumentTypeError(name, f"got {value!r}; expected {rule}",
                                f"`{name}` must be {rule}, got {value!r}.")
    if not low <= value <= high:
        raise ArgumentError(name, f"got {value!r}; expected {rule}",
                            f"`{name}` must be {rule}, got {value!r}.")
    return int(value)


def sides_iv(sides, name: str = "sides") -> int:
    """``sides`` (or a curve's ``samples``) as an int from 3 to :data:`MAX_SIDES`;
    :class:`noise.ArgumentTypeError` or :class:`noise.ArgumentError` naming ``name``."""
    return _bounded_int(sides, name, 3, MAX_SIDES)


def turns_iv(turns, name: str = "turns") -> int:
    """``turns`` as an int from 1 to :data:`MAX_TURNS`;
    :class:`noise.ArgumentTypeError` or :class:`noise.ArgumentError` naming ``name``."""
    return _bounded_int(turns, name, 1, MAX_TURNS)

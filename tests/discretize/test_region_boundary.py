"""`LatticeLoop.region_boundary`: the boundary of the region a loop encloses, run
counterclockwise (the unbounded face's boundary walk of the arrangement, reversed; de
Berg et al. 2008, "Computational Geometry", 3rd ed., Springer, ch. 2). Checked by the
winding numbers it must have: 1 on every cell the loop encloses (holes included), 0
elsewhere, and by running along the loop's own edges."""

import numpy as np
import pytest

from discretize import Grid, LatticeLoop

GRID = Grid((0.0, 0.0), 1.0, (12, 12))


def edges(loop):
    a, b = loop.nodes[:-1], loop.nodes[1:]
    return {tuple(sorted((tuple(p), tuple(q)))) for p, q in zip(a.tolist(), b.tolist())}


@pytest.mark.parametrize("moves, start, simple", [
    ("R2 U1 L2 D1", (1, 1), True),                       # counterclockwise rectangle
    ("U1 R2 D1 L2", (1, 1), True),                       # clockwise
    ("R1 U1 L1 D1 D1 L1 U1 R1", (4, 4), False),          # figure eight, lobes +1 / -1
    ("R1 U1 L1 D1 L1 D1 R1 U1", (4, 4), False),          # two lobes touching, both +1
    ("R2 U2 L1 D1 R1 D1 L2", (3, 3), False),             # a spike into the inside
    ("R6 U6 L6 D3 R2 U1 R2 D2 L2 U1 L2 D3", (0, 0), False),  # a hole of winding 0
])
def test_region_boundary(moves, start, simple):
    loop = LatticeLoop.from_moves(GRID, moves, start)
    assert loop.simple == simple
    b = loop.region_boundary()
    assert b.grid == loop.grid and edges(b) <= edges(loop)
    w, wb = loop.winding_numbers(), b.winding_numbers()
    assert set(np.unique(wb).tolist()) == {0, 1}
    assert np.all(wb[w != 0] == 1)          # every drawn cell is in the region
    if simple:
        assert np.array_equal(wb, np.abs(w))


def test_hole_is_inside_the_region():
    loop = LatticeLoop.from_moves(GRID, "R6 U6 L6 D3 R2 U1 R2 D2 L2 U1 L2 D3", (0, 0))
    w, wb = loop.winding_numbers(), loop.region_boundary().winding_numbers()
    assert w[2:4, 2:4].tolist() == [[0, 0], [0, 0]] and wb[:6, :6].sum() == 36


def test_wound_loop_gives_its_curve_once():
    loop = LatticeLoop.from_moves(GRID, "R2 U2 L2 D2", (1, 1), turns=3)
    assert not loop.simple and loop.winding_numbers().max() == 3
    assert loop.region_boundary().length == 8

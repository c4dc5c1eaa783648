"""Winding numbers of polygons and lattice loops around cell centers."""

import numpy as np
import pytest
from matplotlib.path import Path

from discretize import Grid, LatticeLoop, Loop, winding_numbers


def _star(rng, n, r0=1.0):
    # A random star-shaped (hence simple) polygon around the origin, counterclockwise.
    theta = np.sort(rng.uniform(0, 2 * np.pi, n))
    r = r0 * rng.uniform(0.3, 1.0, n)
    return np.stack([r * np.cos(theta), r * np.sin(theta)], axis=1)


@pytest.mark.parametrize("seed", range(5))
def test_simple_polygon_matches_matplotlib(seed):
    # Reference: matplotlib.path.Path.contains_points (point-in-polygon test of a
    # general-purpose library) for simple polygons: winding 1 inside, 0 outside; the
    # reversed polygon winds -1.
    rng = np.random.default_rng(seed)
    v = _star(rng, 12)
    g = Grid((-1.05, -1.05), 0.021, (100, 100))
    X, Y = g.cell_centers()
    inside = Path(v).contains_points(np.stack([X.ravel(), Y.ravel()], axis=1)).reshape(X.shape)
    w = winding_numbers(Loop.polygon(v), g)
    np.testing.assert_array_equal(w, inside.astype(int))
    np.testing.assert_array_equal(winding_numbers(v[::-1], g), -inside.astype(int))


def test_doubly_wound_square():
    g = Grid((0.0, 0.0), 1.0, (4, 4))
    sq = Loop.polygon([(1, 1), (3, 1), (3, 3), (1, 3)], turns=2)
    w = winding_numbers(sq, g)
    expect = np.zeros((4, 4), int)
    expect[1:3, 1:3] = 2
    np.testing.assert_array_equal(w, expect)
    np.testing.assert_array_equal(sq.snap(g).winding_numbers(), expect)


def test_figure_eight():
    # Lobes of areas 1 (counterclockwise) and 2 (clockwise).
    f8 = Loop.polygon([(0, 0), (1, 0), (1, 1), (0, 1), (0, 0), (0, -1), (-2, -1), (-2, 0)])
    g = Grid((-3.0, -2.0), 0.5, (10, 8))
    w = winding_numbers(f8, g)
    assert set(np.unique(w)) == {-1, 0, 1}
    assert (w == 1).sum() * g.cell_area == 1.0
    assert (w == -1).sum() * g.cell_area == 2.0
    ll = f8.snap(g)
    np.testing.assert_array_equal(ll.winding_numbers(), w)
    assert ll.area == -1.0 == f8.signed_area


@pytest.mark.parametrize("seed", range(4))
def test_lattice_windings_two_ways_and_green(seed):
    # A random closed lattice walk (any self-intersections). Two independent counts
    # must agree: the exact integer count from horizontal steps and the ray-crossing
    # rule on the node polygon. By Green's theorem sum_cells n_cell h^2 equals the
    # shoelace area of the node polygon (e.g. Braden 1986, College Math. J. 17).
    rng = np.random.default_rng(seed)
    g = Grid((0.5, -1.0), 0.25, (12, 12))
    steps = np.array([(1, 0), (-1, 0), (0, 1), (0, -1)])[rng.integers(0, 4, 60)]
    # close it: append the reverse of the net displacement along a straight path
    net = steps.sum(axis=0)
    back = [(-np.sign(net[0]), 0)] * abs(net[0]) + [(0, -np.sign(net[1]))] * abs(net[1])
    steps = np.vstack([steps] + ([np.array(back)] if back else []))
    nodes = np.vstack([[0, 0], np.cumsum(steps, axis=0)])
    nodes = nodes - nodes.min(axis=0)
    ll = LatticeLoop(g, nodes)
    w1 = ll.winding_numbers()
    w2 = winding_numbers(ll.coordinates[:-1], g)
    np.testing.assert_array_equal(w1, w2)
    xy = ll.coordinates
    shoelace = 0.5 * np.sum(xy[:-1, 0] * xy[1:, 1] - xy[1:, 0] * xy[:-1, 1])
    assert ll.area == pytest.approx(shoelace, abs=1e-12)


def test_validation():
    with pytest.raises(ValueError, match=r"`loop` must be a Loop, a LatticeLoop or an \(m, 2\) array"):
        winding_numbers(np.zeros(5), Grid((0, 0), 1.0, (2, 2)))

"""The fast paths of the arrangement and of snapping (issue 17, item 7) against the
exact paths they replace, on small and degenerate loops.

- The float filter of the orientation and dot-product signs (J. R. Shewchuk,
  "Adaptive precision floating-point arithmetic and fast robust geometric predicates",
  Discrete Comput. Geom. 18 (1997) 305-363, sec. 4.2) must decide exactly as the
  Fraction arithmetic: the arrangement built with the filter switched off (every sign
  in Fractions) is compared field by field with the filtered one.
- The integer shoelace sums must give the exact areas: their signed sum is ``turns``
  times the polygon's exact shoelace area (J. O'Rourke, "Computational Geometry in C",
  2nd ed., 1998, sec. 1.3), computed here in Fractions.
- Snapping one turn, reducing its backtracks and repeating it must give the reduction
  of the whole path (free reduction of a power of a word: w = u c u^-1 with c cyclically
  reduced gives w^n = u c^n u^-1; W. Magnus, A. Karrass, D. Solitar, "Combinatorial
  Group Theory", 2nd ed., Dover, 1976, sec. 1.4, from memory), and
  ``Loop.lattice_steps`` must bound the snapped length from above.
"""

from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from discretize import Grid, Loop, _arrangement, arrangement, joint_arrangement
from discretize._loops import _expand_corners, _reduce_backtracks, _staircase_corners

FIELDS = ("polygon", "turns", "vertices", "crossings", "crossing_degree", "edges",
          "left_face", "right_face", "areas", "winding", "curve_winding", "bridges",
          "outer_cycle", "curve_turns")


def _same(a, b):
    for f in FIELDS:
        assert np.array_equal(np.asarray(getattr(a, f)), np.asarray(getattr(b, f))), f
    for f in ("faces", "face_cycles", "paths"):
        x, y = getattr(a, f), getattr(b, f)
        assert len(x) == len(y) and all(np.array_equal(p, q) for p, q in zip(x, y)), f
    assert a.exact_areas == b.exact_areas


def _both(polys, turns):
    """(filtered, all-exact) results of building the arrangement uncached: an
    Arrangement or the refusal's message."""
    def build():
        try:
            return _arrangement._arrange_uncached(
                [_arrangement._polygon_iv(p) for p in polys], turns, 1e-9)
        except ValueError as exc:
            return str(exc)
    fast = build()
    with pytest.MonkeyPatch.context() as m:
        # a bound above every float orientation: every sign in Fractions
        m.setattr(_arrangement, "_ORIENT_REL", 1e300)
        exact = build()
    return fast, exact


def _fraction_shoelace(v):
    # O'Rourke 1998, sec. 1.3: twice the area is sum x_i y_{i+1} - x_{i+1} y_i
    p = [(Fraction(x), Fraction(y)) for x, y in np.asarray(v, float).tolist()]
    return sum(a[0] * b[1] - b[0] * a[1] for a, b in zip(p, p[1:] + p[:1])) / 2


DEGENERATE = {
    "figure-eight": [(0, 0), (2, 2), (2, 0), (0, 2)],
    "touching-vertex": [(0, 0), (1, 0), (1, 1), (2, 1), (2, 2), (1, 2), (1, 1), (0, 1)],
    "point-on-edge": [(0, 0), (2, 0), (2, 2), (1, 0), (0, 2)],
    "spike": [(0, 0), (2, 0), (1, 0), (1, 1)],
    "repeated-vertex": [(0, 0), (1, 0), (1, 0), (1, 1), (0, 1), (0, 0)],
    "collinear-overlap": [(0, 0), (1, 0), (2, 0), (2, 1), (1, 0.0), (0, 1)],
    "signed-zeros": [(-0.0, 0.0), (1.0, -0.0), (1.0, 1.0), (0.0, 1.0)],
    "tiny-coordinates": [(0, 0), (1e-200, 0), (1e-200, 1e-200), (0, 1e-200)],
    "almost-flat": [(0, 0), (1, 0), (0.5, 1e-300), (0.5, 1)],
    "star-7/3": [(float(np.cos(2 * np.pi * 3 * k / 7 + 0.1)),
                  float(np.sin(2 * np.pi * 3 * k / 7 + 0.1))) for k in range(7)],
}


@pytest.mark.parametrize("turns", [1, 3])
@pytest.mark.parametrize("name", list(DEGENERATE))
def test_filtered_arrangement_is_the_exact_one_on_degenerate_loops(name, turns):
    fast, exact = _both([DEGENERATE[name]], [turns])
    if isinstance(exact, str):
        assert fast == exact
        return
    _same(fast, exact)
    signed = sum(int(w) * a for w, a in zip(fast.winding, fast.exact_areas))
    assert signed == turns * _fraction_shoelace(DEGENERATE[name])


@settings(max_examples=80, deadline=None)
@given(pts=st.lists(st.tuples(st.integers(-3, 3), st.integers(-3, 3)), min_size=3,
                    max_size=10),
       scale=st.sampled_from([1.0, 0.5, 0.1, 1e-150]), turns=st.integers(1, 3))
def test_filtered_arrangement_on_lattice_polygons(pts, scale, turns):
    # lattice points: touching vertices, points on edges, overlaps and spikes abound
    v = np.array(pts, float) * scale
    fast, exact = _both([v], [turns])
    if isinstance(exact, str) or isinstance(fast, str):
        assert fast == exact
        return
    _same(fast, exact)
    signed = sum(int(w) * a for w, a in zip(fast.winding, fast.exact_areas))
    assert signed == turns * _fraction_shoelace(fast.polygon)


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), m=st.integers(3, 25))
def test_filtered_arrangement_on_random_polygons(seed, m):
    v = np.random.default_rng(seed).normal(size=(m, 2))
    fast, exact = _both([v], [1])
    if isinstance(exact, str) or isinstance(fast, str):
        assert fast == exact
        return
    _same(fast, exact)


def test_filtered_joint_arrangement():
    curves = [[(0, 0), (3, 0), (3, 3), (0, 3)], [(1, 1), (2, 1), (2, 2), (1, 2)],
              [(2, 2), (4, 2), (4, 4), (2, 4)]]
    fast, exact = _both(curves, [1, 2, 1])
    _same(fast, exact)


def test_arrangements_are_shared_and_read_only():
    v = [(0.0, 0.0), (2.0, 2.0), (2.0, 0.0), (0.0, 2.0)]
    a = arrangement(v, 2)
    assert arrangement(np.array(v), 2) is a  # one computation per loop
    assert arrangement(v, 1) is not a
    with pytest.raises(ValueError):
        a.winding[0] = 5  # shared: nobody may change it for the next caller
    with pytest.raises(ValueError):
        a.paths[0][0] = 0
    j = joint_arrangement([v, [(5.0, 5.0), (6.0, 5.0), (6.0, 6.0)]])
    assert joint_arrangement([v, [(5.0, 5.0), (6.0, 5.0), (6.0, 6.0)]]) is j


def test_a_refusal_is_raised_again_with_the_same_message():
    near = [(0.0, 0.0), (1.0, 0.0), (1.0, 1.0), (0.5, 1e-12), (0.0, 1.0)]
    with pytest.raises(ValueError) as first:
        arrangement(near)
    with pytest.raises(ValueError) as second:
        arrangement(near)
    assert str(first.value) == str(second.value)


def _snap_whole_path(loop, grid):
    """The reference: the staircase of every turn, then the backtracks removed."""
    u = (loop.vertices - grid.origin) / grid.spacing
    nodes = _expand_corners(_staircase_corners(u))
    nodes = np.vstack([np.tile(nodes[:-1], (loop.turns, 1)), nodes[:1]])
    return _reduce_backtracks(nodes)


@settings(max_examples=150, deadline=None)
@given(pts=st.lists(st.tuples(st.integers(-6, 6), st.integers(-6, 6)), min_size=3,
                    max_size=12),
       jitter=st.sampled_from([0.0, 0.3, 0.49]), turns=st.integers(1, 4))
def test_snapping_one_turn_then_repeating_is_snapping_the_whole_path(pts, jitter, turns):
    v = np.array(pts, float) * 0.25 + jitter * 0.25 * np.sin(np.arange(len(pts)))[:, None]
    try:
        loop = Loop.polygon(v, turns=turns)
    except ValueError:
        return
    grid = Grid.covering(loop.bbox, 0.25, margin=1)
    whole = _snap_whole_path(loop, grid)
    if len(whole) < 3:  # snaps to nothing either way
        with pytest.raises(ValueError):
            loop.snap(grid)
        return
    snapped = loop.snap(grid)
    assert np.array_equal(snapped.nodes, whole)
    assert snapped.length <= loop.lattice_steps(grid)


def test_lattice_steps_of_moves_and_circles():
    grid = Grid.covering((-1, -1, 11, 11), 1.0, margin=1)
    loop = Loop.from_moves("R4 U2 L4 D2", (0.0, 0.0), 1.0, turns=7)
    assert loop.lattice_steps(grid) == 12 * 7 == loop.snap(grid).length
    circle = Loop.circle((5.0, 5.0), 4.0, 1000, turns=3)
    steps = circle.lattice_steps(grid)
    assert circle.snap(grid).length <= steps
    # a staircase around a circle of radius 4 in unit cells: 4 x 8 steps per turn
    assert steps == 3 * 32

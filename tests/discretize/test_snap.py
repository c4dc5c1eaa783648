"""Snapping polygons to lattice loops."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from discretize import Grid, LatticeLoop, Loop, winding_numbers


def _boundary_distance(v, X, Y):
    """Distance from points (X, Y) to the closed polygon v."""
    a = v
    b = np.roll(v, -1, axis=0)
    p = np.stack([X.ravel(), Y.ravel()], axis=1)[:, None, :]
    ab = (b - a)[None]
    t = np.clip(np.sum((p - a) * ab, axis=-1) / np.sum(ab * ab, axis=-1), 0, 1)
    d = np.linalg.norm(p - (a + t[..., None] * ab), axis=-1).min(axis=1)
    return d.reshape(X.shape)


def test_lattice_polygon_snaps_exactly():
    g = Grid((0.0, 0.0), 0.5, (8, 8))
    L = Loop.from_moves("R4 U1 L2 U2 L2 D3", start=(1.0, 1.0), spacing=0.5)
    ll = L.snap(g)
    assert ll.area_error == 0.0 and ll.area == L.signed_area == 2.0
    assert ll == LatticeLoop.from_moves(g, "R4 U1 L2 U2 L2 D3", start=(2, 2))


def test_circle_area_error_is_order_h():
    # The polygon area is (n/2) r^2 sin(2 pi/n) (regular polygon, from memory); the
    # snapped loop's area error must shrink at least like h (error bound h * perimeter
    # / 2 from the staircase construction: each column and each vertex shifts the area
    # by at most h/2 times the local length).
    c = Loop.circle((0.1, -0.2), 1.0, 200)
    errors = []
    hs = [0.1, 0.05, 0.025, 0.0125, 0.00625]
    for h in hs:
        ll = c.snap(Grid.covering(c.bbox, h))
        assert ll.source_area == c.signed_area
        assert ll.area_error == pytest.approx(ll.area - c.signed_area)
        assert abs(ll.area_error) <= h * c.perimeter / 2
        errors.append(abs(ll.area_error))
    # Fitted order of convergence at least 1 (log-log slope over the range).
    slope = np.polyfit(np.log(hs), np.log(errors), 1)[0]
    assert slope >= 0.9, (errors, slope)


@pytest.mark.parametrize("h", [0.1, 0.03])
def test_snapped_circle_is_simple_and_follows_inside(h):
    c = Loop.circle((0.0, 0.0), 1.0, 64)
    g = Grid.covering(c.bbox, h)
    ll = c.snap(g)
    # simple: no node visited twice
    assert len(np.unique(ll.nodes[:-1], axis=0)) == ll.length
    w = ll.winding_numbers()
    assert set(np.unique(w)) <= {0, 1}
    # cells whose windings differ from the polygon's lie within h of the polygon
    X, Y = g.cell_centers()
    diff = w != winding_numbers(c, g)
    assert np.all(_boundary_distance(c.vertices, X[diff], Y[diff]) <= h)


def test_turns_and_figure_eight():
    c = Loop.circle((0.0, 0.0), 1.0, 40, turns=3)
    g = Grid.covering(c.bbox, 0.05)
    ll = c.snap(g)
    one = Loop.circle((0.0, 0.0), 1.0, 40).snap(g)
    assert ll.area == pytest.approx(3 * one.area) and ll.length == 3 * one.length
    assert ll.winding_numbers().max() == 3


def test_errors():
    c = Loop.circle((0.0, 0.0), 1.0, 8)
    with pytest.raises(ValueError, match=r"`loop` leaves the grid's extent"):
        c.snap(Grid((0.0, 0.0), 0.1, (20, 20)))
    tiny = Loop.circle((0.3, 0.3), 0.1, 8)
    with pytest.raises(ValueError, match=r"`loop` snaps to an empty lattice loop"):
        tiny.snap(Grid((0.0, 0.0), 1.0, (2, 2)))
    with pytest.raises(TypeError, match=r"`grid` must be a Grid"):
        c.snap("grid")


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.tuples(st.floats(-3, 3), st.floats(-3, 3)), min_size=3, max_size=9),
    st.sampled_from([0.5, 0.25, 0.1]),
)
def test_snap_property(vertices, h):
    # Any polygon snaps to a closed unit-step loop or raises ValueError; the lattice
    # area (sum of windings) equals its shoelace area (Green's theorem) and the error
    # is within the staircase bound.
    try:
        loop = Loop.polygon(vertices)
    except ValueError:
        return
    g = Grid.covering(loop.bbox, h)
    try:
        ll = loop.snap(g)
    except ValueError as e:
        assert "empty lattice loop" in str(e)
        return
    xy = ll.coordinates
    shoelace = 0.5 * np.sum(xy[:-1, 0] * xy[1:, 1] - xy[1:, 0] * xy[:-1, 1])
    assert ll.area == pytest.approx(shoelace, abs=1e-9)
    assert abs(ll.area_error) <= h * loop.perimeter / 2 + 1e-9

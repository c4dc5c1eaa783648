"""Loops: constructors, areas, moves syntax, concatenation, validation."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from discretize import Grid, LatticeLoop, Loop, parse_moves


class TestAreas:
    def test_shoelace_known_shapes(self):
        # Shoelace formula (B. Braden, "The surveyor's area formula", College Math. J. 17
        # (1986) 326-337): unit square 1, triangle base 4 height 3 is 6, clockwise
        # traversal flips the sign.
        assert Loop.polygon([(0, 0), (1, 0), (1, 1), (0, 1)]).signed_area == 1.0
        assert Loop.polygon([(0, 0), (4, 0), (0, 3)]).signed_area == 6.0
        assert Loop.polygon([(0, 0), (0, 3), (4, 0)]).signed_area == -6.0
        # L-shape: 3x2 rectangle minus a 2x1 corner = 4.
        L = Loop.polygon([(0, 0), (3, 0), (3, 1), (1, 1), (1, 2), (0, 2)])
        assert L.signed_area == 4.0 and L.perimeter == 10.0
        assert L.bbox == (0.0, 0.0, 3.0, 2.0)

    @pytest.mark.parametrize("n", [3, 4, 6, 17, 1000])
    def test_regular_polygon_area(self, n):
        # Area of a regular n-gon inscribed in radius r: (n/2) r^2 sin(2 pi / n); its
        # perimeter 2 n r sin(pi / n) (e.g. Weisstein, MathWorld "Regular Polygon", from memory).
        r = 1.7
        c = Loop.circle((0.3, -2.0), r, n)
        assert c.signed_area == pytest.approx(n / 2 * r**2 * math.sin(2 * math.pi / n), rel=1e-12)
        assert c.perimeter == pytest.approx(2 * n * r * math.sin(math.pi / n), rel=1e-12)
        np.testing.assert_allclose(c.vertices[0], (0.3 + r, -2.0))
        assert c.vertices.shape == (n, 2)

    def test_turns_multiply(self):
        sq = Loop.polygon([(0, 0), (2, 0), (2, 2), (0, 2)], turns=3)
        assert sq.signed_area == 12.0 and sq.perimeter == 24.0 and sq.turns == 3
        assert sq.unrolled_vertices().shape == (12, 2)

    def test_figure_eight_cancelling_is_legal(self):
        # Two unit lobes of opposite orientation: signed area 0, still a loop.
        f8 = Loop.polygon([(0, 0), (1, 0), (1, 1), (0, 1), (0, 0), (0, -1), (-1, -1), (-1, 0)])
        assert f8.signed_area == 0.0

    def test_reversed(self):
        L = Loop.circle((0, 0), 1.0, 5)
        assert L.reversed().signed_area == pytest.approx(-L.signed_area)
        np.testing.assert_array_equal(L.reversed().vertices[0], L.vertices[0])

    def test_closing_vertex_and_duplicates_dropped(self):
        a = Loop.polygon([(0, 0), (1, 0), (1, 0), (1, 1), (0, 0)])
        np.testing.assert_array_equal(a.vertices, [(0, 0), (1, 0), (1, 1)])
        assert a.edges.shape == (3, 2, 2)
        np.testing.assert_array_equal(a.edges[-1], [(1, 1), (0, 0)])


class TestMoves:
    def test_rectangle(self):
        r = Loop.from_moves("R4 U2 L4 D2", start=(1.0, 1.0), spacing=0.5)
        np.testing.assert_array_equal(r.vertices, [(1, 1), (3, 1), (3, 2), (1, 2)])
        assert r.signed_area == 2.0

    def test_whitespace_and_case(self):
        a = Loop.from_moves("  r2\tu1\nL2   d1 ")
        assert a.signed_area == 2.0

    def test_parse(self):
        np.testing.assert_array_equal(parse_moves("R10 D3"), [(10, 0), (0, -3)])

    @pytest.mark.parametrize(
        "moves, match",
        [
            ("R4 U2 X4 D2", r"`moves` does not parse at token 3 \('X4', character 7\)"),
            ("R4 U0 L4", r"token 2 \('U0', character 4\)"),
            ("R4U2", r"token 1 \('R4U2', character 1\)"),
            ("R-1", r"token 1"),
            ("", r"`moves` must contain at least one move"),
            ("R4 U2 L3 D2", r"`moves` does not close: the walk ends \[1, 0\]"),
            ("R1 L1", r"`vertices` must have at least three distinct vertices"),
            ("R2 L1 L1", r"`vertices` must not all lie on one line"),
        ],
    )
    def test_errors(self, moves, match):
        with pytest.raises(ValueError, match=match):
            Loop.from_moves(moves)

    def test_type_error(self):
        with pytest.raises(TypeError, match=r"`moves` must be a string"):
            Loop.from_moves(["R1"])

    @settings(max_examples=200, deadline=None)
    @given(st.text(alphabet="RLUDrlud0123456789 -x\t", max_size=30))
    def test_parser_property(self, s):
        # Any string either parses to a loop or raises ValueError, never anything else.
        try:
            loop = Loop.from_moves(s)
        except ValueError:
            return
        assert np.isfinite(loop.signed_area)

    @settings(max_examples=100, deadline=None)
    @given(st.lists(st.tuples(st.sampled_from("RLUD"), st.integers(1, 5)), min_size=1, max_size=12))
    def test_closed_walks_area_is_integer(self, toks):
        # Close the walk with an L-return; lattice polygons have integer shoelace areas
        # (Pick's theorem: A = I + B/2 - 1 is a half-integer; rectilinear ones integer).
        moves = " ".join(f"{d}{n}" for d, n in toks)
        p = parse_moves(moves).sum(axis=0)
        tail = []
        if p[0]:
            tail.append(f"{'L' if p[0] > 0 else 'R'}{abs(p[0])}")
        if p[1]:
            tail.append(f"{'D' if p[1] > 0 else 'U'}{abs(p[1])}")
        try:
            loop = Loop.from_moves(" ".join([moves] + tail))
        except ValueError:
            return
        assert loop.signed_area == round(loop.signed_area)


class TestConcatenation:
    def test_areas_add(self):
        a = Loop.polygon([(0, 0), (1, 0), (1, 1), (0, 1)], turns=2)
        b = Loop.polygon([(0, 0), (0, -1), (-3, -1), (-3, 0)])  # clockwise, area -3
        c = a + b
        assert c.turns == 1
        assert c.signed_area == pytest.approx(2 - 3)
        assert c.perimeter == pytest.approx(a.perimeter + b.perimeter)
        g = Grid.covering(c.bbox, 1.0)
        np.testing.assert_array_equal(c.winding_numbers(g), a.winding_numbers(g) + b.winding_numbers(g))

    def test_needs_common_start(self):
        a = Loop.polygon([(0, 0), (1, 0), (1, 1)])
        b = Loop.polygon([(5, 0), (6, 0), (6, 1)])
        with pytest.raises(ValueError, match=r"`other` must start where this loop starts"):
            a + b


class TestLoopValidation:
    @pytest.mark.parametrize(
        "vertices, turns, exc, match",
        [
            ([(0, 0), (1, 0)], 1, ValueError, r"`vertices` must have at least three distinct vertices, got 2"),
            ([(0, 0), (1, 0), (0, 0), (1, 0)], 1, ValueError, r"at least three distinct vertices, got 2"),
            ([(0, 0), (1, 1), (2, 2), (3, 3)], 1, ValueError, r"`vertices` must not all lie on one line"),
            ([(0, 0), (1, 0), (float("nan"), 1)], 1, ValueError, r"`vertices` must have finite coordinates; vertex 2"),
            ([(0, 0), (1, 0), (float("inf"), 1)], 1, ValueError, r"finite coordinates"),
            ([(0, 0), (1, 0), (1, 1)], 0, ValueError, r"`turns` must be an integer from 1 to 1000, got 0"),
            ([(0, 0), (1, 0), (1, 1)], 1.5, TypeError, r"`turns` must be an integer"),
            ([0, 1, 2], 1, ValueError, r"`vertices` must be an \(m, 2\) array"),
            ("abc", 1, TypeError, r"`vertices` must be an \(m, 2\) array of finite numbers"),
        ],
    )
    def test_polygon(self, vertices, turns, exc, match):
        with pytest.raises(exc, match=match):
            Loop.polygon(vertices, turns)

    @pytest.mark.parametrize(
        "args, exc, match",
        [
            (((0, 0), 1.0, 2), ValueError, r"`sides` must be an integer from 3 to 100000, got 2"),
            (((0, 0), 0.0, 5), ValueError, r"`radius` must be a positive finite number, got 0\.0"),
            (((0, 0), -1.0, 5), ValueError, r"`radius` must be a positive"),
            (((0, float("nan")), 1.0, 5), ValueError, r"`center` must have finite coordinates"),
            (((0, 0), 1.0, 5, 0), ValueError, r"`turns` must be an integer from 1 to 1000"),
        ],
    )
    def test_circle(self, args, exc, match):
        with pytest.raises(exc, match=match):
            Loop.circle(*args)

    def test_moves_spacing(self):
        with pytest.raises(ValueError, match=r"`spacing` must be a positive finite number, got -1"):
            Loop.from_moves("R1 U1 L1 D1", spacing=-1)
        with pytest.raises(ValueError, match=r"`turns` must be an integer from 1 to 1000"):
            Loop.from_moves("R1 U1 L1 D1", turns=0)

    @settings(max_examples=100, deadline=None)
    @given(
        st.lists(
            st.tuples(
                st.floats(allow_nan=True, allow_infinity=True, width=32),
                st.floats(allow_nan=True, allow_infinity=True, width=32),
            ),
            max_size=8,
        ),
        st.integers(-2, 3),
    )
    def test_polygon_property(self, vertices, turns):
        try:
            loop = Loop.polygon(vertices, turns)
        except (ValueError, TypeError):
            return
        assert loop.turns >= 1 and loop.vertices.shape[1] == 2
        assert np.isfinite(loop.perimeter)

    @settings(max_examples=100, deadline=None)
    @given(
        st.tuples(st.floats(-1e6, 1e6), st.floats(-1e6, 1e6)),
        st.floats(-10, 1e3) | st.just(float("nan")),
        st.integers(-1, 50),
    )
    def test_circle_property(self, center, radius, sides):
        try:
            c = Loop.circle(center, radius, sides)
        except (ValueError, TypeError):
            return
        assert c.signed_area >= 0 and np.isfinite(c.perimeter)


class TestLatticeLoop:
    def test_from_moves_and_properties(self):
        g = Grid((0.0, 0.0), 0.5, (6, 4))
        ll = LatticeLoop.from_moves(g, "R3 U2 L3 D2", start=(1, 1))
        assert ll.length == 10 and ll.perimeter == 5.0
        assert ll.area == 6 * 0.25
        assert ll.area_error == 0.0 and ll.source_area is None
        hs = ll.horizontal_steps
        assert hs.shape == (6, 4)
        # first step: k=0, column 1, node row 1, rightward
        np.testing.assert_array_equal(hs[0], (0, 1, 1, 1))
        np.testing.assert_array_equal(hs[-1], (7, 1, 3, -1))
        vs = ll.vertical_steps
        np.testing.assert_array_equal(vs[0], (3, 1, 4, 1))
        assert ll == Loop.from_moves("R3 U2 L3 D2", (0.5, 0.5), 0.5).snap(g)

    def test_turns_unrolled(self):
        g = Grid((0.0, 0.0), 1.0, (3, 3))
        ll = LatticeLoop.from_moves(g, "R1 U1 L1 D1", start=(1, 1), turns=2)
        assert ll.length == 8 and ll.area == 2.0
        assert ll.winding_numbers()[1, 1] == 2

    @pytest.mark.parametrize(
        "nodes, exc, match",
        [
            ([(0, 0), (1, 0), (1, 1), (0, 1)], ValueError, r"`nodes` must be closed \(first node == last node\)"),
            ([(0, 0), (2, 0), (2, 1), (0, 1), (0, 0)], ValueError, r"`nodes` must move by unit steps; step 0 goes from \[0, 0\] to \[2, 0\]"),
            ([(0, 0), (1, 1), (0, 0)], ValueError, r"unit steps; step 0"),
            ([(3, 3), (4, 3), (4, 4), (3, 4), (3, 3)], ValueError, r"`nodes` leaves the grid's extent: node 1 is \[4, 3\]"),
            ([(0, 0), (0, -1), (0, 0)], ValueError, r"leaves the grid's extent"),
            ([(0, 0)], ValueError, r"`nodes` must hold a closed path of at least two steps"),
            ([(0, 0, 0)], ValueError, r"`nodes` must have shape \(m \+ 1, 2\)"),
            ([(0.5, 0), (1.5, 0), (0.5, 0)], TypeError, r"`nodes` must be an integer array"),
        ],
    )
    def test_validation(self, nodes, exc, match):
        g = Grid((0.0, 0.0), 1.0, (3, 3))
        with pytest.raises(exc, match=match):
            LatticeLoop(g, nodes)

    def test_backtracking_loop_is_legal(self):
        g = Grid((0.0, 0.0), 1.0, (3, 3))
        ll = LatticeLoop(g, [(0, 0), (1, 0), (0, 0)])
        assert ll.area == 0.0 and not ll.winding_numbers().any()

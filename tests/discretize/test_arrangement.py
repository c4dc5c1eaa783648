"""Tests of the polygon arrangement (crossings, faces, exact areas, winding numbers)."""

from fractions import Fraction

import numpy as np
import pytest
from matplotlib.path import Path

from noise import ArgumentError
from discretize import arrangement


def shoelace(v):
    # O'Rourke 1998, "Computational Geometry in C", sec. 1.3 (shoelace formula)
    x, y = np.asarray(v, float).T
    return 0.5 * (np.dot(x, np.roll(y, -1)) - np.dot(np.roll(x, -1), y))


def winding_number(v, pt):
    # O'Rourke 1998, sec. 7.4: winding number = total signed angle / 2 pi
    d = np.asarray(v, float) - pt
    a = np.arctan2(d[:, 1], d[:, 0])
    da = np.diff(np.r_[a, a[0]])
    da = (da + np.pi) % (2 * np.pi) - np.pi
    return int(round(da.sum() / (2 * np.pi)))


def star(p, q, r=1.0):
    th = 2 * np.pi * q * np.arange(p) / p + 0.1
    return np.c_[r * np.cos(th), r * np.sin(th)]


def limacon(m=60, a=1.0, b=0.5):
    th = 2 * np.pi * (np.arange(m) + 0.5) / m
    r = b + a * np.cos(th)
    return np.c_[r * np.cos(th), r * np.sin(th)]


class TestKnownArrangements:
    def test_square_turns(self):
        arr = arrangement([(0, 0), (1, 0), (1, 1), (0, 1)], turns=3)
        assert arr.n_crossings == 0 and arr.n_faces == 1
        assert arr.winding.tolist() == [3]
        assert arr.exact_areas == (Fraction(1),)

    def test_clockwise_square(self):
        arr = arrangement([(0, 0), (0, 1), (1, 1), (1, 0)])
        assert arr.winding.tolist() == [-1]

    def test_figure_eight(self):
        # the figure eight has two lobes of opposite orientation, one crossing
        arr = arrangement([(0, 0), (2, 2), (2, 0), (0, 2)])
        assert arr.n_crossings == 1
        np.testing.assert_array_equal(arr.crossings, [[1.0, 1.0]])
        assert sorted(arr.winding.tolist()) == [-1, 1]
        assert arr.exact_areas == (Fraction(1), Fraction(1))

    def test_pentagram(self):
        # star polygon {5/2}: 5 crossings, a central pentagon of winding 2 and five
        # tips of winding 1 (Coxeter, "Regular Polytopes", 1973, sec. 2.8: density 2)
        arr = arrangement(star(5, 2))
        assert arr.n_crossings == 5 and arr.n_faces == 6
        assert sorted(arr.winding.tolist()) == [1, 1, 1, 1, 1, 2]
        assert arr.faces[int(np.argmax(arr.winding))].size == 5

    @pytest.mark.parametrize("p,q", [(7, 2), (7, 3), (8, 3)])
    def test_star_density(self, p, q):
        # the {p/q} star has density q: the central face is wound q times (Coxeter 1973)
        arr = arrangement(star(p, q))
        assert arr.winding.max() == q
        # crossings of {p/q}: p (q - 1) (each edge crosses 2 (q - 1) others)
        assert arr.n_crossings == p * (q - 1)

    def test_limacon(self):
        # the limacon r = 1/2 + cos(theta) has an inner loop of winding 2
        arr = arrangement(limacon())
        assert arr.n_crossings == 1
        assert sorted(arr.winding.tolist()) == [1, 2]

    def test_triple_point(self):
        # three edges through one point: one vertex of degree 6, still well defined
        v = [(-1, 0), (1, 0), (1, 1), (-1, -1), (0, -1), (0, 1)]
        arr = arrangement(v)
        assert arr.n_crossings == 1
        assert arr.crossing_degree.tolist() == [3]
        assert np.isclose(arr.signed_area, shoelace(v))


class TestInvariants:
    @pytest.mark.parametrize("seed", range(8))
    @pytest.mark.parametrize("turns", [1, 2])
    def test_random_polygons(self, seed, turns):
        rng = np.random.default_rng(seed)
        v = rng.standard_normal((4 + seed, 2))
        arr = arrangement(v, turns=turns)
        # sum_F n_F |F| = turns * shoelace area (the area formula for winding numbers,
        # O'Rourke 1998 sec. 7.4)
        assert np.isclose(arr.signed_area, turns * shoelace(v), rtol=1e-12, atol=1e-12)
        exact = sum(w * a for w, a in zip(arr.winding.tolist(), arr.exact_areas))
        vf = [(Fraction(x), Fraction(y)) for x, y in v.tolist()]
        exact_shoelace = sum(
            p[0] * q[1] - q[0] * p[1] for p, q in zip(vf, vf[1:] + vf[:1])
        ) / 2
        assert exact == turns * exact_shoelace
        # Euler: V - E + F = 2 for the connected plane graph
        assert len(arr.vertices) - len(arr.edges) + arr.n_faces + 1 == 2
        # faces tile: areas are positive
        assert np.all(arr.areas > 0)
        # winding numbers of interior points (angle sum) match the faces
        pts = rng.uniform(v.min(0), v.max(0), size=(200, 2))
        for pt in pts:
            inside = [
                i for i in range(arr.n_faces)
                if Path(arr.face_polygon(i)).contains_point(pt)
            ]
            w = turns * winding_number(v, pt)
            if len(inside) == 1:
                assert arr.winding[inside[0]] == w
            elif not inside:
                assert w == 0

    def test_crossings_lie_on_two_edges(self):
        v = star(7, 3)
        arr = arrangement(v)
        A, B = v, np.roll(v, -1, axis=0)
        for x in arr.crossings:
            e, r = B - A, x - A
            d = np.abs(e[:, 0] * r[:, 1] - e[:, 1] * r[:, 0]) / np.hypot(*e.T)
            assert np.sum(d < 1e-12) == 2


def check_against_angle_sums(v, arr, turns=1, seed=0):
    """Exact signed area (shoelace), Euler's relation and the winding number of random
    points by angle sums (O'Rourke 1998, sec. 1.3 and 7.4)."""
    vf = [(Fraction(x), Fraction(y)) for x, y in np.asarray(v, float).tolist()]
    exact_shoelace = sum(p[0] * q[1] - q[0] * p[1] for p, q in zip(vf, vf[1:] + vf[:1])) / 2
    assert sum(w * a for w, a in zip(arr.winding.tolist(), arr.exact_areas)) == turns * exact_shoelace
    assert len(arr.vertices) - len(arr.edges) + arr.n_faces + 1 == 2
    assert np.all(arr.areas > 0)
    rng = np.random.default_rng(seed)
    v = np.asarray(v, float)
    for pt in rng.uniform(v.min(0) - 0.1, v.max(0) + 0.1, size=(300, 2)):
        inside = [i for i in range(arr.n_faces) if Path(arr.face_polygon(i)).contains_point(pt)]
        w = turns * winding_number(v, pt)
        if len(inside) == 1:
            assert arr.winding[inside[0]] == w
        elif not inside:
            assert w == 0


class TestDegenerate:
    """Touching and overlapping curves are graphs too (issue 14: degenerate geometry)."""

    @pytest.mark.parametrize("v,faces,windings", [
        # collinear overlap: the stretch (1, 0)-(2, 0) is run twice in the same direction
        ([(0, 0), (2, 0), (2, 1), (1, 1), (1, 0), (3, 0), (3, -1), (0, -1)], 2, [-1, 1]),
        # a vertex on another edge
        ([(0, 0), (2, 0), (2, 2), (1, 0), (0, 2)], 2, [1, 1]),
        # a repeated vertex: two triangles touching at the origin
        ([(0, 0), (1, 0), (1, 1), (0, 0), (-1, 1), (-1, 0)], 2, [1, 1]),
        # a spike: the curve runs back along (1, 0)-(2, 0)
        ([(0, 0), (2, 0), (1, 0), (1, 1)], 1, [1]),
        # two squares touching at a corner, both counterclockwise
        ([(0, 0), (1, 0), (1, 1), (2, 1), (2, 2), (1, 2), (1, 1), (0, 1)], 2, [1, 1]),
    ])
    @pytest.mark.parametrize("turns", [1, 2])
    def test_degenerate_polygons(self, v, faces, windings, turns):
        arr = arrangement(v, turns)
        assert arr.degenerate and arr.n_crossings == 0
        assert arr.n_faces == faces
        assert sorted(arr.winding.tolist()) == sorted(turns * w for w in windings)
        check_against_angle_sums(v, arr, turns)

    def test_spike_path(self):
        arr = arrangement([(0, 0), (2, 0), (1, 0), (1, 1)])
        # the spike edge (1, 0)-(2, 0) is run forward then backward
        assert arr.paths[0].tolist() == [0, 2, 3, 4, 6]
        assert arr.left_face[1] == arr.right_face[1] == -1

    def test_non_degenerate_flag(self):
        assert not arrangement([(0, 0), (2, 2), (2, 0), (0, 2)]).degenerate


class TestJoint:
    def test_nested_and_disjoint(self):
        from discretize import joint_arrangement

        big = [(0, 0), (3, 0), (3, 3), (0, 3)]
        small = [(1, 1), (2, 1), (2, 2), (1, 2)]
        far = [(5, 0), (6, 0), (6, 1), (5, 1)]
        arr = joint_arrangement([big, small, far], turns=[1, 2, 1])
        assert arr.bridges == 2 and arr.n_faces == 3
        assert arr.n_curves == 3
        for i, (v, t) in enumerate([(big, 1), (small, 2), (far, 1)]):
            for f in range(arr.n_faces):
                c = arr.face_polygon(f).mean(axis=0)  # faces here are convex squares
                pt = c if Path(arr.face_polygon(f)).contains_point(c) else None
                if pt is not None:
                    assert arr.curve_winding[i, f] == t * winding_number(v, pt)
        assert np.isclose(arr.signed_area, 9 + 2 * 1 + 1)

    def test_crossing_pair(self):
        from discretize import joint_arrangement

        a = [(0, 0), (2, 0), (2, 2), (0, 2)]
        b = [(1, 1), (3, 1), (3, 3), (1, 3)]
        arr = joint_arrangement([a, b])
        assert arr.bridges == 0 and arr.n_faces == 3
        assert sorted(map(tuple, arr.curve_winding.T.tolist())) == [(0, 1), (1, 0), (1, 1)]


class TestBadInput:
    def test_nearly_touching(self):
        with pytest.raises(ValueError, match="too close to degenerate"):
            arrangement([(0, 0), (2, 0), (2, 2), (1, 1e-13), (0, 2)])

    def test_shape(self):
        with pytest.raises(ValueError, match=r"`vertices` must be an array of shape \(m, 2\)"):
            arrangement([1, 2, 3])

    def test_too_few(self):
        with pytest.raises(ValueError, match="`vertices` must hold at least 3"):
            arrangement([(0, 0), (1, 0), (1, 0), (0, 0)])

    def test_not_finite(self):
        with pytest.raises(ValueError, match="`vertices` must be finite"):
            arrangement([(0, 0), (1, np.nan), (1, 1)])

    @pytest.mark.parametrize("turns", [0, -1, 1.5, True, 1001, 10**12])
    def test_turns(self, turns):
        # the loops' limit (discretize.MAX_TURNS, the spec's loops[i].turns)
        with pytest.raises(ArgumentError) as info:
            arrangement([(0, 0), (1, 0), (1, 1)], turns=turns)
        assert info.value.argument == "turns"


class TestSizeAndMemory:
    """The crossing check works in bounded memory (issue 17: it used to build m x m
    arrays, 4.7 GiB for a 50000-gon) and refuses what it cannot finish."""

    @staticmethod
    def _brute_close(v, tol):
        # every pair of edges that meet (exact orientation tests, O'Rourke 1998,
        # sec. 7.2) or come within tol (float point-segment distances)
        m = len(v)
        P = [(Fraction(x), Fraction(y)) for x, y in v.tolist()]
        seg = [(P[i], P[(i + 1) % m]) for i in range(m)]

        def orient(a, b, c):
            return (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])

        def dist(p, a, b):
            p, a, b = (np.array(z, float) for z in (p, a, b))
            s = np.clip(np.dot(p - a, b - a) / np.dot(b - a, b - a), 0, 1)
            return float(np.hypot(*(p - a - s * (b - a))))

        out = set()
        for i in range(m):
            for j in range(i + 1, m):
                (a, b), (c, d) = seg[i], seg[j]
                o = [orient(a, b, c), orient(a, b, d), orient(c, d, a), orient(c, d, b)]
                meet = o[0] * o[1] <= 0 and o[2] * o[3] <= 0 and any(o)
                near = min(dist(c, a, b), dist(d, a, b), dist(a, c, d), dist(b, c, d)) <= tol
                if meet or near:
                    out.add((i, j))
        return out

    @pytest.mark.parametrize("seed", range(6))
    def test_screen_keeps_every_pair_that_meets(self, seed):
        from discretize._arrangement import _close_pairs

        rng = np.random.default_rng(seed)
        m = 25
        v = rng.integers(0, 5, size=(m, 2)) + (seed % 2) * rng.normal(size=(m, 2)) * 1e-9
        v = v[np.any(v != np.roll(v, -1, axis=0), axis=1)]
        tol = 1e-9 * float(np.hypot(*np.ptp(v, axis=0)))
        pairs, _ = _close_pairs(v, np.roll(v, -1, axis=0), tol)
        assert self._brute_close(v, tol) <= set(map(tuple, pairs.tolist()))

    @pytest.mark.parametrize("reps,budget", [
        (2000, 40e6), pytest.param(20000, 300e6, marks=pytest.mark.slow)])
    def test_repeated_path_is_one_face_wound_many_times(self, reps, budget):
        import tracemalloc

        square = np.array([(0, 0), (1, 0), (1, 1), (0, 1)] * reps, float)
        tracemalloc.start()
        try:
            arr = arrangement(square)
            peak = tracemalloc.get_traced_memory()[1]
        finally:
            tracemalloc.stop()
        # 4 reps edges over 4 distinct ones: no (4 reps)^2 array (11.9 GiB before for
        # 20000 reps, 0.4 GiB for 2000)
        assert peak < budget
        assert arr.n_faces == 1 and arr.winding.tolist() == [reps]
        assert arr.signed_area == pytest.approx(shoelace(square))

    def test_large_polygon_screen_is_bounded(self):
        import tracemalloc

        from discretize import check_crossings

        t = 2 * np.pi * np.arange(50000) / 50000
        circle = np.c_[np.cos(t), np.sin(t)]
        tracemalloc.start()
        try:
            pairs = check_crossings([circle])
            peak = tracemalloc.get_traced_memory()[1]
        finally:
            tracemalloc.stop()
        assert pairs == 50000 and peak < 200e6  # the neighbours only; 4.7 GiB before

    def test_too_many_crossings_refused_before_the_exact_work(self, monkeypatch):
        from discretize import _arrangement, check_crossings

        monkeypatch.setattr(_arrangement, "MAX_EXACT_PAIRS", 2000)
        # a {101/50} star: every edge crosses almost every other
        with pytest.raises(ValueError, match="more than 2e\\+03 pairs"):
            check_crossings([star(101, 50)])
        with pytest.raises(ValueError, match="exact crossing check"):
            arrangement(star(101, 50))
        assert check_crossings([star(31, 15)]) < 2000

    def test_separate_degenerate_curves_refused_not_endless(self):
        from discretize import joint_arrangement

        # a spike tree and a collinear curve that no bridge can join without touching
        # (this used to loop forever)
        tree = [(-1, 0), (-2, 0), (-1, 0), (-1, 1), (-1, 2), (-1, 3)] * 2
        with pytest.raises(ValueError, match="no segment joins"):
            joint_arrangement([tree, [(0, 0), (1, 0), (3, 0)]])

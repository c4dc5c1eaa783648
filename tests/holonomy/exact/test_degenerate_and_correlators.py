"""Degenerate loops (touching points, retraced edges) and correlators of several loops
(holonomy.exact)."""

import numpy as np
import pytest

from discretize import Grid, LatticeLoop, Loop
from holonomy.exact import (evaluate_polygon, evaluate_polygons, exact_wilson_loop,
                            unitary_wound_loop)
from holonomy.groups import make_group

SU2 = make_group("SU", 2, "physics")
U1 = make_group("U", 1, "trace")
GRID = Grid((0.0, 0.0), 1.0, (12, 12))
C_HALF = 0.75  # SU(2) fundamental, k = 2


def lattice(moves, start=(3, 3), turns=1):
    return LatticeLoop.from_moves(GRID, moves, start=start, turns=turns)


class TestDegenerate:
    @pytest.mark.parametrize("rep, c", [("fundamental", C_HALF), ("spin:1", 2.0),
                                        ("spin:3/2", 3.75)])
    def test_curl_retracing_an_edge(self, rep, c):
        # a 2 x 2 square with a unit cell hung on a retraced edge: independent lobes,
        # exp(-c lambda (4 + 1) / 2) (Levy 2003, lasso decomposition; Schur's lemma)
        loop = lattice("R2 R1 U1 R1 D1 L1 L1 U2 L2 D2")
        assert len(np.unique(loop.nodes[:-1], axis=0)) < len(loop.nodes) - 1
        r = exact_wilson_loop(SU2, rep, loop, coupling=0.4)
        assert r.value == pytest.approx(np.exp(-c * 0.4 * 5 / 2), abs=1e-12)

    def test_touching_squares_lattice_and_continuum(self):
        # two squares touching at a corner, both counterclockwise: same value on the
        # lattice and in the continuum (the polygon touches itself at (1, 1))
        poly = [(0, 0), (1, 0), (1, 1), (2, 1), (2, 2), (1, 2), (1, 1), (0, 1)]
        ref = np.exp(-C_HALF * 0.4 * 2 / 2)
        cont = exact_wilson_loop(SU2, "fundamental", Loop.polygon(poly), coupling=0.4)
        lat = exact_wilson_loop(SU2, "fundamental", Loop.polygon(poly).snap(GRID),
                                coupling=0.4)
        assert cont.value == pytest.approx(ref, abs=1e-12)
        assert lat.value == pytest.approx(ref, abs=1e-12)

    def test_square_drawn_twice_as_one_polygon(self):
        # the polygon runs its square twice: the loop wound twice (hook expansion,
        # Rains 1997), not a simple loop
        sq = [(0, 0), (1, 0), (1, 1), (0, 1)]
        r = exact_wilson_loop(SU2, "fundamental", Loop.polygon(sq + sq), coupling=0.6)
        assert r.value == pytest.approx(unitary_wound_loop(2, 2, 0.6, True, k=2), abs=1e-12)

    def test_limit_of_nearby_loops(self):
        # the touching loop is the limit of a figure-eight-like loop whose lobes
        # are joined by a short neck: values converge as the neck closes (the
        # face of the neck has area eps)
        ref = exact_wilson_loop(SU2, "spin:1", Loop.polygon(
            [(0, 0), (1, 0), (1, 1), (2, 1), (2, 2), (1, 2), (1, 1), (0, 1)]), coupling=0.4)
        for eps in (1e-2, 1e-4):
            near = [(0, 0), (1, 0), (1, 1 - eps), (2, 1 - eps), (2, 2), (1 - eps, 2),
                    (1 - eps, 1), (0, 1)]
            r = exact_wilson_loop(SU2, "spin:1", Loop.polygon(near), coupling=0.4)
            assert abs(r.value - ref.value) < 10 * eps


A = [(0, 0), (2, 0), (2, 2), (0, 2)]
DISJOINT = [(3, 0), (4, 0), (4, 1), (3, 1)]
INNER = [(0.5, 0.5), (1.5, 0.5), (1.5, 1.5), (0.5, 1.5)]  # area 1 inside A
CROSSING = [(1, 1), (3, 1), (3, 3), (1, 3)]  # overlaps A on [1, 2]^2


class TestCorrelatorsU1:
    @pytest.mark.parametrize("other", [DISJOINT, INNER, CROSSING])
    @pytest.mark.parametrize("turns", [(1, 1), (1, 2)])
    def test_windings_closed_form(self, other, turns):
        # E[W1 W2] = exp(-lambda c / 2 sum_F (n1_F + n2_F)^2 |F|) (independent Gaussian
        # face phases; Sengupta 1997, abelian case)
        r = evaluate_polygons(U1, [A, other], turns, coupling=0.7)
        arr = r.faces
        n = arr.curve_winding.sum(axis=0)
        ref = np.exp(-0.7 * np.sum(n ** 2 * arr.areas) / 2)
        assert r.value == pytest.approx(ref, abs=1e-12)

    def test_reversed_loop_cancels(self):
        rev = [(0, 0), (0, 2), (2, 2), (2, 0)]
        r = evaluate_polygons(U1, [A, rev], coupling=0.7)
        assert r.value == pytest.approx(1.0, abs=1e-12)


class TestCorrelatorsSU2:
    lam = 0.6

    def test_disjoint(self):
        # independent faces: the product of the simple-loop values
        r = evaluate_polygons(SU2, [A, DISJOINT], coupling=self.lam)
        ref = np.exp(-C_HALF * self.lam * (4 + 1) / 2)
        assert r.value == pytest.approx(ref, abs=1e-12)

    def test_nested(self):
        # E[chi(X) chi(X Y)] / 4 = e^{-3 t_Y / 8} E[chi(X)^2] / 4 (Schur's lemma) and
        # chi_{1/2}^2 = chi_1 + chi_0 (Clebsch-Gordan): (3 e^{-t_X} + 1) / 4 e^{-3 t_Y/8}
        r = evaluate_polygons(SU2, [A, INNER], coupling=self.lam)
        tx, ty = self.lam * 1.0, self.lam * 3.0
        ref = np.exp(-3 * ty / 8) * (3 * np.exp(-tx) + 1) / 4
        assert r.value == pytest.approx(ref, abs=1e-12)

    def test_crossing(self):
        # faces A only (3), both (1), B only (3): the private faces factor out
        r = evaluate_polygons(SU2, [A, CROSSING], coupling=self.lam)
        tc = self.lam * 1.0
        ref = np.exp(-3 * self.lam * 6 / 8) * (3 * np.exp(-tc) + 1) / 4
        assert r.value == pytest.approx(ref, abs=1e-12)

    def test_spin_one_nested(self):
        # chi_1^2 = chi_2 + chi_1 + chi_0: (5 e^{-3 t} + 3 e^{-t} + 1) / 9 e^{-t_Y}
        r = evaluate_polygons(SU2, [A, INNER], coupling=self.lam, rep="spin:1")
        tx, ty = self.lam * 1.0, self.lam * 3.0
        ref = np.exp(-ty) * (5 * np.exp(-3 * tx) + 3 * np.exp(-tx) + 1) / 9
        assert r.value == pytest.approx(ref, abs=1e-12)


class TestDispatcher:
    def test_u1_route_and_lattice_loops(self):
        from holonomy.exact import exact_correlator

        g = Grid((0.0, 0.0), 0.5, (12, 12))
        a, b = Loop.polygon(A), Loop.polygon(CROSSING)
        r = exact_correlator(U1, "fundamental", [a, b], coupling=0.5)
        # faces: A only (3), B only (3), both (1, winding 2): sum n^2 |F| = 10
        assert r.method == "u1-windings"
        assert r.value == pytest.approx(np.exp(-0.5 * 10 / 2), abs=1e-12)
        lat = exact_correlator(SU2, "fundamental", [a.snap(g), b.snap(g)], coupling=0.5)
        cont = exact_correlator(SU2, "fundamental", [a, b], coupling=0.5)
        ref = np.exp(-3 * 0.5 * 6 / 8) * (3 * np.exp(-0.5) + 1) / 4
        assert lat.value == pytest.approx(ref, abs=1e-12)
        assert cont.value == pytest.approx(ref, abs=1e-12)

"""The dispatcher exact_wilson_loop: holonomy.exact._dispatch."""

import numpy as np
import pytest

from discretize import AreaForm, Grid, LatticeLoop, Loop
from holonomy.exact import ExactValue, exact_wilson_loop
from holonomy.groups import make_group

GRID = Grid((0.0, 0.0), 0.5, (12, 12))


def lattice(moves, start=(2, 2), turns=1):
    return LatticeLoop.from_moves(GRID, moves, start=start, turns=turns)


class TestRoutes:
    @pytest.mark.parametrize("family, n, metric, c", [
        # Casimir values (Georgi 1999, from memory): SU(2) k = 2: 3/4;
        # SU(3) k = 2: 4/3; U(3) k = 3: 1; SO(3) k = 1: 1.
        ("SU", 2, "physics", 0.75), ("SU", 3, "physics", 4 / 3), ("U", 3, "large-n", 1.0),
        ("SO", 3, "trace", 1.0),
    ])
    def test_simple_lattice_loop(self, family, n, metric, c):
        # an L-shaped simple lattice loop of 5 cells of area 0.25: A = 1.25
        # (simple-loop law exp(-c lambda A / 2); Levy 2003, Mem. AMS 166)
        loop = lattice("R3 U1 L2 U2 L1 D3")
        r = exact_wilson_loop(make_group(family, n, metric), "fundamental", loop, coupling=0.6)
        assert isinstance(r, ExactValue) and r.kind == "exact" and r.method == "simple-loop"
        assert r.value == pytest.approx(np.exp(-c * 0.6 * 1.25 / 2), rel=1e-12)
        # orientation does not matter for a simple loop (E[pi(U^-1)] = exp(-c t/2) Id)
        rev = lattice("U3 R1 D2 R2 D1 L3")
        r2 = exact_wilson_loop(make_group(family, n, metric), "fundamental", rev, coupling=0.6)
        assert r2.value == pytest.approx(r.value, rel=1e-12)

    def test_area_density(self):
        # density 3 on the first cell of a 2 x 1 rectangle (cells 0.25): mu = 0.75 + 0.25
        form = AreaForm(rects=[(1.0, 1.0, 1.5, 1.5, 3.0)])
        G = make_group("SU", 2, "physics")
        r = exact_wilson_loop(G, "fundamental", lattice("R2 U1 L2 D1"), coupling=1.0, area=form)
        assert r.value == pytest.approx(np.exp(-0.75 * 1.0 / 2), rel=1e-12)
        poly = Loop.polygon([(1.0, 1.0), (2.0, 1.0), (2.0, 1.5), (1.0, 1.5)])
        r = exact_wilson_loop(G, "fundamental", poly, coupling=1.0, area=form)
        assert r.method == "simple-loop"
        assert r.value == pytest.approx(np.exp(-0.75 * 1.0 / 2), rel=1e-12)

    def test_u1_figure_eight_and_double_turn(self):
        # U(1), k = 1: exp(-lambda sum_F n_F^2 |F| / 2) (issue 3). Lattice figure-eight
        # with lobes of 4 and 8 cells (areas 1 and 2) touching at a node, and a loop wound
        # twice around a unit square.
        G = make_group("U", 1)
        fig8 = lattice("R2 U2 R4 U2 L4 D2 L2 D2")
        w = fig8.winding_numbers()
        assert sorted(np.unique(w).tolist()) == [0, 1]
        r = exact_wilson_loop(G, "fundamental", fig8, coupling=0.8)
        assert r.method == "u1-windings"
        assert r.value == pytest.approx(np.exp(-0.8 * 3 / 2), rel=1e-12)
        twice = lattice("R2 U2 L2 D2", turns=2)
        assert exact_wilson_loop(G, "fundamental", twice, coupling=0.8).value == pytest.approx(
            np.exp(-0.8 * 4 * 1 / 2), rel=1e-12)
        # a bow-tie polygon with lobes of opposite windings, areas 1 and 1
        bow = Loop.polygon([(0, 0), (2, 2), (2, 0), (0, 2)])
        assert exact_wilson_loop(G, "fundamental", bow, coupling=0.8).value == pytest.approx(
            np.exp(-0.8 * 2 / 2), rel=1e-12)
        # the class function tr U^2 is the charge-2 character: c = 4 / k
        assert exact_wilson_loop(G, "power:2", bow, coupling=0.8).value == pytest.approx(
            np.exp(-0.8 * 4 * 2 / 2), rel=1e-12)

    @pytest.mark.parametrize("turns", [2, 3])
    def test_su2_wound_loop(self, turns):
        # SU(2), k = 2, tr U^2 = chi_1 - chi_0, tr U^3 = chi_{3/2} - chi_{1/2}
        # (Clebsch-Gordan; Georgi 1999, ch. 3), t = lambda A.
        G = make_group("SU", 2, "physics")
        t = 0.7 * 1.0
        ref = {2: (3 * np.exp(-t) - 1) / 2,
               3: (4 * np.exp(-15 * t / 8) - 2 * np.exp(-3 * t / 8)) / 2}[turns]
        r = exact_wilson_loop(G, "fundamental", lattice("R2 U2 L2 D2", turns=turns), coupling=0.7)
        assert r.method == "hook-expansion" and r.value == pytest.approx(ref, rel=1e-12)
        poly = Loop.polygon([(0, 0), (1, 0), (1, 1), (0, 1)], turns=turns)
        assert exact_wilson_loop(G, "fundamental", poly, coupling=0.7).value == pytest.approx(
            ref, rel=1e-12)
        # the class function tr U^turns on a loop traversed once gives the same
        simple = lattice("R2 U2 L2 D2")
        assert exact_wilson_loop(G, f"power:{turns}", simple, coupling=0.7).value == pytest.approx(
            ref, rel=1e-12)

    def test_lobes_through_general_route(self):
        # Independent lobes: E[tr(A B^{-1})] / 2 = w(A1) w(A2) by Schur's lemma for
        # conjugation-invariant independent A, B (Levy 2003, lasso decomposition).
        pytest.importorskip("holonomy.exact._evaluate")
        G = make_group("SU", 2, "physics")
        bow = Loop.polygon([(0, 0), (2, 2), (2, 0), (0, 2)])
        r = exact_wilson_loop(G, "fundamental", bow, coupling=0.5)
        assert r.method == "polygon-evaluation"
        assert r.value == pytest.approx(np.exp(-0.75 * 0.5 * 2 / 2), rel=1e-10)

    def test_spin_one_wound_twice(self):
        # chi_1(g^2) = chi_2(g) - chi_1(g) + chi_0(g) (Adams operation; Fulton and
        # Harris 1991, ex. 23.39), c_j = j (j + 1) for k = 2: area 1, lambda = 1
        G = make_group("SU", 2, "physics")
        r = exact_wilson_loop(G, "spin:1", lattice("R2 U2 L2 D2", turns=2), coupling=1.0)
        ref = (5 * np.exp(-3.0) - 3 * np.exp(-1.0) + 1) / 3
        assert r.value == pytest.approx(ref, rel=1e-12)

    def test_no_route_names_the_limit(self):
        # SO(5) fundamental on a loop wound 6 times: 5^6 > 2048 and no closed form
        from holonomy.exact import ExactRouteError

        G = make_group("SO", 5, "trace")
        with pytest.raises(ExactRouteError, match="size limit: .*max_dim") as info:
            exact_wilson_loop(G, "fundamental", lattice("R2 U2 L2 D2", turns=6), coupling=1.0)
        assert info.value.limit == "size"


class TestBadInput:
    @pytest.mark.parametrize(
        "kwargs, err, match",
        [
            ({"coupling": 0.0}, ValueError, "`coupling` must be a finite number > 0"),
            ({"coupling": "1"}, TypeError, "`coupling` must be a real number"),
            ({"coupling": 1.0, "area": 2.0}, TypeError, "`area` must be a discretize AreaForm"),
        ],
    )
    def test_arguments(self, kwargs, err, match):
        G = make_group("SU", 2, "physics")
        with pytest.raises(err, match=match):
            exact_wilson_loop(G, "fundamental", lattice("R1 U1 L1 D1"), **kwargs)

    def test_types(self):
        G = make_group("SU", 2, "physics")
        with pytest.raises(TypeError, match="`loop` must be a discretize LatticeLoop or Loop"):
            exact_wilson_loop(G, "fundamental", [(0, 0), (1, 0), (1, 1)], coupling=1.0)
        with pytest.raises(TypeError, match="`group` must be a holonomy.groups Group"):
            exact_wilson_loop("SU2", "fundamental", lattice("R1 U1 L1 D1"), coupling=1.0)
        with pytest.raises(TypeError, match="`rep` must be a representation name"):
            exact_wilson_loop(G, 3, lattice("R1 U1 L1 D1"), coupling=1.0)

"""Exact values in any representation: Adams operations, independent lobes, the
tensor route with the representation's own matrices (holonomy.exact)."""

import numpy as np
import pytest

from discretize import Grid, LatticeLoop, Loop
from holonomy.exact import (adams_decomposition, evaluate_polygon, evaluate_word,
                            exact_wilson_loop)
from holonomy.exact._evaluate import _Evaluator, _group_iv
from holonomy.groups import make_group

SU2 = make_group("SU", 2, "physics")
SU3 = make_group("SU", 3, "physics")
SQUARE = [(0, 0), (1, 0), (1, 1), (0, 1)]
FIG8 = [(0, 0), (2, 2), (2, 0), (0, 2)]  # lobes of area 1, windings +1 and -1
# a loop with one nested lobe: the inner unit square [2, 3] x [1, 2]... wound twice
NESTED = [(2, 0), (4, 0), (4, 4), (0, 4), (0, 1), (3, 1), (3, 3), (2, 3)]
ENTANGLED_2 = [(0, 0), (4, 0), (4, 3), (1, 3), (1, 2), (3, 2), (3, 1), (2, 1), (2, 4), (0, 4)]


def su2_wound_twice(j, t):
    # chi_j(g^2) = sum_{i=0}^{2j} (-1)^i chi_{2j-i}(g) (Adams operation psi^2 for SU(2);
    # Fulton and Harris 1991, ex. 23.39) and E[chi_l(U_t)] = (2l+1) exp(-l(l+1) t / 2)
    # for k = 2 (c_l = l (l + 1))
    m = int(round(2 * j))
    total = sum((-1) ** i * (2 * (m - i) + 1) * np.exp(-(m - i) * (m - i + 1) * t / 2)
                for i in range(m + 1))
    return total / (2 * j + 1)


class TestAdams:
    @pytest.mark.parametrize("j", [0.5, 1, 1.5, 2])
    @pytest.mark.parametrize("t", [0.3, 1.7])
    def test_su2_spin_j_wound_twice(self, j, t):
        rep = f"spin:{int(2 * j)}/2"
        r = evaluate_polygon(SU2, SQUARE, turns=2, coupling=t, rep=rep)
        assert r.value == pytest.approx(su2_wound_twice(j, t), abs=1e-12)
        assert "adams" in r.method

    @pytest.mark.parametrize("j", [0.5, 1, 1.5])
    def test_tensor_route_agrees(self, j):
        # the same value by contracting the spin-j matrices (no closed form)
        setup = _group_iv(SU2, f"spin:{int(2 * j)}/2")
        ev = _Evaluator(setup, max_dim=4096)
        assert ev.tensor([(1, 1)], [0.8]) == pytest.approx(su2_wound_twice(j, 0.8), abs=1e-12)

    def test_su3_adjoint_decomposition(self):
        # psi^2(8) = Sym^2(8) - Lambda^2(8) = (1 + 8 + 27) - (8 + 10 + 10bar)
        # (Fulton and Harris 1991, sec. 13.2 and ex. 23.39; from memory)
        w = [tuple(int(i == a) - int(i == b) for i in range(3))
             for a in range(3) for b in range(3) if a != b] + [(0, 0, 0)] * 2
        dec = adams_decomposition(w, 2)
        assert sorted(dec.values()) == [-1, -1, 1, 1]
        assert dec[(0, 0, 0)] == 1 and dec[(2, 0, -2)] == 1

    @pytest.mark.parametrize("t", [0.4, 1.1])
    def test_su3_adjoint_wound_twice(self, t):
        # E[chi_8(U^2)] / 8 = (1 + 27 e^{-8t/2} - 20 e^{-6t/2}) / 8 with the k = 2
        # Casimirs 27: 8, 10: 6 (Georgi 1999, Lie Algebras in Particle Physics, table of
        # SU(3) Casimirs; from memory)
        r = evaluate_polygon(SU3, SQUARE, turns=2, coupling=t, rep="adjoint")
        ref = (1 + 27 * np.exp(-4 * t) - 20 * np.exp(-3 * t)) / 8
        assert r.value == pytest.approx(ref, abs=1e-12)

    def test_su3_adjoint_nested_lobe(self):
        # lasso decomposition (Levy 2003): H = X_in (X_in X_out), so
        # E = e^{-c t_out / 2} E[chi_8(X_in^2)] / 8 with c_8 = 3 (k = 2)
        r = evaluate_polygon(SU3, NESTED, coupling=0.3, rep="adjoint")
        arr = r.faces
        t_in = 0.3 * arr.areas[arr.winding == 2].sum()
        t_out = 0.3 * arr.areas[arr.winding == 1].sum()
        ref = np.exp(-3 * t_out / 2) * (1 + 27 * np.exp(-4 * t_in) - 20 * np.exp(-3 * t_in)) / 8
        assert r.value == pytest.approx(ref, abs=1e-12)

    def test_large_n_wound_is_fast_route(self):
        # U(32) on a nested lobe: the reduced word X^2 goes to the closed form
        from holonomy.exact import unitary_wound_loop

        G = make_group("U", 32, "large-n")
        r = evaluate_polygon(G, NESTED, coupling=0.3)
        arr = r.faces
        t_in = 0.3 * arr.areas[arr.winding == 2].sum()
        t_out = 0.3 * arr.areas[arr.winding == 1].sum()
        ref = np.exp(-t_out / 2) * unitary_wound_loop(32, 2, t_in)
        assert r.value == pytest.approx(ref, abs=1e-12)
        assert "tensor" not in r.method


class TestLobes:
    @pytest.mark.parametrize("rep, c", [("spin:1", 2.0), ("spin:3/2", 3.75), ("adjoint", 2.0)])
    def test_figure_eight_every_rep(self, rep, c):
        # independent lobes with windings +-1: exp(-c lambda (A1 + A2) / 2)
        # (Levy 2003, Mem. AMS 166, independence of lassos; Schur's lemma)
        r = evaluate_polygon(SU2, FIG8, coupling=0.7, rep=rep)
        assert r.value == pytest.approx(np.exp(-c * 0.7 * 2 / 2), abs=1e-12)

    def test_su3_adjoint_figure_eight(self):
        r = evaluate_polygon(SU3, FIG8, coupling=0.7, rep="adjoint")
        assert r.value == pytest.approx(np.exp(-3 * 0.7 * 2 / 2), abs=1e-12)


class TestSpinHalfIsFundamental:
    @pytest.mark.parametrize("poly, turns", [(SQUARE, 3), (FIG8, 1), (NESTED, 1),
                                             (ENTANGLED_2, 1), (ENTANGLED_2, 2)])
    def test_same_value(self, poly, turns):
        a = evaluate_polygon(SU2, poly, turns, coupling=0.4, rep="fundamental")
        b = evaluate_polygon(SU2, poly, turns, coupling=0.4, rep="spin:1/2")
        assert b.value == pytest.approx(a.value, abs=1e-12)

    def test_dispatcher_same_value(self):
        grid = Grid((0.0, 0.0), 1.0, (8, 8))
        lat = Loop.polygon(ENTANGLED_2).snap(grid)
        a = exact_wilson_loop(SU2, "fundamental", lat, coupling=0.4)
        b = exact_wilson_loop(SU2, "spin:1/2", lat, coupling=0.4)
        assert b.value == pytest.approx(a.value, abs=1e-12)


class TestEntangledHigherSpin:
    def test_spin_one_entangled_equals_so3(self):
        # X Y^-1 X Y in spin 1: the tensor route; check against the SO(3) defining
        # representation, which is the spin-1 representation of SU(2) (Hall 2015,
        # sec. 1.2: SO(3) = SU(2)/{+-1}); Ad-invariant metrics of a simple algebra are
        # proportional, so equal Casimirs (k = 1/2 for SO(3): c = 2) mean equal metrics
        w = [1, -2, 1, 2]
        a = evaluate_word(SU2, w, [0.5, 0.9], rep="spin:1")
        b = evaluate_word(make_group("SO", 3, 0.5), w, [0.5, 0.9])
        c_so3 = make_group("SO", 3, 0.5).rep("fundamental").casimir
        assert c_so3 == pytest.approx(SU2.rep("spin:1").casimir)
        assert a.value == pytest.approx(b.value, abs=1e-12)


def test_power_class_function_on_general_loop():
    # tr U^2 on a figure-eight: E[tr (A B^-1)^2] for U(1) is the charge-2 character:
    # exp(-4 lambda (A1 + A2) / 2) (Sengupta 1997, abelian case)
    r = evaluate_polygon(make_group("U", 1), FIG8, coupling=0.3, rep="power:2")
    assert r.value == pytest.approx(np.exp(-4 * 0.3 * 2 / 2), abs=1e-12)

"""Tests of the exact evaluation of polygonal loops (lasso decomposition + tensors)."""

from math import factorial

import numpy as np
import pytest
import sympy

from discretize import arrangement
from holonomy.exact import evaluate_polygon, evaluate_word, lasso_word, reduce_for_trace
from holonomy.groups import make_group

SQUARE = [(0, 0), (1, 0), (1, 1), (0, 1)]
FIG8 = [(0, 0), (2, 2), (2, 0), (0, 2)]  # two unit-area lobes of opposite orientation


def star(p, q, r=1.0):
    th = 2 * np.pi * q * np.arange(p) / p + 0.1
    return np.c_[r * np.cos(th), r * np.sin(th)]


def limacon(m=40, a=1.0, b=0.5):
    th = 2 * np.pi * (np.arange(m) + 0.5) / m
    r = b + a * np.cos(th)
    return np.c_[r * np.cos(th), r * np.sin(th)]


# rectilinear lattice loops (integer vertices, proper crossings only)
NESTED = [(2, 0), (4, 0), (4, 4), (0, 4), (0, 1), (3, 1), (3, 3), (2, 3)]
WIND_2_1_M1 = [(1, 0), (4, 0), (4, 4), (0, 4), (0, 1), (3, 1), (3, 3), (2, 3), (2, -2),
               (-1, -2), (-1, -1), (1, -1)]
COMMUTATOR = [(0, 0), (3, 0), (3, 2), (1, 2), (1, -1), (2, -1), (2, 3), (0, 3)]
# loops whose reduced words stay entangled (no closed form): X Y^-1 X Y, and a
# three-variable word with six crossings and a face of winding 0
ENTANGLED_2 = [(0, 0), (4, 0), (4, 3), (1, 3), (1, 2), (3, 2), (3, 1), (2, 1), (2, 4), (0, 4)]
ENTANGLED_3 = [(3, 0), (2, 0), (2, 4), (1, 4), (1, 1), (4, 1), (4, 3), (0, 3), (0, 2), (3, 2)]
ENTANGLED_3B = [(3, 1), (0, 1), (0, 2), (4, 2), (4, 4), (1, 4), (1, 0), (2, 0), (2, 3), (3, 3)]


# -- independent references -------------------------------------------------------


def casimir_u(lam, N, k):
    # U(N) Casimir of the irreducible with highest weight lam, metric -k tr:
    # c = (1/k) sum_i lam_i (lam_i + N + 1 - 2 i) (from memory; e.g. Levy 2008,
    # Adv. Math. 218, sec. 1.2; Rains 1997, J. Theoret. Probab. 10, sec. 2)
    return sum(l * (l + N + 1 - 2 * i) for i, l in enumerate(lam, start=1)) / k


def schur_dim(lam, N):
    # hook-content formula: s_lam(1^N) = prod (N + content) / hook
    # (Stanley, "Enumerative Combinatorics" vol. 2, 1999, Cor. 7.21.4)
    conj = [sum(1 for l in lam if l > j) for j in range(lam[0])]
    out = 1.0
    for i, row in enumerate(lam):
        for j in range(row):
            out *= (N + j - i) / (row - j + conj[j] - i - 1)
    return out


def wound_loop(n, N, t, family="U", k=None):
    # E[tr_N U_t^n] / N by the hook expansion p_n = sum_k (-1)^k s_(n-k,1^k) and
    # E[s_lam(U_t)] = s_lam(1^N) exp(-c(lam) t / 2) (Rains 1997, J. Theoret. Probab. 10,
    # Thm 4.? from memory; Levy 2008 Adv. Math. 218, sec. 3). SU(N): the u(1) part of
    # the Casimir |lam|^2 / (k N) is removed.
    k = N if k is None else k
    tot = 0.0
    for j in range(min(n, N)):
        lam = [n - j] + [1] * j
        c = casimir_u(lam, N, k)
        if family == "SU":
            c -= n**2 / (k * N)
        tot += (-1) ** j * schur_dim(lam, N) * np.exp(-c * t / 2)
    return tot / N


# -- closed forms -------------------------------------------------------------------


GROUPS = [("U", 1, "trace"), ("SU", 2, "physics"), ("U", 2, "large-n"), ("SO", 3, "trace"),
          ("SU", 3, "trace"), ("Sp", 1, "physics")]


class TestSimpleLoop:
    @pytest.mark.parametrize("spec", GROUPS)
    @pytest.mark.parametrize("area", [0.7, -0.4, 0.3 + 0.5j])
    def test_exp_casimir(self, spec, area):
        # simple loop: E[tr pi(H)] / dim = exp(-c lambda A / 2) (Levy 2003, Mem. AMS 166,
        # Prop. 2.?; Sengupta 1997, Mem. AMS 126); negative/complex area: continuation
        G = make_group(*spec)
        c = G.rep("fundamental").casimir
        r = evaluate_polygon(G, np.array(SQUARE) * 2.0, coupling=area / 4)
        assert r.value == pytest.approx(np.exp(-c * area / 2), abs=1e-12)
        assert r.method == "lasso"  # every variable occurs once: no contraction

    def test_casimir_reference_values(self):
        # standard values (Georgi 1999, ch. 7-8, from memory): SU(N) fundamental, k = 2: (N^2 - 1) / (2N)
        # (Georgi, "Lie Algebras in Particle Physics", 1999, ch. 7)
        r = evaluate_word(make_group("SU", 3, "physics"), [1], [1.0])
        assert r.value == pytest.approx(np.exp(-(8 / 6) / 2), abs=1e-12)

    def test_symbolic_taylor(self):
        # exact Taylor coefficients (-c/2)^m A^m / m! of exp(-c lambda A / 2)
        lam, A = sympy.symbols("lambda A")
        G = make_group("SU", 2, "physics")  # c = 3/4 (spin 1/2, j(j+1))
        r = evaluate_word(G, [1], [A], coupling=lam, exact=True)
        ser = sympy.series(r.value, lam, 0, 6).removeO()
        for m in range(6):
            expect = (-sympy.Rational(3, 8)) ** m * A**m / factorial(m)
            assert sympy.simplify(ser.coeff(lam, m) - expect) == 0


class TestU1:
    @pytest.mark.parametrize("poly,turns", [(FIG8, 1), (star(5, 2), 2), (NESTED, 1),
                                            (WIND_2_1_M1, 1), (COMMUTATOR, 3),
                                            (star(7, 3), 1)])
    def test_winding_formula(self, poly, turns):
        # U(1): E[H] = exp(-lambda sum_F n_F^2 |F| / 2) (README.md "Conventions";
        # Levy 2003, Mem. AMS 166, sec. 2.?: abelian case, Gaussian phases)
        G = make_group("U", 1)
        arr = arrangement(poly, turns)
        r = evaluate_polygon(G, poly, turns, coupling=0.3)
        expect = np.exp(-0.3 * np.sum(arr.winding**2 * arr.areas) / 2)
        assert r.value == pytest.approx(expect, abs=1e-12)

    @pytest.mark.parametrize("poly", [FIG8, star(7, 2), star(8, 3), limacon(), WIND_2_1_M1,
                                      COMMUTATOR])
    def test_abelianized_word_is_winding(self, poly):
        # the abelianization of the lasso word is the winding-number vector
        # (Levy 2010, Asterisque 329, sec. 2.4: lassos generate the loop group)
        arr = arrangement(poly, 2)
        w = lasso_word(arr)
        counts = np.zeros(arr.n_faces, int)
        for x in w:
            counts[abs(x) - 1] += np.sign(x)
        np.testing.assert_array_equal(counts, arr.winding)


class TestWoundLoops:
    @pytest.mark.parametrize("family,N", [("U", 2), ("U", 3), ("SU", 2), ("SU", 3)])
    @pytest.mark.parametrize("n", [2, 3, 4])
    def test_hook_expansion(self, family, N, n):
        G = make_group(family, N, "large-n")
        t = 0.8
        r = evaluate_polygon(G, np.array(SQUARE) * 2, turns=n, coupling=t / 4)
        assert r.value == pytest.approx(wound_loop(n, N, t, family), abs=1e-12)

    @pytest.mark.parametrize("family,N,n", [("U", 2, 3), ("SU", 3, 4), ("U", 3, 2)])
    def test_matches_closed_form_library(self, family, N, n):
        # the closed-form library (holonomy.exact.unitary_wound_loop, hook expansion,
        # Rains 1997) and the tensor route agree to 1e-12, also at complex time
        from holonomy.exact import unitary_wound_loop

        G = make_group(family, N, "large-n")
        for t in (0.9, 0.4 - 0.8j):
            r = evaluate_polygon(G, SQUARE, turns=n, coupling=t)
            ref = unitary_wound_loop(N, n, t, special=family == "SU", k=N)
            assert r.value == pytest.approx(complex(ref), abs=1e-12)

    def test_other_metric(self):
        G = make_group("U", 3, "physics")
        r = evaluate_polygon(G, SQUARE, turns=3, coupling=1.3)
        assert r.value == pytest.approx(wound_loop(3, 3, 1.3, "U", k=2.0), abs=1e-12)

    def test_symbolic_twice_wound(self):
        # U(N), n = 2: E[tr U^2]/N = (s_(2)(1^N) e^{-c_(2) t/2} - s_(1,1)(1^N) e^{-c_(1,1) t/2}) / N
        # with k = N: c_(2) = 2 + 2/N, c_(1,1) = 2 - 2/N (Rains 1997); Taylor coefficients are
        # rational in N; check N = 2, 3 exactly
        lam = sympy.Symbol("lambda")
        for N in (2, 3):
            G = make_group("U", N, "large-n")
            r = evaluate_word(G, [1, 1], [1], coupling=lam, exact=True)
            Ns = sympy.Integer(N)
            s2, s11 = Ns * (Ns + 1) / 2, Ns * (Ns - 1) / 2
            ref = (s2 * sympy.exp(-(2 + 2 / Ns) * lam / 2)
                   - s11 * sympy.exp(-(2 - 2 / Ns) * lam / 2)) / Ns
            d = sympy.series(r.value - ref, lam, 0, 6).removeO()
            assert sympy.simplify(d) == 0
            # first-order coefficient -n^2/2 = -2, as in the free limit
            # exp(-nt/2) sum_k (-t)^k/k! n^(k-1) binom(n, k+1) (Biane 1997, "Free Brownian
            # motion, free stochastic calculus and random matrices", Fields Inst. Commun. 12)
            assert sympy.series(r.value, lam, 0, 2).removeO().coeff(lam, 1) == -2


class TestIndependentFaces:
    @pytest.mark.parametrize("spec", GROUPS)
    def test_figure_eight(self, spec):
        # opposite lobes: two independent single-occurrence lassos (Levy 2003):
        # exp(-c a / 2) exp(-c b / 2)
        G = make_group(*spec)
        c = G.rep("fundamental").casimir
        v = np.array([(0, 0), (3, 3), (3, 0), (1, 2)], float)
        arr = arrangement(v)
        r = evaluate_polygon(G, v, coupling=0.4)
        assert r.value == pytest.approx(np.exp(-c * 0.4 * arr.areas.sum() / 2), abs=1e-12)

    @pytest.mark.parametrize("family,N", [("U", 2), ("SU", 2), ("SU", 3)])
    def test_nested(self, family, N):
        # limacon: inner face wound twice, annulus once; the word is X_a^2 X_b up to
        # conjugation, so E = E[tr U_{a}^2]/N exp(-c b / 2) (lasso decomposition and
        # independence, Levy 2003; hook formula as above)
        G = make_group(family, N, "large-n")
        c = G.rep("fundamental").casimir
        arr = arrangement(limacon())
        a = arr.areas[arr.winding == 2][0]
        b = arr.areas[arr.winding == 1][0]
        r = evaluate_polygon(G, limacon(), coupling=1.7)
        ref = wound_loop(2, N, 1.7 * a, family) * np.exp(-c * 1.7 * b / 2)
        assert r.value == pytest.approx(ref, abs=1e-12)

    def test_merge_preserves_value(self):
        # merging always-adjacent variables uses p_s * p_t = p_{s+t} (heat semigroup,
        # e.g. Levy 2003 sec. 1.?): X Y Z X Y Z^-1 has the law of W Z W Z^-1
        G = make_group("SU", 2, "physics")
        w = [1, 2, 3, 1, 2, -3]
        red = reduce_for_trace(w, [0.3, 0.5, 0.2])
        assert len(red.word) == 4 and red.times[0] == pytest.approx(0.8)
        r = evaluate_word(G, w, [0.3, 0.5, 0.2])
        r2 = evaluate_word(G, [1, 2, 1, -2], [0.8, 0.2])
        assert r.value == pytest.approx(r2.value, abs=1e-13)

    @pytest.mark.parametrize("seed", range(6))
    def test_reduction_against_full_contraction(self, seed):
        # the reduced evaluation equals the unreduced tensor contraction of the same word
        # (both exact; checks cancellation, merging and dropping)
        from holonomy.exact._tensor import contract_numeric

        G = make_group("SU", 2, "physics")
        rng = np.random.default_rng(seed)
        w = [int(x) for x in rng.choice([1, 2, 3, -1, -2, -3], size=7)]
        times = [0.3, 0.7, 1.1]
        full = contract_numeric(G.basis, tuple(w), times) / 2
        r = evaluate_word(G, w, times)
        assert r.value == pytest.approx(full, abs=1e-12)


def lattice_loop_mc(G, poly, lam, size, seed):
    """Monte Carlo of a rectilinear lattice loop in lattice axial gauge (DEVELOPERS.md:
    vertical links Id, R(i, y) = (Q_ref ... Q_{y-1})^{-1}); plaquettes iid heat kernel at
    time lam (unit cells). Independent of the lasso construction; the law of lattice
    holonomies with iid plaquettes in axial gauge is the discrete Yang-Mills measure
    (Driver 1989, Comm. Math. Phys. 123, sec. 3; Levy 2003)."""
    rng = np.random.default_rng(seed)
    poly = np.asarray(poly, int)
    x0, y0 = poly.min(0)
    x1, y1 = poly.max(0)
    nx, ny = x1 - x0, y1 - y0
    Q = G.heat_kernel(lam, size * nx * ny, rng=rng).reshape(size, nx, ny, G.N, G.N)
    # R[:, i, j] for heights y0 + j, j = 0..ny: cumulative products from the bottom
    R = np.empty((size, nx, ny + 1, G.N, G.N), complex)
    P = np.broadcast_to(np.eye(G.N), (size, nx, G.N, G.N)).astype(complex)
    R[:, :, 0] = P
    for j in range(ny):
        P = P @ Q[:, :, j]
        R[:, :, j + 1] = G.inv(P)
    H = np.broadcast_to(np.eye(G.N), (size, G.N, G.N)).astype(complex)
    pts = list(poly) + [poly[0]]
    for a, b in zip(pts[:-1], pts[1:]):
        if a[1] == b[1]:
            step = 1 if b[0] > a[0] else -1
            for x in range(a[0], b[0], step):
                i, j = (x - x0, a[1] - y0) if step > 0 else (x - 1 - x0, a[1] - y0)
                link = R[:, i, j] if step > 0 else G.inv(R[:, i, j])
                H = H @ link
    tr = np.trace(H, axis1=-2, axis2=-1).real / G.N
    return tr.mean(), tr.std(ddof=1) / np.sqrt(size)


class TestMonteCarlo:
    # lattice Monte Carlo in axial gauge vs the exact value, 4 standard errors (RULES);
    # SU(2) heat kernel sampled exactly. Plausible wrong words (X Y X Y, X^2 Y^2,
    # X Y X^-1 Y^-1 instead of X Y^-1 X Y; similar for three letters) differ from the
    # exact value by >= 0.08 and 0.045 here, about 12 and 6 standard errors.
    @pytest.mark.parametrize("poly,lam", [(ENTANGLED_2, 0.25), (ENTANGLED_3, 0.5)])
    def test_su2_entangled(self, poly, lam):
        G = make_group("SU", 2, "physics")
        r = evaluate_polygon(G, poly, coupling=lam)
        assert len(set(abs(x) for x in r.reduced.word)) >= 2
        mean, se = lattice_loop_mc(G, poly, lam, 6000, seed=20261202)
        assert abs(mean - r.value.real) < 4 * se
        assert abs(r.value.imag) < 1e-12

    @pytest.mark.slow
    @pytest.mark.parametrize("poly,turns", [(NESTED, 1), (WIND_2_1_M1, 1), (COMMUTATOR, 1),
                                            (SQUARE, 3), (ENTANGLED_3B, 1), (ENTANGLED_2, 2)])
    def test_su2_lattice_axial(self, poly, turns):
        G = make_group("SU", 2, "physics")
        lam = 0.35
        mean, se = lattice_loop_mc(G, list(poly) * turns, lam, 40000, seed=20261203)
        r = evaluate_polygon(G, poly, turns, coupling=lam)
        assert abs(mean - r.value.real) < 4 * se


    @pytest.mark.slow
    @pytest.mark.parametrize("spec", [("U", 2, "large-n"), ("SO", 3, "trace")])
    def test_other_groups_entangled(self, spec):
        # U(2), SO(3): heat kernel exact in law (the SU(2) angle law, holonomy.groups)
        G = make_group(*spec)
        r = evaluate_polygon(G, ENTANGLED_2, coupling=0.25)
        mean, se = lattice_loop_mc(G, ENTANGLED_2, 0.25, 12000, seed=20261204)
        assert abs(mean - r.value.real) < 4 * se


class TestExactAndContinuation:
    def test_exact_polygon_matches_numeric(self):
        # the sympy route (exact spectral projectors) and the floating route (eigh) agree
        lam = sympy.Symbol("lambda")
        G = make_group("SU", 2, "physics")
        r = evaluate_polygon(G, ENTANGLED_3, coupling=lam, exact=True)
        num = evaluate_polygon(G, ENTANGLED_3, coupling=0.5)
        assert complex(r.value.subs(lam, sympy.Rational(1, 2)).evalf(30)) == pytest.approx(
            num.value, abs=1e-12)
        # lattice vertices: areas are exact integers, so Taylor coefficients are rational
        c2 = sympy.series(r.value, lam, 0, 3).removeO().coeff(lam, 2)
        assert c2.is_Rational

    @pytest.mark.parametrize("coupling", [-0.3, 0.2 + 0.7j])
    def test_continuation(self, coupling):
        # negative / complex coupling: the numeric value is the analytic continuation of
        # the exact expression (an entire function of the times)
        lam = sympy.Symbol("lambda")
        G = make_group("U", 2, "large-n")
        r = evaluate_polygon(G, ENTANGLED_2, coupling=lam, exact=True)
        num = evaluate_polygon(G, ENTANGLED_2, coupling=coupling)
        ref = complex(r.value.subs(lam, sympy.nsimplify(coupling)).evalf(30))
        assert num.value == pytest.approx(ref, abs=1e-12)

    def test_sp1_equals_su2(self):
        # Sp(1) is isomorphic to SU(2) (Hall 2015, "Lie Groups, Lie Algebras,
        # and Representations", sec. 1.2), same metric: same Wilson loops
        a = evaluate_polygon(make_group("Sp", 1, "physics"), ENTANGLED_3, coupling=0.7)
        b = evaluate_polygon(make_group("SU", 2, "physics"), ENTANGLED_3, coupling=0.7)
        assert a.value == pytest.approx(b.value, abs=1e-12)

    def test_constant_density(self):
        G = make_group("SU", 2, "physics")
        a = evaluate_polygon(G, ENTANGLED_2, coupling=0.3, area_density=2.0)
        b = evaluate_polygon(G, ENTANGLED_2, coupling=0.6)
        assert a.value == pytest.approx(b.value, abs=1e-14)

    def test_area_form_signed(self):
        # piecewise-constant signed density: U(1) value exp(-lambda sum n_F^2 mu(F) / 2)
        # with mu integrated by hand on the unit cells (the density is -1 on x in [1, 2])
        from discretize import AreaForm

        G = make_group("U", 1)
        form = AreaForm(base=1.0, rects=((1.0, -10.0, 2.0, 10.0, -1.0),))
        arr = arrangement(NESTED)
        # NESTED: inner face [2,3]x[1,3] (winding 2, density 1); the annulus has 2 of its
        # 12 unit cells... computed below cell by cell
        cells = [(i + 0.5, j + 0.5) for i in range(4) for j in range(4)]
        mu = np.zeros(arr.n_faces)
        from matplotlib.path import Path

        for x, y in cells:
            for f in range(arr.n_faces):
                if Path(arr.face_polygon(f)).contains_point((x, y)):
                    mu[f] += -1.0 if 1 <= x <= 2 else 1.0
        r = evaluate_polygon(G, NESTED, coupling=0.4, area_density=form)
        assert r.value == pytest.approx(np.exp(-0.4 * np.sum(arr.winding**2 * mu) / 2), abs=1e-12)
        assert np.sum(mu) < arr.areas.sum()  # the signed rectangle took effect


class TestBadInput:
    G = make_group("SU", 2, "physics")

    def test_area_not_finite(self):
        with pytest.raises(ValueError, match=r"`face_areas\[1\]` must be finite"):
            evaluate_word(self.G, [1, 2, 1], [1.0, np.inf])

    def test_too_large(self):
        with pytest.raises(ValueError, match=r"size limit: .*4096 x 4096.*use Monte Carlo"):
            evaluate_word(self.G, [1, 2, 1, -2] * 6, [1.0, 1.0], max_dim=1024)

    def test_word(self):
        with pytest.raises(ValueError, match="`word` must be a sequence of nonzero integers"):
            evaluate_word(self.G, [1, 0], [1.0])

    def test_missing_areas(self):
        with pytest.raises(ValueError, match="`face_areas` must give one area per face"):
            evaluate_word(self.G, [1, 2], [1.0])

    def test_group(self):
        with pytest.raises(TypeError, match="`group` must be a Group"):
            evaluate_word("SU(2)", [1], [1.0])

    def test_nearly_degenerate_polygon(self):
        with pytest.raises(ValueError, match="too close to degenerate"):
            evaluate_polygon(self.G, [(0, 0), (2, 0), (2, 2), (1, 1e-13), (0, 2)])

"""Tests for traces of formal Gaussian Lie-algebra words, holonomy._lie_words."""


import numpy as np
import pytest
import scipy.special
import sympy

from holonomy import (
    casimir_tensor,
    formal_word_trace,
    formal_word_trace_exact,
    pairing_group_factor,
    pairing_group_factor_exact,
    perfect_matchings,
)
from holonomy.groups import make_group

COV3 = np.array([[1.0, 0.4, -0.2], [0.4, 0.9, 0.3], [-0.2, 0.3, 0.7]])
WORDS = [(0, 0), (0, 1), (0, 0, 1, 1), (0, 1, 0, 1), (0, 1, 2, 0, 1, 2), (2, 0, 1, 1, 0, 2),
         (0, 0, 0, 1, 1, 2)]


def _delta_omega(family, N, k):
    """Casimir tensors of the defining representations as Kronecker deltas.

    Cvitanovic 2008, Group Theory (Princeton UP), ch. 9 (U(n), SU(n) completeness
    relation) and ch. 10 (SO(n)) -- from memory:
    u(N):  -(1/k) d_il d_jk;  su(N): -(1/k)(d_il d_jk - d_ij d_kl / N);
    so(N): (1/(2k))(d_ik d_jl - d_il d_jk).
    """
    d = np.eye(N)
    twist = np.einsum("il,jk->ijkl", d, d)
    trace = np.einsum("ij,kl->ijkl", d, d)
    straight = np.einsum("ik,jl->ijkl", d, d)
    if family == "U":
        return -twist / k
    if family == "SU":
        return -(twist - trace / N) / k
    return (straight - twist) / (2 * k)


class TestCasimirTensor:
    @pytest.mark.parametrize("family, n", [("U", 1), ("U", 2), ("U", 3), ("SU", 2),
                                           ("SU", 3), ("SU", 4), ("SO", 3), ("SO", 4)])
    @pytest.mark.parametrize("metric", ["trace", "physics", 3.5])
    def test_delta_form(self, family, n, metric):
        g = make_group(family, n, metric)
        np.testing.assert_allclose(casimir_tensor(g), _delta_omega(family, g.N, g.k),
                                   atol=1e-13)

    @pytest.mark.parametrize("family, n, metric, c", [
        # Casimir constants (Georgi 1999, Lie Algebras in Particle Physics, ch. 7-8;
        # from memory): SU(N) k=2: (N^2-1)/(2N); SU(N) k=N: 1 - 1/N^2;
        # U(N) k=N: 1; SO(N) k=1: (N-1)/2
        ("SU", 2, "physics", 3 / 4), ("SU", 3, "physics", 4 / 3), ("SU", 3, "large-n", 8 / 9),
        ("U", 3, "large-n", 1.0), ("SO", 4, "trace", 1.5), ("SO", 3, "trace", 1.0)])
    def test_casimir_constant(self, family, n, metric, c):
        # E[tr A^2] with C = [[1]] is tr sum_a X_a^2 = -c N
        g = make_group(family, n, metric)
        assert formal_word_trace(g, [0, 0], [[1.0]]) == pytest.approx(-c * g.N)
        exact = formal_word_trace_exact(family, [0, 0], [[1]], n=n,
                                        k=sympy.nsimplify(g.k))
        assert float(exact) == pytest.approx(-c * g.N)


class TestUnitaryExactInN:
    def test_closed_form_four_points(self):
        # u(N): sum_a X_a Y X_a = -(1/k) tr(Y) Id and sum_a X_a^2 = -(N/k) Id (Levy 2008,
        # Adv. Math. 218; Cvitanovic 2008 ch. 9), so with C = Id:
        # E[tr A0 A0 A1 A1] = N^3/k^2 and E[tr A0 A1 A0 A1] = N/k^2
        N, k = sympy.symbols("N k", positive=True)
        eye = sympy.eye(2)
        assert sympy.simplify(formal_word_trace_exact("U", [0, 0, 1, 1], eye)
                              - N ** 3 / k ** 2) == 0
        assert sympy.simplify(formal_word_trace_exact("U", [0, 1, 0, 1], eye)
                              - N / k ** 2) == 0

    def test_cycle_count(self):
        # G(D) = (-1/k)^(n/2) N^(#cycles(gamma sigma)) (Levy 2008): genus expansion; the
        # planar pairings of 2n points number Catalan(n) and have n + 1 cycles
        for n in (2, 3, 4):
            # at N = 10, k = 1 the factor is (-1)^n 10^(#cycles); #cycles <= n + 1
            planar = sum(1 for D in perfect_matchings(2 * n)
                         if pairing_group_factor_exact("U", D, n=10, k=1)
                         == (-1) ** n * 10 ** (n + 1))
            # Catalan numbers from scipy.special.comb
            assert planar == scipy.special.comb(2 * n, n, exact=True) // (n + 1)

    @pytest.mark.parametrize("family", ["U", "SU", "SO"])
    @pytest.mark.parametrize("N", [2, 3, 4])
    @pytest.mark.parametrize("metric", ["trace", "physics"])
    def test_exact_in_n_matches_numeric(self, family, N, metric):
        g = make_group(family, N, metric)
        Ns, ks = sympy.symbols("N k", positive=True)
        C = sympy.Matrix([[1, sympy.Rational(2, 5), sympy.Rational(-1, 5)],
                          [sympy.Rational(2, 5), sympy.Rational(9, 10), sympy.Rational(3, 10)],
                          [sympy.Rational(-1, 5), sympy.Rational(3, 10), sympy.Rational(7, 10)]])
        for word in WORDS:
            expr = formal_word_trace_exact(family, word, C)
            val = float(expr.subs({Ns: N, ks: sympy.nsimplify(g.k)}))
            num = formal_word_trace(g, word, COV3)
            assert val == pytest.approx(num, rel=1e-10, abs=1e-12)


class TestMonteCarlo:
    @pytest.mark.parametrize("family, n, metric, word, seed", [
        ("SU", 2, "physics", (0, 1, 2, 0, 1, 2), 1),
        ("SU", 2, "physics", (0, 0, 1, 1, 2, 2), 2),
        ("SU", 3, "trace", (0, 1, 0, 1), 3),
        ("SU", 3, "physics", (2, 0, 1, 1, 0, 2), 4),
        ("SO", 4, "trace", (0, 1, 2, 0, 1, 2), 5),
        ("SO", 4, "trace", (0, 0, 1, 1), 6),
    ])
    def test_positive_definite_vs_plain_mc(self, family, n, metric, word, seed):
        # plain Monte Carlo: eta_{e,.} ~ N(0, C (x) Id) from numpy's multivariate normal
        # (reference library); 4 standard errors at a fixed seed
        g = make_group(family, n, metric)
        rng = np.random.default_rng(seed)
        samples = 60_000
        eta = rng.multivariate_normal(np.zeros(3), COV3, size=(samples, g.dim))
        A = np.einsum("sae,aij->seij", eta, g.basis)  # (samples, edge, N, N)
        P = A[:, word[0]]
        for e in word[1:]:
            P = P @ A[:, e]
        vals = np.trace(P, axis1=-2, axis2=-1)
        est = vals.real.mean()
        se = vals.real.std(ddof=1) / np.sqrt(samples)
        formal = formal_word_trace(g, word, COV3)
        assert abs(est - formal) <= 4 * se
        assert se < 0.05 * abs(formal)  # the check is sharp


class TestStructure:
    def test_matching_count(self):
        # (2n-1)!! pairings (Isserlis 1918; scipy.special.factorial2)
        for n in range(0, 6):
            got = len(list(perfect_matchings(2 * n)))
            assert got == (scipy.special.factorial2(2 * n - 1, exact=True) if n else 1)
        assert list(perfect_matchings(5)) == []

    def test_odd_words_vanish(self):
        g = make_group("SU", 2, "physics")
        assert formal_word_trace(g, [0, 1, 2], COV3) == 0
        assert formal_word_trace_exact("SU", [0, 1, 2], COV3) == 0
        assert formal_word_trace(g, [0, 1], COV3) != 0

    def test_indefinite_symbolic(self):
        # symbolic C: a polynomial in the entries (Isserlis 1918); u(N) factors as above:
        # pairings (01)(23) and (03)(12) are planar (N^3/k^2), (02)(13) crosses (N/k^2)
        a, b, c = sympy.symbols("a b c")
        N, k = sympy.symbols("N k", positive=True)
        C = sympy.Matrix([[a, b], [b, c]])
        got = formal_word_trace_exact("U", [0, 1, 0, 1], C)
        want = a * c * N / k ** 2 + 2 * b ** 2 * N ** 3 / k ** 2
        assert sympy.simplify(got - want) == 0

    def test_numeric_group_factor_matches_exact(self):
        g = make_group("SO", 3, "trace")
        omega = casimir_tensor(g)
        for D in perfect_matchings(6):
            assert pairing_group_factor(omega, D).real == pytest.approx(
                float(pairing_group_factor_exact("SO", D, n=3, k=1)), abs=1e-12)


class TestValidation:
    def test_errors(self):
        g = make_group("SU", 2, "physics")
        with pytest.raises(ValueError, match=r"`word` must be a sequence of edge indices "
                                             r"in \[0, 3\); got 3"):
            formal_word_trace(g, [0, 3], COV3)
        with pytest.raises(ValueError, match=r"`cov` must be symmetric"):
            formal_word_trace(g, [0, 1], [[1.0, 0.5], [0.0, 1.0]])
        with pytest.raises(ValueError, match=r"`cov` must have finite entries"):
            formal_word_trace(g, [0, 0], [[np.nan]])
        with pytest.raises(ValueError, match=r"`family` must be one of"):
            formal_word_trace_exact("Sp", [0, 0], [[1]])
        with pytest.raises(ValueError, match=r"`partner` must be a perfect pairing"):
            pairing_group_factor_exact("U", (1, 0, 2))
        with pytest.raises(ValueError, match=r"`rep` must have Lie-algebra matrices"):
            formal_word_trace(g, [0, 0], [[1.0]], rep="power:2")
        with pytest.raises(TypeError, match=r"`group` must be a Group"):
            formal_word_trace("SU2", [0, 0], [[1.0]])

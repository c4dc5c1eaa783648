"""Tests for the perturbative series of products of Gaussian exponentials,
holonomy._series."""

import itertools
import math

import numpy as np
import pytest
import scipy.linalg
import scipy.stats
import sympy

from holonomy import SeriesResult, exp_product_series, formal_word_trace
from holonomy.groups import make_group
from noise import ArgumentError, ArgumentTypeError, complex_factor

LAM = sympy.Symbol("lam")
R = sympy.Rational


def taylor(expr, order):
    """Taylor coefficients of expr in LAM up to LAM^order (sympy.series)."""
    poly = sympy.series(expr, LAM, 0, order + 1).removeO()
    return [sympy.expand(poly).coeff(LAM, j) for j in range(order + 1)]


def su2_step(t):
    """E[tr exp(X)] / 2 for SU(2), k = 2, X Gaussian with variance t per component:
    (1 - t/4) exp(-t/8) (the characteristic function of a 3-d Gaussian; checked against
    scipy.stats.chi(3).expect in test_su2_step_formula)."""
    return (1 - t / 4) * sympy.exp(-t / 8)


class TestSingleExponential:
    @pytest.mark.parametrize("metric, k", [("trace", 1), ("physics", 2), (3.0, 3)])
    def test_u1(self, metric, k):
        # U(1): E[exp(i theta)] = exp(-var/2), theta ~ N(0, lam t / k) (characteristic
        # function of the normal law), i.e. c_j = (-c t/2)^j / j! with c = 1/k
        g = make_group("U", 1, metric)
        t = R(3, 2)
        res = exp_product_series(g, [[t]], 5, exact=True)
        c = R(1, k)
        assert res.coefficients == [(-c * t / 2) ** j / sympy.factorial(j)
                                    for j in range(6)]
        assert all(isinstance(x, sympy.Rational) for x in res.coefficients)

    def test_su2_step_formula(self):
        # the closed form itself, against a reference library: with k = 2 the basis is
        # i sigma_a / 2, so tr exp(X) / 2 = cos(|eta| / 2) and |eta| = sqrt(t) chi_3
        for t in (0.3, 1.0, 4.0):
            val = scipy.stats.chi(3).expect(lambda r: np.cos(np.sqrt(t) * r / 2))
            assert float(su2_step(t)) == pytest.approx(val, rel=1e-10)

    @pytest.mark.parametrize("t", [R(1), R(3, 2), R(-2, 3)])
    def test_su2_exact(self, t):
        # Taylor coefficients of (1 - t lam/4) exp(-t lam/8), exactly (sympy.series);
        # negative t is the formal (indefinite) case
        g = make_group("SU", 2, "physics")
        res = exp_product_series(g, [[t]], 5, exact=True)
        assert res.coefficients == taylor(su2_step(t * LAM), 5)

    def test_su2_float(self):
        g = make_group("SU", 2, "physics")
        res = exp_product_series(g, [[1.5]], 5)
        want = [float(c) for c in taylor(su2_step(R(3, 2) * LAM), 5)]
        np.testing.assert_allclose(res.coefficients, want, rtol=1e-12, atol=1e-15)

    @pytest.mark.parametrize("N, order", [(2, 5), (3, 4)])
    def test_un_laguerre(self, N, order):
        # U(N), k = N: E[tr exp(X)] / N = exp(-t/(2N)) L^{(1)}_{N-1}(t/N) / N
        # (Haagerup & Thorbjornsen 2003, Expo. Math. 21, 293-337)
        g = make_group("U", N, "large-n")
        t = R(5, 4)
        res = exp_product_series(g, [[t]], order, exact=True)
        f = sympy.exp(-t * LAM / (2 * N)) * sympy.assoc_laguerre(N - 1, 1, t * LAM / N) / N
        assert res.coefficients == taylor(f, order)


class TestProducts:
    def test_backtrack_is_identity(self):
        # exp(A) exp(-A) = Id: covariance t [[1, -1], [-1, 1]] gives 1, 0, 0, ...
        for family, n, metric in [("SU", 2, "physics"), ("U", 3, "trace"), ("SO", 4, "trace")]:
            g = make_group(family, n, metric)
            t = R(7, 3)
            res = exp_product_series(g, sympy.Matrix([[t, -t], [-t, t]]), 4, exact=True)
            assert res.coefficients == [1, 0, 0, 0, 0]
            res = exp_product_series(g, np.array([[2.0, -2.0], [-2.0, 2.0]]), 4)
            np.testing.assert_allclose(res.coefficients, [1, 0, 0, 0, 0], atol=1e-13)

    def test_independent_edges_rectangle(self):
        # a W-column rectangle in the `linear` scheme: W independent steps of variance
        # s H each, so E[W] = f(s H)^W with f the SU(2) Gaussian step (su2_step above)
        g = make_group("SU", 2, "physics")
        W, sH = 5, R(3, 4)
        res = exp_product_series(g, sH * sympy.eye(W), 4, exact=True)
        assert res.coefficients == taylor(su2_step(sH * LAM) ** W, 4)

    def test_independent_edges_indefinite(self):
        # independent steps multiply also for negative variances, as formal series
        g = make_group("SU", 2, "physics")
        ts = [R(1), R(-1, 2), R(2)]
        res = exp_product_series(g, sympy.diag(*ts), 4, exact=True)
        want = taylor(sympy.Mul(*[su2_step(t * LAM) for t in ts]), 4)
        assert res.coefficients == want

    def test_symbolic_covariance(self):
        # C = [[s]]: c_j = (Taylor coefficient at t = 1) s^j
        s = sympy.Symbol("s")
        g = make_group("SU", 2, "physics")
        res = exp_product_series(g, sympy.Matrix([[s]]), 3, exact=True)
        want = taylor(su2_step(LAM), 3)
        assert [sympy.expand(c - w * s ** j) for j, (c, w)
                in enumerate(zip(res.coefficients, want))] == [0] * 4

    @pytest.mark.parametrize("family, n, metric", [("SU", 2, "physics"), ("SO", 3, "trace")])
    def test_matches_word_enumeration(self, family, n, metric):
        # the transfer over edges equals the literal expansion: sum over non-decreasing
        # words with weight prod 1/n_e!, each word by the Wick rule (Isserlis 1918)
        g = make_group(family, n, metric)
        C = np.array([[1.0, 0.5, -0.3], [0.5, -0.8, 0.4], [-0.3, 0.4, 0.6]])
        M = 3
        res = exp_product_series(g, C, M)
        for j in range(M + 1):
            total = 0.0
            for counts in itertools.product(range(2 * j + 1), repeat=3):
                if sum(counts) != 2 * j:
                    continue
                word = [e for e in range(3) for _ in range(counts[e])]
                w = 1.0 / math.prod(math.factorial(c) for c in counts)
                total += w * formal_word_trace(g, word, C)
            assert res.coefficients[j] == pytest.approx(total / g.N, rel=1e-10, abs=1e-14)

    def test_nonfundamental_rep(self):
        # SU(2) spin 1: chi_1(exp(X)) / 3 = (1 + 2 cos|eta|) / 3 for k = 2; compare the
        # series at small lam with scipy.stats.chi(3).expect (truncation O(lam^6))
        g = make_group("SU", 2, "physics")
        res = exp_product_series(g, [[1.0]], 5, rep="spin:1")
        lam = 0.1
        val = scipy.stats.chi(3).expect(lambda r: (1 + 2 * np.cos(np.sqrt(lam) * r)) / 3)
        assert res.value(lam) == pytest.approx(val, abs=1e-9)
        assert res.coefficients[1] == pytest.approx(-2 / 2)  # -c/2, c_spin1 = j(j+1) = 2


def _expm(A):
    """Batched matrix exponential by numpy.linalg.eig (V e^w V^-1); spot-checked
    against scipy.linalg.expm (reference library), which is slow on large batches."""
    w, V = np.linalg.eig(A)
    out = V @ (np.exp(w)[..., None] * np.linalg.inv(V))
    for i in (0, len(A) // 2, len(A) - 1):
        np.testing.assert_allclose(out[i], scipy.linalg.expm(A[i]), atol=1e-10)
    return out


def _mc_exp_product(group, cov, lam, samples, rng, complex_rotation=False):
    """Plain (or complex-rotation) Monte Carlo of E[tr exp(A_1) ... exp(A_m)] / N."""
    m = cov.shape[0]
    if complex_rotation:
        L = complex_factor(cov)
        z = rng.standard_normal((samples, group.dim, m))
        eta = np.sqrt(lam) * z @ L.T
    else:
        eta = rng.multivariate_normal(np.zeros(m), lam * cov, size=(samples, group.dim))
    A = np.einsum("sae,aij->seij", eta, group.basis)
    H = _expm(A[:, 0])
    for e in range(1, m):
        H = H @ _expm(A[:, e])
    vals = np.trace(H, axis1=-2, axis2=-1) / group.N
    return vals.mean(), vals.real.std(ddof=1) / np.sqrt(samples), \
        vals.imag.std(ddof=1) / np.sqrt(samples)


class TestMonteCarlo:
    # an axial-type covariance: edges at heights in two columns (min structure)
    COV = np.array([[1.0, 0.6, 0.0, 0.0], [0.6, 1.5, 0.0, 0.0],
                    [0.0, 0.0, 0.8, -0.8], [0.0, 0.0, -0.8, 1.2]])

    def test_positive_definite(self):
        g = make_group("SU", 2, "physics")
        lam = 0.6
        res = exp_product_series(g, self.COV, 5)
        est, se, _ = _mc_exp_product(g, self.COV, lam, 40_000, np.random.default_rng(11))
        tail = abs(res.term(lam, 5))  # size of the last kept term bounds the truncation
        assert abs(est.real - res.value(lam)) <= 4 * se + tail
        # sharp: the lam^2 term is far larger than the error bar
        assert abs(res.term(lam, 2)) > 10 * (4 * se + tail)

    def test_indefinite_vs_complex_rotation(self):
        # indefinite C: complex rotation eta = L z (C = L L^T, L complex) with
        # complex matrices exp'd by scipy.linalg.expm; the expectation is analytic in
        # L and equals the formal series (Isserlis 1918 term by term)
        C = np.array([[1.0, 0.9, 0.2], [0.9, -0.6, 0.3], [0.2, 0.3, 0.5]])
        assert np.min(np.linalg.eigvalsh(C)) < 0
        g = make_group("SU", 2, "physics")
        lam = 0.6
        res = exp_product_series(g, C, 5)
        est, se_r, se_i = _mc_exp_product(g, C, lam, 60_000, np.random.default_rng(5),
                                          complex_rotation=True)
        tail = abs(res.term(lam, 5))
        assert abs(est.real - res.value(lam)) <= 4 * se_r + tail
        assert abs(est.imag) <= 4 * se_i + tail
        assert abs(res.term(lam, 1)) > 10 * (4 * se_r + tail)


class TestValidation:
    def test_errors(self):
        g = make_group("SU", 2, "physics")
        # the one order rule of every series entry point (holonomy.series_order_iv)
        for order, cls in ((-1, ArgumentError), (21, ArgumentError), (2.0, ArgumentTypeError)):
            with pytest.raises(cls) as info:
                exp_product_series(g, [[1.0]], order)
            assert info.value.argument == "order"
        with pytest.raises(ValueError, match=r"`cov` must be a non-empty square matrix"):
            exp_product_series(g, np.ones((2, 3)), 2)
        with pytest.raises(ValueError, match=r"`cov` must be symmetric"):
            exp_product_series(g, [[1.0, 0.2], [0.3, 1.0]], 2)
        with pytest.raises(ValueError, match=r"`cov` must have finite entries"):
            exp_product_series(g, [[np.inf]], 2)
        with pytest.raises(ValueError, match=r"`exact` group factors are available for "
                                             r"the defining representation"):
            exp_product_series(g, [[1]], 2, rep="adjoint", exact=True)
        with pytest.raises(ValueError, match=r"`exact` must be True or False"):
            exp_product_series(g, [[1]], 2, exact="yes")
        with pytest.raises(ValueError, match=r"`order` must be in \[0, 2\]"):
            exp_product_series(g, [[1.0]], 2).value(0.1, order=3)

    def test_order_zero_and_result(self):
        g = make_group("SU", 2, "physics")
        res = exp_product_series(g, [[1.0]], 0)
        assert isinstance(res, SeriesResult) and res.coefficients == [1.0]
        assert res.dim == 2 and res.rep == "fundamental"

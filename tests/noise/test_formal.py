"""Tests for the formal (Wick) Gaussian layer, noise._formal."""

import math
from fractions import Fraction

import numpy as np
import pytest
import scipy.integrate
import scipy.linalg
import scipy.special
import scipy.stats
import sympy
import sympy.stats

from noise import ComplexRotationResult, FormalGaussian, complex_rotation_estimate


def _isserlis_bruteforce(C, idx):
    """Literal Isserlis sum over all pairings of the positions of ``idx``.

    Isserlis 1918, Biometrika 12, 134-139: E[x_1 ... x_2n] = sum over the (2n-1)!!
    pairings of the product of the paired covariances; odd moments vanish.
    """
    n = len(idx)
    if n % 2:
        return 0
    if n == 0:
        return 1
    first, rest = idx[0], idx[1:]
    total = 0
    for k in range(len(rest)):
        total += C[first][rest[k]] * _isserlis_bruteforce(C, rest[:k] + rest[k + 1:])
    return total


def _symbolic_cov(m):
    c = {}
    for i in range(m):
        for j in range(i, m):
            c[i, j] = c[j, i] = sympy.Symbol(f"c{i}{j}")
    return sympy.Matrix(m, m, lambda i, j: c[i, j])


class TestIsserlis:
    def test_four_points(self):
        # Isserlis 1918, Biometrika 12: E[x1 x2 x3 x4] = c12 c34 + c13 c24 + c14 c23
        C = _symbolic_cov(4)
        got = FormalGaussian(C).moment([0, 1, 2, 3])
        want = C[0, 1] * C[2, 3] + C[0, 2] * C[1, 3] + C[0, 3] * C[1, 2]
        assert sympy.expand(got - want) == 0

    def test_six_points(self):
        # Isserlis 1918, Biometrika 12: 15 pairings of six points
        C = _symbolic_cov(6)
        got = FormalGaussian(C).moment(range(6))
        want = _isserlis_bruteforce(C.tolist(), list(range(6)))
        assert sympy.expand(got - want) == 0
        assert len(sympy.expand(got).args) == 15

    @pytest.mark.parametrize("idx", [(0, 0, 1, 1), (0, 1, 1, 2, 2, 2), (0, 0, 0, 0, 1, 2),
                                     (2, 2, 2, 2, 2, 2, 1, 1)])
    def test_repeated_indices(self, idx):
        # Isserlis 1918 applies to repeated variables position by position
        C = _symbolic_cov(3)
        got = FormalGaussian(C).moment(idx)
        assert sympy.expand(got - _isserlis_bruteforce(C.tolist(), list(idx))) == 0

    @pytest.mark.parametrize("n", range(0, 11))
    def test_even_power(self, n):
        # E[x^(2n)] = (2n-1)!! C^n (Isserlis 1918; double factorial from scipy.special)
        c = sympy.Symbol("c")
        got = FormalGaussian(sympy.Matrix([[c]])).moment([0] * (2 * n))
        assert sympy.expand(got - scipy.special.factorial2(2 * n - 1, exact=True)
                            * c ** n) == 0 if n else got == 1

    def test_symbolic_variance_vs_sympy_stats(self):
        # reference library: sympy.stats moments of Normal(0, sigma)
        s = sympy.Symbol("sigma", positive=True)
        X = sympy.stats.Normal("X", 0, s)
        g = FormalGaussian(sympy.Matrix([[s ** 2]]))
        for p in (2, 4, 6, 8):
            assert sympy.simplify(g.moment([0] * p) - sympy.stats.E(X ** p)) == 0

    @pytest.mark.parametrize("n", range(0, 9))
    def test_pairing_count(self, n):
        # (2n-1)!! = (2n)! / (2^n n!) (classical; scipy.special.factorial2), and the
        # number of pairings enumerated by brute force.
        pts = list(range(2 * n))

        def count(p):
            if not p:
                return 1
            return sum(count(p[1:k] + p[k + 1:]) for k in range(1, len(p)))

        want = math.factorial(2 * n) // (2 ** n * math.factorial(n))
        assert FormalGaussian.pairing_count(2 * n) == want
        assert want == (scipy.special.factorial2(2 * n - 1, exact=True) if n else 1)
        if n <= 5:
            assert count(pts) == want
        assert FormalGaussian.pairing_count(2 * n + 1) == 0

    def test_memoization_is_polynomial(self):
        # integration by parts memoized on exponent vectors: at most prod (n_j + 1)
        # states, although the pairing count is 39!! ~ 3e23
        g = FormalGaussian([[2, 1], [1, 3]])
        got = g.moment([0] * 20 + [1] * 20)
        assert len(g._memo) <= 21 * 21
        # independent route, Gaussian regression (textbook conditioning): x1 = b x0 + w
        # with b = C01 / C00 and w ~ N(0, C11 - C01^2 / C00) independent of x0, and the
        # 1-D moments E[y^(2n)] = (2n-1)!! var^n
        b, v = sympy.Rational(1, 2), sympy.Rational(5, 2)

        def m1(var, p):
            return 0 if p % 2 else sympy.factorial2(p - 1) * var ** (p // 2)

        want = sum(sympy.binomial(20, k) * b ** k * m1(2, 20 + k) * m1(v, 20 - k)
                   for k in range(21))
        assert got == want

    def test_gauss_hermite_quadrature(self):
        # E[x0^6 x1^4] by tensor Gauss-Hermite quadrature (numpy.polynomial.hermite_e,
        # exact for polynomials of degree <= 2n - 1 per variable) after x = L z with
        # the Cholesky factor (scipy.linalg.cholesky)
        C = np.array([[2.0, 1.0], [1.0, 3.0]])
        z, w = np.polynomial.hermite_e.hermegauss(12)
        L = scipy.linalg.cholesky(C, lower=True)
        Z = np.stack(np.meshgrid(z, z, indexing="ij"), axis=-1).reshape(-1, 2)
        W = np.outer(w, w).reshape(-1) / (2 * np.pi)
        X = Z @ L.T
        val = np.sum(W * X[:, 0] ** 6 * X[:, 1] ** 4)
        got = FormalGaussian(C).moment([0] * 6 + [1] * 4)
        assert got == pytest.approx(val, rel=1e-12)


class TestExactness:
    def test_fractions_give_rationals(self):
        # E[x0^2 x1^2] = C00 C11 + 2 C01^2 (Isserlis 1918)
        g = FormalGaussian([[Fraction(1, 2), Fraction(1, 3)], [Fraction(1, 3), 2]])
        got = g.moment([0, 0, 1, 1])
        assert isinstance(got, sympy.Rational) and got == sympy.Rational(11, 9)

    def test_sympy_rationals(self):
        r = sympy.Rational
        g = FormalGaussian(sympy.Matrix([[r(1, 3), r(-1, 5)], [r(-1, 5), r(2, 7)]]))
        got = g.moment([0, 0, 0, 1])  # 3 C00 C01 (Isserlis 1918)
        assert got == 3 * r(1, 3) * r(-1, 5)

    def test_float_gives_float(self):
        g = FormalGaussian(np.array([[1.0, 0.5], [0.5, 2.0]]))
        got = g.moment([0, 0, 1, 1])
        assert isinstance(got, float) and got == pytest.approx(1.0 * 2.0 + 2 * 0.25)

    def test_complex_symmetric(self):
        C = np.array([[1 + 1j, 0.5j], [0.5j, 2.0]])
        got = FormalGaussian(C).moment([0, 0, 1, 1])
        assert isinstance(got, complex)
        assert got == pytest.approx(_isserlis_bruteforce(C.tolist(), [0, 0, 1, 1]))

    def test_singular_semidefinite(self):
        # x = v z with z ~ N(0, 1): E[x0^2 x1^2] = v0^2 v1^2 E[z^4] = 3 v0^2 v1^2
        v = [sympy.Integer(2), sympy.Integer(-3)]
        C = sympy.Matrix(2, 2, lambda i, j: v[i] * v[j])
        assert FormalGaussian(C).moment([0, 0, 1, 1]) == 3 * 4 * 9

    def test_odd_moments_are_zero_and_even_are_not(self):
        # a centred Gaussian law is symmetric: odd moments vanish (Isserlis 1918)
        g = FormalGaussian([[1, 2], [2, -1]])
        assert g.moment([0, 1, 1]) == 0
        assert g.moment([0]) == 0
        assert g.moment([0, 1]) == 2
        assert g.linear_form_moment([1, 2], 3) == 0
        assert g.expect(sympy.Symbol("x_0") ** 3) == 0


class TestExpect:
    def test_symbolic_polynomial(self):
        # Isserlis 1918 term by term; covariance and coefficients symbolic
        a, b, c, s = sympy.symbols("a b c s")
        g = FormalGaussian(sympy.Matrix([[a, b], [b, c]]))
        x0, x1 = sympy.symbols("x_0:2")
        got = g.expect(s * x0 ** 2 * x1 ** 2 + x0 * x1 + 7 + x0 ** 3)
        assert sympy.expand(got - (s * (a * c + 2 * b ** 2) + b + 7)) == 0

    def test_dict_of_monomials(self):
        g = FormalGaussian([[1, 2], [2, -1]])
        got = g.expect({(2, 0): 3, (1, 1): 5, (0, 4): 1})
        assert got == 3 * 1 + 5 * 2 + 3 * 1  # E[x1^4] = 3 C11^2

    def test_custom_symbols(self):
        u, v = sympy.symbols("u v")
        g = FormalGaussian([[1, 2], [2, -1]])
        assert g.expect(u * v, symbols=[u, v]) == 2

    def test_linear_form_moment_matches_expansion(self):
        # E[<a, x>^p] = (p-1)!! (a^T C a)^(p/2) (Isserlis 1918), against the expanded
        # polynomial evaluated monomial by monomial
        C = sympy.Matrix([[2, 1, 0], [1, -3, 1], [0, 1, 1]])
        g = FormalGaussian(C)
        x = sympy.symbols("x_0:3")
        a = [1, -2, 3]
        q = (sympy.Matrix(a).T * C * sympy.Matrix(a))[0, 0]
        for p in range(0, 9):
            want = (scipy.special.factorial2(p - 1, exact=True) * q ** (p // 2)
                    if p % 2 == 0 else 0) if p else 1
            assert g.linear_form_moment(a, p) == want
            assert g.expect(sum(ai * xi for ai, xi in zip(a, x)) ** p) == want

    def test_exp_moment_formal_identity(self):
        # exp(a^T C a / 2) = sum_p E[<a, x>^p] / p! as a power series in a scale s
        s = sympy.Symbol("s")
        C = sympy.Matrix([[2, 1], [1, -3]])
        g = FormalGaussian(C)
        a = [s, 2 * s]
        lhs = sympy.series(g.exp_moment(a), s, 0, 9).removeO()
        rhs = sum(g.linear_form_moment([1, 2], p) * s ** p / sympy.factorial(p)
                  for p in range(9))
        assert sympy.expand(lhs - rhs) == 0

    def test_exp_moment_positive_vs_quadrature(self):
        # E[exp(a x)] for x ~ N(0, c): scipy.integrate.quad against the normal density
        c, a = 0.7, 1.3
        val, _ = scipy.integrate.quad(
            lambda x: np.exp(a * x) * scipy.stats.norm.pdf(x, scale=np.sqrt(c)), -40, 40)
        assert FormalGaussian([[c]]).exp_moment([a]) == pytest.approx(val, rel=1e-10)


POLY_INDEF = "x_0**2*x_1**2 + 3*x_0*x_1*x_2**2 - x_2**4 + 2*x_0*x_2 + x_1**2*x_2**2*x_0**2"


class TestMonteCarlo:
    def test_indefinite_vs_complex_rotation(self):
        # unbiasedness of x = L z, L L^T = C, for polynomials (Isserlis 1918: moments
        # depend on L only through L L^T); 4 standard errors, fixed seed
        C = np.array([[1.0, 0.8, 0.3], [0.8, -0.5, 0.2], [0.3, 0.2, 0.6]])
        assert np.min(np.linalg.eigvalsh(C)) < 0
        f = sympy.sympify(POLY_INDEF)
        formal = FormalGaussian(C).expect(f)
        res = complex_rotation_estimate(C, f, 400_000, rng=20260101)
        assert isinstance(res, ComplexRotationResult) and res.samples == 400_000
        assert abs(res.estimate.real - formal) <= 4 * res.stderr_real
        assert abs(res.estimate.imag) <= 4 * res.stderr_imag
        # sharp: the error bar is small compared with the value
        assert res.stderr < 0.05 * abs(formal)

    def test_complex_symmetric_vs_complex_rotation(self):
        C = np.array([[1.0 + 0.5j, 0.3], [0.3, 0.5 - 0.2j]])
        x0, x1 = sympy.symbols("x_0:2")
        f = x0 ** 2 * x1 ** 2 + x0 ** 3 * x1
        formal = FormalGaussian(C).expect(f)
        res = complex_rotation_estimate(C, f, 200_000, rng=7)
        assert abs(res.estimate.real - formal.real) <= 4 * res.stderr_real
        assert abs(res.estimate.imag - formal.imag) <= 4 * res.stderr_imag

    def test_positive_vs_plain_monte_carlo(self):
        # plain Monte Carlo with numpy's multivariate normal sampler (reference library)
        C = np.array([[1.0, 0.4, 0.2], [0.4, 0.8, -0.3], [0.2, -0.3, 0.5]])
        rng = np.random.default_rng(12345)
        x = rng.multivariate_normal(np.zeros(3), C, size=400_000)
        f = sympy.sympify(POLY_INDEF)
        vals = sympy.lambdify(sympy.symbols("x_0:3"), f)(x[:, 0], x[:, 1], x[:, 2])
        est, se = vals.mean(), vals.std(ddof=1) / np.sqrt(len(vals))
        formal = FormalGaussian(C).expect(f)
        assert abs(est - formal) <= 4 * se
        assert se < 0.05 * abs(formal)

    def test_reproducible(self):
        C = [[1.0, 2.0], [2.0, -1.0]]
        f = lambda x: x[:, 0] * x[:, 1]  # noqa: E731
        r1 = complex_rotation_estimate(C, f, 1000, rng=3, chunk=100)
        r2 = complex_rotation_estimate(C, f, 1000, rng=3, chunk=100)
        assert r1.estimate == r2.estimate


class TestValidation:
    @pytest.mark.parametrize("cov, match", [
        (np.ones((2, 3)), r"`cov` must be a non-empty square matrix.*\(2, 3\)"),
        (np.ones(3), r"`cov` must be a non-empty square matrix.*\(3,\)"),
        (np.zeros((0, 0)), r"`cov` must be a non-empty square matrix"),
        (np.array([[1.0, 2.0], [0.0, 1.0]]), r"`cov` must be symmetric.*2"),
        (np.array([[1.0, 1j], [-1j, 1.0]]), r"`cov` must be symmetric.*not Hermitian"),
        ([[1, 2], [3, 4]], r"`cov` must be symmetric.*C\[0, 1\] = 2"),
        (np.array([[np.nan, 0.0], [0.0, 1.0]]), r"`cov` must have finite entries; got nan"),
        (np.array([[np.inf, 0.0], [0.0, 1.0]]), r"`cov` must have finite entries; got inf"),
        (sympy.Matrix([[sympy.oo, 0], [0, 1]]), r"`cov` must have finite entries; got oo"),
        (np.array([["a", "b"], ["b", "a"]]), r"`cov` must hold numbers"),
    ])
    def test_cov(self, cov, match):
        with pytest.raises(ValueError, match=match):
            FormalGaussian(cov)

    def test_arguments(self):
        g = FormalGaussian([[1, 0], [0, 1]])
        with pytest.raises(ValueError, match=r"`indices` must be a sequence of integers "
                                             r"in \[0, 2\); got 2"):
            g.moment([0, 2])
        with pytest.raises(ValueError, match=r"`indices` must be.*got 0.5"):
            g.moment([0.5])
        with pytest.raises(ValueError, match=r"`p` must be a non-negative integer; got -1"):
            g.linear_form_moment([1, 1], -1)
        with pytest.raises(ValueError, match=r"`a` must be a vector of length 2"):
            g.exp_moment([1, 2, 3])
        with pytest.raises(ValueError, match=r"`poly` must be a polynomial"):
            g.expect(sympy.sin(sympy.Symbol("x_0")))
        with pytest.raises(ValueError, match=r"`poly` keys must be exponent tuples"):
            g.expect({(1,): 1})
        with pytest.raises(ValueError, match=r"`m` must be a non-negative integer"):
            FormalGaussian.pairing_count(-2)

    def test_complex_rotation_arguments(self):
        C = [[1.0, 0.0], [0.0, -1.0]]
        with pytest.raises(ValueError, match=r"`samples` must be an integer >= 2; got 1"):
            complex_rotation_estimate(C, lambda x: x[:, 0], 1)
        with pytest.raises(ValueError, match=r"`f` must be a callable"):
            complex_rotation_estimate(C, 3, 10)
        with pytest.raises(ValueError, match=r"`f` must return one value per sample"):
            complex_rotation_estimate(C, lambda x: x, 10)
        with pytest.raises(ValueError, match=r"`cov` must be numeric"):
            complex_rotation_estimate(sympy.Matrix([[sympy.Symbol("a")]]),
                                      lambda x: x[:, 0], 10)
        with pytest.raises(ValueError, match=r"`cov` must be symmetric"):
            complex_rotation_estimate([[1.0, 2.0], [0.0, 1.0]], lambda x: x[:, 0], 10)

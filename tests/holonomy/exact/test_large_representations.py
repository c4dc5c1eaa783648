"""The largest representations a spec accepts (dimension <= 64: the adjoint of U(8),
SU(8), SO(11), Sp(5); spin:63/2): each exact value is either checked against a
published formula or null with a note naming the limit, and quickly.

Outside checks:
- A simple loop of area A under the heat-kernel measure: E[chi_pi(U)] / dim =
  exp(-c_pi lambda A / 2) for an irreducible pi (A. A. Migdal 1975, Sov. Phys. JETP 42,
  413; B. K. Driver 1989, Comm. Math. Phys. 123, 575; T. Levy 2003, Mem. AMS 166,
  "Yang-Mills measure on compact surfaces", Theorem 2.4.3 (number from memory)).
- Adjoint Casimirs for the metric -k Re tr(XY): SU(N) 2N/k (C_A = N for k = 2, H.
  Georgi 1999, "Lie Algebras in Particle Physics", Chapter 13 (from memory)); SO(N)
  (N - 2)/k (the defining value (N - 1)/(2k) times the ratio C_A / C_F = 2(N - 2)/(N - 1),
  P. Cvitanovic 2008, "Group Theory", Table 9.? (from memory)); Sp(n) 2(n + 1)/k (the
  dual Coxeter number n + 1 in the normalisation where Sp(1) = SU(2) has C_A = 2 at
  k = 2; V. G. Kac 1990, "Infinite dimensional Lie algebras", Section 6.1 (from memory)).
- The adjoint of U(N) is the trivial representation plus the adjoint of SU(N) (the
  centre acts trivially): (1 + (N^2 - 1) exp(-2N lambda A / (2k))) / N^2.
- U(N), k = N, one Gaussian exponential: exp(-t/(2N)) L^(1)_{N-1}(t/N) / N (Haagerup and
  Thorbjornsen 2003, Expo. Math. 21, 293-337), Taylor coefficients by sympy.
- SU(2) spin j, one Gaussian exponential X = sum_a Z_a X_a (k = 2, X_a = -i sigma_a / 2):
  pi(X) has eigenvalues i mu |Z| (mu = -j..j) and E|Z|^(2m) = s^m (2m + 1)!! for Z
  standard normal in R^3 with variance s (chi distribution with 3 degrees of freedom,
  N. L. Johnson, S. Kotz and N. Balakrishnan 1994, "Continuous Univariate
  Distributions", Vol. 1, Chapter 18), so c_m = (-1)^m (2m + 1)!! sum_mu mu^(2m) /
  ((2m)! (2j + 1)).
"""

from __future__ import annotations

import math
import pickle
import time
from fractions import Fraction

import pytest
import scipy.special
import sympy

from holonomy import gaussian_matrix
from holonomy.exact import ExactRouteError
from holonomy.experiment import exact_results, parse_spec
from holonomy.groups import FAMILIES, MAX_REP_DIM, algebra_dimension, make_group


def _spec(family, n, metric, rep, *, turns=1, coupling=0.7):
    # a square of side 0.5 on a grid of spacing 0.5: one cell, area 1/4
    return parse_spec(
        f'name = "big"\n[group]\nfamily = "{family}"\nn = {n}\nmetric = "{metric}"\n'
        f'[field]\ncoupling = {coupling}\nspacing = 0.5\n[[loops]]\nname = "sq"\n'
        f'vertices = [[0.0, 0.0], [0.5, 0.0], [0.5, 0.5], [0.0, 0.5]]\nturns = {turns}\n'
        f'[observable]\nrep = "{rep}"\n', purpose="exact")


K = {"trace": 1.0, "physics": 2.0}


@pytest.mark.parametrize("family,n,metric,casimir", [
    ("SU", 8, "physics", lambda n, k: 2 * n / k),
    ("SO", 11, "trace", lambda n, k: (n - 2) / k),
    ("Sp", 5, "physics", lambda n, k: 2 * (n + 1) / k),
])
def test_largest_accepted_adjoint_simple_loop(family, n, metric, casimir):
    assert algebra_dimension(family, n) <= MAX_REP_DIM < algebra_dimension(family, n + 1)
    t0 = time.monotonic()
    row = exact_results(_spec(family, n, metric, "adjoint"))["results"][0]
    assert time.monotonic() - t0 < 30
    c = casimir(n, K[metric])
    assert row["exact"] == pytest.approx(math.exp(-c * 0.7 * 0.25 / 2), rel=1e-12)
    # the Gaussian-matrix series of an adjoint this large is over the work limit: a note
    assert row["gaussian_matrix"] is None and "size limit" in row["gaussian_matrix_note"]


def test_largest_accepted_u_adjoint_is_trivial_plus_su_adjoint():
    row = exact_results(_spec("U", 8, "physics", "adjoint"))["results"][0]
    expected = (1 + 63 * math.exp(-2 * 8 / 2 * 0.7 * 0.25 / 2)) / 64
    assert row["exact"] == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("family,n", [("SO", 11), ("Sp", 5)])
def test_largest_accepted_adjoint_wound_twice_is_null_with_a_size_note(family, n):
    """No closed form for a wound adjoint outside U(n)/SU(n): the tensor route would
    need a 55^2 x 55^2 moment matrix, above `max_dim`: null, with the limit named."""
    t0 = time.monotonic()
    row = exact_results(_spec(family, n, "physics", "adjoint", turns=2))["results"][0]
    assert time.monotonic() - t0 < 30
    assert row["exact"] is None and "size limit" in row["exact_note"]


def test_gaussian_matrix_refuses_over_the_work_limit_before_any_work():
    G = make_group("SU", 8, "physics")
    t0 = time.monotonic()
    with pytest.raises(ExactRouteError) as info:
        gaussian_matrix(G, "adjoint", 1.0, 1.0, 4)
    assert info.value.limit == "size" and time.monotonic() - t0 < 5


@pytest.mark.slow
def test_unitary_32_laguerre_by_exact_group_factors():
    """U(32): the float Casimir tensor is over the work limit; the exact factors are
    summed directly (the coefficients the floats were rounded to, 240 s before)."""
    N = 32
    G = make_group("U", N, "large-n")
    t0 = time.monotonic()
    g = gaussian_matrix(G, "fundamental", Fraction(7, 10), 1.0, order=4)
    assert time.monotonic() - t0 < 30
    x = sympy.Symbol("x")
    f = sympy.exp(-x / (2 * N)) * sympy.assoc_laguerre(N - 1, 1, x / N) / N
    taylor = sympy.series(f.subs(x, x * sympy.Rational(7, 10)), x, 0, 5).removeO()
    for j in range(5):
        assert sympy.Rational(g.rationals[j]) == taylor.coeff(x, j)
    ref = math.exp(-0.7 / (2 * N)) * scipy.special.eval_genlaguerre(N - 1, 1, 0.7 / N) / N
    assert abs(g.value - ref) < 1e-12


def test_spin_63_2_gaussian_series_by_the_chi_moments():
    j2 = 63
    G = make_group("SU", 2, "physics")
    t0 = time.monotonic()
    g = gaussian_matrix(G, f"spin:{j2}/2", 1.0, 1.0, order=4)
    assert time.monotonic() - t0 < 30
    mus = [Fraction(j2 - 2 * i, 2) for i in range(j2 + 1)]
    for m in range(5):
        dfact = math.prod(range(1, 2 * m + 2, 2))
        c = Fraction((-1) ** m * dfact) * sum(mu ** (2 * m) for mu in mus) / (
            math.factorial(2 * m) * (j2 + 1))
        assert g.coefficients[m] == pytest.approx(float(c), rel=1e-11)


@pytest.mark.parametrize("family", FAMILIES)
def test_algebra_dimension_is_the_basis_size(family):
    for n in range(max(1, {"SU": 2, "SO": 2}.get(family, 1)), 7):
        assert algebra_dimension(family, n) == make_group(family, n).dim


def test_exact_route_error_survives_pickling():
    """The series command's child processes send it back to the parent (it used to
    fail to unpickle: an internal error on a wound adjoint of SO(11))."""
    e = pickle.loads(pickle.dumps(ExactRouteError("size", "a 3025 x 3025 matrix")))
    assert e.limit == "size" and str(e) == "size limit: a 3025 x 3025 matrix"

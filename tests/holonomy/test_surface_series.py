"""Series at fixed total area on closed surfaces: holonomy.surface_series and
holonomy.exact.zero_instanton_series(exact=True).

Checks against things outside the route:
- the Taylor coefficients of the exact surface value itself (character sum or dual
  route), recovered by a Chebyshev fit on small couplings (numpy.polynomial; the value is
  an entire function of lambda up to O(exp(-pi^2 / beta)), beta = s lambda T / 2,
  negligible on the fitted range);
- SU(2), k = 2, simple loop on the sphere: the zero-instanton sector
  (1 - tau/4) exp(-tau/8), tau = lambda A (T - A) / T (J. A. Minahan and A. P.
  Polychronakos 1994, Nucl. Phys. B 422, 172; from memory), whose order-2 coefficient
  (5/128) tau^2 / lambda^2 tends to the Gaussian-matrix 5/128 (lambda A)^2 as T grows,
  against the plane's 9/128 (the Taylor coefficient of exp(-3 lambda A / 8));
- U(1) on any surface: the zero-flux sector exp(-lambda (S2 - S1^2/T) / (2k))
  (E. Witten 1991, Commun. Math. Phys. 141, 153, abelian case; from memory);
- the torus note's formula: sum_{n >= 1} e^{-eps (n^2 - 1)} = e^eps (sqrt(pi/eps) - 1)/2
  up to O(e^{-pi^2/eps}) (Poisson summation of the Jacobi theta function; E. T.
  Whittaker and G. N. Watson 1927, A Course of Modern Analysis, Section 21.51).
"""

import math
from fractions import Fraction

import numpy as np
import pytest
import sympy

from discretize import Grid, LatticeLoop, Loop
from holonomy import surface_series
from holonomy.exact import (exact_surface_wilson_loop, surface_partition_function,
                            zero_instanton_series)
from holonomy.groups import make_group

SQUARE = Loop.polygon([(0, 0), (1, 0), (1, 1), (0, 1)])
FIG8 = Loop.polygon([(0, 0), (2, 2), (2, 0), (0, 1)])


def taylor_by_fit(f, lo, hi, order, degree=11):
    """The first Taylor coefficients at 0 of an entire f, from a Chebyshev fit on
    [lo, hi] (numpy.polynomial.Chebyshev, converted to the power basis)."""
    x = (lo + hi) / 2 + (hi - lo) / 2 * np.cos(np.pi * (np.arange(40) + 0.5) / 40)
    y = np.array([f(v) for v in x])
    fit = np.polynomial.Chebyshev.fit(x, y, degree)
    return fit.convert(kind=np.polynomial.Polynomial).coef[: order + 1]


@pytest.mark.parametrize("family, n, rep", [("SU", 2, "fundamental"), ("SU", 2, "spin:1"),
                                            ("SU", 3, "fundamental"), ("SO", 3, "fundamental"),
                                            ("Sp", 2, "fundamental")])
def test_sphere_series_are_the_taylor_coefficients_of_the_exact_value(family, n, rep):
    G = make_group(family, n, "physics")
    res = surface_series(G, rep, SQUARE, 3, genus=0, total_area=3.0)
    assert res.exact and all(sympy.sympify(c).is_Rational for c in res.coefficients)
    assert res.method == "zero-instanton sector (surface-character-sum)"

    def zero(lam):  # the surface value's zero-instanton part (Gauss-Hermite route)
        return exact_surface_wilson_loop(G, rep, SQUARE, coupling=lam, genus=0,
                                         total_area=3.0).zero_instanton.real
    fitted = taylor_by_fit(zero, 0.005, 0.8, 3)
    assert np.allclose([float(c) for c in res.coefficients], fitted, rtol=0, atol=1e-8)
    # and of the whole value at small couplings (other sectors below 1e-20 there)
    whole = taylor_by_fit(lambda lam: exact_surface_wilson_loop(
        G, rep, SQUARE, coupling=lam, genus=0, total_area=3.0).value.real, 0.02, 0.25, 2)
    assert np.allclose([float(c) for c in res.coefficients[:3]], whole, rtol=0, atol=1e-6)
    # the float route agrees with the exact one
    floats = zero_instanton_series(G, rep, 1.0, 3.0, 3)
    assert np.allclose([float(c) for c in res.coefficients], floats, rtol=0, atol=1e-13)


def test_su2_sphere_closed_form_and_the_two_orders_of_limits():
    G = make_group("SU", 2, "physics")
    lam = sympy.Symbol("lam")
    for T in (Fraction(5, 2), Fraction(4), Fraction(10**6)):
        c = zero_instanton_series(G, "fundamental", 1, T, 4, exact=True)
        tau = lam * (T - 1) / T
        want = sympy.series((1 - tau / 4) * sympy.exp(-tau / 8), lam, 0, 5).removeO()
        assert [sympy.nsimplify(want.coeff(lam, m)) for m in range(5)] == c
    # order 2 as T grows: 5/128 (Gaussian matrix) against the plane's 9/128
    c2 = [zero_instanton_series(G, "fundamental", 1, T, 2, exact=True)[2]
          for T in (10, 10**3, 10**6)]
    assert [abs(float(c) - 5 / 128) for c in c2] == sorted(
        [abs(float(c) - 5 / 128) for c in c2], reverse=True)
    assert abs(float(c2[-1]) - 5 / 128) < 1e-7
    assert abs(float(c2[-1]) - 9 / 128) > 0.03


def test_u1_any_loop_any_genus():
    for k in (1, 2):
        G = make_group("U", 1, k)
        for genus in (0, 1, 3):
            res = surface_series(G, "fundamental", FIG8, 3, genus=genus, total_area=4.0)
            # lobes 1/3 (winding -1) and 4/3 (winding +1): S1 = 1, S2 = 5/3
            kappa = sympy.Rational(1, 2 * k) * (sympy.Rational(5, 3) - sympy.Rational(1, 4))
            assert res.exact and res.coefficients == [
                (-kappa) ** m / sympy.factorial(m) for m in range(4)]

            def value(lam, part="value"):
                r = exact_surface_wilson_loop(G, "fundamental", FIG8, coupling=lam,
                                              genus=genus, total_area=4.0)
                return getattr(r, part).real
            assert np.allclose([float(c) for c in res.coefficients], taylor_by_fit(
                lambda x: value(x, "zero_instanton"), 0.005, 0.8, 3), atol=1e-8)
            # the whole value where the other flux sectors are below 1e-10
            assert np.allclose([float(c) for c in res.coefficients[:3]],
                               taylor_by_fit(value, 0.01, 0.2, 2), atol=1e-6)


def test_lattice_loops_give_rationals_and_the_limits_are_named():
    G = make_group("SU", 2, "physics")
    grid = Grid((0.0, 0.0), 0.25, (12, 12))
    lat = LatticeLoop.from_moves(grid, "R3 U2 L3 D2")  # area 6/16
    res = surface_series(G, "fundamental", lat, 2, genus=0, total_area=2.0)
    # c_1 = -c tau / 2, tau = A (T - A) / T, c = 3/4
    A, T = sympy.Rational(3, 8), 2
    assert res.coefficients[1] == -sympy.Rational(3, 8) * A * (T - A) / T
    with pytest.raises(NotImplementedError, match="half-integer powers"):
        surface_series(G, "fundamental", SQUARE, 2, genus=1, total_area=3.0)
    with pytest.raises(NotImplementedError, match="non-simple loop"):
        surface_series(G, "fundamental", FIG8, 2, genus=0, total_area=4.0)
    # a circle: irrational areas, float coefficients
    circle = Loop.circle((0, 0), 0.5, 64)
    res = surface_series(G, "fundamental", circle, 2, genus=0, total_area=2.0)
    assert not res.exact and isinstance(res.coefficients[1], float)


def test_torus_note_formula():
    # SU(2), k = 2: Z = sum_{n >= 1} e^{-eps (n^2 - 1)}, eps = lambda T / 8
    G = make_group("SU", 2, "physics")
    for lamT in (0.4, 1.0, 2.0):
        eps = lamT / 8
        z = surface_partition_function(G, 1, lamT, coupling=1.0)
        assert z == pytest.approx(math.exp(eps) * (math.sqrt(math.pi / eps) - 1) / 2,
                                  rel=1e-12)

"""The Gaussian-matrix prescription E[chi(exp X)] / dim for one Gaussian Lie-algebra
element X of variance lambda A per component.

Outside checks:
- U(N) with k = N: exp(-t/(2N)) L^(1)_{N-1}(t/N) / N (Haagerup and Thorbjornsen 2003,
  Expo. Math. 21, 293-337, the GUE moment generating function; equation number from
  memory), with scipy.special.eval_genlaguerre and its Taylor series by sympy.
- SU(2) with k = 2: (1 - t/4) exp(-t/8) (Gaussian integral of cos(r/2) over R^3,
  Gradshteyn and Ryzhik 2007, 3.952; the same value is the Wu-Mandelstam-Leibbrandt
  resummation of a simple loop: Staudacher and Krauth 1998, Phys. Rev. D 57, 2456,
  from memory).
- Monte Carlo over X = sum_a Z_a X_a (numpy.linalg.eigvalsh), within 4 standard errors.
- The exact simple loop exp(-c lambda A / 2) (Levy 2003) agrees at order 1 and
  differs from order 2 on.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.special
import sympy

from holonomy import gaussian_matrix
from holonomy.groups import make_group


@pytest.mark.parametrize("N", [1, 2, 3, 4])
def test_unitary_laguerre(N):
    G = make_group("U", N, "large-n")
    A, lam = 0.7, 1.3
    t = lam * A
    ref = math.exp(-t / (2 * N)) * scipy.special.eval_genlaguerre(N - 1, 1, t / N) / N
    g = gaussian_matrix(G, "fundamental", A, lam, order=5)
    assert abs(g.value - ref) < 1e-13
    x = sympy.Symbol("x")
    f = sympy.exp(-x / (2 * N)) * sympy.assoc_laguerre(N - 1, 1, x / N) / N
    taylor = sympy.series(f.subs(x, x * sympy.Rational(7, 10)), x, 0, 6).removeO()
    for j in range(6):
        assert sympy.Rational(g.rationals[j]) == taylor.coeff(x, j)
    if N == 1:
        assert g.first_difference is None      # abelian: the same as the heat kernel
    else:
        assert g.first_difference == 2


def test_su2_closed_form_and_difference_from_exact():
    G = make_group("SU", 2, "physics")
    for A in (0.5, 2.0, -1.5):           # a negative area is the formal continuation
        t = 1.1 * A
        g = gaussian_matrix(G, "fundamental", A, 1.1, order=4)
        assert abs(g.value - (1 - t / 4) * math.exp(-t / 8)) < 1e-14
    g = gaussian_matrix(G, "fundamental", 1.0, 1.0, order=4)
    assert g.rationals[:3] == ["1", "-3/8", "5/128"]
    # exp(-3 t / 8): c_2 = 9/128, the first coefficient that differs
    assert g.first_difference == 2 and abs(g.exact_coefficient - 9 / 128) < 1e-15


@pytest.mark.parametrize("family,n", [("U", 2), ("U", 3), ("SU", 2), ("SU", 3)])
def test_monte_carlo(family, n):
    G = make_group(family, n, "physics")
    A, lam, samples = 1.2, 1.5, 20000
    rng = np.random.default_rng(20261202)
    z = rng.normal(scale=math.sqrt(lam * A), size=(samples, G.dim))
    X = np.einsum("sa,aij->sij", z, G.basis)
    # X is anti-Hermitian: tr exp(X) = sum exp(i w) over the eigenvalues w of -iX
    w = np.exp(1j * np.linalg.eigvalsh(-1j * X)).sum(axis=-1).real / G.N
    est, se = w.mean(), w.std(ddof=1) / math.sqrt(samples)
    g = gaussian_matrix(G, "fundamental", A, lam)
    assert abs(est - g.value) < 4 * se, (est, se, g.value)


def test_series_in_other_reps_and_no_value():
    G = make_group("SU", 2, "physics")
    g = gaussian_matrix(G, "spin:1", 0.5, 1.0, order=3)
    assert g.value is None and "defining representation" in g.note
    # order 1 is the Casimir term -c A / 2 with c = j(j+1) = 2 for spin 1 (k = 2)
    assert abs(g.coefficients[1] + 0.5) < 1e-12 and g.first_difference == 2

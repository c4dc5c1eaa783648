"""Series of the exact value (heat scheme: the loop as snapped; continuum: the loop as
specified): Taylor coefficients of closed forms, to 1e-10.

Outside references:
- simple loop: exp(-c lambda A / 2) (Levy 2003, Mem. AMS 166; Casimirs: SO(N)
  defining with k = 1: (N - 1)/2, SU(2) with k = 2: 3/4), expanded by sympy.series.
- U(N) loop wound twice: E[tr U_t^2] / N = (d_(2) exp(-c_(2) t/2) - d_(1,1)
  exp(-c_(1,1) t/2)) / N with d = N(N +- 1)/2 and, for k = N, c = (2N +- 2)/N (power
  sum p_2 = s_(2) - s_(1,1); Rains 1997, J. Theoret. Probab. 10; Casimirs from the
  contents of the Young diagrams, from memory).
- snapped loops: the same closed forms with the lattice area counted cell by cell.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy

from discretize import AreaForm, Grid, Loop
from holonomy import exact_series
from holonomy.exact import exact_wilson_loop
from holonomy.groups import make_group

lam = sympy.Symbol("lam")


def _taylor(expr, order):
    s = sympy.series(expr, lam, 0, order + 1).removeO()
    return [complex(s.coeff(lam, j)).real for j in range(order + 1)]


def test_simple_loop_so4_rectangle():
    # the case: SO(4), metric trace, area 1/2 -> c_2 = 9/128
    G = make_group("SO", 4, "trace")
    loop = Loop.polygon([(0, 0), (1, 0), (1, 0.5), (0, 0.5)])
    res = exact_series(G, "fundamental", loop, 6)
    ref = _taylor(sympy.exp(-sympy.Rational(3, 2) * lam * sympy.Rational(1, 2) / 2), 6)
    assert res.exact and str(res.coefficients[2]) == "9/128"
    assert np.allclose([float(c) for c in res.coefficients], ref, rtol=1e-10, atol=1e-14)


@pytest.mark.parametrize("N", [2, 3])
def test_wound_unitary_loop(N):
    G = make_group("U", N, "large-n")
    A = 0.75
    loop = Loop.polygon([(0, 0), (1, 0), (1, A), (0, A)], turns=2)
    res = exact_series(G, "fundamental", loop, 6)
    assert res.method == "hook-expansion"
    t = lam * A
    d2, d11 = N * (N + 1) / 2, N * (N - 1) / 2
    c2, c11 = sympy.Rational(2 * N + 2, N), sympy.Rational(2 * N - 2, N)
    ref = _taylor((d2 * sympy.exp(-c2 * t / 2) - d11 * sympy.exp(-c11 * t / 2)) / N, 6)
    assert np.allclose([float(c) for c in res.coefficients], ref, rtol=1e-10, atol=1e-14)


def test_snapped_circle_is_the_lattice_value():
    G = make_group("SU", 2, "physics")
    h = 0.125
    circle = Loop.circle((1.0, 1.0), 0.5, 64, turns=2)
    grid = Grid.covering((0.25, 0.25, 1.75, 1.75), h)
    lat = circle.snap(grid)
    res = exact_series(G, "fundamental", lat, 5)
    # SU(2) as U(2) minus the centre: for k = 2, E[tr U^2]/2 of SU(2) is
    # (3 exp(-t) - 1) / 2 with t = lambda A: tr U^2 = chi_1(U) - chi_0(U), and spin 1
    # has the Casimir j(j+1) = 2 (k = 2), so E[chi_1] = 3 exp(-2 t / 2)
    cells = np.abs(lat.winding_numbers()).sum() / 2          # the loop is wound twice
    A = sympy.Rational(int(cells), 64)
    ref = _taylor((3 * sympy.exp(-lam * A) - 1) / 2, 5)
    assert res.exact
    assert np.allclose([float(c) for c in res.coefficients], ref, rtol=1e-10, atol=1e-14)
    # and the truncated series approaches the exact lattice value like lambda^6
    for x in (0.05, 0.1):
        v = exact_wilson_loop(G, "fundamental", lat, coupling=x).value.real
        trunc = sum(float(c) * x ** j for j, c in enumerate(res.coefficients))
        assert abs(v - trunc) < 2 * float(A) ** 6 * x ** 6


def test_general_polygon_and_formal_density():
    # a figure eight (polygon evaluation route) and a signed density (formal series):
    # the truncated series matches the exact value at small coupling to O(lambda^5)
    G = make_group("SU", 2, "physics")
    eight = Loop.polygon([(0, 0), (1, 1), (2, 0), (2, 1), (1, 0), (0, 1)])
    area = AreaForm(base=1.0, rects=((0.0, 0.0, 1.0, 1.0, -3.0),))
    res = exact_series(G, "fundamental", eight, 4, area=area)
    assert res is not None
    for x in (0.02, 0.04):
        v = exact_wilson_loop(G, "fundamental", eight, coupling=x, area=area).value.real
        trunc = sum(float(c) * x ** j for j, c in enumerate(res.coefficients))
        assert abs(v - trunc) < 50 * x ** 5

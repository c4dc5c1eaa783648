"""Series of the `gauss` scheme (one Gaussian exponential per plaquette).

Outside references:
- SU(2), k = 2, one plaquette: f(t) = (1 - t/4) exp(-t/8) (Gaussian integral of cos(r/2),
  Gradshteyn and Ryzhik 2007, 3.952); a simple loop of A cells has f(s)^A (independent
  conjugation-invariant plaquettes and Schur's lemma; Driver 1989, Commun. Math. Phys.
  123), expanded by sympy.series.
- U(1): abelian, so the scheme is exact: exp(-lambda sum_c n_c^2 mu_c / (2k)) for any
  loop (Levy 2003, Mem. AMS 166, the abelian case).
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy

from discretize import AreaForm, Loop
from holonomy import Field, WilsonProblem, gauss_series
from holonomy import _lattice_series

lam = sympy.Symbol("lam")


def _problem(loop, h, *, family="SU", n=2, metric="physics", area=None, formal=False):
    field = Field(coupling=1.0, spacing=h, scheme="gauss", reference=0.0,
                  area=area or AreaForm())
    return WilsonProblem(family=family, n=n, metric=metric, field=field, loops=(loop,),
                         samples=1, block=1, formal=formal)


def _taylor(expr, order):
    s = sympy.series(expr, lam, 0, order + 1).removeO()
    return [float(s.coeff(lam, j)) for j in range(order + 1)]


def test_simple_loop_is_power_of_one_plaquette():
    h = 0.25
    p = _problem(Loop.polygon([[0, 0], [1, 0], [1, 0.5], [0, 0.5]]), h)
    res = gauss_series(p, 0, 4, exact=True)
    t = lam * sympy.Rational(1, 16)
    ref = _taylor(((1 - t / 4) * sympy.exp(-t / 8)) ** 8, 4)
    assert "simple loop" in res.method
    assert all(sympy.sympify(c).is_Rational for c in res.coefficients)
    assert np.allclose([float(c) for c in res.coefficients], ref, rtol=1e-12)


@pytest.mark.parametrize("turns", [1, 2])
def test_axial_route_matches_simple_route(monkeypatch, turns):
    h = 0.5
    loop = Loop.polygon([[0, 0.5], [1, 0.5], [1, 1.5], [0, 1.5]], turns=turns)
    p = _problem(loop, h)
    simple = gauss_series(p, 0, 3)
    monkeypatch.setattr(_lattice_series, "_wound_simple", lambda lat: None)
    axial = gauss_series(p, 0, 3)
    assert "axial gauge" in axial.method
    assert np.allclose(axial.coefficients, simple.coefficients, rtol=1e-11, atol=1e-14)


def test_u1_non_simple_loop_is_exact():
    # a lattice figure eight: windings +1 and -1 (U(1), k = 1)
    h = 0.5
    loop = Loop.polygon([[0, 0], [1, 0], [1, 1], [2, 1], [2, 2], [1, 2], [1, 1], [0, 1]])
    p = _problem(loop, h, family="U", n=1, metric="trace")
    res = gauss_series(p, 0, 4)
    assert "axial gauge" in res.method
    lat = p.lattice_loops[0]
    s2 = float((lat.winding_numbers() ** 2).sum()) * h * h
    assert np.allclose(res.coefficients, _taylor(sympy.exp(-lam * s2 / 2), 4), rtol=1e-12)


def test_signed_density_is_formal():
    # density -3 on half of a rectangle: the series of prod_c f(lambda mu_c) with
    # negative mu_c (the formal continuation; no measure exists)
    h = 0.5
    area = AreaForm(base=1.0, rects=((0.0, 0.0, 0.5, 0.5, -3.0),))
    p = _problem(Loop.polygon([[0, 0], [1, 0], [1, 0.5], [0, 0.5]]), h, area=area,
                 formal=True)
    res = gauss_series(p, 0, 3)
    f = lambda t: (1 - t / 4) * sympy.exp(-t / 8)  # noqa: E731
    ref = _taylor(f(-3 * lam / 4) * f(lam / 4), 3)
    assert np.allclose(res.coefficients, ref, rtol=1e-12)

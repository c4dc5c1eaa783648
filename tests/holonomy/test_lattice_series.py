"""Series of the `linear` scheme's lattice Wilson loops, against closed forms and MC."""

from __future__ import annotations

import numpy as np
import pytest
import sympy

from discretize import AreaForm, Loop
from holonomy import Field, WilsonProblem, estimate_wilson_loops, lattice_series
from noise import ArgumentError


def _rect(w, h, x0=0.0, y0=0.0):
    return Loop.polygon([[x0, y0], [x0 + w, y0], [x0 + w, y0 + h], [x0, y0 + h]])


def _problem(loop, h, *, area=None, formal=False, family="SU", n=2, metric="physics"):
    field = Field(coupling=1.0, spacing=h, scheme="linear", reference=0.0,
                  area=area or AreaForm())
    return WilsonProblem(family=family, n=n, metric=metric, field=field, loops=(loop,),
                         samples=1, block=1, formal=formal)


@pytest.mark.parametrize("h", [0.5, 0.25])
def test_rectangle_series_is_taylor_series_of_gaussian_step_power(h):
    # linear scheme, reference on the bottom edge: W = f(lambda h H)^W exactly with
    # f(t) = (1 - t/4) exp(-t/8) for SU(2), k = 2 (exponential moment of one Gaussian;
    # Haagerup and Thorbjornsen 2003, Expo. Math. 21, for the U(N) analogue)
    lam = sympy.Symbol("lam")
    width, height = 1, sympy.Rational(1, 2)
    hh = sympy.Rational(h)
    t = lam * hh * height
    f = (1 - t / 4) * sympy.exp(-t / 8)
    target = sympy.series(f ** int(width / hh), lam, 0, 5).removeO()
    res = lattice_series(_problem(_rect(1.0, 0.5), h), order=4, exact=True)
    for j in range(5):
        assert sympy.simplify(res.coefficients[j] - target.coeff(lam, j)) == 0


def test_series_of_simple_loop_tends_to_continuum_coefficients():
    # continuum simple loop: c_m = (-c/2)^m A^m / m! with c = 3/4 (SU(2), k = 2)
    # (Levy 2003, Mem. AMS 166: E[tr H]/2 = exp(-c lambda A / 2))
    A = 0.5
    continuum = (0.375 * A) ** 2 / 2
    gaps = [abs(float(lattice_series(_problem(_rect(1.0, 0.5), h), order=2).coefficients[2])
                - continuum) for h in (0.5, 0.25, 0.125)]
    # the linear scheme's bias is O(h): halving h about halves the gap
    assert gaps[0] > gaps[1] > gaps[2]
    assert gaps[2] < 0.6 * gaps[1]


def test_series_agrees_with_monte_carlo_at_small_coupling():
    # a non-simple loop (lobe around a doubly covered square); MC of the linear scheme
    # against the order-4 series: the truncation error is O(lambda^5)
    loop = Loop.polygon([[0, 0], [1, 0], [1, 1], [0, 1]], turns=2)
    lam = 0.6
    series = lattice_series(_problem(loop, 0.5), order=4)
    field = Field(coupling=lam, spacing=0.5, scheme="linear", reference=0.0)
    est = estimate_wilson_loops(("SU", 2, "physics"), field, [loop], samples=40000,
                                block=10000, seed=29).loops[0]
    omitted = abs(float(series.coefficients[4])) * lam**4
    assert abs(est.estimate - float(series.value(lam))) <= 4 * est.stderr + omitted


def test_signed_density_series_is_formal_and_sampler_refuses():
    # density -1/2 on the left column: column measures -1/8 and 1/4 at h = 1/2; with
    # the reference on the bottom edge the columns factor, W = f(-lam/8) f(lam/4), f as
    # above, as a formal identity (the covariance is indefinite)
    area = AreaForm(base=1.0, rects=((0.0, 0.0, 0.5, 0.5, -0.5),))
    with pytest.raises(ValueError, match="negative density.*formal"):
        _problem(_rect(1.0, 0.5), 0.5, area=area)
    res = lattice_series(_problem(_rect(1.0, 0.5), 0.5, area=area, formal=True), order=3,
                         exact=True)
    lam = sympy.Symbol("lam")
    f = lambda t: (1 - t / 4) * sympy.exp(-t / 8)  # noqa: E731
    target = sympy.series(f(-lam / 8) * f(lam / 4), lam, 0, 4).removeO()
    for j in range(4):
        assert sympy.simplify(res.coefficients[j] - target.coeff(lam, j)) == 0


def test_order_must_be_nonnegative():
    with pytest.raises(ArgumentError) as info:
        lattice_series(_problem(_rect(1.0, 0.5), 0.5), order=-1)
    assert info.value.argument == "order"

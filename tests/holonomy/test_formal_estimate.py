"""Formal (complex-rotation) Monte Carlo for signed densities, Gaussian schemes.

Outside references for the formal exact values (analytic continuation in the cell
measures): one Gaussian exponential f(t) = (1 - t/4) exp(-t/8) for SU(2), k = 2
(Gradshteyn and Ryzhik 2007, 3.952), exp(-t/(2k)) for U(1); the gauss scheme on a
simple loop is prod_c f(lambda mu_c), the linear scheme on a rectangle standing on the
reference line prod_columns f(lambda mu_column) (independent conjugation-invariant
factors and Schur's lemma; Driver 1989). Estimates must lie within 4 standard errors.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from discretize import AreaForm, Loop
from holonomy import Field, WilsonProblem
from holonomy._formal_estimate import check_formal_scheme, formal_estimate

# density -3 on the left half of a 1 x 0.5 rectangle standing on y = 0
AREA = AreaForm(base=1.0, rects=((0.0, 0.0, 0.5, 0.5, -3.0),))
RECT = Loop.polygon([[0, 0], [1, 0], [1, 0.5], [0, 0.5]])


def _f(family, t):
    return (1 - t / 4) * math.exp(-t / 8) if family == "SU" else math.exp(-t / 2)


@pytest.mark.parametrize("family,n,metric", [("SU", 2, "physics"), ("U", 1, "trace")])
@pytest.mark.parametrize("scheme", ["linear", "gauss"])
def test_formal_estimate_matches_formal_exact(family, n, metric, scheme):
    h, lam = 0.25, 1.0
    field = Field(coupling=lam, spacing=h, scheme=scheme, reference=0.0, area=AREA)
    p = WilsonProblem(family=family, n=n, metric=metric, field=field, loops=(RECT,),
                      samples=20000, block=5000, seed=7, formal=True)
    res = formal_estimate(p).loops[0]
    mu = AREA.cell_measures(p.grid)
    w = p.lattice_loops[0].winding_numbers()
    if scheme == "gauss":
        exact = np.prod([_f(family, lam * m) for m in mu[w != 0]])
    else:  # columns of the rectangle, each from the reference line up
        exact = np.prod([_f(family, lam * mu[c][w[c] != 0].sum())
                         for c in range(mu.shape[0]) if (w[c] != 0).any()])
    value, se = res.estimate, res.stderr
    assert abs(value - exact) < 4 * se, (value, se, exact)
    assert se < 0.02


def test_heat_and_wilson_refused():
    for scheme in ("heat", "wilson"):
        with pytest.raises(ValueError, match=r"field.scheme: got '%s'.*linear, gauss" % scheme):
            check_formal_scheme(scheme)

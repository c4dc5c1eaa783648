"""Weak-coupling (asymptotic) series of the `wilson` scheme's lattice Wilson loop.

Outside references: the one-plaquette values as Bessel ratios, U(1): I_1(b)/I_0(b),
SU(2) with k = 2: I_2(4/s)/I_1(4/s) (Gross and Witten 1980, Phys. Rev. D 21; Drouffe
and Zuber 1983, Phys. Rep. 102, from memory), evaluated with scipy.special.ive; the
truncated series must approach them like lambda^(M+1) (Abramowitz and Stegun 1964,
9.7.1: the large-argument expansion of I_nu), and its first coefficient is the heat
kernel's -c A / 2 (Levy 2003).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import special

from discretize import Loop
from holonomy import Field, WilsonProblem, wilson_series


def _problem(loop, family, n, metric, h=0.5, scheme="wilson"):
    f = Field(coupling=1.0, spacing=h, scheme=scheme, reference=0.0)
    return WilsonProblem(family=family, n=n, metric=metric, field=f, loops=(loop,),
                         samples=1, block=1)


SQUARE = Loop.polygon([[0, 0], [1, 0], [1, 1], [0, 1]])


@pytest.mark.parametrize("family,n,metric,casimir", [("U", 1, "trace", 1.0),
                                                     ("SU", 2, "physics", 0.75)])
def test_series_approaches_bessel_value(family, n, metric, casimir):
    M = 4
    res = wilson_series(_problem(SQUARE, family, n, metric), 0, M)
    assert res.asymptotic and res.exact
    assert abs(float(res.coefficients[1]) + casimir * 1.0 / 2) < 1e-15
    errs = []
    for lam in (0.2, 0.1):
        s = lam * 0.25
        if family == "U":
            w = special.ive(1, 1 / s) / special.ive(0, 1 / s)
        else:
            w = special.ive(2, 4 / s) / special.ive(1, 4 / s)
        errs.append(abs(w ** 4 - sum(float(c) * lam ** j
                                     for j, c in enumerate(res.coefficients))))
    # error ~ lambda^(M+1): halving lambda divides it by about 2^5 = 32
    assert 20 < errs[0] / errs[1] < 50


def test_u1_any_loop():
    # doubly wound square: every cell has winding 2, value (I_2(b)/I_0(b))^4
    loop = Loop.polygon([[0, 0], [1, 0], [1, 1], [0, 1]], turns=2)
    res = wilson_series(_problem(loop, "U", 1, "trace"), 0, 3)
    lam = 0.05
    s = lam * 0.25
    w = (special.ive(2, 1 / s) / special.ive(0, 1 / s)) ** 4
    assert abs(w - sum(float(c) * lam ** j for j, c in enumerate(res.coefficients))) \
        < 10 * lam ** 4


def test_not_available():
    with pytest.raises(NotImplementedError, match="U\\(1\\) and SU\\(2\\) only"):
        # (the wilson sampler itself refuses U(2); the series says why it has none)
        wilson_series(_problem(SQUARE, "U", 2, "trace", scheme="heat"), 0, 3)
    loop = Loop.polygon([[0, 0], [1, 0], [1, 1], [0, 1]], turns=2)
    with pytest.raises(NotImplementedError, match="simple loops only"):
        wilson_series(_problem(loop, "SU", 2, "physics"), 0, 3)

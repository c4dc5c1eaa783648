"""The Wilson action's Bessel ratios at extreme arguments (issue 17, numerics).

References: the ratios ``I_n(x) / I_m(x)`` are checked against mpmath's ``besseli`` at
60 significant digits (mpmath 1.3, ``mpmath.besseli``: modified Bessel functions of the
first kind, computed by hypergeometric series and asymptotic expansions at any
precision). The one-plaquette values are ``I_1(b) / I_0(b)`` (U(1)) and
``I_2(2b) / I_1(2b)`` (SU(2)) (Gross and Witten 1980, Phys. Rev. D 21, 446, eq. for the
one-plaquette average; the SU(2) form as in :mod:`holonomy.exact._wilson_action`).
Tolerance 1e-13 relative: double rounding of a ratio of two scipy values (about 1e-15
each, measured against mpmath in this session) with a margin (common practice, no
source).
"""

import math
import sys
import warnings

import mpmath
import pytest

from holonomy.exact import wilson_plaquette
from holonomy.exact._characters import BesselRangeError, bessel_ratio
from holonomy.experiment import exact_results, parse_spec

mpmath.mp.dps = 60

ORDERS = [(1, 0), (2, 1), (3, 1), (5, 0), (64, 0), (65, 1)]
ARGUMENTS = [1e-320, 1e-300, 1e-150, 1e-12, 5e-9, 2e-8, 0.5, 1.0, 30.0, 1e3, 5e7, 2e8,
             1e10, 1e15, 1e100, 1e300]


def _reference(n: int, m: int, x: float) -> float:
    """mpmath's I_n(x) / I_m(x) at 60 digits, rounded to a double (0 below its range)."""
    X = mpmath.mpf(x)
    return float(mpmath.besseli(n, X) / mpmath.besseli(m, X))


@pytest.mark.parametrize("n,m", ORDERS)
@pytest.mark.parametrize("x", ARGUMENTS)
def test_bessel_ratio_against_mpmath(n, m, x):
    if x > 1e8 and 4 * n * n > x / 1000:
        with pytest.raises(BesselRangeError):
            bessel_ratio(n, m, x)
        return
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no RuntimeWarning from numpy or scipy either
        got = bessel_ratio(n, m, x)
    ref = _reference(n, m, x)
    assert math.isfinite(got)
    if ref < 1e-290:  # below (or at the edge of) the double range: 0 or the tiny value
        assert 0.0 <= got <= 1e-280
    else:
        assert got == pytest.approx(ref, rel=1e-13, abs=0.0), (n, m, x, got, ref)


def test_bessel_ratio_limits():
    # I_n(0) = 0 for n >= 1 and I_n(x) / I_m(x) -> 1 as x -> inf (Abramowitz and Stegun
    # 1964, 9.6.10 and 9.7.1)
    assert bessel_ratio(1, 0, 0.0) == 0.0 and bessel_ratio(2, 1, 0.0) == 0.0
    assert bessel_ratio(1, 0, math.inf) == 1.0 and bessel_ratio(7, 1, math.inf) == 1.0
    assert bessel_ratio(3, 3, 1e300) == 1.0
    with pytest.raises(ValueError):
        bessel_ratio(0, 1, 1.0)


@pytest.mark.parametrize("b", [1e-320, 1e-200, 1e-9, 1.0, 1e9, 1e12, 1e200, 1e300])
def test_one_plaquette_values_at_extreme_beta(b):
    """w = I_1(b)/I_0(b) (U(1)) and I_2(2b)/I_1(2b) (SU(2)) (Gross and Witten 1980) were
    NaN from b about 2e9 (scipy's ive) and 0/0 for SU(2) below b about 1e-154."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        u1 = wilson_plaquette("U", 1, b=b)
        su2 = wilson_plaquette("SU", 2, b=b)
    assert u1 == pytest.approx(_reference(1, 0, b), rel=1e-13, abs=1e-300)
    assert su2 == pytest.approx(_reference(2, 1, 2 * b), rel=1e-13, abs=1e-300)


SPEC = '''
name = "wilson-extreme"
[group]
family = "U"
n = 1
metric = "trace"
[field]
coupling = 1.0
spacing = 0.25
scheme = "wilson"
density = {density}
[[loops]]
name = "box"
vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]
turns = {turns}
[observable]
rep = "{rep}"
'''


@pytest.mark.parametrize("density", [1e-320, 1e-12, 1e-9, 1e6, 1e300])
def test_wilson_exact_is_finite_at_extreme_densities(density):
    """U(1), a simple loop of A = 8 cells: W = (I_1(b) / I_0(b))^8 with b = 1 / s,
    s = lambda density h^2 (README.md, Schemes; Gross and Witten 1980). At density 1e-9
    the value was null ("not finite"): scipy's ive is NaN at b = 1.6e10."""
    spec = parse_spec(SPEC.format(density=density, turns=1, rep="fundamental"), purpose="exact")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        row = exact_results(spec)["results"][0]
    b = 1.0 / (density * 0.0625)
    ref = 1.0 if math.isinf(b) else (mpmath.besseli(1, b) / mpmath.besseli(0, b)) ** 8
    if ref < sys.float_info.min:  # density 1e300: about 1e-2390, below the double range
        assert row["exact"] is None and "precision limit" in row["exact_note"], row
    else:
        assert row["exact"] == pytest.approx(float(ref), rel=1e-12), row


def test_wilson_exact_of_a_high_charge_at_large_beta():
    """Charge 64 x 3 turns = 192 at b = 1.6e10 (4 q^2 = 147456 <= b / 1000): the
    large-argument expansion, W = (I_192(b) / I_0(b))^8."""
    spec = parse_spec(SPEC.format(density=1e-9, turns=3, rep="power:64"), purpose="exact")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        row = exact_results(spec)["results"][0]
    b = mpmath.mpf(1.0) / (mpmath.mpf(1e-9) * mpmath.mpf(0.0625))
    ref = float((mpmath.besseli(192, b) / mpmath.besseli(0, b)) ** 8)
    assert row["exact"] == pytest.approx(ref, rel=1e-12, abs=0.0), row


def test_wilson_exact_beyond_the_bessel_routes_is_null_with_a_precision_note():
    """Charge 64 x 100 turns = 6400 at b = 1.6e10: 4 q^2 = 1.6e8 > b / 1000, where the
    large-argument expansion is not accurate: null, and the note names the limit."""
    spec = parse_spec(SPEC.format(density=1e-9, turns=100, rep="power:64"), purpose="exact")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        row = exact_results(spec)["results"][0]
    assert row["exact"] is None
    assert "precision limit" in row["exact_note"] and "I_6400" in row["exact_note"]

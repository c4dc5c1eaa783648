"""Regularization studies: the closed forms the references use, the rate fit, and (slow)
the SU(2) rectangle study of issue 5.

The one-step function f(t) = E[tr exp(X)] / 2 for SU(2), k = 2, is computed here by
quadrature against the chi distribution with 3 degrees of freedom (scipy.stats.chi,
scipy.integrate.quad): exp(X) has eigenvalues exp(+-i r / 2) with r = |Z|, Z ~ N(0, t I_3),
so f(t) = E[cos(sqrt(t) chi_3 / 2)]. DESIGN.md quotes (1 - t/4) exp(-t/8).
"""

import math

import numpy as np
import pytest
from scipy import integrate, stats

from holonomy.experiment import (THEORY_RATES, build_problem, fit_rate, loop_references,
                                 parse_spec, run_study)


def f_su2(t: float) -> float:
    """E[cos(sqrt(t) R / 2)], R ~ chi(3), by quadrature (scipy.integrate.quad)."""
    val, _ = integrate.quad(lambda x: math.cos(math.sqrt(t) * x / 2) * stats.chi(3).pdf(x),
                            0, np.inf, limit=200)
    return val


def test_one_step_closed_form_against_quadrature():
    for t in (0.01, 0.25, 1.0, 3.0):
        assert f_su2(t) == pytest.approx((1 - t / 4) * math.exp(-t / 8), rel=1e-10)


RECT = '''
[group]
family = "SU"
n = 2
metric = "physics"
[field]
coupling = 2.0
spacing = 0.25
scheme = "{scheme}"
[[loops]]
name = "rectangle"
vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]
[run]
samples = 200
block = 20
seed = 3
'''


@pytest.mark.parametrize("scheme", ["gauss", "linear", "heat", "wilson"])
def test_scheme_references_for_a_rectangle(scheme):
    spec = parse_spec(RECT.format(scheme=scheme))
    ref = loop_references(spec, build_problem(spec), 0)
    lam, h, a, b = 2.0, 0.25, 1.0, 0.5
    cells, cols = round(a * b / h**2), round(a / h)
    expected = {
        # independent plaquettes of variance lambda h^2 (Schur: traces multiply)
        "gauss": f_su2(lam * h * h) ** cells,
        # one Gaussian exponential per column, of variance lambda h b
        "linear": f_su2(lam * h * b) ** cols,
        # Levy (2003): simple loop exp(-c lambda A / 2), c = 3/4
        "heat": math.exp(-3 / 8 * lam * a * b),
        # Wilson action, SU(2), k = 2: w = I2(beta)/I1(beta), beta = 4/s (DESIGN.md; Gross
        # and Witten 1980 for independent plaquettes), scipy.special.iv
        "wilson": (__import__("scipy.special").special.iv(2, 4 / (lam * h * h))
                   / __import__("scipy.special").special.iv(1, 4 / (lam * h * h))) ** cells,
    }[scheme]
    assert ref.exact == pytest.approx(expected, rel=1e-10)
    assert ref.continuum == pytest.approx(math.exp(-3 / 8 * lam * a * b), rel=1e-12)


def test_scheme_biases_have_the_theory_rates():
    # the closed forms themselves: log-log slopes of the bias at small h
    lam, a, b = 1.0, 1.0, 1.0
    exact = math.exp(-3 / 8 * lam * a * b)
    hs = np.array([0.04, 0.02])
    gauss = [abs(f_su2(lam * h * h) ** round(a * b / h**2) - exact) for h in hs]
    linear = [abs(f_su2(lam * h * b) ** round(a / h) - exact) for h in hs]
    assert math.log2(gauss[0] / gauss[1]) == pytest.approx(THEORY_RATES["gauss"], abs=0.02)
    assert math.log2(linear[0] / linear[1]) == pytest.approx(THEORY_RATES["linear"], abs=0.02)


def test_fit_rate_recovers_a_known_power_law():
    # synthetic coupled estimates: mean bias 0.3 h^1.5 plus block noise shared across h
    rng = np.random.default_rng(2026)
    hs = np.array([0.5, 0.25, 0.125, 0.0625])
    B = 200
    common = rng.normal(size=(B, 1)) * 0.05
    own = rng.normal(size=(B, hs.size)) * 0.002 * np.sqrt(hs)
    means = 1.0 + 0.3 * hs**1.5 + common + own
    fit = fit_rate(hs, means, np.full(B, 100), 1.0 + common.mean(), theory=1.5)
    assert fit.rate is not None and fit.stderr < 0.2
    assert abs(fit.rate - 1.5) < 4 * fit.stderr
    assert fit.contains_theory()


def test_fit_rate_says_when_there_is_no_bias():
    rng = np.random.default_rng(7)
    means = 0.5 + rng.normal(size=(100, 3)) * 0.01
    fit = fit_rate([0.5, 0.25, 0.125], means, np.full(100, 10), 0.5)
    assert fit.rate is None and "not resolved" in fit.note


def test_study_small_run_structure(tmp_path):
    text = RECT.format(scheme="heat")
    spec = parse_spec(text, name="small-study")
    outcome = run_study(spec, spacings=(0.5, 0.25), schemes=("heat", "gauss"),
                        out=tmp_path / "s")
    rows = outcome.results["results"]
    assert {(r["scheme"], r["spacing"]) for r in rows} == {
        ("heat", 0.5), ("heat", 0.25), ("gauss", 0.5), ("gauss", 0.25)}
    for r in rows:
        assert r["exact"] == pytest.approx(math.exp(-3 / 8 * 2.0 * 0.5), rel=1e-12)
        assert r["bias"] == pytest.approx(r["estimate"] - r["exact"])
    assert "rate" in outcome.table and (tmp_path / "s" / "convergence.png").exists()


@pytest.mark.slow
def test_su2_rectangle_study_rates(tmp_path):
    """Issue 5: heat unbiased at every spacing; gauss and linear fitted rates whose 95%
    intervals contain 2 and 1 (derivation in holonomy.experiment._study)."""
    text = '''
[group]
family = "SU"
n = 2
metric = "physics"
[field]
coupling = 2.0
spacing = 0.5
[[loops]]
name = "rectangle"
vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]
[run]
samples = SAMPLES
block = BLOCK
seed = 11
'''
    # lambda h^2 <= 0.5 and lambda h b <= 0.5 on the ladder: the next-order terms
    # (relative size t / 6) stay small, so the fitted exponent is the asymptotic one
    spec = parse_spec(text.replace("SAMPLES", "60000").replace("BLOCK", "1000"), name="rect")
    outcome = run_study(spec, spacings=(0.5, 0.25, 0.125, 0.0625),
                        schemes=("heat", "linear", "gauss"), workers=2)
    for r in outcome.results["results"]:
        if r["scheme"] == "heat":
            assert abs(r["z"]) < 4, r
    for scheme in ("linear", "gauss"):
        fit = outcome.fits[("rectangle", scheme)]
        assert fit.rate is not None, fit.note
        assert fit.contains_theory(), (scheme, fit)
    # sharp enough to tell the two apart: each interval excludes the other's rate
    assert outcome.fits[("rectangle", "gauss")].interval[0] > THEORY_RATES["linear"]
    assert outcome.fits[("rectangle", "linear")].interval[1] < THEORY_RATES["gauss"]

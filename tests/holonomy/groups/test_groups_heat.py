"""Brownian motion and heat-kernel samplers.

References for the checks:
- E[pi(U_t)] = exp(-c_pi t / 2) Id for Brownian motion with generator (1/2) sum X_a^2
  (M. Liao 2004, "Levy Processes in Lie Groups", Section 1.3; project design, section 2).
- SU(2) heat-kernel angle law: class-function series sum_j (2j+1) exp(-c_j t/2) chi_j
  against the Weyl density (2/pi) sin^2(theta) (H. Weyl 1939, "The Classical Groups";
  L. Gross 1986, Lecture Notes in Math. 1158), integrated with scipy.integrate.quad.
- Two-sample and one-sample Kolmogorov-Smirnov tests from scipy.stats.
"""

from functools import lru_cache

import numpy as np
import pytest
from scipy import integrate, interpolate, stats

from holonomy.groups import BrownianResult, make_group, su2_angle_cdf, su2_angle_pdf


# ---------------------------------------------------------- independent reference
def _ref_pdf(theta, t, k):
    """(2/pi) sin^2(theta) * sum_j (2j+1) exp(-c_j t/2) chi_j(theta), c_j = 2j(j+1)/k."""
    # Terms n exp(-(n^2-1) t/(4k)) are below 1e-17 beyond nmax.
    nmax = int(np.sqrt(4 * k * 45 / t)) + 3
    n = np.arange(1, nmax + 1)  # n = 2j + 1
    c = (n**2 - 1) / (2.0 * k)
    s = np.sin(theta)
    if s < 1e-300:
        return 0.0
    chi = np.sin(n * theta) / s
    return (2 / np.pi) * s * s * np.sum(n * np.exp(-c * t / 2) * chi)


def _ref_cdf_sorted(x, t, k):
    """CDF at increasing points x by summing quad over consecutive intervals."""
    out = np.empty_like(x)
    acc, prev = 0.0, 0.0
    for i, xi in enumerate(x):
        acc += integrate.quad(_ref_pdf, prev, xi, args=(t, k), epsabs=1e-14, epsrel=1e-12, limit=100)[0]
        out[i] = acc
        prev = xi
    return out


def _ref_cdf(x, t, k):
    x = np.asarray(x, float)
    order = np.argsort(x)
    out = np.empty_like(x)
    out[order] = _ref_cdf_sorted(x[order], t, k)
    return out


@lru_cache(maxsize=None)
def _ref_cdf_spline(t, k):
    """Reference CDF for the KS tests: quad on 512 intervals, joined by the cubic Hermite
    interpolant with the reference density as derivative (error O(h^4) ~ 1e-10)."""
    grid = np.linspace(0.0, np.pi, 513)
    F = np.concatenate([[0.0], _ref_cdf_sorted(grid[1:], t, k)])
    dF = np.array([_ref_pdf(x, t, k) for x in grid])
    return interpolate.CubicHermiteSpline(grid, F, dF)


def _ks_cdf(t, k):
    spline = _ref_cdf_spline(float(t), float(k))
    return lambda x: np.clip(spline(x), 0.0, 1.0)


def _angle(U):
    return np.arccos(np.clip(np.trace(U, axis1=-2, axis2=-1).real / 2, -1, 1))


# --------------------------------------------------------- angle law, deterministic
@pytest.mark.parametrize("t,k", [(0.01, 2.0), (0.05, 2.0), (0.3, 1.0), (0.5, 2.0), (1.6, 2.0), (3.0, 1.0), (12.0, 2.0)])
def test_su2_angle_cdf_matches_quadrature(t, k):
    # Covers both closed forms (image form for tau < 0.05, character series above).
    theta = np.linspace(0.0, np.pi, 41)[1:]
    tau = t / (4 * k)
    ref = _ref_cdf(theta, t, k)
    np.testing.assert_allclose(su2_angle_cdf(theta, tau), ref, atol=1e-12, rtol=0)
    ref_pdf = np.array([_ref_pdf(x, t, k) for x in theta])
    np.testing.assert_allclose(su2_angle_pdf(theta, tau), ref_pdf, atol=1e-10 * max(1, ref_pdf.max()), rtol=0)


# ------------------------------------------------------ exact SU(2) sampler, KS
@pytest.mark.parametrize("t", [0.05, 0.5, 3.0])
@pytest.mark.parametrize("metric", ["physics", "trace"])
def test_su2_heat_kernel_ks(t, metric):
    G = make_group("SU", 2, metric)
    U = G.heat_kernel(t, 3000, rng=np.random.default_rng(20240 + int(100 * t)))
    assert U.shape == (3000, 2, 2) and G.drift(U) < 1e-12
    res = stats.kstest(_angle(U), _ks_cdf(t, G.k))
    # p-value threshold 1e-4: about a 4-sigma event under the null.
    assert res.pvalue > 1e-4, res


def test_su2_heat_kernel_rejects_wrong_law():
    # Power check: the same KS test detects a 10% error in t.
    G = make_group("SU", 2, "physics")
    U = G.heat_kernel(0.55, 3000, rng=np.random.default_rng(3))
    assert stats.kstest(_angle(U), _ks_cdf(0.5, 2.0)).pvalue < 1e-4


def test_su2_heat_kernel_many_times():
    # An array of times gives (size, m, N, N); each column has its own law.
    G = make_group("SU", 2, "physics")
    t = np.array([0.0, 0.2, 0.5, 2.0])
    U = G.heat_kernel(t, 2000, rng=np.random.default_rng(9))
    assert U.shape == (2000, 4, 2, 2)
    np.testing.assert_allclose(U[:, 0], G.identity(2000), atol=0)
    for i in range(1, 4):
        assert stats.kstest(_angle(U[:, i]), _ks_cdf(t[i], 2.0)).pvalue > 1e-4
    # Axis is Haar: E[U] = exp(-c t/2) Id, so off-diagonal means vanish (4 s.e.).
    off = U[:, 2, 0, 1]
    assert abs(off.real.mean()) < 4 * off.real.std() / np.sqrt(2000)
    assert abs(off.imag.mean()) < 4 * off.imag.std() / np.sqrt(2000)


# ---------------------------------------------------------- Sp(1) versus SU(2)
def test_sp1_exact_sampler_on_group_with_su2_law():
    P = make_group("Sp", 1, "physics")
    U = P.heat_kernel(0.5, 3000, rng=np.random.default_rng(17))
    assert P.drift(U) < 1e-12  # includes U^T J U = J
    assert stats.kstest(_angle(U), _ks_cdf(0.5, 2.0)).pvalue > 1e-4


@pytest.mark.slow
def test_sp1_brownian_matches_su2_exact():
    # Sub-stepped Brownian motion in Sp(1)'s own basis against the exact SU(2) law.
    P = make_group("Sp", 1, "trace")
    S = make_group("SU", 2, "trace")
    b = P.brownian(0.8, 3000, rng=np.random.default_rng(4), steps=200)
    e = S.heat_kernel(0.8, 3000, rng=np.random.default_rng(5))
    assert stats.ks_2samp(_angle(b.value), _angle(e)).pvalue > 1e-4
    assert stats.kstest(_angle(b.value), _ks_cdf(0.8, 1.0)).pvalue > 1e-4


def test_sp1_brownian_matches_su2_exact_short():
    P = make_group("Sp", 1, "physics")
    b = P.brownian(0.4, 2000, rng=np.random.default_rng(6), steps=40)
    assert stats.kstest(_angle(b.value), _ks_cdf(0.4, 2.0)).pvalue > 1e-4


# ------------------------------------------------------------------------ U(1)
@pytest.mark.parametrize("sampler", ["heat_kernel", "brownian"])
@pytest.mark.parametrize("t", [0.4, 2.0])
def test_u1_characteristic_function(sampler, t):
    # With k = 1 the angle is N(0, t): E[exp(i theta_t)] = exp(-t/2) (Gaussian
    # characteristic function).
    G = make_group("U", 1, "trace")
    rng = np.random.default_rng(int(10 * t))
    if sampler == "heat_kernel":
        U = G.heat_kernel(t, 20000, rng=rng)
    else:
        U = G.brownian(t, 20000, rng=rng, steps=10).value
    z = U[:, 0, 0]
    se = z.std() / np.sqrt(z.size)
    assert abs(z.mean() - np.exp(-t / 2)) < 4 * se


# --------------------------------------------------------- Brownian, Casimirs
# E[chi_pi(U_t)] / dim(pi) = exp(-c_pi t / 2) with c_pi computed from the basis, to
# within 4 standard errors; two times each. Sub-stepping bias is O(dt) (geodesic random
# walk, Liao 2004) and is far below the standard error at dt = 0.01.
# The bias of the walk at t = 1 for SU(2) spin j <= 3/2 is below 0.06 dt (computed by
# quadrature of the one-step character expectation); dt = 0.02 (default tests) and
# 0.01 (slow tests) keep it under a tenth of the standard error.
CASES = [  # family, n, metric, reps, size, steps, seed, slow
    ("U", 1, "trace", ["fundamental"], 4000, 50, 1, False),
    ("U", 3, "large-n", ["fundamental"], 2000, 50, 2, False),
    ("SU", 2, "physics", ["spin:1/2", "spin:1", "spin:3/2"], 2000, 50, 3, False),
    ("SU", 3, "physics", ["fundamental", "adjoint"], 1500, 50, 4, False),
    ("SO", 3, "trace", ["fundamental"], 2000, 50, 5, False),
    ("SO", 4, "trace", ["fundamental"], 1500, 50, 6, False),
    ("Sp", 2, "physics", ["fundamental"], 1500, 50, 7, False),
    ("U", 3, "physics", ["fundamental"], 10000, 100, 8, True),
    ("SU", 3, "large-n", ["fundamental", "adjoint"], 10000, 100, 9, True),
    ("SU", 2, "trace", ["spin:1/2", "spin:1", "spin:3/2"], 10000, 100, 10, True),
    ("Sp", 2, "trace", ["fundamental", "adjoint"], 10000, 100, 11, True),
    ("SO", 3, "physics", ["fundamental", "adjoint"], 10000, 100, 12, True),
    ("SO", 4, "physics", ["fundamental"], 10000, 100, 13, True),
]


@pytest.mark.parametrize(
    "family,n,metric,specs,size,steps,seed",
    [pytest.param(*c[:7], marks=[pytest.mark.slow] if c[7] else [], id=f"{c[0]}{c[1]}-{c[2]}-{c[4]}") for c in CASES],
)
def test_brownian_casimir(family, n, metric, specs, size, steps, seed):
    G = make_group(family, n, metric)
    times = np.array([0.3, 1.0])
    res = G.brownian(times, size, rng=np.random.default_rng(seed), steps=steps)
    assert isinstance(res, BrownianResult)
    assert res.value.shape == (size, 2, G.N, G.N)
    assert res.steps == steps and res.drift < 1e-12
    np.testing.assert_allclose(res.dt, times / steps)
    for spec in specs:
        r = G.rep(spec)
        chi = r.character(res.value)  # (size, 2), normalized
        for i, t in enumerate(times):
            x = chi[:, i]
            exact = np.exp(-r.casimir * t / 2)
            se_re = x.real.std() / np.sqrt(size)
            se_im = max(x.imag.std() / np.sqrt(size), 1e-15)
            assert abs(x.real.mean() - exact) < 4 * se_re, (spec, t, x.real.mean(), exact, se_re)
            assert abs(x.imag.mean()) < 4 * se_im + 1e-15


def test_brownian_defaults_and_shapes():
    G = make_group("SU", 3)
    r = G.brownian(0.05, 3, rng=1)
    assert r.steps == 8 and r.value.shape == (3, 3, 3) and r.dt == pytest.approx(0.05 / 8)
    r = G.brownian(2.5, 2, rng=1)
    assert r.steps == 250
    r = G.brownian(0.5, 2, rng=1, steps=3)
    assert r.steps == 3
    # Seeded runs repeat exactly.
    np.testing.assert_array_equal(G.heat_kernel(0.3, 4, rng=5), G.heat_kernel(0.3, 4, rng=5))
    assert G.heat_kernel(np.array([0.1, 0.2, 0.3]), 5, rng=0).shape == (5, 3, 3, 3)


@pytest.mark.parametrize("call,match", [
    (lambda G: G.heat_kernel(-1.0, 5), r"`t` must be finite and >= 0; got -1.0"),
    (lambda G: G.heat_kernel(np.ones((2, 2)), 5), r"`t` must be a scalar or a 1-D array"),
    (lambda G: G.brownian(1.0, -3), r"`size` must be a non-negative integer; got -3"),
    (lambda G: G.brownian(1.0, 3, steps=0), r"`steps` must be a positive integer or None; got 0"),
    (lambda G: G.heat_kernel(float("nan"), 3), r"`t` must be finite"),
])
def test_heat_iv(call, match):
    with pytest.raises(ValueError, match=match):
        call(make_group("SU", 3))


# ------------------------------------------------------- inverse-CDF accuracy
@pytest.mark.parametrize("shape", [(3000,), (500, 4), (3, 200)])
def test_sample_su2_angle_inverts_cdf(shape):
    # White-box: sample_su2_angle draws its uniforms first, so F_tau(theta) must
    # reproduce them (inverse-CDF branch, tau >= 0.06) to ~1e-14. Both the per-column
    # table path ((500, 4), equal rows) and the general path are exercised.
    from holonomy.groups import sample_su2_angle

    rng = np.random.default_rng(123)
    if len(shape) == 2 and shape[0] > 64:
        tau = np.broadcast_to(np.array([0.07, 0.2, 0.9, 3.0]), shape)
    else:
        tau = rng.uniform(0.06, 2.5, size=shape)
    theta = sample_su2_angle(tau, rng=np.random.default_rng(77))
    u = np.random.default_rng(77).random(shape)
    np.testing.assert_allclose(su2_angle_cdf(theta, tau), u, atol=2e-14, rtol=0)
    assert np.all((theta >= 0) & (theta <= np.pi))


@pytest.mark.parametrize("t", [0.236, 0.2])
def test_su2_rejection_branch_near_threshold(t):
    # tau = t/4 just below the switch (0.06) to the inverse-CDF branch, where the image
    # terms neglected by the rejection sampler are largest (exp(-pi^2/(4 tau)) ~ 1e-18).
    G = make_group("SU", 2, "trace")
    U = G.heat_kernel(t, 3000, rng=np.random.default_rng(31))
    assert stats.kstest(_angle(U), _ks_cdf(t, 1.0)).pvalue > 1e-4

"""Brownian motion and heat-kernel samplers.

References for the checks:
- E[pi(U_t)] = exp(-c_pi t / 2) Id for Brownian motion with generator (1/2) sum X_a^2
  (M. Liao 2004, "Levy Processes in Lie Groups", Section 1.3; DEVELOPERS.md "Conventions").
- SU(2) heat-kernel angle law: class-function series sum_j (2j+1) exp(-c_j t/2) chi_j
  against the Weyl density (2/pi) sin^2(theta) (H. Weyl 1939, "The Classical Groups";
  L. Gross 1986, Springer LNM 1158), integrated with scipy.integrate.quad.
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
    # Power check: the same KS test detects a 10% error in t. At 3000 samples the
    # p-value ranges over 1e-10..2e-4 across seeds (marginal power); at 10^4 it is
    # below 1e-14 for all seeds tried.
    G = make_group("SU", 2, "physics")
    U = G.heat_kernel(0.55, 10000, rng=np.random.default_rng(3))
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
    # reproduce them (inverse-CDF branch, tau >= 0.5) to ~1e-14. Both the per-column
    # table path ((500, 4), equal rows) and the general path are exercised.
    from holonomy.groups import sample_su2_angle

    rng = np.random.default_rng(123)
    if len(shape) == 2 and shape[0] > 64:
        tau = np.broadcast_to(np.array([0.5, 0.7, 0.9, 3.0]), shape)
    else:
        tau = rng.uniform(0.5, 2.5, size=shape)
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


# ------------------------------------------- rejection branch with images (tau < 0.5)
@pytest.mark.parametrize("tau", [0.01, 0.061, 0.2, 0.35, 0.4999])
def test_su2_rejection_target_and_bound(tau):
    # Deterministic: the rejection sampler's target, accept(theta) * proposal(theta)
    # with proposal density theta^2 exp(-theta^2/(4 tau)) / (2 sqrt(pi) tau^{3/2})
    # (chi-3 law scaled by sqrt(2 tau)) and overall factor exp(tau), must equal the
    # character-series density (Weyl 1939; Gross 1986) computed independently in
    # `_ref_pdf`; and the acceptance probability must stay in [0, 1].
    from holonomy.groups._heat import _accept_numerator

    theta = np.linspace(1e-6, np.pi, 2001)
    num = _accept_numerator(theta, np.full_like(theta, tau))
    acc = num / theta**2
    assert acc.max() <= 1.0 and acc.min() >= -1e-300
    target = np.exp(tau) * num * np.exp(-theta**2 / (4 * tau)) / (2 * np.sqrt(np.pi) * tau**1.5)
    ref = np.array([_ref_pdf(x, 4 * tau, 1.0) for x in theta])
    np.testing.assert_allclose(target, ref, rtol=0, atol=1e-13 * ref.max())
    # The bound used to skip the images: 0 <= B - A <= (4 pi^2/tau) exp(-pi (pi - th)/tau)
    # with A, B the m = +1 / m = -1 image terms relative to m = 0 (elementary; checked
    # here on the grid).
    A = (1 + 2 * np.pi / theta) * np.exp(-np.pi * (np.pi + theta) / tau)
    B = (2 * np.pi / theta - 1) * np.exp(-np.pi * (np.pi - theta) / tau)
    bound = (4 * np.pi**2 / tau) * np.exp(-np.pi * (np.pi - theta) / tau)
    assert np.all(B - A >= -1e-300) and np.all(B - A <= bound * (1 + 1e-12))


@pytest.mark.parametrize("tau", [0.0599, 0.0601, 0.4999, 0.5001])
def test_su2_angle_ks_at_branch_boundaries(tau):
    # Both sides of the image cut-off (0.06) and of the rejection / inverse-CDF switch
    # (0.5); one-sample KS (scipy.stats.kstest) against the quadrature reference CDF.
    from holonomy.groups import sample_su2_angle

    theta = sample_su2_angle(np.full(20000, tau), rng=np.random.default_rng(int(1e4 * tau)))
    assert stats.kstest(theta, _ks_cdf(4 * tau, 1.0)).pvalue > 1e-4
    theta = sample_su2_angle(np.full((5000, 3), tau), rng=np.random.default_rng(7))  # column path
    assert stats.kstest(theta.ravel(), _ks_cdf(4 * tau, 1.0)).pvalue > 1e-4



# ------------------------------------------------ SO(2), SO(3): exact samplers
@pytest.mark.parametrize("t", [0.3, 2.0])
@pytest.mark.parametrize("metric", ["trace", "physics"])
def test_so3_heat_kernel_exact(t, metric):
    # SO(3) = SU(2)/{+-1} (Hall 2015, Section 1.4); with metric k on so(3) the double
    # cover is a local isometry from SU(2) with metric 4k and doubles the rotation
    # angle. KS of half the rotation angle against the SU(2) reference law at k' = 4k
    # (quadrature of the character series, Weyl 1939 / Gross 1986), and the Casimir law
    # E[chi/3] = exp(-c t/2) (Liao 2004) at 4 standard errors.
    G = make_group("SO", 3, metric)
    U = G.heat_kernel(t, 20000, rng=np.random.default_rng(int(10 * t) + len(metric)))
    assert U.shape == (20000, 3, 3) and G.drift(U) < 1e-12
    cos_phi = np.clip((np.trace(U, axis1=-2, axis2=-1) - 1) / 2, -1, 1)
    half = np.arccos(cos_phi) / 2
    assert stats.kstest(half[:4000], _ks_cdf(t, 4 * G.k)).pvalue > 1e-4
    r = G.rep("fundamental")
    chi = r.character(U).real
    assert abs(chi.mean() - np.exp(-r.casimir * t / 2)) < 4 * chi.std() / np.sqrt(chi.size)


@pytest.mark.parametrize("t", [0.4, 3.0])
def test_so2_heat_kernel_exact(t):
    # Abelian: angle ~ N(0, t / (2k)) (X_1 has norm one, so its rotation rate is
    # 1/sqrt(2k)); E[cos(angle)] = exp(-t / (4k)) (Gaussian characteristic function).
    G = make_group("SO", 2, "physics")
    U = G.heat_kernel(t, 20000, rng=np.random.default_rng(int(t * 10)))
    c = U[:, 0, 0]
    assert abs(c.mean() - np.exp(-t / (4 * G.k))) < 4 * c.std() / np.sqrt(c.size)


# ------------------------------------------- per-time step counts (non-exact groups)
@pytest.mark.parametrize("family,n,metric", [("SU", 3, "physics"), ("Sp", 2, "trace"), ("SO", 4, "trace")])
def test_heat_kernel_many_times_casimir(family, n, metric):
    # Unsorted times with different step counts (0, 8, 50, 120 steps): each column must
    # follow its own law, E[chi/dim] = exp(-c t/2) (Liao 2004) within 4 standard
    # errors; the t = 0 column is exactly the identity.
    G = make_group(family, n, metric)
    t = np.array([0.5, 0.0, 0.03, 1.2, 0.03])
    size = 3000
    U = G.heat_kernel(t, size, rng=np.random.default_rng(41))
    assert U.shape == (size, 5, G.N, G.N) and G.drift(U) < 1e-12
    np.testing.assert_array_equal(U[:, 1], G.identity(size))
    r = G.rep("fundamental")
    chi = r.character(U).real
    se = chi.std(axis=0) / np.sqrt(size)
    exact = np.exp(-r.casimir * t / 2)
    assert np.all(np.abs(chi.mean(axis=0) - exact) <= 4 * se + 1e-15), (chi.mean(axis=0), exact, se)


# ------------------------------------------- bias of one geodesic step, deterministic
@pytest.mark.parametrize("family,n,metric,spec", [
    ("SU", 3, "physics", "fundamental"), ("SU", 3, "trace", "adjoint"),
    ("SU", 2, "physics", "spin:3/2"), ("Sp", 2, "trace", "fundamental"),
    ("SO", 5, "physics", "fundamental"), ("U", 3, "trace", "fundamental"),
])
def test_one_step_fourth_moment(family, n, metric, spec):
    # The documented law error of the walk: one step exp(sqrt(s) Z.X) has
    # E[chi_pi]/dim = 1 - c s/2 + m4 s^2/24 + O(s^3), m4 = E[tr (Z.pi(X))^4]/dim, so
    # log of it is -c s/2 - c_ss c_ad s^2/48 + O(s^3) iff m4 = 3 c^2 - c_ss c_ad / 2.
    # m4 from Isserlis' theorem (Isserlis 1918, Biometrika 12, 134: three pairings of
    # four Gaussians); c_ad = sum_ab |[X_a, X_b]|^2 / dim of the semisimple part,
    # c_ss = the Casimir without the centre of u(n).
    G = make_group(family, n, metric)
    r = G.rep(spec)
    X = r.algebra_matrix(G.basis)  # (d, D, D)
    D = X.shape[-1]
    S = np.einsum("aij,ajk->ik", X, X)
    m4 = (np.einsum("ij,ji->", S, S) + np.einsum("aij,bjk,akl,bli->", X, X, X, X)
          + np.einsum("aij,bjk,bkl,ali->", X, X, X, X)).real / D
    c = r.casimir
    B = G.basis
    comm = np.einsum("aij,bjk->abik", B, B) - np.einsum("bij,ajk->abik", B, B)
    total = -G.k * np.einsum("abij,abji->", comm, comm).real  # sum_ab <[X_a,X_b],[X_a,X_b]>
    c_ss = c
    d_ss = G.dim
    if family == "U":
        Y0 = r.algebra_matrix((1j * np.eye(G.N) / np.sqrt(G.N * G.k))[None])[0]
        c_ss = c + (Y0 @ Y0)[0, 0].real  # remove the centre's share (pi(Y0)^2 is scalar)
        d_ss = G.dim - 1
    c_ad = total / d_ss
    assert m4 == pytest.approx(3 * c**2 - c_ss * c_ad / 2, rel=1e-10, abs=1e-12)


@pytest.mark.parametrize("t,k", [(0.05, 2.0), (1.2, 1.0), (3.0, 2.0)])
def test_su2_heat_quaternions_law(t, k):
    # Angle against the character-series CDF (quadrature), axis against the uniform law
    # on the sphere: one coordinate of a uniform unit vector is uniform on [-1, 1]
    # (Archimedes' hat-box theorem); one-sample KS tests from scipy.stats.
    from holonomy.groups import su2_heat_quaternions

    q = su2_heat_quaternions(np.full(4000, t / (4 * k)), rng=np.random.default_rng(8))
    assert np.allclose(np.einsum("...i,...i->...", q, q), 1.0, atol=1e-14)
    theta = np.arccos(np.clip(q[:, 0], -1, 1))
    assert stats.kstest(theta, _ks_cdf(t, k)).pvalue > 1e-3
    z = q[:, 3] / np.sin(theta)
    assert stats.kstest(z, stats.uniform(-1, 2).cdf).pvalue > 1e-3

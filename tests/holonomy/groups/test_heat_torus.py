"""Exact heat kernels on the maximal torus: U(n), SU(n), SO(n), Sp(n).

References for the checks:
- E[pi(U_t)] = exp(-c_pi t/2) Id for an irreducible pi (M. Liao 2004, "Levy Processes in
  Lie Groups", Section 1.3).
- Casimir constants with the trace metric (k = 1) from the Killing form
  B(X, Y) = 2N tr(XY) on su(N), (N - 2) tr(XY) on so(N), 2(n + 1) tr(XY) on sp(n)
  (S. Helgason 1978, "Differential Geometry, Lie Groups, and Symmetric Spaces", Ch. III;
  from memory): c_adj = 2N, N - 2, 2n + 2 and c_fund = (N^2 - 1)/N, (N - 1)/2,
  (2n + 1)/2; U(n) irreducible of highest weight lambda:
  c = sum_j lambda_j (lambda_j + n + 1 - 2j) (D. P. Zhelobenko 1973, "Compact Lie
  Groups and Their Representations", AMS; from memory). All scale as 1/k.
- The eigenangle law: the class function sum_lambda d_lambda chi_lambda exp(-c t/2)
  times the Weyl density, characters and dimensions from the Weyl character and
  dimension formulas (H. Weyl 1939, "The Classical Groups"; W. Fulton and J. Harris
  1991, "Representation Theory", Ch. 24), integrated on a grid of the torus;
  one-sample Kolmogorov-Smirnov test of Re tr U from scipy.stats.
"""

import itertools

import numpy as np
import pytest
from scipy import stats

from holonomy.groups import exact_heat_route, make_group

TIMES = (0.02, 1.0, 5.0)


def _u_casimir(lam, n, k):
    return sum(l * (l + n + 1 - 2 * j) for j, l in enumerate(lam, start=1)) / k


def _two_characters(G, U):
    """Two irreducible characters (normalized) and their Casimir constants."""
    fam, n, N, k = G.family, G.n, G.N, G.k
    p1 = np.trace(U, axis1=-2, axis2=-1)
    p1r = np.einsum("...ii->...", U.real) if fam == "SO" else p1
    if fam in ("U", "SU"):
        p2 = np.einsum("...ij,...ji->...", U, U)
        alt = (p1 * p1 - p2) / 2 / (N * (N - 1) / 2)  # exterior square
        lam_f, lam_a = (1,) + (0,) * (n - 1), (1, 1) + (0,) * (n - 2)
        cf, ca = _u_casimir(lam_f, n, k), _u_casimir(lam_a, n, k)
        if fam == "SU":  # remove the centre: |lambda|^2 / (n k)
            cf, ca = cf - 1 / (n * k), ca - 4 / (n * k)
        return [(p1 / N, cf), (alt, ca)]
    if fam == "SO":
        adj = (p1r * p1r - np.einsum("...ij,...ji->...", U, U)) / 2 / (N * (N - 1) / 2)
        return [(p1r / N, (N - 1) / 2 / k), (adj, (N - 2) / k)]
    # Sp(n): adjoint = Sym^2 of the defining representation
    sym = (p1 * p1 + np.einsum("...ij,...ji->...", U, U)) / 2 / (n * (2 * n + 1))
    return [(p1 / N, (2 * n + 1) / 2 / k), (sym, (2 * n + 2) / k)]


FAST = [("U", 3, "trace"), ("SU", 3, "physics"), ("SO", 4, "trace"), ("Sp", 2, "physics")]
HEAVY = [("U", 4, "large-n"), ("SU", 6, "trace"), ("SU", 4, "physics"), ("SO", 5, "trace"), ("U", 5, "trace"),
         ("U", 6, "physics"), ("SO", 8, "trace"), ("SO", 9, "physics"), ("Sp", 4, "trace"),
         ("SU", 8, "large-n")]


def _check_characters(family, n, metric, size, seed):
    G = make_group(family, n, metric)
    assert exact_heat_route(G) == "torus"
    U = G.heat_kernel(np.array(TIMES), size, rng=np.random.default_rng(seed))
    assert G.drift(U) < 1e-12
    for i, t in enumerate(TIMES):
        for chi, c in _two_characters(G, U[:, i]):
            x = chi.real
            se = x.std(ddof=1) / np.sqrt(size)
            exact = np.exp(-c * t / 2)
            assert abs(x.mean() - exact) < 4 * se + 1e-12, (family, n, t, c, x.mean(), exact, se)
            assert np.abs(chi.imag.mean()) < 4 * chi.imag.std() / np.sqrt(size) + 1e-12


@pytest.mark.parametrize("family,n,metric", FAST)
def test_torus_kernel_characters(family, n, metric):
    _check_characters(family, n, metric, 4000, 11)


@pytest.mark.slow
@pytest.mark.parametrize("family,n,metric", FAST + HEAVY)
def test_torus_kernel_characters_large(family, n, metric):
    _check_characters(family, n, metric, 100_000, 12)


# ------------------------------------------------------------ eigenangle law (KS)
def _weyl(family, m):
    """Weyl group as (matrix, sign) pairs on the torus coordinates."""
    out = []
    for p in itertools.permutations(range(m)):
        P = np.eye(m)[list(p)]
        sp = np.linalg.det(P)
        if family == "SU":
            out.append((P, sp))
            continue
        for signs in itertools.product((1, -1), repeat=m):
            if family == "SO_even" and np.prod(signs) < 0:
                continue
            D = np.diag(signs)
            out.append((D @ P, sp * (np.prod(signs) if family != "SO_even" else 1)))
    return out


def _class_law(G, t, M=None):
    """Grid points of the torus, their weights (the heat-kernel eigenangle density) and
    Re tr U there, from the Weyl character formula. The default grid resolves the
    density's width sqrt(t / k) (a coarser one biases the reference CDF at small t)."""
    fam, n, k = G.family, G.n, G.k
    M = M or max(240, int(180 / np.sqrt(t / k)))
    if fam == "SU":
        m, kind, c = n, "SU", k
        rho = np.arange(n - 1, -1, -1, dtype=float)
    elif fam == "Sp":
        m, kind, c = n, "Sp", 2 * k
        rho = np.arange(n, 0, -1, dtype=float)
    else:
        m, c = n // 2, 2 * k
        kind = "SO_even" if n % 2 == 0 else "SO_odd"
        rho = np.arange(m - 1, -1, -1, dtype=float) + (0.0 if n % 2 == 0 else 0.5)
    W = _weyl(kind, m)
    L = max(40, int(12 / np.sqrt(t / k)))  # e^{-c t / 2} below ~1e-20 beyond
    lams = []
    for lam in itertools.product(range(L), repeat=m):
        if any(lam[i] < lam[i + 1] for i in range(m - 1)):
            continue
        if kind == "SU" and lam[-1] != 0:
            continue
        lams.append(np.array(lam, float))
    if kind == "SO_even":
        lams += [l * np.r_[np.ones(m - 1), -1] for l in lams if l[-1] > 0]

    def proj(v):  # su(n): traceless part (the centre does not act)
        return v - v.mean() if kind == "SU" else v

    roots = [np.eye(m)[i] - np.eye(m)[j] for i in range(m) for j in range(i + 1, m)]
    if kind != "SU":
        roots += [np.eye(m)[i] + np.eye(m)[j] for i in range(m) for j in range(i + 1, m)]
    if kind == "SO_odd":
        roots += list(np.eye(m))
    if kind == "Sp":
        roots += list(2 * np.eye(m))
    free = m - 1 if kind == "SU" else m
    theta = np.linspace(0, 2 * np.pi, M, endpoint=False)

    def exponents(mu):  # doubled exponents of exp(i mu . x) in the free angles
        e = mu[:free] - mu[-1] if kind == "SU" else mu
        return np.rint(2 * e).astype(int)

    # sum_mu C_mu exp(i mu . x) on the grid as a separable (Fourier) sum: one
    # coefficient array indexed by the doubled exponents, contracted axis by axis
    P = 4 * (L + m + 2)
    E = np.exp(0.5j * np.outer(theta, np.arange(-P, P + 1)))

    def evaluate(C):
        out = C
        for _ in range(free):
            out = np.tensordot(E, out, axes=([1], [free - 1]))  # newest axis first
        return out

    def alt_coeffs(mu, coef, C):
        for w, s in W:
            C[tuple(exponents(w @ mu) + P)] += s * coef

    shape = (2 * P + 1,) * free
    C_rho, C = np.zeros(shape, complex), np.zeros(shape, complex)
    alt_coeffs(rho, 1.0, C_rho)
    for lam in lams:
        lr = lam + rho
        d = np.prod([(lr @ a) / (rho @ a) for a in roots])
        cas = (proj(lr) @ proj(lr) - proj(rho) @ proj(rho)) / c
        coef = d * np.exp(-cas * t / 2)
        if coef >= 1e-15:
            alt_coeffs(lr, coef, C)
    A_rho, total = evaluate(C_rho).ravel(), evaluate(C).ravel()
    mesh = np.meshgrid(*[theta] * free, indexing="ij")
    pts = np.stack([g.ravel() for g in mesh], axis=1)
    if kind == "SU":
        pts = np.concatenate([pts, -pts.sum(axis=1, keepdims=True)], axis=1)
    weight = (np.conj(A_rho) * total).real
    assert weight.min() > -1e-8 * weight.max()  # a density
    weight = np.maximum(weight, 0) / weight.sum()
    if fam == "SU":  # the eigenangles themselves (tr U = sum_j exp(i x_j))
        return pts, weight
    trace = 2 * np.cos(pts).sum(axis=1)
    return trace + (1 if kind == "SO_odd" else 0), weight


def _cdf_from(values, weight):
    order = np.argsort(values)
    xs, cdf = values[order], np.cumsum(weight[order])
    return lambda x: np.interp(x, xs, cdf, left=0.0, right=1.0)


def _ks(G, t, size, seed):
    trace, weight = _class_law(G, t)
    if G.family == "SU":
        trace = np.cos(trace).sum(axis=1)
    F = _cdf_from(trace, weight)
    U = G.heat_kernel(t, size, rng=np.random.default_rng(seed))
    sample = np.einsum("...ii->...", U).real
    return stats.kstest(sample, F).pvalue


@pytest.mark.parametrize("family,n,metric,t", [("SU", 3, "trace", 0.3), ("SU", 3, "physics", 4.0),
                                               ("SO", 4, "trace", 0.7), ("Sp", 2, "trace", 1.5)])
def test_torus_kernel_trace_law(family, n, metric, t):
    assert _ks(make_group(family, n, metric), t, 3000, 5) > 1e-3


@pytest.mark.slow
@pytest.mark.parametrize("family,n,metric,t", [("SU", 4, "trace", 0.5), ("SO", 5, "physics", 2.0),
                                               ("SU", 3, "trace", 0.05)])
def test_torus_kernel_trace_law_large(family, n, metric, t):
    assert _ks(make_group(family, n, metric), t, 50_000, 6) > 1e-3


def _ks_unitary(G, t, size, seed, nodes=96, bins=None):
    """KS of Re tr U for U(n): U(n) = (U(1) x SU(n)) / Z_n, so the U(n) heat kernel is
    the image of exp(i b) V with V the SU(n) kernel (class law from the Weyl character
    series) and b ~ N(0, s^2) independent, s^2 = (c_U - c_SU) t from the two Casimirs of
    the defining representation (header; the centre's share 1 / (n k)). The law of
    Re(exp(i b) tr V) is a mixture: grid points (optionally binned in the plane) times
    ``nodes`` Gaussian nodes in b."""
    n, k = G.n, G.k
    pts, weight = _class_law(G.special_part, t)
    z = np.exp(1j * pts).sum(axis=1)
    if bins:
        edges = np.linspace(-n, n, bins + 1)
        h, _, _ = np.histogram2d(z.real, z.imag, bins=(edges, edges), weights=weight)
        mid = (edges[1:] + edges[:-1]) / 2
        keep = h.ravel() > 0
        z = (mid[:, None] + 1j * mid[None, :]).ravel()[keep]
        weight = h.ravel()[keep]
    s = np.sqrt(t / (n * k))  # c_U - c_SU = 1 / (n k) (defining representation)
    u = np.linspace(-7, 7, nodes)
    omega = np.exp(-u * u / 2)
    omega /= omega.sum()
    values = (np.exp(1j * s * u)[None, :] * z[:, None]).real
    F = _cdf_from(values.ravel(), (weight[:, None] * omega[None, :]).ravel())
    U = G.heat_kernel(t, size, rng=np.random.default_rng(seed))
    return stats.kstest(np.einsum("...ii->...", U).real, F).pvalue


def test_unitary_kernel_trace_law():
    assert _ks_unitary(make_group("U", 3, "trace"), 0.4, 3000, 21) > 1e-3


@pytest.mark.slow
@pytest.mark.parametrize("n,metric,t", [(3, "physics", 0.05), (3, "large-n", 5.0),
                                        (4, "trace", 0.5)])
def test_unitary_kernel_trace_law_large(n, metric, t):
    bins = 700 if n == 4 else None
    assert _ks_unitary(make_group("U", n, metric), t, 20_000, 22, bins=bins) > 1e-3


def test_acceptance_rate_is_exp_minus_rho2_t_over_2():
    # Rejection from the Gaussian proposal accepts at exp(-|rho|^2 t / 2); for SU(3)
    # with the trace metric |rho|^2 = N (N^2 - 1) / 12 = 2 (Freudenthal-de Vries
    # strange formula |rho|^2 = c_adj dim / 24; from memory).
    from holonomy.groups._heat import _torus_accept, _torus_coords, _torus_law

    G = make_group("SU", 3, "trace")
    law = _torus_law("SU", 3, 1.0)
    assert law.rho2 == pytest.approx(2.0)
    t = 0.6
    rng = np.random.default_rng(3)
    Z = rng.standard_normal((50_000, G.dim)) * np.sqrt(t)
    r = _torus_accept(law, _torus_coords(law, -1j * G.algebra(Z)), np.full(len(Z), t))
    assert r.min() >= -1e-12 and r.max() <= 1 + 1e-12
    assert abs(r.mean() - np.exp(-law.rho2 * t / 2)) < 4 * r.std() / np.sqrt(r.size)


def test_routes():
    assert exact_heat_route(make_group("U", 2, "trace")) == "su2-angle"
    assert exact_heat_route(make_group("SO", 3, "trace")) == "su2-angle"
    assert exact_heat_route(make_group("Sp", 2, "trace")) == "torus"
    # every size the spec accepts (matrix size <= 32) has an exact route
    for family, n in (("SU", 6), ("U", 32), ("SO", 8), ("SO", 32), ("Sp", 4), ("Sp", 16)):
        assert exact_heat_route(make_group(family, n, "trace")) == "torus"
        assert make_group(family, n, "physics").exact_heat_kernel


def test_heat_reference_is_exact_for_large_groups():
    # The heat scheme's exact value is the continuum value of the lattice loop where the
    # kernel is exact in law (README, "exact"): now every group. SU(N) physics metric:
    # c_fund = (N^2 - 1) / (2N) (Casimir table above, k = 2).
    from discretize import Loop
    from holonomy import Field, LatticeProblem
    from holonomy._schemes import HeatScheme

    loop = Loop.polygon([(0, 0), (1, 0), (1, 1), (0, 1)])
    field = Field(1.0, 0.5, scheme="heat")
    for n in (4, 6):
        exact = HeatScheme().lattice_value(LatticeProblem("SU", n, "physics", field, (loop,)), 0)
        assert abs(exact.value - np.exp(-(n * n - 1) / (2 * n) / 2)) < 1e-12


# ------------------------------------------------- the algebra route of large groups
def _algebra_law(family, n, k):
    """The algebra route's data for a group that normally takes the image route, so
    that route can be checked against the class law where the grid integration is
    feasible (the formula does not depend on the size)."""
    import dataclasses

    from holonomy.groups import _heat

    law = _heat._torus_law(family, n, k)
    return dataclasses.replace(law, algebra=True, images=np.zeros((1, law.m)),
                               piece=min(law.piece, 0.5 / law.rho2))


@pytest.mark.parametrize("family,n,metric,t", [("SU", 3, "trace", 0.3), ("SO", 4, "trace", 0.7),
                                               ("Sp", 2, "trace", 0.4)])
def test_algebra_route_trace_law(monkeypatch, family, n, metric, t):
    # The acceptance max(0, prod_a sinc(a(y)/2pi)) on the algebra (large groups) against
    # the Weyl character series (Weyl 1939), one-sample KS, on groups small enough for
    # the grid integration.
    from holonomy.groups import _heat

    G = make_group(family, n, metric)
    law = _algebra_law(family, n, float(G.k))
    monkeypatch.setattr(_heat, "_torus_law", lambda *a: law)
    assert _ks(G, t, 3000, 8) > 1e-3


def test_algebra_route_acceptance_rate():
    # Acceptance exp(-|rho|^2 t/2) per piece (the proposal's mass beyond the first zero
    # of s is far below the resolution); SU(6) trace metric: |rho|^2 = N (N^2 - 1)/12
    # = 17.5 (Freudenthal-de Vries strange formula, from memory).
    from holonomy.groups._heat import _torus_law

    G = make_group("SU", 6, "trace")
    law = _torus_law("SU", 6, 1.0)
    assert law.algebra and law.rho2 == pytest.approx(17.5) and law.bound < 1e-18
    t = law.piece
    Z = np.random.default_rng(4).standard_normal((40_000, G.dim)) * np.sqrt(t)
    y = np.linalg.eigvalsh(-1j * G.algebra(Z))
    r = np.maximum(np.prod(np.sinc((y @ law.roots.T) / (2 * np.pi)), axis=-1), 0)
    assert abs(r.mean() - np.exp(-law.rho2 * t / 2)) < 4 * r.std() / np.sqrt(r.size)


def test_heat_kernel_law_reports_route_and_bound():
    # what `provenance.heat_kernel` carries (README.md, "Results"): SU(3) with the trace
    # metric has |rho|^2 = 2 (strange formula above), pieces of 2/|rho|^2 = 1 and
    # acceptance exp(-1) at a full piece
    from holonomy.groups import heat_kernel_law

    info = heat_kernel_law(make_group("SU", 3, "trace"))
    assert info["route"] == "torus" and info["images"] == "nearest"
    assert info["piece"] == pytest.approx(1.0) and info["acceptance"] == pytest.approx(np.exp(-1))
    assert 0 <= info["law_error_bound"] <= 1e-18
    big = heat_kernel_law(make_group("U", 32, "large-n"))
    assert big["images"] == "algebra" and 0 <= big["law_error_bound"] <= 1e-18
    assert heat_kernel_law(make_group("U", 1, "trace"))["law_error_bound"] == 0.0
    assert heat_kernel_law(make_group("SU", 2, "trace"))["law_error_bound"] is None


@pytest.mark.parametrize("family,n", [("SU", 3), ("SO", 5), ("Sp", 2)])
def test_skipped_images_do_not_move_the_acceptance(monkeypatch, family, n):
    # the one-bound skip of the other images (holonomy.groups._heat._IMAGE_SKIP) against
    # the full image sums: the same acceptance to rounding at short and long times
    from holonomy.groups import _heat

    G = make_group(family, n, "trace")
    law = _heat._torus_law(family, n, 1.0)
    rng = np.random.default_rng(6)
    for t in (0.02, 0.3, law.piece):
        Z = rng.standard_normal((4000, G.dim)) * np.sqrt(t)
        x = _heat._torus_coords(law, -1j * G.algebra(Z))
        tt = np.full(len(Z), t)
        fast = _heat._torus_accept(law, x, tt)
        monkeypatch.setattr(_heat, "_IMAGE_SKIP", 0.0)
        full = _heat._torus_accept(law, x, tt)
        monkeypatch.undo()
        np.testing.assert_allclose(fast, full, rtol=0, atol=1e-14)

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
HEAVY = [("U", 4, "large-n"), ("SU", 4, "physics"), ("SO", 5, "trace"), ("U", 5, "trace")]


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
    trace = np.cos(pts).sum(axis=1)
    if fam != "SU":
        trace = 2 * trace + (1 if kind == "SO_odd" else 0)
    return trace, weight


def _ks(G, t, size, seed):
    trace, weight = _class_law(G, t)
    order = np.argsort(trace)
    xs, cdf = trace[order], np.cumsum(weight[order])

    def F(x):
        return np.interp(x, xs, cdf, left=0.0, right=1.0)

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
    assert exact_heat_route(make_group("SU", 6, "trace")) is None
    assert make_group("SU", 4, "physics").exact_heat_kernel
    assert not make_group("SU", 6, "physics").exact_heat_kernel


def test_heat_reference_says_whether_the_kernel_is_exact():
    # The heat scheme's exact value is the continuum value of the lattice loop only where
    # the kernel is exact in law (README, "exact"); sub-stepped groups get null + a note.
    from discretize import Loop
    from holonomy import Field, LatticeProblem
    from holonomy._schemes import HeatScheme

    loop = Loop.polygon([(0, 0), (1, 0), (1, 1), (0, 1)])
    field = Field(1.0, 0.5, scheme="heat")
    exact = HeatScheme().lattice_value(LatticeProblem("SU", 4, "physics", field, (loop,)), 0)
    assert exact.value is not None and abs(exact.value - np.exp(-15 / 8 / 2)) < 1e-12
    sub = HeatScheme().lattice_value(LatticeProblem("SU", 6, "physics", field, (loop,)), 0)
    assert sub.value is None and "sub-stepping" in sub.note

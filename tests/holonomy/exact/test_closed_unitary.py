"""U(N) / SU(N) loops wound n times (hook expansion) and the free limit:
holonomy.exact._unitary."""

import math

import numpy as np
import pytest
from scipy import linalg

from holonomy.exact import (
    free_unitary_moment,
    unitary_casimir,
    unitary_dimension,
    unitary_wound_loop,
)
from holonomy.groups import make_group


def partitions(n, maxpart=None):
    maxpart = n if maxpart is None else maxpart
    if n == 0:
        yield ()
        return
    for first in range(min(n, maxpart), 0, -1):
        for rest in partitions(n - first, first):
            yield (first,) + rest


def syt_count(lam):
    """Number of standard Young tableaux, hook length formula (Frame, Robinson, Thrall,
    "The hook graphs of the symmetric group", Canad. J. Math. 6 (1954) 316)."""
    conj = [sum(1 for r in lam if r > j) for j in range(lam[0])]
    hooks = 1
    for i, r in enumerate(lam):
        for j in range(r):
            hooks *= (r - j - 1) + (conj[j] - i - 1) + 1
    return math.factorial(sum(lam)) // hooks


def weyl_dimension(lam, N):
    """Weyl dimension formula prod_{i<j} (l_i - l_j + j - i) / (j - i) (Fulton and
    Harris 1991, "Representation Theory", section 15; from memory)."""
    l = list(lam) + [0] * (N - len(lam))
    num = den = 1
    for i in range(N):
        for j in range(i + 1, N):
            num *= l[i] - l[j] + j - i
            den *= j - i
    return num // den


def tensor_algebra(G, n):
    """d rho(X_a) on (C^N)^{(x) n} for the basis of G."""
    N = G.N
    eye = np.eye(N)
    out = []
    for X in G.basis:
        total = 0
        for pos in range(n):
            factors = [eye] * n
            factors[pos] = X
            m = factors[0]
            for f in factors[1:]:
                m = np.kron(m, f)
            total = total + m
        out.append(total)
    return np.array(out)


def cyclic_operator(N, n):
    """C with tr(C A^{(x) n}) = tr(A^n)."""
    T = np.eye(N**n).reshape([N] * (2 * n))
    perm = [(i + 1) % n for i in range(n)] + list(range(n, 2 * n))
    return T.transpose(perm).reshape(N**n, N**n)


def tensor_moment(G, n, t):
    """E[tr_N U_t^n] = tr(C exp((t/2) sum_a d rho(X_a)^2)) / N: the heat semigroup on the
    matrix coefficients of U^{(x) n} (E[rho(U_t)] = exp(t Delta/2) applied to rho;
    e.g. Levy 2008, Adv. Math. 218), evaluated with scipy.linalg.expm."""
    D = tensor_algebra(G, n)
    L = 0.5 * np.einsum("aij,ajk->ik", D, D)
    return np.trace(cyclic_operator(G.N, n) @ linalg.expm(t * L)) / G.N


def test_cyclic_operator():
    A = np.random.default_rng(0).standard_normal((3, 3))
    K = np.kron(np.kron(A, A), A)
    assert np.trace(cyclic_operator(3, 3) @ K) == pytest.approx(np.trace(A @ A @ A), rel=1e-12)


class TestCasimirAndDimension:
    @pytest.mark.parametrize("N", [2, 3, 4])
    def test_casimir_table(self, N):
        # Casimir values (Georgi 1999, ch. 7-8, from memory): U(N) fund, k = N: 1; SU(N) fund, k = N: 1 - 1/N^2;
        # SU(N) fund, k = 2: (N^2 - 1)/(2N); SU(N) adjoint (2, 1^(N-2)), k = 2: N
        # (Georgi 1999, "Lie Algebras in Particle Physics", ch. 7, from memory).
        assert unitary_casimir((1,), N) == pytest.approx(1.0, abs=1e-14)
        assert unitary_casimir((1,), N, special=True) == pytest.approx(1 - 1 / N**2, abs=1e-14)
        assert unitary_casimir((1,), N, k=2, special=True) == pytest.approx((N * N - 1) / (2 * N))
        adj = (2,) + (1,) * (N - 2)
        assert unitary_casimir(adj, N, k="physics", special=True) == pytest.approx(N, abs=1e-13)

    @pytest.mark.parametrize("family, N, n, metric", [
        ("U", 2, 2, "large-n"), ("U", 2, 3, "large-n"), ("U", 3, 2, "large-n"),
        ("U", 3, 3, "large-n"), ("SU", 2, 3, "large-n"), ("SU", 3, 3, "large-n"),
        ("U", 3, 2, "physics"), ("SU", 3, 2, 1.5),
    ])
    def test_against_tensor_power_spectrum(self, family, N, n, metric):
        # Schur-Weyl duality: (C^N)^{(x) n} = sum_lambda V_lambda (x) S_lambda, so the
        # Casimir operator -sum_a d rho(X_a)^2 built from the group's orthonormal basis
        # has eigenvalue c(lambda) with multiplicity f^lambda d_lambda (Fulton and Harris
        # 1991, section 6; Weyl 1939, "The Classical Groups").
        G = make_group(family, N, metric)
        D = tensor_algebra(G, n)
        ev = np.sort(np.linalg.eigvalsh(-np.einsum("aij,ajk->ik", D, D)))
        expected = []
        for lam in partitions(n):
            if len(lam) <= N:
                c = unitary_casimir(lam, N, k=G.k, special=family == "SU")
                expected += [c] * (syt_count(lam) * unitary_dimension(lam, N))
        np.testing.assert_allclose(ev, np.sort(expected), atol=1e-10)

    @pytest.mark.parametrize("N", [1, 2, 3, 5])
    def test_dimension_weyl_formula(self, N):
        for n in range(1, 7):
            total = 0
            for lam in partitions(n):
                d = unitary_dimension(lam, N)
                assert d == (weyl_dimension(lam, N) if len(lam) <= N else 0)
                total += syt_count(lam) * d
            assert total == N**n  # dim (C^N)^{(x) n} (Schur-Weyl)


class TestWoundLoop:
    @pytest.mark.parametrize("family, N, n, metric, t", [
        ("U", 2, 2, "large-n", 0.7), ("U", 2, 3, "large-n", 1.3), ("U", 2, 4, "large-n", 0.4),
        ("U", 3, 2, "large-n", 1.1), ("U", 3, 3, "large-n", 0.6), ("U", 3, 4, "large-n", 2.0),
        ("SU", 2, 3, "large-n", 0.9), ("SU", 3, 2, "large-n", 1.7), ("SU", 3, 3, "physics", 0.5),
        ("U", 2, 3, "trace", 0.8),
    ])
    def test_against_tensor_heat_semigroup(self, family, N, n, metric, t):
        G = make_group(family, N, metric)
        ref = tensor_moment(G, n, t)
        val = unitary_wound_loop(N, n, t, family == "SU", k=G.k)
        assert abs(val - ref) < 1e-12

    def test_su2_characters(self):
        # SU(2), k = 2: tr U^2 = chi_1 - chi_0, tr U^3 = chi_{3/2} - chi_{1/2}, c_j = j(j+1)
        # (Clebsch-Gordan; Georgi 1999, ch. 3).
        t = 0.9
        assert unitary_wound_loop(2, 2, t, True) == pytest.approx((3 * np.exp(-t) - 1) / 2, rel=1e-13)
        assert unitary_wound_loop(2, 3, t, True) == pytest.approx(
            (4 * np.exp(-15 * t / 8) - 2 * np.exp(-3 * t / 8)) / 2, rel=1e-13)

    @pytest.mark.parametrize("N", [1, 2, 5])
    def test_one_turn(self, N):
        # n = 1: exp(-c t / 2) with c = 1 (U(N), k = N) and 1 - 1/N^2 (SU(N)).
        t = np.array([0.0, 0.5, 3.0])
        np.testing.assert_allclose(unitary_wound_loop(N, 1, t), np.exp(-t / 2), rtol=1e-14)
        if N > 1:
            np.testing.assert_allclose(unitary_wound_loop(N, 1, t, True),
                                       np.exp(-(1 - 1 / N**2) * t / 2), rtol=1e-14)

    @pytest.mark.parametrize("n, t", [(2, 0.5), (3, 1.0), (4, 2.5), (5, 4.0)])
    def test_converges_to_biane(self, n, t):
        # Biane 1997 (Fields Inst. Commun. 12); Levy 2008: the gap is O(1/N^2) (from memory).
        free = free_unitary_moment(n, t)
        gaps = [abs(unitary_wound_loop(N, n, t) - free) for N in (10, 40, 160)]
        assert gaps[0] > gaps[1] > gaps[2]
        # N^2 * gap settles to a constant (O(1/N^2), not slower)
        assert gaps[2] * 160**2 == pytest.approx(gaps[1] * 40**2, rel=0.05)
        assert abs(unitary_wound_loop(N := 2000, n, t, True) - free) < 5 / N**2

    def test_biane_small_cases(self):
        # nu_1 = e^{-t/2}, nu_2 = e^{-t}(1 - t), nu_3 = e^{-3t/2}(1 - 3t + 3t^2/2)
        # (Biane 1997, the moment formula written out).
        t = 0.77
        assert free_unitary_moment(1, t) == pytest.approx(np.exp(-t / 2), rel=1e-14)
        assert free_unitary_moment(2, t) == pytest.approx(np.exp(-t) * (1 - t), rel=1e-14)
        assert free_unitary_moment(3, t) == pytest.approx(
            np.exp(-1.5 * t) * (1 - 3 * t + 1.5 * t * t), rel=1e-14)

    @pytest.mark.parametrize("n", [2, 3])
    def test_monte_carlo_u2_exact_sampler(self, n):
        # U(2), k = 2: u(2) = u(1) + su(2) orthogonally, so U_t = exp(i B_t / 2) V_t with
        # B_t ~ N(0, t) (generator i Id / sqrt(k N)) and V_t SU(2) Brownian motion (exact
        # sampler), independent. 4 standard errors.
        t, S = 0.8, 40000
        rng = np.random.default_rng(2024 + n)
        V = make_group("SU", 2, "large-n").heat_kernel(t, S, rng=rng)
        phase = np.exp(0.5j * rng.standard_normal(S) * np.sqrt(t))
        U = phase[:, None, None] * V
        x = np.trace(np.linalg.matrix_power(U, n), axis1=-2, axis2=-1) / 2
        se = x.real.std(ddof=1) / np.sqrt(S)
        assert abs(x.real.mean() - unitary_wound_loop(2, n, t)) < 4 * se
        assert abs(x.imag.mean()) < 4 * x.imag.std(ddof=1) / np.sqrt(S)
        y = np.trace(np.linalg.matrix_power(V, n), axis1=-2, axis2=-1).real / 2
        assert abs(y.mean() - unitary_wound_loop(2, n, t, True)) < 4 * y.std(ddof=1) / np.sqrt(S)

    @pytest.mark.slow
    @pytest.mark.parametrize("family, n", [("U", 2), ("U", 3), ("SU", 2)])
    def test_monte_carlo_n3_brownian(self, family, n):
        # N = 3 by the geodesic random walk (weak error O(dt); 400 steps keeps the bias
        # far below the 4-standard-error band of 6000 samples).
        t, S = 0.8, 6000
        G = make_group(family, 3, "large-n")
        U = G.brownian(t, S, rng=np.random.default_rng(77), steps=400).value
        x = np.trace(np.linalg.matrix_power(U, n), axis1=-2, axis2=-1).real / 3
        se = x.std(ddof=1) / np.sqrt(S)
        assert abs(x.mean() - unitary_wound_loop(3, n, t, family == "SU")) < 4 * se

    @pytest.mark.parametrize(
        "args, kwargs, err, match",
        [
            ((0, 2, 1.0), {}, ValueError, "`N` must be an integer >= 1"),
            ((2, 0, 1.0), {}, ValueError, "`n` must be an integer >= 1"),
            ((2, 2.0, 1.0), {}, TypeError, "`n` must be an integer"),
            ((2, 2, np.nan), {}, ValueError, "`t` must be finite"),
            ((2, 2, 1.0), {"k": -1}, ValueError, "`k` must be one of .* or a positive finite number"),
            ((2, 2, 1.0, "yes"), {}, TypeError, "`special` must be a bool"),
        ],
    )
    def test_bad_input(self, args, kwargs, err, match):
        with pytest.raises(err, match=match):
            unitary_wound_loop(*args, **kwargs)

    def test_bad_partition(self):
        with pytest.raises(ValueError, match="`partition` must have at most N = 2 rows"):
            unitary_casimir((1, 1, 1), 2)
        with pytest.raises(ValueError, match="`partition` must be non-increasing"):
            unitary_dimension((1, 2), 3)

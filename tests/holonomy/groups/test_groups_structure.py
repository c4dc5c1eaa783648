"""Structure of the groups: bases, metrics, Casimir constants, bad input.

Sources of the reference values are named beside each check.
"""

import itertools

import numpy as np
import pytest

from holonomy.groups import make_group
from noise import ArgumentError

FAMILY_SIZES = [("U", 1), ("U", 2), ("U", 3), ("SU", 2), ("SU", 3), ("SU", 4), ("SO", 2),
                ("SO", 3), ("SO", 4), ("SO", 5), ("Sp", 1), ("Sp", 2), ("Sp", 3)]
METRICS = ["trace", "physics", "large-n", 0.37]


def _dim(family, n):
    # Dimensions of the classical compact groups: n^2, n^2 - 1, n(n-1)/2, n(2n+1)
    # (Hall 2015, "Lie Groups, Lie Algebras, and Representations", Section 1.2 / 3.7).
    return {"U": n * n, "SU": n * n - 1, "SO": n * (n - 1) // 2, "Sp": n * (2 * n + 1)}[family]


@pytest.mark.parametrize("family,n", FAMILY_SIZES)
@pytest.mark.parametrize("metric", METRICS)
class TestBasis:
    def test_dimensions(self, family, n, metric):
        G = make_group(family, n, metric)
        assert G.dim == _dim(family, n)
        assert G.basis.shape == (G.dim, G.N, G.N)
        assert G.N == (2 * n if family == "Sp" else n)
        assert G.real == (family == "SO")

    def test_orthonormal(self, family, n, metric):
        # Definition of the metric <X, Y> = -k Re tr(XY) (README.md "Conventions").
        G = make_group(family, n, metric)
        B = G.basis
        gram = -G.k * np.einsum("aij,bji->ab", B, B).real
        np.testing.assert_allclose(gram, np.eye(G.dim), atol=1e-13)

    def test_in_algebra(self, family, n, metric):
        # Lie algebras of U/SU/SO/Sp (Hall 2015, Section 3.4): skew-Hermitian, traceless
        # for SU, real for SO, X^T J + J X = 0 for Sp.
        G = make_group(family, n, metric)
        B = G.basis
        np.testing.assert_allclose(B + np.conj(np.swapaxes(B, 1, 2)), 0, atol=1e-15)
        if family == "SU":
            np.testing.assert_allclose(np.trace(B, axis1=1, axis2=2), 0, atol=1e-15)
        if family == "SO":
            assert not np.iscomplexobj(B)
        if family == "Sp":
            J = G.J
            np.testing.assert_allclose(np.swapaxes(B, 1, 2) @ J + J @ B, 0, atol=1e-15)

    def test_closed_under_bracket(self, family, n, metric):
        # [X_a, X_b] lies in the algebra: it equals its expansion in the orthonormal basis.
        G = make_group(family, n, metric)
        B = G.basis
        C = B[:, None] @ B[None, :] - B[None, :] @ B[:, None]
        recon = G.algebra(G.coords(C))
        np.testing.assert_allclose(recon, C, atol=1e-13)

    def test_ad_invariant(self, family, n, metric):
        # Ad-invariance <U X U^*, U Y U^*> = <X, Y>, i.e. Ad(U) is orthogonal in the
        # orthonormal basis (Hall 2015, Section 3.6 / 12.3, Ad-invariant inner products).
        G = make_group(family, n, metric)
        U = G.haar(4, rng=np.random.default_rng(7))
        A = G.rep("adjoint").matrix(U)
        eye = np.broadcast_to(np.eye(G.dim), A.shape)
        np.testing.assert_allclose(np.swapaxes(A, -1, -2) @ A, eye, atol=1e-12)
        rng = np.random.default_rng(8)
        X, Y = G.algebra(rng.standard_normal((2, G.dim)))
        UX = U @ X @ G.inv(U)
        UY = U @ Y @ G.inv(U)
        np.testing.assert_allclose(G.inner(UX, UY), G.inner(X, Y), atol=1e-12)

    def test_coords_roundtrip(self, family, n, metric):
        G = make_group(family, n, metric)
        c = np.random.default_rng(3).standard_normal((5, G.dim))
        np.testing.assert_allclose(G.coords(G.algebra(c)), c, atol=1e-13)


def test_metric_constants():
    # Named metrics (README.md "Conventions"): trace 1, physics 2, large-n = N.
    assert make_group("SU", 3).k == 1.0
    assert make_group("SU", 3, "physics").k == 2.0
    assert make_group("SU", 3, "large-n").k == 3.0
    assert make_group("Sp", 2, "large-n").k == 4.0
    assert make_group("U", 2, 0.5).k == 0.5
    # The physics metric gives tr(T_a T_b) = delta_ab / 2 for T_a = -i X_a
    # (Georgi 1999, "Lie Algebras in Particle Physics", Eq. (2.28) normalisation).
    G = make_group("SU", 3, "physics")
    T = -1j * G.basis
    np.testing.assert_allclose(np.einsum("aij,bji->ab", T, T), np.eye(8) / 2, atol=1e-15)


# ----------------------------------------------------------------- Casimir table
# Published values, H. Georgi, "Lie Algebras in Particle Physics", 2nd ed. (1999):
# SU(N) fundamental C_F = (N^2 - 1)/(2N) and adjoint C_A = N with tr(T_a T_b) = delta/2
# (k = 2); SU(2) spin j: j(j+1) (chapter numbers from memory: 13 and 3). Rescaling the
# metric by k/2 rescales c by 2/k (orthonormal basis scales by 1/sqrt(k)). U(N) with k = N: c = 1 (large-N normalisation; from memory, e.g.
# T. Levy 2010, "Schur-Weyl duality and the heat kernel measure on the unitary group").
# SO(N) defining with <X,Y> = -tr(XY): (N - 1)/2 (from memory; follows from
# sum_{i<j} (E_ij - E_ji)^2 / 2 = -(N - 1)/2 Id).
NS = [2, 3, 4, 5]


@pytest.mark.parametrize("N", NS)
def test_casimir_u_fundamental_large_n(N):
    assert make_group("U", N, "large-n").rep("fundamental").casimir == pytest.approx(1.0, abs=1e-12)


@pytest.mark.parametrize("N", NS)
def test_casimir_su_fundamental(N):
    assert make_group("SU", N, "large-n").rep("fundamental").casimir == pytest.approx(
        1 - 1 / N**2, abs=1e-12)
    assert make_group("SU", N, "physics").rep("fundamental").casimir == pytest.approx(
        (N**2 - 1) / (2 * N), abs=1e-12)


@pytest.mark.parametrize("N", NS)
def test_casimir_su_adjoint(N):
    assert make_group("SU", N, "physics").rep("adjoint").casimir == pytest.approx(N, abs=1e-12)


@pytest.mark.parametrize("N", NS)
def test_casimir_so_defining(N):
    assert make_group("SO", N, "trace").rep("fundamental").casimir == pytest.approx(
        (N - 1) / 2, abs=1e-12)


@pytest.mark.parametrize("j2", range(0, 9))
@pytest.mark.parametrize("metric,k", [("physics", 2.0), ("trace", 1.0), (3.5, 3.5)])
def test_casimir_su2_spin(j2, metric, k):
    j = j2 / 2
    spec = f"spin:{j2}/2"
    r = make_group("SU", 2, metric).rep(spec)
    assert r.dim == j2 + 1
    assert r.casimir == pytest.approx(2 * j * (j + 1) / k, abs=1e-12)


def test_casimir_not_scalar_is_none():
    # U(n) adjoint (n >= 2) contains a trivial summand: not a multiple of the identity.
    assert make_group("U", 3).rep("adjoint").casimir is None
    assert make_group("SU", 3).rep("power:2").casimir is None


def test_sp1_equals_su2():
    # Sp(1) is SU(2) (Hall 2015, Section 1.2.8): same matrices, same Casimir constants.
    S, P = make_group("SU", 2, "physics"), make_group("Sp", 1, "physics")
    assert P.N == 2 and P.dim == 3
    for spec in ["fundamental", "adjoint", "spin:3/2"]:
        assert P.rep(spec).casimir == pytest.approx(S.rep(spec).casimir, abs=1e-12)
    # SU(2) elements preserve J = [[0, 1], [-1, 0]] (U^T J U = det(U) J).
    U = S.haar(10, rng=np.random.default_rng(0))
    np.testing.assert_allclose(np.swapaxes(U, 1, 2) @ P.J @ U - P.J, 0, atol=1e-13)
    # Sp(1) basis spans su(2): traceless skew-Hermitian, expands exactly in SU(2)'s basis.
    np.testing.assert_allclose(S.algebra(S.coords(P.basis)), P.basis, atol=1e-14)


# ------------------------------------------------------------------- bad input
@pytest.mark.parametrize("args,exc,match", [
    (("SL", 2), ValueError, r"`family` must be one of .*got 'SL'"),
    ((3, 2), TypeError, r"`family` must be a string"),
    (("U", 0), ValueError, r"`n` must be an integer >= 1; got n=0"),
    (("SU", -1), ValueError, r"`n` must be an integer >= 1; got n=-1"),
    (("SU", 1), ValueError, r"`n` must be >= 2 for SU\(n\).*got n=1"),
    (("Sp", 0), ValueError, r"`n` must be an integer >= 1; got n=0 for Sp"),
    (("SO", 1), ValueError, r"`n` must be >= 2 for SO\(n\)"),
    (("U", 2.0), TypeError, r"`n` must be an integer"),
    # the matrix size limit (holonomy/groups/_group.py MAX_GROUP_MATRIX): refused at
    # once instead of a MemoryError when the algebra basis is first built
    (("U", 10**6), ValueError, r"`n`: got 1000000; expected at most 64 for U"),
    (("SU", 65), ValueError, r"`n`: got 65; expected at most 64 for SU"),
    (("Sp", 33), ValueError, r"`n`: got 33; expected at most 32 for Sp"),
    (("U", 2, 0), ValueError, r"`metric` must be one of .* positive finite number; got 0"),
    (("U", 2, -1.5), ValueError, r"`metric` must be one of .*got -1.5"),
    (("U", 2, float("inf")), ValueError, r"`metric` must be .*got inf"),
    (("U", 2, "euclid"), ValueError, r"`metric` must be one of \('trace', 'physics', 'large-n'\).*got 'euclid'"),
    (("U", 2, None), TypeError, r"`metric` must be one of"),
])
def test_make_group_iv(args, exc, match):
    with pytest.raises(exc, match=match):
        make_group(*args)


@pytest.mark.parametrize("family,n,spec,match", [
    ("SU", 3, "spin:1", r"`rep` 'spin:1': spin representations exist for SU\(2\) and Sp\(1\) only"),
    ("SU", 2, "spin:1/3", r"`rep` spin must be a non-negative half-integer.*got '1/3'"),
    ("SU", 2, "spin:0.7", r"`rep` spin must be a non-negative half-integer.*got '0.7'"),
    ("SU", 2, "spin:-1/2", r"`rep` spin must be a non-negative half-integer.*got '-1/2'"),
    ("SU", 2, "spin:x", r"`rep` spin must be a non-negative half-integer.*got 'x'"),
    ("SU", 2, "power:0", r"`rep` 'power:k' needs an integer k >= 1; got 'power:0'"),
    ("U", 2, "vector", r"`rep` must be 'fundamental', 'adjoint'.*got 'vector'"),
])
def test_rep_iv(family, n, spec, match):
    with pytest.raises(ArgumentError, match=match) as info:
        make_group(family, n).rep(spec)
    assert info.value.argument == "rep"


def test_spin_spellings():
    G = make_group("SU", 2, "physics")
    assert G.rep("spin:3/2").name == G.rep("spin:1.5").name == "spin:3/2"
    assert G.rep("spin:2").dim == 5
    assert G.rep("spin:0").dim == 1 and G.rep("spin:0").casimir == 0.0


def test_make_group_normalises_and_caches():
    assert make_group("su", 3) is make_group("SU", 3, "trace")
    assert make_group("SP", 2).family == "Sp"
    import pickle
    G = make_group("SU", 3, "physics")
    H = pickle.loads(pickle.dumps(G))
    assert H == G
    np.testing.assert_array_equal(H.basis, G.basis)

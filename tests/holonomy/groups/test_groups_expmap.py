"""Exponential map, group membership, projection: checked against scipy.linalg.expm
(the Al-Mohy & Higham 2009 scaling-and-squaring algorithm, SIAM J. Matrix Anal. Appl.
31, 970) and the defining equations of the groups (Hall 2015, "Lie Groups, Lie
Algebras, and Representations", Section 1.2)."""

import numpy as np
import pytest
import scipy.linalg
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from holonomy.groups import make_group

GROUPS = [("U", 1), ("U", 2), ("U", 3), ("U", 4), ("SU", 2), ("SU", 3), ("SU", 5), ("SO", 2),
          ("SO", 3), ("SO", 4), ("SO", 5), ("Sp", 1), ("Sp", 2), ("Sp", 3)]


def _coords(G):
    return arrays(np.float64, (3, G.dim), elements=st.floats(-4.0, 4.0, allow_nan=False))


@pytest.mark.parametrize("family,n", GROUPS)
@pytest.mark.parametrize("metric", ["physics", 0.3])
def test_exp_matches_scipy_expm(family, n, metric):
    G = make_group(family, n, metric)

    @settings(max_examples=8, deadline=None)
    @given(_coords(G))
    def check(c):
        U = G.exp(c, coords=True)
        X = G.algebra(c)
        ref = np.array([scipy.linalg.expm(x) for x in X])
        np.testing.assert_allclose(U, ref, atol=1e-12, rtol=0)
        assert G.drift(U) < 1e-12
        # matrix input gives the same result
        np.testing.assert_allclose(G.exp(X, coords=False), U, atol=1e-14, rtol=0)

    check()


@pytest.mark.parametrize("family,n", GROUPS)
def test_exp_batched_shapes_and_membership(family, n):
    G = make_group(family, n, "physics")
    rng = np.random.default_rng(11)
    c = 3 * rng.standard_normal((4, 5, 6, G.dim))
    U = G.exp(c, coords=True)
    assert U.shape == (4, 5, 6, G.N, G.N)
    assert U.dtype == (np.float64 if family == "SO" else np.complex128)
    # Unitarity, det = 1 for SU/SO, U^T J U = J for Sp, all to 1e-12.
    assert G.drift(U) < 1e-12
    if family in ("SU", "SO"):
        np.testing.assert_allclose(np.linalg.det(U), 1.0, atol=1e-12)
    if family == "Sp":
        np.testing.assert_allclose(np.swapaxes(U, -1, -2) @ G.J @ U, np.broadcast_to(G.J, U.shape), atol=1e-12)
    # exp(X) exp(-X) = Id
    np.testing.assert_allclose(U @ G.exp(-c, coords=True), G.identity(U.shape[:-2]), atol=1e-12)
    np.testing.assert_allclose(G.inv(U), G.exp(-c, coords=True), atol=1e-12)


def test_exp_shape_reading():
    # SO(3): d == N == 3, (..., 3, 3) real arrays are read as coordinates unless they
    # are nonzero antisymmetric matrices.
    G = make_group("SO", 3)
    c = np.random.default_rng(0).standard_normal((4, 3, 3))
    assert G.exp(c).shape == (4, 3, 3, 3)
    X = G.algebra(c[0])
    assert G.exp(X).shape == (3, 3, 3)
    np.testing.assert_allclose(G.exp(X[0]), scipy.linalg.expm(X[0]), atol=1e-13)
    assert G.exp(c[0], coords=False).shape == (3, 3)
    # U(1): real (..., 1, 1) arrays are coordinates, complex ones algebra matrices.
    U1 = make_group("U", 1)
    assert U1.exp(np.zeros((5, 1))).shape == (5, 1, 1)
    np.testing.assert_allclose(U1.exp(np.array([[[0.3j]]])), np.exp(0.3j), atol=1e-15)
    with pytest.raises(ValueError, match=r"`coords` must have last axis of length d=8"):
        make_group("SU", 3).exp(np.zeros((2, 5)))


@pytest.mark.parametrize("family,n", GROUPS)
def test_project(family, n):
    G = make_group(family, n)
    rng = np.random.default_rng(5)
    U = G.exp(rng.standard_normal((20, G.dim)), coords=True)
    # On the group, projection is the identity map.
    np.testing.assert_allclose(G.project(U), U, atol=1e-12)
    # Off the group, it lands on the group and moves about as far as the perturbation.
    E = 1e-6 * rng.standard_normal(U.shape)
    if not G.real:
        E = E + 1e-6j * rng.standard_normal(U.shape)
    P = G.project(U + E)
    assert G.drift(P) < 1e-12
    assert np.max(np.abs(P - U)) < 1e-5


def test_project_so_flips_reflections():
    G = make_group("SO", 3)
    R = np.diag([1.0, 1.0, -1.0])
    P = G.project(R)
    np.testing.assert_allclose(np.linalg.det(P), 1.0, atol=1e-14)


@pytest.mark.parametrize("family,n", GROUPS)
def test_haar_on_group(family, n):
    G = make_group(family, n)
    U = G.haar(50, rng=np.random.default_rng(2))
    assert U.shape == (50, G.N, G.N) and G.drift(U) < 1e-12


@pytest.mark.parametrize("family", ["U", "SU"])
def test_expm_u3_edge_cases_match_scipy(family):
    # Closed form (Morningstar & Peardon 2004, Phys. Rev. D 69, 054501) against
    # scipy.linalg.expm (Al-Mohy & Higham 2009) at the special points of the
    # parametrization: X = 0, degenerate spectra (det Q = +-max, the theta = 0 end),
    # tiny and large norms, and random matrices of both signs of det Q.
    from holonomy.groups import expm_u3

    G = make_group(family, 3, "trace")
    rng = np.random.default_rng(5)
    c = [np.zeros(G.dim), 1e-9 * rng.standard_normal(G.dim), 7.0 * rng.standard_normal(G.dim)]
    c += list(rng.standard_normal((20, G.dim)))
    X = list(G.algebra(np.array(c)))
    for d in ([1.0, 1.0, -2.0], [-1.0, -1.0, 2.0], [0.3, 0.3, 0.3]):  # degenerate spectra
        V = G.haar(1, rng=rng)[0] if family == "SU" else make_group("U", 3).haar(1, rng=rng)[0]
        H = V @ np.diag(d) @ V.conj().T
        X.append(1j * (H - (np.trace(H) / 3 if family == "SU" else 0)))
    X = np.array(X)
    ref = np.array([scipy.linalg.expm(x) for x in X])
    np.testing.assert_allclose(expm_u3(X), ref, atol=1e-12, rtol=0)
    np.testing.assert_allclose(G.exp_matrix(X), ref, atol=1e-12, rtol=0)



@pytest.mark.parametrize("family,n", [("U", 2), ("U", 4), ("SO", 4), ("Sp", 2), ("SO", 6)])
def test_expm_taylor_mixed_norms_match_scipy(family, n):
    # Scaled Taylor (Moler & Van Loan 2003, SIAM Review 45, Method 3) against
    # scipy.linalg.expm (Al-Mohy & Higham 2009): one batch mixing X = 0, tiny, step-sized
    # and large norms, so matrices take different numbers of squarings.
    from holonomy.groups import expm_taylor

    G = make_group(family, n, "trace")
    rng = np.random.default_rng(11)
    scales = np.array([0.0, 1e-10, 0.05, 0.3, 1.0, 4.0, 12.0])
    c = scales[:, None] * rng.standard_normal((scales.size, G.dim))
    X = G.algebra(c)
    ref = np.array([scipy.linalg.expm(x) for x in X])
    np.testing.assert_allclose(expm_taylor(X), ref, atol=1e-12, rtol=0)
    assert G.drift(expm_taylor(X)) < 1e-12

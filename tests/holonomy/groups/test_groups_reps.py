"""Representations and characters: homomorphism, unitarity, differentials, and the
character formulas of H. Weyl ("The Classical Groups", 1939) as given in Georgi 1999,
"Lie Algebras in Particle Physics", Chapter 3 (SU(2): chi_j = sin((2j+1)theta)/sin theta)."""

import numpy as np
import pytest
import scipy.linalg

from holonomy.groups import make_group

REPS = [("SU", 2, "fundamental"), ("SU", 2, "spin:0"), ("SU", 2, "spin:1/2"), ("SU", 2, "spin:1"),
        ("SU", 2, "spin:3/2"), ("SU", 2, "spin:5/2"), ("Sp", 1, "spin:2"), ("SU", 3, "adjoint"),
        ("U", 3, "adjoint"), ("SO", 4, "adjoint"), ("Sp", 2, "adjoint"), ("SO", 3, "fundamental"),
        ("U", 1, "adjoint"), ("SU", 3, "trivial")]


@pytest.mark.parametrize("family,n,spec", REPS)
class TestRepresentation:
    def setup_method(self):
        self.rng = np.random.default_rng(42)

    def test_homomorphism_and_unitarity(self, family, n, spec):
        G = make_group(family, n, "physics")
        r = G.rep(spec)
        U, V = G.haar(6, rng=self.rng).reshape(2, 3, G.N, G.N)
        PU, PV = r.matrix(U), r.matrix(V)
        assert PU.shape == (3, r.dim, r.dim)
        np.testing.assert_allclose(r.matrix(U @ V), PU @ PV, atol=1e-12)
        eye = np.broadcast_to(np.eye(r.dim), PU.shape)
        np.testing.assert_allclose(np.conj(np.swapaxes(PU, -1, -2)) @ PU, eye, atol=1e-12)
        np.testing.assert_allclose(r.matrix(G.identity()), np.eye(r.dim), atol=1e-14)

    def test_character_is_trace(self, family, n, spec):
        G = make_group(family, n, "physics")
        r = G.rep(spec)
        U = G.haar(5, rng=self.rng)
        tr = np.trace(r.matrix(U), axis1=-2, axis2=-1)
        np.testing.assert_allclose(r.character(U, normalized=False), tr, atol=1e-12)
        np.testing.assert_allclose(r.character(U), tr / r.dim, atol=1e-12)
        assert np.iscomplexobj(r.character(U))

    def test_differential(self, family, n, spec):
        # pi(exp(X)) = expm(dpi(X)) (Hall 2015, Theorem 3.28), expm from scipy.linalg.
        G = make_group(family, n, "physics")
        r = G.rep(spec)
        c = self.rng.standard_normal((3, G.dim))
        lhs = r.matrix(G.exp(c, coords=True))
        D = r.algebra_matrix(G.algebra(c))
        rhs = np.array([scipy.linalg.expm(d) for d in D])
        np.testing.assert_allclose(lhs, rhs, atol=1e-11)


@pytest.mark.parametrize("j2", range(0, 8))
def test_su2_weyl_character_formula(j2):
    # chi_j(theta) = sin((2j+1) theta) / sin(theta) (Georgi 1999, Chapter 3).
    G = make_group("SU", 2, "trace")
    theta = np.linspace(0.05, 3.1, 13)
    U = G.exp(theta[:, None] * np.sqrt(2.0) * np.array([0.0, 0.0, 1.0]), coords=True)
    np.testing.assert_allclose(np.linalg.eigvals(U)[:, 0].real, np.cos(theta), atol=1e-13)
    chi = G.rep(f"spin:{j2}/2").character(U, normalized=False)
    np.testing.assert_allclose(chi, np.sin((j2 + 1) * theta) / np.sin(theta), atol=1e-11)


def test_su2_spin1_is_adjoint():
    # The adjoint of SU(2) is spin 1 (Georgi 1999, Chapter 3).
    G = make_group("SU", 2, "physics")
    U = G.haar(20, rng=np.random.default_rng(1))
    np.testing.assert_allclose(G.rep("spin:1").character(U), G.rep("adjoint").character(U), atol=1e-12)


@pytest.mark.parametrize("N", [2, 3, 4])
def test_su_adjoint_character(N):
    # chi_adj(U) = |tr U|^2 - 1 for SU(N), U(N) adjoint: |tr U|^2 (adjoint = fund x
    # antifund minus trivial; Georgi 1999, Chapter 13; from memory).
    U = make_group("SU", N).haar(10, rng=np.random.default_rng(N))
    tr = np.trace(U, axis1=-2, axis2=-1)
    np.testing.assert_allclose(make_group("SU", N).rep("adjoint").character(U, False), np.abs(tr) ** 2 - 1, atol=1e-12)
    V = make_group("U", N).haar(10, rng=np.random.default_rng(N))
    trv = np.trace(V, axis1=-2, axis2=-1)
    np.testing.assert_allclose(make_group("U", N).rep("adjoint").character(V, False), np.abs(trv) ** 2, atol=1e-12)


@pytest.mark.parametrize("k", [1, 2, 3, 5])
def test_power_character(k):
    # tr(U^k) = sum of k-th powers of the eigenvalues (numpy.linalg.eigvals).
    G = make_group("U", 3)
    U = G.haar(7, rng=np.random.default_rng(k))
    ev = np.linalg.eigvals(U)
    r = G.rep(f"power:{k}")
    np.testing.assert_allclose(r.character(U, normalized=False), np.sum(ev**k, axis=-1), atol=1e-12)
    assert r.dim == 3 and (r.casimir is None) == (k > 1) and r.irreducible == (k == 1)
    if k > 1:
        with pytest.raises(ValueError, match=r"`rep` 'power:2' is a class function"):
            G.rep("power:2").matrix(U)

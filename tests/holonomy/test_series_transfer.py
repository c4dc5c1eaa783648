"""The label transfer, the batched transfer and the tensor-power route for repeated
products give the same coefficients as the edge transfer of `exp_product_series`.

Outside anchors for the same engine are in test_series.py (Laguerre and SU(2) closed
forms of one Gaussian exponential, Isserlis counts); here the routes are checked
against each other and against a literal Monte Carlo-free identity:
tr(X^w) = tr(X^{(x)w} P) for the cyclic shift P (Fulton and Harris 1991, §6,
Schur-Weyl duality; from memory).
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
import scipy.linalg

from holonomy import exp_product_series
from holonomy._series import (
    _alive, _power_basis, _transfer_batched, _transfer_keys, factor_product_series,
)
from holonomy.groups import make_group


def _loadings(m, S, seed):
    rng = np.random.default_rng(seed)
    U = rng.choice([-1.0, 0.0, 0.0, 1.0], size=(m, S))
    U[np.arange(m), rng.integers(0, S, m)] = 1.0   # every step uses some noise
    mu = rng.uniform(0.2, 1.0, S)
    return U, mu


@pytest.mark.parametrize("family,n,rep", [("SU", 2, "fundamental"), ("U", 2, "fundamental"),
                                          ("SO", 3, "fundamental"), ("SU", 2, "spin:1")])
def test_labels_match_edges(family, n, rep):
    G = make_group(family, n, "physics")
    U, mu = _loadings(6, 4, seed=1)
    a = factor_product_series(G, U, mu, 4, rep=rep).coefficients
    b = exp_product_series(G, (U * mu) @ U.T, 4, rep=rep).coefficients
    assert np.allclose(a, b, rtol=1e-12, atol=1e-14)


def test_batched_matches_per_state_loop():
    U, mu = _loadings(7, 5, seed=2)
    mu[1] = -0.7  # a signed (formal) variance
    C = (U * mu) @ U.T
    for M in (3, 4):
        fast = _transfer_batched(U * mu, U, np.diagonal(C).copy(), M)
        slow = _transfer_keys(U * mu, U, np.diagonal(C).copy(), M, False)
        assert set(fast) <= set(slow)
        for key, v in slow.items():
            assert abs(fast.get(key, 0.0) - complex(v)) <= 1e-12 * max(1.0, abs(v))


def test_alive_labels():
    # label 0 used on edges 0 and 2, label 1 only on edge 1: only label 0 crosses cuts
    U = np.array([[1.0, 0.0], [0.0, 1.0], [1.0, 0.0]])
    assert [a.tolist() for a in _alive(U, U)] == [[], [0], [0], []]


def test_power_basis_trace_identity():
    G = make_group("SU", 3)
    B = G.basis
    x = np.array([0.3, -0.2, 0.5, 0.1, -0.4, 0.2, 0.05, 0.3])
    X = scipy.linalg.expm(np.einsum("a,aij->ij", x, B))
    Bw, P = _power_basis(B, 2)
    Xw = scipy.linalg.expm(np.einsum("a,aij->ij", x, Bw))
    assert np.allclose(Xw, np.kron(X, X), atol=1e-13)
    assert abs(np.trace(Xw @ P) - np.trace(X @ X)) < 1e-13


@pytest.mark.parametrize("turns", [2, 3])
def test_repeated_product(turns):
    G = make_group("SU", 2, "physics")
    U, mu = _loadings(4, 3, seed=3)
    a = factor_product_series(G, U, mu, 4, turns=turns).coefficients
    b = factor_product_series(G, np.tile(U, (turns, 1)), mu, 4).coefficients
    assert np.allclose(a, b, rtol=1e-11, atol=1e-14)


def test_exact_labels_are_rational():
    G = make_group("SU", 2, "physics")
    U = np.array([[1.0, 0.0], [1.0, 1.0], [-1.0, 0.0]])
    mu = np.array([Fraction(1, 4), Fraction(1, 8)], dtype=object)
    res = factor_product_series(G, U, mu, 3, exact=True)
    flt = exp_product_series(G, (U * [0.25, 0.125]) @ U.T, 3).coefficients
    assert all(c.is_Rational for c in res.coefficients)
    assert np.allclose([float(c) for c in res.coefficients], flt, rtol=1e-13)

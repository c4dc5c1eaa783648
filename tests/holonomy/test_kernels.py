"""Quaternion and matrix kernels give the same group elements."""

from __future__ import annotations

import numpy as np
import pytest

from holonomy._kernels import MatrixKernel, QuaternionKernel, kernel_for
from holonomy.groups import make_group


@pytest.mark.parametrize("family,n,metric", [("SU", 2, "physics"), ("SU", 2, "trace"),
                                             ("Sp", 1, 3.0)])
def test_quaternion_kernel_matches_matrices(family, n, metric):
    group = make_group(family, n, metric)
    q, m = QuaternionKernel(group), MatrixKernel(group)
    rng = np.random.default_rng(0)
    a, b = rng.standard_normal((2, 50, 3)) * 3
    qa, qb = q.exp(a), q.exp(b)
    np.testing.assert_allclose(q.to_matrices(qa), m.exp(a), atol=1e-13)
    np.testing.assert_allclose(q.to_matrices(q.mul(qa, qb)), m.exp(a) @ m.exp(b), atol=1e-13)
    np.testing.assert_allclose(q.to_matrices(q.dagger(qa)), m.dagger(m.exp(a)), atol=1e-13)
    factors = q.exp(rng.standard_normal((4, 7, 3)))
    mats = q.to_matrices(factors)
    prod = mats[:, 0]
    for i in range(1, 7):
        prod = prod @ mats[:, i]
    np.testing.assert_allclose(q.to_matrices(q.product(factors)), prod, atol=1e-12)
    assert q.drift(q.product(factors)) < 1e-13
    rep = group.rep("fundamental")
    np.testing.assert_allclose(q.character(rep, qa), rep.character(m.exp(a)), atol=1e-13)


def test_quaternion_heat_kernel_moment():
    # E[tr U_t]/2 = exp(-c t / 2), c = 3/4 for SU(2) with k = 2 (Levy 2003, Mem. AMS 166;
    # any text on Brownian motion on compact groups)
    group = make_group("SU", 2, "physics")
    kern = kernel_for(group)
    assert isinstance(kern, QuaternionKernel)
    t = np.array([0.05, 1.0, 4.0])
    a0 = kern.heat(t, 40000, np.random.default_rng(1))[..., 0]
    mean, se = a0.mean(axis=0), a0.std(axis=0, ddof=1) / np.sqrt(a0.shape[0])
    assert np.all(np.abs(mean - np.exp(-0.375 * t)) <= 4 * se)


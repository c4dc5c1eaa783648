"""Gaussian vectors with a given covariance."""

import numpy as np
import pytest
import scipy.linalg
from scipy import stats

from noise import covariance_factor, gaussian_vector


def test_factor_reproduces_cov():
    # L L^T = C, compared with SciPy's Cholesky factor (scipy.linalg.cholesky), which
    # reproduces the same C for a positive definite matrix.
    rng = np.random.default_rng(0)
    A = rng.standard_normal((5, 5))
    C = A @ A.T + 0.1 * np.eye(5)
    L = covariance_factor(C)
    Lc = scipy.linalg.cholesky(C, lower=True)
    np.testing.assert_allclose(L @ L.T, Lc @ Lc.T, atol=1e-12)


def test_law_against_scipy():
    rng = np.random.default_rng(42)
    C = np.array([[2.0, 0.6, -0.3], [0.6, 1.0, 0.2], [-0.3, 0.2, 0.5]])
    n = 40000
    x = gaussian_vector(C, n, rng=rng)
    assert x.shape == (n, 3)
    # Sample covariance, 4 standard errors (Anderson 2003, "An Introduction to
    # Multivariate Statistical Analysis", sec. 3.4, from memory: se(s_ij) =
    # sqrt((C_ii C_jj + C_ij^2) / n)).
    S = x.T @ x / n
    se = np.sqrt((np.outer(np.diag(C), np.diag(C)) + C**2) / n)
    assert np.max(np.abs(S - C) / se) < 4
    # A projection a.x is N(0, a C a): KS test against scipy.stats.norm.
    a = np.array([1.0, -2.0, 0.5])
    assert stats.kstest(x @ a, stats.norm(scale=np.sqrt(a @ C @ a)).cdf).pvalue > 1e-4


def test_semidefinite():
    # Rank 2 in R^3: samples lie in the range of C exactly (to rounding).
    B = np.array([[1.0, 0.0], [1.0, 1.0], [0.0, 2.0]])
    C = B @ B.T
    null = np.cross(B[:, 0], B[:, 1])
    x = gaussian_vector(C, 1000, rng=1)
    assert np.max(np.abs(x @ null)) < 1e-12 * np.abs(x).max() * np.linalg.norm(null) * 10
    assert np.all(gaussian_vector(np.zeros((2, 2)), 3, rng=0) == 0)


def test_seeded():
    C = np.eye(2)
    np.testing.assert_array_equal(gaussian_vector(C, 4, rng=3), gaussian_vector(C, 4, rng=3))


@pytest.mark.parametrize(
    "cov, exc, match",
    [
        ([[1.0, 2.0], [2.0, 1.0]], ValueError, r"`cov` is indefinite \(most negative eigenvalue -1\).*`noise\.FormalGaussian`"),
        ([[1.0, 0.0], [0.0, -1e-3]], ValueError, r"`cov` is indefinite \(most negative eigenvalue -0\.001\)"),
        ([[1.0, 0.5], [0.0, 1.0]], ValueError, r"`cov` must be symmetric"),
        ([[1.0, np.nan], [np.nan, 1.0]], ValueError, r"`cov` must be finite"),
        ([1.0, 2.0], ValueError, r"`cov` must be a square \(m, m\) array"),
        (np.eye(2) * 1j, TypeError, r"`cov` must be a real symmetric matrix.*FormalGaussian"),
    ],
)
def test_validation(cov, exc, match):
    with pytest.raises(exc, match=match):
        gaussian_vector(cov, 3, rng=0)


def test_size_validation():
    with pytest.raises(ValueError, match=r"`size` must be a positive integer, got 0"):
        gaussian_vector(np.eye(2), 0)
    with pytest.raises(TypeError, match=r"`size` must be a positive integer"):
        gaussian_vector(np.eye(2), 2.0)

"""Gaussian vectors with a given covariance.

References
----------
.. [1] G. H. Golub and C. F. Van Loan, "Matrix Computations", 4th ed. (2013), sec. 8.1
   (symmetric eigendecomposition); a Gaussian vector with covariance C is ``L z`` for any
   L with ``L L^T = C`` and z standard normal.
.. [2] SciPy, ``scipy.stats.multivariate_normal``: the same tolerance for "numerically
   positive semidefinite" (eigenvalues above ``-1e6 * eps * max |eigenvalue|``).
"""

from __future__ import annotations

import numbers

import numpy as np

from ._seeding import rng_iv

__all__ = ["gaussian_vector", "covariance_factor"]

_EPS = 1e6 * np.finfo(float).eps


def _covariance_iv(cov) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    if np.iscomplexobj(cov):
        raise TypeError(
            "`cov` must be a real symmetric matrix; a complex covariance has no Gaussian "
            "law: use `noise.FormalGaussian`."
        )
    try:
        c = np.asarray(cov, dtype=float)
    except (TypeError, ValueError):
        raise TypeError(f"`cov` must be a real (m, m) array, got {cov!r}.") from None
    if c.ndim != 2 or c.shape[0] != c.shape[1] or c.shape[0] < 1:
        raise ValueError(f"`cov` must be a square (m, m) array with m >= 1, got shape {c.shape}.")
    if not np.all(np.isfinite(c)):
        raise ValueError("`cov` must be finite, got a non-finite entry.")
    scale = float(np.abs(c).max())
    asym = float(np.abs(c - c.T).max())
    if asym > _EPS * max(scale, np.finfo(float).tiny):
        raise ValueError(f"`cov` must be symmetric, got max |C - C^T| = {asym:.3g}.")
    c = (c + c.T) / 2
    w, vecs = np.linalg.eigh(c)
    tol = _EPS * max(abs(w).max(), np.finfo(float).tiny)
    if w[0] < -tol:
        raise ValueError(
            f"`cov` is indefinite (most negative eigenvalue {w[0]:.6g}): no Gaussian law "
            "has this covariance; evaluate expectations formally with "
            "`noise.FormalGaussian` (Wick rules) instead of sampling."
        )
    # Eigenvalues within rounding of zero are zero (a singular covariance), as in
    # scipy.stats.multivariate_normal.
    w = np.where(w > tol, w, 0.0)
    return c, w, vecs


def covariance_factor(cov) -> np.ndarray:
    """A matrix L with ``L @ L.T == cov`` (to rounding), from the eigendecomposition, so
    positive semidefinite (singular) covariances work. Refuses indefinite ones."""
    _, w, vecs = _covariance_iv(cov)
    return vecs * np.sqrt(w)


def _gaussian_vector_iv(cov, size, rng):
    if isinstance(size, bool) or not isinstance(size, numbers.Integral):
        raise TypeError(f"`size` must be a positive integer, got {size!r}.")
    if size < 1:
        raise ValueError(f"`size` must be a positive integer, got {size!r}.")
    return covariance_factor(cov), int(size), rng_iv(rng)


def gaussian_vector(cov, size: int, *, rng=None) -> np.ndarray:
    """Samples of a centered Gaussian vector with covariance ``cov``.

    Parameters
    ----------
    cov : array_like, shape (m, m)
        Real, symmetric, positive semidefinite (to rounding).
    size : int
    rng : seed or Generator, optional

    Returns
    -------
    ndarray, shape (size, m)

    Raises
    ------
    ValueError
        If ``cov`` is not symmetric, not finite, or indefinite; the message names the
        most negative eigenvalue and the formal route (``noise.FormalGaussian``).

    References
    ----------
    Golub and Van Loan (2013), sec. 8.1: ``x = L z`` with ``L = V diag(sqrt(w))`` for
    ``C = V diag(w) V^T`` has covariance C.
    """
    L, size, rng = _gaussian_vector_iv(cov, size, rng)
    z = rng.standard_normal((size, L.shape[1]))
    return z @ L.T

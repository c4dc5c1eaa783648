"""White noise on grids: Gaussian cell integrals, their refinement from spacing h to
h/2, and sums over column intervals drawn directly.

Conventions (part of the contract, see DEVELOPERS.md): the integral of white noise of
intensity lambda * mu over a cell c is N(0, lambda mu(c)) in each of the d Lie-algebra
components, independently over cells and components. Callers pass the variances
``lambda * mu(c)``; this layer knows nothing of groups or loops. Arrays carry the
samples first and the d components last: ``(size, nx, ny, d)``.

A negative variance (from a signed area density) has no Gaussian law: these functions
refuse it and name the formal route, :class:`noise.FormalGaussian`.

References
----------
.. [1] J. B. Walsh, "An introduction to stochastic partial differential equations",
   Ecole d'Ete de Probabilites de Saint-Flour XIV, LNM 1180 (1986), ch. 1 (white noise:
   independent Gaussian integrals over disjoint sets, variance = measure).
.. [2] Y. Hoffman and E. Ribak, "Constrained realizations of Gaussian fields: a simple
   algorithm", Astrophys. J. 380 (1991) L5-L8 (conditioning a Gaussian field on linear
   constraints by correcting an unconditional draw).
"""

from __future__ import annotations

import numbers

import numpy as np

from ._seeding import rng_iv

__all__ = ["cell_noise", "refine_noise", "interval_sums"]

_FORMAL = (
    "a negative variance (signed area density) has no Gaussian law; evaluate it formally "
    "with `noise.FormalGaussian` (the whitegauge formal series) instead of sampling"
)


def _count_iv(value, name: str) -> int:
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        raise TypeError(f"`{name}` must be a positive integer, got {value!r}.")
    if value < 1:
        raise ValueError(f"`{name}` must be a positive integer, got {value!r}.")
    return int(value)


def _variances_iv(variances, name: str = "variances") -> np.ndarray:
    try:
        v = np.asarray(variances, dtype=float)
    except (TypeError, ValueError):
        raise TypeError(f"`{name}` must be an array of real numbers, got {variances!r}.") from None
    if np.iscomplexobj(variances):
        raise TypeError(f"`{name}` must be real, got a complex array.")
    if not np.all(np.isfinite(v)):
        raise ValueError(f"`{name}` must be finite, got a non-finite entry.")
    if v.size and v.min() < 0:
        raise ValueError(f"`{name}` has a negative entry ({float(v.min())!r}): {_FORMAL}.")
    return v


def _cell_noise_iv(variances, d, size, rng):
    v = _variances_iv(variances)
    return v, _count_iv(d, "d"), _count_iv(size, "size"), rng_iv(rng)


def cell_noise(variances, d: int, size: int, *, rng=None) -> np.ndarray:
    """Gaussian white-noise integrals over the cells of a grid.

    Parameters
    ----------
    variances : array_like, shape (..., nx, ny)
        ``lambda * mu(cell)`` for each cell (non-negative).
    d : int
        Number of independent components (the Lie algebra's dimension).
    size : int
        Number of samples.
    rng : seed or Generator, optional

    Returns
    -------
    ndarray, shape (size, ..., nx, ny, d)
        Independent ``N(0, variances[...])`` entries, the same variance for every
        component.

    References
    ----------
    Walsh (1986), ch. 1: the white-noise integral over a set A is N(0, mu(A)), and
    integrals over disjoint sets are independent.
    """
    v, d, size, rng = _cell_noise_iv(variances, d, size, rng)
    z = rng.standard_normal((size, *v.shape, d))
    z *= np.sqrt(v)[..., None]
    return z


def interval_sums(variances, d: int, size: int, *, rng=None) -> np.ndarray:
    """Sums of cell noises over disjoint column intervals, drawn directly.

    The sum of independent cell integrals over an interval is one Gaussian of variance
    the interval's total ``lambda * mu``; disjoint intervals are independent. This is
    the perimeter-only path: its cost grows with the number of intervals, not cells.

    Parameters
    ----------
    variances : array_like, shape (m,) (or (..., m))
        ``lambda * mu(interval)`` for each interval (non-negative).
    d, size, rng
        As in :func:`cell_noise`.

    Returns
    -------
    ndarray, shape (size, m, d) (or (size, ..., m, d))
    """
    v, d, size, rng = _cell_noise_iv(variances, d, size, rng)
    z = rng.standard_normal((size, *v.shape, d))
    z *= np.sqrt(v)[..., None]
    return z


def _refine_noise_iv(coarse, child_variances, rng):
    try:
        c = np.asarray(coarse, dtype=float)
    except (TypeError, ValueError):
        raise TypeError("`coarse` must be a real array of shape (size, nx, ny, d).") from None
    if c.ndim != 4:
        raise ValueError(f"`coarse` must have shape (size, nx, ny, d), got {c.shape}.")
    if not np.all(np.isfinite(c)):
        raise ValueError("`coarse` must be finite, got a non-finite entry.")
    v = _variances_iv(child_variances, "child_variances")
    size, nx, ny, d = c.shape
    if v.shape != (2 * nx, 2 * ny):
        raise ValueError(
            f"`child_variances` must have shape (2 nx, 2 ny) = {(2 * nx, 2 * ny)} for "
            f"`coarse` of shape {c.shape}, got {v.shape}."
        )
    return c, v, rng_iv(rng)


def refine_noise(coarse, child_variances, *, rng=None) -> np.ndarray:
    """The same white-noise realization on the grid of spacing h/2.

    Cell ``(i, j)`` of the coarse grid has children ``(2i + a, 2j + b)``, a, b in {0, 1}.
    Given the parent integral S and independent children of variances v_1..v_4
    (V = sum v_c), the children are drawn from their law conditional on summing to S:

        X_c = (v_c / V) S + (Y_c - (v_c / V) sum_c' Y_c'),   Y_c ~ N(0, v_c) independent,

    and the last child is set to S minus the other three, so the four children sum to
    the parent exactly up to one rounding. If the coarse field has law N(0, V) per cell
    (i.e. ``child_variances`` sum to the coarse variances), the refined field has the
    law of a fresh draw at h/2: independent N(0, v_c). A parent with V = 0 has
    children S/4 each (they are then 0 when the coarse field is consistent).

    Parameters
    ----------
    coarse : ndarray, shape (size, nx, ny, d)
    child_variances : ndarray, shape (2 nx, 2 ny)
        ``lambda * mu`` of each fine cell.
    rng : seed or Generator, optional

    Returns
    -------
    ndarray, shape (size, 2 nx, 2 ny, d)

    References
    ----------
    Hoffman and Ribak (1991), the constrained-realization formula
    ``f = f~ + C (C_cc)^{-1} (c - c~)`` for the constraint ``c = sum of children``.
    """
    c, v, rng = _refine_noise_iv(coarse, child_variances, rng)
    size, nx, ny, d = c.shape
    # (nx, 2, ny, 2) -> (nx, ny, 4): children ordered (0,0), (0,1), (1,0), (1,1) in (a, b).
    vc = v.reshape(nx, 2, ny, 2).transpose(0, 2, 1, 3).reshape(nx, ny, 4)
    total = vc.sum(axis=-1, keepdims=True)
    safe = np.where(total > 0, total, 1.0)
    w = np.where(total > 0, vc / safe, 0.25)  # (nx, ny, 4)
    y = rng.standard_normal((size, nx, ny, 4, d))
    y *= np.sqrt(vc)[..., None]
    x = w[..., None] * (c[:, :, :, None, :] - y.sum(axis=3, keepdims=True)) + y
    # Exact sums: the last child takes what the others leave.
    x[:, :, :, 3, :] = c - x[:, :, :, :3, :].sum(axis=3)
    return x.reshape(size, nx, ny, 2, 2, d).transpose(0, 1, 3, 2, 4, 5).reshape(size, 2 * nx, 2 * ny, d)

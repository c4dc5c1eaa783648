"""Sampler kernels: element storage plus what the sampler needs on top of products.

The products themselves (the solver's storage classes, :mod:`holonomy._solver`) are
the one product engine; a kernel adds the exponential, heat-kernel draws, characters
and drift for its storage. :class:`MatrixKernel` keeps (..., N, N) matrices and works
for every group; :class:`QuaternionKernel` keeps SU(2) (and Sp(1)) elements as unit
quaternions (..., 4) = (a_0, a_1, a_2, a_3) for the matrix
a_0 Id + i (a_1 sigma_1 + a_2 sigma_2 + a_3 sigma_3), so exponentials and heat-kernel
draws are a few elementwise operations instead of small complex matrix products. Both
give the same elements up to rounding.

References
----------
.. [1] Hall, B. C. (2015). "Lie Groups, Lie Algebras, and Representations", 2nd ed.,
   Springer, section 1.3.3 (SU(2) and the unit quaternions).
"""

from __future__ import annotations

import numpy as np

from ._solver import MatrixStorage, QuaternionStorage
from .groups import su2_heat_quaternions

__all__ = ["MatrixKernel", "QuaternionKernel", "kernel_for"]

_PAULI = np.array([[[0, 1], [1, 0]], [[0, -1j], [1j, 0]], [[1, 0], [0, -1]]], dtype=complex)


class MatrixKernel(MatrixStorage):
    """Elements as (..., N, N) matrices; any group."""

    def exp(self, coords: np.ndarray) -> np.ndarray:
        return self.group.exp_matrix(self.group.algebra(coords))

    def character(self, rep, a: np.ndarray) -> np.ndarray:
        return rep.character(a, normalized=True)

    def drift(self, a: np.ndarray) -> float:
        return float(self.group.drift(a))

    def heat(self, t: np.ndarray, size: int, rng) -> np.ndarray:
        """Heat-kernel samples at times ``t`` (m,): (size, m) elements."""
        return self.group.heat_kernel(np.asarray(t, float), size, rng=rng)


class QuaternionKernel(QuaternionStorage, MatrixKernel):
    """SU(2) / Sp(1) elements as unit quaternions (..., 4)."""

    def __init__(self, group):
        super().__init__(group)
        # X_a = i sum_b V[a, b] sigma_b for the group's orthonormal basis
        self.V = (np.einsum("aij,bji->ab", group.basis, _PAULI) / 2j).real

    def exp(self, coords: np.ndarray) -> np.ndarray:
        # exp(i u.sigma) = cos|u| + i sin|u| (u/|u|).sigma with u = c V
        c = np.asarray(coords, float)
        out = np.empty(c.shape[:-1] + (4,))
        u = out[..., 1:]
        np.matmul(c, self.V, out=u)
        theta = np.sqrt(np.einsum("...i,...i->...", u, u))
        np.cos(theta, out=out[..., 0])
        ratio = np.sin(theta)
        np.divide(ratio, theta, out=ratio, where=theta > 0)
        ratio[theta == 0] = 1.0
        u *= ratio[..., None]
        return out

    def heat(self, t: np.ndarray, size: int, rng) -> np.ndarray:
        """Exact SU(2) heat-kernel samples (:func:`holonomy.groups.su2_heat_quaternions`,
        tau = t / (4k)) in the quaternion basis of this group's coordinates."""
        t = np.asarray(t, float)
        return su2_heat_quaternions(np.broadcast_to(t / (4.0 * self.group.k), (size,) + t.shape),
                                    rng=rng)

    def character(self, rep, a: np.ndarray) -> np.ndarray:
        if rep.name == "fundamental":
            return a[..., 0].astype(complex)  # tr / 2 = a_0
        return rep.character(self.to_matrices(a), normalized=True)

    def drift(self, a: np.ndarray) -> float:
        # ||U^* U - I||_F = sqrt(2) | |q|^2 - 1 | for U = q as a 2 x 2 matrix
        if a.size == 0:
            return 0.0
        return float(np.sqrt(2.0) * np.abs(np.einsum("...i,...i->...", a, a) - 1.0).max())


def kernel_for(group) -> MatrixKernel:
    """The fastest kernel for ``group``: quaternions for SU(2) and Sp(1)."""
    if group.N == 2 and group.family in ("SU", "Sp"):
        return QuaternionKernel(group)
    return MatrixKernel(group)


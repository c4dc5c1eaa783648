"""Array kernels for group elements in the sampler's hot loop.

The sampler multiplies, inverts and exponentiates batches of group elements. A kernel
fixes how elements are stored: :class:`MatrixKernel` keeps (..., N, N) matrices and
works for every group; :class:`QuaternionKernel` keeps SU(2) (and Sp(1)) elements as
unit quaternions (..., 4) = (a_0, a_1, a_2, a_3) for the matrix
a_0 Id + i (a_1 sigma_1 + a_2 sigma_2 + a_3 sigma_3), so products, inverses and
exponentials are a few elementwise operations instead of small complex matrix products.
Both give the same elements up to rounding.

References
----------
.. [1] Hamilton, W. R. (1844). "On quaternions." Philos. Mag. 25, 489-495 (product
   rule); Hall, B. C. (2015). "Lie Groups, Lie Algebras, and Representations", 2nd ed.,
   Springer, section 1.3.3 (SU(2) and the unit quaternions).
"""

from __future__ import annotations

import numpy as np

from .groups import sample_su2_angle

__all__ = ["MatrixKernel", "QuaternionKernel", "kernel_for"]

_PAULI = np.array([[[0, 1], [1, 0]], [[0, -1j], [1j, 0]], [[1, 0], [0, -1]]], dtype=complex)


class MatrixKernel:
    """Elements as (..., N, N) matrices; any group."""

    elem_ndim = 2

    def __init__(self, group):
        self.group = group

    def exp(self, coords: np.ndarray) -> np.ndarray:
        return self.group.exp_matrix(self.group.algebra(coords))

    def to_matrices(self, a: np.ndarray) -> np.ndarray:
        return a

    def mul(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        return a @ b

    def dagger(self, a: np.ndarray) -> np.ndarray:
        return np.conj(np.swapaxes(a, -1, -2))

    def identity(self, shape: tuple, dtype=complex) -> np.ndarray:
        n = self.group.N
        return np.broadcast_to(np.eye(n, dtype=dtype), shape + (n, n)).copy()

    def character(self, rep, a: np.ndarray) -> np.ndarray:
        return rep.character(a, normalized=True)

    def drift(self, a: np.ndarray) -> float:
        return float(self.group.drift(a))

    def heat(self, t: np.ndarray, size: int, rng) -> np.ndarray:
        """Heat-kernel samples at times ``t`` (m,): (size, m) elements."""
        return self.group.heat_kernel(np.asarray(t, float), size, rng=rng)

    def product(self, factors: np.ndarray) -> np.ndarray:
        """Ordered product F_1 F_2 ... F_m over the step axis (axis 1) by pairwise
        reduction: O(log m) batched products instead of m sequential ones."""
        f = factors
        while f.shape[1] > 1:
            m = f.shape[1]
            paired = self.mul(f[:, 0:m - 1:2], f[:, 1:m:2])
            f = np.concatenate([paired, f[:, m - 1:]], axis=1) if m % 2 else paired
        return f[:, 0]


class QuaternionKernel(MatrixKernel):
    """SU(2) / Sp(1) elements as unit quaternions (..., 4)."""

    elem_ndim = 1

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
        """Exact SU(2) heat-kernel samples: the rotation angle from the heat-kernel
        class-function law (:func:`holonomy.groups.sample_su2_angle`, tau = t / (4k))
        and a uniform axis."""
        t = np.asarray(t, float)
        tau = np.broadcast_to(t / (4.0 * self.group.k), (size,) + t.shape)
        theta = sample_su2_angle(tau, rng=rng)
        axis = rng.standard_normal(tau.shape + (3,))
        axis *= (np.sin(theta) / np.linalg.norm(axis, axis=-1))[..., None]
        out = np.empty(tau.shape + (4,))
        out[..., 0] = np.cos(theta)
        out[..., 1:] = axis
        return out

    def to_matrices(self, a: np.ndarray) -> np.ndarray:
        out = np.empty(a.shape[:-1] + (2, 2), complex)
        out[..., 0, 0] = a[..., 0] + 1j * a[..., 3]
        out[..., 0, 1] = a[..., 2] + 1j * a[..., 1]
        out[..., 1, 0] = -a[..., 2] + 1j * a[..., 1]
        out[..., 1, 1] = a[..., 0] - 1j * a[..., 3]
        return out

    def mul(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        a0, a1, a2, a3 = a[..., 0], a[..., 1], a[..., 2], a[..., 3]
        b0, b1, b2, b3 = b[..., 0], b[..., 1], b[..., 2], b[..., 3]
        out = np.empty(np.broadcast_shapes(a.shape, b.shape))
        # (a0 + i a.s)(b0 + i b.s) = a0 b0 - a.b + i (a0 b + b0 a - a x b).s
        out[..., 0] = a0 * b0 - a1 * b1 - a2 * b2 - a3 * b3
        out[..., 1] = a0 * b1 + b0 * a1 - (a2 * b3 - a3 * b2)
        out[..., 2] = a0 * b2 + b0 * a2 - (a3 * b1 - a1 * b3)
        out[..., 3] = a0 * b3 + b0 * a3 - (a1 * b2 - a2 * b1)
        return out

    def dagger(self, a: np.ndarray) -> np.ndarray:
        out = -a
        out[..., 0] = a[..., 0]
        return out

    def identity(self, shape: tuple, dtype=float) -> np.ndarray:
        out = np.zeros(shape + (4,))
        out[..., 0] = 1.0
        return out

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


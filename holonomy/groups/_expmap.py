"""Exponential map of the compact matrix groups, batched over samples.

Routes (chosen by the group, never per sample):

- ``U(1)``: ``exp(i x)`` elementwise.
- ``SU(2)`` and ``Sp(1)`` (the same 2 x 2 matrices): for ``X`` in su(2),
  ``X^2 = -theta^2 Id`` with ``theta^2 = det X``, so
  ``exp(X) = cos(theta) Id + sin(theta)/theta X`` (Rodrigues' formula for quaternions).
- ``SO(3)``: Rodrigues' rotation formula
  ``exp(X) = Id + sin(theta)/theta X + (1 - cos theta)/theta^2 X^2``,
  ``theta^2 = -tr(X^2)/2``.
- everything else (``U(n)``, ``SU(n)``, ``SO(n)``, ``Sp(n)``): the algebras consist of
  skew-Hermitian matrices, so ``H = -i X`` is Hermitian, ``H = V diag(w) V^*`` by a
  batched ``eigh`` and ``exp(X) = V diag(exp(i w)) V^*``; for ``SO(n)`` the real part is
  taken (the imaginary part is rounding).

References
----------
.. [1] B. C. Hall, "Lie Groups, Lie Algebras, and Representations", 2nd ed., Springer,
   2015, Sections 2.2 and 2.3 (matrix exponential, diagonalisable case).
.. [2] R. M. Murray, Z. Li, S. S. Sastry, "A Mathematical Introduction to Robotic
   Manipulation", CRC Press, 1994, Eq. (2.14), number from memory (Rodrigues' formula).
"""

from __future__ import annotations

import numpy as np

__all__ = ["expm_u1", "expm_su2", "expm_so3", "expm_eigh"]


def expm_u1(X: np.ndarray) -> np.ndarray:
    """Exponential of ``(..., 1, 1)`` purely imaginary matrices."""
    return np.exp(X)


def expm_su2(X: np.ndarray) -> np.ndarray:
    """Closed-form exponential of traceless skew-Hermitian 2 x 2 matrices ``(..., 2, 2)``.

    ``X = [[i a, b], [-conj(b), -i a]]`` has ``X^2 = -(a^2 + |b|^2) Id``; see [1]_ of the
    module.
    """
    theta = np.sqrt(np.abs(X[..., 0, 0]) ** 2 + np.abs(X[..., 0, 1]) ** 2)
    # sin(theta)/theta without a division: np.sinc(x) = sin(pi x)/(pi x).
    s = np.sinc(theta / np.pi)[..., None, None]
    out = s * X
    c = np.cos(theta)
    out[..., 0, 0] += c
    out[..., 1, 1] += c
    return out


def expm_so3(X: np.ndarray) -> np.ndarray:
    """Rodrigues' formula for real antisymmetric 3 x 3 matrices ``(..., 3, 3)``."""
    theta = np.sqrt(X[..., 0, 1] ** 2 + X[..., 0, 2] ** 2 + X[..., 1, 2] ** 2)
    a = np.sinc(theta / np.pi)[..., None, None]
    # (1 - cos t)/t^2 = (1/2) (sin(t/2)/(t/2))^2, stable at t = 0.
    b = 0.5 * np.sinc(theta / (2.0 * np.pi))[..., None, None] ** 2
    out = a * X + b * (X @ X)
    out[..., 0, 0] += 1.0
    out[..., 1, 1] += 1.0
    out[..., 2, 2] += 1.0
    return out


def expm_eigh(X: np.ndarray, real: bool = False) -> np.ndarray:
    """Exponential of skew-Hermitian matrices ``(..., N, N)`` through ``eigh(-i X)``.

    ``real=True`` returns the real part (real antisymmetric input, SO(n)).
    """
    H = -1j * X
    # eigh reads one triangle only; symmetrise so rounding in X does not bias it.
    H = 0.5 * (H + np.conj(np.swapaxes(H, -1, -2)))
    w, V = np.linalg.eigh(H)
    out = (V * np.exp(1j * w)[..., None, :]) @ np.conj(np.swapaxes(V, -1, -2))
    if real:
        return np.ascontiguousarray(out.real)
    return out

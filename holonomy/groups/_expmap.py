"""Exponential map of the compact matrix groups, batched over samples.

Routes (chosen by the group, never per sample):

- ``U(1)``: ``exp(i x)`` elementwise.
- ``SU(2)`` and ``Sp(1)`` (the same 2 x 2 matrices): for ``X`` in su(2),
  ``X^2 = -theta^2 Id`` with ``theta^2 = det X``, so
  ``exp(X) = cos(theta) Id + sin(theta)/theta X`` (Rodrigues' formula for quaternions).
- ``SO(3)``: Rodrigues' rotation formula
  ``exp(X) = Id + sin(theta)/theta X + (1 - cos theta)/theta^2 X^2``,
  ``theta^2 = -tr(X^2)/2``.
- ``U(3)`` and ``SU(3)``: the Cayley-Hamilton closed form of Morningstar and Peardon
  [3]_ (`expm_u3`), about ten times faster than a batched ``eigh``.
- other groups with ``N <= 8`` (``U(2)``, ``U(n)``, ``SU(n)``, ``SO(n)``, ``Sp(n)``):
  scaling and squaring of the degree-12 Taylor polynomial (`expm_taylor`), in real
  arithmetic for ``SO(n)``; 1.5 to 3 times faster than ``eigh`` for such sizes.
- larger matrices (``U(n)``, ``SU(n)``, ``SO(n)``, ``Sp(n)``): the algebras consist of
  skew-Hermitian matrices, so ``H = -i X`` is Hermitian, ``H = V diag(w) V^*`` by a
  batched ``eigh`` and ``exp(X) = V diag(exp(i w)) V^*``; for ``SO(n)`` the real part is
  taken (the imaginary part is rounding).
- complex matrices of the complexified algebras (formal computations, `expm_general`):
  ``exp`` elementwise for ``1 x 1``; for ``2 x 2``, with ``Y = X - (tr X / 2) Id``,
  ``Y^2 = -det(Y) Id`` and ``exp(X) = e^{tr X / 2} (cosh s Id + sinh(s)/s Y)``,
  ``s^2 = -det Y`` (any root: both functions are even in ``s``); up to ``N = 8`` the
  Taylor route above (it assumes nothing about ``X``), beyond it ``scipy.linalg.expm``.

References
----------
.. [1] B. C. Hall, "Lie Groups, Lie Algebras, and Representations", 2nd ed., Springer,
   2015, Sections 2.2 and 2.3 (matrix exponential, diagonalisable case).
.. [2] R. M. Murray, Z. Li, S. S. Sastry, "A Mathematical Introduction to Robotic
   Manipulation", CRC Press, 1994, Eq. (2.14), number from memory (Rodrigues' formula).
.. [3] C. Morningstar and M. Peardon, "Analytic smearing of SU(3) link variables in
   lattice QCD", Phys. Rev. D 69, 054501 (2004), Eqs. (23)-(34).
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "expm_u1", "expm_su2", "expm_so3", "expm_u3", "expm_u3_components", "expm_taylor",
    "expm_eigh", "expm_general",
]


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


def expm_u3(X: np.ndarray) -> np.ndarray:
    """Closed-form exponential of skew-Hermitian 3 x 3 matrices (u(3), su(3)).

    With X = i (q Id + Q), q = tr(X) / (3i) and Q traceless Hermitian,
    exp(iQ) = f_0 Id + f_1 Q + f_2 Q^2 by the Cayley-Hamilton theorem; the f_j follow
    from c_0 = det Q and c_1 = tr(Q^2) / 2 through the stable parametrization of
    Morningstar and Peardon (2004), eqs. (23)-(34), using f_j(-c_0) = (-1)^j conj(f_j(c_0))
    so that the denominator 9u^2 - w^2 stays away from zero.

    References
    ----------
    .. [1] Morningstar, C. and Peardon, M. (2004). "Analytic smearing of SU(3) link
       variables in lattice QCD." Phys. Rev. D 69, 054501.
    """
    X = np.asarray(X)
    # traces from the diagonals' parts (np.trace on complex batches is far slower)
    q = (X[..., 0, 0].imag + X[..., 1, 1].imag + X[..., 2, 2].imag) / 3.0
    Q = -1j * X
    Q[..., 0, 0] -= q
    Q[..., 1, 1] -= q
    Q[..., 2, 2] -= q
    Q = 0.5 * (Q + np.conj(np.swapaxes(Q, -1, -2)))  # exactly Hermitian
    Q2 = Q @ Q
    c1 = 0.5 * (Q2[..., 0, 0].real + Q2[..., 1, 1].real + Q2[..., 2, 2].real)
    c0 = np.einsum("...ij,...ji->...", Q, Q2).real / 3.0  # det Q = tr(Q^3) / 3
    neg = c0 < 0
    c0 = np.abs(c0)
    c0max = 2.0 * (c1 / 3.0) ** 1.5
    tiny = c1 < 1e-30
    ratio = np.where(tiny, 0.0, c0 / np.where(tiny, 1.0, c0max))
    theta = np.arccos(np.clip(ratio, -1.0, 1.0))
    u = np.sqrt(c1 / 3.0) * np.cos(theta / 3.0)
    w = np.sqrt(c1) * np.sin(theta / 3.0)
    xi0 = np.sinc(w / np.pi)  # sin(w)/w
    cw = np.cos(w)
    e2iu = np.exp(2j * u)
    emiu = np.exp(-1j * u)
    u2, w2 = u * u, w * w
    h0 = (u2 - w2) * e2iu + emiu * (8 * u2 * cw + 2j * u * (3 * u2 + w2) * xi0)
    h1 = 2 * u * e2iu - emiu * (2 * u * cw - 1j * (3 * u2 - w2) * xi0)
    h2 = e2iu - emiu * (cw + 3j * u * xi0)
    den = 9 * u2 - w2
    den = np.where(tiny, 1.0, den)
    f0, f1, f2 = h0 / den, h1 / den, h2 / den
    # Q = 0: exp(iQ) = Id
    f0 = np.where(tiny, 1.0, f0)
    f1 = np.where(tiny, 1j, f1)
    f2 = np.where(tiny, -0.5, f2)
    # c_0 < 0: f_j(-c_0) = (-1)^j conj(f_j(c_0))
    f0 = np.where(neg, np.conj(f0), f0)
    f1 = np.where(neg, -np.conj(f1), f1)
    f2 = np.where(neg, np.conj(f2), f2)
    out = f1[..., None, None] * Q + f2[..., None, None] * Q2
    out[..., 0, 0] += f0
    out[..., 1, 1] += f0
    out[..., 2, 2] += f0
    return out * np.exp(1j * q)[..., None, None]


def expm_u3_components(h, traceless: bool = False) -> np.ndarray:
    """`expm_u3` of ``X = i H`` given as the nine reals of the Hermitian ``H``, each an
    array of the same shape ``S``: ``h = (H_00, H_11, H_22, Re H_01, Re H_02, Re H_12,
    Im H_01, Im H_02, Im H_12)``. Returns ``(2, 3, 3) + S``, the real and imaginary
    parts of ``exp(X)`` component-first (every operation runs over whole arrays, no
    complex 3 x 3 batches). The same closed form as `expm_u3` in real arithmetic: with
    ``q = tr H / 3``, ``Q = H - q``, ``exp(X) = e^{iq} (f_0 + f_1 Q + f_2 Q^2)``;
    ``traceless`` skips the phase (q is then zero up to rounding).

    References
    ----------
    .. [1] Morningstar, C. and Peardon, M. (2004). "Analytic smearing of SU(3) link
       variables in lattice QCD." Phys. Rev. D 69, 054501, eqs. (23)-(34).
    """
    h0, h1, h2, x01, x02, x12, y01, y02, y12 = h
    q = (h0 + h1 + h2) / 3.0
    a0, a1, a2 = h0 - q, h1 - q, h2 - q
    n01, n02, n12 = x01 * x01 + y01 * y01, x02 * x02 + y02 * y02, x12 * x12 + y12 * y12
    # Q^2 (Hermitian): diagonal, and (Q^2)_01 = Q_01 (a0 + a1) + Q_02 conj(Q_12) etc.
    d0, d1, d2 = a0 * a0 + n01 + n02, a1 * a1 + n01 + n12, a2 * a2 + n02 + n12
    p01 = (x01 * (a0 + a1) + (x02 * x12 + y02 * y12), y01 * (a0 + a1) + (y02 * x12 - x02 * y12))
    p02 = (x02 * (a0 + a2) + (x01 * x12 - y01 * y12), y02 * (a0 + a2) + (x01 * y12 + y01 * x12))
    p12 = (x12 * (a1 + a2) + (x01 * x02 + y01 * y02), y12 * (a1 + a2) + (x01 * y02 - y01 * x02))
    c1 = 0.5 * (d0 + d1 + d2)
    # det Q = a0 a1 a2 + 2 Re(Q_01 Q_12 Q_20) - a0 |Q_12|^2 - a1 |Q_02|^2 - a2 |Q_01|^2
    re3 = (x01 * x12 - y01 * y12) * x02 + (x01 * y12 + y01 * x12) * y02
    c0 = a0 * a1 * a2 + 2.0 * re3 - a0 * n12 - a1 * n02 - a2 * n01
    neg = c0 < 0
    c0 = np.abs(c0)
    tiny = c1 < 1e-30
    c1 = np.where(tiny, 1.0, c1)  # Q = 0: any finite value, replaced below
    rt = np.sqrt(c1 / 3.0)
    theta = np.arccos(np.minimum(c0 / (2.0 * rt * rt * rt), 1.0))
    z = np.cos(theta / 3.0)
    u = rt * z
    # w = sqrt(c1) sin(theta / 3); only w^2 enters (the f_j are even in w), and
    # c1 (1 - z^2) has its rounding error relative to c1: no sine needed
    w = np.sqrt(c1 * np.maximum(1.0 - z * z, 0.0))
    xi0 = np.sin(w)
    np.divide(xi0, w, out=xi0, where=w != 0)
    xi0[w == 0] = 1.0
    cw, cu, su = np.cos(w), np.cos(u), np.sin(u)
    e2r, e2i = cu * cu - su * su, 2.0 * su * cu  # e^{2iu}; e^{-iu} = cu - i su
    u2, w2 = u * u, w * w

    def emiu_times(A, B):  # e^{-iu} (A + i B)
        return cu * A + su * B, cu * B - su * A

    g = (u2 - w2, 8 * u2 * cw, 2 * u * (3 * u2 + w2) * xi0)
    r, i = emiu_times(g[1], g[2])
    f0 = [g[0] * e2r + r, g[0] * e2i + i]
    r, i = emiu_times(2 * u * cw, -(3 * u2 - w2) * xi0)
    f1 = [2 * u * e2r - r, 2 * u * e2i - i]
    r, i = emiu_times(cw, 3 * u * xi0)
    f2 = [e2r - r, e2i - i]
    inv = 1.0 / (9 * u2 - w2)
    any_tiny = bool(tiny.any())
    for f, (r0, i0) in ((f0, (1.0, 0.0)), (f1, (0.0, 1.0)), (f2, (-0.5, 0.0))):
        f[0] *= inv
        f[1] *= inv
        if any_tiny:
            f[0][tiny], f[1][tiny] = r0, i0
    # c_0 < 0: f_j(-c_0) = (-1)^j conj(f_j(c_0)) (a factor -1 is exact)
    sign = 1.0 - 2.0 * neg
    f0[1] *= sign
    f1[0] *= sign
    f2[1] *= sign
    if not traceless:
        cq, sq = np.cos(q), np.sin(q)
        for f in (f0, f1, f2):
            f[0], f[1] = f[0] * cq - f[1] * sq, f[0] * sq + f[1] * cq
    out = np.empty((2, 3, 3) + np.shape(h0))
    for j, (aj, dj) in enumerate(((a0, d0), (a1, d1), (a2, d2))):
        out[0, j, j] = f0[0] + f1[0] * aj + f2[0] * dj
        out[1, j, j] = f0[1] + f1[1] * aj + f2[1] * dj
    for (r_, c_), (x, y), (pr, pi) in (((0, 1), (x01, y01), p01), ((0, 2), (x02, y02), p02),
                                       ((1, 2), (x12, y12), p12)):
        for row, col, sy, sp in ((r_, c_, y, pi), (c_, r_, -y, -pi)):
            # f1 (x + i sy) + f2 (pr + i sp)
            out[0, row, col] = f1[0] * x - f1[1] * sy + (f2[0] * pr - f2[1] * sp)
            out[1, row, col] = f1[0] * sy + f1[1] * x + (f2[0] * sp + f2[1] * pr)
    return out


# Taylor coefficients 1/j!, j = 0..12.
_INV_FACT = [1.0 / float(np.prod(np.arange(1, j + 1))) for j in range(13)]
_THETA_TAYLOR = 0.25  # scaled 1-norm; the degree-12 remainder is below 3e-18 there


def expm_taylor(X: np.ndarray) -> np.ndarray:
    """Exponential of ``(..., N, N)`` matrices by scaling and squaring of the degree-12
    Taylor polynomial (for small N faster than a batched ``eigh``).

    Each matrix is scaled by its own ``2^-s`` so that its 1-norm is at most
    ``theta = 0.25``; there the remainder of the degree-12 polynomial is below
    ``theta^13 / 13! * e^theta < 3e-18`` in norm. The polynomial is evaluated by the
    Paterson-Stockmeyer scheme (powers ``A^2, A^3, A^4``, then Horner in ``A^4``: five
    matrix products), then squared ``s`` times.

    References
    ----------
    .. [1] C. Moler and C. Van Loan, "Nineteen dubious ways to compute the exponential
       of a matrix, twenty-five years later", SIAM Review 45 (2003) 3, Method 3
       (scaling and squaring of Taylor approximants).
    .. [2] M. S. Paterson and L. J. Stockmeyer, "On the number of nonscalar
       multiplications necessary to evaluate polynomials", SIAM J. Comput. 2 (1973) 60.
    """
    X = np.asarray(X)
    N = X.shape[-1]
    norm = np.abs(X).sum(axis=-2).max(axis=-1)  # 1-norm per matrix
    with np.errstate(divide="ignore"):
        s = np.maximum(0, np.ceil(np.log2(norm / _THETA_TAYLOR))).astype(np.int64)
    A = X * np.ldexp(1.0, -s)[..., None, None]
    A2 = A @ A
    A3 = A2 @ A
    A4 = A2 @ A2
    c = _INV_FACT

    def block(j):  # c_j I + c_{j+1} A + c_{j+2} A^2 + c_{j+3} A^3
        B = c[j + 1] * A + c[j + 2] * A2 + c[j + 3] * A3
        B[..., range(N), range(N)] += c[j]
        return B

    P = block(8) + c[12] * A4
    P = block(4) + A4 @ P
    E = block(0) + A4 @ P
    smax = int(s.max()) if s.size else 0
    for r in range(smax):
        m = s > r
        if m.all():
            E = E @ E
        else:
            E[m] = E[m] @ E[m]
    return E


def expm_general(X: np.ndarray) -> np.ndarray:
    """Exponential of arbitrary complex matrices ``(..., N, N)`` (complexified groups).

    Routes in the module docstring; nothing is assumed about ``X`` (no skew-Hermitian
    symmetry), so the result lies in ``GL(N, C)``.
    """
    X = np.asarray(X, dtype=complex)
    N = X.shape[-1]
    if N == 1:
        return np.exp(X)
    if N == 2:
        half = 0.5 * (X[..., 0, 0] + X[..., 1, 1])
        Y = X.copy()
        Y[..., 0, 0] -= half
        Y[..., 1, 1] -= half
        s = np.sqrt(-(Y[..., 0, 0] * Y[..., 1, 1] - Y[..., 0, 1] * Y[..., 1, 0]))
        # sinh(s)/s = sin(i s)/(i s) = np.sinc(i s / pi), finite at s = 0.
        out = np.sinc(1j * s / np.pi)[..., None, None] * Y
        c = np.cosh(s)
        out[..., 0, 0] += c
        out[..., 1, 1] += c
        return out * np.exp(half)[..., None, None]
    if N <= 8:
        return expm_taylor(X)
    import scipy.linalg

    return scipy.linalg.expm(X)

"""Compiled kernels for the optional ``fast`` extra (numba), imported lazily.

The numpy kernels (:mod:`holonomy._kernels`) are the reference and the default without
the extra. These kernels compute the same elements from the same random streams:
numba draws from the block's :class:`numpy.random.Generator` itself (its draws are
bitwise numpy's), in the same order as the numpy path (per rejection round all the
proposal normals, then all the uniforms), so the two paths agree to rounding (tested
to 1e-12 per sample). The loops run per sample over small elements, with no
temporaries: the heat kernel of SU(2) fuses the proposal, the acceptance test and the
quaternion; the torus heat kernels (U(n), SU(n), SO(n), Sp(n) of the image route)
fuse the proposal, its eigenvalues and the acceptance, and for SU(3) the exponential;
products of quaternions and of small complex matrices run as a left-to-right loop over
the steps.

Every function is module-level and compiled with ``cache=True`` (the compiled code is
kept on disk beside the module after the first call).

References
----------
.. [1] S. K. Lam, A. Pitrou and S. Seibert, "Numba: a LLVM-based Python JIT
   compiler", Proc. LLVM-HPC (2015).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from .groups._heat import _IMAGE_SKIP

__all__ = ["quaternion_exp", "quaternion_mul", "quaternion_product", "matrix_mul",
           "matrix_product", "su2_heat_small", "torus_draw", "matrix_holonomies_group"]

_TWO_PI = 2.0 * math.pi
#: below this time a torus proposal is accepted outright (holonomy.groups._heat)
_TINY_TIME = 1e-30


@njit(cache=True)
def quaternion_exp(c, V):
    """``exp`` of coordinates ``c`` (n, 3) as quaternions (n, 4); ``V`` maps the
    group's coordinates to the Pauli ones (see `QuaternionKernel`)."""
    n = c.shape[0]
    out = np.empty((n, 4))
    for i in range(n):
        u1 = c[i, 0] * V[0, 0] + c[i, 1] * V[1, 0] + c[i, 2] * V[2, 0]
        u2 = c[i, 0] * V[0, 1] + c[i, 1] * V[1, 1] + c[i, 2] * V[2, 1]
        u3 = c[i, 0] * V[0, 2] + c[i, 1] * V[1, 2] + c[i, 2] * V[2, 2]
        th = math.sqrt(u1 * u1 + u2 * u2 + u3 * u3)
        r = math.sin(th) / th if th > 0 else 1.0
        out[i, 0] = math.cos(th)
        out[i, 1] = u1 * r
        out[i, 2] = u2 * r
        out[i, 3] = u3 * r
    return out


@njit(cache=True)
def quaternion_mul(a, b):
    """Hamilton products of (n, 4) quaternions, row by row."""
    n = a.shape[0]
    out = np.empty((n, 4))
    for i in range(n):
        a0, a1, a2, a3 = a[i, 0], a[i, 1], a[i, 2], a[i, 3]
        b0, b1, b2, b3 = b[i, 0], b[i, 1], b[i, 2], b[i, 3]
        out[i, 0] = a0 * b0 - a1 * b1 - a2 * b2 - a3 * b3
        out[i, 1] = a0 * b1 + b0 * a1 - (a2 * b3 - a3 * b2)
        out[i, 2] = a0 * b2 + b0 * a2 - (a3 * b1 - a1 * b3)
        out[i, 3] = a0 * b3 + b0 * a3 - (a1 * b2 - a2 * b1)
    return out


@njit(cache=True)
def quaternion_product(f):
    """Ordered products over axis 1 of (n, m, 4) quaternions, left to right."""
    n, m = f.shape[0], f.shape[1]
    out = np.empty((n, 4))
    for i in range(n):
        a0, a1, a2, a3 = f[i, 0, 0], f[i, 0, 1], f[i, 0, 2], f[i, 0, 3]
        for k in range(1, m):
            b0, b1, b2, b3 = f[i, k, 0], f[i, k, 1], f[i, k, 2], f[i, k, 3]
            c0 = a0 * b0 - a1 * b1 - a2 * b2 - a3 * b3
            c1 = a0 * b1 + b0 * a1 - (a2 * b3 - a3 * b2)
            c2 = a0 * b2 + b0 * a2 - (a3 * b1 - a1 * b3)
            c3 = a0 * b3 + b0 * a3 - (a1 * b2 - a2 * b1)
            a0, a1, a2, a3 = c0, c1, c2, c3
        out[i, 0], out[i, 1], out[i, 2], out[i, 3] = a0, a1, a2, a3
    return out


@njit(cache=True)
def matrix_mul(a, b):
    """Products of (n, N, N) matrices, one by one (small N)."""
    n, N = a.shape[0], a.shape[1]
    out = np.zeros((n, N, N), dtype=a.dtype)
    for i in range(n):
        for r in range(N):
            for k in range(N):
                x = a[i, r, k]
                for c in range(N):
                    out[i, r, c] += x * b[i, k, c]
    return out


@njit(cache=True)
def matrix_product(f):
    """Ordered products over axis 1 of (n, m, N, N) matrices, left to right."""
    n, m, N = f.shape[0], f.shape[1], f.shape[2]
    out = np.empty((n, N, N), dtype=f.dtype)
    acc = np.empty((N, N), dtype=f.dtype)
    tmp = np.empty((N, N), dtype=f.dtype)
    for i in range(n):
        acc[:, :] = f[i, 0]
        for k in range(1, m):
            for r in range(N):
                for c in range(N):
                    s = acc[r, 0] * f[i, k, 0, c]
                    for j in range(1, N):
                        s += acc[r, j] * f[i, k, j, c]
                    tmp[r, c] = s
            acc[:, :] = tmp
        out[i] = acc
    return out


@njit(cache=True)
def su2_heat_small(idx, m, sq2t, pi_t, two_pi_t, logc, out, rng):
    """The rejection branch of `holonomy.groups.su2_heat_quaternions` for the flat
    entries ``idx`` of a (samples, m) array of times (all with tau < 0.5; every entry
    of ``out`` when ``idx`` is empty), written into ``out`` (samples * m, 4). Per
    column c (entry e has c = e % m), the numpy path's per-entry constants:
    ``sq2t = sqrt(2 tau)``, ``pi_t = pi / tau``, ``two_pi_t = 2 pi / tau`` and
    ``logc = log(4 pi^2 / tau) + image tolerance`` (see
    `holonomy.groups._heat._accept_numerator`). Same draws, same order: per round
    ``standard_normal((todo, 3))`` then ``random(todo)``."""
    if idx.size:
        todo = idx.copy()
        cols = todo % m
    else:  # every entry: columns by a counter (no integer division per entry)
        todo = np.arange(out.shape[0])
        cols = np.empty(todo.size, dtype=np.intp)
        c = 0
        for e in range(todo.size):
            cols[e] = c
            c = c + 1 if c + 1 < m else 0
    while todo.size:
        k = todo.size
        Z = rng.standard_normal((k, 3))
        u = rng.random(k)
        keep = np.empty(k, dtype=np.bool_)
        nk = 0
        for j in range(k):
            e = todo[j]
            c = cols[j]
            r = math.sqrt(Z[j, 0] * Z[j, 0] + Z[j, 1] * Z[j, 1] + Z[j, 2] * Z[j, 2])
            th = sq2t[c] * r
            ok = False
            if th <= math.pi:
                sn = math.sin(th)
                rhs = th
                if pi_t[c] * (math.pi - th) < logc[c]:
                    em = math.exp(-pi_t[c] * (math.pi - th))
                    rhs += (th - _TWO_PI) * em + (th + _TWO_PI) * (em * math.exp(-two_pi_t[c] * th))
                ok = u[j] * th * th <= sn * rhs
                if ok:
                    s = sn / r
                    out[e, 0] = math.cos(th)
                    out[e, 1] = Z[j, 0] * s
                    out[e, 2] = Z[j, 1] * s
                    out[e, 3] = Z[j, 2] * s
            keep[j] = not ok
            nk += not ok
        todo = todo[keep]
        cols = cols[keep]
    return out


@njit(cache=True)
def _qmul_into(a0, a1, a2, a3, b0, b1, b2, b3):
    return (a0 * b0 - a1 * b1 - a2 * b2 - a3 * b3,
            a0 * b1 + b0 * a1 - (a2 * b3 - a3 * b2),
            a0 * b2 + b0 * a2 - (a3 * b1 - a1 * b3),
            a0 * b3 + b0 * a3 - (a1 * b2 - a2 * b1))


@njit(cache=True)
def quaternion_holonomies_algebra(x, side, order, parent, links, dirs, offsets, V):
    """Holonomies of the ``algebra`` (linear) scheme in one pass per sample: interval
    sums ``x`` (n, K, 3) cumulated outward (``S_k = side_k x_k + S_parent``, in depth
    ``order``), then per loop the product of ``exp(-dir S_link)`` over its links
    (``links[offsets[j]:offsets[j + 1]]``). Output (n, loops, 4)."""
    n, K = x.shape[0], x.shape[1]
    nl = offsets.size - 1
    out = np.empty((n, nl, 4))
    cum = np.empty((K, 3))
    for i in range(n):
        for kk in range(K):
            k = order[kk]
            p = parent[k]
            for j in range(3):
                v = x[i, k, j] * side[k]
                cum[k, j] = v + cum[p, j] if p >= 0 else v
        for loop in range(nl):
            a0, a1, a2, a3 = 1.0, 0.0, 0.0, 0.0
            for e in range(offsets[loop], offsets[loop + 1]):
                lk = links[e]
                c0 = cum[lk, 0] * -dirs[e]
                c1 = cum[lk, 1] * -dirs[e]
                c2 = cum[lk, 2] * -dirs[e]
                u1 = c0 * V[0, 0] + c1 * V[1, 0] + c2 * V[2, 0]
                u2 = c0 * V[0, 1] + c1 * V[1, 1] + c2 * V[2, 1]
                u3 = c0 * V[0, 2] + c1 * V[1, 2] + c2 * V[2, 2]
                th = math.sqrt(u1 * u1 + u2 * u2 + u3 * u3)
                r = math.sin(th) / th if th > 0 else 1.0
                a0, a1, a2, a3 = _qmul_into(a0, a1, a2, a3, math.cos(th), u1 * r, u2 * r, u3 * r)
            out[i, loop, 0], out[i, loop, 1], out[i, loop, 2], out[i, loop, 3] = a0, a1, a2, a3
    return out


@njit(cache=True)
def quaternion_holonomies_group(q, side, order, parent, links, flips, offsets):
    """Holonomies of the ``group`` schemes in one pass per sample: interval products
    ``q`` (n, K, 4) cumulated outward (``C_k = C_parent B_k`` above the reference,
    ``B_k C_parent`` below), then per loop the product of ``C_link`` (its inverse where
    ``flips``) over its links. Output (n, loops, 4)."""
    n, K = q.shape[0], q.shape[1]
    nl = offsets.size - 1
    out = np.empty((n, nl, 4))
    cum = np.empty((K, 4))
    for i in range(n):
        for kk in range(K):
            k = order[kk]
            p = parent[k]
            b0, b1, b2, b3 = q[i, k, 0], q[i, k, 1], q[i, k, 2], q[i, k, 3]
            if p < 0:
                c = (b0, b1, b2, b3)
            elif side[k] > 0:
                c = _qmul_into(cum[p, 0], cum[p, 1], cum[p, 2], cum[p, 3], b0, b1, b2, b3)
            else:
                c = _qmul_into(b0, b1, b2, b3, cum[p, 0], cum[p, 1], cum[p, 2], cum[p, 3])
            cum[k, 0], cum[k, 1], cum[k, 2], cum[k, 3] = c
        for loop in range(nl):
            a0, a1, a2, a3 = 1.0, 0.0, 0.0, 0.0
            for e in range(offsets[loop], offsets[loop + 1]):
                lk = links[e]
                s = -1.0 if flips[e] else 1.0
                a0, a1, a2, a3 = _qmul_into(a0, a1, a2, a3, cum[lk, 0], s * cum[lk, 1],
                                            s * cum[lk, 2], s * cum[lk, 3])
            out[i, loop, 0], out[i, loop, 1], out[i, loop, 2], out[i, loop, 3] = a0, a1, a2, a3
    return out


@njit(cache=True)
def _su3_coefficients(u, w):
    """``f0, f1, f2`` of ``exp(iQ) = f0 + f1 Q + f2 Q^2`` for a traceless Hermitian 3 x 3
    ``Q`` from its invariants ``u`` and ``w`` (Morningstar and Peardon 2004, eqs. (29)-(33));
    the one home of this closed form on the compiled path."""
    xi0 = math.sin(w) / w if w != 0 else 1.0
    cw = math.cos(w)
    cu, su = math.cos(u), math.sin(u)
    e2iu = complex(cu * cu - su * su, 2.0 * su * cu)
    emiu = complex(cu, -su)
    u2, w2 = u * u, w * w
    h0 = (u2 - w2) * e2iu + emiu * complex(8 * u2 * cw, 2 * u * (3 * u2 + w2) * xi0)
    h1 = 2 * u * e2iu - emiu * complex(2 * u * cw, -(3 * u2 - w2) * xi0)
    h2 = e2iu - emiu * complex(cw, 3 * u * xi0)
    inv = 1.0 / (9 * u2 - w2)  # a real factor (no complex division)
    return h0 * inv, h1 * inv, h2 * inv


@njit(cache=True)
def u3_holonomies_algebra(x, side, order, parent, links, dirs, offsets, rows, cols, coef,
                          traceless):
    """`quaternion_holonomies_algebra` for U(3) and SU(3): ``x`` (n, K, d) interval sums;
    the sparse matrix ``(rows, cols, coef)`` (compressed rows, 9 x d) maps a link's
    coordinates to the Hermitian ``H = -i X`` as nine reals (the diagonal, then the
    real and the imaginary parts of ``H_01, H_02, H_12``), so no complex matrix is
    formed. Each link's ``exp(X) = e^{iq} exp(iQ)``, ``Q = H - q``
    traceless, by the closed form of `holonomy.groups.expm_u3` (Morningstar and Peardon
    2004) in real arithmetic: ``Q^2`` and ``det Q`` from the nine reals, then
    ``exp(iQ) = f_0 + f_1 Q + f_2 Q^2``. For a traceless basis (``traceless``) q is
    zero up to rounding and the phase is skipped. Output (n, loops, 3, 3)."""
    n, K, d = x.shape[0], x.shape[1], x.shape[2]
    nl = offsets.size - 1
    out = np.empty((n, nl, 3, 3), dtype=np.complex128)
    cum = np.empty((K, d))
    h = np.empty(9)
    for i in range(n):
        for kk in range(K):
            k = order[kk]
            p = parent[k]
            for j in range(d):
                v = x[i, k, j] * side[k]
                cum[k, j] = v + cum[p, j] if p >= 0 else v
        for loop in range(nl):
            m00, m01, m02 = 1.0 + 0j, 0j, 0j
            m10, m11, m12 = 0j, 1.0 + 0j, 0j
            m20, m21, m22 = 0j, 0j, 1.0 + 0j
            for e in range(offsets[loop], offsets[loop + 1]):
                lk = links[e]
                s = -dirs[e]
                for r in range(9):
                    v = 0.0
                    for j in range(rows[r], rows[r + 1]):
                        v += coef[j] * cum[lk, cols[j]]
                    h[r] = v * s
                q = (h[0] + h[1] + h[2]) / 3.0
                a0, a1, a2 = h[0] - q, h[1] - q, h[2] - q
                x01, x02, x12, y01, y02, y12 = h[3], h[4], h[5], h[6], h[7], h[8]
                n01, n02, n12 = x01 * x01 + y01 * y01, x02 * x02 + y02 * y02, x12 * x12 + y12 * y12
                # Q^2 (Hermitian): diagonal and upper entries
                d0, d1, d2 = a0 * a0 + n01 + n02, a1 * a1 + n01 + n12, a2 * a2 + n02 + n12
                # (Q^2)_01 = Q_01 (a0 + a1) + Q_02 conj(Q_12), and so on
                p01r = x01 * (a0 + a1) + (x02 * x12 + y02 * y12)
                p01i = y01 * (a0 + a1) + (y02 * x12 - x02 * y12)
                p02r = x02 * (a0 + a2) + (x01 * x12 - y01 * y12)
                p02i = y02 * (a0 + a2) + (x01 * y12 + y01 * x12)
                p12r = x12 * (a1 + a2) + (x01 * x02 + y01 * y02)
                p12i = y12 * (a1 + a2) + (x01 * y02 - y01 * x02)
                c1 = 0.5 * (d0 + d1 + d2)
                # det Q = a0 a1 a2 + 2 Re(Q_01 Q_12 Q_20) - a0 |Q_12|^2 - a1 |Q_02|^2 - a2 |Q_01|^2
                re3 = (x01 * x12 - y01 * y12) * x02 + (x01 * y12 + y01 * x12) * y02
                c0 = a0 * a1 * a2 + 2.0 * re3 - a0 * n12 - a1 * n02 - a2 * n01
                neg = c0 < 0
                c0 = abs(c0)
                if c1 < 1e-30:
                    f0, f1, f2 = 1.0 + 0j, 1j, -0.5 + 0j
                else:
                    rt = math.sqrt(c1 / 3.0)
                    theta = math.acos(min(c0 / (2.0 * rt * rt * rt), 1.0))
                    z = math.cos(theta / 3.0)
                    u = rt * z
                    # only w^2 enters (f_j even in w): w^2 = c1 (1 - z^2), no sine
                    w = math.sqrt(c1 * max(1.0 - z * z, 0.0))
                    f0, f1, f2 = _su3_coefficients(u, w)
                if neg:
                    f0, f1, f2 = f0.conjugate(), -f1.conjugate(), f2.conjugate()
                if not traceless:
                    ph = complex(math.cos(q), math.sin(q))
                    f0, f1, f2 = f0 * ph, f1 * ph, f2 * ph
                # E = f0 + f1 Q + f2 Q^2 (lower entries from the Hermitian
                # conjugates), then acc = acc E, all in scalars (registers)
                e00 = f0 + f1 * a0 + f2 * d0
                e11 = f0 + f1 * a1 + f2 * d1
                e22 = f0 + f1 * a2 + f2 * d2
                e01 = f1 * complex(x01, y01) + f2 * complex(p01r, p01i)
                e10 = f1 * complex(x01, -y01) + f2 * complex(p01r, -p01i)
                e02 = f1 * complex(x02, y02) + f2 * complex(p02r, p02i)
                e20 = f1 * complex(x02, -y02) + f2 * complex(p02r, -p02i)
                e12 = f1 * complex(x12, y12) + f2 * complex(p12r, p12i)
                e21 = f1 * complex(x12, -y12) + f2 * complex(p12r, -p12i)
                m00, m01, m02 = m00 * e00 + m01 * e10 + m02 * e20, \
                    m00 * e01 + m01 * e11 + m02 * e21, m00 * e02 + m01 * e12 + m02 * e22
                m10, m11, m12 = m10 * e00 + m11 * e10 + m12 * e20, \
                    m10 * e01 + m11 * e11 + m12 * e21, m10 * e02 + m11 * e12 + m12 * e22
                m20, m21, m22 = m20 * e00 + m21 * e10 + m22 * e20, \
                    m20 * e01 + m21 * e11 + m22 * e21, m20 * e02 + m21 * e12 + m22 * e22
            o = out[i, loop]
            o[0, 0], o[0, 1], o[0, 2] = m00, m01, m02
            o[1, 0], o[1, 1], o[1, 2] = m10, m11, m12
            o[2, 0], o[2, 1], o[2, 2] = m20, m21, m22
    return out


# ------------------------------------------------ exact heat kernels on the maximal torus
_SQRT3 = math.sqrt(3.0)


@njit(cache=True)
def _su3_exp_from_angle(a0, a1, a2, x01, y01, x02, y02, x12, y12, c1, p, cphi, sphi, neg, E):
    """``E = exp(iQ)`` for one traceless Hermitian 3 x 3 ``Q`` (diagonal ``a0, a1, a2``,
    upper entries ``x + iy``) given ``c1 = tr(Q^2) / 2``, ``p = sqrt(c1 / 3)`` and the
    angle ``phi = arccos(det Q / (2 p^3)) / 3`` of its eigenvalues
    ``2 p cos(phi - 2 pi k / 3)`` (``cphi``, ``sphi``; ``neg``: det Q < 0): the closed
    form of `holonomy.groups.expm_u3` (Morningstar and Peardon 2004, eqs. (23)-(34)),
    whose ``theta / 3`` is ``phi`` for ``det Q >= 0`` and ``pi / 3 - phi`` otherwise,
    so no further inverse cosine is needed."""
    n01, n02, n12 = x01 * x01 + y01 * y01, x02 * x02 + y02 * y02, x12 * x12 + y12 * y12
    d0, d1, d2 = a0 * a0 + n01 + n02, a1 * a1 + n01 + n12, a2 * a2 + n02 + n12  # Q^2
    p01r = x01 * (a0 + a1) + (x02 * x12 + y02 * y12)
    p01i = y01 * (a0 + a1) + (y02 * x12 - x02 * y12)
    p02r = x02 * (a0 + a2) + (x01 * x12 - y01 * y12)
    p02i = y02 * (a0 + a2) + (x01 * y12 + y01 * x12)
    p12r = x12 * (a1 + a2) + (x01 * x02 + y01 * y02)
    p12i = y12 * (a1 + a2) + (x01 * y02 - y01 * x02)
    if c1 < 1e-30:
        f0, f1, f2 = 1.0 + 0j, 1j, -0.5 + 0j
    else:
        if neg:  # theta / 3 = pi / 3 - phi
            ct, st = 0.5 * cphi + 0.5 * _SQRT3 * sphi, 0.5 * _SQRT3 * cphi - 0.5 * sphi
        else:
            ct, st = cphi, sphi
        u = p * ct
        w = _SQRT3 * p * st
        f0, f1, f2 = _su3_coefficients(u, w)
    if neg:
        f0, f1, f2 = f0.conjugate(), -f1.conjugate(), f2.conjugate()
    E[0, 0] = f0 + f1 * a0 + f2 * d0
    E[1, 1] = f0 + f1 * a1 + f2 * d1
    E[2, 2] = f0 + f1 * a2 + f2 * d2
    E[0, 1] = f1 * complex(x01, y01) + f2 * complex(p01r, p01i)
    E[1, 0] = f1 * complex(x01, -y01) + f2 * complex(p01r, -p01i)
    E[0, 2] = f1 * complex(x02, y02) + f2 * complex(p02r, p02i)
    E[2, 0] = f1 * complex(x02, -y02) + f2 * complex(p02r, -p02i)
    E[1, 2] = f1 * complex(x12, y12) + f2 * complex(p12r, p12i)
    E[2, 1] = f1 * complex(x12, -y12) + f2 * complex(p12r, -p12i)


@njit(cache=True)
def _torus_ratio(x, t, roots, images, signs, gnorm, amax, c, lattice_a, xr, e, y):
    """The acceptance r(x) of `holonomy.groups._heat._torus_accept` for one torus point
    ``x`` (m,) at time ``t``: nearest representative, then the image sums (``xr``,
    ``e``, ``y``: work arrays of length m), ``images[0]`` the zero vector, ``signs``
    as in `holonomy.groups._heat._TorusLaw`, ``gnorm`` the images' norms and ``amax``
    the largest root value on them."""
    if t < _TINY_TIME:  # r = 1 - O(t): 1 in double (and the root products underflow)
        return 1.0
    m = x.size
    delta = 0.0
    for j in range(m):
        z = x[j] / _TWO_PI
        f = np.rint(z)
        e[j] = z - f
        xr[j] = f
        delta += f
    if lattice_a and delta != 0:  # A_{m-1}: the coefficients must sum to zero
        for j in range(m):
            rank = 0
            for i in range(m):
                if e[i] < e[j] or (e[i] == e[j] and i < j):
                    rank += 1
            if rank < delta:
                xr[j] -= 1.0
            if rank >= m + delta:
                xr[j] += 1.0
    xx = 0.0
    for j in range(m):
        xr[j] = x[j] - _TWO_PI * xr[j]
        xx += xr[j] * xr[j]
    # one bound for all other images: |x + g|^2 - |x|^2 >= |g| (|g| - 2 |x|) and
    # |a(x + g)| <= |a(x)| + amax, so their weights are below exp(best) * pmax each
    rx = math.sqrt(xx)
    den0, pmax, prod0 = 1.0, 1.0, 1.0
    for r in range(roots.shape[0]):
        a = 0.0
        for j in range(m):
            a += roots[r, j] * xr[j]
        den0 *= a * a
        prod0 *= a
        pmax *= (abs(a) + amax) * (abs(a) + amax)
    best = -np.inf
    for g in range(1, images.shape[0]):
        best = max(best, -c * gnorm[g] * (gnorm[g] - 2.0 * rx) / (2.0 * t))
    if best < -746.0 or (images.shape[0] - 1) * math.exp(best) * pmax < _IMAGE_SKIP * den0:
        num, den, first = signs[0] * prod0, den0, images.shape[0]  # the representative only
    else:
        num, den, first = 0.0, 0.0, 0
    for g in range(first, images.shape[0]):
        yy = 0.0
        for j in range(m):
            y[j] = xr[j] + images[g, j]
            yy += y[j] * y[j]
        arg = -c * (yy - xx) / (2.0 * t)
        if arg < -746.0:  # exp underflows to 0 (as in numpy): no roots to evaluate
            continue
        expo = 1.0 if arg == 0.0 else math.exp(arg)  # the representative itself: 1
        w = 1.0
        for r in range(roots.shape[0]):
            a = 0.0
            for j in range(m):
                a += roots[r, j] * y[j]
            w *= a * a
        w *= expo
        if g > 0 and w < _IMAGE_SKIP * den:
            # |s w| <= w: r moves by less than 2 _IMAGE_SKIP (images[0] is the
            # representative, so den is its term at least)
            continue
        sw = expo * signs[g]
        for r in range(roots.shape[0]):
            a = 0.0
            for j in range(m):
                a += roots[r, j] * y[j]
            sw *= a
        num += sw
        den += w
    # the sines of every image are the representative's up to `signs`
    sines = 1.0
    for r in range(roots.shape[0]):
        a = 0.0
        for j in range(m):
            a += roots[r, j] * xr[j]
        sines *= 2.0 * math.sin(0.5 * a)
    return sines * num / den


@njit(cache=True)
def torus_draw(t, basis, roots, images, signs, gnorm, amax, c, lattice_a, rng, coords, mats,
               rows, cols, coef):
    """The rejection loop of `holonomy.groups._heat._torus_draw`, one entry per time
    ``t`` (k,), for the torus data of `holonomy.groups._heat._torus_law`. SU(3)
    (``basis`` (8, 3, 3), A lattice): the proposal's ``H = -iX`` as nine reals through
    the sparse map ``(rows, cols, coef)`` (as in `u3_holonomies_algebra`), its
    eigenvalues by the trigonometric solution of `holonomy.groups._heat._eig3` (Smith
    1961) and, when accepted, ``exp(iH)`` by `_su3_exp_from_angle` from the same angle,
    written into ``mats`` (k, 3, 3). Other groups: the accepted proposal's coordinates
    into ``coords`` (k, d) (eigenvalues by ``eigvalsh``, the last ``m`` for SO and Sp,
    whose eigenvalues come in pairs +-x). The proposal is the algebra element with
    variance t per orthonormal coordinate; same draws, same order as the numpy path:
    per round ``standard_normal((todo, d))`` then ``random(todo)``."""
    k, d, N = t.size, basis.shape[0], basis.shape[1]
    m = roots.shape[1]
    small = N == 3 and lattice_a
    hr = np.empty((d, N, N))  # -i X_a, real and imaginary parts
    hi = np.empty((d, N, N))
    for a in range(d):
        for r in range(N):
            for cc in range(N):
                hr[a, r, cc] = basis[a, r, cc].imag
                hi[a, r, cc] = -basis[a, r, cc].real
    todo = np.arange(k)
    tt = t.copy()
    H = np.empty((N, N), dtype=np.complex128)
    x = np.empty(m)
    xr = np.empty(m)
    e = np.empty(m)
    y = np.empty(m)
    h = np.empty(9)
    a0 = a1 = a2 = x01 = x02 = x12 = y01 = y02 = y12 = c0 = c1 = p = cphi = sphi = 0.0
    while todo.size:
        nk = todo.size
        Z = rng.standard_normal((nk, d))
        u = rng.random(nk)
        keep = np.empty(nk, dtype=np.bool_)
        for j in range(nk):
            s = math.sqrt(tt[j])
            for a in range(d):
                Z[j, a] *= s
            if small:
                for r in range(9):
                    v = 0.0
                    for i in range(rows[r], rows[r + 1]):
                        v += coef[i] * Z[j, cols[i]]
                    h[r] = v
                q = (h[0] + h[1] + h[2]) / 3.0
                a0, a1, a2 = h[0] - q, h[1] - q, h[2] - q
                x01, x02, x12, y01, y02, y12 = h[3], h[4], h[5], h[6], h[7], h[8]
                n01 = x01 * x01 + y01 * y01
                n02 = x02 * x02 + y02 * y02
                n12 = x12 * x12 + y12 * y12
                c1 = 0.5 * (a0 * a0 + a1 * a1 + a2 * a2) + n01 + n02 + n12
                re3 = (x01 * x12 - y01 * y12) * x02 + (x01 * y12 + y01 * x12) * y02
                c0 = a0 * a1 * a2 + 2.0 * re3 - a0 * n12 - a1 * n02 - a2 * n01
                p = math.sqrt(c1 / 3.0)
                p3 = p * p * p  # 0 at the tiniest times: any angle will do there
                arg = c0 / (2.0 * p3) if p3 > 0 else 0.0
                phi = math.acos(min(max(arg, -1.0), 1.0)) / 3.0
                cphi, sphi = math.cos(phi), math.sin(phi)
                x[0] = q + 2.0 * p * cphi  # 2 p cos(phi - 2 pi k / 3), k = 0, 1, 2
                x[1] = q + p * (-cphi + _SQRT3 * sphi)
                x[2] = q + p * (-cphi - _SQRT3 * sphi)
            else:
                for r in range(N):
                    for cc in range(N):
                        vr, vi = 0.0, 0.0
                        for a in range(d):
                            vr += Z[j, a] * hr[a, r, cc]
                            vi += Z[j, a] * hi[a, r, cc]
                        H[r, cc] = complex(vr, vi)
                w = np.linalg.eigvalsh(H)
                for i in range(m):
                    x[i] = w[N - m + i]
            ok = u[j] <= _torus_ratio(x, tt[j], roots, images, signs, gnorm, amax, c, lattice_a, xr,
                                      e, y)
            if ok and small:
                _su3_exp_from_angle(a0, a1, a2, x01, y01, x02, y02, x12, y12, c1, p, cphi,
                                    sphi, c0 < 0, mats[todo[j]])
            elif ok:
                coords[todo[j]] = Z[j]
            keep[j] = not ok
        todo = todo[keep]
        tt = tt[keep]


@njit(cache=True)
def matrix_holonomies_group(q, side, order, parent, links, flips, offsets):
    """`quaternion_holonomies_group` for (n, K, N, N) matrices: interval products ``q``
    cumulated outward (``C_k = C_parent B_k`` above the reference, ``B_k C_parent``
    below), then per loop the product of ``C_link`` (its conjugate transpose where
    ``flips``) over its links, left to right. Output (n, loops, N, N)."""
    n, K, N = q.shape[0], q.shape[1], q.shape[2]
    nl = offsets.size - 1
    out = np.empty((n, nl, N, N), dtype=q.dtype)
    cum = np.empty((K, N, N), dtype=q.dtype)
    acc = np.empty((N, N), dtype=q.dtype)
    tmp = np.empty((N, N), dtype=q.dtype)
    for i in range(n):
        for kk in range(K):
            k = order[kk]
            p = parent[k]
            if p < 0:
                cum[k] = q[i, k]
            elif side[k] > 0:
                for r in range(N):
                    for c in range(N):
                        s = cum[p, r, 0] * q[i, k, 0, c]
                        for j in range(1, N):
                            s += cum[p, r, j] * q[i, k, j, c]
                        cum[k, r, c] = s
            else:
                for r in range(N):
                    for c in range(N):
                        s = q[i, k, r, 0] * cum[p, 0, c]
                        for j in range(1, N):
                            s += q[i, k, r, j] * cum[p, j, c]
                        cum[k, r, c] = s
        for loop in range(nl):
            for r in range(N):
                for c in range(N):
                    acc[r, c] = 1.0 if r == c else 0.0
            for e in range(offsets[loop], offsets[loop + 1]):
                lk = links[e]
                for r in range(N):
                    for c in range(N):
                        s = acc[r, 0] * 0.0
                        for j in range(N):
                            s += acc[r, j] * (np.conj(cum[lk, c, j]) if flips[e] else cum[lk, j, c])
                        tmp[r, c] = s
                acc[:, :] = tmp
            out[i, loop] = acc
    return out

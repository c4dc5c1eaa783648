"""Compiled kernels for the optional ``fast`` extra (numba), imported lazily.

The numpy kernels (:mod:`holonomy._kernels`) are the reference and the default without
the extra. These kernels compute the same elements from the same random streams:
numba draws from the block's :class:`numpy.random.Generator` itself (its draws are
bitwise numpy's), in the same order as the numpy path (per rejection round all the
proposal normals, then all the uniforms), so the two paths agree to rounding (tested
to 1e-12 per sample). The loops run per sample over small elements, with no
temporaries: the heat kernel of SU(2) fuses the proposal, the acceptance test and the
quaternion; products of quaternions and of small complex matrices run as a
left-to-right loop over the steps.

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

__all__ = ["quaternion_exp", "quaternion_mul", "quaternion_product", "matrix_mul",
           "matrix_product", "su2_heat_small"]

_TWO_PI = 2.0 * math.pi


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
def _accept(th, t, log_tol):
    # the numerator of `holonomy.groups._heat._accept_numerator`, one angle at a time
    rhs = th
    if (math.pi / t) * (math.pi - th) < math.log(4 * math.pi * math.pi / t) + log_tol:
        em = math.exp(-(math.pi / t) * (math.pi - th))
        rhs += (th - _TWO_PI) * em + (th + _TWO_PI) * (em * math.exp(-(_TWO_PI / t) * th))
    return math.sin(th) * rhs


@njit(cache=True)
def su2_heat_small(tau, idx, out, rng, log_tol):
    """The rejection branch of `holonomy.groups.su2_heat_quaternions` for the entries
    ``idx`` of ``tau`` (all < 0.5), written into ``out`` (n, 4); same draws, same
    order: per round ``standard_normal((todo, 3))`` then ``random(todo)``."""
    todo = idx.copy()
    while todo.size:
        k = todo.size
        Z = rng.standard_normal((k, 3))
        u = rng.random(k)
        keep = np.empty(k, dtype=np.bool_)
        for j in range(k):
            e = todo[j]
            t = tau[e]
            r = math.sqrt(Z[j, 0] * Z[j, 0] + Z[j, 1] * Z[j, 1] + Z[j, 2] * Z[j, 2])
            th = math.sqrt(2.0 * t) * r
            ok = th <= math.pi and u[j] * th * th <= _accept(th, t, log_tol)
            keep[j] = not ok
            if ok:
                s = math.sin(th) / r
                out[e, 0] = math.cos(th)
                out[e, 1] = Z[j, 0] * s
                out[e, 2] = Z[j, 1] * s
                out[e, 3] = Z[j, 2] * s
        todo = todo[keep]
    return out

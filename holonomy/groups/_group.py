"""Compact matrix groups U(n), SU(n), SO(n), Sp(n) with an Ad-invariant metric.

Conventions (part of the project contract, see DEVELOPERS.md):

- ``U(n)``, ``SU(n)`` act on C^n, ``SO(n)`` on R^n (real orthogonal, det 1), ``Sp(n)`` is
  the compact symplectic group realised as the 2n x 2n unitary matrices ``U`` with
  ``U^T J U = J``, ``J = [[0, I], [-I, 0]]``. ``Sp(1)`` is then exactly ``SU(2)``.
- Metric on the Lie algebra ``<X, Y> = -k Re tr(XY)``: ``trace`` (k = 1), ``physics``
  (k = 2), ``large-n`` (k = matrix size N) or a positive number.
- ``basis`` is an orthonormal basis ``X_1..X_d`` of the Lie algebra for that metric.
  Coordinates ``a`` stand for ``sum_a a_a X_a``.

References
----------
.. [1] H. Georgi, "Lie Algebras in Particle Physics", 2nd ed., Westview, 1999,
   Chapters 2, 13 (generalized Gell-Mann matrices, Casimir operators).
.. [2] B. C. Hall, "Lie Groups, Lie Algebras, and Representations", 2nd ed., Springer,
   2015, Sections 1.2.8, 3.4 (compact symplectic group; Lie algebras of matrix groups).
.. [3] N. J. Higham, "Functions of Matrices", SIAM, 2008, Theorem 8.4 (number from
   memory; the polar factor is the nearest unitary matrix in the Frobenius norm).
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass
from functools import cached_property, lru_cache
from typing import Any

import numpy as np

from noise import ArgumentError, ArgumentTypeError, rng_iv

from ._heat import BrownianResult, brownian, exact_heat_route, heat_kernel
from ._reps import Representation, make_representation
from ._expmap import expm_eigh, expm_so3, expm_su2, expm_taylor, expm_u1, expm_u3

_TAYLOR_MAX_N = 8  # up to this size scaled Taylor beats a batched eigh (measured side by side against eigh, 2026-12-02)


__all__ = ["Group", "make_group", "group_iv", "FAMILIES", "METRICS", "MIN_N", "matrix_size",
           "algebra_dimension",
           "parse_family", "parse_n", "parse_metric"]

#: the group families, their smallest ``n`` and the metric names: the one definition
#: that ``make_group``, the closed forms (:mod:`holonomy.exact`) and the spec read
FAMILIES = ("U", "SU", "SO", "Sp")
MIN_N = {"U": 1, "SU": 2, "SO": 2, "Sp": 1}
METRICS = ("trace", "physics", "large-n")


def matrix_size(family: str, n: int) -> int:
    """Matrix size of the defining representation (``Sp(n)`` acts on C^(2n))."""
    return 2 * n if family == "Sp" else n


def algebra_dimension(family: str, n: int) -> int:
    """Dimension of the Lie algebra (``Group.dim``) without building the group:
    U(n) n^2, SU(n) n^2 - 1, SO(n) n (n - 1) / 2, Sp(n) n (2n + 1) (Hall 2015,
    Section 1.2 and Chapter 3; tested against the bases' sizes)."""
    return {"U": n * n, "SU": n * n - 1, "SO": n * (n - 1) // 2,
            "Sp": n * (2 * n + 1)}[family]


def parse_family(family, allowed: tuple[str, ...] = FAMILIES) -> str:
    """The canonical family name (case-insensitive), one of ``allowed``.

    Raises ``TypeError`` for a non-string, :class:`noise.ArgumentError` (argument
    ``family``) for an unknown name.
    """
    if not isinstance(family, str):
        raise TypeError(f"`family` must be a string, one of {FAMILIES}; got {family!r}.")
    fam = {f.lower(): f for f in FAMILIES}.get(family.strip().lower())
    if fam is None or fam not in allowed:
        rule = f"got {family!r}; expected one of " + ", ".join(f'"{f}"' for f in allowed)
        raise ArgumentError("family", rule, f"`family` must be one of {allowed} "
                            f"(case-insensitive); got {family!r}.")
    return fam


#: largest matrix size of a group the engine builds (its algebra basis: 64^4 complex
#: numbers, 256 MiB); the spec's own limit is smaller (holonomy.experiment.LIMITS)
MAX_GROUP_MATRIX = 64


def parse_n(family: str, n) -> int:
    """``n`` as an int, checked against the family's smallest size :data:`MIN_N` and
    the matrix size limit :data:`MAX_GROUP_MATRIX`."""
    if isinstance(n, bool) or not isinstance(n, numbers.Integral):
        raise TypeError(f"`n` must be an integer >= 1; got {n!r}.")
    n = int(n)
    low = MIN_N[family]
    if n < low:
        rule = f"got {n}; expected an integer >= {low} for {family}"
        if n < 1:
            msg = f"`n` must be an integer >= 1; got n={n} for {family}(n)."
        else:
            msg = (f"`n` must be >= {low} for {family}(n) ({family}({n}) is the trivial "
                   f"group); got n={n}.")
        raise ArgumentError("n", rule, msg)
    if matrix_size(family, n) > MAX_GROUP_MATRIX:
        # the orthonormal Lie-algebra basis alone holds about N^4 complex numbers
        high = MAX_GROUP_MATRIX // 2 if family == "Sp" else MAX_GROUP_MATRIX
        raise ArgumentError("n", f"got {n}; expected at most {high} for {family} (matrix "
                            f"size limit {MAX_GROUP_MATRIX})")
    return n


def parse_metric(metric, N: int, name: str = "metric") -> tuple[str | float, float]:
    """``(metric, k)``: a metric name of :data:`METRICS` (exactly as spelt there) or a
    positive finite number, and its constant k in ``<X, Y> = -k Re tr(XY)`` for matrix
    size ``N``. ``name`` is the argument's name in the caller (``k`` in the closed forms).
    """
    rule = f"got {metric!r}; expected one of " + ", ".join(f'"{m}"' for m in METRICS) + \
        " or a positive number"
    if isinstance(metric, str):
        k = {"trace": 1.0, "physics": 2.0, "large-n": float(N)}.get(metric)
        if k is None:
            raise ArgumentError(name, rule, f"`{name}` must be one of {METRICS} or a "
                                f"positive number; got {metric!r}.")
        return metric, k
    if isinstance(metric, numbers.Real) and not isinstance(metric, bool):
        k = float(metric)
        if not (math.isfinite(k) and k > 0):
            raise ArgumentError(name, rule, f"`{name}` must be one of {METRICS} or a "
                                f"positive finite number; got {metric!r}.")
        return k, k
    raise TypeError(f"`{name}` must be one of {METRICS} or a positive number; got {metric!r}.")


def _make_group_iv(family, n, metric):
    """Input validation and standardization for `make_group`."""
    fam = parse_family(family)
    n = parse_n(fam, n)
    metric, k = parse_metric(metric, matrix_size(fam, n))
    return fam, n, metric, k


def make_group(family: str, n: int, metric: str | float = "trace") -> "Group":
    """Build a compact matrix group with an Ad-invariant metric.

    Parameters
    ----------
    family : {"U", "SU", "SO", "Sp"}
        Group family (case-insensitive).
    n : int
        ``U(n)``, ``SU(n)`` (n >= 2), ``SO(n)`` (n >= 2) act on n-dimensional space;
        ``Sp(n)`` acts on C^{2n}.
    metric : {"trace", "physics", "large-n"} or float
        ``<X, Y> = -k Re tr(XY)`` with k = 1, 2, N (matrix size) or the number given.

    Returns
    -------
    Group

    Raises
    ------
    ValueError, TypeError
        Unknown family, ``n`` out of range, unknown or non-positive metric.

    References
    ----------
    .. [1] B. C. Hall, "Lie Groups, Lie Algebras, and Representations", 2nd ed.,
       Springer, 2015, Section 1.2.

    Examples
    --------
    >>> G = make_group("SU", 3, "physics")
    >>> G.dim, G.N, G.k
    (8, 3, 2.0)
    """
    fam, n, metric, k = _make_group_iv(family, n, metric)
    return _cached_group(fam, n, metric, k)


@lru_cache(maxsize=None)
def _cached_group(fam, n, metric, k):
    return Group(fam, n, metric, k)


def _unit_basis(family: str, n: int) -> np.ndarray:
    """Orthogonal (not yet normalised) basis of the Lie algebra, shape (d, N, N)."""
    N = matrix_size(family, n)
    mats = []
    if family in ("U", "SU"):
        if family == "U":
            for j in range(n):
                X = np.zeros((n, n), complex)
                X[j, j] = 1j
                mats.append(X)
        else:
            # Generalized Gell-Mann diagonal matrices, Georgi (1999), Eq. (13.3).
            for m in range(1, n):
                X = np.zeros((n, n), complex)
                X[np.arange(m), np.arange(m)] = 1j
                X[m, m] = -1j * m
                mats.append(X)
        for j in range(n):
            for l in range(j + 1, n):
                X = np.zeros((n, n), complex)
                X[j, l], X[l, j] = 1.0, -1.0
                mats.append(X)
                X = np.zeros((n, n), complex)
                X[j, l], X[l, j] = 1j, 1j
                mats.append(X)
    elif family == "SO":
        for j in range(n):
            for l in range(j + 1, n):
                X = np.zeros((n, n))
                X[j, l], X[l, j] = 1.0, -1.0
                mats.append(X)
    else:  # Sp: [[A, B], [-conj(B), conj(A)]], A in u(n), B complex symmetric (Hall 2015)
        for A in _unit_basis("U", n):
            X = np.zeros((N, N), complex)
            X[:n, :n], X[n:, n:] = A, np.conj(A)
            mats.append(X)
        for j in range(n):
            for l in range(j, n):
                for c in (1.0, 1j):
                    B = np.zeros((n, n), complex)
                    B[j, l] = B[l, j] = c
                    X = np.zeros((N, N), complex)
                    X[:n, n:], X[n:, :n] = B, -np.conj(B)
                    mats.append(X)
    return np.array(mats)


#: algebra elements with a 1-norm above this take the eigh route: the closed form of
#: U(3) overflows ((c_1/3)^1.5 near 1e300) and scaling and squaring compounds its
#: rounding over about log2(norm) squarings until it overflows (a density near 1e300);
#: eigh stays unitary at any norm. No ordinary draw comes near (norms of order 10)
_EIGH_NORM = 1e6


def _large_by_eigh(route, X: np.ndarray, real: bool = False) -> np.ndarray:
    """``route(X)``, with the matrices of norm above `_EIGH_NORM` by `expm_eigh`."""
    norm = np.abs(X).sum(axis=-2).max(axis=-1)
    big = norm > _EIGH_NORM
    if not big.any():
        return route(X)
    out = route(np.where(big[..., None, None], 0.0, X))
    out[big] = expm_eigh(X[big], real=real)
    return out


@dataclass(frozen=True)
class Group:
    """A compact matrix group with an Ad-invariant metric; build it with `make_group`.

    Attributes
    ----------
    family : str
        ``"U"``, ``"SU"``, ``"SO"`` or ``"Sp"``.
    n : int
        Rank parameter as in ``make_group``.
    metric : str or float
        Metric name, or the number given.
    k : float
        Metric constant in ``<X, Y> = -k Re tr(XY)``.
    """

    family: str
    n: int
    metric: str | float
    k: float

    # ----------------------------------------------------------------- structure
    @cached_property
    def N(self) -> int:
        """Matrix size (``2n`` for ``Sp(n)``)."""
        return matrix_size(self.family, self.n)

    @cached_property
    def real(self) -> bool:
        """True for ``SO(n)`` (real matrices)."""
        return self.family == "SO"

    @cached_property
    def dtype(self):
        return np.float64 if self.real else np.complex128

    @cached_property
    def basis(self) -> np.ndarray:
        """Orthonormal basis ``(d, N, N)`` of the Lie algebra for ``-k Re tr(XY)``."""
        B = _unit_basis(self.family, self.n)
        norms = -np.einsum("aij,aji->a", B, B).real
        B = B / np.sqrt(self.k * norms)[:, None, None]
        B.setflags(write=False)
        return B

    @cached_property
    def dim(self) -> int:
        """Dimension d of the group."""
        return self.basis.shape[0]

    @cached_property
    def J(self) -> np.ndarray | None:
        """Symplectic form ``[[0, I], [-I, 0]]`` for ``Sp(n)``, else None."""
        if self.family != "Sp":
            return None
        n = self.n
        J = np.zeros((2 * n, 2 * n))
        J[:n, n:] = np.eye(n)
        J[n:, :n] = -np.eye(n)
        return J

    def __repr__(self) -> str:
        return f"make_group({self.family!r}, {self.n}, {self.metric!r})"

    def __str__(self) -> str:
        return f"{self.family}({self.n}) with k={self.k:g}"

    # --------------------------------------------------------- algebra <-> coords
    def algebra(self, coords: np.ndarray) -> np.ndarray:
        """Lie-algebra matrices ``sum_a c_a X_a`` from coordinates ``(..., d)``."""
        c = np.asarray(coords, dtype=float)
        if c.shape[-1:] != (self.dim,):
            raise ValueError(
                f"`coords` must have last axis of length d={self.dim}; got shape {c.shape}."
            )
        # Real and imaginary parts as two real matrix products: cheaper than casting
        # the coordinates to complex (the heat samplers call this once per sub-step).
        re, im = self._basis_parts
        flat = c.reshape(-1, self.dim)
        shape = c.shape[:-1] + (self.N, self.N)
        if im is None:
            return (flat @ re).reshape(shape)
        out = np.empty((flat.shape[0], self.N * self.N), complex)
        out.real = flat @ re
        out.imag = flat @ im
        return out.reshape(shape)

    @cached_property
    def _basis_parts(self):
        flat = self.basis.reshape(self.dim, -1)
        if self.real:
            return np.ascontiguousarray(flat), None
        return np.ascontiguousarray(flat.real), np.ascontiguousarray(flat.imag)

    def coords(self, X: np.ndarray) -> np.ndarray:
        """Coordinates ``<X_a, X> = -k Re tr(X_a X)`` of matrices ``(..., N, N)``."""
        X = np.asarray(X)
        if X.shape[-2:] != (self.N, self.N):
            raise ValueError(
                f"`X` must have shape (..., {self.N}, {self.N}); got shape {X.shape}."
            )
        return -self.k * np.einsum("aij,...ji->...a", self.basis, X).real

    def inner(self, X: np.ndarray, Y: np.ndarray) -> np.ndarray:
        """The metric ``-k Re tr(XY)``, batched."""
        return -self.k * np.einsum("...ij,...ji->...", X, Y).real

    # ------------------------------------------------------------- exponential
    def _is_coords(self, A: np.ndarray, coords: bool | None) -> bool:
        if coords is not None:
            return bool(coords)
        N, d = self.N, self.dim
        mat_shape = A.ndim >= 2 and A.shape[-2:] == (N, N)
        if not mat_shape:
            return True
        if A.shape[-1] != d or np.iscomplexobj(A):
            return False
        # Ambiguous shape (d == N, real input: SO(3), or U(1) with real data). Real
        # input can only be algebra matrices for SO(n), and then it is antisymmetric.
        if not self.real:
            return True
        T = np.swapaxes(A, -1, -2)
        scale = max(float(np.max(np.abs(A))), 1e-300)
        return not (np.any(A != 0) and np.max(np.abs(A + T)) <= 1e-12 * scale)

    def exp(self, A: np.ndarray, *, coords: bool | None = None) -> np.ndarray:
        """Exponential map, batched.

        Parameters
        ----------
        A : ndarray
            Coordinates ``(..., d)`` or algebra matrices ``(..., N, N)``.
        coords : bool, optional
            Force the reading of ``A``. By default a shape ``(..., N, N)`` is read as
            matrices, except when ``d == N`` (``SO(3)``, ``U(1)``) and the trailing
            blocks are not nonzero algebra matrices; pass ``coords=`` to be explicit.

        Returns
        -------
        ndarray (..., N, N)
            Group elements; complex except for ``SO(n)``.

        References
        ----------
        .. [1] B. C. Hall, "Lie Groups, Lie Algebras, and Representations", 2nd ed.,
           Springer, 2015, Section 2.2.
        """
        A = np.asarray(A)
        if self._is_coords(A, coords):
            X = self.algebra(A)
        else:
            X = A
            if X.shape[-2:] != (self.N, self.N):
                raise ValueError(
                    f"`A` must have shape (..., {self.dim}) or (..., {self.N}, {self.N}); "
                    f"got shape {A.shape}."
                )
        return self.exp_matrix(X)

    def exp_matrix(self, X: np.ndarray) -> np.ndarray:
        """Exponential of algebra matrices ``(..., N, N)`` by the group's fastest route."""
        fam, N = self.family, self.N
        if N == 1:
            return expm_u1(X.astype(complex, copy=False))
        if N == 2 and fam in ("SU", "Sp"):
            return expm_su2(X.astype(complex, copy=False))
        if fam == "SO":
            X = np.asarray(X).real
            if N == 3:
                return expm_so3(X)
            if N <= _TAYLOR_MAX_N:
                return _large_by_eigh(expm_taylor, X, real=True)
            return expm_eigh(X, real=True)
        if N == 3:  # U(3), SU(3)
            return _large_by_eigh(expm_u3, X.astype(complex, copy=False))
        if N <= _TAYLOR_MAX_N:
            return _large_by_eigh(expm_taylor, X.astype(complex, copy=False))
        return expm_eigh(X)

    # ---------------------------------------------------------- group elements
    def identity(self, shape: tuple[int, ...] | int = ()) -> np.ndarray:
        """Identity matrices of shape ``(*shape, N, N)``."""
        shape = (shape,) if isinstance(shape, numbers.Integral) else tuple(shape)
        return np.broadcast_to(np.eye(self.N, dtype=self.dtype), shape + (self.N, self.N)).copy()

    def inv(self, U: np.ndarray) -> np.ndarray:
        """Inverse ``U^* = conj(U)^T`` (exact on the group)."""
        return np.conj(np.swapaxes(U, -1, -2))

    def drift(self, U: np.ndarray) -> float:
        """Largest distance from the group over a batch.

        The maximum of ``||U^* U - I||_F``, and ``|det U - 1|`` for SU/SO, and
        ``||U^T J U - J||_F`` for Sp, over all samples.
        """
        U = np.asarray(U)
        if U.size == 0:
            return 0.0
        eye = np.eye(self.N)
        out = np.linalg.norm(self.inv(U) @ U - eye, axis=(-2, -1)).max()
        if self.family in ("SU", "SO"):
            out = max(out, np.abs(np.linalg.det(U) - 1.0).max())
        if self.family == "Sp":
            J = self.J
            out = max(out, np.linalg.norm(np.swapaxes(U, -1, -2) @ J @ U - J, axis=(-2, -1)).max())
        return float(out)

    def project(self, U: np.ndarray) -> np.ndarray:
        """Map near-group matrices back onto the group.

        ``U(n)``: the unitary polar factor ``W V^*`` of ``U = W S V^*``, the nearest unitary
        matrix in the Frobenius norm [3]_ (module references). ``SU(n)``: that factor
        times ``det^{-1/N}`` (principal branch, the smallest phase correction).
        ``SO(n)``: the nearest rotation (polar factor, with the last singular vector's
        sign flipped if the determinant is negative). ``Sp(n)``: first the Frobenius-
        orthogonal projection onto quaternion-linear matrices,
        ``M = (U + J^T conj(U) J) / 2`` (the real-linear span of Sp(n) is that set), then
        the polar factor of ``M``, which is again quaternion-linear and unitary, hence in
        Sp(n). To first order in the distance this is the nearest point of Sp(n).
        """
        U = np.asarray(U)
        if self.family == "Sp":
            J = self.J
            U = 0.5 * (U + J.T @ np.conj(U) @ J)
        W, _, Vh = np.linalg.svd(U)
        if self.family == "SO":
            W = W.real.copy()
            Vh = Vh.real
            d = np.linalg.det(W @ Vh)
            W[..., :, -1] *= np.sign(d)[..., None]
            return W @ Vh
        P = W @ Vh
        if self.family == "SU":
            phase = np.angle(np.linalg.det(P))
            P = P * np.exp(-1j * phase / self.N)[..., None, None]
        return P

    def haar(self, size: int, *, rng=None) -> np.ndarray:
        """Haar-distributed samples ``(size, N, N)``.

        QR of a Ginibre matrix with the phases of R's diagonal removed (Mezzadri 2007,
        "How to generate random matrices from the classical compact groups", Notices AMS
        54, 592), then the family constraint: SU divides by a root of the determinant,
        SO flips one column, Sp uses the quaternionic Ginibre matrix
        ``[[A, B], [-conj(B), conj(A)]]`` orthonormalised by ``project``.
        """
        rng = rng_iv(rng)
        N = self.N
        if self.family == "Sp":
            n = self.n
            A = rng.standard_normal((size, n, n)) + 1j * rng.standard_normal((size, n, n))
            B = rng.standard_normal((size, n, n)) + 1j * rng.standard_normal((size, n, n))
            Z = np.block([[A, B], [-np.conj(B), np.conj(A)]])
            return self.project(Z)
        if self.real:
            Z = rng.standard_normal((size, N, N))
        else:
            Z = (rng.standard_normal((size, N, N)) + 1j * rng.standard_normal((size, N, N))) / np.sqrt(2)
        Q, R = np.linalg.qr(Z)
        d = np.diagonal(R, axis1=-2, axis2=-1)
        Q = Q * (d / np.abs(d))[..., None, :]
        if self.family == "SU":
            phase = np.angle(np.linalg.det(Q))
            Q = Q * np.exp(-1j * phase / N)[..., None, None]
        elif self.family == "SO":
            s = np.sign(np.linalg.det(Q))
            Q[..., :, 0] *= s[..., None]
        return Q

    # ------------------------------------------------------- representations
    def rep(self, spec: str) -> "Representation":
        """Representation by name: ``"fundamental"``, ``"adjoint"``, ``"trivial"``,
        ``"spin:j"`` (SU(2) and Sp(1); j = 0, 1/2, 1, 3/2, ...), ``"power:k"`` (k >= 1)."""
        if not isinstance(spec, str):  # refused by the grammar (unhashable ones too)
            return make_representation(self, spec)
        cache = self.__dict__.setdefault("_rep_cache", {})
        if spec not in cache:
            r = make_representation(self, spec)
            cache[spec] = r
        return cache[spec]

    @cached_property
    def casimir_fundamental(self) -> float:
        """Casimir constant of the defining representation (computed from the basis)."""
        return self.rep("fundamental").casimir

    # -------------------------------------------------- Brownian / heat kernel
    def brownian(self, t, size: int, *, rng=None, steps: int | None = None) -> "BrownianResult":
        """Brownian motion at time ``t`` by sub-stepping; see `holonomy.groups.brownian`."""
        return brownian(self, t, size, rng=rng, steps=steps)

    def heat_kernel(self, t, size: int, *, rng=None) -> np.ndarray:
        """Samples of the heat kernel p_t; see `holonomy.groups.heat_kernel`."""
        return heat_kernel(self, t, size, rng=rng)

    @cached_property
    def special_part(self) -> "Group":
        """``SU(n)`` with this group's metric constant (for ``U(n)``: u(n) is the centre
        plus su(n), orthogonal for the metric)."""
        return make_group("SU", self.n, float(self.k))

    @property
    def exact_heat_kernel(self) -> bool:
        """True when `heat_kernel` samples exactly in law; see `exact_heat_route`."""
        return exact_heat_route(self) is not None

    def __getstate__(self):
        # Drop cached arrays; they are rebuilt on demand after unpickling.
        return {f: getattr(self, f) for f in ("family", "n", "metric", "k")}

    def __setstate__(self, state):
        for key, value in state.items():
            object.__setattr__(self, key, value)


def group_iv(group: Any, name: str = "group") -> "Group":
    """The group argument of an entry point: a :class:`Group` (anything with its
    ``basis`` and ``rep``), else :class:`noise.ArgumentTypeError` naming ``name``."""
    if not (hasattr(group, "basis") and hasattr(group, "rep")):
        raise ArgumentTypeError(name, f"got {group!r}; expected a Group from make_group",
                                f"`{name}` must be a Group from holonomy.groups.make_group; "
                                f"got {group!r}.")
    return group

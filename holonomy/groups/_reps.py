"""Representations, characters and Casimir constants, batched over samples.

Specs accepted by ``Group.rep``:

- ``"fundamental"`` (alias ``"defining"``): ``pi(U) = U``.
- ``"adjoint"``: ``Ad(U)_{ab} = <X_a, U X_b U^*>`` in the orthonormal basis (real d x d).
- ``"trivial"``: ``pi(U) = 1``.
- ``"spin:j"`` for SU(2) and Sp(1) (the same matrices), j = 0, 1/2, 1, 3/2, ... given as
  ``"3/2"``, ``"1"`` or ``"1.5"``: the symmetric power ``Sym^{2j} C^2`` acting on
  homogeneous polynomials of degree 2j, in the orthonormal monomial basis
  ``x^p y^{2j-p} / sqrt(p! (2j-p)!)``.
- (not a spec) :func:`irreducible_representation`: the irreducible of a highest weight,
  with matrices, for SU(2), Sp(1) (``spin:j``) and SO(3) (spin l through the isomorphism
  ``so(3) = su(2)``, ``X = sum_a x_a L_a -> -i x . sigma / 2``).
- ``"power:k"``: the class function ``tr(U^k)`` (k >= 1), not a representation for
  k >= 2; its "dimension" is N (so that the normalized value at the identity is 1) and
  ``casimir`` is None.

``spin:j`` and ``adjoint`` are refused above dimension :data:`MAX_REP_DIM` (64).

The Casimir constant is computed from the basis: ``C = sum_a dpi(X_a)^2``, and if
``C = -c Id`` (checked to 1e-10) then ``casimir = c``; otherwise None.

References
----------
.. [1] H. Georgi, "Lie Algebras in Particle Physics", 2nd ed., Westview, 1999,
   Chapters 3 and 7 (SU(2) spin j, Casimir operators).
.. [2] B. C. Hall, "Lie Groups, Lie Algebras, and Representations", 2nd ed., Springer,
   2015, Section 4.6 (the representations V_m of SU(2) on homogeneous polynomials) and
   Section 10.2 (the Casimir element).
"""

from __future__ import annotations

import itertools
import math
import re
from dataclasses import dataclass, field
from fractions import Fraction
from functools import lru_cache
from typing import Any, Callable

import numpy as np

from noise import ArgumentError, ArgumentTypeError

__all__ = ["Representation", "make_representation", "rep_of", "parse_spin", "parse_rep", "rep_name",
           "irreducible_representation", "MAX_REP_DIM", "rep_dimension", "check_rep_dimension"]

#: The largest dimension of a representation named by a spec string (``spin:j``: 2j + 1;
#: ``adjoint``: the group's dimension). Representation matrices are dense ``dim x dim``
#: per sample and the exact routes contract tensors of ``dim`` (``adjoint`` of U(32),
#: dimension 1024, asked for 16 GiB in `casimir_operator`); at 64 every accepted case
#: finishes within the budgets of DEVELOPERS.md ("Limits, faults and test hooks").
#: ``fundamental`` and ``power:k`` have the matrix size as dimension, ``trivial`` 1.
MAX_REP_DIM = 64


@dataclass(frozen=True, eq=False)
class Representation:
    """A representation (or class function) of a `Group`.

    Attributes
    ----------
    group : Group
    name : str
        Canonical spec, e.g. ``"spin:3/2"``.
    dim : int
        Dimension (value of the unnormalized character at the identity).
    irreducible : bool
    casimir : float or None
        ``c`` with ``sum_a dpi(X_a)^2 = -c Id``, computed from the basis; None when the
        Casimir operator is not a multiple of the identity or ``dpi`` is undefined.
    """

    group: Any
    name: str
    dim: int
    irreducible: bool
    _matrix: Callable | None = field(repr=False, default=None)
    _algebra: Callable | None = field(repr=False, default=None)
    _character: Callable | None = field(repr=False, default=None)
    casimir: float | None = None

    def matrix(self, U: np.ndarray) -> np.ndarray:
        """Representation matrices ``(..., dim, dim)`` of ``U (..., N, N)``."""
        if self._matrix is None:
            raise ValueError(f"`rep` {self.name!r} is a class function without matrices.")
        return self._matrix(np.asarray(U))

    def algebra_matrix(self, X: np.ndarray) -> np.ndarray:
        """The differential ``dpi(X)`` of algebra matrices ``X (..., N, N)``."""
        if self._algebra is None:
            raise ValueError(f"`rep` {self.name!r} has no Lie-algebra representation.")
        return self._algebra(np.asarray(X))

    def character(self, U: np.ndarray, normalized: bool = True) -> np.ndarray:
        """Character ``tr pi(U)`` (divided by ``dim`` if ``normalized``), complex ``(...)``."""
        chi = np.asarray(self._character(np.asarray(U)), dtype=complex)
        return chi / self.dim if normalized else chi

    def casimir_operator(self) -> np.ndarray:
        """``sum_a dpi(X_a)^2`` computed from the group's basis."""
        D = self.algebra_matrix(self.group.basis)
        return np.einsum("aij,ajk->ik", D, D)

    def __repr__(self) -> str:
        return f"Representation({self.group!s}, {self.name!r}, dim={self.dim})"


def _scalar_casimir(C: np.ndarray) -> float | None:
    c = -np.trace(C).real / C.shape[0]
    if np.linalg.norm(C + c * np.eye(C.shape[0])) <= 1e-10 * max(1.0, abs(c)):
        return float(c) + 0.0  # no negative zero
    return None


_REP_RULE = ('one of "fundamental", "adjoint", "trivial", "spin:j" (SU(2) and Sp(1), '
             'j = 0, 1/2, 1, 3/2, ...) or "power:k" (k an integer >= 1)')


def parse_spin(text: str) -> Fraction:
    """Parse a spin ``"3/2"``, ``"1"``, ``"1.5"`` into a Fraction; rejects non-half-integers."""
    try:
        j = Fraction(text.strip())
    except (ValueError, ZeroDivisionError):
        j = None
    if j is None or j < 0 or (2 * j).denominator != 1:
        raise ArgumentError(
            "rep", f"got 'spin:{text}'; expected spin:j with j a half-integer >= 0 like "
            "0, 1/2, 1, 3/2",
            f"`rep` spin must be a non-negative half-integer such as 0, 1/2, 1, 3/2 "
            f"(written 'spin:3/2', 'spin:1' or 'spin:1.5'); got {text!r}.")
    return j


def parse_rep(spec: str, family: str, N: int) -> tuple[str, Fraction | int | None]:
    """The representation grammar (its one definition): ``(kind, argument)``.

    ``kind`` is ``"fundamental"`` (aliases ``"defining"``, ``"fund"``), ``"adjoint"``
    (alias ``"adj"``), ``"trivial"``, ``"spin"`` (argument j, for the groups with
    ``N == 2`` and family SU or Sp) or ``"power"`` (argument k >= 1). ``family`` and
    ``N`` (the matrix size) are the group's. Raises ``TypeError`` for a non-string and
    :class:`noise.ArgumentError` (argument ``rep``) for a refused one.
    """
    if not isinstance(spec, str):
        raise ArgumentTypeError(
            "rep", f"got {spec!r}; expected {_REP_RULE}",
            f"`rep` must be a string: 'fundamental', 'adjoint', 'trivial', 'spin:j' or "
            f"'power:k'; got {spec!r}.")
    s = spec.strip().lower()
    if not s.isascii():  # int() and Fraction() would read other scripts' digits
        raise ArgumentError(
            "rep", f"got {spec!r}; expected {_REP_RULE} in ASCII",
            f"`rep` must be 'fundamental', 'adjoint', 'trivial', 'spin:j' (SU(2), Sp(1)) or "
            f"'power:k' in ASCII; got {spec!r}.")
    if s in ("fundamental", "defining", "fund"):
        return ("fundamental", None)
    if s in ("adjoint", "adj"):
        return ("adjoint", None)
    if s == "trivial":
        return ("trivial", None)
    if s.startswith("spin:"):
        if not (N == 2 and family in ("SU", "Sp")):
            raise ArgumentError(
                "rep", f"got {spec!r} for {family}; spin representations need SU(2) or Sp(1)",
                f"`rep` {spec!r}: spin representations exist for SU(2) and Sp(1) only; "
                f"the group is {family} with matrix size {N}. Accepted here: 'fundamental', "
                "'adjoint', 'trivial', 'power:k'.")
        return ("spin", parse_spin(s[5:]))
    if s.startswith("power:"):
        arg = s[6:].strip()
        k = 0
        if re.fullmatch(r"[+-]?\d+", arg):
            # beyond 18 digits the count only matters as "huge" (no int() of megabytes)
            k = int(arg) if len(arg) <= 19 else (10**18 if arg[0] != "-" else -1)
        if k < 1:
            raise ArgumentError(
                "rep", f"got {spec!r}; expected power:k with k an integer >= 1",
                f"`rep` 'power:k' needs an integer k >= 1; got {spec!r}.")
        return ("power", k)
    raise ArgumentError(
        "rep", f"got {spec!r}; expected {_REP_RULE}",
        f"`rep` must be 'fundamental', 'adjoint', 'trivial', 'spin:j' (SU(2), Sp(1)) or "
        f"'power:k'; got {spec!r}.")


def rep_dimension(kind: str, arg, family: str, n: int) -> int:
    """The dimension of the parsed representation ``(kind, arg)`` (:func:`parse_rep`) of
    ``family(n)``, without building it: ``spin:j`` 2j + 1, ``adjoint`` the group's
    dimension, ``fundamental`` and ``power:k`` the matrix size, ``trivial`` 1."""
    from ._group import algebra_dimension, matrix_size  # _group imports this module

    if kind == "spin":
        return int(2 * arg + 1)
    if kind == "adjoint":
        return algebra_dimension(family, n)
    if kind == "trivial":
        return 1
    return matrix_size(family, n)


def _count(x: int) -> str:
    """An integer for a message: in full up to 18 digits, else its order of magnitude."""
    return str(x) if x < 10**18 else f"about 1e{len(str(x)) - 1}"


def check_rep_dimension(spec: str, kind: str, arg, family: str, n: int) -> int:
    """The dimension of ``spec`` (parsed as ``(kind, arg)``) of ``family(n)``, refused with
    :class:`noise.ArgumentError` (argument ``rep``) above :data:`MAX_REP_DIM`: the one
    rule that ``make_representation`` and the spec's ``observable.rep`` apply."""
    dim = rep_dimension(kind, arg, family, n)
    if dim <= MAX_REP_DIM or kind not in ("spin", "adjoint"):  # the others: matrix size
        return dim
    if kind == "spin":
        rule = (f"got {spec!r}, of dimension {_count(dim)}; expected spin:j with "
                f"2j + 1 <= {MAX_REP_DIM} (the representation dimension limit)")
    else:
        rule = (f"got {spec!r} of {family}({n}), of dimension {dim}; expected a "
                f"representation of dimension <= {MAX_REP_DIM} (the adjoint of U(n) or "
                f"SU(n) n <= 8, SO(n) n <= 11, Sp(n) n <= 5)")
    raise ArgumentError("rep", rule, f"`rep` {rule}.")


def rep_name(kind: str, arg) -> str:
    """The canonical name of a parsed representation (``"spin:3/2"``, ``"power:2"``)."""
    return kind if arg is None else f"{kind}:{arg}"


def make_representation(group, spec: str) -> Representation:
    """Build the representation ``spec`` of ``group`` (see the module docstring).

    Raises
    ------
    noise.ArgumentError
        Argument ``rep``: a spec outside the grammar (:func:`parse_rep`), or ``spin:j`` /
        ``adjoint`` of dimension above :data:`MAX_REP_DIM` (:func:`check_rep_dimension`).
    """
    kind, arg = parse_rep(spec, group.family, group.N)
    check_rep_dimension(spec, kind, arg, group.family, group.n)
    return _build(group, kind, arg)


def rep_of(group, rep: Any) -> Representation:
    """The representation argument ``rep`` of an entry point: a name (built by
    ``group.rep``) or a :class:`Representation`; :class:`noise.ArgumentTypeError`
    (argument ``rep``) for anything else. The one check of every entry point taking
    ``rep`` next to a group."""
    if isinstance(rep, str):
        return group.rep(rep)
    if isinstance(rep, Representation):
        return rep
    raise ArgumentTypeError(
        "rep", f"got {rep!r}; expected {_REP_RULE} or a Representation",
        f"`rep` must be a representation name ('fundamental', 'adjoint', 'trivial', "
        f"'spin:j', 'power:k') or a Representation; got {rep!r}.")


def _build(group, kind: str, arg) -> Representation:
    """The representation of a parsed spec, with no size limit (the irreducibles of the
    character sums, :func:`irreducible_representation`, go beyond it)."""
    if kind == "fundamental":
        # SO(2) acting on C^2 splits into two characters.
        r = Representation(
            group, "fundamental", group.N, not (group.family == "SO" and group.n == 2),
            _matrix=lambda U: U,
            _algebra=lambda X: X,
            _character=lambda U: np.trace(U, axis1=-2, axis2=-1),
        )
    elif kind == "trivial":
        r = Representation(
            group, "trivial", 1, True,
            _matrix=lambda U: np.ones(U.shape[:-2] + (1, 1)),
            _algebra=lambda X: np.zeros(X.shape[:-2] + (1, 1)),
            _character=lambda U: np.ones(U.shape[:-2]),
        )
    elif kind == "adjoint":
        r = _adjoint(group)
    elif kind == "spin":
        r = _spin(group, arg)
    else:
        r = Representation(
            group, f"power:{arg}", group.N, arg == 1,
            _character=lambda U, k=arg: np.trace(np.linalg.matrix_power(U, k), axis1=-2, axis2=-1),
        )
        if arg == 1:
            r = Representation(group, "power:1", group.N, True, _matrix=lambda U: U,
                               _algebra=lambda X: X, _character=r._character)
    if r._algebra is not None:
        object.__setattr__(r, "casimir", _scalar_casimir(r.casimir_operator()))
    return r


# ----------------------------------------------------------------------- adjoint
def _adjoint(group) -> Representation:
    B = group.basis
    k = group.k
    # U(n), n >= 2: the centre gives a trivial summand; so(4) = so(3) + so(3).
    irreducible = not ((group.family == "U" and group.n >= 2) or (group.family == "SO" and group.n == 4))

    def matrix(U):
        Y = U[..., None, :, :] @ B @ np.conj(np.swapaxes(U, -1, -2))[..., None, :, :]
        return -k * np.einsum("aij,...bji->...ab", B, Y).real

    def algebra(X):
        Y = X[..., None, :, :] @ B - B @ X[..., None, :, :]
        return -k * np.einsum("aij,...bji->...ab", B, Y).real

    def character(U):
        # tr Ad(U) = sum_a <X_a, U X_a U^*> = -k Re sum_a tr(X_a U X_a U^*).
        UH = np.conj(np.swapaxes(U, -1, -2))[..., None, :, :]
        Y = (U[..., None, :, :] @ B) @ UH
        return -k * np.einsum("aij,...aji->...", B, Y).real

    return Representation(group, "adjoint", group.dim, irreducible, matrix, algebra, character)


# -------------------------------------------------------------------------- spin
def _spin_fraction_name(j: Fraction) -> str:
    return f"spin:{j.numerator}/{j.denominator}" if j.denominator != 1 else f"spin:{j.numerator}"


def _spin(group, j: Fraction) -> Representation:
    m = int(2 * j)  # degree of the homogeneous polynomials
    dim = m + 1
    fact = np.array([math.factorial(p) * math.factorial(m - p) for p in range(dim)], float)
    norm = np.sqrt(fact)  # f_p = x^p y^(m-p) / norm[p]

    def matrix(U):
        # (pi(U) f)(x, y) = f((x, y) U): x -> a x + c y, y -> b x + d y.
        a, b = U[..., 0, 0], U[..., 0, 1]
        c, d = U[..., 1, 0], U[..., 1, 1]
        out = np.zeros(U.shape[:-2] + (dim, dim), complex)
        for p in range(dim):  # column: image of x^p y^(m-p)
            q = m - p
            for s in range(p + 1):  # x^s from (a x + c y)^p
                ps = math.comb(p, s) * a**s * c ** (p - s)
                for r in range(q + 1):  # x^r from (b x + d y)^q
                    term = ps * (math.comb(q, r) * b**r * d ** (q - r))
                    out[..., s + r, p] += term
        return out * (norm[:, None] / norm[None, :])

    def algebra(X):
        a, b = X[..., 0, 0], X[..., 0, 1]
        c, d = X[..., 1, 0], X[..., 1, 1]
        out = np.zeros(X.shape[:-2] + (dim, dim), complex)
        for p in range(dim):
            q = m - p
            # d/dt (x + t(a x + c y))^p (y + t(b x + d y))^q at t = 0.
            out[..., p, p] += p * a + q * d
            if p >= 1:
                out[..., p - 1, p] += p * c
            if q >= 1:
                out[..., p + 1, p] += q * b
        return out * (norm[:, None] / norm[None, :])

    def character(U):
        # chi_j = U_{2j}(cos theta) (Chebyshev polynomial of the second kind),
        # cos theta = tr(U)/2 (Georgi 1999, Ch. 3); three-term recurrence.
        x = 0.5 * np.trace(U, axis1=-2, axis2=-1).real
        prev, cur = np.zeros_like(x), np.ones_like(x)
        for _ in range(m):
            prev, cur = cur, 2 * x * cur - prev
        return cur

    return Representation(group, _spin_fraction_name(j), dim, True, matrix, algebra, character)


# ------------------------------------------------------------- by highest weight
def irreducible_representation(group, highest_weight) -> Representation:
    """The irreducible representation of ``group`` with the given highest weight, with
    its matrices (what the tensor route contracts).

    Available where the irreducibles have matrices: SU(2) and Sp(1) (``spin:j``, highest
    weight ``(2j, 0)`` resp. ``(2j,)`` in e-coordinates, :mod:`holonomy.groups._weights`);
    SO(3) (spin l, highest weight ``(l,)``): the spin-l matrices of su(2) at the
    element ``-i x . sigma / 2`` that corresponds to ``X = sum_a x_a L_a``,
    ``(L_a)_{bc} = -epsilon_{abc}`` (both bases satisfy ``[e_1, e_2] = e_3``); U(n) and
    SU(n) (any other n, highest weight ``m_1 >= ... >= m_n``): the Gelfand-Tsetlin basis,
    orthonormal, so that ``pi(E_ji) = pi(E_ij)^T`` and the group acts unitarily;
    ``pi(X) = sum_ij X_ij pi(E_ij)``. The trivial highest weight gives ``trivial`` for
    every group. Otherwise ArgumentError on ``rep``.

    References
    ----------
    .. [1] B. C. Hall, "Lie Groups, Lie Algebras, and Representations", 2nd ed., Springer,
       2015, Sections 4.6 and 1.2 (SU(2), SO(3) and the isomorphism su(2) = so(3)).
    .. [2] I. M. Gelfand and M. L. Tsetlin, "Finite-dimensional representations of the
       group of unimodular matrices", Dokl. Akad. Nauk SSSR 71 (1950) 825-828; A. I.
       Molev, "Gelfand-Tsetlin bases for classical Lie algebras", Handbook of Algebra 4
       (2006) 109-170, Theorem 2.3 (the matrix elements of E_{k,k+1}, E_{k+1,k}).
    """
    lam = tuple(int(x) for x in np.ravel(highest_weight))
    fam, n = group.family, group.n
    if fam == "SU" and n == 2 and len(lam) == 2 and lam[0] >= lam[1]:
        return _build(group, "spin", Fraction(lam[0] - lam[1], 2))
    if fam == "Sp" and n == 1 and len(lam) == 1 and lam[0] >= 0:
        return _build(group, "spin", Fraction(lam[0], 2))
    if fam == "SO" and n == 3 and len(lam) == 1 and lam[0] >= 0:
        return _so3_spin(group, lam[0])
    if fam in ("U", "SU") and len(lam) == n and all(a >= b for a, b in zip(lam, lam[1:])):
        return _gelfand_tsetlin(group, lam)
    if not any(lam):
        return make_representation(group, "trivial")
    raise ArgumentError(
        "rep", f"got the highest weight {lam} of {fam}({n}); matrices of irreducibles by "
        "highest weight exist for U(n), SU(n), Sp(1) and SO(3)")


def _so3_spin(group, l: int) -> Representation:
    spin = _spin(group, Fraction(l))
    sigma = np.array([[[0, 1], [1, 0]], [[0, -1j], [1j, 0]], [[1, 0], [0, -1]]])

    def algebra(X):
        X = np.asarray(X)
        x = np.stack([X[..., 2, 1], X[..., 0, 2], X[..., 1, 0]], axis=-1).real
        return spin._algebra(-0.5j * np.einsum("...a,aij->...ij", x, sigma))

    def character(U):
        # chi_l(theta) = sin((2l+1) theta/2) / sin(theta/2) = U_{2l}(cos(theta/2)),
        # cos(theta/2)^2 = (tr U + 1) / 4 (U_{2l} is even)
        c = np.sqrt(np.clip((np.trace(U, axis1=-2, axis2=-1).real + 1) / 4, 0, 1))
        prev, cur = np.zeros_like(c), np.ones_like(c)
        for _ in range(2 * l):
            prev, cur = cur, 2 * c * cur - prev
        return cur

    r = Representation(group, f"highest-weight:({l},)", 2 * l + 1, True,
                       _algebra=algebra, _character=character)
    object.__setattr__(r, "casimir", _scalar_casimir(r.casimir_operator()))
    return r


@lru_cache(maxsize=256)
def _gt_generators(top: tuple) -> tuple:
    """``pi(E_ij)`` (real, ``(n, n, d, d)``) of the gl(n) irreducible with highest weight
    ``top`` in the orthonormal Gelfand-Tsetlin basis.

    Patterns ``m_{ik}`` (row k has k entries, rows interlace); with ``l_ik = m_ik - i``
    (0-based i) the unnormalized basis has (Molev 2006, Theorem 2.3)
    ``E_{k,k+1} xi = -sum_i prod_j (l_ik - l_{j,k+1}) / prod_{j != i} (l_ik - l_jk) xi_{+i}``
    and ``E_{k+1,k} xi = sum_i prod_j (l_ik - l_{j,k-1}) / prod_{j != i} (l_ik - l_jk)
    xi_{-i}``; in the orthonormal basis each matrix element is the square root of the
    product of the raising and lowering coefficients between the two patterns, and
    ``E_{k+1,k}`` is the transpose of ``E_{k,k+1}``. The other ``E_ij`` follow by
    commutators. (The commutation relations are checked by the tests.)
    """
    n = len(top)
    pats = [(tuple(top),)]
    for _ in range(n - 1):
        pats = [p + (r,) for p in pats for r in itertools.product(
            *[range(p[-1][i + 1], p[-1][i] + 1) for i in range(len(p[-1]) - 1)])]
    index = {p: i for i, p in enumerate(pats)}
    d = len(pats)
    E = np.zeros((n, n, d, d))

    def row(p, k):  # the row with k entries (k = 0: empty)
        return p[n - k] if k else ()

    for p, a in index.items():
        for k in range(1, n + 1):
            E[k - 1, k - 1, a, a] = sum(row(p, k)) - sum(row(p, k - 1))
        for k in range(1, n):
            rk, up_row, down_row = row(p, k), row(p, k + 1), row(p, k - 1)
            for i in range(k):
                q = list(p)
                q[n - k] = tuple(m + (j == i) for j, m in enumerate(rk))
                b = index.get(tuple(q))
                if b is None:
                    continue
                qk = q[n - k]
                up = -math.prod(rk[i] - i - (up_row[j] - j) for j in range(k + 1)) / math.prod(
                    rk[i] - i - (rk[j] - j) for j in range(k) if j != i)
                down = math.prod(qk[i] - i - (down_row[j] - j) for j in range(k - 1)) / \
                    math.prod(qk[i] - i - (qk[j] - j) for j in range(k) if j != i)
                E[k - 1, k, b, a] = math.sqrt(up * down)
        # (E_{k+1,k} is set below as the transpose)
    for k in range(n - 1):
        E[k + 1, k] = E[k, k + 1].T
    for gap in range(2, n):
        for i in range(n - gap):
            j = i + gap
            E[i, j] = E[i, j - 1] @ E[j - 1, j] - E[j - 1, j] @ E[i, j - 1]
            E[j, i] = E[i, j].T
    E.setflags(write=False)
    return E


def _gelfand_tsetlin(group, lam: tuple) -> Representation:
    E = _gt_generators(tuple(int(x) for x in lam))
    n = len(lam)

    def algebra(X):
        return np.einsum("...ij,ijab->...ab", np.asarray(X)[..., :n, :n], E)

    r = Representation(group, f"highest-weight:{tuple(int(x) for x in lam)}", E.shape[-1],
                       True, _algebra=algebra)
    object.__setattr__(r, "casimir", _scalar_casimir(r.casimir_operator()))
    return r

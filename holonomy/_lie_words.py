"""Traces of words in formal Gaussian Lie-algebra elements (Wick contraction with the
Casimir tensor).

Let X_1, ..., X_d be an orthonormal basis of the Lie algebra for <X, Y> = -k Re tr(XY)
and A_e = sum_a eta_{e,a} X_a, e = 0..m-1, with formal Gaussian coefficients
E[eta_{e,a} eta_{f,b}] = C_ef delta_ab for any symmetric C (possibly indefinite or
symbolic). By the Wick rule,

    E[tr pi(A_{w_1} ... A_{w_n})] = sum_{pairings D} prod_{(p,q) in D} C_{w_p w_q} G(D),
    G(D) = sum_{a_1..a_n, a_p = a_q on chords} tr(pi(X_{a_1}) ... pi(X_{a_n})),

and G(D) contracts one Casimir tensor Omega = sum_a pi(X_a) (x) pi(X_a) per chord:
with matrix indices i_1..i_n (i_{n+1} = i_1), a chord (p, q) contributes
Omega[i_p, i_{p+1}, i_q, i_{q+1}].

For the defining representations the Casimir tensor is a combination of Kronecker deltas
(the completeness relations):

- u(N):  Omega_{ij,kl} = -(1/k) delta_il delta_jk
- su(N): Omega_{ij,kl} = -(1/k) (delta_il delta_jk - (1/N) delta_ij delta_kl)
- so(N): Omega_{ij,kl} = (1/(2k)) (delta_ik delta_jl - delta_il delta_jk)

so each choice of delta term per chord identifies matrix indices, and the sum over the
free indices is N^(number of classes). For u(N) only one term exists and the classes
are the cycles of the permutation gamma o sigma (gamma: p -> p + 1 cyclically, sigma
the pairing), which gives G(D) = (-1/k)^(n/2) N^(#cycles(gamma sigma)) as an exact
function of N.

References
----------
.. [1] L. Isserlis, Biometrika 12 (1918) 134-139; G. C. Wick, Phys. Rev. 80 (1950) 268
       (pairing rule).
.. [2] P. Cvitanovic, *Group Theory: Birdtracks, Lie's, and Exceptional Groups*,
       Princeton University Press (2008), ch. 9 (U(n), SU(n) completeness relation,
       eq. (9.x), from memory) and ch. 10 (SO(n)).
.. [3] T. Levy, "Schur-Weyl duality and the heat kernel measure on the unitary group",
       Adv. Math. 218 (2008) 537-575 (the u(N) Casimir tensor as a transposition;
       traces of permutations as powers of N).
"""

from __future__ import annotations

import itertools
import math
import numbers
from collections.abc import Iterator, Sequence
from fractions import Fraction
from functools import lru_cache
from typing import Any

import numpy as np
import sympy

from noise import FormalGaussian

from .groups import group_iv, rep_of

__all__ = [
    "perfect_matchings",
    "casimir_tensor",
    "pairing_group_factor",
    "pairing_group_factor_exact",
    "formal_word_trace",
    "formal_word_trace_exact",
]

_EXACT_FAMILIES = ("U", "SU", "SO")


def perfect_matchings(n: int) -> Iterator[tuple[int, ...]]:
    """All perfect pairings of positions 0..n-1, as partner tuples.

    ``partner[p] = q`` and ``partner[q] = p`` for each chord; (n - 1)!! of them for even
    n, none for odd n.
    """
    if n % 2:
        return

    def rec(partner: list[int]) -> Iterator[tuple[int, ...]]:
        try:
            first = partner.index(-1)
        except ValueError:
            yield tuple(partner)
            return
        for q in range(first + 1, n):
            if partner[q] == -1:
                partner[first], partner[q] = q, first
                yield from rec(partner)
                partner[first] = partner[q] = -1

    yield from rec([-1] * n)


def _rep_basis(group: Any, rep: Any) -> tuple[np.ndarray, int]:
    """Basis matrices pi(X_a), shape (d, D, D), and the dimension D."""
    group = group_iv(group)
    rep = rep_of(group, rep)
    try:
        B = np.asarray(rep.algebra_matrix(group.basis))
    except ValueError as exc:
        raise ValueError(f"`rep` must have Lie-algebra matrices (a representation, not "
                         f"a class function); got {rep.name!r}") from exc
    return B, int(rep.dim)


def casimir_tensor(group: Any, rep: Any = "fundamental") -> np.ndarray:
    """Omega[i, j, k, l] = sum_a pi(X_a)_ij pi(X_a)_kl, shape (D, D, D, D).

    References
    ----------
    .. [1] P. Cvitanovic, *Group Theory*, Princeton UP (2008), ch. 9-10.
    """
    B, _ = _rep_basis(group, rep)
    return np.einsum("aij,akl->ijkl", B, B)


def _chords(partner: Sequence[int]) -> list[tuple[int, int]]:
    return [(p, q) for p, q in enumerate(partner) if p < q]


_LETTERS = "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ"


def pairing_group_factor(omega: np.ndarray, partner: Sequence[int]) -> complex:
    """G(D) = sum over chord-constrained algebra indices of tr(pi(X_a1) ... pi(X_an)).

    Parameters
    ----------
    omega : ndarray (D, D, D, D)
        Casimir tensor from :func:`casimir_tensor`.
    partner : sequence of int
        A perfect pairing of 0..n-1 as a partner tuple.

    References
    ----------
    .. [1] G. C. Wick, Phys. Rev. 80 (1950) 268; Cvitanovic (2008), ch. 9.
    """
    n = len(partner)
    if n == 0:
        return complex(omega.shape[0])
    if n > len(_LETTERS):
        raise ValueError(f"`partner` must have at most {len(_LETTERS)} positions; got {n}")
    subs = []
    for p, q in _chords(partner):
        subs.append(_LETTERS[p] + _LETTERS[(p + 1) % n] + _LETTERS[q]
                    + _LETTERS[(q + 1) % n])
    expr = ",".join(subs) + "->"
    return complex(np.einsum(expr, *([omega] * len(subs)), optimize="greedy"))


def all_pairing_group_factors(basis: np.ndarray, n: int, start: np.ndarray | None = None
                              ) -> dict[tuple[int, ...], complex]:
    """G(D) for every perfect pairing D of n positions, sharing work between pairings.

    A depth-first walk over positions 0..n-1 keeps the partial product of basis
    matrices with one open algebra index per chord whose second end is still to come:
    opening multiplies by pi(X_a) and adds an axis, closing multiplies by pi(X_a) and
    sums that axis. Pairings with a common prefix share the work.

    Parameters
    ----------
    basis : ndarray (d, D, D)
        pi(X_a) for an orthonormal basis.
    n : int
        Number of positions (even).
    start : ndarray (D, D), optional
        A matrix P put in front of the word: ``tr(P pi(X_a1) ... pi(X_an))`` (default
        the identity). With pi a tensor power and P a cyclic permutation this is the
        trace of a power, ``tr(X^w) = tr(X^{(x)w} P)``.

    References
    ----------
    .. [1] G. C. Wick, Phys. Rev. 80 (1950) 268; Cvitanovic (2008), ch. 9.
    """
    B = np.asarray(basis)
    out: dict[tuple[int, ...], complex] = {}
    if n % 2:
        return out
    partner = [-1] * n
    D = B.shape[1]

    def rec(q: int, T: np.ndarray, open_list: list[int]) -> None:
        # T has shape (D, D, d, ..., d): one trailing axis per open chord
        if q == n:
            out[tuple(partner)] = complex(np.trace(T))
            return
        remaining = n - q
        if len(open_list) + 1 <= remaining - 1:  # a chord opened here can still close
            T2 = np.moveaxis(np.tensordot(T, B, axes=([1], [1])), -1, 1)
            rec(q + 1, T2, open_list + [q])
        for idx, p in enumerate(open_list):
            T2 = np.moveaxis(np.tensordot(T, B, axes=([1, 2 + idx], [1, 0])), -1, 1)
            partner[p], partner[q] = q, p
            rec(q + 1, T2, open_list[:idx] + open_list[idx + 1:])
            partner[p] = partner[q] = -1

    rec(0, np.eye(D, dtype=B.dtype) if start is None
        else np.asarray(start, dtype=np.result_type(B, start)), [])
    return out


def _delta_terms(family: str, N: Any, k: Any) -> list[tuple[Any, str]]:
    """Casimir tensor of the defining representation as (coefficient, pattern) terms.

    Patterns on the index quadruple (i, j, k, l): ``twist`` i=l, j=k; ``trace`` i=j,
    k=l; ``straight`` i=k, j=l. Cvitanovic (2008), ch. 9 and 10 (from memory; checked
    against the numeric bases in the tests).
    """
    if family == "U":
        return [(-1 / k, "twist")]
    if family == "SU":
        return [(-1 / k, "twist"), (1 / (k * N), "trace")]
    if family == "SO":
        return [(1 / (2 * k), "straight"), (-1 / (2 * k), "twist")]
    raise ValueError(f"`family` must be one of {_EXACT_FAMILIES} for exact group "
                     f"factors; got {family!r}")


def _classes(n: int, links: list[tuple[int, int]]) -> int:
    parent = list(range(n))

    def find(x: int) -> int:
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for a, b in links:
        ra, rb = find(a), find(b)
        if ra != rb:
            parent[ra] = rb
    return sum(1 for x in range(n) if find(x) == x)


def _chord_sum(n: int, chords, terms, N: Any, one: Any) -> Any:
    """sum over one delta term per chord of coeff * N^(#index classes).

    Each term identifies index slots (slot s = i_s, s mod n); ``one`` fixes the
    arithmetic (sympy Integer or Fraction).
    """
    total = one * 0
    for choice in itertools.product(range(len(terms)), repeat=len(chords)):
        coeff = one
        links = []
        for (p, q), t in zip(chords, choice):
            c, pattern = terms[t]
            coeff *= c
            i, j, kk, l = p, (p + 1) % n, q, (q + 1) % n
            if pattern == "twist":
                links += [(i, l), (j, kk)]
            elif pattern == "trace":
                links += [(i, j), (kk, l)]
            else:
                links += [(i, kk), (j, l)]
        total += coeff * N ** _classes(n, links)
    return total


@lru_cache(maxsize=None)
def _exact_factor_cached(family: str, partner: tuple[int, ...], N: Any, k: Any) -> Any:
    n = len(partner)
    if n == 0:
        return N
    total = _chord_sum(n, _chords(partner), _delta_terms(family, N, k), N, sympy.Integer(1))
    return sympy.factor(total) if total.free_symbols else total


@lru_cache(maxsize=None)
def _exact_factor_fraction(family: str, partner: tuple[int, ...], N: int,
                           k: Fraction) -> Fraction:
    """As :func:`_exact_factor_cached` for integer N and rational k, in Fractions."""
    n = len(partner)
    if n == 0:
        return Fraction(N)
    return _chord_sum(n, _chords(partner), _delta_terms(family, Fraction(N), k), N,
                      Fraction(1))


def pairing_group_factor_exact(family: str, partner: Sequence[int], *, n: Any = None,
                               k: Any = None) -> sympy.Expr:
    """Exact G(D) for the defining representation of U(N), SU(N) or SO(N).

    Parameters
    ----------
    family : {"U", "SU", "SO"}
    partner : sequence of int
        A perfect pairing of 0..n-1.
    n, k : number or sympy expression, optional
        Matrix size N and metric constant k; default the symbols ``N`` and ``k``, so the
        result is a rational function of N and k.

    Returns
    -------
    sympy.Expr

    Notes
    -----
    For U(N) this is (-1/k)^(n/2) N^(#cycles(gamma sigma)).

    References
    ----------
    .. [1] P. Cvitanovic, *Group Theory*, Princeton UP (2008), ch. 9 (U(n), SU(n)) and
           ch. 10 (SO(n)) completeness relations (from memory).
    .. [2] T. Levy, Adv. Math. 218 (2008) 537-575.
    """
    N = sympy.Symbol("N", positive=True) if n is None else sympy.sympify(n)
    kk = sympy.Symbol("k", positive=True) if k is None else sympy.sympify(k)
    partner = _partner_iv(partner)
    return _exact_factor_cached(family, partner, N, kk)


def _partner_iv(partner: Sequence[int]) -> tuple[int, ...]:
    partner = tuple(int(x) for x in partner)
    n = len(partner)
    if any(not 0 <= q < n or q == p or partner[q] != p for p, q in enumerate(partner)):
        raise ValueError(f"`partner` must be a perfect pairing of 0..{n - 1} "
                         f"(partner[partner[p]] == p != partner[p]); got {partner}")
    return partner


def _word_iv(word: Any, m: int) -> tuple[int, ...]:
    try:
        w = list(word)
    except TypeError as exc:
        raise ValueError(f"`word` must be a sequence of edge indices in [0, {m}); "
                         f"got {word!r}") from exc
    for e in w:
        if isinstance(e, (bool, np.bool_)) or not isinstance(e, numbers.Integral) \
                or not 0 <= int(e) < m:
            raise ValueError(f"`word` must be a sequence of edge indices in [0, {m}); "
                             f"got {e!r}")
    return tuple(int(e) for e in w)


def _real_if_close(z: complex, scale: float) -> float | complex:
    return z.real if abs(z.imag) <= 1e-12 * max(1.0, scale) else z


def formal_word_trace(group: Any, word: Sequence[int], cov: Any,
                      rep: Any = "fundamental") -> Any:
    """E[tr pi(A_{w_1} ... A_{w_n})] for formal Gaussian algebra elements.

    Parameters
    ----------
    group : Group
        From :func:`holonomy.groups.make_group`.
    word : sequence of int
        Edge indices w_1..w_n into ``cov``.
    cov : array_like or sympy.Matrix (m, m)
        Any symmetric covariance C: E[eta_{e,a} eta_{f,b}] = C_ef delta_ab.
    rep : str or Representation
        Representation pi (default the defining one).

    Returns
    -------
    float, complex or sympy expression
        The unnormalized trace. Odd n gives exactly 0 (true for any centred Gaussian).
        Exact or symbolic C gives a sympy expression with float group factors; use
        :func:`formal_word_trace_exact` for exact group factors.

    References
    ----------
    .. [1] L. Isserlis, Biometrika 12 (1918) 134-139; Cvitanovic (2008), ch. 9.
    """
    fg = FormalGaussian(cov)
    w = _word_iv(word, fg.m)
    omega = casimir_tensor(group, rep)
    n = len(w)
    if n == 0:
        return float(omega.shape[0])
    if n % 2:
        return sympy.Integer(0) if fg.exact else 0.0
    C = fg.cov
    acc: Any = 0
    scale = 0.0
    for partner in perfect_matchings(n):
        weight = math.prod((C[w[p], w[q]] for p, q in _chords(partner)), start=1)
        if weight == 0:
            continue
        G = pairing_group_factor(omega, partner)
        G = _real_if_close(G, abs(G))
        scale = max(scale, abs(G))
        acc = acc + weight * G
    if fg.exact:
        return sympy.expand(sympy.sympify(acc))
    return _real_if_close(complex(acc), scale)


def formal_word_trace_exact(family: str, word: Sequence[int], cov: Any, *,
                            n: Any = None, k: Any = None) -> sympy.Expr:
    """E[tr A_{w_1} ... A_{w_n}] in the defining representation, exact in N and k.

    Parameters
    ----------
    family : {"U", "SU", "SO"}
    word : sequence of int
    cov : array_like or sympy.Matrix (m, m)
        Symmetric; converted to exact sympy numbers (floats become sympy Floats).
    n, k : optional
        Matrix size and metric constant; default the symbols ``N`` and ``k``.

    Returns
    -------
    sympy.Expr
        A polynomial in the entries of C with coefficients rational in N and k.

    References
    ----------
    .. [1] P. Cvitanovic, *Group Theory*, Princeton UP (2008), ch. 9-10 (from memory).
    .. [2] T. Levy, Adv. Math. 218 (2008) 537-575.

    Examples
    --------
    >>> from holonomy import formal_word_trace_exact
    >>> formal_word_trace_exact("U", [0, 0], [[1]])          # tr sum_a X_a^2 = -N^2/k
    -N**2/k
    """
    if family not in _EXACT_FAMILIES:
        raise ValueError(f"`family` must be one of {_EXACT_FAMILIES}; got {family!r}")
    fg = FormalGaussian(cov)
    w = _word_iv(word, fg.m)
    C = fg.cov if fg.exact else sympy.Matrix(fg.cov.tolist())
    N = sympy.Symbol("N", positive=True) if n is None else sympy.sympify(n)
    kk = sympy.Symbol("k", positive=True) if k is None else sympy.sympify(k)
    if len(w) % 2:
        return sympy.Integer(0)
    acc = sympy.Integer(0)
    for partner in perfect_matchings(len(w)):
        weight = sympy.Integer(1)
        for p, q in _chords(partner):
            weight *= C[w[p], w[q]]
        if weight == 0:
            continue
        acc += weight * _exact_factor_cached(family, partner, N, kk)
    return sympy.expand(acc)

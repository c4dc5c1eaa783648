"""Perturbative series of E[tr pi(exp(A_1) ... exp(A_m))] for formal Gaussian algebra
elements, by dynamic programming over the ordered product.

Setting. A_e = sum_a eta_{e,a} X_a (e = 1..m) with E[eta_{e,a} eta_{f,b}] =
lambda C_ef delta_ab, C any symmetric matrix (indefinite and symbolic allowed: the
`linear` scheme's Wilson loop with a signed area density). Then

    E[tr pi(H)] / dim pi = sum_j c_j lambda^j,   H = exp(A_1) ... exp(A_m).

Method (exact). Expanding each exponential, the degree-2j part of H is the sum over
non-decreasing maps phi: {1..2j} -> {1..m} (positions to edges) of
prod_e 1/n_e(phi)! A_{phi(1)} ... A_{phi(2j)}, n_e the number of positions on edge e.
By the Wick rule each word's expectation is a sum over pairings D of the 2j positions
of prod_{(p,q) in D} C_{phi(p) phi(q)} times the group factor G(D) (see
:mod:`holonomy._lie_words`), which depends on D only. Hence

    c_j = (1 / dim) sum_D G(D) S(D),
    S(D) = sum_phi prod_e (1 / n_e!) prod_{(p,q) in D} C_{phi(p) phi(q)}.

All S(D) are computed together by a transfer over the edges. The state after edges
1..e is a *partial pairing* of the positions placed so far, some positions still open
(their partner comes later), together with a tensor with one axis per open position
indexed by the remaining edges f = e+1..m (entry: the covariance weight if that
position closes on edge f). Placing n positions on edge e (weight 1/n!) closes some
open positions (select index e on their axes), pairs some new positions among
themselves (factor C_ee each) and opens the rest (new axes carrying the row
C[e, e+1:]); then index e is dropped from every axis. States with p placed and r open
positions are kept only while p + r <= 2M. No word is enumerated: the work per edge is
the number of partial pairings of at most 2M points times (m - e)^r, independent of the
number of words (which grows like m^(2M)). The group factors G(D) are computed once per
complete pairing D (a depth-first contraction shared between pairings with a common
prefix). Cost: the number of partial pairings grows like (2M)!/..., so orders above 5
are practical only for a few edges; see benchmarks/bench_series.py.

Exact group factors: with the delta form of the Casimir tensor, G(D) (k N)^j for U(N),
SU(N) and G(D) (2k)^j for SO(N) are sums of signed powers of N, hence integers; they
are recovered exactly from the float contraction by rounding (checked), or summed
directly in Fractions.

Every operation is a sum of products of entries of C and the factors 1/n!, so the
coefficients are exact: rational (sympy Rational) when C is rational and the group
factors are exact (``exact=True``: the defining representation of U(N), SU(N), SO(N),
whose Casimir tensor is a combination of Kronecker deltas), polynomials in the symbols
for a symbolic C. With float C or float group factors the same arithmetic runs in
floating point. No numerical differentiation is used.

References
----------
.. [1] L. Isserlis, Biometrika 12 (1918) 134-139; G. C. Wick, Phys. Rev. 80 (1950) 268.
.. [2] P. Cvitanovic, *Group Theory*, Princeton UP (2008), ch. 9-10 (Casimir tensors).
.. [3] U. Haagerup and S. Thorbjornsen, "Random matrices with complex Gaussian
       entries", Expo. Math. 21 (2003) 293-337 (E[tr exp(X)] for a Gaussian Hermitian X:
       the Laguerre formula used in the tests).
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, field
from functools import lru_cache
from fractions import Fraction
from typing import Any

import numpy as np
import sympy

from noise import FormalGaussian

from ._lie_words import (
    _EXACT_FAMILIES,
    _exact_factor_fraction,
    all_pairing_group_factors,
    _rep_basis,
    pairing_group_factor,
)

__all__ = ["SeriesResult", "exp_product_series"]


@dataclass
class SeriesResult:
    """Coefficients c_0..c_M of E[tr pi(H)] / dim pi = sum_j c_j lambda^j.

    Attributes
    ----------
    coefficients : list
        c_0..c_M (floats/complex, or sympy numbers/expressions when exact).
    order : int
        M.
    rep : str
        Representation name.
    dim : int
        Dimension of the representation.
    exact : bool
        True when the coefficients are exact sympy values.
    diagrams : int
        Number of pairings D that were contracted.
    """

    coefficients: list
    order: int
    rep: str
    dim: int
    exact: bool
    diagrams: int = 0
    states: int = field(default=0, repr=False)

    def value(self, lam: Any, order: int | None = None) -> Any:
        """The series truncated at ``order`` (default M), evaluated at ``lam``."""
        M = self.order if order is None else order
        if not 0 <= M <= self.order:
            raise ValueError(f"`order` must be in [0, {self.order}]; got {order}")
        return sum(c * lam ** j for j, c in enumerate(self.coefficients[:M + 1]))

    def term(self, lam: Any, j: int) -> Any:
        """The single term c_j lam^j."""
        return self.coefficients[j] * lam ** j


def _to_exact(v: Any) -> Any:
    """A sympy value as a Fraction when rational (fast arithmetic), else itself."""
    v = sympy.sympify(v)
    if v.is_Rational:
        return Fraction(int(v.p), int(v.q))
    return v


def _exp_product_series_iv(group, cov, order, rep, exact):
    if isinstance(order, (bool, np.bool_)) or not isinstance(order, numbers.Integral) \
            or order < 0:
        raise ValueError(f"`order` must be a non-negative integer; got {order!r}")
    if not isinstance(exact, (bool, np.bool_)):
        raise ValueError(f"`exact` must be True or False; got {exact!r}")
    fg = FormalGaussian(cov)  # `cov` validation: square, symmetric, finite
    B, D = _rep_basis(group, rep)
    rep_name = rep if isinstance(rep, str) else rep.name
    rep_obj = group.rep(rep) if isinstance(rep, str) else rep
    if exact and not (rep_obj.name in ("fundamental", "defining")
                      and group.family in _EXACT_FAMILIES):
        raise ValueError(
            f"`exact` group factors are available for the defining representation of "
            f"{', '.join(_EXACT_FAMILIES)}; got rep {rep_obj.name!r} of "
            f"{group.family}({group.n})")
    m = fg.m
    c_exact = fg.exact
    if c_exact and not exact and not any(v.free_symbols for v in fg.cov):
        # numeric group factors: exact C entries would only slow the arithmetic down
        C = np.array(sympy.Matrix(fg.cov).evalf(), dtype=complex)
        C = C.real.copy() if not np.any(C.imag) else C
        c_exact = False
    elif c_exact:
        C = np.empty((m, m), dtype=object)
        for i in range(m):
            for j in range(m):
                C[i, j] = _to_exact(fg.cov[i, j])
    else:
        C = np.asarray(fg.cov)
    return C, int(order), rep_name, B, D, bool(exact), c_exact


def _block_fillings(p: int, open_pos: tuple[int, ...], n: int, max_total: int,
                    last: bool = False):
    """Ways to place n new positions p..p+n-1 on one edge.

    Yields ``(closed, new_partner, internal, new_open)``: ``closed`` the indices into
    ``open_pos`` that get closed, ``new_partner`` a dict of partner assignments,
    ``internal`` the number of chords inside the block, ``new_open`` the block positions
    left open (in order).
    """
    r = len(open_pos)
    assign: dict[int, int] = {}
    closed: list[int] = []
    block_open: list[int] = []
    state = {"internal": 0}

    def rec(q: int):
        if q == p + n:
            r_new = r - len(closed) + len(block_open)
            if p + n + r_new <= max_total:
                yield (tuple(sorted(closed)), dict(assign), state["internal"],
                       tuple(block_open))
            return
        # prune: open positions must still be closable within the budget (on the last
        # edge: within this block)
        n_open = r - len(closed) + len(block_open)
        if q + n_open > max_total or (last and n_open > p + n - q):
            return
        # close an original open position
        for i in range(r):
            if i not in closed:
                closed.append(i)
                assign[q] = open_pos[i]
                assign[open_pos[i]] = q
                yield from rec(q + 1)
                del assign[q], assign[open_pos[i]]
                closed.pop()
        # close a position opened earlier in this block (chord inside the edge)
        for b_i in range(len(block_open)):
            b = block_open.pop(b_i)
            assign[q], assign[b] = b, q
            state["internal"] += 1
            yield from rec(q + 1)
            state["internal"] -= 1
            del assign[q], assign[b]
            block_open.insert(b_i, b)
        # open a new chord
        block_open.append(q)
        yield from rec(q + 1)
        block_open.pop()

    yield from rec(p)


@lru_cache(maxsize=65536)
def _transitions(key: tuple[int, ...], max_total: int, last: bool) -> tuple:
    """All ways to place n >= 1 positions on the next edge from partial pairing ``key``.

    Returns tuples ``(n, closed, internal, u, new_key)``; they do not depend on the
    edge, so they are computed once per state. On the ``last`` edge only complete
    pairings are kept.
    """
    p = len(key)
    open_pos = tuple(i for i, q in enumerate(key) if q < 0)
    out = []
    for n in range(1, max_total - p + 1):
        for closed, assign, internal, new_open in _block_fillings(p, open_pos, n,
                                                                  max_total, last):
            if last and (len(new_open) or len(closed) < len(open_pos)):
                continue
            new_key = list(key) + [-1] * n
            for a, b in assign.items():
                new_key[a] = b
            out.append((n, closed, internal, len(new_open), tuple(new_key)))
    return tuple(out)


def _group_factors(B: np.ndarray, n: int, keys: list) -> dict:
    """G(D) for the pairings ``keys`` of n positions: shared depth-first contraction when
    the open-index tensors stay small, else one einsum per pairing."""
    d, D = B.shape[0], B.shape[1]
    if d ** (n // 2) * D * D <= 200_000:
        return all_pairing_group_factors(B, n)
    omega = np.einsum("aij,akl->ijkl", B, B)
    return {key: pairing_group_factor(omega, key) for key in keys}


def _exact_from_float(family: str, key: tuple[int, ...], G: float, N: int,
                      k: Fraction) -> Fraction:
    """Exact G(D) for the defining representation of U(N), SU(N), SO(N).

    Expanding the delta form of the Casimir tensor, G(D) (k N)^j (U, SU) and
    G(D) (2k)^j (SO) are sums of signed powers of N, hence integers; rounding the float
    value recovers them exactly when the rounding error is small, which is checked
    (otherwise the delta expansion is summed directly in Fractions).
    """
    j = len(key) // 2
    scale = (k * N) ** j if family in ("U", "SU") else (2 * k) ** j
    if isinstance(G, float):
        X = G * float(scale)
        r = round(X)
        if abs(X - r) <= 1e-6 * max(1.0, abs(X)) and abs(X - r) < 0.01:
            return Fraction(r) / scale
    return _exact_factor_fraction(family, key, N, k)


def exp_product_series(group: Any, cov: Any, order: int, *, rep: Any = "fundamental",
                       exact: bool = False) -> SeriesResult:
    """Series coefficients of E[tr pi(exp(A_1) ... exp(A_m))] / dim in the coupling.

    Parameters
    ----------
    group : Group
        From :func:`holonomy.groups.make_group`.
    cov : array_like or sympy.Matrix (m, m)
        Symmetric C; the coefficients of A_e have covariance lambda C_ef delta_ab.
        Indefinite, singular, rational and symbolic C are allowed.
    order : int
        M >= 0: coefficients c_0..c_M are returned.
    rep : str or Representation
        Representation pi (default the defining one).
    exact : bool
        Use exact group factors (defining representation of U(N), SU(N), SO(N)); with a
        rational C the coefficients are then sympy Rationals.

    Returns
    -------
    SeriesResult

    Notes
    -----
    The method and its exactness are described in the module docstring: Wick pairings
    of the expanded product, with the covariance sums S(D) of all pairings D computed
    together by a transfer over the edges whose state is a partial pairing plus a
    tensor over the edge labels of the open positions, and G(D) from the Casimir tensor.

    References
    ----------
    .. [1] L. Isserlis, Biometrika 12 (1918) 134-139; G. C. Wick, Phys. Rev. 80 (1950).
    .. [2] P. Cvitanovic, *Group Theory*, Princeton UP (2008), ch. 9-10.

    Examples
    --------
    >>> from holonomy.groups import make_group
    >>> from holonomy import exp_product_series
    >>> su2 = make_group("SU", 2, "physics")
    >>> exp_product_series(su2, [[1]], 2, exact=True).coefficients   # (1 - t/4) e^(-t/8)
    [1, -3/8, 5/128]
    """
    C, M, rep_name, B, D, exact, c_exact = _exp_product_series_iv(group, cov, order, rep,
                                                                  exact)
    m = C.shape[0]
    max_total = 2 * M
    dtype = object if c_exact else C.dtype
    one = Fraction(1) if c_exact else 1.0
    inv_fact = [Fraction(1, math.factorial(n)) if c_exact else 1.0 / math.factorial(n)
                for n in range(max_total + 1)]

    # state: partner tuple (-1 = open) -> tensor over labels of the open positions
    states: dict[tuple[int, ...], np.ndarray] = {(): np.array(one, dtype=dtype)}
    for e in range(m):
        # axes of every state index the edges e..m-1 at which an open position may close
        row = C[e, e + 1:]  # covariance of a position opened on edge e with later edges
        cee = C[e, e]
        last = e == m - 1  # on the last edge every position must be paired
        new_states: dict[tuple[int, ...], np.ndarray] = {}

        def add(k: tuple[int, ...], arr: Any) -> None:
            arr = np.asarray(arr, dtype=dtype)
            prev = new_states.get(k)
            new_states[k] = arr if prev is None else np.asarray(prev + arr, dtype=dtype)

        for key, T in states.items():
            r = T.ndim
            if not (last and r):
                add(key, T[(slice(1, None),) * r])  # no position on edge e
            for n, closed, internal, u, new_key in _transitions(key, max_total, last):
                # closing on edge e selects index 0 (edge e) of the closed axes
                idx = tuple(0 if ax in closed else slice(1, None) for ax in range(r))
                w = inv_fact[n] * cee ** internal if internal else inv_fact[n]
                out = np.asarray(T[idx], dtype=dtype) * w
                for _ in range(u):
                    out = np.multiply.outer(out, row)
                add(new_key, out)
        states = new_states

    # contract with group factors
    coeffs: list[Any] = [0] * (M + 1)
    complete: dict[int, dict[tuple[int, ...], Any]] = {}
    for key, T in states.items():
        if len(key) % 2 or any(q < 0 for q in key):
            continue
        s_val = np.asarray(T).item()
        if s_val != 0:
            complete.setdefault(len(key), {})[key] = s_val
    diagrams = 0
    kfrac = Fraction(str(sympy.nsimplify(group.k))) if exact else None
    for n, sums in complete.items():
        factors = _group_factors(B, n, list(sums))
        j = n // 2
        for key, s_val in sums.items():
            G = factors[key]
            G = G.real if abs(G.imag) <= 1e-12 * max(1.0, abs(G)) else G
            if exact:
                G = _exact_from_float(group.family, key, G, int(group.n), kfrac)
            coeffs[j] = coeffs[j] + G * s_val
            diagrams += 1
    if exact or c_exact:
        out_coeffs = [sympy.Rational(c.numerator, c.denominator) if isinstance(c, Fraction)
                      else sympy.sympify(c) for c in coeffs]
        out_coeffs = [sympy.expand(c / D) for c in out_coeffs]
    else:
        out_coeffs = [complex(c) / D if isinstance(c, complex) else float(c) / D
                      for c in coeffs]
    return SeriesResult(coefficients=out_coeffs, order=M, rep=rep_name, dim=D,
                        exact=exact or c_exact, diagrams=diagrams, states=len(states))

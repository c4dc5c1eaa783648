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
prefix).

Labels. When the exponents are sums of independent noises, ``A_e = sum_s U_es eta_s``
(`factor_product_series`; the interval noises of the lattice series), an open position
carries the label s of its noise instead of its closing edge, and only labels that
connect the past with the future of the current cut are kept on the axes (`_alive`).
In floating point all partial pairings with the same number of open positions are
stacked in one array and each group of transitions (same closed axes, same number of
new open positions) is one sparse matrix product over the pairings followed by shared
tensor contractions (`_transfer_batched`). A product repeated w times (a loop wound w
times) is expanded once, in the representation ``pi^{(x)w}``, traced against the cyclic
shift. Cost: the partial pairings of 2M points times L^r for r open positions and L
alive labels; see benchmarks/bench_series.py (order 6 of the README example: seconds).

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

import itertools
import math
import numbers
from dataclasses import dataclass, field
from functools import lru_cache
from fractions import Fraction
from typing import Any

import numpy as np
import sympy

from discretize import turns_iv
from noise import ArgumentError, ArgumentTypeError, FormalGaussian

from .groups import rep_of
from ._lie_words import (
    _EXACT_FAMILIES,
    _exact_factor_fraction,
    all_pairing_group_factors,
    _rep_basis,
    pairing_group_factor,
)

__all__ = ["SeriesResult", "exp_product_series", "factor_product_series",
           "group_factor_route", "MAX_GROUP_FACTOR_WORK", "MAX_SERIES_ORDER", "series_order_iv"]

#: the highest order of every series entry point (the ``series`` command's ``--order``
#: and the Python functions alike): the Wick routes' work grows like (2M - 1)!! and
#: the exact routes' Taylor terms like M times their exponents, so an order of 10**6
#: would not finish; 20 is far beyond what any coupling needs in double precision
MAX_SERIES_ORDER = 20


def series_order_iv(order: Any, name: str = "order") -> int:
    """``order`` as an int from 0 to :data:`MAX_SERIES_ORDER`: the one rule of every
    series entry point. Raises :class:`noise.ArgumentTypeError` (not an integer) or
    :class:`noise.ArgumentError` (out of range), argument ``name``."""
    rule = f"an integer from 0 to {MAX_SERIES_ORDER}"
    if isinstance(order, (bool, np.bool_)) or not isinstance(order, numbers.Integral):
        raise ArgumentTypeError(name, f"got {order!r}; expected {rule}",
                                f"`{name}` must be {rule}; got {order!r}.")
    if not 0 <= order <= MAX_SERIES_ORDER:
        raise ArgumentError(name, f"got {order!r}; expected {rule}",
                            f"`{name}` must be {rule}; got {order!r}.")
    return int(order)


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
    method : str or None
        How the coefficients were obtained (set by the routes that have several).
    asymptotic : bool
        True when the series is only asymptotic (the Wilson action's weak-coupling
        expansion misses terms like exp(-const / lambda)).
    """

    coefficients: list
    order: int
    rep: str
    dim: int
    exact: bool
    diagrams: int = 0
    states: int = field(default=0, repr=False)
    method: str | None = None
    asymptotic: bool = False

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
    order = series_order_iv(order)
    if not isinstance(exact, (bool, np.bool_)):
        raise ValueError(f"`exact` must be True or False; got {exact!r}")
    fg = FormalGaussian(cov)  # `cov` validation: square, symmetric, finite
    B, D = _rep_basis(group, rep)
    rep_obj = rep_of(group, rep)  # after _rep_basis's checks of group and rep
    rep_name = rep if isinstance(rep, str) else rep_obj.name
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


#: Work limit of the group factors G(D) of one order (`group_factor_route`): estimated
#: multiply-adds, about 10 s on one core (measured at order 4: the adjoint of SU(5),
#: 2.0e10, 9.6 s; of SO(7), 9.2e9, 6.3 s; the defining representation of U(32), whose
#: Casimir tensor alone is 1.5e11, took 240 s). Callers that must finish within a
#: budget check it first (`gaussian_matrix`: null with a size-limit note).
MAX_GROUP_FACTOR_WORK = 2.5e10
#: Elements of the shared route's open-index tensors (D^2 d^(n/2)) below which it is
#: always taken, and up to which it is taken when the einsum route is over the work limit
#: (64 MB of complex numbers).
_SHARED_SMALL = 200_000
_SHARED_MAX = 4_000_000


def group_factor_route(d: int, D: int, n: int, pairings: int) -> tuple[str, float]:
    """The route `_group_factors` takes for ``pairings`` pairings of ``n`` positions in a
    representation of dimension D of a group of dimension d, and its estimated work.

    ``("shared", elements)``: the depth-first contraction, whose open-index tensors have
    ``D^2 d^(n/2)`` elements (always within the work limit); ``("einsum", work)``: the
    Casimir tensor (``d D^4`` multiply-adds in numpy's unblocked einsum, weighted 150
    against blocked products: 75 s for the defining representation of U(32)) and one
    contraction of ``n/2`` of them per pairing, about ``D^(n/2 + 2)`` multiply-adds
    each (the cycle of n matrix indices cut at two places). The work limit is
    :data:`MAX_GROUP_FACTOR_WORK`.
    """
    shared = d ** (n // 2) * D * D
    work = float(pairings) * float(D) ** (n // 2 + 2) + 150.0 * float(d) * float(D) ** 4
    if shared <= _SHARED_SMALL or (work > MAX_GROUP_FACTOR_WORK and shared <= _SHARED_MAX):
        return "shared", float(shared)
    return "einsum", work


def _group_factors(B: np.ndarray, n: int, keys: list,
                   twist: np.ndarray | None = None) -> dict:
    """G(D) for the pairings ``keys`` of n positions: shared depth-first contraction when
    the open-index tensors stay small, else one einsum per pairing (`group_factor_route`).
    ``twist``: a matrix in front of the word (`all_pairing_group_factors`; the shared
    route only)."""
    d, D = B.shape[0], B.shape[1]
    if twist is not None or group_factor_route(d, D, n, len(keys))[0] == "shared":
        return all_pairing_group_factors(B, n, twist)
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
    # Labels = edges: a position opened on edge e carries the row C[e, :] and closes on
    # edge f with weight C[e, f] (closing vector = the unit vector of f).
    close = np.zeros((m, m), dtype=C.dtype)
    close[np.arange(m), np.arange(m)] = Fraction(1) if c_exact else 1.0
    states = _transfer(C, close, np.diagonal(C).copy(), M, c_exact)
    return _finish(group, states, M, rep_name, B, D, exact, c_exact)


def _alive(opening: np.ndarray, closing: np.ndarray) -> list[np.ndarray]:
    """Labels that can carry an open position across each cut.

    After edge e a label is alive if some edge <= e opens it (non-zero opening weight)
    and some edge > e closes it; only those can appear on an open position's axis.
    Entry ``e + 1`` of the list is the cut after edge e (entry 0: before edge 0).
    """
    m = opening.shape[0]
    opened = np.logical_or.accumulate(opening != 0, axis=0)
    closes = np.logical_or.accumulate((closing != 0)[::-1], axis=0)[::-1]
    later = np.zeros_like(closes)
    later[:-1] = closes[1:]
    return [np.zeros(0, dtype=int)] + [np.nonzero(opened[e] & later[e])[0]
                                       for e in range(m)]


def _transfer(opening: np.ndarray, closing: np.ndarray, diag: np.ndarray, M: int,
              c_exact: bool) -> dict:
    """The transfer over the edges: `_transfer_batched` in floating point, the per-state
    loop `_transfer_keys` for exact (object) arithmetic."""
    if c_exact:
        return _transfer_keys(opening, closing, diag, M, True)
    return _transfer_batched(opening, closing, diag, M)


def _transfer_keys(opening: np.ndarray, closing: np.ndarray, diag: np.ndarray, M: int,
                   c_exact: bool) -> dict:
    """The transfer over the edges (module docstring), with open positions carrying
    *labels* instead of edges.

    ``opening[e, s]`` is the weight of a position opened on edge e with label s,
    ``closing[f, s]`` the weight of closing it on edge f > e, so the covariance of two
    positions on edges e < f is ``sum_s opening[e, s] closing[f, s]``; ``diag[e]`` is
    ``C_ee`` (chords inside one edge). The axes of a state's tensor run over the labels
    alive at the current cut (`_alive`), so a tensor is only as large as the number of
    Gaussian directions that connect the past with the future: for the lattice series
    (labels = column intervals) that is the number of columns the loop still has to
    revisit, not the number of edges left. All-zero tensors are dropped.

    Returns the complete states: partner tuple -> covariance sum S(D).
    """
    m = opening.shape[0]
    max_total = 2 * M
    dtype = object if c_exact else np.result_type(opening.dtype, closing.dtype, float)
    one = Fraction(1) if c_exact else 1.0
    inv_fact = [Fraction(1, math.factorial(n)) if c_exact else 1.0 / math.factorial(n)
                for n in range(max_total + 1)]
    alive = _alive(opening, closing)

    states: dict[tuple[int, ...], np.ndarray] = {(): np.array(one, dtype=dtype)}
    for e in range(m):
        prev, cur = alive[e], alive[e + 1]
        kvec = np.asarray(closing[e, prev], dtype=dtype)
        ovec = np.asarray(opening[e, cur], dtype=dtype)
        # old axis position of each label alive after edge e (len(prev): new label)
        where = {int(s): i for i, s in enumerate(prev)}
        take = np.array([where.get(int(s), len(prev)) for s in cur], dtype=int)
        cee = diag[e]
        last = e == m - 1
        new_states: dict[tuple[int, ...], np.ndarray] = {}

        for key, T in states.items():
            r = T.ndim
            if not (last and r):
                moved = _reindex(T, take, c_exact)
                if moved is not None:
                    _add(new_states, key, moved, dtype)
            cache: dict[tuple[int, ...], Any] = {}
            for n, closed, internal, u, new_key in _transitions(key, max_total, last):
                base = cache.get(closed, False)
                if base is False:
                    out = T
                    for ax in sorted(closed, reverse=True):
                        out = np.tensordot(out, kvec, axes=([ax], [0]))
                    cache[closed] = base = _reindex(out, take, c_exact)
                if base is None or (u and not len(cur)):
                    continue
                w = inv_fact[n] * cee ** internal if internal else inv_fact[n]
                out = base * w
                for _ in range(u):
                    out = np.multiply.outer(out, ovec)
                _add(new_states, new_key, out, dtype)
        states = new_states
    return states


@lru_cache(maxsize=8)
def _key_graph(M: int):
    """All partial pairings reachable within order M, grouped for batched transfer.

    Returns ``(keys, groups)``: ``keys[r]`` lists the partial pairings with r open
    positions (row order of the stacks), and ``groups[last][(r, closed, u)]`` is a list
    of ``(r_new, rows_src, rows_dst, n, internal)`` arrays: the transitions that close
    the open axes ``closed`` of a state with r open positions and open u new ones:
    ``(r_new, rows, src, dst, n, internal)`` with ``rows`` the distinct destination
    rows and ``dst`` indices into ``rows``.
    """
    max_total = 2 * M
    keys: dict[int, list] = {}
    row: dict[tuple[int, ...], int] = {}
    todo = [()]
    seen = {()}
    while todo:
        key = todo.pop()
        for *_, new_key in _transitions(key, max_total, False):
            if new_key not in seen:
                seen.add(new_key)
                todo.append(new_key)
    for key in sorted(seen, key=lambda k: (len(k), k)):
        r = sum(1 for q in key if q < 0)
        row[key] = len(keys.setdefault(r, []))
        keys[r].append(key)
    groups: dict[bool, dict] = {}
    acc: dict[tuple, list] = {}
    for key in seen:
        r = sum(1 for q in key if q < 0)
        for n, closed, internal, u, new_key in _transitions(key, max_total, False):
            r_new = r - len(closed) + u
            acc.setdefault((r, closed, u), []).append(
                (row[key], row[new_key], n, internal, r_new))
    # on the last edge every open position must close and none may open: the
    # transitions that end complete (what _transitions(..., last=True) enumerates)
    acc_last = {g: v for g, v in acc.items() if g[2] == 0 and len(g[1]) == g[0]}
    for last, table in ((False, acc), (True, acc_last)):
        groups[last] = {}
        for g, v in table.items():
            src, dst, n, internal = (np.array([t[i] for t in v], dtype=np.int64)
                                     for i in range(4))
            rows, inv = np.unique(dst, return_inverse=True)
            groups[last][g] = (v[0][4], rows, src, inv.ravel(), n, internal)
    return keys, groups


def _transfer_batched(opening: np.ndarray, closing: np.ndarray, diag: np.ndarray,
                      M: int) -> dict:
    """`_transfer_keys` in floating point with the states stacked by their number of
    open positions.

    All partial pairings with r open positions share one array of shape
    ``(keys, L, ..., L)`` (r label axes, L labels alive at the cut). A transition group
    (same closed axes, same number u of new open positions) acts on the label axes in
    the same way for every key, and linearly on the key axis, so the key-to-key part is
    one sparse matrix product (weights ``C_ee^internal / n!``), applied first so the
    label operations run on the destination rows only. The Python work per edge is the
    number of transition groups (a few hundred), not the number of transitions.
    """
    import scipy.sparse as sp

    m = opening.shape[0]
    keys, groups = _key_graph(M)
    dtype = np.result_type(opening.dtype, closing.dtype, float)
    inv_fact = np.array([1.0 / math.factorial(n) for n in range(2 * M + 1)])
    alive = _alive(opening, closing)
    stacks: dict[int, np.ndarray] = {r: np.zeros((len(ks),), dtype) for r, ks in keys.items()
                                     if r == 0}
    stacks[0][0] = 1.0  # the empty pairing
    for e in range(m):
        prev, cur = alive[e], alive[e + 1]
        Lc = len(cur)
        kvec = np.asarray(closing[e, prev], dtype=dtype)
        ovec = np.asarray(opening[e, cur], dtype=dtype)
        where = {int(s): i for i, s in enumerate(prev)}
        take = np.array([where.get(int(s), len(prev)) for s in cur], dtype=int)
        same = len(prev) == Lc and bool(np.all(take == np.arange(Lc)))
        cee = diag[e]
        last = e == m - 1

        def relabel(Y: np.ndarray) -> np.ndarray:
            """Label axes 1.. over ``prev`` -> over ``cur`` (zero for new labels)."""
            if same or Y.ndim == 1:
                return Y
            for ax in range(1, Y.ndim):
                pad = [(0, 0)] * Y.ndim
                pad[ax] = (0, 1)
                Y = np.take(np.pad(Y, pad), take, axis=ax)
            return Y

        new: dict[int, np.ndarray] = {}

        def add(r: int, rows, Y: np.ndarray) -> None:
            if r not in new:
                new[r] = np.zeros((len(keys[r]),) + (Lc,) * r, dtype)
            if rows is None:
                new[r] += Y
            else:
                new[r][rows] += Y  # rows are distinct

        for r, S in stacks.items():
            if not S.any():
                continue
            # contractions of the closed axes, shared between subsets: the subset c is
            # the subset without its smallest axis a, then axis a contracted (larger
            # axes are gone already, so a keeps its index)
            contracted: dict[tuple[int, ...], np.ndarray] = {(): S}
            relabelled: dict[tuple[int, ...], np.ndarray] = {}

            def part(c: tuple[int, ...]) -> np.ndarray:
                if c not in contracted:
                    contracted[c] = np.tensordot(part(c[1:]), kvec, axes=([1 + c[0]], [0]))
                return contracted[c]

            if not (last and r) and (r == 0 or Lc):
                relabelled[()] = relabel(S)
                add(r, None, relabelled[()])
            for (r0, closed, u), (r_new, rows, src, dst, n, internal) in groups[last].items():
                if r0 != r or (r_new and not Lc):
                    continue
                c = tuple(sorted(closed))
                if c not in relabelled:
                    relabelled[c] = relabel(part(c))
                R = relabelled[c]
                w = inv_fact[n] * (cee ** internal if np.any(internal) else 1.0)
                W = sp.csr_matrix((w.astype(dtype), (dst, src)), shape=(len(rows), S.shape[0]))
                Y = np.asarray(W @ R.reshape(R.shape[0], -1)).reshape((len(rows),) + R.shape[1:])
                for _ in range(u):
                    Y = Y[..., None] * ovec
                add(r_new, rows, Y)
        stacks = new
    out: dict[tuple[int, ...], Any] = {}
    if 0 in stacks:
        for key, v in zip(keys[0], stacks[0]):
            if v != 0:
                out[key] = v
    return out


def _reindex(T: np.ndarray, take: np.ndarray, c_exact: bool) -> np.ndarray | None:
    """Axes over the labels of the previous cut -> axes over the current ones.

    ``take[i]`` is the old position of the i-th current label, or ``len(old)`` for a
    label first opened on this edge (zero there). None when the result is all zero.
    """
    r = T.ndim
    if r == 0:
        return T
    if not len(take):
        return None
    if c_exact:
        padded = np.empty(tuple(n + 1 for n in T.shape), dtype=object)
        padded[...] = Fraction(0)
        padded[tuple(slice(0, n) for n in T.shape)] = T
    else:
        padded = np.pad(T, [(0, 1)] * r)
    out = padded[np.ix_(*([take] * r))]
    return out if out.any() else None


def _add(new_states: dict, k: tuple[int, ...], arr: Any, dtype) -> None:
    arr = np.asarray(arr, dtype=dtype)
    prev = new_states.get(k)
    new_states[k] = arr if prev is None else np.asarray(prev + arr, dtype=dtype)


def _finish(group, states, M, rep_name, B, D, exact, c_exact, twist=None) -> SeriesResult:
    """Contract the complete states' covariance sums with the group factors."""
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
        # exact factors over the work limit: summed in Fractions from the delta form
        # (the value the floats are rounded to), skipping the float contraction
        route, work = group_factor_route(B.shape[0], D, n, len(sums))
        direct = (exact and twist is None and route == "einsum"
                  and work > MAX_GROUP_FACTOR_WORK)
        factors = None if direct else _group_factors(B, n, list(sums), twist)
        j = n // 2
        for key, s_val in sums.items():
            if direct:
                G = _exact_factor_fraction(group.family, key, int(group.n), kfrac)
                coeffs[j] = coeffs[j] + G * s_val
                diagrams += 1
                continue
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


def _power_basis(B: np.ndarray, w: int) -> tuple[np.ndarray, np.ndarray]:
    """pi^{(x)w}(X_a) = sum_i 1 (x) .. pi(X_a) (at i) .. (x) 1, and the cyclic shift P
    with ``tr(X^{(x)w} P) = tr(X^w)``."""
    d, D = B.shape[0], B.shape[1]
    eye = np.eye(D)
    out = np.zeros((d, D ** w, D ** w), dtype=B.dtype)
    for i in range(w):
        for a in range(d):
            f = [eye] * w
            f[i] = B[a]
            term = f[0]
            for g in f[1:]:
                term = np.kron(term, g)
            out[a] += term
    # P maps e_{i1} (x) ... (x) e_{iw} to e_{iw} (x) e_{i1} (x) ... (x) e_{i(w-1)}
    P = np.zeros((D ** w, D ** w))
    for multi in itertools.product(range(D), repeat=w):
        P[np.ravel_multi_index((multi[-1],) + multi[:-1], (D,) * w),
          np.ravel_multi_index(multi, (D,) * w)] = 1.0
    return out, P


def factor_product_series(group: Any, loadings: Any, variances: Any, order: int, *,
                          rep: Any = "fundamental", exact: bool = False,
                          turns: int = 1) -> SeriesResult:
    """Series of E[tr pi(exp(A_1) ... exp(A_m))] / dim for ``A_e = sum_s U_es eta_s``.

    The eta_s are independent Gaussian algebra elements with variance ``lambda mu_s``
    per component, so ``C = U diag(mu) U^T``. Same coefficients as
    ``exp_product_series(group, C, order)``, but the transfer's open positions carry a
    label s instead of an edge (`_transfer`): when each eta_s appears on few edges (the
    interval noises of the ``linear`` scheme, the cell noises of ``gauss``) the tensors
    stay small and the cost no longer grows like ``m^(open positions)``.

    Parameters
    ----------
    group : Group
    loadings : array_like (m, S)
        U; entries are usually 0 and +-1.
    variances : array_like (S,)
        mu (signed values give formal series; sympy Rationals or symbols allowed).
    order : int
    rep : str or Representation
    exact : bool
        As for `exp_product_series`.
    turns : int
        The product is repeated `turns` times, ``H = (exp(A_1) ... exp(A_m))^turns``
        (the same noises each time: a loop traversed several times). In floating point
        this is computed as ``tr(pi(G)^{(x)w} P) = tr(pi(G)^w)`` with P the cyclic shift
        of the w tensor factors: m edges in the representation ``pi^{(x)w}`` instead of
        w m edges, which keeps the transfer's tensors small (for a loop wound twice the
        Gaussian directions alive at a cut halve).

    Returns
    -------
    SeriesResult

    References
    ----------
    .. [1] L. Isserlis, Biometrika 12 (1918) 134-139; G. C. Wick, Phys. Rev. 80 (1950).
    """
    w = turns_iv(turns)
    U = np.asarray(loadings)
    mu = np.asarray(variances, dtype=object if np.asarray(variances).dtype == object
                    else None)
    if U.ndim != 2 or mu.shape != (U.shape[1],):
        raise ValueError(f"`loadings` must be (m, S) and `variances` (S,); got shapes "
                         f"{U.shape} and {mu.shape}.")
    if U.shape[0] == 0:
        U, mu = np.zeros((1, 1)), np.zeros(1)
    # C is only used for validation, the exact/float decision and its diagonal
    if mu.dtype == object:
        # float loadings (+-1, 0) are exact binary numbers: keep them rational
        Um = sympy.Matrix(U.shape[0], U.shape[1],
                          lambda i, j: sympy.Rational(Fraction(U[i, j]).numerator,
                                                      Fraction(U[i, j]).denominator)
                          if isinstance(U[i, j], (float, np.floating)) else U[i, j])
        cov = Um * sympy.diag(*mu.tolist()) * Um.T
    else:
        cov = (U * mu) @ U.T
    C, M, rep_name, B, D, exact, c_exact = _exp_product_series_iv(group, cov, order, rep,
                                                                  exact)
    if w > 1 and (exact or c_exact or D ** w > 64):
        # the tensor-power route needs float group factors of a small pi^{(x)w}: else
        # the product is written out w times
        return factor_product_series(group, np.concatenate([U] * w, axis=0), variances,
                                     order, rep=rep, exact=exact)
    if c_exact:
        conv = np.vectorize(_to_exact, otypes=[object])
        # float loadings (+-1, 0) are exact binary numbers: keep them rational
        Ux = np.vectorize(lambda v: Fraction(v) if isinstance(v, float) else _to_exact(v),
                          otypes=[object])(U.astype(object))
        opening = Ux * conv(mu.astype(object))[None, :]
        closing = Ux
    else:
        opening = (U * np.asarray(mu, dtype=C.dtype)).astype(C.dtype)
        closing = U.astype(C.dtype)
    twist = None
    if w > 1:
        B, twist = _power_basis(B, w)
        B = B.astype(complex)
    states = _transfer(opening, closing, np.diagonal(C).copy(), M, c_exact)
    return _finish(group, states, M, rep_name, B, D, exact, c_exact, twist)

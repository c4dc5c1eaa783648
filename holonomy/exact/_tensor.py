"""Moments of the heat kernel on tensor powers and their contraction along a word.

For a Brownian motion ``V_t`` on a compact matrix group (``dV = V o dB``, Casimir
normalization of README.md, "Conventions") and ``rho = pi^{(x)p} (x) conj(pi)^{(x)q}``,

    E[rho(V_t)] = exp(t L_{p,q}),   L_{p,q} = 1/2 sum_a rho(X_a)^2,
    rho(X_a) = sum_i X_a^{(i)}   (conj(X_a) on the conjugate factors),

because ``rho(V_t)`` solves a linear SDE whose generator on matrix coefficients is
``1/2 sum_a rho(X_a)^2`` [1]_ [2]_. ``L_{p,q}`` is Hermitian and only involves the
Casimir tensor ``K = sum_a X_a (x) X_a`` (basis independent). For U(N), SU(N), SO(N) and
Sp(n) with a rational metric constant k the entries of ``L`` are rational and so are its
eigenvalues (minus half the Casimir values of the irreducible pieces of ``rho``), so
``exp(t L) = sum_mu exp(t mu) P_mu`` with exact rational spectral projectors ``P_mu``.

The expectation of the trace of a word is the contraction of these tensors: letter
``k`` of the word carries matrix indices ``(i_k, i_{k+1})`` (cyclically); a letter
``X_f`` is a factor ``V_f[i_k, i_{k+1}]`` and ``X_f^{-1} = V_f^*`` a factor
``conj(V_f)[i_{k+1}, i_k]``.

References
----------
.. [1] T. Levy, "Schur-Weyl duality and the heat kernel measure on the unitary group",
   Adv. Math. 218 (2008), 537-575, sec. 2-3.
.. [2] E. M. Rains, "Combinatorial properties of Brownian motion on the compact
   classical groups", J. Theoret. Probab. 10 (1997), 659-679.
"""

from __future__ import annotations

from fractions import Fraction
from functools import lru_cache
from itertools import product

import numpy as np

from ._laws import law_character

__all__ = [
    "casimir_tensor",
    "tensor_generator",
    "contraction_labels",
    "contract_numeric",
    "contract_exact",
    "contract_mixed",
]


def casimir_tensor(basis: np.ndarray) -> np.ndarray:
    """``K[i, j, k, l] = sum_a X_a[i, j] X_a[k, l]`` for an orthonormal basis ``X_a``."""
    return np.einsum("aij,akl->ijkl", basis, basis)


def tensor_generator(basis: np.ndarray, p: int, q: int) -> np.ndarray:
    """The generator ``L_{p,q}`` as a dense ``(N^{p+q}, N^{p+q})`` matrix.

    Factors ``0 .. p-1`` carry ``pi``, factors ``p .. p+q-1`` carry ``conj(pi)``;
    Kronecker order (factor 0 most significant).
    """
    N = basis.shape[-1]
    n = p + q
    D = N**n
    mats = [basis if i < p else basis.conj() for i in range(n)]
    L = np.zeros((N,) * (2 * n), dtype=complex)
    eye = np.eye(N)
    # one-factor terms: 1/2 C^{(i)} with C = sum_a X_a X_a
    for i in range(n):
        C = np.einsum("aij,ajk->ik", mats[i], mats[i])
        L += 0.5 * _embed([C], [i], n, eye)
    # two-factor terms: sum_a X_a^{(i)} X_a^{(j)}
    for i in range(n):
        for j in range(i + 1, n):
            K = np.einsum("aij,akl->ikjl", mats[i], mats[j]).reshape(N * N, N * N)
            L += _embed_pair(K, i, j, n, N)
    L = L.reshape(D, D)
    if np.abs(L.imag).max() < 1e-13:
        L = L.real.copy()
    return L


def _embed(mats, axes, n, eye):
    """Kronecker product with ``mats[k]`` on factor ``axes[k]`` and Id elsewhere."""
    out = np.ones(())
    for i in range(n):
        m = mats[axes.index(i)] if i in axes else eye
        out = np.kron(out, m) if out.ndim else m
    N = eye.shape[0]
    return out.reshape((N,) * (2 * n))


def _embed_pair(K, i, j, n, N):
    """Operator ``K`` on factors (i, j) (rows (i j), cols (i j)), Id elsewhere."""
    rest = N ** (n - 2)
    full = np.kron(K, np.eye(rest)).reshape((N,) * (2 * n))
    # current factor order: i, j, then the others ascending; move back to 0..n-1
    order = [i, j] + [k for k in range(n) if k not in (i, j)]
    perm = np.argsort(order)
    return full.transpose(list(perm) + [n + x for x in perm])


def _as_words(word_or_words):
    """A word (ints) or a sequence of words -> tuple of words."""
    w = tuple(word_or_words)
    if w and not isinstance(w[0], (int, np.integer)):
        return tuple(tuple(x) for x in w)
    return (w,)


def contraction_labels(word_or_words):
    """Group the letters of a word (or of several words, one trace each) by variable
    and give einsum labels.

    Returns ``{f: (p, q, labels)}`` where ``labels`` lists the ``2 (p + q)`` index
    labels of ``E[V_f^{(x)p} (x) conj(V_f)^{(x)q}]`` (rows then columns).
    """
    groups: dict[int, tuple[list, list, list, list]] = {}
    base = 0
    for word in _as_words(word_or_words):
        n = len(word)
        for k, x in enumerate(word):
            f = abs(x)
            pr, pc, qr, qc = groups.setdefault(f, ([], [], [], []))
            if x > 0:  # V[i_k, i_{k+1}]
                pr.append(base + k)
                pc.append(base + (k + 1) % n)
            else:  # (V^{-1})[i_k, i_{k+1}] = conj(V)[i_{k+1}, i_k]
                qr.append(base + (k + 1) % n)
                qc.append(base + k)
        base += n
    return {
        f: (len(pr), len(qr), pr + qr + pc + qc) for f, (pr, pc, qr, qc) in groups.items()
    }


@lru_cache(maxsize=64)
def _eigh_cached(key, p, q):
    basis = _BASES[key]
    L = tensor_generator(basis, p, q)
    mu, Q = np.linalg.eigh(L)
    return mu, Q


_BASES: dict = {}


def _basis_key(basis: np.ndarray):
    key = (basis.shape, basis.tobytes())
    _BASES.setdefault(key, basis)
    return key


def _law_spectrum(law, mu):
    """``w_sigma`` on each eigenvalue ``mu = -c_sigma / 2`` of ``L_{p,q}``."""

    if not hasattr(law, "character"):
        t = complex(law)
        # mu <= 0 in exact arithmetic; the trivial components' 0 comes out of eigh as
        # about +-1e-16, which a long time turns into a wrong weight exp(t mu) (or an
        # overflow): snap those eigenvalues to 0 where that rounding would show (|t mu|
        # above 1e-13, times beyond about 1e3), keeping shorter times' arithmetic as is
        zero = np.abs(mu) <= 1e-12 * (1.0 + np.abs(mu).max(initial=0.0))
        if zero.any() and abs(t) * np.abs(mu[zero]).max() > 1e-13:
            mu = np.where(zero, 0.0, mu)
        with np.errstate(over="ignore", under="ignore", invalid="ignore"):
            # a formal (negative) time beyond the double range overflows: the caller
            # reports the non-finite value with a note
            return np.exp(t * mu)
    out = np.empty(len(mu), dtype=complex)
    cache: dict = {}
    for i, m in enumerate(mu):
        key = round(float(m), 8)
        if key not in cache:
            cache[key] = law_character(law, -2.0 * float(m))
        out[i] = cache[key]
    return out


def contract_numeric(basis: np.ndarray, word, times) -> complex:
    """``E[tr word]`` (unnormalized) for independent conjugation-invariant variables;
    for several words, ``E[prod_i tr word_i]``.

    ``times[f - 1]`` is the (real or complex) heat-kernel time of variable ``f``, or its
    law (:class:`holonomy.exact.WilsonLaw`).
    """
    N = basis.shape[-1]
    words = _as_words(word)
    empty = sum(1 for w in words if len(w) == 0)
    words = tuple(w for w in words if len(w))
    if not words:
        return complex(N) ** empty
    key = _basis_key(basis)
    operands = []
    for f, (p, q, labels) in contraction_labels(words).items():
        mu, Q = _eigh_cached(key, p, q)
        M = (Q * _law_spectrum(times[f - 1], mu)) @ Q.conj().T
        operands += [M.reshape((N,) * (2 * (p + q))), labels]
    return complex(np.einsum(*operands, [], optimize="greedy")) * complex(N) ** empty


def _rational_matrix(A: np.ndarray, what: str):
    """Exact rationals from a float matrix known to be rational (checked)."""
    out = np.empty(A.shape, dtype=object)
    for idx, x in np.ndenumerate(A):
        fr = Fraction(float(x)).limit_denominator(10**6)
        if abs(float(fr) - float(x)) > 1e-11:
            raise ValueError(
                f"the exact route needs a rational {what}; entry {x!r} is not a "
                "small rational (use a rational metric constant, or exact=False)."
            )
        out[idx] = fr
    return out


@lru_cache(maxsize=64)
def _spectral_cached(key, p, q):
    """Exact eigenvalues and spectral projectors of L_{p,q}: ((mu, P_mu), ...)."""
    import sympy
    from sympy.polys.matrices import DomainMatrix

    basis = _BASES[key]
    L = tensor_generator(basis, p, q)
    if np.iscomplexobj(L):
        raise ValueError(
            "the exact route needs a real Casimir tensor; this basis gives a complex "
            "generator (use exact=False)."
        )
    mu_num = np.linalg.eigvalsh(L)
    mus = sorted({Fraction(float(m)).limit_denominator(10**6) for m in mu_num})
    # merge numerically equal eigenvalues (rounding)
    distinct: list[Fraction] = []
    for m in mus:
        if not distinct or abs(float(m) - float(distinct[-1])) > 1e-8:
            distinct.append(m)
    D = L.shape[0]
    QQ = sympy.QQ
    Lr = _rational_matrix(L, "generator")
    Ld = DomainMatrix([[QQ(x.numerator, x.denominator) for x in row] for row in Lr], (D, D), QQ)
    I = DomainMatrix.eye(D, QQ)
    factors = {m: Ld - I * QQ(m.numerator, m.denominator) for m in distinct}
    # check the minimal polynomial: prod (L - mu) == 0 exactly
    prod_all = I
    for m in distinct:
        prod_all = prod_all * factors[m]
    if not prod_all.is_zero_matrix:
        raise ValueError(
            "the exact route needs a generator with rational eigenvalues; this group and "
            "metric do not give one (use exact=False)."
        )
    out = []
    for m in distinct:
        P = I
        for v in distinct:
            if v != m:
                P = P * factors[v] * QQ((m - v).denominator, (m - v).numerator)
        rows = P.to_Matrix().tolist()
        arr = np.array([[Fraction(int(x.p), int(x.q)) for x in row] for row in rows], dtype=object)
        out.append((m, arr))
    return tuple(out)


def contract_exact(basis: np.ndarray, word, times):
    """Exact ``E[tr word]`` (unnormalized) as a sympy expression.

    ``times`` are sympy expressions; the result is
    ``sum over (mu_f) of c * exp(sum_f mu_f t_f)`` with rational ``c``.
    """
    import sympy

    N = basis.shape[-1]
    if len(word) == 0:
        return sympy.Integer(N)
    key = _basis_key(basis)
    groups = contraction_labels(word)
    specs = []
    for f, (p, q, labels) in groups.items():
        specs.append((f, labels, p + q, _spectral_cached(key, p, q)))
    total = sympy.Integer(0)
    for choice in product(*[range(len(s[3])) for s in specs]):
        operands, exponent = [], sympy.Integer(0)
        for (f, labels, n, spec), c in zip(specs, choice):
            m, P = spec[c]
            operands += [P.reshape((N,) * (2 * n)), labels]
            exponent += sympy.Rational(m.numerator, m.denominator) * times[f - 1]
        # a 0-d object array from the optimized path: unwrap to the Fraction
        coeff = np.asarray(np.einsum(*operands, [], optimize="greedy"), dtype=object)
        coeff = Fraction(coeff.reshape(()).item())
        if coeff != 0:
            total += sympy.Rational(coeff.numerator, coeff.denominator) * sympy.exp(exponent)
    return total


def contract_mixed(algebras, words, times) -> complex:
    """``E[prod_i tr rho_i(word_i)]`` (unnormalized) with each word in its own
    representation ``rho_i``, for independent conjugation-invariant variables.

    The moment tensor of a variable met in several representations is
    ``E[(x)_k rho_k(V)] = exp(t L)``, ``L = 1/2 sum_a (sum_k rho_k(X_a)^{(k)})^2`` over
    the factors k where it occurs (``conj(rho_k)`` on the inverse letters), built from
    the representations' own algebra matrices [1]_ [2]_.

    Parameters
    ----------
    algebras : sequence of ndarray (n_basis, d_i, d_i)
        ``rho_i(X_a)`` for an orthonormal basis ``X_a``, one per word.
    words : sequence of tuple of int
    times : sequence
        ``times[f - 1]``: heat-kernel time (or law) of variable f.
    """
    words = [tuple(int(x) for x in w) for w in words]
    algebras = [np.asarray(a) for a in algebras]
    factors: dict[int, list] = {}
    base = 0
    empty = 1.0 + 0j
    for w, alg in zip(words, algebras):
        n, d = len(w), alg.shape[-1]
        if n == 0:
            empty *= d
            continue
        for k, x in enumerate(w):
            row, col = (base + k, base + (k + 1) % n) if x > 0 else (base + (k + 1) % n, base + k)
            factors.setdefault(abs(x), []).append((alg if x > 0 else alg.conj(), row, col))
        base += n
    operands = []
    for f, fs in factors.items():
        ds = [a.shape[-1] for a, _, _ in fs]
        D = int(np.prod(ds))
        rho = np.zeros((fs[0][0].shape[0], D, D), dtype=complex)
        for i, (a, _, _) in enumerate(fs):
            left, right = int(np.prod(ds[:i])), int(np.prod(ds[i + 1:]))
            rho += np.einsum("ij,bkl,mn->bikmjln", np.eye(left), a, np.eye(right)).reshape(-1, D, D)
        L = 0.5 * np.einsum("bij,bjk->ik", rho, rho)
        mu, Q = np.linalg.eigh(0.5 * (L + L.conj().T))
        M = (Q * _law_spectrum(times[f - 1], mu)) @ Q.conj().T
        operands += [M.reshape(tuple(ds) * 2), [r for _, r, _ in fs] + [c for _, _, c in fs]]
    if not operands:
        return empty
    return complex(np.einsum(*operands, [], optimize="greedy")) * empty

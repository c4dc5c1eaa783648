"""Multiply wound loops for U(N) and SU(N): the Schur-Weyl hook expansion at finite N
and the free unitary Brownian motion moments at N = infinity.

Casimir of the irreducible representation with highest weight (Young diagram) lambda.
For u(N) with the trace form (k = 1), the orthonormal basis gives the quadratic Casimir
``sum_i lambda_i (lambda_i + N + 1 - 2 i) = N |lambda| + 2 cont(lambda)``, where
``cont(lambda) = sum over boxes (j - i)`` is the content sum (box in row i, column j).
A metric ``<X, Y> = -k Re tr(XY)`` rescales the orthonormal basis by ``1 / sqrt(k)``, so

    c_U(lambda) = (N |lambda| + 2 cont(lambda)) / k,   (k = N: |lambda| + 2 cont / N).

For su(N), remove the centre direction ``X_0 = i Id / sqrt(k N)``, which acts on the
representation by ``i |lambda| / sqrt(k N)``:

    c_SU(lambda) = c_U(lambda) - |lambda|^2 / (k N),   (k = N: ... - |lambda|^2 / N^2).

Check: the fundamental (lambda = (1)) gives 1 for U(N) and 1 - 1/N^2 for SU(N) at k = N.
"""

from __future__ import annotations

import math
import numbers
from fractions import Fraction

import numpy as np

from noise import ArgumentError

from ._common import _finite_iv, _int_iv, _metric_iv

__all__ = [
    "unitary_casimir",
    "unitary_dimension",
    "unitary_wound_loop",
    "free_unitary_moment",
]


def _partition_iv(partition) -> tuple[int, ...]:
    if isinstance(partition, numbers.Integral) and not isinstance(partition, bool):
        partition = (int(partition),)
    try:
        parts = tuple(partition)
    except TypeError:
        raise TypeError(f"`partition` must be a sequence of integers, got {partition!r}.") from None
    for p in parts:
        if isinstance(p, bool) or not isinstance(p, numbers.Integral) or p < 0:
            raise ValueError(
                f"`partition` must be non-increasing non-negative integers, got {partition!r}."
            )
    if any(parts[i] < parts[i + 1] for i in range(len(parts) - 1)):
        raise ValueError(
            f"`partition` must be non-increasing non-negative integers, got {partition!r}."
        )
    return tuple(int(p) for p in parts if p > 0)


def _content_sum(parts: tuple[int, ...]) -> int:
    # box (i, j), 0-based, has content j - i
    return sum(r * (r - 1) // 2 - i * r for i, r in enumerate(parts))


def unitary_casimir(partition, N: int, *, k=None, special: bool = False) -> float:
    r"""Casimir constant of the U(N) (or SU(N)) irreducible representation ``partition``.

    .. math::

        c_{U}(\lambda) = \frac{N|\lambda| + 2\sum_{\square}\mathrm{cont}(\square)}{k},
        \qquad c_{SU}(\lambda) = c_U(\lambda) - \frac{|\lambda|^2}{kN}.

    Parameters
    ----------
    partition : sequence of int
        Young diagram lambda (row lengths, non-increasing) with at most N rows.
    N : int
        Matrix size.
    k : float or str, optional
        Metric constant; default ``N`` (the ``large-n`` metric).
    special : bool, optional
        SU(N) instead of U(N).

    References
    ----------
    .. [1] W. Fulton, J. Harris, "Representation Theory", Springer GTM 129 (1991),
       section 15 (highest weights of gl(N); from memory); the quadratic Casimir
       ``<lambda, lambda + 2 rho>``.
    .. [2] T. Levy, "Schur-Weyl duality and the heat kernel measure on the unitary
       group", Adv. Math. 218 (2008) 537-575 (Casimir of U(N) irreducibles).
    """
    parts = _partition_iv(partition)
    N = _int_iv(N, "N", 1)
    if len(parts) > N:
        raise ValueError(f"`partition` must have at most N = {N} rows, got {partition!r}.")
    kk = _metric_iv(N if k is None else k, N)
    size = sum(parts)
    c = (N * size + 2 * _content_sum(parts)) / kk
    if special:
        c -= size * size / (kk * N)
    return float(c)


def unitary_dimension(partition, N: int) -> int:
    r"""Dimension ``s_lambda(1^N)`` of the U(N) irreducible representation ``partition``
    by the hook-content formula ``prod_boxes (N + content) / hook``; 0 if lambda has
    more than N rows.

    References
    ----------
    .. [1] R. P. Stanley, "Enumerative Combinatorics, Vol. 2", Cambridge (1999),
       Corollary 7.21.4 (hook-content formula; numbering from memory).
    """
    parts = _partition_iv(partition)
    N = _int_iv(N, "N", 1)
    conj = [sum(1 for r in parts if r > j) for j in range(parts[0])] if parts else []
    value = Fraction(1)
    for i, r in enumerate(parts):
        for j in range(r):
            hook = (r - j - 1) + (conj[j] - i - 1) + 1
            value *= Fraction(N + j - i, hook)
    return int(value)


def _hooks(n: int, N: int):
    """Hooks (n - j, 1^j), j = 0..n-1, with at most N rows, and their signs (-1)^j."""
    for j in range(min(n, N)):
        yield (-1) ** j, (n - j,) + (1,) * j


#: the largest winding of the hook expansion: its work grows like n^2 (n = 10^5 on
#: U(3): about 10 s); the spec's loops wind at most turns x power = 1000 x 64 = 64000
MAX_WINDING = 10**5


def _wound_iv(N, n, t, k, special):
    N = _int_iv(N, "N", 1)
    n = _int_iv(n, "n", 1)
    if n > MAX_WINDING:
        raise ArgumentError("n", f"got {n!r}; expected an integer from 1 to {MAX_WINDING:.0e}",
                            f"`n` must be an integer from 1 to {MAX_WINDING:.0e} (the hook "
                            f"expansion's work grows like n^2), got {n!r}.")
    if not isinstance(special, bool):
        raise TypeError(f"`special` must be a bool, got {special!r}.")
    tt = _finite_iv(t, "t")
    kk = _metric_iv(N if k is None else k, N)
    return N, n, tt, kk, special


def unitary_wound_loop(N: int, n: int, t, special: bool = False, *, k=None):
    r"""``E[tr_N U_t^n]`` for Brownian motion on U(N) (or SU(N)) at finite N.

    A loop wound n times around a simple loop of measure A has holonomy ``U_t^n`` with
    ``t = lambda A``. Expand the power sum in Schur functions over hooks (the
    Murnaghan-Nakayama rule for a single n-cycle),

    .. math:: p_n = \sum_{j=0}^{n-1} (-1)^j s_{(n-j, 1^j)},

    and use ``E[s_lambda(U_t)] = s_lambda(1^N) exp(-c(lambda) t / 2)`` (Schur's lemma
    and the heat equation), so with the normalized trace ``tr_N = tr / N``

    .. math::

        E[\operatorname{tr}_N U_t^n] = \frac1N \sum_{j=0}^{\min(n, N)-1} (-1)^j
        s_{(n-j,1^j)}(1^N)\, e^{-c((n-j,1^j)) t/2},

    with ``c`` from :func:`unitary_casimir` (metric k, default k = N; for SU(N) the
    centre part is removed). Hooks with more than N rows vanish.

    Parameters
    ----------
    N : int
        Matrix size.
    n : int
        Number of turns, >= 1.
    t : float, complex or array_like
        Time ``lambda * A``. Negative or complex values give the analytic continuation.
    special : bool, optional
        SU(N) instead of U(N).
    k : float or str, optional
        Metric constant, default N.

    Returns
    -------
    float, complex or ndarray

    References
    ----------
    .. [1] E. M. Rains, "Combinatorial properties of Brownian motion on the compact
       classical groups", J. Theoret. Probab. 10 (1997) 659-679.
    .. [2] T. Levy, "Schur-Weyl duality and the heat kernel measure on the unitary
       group", Adv. Math. 218 (2008) 537-575.
    .. [3] I. G. Macdonald, "Symmetric Functions and Hall Polynomials", 2nd ed., Oxford
       (1995), ch. I.3 (power sums in terms of hook Schur functions; from memory).

    Examples
    --------
    U(2), loop wound twice, t = 1: ``(3 e^{-3/2} - e^{-1/2}) / 2``.

    >>> from holonomy.exact import unitary_wound_loop
    >>> round(unitary_wound_loop(2, 2, 1.0), 12)
    0.031429910366
    """
    N, n, tt, kk, special = _wound_iv(N, n, t, k, special)
    total = np.zeros_like(tt, dtype=tt.dtype)
    for sign, lam in _hooks(n, N):
        d = unitary_dimension(lam, N)
        c = unitary_casimir(lam, N, k=kk, special=special)
        total = total + sign * d * np.exp(-c * tt / 2.0)
    total = total / N
    return total.item() if total.ndim == 0 else total


def free_unitary_moment(n: int, t):
    r"""The N -> infinity limit of ``E[tr_N U_t^n]`` (k = N): moments of the free
    unitary Brownian motion,

    .. math::

        \nu_n(t) = e^{-nt/2} \sum_{j=0}^{n-1} \frac{(-t)^j}{j!} n^{j-1}
        \binom{n}{j+1}.

    Parameters
    ----------
    n : int
        Number of turns, >= 1.
    t : float, complex or array_like
        Time ``lambda * A``.

    References
    ----------
    .. [1] P. Biane, "Free Brownian motion, free stochastic calculus and random
       matrices", in Free Probability Theory, Fields Inst. Commun. 12, AMS (1997) 1-19,
       (moments of the free unitary Brownian motion; statement from memory).
    .. [2] T. Levy, "Schur-Weyl duality and the heat kernel measure on the unitary
       group", Adv. Math. 218 (2008) 537-575 (convergence as N -> infinity).

    Examples
    --------
    >>> from holonomy.exact import free_unitary_moment
    >>> round(free_unitary_moment(2, 1.0), 12)  # e^{-t} (1 - t)
    0.0
    """
    _, n, tt, _, _ = _wound_iv(1, n, t, None, False)
    poly = sum(
        (-tt) ** j / math.factorial(j) * float(n) ** (j - 1) * math.comb(n, j + 1)
        for j in range(n)
    )
    out = np.exp(-n * tt / 2.0) * poly
    out = np.asarray(out)
    return out.item() if out.ndim == 0 else out

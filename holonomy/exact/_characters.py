"""Characters of U(N) and SU(N) by weights: Adams operations, Racah-Speiser reduction,
Weyl dimensions and Casimirs of dominant weights, and one-plaquette laws.

A class function on U(N) is a finite sum ``sum_mu m(mu) e^{mu}`` over integer weights
``mu`` in Z^N (the exponents of the eigenvalues). ``chi(g^n)`` has the weights
``n mu`` of ``chi`` (the Adams operation psi^n: Fulton and Harris 1991, ex. 23.39; for
SU(2), ``chi_j(g^2) = sum_i (-1)^i chi_{2j-i}(g)``). Racah-Speiser reduction writes a
weight sum as a sum of irreducible characters: with ``rho = (N-1, ..., 1, 0)``, the
weight ``mu`` contributes ``sign(w) chi_lambda`` where ``w`` sorts ``mu + rho``
decreasingly and ``lambda = w(mu + rho) - rho``, and nothing if ``mu + rho`` has a
repeated entry (Weyl character formula). SU(N) uses the same weights: ``lambda`` and
``lambda + m (1, ..., 1)`` are the same SU(N) representation, and the Casimir below does
not see the shift.

Casimir of the dominant weight ``lambda`` for the metric ``-k Re tr``:
``c_U = sum_i lambda_i (lambda_i + N + 1 - 2 i) / k``, ``c_SU = c_U - |lambda|^2 / (k N)``
(the centre direction removed), as in :func:`holonomy.exact.unitary_casimir`.

References
----------
.. [1] W. Fulton, J. Harris, "Representation Theory: A First Course", Springer GTM
   129 (1991), sec. 24.1 (Weyl character and dimension formulas), ex. 23.39 (Adams
   operations psi^k), sec. 25.1 (Racah-Speiser / Brauer-Klimyk; numbering from memory).
.. [2] D. J. Gross, E. Witten, Phys. Rev. D 21 (1980) 446-453; I. Bars, F. Green,
   Phys. Rev. D 20 (1979) 3311-3330 (one-plaquette integrals as Bessel determinants).
"""

from __future__ import annotations

import math
from collections import Counter
from fractions import Fraction

import numpy as np
from scipy import special

from holonomy.groups._weights import _weight_system

__all__ = ["class_weights", "adams_decomposition", "weyl_dimension",
           "dominant_casimir", "wilson_character", "bessel_ratio", "BesselRangeError"]

#: below this argument ``I_n(x) / I_m(x)`` is its leading power-series term: the next
#: one is ``1 + O(x^2)``, below double rounding here, and ``ive`` underflows (``ive(1, x)``
#: is 0 below about 1e-308, which made ``I_2 / I_1`` a 0 / 0)
_SERIES_X = 1e-8
#: above this argument the ratio comes from the large-argument expansion: scipy's
#: ``ive`` (AMOS) returns NaN from about 2e9 (measured with scipy 1.17)
_ASYMPTOTIC_X = 1e8


class BesselRangeError(ArithmeticError):
    """A Bessel ratio outside the ranges its routes cover in double precision."""


def _ive_asymptotic(n: int, x: float) -> float:
    """``sqrt(2 pi x) e^{-x} I_n(x)`` by the large-argument expansion
    ``sum_k (-1)^k a_k(n) / x^k``, ``a_k = prod_{j<=k} (4n^2 - (2j-1)^2) / (k! 8^k)``
    (Abramowitz and Stegun 1964, 9.7.1), for ``4 n^2 <= x / 1000`` (checked by the
    caller): the terms then fall by a factor below 5e-4 each, and 12 of them leave an
    error below 1e-40."""
    mu = 4.0 * n * n
    term = total = 1.0
    for k in range(1, 13):
        term *= -(mu - (2 * k - 1) ** 2) / (8.0 * k * x)
        total += term
        if term == 0.0:
            break
    return total


def bessel_ratio(n: int, m: int, x: float) -> float:
    r"""``I_n(x) / I_m(x)`` for integers ``n >= m >= 0`` and ``x >= 0`` (``inf`` too),
    finite wherever it is representable.

    - ``x < 1e-8``: the leading term of the power series,
      ``(x/2)^{n-m} m! / n!`` (Abramowitz and Stegun 1964, 9.6.10), in log space, so
      that a ratio below the double range is 0 and no 0 / 0 arises;
    - ``1e-8 <= x <= 1e8``: ``ive(n, x) / ive(m, x)`` (scipy.special; the common factor
      ``e^{-x}`` cancels);
    - ``x > 1e8``: the ratio of the large-argument expansions (Abramowitz and Stegun
      1964, 9.7.1), for orders with ``4 n^2 <= x / 1000``; ``x = inf`` gives 1.

    Raises :class:`BesselRangeError` for a large order at a large argument
    (``4 n^2 > x / 1000`` with ``x > 1e8``), where neither route is accurate.

    References
    ----------
    .. [1] M. Abramowitz, I. A. Stegun, "Handbook of Mathematical Functions", NBS
       (1964), 9.6.10 (power series) and 9.7.1 (asymptotic expansion for large
       arguments).
    """
    n, m, x = int(n), int(m), float(x)
    if not (n >= m >= 0) or not x >= 0:
        raise ValueError(f"bessel_ratio needs n >= m >= 0 and x >= 0, got {(n, m, x)!r}")
    if n == m:
        return 1.0
    if x == 0.0:
        return 0.0
    if x < _SERIES_X:
        log_r = (n - m) * math.log(x / 2) + math.lgamma(m + 1) - math.lgamma(n + 1)
        return math.exp(log_r)  # 0.0 below the double range (math.exp does not warn)
    if x <= _ASYMPTOTIC_X:
        return float(special.ive(n, x) / special.ive(m, x))
    if math.isinf(x):
        return 1.0
    if 4.0 * n * n > x / 1000:
        raise BesselRangeError(
            f"the Bessel ratio I_{n}/I_{m} at argument {x:.3g} (order {n} too large for "
            "the large-argument expansion, beyond scipy's range)")
    return _ive_asymptotic(n, x) / _ive_asymptotic(m, x)


def class_weights(group, rep) -> list[tuple[int, ...]] | None:
    """Weights (as U(N) weights) of a representation's character, or None.

    Known for U(N) and SU(N): ``fundamental``, ``trivial``, ``adjoint``, ``power:p``
    (the class function ``tr U^p``: weights ``p e_i``) and, for SU(2), ``spin:j``
    (``Sym^{2j}``: weights ``(2j - i, i)``).
    """
    if group.family not in ("U", "SU"):
        return None
    N = group.N
    name = rep.name
    e = [tuple(int(i == a) for i in range(N)) for a in range(N)]
    if name in ("fundamental", "defining"):
        return e
    if name == "trivial":
        return [(0,) * N]
    if name.startswith("power:"):
        p = int(name.split(":", 1)[1])
        return [tuple(p * x for x in w) for w in e]
    if name == "adjoint":
        out = [tuple(a - b for a, b in zip(e[i], e[j])) for i in range(N) for j in range(N)
               if i != j]
        zeros = N if group.family == "U" else N - 1
        return out + [(0,) * N] * zeros
    if name.startswith("spin:") and N == 2:
        m = int(2 * Fraction(name.split(":", 1)[1]))
        return [(m - i, i) for i in range(m + 1)]
    return None


def adams_decomposition(weights, n: int = 1) -> dict[tuple[int, ...], int]:
    """``chi(g^n) = sum_lambda a_lambda chi_lambda(g)`` by Racah-Speiser reduction.

    Parameters
    ----------
    weights : sequence of tuple of int
        The weights of ``chi`` (with multiplicity).
    n : int
        The Adams operation psi^n (default 1: just reduce).

    Returns
    -------
    dict
        Dominant weight -> integer coefficient (zeros dropped).
    """
    N = len(weights[0])
    rho = np.arange(N - 1, -1, -1)
    out: Counter = Counter()
    for mu in weights:
        v = n * np.asarray(mu, dtype=np.int64) + rho
        if len(set(v.tolist())) < N:
            continue
        order = np.argsort(-v, kind="stable")
        # sign of the sorting permutation: parity of its inversions
        inv = int(np.count_nonzero(np.triu(order[:, None] > order[None, :], 1)))
        lam = tuple((v[order] - rho).tolist())
        out[lam] += -1 if inv % 2 else 1
    return {lam: a for lam, a in out.items() if a}


def weyl_dimension(lam) -> int:
    """Dimension of the U(N) irreducible with dominant weight ``lam`` (Weyl), from the
    highest-weight calculus of :mod:`holonomy.groups` (its one home)."""
    ws = _weight_system("U", len(lam), 1.0)
    return int(round(float(ws.dimension(ws.shifted(lam)))))


def dominant_casimir(lam, k: float, special_unitary: bool) -> float:
    """Casimir of the dominant weight ``lam`` for the metric ``-k Re tr`` (U(N) or SU(N)),
    from the highest-weight calculus of :mod:`holonomy.groups`."""
    lam = np.asarray(lam, dtype=float)
    if special_unitary:
        # SU(N): the traceless part of the weight, in the lattice coordinates nu_N = 0
        ws = _weight_system("SU", len(lam), float(k))
        lam = lam - lam[-1]
    else:
        ws = _weight_system("U", len(lam), float(k))
    return float(ws.casimir(ws.shifted(lam)))


#: the SU(N) one-plaquette sums run over |q| <= 2b + 40: more terms than this is a
#: stated cost limit (b above about 5000), as is an argument beyond scipy's ``ive``
_MAX_SHIFTS = 20001


def determinant_range(b: float, special_unitary: bool) -> int:
    """The shifts ``qmax`` of the Bessel-determinant routes (0 for U(N)), after checking
    that ``b`` is within their reach; else :class:`BesselRangeError`."""
    if not b <= _ASYMPTOTIC_X:
        raise BesselRangeError(f"the Bessel determinants at argument {b:.3g} (above "
                               f"{_ASYMPTOTIC_X:g}, beyond scipy's range)")
    if not special_unitary:
        return 0
    qmax = int(math.ceil(2 * b)) + 40
    if 2 * qmax + 1 > _MAX_SHIFTS:
        raise BesselRangeError(f"the SU(N) Bessel sums at argument {b:.3g} need "
                               f"{2 * qmax + 1} shifted determinants (more than "
                               f"{_MAX_SHIFTS})")
    return qmax


def _bessel_det(lam, b: float, shift: int = 0) -> float:
    """``det[e^{-b} I_{lam_i - i + j + shift}(b)]`` (scaled: the factor e^{-N b} cancels
    in every ratio)."""
    N = len(lam)
    idx = (np.asarray(lam)[:, None] - np.arange(N)[:, None] + np.arange(N)[None, :] + shift)
    return float(np.linalg.det(special.ive(idx, b)))


def wilson_character(family: str, lam, b: float) -> float:
    r"""``E[chi_lambda(P)] / dim lambda`` for the one-plaquette Wilson law.

    P has the density proportional to ``exp(b Re tr P)`` against Haar measure on U(N)
    or SU(N). By the Weyl integration formula and the Andreief identity,
    ``int chi_lambda(U) exp(b Re tr U) dU = det[I_{lambda_i - i + j}(b)]`` on U(N), and
    on SU(N) the sum of the same determinants over the shifts ``lambda + q (1, ..., 1)``,
    q in Z (Gross and Witten 1980; Bars and Green 1979). U(1): ``I_q(b) / I_0(b)``;
    SU(2): ``I_{2j+1}(2b) / I_1(2b)`` for spin j.

    References
    ----------
    .. [1] D. J. Gross, E. Witten, Phys. Rev. D 21 (1980) 446-453.
    .. [2] I. Bars, F. Green, Phys. Rev. D 20 (1979) 3311-3330.
    .. [3] R. C. Brower, P. Rossi, C.-I. Tan, Nucl. Phys. B 190 (1981) 699-718 (SU(N)).
    """
    lam = tuple(int(x) for x in lam)
    N = len(lam)
    if family == "U":
        if N == 1:
            return bessel_ratio(abs(lam[0]), 0, b)
        determinant_range(b, False)
        return _bessel_det(lam, b) / _bessel_det((0,) * N, b) / weyl_dimension(lam)
    if N == 2:
        j2 = lam[0] - lam[1]
        return bessel_ratio(j2 + 1, 1, 2 * b)
    qmax = determinant_range(b, True)
    num = sum(_bessel_det(lam, b, q) for q in range(-qmax - sum(lam), qmax + 1))
    den = sum(_bessel_det((0,) * N, b, q) for q in range(-qmax, qmax + 1))
    return num / den / weyl_dimension(lam)

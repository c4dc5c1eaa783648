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
           "dominant_casimir", "wilson_character"]


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
            return float(special.ive(abs(lam[0]), b) / special.ive(0, b))
        return _bessel_det(lam, b) / _bessel_det((0,) * N, b) / weyl_dimension(lam)
    if N == 2:
        j2 = lam[0] - lam[1]
        return float(special.ive(j2 + 1, 2 * b) / special.ive(1, 2 * b))
    qmax = int(math.ceil(2 * b)) + 40
    num = sum(_bessel_det(lam, b, q) for q in range(-qmax - sum(lam), qmax + 1))
    den = sum(_bessel_det((0,) * N, b, q) for q in range(-qmax, qmax + 1))
    return num / den / weyl_dimension(lam)

"""2D Yang-Mills on the sphere: partition function and a simple loop, by character sums.

On a sphere of total measure T, the heat kernel ``p_t(g) = sum_l d_l chi_l(g) e^{-c_l t/2}``
glued over two discs gives (with t = lambda * area)

    Z(T) = p_{lambda T}(e) = sum_l d_l^2 exp(-c_l lambda T / 2),

and a simple loop splitting the sphere into discs of measures A1 and A2 (A1 + A2 = T)
has, with ``chi_f`` the character of the loop's representation f,

    W = (1 / (Z d_f)) int p_{lambda A1}(g) p_{lambda A2}(g^{-1}) chi_f(g) dg
      = (1 / (Z d_f)) sum_{l, m} d_l d_m N_{l f}^m exp(-c_l lambda A1/2 - c_m lambda A2/2),

using ``int chi_l(g) chi_f(g) conj(chi_m(g)) dg = N_{l f}^m``, the multiplicity of m in
``l (x) f``. Fusion rules: U(1) charges ``q (x) f = q + f``; SU(2) spins
``j (x) s = |j - s|, ..., j + s`` (Clebsch-Gordan).

Casimirs in the metric k: U(1) charge q: ``q^2 / k``; SU(2) spin j: ``2 j (j+1) / k``
(k = 2: j(j+1)); SO(3) = SU(2)/{+-1}, integer spins only, with the defining
representation = spin 1 and ``c_j = j(j+1) / (2k)`` (k = 1 gives the defining value 1).
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np

from ._common import _family_iv, _int_iv, _metric_iv, _real_iv

__all__ = ["sphere_partition_function", "sphere_wilson_loop"]

# terms of the character sums are dropped once exp(-c t / 2) < e^{-_DECAY}
_DECAY = 60.0
_MAX_TERMS = 2_000_000


def _labels(fam, kk, tmin):
    """Labels, dimensions and Casimirs of the irreducibles, truncated for total time tmin.

    U(1): charges q; SU(2): p = 2j + 1 >= 1; SO(3): p = 2j + 1 odd.
    """
    if fam == "U":
        # exp(-q^2 tmin / (2k)) < e^{-D}  <=>  |q| > sqrt(2 k D / tmin)
        qmax = int(math.ceil(math.sqrt(2 * kk * _DECAY / tmin))) + 2
        if 2 * qmax + 1 > _MAX_TERMS:
            raise ValueError(_small_area_message(tmin))
        q = np.arange(-qmax, qmax + 1)
        return q, np.ones(q.shape), q.astype(float) ** 2 / kk
    # SU(2): c = 2 j (j+1) / k = (p^2 - 1) / (2k);  SO(3): c = (p^2 - 1) / (8k)
    scale = 1 / (2 * kk) if fam == "SU" else 1 / (8 * kk)
    pmax = int(math.ceil(math.sqrt(2 * _DECAY / (scale * tmin) + 1))) + 3
    if pmax > _MAX_TERMS:
        raise ValueError(_small_area_message(tmin))
    p = np.arange(1, pmax + 1) if fam == "SU" else np.arange(1, pmax + 1, 2)
    return p, p.astype(float), (p.astype(float) ** 2 - 1) * scale


def _small_area_message(tmin):
    return (
        f"`area_inside` + `area_outside` times `coupling` = {tmin!r} is too small: the "
        f"character sums would need more than {_MAX_TERMS} terms."
    )


def _sphere_iv(family, n, areas, coupling, k):
    fam = _family_iv(family, allowed=("U", "SU", "SO"))
    n = _int_iv(n, "n", 1)
    if (fam, n) not in (("U", 1), ("SU", 2), ("SO", 3)):
        raise ValueError(
            f"the sphere character sums support U(1), SU(2) and SO(3), got {fam}({n})."
        )
    out = []
    for name, a in areas:
        a = _real_iv(a, name, nonnegative=True)
        if np.ndim(a) != 0:
            raise ValueError(f"`{name}` must be a scalar >= 0, got {a!r}.")
        out.append(a)
    lam = _real_iv(coupling, "coupling", positive=True)
    if np.ndim(lam) != 0:
        raise ValueError(f"`coupling` must be a scalar > 0, got {coupling!r}.")
    kk = _metric_iv(k, 1 if fam == "U" else (2 if fam == "SU" else 3))
    if lam * sum(out) <= 0:
        raise ValueError("`area_inside` + `area_outside` must be > 0 (the total area T).")
    return fam, out, lam, kk


def sphere_partition_function(family: str, n: int, area: float, coupling: float, k) -> float:
    r"""Partition function ``Z(T) = sum_l d_l^2 exp(-c_l lambda T / 2)`` on the sphere.

    Normalized so that Z = p_{lambda T}(e), the heat kernel at the identity (Haar
    measure of mass 1). Supports U(1), SU(2) and SO(3).

    Parameters
    ----------
    family : {"U", "SU", "SO"}
    n : int
        1, 2 or 3 respectively.
    area : float
        Total measure T > 0.
    coupling : float
        lambda > 0.
    k : float or str
        Metric constant or name.

    References
    ----------
    .. [1] A. A. Migdal, "Recursion equations in gauge field theories", Sov. Phys. JETP
       42 (1975) 413.
    .. [2] B. E. Rusakov, "Loop averages and partition functions in U(N) gauge theory on
       two-dimensional manifolds", Mod. Phys. Lett. A 5 (1990) 693-703.
    .. [3] E. Witten, "On quantum gauge theories in two dimensions", Commun. Math. Phys.
       141 (1991) 153-209 (the heat-kernel partition functions; from memory).
    """
    fam, (T,), lam, kk = _sphere_iv(family, n, [("area", area)], coupling, k)
    _, d, c = _labels(fam, kk, lam * T)
    return float(np.sum(d * d * np.exp(-c * lam * T / 2)))


def _sphere_rep_iv(fam: str, rep) -> int:
    """The loop's representation as q: U(1) charge q; SU(2)/SO(3) twice the spin."""
    if not isinstance(rep, str):
        raise TypeError(f"`rep` must be a representation spec string, got {rep!r}.")
    spec = rep.strip().lower()
    if spec in ("fundamental", "defining"):
        return {"U": 1, "SU": 1, "SO": 2}[fam]
    kind, _, arg = spec.partition(":")
    try:
        if fam == "U" and kind == "power":
            q = int(arg)
            if q >= 1:
                return q
        elif fam in ("SU", "SO") and kind == "spin":
            two_j = Fraction(arg) * 2
            if two_j.denominator == 1 and two_j >= 0 and (fam == "SU" or two_j % 2 == 0):
                return int(two_j)
    except (ValueError, ZeroDivisionError):
        pass
    accepted = {"U": "'fundamental' or 'power:q' (q >= 1)",
                "SU": "'fundamental' or 'spin:j' (j = 0, 1/2, 1, ...)",
                "SO": "'fundamental' or 'spin:j' (integer j)"}[fam]
    raise ValueError(f"`rep` must be {accepted} for this group, got {rep!r}.")


def sphere_wilson_loop(family: str, n: int, area_inside: float, area_outside: float,
                       coupling: float, k, *, rep: str = "fundamental") -> float:
    r"""Normalized Wilson loop of a simple loop on a sphere.

    .. math::

        W = \frac{1}{Z\, d_f} \sum_{l, m} d_l d_m N_{l f}^m
            e^{-c_l \lambda A_1/2 - c_m \lambda A_2/2},
        \qquad Z = \sum_l d_l^2 e^{-c_l \lambda (A_1 + A_2)/2}.

    U(1): ``W = sum_q e^{-(q^2 A1 + (q+1)^2 A2) lambda / (2k)} / sum_q e^{-q^2 T lambda/(2k)}``.
    SU(2) (fundamental, spin 1/2): ``m = j +- 1/2``. SO(3) (defining, spin 1):
    ``m = j - 1, j, j + 1`` (``j = 0``: only 1). Spin s in general (``rep="spin:s"``):
    ``m = |j - s|, ..., j + s``; U(1) charge q (``rep="power:q"``): ``m = l + q``.
    As ``A2 -> infinity`` W tends to the
    plane value ``exp(-c_f lambda A1 / 2)``; W is symmetric in A1 and A2.

    Parameters
    ----------
    family : {"U", "SU", "SO"}
    n : int
        1, 2 or 3 respectively.
    area_inside, area_outside : float
        Measures A1, A2 >= 0 of the two discs (T = A1 + A2 > 0).
    coupling : float
        lambda > 0.
    k : float or str
        Metric constant or name.
    rep : str, optional
        ``"fundamental"`` (default); ``"spin:j"`` for SU(2) (integer j for SO(3));
        ``"power:q"`` (charge q) for U(1).

    Returns
    -------
    float

    References
    ----------
    .. [1] B. E. Rusakov, Mod. Phys. Lett. A 5 (1990) 693-703.
    .. [2] E. Witten, Commun. Math. Phys. 141 (1991) 153-209.
    .. [3] A. Sengupta, "Gauge theory on compact surfaces", Mem. Amer. Math. Soc. 126
       (1997), no. 600.

    Examples
    --------
    >>> from holonomy.exact import sphere_wilson_loop
    >>> import math
    >>> w = sphere_wilson_loop("SU", 2, 1.0, 100.0, 1.0, 2)  # nearly the plane value
    >>> bool(abs(w - math.exp(-0.75 * 1.0 / 2)) < 1e-12)
    True
    """
    fam, (A1, A2), lam, kk = _sphere_iv(
        family, n, [("area_inside", area_inside), ("area_outside", area_outside)], coupling, k
    )
    q = _sphere_rep_iv(fam, rep)
    t1, t2 = lam * A1, lam * A2
    T = t1 + t2
    lab, d, c = _labels(fam, kk, T)
    Z = np.sum(d * d * np.exp(-c * T / 2))
    # exponents are combined before exponentiating: the factors e^{-c t1/2}, e^{-c t2/2}
    # separately may overflow/underflow when one area is 0
    if fam == "U":
        # l = charge m, the loop's charge q: partner m + q (entry i + q)
        num = np.sum(np.exp(-c[: c.size - q] * t1 / 2 - c[q:] * t2 / 2))
        return float(num / Z)
    # SU(2) / SO(3) labels p = 2j + 1; spin s = q/2: j (x) s = |j - s|, ..., j + s, i.e.
    # p' = p + delta, delta in {-q, -q + 2, ..., q}, with p' >= |p - 1 - q| + 1
    p = lab
    gap = 1 if fam == "SU" else 2  # spacing of the labels
    num = 0.0
    for delta in range(-q, q + 1, 2):
        pm = p + delta
        ok = (pm >= np.abs(p - 1 - q) + 1) & (pm <= p[-1])
        idx = (pm[ok] - p[0]) // gap
        num += np.sum(d[ok] * d[idx] * np.exp(-c[ok] * t1 / 2 - c[idx] * t2 / 2))
    return float(num / (Z * (q + 1)))

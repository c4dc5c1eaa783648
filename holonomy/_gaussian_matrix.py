"""The Gaussian-matrix prescription of a simple loop: value and series.

One Lie-algebra Gaussian X of variance lambda A per component; the prescription is
E[chi(exp X)] / dim, the closed form of the holomorphic-gauge and
Wu-Mandelstam-Leibbrandt resummations for simple loops. Its value comes from
:func:`holonomy.exact.gaussian_step` (closed forms and Weyl quadrature), its series from
the Wick machinery of :mod:`holonomy._series`; it lives beside the series modules
because it uses both (the exact package sits below them).
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import sympy

from ._continuum_series import _rational
from ._series import (MAX_GROUP_FACTOR_WORK, exp_product_series, group_factor_route,
                      series_order_iv)
from .exact import ExactRouteError, gaussian_step
from .groups import group_iv, rep_of

__all__ = ["gaussian_matrix", "GaussianMatrixValue"]


@dataclass(frozen=True)
class GaussianMatrixValue:
    """The Gaussian-matrix prescription of a simple loop (`gaussian_matrix`).

    Attributes
    ----------
    value : float, complex or None
        ``E[chi(exp X)] / dim`` (None with a note where no closed form or quadrature
        applies).
    coefficients : list of float
        Its Taylor coefficients c_0..c_M in the coupling.
    rationals : list of str or None
        The same as exact rationals (defining representation of U(N), SU(N), SO(N) at a
        rational area and metric), else None.
    first_difference : int or None
        The first order j at which its coefficient differs from the exact (heat-kernel)
        value ``exp(-c lambda A / 2)``; None if none up to M (abelian groups).
    exact_coefficient, gaussian_coefficient : float or None
        The two coefficients at that order.
    note : str or None
        Why `value` is None, if it is.
    """

    value: float | complex | None
    coefficients: list
    rationals: list | None
    first_difference: int | None
    exact_coefficient: float | None = None
    gaussian_coefficient: float | None = None
    note: str | None = None


def gaussian_matrix(group, rep, area: float, coupling: float, order: int = 4
                    ) -> GaussianMatrixValue:
    r"""The Gaussian-matrix prescription for a simple loop of (signed) area A.

    ``E[chi(exp X)] / dim`` with ``X = sum_a Z_a X_a``, Z_a iid ``N(0, lambda A)`` (one
    Gaussian exponential). For simple loops it is the closed form of the
    holomorphic-gauge and Wu-Mandelstam-Leibbrandt perturbative resummations, and it
    is the ``gauss`` scheme's one-plaquette value. It agrees with the exact value
    ``exp(-c lambda A / 2)`` at order lambda and differs from order lambda^2 on
    (non-abelian groups): for SU(2) with k = 2, ``(1 - t/4) exp(-t/8)`` against
    ``exp(-3t/8)``, c_2 = 5/128 against 9/128.

    Parameters
    ----------
    group : Group
    rep : str or Representation
        The value needs the defining representation (`gaussian_step`); the series is
        available in any representation.
    area : float
        The loop's (signed) measure A; a negative one gives the formal continuation.
    coupling : float
        lambda.
    order : int
        M: coefficients c_0..c_M.

    Returns
    -------
    GaussianMatrixValue

    Raises
    ------
    holonomy.exact.ExactRouteError
        ``limit == "size"``: the series' group factors would exceed the work limit
        :data:`holonomy._series.MAX_GROUP_FACTOR_WORK` (large representations, e.g. the
        adjoint of SU(6) or the defining representation of Sp(16), at order 4); checked
        before any contraction.

    References
    ----------
    .. [1] M. Staudacher and W. Krauth, "Two-dimensional QCD in the Wu-Mandelstam-
       Leibbrandt prescription", Phys. Rev. D 57 (1998) 2456 (from memory).
    .. [2] A. Bassetto and L. Griguolo, "Two-dimensional QCD, instanton contributions
       and the perturbative Wu-Mandelstam-Leibbrandt prescription", Phys. Lett. B 443
       (1998) 325 (from memory).
    .. [3] U. Haagerup and S. Thorbjornsen, Expo. Math. 21 (2003) 293-337 (the
       Laguerre form of ``E[tr exp(iH)]`` for the GUE).

    Examples
    --------
    >>> from holonomy.groups import make_group
    >>> from holonomy import gaussian_matrix
    >>> g = gaussian_matrix(make_group("SU", 2, "physics"), "fundamental", 1.0, 1.0, 2)
    >>> g.rationals, g.first_difference     # (1 - t/4) e^(-t/8) against e^(-3t/8)
    (['1', '-3/8', '5/128'], 2)
    """
    for key, v in (("area", area), ("coupling", coupling)):
        if isinstance(v, bool) or not isinstance(v, numbers.Real):
            raise TypeError(f"`{key}` must be a finite number, got {v!r}.")
        if not math.isfinite(v):
            raise ValueError(f"`{key}` must be a finite number, got {v!r}.")
    order = series_order_iv(order)
    group = group_iv(group)
    rep_obj = rep_of(group, rep)
    t = float(coupling) * float(area)
    note = None
    value = None
    if rep_obj.name in ("fundamental", "defining"):
        try:
            value = gaussian_step(group.family, group.n, t, group.k)
        except ValueError as exc:
            note = f"no closed form or quadrature for one Gaussian exponential ({exc})"
    else:
        note = "the value needs the defining representation (the series does not)"
    A = _rational(area)
    exact_ok = (A is not None and rep_obj.name in ("fundamental", "defining")
                and group.family in ("U", "SU", "SO") and _rational(group.k) is not None)
    if not exact_ok:  # exact factors have a direct route; float ones a work limit
        for j in range(2, int(order) + 1):
            route, work = group_factor_route(group.dim, rep_obj.dim, 2 * j,
                                             math.prod(range(1, 2 * j, 2)))
            if route == "einsum" and work > MAX_GROUP_FACTOR_WORK:
                raise ExactRouteError(
                    "size", f"the Gaussian-matrix series at order {j} in {rep_obj.name!r} "
                    f"(dimension {rep_obj.dim}) of a group of dimension {group.dim} needs "
                    f"about {work:.1e} operations, above the limit "
                    f"{MAX_GROUP_FACTOR_WORK:.1e}")
    if exact_ok:
        res = exp_product_series(group, sympy.Matrix([[A]]), int(order), rep=rep_obj,
                                 exact=True)
        rationals = [str(c) for c in res.coefficients]
        coeffs = [float(c) for c in res.coefficients]
    else:
        res = exp_product_series(group, [[float(area)]], int(order), rep=rep_obj)
        rationals = None
        coeffs = [complex(c).real for c in res.coefficients]
    first = exact_c = gauss_c = None
    c = rep_obj.casimir
    if c is not None:
        for j, cj in enumerate(coeffs):
            ej = (-c * float(area) / 2) ** j / math.factorial(j)
            if abs(cj - ej) > 1e-10 * max(1.0, abs(ej)):
                first, exact_c, gauss_c = j, ej, cj
                break
    return GaussianMatrixValue(value=value, coefficients=coeffs, rationals=rationals,
                               first_difference=first, exact_coefficient=exact_c,
                               gaussian_coefficient=gauss_c, note=note)

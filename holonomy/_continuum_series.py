"""Perturbative series of continuum Wilson loops: Taylor coefficients of the exact
evaluation in the coupling.

The exact evaluation (:func:`holonomy.exact.evaluate_polygon`, lasso decomposition and
tensor contraction) gives, for a polygonal loop and the defining representation,

    E[tr pi(H)] / dim pi = sum_r a_r exp(lambda mu_r),

a finite sum with exact coefficients a_r and exponents mu_r (rational for a loop with
binary-rational vertices and Lebesgue measure). Its Taylor series in the coupling is
therefore exact term by term,

    c_j = sum_r a_r mu_r^j / j!,

with no numerical differentiation. This module runs the exact evaluation with a
symbolic coupling and expands each term; a term that is not of the form
``a lambda^p exp(mu lambda + b)`` (never produced by the evaluation, kept as a guard) is
expanded with :func:`sympy.series`.

These coefficients are the continuum limit of the ``linear`` scheme's lattice series
(:func:`holonomy.lattice_series`) as the spacing tends to zero.

References
----------
.. [1] T. Levy, "Yang-Mills measure on compact surfaces", Mem. Amer. Math. Soc. 166
   (2003), no. 790.
.. [2] B. K. Driver, "YM2: continuum expectations, lattice convergence, and lassos",
   Commun. Math. Phys. 123 (1989), 575-616.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import sympy

from discretize import AreaForm, LatticeLoop, turns_iv

from .exact import (evaluate_polygon, exact_surface_wilson_loop, exact_wilson_loop,
                    unitary_casimir, unitary_dimension, zero_instanton_series)
from .exact._dispatch import _lattice_shape, _polygon_shape
from .exact._unitary import _hooks
from .groups import rep_of
from ._series import SeriesResult, series_order_iv

__all__ = ["continuum_series", "exact_series", "surface_series", "SECTOR_NOTE"]

SECTOR_NOTE = ("the zero-instanton sector's Taylor series: the other instanton sectors are "
               "O(exp(-const/lambda)) and have no series")

_LAM = sympy.Symbol("lambda_", positive=True)


def _continuum_series_iv(group, turns, order, rep, exact):
    if not (hasattr(group, "basis") and hasattr(group, "N")):
        raise TypeError(f"`group` must be a Group from holonomy.groups.make_group; got "
                        f"{group!r}.")
    order = series_order_iv(order)
    turns = turns_iv(turns)
    if not isinstance(exact, (bool, np.bool_)):
        raise ValueError(f"`exact` must be True or False; got {exact!r}.")
    name = rep if isinstance(rep, str) else getattr(rep, "name", None)
    if not isinstance(name, str) or name.strip().lower() not in ("fundamental", "defining"):
        raise ValueError(
            f"`rep` must be 'fundamental' (the exact evaluation contracts tensor powers "
            f"of the defining representation); got {rep!r}.")
    return int(turns), int(order), name.strip().lower(), bool(exact)


def _term_coefficients(term: sympy.Expr, lam: sympy.Symbol, order: int) -> list:
    """Taylor coefficients c_0..c_order of one term ``a lam^p exp(mu lam + b)``."""
    coeff = sympy.Integer(1)
    rate = sympy.Integer(0)
    power = 0
    for f in sympy.Mul.make_args(term):
        if not f.has(lam):
            coeff *= f
        elif f == lam:
            power += 1
        elif f.is_Pow and f.base == lam and f.exp.is_Integer and f.exp > 0:
            power += int(f.exp)
        elif isinstance(f, sympy.exp) and f.args[0].is_polynomial(lam) \
                and sympy.degree(f.args[0], lam) <= 1:
            a = f.args[0].coeff(lam, 1)
            b = f.args[0].coeff(lam, 0)
            rate += a
            coeff *= sympy.exp(b)
        else:  # not produced by the exact evaluation; sympy's series as a fallback
            s = sympy.series(term, lam, 0, order + 1).removeO()
            return [sympy.expand(s.coeff(lam, j)) for j in range(order + 1)]
    out = [sympy.Integer(0)] * (order + 1)
    for j in range(power, order + 1):
        # lam^p exp(rate lam) = sum_i rate^i lam^(p+i) / i!
        i = j - power
        out[j] = coeff * rate ** i / math.factorial(i)
    return out


def continuum_series(group: Any, vertices: Any, turns: int = 1, order: int = 4, *,
                     rep: Any = "fundamental", exact: bool = True,
                     area_density: Any = None,
                     max_dim: int | None = None) -> SeriesResult:
    """Coefficients c_0..c_order of the continuum Wilson loop ``E[tr pi(H)] / dim pi``.

    Parameters
    ----------
    group : Group
        From :func:`holonomy.groups.make_group`.
    vertices : array_like, shape (m, 2)
        The polygon (counterclockwise positive; self-intersections allowed).
    turns : int, optional
        Number of times the loop runs around the polygon.
    order : int, optional
        M >= 0: coefficients c_0..c_M of lambda^0..lambda^M.
    rep : str, optional
        Only ``"fundamental"`` (the exact evaluation's route).
    exact : bool, optional
        True (default): sympy numbers (rational for rational vertices and density).
        False: the same exact coefficients converted to float.
    area_density : None, float, callable or AreaForm, optional
        The area measure, as in :func:`holonomy.exact.evaluate_polygon`; a signed
        density gives the coefficients of the analytic continuation (a formal series).
    max_dim : int, optional
        Passed to :func:`holonomy.exact.evaluate_polygon`.

    Returns
    -------
    SeriesResult
        ``coefficients[j]`` is c_j; ``value(lam, order)`` evaluates the truncation.

    Notes
    -----
    The exact evaluation is a finite sum ``sum_r a_r exp(lambda mu_r)``; each term is
    expanded exactly (``c_j = sum_r a_r mu_r^j / j!``), so the coefficients carry no
    truncation or differentiation error.

    References
    ----------
    .. [1] T. Levy, "Yang-Mills measure on compact surfaces", Mem. Amer. Math. Soc. 166
       (2003), no. 790 (simple loop: exp(-c lambda A / 2)).
    .. [2] E. M. Rains, "Combinatorial properties of Brownian motion on the compact
       classical groups", J. Theoret. Probab. 10 (1997), 659-679 (wound loops).
    .. [3] B. K. Driver, "YM2: continuum expectations, lattice convergence, and lassos",
       Commun. Math. Phys. 123 (1989), 575-616.

    Examples
    --------
    >>> from holonomy import continuum_series
    >>> from holonomy.groups import make_group
    >>> su2 = make_group("SU", 2, "physics")
    >>> continuum_series(su2, [(0, 0), (1, 0), (1, 1), (0, 1)], order=2).coefficients
    [1, -3/8, 9/128]
    """
    turns, M, rep_name, exact = _continuum_series_iv(group, turns, order, rep, exact)
    ev = evaluate_polygon(group, vertices, turns, coupling=_LAM, rep=rep_name,
                          area_density=area_density, exact=True, max_dim=max_dim)
    expr = sympy.expand(sympy.powsimp(sympy.expand(sympy.sympify(ev.value))))
    coeffs = [sympy.Integer(0)] * (M + 1)
    for term in sympy.Add.make_args(expr):
        for j, c in enumerate(_term_coefficients(term, _LAM, M)):
            coeffs[j] += c
    coeffs = [sympy.expand(c) for c in coeffs]
    if not exact:
        coeffs = [complex(c) if complex(c).imag else float(c) for c in coeffs]
    return SeriesResult(coefficients=coeffs, order=M, rep=rep_name, dim=int(group.N),
                        exact=exact)


def _rational(x: float, max_den: int = 1 << 20) -> Any:
    """x as a sympy Rational when it is one with a modest denominator, else None.

    Lattice measures are multiples of h^2 and Casimirs rational for a rational metric;
    a float that is not (a polygon approximating a circle) gets no rational.
    """
    from fractions import Fraction

    f = Fraction(float(x)).limit_denominator(max_den)
    # a near miss is a float that only resembles a rational: within a few ulps only
    if abs(float(f) - float(x)) > 4e-16 * max(1.0, abs(float(x))):
        return None
    return sympy.Rational(f.numerator, f.denominator)


def _exp_coefficients(terms, order: int):
    """Taylor coefficients of ``sum_r a_r exp(b_r lambda)``: exact when every a_r, b_r
    has a rational form, else floats. Returns ``(coefficients, exact)``."""
    exact_terms = [(_rational(a), _rational(b)) for a, b in terms]
    if all(a is not None and b is not None for a, b in exact_terms):
        coeffs = [sum(a * b ** j for a, b in exact_terms) / math.factorial(j)
                  for j in range(order + 1)]
        return [sympy.nsimplify(c) for c in coeffs], True
    return [float(sum(a * b ** j for a, b in terms) / math.factorial(j))
            for j in range(order + 1)], False


def exact_series(group: Any, rep: Any, loop: Any, order: int, *,
                 area: Any = None) -> SeriesResult | None:
    """Taylor coefficients in the coupling of the exact Wilson loop of any loop.

    The same routes as :func:`holonomy.exact.exact_wilson_loop` (which decides), each
    expanded exactly: U(1) windings and simple loops ``exp(-c lambda S / 2)``; U(N),
    SU(N) loops wound n times by the hook formula, a finite sum of exponentials; other
    polygons by :func:`continuum_series` (lasso decomposition). For a lattice loop this
    is the series of the heat scheme's value (the heat-kernel lattice measure is exact
    for lattice loops); for a polygon, of the continuum value.

    Parameters
    ----------
    group : Group
    rep : str or Representation
    loop : discretize.LatticeLoop or discretize.Loop
    order : int
        M >= 0.
    area : discretize.AreaForm, optional
        A signed density gives the formal continuation's series.

    Returns
    -------
    SeriesResult or None
        None when no exact route applies. ``exact`` is True when the coefficients are
        sympy Rationals (rational measures and Casimirs), else they are floats;
        ``method`` names the route.

    References
    ----------
    .. [1] T. Levy, Mem. Amer. Math. Soc. 166 (2003), no. 790 (simple loops, lattice
       heat-kernel measure).
    .. [2] E. M. Rains, J. Theoret. Probab. 10 (1997) 659-679 (loops wound n times).
    """
    order = series_order_iv(order)
    ev = exact_wilson_loop(group, rep, loop, coupling=1.0, area=area)
    if ev is None:
        return None
    M = int(order)
    rep_name = rep if isinstance(rep, str) else rep.name
    dim = int(group.rep(rep).dim) if isinstance(rep, str) else int(rep.dim)
    det = ev.details
    if ev.method == "u1-windings":
        terms = [(1.0, -det["casimir"] * det["sum_n2_mu"] / 2)]
    elif ev.method == "simple-loop":
        terms = [(1.0, -det["casimir"] * det["measure"] / 2)]
    elif ev.method == "hook-expansion":
        N, n, mu = group.N, det["turns"], det["measure"]
        special = group.family == "SU"
        terms = [(sign * unitary_dimension(lam, N) / N,
                  -unitary_casimir(lam, N, k=group.k, special=special) * mu / 2)
                 for sign, lam in _hooks(n, N)]
    else:
        shape = (_lattice_shape if isinstance(loop, LatticeLoop) else _polygon_shape)(
            loop, area if area is not None else AreaForm())
        res = continuum_series(group, shape.vertices, shape.periods, M, rep=rep_name,
                               area_density=shape.area, exact=True)
        coeffs = res.coefficients
        exact = all(sympy.sympify(c).is_Rational for c in coeffs)
        if not exact:
            coeffs = [float(c) for c in coeffs]
        return SeriesResult(coefficients=coeffs, order=M, rep=rep_name, dim=dim,
                            exact=exact, method=ev.method)
    coeffs, exact = _exp_coefficients(terms, M)
    return SeriesResult(coefficients=coeffs, order=M, rep=rep_name, dim=dim, exact=exact,
                        method=ev.method)


def _higher_genus_note(group, genus: int) -> str:
    return (f"no series in the coupling at genus {genus} for {group}: on a surface of genus "
            ">= 1 a non-abelian group's small-coupling expansion carries half-integer "
            "powers of lambda (the reducible flat connections; Witten 1992, from memory; "
            "SU(2) on the torus: Z = e^eps (sqrt(pi/eps) - 1)/2 + O(e^(-pi^2/eps)), "
            "eps = lambda T c_fund / 6), so it is no Taylor series")


def surface_series(group: Any, rep: Any, loop: Any, order: int, *, genus: int,
                   total_area: float, area: Any = None) -> SeriesResult:
    r"""Taylor coefficients in the coupling of a loop's value on a closed surface: the
    zero-instanton sector's, which carries the whole small-coupling series (the other
    sectors are ``O(exp(-const / lambda))``, flat in lambda at 0).

    Routes (those of :func:`holonomy.exact.exact_surface_wilson_loop`, which decides):

    - U(1) and SO(2), any loop, any genus: the zero-flux sector
      ``mean_mu exp(-lambda s mu^2 (S2 - S1^2 / T) / 2)`` (``S1 = sum n_F mu(F)``,
      ``S2 = sum n_F^2 mu(F)``, mu the weights of the representation);
    - a simple loop (or wound simple loop) on the sphere, any family:
      :func:`holonomy.exact.zero_instanton_series`.

    Exact sympy rationals where the measures and the metric constant are rational,
    else floats. Elsewhere NotImplementedError says why (non-abelian groups at genus
    >= 1: no Taylor series; non-simple loops of non-abelian groups: the outer face's
    expansion does not separate the sectors).

    Parameters
    ----------
    group : Group
    rep : str or Representation
    loop : discretize.LatticeLoop or discretize.Loop
    order : int
    genus : int
    total_area : float
    area : discretize.AreaForm, optional

    Returns
    -------
    SeriesResult
        ``method`` is ``"zero-instanton sector (<route>)"``.

    References
    ----------
    .. [1] J. A. Minahan and A. P. Polychronakos, Nucl. Phys. B 422 (1994) 172-186
       (instanton sectors on the sphere; from memory).
    .. [2] E. Witten, "Two dimensional gauge theories revisited", J. Geom. Phys. 9 (1992)
       303-368 (the small-coupling limit at higher genus; from memory).
    """
    order = series_order_iv(order)
    M = int(order)
    sv = exact_surface_wilson_loop(group, rep, loop, coupling=1.0, genus=genus,
                                   total_area=total_area, area=area)
    if sv.value is None:
        raise NotImplementedError(sv.note)
    rep_obj = rep_of(group, rep)
    det = sv.details
    method = f"zero-instanton sector ({sv.method})"
    if sv.method == "surface-abelian":
        from .groups import rep_weights, weight_system

        mus = rep_weights(group, rep_obj)[:, 0]
        vals = [_rational(x) for x in (det["S1"], det["S2"], total_area,
                                       weight_system(group).s)]
        if all(v is not None for v in vals):
            S1, S2, T, sc = vals
            kappas = [sc * int(m) ** 2 * (S2 - S1 ** 2 / T) / 2 for m in mus]
            coeffs = [sympy.nsimplify(sum((-k) ** j for k in kappas)
                                      / (len(mus) * math.factorial(j))) for j in range(M + 1)]
            exact = True
        else:
            S1, S2, T = det["S1"], det["S2"], float(total_area)
            sc = weight_system(group).s
            kappas = [sc * m * m * (S2 - S1 * S1 / T) / 2 for m in mus]
            coeffs = [float(sum((-k) ** j for k in kappas) / (len(mus) * math.factorial(j)))
                      for j in range(M + 1)]
            exact = False
    elif "inside" in det:
        if genus != 0:
            raise NotImplementedError(_higher_genus_note(group, genus))
        A, T = _rational(det["inside"]), _rational(total_area)
        exact = A is not None and T is not None and _rational(group.k) is not None
        if exact:
            coeffs = zero_instanton_series(group, rep_obj, A, T, M, turns=det["turns"],
                                           exact=True)
        else:
            coeffs = [float(c) for c in zero_instanton_series(
                group, rep_obj, det["inside"], float(total_area), M, turns=det["turns"])]
    else:
        if genus != 0:
            raise NotImplementedError(_higher_genus_note(group, genus))
        raise NotImplementedError(
            "no series for a non-simple loop of a non-abelian group on a closed surface "
            "in this version: the outer face's character expansion gives the value but "
            "does not separate the zero-instanton sector")
    return SeriesResult(coefficients=list(coeffs), order=M, rep=rep_obj.name,
                        dim=int(rep_obj.dim), exact=exact, method=method)

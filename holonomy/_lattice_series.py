"""Perturbative series of lattice Wilson loops in the ``linear`` scheme.

In the ``linear`` scheme a loop's holonomy is ``H = exp(A_1) ... exp(A_m)`` over its
horizontal steps, with ``A_e = -dir_e S_{k_e}`` and S_k the signed sum of the interval
noises on the chain from the reference line to the step's height (see
:mod:`discretize._axial`). The A_e are jointly Gaussian algebra elements with

    E[A_e,a A_f,b] = lambda C_ef delta_ab,   C_ef = dir_e dir_f mu(chain(e) & chain(f)),

where chain(e) & chain(f) is the set of intervals the two chains share (same column and
same side of the reference, up to the lower of the two heights). The series
E[tr pi(H)] / dim = sum_j c_j lambda^j then follows from the Wick expansion of the
ordered product (:func:`holonomy.exp_product_series`). A signed area density makes C
indefinite: the series is still defined (formally) while no sampler exists.

References
----------
.. [1] Driver, B. K. (1989). "YM2: continuum expectations, lattice convergence, and
   lassos." Commun. Math. Phys. 123, 575-616.
.. [2] Wick, G. C. (1950). "The evaluation of the collision matrix." Phys. Rev. 80,
   268-272.
"""

from __future__ import annotations

import numbers
from typing import TYPE_CHECKING

import numpy as np
import sympy

from discretize import AreaForm
from noise import ArgumentError, ArgumentTypeError

if TYPE_CHECKING:  # annotations only: the problem classes import the schemes
    from ._sampling import LatticeProblem
from ._series import SeriesResult, exp_product_series, factor_product_series, series_order_iv

__all__ = ["lattice_covariance", "lattice_loadings", "lattice_series", "gauss_loadings",
           "gauss_series", "wilson_series"]


def _problem_iv(problem, loop_index) -> int:
    """The ``problem`` and ``loop_index`` arguments of the lattice series: a
    LatticeProblem and an index of one of its loops (:class:`noise.ArgumentTypeError`
    or :class:`noise.ArgumentError` naming the argument)."""
    from ._sampling import LatticeProblem

    if not isinstance(problem, LatticeProblem):
        raise ArgumentTypeError("problem", f"got {type(problem).__name__}; expected a "
                                "LatticeProblem", f"`problem` must be a LatticeProblem, got "
                                f"{type(problem).__name__}.")
    m = len(problem.loops)
    rule = f"an integer from 0 to {m - 1}"
    if isinstance(loop_index, (bool, np.bool_)) or not isinstance(loop_index, numbers.Integral):
        raise ArgumentTypeError("loop_index", f"got {loop_index!r}; expected {rule}",
                                f"`loop_index` must be {rule}, got {loop_index!r}.")
    if not 0 <= loop_index < m:
        raise ArgumentError("loop_index", f"got {loop_index!r}; expected {rule}",
                            f"`loop_index` must be in [0, {m}), got {loop_index!r}.")
    return int(loop_index)


def lattice_loadings(problem: "LatticeProblem", loop_index: int = 0, *, merge: bool = True
                     ) -> tuple[np.ndarray, np.ndarray]:
    """The step exponents as sums of independent interval noises: ``(U, mu)``.

    ``A_e = sum_s U_es eta_s`` with eta_s of variance ``lambda mu_s`` per component;
    ``U_es = -dir_e`` if interval s lies on the chain of step e, else 0. Intervals used
    by exactly the same steps are merged (their noises always appear summed), so S is
    the number of distinct ways the loop's steps share a column. Steps on the reference
    line (identity links) are left out. ``merge=False`` keeps one column per interval of
    the plan (all loops of the problem share them: one noise field).
    """
    plan = problem.plan
    links, direction = plan.steps[loop_index]
    keep = links >= 0
    links, direction = links[keep], direction[keep].astype(float)
    K = plan.n_intervals
    # chain[k, j] = 1 if interval j lies between interval k and the reference
    chain = np.zeros((K, K))
    for k in range(K):
        j = k
        while j >= 0:
            chain[k, j] = 1.0
            j = plan.parent[j]
    U = -direction[:, None] * chain[links]
    if not merge:
        return U, np.asarray(plan.measure, dtype=float)
    used = np.any(U != 0, axis=0)
    U, measure = U[:, used], np.asarray(plan.measure, dtype=float)[used]
    if U.shape[1] == 0:
        return U, measure
    patterns, inverse = np.unique(U, axis=1, return_inverse=True)
    merged = np.zeros(patterns.shape[1])
    np.add.at(merged, inverse.ravel(), measure)
    return patterns, merged


def lattice_covariance(problem: "LatticeProblem", loop_index: int = 0) -> np.ndarray:
    """The matrix C (per unit coupling) of the loop's step exponents A_e.

    Steps on the reference line (identity links) are left out. Returns an (m, m)
    symmetric matrix, m the number of remaining horizontal steps:
    ``C_ef = dir_e dir_f mu(chain(e) & chain(f)) = (U diag(mu) U^T)_ef``.
    """
    U, mu = lattice_loadings(problem, _problem_iv(problem, loop_index))
    return (U * mu) @ U.T


def lattice_series(problem: "LatticeProblem", loop_index: int = 0, order: int = 4, *,
                   exact: bool = False) -> SeriesResult:
    """Coefficients c_0..c_order of the ``linear`` scheme's Wilson loop in lambda.

    Parameters
    ----------
    problem : LatticeProblem
        Group, loops, representation, spacing, gauge and area form (a signed density is
        allowed; a :class:`WilsonProblem` needs ``formal=True`` for it). The problem's
        scheme is not used: the series is that of the ``linear`` scheme.
    loop_index : int
    order : int
    exact : bool
        Exact sympy coefficients (rational when the interval measures are rational).

    Returns
    -------
    SeriesResult
        ``value(lam)`` evaluates the truncated series; it is a series, not an estimate.
    """
    loop_index = _problem_iv(problem, loop_index)
    order = series_order_iv(order)
    U, mu = lattice_loadings(problem, loop_index)
    if exact:
        h = problem.field.spacing
        # interval measures are integer multiples of h^2 for a constant density
        mu = np.array([sympy.nsimplify(v, rational=True, tolerance=1e-12 * max(1.0, h * h))
                       for v in mu], dtype=object)
    if U.shape[0] == 0:
        return exp_product_series(problem.group, np.zeros((1, 1)), int(order),
                                  rep=problem.rep, exact=exact)
    m = U.shape[0]
    period = next(p for p in range(1, m + 1)
                  if m % p == 0 and np.array_equal(U, np.tile(U[:p], (m // p, 1))))
    return factor_product_series(problem.group, U[:period], mu, int(order),
                                 rep=problem.rep, exact=exact, turns=m // period)


def _wound_simple(lattice_loop) -> tuple[np.ndarray, int] | None:
    """``(winding per cell of one period, turns)`` if the lattice loop is a simple loop
    traversed ``turns`` times, else None."""
    nodes = np.asarray(lattice_loop.nodes)[:-1]
    m = len(nodes)
    period = next(p for p in range(1, m + 1)
                  if m % p == 0 and np.array_equal(nodes, np.roll(nodes, -p, axis=0)))
    one = nodes[:period]
    if len(np.unique(one, axis=0)) != period:
        return None
    turns = m // period
    w = lattice_loop.winding_numbers()
    nz = w[w != 0]
    if nz.size == 0 or not (np.all(np.abs(nz) == turns) and np.all(np.sign(nz) == nz[0] // turns)):
        return None
    return np.sign(w), turns


def gauss_axial_factors(problem: "LatticeProblem", loop_index: int = 0
                        ) -> list[tuple[int, float]]:
    """The ``gauss`` holonomy in axial gauge as one-cell factors ``(cell, sign)``.

    ``cell = column * ny + row`` in the plan's frame; the holonomy is the ordered product
    of ``exp(sign x_cell)`` (DEVELOPERS.md, axial gauge: ``R(i, y) = (Q_ref ...
    Q_{y-1})^{-1}`` above the reference, ``Q_y ... Q_{ref-1}`` below; a leftward step
    is the inverse).
    """
    plan = problem.plan
    ny = np.asarray(plan.cell_measures).shape[1]
    ref = int(plan.ref_row)
    links, direction = plan.steps[loop_index]
    out: list[tuple[int, float]] = []
    for k, d in zip(links, direction):
        if k < 0:
            continue
        col = int(plan.column[k])
        if plan.side[k] > 0:       # R = exp(-x_{y-1}) ... exp(-x_ref)
            factors = [(col * ny + j, -1.0) for j in range(int(plan.hi[k]) - 1, ref - 1, -1)]
        else:                      # R = exp(x_y) ... exp(x_{ref-1})
            factors = [(col * ny + j, 1.0) for j in range(int(plan.lo[k]), ref)]
        if d < 0:                  # the inverse: reversed order, negated exponents
            factors = [(c, -v) for c, v in reversed(factors)]
        out.extend(factors)
    return out


def gauss_loadings(problem: "LatticeProblem", loop_index: int = 0
                   ) -> tuple[np.ndarray, np.ndarray, int, str]:
    """The ``gauss`` scheme's holonomy as a product of one-cell exponentials.

    Returns ``(U, mu, turns, route)``: the holonomy is ``(exp(A_1) ... exp(A_m))^turns``
    with ``A_e = sum_c U_ec x_c`` and x_c the independent cell noises (variance
    ``lambda mu_c`` per component).

    - ``"simple loop"``: a simple lattice loop wound ``turns`` times. Its plaquette
      variables are independent with a conjugation-invariant law, so the holonomy of
      one turn has the law of their product in any order (the law of the loop is the
      convolution of the plaquette laws; Driver 1989, Levy 2003): one factor per
      enclosed cell.
    - ``"axial gauge"``: any other loop: each horizontal step's link written as the
      ordered product of the plaquettes of its column (`gauss_axial_factors`).
    """
    lat = problem.lattice_loops[loop_index]
    wound = _wound_simple(lat)  # the law of a loop does not depend on the gauge
    if wound is not None:
        sign, turns = wound
        cells = np.flatnonzero(sign.ravel())
        mu = np.asarray(problem.field.area.cell_measures(problem.grid),
                        dtype=float).ravel()[cells]
        U = np.diag(sign.ravel()[cells].astype(float))
        return U, mu, turns, "simple loop"
    rows_out = gauss_axial_factors(problem, loop_index)
    if not rows_out:
        return np.zeros((0, 0)), np.zeros(0), 1, "axial gauge"
    labels = sorted({c for c, _ in rows_out})
    where = {c: i for i, c in enumerate(labels)}
    U = np.zeros((len(rows_out), len(labels)))
    for r, (c, v) in enumerate(rows_out):
        U[r, where[c]] = v
    mu = np.asarray(problem.plan.cell_measures, dtype=float).ravel()[labels]
    return U, mu, 1, "axial gauge"


def gauss_series(problem: "LatticeProblem", loop_index: int = 0, order: int = 4, *,
                 exact: bool = False) -> SeriesResult:
    """Coefficients c_0..c_order of the ``gauss`` scheme's Wilson loop in lambda.

    One Gaussian exponential per plaquette, expanded by the same Wick transfer as the
    ``linear`` scheme (:func:`factor_product_series`), on the factor list of
    `gauss_loadings` (``method`` says which route). A simple loop (one turn) gives the
    product of the one-plaquette series, ``prod_c f(lambda mu_c)`` with f the
    Gaussian-matrix value (:func:`holonomy.exact.gaussian_step`).

    References
    ----------
    .. [1] Driver, B. K. (1989). Commun. Math. Phys. 123, 575-616.
    .. [2] Wick, G. C. (1950). Phys. Rev. 80, 268-272.
    """
    loop_index = _problem_iv(problem, loop_index)
    order = series_order_iv(order)
    U, mu, turns, route = gauss_loadings(problem, loop_index)
    if U.shape[0] == 0:
        res = exp_product_series(problem.group, np.zeros((1, 1)), int(order),
                                 rep=problem.rep, exact=exact)
    else:
        if exact:
            h = problem.field.spacing
            mu = np.array([sympy.nsimplify(v, rational=True, tolerance=1e-12 * max(1.0, h * h))
                           for v in mu], dtype=object)
        res = factor_product_series(problem.group, U, mu, int(order), rep=problem.rep,
                                    exact=exact, turns=turns)
    res.method = f"gauss lattice series ({route})"
    return res


def _bessel_asymptotic(nu: int, order: int):
    """Coefficients of ``I_nu(x) sqrt(2 pi x) e^{-x} ~ sum_k (-1)^k a_k(nu) y^k``,
    ``y = 1/x``, ``a_k = prod_{i<=k} (4 nu^2 - (2i - 1)^2) / (k! 8^k)`` (Abramowitz and
    Stegun 9.7.1), as sympy Rationals up to ``y^order``."""
    out, a = [], sympy.Integer(1)
    for k in range(order + 1):
        if k:
            a = a * (4 * nu * nu - (2 * k - 1) ** 2) / (8 * k)
        out.append((-1) ** k * a)
    return out


def _ratio_series(num: list, den: list, order: int) -> list:
    """Power-series quotient num / den up to y^order (den[0] != 0)."""
    q = []
    for j in range(order + 1):
        v = num[j] - sum(q[i] * den[j - i] for i in range(j))
        q.append(v / den[0])
    return q


def wilson_series(problem: "LatticeProblem", loop_index: int = 0, order: int = 4
                  ) -> SeriesResult:
    """Weak-coupling expansion of the ``wilson`` scheme's lattice Wilson loop.

    The one-plaquette value is a ratio of modified Bessel functions of ``b = k / s``
    (U(1): ``I_1(b) / I_0(b)``; SU(2): ``I_2(2b) / I_1(2b)``, s = lambda mu(cell); see
    :mod:`holonomy.exact._wilson_action`), and independent plaquettes give ``w^A`` for a
    simple loop of A cells and ``prod_c I_{n_c}(b) / I_0(b)`` for any U(1) loop. Each
    Bessel function is replaced by its large-argument expansion, so the series in lambda
    is **asymptotic**: it misses terms of order ``exp(-2b)`` and does not converge; the
    result has ``asymptotic=True``. U(1) (any loop) and SU(2) (simple loops) at
    constant density; otherwise NotImplementedError saying so.

    References
    ----------
    .. [1] M. Abramowitz and I. A. Stegun, "Handbook of Mathematical Functions" (1964),
       9.7.1 (asymptotic expansion of I_nu for large argument).
    .. [2] D. J. Gross and E. Witten, Phys. Rev. D 21 (1980) 446-453 (independent
       plaquettes in axial gauge on the plane).
    """
    loop_index = _problem_iv(problem, loop_index)
    order = series_order_iv(order)
    g = problem.group
    rep = problem.rep if isinstance(problem.rep, str) else problem.rep.name
    if rep not in ("fundamental", "defining"):
        raise NotImplementedError("the Wilson action's expansion is implemented for the "
                                  "fundamental representation only")
    area = problem.field.area
    if not (isinstance(area, AreaForm) and area.is_constant and area.base > 0):
        raise NotImplementedError("the Wilson action's expansion needs a constant "
                                  "positive density")
    M = int(order)
    lat = problem.lattice_loops[loop_index]
    w = lat.winding_numbers()
    mu = sympy.nsimplify(area.base * problem.grid.cell_area, rational=True,
                         tolerance=1e-15 * max(1.0, problem.grid.cell_area))
    k = sympy.nsimplify(g.k, rational=True, tolerance=1e-15 * max(1.0, g.k))
    lam = sympy.Symbol("lam")
    if g.family == "U" and g.n == 1:
        # y = 1/b = lambda mu / k; W = prod_c I_{n_c}(b) / I_0(b)
        den = _bessel_asymptotic(0, M)
        total = sympy.Integer(1)
        for n_c, count in zip(*np.unique(np.abs(w[w != 0]), return_counts=True)):
            q = _ratio_series(_bessel_asymptotic(int(n_c), M), den, M)
            factor = sum(c * (lam * mu / k) ** j for j, c in enumerate(q))
            total = sympy.expand(sympy.series(total * factor ** int(count), lam, 0, M + 1)
                                 .removeO())
        method = "Wilson action, U(1): asymptotic expansion of I_n(b)/I_0(b)"
    elif g.family == "SU" and g.n == 2:
        nz = w[w != 0]
        nodes = np.asarray(lat.nodes)[:-1]
        if len(np.unique(nodes, axis=0)) != len(nodes) or not (
                np.all(nz == 1) or np.all(nz == -1)):
            raise NotImplementedError("the Wilson action's expansion for SU(2) is "
                                      "implemented for simple loops only")
        # w = I_2(x) / I_1(x) with x = 2b = 2k / s: y = lambda mu / (2k)
        q = _ratio_series(_bessel_asymptotic(2, M), _bessel_asymptotic(1, M), M)
        factor = sum(c * (lam * mu / (2 * k)) ** j for j, c in enumerate(q))
        total = sympy.expand(sympy.series(factor ** int(nz.size), lam, 0, M + 1).removeO())
        method = "Wilson action, SU(2) simple loop: asymptotic expansion of (I_2/I_1)^A"
    else:
        raise NotImplementedError(
            f"the Wilson action's weak-coupling expansion is implemented for U(1) and "
            f"SU(2) only, not {g.family}({g.n})")
    coeffs = [sympy.nsimplify(total.coeff(lam, j)) for j in range(M + 1)]
    return SeriesResult(coefficients=coeffs, order=M, rep=rep, dim=int(g.N), exact=True,
                        method=method, asymptotic=True)

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

import numpy as np

from ._sampling import LatticeProblem
from ._series import SeriesResult, exp_product_series, factor_product_series

__all__ = ["lattice_covariance", "lattice_loadings", "lattice_series"]


def lattice_loadings(problem: LatticeProblem, loop_index: int = 0
                     ) -> tuple[np.ndarray, np.ndarray]:
    """The step exponents as sums of independent interval noises: ``(U, mu)``.

    ``A_e = sum_s U_es eta_s`` with eta_s of variance ``lambda mu_s`` per component;
    ``U_es = -dir_e`` if interval s lies on the chain of step e, else 0. Intervals used
    by exactly the same steps are merged (their noises always appear summed), so S is
    the number of distinct ways the loop's steps share a column. Steps on the reference
    line (identity links) are left out.
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
    used = np.any(U != 0, axis=0)
    U, measure = U[:, used], np.asarray(plan.measure, dtype=float)[used]
    if U.shape[1] == 0:
        return U, measure
    patterns, inverse = np.unique(U, axis=1, return_inverse=True)
    merged = np.zeros(patterns.shape[1])
    np.add.at(merged, inverse.ravel(), measure)
    return patterns, merged


def lattice_covariance(problem: LatticeProblem, loop_index: int = 0) -> np.ndarray:
    """The matrix C (per unit coupling) of the loop's step exponents A_e.

    Steps on the reference line (identity links) are left out. Returns an (m, m)
    symmetric matrix, m the number of remaining horizontal steps:
    ``C_ef = dir_e dir_f mu(chain(e) & chain(f)) = (U diag(mu) U^T)_ef``.
    """
    U, mu = lattice_loadings(problem, loop_index)
    return (U * mu) @ U.T


def lattice_series(problem: LatticeProblem, loop_index: int = 0, order: int = 4, *,
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
    if isinstance(order, bool) or not isinstance(order, numbers.Integral) or order < 0:
        raise ValueError(f"`order` must be an integer >= 0, got {order!r}.")
    if not 0 <= loop_index < len(problem.loops):
        raise ValueError(f"`loop_index` must be in [0, {len(problem.loops)}), got {loop_index!r}.")
    U, mu = lattice_loadings(problem, loop_index)
    if exact:
        import sympy

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

"""Exact Wilson loops of any polygonal loop: lasso decomposition + tensor contraction.

``evaluate_polygon`` computes ``E[tr pi(H_loop)] / dim pi`` for the continuum Yang-Mills
holonomy of a closed polygon (any number of self-intersections and turns) in the
fundamental representation of a group from :mod:`holonomy.groups`:

1. the polygon's arrangement (:func:`discretize.arrangement`): faces, exact areas;
2. the loop as a word in independent lasso variables ``X_F``, each distributed as the
   heat kernel at time ``lambda mu(F)`` (:func:`holonomy.exact.lasso_word`);
3. reduction of the word (free and cyclic cancellation, merging of variables that always
   occur as one block, dropping of variables occurring once with the factor
   ``exp(-c t / 2)``);
4. contraction of the moment tensors ``E[V^{(x)p} (x) conj(V)^{(x)q}] = exp(t L_{p,q})``
   along the word (:mod:`holonomy.exact._tensor`).

The value is an entire function of the face times, so face areas may be negative or
complex: the result is then the analytic continuation (no measure exists). With
``exact=True`` the value is a sympy expression (``sum c exp(sum mu_F t_F)`` with rational
``c`` and ``mu``) in the coupling and areas given, so its Taylor coefficients in the
coupling are exact.

Cost: a variable occurring ``p + q`` times needs an ``N^{p+q}`` square matrix and its
eigen-decomposition; the contraction costs about ``N^{(length of the reduced word)}`` in
the worst case. SU(2) loops with a handful of crossings take milliseconds; beyond
``N^{p+q}`` of a few thousand, use Monte Carlo.

References
----------
.. [1] T. Levy, "Yang-Mills measure on compact surfaces", Mem. Amer. Math. Soc. 166
   (2003), no. 790.
.. [2] T. Levy, "Two-dimensional Markovian holonomy fields", Asterisque 329 (2010).
.. [3] B. K. Driver, "YM2: continuum expectations, lattice convergence, and lassos",
   Comm. Math. Phys. 123 (1989), 575-616.
.. [4] A. N. Sengupta, "Gauge theory on compact surfaces", Mem. Amer. Math. Soc. 126
   (1997), no. 600.
"""

from __future__ import annotations

import numbers
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np

from ._tensor import contract_exact, contract_numeric, contraction_labels
from ._word import ReducedWord, lasso_word, reduce_for_trace

__all__ = ["ExactEvaluation", "evaluate_polygon", "evaluate_word", "face_measures"]

_EINSUM_LABELS = 52  # numpy einsum accepts at most 52 distinct index labels


@dataclass(frozen=True)
class ExactEvaluation:
    """The exact expectation of a normalized Wilson loop.

    Attributes
    ----------
    value : complex or float or sympy.Expr
        ``E[tr pi(H)] / dim pi``; a sympy expression when ``exact=True``.
    word : tuple of int
        The loop as a word in the face variables (letter ``f`` = lasso around face
        ``f - 1``), before reduction.
    reduced : ReducedWord
        The reduced word, the times of its variables and the dropped times.
    face_times : tuple
        Heat-kernel time ``lambda mu(F)`` of each face variable of ``word``.
    method : str
        ``"lasso+tensor"``.
    faces : object
        The :class:`discretize.Arrangement` (``evaluate_polygon``) or None.
    """

    value: object
    word: tuple
    reduced: ReducedWord
    face_times: tuple
    method: str = "lasso+tensor"
    faces: object = field(default=None, repr=False)


# ---------------------------------------------------------------------------
# area measures of faces


def _shoelace(poly: np.ndarray) -> float:
    x, y = poly[:, 0], poly[:, 1]
    return 0.5 * float(np.dot(x, np.roll(y, -1)) - np.dot(np.roll(x, -1), y))


def _clip_halfplane(poly, axis, bound, keep_below):
    """Sutherland-Hodgman clip by x_axis <= bound (keep_below) or >= bound."""
    if len(poly) == 0:
        return poly
    out = []
    n = len(poly)
    for k in range(n):
        a, b = poly[k], poly[(k + 1) % n]
        ina = a[axis] <= bound if keep_below else a[axis] >= bound
        inb = b[axis] <= bound if keep_below else b[axis] >= bound
        if ina:
            out.append(a)
        if ina != inb:
            s = (bound - a[axis]) / (b[axis] - a[axis])
            out.append(a + s * (b - a))
    return np.array(out).reshape(-1, 2)


def _clipped_area(poly, x0, y0, x1, y1) -> float:
    """Area of polygon (counterclockwise, possibly non-convex) inside a rectangle.

    Sutherland-Hodgman clipping by the four half-planes keeps the winding number inside
    the rectangle and makes it zero outside, so the shoelace area is exact.
    (Sutherland and Hodgman, Commun. ACM 17 (1974), 32-42.)
    """
    for axis, bound, below in ((0, x1, True), (0, x0, False), (1, y1, True), (1, y0, False)):
        poly = _clip_halfplane(poly, axis, bound, below)
        if len(poly) < 3:
            return 0.0
    return _shoelace(poly)


def face_measures(arr, area_density=None) -> np.ndarray:
    """Measure ``mu(F)`` of each bounded face of an arrangement.

    Parameters
    ----------
    arr : discretize.Arrangement
    area_density : None, float, callable or AreaForm-like, optional
        None: Lebesgue measure (the exact shoelace areas). A real number: a constant
        density. A callable: ``area_density(polygon) -> measure`` of a counterclockwise
        face polygon ``(k, 2)``. An object with ``base`` and ``rects``
        (``discretize.AreaForm``: the density is the value of the last rectangle
        containing the point, else ``base``): integrated exactly by clipping.
    """
    areas = arr.areas
    if area_density is None:
        return areas.copy()
    if isinstance(area_density, numbers.Real) and not isinstance(area_density, bool):
        return float(area_density) * areas
    polys = [arr.face_polygon(i) for i in range(arr.n_faces)]
    if hasattr(area_density, "base") and hasattr(area_density, "rects"):
        base, rects = float(area_density.base), tuple(area_density.rects)
        if not rects:
            return base * areas
        xs = sorted({r[0] for r in rects} | {r[2] for r in rects})
        ys = sorted({r[1] for r in rects} | {r[3] for r in rects})
        out = np.zeros(len(polys))
        for i, poly in enumerate(polys):
            covered, total = 0.0, 0.0
            for xa, xb in zip(xs[:-1], xs[1:]):
                for ya, yb in zip(ys[:-1], ys[1:]):
                    a = _clipped_area(poly, xa, ya, xb, yb)
                    if a == 0.0:
                        continue
                    cx, cy = 0.5 * (xa + xb), 0.5 * (ya + yb)
                    value = base
                    for r in rects:  # the last rectangle containing the cell wins
                        if r[0] <= cx <= r[2] and r[1] <= cy <= r[3]:
                            value = r[4]
                    covered += a
                    total += value * a
            out[i] = total + base * (areas[i] - covered)
        return out
    if callable(area_density):
        return np.array([float(area_density(p)) for p in polys])
    raise ValueError(
        "`area_density` must be None, a real number, a callable polygon -> measure or an "
        f"AreaForm; got {area_density!r}."
    )


# ---------------------------------------------------------------------------
# validation


def _group_iv(group, rep):
    if not (hasattr(group, "basis") and hasattr(group, "N")):
        raise TypeError(
            f"`group` must be a Group from holonomy.groups.make_group; got {group!r}."
        )
    name = rep if isinstance(rep, str) else getattr(rep, "name", None)
    if not isinstance(name, str) or name.strip().lower() not in ("fundamental", "defining"):
        raise ValueError(
            f"`rep` must be 'fundamental': {rep!r} is a representation the route does "
            "not support (the exact evaluation contracts tensor powers of the "
            "fundamental representation; use Monte Carlo for other representations)."
        )
    basis = np.asarray(group.basis)
    C = np.einsum("aij,ajk->ik", basis, basis)
    c = -C[0, 0].real
    scalar = np.allclose(C, -c * np.eye(basis.shape[-1]), atol=1e-12)
    return basis, c, scalar


def _times_iv(face_areas, coupling, exact, n_needed):
    if exact:
        import sympy

        def to_sym(x, name):
            if isinstance(x, float):
                if not np.isfinite(x):
                    raise ValueError(f"`{name}` must be finite; got {x!r}.")
                return sympy.nsimplify(x, rational=True)
            if isinstance(x, Fraction):
                return sympy.Rational(x.numerator, x.denominator)
            try:
                s = sympy.sympify(x)
            except (sympy.SympifyError, TypeError):
                raise ValueError(
                    f"`{name}` must be a number or sympy expression; got {x!r}."
                ) from None
            if s.has(sympy.nan, sympy.zoo, sympy.oo, -sympy.oo):
                raise ValueError(f"`{name}` must be finite; got {x!r}.")
            return s

        lam = to_sym(coupling, "coupling")
        areas = [to_sym(a, f"face_areas[{i}]") for i, a in enumerate(face_areas)]
    else:
        try:
            lam = complex(coupling)
        except (TypeError, ValueError):
            raise ValueError(f"`coupling` must be a finite number; got {coupling!r}.") from None
        if not np.isfinite(lam):
            raise ValueError(f"`coupling` must be finite; got {coupling!r}.")
        areas = []
        for i, a in enumerate(face_areas):
            try:
                z = complex(a)
            except (TypeError, ValueError):
                raise ValueError(
                    f"`face_areas[{i}]` must be a finite (real or complex) number; got {a!r}."
                ) from None
            if not np.isfinite(z):
                raise ValueError(
                    f"`face_areas[{i}]` must be finite; got {a!r} (a face area that is not "
                    "finite has no heat kernel)."
                )
            areas.append(z)
    if len(areas) < n_needed:
        raise ValueError(
            f"`face_areas` must give one area per face variable ({n_needed}); got {len(areas)}."
        )
    return lam, areas


def _check_size(reduced: ReducedWord, N: int, max_dim: int):
    for f, (p, q, _) in contraction_labels(reduced.word).items():
        D = N ** (p + q)
        if D > max_dim:
            raise ValueError(
                f"the reduced word is too large to contract: a face variable occurs "
                f"{p + q} times, so its moment tensor is a {D} x {D} matrix "
                f"(N^(p+q) = {N}^{p + q}) above `max_dim` = {max_dim}; use Monte Carlo "
                "(holonomy.estimate_wilson_loops) for this loop."
            )
    if len(reduced.word) > _EINSUM_LABELS:
        raise ValueError(
            f"the reduced word is too large to contract: {len(reduced.word)} letters "
            f"(at most {_EINSUM_LABELS}); use Monte Carlo (holonomy.estimate_wilson_loops)."
        )


def _word_iv(word):
    try:
        w = tuple(int(x) for x in word)
    except (TypeError, ValueError):
        raise ValueError(f"`word` must be a sequence of nonzero integers; got {word!r}.") from None
    if any(x == 0 for x in w) or any(int(x) != x for x in word):
        raise ValueError(f"`word` must be a sequence of nonzero integers; got {word!r}.")
    return w


# ---------------------------------------------------------------------------


def _evaluate(basis, c, scalar, word, times, exact, max_dim):
    N = basis.shape[-1]
    reduced = reduce_for_trace(word, times, drop_single=scalar)
    if max_dim is None:
        max_dim = 256 if exact else 2048
    _check_size(reduced, N, max_dim)
    if exact:
        import sympy

        cr = sympy.nsimplify(c, rational=True, tolerance=1e-12)
        val = contract_exact(basis, reduced.word, reduced.times) / N
        val = val * sympy.exp(-cr * sum(reduced.dropped, sympy.Integer(0)) / 2)
        return reduced, sympy.expand(sympy.powsimp(sympy.expand(val)))
    val = contract_numeric(basis, reduced.word, reduced.times) / N
    val *= np.exp(-c * sum(reduced.dropped, 0j) / 2)
    return reduced, val


def evaluate_word(group, word, face_areas, *, coupling=1.0, rep="fundamental",
                  exact: bool = False, max_dim: int | None = None) -> ExactEvaluation:
    """Exact ``E[tr pi(word)] / dim pi`` for independent heat-kernel face variables.

    Parameters
    ----------
    group : Group
        From :func:`holonomy.groups.make_group`.
    word : sequence of int
        Letters ``+f`` (variable ``X_f``, 1-based) and ``-f`` (its inverse), read as a
        matrix product left to right.
    face_areas : sequence
        Area of face ``f`` at index ``f - 1``; ``X_f`` is distributed as the heat kernel
        at time ``coupling * face_areas[f - 1]``. Negative or complex values give the
        analytic continuation; sympy expressions are accepted with ``exact=True``.
    coupling : number or sympy expression, optional
        lambda (default 1).
    rep : str, optional
        Only ``"fundamental"`` is supported.
    exact : bool, optional
        Return a sympy expression (default False: a complex number).
    max_dim : int, optional
        Largest moment matrix ``N^{p+q}`` allowed (default 2048; 256 if ``exact``).

    Returns
    -------
    ExactEvaluation

    References
    ----------
    .. [1] T. Levy, Mem. Amer. Math. Soc. 166 (2003); Adv. Math. 218 (2008) 537-575.
    .. [2] E. M. Rains, J. Theoret. Probab. 10 (1997), 659-679.
    """
    basis, c, scalar = _group_iv(group, rep)
    w = _word_iv(word)
    n_needed = max((abs(x) for x in w), default=0)
    lam, areas = _times_iv(face_areas, coupling, exact, n_needed)
    times = tuple(lam * a for a in areas)
    reduced, val = _evaluate(basis, c, scalar, w, times, exact, max_dim)
    return ExactEvaluation(value=val, word=w, reduced=reduced, face_times=times)


def evaluate_polygon(group, vertices, turns: int = 1, *, coupling=1.0,
                     rep="fundamental", area_density=None, exact: bool = False,
                     max_dim: int | None = None) -> ExactEvaluation:
    """Exact continuum Wilson loop ``E[tr pi(H)] / dim pi`` of a closed polygon.

    Parameters
    ----------
    group : Group
        From :func:`holonomy.groups.make_group`.
    vertices : array_like, shape (m, 2)
        The polygon (counterclockwise positive; self-intersections allowed).
    turns : int, optional
        Number of times the loop runs around the polygon.
    coupling : number or sympy expression, optional
        lambda; face ``F`` has heat-kernel time ``lambda mu(F)``. Complex allowed.
    rep : str, optional
        Only ``"fundamental"``.
    area_density : None, float, callable or AreaForm, optional
        The measure mu (see :func:`face_measures`); signed densities give the analytic
        continuation.
    exact : bool, optional
        Return a sympy expression; face areas are the exact rational shoelace areas of
        the binary input coordinates (times a rational density, if a number is given).
    max_dim : int, optional
        Largest moment matrix allowed (default 2048; 256 if ``exact``).

    Returns
    -------
    ExactEvaluation
        ``faces`` holds the :class:`discretize.Arrangement`.

    References
    ----------
    .. [1] T. Levy, Mem. Amer. Math. Soc. 166 (2003); Asterisque 329 (2010).
    .. [2] B. K. Driver, Comm. Math. Phys. 123 (1989), 575-616.

    Examples
    --------
    >>> from holonomy.groups import make_group
    >>> G = make_group("U", 1)
    >>> r = evaluate_polygon(G, [(0, 0), (1, 0), (1, 1), (0, 1)], turns=2)
    >>> r.word, f"{r.value.real:.6f}"  # exp(-n^2 A / 2) = exp(-2)
    ((1, 1), '0.135335')

    A loop whose word does not reduce to closed forms (SU(2), physics metric):

    >>> G = make_group("SU", 2, "physics")
    >>> loop = [(0, 0), (4, 0), (4, 3), (1, 3), (1, 2), (3, 2), (3, 1), (2, 1), (2, 4), (0, 4)]
    >>> r = evaluate_polygon(G, loop, coupling=0.25)
    >>> r.faces.n_crossings, r.reduced.word
    (2, (1, -2, 1, 2))
    """
    from discretize import arrangement

    basis, c, scalar = _group_iv(group, rep)
    arr = arrangement(vertices, turns)
    if exact and area_density is None:
        areas = list(arr.exact_areas)  # exact rationals of the binary coordinates
    elif exact and isinstance(area_density, numbers.Real) and not isinstance(area_density, bool):
        import sympy

        rho = sympy.nsimplify(area_density, rational=True)
        areas = [rho * sympy.Rational(a.numerator, a.denominator) for a in arr.exact_areas]
    else:
        areas = list(face_measures(arr, area_density))
    w = lasso_word(arr)
    lam, areas = _times_iv(areas, coupling, exact, arr.n_faces)
    times = tuple(lam * a for a in areas)
    reduced, val = _evaluate(basis, c, scalar, w, times, exact, max_dim)
    return ExactEvaluation(value=val, word=w, reduced=reduced, face_times=times, faces=arr)

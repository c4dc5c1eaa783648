"""Exact Wilson loops of any polygonal loop: lasso decomposition, closed forms and
tensor contraction.

``evaluate_polygon`` computes ``E[tr pi(H_loop)] / dim pi`` for the continuum Yang-Mills
holonomy of a closed polygon (any number of self-intersections and turns; touching
points and retraced edges included) in any representation pi of a group from
:mod:`holonomy.groups` that has matrices (and the class functions ``tr U^p``):

1. the polygon's arrangement (:func:`discretize.arrangement`): faces, exact areas;
2. the loop as a word in independent lasso variables ``X_F``, each distributed as the
   heat kernel at time ``lambda mu(F)`` (:func:`holonomy.exact.lasso_word`), or with any
   other conjugation-invariant law (:class:`holonomy.exact.WilsonLaw`);
3. reduction of the word (free and cyclic cancellation, merging of variables that always
   occur as one block, dropping of variables occurring once with the factor
   ``E[chi_pi(X)] / dim pi``);
4. closed forms where the reduced word has one: pieces sharing no variable (lobes)
   factor by Schur's lemma; a power ``X^n`` of one variable is the Adams operation
   psi^n followed by Racah-Speiser reduction into irreducible characters (U(N), SU(N):
   :mod:`holonomy.exact._characters`); at N = infinity the free route
   (:mod:`holonomy.exact._master`);
5. otherwise the contraction of the moment tensors
   ``E[V^{(x)p} (x) conj(V)^{(x)q}] = exp(t L_{p,q})`` along the word, with ``L`` built
   from the representation's own matrices ``pi(X_a)`` (:mod:`holonomy.exact._tensor`).

Several loops (``evaluate_polygons``, ``evaluate_words``) are several words in the same
face variables: ``E[prod_i tr pi(w_i)]`` is one contraction.

The value is an entire function of the face times, so face areas may be negative or
complex: the result is then the analytic continuation (no measure exists). With
``exact=True`` the value is a sympy expression (``sum c exp(sum mu_F t_F)`` with rational
``c`` and ``mu``) in the coupling and areas given, so its Taylor coefficients in the
coupling are exact (tensor route only).

Cost: a variable occurring ``p + q`` times needs a ``d^{p+q}`` square matrix (d the
dimension of pi) and its eigen-decomposition; the contraction costs about
``d^{(length of the reduced word)}`` in the worst case. When no route applies,
:class:`holonomy.exact.ExactRouteError` names the limit (``size``, ``representation``,
``geometry``).

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

from discretize import arrangement, joint_arrangement
from noise import ArgumentError, ArgumentTypeError

from ._characters import adams_decomposition, class_weights, dominant_casimir, weyl_dimension
from ._laws import ExactRouteError, law_character
from ._master import master_field_word
from ._tensor import contract_exact, contract_mixed, contract_numeric, contraction_labels
from ._unitary import free_unitary_moment
from ._word import ReducedWord, lasso_words, reduce_for_trace, reduce_for_traces

__all__ = ["ExactEvaluation", "evaluate_polygon", "evaluate_polygons", "evaluate_word",
           "evaluate_words", "face_measures"]

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


@dataclass(frozen=True)
class _RepSetup:
    """What the contraction needs to know about the representation."""

    group: object
    name: str
    matrices: np.ndarray  # pi(X_a), shape (d, D, D), or the basis for ``power:p``
    casimir: float  # c of the representation the words are contracted in
    irreducible: bool  # E[pi(X)] is scalar for every conjugation-invariant law
    power: int  # tr U^p: the words are repeated p times
    weights: list | None  # U(N) weights of the contracted representation, if known
    highest: tuple | None = None  # its highest weight, if irreducible with known weights


def _group_iv(group, rep):
    if not (hasattr(group, "basis") and hasattr(group, "N")):
        raise TypeError(
            f"`group` must be a Group from holonomy.groups.make_group; got {group!r}."
        )
    if isinstance(rep, str):
        rep_obj = group.rep(rep)
    elif hasattr(rep, "name") and hasattr(rep, "casimir"):
        rep_obj = rep
    else:
        raise ValueError(f"`rep` must be a representation spec string; got {rep!r}.")
    name = rep_obj.name
    power = 1
    if name.startswith("power:"):
        # tr U^p is the fundamental trace of the word repeated p times
        power = int(name.split(":", 1)[1])
        rep_obj = group.rep("fundamental")
    try:
        mats = np.asarray(rep_obj.algebra_matrix(np.asarray(group.basis)))
    except ValueError as exc:
        raise ExactRouteError("representation", f"{name!r} has no matrices ({exc})") from None
    c = rep_obj.casimir
    if c is None:  # a reducible representation: the mean Casimir (dropping is off)
        c = float(-np.einsum("aij,aji->", mats, mats).real / mats.shape[-1])
    weights = class_weights(group, rep_obj)
    highest = None
    if weights is not None:
        dec = adams_decomposition(weights)
        if len(dec) == 1 and next(iter(dec.values())) == 1:
            highest = next(iter(dec))
    return _RepSetup(group, name, mats, c, bool(rep_obj.irreducible), power, weights,
                     highest)


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


def _check_size(words, N: int, max_dim: int):
    for f, (p, q, _) in contraction_labels(words).items():
        D = N ** (p + q)
        if D > max_dim:
            raise ExactRouteError(
                "size",
                f"the reduced word is too large to contract: a face variable occurs "
                f"{p + q} times, so its moment tensor is a {D} x {D} matrix "
                f"(dim^(p+q) = {N}^{p + q}) above `max_dim` = {max_dim}; use Monte Carlo "
                "(holonomy.estimate_wilson_loops) for this loop.")
    if sum(len(w) for w in words) > _EINSUM_LABELS:
        raise ExactRouteError(
            "size",
            f"the reduced word is too large to contract: {sum(len(w) for w in words)} "
            f"letters (at most {_EINSUM_LABELS}); use Monte Carlo "
            "(holonomy.estimate_wilson_loops).")


def _word_iv(word):
    try:
        w = tuple(int(x) for x in word)
    except (TypeError, ValueError):
        raise ValueError(f"`word` must be a sequence of nonzero integers; got {word!r}.") from None
    if any(x == 0 for x in w) or any(int(x) != x for x in word):
        raise ValueError(f"`word` must be a sequence of nonzero integers; got {word!r}.")
    return w


# ---------------------------------------------------------------------------


def _split_lobes(word) -> list:
    """Split a cyclic word into pieces with no variable in common (lobes).

    For independent conjugation-invariant variables and an irreducible pi,
    ``E[tr pi(A B)] / d = (E[tr pi(A)] / d) (E[tr pi(B)] / d)`` when A and B share no
    variable (Schur's lemma: ``E[pi(A)]`` is scalar).
    """
    n = len(word)
    if n > 256:  # cubic search: long words go to the tensor route whole
        return [tuple(word)]
    for length in range(1, n):
        for i in range(n):
            seg = [word[(i + k) % n] for k in range(length)]
            rest = [word[(i + length + k) % n] for k in range(n - length)]
            if not ({abs(x) for x in seg} & {abs(x) for x in rest}):
                return [tuple(seg), tuple(rest)]
    return [tuple(word)]


def _adams(setup: _RepSetup, n: int, law):
    """``E[chi(X^n)] / dim`` by the Adams operation and Racah-Speiser reduction."""

    group = setup.group
    special = group.family == "SU"
    total = 0j
    for lam, a in adams_decomposition(setup.weights, abs(n)).items():
        c = dominant_casimir(lam, group.k, special)
        total += a * weyl_dimension(lam) * law_character(law, c, lam)
    return total / len(setup.weights)


class _Evaluator:
    """Reduce, split and contract words for one representation and set of laws."""

    def __init__(self, setup: _RepSetup, max_dim: int, large_n: bool = False):
        self.setup = setup
        self.max_dim = max_dim
        self.large_n = large_n
        self.routes: set[str] = set()

    def words(self, words, times):
        """``E[prod_i tr pi(w_i) / d]`` (a complex number)."""

        setup = self.setup
        words = [tuple(w) * setup.power for w in words]
        reduced = reduce_for_traces(words, times, drop_single=setup.irreducible)
        value = 1 + 0j
        for t in reduced.dropped:
            value *= (law_character(t, setup.casimir, setup.highest) if not self.large_n
                      else np.exp(-t / 2))
        for group in self._components(reduced.words):
            ws = [reduced.words[i] for i in group]
            if len(ws) == 1:
                value *= self.single(ws[0], reduced.times)
            elif self.large_n:  # traces factorize as N -> infinity
                self.routes.add("free")
                for w in ws:
                    value *= self.single(w, reduced.times)
            else:
                value *= self.tensor(ws, reduced.times)
        return value

    @staticmethod
    def _components(words):
        """Indices of words grouped by shared variables (connected components)."""
        groups: list[tuple[set, list]] = []
        for i, w in enumerate(words):
            vs = {abs(x) for x in w}
            hit = [g for g in groups if g[0] & vs]
            merged = (vs.union(*[g[0] for g in hit]), sorted(sum([g[1] for g in hit], [i])))
            groups = [g for g in groups if not (g[0] & vs)] + [merged]
        return [g[1] for g in groups]

    def single(self, word, times):
        setup = self.setup
        if not word:
            return 1.0
        if setup.irreducible or self.large_n:
            r = reduce_for_trace(word, times, drop_single=True)
            value = 1 + 0j
            if r.dropped:
                for t in r.dropped:
                    value *= law_character(t, setup.casimir, setup.highest)
            word, times = r.word, r.times
            if not word:
                return value
            pieces = _split_lobes(word)
            if len(pieces) > 1:
                self.routes.add("lobes")
                for piece in pieces:
                    value *= self.single(piece, times)
                return value
            return value * self.closed_or_tensor(word, times)
        return self.closed_or_tensor(word, times)

    def closed_or_tensor(self, word, times):
        setup = self.setup
        if len({abs(x) for x in word}) == 1:  # X^n: a wound loop
            f = abs(word[0])
            n = len(word)
            if self.large_n:
                self.routes.add("free")
                return complex(free_unitary_moment(n, times[f - 1]))
            if setup.weights is not None:
                self.routes.add("adams")
                return _adams(setup, n, times[f - 1])
        if self.large_n:
            self.routes.add("free")
            return master_field_word(word, times)
        return self.tensor([word], times)

    def tensor(self, words, times):
        mats = self.setup.matrices
        D = mats.shape[-1]
        _check_size(words, D, self.max_dim)
        self.routes.add("tensor")
        return contract_numeric(mats, words, times) / D ** len(words)


def _options_iv(exact, max_dim) -> None:
    """The ``exact`` flag and ``max_dim`` of the evaluation entry points."""
    if not isinstance(exact, (bool, np.bool_)):
        raise ArgumentTypeError("exact", f"got {exact!r}; expected True or False",
                                f"`exact` must be True or False, got {exact!r}.")
    if max_dim is None:
        return
    rule = "an integer >= 1 or None"
    if isinstance(max_dim, (bool, np.bool_)) or not isinstance(max_dim, numbers.Integral):
        raise ArgumentTypeError("max_dim", f"got {max_dim!r}; expected {rule}",
                                f"`max_dim` must be {rule}, got {max_dim!r}.")
    if max_dim < 1:
        raise ArgumentError("max_dim", f"got {max_dim!r}; expected {rule}",
                            f"`max_dim` must be {rule}, got {max_dim!r}.")


def _evaluate(setup: _RepSetup, words, times, exact, max_dim, large_n=False):
    """Reduce and evaluate; returns (ReducedWord of the input, value, routes)."""
    _options_iv(exact, max_dim)
    if max_dim is None:
        max_dim = 256 if exact else 2048
    reduced = reduce_for_traces([tuple(w) * setup.power for w in words], times,
                                drop_single=setup.irreducible or large_n)
    if exact:
        import sympy

        if len(reduced.words) != 1:
            raise ExactRouteError("size", "exact=True evaluates one loop at a time")
        _check_size(reduced.words, setup.matrices.shape[-1], max_dim)
        D = setup.matrices.shape[-1]
        cr = sympy.nsimplify(setup.casimir, rational=True, tolerance=1e-12)
        val = contract_exact(setup.matrices, reduced.word, reduced.times) / D
        val = val * sympy.exp(-cr * sum(reduced.dropped, sympy.Integer(0)) / 2)
        return reduced, sympy.expand(sympy.powsimp(sympy.expand(val))), {"tensor"}
    ev = _Evaluator(setup, max_dim, large_n)
    value = ev.words(words, times)
    return reduced, value, ev.routes


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
        Any representation with matrices (``"fundamental"``, ``"adjoint"``,
        ``"spin:j"``, ...) or the class function ``"power:p"``.
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
    setup = _group_iv(group, rep)
    w = _word_iv(word)
    n_needed = max((abs(x) for x in w), default=0)
    lam, areas = _times_iv(face_areas, coupling, exact, n_needed)
    times = tuple(lam * a for a in areas)
    reduced, val, routes = _evaluate(setup, [w], times, exact, max_dim)
    return ExactEvaluation(value=val, word=w, reduced=reduced, face_times=times,
                           method=_method(routes))


def _method(routes) -> str:
    return "lasso+" + "+".join(sorted(routes)) if routes else "lasso"


def evaluate_words(group, words, laws, *, rep="fundamental", max_dim: int | None = None,
                   large_n: bool = False) -> ExactEvaluation:
    """Exact ``E[prod_i tr pi(w_i) / dim pi]`` for words in the same independent
    conjugation-invariant face variables (a correlator of several loops).

    Parameters
    ----------
    group : Group or None
        From :func:`holonomy.groups.make_group`; None with ``large_n=True``.
    words : sequence of sequence of int
        One word per loop (letters as in :func:`evaluate_word`).
    laws : sequence
        Law of each variable (``laws[f - 1]``): a heat-kernel time ``lambda mu(F)``
        (number, complex allowed) or a :class:`holonomy.exact.WilsonLaw`.
    rep : str or Representation, or a sequence of them, optional
        Any representation with matrices, or ``power:p``. A sequence gives each word
        its own representation (``E[prod_i tr rho_i(w_i) / dim rho_i]``, the tensor
        route with mixed factors, :func:`holonomy.exact.contract_mixed`).
    max_dim : int, optional
        Largest moment matrix ``dim^{p+q}`` (default 2048).
    large_n : bool, optional
        The U(N) master field (N -> infinity, metric ``large-n``): traces factorize
        and each word is evaluated with free unitary Brownian motions
        (:func:`holonomy.exact.master_field_word`).

    Returns
    -------
    ExactEvaluation
        ``word`` is the first word; ``reduced.words`` all reduced words.

    References
    ----------
    .. [1] T. Levy, Mem. Amer. Math. Soc. 166 (2003), ch. 2 (joint law of lassos).
    .. [2] T. Levy, "The master field on the plane", arXiv:1112.2452 (large N).

    Examples
    --------
    Two loops around the same face (U(1), k = 1): ``E[X X] = exp(-4 t / 2)``.

    >>> from holonomy.groups import make_group
    >>> r = evaluate_words(make_group("U", 1), [[1], [1]], [0.5])
    >>> round(r.value.real, 12)  # exp(-1)
    0.367879441171
    """
    ws = [_word_iv(w) for w in words]
    if not ws:
        raise ValueError("`words` must hold at least one word.")
    n_needed = max((abs(x) for w in ws for x in w), default=0)
    laws = list(laws)
    if len(laws) < n_needed:
        raise ValueError(
            f"`laws` must give one law per face variable ({n_needed}); got {len(laws)}.")
    if not large_n and not isinstance(rep, str) and not hasattr(rep, "name"):
        return _mixed_words(group, ws, tuple(laws), list(rep), max_dim)
    if large_n:
        setup = _large_n_setup(rep)
    else:
        setup = _group_iv(group, rep)
    reduced, val, routes = _evaluate(setup, ws, tuple(laws), False, max_dim, large_n)
    return ExactEvaluation(value=val, word=ws[0], reduced=reduced, face_times=tuple(laws),
                           method=_method(routes))


def _mixed_words(group, words, laws, reps, max_dim) -> ExactEvaluation:
    """``E[prod_i tr rho_i(w_i) / dim rho_i]``, one representation per word: reduced
    (no variable is dropped: its factor would depend on the word's representation)
    and contracted with mixed factors."""
    if len(reps) != len(words):
        raise ValueError(f"`rep` must give one representation per word ({len(words)}); "
                         f"got {len(reps)}.")
    max_dim = 2048 if max_dim is None else max_dim
    algebras, repeated = [], []
    for w, rep in zip(words, reps):
        setup = _group_iv(group, rep)
        algebras.append(setup.matrices)
        repeated.append(tuple(w) * setup.power)
    reduced = reduce_for_traces(repeated, laws, drop_single=False)
    for f in {abs(x) for w in reduced.words for x in w}:
        D = 1
        for w, a in zip(reduced.words, algebras):
            D *= a.shape[-1] ** sum(1 for x in w if abs(x) == f)
        if D > max_dim:
            raise ExactRouteError(
                "size", f"the reduced words are too large to contract: a face variable's "
                f"moment tensor is a {D} x {D} matrix, above `max_dim` = {max_dim}")
    if sum(len(w) for w in reduced.words) > _EINSUM_LABELS:
        raise ExactRouteError("size", f"the reduced words have more than {_EINSUM_LABELS} "
                              "letters")
    dims = np.prod([float(a.shape[-1]) for a in algebras])
    value = contract_mixed(algebras, reduced.words, reduced.times) / dims
    return ExactEvaluation(value=value, word=words[0], reduced=reduced, face_times=laws,
                           method="lasso+tensor-mixed")


def _large_n_setup(rep) -> _RepSetup:
    name = rep if isinstance(rep, str) else getattr(rep, "name", "")
    name = name.strip().lower()
    if name in ("fundamental", "defining"):
        power = 1
    elif name.startswith("power:"):
        power = int(name.split(":", 1)[1])
    else:
        raise ExactRouteError(
            "representation",
            f"the master field (N = infinity) is the normalized trace of the fundamental "
            f"representation or of U^p ('power:p'); got {name!r}")
    return _RepSetup(None, name, np.zeros((0, 1, 1)), 1.0, True, power, None)


def evaluate_polygon(group, vertices, turns: int = 1, *, coupling=1.0,
                     rep="fundamental", area_density=None, exact: bool = False,
                     max_dim: int | None = None) -> ExactEvaluation:
    """Exact continuum Wilson loop ``E[tr pi(H)] / dim pi`` of a closed polygon.

    Parameters
    ----------
    group : Group or None
        From :func:`holonomy.groups.make_group`; None for the U(N) master field
        (N -> infinity, metric ``large-n``; fundamental or ``power:p``).
    vertices : array_like, shape (m, 2)
        The polygon (counterclockwise positive; self-intersections allowed).
    turns : int, optional
        Number of times the loop runs around the polygon.
    coupling : number or sympy expression, optional
        lambda; face ``F`` has heat-kernel time ``lambda mu(F)``. Complex allowed.
    rep : str, optional
        As in :func:`evaluate_word`.
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
    _options_iv(exact, max_dim)
    setup = None if group is None else _group_iv(group, rep)
    arr = arrangement(vertices, turns)
    if exact and area_density is None:
        areas = list(arr.exact_areas)  # exact rationals of the binary coordinates
    elif exact and isinstance(area_density, numbers.Real) and not isinstance(area_density, bool):
        import sympy

        rho = sympy.nsimplify(area_density, rational=True)
        areas = [rho * sympy.Rational(a.numerator, a.denominator) for a in arr.exact_areas]
    else:
        areas = list(face_measures(arr, area_density))
    w = lasso_words(arr)[0]
    lam, areas = _times_iv(areas, coupling, exact, arr.n_faces)
    times = tuple(lam * a for a in areas)
    if setup is None:  # the master field
        if exact:
            raise ExactRouteError("size", "the master field is evaluated in floats only")
        setup = _large_n_setup(rep)
    reduced, val, routes = _evaluate(setup, [w], times, exact, max_dim,
                                     large_n=group is None)
    return ExactEvaluation(value=val, word=w, reduced=reduced, face_times=times, faces=arr,
                           method=_method(routes))


def evaluate_polygons(group, curves, turns=None, *, coupling=1.0, rep="fundamental",
                      area_density=None, max_dim: int | None = None) -> ExactEvaluation:
    """Exact correlator ``E[prod_i tr pi(H_i) / dim pi]`` of several closed polygons.

    The curves are drawn together (:func:`discretize.joint_arrangement`): their
    holonomies are words in the same independent lasso variables, one per face of the
    joint arrangement, and the expectation is one contraction.

    Parameters
    ----------
    group : Group or None
        None: the U(N) master field (N -> infinity, metric ``large-n``), where the
        correlator is the product of the loops' master fields.
    curves : sequence of array_like
        The polygons.
    turns : sequence of int, optional
    coupling, rep, area_density, max_dim
        As in :func:`evaluate_polygon`.

    Returns
    -------
    ExactEvaluation
        ``faces`` holds the joint arrangement.

    References
    ----------
    .. [1] T. Levy, Mem. Amer. Math. Soc. 166 (2003), ch. 2; Asterisque 329 (2010).

    Examples
    --------
    Two disjoint unit squares are independent: the correlator is the product.

    >>> from holonomy.groups import make_group
    >>> G = make_group("SU", 2, "physics")
    >>> a = [(0, 0), (1, 0), (1, 1), (0, 1)]
    >>> b = [(2, 0), (3, 0), (3, 1), (2, 1)]
    >>> r = evaluate_polygons(G, [a, b], coupling=1.0)
    >>> round(r.value.real, 12) == round(float(np.exp(-0.75)), 12)  # (e^{-3/8})^2
    True
    """

    arr = joint_arrangement(curves, turns)
    areas = list(face_measures(arr, area_density))
    words = lasso_words(arr)
    lam, areas = _times_iv(areas, coupling, False, arr.n_faces)
    times = tuple(lam * a for a in areas)
    out = evaluate_words(group, words, times, rep=rep, max_dim=max_dim,
                         large_n=group is None)
    return ExactEvaluation(value=out.value, word=words[0], reduced=out.reduced,
                           face_times=times, faces=arr, method=out.method)

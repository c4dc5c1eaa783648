"""Pick the exact reference that applies to a loop, group and representation.

Routes, in order (the first that applies wins):

1. ``u1-windings``: U(1), any loop, any representation with a scalar Casimir c (a
   charge; ``power:p`` is the charge p, ``c = p^2 / k``):
   ``exp(-lambda c sum_F n_F^2 mu(F) / 2)`` (:func:`u1_loop`).
2. ``simple-loop``: a simple loop (a lattice loop visiting no node twice, or a polygon
   without self-intersections, one turn) in a representation whose Casimir operator is
   a scalar: ``exp(-c lambda mu / 2)`` with mu the measure of the enclosed region
   (:func:`simple_loop`).
3. ``hook-expansion``: U(N) or SU(N), a simple loop wound n times, the fundamental
   representation (or the class function ``power:p``, giving ``tr U^(p n)``):
   :func:`unitary_wound_loop`.
4. ``polygon-evaluation``: otherwise ``holonomy.exact.evaluate_polygon`` (the lasso
   decomposition; closed forms for independent lobes and wound pieces, else the tensor
   contraction in the representation's own matrices), any representation with
   matrices; degenerate loops (touching points, retraced edges) included.

Otherwise :class:`ExactRouteError` says which limit was hit (``size``,
``representation``, ``geometry``). The measure of a region is ``sum_cells |n_cell| mu(cell)``
for lattice loops with the given :class:`discretize.AreaForm`; for polygons the
density integrated over each face of the arrangement.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, field

import numpy as np

from discretize import AreaForm, LatticeLoop, Loop, arrangement
from noise import ArgumentError, ArgumentTypeError

from .._series import series_order_iv
from ..groups import rep_of
from ._evaluate import evaluate_polygon, evaluate_word, face_measures
from ._laws import ExactRouteError
from ._simple import simple_loop
from ._unitary import unitary_wound_loop
from ._word import lasso_word

__all__ = ["ExactValue", "exact_wilson_loop", "exact_correlator", "exact_master_field",
           "master_field_series", "lattice_polygon"]


@dataclass(frozen=True)
class ExactValue:
    """An exact (closed-form or exactly evaluated) Wilson loop.

    Attributes
    ----------
    value : complex
        The normalized Wilson loop ``E[chi_pi(H)] / d_pi``.
    method : str
        The route used: ``"u1-windings"``, ``"simple-loop"``, ``"hook-expansion"`` or
        ``"polygon-evaluation"``.
    kind : str
        Always ``"exact"`` (as opposed to Monte Carlo estimates).
    details : dict
        What the route used (turns, enclosed measure, Casimir, ...).
    """

    value: complex
    method: str
    kind: str = "exact"
    details: dict = field(default_factory=dict, compare=False)


@dataclass
class _Shape:
    """What the dispatcher needs to know about a loop."""

    windings: np.ndarray  # per face or cell
    measures: np.ndarray | None  # mu per face or cell (None: density not supported)
    simple: bool
    turns: int  # n if the loop is a simple loop wound n times, else 0
    vertices: np.ndarray | None  # one period's corner coordinates, for evaluate_polygon
    periods: int  # how many times the loop repeats ``vertices``
    area: AreaForm  # the density, passed on to the general route
    arrangement: object = None  # a polygon's arrangement when its face measures are a
    # curve's exact face areas (``Loop.face_areas``): the general route then uses them


def lattice_polygon(loop: LatticeLoop):
    """``(corners, periods)``: one period of a lattice loop as polygon corners (spikes
    and retraced runs kept: a reversal is a corner) and how many times it repeats."""
    nodes = loop.nodes[:-1]
    m = len(nodes)
    period = m
    for p in range(1, m):
        if m % p == 0 and np.array_equal(nodes, np.roll(nodes, -p, axis=0)):
            period = p
            break
    one = nodes[:period]
    coords = loop.grid.node_coordinates(one)
    d_in = one - np.roll(one, 1, axis=0)
    d_out = np.roll(one, -1, axis=0) - one
    return coords[np.any(d_in != d_out, axis=1)], m // period


def _lattice_shape(loop: LatticeLoop, area: AreaForm) -> _Shape:
    w = loop.winding_numbers()
    mu = area.cell_measures(loop.grid)
    corners, periods = lattice_polygon(loop)
    nodes = loop.nodes[:-1]
    period = len(nodes) // periods
    simple_period = len(np.unique(nodes[:period], axis=0)) == period
    turns = periods if simple_period else 0
    return _Shape(w, mu, simple_period and turns == 1, turns, corners, periods, area)


def _polygon_shape(loop: Loop, area: AreaForm) -> _Shape:
    arr = arrangement(loop.vertices, loop.turns)
    scale = area.base if area.is_constant else None
    curve_faces = None
    if scale is not None:
        # a curve's exact face areas where they match the polygon's faces
        areas, exact_faces = loop.face_areas(arr)
        mu = areas * scale
        curve_faces = arr if exact_faces else None
    else:
        # exact integration of a piecewise-constant density over polygonal faces
        mu = np.asarray(face_measures(arr, area), dtype=float)
    simple_period = (arr.n_crossings == 0 and arr.n_faces == 1
                     and abs(int(arr.winding[0])) == loop.turns)
    turns = loop.turns if simple_period else 0
    return _Shape(np.asarray(arr.winding), mu, simple_period and turns == 1, turns,
                  loop.vertices, loop.turns, area, curve_faces)


def _exact_wilson_loop_iv(group, rep, loop, coupling, area):
    for attr in ("family", "n", "k", "rep"):
        if not hasattr(group, attr):
            raise TypeError(f"`group` must be a holonomy.groups Group, got {type(group).__name__}.")
    rep_obj = rep_of(group, rep)
    if not isinstance(loop, (LatticeLoop, Loop)):
        raise TypeError(
            f"`loop` must be a discretize LatticeLoop or Loop, got {type(loop).__name__}."
        )
    coupling, area = _scalar_iv(coupling, area)
    return group, rep_obj, loop, coupling, area


def _power_of(rep) -> int | None:
    """p if the representation is the fundamental (p = 1) or the class function tr U^p."""
    name = getattr(rep, "name", "")
    if name in ("fundamental", "defining"):
        return 1
    if name.startswith("power:"):
        try:
            return int(name.split(":", 1)[1])
        except ValueError:
            return None
    return None


def exact_wilson_loop(group, rep, loop, *, coupling: float, area=None) -> ExactValue:
    r"""The exact continuum Wilson loop ``E[chi_pi(H)] / d_pi``, if a route applies.

    Parameters
    ----------
    group : Group
        From :func:`holonomy.groups.make_group`; its metric fixes the Casimirs.
    rep : str or Representation
        Representation spec (``"fundamental"``, ``"spin:1"``, ``"power:2"``, ...).
    loop : discretize.LatticeLoop or discretize.Loop
        The loop. Lattice loops use their per-cell winding numbers; polygons use the
        faces of their arrangement.
    coupling : float
        lambda > 0.
    area : discretize.AreaForm, optional
        Area density (default Lebesgue); a signed one gives the formal continuation.

    Returns
    -------
    ExactValue

    Raises
    ------
    ExactRouteError
        No route applies; its ``limit`` (``"size"``, ``"representation"`` or
        ``"geometry"``) and message say why.

    References
    ----------
    .. [1] T. Levy, "Yang-Mills measure on compact surfaces", Mem. Amer. Math. Soc. 166
       (2003), no. 790 (simple loops; U(1) through independent faces).
    .. [2] E. M. Rains, J. Theoret. Probab. 10 (1997) 659-679; T. Levy, Adv. Math. 218
       (2008) 537-575 (loops wound n times, U(N)).

    Examples
    --------
    >>> from discretize import Grid, LatticeLoop
    >>> from holonomy.groups import make_group
    >>> from holonomy.exact import exact_wilson_loop
    >>> loop = LatticeLoop.from_moves(Grid((0.0, 0.0), 1.0, (4, 4)), "R2 U1 L2 D1")
    >>> r = exact_wilson_loop(make_group("SU", 2, "physics"), "fundamental", loop, coupling=1.0)
    >>> r.method, round(r.value.real, 12)  # exp(-(3/4) * 2 / 2)
    ('simple-loop', 0.472366552741)
    """
    group, rep, loop, lam, area = _exact_wilson_loop_iv(group, rep, loop, coupling, area)
    shape = (_lattice_shape if isinstance(loop, LatticeLoop) else _polygon_shape)(loop, area)
    c = rep.casimir
    p = _power_of(rep)
    if c is None and group.family == "U" and group.n == 1 and p is not None:
        c = p * p / group.k  # U(1): tr U^p is the character of charge p
    if shape.measures is not None:
        n = shape.windings.astype(float)
        mu = shape.measures
        if group.family == "U" and group.n == 1 and c is not None:
            total = float(np.sum(n * n * mu))
            return ExactValue(complex(np.exp(-lam * c * total / 2)), "u1-windings",
                              details={"casimir": c, "sum_n2_mu": total})
        if shape.simple and c is not None:
            enclosed = float(np.sum(np.abs(n) * mu))
            return ExactValue(complex(simple_loop(c, enclosed, lam)), "simple-loop",
                              details={"casimir": c, "measure": enclosed})
        if group.family in ("U", "SU") and shape.turns >= 1 and p is not None:
            enclosed = float(np.sum(np.abs(n) * mu)) / shape.turns
            value = unitary_wound_loop(group.N, p * shape.turns, lam * enclosed,
                                       group.family == "SU", k=group.k)
            return ExactValue(complex(value), "hook-expansion",
                              details={"turns": p * shape.turns, "measure": enclosed})
    return _general_route(group, rep, shape, lam)


def _general_route(group, rep, shape: _Shape, lam: float) -> ExactValue:
    if shape.vertices is None:
        raise ExactRouteError("geometry", "the loop has no polygon to evaluate")
    try:
        if shape.arrangement is not None:  # a curve: its exact face areas
            out = evaluate_word(group, lasso_word(shape.arrangement), list(shape.measures),
                                coupling=lam, rep=rep.name)
        else:  # touching points and retraced edges are part of the arrangement
            out = evaluate_polygon(group, shape.vertices, shape.periods, coupling=lam,
                                   rep=rep.name, area_density=shape.area)
    except ExactRouteError:
        raise
    except ValueError as exc:  # the arrangement refused the geometry: say so
        raise ExactRouteError("geometry", str(exc)) from None
    return ExactValue(complex(out.value), "polygon-evaluation",
                      details={"turns": shape.periods, "route": out.method,
                               "evaluation": out})


def _curve_of(loop):
    """``(vertices, turns)`` of a Loop or a LatticeLoop (its corners)."""
    if isinstance(loop, LatticeLoop):
        return lattice_polygon(loop)
    return loop.vertices, loop.turns


def _scalar_iv(coupling, area):
    if isinstance(coupling, bool) or not isinstance(coupling, numbers.Real):
        raise ArgumentTypeError("coupling", f"got {coupling!r}; expected a number > 0",
                                f"`coupling` must be a real number > 0, got {coupling!r}.")
    try:  # an int beyond the double range (10**400) is not finite either
        c = float(coupling)
    except OverflowError:
        c = math.inf
    if not (math.isfinite(c) and c > 0):
        raise ArgumentError("coupling", f"got {coupling!r}; expected a finite number > 0",
                            f"`coupling` must be a finite number > 0, got {coupling!r}.")
    if area is None:
        area = AreaForm()
    elif not isinstance(area, AreaForm):
        raise TypeError(f"`area` must be a discretize AreaForm or None, got {type(area).__name__}.")
    return float(coupling), area


def exact_correlator(group, rep, loops, *, coupling: float, area=None) -> ExactValue:
    r"""Exact correlator ``E[prod_i chi_pi(H_i) / d_pi]`` of several loops.

    The loops (polygons or lattice loops, drawn together) are words in the same
    independent face variables of their joint arrangement
    (:func:`discretize.joint_arrangement`); the expectation is one evaluation
    (:func:`holonomy.exact.evaluate_polygons`). Routes:

    1. ``u1-windings``: U(1) with a charge q (``fundamental``: q = 1, ``power:p``: p):
       ``exp(-lambda c sum_F (sum_i n_{i,F})^2 mu(F) / 2)``, ``c = q^2 / k``;
    2. ``polygon-evaluation``: otherwise (any representation with matrices).

    Parameters
    ----------
    group : Group or None
        None: the U(N) master field (N -> infinity, ``large-n``), where the correlator
        is the product of the loops' master fields.
    rep : str
    loops : sequence of Loop or LatticeLoop
    coupling : float
    area : discretize.AreaForm, optional

    Returns
    -------
    ExactValue

    Raises
    ------
    ExactRouteError
        Naming the limit hit.

    References
    ----------
    .. [1] T. Levy, Mem. Amer. Math. Soc. 166 (2003), ch. 2 (joint law of the lassos of
       a graph).
    .. [2] A. Sengupta, Mem. Amer. Math. Soc. 126 (1997), no. 600 (the abelian case).
    """
    from discretize import joint_arrangement

    from ._evaluate import evaluate_polygons, face_measures

    lam, area = _scalar_iv(coupling, area)
    loops = list(loops)
    if len(loops) < 1 or not all(isinstance(lp, (Loop, LatticeLoop)) for lp in loops):
        raise TypeError("`loops` must be a sequence of discretize Loop or LatticeLoop.")
    curves, turns = zip(*(_curve_of(lp) for lp in loops))
    try:
        if group is not None and group.family == "U" and group.n == 1:
            rep_obj = rep_of(group, rep)
            q = _power_of(rep_obj)
            if q is not None:
                arr = joint_arrangement([np.asarray(c, float) for c in curves], list(turns))
                n = arr.winding.astype(float)
                mu = np.asarray(face_measures(arr, area), dtype=float)
                total = float(np.sum(n * n * mu))
                c = q * q / group.k
                return ExactValue(complex(np.exp(-lam * c * total / 2)), "u1-windings",
                                  details={"casimir": c, "sum_n2_mu": total})
        out = evaluate_polygons(group, [np.asarray(c, float) for c in curves], list(turns),
                                coupling=lam, rep=rep, area_density=area)
    except ExactRouteError:
        raise
    except ValueError as exc:
        raise ExactRouteError("geometry", str(exc)) from None
    return ExactValue(complex(out.value), "polygon-evaluation",
                      details={"route": out.method, "evaluation": out})


def exact_master_field(loop, *, coupling: float, area=None, rep="fundamental") -> ExactValue:
    r"""The U(N) master field ``lim_{N -> infinity} E[tr_N H]`` (metric ``large-n``).

    Wound loops (a simple loop wound n times) are Biane's moments of the free unitary
    Brownian motion (``free-unitary``); any other planar loop is its lasso word
    evaluated with free unitary Brownian motions (``master-field``;
    :func:`holonomy.exact.master_field_word`), which satisfies the Makeenko-Migdal
    equations with no area on the unbounded face.

    Parameters
    ----------
    loop : discretize.Loop or discretize.LatticeLoop
    coupling : float
        lambda > 0.
    area : discretize.AreaForm, optional
    rep : {"fundamental", "power:p"}
        The normalized trace of H, or of H^p.

    References
    ----------
    .. [1] P. Biane, Fields Inst. Commun. 12 (1997) 1-19.
    .. [2] T. Levy, "The master field on the plane", arXiv:1112.2452 (2011).
    .. [3] V. A. Kazakov, I. K. Kostov, Nucl. Phys. B 176 (1980) 199-215.

    Examples
    --------
    >>> from discretize import Loop
    >>> r = exact_master_field(Loop.polygon([(0, 0), (1, 0), (1, 1), (0, 1)], turns=2),
    ...                        coupling=1.0)
    >>> r.method, round(r.value.real, 12)  # nu_2(1) = e^{-1} (1 - 1)
    ('free-unitary', 0.0)
    """
    lam, area = _scalar_iv(coupling, area)
    if not isinstance(loop, (LatticeLoop, Loop)):
        raise TypeError(
            f"`loop` must be a discretize LatticeLoop or Loop, got {type(loop).__name__}.")
    value, method, details = _master_value(loop, lam, area, rep)
    return ExactValue(value, method, details=details)


def _master_value(loop, lam, area, rep):
    """``(value, method, details)`` of the master field at a real or complex coupling."""
    from ._evaluate import _large_n_setup, evaluate_polygon, evaluate_words
    from ._unitary import free_unitary_moment
    from ._word import lasso_words

    setup = _large_n_setup(rep)
    shape = (_lattice_shape if isinstance(loop, LatticeLoop) else _polygon_shape)(loop, area)
    if shape.measures is not None and shape.turns >= 1:
        enclosed = float(np.sum(np.abs(shape.windings) * shape.measures)) / shape.turns
        n = setup.power * shape.turns
        return (complex(free_unitary_moment(n, lam * enclosed)), "free-unitary",
                {"turns": n, "measure": enclosed})
    try:
        if shape.arrangement is not None:  # a curve: its exact face areas
            out = evaluate_words(None, lasso_words(shape.arrangement),
                                 [lam * m for m in shape.measures], rep=rep, large_n=True)
        else:
            out = evaluate_polygon(None, shape.vertices, shape.periods, coupling=lam,
                                   rep=rep, area_density=shape.area)
    except ExactRouteError:
        raise
    except ValueError as exc:
        raise ExactRouteError("geometry", str(exc)) from None
    return complex(out.value), "master-field", {"route": out.method, "evaluation": out}


def master_field_series(loop, order: int, *, area=None, rep="fundamental",
                        radius: float | None = None, points: int = 64) -> np.ndarray:
    r"""Taylor coefficients ``c_0 .. c_order`` of the master field in the coupling,
    ``Phi(lambda) = sum_m c_m lambda^m``.

    The master field is an entire function of lambda (a finite sum of exponentials
    times polynomials in the face times), so Cauchy's integral formula on the circle
    ``|lambda| = r``, computed by the trapezoid rule with ``points`` nodes (a discrete
    Fourier transform), gives ``c_m r^m`` up to the aliased terms
    ``c_{m + points} r^{m + points}``, which decay faster than geometrically
    (Trefethen and Weideman 2014, sec. 3). The default radius is one over the loop's
    enclosed measure (its face measures times the absolute windings).

    Parameters
    ----------
    loop : discretize.Loop or discretize.LatticeLoop
    order : int
        Highest power, ``0 <= order < points / 2``.
    area : discretize.AreaForm, optional
    rep : {"fundamental", "power:p"}
    radius : float, optional
    points : int, optional

    Returns
    -------
    ndarray of float

    References
    ----------
    .. [1] L. N. Trefethen, J. A. C. Weideman, "The exponentially convergent trapezoidal
       rule", SIAM Review 56 (2014) 385-458.
    .. [2] T. Levy, "The master field on the plane", arXiv:1112.2452 (2011).

    Examples
    --------
    A simple loop of area 1: ``exp(-lambda / 2) = 1 - lambda / 2 + lambda^2 / 8 - ...``

    >>> from discretize import Loop
    >>> c = master_field_series(Loop.polygon([(0, 0), (1, 0), (1, 1), (0, 1)]), 2)
    >>> [round(float(x), 12) for x in c]
    [1.0, -0.5, 0.125]
    """
    order = series_order_iv(order)
    if 2 * order >= points:
        raise ArgumentError("order", f"got {order!r}; expected an integer below points / 2 "
                            f"= {points / 2:g}",
                            f"`order` must be an integer in [0, {points // 2}), got {order!r}.")
    if not isinstance(loop, (LatticeLoop, Loop)):
        raise TypeError(
            f"`loop` must be a discretize LatticeLoop or Loop, got {type(loop).__name__}.")
    area = AreaForm() if area is None else area
    if radius is None:
        shape = (_lattice_shape if isinstance(loop, LatticeLoop) else _polygon_shape)(loop, area)
        enclosed = float(np.sum(np.abs(shape.windings) * np.abs(shape.measures)))
        radius = 1.0 / max(enclosed, 1e-12)
    nodes = radius * np.exp(2j * np.pi * np.arange(points) / points)
    values = np.array([_master_value(loop, lam, area, rep)[0] for lam in nodes])
    coeffs = np.fft.fft(values) / points
    return (coeffs[:order + 1] / radius ** np.arange(order + 1)).real.copy()

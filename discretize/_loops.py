"""Closed loops: polygons, circles, ellipses, parametric curves, lattice moves, several
turns, concatenation, and their snapping to lattice loops on a grid.

Conventions (part of the contract, see DEVELOPERS.md):

- A :class:`Loop` is a closed polygon given by its vertices in the order traversed;
  the closing vertex is not repeated. Counterclockwise is positive: a counterclockwise
  loop has positive ``signed_area`` and winds +1 around the points it encloses.
- ``turns`` (an integer >= 1) traverses the polygon that many times; areas, perimeters
  and winding numbers are multiplied by it.
- ``a + b`` is the loop that traverses ``a`` (all its turns) and then ``b``; both must
  start at the same vertex (``vertices[0]``). The result has ``turns == 1``.
- Moves syntax (our own): tokens separated by whitespace, each a direction letter
  ``R`` (+x), ``L`` (-x), ``U`` (+y) or ``D`` (-y), upper or lower case, followed by a
  positive integer count of grid steps, e.g. ``"R4 U2 L4 D2"``.
- A :class:`LatticeLoop` is a closed path of unit steps between the nodes of a
  :class:`~discretize.Grid`, with its turns unrolled into the node list.
- Curves (:meth:`Loop.ellipse`, :meth:`Loop.curve`, :meth:`Loop.parametric`) are
  sampled at ``sides`` parameter values into an inscribed polygon; the engine works on
  that polygon. A curve from the closed list :data:`CURVES` (and an ellipse) also
  carries the exact areas of the faces of the curve itself (closed forms), so
  ``area_error`` and the continuum value measure the loop as specified, not its
  polygon; a Python callable carries none and its polygon is the loop as specified.

Snapping (``Loop.snap``): each vertex goes to its nearest node and each edge becomes a
monotone staircase of unit steps. Along an edge that crosses columns, the staircase
crosses each column at the node height nearest to the edge's height at the column's
center (rounding half to even), so the cells under the staircase are those whose centers
lie under the edge; an edge within one column becomes vertical steps. Immediate
backtracks (a step followed by its reverse, also across the start) are then removed:
they cancel in every holonomy and winding number. Axis-aligned edges between nodes are
reproduced exactly (area error 0). For other polygons the area error is at most about
``h * perimeter / 2`` and is reported as ``area_error``; a simple polygon whose features
are larger than the spacing gives a simple lattice loop, smaller features may touch.

References
----------
.. [1] B. Braden, "The surveyor's area formula", College Math. J. 17 (1986) 326-337
   (the shoelace formula for the signed area of a polygon).
.. [2] Regular n-gon of circumradius r: area (n/2) r^2 sin(2 pi / n), perimeter
   2 n r sin(pi / n) (elementary geometry; e.g. MathWorld "Regular Polygon").
.. [3] J. E. Bresenham, "Algorithm for computer control of a digital plotter", IBM
   Syst. J. 4 (1965) 25-30 (digital lines; the staircase here rounds the edge's height
   at each column center in the same spirit).
.. [4] J. D. Lawrence, "A Catalog of Special Plane Curves", Dover, 1972 (cardioid,
   limacon, lemniscate of Bernoulli, roses: equations and areas).
"""

from __future__ import annotations

import math
import numbers
import re
from dataclasses import dataclass, field
from functools import cached_property
from typing import Callable

import numpy as np

from noise import ArgumentError, ArgumentTypeError

from ._arrangement import arrangement
from ._grid import Grid, _as_int
from ._limits import sides_iv, turns_iv
from ._winding import polygon_winding_numbers

__all__ = ["Loop", "LatticeLoop", "parse_moves", "closed_walk", "winding_numbers", "CURVES",
           "CurveFaces", "FaceAreaErrors"]

_MOVES = {"R": (1, 0), "L": (-1, 0), "U": (0, 1), "D": (0, -1)}
_TOKEN = re.compile(r"([RLUDrlud])(0*[1-9][0-9]*)")
_COLLINEAR_TOL = 1e-12


def _turns_iv(turns) -> int:
    return turns_iv(turns)  # the limit shared with the spec (discretize._limits)


def _point_iv(p, name: str) -> np.ndarray:
    try:
        a = np.asarray(p, dtype=float)
    except (TypeError, ValueError):
        raise TypeError(f"`{name}` must be a pair of finite numbers, got {p!r}.") from None
    if a.shape != (2,):
        raise ValueError(f"`{name}` must be a pair of finite numbers (x, y), got {p!r}.")
    if not np.all(np.isfinite(a)):
        raise ValueError(f"`{name}` must have finite coordinates, got {p!r}.")
    return a


def _positive_iv(value, name: str) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise TypeError(f"`{name}` must be a positive finite number, got {value!r}.")
    v = float(value)
    if not (math.isfinite(v) and v > 0):
        raise ValueError(f"`{name}` must be a positive finite number, got {value!r}.")
    return v


def _polygon_iv(vertices, turns):
    """Input validation and standardization for :class:`Loop`."""
    turns = _turns_iv(turns)
    try:
        v = np.array(vertices, dtype=float)
    except (TypeError, ValueError):
        raise TypeError(
            f"`vertices` must be an (m, 2) array of finite numbers, got {vertices!r}."
        ) from None
    if v.ndim != 2 or v.shape[1] != 2:
        raise ValueError(f"`vertices` must be an (m, 2) array, got shape {v.shape}.")
    if not np.all(np.isfinite(v)):
        bad = np.argwhere(~np.isfinite(v))[0][0]
        raise ValueError(
            f"`vertices` must have finite coordinates; vertex {bad} is {v[bad].tolist()}."
        )
    # Drop repeated consecutive vertices (zero-length edges, including a repeated
    # closing vertex): they change nothing.
    if len(v):
        keep = np.ones(len(v), dtype=bool)
        keep[1:] = np.any(v[1:] != v[:-1], axis=1)
        v = v[keep]
        while len(v) > 1 and np.all(v[-1] == v[0]):
            v = v[:-1]
    n_distinct = len(np.unique(v, axis=0)) if len(v) else 0
    if n_distinct < 3:
        raise ValueError(
            f"`vertices` must have at least three distinct vertices, got {n_distinct}."
        )
    c = v - v.mean(axis=0)
    s = np.linalg.svd(c, compute_uv=False)
    if s[1] <= _COLLINEAR_TOL * s[0]:
        raise ValueError(
            "`vertices` must not all lie on one line (the polygon encloses nothing); "
            f"got {len(v)} collinear vertices."
        )
    v.setflags(write=False)
    return v, turns


def parse_moves(moves: str, *, max_count: int | None = None) -> np.ndarray:
    """Parse a moves string into an ``(k, 2)`` int array of displacements.

    The moves grammar (its one definition): whitespace-separated tokens, each a
    direction ``R``, ``L``, ``U`` or ``D`` (either case) followed by a positive integer
    count, like ``"R4 U2 L4 D2"``; a bare direction is refused. ``max_count`` bounds
    one token's count (default 2^53, so the walk stays exact in int64).

    Raises ``TypeError`` for a non-string and :class:`noise.ArgumentError` (argument
    ``moves``) naming the token and the character where parsing failed.
    """
    if not isinstance(moves, str):
        raise TypeError(f"`moves` must be a string such as 'R4 U2 L4 D2', got {moves!r}.")
    if max_count is not None:
        rule = "an integer >= 1 or None"
        if isinstance(max_count, (bool, np.bool_)) or not isinstance(max_count,
                                                                     numbers.Integral):
            raise ArgumentTypeError("max_count", f"got {max_count!r}; expected {rule}",
                                    f"`max_count` must be {rule}, got {max_count!r}.")
        if max_count < 1:
            raise ArgumentError("max_count", f"got {max_count!r}; expected {rule}",
                                f"`max_count` must be {rule}, got {max_count!r}.")
    limit = 2**53 if max_count is None else max_count
    out = []
    for k, m in enumerate(re.finditer(r"\S+", moves)):
        tok = m.group()
        if not _TOKEN.fullmatch(tok):
            raise ArgumentError(
                "moves", f"bad step {tok!r}; expected R, U, L or D followed by a positive "
                "count, like R4",
                f"`moves` does not parse at token {k + 1} ({tok!r}, character "
                f"{m.start() + 1}): each token is a direction R, L, U or D followed by a "
                "positive integer count, e.g. 'R4 U2 L4 D2'.")
        n = int(tok[1:])
        if n > limit:
            raise ArgumentError(
                "moves", f"bad step {tok!r}; expected a count of at most {limit} steps "
                "per token",
                f"`moves` token {k + 1} ({tok!r}) has more than {limit} steps.")
        dx, dy = _MOVES[tok[0].upper()]
        out.append((dx * n, dy * n))
    if not out:
        raise ArgumentError("moves", "got an empty string; expected steps like \"R4 U2 L4 D2\"",
                            "`moves` must contain at least one move, got an empty string.")
    return np.array(out, dtype=np.int64)


def closed_walk(moves: str, *, max_count: int | None = None) -> np.ndarray:
    """The corners ``(k + 1, 2)`` (in steps, from the origin) of a moves string that
    must return to its start; :class:`noise.ArgumentError` (argument ``moves``) if not."""
    d = parse_moves(moves, max_count=max_count)
    corners = np.vstack([np.zeros((1, 2), np.int64), np.cumsum(d, axis=0)])
    if np.any(corners[-1] != 0):
        x, y = corners[-1].tolist()
        raise ArgumentError(
            "moves", f"does not close: it ends {x} steps right and {y} up of its start; "
            "expected a closed path",
            f"`moves` does not close: the walk ends {[x, y]} grid steps (x, y) from its "
            "start.")
    return corners


# --------------------------------------------------------------------------- curves

@dataclass(frozen=True)
class CurveFaces:
    """The exact bounded faces of a curve (one turn), as ``(winding, area)`` pairs.

    ``description`` says which curve (``"cardioid a=1"``); the areas are closed forms
    (Lawrence 1972), not the areas of a sampled polygon.
    """

    description: str
    faces: tuple[tuple[int, float], ...]

    @property
    def signed_area(self) -> float:
        """``sum winding * area`` over the faces (one turn)."""
        return float(sum(w * a for w, a in self.faces))

    def reversed(self) -> "CurveFaces":
        return CurveFaces(self.description + " (reversed)",
                          tuple((-w, a) for w, a in self.faces))


def _limacon_faces(a: float, b: float) -> tuple[tuple[int, float], ...]:
    # r = b + a cos t; the polar area (1/2) int r^2 dt with the antiderivative
    # F(t) = b^2 t + 2 a b sin t + a^2 (t / 2 + sin(2 t) / 4) (Lawrence 1972, sec. 5.4).
    total = math.pi * (b * b + a * a / 2)            # the r > 0 loop plus the r < 0 loop
    if b >= a:
        return ((1, total),)
    t0 = math.acos(-b / a)                           # r < 0 on (t0, 2 pi - t0): the inner loop

    def F(t):
        return b * b * t + 2 * a * b * math.sin(t) + a * a * (t / 2 + math.sin(2 * t) / 4)

    inner = 0.5 * (F(2 * math.pi - t0) - F(t0))
    outer = total - inner                            # the big loop, which holds the inner one
    return ((1, outer - inner), (2, inner))


@dataclass(frozen=True)
class _Family:
    params: tuple[str, ...]
    equation: str
    xy: Callable        # (t, **params) -> (x, y) about the center
    faces: Callable     # (**params) -> ((winding, area), ...)
    period: Callable    # (**params) -> the parameter period T (t in [0, T))
    crossings: Callable  # (**params) -> parameters where the curve meets itself


def _rose_period(a, k):
    return math.pi if k % 2 else 2 * math.pi


#: The closed list of parametric curve families for ``Loop.curve`` (and the spec's
#: ``loops[i].curve.family``): parameters, equation, exact face areas (Lawrence 1972).
CURVES: dict[str, _Family] = {
    "cardioid": _Family(
        ("a",), "r = 2 a (1 + cos t) about the center; area 6 pi a^2",
        lambda t, a: (2 * a * (1 + np.cos(t)) * np.cos(t), 2 * a * (1 + np.cos(t)) * np.sin(t)),
        lambda a: ((1, 6 * math.pi * a * a),),
        lambda a: 2 * math.pi, lambda a: ()),
    "limacon": _Family(
        ("a", "b"), "r = b + a cos t; area pi (b^2 + a^2 / 2) counting the inner loop "
        "(b < a) twice",
        lambda t, a, b: ((b + a * np.cos(t)) * np.cos(t), (b + a * np.cos(t)) * np.sin(t)),
        _limacon_faces, lambda a, b: 2 * math.pi,
        lambda a, b: () if b >= a else (math.acos(-b / a), 2 * math.pi - math.acos(-b / a))),
    "lemniscate": _Family(
        ("a",), "(x^2 + y^2)^2 = a^2 (x^2 - y^2), x = a cos t / (1 + sin^2 t), "
        "y = a sin t cos t / (1 + sin^2 t); two lobes of area a^2 / 2, wound +1 (right) "
        "and -1 (left)",
        lambda t, a: (a * np.cos(t) / (1 + np.sin(t) ** 2),
                      a * np.sin(t) * np.cos(t) / (1 + np.sin(t) ** 2)),
        lambda a: ((1, a * a / 2), (-1, a * a / 2)),
        lambda a: 2 * math.pi, lambda a: (math.pi / 2, 3 * math.pi / 2)),
    "rose": _Family(
        ("a", "k"), "r = a cos(k t); k petals (k odd) or 2 k petals (k even), each of "
        "area pi a^2 / (4 k)",
        lambda t, a, k: (a * np.cos(k * t) * np.cos(t), a * np.cos(k * t) * np.sin(t)),
        lambda a, k: ((1, math.pi * a * a / (4 * k)),) * (k if k % 2 else 2 * k),
        _rose_period,
        lambda a, k: tuple(math.pi * (2 * j + 1) / (2 * k)
                           for j in range(k if k % 2 else 2 * k))),
}


def _curve_params_iv(family: str, params: dict) -> dict:
    if family not in CURVES:
        raise ValueError(f"`family` must be one of {', '.join(CURVES)}, got {family!r}.")
    fam = CURVES[family]
    unknown = sorted(set(params) - set(fam.params))
    if unknown:
        raise ValueError(f"`{unknown[0]}` is not a parameter of the {family}; expected "
                         f"{', '.join(fam.params)} ({fam.equation}).")
    out = {}
    for name in fam.params:
        if name not in params:
            raise ValueError(f"`{name}` is missing: the {family} needs "
                             f"{', '.join(fam.params)} ({fam.equation}).")
        if name == "k":
            out[name] = _as_int(params[name], "k", 1)
        else:
            out[name] = _positive_iv(params[name], name)
    return out


def _sample_phase(period: float, n: int, crossings) -> float:
    """A sampling phase phi (t_i = T (i + phi) / n) that puts no vertex on a
    self-crossing of the curve: two vertices at one point make the arrangement
    ill-defined."""
    for phi in (0.0, 0.5, 0.25, 1 / 3):
        u = (np.asarray(crossings, dtype=float) / period) * n - phi
        if not np.any(np.abs(u - np.rint(u)) < 1e-6):
            return phi
    return 0.1  # not reached for the families above


def _sampled_xy(fn, t: np.ndarray) -> np.ndarray:
    """``fn`` at every ``t`` as an (n, 2) array: vectorized if ``fn`` takes arrays."""
    try:
        out = np.asarray(fn(t), dtype=float)
        if out.shape == (2, len(t)):
            out = out.T
        if out.shape != (len(t), 2):
            raise ValueError
    except (TypeError, ValueError, AttributeError, ArithmeticError):
        # a callable of scalars only (math.cos, a branch on t): point by point
        try:
            out = np.array([tuple(fn(float(u))) for u in t], dtype=float)
        except (TypeError, ValueError) as exc:
            raise TypeError(f"`fn` must map a parameter t to a point (x, y); {exc}") from None
        if out.shape != (len(t), 2):
            raise TypeError(f"`fn` must map a parameter t to a point (x, y), got an array "
                            f"of shape {out.shape[1:]} per point.") from None
    if not np.all(np.isfinite(out)):
        k = int(np.argwhere(~np.isfinite(out))[0][0])
        raise ValueError(f"`fn` gave a non-finite point at t = {t[k]!r}.")
    return out


@dataclass(frozen=True, eq=False)
class Loop:
    """A closed polygon, counterclockwise positive, traversed ``turns`` times.

    Build it with :meth:`polygon`, :meth:`circle` or :meth:`from_moves`.

    Examples
    --------
    >>> sq = Loop.from_moves("R2 U1 L2 D1", start=(0.0, 0.0), spacing=0.5)
    >>> sq.signed_area, sq.perimeter
    (0.5, 3.0)
    >>> (sq + sq.reversed()).signed_area
    0.0
    >>> from discretize import Grid
    >>> sq.snap(Grid((0.0, 0.0), 0.5, (2, 1))).winding_numbers()
    array([[1],
           [1]])

    Parameters
    ----------
    vertices : array_like, shape (m, 2)
        The vertices in the order traversed; the closing vertex is not repeated (a
        repeated one is dropped). Self-intersecting polygons are allowed, also when
        their signed areas cancel; at least three distinct vertices not all on one line
        are required.
    turns : int, default 1
    exact_faces : CurveFaces, optional
        The exact faces of the curve this polygon samples (set by :meth:`ellipse` and
        :meth:`curve`); then ``specified_area`` and the face areas used for exact values
        are the curve's, not the polygon's.
    """

    vertices: np.ndarray
    turns: int = 1
    exact_faces: CurveFaces | None = field(default=None, repr=False)

    def __post_init__(self):
        v, turns = _polygon_iv(self.vertices, self.turns)
        object.__setattr__(self, "vertices", v)
        object.__setattr__(self, "turns", turns)
        if self.exact_faces is not None and not isinstance(self.exact_faces, CurveFaces):
            raise TypeError(f"`exact_faces` must be a CurveFaces or None, got {type(self.exact_faces).__name__}.")

    # -- constructors -------------------------------------------------------------------
    @classmethod
    def polygon(cls, vertices, turns: int = 1) -> "Loop":
        """The polygon through ``vertices`` (in order), traversed ``turns`` times."""
        return cls(vertices, turns)

    @classmethod
    def circle(cls, center, radius: float, sides: int, turns: int = 1) -> "Loop":
        """The regular polygon with ``sides`` vertices on the circle, counterclockwise,
        its first vertex at angle 0.

        Its area is ``(sides / 2) r^2 sin(2 pi / sides)``.
        """
        c = _point_iv(center, "center")
        r = _positive_iv(radius, "radius")
        n = sides_iv(sides)
        turns = _turns_iv(turns)
        theta = 2 * np.pi * np.arange(n) / n
        return cls(c + r * np.stack([np.cos(theta), np.sin(theta)], axis=1), turns)

    @classmethod
    def ellipse(cls, center, radii, sides: int, turns: int = 1) -> "Loop":
        """The polygon with ``sides`` vertices on the axis-parallel ellipse with
        semi-axes ``radii = (a, b)``, counterclockwise from angle 0:
        ``(x, y) = center + (a cos t, b sin t)``.

        It carries the ellipse's exact area ``pi a b`` as its specified area.
        """
        c = _point_iv(center, "center")
        a, b = _point_iv(radii, "radii")
        a, b = _positive_iv(a, "radii[0]"), _positive_iv(b, "radii[1]")
        n = sides_iv(sides)
        turns = _turns_iv(turns)
        theta = 2 * np.pi * np.arange(n) / n
        faces = CurveFaces(f"ellipse radii=({a:g}, {b:g})", ((1, math.pi * a * b),))
        return cls(c + np.stack([a * np.cos(theta), b * np.sin(theta)], axis=1), turns,
                   exact_faces=faces)

    @classmethod
    def curve(cls, family: str, sides: int, *, center=(0.0, 0.0), turns: int = 1,
              **params) -> "Loop":
        """The polygon with ``sides`` vertices on a curve of the closed list
        :data:`CURVES`, placed at ``center``.

        ============  ===========  ====================================================
        family        parameters   curve (polar about ``center``; exact face areas)
        ============  ===========  ====================================================
        cardioid      a > 0        r = 2a(1 + cos t); one face of area 6 pi a^2
        limacon       a, b > 0     r = b + a cos t; pi (b^2 + a^2/2) counting the inner
                                   loop (b < a, winding 2) twice
        lemniscate    a > 0        (x^2 + y^2)^2 = a^2 (x^2 - y^2); lobes a^2/2 each,
                                   wound +1 (right) and -1 (left)
        rose          a > 0, k     r = a cos(k t), k >= 1 an integer; k (odd) or 2k
                                   (even) petals of area pi a^2 / (4k) each
        ============  ===========  ====================================================

        The parameter runs over one period, sampled at ``t_i = T (i + phi) / sides``
        with the phase ``phi`` in {0, 1/2, 1/4, 1/3} chosen so that no vertex falls on
        a self-crossing. The loop carries the curve's exact face areas.

        References
        ----------
        .. [1] J. D. Lawrence, "A Catalog of Special Plane Curves", Dover, 1972.

        Examples
        --------
        >>> c = Loop.curve("cardioid", 512, a=1.0)
        >>> round(c.specified_area / math.pi, 12), round(c.signed_area / math.pi, 4)
        (6.0, 5.9999)
        """
        if not isinstance(family, str):
            raise TypeError(f"`family` must be one of {', '.join(CURVES)}, got {family!r}.")
        p = _curve_params_iv(family, params)
        fam = CURVES[family]
        c = _point_iv(center, "center")
        n = sides_iv(sides)
        turns = _turns_iv(turns)
        period = fam.period(**p)
        phi = _sample_phase(period, n, fam.crossings(**p))
        t = period * (np.arange(n) + phi) / n
        x, y = fam.xy(t, **p)
        desc = family + " " + " ".join(f"{k}={v:g}" for k, v in p.items())
        return cls(c + np.stack([x, y], axis=1), turns,
                   exact_faces=CurveFaces(desc, fam.faces(**p)))

    @classmethod
    def parametric(cls, fn: Callable, samples: int, *, t_range=(0.0, 2 * math.pi),
                   turns: int = 1) -> "Loop":
        """The polygon through ``fn(t)`` at ``samples`` equally spaced parameters
        ``t`` in ``[t0, t1)`` (``t_range``); ``fn`` maps t to a point (x, y), on an
        array of t if it can (it is then called once).

        No exact face areas are known for an arbitrary curve: the polygon is the loop
        as specified, so use enough samples for the curve you mean.

        Examples
        --------
        >>> sq = Loop.parametric(lambda t: (np.cos(t), np.sin(t)), 4)
        >>> round(sq.signed_area, 12)
        2.0
        """
        if not callable(fn):
            raise TypeError(f"`fn` must be a callable t -> (x, y), got {type(fn).__name__}.")
        n = sides_iv(samples, "samples")
        t0, t1 = _point_iv(t_range, "t_range")
        if not t1 > t0:
            raise ValueError(f"`t_range` must be an interval (t0, t1) with t1 > t0, got {t_range!r}.")
        t = t0 + (t1 - t0) * np.arange(n) / n
        return cls(_sampled_xy(fn, t), _turns_iv(turns))

    @classmethod
    def from_moves(cls, moves: str, start=(0.0, 0.0), spacing: float = 1.0, turns: int = 1) -> "Loop":
        """The polygon walked by ``moves`` from ``start``, steps of length ``spacing``.

        ``moves`` uses our syntax: whitespace-separated tokens like ``R4`` (direction
        R/L/U/D, positive count). The walk must return to its start.
        """
        corners = closed_walk(moves)
        p0 = _point_iv(start, "start")
        h = _positive_iv(spacing, "spacing")
        turns = _turns_iv(turns)
        return cls(p0 + h * corners[:-1], turns)

    # -- properties ---------------------------------------------------------------------
    @property
    def edges(self) -> np.ndarray:
        """The edges of one traversal, shape (m, 2, 2): ``edges[k] = (start, end)``."""
        return np.stack([self.vertices, np.roll(self.vertices, -1, axis=0)], axis=1)

    @property
    def signed_area(self) -> float:
        """Shoelace area times ``turns`` (counterclockwise positive).

        ``A = (1/2) sum_k (x_k y_{k+1} - x_{k+1} y_k)`` (Braden 1986).
        """
        x, y = self.vertices[:, 0], self.vertices[:, 1]
        # Shoelace formula relative to the first vertex (exact for integer coordinates,
        # and well conditioned far from the origin).
        x = x - x[0]
        y = y - y[0]
        a = 0.5 * np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y)
        return float(self.turns * a)

    @property
    def specified_area(self) -> float:
        """The signed area of the loop as specified: the curve's exact area for a
        curve (:attr:`exact_faces`), else the polygon's :attr:`signed_area`."""
        if self.exact_faces is None:
            return self.signed_area
        return float(self.turns * self.exact_faces.signed_area)

    def face_areas(self, arr) -> tuple[np.ndarray, bool]:
        """Areas of the faces of ``arr`` (this loop's :func:`~discretize.arrangement`),
        as specified: ``(areas, True)`` with the curve's exact face areas when the
        polygon's faces match the curve's, else ``(arr.areas, False)``.

        Faces match winding by winding, largest to largest. A polygon face left over
        is a sampling artifact (the tiny faces where a rose's petals meet at the
        center) and gets area 0 if it is below 1 % of the curve's smallest face;
        otherwise the faces do not match.
        """
        areas = np.asarray(arr.areas, dtype=float)
        if self.exact_faces is None:
            return areas.copy(), False
        exact: dict[int, list[float]] = {}
        for w, a in self.exact_faces.faces:
            exact.setdefault(w * self.turns, []).append(a)
        tiny = 0.01 * min(a for _, a in self.exact_faces.faces)
        wind = np.asarray(arr.winding)
        out = np.zeros_like(areas)
        for w in set(exact) | set(map(int, wind)):
            idx = np.flatnonzero(wind == w)
            idx = idx[np.argsort(-areas[idx], kind="stable")]
            vals = sorted(exact.get(w, ()), reverse=True)
            if len(idx) < len(vals) or np.any(areas[idx[len(vals):]] >= tiny):
                return areas.copy(), False
            out[idx[:len(vals)]] = vals
        return out, True

    @property
    def perimeter(self) -> float:
        """Length of the path, all turns included."""
        d = np.diff(self.vertices, axis=0, append=self.vertices[:1])
        return float(self.turns * np.sum(np.hypot(d[:, 0], d[:, 1])))

    @property
    def bbox(self) -> tuple[float, float, float, float]:
        """``(xmin, ymin, xmax, ymax)``."""
        lo = self.vertices.min(axis=0)
        hi = self.vertices.max(axis=0)
        return (float(lo[0]), float(lo[1]), float(hi[0]), float(hi[1]))

    def unrolled_vertices(self) -> np.ndarray:
        """The vertices of all turns in order, shape (turns * m, 2)."""
        return np.tile(self.vertices, (self.turns, 1))

    def reversed(self) -> "Loop":
        """The same loop traversed the other way (same start vertex)."""
        faces = None if self.exact_faces is None else self.exact_faces.reversed()
        return Loop(np.vstack([self.vertices[:1], self.vertices[:0:-1]]), self.turns,
                    exact_faces=faces)

    def winding_numbers(self, grid: Grid) -> np.ndarray:
        """Winding number around each cell center of ``grid``, shape (nx, ny)."""
        return self.turns * polygon_winding_numbers(self.vertices, grid)

    def __add__(self, other: "Loop") -> "Loop":
        if not isinstance(other, Loop):
            return NotImplemented
        a, b = self.vertices[0], other.vertices[0]
        scale = 1.0 + max(np.abs(self.vertices).max(), np.abs(other.vertices).max())
        if np.max(np.abs(a - b)) > 1e-12 * scale:
            raise ValueError(
                "`other` must start where this loop starts to concatenate them: "
                f"{b.tolist()} != {a.tolist()}."
            )
        return Loop(np.vstack([self.unrolled_vertices(), other.unrolled_vertices()]), 1)

    def __eq__(self, other):
        if not isinstance(other, Loop):
            return NotImplemented
        return self.turns == other.turns and np.array_equal(self.vertices, other.vertices)

    __hash__ = None

    def __repr__(self):
        t = "" if self.turns == 1 else f", turns={self.turns}"
        return f"Loop.polygon({self.vertices.tolist()}{t})"

    # -- snapping -----------------------------------------------------------------------
    def _grid_units(self, grid: Grid) -> np.ndarray:
        x0, y0 = grid.origin
        return (self.vertices - (x0, y0)) / grid.spacing

    def lattice_steps(self, grid: Grid) -> int:
        """An upper bound on the unit steps of :meth:`snap` on ``grid`` (all turns), in
        O(m) without snapping: the staircase of an edge between the nodes nearest its
        ends has ``|di| + |dj|`` steps, and removing backtracks only shortens the path."""
        r = np.rint(self._grid_units(grid))
        d = np.abs(np.diff(r, axis=0, append=r[:1])).sum()
        return int(min(d, 2.0**62)) * self.turns

    def snap(self, grid: Grid) -> "LatticeLoop":
        """The lattice loop on ``grid`` that follows this polygon (see module docstring).

        Raises ValueError if the loop leaves the grid's extent or snaps to nothing.
        """
        if not isinstance(grid, Grid):
            raise TypeError(f"`grid` must be a Grid, got {type(grid).__name__}.")
        if not grid.contains_box(*self.bbox):
            raise ValueError(
                f"`loop` leaves the grid's extent: its bounding box {self.bbox} is not "
                f"inside the grid's extent {grid.extent}."
            )
        corners = _staircase_corners(self._grid_units(grid))
        nodes = _expand_corners(corners)
        # one turn reduced, then repeated: the free reduction of w^n is u c^n u^-1 when
        # that of w is u c u^-1 (c cyclically reduced), and the cyclic strip leaves c^n,
        # so this is the reduction of the whole path, without building it first
        nodes = _reduce_backtracks(nodes)
        if len(nodes) >= 3:
            nodes = np.vstack([np.tile(nodes[:-1], (self.turns, 1)), nodes[:1]])
        if len(nodes) < 3:
            raise ValueError(
                f"`loop` snaps to an empty lattice loop on a grid of spacing {grid.spacing}: "
                "use a finer grid."
            )
        return LatticeLoop(grid, nodes, source_area=self.specified_area, source=self)


def _staircase_corners(u: np.ndarray) -> np.ndarray:
    """Corner nodes of the staircases of all edges of the polygon ``u`` (grid units),
    closed (last corner == first corner). Consecutive corners differ along one axis."""
    m = len(u)
    pieces = []
    for k in range(m):
        a, b = u[k], u[(k + 1) % m]
        ia, ja = np.rint(a).astype(np.int64)
        ib, jb = np.rint(b).astype(np.int64)
        n = abs(ib - ia)
        if n == 0:
            pieces.append(np.array([[ia, ja]], dtype=np.int64))
            continue
        s = 1 if ib > ia else -1
        xc = ia + s * (np.arange(n) + 0.5)  # column centers crossed, in order
        t = np.clip((xc - a[0]) / (b[0] - a[0]), 0.0, 1.0)
        heights = np.rint(a[1] + t * (b[1] - a[1])).astype(np.int64)
        cols = ia + s * np.arange(n + 1)
        # (ia, ja) -> (ia, y0) -> (ia+s, y0) -> (ia+s, y1) -> ... -> (ib, y_{n-1}); the
        # next edge's first corner continues vertically to (ib, jb).
        c = np.empty((2 * n + 1, 2), dtype=np.int64)
        c[0] = (ia, ja)
        c[1::2, 0] = cols[:-1]
        c[2::2, 0] = cols[1:]
        c[1::2, 1] = heights
        c[2::2, 1] = heights
        pieces.append(c)
    corners = np.vstack(pieces + [pieces[0][:1]])
    return corners


def _expand_corners(corners: np.ndarray) -> np.ndarray:
    """Unit-step node path through axis-aligned corners (consecutive corners differ in
    one coordinate at most)."""
    d = np.diff(corners, axis=0)
    length = np.abs(d).sum(axis=1)
    unit = np.sign(d)
    steps = np.repeat(unit, length, axis=0)
    return np.vstack([corners[:1], corners[0] + np.cumsum(steps, axis=0)])


def _reduce_backtracks(nodes: np.ndarray) -> np.ndarray:
    """Remove immediate backtracks from a closed unit-step node path, cyclically."""
    stack: list[tuple[int, int]] = []
    for p in map(tuple, nodes.tolist()):
        if len(stack) >= 2 and stack[-2] == p:
            stack.pop()
        else:
            stack.append(p)
    # Now stack[0] == stack[-1]; strip cyclic backtracks across the start.
    while len(stack) >= 3 and stack[1] == stack[-2]:
        stack = stack[1:-1]
    if len(stack) < 3:
        return np.array(stack[:1], dtype=np.int64).reshape(-1, 2)
    return np.array(stack, dtype=np.int64)


def _lattice_loop_iv(grid, nodes, source_area):
    """Input validation and standardization for :class:`LatticeLoop`."""
    if not isinstance(grid, Grid):
        raise TypeError(f"`grid` must be a Grid, got {type(grid).__name__}.")
    a = np.asarray(nodes)
    if a.dtype.kind not in "iu":
        if a.dtype.kind == "f" and np.all(np.isfinite(a)) and np.all(a == np.rint(a)):
            a = a.astype(np.int64)
        else:
            raise TypeError(f"`nodes` must be an integer array of node indices, got dtype {a.dtype}.")
    a = np.array(a, dtype=np.int64)
    if a.ndim != 2 or a.shape[1] != 2:
        raise ValueError(f"`nodes` must have shape (m + 1, 2), got {a.shape}.")
    if len(a) < 3:
        raise ValueError(f"`nodes` must hold a closed path of at least two steps, got {len(a)} nodes.")
    if np.any(a[0] != a[-1]):
        raise ValueError(
            f"`nodes` must be closed (first node == last node), got {a[0].tolist()} and {a[-1].tolist()}."
        )
    steps = np.diff(a, axis=0)
    bad = np.flatnonzero(np.abs(steps).sum(axis=1) != 1)
    if bad.size:
        k = bad[0]
        raise ValueError(
            f"`nodes` must move by unit steps; step {k} goes from {a[k].tolist()} to "
            f"{a[k + 1].tolist()}."
        )
    out = ~grid.contains_node(a[:, 0], a[:, 1])
    if out.any():
        k = int(np.flatnonzero(out)[0])
        raise ValueError(
            f"`nodes` leaves the grid's extent: node {k} is {a[k].tolist()}, outside "
            f"0..{grid.nx} x 0..{grid.ny}."
        )
    if source_area is not None:
        rule = "a finite number or None"
        if isinstance(source_area, bool) or not isinstance(source_area, numbers.Real):
            raise ArgumentTypeError("source_area", f"got {source_area!r}; expected {rule}",
                                    f"`source_area` must be {rule}, got {source_area!r}.")
        source_area = float(source_area)
        if not math.isfinite(source_area):
            raise ArgumentError("source_area", f"got {source_area!r}; expected {rule}",
                                f"`source_area` must be {rule}, got {source_area!r}.")
    a.setflags(write=False)
    return grid, a, source_area


@dataclass(frozen=True)
class FaceAreaErrors:
    """The snapping error of a lattice loop face by face of the loop it was snapped from.

    Each lattice cell the lattice loop winds around is attributed to the face of the
    specified loop that holds the cell's center when their winding numbers agree, else
    to the nearest face with the lattice cell's winding number; cells whose winding no
    face has are ``unmatched``. A lemniscate whose lobes are off by +12 % and -12 % has
    a signed total error near 0 but ``max_relative`` 0.12.

    Attributes
    ----------
    winding : ndarray of int, shape (nf,)
        The faces' winding numbers (all turns).
    specified : ndarray, shape (nf,)
        The faces' areas as specified (a curve's exact areas where known).
    lattice : ndarray, shape (nf,)
        The lattice area attributed to each face.
    unmatched : float
        Area of the lattice cells attributed to no face.
    """

    winding: np.ndarray
    specified: np.ndarray
    lattice: np.ndarray
    unmatched: float

    @property
    def error(self) -> np.ndarray:
        """``lattice - specified`` per face."""
        return self.lattice - self.specified

    @property
    def relative(self) -> np.ndarray:
        """``error / specified`` per face (nan for a face of area 0 as specified: a
        sampling artifact of a curve, see :meth:`Loop.face_areas`)."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(self.specified > 0, self.error / self.specified, np.nan)

    @property
    def max_relative(self) -> float:
        """The largest ``|relative|`` over the faces of positive area, counting the
        unmatched area and the lattice area given to faces of area 0 against the
        smallest face."""
        pos = self.specified > 0
        if not pos.any():
            return 0.0
        worst = float(np.abs(self.relative[pos]).max())
        stray = self.unmatched + float(self.lattice[~pos].sum())
        if stray:
            worst = max(worst, stray / float(self.specified[pos].min()))
        return worst


def _distance_to_polygon(pts: np.ndarray, poly: np.ndarray) -> np.ndarray:
    """Distance from each point (k, 2) to the boundary of the closed polygon (m, 2)."""
    a = poly
    d = np.roll(poly, -1, axis=0) - a
    out = np.full(len(pts), np.inf)
    for start in range(0, len(pts), 256):  # bounded memory: 256 points x m edges
        p = pts[start:start + 256, None, :] - a[None, :, :]
        t = np.clip((p * d).sum(-1) / np.maximum((d * d).sum(-1), 1e-300), 0.0, 1.0)
        r = p - t[..., None] * d
        out[start:start + 256] = np.sqrt((r * r).sum(-1)).min(axis=1)
    return out


def _face_area_errors(lattice: "LatticeLoop", source: "Loop") -> FaceAreaErrors | None:
    try:
        arr = arrangement(source.vertices, source.turns)
    except ValueError:
        return None  # an arrangement that is not well defined: no faces to compare
    specified, _ = source.face_areas(arr)
    fw = np.asarray(arr.winding, dtype=np.int64)
    grid = lattice.grid
    W = lattice._windings
    label = np.full(W.shape, -1, dtype=np.int64)
    for f in range(arr.n_faces):
        label[polygon_winding_numbers(arr.face_polygon(f), grid) != 0] = f
    ii, jj = np.nonzero(W)
    w = W[ii, jj]
    lab = label[ii, jj]
    ok = (lab >= 0) & (fw[np.maximum(lab, 0)] == w)
    counts = np.bincount(lab[ok], minlength=arr.n_faces).astype(float)
    unmatched = 0
    if not ok.all():
        xc, yc = grid.center_lines()
        pts = np.stack([xc[ii[~ok]], yc[jj[~ok]]], axis=1)
        wb = w[~ok]
        best = np.full(len(pts), -1, dtype=np.int64)
        best_d = np.full(len(pts), np.inf)
        for f in range(arr.n_faces):
            sel = np.flatnonzero(wb == fw[f])
            if sel.size:
                dist = _distance_to_polygon(pts[sel], arr.face_polygon(f))
                closer = dist < best_d[sel]
                best[sel[closer]] = f
                best_d[sel[closer]] = dist[closer]
        counts += np.bincount(best[best >= 0], minlength=arr.n_faces)
        unmatched = int((best < 0).sum())
    return FaceAreaErrors(winding=fw, specified=np.asarray(specified, dtype=float),
                          lattice=counts * grid.cell_area,
                          unmatched=float(unmatched * grid.cell_area))


@dataclass(frozen=True, eq=False)
class LatticeLoop:
    """A closed path of unit steps between the nodes of a grid.

    Parameters
    ----------
    grid : Grid
    nodes : array_like of int, shape (m + 1, 2)
        Node indices ``(i, j)`` in the order traversed, first == last; consecutive nodes
        differ by one unit step. Turns are unrolled into this list.
    source_area : float, optional
        Signed area of the loop this one was snapped from, as specified (set by
        :meth:`Loop.snap`; a curve's exact area); ``area_error`` is measured against it.
    source : Loop, optional
        The loop this one was snapped from (set by :meth:`Loop.snap`), for
        :attr:`face_area_errors`.
    """

    grid: Grid
    nodes: np.ndarray
    source_area: float | None = field(default=None)
    source: "Loop | None" = field(default=None, repr=False)

    def __post_init__(self):
        grid, nodes, source_area = _lattice_loop_iv(self.grid, self.nodes, self.source_area)
        object.__setattr__(self, "nodes", nodes)
        object.__setattr__(self, "source_area", source_area)

    @classmethod
    def from_moves(cls, grid: Grid, moves: str, start=(0, 0), turns: int = 1) -> "LatticeLoop":
        """The lattice loop walked by ``moves`` from node ``start`` of ``grid``."""
        walk = closed_walk(moves)
        turns = _turns_iv(turns)
        try:
            s = np.array(start, dtype=np.int64).reshape(2)
        except (TypeError, ValueError, OverflowError):  # inf or beyond int64 too
            raise ArgumentTypeError("start", f"got {start!r}; expected a node index pair "
                                    "(i, j)", f"`start` must be a node index pair (i, j), got "
                                    f"{start!r}.") from None
        corners = s + walk
        nodes = _expand_corners(corners)
        nodes = np.vstack([np.tile(nodes[:-1], (turns, 1)), nodes[:1]])
        return cls(grid, nodes)

    @property
    def length(self) -> int:
        """Number of unit steps m."""
        return len(self.nodes) - 1

    @property
    def perimeter(self) -> float:
        return self.length * self.grid.spacing

    @property
    def steps(self) -> np.ndarray:
        """Unit steps, shape (m, 2): ``nodes[k + 1] - nodes[k]``."""
        return np.diff(self.nodes, axis=0)

    @property
    def coordinates(self) -> np.ndarray:
        """Node coordinates, shape (m + 1, 2)."""
        return self.grid.node_coordinates(self.nodes)

    @property
    def horizontal_steps(self) -> np.ndarray:
        """Horizontal steps as rows ``(k, column, row, sign)``, shape (n_h, 4), int.

        ``k`` is the step's index in :attr:`steps`, ``column`` the cell column it spans
        (``min(i, i + di)``), ``row`` its node height ``j`` (0..ny), ``sign`` +1 to the
        right and -1 to the left.
        """
        st = self.steps
        k = np.flatnonzero(st[:, 0] != 0)
        sign = st[k, 0]
        col = np.minimum(self.nodes[k, 0], self.nodes[k + 1, 0])
        return np.stack([k, col, self.nodes[k, 1], sign], axis=1)

    @property
    def vertical_steps(self) -> np.ndarray:
        """Vertical steps as rows ``(k, row, column, sign)``, shape (n_v, 4), int.

        ``row`` is the cell row the step spans (``min(j, j + dj)``), ``column`` its node
        abscissa ``i`` (0..nx), ``sign`` +1 upward and -1 downward.
        """
        st = self.steps
        k = np.flatnonzero(st[:, 1] != 0)
        sign = st[k, 1]
        row = np.minimum(self.nodes[k, 1], self.nodes[k + 1, 1])
        return np.stack([k, row, self.nodes[k, 0], sign], axis=1)

    @cached_property
    def _windings(self) -> np.ndarray:
        # Exact integer count: the winding number of a cell is the signed number of
        # horizontal steps above its center, a leftward step counting +1 (it is the top
        # of a counterclockwise circuit), cf. the crossing rule in _winding.py.
        hs = self.horizontal_steps
        top = np.zeros((self.grid.nx, self.grid.ny + 1), dtype=np.int64)
        np.add.at(top, (hs[:, 1], hs[:, 2]), -hs[:, 3])
        # w[:, r] = sum_{j > r} top[:, j]
        w = np.cumsum(top[:, ::-1], axis=1)[:, ::-1][:, 1:]
        w.setflags(write=False)
        return w

    def winding_numbers(self) -> np.ndarray:
        """Winding number of each cell (around its center), shape (nx, ny), int."""
        return self._windings.copy()

    @property
    def area(self) -> float:
        """Signed area counting winding: ``sum_cells n_cell * h**2``."""
        return float(self._windings.sum() * self.grid.cell_area)

    def enclosed_measure(self, form) -> float:
        """``sum_cells n_cell * mu(cell)`` for an :class:`~discretize.AreaForm`."""
        return float(np.sum(self._windings * form.cell_measures(self.grid)))

    @property
    def area_error(self) -> float:
        """``area - source_area`` (0.0 if the loop was not snapped from a polygon)."""
        if self.source_area is None:
            return 0.0
        return self.area - self.source_area

    @cached_property
    def face_area_errors(self) -> FaceAreaErrors | None:
        """The area error face by face of the source loop's arrangement (None if the
        loop was not snapped from a :class:`Loop`, or its arrangement is not well
        defined); see :class:`FaceAreaErrors`."""
        if self.source is None:
            return None
        return _face_area_errors(self, self.source)

    @property
    def max_face_area_error(self) -> float | None:
        """The largest relative face area error, ``face_area_errors.max_relative``."""
        fe = self.face_area_errors
        return None if fe is None else fe.max_relative

    @property
    def simple(self) -> bool:
        """True when the loop visits no node twice (a simple closed curve, one turn)."""
        inner = self.nodes[:-1]
        return len(np.unique(inner, axis=0)) == len(inner)

    def region_boundary(self) -> "LatticeLoop":
        """The boundary of the region the loop encloses (the union of the bounded faces
        of its arrangement, :func:`discretize.arrangement`), counterclockwise: the
        unbounded face's boundary walk run backwards, a lattice loop on the same grid
        of winding 1 on every enclosed cell and 0 elsewhere. A simple loop gives itself
        (or its reverse when clockwise); a figure eight its two lobes, each
        counterclockwise, from the crossing.
        """
        arr = arrangement(self.nodes[:-1].astype(float))
        walk = np.rint(arr.vertices[arr.outer_boundary()]).astype(np.int64)
        return LatticeLoop(self.grid, np.vstack([walk, walk[:1]]))

    def __eq__(self, other):
        if not isinstance(other, LatticeLoop):
            return NotImplemented
        return self.grid == other.grid and np.array_equal(self.nodes, other.nodes)

    __hash__ = None

    def __repr__(self):
        return f"LatticeLoop(grid={self.grid!r}, nodes=<{self.length} steps>, area={self.area!r})"


def winding_numbers(loop, grid: Grid) -> np.ndarray:
    """Winding number of ``loop`` around each cell center of ``grid``, shape (nx, ny).

    ``loop`` is a :class:`~discretize.Loop` (its ``turns`` multiply the result), a
    :class:`~discretize.LatticeLoop` (exact integer count from its horizontal steps), or
    an ``(m, 2)`` array of polygon vertices.
    """
    if isinstance(loop, LatticeLoop):
        if loop.grid == grid:
            return loop.winding_numbers()
        return polygon_winding_numbers(loop.coordinates[:-1], grid)
    if isinstance(loop, Loop):
        return loop.turns * polygon_winding_numbers(loop.vertices, grid)
    v = np.asarray(loop, dtype=float)
    if v.ndim != 2 or v.shape[1] != 2:
        raise ValueError(f"`loop` must be a Loop, a LatticeLoop or an (m, 2) array, got shape {v.shape}.")
    return polygon_winding_numbers(v, grid)

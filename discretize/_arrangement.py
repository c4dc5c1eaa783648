"""The arrangement of closed polygons: crossings, planar graph, faces and windings.

Closed polygons ``v_0 v_1 ... v_{m-1} v_0``, each traversed ``turns`` times, cut the
plane into faces. This module computes the planar graph of the curves (the polygons'
vertices, their self-intersection and mutual intersection points, joined by the pieces
of the polygons' edges), its bounded faces with their exact areas, the winding number
of each curve around each face, and each curve as a path of half-edges of the graph.

Degenerate curves are graphs too: a curve may touch itself at a point (a vertex on
another edge, a repeated vertex), run back along an edge (a spike) or along another
edge (collinear overlap). Every touching point becomes a graph vertex, every stretch
run several times becomes one graph edge traversed several times, and the curve is the
path of half-edges it runs along (``paths``), so degenerate curves are limits of
nearby non-degenerate ones with the same graph.

Conventions
-----------
- A graph edge is oriented the way a curve first traverses it; for one curve without
  overlaps, edges are numbered in the order the curve traverses them, so one turn is
  ``edges[0], edges[1], ...`` read forward.
- Half-edge ``2 e`` is edge ``e`` read forward, ``2 e + 1`` read backward.
- A face boundary is the cycle of half-edges that have the face on their left; for a
  bounded face it runs counterclockwise.
- Winding numbers count counterclockwise turns as positive: across an edge, the face
  on its left has winding larger by the net number of times the curve runs the edge
  forward (per turn).
- Several curves whose graph is not connected are joined by bridges (segments run by
  no curve) so that every bounded face is a disc; bridges do not change any winding.

Robustness
----------
All topological decisions (orientation tests, intersection parameters, angular order,
areas) are made in exact rational arithmetic on the binary values of the input floats,
so the combinatorics never depends on rounding; an orientation whose floating-point
value is farther from 0 than its proven rounding bound [3] takes the float's sign (the
exact sign, found faster). Configurations closer than ``rtol``
times the size of the polygon to a degenerate one without being degenerate (a crossing
next to a vertex, two edges almost touching, an edge almost doubling back) raise
``ValueError``: a slightly perturbed input would change the graph.

References
----------
.. [1] M. de Berg, O. Cheong, M. van Kreveld, M. Overmars, "Computational Geometry:
   Algorithms and Applications", 3rd ed., Springer, 2008, ch. 2 (line-segment
   intersection, doubly connected edge lists and face traversal).
.. [2] J. O'Rourke, "Computational Geometry in C", 2nd ed., Cambridge University
   Press, 1998, sec. 1.3 (area by the shoelace formula) and 7.4 (winding numbers).
.. [3] J. R. Shewchuk, "Adaptive precision floating-point arithmetic and fast robust
   geometric predicates", Discrete Comput. Geom. 18 (1997) 305-363, sec. 4.2 (the error
   bound of a floating-point orientation: a float filter before the exact test).
"""

from __future__ import annotations

from collections import OrderedDict, deque
from dataclasses import dataclass, field
from fractions import Fraction
from functools import cmp_to_key

import numpy as np
from scipy.spatial import cKDTree

from ._limits import turns_iv

__all__ = ["Arrangement", "arrangement", "joint_arrangement", "check_crossings",
           "MAX_SCREENED_PAIRS", "MAX_EXACT_PAIRS"]


@dataclass(frozen=True)
class Arrangement:
    """The planar graph and faces of closed polygons traversed ``turns`` times.

    Attributes
    ----------
    polygon : ndarray, shape (m, 2)
        The (first) polygon's vertices (closing vertex not repeated, consecutive
        duplicates removed). Its distinct vertices are the first graph vertices, in
        order.
    turns : int
        How many times the (first) curve runs around its polygon.
    vertices : ndarray, shape (nv, 2)
        Graph vertices: the polygons' distinct vertices, then the crossings.
    crossings : ndarray, shape (nc, 2)
        The points where edges cross properly (not at a polygon vertex).
    crossing_degree : ndarray, shape (nc,)
        Number of curve passages through each crossing (2 for an ordinary crossing).
    edges : ndarray, shape (ne, 2) of int
        Graph edges ``(tail, head)``, oriented and numbered as first traversed.
    left_face, right_face : ndarray, shape (ne,) of int
        Face on each side of each edge (bounded face index, or -1 for the unbounded
        face); equal on both sides of a spike or a bridge.
    faces : tuple of ndarray
        For each bounded face, its boundary as graph-vertex indices, counterclockwise.
    face_cycles : tuple of ndarray
        For each bounded face, its boundary as half-edge indices (``2 e`` forward,
        ``2 e + 1`` backward), counterclockwise.
    areas : ndarray, shape (nf,)
        Area of each bounded face (positive).
    exact_areas : tuple of fractions.Fraction
        The same areas, exact for the binary values of the input coordinates.
    winding : ndarray, shape (nf,) of int
        Winding number around each bounded face of all curves together (all turns).
    paths : tuple of ndarray
        For each curve, the half-edges it runs along in one turn, in order, from its
        first vertex.
    curve_turns : tuple of int
        Turns of each curve.
    curve_winding : ndarray, shape (n_curves, nf) of int
        Winding number of each curve (all its turns) around each bounded face.
    bridges : int
        Number of edges run by no curve (added to connect separate curves).
    outer_cycle : ndarray of int
        The boundary of the unbounded face as half-edge indices, keeping that face on
        the left (so it runs clockwise around the bounded part); the graph is connected
        (bridges join separate curves), so this is one closed walk.
    """

    polygon: np.ndarray
    turns: int
    vertices: np.ndarray
    crossings: np.ndarray
    crossing_degree: np.ndarray
    edges: np.ndarray
    left_face: np.ndarray
    right_face: np.ndarray
    faces: tuple
    face_cycles: tuple
    areas: np.ndarray
    exact_areas: tuple = field(repr=False)
    winding: np.ndarray = field(default=None)
    paths: tuple = field(default=(), repr=False)
    curve_turns: tuple = field(default=(), repr=False)
    curve_winding: np.ndarray = field(default=None, repr=False)
    bridges: int = 0
    outer_cycle: np.ndarray = field(default=None, repr=False)

    @property
    def n_faces(self) -> int:
        """Number of bounded faces."""
        return len(self.faces)

    @property
    def n_crossings(self) -> int:
        """Number of distinct proper crossing points."""
        return len(self.crossings)

    @property
    def n_curves(self) -> int:
        """Number of curves."""
        return len(self.paths)

    @property
    def signed_area(self) -> float:
        """Sum over faces of winding times area: the signed area of the curves."""
        return float(np.dot(self.winding, self.areas))

    @property
    def degenerate(self) -> bool:
        """True if a curve touches itself or another curve, or runs an edge twice."""
        seen: set[int] = set()
        for p in self.paths:
            for h in p.tolist():
                if h // 2 in seen:
                    return True
                seen.add(h // 2)
        deg = np.bincount(self.edges.ravel(), minlength=len(self.vertices))
        n_poly = len(self.vertices) - self.n_crossings
        return bool(np.any(deg[:n_poly] > 2))

    def face_polygon(self, i: int) -> np.ndarray:
        """Coordinates of the boundary of bounded face ``i`` (counterclockwise)."""
        return self.vertices[self.faces[i]]

    def outer_boundary(self) -> np.ndarray:
        """Graph-vertex indices of the boundary of the union of the bounded faces,
        counterclockwise: the unbounded face's boundary walk run backwards (spikes and
        bridges into the unbounded face are run out and back)."""
        h = self.outer_cycle[::-1] ^ 1  # the twins, in reverse order
        e = self.edges[h // 2]
        return np.where(h % 2 == 0, e[:, 0], e[:, 1])


def _polygon_iv(vertices, name="vertices"):
    try:
        v = np.asarray(vertices, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(
            f"`{name}` must be an array of shape (m, 2) of finite numbers; "
            f"got {vertices!r}."
        ) from None
    if v.ndim != 2 or v.shape[1] != 2:
        raise ValueError(
            f"`{name}` must be an array of shape (m, 2); got shape {v.shape}."
        )
    if not np.all(np.isfinite(v)):
        raise ValueError(f"`{name}` must be finite; got a NaN or infinite coordinate.")
    # drop consecutive repeats and a repeated closing vertex: zero-length edges carry
    # no geometry
    # (a point equal to its predecessor equals the first point of its run: the one kept)
    keep = [0] + (np.flatnonzero(np.any(v[1:] != v[:-1], axis=1)) + 1).tolist()
    if len(keep) > 1 and np.array_equal(v[keep[-1]], v[keep[0]]):
        keep.pop()
    v = v[keep]
    if len(v) < 2:
        raise ValueError(
            f"`{name}` must hold at least 3 distinct consecutive points; got {len(v)}."
        )
    return v


def _turns_iv(turns, name="turns"):
    return turns_iv(turns, name)  # the limit shared with the loops and the spec


def _rtol_iv(rtol):
    if not (isinstance(rtol, (int, float, np.floating)) and 0 <= rtol < 1e-2):
        raise ValueError(f"`rtol` must be a number in [0, 0.01); got {rtol!r}.")
    return float(rtol)


def _orient(a, b, c):
    """Twice the signed area of triangle abc (exact for Fraction input)."""
    return (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])


def _sign(x) -> int:
    return (x > 0) - (x < 0)


def _point_segment_distance(p, a, b) -> float:
    p, a, b = (np.asarray(z, dtype=float) for z in (p, a, b))
    ab = b - a
    s = np.clip(np.dot(p - a, ab) / np.dot(ab, ab), 0.0, 1.0)
    return float(np.hypot(*(p - a - s * ab)))


def _angle_cmp(u, w) -> int:
    """Counterclockwise order of direction vectors starting from angle 0 (exact)."""
    hu = 0 if (u[1] > 0 or (u[1] == 0 and u[0] > 0)) else 1
    hw = 0 if (w[1] > 0 or (w[1] == 0 and w[0] > 0)) else 1
    if hu != hw:
        return hu - hw
    return -_sign(u[0] * w[1] - u[1] * w[0])


def _dot_sign(s, p, q) -> int:
    """Sign of ``(p - s) . (q - s)`` for float points, exact: the float value where it is
    farther from 0 than its rounding bound (as for an orientation, [3]), else in
    Fractions of the floats' values."""
    left, right = (p[0] - s[0]) * (q[0] - s[0]), (p[1] - s[1]) * (q[1] - s[1])
    size = abs(left) + abs(right)
    if size > _ORIENT_TINY and abs(left + right) > _ORIENT_REL * size:
        return _sign(left + right)
    s, p, q = ((Fraction(z[0]), Fraction(z[1])) for z in (s, p, q))
    return _sign((p[0] - s[0]) * (q[0] - s[0]) + (p[1] - s[1]) * (q[1] - s[1]))


def _on_segment(p, a, b) -> bool:
    """p on the closed segment ab, given that p is on the line ab (exact)."""
    return min(a[0], b[0]) <= p[0] <= max(a[0], b[0]) and \
        min(a[1], b[1]) <= p[1] <= max(a[1], b[1])


def _param(p, a, b):
    """Position of p along ab (exact; 0 at a, 1 at b) for p on the line ab."""
    d = (b[0] - a[0], b[1] - a[1])
    return ((p[0] - a[0]) * d[0] + (p[1] - a[1]) * d[1]) / (d[0] * d[0] + d[1] * d[1])


class _Components:
    """Union-find over curves (which curves touch or cross each other)."""

    def __init__(self, n):
        self.parent = list(range(n))

    def find(self, i):
        while self.parent[i] != i:
            self.parent[i] = self.parent[self.parent[i]]
            i = self.parent[i]
        return i

    def union(self, i, j):
        self.parent[self.find(i)] = self.find(j)


#: candidate pairs of segments screened at once (bounds the memory of the screening:
#: a few hundred bytes per pair, whatever the number of segments)
_CHUNK = 1 << 18
#: pairs of segments whose bounding boxes meet, screened in floating point (vectorized)
MAX_SCREENED_PAIRS = 10**8
#: pairs of segments too close for the float screen, decided in exact arithmetic
MAX_EXACT_PAIRS = 10**6


def _unique_segments(segs):
    """Each geometric segment once: ``(first occurrence, index of each segment's
    unique segment, multiplicity)``. A polygon that runs over the same edge many times
    (a path repeated, a spike) is screened once per distinct edge. ``segs`` holds the
    float endpoints (exact: they are the binary values the Fractions were made of)."""
    uid: dict = {}
    index = np.empty(len(segs), dtype=np.intp)
    first: list[int] = []
    for s, (a, b) in enumerate(segs):
        key = (a, b) if a <= b else (b, a)
        u = uid.get(key)
        if u is None:
            u = uid[key] = len(first)
            first.append(s)
        index[s] = u
    mult = np.bincount(index, minlength=len(first))
    return np.array(first, dtype=np.intp), index, mult


def _sweep(lo, hi, axis):
    """Segments sorted along ``axis`` and, for each, the end of its overlap run."""
    order = np.argsort(lo[:, axis], kind="stable")
    end = np.searchsorted(lo[order, axis], hi[order, axis], side="right")
    counts = np.maximum(end - np.arange(len(order)) - 1, 0)
    return order, counts


def _point_segment_distances(p, a, b):
    ab = b - a
    den = np.einsum("ij,ij->i", ab, ab)
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.clip(np.einsum("ij,ij->i", p - a, ab) / den, 0.0, 1.0)
    d = np.hypot(*(p - a - t[:, None] * ab).T)
    return np.where(den > 0, d, 0.0)  # a degenerate segment: never screened out


def _orient_f(a, b, c):
    return (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])


#: Shewchuk's bound on the rounding of a float orientation, ``(3 + 16 eps) eps`` with
#: eps = 2^-53 (ccwerrboundA of [3]), taken three times over for safety
_ORIENT_REL = 1e-15
#: below this the products may be subnormal and the relative bound no longer holds
_ORIENT_TINY = 1e-250


def _orient_sign_f(a, b, c):
    """Float orientations of ``a b c`` (rows) and their signs where the float value is
    certain, 2 where only exact arithmetic can tell.

    The float orientation ``(b - a) x (c - a)`` has the sign of the exact one whenever
    its magnitude passes ``(3 + 16 eps) eps (|l| + |r|)``, ``l`` and ``r`` its two
    products (J. R. Shewchuk, "Adaptive precision floating-point arithmetic and fast
    robust geometric predicates", Discrete Comput. Geom. 18 (1997) 305-363, sec. 4.2,
    the orient2d filter); near-degenerate triples go to the exact test.
    """
    left = (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1])
    right = (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])
    o = left - right
    bound = _ORIENT_REL * (np.abs(left) + np.abs(right))
    sure = (np.abs(o) > bound) & ((np.abs(left) + np.abs(right)) > _ORIENT_TINY)
    return o, np.where(sure, np.sign(o), 2)


def _same(p, q):
    return (p[:, 0] == q[:, 0]) & (p[:, 1] == q[:, 1])


def _straddle(o1, o2, err):
    """The two points may lie on both sides of (or on) the line, up to ``err``."""
    return ((o1 <= err) & (o2 >= -err)) | ((o1 >= -err) & (o2 <= err))


def _close_pairs(A, B, tol):
    """Pairs ``(i, j)``, ``i < j``, of segments that may touch or come within ``tol``,
    and the signs of their orientations ``(a b c, a b d, c d a, c d b)`` where floating
    point decides them (2 where it cannot).

    Bounding boxes are swept along the axis with fewer overlaps (O(m log m) plus the
    overlapping pairs), in chunks of at most ``_CHUNK`` pairs, and a pair is dropped only
    when its floating-point distance exceeds ``tol`` by a margin far above rounding, so
    the exact tests downstream see every pair that matters.
    """
    n = len(A)
    lo, hi = np.minimum(A, B) - tol, np.maximum(A, B) + tol
    sweeps = [_sweep(lo, hi, axis) for axis in (0, 1)]
    totals = [int(c.sum()) for _, c in sweeps]
    axis = int(np.argmin(totals))
    order, counts = sweeps[axis]
    if totals[axis] > MAX_SCREENED_PAIRS:
        raise ValueError(
            f"`vertices`: the loop's {n} distinct edges have {totals[axis]:.3g} pairs "
            f"with overlapping extents, more than the limit {MAX_SCREENED_PAIRS:.0e} of the "
            "crossing check; use a loop with fewer edges or crossings."
        )
    margin = tol + 1e-12 * (float(np.abs(np.vstack([A, B])).max()) + float(
        np.hypot(*(hi.max(axis=0) - lo.min(axis=0)))))
    # rounding of a float orientation (twice a triangle's area): far below this
    area_err = margin * float(np.hypot(*(hi.max(axis=0) - lo.min(axis=0)))) + 1e-300
    # rounding of a float orientation: below 8 eps diam^2 for float inputs
    round_err = 1e-12 * float(np.hypot(*(hi.max(axis=0) - lo.min(axis=0)))) ** 2
    other = 1 - axis
    found, signs = [], []
    kept = 0
    cum = np.cumsum(counts)
    k0 = 0
    while k0 < n:
        # a run of sweep positions holding at most _CHUNK pairs (at least one position)
        k1 = max(int(np.searchsorted(cum, (cum[k0 - 1] if k0 else 0) + _CHUNK, "right")),
                 k0 + 1)
        cnt = counts[k0:k1]
        total = int(cnt.sum())
        if total:
            rows = np.repeat(np.arange(k0, k1), cnt)
            offs = np.arange(total) - np.repeat(np.cumsum(cnt) - cnt, cnt)
            i, j = order[rows], order[rows + 1 + offs]
            meet = (lo[i, other] <= hi[j, other]) & (lo[j, other] <= hi[i, other])
            i, j = i[meet], j[meet]
            d = np.minimum.reduce([
                _point_segment_distances(A[j], A[i], B[i]),
                _point_segment_distances(B[j], A[i], B[i]),
                _point_segment_distances(A[i], A[j], B[j]),
                _point_segment_distances(B[i], A[j], B[j])]) if len(i) else np.zeros(0)
            # two segments that cross are at distance 0 but their ends need not be near:
            # keep a pair whose ends straddle each other's line, up to rounding
            (o1, f1), (o2, f2) = _orient_sign_f(A[i], B[i], A[j]), _orient_sign_f(A[i], B[i], B[j])
            (o3, f3), (o4, f4) = _orient_sign_f(A[j], B[j], A[i]), _orient_sign_f(A[j], B[j], B[i])
            near = ~(d > margin) | (_straddle(o1, o2, area_err) & _straddle(o3, o4, area_err))
            i, j = i[near], j[near]
            o = np.stack([o1, o2, o3, o4], axis=1)[near]
            filt = np.stack([f1, f2, f3, f4], axis=1)[near]
            if len(i):
                # the sign of an orientation whose float value is far beyond its
                # rounding, or 0 for an end shared with the other segment; 2 where only
                # exact arithmetic can tell
                on_end = np.stack([_same(A[j], A[i]) | _same(A[j], B[i]),
                                   _same(B[j], A[i]) | _same(B[j], B[i]),
                                   _same(A[i], A[j]) | _same(A[i], B[j]),
                                   _same(B[i], A[j]) | _same(B[i], B[j])], axis=1)
                # the old global bound (kept: it decides exactly the same signs) or the
                # orientation's own rounding bound, whichever is sharper
                sgn = np.where(on_end, 0, np.where(np.abs(o) > round_err, np.sign(o), filt))
                swap = i > j  # the caller wants (i, j) with i < j: exchange the roles
                sgn[swap] = sgn[swap][:, [2, 3, 0, 1]]
                signs.append(sgn.astype(np.int8))
            kept += len(i)
            if kept > MAX_EXACT_PAIRS:
                raise ValueError(
                    f"`vertices`: the loop's {n} distinct edges have more than "
                    f"{MAX_EXACT_PAIRS:.0e} pairs that cross or come close, the limit of "
                    "the exact crossing check; use a loop with fewer edges or crossings."
                )
            found.append(np.stack([np.minimum(i, j), np.maximum(i, j)], axis=1))
        k0 = k1
    if not found:
        return np.zeros((0, 2), dtype=np.intp), np.zeros((0, 4), dtype=np.int8)
    return np.concatenate(found), np.concatenate(signs)


def check_crossings(curves, *, rtol: float = 1e-9) -> int:
    """The number of edge pairs the crossing check of ``curves`` would decide exactly.

    Raises the ``ValueError`` of :func:`arrangement` when the check is beyond its limits
    (:data:`MAX_SCREENED_PAIRS`, :data:`MAX_EXACT_PAIRS`), in O(m log m) time and bounded
    memory, without building anything: callers use it to refuse a loop before numerics.
    """
    polys = [_polygon_iv(c) for c in curves]
    allpts = np.vstack(polys)
    tol = _rtol_iv(rtol) * float(np.hypot(*(allpts.max(axis=0) - allpts.min(axis=0))))
    A, B = [], []
    for v in polys:
        keys = {}
        for a, b in zip(map(tuple, v.tolist()), map(tuple, np.roll(v, -1, 0).tolist())):
            keys.setdefault((a, b) if a <= b else (b, a), None)
        seg = np.array(list(keys), dtype=float).reshape(-1, 2, 2)
        A.append(seg[:, 0])
        B.append(seg[:, 1])
    return len(_close_pairs(np.vstack(A), np.vstack(B), tol)[0])


def _intersect(segs, owner, consecutive, adjacent, tol, fsegs=None):
    """Split points of every segment, proper crossings and curve components.

    ``segs[s] = (a, b)`` exact endpoints; ``owner[s]`` the curve (or bridge) index;
    ``consecutive`` the pairs ``(s, t)`` of segments that follow each other on a curve,
    ``adjacent(s, t)`` their shared vertex and other ends (or None).

    Each distinct segment is tested once (repeats share its split points; a crossing of
    repeated segments counts every pair of copies); the pairs to test come from
    :func:`_close_pairs` in bounded memory and are decided in the order of their first
    occurrences, so the graph is numbered as if every pair of segments were tested.
    """
    ns = len(segs)
    comps = _Components(max(owner) + 1)
    if fsegs is None:
        fsegs = [((float(a[0]), float(a[1])), (float(b[0]), float(b[1]))) for a, b in segs]
    first, index, mult = _unique_segments(fsegs)
    for s in range(ns):  # copies of one segment join their curves
        comps.union(owner[s], owner[first[index[s]]])
    adjacent_pairs: dict = {}  # distinct segments consecutive somewhere on a curve
    for s, t in consecutive:
        shared = adjacent(s, t)
        if shared:
            u, v = int(index[s]), int(index[t])
            adjacent_pairs.setdefault((min(u, v), max(u, v)), shared)
    useg = [segs[s] for s in first.tolist()]
    fu = np.array([fsegs[s] for s in first.tolist()], dtype=float).reshape(-1, 2, 2)
    A, B = fu[:, 0], fu[:, 1]
    pairs, signs = _close_pairs(A, B, tol)
    # decide in the order the pairs of first occurrences would come (distinct segments
    # are numbered in the order of their first occurrence)
    order = np.lexsort((pairs[:, 1], pairs[:, 0]))
    pairs, signs = pairs[order], signs[order]
    usplits: list[set] = [set() for _ in useg]
    crossing_order: list = []
    crossing_count: dict = {}
    for (i, j), known in zip(pairs.tolist(), signs.tolist()):
        a, b = useg[i]
        c, d = useg[j]
        oi, oj = owner[first[i]], owner[first[j]]
        if 2 in known:
            s1, s2, s3, s4 = (_sign(_orient(*abc)) for abc in
                              ((a, b, c), (a, b, d), (c, d, a), (c, d, b)))
        else:
            s1, s2, s3, s4 = known
        if s1 == 0 and s2 == 0:
            # collinear: each endpoint lying on the other segment splits it
            touched = False
            for p in (c, d):
                if _on_segment(p, a, b):
                    usplits[i].add(p)
                    touched = True
            for p in (a, b):
                if _on_segment(p, c, d):
                    usplits[j].add(p)
                    touched = True
            if touched:
                comps.union(oi, oj)
            continue
        adj = adjacent_pairs.get((min(i, j), max(i, j)))
        if adj:
            # consecutive edges share one vertex; refuse an almost-fold back
            s, p, q = adj
            if _dot_sign(s, p, q) > 0 and (_point_segment_distance(q, s, p) <= tol
                              or _point_segment_distance(p, s, q) <= tol):
                raise ValueError(
                    f"`vertices`: two consecutive edges almost double back over each "
                    f"other at vertex {(float(s[0]), float(s[1]))}; the arrangement is "
                    "too close to degenerate."
                )
            continue
        if s1 * s2 <= 0 and s3 * s4 <= 0:
            o3, o4 = _orient(c, d, a), _orient(c, d, b)
            t = o3 / (o3 - o4)
            x = (a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1]))
            usplits[i].add(x)
            usplits[j].add(x)
            comps.union(oi, oj)
            if 0 in (s1, s2, s3, s4):
                continue  # a touching point: a vertex of one segment on the other
            xf = (float(x[0]), float(x[1]))
            near = min(np.hypot(xf[0] - float(z[0]), xf[1] - float(z[1])) for z in (a, b, c, d))
            if near <= tol:
                raise ValueError(
                    f"`vertices`: edges {first[i]} and {first[j]} cross within `rtol` of a "
                    f"vertex at {xf}; the arrangement is too close to degenerate."
                )
            if x not in crossing_count:
                crossing_order.append(x)
                crossing_count[x] = 0
            crossing_count[x] += int(mult[i] * mult[j])
        else:
            dist = min(
                _point_segment_distance(c, a, b), _point_segment_distance(d, a, b),
                _point_segment_distance(a, c, d), _point_segment_distance(b, c, d),
            )
            if dist <= tol:
                raise ValueError(
                    f"`vertices`: edges {first[i]} and {first[j]} come within {dist:.3g} of "
                    f"each other (`rtol` * diameter = {tol:.3g}) without touching; the "
                    "arrangement is too close to degenerate."
                )
    splits = [usplits[u] for u in index.tolist()]
    return splits, crossing_order, crossing_count, comps


def _build(polys, turns, rtol, bridges=()):
    """The arrangement of exact polygons ``polys`` plus bridge segments."""
    P = [[(Fraction(x), Fraction(y)) for x, y in p.tolist()] for p in polys]
    allpts = np.vstack(polys)
    scale = float(np.hypot(*(allpts.max(axis=0) - allpts.min(axis=0))))
    tol = rtol * scale
    segs, owner, local, fsegs = [], [], [], []
    for c, (pts, fpts) in enumerate(zip(P, (p.tolist() for p in polys))):
        m = len(pts)
        for i in range(m):
            segs.append((pts[i], pts[(i + 1) % m]))
            fsegs.append((tuple(fpts[i]), tuple(fpts[(i + 1) % m])))
            owner.append(c)
            local.append((c, i, m))
    for k, (a, b) in enumerate(bridges):
        segs.append((a, b))
        fsegs.append(((float(a[0]), float(a[1])), (float(b[0]), float(b[1]))))
        owner.append(len(P) + k)  # a bridge: its own component, run by no curve
        local.append(None)

    def adjacent(s, t):
        # consecutive edges of one curve: (shared vertex, other end of s, of t)
        if local[s] is None or local[t] is None or local[s][0] != local[t][0]:
            return None
        _, i, m = local[s]
        _, j, _ = local[t]
        if m < 3:
            return None
        # as floats: polygon vertices are exactly their floats
        if j == (i + 1) % m:
            return fsegs[s][1], fsegs[s][0], fsegs[t][1]
        if i == (j + 1) % m:
            return fsegs[s][0], fsegs[s][1], fsegs[t][0]
        return None

    consecutive = [(s, s - i + (i + 1) % m) for s, loc in enumerate(local)
                   if loc is not None for _, i, m in (loc,)]
    splits, crossing_order, crossing_count, comps = _intersect(
        segs, owner, consecutive, adjacent, tol, fsegs)

    # graph vertices: the polygons' distinct vertices in order, then the crossings. A
    # polygon vertex is keyed by its float pair: a float hashes and compares like the
    # Fraction of its value (exactly), and is far faster to hash
    vid: dict = {}
    exact_pts: list = []
    for pts, fpts in zip(P, (p.tolist() for p in polys)):
        for p, f in zip(pts, map(tuple, fpts)):
            if f not in vid:
                vid[f] = len(exact_pts)
                exact_pts.append(p)
    n_poly = len(vid)
    for x in crossing_order:
        if x not in vid:
            vid[x] = len(exact_pts)
            exact_pts.append(x)
    for s in range(len(segs)):  # bridge ends and touching points not yet numbered
        for x in sorted(splits[s]):
            if x not in vid:
                vid[x] = len(exact_pts)
                exact_pts.append(x)

    edge_id: dict = {}
    edges: list[tuple[int, int]] = []
    paths: list[list[int]] = [[] for _ in P]
    for s, (a, b) in enumerate(segs):
        fa, fb = fsegs[s]  # the ends' exact values as floats (polygon vertices)
        inner = sorted((x for x in splits[s] if x != a and x != b),
                       key=lambda x: _param(x, a, b)) if splits[s] else ()
        chain = [vid[fa]] + [vid[x] for x in inner] + [vid[fb]]
        for u, w in zip(chain[:-1], chain[1:]):
            key = (min(u, w), max(u, w))
            e = edge_id.get(key)
            if e is None:
                e = edge_id[key] = len(edges)
                edges.append((u, w))
            if owner[s] < len(P):
                paths[owner[s]].append(2 * e if edges[e] == (u, w) else 2 * e + 1)
    ne, nv = len(edges), len(exact_pts)

    # half-edges around each vertex in counterclockwise order
    out: list[list[int]] = [[] for _ in range(nv)]
    for e, (u, w) in enumerate(edges):
        out[u].append(2 * e)
        out[w].append(2 * e + 1)

    def direction(h):
        u, w = edges[h // 2] if h % 2 == 0 else edges[h // 2][::-1]
        return (exact_pts[w][0] - exact_pts[u][0], exact_pts[w][1] - exact_pts[u][1])

    position = {}
    for v in range(nv):
        if len(out[v]) > 2:  # with two half-edges or one, either order is the cyclic one
            d = {h: direction(h) for h in out[v]}
            out[v].sort(key=cmp_to_key(lambda h, g: _angle_cmp(d[h], d[g])))
        for k, h in enumerate(out[v]):
            position[h] = k

    def head(h):
        e = h // 2
        return edges[e][1] if h % 2 == 0 else edges[e][0]

    def tail(h):
        return edges[h // 2][0] if h % 2 == 0 else edges[h // 2][1]

    # next half-edge keeping the face on the left: the one just clockwise of the twin
    face_of = np.full(2 * ne, -1, dtype=int)
    cycles = []
    for h0 in range(2 * ne):
        if face_of[h0] >= 0:
            continue
        cyc, h = [], h0
        while face_of[h] < 0:
            face_of[h] = len(cycles)
            cyc.append(h)
            v = head(h)
            h = out[v][(position[h ^ 1] - 1) % len(out[v])]
        cycles.append(cyc)

    ints, denom = _integer_points(exact_pts[:n_poly])
    twice_area = [_twice_area([tail(h) for h in cyc], exact_pts, n_poly, ints, denom)
                  for cyc in cycles]
    outer = [f for f, s in enumerate(twice_area) if s < 0]
    connected = len({comps.find(c) for c in range(len(P))}) == 1
    if connected and (len(outer) != 1 or len(cycles) != ne - nv + 2):
        raise ValueError(
            "`vertices`: the polygon's graph is degenerate (no consistent face "
            "structure); the arrangement is not well defined."
        )
    return dict(P=P, exact_pts=exact_pts, vid=vid, n_poly=n_poly, edges=edges, paths=paths,
                cycles=cycles, twice_area=twice_area, outer=outer, tail=tail,
                face_of=face_of, comps=comps, connected=connected,
                crossing_order=crossing_order, crossing_count=crossing_count,
                n_bridges=len(bridges), tol=tol)


def _twice_area(cycle, exact_pts, n_poly, ints, denom):
    """Twice the signed area of the polygon ``exact_pts[cycle]`` (shoelace, exact).

    The polygon vertices (indices below ``n_poly``) are ``ints / denom`` exactly (see
    :func:`_integer_points`): their terms are summed as integers, far faster than in
    Fractions; the terms touching a crossing are summed in Fractions.
    """
    isum, fsum = 0, Fraction(0)
    for u, w in zip(cycle, cycle[1:] + cycle[:1]):
        if u < n_poly and w < n_poly:
            p, q = ints[u], ints[w]
            isum += p[0] * q[1] - q[0] * p[1]
        else:
            p, q = exact_pts[u], exact_pts[w]
            fsum += p[0] * q[1] - q[0] * p[1]
    return Fraction(isum, denom * denom) + fsum


def _integer_points(points):
    """``(ints, denom)``: the points (pairs of Fractions of floats, whose denominators are
    powers of two) as integer pairs over their largest denominator."""
    denom = max((max(p[0].denominator, p[1].denominator) for p in points), default=1)
    ints = [(p[0].numerator * (denom // p[0].denominator),
             p[1].numerator * (denom // p[1].denominator)) for p in points]
    return ints, denom


def _bridge_candidates(P, comps):
    """Segments joining a curve's vertex to a vertex of another component, shortest
    first."""
    groups: dict[int, list] = {}
    for c, pts in enumerate(P):
        groups.setdefault(comps.find(c), []).extend(pts)
    keys = list(groups)
    base, rest = groups[keys[0]], groups[keys[1]]
    cand = []
    for p in rest:
        for q in base:
            d2 = (p[0] - q[0]) ** 2 + (p[1] - q[1]) ** 2
            cand.append((d2, p, q))
    cand.sort(key=lambda z: z[0])
    return [(p, q) for _, p, q in cand]


def _finish(g, polys, turns) -> Arrangement:
    edges, cycles, exact_pts = g["edges"], g["cycles"], g["exact_pts"]
    ne = len(edges)
    outer = g["outer"][0]
    face_of, tail = g["face_of"], g["tail"]
    bounded = [f for f in range(len(cycles)) if f != outer]
    index = {f: k for k, f in enumerate(bounded)}
    index[outer] = -1
    left = np.array([index[face_of[2 * e]] for e in range(ne)], dtype=int)
    right = np.array([index[face_of[2 * e + 1]] for e in range(ne)], dtype=int)

    nf = len(bounded)
    adj: list[list[tuple[int, int]]] = [[] for _ in range(nf + 1)]
    for e in range(ne):
        adj[right[e]].append((left[e], e))
        adj[left[e]].append((right[e], e))
    curve_winding = []
    for path in g["paths"]:
        net = np.zeros(ne, dtype=int)
        for h in path:
            net[h // 2] += 1 if h % 2 == 0 else -1
        wind = {-1: 0}
        queue = deque([-1])
        while queue:
            f = queue.popleft()
            for h, e in adj[f]:
                if h not in wind:
                    wind[h] = wind[f] + (net[e] if h == left[e] else -net[e])
                    queue.append(h)
        w = np.array([wind[f] for f in range(nf)], dtype=int)
        wl = np.where(left >= 0, w[np.maximum(left, 0)], 0)
        wr = np.where(right >= 0, w[np.maximum(right, 0)], 0)
        if np.any(wl - wr != net):
            raise ValueError("`vertices`: inconsistent winding numbers; degenerate input.")
        curve_winding.append(w)
    curve_winding = np.array(curve_winding, dtype=int).reshape(len(polys), nf)
    curve_winding = curve_winding * np.asarray(turns, dtype=int)[:, None]

    crossing_pts = [x for x in g["crossing_order"] if g["vid"][x] >= g["n_poly"]]
    # a point where k edges meet pairwise is counted k (k - 1) / 2 times
    deg = [int(round((1 + np.sqrt(1 + 8 * g["crossing_count"][x])) / 2)) for x in crossing_pts]
    exact_areas = tuple(g["twice_area"][f] / 2 for f in bounded)
    # the polygon vertices' floats are the first keys of `vid` (their exact values;
    # + 0.0 turns a -0.0 into the 0.0 that float(Fraction(0)) gives)
    n_poly = g["n_poly"]
    verts = np.array([k for k, _ in zip(g["vid"], range(n_poly))]
                     + [(float(x), float(y)) for x, y in exact_pts[n_poly:]],
                     dtype=float).reshape(-1, 2) + 0.0
    faces = tuple(np.array([tail(h) for h in cycles[f]], dtype=int) for f in bounded)
    face_cycles = tuple(np.array(cycles[f], dtype=int) for f in bounded)
    cross = np.array([(float(x), float(y)) for x, y in crossing_pts], dtype=float).reshape(-1, 2)
    return Arrangement(
        polygon=polys[0],
        turns=int(turns[0]),
        vertices=verts,
        crossings=cross,
        crossing_degree=np.array(deg, dtype=int),
        edges=np.array(edges, dtype=int).reshape(-1, 2),
        left_face=left,
        right_face=right,
        faces=faces,
        face_cycles=face_cycles,
        areas=np.array([float(a) for a in exact_areas]),
        exact_areas=exact_areas,
        winding=curve_winding.sum(axis=0),
        paths=tuple(np.array(p, dtype=int) for p in g["paths"]),
        curve_turns=tuple(int(t) for t in turns),
        curve_winding=curve_winding,
        bridges=g["n_bridges"],
        outer_cycle=np.array(cycles[outer], dtype=int),
    )


def _check_crossings_apart(g):
    cf = np.array([(float(x), float(y)) for x, y in g["crossing_order"]],
                  dtype=float).reshape(-1, 2)
    if len(cf) > 1:
        # pairs within tol from a k-d tree: memory in the number of close pairs, not nc^2
        close = cKDTree(cf).query_pairs(g["tol"], output_type="ndarray") if g["tol"] > 0 \
            else np.zeros((0, 2), dtype=int)
        if len(close):
            dmin = float(np.hypot(*(cf[close[:, 0]] - cf[close[:, 1]]).T).min())
            raise ValueError(
                f"`vertices`: two distinct crossings lie within {dmin:.3g} of each "
                "other; the arrangement is too close to degenerate."
            )


#: arrangements computed lately, by their polygons, turns and rtol (most recent last):
#: several consumers of one loop in one command (its exact value, the Gaussian-matrix
#: field, the face area errors of its snapping) share one computation
_CACHE: "OrderedDict[tuple, Arrangement | str]" = OrderedDict()
#: how many arrangements (or refusals) are kept
CACHE_SIZE = 32


def _freeze(arr: Arrangement) -> Arrangement:
    """Make the arrays of a shared arrangement read-only (a caller that wrote into one
    would change it for every later caller)."""
    for value in vars(arr).values():
        for a in (value if isinstance(value, tuple) else (value,)):
            if isinstance(a, np.ndarray):
                a.setflags(write=False)
    return arr


def _arrange(polys, turns, rtol) -> Arrangement:
    key = (tuple((p.shape, p.tobytes()) for p in polys), tuple(turns), rtol)
    hit = _CACHE.get(key)
    if hit is None:
        try:
            hit = _freeze(_arrange_uncached(polys, turns, rtol))
        except ValueError as exc:
            hit = str(exc)
        _CACHE[key] = hit
        while len(_CACHE) > CACHE_SIZE:
            _CACHE.popitem(last=False)
    else:
        _CACHE.move_to_end(key)
    if isinstance(hit, str):  # a refusal: the same message each time
        raise ValueError(hit)
    return hit


def _arrange_uncached(polys, turns, rtol) -> Arrangement:
    bridges: list = []
    g = _build(polys, turns, rtol)
    while not g["connected"]:
        for attempt, seg in enumerate(_bridge_candidates(g["P"], g["comps"])):
            try:
                trial = _build(polys, turns, rtol, bridges + [seg])
            except ValueError:
                if attempt >= 50:
                    raise
                continue
            bridges.append(seg)
            g = trial
            break
        else:  # every candidate failed (before this guard: an endless loop)
            raise ValueError(
                "`curves`: no segment joins the separate curves without touching them; "
                "the arrangement is too close to degenerate."
            )
    _check_crossings_apart(g)
    return _finish(g, polys, turns)


def arrangement(vertices, turns: int = 1, *, rtol: float = 1e-9) -> Arrangement:
    """Crossings, planar graph, bounded faces, exact areas and winding numbers of a loop.

    Parameters
    ----------
    vertices : array_like, shape (m, 2)
        The closed polygon's vertices in traversal order (the closing vertex need not
        be repeated). Counterclockwise loops have positive winding numbers. The polygon
        may touch itself, run back along an edge or overlap itself (see the module
        docstring).
    turns : int, optional
        Number of times the curve runs around the polygon (default 1). The graph and
        faces do not depend on it; the winding numbers are multiplied by it.
    rtol : float, optional
        Relative tolerance (times the diameter of the polygon) below which a
        near-degenerate configuration is refused (default 1e-9).

    Returns
    -------
    Arrangement
        See :class:`Arrangement`. ``sum(winding * areas)`` equals ``turns`` times the
        shoelace area of the polygon.

    Raises
    ------
    ValueError
        If the input is malformed or within ``rtol`` of a degenerate configuration
        without being one.

    References
    ----------
    .. [1] M. de Berg et al., "Computational Geometry: Algorithms and Applications",
       3rd ed., Springer, 2008, sec. 2.1-2.3.
    .. [2] J. O'Rourke, "Computational Geometry in C", 2nd ed., 1998, sec. 1.3, 7.4.

    Examples
    --------
    >>> from discretize import arrangement
    >>> fig8 = arrangement([(0, 0), (2, 2), (2, 0), (0, 2)])
    >>> fig8.n_crossings, fig8.n_faces, sorted(fig8.winding.tolist())
    (1, 2, [-1, 1])
    >>> touching = arrangement([(0, 0), (1, 0), (1, 1), (2, 1), (2, 2), (1, 2), (1, 1), (0, 1)])
    >>> touching.n_crossings, touching.n_faces, touching.winding.tolist()
    (0, 2, [1, 1])
    """
    turns = _turns_iv(turns)
    rtol = _rtol_iv(rtol)
    v = _polygon_iv(vertices)
    if len(v) < 3:
        raise ValueError(
            f"`vertices` must hold at least 3 distinct consecutive points; got {len(v)}."
        )
    return _arrange([v], [turns], rtol)


def joint_arrangement(curves, turns=None, *, rtol: float = 1e-9) -> Arrangement:
    """The arrangement of several closed polygons drawn together.

    Parameters
    ----------
    curves : sequence of array_like, each of shape (m_i, 2)
        The polygons (as in :func:`arrangement`).
    turns : sequence of int, optional
        Turns of each curve (default all 1).
    rtol : float, optional
        As in :func:`arrangement`.

    Returns
    -------
    Arrangement
        ``paths[i]`` and ``curve_winding[i]`` describe curve ``i``; separate curves
        are joined by ``bridges`` edges that no curve runs.

    Examples
    --------
    >>> from discretize import joint_arrangement
    >>> nested = joint_arrangement([[(0, 0), (3, 0), (3, 3), (0, 3)],
    ...                             [(1, 1), (2, 1), (2, 2), (1, 2)]])
    >>> nested.n_faces, nested.curve_winding.tolist(), nested.bridges
    (2, [[1, 1], [0, 1]], 1)
    """
    try:
        curves = list(curves)
    except TypeError:
        raise ValueError(f"`curves` must be a sequence of polygons; got {curves!r}.") from None
    if not curves:
        raise ValueError("`curves` must hold at least one polygon.")
    polys = []
    for i, c in enumerate(curves):
        v = _polygon_iv(c, f"curves[{i}]")
        if len(v) < 3:
            raise ValueError(
                f"`curves[{i}]` must hold at least 3 distinct consecutive points; got {len(v)}."
            )
        polys.append(v)
    if turns is None:
        turns = [1] * len(polys)
    turns = [_turns_iv(t, f"turns[{i}]") for i, t in enumerate(turns)]
    if len(turns) != len(polys):
        raise ValueError(
            f"`turns` must give one count per curve ({len(polys)}); got {len(turns)}."
        )
    return _arrange(polys, turns, _rtol_iv(rtol))

"""The arrangement of a closed polygon: crossings, planar graph, faces and windings.

A closed polygon ``v_0 v_1 ... v_{m-1} v_0`` traversed ``turns`` times cuts the plane
into faces. This module computes the planar graph of the curve (the polygon's vertices
and its self-intersection points, joined by the pieces of the polygon's edges), its
bounded faces with their exact areas and the winding number of the curve around each
face.

Conventions
-----------
- Graph edges are numbered in the order the curve traverses them and are oriented
  along the curve, so one turn of the loop is ``edges[0], edges[1], ...`` read forward.
- Half-edge ``2 e`` is edge ``e`` read forward, ``2 e + 1`` read backward.
- A face boundary is the cycle of half-edges that have the face on their left; for a
  bounded face it runs counterclockwise.
- Winding numbers count counterclockwise turns as positive: the face on the left of
  the curve has winding one more (per turn) than the face on its right.

Robustness
----------
All topological decisions (orientation tests, intersection parameters, angular order,
areas) are made in exact rational arithmetic on the binary values of the input floats,
so the combinatorics never depends on rounding. Configurations where the arrangement is
not well defined (collinear overlapping edges, an edge doubling back, a vertex on a
non-adjacent edge, two polygon vertices at the same point) raise ``ValueError``, and so
do configurations closer to one of these than ``rtol`` times the size of the polygon,
where a slightly perturbed input would change the graph.

References
----------
.. [1] M. de Berg, O. Cheong, M. van Kreveld, M. Overmars, "Computational Geometry:
   Algorithms and Applications", 3rd ed., Springer, 2008, ch. 2 (line-segment
   intersection, doubly connected edge lists and face traversal).
.. [2] J. O'Rourke, "Computational Geometry in C", 2nd ed., Cambridge University
   Press, 1998, sec. 1.3 (area by the shoelace formula) and 7.4 (winding numbers).
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, field
from fractions import Fraction
from functools import cmp_to_key

import numpy as np

__all__ = ["Arrangement", "arrangement"]


@dataclass(frozen=True)
class Arrangement:
    """The planar graph and faces of a closed polygon traversed ``turns`` times.

    Attributes
    ----------
    polygon : ndarray, shape (m, 2)
        The polygon's vertices (closing vertex not repeated, consecutive duplicates
        removed). Graph vertices ``0 .. m-1`` are these, in order.
    turns : int
        How many times the curve runs around the polygon.
    vertices : ndarray, shape (nv, 2)
        Graph vertices: the polygon's vertices, then the crossings.
    crossings : ndarray, shape (nc, 2)
        The self-intersection points (``vertices[m:]``).
    crossing_degree : ndarray, shape (nc,)
        Number of curve passages through each crossing (2 for an ordinary crossing).
    edges : ndarray, shape (ne, 2) of int
        Graph edges ``(tail, head)`` in the order the curve traverses them.
    left_face, right_face : ndarray, shape (ne,) of int
        Face on each side of each edge (bounded face index, or -1 for the unbounded
        face).
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
        Winding number of the curve (all turns) around each bounded face.
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

    @property
    def n_faces(self) -> int:
        """Number of bounded faces."""
        return len(self.faces)

    @property
    def n_crossings(self) -> int:
        """Number of distinct self-intersection points."""
        return len(self.crossings)

    @property
    def signed_area(self) -> float:
        """Sum over faces of winding times area: the signed area of the loop."""
        return float(np.dot(self.winding, self.areas))

    def face_polygon(self, i: int) -> np.ndarray:
        """Coordinates of the boundary of bounded face ``i`` (counterclockwise)."""
        return self.vertices[self.faces[i]]


def _arrangement_iv(vertices, turns, rtol):
    if isinstance(turns, bool) or not isinstance(turns, (int, np.integer)) or turns < 1:
        raise ValueError(f"`turns` must be a positive integer; got {turns!r}.")
    if not (isinstance(rtol, (int, float, np.floating)) and 0 <= rtol < 1e-2):
        raise ValueError(f"`rtol` must be a number in [0, 0.01); got {rtol!r}.")
    try:
        v = np.asarray(vertices, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(
            f"`vertices` must be an array of shape (m, 2) of finite numbers; "
            f"got {vertices!r}."
        ) from None
    if v.ndim != 2 or v.shape[1] != 2:
        raise ValueError(
            f"`vertices` must be an array of shape (m, 2); got shape {v.shape}."
        )
    if not np.all(np.isfinite(v)):
        raise ValueError("`vertices` must be finite; got a NaN or infinite coordinate.")
    # drop consecutive repeats and a repeated closing vertex: zero-length edges carry
    # no geometry
    keep = [0]
    for i in range(1, len(v)):
        if not np.array_equal(v[i], v[keep[-1]]):
            keep.append(i)
    if len(keep) > 1 and np.array_equal(v[keep[-1]], v[keep[0]]):
        keep.pop()
    v = v[keep]
    if len(v) < 3:
        raise ValueError(
            f"`vertices` must hold at least 3 distinct consecutive points; got {len(v)}."
        )
    return v, int(turns), float(rtol)


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


def arrangement(vertices, turns: int = 1, *, rtol: float = 1e-9) -> Arrangement:
    """Crossings, planar graph, bounded faces, exact areas and winding numbers of a loop.

    Parameters
    ----------
    vertices : array_like, shape (m, 2)
        The closed polygon's vertices in traversal order (the closing vertex need not
        be repeated). Counterclockwise loops have positive winding numbers.
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
        If the input is malformed or the arrangement is not well defined (collinear
        overlapping edges, a vertex on a non-adjacent edge, repeated vertices, or a
        configuration within ``rtol`` of one of these).

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
    """
    poly, turns, rtol = _arrangement_iv(vertices, turns, rtol)
    m = len(poly)
    scale = float(np.hypot(*(poly.max(axis=0) - poly.min(axis=0))))
    tol = rtol * scale
    P = [(Fraction(x), Fraction(y)) for x, y in poly.tolist()]
    A, B = poly, np.roll(poly, -1, axis=0)  # edge i runs A[i] -> B[i]
    lo = np.minimum(A, B) - tol
    hi = np.maximum(A, B) + tol
    overlap = np.all(
        (lo[:, None, :] <= hi[None, :, :]) & (lo[None, :, :] <= hi[:, None, :]), axis=-1
    )
    ii, jj = np.nonzero(np.triu(overlap, k=1))

    splits: list[list[tuple[Fraction, int]]] = [[] for _ in range(m)]
    crossing_id: dict[tuple[Fraction, Fraction], int] = {}
    crossing_pts: list[tuple[Fraction, Fraction]] = []
    crossing_deg: list[int] = []
    touching: list[str] = []
    for i, j in zip(ii.tolist(), jj.tolist()):
        a, b = P[i], P[(i + 1) % m]
        c, d = P[j], P[(j + 1) % m]
        if j == i + 1 or (i == 0 and j == m - 1):
            # adjacent edges share one vertex; they must not fold back onto each other
            s, p, q = (b, a, d) if j == i + 1 else (a, b, c)
            along = (p[0] - s[0]) * (q[0] - s[0]) + (p[1] - s[1]) * (q[1] - s[1])
            if along > 0 and (
                _orient(s, p, q) == 0
                or _point_segment_distance(q, s, p) <= tol
                or _point_segment_distance(p, s, q) <= tol
            ):
                raise ValueError(
                    f"`vertices`: edges {i} and {j} double back over each other at "
                    f"vertex {(float(s[0]), float(s[1]))}; the arrangement is not "
                    "well defined."
                )
            continue
        o1, o2 = _orient(a, b, c), _orient(a, b, d)
        o3, o4 = _orient(c, d, a), _orient(c, d, b)
        s1, s2, s3, s4 = map(_sign, (o1, o2, o3, o4))
        if s1 == 0 and s2 == 0:
            # collinear: refuse any contact (overlap or touching end to end)
            ax = 0 if abs(b[0] - a[0]) >= abs(b[1] - a[1]) else 1
            i0, i1 = sorted((a[ax], b[ax]))
            j0, j1 = sorted((c[ax], d[ax]))
            if i0 <= j1 and j0 <= i1:
                raise ValueError(
                    f"`vertices`: edges {i} and {j} are collinear and overlap or touch; "
                    "the arrangement is not well defined."
                )
        elif s1 * s2 <= 0 and s3 * s4 <= 0:
            if 0 in (s1, s2, s3, s4):
                # reported after the loop: a collinear overlap, if any, explains it
                touching.append(
                    f"`vertices`: a vertex of edge {i} or {j} lies on the other edge "
                    "(the curve touches itself); the arrangement is not well defined."
                )
                continue
            t = o3 / (o3 - o4)
            u = o1 / (o1 - o2)
            x = (a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1]))
            xf = (float(x[0]), float(x[1]))
            near = min(np.hypot(xf[0] - float(z[0]), xf[1] - float(z[1])) for z in (a, b, c, d))
            if near <= tol:
                raise ValueError(
                    f"`vertices`: edges {i} and {j} cross within `rtol` of a vertex at "
                    f"{xf}; the arrangement is too close to degenerate."
                )
            k = crossing_id.get(x)
            if k is None:
                k = crossing_id[x] = len(crossing_pts)
                crossing_pts.append(x)
                crossing_deg.append(0)
            crossing_deg[k] += 1
            splits[i].append((t, m + k))
            splits[j].append((u, m + k))
        else:
            dist = min(
                _point_segment_distance(c, a, b), _point_segment_distance(d, a, b),
                _point_segment_distance(a, c, d), _point_segment_distance(b, c, d),
            )
            if dist <= tol:
                touching.append(
                    f"`vertices`: edges {i} and {j} come within {dist:.3g} of each "
                    f"other (`rtol` * diameter = {tol:.3g}); the arrangement is too "
                    "close to degenerate."
                )
    if touching:
        raise ValueError(touching[0])
    # a point where k edges meet is passed k times; ordinary crossings count 2 passages
    crossing_deg = [int(round((1 + np.sqrt(1 + 8 * c)) / 2)) for c in crossing_deg]
    cf = np.array([(float(x), float(y)) for x, y in crossing_pts], dtype=float).reshape(-1, 2)
    if len(cf) > 1:
        dd = np.hypot(*(cf[:, None, :] - cf[None, :, :]).transpose(2, 0, 1))
        np.fill_diagonal(dd, np.inf)
        if dd.min() <= tol:
            raise ValueError(
                f"`vertices`: two distinct crossings lie within {dd.min():.3g} of each "
                "other; the arrangement is too close to degenerate."
            )

    exact_pts = P + crossing_pts
    edges: list[tuple[int, int]] = []
    for i in range(m):
        chain = [i] + [k for _, k in sorted(splits[i])] + [(i + 1) % m]
        edges.extend(zip(chain[:-1], chain[1:]))
    ne, nv = len(edges), len(exact_pts)

    # half-edges around each vertex in counterclockwise order
    out: list[list[int]] = [[] for _ in range(nv)]
    direction = {}
    for e, (u, w) in enumerate(edges):
        du = (exact_pts[w][0] - exact_pts[u][0], exact_pts[w][1] - exact_pts[u][1])
        direction[2 * e] = du
        direction[2 * e + 1] = (-du[0], -du[1])
        out[u].append(2 * e)
        out[w].append(2 * e + 1)
    position = {}
    for v in range(nv):
        out[v].sort(key=cmp_to_key(lambda h, g: _angle_cmp(direction[h], direction[g])))
        for k, h in enumerate(out[v]):
            position[h] = k

    def head(h):
        e = h // 2
        return edges[e][1] if h % 2 == 0 else edges[e][0]

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

    def tail(h):
        return edges[h // 2][0] if h % 2 == 0 else edges[h // 2][1]

    twice_area = []
    for cyc in cycles:
        pts = [exact_pts[tail(h)] for h in cyc]
        twice_area.append(
            sum(p[0] * q[1] - q[0] * p[1] for p, q in zip(pts, pts[1:] + pts[:1]))
        )
    outer = [f for f, s in enumerate(twice_area) if s < 0]
    # a connected plane graph has exactly one face with clockwise boundary (Euler)
    if len(outer) != 1 or len(cycles) != ne - nv + 2:
        raise ValueError(
            "`vertices`: the polygon's graph is degenerate (no consistent face "
            "structure); the arrangement is not well defined."
        )
    bounded = [f for f in range(len(cycles)) if f != outer[0]]
    index = {f: k for k, f in enumerate(bounded)}
    index[outer[0]] = -1
    left = np.array([index[face_of[2 * e]] for e in range(ne)], dtype=int)
    right = np.array([index[face_of[2 * e + 1]] for e in range(ne)], dtype=int)

    # winding numbers: +1 per turn crossing the curve from its right to its left
    nf = len(bounded)
    wind = {-1: 0}
    adj: list[list[tuple[int, int]]] = [[] for _ in range(nf + 1)]
    for e in range(ne):
        adj[right[e]].append((left[e], 1))
        adj[left[e]].append((right[e], -1))
    queue = deque([-1])
    while queue:
        f = queue.popleft()
        for g, dw in adj[f]:
            if g not in wind:
                wind[g] = wind[f] + dw
                queue.append(g)
    winding = np.array([wind[f] for f in range(nf)], dtype=int)
    wl = np.where(left >= 0, winding[np.maximum(left, 0)], 0)
    wr = np.where(right >= 0, winding[np.maximum(right, 0)], 0)
    if np.any(wl - wr != 1):
        raise ValueError("`vertices`: inconsistent winding numbers; degenerate input.")

    exact_areas = tuple(twice_area[f] / 2 for f in bounded)
    verts = np.array([(float(x), float(y)) for x, y in exact_pts], dtype=float)
    faces = tuple(np.array([tail(h) for h in cycles[f]], dtype=int) for f in bounded)
    face_cycles = tuple(np.array(cycles[f], dtype=int) for f in bounded)
    return Arrangement(
        polygon=poly,
        turns=turns,
        vertices=verts,
        crossings=verts[m:],
        crossing_degree=np.array(crossing_deg, dtype=int),
        edges=np.array(edges, dtype=int).reshape(-1, 2),
        left_face=left,
        right_face=right,
        faces=faces,
        face_cycles=face_cycles,
        areas=np.array([float(a) for a in exact_areas]),
        exact_areas=exact_areas,
        winding=turns * winding,
    )

"""Square grids of cells on the plane.

Conventions (part of the contract, see DEVELOPERS.md):

- A grid has ``nx`` columns and ``ny`` rows of square cells of side ``spacing`` (h).
  Cell ``(i, j)`` is column ``i``, row ``j``: the square
  ``[x0 + i h, x0 + (i+1) h] x [y0 + j h, y0 + (j+1) h]``.
- Nodes are the cell corners ``(i, j)`` with ``0 <= i <= nx`` and ``0 <= j <= ny``; node
  ``(i, j)`` sits at ``(x0 + i h, y0 + j h)``.
- Arrays over cells are indexed ``[i, j]`` (x first), shape ``(nx, ny)``.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np

__all__ = ["Grid"]

# Relative tolerance (in units of the spacing) for "this coordinate is on a node".
_NODE_TOL = 1e-9


def _as_int(value, name: str, minimum: int) -> int:
    """Return ``value`` as an int >= ``minimum`` or raise with a message naming ``name``."""
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        raise TypeError(f"`{name}` must be an integer, got {value!r}.")
    if value < minimum:
        raise ValueError(f"`{name}` must be an integer >= {minimum}, got {value!r}.")
    return int(value)


def _grid_iv(origin, spacing, shape):
    """Input validation and standardization for :class:`Grid`."""
    try:
        ox, oy = (float(v) for v in origin)
    except (TypeError, ValueError):
        raise TypeError(
            f"`origin` must be a pair of finite numbers (x0, y0), got {origin!r}."
        ) from None
    if not (math.isfinite(ox) and math.isfinite(oy)):
        raise ValueError(f"`origin` must be a pair of finite numbers, got {origin!r}.")
    if isinstance(spacing, bool) or not isinstance(spacing, numbers.Real):
        raise TypeError(f"`spacing` must be a positive finite number, got {spacing!r}.")
    h = float(spacing)
    if not (math.isfinite(h) and h > 0):
        raise ValueError(f"`spacing` must be a positive finite number, got {spacing!r}.")
    try:
        sx, sy = shape
    except (TypeError, ValueError):
        raise TypeError(f"`shape` must be a pair of integers (nx, ny), got {shape!r}.") from None
    nx = _as_int(sx, "shape", 1)
    ny = _as_int(sy, "shape", 1)
    return (ox, oy), h, (nx, ny)


@dataclass(frozen=True)
class Grid:
    """A rectangle of ``nx`` by ``ny`` square cells of side ``spacing``.

    Parameters
    ----------
    origin : (float, float)
        Coordinates of node ``(0, 0)``, the lower-left corner.
    spacing : float
        The lattice spacing h > 0.
    shape : (int, int)
        Number of cells ``(nx, ny)``, each >= 1.

    Examples
    --------
    >>> g = Grid((0.0, 0.0), 0.5, (4, 2))
    >>> g.node(4, 2)
    (2.0, 1.0)
    >>> g.node_index(1.0, 0.5)
    (2, 1)
    """

    origin: tuple[float, float]
    spacing: float
    shape: tuple[int, int]

    def __post_init__(self):
        origin, spacing, shape = _grid_iv(self.origin, self.spacing, self.shape)
        object.__setattr__(self, "origin", origin)
        object.__setattr__(self, "spacing", spacing)
        object.__setattr__(self, "shape", shape)

    # -- construction ---------------------------------------------------------------
    @classmethod
    def covering(cls, bbox, spacing: float, margin: int = 1) -> "Grid":
        """The grid of spacing ``spacing`` aligned on multiples of it that covers ``bbox``.

        The origin is an integer multiple of ``spacing``, so a loop whose vertex
        coordinates are multiples of the spacing has its vertices on nodes. ``margin``
        extra cells are added on every side.

        Parameters
        ----------
        bbox : (xmin, ymin, xmax, ymax)
        spacing : float
        margin : int, default 1
        """
        try:
            xmin, ymin, xmax, ymax = (float(v) for v in bbox)
        except (TypeError, ValueError):
            raise TypeError(
                f"`bbox` must be four numbers (xmin, ymin, xmax, ymax), got {bbox!r}."
            ) from None
        if not all(math.isfinite(v) for v in (xmin, ymin, xmax, ymax)):
            raise ValueError(f"`bbox` must be finite, got {bbox!r}.")
        if xmax < xmin or ymax < ymin:
            raise ValueError(f"`bbox` must have xmin <= xmax and ymin <= ymax, got {bbox!r}.")
        _, h, _ = _grid_iv((0.0, 0.0), spacing, (1, 1))
        m = _as_int(margin, "margin", 0)
        # Snap to the nearest multiple when within rounding of it, so that e.g.
        # 0.3 / 0.1 = 2.9999999999999996 counts as 3.
        def lo(v):
            r = round(v / h)
            return r if abs(v / h - r) <= _NODE_TOL else math.floor(v / h)

        def hi(v):
            r = round(v / h)
            return r if abs(v / h - r) <= _NODE_TOL else math.ceil(v / h)

        i0, j0 = lo(xmin) - m, lo(ymin) - m
        i1, j1 = hi(xmax) + m, hi(ymax) + m
        return cls((i0 * h, j0 * h), h, (max(i1 - i0, 1), max(j1 - j0, 1)))

    # -- geometry ---------------------------------------------------------------------
    @property
    def nx(self) -> int:
        return self.shape[0]

    @property
    def ny(self) -> int:
        return self.shape[1]

    @property
    def cell_area(self) -> float:
        """Lebesgue area h**2 of one cell."""
        return self.spacing**2

    @property
    def extent(self) -> tuple[float, float, float, float]:
        """``(xmin, ymin, xmax, ymax)`` of the grid."""
        x0, y0 = self.origin
        return (x0, y0, x0 + self.nx * self.spacing, y0 + self.ny * self.spacing)

    def node(self, i, j):
        """Coordinates ``(x, y)`` of node ``(i, j)`` (scalars or arrays)."""
        x0, y0 = self.origin
        if np.ndim(i) == 0 and np.ndim(j) == 0:
            return (x0 + float(i) * self.spacing, y0 + float(j) * self.spacing)
        return (x0 + np.asarray(i) * self.spacing, y0 + np.asarray(j) * self.spacing)

    def node_coordinates(self, nodes) -> np.ndarray:
        """Coordinates of an ``(..., 2)`` integer array of node indices."""
        nodes = np.asarray(nodes)
        return np.asarray(self.origin) + nodes * self.spacing

    def node_index(self, x: float, y: float, *, tol: float = _NODE_TOL) -> tuple[int, int]:
        """Index of the node at ``(x, y)``.

        The point must lie within ``tol * spacing`` of a node (it need not be inside the
        grid's extent); use :meth:`nearest_node` to round any point.
        """
        i, j = self.nearest_node(x, y)
        nx_, ny_ = self.node(i, j)
        if abs(nx_ - x) > tol * self.spacing or abs(ny_ - y) > tol * self.spacing:
            raise ValueError(
                f"`(x, y)` = ({x!r}, {y!r}) is not on a node of the grid (origin "
                f"{self.origin}, spacing {self.spacing}); the nearest node is ({i}, {j})."
            )
        return (i, j)

    def nearest_node(self, x, y):
        """Index of the nearest node (rounding half to even); works on arrays."""
        x0, y0 = self.origin
        i = np.rint((np.asarray(x, dtype=float) - x0) / self.spacing).astype(np.int64)
        j = np.rint((np.asarray(y, dtype=float) - y0) / self.spacing).astype(np.int64)
        if i.ndim == 0:
            return (int(i), int(j))
        return i, j

    def contains_node(self, i, j):
        """True where ``0 <= i <= nx`` and ``0 <= j <= ny`` (works on arrays)."""
        i = np.asarray(i)
        j = np.asarray(j)
        inside = (i >= 0) & (i <= self.nx) & (j >= 0) & (j <= self.ny)
        return bool(inside) if inside.ndim == 0 else inside

    def contains_box(self, xmin: float, ymin: float, xmax: float, ymax: float) -> bool:
        """True if the box lies inside the grid's extent (up to rounding)."""
        gx0, gy0, gx1, gy1 = self.extent
        eps = _NODE_TOL * self.spacing
        return bool(
            xmin >= gx0 - eps and ymin >= gy0 - eps and xmax <= gx1 + eps and ymax <= gy1 + eps
        )

    def cell_centers(self) -> tuple[np.ndarray, np.ndarray]:
        """Coordinates ``(X, Y)`` of the cell centers, each of shape ``(nx, ny)``."""
        xc, yc = self.center_lines()
        return np.meshgrid(xc, yc, indexing="ij")

    def center_lines(self) -> tuple[np.ndarray, np.ndarray]:
        """The ``nx`` column-center abscissae and ``ny`` row-center ordinates."""
        x0, y0 = self.origin
        h = self.spacing
        return (x0 + (np.arange(self.nx) + 0.5) * h, y0 + (np.arange(self.ny) + 0.5) * h)

    def node_lines(self) -> tuple[np.ndarray, np.ndarray]:
        """The ``nx + 1`` node abscissae and ``ny + 1`` node ordinates."""
        x0, y0 = self.origin
        h = self.spacing
        return (x0 + np.arange(self.nx + 1) * h, y0 + np.arange(self.ny + 1) * h)

    def refined(self) -> "Grid":
        """The grid with spacing h/2 over the same extent (cell (i, j) has children
        (2i..2i+1, 2j..2j+1))."""
        return Grid(self.origin, self.spacing / 2, (2 * self.nx, 2 * self.ny))

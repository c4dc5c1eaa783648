"""Axial-gauge plans: which column intervals each loop edge needs, and their areas.

Conventions (part of the contract; see DEVELOPERS.md)
-----------------------------------------------------
``axial-y``: the vertical links are the identity and the horizontal links on the
reference line y = y_ref are the identity. The rightward link across column i at height
y is the transport along the column from y to the reference line,

    R(i, y) = (Q_ref Q_ref+1 ... Q_{y-1})^{-1}     (y above the reference)
    R(i, y) =  Q_y Q_y+1 ... Q_{ref-1}             (y below the reference)

with the column's plaquette variables Q read bottom to top; the leftward link is its
inverse. A loop's holonomy is the product of its links in traversal order,
``H = L_1 L_2 ... L_m``. With this choice a counterclockwise loop around one cell with
plaquette variable Q has holonomy Q, so for U(1) (Q = exp(i x)) the phase of any loop is
exp(i sum_F n_F x_F), n_F the winding number.

Only the cells between the reference line and the heights where a loop crosses a column
matter, and only through their products over *intervals* between consecutive needed
heights. A plan lists those intervals (column, lower and upper row, measure, side of
the reference, and the interval next to it towards the reference), so that a sampler can
draw them directly (perimeter-only path) or form them from per-cell variables (dense
path). Every needed height other than the reference is the far end of exactly one
interval, so the link at that height is the cumulative product of the chain of
intervals from the reference to it.

``axial-x`` is ``axial-y`` in the plane rotated by -90 degrees, (x, y) -> (y, -x), which
preserves area and orientation: vertical lines become horizontal ones. Cell (i, j) of
the grid is cell (j, nx - 1 - i) of the rotated grid (its *frame*).

References
----------
.. [1] Driver, B. K. (1989). "YM2: continuum expectations, lattice convergence, and
   lassos." Commun. Math. Phys. 123, 575-616 (axial gauge for the plane).
.. [2] Gross, L., King, C. and Sengupta, A. (1989). "Two dimensional Yang-Mills theory
   via stochastic differential equations." Ann. Physics 194, 65-112.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from noise import ArgumentError

from ._area import AreaForm
from ._grid import Grid

__all__ = ["GAUGES", "AxialPlan", "axial_plan", "to_frame"]

GAUGES = ("axial-y", "axial-x")


def to_frame(grid: Grid, gauge: str) -> Grid:
    """The grid as seen in the gauge's frame (rotated by -90 degrees for ``axial-x``)."""
    if gauge == "axial-y":
        return grid
    x0, y0 = grid.origin
    nx, ny = grid.shape
    return Grid((y0, -(x0 + nx * grid.spacing)), grid.spacing, (ny, nx))


def frame_cells(cells: np.ndarray, gauge: str) -> np.ndarray:
    """Re-index an array over cells ``[..., i, j, ...]`` (axes -2 - extra) into the frame.

    ``cells`` has the cell axes at positions (1, 2) (a leading sample axis); trailing
    axes are carried along. Under ``axial-x``, frame cell (a, b) is grid cell
    (nx - 1 - b, a).
    """
    if gauge == "axial-y":
        return cells
    return np.swapaxes(cells[:, ::-1], 1, 2)


@dataclass(frozen=True)
class AxialPlan:
    """The intervals and link choices an axial-gauge sampler needs for some loops.

    All indices are in the gauge's frame (see :func:`to_frame`).

    Attributes
    ----------
    gauge : str
    grid : Grid
        The grid in the original frame.
    frame : Grid
        The grid in the gauge's frame.
    ref_row : int
        Row index (in the frame) of the reference line.
    column, lo, hi : ndarray (K,)
        Interval k covers rows ``lo[k] .. hi[k] - 1`` of frame column ``column[k]``.
    side : ndarray (K,)
        +1 if the interval lies above the reference line, -1 below.
    parent : ndarray (K,)
        The interval between interval k and the reference (-1 if k touches it).
    depth : ndarray (K,)
        Number of intervals between k and the reference.
    measure : ndarray (K,)
        The area-form measure of each interval (multiply by the coupling for the
        variance of each noise component).
    steps : tuple of (links, directions)
        Per loop: the interval index of each horizontal step's link in traversal order
        (-1 for a link on the reference line, which is the identity) and its direction
        (+1 rightward, -1 leftward, in the frame).
    cell_measures : ndarray (nx, ny)
        Measures of the cells in the frame.
    """

    gauge: str
    grid: Grid
    frame: Grid
    ref_row: int
    column: np.ndarray
    lo: np.ndarray
    hi: np.ndarray
    side: np.ndarray
    parent: np.ndarray
    depth: np.ndarray
    measure: np.ndarray
    steps: tuple
    cell_measures: np.ndarray

    @property
    def n_intervals(self) -> int:
        return int(self.column.size)

    @property
    def max_depth(self) -> int:
        return int(self.depth.max()) + 1 if self.depth.size else 0

    def link_count(self) -> int:
        """Total number of horizontal steps over all loops (the perimeter cost)."""
        return int(sum(links.size for links, _ in self.steps))

    def columns_and_rows(self) -> tuple[np.ndarray, int, int]:
        """Frame columns that hold an interval, and the row range the intervals span."""
        if not self.column.size:
            return np.zeros(0, int), self.ref_row, self.ref_row
        return np.unique(self.column), int(self.lo.min()), int(self.hi.max())


def _frame_nodes(nodes: np.ndarray, grid: Grid, gauge: str) -> np.ndarray:
    if gauge == "axial-y":
        return nodes
    # (i, j) -> (j, nx - i): node positions under (x, y) -> (y, -x)
    return np.stack([nodes[:, 1], grid.nx - nodes[:, 0]], axis=1)


def _axial_plan_iv(grid, loops, gauge, reference):
    if gauge not in GAUGES:
        raise ValueError(f"`gauge` must be one of {GAUGES}, got {gauge!r}.")
    if not isinstance(grid, Grid):
        raise TypeError(f"`grid` must be a discretize.Grid, got {type(grid).__name__}.")
    loops = tuple(loops)
    if not loops:
        raise ValueError("`loops` is empty: a plan needs at least one loop.")
    for i, loop in enumerate(loops):
        if loop.grid != grid:
            raise ValueError(f"`loops[{i}]` lives on another grid than `grid`.")
    if reference is not None:
        reference = float(reference)
        if not math.isfinite(reference):
            raise ValueError(f"`reference` must be a finite number, got {reference!r}.")
    return loops, reference


def axial_plan(grid: Grid, loops: Sequence, *, gauge: str = "axial-y",
               reference: float | None = None, area: AreaForm | None = None) -> AxialPlan:
    """Plan the column intervals and links that ``loops`` need in an axial gauge.

    Parameters
    ----------
    grid : Grid
        The grid all loops live on.
    loops : sequence of LatticeLoop
    gauge : {"axial-y", "axial-x"}
    reference : float, optional
        The reference line: y = reference for ``axial-y``, x = reference for
        ``axial-x``. It must lie on a grid line. Default: the lowest (``axial-y``) or
        leftmost (``axial-x``) node of all loops.
    area : AreaForm, optional
        The area measure (Lebesgue by default).

    Returns
    -------
    AxialPlan

    References
    ----------
    .. [1] Driver, B. K. (1989). Commun. Math. Phys. 123, 575-616, section 2.
    """
    loops, reference = _axial_plan_iv(grid, loops, gauge, reference)
    area = AreaForm() if area is None else area
    frame = to_frame(grid, gauge)
    h = grid.spacing
    frame_loops = [_frame_nodes(np.asarray(lp.nodes, dtype=np.int64), grid, gauge) for lp in loops]

    if reference is None:
        if gauge == "axial-y":
            ref_row = int(min(int(n[:, 1].min()) for n in frame_loops))
        else:  # leftmost x is the top of the rotated frame
            ref_row = int(max(int(n[:, 1].max()) for n in frame_loops))
    else:
        # reference coordinate in the frame: y for axial-y, -x for axial-x
        coord = reference if gauge == "axial-y" else -reference
        r = (coord - frame.origin[1]) / h
        ref_row = int(round(r))
        if abs(r - ref_row) > 1e-9 * max(1.0, abs(r)):
            raise ArgumentError(
                "reference", f"got {reference!r}; expected a grid line (a multiple of "
                f"the spacing {h!r} from the grid origin)",
                f"`reference` must lie on a grid line (a multiple of the spacing {h!r} "
                f"from the grid origin), got {reference!r}.")
        if not 0 <= ref_row <= frame.ny:
            raise ArgumentError(
                "reference", f"got {reference!r}; expected a line within the grid's "
                "extent", f"`reference` {reference!r} lies outside the grid's extent.")

    # horizontal steps: (column, height, direction) in traversal order
    per_loop = []
    needed: dict[int, set[int]] = {}
    for nodes in frame_loops:
        d = np.diff(nodes, axis=0)
        horiz = np.nonzero(d[:, 1] == 0)[0]
        direction = d[horiz, 0]
        column = nodes[horiz, 0] + np.minimum(direction, 0)
        height = nodes[horiz, 1]
        per_loop.append((column, height, direction))
        for c, y in zip(column.tolist(), height.tolist()):
            needed.setdefault(c, set()).add(y)

    cols, los, his, sides, parents, depths = [], [], [], [], [], []
    index: dict[tuple[int, int], int] = {}
    for c in sorted(needed):
        heights = needed[c]
        above = sorted(y for y in heights if y > ref_row)
        below = sorted((y for y in heights if y < ref_row), reverse=True)
        for side, chain in ((1, above), (-1, below)):
            prev_h, prev_k, dep = ref_row, -1, 0
            for y in chain:
                k = len(cols)
                cols.append(c)
                los.append(min(prev_h, y))
                his.append(max(prev_h, y))
                sides.append(side)
                parents.append(prev_k)
                depths.append(dep)
                index[(c, y)] = k
                prev_h, prev_k, dep = y, k, dep + 1

    column = np.array(cols, dtype=np.int64)
    lo = np.array(los, dtype=np.int64)
    hi = np.array(his, dtype=np.int64)
    cell_measures = area.cell_measures(grid)
    if gauge == "axial-x":
        cell_measures = cell_measures[::-1].T
    cell_measures = np.ascontiguousarray(cell_measures, dtype=float)
    if column.size:
        cum = np.concatenate([np.zeros((frame.nx, 1)), np.cumsum(cell_measures, axis=1)], axis=1)
        measure = cum[column, hi] - cum[column, lo]
    else:
        measure = np.zeros(0)

    steps = []
    for column_, height, direction in per_loop:
        links = np.array(
            [index.get((c, y), -1) for c, y in zip(column_.tolist(), height.tolist())],
            dtype=np.int64,
        )
        steps.append((links, direction.astype(np.int64)))

    return AxialPlan(
        gauge=gauge, grid=grid, frame=frame, ref_row=ref_row, column=column, lo=lo, hi=hi,
        side=np.array(sides, dtype=np.int64), parent=np.array(parents, dtype=np.int64),
        depth=np.array(depths, dtype=np.int64), measure=measure, steps=tuple(steps),
        cell_measures=cell_measures,
    )

"""Area forms: the measure mu whose white noise drives the field.

A form is a base density plus piecewise-constant rectangles painted over it in order:
at a point, the density is the ``value`` of the **last** rectangle (in the order given)
that contains it, and ``base`` if none does. Overlapping rectangles therefore override,
they do not add. A negative value is legal (``signed`` is then True), but such a form
has no Gaussian measure: samplers refuse it and it is evaluated only formally.

Integrals over cells are exact (up to rounding): the plane is cut along the grid lines
and the rectangle edges, the density is constant on every piece, and the pieces are
summed into cells.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

import numpy as np

from noise import ArgumentTypeError

from ._grid import Grid

__all__ = ["AreaForm"]


def _finite_real(value, name: str) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise TypeError(f"`{name}` must be a finite real number, got {value!r}.")
    v = float(value)
    if not math.isfinite(v):
        raise ValueError(f"`{name}` must be a finite real number, got {value!r}.")
    return v


def _area_form_iv(base, rects):
    """Input validation and standardization for :class:`AreaForm`."""
    base = _finite_real(base, "base")
    if isinstance(rects, (str, bytes, Mapping)) or not isinstance(rects, Iterable):
        raise ArgumentTypeError("rects", f"got {rects!r}; expected a sequence of rectangles",
                                f"`rects` must be a sequence of rectangles, got {rects!r}.")
    out = []
    for k, r in enumerate(rects):
        name = f"rects[{k}]"
        if isinstance(r, Mapping):
            # The spec form {rect = [x0, y0, x1, y1], value = v}.
            if set(r) != {"rect", "value"}:
                raise ValueError(
                    f"`{name}` must have exactly the keys 'rect' and 'value', got {sorted(r)}."
                )
            coords, value = r["rect"], r["value"]
        else:
            try:
                *coords, value = r
            except TypeError:
                raise TypeError(
                    f"`{name}` must be (x0, y0, x1, y1, value) or "
                    f"{{'rect': [x0, y0, x1, y1], 'value': v}}, got {r!r}."
                ) from None
        if len(coords) != 4:
            raise ValueError(
                f"`{name}` must be (x0, y0, x1, y1, value) with four coordinates, got {r!r}."
            )
        x0, y0, x1, y1 = (_finite_real(c, name) for c in coords)
        value = _finite_real(value, name)
        if not (x0 < x1 and y0 < y1):
            raise ValueError(f"`{name}` must have x0 < x1 and y0 < y1, got {r!r}.")
        out.append((x0, y0, x1, y1, value))
    return base, tuple(out)


@dataclass(frozen=True)
class AreaForm:
    """A piecewise-constant area density: ``base`` everywhere, overridden by rectangles.

    Parameters
    ----------
    base : float, default 1.0
        Density outside every rectangle (1 is Lebesgue measure).
    rects : sequence
        Rectangles ``(x0, y0, x1, y1, value)`` or mappings
        ``{"rect": [x0, y0, x1, y1], "value": v}``. Later rectangles override earlier
        ones where they overlap.

    Examples
    --------
    >>> g = Grid((0.0, 0.0), 1.0, (2, 1))
    >>> AreaForm(rects=[(0.5, 0.0, 1.0, 1.0, 3.0)]).cell_measures(g)
    array([[2.],
           [1.]])
    """

    base: float = 1.0
    rects: tuple = ()

    def __post_init__(self):
        base, rects = _area_form_iv(self.base, self.rects)
        object.__setattr__(self, "base", base)
        object.__setattr__(self, "rects", rects)

    @property
    def signed(self) -> bool:
        """True if some value (base or a rectangle's) is negative."""
        return self.base < 0 or any(r[4] < 0 for r in self.rects)

    @property
    def is_constant(self) -> bool:
        """True if the density is ``base`` everywhere."""
        return all(r[4] == self.base for r in self.rects)

    def density(self, x, y):
        """The density at points ``(x, y)`` (arrays broadcast). Rectangles are half-open
        ``[x0, x1) x [y0, y1)``; the boundary has measure zero."""
        x = np.asarray(x, dtype=float)
        y = np.asarray(y, dtype=float)
        out = np.full(np.broadcast(x, y).shape, self.base)
        for x0, y0, x1, y1, v in self.rects:  # painter's order: later ones win
            out[(x >= x0) & (x < x1) & (y >= y0) & (y < y1)] = v
        return out if out.ndim else float(out)

    def _pieces(self, xs: np.ndarray, ys: np.ndarray):
        """Cut the box [xs[0], xs[-1]] x [ys[0], ys[-1]] along ``xs``, ``ys`` and every
        rectangle edge; return the cut lines and the density on each piece."""
        bx = [xs]
        by = [ys]
        for x0, y0, x1, y1, _ in self.rects:
            bx.append(np.clip([x0, x1], xs[0], xs[-1]))
            by.append(np.clip([y0, y1], ys[0], ys[-1]))
        cx = np.unique(np.concatenate(bx))
        cy = np.unique(np.concatenate(by))
        rho = np.full((cx.size - 1, cy.size - 1), self.base)
        for x0, y0, x1, y1, v in self.rects:
            i0, i1 = np.searchsorted(cx, [x0, x1])
            j0, j1 = np.searchsorted(cy, [y0, y1])
            rho[i0:i1, j0:j1] = v
        return cx, cy, rho

    def cell_measures(self, grid: Grid) -> np.ndarray:
        """Integral of the density over each cell of ``grid``, shape ``(nx, ny)``."""
        if not isinstance(grid, Grid):
            raise TypeError(f"`grid` must be a Grid, got {type(grid).__name__}.")
        if self.is_constant:
            return np.full(grid.shape, self.base * grid.cell_area)
        xs, ys = grid.node_lines()
        cx, cy, rho = self._pieces(xs, ys)
        piece = rho * np.diff(cx)[:, None] * np.diff(cy)[None, :]
        # Every piece lies in exactly one cell: sum pieces by the cell of their left edge.
        ix = np.searchsorted(xs, cx[:-1], side="right") - 1
        iy = np.searchsorted(ys, cy[:-1], side="right") - 1
        bx = np.searchsorted(ix, np.arange(grid.nx))
        by = np.searchsorted(iy, np.arange(grid.ny))
        return np.add.reduceat(np.add.reduceat(piece, bx, axis=0), by, axis=1)

    def measure(self, x0: float, y0: float, x1: float, y1: float) -> float:
        """Integral of the density over the rectangle ``[x0, x1] x [y0, y1]``."""
        if not (x0 < x1 and y0 < y1):
            raise ValueError(
                f"`(x0, y0, x1, y1)` must have x0 < x1 and y0 < y1, got {(x0, y0, x1, y1)}."
            )
        cx, cy, rho = self._pieces(np.array([x0, x1], float), np.array([y0, y1], float))
        return float(np.sum(rho * np.diff(cx)[:, None] * np.diff(cy)[None, :]))

    def measure_of_rows(self, grid: Grid, column, row_lo, row_hi, *, measures=None):
        """Measure of the cells ``row_lo <= j < row_hi`` of column ``column``.

        Arguments broadcast (vectorized over many intervals). Pass ``measures =
        self.cell_measures(grid)`` to reuse it. An empty interval has measure 0.
        """
        m = self.cell_measures(grid) if measures is None else measures
        cum = np.concatenate([np.zeros((m.shape[0], 1)), np.cumsum(m, axis=1)], axis=1)
        column, row_lo, row_hi = np.broadcast_arrays(column, row_lo, row_hi)
        out = cum[column, row_hi] - cum[column, row_lo]
        return out if out.ndim else float(out)

    def measure_of_columns(self, grid: Grid, row, col_lo, col_hi, *, measures=None):
        """Measure of the cells ``col_lo <= i < col_hi`` of row ``row`` (broadcasts)."""
        m = self.cell_measures(grid) if measures is None else measures
        cum = np.concatenate([np.zeros((1, m.shape[1])), np.cumsum(m, axis=0)], axis=0)
        row, col_lo, col_hi = np.broadcast_arrays(row, col_lo, col_hi)
        out = cum[col_hi, row] - cum[col_lo, row]
        return out if out.ndim else float(out)

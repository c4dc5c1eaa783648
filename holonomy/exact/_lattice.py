"""Exact values of lattice problems: the routes a scheme names as "what it samples".

Each function takes a lattice problem (:class:`holonomy.LatticeProblem`: group,
representation, field, grid, lattice loops, axial plan) and a loop index, and returns a
:class:`LatticeValue`: the value, the method that produced it, or ``None`` and a note
saying which limit was hit -- never a made-up number. The schemes
(:mod:`holonomy._schemes`) pick their route from here:

- :func:`heat_lattice_value`: plaquettes are exact heat-kernel draws, so the lattice
  loop's value is the *continuum* Wilson loop of the loop as snapped to the lattice [1]_.
- :func:`wilson_action_value`: the lattice value of the Wilson action where a closed
  form is known (a simple loop enclosing A cells: ``w^A`` with ``w`` the one-plaquette
  value; U(1): any loop through its winding numbers) at constant density [2]_.
- :func:`gaussian_scheme_value`: the closed forms of the ``gauss`` and ``linear``
  schemes for simple loops (``linear``: when every column starts on the reference line).

References
----------
.. [1] Levy, T. (2003). "Yang-Mills measure on compact surfaces." Mem. Amer. Math.
   Soc. 166(790) (lattice heat-kernel measure, subdivision invariance).
.. [2] Gross, D. J. and Witten, E. (1980). "Possible third-order phase transition in
   the large-N lattice gauge theory." Phys. Rev. D 21, 446-453 (independent plaquettes
   of the Wilson action in axial gauge on the plane).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from discretize import Loop

from ._dispatch import exact_wilson_loop, lattice_polygon
from ._gaussian_step import gaussian_step
from ._wilson_action import wilson_lattice_loop

__all__ = ["LatticeValue", "NOT_AVAILABLE", "loop_value", "simple_cells", "heat_lattice_value",
           "wilson_action_value", "gaussian_scheme_value"]

NOT_AVAILABLE = "not available for this loop"
#: what an exact route raises for a loop or group it does not cover
_NOT_COVERED = (NotImplementedError, ValueError, ArithmeticError)


@dataclass(frozen=True)
class LatticeValue:
    """An exact value (complex) with its method, or ``None`` with a note."""

    value: complex | None
    method: str | None = None
    note: str | None = None


def _missing(note: str = "") -> LatticeValue:
    return LatticeValue(None, None, NOT_AVAILABLE + note)


def loop_value(group, rep: str, loop, coupling: float, area) -> LatticeValue:
    """The exact (continuum) Wilson loop of ``loop`` from :func:`exact_wilson_loop`."""
    try:
        out = exact_wilson_loop(group, rep, loop, coupling=coupling, area=area)
    except _NOT_COVERED as exc:
        return _missing(f" ({exc})")
    if out is None:
        return _missing()
    value = complex(out.value)
    if not (math.isfinite(value.real) and math.isfinite(value.imag)):
        return _missing()
    return LatticeValue(value, str(out.method))


def simple_cells(lattice_loop):
    """Winding numbers of a simple lattice loop (no node visited twice), else None."""
    nodes = np.asarray(lattice_loop.nodes)[:-1]
    if len(np.unique(nodes, axis=0)) != len(nodes):
        return None
    w = lattice_loop.winding_numbers()
    nz = w[w != 0]
    if nz.size == 0 or not ((nz == 1).all() or (nz == -1).all()):
        return None
    return w


def _corner_loop(lattice_loop) -> Loop:
    """The lattice loop as a ``discretize.Loop`` through its corners (one period, wound
    as often as it repeats; :func:`lattice_polygon`)."""
    corners, periods = lattice_polygon(lattice_loop)
    return Loop.polygon([tuple(map(float, p)) for p in corners], turns=periods)


def heat_lattice_value(problem, i: int) -> LatticeValue:
    """The continuum Wilson loop of lattice loop ``i`` (what ``heat`` samples exactly),
    directly or, where the dispatcher has no route for the lattice loop, through the
    polygon of its corners."""
    field = problem.field
    lat = problem.lattice_loops[i]
    out = loop_value(problem.group, problem.rep, lat, field.coupling, field.area)
    if out.value is None:
        try:
            poly = _corner_loop(lat)
        except ValueError:       # a degenerate polygon: keep the first answer
            poly = None
        if poly is not None:
            second = loop_value(problem.group, problem.rep, poly, field.coupling, field.area)
            if second.value is not None:
                out = second
    if out.value is None:
        return out
    return LatticeValue(out.value, f"{out.method} (lattice loop)")


def wilson_action_value(problem, i: int) -> LatticeValue:
    """The Wilson-action lattice value of loop ``i`` (fundamental rep, constant density)."""
    field, group = problem.field, problem.group
    if problem.rep != "fundamental":
        return _missing(" (Wilson action: fundamental rep only)")
    if not field.area.is_constant:
        return _missing(" (Wilson action: constant density only)")
    s = field.coupling * field.area.base * field.spacing ** 2
    lat = problem.lattice_loops[i]
    try:
        if group.family == "U" and group.n == 1:
            value = wilson_lattice_loop("U", 1, s, group.k, windings=lat.winding_numbers())
            return LatticeValue(complex(value), "Wilson action, U(1) Bessel product")
        w = simple_cells(lat)
        if w is None:
            return _missing(" (Wilson action: simple loops only)")
        # independent plaquettes: a simple loop of A cells has w^A (the value is real)
        value = wilson_lattice_loop(group.family, group.n, s, group.k,
                                    cells=int((w != 0).sum()))
        return LatticeValue(complex(value), "Wilson action, simple loop w^A")
    except _NOT_COVERED as exc:
        return _missing(f" ({exc})")


def gaussian_scheme_value(problem, i: int, scheme: str) -> LatticeValue:
    """Closed forms of the ``gauss`` and ``linear`` schemes (fundamental rep).

    With f(t) = E[tr exp(X)] / N for one Ad-invariant Gaussian X of variance t, and
    independent conjugation-invariant factors multiplying their normalized traces
    (Schur's lemma): ``gauss`` on a simple loop gives the product of f(lambda mu(c))
    over its cells; ``linear`` on a simple loop whose cells in every column run from
    the reference line up (axial-y; a rectangle on the reference line, say) gives the
    product of f(lambda mu(column)) over its columns.
    """
    if problem.rep != "fundamental":
        return _missing(f" ({scheme}: closed form for the fundamental rep only)")
    field, group = problem.field, problem.group
    w = simple_cells(problem.lattice_loops[i])
    if w is None:
        return _missing(f" ({scheme}: closed form for simple loops only)")
    mu = field.area.cell_measures(problem.grid)
    inside = w != 0
    if scheme == "gauss":
        t = field.coupling * mu[inside]
        method = "gauss scheme, simple loop: product of one-plaquette Gaussian steps"
    else:
        if field.gauge != "axial-y":
            return _missing(" (linear: closed form in axial-y only)")
        ref = int(problem.plan.ref_row)
        cols = np.nonzero(inside.any(axis=1))[0]
        t = []
        for c in cols:
            rows = np.nonzero(inside[c])[0]
            if rows[0] != ref or len(rows) != rows[-1] - rows[0] + 1:
                return _missing(" (linear: closed form only when every column of the loop "
                                "starts on the reference line)")
            t.append(field.coupling * mu[c, rows].sum())
        t = np.asarray(t)
        method = "linear scheme, columns on the reference line: product of Gaussian steps"
    try:
        f = np.asarray(gaussian_step(group.family, group.n, t, group.k))
    except _NOT_COVERED as exc:
        return _missing(f" ({exc})")
    return LatticeValue(complex(np.prod(f)), method)

"""Exact values of lattice problems: the routes a scheme names as "what it samples".

Each function takes a lattice problem (:class:`holonomy.LatticeProblem`: group,
representation, field, grid, lattice loops, axial plan) and a loop index, and returns a
:class:`LatticeValue`: the value, the method that produced it, or ``None`` and a note
saying which limit was hit -- never a made-up number. The schemes
(:mod:`holonomy._schemes`) pick their route from here:

- :func:`heat_lattice_value`: plaquettes are exact heat-kernel draws, so the lattice
  loop's value is the *continuum* Wilson loop of the loop as snapped to the lattice [1]_.
- :func:`wilson_action_value`: the lattice value of the Wilson action: independent
  plaquettes on the plane, so the lasso words of the loops with Bessel face laws
  (:func:`holonomy.exact.wilson_lattice_exact`) at constant density [2]_.
- :func:`heat_correlator_value`, :func:`wilson_correlator_value`: the same for the
  correlator ``E[prod_i W(i)]`` of several loops (one evaluation of their joint
  arrangement).
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
import sys
from dataclasses import dataclass

import numpy as np

from discretize import Loop

from ._dispatch import exact_correlator, exact_wilson_loop, lattice_polygon
from ._laws import ExactRouteError
from ._gaussian_step import gaussian_step
from ._wilson_action import wilson_lattice_exact

__all__ = ["LatticeValue", "NOT_AVAILABLE", "loop_value", "simple_cells", "heat_lattice_value",
           "wilson_action_value", "gaussian_scheme_value", "heat_correlator_value",
           "wilson_correlator_value"]

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


#: the note of a value beyond double precision (a formal value of a large negative
#: density grows like exp(c lambda |A| / 2)); the routes run with numpy's overflow
#: warnings off and the value is checked instead
_NOT_FINITE = (" (precision limit: the value is not finite in double precision at this "
               "coupling and density)")


def _finite(value: complex) -> bool:
    return math.isfinite(value.real) and math.isfinite(value.imag)


#: the note of a value below the double range. The heat-kernel and Wilson-action values
#: are finite sums of exponentials of the face times (analytic in the coupling, zero at
#: isolated couplings only, where rounding leaves about 1e-17): a result below the
#: smallest normal double is what their underflow left (SU(3) power:64 wound twice is
#: about 2e-1155 at coupling 1 on a unit square), not the value, so it is not printed as 0
_BELOW_RANGE = (" (precision limit: the value is below the double range, smaller than "
                f"{sys.float_info.min:.3g} in magnitude, and would print as 0)")


def _checked(value: complex, method: str) -> LatticeValue:
    """A heat-kernel or Wilson-action value, or a null with the precision limit hit."""
    if not _finite(value):
        return _missing(_NOT_FINITE)
    if abs(value) < sys.float_info.min:  # 0 or subnormal: underflow, see _BELOW_RANGE
        return _missing(_BELOW_RANGE)
    return LatticeValue(value, method)


def loop_value(group, rep: str, loop, coupling: float, area) -> LatticeValue:
    """The exact (continuum) Wilson loop of ``loop`` from :func:`exact_wilson_loop`."""
    try:
        with np.errstate(over="ignore", invalid="ignore"):  # checked below
            out = exact_wilson_loop(group, rep, loop, coupling=coupling, area=area)
    except _NOT_COVERED as exc:
        return _missing(f" ({exc})")
    if out is None:
        return _missing()
    return _checked(complex(out.value), str(out.method))


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
    """The Wilson-action lattice value of loop ``i``: any lattice loop (crossings,
    windings, touching points, retraced edges) and any representation for U(1) and
    SU(2), closed-form routes for U(N) and SU(N), at constant density
    (:func:`holonomy.exact.wilson_lattice_exact`)."""
    return wilson_correlator_value(problem, (i,))


def _lattice_value(fn, *args) -> LatticeValue:
    try:
        with np.errstate(over="ignore", invalid="ignore"):  # checked below
            out = fn(*args)
    except ExactRouteError as exc:
        return _missing(f" ({exc})")
    return _checked(complex(out.value), str(out.method))


def wilson_correlator_value(problem, indices) -> LatticeValue:
    """``E[prod_i W(i)]`` of the lattice loops ``indices`` under the Wilson action."""
    field = problem.field
    loops = [problem.lattice_loops[i] for i in indices]
    out = _lattice_value(lambda: wilson_lattice_exact(
        problem.group, problem.rep, loops if len(loops) > 1 else loops[0],
        coupling=field.coupling, area=field.area))
    if out.value is None:
        return out
    return LatticeValue(out.value, f"Wilson action, {out.method} (Bessel face laws)")


def heat_correlator_value(problem, indices) -> LatticeValue:
    """``E[prod_i W(i)]`` of the lattice loops ``indices`` in the continuum (what
    ``heat`` samples), one evaluation of their joint arrangement."""
    if len(indices) == 1:
        return heat_lattice_value(problem, indices[0])
    field = problem.field
    loops = [problem.lattice_loops[i] for i in indices]
    out = _lattice_value(lambda: exact_correlator(problem.group, problem.rep, loops,
                                                  coupling=field.coupling,
                                                  area=field.area))
    if out.value is None:
        return out
    return LatticeValue(out.value, f"{out.method} (lattice loops)")


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
        with np.errstate(over="ignore", invalid="ignore"):  # checked below
            f = np.asarray(gaussian_step(group.family, group.n, t, group.k))
            value = complex(np.prod(f))
    except _NOT_COVERED as exc:
        return _missing(f" ({exc})")
    if not _finite(value):
        return _missing(_NOT_FINITE)
    return LatticeValue(value, method)

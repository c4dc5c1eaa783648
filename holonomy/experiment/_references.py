"""Exact references for the loops of a lattice problem.

``exact`` is the exact value of the quantity the sampler estimates: each scheme states
it (:meth:`holonomy.Scheme.lattice_value`, through the routes of
:mod:`holonomy.exact._lattice`, which also give their sources), so a new scheme never
borrows another scheme's value. ``continuum`` is the exact value of the loop as
specified, before snapping, and ``snapped`` that of the loop as snapped to the lattice
(what ``heat`` samples). A route that is missing, or does not cover a loop, gives
``None`` and a note; never a made-up number.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from itertools import combinations

import numpy as np

from discretize import Loop
from holonomy import LatticeProblem, gaussian_matrix, get_scheme
from holonomy._estimate import joint_cumulant
from holonomy.exact import (NOT_AVAILABLE, ExactRouteError, exact_surface_wilson_loop,
                            exact_wilson_loop, heat_lattice_value, loop_value)

__all__ = ["LoopReference", "CorrelatorReference", "lattice_references", "loop_references",
           "correlator_references", "surface_references", "NOT_AVAILABLE",
           "gaussian_matrix_field", "GAUSSIAN_MATRIX_ORDER"]

#: the order of the Gaussian-matrix series printed beside exact values
GAUSSIAN_MATRIX_ORDER = 4


def gaussian_matrix_field(group, rep, loop, coupling, area, order: int = GAUSSIAN_MATRIX_ORDER
                          ) -> tuple[dict | None, str | None]:
    """The ``gaussian_matrix`` field of a loop: the Gaussian-matrix prescription
    (:func:`holonomy.gaussian_matrix`) for a simple loop, with its series and the
    first order at which it differs from the exact value; ``(None, note)`` otherwise."""
    try:
        with np.errstate(over="ignore", invalid="ignore"):  # only its route is read
            ev = exact_wilson_loop(group, rep, loop, coupling=1.0, area=area)
    except (ValueError, NotImplementedError, ArithmeticError) as exc:
        return None, f"{NOT_AVAILABLE} ({exc})"
    if ev is None or ev.method != "simple-loop":
        return None, (NOT_AVAILABLE + " (the Gaussian-matrix prescription is a closed form "
                      "for simple loops only)")
    overflow = (f"{NOT_AVAILABLE} (its coefficients overflow double precision at this "
                "coupling and density)")
    try:
        # lambda * area near 1e300: the powers of the area overflow (checked below)
        with np.errstate(over="ignore", invalid="ignore"):
            g = gaussian_matrix(group, rep, ev.details["measure"], coupling, order)
    except ExactRouteError as exc:  # over the work limit: a note naming it
        return None, f"{NOT_AVAILABLE} ({exc})"
    except OverflowError:
        return None, overflow
    if not all(math.isfinite(c) for c in g.coefficients) or (
            g.value is not None and not math.isfinite(abs(complex(g.value)))):
        return None, overflow
    return {"value": None if g.value is None else complex(g.value).real,
            "order": order, "coefficients": g.coefficients, "rationals": g.rationals,
            "first_difference": g.first_difference,
            "exact_coefficient": g.exact_coefficient,
            "gaussian_coefficient": g.gaussian_coefficient,
            "area": float(ev.details["measure"]), "note": g.note}, None


@dataclass
class LoopReference:
    exact: float | None = None
    exact_imag: float | None = None
    exact_method: str | None = None
    exact_note: str | None = None
    continuum: float | None = None
    continuum_method: str | None = None
    continuum_note: str | None = None
    snapped: float | None = None          # the continuum value of the loop as snapped
    gaussian_matrix: dict | None = None   # the Gaussian-matrix prescription (simple loops)
    gaussian_matrix_note: str | None = None
    zero_instanton: float | None = None   # closed surfaces: the zero-instanton sector
    truncation_bound: float | None = None  # closed surfaces: bound on the omitted terms


def lattice_references(problem: LatticeProblem, i: int, *, continuum: Loop | None = None,
                       scheme: str | None = None) -> LoopReference:
    """Exact references of loop ``i`` of ``problem`` under ``scheme`` (default the
    problem's): the lattice value of what the scheme samples, the continuum value of
    ``continuum`` (default the problem's loop ``i`` when it is a polygon) and that of
    the loop as snapped (``snapped``)."""
    if continuum is None and isinstance(problem.loops[i], Loop):
        continuum = problem.loops[i]
    ref = LoopReference()
    field = problem.field
    if continuum is None:
        ref.continuum_note = NOT_AVAILABLE + " (no continuum loop given)"
    else:
        cont = loop_value(problem.group, problem.rep, continuum, field.coupling, field.area)
        if cont.value is not None:
            method = cont.method
            faces = getattr(continuum, "exact_faces", None)
            if faces is not None:
                method = f"{method}, {faces.description}: exact face areas"
            ref.continuum, ref.continuum_method = cont.value.real, method
        ref.continuum_note = cont.note
        ref.gaussian_matrix, ref.gaussian_matrix_note = gaussian_matrix_field(
            problem.group, problem.rep, continuum, field.coupling, field.area)
    # the continuum value of the loop as snapped (what `heat` samples, for every scheme)
    snapped = heat_lattice_value(problem, i)
    if snapped.value is not None:
        ref.snapped = snapped.value.real
    # the routes read the group, field and lattice of the problem, never its scheme
    lat = get_scheme(scheme or problem.field.scheme).lattice_value(problem, i)
    if lat.value is not None:
        ref.exact, ref.exact_imag, ref.exact_method = lat.value.real, lat.value.imag, lat.method
    ref.exact_note = lat.note
    return ref


def loop_references(spec, problem: LatticeProblem, i: int, *,
                    scheme: str | None = None) -> LoopReference:
    """Exact references of loop ``i`` of ``spec`` under ``scheme`` (default the spec's).

    ``problem`` supplies the group, the grid and the lattice loops (at its own spacing,
    which may differ from the spec's in a study); the continuum loop is the spec's.
    """
    if spec.closed:
        return surface_references(spec, problem, i, scheme=scheme or spec.scheme)
    return lattice_references(problem, i, continuum=spec.loops[i].build(spec.spacing),
                              scheme=scheme or spec.scheme)


@dataclass
class CorrelatorReference:
    """The exact correlator ``E[prod_i W(i)]`` of what the scheme samples and its
    connected part (joint cumulant), or None with a note."""

    exact: float | None = None
    exact_imag: float | None = None
    exact_connected: float | None = None
    exact_method: str | None = None
    exact_note: str | None = None


def correlator_references(problem: LatticeProblem, indices, *,
                          scheme: str | None = None) -> CorrelatorReference:
    """Exact references of the correlator of loops ``indices`` of ``problem``: the
    scheme's :meth:`~holonomy.Scheme.correlator_value` for every subset of two or more
    loops and its ``lattice_value`` for each loop, then the joint cumulant (moment-
    cumulant formula) for the connected part."""
    sch = get_scheme(scheme or problem.field.scheme)
    S = tuple(sorted(indices))
    full = sch.correlator_value(problem, S)
    ref = CorrelatorReference(exact_note=full.note)
    if full.value is None:
        return ref
    ref.exact, ref.exact_imag, ref.exact_method = full.value.real, full.value.imag, full.method
    moments = {S: full.value}
    for r in range(1, len(S)):
        for T in combinations(S, r):
            v = (sch.lattice_value(problem, T[0]) if r == 1
                 else sch.correlator_value(problem, T))
            if v.value is None:
                ref.exact_note = f"connected part: {v.note}"
                return ref
            moments[T] = v.value
    ref.exact_connected = joint_cumulant(S, moments)[0].real
    return ref


def surface_references(spec, problem: LatticeProblem, i: int, *, scheme: str) -> LoopReference:
    """Exact references of loop ``i`` on the spec's closed surface
    (:func:`holonomy.exact.exact_surface_wilson_loop`). ``exact`` is the value of the loop
    as snapped for ``heat`` (the heat-kernel lattice measure on the surface is exact for
    lattice loops, its conditioning on the drawn region's boundary included); the other
    schemes have no known lattice value on a closed surface. ``continuum`` is the value
    of the loop as specified."""
    ref = LoopReference()
    field = problem.field
    kw = dict(coupling=field.coupling, genus=spec.genus, total_area=spec.total_area,
              area=field.area)
    cont = exact_surface_wilson_loop(problem.group, problem.rep,
                                     spec.loops[i].build(spec.spacing), **kw)
    if cont.value is not None:
        ref.continuum, ref.continuum_method = cont.value.real, cont.method
        if cont.zero_instanton is not None:
            ref.zero_instanton = cont.zero_instanton.real
        ref.truncation_bound = cont.truncation_bound
    else:
        ref.continuum_note = f"{NOT_AVAILABLE} ({cont.note})"
    ref.gaussian_matrix_note = NOT_AVAILABLE + " (the Gaussian-matrix field is for the plane)"
    if scheme != "heat":
        ref.exact_note = (f"{NOT_AVAILABLE} (on a closed surface only the heat scheme's "
                          "lattice value is known)")
        return ref
    try:  # the loop as snapped: what `heat` samples
        lat = exact_surface_wilson_loop(problem.group, problem.rep, problem.lattice_loops[i],
                                        **kw)
    except ValueError as exc:  # snapped, it may draw more than the total area
        ref.exact_note = f"{NOT_AVAILABLE} (the loop as snapped: {exc})"
        return ref
    if lat.value is None:
        ref.exact_note = f"{NOT_AVAILABLE} ({lat.note})"
    else:
        ref.exact, ref.exact_imag, ref.exact_method = lat.value.real, lat.value.imag, lat.method
        ref.snapped = lat.value.real
        if lat.zero_instanton is not None:
            ref.zero_instanton = lat.zero_instanton.real
        ref.truncation_bound = lat.truncation_bound
    return ref

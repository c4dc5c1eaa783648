"""From a validated spec to the engine's problems.

:func:`build_lattice` makes the lattice problem (group, representation, field, loops:
what ``exact``, ``series`` and the references take); :func:`build_problem` adds the run
settings (what ``run`` and ``study`` sample). An engine error that names its argument
(:class:`noise.ArgumentError`) is reported as a :class:`SpecError` on the key that
argument comes from (:data:`ARGUMENT_KEYS`), never by reading the message.
"""

from __future__ import annotations

from discretize import MAX_TOTAL_LATTICE_STEPS, Loop, check_crossings
from holonomy import (MAX_LATTICE_STEPS, ClosedSurface, Field, LatticeProblem, WilsonProblem,
                      check_block_memory, lattice_steps)
from noise import ArgumentError

from ._spec import Spec, SpecError

__all__ = ["ARGUMENT_KEYS", "build_lattice", "build_problem"]

#: the spec key each engine argument comes from
ARGUMENT_KEYS = {"rep": "observable.rep", "scheme": "field.scheme", "gauge": "field.gauge",
                 "family": "group.family", "metric": "group.metric", "n": "group.n",
                 "samples": "run.samples", "block": "run.block", "seed": "run.seed",
                 "area": "field.density", "reference": "field.reference",
                 "loops": "loops", "coupling": "field.coupling", "spacing": "field.spacing",
                 "correlators": "correlators", "surface": "surface.area",
                 "genus": "surface.genus", "total_area": "surface.area"}


def _loops(spec: Spec, h: float) -> tuple[Loop, ...]:
    loops = []
    for i, ls in enumerate(spec.loops):
        try:
            loop = ls.build(h)
            # the crossing check's size limits, in bounded memory, before any numerics
            check_crossings([loop.vertices])
        except (ValueError, TypeError) as exc:
            raise SpecError(f"loops[{i}]", str(exc)) from None
        loops.append(loop)
    return tuple(loops)


def _check_steps(spec: Spec, loops: tuple[Loop, ...], fld: Field) -> None:
    """Refuse a loop whose lattice path (its snapped edges x turns) passes
    ``MAX_LATTICE_STEPS``, before it is snapped: on ``loops[i].turns`` when one turn fits,
    else on the loop's own key (``loops[i].moves``, ``loops[i].circle``, ...); and loops
    whose paths together pass ``MAX_TOTAL_LATTICE_STEPS``, on ``loops``."""
    try:
        steps = lattice_steps(loops, fld)
    except ArgumentError as exc:
        raise _refused(exc) from None
    for i, (ls, n) in enumerate(zip(spec.loops, steps)):
        if n <= MAX_LATTICE_STEPS:
            continue
        one = n // ls.turns
        key = f"loops[{i}].turns" if ls.turns > 1 and one <= MAX_LATTICE_STEPS else \
            f"loops[{i}].{ls.kind}"
        raise SpecError(key, f"got a loop whose lattice path at spacing {fld.spacing!r} has "
                        f"up to {n} unit steps ({one} per turn x {ls.turns} turns); expected "
                        f"at most {MAX_LATTICE_STEPS:.0e} steps per loop, all turns included "
                        "(fewer turns, a larger spacing or a shorter loop)")
    if sum(steps) > MAX_TOTAL_LATTICE_STEPS:
        raise SpecError("loops", f"got {len(steps)} loops whose lattice paths at spacing "
                        f"{fld.spacing!r} have up to {sum(steps)} unit steps together; "
                        f"expected at most {MAX_TOTAL_LATTICE_STEPS:.0e} (fewer or shorter "
                        "loops, or a larger spacing)")


def _field(spec: Spec, scheme: str | None, spacing: float) -> Field:
    try:
        return Field(coupling=spec.coupling, spacing=spacing,
                     gauge=spec.gauge, reference=spec.reference,
                     scheme=scheme or spec.scheme, area=spec.area_form())
    except ArgumentError as exc:
        raise SpecError(ARGUMENT_KEYS.get(exc.argument, "field"), exc.rule) from None


def _refused(exc: ArgumentError) -> SpecError:
    if exc.argument.startswith("loops["):  # the engine names the loop by its index
        return SpecError(exc.argument, exc.rule)
    return SpecError(ARGUMENT_KEYS.get(exc.argument, "spec"), exc.rule)


def build_lattice(spec: Spec, *, scheme: str | None = None,
                  spacing: float | None = None) -> LatticeProblem:
    """The ``holonomy.LatticeProblem`` of ``spec`` (optionally another scheme or
    spacing); a signed density is fine (nothing is sampled)."""
    h = spec.spacing if spacing is None else spacing
    loops = _loops(spec, h)
    fld = _field(spec, scheme, h)
    _check_steps(spec, loops, fld)
    try:
        # the master field (n = "inf") borrows U(1) as the carrier of its geometry
        n = 1 if spec.n == "inf" else spec.n
        problem = LatticeProblem(family=spec.family, n=n, metric=spec.metric,
                                 field=fld, loops=loops, names=spec.names, rep=spec.rep)
        if spec.n != "inf" and not spec.signed and spec.samples is not None:
            # every command refuses the blocks `run` refuses (memory of one block)
            check_block_memory(problem, spec.block, spec.samples)
    except ArgumentError as exc:
        raise _refused(exc) from None
    return problem


def build_problem(spec: Spec, *, scheme: str | None = None, spacing: float | None = None,
                  formal: bool = False) -> WilsonProblem:
    """The ``holonomy.WilsonProblem`` of ``spec`` (optionally another scheme or spacing).

    Errors raised by the engine while building the loops, the group or the problem are
    reported as :class:`SpecError` on the key they come from.
    """
    h = spec.spacing if spacing is None else spacing
    loops = _loops(spec, h)
    fld = _field(spec, scheme, h)
    _check_steps(spec, loops, fld)
    try:
        problem = WilsonProblem(
            family=spec.family, n=spec.n, metric=spec.metric, field=fld, loops=loops,
            names=spec.names, rep=spec.rep, samples=spec.samples, block=spec.block,
            seed=spec.seed, path="auto", formal=formal,
            correlators=spec.correlator_indices,
            surface=ClosedSurface(spec.genus, spec.total_area) if spec.closed else None)
    except ArgumentError as exc:
        raise _refused(exc) from None
    return problem

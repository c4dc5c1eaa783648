"""Regularization studies: the same loops at several spacings and schemes on one field.

A study draws, per block, one cell noise on the coarsest grid and refines it to each
finer spacing (:func:`noise.refine_noise`: the four children of a cell sum to the
parent), so every spacing and every scheme reads the same white-noise realization
(common random numbers). Differences between spacings are then far less noisy than
the estimates themselves, which sharpens fitted convergence rates. The ``heat`` scheme
draws its plaquettes from the heat kernel with extra randomness (for U(1) it reads the
noise itself), so it shares the field only in law.

Grids are nested: the grid at spacing h / 2^j subdivides the coarsest grid exactly, and
each loop is snapped to every grid.

Expected rates (each scheme's ``rate``, :mod:`holonomy._schemes`, read through
:data:`EXPECTED_RATES`; derived in :mod:`holonomy.experiment._study`): for a loop of
fixed area in a fixed region,

- ``heat``: no bias at any spacing for lattice loops.
- ``gauss``: each plaquette's law differs from the heat kernel by O(s^2) in its
  expectation (f(s) = 1 - c s / 2 + O(s^2)), s = lambda h^2, and a loop encloses
  A / h^2 plaquettes: bias O(h^2).
- ``linear``: each column's exponential of a Gaussian sum of variance t_col = lambda
  A_col differs from the heat kernel by O(t_col^2), and there are W / h columns with
  t_col = O(h): bias O(h).
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, replace
from functools import cached_property
from typing import Iterable, Mapping, Sequence


from discretize import Grid, LatticeLoop
from noise import ArgumentError, block_rng, cell_noise, refine_noise

from ._estimate import BlockSums
from . import _sampling
from ._sampling import LatticeProblem, WilsonProblem, _block_sums, _sequence, block_memory
from ._schemes import EXPECTED_RATES, get_scheme, study_schemes

__all__ = ["StudyProblem", "run_study_block", "study_spacings", "study_memory",
           "EXPECTED_RATES"]


def _study_iv(problem, spacings, schemes):
    if not isinstance(problem, WilsonProblem):
        raise TypeError(f"`problem` must be a WilsonProblem, got {type(problem).__name__}.")
    spacings = study_spacings(spacings)
    schemes = tuple(get_scheme(s).name for s in _sequence(schemes, "schemes"))
    if not schemes:
        raise ArgumentError("schemes", "got none; expected at least one scheme",
                            "`schemes` is empty: give at least one scheme.")
    if len(set(schemes)) != len(schemes):
        raise ArgumentError("schemes", f"got {schemes!r}; expected distinct schemes",
                            f"`schemes` must be distinct, got {schemes!r}.")
    return problem, spacings, schemes


def study_spacings(spacings) -> tuple[float, ...]:
    """The spacings of a study, checked (at least two distinct positive finite numbers,
    the coarsest divided by powers of 2) and sorted from the coarsest; the one rule for
    the API and the command line.

    Raises
    ------
    TypeError
        If ``spacings`` is not a sequence of real numbers (a bool is not a spacing).
    noise.ArgumentError
        On ``spacings``, with the rule broken.
    """
    if isinstance(spacings, (str, bytes)) or not isinstance(spacings, Iterable) or any(
            isinstance(h, bool) or not isinstance(h, numbers.Real) for h in spacings):
        raise TypeError(f"`spacings` must be a list of positive numbers, got {spacings!r}.")
    spacings = tuple(float(h) for h in spacings)
    rule = f"got {spacings!r}; expected "
    if len(spacings) < 2:
        raise ArgumentError("spacings", rule + "at least two values",
                            f"`spacings` must hold at least two values, got {spacings!r}.")
    if any(not (math.isfinite(h) and h > 0) for h in spacings):
        raise ArgumentError("spacings", rule + "positive finite numbers",
                            f"`spacings` must be positive finite numbers, got {spacings!r}.")
    if len(set(spacings)) != len(spacings):
        raise ArgumentError("spacings", rule + "distinct values",
                            f"`spacings` must be distinct, got {spacings!r}.")
    spacings = tuple(sorted(spacings, reverse=True))
    for h in spacings[1:]:
        ratio = spacings[0] / h
        if not math.isfinite(ratio):  # h below the coarsest by more than double range
            raise ArgumentError(
                "spacings", rule + "the coarsest spacing divided by powers of 2",
                f"`spacings` must be the coarsest spacing divided by powers of 2, got {h!r} "
                f"against {spacings[0]!r} (a ratio beyond double range).")
        level = round(math.log2(ratio))
        if level < 1 or abs(ratio - 2.0**level) > 1e-9 * ratio:
            raise ArgumentError(
                "spacings", rule + "the coarsest spacing divided by powers of 2",
                f"`spacings` must be the coarsest spacing divided by powers of 2 (so the "
                f"noise refines exactly), got {h!r} against {spacings[0]!r}."
            )
    return spacings


@dataclass(frozen=True)
class StudyProblem:
    """The loops of ``problem`` at several spacings and schemes on one coupled field.

    Parameters
    ----------
    problem : WilsonProblem
        Group, loops (polygons), representation, coupling, gauge, area form, samples,
        block and seed. Its spacing and scheme are replaced by the ladder.
    spacings : sequence of float
        The coarsest spacing divided by powers of 2, e.g. (0.5, 0.25, 0.125).
    schemes : sequence of str, optional
        Registered scheme names; default :func:`holonomy._schemes.study_schemes`.
    max_cells : int, optional
        Refuse (ArgumentError on ``spacings``) a ladder whose finest nested grid has more
        cells, before any loop is snapped to it; None: no limit.
    """

    problem: WilsonProblem
    spacings: tuple
    schemes: tuple | None = None
    max_cells: int | None = None

    def __post_init__(self):
        problem, spacings, schemes = _study_iv(
            self.problem, self.spacings,
            study_schemes() if self.schemes is None else self.schemes)
        object.__setattr__(self, "spacings", spacings)
        object.__setattr__(self, "schemes", schemes)
        finest = self.grids[spacings[-1]]
        cells = finest.nx * finest.ny
        if self.max_cells is not None and cells > self.max_cells:
            raise ArgumentError(
                "spacings", f"got a finest spacing {spacings[-1]!r}: its grid, nested in the "
                f"coarsest one, has {finest.nx} x {finest.ny} = {cells:.3g} cells; expected at "
                f"most {self.max_cells:.0e} (a coarser finest spacing, or fewer halvings)",
                f"`spacings`: the finest grid would have {cells:.3g} cells, more than "
                f"{self.max_cells:.0e}.")
        _ = self.problems  # validates every (spacing, scheme)
        self._check_memory()

    def _check_memory(self) -> None:
        """Refuse a study whose block would need more than `BLOCK_MEMORY` (on ``block``
        when a smaller block fits, else on ``spacings``)."""
        need = study_memory(self)
        if need <= _sampling.BLOCK_MEMORY:
            return
        size = self.block_sizes()[0]
        finest = self.grids[self.spacings[-1]]
        what = (f"the coupled noise of {size} samples on {len(self.spacings)} nested grids "
                f"(the finest of {finest.nx * finest.ny} cells) needs about "
                f"{need / 2**30:.3g} GiB")
        budget = f"at most {_sampling.BLOCK_MEMORY / 2**30:g} GiB per block"
        if study_memory(self, 1) > _sampling.BLOCK_MEMORY:
            raise ArgumentError("spacings", f"got {list(self.spacings)!r}: {what}, even one "
                                f"sample; expected a coarser finest spacing ({budget})")
        lo, hi = 1, size   # the largest block that fits
        while hi - lo > 1:
            mid = (lo + hi) // 2
            lo, hi = (mid, hi) if study_memory(self, mid) <= _sampling.BLOCK_MEMORY else (lo, mid)
        raise ArgumentError("block", f"got {self.problem.block}: {what}; expected a block "
                            f"<= {lo} or a coarser finest spacing ({budget})")

    @cached_property
    def grids(self) -> dict:
        """Nested grids: each finer one subdivides the coarsest exactly."""
        base = self.problem
        coarse = LatticeProblem(
            family=base.family, n=base.n, metric=base.metric, loops=base.loops,
            field=replace(base.field, spacing=self.spacings[0]),
        ).grid
        out = {}
        for h in self.spacings:
            factor = round(self.spacings[0] / h)
            out[h] = Grid(coarse.origin, h, (coarse.nx * factor, coarse.ny * factor))
        return out

    @cached_property
    def problems(self) -> dict:
        """(spacing, scheme) -> WilsonProblem on the nested grid, dense path."""
        base = self.problem
        out = {}
        for h in self.spacings:
            grid = self.grids[h]
            loops = tuple(lp if isinstance(lp, LatticeLoop) else lp.snap(grid) for lp in base.loops)
            for scheme in self.schemes:
                out[(h, scheme)] = WilsonProblem(
                    family=base.family, n=base.n, metric=base.metric,
                    field=replace(base.field, spacing=h, scheme=scheme),
                    loops=loops, names=base.names, rep=base.rep, samples=base.samples,
                    block=base.block, seed=base.seed, path="dense",
                )
        return out

    @property
    def n_blocks(self) -> int:
        return self.problem.n_blocks

    def block_sizes(self) -> list[int]:
        return self.problem.block_sizes()

    def finish(self, blocks_by_key: Mapping[tuple, Sequence[BlockSums]]) -> dict:
        """(spacing, scheme) -> EstimateResult, each combined in block order."""
        return {key: self.problems[key].finish(blocks) for key, blocks in blocks_by_key.items()}

    def __getstate__(self):
        return {"problem": self.problem, "spacings": self.spacings, "schemes": self.schemes,
                "max_cells": self.max_cells}

    def __setstate__(self, state):
        for k, v in state.items():
            object.__setattr__(self, k, v)


def study_memory(study: StudyProblem, size: int | None = None) -> int:
    """Estimated working set (bytes) of one block of ``size`` samples (default the
    study's block) of :func:`run_study_block`: the coupled noise at every spacing (8 d
    bytes per cell and sample), twice more at the finest for its refinement's
    temporaries, plus the largest chunk of one (spacing, scheme) read from it
    (:func:`holonomy.block_memory`)."""
    size = study.block_sizes()[0] if size is None else size
    d = study.problems[(study.spacings[0], study.schemes[0])].group.dim
    cells = [study.grids[h].nx * study.grids[h].ny for h in study.spacings]
    noise = 8 * d * size * (sum(cells) + 2 * cells[-1])
    return int(noise + max(block_memory(p, size, p.path) for p in study.problems.values()))


def run_study_block(study: StudyProblem, block: int) -> dict:
    """Block sums for every (spacing, scheme) of ``study`` from one coupled noise.

    The block's generator draws the coarse noise first, then each refinement, then the
    schemes' own extra randomness in the order of ``study.problems``.
    """
    size = study.block_sizes()[block]
    rng = block_rng(study.problem.seed, block)
    area, lam = study.problem.field.area, study.problem.field.coupling
    h0 = study.spacings[0]
    level = {h: round(math.log2(h0 / h)) for h in study.spacings}
    grid = study.grids[h0]
    d = study.problems[(h0, study.schemes[0])].group.dim
    noises = [cell_noise(lam * area.cell_measures(grid), d, size, rng=rng)]
    for _ in range(max(level.values())):
        grid = grid.refined()
        noises.append(refine_noise(noises[-1], lam * area.cell_measures(grid), rng=rng))
    return {(h, scheme): _block_sums(problem, block, size, rng, noises[level[h]])
            for (h, scheme), problem in study.problems.items()}

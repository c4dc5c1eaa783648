"""Monte Carlo Wilson loops: fields, problems, blocks.

A :class:`LatticeProblem` fixes the lattice problem (group, representation, field,
loops, and the grid, plan and areas that follow); a :class:`WilsonProblem` adds the run
settings (:class:`RunSettings`: samples, block size, seed, path). :func:`run_block` computes the partial sums
of one block; block ``b`` draws from ``SeedSequence(seed, spawn_key=(b,))``, so results
are bitwise identical however the blocks are scheduled. :func:`estimate_wilson_loops`
runs all blocks, on an optional :class:`concurrent.futures.Executor`.

Two paths compute the same laws:

``dense``
    draws every cell's noise on the grid (in the original frame, so the same seed gives
    the same field in both gauges) and forms interval variables from it. All schemes.
``perimeter``
    draws the interval variables directly (Gaussian interval sums for ``linear``,
    heat-kernel samples of the interval's time for ``heat``). Its cost grows with the
    loops' perimeter, not their area.

``auto`` picks ``perimeter`` where the scheme allows it.
"""

from __future__ import annotations

import math
import numbers
from concurrent.futures import Executor
from dataclasses import dataclass, field, replace
from functools import cached_property
from typing import Sequence

import numpy as np

from discretize import MAX_LATTICE_STEPS, MAX_TOTAL_LATTICE_STEPS, AreaForm, Grid, LatticeLoop, Loop, axial_plan
from discretize._axial import GAUGES, frame_cells
from noise import ArgumentError, ArgumentTypeError, block_rng, cell_noise, interval_sums

from ._estimate import BlockSums, EstimateResult, combine_blocks, correlator_subsets
from ._kernels import kernel_for
from ._schemes import get_scheme
from ._surface_weights import SURFACE_SCHEMES, ClosedSurface, SurfaceWeights
from .groups import make_group

__all__ = ["Field", "LatticeProblem", "RunSettings", "WilsonProblem", "run_block", "estimate_wilson_loops", "PATHS",
           "chunk_size", "block_memory", "check_block_memory", "BLOCK_MEMORY",
           "MAX_LATTICE_STEPS", "covering_grid", "lattice_steps"]

PATHS = ("auto", "perimeter", "dense")



def covering_grid(loops, field: "Field") -> Grid:
    """The grid of a problem: the one the lattice loops share, else the grid covering
    the polygons' bounding boxes and the field's reference line, one cell of margin."""
    lattice = [lp for lp in loops if isinstance(lp, LatticeLoop)]
    if lattice:
        grid = lattice[0].grid
        if len(lattice) != len(loops) or any(lp.grid != grid for lp in lattice):
            raise ArgumentError(
                "loops", "got polygons and lattice loops mixed, or several grids; "
                "expected all polygons or all lattice loops on one grid",
                "`loops` must be all polygons or all lattice loops on one grid.")
        return grid
    boxes = np.array([lp.bbox for lp in loops], float)
    xmin, ymin = boxes[:, 0].min(), boxes[:, 1].min()
    xmax, ymax = boxes[:, 2].max(), boxes[:, 3].max()
    ref = field.reference
    if ref is not None:
        if field.gauge == "axial-y":
            ymin, ymax = min(ymin, ref), max(ymax, ref)
        else:
            xmin, xmax = min(xmin, ref), max(xmax, ref)
    return Grid.covering((xmin, ymin, xmax, ymax), field.spacing, margin=1)


def lattice_steps(loops, field: "Field") -> tuple[int, ...]:
    """Per loop, the unit steps of its lattice path (all turns; for a polygon the upper
    bound :meth:`discretize.Loop.lattice_steps` on the grid of the problem), without
    snapping: what :data:`MAX_LATTICE_STEPS` limits."""
    grid = covering_grid(loops, field)
    return tuple(lp.length if isinstance(lp, LatticeLoop) else lp.lattice_steps(grid)
                 for lp in loops)


#: the run sizes the spec and the Python API accept (``run.samples``, ``run.block``):
#: a run of more samples would not end, a larger block would not fit in memory
MAX_SAMPLES = 10**12     # samples of one run
MAX_BLOCK = 10**6        # samples per block (memory is proportional to it)


def _positive(value, name: str) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise ArgumentTypeError(name, f"got {value!r}; expected a number > 0",
                                f"`{name}` must be a positive number, got {value!r}.")
    value = float(value)
    if not (math.isfinite(value) and value > 0):
        raise ArgumentError(name, f"got {value!r}; expected a number > 0",
                            f"`{name}` must be a positive finite number, got {value!r}.")
    return value


def _count(value, name: str, high: int | None = None) -> int:
    rule = "an integer >= 1"
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        raise ArgumentTypeError(name, f"got {value!r}; expected {rule}",
                                f"`{name}` must be {rule}, got {value!r}.")
    if high and value > high:
        rule += f" and <= {high:.0e}"
    if value < 1 or (high and value > high):
        raise ArgumentError(name, f"got {value!r}; expected {rule}",
                            f"`{name}` must be {rule}, got {value!r}.")
    return int(value)


def _sequence(value, name: str) -> tuple:
    """A sequence argument (``loops``, ``names``): a list or tuple, not a str."""
    if isinstance(value, (str, bytes)) or not isinstance(value, (list, tuple)):
        raise ArgumentTypeError(name, f"got {value!r}; expected a list or tuple",
                                f"`{name}` must be a list or tuple, got {value!r}.")
    return tuple(value)


@dataclass(frozen=True)
class Field:
    """A white-noise gauge field: coupling, lattice spacing, gauge, scheme, area form.

    Parameters
    ----------
    coupling : float
        lambda > 0: each cell integral is N(0, lambda mu(cell)) per component.
    spacing : float
        Lattice spacing h > 0.
    gauge : {"axial-y", "axial-x"}
    reference : float, optional
        The reference line (y for axial-y, x for axial-x); default: the lowest
        (leftmost) point of all loops.
    scheme : str or Scheme subclass
        A name registered in :data:`holonomy.SCHEMES`.
    area : AreaForm
        The area measure mu (Lebesgue by default).
    """

    coupling: float
    spacing: float
    gauge: str = "axial-y"
    reference: float | None = None
    scheme: str = "heat"
    area: AreaForm = field(default_factory=AreaForm)

    def __post_init__(self):
        object.__setattr__(self, "coupling", _positive(self.coupling, "coupling"))
        object.__setattr__(self, "spacing", _positive(self.spacing, "spacing"))
        if self.gauge not in GAUGES:
            raise ArgumentError("gauge", f"got {self.gauge!r}; expected one of {GAUGES}",
                                f"`gauge` must be one of {GAUGES}, got {self.gauge!r}.")
        get_scheme(self.scheme)  # validates the name
        if self.reference is not None:
            ref = self.reference
            if isinstance(ref, bool) or not isinstance(ref, numbers.Real):
                raise TypeError(f"`reference` must be a finite number or None, got {ref!r}.")
            if not math.isfinite(ref):
                raise ArgumentError("reference", f"got {ref!r}; expected a finite number",
                                    f"`reference` must be a finite number or None, got "
                                    f"{ref!r}.")
        if not isinstance(self.area, AreaForm):
            raise TypeError(f"`area` must be a discretize.AreaForm, got {self.area!r}.")


@dataclass(frozen=True)
class LatticeProblem:
    """The lattice problem: group, representation, field, loops, and what follows from
    them (grid, lattice loops, axial plan, areas). No run settings: this is what the
    exact references and the series take. Picklable and frozen.

    ``loops`` are :class:`discretize.Loop` polygons (snapped to the lattice of the
    field's spacing) or :class:`discretize.LatticeLoop` objects sharing one grid. The
    area form may take negative values (no measure: only :class:`WilsonProblem`, which
    samples, refuses it).
    """

    family: str
    n: int
    metric: str | float
    field: Field
    loops: tuple
    names: tuple = ()
    rep: str = "fundamental"

    def __post_init__(self):
        object.__setattr__(self, "loops", _sequence(self.loops, "loops"))
        if not self.loops:
            raise ArgumentError("loops", "got none; expected at least one loop",
                                "`loops` is empty: give at least one loop.")
        for i, lp in enumerate(self.loops):
            if not isinstance(lp, (Loop, LatticeLoop)):
                raise TypeError(f"`loops[{i}]` must be a discretize.Loop or LatticeLoop, "
                                f"got {type(lp).__name__}.")
        names = _sequence(self.names, "names") or tuple(f"loop{i}"
                                                        for i in range(len(self.loops)))
        if not all(isinstance(x, str) for x in names):
            raise ArgumentTypeError("names", f"got {names!r}; expected strings",
                                    f"`names` must be strings, got {names!r}.")
        if len(names) != len(self.loops):
            raise ValueError(
                f"`names` must have one name per loop ({len(self.loops)}), got {len(names)}."
            )
        if len(set(names)) != len(names):
            raise ValueError(f"`names` must be distinct, got {names!r}.")
        object.__setattr__(self, "names", names)
        if not isinstance(self.field, Field):
            raise TypeError(f"`field` must be a holonomy.Field, got {self.field!r}.")
        self._check_run()
        self.scheme.check(self.group)
        self.group.rep(self.rep)  # validates the representation
        _ = self.plan  # validates the loops against the grid

    def _check_run(self) -> None:
        """Hook for the run settings of a subclass (checked before the lattice)."""

    # -- derived objects (cached per process) -----------------------------------------
    @cached_property
    def group(self):
        return make_group(self.family, self.n, self.metric)

    @cached_property
    def kernel(self):
        return kernel_for(self.group)

    @cached_property
    def scheme(self):
        return get_scheme(self.field.scheme)

    @cached_property
    def representation(self):
        return self.group.rep(self.rep)

    @cached_property
    def grid(self) -> Grid:
        return covering_grid(self.loops, self.field)

    @cached_property
    def lattice_loops(self) -> tuple:
        out = []
        all_steps = lattice_steps(self.loops, self.field)
        if sum(all_steps) > MAX_TOTAL_LATTICE_STEPS and max(all_steps) <= MAX_LATTICE_STEPS:
            rule = (f"got {len(all_steps)} loops whose lattice paths have up to "
                    f"{sum(all_steps)} unit steps together; expected at most "
                    f"{MAX_TOTAL_LATTICE_STEPS:.0e} (fewer or shorter loops, or a larger "
                    "spacing)")
            raise ArgumentError("loops", rule, f"`loops`: {rule}.")
        for i, (lp, steps) in enumerate(zip(self.loops, all_steps)):
            if steps > MAX_LATTICE_STEPS:  # before snapping: the path is never built
                turns = lp.turns if isinstance(lp, Loop) else 1
                key = f"loops[{i}].turns" if steps // turns <= MAX_LATTICE_STEPS and \
                    turns > 1 else f"loops[{i}]"
                rule = (f"got a lattice path of up to {steps} unit steps at spacing "
                        f"{self.grid.spacing!r} ({steps // turns} per turn x {turns} turns); "
                        f"expected at most {MAX_LATTICE_STEPS:.0e} (fewer turns, a larger "
                        "spacing or a shorter loop)")
                raise ArgumentError(key, rule, f"`{key}`: {rule}.")
            try:
                out.append(lp if isinstance(lp, LatticeLoop) else lp.snap(self.grid))
            except ValueError as exc:  # snaps to nothing: name the loop by its index
                raise ArgumentError(f"loops[{i}]", str(exc).removeprefix("`loop` ")) \
                    from None
        return tuple(out)

    @cached_property
    def plan(self):
        return axial_plan(self.grid, self.lattice_loops, gauge=self.field.gauge,
                          reference=self.field.reference, area=self.field.area)

    @cached_property
    def areas(self) -> tuple:
        """Signed mu-area of each lattice loop: sum over cells of winding x measure."""
        measures = self.field.area.cell_measures(self.grid)
        return tuple(float((lp.winding_numbers() * measures).sum()) for lp in self.lattice_loops)

    @cached_property
    def area_errors(self) -> tuple:
        return tuple(float(getattr(lp, "area_error", 0.0)) for lp in self.lattice_loops)

    @property
    def lattice(self) -> "LatticeProblem":
        """The lattice problem alone (this object when it has no run settings)."""
        return self

    def with_field(self, **changes) -> "LatticeProblem":
        """The same lattice problem with some field parameters replaced."""
        return LatticeProblem(family=self.family, n=self.n, metric=self.metric,
                              field=replace(self.field, **changes), loops=self.loops,
                              names=self.names, rep=self.rep)

    def __getstate__(self):
        # ship only the definition; each process rebuilds its cached objects
        return {k: getattr(self, k) for k in self.__dataclass_fields__}

    def __setstate__(self, state):
        for k, v in state.items():
            object.__setattr__(self, k, v)


@dataclass(frozen=True)
class RunSettings:
    """How a problem is sampled: samples, samples per block, seed, path.

    Block b draws from ``SeedSequence(seed, spawn_key=(b,))``; the block size is part
    of the experiment (it fixes the random streams).
    """

    samples: int = 10000
    block: int = 4096
    seed: int = 0
    path: str = "auto"

    def __post_init__(self):
        object.__setattr__(self, "samples", _count(self.samples, "samples", MAX_SAMPLES))
        object.__setattr__(self, "block", _count(self.block, "block", MAX_BLOCK))
        if isinstance(self.seed, bool) or not isinstance(self.seed, numbers.Integral) or self.seed < 0:
            raise ArgumentError("seed", f"got {self.seed!r}; expected an integer >= 0",
                                f"`seed` must be a non-negative integer, got {self.seed!r}.")
        if self.path not in PATHS:
            raise ArgumentError("path", f"got {self.path!r}; expected one of {PATHS}",
                                f"`path` must be one of {PATHS}, got {self.path!r}.")

    @property
    def n_blocks(self) -> int:
        return -(-self.samples // self.block)

    def block_sizes(self) -> list[int]:
        sizes = [self.block] * self.n_blocks
        sizes[-1] = self.samples - self.block * (self.n_blocks - 1)
        return sizes


@dataclass(frozen=True)
class WilsonProblem(LatticeProblem):
    """Everything one Monte Carlo run of Wilson loops needs: a :class:`LatticeProblem`
    (its fields come first) plus the :class:`RunSettings` (``samples``, ``block``,
    ``seed``, ``path``); picklable and frozen. ``formal=True`` admits a signed area
    form for the formal routes (it cannot be sampled). ``surface`` (a
    :class:`holonomy.ClosedSurface`) puts the loops on a closed surface: the ``heat``
    scheme's plane samples are weighted into its measure
    (:mod:`holonomy._surface_weights`) and the estimates are self-normalised.
    """

    samples: int = 10000
    block: int = 4096
    seed: int = 0
    path: str = "auto"
    formal: bool = False
    correlators: tuple = ()  # loop-index tuples whose E[prod W] the blocks also sum
    surface: ClosedSurface | None = None  # a closed surface: samples weighted into it

    def _check_run(self) -> None:
        corr = []
        for c in self.correlators:
            idx = tuple(int(i) for i in c)
            if len(idx) < 2 or len(set(idx)) != len(idx) or \
                    not all(0 <= i < len(self.loops) for i in idx):
                raise ArgumentError(
                    "correlators", f"got {c!r}; expected two or more distinct loop indices",
                    f"`correlators` entries must be two or more distinct loop indices in "
                    f"[0, {len(self.loops)}), got {c!r}.")
            corr.append(idx)
        object.__setattr__(self, "correlators", tuple(corr))
        settings = RunSettings(self.samples, self.block, self.seed, self.path)
        object.__setattr__(self, "samples", settings.samples)
        object.__setattr__(self, "block", settings.block)
        if self.field.area.signed and not self.formal:
            raise ArgumentError(
                "area", "got a density that takes negative values; expected a density >= 0 "
                "(no measure exists to sample)",
                "`field.area` has a negative density: the covariance is indefinite and no "
                "measure exists to sample; evaluate it formally instead (whitegauge series, "
                "holonomy.lattice_series, noise.FormalGaussian)."
            )
        scheme = get_scheme(self.field.scheme)
        if self.surface is not None:
            self._check_surface(scheme)
        if self.path == "perimeter" and not scheme.perimeter:
            raise ArgumentError(
                "path", f"got 'perimeter' for scheme {scheme.name!r}; expected 'dense' or "
                "'auto'",
                f"`path`='perimeter' is not available for scheme {scheme.name!r}; "
                "use 'dense' or 'auto'."
            )

    def _check_surface(self, scheme) -> None:
        if not isinstance(self.surface, ClosedSurface):
            raise TypeError(f"`surface` must be a holonomy.ClosedSurface or None, got "
                            f"{self.surface!r}.")
        if scheme.name not in SURFACE_SCHEMES:
            raise ArgumentError(
                "scheme", f"got {scheme.name!r} on a closed surface; expected "
                f"{' or '.join(map(repr, SURFACE_SCHEMES))}: only it samples the heat-kernel "
                "lattice measure, which the surface's weights condition exactly",
                f"`scheme` {scheme.name!r} cannot be sampled on a closed surface: only "
                f"{SURFACE_SCHEMES} sample the heat-kernel lattice measure.")
        if self.correlators or self.formal:
            raise ArgumentError(
                "correlators" if self.correlators else "area",
                "got correlators or a signed density on a closed surface; expected none",
                "correlators and signed densities are not available on a closed surface.")

    def __post_init__(self):
        super().__post_init__()
        if self.surface is not None:
            _ = self.surface_weights  # validates the surface against the lattice loops
        if not self.formal:
            self._check_memory()

    def _check_memory(self) -> None:
        check_block_memory(self, self.block, self.samples, self.path)

    @cached_property
    def surface_weights(self) -> SurfaceWeights | None:
        """The weights into the closed surface (None on the plane)."""
        return None if self.surface is None else SurfaceWeights(self)

    @cached_property
    def sampling_plan(self):
        """The plan whose holonomies a block computes: the loops' plan, plus the region
        boundaries of the non-simple loops on a closed surface (the same intervals: a
        boundary runs along the loop's own edges)."""
        sw = self.surface_weights
        if sw is None or not sw.extra:
            return self.plan
        plan = axial_plan(self.grid, self.lattice_loops + sw.extra, gauge=self.field.gauge,
                          reference=self.field.reference, area=self.field.area)
        if not (np.array_equal(plan.column, self.plan.column)
                and np.array_equal(plan.lo, self.plan.lo)
                and np.array_equal(plan.hi, self.plan.hi)):
            raise AssertionError("a region boundary needs links the loops do not have")
        return plan

    @cached_property
    def lattice(self) -> LatticeProblem:
        """The lattice problem without the run settings."""
        return LatticeProblem(family=self.family, n=self.n, metric=self.metric,
                              field=self.field, loops=self.loops, names=self.names,
                              rep=self.rep)

    @property
    def settings(self) -> RunSettings:
        return RunSettings(self.samples, self.block, self.seed, self.path)

    @property
    def resolved_path(self) -> str:
        if self.path == "auto":
            return "perimeter" if self.scheme.perimeter else "dense"
        return self.path

    @property
    def n_blocks(self) -> int:
        return self.settings.n_blocks

    def block_sizes(self) -> list[int]:
        return self.settings.block_sizes()

    def finish(self, blocks: Sequence[BlockSums]) -> EstimateResult:
        """Combine finished blocks (in block order) into the run's estimates."""
        return combine_blocks(blocks, names=self.names, areas=self.areas, seed=self.seed,
                              block=self.block, scheme=self.scheme.name,
                              path=self.resolved_path, correlators=self.correlators,
                              surface=self.surface)


# -- the sampler ------------------------------------------------------------------------

def _interval_variables(problem: WilsonProblem, size: int, rng, path: str,
                        noise: np.ndarray | None = None, *, slab_bytes: int | None = None):
    """Draw the plan's interval variables for ``size`` samples.

    Returns (samples, K, d) algebra sums for ``algebra`` schemes, else (samples, K)
    kernel elements (ordered products of the interval's plaquettes, bottom to top).
    ``noise`` (samples, nx, ny, d), on the dense path, is a cell noise already drawn on
    the problem's grid (shared by several problems for common random numbers).
    ``slab_bytes`` (default `SLAB_BYTES`) bounds the dense path's working set per slab
    of grid columns (`_slab_variables`); the numbers do not depend on it.
    """
    plan, group, scheme = problem.plan, problem.group, problem.scheme
    lam = problem.field.coupling
    d = group.dim
    if path == "perimeter":
        variances = lam * plan.measure
        noise = interval_sums(variances, d, size, rng=rng) if scheme.reads_noise(group) else None
        if scheme.kind == "algebra":
            return noise
        return scheme.intervals(problem.kernel, noise, variances, rng, size)

    if plan.n_intervals and _slab_ready(problem) and (slab_bytes is not None
                                                      or _use_slabs(problem, size)):
        return _slab_variables(problem, size, rng, noise, slab_bytes or SLAB_BYTES)
    slab_bytes = slab_bytes or SLAB_BYTES
    unread = noise is None and (not plan.n_intervals or not scheme.reads_noise(group))
    if unread:
        # the scheme draws its own plaquettes: the cell noise is drawn (the same stream)
        # slab by slab and dropped, never held
        _skip_cell_noise(problem, size, rng, slab_bytes)
    elif noise is None:
        variances_grid = lam * problem.field.area.cell_measures(plan.grid)
        noise = cell_noise(variances_grid, d, size, rng=rng)
    cell_var = lam * plan.cell_measures
    if plan.n_intervals == 0:
        return np.zeros((size, 0, d)) if scheme.kind == "algebra" else \
            problem.kernel.identity((size, 0))
    if not unread:
        noise = frame_cells(noise, plan.gauge)
    if scheme.kind == "algebra":
        cum = np.concatenate([np.zeros((size, noise.shape[1], 1, d)),
                              np.cumsum(noise, axis=2)], axis=2)
        return cum[:, plan.column, plan.hi] - cum[:, plan.column, plan.lo]

    cols, row_lo, row_hi = plan.columns_and_rows()
    if unread:
        sub = np.broadcast_to(np.zeros(()), (size, cols.size * (row_hi - row_lo), d))
    else:
        sub = noise[:, cols][:, :, row_lo:row_hi]
    var = cell_var[cols][:, row_lo:row_hi]
    q = scheme.plaquettes(problem.kernel, sub.reshape(size, -1, d), var.ravel(), rng)
    q = q.reshape((size, cols.size, row_hi - row_lo) + q.shape[2:])
    ci = np.searchsorted(cols, plan.column)
    lo = plan.lo - row_lo
    length = plan.hi - plan.lo
    out = q[:, ci, lo]
    for r in range(1, int(length.max())):
        sel = np.nonzero(length > r)[0]
        out[:, sel] = problem.kernel.mul(out[:, sel], q[:, ci[sel], lo[sel] + r])
    return out


#: working set of one slab of grid columns on the dense path (bytes): a chunk of samples
#: whose cells would need more is drawn and turned into interval variables slab by slab
SLAB_BYTES = 256 << 20

#: working-set budget of one chunk of a block (bytes): the dense path goes slab by slab
#: above it, and a problem whose chunk would need more on every route is refused
BLOCK_MEMORY = 2 << 30


def _elem_bytes(problem: LatticeProblem) -> int:
    """Bytes of one group element as the kernel stores it."""
    return 4 * 8 if problem.kernel.elem_ndim == 1 else problem.group.N ** 2 * 16


def _dense_cell_bytes(problem: LatticeProblem) -> int:
    """Bytes per cell and sample of the dense path's whole-grid working set: the cell
    noise, its copy in the plan's columns or its column sums (3 x 8 d), and for group
    schemes the plaquettes with their exponential's or sampler's temporaries (7.5
    elements as matrices, 2.5 as quaternions). Measured peaks per cell and sample
    (benchmarks/bench_memory.py, numpy kernels, 1e5-1e6 cells): linear 21 (U(1)) to 384
    (U(4)); gauss 66 (U(1)), 123 (SU(2)), 1175 (SU(3)), 2179 (U(4)); wilson 58 (U(1)),
    115 (SU(2)); heat 143 (SU(2)), 1080 (SU(3)), 2295 (U(4)); this estimate is at or
    above each."""
    base = 3 * 8 * problem.group.dim
    if problem.scheme.kind == "algebra":
        return base
    return base + int((2.5 if problem.kernel.elem_ndim == 1 else 7.5) * _elem_bytes(problem))


def _resolve_path(problem: LatticeProblem, path: str) -> str:
    if not isinstance(problem, LatticeProblem):
        raise ArgumentTypeError("problem", f"got {type(problem).__name__}; expected a "
                                "LatticeProblem", f"`problem` must be a LatticeProblem, got "
                                f"{type(problem).__name__}.")
    if not isinstance(path, str) or path not in PATHS:
        raise ArgumentError("path", f"got {path!r}; expected one of {PATHS}",
                            f"`path` must be one of {PATHS}, got {path!r}.")
    if path == "auto":
        return "perimeter" if problem.scheme.perimeter else "dense"
    return path


def block_memory(problem: LatticeProblem, size: int, path: str = "auto") -> int:
    """Estimated working set (bytes) of one chunk of samples of a block of ``size``
    samples of ``problem`` on ``path``: the chunk's interval variables and holonomies,
    plus on the dense path the whole grid's cells (`_dense_cell_bytes`), or twice
    `SLAB_BYTES` where the route goes slab by slab (`_slab_variables`)."""
    path = _resolve_path(problem, path)
    n = min(_count(size, "size"), chunk_size(problem, path))
    if path != "dense":
        return _chunk_bytes(problem, n)
    if _use_slabs(problem, n):
        # a slab's cells, its plaquettes' temporaries and the chunk's products: measured
        # up to 1.8 x SLAB_BYTES beyond the chunk's variables (benchmarks/bench_memory.py)
        return _chunk_bytes(problem, n) + 2 * SLAB_BYTES
    return _chunk_bytes(problem, n) + _dense_bytes(problem, n)


def _chunk_bytes(problem: LatticeProblem, n: int) -> int:
    """A chunk's interval variables, links and their products' temporaries (a factor 4)."""
    plan, d = problem.plan, problem.group.dim
    return 4 * n * (plan.n_intervals + plan.link_count()) * (_elem_bytes(problem) + 8 * d)


def _use_slabs(problem: LatticeProblem, n: int) -> bool:
    """The dense path goes slab by slab for a chunk of ``n`` samples: the scheme allows
    it and the whole grid would take the chunk above `BLOCK_MEMORY`."""
    return bool(_slab_ready(problem) and problem.plan.n_intervals and
                _chunk_bytes(problem, n) + _dense_bytes(problem, n) > BLOCK_MEMORY)


def check_block_memory(problem: LatticeProblem, block: int, samples: int | None = None,
                       path: str = "auto") -> None:
    """Refuse sampling ``problem`` in blocks of ``block`` samples (of ``samples`` in
    all) when one chunk would need more than `BLOCK_MEMORY` (`block_memory`): an
    ArgumentError on ``block`` naming the largest block that fits, or on ``spacing``
    when one sample does not fit. The one check of every command and of
    `WilsonProblem`."""
    size = block if samples is None else min(block, samples)
    need = block_memory(problem, size, path)
    if need <= BLOCK_MEMORY:
        return
    grid = problem.grid
    what = (f"a chunk of {min(size, chunk_size(problem, _resolve_path(problem, path)))} "
            f"samples ({problem.scheme.name}, {problem.family}({problem.n}), "
            f"{_resolve_path(problem, path)} path, grid of {grid.nx * grid.ny} cells) needs "
            f"about {need / 2**30:.3g} GiB")
    budget = f"at most {BLOCK_MEMORY / 2**30:g} GiB per block"
    if block_memory(problem, 1, path) > BLOCK_MEMORY:
        raise ArgumentError("spacing", f"got {problem.field.spacing!r}: {what}, even one "
                            f"sample; expected a larger spacing ({budget})")
    lo, hi = 1, size   # the largest block that fits
    while hi - lo > 1:
        mid = (lo + hi) // 2
        lo, hi = (mid, hi) if block_memory(problem, mid, path) <= BLOCK_MEMORY else (lo, mid)
    raise ArgumentError("block", f"got {block}: {what}; expected a block <= {lo} or a "
                        f"larger spacing ({budget})")


def _dense_bytes(problem: LatticeProblem, size: int) -> int:
    """The whole-grid dense route's working set for ``size`` samples (bytes)."""
    nx, ny = problem.plan.grid.shape
    return size * nx * ny * _dense_cell_bytes(problem)


def _slab_ready(problem: LatticeProblem) -> bool:
    """True when the dense path may form interval variables slab by slab with the same
    numbers: every plaquette is a function of its own cell's noise (no draws of its own:
    ``noise_only`` group schemes, the U(1) heat kernel, which is exp of the noise) or
    the scheme is an algebra scheme (column sums of the noise)."""
    scheme = problem.scheme
    if scheme.kind == "algebra" or scheme.noise_only:
        return True
    group = problem.group
    return scheme.name == "heat" and group.family == "U" and group.n == 1


def _slabs(problem: LatticeProblem, slab_bytes: int) -> list[tuple[int, int, int, int]]:
    """One sample's cells in slabs ``(x0, x1, y0, y1)`` of the original grid, in the
    order `noise.cell_noise` draws them: whole grid columns, or pieces of one column
    when a column alone is above ``slab_bytes``."""
    nx, ny = problem.plan.grid.shape
    cells = max(1, int(slab_bytes // _dense_cell_bytes(problem)))
    if cells >= ny:
        width = cells // ny
        return [(x0, min(nx, x0 + width), 0, ny) for x0 in range(0, nx, width)]
    return [(x, x + 1, y0, min(ny, y0 + cells)) for x in range(nx) for y0 in range(0, ny, cells)]


def _skip_cell_noise(problem: LatticeProblem, size: int, rng, slab_bytes: int) -> None:
    """Draw (and drop) the cell noise of ``size`` samples, as `noise.cell_noise` draws
    it, slab by slab: the generator ends where the whole draw leaves it."""
    d = problem.group.dim
    nx, ny = problem.plan.grid.shape
    per = int(slab_bytes // (nx * ny * _dense_cell_bytes(problem)))
    if per >= 1:  # whole samples at once
        for s in range(0, size, per):
            rng.standard_normal((min(per, size - s), nx, ny, d))
        return
    slabs = _slabs(problem, slab_bytes)
    for _ in range(size):
        for x0, x1, y0, y1 in slabs:
            rng.standard_normal((x1 - x0, y1 - y0, d))


def _slab_variables(problem: LatticeProblem, size: int, rng, noise, slab_bytes: int):
    """The dense path's interval variables, slab by slab: the same numbers as the
    whole-grid route of `_interval_variables` in a working set of about ``slab_bytes``
    plus the interval variables.

    The cell noise of one sample is drawn in slabs of grid columns in the order
    `noise.cell_noise` draws it (sample, x, y, component), each scaled as there. Under
    ``axial-y`` a slab holds whole frame columns; under ``axial-x`` it holds frame rows
    (frame row b is grid column nx - 1 - b), which the products need bottom to top, so
    a first pass records the generator's state before each slab and the slabs are drawn
    again from the last one back (twice the Gaussian draws, the same numbers), then the
    generator is left where the whole draw leaves it. Each interval's product and each
    column's running sum take the same operations in the same order as the whole-grid
    route (products left to right from the interval's lowest row; ``numpy.cumsum``
    from the column's row 0), so the results are bitwise the same.
    """
    plan, group, scheme, kernel = problem.plan, problem.group, problem.scheme, problem.kernel
    lam, d = problem.field.coupling, group.dim
    grid = plan.grid
    nx, ny = grid.nx, grid.ny
    algebra = scheme.kind == "algebra"
    slabs = _slabs(problem, slab_bytes)
    std = np.sqrt(lam * problem.field.area.cell_measures(grid)) if noise is None else None
    cell_var = lam * plan.cell_measures
    column, lo, hi = plan.column, plan.lo, plan.hi
    cols, row_lo, row_hi = plan.columns_and_rows()
    K = plan.n_intervals
    if algebra:
        # the column sums at each interval's ends (cum[:, col, 0] = 0 as in the route)
        at_hi, at_lo = np.empty((size, K, d)), np.zeros((size, K, d))
    out = None
    # whole samples at once while they fit in a slab (the same draws: sample-major)
    per = int(slab_bytes // (nx * ny * _dense_cell_bytes(problem)))
    groups = [(s0, min(size, s0 + per)) for s0 in range(0, size, per)] if per >= 1 else \
        [(s0, s0 + 1) for s0 in range(size)]
    if per >= 1:
        slabs, axial_x = [(0, nx, 0, ny)], False   # one slab: no order to restore
    else:
        axial_x = plan.gauge != "axial-y"
    for s0, s1 in groups:
        g = s1 - s0
        if algebra:
            running = np.empty((g, cols.size, d))
        if noise is None and axial_x:
            states = []
            for x0, x1, y0, y1 in slabs:
                states.append(rng.bit_generator.state)
                rng.standard_normal((x1 - x0, y1 - y0, d))
            end = rng.bit_generator.state
        for j in (range(len(slabs) - 1, -1, -1) if axial_x else range(len(slabs))):
            x0, x1, y0, y1 = slabs[j]
            if noise is None:
                if axial_x:
                    rng.bit_generator.state = states[j]
                z = rng.standard_normal((g, x1 - x0, y1 - y0, d))
                z *= std[x0:x1, y0:y1, None]
            else:
                z = noise[s0:s1, x0:x1, y0:y1]
            z = frame_cells(z, plan.gauge)
            # the slab in the frame: columns [c0, c1), rows [r0, r1)
            if plan.gauge == "axial-y":
                c0, c1, r0, r1 = x0, x1, y0, y1
            else:
                c0, c1, r0, r1 = y0, y1, nx - x1, nx - x0
            in_cols = (cols >= c0) & (cols < c1)
            if not in_cols.any():
                continue
            bc = cols[in_cols]
            here = (column >= c0) & (column < c1)
            if algebra:
                block = z[:, bc - c0]
                if r0 == 0:
                    cs = np.cumsum(block, axis=2)
                else:
                    cs = np.cumsum(np.concatenate([running[:, in_cols][:, :, None], block],
                                                  axis=2), axis=2)[:, :, 1:]
                running[:, in_cols] = cs[:, :, -1]
                pos = np.searchsorted(bc, column)
                k = np.nonzero(here & (hi > r0) & (hi <= r1))[0]
                at_hi[s0:s1, k] = cs[:, pos[k], hi[k] - r0 - 1]
                k = np.nonzero(here & (lo > r0) & (lo <= r1))[0]
                at_lo[s0:s1, k] = cs[:, pos[k], lo[k] - r0 - 1]
                continue
            a, b = max(r0, row_lo), min(r1, row_hi)
            # intervals in these columns, from their first row in the slab to their last
            k = np.nonzero(here & (lo < b) & (hi > a))[0]
            if a >= b or not k.size:
                continue
            sub = z[:, bc - c0][:, :, a - r0:b - r0]
            var = cell_var[bc][:, a:b]
            q = scheme.plaquettes(kernel, sub.reshape(g, -1, d), var.ravel(), rng)
            q = q.reshape((g, bc.size, b - a) + q.shape[2:])
            if out is None:
                out = np.empty((size, K) + q.shape[3:], q.dtype)
            ci = np.searchsorted(bc, column[k])
            first = np.maximum(lo[k], a)
            count = np.minimum(hi[k], b) - first
            for r in range(int(count.max())):
                sel = np.nonzero(count > r)[0]
                row = first[sel] + r
                f = q[:, ci[sel], row - a]
                new = row == lo[k[sel]]
                if new.any():  # an interval's lowest plaquette starts its product
                    out[s0:s1, k[sel[new]]] = f[:, new]
                    if new.all():
                        continue
                    sel, f = sel[~new], f[:, ~new]
                out[s0:s1, k[sel]] = kernel.mul(out[s0:s1, k[sel]], f)
        if noise is None and axial_x:
            rng.bit_generator.state = end
    if algebra:
        return at_hi - at_lo
    return out


def _holonomies(problem: WilsonProblem, variables: np.ndarray, kernel,
                plan=None) -> list[np.ndarray]:
    """Holonomies of every loop of ``plan`` (default the problem's; kernel elements,
    leading axis samples)."""
    plan = problem.plan if plan is None else plan
    fused = getattr(kernel, "holonomies", None)
    if fused is not None:  # a compiled kernel does all of this in one pass per sample
        out = fused(plan, variables, problem.scheme.kind == "algebra")
        if out is not None:
            return out
    size = variables.shape[0]
    side = plan.side
    out = []
    if problem.scheme.kind == "algebra":
        # S_k = S_parent + side_k X_k, cumulated outward from the reference
        cum = variables * side[:, None]
        for dep in range(1, plan.max_depth):
            k = np.nonzero(plan.depth == dep)[0]
            cum[:, k] += cum[:, plan.parent[k]]
        for links, direction in plan.steps:
            on = links >= 0
            if not on.any():
                out.append(kernel.identity((size,)))
                continue
            coords = cum[:, links[on]]
            coords *= -direction[on, None]
            out.append(kernel.product(kernel.exp(coords)))
        return out

    # C_k = C_parent B_k above the reference, B_k C_parent below it
    cum = np.empty_like(variables)
    for dep in range(plan.max_depth):
        k = np.nonzero(plan.depth == dep)[0]
        if not dep:
            cum[:, k] = variables[:, k]
            continue
        par = plan.parent[k]
        up = side[k] > 0
        cum[:, k[up]] = kernel.mul(cum[:, par[up]], variables[:, k[up]])
        cum[:, k[~up]] = kernel.mul(variables[:, k[~up]], cum[:, par[~up]])
    for links, direction in plan.steps:
        on = links >= 0
        idx = links[on]
        if not idx.size:
            out.append(kernel.identity((size,)))
            continue
        f = cum[:, idx]
        # rightward above (or leftward below) the reference uses C^{-1} = C^dagger
        flip = (direction[on] * side[idx]) > 0
        f[:, flip] = kernel.dagger(f[:, flip])
        out.append(kernel.product(f))
    return out


def run_block(problem: WilsonProblem, block: int, size: int | None = None) -> BlockSums:
    """Compute the partial sums of block ``block`` of ``problem``.

    Block b draws from ``SeedSequence(seed, spawn_key=(b,))`` and has
    ``problem.block_sizes()[b]`` samples unless ``size`` is given.
    """
    block, size = _block_iv(problem, block, size)
    return _block_sums(problem, block, size, block_rng(problem.seed, block))


def _block_iv(problem, block, size) -> tuple[int, int]:
    """``(block, size)`` of :func:`run_block`: a WilsonProblem, one of its block indices
    and a block size (default the block's own)."""
    if not isinstance(problem, WilsonProblem):
        raise ArgumentTypeError("problem", f"got {type(problem).__name__}; expected a "
                                "WilsonProblem", f"`problem` must be a WilsonProblem, got "
                                f"{type(problem).__name__}.")
    sizes = problem.block_sizes()
    rule = f"an integer from 0 to {len(sizes) - 1}"
    if isinstance(block, (bool, np.bool_)) or not isinstance(block, numbers.Integral):
        raise ArgumentTypeError("block", f"got {block!r}; expected {rule}",
                                f"`block` must be {rule}, got {block!r}.")
    if not 0 <= block < len(sizes):
        raise ArgumentError("block", f"got {block!r}; expected {rule}",
                            f"`block` must be {rule} (the problem's blocks), got {block!r}.")
    return int(block), (sizes[block] if size is None else _count(size, "size", MAX_BLOCK))


#: freed memory the C allocator keeps for reuse instead of returning it (bytes); see
#: `_keep_freed_memory`
HEAP_RETAIN_BYTES = 64 << 20
_HEAP_TUNED = False


def _keep_freed_memory() -> None:
    """Let glibc's allocator serve the chunks' temporaries from memory it keeps.

    By default glibc maps arrays above a threshold (128 KiB at first, then the largest
    array freed so far) afresh and returns the top of the heap to the system when more
    than twice that is free. A chunk's temporaries (a few hundred KiB each) are then
    all freed at the chunk's end, given back, and faulted in again page by page in the
    next chunk: measured 1.0 of 2.4 ms per chunk of the SU(2) heat sampler on a virtual
    machine, where a page fault costs about a microsecond. Raising both thresholds to
    `HEAP_RETAIN_BYTES` keeps that memory for reuse (the process's peak is unchanged:
    memory already used is kept, none is added). Done once per process; a no-op where
    the C library is not glibc. The numbers computed do not depend on it.

    References
    ----------
    .. [1] The GNU C Library manual, section 3.2.3.8 "Malloc Tunable Parameters"
       (``mallopt``, ``M_TRIM_THRESHOLD``, ``M_MMAP_THRESHOLD``).
    """
    global _HEAP_TUNED
    if _HEAP_TUNED:
        return
    _HEAP_TUNED = True
    try:
        import ctypes

        libc = ctypes.CDLL(None)
        mallopt = libc.mallopt
    except (OSError, AttributeError):
        return
    M_TRIM_THRESHOLD, M_MMAP_THRESHOLD = -1, -3
    mallopt(M_TRIM_THRESHOLD, HEAP_RETAIN_BYTES)
    mallopt(M_MMAP_THRESHOLD, HEAP_RETAIN_BYTES)


#: working-set budget of one chunk of samples inside a block (bytes): the hot loop's
#: arrays stay in cache, so time grows linearly with the perimeter and the samples
CHUNK_BYTES = 4 << 20


def chunk_size(problem: WilsonProblem, path: str) -> int:
    """Samples per chunk inside a block, a function of the problem only (never of the
    machine or the sample count), so results stay bitwise reproducible."""
    plan, kernel, d = problem.plan, problem.kernel, problem.group.dim
    elem = 4 * 8 if kernel.elem_ndim == 1 else problem.group.N ** 2 * 16
    if path == "perimeter" and problem.scheme.kind == "algebra" and kernel.fuses_algebra:
        # the kernel's own holonomies pass (`fuses_algebra`): sized by the interval sums
        # and one element per loop (an algebra scheme's draws do not depend on chunks)
        return int(max(64, CHUNK_BYTES // (plan.n_intervals * 8 * d + len(plan.steps) * elem)))
    per_sample = (plan.n_intervals + plan.link_count()) * (elem + 8 * d)
    if path == "dense":
        cols, lo, hi = plan.columns_and_rows()
        per_sample += cols.size * (hi - lo) * (elem + 8 * problem.group.dim)
    return int(max(64, CHUNK_BYTES // max(per_sample, 1)))


def _block_sums(problem: WilsonProblem, block: int, size: int, rng,
                noise: np.ndarray | None = None) -> BlockSums:
    if problem.formal:
        raise ValueError(
            "this problem was built with `formal`=True (a signed area density): no measure "
            "exists to sample; use holonomy.lattice_series or noise.FormalGaussian."
        )
    _keep_freed_memory()
    path = "dense" if noise is not None else problem.resolved_path
    kernel = problem.kernel
    rep = problem.representation
    step = chunk_size(problem, path)
    surface = getattr(problem, "surface_weights", None)
    plan = problem.sampling_plan if surface is not None else problem.plan
    n_loops = len(problem.lattice_loops)
    values, weights, drift = [], [], 0.0
    # chunks draw from the block's generator one after the other
    for start in range(0, size, step):
        n = min(step, size - start)
        sub = None if noise is None else noise[start:start + n]
        variables = _interval_variables(problem, n, rng, path, sub)
        hol = _holonomies(problem, variables, kernel, plan)
        values.append(np.stack([kernel.character(rep, h) for h in hol[:n_loops]], axis=1))
        if surface is not None:
            weights.append(surface.weights(hol, kernel))
        drift = max(drift, max(kernel.drift(h) for h in hol))
    return BlockSums.from_values(block, np.concatenate(values), drift,
                                 subsets=correlator_subsets(problem.correlators),
                                 weights=np.concatenate(weights) if weights else None)


def estimate_wilson_loops(group, field: Field, loops: Sequence, rep: str = "fundamental", *,
                          samples: int, block: int = 4096, seed: int, names: Sequence[str] = (),
                          path: str = "auto", executor: Executor | None = None,
                          correlators: Sequence[Sequence[int]] = (),
                          surface: ClosedSurface | None = None) -> EstimateResult:
    """Estimate normalized Wilson loops E[chi_rep(H)] / dim with standard errors.

    Parameters
    ----------
    group : Group or (family, n, metric)
    field : Field
    loops : sequence of Loop or LatticeLoop
        All loops share one field realization per sample, so the result also holds
        their correlators E[W(a) W(b)].
    rep : str
        ``fundamental``, ``adjoint``, ``spin:j`` (SU(2)) or ``power:k``.
    samples, block, seed : int
        Block b draws from SeedSequence(seed, spawn_key=(b,)).
    path : {"auto", "perimeter", "dense"}
    executor : concurrent.futures.Executor, optional
        Runs the blocks (a process pool, or a Dask client's executor); inline if None.
    correlators : sequence of sequence of int, optional
        Loop-index sets (two or more loops each) whose correlators ``E[prod_i W(i)]``
        and connected parts are estimated (``EstimateResult.correlator_estimates``).
    surface : ClosedSurface, optional
        A closed surface: the ``heat`` scheme's samples weighted into its measure
        (self-normalised estimates with ``ess``; README.md, Closed surfaces).

    Returns
    -------
    EstimateResult
    """
    if isinstance(group, tuple) and len(group) == 3:
        family, n, metric = group
    elif all(hasattr(group, a) for a in ("family", "n", "metric")):
        family, n, metric = group.family, group.n, group.metric
    else:
        raise ArgumentTypeError("group", f"got {group!r}; expected a Group or (family, n, "
                                "metric)", f"`group` must be a Group (make_group) or (family, "
                                f"n, metric), got {group!r}.")
    problem = WilsonProblem(family=family, n=n, metric=metric, field=field,
                            loops=_sequence(loops, "loops"), names=_sequence(names, "names"),
                            rep=rep, samples=samples, block=block,
                            seed=seed, path=path, correlators=tuple(correlators),
                            surface=surface)
    if executor is None:
        blocks = [run_block(problem, b) for b in range(problem.n_blocks)]
    else:
        futures = [executor.submit(run_block, problem, b) for b in range(problem.n_blocks)]
        blocks = [f.result() for f in futures]
    return problem.finish(blocks)

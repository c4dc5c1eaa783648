"""Memory per block (issue 17): the dense path slab by slab gives the whole-grid route's
numbers, and a block that would need more than ``holonomy.BLOCK_MEMORY`` is refused.

The checks compare the engine with itself (the same seeded draws through two routes):
a block's generator is ``SeedSequence(seed, spawn_key=(b,))`` and ``Generator``'s
normal draws are sequential, so drawing an array in pieces gives the same numbers
(numpy documentation, "Random Generator", ``Generator.standard_normal``; ``bit_generator.
state`` restores a generator exactly: "Bit Generators", ``state``). Memory targets are
in benchmarks/bench_memory.py, not here.
"""

from __future__ import annotations

import numpy as np
import pytest

import holonomy
from discretize import Loop
from holonomy import Field, StudyProblem, WilsonProblem, run_block, run_study_block
from holonomy import _sampling
from holonomy._kernels import fast_available
from noise import ArgumentError, block_rng, cell_noise

KERNELS = ["numpy", pytest.param("fast", marks=pytest.mark.skipif(
    not fast_available(), reason="the fast extra (numba) is not installed"))]
LOOPS = (Loop.circle((0.1, 0.2), 1.0, 17), Loop.polygon([[0, 0], [1.5, 0.3], [0.4, 1.2]]))
# slab budgets: one cell per slab, pieces of a column, several whole columns, whole
# samples grouped (the grid has 20 x 20 cells)
SLABS = [1, 3000, 40_000, 2_000_000]


def _problem(family, n, scheme, gauge, kernel, monkeypatch, **run):
    monkeypatch.setenv("WHITEGAUGE_KERNEL", kernel)
    return WilsonProblem(family=family, n=n, metric="physics",
                         field=Field(0.7, 0.15, scheme=scheme, gauge=gauge), loops=LOOPS,
                         **({"samples": 8, "block": 8, "seed": 5, "path": "dense"} | run))


def _draw(problem, slab_bytes=None, noise=None):
    """Two chunks (5 and 3 samples) of interval variables, then the generator's next
    draws (the stream must end where the whole-grid route leaves it)."""
    rng = block_rng(problem.seed, 0)
    out = [_sampling._interval_variables(problem, 5, rng, "dense", slab_bytes=slab_bytes),
           _sampling._interval_variables(problem, 3, rng, "dense", slab_bytes=slab_bytes)]
    return out + [rng.standard_normal(4)]


# group storage whose exponential is elementwise (quaternions; U(1): one product per
# coordinate), and the linear scheme (column sums) on every storage: bitwise
BITWISE = [("SU", 2, "gauss"), ("Sp", 1, "gauss"), ("U", 1, "gauss"), ("U", 1, "heat"),
           ("SU", 2, "linear"), ("U", 1, "linear"), ("SU", 3, "linear"), ("U", 4, "linear"),
           ("SO", 4, "linear")]


@pytest.mark.parametrize("kernel", KERNELS)
@pytest.mark.parametrize("gauge", ["axial-y", "axial-x"])
@pytest.mark.parametrize("family,n,scheme", BITWISE)
def test_slabs_give_the_whole_grid_numbers_bitwise(family, n, scheme, gauge, kernel,
                                                   monkeypatch):
    p = _problem(family, n, scheme, gauge, kernel, monkeypatch)
    whole = _draw(p)
    for slab in SLABS:
        got = _draw(p, slab)
        for a, b in zip(whole, got):
            assert a.shape == b.shape and a.tobytes() == b.tobytes(), slab


@pytest.mark.parametrize("kernel", KERNELS)
@pytest.mark.parametrize("gauge", ["axial-y", "axial-x"])
@pytest.mark.parametrize("family,n", [("SU", 3), ("U", 4), ("SO", 3)])
def test_slabs_of_matrix_groups_agree_to_rounding(family, n, gauge, kernel, monkeypatch):
    """Matrix groups map coordinates to the algebra by one BLAS product over the batch
    (`Group.algebra`), whose rounding of a row can depend on the row's place in the
    batch (the library's blocking of rows and threads): the slabs' plaquettes agree to
    a few units in the last place, the draws bitwise (common practice, no source)."""
    p = _problem(family, n, "gauss", gauge, kernel, monkeypatch)
    whole = _draw(p)
    for slab in SLABS:
        got = _draw(p, slab)
        assert got[-1].tobytes() == whole[-1].tobytes()
        for a, b in zip(whole[:2], got[:2]):
            np.testing.assert_allclose(b, a, rtol=0, atol=1e-14)


@pytest.mark.parametrize("family,n,scheme", [("SU", 2, "gauss"), ("U", 1, "heat"),
                                             ("SU", 3, "linear")])
def test_given_noise_slab_by_slab(family, n, scheme, monkeypatch):
    """The study's route: a noise already drawn is read slab by slab, same numbers."""
    p = _problem(family, n, scheme, "axial-x", "numpy", monkeypatch)
    noise = cell_noise(0.7 * p.field.area.cell_measures(p.plan.grid), p.group.dim, 6,
                       rng=np.random.default_rng(3))
    whole = _sampling._interval_variables(p, 6, None, "dense", noise)
    for slab in SLABS:
        got = _sampling._interval_variables(p, 6, None, "dense", noise, slab_bytes=slab)
        assert got.tobytes() == whole.tobytes(), slab


@pytest.mark.parametrize("kernel", KERNELS)
@pytest.mark.parametrize("scheme,gauge", [("gauss", "axial-y"), ("gauss", "axial-x"),
                                          ("linear", "axial-x")])
def test_block_over_the_budget_goes_slab_by_slab_with_the_same_sums(scheme, gauge, kernel,
                                                                   monkeypatch):
    """A block whose whole grid is above BLOCK_MEMORY takes the slabs by itself."""
    p = _problem("SU", 2, scheme, gauge, kernel, monkeypatch, samples=200, block=100)
    whole = run_block(p, 1)
    monkeypatch.setattr(_sampling, "BLOCK_MEMORY", 0)
    monkeypatch.setattr(_sampling, "SLAB_BYTES", 20_000)
    called = []
    slab = _sampling._slab_variables
    monkeypatch.setattr(_sampling, "_slab_variables",
                        lambda *a: called.append(1) or slab(*a))
    got = run_block(p, 1)
    assert called
    for field in ("sum_re", "sum_im", "cross", "cross_sq"):
        assert getattr(got, field).tobytes() == getattr(whole, field).tobytes(), field


@pytest.mark.parametrize("gauge", ["axial-y", "axial-x"])
def test_study_block_slab_by_slab_is_bitwise(gauge, monkeypatch):
    base = _problem("U", 1, "heat", gauge, "numpy", monkeypatch, samples=40, block=10,
                    path="auto")
    study = StudyProblem(base, spacings=(0.3, 0.15), schemes=("heat", "linear", "gauss"))
    whole = run_study_block(study, 2)
    monkeypatch.setattr(_sampling, "BLOCK_MEMORY", 0)
    monkeypatch.setattr(_sampling, "SLAB_BYTES", 5_000)
    got = run_study_block(study, 2)
    for key in whole:
        assert got[key].sum_re.tobytes() == whole[key].sum_re.tobytes(), key


@pytest.mark.parametrize("slab", [1, 500, 10**9])
def test_skipped_noise_leaves_the_generator_where_the_draw_does(slab, monkeypatch):
    """Schemes that do not read the cell noise (wilson, heat beyond U(1)) draw it in
    slabs and drop it: the generator then stands where `noise.cell_noise` leaves it."""
    p = _problem("SU", 2, "wilson", "axial-y", "numpy", monkeypatch)
    a, b = block_rng(1, 0), block_rng(1, 0)
    cell_noise(p.field.area.cell_measures(p.plan.grid), 3, 7, rng=a)
    _sampling._skip_cell_noise(p, 7, b, slab)
    assert a.bit_generator.state == b.bit_generator.state


def test_block_beyond_the_memory_budget_is_refused(monkeypatch):
    p = _problem("SU", 2, "wilson", "axial-y", "numpy", monkeypatch, samples=64, block=64)
    need, one = holonomy.block_memory(p, 64, "dense"), holonomy.block_memory(p, 1, "dense")
    assert need > one
    monkeypatch.setattr(_sampling, "BLOCK_MEMORY", (need + one) // 2)
    with pytest.raises(ArgumentError) as exc:
        _problem("SU", 2, "wilson", "axial-y", "numpy", monkeypatch, samples=64, block=64)
    assert exc.value.argument == "block"
    fits = int(exc.value.rule.split("expected a block <= ")[1].split()[0])
    # the block named fits and the next one does not
    assert holonomy.block_memory(p, fits, "dense") <= _sampling.BLOCK_MEMORY < \
        holonomy.block_memory(p, fits + 1, "dense")
    _problem("SU", 2, "wilson", "axial-y", "numpy", monkeypatch, samples=64, block=fits)
    monkeypatch.setattr(_sampling, "BLOCK_MEMORY", one - 1)
    with pytest.raises(ArgumentError) as exc:
        _problem("SU", 2, "wilson", "axial-y", "numpy", monkeypatch, samples=64, block=1)
    assert exc.value.argument == "spacing"


@pytest.mark.parametrize("scheme", ["gauss", "linear"])
def test_slab_ready_schemes_are_never_refused_for_their_grid(scheme, monkeypatch):
    """gauss and linear go slab by slab: a budget below their whole grid still runs."""
    p = _problem("SU", 3, scheme, "axial-y", "numpy", monkeypatch, samples=64, block=64)
    whole = _sampling._dense_bytes(p, 64)
    rest = holonomy.block_memory(p, 64, "dense") - whole   # interval variables, holonomies
    monkeypatch.setattr(_sampling, "BLOCK_MEMORY", rest + whole // 4)
    monkeypatch.setattr(_sampling, "SLAB_BYTES", whole // 16)
    _problem("SU", 3, scheme, "axial-y", "numpy", monkeypatch, samples=64, block=64)
    monkeypatch.setattr(_sampling, "SLAB_BYTES", whole // 2)   # a slab above the budget
    with pytest.raises(ArgumentError):
        _problem("SU", 3, scheme, "axial-y", "numpy", monkeypatch, samples=64, block=64)


def test_study_beyond_the_memory_budget_is_refused(monkeypatch):
    base = _problem("SU", 2, "heat", "axial-y", "numpy", monkeypatch, samples=400, block=100,
                    path="auto")
    study = StudyProblem(base, spacings=(0.3, 0.15), schemes=("heat", "linear"))
    need = holonomy.study_memory(study)
    # the coupled noise alone: each (spacing, scheme)'s own check passes
    monkeypatch.setattr(_sampling, "check_block_memory", lambda *a, **k: None)
    monkeypatch.setattr(_sampling, "BLOCK_MEMORY", need - 1)
    with pytest.raises(ArgumentError) as exc:
        StudyProblem(base, spacings=(0.3, 0.15), schemes=("heat", "linear"))
    assert exc.value.argument == "block"
    monkeypatch.setattr(_sampling, "BLOCK_MEMORY", holonomy.study_memory(study, 1) - 1)
    with pytest.raises(ArgumentError) as exc:
        StudyProblem(base, spacings=(0.3, 0.15), schemes=("heat", "linear"))
    assert exc.value.argument == "spacings"

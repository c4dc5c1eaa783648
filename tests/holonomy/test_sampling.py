"""The sampling engine against published laws.

Sources named beside each check. Statistical checks use fixed seeds and 4 standard
errors; the sample sizes keep each test around a second.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, special

from discretize import AreaForm, Grid, LatticeLoop, Loop
from holonomy import Field, WilsonProblem, estimate_wilson_loops, run_block
from holonomy.groups import make_group

SIGMA = 4.0


def _rect(w, h, x0=0.0, y0=0.0):
    return Loop.polygon([[x0, y0], [x0 + w, y0], [x0 + w, y0 + h], [x0, y0 + h]])


def _within(est, exact, k=SIGMA):
    assert abs(est.estimate - exact) <= k * est.stderr + 1e-12, (est, exact)


# -- simple loops with the heat scheme ----------------------------------------------------
# Simple-loop law: E[chi_pi(H)]/dim = exp(-c_pi lambda A / 2) for a simple loop enclosing
# area A (Levy 2003, "Yang-Mills measure on compact surfaces", Mem. AMS 166, Prop. 2.x;
# Sengupta 1997, Mem. AMS 126).
SIMPLE_GROUPS = [("U", 1, "trace"), ("SU", 2, "physics"), ("SU", 3, "physics"),
                 ("U", 3, "large-n"), ("SO", 3, "trace"), ("Sp", 2, "trace")]
SIMPLE_LOOPS = {
    "rectangle": _rect(1.0, 0.5),
    "ell": Loop.from_moves("R4 U2 L2 U2 L2 D4", start=(0.0, 0.0), spacing=0.25),
    "circle": Loop.circle((0.0, 0.0), 0.6, 32),
}


def _simple_cases():
    # the other groups' heat kernels cost more per draw than those of U(1) and SU(2):
    # their non-rectangular loops run in the slow suite
    for family, n, metric in SIMPLE_GROUPS:
        for shape in sorted(SIMPLE_LOOPS):
            slow = (family, n) not in {("U", 1), ("SU", 2)} and shape != "rectangle"
            marks = [pytest.mark.slow] if slow else []
            yield pytest.param(family, n, metric, shape, marks=marks,
                               id=f"{shape}-{family}{n}")


@pytest.mark.parametrize("family,n,metric,shape", list(_simple_cases()))
def test_heat_simple_loop_law(family, n, metric, shape):
    group = make_group(family, n, metric)
    c = group.rep("fundamental").casimir
    loop = SIMPLE_LOOPS[shape]
    field = Field(coupling=1.0, spacing=0.25 if shape != "circle" else 0.1, scheme="heat")
    samples = 4000 if (family, n) in {("U", 1), ("SU", 2)} else 1500
    res = estimate_wilson_loops(group, field, [loop], samples=samples, block=1000, seed=11)
    est = res.loops[0]
    _within(est, np.exp(-c * field.coupling * est.area / 2))
    assert est.drift < 1e-10


# -- U(1): any loop ------------------------------------------------------------------------
# For U(1) the phase is exp(i sum_F n_F X_F), X_F ~ N(0, lambda |F|) independent, so
# W = exp(-lambda sum_F n_F^2 |F| / 2) (Gaussian characteristic function; e.g. Levy
# 2003, Mem. AMS 166, section on abelian theory).
@pytest.mark.parametrize("scheme", ["heat", "linear", "gauss"])
def test_u1_winding_law(scheme):
    group = make_group("U", 1, "trace")
    lam = 0.4
    twice = Loop.polygon([[0, 0], [1, 0], [1, 1], [0, 1]], turns=2)
    # figure-eight: a lobe of area 1 counterclockwise, a lobe of area 2 clockwise
    eight = Loop.polygon([[0, 0], [1, 0], [1, 1], [0, 1], [0, 0], [0, -1], [-2, -1], [-2, 0]])
    field = Field(coupling=lam, spacing=0.25, scheme=scheme)
    res = estimate_wilson_loops(group, field, [twice, eight], names=["twice", "eight"],
                                samples=20000, block=5000, seed=3)
    _within(res["twice"], np.exp(-lam * 4 * 1.0 / 2))
    _within(res["eight"], np.exp(-lam * (1.0 + 2.0) / 2))
    # the imaginary part vanishes by the symmetry X -> -X
    assert abs(res["eight"].estimate_imag) <= SIGMA * res["eight"].stderr_imag


def test_u1_correlator_of_disjoint_loops_factorizes():
    # disjoint loops see independent noise: E[W_a W_b] = E[W_a] E[W_b]
    group = make_group("U", 1, "trace")
    a, b = _rect(1.0, 1.0), _rect(1.0, 0.5, x0=2.0)
    field = Field(coupling=0.5, spacing=0.25, scheme="heat")
    res = estimate_wilson_loops(group, field, [a, b], samples=20000, block=5000, seed=5)
    expected = np.exp(-0.5 * 1.0 / 2) * np.exp(-0.5 * 0.5 / 2)
    assert abs(res.correlators[0, 1].real - expected) <= SIGMA * res.correlator_stderr[0, 1]


# -- the linear scheme on a rectangle ------------------------------------------------------
def _su2_gaussian_step(t):
    """f(t) = E[tr exp(X)]/2 for X Ad-invariant Gaussian in su(2), k = 2, variance t.

    With X = sum_a Z_a i sigma_a / 2, exp(X) has trace 2 cos(|Z|/2) and |Z|/sqrt(t) is
    chi-distributed with 3 degrees of freedom; f(t) = (1 - t/4) exp(-t/8) (the
    exponential moment of one Gaussian; the U(N) analogue is in Haagerup and
    Thorbjornsen 2003, Expo. Math. 21). Checked here against the chi integral.
    """
    closed = (1 - t / 4) * np.exp(-t / 8)
    num, _ = integrate.quad(lambda r: np.cos(np.sqrt(t) * r / 2)
                            * np.sqrt(2 / np.pi) * r * r * np.exp(-r * r / 2), 0, np.inf)
    assert abs(num - closed) < 1e-10
    return closed


@pytest.mark.parametrize("h", [0.5, 0.25])
def test_linear_rectangle_equals_gaussian_step_power(h):
    # reference line on the bottom edge: the top links are exp(S_col) with independent
    # column sums of variance s H, so W = f(s H)^W by Schur's lemma.
    group = make_group("SU", 2, "physics")
    lam, width, height = 1.5, 1.0, 1.0
    field = Field(coupling=lam, spacing=h, scheme="linear", reference=0.0)
    res = estimate_wilson_loops(group, field, [_rect(width, height)], samples=20000,
                                block=5000, seed=7)
    s = lam * h * h
    H, W = round(height / h), round(width / h)
    _within(res.loops[0], _su2_gaussian_step(s * H) ** W)


def test_linear_rectangle_approaches_continuum():
    # f(sH)^W -> exp(-c lambda A / 2) as h -> 0 (c = 3/4 for SU(2), k = 2)
    lam, A = 1.5, 1.0
    values = [_su2_gaussian_step(lam * h * h * round(1 / h)) ** round(1 / h)
              for h in (0.5, 0.25, 0.125, 0.0625)]
    gaps = np.abs(np.array(values) - np.exp(-0.75 * lam * A / 2))
    assert np.all(np.diff(gaps) < 0)


# -- the wilson scheme ---------------------------------------------------------------------
def _wilson_w_u1(b):
    # w = I1(b)/I0(b) (Creutz 1983, "Quarks, Gluons and Lattices", from memory),
    # confirmed by integrating cos(theta) against exp(b cos(theta)) over U(1)
    num = integrate.quad(lambda th: np.cos(th) * np.exp(b * (np.cos(th) - 1)), -np.pi, np.pi)[0]
    den = integrate.quad(lambda th: np.exp(b * (np.cos(th) - 1)), -np.pi, np.pi)[0]
    w = special.iv(1, b) / special.iv(0, b)
    assert abs(num / den - w) < 1e-10
    return w


def _wilson_w_su2(b):
    # w = I2(b)/I1(b) (Creutz 1983, from memory), confirmed by Weyl integration:
    # class functions of SU(2) integrate against (2/pi) sin^2(theta) d theta
    wt = lambda th: np.sin(th) ** 2 * np.exp(b * (np.cos(th) - 1))  # noqa: E731
    num = integrate.quad(lambda th: np.cos(th) * wt(th), 0, np.pi)[0]
    den = integrate.quad(wt, 0, np.pi)[0]
    w = special.iv(2, b) / special.iv(1, b)
    assert abs(num / den - w) < 1e-10
    return w


@pytest.mark.parametrize("family,n,metric", [("U", 1, "trace"), ("SU", 2, "physics")])
@pytest.mark.parametrize("lam", [0.5, 2.0])
def test_wilson_scheme_area_law(family, n, metric, lam):
    group = make_group(family, n, metric)
    h = 0.5
    s = lam * h * h
    w = _wilson_w_u1(1 / s) if family == "U" else _wilson_w_su2(4 / s)
    loops = [_rect(0.5, 0.5), _rect(1.0, 1.0), _rect(2.0, 1.5)]  # A = 1, 4, 12 cells
    field = Field(coupling=lam, spacing=h, scheme="wilson")
    res = estimate_wilson_loops(group, field, loops, samples=20000, block=5000, seed=13)
    for est, cells in zip(res.loops, (1, 4, 12)):
        _within(est, w ** cells)


def test_wilson_refuses_other_groups():
    with pytest.raises(ValueError, match="scheme 'wilson' supports U\\(1\\) and SU\\(2\\)"):
        WilsonProblem(family="SU", n=3, metric="physics",
                      field=Field(coupling=1.0, spacing=0.5, scheme="wilson"),
                      loops=(_rect(1, 1),))


# -- the gauss scheme on one plaquette -------------------------------------------------------
def test_gauss_one_plaquette_su2():
    group = make_group("SU", 2, "physics")
    lam, h = 3.0, 1.0
    res = estimate_wilson_loops(group, Field(coupling=lam, spacing=h, scheme="gauss"),
                                [_rect(1.0, 1.0)], samples=20000, block=5000, seed=17)
    _within(res.loops[0], _su2_gaussian_step(lam * h * h))


@pytest.mark.parametrize("N", [2, 3])
def test_gauss_one_plaquette_unitary(N):
    # exp(-s/(2N)) L^{(1)}_{N-1}(s/N) / N with metric k = N: the exponential moment of
    # the Gaussian unitary ensemble (Haagerup and Thorbjornsen 2003, Expo. Math. 21)
    group = make_group("U", N, "large-n")
    s = 2.5
    res = estimate_wilson_loops(group, Field(coupling=s, spacing=1.0, scheme="gauss"),
                                [_rect(1.0, 1.0)], samples=20000, block=5000, seed=19)
    exact = np.exp(-s / (2 * N)) * special.eval_genlaguerre(N - 1, 1, s / N) / N
    _within(res.loops[0], exact)


# -- gauges and reference lines ---------------------------------------------------------------
# The law of a Wilson loop does not depend on the gauge (Driver 1989, Commun. Math. Phys.
# 123; Levy 2003). A non-simple loop: the figure-eight with a doubly wound lobe.
NONSIMPLE = Loop.polygon([[0, 0], [1, 0], [1, 1], [0, 1], [0, 0], [0, -1], [-1, -1], [-1, 0]])


def test_su2_law_independent_of_gauge_and_reference():
    group = make_group("SU", 2, "physics")
    ests = []
    for seed, (gauge, ref) in enumerate([("axial-y", None), ("axial-x", None),
                                         ("axial-y", 1.0), ("axial-x", -1.0)]):
        field = Field(coupling=1.2, spacing=0.25, gauge=gauge, reference=ref, scheme="heat")
        ests.append(estimate_wilson_loops(group, field, [NONSIMPLE], samples=10000,
                                          block=5000, seed=100 + seed).loops[0])
    base = ests[0]
    for e in ests[1:]:
        assert abs(e.estimate - base.estimate) <= SIGMA * np.hypot(e.stderr, base.stderr)


def test_u1_phase_is_pathwise_gauge_invariant():
    # same seed, same grid: the same cell noise, so the same phases in every gauge
    problems = []
    for gauge, ref in [("axial-y", None), ("axial-x", None), ("axial-y", 0.5)]:
        field = Field(coupling=0.7, spacing=0.25, gauge=gauge, reference=ref, scheme="gauss")
        problems.append(WilsonProblem(family="U", n=1, metric="trace", field=field,
                                      loops=(NONSIMPLE, _rect(1.0, 0.5)), samples=64,
                                      block=64, seed=2, path="dense"))
    assert all(p.grid == problems[0].grid for p in problems)
    sums = [run_block(p, 0) for p in problems]
    for other in sums[1:]:
        np.testing.assert_allclose(other.sum_re, sums[0].sum_re, atol=1e-12)
        np.testing.assert_allclose(other.sum_im, sums[0].sum_im, atol=1e-12)
        np.testing.assert_allclose(other.cross, sums[0].cross, atol=1e-12)


# -- paths, seeds and blocks ----------------------------------------------------------------
@pytest.mark.parametrize("scheme", ["heat", "linear"])
def test_perimeter_and_dense_paths_agree_in_law(scheme):
    group = make_group("SU", 2, "physics")
    field = Field(coupling=1.0, spacing=0.25, scheme=scheme)
    loops = [NONSIMPLE, _rect(1.0, 0.75)]
    res = {p: estimate_wilson_loops(group, field, loops, samples=10000, block=5000, seed=23,
                                    path=p) for p in ("perimeter", "dense")}
    for a, b in zip(res["perimeter"].loops, res["dense"].loops):
        assert abs(a.estimate - b.estimate) <= SIGMA * np.hypot(a.stderr, b.stderr)


def test_block_order_and_seeds():
    field = Field(coupling=1.0, spacing=0.25, scheme="heat")
    problem = WilsonProblem(family="SU", n=2, metric="physics", field=field,
                            loops=(NONSIMPLE,), samples=3000, block=700, seed=42)
    forward = problem.finish([run_block(problem, b) for b in range(problem.n_blocks)])
    backward = problem.finish([run_block(problem, b) for b in reversed(range(problem.n_blocks))])
    assert forward.loops[0].estimate == backward.loops[0].estimate
    assert forward.loops[0].stderr == backward.loops[0].stderr
    assert problem.block_sizes() == [700, 700, 700, 700, 200]
    other = WilsonProblem(family="SU", n=2, metric="physics", field=field,
                          loops=(NONSIMPLE,), samples=3000, block=700, seed=43)
    assert run_block(other, 0).sum_re[0] != run_block(problem, 0).sum_re[0]
    # standard errors: pooled and batch means agree (independent samples)
    e = forward.loops[0]
    assert 0.3 < e.stderr_batch / e.stderr < 3.0


def test_problem_pickles_without_cached_state():
    import pickle

    field = Field(coupling=1.0, spacing=0.25)
    problem = WilsonProblem(family="SU", n=2, metric="physics", field=field,
                            loops=(_rect(1, 1),), samples=10, block=10, seed=1)
    clone = pickle.loads(pickle.dumps(problem))
    assert run_block(clone, 0).sum_re[0] == run_block(problem, 0).sum_re[0]


# -- bad input ---------------------------------------------------------------------------------
@pytest.mark.parametrize("kwargs,match", [
    (dict(coupling=0.0, spacing=0.5), "`coupling` must be a positive"),
    (dict(coupling=-1.0, spacing=0.5), "`coupling` must be a positive"),
    (dict(coupling=1.0, spacing=0.0), "`spacing` must be a positive"),
    (dict(coupling=1.0, spacing=0.5, gauge="axial-z"), "`gauge` must be one of"),
    (dict(coupling=1.0, spacing=0.5, scheme="euler"), "`scheme` must be one of"),
])
def test_field_bad_input(kwargs, match):
    with pytest.raises(ValueError, match=match):
        Field(**kwargs)


@pytest.mark.parametrize("kwargs,match", [
    (dict(samples=0), "`samples` must be an integer >= 1"),
    (dict(block=0), "`block` must be an integer >= 1"),
    (dict(loops=()), "`loops` is empty"),
    (dict(path="sideways"), "`path` must be one of"),
    (dict(names=("a", "a"), loops=(_rect(1, 1), _rect(1, 1))), "`names` must be distinct"),
    (dict(field=Field(1.0, 0.5, area=AreaForm(base=1.0, rects=((0, 0, 1, 1, -1.0),)))),
     "negative density.*formal"),
    (dict(field=Field(1.0, 0.5, scheme="gauss"), path="perimeter"),
     "`path`='perimeter' is not available for scheme 'gauss'"),
    (dict(field=Field(1.0, 0.5, reference=0.3)), "`reference` must lie on a grid line"),
])
def test_problem_bad_input(kwargs, match):
    base = dict(family="SU", n=2, metric="physics", field=Field(1.0, 0.5),
                loops=(_rect(1, 1),), samples=10, block=10, seed=0)
    base.update(kwargs)
    with pytest.raises(ValueError, match=match):
        WilsonProblem(**base)


@pytest.mark.parametrize("family,n", [("SU", 2), ("SU", 3)])
def test_linear_scheme_results_do_not_depend_on_the_chunks(family, n, monkeypatch):
    # the linear scheme's draws are one stream of normals however the samples are cut
    # into chunks, so the chunk size (which may follow the kernel in use) cannot change
    # its numbers: bitwise equal block sums (common practice, no source)
    import holonomy._sampling as sampling

    p = WilsonProblem(family=family, n=n, metric="physics", samples=300, block=300, seed=2,
                      field=Field(1.0, 0.125, scheme="linear"), loops=(_rect(1.0, 0.5),))
    a = run_block(p, 0)
    monkeypatch.setattr(sampling, "CHUNK_BYTES", 1)  # 64 samples per chunk
    b = run_block(p, 0)
    assert sampling.chunk_size(p, "perimeter") == 64
    assert np.array_equal(a.sum_re, b.sum_re) and np.array_equal(a.sum_im, b.sum_im)


def test_loop_leaving_the_grid_is_refused():
    grid = Grid((0.0, 0.0), 0.5, (2, 2))
    with pytest.raises(ValueError, match="grid"):
        LatticeLoop.from_moves(grid, "R4 U1 L4 D1")


def test_chunks_depend_on_the_problem_not_the_sample_count():
    # blocks are processed in cache-sized chunks; the chunk size must not change with
    # the number of samples, or results would depend on it (common practice, no source)
    from holonomy._sampling import chunk_size

    def make(samples, side):
        return WilsonProblem(family="SU", n=2, metric="physics", field=Field(1.0, 0.125),
                             loops=(_rect(side, side),), samples=samples, block=4096, seed=1)
    assert chunk_size(make(10, 1.0), "perimeter") == chunk_size(make(10**6, 1.0), "perimeter")
    assert chunk_size(make(10, 4.0), "perimeter") < chunk_size(make(10, 1.0), "perimeter")
    # a block spanning several chunks is still a pure function of (seed, block)
    p = make(5000, 4.0)
    assert p.block_sizes()[0] > chunk_size(p, "perimeter")
    a, b = run_block(p, 0), run_block(p, 0)
    assert a.sum_re[0] == b.sum_re[0] and a.count == 4096

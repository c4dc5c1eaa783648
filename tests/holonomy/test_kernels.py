"""Quaternion and matrix kernels give the same group elements."""

from __future__ import annotations

import numpy as np
import pytest

from holonomy._kernels import MatrixKernel, QuaternionKernel, kernel_for
from holonomy.groups import make_group


@pytest.mark.parametrize("family,n,metric", [("SU", 2, "physics"), ("SU", 2, "trace"),
                                             ("Sp", 1, 3.0)])
def test_quaternion_kernel_matches_matrices(family, n, metric):
    group = make_group(family, n, metric)
    q, m = QuaternionKernel(group), MatrixKernel(group)
    rng = np.random.default_rng(0)
    a, b = rng.standard_normal((2, 50, 3)) * 3
    qa, qb = q.exp(a), q.exp(b)
    np.testing.assert_allclose(q.to_matrices(qa), m.exp(a), atol=1e-13)
    np.testing.assert_allclose(q.to_matrices(q.mul(qa, qb)), m.exp(a) @ m.exp(b), atol=1e-13)
    np.testing.assert_allclose(q.to_matrices(q.dagger(qa)), m.dagger(m.exp(a)), atol=1e-13)
    factors = q.exp(rng.standard_normal((4, 7, 3)))
    mats = q.to_matrices(factors)
    prod = mats[:, 0]
    for i in range(1, 7):
        prod = prod @ mats[:, i]
    np.testing.assert_allclose(q.to_matrices(q.product(factors)), prod, atol=1e-12)
    assert q.drift(q.product(factors)) < 1e-13
    rep = group.rep("fundamental")
    np.testing.assert_allclose(q.character(rep, qa), rep.character(m.exp(a)), atol=1e-13)


def test_quaternion_heat_kernel_moment():
    # E[tr U_t]/2 = exp(-c t / 2), c = 3/4 for SU(2) with k = 2 (Levy 2003, Mem. AMS 166;
    # any text on Brownian motion on compact groups)
    group = make_group("SU", 2, "physics")
    kern = kernel_for(group)
    assert isinstance(kern, QuaternionKernel)
    t = np.array([0.05, 1.0, 4.0])
    a0 = kern.heat(t, 40000, np.random.default_rng(1))[..., 0]
    mean, se = a0.mean(axis=0), a0.std(axis=0, ddof=1) / np.sqrt(a0.shape[0])
    assert np.all(np.abs(mean - np.exp(-0.375 * t)) <= 4 * se)



def _reference_route(problem, variables, kernel):
    """`_holonomies` with the kernel's component-first pass switched off."""
    from holonomy._sampling import _holonomies

    kernel.holonomies = lambda *args: None  # an instance attribute hides the method
    try:
        return _holonomies(problem, variables, kernel)
    finally:
        del kernel.holonomies


@pytest.mark.parametrize("scheme", ["linear", "heat", "gauss"])
@pytest.mark.parametrize("family,n,metric", [("SU", 2, "physics"), ("SU", 2, "trace"),
                                             ("Sp", 1, 3.0)])
def test_component_first_holonomies_are_bitwise_the_reference(family, n, metric, scheme):
    # the numpy path's component-first quaternion pass does the reference route's
    # operations in the same order: the same numbers, bit for bit (reproducibility)
    from discretize import Loop
    from holonomy import Field, WilsonProblem
    from holonomy._sampling import _holonomies, _interval_variables

    loops = (Loop.polygon([(0, 0), (1.5, 0), (1.5, 0.75), (0.5, 0.75), (0.5, 1.5), (0, 1.5)],
                          turns=2), Loop.circle((0.7, 0.7), 0.6, 12))
    prob = WilsonProblem(family=family, n=n, metric=metric, loops=loops, samples=200,
                         block=200, seed=3, field=Field(1.3, 0.25, scheme=scheme))
    kern = kernel_for(prob.group, fast=False)
    prob.__dict__["kernel"] = kern
    assert prob.plan.max_depth > 1  # cumulation over several depths is exercised
    for path in ("perimeter", "dense") if prob.scheme.perimeter else ("dense",):
        x = _interval_variables(prob, 200, np.random.default_rng(4), path)
        new, ref = _holonomies(prob, x.copy(), kern), _reference_route(prob, x.copy(), kern)
        for a, b in zip(new, ref):
            assert np.array_equal(a, b)



@pytest.mark.parametrize("family,metric", [("SU", "physics"), ("U", "trace"), ("U", 2.0)])
def test_u3_component_holonomies_match_the_matrix_route(family, metric):
    # U(3) / SU(3) linear holonomies from real component arrays (closed form of
    # Morningstar and Peardon 2004 in real arithmetic) against the reference route
    # (complex matrices, expm_u3, matrix products): equal to rounding, per sample
    from discretize import Loop
    from holonomy import Field, WilsonProblem
    from holonomy._sampling import _interval_variables

    loops = (Loop.polygon([(0, 0), (1.5, 0), (1.5, 0.75), (0.5, 0.75), (0.5, 1.5), (0, 1.5)],
                          turns=2), Loop.circle((0.7, 0.7), 0.6, 12))
    prob = WilsonProblem(family=family, n=3, metric=metric, loops=loops, samples=200,
                         block=200, seed=3, field=Field(2.0, 0.25, scheme="linear"))
    kern = kernel_for(prob.group, fast=False)
    prob.__dict__["kernel"] = kern
    x = _interval_variables(prob, 200, np.random.default_rng(4), "perimeter")
    new = kern.holonomies(prob.plan, x.copy(), True)
    ref = _reference_route(prob, x.copy(), kern)
    for a, b in zip(new, ref):
        np.testing.assert_allclose(a, b, rtol=0, atol=1e-12)

"""Exact two-loop correlators against the sampling engine (heat and wilson schemes).

The heat scheme is exact in law for lattice loops (Levy 2003, Mem. AMS 166), the wilson
scheme draws independent Wilson plaquettes (Gross and Witten 1980): the Monte Carlo
E[W(a) W(b)] of loops on grid lines must agree with the exact correlator
(holonomy.exact.evaluate_polygons, wilson_lattice_exact) within 4 standard errors, and
the connected correlator of disjoint loops must be consistent with 0.
"""

from __future__ import annotations

import numpy as np
import pytest

from discretize import Grid, Loop
from holonomy import Field, estimate_wilson_loops
from holonomy.exact import evaluate_polygons, wilson_lattice_exact
from holonomy.groups import make_group

H = 0.25
A = np.array([(0, 0), (2, 0), (2, 2), (0, 2)], float) * H * 2
PAIRS = {
    "disjoint": np.array([(5, 0), (7, 0), (7, 2), (5, 2)], float) * H * 2,
    "nested": np.array([(1, 1), (3, 1), (3, 3), (1, 3)], float) * H,
    "crossing": np.array([(1, 1), (3, 1), (3, 3), (1, 3)], float) * H * 2,
}
GROUPS = {"U1": ("U", 1, "trace", 0.8), "SU2": ("SU", 2, "physics", 1.0)}


@pytest.mark.parametrize("gname", list(GROUPS))
@pytest.mark.parametrize("pair", list(PAIRS))
def test_heat_correlator(gname, pair):
    family, n, metric, lam = GROUPS[gname]
    group = make_group(family, n, metric)
    other = PAIRS[pair]
    exact = evaluate_polygons(group, [A, other], coupling=lam).value
    res = estimate_wilson_loops(group, Field(coupling=lam, spacing=H, scheme="heat"),
                                [Loop.polygon(A), Loop.polygon(other)],
                                samples=12000, block=4000, seed=7)
    est, se = res.correlators[0, 1].real, res.correlator_stderr[0, 1]
    assert abs(est - exact.real) <= 4 * se, (est, se, exact)
    if pair == "disjoint":
        # independent faces: E[W1 W2] = E[W1] E[W2]; the product of the exact means
        w = [evaluate_polygons(group, [c], coupling=lam).value.real for c in (A, other)]
        assert exact.real == pytest.approx(w[0] * w[1], abs=1e-12)


def test_wilson_correlator_su2():
    group = make_group("SU", 2, "physics")
    lam = 1.5
    grid = Grid((0.0, 0.0), H, (16, 16))
    loops = [Loop.polygon(A).snap(grid), Loop.polygon(PAIRS["nested"]).snap(grid)]
    exact = wilson_lattice_exact(group, "fundamental", loops, coupling=lam).value
    res = estimate_wilson_loops(group, Field(coupling=lam, spacing=H, scheme="wilson"),
                                loops, samples=12000, block=4000, seed=11)
    est, se = res.correlators[0, 1].real, res.correlator_stderr[0, 1]
    assert abs(est - exact.real) <= 4 * se, (est, se, exact)


@pytest.mark.parametrize("gname", list(GROUPS))
def test_engine_correlators_and_connected(gname):
    # estimate_wilson_loops(correlators=...): E[W(A) W(B)] for a nested pair against the
    # exact value, and the connected part of a disjoint pair consistent with 0
    # (independent faces; Levy 2003)
    family, n, metric, lam = GROUPS[gname]
    group = make_group(family, n, metric)
    loops = [A, PAIRS["nested"], PAIRS["disjoint"]]
    res = estimate_wilson_loops(group, Field(coupling=lam, spacing=H, scheme="heat"),
                                [Loop.polygon(v) for v in loops], samples=12000,
                                block=4000, seed=3, names=["a", "b", "c"],
                                correlators=[(0, 1), (0, 2), (0, 1, 2)])
    nested, disjoint, triple = res.correlator_estimates
    exact = evaluate_polygons(group, [A, PAIRS["nested"]], coupling=lam).value.real
    assert nested.loops == ("a", "b")
    assert abs(nested.estimate - exact) <= 4 * nested.stderr
    assert abs(disjoint.connected) <= 4 * disjoint.connected_stderr
    assert disjoint.connected_stderr > 0
    ex3 = evaluate_polygons(group, loops, coupling=lam).value.real
    assert abs(triple.estimate - ex3) <= 4 * triple.stderr

"""The exact evaluation of polygonal loops against the sampling engine.

Two independent routes to the same number: the lasso decomposition with tensor
contraction (holonomy.exact.evaluate_polygon) and Monte Carlo of the `heat` scheme in
axial gauge, which is exact in law for lattice loops at every spacing (Driver 1989,
Commun. Math. Phys. 123; Levy 2003, Mem. AMS 166). All loops below have vertices on the
lattice, so the sampled loop is the evaluated loop. Agreement within 4 standard errors.
"""

from __future__ import annotations

import numpy as np
import pytest

from discretize import Loop, arrangement
from holonomy import Field, estimate_wilson_loops
from holonomy.exact import evaluate_polygon
from holonomy.groups import make_group

H = 0.25
LOOPS = {
    # windings +1 (area 2) and -1 (area 1), crossing inside an edge
    "eight": ([(0, 0), (2, 0), (2, 2), (1, 2), (1, -1), (0, -1)], 1),
    "twice": ([(0, 0), (2, 0), (2, 1), (0, 1)], 2),
    "thrice": ([(0, 0), (1, 0), (1, 1), (0, 1)], 3),
    # windings 1 (area 9) and 2 (area 2)
    "nested": ([(0, 0), (3, 0), (3, 3), (1, 3), (1, 1), (2, 1), (2, 4), (0, 4)], 1),
    # windings -1, 1 and 2
    "mixed": ([(0, 0), (6, 0), (6, 6), (4, 6), (4, 4), (5, 4), (5, 7), (3, 7), (3, -3),
               (0, -3)], 1),
    # four faces, windings 1, 2, 1, 1
    "cross": ([(0, 1), (3, 1), (3, 2), (1, 2), (1, 0), (2, 0), (2, 3), (0, 3)], 1),
}
GROUPS = {"SU2": ("SU", 2, "physics", 1.0), "U2": ("U", 2, "large-n", 0.6),
          "SO3": ("SO", 3, "trace", 1.0)}


def test_windings_of_the_test_loops():
    # the loops are what the comments say (Euler: bounded faces = crossings + 1 for a
    # closed curve with transversal double points and one component)
    w = {name: sorted(arrangement(np.array(v, float) * H, turns=t).winding.tolist())
         for name, (v, t) in LOOPS.items()}
    assert w["eight"] == [-1, 1] and w["nested"] == [1, 2] and w["mixed"] == [-1, 1, 2]
    assert w["twice"] == [2] and w["thrice"] == [3] and w["cross"] == [1, 1, 1, 2]


def _cases():
    for g in GROUPS:
        for name in LOOPS:
            marks = [] if g == "SU2" else [pytest.mark.slow]
            yield pytest.param(g, name, marks=marks, id=f"{g}-{name}")


@pytest.mark.parametrize("gname,name", list(_cases()))
def test_monte_carlo_agrees_with_exact_evaluation(gname, name):
    family, n, metric, lam = GROUPS[gname]
    group = make_group(family, n, metric)
    vertices, turns = LOOPS[name]
    vertices = np.array(vertices, float) * H
    exact = evaluate_polygon(group, vertices, turns=turns, coupling=lam).value
    loop = Loop.polygon(vertices, turns=turns)
    samples = 20000 if gname == "SU2" else 8000
    est = estimate_wilson_loops(group, Field(coupling=lam, spacing=H, scheme="heat"), [loop],
                                samples=samples, block=4000, seed=31).loops[0]
    assert abs(est.estimate - np.real(exact)) <= 4 * est.stderr, (est, exact)


@pytest.mark.slow
@pytest.mark.parametrize("family", ["SU", "U"])
def test_doubly_wound_heat_loop_against_hook_formula(family):
    # The heat scheme with the exact torus kernels against the hook expansion of a
    # doubly wound simple loop (E. M. Rains 1997, J. Theoret. Probab. 10; T. Levy 2008,
    # Adv. Math. 218), 10^6 samples, within 4 standard errors (the former sub-stepping
    # bias was of the order of this resolution).
    from holonomy.exact import exact_wilson_loop

    G = make_group(family, 3, "physics")
    loop = Loop.polygon([(0, 0), (1, 0), (1, 1), (0, 1)], turns=2)
    exact = exact_wilson_loop(G, "fundamental", loop, coupling=1.0)
    assert exact.method == "hook-expansion"
    res = estimate_wilson_loops(G, Field(1.0, 0.25, scheme="heat"), [loop],
                                samples=1_000_000, block=65536, seed=2026)
    est, se = res.loops[0].estimate, res.loops[0].stderr
    assert abs(est - exact.value.real) < 4 * se, (est, exact.value, se)

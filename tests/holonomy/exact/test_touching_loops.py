"""Lattice loops that meet themselves (a node or an edge shared by two passages): the
exact value from the separated polygon, against independence of the faces."""

import math

import pytest

from discretize import Grid, LatticeLoop
from holonomy.groups import make_group
from holonomy.exact import exact_wilson_loop

# SU(2), physics metric: fundamental Casimir c = 3/4 (Fulton and Harris, Representation
# Theory, 1991, from memory). Lobes that are disjoint faces give independent,
# conjugation-invariant holonomies, so E[tr(H1 H2^{+-1})]/2 is the product of
# exp(-c lambda |F| / 2) over the faces (Levy 2003, Mem. AMS 166, independence of the
# faces of the plane's Yang-Mills measure).
C = 0.75


@pytest.mark.parametrize("moves,start,cells", [
    ("R1 U1 L1 D1 L1 D1 R1 U1", (3, 3), 2),        # two cells touching at a corner
    ("R2 U1 L1 D2 L1 U1", (3, 3), 2),              # a figure eight through one node
    ("R2 U2 L2 D2 R1 D1 R1 U1 L2", (2, 2), 5),     # two lobes along a shared edge
])
def test_touching_lobes(moves, start, cells):
    lat = LatticeLoop.from_moves(Grid((0, 0), 0.5, (8, 8)), moves, start=start)
    lam = 1.3
    r = exact_wilson_loop(make_group("SU", 2, "physics"), "fundamental", lat, coupling=lam)
    assert r is not None and r.method == "polygon-evaluation"
    assert r.value.real == pytest.approx(math.exp(-C * lam * cells * 0.25 / 2), rel=1e-12)

"""Monte Carlo on closed surfaces: the heat scheme's plane samples weighted by the outer
face's kernel (holonomy/_surface_weights.py; README.md, Closed surfaces).

References, written out here independently of the package:

- simple loops: the character sums of Migdal 1975 (Sov. Phys. JETP 42, 413) and
  Rusakov 1990 (Mod. Phys. Lett. A 5, 693), W = sum_{a,b} d_a d_b^(1-2g) N_{aV}^b
  exp(-c_a t1/2 - c_b t2/2) / (Z dim V), Z = sum_a d_a^(2-2g) exp(-c_a T/2) (Witten 1991,
  Commun. Math. Phys. 141, 153); for SU(2) with k = 2, c_j = j (j + 1) and N = 1 for
  b = j +- 1/2; for U(1) with k = 1, c_q = q^2 and b = a + 1;
- the SU(2) figure eight on the sphere: the same heat-kernel measure integrated
  numerically over its two lobe holonomies (Gauss-Legendre in the class angles and the
  angle between the axes), the sphere's measure being the plane's conditioned on the
  boundary of the drawn region (Levy 2003, Mem. Amer. Math. Soc. 166, no. 790);
- E_plane[w] = 1: the characters of the boundary holonomy have E[chi_a(h)] =
  d_a exp(-c_a t_B/2) on the plane, so E[K_g(t_out, h)] = Z_g(t_B + t_out).

Statistical checks: fixed seeds, 4 standard errors.
"""

import math

import numpy as np
import pytest
from scipy.stats import chi2

from discretize import Grid, LatticeLoop
from holonomy import ClosedSurface, Field, WilsonProblem, run_block
from holonomy.exact import exact_surface_wilson_loop
from noise import ArgumentError


def su2_sum(t1, t2, genus=0, terms=200):
    """SU(2), k = 2, fundamental: Migdal 1975 / Rusakov 1990 written out."""
    cas = lambda j: j * (j + 1)  # noqa: E731
    js = [j / 2 for j in range(terms)]
    Z = sum((2 * j + 1) ** (2 - 2 * genus) * math.exp(-cas(j) * (t1 + t2) / 2) for j in js)
    num = sum((2 * j + 1) * (2 * b + 1) ** (1 - 2 * genus)
              * math.exp(-cas(j) * t1 / 2 - cas(b) * t2 / 2)
              for j in js for b in (j - 0.5, j + 0.5) if b >= 0)
    return num / (2 * Z)


def u1_sum(t1, t2, terms=60):
    """U(1), k = 1, charge 1: every d = 1, so the genus drops out."""
    qs = range(-terms, terms + 1)
    Z = sum(math.exp(-q * q * (t1 + t2) / 2) for q in qs)
    return sum(math.exp(-q * q * t2 / 2 - (q + 1) ** 2 * t1 / 2) for q in qs) / Z


def su2_heat(t, c, terms=80):
    """SU(2) heat kernel (k = 2) at cos(theta) = c against Haar measure."""
    th = np.arccos(np.clip(c, -1.0, 1.0))
    return sum((n + 1) * math.exp(-(n / 2) * (n / 2 + 1) * t / 2)
               * np.sin((n + 1) * th) / np.sin(th) for n in range(terms))


def su2_figure_eight(a1, a2, T, n=48):
    """SU(2) fundamental, k = 2, coupling 1: a figure eight whose lobes (areas a1, a2)
    are run in opposite senses, on a sphere of area T, by quadrature. h1 = exp(alpha Z),
    h2 of angle beta about an axis at angle gamma from Z: Re tr(h1 h2^{+-1}) / 2 =
    cos a cos b -+ sin a sin b cos g, Haar densities (2/pi) sin^2 and sin(g)/2."""
    x, w = np.polynomial.legendre.leggauss(n)
    ang = (x + 1) * np.pi / 2
    wa = w * np.pi / 2 * (2 / np.pi) * np.sin(ang) ** 2
    wg = w * np.pi / 2 * np.sin(ang) / 2
    A, B, G = np.meshgrid(ang, ang, ang, indexing="ij")
    weight = wa[:, None, None] * wa[None, :, None] * wg[None, None, :]
    boundary = np.cos(A) * np.cos(B) - np.sin(A) * np.sin(B) * np.cos(G)
    loop = np.cos(A) * np.cos(B) + np.sin(A) * np.sin(B) * np.cos(G)
    dens = su2_heat(a1, np.cos(A)) * su2_heat(a2, np.cos(B)) * su2_heat(T - a1 - a2, boundary)
    Z = sum((n + 1) ** 2 * math.exp(-(n / 2) * (n / 2 + 1) * T / 2) for n in range(80))
    return float(np.sum(weight * dens * loop) / Z)


GRID = Grid((0.0, 0.0), 0.5, (8, 8))
BOX = LatticeLoop.from_moves(GRID, "R2 U2 L2 D2", (2, 2))          # area 1
EIGHT = LatticeLoop.from_moves(GRID, "R1 U1 L1 D1 D1 L1 U1 R1", (4, 4))  # lobes 0.25, -1 / +1


def estimate(family, n, metric, loops, genus, T, samples, seed=11, block=4096):
    problem = WilsonProblem(family=family, n=n, metric=metric, field=Field(1.0, 0.5),
                            loops=tuple(loops), samples=samples, block=block,
                            seed=seed, surface=ClosedSurface(genus, T))
    res = problem.finish([run_block(problem, b) for b in range(problem.n_blocks)])
    return problem, res


def check(le, exact, n_blocks):
    assert abs(le.estimate - exact) < 4 * le.stderr, (le.estimate, exact, le.stderr)
    # the batch error squared is about stderr^2 chi2_{nb-1} / (nb - 1) (scipy.stats)
    lo, hi = chi2.ppf([1e-4, 1 - 1e-4], n_blocks - 1) / (n_blocks - 1)
    assert lo < (le.stderr_batch / le.stderr) ** 2 < hi
    assert 0 < le.ess <= le.samples
    assert abs(le.weight_mean - 1) < 4 * le.weight_stderr


@pytest.mark.parametrize("genus, T", [(0, 3.0), (1, 3.0), (0, 1.6)])
def test_su2_simple_loop(genus, T):
    problem, res = estimate("SU", 2, "physics", [BOX], genus, T, 20000)
    check(res.loops[0], su2_sum(1.0, T - 1.0, genus), problem.n_blocks)


@pytest.mark.parametrize("genus", [0, 1])
def test_u1_simple_loop(genus):
    problem, res = estimate("U", 1, "trace", [BOX], genus, 2.5, 20000)
    check(res.loops[0], u1_sum(1.0, 1.5), problem.n_blocks)


def test_su2_figure_eight_on_the_sphere():
    assert EIGHT.winding_numbers().min() == -1 and EIGHT.winding_numbers().max() == 1
    problem, res = estimate("SU", 2, "physics", [EIGHT, BOX], 0, 3.0, 20000)
    assert len(problem.surface_weights.extra) == 1  # the eight's region boundary
    check(res.loops[0], su2_figure_eight(0.25, 0.25, 3.0), problem.n_blocks)
    check(res.loops[1], su2_sum(1.0, 2.0), problem.n_blocks)
    sv = exact_surface_wilson_loop(problem.group, "fundamental", EIGHT, coupling=1.0,
                                   genus=0, total_area=3.0)
    # the exact route for non-simple loops on the surface (surface-outer-face-expansion)
    assert sv.value.real == pytest.approx(su2_figure_eight(0.25, 0.25, 3.0), abs=1e-9)
    check(res.loops[0], sv.value.real, problem.n_blocks)


def test_so3_simple_loop_on_the_sphere():
    problem, res = estimate("SO", 3, "trace", [BOX], 0, 3.0, 20000)
    ex = exact_surface_wilson_loop(problem.group, "fundamental", BOX, coupling=1.0,
                                   genus=0, total_area=3.0)
    check(res.loops[0], ex.value.real, problem.n_blocks)


@pytest.mark.parametrize("family, n, metric", [("SU", 3, "physics"), ("U", 2, "trace"),
                                               ("SU", 4, "physics"), ("U", 4, "trace")])
def test_higher_rank_simple_loop_on_the_sphere(family, n, metric):
    problem, res = estimate(family, n, metric, [BOX], 0, 3.0, 8192, block=1024)
    ex = exact_surface_wilson_loop(problem.group, "fundamental", BOX, coupling=1.0,
                                   genus=0, total_area=3.0)
    check(res.loops[0], ex.value.real, problem.n_blocks)


def test_the_weights_have_mean_one_and_leave_the_plane_samples_alone():
    """E_plane[w] = 1 where the weights vary most (a small outer face), and the plane's
    unweighted sums are bitwise those of the plane run: the same draws."""
    plane = WilsonProblem(family="SU", n=2, metric="physics", field=Field(1.0, 0.5),
                          loops=(EIGHT, BOX), samples=4096, block=4096, seed=5)
    problem, res = estimate("SU", 2, "physics", [EIGHT, BOX], 0, 1.3, 30000, seed=5)
    for le in res.loops:
        assert abs(le.weight_mean - 1) < 4 * le.weight_stderr
        assert le.ess < 0.9 * le.samples  # the weights do vary
    a, b = run_block(plane, 0), run_block(problem, 0)
    assert np.array_equal(a.sum_re, b.sum_re) and np.array_equal(a.cross, b.cross)


def test_store_round_trip_of_weighted_sums_is_bitwise():
    problem, _ = estimate("SU", 2, "physics", [BOX], 1, 3.0, 10)
    from holonomy import BlockSums

    b = run_block(problem, 0)
    again = BlockSums.from_dict(b.to_dict())
    for key in b.weighted.FIELDS:
        assert np.array_equal(getattr(b.weighted, key), getattr(again.weighted, key))


def test_bad_input():
    kw = dict(family="SU", n=2, metric="physics", loops=(BOX,), samples=10)
    with pytest.raises(ArgumentError) as err:
        WilsonProblem(field=Field(1.0, 0.5, scheme="gauss"), surface=ClosedSurface(0, 3.0),
                      **kw)
    assert err.value.argument == "scheme"
    with pytest.raises(ArgumentError) as err:
        WilsonProblem(field=Field(1.0, 0.5), surface=ClosedSurface(0, 1.0), **kw)
    assert err.value.argument == "surface"
    with pytest.raises(ArgumentError) as err:
        ClosedSurface(-1, 3.0)
    assert err.value.argument == "genus"
    with pytest.raises(ArgumentError) as err:
        WilsonProblem(family="SO", n=4, metric="trace", loops=(BOX,), samples=10,
                      field=Field(1.0, 0.5), surface=ClosedSurface(0, 3.0))
    assert err.value.argument == "family"

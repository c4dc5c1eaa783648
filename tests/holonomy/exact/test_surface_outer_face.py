"""Non-simple loops on closed surfaces: the outer face's character expansion
(holonomy.exact._surface, route ``surface-outer-face-expansion``).

Independent check: the sphere's measure on the faces of a two-face loop is
``p_t1(x) p_t2(y) p_t3(boundary(x, y)) / p_T(e)`` against Haar measure on G x G (the
heat-kernel measure conditioned on the outer face: A. A. Migdal 1975, Sov. Phys. JETP
42, 413; E. Witten 1991, Commun. Math. Phys. 141, 153, Section 2; T. Levy 2003, Mem.
AMS 166, ch. 2). For SU(2) (and SO(3) = SU(2)/Z2 with its integer spins) it is
integrated here over SU(2) x SU(2) in quaternion coordinates: x runs over its conjugacy
class angle theta with the Weyl density (2/pi) sin^2 theta, y over Haar measure
(2/pi) sin^2 psi dpsi x the uniform direction; conjugation by the torus fixing x leaves
only the direction's z-component u (H. Weyl 1939, The Classical Groups, the integration
formula; from memory). Heat kernels are character series
``p_t = sum_j (2j+1) chi_j e^{-c_j t/2}``, ``chi_j(phi) = sin((2j+1) phi) / sin phi``
(H. Georgi 1999, Lie Algebras in Particle Physics, Ch. 3), and the integral is a
product Gauss-Legendre rule (numpy.polynomial.legendre).
"""

import math

import numpy as np
import pytest

from discretize import Grid, LatticeLoop, Loop, arrangement
from holonomy.exact import (evaluate_words, exact_surface_wilson_loop, exact_wilson_loop,
                            lasso_words, outer_boundary_word)
from holonomy.exact._tensor import contract_mixed, contract_numeric
from holonomy.groups import irreducible_representation, make_group, weight_system

# a bowtie (figure eight) with lobes of areas 1/3 (winding -1) and 4/3 (winding +1)
FIG8 = [(0, 0), (2, 2), (2, 0), (0, 1)]


# ------------------------------------------------------------- the independent route
def _quat_mul(a, b):
    a0, a1, a2, a3 = a
    b0, b1, b2, b3 = b
    return (a0 * b0 - a1 * b1 - a2 * b2 - a3 * b3, a0 * b1 + a1 * b0 + a2 * b3 - a3 * b2,
            a0 * b2 - a1 * b3 + a2 * b0 + a3 * b1, a0 * b3 + a1 * b2 - a2 * b1 + a3 * b0)


def _quat_word(word, x, y):
    letters = {1: x, 2: y, -1: (x[0], -x[1], -x[2], -x[3]), -2: (y[0], -y[1], -y[2], -y[3])}
    out = letters[word[0]]
    for a in word[1:]:
        out = _quat_mul(out, letters[a])
    return out


def _chi(j, cos_phi):
    """sin((2j+1) phi) / sin(phi) at cos(phi): the Chebyshev polynomial U_{2j}."""
    c = np.clip(cos_phi, -1.0, 1.0)
    prev, cur = np.zeros_like(c), np.ones_like(c)
    for _ in range(int(round(2 * j))):
        prev, cur = cur, 2 * c * cur - prev
    return cur


def _kernel(t, cos_phi, spins, cas):
    """``sum_j (2j+1) chi_j e^{-c_j t/2}`` over the given spins, in one pass of the
    Chebyshev recurrence."""
    c = np.clip(cos_phi, -1.0, 1.0)
    wanted = {int(round(2 * j)): (2 * j + 1) * math.exp(-cas(j) * t / 2) for j in spins}
    prev, cur = np.zeros_like(c), np.ones_like(c)
    out = wanted.get(0, 0.0) * cur
    for n in range(1, max(wanted) + 1):
        prev, cur = cur, 2 * c * cur - prev
        if n in wanted:
            out = out + wanted[n] * cur
    return out


def two_face_sphere(word, boundary, t1, t2, t_out, spin, cas, integer_spins=False,
                    nodes=48, jmax=30):
    """``E_sphere[chi_spin(word(x, y))] / (2 spin + 1)`` for faces x (time t1), y (t2)
    and the outer face (t_out) whose boundary is ``boundary(x, y)``."""
    spins = [j for j in np.arange(0, jmax + 0.25, 1.0 if integer_spins else 0.5)]
    g, w = np.polynomial.legendre.leggauss(nodes)
    ang = (g + 1) * np.pi / 2
    wa = w * np.pi / 2 * (2 / np.pi) * np.sin(ang) ** 2  # Weyl / Haar class density
    wu = w / 2  # uniform u in [-1, 1]
    th, ps, u = np.meshgrid(ang, ang, g, indexing="ij")
    wt = wa[:, None, None] * wa[None, :, None] * wu[None, None, :]
    zero = np.zeros_like(th)
    x = (np.cos(th), zero, zero, np.sin(th))
    s = np.sin(ps)
    y = (np.cos(ps), s * np.sqrt(1 - u * u), zero, s * u)
    loop = _quat_word(word, x, y)[0]
    edge = _quat_word(boundary, x, y)[0]
    dens = (_kernel(t1, np.cos(ang), spins, cas)[:, None, None]
            * _kernel(t2, np.cos(ang), spins, cas)[None, :, None]
            * _kernel(t_out, edge, spins, cas))
    z = _kernel(t1 + t2 + t_out, np.ones(1), spins, cas)[0]
    return float(np.sum(wt * dens * _chi(spin, loop)) / (z * (2 * spin + 1)))


SU2 = lambda j: j * (j + 1)  # noqa: E731  c_j = 2 j (j + 1) / k, physics k = 2
SO3 = lambda j: j * (j + 1) / 4  # noqa: E731  c_l = l (l + 1) / (2 k), k = 2


def _words(vertices, turns=1):
    arr = arrangement(vertices, turns)
    return arr, lasso_words(arr)[0], outer_boundary_word(arr)


# ------------------------------------------------------------------------ pieces
def test_outer_boundary_word_winds_once_around_every_face():
    # the boundary of the drawn region: abelianization -1 on each bounded face
    for verts, turns in [(FIG8, 1), ([(0, 0), (1, 0), (1, 1), (0, 1)], 2)]:
        arr, _, h = _words(verts, turns)
        counts = np.zeros(arr.n_faces, int)
        for a in h:
            counts[abs(a) - 1] += np.sign(a)
        assert np.all(counts == -1)
    lim = Loop.curve("limacon", 64, a=1.0, b=0.5)
    arr = arrangement(lim.vertices, lim.turns)
    assert sorted(arr.winding.tolist()) == [1, 2]
    assert sorted(abs(a) for a in outer_boundary_word(arr)) == [1, 2]


def test_contract_mixed_matches_single_rep_and_clebsch_gordan():
    G = make_group("SU", 2, "physics")
    B = np.asarray(G.basis)
    words, times = [(1, 2, -1, -2), (2, -1)], (0.7, 0.4)
    assert abs(contract_mixed([B, B], words, times)
               - contract_numeric(B, words, times)) < 1e-12
    # E[chi_1(x) chi_1(x^-1)] = sum over 1 (x) 1 = 0 + 1 + 2 of d_s e^{-c_s t/2},
    # c_s = s (s + 1) (Clebsch-Gordan series; H. Georgi 1999, Ch. 3)
    S1 = G.rep("spin:1").algebra_matrix(B)
    t = 0.5
    want = sum((2 * s + 1) * math.exp(-s * (s + 1) * t / 2) for s in (0, 1, 2))
    assert abs(contract_mixed([S1, S1], [(1,), (-1,)], (t,)) - want) < 1e-12
    # normalized, through evaluate_words with one representation per word
    r = evaluate_words(G, [(1,), (-1,)], [t], rep=["spin:1", "spin:1"])
    assert abs(r.value - want / 9) < 1e-12


def test_so3_irreducibles_are_representations_with_published_casimirs():
    G = make_group("SO", 3, "physics")
    W = weight_system(G)
    B = np.asarray(G.basis)
    for l in range(4):
        r = irreducible_representation(G, [l])
        M = r.algebra_matrix(B)
        for a in range(3):
            for b in range(3):
                br = r.algebra_matrix(B[a] @ B[b] - B[b] @ B[a])
                assert np.allclose(M[a] @ M[b] - M[b] @ M[a], br, atol=1e-12)
        # c_l = l (l + 1) / (2 k) (Casimir of so(3) spin l, from memory)
        assert r.casimir == pytest.approx(l * (l + 1) / 4, abs=1e-12)
        assert r.casimir == pytest.approx(float(W.casimir(W.shifted([l]))), abs=1e-12)
    with pytest.raises(ValueError, match="highest weight"):
        irreducible_representation(make_group("Sp", 2, "physics"), [1, 0])


# --------------------------------------------------------------------- the values
@pytest.mark.parametrize("spin", [0.5, 1.0])
def test_su2_figure_eight_on_the_sphere_matches_weyl_integration(spin):
    G = make_group("SU", 2, "physics")
    lam, T = 1.0, 4.0
    rep = "fundamental" if spin == 0.5 else "spin:1"
    r = exact_surface_wilson_loop(G, rep, Loop.polygon(FIG8), coupling=lam, genus=0,
                                  total_area=T)
    assert r.method == "surface-outer-face-expansion"
    assert r.truncation_bound < 1e-14
    arr, w, h = _words(FIG8)
    t = lam * arr.areas
    want = two_face_sphere(w, h, t[0], t[1], lam * T - t.sum(), spin, SU2)
    assert abs(r.value.real - want) < 1e-10
    assert abs(r.value.imag) < 1e-14


def test_su2_nested_lobe_on_the_sphere_matches_weyl_integration():
    # a limacon with its inner loop: faces of winding 1 and 2, word y x y
    G = make_group("SU", 2, "physics")
    lim = Loop.curve("limacon", 64, a=1.0, b=0.5)
    lam, T = 1.0, 4.5
    r = exact_surface_wilson_loop(G, "fundamental", lim, coupling=lam, genus=0,
                                  total_area=T)
    assert r.method == "surface-outer-face-expansion"
    arr, w, h = _words(lim.vertices)
    mu = np.array(r.details["bounded"])  # the curve's exact face areas
    areas, _ = lim.face_areas(arr)
    assert mu == pytest.approx(float(np.sum(areas)), abs=1e-12)
    t = lam * np.asarray(areas)
    want = two_face_sphere(w, h, t[0], t[1], lam * T - t.sum(), 0.5, SU2)
    assert abs(r.value.real - want) < 1e-10


def test_so3_figure_eight_on_the_sphere_matches_weyl_integration():
    G = make_group("SO", 3, "physics")
    lam, T = 2.0, 4.0
    r = exact_surface_wilson_loop(G, "fundamental", Loop.polygon(FIG8), coupling=lam,
                                  genus=0, total_area=T)
    arr, w, h = _words(FIG8)
    t = lam * arr.areas
    want = two_face_sphere(w, h, t[0], t[1], lam * T - t.sum(), 1.0, SO3,
                           integer_spins=True)
    assert abs(r.value.real - want) < 1e-10


def test_large_sphere_recovers_the_plane_and_small_one_differs():
    G = make_group("SU", 2, "physics")
    loop = Loop.polygon(FIG8)
    plane = exact_wilson_loop(G, "fundamental", loop, coupling=1.0).value.real
    big = exact_surface_wilson_loop(G, "fundamental", loop, coupling=1.0, genus=0,
                                    total_area=60.0)
    assert abs(big.value.real - plane) < 1e-8
    small = exact_surface_wilson_loop(G, "fundamental", loop, coupling=1.0, genus=0,
                                      total_area=3.0)
    assert abs(small.value.real - plane) > 1e-3


def test_lattice_figure_eight_and_torus_and_refusals():
    G = make_group("SU", 2, "physics")
    grid = Grid((0.0, 0.0), 1.0, (6, 6))
    # two unit cells touching at a corner, opposite windings
    lat = LatticeLoop.from_moves(grid, "R1 U1 R1 U1 L1 D1 L1 D1")
    poly = Loop.polygon([(0, 0), (1, 0), (1, 1), (2, 1), (2, 2), (1, 2), (1, 1), (0, 1)])
    a = exact_surface_wilson_loop(G, "fundamental", lat, coupling=1.0, genus=1,
                                  total_area=5.0)
    b = exact_surface_wilson_loop(G, "fundamental", poly, coupling=1.0, genus=1,
                                  total_area=5.0)
    assert a.method == b.method == "surface-outer-face-expansion"
    assert abs(a.value - b.value) < 1e-13
    # the torus is not the sphere
    c = exact_surface_wilson_loop(G, "fundamental", poly, coupling=1.0, genus=0,
                                  total_area=5.0)
    assert abs(a.value - c.value) > 1e-4
    # no matrices for the irreducibles of Sp(2): null with the limit named
    r = exact_surface_wilson_loop(make_group("Sp", 2, "physics"), "fundamental",
                                  Loop.polygon(FIG8), coupling=1.0, genus=0, total_area=5.0)
    assert r.value is None and "representation limit" in r.note


@pytest.mark.parametrize("family, n, hw", [("SU", 3, (2, 1, 0)), ("U", 3, (2, 0, -1)),
                                           ("SU", 4, (2, 1, 0, 0)), ("U", 2, (0, -1))])
def test_gelfand_tsetlin_irreducibles(family, n, hw):
    # a representation of gl(n) (commutation relations of the E_ij, E_ji = E_ij^T, so
    # unitary) with the Weyl dimension and the Casimir <lam, lam + 2 rho> of its highest
    # weight (Fulton and Harris 1991, Sections 24.1 and 25.1)
    G = make_group(family, n, "physics")
    W = weight_system(G)
    r = irreducible_representation(G, hw)
    nu = W.shifted(hw)
    assert r.dim == round(float(W.dimension(nu)))
    assert r.casimir == pytest.approx(float(W.casimir(nu)), abs=1e-12)
    B = np.asarray(G.basis)
    M = r.algebra_matrix(B)
    for a in range(len(B)):
        assert np.allclose(M[a].conj().T, -M[a], atol=1e-12)
        for b in range(a):
            br = r.algebra_matrix(B[a] @ B[b] - B[b] @ B[a])
            assert np.allclose(M[a] @ M[b] - M[b] @ M[a], br, atol=1e-11)


@pytest.mark.parametrize("family, n, T", [("U", 2, 4.0), ("SU", 3, 20.0)])
def test_outer_face_route_on_a_simple_loop_matches_the_character_sum(family, n, T):
    # the expansion forced on a simple loop against the Brauer-Klimyk character sum
    # (Migdal 1975; Rusakov 1990): Gelfand-Tsetlin matrices and mixed contraction
    from discretize import AreaForm
    from holonomy.exact._surface import _outer_face_expansion, _shape

    G = make_group(family, n, "physics")
    sq = Loop.polygon([(0, 0), (1, 0), (1, 1), (0, 1)])
    forced = _outer_face_expansion(G, G.rep("fundamental"), _shape(sq, AreaForm()), 1.0, 0, T)
    assert forced.method == "surface-outer-face-expansion"
    direct = exact_surface_wilson_loop(G, "fundamental", sq, coupling=1.0, genus=0,
                                       total_area=T)
    assert direct.method != forced.method
    assert abs(forced.value - direct.value) < 1e-10


def test_outer_face_size_limit_is_a_note():
    G = make_group("SU", 3, "physics")
    r = exact_surface_wilson_loop(G, "fundamental", Loop.polygon(FIG8), coupling=1.0,
                                  genus=0, total_area=2.0)
    assert r.value is None and "size limit" in r.note

"""Irreducibles by highest weight: holonomy.groups._weights.

References for the checks:
- Casimirs: against the values computed from the orthonormal bases by
  ``Group.rep(...).casimir`` (an independent route: matrices, not weights).
- Dimensions: SU(3) ``(p+1)(q+1)(p+q+2)/2`` (H. Georgi, "Lie Algebras in Particle
  Physics", 2nd ed., 1999, Eq. (9.37), from memory); Sp(2) = Spin(5) irreducibles
  1, 4, 5, 10, 14, 16, 20, ... (W. Fulton and J. Harris, "Representation Theory", 1991,
  §16, from memory); U(n): the hook-content formula (R. P. Stanley, "Enumerative
  Combinatorics II", 1999, Corollary 7.21.4).
- Fusion: SU(3) ``(p, q) (x) 3 = (p+1, q) + (p-1, q+1) + (p, q-1)`` (Georgi 1999,
  Section 10.3, Young tableaux, from memory); SU(2) Clebsch-Gordan; the dimension count
  ``sum_b N_{aV}^b d_b = d_a d_V`` (a consequence of characters at the identity).
- Characters: against the traces of the representation matrices of ``Group.rep``.
"""

import itertools

import numpy as np
import pytest

from holonomy.groups import make_group, rep_weights, weight_system

GROUPS = [("U", 1), ("U", 2), ("U", 3), ("U", 4), ("SU", 2), ("SU", 3), ("SU", 4),
          ("SO", 2), ("SO", 3), ("SO", 4), ("SO", 5), ("SO", 6), ("Sp", 1), ("Sp", 2), ("Sp", 3)]


def highest(W, weights):
    """The highest weight: the weight with the largest <mu, rho> (ties broken
    lexicographically), in e-coordinates."""
    e = W.to_e(weights)
    score = e @ W.rho_e + 1e-3 * e @ np.arange(W.m, 0, -1)
    return e[np.argmax(score)]


@pytest.mark.parametrize("family, n", GROUPS)
@pytest.mark.parametrize("metric", ["trace", "physics", 1.7])
def test_casimir_and_dimension_from_highest_weight(family, n, metric):
    G = make_group(family, n, metric)
    W = weight_system(G)
    specs = ["fundamental", "adjoint", "trivial"]
    if G.N == 2 and family in ("SU", "Sp"):
        specs += ["spin:1", "spin:3/2", "spin:3"]
    for spec in specs:
        rep = G.rep(spec)
        if rep.casimir is None or (spec == "adjoint" and not rep.irreducible) or not rep.irreducible:
            continue
        nu = W.shifted(highest(W, rep_weights(G, rep)))
        assert W.casimir(nu) == pytest.approx(rep.casimir, rel=1e-12, abs=1e-14), spec
        assert W.dimension(nu) == pytest.approx(rep.dim, rel=1e-12), spec


def test_su3_dimensions_and_casimirs():
    G = make_group("SU", 3, "physics")
    W = weight_system(G)
    for p, q in itertools.product(range(6), repeat=2):
        nu = W.shifted([p + q, q, 0])
        assert W.dimension(nu) == pytest.approx((p + 1) * (q + 1) * (p + q + 2) / 2)
        # C2 = (p^2 + q^2 + p q + 3 p + 3 q) / 3 with tr(T_a T_b) = delta/2 (Georgi 1999)
        assert W.casimir(nu) == pytest.approx((p * p + q * q + p * q + 3 * p + 3 * q) / 3)


def test_sp2_dimensions():
    # Sp(2) = Spin(5), Dynkin labels (a, b), highest weight a w1 + b w2 = (a + b, b):
    # d = (a+1)(b+1)(a+b+2)(a+2b+3)/6, the sequence 1, 4, 5, 10, 14, 16, 20, 30, 35, ...
    # (Fulton and Harris 1991, §16, from memory)
    W = weight_system(make_group("Sp", 2, "physics"))
    for a, b in itertools.product(range(5), repeat=2):
        want = (a + 1) * (b + 1) * (a + b + 2) * (a + 2 * b + 3) / 6
        assert W.dimension(W.shifted([a + b, b])) == pytest.approx(want)
    dims = sorted({round(float(d)) for d in W.dimension(W.irreducibles(9.0))})
    assert dims[:9] == [1, 4, 5, 10, 14, 16, 20, 30, 35]


@pytest.mark.parametrize("n", [2, 3, 4])
def test_unitary_hook_content(n):
    W = weight_system(make_group("U", n, "trace"))
    for lam in [(2, 1, 0, 0), (3, 3, 1, 0), (4, 2, 2, 1), (1, 1, 1, 1)]:
        lam = lam[:n]
        if sorted(lam, reverse=True) != list(lam):
            continue
        num, den = 1, 1
        for i, row in enumerate(lam):
            for j in range(row):
                num *= n + j - i
                conj = sum(1 for r in lam if r > j)
                den *= (row - j - 1) + (conj - i - 1) + 1
        assert W.dimension(W.shifted(list(lam))) == pytest.approx(num / den)


def test_su3_fusion_with_the_fundamental():
    G = make_group("SU", 3, "physics")
    W = weight_system(G)
    wts = rep_weights(G, "fundamental")
    for p, q in itertools.product(range(4), repeat=2):
        got = W.fusion(W.shifted([p + q, q, 0]), wts)
        want = {}
        for pp, qq in [(p + 1, q), (p - 1, q + 1), (p, q - 1)]:
            if pp >= 0 and qq >= 0:
                want[tuple(W.shifted([pp + qq, qq, 0]))] = 1
        assert got == want


def test_su2_clebsch_gordan():
    G = make_group("SU", 2, "physics")
    W = weight_system(G)
    for j2 in range(6):  # 2j
        for s2, spec in [(1, "spin:1/2"), (2, "spin:1"), (3, "spin:3/2")]:
            got = W.fusion(W.shifted([j2, 0]), rep_weights(G, spec))
            want = {(float(b + 1),): 1 for b in range(abs(j2 - s2), j2 + s2 + 1, 2)}
            assert got == want


@pytest.mark.parametrize("family, n", GROUPS)
def test_fusion_dimension_count(family, n):
    G = make_group(family, n, "physics")
    W = weight_system(G)
    for spec in ("fundamental", "adjoint"):
        wts = rep_weights(G, spec)
        for nu in W.irreducibles(4.5)[:12]:
            fus = W.fusion(nu, wts)
            total = sum(m * W.dimension(np.array(b)) for b, m in fus.items())
            assert total == pytest.approx(W.dimension(nu) * len(wts))
            assert all(m > 0 for m in fus.values())


def test_power_weights_are_a_virtual_character():
    # tr U^2 = chi_(2) - chi_(1,1) for U(n) (Murnaghan-Nakayama; Fulton-Harris 1991,
    # Exercise 4.16, from memory)
    G = make_group("U", 3, "trace")
    W = weight_system(G)
    got = W.fusion(W.shifted([0, 0, 0]), rep_weights(G, "power:2"))
    assert got == {tuple(W.shifted([2, 0, 0])): 1, tuple(W.shifted([1, 1, 0])): -1}


@pytest.mark.parametrize("family, n", [g for g in GROUPS if not (g[0] == "SO" and g[1] in (4, 6))])
def test_characters_against_representation_matrices(family, n):
    G = make_group(family, n, "physics")
    W = weight_system(G)
    U = G.haar(7, rng=np.random.default_rng(3))
    specs = ["fundamental", "adjoint"] + (["spin:3/2"] if G.N == 2 and family in ("SU", "Sp") else [])
    for spec in specs:
        rep = G.rep(spec)
        wts = rep_weights(G, rep)
        # the character of V is the sum of the irreducibles of its fusion with the trivial
        fus = W.fusion(W.rho_x, wts)
        nus = np.array(list(fus), dtype=float)
        coef = np.array(list(fus.values()), dtype=float)
        got = W.character_sum(nus, coef, U)
        np.testing.assert_allclose(got, rep.character(U, normalized=False), atol=1e-10)


def test_character_near_degenerate_eigenvalues():
    # at the identity and next to it the Weyl denominator vanishes; the high-precision
    # branch gives chi(e) = d and a smooth value next to it
    G = make_group("SU", 3, "physics")
    W = weight_system(G)
    nus = W.irreducibles(6.0)
    coef = np.ones(len(nus))
    eye = G.identity((1,))
    assert W.character_sum(nus, coef, eye)[0].real == pytest.approx(W.dimension(nus).sum(), rel=1e-12)
    X = G.algebra(np.full(G.dim, 1e-7))
    near = G.exp(X[None])
    fund = G.rep("fundamental").character(near, normalized=False)
    one = W.character_sum(W.shifted([1, 0, 0])[None], [1.0], near)
    assert one[0] == pytest.approx(fund[0], abs=1e-12)


def test_irreducibles_sorted_and_dominant():
    for family, n in GROUPS:
        W = weight_system(make_group(family, n, "trace"))
        nus = W.irreducibles(5.0)
        c = W.casimir(nus)
        assert np.all(np.diff(c) >= -1e-12)
        assert np.all(W.dimension(nus) >= 1 - 1e-12)
        dom, sign = W.dominant(nus)
        np.testing.assert_array_equal(dom, nus)
        assert np.all(sign == 1)

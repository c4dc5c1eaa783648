"""The outer face's kernel K_g(t, h) = sum_a d_a^(1-2g) chi_a(h) exp(-c_a t/2) as
:class:`holonomy.exact.OuterFaceKernel` evaluates it for the Monte Carlo weights of
closed surfaces (Witten 1991, Commun. Math. Phys. 141, 153; the heat kernel when
g = 0): the rank-one groups by Clenshaw's recurrence (Press et al. 2007, Numerical
Recipes, 3rd ed., Section 5.4) against the series written out here and mpmath's theta
function, and against the Weyl-character route of the package."""

import math

import mpmath
import numpy as np
import pytest

from holonomy.exact import OuterFaceKernel, outer_face_kernel
from holonomy.groups import make_group


def test_u1_is_a_jacobi_theta_function():
    # U(1), k = 1: c_q = q^2, d = 1: K = sum_q e^{-q^2 t/2} e^{i q theta}
    # = theta_3(theta/2, e^{-t/2}) (DLMF 20.2.3)
    G = make_group("U", 1, "trace")
    theta = np.linspace(-3.0, 3.0, 13)
    U = np.exp(1j * theta)[:, None, None]
    for t in (0.05, 0.7, 4.0):
        want = [float(mpmath.jtheta(3, th / 2, math.exp(-t / 2))) for th in theta]
        for g in (0, 2):
            # omitted terms: below 1e-16 of K(t, e) = max K
            assert np.allclose(OuterFaceKernel(G, g, t)(U), want, rtol=1e-12,
                               atol=1e-14 * max(want))


@pytest.mark.parametrize("genus", [0, 1, 2])
def test_su2_series(genus):
    # SU(2), k = 2: spin j has d = 2j + 1, c = j (j + 1), chi = sin(d theta) / sin(theta)
    G = make_group("SU", 2, "physics")
    rng = np.random.default_rng(3)
    U = G.haar(50, rng=rng)
    theta = np.arccos(np.clip(np.trace(U, axis1=1, axis2=2).real / 2, -1, 1))
    for t in (0.1, 2.0):
        want = sum((n + 1) ** (1 - 2 * genus) * math.exp(-(n / 2) * (n / 2 + 1) * t / 2)
                   * np.sin((n + 1) * theta) / np.sin(theta) for n in range(400))
        got = OuterFaceKernel(G, genus, t)(U)
        assert np.allclose(got, want, rtol=1e-11, atol=1e-13 * abs(want).max())
        assert np.array_equal(got, outer_face_kernel(G, genus, t, U))


@pytest.mark.parametrize("family, n, metric", [("U", 1, 2.0), ("SO", 2, "trace"),
                                               ("Sp", 1, "trace"), ("SO", 3, "trace")])
def test_rank_one_recurrence_equals_the_weyl_character_route(family, n, metric):
    G = make_group(family, n, metric)
    U = G.haar(200, rng=np.random.default_rng(5))
    for g in (0, 1):
        K = OuterFaceKernel(G, g, 0.4)
        weyl = K._W.character_sum(K._nus, K._coef, U).real
        assert np.allclose(K(U), weyl, rtol=1e-12, atol=1e-13 * abs(weyl).max())


def test_at_the_identity_no_division():
    # the recurrence needs no Weyl denominator: exact at h = e, where chi_j = 2j + 1
    G = make_group("SU", 2, "physics")
    K = OuterFaceKernel(G, 0, 0.5)
    want = sum((n + 1) ** 2 * math.exp(-(n / 2) * (n / 2 + 1) * 0.25) for n in range(200))
    assert K(np.eye(2)[None]) == pytest.approx([want], rel=1e-13)


@pytest.mark.parametrize("family, n, metric", [("U", 2, "trace"), ("U", 3, "large-n"),
                                               ("SU", 3, "physics"), ("SU", 4, "physics"),
                                               ("U", 4, "trace")])
def test_theta_determinant_equals_the_weyl_character_route(family, n, metric):
    """U(n), SU(n) on the sphere: the determinant of theta sums against the Weyl
    character formula summed over the irreducibles (Weyl 1939, The Classical Groups,
    ch. VII), on Haar elements and near the identity (a small heat-kernel time)."""
    G = make_group(family, n, metric)
    rng = np.random.default_rng(7)
    U = np.concatenate([G.haar(40, rng=rng), G.heat_kernel(np.array([0.05]), 40, rng=rng)[:, 0]])
    for t in (0.4 if G.N < 4 else 1.0, 3.0):  # (the Weyl sums at U(4), t = 0.4: 57535 terms)
        K = OuterFaceKernel(G, 0, t)
        assert K._theta is not None
        weyl = K._W.character_sum(K._nus, K._coef, U).real
        assert np.allclose(K(U), weyl, rtol=1e-9, atol=1e-12 * abs(weyl).max())


def test_theta_determinant_at_the_identity_takes_the_weyl_route():
    # all eigenvalues equal: A_rho = 0; K(e) = sum_a d_a^2 e^{-c_a t/2} = Z
    from holonomy.exact import surface_partition_function

    G = make_group("U", 2, "trace")
    K = OuterFaceKernel(G, 0, 1.5)
    Z = surface_partition_function(G, 0, 1.5, coupling=1.0)
    assert K(np.eye(2, dtype=complex)[None]) == pytest.approx([Z], rel=1e-10)

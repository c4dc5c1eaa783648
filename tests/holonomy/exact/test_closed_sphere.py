"""2D Yang-Mills on the sphere by character sums: holonomy.exact._sphere."""

import mpmath
import numpy as np
import pytest
from scipy import integrate

from holonomy.exact import simple_loop, sphere_partition_function, sphere_wilson_loop


def u1_flux_sectors(t1, t2, k, terms=60, q=1):
    """U(1) on the sphere by the flux (Poisson-resummed) route: the fluxes phi1 ~
    N(0, t1/k), phi2 ~ N(0, t2/k) of the two discs, conditioned on phi1 + phi2 = 2 pi m
    and summed over m with the N(0, T/k) density at 2 pi m; given m,
    phi1 ~ N(2 pi m t1/T, t1 t2/(k T)) (E. Witten 1991, Commun. Math. Phys. 141, abelian
    case, from memory; Poisson summation of the character sum)."""
    T = t1 + t2
    m = np.arange(-terms, terms + 1)
    weight = np.exp(-2 * np.pi**2 * m**2 * k / T)
    return float(np.sum(weight * np.cos(2 * np.pi * q * m * t1 / T)) / np.sum(weight)
                 * np.exp(-q * q * t1 * t2 / (2 * k * T)))


def su2_kernel(theta, t, k, terms=8):
    """SU(2) heat kernel p_t as a class function (density against Haar), by the image
    form on S^3 (J. S. Dowker 1971, Ann. Phys. 62, 361), with tau = t / (4k); up to a
    constant factor independent of theta, which cancels in the ratios below."""
    tau = t / (4 * k)
    m = np.arange(-terms, terms + 1)[:, None]
    x = theta[None, :] + 2 * np.pi * m
    return np.exp(tau) / tau**1.5 * np.sum(x * np.exp(-x * x / (4 * tau)), axis=0) / np.sin(theta)


def su2_weyl_route(t1, t2, k, so3=False, spin=None):
    """W = int p_{t1}(g) p_{t2}(g^{-1}) chi(g) dg / int p_{t1} p_{t2} dg by Weyl
    integration (Haar angle density (2/pi) sin^2 theta; Weyl 1939). The denominator is
    p_T(e) by the semigroup property. SO(3) = SU(2)/{+-1}: p^{SO(3)}(g) = p(g) + p(-g)
    (the angle of -g is pi - theta), with the SU(2) time scaled so that spin j has
    Casimir j(j+1)/(2k) (SU(2) metric 4k), and chi = chi_1 / 3."""
    kk = 4 * k if so3 else k

    def p(theta, t):
        v = su2_kernel(theta, t, kk)
        return v + su2_kernel(np.pi - theta, t, kk) if so3 else v

    def w(theta):
        theta = np.atleast_1d(theta)
        return np.sin(theta) ** 2 * p(theta, t1) * p(theta, t2)

    chi = (lambda th: (1 + 2 * np.cos(2 * th)) / 3) if so3 else np.cos
    if spin is not None:  # chi_j / (2j + 1) = sin((2j+1) theta) / ((2j+1) sin theta)
        dim = int(2 * spin + 1)
        chi = lambda th: np.sin(dim * th) / (dim * np.sin(th))
    num = integrate.quad(lambda th: (w(th) * chi(th))[0], 0, np.pi, epsabs=0, epsrel=1e-13, limit=200)[0]
    den = integrate.quad(lambda th: w(th)[0], 0, np.pi, epsabs=0, epsrel=1e-13, limit=200)[0]
    return num / den


class TestU1:
    @pytest.mark.parametrize("t1, t2, k", [(0.7, 1.9, 1), (3.0, 0.2, 1), (5.0, 5.0, 2), (0.05, 0.3, 1)])
    def test_against_flux_sectors(self, t1, t2, k):
        assert sphere_wilson_loop("U", 1, t1, t2, 1.0, k) == pytest.approx(
            u1_flux_sectors(t1, t2, k), abs=1e-12)

    def test_charge_two_against_flux_sectors(self):
        assert sphere_wilson_loop("U", 1, 0.6, 1.1, 1.0, 1, rep="power:2") == pytest.approx(
            u1_flux_sectors(0.6, 1.1, 1, q=2), abs=1e-12)

    @pytest.mark.parametrize("T, k", [(0.3, 1), (2.0, 1), (6.0, 3)])
    def test_partition_function_theta(self, T, k):
        # Z = sum_q exp(-q^2 T / (2k)) = theta_3(0, e^{-T/(2k)}) (mpmath.jtheta).
        ref = float(mpmath.jtheta(3, 0, mpmath.exp(-T / (2 * k))))
        assert sphere_partition_function("U", 1, T, 1.0, k) == pytest.approx(ref, rel=1e-13)


class TestSU2:
    @pytest.mark.parametrize("t1, t2", [(0.5, 1.5), (2.0, 3.0), (0.2, 8.0), (1.0, 0.05)])
    def test_against_weyl_integration(self, t1, t2):
        assert sphere_wilson_loop("SU", 2, t1, t2, 1.0, 2) == pytest.approx(
            su2_weyl_route(t1, t2, 2), abs=1e-10)

    @pytest.mark.parametrize("spin, so3", [(1, False), (1.5, False), (2, True)])
    def test_higher_spin_against_weyl_integration(self, spin, so3):
        # spin j (x) s Clebsch-Gordan series against the group integral of the character
        t1, t2 = 0.4, 0.9
        fam, n, k = ("SO", 3, 1) if so3 else ("SU", 2, 2)
        rep = f"spin:{spin}"
        ref = su2_weyl_route(t1, t2, k, so3=so3, spin=spin)
        assert sphere_wilson_loop(fam, n, t1, t2, 1.0, k, rep=rep) == pytest.approx(ref, abs=1e-10)

    @pytest.mark.parametrize("t1, t2", [(0.5, 1.5), (3.0, 1.0)])
    def test_so3_against_weyl_integration(self, t1, t2):
        assert sphere_wilson_loop("SO", 3, t1, t2, 1.0, 1) == pytest.approx(
            su2_weyl_route(t1, t2, 1, so3=True), abs=1e-10)

    @pytest.mark.parametrize("T, k", [(0.05, 2), (1.0, 2), (7.0, 1)])
    def test_partition_function_image_form(self, T, k):
        # Z = p_T(e) from the image (Poisson-summed) form of the S^3 heat kernel at the
        # identity, tau = T/(4k) (Dowker 1971, Ann. Phys. 62, 361):
        # p_T(e) = sqrt(pi) e^tau / (4 tau^{3/2}) sum_m (1 - 2 pi^2 m^2 / tau) e^{-pi^2 m^2 / tau}.
        tau = T / (4 * k)
        m = np.arange(-20, 21)
        ref = np.sqrt(np.pi) * np.exp(tau) / (4 * tau**1.5) * np.sum(
            (1 - 2 * np.pi**2 * m**2 / tau) * np.exp(-np.pi**2 * m**2 / tau))
        assert sphere_partition_function("SU", 2, T, 1.0, k) == pytest.approx(ref, rel=1e-12)

    @pytest.mark.parametrize("fam, n, k, c", [("SU", 2, 2, 0.75), ("SU", 2, 1, 1.5),
                                              ("SO", 3, 1, 1.0), ("U", 1, 1, 1.0)])
    def test_plane_limit(self, fam, n, k, c):
        # As the outside area grows the loop sees the plane: exp(-c lambda A / 2)
        # (Levy 2003, Mem. AMS 166; Casimir values from Georgi 1999, from memory). The gap closes like
        # exp(-c lambda A2 / 2): the first terms of the character sums that involve the
        # outside disc are the loop's own representation (or its conjugate) there.
        A, lam = 1.2, 0.8
        gaps = [abs(sphere_wilson_loop(fam, n, A, A2, lam, k) - simple_loop(c, A, lam))
                for A2 in (2.0, 8.0, 20.0, 40.0, 100.0)]
        assert all(g0 > g1 for g0, g1 in zip(gaps, gaps[1:]))
        assert gaps[-1] < 1e-12
        scaled = [g * np.exp(c * lam * A2 / 2) for g, A2 in zip(gaps[2:4], (20.0, 40.0))]
        assert scaled[1] == pytest.approx(scaled[0], rel=0.02)

    def test_symmetry_and_zero_area(self):
        for fam, n, k in [("SU", 2, 2), ("SO", 3, 1), ("U", 1, 1)]:
            a = sphere_wilson_loop(fam, n, 0.4, 2.3, 1.5, k)
            b = sphere_wilson_loop(fam, n, 2.3, 0.4, 1.5, k)
            assert a == pytest.approx(b, rel=1e-12)
            assert sphere_wilson_loop(fam, n, 0.0, 2.0, 1.0, k) == pytest.approx(1.0, abs=1e-13)

    @pytest.mark.parametrize(
        "args, err, match",
        [
            (("SU", 3, 1.0, 1.0, 1.0, 2), ValueError, "support U\\(1\\), SU\\(2\\) and SO\\(3\\)"),
            (("SU", 2, -1.0, 1.0, 1.0, 2), ValueError, "`area_inside` must be >= 0"),
            (("SU", 2, 1.0, np.inf, 1.0, 2), ValueError, "`area_outside` must be finite"),
            (("SU", 2, 0.0, 0.0, 1.0, 2), ValueError, "must be > 0 \\(the total area T\\)"),
            (("SU", 2, 1.0, 1.0, 0.0, 2), ValueError, "`coupling` must be > 0"),
            (("U", 1, 1e-13, 0.0, 1.0, 1), ValueError, "too small: the character sums"),
        ],
    )
    def test_bad_input(self, args, err, match):
        with pytest.raises(err, match=match):
            sphere_wilson_loop(*args)

    @pytest.mark.parametrize("fam, n, rep", [("SO", 3, "spin:1/2"), ("SU", 2, "power:2"),
                                             ("U", 1, "spin:1"), ("U", 1, "power:0")])
    def test_bad_rep(self, fam, n, rep):
        with pytest.raises(ValueError, match="`rep` must be 'fundamental' or"):
            sphere_wilson_loop(fam, n, 1.0, 1.0, 1.0, 1, rep=rep)

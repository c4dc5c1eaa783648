"""Simple loops (any group) and U(1) loops from windings: holonomy.exact._simple."""

import numpy as np
import pytest
from scipy import integrate, stats

from holonomy.exact import simple_loop, u1_loop
from holonomy.groups import make_group


def su2_angle_density_image(theta, tau, terms=8):
    """SU(2) heat-kernel angle density by the Poisson-summed (image) form,
    tau = t / (4k) (J. S. Dowker, "Quantum mechanics on group space and Huygens'
    principle", Ann. Phys. 62 (1971) 361; S^3 heat kernel)."""
    m = np.arange(-terms, terms + 1)
    x = theta + 2 * np.pi * m
    s = np.sum(x * np.exp(-x * x / (4 * tau)))
    return np.exp(tau) * np.sin(theta) / (2 * np.sqrt(np.pi) * tau**1.5) * s


class TestSimpleLoop:
    @pytest.mark.parametrize("t", [0.3, 1.0, 2.5])
    def test_su2_against_heat_kernel_integral(self, t):
        # E[chi(U_t)] / 2 = E[cos theta] under the heat-kernel angle law (image form,
        # Dowker 1971), to be compared with exp(-c t / 2), c = 3/4 for k = 2
        # (SU(2) spin j with k = 2: j(j+1); Georgi 1999, ch. 3).
        tau = t / 8.0
        num = integrate.quad(lambda th: np.cos(th) * su2_angle_density_image(th, tau), 0, np.pi,
                             epsabs=1e-14, epsrel=1e-13)[0]
        den = integrate.quad(lambda th: su2_angle_density_image(th, tau), 0, np.pi,
                             epsabs=1e-14, epsrel=1e-13)[0]
        assert abs(den - 1) < 1e-10
        assert simple_loop(0.75, t, 1.0) == pytest.approx(num, abs=1e-11)
        # the same through the Group and through a Representation
        G = make_group("SU", 2, "physics")
        assert simple_loop(G, t, 1.0) == pytest.approx(num, abs=1e-11)
        assert simple_loop(G.rep("fundamental"), t / 2, 2.0) == pytest.approx(num, abs=1e-11)

    def test_spin1_against_heat_kernel_integral(self):
        # chi_1(theta) / 3 = (1 + 2 cos 2 theta) / 3; c = j(j+1) = 2 with k = 2
        # (Georgi 1999, "Lie Algebras in Particle Physics", ch. 3).
        t, tau = 0.7, 0.7 / 8
        val = integrate.quad(lambda th: (1 + 2 * np.cos(2 * th)) / 3
                             * su2_angle_density_image(th, tau), 0, np.pi, epsabs=1e-14)[0]
        G = make_group("SU", 2, "physics")
        assert simple_loop(G, t, 1.0, rep="spin:1") == pytest.approx(val, abs=1e-11)

    @pytest.mark.slow
    def test_monte_carlo_su3(self):
        # SU(3) fundamental with k = 2 has c = (N^2 - 1) / (2N) = 4/3 (
        # Georgi 1999, ch. 7); Brownian motion at t = 0.8, 4 standard errors.
        G = make_group("SU", 3, "physics")
        U = G.heat_kernel(0.8, 4000, rng=np.random.default_rng(11))
        x = np.trace(U, axis1=-2, axis2=-1).real / 3
        se = x.std(ddof=1) / np.sqrt(x.size)
        assert abs(x.mean() - simple_loop(G, 0.8, 1.0)) < 4 * se
        assert simple_loop(G, 0.8, 1.0) == pytest.approx(np.exp(-(4 / 3) * 0.8 / 2), rel=1e-12)

    def test_array_and_complex_area(self):
        a = np.array([0.0, 1.0, -1.0])
        # formal continuation: exp(-c lambda A / 2) as an entire function of A
        np.testing.assert_allclose(simple_loop(1.0, a, 2.0), np.exp(-a), rtol=1e-15)
        assert simple_loop(1.0, 1j, 2.0) == pytest.approx(np.exp(-1j), rel=1e-15)

    @pytest.mark.parametrize(
        "args, err, match",
        [
            ((1.0, np.inf, 1.0), ValueError, "`area` must be finite"),
            ((1.0, 1.0, 0.0), ValueError, "`coupling` must be > 0"),
            ((1.0, 1.0, "a"), TypeError, "`coupling` must be a real"),
            ((-1.0, 1.0, 1.0), ValueError, "`group_or_casimir` must be a finite Casimir"),
            (("SU", 1.0, 1.0), TypeError, "`group_or_casimir` must be a Casimir"),
            ((1.0, "x", 1.0), TypeError, "`area` must be a real or complex"),
        ],
    )
    def test_bad_input(self, args, err, match):
        with pytest.raises(err, match=match):
            simple_loop(*args)

    def test_class_function_refused(self):
        G = make_group("U", 2)
        with pytest.raises(ValueError, match="`rep` must have a scalar Casimir"):
            simple_loop(G, 1.0, 1.0, rep="power:2")


class TestU1Loop:
    def test_figure_eight_and_double_turn(self):
        # exp(-lambda sum_F n_F^2 |F| / 2) with k = 1 (issue 3, from the independence of
        # faces; Sengupta 1997, Mem. AMS 126): figure-eight lobes 1 and 2 (windings +1,
        # -1) and a loop wound twice around a unit square.
        lam = 0.7
        assert u1_loop([1, -1], [1.0, 2.0], lam) == pytest.approx(np.exp(-lam * 3 / 2), rel=1e-14)
        assert u1_loop([2], [1.0], lam) == pytest.approx(np.exp(-lam * 4 / 2), rel=1e-14)

    @pytest.mark.parametrize("k, charge", [(1, 1), (2, 1), (3.0, 2), ("physics", -1)])
    def test_against_gaussian_integral(self, k, charge):
        # The phase is exp(i q sum_F n_F x_F / sqrt(k)) with x_F ~ N(0, lambda |F|)
        # independent (u(1) generator i / sqrt(k)): integrate cos against the normal
        # density of the sum with scipy.stats.norm.expect.
        n = np.array([2, 1, -1])
        a = np.array([0.5, 1.5, 0.25])
        lam = 0.9
        kk = 2.0 if k == "physics" else float(k)
        var = lam * np.sum(n**2 * a) * charge**2 / kk
        ref = stats.norm(scale=np.sqrt(var)).expect(np.cos, epsabs=1e-14)
        assert u1_loop(n, a, lam, k, charge=charge) == pytest.approx(ref, abs=1e-11)

    @pytest.mark.parametrize(
        "args, kwargs, err, match",
        [
            (([1.5], [1.0], 1.0), {}, ValueError, "`windings` must be integers"),
            (([1, 2], [1.0], 1.0), {}, ValueError, "`areas` must have the shape"),
            (([1], [np.nan], 1.0), {}, ValueError, "`areas` must be finite"),
            (([1], [1.0], -1.0), {}, ValueError, "`coupling` must be > 0"),
            (([1], [1.0], 1.0, 0), {}, ValueError, "`k` must be one of .* or a positive finite number"),
            (([1], [1.0], 1.0), {"charge": 0.5}, TypeError, "`charge` must be an integer"),
        ],
    )
    def test_bad_input(self, args, kwargs, err, match):
        with pytest.raises(err, match=match):
            u1_loop(*args, **kwargs)

"""One-plaquette Wilson-action values: holonomy.exact._wilson_action.

Reference route: Weyl integration over eigenvalue angles. The Haar measure of U(N)
induces on the angles the density |Delta(e^{i theta})|^2 / (N! (2 pi)^N), and that of
SU(N) the same on the torus theta_1 + ... + theta_N = 0 (H. Weyl, "The Classical
Groups", Princeton 1939; Fulton and Harris 1991, section 26, from memory). The integrands are smooth
and periodic, so the trapezoidal rule on a uniform periodic grid converges geometrically
(L. N. Trefethen, J. A. C. Weideman, "The exponentially convergent trapezoidal rule",
SIAM Review 56 (2014) 385-458); we use scipy.integrate.trapezoid for N = 3 and
scipy.integrate.dblquad / quad for N <= 2.
"""

import numpy as np
import pytest
from scipy import integrate, special

from holonomy.exact import wilson_lattice_loop, wilson_plaquette


def vandermonde2(angles):
    z = np.exp(1j * np.asarray(angles))
    out = 1.0
    for i in range(len(angles)):
        for j in range(i + 1, len(angles)):
            out = out * np.abs(z[i] - z[j]) ** 2
    return out


def weyl_u2(b):
    f = lambda a, c, g: g(a, c) * vandermonde2([a, c]) * np.exp(b * (np.cos(a) + np.cos(c)))
    num = integrate.dblquad(lambda a, c: f(a, c, lambda x, y: (np.cos(x) + np.cos(y)) / 2),
                            0, 2 * np.pi, 0, 2 * np.pi, epsabs=1e-13, epsrel=1e-12)[0]
    Z = integrate.dblquad(lambda a, c: f(a, c, lambda x, y: 1.0), 0, 2 * np.pi, 0, 2 * np.pi,
                          epsabs=1e-13, epsrel=1e-12)[0]
    return num / Z, Z / (2 * (2 * np.pi) ** 2)


def periodic_grid(M):
    return np.linspace(0, 2 * np.pi, M + 1)  # trapezoid on the closed grid


def weyl_u3(b, M=64):
    th = periodic_grid(M)
    A, B, C = np.meshgrid(th, th, th, indexing="ij")
    w = vandermonde2([A, B, C]) * np.exp(b * (np.cos(A) + np.cos(B) + np.cos(C)))
    trp = lambda F: integrate.trapezoid(integrate.trapezoid(integrate.trapezoid(
        F, th, axis=2), th, axis=1), th, axis=0)
    Z = trp(w)
    return trp(w * (np.cos(A) + np.cos(B) + np.cos(C)) / 3) / Z, Z / (6 * (2 * np.pi) ** 3)


def weyl_su3(b, M=128):
    th = periodic_grid(M)
    A, B = np.meshgrid(th, th, indexing="ij")
    C = -A - B
    re_tr = np.cos(A) + np.cos(B) + np.cos(C)
    w = vandermonde2([A, B, C]) * np.exp(b * re_tr)
    trp = lambda F: integrate.trapezoid(integrate.trapezoid(F, th, axis=1), th, axis=0)
    return trp(w * re_tr / 3) / trp(w)


class TestPlaquette:
    @pytest.mark.parametrize("s", [0.2, 1.0, 5.0])
    def test_u1_von_mises(self, s):
        # density exp(cos theta / s) (k = 1): E[cos theta] = I1(b)/I0(b), b = 1/s
        # (von Mises mean resultant length; Mardia and Jupp 2000, "Directional
        # Statistics", section 3.5.4, from memory), checked by scipy.integrate.quad.
        b = 1 / s
        num = integrate.quad(lambda x: np.cos(x) * np.exp(b * np.cos(x)), -np.pi, np.pi)[0]
        den = integrate.quad(lambda x: np.exp(b * np.cos(x)), -np.pi, np.pi)[0]
        assert wilson_plaquette("U", 1, s, 1) == pytest.approx(num / den, rel=1e-12)
        assert wilson_plaquette("U", 1, s, 1) == pytest.approx(special.iv(1, b) / special.iv(0, b),
                                                               rel=1e-13)

    @pytest.mark.parametrize("s", [0.25, 1.0, 4.0])
    def test_su2_weyl_density(self, s):
        # SU(2), k = 2: density exp((4/s) cos theta) times the Haar angle density
        # (2/pi) sin^2 theta (Weyl 1939): E[cos theta] = I2(4/s)/I1(4/s) (issue 3; Creutz
        # 1983, "Quarks, Gluons and Lattices", from memory).
        b = 4 / s
        f = lambda x, g: g(x) * np.sin(x) ** 2 * np.exp(b * np.cos(x))
        num = integrate.quad(lambda x: f(x, np.cos), 0, np.pi, epsabs=1e-14)[0]
        den = integrate.quad(lambda x: f(x, lambda y: 1.0), 0, np.pi, epsabs=1e-14)[0]
        assert wilson_plaquette("SU", 2, s, 2) == pytest.approx(num / den, rel=1e-11)
        assert wilson_plaquette("SU", 2, s, 2) == pytest.approx(special.iv(2, b) / special.iv(1, b),
                                                                rel=1e-13)

    @pytest.mark.parametrize("b", [0.3, 1.0, 2.5])
    def test_u2_weyl_integration(self, b):
        w, Z = weyl_u2(b)
        # Z = det[I_{i-j}(b)] (Bars and Green 1979; Gross and Witten 1980)
        M = special.iv(np.subtract.outer(np.arange(2), np.arange(2)), b)
        assert np.linalg.det(M) == pytest.approx(Z, rel=1e-10)
        assert wilson_plaquette("U", 2, b=b) == pytest.approx(w, rel=1e-10)
        assert wilson_plaquette("U", 2, 2 / b, 2) == pytest.approx(w, rel=1e-10)  # b = k / s

    @pytest.mark.parametrize("b", [0.3, 1.5, 3.0])
    def test_u3_weyl_integration(self, b):
        w, Z = weyl_u3(b)
        M = special.iv(np.subtract.outer(np.arange(3), np.arange(3)), b)
        assert np.linalg.det(M) == pytest.approx(Z, rel=1e-10)
        assert wilson_plaquette("U", 3, 3 / b, "large-n") == pytest.approx(w, rel=1e-10)

    @pytest.mark.parametrize("b", [0.5, 2.0, 4.0])
    def test_su3_weyl_integration(self, b):
        # SU(N): Z = sum_q det[I_{q+i-j}(b)] (Brower, Rossi and Tan 1981)
        assert wilson_plaquette("SU", 3, b=b) == pytest.approx(weyl_su3(b), rel=1e-10)

    @pytest.mark.parametrize("b", [0.1, 1.3, 7.0])
    def test_su2_from_the_su_n_sum(self, b):
        # The general SU(N) sum at N = 2 reproduces I2(2b)/I1(2b) (two published forms).
        from holonomy.exact._wilson_action import _su_n_plaquette
        assert _su_n_plaquette(2, b) == pytest.approx(special.iv(2, 2 * b) / special.iv(1, 2 * b),
                                                      rel=1e-12)

    def test_large_b_tends_to_one(self):
        # weak coupling: w stays in (0, 1) and approaches 1 as b -> infinity (the density
        # concentrates at P = Id; common practice, no source)
        for fam, n in [("U", 1), ("SU", 2), ("U", 3), ("SU", 3)]:
            w = wilson_plaquette(fam, n, b=400.0)
            assert 0.99 < w < 1.0

    @pytest.mark.parametrize(
        "args, kwargs, err, match",
        [
            (("SO", 3, 1.0, 1), {}, ValueError, "`family` must be one of"),
            (("U", 1, 0.0, 1), {}, ValueError, "`s` must be > 0"),
            (("U", 1, 1.0), {}, ValueError, "`s` and `k` must both be given"),
            (("U", 1, 1.0, 1), {"b": 2.0}, ValueError, "give either `s`"),
            (("U", 1), {"b": -2.0}, ValueError, "`b` must be > 0"),
            (("SU", 1, 1.0, 1), {}, ValueError, "`n` must be an integer >= 2"),
        ],
    )
    def test_bad_input(self, args, kwargs, err, match):
        with pytest.raises(err, match=match):
            wilson_plaquette(*args, **kwargs)


class TestLatticeLoop:
    @pytest.mark.parametrize("A", [1, 4, 12])
    @pytest.mark.parametrize("s", [0.3, 1.2])
    def test_w_to_the_area(self, A, s):
        # W = w^A (issue 3; Creutz 1983, from memory), w from scipy.special.iv.
        assert wilson_lattice_loop("U", 1, s, 1, cells=A) == pytest.approx(
            (special.iv(1, 1 / s) / special.iv(0, 1 / s)) ** A, rel=1e-12)
        assert wilson_lattice_loop("SU", 2, s, 2, cells=A) == pytest.approx(
            (special.iv(2, 4 / s) / special.iv(1, 4 / s)) ** A, rel=1e-12)

    def test_u1_windings(self):
        # U(1): independent von Mises plaquettes, E[e^{i n theta}] = I_n(b)/I_0(b)
        # (Mardia and Jupp 2000, section 3.5.4, from memory).
        wind = np.array([[2, 1], [-1, 0]])
        b = 1 / 0.4
        ref = (special.iv(2, b) * special.iv(1, b) ** 2) / special.iv(0, b) ** 3
        assert wilson_lattice_loop("U", 1, 0.4, 1, windings=wind) == pytest.approx(ref, rel=1e-12)

    @pytest.mark.parametrize(
        "args, kwargs, err, match",
        [
            (("U", 1, 1.0, 1), {}, ValueError, "give exactly one of `cells`"),
            (("SU", 2, 1.0, 2), {"windings": [[1]]}, ValueError, "`windings` is supported for U"),
            (("U", 1, 1.0, 1), {"cells": -1}, ValueError, "`cells` must be an integer >= 0"),
            (("U", 1, 1.0, 1), {"windings": [0.5]}, ValueError, "`windings` must be integers"),
        ],
    )
    def test_bad_input(self, args, kwargs, err, match):
        with pytest.raises(err, match=match):
            wilson_lattice_loop(*args, **kwargs)

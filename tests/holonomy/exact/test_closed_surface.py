"""Wilson loops on closed surfaces: holonomy.exact._surface.

Three kinds of checks:
1. the character sums written out by hand, label by label, with the dimensions,
   Casimirs and fusion rules of each group taken from the literature (A. A. Migdal 1975,
   Sov. Phys. JETP 42, 413; B. E. Rusakov 1990, Mod. Phys. Lett. A 5, 693, Eq. for the
   simple loop; E. Witten 1991, Commun. Math. Phys. 141, 153, Eq. (2.50), from memory);
2. a second route: the heat kernel in its Poisson-resummed (image) form on the maximal
   torus, integrated against the Weyl density with scipy.integrate (H. Weyl 1939; the
   image form: J. S. Dowker 1971, Ann. Phys. 62, 361 for SU(2); the product of positive
   roots is harmonic, so the Fourier transform of d(x) e^{-beta |x|^2} is
   d(i grad) e^{...}: Fulton and Harris 1991, Section 24.1);
3. limits: T -> infinity gives the plane value exp(-c lambda A / 2) (Levy 2003, Mem.
   AMS 166); the zero-instanton sector of SU(2) is (1 - tau/4) exp(-tau/8).
"""

import itertools
import math

import mpmath
import numpy as np
import pytest
from scipy import integrate

from discretize import Grid, LatticeLoop, Loop
from holonomy.exact import (exact_surface_wilson_loop, outer_face_kernel, simple_loop,
                            zero_instanton_series,
                            surface_abelian_loop, surface_partition_function,
                            surface_simple_loop)
from holonomy.groups import make_group


# ------------------------------------------------------------ independent routes
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


def su2_sum(t1, t2, k, spin=0.5, genus=0, so3=False, terms=400):
    """SU(2) (or SO(3): integer spins only, metric scaled) by hand: irreducibles j with
    d = 2j+1, c = 2 j (j+1) / k (SO(3): j (j+1) / (2k)), Clebsch-Gordan
    j (x) s = |j - s| .. j + s (Migdal 1975; Rusakov 1990)."""
    cas = (lambda j: j * (j + 1) / (2 * k)) if so3 else (lambda j: 2 * j * (j + 1) / k)
    js = [j / 2 for j in range(0, 2 * terms, 2 if so3 else 1)]
    Z = sum((2 * j + 1) ** (2 - 2 * genus) * math.exp(-cas(j) * (t1 + t2) / 2) for j in js)
    num = 0.0
    for j in js:
        b = abs(j - spin)
        while b <= j + spin + 1e-9:
            num += (2 * j + 1) * (2 * b + 1) ** (1 - 2 * genus) * math.exp(
                -cas(j) * t1 / 2 - cas(b) * t2 / 2)
            b += 1
    return num / (Z * (2 * spin + 1))


def su3_sum(t1, t2, k, terms=40):
    """SU(3), fundamental, by hand: (p, q) with d = (p+1)(q+1)(p+q+2)/2, c =
    (p^2 + q^2 + pq + 3p + 3q) / (3k/2) ... written for the metric k:
    c = 2 (p^2 + q^2 + p q + 3 p + 3 q) / (3 k), and (p, q) (x) 3 = (p+1, q) + (p-1, q+1) +
    (p, q-1) (Georgi 1999, Lie Algebras in Particle Physics, Ch. 9-10, from memory)."""
    d = lambda p, q: (p + 1) * (q + 1) * (p + q + 2) / 2  # noqa: E731
    c = lambda p, q: 2 * (p * p + q * q + p * q + 3 * p + 3 * q) / (3 * k)  # noqa: E731
    Z = num = 0.0
    for p, q in itertools.product(range(terms), repeat=2):
        Z += d(p, q) ** 2 * math.exp(-c(p, q) * (t1 + t2) / 2)
        for pp, qq in [(p + 1, q), (p - 1, q + 1), (p, q - 1)]:
            if pp >= 0 and qq >= 0:
                num += d(p, q) * d(pp, qq) * math.exp(-c(p, q) * t1 / 2 - c(pp, qq) * t2 / 2)
    return num / (3 * Z)


def u2_sum(t1, t2, k, terms=30):
    """U(2), fundamental, by hand: l1 >= l2 integers, d = l1 - l2 + 1,
    c = (l1^2 + l2^2 + l1 - l2) / k, (l1, l2) (x) 2 = (l1+1, l2) + (l1, l2+1) (Pieri)."""
    Z = num = 0.0
    for l1 in range(-terms, terms + 1):
        for l2 in range(-terms, l1 + 1):
            d = l1 - l2 + 1
            c = (l1 * l1 + l2 * l2 + l1 - l2) / k
            Z += d * d * math.exp(-c * (t1 + t2) / 2)
            for m1, m2 in [(l1 + 1, l2), (l1, l2 + 1)]:
                if m1 >= m2:
                    cb = (m1 * m1 + m2 * m2 + m1 - m2) / k
                    num += d * (m1 - m2 + 1) * math.exp(-c * t1 / 2 - cb * t2 / 2)
    return num / (2 * Z)


def sp2_sum(t1, t2, k, terms=30):
    """Sp(2), fundamental (minuscule: lam (x) 4 = sum of lam +- e_i that are dominant),
    lam = (l1 >= l2 >= 0), rho = (2, 1), d = prod <nu, alpha>/<rho, alpha> over
    e1 - e2, e1 + e2, 2 e1, 2 e2, c = <lam, lam + 2 rho> / (2k)."""
    def d(a, b):
        n1, n2 = a + 2, b + 1
        return (n1 - n2) * (n1 + n2) * n1 * n2 / (1 * 3 * 2 * 1)

    def c(a, b):
        return (a * a + b * b + 4 * a + 2 * b) / (2 * k)
    Z = num = 0.0
    for a in range(terms):
        for b in range(a + 1):
            Z += d(a, b) ** 2 * math.exp(-c(a, b) * (t1 + t2) / 2)
            for x, y in [(a + 1, b), (a - 1, b), (a, b + 1), (a, b - 1)]:
                if x >= y >= 0:
                    num += d(a, b) * d(x, y) * math.exp(-c(a, b) * t1 / 2 - c(x, y) * t2 / 2)
    return num / (4 * Z)


def image_kernel(theta, t, s, roots, images, sign=None):
    """Heat kernel times the Weyl denominator, B_t(theta) = sum_m sign_m
    prod_alpha <alpha, theta + 2 pi m> exp(-|theta + 2 pi m|^2 / (2 s t)): the Poisson
    resummation of sum_nu d(nu) e^{i <nu, theta>} e^{-s |nu|^2 t / 2} (constants dropped).
    theta (P, dim), images (I, dim)."""
    x = theta[:, None, :] + 2 * np.pi * images[None, :, :]
    poly = np.prod(x @ roots.T, axis=-1)
    w = np.exp(-np.einsum("pij,pij->pi", x, x) / (2 * s * t))
    if sign is not None:
        w = w * sign
    return np.sum(poly * w, axis=1)


def weyl_route(t1, t2, s, roots, images, chi, sign=None, restrict=None, points=96):
    """W = int B_{t1} B_{t2} chi / int B_{t1} B_{t2} over the torus [-pi, pi)^2 (rank 2):
    the Haar density |A_rho|^2 cancels the two kernels' Weyl denominators (Weyl
    integration). The integrand is periodic and analytic, so the trapezoidal rule
    (scipy.integrate.trapezoid) converges geometrically (L. N. Trefethen and J. A. C.
    Weideman, SIAM Review 56 (2014) 385, Theorem 3.2)."""
    ax = np.linspace(-np.pi, np.pi, points + 1)
    A, B = np.meshgrid(ax, ax, indexing="ij")
    th = np.column_stack([A.ravel(), B.ravel()])
    if restrict is not None:
        th = restrict(th)
    f = image_kernel(th, t1, s, roots, images, sign) * image_kernel(th, t2, s, roots, images, sign)
    f = f.reshape(A.shape)
    num = integrate.trapezoid(integrate.trapezoid(f * chi(th).reshape(A.shape), ax), ax)
    den = integrate.trapezoid(integrate.trapezoid(f, ax), ax)
    return num / den


def images(r, M=3):
    return np.array(list(itertools.product(range(-M, M + 1), repeat=r)), dtype=float)


# ---------------------------------------------------------------------- tests
ROUTES = ["characters", "dual"]


class TestAgainstHandWrittenSums:
    @pytest.mark.parametrize("route", ROUTES)
    @pytest.mark.parametrize("spin", [0.5, 1, 1.5])
    @pytest.mark.parametrize("t1, t2", [(0.5, 1.5), (2.0, 3.0), (0.2, 8.0)])
    def test_su2_spins(self, route, spin, t1, t2):
        G = make_group("SU", 2, "physics")
        got = surface_simple_loop(G, f"spin:{spin}", t1, t1 + t2, coupling=1.0, route=route)
        assert got.value.real == pytest.approx(su2_sum(t1, t2, 2, spin), abs=1e-12)
        assert got.value.imag == pytest.approx(0, abs=1e-14)
        assert got.truncation_bound < 1e-14

    @pytest.mark.parametrize("route", ROUTES)
    def test_so3(self, route):
        G = make_group("SO", 3, "trace")
        got = surface_simple_loop(G, "fundamental", 0.7, 2.6, coupling=1.3, route=route)
        assert got.value.real == pytest.approx(su2_sum(0.91, 1.3 * 1.9, 1, 1, so3=True), abs=1e-12)

    @pytest.mark.parametrize("route", ROUTES)
    def test_su3_fundamental(self, route):
        got = surface_simple_loop(make_group("SU", 3, "physics"), "fundamental", 0.8, 2.0,
                                  coupling=1.0, route=route)
        assert got.value.real == pytest.approx(su3_sum(0.8, 1.2, 2), abs=1e-12)

    @pytest.mark.parametrize("route", ROUTES)
    def test_u2_fundamental(self, route):
        got = surface_simple_loop(make_group("U", 2, "trace"), "fundamental", 0.6, 1.6,
                                  coupling=1.0, route=route)
        assert got.value.real == pytest.approx(u2_sum(0.6, 1.0, 1), abs=1e-12)

    @pytest.mark.parametrize("route", ROUTES)
    def test_sp2_fundamental(self, route):
        got = surface_simple_loop(make_group("Sp", 2, "physics"), "fundamental", 1.0, 3.0,
                                  coupling=1.0, route=route)
        assert got.value.real == pytest.approx(sp2_sum(1.0, 2.0, 2), abs=1e-12)

    @pytest.mark.parametrize("genus", [1, 2])
    @pytest.mark.parametrize("spin", [0.5, 1])
    def test_su2_torus_and_genus_two(self, genus, spin):
        G = make_group("SU", 2, "physics")
        got = surface_simple_loop(G, f"spin:{spin}", 0.9, 2.5, coupling=1.0, genus=genus)
        assert got.method == "surface-character-sum"
        assert got.zero_instanton is None
        assert got.value.real == pytest.approx(su2_sum(0.9, 1.6, 2, spin, genus=genus), abs=1e-12)

    def test_partition_functions(self):
        # U(1): theta_3(0, e^{-T/(2k)}) for every genus (mpmath.jtheta); SU(2) genus 1:
        # sum_p e^{-(p^2 - 1) T / (4k)}; SU(2) genus 0: the S^3 image form (Dowker 1971)
        for g in (0, 1, 3):
            ref = float(mpmath.jtheta(3, 0, mpmath.exp(-2.0 / 2)))
            assert surface_partition_function(make_group("U", 1, 1), g, 2.0, coupling=1.0) == \
                pytest.approx(ref, rel=1e-14)
        G = make_group("SU", 2, "physics")
        ref = sum(math.exp(-(p * p - 1) * 3.0 / 8) for p in range(1, 200))
        assert surface_partition_function(G, 1, 3.0, coupling=1.0) == pytest.approx(ref, rel=1e-14)
        for T in (0.05, 1.0, 7.0):
            tau = T / 8
            m = np.arange(-20, 21)
            ref = np.sqrt(np.pi) * np.exp(tau) / (4 * tau**1.5) * np.sum(
                (1 - 2 * np.pi**2 * m**2 / tau) * np.exp(-np.pi**2 * m**2 / tau))
            for route in ROUTES:
                assert surface_partition_function(G, 0, T, coupling=1.0, route=route) == \
                    pytest.approx(ref, rel=1e-12)


class TestWeylIntegration:
    """The second route: Poisson-resummed kernels integrated over the maximal torus."""

    @pytest.mark.parametrize("spin", [0.5, 1, 1.5])
    def test_su2(self, spin):
        # rank 1: theta in [0, pi], images 2 pi m on the angle, B_t = sum (theta + 2 pi m)
        # e^{-(theta + 2 pi m)^2 / (2 s t)} with s = 1/(4k) in the coordinate theta
        # (c = (p^2 - 1) / (2k) = s ((p/2)... written for the angle of e^{i theta}):
        # the character sin(p theta)/ sin(theta) has frequencies p, so s = 1 / (2k)
        t1, t2, k = 0.4, 0.9, 2
        s = 1 / (2 * k)
        ms = np.arange(-6, 7, dtype=float)

        def B(th, t):
            x = th + 2 * np.pi * ms
            return np.sum(x * np.exp(-x * x / (2 * s * t)))
        p = int(2 * spin + 1)
        chi = lambda th: np.sin(p * th) / (p * np.sin(th))  # noqa: E731
        f = lambda th, c: B(th, t1) * B(th, t2) * (chi(th) if c else 1.0)  # noqa: E731
        num = integrate.quad(lambda th: f(th, True), 0, np.pi, epsabs=0, epsrel=1e-13, limit=200)[0]
        den = integrate.quad(lambda th: f(th, False), 0, np.pi, epsabs=0, epsrel=1e-13, limit=200)[0]
        got = surface_simple_loop(make_group("SU", 2, "physics"), f"spin:{spin}", t1, t1 + t2,
                                  coupling=1.0)
        assert got.value.real == pytest.approx(num / den, abs=1e-10)

    def test_so3(self):
        # SO(3): rotation angle phi in [0, pi], weights integers, s = 1/(2k)
        t1, t2, k = 0.5, 1.5, 1
        s = 1 / (2 * k)
        ms = np.arange(-6, 7, dtype=float)

        def B(ph, t):
            x = ph + 2 * np.pi * ms
            return np.sum(x * np.exp(-x * x / (2 * s * t)) * np.exp(-1j * np.pi * 2 * ms * 0.5).real)
        chi = lambda ph: (1 + 2 * np.cos(ph)) / 3  # noqa: E731
        f = lambda ph, c: B(ph, t1) * B(ph, t2) * (chi(ph) if c else 1.0)  # noqa: E731
        num = integrate.quad(lambda ph: f(ph, True), 0, np.pi, epsabs=0, epsrel=1e-13, limit=200)[0]
        den = integrate.quad(lambda ph: f(ph, False), 0, np.pi, epsabs=0, epsrel=1e-13, limit=200)[0]
        got = surface_simple_loop(make_group("SO", 3, "trace"), "fundamental", t1, t1 + t2, coupling=1.0)
        assert got.value.real == pytest.approx(num / den, abs=1e-10)

    def test_u2(self):
        # U(2), k = 1: s = 1, roots e1 - e2, images Z^2 with sign (-1)^(m1 + m2) (rho half-integer)
        t1, t2 = 0.6, 1.0
        im = images(2)
        sign = (-1.0) ** im.sum(axis=1)
        ref = weyl_route(t1, t2, 1.0, np.array([[1.0, -1.0]]), im,
                         lambda th: np.cos(th).sum(axis=-1) / 2, sign=sign)
        got = surface_simple_loop(make_group("U", 2, "trace"), "fundamental", t1, t1 + t2, coupling=1.0)
        assert got.value.real == pytest.approx(ref, abs=1e-10)

    def test_su3(self):
        # SU(3), k = 2: s = 1/2 on the traceless angles (a, b, -a-b); images 2 pi m with
        # m in Z^3, sum m = 0
        t1, t2 = 0.8, 1.2
        im2 = images(2, 3)
        im = np.column_stack([im2, -im2.sum(axis=1)])
        roots = np.array([[1.0, -1, 0], [1, 0, -1], [0, 1, -1]])
        # the torus {(a, b, -a-b)} has the metric of the plane it spans; the measure's
        # constant factor cancels in the ratio
        ref = weyl_route(t1, t2, 0.5, roots, im,
                         lambda th: np.cos(th).sum(axis=-1) / 3,
                         restrict=lambda ab: np.column_stack([ab, -ab.sum(axis=1)]))
        got = surface_simple_loop(make_group("SU", 3, "physics"), "fundamental", t1, t1 + t2, coupling=1.0)
        assert got.value.real == pytest.approx(ref, abs=1e-10)

    def test_sp2(self):
        # Sp(2), k = 2: s = 1/(2k) = 1/4, roots e1 -+ e2, 2 e1, 2 e2, images Z^2
        t1, t2 = 1.0, 2.0
        roots = np.array([[1.0, -1], [1, 1], [2, 0], [0, 2]])
        ref = weyl_route(t1, t2, 0.25, roots, images(2),
                         lambda th: np.cos(th).sum(axis=-1) / 2)
        got = surface_simple_loop(make_group("Sp", 2, "physics"), "fundamental", t1, t1 + t2, coupling=1.0)
        assert got.value.real == pytest.approx(ref, abs=1e-10)


class TestZeroInstanton:
    @pytest.mark.parametrize("a, T, lam", [(1.0, 2.0, 1.0), (0.3, 5.0, 2.0), (2.0, 2.5, 0.7)])
    def test_su2_closed_form(self, a, T, lam):
        # (1 - tau/4) exp(-tau/8), tau = lambda a (T - a) / T (SU(2), k = 2)
        tau = lam * a * (T - a) / T
        got = surface_simple_loop(make_group("SU", 2, "physics"), "fundamental", a, T, coupling=lam)
        assert got.zero_instanton.real == pytest.approx((1 - tau / 4) * math.exp(-tau / 8), abs=1e-13)

    def test_su2_difference_exponentially_small(self):
        # the other sectors are O(exp(-pi^2 m^2 / beta)) with beta = lambda T / 8 for SU(2),
        # k = 2 (Poisson summation of sum_p p^2 e^{-beta p^2}, p = 2j + 1): the log of the
        # difference against 1/lambda has slope about -8 pi^2 / T
        G = make_group("SU", 2, "physics")
        a, T = 1.0, 4.0
        lams = np.array([2.0, 1.5, 1.2, 1.0])
        diffs = [abs(r.value.real - r.zero_instanton.real) for r in (
            surface_simple_loop(G, "fundamental", a, T, coupling=lam, route="dual") for lam in lams)]
        slope = np.polyfit(1 / lams, np.log(diffs), 1)[0]
        assert slope == pytest.approx(-8 * np.pi**2 / T, rel=0.15)
        assert diffs[-1] < 1e-6

    def test_u1_flux_sectors(self):
        for t1, t2, k in [(0.7, 1.9, 1), (3.0, 0.2, 1), (5.0, 5.0, 2), (0.05, 0.3, 1)]:
            got = surface_simple_loop(make_group("U", 1, k), "fundamental", t1, t1 + t2, coupling=1.0)
            assert got.value.real == pytest.approx(u1_flux_sectors(t1, t2, k), abs=1e-12)
            assert got.zero_instanton.real == pytest.approx(
                math.exp(-t1 * t2 / (2 * k * (t1 + t2))), abs=1e-14)

    def test_un_zero_sector_tends_to_value(self):
        # U(3), k = 1: the other sectors are O(exp(-pi^2 / beta)), beta = lambda T / 2
        G = make_group("U", 3, "trace")
        lams = np.array([0.6, 0.4, 0.3])
        gaps = []
        for lam in lams:
            r = surface_simple_loop(G, "fundamental", 0.5, 2.0, coupling=lam)
            gaps.append(abs(r.value - r.zero_instanton))
        slope = np.polyfit(1 / lams, np.log(gaps), 1)[0]
        assert slope == pytest.approx(-np.pi**2, rel=0.15)
        assert gaps[-1] < 1e-10


class TestLimitsAndLoops:
    @pytest.mark.parametrize("fam, n, metric, rep", [
        ("SU", 2, "physics", "fundamental"), ("SU", 2, "physics", "spin:3/2"),
        ("SO", 3, "trace", "fundamental"), ("U", 1, "trace", "fundamental"),
        ("SU", 3, "physics", "adjoint"), ("U", 2, "trace", "fundamental"),
        ("Sp", 2, "physics", "fundamental"), ("SO", 4, "trace", "fundamental"),
        ("SO", 5, "trace", "fundamental"), ("U", 4, "large-n", "fundamental"),
        ("SU", 4, "physics", "fundamental")])
    @pytest.mark.parametrize("T", [200.0, 1e4, 1e6])
    @pytest.mark.filterwarnings("error")
    def test_plane_limit(self, fam, n, metric, rep, T):
        # T -> infinity: exp(-c lambda A / 2) (Levy 2003); at T = 1e4 and 1e6 the far
        # side's exponentials once overflowed to NaN
        G = make_group(fam, n, metric)
        c = G.rep(rep).casimir
        A, lam = 1.2, 0.8
        got = surface_simple_loop(G, rep, A, T, coupling=lam)
        assert got.value.real == pytest.approx(simple_loop(c, A, lam), abs=1e-8)

    def test_symmetry_and_zero_area(self):
        for fam, n, k in [("SU", 2, 2), ("SO", 3, 1), ("U", 1, 1), ("SU", 3, 2)]:
            G = make_group(fam, n, k)
            a = surface_simple_loop(G, "fundamental", 0.4, 2.7, coupling=1.5).value
            b = surface_simple_loop(G, "fundamental", 2.3, 2.7, coupling=1.5).value
            assert a == pytest.approx(b, rel=1e-12)
            assert surface_simple_loop(G, "fundamental", 0.0, 2.0, coupling=1.0).value == \
                pytest.approx(1.0, abs=1e-13)

    def test_power_and_turns_share_the_adams_route(self):
        G = make_group("SU", 2, "physics")
        a = surface_simple_loop(G, "power:2", 0.5, 1.7, coupling=1.0).value
        b = surface_simple_loop(G, "fundamental", 0.5, 1.7, coupling=1.0, turns=2).value
        # tr U^2 = chi_1 - chi_0 for SU(2): normalized by 2 (Adams operation)
        c = (3 * surface_simple_loop(G, "spin:1", 0.5, 1.7, coupling=1.0).value - 1) / 2
        assert a == pytest.approx(b, abs=1e-14)
        assert a == pytest.approx(c, abs=1e-12)

    def test_loops_through_the_public_function(self):
        grid = Grid((0.0, 0.0), 0.5, (8, 8))
        loop = LatticeLoop.from_moves(grid, "R4 U2 L4 D2")  # area 2
        G = make_group("SU", 2, "physics")
        got = exact_surface_wilson_loop(G, "fundamental", loop, coupling=1.0, genus=0, total_area=5.0)
        assert got.method == "surface-character-sum"
        assert got.value.real == pytest.approx(su2_sum(2.0, 3.0, 2), abs=1e-12)
        poly = Loop.polygon([(0, 0), (2, 0), (2, 1), (0, 1)])
        got_t = exact_surface_wilson_loop(G, "fundamental", poly, coupling=1.0, genus=1, total_area=5.0)
        assert got_t.value.real == pytest.approx(su2_sum(2.0, 3.0, 2, genus=1), abs=1e-12)
        # a figure-eight: SU(2) by the outer face's expansion (tested against a Weyl
        # integration in test_surface_outer_face.py); Sp(2) has no route, a note says why
        eight = Loop.polygon([(0, 0), (1, 1), (2, 0), (2, 1), (1, 0), (0, 1)])
        got = exact_surface_wilson_loop(G, "fundamental", eight, coupling=1.0, genus=0,
                                        total_area=5.0)
        assert got.method == "surface-outer-face-expansion"
        none = exact_surface_wilson_loop(make_group("Sp", 2, "physics"), "fundamental", eight,
                                         coupling=1.0, genus=0, total_area=5.0)
        assert none.value is None and "non-simple" in none.note

    def test_u1_any_loop(self):
        # figure-eight and a doubly wound loop in U(1): the direct sum over the charge j of
        # the outer face, exp(-sum_F (j + n_F)^2 t_F / (2k)) (Witten 1991, abelian case)
        G = make_group("U", 1, 1)
        eight = Loop.polygon([(0, 0), (1, 1), (2, 0), (2, 1), (1, 0), (0, 1)])
        for T in (1.5, 4.0):
            got = exact_surface_wilson_loop(G, "fundamental", eight, coupling=1.0, genus=2, total_area=T)
            j = np.arange(-60, 61)
            num = np.sum(np.exp(-((j + 1) ** 2 * 0.5 + (j - 1) ** 2 * 0.5 + j**2 * (T - 1)) / 2))
            ref = num / np.sum(np.exp(-j**2 * T / 2))
            assert got.method == "surface-abelian"
            assert got.value.real == pytest.approx(ref, abs=1e-13)
        r = surface_abelian_loop(G, "fundamental", [2], [0.8], 3.0)
        assert r.value.real == pytest.approx(u1_flux_sectors(0.8, 2.2, 1, q=2), abs=1e-12)


class TestOuterFaceKernel:
    @pytest.mark.parametrize("fam, n, metric", [
        ("U", 1, 1), ("SU", 2, "physics"), ("SO", 3, 1), ("U", 2, 1), ("SU", 3, "physics"),
        pytest.param("U", 3, 1, marks=pytest.mark.slow),
        pytest.param("SU", 4, "physics", marks=pytest.mark.slow),
        pytest.param("U", 4, "large-n", marks=pytest.mark.slow)])
    @pytest.mark.parametrize("genus", [0, 1])
    def test_kernel_character_moments(self, fam, n, metric, genus):
        # Haar orthogonality of characters (Weyl 1939): E[K_g(t, h)] = 1 and
        # E[K_g(t, h) conj(chi_V(h))] = d_V^(1-2g) exp(-c_V t / 2), within 4 se
        G = make_group(fam, n, metric)
        h = G.haar(8000, rng=np.random.default_rng(11))
        t = 1.5
        K = outer_face_kernel(G, genus, t, h)
        rep = G.rep("fundamental")
        kc = K * np.conj(rep.character(h, normalized=False))
        want = rep.dim ** (1 - 2 * genus) * math.exp(-rep.casimir * t / 2)
        se = lambda v: np.std(v) / np.sqrt(len(v))  # noqa: E731
        assert abs(np.mean(K) - 1.0) < 4 * se(K)
        assert abs(np.mean(kc.real) - want) < 4 * se(kc.real)
        assert abs(np.mean(kc.imag)) <= 4 * se(kc.imag)

    def test_heat_kernel_against_image_form(self):
        # SU(2), g = 0: p_t(theta) against the S^3 image form (Dowker 1971): with
        # tau = t/(4k), p_t = e^tau sqrt(pi) / (4 tau^{3/2} sin theta)
        #   * sum_m (theta + 2 pi m) e^{-(theta + 2 pi m)^2 / (4 tau)}  (Haar mass 1;
        # the constant by Poisson summation of (1/2) sum_p p sin(p theta) e^{-tau p^2})
        G = make_group("SU", 2, "physics")
        th = np.array([0.3, 1.1, 2.0, 3.0])
        U = np.zeros((4, 2, 2), complex)
        U[:, 0, 0], U[:, 1, 1] = np.exp(1j * th), np.exp(-1j * th)
        t = 0.9
        tau = t / 8
        m = np.arange(-10, 11)[:, None]
        x = th[None, :] + 2 * np.pi * m
        ref = np.exp(tau) * np.sqrt(np.pi) / (4 * tau**1.5 * np.sin(th)) * np.sum(
            x * np.exp(-x * x / (4 * tau)), axis=0)
        # the truncation is relative to K(t, e): absolute error ~1e-16 of the peak
        peak = outer_face_kernel(G, 0, t, G.identity((1,)))[0]
        np.testing.assert_allclose(outer_face_kernel(G, 0, t, U), ref, rtol=1e-11, atol=1e-14 * peak)


class TestBadInput:
    @pytest.mark.parametrize("kwargs, match", [
        (dict(genus=-1), "`genus` must be an integer >= 0"),
        (dict(genus=1.5), "`genus` must be an integer >= 0"),
        (dict(total_area=0.5), "`total_area` must be >= the loop's inside measure"),
        (dict(coupling=0.0), "`coupling` must be a finite number > 0"),
        (dict(route="fast"), "`route` must be one of"),
        (dict(genus=1, route="dual"), "`route` 'dual' needs genus 0"),
    ])
    def test_messages(self, kwargs, match):
        args = dict(coupling=1.0, genus=0, total_area=2.0)
        args.update(kwargs)
        with pytest.raises(ValueError, match=match):
            surface_simple_loop(make_group("SU", 2, "physics"), "fundamental", 1.0, **args)

    def test_drawn_region_larger_than_surface(self):
        loop = Loop.polygon([(0, 0), (2, 0), (2, 1), (0, 1)])
        with pytest.raises(ValueError, match="larger than the drawn measure"):
            exact_surface_wilson_loop(make_group("SU", 2, "physics"), "fundamental", loop,
                                      coupling=1.0, genus=0, total_area=2.0)

    def test_too_many_terms(self):
        with pytest.raises(ValueError, match="irreducibles"):
            surface_simple_loop(make_group("U", 4, "trace"), "fundamental", 1e-6, 2e-6,
                                coupling=1.0, genus=2)


class TestZeroInstantonSeries:
    def test_su2_against_closed_form(self):
        # Taylor coefficients of (1 - tau/4) e^{-tau/8}, tau = lambda a (T - a)/T (sympy)
        import sympy as sp
        a, T = 1.0, 3.0
        x = sp.symbols("x")
        tau = sp.Rational(2, 3) * x
        ref = sp.series((1 - tau / 4) * sp.exp(-tau / 8), x, 0, 6).removeO()
        got = zero_instanton_series(make_group("SU", 2, "physics"), "fundamental", a, T, 5)
        np.testing.assert_allclose(got, [float(ref.coeff(x, m)) for m in range(6)], atol=1e-12)

    def test_two_orders_of_limits(self):
        # T -> infinity: 5/128 at order 2 (the Gaussian matrix E[tr exp X]/2), against the
        # plane's 9/128 = (3/8)^2 / 2 (Taylor coefficient of exp(-3 lambda A / 8))
        G = make_group("SU", 2, "physics")
        c = [zero_instanton_series(G, "fundamental", 1.0, T, 2)[2] for T in (1e3, 1e4, 1e5)]
        assert c[-1] == pytest.approx(5 / 128, abs=1e-5)
        assert abs(c[0] - 5 / 128) > abs(c[1] - 5 / 128) > abs(c[2] - 5 / 128)

    @pytest.mark.parametrize("fam, n", [("SU", 3), ("U", 2), ("Sp", 2), ("SO", 3)])
    def test_series_matches_the_zero_sector(self, fam, n):
        # the truncated series differs from the zero sector by O(lambda^(M+1))
        G = make_group(fam, n, "physics")
        c = zero_instanton_series(G, "fundamental", 0.7, 2.0, 3)
        assert c[0] == pytest.approx(1.0, abs=1e-12)
        errs = []
        for lam in (0.1, 0.05):
            w0 = surface_simple_loop(G, "fundamental", 0.7, 2.0, coupling=lam).zero_instanton.real
            errs.append(abs(w0 - np.polyval(c[::-1], lam)))
        assert errs[1] < errs[0] / 10  # fourth order: a factor 16

"""Wilson-action exact values of any lattice loop (holonomy.exact.wilson_lattice_exact),
checked by quadrature of the one-plaquette law."""

import numpy as np
import pytest
from scipy import integrate

from discretize import Grid, LatticeLoop
from holonomy.exact import ExactRouteError, wilson_lattice_exact
from holonomy.groups import make_group

GRID = Grid((0.0, 0.0), 0.5, (10, 10))
SU2 = make_group("SU", 2, "physics")
U1 = make_group("U", 1, "trace")


def lattice(moves, start=(2, 2), turns=1):
    return LatticeLoop.from_moves(GRID, moves, start=start, turns=turns)


def su2_plaquette(j, s, k=2.0):
    # E[chi_j(P)] / (2j + 1) for the density exp((k / s) Re tr P) against Haar measure;
    # the class angle theta has the Weyl density (2 / pi) sin^2 theta on [0, pi] and
    # chi_j = sin((2j + 1) theta) / sin theta (Weyl integration formula; Hall 2015,
    # sec. 11.6), integrated by quadrature
    b = k / s

    def dens(th):
        return np.exp(2 * b * (np.cos(th) - 1)) * np.sin(th) ** 2

    def num(th):
        return dens(th) * np.sin((2 * j + 1) * th) / np.sin(th) / (2 * j + 1)

    z = integrate.quad(dens, 0, np.pi, epsabs=0, epsrel=1e-13, limit=200)[0]
    return integrate.quad(num, 0, np.pi, epsabs=0, epsrel=1e-13, limit=200)[0] / z


def u1_plaquette(q, s, k=1.0):
    # E[cos(q theta)] for the von Mises density exp((k / s) cos theta), by quadrature
    b = k / s
    z = integrate.quad(lambda th: np.exp(b * (np.cos(th) - 1)), -np.pi, np.pi, epsrel=1e-13)[0]
    return integrate.quad(lambda th: np.exp(b * (np.cos(th) - 1)) * np.cos(q * th),
                          -np.pi, np.pi, epsrel=1e-13)[0] / z


LAM = 2.0
S = LAM * 0.25  # one cell: lambda * h^2


class TestSU2:
    @pytest.mark.parametrize("j", [0.5, 1, 1.5])
    def test_simple_loop_spin_j(self, j):
        # independent plaquettes on the plane: w_j^A (Gross and Witten 1980)
        loop = lattice("R3 U2 L3 D2")  # 6 cells
        r = wilson_lattice_exact(SU2, f"spin:{int(2 * j)}/2", loop, coupling=LAM)
        assert r.value == pytest.approx(su2_plaquette(j, S) ** 6, abs=1e-10)

    def test_wound_twice(self):
        # tr_{1/2}(g^2) / 2 = (chi_1 - chi_0) / 2, so W = (3 w_1^A - 1) / 2
        loop = lattice("R2 U2 L2 D2", turns=2)  # A = 4
        r = wilson_lattice_exact(SU2, "fundamental", loop, coupling=LAM)
        w1 = su2_plaquette(1, S)
        assert r.value == pytest.approx((3 * w1 ** 4 - 1) / 2, abs=1e-10)

    def test_figure_eight(self):
        # lobes of 2 and 3 cells touching at a corner: w^(A1 + A2)
        loop = lattice("R2 U1 L1 U1 R2 U1 L3 D1 R1 D1 L1 D1")
        r = wilson_lattice_exact(SU2, "spin:1", loop, coupling=LAM)
        assert loop.winding_numbers()[loop.winding_numbers() != 0].size == 5
        assert r.value == pytest.approx(su2_plaquette(1, S) ** 5, abs=1e-10)

    def test_nested_lobe(self):
        # H = X_in (X_in X_out): E = w_{1/2}^{A_out} (3 w_1^{A_in} - 1) / 2
        loop = lattice("R2 U4 L4 D3 R3 U2 L1 D3")
        w = loop.winding_numbers()
        a_in, a_out = int((w == 2).sum()), int((w == 1).sum())
        r = wilson_lattice_exact(SU2, "fundamental", loop, coupling=LAM)
        ref = su2_plaquette(0.5, S) ** a_out * (3 * su2_plaquette(1, S) ** a_in - 1) / 2
        assert r.value == pytest.approx(ref, abs=1e-10)


class TestU1:
    def test_windings(self):
        # U(1): prod_cells I_{n_c}(b) / I_0(b) (von Mises moments)
        loop = lattice("R2 U4 L4 D3 R3 U2 L1 D3")
        r = wilson_lattice_exact(U1, "fundamental", loop, coupling=LAM)
        w = loop.winding_numbers()
        ref = np.prod([u1_plaquette(abs(n), S) for n in w[w != 0]])
        assert r.value == pytest.approx(ref, abs=1e-10)


def u3_plaquette(lam, s, k=3.0):
    # E[chi_lam(P)] / dim for the U(3) density exp((k / s) Re tr P): Weyl integration
    # formula over the three eigenvalue angles (Hall 2015, sec. 11.6) with the Schur
    # polynomial chi_lam = det[z_i^(lam_j + 3 - j)] / det[z_i^(3 - j)], by a tensor
    # trapezoid rule (spectrally accurate for smooth periodic integrands)
    m = 64
    th = 2 * np.pi * np.arange(m) / m
    z = np.exp(1j * np.stack(np.meshgrid(th, th, th, indexing="ij"), axis=-1))
    vander = np.stack([z ** (2 - j) for j in range(3)], axis=-1)
    num_m = np.stack([z ** (lam[j] + 2 - j) for j in range(3)], axis=-1)
    delta = np.linalg.det(vander)
    boltz = np.exp((k / s) * (np.cos(np.angle(z)).sum(-1) - 3))
    weight = np.abs(delta) ** 2 * boltz
    chi_weight = np.linalg.det(num_m) * np.conj(delta) * boltz  # chi |Delta|^2
    dim = np.prod([lam[i] - lam[j] + j - i for i in range(3) for j in range(i + 1, 3)]) / 2
    return float(chi_weight.sum().real / weight.sum() / dim)


def test_un_wound_loop_by_bessel_determinants():
    # U(3), loop wound twice on 2 cells: tr U^2 = chi_(2) - chi_(1,1) (hook expansion),
    # each irreducible's plaquette value by quadrature
    G = make_group("U", 3, "large-n")
    s = LAM * 0.25
    r = wilson_lattice_exact(G, "fundamental", lattice("R2 U1 L2 D1", turns=2), coupling=LAM)
    ref = (6 * u3_plaquette((2, 0, 0), s) ** 2 - 3 * u3_plaquette((1, 1, 0), s) ** 2) / 3
    assert r.value == pytest.approx(ref, abs=1e-9)


def test_non_constant_density_names_the_limit():
    from discretize import AreaForm

    with pytest.raises(ExactRouteError, match="geometry limit: .*constant density"):
        wilson_lattice_exact(SU2, "fundamental", lattice("R2 U1 L2 D1"), coupling=1.0,
                             area=AreaForm(rects=[(0, 0, 1, 1, 2.0)]))

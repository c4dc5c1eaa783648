"""One Ad-invariant Gaussian step f(t) = E[tr exp(X)] / N: holonomy.exact._gaussian_step."""

import numpy as np
import pytest
from scipy import special, stats

from holonomy.exact import gaussian_step
from holonomy.groups import make_group


def mc_gaussian_step(G, t, size, seed):
    """Monte Carlo: X = sum_a Z_a X_a with Z_a ~ N(0, t) in the group's orthonormal basis."""
    rng = np.random.default_rng(seed)
    Z = rng.standard_normal((size, G.dim)) * np.sqrt(t)
    U = G.exp(Z, coords=True)
    x = np.trace(U, axis1=-2, axis2=-1).real / G.N
    return x.mean(), x.std(ddof=1) / np.sqrt(size)


class TestClosedForms:
    @pytest.mark.parametrize("t", [0.1, 1.0, 4.0, 9.0])
    def test_su2_chi_integral(self, t):
        # SU(2), k = 2: exp(X) has eigenvalues e^{+-i r/2}, r = |Z| ~ sqrt(t) chi_3, so
        # f = E[cos(r/2)], a 1-D integral against scipy.stats.chi; closed form
        # (1 - t/4) exp(-t/8) (issue 3).
        ref = stats.chi(3, scale=np.sqrt(t)).expect(lambda r: np.cos(r / 2), epsabs=1e-13)
        assert gaussian_step("SU", 2, t, 2) == pytest.approx(ref, abs=1e-10)
        assert gaussian_step("SU", 2, t, 2) == pytest.approx((1 - t / 4) * np.exp(-t / 8), rel=1e-13)
        assert gaussian_step("Sp", 1, t, 2) == pytest.approx(ref, abs=1e-10)

    @pytest.mark.parametrize("k", [1, 2, 0.5])
    def test_so3_chi_integral(self, k):
        # SO(3): rotation by r / sqrt(2k), tr = 1 + 2 cos(angle) (chi_3 integral).
        t = 1.7
        ref = stats.chi(3, scale=np.sqrt(t)).expect(
            lambda r: (1 + 2 * np.cos(r / np.sqrt(2 * k))) / 3, epsabs=1e-13)
        assert gaussian_step("SO", 3, t, k) == pytest.approx(ref, abs=1e-10)

    @pytest.mark.parametrize("N", [2, 3, 4])
    def test_laguerre_form(self, N):
        # U(N), k = N: exp(-t/(2N)) L^{(1)}_{N-1}(t/N) / N (Haagerup and Thorbjornsen 2003,
        # Expo. Math. 21), with scipy.special.eval_genlaguerre.
        t = np.array([0.3, 2.0, 7.0])
        np.testing.assert_allclose(
            gaussian_step("U", N, t, "large-n"),
            np.exp(-t / (2 * N)) * special.eval_genlaguerre(N - 1, 1, t / N) / N, rtol=1e-14)

    def test_u1_and_so2(self):
        # Gaussian characteristic function E[cos(Z / sqrt(k'))] = exp(-t / (2 k')), with
        # k' = k for u(1) and 2k for so(2) (<L, L> = 2k for the unit rotation generator).
        assert gaussian_step("U", 1, 0.8, 1) == pytest.approx(np.exp(-0.4), rel=1e-15)
        assert gaussian_step("SO", 2, 0.8, 1) == pytest.approx(np.exp(-0.2), rel=1e-15)

    def test_metric_rescaling(self):
        # f_{k'}(t) = f_k(t k / k'): the orthonormal basis scales by sqrt(k / k').
        for fam, n in [("U", 3), ("SU", 3), ("SO", 3), ("SU", 2)]:
            assert gaussian_step(fam, n, 1.3, 2.5) == pytest.approx(
                gaussian_step(fam, n, 1.3 * 1.0 / 2.5, 1.0), rel=1e-13)

    @pytest.mark.parametrize("fam, n, metric, t, seed", [
        ("U", 2, "large-n", 1.5, 1), ("U", 3, "large-n", 2.0, 2), ("SU", 3, "large-n", 2.0, 3),
        ("SU", 3, "physics", 0.7, 4), ("SO", 3, "trace", 1.1, 5), ("U", 3, "trace", 0.4, 6),
    ])
    def test_monte_carlo(self, fam, n, metric, t, seed):
        # Exponentials of Gaussian algebra elements with the group engine; 4 standard errors.
        G = make_group(fam, n, metric)
        m, se = mc_gaussian_step(G, t, 20000, seed=seed)
        assert abs(m - gaussian_step(fam, n, t, metric)) < 4 * se

    @pytest.mark.parametrize("fam, n, k", [("SO", 2, 1.0), ("SO", 3, 1.0), ("SO", 3, 0.5),
                                           ("Sp", 1, 2.0), ("Sp", 1, 1.0)])
    def test_quadrature_route_reproduces_rank_one(self, fam, n, k):
        # The Weyl-quadrature route (Harish-Chandra 1957) against the rank-one closed
        # forms, themselves checked above against chi integrals.
        from holonomy.exact._gaussian_step import _weyl_quadrature
        t = np.array([0.2, 1.0, 6.0, 40.0])
        ref = gaussian_step("SU", 2, t, k) if fam == "Sp" else gaussian_step(fam, n, t, k)
        np.testing.assert_allclose(_weyl_quadrature(fam, n, t, k), ref, rtol=0, atol=1e-12)
        # analytic continuation to negative and complex t (no measure there)
        tc = np.array([-0.5, 0.7 + 0.4j, 2j])
        refc = gaussian_step("SU", 2, tc, k) if fam == "Sp" else gaussian_step(fam, n, tc, k)
        np.testing.assert_allclose(_weyl_quadrature(fam, n, tc, k), refc, rtol=0, atol=1e-12)

    @pytest.mark.parametrize("fam, n, metric, t, seed", [
        ("SO", 4, "trace", 1.5, 7), ("SO", 5, "physics", 3.0, 8), ("Sp", 2, "trace", 0.9, 9),
        ("SO", 6, "trace", 2.0, 10),
    ])
    def test_quadrature_route_monte_carlo(self, fam, n, metric, t, seed):
        G = make_group(fam, n, metric)
        m, se = mc_gaussian_step(G, t, 20000, seed=seed)
        assert abs(m - gaussian_step(fam, n, t, metric)) < 4 * se

    @pytest.mark.parametrize(
        "args, err, match",
        [
            (("SO", 8, 1.0, 1), ValueError, "`n` = 8 is too large for SO"),
            (("Sp", 4, 1.0, 1), ValueError, "`n` = 4 is too large for Sp"),
            (("SU", 1, 1.0, 1), ValueError, "`n` must be >= 2 for SU"),
            (("U", 2, np.inf, 1), ValueError, "`t` must be finite"),
            (("U", 2, 1.0, "wide"), ValueError, "`k` must be one of .* or a positive number"),
            (("G2", 2, 1.0, 1), ValueError, "`family` must be one of"),
        ],
    )
    def test_bad_input(self, args, err, match):
        with pytest.raises(err, match=match):
            gaussian_step(*args)

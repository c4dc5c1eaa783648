"""White-noise cell integrals, refinement h -> h/2, interval sums."""

import numpy as np
import pytest
from scipy import stats

from noise import cell_noise, interval_sums, refine_noise

# Standard errors (normal theory, e.g. T. W. Anderson, "An Introduction to Multivariate
# Statistical Analysis", 3rd ed., Wiley 2003, sec. 3.4; from memory): for n samples of
# a centered Gaussian vector with covariance C, the sample covariance s_ij has standard
# error sqrt((C_ii C_jj + C_ij^2) / n); for i != j with C_ij = 0, n * r_ij^2 is
# asymptotically chi-square(1) and independent across pairs.


def _sample_cov(x):
    return x.T @ x / len(x)  # centered law: no mean subtraction


def _check_cov(x, C, n_se=4.0):
    """Entrywise 4-standard-error check of the sample covariance of x against C."""
    n = len(x)
    S = _sample_cov(x)
    se = np.sqrt((np.outer(np.diag(C), np.diag(C)) + C**2) / n)
    z = np.abs(S - C) / se
    assert z.max() < n_se, (z.max(), np.unravel_index(z.argmax(), z.shape))


def _check_uncorrelated(x):
    """All off-diagonal correlations zero: sum of n r_ij^2 over pairs ~ chi2(pairs)."""
    n, m = x.shape
    r = np.corrcoef(x, rowvar=False)
    iu = np.triu_indices(m, 1)
    stat = n * np.sum(r[iu] ** 2)
    p = stats.chi2.sf(stat, len(iu[0]))
    assert p > 1e-4, (stat, len(iu[0]), p)


class TestCellNoise:
    def test_shape_and_law(self):
        rng = np.random.default_rng(20261202)
        v = rng.uniform(0.1, 3.0, (3, 4))
        n = 20000
        x = cell_noise(v, 2, n, rng=rng)
        assert x.shape == (n, 3, 4, 2)
        flat = x.reshape(n, -1)
        C = np.diag(np.repeat(v.ravel(), 2))
        _check_cov(flat, C)
        _check_uncorrelated(flat)
        # standardized values are N(0, 1): Kolmogorov-Smirnov test (scipy.stats.kstest)
        z = (x / np.sqrt(v)[..., None]).ravel()
        assert stats.kstest(z, "norm").pvalue > 1e-4

    def test_zero_variance_and_leading_axes(self):
        x = cell_noise(np.zeros((2, 1, 3)), 1, 5, rng=0)
        assert x.shape == (5, 2, 1, 3, 1) and not x.any()

    def test_seeded(self):
        v = np.ones((2, 2))
        np.testing.assert_array_equal(cell_noise(v, 3, 4, rng=7), cell_noise(v, 3, 4, rng=7))
        assert not np.array_equal(cell_noise(v, 3, 4, rng=7), cell_noise(v, 3, 4, rng=8))

    @pytest.mark.parametrize(
        "args, exc, match",
        [
            (([[1.0, -0.5]], 1, 3), ValueError, r"`variances` has a negative entry \(-0\.5\).*`noise\.FormalGaussian`"),
            (([[1.0, np.nan]], 1, 3), ValueError, r"`variances` must be finite"),
            (([[1.0]], 0, 3), ValueError, r"`d` must be a positive integer, got 0"),
            (([[1.0]], 1, 0), ValueError, r"`size` must be a positive integer, got 0"),
            (([[1.0]], 1.0, 3), TypeError, r"`d` must be a positive integer"),
            (([[1j]], 1, 3), TypeError, r"`variances`"),
        ],
    )
    def test_validation(self, args, exc, match):
        with pytest.raises(exc, match=match):
            cell_noise(*args, rng=0)


class TestIntervalSums:
    def test_law(self):
        rng = np.random.default_rng(5)
        v = np.array([0.5, 2.0, 0.0, 1.25])
        n = 40000
        x = interval_sums(v, 3, n, rng=rng)
        assert x.shape == (n, 4, 3)
        assert not x[:, 2].any()
        keep = np.array([0, 1, 3])
        flat = x[:, keep].reshape(n, -1)
        _check_cov(flat, np.diag(np.repeat(v[keep], 3)))
        _check_uncorrelated(flat)

    def test_equals_sum_of_cells_in_law(self):
        # The sum of k independent cells of variance s is N(0, k s) (Walsh 1986, white
        # noise is additive over disjoint sets): compare with a direct interval draw by
        # a two-sample Kolmogorov-Smirnov test (scipy.stats.ks_2samp).
        n = 20000
        cells = cell_noise(np.full((1, 6), 0.3), 1, n, rng=1)[:, 0, :, 0].sum(axis=1)
        direct = interval_sums(np.array([6 * 0.3]), 1, n, rng=2)[:, 0, 0]
        assert stats.ks_2samp(cells, direct).pvalue > 1e-4

    def test_validation(self):
        with pytest.raises(ValueError, match=r"`variances` has a negative entry.*FormalGaussian"):
            interval_sums(np.array([1.0, -1.0]), 1, 2, rng=0)


class TestRefine:
    @staticmethod
    def _setup(n, d=1, seed=11):
        rng = np.random.default_rng(seed)
        fine_v = rng.uniform(0.2, 2.0, (4, 4))
        coarse_v = fine_v.reshape(2, 2, 2, 2).sum(axis=(1, 3))
        coarse = cell_noise(coarse_v, d, n, rng=rng)
        return coarse, fine_v, refine_noise(coarse, fine_v, rng=rng)

    def test_children_sum_to_parent(self):
        coarse, fine_v, fine = self._setup(1000, d=3)
        assert fine.shape == (1000, 4, 4, 3)
        back = fine.reshape(1000, 2, 2, 2, 2, 3).sum(axis=(2, 4))
        assert np.max(np.abs(back - coarse)) <= 1e-12 * (1 + np.abs(coarse).max())

    def test_refined_law_is_fresh_draw(self):
        # Unconditionally the fine cells are independent N(0, v_c): the covariance of
        # the refined field must be diag(v) (zero for siblings and non-siblings), like a
        # fresh draw at h/2 (white noise restricted to disjoint cells, Walsh 1986).
        n = 60000
        coarse, fine_v, fine = self._setup(n)
        flat = fine.reshape(n, 16)
        _check_cov(flat, np.diag(fine_v.ravel()))
        _check_uncorrelated(flat)
        # sibling pair (0,0), (1,0) and a non-sibling pair (1,0), (2,0) explicitly
        for a, b in [((0, 0), (1, 0)), ((1, 0), (2, 0)), ((1, 1), (2, 2))]:
            c = np.mean(fine[:, a[0], a[1], 0] * fine[:, b[0], b[1], 0])
            assert abs(c) < 4 * np.sqrt(fine_v[a] * fine_v[b] / n)
        # KS against the marginal law N(0, v) of each child (scipy.stats.kstest)
        z = (fine[..., 0] / np.sqrt(fine_v)).ravel()
        assert stats.kstest(z, "norm").pvalue > 1e-4

    def test_conditional_law(self):
        # Gaussian conditioning (Anderson 2003, Thm 2.5.1): given the parent S, child c
        # has mean (v_c / V) S and variance v_c (1 - v_c / V); the residual is
        # uncorrelated with S.
        n = 60000
        coarse, fine_v, fine = self._setup(n, seed=3)
        S = coarse[:, 0, 0, 0]
        V = fine_v[:2, :2].sum()
        for (i, j) in [(0, 0), (0, 1), (1, 0), (1, 1)]:
            v = fine_v[i, j]
            resid = fine[:, i, j, 0] - v / V * S
            var = v * (1 - v / V)
            assert abs(np.mean(resid**2) - var) < 4 * var * np.sqrt(2 / n)
            assert abs(np.mean(resid * S)) < 4 * np.sqrt(var * V / n)

    def test_twice_and_zero_variance(self):
        coarse, fine_v, fine = self._setup(50, d=2)
        finer = refine_noise(fine, np.repeat(np.repeat(fine_v / 4, 2, 0), 2, 1), rng=4)
        back = finer.reshape(50, 2, 4, 2, 4, 2).sum(axis=(2, 4))
        assert np.max(np.abs(back - coarse)) <= 1e-12 * (1 + np.abs(coarse).max())
        z = refine_noise(np.zeros((3, 1, 1, 2)), np.zeros((2, 2)), rng=0)
        assert z.shape == (3, 2, 2, 2) and not z.any()

    def test_seeded(self):
        c = cell_noise(np.ones((2, 3)), 2, 5, rng=0)
        v = np.full((4, 6), 0.25)
        np.testing.assert_array_equal(refine_noise(c, v, rng=1), refine_noise(c, v, rng=1))

    @pytest.mark.parametrize(
        "coarse, child, exc, match",
        [
            (np.zeros((2, 1, 1)), np.ones((2, 2)), ValueError, r"`coarse` must have shape \(size, nx, ny, d\)"),
            (np.zeros((2, 1, 1, 1)), np.ones((2, 3)), ValueError, r"`child_variances` must have shape \(2 nx, 2 ny\) = \(2, 2\)"),
            (np.zeros((2, 1, 1, 1)), -np.ones((2, 2)), ValueError, r"`child_variances` has a negative entry.*FormalGaussian"),
            (np.full((2, 1, 1, 1), np.inf), np.ones((2, 2)), ValueError, r"`coarse` must be finite"),
        ],
    )
    def test_validation(self, coarse, child, exc, match):
        with pytest.raises(exc, match=match):
            refine_noise(coarse, child, rng=0)

"""Correlators of several loops and their connected parts from block sums
(holonomy._estimate.estimate_correlators)."""

import numpy as np
import pytest

from holonomy._estimate import BlockSums, combine_blocks, correlator_subsets


def _blocks(values, block, sets):
    return [BlockSums.from_values(b, values[b * block:(b + 1) * block], 0.0, subsets=sets)
            for b in range(len(values) // block)]


def test_gaussian_covariance_and_its_stderr():
    # W = 1 + X with X Gaussian, cov(X0, X1) = 0.5, var X1 = 1.25: the connected
    # correlator is the covariance; the standard error of a sample covariance of
    # Gaussians is sqrt((s0^2 s1^2 + s01^2) / n) (T. W. Anderson, "An Introduction to
    # Multivariate Statistical Analysis", 3rd ed., 2003, sec. 3.4; from memory)
    rng = np.random.default_rng(4)
    x = rng.standard_normal((40000, 3))
    x[:, 1] += 0.5 * x[:, 0]
    v = x + 1.0
    sets = correlator_subsets([(0, 1), (0, 1, 2)])
    res = combine_blocks(_blocks(v, 5000, sets), names=["a", "b", "c"], areas=[1, 1, 1],
                         seed=0, block=5000, scheme="heat", path="dense",
                         correlators=[(0, 1), (0, 1, 2)])
    pair, triple = res.correlator_estimates
    se_ref = np.sqrt((1.0 * 1.25 + 0.25) / 40000)
    assert pair.connected_stderr == pytest.approx(se_ref, rel=0.05)
    assert abs(pair.connected - 0.5) < 4 * pair.connected_stderr
    # E[W0 W1] = 1 + 0.5
    assert abs(pair.estimate - 1.5) < 4 * pair.stderr
    # the third joint cumulant of a Gaussian vector is 0 (Isserlis)
    assert abs(triple.connected) < 4 * triple.connected_stderr
    # E[W0 W1 W2] = 1 + cov01 = 1.5 for zero-mean Gaussians shifted by 1
    assert abs(triple.estimate - 1.5) < 4 * triple.stderr


def test_complex_phases_and_round_trip():
    # independent uniform phases: E[W0 W1] = 0 and the connected part 0
    rng = np.random.default_rng(1)
    v = np.exp(1j * rng.uniform(0, 2 * np.pi, size=(8000, 2)))
    sets = correlator_subsets([(0, 1)])
    blocks = [BlockSums.from_dict(b.to_dict()) for b in _blocks(v, 2000, sets)]
    res = combine_blocks(blocks, names=["a", "b"], areas=[1, 1], seed=0, block=2000,
                         scheme="heat", path="dense", correlators=[(0, 1)])
    c = res.correlator_estimates[0]
    assert abs(c.estimate) < 4 * c.stderr and abs(c.connected) < 4 * c.connected_stderr
    assert c.estimate == pytest.approx(res.correlators[0, 1].real, abs=1e-15)


def test_blocks_summed_for_other_sets_refused():
    v = np.ones((10, 2))
    blocks = _blocks(v, 5, correlator_subsets([(0,)]))
    with pytest.raises(ValueError, match="product sets differ"):
        combine_blocks(blocks, names=["a", "b"], areas=[1, 1], seed=0, block=5,
                       scheme="heat", path="dense", correlators=[(0, 1)])

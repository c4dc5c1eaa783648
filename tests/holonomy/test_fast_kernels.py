"""The compiled kernels (the ``fast`` extra) against the numpy reference, per sample.

Both paths draw from the same block generator in the same order, so every sample's
holonomy agrees to rounding: 1e-12 per sample for every scheme and family the compiled
kernels cover. Skipped when numba is not installed.
"""

import numpy as np
import pytest

pytest.importorskip("numba")

from discretize import Loop  # noqa: E402
from holonomy import Field, WilsonProblem  # noqa: E402
from holonomy._kernels import (FastMatrixKernel, FastQuaternionKernel, kernel_for,  # noqa: E402
                               kernel_path)
from holonomy._sampling import _holonomies, _interval_variables  # noqa: E402
from noise import block_rng  # noqa: E402

LOOP = Loop.polygon([(0, 0), (1.5, 0), (1.5, 0.75), (0.5, 0.75), (0.5, 1.5), (0, 1.5)], turns=2)
RING = Loop.circle((0.7, 0.7), 0.6, 12)


def _values(problem, kernel, path, size=300):
    problem.__dict__["kernel"] = kernel  # the cached kernel, replaced for this test
    rng = block_rng(problem.seed, 0)
    variables = _interval_variables(problem, size, rng, path)
    hol = _holonomies(problem, variables, kernel)
    return np.stack([kernel.character(problem.representation, h) for h in hol], axis=1), \
        rng.random()


CASES = [("SU", 2, "physics", s) for s in ("heat", "linear", "gauss", "wilson")] + [
    ("Sp", 1, "trace", "heat"), ("U", 1, "trace", "heat"), ("SU", 3, "physics", "linear"),
    ("SU", 3, "physics", "heat"), ("U", 3, "trace", "linear"), ("U", 4, "large-n", "gauss"),
    ("SO", 3, "trace", "heat"),
    ("U", 2, "trace", "linear"), ("SO", 4, "trace", "heat"), ("U", 3, "trace", "heat"),
    ("U", 4, "large-n", "heat"), ("SU", 5, "trace", "heat"), ("SO", 5, "physics", "heat"),
    ("Sp", 2, "trace", "heat"), ("U", 2, "trace", "heat")]


@pytest.mark.parametrize("family,n,metric,scheme,coupling",
                         [c + (1.3,) for c in CASES] + [("SU", 2, "trace", "heat", 40.0),
                                                        ("SU", 3, "trace", "heat", 40.0),
                                                        ("U", 3, "physics", "heat", 12.0)])
@pytest.mark.parametrize("path", ["perimeter", "dense"])
def test_fast_and_numpy_kernels_agree_per_sample(family, n, metric, scheme, coupling, path):
    # coupling 40: heat times on both sides of the SU(2) sampler's switch (tau = 0.5);
    # SU(3) and U(3) at couplings 40 and 12: cell times of several torus pieces, with
    # rejections (acceptance exp(-|rho|^2 t / 2) per piece)
    field = Field(coupling=coupling, spacing=0.25, scheme=scheme)
    prob = WilsonProblem(family=family, n=n, metric=metric, field=field, loops=(LOOP, RING),
                         samples=300, block=300, seed=5)
    if path == "perimeter" and not prob.scheme.perimeter:
        pytest.skip("no perimeter path for this scheme")
    G = prob.group
    slow, fast = kernel_for(G, fast=False), kernel_for(G, fast=True)
    assert isinstance(fast, (FastMatrixKernel, FastQuaternionKernel)) and fast.name == "numba"
    a, next_a = _values(prob, slow, path)
    b, next_b = _values(prob, fast, path)
    assert next_a == next_b  # the same draws were consumed
    np.testing.assert_allclose(b, a, rtol=0, atol=1e-12)


def test_kernel_path_choice(monkeypatch):
    monkeypatch.setenv("WHITEGAUGE_KERNEL", "numpy")
    assert kernel_path() == "numpy"
    monkeypatch.setenv("WHITEGAUGE_KERNEL", "fast")
    assert kernel_path() == "numba"
    monkeypatch.setenv("WHITEGAUGE_KERNEL", "quick")
    with pytest.raises(ValueError, match="WHITEGAUGE_KERNEL"):
        kernel_path()

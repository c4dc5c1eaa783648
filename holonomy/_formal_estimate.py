"""Monte Carlo estimates of formal Wilson loops (signed area densities) by complex
rotation, for the Gaussian schemes.

With a density that changes sign, a cell (or interval) noise has "variance"
``lambda mu < 0``: no measure exists, but every expectation of the ``linear`` and
``gauss`` schemes is an analytic function of the variances, and the formal Wilson loop
is its continuation. Writing the noise as ``x = sqrt(lambda mu) z`` with z real
standard Gaussian and the principal (imaginary) square root for ``mu < 0`` makes the
covariance ``L L^T = lambda mu`` (the complex rotation of
:func:`noise.complex_rotation_estimate`, diagonal here); the Lie-algebra increments are
then complex, the holonomy is an ordered product in the complexified group
(:func:`holonomy.ordered_product` with ``complexified=True``), and the sample mean of
``tr H / N`` is an unbiased estimate of the formal value (the moments of L z depend on
L only through L L^T; the exponentials are entire and dominated by the Gaussian
tails, so the series may be summed under the expectation).

``heat`` and ``wilson`` draw group elements from densities (heat kernel, Wilson
action) that have no continuation to a negative time by sampling; they are refused.

Blocks and seeds are those of the sampler (``block_rng(seed, b)``), so a formal run is
reproducible and resumable in the same way; all loops of a problem share one noise
field (interval noises for ``linear``, cell noises for ``gauss``).

References
----------
.. [1] L. Isserlis, Biometrika 12 (1918) 134-139 (moments of L z depend on L L^T).
.. [2] B. K. Driver, Commun. Math. Phys. 123 (1989) 575-616 (the axial-gauge
   construction the schemes discretize).
"""

from __future__ import annotations

import numpy as np

from noise import block_rng

from ._estimate import BlockSums, EstimateResult, correlator_subsets
from ._lattice_series import gauss_axial_factors, lattice_loadings
from ._sampling import WilsonProblem
from ._schemes import SCHEMES
from ._solver import ordered_product

__all__ = ["formal_schemes", "formal_block", "formal_estimate", "check_formal_scheme"]


def formal_schemes() -> tuple[str, ...]:
    """The registered schemes with a formal sampler (``Scheme.formal``): their links
    are exponentials of the Gaussian noise, which continue to signed variances."""
    return tuple(name for name, cls in SCHEMES.items() if cls.formal)


def check_formal_scheme(scheme: str) -> None:
    """Raise ValueError (one line naming ``field.scheme``) unless formal runs apply."""
    if scheme not in formal_schemes():
        raise ValueError(
            f"field.scheme: got {scheme!r}; a signed density has a formal Monte Carlo "
            f"estimate only for the Gaussian schemes {', '.join(formal_schemes())} (the "
            f"{scheme} scheme samples a density that does not continue to negative areas)")


def _factors(problem: WilsonProblem):
    """Per loop ``(labels, signs or loadings)`` and the shared labels' measures."""
    if problem.scheme.kind == "algebra":   # links exp(-S): interval noises
        per_loop = [lattice_loadings(problem, i, merge=False)[0]
                    for i in range(len(problem.loops))]
        return "linear", per_loop, np.asarray(problem.plan.measure, dtype=float)
    lists = [gauss_axial_factors(problem, i) for i in range(len(problem.loops))]
    cells = sorted({c for lst in lists for c, _ in lst})
    where = {c: j for j, c in enumerate(cells)}
    per_loop = [(np.array([where[c] for c, _ in lst], dtype=int),
                 np.array([v for _, v in lst], dtype=float)) for lst in lists]
    mu = np.asarray(problem.plan.cell_measures, dtype=float).ravel()[cells]
    return "gauss", per_loop, mu


def formal_block(problem: WilsonProblem, block: int) -> BlockSums:
    """One block of the formal estimate: the same contract as :func:`holonomy.run_block`.

    Per sample and loop the value is the complex normalized trace of the holonomy in the
    complexified group; ``drift`` is the largest defect of the complexified group's
    holomorphic relations (0 for U(n), which has none).
    """
    check_formal_scheme(problem.field.scheme)
    rep = problem.rep if isinstance(problem.rep, str) else problem.rep.name
    if rep not in ("fundamental", "defining"):
        raise ValueError(f"observable.rep: got {rep!r}; formal runs use the fundamental "
                         "representation")
    group = problem.group
    sizes = [problem.block] * problem.n_blocks
    sizes[-1] = problem.samples - problem.block * (problem.n_blocks - 1)
    size = sizes[block]
    rng = block_rng(problem.seed, block)
    kind, per_loop, mu = _factors(problem)  # "linear": loadings; "gauss": cell factors
    sd = np.sqrt(problem.field.coupling * mu.astype(complex))
    noise = rng.standard_normal((size, mu.size, group.dim)) * sd[None, :, None]
    values = np.empty((size, len(per_loop)), dtype=complex)
    drift = 0.0
    for i, f in enumerate(per_loop):
        if kind == "linear":
            inc = np.einsum("ek,nkd->ned", f, noise)
        else:
            idx, sign = f
            inc = noise[:, idx, :] * sign[None, :, None]
        if inc.shape[1] == 0:
            values[:, i] = 1.0
            continue
        res = ordered_product(group, inc, complexified=True)
        values[:, i] = np.trace(res.value, axis1=-2, axis2=-1) / group.N
        drift = max(drift, res.drift or 0.0)
    return BlockSums.from_values(block, values, drift,
                                 subsets=correlator_subsets(problem.correlators))


def formal_estimate(problem: WilsonProblem) -> EstimateResult:
    """All blocks of a formal problem in order, combined like a run (one process)."""
    return problem.finish([formal_block(problem, b) for b in range(problem.n_blocks)])

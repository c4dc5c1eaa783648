"""Monte Carlo estimates of Wilson loops from per-block partial sums.

A run of ``samples`` draws is cut into blocks of ``block`` draws; block ``b`` draws from
``SeedSequence(seed, spawn_key=(b,))``. Each block returns a :class:`BlockSums` of
partial sums; :func:`combine_blocks` adds them in block order, so the combined numbers are
bitwise identical whatever executor ran the blocks and in whatever order they finished.

Two standard errors are reported for each loop: ``stderr`` from the pooled sums of
squares (the per-sample variance over ``samples``), and ``stderr_batch`` from the spread
of the block means (batch means). Samples are independent, so the two agree up to the
noise of the batch-means estimate; a user sees both.

References
----------
.. [1] Flegal, J. M. and Jones, G. L. (2010). "Batch means and spectral variance
   estimators in Markov chain Monte Carlo." Ann. Statist. 38(2), 1034-1070.
.. [2] Chan, T. F., Golub, G. H. and LeVeque, R. J. (1979). "Updating formulae and a
   pairwise algorithm for computing sample variances." Stanford CS report STAN-CS-79-773.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

__all__ = ["BlockSums", "LoopEstimate", "EstimateResult", "combine_blocks"]


@dataclass
class BlockSums:
    """Partial sums of one block of samples (what a worker returns and the store keeps).

    ``values`` of a block are the per-sample normalized characters ``W[s, l]`` of loop l.
    ``cross[a, b]`` is the sum over samples of ``W[s, a] * W[s, b]`` (complex), from
    which correlators E[W(a) W(b)] are estimated.
    """

    block: int
    count: int
    sum_re: np.ndarray
    sum_im: np.ndarray
    cross: np.ndarray
    cross_sq: np.ndarray
    drift: float
    # centred sums of squares sum_s (x_s - block mean)^2: without them the variance of
    # values close to a constant (lambda * area ~ 1e-10) cancels to 0 in sumsq - sum^2/n
    m2_re: np.ndarray
    m2_im: np.ndarray
    reprojected: bool = False

    @classmethod
    def from_values(cls, block: int, values: np.ndarray, drift: float,
                    reprojected: bool = False) -> "BlockSums":
        """Build the sums from per-sample values of shape (count, loops)."""
        values = np.asarray(values, dtype=complex)
        re, im = values.real, values.imag
        prod_re = (values[:, :, None] * values[:, None, :]).real
        return cls(
            block=int(block),
            count=int(values.shape[0]),
            sum_re=re.sum(axis=0),
            sum_im=im.sum(axis=0),
            cross=np.einsum("sa,sb->ab", values, values),
            cross_sq=(prod_re * prod_re).sum(axis=0),
            drift=float(drift),
            m2_re=((re - re.mean(axis=0)) ** 2).sum(axis=0),
            m2_im=((im - im.mean(axis=0)) ** 2).sum(axis=0),
            reprojected=bool(reprojected),
        )

    def to_dict(self) -> dict:
        """A JSON-safe dict that :meth:`from_dict` turns back into identical arrays."""
        return {
            "block": self.block,
            "count": self.count,
            "sum_re": self.sum_re.tolist(),
            "sum_im": self.sum_im.tolist(),
            "cross_re": self.cross.real.tolist(),
            "cross_im": self.cross.imag.tolist(),
            "cross_sq": self.cross_sq.tolist(),
            "drift": self.drift,
            "reprojected": self.reprojected,
            "m2_re": self.m2_re.tolist(),
            "m2_im": self.m2_im.tolist(),
        }

    @classmethod
    def from_dict(cls, data: dict) -> "BlockSums":
        """The inverse of :meth:`to_dict`; a ValueError if ``data`` is not such a dict
        (a missing field, an array of the wrong shape, a count < 1)."""
        if not isinstance(data, dict):
            raise ValueError(f"expected a dict of block sums, got {type(data).__name__}")
        missing = {"block", "count", "sum_re", "sum_im", "cross_re", "cross_im",
                   "cross_sq", "drift", "m2_re", "m2_im"} - set(data)
        if missing:
            raise ValueError(f"block sums lack the fields {sorted(missing)}")
        cross = np.asarray(data["cross_re"], float) + 1j * np.asarray(data["cross_im"], float)
        out = cls(
            block=int(data["block"]),
            count=int(data["count"]),
            sum_re=np.asarray(data["sum_re"], float),
            sum_im=np.asarray(data["sum_im"], float),
            cross=cross,
            cross_sq=np.asarray(data["cross_sq"], float),
            drift=float(data["drift"]),
            m2_re=np.asarray(data["m2_re"], float),
            m2_im=np.asarray(data["m2_im"], float),
            reprojected=bool(data.get("reprojected", False)),
        )
        n_loops = out.sum_re.shape
        if (len(n_loops) != 1 or out.count < 1
                or any(a.shape != n_loops for a in (out.sum_im, out.m2_re, out.m2_im))
                or any(a.shape != n_loops * 2 for a in (out.cross, out.cross_sq))):
            raise ValueError("block sums of inconsistent shapes or count")
        return out


@dataclass
class LoopEstimate:
    """The Monte Carlo estimate of one loop's normalized Wilson loop E[chi(H)] / dim."""

    name: str
    estimate: float
    estimate_imag: float
    stderr: float
    stderr_imag: float
    stderr_batch: float
    samples: int
    area: float
    drift: float
    reprojected: bool = False

    @property
    def value(self) -> complex:
        return complex(self.estimate, self.estimate_imag)


@dataclass
class EstimateResult:
    """All loops of one run, their correlators, and the seed record.

    ``correlators[a, b]`` estimates E[W(a) W(b)] (complex) with standard error
    ``correlator_stderr[a, b]`` (of the real part).
    """

    loops: list[LoopEstimate]
    correlators: np.ndarray
    correlator_stderr: np.ndarray
    seed: int
    samples: int
    block: int
    n_blocks: int
    scheme: str
    path: str
    seed_record: dict = field(default_factory=dict)

    def __getitem__(self, name: str) -> LoopEstimate:
        for loop in self.loops:
            if loop.name == name:
                return loop
        raise KeyError(name)


def _stderr(total: np.ndarray, total_sq: np.ndarray, n: int) -> np.ndarray:
    mean = total / n
    var = np.maximum(total_sq / n - mean * mean, 0.0) * n / max(n - 1, 1)
    return np.sqrt(var / n)


def _stderr_centred(blocks, part: str, n: int) -> np.ndarray:
    """Standard error from per-block centred sums, combined by the pairwise update
    M2 = sum_b M2_b + sum_b n_b (mean_b - mean)^2 ([2]); accurate
    in floating point for values that barely vary, where sumsq - sum^2 / n cancels."""
    total = np.sum([getattr(b, f"sum_{part}") for b in blocks], axis=0)
    mean = total / n
    m2 = np.sum([getattr(b, f"m2_{part}") + b.count * (getattr(b, f"sum_{part}") / b.count
                                                       - mean) ** 2 for b in blocks], axis=0)
    return np.sqrt(m2 / max(n - 1, 1) / n)


def combine_blocks(blocks: Sequence[BlockSums], *, names: Sequence[str],
                   areas: Sequence[float], seed: int, block: int, scheme: str,
                   path: str) -> EstimateResult:
    """Add per-block sums in block order and form estimates and standard errors.

    The blocks are sorted by index before adding, so the result does not depend on the
    order in which they were computed.
    """
    if not blocks:
        raise ValueError("`blocks` is empty: a run needs at least one finished block.")
    blocks = sorted(blocks, key=lambda b: b.block)
    n = sum(b.count for b in blocks)
    sum_re = np.sum([b.sum_re for b in blocks], axis=0)
    sum_im = np.sum([b.sum_im for b in blocks], axis=0)
    se_re = _stderr_centred(blocks, "re", n)
    se_im = _stderr_centred(blocks, "im", n)
    mean_re = sum_re / n
    # batch means: block means weighted by block size
    if len(blocks) > 1:
        counts = np.array([b.count for b in blocks], float)
        bmeans = np.array([b.sum_re / b.count for b in blocks])
        dev = bmeans - mean_re
        var_b = (counts[:, None] * dev * dev).sum(axis=0) / (len(blocks) - 1)
        se_batch = np.sqrt(var_b / n)
    else:
        se_batch = np.full_like(mean_re, np.nan)
    cross_sum = np.sum([b.cross for b in blocks], axis=0)
    cross = cross_sum / n
    cross_se = _stderr(cross_sum.real, np.sum([b.cross_sq for b in blocks], axis=0), n)
    drift = max(b.drift for b in blocks)
    reprojected = any(b.reprojected for b in blocks)
    loops = [
        LoopEstimate(
            name=str(nm), estimate=float(mean_re[i]), estimate_imag=float(sum_im[i] / n),
            stderr=float(se_re[i]), stderr_imag=float(se_im[i]),
            stderr_batch=float(se_batch[i]), samples=n, area=float(areas[i]),
            drift=drift, reprojected=reprojected,
        )
        for i, nm in enumerate(names)
    ]
    return EstimateResult(
        loops=loops, correlators=cross, correlator_stderr=cross_se, seed=int(seed),
        samples=n, block=int(block), n_blocks=len(blocks), scheme=scheme, path=path,
        seed_record={"entropy": int(seed), "spawn_keys": [[b.block] for b in blocks]},
    )

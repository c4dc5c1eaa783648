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

__all__ = ["BlockSums", "WeightedSums", "LoopEstimate", "EstimateResult", "CorrelatorEstimate",
           "combine_blocks", "correlator_subsets", "estimate_correlators", "joint_cumulant"]


@dataclass
class WeightedSums:
    """Per-loop sums of one block under weights ``w[s, l]`` (closed surfaces,
    :mod:`holonomy._surface_weights`): what the self-normalised estimate
    ``sum w W / sum w`` and its delta-method errors need, combined block by block.

    ``w``, ``w2``: sums of w and w^2; ``wx_re``, ``wx_im``: of ``w W``; ``m2_*``: of
    ``w^2 (W - r)^2`` and ``d_*``: of ``w^2 (W - r)``, centred at the block's own ratio
    ``r = wx / w`` (real and imaginary parts apart), so that nearly constant values do
    not cancel to 0 (as the plane's centred sums, [2]).
    """

    w: np.ndarray
    w2: np.ndarray
    wx_re: np.ndarray
    wx_im: np.ndarray
    m2_re: np.ndarray
    m2_im: np.ndarray
    d_re: np.ndarray
    d_im: np.ndarray

    FIELDS = ("w", "w2", "wx_re", "wx_im", "m2_re", "m2_im", "d_re", "d_im")

    @classmethod
    def from_values(cls, values: np.ndarray, weights: np.ndarray) -> "WeightedSums":
        values = np.asarray(values, dtype=complex)
        w = np.asarray(weights, dtype=float)
        sw = w.sum(axis=0)
        w2 = w * w
        out = {"w": sw, "w2": w2.sum(axis=0)}
        for part, x in (("re", values.real), ("im", values.imag)):
            wx = (w * x).sum(axis=0)
            r = np.divide(wx, sw, out=np.zeros_like(wx), where=sw != 0)
            dev = x - r
            out[f"wx_{part}"] = wx
            out[f"m2_{part}"] = (w2 * dev * dev).sum(axis=0)
            out[f"d_{part}"] = (w2 * dev).sum(axis=0)
        return cls(**out)

    def to_dict(self) -> dict:
        return {k: getattr(self, k).tolist() for k in self.FIELDS}

    @classmethod
    def from_dict(cls, data: dict, n_loops: tuple) -> "WeightedSums":
        if not isinstance(data, dict) or set(cls.FIELDS) - set(data):
            raise ValueError(f"weighted sums lack the fields {sorted(set(cls.FIELDS) - set(data or {}))}")
        out = cls(**{k: np.asarray(data[k], float) for k in cls.FIELDS})
        if any(getattr(out, k).shape != n_loops for k in cls.FIELDS):
            raise ValueError("weighted sums of inconsistent shapes")
        return out


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
    # products prod_{i in S} W[s, i] over the loop sets S of the spec's correlators
    # (all their subsets, :func:`correlator_subsets`): complex sums and the centred sums
    # of outer products of the vector [Re P_S, Im P_S] (for the delta method)
    subsets: tuple = ()
    sub_sum: np.ndarray = field(default_factory=lambda: np.zeros(0, complex))
    sub_m2: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    # closed surfaces: the sums under the samples' weights (None on the plane)
    weighted: WeightedSums | None = None

    @classmethod
    def from_values(cls, block: int, values: np.ndarray, drift: float,
                    reprojected: bool = False, subsets=(),
                    weights: np.ndarray | None = None) -> "BlockSums":
        """Build the sums from per-sample values of shape (count, loops); ``subsets``
        lists the loop-index sets whose products are summed (correlators); ``weights``
        (count, loops), on a closed surface, the samples' weights per loop."""
        values = np.asarray(values, dtype=complex)
        re, im = values.real, values.imag
        prod_re = (values[:, :, None] * values[:, None, :]).real
        subsets = tuple(tuple(int(i) for i in S) for S in subsets)
        if subsets:
            prods = np.stack([np.prod(values[:, list(S)], axis=1) for S in subsets], axis=1)
            x = np.concatenate([prods.real, prods.imag], axis=1)
            x = x - x.mean(axis=0)
            sub_sum, sub_m2 = prods.sum(axis=0), x.T @ x
        else:
            sub_sum, sub_m2 = np.zeros(0, complex), np.zeros((0, 0))
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
            subsets=subsets, sub_sum=sub_sum, sub_m2=sub_m2,
            weighted=None if weights is None else WeightedSums.from_values(values, weights),
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
            "subsets": [list(S) for S in self.subsets],
            "sub_re": self.sub_sum.real.tolist(),
            "sub_im": self.sub_sum.imag.tolist(),
            "sub_m2": self.sub_m2.tolist(),
            **({} if self.weighted is None else {"weighted": self.weighted.to_dict()}),
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
            subsets=tuple(tuple(int(i) for i in S) for S in data.get("subsets", ())),
            sub_sum=(np.asarray(data.get("sub_re", []), float)
                     + 1j * np.asarray(data.get("sub_im", []), float)),
            sub_m2=np.asarray(data.get("sub_m2", []), float).reshape(
                (2 * len(data.get("sub_re", [])),) * 2),
        )
        n_loops = out.sum_re.shape
        if (len(n_loops) != 1 or out.count < 1
                or any(a.shape != n_loops for a in (out.sum_im, out.m2_re, out.m2_im))
                or any(a.shape != n_loops * 2 for a in (out.cross, out.cross_sq))):
            raise ValueError("block sums of inconsistent shapes or count")
        if "weighted" in data:
            out.weighted = WeightedSums.from_dict(data["weighted"], n_loops)
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
    # closed surfaces (self-normalised weighted estimate): the effective sample size
    # (sum w)^2 / sum w^2, and the mean weight with its standard error (E[w] = 1)
    ess: float | None = None
    weight_mean: float | None = None
    weight_stderr: float | None = None

    @property
    def value(self) -> complex:
        return complex(self.estimate, self.estimate_imag)


@dataclass
class CorrelatorEstimate:
    """The Monte Carlo estimate of a correlator ``E[prod_i W(i)]`` of several loops and
    of its connected part (the joint cumulant; for two loops
    ``E[W1 W2] - E[W1] E[W2]``), with standard errors of the real parts."""

    loops: tuple
    estimate: float
    estimate_imag: float
    stderr: float
    connected: float
    connected_imag: float
    connected_stderr: float
    samples: int

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
    correlator_estimates: list = field(default_factory=list)
    surface: object = None  # the holonomy.ClosedSurface the estimates are weighted into

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


def _weighted(blocks: Sequence[BlockSums], n: int) -> dict:
    """Self-normalised estimates ``R = sum w W / sum w`` per loop, with their errors by
    the delta method: ``stderr`` from the pooled per-sample sums,
    ``sqrt(sum w^2 (W - R)^2) / sum w`` ([3], eq. 9.9; the centred block sums combined
    as in [2]), ``stderr_batch`` from the block totals A_b = sum_b w W, B_b = sum_b w,
    ``sqrt(nb / (nb - 1) sum_b (A_b - R B_b)^2) / sum w``; the effective sample size
    ``(sum w)^2 / sum w^2`` ([3], eq. 9.13) and the mean weight with its error."""
    ws = [b.weighted for b in blocks]
    if any(w is None for w in ws):
        raise ValueError("`blocks` mix weighted and unweighted sums; recompute the blocks")
    sw = np.sum([w.w for w in ws], axis=0)
    sw2 = np.sum([w.w2 for w in ws], axis=0)
    out = {}
    scale = n / max(n - 1, 1)
    for part in ("re", "im"):
        wx = [getattr(w, f"wx_{part}") for w in ws]
        R = np.sum(wx, axis=0) / sw
        S = np.zeros_like(R)
        for w, a in zip(ws, wx):
            r = np.divide(a, w.w, out=np.zeros_like(a), where=w.w != 0)
            S += getattr(w, f"m2_{part}") + 2 * (r - R) * getattr(w, f"d_{part}") \
                + (r - R) ** 2 * w.w2
        out[part] = R
        out[f"se_{part}"] = np.sqrt(np.maximum(S, 0.0) * scale) / sw
        if part == "re":
            if len(ws) > 1:
                dev = np.array([a - R * w.w for w, a in zip(ws, wx)])
                out["se_batch"] = np.sqrt((dev * dev).sum(axis=0) * len(ws)
                                          / (len(ws) - 1)) / sw
            else:
                out["se_batch"] = np.full_like(R, np.nan)
    out["ess"] = sw * sw / sw2
    mean_w = sw / n
    # centred sum of squares of w, combined block by block ([2])
    m2w = np.sum([w.w2 - w.w ** 2 / b.count + b.count * (w.w / b.count - mean_w) ** 2
                  for w, b in zip(ws, blocks)], axis=0)
    out["weight_mean"] = mean_w
    out["weight_stderr"] = np.sqrt(np.maximum(m2w, 0.0) / max(n - 1, 1) / n)
    return out


def combine_blocks(blocks: Sequence[BlockSums], *, names: Sequence[str],
                   areas: Sequence[float], seed: int, block: int, scheme: str,
                   path: str, correlators: Sequence[Sequence[int]] = (),
                   surface=None) -> EstimateResult:
    """Add per-block sums in block order and form estimates and standard errors.

    The blocks are sorted by index before adding, so the result does not depend on the
    order in which they were computed. With ``surface`` (a
    :class:`holonomy.ClosedSurface`) the estimates are the self-normalised weighted
    means of the blocks' :class:`WeightedSums` (see :func:`_weighted`).

    References
    ----------
    .. [3] A. B. Owen, "Monte Carlo theory, methods and examples", 2013, Chapter 9
       (self-normalised importance sampling: delta-method variance, effective sample
       size).
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
    extra: list[dict] = [{} for _ in names]
    if surface is not None:
        wt = _weighted(blocks, n)
        mean_re, sum_im = wt["re"], wt["im"] * n
        se_re, se_im, se_batch = wt["se_re"], wt["se_im"], wt["se_batch"]
        extra = [{"ess": float(wt["ess"][i]), "weight_mean": float(wt["weight_mean"][i]),
                  "weight_stderr": float(wt["weight_stderr"][i])} for i in range(len(names))]
    loops = [
        LoopEstimate(
            name=str(nm), estimate=float(mean_re[i]), estimate_imag=float(sum_im[i] / n),
            stderr=float(se_re[i]), stderr_imag=float(se_im[i]),
            stderr_batch=float(se_batch[i]), samples=n, area=float(areas[i]),
            drift=drift, reprojected=reprojected, **extra[i],
        )
        for i, nm in enumerate(names)
    ]
    return EstimateResult(
        loops=loops, correlators=cross, correlator_stderr=cross_se, seed=int(seed),
        samples=n, block=int(block), n_blocks=len(blocks), scheme=scheme, path=path,
        seed_record={"entropy": int(seed), "spawn_keys": [[b.block] for b in blocks]},
        correlator_estimates=estimate_correlators(blocks, correlators, names),
        surface=surface,
    )


def correlator_subsets(correlators: Sequence[Sequence[int]]) -> tuple:
    """Every non-empty subset of every correlator's loop indices, sorted: the products
    a block sums so that correlators and their connected parts can be estimated."""
    from itertools import combinations

    out = set()
    for c in correlators:
        idx = sorted(set(int(i) for i in c))
        for r in range(1, len(idx) + 1):
            out.update(combinations(idx, r))
    return tuple(sorted(out, key=lambda S: (len(S), S)))


def _set_partitions(items):
    if not items:
        yield []
        return
    first, rest = items[0], items[1:]
    for part in _set_partitions(rest):
        yield [(first,)] + part
        for k in range(len(part)):
            yield part[:k] + [tuple(sorted((first,) + part[k]))] + part[k + 1:]


def joint_cumulant(S, moment):
    """Joint cumulant ``kappa(W_i, i in S)`` from the moments ``moment[T]`` of subsets T
    (moment-cumulant formula: sum over set partitions pi of
    ``(-1)^{|pi|-1} (|pi| - 1)! prod_B M_B``) and its gradient ``{T: d kappa / d M_T}``."""
    from math import factorial

    value = 0j
    grad: dict = {}
    for part in _set_partitions(list(S)):
        coef = (-1) ** (len(part) - 1) * factorial(len(part) - 1)
        blocks = [tuple(sorted(B)) for B in part]
        value += coef * np.prod([moment[B] for B in blocks])
        for k, B in enumerate(blocks):
            others = np.prod([moment[C] for j, C in enumerate(blocks) if j != k])
            grad[B] = grad.get(B, 0j) + coef * others
    return value, grad


def estimate_correlators(blocks: Sequence[BlockSums], correlators: Sequence[Sequence[int]],
                         names: Sequence[str]) -> list:
    """Correlators and their connected parts from the blocks' subset sums.

    The means of the products over all samples give ``E[prod_{i in S} W(i)]`` for every
    subset S; the connected part is their joint cumulant. Standard errors (of the real
    parts) by the delta method: the gradient of the cumulant in the real and imaginary
    parts of the subset means, against their per-sample covariance accumulated block by
    block (centred sums combined pairwise [2]).

    References
    ----------
    .. [1] L. Wasserman, "All of Statistics", Springer (2004), Thm. 5.15 (the delta
       method).
    .. [2] Chan, Golub and LeVeque (1979), STAN-CS-79-773 (pairwise combination of
       centred sums).
    """
    if not correlators:
        return []
    blocks = sorted(blocks, key=lambda b: b.block)
    subsets = correlator_subsets(correlators)
    if any(tuple(b.subsets) != subsets for b in blocks):
        raise ValueError("`blocks` were not summed for these correlators (their product "
                         "sets differ); recompute the blocks")
    n = sum(b.count for b in blocks)
    total = np.sum([b.sub_sum for b in blocks], axis=0)
    mean = total / n
    x_mean = np.concatenate([mean.real, mean.imag])
    m2 = np.zeros((2 * len(subsets),) * 2)
    for b in blocks:
        bm = b.sub_sum / b.count
        d = np.concatenate([bm.real, bm.imag]) - x_mean
        m2 += b.sub_m2 + b.count * np.outer(d, d)
    cov = m2 / max(n - 1, 1)
    index = {S: k for k, S in enumerate(subsets)}
    moment = {S: mean[k] for S, k in index.items()}
    S_n = len(subsets)
    out = []
    for c in correlators:
        S = tuple(sorted(set(int(i) for i in c)))
        k = index[S]
        kappa, grad = joint_cumulant(S, moment)
        g = np.zeros(2 * S_n)
        for T, gt in grad.items():
            g[index[T]] += gt.real
            g[S_n + index[T]] -= gt.imag
        out.append(CorrelatorEstimate(
            loops=tuple(names[i] for i in c), estimate=float(mean[k].real),
            estimate_imag=float(mean[k].imag), stderr=float(np.sqrt(cov[k, k] / n)),
            connected=float(kappa.real), connected_imag=float(kappa.imag),
            connected_stderr=float(np.sqrt(max(g @ cov @ g, 0.0) / n)), samples=n))
    return out

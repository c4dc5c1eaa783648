r"""Regularization studies: the same loops at several spacings and schemes, on one coupled
noise field, with convergence rates that measure what they say.

All (spacing, scheme) pairs of one sample read the same white noise (drawn at the
coarsest spacing and refined to the finer ones: common random numbers). A loop that is
not a lattice loop is snapped anew at every spacing, so its value at spacing h mixes two
errors, which the study reports separately, per row:

- the **scheme error** ``W_scheme(h) - W_snapped(h)``: the scheme's value against the
  exact continuum value of the loop *as snapped at h* (what ``heat`` samples exactly).
  Where the scheme's exact lattice value is known (``scheme_exact``: ``gauss`` and
  ``wilson`` on simple loops, ``linear`` on loops whose columns start on the reference
  line, every scheme for U(1)), it is noise-free; otherwise it is the estimate minus
  ``W_snapped(h)``, with the estimate's error;
- the **snapping error** ``W_snapped(h) - W_continuum``: the loop as snapped against the
  loop as specified (noise-free, exact values on both sides). It does not follow a power
  law for a curved loop: the snapped area jumps as h changes.

The **rate** p of the scheme error ``C h^p`` is fitted

1. on the exact lattice values where they exist at every spacing (noise-free): the
   observed order between the two finest spacings, its error the change from the
   previous order (:func:`fit_exact_rate`); this needs three spacings or more;
2. otherwise on shared-noise differences: against a scheme on the same noise whose
   error is exact (``linear`` against ``gauss``: ``e_linear = mean(W_linear -
   W_gauss) + e_gauss``, the error from the paired block means), fitted by generalized
   least squares as below; without such a partner, between consecutive spacings,
   ``D_i = e(h_i) - e(h_{i+1}) = C (1 - 2^{-p}) h_i^p`` with ``e = estimate - W_snapped``:
   both estimates read the same noise, so their difference is far less noisy than either.
   ``D`` is fitted by generalized least squares with the covariance of the differences
   estimated from the paired block means (batch means [1]_, ``curve_fit`` with a 2-D
   ``sigma``); this needs three spacings and at least eight blocks.

A fit whose standard error exceeds the rate's absolute value is reported as
*undetermined*, with the reason, never as a number. So that the batch-means covariances
exist, the block adapts: a study needs at least 8 blocks; with fewer, the block is
lowered to ``samples // 8`` (recorded as ``block`` with ``block_note``), and a spec
with fewer than ``8 * 16`` samples is refused, saying what to change.

Theory of the rates (fundamental representation, rectangle of width ``a`` and height
``b`` with the reference line on its bottom edge, constant density, coupling
``lambda``). Let ``f(t) = E[tr exp(X)] / N`` for one Ad-invariant Gaussian ``X`` of
variance ``t`` per component; the heat kernel gives ``exp(-c t / 2)`` and
``f(t) = exp(-c t / 2) (1 - kappa t^2 + O(t^3))`` (SU(2), k = 2:
``f(t) = (1 - t/4) e^{-t/8}``, ``kappa = 1/32``). Independent, conjugation-invariant
factors multiply their normalized traces (Schur's lemma), so

- ``gauss``: every plaquette is ``exp(X_c)`` with variance ``s = lambda h^2``, and a
  simple loop enclosing ``A / h^2`` plaquettes has ``W = f(s)^{A/h^2}``:
  ``log W = -c lambda A / 2 - kappa lambda^2 A h^2 + O(h^4)``. Rate **2**: an
  ``O(s^2)`` error per plaquette times ``O(h^-2)`` plaquettes.
- ``linear``: each of the ``a / h`` columns contributes one exponential of its whole
  column sum, of variance ``lambda h b``, so ``W = f(lambda h b)^{a/h}`` and
  ``log W = -c lambda a b / 2 - kappa lambda^2 a b^2 h + O(h^2)``. Rate **1**: the
  error per factor is ``O((h b)^2)`` but there are only ``O(h^-1)`` columns, each as
  long as the loop is high.
- ``wilson``: one-plaquette value ``w(s) = exp(-c s / 2) (1 + O(s^2))`` (Bessel
  ratios), so rate **2** by the ``gauss`` argument.
- ``heat``: exact for lattice loops at every spacing; no scheme error, no rate.

References
----------
.. [1] Flegal, J. M. and Jones, G. L. (2010). "Batch means and spectral variance
   estimators in Markov chain Monte Carlo." Ann. Statist. 38(2), 1034-1070.
.. [2] Levy, T. (2003). "Yang-Mills measure on compact surfaces." Mem. Amer. Math.
   Soc. 166(790) (subdivision invariance of the heat-kernel lattice measure).
.. [3] Seber, G. A. F. and Wild, C. J. (1989). "Nonlinear Regression." Wiley,
   section 2.1.4 (generalized least squares with a known covariance).
.. [4] Roache, P. J. (1998). "Verification and Validation in Computational Science and
   Engineering." Hermosa (observed order of accuracy; from memory).
"""

from __future__ import annotations

import dataclasses
import math
import time
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from typing import Sequence

import contextlib
import csv
import io
import json

import numpy as np
from scipy import optimize, stats

from holonomy import StudyProblem, run_study_block, study_schemes, study_spacings
from holonomy._estimate import BlockSums
from holonomy._schemes import EXPECTED_RATES, get_scheme
from noise import ArgumentError

from ._problems import build_problem
from ._progress import Progress
from ._references import loop_references
from ._report import MISSING, _render, _write_text_atomic, clean, fmt_value, write_json_atomic
from ._folder import claim_folder
from ._runner import Job, execute, run_iv, worker_pool
from ._spec import MAX_CELLS, Spec, SpecError, spec_arg
from ._store import RunStore, versions

__all__ = ["THEORY_RATES", "RateFit", "fit_rate", "fit_exact_rate", "fit_difference_rate",
           "study_block", "StudyOutcome", "run_study", "plot_convergence",
           "MIN_STUDY_BLOCKS", "MIN_STUDY_BLOCK"]

#: a study needs this many blocks (batch-means covariances of paired differences)
MIN_STUDY_BLOCKS = 8
#: and blocks of at least this many samples (common practice, no source: a block mean
#: should be roughly normal)
MIN_STUDY_BLOCK = 16

#: the expected rate of each registered scheme (its ``rate``; the derivations above)
THEORY_RATES = EXPECTED_RATES


@dataclass
class RateFit:
    """A fitted convergence rate ``bias ~ amplitude * h^rate``.

    ``rate`` is None when the bias is not resolved (consistent with zero at the 1%
    level: nothing to fit) or the fit failed; ``note`` says which.
    """

    rate: float | None
    stderr: float | None
    interval: tuple[float, float] | None
    amplitude: float | None
    chi2_zero: float
    dof: int
    theory: float | None = None
    note: str = ""
    method: str = ""   # "exact lattice values" | "shared-noise differences" | ""

    def contains_theory(self) -> bool | None:
        if self.interval is None or self.theory is None:
            return None
        return self.interval[0] <= self.theory <= self.interval[1]


def _batch_cov(block_means: np.ndarray, counts: np.ndarray) -> np.ndarray:
    """Covariance of the overall means from per-block means (batch means [1])."""
    n = counts.sum()
    mean = (counts[:, None] * block_means).sum(axis=0) / n
    dev = block_means - mean
    B = block_means.shape[0]
    return (counts[:, None, None] * dev[:, :, None] * dev[:, None, :]).sum(axis=0) / (
        (B - 1) * n)


def fit_rate(spacings: Sequence[float], block_means: np.ndarray, counts: Sequence[int],
             reference: float | Sequence[float], *, theory: float | None = None,
             level: float = 0.95) -> RateFit:
    """Fit ``mean(h) - reference(h) = C h^p`` by GLS with a batch-means covariance.

    Parameters
    ----------
    spacings : the k spacings.
    block_means : (B, k) per-block means at each spacing (same blocks: coupled noise).
    counts : (B,) samples per block.
    reference : the exact value, one per spacing or one for all.
    level : two-sided level of the reported interval (normal quantile).
    """
    h = np.asarray(spacings, float)
    m = np.asarray(block_means, float)
    c = np.asarray(counts, float)
    if m.ndim != 2 or m.shape[1] != h.size or m.shape[0] != c.size:
        raise ValueError("`block_means` must have shape (blocks, spacings).")
    if m.shape[0] < h.size + 2:
        return RateFit(None, None, None, None, float("nan"), h.size, theory,
                       f"too few blocks ({m.shape[0]}) for a covariance of {h.size} "
                       "spacings; use a smaller block")
    ref = np.broadcast_to(np.asarray(reference, float), h.shape)
    e = (c[:, None] * m).sum(axis=0) / c.sum() - ref
    cov = _batch_cov(m, c)
    # a tiny ridge keeps exactly equal estimates (e.g. abelian groups) invertible
    cov = cov + np.eye(h.size) * 1e-12 * max(float(np.trace(cov)), 1e-300)
    try:
        chi2_zero = float(e @ np.linalg.solve(cov, e))
    except np.linalg.LinAlgError:
        chi2_zero = float("nan")
    dof = int(h.size)
    crit = float(stats.chi2.ppf(0.99, dof))
    if not (chi2_zero > crit):
        return RateFit(None, None, None, None, chi2_zero, dof, theory,
                       "bias not resolved: consistent with zero at the 1% level")
    sign = 1.0 if e[np.argmax(np.abs(e))] > 0 else -1.0
    pos = (sign * e) > 0
    if pos.sum() >= 2:
        p0 = float(np.polyfit(np.log(h[pos]), np.log(sign * e[pos]), 1)[0])
    else:
        p0 = 1.0
    p0 = min(max(p0, 0.1), 6.0)
    a0 = float(sign * np.exp(np.mean(np.log(np.abs(e) + 1e-300) - p0 * np.log(h))))
    try:
        popt, pcov = optimize.curve_fit(lambda x, a, p: a * x ** p, h, e, p0=(a0, p0),
                                        sigma=cov, absolute_sigma=True, maxfev=20000)
    except (RuntimeError, ValueError, np.linalg.LinAlgError) as exc:
        return RateFit(None, None, None, None, chi2_zero, dof, theory,
                       f"fit failed ({exc})")
    se = float(math.sqrt(pcov[1, 1])) if np.isfinite(pcov[1, 1]) else float("nan")
    zq = float(stats.norm.ppf(0.5 + level / 2))
    rate = float(popt[1])
    return RateFit(rate, se, (rate - zq * se, rate + zq * se), float(popt[0]), chi2_zero,
                   dof, theory, "")


def _undetermined(fit: RateFit) -> RateFit:
    """A fit whose error is missing or exceeds the rate's size is not a number."""
    if fit.rate is None:
        return fit
    se = fit.stderr
    if se is None or not math.isfinite(se) or se > abs(fit.rate):
        shown = "unknown" if se is None or not math.isfinite(se) else f"{se:.3g}"
        return RateFit(None, None, None, None, fit.chi2_zero, fit.dof, fit.theory,
                       f"undetermined: the fit gave {fit.rate:.3g} with error {shown}, "
                       "larger than the value (more samples, or spacings where the error "
                       "is resolved)", fit.method)
    return fit


def fit_exact_rate(spacings: Sequence[float], errors: Sequence[float], *,
                   theory: float | None = None, level: float = 0.95) -> RateFit:
    """The rate p of noise-free scheme errors ``e(h) ~ C h^p`` (exact lattice values).

    The observed order between consecutive spacings, ``p_i = log(e_i / e_{i+1}) /
    log(h_i / h_{i+1})``, tends to p as h -> 0 (the observed order of accuracy; P. J.
    Roache, "Verification and Validation in Computational Science and Engineering",
    Hermosa, 1998, ch. 5, from memory). The rate is the order between the two finest
    spacings and its error the change from the previous order (common practice, no
    source): with exact data there is no noise, only the higher orders in h and the
    jumps of the snapped area, and that change measures them. Three spacings or more.
    """
    h = np.asarray(spacings, float)
    e = np.asarray(errors, float)
    method = "exact lattice values"
    if not np.any(e != 0):
        return RateFit(None, None, None, None, float("nan"), 0, theory,
                       "no scheme error: the scheme is exact on these lattice loops at "
                       "every spacing, nothing to fit (check z vs scheme instead)", method)
    if h.size < 3 or np.any(e == 0) or np.any(np.sign(e) != np.sign(e[-1])):
        why = (f"{h.size} spacings; an order with an error needs three (add a spacing)"
               if h.size < 3 else "the scheme error changes sign or vanishes between "
               "spacings: no power law")
        return RateFit(None, None, None, None, float("nan"), int(h.size), theory,
                       f"undetermined: {why}", method)
    orders = np.diff(np.log(np.abs(e))) / np.diff(np.log(h))
    rate, se = float(orders[-1]), float(abs(orders[-1] - orders[-2]))
    zq = float(stats.norm.ppf(0.5 + level / 2))
    amplitude = float(e[-1] / h[-1] ** rate)
    fit = RateFit(rate, se, (rate - zq * se, rate + zq * se), amplitude, float("nan"),
                  int(h.size) - 2, theory,
                  "orders between consecutive spacings: " +
                  ", ".join(f"{o:.3f}" for o in orders), method)
    return _undetermined(fit)


def fit_difference_rate(spacings: Sequence[float], block_means: np.ndarray,
                        counts: Sequence[int], snapped: Sequence[float], *,
                        theory: float | None = None, level: float = 0.95) -> RateFit:
    """Fit the rate from shared-noise differences between consecutive spacings.

    ``D_i = e(h_i) - e(h_{i+1})`` with ``e(h) = mean(h) - snapped(h)`` is
    ``C (1 - 2^{-p}) h_i^p`` for halving spacings; the paired block means give the
    differences and their covariance (batch means), and :func:`fit_rate` fits them.
    """
    h = np.asarray(spacings, float)
    m = np.asarray(block_means, float) - np.asarray(snapped, float)[None, :]
    if h.size < 3:
        return RateFit(None, None, None, None, float("nan"), 0, theory,
                       "undetermined: two spacings give one difference; a rate needs "
                       "three spacings (add one)", "shared-noise differences")
    d = m[:, :-1] - m[:, 1:]
    fit = fit_rate(h[:-1], d, counts, 0.0, theory=theory, level=level)
    fit.method = "shared-noise differences"
    if fit.amplitude is not None and fit.rate is not None:
        # D = C (1 - 2^-p) h^p: report the amplitude of e(h) itself
        fit.amplitude = fit.amplitude / (1.0 - 2.0 ** (-fit.rate)) if fit.rate else None
    return _undetermined(fit)


def study_block(spec: Spec) -> tuple[int, str | None]:
    """The block a study of ``spec`` uses, and a note when it differs from the spec's.

    A study needs :data:`MIN_STUDY_BLOCKS` blocks (covariances of paired differences
    come from the spread between blocks): with fewer, the block drops to
    ``samples // MIN_STUDY_BLOCKS``; below :data:`MIN_STUDY_BLOCK` samples per block
    the spec is refused.
    """
    samples, block = int(spec.samples), int(spec.block)
    if -(-samples // block) >= MIN_STUDY_BLOCKS:
        return block, None
    smaller = samples // MIN_STUDY_BLOCKS
    if smaller < MIN_STUDY_BLOCK:
        raise SpecError("run.samples", f"got {samples}; a study needs at least "
                        f"{MIN_STUDY_BLOCKS} blocks of at least {MIN_STUDY_BLOCK} samples "
                        f"(the errors of its differences come from the spread between "
                        f"blocks): set run.samples >= {MIN_STUDY_BLOCKS * MIN_STUDY_BLOCK}")
    return smaller, (f"block lowered from {block} to {smaller} so that every spacing has "
                     f"at least {MIN_STUDY_BLOCKS} blocks (set run.block <= {smaller} to "
                     "choose it yourself)")


@dataclass
class StudyOutcome:
    results: dict
    table: str
    fits: dict
    files: dict[str, str] = field(default_factory=dict)


def _study_job(study):
    def encode(blocks: dict) -> str:
        return json.dumps([[float(h), s, bs.to_dict()] for (h, s), bs in
                           sorted(blocks.items())])

    def decode(text: str) -> dict:
        return {(float(h), s): BlockSums.from_dict(d) for h, s, d in json.loads(text)}

    def count(blocks: dict) -> int:
        return int(next(iter(blocks.values())).count)

    def finish(blocks: list[dict]):
        keys = blocks[0].keys()
        by_key = {k: [b[k] for b in blocks] for k in keys}
        return study.finish(by_key), blocks

    return Job(problem=study, block_fn=run_study_block, encode=encode, decode=decode,
               count=count, finish=finish, key="study")


def _references(spec: Spec, study, h: float, i: int) -> dict:
    """Exact references at spacing ``h``: per scheme, on the study's own lattice loops
    (the continuum value of the snapped loop for ``heat``, closed forms otherwise)."""
    return {s: loop_references(spec, study.problems[(h, s)], i, scheme=s)
            for s in study.schemes}


def run_study(spec: Spec, *, spacings: Sequence[float], schemes: Sequence[str] | None = None,
              out: str | Path | None = None, executor=None, workers: int | None = None,
              resume: bool = False, fresh: bool = False,
              progress: bool | Progress = False) -> StudyOutcome:
    """Run the study and (with ``out``) write ``study.json``, ``study.csv``,
    ``convergence.png`` and the store ``study.sqlite``; ``schemes`` defaults to the
    registry's study schemes (:func:`holonomy.study_schemes`).

    ``spec`` is a :class:`Spec` or the path of a spec file; ``out``, ``executor``,
    ``workers``, ``resume`` and ``fresh`` are as in :func:`run_spec`.
    """
    spec = spec_arg(spec, "study")
    out, executor, workers = run_iv(out=out, executor=executor, workers=workers,
                                    flags={"resume": resume, "fresh": fresh},
                                    progress=progress)
    if isinstance(spacings, (str, bytes)) or not isinstance(spacings, Sequence):
        raise TypeError(f"`spacings` must be a sequence of numbers; got {spacings!r}.")
    if schemes is not None and (isinstance(schemes, (str, bytes))
                                or not isinstance(schemes, Sequence)):
        raise TypeError(f"`schemes` must be a sequence of scheme names or None; got "
                        f"{schemes!r}.")
    try:  # the command line's --spacings follow the same rule
        spacings = study_spacings(spacings)
    except ArgumentError as exc:
        raise SpecError("--spacings", exc.rule) from None
    schemes = study_schemes() if schemes is None else tuple(schemes)
    start = datetime.now(timezone.utc)
    t0 = time.perf_counter()
    block, block_note = study_block(spec)
    if block != spec.block:
        spec = dataclasses.replace(spec, block=block)
    base = build_problem(spec)
    try:
        study = StudyProblem(base, spacings=spacings, schemes=schemes,
                             max_cells=MAX_CELLS)
    except ArgumentError as exc:
        key = {"spacings": "--spacings", "scheme": "--schemes", "schemes": "--schemes",
               "block": "run.block", "spacing": "--spacings"}
        raise SpecError(key.get(exc.argument, "spec"), exc.rule) from None
    job = _study_job(study)
    job_key = f"study:{list(spacings)}:{list(schemes)}:block={block}"
    with contextlib.ExitStack() as folder:
        store = None
        if out is not None:
            folder.enter_context(claim_folder(out, command="study",
                                              identity=f"{spec.sha256}:{job_key}",
                                              name=spec.name, fresh=fresh))
            store = folder.enter_context(RunStore(
                out / "study.sqlite", spec_text=spec.text, spec_sha256=spec.sha256,
                job_key=job_key, resume=True, workers=workers or 1, name=spec.name))
        with worker_pool(workers, executor) as pool:
            (estimates, blocks), stats = execute(job, store=store, executor=pool,
                                                 progress=progress, name=f"{spec.name} study")
        if isinstance(progress, Progress):
            progress.step(f"{spec.name} study: exact values and fits")
        if store is not None:
            store.close()
        return _study_outcome(spec, study, job, estimates, blocks, stats, spacings,
                              schemes, out, workers, start, t0, block_note)


def _study_outcome(spec, study, job, estimates, blocks, stats, spacings, schemes, out,
                   workers, start, t0, block_note) -> StudyOutcome:
    """Rows, fits, table and files of a finished study (inside the claimed folder)."""
    spacings = tuple(study.spacings)
    refs = {h: [_references(spec, study, h, i) for i in range(len(spec.loops))]
            for h in spacings}
    counts = np.array([job.count(b) for b in blocks], float)
    rows, fits, table_rows = [], {}, []
    for i, name in enumerate(spec.names):
        # the loop as snapped at each spacing: what heat samples exactly
        snap = [refs[h][i][schemes[0]].snapped for h in spacings]
        continuum = refs[spacings[0]][i][schemes[0]].continuum
        means = {s: np.array([[b[(h, s)].sum_re[i] / b[(h, s)].count for h in spacings]
                              for b in blocks]) for s in schemes}
        exact_errors = {s: [None if refs[h][i][s].exact is None or snap[k] is None
                            else refs[h][i][s].exact - snap[k]
                            for k, h in enumerate(spacings)] for s in schemes}
        for s in schemes:
            partner = _partner(s, schemes, exact_errors)
            paired = None
            if partner is not None:
                # the scheme against a partner on the same noise whose scheme error is
                # exact: e_s = mean(s - partner) + e_partner, with the paired error
                diff = means[s] - means[partner]
                paired = (partner, diff, _stderr_columns(diff, counts))
            # consecutive spacings, paired on the same noise
            diff_se = _stderr_columns(means[s][:, :-1] - means[s][:, 1:], counts)
            for k, h in enumerate(spacings):
                le = estimates[(h, s)].loops[i]
                exact = snap[k]
                row = _study_row(name, s, h, le, exact, _SNAPPED if exact is not None
                                 else refs[h][i][s].exact_note,
                                 refs[h][i][s].exact, refs[h][i][s].exact_method,
                                 continuum)
                if paired is not None and exact is not None:
                    partner_, diff, se = paired
                    row["scheme_error"] = float(np.average(diff[:, k], weights=counts)
                                                + exact_errors[partner_][k])
                    row["scheme_error_stderr"] = se[k]
                    row["scheme_error_kind"] = f"paired with {partner_}"
                if k + 1 < len(spacings):
                    finer = estimates[(spacings[k + 1], s)].loops[i].estimate
                    row["difference_to_finer"] = le.estimate - finer
                    row["difference_stderr"] = diff_se[k]
                rows.append(row)
                table_rows.append(_table_row(row, fmt_value))
            fits[(name, s)] = _rate(s, spacings, exact_errors, means, counts, snap, paired)
    fit_rows = []
    for (name, s), fit in fits.items():
        fit_rows.append([name, s,
                         MISSING if fit.rate is None else fmt_value(fit.rate, fit.stderr, "e"),
                         "" if fit.interval is None else
                         f"[{fit.interval[0]:.2f}, {fit.interval[1]:.2f}]",
                         get_scheme(s).rate_note if fit.theory is None else f"{fit.theory:g}",
                         fit.method, fit.note])
    table = (_render(table_rows, ["loop", "scheme", "spacing", "estimate ± error",
                                  "scheme error (vs snapped)", "snapping error",
                                  "total error (vs specified)", "z vs scheme"]) + "\n\n" +
             _render(fit_rows, ["loop", "scheme", "rate of the scheme error",
                                "95% interval", "theory", "from", "note"]))
    if block_note:
        table += f"\n\nnote: {block_note}"
    provenance = dict(versions())
    provenance.update({"start": start.isoformat(timespec="seconds"),
                       "wall_seconds": time.perf_counter() - t0, "workers": workers or 1,
                       "blocks_computed": stats.computed, "blocks_reused": stats.reused})
    results = clean({
        "name": spec.name, "spec_sha256": spec.sha256, "seed": spec.seed,
        "samples": spec.samples, "block": spec.block, "block_note": block_note,
        "n_blocks": len(blocks), "spacings": list(spacings),
        "schemes": list(schemes), "results": rows,
        "rates": [{"loop": n, "scheme": s, "rate": f.rate, "rate_stderr": f.stderr,
                   "interval": None if f.interval is None else list(f.interval),
                   "amplitude": f.amplitude, "theory": f.theory, "method": f.method,
                   "chi2_zero_bias": f.chi2_zero, "dof": f.dof, "note": f.note}
                  for (n, s), f in fits.items()],
        "provenance": provenance,
    })
    files = {}
    if out is not None:
        files["study.json"] = str(write_json_atomic(results, out / "study.json"))
        buf = io.StringIO()
        w = csv.DictWriter(buf, fieldnames=STUDY_CSV_FIELDS, extrasaction="ignore",
                           lineterminator="\n")
        w.writeheader()
        for r in results["results"]:
            w.writerow({k: "" if r.get(k) is None else r[k] for k in STUDY_CSV_FIELDS})
        files["study.csv"] = str(_write_text_atomic(buf.getvalue(), out / "study.csv"))
        files["convergence.png"] = str(plot_convergence(results, out / "convergence.png"))
    return StudyOutcome(results=results, table=table, fits=fits, files=files)


#: columns of ``study.csv`` (one row per loop, scheme and spacing; the first eight are
#: the original ones, in their order)
STUDY_CSV_FIELDS = ("loop", "scheme", "spacing", "estimate", "stderr", "exact", "bias",
                    "z", "scheme_exact", "snapped", "continuum", "scheme_error",
                    "scheme_error_stderr", "scheme_error_kind", "snapping_error",
                    "total_error", "total_error_stderr", "z_scheme",
                    "difference_to_finer", "difference_stderr", "samples")


def _study_row(name, scheme, h, le, exact, exact_method, scheme_exact,
               scheme_exact_method, continuum) -> dict:
    """One study row: the estimate, the three references and the errors between them."""
    def minus(a, b):
        return None if a is None or b is None else a - b

    if scheme_exact is not None:
        scheme_error, kind, scheme_se = minus(scheme_exact, exact), "exact", 0.0
    else:
        scheme_error, kind, scheme_se = minus(le.estimate, exact), "estimate", le.stderr
    if scheme_error is None:
        kind = None
    bias = minus(le.estimate, exact)
    good = le.stderr > 0
    return {"loop": name, "scheme": scheme, "spacing": h, "kind": "estimate",
            "estimate": le.estimate, "stderr": le.stderr,
            "exact": exact, "exact_method": exact_method,
            "bias": bias, "bias_stderr": le.stderr,
            "z": None if bias is None or not good else bias / le.stderr,
            "scheme_exact": scheme_exact, "scheme_exact_method": scheme_exact_method,
            "z_scheme": None if scheme_exact is None or not good else
            (le.estimate - scheme_exact) / le.stderr,
            "snapped": exact, "continuum": continuum,
            "scheme_error": scheme_error, "scheme_error_stderr": scheme_se if kind else None,
            "scheme_error_kind": kind,
            "snapping_error": minus(exact, continuum),
            "total_error": minus(le.estimate, continuum), "total_error_stderr": le.stderr,
            "samples": le.samples}


def _table_row(r: dict, fmt_value) -> list[str]:
    if r["scheme_error_kind"] == "exact":
        scheme_err = f"{r['scheme_error']:+.3g} (exact)"
    elif r["scheme_error_kind"] is not None:
        scheme_err = fmt_value(r["scheme_error"], r["scheme_error_stderr"], "e")
        if r["scheme_error_kind"] != "estimate":
            scheme_err += f" ({r['scheme_error_kind']})"
    else:
        scheme_err = MISSING
    snap = MISSING if r["snapping_error"] is None else f"{r['snapping_error']:+.3g} (exact)"
    return [r["loop"], r["scheme"], f"{r['spacing']:g}",
            fmt_value(r["estimate"], r["stderr"], "e"), scheme_err, snap,
            fmt_value(r["total_error"], r["total_error_stderr"], "e"),
            "" if r["z_scheme"] is None else f"{r['z_scheme']:+.2f}"]


_SNAPPED = "continuum value of the loop as snapped at this spacing (heat kernel, exact)"


def _partner(scheme: str, schemes, exact_errors: dict) -> str | None:
    """A scheme paired with ``scheme`` sample by sample (both ``noise_only``: functions
    of the cell noise alone, like ``gauss`` and ``linear``) whose scheme error is exact
    at every spacing."""
    if not get_scheme(scheme).noise_only or all(e is not None for e in exact_errors[scheme]):
        return None
    for other in schemes:
        if other != scheme and get_scheme(other).noise_only and all(
                e is not None for e in exact_errors[other]):
            return other
    return None


def _stderr_columns(x: np.ndarray, counts: np.ndarray) -> list[float]:
    """Batch-means standard error of the overall mean of each column of ``x``."""
    if x.shape[0] < 2:
        return [float("nan")] * x.shape[1]
    return [float(math.sqrt(max(v, 0.0))) for v in np.diag(_batch_cov(x, counts))]


def _rate(scheme, spacings, exact_errors, means, counts, snapped, paired) -> RateFit:
    """The rate of the scheme error: from exact lattice values where all exist; else
    from the paired difference with a partner scheme on the same noise whose error is
    exact; else from shared-noise differences between spacings. A scheme exact on
    lattice loops (heat) has no scheme error and gets no rate."""
    theory = THEORY_RATES.get(scheme)
    if all(e is not None for e in exact_errors[scheme]):
        return fit_exact_rate(spacings, exact_errors[scheme], theory=theory)
    if any(x is None for x in snapped):
        return RateFit(None, None, None, None, float("nan"), len(spacings), theory,
                       "undetermined: no exact value of the loop as snapped to measure "
                       "the scheme error against", "")
    if paired is not None:
        partner, diff, _ = paired
        fit = fit_rate(spacings, diff, counts,
                       [-e for e in exact_errors[partner]], theory=theory)
        fit.method = f"shared-noise differences with {partner}"
        return _undetermined(fit)
    return fit_difference_rate(spacings, means[scheme], counts, snapped, theory=theory)


def plot_convergence(results: dict, path: str | Path) -> Path:
    """Log-log plot against the spacing of each scheme's error relative to the loop as
    snapped (exact where the scheme's lattice value is known, else estimated, with
    error bars) and of the snapping error relative to the loop as specified, with the
    fitted power laws."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from ._report import quiet_plot_warnings, short_label

    path = Path(path)
    with quiet_plot_warnings():
        _draw_convergence(results, path, plt, short_label)
    return path


def _draw_convergence(results: dict, path: Path, plt, short_label) -> None:
    fig, ax = plt.subplots(figsize=(6.4, 4.8))
    rates = {(r["loop"], r["scheme"]): r for r in results["rates"]}
    groups: dict[tuple, list] = {}
    snapping: dict[str, list] = {}
    for r in results["results"]:
        if r.get("scheme_error") is not None:
            groups.setdefault((r["loop"], r["scheme"]), []).append(r)
        if r.get("snapping_error") is not None:
            snapping.setdefault(r["loop"], {})[r["spacing"]] = abs(r["snapping_error"])
    for (loop, scheme), rs in groups.items():
        if all(r["scheme_error"] == 0 for r in rs):
            continue  # a scheme exact on lattice loops (heat): nothing to draw
        h = np.array([r["spacing"] for r in rs])
        e = np.abs(np.array([r["scheme_error"] for r in rs]))
        se = np.array([r["scheme_error_stderr"] or 0.0 for r in rs])
        fit = rates.get((loop, scheme), {})
        exact = all(r["scheme_error_kind"] == "exact" for r in rs)
        label = f"{short_label(loop)} {scheme} ({rs[-1]['scheme_error_kind']})"
        if fit.get("rate") is not None:
            label += f": rate {fit['rate']:.2f} ± {fit['rate_stderr']:.2f}"
        line = ax.errorbar(h, np.maximum(e, 1e-16), yerr=None if exact else se,
                           marker="x" if exact else "o", ls="", capsize=3, label=label)
        if fit.get("rate") is not None and fit.get("amplitude"):
            hh = np.geomspace(h.min(), h.max(), 50)
            ax.plot(hh, abs(fit["amplitude"]) * hh ** fit["rate"], "-",
                    color=line[0].get_color(), lw=1)
    for loop, pts in snapping.items():
        hs = sorted(pts)
        ax.plot(hs, [max(pts[h], 1e-16) for h in hs], "s--", color="0.5", ms=4, lw=0.8,
                label=f"{short_label(loop)}: snapping error (exact)")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel("lattice spacing h")
    ax.set_ylabel("|error|")
    ax.set_title(f"{short_label(results['name'])}: each scheme against the loop as "
                 "snapped at h (scheme error),\nthe loop as snapped against the loop as "
                 "specified (snapping error, grey)", fontsize=9)
    if ax.get_legend_handles_labels()[1]:
        ax.legend(fontsize=7)
    else:  # every error null (precision or size limits, see the notes) or zero
        ax.text(0.5, 0.5, "no finite nonzero error to draw (see the notes in study.json)",
                transform=ax.transAxes, ha="center", va="center", fontsize=8)
    fig.tight_layout()
    fig.savefig(path, dpi=120)
    plt.close(fig)

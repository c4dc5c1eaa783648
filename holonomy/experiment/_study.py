r"""Regularization studies: the same loops at several spacings and schemes, on one coupled
noise field, with fitted convergence rates.

All (spacing, scheme) pairs of one sample read the same white noise (drawn at the
finest spacing and summed up to the coarser ones: common random numbers). Their
estimates are therefore strongly correlated, and differences between spacings are far
more precise than each estimate alone. The fit uses that: the bias vector
``e_i = W(h_i) - W_exact`` is fitted to ``C h^p`` by generalized least squares with the
covariance of ``(W(h_1), ..., W(h_k))`` estimated by batch means over the blocks [1]_
(``curve_fit`` with a 2-D ``sigma``), so the rate ``p`` comes with a standard error that
accounts for the correlation.

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
- ``heat``: exact for lattice loops at every spacing; no bias, no rate.

References
----------
.. [1] Flegal, J. M. and Jones, G. L. (2010). "Batch means and spectral variance
   estimators in Markov chain Monte Carlo." Ann. Statist. 38(2), 1034-1070.
.. [2] Levy, T. (2003). "Yang-Mills measure on compact surfaces." Mem. Amer. Math.
   Soc. 166(790) (subdivision invariance of the heat-kernel lattice measure).
.. [3] Seber, G. A. F. and Wild, C. J. (1989). "Nonlinear Regression." Wiley,
   section 2.1.4 (generalized least squares with a known covariance).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from typing import Sequence

import csv
import io
import json

import numpy as np
from scipy import optimize, stats

from holonomy import StudyProblem, run_study_block, study_schemes
from holonomy._estimate import BlockSums
from holonomy._schemes import EXPECTED_RATES, get_scheme
from noise import ArgumentError

from ._problems import build_problem
from ._progress import Progress
from ._references import loop_references
from ._report import _render, _write_text_atomic, clean, fmt_value, write_json_atomic
from ._runner import Job, _check_writable, execute, make_executor
from ._spec import Spec, SpecError
from ._store import RunStore, versions

__all__ = ["THEORY_RATES", "RateFit", "fit_rate", "StudyOutcome", "run_study",
           "plot_convergence"]

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
              resume: bool = False, progress: bool | Progress = False) -> StudyOutcome:
    """Run the study and (with ``out``) write ``study.json``, ``study.csv``,
    ``convergence.png`` and the store ``study.sqlite``; ``schemes`` defaults to the
    registry's study schemes (:func:`holonomy.study_schemes`)."""
    spacings = tuple(sorted((float(h) for h in spacings), reverse=True))
    schemes = study_schemes() if schemes is None else tuple(schemes)
    start = datetime.now(timezone.utc)
    t0 = time.perf_counter()
    base = build_problem(spec)
    try:
        study = StudyProblem(base, spacings=spacings, schemes=schemes)
    except ArgumentError as exc:
        key = {"spacings": "--spacings", "scheme": "--schemes", "schemes": "--schemes"}
        raise SpecError(key.get(exc.argument, "spec"), str(exc)) from None
    job = _study_job(study)
    own = None
    if executor is None and workers and workers > 1:
        executor = own = make_executor(workers)
    store = None
    try:
        if out is not None:
            out = Path(out)
            _check_writable(out)
            store = RunStore(out / "study.sqlite", spec_text=spec.text,
                             spec_sha256=spec.sha256,
                             job_key=f"study:{list(spacings)}:{list(schemes)}",
                             resume=resume, workers=workers or 1)
        (estimates, blocks), stats = execute(job, store=store, executor=executor,
                                             progress=progress, name=f"{spec.name} study")
        if isinstance(progress, Progress):
            progress.step(f"{spec.name} study: exact values and fits")
    finally:
        if own is not None:
            own.shutdown(cancel_futures=True)
        if store is not None:
            store.close()

    spacings = tuple(study.spacings)
    refs = {h: [_references(spec, study, h, i) for i in range(len(spec.loops))]
            for h in spacings}
    rows, fits, table_rows = [], {}, []
    counts = np.array([job.count(b) for b in blocks], float)
    for i, name in enumerate(spec.names):
        for s in schemes:
            exacts = []
            for h in spacings:
                le = estimates[(h, s)].loops[i]
                r = refs[h][i]
                # the bias is against the continuum value of the loop snapped at h
                # (what `heat` samples exactly); for an aligned loop, the loop itself
                lat = loop_references(spec, study.problems[(h, s)], i, scheme="heat") \
                    if "heat" not in r else r["heat"]
                exact = lat.exact
                exacts.append(exact)
                bias = None if exact is None else le.estimate - exact
                z = None if bias is None or not le.stderr > 0 else bias / le.stderr
                rows.append({"loop": name, "scheme": s, "spacing": h, "kind": "estimate",
                             "estimate": le.estimate, "stderr": le.stderr,
                             "exact": exact, "exact_method": lat.exact_method,
                             "bias": bias, "bias_stderr": le.stderr, "z": z,
                             "scheme_exact": r[s].exact,
                             "scheme_exact_method": r[s].exact_method,
                             "samples": le.samples})
                table_rows.append([name, s, f"{h:g}", fmt_value(le.estimate, le.stderr, "e"),
                                   "null" if exact is None else fmt_value(exact, 0, "exact"),
                                   "null" if bias is None else fmt_value(bias, le.stderr, "e"),
                                   "" if z is None else f"{z:+.2f}"])
            if any(x is None for x in exacts):
                fit = RateFit(None, None, None, None, float("nan"), len(spacings),
                              THEORY_RATES.get(s), "no exact value to measure the bias")
            else:
                bm = np.array([[b[(h, s)].sum_re[i] / b[(h, s)].count for h in spacings]
                               for b in blocks])
                fit = fit_rate(spacings, bm, counts, exacts, theory=THEORY_RATES.get(s))
            fits[(name, s)] = fit
    fit_rows = []
    for (name, s), fit in fits.items():
        fit_rows.append([name, s,
                         "null" if fit.rate is None else fmt_value(fit.rate, fit.stderr, "e"),
                         "" if fit.interval is None else
                         f"[{fit.interval[0]:.2f}, {fit.interval[1]:.2f}]",
                         get_scheme(s).rate_note if fit.theory is None else f"{fit.theory:g}",
                         fit.note])
    table = (_render(table_rows, ["loop", "scheme", "spacing", "estimate ± error",
                                  "exact", "bias ± error", "z"]) + "\n\n" +
             _render(fit_rows, ["loop", "scheme", "rate ± error", "95% interval",
                                "theory", "note"]))
    provenance = dict(versions())
    provenance.update({"start": start.isoformat(timespec="seconds"),
                       "wall_seconds": time.perf_counter() - t0, "workers": workers or 1,
                       "blocks_computed": stats.computed, "blocks_reused": stats.reused})
    results = clean({
        "name": spec.name, "spec_sha256": spec.sha256, "seed": spec.seed,
        "samples": spec.samples, "block": spec.block, "spacings": list(spacings),
        "schemes": list(schemes), "results": rows,
        "rates": [{"loop": n, "scheme": s, "rate": f.rate, "rate_stderr": f.stderr,
                   "interval": None if f.interval is None else list(f.interval),
                   "amplitude": f.amplitude, "theory": f.theory,
                   "chi2_zero_bias": f.chi2_zero, "dof": f.dof, "note": f.note}
                  for (n, s), f in fits.items()],
        "provenance": provenance,
    })
    files = {}
    if out is not None:
        files["study.json"] = str(write_json_atomic(results, out / "study.json"))
        buf = io.StringIO()
        cols = ["loop", "scheme", "spacing", "estimate", "stderr", "exact", "bias", "z"]
        w = csv.DictWriter(buf, fieldnames=cols, extrasaction="ignore", lineterminator="\n")
        w.writeheader()
        for r in results["results"]:
            w.writerow({k: "" if r.get(k) is None else r[k] for k in cols})
        files["study.csv"] = str(_write_text_atomic(buf.getvalue(), out / "study.csv"))
        files["convergence.png"] = str(plot_convergence(results, out / "convergence.png"))
    return StudyOutcome(results=results, table=table, fits=fits, files=files)


def plot_convergence(results: dict, path: str | Path) -> Path:
    """Log-log plot of |bias| against spacing per (loop, scheme), with error bars and
    the fitted power laws."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    path = Path(path)
    fig, ax = plt.subplots(figsize=(6, 4.5))
    rates = {(r["loop"], r["scheme"]): r for r in results["rates"]}
    groups: dict[tuple, list] = {}
    for r in results["results"]:
        if r["bias"] is not None:
            groups.setdefault((r["loop"], r["scheme"]), []).append(r)
    for (loop, scheme), rs in groups.items():
        h = np.array([r["spacing"] for r in rs])
        b = np.abs(np.array([r["bias"] for r in rs]))
        se = np.array([r["bias_stderr"] for r in rs])
        fit = rates.get((loop, scheme), {})
        label = f"{loop} {scheme}"
        if fit.get("rate") is not None:
            label += f": rate {fit['rate']:.2f} ± {fit['rate_stderr']:.2f}"
        line = ax.errorbar(h, np.maximum(b, 1e-16), yerr=se, marker="o", ls="",
                           capsize=3, label=label)
        if fit.get("rate") is not None:
            hh = np.geomspace(h.min(), h.max(), 50)
            ax.plot(hh, abs(fit["amplitude"]) * hh ** fit["rate"], "-",
                    color=line[0].get_color(), lw=1)
        closed = [(r["spacing"], abs(r["scheme_exact"] - r["exact"])) for r in rs
                  if r.get("scheme_exact") is not None and r["exact"] is not None
                  and r["scheme"] != "heat"]
        if closed:
            ax.plot(*zip(*closed), "x--", color=line[0].get_color(), lw=0.8, ms=5,
                    label=f"{loop} {scheme}: closed form")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel("lattice spacing h")
    ax.set_ylabel("|estimate - exact|")
    ax.set_title(f"{results['name']}: convergence to the continuum\n(one noise field for "
                 "all points: their errors are correlated; the fit uses that)", fontsize=9)
    ax.legend(fontsize=7)
    fig.tight_layout()
    fig.savefig(path, dpi=120)
    plt.close(fig)
    return path

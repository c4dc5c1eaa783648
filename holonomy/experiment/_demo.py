"""The built-in demo: a small survey of Wilson loops, written as a report.

Two groups (SU(2) with the ``physics`` metric, U(3) with ``large-n``), three loops (a
rectangle, a doubly wound circle and a figure-eight whose lobes have opposite
orientations), the schemes ``heat``, ``gauss`` and ``linear`` (and ``wilson`` for SU(2)),
each compared with the exact value of what it samples and with the continuum value;
plus the perturbative series of the rectangle against its exact value. Every run is an
ordinary spec (kept in ``DIR/specs/``) run through :func:`run_spec`, so the demo is also
an example of the Python API.

What to expect: ``heat`` agrees with the exact lattice-loop value (|z| of order 1); a
simple loop under ``gauss`` or ``wilson`` is biased at O(h^2) and the rectangle under
``linear`` at O(h) (see :mod:`holonomy.experiment._study`), small at this spacing; the
figure-eight has the value of a simple loop of the same total area (its lobes are
independent and each contributes a Casimir factor).

References
----------
.. [1] Levy, T. (2003). "Yang-Mills measure on compact surfaces." Mem. Amer. Math.
   Soc. 166(790).
.. [2] Gross, D. J. and Witten, E. (1980). Phys. Rev. D 21, 446-453.
"""

from __future__ import annotations

import os
import time
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path

import numpy as np

from discretize import Loop
from holonomy import SCHEMES, get_scheme
from holonomy.exact import exact_wilson_loop, gaussian_step
from holonomy.groups import make_group

from ._commands import series_results
from ._progress import Progress
from ._references import NOT_AVAILABLE
from ._report import MISSING, _render, _write_text_atomic, clean, fmt_value, write_json_atomic
from ._folder import claim_folder
from ._runner import run_iv, run_spec, worker_pool
from ._spec import MAX_SAMPLES, SpecError, parse_spec
from ._store import versions

__all__ = ["DEMO_GROUPS", "demo_spec_text", "run_demo", "DemoOutcome"]

#: the scenario: groups and the registered schemes the demo runs for each, in its order
DEMO_GROUPS = (("SU", 2, "physics", ("heat", "gauss", "linear", "wilson")),
               ("U", 3, "large-n", ("heat", "gauss", "linear")))

_LOOPS = '''
[[loops]]
name = "rectangle"
vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]
[[loops]]
name = "circle-x2"
circle = { center = [0.5, 0.5], radius = 0.4, sides = 32 }
turns = 2
[[loops]]
name = "figure-eight"
vertices = [[0.0, 0.0], [0.5, 0.0], [0.5, 1.0], [1.0, 1.0], [1.0, 0.5], [0.0, 0.5]]
'''


def demo_spec_text(family: str, n: int, metric: str, scheme: str, *, samples: int = 6000,
                   block: int = 750, seed: int = 20261202, spacing: float = 0.125,
                   coupling: float = 1.0) -> str:
    """The spec of one demo run (a valid spec file)."""
    return (f'name = "demo-{family}{n}-{scheme}"\n'
            f'[group]\nfamily = "{family}"\nn = {n}\nmetric = "{metric}"\n'
            f'[field]\ncoupling = {coupling}\nspacing = {spacing}\nscheme = "{scheme}"\n'
            f'{_LOOPS}'
            f'[observable]\nrep = "fundamental"\n'
            f'[run]\nsamples = {samples}\nblock = {block}\nseed = {seed}\n')


def _why_not(family: str, n: int, scheme: str) -> str:
    """Why the demo does not run ``scheme`` for ``family(n)`` (the scheme's own check)."""
    try:
        get_scheme(scheme).check(make_group(family, n))
    except (ValueError, NotImplementedError) as exc:
        return str(exc)
    return "left out to keep the demo short"


@dataclass
class DemoOutcome:
    results: dict
    table: str
    plots: list[str] = field(default_factory=list)
    files: dict[str, str] = field(default_factory=dict)


def _series_part(out: Path):
    """Series of the SU(2) rectangle vs its exact value; (dict, plot path or None)."""
    text = demo_spec_text("SU", 2, "physics", "linear")
    spec = parse_spec(text, name="demo-series")
    order = 4
    try:
        row = series_results(spec, order, loops=[0])["results"][0]
    except (SpecError, ArithmeticError) as exc:  # an optional part of the demo: a note
        row = {"coefficients": None, "rationals": None,
               "note": f"{NOT_AVAILABLE} ({type(exc).__name__}: {exc})"}
    info = {"loop": "rectangle", "group": "SU(2)", "order": order,
            "coefficients": row["coefficients"], "rationals": row["rationals"],
            "note": row["note"], "kind": "series"}
    if row["coefficients"] is None:
        info["note"] = row["note"] or NOT_AVAILABLE
        return info, None
    # What the series expands is the linear scheme on the grid: the rectangle sits on
    # the reference line, so its exact value is the product over its 8 columns of one
    # Gaussian step of variance lambda * h * 0.5 (see _references._gaussian_value);
    # the continuum value exp(-c lambda A / 2) differs from it at order lambda^2.
    try:
        g = make_group("SU", 2, "physics")
        loop = Loop.polygon([(0, 0), (1, 0), (1, 0.5), (0, 0.5)])
        lams = np.linspace(0.0, 3.0, 31)
        lattice = [float(np.real(gaussian_step("SU", 2, l * spec.spacing * 0.5, g.k)))
                   ** round(1.0 / spec.spacing) for l in lams]
        exact = [complex(exact_wilson_loop(g, "fundamental", loop, coupling=float(l)).value).real
                 if l > 0 else 1.0 for l in lams]
    except (ValueError, NotImplementedError, ArithmeticError) as exc:  # no plot, a note
        info["note"] = f"exact curve not available ({exc})"
        return info, None
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    coef = np.asarray(row["coefficients"], float)
    fig, ax = plt.subplots(figsize=(6, 4))
    ax.plot(lams, lattice, "k-", lw=2, label="exact, linear scheme at h = 0.125 "
            "(what the series expands)")
    ax.plot(lams, exact, ":", color="0.4", lw=1.5, label="exact, continuum (for reference)")
    for m in range(1, order + 1):
        ax.plot(lams, np.polyval(coef[: m + 1][::-1], lams), "--", lw=1,
                label=f"series to order {m}")
    ax.set_xlabel("coupling lambda")
    ax.set_ylabel("Wilson loop")
    ax.set_ylim(-0.2, 1.1)
    ax.set_title("SU(2) rectangle: Wick series of the linear scheme (h = 0.125)\n"
                 "against the scheme's exact value", fontsize=9)
    ax.legend(fontsize=7)
    fig.tight_layout()
    path = out / "series.png"
    fig.savefig(path, dpi=110)
    plt.close(fig)
    info["lattice_exact_at_1"] = float(lattice[10])
    info["continuum_at_1"] = float(exact[10])
    info["series_at_1"] = float(coef.sum())
    return info, str(path)


def _survey_plot(rows: list[dict], label: str, path: Path) -> str:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    rows = [r for r in rows if r["group"] == label]
    loops = list(dict.fromkeys(r["loop"] for r in rows))
    schemes = list(dict.fromkeys(r["scheme"] for r in rows))
    fig, ax = plt.subplots(figsize=(7, 5))
    width = 0.8 / max(len(schemes), 1)
    for j, s in enumerate(schemes):
        xs, ys, es, xe, ye = [], [], [], [], []
        for i, lp in enumerate(loops):
            for r in rows:
                if r["loop"] == lp and r["scheme"] == s and r["continuum"] is not None:
                    x = i - 0.4 + width * (j + 0.5)
                    xs.append(x)
                    ys.append(r["estimate"] - r["continuum"])
                    es.append(2 * r["stderr"])
                    if r["exact"] is not None:
                        xe.append(x)
                        ye.append(r["exact"] - r["continuum"])
        line = ax.errorbar(xs, ys, yerr=es, fmt="o", capsize=3,
                           label=f"{s}: estimate ± 2 se")
        if xe:
            ax.plot(xe, ye, "x", ms=9, color=line[0].get_color(),
                    label=f"{s}: exact value of the scheme")
    ax.axhline(0.0, color="k", lw=1, label="exact (continuum)")
    ax.set_xticks(np.arange(len(loops)), loops)
    ax.set_ylabel("Wilson loop minus its continuum value")
    ax.set_title(f"{label}: estimates by scheme against exact values")
    ax.legend(fontsize=6, ncol=3, loc="upper center", bbox_to_anchor=(0.5, -0.08))
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)
    return str(path)


def _z_plot(rows: list[dict], path: Path) -> str:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    zs = [(f"{r['group']} {r['scheme']} {r['loop']}", r["z"]) for r in rows
          if r["z"] is not None]
    fig, ax = plt.subplots(figsize=(7, 0.25 * len(zs) + 1.2))
    ax.barh(range(len(zs)), [z for _, z in zs], color="tab:blue")
    ax.axvspan(-2, 2, color="0.9", zorder=0)
    ax.axvline(0, color="k", lw=0.8)
    ax.set_yticks(range(len(zs)), [n for n, _ in zs], fontsize=7)
    ax.set_xlabel("z = (estimate - exact) / stderr")
    ax.set_title("Estimates against the exact value of what each scheme samples")
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)
    return str(path)


def run_demo(out: str | Path = "whitegauge-demo", *, workers: int | None = None,
             executor=None, progress: bool | Progress = False, samples: int = 6000,
             fresh: bool = False) -> DemoOutcome:
    """Run the demo survey and write ``report.md``, PNG plots and ``results.json``.

    ``out`` belongs to the demo (see :func:`run_spec`): a folder holding another
    command's files is refused unless ``fresh``.
    """
    if out is None:
        raise TypeError("`out` must be a folder path (str or os.PathLike); got None.")
    out, executor, workers = run_iv(out=out, executor=executor, workers=workers,
                                    flags={"fresh": fresh}, progress=progress)
    rule = f"an integer from 2 to {MAX_SAMPLES:.0e} (run.samples' limit)"
    if isinstance(samples, bool) or not isinstance(samples, int):
        raise TypeError(f"`samples` must be {rule}; got {samples!r}.")
    if not 2 <= samples <= MAX_SAMPLES:
        raise ValueError(f"`samples` must be {rule}; got {samples!r}.")
    if workers is None:
        workers = min(2, os.cpu_count() or 1)
    with claim_folder(out, command="demo", identity=f"demo:{samples}",
                      name="whitegauge-demo", fresh=fresh):
        return _run_demo(out, workers, executor, progress, samples)


def _run_demo(out: Path, workers: int, executor, progress: bool | Progress,
              samples: int) -> DemoOutcome:
    (out / "specs").mkdir(exist_ok=True)
    start = datetime.now(timezone.utc)
    t0 = time.perf_counter()
    rows, runs = [], []
    omitted = [(f"{family}({n})", s, _why_not(family, n, s)) for family, n, _, schemes
               in DEMO_GROUPS for s in SCHEMES if s not in schemes]
    plan = []
    for family, n, metric, schemes in DEMO_GROUPS:
        for scheme in schemes:
            text = demo_spec_text(family, n, metric, scheme, samples=samples)
            name = f"demo-{family}{n}-{scheme}"
            (out / "specs" / f"{name}.toml").write_text(text)
            plan.append((f"{family}({n})", metric, parse_spec(text, name=name)))
    # one bar for the whole demo: every run's blocks, then the series and the plots
    bar = progress if isinstance(progress, Progress) else Progress(enabled=bool(progress))
    bar.fixed, bar.total = True, bar.total + sum(-(-sp.samples // sp.block)
                                                 for _, _, sp in plan)
    with worker_pool(workers, executor) as pool:
        for label, metric, spec in plan:
            res = run_spec(spec, out=out / "runs" / spec.name, executor=pool,
                           progress=bar, fresh=True).results
            runs.append({"name": spec.name, "spec_sha256": res["spec_sha256"]})
            for r in res["results"]:
                rows.append(dict(r, group=label, metric=metric))
    bar.step("demo: perturbative series and plots")
    series, series_plot = _series_part(out)
    plots = [_survey_plot(rows, f"{f}({n})", out / f"survey-{f}{n}.png")
             for f, n, _, _ in DEMO_GROUPS]
    plots.append(_z_plot(rows, out / "z-scores.png"))
    if series_plot:
        plots.append(series_plot)

    table_rows = []
    for r in rows:
        z = "" if r["z"] is None else f"{r['z']:+.2f}"
        note = "" if r["exact"] is not None else (r.get("exact_note") or NOT_AVAILABLE)
        table_rows.append([r["group"], r["loop"], r["scheme"],
                           fmt_value(r["estimate"], r["stderr"], "estimate"),
                           fmt_value(r["exact"], 0, "exact"), z,
                           fmt_value(r["continuum"], 0, "exact"), note])
    for label, scheme, why in omitted:
        table_rows.append([label, "(all)", scheme, MISSING, MISSING, "", MISSING,
                           f"not run: {why}"])
    table = _render(table_rows, ["group", "loop", "scheme", "estimate ± error",
                                 "exact (scheme)", "z", "exact (continuum)", "note"])
    if series["coefficients"] is not None:
        coefs = ", ".join(series["rationals"] or [f"{c:.10g}" for c in series["coefficients"]])
        kind = "exact rationals" if series["rationals"] else "floats, exact up to rounding"
        table += (f"\n\nseries (SU(2) rectangle, linear scheme, h = 0.125): c_0..c_"
                  f"{series['order']} = {coefs} ({kind})")
    else:
        table += f"\n\nseries (SU(2) rectangle): {MISSING} ({series['note']})"
    no_z = [f"{r['group']} {r['scheme']} {r['loop']}: {r.get('exact_note') or NOT_AVAILABLE}"
            for r in rows if r["z"] is None]

    provenance = dict(versions())
    provenance.update({"start": start.isoformat(timespec="seconds"),
                       "wall_seconds": time.perf_counter() - t0, "workers": workers})
    results = clean({"name": "whitegauge-demo", "samples": samples, "runs": runs,
                     "results": rows, "series": series, "provenance": provenance})
    files = {"results.json": str(write_json_atomic(results, out / "results.json"))}
    report = [
        "# whitegauge demo: a survey of Wilson loops", "",
        f"Generated {provenance['start']} in {provenance['wall_seconds']:.1f} s on "
        f"{workers} worker(s); whitegauge {provenance['whitegauge']}, numpy "
        f"{provenance['numpy']}, scipy {provenance['scipy']}, Python {provenance['python']}.",
        "",
        "Groups: SU(2) with the `physics` metric (k = 2) and U(3) with `large-n` "
        "(k = 3); coupling 1, lattice spacing 0.125, fundamental representation, "
        f"{samples} samples per run. Loops: a 1 x 0.5 rectangle, a circle of radius 0.4 "
        "wound twice, and a figure-eight of two 0.5 x 0.5 squares with opposite orientations, crossing at (0.5, 0.5).",
        "",
        "`exact (scheme)` is the exact value of what the scheme samples (`heat`: the "
        "continuum value of the loop as snapped to the lattice; `gauss`, `wilson`: the "
        "lattice closed form where one is known; otherwise — with the reason in the "
        "note). `exact (continuum)` is "
        "the loop as specified. `z = (estimate - exact) / stderr`.",
        "", "```", table, "```", "",
        "![SU(2) survey](survey-SU2.png)", "", "![U(3) survey](survey-U3.png)", "",
        "![z-scores](z-scores.png)", "",
    ]
    if no_z:
        report += ["Not in the z-score plot (no exact value of what the scheme samples, "
                   "so no z):", ""] + [f"- {line}" for line in no_z] + [""]
    if omitted:
        report += ["Not run:", ""] + [f"- {label} {scheme}: {why}"
                                      for label, scheme, why in omitted] + [""]
    if series_plot:
        report += ["## Perturbative series", "",
                   "The Wick series of the SU(2) rectangle in the linear scheme on the "
                   "grid (h = 0.125) against the exact value of that scheme (the "
                   "rectangle sits on the reference line: a product of one Gaussian "
                   "step per column); the continuum value exp(-3 lambda A / 8) is drawn "
                   "for reference and differs from order lambda^2 on.", "",
                   "![series](series.png)", ""]
    report += ["Each run is an ordinary spec in `specs/`; rerun one with "
               "`whitegauge run specs/<name>.toml`.", ""]
    files["report.md"] = str(_write_text_atomic("\n".join(report), out / "report.md"))
    if bar is not progress:
        bar.close()
    return DemoOutcome(results=results, table=table, plots=plots, files=files)

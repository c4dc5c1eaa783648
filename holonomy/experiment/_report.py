"""Results objects, files and tables: ``results.json`` (written atomically),
``results.csv``, ``report.md`` and PNG plots (matplotlib, Agg backend).

The results object (a contract)::

    {"name", "spec_sha256", "seed", "samples", "block",
     "results": [{"loop", "rep", "estimate", "estimate_imag", "stderr", "exact",
                  "exact_method", "z", "continuum", "area", "samples", ...}],
     "provenance": {"whitegauge", "numpy", "scipy", "python", "start",
                    "wall_seconds", "workers", ...}}

Extra per-loop fields: ``kind`` (``"estimate"``), ``scheme``, ``stderr_imag``,
``stderr_batch`` (batch means), ``drift`` (distance of the sampled holonomies from the
group), ``area_error`` (lattice area minus the specified area, signed total),
``max_face_area_error`` (the largest relative area error over the faces of the loop as
specified, so the two lobes of a figure eight are judged by their own areas),
``snapped`` (the continuum value of the loop as snapped to the lattice),
``snapping_error`` (``snapped - continuum``), ``warning`` (set when the snapping error
exceeds ``stderr``), ``continuum_method``, and ``exact_note``/``continuum_note`` saying
why a reference is null. Non-finite numbers are written as null.

``z = (estimate - exact) / stderr``: with a correct sampler it is a draw from about
N(0, 1) (central limit theorem), so |z| > 4 flags a problem.

``correlators`` (one entry per ``[[correlators]]`` of the spec): ``loops`` (names),
``kind`` (``"correlator"``), ``formal`` (true for a signed density: a complex-rotation
estimate of the formal expectation), ``estimate``, ``estimate_imag``, ``stderr`` of
``E[prod_i W(i)]``; ``connected``, ``connected_imag``, ``connected_stderr`` of its
connected part (the joint cumulant; ``E[W1 W2] - E[W1] E[W2]`` for two loops; error by
the delta method); ``exact``, ``exact_imag``, ``exact_connected``, ``exact_method``,
``exact_note`` (what the scheme samples, or null with the reason); ``z`` and
``z_connected`` against them; ``samples``.
"""

from __future__ import annotations

import contextlib
import csv
import io
import json
import math
import os
import tempfile
from pathlib import Path
from typing import Any, Sequence

from ._faults import fault_point
from ._references import correlator_references, loop_references

__all__ = ["printable", "short_label", "quiet_plot_warnings", "build_results",
           "correlator_rows", "write_results", "write_json_atomic", "format_table",
           "format_exact_table", "format_series_table", "fmt_value", "clean", "MISSING"]


def clean(obj: Any) -> Any:
    """A JSON-safe copy: numpy scalars to Python, non-finite floats to None."""
    if isinstance(obj, dict):
        return {str(k): clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [clean(v) for v in obj]
    if hasattr(obj, "item") and not isinstance(obj, (str, bytes)):
        try:
            obj = obj.item()
        except ValueError:       # an array of several values: keep it
            pass
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    return obj


def _z(estimate: float, exact: float | None, stderr: float) -> float | None:
    if exact is None or not (stderr > 0) or not math.isfinite(stderr):
        return None
    return (estimate - exact) / stderr


def _difference(a: float | None, b: float | None) -> float | None:
    return None if a is None or b is None else a - b


def _snapping_warning(ref, stderr: float) -> str | None:
    """A warning when snapping the loop to the lattice moves its value by more than the
    estimate's statistical error: the estimate then measures the lattice loop, not the
    loop as specified, to better than it can tell them apart."""
    err = _difference(ref.snapped, ref.continuum)
    if err is None or not (stderr > 0) or abs(err) <= stderr:
        return None
    return (f"snapping error {err:+.3g} (the loop as snapped minus as specified) exceeds "
            f"the statistical error {stderr:.3g}: use a finer spacing to measure the loop "
            "as specified")


#: an effective sample size below this fraction of the samples is warned about
ESS_WARNING_FRACTION = 0.01


def _surface_fields(spec, le) -> tuple[dict, str | None]:
    """What a closed-surface estimate is (``estimate_note``), its effective sample size
    and mean weight, and a warning when the weights leave less than
    :data:`ESS_WARNING_FRACTION` of the samples effective."""
    if not spec.closed:
        return {}, None
    warn = None
    if le.ess is not None and le.ess < ESS_WARNING_FRACTION * le.samples:
        warn = (f"effective sample size {le.ess:.4g} is below "
                f"{100 * ESS_WARNING_FRACTION:g} % of the {le.samples} samples: the weights "
                "are dominated by a few samples and the error bars are unreliable "
                "(the outer face is small against the coupling: a larger surface.area, a "
                "smaller field.coupling, or more samples)")
    return {"estimate_note": (f"estimate, {spec.scheme} scheme, reweighted to the "
                              f"{spec.surface} of area {spec.total_area:g} (genus "
                              f"{spec.genus})"),
            "ess": le.ess, "weight_mean": le.weight_mean,
            "weight_stderr": le.weight_stderr}, warn


def _join(*texts) -> str | None:
    kept = [t for t in texts if t]
    return "; ".join(kept) if kept else None


def build_results(spec, problem, estimate, provenance: dict, *,
                  references: Sequence | None = None) -> dict:
    """The results object of a run of ``spec`` (see the module docstring)."""
    if references is None:
        references = [loop_references(spec, problem, i) for i in range(len(spec.loops))]
    rows, warnings = [], []
    for i, (le, ref) in enumerate(zip(estimate.loops, references)):
        surf, ess_warning = _surface_fields(spec, le)
        if ess_warning:
            warnings.append(f"{le.name}: {ess_warning}")
        rows.append({
            "loop": le.name,
            "rep": spec.rep,
            # a signed density: a formal value, estimated by complex rotation
            "kind": "formal estimate" if spec.signed else "estimate",
            "formal": bool(spec.signed),
            "scheme": estimate.scheme,
            "estimate": le.estimate,
            "estimate_imag": le.estimate_imag,
            "stderr": le.stderr,
            "stderr_imag": le.stderr_imag,
            "stderr_batch": le.stderr_batch,
            "exact": ref.exact,
            "exact_method": ref.exact_method,
            "z": _z(le.estimate, ref.exact, le.stderr),
            "continuum": ref.continuum,
            "continuum_method": ref.continuum_method,
            "area": le.area,
            "area_error": float(problem.area_errors[i]),
            "max_face_area_error": problem.lattice_loops[i].max_face_area_error,
            "snapped": ref.snapped,
            "snapping_error": _difference(ref.snapped, ref.continuum),
            "warning": _join(_snapping_warning(ref, le.stderr), ess_warning),
            "samples": le.samples,
            "drift": le.drift,
            "reprojected": le.reprojected,
            "exact_note": ref.exact_note,
            "continuum_note": ref.continuum_note,
            "gaussian_matrix": ref.gaussian_matrix,
            "gaussian_matrix_note": ref.gaussian_matrix_note,
            **surf,
        })
    surface = {"surface": {"kind": spec.surface, "genus": spec.genus,
                           "area": spec.total_area}} if spec.closed else {}
    return clean({
        "name": spec.name,
        "spec_sha256": spec.sha256,
        "seed": spec.seed,
        "samples": spec.samples,
        "block": spec.block,
        "n_blocks": estimate.n_blocks,
        "group": {"family": spec.family, "n": spec.n, "metric": spec.metric},
        "field": {"coupling": spec.coupling, "spacing": spec.spacing,
                  "gauge": spec.gauge, "reference": spec.reference,
                  "scheme": spec.scheme, "path": estimate.path},
        **surface,
        "results": rows,
        "warnings": warnings,
        "correlators": correlator_rows(spec, problem, estimate),
        "seed_record": {"entropy": spec.seed, "spawn_key": "(block,)",
                        "blocks": estimate.n_blocks},
        "provenance": provenance,
    })


def correlator_rows(spec, problem, estimate=None) -> list[dict]:
    """One entry per ``[[correlators]]`` of ``spec``: the estimates (when ``estimate``
    is given) and the exact values with their ``z``."""
    rows = []
    ests = list(getattr(estimate, "correlator_estimates", []) or [])
    for k, idx in enumerate(spec.correlator_indices):
        ref = correlator_references(problem, idx, scheme=spec.scheme)
        row = {"loops": list(spec.correlators[k]), "kind": "correlator",
               "formal": bool(spec.signed), "scheme": spec.scheme, "exact": ref.exact, "exact_imag": ref.exact_imag,
               "exact_connected": ref.exact_connected, "exact_method": ref.exact_method,
               "exact_note": ref.exact_note}
        if k < len(ests):
            ce = ests[k]
            row.update({"estimate": ce.estimate, "estimate_imag": ce.estimate_imag,
                        "stderr": ce.stderr, "connected": ce.connected,
                        "connected_imag": ce.connected_imag,
                        "connected_stderr": ce.connected_stderr,
                        "z": _z(ce.estimate, ref.exact, ce.stderr),
                        "z_connected": _z(ce.connected, ref.exact_connected,
                                          ce.connected_stderr),
                        "samples": ce.samples})
        rows.append(row)
    return rows


def _file_mode() -> int:
    """The mode a plain ``open(path, "w")`` would give: 0666 minus the umask (0644
    under the usual umask 022). ``mkstemp`` makes its files 0600, which would hide
    results from the group and others."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def _temporary(path: Path) -> tuple[int, str]:
    """A temporary file beside ``path`` (same filesystem: the rename is atomic), with
    the ordinary file mode."""
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    os.fchmod(fd, _file_mode())
    return fd, tmp


def write_json_atomic(obj: Any, path: str | Path) -> Path:
    """Write ``obj`` as JSON to ``path`` through a temporary file and ``os.replace``,
    so a reader never sees a half-written file. The file gets the mode ``open`` would
    give it (0644 under umask 022)."""
    path = Path(path)
    fd, tmp = _temporary(path)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            json.dump(clean(obj), fh, indent=2, allow_nan=False)
            fh.write("\n")
            fh.flush()
            os.fsync(fh.fileno())
        fault_point("json-replace")  # test hook: a kill here leaves only the temp file
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path


#: columns of ``results.csv``, one row per loop (the first sixteen are the original
#: columns, in their order; later ones are appended): ``group`` is like ``SU(2)``,
#: ``metric`` the spec's metric, ``spacing`` the lattice spacing; an empty cell is a null
_CSV_FIELDS = ("loop", "rep", "kind", "scheme", "estimate", "estimate_imag", "stderr",
               "stderr_batch", "exact", "exact_method", "z", "continuum", "area",
               "area_error", "samples", "drift", "group", "metric", "spacing", "snapped",
               "snapping_error", "max_face_area_error", "warning", "connected",
               "connected_stderr", "exact_connected", "z_connected", "ess", "weight_mean",
               "weight_stderr")


def _write_text_atomic(text: str, path: Path) -> Path:
    fd, tmp = _temporary(path)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path


def _csv_cell(value: Any) -> Any:
    if value is None:
        return ""
    return repr(value) if isinstance(value, float) else value


def results_csv(results: dict) -> str:
    """``results.csv``: the columns :data:`_CSV_FIELDS`, one row per loop."""
    group = results.get("group") or {}
    fld = results.get("field") or {}
    common = {"group": f"{group['family']}({group['n']})" if group else None,
              "metric": group.get("metric"), "spacing": fld.get("spacing")}
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=_CSV_FIELDS, extrasaction="ignore",
                       lineterminator="\n")
    w.writeheader()
    for row in results["results"]:
        full = {**common, **{k: v for k, v in row.items() if v is not None}}
        w.writerow({k: _csv_cell(full.get(k)) for k in _CSV_FIELDS})
    # correlators after the loops: ``loop`` names the loops joined by "*"
    for row in results.get("correlators") or []:
        full = {**common, **{k: v for k, v in row.items() if v is not None},
                "loop": "*".join(row["loops"]), "rep": None}
        w.writerow({k: _csv_cell(full.get(k)) for k in _CSV_FIELDS})
    return buf.getvalue()


def write_results(results: dict, out: str | Path) -> dict[str, str]:
    """Write ``results.json`` and ``results.csv`` into ``out``; return their paths."""
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    j = write_json_atomic(results, out / "results.json")
    c = _write_text_atomic(results_csv(results), out / "results.csv")
    return {"results.json": str(j), "results.csv": str(c)}


# --------------------------------------------------------------------------- tables

def _digits(err: float | None) -> int:
    if err is None or not math.isfinite(err) or err <= 0:
        return 6
    return max(1, min(12, 1 - int(math.floor(math.log10(err)))))


#: what a table shows for a missing value (the row's note says why it is missing)
MISSING = "—"


def fmt_value(value: float | None, err: float | None, kind: str) -> str:
    """``value ± err`` rounded to the error's second significant digit; an exact value
    alone (it has no error); :data:`MISSING` for a missing one."""
    if value is None:
        return MISSING
    if kind == "exact":
        return f"{value:.10g}"
    d = _digits(err)
    if err is None or not math.isfinite(err):
        return f"{value:.{d}f} ± ?"
    return f"{value:.{d}f} ± {err:.{d}f}"


def printable(text: str) -> str:
    """``text`` with every non-printable character (controls such as ESC or BEL, bidi
    overrides such as U+202E, line breaks) escaped as in a Python literal: names are
    data, and a terminal must show them, not obey them."""
    text = str(text)
    if text.isprintable():
        return text
    return "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)


def short_label(text: str, limit: int = 40) -> str:
    """A name for a plot: escaped, and shortened to ``limit`` characters with an
    ellipsis (the files keep it in full)."""
    text = printable(text)
    return text if len(text) <= limit else text[: limit - 1] + "\u2026"


@contextlib.contextmanager
def quiet_plot_warnings():
    """Plots carry user-chosen names: a glyph the font lacks is drawn as a box and a
    layout that cannot be tightened is kept as is. Neither is worth a warning on stderr
    (labels are shortened by :func:`short_label`; the files keep every name in full)."""
    import warnings

    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=r"Glyph \d+ .*missing from",
                                category=UserWarning)
        warnings.filterwarnings("ignore", message=r".*[Tt]ight.?layout", category=UserWarning)
        yield


def _render(rows: list[list[str]], header: list[str]) -> str:
    rows = [[printable(c) for c in r] for r in rows]
    widths = [max(len(r[c]) for r in [header] + rows) for c in range(len(header))]
    line = lambda r: "  ".join(s.ljust(w) for s, w in zip(r, widths)).rstrip()
    return "\n".join([line(header), line(["-" * w for w in widths])] +
                     [line(r) for r in rows])


def format_table(results: dict) -> str:
    """One row per number: loop, what it is (estimate / exact / continuum), value with
    its error, and where it comes from."""
    if not isinstance(results, dict) or not isinstance(results.get("results"), list):
        raise TypeError("`results` must be the results object of a run (a dict with a "
                        f"'results' list, RunOutcome.results); got {type(results).__name__}.")
    rows = []
    for r in results["results"]:
        z = "" if r.get("z") is None else f"z = {r['z']:+.2f} vs exact"
        how = r.get("estimate_note") or r.get("scheme", "")
        ess = "" if r.get("ess") is None else f" (ess {r['ess']:.4g})"
        rows.append([r["loop"], r.get("kind", "estimate"),
                     fmt_value(r["estimate"], r["stderr"], "est"),
                     f"{how}, {r['samples']} samples{ess}; {z}".rstrip("; ")])
        rows.extend(_reference_rows(r))
        if r.get("warning"):
            rows.append(["", "warning", "", r["warning"]])
    rows.extend(_correlator_table_rows(results.get("correlators") or []))
    return _render(rows, ["loop", "kind", "value ± error", "note"])


def _correlator_table_rows(entries: list[dict]) -> list[list[str]]:
    """Per correlator: the estimate and its connected part (when sampled), then the
    exact values or why they are missing."""
    rows = []
    for c in entries:
        name = "*".join(c["loops"])
        formal = " (formal)" if c.get("formal") else ""
        first = True
        if c.get("estimate") is not None:
            z = "" if c.get("z") is None else f"; z = {c['z']:+.2f} vs exact"
            how = "complex rotation, " if c.get("formal") else ""
            rows.append([name, "correlator estimate" + formal,
                         fmt_value(c["estimate"], c["stderr"], "est"),
                         f"E[prod W], {how}{c.get('samples')} samples{z}"])
            zc = "" if c.get("z_connected") is None else \
                f"; z = {c['z_connected']:+.2f} vs exact"
            rows.append(["", "connected estimate" + formal,
                         fmt_value(c["connected"], c["connected_stderr"], "est"),
                         f"joint cumulant, delta-method error{zc}"])
            first = False
        why = c.get("exact_note") or "not available for these loops"
        rows.append([name if first else "", "correlator exact" + formal,
                     fmt_value(c.get("exact"), 0.0, "exact"),
                     c.get("exact_method") if c.get("exact") is not None else why])
        rows.append(["", "connected exact" + formal, fmt_value(c.get("exact_connected"), 0.0, "exact"),
                     "joint cumulant of the exact moments" if
                     c.get("exact_connected") is not None else why])
    return rows


def _area_note(r: dict) -> str:
    note = f"area error {r.get('area_error') or 0.0:+.3g}"
    if r.get("max_face_area_error") is not None:
        note += f" (largest per face {100 * r['max_face_area_error']:.2g} %)"
    return note


def _gaussian_matrix_row(r: dict) -> list[str]:
    """The Gaussian-matrix prescription beside the exact value, with the first order
    at which their series differ."""
    g = r.get("gaussian_matrix")
    if g is None:
        return ["", "gaussian matrix", MISSING,
                r.get("gaussian_matrix_note") or "not available for this loop"]
    if g.get("first_difference") is None:
        diff = f"the same series as the exact value up to order {g['order']}"
    else:
        j = g["first_difference"]
        diff = (f"differs from the exact value at order lambda^{j}: c_{j} = "
                f"{g['gaussian_coefficient']:.6g} vs {g['exact_coefficient']:.6g}")
    value = MISSING if g.get("value") is None else fmt_value(g["value"], 0.0, "exact")
    return ["", "gaussian matrix", value,
            f"one Gaussian exponential of the loop's area {g['area']:.6g}; {diff}"]


def _reference_rows(r: dict) -> list[list[str]]:
    """The exact and continuum rows of a loop, with what they are or why missing."""
    formal = " (formal)" if r.get("formal") else ""
    rows = [["", "exact" + formal, fmt_value(r.get("exact"), 0.0, "exact"),
             r.get("exact_method") if r.get("exact") is not None else
             (r.get("exact_note") or "not available for this loop")]]
    if r.get("continuum") is not None:
        rows.append(["", "exact (continuum)" + formal,
                     fmt_value(r["continuum"], 0.0, "exact"),
                     f"{r.get('continuum_method') or ''}; loop as specified, "
                     f"{_area_note(r)}"])
    else:
        rows.append(["", "exact (continuum)" + formal, MISSING, r.get("continuum_note") or
                     "not available for this loop"])
    if "gaussian_matrix" in r:
        rows.append(_gaussian_matrix_row(r))
    return rows


def format_exact_table(obj: dict) -> str:
    rows = []
    for r in obj["results"]:
        first, *rest = _reference_rows(r)
        rows.append([r["loop"]] + first[1:])
        rows.extend(rest)
    rows.extend(_correlator_table_rows(obj.get("correlators") or []))
    return _render(rows, ["loop", "kind", "value", "method"])


def _coef(values, m: int) -> str:
    """One float coefficient, or the missing mark (none, or beyond double precision:
    the exact rationals beside it hold it)."""
    return MISSING if not values or values[m] is None else f"{values[m]:.12g}"


def format_series_table(obj: dict) -> str:
    """The coefficients of the scheme's series and of the continuum series side by
    side, each column saying what it expands; notes for what is missing."""
    results = obj["results"]
    formal = " (formal)" if obj.get("formal") else ""
    expands = next((r.get("expands") for r in results if r.get("expands")), None) \
        or obj.get("scheme", "series")
    head = ["loop", "term", f"series: {expands}{formal}", "exact",
            f"continuum: loop as specified{formal}", "exact"]
    rows, notes = [], []
    for r in results:
        coef, cont = r.get("coefficients"), r.get("continuum")
        n = len(coef or cont or [None])
        rats = r.get("rationals") or [None] * n
        crats = r.get("continuum_rationals") or [None] * n
        for m in range(n):
            rows.append([r["loop"] if m == 0 else "", f"c_{m}" if (coef or cont) else "",
                         _coef(coef, m), rats[m] or "", _coef(cont, m), crats[m] or ""])
        if coef is None and cont is None and r.get("note") == r.get("continuum_note"):
            notes.append(f"{r['loop']}: series and continuum: {r.get('note') or 'not available'}")
            continue
        if coef is None:
            notes.append(f"{r['loop']}: series: {r.get('note') or 'not available'}")
        elif r.get("rationals") is None and r.get("rationals_note"):
            notes.append(f"{r['loop']}: {r['rationals_note']}")
        if cont is None:
            notes.append(f"{r['loop']}: continuum: "
                         f"{r.get('continuum_note') or 'not available'}")
        if r.get("asymptotic"):
            notes.append(f"{r['loop']}: the series is asymptotic (it misses terms like "
                         "exp(-const/lambda) and does not converge)")
    text = _render(rows, head)
    lines = [f"coefficients c_m of E[W](lambda) = sum_m c_m lambda^m, in the coupling "
             f"lambda{'; formal: the density changes sign, no measure exists' if formal else ''}",
             text]
    surface = obj.get("surface")
    if surface and surface.get("kind") not in (None, "plane"):
        lines.insert(1, f"on the {surface['kind']} (genus {surface['genus']}) of total area "
                     f"T = {surface['area']:g}: {obj.get('sector_note')}")
    if notes:
        lines.append("\n".join(notes))
    return "\n".join(lines)

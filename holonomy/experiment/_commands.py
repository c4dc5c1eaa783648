"""The objects of the ``exact`` and ``series`` commands (no sampling): per loop the
exact value of what the spec's scheme samples and the continuum value, or the
perturbative coefficients of the scheme's series route, each null with a note where
no route applies.
"""

from __future__ import annotations

import math
import multiprocessing as mp
import numbers
import os
import time
from typing import Iterable, Sequence

import numpy as np

from holonomy import LatticeProblem, exact_series, get_scheme, lattice_covariance, surface_series
from holonomy._continuum_series import SECTOR_NOTE
from holonomy._lattice_series import gauss_loadings
from holonomy._series import MAX_SERIES_ORDER, _key_graph, series_order_iv
from holonomy.exact import ExactRouteError, exact_master_field, master_field_series

from ._problems import build_lattice
from ._progress import Progress
from ._references import NOT_AVAILABLE, loop_references
from ._report import clean, correlator_rows
from ._runner import worker_init
from ._spec import Spec, SpecError, spec_arg

__all__ = ["exact_results", "series_results", "geometry_problem", "MAX_SERIES_ORDER",
           "SERIES_BUDGET", "RATIONAL_STEPS", "SeriesBudgetExceeded", "budget_limited"]


def geometry_problem(spec: Spec) -> LatticeProblem:
    """The lattice problem of ``spec`` (group, grid, lattice loops, areas): what the
    non-sampling commands need (it never samples, so a signed density is fine)."""
    return build_lattice(spec)


def exact_results(spec: Spec | str | os.PathLike) -> dict:
    """The ``exact`` command's object: per loop the exact value of what the spec's
    scheme samples (or null with a note) and the continuum value of the loop.
    ``spec`` is a :class:`Spec` or the path of a spec file."""
    spec = spec_arg(spec, "exact")
    problem = geometry_problem(spec)
    if spec.large_n:
        return _master_field_results(spec, problem)
    rows = []
    for i, name in enumerate(spec.names):
        ref = loop_references(spec, problem, i)
        rows.append({"loop": name, "rep": spec.rep, "kind": "exact", "scheme": spec.scheme,
                     "exact": ref.exact, "exact_imag": ref.exact_imag,
                     "exact_method": ref.exact_method, "exact_note": ref.exact_note,
                     "continuum": ref.continuum, "continuum_method": ref.continuum_method,
                     "continuum_note": ref.continuum_note, "area": problem.areas[i],
                     "area_error": problem.area_errors[i],
                     "gaussian_matrix": ref.gaussian_matrix,
                     "gaussian_matrix_note": ref.gaussian_matrix_note,
                     "formal": bool(spec.signed)})
        if spec.closed:
            rows[-1].update(zero_instanton=ref.zero_instanton,
                            truncation_bound=ref.truncation_bound)
    surface = {"kind": spec.surface, "genus": spec.genus, "area": spec.total_area}
    return clean({"name": spec.name, "spec_sha256": spec.sha256, "surface": surface,
                  "group": {"family": spec.family, "n": spec.n, "metric": spec.metric},
                  "coupling": spec.coupling, "spacing": spec.spacing,
                  "formal": bool(spec.signed), "results": rows,
                  "correlators": correlator_rows(spec, problem)})


def _master_value(fn, *args, **kwargs):
    """``(value, method, note)`` of a master-field route, or the reason it has none."""
    try:
        out = fn(*args, **kwargs)
    except (ExactRouteError, ValueError) as exc:
        return None, None, f"{NOT_AVAILABLE} ({exc})"
    return out, None, None


def _master_field_results(spec: Spec, problem, order: int | None = None) -> dict:
    """``group.n = "inf"``: per loop the master field (``exact``: of the loop as
    snapped; ``continuum``: as specified), or its Taylor coefficients with ``order``."""
    area = problem.field.area
    rows = []
    for i, name in enumerate(spec.names):
        loops = {"exact": problem.lattice_loops[i],
                 "continuum": spec.loops[i].build(spec.spacing)}
        row = {"loop": name, "rep": spec.rep, "kind": "series" if order is not None
               else "exact", "scheme": spec.scheme, "formal": bool(spec.signed)}
        for key, loop in loops.items():
            if order is None:
                out, _, note = _master_value(exact_master_field, loop,
                                             coupling=spec.coupling, area=area, rep=spec.rep)
                row[key] = None if out is None else complex(out.value).real
                row[f"{key}_method"] = None if out is None else \
                    f"{out.method} (U(N), N -> infinity)"
            else:
                out, _, note = _master_value(master_field_series, loop, order, area=area,
                                             rep=spec.rep)
                col = "coefficients" if key == "exact" else "continuum"
                row[col] = None if out is None else [float(c) for c in out]
                row[f"{col}_method" if key != "exact" else "method"] = (
                    "master field (N -> infinity): Cauchy integral of the exact value")
            row[f"{key}_note" if key != "exact" or order is None else "note"] = note
        if order is not None:
            row.update({"order": order, "expands": "master field (N -> infinity), as "
                        "snapped", "rationals": None, "rationals_note":
                        "the master field's coefficients are floats (Cauchy integral)",
                        "asymptotic": False, "variable": "coupling (lambda)"})
        rows.append(row)
    out = {"name": spec.name, "spec_sha256": spec.sha256,
           "group": {"family": spec.family, "n": spec.n, "metric": spec.metric},
           "coupling": spec.coupling, "spacing": spec.spacing,
           "formal": bool(spec.signed), "results": rows}
    if order is not None:
        out.update({"scheme": spec.scheme, "order": order})
    else:
        # traces factorize as N -> infinity: a correlator is the product, connected 0
        out["correlators"] = []
        for names in spec.correlators:
            vals = [next(r["exact"] for r in rows if r["loop"] == n) for n in names]
            ok = all(v is not None for v in vals)
            out["correlators"].append({
                "loops": list(names), "kind": "correlator", "formal": bool(spec.signed),
                "scheme": spec.scheme,
                "exact": float(np.prod(vals)) if ok else None,
                "exact_connected": 0.0 if ok else None,
                "exact_method": "master field: traces factorize as N -> infinity"
                if ok else None,
                "exact_note": None if ok else NOT_AVAILABLE})
    return clean(out)


#: exact (sympy) series only for loops with at most this many non-trivial horizontal
#: steps: the exact contraction grows fast with the number of steps (about 2 s for 16
#: steps and 20 s for 32 at order 3), the float one does not
RATIONAL_STEPS = 20


SERIES_BUDGET = 60.0  # seconds for one series command, all loops (WHITEGAUGE_SERIES_BUDGET)


def _series_deadline() -> tuple[float, float]:
    """``(budget, deadline)`` of a series command (``time.monotonic`` clock)."""
    budget = float(os.environ.get("WHITEGAUGE_SERIES_BUDGET", SERIES_BUDGET))
    return budget, time.monotonic() + budget


def _order_iv(order) -> int:
    """The series order of the commands: the rule of every series entry point."""
    return series_order_iv(order)


def _loops_iv(loops, count: int) -> tuple[int, ...] | None:
    """``loops`` of :func:`series_results`: None or loop indices from 0 to count - 1."""
    rule = f"a sequence of loop indices from 0 to {count - 1} or None"
    if loops is None:
        return None
    if isinstance(loops, (str, bytes)) or not isinstance(loops, Iterable):
        raise TypeError(f"`loops` must be {rule}; got {loops!r}.")
    out = tuple(loops)
    for i in out:
        if isinstance(i, bool) or not isinstance(i, numbers.Integral):
            raise TypeError(f"`loops` must be {rule}; got {loops!r}.")
        if not 0 <= i < count:
            raise ValueError(f"`loops` must be {rule}; got the index {i!r}.")
    return tuple(int(i) for i in out)


class SeriesBudgetExceeded(ArithmeticError):
    """The formal series of one loop did not finish within its time budget."""


def _series_worker(conn, fn, args, kwargs):
    worker_init(os.getppid())  # Ctrl-C is the parent's; end with the parent
    try:
        # an overflow shows as a non-finite coefficient, reported by the parent as a note
        with np.errstate(over="ignore", invalid="ignore"):
            conn.send((True, fn(*args, **kwargs)))
    except BaseException as exc:  # noqa: BLE001  (sent back to the parent)
        conn.send((False, exc))
    finally:
        conn.close()


def _bounded(limit: tuple[float, float], fn, *args, **kwargs):
    """``fn(*args, **kwargs)`` in a child process, killed at the series deadline.

    The Wick expansion's cost grows factorially with the order (the number of pairings
    of 2M factors is (2M - 1)!!), so no static size test is reliable: the limit is a
    stated wall time for the whole command, ``SERIES_BUDGET`` seconds (overridden by
    the environment variable ``WHITEGAUGE_SERIES_BUDGET``), shared by its loops; past it
    a loop's coefficients are null with a note instead of the command hanging.
    ``limit`` is ``(budget, deadline)`` from :func:`_series_deadline`. A result with a
    coefficient that overflowed double precision is an ArithmeticError.
    """
    budget, deadline = limit
    exceeded = SeriesBudgetExceeded(
        f"the series did not finish within the formal route's budget of {budget:g} s "
        "for the command (WHITEGAUGE_SERIES_BUDGET); try a lower --order")
    if deadline - time.monotonic() <= 0:
        raise exceeded
    ctx = mp.get_context("fork" if "fork" in mp.get_all_start_methods() else "spawn")
    parent, child = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_series_worker, args=(child, fn, args, kwargs), daemon=True)
    proc.start()
    child.close()
    try:
        if not parent.poll(max(0.0, deadline - time.monotonic())):
            raise exceeded
        try:
            ok, value = parent.recv()
        except EOFError:
            raise ArithmeticError("the series worker ended without an answer "
                                  f"(exit code {proc.exitcode})") from None
    finally:
        if proc.is_alive():
            proc.kill()
        proc.join()
        parent.close()
    if not ok:
        raise value
    coefficients = getattr(value, "coefficients", None)
    if coefficients is not None and not value.exact and not all(
            math.isfinite(abs(complex(c))) for c in coefficients):
        raise ArithmeticError("the coefficients overflow double precision at this "
                              "coupling and density; rescale them")
    return value


def _factor_count(scheme: str, problem: LatticeProblem, i: int) -> int:
    """Exponentials in the Wick expansion of loop ``i`` (what the exact route pays for)."""
    if scheme == "gauss":
        return gauss_loadings(problem, i)[0].shape[0]
    return lattice_covariance(problem, i).shape[0]


def _rationals(limit, scheme, problem, i, order):
    """Exact coefficients of a lattice Wick series as strings, or (None, why not)."""
    m = _factor_count(scheme.name, problem, i)
    if m > RATIONAL_STEPS:
        return None, (f"exact coefficients skipped: {m} exponentials in the product (more "
                      f"than {RATIONAL_STEPS}); the floats are exact up to rounding")
    try:
        res = _bounded(limit, scheme.series, problem, i, order, exact=True)
    except SeriesBudgetExceeded as exc:
        return None, f"exact coefficients skipped: {exc}"
    except NotImplementedError as exc:
        return None, f"exact coefficients not available ({exc})"
    except (ValueError, ArithmeticError, MemoryError, RecursionError) as exc:
        # rationals are optional: say why they are missing
        return None, f"exact coefficients failed ({type(exc).__name__}: {exc})"
    return [str(c) for c in res.coefficients], None


def _floats(coefficients) -> tuple[list[float], list[float] | None]:
    vals = [complex(c) for c in coefficients]
    imag = [v.imag for v in vals]
    if any(abs(v.imag) > 1e-12 * max(1.0, abs(v.real)) for v in vals):
        return [v.real for v in vals], imag
    return [v.real for v in vals], None


def _expand(limit, fn, *args, **kwargs):
    """``(SeriesResult or None, note)`` of a bounded series route."""
    try:
        return _bounded(limit, fn, *args, **kwargs), None
    except SeriesBudgetExceeded as exc:
        return None, f"{NOT_AVAILABLE} ({exc})"
    except NotImplementedError as exc:
        return None, f"{NOT_AVAILABLE} ({exc})" if str(exc) else NOT_AVAILABLE
    except (ValueError, ArithmeticError, MemoryError, RecursionError) as exc:
        return None, f"{NOT_AVAILABLE} ({exc})"


def _continuum_series(group, rep, loop, order, area):
    res = exact_series(group, rep, loop, order, area=area)
    if res is None:
        raise NotImplementedError("no exact route applies to the loop as specified")
    return res


def series_results(spec: Spec | str | os.PathLike, order: int, *, loops: Sequence[int] | None = None,
                   rationals: bool = True, progress=None) -> dict:
    """The ``series`` command's object: per loop the coefficients c_0..c_order of
    E[W](lambda) = sum_m c_m lambda^m of the quantity the spec's scheme names.

    ``coefficients`` expand what ``field.scheme`` samples (:meth:`Scheme.series`):
    ``heat`` the continuum series of the loop as snapped (exact for lattice loops),
    ``linear`` and ``gauss`` their Wick lattice series at the spec's spacing,
    ``wilson`` its asymptotic weak-coupling expansion where known; ``expands`` says
    which. ``continuum`` holds the continuum coefficients of the loop as specified
    where the exact evaluation applies. Floats plus exact rationals where available;
    null with a note otherwise (a note naming the time budget when that was the
    limit). A signed density makes every coefficient formal (``formal: true``).

    ``loops`` restricts the work to some loop indices; ``rationals=False`` skips the
    exact (sympy) coefficients; ``progress`` is a :class:`Progress` to tick. ``spec``
    is a :class:`Spec` or the path of a spec file. The command has one time budget for
    all its loops (:func:`_bounded`); exact rationals come after every loop's floats.
    """
    spec = spec_arg(spec, "series")
    order = _order_iv(order)
    loops = _loops_iv(loops, len(spec.loops))
    if not isinstance(rationals, bool):
        raise TypeError(f"`rationals` must be True or False; got {rationals!r}.")
    if progress is not None and not isinstance(progress, Progress):
        raise TypeError("`progress` must be a Progress or None; got "
                        f"{type(progress).__name__}.")
    if spec.large_n:
        return _master_field_results(spec, build_lattice(spec), order)
    limit = _series_deadline()
    if spec.closed:
        return _surface_series_results(spec, order, loops, limit, progress)

    scheme = get_scheme(spec.scheme)
    rows = []
    problem = None
    note = None
    # refused exactly as `run` and `exact` refuse it (a SpecError on its key), before
    # any work
    problem = build_lattice(spec)
    todo = [i for i in range(len(spec.names)) if loops is None or i in loops]
    if progress is not None:
        progress.stage(f"{spec.name}: series", 2 * len(todo))
    if problem is not None and scheme.name in ("linear", "gauss") and 5 <= order <= 6:
        # the pairing graph of the transfer is the same for every loop: build it once
        # here and let the forked workers inherit it (seconds at order 6)
        _key_graph(order)
    expands = scheme.series_expands(problem) if problem is not None else None
    want_rationals = []
    for i in todo:
        name = spec.names[i]
        row = {"loop": name, "rep": spec.rep, "kind": "series", "scheme": spec.scheme,
               "order": order, "expands": expands, "coefficients": None,
               "rationals": None, "note": note, "asymptotic": False,
               "continuum": None, "continuum_rationals": None, "continuum_note": note,
               "formal": bool(spec.signed), "variable": "coupling (lambda)"}
        if problem is not None:
            if progress is not None:
                progress.step(f"{spec.name}: {name}, {expands}")
            res, row["note"] = _expand(limit, scheme.series, problem, i, order, exact=False)
            if res is not None:
                row["coefficients"], imag = _floats(res.coefficients)
                if not all(map(math.isfinite, row["coefficients"])):
                    row["note"] = ("coefficients beyond double precision are null; the "
                                   "exact rationals hold them")
                if imag is not None:
                    row["coefficients_imag"] = imag
                row["asymptotic"] = bool(res.asymptotic)
                row["method"] = res.method
                if res.exact:
                    row["rationals"] = [str(c) for c in res.coefficients]
                elif rationals:
                    want_rationals.append((i, row))
            if progress is not None:
                progress.update()
                progress.step(f"{spec.name}: {name}, continuum")
            loop = spec.loops[i].build(spec.spacing)
            cont, row["continuum_note"] = _expand(limit, _continuum_series, problem.group,
                                                  spec.rep, loop, order,
                                                  problem.field.area)
            if cont is not None:
                row["continuum"], _ = _floats(cont.coefficients)
                if cont.exact:
                    row["continuum_rationals"] = [str(c) for c in cont.coefficients]
                row["continuum_method"] = cont.method
            if progress is not None:
                progress.update()
        rows.append(row)
    for i, row in want_rationals:  # after every loop's floats: they are never starved
        row["rationals"], row["rationals_note"] = _rationals(limit, scheme, problem, i,
                                                             order)
    return clean({"name": spec.name, "spec_sha256": spec.sha256,
                  "group": {"family": spec.family, "n": spec.n, "metric": spec.metric},
                  "scheme": spec.scheme, "spacing": spec.spacing, "order": order,
                  "formal": bool(spec.signed), "results": rows})


def surface_text(spec: Spec) -> str:
    """``"sphere, T = 4"``: the closed surface of a spec, for tables and labels."""
    kind = {"sphere": "sphere", "torus": "torus"}.get(spec.surface,
                                                       f"closed surface of genus {spec.genus}")
    return f"{kind}, T = {spec.total_area:g}"


def _surface_series_results(spec: Spec, order: int, loops, limit, progress) -> dict:
    """``series`` on a closed surface: per loop the Taylor coefficients of the
    zero-instanton sector (:func:`holonomy.surface_series`) of the loop as snapped
    (``coefficients``, what ``heat`` samples) and as specified (``continuum``).
    Only the heat kernel's lattice measure is known exactly on a closed surface, so
    other schemes are refused on ``field.scheme``."""
    if spec.scheme != "heat":
        raise SpecError("field.scheme", f"got {spec.scheme!r} with surface kind "
                        f"{spec.surface!r}; expected \"heat\": on a closed surface only "
                        "the heat kernel's lattice measure (the plane's conditioned on the "
                        "outer face) is known, so only its series has a meaning")
    problem = build_lattice(spec)
    group, area = problem.group, problem.field.area
    kw = dict(genus=spec.genus, total_area=spec.total_area, area=area)
    expands = f"{get_scheme('heat').series_expands(problem)}, {surface_text(spec)}"
    todo = [i for i in range(len(spec.names)) if loops is None or i in loops]
    if progress is not None:
        progress.stage(f"{spec.name}: series", 2 * len(todo))
    rows = []
    for i in todo:
        name = spec.names[i]
        row = {"loop": name, "rep": spec.rep, "kind": "series", "scheme": spec.scheme,
               "order": order, "expands": expands, "coefficients": None,
               "rationals": None, "note": None, "asymptotic": False,
               "continuum": None, "continuum_rationals": None, "continuum_note": None,
               "formal": False, "variable": "coupling (lambda)",
               "sector": "zero-instanton", "sector_note": SECTOR_NOTE}
        for key, loop, what in (("coefficients", problem.lattice_loops[i], "as snapped"),
                                ("continuum", spec.loops[i].build(spec.spacing),
                                 "as specified")):
            if progress is not None:
                progress.step(f"{spec.name}: {name}, {what}")
            res, note = _expand(limit, surface_series, group, spec.rep, loop, order, **kw)
            rat_key = "rationals" if key == "coefficients" else "continuum_rationals"
            meth_key = "method" if key == "coefficients" else "continuum_method"
            note_key = "note" if key == "coefficients" else "continuum_note"
            row[note_key] = note
            if res is not None:
                row[key], _ = _floats(res.coefficients)
                row[meth_key] = res.method
                if res.exact:
                    row[rat_key] = [str(c) for c in res.coefficients]
                elif key == "coefficients":
                    row["rationals_note"] = ("exact coefficients not available: the "
                                             "measures or the metric constant are not "
                                             "rational")
            if progress is not None:
                progress.update()
        rows.append(row)
    return clean({"name": spec.name, "spec_sha256": spec.sha256,
                  "surface": {"kind": spec.surface, "genus": spec.genus,
                              "area": spec.total_area},
                  "group": {"family": spec.family, "n": spec.n, "metric": spec.metric},
                  "scheme": spec.scheme, "spacing": spec.spacing, "order": order,
                  "formal": False, "sector_note": SECTOR_NOTE, "results": rows})


def budget_limited(obj: dict) -> list[str]:
    """Loops of a ``series`` object whose coefficients are null because of the time
    budget."""
    return [r["loop"] for r in obj["results"]
            if r.get("coefficients") is None and "budget" in (r.get("note") or "")]

"""The objects of the ``exact`` and ``series`` commands (no sampling): per loop the
exact value of what the spec's scheme samples and the continuum value, or the
perturbative coefficients of the scheme's series route, each null with a note where
no route applies.
"""

from __future__ import annotations

import multiprocessing as mp
import os
from typing import Sequence

from holonomy import LatticeProblem, get_scheme, lattice_covariance, lattice_series

from ._problems import build_lattice
from ._references import NOT_AVAILABLE, loop_references
from ._report import clean
from ._spec import Spec, SpecError

__all__ = ["exact_results", "series_results", "geometry_problem", "MAX_SERIES_ORDER",
           "SERIES_BUDGET", "RATIONAL_STEPS", "SeriesBudgetExceeded"]


def geometry_problem(spec: Spec) -> LatticeProblem:
    """The lattice problem of ``spec`` (group, grid, lattice loops, areas): what the
    non-sampling commands need (it never samples, so a signed density is fine)."""
    return build_lattice(spec)


def exact_results(spec: Spec) -> dict:
    """The ``exact`` command's object: per loop the exact value of what the spec's
    scheme samples (or null with a note) and the continuum value of the loop."""
    problem = geometry_problem(spec)
    rows = []
    for i, name in enumerate(spec.names):
        ref = loop_references(spec, problem, i)
        rows.append({"loop": name, "rep": spec.rep, "kind": "exact", "scheme": spec.scheme,
                     "exact": ref.exact, "exact_imag": ref.exact_imag,
                     "exact_method": ref.exact_method, "exact_note": ref.exact_note,
                     "continuum": ref.continuum, "continuum_method": ref.continuum_method,
                     "continuum_note": ref.continuum_note, "area": problem.areas[i],
                     "area_error": problem.area_errors[i]})
    return clean({"name": spec.name, "spec_sha256": spec.sha256,
                  "group": {"family": spec.family, "n": spec.n, "metric": spec.metric},
                  "coupling": spec.coupling, "spacing": spec.spacing, "results": rows})


#: exact (sympy) series only for loops with at most this many non-trivial horizontal
#: steps: the exact contraction grows fast with the number of steps (about 2 s for 16
#: steps and 20 s for 32 at order 3), the float one does not
RATIONAL_STEPS = 20


SERIES_BUDGET = 60.0  # seconds per loop and kind of coefficient (WHITEGAUGE_SERIES_BUDGET)
MAX_SERIES_ORDER = 20


class SeriesBudgetExceeded(ArithmeticError):
    """The formal series of one loop did not finish within its time budget."""


def _series_worker(conn, fn, args, kwargs):
    try:
        conn.send((True, fn(*args, **kwargs)))
    except BaseException as exc:  # noqa: BLE001  (sent back to the parent)
        conn.send((False, exc))
    finally:
        conn.close()


def _bounded(fn, *args, **kwargs):
    """``fn(*args, **kwargs)`` in a child process, killed after the series budget.

    The Wick expansion's cost grows factorially with the order (the number of pairings
    of 2M factors is (2M - 1)!!), so no static size test is reliable: the limit is a
    stated wall time per loop, ``SERIES_BUDGET`` seconds (overridden by the environment
    variable ``WHITEGAUGE_SERIES_BUDGET``), after which the loop's coefficients are null
    with a note instead of the command hanging.
    """
    budget = float(os.environ.get("WHITEGAUGE_SERIES_BUDGET", SERIES_BUDGET))
    ctx = mp.get_context("fork" if "fork" in mp.get_all_start_methods() else "spawn")
    parent, child = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_series_worker, args=(child, fn, args, kwargs), daemon=True)
    proc.start()
    child.close()
    try:
        if not parent.poll(budget):
            raise SeriesBudgetExceeded(
                f"the series did not finish within the formal route's budget of "
                f"{budget:g} s (WHITEGAUGE_SERIES_BUDGET); try a lower --order")
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
    return value


def _rationals(lattice_series, problem, i, order):
    """Exact coefficients as strings, or (None, why not)."""
    m = lattice_covariance(problem, i).shape[0]
    if m > RATIONAL_STEPS:
        return None, (f"exact coefficients skipped: {m} horizontal steps (more than "
                      f"{RATIONAL_STEPS}); the floats are exact up to rounding")
    try:
        res = _bounded(lattice_series, problem, i, order, exact=True)
    except SeriesBudgetExceeded as exc:
        return None, f"exact coefficients skipped: {exc}"
    except NotImplementedError as exc:
        return None, f"exact coefficients not available ({exc})"
    except (ValueError, ArithmeticError, MemoryError, RecursionError) as exc:
        # rationals are optional: say why they are missing
        return None, f"exact coefficients failed ({type(exc).__name__}: {exc})"
    return [str(c) for c in res.coefficients], None


def series_results(spec: Spec, order: int, *, loops: Sequence[int] | None = None,
                   rationals: bool = True) -> dict:
    """The ``series`` command's object: c_0..c_order per loop of E[W](lambda) =
    sum_m c_m lambda^m (the Wick series of the spec scheme's ``series_route``, today the
    ``linear`` scheme, on the spec's grid),
    floats plus exact rationals where available; null with a note otherwise.

    ``loops`` restricts the work to some loop indices; ``rationals=False`` skips the
    exact (sympy) coefficients.
    """
    rows = []
    problem = None
    note = None
    route = get_scheme(spec.scheme).series_route
    if route is None:
        note = NOT_AVAILABLE + f" (no series route for the scheme {spec.scheme!r})"
    else:
        try:
            problem = build_lattice(spec, scheme=route)
        except SpecError as exc:
            note = f"{NOT_AVAILABLE} ({exc})"
    for i, name in enumerate(spec.names):
        if loops is not None and i not in loops:
            continue
        row = {"loop": name, "rep": spec.rep, "kind": "series", "order": order,
               "coefficients": None, "rationals": None, "note": note,
               "variable": "coupling (lambda)"}
        if problem is not None:
            res = None
            try:
                res = _bounded(lattice_series, problem, i, order, exact=False)
            except NotImplementedError as exc:
                row["note"] = f"{NOT_AVAILABLE} ({exc})" if str(exc) else NOT_AVAILABLE
            except (ValueError, ArithmeticError) as exc:
                row["note"] = f"{NOT_AVAILABLE} ({exc})"
            if res is not None:
                vals = [complex(c) for c in res.coefficients]
                row["coefficients"] = [v.real for v in vals]
                if any(abs(v.imag) > 1e-12 * max(1.0, abs(v.real)) for v in vals):
                    row["coefficients_imag"] = [v.imag for v in vals]
                row["note"] = None
                if rationals:
                    row["rationals"], row["rationals_note"] = _rationals(
                        lattice_series, problem, i, order)
        rows.append(row)
    return clean({"name": spec.name, "spec_sha256": spec.sha256,
                  "group": {"family": spec.family, "n": spec.n, "metric": spec.metric},
                  "spacing": spec.spacing, "order": order, "results": rows})

"""Exact references for the loops of a spec, each route optional.

``exact`` is the exact value of the quantity the sampler estimates:

- ``heat``: plaquettes are exact heat-kernel draws, so the sampler is unbiased for the
  *continuum* Wilson loop of the loop as snapped to the lattice;
- ``wilson``: the lattice value of the Wilson action where a closed form is known (a
  simple loop enclosing A cells: ``w^A`` with ``w`` the one-plaquette value; U(1): any
  loop through its winding numbers) at constant density;
- ``linear`` and ``gauss``: for U(1) (abelian, so both are exact in law) the same as
  ``heat``; otherwise no closed form (null).

``continuum`` is the exact value of the loop as specified, before snapping. A route
that is missing, or does not cover a loop, gives ``None`` and a note; never a made-up
number.

References
----------
.. [1] Levy, T. (2003). "Yang-Mills measure on compact surfaces." Mem. Amer. Math.
   Soc. 166(790) (lattice heat-kernel measure, subdivision invariance).
.. [2] Gross, D. J. and Witten, E. (1980). "Possible third-order phase transition in
   the large-N lattice gauge theory." Phys. Rev. D 21, 446-453 (independent plaquettes
   of the Wilson action in axial gauge on the plane).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

__all__ = ["LoopReference", "loop_references", "NOT_AVAILABLE", "exact_results",
           "series_results", "geometry_problem"]

NOT_AVAILABLE = "not available for this loop"
_EXPECTED = (NotImplementedError, ValueError, TypeError, ArithmeticError, ImportError,
             AttributeError)


@dataclass
class LoopReference:
    exact: float | None = None
    exact_imag: float | None = None
    exact_method: str | None = None
    exact_note: str | None = None
    continuum: float | None = None
    continuum_method: str | None = None
    continuum_note: str | None = None
    snapped: float | None = None          # the continuum value of the loop as snapped


def _exact_value(group, rep, loop, coupling, area):
    """``(value, method, note)`` from ``holonomy.exact.exact_wilson_loop`` or None."""
    try:
        from holonomy.exact import exact_wilson_loop
    except ImportError:
        return None, None, NOT_AVAILABLE + " (exact evaluation is not installed)"
    try:
        out = exact_wilson_loop(group, rep, loop, coupling=coupling, area=area)
    except _EXPECTED as exc:
        return None, None, f"{NOT_AVAILABLE} ({exc})"
    if out is None:
        return None, None, NOT_AVAILABLE
    value = complex(out.value)
    if not (math.isfinite(value.real) and math.isfinite(value.imag)):
        return None, None, NOT_AVAILABLE
    return value, str(out.method), None


def _simple_cells(lattice_loop):
    """Winding numbers of a simple lattice loop (no node visited twice), else None."""
    import numpy as np

    nodes = np.asarray(lattice_loop.nodes)[:-1]
    if len(np.unique(nodes, axis=0)) != len(nodes):
        return None
    w = lattice_loop.winding_numbers()
    nz = w[w != 0]
    if nz.size == 0 or not ((nz == 1).all() or (nz == -1).all()):
        return None
    return w


def _wilson_value(spec, problem, i):
    """The Wilson-action lattice value of loop ``i`` or ``(None, None, note)``."""
    h = problem.field.spacing
    if spec.rep != "fundamental":
        return None, None, NOT_AVAILABLE + " (Wilson action: fundamental rep only)"
    if not isinstance(spec.density, float):
        return None, None, NOT_AVAILABLE + " (Wilson action: constant density only)"
    try:
        from holonomy.exact import wilson_lattice_loop
    except ImportError:
        return None, None, NOT_AVAILABLE
    group = problem.group
    s = spec.coupling * spec.density * h ** 2
    lat = problem.lattice_loops[i]
    try:
        if spec.family == "U" and spec.n == 1:
            value = wilson_lattice_loop("U", 1, s, group.k, windings=lat.winding_numbers())
            return complex(value), "Wilson action, U(1) Bessel product", None
        w = _simple_cells(lat)
        if w is None:
            return None, None, NOT_AVAILABLE + " (Wilson action: simple loops only)"
        # independent plaquettes: a simple loop of A cells has w^A (the value is real)
        value = wilson_lattice_loop(spec.family, spec.n, s, group.k, cells=int((w != 0).sum()))
        return complex(value), "Wilson action, simple loop w^A", None
    except _EXPECTED as exc:
        return None, None, f"{NOT_AVAILABLE} ({exc})"


def _gaussian_value(spec, problem, i, scheme):
    """Closed forms of the ``gauss`` and ``linear`` schemes (fundamental rep).

    With f(t) = E[tr exp(X)] / N for one Ad-invariant Gaussian X of variance t, and
    independent conjugation-invariant factors multiplying their normalized traces
    (Schur's lemma): ``gauss`` on a simple loop gives the product of f(lambda mu(c))
    over its cells; ``linear`` on a simple loop whose cells in every column run from
    the reference line up (axial-y; a rectangle on the reference line, say) gives the
    product of f(lambda mu(column)) over its columns.
    """
    import numpy as np

    if spec.rep != "fundamental":
        return None, None, NOT_AVAILABLE + f" ({scheme}: closed form for the fundamental rep only)"
    try:
        from holonomy.exact import gaussian_step
    except ImportError:
        return None, None, NOT_AVAILABLE
    lat = problem.lattice_loops[i]
    w = _simple_cells(lat)
    if w is None:
        return None, None, NOT_AVAILABLE + f" ({scheme}: closed form for simple loops only)"
    mu = spec.area_form().cell_measures(problem.grid)
    inside = w != 0
    if scheme == "gauss":
        t = spec.coupling * mu[inside]
        method = "gauss scheme, simple loop: product of one-plaquette Gaussian steps"
    else:
        if spec.gauge != "axial-y":
            return None, None, NOT_AVAILABLE + " (linear: closed form in axial-y only)"
        ref = int(problem.plan.ref_row)
        cols = np.nonzero(inside.any(axis=1))[0]
        t = []
        for c in cols:
            rows = np.nonzero(inside[c])[0]
            if rows[0] != ref or len(rows) != rows[-1] - rows[0] + 1:
                return None, None, NOT_AVAILABLE + (
                    " (linear: closed form only when every column of the loop starts on "
                    "the reference line)")
            t.append(spec.coupling * mu[c, rows].sum())
        t = np.asarray(t)
        method = "linear scheme, columns on the reference line: product of Gaussian steps"
    try:
        f = np.asarray(gaussian_step(spec.family, spec.n, t, problem.group.k))
    except _EXPECTED as exc:
        return None, None, f"{NOT_AVAILABLE} ({exc})"
    return complex(np.prod(f)), method, None


def _lattice_polygon(lattice_loop):
    """The lattice loop as a ``discretize.Loop`` polygon (for exact evaluation)."""
    import numpy as np

    from discretize import Loop

    xy = lattice_loop.coordinates
    xy = np.asarray(xy() if callable(xy) else xy, float)
    if len(xy) > 1 and (xy[0] == xy[-1]).all():
        xy = xy[:-1]
    # keep the corners only (unit steps along a straight run add nothing)
    prev = np.roll(xy, 1, axis=0)
    nxt = np.roll(xy, -1, axis=0)
    d1, d2 = xy - prev, nxt - xy
    corner = np.abs(d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0]) > 0
    corner |= (d1 * d2).sum(axis=1) < 0      # a turn back is a corner too
    return Loop.polygon([tuple(map(float, p)) for p in xy[corner]])


def _snapped_value(spec, problem, i, group, area):
    """The continuum Wilson loop of loop ``i`` as snapped to the problem's lattice:
    ``(value, method, note)`` (the exact value the ``heat`` scheme samples)."""
    lat = problem.lattice_loops[i]
    value, method, note = _exact_value(group, spec.rep, lat, spec.coupling, area)
    if value is None:
        try:
            poly = _lattice_polygon(lat)
        except _EXPECTED:
            poly = None
        if poly is not None:
            v2, m2, n2 = _exact_value(group, spec.rep, poly, spec.coupling, area)
            if v2 is not None:
                value, method, note = v2, m2, n2
    if value is not None:
        method = f"{method} (lattice loop)"
    return value, method, note


def loop_references(spec, problem, i: int, *, scheme: str | None = None) -> LoopReference:
    """Exact references of loop ``i`` of ``spec`` under ``scheme`` (default the spec's).

    ``problem`` supplies the group, the grid and the lattice loops (at its own spacing,
    which may differ from the spec's in a study); the continuum loop is the spec's.
    """
    scheme = scheme or spec.scheme
    ref = LoopReference()
    try:
        group = problem.group
        area = spec.area_form()
        loop = spec.loops[i].build(spec.spacing)
    except _EXPECTED as exc:
        ref.exact_note = ref.continuum_note = f"{NOT_AVAILABLE} ({exc})"
        return ref
    value, method, note = _exact_value(group, spec.rep, loop, spec.coupling, area)
    if value is not None:
        faces = getattr(loop, "exact_faces", None)
        if faces is not None:
            method = f"{method}, {faces.description}: exact face areas"
        ref.continuum, ref.continuum_method = value.real, method
    ref.continuum_note = note
    abelian = spec.family == "U" and spec.n == 1
    snapped = _snapped_value(spec, problem, i, group, area)
    if snapped[0] is not None:
        ref.snapped = snapped[0].real
    if scheme == "wilson":
        value, method, note = _wilson_value(spec, problem, i)
    elif scheme == "heat" or abelian:
        value, method, note = snapped
    else:
        value, method, note = _gaussian_value(spec, problem, i, scheme)
    if value is not None:
        ref.exact, ref.exact_imag, ref.exact_method = value.real, value.imag, method
    ref.exact_note = note
    return ref


# --------------------------------------------------------------------------- commands

def geometry_problem(spec):
    """A problem with the spec's group, grid and lattice loops, for the non-sampling
    commands (it never samples, so a signed density is fine: the real area form is
    applied separately)."""
    import dataclasses

    from ._runner import build_problem

    geo = dataclasses.replace(spec, density=1.0, samples=spec.samples or 1,
                              seed=spec.seed if spec.seed is not None else 0)
    return build_problem(geo)


def _mu_areas(spec, problem) -> list[float]:
    measures = spec.area_form().cell_measures(problem.grid)
    return [float((lp.winding_numbers() * measures).sum()) for lp in problem.lattice_loops]


def exact_results(spec) -> dict:
    """The ``exact`` command's object: per loop the exact value of what the spec's
    scheme samples (or null with a note) and the continuum value of the loop."""
    from ._report import clean

    problem = geometry_problem(spec)
    areas = _mu_areas(spec, problem)
    rows = []
    for i, name in enumerate(spec.names):
        ref = loop_references(spec, problem, i)
        rows.append({"loop": name, "rep": spec.rep, "kind": "exact", "scheme": spec.scheme,
                     "exact": ref.exact, "exact_imag": ref.exact_imag,
                     "exact_method": ref.exact_method, "exact_note": ref.exact_note,
                     "continuum": ref.continuum, "continuum_method": ref.continuum_method,
                     "continuum_note": ref.continuum_note, "area": areas[i],
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
    import multiprocessing as mp
    import os

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
    try:
        from holonomy._lattice_series import lattice_covariance

        m = lattice_covariance(problem, i).shape[0]
    except Exception:  # noqa: BLE001  (size unknown: try anyway)
        m = 0
    if m > RATIONAL_STEPS:
        return None, (f"exact coefficients skipped: {m} horizontal steps (more than "
                      f"{RATIONAL_STEPS}); the floats are exact up to rounding")
    try:
        res = _bounded(lattice_series, problem, i, order, exact=True)
    except SeriesBudgetExceeded as exc:
        return None, f"exact coefficients skipped: {exc}"
    except NotImplementedError as exc:
        return None, f"exact coefficients not available ({exc})"
    except Exception as exc:  # noqa: BLE001  (rationals are optional: say why)
        return None, f"exact coefficients failed ({type(exc).__name__}: {exc})"
    return [str(c) for c in res.coefficients], None


def series_results(spec, order: int, *, loops: Sequence[int] | None = None,
                   rationals: bool = True) -> dict:
    """The ``series`` command's object: c_0..c_order per loop of E[W](lambda) =
    sum_m c_m lambda^m (the Wick series of the ``linear`` scheme on the spec's grid),
    floats plus exact rationals where available; null with a note otherwise.

    ``loops`` restricts the work to some loop indices; ``rationals=False`` skips the
    exact (sympy) coefficients.
    """
    import dataclasses

    from ._report import clean

    rows = []
    problem = None
    note = None
    try:
        import holonomy

        lattice_series = holonomy.lattice_series
    except AttributeError:
        lattice_series = None
        note = NOT_AVAILABLE + " (the series engine is not installed)"
    if lattice_series is not None:
        from ._runner import build_problem

        try:
            problem = build_problem(dataclasses.replace(
                spec, scheme="linear", samples=spec.samples or 1,
                seed=spec.seed if spec.seed is not None else 0), formal=spec.signed)
        except ValueError as exc:
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
            except (ValueError, TypeError, ArithmeticError) as exc:
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

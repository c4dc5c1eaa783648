"""The two orders of limits: a loop on spheres of growing total area against the plane.

``decompactify_results(spec, areas, order)``: per loop of a closed-surface spec, one row
per total area T (the exact value on the sphere, its zero-instanton sector and that
sector's Taylor coefficients c_0..c_M in the coupling), the plane's exact value and
coefficients for the same loop, and the coefficients as T -> infinity (``limit``),
extrapolated in 1/T from three large areas (Richardson), with an error estimate (the
change between two extrapolations). Expanding on the sphere and then letting T grow
gives the Gaussian-matrix coefficients (SU(2), k = 2: 5/128 at order 2), not the
plane's (9/128): ``limit - plane`` shows where they part.

References
----------
.. [1] E. Witten, Commun. Math. Phys. 141 (1991) 153-209.
.. [2] L. F. Richardson, "The deferred approach to the limit", Phil. Trans. R. Soc. A 226
   (1927) 299-361.
"""

from __future__ import annotations

import math
import numbers
import os
from typing import Iterable

import numpy as np

from holonomy.exact import (ExactRouteError, drawn_measure, exact_surface_wilson_loop,
                            exact_wilson_loop, zero_instanton_series)

from ._commands import _order_iv, geometry_problem
from ._report import printable, short_label
from ._spec import Spec, SpecError, spec_arg

__all__ = ["decompactify_results", "areas_iv", "format_decompactify_table", "plot_decompactify"]

_LIMIT_FACTORS = (1e3, 1e4, 1e5)  # T / A for the extrapolation to T -> infinity


def _series_at(group, rep, details, T, order):
    """Zero-instanton coefficients from a surface value's details (simple loops)."""
    return zero_instanton_series(group, rep, details["inside"], T, order,
                                 turns=details.get("turns", 1))


def areas_iv(areas) -> tuple[float, ...]:
    """The total areas of ``decompactify``, checked (distinct finite numbers > 0, at
    least one) and sorted: the one rule for the API and the command line's --areas.
    A SpecError on ``--areas`` (TypeError for a value that is not a sequence of
    numbers)."""
    if isinstance(areas, (str, bytes)) or not isinstance(areas, Iterable) or any(
            isinstance(T, bool) or not isinstance(T, numbers.Real) for T in areas):
        raise TypeError(f"`areas` must be a sequence of total areas > 0; got {areas!r}.")
    vals = tuple(float(T) for T in areas)
    if not vals or any(not (0 < T < math.inf) for T in vals) or len(set(vals)) != len(vals):
        raise SpecError("--areas", f"got {vals!r}; expected distinct finite total areas > 0 "
                        "(at least one)")
    return tuple(sorted(vals))


def decompactify_results(spec: Spec | str | os.PathLike, areas, order: int) -> dict:
    """The ``decompactify`` command's object (see the module docstring). ``spec`` is a
    :class:`Spec` or the path of a spec file; ``areas`` the total areas T, each larger
    than every loop's drawn measure; ``order`` the highest order (0 to 20)."""
    spec = spec_arg(spec, "exact")
    areas = areas_iv(areas)
    order = _order_iv(order)
    if not spec.closed:
        raise SpecError("surface.kind", "got \"plane\"; expected a closed surface "
                        "([surface] with kind sphere, torus or closed) for decompactify")
    if spec.genus != 0:
        raise SpecError("surface.genus", f"got {spec.genus}; expected 0 (a sphere): the "
                        "zero-instanton series is the Poisson-resummed sphere's")
    problem = geometry_problem(spec)  # refuses what exact refuses, before any work
    for i, loop in enumerate(problem.loops):
        drawn = drawn_measure(loop, spec.area_form())
        if areas[0] <= drawn:
            raise SpecError("--areas", f"got {areas[0]!r}; expected total areas larger "
                            f"than the drawn measure {drawn:.6g} of loops[{i}]")
    group, rep, field = problem.group, problem.rep, problem.field
    lam = field.coupling
    out = []
    for i, name in enumerate(spec.names):
        loop = spec.loops[i].build(spec.spacing)
        rows, details, note = [], None, None
        for T in areas:
            sv = exact_surface_wilson_loop(group, rep, loop, coupling=lam, genus=0,
                                           total_area=T, area=field.area)
            row = {"area": T, "exact": None if sv.value is None else sv.value.real,
                   "zero_instanton": None if sv.zero_instanton is None
                   else sv.zero_instanton.real, "coefficients": None,
                   "truncation_bound": sv.truncation_bound}
            if sv.value is not None and "inside" in sv.details:
                try:
                    row["coefficients"] = [float(c) for c in
                                           _series_at(group, rep, sv.details, T, order)]
                    details = sv.details
                except ExactRouteError as exc:
                    note = f"series: {exc}"
            elif sv.value is None:
                note = sv.note
            else:
                note = "series on the surface: simple loops only in this version"
            rows.append(row)
        pv = exact_wilson_loop(group, rep, loop, coupling=lam, area=field.area)
        plane = {"exact": None if pv is None or pv.value is None else complex(pv.value).real,
                 "exact_method": None if pv is None else pv.method, "coefficients": None}
        limit = {"coefficients": None, "error": None, "method": None, "minus_plane": None}
        if details is not None:
            A, p = details["inside"], details.get("turns", 1)
            c = group.rep(rep).casimir if isinstance(rep, str) else rep.casimir
            if c is not None and p == 1:
                plane["coefficients"] = [(-c * A / 2) ** m / math.factorial(m) + 0.0
                                         for m in range(order + 1)]  # + 0.0: no -0
            cs = None
            if not A > 0:  # no measure inside (a zero density): no scale to grow T by
                note = ("the loop encloses no measure (A = 0): no extrapolation in 1/T; "
                        "its value is 1 at every T")
            else:
                Ts = [A * f for f in _LIMIT_FACTORS]
                try:
                    cs = [_series_at(group, rep, details, T, order) for T in Ts]
                except ExactRouteError as exc:
                    cs, note = None, f"limit T -> infinity: {exc}"
            if cs is not None:
                x = [1 / T for T in Ts]
                # linear extrapolation in 1/T from the two largest areas, and from the
                # two smallest: their difference estimates the error
                r2 = cs[2] + (cs[2] - cs[1]) * x[2] / (x[1] - x[2])
                r1 = cs[1] + (cs[1] - cs[0]) * x[1] / (x[0] - x[1])
                limit = {"coefficients": [float(v) for v in r2],
                         "error": [float(v) for v in np.abs(r2 - r1) + 1e-9 * np.abs(r2)],
                         "method": "extrapolated in 1/T from T/A = 1e3, 1e4, 1e5 "
                                   "(Richardson)",
                         "minus_plane": None}
            if plane["coefficients"] is not None and limit["coefficients"] is not None:
                limit["minus_plane"] = [float(a - b) for a, b in
                                        zip(limit["coefficients"], plane["coefficients"])]
        out.append({"loop": name, "rep": spec.rep, "rows": rows, "plane": plane,
                    "limit": limit, "note": note})
    return {"name": spec.name, "spec_sha256": spec.sha256, "coupling": lam, "order": order,
            "surface": {"kind": spec.surface, "genus": spec.genus},
            "areas": list(areas), "results": out}


def _fmt(v, width=12):
    return "—".rjust(width) if v is None else f"{v:{width}.6g}"


def format_decompactify_table(obj: dict) -> str:
    """Rows per loop: area, exact, zero-instanton, coefficients; then plane and limit."""
    lines = []
    for r in obj["results"]:
        lines.append(f"loop {printable(r['loop'])} ({r['rep']}), coupling {obj['coupling']:g}: "
                     "exact on the sphere, its zero-instanton sector and that sector's "
                     "series coefficients c_m of lambda^m")
        lines.append(f"{'area':>12} {'exact':>12} {'zero-inst.':>12}  coefficients")
        for row in r["rows"]:
            cs = row["coefficients"]
            lines.append(f"{_fmt(row['area'])} {_fmt(row['exact'])} "
                         f"{_fmt(row['zero_instanton'])}  "
                         + ("—" if cs is None else " ".join(f"{c:.6g}" for c in cs)))
        pc = r["plane"]["coefficients"]
        lines.append(f"{'plane':>12} {_fmt(r['plane']['exact'])} {'':>12}  "
                     + ("—" if pc is None else " ".join(f"{c:.6g}" for c in pc)))
        lim = r["limit"]
        if lim["coefficients"] is not None:
            lines.append(f"{'T -> inf':>12} {'':>12} {'':>12}  " + " ".join(
                f"{c:.6g}+-{e:.1g}" for c, e in zip(lim["coefficients"], lim["error"]))
                + f"  ({lim['method']})")
        if lim["minus_plane"] is not None:
            lines.append(f"{'limit-plane':>12} {'':>12} {'':>12}  "
                         + " ".join(f"{c:.6g}" for c in lim["minus_plane"]))
        if r["note"]:
            lines.append(printable(f"note: {r['note']}"))
        lines.append("")
    return "\n".join(lines).rstrip()


def plot_decompactify(spec: Spec, obj: dict, out: str) -> str:
    """``decompactify.png`` in ``out``: value against the coupling for each area, the
    plane, and the zero-instanton curves (dashed)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from ._report import quiet_plot_warnings

    with quiet_plot_warnings():  # user-chosen names: missing glyphs, tight layout
        return _draw_decompactify(spec, obj, out, plt)


def _draw_decompactify(spec: Spec, obj: dict, out: str, plt) -> str:
    problem = geometry_problem(spec)
    group, rep, field = problem.group, problem.rep, problem.field
    lams = np.linspace(0.05, 2.0, 24) * field.coupling
    nloops = len(spec.names)
    fig, axes = plt.subplots(1, nloops, figsize=(5 * nloops, 4), squeeze=False)
    for i, name in enumerate(spec.names):
        ax = axes[0, i]
        loop = spec.loops[i].build(spec.spacing)
        for T in obj["areas"]:
            vals = [exact_surface_wilson_loop(group, rep, loop, coupling=lam, genus=0,
                                              total_area=T, area=field.area) for lam in lams]
            if vals[0].value is None:
                continue
            line, = ax.plot(lams, [v.value.real for v in vals], label=f"T = {T:g}")
            if vals[0].zero_instanton is not None:
                ax.plot(lams, [v.zero_instanton.real for v in vals], "--", color=line.get_color())
        plane = [exact_wilson_loop(group, rep, loop, coupling=lam, area=field.area) for lam in lams]
        if plane[0] is not None and plane[0].value is not None:
            ax.plot(lams, [complex(p.value).real for p in plane], "k", lw=2, label="plane")
        ax.set_xlabel("coupling lambda")
        ax.set_ylabel("exact Wilson loop (dashed: zero-instanton sector)")
        ax.set_title(short_label(name))
        ax.legend(fontsize=8)
    os.makedirs(out, exist_ok=True)
    path = os.path.join(out, "decompactify.png")
    fig.tight_layout()
    fig.savefig(path, dpi=100)
    plt.close(fig)
    return path

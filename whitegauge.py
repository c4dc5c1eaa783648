"""whitegauge: the entry point for scripts.

One import gives the public API, whatever package a name lives in::

    import whitegauge as wg

    spec = wg.load_spec("examples/box_and_ring.toml")
    outcome = wg.run_spec(spec, out="runs/box-and-ring")
    print(wg.format_table(outcome.results))

    G = wg.make_group("SU", 2, "physics")
    heart = wg.Loop.curve("cardioid", 512, a=0.5)
    print(wg.exact_wilson_loop(G, "fundamental", heart, coupling=1.0).value)

What is here:

- experiments: :func:`load_spec`, :func:`parse_spec`, :func:`run_spec`,
  :func:`run_study`, :func:`exact_results`, :func:`series_results`, :func:`run_demo`,
  :func:`format_table`, :class:`Spec`, :class:`SpecError`;
- loops and grids: :class:`Loop` (``polygon``, ``circle``, ``ellipse``, ``curve``,
  ``parametric``, ``from_moves``), :class:`LatticeLoop`, :class:`Grid`,
  :class:`AreaForm`, :data:`CURVES`, :func:`arrangement`;
- groups: :func:`make_group`, :class:`Group`, :class:`Representation`;
- sampling: :class:`Field`, :class:`WilsonProblem`, :func:`estimate_wilson_loops`,
  :data:`SCHEMES`;
- exact values: :func:`exact_wilson_loop`, :func:`evaluate_polygon`,
  :func:`simple_loop`, :func:`u1_loop`, :func:`unitary_wound_loop`,
  :func:`wilson_lattice_loop`, :func:`gaussian_step`, :func:`exact_surface_wilson_loop`;
- series: :func:`lattice_series`, :func:`continuum_series`, :func:`exact_series`,
  :func:`exp_product_series`, :func:`gaussian_matrix` (the Gaussian-matrix prescription);
- formal Gaussians: :class:`FormalGaussian`.

The packages underneath (:mod:`noise`, :mod:`discretize`, :mod:`holonomy`) stay
importable for everything else; see DEVELOPERS.md for their layout.
"""

from discretize import CURVES, AreaForm, Grid, LatticeLoop, Loop, arrangement
from holonomy import (
    SCHEMES,
    Field,
    WilsonProblem,
    __version__,
    continuum_series,
    estimate_wilson_loops,
    exact_series,
    exp_product_series,
    gaussian_matrix,
    lattice_series,
)
from holonomy.exact import (
    evaluate_polygon,
    exact_surface_wilson_loop,
    exact_wilson_loop,
    gaussian_step,
    simple_loop,
    u1_loop,
    unitary_wound_loop,
    wilson_lattice_loop,
)
from holonomy.experiment import (
    Spec,
    SpecError,
    exact_results,
    format_table,
    load_spec,
    parse_spec,
    run_demo,
    run_spec,
    run_study,
    series_results,
)
from holonomy.groups import Group, Representation, make_group
from noise import FormalGaussian

__all__ = [
    "__version__",
    # experiments
    "load_spec", "parse_spec", "run_spec", "run_study", "exact_results", "series_results",
    "run_demo", "format_table", "Spec", "SpecError",
    # loops and grids
    "Loop", "LatticeLoop", "Grid", "AreaForm", "CURVES", "arrangement",
    # groups
    "make_group", "Group", "Representation",
    # sampling
    "Field", "WilsonProblem", "estimate_wilson_loops", "SCHEMES",
    # exact values
    "exact_wilson_loop", "evaluate_polygon", "simple_loop", "u1_loop", "unitary_wound_loop",
    "wilson_lattice_loop", "gaussian_step", "exact_surface_wilson_loop",
    # series
    "lattice_series", "continuum_series", "exact_series", "exp_product_series",
    "gaussian_matrix",
    # formal Gaussians
    "FormalGaussian",
]

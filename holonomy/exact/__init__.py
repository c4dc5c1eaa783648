"""Exact references for Wilson loops: closed forms (simple loops, U(1) from windings,
U(N) loops wound n times and their free-probability limit, one-plaquette Wilson-action
values, one Gaussian step) and the dispatcher that picks the one that
applies to a loop; closed surfaces of any genus by character sums; exact evaluation of general polygonal loops.

Closed forms
------------
simple_loop, u1_loop, unitary_casimir, unitary_dimension, unitary_wound_loop,
free_unitary_moment, wilson_plaquette, wilson_lattice_loop, gaussian_step

Closed surfaces (genus g, total area T)
---------------------------------------
exact_surface_wilson_loop, SurfaceValue, surface_simple_loop, surface_abelian_loop,
surface_partition_function, outer_face_kernel

Dispatcher
----------
ExactValue, exact_wilson_loop, exact_correlator (several loops), exact_master_field
(U(N), N -> infinity)

Exact values of lattice problems (what each scheme samples)
-----------------------------------------------------------
LatticeValue, heat_lattice_value, wilson_action_value, gaussian_scheme_value, loop_value,
simple_cells

Exact evaluation of any polygonal loop
--------------------------------------
evaluate_polygon, evaluate_word, ExactEvaluation, face_measures (lasso decomposition,
closed forms, tensor contraction; any representation; degenerate loops);
evaluate_polygons, evaluate_words (correlators of several loops, one representation
each if asked); lasso_word, lasso_words, outer_boundary_word, reduce_for_trace, reduce_for_traces, ReducedWord, free_reduce,
cyclic_reduce, inverse_word (words in independent face variables); ExactRouteError
(which limit was hit)

Laws, characters, large N
-------------------------
WilsonLaw, law_character (conjugation-invariant laws of face variables);
wilson_lattice_exact (the Wilson action on any lattice loop); class_weights,
adams_decomposition, weyl_dimension, dominant_casimir, wilson_character (U(N) and SU(N)
characters by weights); master_field_word (N -> infinity, free unitary Brownian motions)
"""

from ._simple import *  # noqa: F401,F403
from ._unitary import *  # noqa: F401,F403
from ._wilson_action import *  # noqa: F401,F403
from ._gaussian_step import *  # noqa: F401,F403
from ._surface import *  # noqa: F401,F403
from ._dispatch import *  # noqa: F401,F403
from ._word import *  # noqa: F401,F403
from ._evaluate import *  # noqa: F401,F403
from ._laws import *  # noqa: F401,F403
from ._characters import *  # noqa: F401,F403
from ._master import *  # noqa: F401,F403
from ._lattice import *  # noqa: F401,F403

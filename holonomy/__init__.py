"""Holonomies and Wilson loops: compact matrix groups, representations, exponentials,
the sampling schemes, ordered products, estimators, exact references, perturbative
series, the experiment runner and the ``whitegauge`` command.

Subpackages: :mod:`holonomy.groups` (groups, representations, heat kernels),
:mod:`holonomy.exact` (closed forms and exact evaluation), :mod:`holonomy.experiment`
(spec files, runs, studies, reports) and :mod:`holonomy.cli`.
"""

__version__ = "0.1.0"

from .groups import BrownianResult, Group, Representation, make_group  # noqa: E402
from ._solver import (  # noqa: E402  (ordered products)
    PRODUCT_SCHEMES,
    ProductResult,
    ProductScheme,
    ordered_product,
    tree_product,
)
from ._lie_words import *  # noqa: E402,F401,F403  (formal Lie-algebra words)
from ._series import *  # noqa: E402,F401,F403  (perturbative series)
from ._schemes import SCHEMES, Scheme, get_scheme, register_scheme, study_schemes  # noqa: E402
from ._estimate import BlockSums, EstimateResult, LoopEstimate, combine_blocks  # noqa: E402
from ._surface_weights import ClosedSurface  # noqa: E402  (Monte Carlo on closed surfaces)
from ._sampling import (  # noqa: E402
    BLOCK_MEMORY,
    MAX_LATTICE_STEPS,
    Field,
    LatticeProblem,
    RunSettings,
    WilsonProblem,
    block_memory,
    check_block_memory,
    covering_grid,
    estimate_wilson_loops,
    lattice_steps,
    run_block,
)
from ._study import (  # noqa: E402
    EXPECTED_RATES, StudyProblem, run_study_block, study_memory, study_spacings,
)
from ._lattice_series import (  # noqa: E402  (lattice series of the schemes)
    gauss_series, lattice_covariance, lattice_series, wilson_series,
)
from ._continuum_series import continuum_series, exact_series, surface_series  # noqa: E402  (continuum series)
from ._gaussian_matrix import GaussianMatrixValue, gaussian_matrix  # noqa: E402  (prescription)
from ._formal_estimate import formal_block, formal_estimate, formal_schemes  # noqa: E402

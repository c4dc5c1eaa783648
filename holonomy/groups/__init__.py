"""Compact matrix groups for holonomy experiments.

``U(n)``, ``SU(n)``, ``SO(n)`` and ``Sp(n)`` (compact symplectic, 2n x 2n) with the
Ad-invariant metric ``<X, Y> = -k Re tr(XY)`` (``trace`` k = 1, ``physics`` k = 2,
``large-n`` k = N, or a number); orthonormal Lie-algebra bases; representations,
characters and Casimir constants computed from the basis; batched exponentials (closed
forms for U(1), SU(2) = Sp(1), SO(3), eigendecomposition otherwise); Brownian motion and
heat-kernel samplers (exact in law for every group, see `exact_heat_route`); irreducibles by highest
weight (Weyl dimension and character formulas, Casimirs, Brauer-Klimyk fusion).

Examples
--------
>>> from holonomy.groups import make_group
>>> G = make_group("SU", 2, "physics")
>>> G.rep("spin:1").casimir  # j(j+1) with k = 2
2.0
"""

from ._group import *  # noqa: F401,F403
from ._group import __all__ as _group_all
from ._reps import *  # noqa: F401,F403
from ._reps import __all__ as _reps_all
from ._heat import *  # noqa: F401,F403
from ._heat import __all__ as _heat_all
from ._expmap import *  # noqa: F401,F403
from ._expmap import __all__ as _expmap_all
from ._weights import *  # noqa: F401,F403
from ._weights import __all__ as _weights_all

__all__ = [*_group_all, *_reps_all, *_heat_all, *_expmap_all, *_weights_all]

"""Seeded noise for whitegauge: seeds and block streams, Gaussian cell and interval
integrals of white noise on grids, Gaussian vectors with a given covariance, and formal
(Wick) Gaussians for indefinite covariances.

This layer knows nothing about groups or loops.
"""

from ._errors import *  # noqa: F401,F403
from ._seeding import *  # noqa: F401,F403
from ._white import *  # noqa: F401,F403
from ._gaussian import *  # noqa: F401,F403
from ._formal import *  # noqa: F401,F403

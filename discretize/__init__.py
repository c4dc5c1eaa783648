"""Geometry for whitegauge: grids, area forms, loops, winding numbers, polygon
arrangements and axial-gauge plans. Group-agnostic; imports only :mod:`noise`.
"""

from ._limits import *  # noqa: F401,F403
from ._grid import *  # noqa: F401,F403
from ._area import *  # noqa: F401,F403
from ._loops import *  # noqa: F401,F403
from ._winding import *  # noqa: F401,F403

from ._arrangement import *  # noqa: F401,F403
from ._axial import *  # noqa: F401,F403

"""Experiments as files: TOML specs, a resumable SQLite run store, a runner for any
``concurrent.futures.Executor``, results files and reports, regularization studies and
the built-in demo. The ``whitegauge`` command (:mod:`holonomy.cli`) is a thin layer
over these functions.

Example
-------
>>> from holonomy.experiment import parse_spec, run_spec        # doctest: +SKIP
>>> spec = parse_spec(open("box.toml").read(), name="box")      # doctest: +SKIP
>>> outcome = run_spec(spec, out="runs/box", workers=2)         # doctest: +SKIP
>>> outcome.results["results"][0]["estimate"]                    # doctest: +SKIP
"""

from ._spec import *  # noqa: F401,F403
from ._store import *  # noqa: F401,F403
from ._problems import *  # noqa: F401,F403
from ._folder import *  # noqa: F401,F403
from ._references import *  # noqa: F401,F403
from ._report import *  # noqa: F401,F403
from ._runner import *  # noqa: F401,F403
from ._commands import *  # noqa: F401,F403
from ._study import *  # noqa: F401,F403
from ._demo import *  # noqa: F401,F403
from ._faults import *  # noqa: F401,F403
from ._progress import *  # noqa: F401,F403

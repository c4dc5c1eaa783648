"""Holonomies and Wilson loops: compact matrix groups, representations, exponentials,
the sampling schemes, ordered products, estimators, exact references, perturbative
series, the experiment runner and the ``whitegauge`` command.
"""

__version__ = "0.1.0"

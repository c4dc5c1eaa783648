"""Shared input checks for the closed-form references (families, metrics, times).

The families and metric names follow the group engine (``holonomy.groups``):
``U``, ``SU``, ``SO``, ``Sp``; the metric ``<X, Y> = -k Re tr(XY)`` is given by a
number or by ``"trace"`` (k = 1), ``"physics"`` (k = 2), ``"large-n"`` (k = matrix size).
"""

from __future__ import annotations

import math
import numbers

import numpy as np

__all__: list[str] = []

_FAMILIES = {"U": "U", "SU": "SU", "SO": "SO", "SP": "Sp"}
_METRICS = ("trace", "physics", "large-n")


def _family_iv(family, allowed=("U", "SU", "SO", "Sp")) -> str:
    """Normalize a family name (case-insensitive) and check it is in ``allowed``."""
    if not isinstance(family, str):
        raise TypeError(f"`family` must be a string such as 'SU', got {family!r}.")
    fam = _FAMILIES.get(family.strip().upper())
    if fam is None or fam not in allowed:
        raise ValueError(f"`family` must be one of {sorted(allowed)}, got {family!r}.")
    return fam


def _int_iv(value, name: str, minimum: int) -> int:
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        raise TypeError(f"`{name}` must be an integer >= {minimum}, got {value!r}.")
    if value < minimum:
        raise ValueError(f"`{name}` must be an integer >= {minimum}, got {value!r}.")
    return int(value)


def _matrix_size(family: str, n: int) -> int:
    """Matrix size of the defining representation (Sp(n) acts on C^(2n))."""
    return 2 * n if family == "Sp" else n


def _metric_iv(metric, matrix_size: int, name: str = "k") -> float:
    """Return the metric constant k from a number or a metric name."""
    if isinstance(metric, str):
        if metric == "trace":
            return 1.0
        if metric == "physics":
            return 2.0
        if metric == "large-n":
            return float(matrix_size)
        raise ValueError(
            f"`{name}` must be a positive number or one of {list(_METRICS)}, got {metric!r}."
        )
    if isinstance(metric, bool) or not isinstance(metric, numbers.Real):
        raise TypeError(
            f"`{name}` must be a positive number or one of {list(_METRICS)}, got {metric!r}."
        )
    if not (math.isfinite(metric) and metric > 0):
        raise ValueError(
            f"`{name}` must be a positive number or one of {list(_METRICS)}, got {metric!r}."
        )
    return float(metric)


def _real_iv(value, name: str, *, positive: bool = False, nonnegative: bool = False):
    """A finite real scalar or array (returned as float or float ndarray)."""
    if isinstance(value, (str, bytes)) or np.iscomplexobj(value):
        raise TypeError(f"`{name}` must be a real number or array, got {value!r}.")
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise TypeError(f"`{name}` must be a real number or array, got {value!r}.") from None
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"`{name}` must be finite, got {value!r}.")
    if positive and not np.all(arr > 0):
        raise ValueError(f"`{name}` must be > 0, got {value!r}.")
    if nonnegative and not np.all(arr >= 0):
        raise ValueError(f"`{name}` must be >= 0, got {value!r}.")
    return float(arr) if arr.ndim == 0 else arr

"""Shared input checks for the closed-form references (families, metrics, times).

Families, matrix sizes and metrics are those of the group engine: this module only
adapts :func:`holonomy.groups.parse_family` and :func:`holonomy.groups.parse_metric`
(their one definition) to the closed forms' signatures.
"""

from __future__ import annotations

import numbers

import numpy as np

from ..groups import FAMILIES, parse_family, parse_metric

__all__: list[str] = []


def _family_iv(family, allowed=FAMILIES) -> str:
    """Normalize a family name (case-insensitive) and check it is in ``allowed``."""
    return parse_family(family, tuple(allowed))


def _int_iv(value, name: str, minimum: int) -> int:
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        raise TypeError(f"`{name}` must be an integer >= {minimum}, got {value!r}.")
    if value < minimum:
        raise ValueError(f"`{name}` must be an integer >= {minimum}, got {value!r}.")
    return int(value)


def _metric_iv(metric, size: int) -> float:
    """The metric constant k from a number or a metric name (:func:`parse_metric`)."""
    return parse_metric(metric, size, "k")[1]


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


def _finite_iv(value, name: str, what: str = "a number or array") -> np.ndarray:
    """A finite real or complex scalar or array, as a float or complex ndarray."""
    if isinstance(value, (str, bytes)):
        raise TypeError(f"`{name}` must be {what}, got {value!r}.")
    try:
        arr = np.asarray(value, dtype=complex if np.iscomplexobj(value) else float)
    except (TypeError, ValueError):
        raise TypeError(f"`{name}` must be {what}, got {value!r}.") from None
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"`{name}` must be finite, got {value!r}.")
    return arr

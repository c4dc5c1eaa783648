"""Closed forms for simple loops (any group) and for any loop with U(1).

Conventions (README.md, "Conventions"): the curvature is white noise of intensity
``coupling * mu`` per Lie-algebra component in an orthonormal basis of the metric
``<X, Y> = -k Re tr(XY)``; for an irreducible representation pi the Casimir constant
c_pi is defined by ``sum_a pi(X_a)^2 = -c_pi Id`` and Brownian motion at time t has
``E[pi(U_t)] = exp(-c_pi t / 2) Id``.
"""

from __future__ import annotations

import numbers

import numpy as np

from ._common import _finite_iv, _metric_iv, _real_iv

__all__ = ["simple_loop", "u1_loop"]


def _casimir_from(group_or_casimir, rep) -> float:
    """Casimir constant from a number, a Representation or a Group (+ rep spec)."""
    obj = group_or_casimir
    if isinstance(obj, bool):
        raise TypeError(
            "`group_or_casimir` must be a Casimir constant, a Representation or a Group, "
            f"got {obj!r}."
        )
    if isinstance(obj, numbers.Real):
        c = float(obj)
        if not (np.isfinite(c) and c >= 0):
            raise ValueError(f"`group_or_casimir` must be a finite Casimir constant >= 0, got {obj!r}.")
        return c
    if hasattr(obj, "rep") and callable(obj.rep):  # a Group
        obj = obj.rep(rep)
    if hasattr(obj, "casimir"):  # a Representation
        # the law needs sum_a pi(X_a)^2 = -c Id (true for irreducibles), not irreducibility
        if obj.casimir is None:
            raise ValueError(
                f"`rep` must have a scalar Casimir operator for the simple-loop law, got "
                f"{getattr(obj, 'name', obj)!r} (use the exact evaluation or Monte Carlo)."
            )
        return float(obj.casimir)
    raise TypeError(
        "`group_or_casimir` must be a Casimir constant, a Representation or a Group, "
        f"got {type(obj).__name__}."
    )


def _simple_loop_iv(group_or_casimir, area, coupling, rep):
    c = _casimir_from(group_or_casimir, rep)
    a = _finite_iv(area, "area", "a real or complex number or array")
    lam = _real_iv(coupling, "coupling", positive=True)
    if np.ndim(lam) != 0:
        raise ValueError(f"`coupling` must be a scalar > 0, got {coupling!r}.")
    return c, a, lam


def simple_loop(group_or_casimir, area, coupling: float, *, rep: str = "fundamental"):
    r"""Wilson loop of a simple loop in an irreducible representation.

    For a simple closed curve enclosing a region of measure ``A`` (``mu`` of the
    region), the holonomy has the law of Brownian motion at time ``coupling * A``
    (axial gauge reduces it to one Brownian increment), so

    .. math:: E[\operatorname{tr}\pi(H)] / d_\pi = \exp(-c_\pi \lambda A / 2).

    Parameters
    ----------
    group_or_casimir : float, Representation or Group
        The Casimir constant ``c_pi`` (for the group's metric), a representation with
        ``.casimir`` (its Casimir operator must be scalar, as for any irreducible), or a group (then ``rep`` names the
        representation).
    area : float, complex or array_like
        Measure of the enclosed region (not the signed area of the loop: the value does
        not depend on orientation). A negative or complex value returns the analytic
        continuation (no measure exists there).
    coupling : float
        The coupling lambda > 0.
    rep : str, optional
        Representation spec when a group is given (default ``"fundamental"``).

    Returns
    -------
    float, complex or ndarray
        The normalized Wilson loop.

    References
    ----------
    .. [1] T. Levy, "Yang-Mills measure on compact surfaces", Mem. Amer. Math. Soc. 166
       (2003), no. 790.
    .. [2] A. Sengupta, "Gauge theory on compact surfaces", Mem. Amer. Math. Soc. 126
       (1997), no. 600.

    Examples
    --------
    SU(2) fundamental with k = 2 has c = 3/4:

    >>> from holonomy.exact import simple_loop
    >>> round(simple_loop(0.75, 2.0, 1.0), 12)
    0.472366552741
    """
    c, a, lam = _simple_loop_iv(group_or_casimir, area, coupling, rep)
    w = np.exp(-c * lam * a / 2.0)
    return w.item() if np.ndim(w) == 0 else w


def _u1_loop_iv(windings, areas, coupling, k, charge):
    if isinstance(windings, (str, bytes)):
        raise TypeError(f"`windings` must be an integer array, got {windings!r}.")
    n = np.asarray(windings)
    if n.dtype.kind not in "iub":
        if n.dtype.kind == "f" and n.size and np.all(np.isfinite(n)) and np.all(n == np.round(n)):
            n = n.astype(np.int64)
        else:
            raise ValueError(f"`windings` must be integers, got {windings!r}.")
    a = _real_iv(areas, "areas")
    a = np.asarray(a, dtype=float)
    if a.shape != n.shape:
        raise ValueError(
            f"`areas` must have the shape of `windings` {n.shape}, got shape {a.shape}."
        )
    lam = _real_iv(coupling, "coupling", positive=True)
    if np.ndim(lam) != 0:
        raise ValueError(f"`coupling` must be a scalar > 0, got {coupling!r}.")
    kk = _metric_iv(k, 1)
    if isinstance(charge, bool) or not isinstance(charge, numbers.Integral):
        raise TypeError(f"`charge` must be an integer, got {charge!r}.")
    q = int(charge)
    return n.astype(float), a, lam, kk, q


def u1_loop(windings, areas, coupling: float, k=1, *, charge: int = 1) -> float:
    r"""Wilson loop of any loop for U(1), from its winding numbers and face measures.

    With the metric ``<X, Y> = -k Re tr(XY)`` the orthonormal generator of u(1) is
    ``i / sqrt(k)``, so the charge-q representation has Casimir ``c = q^2 / k``
    (``c = 1 / k`` for the fundamental). Faces F are independent and the phase of the
    holonomy is ``exp(i q sum_F n_F x_F / sqrt(k))`` with ``x_F ~ N(0, lambda |F|)``:

    .. math:: W = \exp\Big(-\frac{\lambda c}{2} \sum_F n_F^2 |F|\Big).

    Parameters
    ----------
    windings : array_like of int
        Winding number of the loop around each face (or each lattice cell).
    areas : array_like of float
        Measure ``|F|`` of each face, same shape. Negative values (a sign-changing
        density) give the formal continuation.
    coupling : float
        lambda > 0.
    k : float or str, optional
        Metric constant (default 1, the ``trace`` metric) or metric name.
    charge : int, optional
        Charge q of the representation ``z -> z^q`` (default 1).

    Returns
    -------
    float

    References
    ----------
    .. [1] A. Sengupta, "Gauge theory on compact surfaces", Mem. Amer. Math. Soc. 126
       (1997), no. 600 (the abelian case).
    .. [2] T. Levy, "Yang-Mills measure on compact surfaces", Mem. Amer. Math. Soc. 166
       (2003), no. 790 (the abelian case; from memory).

    Examples
    --------
    A loop wound twice around a unit square, lambda = 1, k = 1:

    >>> from holonomy.exact import u1_loop
    >>> round(u1_loop([2], [1.0], 1.0), 12)
    0.135335283237
    """
    n, a, lam, kk, q = _u1_loop_iv(windings, areas, coupling, k, charge)
    c = q * q / kk
    return float(np.exp(-lam * c * np.sum(n * n * a) / 2.0))

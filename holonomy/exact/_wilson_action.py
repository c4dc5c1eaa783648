"""One-plaquette averages of the Wilson action and lattice loops built from them.

The ``wilson`` scheme draws each plaquette P from the density proportional to
``exp((k / s) Re tr P)`` against Haar measure, s = lambda * mu(cell), k the metric
constant. Write ``b = k / s``: the density is ``exp(b Re tr P)``. Then

- U(1): ``exp(b cos theta)`` (von Mises), ``w = E[cos theta] = I_1(b) / I_0(b)``;
  with k = 1, b = 1/s.
- SU(2): eigenvalues ``e^{+-i theta}``, ``Re tr P = 2 cos theta``, Haar density
  ``(2/pi) sin^2 theta`` on ``[0, pi]``, so ``w = E[cos theta] = I_2(2b) / I_1(2b)``;
  with k = 2, ``2b = 4/s``.
- U(N): ``Z(b) = int exp(b Re tr P) dP = det[I_{i-j}(b)]_{i,j=1..N}`` (Heine/Andreief
  identity on the Weyl density), and ``w = E[Re tr P] / N = (1/N) d/db log Z(b)``,
  i.e. ``w = tr(M^{-1} M') / N`` with ``M_ij = I_{i-j}(b)`` and
  ``M'_ij = (I_{i-j-1}(b) + I_{i-j+1}(b)) / 2``.
- SU(N): ``Z(b) = sum_{q in Z} det[I_{q+i-j}(b)]`` (the sum over q imposes det P = 1),
  and again ``w = (1/N) d/db log Z(b)``.

On the plane with free boundary the plaquettes of the lattice theory in axial gauge are
independent, so a simple lattice loop enclosing A cells has ``W = w^A``; for U(1) and
any lattice loop, ``W = prod_cells I_{n_c}(b) / I_0(b)`` with n_c the cell's winding.
"""

from __future__ import annotations


import numpy as np
from scipy import special

from discretize import AreaForm, LatticeLoop, joint_arrangement

from ._characters import bessel_ratio, determinant_range
from ._common import _family_iv, _int_iv, _metric_iv, _real_iv
from ._dispatch import lattice_polygon
from ._evaluate import ExactEvaluation, evaluate_words
from ._laws import ExactRouteError, WilsonLaw
from ._word import lasso_words

__all__ = ["wilson_plaquette", "wilson_lattice_loop", "wilson_lattice_exact"]


def _wilson_iv(family, n, s, k, b):
    fam = _family_iv(family, allowed=("U", "SU"))
    n = _int_iv(n, "n", 1 if fam == "U" else 2)
    if b is None:
        if s is None or k is None:
            raise ValueError("`s` and `k` must both be given (or give `b` = k / s instead).")
        s = _real_iv(s, "s", positive=True)
        if np.ndim(s) != 0:
            raise ValueError(f"`s` must be a scalar > 0, got {s!r}.")
        kk = _metric_iv(k, n)
        bb = kk / s
    else:
        if s is not None:
            raise ValueError("give either `s` (with `k`) or `b`, not both.")
        bb = _real_iv(b, "b", positive=True)
        if np.ndim(bb) != 0:
            raise ValueError(f"`b` must be a scalar > 0, got {b!r}.")
    return fam, n, float(bb)


def _ddet(M: np.ndarray, dM: np.ndarray) -> float:
    """d det(M): sum over columns of det(M with that column replaced by dM's)."""
    total = 0.0
    for j in range(M.shape[1]):
        A = M.copy()
        A[:, j] = dM[:, j]
        total += np.linalg.det(A)
    return total


def _bessel_matrices(N: int, b: float, q: int = 0):
    """Scaled matrices e^{-b} I_{q+i-j}(b) and their b-derivative (scaled the same way)."""
    idx = q + np.subtract.outer(np.arange(N), np.arange(N))
    M = special.ive(idx, b)
    dM = 0.5 * (special.ive(idx - 1, b) + special.ive(idx + 1, b))
    return M, dM


def _u_n_plaquette(N: int, b: float) -> float:
    determinant_range(b, False)
    M, dM = _bessel_matrices(N, b)
    # the common factor e^{-b} cancels in M^{-1} M'
    return float(np.trace(np.linalg.solve(M, dM))) / N


def _su_n_plaquette(N: int, b: float) -> float:
    # terms decay like I_q(b)^N; every term carries the same scale e^{-N b}
    z = dz = 0.0
    qmax = determinant_range(b, True)
    for q in range(-qmax, qmax + 1):
        M, dM = _bessel_matrices(N, b, q)
        z += np.linalg.det(M)
        dz += _ddet(M, dM)
    return float(dz / z) / N


def wilson_plaquette(family: str, n: int, s=None, k=None, *, b=None) -> float:
    r"""One-plaquette Wilson-action average ``w = E[Re tr P] / N``.

    The density of P is proportional to ``exp(b Re tr P)`` against Haar measure with
    ``b = k / s`` (the ``wilson`` scheme: ``exp((k / s) Re tr P)``), s = lambda * mu(cell).

    - U(1): ``w = I_1(b) / I_0(b)`` (k = 1: b = 1/s).
    - SU(2): ``w = I_2(2b) / I_1(2b)`` (k = 2: ``I_2(4/s) / I_1(4/s)``).
    - U(N): ``w = (1/N) d/db log det[I_{i-j}(b)]``.
    - SU(N): ``w = (1/N) d/db log sum_q det[I_{q+i-j}(b)]``.

    Parameters
    ----------
    family : {"U", "SU"}
    n : int
        Matrix size N.
    s : float, optional
        One cell's variance lambda * mu(cell) > 0.
    k : float or str, optional
        Metric constant (required with ``s``).
    b : float, optional
        The density's parameter directly, instead of ``s`` and ``k``.

    Returns
    -------
    float

    References
    ----------
    .. [1] D. J. Gross, E. Witten, "Possible third-order phase transition in the
       large-N lattice gauge theory", Phys. Rev. D 21 (1980) 446-453.
    .. [2] I. Bars, F. Green, "Complete integration of U(N) lattice gauge theory in a
       large-N limit", Phys. Rev. D 20 (1979) 3311-3330.
    .. [3] R. C. Brower, P. Rossi, C.-I. Tan, "The external field problem for QCD",
       Nucl. Phys. B 190 (1981) 699-718 (SU(N): the sum over q).
    .. [4] M. Creutz, "Quarks, Gluons and Lattices", Cambridge (1983), chapter on
       two-dimensional lattice gauge theory (w^A for a loop enclosing A plaquettes).

    Examples
    --------
    >>> from holonomy.exact import wilson_plaquette
    >>> round(wilson_plaquette("U", 1, 0.5, 1), 12)  # I1(2) / I0(2)
    0.697774657964
    """
    fam, N, bb = _wilson_iv(family, n, s, k, b)
    if fam == "U" and N == 1:
        return bessel_ratio(1, 0, bb)
    if fam == "SU" and N == 2:
        return bessel_ratio(2, 1, 2 * bb)
    if fam == "U":
        return _u_n_plaquette(N, bb)
    return _su_n_plaquette(N, bb)


def wilson_lattice_loop(family: str, n: int, s=None, k=None, *, cells=None, windings=None,
                        b=None) -> float:
    r"""Wilson loop of a lattice loop under the Wilson action on the plane.

    Give ``cells`` = A, the number of cells enclosed by a *simple* lattice loop, for
    ``W = w^A`` (any supported family); or, for U(1) only, ``windings`` (the winding
    number of every cell, any lattice loop) for ``W = prod_c I_{n_c}(b) / I_0(b)``.

    Parameters
    ----------
    family, n, s, k, b
        As in :func:`wilson_plaquette`.
    cells : int, optional
        Number of enclosed cells of a simple loop.
    windings : array_like of int, optional
        Per-cell winding numbers (U(1) only).

    References
    ----------
    .. [1] M. Creutz, "Quarks, Gluons and Lattices", Cambridge (1983), chapter on
       two-dimensional lattice gauge theory (from memory).
    .. [2] D. J. Gross, E. Witten, Phys. Rev. D 21 (1980) 446-453 (independent
       plaquettes in axial gauge on the plane).

    Examples
    --------
    >>> from holonomy.exact import wilson_lattice_loop, wilson_plaquette
    >>> w = wilson_plaquette("SU", 2, 0.5, 2)
    >>> bool(abs(wilson_lattice_loop("SU", 2, 0.5, 2, cells=4) - w**4) < 1e-15)
    True
    """
    fam, N, bb = _wilson_iv(family, n, s, k, b)
    if (cells is None) == (windings is None):
        raise ValueError("give exactly one of `cells` (simple loop) or `windings` (U(1)).")
    if cells is not None:
        A = _int_iv(cells, "cells", 0)
        return wilson_plaquette(fam, N, b=bb) ** A
    if not (fam == "U" and N == 1):
        raise ValueError(
            f"`windings` is supported for U(1) only, got {fam}({N}); for a non-abelian "
            "group give `cells` of a simple loop or use Monte Carlo."
        )
    w = np.asarray(windings)
    if w.dtype.kind not in "iu":
        raise ValueError(f"`windings` must be integers, got dtype {w.dtype}.")
    nz = w[w != 0]
    if nz.size == 0:
        return 1.0
    r = np.array([bessel_ratio(q, 0, bb) for q in np.abs(nz).tolist()])
    if not r.all():  # a ratio below the double range: so is the product
        return 0.0
    # log-sum so that large loops do not underflow term by term
    return float(np.exp(np.sum(np.log(r))))


def wilson_lattice_exact(group, rep, loops, *, coupling: float, area=None,
                         max_dim: int | None = None):
    r"""Exact Wilson-action value of any lattice loop, or correlator of several.

    On the plane the plaquettes of the Wilson action are independent (axial gauge), and
    integrating out the edges inside a face of the loops' graph convolves its cells'
    one-plaquette laws (Migdal 1975). The face variables of the lasso decomposition are
    then independent with laws :class:`holonomy.exact.WilsonLaw` (``cells`` plaquettes
    of density ``exp((k / s) Re tr P)``, ``s = lambda mu(cell)``), and the value is the
    exact evaluation of the loops' words with these laws in place of heat kernels:
    ``E[chi_sigma] / dim sigma = (I_{2j+1}(2b) / I_1(2b))^cells`` for SU(2) spin j,
    ``(I_q(b) / I_0(b))^cells`` for the U(1) charge q, Bessel determinants for U(N) and
    SU(N) (closed-form routes only: lobes and wound loops).

    Parameters
    ----------
    group : Group
        U(1), SU(2) (any representation); U(N), SU(N) where the reduced words have
        closed forms.
    rep : str
        Representation spec.
    loops : LatticeLoop or sequence of LatticeLoop
        One loop (its Wilson loop) or several on one grid (the correlator
        ``E[prod_i tr pi(H_i) / dim pi]``).
    coupling : float
        lambda > 0.
    area : discretize.AreaForm, optional
        Constant density only (default Lebesgue).

    Returns
    -------
    ExactEvaluation

    References
    ----------
    .. [1] D. J. Gross, E. Witten, Phys. Rev. D 21 (1980) 446-453 (independent
       plaquettes; Bessel-function plaquette averages).
    .. [2] A. A. Migdal, Sov. Phys. JETP 42 (1975) 413-418 (decimation: the law of a
       union of plaquettes is the convolution of theirs).
    .. [3] T. Levy, Mem. Amer. Math. Soc. 166 (2003), ch. 2 (lasso decomposition for
       any class-function weight).

    Examples
    --------
    SU(2), spin 1/2, a loop wound twice on 2 cells: ``(3 w_1^2 - 1) / 2`` with w_1 the
    spin-1 plaquette value ``I_3(4/s) / I_1(4/s)``.

    >>> from discretize import Grid, LatticeLoop
    >>> from holonomy.groups import make_group
    >>> from scipy.special import iv
    >>> loop = LatticeLoop.from_moves(Grid((0.0, 0.0), 1.0, (4, 4)), "R2 U1 L2 D1", turns=2)
    >>> r = wilson_lattice_exact(make_group("SU", 2, "physics"), "fundamental", loop, coupling=0.5)
    >>> w1 = iv(3, 8.0) / iv(1, 8.0)
    >>> bool(abs(r.value.real - (3 * w1**2 - 1) / 2) < 1e-12)
    True
    """

    single = isinstance(loops, LatticeLoop)
    loops = [loops] if single else list(loops)
    if not loops or not all(isinstance(lp, LatticeLoop) for lp in loops):
        raise TypeError("`loops` must be a LatticeLoop or a sequence of LatticeLoops.")
    if group.family not in ("U", "SU"):
        raise ExactRouteError("group", f"the Wilson action is sampled for U(N) and SU(N) "
                                       f"only, got {group.family}({group.n})")
    area = AreaForm() if area is None else area
    if not area.is_constant:
        raise ExactRouteError("geometry", "the Wilson-action exact value needs a constant "
                                          "density (faces then hold equal cells)")
    h = loops[0].grid.spacing
    s = float(coupling) * float(area.base) * h * h
    if not s > 0:
        raise ExactRouteError("geometry", "the Wilson action needs a positive density")
    b = group.k / s
    polys, periods = zip(*(lattice_polygon(lp) for lp in loops))
    arr = joint_arrangement([np.asarray(p) for p in polys], list(periods))
    cells = [a / (h * h) for a in arr.areas]
    laws = [WilsonLaw.plaquettes(group.family, group.N, group.k, b, int(round(c)))
            for c in cells]
    out = evaluate_words(group, lasso_words(arr), laws, rep=rep, max_dim=max_dim)
    return ExactEvaluation(value=out.value, word=out.word, reduced=out.reduced,
                           face_times=tuple(laws), faces=arr,
                           method=out.method.replace("lasso", "wilson-lasso", 1))

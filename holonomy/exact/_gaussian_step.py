"""The exponential moment of one Ad-invariant Gaussian Lie-algebra element.

``f(t) = E[tr exp(X)] / N`` where ``X = sum_a Z_a X_a`` with Z_a iid N(0, t) and X_a an
orthonormal basis of the metric ``<X, Y> = -k Re tr(XY)``. By Schur's lemma
``E[exp(X)] = f(t) Id`` for an irreducible defining representation. This is the
one-plaquette value of the ``gauss`` scheme, and ``f(s H)^W`` is the ``linear`` scheme's
value on a rectangle of H rows and W columns with the reference line on its bottom edge.

Changing the metric from k to k' rescales the orthonormal basis by ``sqrt(k / k')``,
so ``f_{k'}(t) = f_k(t k / k')``: each closed form is derived at one k and rescaled.

- U(1): ``X = i Z / sqrt(k)``, ``f = exp(-t / (2k))``.
- SU(2) (= Sp(1)), k = 2: ``X_a = i sigma_a / 2``, so ``exp(X)`` has eigenvalues
  ``e^{+-i r/2}`` with ``r = |Z|`` and ``f = E[cos(r/2)]``. From
  ``E[sin(a r) / (a r)] = exp(-a^2 t / 2)`` (average of ``E[exp(i a u.Z)]`` over unit u),
  ``E[cos(a r)] = d/da (a exp(-a^2 t/2)) = (1 - a^2 t) exp(-a^2 t / 2)``; at a = 1/2,
  ``f(t) = (1 - t/4) exp(-t/8)``.
- SO(3): the unit-angle generators L_a have ``<L_a, L_a> = 2k``, so ``exp(X)`` is a
  rotation by ``r / sqrt(2k)`` and ``f = (1 + 2 (1 - a^2 t) e^{-a^2 t/2}) / 3`` with
  ``a^2 = 1/(2k)``. SO(2): ``f = exp(-t / (4k))``.
- U(N), k = N: ``X = i H`` with H from the GUE, ``E|H_ij|^2 = t / N``; Haagerup and
  Thorbjornsen give ``E[tr_N exp(i H)] = exp(-t/(2N)) L^{(1)}_{N-1}(t/N) / N``.
- SU(N), k = N: the centre component ``Z_0 i Id / N`` is independent of the traceless
  part and contributes ``E[exp(i Z_0 / N)] = exp(-t / (2 N^2))``, so
  ``f_SU(t) = f_U(t) exp(t / (2 N^2))``.

Other SO(n) and Sp(n) (rank r <= 3): numerical, by the Weyl integration formula on the
Lie algebra. An Ad-invariant function integrates over g as
``c int_t F(H) prod_{alpha > 0} alpha(H)^2 dH`` over a Cartan subalgebra t. With
H = rotation angles theta_1..theta_r (SO: planes (2j-1, 2j); Sp: ``diag(i theta, -i
theta)``), ``|H|^2 = 2 k sum theta_j^2`` in both cases, so the angles have density
``prod_alpha alpha(theta)^2 exp(-k |theta|^2 / t)``. Positive roots: SO(2r):
``theta_i +- theta_j``; SO(2r+1): also ``theta_i``; Sp(r): also ``2 theta_i``. With
``theta = sqrt(t/k) x`` this is a Gauss-Hermite product quadrature (weight
``exp(-|x|^2)``) of ``tr exp(H) / N`` (SO(2r): ``2 sum cos theta_j``; SO(2r+1): one more;
Sp(r): ``2 sum cos theta_j``) against the polynomial ``prod alpha(x)^2``.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from noise import ArgumentError

from ..groups import matrix_size
from ._common import _finite_iv, _family_iv, _int_iv, _metric_iv

__all__ = ["gaussian_step"]

_MAX_RANK = 3


def _positive_roots(fam: str, r: int) -> np.ndarray:
    """Positive roots of so(2r), so(2r+1) ("SOodd") or sp(r) as rows acting on theta."""
    roots = []
    for i in range(r):
        for j in range(i + 1, r):
            for sign in (1, -1):
                a = np.zeros(r)
                a[i], a[j] = 1, sign
                roots.append(a)
    if fam in ("SOodd", "Sp"):
        for i in range(r):
            a = np.zeros(r)
            a[i] = 1 if fam == "SOodd" else 2
            roots.append(a)
    return np.array(roots).reshape(-1, r)


def _weyl_quadrature(fam: str, n: int, tt: np.ndarray, kk: float) -> np.ndarray:
    """f(t) for SO(n) or Sp(n) by Gauss-Hermite quadrature over the Cartan angles."""
    if fam == "SO":
        r, kind, N = n // 2, ("SOodd" if n % 2 else "SO"), n
    else:
        r, kind, N = n, "Sp", 2 * n
    smax = float(np.sqrt(np.max(np.abs(tt)) / kk)) if tt.size else 0.0
    M = int(min(160, 40 + 12 * np.ceil(smax)))
    x, w = np.polynomial.hermite.hermgauss(M)
    grids = np.meshgrid(*([x] * r), indexing="ij")
    X = np.stack([g.ravel() for g in grids], axis=1)  # (M^r, r)
    W = np.prod(np.stack(np.meshgrid(*([w] * r), indexing="ij")), axis=0).ravel()
    roots = _positive_roots(kind, r)
    P = np.prod((X @ roots.T) ** 2, axis=1) if len(roots) else np.ones(len(X))
    WP = W * P
    scale = np.sqrt(tt.astype(complex).ravel() / kk)  # theta = sqrt(t/k) x
    theta = X[None, :, :] * scale[:, None, None]
    tr = 2 * np.sum(np.cos(theta), axis=2) + (1 if kind == "SOodd" else 0)
    f = (tr @ WP) / WP.sum() / N
    f = f.reshape(tt.shape)
    return f if np.iscomplexobj(tt) else f.real


#: the largest n of the closed forms: their work and memory grow linearly with n
#: (U(10^8): 0.3 s); beyond, n = 10**30 was an OverflowError deep inside
_MAX_N = 10**8


def _gaussian_step_iv(family, n, t, k):
    fam = _family_iv(family)
    n = _int_iv(n, "n", 1)
    if n > _MAX_N:
        raise ArgumentError("n", f"got {n!r}; expected an integer from 1 to {_MAX_N:.0e}",
                            f"`n` must be an integer from 1 to {_MAX_N:.0e}, got {n!r}.")
    if fam in ("SU", "SO") and n < 2:
        raise ValueError(f"`n` must be >= 2 for {fam}, got {n!r}.")
    if (fam == "SO" and n // 2 > _MAX_RANK) or (fam == "Sp" and n > _MAX_RANK):
        raise ValueError(
            f"`n` = {n} is too large for {fam}: the quadrature route handles rank <= "
            f"{_MAX_RANK} (SO(n) for n <= {2 * _MAX_RANK + 1}, Sp(n) for n <= {_MAX_RANK}); "
            "use Monte Carlo."
        )
    N = matrix_size(fam, n)
    kk = _metric_iv(k, N)
    tt = _finite_iv(t, "t")
    return fam, n, tt, kk


def gaussian_step(family: str, n: int, t, k):
    r"""``f(t) = E[tr exp(X)] / N`` for one Ad-invariant Gaussian X of variance t per
    component (orthonormal basis of the metric k).

    ================  =============================================================
    group             f(t)
    ================  =============================================================
    U(1)              ``exp(-t / (2k))``
    U(N)              ``exp(-t/(2k)) L^{(1)}_{N-1}(t/k) / N``   (k = N: Laguerre form)
    SU(N)             U(N) value times ``exp(t / (2 k N))``
    SU(2), Sp(1)      k = 2: ``(1 - t/4) exp(-t/8)``
    SO(2)             ``exp(-t / (4k))``
    SO(3)             ``(1 + 2 (1 - a^2 t) exp(-a^2 t / 2)) / 3``, ``a^2 = 1/(2k)``
    SO(4..7), Sp(2),  numerical: Weyl integration on the Lie algebra by Gauss-Hermite
    Sp(3)             quadrature (module docstring); about 1e-12 for ``t / k <= 50``
    ================  =============================================================

    Parameters
    ----------
    family : {"U", "SU", "SO", "Sp"}
    n : int
        Group size (SO(n): n <= 7; Sp(n): n <= 3).
    t : float, complex or array_like
        Variance per component (one cell: ``s = lambda mu(cell)``). Negative or complex
        values give the analytic continuation.
    k : float or str
        Metric constant or name.

    Returns
    -------
    float, complex or ndarray

    References
    ----------
    .. [1] U. Haagerup, S. Thorbjornsen, "Random matrices with complex Gaussian
       entries", Expo. Math. 21 (2003) 293-337 (moment generating function of the
       GUE; page numbers from memory).
    .. [2] I. S. Gradshteyn, I. M. Ryzhik, "Table of Integrals, Series, and Products",
       7th ed. (2007), 3.952 (Gaussian integrals of sin and cos), for the SU(2) and
       SO(3) forms derived above.
    .. [3] Harish-Chandra, "Differential operators on a semisimple Lie algebra", Amer.
       J. Math. 79 (1957) 87-120 (Weyl integration formula on the Lie algebra); roots
       of so(n), sp(n): W. Fulton, J. Harris, "Representation Theory" (1991), sections
       16-19.

    Examples
    --------
    >>> from holonomy.exact import gaussian_step
    >>> import math
    >>> t = 0.8
    >>> bool(abs(gaussian_step("SU", 2, t, 2) - (1 - t/4) * math.exp(-t/8)) < 1e-15)
    True
    """
    fam, n, tt, kk = _gaussian_step_iv(family, n, t, k)
    if fam == "Sp" and n == 1:
        fam, n = "SU", 2
    if fam in ("U", "SU"):
        N = n
        # one exponential (the SU factor exp(t / 2kN) folded in): at huge t the product
        # of two would be 0 * inf; where exp underflows, the limit is 0 whatever the
        # polynomial (which may overflow on its own)
        decay = np.exp(-tt / (2 * kk) * ((1 - 1 / N) if fam == "SU" else 1))
        with np.errstate(over="ignore", invalid="ignore"):
            f = decay * special.eval_genlaguerre(N - 1, 1, tt / kk) / N
        f = np.where(decay == 0, 0.0, f)
    elif fam == "SO" and n == 2:
        f = np.exp(-tt / (4 * kk))
    elif fam == "SO" and n == 3:
        a2t = tt / (2 * kk)
        f = (1 + 2 * (1 - a2t) * np.exp(-a2t / 2)) / 3
    else:
        f = _weyl_quadrature(fam, n, tt, kk)
    f = np.asarray(f)
    return f.item() if f.ndim == 0 else f

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
from dataclasses import dataclass

import numpy as np
from scipy import special

from ..groups import matrix_size
from ._common import _finite_iv, _family_iv, _int_iv, _metric_iv

__all__ = ["gaussian_step", "gaussian_matrix", "GaussianMatrixValue"]

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


def _gaussian_step_iv(family, n, t, k):
    fam = _family_iv(family)
    n = _int_iv(n, "n", 1)
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


@dataclass(frozen=True)
class GaussianMatrixValue:
    """The Gaussian-matrix prescription of a simple loop (`gaussian_matrix`).

    Attributes
    ----------
    value : float, complex or None
        ``E[chi(exp X)] / dim`` (None with a note where no closed form or quadrature
        applies).
    coefficients : list of float
        Its Taylor coefficients c_0..c_M in the coupling.
    rationals : list of str or None
        The same as exact rationals (defining representation of U(N), SU(N), SO(N) at a
        rational area and metric), else None.
    first_difference : int or None
        The first order j at which its coefficient differs from the exact (heat-kernel)
        value ``exp(-c lambda A / 2)``; None if none up to M (abelian groups).
    exact_coefficient, gaussian_coefficient : float or None
        The two coefficients at that order.
    note : str or None
        Why `value` is None, if it is.
    """

    value: float | complex | None
    coefficients: list
    rationals: list | None
    first_difference: int | None
    exact_coefficient: float | None = None
    gaussian_coefficient: float | None = None
    note: str | None = None


def gaussian_matrix(group, rep, area: float, coupling: float, order: int = 4
                    ) -> GaussianMatrixValue:
    r"""The Gaussian-matrix prescription for a simple loop of (signed) area A.

    ``E[chi(exp X)] / dim`` with ``X = sum_a Z_a X_a``, Z_a iid ``N(0, lambda A)`` (one
    Gaussian exponential). For simple loops it is the closed form of the
    holomorphic-gauge and Wu-Mandelstam-Leibbrandt perturbative resummations, and it
    is the ``gauss`` scheme's one-plaquette value. It agrees with the exact value
    ``exp(-c lambda A / 2)`` at order lambda and differs from order lambda^2 on
    (non-abelian groups): for SU(2) with k = 2, ``(1 - t/4) exp(-t/8)`` against
    ``exp(-3t/8)``, c_2 = 5/128 against 9/128.

    Parameters
    ----------
    group : Group
    rep : str or Representation
        The value needs the defining representation (`gaussian_step`); the series is
        available in any representation.
    area : float
        The loop's (signed) measure A; a negative one gives the formal continuation.
    coupling : float
        lambda.
    order : int
        M: coefficients c_0..c_M.

    Returns
    -------
    GaussianMatrixValue

    References
    ----------
    .. [1] M. Staudacher and W. Krauth, "Two-dimensional QCD in the Wu-Mandelstam-
       Leibbrandt prescription", Phys. Rev. D 57 (1998) 2456 (from memory).
    .. [2] A. Bassetto and L. Griguolo, "Two-dimensional QCD, instanton contributions
       and the perturbative Wu-Mandelstam-Leibbrandt prescription", Phys. Lett. B 443
       (1998) 325 (from memory).
    .. [3] U. Haagerup and S. Thorbjornsen, Expo. Math. 21 (2003) 293-337 (the
       Laguerre form of ``E[tr exp(iH)]`` for the GUE).

    Examples
    --------
    >>> from holonomy.groups import make_group
    >>> from holonomy.exact import gaussian_matrix
    >>> g = gaussian_matrix(make_group("SU", 2, "physics"), "fundamental", 1.0, 1.0, 2)
    >>> g.rationals, g.first_difference     # (1 - t/4) e^(-t/8) against e^(-3t/8)
    (['1', '-3/8', '5/128'], 2)
    """
    import sympy

    from .._continuum_series import _rational
    from .._series import exp_product_series

    rep_obj = group.rep(rep) if isinstance(rep, str) else rep
    t = float(coupling) * float(area)
    note = None
    value = None
    if rep_obj.name in ("fundamental", "defining"):
        try:
            value = gaussian_step(group.family, group.n, t, group.k)
        except ValueError as exc:
            note = f"no closed form or quadrature for one Gaussian exponential ({exc})"
    else:
        note = "the value needs the defining representation (the series does not)"
    A = _rational(area)
    exact_ok = (A is not None and rep_obj.name in ("fundamental", "defining")
                and group.family in ("U", "SU", "SO") and _rational(group.k) is not None)
    if exact_ok:
        res = exp_product_series(group, sympy.Matrix([[A]]), int(order), rep=rep_obj,
                                 exact=True)
        rationals = [str(c) for c in res.coefficients]
        coeffs = [float(c) for c in res.coefficients]
    else:
        res = exp_product_series(group, [[float(area)]], int(order), rep=rep_obj)
        rationals = None
        coeffs = [complex(c).real for c in res.coefficients]
    first = exact_c = gauss_c = None
    c = rep_obj.casimir
    if c is not None:
        for j, cj in enumerate(coeffs):
            ej = (-c * float(area) / 2) ** j / math.factorial(j)
            if abs(cj - ej) > 1e-10 * max(1.0, abs(ej)):
                first, exact_c, gauss_c = j, ej, cj
                break
    return GaussianMatrixValue(value=value, coefficients=coeffs, rationals=rationals,
                               first_difference=first, exact_coefficient=exact_c,
                               gaussian_coefficient=gauss_c, note=note)

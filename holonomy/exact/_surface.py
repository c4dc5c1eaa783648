"""Wilson loops on closed surfaces by character sums over irreducible representations.

A closed orientable surface of genus g and total measure T carries the heat-kernel
Yang-Mills measure. With times ``t = lambda * measure``, irreducibles a of dimension
``d_a`` and Casimir ``c_a`` (:mod:`holonomy.groups._weights`):

    Z = sum_a d_a^(2 - 2g) exp(-c_a T / 2),

and a simple loop splitting the surface into a disc of time t1 and the rest (time t2,
carrying the g handles), observed in a representation V (normalized character):

    W = sum_{a, b} d_a d_b^(1 - 2g) N_{a V}^b exp(-c_a t1/2 - c_b t2/2) / (Z dim V).

Loops are drawn in a chart of the plane; the unbounded face of the loops' arrangement is
the face of measure T minus the drawn measure and carries the handles. The outer face's
kernel

    K_g(t, h) = sum_a d_a^(1 - 2g) chi_a(h) exp(-c_a t / 2)

(the heat kernel when g = 0) weights the plane's measure of the drawn region into the
surface's: ``E_surface[f] = E_plane[f K_g(t_out, h_boundary)] / Z``.

Routes (each result names its route in ``method``):

- ``surface-character-sum``: the sums above, over the irreducibles with
  ``|lam + rho| <= R``, the fusion by the Brauer-Klimyk formula (no fusion tables:
  ``sum_b N_{aV}^b f(b) = sum_mu sign f(nu_a + mu)`` over the weights mu of V, with the
  alternating Weyl dimension polynomial supplying the sign). R is chosen so that a
  rigorous bound on the omitted terms (lattice-point count times the largest term on
  each shell) is below 1e-16 of the sum; the bound is reported.
- ``surface-poisson-dual``: for g = 0 (or an abelian group, any g), the same sums over the
  whole shifted weight lattice (the summands are Weyl-invariant) after Poisson
  summation: a sum over the dual lattice m of Gaussian terms
  ``exp(-pi^2 m^T G^-1 m / beta)``, ``beta = s T / 2``, each a polynomial Gaussian
  expectation evaluated exactly by Gauss-Hermite quadrature. It converges fast where the
  character sum is slow (small lambda T). The m = 0 term is the zero-instanton sector
  (field ``zero_instanton``); the others are ``O(exp(-pi^2 / beta))``.
- ``surface-abelian``: U(1) and SO(2), any loop: the charge ``j + q n_F`` on each face F of
  winding ``n_F``; by Poisson summation the flux sectors
  ``W = e^{-s q^2 (S2 - S1^2/T) / 2} theta(q S1 / T) / theta(0)`` with
  ``S1 = sum n_F t_F``, ``S2 = sum n_F^2 t_F``.

A simple loop wound p times uses the weights of V times p (Adams operation), so
``power:p`` and wound loops share the route.

- ``surface-outer-face-expansion``: any other loop of a group whose irreducibles have
  matrices (U(n), SU(n), Sp(1), SO(3): :func:`holonomy.groups.irreducible_representation`;
  refused above about 3e9 operations, a size limit reached at small ``t_out`` for
  rank >= 2):
  the kernel of the outer face expanded in characters,
  ``W = sum_a d_a^(1-2g) e^{-c_a t_out/2} E_plane[chi_V(w) chi_a(h)] / (Z dim V)``, each
  term the plane's exact contraction of the loop's word w and the drawn region's boundary
  h in V and a at once; ``|E_plane[chi_V chi_a]| <= dim V d_a`` bounds the omitted
  irreducibles by the partition function's tail at ``t_out``. Other groups: no value,
  with a note (representation limit).

References
----------
.. [1] A. A. Migdal, "Recursion equations in gauge field theories", Sov. Phys. JETP 42
   (1975) 413.
.. [2] B. E. Rusakov, "Loop averages and partition functions in U(N) gauge theory on
   two-dimensional manifolds", Mod. Phys. Lett. A 5 (1990) 693-703.
.. [3] E. Witten, "On quantum gauge theories in two dimensions", Commun. Math. Phys. 141
   (1991) 153-209.
.. [4] T. Levy, "Yang-Mills measure on compact surfaces", Mem. Amer. Math. Soc. 166
   (2003), no. 790 (the conditioning on the boundary holonomy).
.. [5] J. A. Minahan and A. P. Polychronakos, "Classical solutions for two-dimensional QCD
   on the sphere", Nucl. Phys. B 422 (1994) 172-186 (Poisson resummation into instanton
   sectors; from memory).
.. [6] W. Fulton and J. Harris, "Representation Theory: A First Course", Springer, 1991,
   Section 25.3 (Brauer-Klimyk formula).
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
from scipy.special import gammaln

from discretize import AreaForm, LatticeLoop, Loop, arrangement, turns_iv
from holonomy.groups import irreducible_representation, rep_of, rep_weights, weight_system
from noise import ArgumentError

from .._series import series_order_iv
from ._dispatch import _exact_wilson_loop_iv, _lattice_shape, _polygon_shape
from ._evaluate import evaluate_words, face_measures
from ._laws import ExactRouteError
from ._word import lasso_words, outer_boundary_word

__all__ = ["SurfaceValue", "surface_partition_function", "surface_simple_loop",
           "surface_abelian_loop", "outer_face_kernel", "exact_surface_wilson_loop",
           "drawn_measure", "zero_instanton_series", "OuterFaceKernel"]

_REL = 1e-16  # omitted terms below this fraction of the sum
_MAX_TERMS = 400_000  # irreducibles (or dual lattice points) a route may sum over
_MAX_FLOPS = 3e9  # eigen-decompositions the outer face's expansion may spend (a few s)
ROUTES = ("auto", "characters", "dual")


@dataclass(frozen=True)
class SurfaceValue:
    """An exact Wilson loop on a closed surface, or the reason there is none.

    Attributes
    ----------
    value : complex or None
        ``E[chi_V(H)] / dim V``; None when no route applies (see ``note``).
    method : str or None
        ``"surface-character-sum"``, ``"surface-poisson-dual"`` or ``"surface-abelian"``.
    zero_instanton : complex or None
        The zero-instanton sector (the m = 0 terms of the Poisson-resummed numerator and
        partition function); None where the dual form does not exist (non-abelian
        groups at genus >= 1).
    truncation_bound : float
        Bound on ``|value - exact|`` from the omitted terms (first order in the
        relative truncation bounds of numerator and partition function).
    genus : int
    total_area : float
    note : str
    kind : str
        ``"exact"``.
    details : dict
    """

    value: complex | None
    method: str | None
    zero_instanton: complex | None
    truncation_bound: float
    genus: int
    total_area: float
    note: str = ""
    kind: str = "exact"
    details: dict = field(default_factory=dict, compare=False)


# ------------------------------------------------------------------ input checks
def _group_iv(group):
    for attr in ("family", "n", "k", "rep"):
        if not hasattr(group, attr):
            raise TypeError(f"`group` must be a holonomy.groups Group, got {type(group).__name__}.")
    return group


def _genus_iv(genus) -> int:
    if isinstance(genus, bool) or not isinstance(genus, numbers.Integral) or genus < 0:
        raise ValueError(f"`genus` must be an integer >= 0, got {genus!r}.")
    return int(genus)


def _nonneg_iv(value, name: str, positive: bool = False) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise TypeError(f"`{name}` must be a real number, got {value!r}.")
    v = float(value)
    if not math.isfinite(v) or v < 0 or (positive and v == 0):
        rule = "> 0" if positive else ">= 0"
        raise ValueError(f"`{name}` must be a finite number {rule}, got {value!r}.")
    return v


def _route_iv(route: str) -> str:
    if route not in ROUTES:
        raise ValueError(f"`route` must be one of {list(ROUTES)}, got {route!r}.")
    return route


_rep_of = rep_of  # the one check of a `rep` argument (holonomy.groups)


# --------------------------------------------------------------- bounds on tails
def _log_shell_count(W, j):
    """log of an upper bound on the number of lattice points with |x| < j + 1: the unit
    cubes around them lie in the ball of radius j + 1 + sqrt(r)/2."""
    r = W.r
    log_vol = (r / 2) * math.log(math.pi) - gammaln(r / 2 + 1)
    return log_vol + r * np.log(j + 1 + math.sqrt(r) / 2)


def _log_dim_bound(W, radius):
    """log of a bound on |d(nu)| for |nu| <= radius (complex nu too):
    ``prod |alpha| |nu| / <rho, alpha>``."""
    if W.abelian:
        return np.zeros_like(np.asarray(radius, float))
    alpha = np.linalg.norm(W.roots, axis=1)
    return np.sum(np.log(alpha / W._rho_alpha)) + W.n_positive_roots * np.log(
        np.maximum(radius, 1e-300))


@dataclass(frozen=True)
class _Sum:
    """A truncated sum and a bound on what was left out."""

    value: complex
    bound: float
    terms: int


def _shell_tail(log_term, start: float) -> float:
    """``sum_{j >= start} exp(log_term(j))`` over integer shells j, to convergence."""
    j0 = max(0, math.floor(start))
    total, j = 0.0, j0
    while True:
        js = np.arange(j, j + 4096, dtype=float)
        v = np.exp(log_term(js))
        total += float(v.sum())
        # stop once the terms decrease and are negligible against what was summed
        if v[-1] <= 1e-30 * max(total, 1e-300) and v[-1] <= v[-2]:
            return total
        j += 4096
        if j > j0 + 10**7:
            return math.inf


class _Characters:
    """Direct character sums over the irreducibles of one group and genus.

    The irreducibles are enumerated by the norm ``q(nu) = sqrt(nu^T G nu)`` of the
    Casimir's quadratic form, ``c = s (q^2 - q(rho)^2)``, so a ball in q is a Casimir
    cutoff. Tail bounds: on the shell ``j <= q < j + 1`` there are at most
    ``V_r (j + 1 + sqrt(g_max r)/2)^r / sqrt(det G)`` lattice points (the unit cubes
    around them lie in the enlarged ellipsoid), each with ``|d| <= A |nu|^P``,
    ``|nu| <= (j + 1) / sqrt(g_min)``.
    """

    def __init__(self, group, genus: int):
        self.W = weight_system(group)
        self.g = genus
        ev = np.linalg.eigvalsh(self.W.G)
        self.gmin, self.gmax = float(ev.min()), float(ev.max())
        self.logdet = float(np.sum(np.log(ev)))
        self.qrho = float(self.W.rho_x @ self.W.G @ self.W.rho_x)

    def _log_count(self, j):
        r = self.W.r
        log_vol = (r / 2) * math.log(math.pi) - gammaln(r / 2 + 1) - self.logdet / 2
        return log_vol + r * np.log(j + 1 + math.sqrt(self.gmax * r) / 2)

    def _log_dim(self, q):
        return _log_dim_bound(self.W, np.maximum(q, 0.0) / math.sqrt(self.gmin))

    def _log_gauss(self, q, t):
        # a live term's Casimir is >= 0 (its shifted weight reflects to a dominant one of
        # norm >= |rho|), so the exponent is capped at 0: no overflow at large t
        return np.minimum(-self.W.s * (np.maximum(q, 0.0) ** 2 - self.qrho) * t / 2, 0.0)

    def _bound_z(self, R, t):
        """Bound on ``sum_{q(nu) > R} |d|^(2-2g) e^{-c t/2}`` (and on the kernel's tail)."""
        p = max(2 - 2 * self.g, 0)
        return _shell_tail(lambda j: self._log_count(j) + p * self._log_dim(j + 1)
                           + self._log_gauss(j, t), R)

    def _bound_num(self, R, t1, t2, M, nweights):
        p2 = 1 if self.g == 0 else 0
        return _shell_tail(lambda j: self._log_count(j) + math.log(nweights)
                           + self._log_dim(j + 1) + p2 * self._log_dim(j + 1 + M)
                           + self._log_gauss(j, t1) + self._log_gauss(j - M, t2), R)

    def _radius(self, bound, target: float, t_eff: float, extra: float = 0.0) -> float:
        """The smallest q-radius (on a 5 % ladder) whose tail bound is below ``target``."""
        # start beyond |rho|: every irreducible has q >= |rho|, the trivial one q = |rho|
        R = math.sqrt(2 * 36 / (self.W.s * max(t_eff, 1e-300))) + extra + 1 + math.sqrt(self.qrho)
        for _ in range(400):
            self._count_iv(R)
            if bound(R) <= target:
                return R
            R *= 1.05
        raise ValueError("the character sum does not converge to the requested precision.")

    def _count_iv(self, R):
        W = self.W
        est = math.exp(self._log_count(R - 1)) / len(W.weyl_signs)
        if est > 4 * _MAX_TERMS:
            raise _TooManyTerms(est)

    def _irreducibles(self, R):
        self._count_iv(R)
        W = self.W
        nus = W.irreducibles(R / math.sqrt(self.gmin))
        nus = nus[np.einsum("ij,jk,ik->i", nus, W.G, nus) <= R * R + 1e-9]
        if len(nus) > _MAX_TERMS:
            raise _TooManyTerms(len(nus))
        return nus

    def partition(self, t: float) -> _Sum:
        W = self.W
        R = self._radius(lambda R: self._bound_z(R, t), _REL, t)  # Z >= 1 (trivial rep)
        nus = self._irreducibles(R)
        d = W.dimension(nus)
        z = float(np.sum(d ** (2 - 2 * self.g) * np.exp(-W.casimir(nus) * t / 2)))
        return _Sum(z, self._bound_z(R, t), len(nus))

    def numerator(self, t1: float, t2: float, weights: np.ndarray) -> _Sum:
        """``sum_{a,b} d_a d_b^(1-2g) N_{aV}^b e^{-c_a t1/2 - c_b t2/2}``."""
        W = self.W
        M = float(np.sqrt(np.max(np.einsum("ij,jk,ik->i", weights, W.G, weights), initial=0.0)))
        bound = lambda R: self._bound_num(R, t1, t2, M, len(weights))  # noqa: E731

        def total(R):
            nus = self._irreducibles(R)
            da = W.dimension(nus)
            nb = nus[:, None, :] + weights[None, :, :]
            db = W.dimension(nb)
            live = np.abs(db) > 0.5  # |d| >= 1 off the walls, 0 on them
            dpow = np.where(live, np.sign(db) * np.abs(np.where(live, db, 1.0)) ** (1 - 2 * self.g), 0.0)
            # off the walls only: a wall's shifted weight may have a negative "Casimir"
            # whose exponential overflows at large t2 (and is multiplied by 0)
            expo = np.where(live, -W.casimir(nus)[:, None] * t1 / 2 - W.casimir(nb) * t2 / 2,
                            -np.inf)
            return float(np.sum(da[:, None] * dpow * np.exp(expo))), len(nus)

        R = self._radius(bound, 1e-3 * _REL, t1 + t2, M)
        value, terms = total(R)
        if bound(R) > _REL * abs(value):  # small numerator: tighten once more
            R = self._radius(bound, _REL * max(abs(value), 1e-20), t1 + t2, M)
            value, terms = total(R)
        return _Sum(value, bound(R), terms)

    def kernel_terms(self, t: float) -> tuple[np.ndarray, np.ndarray, float]:
        """The irreducibles ``nus`` and coefficients ``d^(1-2g) e^{-c t/2}`` of the outer
        face's kernel at time t, and the bound on the omitted terms."""
        W = self.W
        zt = self.partition(t)
        R = self._radius(lambda R: self._bound_z(R, t), _REL * zt.value, t)
        nus = self._irreducibles(R)
        d = W.dimension(nus)
        coef = d ** (1 - 2 * self.g) * np.exp(-W.casimir(nus) * t / 2)
        return nus, coef, self._bound_z(R, t)

    def kernel(self, t: float, U) -> tuple[np.ndarray, float]:
        nus, coef, bound = self.kernel_terms(t)
        return self.W.character_sum(nus, coef, U).real, bound


class _TooManyTerms(ValueError):
    def __init__(self, count):
        super().__init__(
            f"the character sum needs about {count:.3g} irreducibles (more than "
            f"{_MAX_TERMS}); lambda T is too small for this route."
        )


# ------------------------------------------------------------ the Poisson dual
class _Dual:
    """The same sums over the whole shifted weight lattice, Poisson-resummed (g = 0, or
    an abelian group): ``sum_{x in Z^r + rho} f(x) = sum_{m in Z^r} fhat(m) e^{2 pi i m.rho}``.
    Values are in units of the common factor
    ``e^{beta Q(rho)} (pi/beta)^{r/2} det(G)^{-1/2} / |W|``, which cancels in ratios."""

    def __init__(self, group):
        self.W = weight_system(group)
        W = self.W
        self.Ginv = np.linalg.inv(W.G)
        self.lam_max = float(np.linalg.eigvalsh(W.G).max())
        self.lam_ginv = float(np.linalg.eigvalsh(self.Ginv).max())
        # d(x) d(x + mu) has degree 2 P in all variables together; with G = I (no mixing
        # of the coordinates by the covariance) the degree in each coordinate is twice the
        # number of positive roots that involve it. Gauss-Hermite with npts nodes is exact
        # up to degree 2 npts - 1 in each variable.
        if np.allclose(W.G, np.eye(W.r)):
            per_var = 2 * int(np.max(np.count_nonzero(W.roots, axis=0), initial=0))
        else:
            per_var = 2 * W.n_positive_roots
        npts = per_var // 2 + 1
        z, w = np.polynomial.hermite_e.hermegauss(npts)
        w = w / w.sum()
        grids = np.meshgrid(*([z] * W.r), indexing="ij")
        self.nodes = np.stack([g.ravel() for g in grids], axis=-1)  # (npts^r, r)
        self.qweights = np.prod(np.meshgrid(*([w] * W.r), indexing="ij"), axis=0).ravel()

    def _expect(self, beta, shifts, mu):
        """``E[d(Y + shift) d(Y + shift + mu)]`` for ``Y ~ N(0, G^-1/(2 beta))``,
        shifts ``(M, r)`` complex; exact (Gauss-Hermite of degree > 2 P)."""
        W = self.W
        L = np.linalg.cholesky(self.Ginv / (2 * beta))
        y = self.nodes @ L.T  # (q, r)
        pts = y[None, :, :] + shifts[:, None, :]
        ip = W.to_e(pts.real) @ W.roots.T + 1j * (W.to_e(pts.imag) @ W.roots.T)
        ip2 = ip + (W.to_e(mu) @ W.roots.T)
        d1 = np.prod(ip / W._rho_alpha, axis=-1)
        d2 = np.prod(ip2 / W._rho_alpha, axis=-1)
        return (d1 * d2) @ self.qweights

    def zero_sector(self, t1: float, t2: float, weights: np.ndarray) -> complex:
        """The m = 0 term of `sums` (same units): no truncation."""
        W = self.W
        b1, b2 = W.s * t1 / 2, W.s * t2 / 2
        beta = b1 + b2
        out = 0.0 + 0.0j
        for mu in weights:
            a = (b2 / beta) * mu
            pref = math.exp(-(b1 * b2 / beta) * float(mu @ W.G @ mu))
            out += pref * self._expect(beta, -a[None, :].astype(complex), mu)[0]
        return out

    def _bound(self, J, beta, M, nweights):
        """Bound on the dual terms with |m| > J, in the same units."""
        W = self.W
        P2 = 2 * W.n_positive_roots
        r = W.r
        log_mom = (P2 / 2) * math.log(self.lam_ginv / (2 * beta)) + (P2 / 2) * math.log(2) + \
            gammaln((r + P2) / 2) - gammaln(r / 2)

        def log_term(j):
            b = math.pi * (j + 1) * self.lam_ginv / beta + M + M
            # E (|Y| + b)^q <= 2^(q-1) (E|Y|^q + b^q)
            lm = np.logaddexp(log_mom, P2 * np.log(b)) + max(P2 - 1, 0) * math.log(2)
            return (_log_shell_count(W, j) + math.log(nweights) + 2 * _log_dim_bound(W, 1.0)
                    + lm - math.pi**2 * j**2 / (beta * self.lam_max))
        return _shell_tail(log_term, J)

    def _points(self, J):
        r = self.W.r
        Ji = math.floor(J)
        if (2 * Ji + 1) ** r > 4 * _MAX_TERMS:
            raise _TooManyTerms((2 * Ji + 1) ** r)
        ax = np.arange(-Ji, Ji + 1, dtype=float)
        grid = np.stack(np.meshgrid(*([ax] * r), indexing="ij"), axis=-1).reshape(-1, r)
        return grid[np.einsum("ij,ij->i", grid, grid) <= J * J + 1e-9]

    def sums(self, t1: float, t2: float, weights: np.ndarray, target: float):
        """(numerator, zero sector, bound, terms) of ``sum_mu sum_x d(x) d(x+mu) e^{...}``."""
        W = self.W
        b1, b2 = W.s * t1 / 2, W.s * t2 / 2
        beta = b1 + b2
        M = float(np.max(np.linalg.norm(weights, axis=1), initial=0.0))
        J = math.sqrt(40 * beta * self.lam_max) / math.pi + 1
        for _ in range(400):
            if self._bound(J, beta, M, len(weights)) <= target:
                break
            J *= 1.05
        ms = self._points(J)
        phase_rho = np.exp(2j * np.pi * ms @ W.rho_x)
        gauss = np.exp(-np.pi**2 * np.einsum("ij,jk,ik->i", ms, self.Ginv, ms) / beta)
        total, zero = 0.0 + 0.0j, 0.0 + 0.0j
        at0 = np.flatnonzero(np.all(ms == 0, axis=1))
        for mu in weights:
            a = (b2 / beta) * mu
            pref = math.exp(-(b1 * b2 / beta) * float(mu @ W.G @ mu))
            c = 1j * np.pi * (ms @ self.Ginv.T) / beta
            e = self._expect(beta, -c - a, mu)
            terms = pref * np.exp(2j * np.pi * ms @ a) * phase_rho * gauss * e
            total += terms.sum()
            zero += terms[at0].sum()
        return total, zero, self._bound(J, beta, M, len(weights)), len(ms)


# ---------------------------------------------------------------- public API
def _choose(group, genus, t_total, route):
    """'characters' or 'dual' for route 'auto': the one with fewer terms."""
    W = weight_system(group)
    dual_ok = genus == 0 or W.abelian
    if route == "dual" and not dual_ok:
        raise ValueError(
            "`route` 'dual' needs genus 0 or an abelian group: the Poisson-resummed form "
            f"of d^(2-2g) is not a polynomial sum for {group} at genus {genus}."
        )
    if route != "auto":
        return route
    if not dual_ok:
        return "characters"
    gmin = float(np.linalg.eigvalsh(W.G).min())
    lam_max = float(np.linalg.eigvalsh(W.G).max())
    beta = W.s * t_total / 2
    R = math.sqrt(40 / (beta * gmin))
    J = math.sqrt(40 * beta * lam_max) / math.pi
    n_char = R**W.r / len(W.weyl_signs)
    # each dual term is a Gauss-Hermite expectation over (P + 1)^r nodes at most
    n_dual = (2 * J + 1) ** W.r * (W.n_positive_roots + 1) ** W.r
    return "characters" if n_char <= n_dual else "dual"


def surface_partition_function(group, genus: int, total_area: float, *, coupling: float,
                               route: str = "auto") -> float:
    r"""Partition function ``Z = sum_a d_a^(2-2g) exp(-c_a lambda T / 2)``.

    Normalized so that on the sphere ``Z = p_{lambda T}(e)``, the heat kernel at the
    identity against the Haar probability measure.

    Parameters
    ----------
    group : Group
        Any family of :func:`holonomy.groups.make_group`; its metric fixes the Casimirs.
    genus : int
        g >= 0.
    total_area : float
        T > 0.
    coupling : float
        lambda > 0.
    route : {"auto", "characters", "dual"}

    References
    ----------
    .. [1] A. A. Migdal, Sov. Phys. JETP 42 (1975) 413.
    .. [2] E. Witten, Commun. Math. Phys. 141 (1991) 153-209.

    Examples
    --------
    >>> from holonomy.groups import make_group
    >>> from holonomy.exact import surface_partition_function
    >>> round(surface_partition_function(make_group("U", 1, 1), 1, 2.0, coupling=1.0), 12)
    1.772637204827
    """
    group = _group_iv(group)
    g = _genus_iv(genus)
    T = _nonneg_iv(total_area, "total_area", positive=True)
    lam = _nonneg_iv(coupling, "coupling", positive=True)
    route = _choose(group, g, lam * T, _route_iv(route))
    if route == "characters":
        return _Characters(group, g).partition(lam * T).value
    dual = _Dual(group)
    zero_w = np.zeros((1, weight_system(group).r))
    total, _, _, _ = dual.sums(lam * T, 0.0, zero_w, 1e-3 * _REL)
    W = dual.W
    beta = W.s * lam * T / 2
    common = math.exp(beta * float(W.rho_x @ W.G @ W.rho_x)) * (math.pi / beta) ** (W.r / 2) \
        / math.sqrt(np.linalg.det(W.G)) / len(W.weyl_signs)
    return float(total.real * common)


def _simple_iv(group, rep, inside, total_area, coupling, genus, turns, route):
    group = _group_iv(group)
    rep = _rep_of(group, rep)
    g = _genus_iv(genus)
    A = _nonneg_iv(inside, "inside")
    T = _nonneg_iv(total_area, "total_area", positive=True)
    lam = _nonneg_iv(coupling, "coupling", positive=True)
    if A > T:
        raise ValueError(f"`total_area` must be >= the loop's inside measure {A!r}, got {T!r}.")
    return group, rep, A, T, lam, g, turns_iv(turns), _route_iv(route)


def surface_simple_loop(group, rep, inside: float, total_area: float, *, coupling: float,
                        genus: int = 0, turns: int = 1, route: str = "auto") -> SurfaceValue:
    r"""A simple loop (wound ``turns`` times) bounding a disc of measure ``inside`` on a
    closed surface of genus g and total measure T.

    .. math::

        W = \frac{1}{Z \dim V} \sum_{a, b} d_a d_b^{1 - 2g} N_{a, \psi^p V}^b
            e^{-c_a t_1/2 - c_b t_2/2},

    ``t1 = lambda inside``, ``t2 = lambda (T - inside)``, ``psi^p`` the Adams operation
    (``p = turns``): the weights of V times p.

    Parameters
    ----------
    group : Group
    rep : str or Representation
        Any representation of ``group.rep`` (``fundamental``, ``adjoint``, ``spin:j``,
        ``power:p``, ...).
    inside : float
        Measure of the disc (>= 0).
    total_area : float
        T >= inside, > 0.
    coupling : float
    genus : int, optional
    turns : int, optional
    route : {"auto", "characters", "dual"}, optional
        ``"dual"`` needs genus 0 or an abelian group.

    Returns
    -------
    SurfaceValue

    References
    ----------
    .. [1] B. E. Rusakov, Mod. Phys. Lett. A 5 (1990) 693-703.
    .. [2] E. Witten, Commun. Math. Phys. 141 (1991) 153-209.
    .. [3] W. Fulton and J. Harris, "Representation Theory", Springer, 1991, Section 25.3.

    Examples
    --------
    >>> import math
    >>> from holonomy.groups import make_group
    >>> from holonomy.exact import surface_simple_loop
    >>> G = make_group("SU", 2, "physics")
    >>> r = surface_simple_loop(G, "fundamental", 1.0, 200.0, coupling=1.0)
    >>> bool(abs(r.value.real - math.exp(-0.75 / 2)) < 1e-12)   # nearly the plane value
    True
    >>> tau = 1.0 * 1.0 * 1.0 / 2.0   # lambda a (T - a) / T on a sphere of area 2
    >>> r = surface_simple_loop(G, "fundamental", 1.0, 2.0, coupling=1.0)
    >>> bool(abs(r.zero_instanton.real - (1 - tau / 4) * math.exp(-tau / 8)) < 1e-12)
    True
    """
    group, rep, A, T, lam, g, p, route = _simple_iv(
        group, rep, inside, total_area, coupling, genus, turns, route)
    weights = rep_weights(group, rep, p)
    t1, t2 = lam * A, lam * (T - A)
    route = _choose(group, g, t1 + t2, route)
    W = weight_system(group)
    dual_ok = g == 0 or W.abelian
    zero = None
    details = {"inside": A, "turns": p, "t1": t1, "t2": t2}
    if route == "characters":
        ch = _Characters(group, g)
        num, z = ch.numerator(t1, t2, weights), ch.partition(t1 + t2)
        value = num.value / (z.value * rep.dim)
        bound = abs(value) * (num.bound / max(abs(num.value), 1e-300) + z.bound / z.value)
        details.update(terms=num.terms, z=z.value)
        method = "surface-character-sum"
    if dual_ok:
        dual = _Dual(group)
        zw = np.zeros((1, W.r))
        zero = complex(dual.zero_sector(t1, t2, weights)
                       / (dual.zero_sector(t1 + t2, 0.0, zw) * rep.dim))
        if route == "dual":
            zt, _, zb, _ = dual.sums(t1 + t2, 0.0, zw, 1e-3 * _REL)
            nt, _, nb, terms = dual.sums(t1, t2, weights, 1e-3 * _REL * abs(zt))
            value = nt / (zt * rep.dim)
            bound = abs(value) * (nb / max(abs(nt), 1e-300) + zb / abs(zt))
            details.update(terms=terms)
            method = "surface-poisson-dual"
    return SurfaceValue(complex(value), method, zero, float(bound), g, T, details=details)


def surface_abelian_loop(group, rep, windings, times, total_time: float, *,
                         genus: int = 0) -> SurfaceValue:
    r"""Any loop of U(1) or SO(2) on a closed surface (the genus does not enter: d = 1).

    Each face F of winding ``n_F`` carries the charge ``j + mu n_F`` (mu a weight of the
    loop's representation, j the charge of the outer face), so

    .. math::

        W = \frac{1}{\dim V} \sum_\mu e^{-s \mu^2 (S_2 - S_1^2/T)/2}
            \frac{\theta(\mu S_1/T)}{\theta(0)}, \qquad
        \theta(a) = \sum_m e^{2\pi i m a - 2\pi^2 m^2/(s T)},

    ``S1 = sum n_F t_F``, ``S2 = sum n_F^2 t_F``, s the Casimir scale (1/k for U(1),
    1/(2k) for SO(2)); the m = 0 term is the zero-instanton (zero-flux) sector.

    Parameters
    ----------
    group : Group
        U(1) or SO(2).
    rep : str or Representation
    windings, times : array_like
        Winding number and time ``lambda mu(F)`` of each bounded face.
    total_time : float
        ``lambda T``, larger than the sum of the face times.
    genus : int, optional
        Recorded in the result only.

    References
    ----------
    .. [1] E. Witten, Commun. Math. Phys. 141 (1991) 153-209 (abelian theory; from memory).
    .. [2] T. Levy, Mem. Amer. Math. Soc. 166 (2003), no. 790.
    """
    group = _group_iv(group)
    W = weight_system(group)
    if not W.abelian:
        raise ValueError(f"`group` must be U(1) or SO(2) for the abelian route, got {group}.")
    rep = _rep_of(group, rep)
    n = np.asarray(windings, float).ravel()
    t = np.asarray(times, float).ravel()
    T = _nonneg_iv(total_time, "total_time", positive=True)
    S1, S2 = float(n @ t), float(n * n @ t)
    mus = rep_weights(group, rep)[:, 0]
    s = W.s
    beta = s * T / 2  # theta(a) = sum_j e^{-beta (j + a)^2} (direct) or its dual
    direct = beta >= math.pi
    # terms e^{-x^2} with x = sqrt(beta) |j + a| or pi |m| / sqrt(beta): keep x <= 6.5
    # (e^{-42} < 1e-18); the tail beyond is below 2 e^{-x0^2} / (1 - e^{-2 x0 step})
    step = math.sqrt(beta) if direct else math.pi / math.sqrt(beta)
    K = math.ceil(6.5 / step) + 2
    ks = np.arange(-K, K + 1, dtype=float)
    x0 = (K - 1) * step
    tail = 2 * math.exp(-x0 * x0) / (1 - math.exp(-2 * x0 * step))

    def theta(a):
        if direct:
            return float(np.sum(np.exp(-beta * (ks + a) ** 2)))
        return float(np.sum(np.cos(2 * np.pi * ks * a) * np.exp(-np.pi**2 * ks**2 / beta)))

    th0 = theta(0.0)
    values = []
    for mu in mus:
        gauss = math.exp(-s * mu * mu * (S2 - S1 * S1 / T) / 2)
        a = mu * S1 / T
        # sum_j e^{-s sum_F (j + mu n_F)^2 t_F / 2} = gauss * theta(a), a = mu S1 / T
        values.append(gauss * theta(a) / th0)
    value = float(np.mean(values))
    zero = float(np.mean([math.exp(-s * mu * mu * (S2 - S1 * S1 / T) / 2) for mu in mus]))
    bound = 2 * tail / th0 * max(abs(value), 1.0)
    return SurfaceValue(complex(value), "surface-abelian", complex(zero), bound,
                        _genus_iv(genus), T,
                        details={"S1": S1, "S2": S2, "terms": len(ks),
                                 "sum": "characters" if direct else "flux sectors"})


def outer_face_kernel(group, genus: int, time: float, U) -> np.ndarray:
    r"""The outer face's kernel ``K_g(t, h) = sum_a d_a^(1-2g) chi_a(h) e^{-c_a t/2}``.

    On the sphere (g = 0) it is the heat kernel ``p_t(h)`` against the Haar probability
    measure. Batched over group elements ``U (..., N, N)``, by :class:`OuterFaceKernel`
    (the routes are listed there). The omitted irreducibles change each value by less
    than 1e-16 of ``K_g(t, e)``.

    Parameters
    ----------
    group : Group
        Any family except SO(2r), r >= 2 (its characters need an orientation the
        eigenvalues do not carry).
    genus : int
    time : float
        ``t = lambda mu(outer face) > 0``.
    U : ndarray (..., N, N)

    Returns
    -------
    ndarray (...,) float

    References
    ----------
    .. [1] E. Witten, Commun. Math. Phys. 141 (1991) 153-209.
    .. [2] T. Levy, Mem. Amer. Math. Soc. 166 (2003), no. 790.
    """
    return OuterFaceKernel(group, genus, time)(U)


class OuterFaceKernel:
    r"""The outer face's kernel ``K_g(t, .)`` of :func:`outer_face_kernel` with its
    irreducibles and coefficients fixed once, for evaluation on many batches (the
    Monte Carlo weights of closed surfaces evaluate it once per sample).

    Parameters
    ----------
    group : Group
        Any family except SO(2r), r >= 2.
    genus : int
    time : float
        ``t > 0``.

    U(n) and SU(n) on the sphere sum over the whole weight lattice at once, a
    determinant of theta sums per sample (`_ThetaDeterminant`); the rank-one groups by
    Clenshaw's recurrence ([2]); the others by the Weyl character formula over the
    irreducibles of the character sum (listed lazily, as the fallback of the first
    route at nearly degenerate eigenvalues too).

    References
    ----------
    .. [1] E. Witten, Commun. Math. Phys. 141 (1991) 153-209.
    .. [2] W. H. Press et al., "Numerical Recipes", 3rd ed., Cambridge University Press,
       2007, Section 5.4 (Clenshaw's recurrence formula).
    """

    def __init__(self, group, genus: int, time: float):
        group = _group_iv(group)
        g = _genus_iv(genus)
        t = _nonneg_iv(time, "time", positive=True)
        if group.family == "SO" and group.n % 2 == 0 and group.n > 2:
            raise ValueError(f"`group` {group}: the outer face's kernel is not available "
                             "for SO(2r), r >= 2 (characters need the orientation of the "
                             "eigenvectors).")
        self.group, self.genus, self.time = group, g, t
        self._W = W = weight_system(group)
        self._theta = self._chebyshev = None
        if g == 0 and group.family in ("U", "SU") and W.r > 1:
            self._theta = _ThetaDeterminant(W, t)  # needs no list of irreducibles
            return
        if W.r == 1:
            # rank one: chi_nu is a Chebyshev polynomial of one cosine x (U(1), SO(2):
            # T_|q|(cos theta); SU(2), Sp(1): U_{nu-1}(cos theta); SO(3): U_{2l}(cos phi/2))
            nu = self._nus[:, 0]
            index = np.rint(np.abs(nu) if W.abelian else nu / W.rho_x[0] - 1).astype(int)
            a = np.zeros(int(index.max(initial=0)) + 1)
            np.add.at(a, index, self._coef.real)
            self._chebyshev = a
        _ = self._terms  # list the irreducibles now: a sum too long fails here

    @cached_property
    def _terms(self):
        return _Characters(self.group, self.genus).kernel_terms(self.time)

    @property
    def _nus(self):
        return self._terms[0]

    @property
    def _coef(self):
        return self._terms[1]

    @property
    def bound(self) -> float:
        """Bound on the omitted terms of the character sum (below 1e-16 of K_g(t, e))."""
        return self._terms[2]

    def _cosine(self, U: np.ndarray) -> np.ndarray:
        """The cosine x the rank-one characters are polynomials of (from the trace)."""
        fam = self.group.family
        tr = np.trace(U, axis1=-2, axis2=-1).real
        if fam == "SO" and self.group.n == 3:  # tr = 1 + 2 cos(phi): x = cos(phi / 2)
            return np.sqrt(np.clip((tr + 1) / 4, 0.0, 1.0))
        return np.clip(tr / self.group.N, -1.0, 1.0)

    def __call__(self, U) -> np.ndarray:
        """``K_g(t, U)`` for ``U (..., N, N)``: an array ``(...,)`` of floats."""
        U = np.asarray(U)
        N = self.group.N
        if U.shape[-2:] != (N, N):
            raise ValueError(f"`U` must have shape (..., {N}, {N}), got {U.shape}.")
        if self._theta is not None:
            out, slow = self._theta(U)
            out = np.array(out)
            if slow.any():  # nearly degenerate eigenvalues: the Weyl route (mpmath there)
                out[slow] = self._W.character_sum(self._nus, self._coef, U[slow]).real
            return out
        if self._chebyshev is None:
            return self._W.character_sum(self._nus, self._coef, U).real
        # Clenshaw's recurrence b_k = a_k + 2 x b_{k+1} - b_{k+2} ([2]): the sum of
        # a_k U_k(x) is b_0, that of a_k T_k(x) is b_0 - x b_1
        x = self._cosine(U)
        b1 = np.zeros_like(x)
        b2 = np.zeros_like(x)
        for a in self._chebyshev[:0:-1]:
            b1, b2 = a + 2 * x * b1 - b2, b1
        b0 = self._chebyshev[0] + 2 * x * b1 - b2
        return b0 - x * b1 if self._W.abelian else b0


class _ThetaDeterminant:
    r"""The heat kernel of U(n) and SU(n) (genus 0) as a determinant of theta sums.

    The summand ``d(nu) e^{-c(nu) t/2} A_nu(theta)`` of the Weyl character formula is
    alternating, so the sum over dominant nu and the Weyl group is a sum over the whole
    shifted lattice, ``A_rho K = sum_nu d(nu) e^{-c t/2} e^{i nu.theta}``; with
    ``c = s (|nu|^2 - |rho|^2)`` (U(n)) and ``d = V(nu) / V(rho)``, V the Vandermonde
    product ``det[nu_k^(n-j)]``, the sum factorizes row by row ([1]):

        A_rho(theta) K(theta) = e^{s t |rho|^2/2} / V(rho) det[G_{n-j}(theta_k)],
        G_p(theta) = sum_m m^p e^{-s t m^2/2 + i m theta},

    m over ``Z + rho_1``. SU(n) (``c = s (|nu|^2 - (sum nu)^2/n - Q(rho))``, nu in Z^n
    modulo (1, ..., 1)): the same determinant sums every member ``nu + c (1, ..., 1)`` of
    a class with the extra factor ``e^{-s t sigma^2/(2n)}``, ``sigma = sum nu``, i.e. the
    class times ``theta_a = sum_j e^{-s t (a + n j)^2/(2n)}``, a = sigma mod n (the
    angles sum to 0 mod 2 pi); the residues a are told apart by the n shifts
    ``theta + 2 pi r / n`` (a discrete Fourier sum), and each divided by its theta_a.
    Per sample this costs ``n^2`` short sums and a determinant (n of them for SU(n)), in
    place of ``n!`` exponentials per irreducible.

    References
    ----------
    .. [1] H. Weyl, "The Classical Groups", Princeton University Press, 1939, Chapter VII
       (the character as a ratio of alternants); the Vandermonde determinant, e.g.
       R. A. Horn and C. R. Johnson, "Matrix Analysis", 2nd ed., Cambridge University
       Press, 2013, Section 0.9.11.
    """

    #: the determinant's cancellation leaves a relative rounding error of about
    #: 3e-16 / |A_rho| (measured against the Weyl route in high precision); below this
    #: |A_rho| (error above ~3e-10) the samples take the Weyl route, which switches to
    #: mpmath at the same threshold
    TOL = 1e-6

    def __init__(self, W, t: float):
        n, st = W.n, W.s * t
        self.W, self.n = W, n
        rho = W.rho_e
        self.vrho = float(np.prod([rho[i] - rho[j] for i in range(n) for j in range(i + 1, n)]))
        if W.family == "U":
            off, self.shifts = ((n - 1) / 2) % 1, np.zeros(1)
            self.log_c = st * float(rho @ rho) / 2
            self.sigma_w = None
        else:
            off, self.shifts = 0.0, 2 * np.pi * np.arange(n) / n
            self.log_c = st * float(W.rho_x @ W.G @ W.rho_x) / 2
            # theta_a = sum_j e^{-s t (a + n j)^2 / (2n)}: the class sum over the centre
            j = np.arange(-40 - math.ceil(math.sqrt(200 / (st * n))), 41 + math.ceil(
                math.sqrt(200 / (st * n))))
            a = np.arange(n)
            theta_a = np.exp(-st * (a[:, None] + n * j[None, :]) ** 2 / (2 * n)).sum(axis=1)
            # (1/n) sum_a e^{-2 pi i r a / n} / theta_a: one weight per shift r
            self.sigma_w = (np.exp(-2j * np.pi * np.outer(np.arange(n), a) / n)
                            / theta_a[None, :]).sum(axis=1) / n
        M = math.ceil(math.sqrt(2 * (60 + st * n / 2 + (n - 1) * math.log(1 + 20 / st)) / st)) + n
        self.m = np.arange(-M, M + 1, dtype=float) + off
        # columns j = 1..n carry the powers n - j
        powers = np.arange(n - 1, -1, -1)
        self.P = (self.m[None, :] ** powers[:, None]) * np.exp(-st * self.m ** 2 / 2)[None, :]

    def __call__(self, U, chunk: int = 256):
        theta = self.W.angles(U)
        shape = theta.shape[:-1]
        theta = theta.reshape(-1, self.n)
        den = np.linalg.det(np.exp(1j * theta[:, :, None] * self.W.rho_e[None, None, :]))
        slow = np.abs(den) < self.TOL
        den[slow] = 1.0  # those samples are recomputed by the caller
        out = np.empty(theta.shape[0])
        for lo in range(0, theta.shape[0], chunk):
            th = theta[lo:lo + chunk, None, :, None] + self.shifts[None, :, None, None]
            G = np.exp(1j * th * self.m) @ self.P.T  # (S, shifts, n, n): rows k, columns j
            det = np.linalg.det(G)
            num = det[:, 0] if self.sigma_w is None else det @ self.sigma_w
            out[lo:lo + chunk] = (num / den[lo:lo + chunk]).real
        out *= math.exp(self.log_c) / self.vrho
        return out.reshape(shape), slow.reshape(shape)


def zero_instanton_series(group, rep, inside: float, total_area: float, order: int, *,
                          turns: int = 1, exact: bool = False):
    r"""Taylor coefficients in the coupling of the zero-instanton sector of a simple loop
    on the sphere: ``W_0(lambda) = sum_m c_m lambda^m``, m = 0..order.

    The zero sector is ``sum_mu e^{-lambda kappa_mu} p_mu(lambda) / (z dim V)`` with
    ``kappa_mu = s A (T - A) Q(mu) / (2 T)`` and ``p_mu`` a polynomial of degree P (the
    number of positive roots): the Gaussian expectations of the Weyl dimension polynomial
    are polynomials in the variance ``1/lambda`` and the normalization is homogeneous of
    degree P. The polynomials are recovered exactly (up to rounding) from P + 1 values;
    the exponentials are expanded. It carries the whole small-coupling series of the
    sphere's value: the other sectors are ``O(exp(-const / lambda))`` and have no series.
    As T grows the coefficients tend to those of the Gaussian-matrix value of area A,
    not to the plane's ``exp(-c lambda A / 2)`` (for SU(2), k = 2: 5/128 against 9/128 at
    order 2).

    Parameters
    ----------
    group : Group
    rep : str or Representation
    inside, total_area : float
        A and T (0 <= A <= T, T > 0).
    order : int
        Highest power of the coupling.
    turns : int, optional
    exact : bool, optional
        Exact rationals (sympy): ``inside``, ``total_area`` and the metric constant are
        taken as the rationals they are (ints, Fractions, sympy Rationals, or the binary
        value of a float) and the Gaussian expectations are expanded symbolically
        (moments of ``N(0, G^-1 / (s lambda T))`` by Wick's theorem), so that
        ``p_mu(lambda) / z`` is an exact polynomial.

    Returns
    -------
    ndarray (order + 1,), or a list of sympy Rationals when ``exact``

    References
    ----------
    .. [1] J. A. Minahan and A. P. Polychronakos, Nucl. Phys. B 422 (1994) 172-186
       (instanton sectors on the sphere; from memory).
    .. [2] D. J. Gross and A. Matytsin, "Instanton induced large N phase transitions in
       two-dimensional and four-dimensional QCD", Nucl. Phys. B 429 (1994) 50-74
       (from memory).

    Examples
    --------
    >>> from holonomy.groups import make_group
    >>> from holonomy.exact import zero_instanton_series
    >>> c = zero_instanton_series(make_group("SU", 2, "physics"), "fundamental", 1.0, 1e9, 2)
    >>> round(float(c[2]) * 128, 6)   # the Gaussian-matrix coefficient 5/128 as T -> infinity
    5.0
    >>> zero_instanton_series(make_group("SU", 2, "physics"), "fundamental", 1, 4, 2, exact=True)
    [1, -9/32, 45/2048]
    """
    exact_in = (inside, total_area)
    if exact:
        inside, total_area = (float(x) for x in exact_in)
    group, rep, A, T, _, _, p, _ = _simple_iv(group, rep, inside, total_area, 1.0, 0, turns, "auto")
    order = series_order_iv(order)
    weights = rep_weights(group, rep, p)
    if exact:
        return _zero_series_exact(weight_system(group), weights, *exact_in, int(order))
    dual = _Dual(group)
    W = dual.W
    P = W.n_positive_roots
    lams = np.arange(1, P + 2, dtype=float)
    V = np.vander(lams, P + 1, increasing=True)
    zw = np.zeros((1, W.r))
    # z lambda^-P = E[d(Y)^2] at lambda (variance G^-1 / (s lambda T))
    z = np.mean([dual.zero_sector(lam * T, 0.0, zw).real * lam**P for lam in lams])
    kappas = [W.s * A * (T - A) / (2 * T) * float(mu @ W.G @ mu) for mu in weights]
    if max(kappas) * lams[-1] > _MAX_EXPONENT:
        # p_mu(lambda) is read off as the sector's value times e^{lambda kappa}: past
        # e^709 the factor overflows and the sector's value has underflowed to 0
        raise ExactRouteError(
            "precision", f"the zero-instanton sector's Gaussian factor e^(lambda kappa) "
            f"reaches e^{max(kappas) * lams[-1]:.3g} (largest weight of the representation "
            f"{rep.name!r}, metric and area); double precision holds e^{_MAX_EXPONENT:g}: "
            "the series is not computed (exact=True gives it as rationals)")
    out = np.zeros(order + 1)
    fact = np.array([math.factorial(m) for m in range(order + 1)], float)
    for mu, kappa in zip(weights, kappas):
        vals = [dual.zero_sector(lam * A, lam * (T - A), mu[None, :]).real
                * math.exp(lam * kappa) * lam**P for lam in lams]
        poly = np.linalg.solve(V, vals)  # p_mu(lambda) = sum_j poly_j lambda^j
        expo = (-kappa) ** np.arange(order + 1) / fact
        out += np.convolve(poly, expo)[: order + 1]
    return out / (z * rep.dim)


_MAX_EXPONENT = 700.0  # below log(max double) = 709.78, with room for the polynomial


def _exact_rational(x, what: str):
    import sympy
    from fractions import Fraction

    if isinstance(x, sympy.Basic):
        if not x.is_Rational:
            raise ValueError(f"`{what}` must be rational for exact coefficients, got {x!r}.")
        return x
    f = Fraction(x) if not isinstance(x, float) else Fraction(x).limit_denominator(10**9)
    if isinstance(x, float) and abs(float(f) - x) > 4e-16 * max(1.0, abs(x)):
        f = Fraction(x)  # the float's own binary value
    return sympy.Rational(f.numerator, f.denominator)


def _zero_series_exact(W, weights, inside, total_area, order: int) -> list:
    """Exact Taylor coefficients of the sphere's zero-instanton sector (see
    :func:`zero_instanton_series`): ``sum_mu e^{-lambda kappa_mu} q_mu(lambda) / dim V``
    with ``q_mu = E[d(Y - a) d(Y - a + mu)] / E[d(Y)^2]``, ``a = (T - A) mu / T``,
    ``Y ~ N(0, v G^-1)``, ``v = 1 / (s lambda T)``; the Gaussian moments by Wick's
    theorem: ``E[y^alpha] = alpha! [J^alpha] (J^T G^-1 J / 2)^k / k!`` at ``|alpha| = 2k``.

    References
    ----------
    .. [1] L. Isserlis, "On a formula for the product-moment coefficient of any order of
       a normal frequency distribution in any number of variables", Biometrika 12 (1918)
       134-139 (Wick's theorem).
    """
    import sympy

    A = _exact_rational(inside, "inside")
    T = _exact_rational(total_area, "total_area")
    s = _exact_rational(W.s, "metric constant")
    r, P = W.r, W.n_positive_roots
    G = sympy.Matrix(r, r, lambda i, j: _exact_rational(float(W.G[i, j]), "Gram matrix"))
    C = G.inv()
    ys = sympy.symbols(f"y0:{r}")
    Js = sympy.symbols(f"J0:{r}")
    roots = [[int(round(v)) for v in row] for row in W.roots]
    rho_e = [_exact_rational(float(v), "rho") for v in W.rho_e]

    def to_e(x):
        return list(x) + [0] if W.family == "SU" else list(x)

    def dim(x):
        out = sympy.Integer(1)
        for al in roots:
            out *= sum(a * xi for a, xi in zip(al, to_e(x))) / sum(
                a * ri for a, ri in zip(al, rho_e))
        return out

    q = (sympy.Matrix([Js]) * C * sympy.Matrix(Js))[0, 0] / 2
    gen = [sympy.Poly(sympy.expand(q**k / sympy.factorial(k)), *Js) if k else None
           for k in range(P + 1)]

    def moments(poly_expr):
        """``[M_0..M_P]``: ``E[poly(Y)] = sum_k M_k v^k``."""
        M = [sympy.Integer(0)] * (P + 1)
        for monom, c in sympy.Poly(sympy.expand(poly_expr), *ys).terms():
            deg = sum(monom)
            if deg % 2:
                continue
            k = deg // 2
            if k == 0:
                M[0] += c
                continue
            fac = sympy.Integer(1)
            for m in monom:
                fac *= sympy.factorial(m)
            M[k] += c * fac * gen[k].coeff_monomial(monom)
        return M

    y = list(ys)
    zP = moments(dim(y) ** 2)[P]
    coeffs = [sympy.Integer(0)] * (order + 1)
    for mu_f in weights:
        mu = [_exact_rational(float(v), "weight") for v in mu_f]
        a = [(T - A) / T * m for m in mu]
        Q = (sympy.Matrix([mu]) * G * sympy.Matrix(mu))[0, 0]
        kappa = s * A * (T - A) * Q / (2 * T)
        M = moments(dim([yi - ai for yi, ai in zip(y, a)])
                    * dim([yi - ai + mi for yi, ai, mi in zip(y, a, mu)]))
        # q_mu(lambda) = sum_k (M_k / zP) (s T)^(P - k) lambda^(P - k)
        for k in range(P + 1):
            j = P - k
            rj = M[k] / zP * (s * T) ** j
            for m in range(j, order + 1):
                coeffs[m] += rj * (-kappa) ** (m - j) / sympy.factorial(m - j)
    return [sympy.nsimplify(c / len(weights)) for c in coeffs]


# --------------------------------------------------------------- loops
def _shape(loop, area):
    return (_lattice_shape if isinstance(loop, LatticeLoop) else _polygon_shape)(loop, area)


def drawn_measure(loop, area=None) -> float:
    """The measure of a loop's drawn region: the faces (or cells) of nonzero winding.

    On a closed surface of total measure T the loop's unbounded face has ``T`` minus
    this measure.
    """
    shape = _shape(loop, AreaForm() if area is None else area)
    if shape.measures is None:
        raise ValueError("`area` density cannot be integrated over the loop's faces.")
    n = np.asarray(shape.windings).ravel()
    return float(np.asarray(shape.measures, float).ravel()[n != 0].sum())


def exact_surface_wilson_loop(group, rep, loop, *, coupling: float, genus: int,
                              total_area: float, area=None,
                              route: str = "auto") -> SurfaceValue:
    r"""The exact Wilson loop of a loop drawn in a chart of a closed surface.

    The surface has genus g and total measure T; the loop's unbounded face is the face
    of measure T minus the drawn measure and carries the g handles. Routes: U(1) and
    SO(2), any loop (:func:`surface_abelian_loop`); a simple loop, or one wound several
    times around a simple curve, in any representation of any family
    (:func:`surface_simple_loop`); any other loop of U(n), SU(n), Sp(1) or SO(3) by the outer
    face's character expansion contracted with the plane's exact evaluation
    (``surface-outer-face-expansion``). Otherwise ``value`` is None with a note naming
    the limit.

    Parameters
    ----------
    group : Group
    rep : str or Representation
    loop : discretize.LatticeLoop or discretize.Loop
    coupling : float
    genus : int
    total_area : float
        T, larger than the drawn measure (sum of the measures of the faces of nonzero
        winding).
    area : discretize.AreaForm, optional
        Area density (default Lebesgue); must be non-negative on a closed surface.
    route : {"auto", "characters", "dual"}, optional

    Returns
    -------
    SurfaceValue

    References
    ----------
    .. [1] A. A. Migdal, Sov. Phys. JETP 42 (1975) 413.
    .. [2] B. E. Rusakov, Mod. Phys. Lett. A 5 (1990) 693-703.
    .. [3] E. Witten, Commun. Math. Phys. 141 (1991) 153-209.

    Examples
    --------
    >>> from discretize import Grid, LatticeLoop
    >>> from holonomy.groups import make_group
    >>> from holonomy.exact import exact_surface_wilson_loop
    >>> loop = LatticeLoop.from_moves(Grid((0.0, 0.0), 1.0, (4, 4)), "R2 U1 L2 D1")
    >>> r = exact_surface_wilson_loop(make_group("SU", 2, "physics"), "fundamental", loop,
    ...                               coupling=1.0, genus=0, total_area=4.0)
    >>> r.method, round(r.value.real, 12)
    ('surface-character-sum', 0.661872996076)
    """
    g = _genus_iv(genus)
    T = _nonneg_iv(total_area, "total_area", positive=True)
    group, rep, loop, lam, area = _exact_wilson_loop_iv(group, rep, loop, coupling, area)
    shape = _shape(loop, area)
    if shape.measures is None or np.any(np.asarray(shape.measures) < 0):
        return SurfaceValue(None, None, None, 0.0, g, T,
                            note="the area density must be non-negative and integrable "
                                 "over the faces on a closed surface")
    n = np.asarray(shape.windings, float).ravel()
    mu = np.asarray(shape.measures, float).ravel()
    live = n != 0
    drawn = float(mu[live].sum())
    if not T > drawn:
        raise ValueError(f"`total_area` must be larger than the drawn measure {drawn!r}, "
                         f"got {T!r}.")
    if weight_system(group).abelian:
        r = surface_abelian_loop(group, rep, n[live], lam * mu[live], lam * T, genus=g)
        r.details["drawn"] = drawn
        return r
    if shape.turns >= 1:
        # the orientation does not matter: the character sum is real (a and its
        # conjugate representation carry the same d and c)
        inside = float(np.sum(np.abs(n) * mu)) / shape.turns
        r = surface_simple_loop(group, rep, inside, T, coupling=lam, genus=g,
                                turns=shape.turns, route=route)
        r.details["drawn"] = drawn
        return r
    return _outer_face_expansion(group, rep, shape, lam, g, T)


def _outer_face_expansion(group, rep, shape, lam: float, g: int, T: float) -> SurfaceValue:
    r"""Any loop: the outer face's character expansion contracted with the plane,

    .. math::

        W = \frac{1}{Z \dim V} \sum_a d_a^{1-2g} e^{-c_a t_{out}/2}
            E_{plane}[\chi_V(w) \chi_a(h)],

    w the loop's word and h the drawn region's boundary (:func:`outer_boundary_word`)
    in the same lasso variables, ``t_out = lambda (T - sum of the bounded faces)``. Each
    term is the plane's mixed tensor contraction (:func:`evaluate_words` with one
    representation per word); ``|E[chi_V chi_a]| <= dim V d_a`` bounds the omitted
    irreducibles by the partition function's tail bound at ``t_out``.
    """
    def null(note):
        return SurfaceValue(None, None, None, 0.0, g, T, note=note)

    W = weight_system(group)
    probe = W.irreducibles(2 * float(np.linalg.norm(W.rho_x)) + 2)[1]  # a nontrivial one
    try:
        irreducible_representation(group, W.highest_weight(probe))
    except ArgumentError:
        return null(
            f"representation limit: no exact route for a non-simple loop of {group} on a "
            "closed surface; the outer face's character expansion contracts the plane's "
            "words in every irreducible up to the truncation, and matrices of the "
            "irreducibles exist for U(n), SU(n), Sp(1) and SO(3) only")
    try:
        if shape.arrangement is not None:  # a curve: its exact face areas
            arr, mu = shape.arrangement, np.asarray(shape.measures, float)
        else:
            arr = arrangement(shape.vertices, shape.periods)
            mu = np.asarray(face_measures(arr, shape.area), float)
        words = (lasso_words(arr)[0], outer_boundary_word(arr))
    except ValueError as exc:
        return null(f"geometry limit: {exc}")
    bounded = float(mu.sum())
    if not T > bounded:
        return null(f"geometry limit: the bounded faces of the loop's arrangement measure "
                    f"{bounded:.6g} (faces of winding zero included), not less than the "
                    f"total area {T:.6g}")
    t_out = lam * (T - bounded)
    laws = [lam * m for m in mu]
    ch = _Characters(group, g)
    z = surface_partition_function(group, g, T, coupling=lam)
    try:
        R = ch._radius(lambda R: ch._bound_z(R, t_out), _REL * z, t_out)
        nus = ch._irreducibles(R)
    except ValueError as exc:  # _TooManyTerms
        return null(f"size limit: {exc} (the outer face's time lambda (T - drawn) is "
                    "too small)")
    # cost guard: each term diagonalizes one moment matrix per variable, of size the
    # product of the dimensions of its occurrences (V in w, a in h)
    dV = float(rep.dim)
    occ = {abs(x): (sum(abs(y) == abs(x) for y in words[0]),
                    sum(abs(y) == abs(x) for y in words[1])) for x in words[0] + words[1]}
    da = np.abs(W.dimension(nus))
    cost = float(sum(np.sum((dV ** p * da ** q) ** 3) for p, q in occ.values()))
    if cost > _MAX_FLOPS:
        return null(f"size limit: the outer face's expansion needs {len(nus)} irreducibles "
                    f"(up to dimension {int(da.max())}) and about {cost:.2g} operations "
                    f"(more than {_MAX_FLOPS:.0e}); lambda (T - drawn) is too small for "
                    f"this route with {group}")
    total = 0.0 + 0.0j
    try:
        for nu in nus:
            rep_a = irreducible_representation(group, W.highest_weight(nu))
            d = float(W.dimension(nu))
            e = evaluate_words(group, words, laws, rep=[rep, rep_a]).value
            total += d ** (2 - 2 * g) * math.exp(-float(W.casimir(nu)) * t_out / 2) * e
    except ExactRouteError as exc:
        return null(str(exc))
    value = total / z  # E[chi_V chi_a] = dim V d_a (normalized value)
    bound = ch._bound_z(R, t_out) / z + abs(value) * _REL
    return SurfaceValue(complex(value), "surface-outer-face-expansion", None, float(bound),
                        g, T, details={"terms": len(nus), "t_out": t_out,
                                       "bounded": bounded, "words": words})

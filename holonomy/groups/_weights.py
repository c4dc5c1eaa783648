"""Irreducible representations by highest weight: dimensions, Casimirs, fusion, characters.

Every family of :mod:`holonomy.groups` has a root system written in the standard
coordinates ``e_1, ..., e_m`` of a maximal torus (m = n for U(n), SU(n); m = rank r
otherwise), with the Euclidean inner product:

=========  ==================  =========================================  ==========
family     root system         positive roots                             Casimir s
=========  ==================  =========================================  ==========
U(n)       A_{n-1} (+ centre)  e_i - e_j (i < j)                          1 / k
SU(n)      A_{n-1}             e_i - e_j (i < j)                          1 / k
SO(2r+1)   B_r                 e_i +- e_j (i < j), e_i                     1 / (2k)
SO(2r)     D_r                 e_i +- e_j (i < j)                         1 / (2k)
Sp(r)      C_r                 e_i +- e_j (i < j), 2 e_i                   1 / (2k)
=========  ==================  =========================================  ==========

An irreducible representation with highest weight ``lam`` (integer coordinates; SO(n)
has no spin representations) is stored by its *shifted weight* ``nu = lam + rho`` in
*lattice coordinates* x: for U(n), SO(n), Sp(n) these are the e-coordinates, and the
irreducibles are the strictly dominant points of ``Z^r + rho``; for SU(n) they are the
first n - 1 e-coordinates of the representative with ``nu_n = 0`` (so x lies in
``Z^(n-1)``, ``rho_x = (n-1, ..., 1)``). Then

- Weyl dimension formula: ``d(nu) = prod_{alpha > 0} <nu, alpha> / <rho, alpha>``, a
  polynomial in nu that is alternating under the Weyl group;
- Casimir in the metric ``<X, Y> = -k Re tr(XY)``: ``c(nu) = s (Q(nu) - Q(rho))`` with
  ``Q(x) = x^T G x``, ``G = I`` except for SU(n), where ``G = I - 1 1^T / n`` (the
  traceless part); the scale s follows from the normalisation of the basis
  (``holonomy.groups``) and is tested against the Casimirs computed from the bases;
- fusion with a representation V of weights ``mu`` (with multiplicity), by the
  Brauer-Klimyk formula: ``chi_lam chi_V = sum_mu sign(w) chi_{w(nu + mu) - rho}``, where w
  brings ``nu + mu`` into the dominant chamber (terms on a wall drop out);
- characters by the Weyl character formula
  ``chi_lam(exp H) = sum_w sign(w) e^{i <w nu, theta>} / sum_w sign(w) e^{i <w rho, theta>}``
  with theta the eigen-angles of the group element.

The weights of a representation are read off its own matrices (``Group.rep``): the
eigenvalues of ``-i dpi(H_j)`` on the Cartan generators ``H_j``; the class function
``power:p`` (``tr U^p``) has the weights of the fundamental times p (Adams operation).

References
----------
.. [1] W. Fulton and J. Harris, "Representation Theory: A First Course", Springer, 1991,
   Sections 24.1 (Weyl character and dimension formulas), 25.1 (Casimir,
   ``<lam, lam + 2 rho>``), 25.3 (Brauer-Klimyk formula, Exercise 25.33) and §§
   15-20 (root systems of the classical groups).
.. [2] J. E. Humphreys, "Introduction to Lie Algebras and Representation Theory",
   Springer, 1972, Sections 22.5 (Casimir) and 24 (Weyl, Kostant, Steinberg formulas;
   Brauer's formula, Exercise 24.9).
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from functools import cached_property, lru_cache

import numpy as np

__all__ = ["WeightSystem", "weight_system", "rep_weights"]


@dataclass(frozen=True, eq=False)
class WeightSystem:
    """Root data and highest-weight calculus of one family; build it with `weight_system`.

    Attributes
    ----------
    family : str
    n : int
    k : float
        Metric constant; it enters the Casimirs only.
    r : int
        Dimension of the lattice coordinates x.
    m : int
        Number of e-coordinates (torus angles).
    roots : ndarray (P, m)
        Positive roots in e-coordinates.
    rho_x : ndarray (r,)
        The Weyl vector in lattice coordinates.
    G : ndarray (r, r)
        Gram matrix of the Casimir's quadratic form in lattice coordinates.
    s : float
        Casimir scale: ``c(nu) = s (nu^T G nu - rho^T G rho)``.
    """

    family: str
    n: int
    k: float
    r: int
    m: int
    roots: np.ndarray
    rho_x: np.ndarray
    G: np.ndarray
    s: float

    # ------------------------------------------------------------- coordinates
    def to_e(self, x: np.ndarray) -> np.ndarray:
        """e-coordinates ``(..., m)`` of lattice points ``(..., r)``."""
        x = np.asarray(x, dtype=float)
        if self.family == "SU":
            return np.concatenate([x, np.zeros(x.shape[:-1] + (1,))], axis=-1)
        return x

    def from_e(self, e: np.ndarray) -> np.ndarray:
        """Lattice coordinates of e-coordinates (SU(n): shift so that the last is 0)."""
        e = np.asarray(e, dtype=float)
        if self.family == "SU":
            return e[..., :-1] - e[..., -1:]
        return e

    @cached_property
    def rho_e(self) -> np.ndarray:
        return self.to_e(self.rho_x)

    @cached_property
    def _rho_alpha(self) -> np.ndarray:
        return self.roots @ self.rho_e

    @property
    def n_positive_roots(self) -> int:
        return self.roots.shape[0]

    @property
    def abelian(self) -> bool:
        return self.n_positive_roots == 0

    # ---------------------------------------------------------- Weyl formulas
    def dimension(self, nu: np.ndarray) -> np.ndarray:
        """Weyl's dimension polynomial ``prod <nu, alpha> / <rho, alpha>`` at shifted
        weights ``nu (..., r)``; alternating under the Weyl group, 0 on the walls."""
        ip = self.to_e(nu) @ self.roots.T
        return np.prod(ip / self._rho_alpha, axis=-1)

    def casimir(self, nu: np.ndarray) -> np.ndarray:
        """Casimir constant ``s (Q(nu) - Q(rho))`` at shifted weights ``nu (..., r)``."""
        nu = np.asarray(nu, dtype=float)
        q = np.einsum("...i,ij,...j->...", nu, self.G, nu)
        return self.s * (q - self.rho_x @ self.G @ self.rho_x)

    def shifted(self, highest_weight) -> np.ndarray:
        """``nu = lam + rho`` in lattice coordinates from a highest weight in e-coordinates."""
        lam = np.asarray(highest_weight, dtype=float)
        if lam.shape[-1:] != (self.m,):
            raise ValueError(
                f"`highest_weight` must have {self.m} e-coordinates for "
                f"{self.family}({self.n}); got shape {lam.shape}."
            )
        return self.from_e(lam) + self.rho_x

    def highest_weight(self, nu: np.ndarray) -> np.ndarray:
        """The highest weight ``lam`` (e-coordinates, integers) of shifted weights ``nu``."""
        return np.rint(self.to_e(np.asarray(nu, dtype=float) - self.rho_x)).astype(int)

    # ------------------------------------------------------------ Weyl group
    @cached_property
    def weyl_group(self) -> np.ndarray:
        """All Weyl group elements as matrices ``(|W|, m, m)`` acting on e-coordinates."""
        m, fam = self.m, self.family
        perms = [np.eye(m)[list(p)] for p in itertools.permutations(range(m))]
        if fam in ("U", "SU") or self.abelian:
            return np.array(perms)
        out = []
        for P in perms:
            for signs in itertools.product((1.0, -1.0), repeat=m):
                if fam == "SO" and self.n % 2 == 0 and np.prod(signs) < 0:
                    continue  # D_r: even numbers of sign changes only
                out.append(np.diag(signs) @ P)
        return np.array(out)

    @cached_property
    def weyl_signs(self) -> np.ndarray:
        return np.rint(np.linalg.det(self.weyl_group)).astype(int)

    def dominant(self, nu: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Bring shifted weights into the dominant chamber.

        Returns ``(nu_dom, sign)``: ``sign = det(w)`` for the w with ``w nu = nu_dom``,
        0 where ``nu`` lies on a wall (then the Brauer-Klimyk term drops out).
        """
        nu = np.asarray(nu, dtype=float)
        d = self.dimension(nu)
        sign = np.sign(np.rint(d * 1e6) / 1e6).astype(int)  # alternating polynomial: sign(w)
        e = self.to_e(nu)
        if self.family in ("U", "SU"):
            dom = -np.sort(-e, axis=-1)
        elif self.abelian:
            dom = e
        else:
            a = np.abs(e)
            order = np.argsort(-a, axis=-1, kind="stable")
            dom = np.take_along_axis(a, order, axis=-1)
            if self.family == "SO" and self.n % 2 == 0:
                # D_r: the sign of the product of the coordinates is invariant
                neg = np.prod(np.sign(e), axis=-1) < 0
                dom[..., -1] = np.where(neg, -dom[..., -1], dom[..., -1])
        return self.from_e(dom), sign

    # ------------------------------------------------------- irreducible list
    def irreducibles(self, radius: float) -> np.ndarray:
        """All shifted weights ``nu`` of irreducibles with ``|nu| <= radius`` (lattice
        coordinates, Euclidean norm), shape ``(K, r)``, sorted by Casimir."""
        R = float(radius)
        fam, r = self.family, self.r
        if self.abelian:  # U(1), SO(2): every integer
            vals = np.arange(-math.floor(R), math.floor(R) + 1, dtype=float)
            nus = vals[:, None]
        else:
            if fam == "U":
                off = (self.n - 1) / 2 % 1
                lo = -math.floor(R - off) + off
                vals = np.arange(lo, R + 1e-9, 1.0)
            elif fam == "SO" and self.n % 2 == 1:
                vals = np.arange(0.5, R + 1e-9, 1.0)
            elif fam == "SO":
                vals = np.arange(0.0, R + 1e-9, 1.0)
            else:  # SU (x_1 > ... > x_{n-1} > 0), Sp
                vals = np.arange(1.0, R + 1e-9, 1.0)
            vals = vals[::-1]
            if len(vals) < r:
                return np.zeros((0, r))
            idx = np.array(list(itertools.combinations(range(len(vals)), r)), dtype=int)
            nus = vals[idx]
            if fam == "SO" and self.n % 2 == 0:
                flip = nus[nus[:, -1] > 0].copy()
                flip[:, -1] *= -1
                nus = np.concatenate([nus, flip])
        nus = nus[np.einsum("ij,ij->i", nus, nus) <= R * R + 1e-9]
        c = self.casimir(nus)
        return nus[np.lexsort((*nus.T[::-1], c))]

    # --------------------------------------------------------------- fusion
    def fusion(self, nu, weights: np.ndarray) -> dict[tuple, int]:
        """Multiplicities ``N_{lam, V}^b`` of the irreducibles b in ``lam (x) V``.

        Parameters
        ----------
        nu : array_like (r,)
            Shifted weight of lam.
        weights : ndarray (dim V, r)
            Weights of V in lattice coordinates (`rep_weights`).

        Returns
        -------
        dict
            ``{tuple(nu_b): multiplicity}`` (virtual characters may give negative
            multiplicities), zero entries removed.
        """
        dom, sign = self.dominant(np.asarray(nu, float)[None, :] + weights)
        out: dict[tuple, int] = {}
        for b, sg in zip(map(tuple, dom), sign):
            if sg:
                out[b] = out.get(b, 0) + int(sg)
        return {b: v for b, v in out.items() if v}

    # ------------------------------------------------------------- characters
    def angles(self, U: np.ndarray) -> np.ndarray:
        """Eigen-angles ``theta (..., m)`` of group elements ``U (..., N, N)``.

        U(n), SU(n): the n eigen-angles. SO(2r+1), SO(2r), Sp(r): the angles of the
        pairs ``e^{+- i theta_j}``. SO(2): the rotation angle. For SO(2r) the sign of
        ``theta_r`` is lost with the eigenvalues; characters of SO(2r) with
        ``lam_r != 0`` are therefore refused by `character_sum`.
        """
        U = np.asarray(U)
        if self.family == "SO" and self.n == 2:
            return np.arctan2(U[..., 1, 0].real, U[..., 0, 0].real)[..., None]
        if self.family == "SO" and self.n == 3:
            c = np.clip((np.trace(U, axis1=-2, axis2=-1).real - 1) / 2, -1.0, 1.0)
            return np.arccos(c)[..., None]
        z = np.linalg.eigvals(U)
        if self.family in ("U", "SU"):
            return np.angle(z)
        # pairs e^{+- i theta_j}: equal real parts, adjacent once sorted; the characters
        # are even in each theta_j, so cos theta_j is all that is needed
        re = np.sort(z.real, axis=-1)
        if self.family == "SO":  # SO(2r+1): drop the eigenvalue 1 (the largest real part)
            re = re[..., : 2 * self.m]
        c = (re[..., 0::2] + re[..., 1::2]) / 2
        return np.arccos(np.clip(c, -1.0, 1.0))

    def character_sum(self, nus: np.ndarray, coefficients: np.ndarray, U: np.ndarray,
                      *, tol: float = 1e-6) -> np.ndarray:
        """``sum_i coefficients_i chi_{nu_i}(U)`` for a batch of group elements.

        Weyl character formula on the eigen-angles, one exponential per Weyl group
        element and irreducible; where the Weyl denominator is below ``tol`` (nearly
        degenerate eigenvalues, where the ratio loses digits) the sum is recomputed in
        high precision (mpmath) at a point moved by 1e-30 along a generic direction.

        Returns
        -------
        ndarray (...,) complex
        """
        nus = np.asarray(nus, float)
        coef = np.asarray(coefficients, complex)
        if self.family == "SO" and self.n % 2 == 0 and self.n > 2 and np.any(
                np.abs(self.to_e(nus)[:, -1]) > 1e-9):
            raise ValueError(
                f"characters of SO({self.n}) with a nonzero last highest-weight "
                "coordinate need the orientation of the eigenvectors; not supported."
            )
        theta = self.angles(U)
        shape = theta.shape[:-1]
        theta = theta.reshape(-1, self.m)
        Wg, sg = self.weyl_group, self.weyl_signs
        wnu = np.einsum("wab,kb->wka", Wg, self.to_e(nus))  # (|W|, K, m)
        wrho = Wg @ self.rho_e  # (|W|, m)
        num = np.zeros(theta.shape[0], complex)
        chunk = max(1, 2**21 // max(1, len(coef)))  # bounded memory: chunk x K exponentials
        for lo in range(0, theta.shape[0], chunk):
            th = theta[lo: lo + chunk]
            for w in range(len(sg)):
                num[lo: lo + chunk] += sg[w] * (np.exp(1j * (th @ wnu[w].T)) @ coef)
        den = np.exp(1j * theta @ wrho.T) @ sg.astype(complex)
        out = np.empty(theta.shape[0], complex)
        good = np.abs(den) >= tol
        out[good] = num[good] / den[good]
        for i in np.flatnonzero(~good):
            out[i] = self._character_sum_mp(wnu, wrho, sg, coef, theta[i])
        return out.reshape(shape)

    def _character_sum_mp(self, wnu, wrho, sg, coef, theta):
        import mpmath

        with mpmath.workdps(40 + 32 * max(1, self.n_positive_roots)):
            # a generic direction: the ratio is a trigonometric polynomial, so moving by
            # 1e-30 changes it by about 1e-30 times its gradient
            th = [mpmath.mpf(float(t)) + mpmath.mpf(10) ** -30 * mpmath.sqrt(j + 2)
                  for j, t in enumerate(theta)]

            def expi(v):
                return mpmath.expj(mpmath.fsum(mpmath.mpf(float(a)) * b for a, b in zip(v, th)))

            den = mpmath.fsum(int(s) * expi(w) for s, w in zip(sg, wrho))
            num = mpmath.fsum(
                complex(c) * mpmath.fsum(int(s) * expi(wnu[w, i]) for w, s in enumerate(sg))
                for i, c in enumerate(coef) if c != 0
            )
            return complex(num / den)


@lru_cache(maxsize=None)
def _weight_system(family: str, n: int, k: float) -> WeightSystem:
    if family in ("U", "SU"):
        m = n
        roots = [np.eye(m)[i] - np.eye(m)[j] for i in range(m) for j in range(i + 1, m)]
        if family == "U":
            r, rho = n, np.array([(n - 1) / 2 - i for i in range(n)])
            G = np.eye(n)
        else:
            r, rho = n - 1, np.arange(n - 1, 0, -1, dtype=float)
            G = np.eye(r) - np.ones((r, r)) / n
        s = 1 / k
    else:
        r = n if family == "Sp" else n // 2
        m = r
        E = np.eye(r)
        roots = [E[i] + sgn * E[j] for i in range(r) for j in range(i + 1, r) for sgn in (-1, 1)]
        if family == "Sp":
            roots += [2 * E[i] for i in range(r)]
            rho = np.arange(r, 0, -1, dtype=float)
        elif n % 2 == 1:
            roots += [E[i] for i in range(r)]
            rho = np.arange(r, 0, -1, dtype=float) - 0.5
        else:
            rho = np.arange(r - 1, -1, -1, dtype=float)
        G = np.eye(r)
        s = 1 / (2 * k)
    roots = np.array(roots, dtype=float).reshape(-1, m)
    for a in (roots, rho, G):
        a.setflags(write=False)
    return WeightSystem(family, n, float(k), r, m, roots, rho, G, s)


def weight_system(group) -> WeightSystem:
    """The highest-weight calculus of a `Group` (cached per family, n and metric).

    Examples
    --------
    >>> from holonomy.groups import make_group, weight_system
    >>> W = weight_system(make_group("SU", 3, "physics"))
    >>> nu = W.shifted([1, 0, 0])          # the fundamental
    >>> float(W.dimension(nu)), round(float(W.casimir(nu)), 12)
    (3.0, 1.333333333333)
    """
    return _weight_system(group.family, group.n, float(group.k))


def _cartan(group) -> np.ndarray:
    """Commuting generators ``H_j (m, N, N)`` with eigenvalues ``i * (e_j-coordinate)``."""
    fam, n, N = group.family, group.n, group.N
    if fam in ("U", "SU"):
        H = np.zeros((n, N, N), complex)
        H[np.arange(n), np.arange(n), np.arange(n)] = 1j
        return H
    if fam == "Sp":
        H = np.zeros((n, N, N), complex)
        H[np.arange(n), np.arange(n), np.arange(n)] = 1j
        H[np.arange(n), np.arange(n) + n, np.arange(n) + n] = -1j
        return H
    r = n // 2
    H = np.zeros((r, N, N))
    for j in range(r):
        H[j, 2 * j, 2 * j + 1], H[j, 2 * j + 1, 2 * j] = -1.0, 1.0
    return H


def rep_weights(group, rep, power: int = 1) -> np.ndarray:
    """Weights (with multiplicity) of a representation, lattice coordinates ``(dim, r)``.

    Read from the representation's own matrices: the joint eigenvalues of
    ``-i dpi(H_j)`` on the Cartan generators. The class function ``power:p`` gets the
    fundamental's weights times p (Adams operation ``psi^p``), and ``power`` multiplies
    the weights likewise (a loop wound ``power`` times).

    Parameters
    ----------
    group : Group
    rep : Representation or str
    power : int, optional
        Adams operation applied on top (``chi_V(U^power)``).

    Returns
    -------
    ndarray (dim V, r)
    """
    if isinstance(rep, str):
        rep = group.rep(rep)
    W = weight_system(group)
    name = getattr(rep, "name", "")
    if name.startswith("power:") and rep._algebra is None:
        p = int(name.split(":", 1)[1])
        return rep_weights(group, group.rep("fundamental"), power * p)
    H = _cartan(group)
    M = np.array([-1j * rep.algebra_matrix(h) for h in H])  # Hermitian, commuting
    bound = max(1.0, max(np.abs(np.linalg.eigvalsh(Mj)).max() for Mj in M))
    # a combination whose eigenvalues separate distinct integer weights
    scale = (2 * math.ceil(bound) + 1) ** np.arange(len(M))
    _, V = np.linalg.eigh(np.einsum("j,jab->ab", scale, M))
    e = np.einsum("ai,jab,bi->ij", np.conj(V), M, V).real
    e_int = np.rint(e)
    if np.max(np.abs(e - e_int), initial=0.0) > 1e-6:
        raise ValueError(f"`rep` {name!r}: weights are not integral; not a representation "
                         f"of {group}.")
    return W.from_e(e_int * power)

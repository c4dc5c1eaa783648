"""Brownian motion and heat-kernel samplers on the compact matrix groups.

Brownian motion (generator ``(1/2) sum_a X_a^2`` for an orthonormal basis) is sampled
by the geodesic random walk ``U_{t+dt} = U_t exp(sum_a sqrt(dt) Z_a X_a)``; its weak
error is O(dt) over a fixed time. Its law at time t is the heat kernel p_t and, for an
irreducible pi, ``E[pi(U_t)] = exp(-c_pi t/2) Id``.

Exact samplers:

- ``U(1)``: ``exp(a X_1)`` with ``a ~ N(0, t)``.
- ``SU(2)`` and ``Sp(1)``: ``U = exp(theta * sqrt(2k) n . X)`` with ``n`` uniform on the
  unit sphere of coordinates (Haar-random axis; Ad acts on the orthonormal coordinates
  as SO(3)) and the angle ``theta`` (eigenvalues ``exp(+-i theta)``) drawn by inverse
  CDF from the heat-kernel angle law. With ``tau = t / (4k)`` (the spin-j Casimir is
  ``2j(j+1)/k``) the law on [0, pi] has density

      p(theta) = (2/pi) sin(theta) sum_{n>=1} n exp(-(n^2 - 1) tau) sin(n theta)
               = exp(tau) sin(theta) / (2 sqrt(pi) tau^{3/2})
                   sum_{m in Z} (theta + 2 pi m) exp(-(theta + 2 pi m)^2 / (4 tau)).

  The CDF (`su2_angle_cdf`) is in closed form from either line: the character series
  for ``tau >= 0.05``, truncated where ``n exp(-(n^2-1) tau) < 1e-14``, and the
  Poisson-summed (image) form below, whose terms fall like ``exp(-pi^2 m^2 / tau)``
  (through the complex error function). Sampling: for ``tau >= 0.5`` inverse CDF
  (one Newton step on the closed form from a cubic Hermite interpolant of exact
  quantiles per tau, safeguarded Newton where that is not enough); for ``tau < 0.5`` an
  exact rejection sampler from the image form with the images ``m in {-1, 0, 1}``
  (the others carry a total mass below 1e-17 there): proposal
  ``sqrt(2 tau) |N(0, I_3)|`` (drawn as ``2 sqrt(tau Gamma(3/2))``), acceptance
  ``sin(theta)/theta`` times the image correction, which is at most 1
  (see `_sample_small_tau`).

- ``SO(2)``: abelian, ``exp(a X_1)`` with ``a ~ N(0, t)``.
- ``SO(3)``: the image of the SU(2) sampler under the double cover (rotation angle
  ``2 theta``, ``theta`` drawn at ``tau = t / (16 k)``: the cover is a local isometry from
  SU(2) with metric ``4k``).

- ``U(2)``: ``exp(i b) V`` with V from the SU(2) sampler and ``b ~ N(0, t/(2k))``
  (centre and su(2) are orthogonal and commute).
- ``U(n)``, ``SU(n)`` (n >= 3), ``SO(n)`` (n >= 4), ``Sp(n)`` (n >= 2): the
  class-function route on the maximal torus (`_torus_law`): rejection from the
  exponential of a Gaussian algebra element, accepted with the ratio of the heat
  kernel's lattice sum to the proposal's (acceptance rate ``exp(-|rho|^2 t/2)`` per
  piece of time, pieces of at most ``2/|rho|^2``, so at least ``exp(-1)``),
  eigenvectors of the proposal (Haar-distributed given the eigenvalues); U(n) as its
  centre times SU(n). For SU(n) n <= 5, SO(n) n <= 7, Sp(n) n <= 3 the lattice sums
  run over the nearest images; larger groups read the same formula on the algebra
  (no image sums). Law error below 1e-18 in total variation per draw (stated there).

So every group is sampled exactly in law (`exact_heat_route` names the route);
`brownian` (the geodesic random walk with ``max(MIN_STEPS, ceil(t / HEAT_KERNEL_DT))``
steps by default, law error O(dt)) is Brownian motion by sub-stepping, used by no
sampler.

References
----------
.. [1] L. Gross, "Lattice gauge theory; heuristics and convergence", in Stochastic
   Processes - Mathematics and Physics, Springer LNM 1158, 1986
   (heat kernel on compact groups as character series; citation from memory).
.. [2] A. Sengupta, "Gauge theory on compact surfaces", Mem. AMS 126 (600), 1997.
.. [3] H. Weyl, "The Classical Groups", Princeton, 1939 (Weyl integration formula:
   the Haar density of the SU(2) angle is (2/pi) sin^2 theta).
.. [4] M. Liao, "Levy Processes in Lie Groups", Cambridge, 2004, Section 1.3 (Brownian
   motion on a Lie group as a limit of the geodesic random walk).
.. [5] Poisson summation applied to the SU(2) = S^3 heat kernel: e.g. J. S. Dowker,
   "Quantum mechanics on group space and Huygens' principle", Ann. Phys. 62 (1971) 361
   (citation from memory).
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import special, stats

from noise import rng_iv

__all__ = [
    "BrownianResult",
    "brownian",
    "heat_kernel",
    "su2_angle_cdf",
    "su2_angle_pdf",
    "sample_su2_angle",
    "HEAT_KERNEL_DT",
    "MIN_STEPS",
    "exact_heat_route",
    "heat_kernel_law",
    "su2_heat_quaternions",
]

HEAT_KERNEL_DT = 1e-2
MIN_STEPS = 8
_TAU_DUAL = 0.05  # below this tau the image (Poisson-summed) form is used
_TOL = 1e-14


@dataclass
class BrownianResult:
    """Result of `brownian`.

    Attributes
    ----------
    value : ndarray
        ``(size, N, N)`` for scalar ``t``, ``(size, m, N, N)`` for ``t`` of shape (m,).
    t : float or ndarray
        The time(s).
    steps : int
        Number of sub-steps (the same for every time).
    dt : float or ndarray
        Sub-step ``t / steps`` (per time).
    drift : float
        ``Group.drift(value)``: largest distance of a sample from the group.
    """

    value: np.ndarray
    t: float | np.ndarray
    steps: int
    dt: float | np.ndarray
    drift: float


def _times_iv(t, size):
    scalar = np.ndim(t) == 0
    try:
        tt = np.asarray(t, dtype=float)
    except (TypeError, ValueError):
        raise TypeError(f"`t` must be a non-negative number or 1-D array of them; got {t!r}.")
    if tt.ndim > 1:
        raise ValueError(f"`t` must be a scalar or a 1-D array of times; got shape {tt.shape}.")
    if not np.all(np.isfinite(tt)) or np.any(tt < 0):
        raise ValueError(f"`t` must be finite and >= 0; got {t!r}.")
    if isinstance(size, bool) or not isinstance(size, numbers.Integral) or size < 0:
        raise ValueError(f"`size` must be a non-negative integer; got {size!r}.")
    return tt, scalar, int(size)


def _brownian_iv(t, size, steps):
    tt, scalar, size = _times_iv(t, size)
    tmax = float(tt.max()) if tt.size else 0.0
    if steps is None:
        steps = max(MIN_STEPS, math.ceil(tmax / HEAT_KERNEL_DT))
    elif isinstance(steps, bool) or not isinstance(steps, numbers.Integral) or steps < 1:
        raise ValueError(f"`steps` must be a positive integer or None; got {steps!r}.")
    return tt, scalar, size, int(steps)


def brownian(group, t, size: int, *, rng=None, steps: int | None = None) -> BrownianResult:
    """Brownian motion on ``group`` at time(s) ``t`` by sub-stepping.

    ``U_{s+dt} = U_s exp(sum_a sqrt(dt) Z_a X_a)``, ``Z_a`` iid N(0, 1), started at the
    identity, ``dt = t / steps``.

    Parameters
    ----------
    group : Group
    t : float or ndarray (m,)
        Time(s) >= 0. With an array, every time gets its own independent path.
    size : int
        Number of samples.
    rng : numpy Generator or seed, optional
    steps : int, optional
        Number of sub-steps; default ``max(MIN_STEPS, ceil(max(t) / HEAT_KERNEL_DT))``.

    Returns
    -------
    BrownianResult

    References
    ----------
    .. [1] M. Liao, "Levy Processes in Lie Groups", Cambridge, 2004, Section 1.3.
    """
    tt, scalar, size, steps = _brownian_iv(t, size, steps)
    rng = rng_iv(rng)
    dt = tt / steps
    batch = (size,) + tt.shape
    U = group.identity(batch)
    sq = np.sqrt(dt)[..., None]
    for _ in range(steps):
        Z = rng.standard_normal(batch + (group.dim,))
        U = U @ group.exp(Z * sq, coords=True)
    return BrownianResult(
        value=U,
        t=float(tt) if scalar else tt,
        steps=steps,
        dt=float(dt) if scalar else dt,
        drift=group.drift(U),
    )


def heat_kernel(group, t, size: int, *, rng=None) -> np.ndarray:
    """Samples of the heat kernel p_t (the law of Brownian motion at time t).

    Exact in law for every group (`exact_heat_route` names the route: a Gaussian for
    U(1) and SO(2), the SU(2) angle law for SU(2), Sp(1), SO(3) and U(2), the maximal
    torus for the rest; the torus route's law error is below 1e-18 in total variation
    per draw, `_torus_law`).

    Parameters
    ----------
    group : Group
    t : float or ndarray (m,)
        Time(s) >= 0.
    size : int
    rng : numpy Generator or seed, optional

    Returns
    -------
    ndarray
        ``(size, N, N)`` for scalar ``t``; ``(size, m, N, N)`` for ``t`` of shape (m,).

    References
    ----------
    .. [1] L. Gross, Springer LNM 1158, 1986.
    .. [2] H. Weyl, "The Classical Groups", Princeton, 1939.
    .. [3] M. Liao, "Levy Processes in Lie Groups", Cambridge, 2004, Section 1.3.

    Examples
    --------
    The Monte Carlo mean of the normalized character covers exp(-c t / 2):

    >>> import numpy as np
    >>> from holonomy.groups import make_group
    >>> G = make_group("SU", 2, "physics")
    >>> U = G.heat_kernel(0.5, 20000, rng=1)
    >>> chi = G.rep("fundamental").character(U).real
    >>> exact = np.exp(-G.rep("fundamental").casimir * 0.5 / 2)
    >>> bool(abs(chi.mean() - exact) < 4 * chi.std() / np.sqrt(chi.size))
    True
    """
    tt, scalar, size = _times_iv(t, size)
    rng = rng_iv(rng)
    batch = (size,) + tt.shape
    if group.N == 1:
        a = rng.standard_normal(batch + (1,)) * np.sqrt(tt)[..., None]
        return group.exp(a, coords=True)
    if group.family == "SO" and group.N == 2:
        # Abelian: Brownian motion is exp(sqrt(t) Z X_1) exactly.
        a = rng.standard_normal(batch + (1,)) * np.sqrt(tt)[..., None]
        return group.exp(a, coords=True)
    if (group.N == 2 and group.family in ("SU", "Sp")) or (group.family == "SO" and group.N == 3):
        # SO(3) = SU(2)/{+-1}: with metric k on so(3) the covering map is a local
        # isometry from SU(2) with metric 4k and doubles the rotation angle, so the
        # SO(3) heat kernel at t is the image of the SU(2) one at tau = t / (16 k).
        so3 = group.family == "SO"
        kk = 4.0 * group.k if so3 else group.k
        tau = np.broadcast_to(tt / (4.0 * kk), batch)
        theta = sample_su2_angle(tau, rng=rng)
        if so3:
            theta = 2.0 * theta
        axis = rng.standard_normal(batch + (3,))
        axis *= (theta * np.sqrt(2.0 * group.k) / np.sqrt(np.einsum("...i,...i->...", axis, axis)))[..., None]
        return group.exp(axis, coords=True)
    return _heat_torus(group, tt, size, rng)


# ------------------------------------------------------------ SU(2) angle law
def _cdf_pdf_series(theta, tau):
    # Terms n exp(-(n^2-1) tau) by the recurrence q^{(n+1)^2-1} = q^{n^2-1} q^{2n+1},
    # q = exp(-tau), and sin(n theta) by the Chebyshev recurrence (no sin/exp per term);
    # in-place updates because this is the sampler's inner loop.
    q2 = np.exp(-2.0 * tau)
    a = np.ones_like(theta)  # q^(n^2 - 1) at n = 1
    r = np.exp(-3.0 * tau)  # q^(2n + 1) at n = 1
    c2 = 2.0 * np.cos(theta)
    s_prev = np.sin(theta)  # sin((n-1) theta) at n = 2
    s_cur = c2 * s_prev  # sin(n theta) at n = 2
    s_next = np.empty_like(theta)
    tmp = np.empty_like(theta)
    F = theta - 0.5 * s_cur  # n = 1: int_0^th (2/pi) sin^2 = (th - sin(2th)/2)/pi
    P = s_prev.copy()
    tau_min = float(tau.min())
    n = 1
    while True:
        n += 1
        a *= r
        r *= q2
        np.multiply(c2, s_cur, out=s_next)
        s_next -= s_prev  # sin((n+1) theta)
        # int_0^th (2/pi) sin(p) sin(n p) dp = (1/pi)[sin((n-1)th)/(n-1) - sin((n+1)th)/(n+1)]
        np.multiply(s_prev, 1.0 / (n - 1), out=tmp)
        tmp -= s_next * (1.0 / (n + 1))
        tmp *= a
        F += n * tmp
        np.multiply(s_cur, a, out=tmp)
        P += n * tmp
        s_prev, s_cur, s_next = s_cur, s_next, s_prev
        # Stop where the largest remaining term is below the tolerance.
        if n * math.exp(-(n * n - 1) * tau_min) < _TOL:
            break
    return F / np.pi, (2.0 / np.pi) * np.sin(theta) * P


def _cdf_pdf_dual(theta, tau):
    # Images m with (2 pi |m| - pi)^2 / (4 tau) < 37 matter (exp(-37) ~ 1e-16).
    M = max(0, math.ceil((math.sqrt(148.0 * float(tau.max())) + math.pi) / (2 * math.pi)))
    m = np.arange(-M, M + 1)
    sq = np.sqrt(tau)[:, None]
    u = theta[:, None] + 2 * np.pi * m
    g = np.exp(-(u * u) / (4 * tau[:, None]))
    z = (u - 2j * tau[:, None]) / (2 * sq)
    z0 = (2 * np.pi * m - 2j * tau[:, None]) / (2 * sq)
    et = np.exp(tau)
    st = np.sin(theta)
    F = np.sum((special.erf(z) - special.erf(z0)).real, axis=1)
    F -= et * st * np.sum(g, axis=1) / np.sqrt(np.pi * tau)
    p = et * st * np.sum(u * g, axis=1) / (2 * np.sqrt(np.pi) * tau**1.5)
    return F, p


def _cdf_pdf(theta, tau):
    theta = np.asarray(theta, float)
    tau = np.asarray(tau, float)
    theta, tau = np.broadcast_arrays(theta, tau)
    shape = theta.shape
    theta, tau = theta.ravel(), tau.ravel()
    F = np.empty_like(theta)
    p = np.empty_like(theta)
    zero = tau == 0
    F[zero] = (theta[zero] > 0).astype(float)
    p[zero] = 0.0
    dual = (tau < _TAU_DUAL) & ~zero
    ser = tau >= _TAU_DUAL
    if dual.any():
        F[dual], p[dual] = _cdf_pdf_dual(theta[dual], tau[dual])
    if ser.any():
        F[ser], p[ser] = _cdf_pdf_series(theta[ser], tau[ser])
    return F.reshape(shape), p.reshape(shape)


def su2_angle_cdf(theta, tau) -> np.ndarray:
    """CDF of the SU(2) heat-kernel angle on [0, pi], ``tau = t / (4k)``.

    See the module docstring for the two closed forms used.

    References
    ----------
    .. [1] H. Weyl, "The Classical Groups", Princeton, 1939 (Weyl density).
    .. [2] J. S. Dowker, Ann. Phys. 62 (1971) 361 (image form of the S^3 heat kernel;
       from memory).
    """
    return _cdf_pdf(theta, tau)[0]


def su2_angle_pdf(theta, tau) -> np.ndarray:
    """Density of the SU(2) heat-kernel angle on [0, pi], ``tau = t / (4k)``."""
    return _cdf_pdf(theta, tau)[1]


_TAU_REJECT = 0.5  # below: rejection sampler (neglected image mass < 1e-18)
_IMAGE_LOG_TOL = 60 * math.log(2.0)  # images skipped where their effect is < 2^-60
_GRID = 1025


def _accept_numerator(th, t):
    """``sin(theta) [theta + (theta + 2 pi) e_+ + (theta - 2 pi) e_-]``; the acceptance
    probability is this over ``theta^2``.

    The images change the bracket by ``-theta (B - A)`` with
    ``0 <= B - A <= (4 pi^2 / tau) exp(-pi (pi - theta) / tau)`` (from
    ``sinh(x) <= x cosh(x) <= x e^x``); they are evaluated only where that bound exceeds
    ``2^-60``, elsewhere the acceptance probability is exact to that relative error.
    """
    with np.errstate(over="ignore", divide="ignore"):
        # pi / t = inf for a subnormal t (density ~1e-320): no images needed, as inf < x
        # is False; the comparison is right without the overflow warning
        need = (np.pi / t) * (np.pi - th) < np.log(4 * np.pi**2 / t) + _IMAGE_LOG_TOL
    rhs = th.copy()
    idx = np.flatnonzero(need)
    if idx.size:
        h, ti = th[idx], t[idx]
        em = np.exp(-(np.pi / ti) * (np.pi - h))  # e_-; e_+ = e_- exp(-2 pi h / tau)
        rhs[idx] += (h - 2 * np.pi) * em + (h + 2 * np.pi) * (em * np.exp(-(2 * np.pi / ti) * h))
    return np.sin(th) * rhs


def _sample_small_tau(tau, rng):
    """Angles for ``tau < _TAU_REJECT`` by rejection from the image form.

    Dividing the image-form density by ``exp(-theta^2/(4 tau))`` and keeping the images
    ``m in {-1, 0, 1}``, the target is proportional to

        sin(theta) [theta + (theta + 2 pi) e_+ + (theta - 2 pi) e_-] exp(-theta^2/(4 tau)),
        e_+- = exp(-pi (pi +- theta) / tau),

    on [0, pi]. Proposal: ``theta = sqrt(2 tau) |Z|``, Z ~ N(0, I_3), i.e.
    ``theta = 2 sqrt(tau G)`` with G ~ Gamma(3/2) (density proportional to
    ``theta^2 exp(-theta^2/(4 tau))``); accept when ``theta <= pi`` and
    ``u theta^2 <= sin(theta) [theta + (theta + 2 pi) e_+ + (theta - 2 pi) e_-]``.
    The ratio is at most 1: ``sin(theta) <= theta`` and the m = -1 term outweighs the
    m = +1 term, ``(2 pi - theta) e_- >= (2 pi + theta) e_+`` whenever
    ``tau <= pi (2 pi - theta)``, which holds for tau < pi^2. The images |m| >= 2 carry
    a total mass below about ``exp(-2 pi^2 / tau) < 1e-17`` for tau < 0.5; the m = +-1
    images are evaluated only where they can change the acceptance probability by more
    than 2^-60 (see `_accept_numerator`). The acceptance rate is ``exp(-tau)`` (ratio of the normalising
    constants), 0.61 at tau = 0.5.

    References
    ----------
    .. [1] L. Devroye, "Non-Uniform Random Variate Generation", Springer, 1986,
       Section II.3 (rejection) and IX.3 (gamma variates; chi^2_3 / 2 ~ Gamma(3/2)).
    """
    out = np.empty_like(tau)
    todo = np.arange(tau.size)
    t = tau
    while todo.size:
        th = 2.0 * np.sqrt(t * rng.standard_gamma(1.5, todo.size))
        u = rng.random(todo.size)
        with np.errstate(invalid="ignore"):
            ok = (th <= np.pi) & (u * th * th <= _accept_numerator(th, t))
        out[todo[ok]] = th[ok]
        todo = todo[~ok]
        t = t[~ok]
    return out


def _cdf_table(taus):
    grid = np.linspace(0.0, np.pi, _GRID)
    T, P = _cdf_pdf(grid[None, :], taus[:, None])  # (U, G), rows increasing
    T = np.maximum.accumulate(T, axis=1)
    T[:, 0], T[:, -1] = 0.0, 1.0
    return grid, T, P


def _hermite_solve(u, grid, F0, F1, p0, p1, j):
    """Solve the cubic Hermite interpolant of the CDF on [grid[j], grid[j+1]] for u."""
    h = grid[1] - grid[0]
    d0, d1 = p0 * h, p1 * h
    with np.errstate(divide="ignore", invalid="ignore"):
        x = np.where(F1 > F0, (u - F0) / (F1 - F0), 0.5)
    x = np.clip(x, 0.0, 1.0)
    for _ in range(3):  # Newton on the cubic in the unit interval
        x2 = x * x
        x3 = x2 * x
        H = (2 * x3 - 3 * x2 + 1) * F0 + (x3 - 2 * x2 + x) * d0 + (3 * x2 - 2 * x3) * F1 + (x3 - x2) * d1
        dH = (6 * x2 - 6 * x) * (F0 - F1) + (3 * x2 - 4 * x + 1) * d0 + (3 * x2 - 2 * x) * d1
        with np.errstate(divide="ignore", invalid="ignore"):
            x = np.clip(np.where(dH > 0, x - (H - u) / dH, x), 0.0, 1.0)
    return grid[j] + x * h


def _initial_guess(u, tau):
    """Starting points for Newton.

    With few distinct tau: a table of the exact CDF and density on a grid of
    ``_GRID`` angles per tau, located by one row-wise ``searchsorted``, then solved on
    the cubic Hermite interpolant of the interval (error O(h^4)). Otherwise the small-tau
    limit ``sqrt(2 tau chi^2_3)`` or pi/2.
    """
    taus, inv = np.unique(tau, return_inverse=True)
    G = _GRID
    if taus.size * 64 > tau.size:
        guess = np.sqrt(2 * tau * stats.chi2.ppf(u, 3))
        return np.where(tau < 0.5, guess, np.pi / 2)
    grid, T, P = _cdf_table(taus)
    # Row-wise search in one call: offset each row by twice its index.
    off = 2.0 * inv
    flat = (T + 2.0 * np.arange(taus.size)[:, None]).ravel()
    pos = np.searchsorted(flat, u + off, side="right")
    pos = np.clip(pos, inv * G + 1, inv * G + G - 1)
    Pf = P.ravel()
    return _hermite_solve(u, grid, flat[pos - 1] - off, flat[pos] - off, Pf[pos - 1], Pf[pos],
                          pos - 1 - inv * G)


_QUANTILES = 1024  # cells of the per-tau quantile table


def _quantile_table(taus):
    """Exact quantiles ``theta_j = F^{-1}(j / M)`` (``M = _QUANTILES``) per tau and the
    slopes ``d theta / du = 1 / p(theta_j)``, shape (len(taus), M + 1)."""
    M = _QUANTILES
    U = np.broadcast_to(np.linspace(0.0, 1.0, M + 1), (taus.size, M + 1))
    Tq = np.broadcast_to(taus[:, None], U.shape)
    th = _sample_inverse_cdf(Tq.ravel(), U.ravel()).reshape(U.shape)
    th[:, 0], th[:, -1] = 0.0, np.pi
    p = _cdf_pdf(th, Tq)[1]
    with np.errstate(divide="ignore"):
        d = np.where(p > 0, 1.0 / p, 0.0)
    return th, d


def _initial_guess_columns(u, row):
    """Starting points for u of shape (size, m) whose column i has tau = row[i].

    Cubic Hermite interpolation of the quantile function between exact quantiles at
    ``j / M`` (slopes ``1/p``; error O(M^-4), about 1e-12 away from the two end cells,
    where the quantile function behaves like ``u^(1/3)`` and linear interpolation is
    used). One Newton step on the exact CDF then finishes (`_sample_inverse_cdf`).
    """
    taus, inv = np.unique(row, return_inverse=True)
    th, d = _quantile_table(taus)
    M = _QUANTILES
    y = u * M
    j = np.minimum(y.astype(np.intp), M - 1)
    x = y - j
    base = (inv * (M + 1))[None, :] + j  # flat index of the left node
    t0, t1 = th.ravel()[base], th.ravel()[base + 1]
    h = 1.0 / M
    d0, d1 = d.ravel()[base] * h, d.ravel()[base + 1] * h
    end = (j == 0) | (j == M - 1)
    d0[end] = t1[end] - t0[end]
    d1[end] = d0[end]
    x2 = x * x
    x3 = x2 * x
    return (t0 + (3 * x2 - 2 * x3) * (t1 - t0) + (x3 - 2 * x2 + x) * d0 + (x3 - x2) * d1)


def _sample_inverse_cdf(tau, u, guess=None):
    if guess is None:
        guess = _initial_guess(u, tau)
    th = np.clip(guess, 1e-300, np.pi * (1 - 1e-12))
    lo = np.zeros_like(th)
    hi = np.full_like(th, np.pi)
    idx = np.arange(th.size)
    for _ in range(100):
        x = th[idx]
        F, p = _cdf_pdf(x, tau[idx])
        r = F - u[idx]
        below = r < 0
        lo[idx] = np.where(below, x, lo[idx])
        hi[idx] = np.where(below, hi[idx], x)
        with np.errstate(divide="ignore", invalid="ignore"):
            new = x - r / p
        bad = ~((new > lo[idx]) & (new < hi[idx]))
        new = np.where(bad, 0.5 * (lo[idx] + hi[idx]), new)
        small = np.abs(r) < 1e-15
        new = np.where(small, x, new)
        th[idx] = new
        step = np.abs(new - x)
        # Newton's error after a step is about step^2 |p'/(2p)| <= step^2 / dist(ends):
        # a step below 3e-8 away from the ends leaves an error below ~1e-15.
        edge = np.minimum(new, np.pi - new)
        done = small | (step < 1e-12) | (~bad & (step * step < 1e-15 * edge)) | (hi[idx] - lo[idx] < 1e-12)
        idx = idx[~done]
        if idx.size == 0:
            break
    return th


def sample_su2_angle(tau, *, rng=None) -> np.ndarray:
    """Draw SU(2) heat-kernel angles, one per entry of ``tau = t/(4k)``.

    ``tau < 0.5``: exact rejection from the image form (see `_sample_small_tau`;
    acceptance rate ``exp(-tau)``). Otherwise inverse CDF: ``F_tau(theta) = u`` is
    solved by a vectorised safeguarded Newton iteration on the closed-form
    character-series CDF (bisection whenever a step leaves the bracket), started, when
    the rows share one tau per column (the sampler's layout), from a cubic Hermite
    interpolant of exact quantiles (usually one Newton step), else from a CDF table per
    distinct ``tau``; it stops when the predicted error is below about 1e-15.

    References
    ----------
    .. [1] L. Devroye, "Non-Uniform Random Variate Generation", Springer, 1986,
       Sections II.2 (inversion) and II.3 (rejection).
    """
    rng = rng_iv(rng)
    tau = np.asarray(tau, float)
    shape = tau.shape
    # Common case (heat_kernel with an array of times): tau of shape (size, m) with
    # equal rows, so one CDF table per column serves all samples.
    columns = tau.ndim == 2 and tau.shape[0] > 64 and tau.shape[1] < tau.shape[0] and bool(np.all(tau == tau[:1]))
    row = tau[0].copy() if columns else None
    tau = tau.ravel()
    theta = np.zeros_like(tau)
    u = rng.random(tau.shape)
    small = np.flatnonzero((tau > 0) & (tau < _TAU_REJECT))
    large = np.flatnonzero(tau >= _TAU_REJECT)
    if large.size and columns:
        cols = np.flatnonzero(row >= _TAU_REJECT)
        U = u.reshape(shape)[:, cols]
        guess = _initial_guess_columns(U, row[cols])
        th = _sample_inverse_cdf(np.broadcast_to(row[cols], U.shape).ravel(), U.ravel(), guess.ravel())
        theta.reshape(shape)[:, cols] = th.reshape(U.shape)
    elif large.size:
        theta[large] = _sample_inverse_cdf(tau[large], u[large])
    if small.size:
        theta[small] = _sample_small_tau(tau[small], rng)
    return theta.reshape(shape)



def su2_heat_quaternions(tau, *, rng=None) -> np.ndarray:
    """SU(2) heat-kernel samples as unit quaternions ``(..., 4)``, ``tau = t / (4k)``.

    The quaternion ``(cos theta, sin theta n)`` stands for
    ``cos theta Id + i sin theta n.sigma``; its law is that of `heat_kernel` for SU(2)
    (Haar-random axis n, heat-kernel angle theta). For ``tau < 0.5`` each attempt draws
    three normals Z and one uniform: ``theta = sqrt(2 tau) |Z|`` is the proposal of
    `_sample_small_tau` and, since the direction of Z is uniform and independent of
    ``|Z|``, ``n = Z / |Z|`` is the axis (no separate axis draws). Larger tau: inverse
    CDF (`sample_su2_angle`) and three normals for the axis.

    References
    ----------
    .. [1] L. Devroye, "Non-Uniform Random Variate Generation", Springer, 1986,
       Sections II.3 (rejection) and V.4 (uniform directions from normal vectors).
    """
    tau = np.asarray(tau, float)
    return _su2_heat_columns(tau.ravel(), 1, rng_iv(rng)).reshape(tau.shape + (4,))


def _su2_heat_columns(col, size: int, rng) -> np.ndarray:
    """`su2_heat_quaternions` of the ``(size, m)`` times ``tau[s, c] = col[c]``, shape
    ``(size, m, 4)``: the same draws in the same order and the same numbers, with the
    constants of the acceptance test (`_accept_numerator`) computed once per column
    instead of once per entry (the sampler's intervals share their times across the
    samples). The result is a view of component-first storage ``(4, m, size)``, the
    layout of the sampler's holonomies (`holonomy._kernels.QuaternionKernel`)."""
    m = col.size
    q = np.empty((4, m, size))
    qt = q.transpose(0, 2, 1)  # (4, size, m): entry e = s m + c in draw order
    qf = q.reshape(4, m * size)  # entry e sits at (e % m) size + e // m

    def put(e, j, values):
        qf[j, (e % m) * size + e // m] = values

    kind = np.where(col <= 0, 0, np.where(col < _TAU_REJECT, 1, 2))
    whole = bool(np.all(kind == 1))  # the usual case: no fancy indexing in round one
    if whole:
        todo = np.arange(size * m)
    else:
        flat_kind = np.tile(kind, size)
        todo, large = np.flatnonzero(flat_kind == 1), np.flatnonzero(flat_kind == 2)
        q[:, kind == 0] = np.array([1.0, 0.0, 0.0, 0.0])[:, None, None]  # t = 0: identity
    # per column, the values `_accept_numerator` and the proposal compute per entry
    # (pi / t = inf for a subnormal t is right: no images, as inf < x is False)
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        sq2t, pi_t, two_pi_t = np.sqrt(2.0 * col), np.pi / col, 2 * np.pi / col
        logc = np.log(4 * np.pi**2 / col) + _IMAGE_LOG_TOL
        # images can matter only above theta = pi - logc / (pi / tau) (less a margin
        # far above the rounding of the test): below it for every entry, the test is
        # skipped (theta > pi is rejected whatever the images)
        no_images_below = np.min(np.where(kind == 1, np.pi - logc / pi_t, np.pi),
                                 initial=np.pi) - 1e-6
    while todo.size:
        Z = rng.standard_normal((todo.size, 3))
        u = rng.random(todo.size)
        # |Z| summed as (Z_0^2 + Z_2^2) + Z_1^2: the order np.einsum("ij,ij->i") took
        # here (numpy 2.4, x86-64) when it computed this, so the numbers stayed the same
        z0, z1, z2 = Z[:, 0], Z[:, 1], Z[:, 2]
        r = z0 * z0
        r += z2 * z2
        r += z1 * z1
        np.sqrt(r, out=r)
        c = None if whole else todo % m
        th = (r.reshape(size, m) * sq2t).ravel() if whole else sq2t[c] * r
        sn = np.sin(th)
        # sin(theta) [theta + (theta + 2 pi) e_+ + (theta - 2 pi) e_-], images only
        # where they matter (see `_accept_numerator`, the same operations)
        numer = sn * th
        if not th.size or th.max() < no_images_below:
            need = np.empty(0, np.intp)
        elif whole:
            need = np.flatnonzero(pi_t * (np.pi - th.reshape(size, m)) < logc)
        else:
            need = np.flatnonzero(pi_t[c] * (np.pi - th) < logc[c])
        if need.size:
            cn = need % m if whole else c[need]
            h = th[need]
            em = np.exp(-pi_t[cn] * (np.pi - h))  # e_-; e_+ = e_- exp(-2 pi h / tau)
            rhs = h + ((h - 2 * np.pi) * em + (h + 2 * np.pi) * (em * np.exp(-two_pi_t[cn] * h)))
            numer[need] = sn[need] * rhs
        with np.errstate(invalid="ignore"):
            ok = (th <= np.pi) & (u * th * th <= numer)
        if whole:
            # every entry written now, the rejected ones again in later rounds
            np.cos(th.reshape(size, m), out=qt[0])
            sn /= r
            for j in range(3):
                np.multiply(Z[:, j].reshape(size, m), sn.reshape(size, m), out=qt[j + 1])
            whole = False
        else:
            idx = todo[ok]
            put(idx, 0, np.cos(th[ok]))
            s = sn[ok] / r[ok]
            for j in range(3):
                put(idx, j + 1, Z[ok, j] * s)
        todo = todo[~ok]
    if np.any(kind == 2):
        flat = np.tile(col, size)
        theta = sample_su2_angle(flat[large], rng=rng)
        axis = rng.standard_normal((large.size, 3))
        axis *= (np.sin(theta) / np.sqrt(np.einsum("ij,ij->i", axis, axis)))[:, None]
        put(large, 0, np.cos(theta))
        for j in range(3):
            put(large, j + 1, axis[:, j])
    return q.transpose(2, 1, 0)

# ------------------------------------------------ exact kernels on the maximal torus
#: largest neglected law error (total variation) of one exact torus draw
_TORUS_TV = 1e-18


@dataclass(frozen=True)
class _TorusLaw:
    """The heat kernel of a compact group read on its maximal torus (see `_torus_law`).

    ``roots`` (r, m): the positive roots as linear forms on the torus coordinates x;
    ``images`` (s, m): the lattice vectors kept in the image sums (entries in
    {-1, 0, 1}, times 2 pi); ``c``: ``|X|^2 = c sum x_j^2``; ``piece``: the largest time
    drawn in one go; ``rho2``: ``|rho|^2``; ``lattice``: "A" (sum zero) or "Z".
    """

    family: str
    N: int
    m: int
    roots: np.ndarray
    images: np.ndarray
    c: float
    piece: float
    rho2: float
    lattice: str
    dim: int
    bound: float
    #: the large-group route: acceptance from the proposal's algebra element (no images,
    #: no reduction to the torus), ``max(0, prod_a sinc(a(y)/2pi))`` (see `_torus_law`)
    algebra: bool = False
    #: per image g, prod_a (-1)^{a(g) / 2 pi}: sin(a(x + g)/2) = (-1)^{a(g)/2pi} sin(a(x)/2)
    signs: np.ndarray | None = None


def _images(m: int, lattice: str) -> np.ndarray:
    grid = np.array(np.meshgrid(*[(-1, 0, 1)] * m, indexing="ij")).reshape(m, -1).T
    if lattice == "A":
        grid = grid[grid.sum(axis=1) == 0]
    return 2 * np.pi * grid.astype(float)


@lru_cache(maxsize=None)
def _torus_law(family: str, n: int, k: float):
    """Torus data of SU(n) (n >= 3), SO(n) (n >= 4) or Sp(n) (n >= 2), else None.

    The heat kernel of a compact connected group, as a density against Haar measure at
    ``exp(X)``, ``X`` conjugate to the torus point ``x``, is [1]_ [2]_

        p_t(exp x) = C e^{|rho|^2 t/2} / prod_a sin(a(x)/2)
                     sum_{g in L} prod_a a(x+g)/2 exp(-|x+g|^2 / (2t)),

    ``a`` the positive roots, ``L`` the kernel of exp on the torus (this form also holds
    for groups that are not simply connected: their kernel is summed over, each term
    with the sign of ``prod_a sin(a(x+g)/2)``). The law of ``exp(X)`` with ``X`` Gaussian
    in the algebra (variance t per orthonormal coordinate) has the same form with
    ``prod_a (a(x+g)/2)^2 / sin(a(x)/2)^2`` and no ``e^{|rho|^2 t/2}`` (the Jacobian of
    exp [3]_). So with ``w(y) = prod_a a(y)^2 exp(-|y|^2/(2t))`` and
    ``s(y) = prod_a sin(a(y)/2) / (a(y)/2)``,

        p_t / q_t = e^{|rho|^2 t/2} r(x),  r(x) = sum_g s(x+g) w(x+g) / sum_g w(x+g),

    and ``0 <= r <= 1`` (``|s| <= 1``; ``r >= 0`` because p_t is a density): rejection
    from the Gaussian proposal accepts with probability r, at the rate
    ``exp(-|rho|^2 t/2)``.

    The sums run over the images with entries in {-1, 0, 1} (times 2 pi) around the
    representative of x nearest to 0 (Conway and Sloane [4]_). A lattice vector left
    out has norm >= G, the representative norm <= R (the covering radius), so the law
    error in total variation is at most the proposal's mass at ``|x| >= G - R``,
    ``P(chi^2_d >= c (G - R)^2 / t)``: longer times are drawn as products of pieces
    (the semigroup property) of length ``piece``, the smaller of ``2/|rho|^2`` (least
    work per unit time) and the time where that bound reaches ``_TORUS_TV``.

    Larger groups (SU(n), n >= 6; SO(n), n >= 8; Sp(n), n >= 4), where the image sums
    would run over 3^m points, take the same formula read on the algebra ("algebra"
    route): the heat kernel is the image under exp of the signed measure
    ``e^{|rho|^2 t/2} s(y) gamma_t(X)`` on the algebra (``y`` the torus point of X
    itself, ``gamma_t`` the proposal's Gaussian density; summing over the preimages
    gives the lattice sum above). Accepting the proposal X with probability
    ``max(0, s(y))`` draws ``exp(X)`` from that measure with its negative part left out;
    ``s(y) < 0`` needs a root with ``|a(y)| > 2 pi``, hence
    ``|X|^2 > c (2 pi)^2 / max_a |a|^2``. The law error in total variation is at most
    ``2 e^{|rho|^2 t/2}`` times the proposal's mass there,
    ``P(chi^2_d >= c (2 pi)^2 / (max_a |a|^2 t))``, and the acceptance rate is
    ``exp(-|rho|^2 t/2)`` plus at most that mass. Pieces as above.

    References
    ----------
    .. [1] R. Eskin, "Heat equation on Lie groups", in: In Memoriam I. G. Petrovskii
       (1973); H. Urakawa, "The heat equation on compact Lie group", Osaka J. Math.
       12 (1975) 285-297 (the heat kernel as a sum over the lattice; from memory).
    .. [2] I. B. Frenkel, "Orbital theory for affine Lie algebras", Invent. Math. 77
       (1984) 301-352 (the same sum from the Weyl character formula and Poisson
       summation; from memory).
    .. [3] S. Helgason, "Groups and Geometric Analysis", Academic Press, 1984, Ch. II
       (the Jacobian prod_a (sin(a/2)/(a/2))^2 of exp and the Weyl integration formula).
    .. [4] J. H. Conway and N. J. A. Sloane, "Sphere Packings, Lattices and Groups",
       Springer, 1988, Ch. 20 (closest points of A_n and Z^n; covering radii in Ch. 4).
    """
    algebra = (family == "SU" and n > 5) or (family == "SO" and n > 7) or (family == "Sp" and n > 3)
    if family == "SU" and 3 <= n:
        m, lattice, c = n, "A", k
        eye = np.eye(n)
        roots = np.array([eye[i] - eye[j] for i in range(n) for j in range(i + 1, n)])
        G2, R2 = 6.0, (n // 2) * (n - n // 2) / n
        dim = n * n - 1
    elif (family == "SO" and 4 <= n) or (family == "Sp" and 2 <= n):
        m = n // 2 if family == "SO" else n
        lattice, c = "Z", 2.0 * k
        eye = np.eye(m)
        roots = [eye[i] + s * eye[j] for i in range(m) for j in range(i + 1, m) for s in (1, -1)]
        if family == "SO" and n % 2:
            roots += list(eye)
        if family == "Sp":
            roots += list(2 * eye)
        roots = np.array(roots)
        G2, R2 = 4.0, m / 4.0
        dim = n * (n - 1) // 2 if family == "SO" else n * (2 * n + 1)
    else:
        return None
    rho = 0.5 * roots.sum(axis=0)
    if lattice == "A":
        rho = rho - rho.mean()
    rho2 = float(rho @ rho) / c
    if algebra:  # no root value beyond 2 pi
        D2 = c * (2 * np.pi) ** 2 / float(np.max(np.sum(roots * roots, axis=1)))
    else:
        D2 = c * (2 * np.pi) ** 2 * (math.sqrt(G2) - math.sqrt(R2)) ** 2

    def log_bound(t):  # log of the neglected mass (algebra route: with its factor)
        extra = math.log(2.0) + rho2 * t / 2 if algebra else 0.0
        return stats.chi2.logsf(D2 / t, dim) + extra

    def excess(t):  # log10 of the neglected mass minus log10 of the tolerance
        return log_bound(t) / math.log(10) - math.log10(_TORUS_TV)

    from scipy.optimize import brentq

    safe = brentq(excess, 1e-6, 1e3) if excess(1e3) > 0 else 1e3
    piece = min(2.0 / rho2, safe)
    bound = float(math.exp(log_bound(piece)))
    images = np.zeros((1, m)) if algebra else _images(m, lattice)
    turns = np.rint(images @ roots.T / (2 * np.pi)).astype(np.int64)
    signs = np.where(turns.sum(axis=1) % 2, -1.0, 1.0)
    return _TorusLaw(family, n, m, roots, images, c, piece, rho2, lattice, dim, bound, algebra,
                     signs)


def _nearest_representative(x: np.ndarray, lattice: str) -> np.ndarray:
    """x minus its nearest lattice point (2 pi Z^m or 2 pi A_{m-1})."""
    z = x / (2 * np.pi)
    f = np.rint(z)
    if lattice == "A":
        delta = f.sum(axis=-1).astype(np.intp)
        e = z - f
        rank = np.argsort(np.argsort(e, axis=-1), axis=-1)
        m = x.shape[-1]
        f -= (rank < delta[:, None]).astype(float)  # delta > 0: lower the smallest e
        f += (rank >= m + delta[:, None]).astype(float)  # delta < 0: raise the largest
    return x - 2 * np.pi * f


def _eig3(H: np.ndarray) -> np.ndarray:
    """Eigenvalues of Hermitian 3 x 3 matrices by the trigonometric solution of the
    characteristic cubic (unsorted). Rounding grows like eps / gap near a double
    eigenvalue, where the proposal's density vanishes like gap^2 (eigenvalue
    repulsion), so the effect on the law stays at the rounding level.

    References
    ----------
    .. [1] O. K. Smith, "Eigenvalues of a symmetric 3 x 3 matrix", Commun. ACM 4 (1961)
       168.
    """
    a, b, c = H[..., 0, 0].real, H[..., 1, 1].real, H[..., 2, 2].real
    d, e, f = H[..., 0, 1], H[..., 0, 2], H[..., 1, 2]
    q = (a + b + c) / 3.0
    a, b, c = a - q, b - q, c - q
    dd = d.real * d.real + d.imag * d.imag
    ee = e.real * e.real + e.imag * e.imag
    ff = f.real * f.real + f.imag * f.imag
    c1 = 0.5 * (a * a + b * b + c * c) + dd + ee + ff  # tr(A^2) / 2
    # det A = abc + 2 Re(d f conj(e)) - a|f|^2 - b|e|^2 - c|d|^2
    dfr = d.real * f.real - d.imag * f.imag
    dfi = d.real * f.imag + d.imag * f.real
    c0 = a * b * c + 2.0 * (dfr * e.real + dfi * e.imag) - a * ff - b * ee - c * dd
    p = np.sqrt(c1 / 3.0)
    p3 = p * p * p  # 0 for the tiniest times (H about 1e-161): any angle will do there
    with np.errstate(divide="ignore", invalid="ignore"):
        arg = np.where(p3 > 0, c0 / (2.0 * p3), 0.0)
    phi = np.arccos(np.clip(arg, -1.0, 1.0)) / 3.0
    out = np.empty(H.shape[:-1])
    for k in range(3):
        out[..., k] = q + 2.0 * p * np.cos(phi - 2.0 * np.pi * k / 3.0)
    return out


def _torus_coords(law: _TorusLaw, H: np.ndarray) -> np.ndarray:
    """Torus point of ``exp(iH)`` from the eigenvalues of the Hermitian H (their order
    does not matter: the acceptance is symmetric under the Weyl group)."""
    if law.lattice == "A" and law.m == 3:
        return _eig3(H)
    w = np.linalg.eigvalsh(H)
    if law.lattice == "A":
        return w
    return w[..., -law.m:]  # eigenvalues come in pairs +-x (and 0 for SO(odd))


#: below this time a proposal is accepted outright (`_torus_accept`)
_TINY_TIME = 1e-30

#: the other images are left out of the acceptance where their total weight is below
#: this fraction of the representative's: r moves by less than 2e-20, far below the
#: law error bound of the route (1e-18 per draw); the compiled kernels use the same rule
_IMAGE_SKIP = 1e-20


def _torus_accept(law: _TorusLaw, x: np.ndarray, t: np.ndarray) -> np.ndarray:
    """The acceptance probability r(x) of `_torus_law` (x (s, m), t (s,)).

    The other images' weights are bounded at once (``|x + g|^2 - |x|^2 >= |g| (|g| -
    2|x|)``, ``|a(x + g)| <= |a(x)| + max_g |a(g)|``); where the bound is below
    `_IMAGE_SKIP` times the representative's weight, r is the representative's term
    ``prod_a sin(a(x)/2) / (a(x)/2)`` alone.
    """
    tiny = t < _TINY_TIME
    if tiny.any():
        # r = 1 - O(|x|^2) with |x|^2 about t dim: 1 in double below 1e-30, where the
        # root products below underflow to 0 / 0
        r = np.ones(len(x))
        if not tiny.all():
            r[~tiny] = _torus_accept(law, x[~tiny], t[~tiny])
        return r
    x = _nearest_representative(x, law.lattice)
    ax = x @ law.roots.T
    gnorm = np.sqrt(np.einsum("im,im->i", law.images, law.images))
    amax = float(np.abs(law.images @ law.roots.T).max())
    rx = np.sqrt(np.einsum("sm,sm->s", x, x))
    pos = gnorm > 0
    best = np.max(-law.c * gnorm[pos] * (gnorm[pos] - 2 * rx[:, None]) / (2 * t[:, None]), axis=1)
    with np.errstate(under="ignore"):
        bound = pos.sum() * np.exp(best) * np.prod((np.abs(ax) + amax) ** 2, axis=-1)
    sines = np.prod(2.0 * np.sin(0.5 * ax), axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.where(ax.all(axis=-1), sines / np.prod(ax, axis=-1), 0.0)
    full = np.flatnonzero(bound >= _IMAGE_SKIP * np.prod(ax * ax, axis=-1))
    if full.size:
        xf, tf = x[full], t[full]
        y = xf[:, None, :] + law.images[None]  # (s, images, m)
        a = y @ law.roots.T  # root values
        expo = np.exp(-law.c * (np.einsum("sim,sim->si", y, y)
                                - np.einsum("sm,sm->s", xf, xf)[:, None]) / (2 * tf[:, None]))
        # s(y) w(y) = prod_a 2 sin(a/2) a * expo: no division (sin(a/2)/(a/2) times
        # a^2); the sines of an image are those of the representative up to law.signs
        w = np.prod(a * a, axis=-1) * expo
        sw = np.prod(a, axis=-1) * expo
        r[full] = sines[full] * (sw @ law.signs) / w.sum(axis=1)
    return r


def _torus_draw_algebra(group, law: _TorusLaw, t: np.ndarray, rng) -> np.ndarray:
    """`_torus_draw` for the algebra route of `_torus_law`: acceptance
    ``max(0, prod_a sinc(a(y) / 2 pi))`` from the eigenvalues y of ``H = -iX``; the
    exponential of the accepted proposals only."""
    out = np.empty(t.shape + (group.N, group.N), group.dtype)
    todo = np.arange(t.size)
    tt = t
    while todo.size:
        Z = rng.standard_normal((todo.size, group.dim))
        u = rng.random(todo.size)
        Z *= np.sqrt(tt)[:, None]
        X = group.algebra(Z)
        y = _torus_coords(law, -1j * X)
        r = np.prod(np.sinc((y @ law.roots.T) / (2 * np.pi)), axis=-1)
        ok = u < r  # never where r <= 0 (the left-out negative part)
        out[todo[ok]] = group.exp_matrix(X[ok])
        todo, tt = todo[~ok], tt[~ok]
    return out


def _torus_draw(group, law: _TorusLaw, t: np.ndarray, rng) -> np.ndarray:
    """One exact heat-kernel sample per entry of t (1-D, each <= law.piece)."""
    if law.algebra:
        return _torus_draw_algebra(group, law, t, rng)
    out = None
    todo = np.arange(t.size)
    tt = t
    while todo.size:
        Z = rng.standard_normal((todo.size, group.dim))
        u = rng.random(todo.size)
        Z *= np.sqrt(tt)[:, None]
        X = group.algebra(Z)
        ok = u <= _torus_accept(law, _torus_coords(law, -1j * X), tt)
        if out is None:
            # round one: every entry at once (the rejected ones are redrawn below)
            out = group.exp_matrix(X)
        elif ok.any():
            out[todo[ok]] = group.exp_matrix(X[ok])
        todo, tt = todo[~ok], tt[~ok]
    return out if out is not None else np.empty(t.shape + (group.N, group.N), group.dtype)


#: total variation to Haar measure below which a long time is drawn as `_mixing_time`
_MIXING_TV = 2.5e-19
#: times up to this many pieces are always drawn in full (every ordinary cell time)
_LONG_PIECES = 64
#: the character sum of `_mixing_time` keeps the terms with c t0 <= this
_MIXING_CUT = 40.0
#: candidate weights `_mixing_time` may list (about 0.3 s); beyond, long times are
#: drawn in full (a stated limit: SU(n), n >= 9, at cell times of thousands of pieces)
_MIXING_MAX_TERMS = 2_000_000


@lru_cache(maxsize=None)
def _mixing_time(family: str, n: int, k: float) -> float:
    """A time T beyond which the heat kernel of ``family(n)`` is within `_MIXING_TV` of
    Haar measure in total variation; so is it at T, and a longer time is drawn as T
    (the two laws then differ by at most ``2 _MIXING_TV``), instead of as ever more
    pieces.

    By Peter-Weyl and Parseval, ``p_t = sum_lam d_lam chi_lam e^{-c_lam t/2}`` has
    ``||p_t - 1||_1^2 <= ||p_t - 1||_2^2 = S(t) = sum_{lam != 0} d_lam^2 e^{-c_lam t}``
    and ``S(t) <= e^{-c_min (t - t0)} S(t0)`` for ``t >= t0`` (c_min the least non-zero
    Casimir), so ``T = t0 + log(S(t0) / (4 _MIXING_TV^2)) / c_min``. ``S(t0)`` at
    ``t0 = 4 / s`` (s the Casimir scale) is the character sum over the irreducibles
    with ``c t0 <= 40`` (Weyl dimensions and Casimirs of `holonomy.groups._weights`);
    the terms beyond add ``e^{-40}`` times a polynomial, a small fraction of S(t0)
    (which only enters through its logarithm).

    References
    ----------
    .. [1] P. Diaconis, "Group Representations in Probability and Statistics", IMS
       Monograph Series 11 (1988), ch. 3, Lemma 1 (the upper bound lemma, from memory).
    """
    from ._weights import _weight_system

    W = _weight_system(family, n, float(k))
    t0 = 4.0 / W.s  # Casimirs scale as s = 1/k or 1/(2k): c t0 is then free of k
    # c(nu) = s (nu^T G nu - rho^T G rho) >= s (g_min |nu|^2 - rho^T G rho)
    g_min = float(np.linalg.eigvalsh(W.G).min())
    q_rho = float(W.rho_x @ W.G @ W.rho_x)
    radius = math.sqrt((_MIXING_CUT / (W.s * t0) + q_rho) / g_min) + 1.0
    if math.comb(int(2 * radius) + 2, W.r) > _MIXING_MAX_TERMS:
        return math.inf  # too many irreducibles to list (SU(n), n >= 9): no cap
    nus = W.irreducibles(radius)
    c = W.casimir(nus)
    d = np.abs(W.dimension(nus))
    nontrivial = c > 1e-9 * max(1.0, float(c.max()))
    c_min = float(c[nontrivial].min())
    S0 = float(np.sum(d[nontrivial] ** 2 * np.exp(-c[nontrivial] * t0)))
    return t0 + math.log(S0 / (4.0 * _MIXING_TV ** 2)) / c_min


def _heat_torus(group, tt, size, rng, draw=None):
    """Exact heat kernel through `_torus_law`, U(n) as centre times SU(n).

    ``draw(base, law, t, rng)``: the sampler of one piece per entry of ``t``
    (`_torus_draw`; the compiled kernels pass theirs, which draws the same numbers).

    U(n) Brownian motion is ``exp(i b / sqrt(k n)) V`` with ``b`` a standard Brownian
    motion along the unit central direction ``i Id / sqrt(k n)`` and V the SU(n)
    Brownian motion of the same metric, independent (the two parts of the algebra are
    orthogonal and commute).
    """
    scalar = tt.ndim == 0
    t1 = np.atleast_1d(tt)
    # u(n) = centre + su(n), orthogonal: the SU(n) part with the same metric
    base = group.special_part if group.family == "U" else group
    law = _torus_law(base.family, base.n, float(base.k)) if base.N > 2 else None
    if law is None:  # U(2): centre times the SU(2) sampler
        U = np.asarray(heat_kernel(base, t1, size, rng=rng), dtype=group.dtype)
    else:
        # beyond the mixing time the law is Haar measure to 2.5e-19: draw that time
        # (shorter times, every ordinary one, are drawn as before)
        ts = t1
        if np.any(t1 > _LONG_PIECES * law.piece):  # only long times pay for the bound
            t_cap = max(_mixing_time(base.family, base.n, float(base.k)),
                        _LONG_PIECES * law.piece)
            ts = np.minimum(t1, t_cap)
        pieces = np.where(ts > 0, np.ceil(ts / law.piece), 0).astype(np.intp)
        U = None
        for i in range(int(pieces.max()) if t1.size else 0):
            cols = np.flatnonzero(pieces > i)
            tp = np.broadcast_to(ts[cols] / pieces[cols], (size, cols.size)).ravel()
            V = (draw or _torus_draw)(base, law, tp, rng).reshape(size, cols.size, group.N, group.N)
            if U is None and cols.size == t1.size:  # every time drawn: no identity fill
                U = V
            elif U is None:
                U = np.empty((size, t1.size, group.N, group.N), dtype=group.dtype)
                U[...] = base.identity(())
                U[:, cols] = V
            else:
                U[:, cols] = U[:, cols] @ V
        if U is None:  # no positive time
            U = base.identity((size, t1.size))
    if group.family == "U":
        beta = rng.standard_normal((size, t1.size)) * np.sqrt(t1 / (group.k * group.n))
        U *= np.exp(1j * beta)[..., None, None]
    return U[:, 0] if scalar else U


def exact_heat_route(group) -> str | None:
    """How `heat_kernel` samples ``group`` exactly in law (None: no exact route).

    ``"gaussian"`` (U(1), SO(2)), ``"su2-angle"`` (SU(2), Sp(1), SO(3), U(2) with its
    centre), ``"torus"`` (U(n) and SU(n) for n >= 3, SO(n) for n >= 4, Sp(n) for
    n >= 2; see `_torus_law`). Every group of `make_group` has one.
    """
    fam, n, N = group.family, group.n, group.N
    if N == 1 or (fam == "SO" and N == 2):
        return "gaussian"
    if (N == 2 and fam in ("SU", "Sp", "U")) or (fam == "SO" and N == 3):
        return "su2-angle"
    base = "SU" if fam == "U" else fam
    if _torus_law(base, n, 1.0) is not None:
        return "torus"
    return None


def heat_kernel_law(group) -> dict:
    """What `heat_kernel` guarantees for ``group``: ``route`` (`exact_heat_route`),
    ``law_error_bound`` (total variation per draw of one piece of time: 0 where the
    route is exact with no truncation, None where no bound is stated), and for the
    torus route ``piece`` (the longest time drawn in one go; longer times are products
    of pieces), ``acceptance`` (``exp(-|rho|^2 piece/2)``, the rejection sampler's rate
    at a full piece, higher for shorter ones) and ``images`` (``"nearest"`` or
    ``"algebra"``, see `_torus_law`). The results of a `heat` run carry this as
    ``provenance.heat_kernel`` (README.md, "Results").
    """
    route = exact_heat_route(group)
    out = {"route": route, "law_error_bound": None}
    if route == "gaussian":
        out["law_error_bound"] = 0.0
    elif route == "su2-angle":
        out["note"] = ("SU(2) angle law: rejection with the images |m| <= 1 for tau < 0.5 "
                       "(the rest carry mass below 1e-17), inverse CDF with quantiles to "
                       "about 1e-14 otherwise")
    elif route == "torus":
        base = group.special_part if group.family == "U" else group
        law = _torus_law(base.family, base.n, float(base.k))
        out.update(law_error_bound=law.bound, piece=law.piece,
                   acceptance=math.exp(-law.rho2 * law.piece / 2),
                   images="algebra" if law.algebra else "nearest")
    return out

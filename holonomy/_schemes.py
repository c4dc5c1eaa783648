"""The regularizations: how a scheme turns Gaussian cell (or interval) noise into links.

Every scheme reads the same per-cell noise X_c (d components, each N(0, lambda mu(c)))
and differs only in how links are formed (see :mod:`discretize._axial` for the link
convention):

``linear``
    The continuum axial connection: the link at height y is exp(-S(y)), S the signed
    sum of the cell noises between the reference line and y. Links are exponentials of
    Gaussian algebra elements, so this scheme has an exact Wick expansion.
``gauss``
    Lattice axial gauge with plaquette variables Q_c = exp(X_c); links are ordered
    products of plaquettes along the column. One plaquette has
    E[tr Q]/dim = f(s), the exponential moment of one Gaussian, which differs from the
    heat kernel exp(-c s/2) at order s^2 per plaquette.
``heat``
    Plaquettes drawn exactly from the heat kernel at time s = lambda mu(c) (exact in
    law for U(1), where Q_c = exp(X_c) is already heat-kernel distributed, and for every
    other group by the route :func:`holonomy.groups.exact_heat_route` names). Products of
    independent heat-kernel variables are heat-kernel variables of the summed time, so
    interval products can be drawn directly (perimeter-only path) and lattice loops are
    exact at every spacing.
``wilson``
    Plaquettes from the single-plaquette Wilson law, density proportional to
    exp((k / s) Re tr Q) against Haar measure: von Mises angles for U(1) (concentration
    k / s) and the SU(2) heat-bath law for a_0 = tr Q / 2, density proportional to
    sqrt(1 - a_0^2) exp(beta a_0), beta = 2 k / s.

A scheme is one class registered by name in :data:`SCHEMES` (:func:`register_scheme`):
how it forms links, which groups it supports, the exact lattice value of what it
samples, its expected convergence rate and its series route. The registry is the only
list of schemes: the spec, the references, the study and the command line read it.
The base class states the contract.

References
----------
.. [1] Wilson, K. G. (1974). "Confinement of quarks." Phys. Rev. D 10, 2445-2459.
.. [2] Creutz, M. (1980). "Monte Carlo study of quantized SU(2) gauge theory."
   Phys. Rev. D 21, 2308-2315 (heat-bath for SU(2)).
.. [3] Kennedy, A. D. and Pendleton, B. J. (1985). "Improved heatbath method for Monte
   Carlo calculations in lattice gauge theories." Phys. Lett. B 156, 393-399.
.. [4] Best, D. J. and Fisher, N. I. (1979). "Efficient simulation of the von Mises
   distribution." Appl. Statist. 28, 152-157.
.. [5] Driver, B. K. (1989). "YM2: continuum expectations, lattice convergence, and
   lassos." Commun. Math. Phys. 123, 575-616.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from noise import ArgumentError

from ._continuum_series import exact_series
from ._lattice_series import gauss_series, lattice_series, wilson_series
from .exact import (NOT_AVAILABLE, LatticeValue, gaussian_scheme_value, heat_correlator_value,
                    heat_lattice_value, wilson_action_value, wilson_correlator_value)

__all__ = ["Scheme", "SCHEMES", "register_scheme", "get_scheme", "study_schemes",
           "EXPECTED_RATES", "LinearScheme", "GaussScheme", "HeatScheme", "WilsonScheme"]


class Scheme:
    """Base class of the regularizations.

    Contract for subclasses:

    1. ``name`` is the registered name; ``kind`` is ``"algebra"`` when links are
       exponentials of sums of the Gaussian noise (then nothing else is needed) or
       ``"group"`` when links are ordered products of plaquette variables.
    2. A ``"group"`` scheme implements ``_plaquettes_impl(kernel, noise, variances,
       rng, size)``: ``noise`` has shape (size, m, d) (cell noise, variance ``variances``
       of shape (m,) per component) and the result is (samples, m) plaquette variables
       stored as the kernel stores elements (:mod:`holonomy._kernels`; the group is
       ``kernel.group``). It may draw extra randomness from ``rng`` only.
    3. ``perimeter`` is True when the product of a column interval's plaquettes can be
       drawn directly from the interval's summed noise and variance; then
       ``_intervals_impl`` has the same signature and returns those products.
    4. ``check(group)`` raises ValueError if the scheme does not support ``group``.
    5. ``reads_noise(group)`` is False when the interval variables do not depend on the
       noise (then the perimeter path does not draw it, and ``noise`` is None).
    6. ``lattice_value(problem, i)`` is the exact value, in law, of what the scheme
       samples for loop ``i`` of a lattice problem (:class:`holonomy.LatticeProblem`),
       as a :class:`holonomy.exact.LatticeValue`; ``value`` None with a note where none
       is known (the default). Never another scheme's value.
    7. ``rate`` is the exponent p of the bias O(h^p) for a fixed loop (None when there is
       none or it is unknown; ``rate_note`` says which, for the study's table).
    8. ``series(problem, i, order, exact=False)`` is the perturbative series in the
       coupling of the same quantity as ``lattice_value`` (a
       :class:`holonomy.SeriesResult`; the default raises NotImplementedError with the
       reason), and ``series_expands(problem)`` a short label saying what it expands
       (``"linear lattice, spacing 0.25"``, ``"heat (continuum, as snapped)"``).
       ``series_route`` is the name of the scheme whose series that is (itself), or
       None when the scheme has none.
    9. ``in_study`` is True when ``whitegauge study`` runs the scheme by default.
    10. ``noise_only`` is True when the plaquettes are a function of the cell noise
        alone (no extra randomness): two such schemes on one noise field are paired
        sample by sample, and a study measures one's error against the other's exact
        value through their difference. Each plaquette must then be a function of its
        own cell's noise: the dense path may form them slab by slab of grid columns
        (``holonomy._sampling._slab_variables``).
    11. ``formal`` is True when the scheme's links are exponentials of the Gaussian
        noise (per interval for ``kind == "algebra"``, per cell otherwise), so its
        expectations continue to signed variances and a signed density has a formal
        Monte Carlo estimate by complex rotation (:mod:`holonomy._formal_estimate`).
    12. ``correlator_value(problem, indices)`` is the exact ``E[prod_i W(i)]`` of the
        loops ``indices`` (two or more) under what the scheme samples, like
        ``lattice_value``; None with a note by default.
    """

    name: str = ""
    kind: str = "group"
    perimeter: bool = False
    rate: float | None = None
    rate_note: str = "unknown"
    series_route: str | None = None
    in_study: bool = False
    noise_only: bool = False
    formal: bool = False

    def check(self, group) -> None:
        return None

    def lattice_value(self, problem, i: int) -> LatticeValue:
        return LatticeValue(None, None, f"{NOT_AVAILABLE} (no exact value is known for "
                            f"the scheme {self.name!r})")

    def series(self, problem, i: int, order: int, *, exact: bool = False):
        raise NotImplementedError(f"no perturbative series is known for the scheme "
                                  f"{self.name!r}")

    def series_expands(self, problem) -> str:
        return f"{self.name} lattice, spacing {problem.field.spacing:g}"

    def correlator_value(self, problem, indices) -> LatticeValue:
        return LatticeValue(None, None, f"{NOT_AVAILABLE} (no exact correlator is known "
                            f"for the scheme {self.name!r})")

    def reads_noise(self, group) -> bool:
        return True

    def plaquettes(self, kernel, noise, variances, rng):
        return self._plaquettes_impl(kernel, noise, np.asarray(variances, float), rng,
                                     noise.shape[0])

    def intervals(self, kernel, noise, variances, rng, size):
        if not self.perimeter:
            raise ValueError(
                f"`path`='perimeter' is not available for scheme {self.name!r}; "
                "use path='dense'."
            )
        return self._intervals_impl(kernel, noise, np.asarray(variances, float), rng, size)

    def _plaquettes_impl(self, kernel, noise, variances, rng, size):
        raise NotImplementedError

    def _intervals_impl(self, kernel, noise, variances, rng, size):
        raise NotImplementedError


def _is_u1(group) -> bool:
    return group.family == "U" and group.n == 1


def _abelian_or(problem, i: int, closed_form: str) -> LatticeValue:
    """U(1) (abelian: exact in law, the heat kernel's value) or the scheme's closed form."""
    if _is_u1(problem.group):
        return heat_lattice_value(problem, i)
    return gaussian_scheme_value(problem, i, closed_form)


def _abelian_correlator(problem, indices, name: str) -> LatticeValue:
    """U(1): the heat kernel's correlator (every scheme is exact in law); else none."""
    if _is_u1(problem.group):
        return heat_correlator_value(problem, indices)
    return LatticeValue(None, None, f"{NOT_AVAILABLE} (no exact correlator is known for "
                        f"the scheme {name!r} beyond U(1))")


class LinearScheme(Scheme):
    """Links exp(-S(y)) of the continuum axial connection (exact Wick expansion).

    Rate 1: each of the a / h columns contributes one exponential of its whole column
    sum of variance lambda h b, whose error against the heat kernel is O((h b)^2)
    (see :mod:`holonomy.experiment._study`).
    """

    name = "linear"
    kind = "algebra"
    perimeter = True
    rate = 1.0
    in_study = True
    noise_only = True

    series_route = "linear"
    formal = True

    def lattice_value(self, problem, i: int) -> LatticeValue:
        return _abelian_or(problem, i, "linear")

    def series(self, problem, i: int, order: int, *, exact: bool = False):
        return lattice_series(problem, i, order, exact=exact)

    def correlator_value(self, problem, indices) -> LatticeValue:
        return _abelian_correlator(problem, indices, self.name)


class GaussScheme(Scheme):
    """Plaquettes Q = exp(X): one Gaussian exponential per cell."""

    name = "gauss"
    rate = 2.0   # O(s^2) per plaquette times O(h^-2) plaquettes
    in_study = True
    noise_only = True

    series_route = "gauss"
    formal = True

    def lattice_value(self, problem, i: int) -> LatticeValue:
        return _abelian_or(problem, i, "gauss")

    def series(self, problem, i: int, order: int, *, exact: bool = False):
        return gauss_series(problem, i, order, exact=exact)

    def correlator_value(self, problem, indices) -> LatticeValue:
        return _abelian_correlator(problem, indices, self.name)

    def _plaquettes_impl(self, kernel, noise, variances, rng, size):
        return kernel.exp(noise)


class HeatScheme(Scheme):
    """Plaquettes drawn from the heat kernel at time lambda mu(cell)."""

    name = "heat"
    perimeter = True
    rate_note = "none (exact)"   # exact for lattice loops at every spacing: no bias
    in_study = True

    series_route = "heat"

    def lattice_value(self, problem, i: int) -> LatticeValue:
        # every group's kernel is drawn exactly in law (holonomy.groups.exact_heat_route)
        return heat_lattice_value(problem, i)

    def series(self, problem, i: int, order: int, *, exact: bool = False):
        """The continuum series of the loop as snapped (exact for lattice loops): the
        Taylor coefficients of the exact evaluation (:func:`holonomy.exact_series`)."""
        res = exact_series(problem.group, problem.rep, problem.lattice_loops[i], order,
                           area=problem.field.area)
        if res is None:
            raise NotImplementedError("no exact route applies to the loop as snapped")
        return res

    def series_expands(self, problem) -> str:
        return "heat (continuum, as snapped)"

    def correlator_value(self, problem, indices) -> LatticeValue:
        return heat_correlator_value(problem, indices)

    def reads_noise(self, group) -> bool:
        return _is_u1(group)

    def _plaquettes_impl(self, kernel, noise, variances, rng, size):
        if _is_u1(kernel.group):
            # the U(1) heat kernel is the law of exp(X) itself (wrapped Gaussian)
            return kernel.exp(noise)
        return kernel.heat(variances, size, rng)

    _intervals_impl = _plaquettes_impl


def _von_mises(kappa: np.ndarray, size: int, rng) -> np.ndarray:
    """Von Mises angles with concentration ``kappa`` (shape (m,)), output (size, m)."""
    kappa = np.broadcast_to(kappa, (size, kappa.size))
    out = np.zeros(kappa.shape)
    finite = np.isfinite(kappa)
    out[finite] = rng.vonmises(0.0, kappa[finite])
    return out


def _su2_heat_bath_a0(beta: np.ndarray, size: int, rng) -> np.ndarray:
    """Draw a_0 in [-1, 1] with density proportional to sqrt(1 - a^2) exp(beta a).

    For beta >= 2 the Kennedy-Pendleton proposal delta = 1 - a_0 ~ Gamma(3/2, 1/beta)
    accepted with probability sqrt(1 - delta/2) (delta <= 2); for small beta a proposal
    from the semicircle law (the Haar marginal) accepted with probability
    exp(beta (a_0 - 1)). Both are exact rejection samplers.

    References
    ----------
    .. [1] Kennedy, A. D. and Pendleton, B. J. (1985). Phys. Lett. B 156, 393-399.
    .. [2] Creutz, M. (1980). Phys. Rev. D 21, 2308-2315.
    """
    beta = np.broadcast_to(np.asarray(beta, float), (size, np.size(beta))).ravel()
    out = np.ones(beta.size)
    todo = np.nonzero(np.isfinite(beta))[0]
    while todo.size:
        b = beta[todo]
        big = b >= 2.0
        a = np.empty(todo.size)
        ok = np.empty(todo.size, bool)
        if big.any():
            delta = rng.gamma(1.5, 1.0 / b[big])
            u = rng.random(delta.size)
            ok[big] = (delta <= 2.0) & (u * u <= 1.0 - np.minimum(delta, 2.0) / 2.0)
            a[big] = 1.0 - delta
        small = ~big
        if small.any():
            # semicircle on [-1, 1]: a = cos(theta) with theta from density sin^2
            # equivalently a = 2 * Beta(3/2, 3/2) - 1
            prop = 2.0 * rng.beta(1.5, 1.5, size=int(small.sum())) - 1.0
            u = rng.random(prop.size)
            ok[small] = u <= np.exp(b[small] * (prop - 1.0))
            a[small] = prop
        out[todo[ok]] = a[ok]
        todo = todo[~ok]
    return out.reshape(size, -1)


class WilsonScheme(Scheme):
    """Plaquettes from the single-plaquette Wilson law (U(1) and SU(2) only)."""

    name = "wilson"
    rate = 2.0   # w(s) = exp(-c s / 2) (1 + O(s^2)): the gauss argument

    def check(self, group) -> None:
        if not (_is_u1(group) or (group.family == "SU" and group.n == 2)):
            raise ArgumentError(
                "scheme", f"got 'wilson' for {group.family}({group.n}); the scheme "
                "supports U(1) and SU(2) only",
                f"scheme 'wilson' supports U(1) and SU(2) only, got "
                f"{group.family}({group.n}); use 'heat', 'gauss' or 'linear'."
            )

    series_route = "wilson"

    def lattice_value(self, problem, i: int) -> LatticeValue:
        return wilson_action_value(problem, i)

    def series(self, problem, i: int, order: int, *, exact: bool = False):
        """The weak-coupling expansion of the lattice value (asymptotic;
        :func:`holonomy.wilson_series`)."""
        return wilson_series(problem, i, order)

    def series_expands(self, problem) -> str:
        return (f"wilson lattice, spacing {problem.field.spacing:g} (weak-coupling "
                "expansion, asymptotic)")

    def correlator_value(self, problem, indices) -> LatticeValue:
        return wilson_correlator_value(problem, indices)

    def reads_noise(self, group) -> bool:
        return False  # plaquettes from the Wilson law alone (the cell noise is not read)

    def _plaquettes_impl(self, kernel, noise, variances, rng, size):
        m = variances.size
        group = kernel.group
        k = group.k
        with np.errstate(divide="ignore", over="ignore"):  # a subnormal variance: inf
            conc = np.where(variances > 0, k / np.where(variances > 0, variances, 1), np.inf)
        if _is_u1(group):
            # X = i / sqrt(k) is the unit basis vector: exp(c X) = exp(i c / sqrt(k))
            theta = _von_mises(conc, size, rng)
            return kernel.exp(theta[..., None] * np.sqrt(k))
        a0 = _su2_heat_bath_a0(2.0 * conc, size, rng)
        axis = rng.standard_normal((size, m, 3))
        axis /= np.linalg.norm(axis, axis=-1, keepdims=True)
        # a unit coordinate vector c gives X with X^2 = -Id / (2k): exp(r X) has
        # a_0 = cos(r / sqrt(2k))
        theta = np.arccos(np.clip(a0, -1.0, 1.0))
        return kernel.exp(axis * (theta * np.sqrt(2.0 * k))[..., None])


#: the registry: name -> scheme class, in registration order (the only list of schemes)
SCHEMES: dict[str, type[Scheme]] = {}


def register_scheme(cls: type[Scheme]) -> type[Scheme]:
    """Register a :class:`Scheme` subclass under its ``name`` (usable as a decorator)."""
    if not (isinstance(cls, type) and issubclass(cls, Scheme)) or not cls.name:
        raise TypeError(f"`cls` must be a Scheme subclass with a name, got {cls!r}.")
    SCHEMES[cls.name] = cls
    return cls


for _cls in (HeatScheme, LinearScheme, GaussScheme, WilsonScheme):
    register_scheme(_cls)


def get_scheme(scheme) -> Scheme:
    """Return a scheme instance from a registered name or a :class:`Scheme` subclass."""
    if isinstance(scheme, Scheme):
        return scheme
    if isinstance(scheme, type) and issubclass(scheme, Scheme):
        return scheme()
    if isinstance(scheme, str) and scheme.lower() in SCHEMES:
        return SCHEMES[scheme.lower()]()
    raise ArgumentError(
        "scheme", f"got {scheme!r}; expected one of {', '.join(SCHEMES)}",
        f"`scheme` must be one of {sorted(SCHEMES)} or a Scheme subclass, got {scheme!r}."
    )


def study_schemes() -> tuple[str, ...]:
    """The schemes ``whitegauge study`` runs by default (``in_study``), in registry order."""
    return tuple(name for name, cls in SCHEMES.items() if cls.in_study)


class _Rates(Mapping):
    """name -> expected rate, read live from the registry (``EXPECTED_RATES``)."""

    def __getitem__(self, name: str) -> float | None:
        return SCHEMES[name].rate

    def __iter__(self):
        return iter(SCHEMES)

    def __len__(self) -> int:
        return len(SCHEMES)

    def __repr__(self) -> str:
        return repr(dict(self))


#: exponent p of the bias O(h^p) of each registered scheme, read from the classes
EXPECTED_RATES: Mapping[str, float | None] = _Rates()

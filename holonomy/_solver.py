"""Ordered products of group elements along a path (the ordered-product solver).

Convention (part of the contract, see DEVELOPERS.md): a path is cut into steps
``1, ..., m`` in the order it is traversed, step ``k`` carries a factor ``F_k`` in the
group, and the holonomy is read in traversal order, left to right,

    U = F_1 F_2 ... F_m.

For a smooth connection ``A(t)`` (a Lie-algebra valued function) this is the solution
at the end of the path of the right-multiplied transport equation

    dU/dt = U(t) A(t),    U(t_0) = Id,

the same side as the Brownian-motion convention ``U_{t+dt} = U_t exp(dX)``. A step
traversed backwards (direction ``-1``) contributes the inverse of its factor, in place.

The factors are formed by a *scheme* (a small class registered by name in
`PRODUCT_SCHEMES`) and multiplied by a pairwise (binary-tree) reduction over the steps,
so the Python-level work is ``O(log m)`` batched matrix products (for 2 x 2 factors and
large batches a loop over the steps is used instead: it measured faster there).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import Any, Callable

import numpy as np

from .groups._expmap import expm_general

__all__ = [
    "ProductScheme",
    "ExpEuler",
    "Magnus2",
    "Magnus4",
    "ItoEuler",
    "PRODUCT_SCHEMES",
    "ProductResult",
    "ordered_product",
    "tree_product",
    "quaternion_mul",
    "quaternion_mul_components",
    "quaternion_product_components",
    "complex_matmul_components",
    "complex_product_components",
    "MatrixStorage",
    "QuaternionStorage",
    "storage_for",
]


# --------------------------------------------------------------------------- results


@dataclass
class ProductResult:
    """Result of `ordered_product`.

    Attributes
    ----------
    value : ndarray, shape (samples, N, N)
        The ordered products ``U = F_1 F_2 ... F_m``, one per sample.
    drift : float
        ``group.drift(value)``: the distance ``||U^* U - I||`` of the returned value from
        the group (the largest over the samples). Rounding level (about 1e-15 times the
        number of steps) for group-preserving schemes; of order the step for
        ``ito-euler``. With ``complexified=True``: the defect of the holomorphic
        defining relations of the complexified group (``|det U - 1|`` for SL(N, C),
        also ``||U^T U - I||`` for SO(N, C), ``||U^T J U - J||`` for Sp(2n, C)), and
        None for GL(N, C), which has none.
    method : str
        Name of the scheme that formed the factors, or ``"factors"`` when group factors
        were given directly.
    steps : int
        Number of steps ``m`` (factors per sample).
    reprojected : bool
        True if `value` was mapped back to the group with ``group.project`` (then
        `drift` is the drift after projection, and `drift_before_projection` the drift
        before it).
    drift_before_projection : float or None
        Drift of the raw product before projection; None when nothing was projected.
    complexified : bool
        True when the product was computed in the complexified group.
    """

    value: np.ndarray
    drift: float | None
    method: str
    steps: int
    reprojected: bool = False
    drift_before_projection: float | None = None
    complexified: bool = False


# --------------------------------------------------------------------------- products


def _mul(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Batched matrix product ``a @ b`` over the leading axes."""
    if a.shape[-1] == 2:
        # For 2 x 2 blocks numpy's matmul loops over the batch one tiny matrix at a
        # time; the explicit entry formulas are fully vectorized and several times
        # faster (measured in benchmarks/bench_products.py).
        a00, a01, a10, a11 = a[..., 0, 0], a[..., 0, 1], a[..., 1, 0], a[..., 1, 1]
        b00, b01, b10, b11 = b[..., 0, 0], b[..., 0, 1], b[..., 1, 0], b[..., 1, 1]
        out = np.empty(np.broadcast_shapes(a.shape, b.shape), np.result_type(a, b))
        out[..., 0, 0] = a00 * b00 + a01 * b10
        out[..., 0, 1] = a00 * b01 + a01 * b11
        out[..., 1, 0] = a10 * b00 + a11 * b10
        out[..., 1, 1] = a10 * b01 + a11 * b11
        return out
    return np.matmul(a, b)


def tree_product(factors: np.ndarray, axis: int = -3) -> np.ndarray:
    """Ordered product ``F_1 F_2 ... F_m`` along one axis by pairwise reduction.

    Neighbouring factors are multiplied in pairs, ``(F_1 F_2)(F_3 F_4)...``, and the
    pairs again, so ``m - 1`` matrix products are done in ``ceil(log2 m)`` batched
    calls; the order of the factors is kept (matrix products are associative, not
    commutative).

    Parameters
    ----------
    factors : ndarray, shape (..., m, N, N)
        The factors, in the order they are multiplied (left to right).
    axis : int
        The step axis; must be one of the axes before the last two. Default ``-3``.

    Returns
    -------
    ndarray, shape (..., N, N)
        The ordered product (the step axis removed).
    """
    f = np.moveaxis(np.asarray(factors), axis, -3)
    return _pairwise(f, _mul, f.ndim - 3)


def _pairwise(f: np.ndarray, mul, axis: int) -> np.ndarray:
    """Pairwise reduction of ``f`` over the (non-negative) step ``axis`` with ``mul``:
    the one product engine of `tree_product` and the storage classes."""
    m = f.shape[axis]
    if m == 0:
        raise ValueError("`factors` must have at least one step.")
    head = (slice(None),) * axis
    while m > 1:
        paired = mul(f[head + (slice(0, m - 1, 2),)], f[head + (slice(1, m, 2),)])
        # Odd count: the last factor is carried to the next level (keeps the order;
        # measured a little faster than folding it into the last pair).
        f = np.concatenate([paired, f[head + (slice(m - 1, m),)]], axis=axis) if m % 2 \
            else paired
        m = f.shape[axis]
    return f[head + (0,)]


def _sequential_product(factors: np.ndarray) -> np.ndarray:
    """Left-to-right product by a loop over the steps (reference and benchmark)."""
    u = factors[..., 0, :, :]
    for k in range(1, factors.shape[-3]):
        u = _mul(u, factors[..., k, :, :])
    return u


# Batch size from which a plain loop over the steps beats the tree for 2 x 2 factors:
# the loop's accumulator (batch, 2, 2) stays in cache, while the tree's first levels
# stream the whole array through memory. Measured with benchmarks/bench_products.py
# (tree about 1.2-1.6x slower at 4096 samples, 5-300x faster at <= 64 samples); for
# N >= 3 the tree was faster at every batch size tried (1.2-45x).
_SEQUENTIAL_MIN_BATCH_2x2 = 1024


def _ordered(factors: np.ndarray) -> np.ndarray:
    """Product ``F_1 ... F_m`` over axis -3 by the faster of the two reductions."""
    batch = int(np.prod(factors.shape[:-3]))
    if factors.shape[-1] == 2 and batch >= _SEQUENTIAL_MIN_BATCH_2x2:
        return _sequential_product(factors)
    return tree_product(factors)


# --------------------------------------------------------------------------- storage


def _hamilton(a, b, out) -> None:
    """Hamilton product of the components ``a = (a_0, a_1, a_2, a_3)`` and ``b`` into
    ``out[0], ..., out[3]`` (the one formula of `quaternion_mul` and
    `quaternion_mul_components`, so both round alike)."""
    a0, a1, a2, a3 = a
    b0, b1, b2, b3 = b
    o0, o1, o2, o3 = out
    t, t2 = np.empty(o0.shape), np.empty(o0.shape)
    mul, sub = np.multiply, np.subtract
    # (a0 + i a.s)(b0 + i b.s) = a0 b0 - a.b + i (a0 b + b0 a - a x b).s, evaluated as
    # written (left to right), with two buffers instead of a temporary per operation
    mul(a0, b0, out=o0)
    for x, y in ((a1, b1), (a2, b2), (a3, b3)):
        sub(o0, mul(x, y, out=t), out=o0)
    for o, (x0, y0, x1, y1, x2, y2) in ((o1, (b1, a1, a2, b3, a3, b2)),
                                        (o2, (b2, a2, a3, b1, a1, b3)),
                                        (o3, (b3, a3, a1, b2, a2, b1))):
        # o = a0 x0 + b0 y0 - (x1 y1 - x2 y2)
        mul(a0, x0, out=o)
        np.add(o, mul(b0, y0, out=t), out=o)
        sub(mul(x1, y1, out=t), mul(x2, y2, out=t2), out=t)
        sub(o, t, out=o)


def quaternion_mul(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Hamilton product of unit quaternions ``(..., 4)`` standing for SU(2) matrices
    ``a_0 Id + i (a_1 sigma_1 + a_2 sigma_2 + a_3 sigma_3)`` (see `QuaternionStorage`)."""
    out = np.empty(np.broadcast_shapes(a.shape, b.shape))
    _hamilton(np.moveaxis(a, -1, 0), np.moveaxis(b, -1, 0), np.moveaxis(out, -1, 0))
    return out


def quaternion_mul_components(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """`quaternion_mul` for quaternions stored component-first, ``(4, ...)``: every
    component a contiguous array, so each operation streams memory (bitwise the same
    numbers as `quaternion_mul`)."""
    out = np.empty(np.broadcast_shapes(a.shape, b.shape))
    _hamilton(a, b, out)
    return out


def quaternion_product_components(factors: np.ndarray) -> np.ndarray:
    """Ordered product over axis 1 of component-first quaternions ``(4, m, ...)``: the
    pairwise reduction of `QuaternionStorage.product`, bitwise the same numbers."""
    return _pairwise(factors, quaternion_mul_components, 1)


def complex_matmul_components(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Products of complex N x N matrices stored as real and imaginary parts,
    component-first: ``a``, ``b`` of shape ``(2, N, N, ...)``; the loop runs over the
    N inner terms, every operation over whole arrays (no batch of tiny matrices)."""
    ar, ai = a
    br, bi = b
    out = np.empty(np.broadcast_shapes(a.shape, b.shape))
    cr, ci = out
    for k in range(a.shape[1]):
        xr, xi, yr, yi = ar[:, k, None], ai[:, k, None], br[None, k], bi[None, k]
        if k == 0:
            np.subtract(xr * yr, xi * yi, out=cr)
            np.add(xr * yi, xi * yr, out=ci)
        else:
            cr += xr * yr - xi * yi
            ci += xr * yi + xi * yr
    return out


def complex_product_components(factors: np.ndarray) -> np.ndarray:
    """Ordered product over axis 3 of ``(2, N, N, m, ...)`` component-first complex
    matrices (see `complex_matmul_components`), by the pairwise reduction."""
    return _pairwise(factors, complex_matmul_components, 3)


class MatrixStorage:
    """Group elements stored as ``(..., N, N)`` matrices; products by `_mul`.

    The solver's storage of elements: the sampler's ordered products (links along
    columns, holonomies along loops) all run through `mul` and `product`, so there is
    one product engine. `QuaternionStorage` stores SU(2) and Sp(1) elements as unit
    quaternions instead (4 reals in place of 4 complex entries).
    """

    elem_ndim = 2

    def __init__(self, group):
        self.group = group

    def mul(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        return _mul(a, b)

    def dagger(self, a: np.ndarray) -> np.ndarray:
        return np.conj(np.swapaxes(a, -1, -2))

    def identity(self, shape: tuple, dtype=complex) -> np.ndarray:
        n = self.group.N
        return np.broadcast_to(np.eye(n, dtype=dtype), shape + (n, n)).copy()

    def to_matrices(self, a: np.ndarray) -> np.ndarray:
        return a

    def product(self, factors: np.ndarray) -> np.ndarray:
        """Ordered product ``F_1 F_2 ... F_m`` over the step axis (axis 1) by
        `tree_product` (for the sampler's (samples, steps, N, N) layout the tree beat
        the loop over steps at every batch size measured, 2 x 2 included:
        benchmarks/bench_products.py, ``product_step``)."""
        return tree_product(factors, axis=1)


class QuaternionStorage(MatrixStorage):
    """SU(2) / Sp(1) elements as unit quaternions ``(..., 4)`` = ``(a_0, a_1, a_2, a_3)``
    for ``a_0 Id + i (a_1 sigma_1 + a_2 sigma_2 + a_3 sigma_3)``.

    References
    ----------
    .. [1] Hamilton, W. R. (1844). "On quaternions." Philos. Mag. 25, 489-495; Hall,
       B. C. (2015). "Lie Groups, Lie Algebras, and Representations", 2nd ed.,
       Springer, section 1.3.3 (SU(2) and the unit quaternions).
    """

    elem_ndim = 1

    def mul(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        return quaternion_mul(a, b)

    def dagger(self, a: np.ndarray) -> np.ndarray:
        out = -a
        out[..., 0] = a[..., 0]
        return out

    def identity(self, shape: tuple, dtype=float) -> np.ndarray:
        out = np.zeros(shape + (4,))
        out[..., 0] = 1.0
        return out

    def to_matrices(self, a: np.ndarray) -> np.ndarray:
        out = np.empty(a.shape[:-1] + (2, 2), complex)
        out[..., 0, 0] = a[..., 0] + 1j * a[..., 3]
        out[..., 0, 1] = a[..., 2] + 1j * a[..., 1]
        out[..., 1, 0] = -a[..., 2] + 1j * a[..., 1]
        out[..., 1, 1] = a[..., 0] - 1j * a[..., 3]
        return out

    def product(self, factors: np.ndarray) -> np.ndarray:
        """Pairwise reduction over axis 1, as `tree_product` for matrices."""
        return _pairwise(factors, quaternion_mul, 1)


def storage_for(group) -> MatrixStorage:
    """The fastest storage for ``group``: quaternions for SU(2) and Sp(1)."""
    if group.N == 2 and group.family in ("SU", "Sp"):
        return QuaternionStorage(group)
    return MatrixStorage(group)


# --------------------------------------------------------------------------- schemes


class ProductScheme:
    """Base class of the ordered-product schemes.

    A scheme turns the data of each step, either a Lie-algebra increment or the values
    of a smooth connection at the scheme's quadrature nodes, into the step's factor.
    The base class applies the direction flags; `ordered_product` validates the input
    and multiplies the factors (`tree_product`, or a loop for large 2 x 2 batches).

    Contract for subclasses:

    1. Set the class attributes ``name`` (the key in `PRODUCT_SCHEMES`), ``order`` (the
       global order of accuracy on a smooth connection sampled at the scheme's own
       ``nodes``), ``group_preserving`` (whether every factor lies exactly on the group)
       and ``takes_increments`` (whether precomputed Lie-algebra increments are
       accepted as input).
    2. Set ``nodes``: a tuple of quadrature nodes ``c_i`` in ``[0, 1]``; on the step
       ``[t_k, t_k + h_k]`` the connection is sampled at ``t_k + c_i h_k``.
    3. Implement ``_generator_impl(self, values, h)``: from the connection values
       ``values`` of shape ``(samples, steps, q, N, N)`` (``q = len(nodes)``, algebra
       matrices) and the step lengths ``h`` of shape ``(steps,)``, return the
       generator ``Omega_k`` of each step, shape ``(samples, steps, N, N)``, an element
       of the Lie algebra. It must be odd under reversal: the reversed step has
       generator ``-Omega_k``.
    4. Optionally override ``_factor_impl(self, group, omega)``, which maps generators
       (already sign-flipped for reversed steps) to factors. The default,
       ``group.exp(omega, coords=False)``, keeps the factors on the group, and the
       reversed factor ``exp(-Omega)`` is exactly the inverse.

    Subclassing
    -----------
    A new scheme is a class with these attributes and one method, added to
    `PRODUCT_SCHEMES` (or passed as ``method=`` directly)::

        class Trapezoid(ProductScheme):
            name, order, nodes = "trapezoid", 2, (0.0, 1.0)
            group_preserving, takes_increments = True, False

            def _generator_impl(self, values, h):
                return 0.5 * h[:, None, None] * (values[:, :, 0] + values[:, :, 1])
    """

    name: str = ""
    order: int = 0
    nodes: tuple[float, ...] = ()
    group_preserving: bool = True
    takes_increments: bool = False

    def sample_times(self, nodes: np.ndarray) -> np.ndarray:
        """Times at which the connection is sampled, shape ``(steps, q)``.

        Parameters
        ----------
        nodes : array_like, shape (steps + 1,)
            Increasing step boundaries ``t_0 < t_1 < ... < t_m``.
        """
        t = np.asarray(nodes, dtype=float)
        h = np.diff(t)
        return t[:-1, None] + h[:, None] * np.asarray(self.nodes, dtype=float)[None, :]

    def _generator_impl(self, values: np.ndarray, h: np.ndarray) -> np.ndarray:
        raise NotImplementedError(
            f"{type(self).__name__} must implement _generator_impl (contract item 3)."
        )

    def _factor_impl(self, group: Any, omega: np.ndarray) -> np.ndarray:
        # coords=False: omega is always matrices (a zero SO(3) block is ambiguous).
        return group.exp(omega, coords=False)

    def factors(
        self, group: Any, omega: np.ndarray, directions: np.ndarray | None,
        complexified: bool = False,
    ) -> np.ndarray:
        """Step factors from generators, reversed steps sign-flipped first.

        With `complexified`, the generators are complex (in ``g + i g``) and the
        exponential schemes use `expm_general` (the group's routes assume a compact
        algebra).
        """
        if directions is not None:
            omega = omega * directions[..., None, None]
        if complexified and self.group_preserving:
            return expm_general(omega)
        return self._factor_impl(group, omega)


class ExpEuler(ProductScheme):
    r"""Product of exponentials of the increments, ``F_k = exp(dA_k)``.

    This is the Magnus expansion of each step truncated after its first term,
    ``Omega_k = integral of A over the step``. The next term of the expansion (for
    ``dU/dt = U A``) is ``(1/2) int_{t_k}^{t_k+h} dt int_{t_k}^{t} ds [A(s), A(t)]
    = (h^3 / 12) [A, A'] + O(h^4)`` [1]_, [3]_, so:

    - with increments equal to the exact integrals ``dA_k = int_step A dt`` (or any
      quadrature of order >= 2 of them), the local error is ``O(h^3)`` and the global
      error ``O(h^2)``: **order 2**. This is the order tested.
    - with a connection sampled at the left end of each step (what this scheme does when
      given ``connection=``, ``nodes = (0,)``, ``Omega_k = h A(t_k)``), the quadrature
      error ``(h^2 / 2) A'`` dominates: **order 1**. Also tested.

    For white-noise (Brownian) increments, ``exp-euler`` samples the Brownian motion of
    the group exactly in law at the nodes when the group is abelian, and is the
    geodesic random-walk approximation otherwise.

    References
    ----------
    .. [1] W. Magnus, "On the exponential solution of differential equations for a
       linear operator", Comm. Pure Appl. Math. 7 (1954) 649-673.
    .. [2] A. Iserles and S. P. Norsett, "On the solution of linear differential
       equations in Lie groups", Phil. Trans. R. Soc. A 357 (1999) 983-1019.
    .. [3] S. Blanes, F. Casas, J. A. Oteo and J. Ros, "The Magnus expansion and some of
       its applications", Physics Reports 470 (2009) 151-238 (the section on the
       first terms of the expansion; section number not checked).
    """

    name = "exp-euler"
    order = 1  # with the left-point sampling of `connection=`; 2 with exact increments
    nodes = (0.0,)
    group_preserving = True
    takes_increments = True

    def _generator_impl(self, values, h):
        return h[:, None, None] * values[:, :, 0]


class Magnus2(ProductScheme):
    r"""Exponential midpoint rule, ``F_k = exp(h A(t_k + h/2))``: order 2.

    The second-order Magnus method: the first Magnus term with the integral replaced by
    the midpoint rule; both the quadrature error and the omitted commutator term are
    ``O(h^3)`` per step [1]_, [2]_ (the second-order Magnus integrator of both).

    References
    ----------
    .. [1] A. Iserles and S. P. Norsett, "On the solution of linear differential
       equations in Lie groups", Phil. Trans. R. Soc. A 357 (1999) 983-1019.
    .. [2] S. Blanes, F. Casas, J. A. Oteo and J. Ros, "The Magnus expansion and some of
       its applications", Physics Reports 470 (2009) 151-238.
    """

    name = "magnus2"
    order = 2
    nodes = (0.5,)
    group_preserving = True
    takes_increments = False

    def _generator_impl(self, values, h):
        return h[:, None, None] * values[:, :, 0]


_SQRT3 = math.sqrt(3.0)


class Magnus4(ProductScheme):
    r"""Fourth-order Magnus method with two Gauss-Legendre nodes: order 4.

    With ``A_1 = A(t_k + c_1 h)``, ``A_2 = A(t_k + c_2 h)``,
    ``c_{1,2} = 1/2 -+ sqrt(3)/6``, the published form for the *left* equation
    ``dY/dt = A(t) Y`` is that of [2]_ and [3]_ (recalled from memory, equation
    numbers not checked; the order-4 test below confirms it):

        Omega = h/2 (A_1 + A_2) + sqrt(3) h^2 / 12 [A_2, A_1].

    Our transport equation is the *right* one, ``dU/dt = U A(t)``: transposing it,
    ``U^T`` solves the left equation for ``A^T``, and ``[X^T, Y^T]^T = [Y, X]``, so the
    bracket is reversed here:

        Omega = h/2 (A_1 + A_2) + sqrt(3) h^2 / 12 [A_1, A_2].

    (The test of the observed order catches the wrong sign: with it the method is only of
    order 2.)

    References
    ----------
    .. [1] W. Magnus, "On the exponential solution of differential equations for a
       linear operator", Comm. Pure Appl. Math. 7 (1954) 649-673.
    .. [2] A. Iserles and S. P. Norsett, "On the solution of linear differential
       equations in Lie groups", Phil. Trans. R. Soc. A 357 (1999) 983-1019.
    .. [3] S. Blanes, F. Casas, J. A. Oteo and J. Ros, "The Magnus expansion and some of
       its applications", Physics Reports 470 (2009) 151-238 (the fourth-order
       Magnus integrator with Gauss-Legendre nodes).
    .. [4] S. Blanes, F. Casas and J. Ros, "Improved high order integrators based on the
       Magnus expansion", BIT 40 (2000) 434-450.
    """

    name = "magnus4"
    order = 4
    nodes = (0.5 - _SQRT3 / 6.0, 0.5 + _SQRT3 / 6.0)
    group_preserving = True
    takes_increments = False

    def _generator_impl(self, values, h):
        a1, a2 = values[:, :, 0], values[:, :, 1]
        hh = h[:, None, None]
        comm = _mul(a1, a2) - _mul(a2, a1)
        return 0.5 * hh * (a1 + a2) + (_SQRT3 / 12.0) * hh**2 * comm


class ItoEuler(ProductScheme):
    r"""Product of ``(I + dA_k)``: the Euler (Ito) scheme, *not* group-preserving.

    ``I + X`` with ``X`` in the Lie algebra is off the group by ``||X||^2``
    (``(I + X)^*(I + X) = I - X^2``), so the product drifts from the group by about the
    sum of the squared increments: ``O(h)`` for a smooth connection with ``m = 1/h``
    steps, and ``O(1)`` for Brownian increments (where the product converges to the Ito
    solution, which leaves the group). It exists for comparison; always look at
    ``ProductResult.drift``. A reversed step contributes ``I - dA_k`` (the adjoint of
    ``I + dA_k``, its inverse to first order). On a smooth connection the global order
    is 1, with exact increments or the left-point sampling of ``connection=``.

    References
    ----------
    .. [1] P. E. Kloeden and E. Platen, "Numerical Solution of Stochastic Differential
       Equations", Springer (1992), the chapter on strong Taylor approximations
       (Euler scheme; chapter recalled from memory).
    .. [2] S. Blanes, F. Casas, J. A. Oteo and J. Ros, "The Magnus expansion and some of
       its applications", Physics Reports 470 (2009) 151-238 (why Lie-group methods
       are used instead).
    """

    name = "ito-euler"
    order = 1
    nodes = (0.0,)
    group_preserving = False
    takes_increments = True

    def _generator_impl(self, values, h):
        return h[:, None, None] * values[:, :, 0]

    def _factor_impl(self, group, omega):
        return omega + np.eye(omega.shape[-1], dtype=omega.dtype)


PRODUCT_SCHEMES: dict[str, type[ProductScheme]] = {
    "exp-euler": ExpEuler,
    "magnus2": Magnus2,
    "magnus4": Magnus4,
    "ito-euler": ItoEuler,
}


# --------------------------------------------------------------------------- validation


def _complex_parts(group: Any, X: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``X = A + iB`` with ``A``, ``B`` anti-Hermitian (every compact algebra here is)."""
    Xh = np.conj(np.swapaxes(X, -1, -2))
    return 0.5 * (X - Xh), -0.5j * (X + Xh)


def _refuse_complex(group: Any, name: str, imag: float) -> None:
    raise ValueError(
        f"`{name}` is complex (largest imaginary part of its coordinates {imag:.3g}): it "
        f"lies in the complexified Lie algebra of {group.family}({group.n}), where the "
        "compact group's exponential does not apply; pass complexified=True to compute "
        f"in {_complex_group_name(group)}, or give real coordinates."
    )


def _complex_group_name(group: Any) -> str:
    N = group.N
    return {"U": f"GL({N}, C)", "SU": f"SL({N}, C)", "SO": f"SO({N}, C)",
            "Sp": f"Sp({N}, C)"}[group.family]


def _algebra_matrices(group: Any, x: np.ndarray, name: str, coord_ndim: int,
                      complexified: bool = False) -> np.ndarray:
    """Coordinates (ndim == coord_ndim, last axis d) or matrices (one more axis, N x N).

    Complex coordinates, or matrices with a complexified-algebra part, are refused
    unless `complexified`; then they are returned as complex matrices of the
    complexified algebra ``g + i g``.
    """
    N, d = group.N, group.dim
    if x.ndim == coord_ndim and x.shape[-1] == d:
        if np.iscomplexobj(x):
            imag = float(np.max(np.abs(x.imag))) if x.size else 0.0
            if complexified:
                return group.algebra(x.real) + 1j * group.algebra(x.imag)
            if imag > 0:
                _refuse_complex(group, name, imag)
            x = x.real
        return group.algebra(x)
    if x.ndim == coord_ndim + 1 and x.shape[-2:] == (N, N) and np.iscomplexobj(x) and x.size:
        # X = A + iB, A and B anti-Hermitian; X is in g + ig iff both are in g.
        a, b = _complex_parts(group, x)
        zb = group.coords(b)
        x_back = group.algebra(group.coords(a)) + 1j * group.algebra(zb)
        off = float(np.max(np.abs(x - x_back)))
        scale = max(float(np.max(np.abs(x))), 1.0)
        if complexified:
            if not off <= 1e-10 * scale:
                raise ValueError(
                    f"`{name}` matrices are not in the complexified Lie algebra of "
                    f"{group.family}({group.n}) (largest entry off it: {off:.3g}); "
                    "accepted: A + iB with A, B in the Lie algebra, or complex coordinates."
                )
            return x_back
        imag = float(np.max(np.abs(zb)))
        if off <= 1e-10 * scale and imag > 1e-10 * scale:
            _refuse_complex(group, name, imag)
    if x.ndim == coord_ndim + 1 and x.shape[-2:] == (N, N):
        # Matrices must lie in the Lie algebra: the exponential routes assume it.
        off = np.max(np.abs(x - group.algebra(group.coords(x)))) if x.size else 0.0
        scale = max(float(np.max(np.abs(x))) if x.size else 0.0, 1.0)
        if not off <= 1e-10 * scale:
            raise ValueError(
                f"`{name}` matrices are not in the Lie algebra of "
                f"{group.family}({group.n}) (largest entry off it: {off:.3g}); accepted: "
                "matrices group.algebra(coords), or the coordinates themselves."
            )
        return x
    raise ValueError(
        f"`{name}` has shape {x.shape}; accepted: coordinates of shape "
        f"(samples, steps{', q' if coord_ndim == 4 else ''}, {d}) or algebra matrices "
        f"of shape (samples, steps{', q' if coord_ndim == 4 else ''}, {N}, {N}) "
        f"for {group.family}({group.n})."
    )


def complexified_drift(group: Any, U: np.ndarray) -> float | None:
    """Defect of the holomorphic defining relations of the complexified group.

    ``GL(N, C)`` (from ``U(N)``) has none: None. ``SL(N, C)``: ``max |det U - 1|``.
    ``SO(N, C)``: also ``max ||U^T U - I||_F``. ``Sp(2n, C)``: ``max ||U^T J U - J||_F``
    (the relations of the compact group without complex conjugation).
    """
    U = np.asarray(U)
    if group.family == "U":
        return None
    if U.size == 0:
        return 0.0
    out = 0.0
    if group.family in ("SU", "SO"):
        out = float(np.abs(np.linalg.det(U) - 1.0).max())
    Ut = np.swapaxes(U, -1, -2)
    if group.family == "SO":
        out = max(out, float(np.linalg.norm(Ut @ U - np.eye(group.N), axis=(-2, -1)).max()))
    if group.family == "Sp":
        J = group.J
        out = max(out, float(np.linalg.norm(Ut @ J @ U - J, axis=(-2, -1)).max()))
    return out


def _ordered_product_iv(group, increments, factors, connection, nodes, dt, directions,
                        method, project, complexified=False):
    """Input validation and standardization for `ordered_product`."""
    for attr in ("N", "dim", "exp", "algebra", "drift"):
        if not hasattr(group, attr):
            raise TypeError(
                f"`group` must be a Group from holonomy.groups.make_group; got "
                f"{type(group).__name__!r} (no attribute {attr!r})."
            )
    given = [n for n, v in (("increments", increments), ("factors", factors),
                            ("connection", connection)) if v is not None]
    if len(given) != 1:
        raise ValueError(
            "exactly one of `increments`, `factors` or `connection` must be given; got "
            f"{given or 'none'}."
        )
    kind = given[0]

    # The scheme.
    scheme = None
    if kind == "factors":
        if method is not None:
            raise ValueError(
                f"`method`={method!r} does not apply to `factors` (they are already "
                "group elements and are only multiplied); leave `method` as None."
            )
    else:
        if method is None:
            method = "exp-euler" if kind == "increments" else "magnus4"
        if isinstance(method, str):
            key = method.lower()
            if key not in PRODUCT_SCHEMES:
                raise ValueError(
                    f"`method` must be one of {sorted(PRODUCT_SCHEMES)} or a "
                    f"ProductScheme subclass; got {method!r}."
                )
            scheme = PRODUCT_SCHEMES[key]()
        elif isinstance(method, type) and issubclass(method, ProductScheme):
            scheme = method()
        else:
            raise TypeError(
                f"`method` must be one of {sorted(PRODUCT_SCHEMES)} or a ProductScheme "
                f"subclass; got {method!r}."
            )
        if kind == "increments" and not scheme.takes_increments:
            accepted = sorted(k for k, v in PRODUCT_SCHEMES.items() if v.takes_increments)
            raise ValueError(
                f"`method`={scheme.name!r} needs the connection at its quadrature nodes "
                f"(pass `connection=` with `nodes=` or `dt=`); schemes that take "
                f"`increments`: {accepted}."
            )

    N = group.N
    h = None
    data = None
    if kind == "increments":
        x = np.asarray(increments)
        data = _algebra_matrices(group, x, "increments", 3, complexified)
        samples, steps = data.shape[:2]
    elif kind == "factors":
        data = np.asarray(factors)
        if data.ndim != 4 or data.shape[-2:] != (N, N):
            raise ValueError(
                f"`factors` has shape {data.shape}; accepted: (samples, steps, {N}, {N}) "
                f"for {group.family}({group.n})."
            )
        samples, steps = data.shape[:2]
        if complexified:
            off = complexified_drift(group, data) or 0.0
            if not (np.all(np.isfinite(data)) and off <= 1e-8):
                raise ValueError(
                    f"`factors` are not in {_complex_group_name(group)} (largest defect "
                    f"of its defining relations {off:.3g}); accepted: finite matrices "
                    "satisfying them to 1e-8."
                )
        off = 0.0 if complexified else (float(group.drift(data)) if data.size else 0.0)
        if not off <= 1e-8:
            raise ValueError(
                f"`factors` are not on the group {group.family}({group.n}) (largest "
                f"drift {off:.3g}); accepted: group elements to 1e-8 (use "
                "group.project to map them back)."
            )
    else:
        if nodes is None and dt is None:
            raise ValueError(
                "`connection` needs the step boundaries `nodes` or the step `dt`; got "
                "neither."
            )
        if nodes is not None and dt is not None:
            raise ValueError(f"give one of `nodes` and `dt`, not both; got dt={dt!r}.")
        if dt is not None:
            dt_f = float(dt)
            if not (np.isfinite(dt_f) and dt_f > 0):
                raise ValueError(f"`dt` must be a positive finite number; got {dt!r}.")
        if nodes is not None:
            t = np.asarray(nodes, dtype=float)
            if t.ndim != 1 or t.size < 2 or not np.all(np.isfinite(t)):
                raise ValueError(
                    f"`nodes` must be a 1-D array of at least 2 finite times; got shape "
                    f"{t.shape}."
                )
            h = np.diff(t)
            if np.any(h <= 0):
                i = int(np.argmax(h <= 0))
                raise ValueError(
                    "`nodes` must be strictly increasing; got "
                    f"nodes[{i}] = {float(t[i])!r} "
                    f"followed by {float(t[i + 1])!r}."
                )
        q = len(scheme.nodes)
        if callable(connection):
            if nodes is None:
                raise ValueError(
                    f"a callable `connection` needs the step boundaries `nodes`; got only "
                    f"dt={dt!r}, which does not fix the number of steps."
                )
            times = scheme.sample_times(t)
            steps = times.shape[0]
            vals = np.asarray(connection(times.ravel()))
            if vals.ndim < 3 or vals.shape[1] != times.size:
                raise ValueError(
                    f"`connection(t)` returned shape {vals.shape}; accepted: (samples, "
                    f"T, {group.dim}) or (samples, T, {N}, {N}) with T = len(t) = "
                    f"{times.size}."
                )
            vals = vals.reshape(vals.shape[0], steps, q, *vals.shape[2:])
        else:
            vals = np.asarray(connection)
        data = _algebra_matrices(group, vals, "connection", 4, complexified)
        samples, steps = data.shape[:2]
        if data.shape[2] != q:
            raise ValueError(
                f"`connection` has {data.shape[2]} values per step; `method`="
                f"{scheme.name!r} samples each step at {q} node(s) c = {scheme.nodes} "
                "(see ProductScheme.sample_times)."
            )
        if h is None:
            h = np.full(steps, float(dt))
        elif h.size != steps:
            raise ValueError(
                f"`nodes` has {h.size + 1} times for {steps} steps; need {steps + 1}."
            )
    if steps < 1:
        raise ValueError(f"the path must have at least one step; got {steps}.")

    if kind != "connection" and (nodes is not None or dt is not None):
        warnings.warn(
            f"`nodes` and `dt` apply only to `connection`; ignored with `{kind}`.",
            UserWarning, stacklevel=3,
        )

    dirs = None
    if directions is not None:
        d = np.asarray(directions)
        if d.shape not in ((steps,), (samples, steps)) or not np.all(np.isin(d, (-1, 1))):
            raise ValueError(
                f"`directions` must hold only +1 or -1, with shape ({steps},) or "
                f"({samples}, {steps}); got shape {d.shape} with values "
                f"{np.unique(d)[:6].tolist()}."
            )
        dirs = np.broadcast_to(d, (samples, steps)).astype(float)
    if not isinstance(project, (bool, np.bool_)):
        raise TypeError(f"`project` must be True or False; got {project!r}.")
    if not isinstance(complexified, (bool, np.bool_)):
        raise TypeError(f"`complexified` must be True or False; got {complexified!r}.")
    if complexified and project:
        raise ValueError(
            "`project`=True does not apply with `complexified`=True: there is no "
            f"projection onto {_complex_group_name(group)}; leave `project` False."
        )
    return kind, scheme, data, h, dirs, steps, bool(project)


# --------------------------------------------------------------------------- public


def ordered_product(
    group: Any,
    increments: np.ndarray | None = None,
    *,
    factors: np.ndarray | None = None,
    connection: np.ndarray | Callable[[np.ndarray], np.ndarray] | None = None,
    nodes: np.ndarray | None = None,
    dt: float | None = None,
    directions: np.ndarray | None = None,
    method: str | type[ProductScheme] | None = None,
    project: bool = False,
    complexified: bool = False,
) -> ProductResult:
    r"""Ordered product ``U = F_1 F_2 ... F_m`` along a path, batched over samples.

    Exactly one of `increments`, `factors` and `connection` gives the path. Steps are
    in traversal order; the product is read left to right, so for a smooth connection
    ``U`` solves ``dU/dt = U A(t)``, ``U(t_0) = Id`` (see the module docstring).

    Parameters
    ----------
    group : Group
        From ``holonomy.groups.make_group``.
    increments : array_like, optional
        Lie-algebra increments of the steps, coordinates in ``group.basis`` of shape
        ``(samples, steps, d)`` or algebra matrices ``(samples, steps, N, N)``. For
        ``exp-euler`` (the default) and ``ito-euler``.
    factors : array_like, optional
        Group elements ``(samples, steps, N, N)``, multiplied as they are (with
        `method` left as None; the result's method is ``"factors"``).
    connection : array_like or callable, optional
        A smooth connection, for any scheme (the default is ``magnus4``). Either a
        callable ``A(t)`` taking the 1-D array of the ``T`` sampling times (from
        ``scheme.sample_times(nodes)``, flattened) and returning ``(samples, T, d)``
        coordinates or ``(samples, T, N, N)`` matrices (the sample axis is required);
        or its values at the scheme's quadrature nodes, shape
        ``(samples, steps, q, d)`` or ``(samples, steps, q, N, N)`` with
        ``q = len(scheme.nodes)``: the midpoint for ``magnus2``, the two Gauss-Legendre
        points for ``magnus4``, the left end for ``exp-euler`` and ``ito-euler``.
    nodes : array_like, shape (steps + 1,), optional
        Increasing step boundaries, for `connection` (needed with a callable).
    dt : float, optional
        Uniform step length, for a `connection` given as an array (instead of `nodes`).
    directions : array_like of +1 / -1, shape (steps,) or (samples, steps), optional
        ``-1`` marks a step traversed backwards: it contributes the inverse of its
        factor (``exp(-Omega)`` for the exponential schemes, ``I - dA`` for
        ``ito-euler``, ``F^*`` = ``group.inv(F)`` for `factors`). Default: all ``+1``.
    method : str or ProductScheme subclass, optional
        A key of `PRODUCT_SCHEMES` (``"exp-euler"``, ``"magnus2"``, ``"magnus4"``,
        ``"ito-euler"``) or a subclass. Default ``"exp-euler"`` for `increments`,
        ``"magnus4"`` for `connection`; must stay None for `factors`.
    project : bool
        If True, map the product back to the group with ``group.project``
        (``drift_before_projection`` keeps the raw drift). Default False.
    complexified : bool
        If True, accept complex increments, connections or factors (complex
        coordinates ``a + i b``, or matrices ``A + iB`` with ``A``, ``B`` in the Lie
        algebra) and compute in the complexified group: ``GL(N, C)`` for ``U(n)``,
        ``SL(N, C)`` for ``SU(n)``, ``SO(N, C)``, ``Sp(2n, C)``. The exponential is then
        the general one (`expm_general`) and ``drift`` reports only the holomorphic
        defining relations (None for ``GL``). Needed for formal (complex-rotated)
        Gaussian fields. Without it, complex input is refused (its imaginary part would
        otherwise be lost). Default False.

    Returns
    -------
    ProductResult
        ``value`` (samples, N, N), ``drift`` = ``group.drift(value)``, ``method``,
        ``steps``, ``reprojected``.

    Notes
    -----
    Orders on a smooth connection (global error in the step ``h``): ``exp-euler`` 2
    with exact increments ``int_step A dt``, 1 with left-point sampling; ``magnus2`` 2;
    ``magnus4`` 4; ``ito-euler`` 1 and off the group by ``O(h)``. The factors are
    multiplied by `tree_product` (pairwise reduction, ``ceil(log2 m)`` batched matrix
    products), except 2 x 2 factors with at least 1024 samples, where a loop over the
    steps (``m`` batched products on a cache-resident accumulator) measured faster.

    References
    ----------
    .. [1] W. Magnus, Comm. Pure Appl. Math. 7 (1954) 649-673.
    .. [2] A. Iserles and S. P. Norsett, Phil. Trans. R. Soc. A 357 (1999) 983-1019.
    .. [3] S. Blanes, F. Casas, J. A. Oteo and J. Ros, Physics Reports 470 (2009)
       151-238.

    Examples
    --------
    >>> import numpy as np
    >>> from holonomy import ordered_product
    >>> from holonomy.groups import make_group
    >>> G = make_group("SU", 2)
    >>> x = np.zeros((1, 3, G.dim)); x[0, :, 0] = 0.3; x[0, 1, 1] = 0.5
    >>> r = ordered_product(G, x, directions=[1, 1, -1])   # F_1 F_2 F_3^-1
    >>> back = ordered_product(G, x[:, ::-1], directions=[1, -1, -1])  # path reversed
    >>> np.allclose(r.value @ back.value, np.eye(2))       # U U_reversed = Id
    True
    >>> r.method, r.steps, r.drift < 1e-14
    ('exp-euler', 3, True)
    """
    kind, scheme, data, h, dirs, steps, project = _ordered_product_iv(
        group, increments, factors, connection, nodes, dt, directions, method, project,
        complexified,
    )
    if kind == "factors":
        f = data
        if dirs is not None:
            back = dirs < 0
            if np.any(back):
                f = np.array(f, copy=True)
                f[back] = np.linalg.inv(f[back]) if complexified else group.inv(f[back])
        name = "factors"
    else:
        omega = data if kind == "increments" else scheme._generator_impl(data, h)
        f = scheme.factors(group, omega, dirs, bool(complexified))
        name = scheme.name
    value = _ordered(f)
    if complexified:
        return ProductResult(value, complexified_drift(group, value), name, steps,
                             complexified=True)
    raw = float(group.drift(value))
    if project:
        value = group.project(value)
        return ProductResult(value, float(group.drift(value)), name, steps, True, raw)
    return ProductResult(value, raw, name, steps)

"""Sampler kernels: element storage plus what the sampler needs on top of products.

The products themselves (the solver's storage classes, :mod:`holonomy._solver`) are
the one product engine; a kernel adds the exponential, heat-kernel draws, characters
and drift for its storage. :class:`MatrixKernel` keeps (..., N, N) matrices and works
for every group; :class:`QuaternionKernel` keeps SU(2) (and Sp(1)) elements as unit
quaternions (..., 4) = (a_0, a_1, a_2, a_3) for the matrix
a_0 Id + i (a_1 sigma_1 + a_2 sigma_2 + a_3 sigma_3), so exponentials and heat-kernel
draws are a few elementwise operations instead of small complex matrix products. Both
give the same elements up to rounding.

References
----------
.. [1] Hall, B. C. (2015). "Lie Groups, Lie Algebras, and Representations", 2nd ed.,
   Springer, section 1.3.3 (SU(2) and the unit quaternions).
"""

from __future__ import annotations

import os
from functools import cached_property

import numpy as np

from ._solver import (MatrixStorage, QuaternionStorage, complex_product_components,
                      quaternion_mul_components, quaternion_product_components)
from .groups._expmap import expm_u3_components
from .groups._heat import (_IMAGE_LOG_TOL, _TAU_REJECT, _heat_torus, _su2_heat_columns,
                           _torus_draw, exact_heat_route, sample_su2_angle)

__all__ = ["MatrixKernel", "QuaternionKernel", "FastMatrixKernel", "FastQuaternionKernel",
           "kernel_for", "kernel_path", "fast_available", "KERNEL_ENV"]

_PAULI = np.array([[[0, 1], [1, 0]], [[0, -1j], [1j, 0]], [[1, 0], [0, -1]]], dtype=complex)


def _norm3(x: np.ndarray, y: np.ndarray, z: np.ndarray) -> np.ndarray:
    """``sqrt(x^2 + y^2 + z^2)`` summed as ``(x^2 + z^2) + y^2``, the order
    ``np.einsum("...i,...i->...")`` took on rows of three where the quaternion code
    used it (numpy 2.4, x86-64): the numbers stayed bitwise the same when the code
    moved to component arrays, and the order no longer depends on numpy's internals."""
    out = x * x
    out += z * z
    out += y * y
    return np.sqrt(out, out=out)


def _hermitian_map(basis) -> tuple:
    """(rows, cols, coef, traceless) for a U(3) / SU(3) basis (d, 3, 3): the sparse
    (9, d) matrix, in compressed rows, taking coordinates to the nine reals of
    ``H = -i X`` (diagonal; real, then imaginary parts of H_01, H_02, H_12);
    ``traceless`` when every basis element has zero trace."""
    B = np.asarray(basis, complex)
    rows = [B[:, j, j].imag for j in range(3)]
    rows += [B[:, r, c].imag for r, c in ((0, 1), (0, 2), (1, 2))]
    rows += [-B[:, r, c].real for r, c in ((0, 1), (0, 2), (1, 2))]
    traceless = bool(np.all(np.abs(np.trace(B, axis1=1, axis2=2)) < 1e-14))
    A = np.array(rows, dtype=float)
    A[np.abs(A) < 1e-15] = 0.0  # rounding of the basis: keep the map sparse
    r, c = np.nonzero(A)  # row by row (compressed rows for the compiled loop)
    starts = np.searchsorted(r, np.arange(10)).astype(np.intp)
    return starts, c.astype(np.intp), A[r, c], traceless


#: interval noise beyond this (a density near 1e300) leaves the fused U(3) closed form,
#: whose cubic overflows: the reference route's exponential then takes eigh
#: (`holonomy.groups._group._large_by_eigh`); ordinary noise is of order 1
_FUSED_NOISE_MAX = 1e5


def _beyond_closed_form(variables: np.ndarray) -> bool:
    return bool(np.abs(variables).max() > _FUSED_NOISE_MAX)


class MatrixKernel(MatrixStorage):
    """Elements as (..., N, N) matrices; any group."""

    name = "numpy"

    @property
    def fuses_algebra(self) -> bool:
        """True when `holonomies` computes an algebra scheme's holonomies itself (U(3)
        and SU(3)); its chunks are then sized for the interval sums alone, as chunking
        does not change an algebra scheme's draws."""
        return self.group.N == 3 and self.group.family in ("U", "SU")

    @cached_property
    def _hermitian_map(self) -> tuple:
        """`_hermitian_map` of this group's basis (U(3) and SU(3))."""
        return _hermitian_map(self.group.basis)

    def holonomies(self, plan, variables: np.ndarray, algebra: bool) -> list | None:
        """The linear scheme's holonomies for U(3) and SU(3) with elements as real and
        imaginary component arrays (`expm_u3_components`, `complex_product_components`):
        each link's Hermitian ``H = -i X`` as nine reals from the sparse map, the closed
        form in real arithmetic, the pairwise product; None (the reference route of
        `holonomy._sampling._holonomies`) otherwise. ``variables`` is consumed."""
        if not (algebra and self.fuses_algebra) or variables.shape[1] == 0 \
                or _beyond_closed_form(variables):
            return None
        rows, cols, coef, traceless = self._hermitian_map
        levels, steps = _per_plan(self, plan, "levels", _plan_levels)
        cum = _cumulated_sums(variables, plan.side, levels)
        out = []
        for step in steps:
            if step is None:
                out.append(self.identity((variables.shape[0],)))
                continue
            idx, neg_dir, _ = step
            c = cum[:, idx]
            h = []
            for r in range(9):  # H_r = -dir sum_j coef_j S_{cols_j}, one pass per term
                v = np.zeros(c.shape[1:])
                for j in range(rows[r], rows[r + 1]):
                    term = c[cols[j]] * (coef[j] * neg_dir)[:, None]
                    v = term if j == rows[r] else v + term
                h.append(v)
            p = complex_product_components(expm_u3_components(h, traceless))
            hol = np.empty(p.shape[3:] + (3, 3), complex)
            hol.real = np.moveaxis(p[0], (0, 1), (-2, -1))
            hol.imag = np.moveaxis(p[1], (0, 1), (-2, -1))
            out.append(hol)
        return out

    def exp(self, coords: np.ndarray) -> np.ndarray:
        return self.group.exp_matrix(self.group.algebra(coords))

    def character(self, rep, a: np.ndarray) -> np.ndarray:
        return rep.character(a, normalized=True)

    def drift(self, a: np.ndarray) -> float:
        return float(self.group.drift(a))

    def heat(self, t: np.ndarray, size: int, rng) -> np.ndarray:
        """Heat-kernel samples at times ``t`` (m,): (size, m) elements."""
        return self.group.heat_kernel(np.asarray(t, float), size, rng=rng)


class QuaternionKernel(QuaternionStorage, MatrixKernel):
    """SU(2) / Sp(1) elements as unit quaternions (..., 4)."""

    def __init__(self, group):
        super().__init__(group)
        # X_a = i sum_b V[a, b] sigma_b for the group's orthonormal basis
        self.V = (np.einsum("aij,bji->ab", group.basis, _PAULI) / 2j).real
        # (perm, scale) with V[perm[j], j] = scale[j] the only entry of column j, when
        # V is a signed, scaled permutation (every metric of SU(2) and Sp(1)); else None
        nz = self.V != 0
        self._perm = None
        if np.all(nz.sum(axis=0) == 1) and np.all(nz.sum(axis=1) == 1):
            perm = np.argmax(nz, axis=0)
            self._perm = (perm, self.V[perm, np.arange(3)])

    def exp(self, coords: np.ndarray) -> np.ndarray:
        # exp(i u.sigma) = cos|u| + i sin|u| (u/|u|).sigma with u = c V
        c = np.asarray(coords, float)
        out = np.empty(c.shape[:-1] + (4,))
        u = out[..., 1:]
        np.matmul(c, self.V, out=u)
        theta = _norm3(u[..., 0], u[..., 1], u[..., 2])
        np.cos(theta, out=out[..., 0])
        ratio = np.sin(theta)
        np.divide(ratio, theta, out=ratio, where=theta > 0)
        ratio[theta == 0] = 1.0
        u *= ratio[..., None]
        return out

    def holonomies(self, plan, variables: np.ndarray, algebra: bool) -> list | None:
        """Every loop's holonomy (see `holonomy._sampling._holonomies`, the reference),
        with the quaternions stored component-first, ``(4, steps, samples)``, so every
        operation streams contiguous memory; the same operations in the same order, so
        bitwise the same numbers. None (the reference route) where the basis is not a
        signed, scaled permutation of the Pauli one or there is nothing to multiply.
        ``variables`` is consumed (it may be overwritten)."""
        if variables.shape[1] == 0 or (algebra and self._perm is None):
            return None
        levels, steps = _per_plan(self, plan, "levels", _plan_levels)
        if algebra:
            cum = _cumulated_sums(variables, plan.side, levels)
        else:
            # the heat sampler stores its draws component-first already (then no copy:
            # `variables` is overwritten)
            cum = np.ascontiguousarray(variables.transpose(2, 1, 0))
            for k_up, p_up, k_down, p_down in levels:
                cum[:, k_up] = quaternion_mul_components(cum[:, p_up], cum[:, k_up])
                cum[:, k_down] = quaternion_mul_components(cum[:, k_down], cum[:, p_down])
        out = []
        for step in steps:
            if step is None:
                out.append(self.identity((variables.shape[0],)))
                continue
            idx, neg_dir, flip = step
            if algebra:
                f = self._exp_components(cum[:, idx], neg_dir)
            else:
                f = cum[:, idx]
                # rightward above (or leftward below) the reference uses C^{-1} = C^dagger
                f[1:, flip] = -f[1:, flip]
            out.append(np.ascontiguousarray(quaternion_product_components(f).T))
        return out

    def _exp_components(self, coords: np.ndarray, sign: np.ndarray) -> np.ndarray:
        """`exp` of ``sign * coords`` for coordinates stored component-first,
        ``(3, steps, samples)``, ``sign`` (steps,) of +-1; quaternions ``(4, steps,
        samples)``, bitwise those of `exp`."""
        perm, scale = self._perm
        f = np.empty((4,) + coords.shape[1:])
        u = f[1:]
        for j in range(3):
            # c V has one term per column: (sign c_p) V_pj = c_p (sign V_pj) exactly
            np.multiply(coords[perm[j]], (sign * scale[j])[:, None], out=u[j])
        theta = _norm3(u[0], u[1], u[2])
        np.cos(theta, out=f[0])
        ratio = np.sin(theta)
        np.divide(ratio, theta, out=ratio, where=theta > 0)
        if not theta.all():
            ratio[theta == 0] = 1.0
        u *= ratio
        return f

    def heat(self, t: np.ndarray, size: int, rng) -> np.ndarray:
        """Exact SU(2) heat-kernel samples (:func:`holonomy.groups.su2_heat_quaternions`,
        tau = t / (4k)) in the quaternion basis of this group's coordinates."""
        t = np.asarray(t, float)
        col = (t / (4.0 * self.group.k)).ravel()
        return _su2_heat_columns(col, size, rng).reshape((size,) + t.shape + (4,))

    def character(self, rep, a: np.ndarray) -> np.ndarray:
        if rep.name == "fundamental":
            return a[..., 0].astype(complex)  # tr / 2 = a_0
        return rep.character(self.to_matrices(a), normalized=True)

    def drift(self, a: np.ndarray) -> float:
        # ||U^* U - I||_F = sqrt(2) | |q|^2 - 1 | for U = q as a 2 x 2 matrix
        if a.size == 0:
            return 0.0
        return float(np.sqrt(2.0) * np.abs(np.einsum("...i,...i->...", a, a) - 1.0).max())


# ------------------------------------------------------------ the `fast` extra (numba)
def _cumulated_sums(variables: np.ndarray, side: np.ndarray, levels) -> np.ndarray:
    """``S_k = side_k x_k + S_parent`` of interval sums ``(samples, intervals, d)``
    cumulated outward from the reference (`_plan_levels`), component-first
    ``(d, intervals, samples)`` with every row contiguous (transposed as it multiplies,
    one pass); the reference route's operations in its order."""
    cum = np.multiply(variables.transpose(2, 1, 0), side[:, None],
                      out=np.empty(variables.shape[::-1]))
    for k_up, p_up, k_down, p_down in levels:
        cum[:, np.concatenate([k_up, k_down])] += cum[:, np.concatenate([p_up, p_down])]
    return cum


def _per_plan(kernel, plan, key, build):
    """``build(plan)``, kept on the kernel for the last plan it saw under ``key`` (a
    block's chunks share one plan)."""
    cache = kernel.__dict__.setdefault("_plan_cache", {})
    entry = cache.get(key)
    if entry is None or entry[0] is not plan:
        entry = cache[key] = (plan, build(plan))
    return entry[1]


def _flat_plan(kernel, plan, algebra: bool):
    return _per_plan(kernel, plan, ("flat", algebra),
                     lambda p: _flat_plan_arrays(p, algebra))


def _plan_levels(plan) -> tuple:
    """The axial plan's index arrays for the numpy passes: per depth >= 1 the
    intervals above and below the reference with their parents, and per loop its
    links, their negated directions and which enter inverted (None: no link)."""
    side, parent, depth = plan.side, plan.parent, plan.depth
    levels = []
    for dep in range(1, plan.max_depth):
        k = np.nonzero(depth == dep)[0]
        up = side[k] > 0
        levels.append((k[up], parent[k[up]], k[~up], parent[k[~up]]))
    steps = []
    for links, direction in plan.steps:
        on = links >= 0
        idx = links[on]
        steps.append((idx, -direction[on], (direction[on] * side[idx]) > 0) if idx.size
                     else None)
    return levels, steps


def _flat_plan_arrays(plan, algebra: bool):
    """The axial plan as flat arrays for the compiled passes: intervals in depth order,
    parents, sides, every loop's links concatenated (``offsets``), and per link the
    direction (algebra schemes) or whether it enters as an inverse (group schemes)."""
    order = np.argsort(plan.depth, kind="stable")
    parent = np.asarray(plan.parent, np.intp)
    side = np.asarray(plan.side, float)
    links, extra, offsets = [], [], [0]
    for lk, direction in plan.steps:
        on = lk >= 0
        links.append(lk[on])
        extra.append(direction[on] if algebra else (direction[on] * side[lk[on]]) > 0)
        offsets.append(offsets[-1] + int(on.sum()))
    links = np.concatenate(links).astype(np.intp)
    extra = np.concatenate(extra).astype(float if algebra else np.bool_)
    return order, parent, side, links, extra, np.asarray(offsets, np.intp)


class FastMatrixKernel(MatrixKernel):
    """`MatrixKernel` with compiled products (:mod:`holonomy._fast`)."""

    name = "numba"

    def __init__(self, group):
        super().__init__(group)
        from . import _fast

        self._fast = _fast

    def mul(self, a, b):
        shape = np.broadcast_shapes(a.shape, b.shape)
        N = self.group.N
        a = np.ascontiguousarray(np.broadcast_to(a, shape)).reshape(-1, N, N)
        b = np.ascontiguousarray(np.broadcast_to(b, shape)).reshape(-1, N, N)
        dtype = np.result_type(a, b)
        return self._fast.matrix_mul(a.astype(dtype, copy=False),
                                     b.astype(dtype, copy=False)).reshape(shape)

    def product(self, factors):
        if factors.ndim != 4:
            return super().product(factors)
        return self._fast.matrix_product(np.ascontiguousarray(factors))

    def holonomies(self, plan, variables, algebra: bool):
        """The linear scheme's holonomies for U(3) and SU(3), and the group schemes'
        for every group, in one compiled pass per sample; None (the numpy route)
        otherwise."""
        if variables.shape[1] == 0:
            return None
        if not algebra:
            order, parent, side, links, flips, offsets = _flat_plan(self, plan, False)
            out = self._fast.matrix_holonomies_group(np.ascontiguousarray(variables), side,
                                                     order, parent, links, flips, offsets)
            return [out[:, j] for j in range(out.shape[1])]
        if not self.fuses_algebra or _beyond_closed_form(variables):
            return None
        order, parent, side, links, dirs, offsets = _flat_plan(self, plan, True)
        out = self._fast.u3_holonomies_algebra(np.ascontiguousarray(variables, dtype=float),
                                               side, order, parent, links, dirs, offsets,
                                               *self._hermitian_map)
        return [out[:, j] for j in range(out.shape[1])]

    def heat(self, t, size, rng):
        """The torus route of `holonomy.groups.heat_kernel` with a compiled rejection
        loop (and, for 3 x 3, exponential); other routes as the numpy kernel."""
        if exact_heat_route(self.group) != "torus":
            return super().heat(t, size, rng)
        return _heat_torus(self.group, np.asarray(t, float), size, rng, draw=self._torus_draw)

    def _torus_draw(self, base, law, t, rng):
        if law.algebra:  # large groups: one batched eigh per round dominates (numpy's)
            return _torus_draw(base, law, t, rng)
        small = base.N == 3 and law.lattice == "A"
        data = self.__dict__.get("_torus_data")
        if data is None:  # the SU(n) part's basis (for U(n)) and, for SU(3), its map to H
            basis = np.ascontiguousarray(base.basis, dtype=complex)
            sparse = (_hermitian_map(basis)[:3] if small else
                      (np.zeros(10, np.intp), np.zeros(0, np.intp), np.zeros(0)))
            # the representative's own term first (the compiled sum skips negligible
            # images against it)
            order = np.argsort(np.abs(law.images).sum(axis=1), kind="stable")
            images = law.images[order]
            data = self._torus_data = (basis, images, law.signs[order],
                                       np.sqrt(np.einsum("ij,ij->i", images, images)),
                                       float(np.abs(images @ law.roots.T).max())) + sparse
        k = t.size
        coords = np.empty((0 if small else k, base.dim))
        mats = np.empty((k if small else 0, 3, 3), dtype=complex)
        self._fast.torus_draw(np.ascontiguousarray(t, dtype=float), data[0], law.roots,
                              *data[1:5], law.c, law.lattice == "A", rng, coords, mats,
                              *data[5:])
        return mats if small else base.exp_matrix(base.algebra(coords))


class FastQuaternionKernel(QuaternionKernel):
    """`QuaternionKernel` with compiled exponentials, products and heat draws."""

    name = "numba"
    fuses_algebra = True

    def __init__(self, group):
        super().__init__(group)
        from . import _fast

        self._fast = _fast

    def exp(self, coords):
        c = np.ascontiguousarray(coords, dtype=float)
        return self._fast.quaternion_exp(c.reshape(-1, 3), self.V).reshape(c.shape[:-1] + (4,))

    def mul(self, a, b):
        shape = np.broadcast_shapes(a.shape, b.shape)
        a = np.ascontiguousarray(np.broadcast_to(a, shape)).reshape(-1, 4)
        b = np.ascontiguousarray(np.broadcast_to(b, shape)).reshape(-1, 4)
        return self._fast.quaternion_mul(a, b).reshape(shape)

    def product(self, factors):
        f = np.ascontiguousarray(factors)
        if f.ndim != 3:
            return super().product(factors)
        return self._fast.quaternion_product(f)

    def holonomies(self, plan, variables, algebra: bool) -> list:
        """Every loop's holonomy in one compiled pass per sample (see
        `holonomy._sampling._holonomies` for the numpy reference)."""
        if variables.shape[1] == 0:
            return [self.identity((variables.shape[0],)) for _ in plan.steps]
        order, parent, side, links, extra, offsets = _flat_plan(self, plan, algebra)
        x = np.ascontiguousarray(variables, dtype=float)
        if algebra:
            out = self._fast.quaternion_holonomies_algebra(x, side, order, parent, links, extra,
                                                           offsets, self.V)
        else:
            out = self._fast.quaternion_holonomies_group(x, side, order, parent, links, extra,
                                                         offsets)
        return [out[:, j] for j in range(out.shape[1])]

    def heat(self, t, size, rng):
        t = np.asarray(t, float)
        col = (t / (4.0 * self.group.k)).reshape(-1)  # tau per column
        m = col.size
        out = np.empty((size * m, 4))
        # entries by column class, in flat order (the numpy path's order)
        kind = np.where(col <= 0, 0, np.where(col < _TAU_REJECT, 1, 2))
        if np.all(kind == 1):  # every entry by rejection (an empty index says so)
            small, large, everything = np.empty(0, np.intp), np.empty(0, np.intp), True
        else:
            flat_kind = np.tile(kind, size)
            small, large = np.flatnonzero(flat_kind == 1), np.flatnonzero(flat_kind == 2)
            out[flat_kind == 0] = (1.0, 0.0, 0.0, 0.0)
            everything = False
        if small.size or everything:
            # per-column constants, computed as the numpy path computes them per entry
            # (pi / t = inf for a subnormal t is right: no images; no warning for it)
            with np.errstate(divide="ignore", over="ignore"):
                consts = (np.sqrt(2.0 * col), np.pi / col, 2 * np.pi / col,
                          np.log(4 * np.pi**2 / col) + _IMAGE_LOG_TOL)
            self._fast.su2_heat_small(small, m, *consts, out, rng)
        if large.size:  # inverse CDF, as in the numpy path
            theta = sample_su2_angle(np.tile(col, size)[large], rng=rng)
            axis = rng.standard_normal((large.size, 3))
            axis *= (np.sin(theta) / np.sqrt(np.einsum("ij,ij->i", axis, axis)))[:, None]
            out[large, 0] = np.cos(theta)
            out[large, 1:] = axis
        return out.reshape((size,) + t.shape + (4,))


#: environment variable choosing the kernels: "numpy", "fast" or "auto" (the default:
#: the compiled kernels when numba is installed, the numpy ones otherwise)
KERNEL_ENV = "WHITEGAUGE_KERNEL"


def fast_available() -> bool:
    """True when the ``fast`` extra (numba) can be imported."""
    try:
        import numba  # noqa: F401
    except ImportError:
        return False
    return True


def kernel_path(fast: bool | None = None) -> str:
    """``"numba"`` or ``"numpy"``: the kernels `kernel_for` returns (``provenance.kernel``)."""
    if fast is None:
        choice = os.environ.get(KERNEL_ENV, "auto").strip().lower()
        if choice not in ("auto", "numpy", "fast"):
            raise ValueError(f"`{KERNEL_ENV}` must be 'auto', 'numpy' or 'fast'; got {choice!r}.")
        if choice == "fast" and not fast_available():
            raise ValueError(f"`{KERNEL_ENV}`='fast' needs the extra: pip install -e '.[fast]'.")
        fast = choice == "fast" or (choice == "auto" and fast_available())
    return "numba" if fast else "numpy"


def kernel_for(group, fast: bool | None = None) -> MatrixKernel:
    """The fastest kernel for ``group``: quaternions for SU(2) and Sp(1); compiled ones
    when ``fast`` (default: `kernel_path`, i.e. when numba is installed)."""
    compiled = kernel_path(fast) == "numba"
    if group.N == 2 and group.family in ("SU", "Sp"):
        return FastQuaternionKernel(group) if compiled else QuaternionKernel(group)
    return FastMatrixKernel(group) if compiled else MatrixKernel(group)


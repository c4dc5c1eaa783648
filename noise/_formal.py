"""Formal (Wick) Gaussian vectors for any symmetric covariance.

A *formal* Gaussian vector x = (x_0, ..., x_{m-1}) is defined only through its moments:
E[x_{i_1} ... x_{i_n}] is the Isserlis/Wick sum over perfect pairings of the product of
covariance entries. This makes sense for every symmetric matrix C (positive definite,
semidefinite, singular, indefinite, complex symmetric or symbolic), including the
indefinite covariances produced by a signed area density, where no probability measure
exists and samplers refuse.

Moments are computed by Gaussian integration by parts,

    E[x_i F(x)] = sum_j C_ij E[dF/dx_j],

applied to monomials F = prod_j x_j^{n_j} and memoized on the multiset of remaining
indices (the exponent vector n). The number of distinct states is at most
prod_j (n_j + 1), so a moment such as E[x_0^{2p}] costs O(p) steps instead of the
(2p - 1)!! pairings of the naive Wick sum.

For a Monte Carlo check of the formal value when C is not positive semidefinite,
:func:`complex_rotation_estimate` writes C = L L^T with a complex L and averages a
polynomial observable over x = L z with z a real standard Gaussian vector; since every
moment of L z is the Wick sum with covariance L L^T = C, the average is unbiased for
polynomials.

References
----------
.. [1] L. Isserlis, "On a formula for the product-moment coefficient of any order of a
       normal frequency distribution in any number of variables", Biometrika 12 (1918)
       134-139.
.. [2] G. C. Wick, "The evaluation of the collision matrix", Phys. Rev. 80 (1950) 268.
.. [3] S. Janson, *Gaussian Hilbert Spaces*, Cambridge University Press (1997),
       Theorem 1.28 (Wick/Isserlis) and the integration-by-parts identity
       E[x_i F(x)] = sum_j C_ij E[d_j F(x)] (Stein's lemma, multivariate form).
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import numpy as np

from ._seeding import rng_iv
import scipy.linalg
import sympy

__all__ = ["FormalGaussian", "ComplexRotationResult", "complex_factor",
           "complex_rotation_estimate"]


# ---------------------------------------------------------------------------------------
# validation
# ---------------------------------------------------------------------------------------

def _formal_gaussian_iv(cov: Any) -> tuple[Any, bool]:
    """Validate and standardize a covariance.

    Returns ``(C, exact)``: a sympy ImmutableMatrix when ``exact`` (integer, rational,
    Fraction or symbolic entries), else a float or complex ndarray (symmetrized).
    """
    if isinstance(cov, sympy.MatrixBase):
        shape = cov.shape
        exact = True
        entries = None
    else:
        try:
            arr = np.asarray(cov)
        except ValueError as exc:  # ragged lists
            raise ValueError(f"`cov` must be a square matrix (m, m); got {cov!r}") from exc
        shape = arr.shape
        if arr.dtype.kind in "biuO":
            exact = True
            entries = arr
        elif arr.dtype.kind in "fc":
            exact = False
            entries = arr
        else:
            raise ValueError(
                f"`cov` must hold numbers or sympy expressions; got dtype {arr.dtype}")
    if len(shape) != 2 or shape[0] != shape[1] or shape[0] == 0:
        raise ValueError(
            f"`cov` must be a non-empty square matrix of shape (m, m); got shape {shape}")
    m = shape[0]
    if exact:
        if entries is None:
            C = sympy.ImmutableMatrix(cov)
        else:
            try:
                C = sympy.ImmutableMatrix(m, m, [sympy.sympify(
                    sympy.Rational(v.numerator, v.denominator) if isinstance(v, Fraction)
                    else v) for v in entries.ravel()])
            except (sympy.SympifyError, TypeError) as exc:
                raise ValueError(
                    f"`cov` must hold numbers or sympy expressions; got {cov!r}") from exc
        bad = [v for v in C if v.has(sympy.oo, -sympy.oo, sympy.zoo, sympy.nan)]
        if bad:
            raise ValueError(f"`cov` must have finite entries; got {bad[0]}")
        for i in range(m):
            for j in range(i + 1, m):
                d = C[i, j] - C[j, i]
                if d != 0 and sympy.simplify(d) != 0:
                    raise ValueError(
                        "`cov` must be symmetric (C[i, j] == C[j, i]); got "
                        f"C[{i}, {j}] = {C[i, j]} and C[{j}, {i}] = {C[j, i]}")
        return C, True
    C = np.array(entries, dtype=complex if entries.dtype.kind == "c" else float)
    if not np.all(np.isfinite(C)):
        raise ValueError(f"`cov` must have finite entries; got {C[~np.isfinite(C)][0]}")
    scale = max(1.0, float(np.max(np.abs(C))))
    asym = float(np.max(np.abs(C - C.T)))
    if asym > 1e-12 * scale:
        raise ValueError(
            f"`cov` must be symmetric (C == C^T, not Hermitian); got max |C - C^T| = "
            f"{asym:.3g}")
    C = (C + C.T) / 2
    if C.dtype.kind == "c" and not np.any(C.imag):
        C = C.real.copy()
    return C, False


def _nonneg_int_iv(value: Any, name: str) -> int:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (numbers.Integral,)):
        raise ValueError(f"`{name}` must be a non-negative integer; got {value!r}")
    value = int(value)
    if value < 0:
        raise ValueError(f"`{name}` must be a non-negative integer; got {value}")
    return value


# ---------------------------------------------------------------------------------------
# formal Gaussian
# ---------------------------------------------------------------------------------------

class FormalGaussian:
    """A centred Gaussian vector known only through its (Wick) moments.

    Parameters
    ----------
    cov : array_like or sympy.Matrix, shape (m, m)
        Any symmetric matrix: positive definite, semidefinite, singular, indefinite,
        complex symmetric (``C == C.T``, not Hermitian), or exact/symbolic (Python ints,
        :class:`fractions.Fraction`, sympy Rationals or symbols). Float/complex input
        gives float/complex results; exact input gives exact sympy results.

    Attributes
    ----------
    cov : ndarray or sympy.ImmutableMatrix
        The validated covariance.
    exact : bool
        Whether results are exact sympy expressions.
    m : int
        Dimension.

    Notes
    -----
    :meth:`moment` uses Gaussian integration by parts ([3]_),
    E[x_i prod_j x_j^{n_j}] = sum_j C_ij n_j E[prod_l x_l^{n_l - delta_lj}],
    memoized on the exponent vector. The result equals the Isserlis sum over pairings
    ([1]_, [2]_) but costs at most prod_j (n_j + 1) memo states.

    References
    ----------
    .. [1] L. Isserlis, Biometrika 12 (1918) 134-139.
    .. [2] G. C. Wick, Phys. Rev. 80 (1950) 268.
    .. [3] S. Janson, *Gaussian Hilbert Spaces*, Cambridge UP (1997), Thm 1.28.

    Examples
    --------
    >>> import sympy
    >>> from noise import FormalGaussian
    >>> g = FormalGaussian([[2, 1], [1, -3]])      # indefinite, exact
    >>> g.moment([0, 0, 1, 1])                    # C00 C11 + 2 C01^2
    -4
    >>> g.linear_form_moment([1, 1], 4)           # 3 (a^T C a)^2, a^T C a = 1
    3
    >>> x0, x1 = sympy.symbols("x_0:2")
    >>> g.expect(x0**2 + 3 * x0 * x1)
    5
    """

    def __init__(self, cov: Any) -> None:
        self.cov, self.exact = _formal_gaussian_iv(cov)
        self.m = int(self.cov.shape[0])
        if self.exact:
            self._c = [[self.cov[i, j] for j in range(self.m)] for i in range(self.m)]
            self._zero, self._one = sympy.Integer(0), sympy.Integer(1)
        else:
            self._c = self.cov.tolist()
            self._zero, self._one = 0.0, 1.0
        self._memo: dict[tuple[int, ...], Any] = {}

    def __repr__(self) -> str:
        return f"FormalGaussian(m={self.m}, exact={self.exact})"

    # -- core ---------------------------------------------------------------------------
    def _wick(self, counts: tuple[int, ...]) -> Any:
        """E[prod_j x_j^{counts_j}] by memoized integration by parts."""
        memo = self._memo
        hit = memo.get(counts)
        if hit is not None:
            return hit
        total = sum(counts)
        if total == 0:
            return self._one
        if total % 2:
            return self._zero
        i = next(idx for idx, n in enumerate(counts) if n)
        rest = list(counts)
        rest[i] -= 1
        row = self._c[i]
        acc = self._zero
        for j, nj in enumerate(rest):
            if nj and row[j] != 0:
                rest[j] -= 1
                acc = acc + row[j] * nj * self._wick(tuple(rest))
                rest[j] += 1
        if self.exact:
            acc = sympy.expand(acc)
        memo[counts] = acc
        return acc

    def _counts_iv(self, indices: Any) -> tuple[int, ...]:
        try:
            idx = list(indices)
        except TypeError as exc:
            raise ValueError(
                f"`indices` must be a sequence of integers in [0, {self.m}); "
                f"got {indices!r}") from exc
        counts = [0] * self.m
        for i in idx:
            if isinstance(i, (bool, np.bool_)) or not isinstance(i, numbers.Integral) \
                    or not 0 <= int(i) < self.m:
                raise ValueError(
                    f"`indices` must be a sequence of integers in [0, {self.m}); "
                    f"got {i!r}")
            counts[int(i)] += 1
        return tuple(counts)

    def moment(self, indices: Sequence[int]) -> Any:
        """E[x_{i_1} ... x_{i_n}] by the Isserlis/Wick rule.

        Parameters
        ----------
        indices : sequence of int
            Repetitions allowed; the order is irrelevant.

        Returns
        -------
        sympy expression (exact covariance) or float/complex.
        Odd n gives exactly 0 (a centred Gaussian law is symmetric).

        References
        ----------
        .. [1] L. Isserlis, Biometrika 12 (1918) 134-139, eq. (I).
        """
        return self._out(self._wick(self._counts_iv(indices)))

    def _out(self, value: Any) -> Any:
        if self.exact:
            return sympy.expand(value) if isinstance(value, sympy.Basic) else \
                sympy.sympify(value)
        if isinstance(value, complex) or np.iscomplexobj(value):
            return complex(value)
        return float(value)

    def expect(self, poly: Any, symbols: Sequence[sympy.Symbol] | None = None) -> Any:
        """E[poly(x)] for a polynomial, term by term with shared memoization.

        Parameters
        ----------
        poly : sympy expression or mapping
            A polynomial in ``symbols`` (default ``x_0, ..., x_{m-1}``); coefficients may
            contain other symbols. Or a mapping ``{exponent tuple (length m): coeff}``,
            as returned by ``sympy.Poly.as_dict()``.
        symbols : sequence of sympy.Symbol, optional
            The variables standing for x_0, ..., x_{m-1}.

        Returns
        -------
        sympy expression (exact covariance or symbolic coefficients) or float/complex.

        References
        ----------
        .. [1] L. Isserlis, Biometrika 12 (1918) 134-139.
        """
        terms = self._expect_iv(poly, symbols)
        acc: Any = 0
        for exps, coeff in terms.items():
            val = self._wick(exps)
            if val != 0:
                acc = acc + coeff * val
        if isinstance(acc, sympy.Basic):
            acc = sympy.expand(acc)
            if not self.exact and acc.is_number:
                acc = complex(acc) if not acc.is_real else float(acc)
            return acc
        return self._out(acc) if not self.exact else sympy.sympify(acc)

    def _expect_iv(self, poly: Any, symbols: Any) -> dict[tuple[int, ...], Any]:
        if isinstance(poly, Mapping):
            out = {}
            for key, coeff in poly.items():
                key = tuple(key)
                if len(key) != self.m or any(
                        not isinstance(e, numbers.Integral) or e < 0 for e in key):
                    raise ValueError(
                        f"`poly` keys must be exponent tuples of {self.m} non-negative "
                        f"integers; got {key!r}")
                out[tuple(int(e) for e in key)] = coeff
            return out
        if symbols is None:
            symbols = sympy.symbols(f"x_0:{self.m}")
        symbols = tuple(symbols)
        if len(symbols) != self.m:
            raise ValueError(f"`symbols` must have length {self.m}; got {len(symbols)}")
        try:
            p = sympy.Poly(sympy.sympify(poly), *symbols)
        except (sympy.PolynomialError, sympy.SympifyError, TypeError) as exc:
            raise ValueError(
                f"`poly` must be a polynomial in {symbols}; got {poly!r}") from exc
        return {tuple(k): v for k, v in p.as_dict().items()}

    def exp_moment(self, a: Sequence[Any]) -> Any:
        """The formal identity E[exp(<a, x>)] = exp(a^T C a / 2).

        Term by term this is sum_p E[<a, x>^p] / p! with the moments of
        :meth:`linear_form_moment`; it holds as a formal power series in ``a`` for any
        symmetric C. ``a`` may be symbolic.

        References
        ----------
        .. [1] S. Janson, *Gaussian Hilbert Spaces*, Cambridge UP (1997), ch. 1
               (moment generating function of a centred Gaussian).
        """
        q = self._quadratic(a)
        if isinstance(q, sympy.Basic):
            return sympy.exp(q / 2)
        return self._out(np.exp(q / 2))

    def _quadratic(self, a: Any) -> Any:
        try:
            vec = list(a)
        except TypeError as exc:
            raise ValueError(f"`a` must be a vector of length {self.m}; got {a!r}") from exc
        if len(vec) != self.m:
            raise ValueError(f"`a` must be a vector of length {self.m}; got length "
                             f"{len(vec)}")
        symbolic = self.exact or any(isinstance(v, (sympy.Basic, Fraction)) for v in vec)
        if symbolic:
            va = sympy.Matrix([sympy.sympify(
                sympy.Rational(v.numerator, v.denominator) if isinstance(v, Fraction)
                else v) for v in vec])
            C = sympy.Matrix(self.cov) if self.exact else sympy.Matrix(
                self.cov.tolist())
            return sympy.expand((va.T * C * va)[0, 0])
        va = np.asarray(vec)
        if not np.all(np.isfinite(va)):
            raise ValueError(f"`a` must have finite entries; got {vec!r}")
        return va @ self.cov @ va

    def linear_form_moment(self, a: Sequence[Any], p: int) -> Any:
        """E[<a, x>^p] = (p - 1)!! (a^T C a)^(p/2) for even p, 0 for odd p.

        References
        ----------
        .. [1] L. Isserlis, Biometrika 12 (1918) 134-139 (all pairings of p equal
               factors give the same product; there are (p - 1)!! of them).
        """
        p = _nonneg_int_iv(p, "p")
        q = self._quadratic(a)
        if isinstance(q, sympy.Basic):
            if p % 2:
                return sympy.Integer(0)
            return sympy.expand(self.pairing_count(p) * q ** (p // 2))
        if p % 2:
            return self._out(0 * q)
        return self._out(self.pairing_count(p) * q ** (p // 2))

    @staticmethod
    def pairing_count(m: int) -> int:
        """Number of perfect pairings of m points: (m - 1)!! for even m, 0 for odd m.

        References
        ----------
        .. [1] L. Isserlis, Biometrika 12 (1918) 134-139; the count (2n - 1)!! =
               (2n)! / (2^n n!) is classical.
        """
        m = _nonneg_int_iv(m, "m")
        if m % 2:
            return 0
        return math.prod(range(m - 1, 0, -2))

    def clear_cache(self) -> None:
        """Forget memoized moments."""
        self._memo.clear()


# ---------------------------------------------------------------------------------------
# complex rotation Monte Carlo
# ---------------------------------------------------------------------------------------

@dataclass
class ComplexRotationResult:
    """Monte Carlo average of an observable over x = L z with C = L L^T.

    Attributes
    ----------
    estimate : complex
        Sample mean of f(L z).
    stderr : float
        Standard error of the complex mean, sqrt(stderr_real^2 + stderr_imag^2).
    stderr_real, stderr_imag : float
        Standard errors of the real and imaginary parts.
    samples : int
        Number of samples.
    factor : ndarray (m, m)
        The complex factor L used (C = L L^T).
    """

    estimate: complex
    stderr: float
    stderr_real: float
    stderr_imag: float
    samples: int
    factor: np.ndarray


def _complex_rotation_estimate_iv(cov, f, samples, chunk):
    C, exact = _formal_gaussian_iv(cov)
    if exact:
        try:
            C = np.array(sympy.Matrix(C).evalf(), dtype=complex)
        except TypeError as exc:
            raise ValueError("`cov` must be numeric for Monte Carlo; got symbolic "
                             "entries (use FormalGaussian for the formal value)") from exc
        if not np.any(C.imag):
            C = C.real.copy()
    m = C.shape[0]
    if isinstance(f, sympy.Basic):
        syms = sympy.symbols(f"x_0:{m}")
        extra = f.free_symbols - set(syms)
        if extra:
            raise ValueError(f"`f` must only involve x_0..x_{m - 1}; got {sorted(map(str, extra))}")
        lam = sympy.lambdify(syms, f, modules="numpy")
        func = lambda x: lam(*[x[:, i] for i in range(m)]) + 0 * x[:, 0]  # noqa: E731
    elif callable(f):
        func = f
    else:
        raise ValueError(f"`f` must be a callable on arrays (n, m) or a sympy polynomial "
                         f"in x_0..x_{m - 1}; got {f!r}")
    samples = _nonneg_int_iv(samples, "samples")
    if samples < 2:
        raise ValueError(f"`samples` must be an integer >= 2; got {samples}")
    chunk = _nonneg_int_iv(chunk, "chunk")
    if chunk < 1:
        raise ValueError(f"`chunk` must be a positive integer; got {chunk}")
    return C, func, samples, chunk


def complex_factor(cov: np.ndarray) -> np.ndarray:
    """A complex L with L L^T = C for a symmetric C (not a conjugate transpose).

    Real symmetric C: L = V diag(sqrt(w)) with the eigendecomposition C = V diag(w) V^T
    and sqrt of a negative eigenvalue imaginary. Complex symmetric C: the principal
    square root (a polynomial in C, hence symmetric, so L L^T = L^2 = C).

    References
    ----------
    .. [1] N. J. Higham, *Functions of Matrices*, SIAM (2008), ch. 6 (matrix square
           root; scipy.linalg.sqrtm).
    """
    if np.iscomplexobj(cov):
        L = scipy.linalg.sqrtm(cov)
    else:
        w, V = np.linalg.eigh(cov)
        L = V * np.sqrt(w.astype(complex))
    err = np.max(np.abs(L @ L.T - cov))
    if not err <= 1e-8 * max(1.0, float(np.max(np.abs(cov)))):
        raise ValueError(f"`cov` has no usable factor C = L L^T (residual {err:.3g})")
    return L


def complex_rotation_estimate(cov: Any, f: Callable[[np.ndarray], np.ndarray] | Any,
                              samples: int, *, rng: Any = None,
                              chunk: int = 65536) -> ComplexRotationResult:
    """Monte Carlo check of a formal Gaussian expectation through a complex rotation.

    Writes C = L L^T with a complex L (eigendecomposition; square roots of negative
    eigenvalues are imaginary) and averages f(L z) over real standard Gaussian z. Every
    moment of L z is the Wick sum with covariance L L^T = C, so for a polynomial f the
    average is an unbiased estimate of the formal value E_C[f(x)], whatever the
    signature of C.

    Parameters
    ----------
    cov : array_like (m, m)
        Symmetric, numeric (indefinite and complex symmetric allowed).
    f : callable or sympy expression
        ``f(x)`` with x complex of shape (n, m) returns shape (n,); or a sympy
        polynomial in ``x_0, ..., x_{m-1}``.
    samples : int
        Number of samples (>= 2).
    rng : seed or numpy.random.Generator, optional
        Coerced once with :func:`numpy.random.default_rng`.
    chunk : int
        Samples per vectorized batch (memory bound).

    Returns
    -------
    ComplexRotationResult

    References
    ----------
    .. [1] L. Isserlis, Biometrika 12 (1918) 134-139 (moments of L z depend on L only
           through L L^T).

    Examples
    --------
    >>> import numpy as np
    >>> from noise import complex_rotation_estimate
    >>> r = complex_rotation_estimate([[1.0, 2.0], [2.0, -1.0]],
    ...                               lambda x: x[:, 0] * x[:, 1], 20000, rng=1)
    >>> abs(r.estimate - 2.0) < 4 * r.stderr      # formal value C01 = 2
    True
    """
    C, func, samples, chunk = _complex_rotation_estimate_iv(cov, f, samples, chunk)
    rng = rng_iv(rng)
    L = complex_factor(C)
    m = C.shape[0]
    s1 = 0j
    s2r = s2i = 0.0
    done = 0
    while done < samples:
        n = min(chunk, samples - done)
        z = rng.standard_normal((n, m))
        vals = np.asarray(func(z @ L.T), dtype=complex).reshape(-1)
        if vals.shape[0] != n:
            raise ValueError(f"`f` must return one value per sample; got shape "
                             f"{vals.shape} for {n} samples")
        s1 += vals.sum()
        s2r += float(np.sum(vals.real ** 2))
        s2i += float(np.sum(vals.imag ** 2))
        done += n
    mean = s1 / samples
    var_r = max(s2r - samples * mean.real ** 2, 0.0) / (samples - 1)
    var_i = max(s2i - samples * mean.imag ** 2, 0.0) / (samples - 1)
    se_r, se_i = math.sqrt(var_r / samples), math.sqrt(var_i / samples)
    return ComplexRotationResult(estimate=complex(mean), stderr=math.hypot(se_r, se_i),
                                 stderr_real=se_r, stderr_imag=se_i, samples=samples,
                                 factor=L)

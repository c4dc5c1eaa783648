"""Tests of the ordered-product solver (holonomy/_solver.py).

References used as the outside check:
- scipy.integrate.solve_ivp (DOP853, rtol = atol = 1e-13) for the transport equation
  dU/dt = U A(t); scipy.linalg.expm and numpy.linalg.inv for exponentials and inverses.
- Orders of the Magnus methods: Iserles & Norsett 1999 (Phil. Trans. R. Soc. A 357,
  983-1019); Blanes, Casas, Oteo & Ros 2009 (Physics Reports 470, 151-238), the
  sections on Magnus integrators (section numbers from memory, not checked).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.integrate
import scipy.linalg

from holonomy import PRODUCT_SCHEMES, ProductResult, ProductScheme, ordered_product
from holonomy._solver import _sequential_product, tree_product
from holonomy.groups import make_group

# --------------------------------------------------------------------------- connection
# A smooth, non-commuting su(2) connection on [0, 1]: A(t) = sum_a f_a(t) X_a with
# f_a(t) = alpha_a cos(omega_a t + phi_a); one row of parameters per sample.
ALPHA = np.array([[1.3, -0.9, 0.7], [0.6, 1.1, -1.4]])
OMEGA = np.array([[2.0, 3.5, 5.0], [4.0, 1.5, 2.5]])
PHI = np.array([[0.3, -1.0, 2.0], [1.2, 0.4, -0.7]])


def coeffs(t):
    """f_a(t), shape (samples, T, 3)."""
    t = np.asarray(t, dtype=float)
    phase = OMEGA[:, None, :] * t[None, :, None] + PHI[:, None, :]
    return ALPHA[:, None, :] * np.cos(phase)


def exact_increments(nodes):
    """int_{t_k}^{t_{k+1}} f_a dt in closed form, shape (samples, steps, 3)."""
    prim = (ALPHA / OMEGA)[:, None, :] * np.sin(
        OMEGA[:, None, :] * np.asarray(nodes)[None, :, None] + PHI[:, None, :]
    )
    return np.diff(prim, axis=1)


@pytest.fixture(scope="module")
def su2():
    return make_group("SU", 2)


@pytest.fixture(scope="module")
def reference(su2):
    """Holonomy over [0, 1] from scipy.integrate.solve_ivp, one per sample."""
    out = []
    for s in range(ALPHA.shape[0]):
        def rhs(t, y, s=s):
            a = su2.algebra(coeffs([t])[s, 0])
            return (y.reshape(2, 2) @ a).ravel()   # dU/dt = U A(t)

        sol = scipy.integrate.solve_ivp(
            rhs, (0.0, 1.0), np.eye(2, dtype=complex).ravel(), method="DOP853",
            rtol=1e-13, atol=1e-13,
        )
        assert sol.success
        out.append(sol.y[:, -1].reshape(2, 2))
    return np.array(out)


def observed_order(su2, reference, steps_list, run):
    errs = []
    for m in steps_list:
        value = run(np.linspace(0.0, 1.0, m + 1)).value
        errs.append(np.max(np.abs(value - reference)))
    slope = np.polyfit(np.log(1.0 / np.asarray(steps_list)), np.log(errs), 1)[0]
    return slope, errs


# --------------------------------------------------------------------------- orientation


def test_orientation_matches_transport_equation(su2):
    # Piecewise-constant connection: A = X on [0, 1/2), B = Y on [1/2, 1]. The solution
    # of dU/dt = U A(t) is expm(X/2) expm(Y/2) (scipy.linalg.expm), read left to right;
    # the reversed order differs because X and Y do not commute.
    X, Y = su2.basis[0] * 1.7, su2.basis[1] * 2.3

    def rhs(t, y):
        return (y.reshape(2, 2) @ (X if t < 0.5 else Y)).ravel()

    sol = scipy.integrate.solve_ivp(rhs, (0, 1), np.eye(2, dtype=complex).ravel(),
                                    method="DOP853", rtol=1e-13, atol=1e-13,
                                    t_eval=[1.0], first_step=1e-3, max_step=0.01)
    ref = sol.y[:, -1].reshape(2, 2)
    inc = np.array([[X / 2, Y / 2]])
    got = ordered_product(su2, inc).value[0]
    assert np.allclose(ref, scipy.linalg.expm(X / 2) @ scipy.linalg.expm(Y / 2), atol=1e-6)
    assert np.max(np.abs(got - scipy.linalg.expm(X / 2) @ scipy.linalg.expm(Y / 2))) < 1e-13
    assert np.max(np.abs(got - scipy.linalg.expm(Y / 2) @ scipy.linalg.expm(X / 2))) > 1e-2


# --------------------------------------------------------------------------- orders


def test_magnus2_order_2(su2, reference):
    # Iserles & Norsett 1999; Blanes et al. 2009: exponential midpoint is order 2.
    slope, errs = observed_order(
        su2, reference, [8, 16, 32, 64, 128],
        lambda t: ordered_product(su2, connection=coeffs, nodes=t, method="magnus2"),
    )
    assert abs(slope - 2.0) < 0.3, (slope, errs)


def test_magnus4_order_4(su2, reference):
    # Blanes et al. 2009 (Gauss-Legendre fourth-order Magnus): order 4.
    slope, errs = observed_order(
        su2, reference, [4, 8, 16, 32, 64],
        lambda t: ordered_product(su2, connection=coeffs, nodes=t, method="magnus4"),
    )
    assert abs(slope - 4.0) < 0.3, (slope, errs)
    assert errs[-1] < 1e-7


def test_magnus4_connection_as_array_and_dt(su2, reference):
    # Same values given as an array at the Gauss nodes with a uniform `dt`.
    m = 32
    t = np.linspace(0.0, 1.0, m + 1)
    times = PRODUCT_SCHEMES["magnus4"]().sample_times(t)          # (steps, 2)
    vals = coeffs(times.ravel()).reshape(2, m, 2, 3)
    a = ordered_product(su2, connection=vals, dt=1.0 / m, method="magnus4")
    b = ordered_product(su2, connection=coeffs, nodes=t, method="magnus4")
    c = ordered_product(su2, connection=su2.algebra(vals), dt=1.0 / m, method="magnus4")
    assert np.max(np.abs(a.value - b.value)) < 1e-14
    assert np.max(np.abs(c.value - b.value)) < 1e-14


def test_exp_euler_exact_increments_order_2(su2, reference):
    # Magnus 1954 / Blanes et al. 2009: with exact step integrals the omitted
    # term is (h^3/12)[A, A'] per step, so the global order is 2 (docstring of ExpEuler).
    slope, errs = observed_order(
        su2, reference, [8, 16, 32, 64, 128],
        lambda t: ordered_product(su2, exact_increments(t), method="exp-euler"),
    )
    assert abs(slope - 2.0) < 0.3, (slope, errs)


def test_exp_euler_left_point_order_1(su2, reference):
    # Left-point sampling h A(t_k): quadrature error (h^2/2) A' per step, order 1.
    slope, errs = observed_order(
        su2, reference, [16, 32, 64, 128, 256],
        lambda t: ordered_product(su2, connection=coeffs, nodes=t, method="exp-euler"),
    )
    assert abs(slope - 1.0) < 0.3, (slope, errs)


def test_ito_euler_drift_shrinks_with_step(su2, reference):
    # (I + X)^*(I + X) = I - X^2 for X anti-Hermitian: drift ~ sum ||X_k||^2 = O(h).
    drifts, errs = [], []
    steps_list = [16, 32, 64, 128, 256]
    for m in steps_list:
        inc = exact_increments(np.linspace(0, 1, m + 1))
        r = ordered_product(su2, inc, method="ito-euler")
        assert isinstance(r, ProductResult) and r.method == "ito-euler" and r.steps == m
        drifts.append(r.drift)
        errs.append(np.max(np.abs(r.value - reference)))
    assert drifts[-1] > 1e-4           # really off the group
    assert all(a > b for a, b in zip(drifts, drifts[1:]))
    h = 1.0 / np.asarray(steps_list)
    assert abs(np.polyfit(np.log(h), np.log(drifts), 1)[0] - 1.0) < 0.3
    assert abs(np.polyfit(np.log(h), np.log(errs), 1)[0] - 1.0) < 0.3


@pytest.mark.parametrize("name", ["exp-euler", "magnus2", "magnus4"])
def test_group_preserving_schemes_stay_on_su2(su2, name):
    r = ordered_product(su2, connection=coeffs, nodes=np.linspace(0, 1, 50), method=name)
    assert r.drift < 1e-13
    assert PRODUCT_SCHEMES[name].group_preserving


# --------------------------------------------------------------------------- products


@pytest.mark.parametrize("m", [1, 2, 3, 5, 7, 16, 17, 100])
def test_tree_equals_sequential_product(m):
    # Associativity: the pairwise reduction equals the left-to-right loop of numpy matmuls.
    rng = np.random.default_rng(7)
    for n in (2, 3):
        f = rng.normal(size=(4, m, n, n)) + 1j * rng.normal(size=(4, m, n, n))
        seq = f[:, 0]
        for k in range(1, m):
            seq = seq @ f[:, k]
        got = tree_product(f)
        assert np.allclose(got, seq, rtol=1e-12, atol=1e-12 * np.abs(seq).max())
        assert np.allclose(_sequential_product(f), seq, rtol=1e-12,
                           atol=1e-12 * np.abs(seq).max())


@pytest.mark.parametrize("family,n", [("SU", 3), ("SO", 4), ("Sp", 2), ("U", 2)])
def test_directions_invert_factors(family, n):
    # A step with direction -1 contributes the inverse factor (numpy.linalg.inv).
    G = make_group(family, n)
    rng = np.random.default_rng(11)
    x = 0.4 * rng.normal(size=(3, 9, G.dim))
    dirs = rng.choice([-1, 1], size=(3, 9))
    f = scipy.linalg.expm(G.algebra(x))                      # reference exponentials
    expect = np.array([np.eye(G.N)] * 3, dtype=f.dtype)
    for k in range(9):
        fk = np.where(dirs[:, k, None, None] > 0, f[:, k], np.linalg.inv(f[:, k]))
        expect = expect @ fk
    from_factors = ordered_product(G, factors=f, directions=dirs)
    from_increments = ordered_product(G, x, directions=dirs)
    assert from_factors.method == "factors"
    assert np.max(np.abs(from_factors.value - expect)) < 1e-12
    assert np.max(np.abs(from_increments.value - expect)) < 1e-12
    # One shared direction row (shape (steps,)) broadcasts over the samples.
    one = ordered_product(G, x[:1], directions=dirs[0])
    assert np.max(np.abs(one.value[0] - expect[0])) < 1e-12


@pytest.mark.parametrize("family,n", [("SU", 3), ("SO", 4), ("Sp", 2)])
@pytest.mark.parametrize("name", ["exp-euler", "magnus2", "magnus4"])
def test_results_stay_on_group(family, n, name):
    G = make_group(family, n)
    rng = np.random.default_rng(5)
    m = 200
    if name == "exp-euler":
        r = ordered_product(G, 0.3 * rng.normal(size=(8, m, G.dim)), method=name)
    else:
        q = len(PRODUCT_SCHEMES[name].nodes)
        vals = rng.normal(size=(8, m, q, G.dim))
        r = ordered_product(G, connection=vals, dt=0.05, method=name)
    assert r.value.shape == (8, G.N, G.N)
    assert r.drift < 1e-12
    # Independent check of the same property (unitarity) with numpy alone.
    uu = np.conj(np.swapaxes(r.value, -1, -2)) @ r.value
    assert np.max(np.abs(uu - np.eye(G.N))) < 1e-12
    if family in ("SU", "SO", "Sp"):
        assert np.max(np.abs(np.linalg.det(r.value) - 1)) < 1e-12


def test_exp_euler_matches_scipy_expm_sequential():
    # scipy.linalg.expm per step, multiplied in order: the naive definition.
    G = make_group("SU", 3)
    x = 0.5 * np.random.default_rng(2).normal(size=(2, 13, G.dim))
    ref = _sequential_product(scipy.linalg.expm(G.algebra(x)))
    assert np.max(np.abs(ordered_product(G, x).value - ref)) < 1e-12


@pytest.mark.parametrize("name", ["exp-euler", "magnus2", "magnus4"])
def test_reversed_path_gives_inverse(su2, name):
    # Traversing the path backwards (steps reversed, all directions -1) inverts U.
    q = len(PRODUCT_SCHEMES[name].nodes)
    vals = np.random.default_rng(3).normal(size=(3, 20, q, 3))
    fwd = ordered_product(su2, connection=vals, dt=0.1, method=name)
    bwd = ordered_product(su2, connection=vals[:, ::-1], dt=0.1, method=name,
                          directions=-np.ones(20))
    assert np.max(np.abs(fwd.value @ bwd.value - np.eye(2))) < 1e-13


def test_project_flag(su2):
    r = ordered_product(su2, exact_increments(np.linspace(0, 1, 17)), method="ito-euler",
                        project=True)
    assert r.reprojected and r.drift < 1e-13 and r.drift_before_projection > 1e-3


def test_method_as_subclass(su2, reference):
    class Trapezoid(ProductScheme):
        name, order, nodes = "trapezoid", 2, (0.0, 1.0)
        group_preserving, takes_increments = True, False

        def _generator_impl(self, values, h):
            return 0.5 * h[:, None, None] * (values[:, :, 0] + values[:, :, 1])

    # Exponential trapezoid rule is order 2 as well (Blanes et al. 2009; from memory).
    slope, errs = observed_order(
        su2, reference, [8, 16, 32, 64],
        lambda t: ordered_product(su2, connection=coeffs, nodes=t, method=Trapezoid),
    )
    assert abs(slope - 2.0) < 0.3


def test_scheme_registry_invariants():
    for key, cls in PRODUCT_SCHEMES.items():
        assert cls.name == key and issubclass(cls, ProductScheme)
        assert all(0.0 <= c <= 1.0 for c in cls.nodes) and len(cls.nodes) >= 1
    # Gauss-Legendre nodes on [0, 1] (numpy.polynomial.legendre.leggauss on [-1, 1]).
    x, _ = np.polynomial.legendre.leggauss(2)
    assert np.allclose(PRODUCT_SCHEMES["magnus4"].nodes, (x + 1) / 2, atol=1e-15)


# --------------------------------------------------------------------------- bad input


def test_ordered_product_iv(su2):
    x = np.zeros((2, 4, 3))
    with pytest.raises(ValueError, match=r"`method` must be one of \['exp-euler', "
                                         r"'ito-euler', 'magnus2', 'magnus4'\]"):
        ordered_product(su2, x, method="rk4")
    with pytest.raises(TypeError, match="`method` must be one of"):
        ordered_product(su2, x, method=3)
    with pytest.raises(ValueError, match="exactly one of `increments`, `factors` or "
                                         "`connection`"):
        ordered_product(su2)
    with pytest.raises(ValueError, match="exactly one of"):
        ordered_product(su2, x, factors=np.zeros((2, 4, 2, 2)))
    with pytest.raises(ValueError, match="give one of `nodes` and `dt`, not both"):
        ordered_product(su2, connection=coeffs, nodes=[0, 1], dt=0.5)
    with pytest.raises(ValueError, match=r"`nodes` must be a 1-D array"):
        ordered_product(su2, connection=coeffs, nodes=[0.0])
    with pytest.raises(ValueError, match=r"`increments` has shape \(2, 4, 5\)"):
        ordered_product(su2, np.zeros((2, 4, 5)))
    with pytest.raises(ValueError, match=r"`factors` has shape \(4, 2, 2\)"):
        ordered_product(su2, factors=np.zeros((4, 2, 2)))
    with pytest.raises(ValueError, match="`method`='magnus4' needs the connection"):
        ordered_product(su2, x, method="magnus4")
    with pytest.raises(ValueError, match="`method`='magnus2' does not apply to `factors`"):
        ordered_product(su2, factors=np.zeros((2, 4, 2, 2)), method="magnus2")
    with pytest.raises(ValueError, match="`directions` must hold only"):
        ordered_product(su2, x, directions=[1, 0, 1, 1])
    with pytest.raises(ValueError, match=r"`directions` .* shape \(4,\) or \(2, 4\)"):
        ordered_product(su2, x, directions=[1, 1, 1])
    with pytest.raises(ValueError, match="`connection` needs the step boundaries"):
        ordered_product(su2, connection=np.zeros((2, 4, 2, 3)))
    with pytest.raises(ValueError, match="`dt` must be a positive"):
        ordered_product(su2, connection=np.zeros((2, 4, 2, 3)), dt=-0.1)
    with pytest.raises(ValueError, match=r"`nodes` must be strictly increasing; got "
                                         r"nodes\[1\] = 0.5 followed by 0.4"):
        ordered_product(su2, connection=coeffs, nodes=[0, 0.5, 0.4])
    with pytest.raises(ValueError, match="`nodes` has 3 times for 4 steps"):
        ordered_product(su2, connection=np.zeros((2, 4, 2, 3)), nodes=[0, 0.5, 1])
    with pytest.raises(ValueError, match="a callable `connection` needs"):
        ordered_product(su2, connection=coeffs, dt=0.1)
    with pytest.raises(ValueError, match="`connection` has 1 values per step"):
        ordered_product(su2, connection=np.zeros((2, 4, 1, 3)), dt=0.1, method="magnus4")
    with pytest.raises(ValueError, match=r"`connection\(t\)` returned shape"):
        ordered_product(su2, connection=lambda t: np.zeros(3), nodes=[0, 1])
    with pytest.raises(ValueError, match=r"`increments` matrices are not in the Lie "
                                         r"algebra of SU\(2\)"):
        ordered_product(su2, np.ones((2, 4, 2, 2)))             # not anti-Hermitian
    with pytest.raises(ValueError, match=r"`connection` matrices are not in the Lie"):
        ordered_product(su2, connection=np.ones((1, 4, 2, 2, 2)), dt=0.1)
    with pytest.raises(ValueError, match=r"`factors` are not on the group SU\(2\)"):
        ordered_product(su2, factors=2 * np.ones((1, 3, 2, 2)))
    with pytest.raises(ValueError, match=r"`directions` .* values \[0, 1\]"):
        ordered_product(su2, x, directions=[1, 0, 1, 1])
    with pytest.raises(ValueError, match="at least one step"):
        ordered_product(su2, np.zeros((2, 0, 3)))
    with pytest.raises(TypeError, match="`group` must be a Group"):
        ordered_product("SU2", x)
    with pytest.raises(TypeError, match="`project` must be True or False"):
        ordered_product(su2, x, project="yes")
    with pytest.warns(UserWarning, match="`nodes` and `dt` apply only to `connection`"):
        ordered_product(su2, x, dt=0.1)


def test_large_su2_batch_uses_same_product():
    # >= 1024 samples of 2 x 2 factors take the loop over steps instead of the tree;
    # both must equal the left-to-right product by numpy.matmul of the same factors
    # (Group.exp is checked against scipy.linalg.expm in tests/holonomy/groups; scipy's
    # expm on 7700 matrices would take most of this file's time).
    G = make_group("SU", 2)
    x = 0.5 * np.random.default_rng(4).normal(size=(1100, 7, 3))
    f = G.exp(x)
    ref = f[:, 0]
    for k in range(1, 7):
        ref = np.matmul(ref, f[:, k])
    assert np.max(np.abs(ordered_product(G, x).value - ref)) < 1e-13
    assert np.max(np.abs(ordered_product(G, x[:10]).value - ref[:10])) < 1e-13


def test_so3_zero_increments_are_identity():
    # SO(3) has d == N == 3: zero algebra matrices must not be read as coordinates.
    G = make_group("SO", 3)
    r = ordered_product(G, np.zeros((2, 3, 3, 3)))
    assert r.value.shape == (2, 3, 3)
    assert np.array_equal(r.value, np.broadcast_to(np.eye(3), (2, 3, 3)))


def test_u1_abelian_product_is_exp_of_sum():
    # Abelian group: exp(a) exp(b) = exp(a + b) (numpy.exp of the summed phases), with
    # backward steps subtracted.
    G = make_group("U", 1)
    x = np.random.default_rng(9).normal(size=(5, 40, 1))
    dirs = np.where(np.arange(40) % 3 == 0, -1, 1)
    a = G.algebra(x)[..., 0, 0]                                  # i * phase
    expect = np.exp(np.sum(a * dirs, axis=1))
    r = ordered_product(G, x, directions=dirs)
    assert np.max(np.abs(r.value[:, 0, 0] - expect)) < 1e-12 and r.drift < 1e-13

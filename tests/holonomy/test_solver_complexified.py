"""Complex increments in `ordered_product`: refused by default, computed in the
complexified group with ``complexified=True``.

Outside check: scipy.linalg.expm (Al-Mohy and Higham 2009 scaling and squaring) of each
complex step generator, multiplied in traversal order with numpy; numpy.linalg.det for
the holomorphic defining relations.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg

from holonomy import ordered_product
from holonomy.groups import make_group

GROUPS = [("U", 1), ("SU", 2), ("U", 2), ("SU", 3), ("SO", 3), ("SO", 4), ("Sp", 2)]


def _complex_coords(G, samples=3, steps=5, seed=0):
    rng = np.random.default_rng(seed)
    return 0.6 * (rng.normal(size=(samples, steps, G.dim))
                  + 1j * rng.normal(size=(samples, steps, G.dim)))


def _expm_reference(G, z, directions):
    """prod_k scipy.linalg.expm(d_k Z_k), Z_k = sum_a z_a X_a (complex coordinates)."""
    out = []
    for zs in z:
        u = np.eye(G.N, dtype=complex)
        for zk, d in zip(zs, directions):
            Zk = np.einsum("a,aij->ij", zk, G.basis)
            u = u @ scipy.linalg.expm(d * Zk)
        out.append(u)
    return np.array(out)


@pytest.mark.parametrize("family,n", GROUPS)
def test_complexified_matches_expm_products(family, n):
    G = make_group(family, n)
    z = _complex_coords(G)
    dirs = np.array([1, -1, 1, 1, -1])
    ref = _expm_reference(G, z, dirs)
    r = ordered_product(G, z, directions=dirs, complexified=True)
    assert r.complexified
    assert np.max(np.abs(r.value - ref)) < 1e-12 * max(1.0, np.max(np.abs(ref)))
    # Matrices A + iB given instead of coordinates: the same product.
    Z = np.einsum("...a,aij->...ij", z, G.basis)
    r2 = ordered_product(G, Z, directions=dirs, complexified=True)
    assert np.max(np.abs(r2.value - ref)) < 1e-12 * max(1.0, np.max(np.abs(ref)))
    # Drift: only the holomorphic relations; none for GL(N, C).
    if family == "U":
        assert r.drift is None
    else:
        assert r.drift < 1e-11


def test_complex_increments_refused_by_default():
    G = make_group("SU", 2)
    z = _complex_coords(G)
    with pytest.raises(ValueError, match=r"`increments` is complex.*complexified=True"):
        ordered_product(G, z)
    Z = np.einsum("...a,aij->...ij", z, G.basis)
    with pytest.raises(ValueError, match=r"`increments` is complex.*SL\(2, C\)"):
        ordered_product(G, Z)
    # Real coordinates in a complex array are accepted as they are.
    r = ordered_product(G, z.real + 0j)
    assert np.allclose(r.value, ordered_product(G, z.real).value, atol=1e-15)


def test_complexified_is_the_analytic_continuation():
    # A real product computed both ways agrees, and the group drift is the usual one.
    G = make_group("SU", 3)
    x = _complex_coords(G).real
    a = ordered_product(G, x)
    b = ordered_product(G, x + 0j, complexified=True)
    assert np.max(np.abs(a.value - b.value)) < 1e-13
    # An Ito-Euler product and a smooth connection are complexified too.
    z = _complex_coords(G, steps=4)
    ito = ordered_product(G, z, method="ito-euler", complexified=True)
    ref = np.eye(3) + np.einsum("a,aij->ij", z[0, 0], G.basis)
    for k in range(1, 4):
        ref = ref @ (np.eye(3) + np.einsum("a,aij->ij", z[0, k], G.basis))
    assert np.max(np.abs(ito.value[0] - ref)) < 1e-13
    conn = ordered_product(G, connection=z[:, :, None, :], dt=0.5, method="exp-euler",
                           complexified=True)
    assert np.allclose(conn.value, ordered_product(G, 0.5 * z, complexified=True).value,
                       atol=1e-13)


def test_complexified_bad_input():
    G = make_group("SU", 2)
    z = _complex_coords(G)
    with pytest.raises(ValueError, match="`project`=True does not apply"):
        ordered_product(G, z, complexified=True, project=True)
    with pytest.raises(TypeError, match="`complexified` must be True or False"):
        ordered_product(G, z, complexified="yes")
    # A complex matrix outside sl(2, C) (non-zero trace) is not in the algebra.
    bad = np.zeros((1, 1, 2, 2), complex)
    bad[..., 0, 0] = 1.0
    with pytest.raises(ValueError, match="not in the complexified Lie algebra"):
        ordered_product(G, bad, complexified=True)
    # Complex factors: in SL(2, C), accepted; det 2 is refused.
    f = scipy.linalg.expm(np.einsum("...a,aij->...ij", z, G.basis))
    r = ordered_product(G, factors=f, directions=[1, -1, 1, -1, 1], complexified=True)
    ref = f[:, 0] @ np.linalg.inv(f[:, 1]) @ f[:, 2] @ np.linalg.inv(f[:, 3]) @ f[:, 4]
    assert np.max(np.abs(r.value - ref)) < 1e-12 * np.max(np.abs(ref))
    with pytest.raises(ValueError, match=r"not in SL\(2, C\)"):
        ordered_product(G, factors=2 ** 0.5 * f, complexified=True)

"""The U(N) master field as N -> infinity (holonomy.exact, large_n): Biane's moments,
the 1/N^2 extrapolation of finite-N exact values, and the Makeenko-Migdal equations."""

import dataclasses

import numpy as np
import pytest
import sympy
from scipy import special

from discretize import arrangement
from holonomy.exact import evaluate_polygon, evaluate_words, lasso_words, master_field_word
from holonomy.groups import make_group

SQUARE = [(0, 0), (1, 0), (1, 1), (0, 1)]
FIG8 = [(0, 0), (2, 2), (2, 0), (0, 2)]  # lobes of opposite orientation
SAME = [(0, 0), (1, 0), (1, 1), (2, 1), (2, 2), (1, 2), (1, 1), (0, 1)]  # same orientation
NESTED = [(2, 0), (4, 0), (4, 4), (0, 4), (0, 1), (3, 1), (3, 3), (2, 3)]  # one nested lobe
ENTANGLED_2 = [(0, 0), (4, 0), (4, 3), (1, 3), (1, 2), (3, 2), (3, 1), (2, 1), (2, 4), (0, 4)]
ENTANGLED_3 = [(3, 0), (2, 0), (2, 4), (1, 4), (1, 1), (4, 1), (4, 3), (0, 3), (0, 2), (3, 2)]


def biane(n, t):
    # moments of the free unitary Brownian motion: nu_n(t) = e^{-nt/2} L_{n-1}^{(1)}(nt) / n
    # (Biane 1997, Fields Inst. Commun. 12; Laguerre form from memory)
    return np.exp(-n * t / 2) * special.eval_genlaguerre(n - 1, 1, n * t) / n


@pytest.mark.parametrize("n", [1, 2, 3, 5, 8])
@pytest.mark.parametrize("t", [0.3, 1.0, 4.0])
def test_wound_loops_equal_biane(n, t):
    r = evaluate_polygon(None, SQUARE, turns=n, coupling=t)
    assert r.value == pytest.approx(biane(n, t), abs=1e-12)
    assert master_field_word([1] * n, [t]) == pytest.approx(biane(n, t), abs=1e-12)


def _finite_n(poly, lam, N):
    return evaluate_polygon(make_group("U", N, "large-n"), poly, coupling=lam).value.real


@pytest.mark.parametrize("poly", [FIG8, SAME, NESTED,
                                  pytest.param(ENTANGLED_2, marks=pytest.mark.slow)],
                         ids=["figure-eight", "same-lobes", "nested", "two-crossings"])
def test_large_n_extrapolation(poly):
    # finite-N exact values are polynomials in 1/N^2 times exponentials; a quadratic
    # fit in x = 1/N^2 through N = 8, 16, 32 has error O(N^-6) ~ 1e-9 at x = 0
    # (Levy 2011, "The master field on the plane": convergence as N -> infinity)
    lam = 0.7
    xs = np.array([1 / 64, 1 / 256, 1 / 1024])
    ys = np.array([_finite_n(poly, lam, N) for N in (8, 16, 32)])
    fit = np.polyfit(xs, ys, 2)
    limit = evaluate_polygon(None, poly, coupling=lam).value
    assert abs(limit - fit[-1]) < 1e-4


def _faces_around(arr, v):
    """Faces around vertex v, counterclockwise (left of each outgoing half-edge)."""
    outs = [2 * e for e in range(len(arr.edges)) if arr.edges[e][0] == v]
    outs += [2 * e + 1 for e in range(len(arr.edges)) if arr.edges[e][1] == v]

    def angle(h):
        e = h // 2
        a, b = arr.vertices[arr.edges[e]]
        d = (b - a) if h % 2 == 0 else (a - b)
        return np.arctan2(d[1], d[0])

    outs.sort(key=angle)
    return [arr.left_face[h // 2] if h % 2 == 0 else arr.right_face[h // 2] for h in outs]


def _split_words(arr, v):
    """The lasso words of the two loops obtained by splitting the loop at v."""
    path = arr.paths[0].tolist()
    tails = [arr.edges[h // 2][0] if h % 2 == 0 else arr.edges[h // 2][1] for h in path]
    i, j = [k for k, x in enumerate(tails) if x == v]
    parts = (path[i:j], path[j:] + path[:i])
    out = []
    for p in parts:
        sub = dataclasses.replace(arr, paths=(np.array(p),), curve_turns=(1,))
        out.append(lasso_words(sub)[0])
    return out


@pytest.mark.parametrize("poly", [NESTED, ENTANGLED_2, ENTANGLED_3])
def test_makeenko_migdal(poly):
    # at a crossing with faces F1..F4 around it (F1, F3 of extreme winding w, w + 2;
    # F2, F4 of winding w + 1): (d1 - d2 + d3 - d4) Phi(L) = -Phi(L1) Phi(L2), the
    # derivative along the unbounded face being 0 (Makeenko and Migdal 1979; Kazakov
    # and Kostov 1980; Levy 2011, sec. 6; sign for this orientation convention fixed by
    # the figure-eight, where it reads -Phi = -Phi(lobe 1) Phi(lobe 2))
    arr = arrangement(poly)
    word = lasso_words(arr)[0]
    times = 0.6 * arr.areas
    wind = np.r_[arr.winding, 0]  # index -1: the unbounded face

    def phi(ts, w=word):
        return evaluate_words(None, [w], list(ts), large_n=True).value.real

    for v in range(len(arr.vertices) - arr.n_crossings, len(arr.vertices)):
        faces = _faces_around(arr, v)
        ws = [wind[f] for f in faces]
        mid = sorted(ws)[1]
        lhs = 0.0
        for f, w in zip(faces, ws):
            if f < 0:
                continue
            h = 1e-5
            tp, tm = times.copy(), times.copy()
            tp[f] += h
            tm[f] -= h
            d = (phi(tp) - phi(tm)) / (2 * h)
            lhs += d if w != mid else -d
        w1, w2 = _split_words(arr, v)
        rhs = -phi(times, w1) * phi(times, w2)
        assert lhs == pytest.approx(rhs, abs=1e-7)


def test_dispatcher_master_field():
    from discretize import Grid, Loop

    from holonomy.exact import exact_master_field

    r = exact_master_field(Loop.polygon(SQUARE, turns=3), coupling=0.8)
    assert r.method == "free-unitary" and r.value == pytest.approx(biane(3, 0.8), abs=1e-12)
    lat = Loop.polygon(NESTED).snap(Grid((0.0, 0.0), 1.0, (6, 6)))
    r = exact_master_field(lat, coupling=0.3)
    # Kazakov and Kostov 1980: a loop with one nested lobe of area A2 (winding 2) and
    # the rest A1 (winding 1): (1 - A2) exp(-A1 / 2 - A2) (lambda = 1 units)
    a2, a1 = 0.3 * 2.0, 0.3 * 12.0
    assert r.method == "master-field"
    assert r.value == pytest.approx((1 - a2) * np.exp(-a1 / 2 - a2), abs=1e-12)


@pytest.mark.parametrize("poly, turns, closed", [
    # Biane 1997: nu_2(t) = e^{-t} (1 - t), area 1
    (SQUARE, 2, lambda l: sympy.exp(-l) * (1 - l)),
    # Kazakov and Kostov 1980: one nested lobe, A2 = 2 (winding 2), A1 = 12
    (NESTED, 1, lambda l: (1 - 2 * l) * sympy.exp(-l * (12 / sympy.Integer(2) + 2))),
])
def test_master_field_series(poly, turns, closed):
    from discretize import Loop

    from holonomy.exact import master_field_series

    lam = sympy.Symbol("lambda")
    ref = sympy.series(closed(lam), lam, 0, 7).removeO()
    coeffs = master_field_series(Loop.polygon(poly, turns=turns), 6)
    for m, c in enumerate(coeffs):
        assert c == pytest.approx(float(ref.coeff(lam, m)), abs=1e-10 * max(1, 10 ** m))

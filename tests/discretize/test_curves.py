"""Curves: ellipses, the closed list of parametric families, Python callables, exact
face areas and the face-by-face snapping error."""

import math

import numpy as np
import pytest
from scipy import integrate

from discretize import CURVES, Grid, Loop, arrangement


def polar_area(r, t0, t1):
    """(1/2) int r(t)^2 dt: the polar area formula, by scipy.integrate.quad."""
    val, err = integrate.quad(lambda t: 0.5 * r(t) ** 2, t0, t1, epsabs=1e-13, epsrel=1e-13)
    return val


class TestExactAreas:
    # Equations and areas: J. D. Lawrence, "A Catalog of Special Plane Curves" (Dover,
    # 1972); each closed form is checked here against an independent quadrature.

    @pytest.mark.parametrize("a", [0.5, 1.0, 2.3])
    def test_cardioid_six_pi_a_squared(self, a):
        # r = 2a(1 + cos t): area 6 pi a^2 (Lawrence 1972, cardioid).
        quad = polar_area(lambda t: 2 * a * (1 + math.cos(t)), 0, 2 * math.pi)
        assert quad == pytest.approx(6 * math.pi * a * a, rel=1e-12)
        loop = Loop.curve("cardioid", 64, a=a)
        assert loop.specified_area == pytest.approx(quad, rel=1e-12)
        assert loop.exact_faces.faces == ((1, pytest.approx(quad, rel=1e-12)),)

    @pytest.mark.parametrize("a", [0.7, 1.0, 2.0])
    def test_lemniscate_lobes(self, a):
        # (x^2 + y^2)^2 = a^2 (x^2 - y^2), in polar r^2 = a^2 cos 2t: each lobe has area
        # a^2 / 2, the whole curve a^2 (Lawrence 1972, lemniscate of Bernoulli; with the
        # other usual normalization r^2 = 2 a^2 cos 2t the total is 2 a^2).
        lobe = polar_area(lambda t: a * math.sqrt(max(math.cos(2 * t), 0.0)),
                          -math.pi / 4, math.pi / 4)
        assert lobe == pytest.approx(a * a / 2, rel=1e-10)
        loop = Loop.curve("lemniscate", 256, a=a)
        assert sorted(loop.exact_faces.faces) == [(-1, pytest.approx(lobe, rel=1e-10)),
                                            (1, pytest.approx(lobe, rel=1e-10))]
        assert loop.specified_area == 0.0
        # the parametrization lies on the curve
        x, y = loop.vertices.T
        np.testing.assert_allclose((x**2 + y**2) ** 2, a * a * (x**2 - y**2), atol=1e-12)

    @pytest.mark.parametrize("a,b", [(1.0, 1.5), (2.0, 1.0), (1.0, 0.3)])
    def test_limacon_faces(self, a, b):
        # r = b + a cos t; for b < a the inner loop (r < 0) has winding 2.
        faces = dict((w, ar) for w, ar in Loop.curve("limacon", 64, a=a, b=b).exact_faces.faces)
        if b >= a:
            assert faces[1] == pytest.approx(polar_area(lambda t: b + a * math.cos(t), 0, 2 * math.pi), rel=1e-12)
            return
        t0 = math.acos(-b / a)
        inner = polar_area(lambda t: b + a * math.cos(t), t0, 2 * math.pi - t0)
        outer = polar_area(lambda t: b + a * math.cos(t), -t0, t0)
        assert faces[2] == pytest.approx(inner, rel=1e-12)
        assert faces[1] == pytest.approx(outer - inner, rel=1e-12)

    @pytest.mark.parametrize("k", [1, 2, 3, 4])
    def test_rose_petals(self, k):
        # r = a cos(k t): one petal spans |t| < pi / (2k); area pi a^2 / (4k) each.
        a = 1.3
        petal = polar_area(lambda t: a * math.cos(k * t), -math.pi / (2 * k), math.pi / (2 * k))
        faces = Loop.curve("rose", 64, a=a, k=k).exact_faces.faces
        assert len(faces) == (k if k % 2 else 2 * k)
        assert all(w == 1 and ar == pytest.approx(petal, rel=1e-12) for w, ar in faces)

    def test_ellipse(self):
        e = Loop.ellipse((1.0, -2.0), (3.0, 0.5), 2000)
        assert e.specified_area == pytest.approx(math.pi * 1.5, rel=1e-15)
        # the inscribed 2000-gon: area (n/2) a b sin(2 pi / n) (an affine image of the
        # regular polygon, MathWorld "Regular Polygon", from memory)
        assert e.signed_area == pytest.approx(1000 * 1.5 * math.sin(2 * math.pi / 2000), rel=1e-12)
        np.testing.assert_allclose(e.vertices[0], (4.0, -2.0))
        assert e.reversed().specified_area == pytest.approx(-math.pi * 1.5)

    @pytest.mark.parametrize("family,params", [
        ("cardioid", {"a": 1.0}), ("limacon", {"a": 2.0, "b": 1.0}),
        ("lemniscate", {"a": 1.5}), ("rose", {"a": 1.0, "k": 3}), ("rose", {"a": 1.0, "k": 2}),
    ])
    @pytest.mark.parametrize("sides", [128, 257, 258, 512])
    def test_polygon_faces_match_the_curve(self, family, params, sides):
        loop = Loop.curve(family, sides, **params)
        arr = arrangement(loop.vertices)
        areas, matched = loop.face_areas(arr)
        assert matched
        big = areas > 0
        # each polygon face converges to its curve face (inscribed: slightly smaller)
        np.testing.assert_allclose(arr.areas[big], areas[big], rtol=40.0 / sides)
        assert np.dot(arr.winding, areas) == pytest.approx(loop.specified_area, abs=1e-12)


class TestConstructors:
    def test_parametric_callable_vectorized_and_scalar(self):
        n = 40
        vec = Loop.parametric(lambda t: (np.cos(t), np.sin(t)), n)
        sca = Loop.parametric(lambda t: (math.cos(t), math.sin(t)), n)
        np.testing.assert_allclose(vec.vertices, Loop.circle((0, 0), 1.0, n).vertices, atol=1e-15)
        np.testing.assert_allclose(sca.vertices, vec.vertices, atol=1e-15)
        assert vec.exact_faces is None and vec.specified_area == vec.signed_area
        half = Loop.parametric(lambda t: (np.cos(2 * np.pi * t), np.sin(2 * np.pi * t)), n,
                               t_range=(0.0, 1.0))
        np.testing.assert_allclose(half.vertices, vec.vertices, atol=1e-14)

    def test_parametric_errors(self):
        with pytest.raises(TypeError, match="`fn` must be a callable"):
            Loop.parametric(3.0, 10)
        with pytest.raises(ValueError, match="non-finite point"):
            Loop.parametric(lambda t: (np.cos(t), np.where(t > 1, np.inf, 0.0)), 10)
        with pytest.raises(TypeError, match="`fn` must map"):
            Loop.parametric(lambda t: "xy", 10)
        with pytest.raises(ValueError, match="`t_range`"):
            Loop.parametric(np.cos, 10, t_range=(1.0, 0.0))

    def test_curve_errors(self):
        with pytest.raises(ValueError, match="`family` must be one of cardioid"):
            Loop.curve("spiral", 10, a=1.0)
        with pytest.raises(ValueError, match="`b` is missing"):
            Loop.curve("limacon", 10, a=1.0)
        with pytest.raises(ValueError, match="`c` is not a parameter of the cardioid"):
            Loop.curve("cardioid", 10, a=1.0, c=2.0)
        with pytest.raises(ValueError, match="`a` must be a positive"):
            Loop.curve("cardioid", 10, a=-1.0)
        with pytest.raises(ValueError, match="`k` must be an integer >= 1"):
            Loop.curve("rose", 10, a=1.0, k=0)
        assert set(CURVES) == {"cardioid", "limacon", "lemniscate", "rose"}


class TestFaceAreaErrors:
    def test_lemniscate_lobes_judged_by_their_own_areas(self):
        # The figure eight's signed area cancels: the total area error says nothing.
        loop = Loop.curve("lemniscate", 256, a=1.0)
        lat = loop.snap(Grid.covering(loop.bbox, 0.25))
        fe = lat.face_area_errors
        assert abs(lat.area_error) < 1e-12
        assert lat.max_face_area_error > 0.1
        # bookkeeping: the lattice's signed area is the sum over faces, winding times area
        assert np.dot(fe.winding, fe.lattice) == pytest.approx(lat.area, abs=1e-12)
        np.testing.assert_allclose(fe.specified, [0.5, 0.5])
        assert fe.unmatched == 0.0

    def test_error_shrinks_with_spacing(self):
        loop = Loop.curve("cardioid", 512, a=1.0)
        errs = [loop.snap(Grid.covering(loop.bbox, h)).max_face_area_error
                for h in (0.2, 0.1, 0.05, 0.025)]
        assert errs[-1] < 0.01 and errs[-1] < errs[0]
        # one face: the relative face error is the relative total error
        lat = loop.snap(Grid.covering(loop.bbox, 0.05))
        assert lat.max_face_area_error == pytest.approx(abs(lat.area_error) / (6 * math.pi), rel=1e-9)

    def test_lattice_loops_from_moves_have_none(self):
        from discretize import LatticeLoop

        lat = LatticeLoop.from_moves(Grid((0, 0), 1.0, (4, 4)), "R2 U2 L2 D2")
        assert lat.face_area_errors is None and lat.max_face_area_error is None

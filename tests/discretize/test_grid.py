"""Grid and AreaForm: geometry, validation, exact cell integrals."""

import numpy as np
import pytest

from discretize import AreaForm, Grid


class TestGrid:
    def test_nodes_and_centers(self):
        g = Grid((1.0, -2.0), 0.5, (4, 3))
        assert g.node(0, 0) == (1.0, -2.0)
        assert g.node(4, 3) == (3.0, -0.5)
        assert g.extent == (1.0, -2.0, 3.0, -0.5)
        assert g.node_index(2.0, -1.0) == (2, 2)
        X, Y = g.cell_centers()
        assert X.shape == (4, 3) and Y.shape == (4, 3)
        assert X[1, 2] == 1.75 and Y[1, 2] == -0.75
        assert g.cell_area == 0.25

    def test_node_index_tolerance(self):
        g = Grid((0.0, 0.0), 0.1, (10, 10))
        # 0.3 is not exactly 3 * 0.1 in binary: still node 3.
        assert g.node_index(0.3, 0.7) == (3, 7)
        with pytest.raises(ValueError, match=r"`\(x, y\)`.*not on a node.*nearest node is \(3, 7\)"):
            g.node_index(0.31, 0.7)

    def test_contains_box(self):
        g = Grid((0.0, 0.0), 1.0, (4, 2))
        assert g.contains_box(0, 0, 4, 2)
        assert not g.contains_box(-0.1, 0, 4, 2)
        assert not g.contains_box(0, 0, 4, 2.5)

    def test_covering_aligned(self):
        # Vertices at multiples of h land on nodes (origin a multiple of h).
        g = Grid.covering((0.3, -0.2, 1.0, 0.5), 0.1, margin=2)
        assert g.node_index(0.3, -0.2) == (2, 2)
        i, j = g.node_index(1.0, 0.5)
        assert g.contains_node(i + 2, j + 2) and not g.contains_node(i + 3, j)
        ox, oy = g.origin
        assert abs(ox / 0.1 - round(ox / 0.1)) < 1e-9 and abs(oy / 0.1 - round(oy / 0.1)) < 1e-9
        g0 = Grid.covering((0.05, 0.05, 0.95, 0.95), 0.5, margin=0)
        assert g0.origin == (0.0, 0.0) and g0.shape == (2, 2)

    def test_refined(self):
        g = Grid((0.0, 1.0), 1.0, (2, 3)).refined()
        assert g.spacing == 0.5 and g.shape == (4, 6) and g.origin == (0.0, 1.0)

    @pytest.mark.parametrize(
        "kwargs, exc, match",
        [
            (dict(origin=(0, 0), spacing=0.0, shape=(1, 1)), ValueError, r"`spacing` must be a positive finite number, got 0\.0"),
            (dict(origin=(0, 0), spacing=-1.0, shape=(1, 1)), ValueError, r"`spacing` must be a positive"),
            (dict(origin=(0, 0), spacing=float("inf"), shape=(1, 1)), ValueError, r"`spacing` must be a positive finite"),
            (dict(origin=(0, 0), spacing="1", shape=(1, 1)), TypeError, r"`spacing`"),
            (dict(origin=(0, 0), spacing=1.0, shape=(0, 1)), ValueError, r"`shape` must be an integer >= 1, got 0"),
            (dict(origin=(0, 0), spacing=1.0, shape=(1.5, 1)), TypeError, r"`shape` must be an integer"),
            (dict(origin=(0, 0), spacing=1.0, shape=3), TypeError, r"`shape` must be a pair"),
            (dict(origin=(0, float("nan")), spacing=1.0, shape=(1, 1)), ValueError, r"`origin` must be a pair of finite"),
            (dict(origin=5, spacing=1.0, shape=(1, 1)), TypeError, r"`origin`"),
        ],
    )
    def test_validation(self, kwargs, exc, match):
        with pytest.raises(exc, match=match):
            Grid(**kwargs)

    def test_covering_validation(self):
        with pytest.raises(ValueError, match=r"`bbox` must have xmin <= xmax"):
            Grid.covering((1, 0, 0, 1), 0.5)
        with pytest.raises(ValueError, match=r"`spacing` must be a positive"):
            Grid.covering((0, 0, 1, 1), 0.0)
        with pytest.raises(ValueError, match=r"`margin` must be an integer >= 0"):
            Grid.covering((0, 0, 1, 1), 0.5, margin=-1)


def _raster_measures(form, grid, k):
    """Midpoint rule on a k-times finer grid; exact when every rectangle edge is on the
    fine grid's lines (the density is then constant on each fine cell)."""
    h = grid.spacing / k
    fine = Grid(grid.origin, h, (grid.nx * k, grid.ny * k))
    X, Y = fine.cell_centers()
    rho = form.density(X, Y) * h * h
    return rho.reshape(grid.nx, k, grid.ny, k).sum(axis=(1, 3))


class TestAreaForm:
    def test_constant(self):
        g = Grid((0.0, 0.0), 0.25, (3, 2))
        np.testing.assert_array_equal(AreaForm().cell_measures(g), np.full((3, 2), 0.0625))
        np.testing.assert_array_equal(AreaForm(2.0).cell_measures(g), np.full((3, 2), 0.125))
        assert not AreaForm().signed and AreaForm().is_constant

    def test_overlapping_rects_override(self):
        # Later rectangles override earlier ones (painter's order), they do not add.
        f = AreaForm(1.0, [(0, 0, 2, 2, 3.0), {"rect": [1, 1, 3, 3], "value": -1.0}])
        assert f.density(0.5, 0.5) == 3.0
        assert f.density(1.5, 1.5) == -1.0
        assert f.density(2.5, 0.5) == 1.0
        assert f.signed
        # Hand computation: [0,3]^2 has area 9; the 3-region is the 2x2 square minus the
        # unit overlap (area 3), the -1 region has area 4, the rest (area 2) is 1.
        assert f.measure(0, 0, 3, 3) == pytest.approx(3 * 3.0 + 4 * -1.0 + 2 * 1.0, abs=1e-14)

    @pytest.mark.parametrize("h", [1.0, 0.5, 0.3])
    def test_cell_measures_match_fine_raster(self, h):
        # Rectangle edges at multiples of 0.1 (off the coarse lines), raster with h/10
        # per fine cell lands every edge on a fine line when h is a multiple of 0.1.
        f = AreaForm(1.0, [(0.2, 0.3, 1.7, 0.9, 2.5), (0.9, 0.1, 1.3, 1.9, -0.5), (1.1, 0.5, 1.2, 0.6, 7.0)])
        g = Grid((0.0, 0.0), h, (int(round(2.0 / h)), int(round(2.0 / h))))
        np.testing.assert_allclose(f.cell_measures(g), _raster_measures(f, g, int(round(h / 0.1)) * 4), atol=1e-12)

    def test_rect_beyond_grid(self):
        f = AreaForm(0.5, [(-1.0, 0.5, 0.75, 5.0, 3.0), (1.5, -3.0, 9.0, 0.25, 0.0)])
        g = Grid((0.0, 0.0), 0.5, (4, 4))
        np.testing.assert_allclose(f.cell_measures(g), _raster_measures(f, g, 20), atol=1e-12)

    def test_rows_and_columns(self):
        f = AreaForm(1.0, [(0.0, 0.0, 1.0, 1.0, 4.0)])
        g = Grid((0.0, 0.0), 0.5, (4, 4))
        m = f.cell_measures(g)
        assert f.measure_of_rows(g, 0, 0, 4) == pytest.approx(m[0].sum())
        assert f.measure_of_rows(g, 1, 2, 2) == 0.0
        np.testing.assert_allclose(f.measure_of_rows(g, [0, 3], [0, 1], [2, 4]), [2.0, 0.75])
        np.testing.assert_allclose(f.measure_of_columns(g, [0, 3], [0, 0], [4, 4]), [2.5, 1.0])

    @pytest.mark.parametrize(
        "kwargs, exc, match",
        [
            (dict(base=float("nan")), ValueError, r"`base` must be a finite real number"),
            (dict(base="1"), TypeError, r"`base` must be a finite real number"),
            (dict(rects=[(0, 0, 1, 1)]), ValueError, r"`rects\[0\]` must be \(x0, y0, x1, y1, value\)"),
            (dict(rects=[(1, 0, 0, 1, 2.0)]), ValueError, r"`rects\[0\]` must have x0 < x1 and y0 < y1"),
            (dict(rects=[(0, 0, 1, 1, 2.0), (0, 0, 1, float("inf"), 1.0)]), ValueError, r"`rects\[1\]` must be a finite"),
            (dict(rects=[{"rect": [0, 0, 1, 1]}]), ValueError, r"`rects\[0\]` must have exactly the keys"),
            (dict(rects=[3]), TypeError, r"`rects\[0\]`"),
            (dict(rects="abc"), TypeError, r"`rects` must be a sequence"),
        ],
    )
    def test_validation(self, kwargs, exc, match):
        with pytest.raises(exc, match=match):
            AreaForm(**kwargs)

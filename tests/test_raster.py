"""Tests of slipsense.core.raster: the Grid window, bilinear sampling, marching-squares contours.

Map coordinates are (x = east, y = north) metres; grids are north-up with rasterio's affine order
(a, b, c, d, e, f).  References: scipy's RegularGridInterpolator (linear) and rasterio's own
transform helpers and ``DatasetReader.sample`` (nearest cell), both general-purpose libraries.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.interpolate import RegularGridInterpolator

from slipsense.core.raster import Grid, contour_segments, sample_bilinear
from slipsense.errors import DataError

T = (10.0, 0.0, 500000.0, 0.0, -5.0, 4200000.0)  # 10 m wide, 5 m high cells


def make_grid(rows=7, cols=9, seed=0, transform=T):
    values = np.random.default_rng(seed).uniform(100.0, 900.0, size=(rows, cols))
    return Grid(values, transform)


def reference_interpolator(grid):
    """scipy's linear interpolator on the cell centres (y flipped to increase)."""
    x, y = grid.cell_centres()
    return RegularGridInterpolator((y[::-1], x), grid.values[::-1], method="linear")


# --------------------------------------------------------------------------- Grid
@pytest.mark.parametrize(
    "values, transform, match",
    [
        (np.zeros((3, 3)), (10.0, 0.5, 0.0, 0.0, -10.0, 0.0), "rotated or sheared"),
        (np.zeros((3, 3)), (10.0, 0.0, 0.0, 0.2, -10.0, 0.0), "rotated or sheared"),
        (np.zeros((3, 3)), (10.0, 0.0, 0.0, 0.0, 10.0, 0.0), "north-up"),
        (np.zeros((3, 3)), (-10.0, 0.0, 0.0, 0.0, -10.0, 0.0), "north-up"),
        (np.zeros((3, 3)), (10.0, 0.0, 0.0, 0.0, -10.0), "needs 6 numbers"),
        (np.zeros(5), T, r"2-D array of values, got shape \(5,\)"),
        (np.zeros((2, 2, 2)), T, "2-D array"),
        (np.zeros((0, 4)), T, "2-D array"),
    ],
)
def test_grid_validation(values, transform, match):
    with pytest.raises(DataError, match=match):
        Grid(values, transform)


def test_grid_geometry_vs_rasterio():
    from affine import Affine
    from rasterio.transform import array_bounds, xy

    g = make_grid(rows=4, cols=6)
    aff = Affine(*T)
    # A rasterio Affine (9 numbers) is accepted and cut to its 6 coefficients.
    assert Grid(g.values, aff).transform == T
    rows, cols = g.shape
    west, south, east, north = array_bounds(rows, cols, aff)
    assert g.bounds() == pytest.approx((west, south, east, north))
    x, y = g.cell_centres()
    rx, _ = xy(aff, [0] * cols, list(range(cols)), offset="center")
    _, ry = xy(aff, list(range(rows)), [0] * rows, offset="center")
    np.testing.assert_allclose(x, rx)
    np.testing.assert_allclose(y, ry)
    assert g.cell_size == 5.0


def test_from_array_nodata_and_z_factor():
    raw = np.array([[1.0, -9999.0], [np.inf, 4.0]])
    g = Grid.from_array(raw, T, nodata=-9999.0, z_factor=0.3048)
    assert np.isnan(g.values[0, 1]) and np.isnan(g.values[1, 0])
    assert g.values[1, 1] == pytest.approx(4.0 * 0.3048)
    assert raw[0, 1] == -9999.0  # input not mutated


# --------------------------------------------------------------------------- sample_bilinear
def test_bilinear_vs_scipy_inside_centre_extent():
    g = make_grid()
    x, y = g.cell_centres()
    rng = np.random.default_rng(1)
    px = rng.uniform(x[0], x[-1], 2000)
    py = rng.uniform(y[-1], y[0], 2000)
    ref = reference_interpolator(g)(np.column_stack([py, px]))
    np.testing.assert_allclose(sample_bilinear(g, px, py), ref, rtol=1e-12, atol=1e-9)


def test_bilinear_outer_half_cell_uses_edge_values():
    # Between the outer cell centres and the outer edges the value is held constant across that
    # edge: the same as scipy's linear interpolation at the point clamped onto the centre extent.
    g = make_grid()
    x, y = g.cell_centres()
    x0, y0, x1, y1 = g.bounds()
    rng = np.random.default_rng(2)
    px = rng.uniform(x0, x1, 2000)
    py = rng.uniform(y0, y1, 2000)
    ref = reference_interpolator(g)(np.column_stack([np.clip(py, y[-1], y[0]), np.clip(px, x[0], x[-1])]))
    np.testing.assert_allclose(sample_bilinear(g, px, py), ref, rtol=1e-12, atol=1e-9)


def test_bilinear_exact_at_cell_centres():
    g = make_grid()
    x, y = g.cell_centres()
    xx, yy = np.meshgrid(x, y)
    np.testing.assert_array_equal(sample_bilinear(g, xx, yy), g.values)


def test_bilinear_reproduces_a_plane():
    # Bilinear interpolation is exact for z = p x + q y + r.
    g0 = make_grid()
    x, y = g0.cell_centres()
    xx, yy = np.meshgrid(x, y)
    g = Grid(0.02 * (xx - 500000.0) - 0.01 * (yy - 4200000.0) + 300.0, T)
    rng = np.random.default_rng(3)
    px = rng.uniform(x[0], x[-1], 500)
    py = rng.uniform(y[-1], y[0], 500)
    expected = 0.02 * (px - 500000.0) - 0.01 * (py - 4200000.0) + 300.0
    np.testing.assert_allclose(sample_bilinear(g, px, py), expected, atol=1e-9)


def test_bilinear_outside_is_nan():
    g = make_grid()
    x0, y0, x1, y1 = g.bounds()
    px = np.array([x0 - 0.01, x1 + 0.01, (x0 + x1) / 2, (x0 + x1) / 2, x0, x1])
    py = np.array([(y0 + y1) / 2, (y0 + y1) / 2, y0 - 0.01, y1 + 0.01, y0, y1])
    z = sample_bilinear(g, px, py)
    assert np.all(np.isnan(z[:4]))
    assert np.all(np.isfinite(z[4:]))  # the outer edges themselves are inside


def test_bilinear_nan_neighbour_gives_nan():
    g = make_grid()
    v = g.values.copy()
    v[3, 4] = np.nan
    g = Grid(v, T)
    x, y = g.cell_centres()
    # The four squares of centres around cell (3, 4), sampled at their middles: all NaN.
    for dr in (-1, 0):
        for dc in (-1, 0):
            px = (x[4 + dc] + x[5 + dc]) / 2
            py = (y[3 + dr] + y[4 + dr]) / 2
            assert np.isnan(sample_bilinear(g, px, py))
    # The NaN cell's own centre, and a square that does not touch it: NaN and finite.
    assert np.isnan(sample_bilinear(g, x[4], y[3]))
    assert np.isfinite(sample_bilinear(g, (x[0] + x[1]) / 2, (y[0] + y[1]) / 2))
    # Symmetric on all sides: the eight valid cells around the hole keep their exact centre values,
    # and a step of a tenth of a cell from any of them towards the hole gives NaN.
    for dr in (-1, 0, 1):
        for dc in (-1, 0, 1):
            if dr == dc == 0:
                continue
            r, c = 3 + dr, 4 + dc
            assert sample_bilinear(g, x[c], y[r]) == v[r, c]
            assert np.isnan(sample_bilinear(g, x[c] - 0.1 * dc * 10.0, y[r] + 0.1 * dr * 5.0))


def test_bilinear_single_row_and_single_cell():
    t = (2.0, 0.0, 0.0, 0.0, -2.0, 2.0)
    row = Grid(np.array([[0.0, 10.0, 40.0]]), t)
    x, y = row.cell_centres()
    px = np.linspace(x[0], x[-1], 11)
    np.testing.assert_allclose(sample_bilinear(row, px, np.full(11, y[0] + 0.5)), np.interp(px, x, row.values[0]))
    one = Grid(np.array([[7.0]]), t)
    assert sample_bilinear(one, 0.3, 1.9) == 7.0
    assert np.isnan(sample_bilinear(one, 2.1, 1.0))


def test_bilinear_vs_rasterio_sample_at_cell_centres(tmp_path):
    """rasterio's ``sample`` returns the value of the containing cell (nearest), so the two agree
    exactly at cell centres; the DEM round-trips through a GeoTIFF written here."""
    import rasterio
    from affine import Affine

    rows, cols = 6, 8
    values = np.random.default_rng(4).uniform(0.0, 2000.0, size=(rows, cols)).astype("float32")
    values[2, 5] = -9999.0
    path = tmp_path / "dem.tif"
    with rasterio.open(path, "w", driver="GTiff", width=cols, height=rows, count=1, dtype="float32",
                       crs="EPSG:32633", transform=Affine(*T), nodata=-9999.0) as dst:
        dst.write(values, 1)
    with rasterio.open(path) as src:
        g = Grid.from_array(src.read(1), src.transform, nodata=src.nodata)
        x, y = g.cell_centres()
        xx, yy = (a.ravel() for a in np.meshgrid(x, y))
        ref = np.array([s[0] for s in src.sample(zip(xx, yy))], dtype=float)
        nodata = src.nodata
    ours = sample_bilinear(g, xx, yy)
    is_nodata = ref == nodata
    assert is_nodata.sum() == 1
    assert np.all(np.isnan(ours[is_nodata]))
    np.testing.assert_array_equal(ours[~is_nodata], ref[~is_nodata])


# --------------------------------------------------------------------------- contour_segments
def field(fn, nx=40, ny=30, spacing=1.0, x0=-20.0, y0=15.0):
    """Cell-centre coordinates (y decreasing, as on a north-up DEM) and values fn(x, y)."""
    x = x0 + spacing * np.arange(nx)
    y = y0 - spacing * np.arange(ny)
    xx, yy = np.meshgrid(x, y)
    return x, y, fn(xx, yy)


def clipped_line_length(a, b, level, x, y):
    """Length of the line a·x + b·y = level inside [min x, max x] × [min y, max y]."""
    norm2 = a * a + b * b
    p0 = np.array([a, b]) * level / norm2
    d = np.array([-b, a]) / math.sqrt(norm2)
    lo, hi = -np.inf, np.inf
    for k, (vmin, vmax) in enumerate([(x.min(), x.max()), (y.min(), y.max())]):
        if d[k] == 0.0:
            if not vmin <= p0[k] <= vmax:
                return 0.0
            continue
        t1, t2 = sorted([(vmin - p0[k]) / d[k], (vmax - p0[k]) / d[k]])
        lo, hi = max(lo, t1), min(hi, t2)
    return max(hi - lo, 0.0)


def endpoints(segs):
    return segs.reshape(-1, 2)


@pytest.mark.parametrize("frac", [0.07, 0.37, 0.5, 0.93, "vertex"])
@pytest.mark.parametrize("a, b", [(0.7, -0.4), (1.0, 2.0), (0.0, 1.0), (-0.25, 0.0)])
def test_contour_of_a_plane_lies_on_the_level(a, b, frac):
    # Linear interpolation along cell edges is exact for z = a x + b y.  "vertex" takes the level
    # from a grid value, so the contour passes exactly through vertices (they count as above it).
    x, y, v = field(lambda xx, yy: a * xx + b * yy)
    level = v[7, 11] if frac == "vertex" else v.min() + frac * (v.max() - v.min())
    segs = contour_segments(x, y, v, level)
    assert segs.shape[1:] == (2, 2) and len(segs) > 0
    p = endpoints(segs)
    np.testing.assert_allclose(a * p[:, 0] + b * p[:, 1], level, atol=1e-9)
    lengths = np.linalg.norm(segs[:, 1] - segs[:, 0], axis=1)
    assert np.all(lengths > 0)  # no zero-length segments
    # Nothing missing or doubled: the segments add up to the length of the straight level line
    # clipped to the rectangle of cell centres.
    assert lengths.sum() == pytest.approx(clipped_line_length(a, b, level, x, y), rel=1e-9)
    # Every end point lies on a cell edge inside the grid.
    on_x = np.isin(p[:, 0], x)
    on_y = np.isin(p[:, 1], y)
    assert np.all(on_x | on_y)
    assert np.all((p[:, 0] >= x.min()) & (p[:, 0] <= x.max()) & (p[:, 1] >= y.min()) & (p[:, 1] <= y.max()))


def test_contour_of_a_circle_is_closed_and_near_the_radius():
    r = 9.0
    x, y, v = field(lambda xx, yy: (xx - 0.3) ** 2 + (yy - 0.2) ** 2, spacing=0.5, nx=60, ny=60, x0=-15.0, y0=15.0)
    segs = contour_segments(x, y, v, r * r)
    p = endpoints(segs)
    radius = np.hypot(p[:, 0] - 0.3, p[:, 1] - 0.2)
    # Linear interpolation of r² along an edge of length h errs by at most h²/(8r) in radius ≈ 0.004 m.
    np.testing.assert_allclose(radius, r, atol=0.005)
    # Closed curve: every end point is shared by exactly two segments.
    _, counts = np.unique(np.round(p, 9), axis=0, return_counts=True)
    assert np.all(counts == 2)
    # Its length approaches the circumference.
    length = np.sum(np.linalg.norm(segs[:, 1] - segs[:, 0], axis=1))
    assert length == pytest.approx(2 * math.pi * r, rel=2e-3)


def as_set(segs, nd=9):
    return {tuple(sorted((tuple(np.round(s[0], nd)), tuple(np.round(s[1], nd))))) for s in segs}


@pytest.mark.parametrize(
    "values, expected",
    [
        # Corners (row, col): v00 top-left, v01 top-right, v10 bottom-left, v11 bottom-right, with
        # x = [0, 1], y = [0, 1].  Mean 0.375 ≥ 0 has the sign of v00: 00 and 11 are joined through
        # the middle, so the contour cuts off corners 01 and 10.  Edge crossings by hand:
        # top 2/(2+1) = 2/3, right 1/(1+1.5) = 0.4, bottom 0.4, left 2/3.
        ([[2.0, -1.0], [-1.0, 1.5]], {((2 / 3, 0.0), (1.0, 0.4)), ((0.0, 2 / 3), (0.4, 1.0))}),
        # Mean −0.5 < 0: the low corners 01 and 10 are joined; cut off 00 and 11.
        # top 1/3, left 1/3, right 2/3, bottom 2/3.
        ([[1.0, -2.0], [-2.0, 1.0]], {((0.0, 1 / 3), (1 / 3, 0.0)), ((2 / 3, 1.0), (1.0, 2 / 3))}),
        # Symmetric saddle, mean exactly 0: counts as above, like corner 00.
        ([[1.0, -1.0], [-1.0, 1.0]], {((0.5, 0.0), (1.0, 0.5)), ((0.0, 0.5), (0.5, 1.0))}),
        # Mirror: corner 00 below, centre below with it.
        ([[-2.0, 1.0], [1.0, -1.5]], {((2 / 3, 0.0), (1.0, 0.4)), ((0.0, 2 / 3), (0.4, 1.0))}),
    ],
)
def test_contour_saddle(values, expected):
    segs = contour_segments(np.array([0.0, 1.0]), np.array([0.0, 1.0]), np.array(values), 0.0)
    assert segs.shape == (2, 2, 2)
    exp = {tuple(sorted((tuple(np.round(a, 9)), tuple(np.round(b, 9))))) for a, b in expected}
    assert as_set(segs) == exp


def test_contour_nan_square_and_tiny_grids():
    x, y, v = field(lambda xx, yy: xx, nx=6, ny=4, x0=0.0)  # x = 0..5; the 0.5 contour crosses 3 squares
    full = contour_segments(x, y, v, 0.5)
    assert len(full) == 3
    v = v.copy()
    v[1, 1] = np.nan  # a corner of two of those squares
    holed = contour_segments(x, y, v, 0.5)
    assert len(holed) == len(full) - 2
    np.testing.assert_allclose(endpoints(holed)[:, 0], 0.5)
    assert contour_segments(x[:1], y, v[:, :1], 0.5).shape == (0, 2, 2)
    assert contour_segments(x, y, np.zeros((4, 6)), 5.0).shape == (0, 2, 2)

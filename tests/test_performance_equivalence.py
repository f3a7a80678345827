"""The fast paths give the same numbers as the plain ones.

* The DEM read block by block (:class:`BlockRaster`) samples bit for bit what
  :func:`sample_bilinear` gives on a :class:`Grid` of the whole raster read by rasterio (the path
  the QGIS plugin takes), at random points, on block edges, near nodata and off the raster.
* Trace fits are the same through a Grid, a GridSet and a BlockRaster, whatever the batch, chunk
  and tile sizes, on threads, and whatever the other traces are (per-trace random streams).
* The DEM error added in closed form has the distribution of per-sample Gaussian errors
  (Cochran 1934, "The distribution of quadratic forms in a normal system", Proc. Camb. Phil.
  Soc. 30), checked against explicit per-sample noise and numpy's SVD here.
"""
from __future__ import annotations

import numpy as np
import pytest

from conftest import CELL, NX, NY, X0, Y0, write_dem
import slipsense.core.traces as core_traces
from slipsense.core.raster import BlockRaster, ThreadRunner, sample_bilinear
from slipsense.core.traces import Traces, fit_trace_planes
from slipsense.io.dem import open_dem

FIELDS = ("dip", "dip_dir", "dip_lo95", "dip_hi95", "dip_dir_lo95", "dip_dir_hi95", "rms_m",
          "misfit_ratio", "coplanarity", "centroid_z", "n_points")


def _tiled_dem(path, values, block=64):
    import rasterio
    from rasterio.transform import from_origin

    with rasterio.open(path, "w", driver="GTiff", width=values.shape[1], height=values.shape[0], count=1,
                       dtype="float32", crs="EPSG:32633", transform=from_origin(X0, Y0, CELL, CELL),
                       nodata=-9999.0, tiled=True, blockxsize=block, blockysize=block,
                       compress="deflate") as ds:
        ds.write(values.astype("float32"), 1)
    return str(path)


@pytest.fixture(scope="module")
def holey(tmp_path_factory, world):
    """The analytic world's DEM, tiled 64 x 64 (not dividing 400), with a nodata lake."""
    import rasterio

    with rasterio.open(world["dem"]) as ds:
        v = ds.read(1).astype(float)
    yy, xx = np.mgrid[0:NY, 0:NX]
    v[(yy - 150) ** 2 + (xx - 230) ** 2 < 15 ** 2] = -9999.0
    return _tiled_dem(tmp_path_factory.mktemp("holey") / "holey.tif", v)


def _whole(path, z_factor=1.0):
    d = open_dem(path, z_factor=z_factor)
    a, _, c, _, e, f = d.transform
    return d, d.grid_for((c, f + e * d.height, c + a * d.width, f))


def _assert_same(a, b):
    for name in FIELDS:
        np.testing.assert_array_equal(getattr(a, name), getattr(b, name), err_msg=name)
    np.testing.assert_array_equal(a.quality, b.quality)


@pytest.mark.parametrize("z_factor", [1.0, 0.3048])
def test_block_raster_samples_like_the_whole_raster(holey, z_factor):
    d, whole = _whole(holey, z_factor)
    br = d.block_raster(0.0, cache_mb=0.05)  # a tiny cache: blocks are evicted and read again
    rng = np.random.default_rng(1)
    x = X0 + rng.uniform(-30, NX * CELL + 30, 20000)
    y = Y0 - rng.uniform(-30, NY * CELL + 30, 20000)
    # exact cell centres, block edges (every 64 cells) and the raster's outer half cell
    k = np.arange(NX)
    x = np.r_[x, X0 + (k + 0.5) * CELL, X0 + 64 * CELL * np.ones(50), X0 + 0.2 * CELL * np.ones(5)]
    y = np.r_[y, Y0 - (k + 0.5) * CELL, Y0 - np.linspace(5, 3995, 50), Y0 - np.linspace(1, 3999, 5)]
    np.testing.assert_array_equal(br.sample(x, y), sample_bilinear(whole, x, y))
    # a window over a few blocks, repaired where it cannot serve, gives the same too
    ids = br.blocks_near(x[:200], y[:200], 50.0)[:5]
    vals, off = br.window_values(ids)
    grid = br.window(ids)
    z = sample_bilinear(grid, x, y)
    np.testing.assert_array_equal(br.repair(vals.shape, off, ids, x, y, z), sample_bilinear(whole, x, y))


def test_block_raster_refuses_a_rotated_transform():
    from slipsense.errors import DataError

    with pytest.raises(DataError, match="north-up"):
        BlockRaster(lambda *a: None, 10, 10, (10, 1, 0, 0, -10, 0), (4, 4))


@pytest.fixture(scope="module")
def many(world):
    """The world's traces and shifted copies of them: 24 traces over the analytic DEM."""
    base = [world["lines"][k] for k in ("A", "B", "C", "D", "S")]
    lines = []
    for dx in (-300.0, 0.0, 250.0, 500.0, 700.0):
        for line in base:
            lines.append(line + [dx, dx / 3])
    return Traces.from_lines(lines[:24])


def _fit(tr, grid, **kw):
    kw = {"sigma_xy_m": 4.0, "sigma_z_m": 1.5, "draws": 40, "seed": 2, "window_m": 600.0, **kw}
    return fit_trace_planes(tr, grid, **kw)


def test_grid_gridset_and_block_raster_agree(world, holey, many):
    from slipsense.steps import dem_margin_m
    from slipsense.tools.planes import trace_boxes

    d, whole = _whole(holey)
    margin = dem_margin_m(d.cell_size, 4.0)
    ref = _fit(many, whole)
    several = d.grids_for_features(trace_boxes(many), margin, tile_cells=64)
    for grid in (several, d.block_raster(margin), d.block_raster(0.0, cache_mb=0.1),
                 d.block_raster(margin, runner=ThreadRunner(2))):
        got = _fit(many, grid)
        _assert_same(ref.planes, got.planes)
        _assert_same(ref.windows, got.windows)
        np.testing.assert_array_equal(ref.n_nodata, got.n_nodata)
    assert ref.n_nodata.sum() > 0  # the lake is crossed


def test_results_do_not_depend_on_batch_chunk_or_tile_sizes(holey, many, monkeypatch):
    d, _ = _whole(holey)
    ref = _fit(many, d.block_raster(60.0))
    for batch, chunk, tiles, cells in ((300, 2 ** 10, 1, 64 * 64 * 4), (1000, 7 * 333, 2, 10 ** 6), (50, 1, 3, 128 * 128)):
        monkeypatch.setattr(core_traces, "BATCH_POINTS", batch)
        monkeypatch.setattr(core_traces, "CHUNK_ELEMENTS", chunk)
        monkeypatch.setattr(core_traces, "TILE_BATCHES", tiles)
        monkeypatch.setattr(core_traces, "TILE_CELLS", cells)
        got = _fit(many, d.block_raster(60.0, cache_mb=1.0))
        _assert_same(ref.planes, got.planes)
        _assert_same(ref.windows, got.windows)


def test_a_trace_does_not_depend_on_the_others(world, many):
    d, whole = _whole(world["dem"])
    ref = _fit(many, whole, window_m=None)
    lines = [many.xy[many.part_offsets[p]:many.part_offsets[p + 1]] for p in range(many.part_trace.size)]
    changed = [line[::-1] + 40.0 if k % 3 else line for k, line in enumerate(lines)]
    other = _fit(Traces.from_lines(changed), whole, window_m=None)
    for k in range(0, len(lines), 3):
        for name in FIELDS:
            assert getattr(ref.planes, name)[k] == getattr(other.planes, name)[k] or (
                np.isnan(getattr(ref.planes, name)[k]) and np.isnan(getattr(other.planes, name)[k])), name
    # and the seed matters
    assert not np.array_equal(_fit(many, whole, seed=3, window_m=None).planes.dip_lo95, ref.planes.dip_lo95,
                              equal_nan=True)


def test_no_draw_results_equal_the_plain_whole_raster_fit(world):
    """Without draws, the block path gives what fitting the plainly sampled points gives."""
    from slipsense.core.planes import planes_from_points
    from slipsense.core.traces import densify

    d, whole = _whole(world["dem"])
    tr = Traces.from_lines([world["lines"][k] for k in ("A", "B", "C", "D")])
    got = fit_trace_planes(tr, d.block_raster(30.0), draws=0).planes
    dens = densify(tr, d.cell_size)
    z = sample_bilinear(whole, dens.xy[:, 0], dens.xy[:, 1])
    offs = np.r_[0, np.cumsum(np.bincount(dens.trace))]
    _assert_same(planes_from_points(np.column_stack([dens.xy, z]), offs), got)


def test_closed_form_dem_error_matches_per_sample_noise(world):
    """sigma-xy 0, sigma-z 3 m: the drawn dips and residual variances have the distribution that
    perturbing every sample and fitting by SVD gives (Cochran 1934; SVD as an independent fit)."""
    from scipy import stats

    from slipsense.core.traces import densify

    d, whole = _whole(world["dem"])
    line = world["lines"]["A"][::3]
    tr = Traces.from_lines([line])
    dens = densify(tr, 40.0)
    z = sample_bilinear(whole, dens.xy[:, 0], dens.xy[:, 1])
    pts = np.column_stack([dens.xy, z])
    sigma, draws = 3.0, 3000
    # Explicit: perturb every sample, SVD fit.
    rng = np.random.default_rng(11)
    q = pts[None].repeat(draws, 0)
    q[..., 2] += rng.normal(scale=sigma, size=q.shape[:2])
    c = q - q.mean(1, keepdims=True)
    _, sv, vt = np.linalg.svd(c, full_matrices=False)
    n = vt[:, -1, :]
    dips_ref = np.degrees(np.arccos(np.abs(n[:, 2])))
    var_ref = sv[:, -1] ** 2 / pts.shape[0]
    # Closed form, through the kernel (one batch, the same points).
    b = core_traces._plan_tiles(tr, dens, whole, None, None, np.zeros(0, np.intp),
                                core_traces._DrawParams(0.0, sigma, draws, 5, False))[0].batches[0]
    sampler = core_traces._Sampler(whole, core_traces._Tile([b]))
    from slipsense.core.planes import fit_groups

    fit = fit_groups(pts, b.poffs)
    gid = np.zeros(pts.shape[0], np.intp)
    normals, rms2, _, _ = core_traces._draw_batch(b, sampler, core_traces._DrawParams(0.0, sigma, draws, 5, False),
                                                  gid, gid, pts[:, 0], pts[:, 1], pts[:, 2], fit, None)
    dips = np.degrees(np.arccos(np.abs(normals[:, 0, 2])))
    assert stats.ks_2samp(dips, dips_ref).pvalue > 0.001
    assert stats.ks_2samp(rms2[:, 0], var_ref).pvalue > 0.001
    # and the expected residual variance: the data's own plus the part of the vertical error along
    # the normal, sigma^2 n_z^2 (n - 3)/n (least-squares degrees of freedom; common practice), to 3 %
    nz2 = fit.normal[0, 2] ** 2
    expect = fit.eigvals[0, 2] + sigma ** 2 * nz2 * (pts.shape[0] - 3) / pts.shape[0]
    assert rms2[:, 0].mean() == pytest.approx(expect, rel=0.03)


def test_points_beyond_the_read_blocks_are_sampled_exactly(world):
    """A margin of 0 with large vertex errors sends moved points outside the planned blocks: they
    are read when needed and the numbers equal those of the whole raster."""
    d, whole = _whole(world["dem"])
    tr = Traces.from_lines([world["lines"][k] for k in ("A", "D")])
    kw = dict(sigma_xy_m=40.0, sigma_z_m=1.0, draws=30, seed=4)
    br = d.block_raster(0.0)
    _assert_same(fit_trace_planes(tr, whole, **kw).planes, fit_trace_planes(tr, br, **kw).planes)

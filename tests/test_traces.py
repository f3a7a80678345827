"""Planes from traces, windows, structure contours, predicted traces, depth to plane.

Truth comes from closed-form geometry in conftest.py (plane ∩ analytic topography), not from
slipsense.  The "rule of Vs" (a dipping plane's trace Vs up valleys; a vertical plane's trace is
straight whatever the relief) is common practice; the fit is Fernández (2005) total least squares.
"""
from __future__ import annotations

import numpy as np
import pytest

from conftest import CENTRE, TRUTH, dem_z, plane_trace, write_dem
from slipsense.core.orientation import angle_between_planes, plane_to_normal
from slipsense.core.raster import Grid
from slipsense.core.traces import (
    Traces,
    densify,
    depth_to_plane,
    fit_trace_planes,
    plane_elevation,
    predicted_trace_segments,
    structure_contours,
    window_groups,
)
from slipsense.errors import InputError


@pytest.fixture(scope="module")
def grid(world):
    from slipsense.io.dem import open_dem

    d = open_dem(world["dem"])
    return d.grid_for(d_bounds(d), 0.0)


def d_bounds(d):
    a, _, c, _, e, f = d.transform
    return (c, f + e * d.height, c + a * d.width, f)


def test_densify_keeps_vertices_and_spacing():
    tr = Traces.from_lines([np.array([[0, 0], [100, 0], [100, 35]]), [np.array([[0, 10], [0, 40]])]])
    d = densify(tr, 10.0)
    # every vertex is kept
    for v in tr.xy:
        assert np.min(np.hypot(*(d.xy - v).T)) < 1e-12
    steps = np.hypot(*np.diff(d.xy, axis=0).T)[d.part[1:] == d.part[:-1]]
    assert steps.max() <= 10.0 + 1e-9
    assert d.trace.tolist().count(1) == 4  # 30 m part at 10 m -> 4 points
    assert d.along_m[d.part == 0][-1] == pytest.approx(135.0)


@pytest.mark.parametrize("fid", ["A", "B", "C", "D"])
def test_noise_free_traces_recover_planes(world, grid, fid):
    tr = Traces.from_lines([world["lines"][fid]])
    res = fit_trace_planes(tr, grid, draws=0)
    dd, dp = TRUTH[fid]
    got = (res.planes.dip_dir[0], res.planes.dip[0])
    # bilinear sampling of the analytic DEM is the only error source (< 0.05 m)
    assert angle_between_planes(got[0], got[1], dd, dp) < 0.1
    assert res.planes.quality[0] in ("good", "fair")


def test_straight_trace_on_ramp_is_ill_posed(world, grid):
    tr = Traces.from_lines([world["lines"]["S"]])
    res = fit_trace_planes(tr, grid, sigma_xy_m=5, sigma_z_m=2, draws=50)
    assert res.planes.quality[0] == "ill-posed"
    assert np.isnan(res.planes.dip[0]) and np.isnan(res.planes.dip_dir[0])
    assert "collinear" in res.planes.reason[0]


def test_flat_ground_is_ill_posed():
    # A curved trace on flat ground: relief below 3 sigma-z.
    g = Grid(np.full((50, 50), 100.0), (10, 0, 0, 0, -10, 500))
    t = np.column_stack([np.linspace(50, 450, 40), 250 + 80 * np.sin(np.linspace(0, 3, 40))])
    res = fit_trace_planes(Traces.from_lines([t]), g, sigma_xy_m=2, sigma_z_m=1, draws=20)
    assert res.planes.quality[0] == "ill-posed"
    assert "relief" in res.planes.reason[0] or "collinear" in res.planes.reason[0]


def test_monte_carlo_interval_contains_truth_and_is_seeded(world, grid):
    rng = np.random.default_rng(7)
    line = world["lines"]["A"] + rng.normal(scale=4.0, size=world["lines"]["A"].shape)
    tr = Traces.from_lines([line])
    r1 = fit_trace_planes(tr, grid, sigma_xy_m=4, sigma_z_m=1, draws=150, seed=3)
    r2 = fit_trace_planes(tr, grid, sigma_xy_m=4, sigma_z_m=1, draws=150, seed=3)
    p = r1.planes
    assert p.dip_lo95[0] <= TRUTH["A"][1] <= p.dip_hi95[0]
    assert p.dip_dir_lo95[0] <= TRUTH["A"][0] <= p.dip_dir_hi95[0]
    assert p.dip_lo95[0] == r2.planes.dip_lo95[0]
    wider = fit_trace_planes(tr, grid, sigma_xy_m=12, sigma_z_m=1, draws=150, seed=3).planes
    assert (wider.dip_hi95[0] - wider.dip_lo95[0]) > (p.dip_hi95[0] - p.dip_lo95[0])


def test_nodata_points_are_dropped_and_counted(world):
    from slipsense.io.dem import open_dem

    d = open_dem(world["dem"])
    g = d.grid_for(d_bounds(d))
    v = g.values.copy()
    v[180:220, :] = np.nan  # a band of nodata across trace A
    g2 = Grid(v, g.transform)
    res = fit_trace_planes(Traces.from_lines([world["lines"]["A"]]), g2)
    assert 0 < res.n_nodata[0] < res.n_total[0]
    assert res.planes.n_points[0] == res.n_total[0] - res.n_nodata[0]
    assert angle_between_planes(res.planes.dip_dir[0], res.planes.dip[0], *TRUTH["A"]) < 0.1


def test_windows_show_a_change_of_dip_along_strike(grid):
    """A fault dipping 60 in its southern half and 40 in its northern half (one trace, continuous):
    windows must see both dips; the single plane cannot (common practice: look for curvature)."""
    p0 = CENTRE + [-600, 0, 0]
    south = plane_trace(90.0, 60.0, p0, -1500, 0)
    q = np.r_[south[-1], dem_z(*south[-1])]
    north = plane_trace(90.0, 40.0, q, 0, 1500)
    tr = Traces.from_lines([np.vstack([south, north[1:]])])
    res = fit_trace_planes(tr, grid, window_m=600.0)
    w = res.windows
    assert len(w) >= 8
    s_dips = w.dip[res.window_end_m <= 1400]
    n_dips = w.dip[res.window_start_m >= 1600]
    assert np.nanmedian(s_dips) == pytest.approx(60.0, abs=0.5)
    assert np.nanmedian(n_dips) == pytest.approx(40.0, abs=0.5)


def test_window_groups_cover_the_trace():
    tr = Traces.from_lines([np.array([[0.0, 0.0], [1000.0, 0.0]])])
    d = densify(tr, 10.0)
    idx, offs, part, s0, s1 = window_groups(d, 400.0)
    assert s0.tolist() == [0.0, 200.0, 400.0, 600.0]
    assert np.all(np.diff(offs) == 41)
    with pytest.raises(InputError, match="window must be > 0"):
        window_groups(d, 0.0)


def test_structure_contours_lie_on_the_plane():
    c = np.array([1000.0, 2000.0, 500.0])
    zs, lines = structure_contours(c, 120.0, 30.0, -500, 500, 200, 800, 100)
    assert zs.tolist() == [200, 300, 400, 500, 600, 700, 800]
    for z, line in zip(zs, lines):
        zz = plane_elevation(line[:, 0], line[:, 1], c, 120.0, 30.0)
        np.testing.assert_allclose(zz, z, atol=1e-9)
        # along strike (030 RHR): direction of the line
        d = line[1] - line[0]
        assert np.degrees(np.arctan2(d[0], d[1])) % 360 == pytest.approx(30.0)
    # spacing between contours = interval / tan(dip) (common practice)
    gap = np.hypot(*(lines[1, 0] - lines[0, 0]))
    assert gap == pytest.approx(100 / np.tan(np.radians(30.0)))
    with pytest.raises(InputError, match="no structure contours"):
        structure_contours(c, 0.0, 90.0, -1, 1, 0, 100, 10)


def test_predicted_trace_matches_analytic_trace(world, grid):
    dd, dp = TRUTH["B"]
    p0 = CENTRE + [300, 300, 0]
    segs = predicted_trace_segments(grid, p0, dd, dp)
    truth = plane_trace(dd, dp, p0, -1500, 1500, step=2.0)
    # the analytic trace is part of the prediction (within a fraction of a cell) ...
    ends = segs.reshape(-1, 2)
    inside = (np.abs(truth - CENTRE[:2]) < 1800).all(axis=1)
    # ... and every predicted point lies where the analytic DEM meets the plane (bilinear error)
    diff = dem_z(ends[:, 0], ends[:, 1]) - plane_elevation(ends[:, 0], ends[:, 1], p0, dd, dp)
    assert np.max(np.abs(diff)) < 0.2
    q = truth[inside][::10][:, None, :]
    a, b = segs[None, :, 0], segs[None, :, 1]
    t = np.clip(np.sum((q - a) * (b - a), -1) / np.maximum(np.sum((b - a) ** 2, -1), 1e-12), 0, 1)
    dist = np.min(np.hypot(*np.moveaxis(q - (a + t[..., None] * (b - a)), -1, 0)), axis=1)
    assert np.max(dist) < 2.0


def test_depth_to_plane_vertical_and_inclined():
    # plane dipping 45 east through the origin: z = -x
    res = depth_to_plane([[100.0, 0.0, 0.0]], 0.0, 90.0, [0.0, 0.0, 0.0], 90.0, 45.0)
    assert res.depth_m[0] == pytest.approx(100.0)
    assert (res.x[0], res.z[0]) == (pytest.approx(100.0), pytest.approx(-100.0))
    # a hole plunging 45 toward the west from (100, 0, 0) meets z = -x at x = 50
    res = depth_to_plane([[100.0, 0.0, 0.0]], 270.0, 45.0, [0.0, 0.0, 0.0], 90.0, 45.0)
    assert res.x[0] == pytest.approx(50.0) and res.along_m[0] == pytest.approx(50 * np.sqrt(2))
    # parallel hole and a plane behind the collar
    par = depth_to_plane([[100.0, 0.0, 0.0]], 90.0, 45.0, [0.0, 0.0, 0.0], 90.0, 45.0)
    assert par.status[0] == "parallel" and np.isnan(par.depth_m[0])
    above = depth_to_plane([[-100.0, 0.0, 0.0]], 0.0, 90.0, [0.0, 0.0, 0.0], 90.0, 45.0)
    assert above.status[0] == "above"
    ill = depth_to_plane([[0.0, 0.0, 0.0]], 0.0, 90.0, [0.0, 0.0, 0.0], np.nan, np.nan)
    assert ill.status[0] == "ill-posed"


def test_batch_equals_single(world, grid):
    lines = [world["lines"][k] for k in ("A", "B", "C", "D")]
    batch = fit_trace_planes(Traces.from_lines(lines), grid, sigma_xy_m=3, sigma_z_m=1, draws=0)
    for k, line in enumerate(lines):
        one = fit_trace_planes(Traces.from_lines([line]), grid, draws=0)
        assert one.planes.dip[0] == pytest.approx(batch.planes.dip[k], abs=1e-9)
        assert one.planes.dip_dir[0] == pytest.approx(batch.planes.dip_dir[k], abs=1e-9)


def test_multilinestring_is_one_plane(world, grid):
    a = world["lines"]["A"]
    tr = Traces.from_lines([[a[:60], a[80:]]])
    res = fit_trace_planes(tr, grid)
    assert res.planes.n_points.shape == (1,)
    assert angle_between_planes(res.planes.dip_dir[0], res.planes.dip[0], *TRUTH["A"]) < 0.1


def test_plane_normal_convention_used_by_elevation():
    n = plane_to_normal(90.0, 45.0)
    assert n[0] > 0 and n[2] > 0  # upward normal leans toward the dip direction
    assert plane_elevation(10.0, 0.0, [0, 0, 0], 90.0, 45.0) == pytest.approx(-10.0)


def test_demo_like_dem_file_written(tmp_path):
    # write_dem helper round trip (guards the fixture itself)
    import rasterio

    p = write_dem(tmp_path / "d.tif")
    with rasterio.open(p) as ds:
        v = ds.read(1)
        x, y = ds.xy(10, 20)
    assert v[10, 20] == pytest.approx(dem_z(x, y), abs=1e-3)


def test_trace_interval_coverage_over_noise_realisations(world, grid):
    """Calibration of the trace intervals: over 40 independent digitising-noise realisations of
    trace D (4 m per vertex, the model the Monte Carlo assumes), the true dip falls inside the 95 %
    interval in 85-100 % of them (binomial: mean 95 %, sd 3.4 % for 40 trials)."""
    clean = world["lines"]["D"]
    rng = np.random.default_rng(2024)
    hits_dip = hits_dd = 0
    n = 40
    for k in range(n):
        noisy = clean + rng.normal(scale=4.0, size=clean.shape)
        p = fit_trace_planes(Traces.from_lines([noisy]), grid, sigma_xy_m=4.0, draws=80, seed=k).planes
        hits_dip += p.dip_lo95[0] <= TRUTH["D"][1] <= p.dip_hi95[0]
        hits_dd += p.dip_dir_lo95[0] <= TRUTH["D"][0] <= p.dip_dir_hi95[0]
    assert 0.85 <= hits_dip / n <= 1.0
    assert 0.85 <= hits_dd / n <= 1.0


def test_windows_per_trace_group_give_identical_results(world):
    """Reading only the DEM windows under groups of traces (a GridSet) gives exactly the numbers
    of one window over everything: sampling is located from the raster's own origin."""
    from slipsense.io.dem import open_dem
    from slipsense.steps import dem_margin_m
    from slipsense.tools.planes import trace_boxes

    d = open_dem(world["dem"])
    tr = Traces.from_lines([world["lines"][k] for k in ("A", "B", "C", "D")])
    margin = dem_margin_m(d.cell_size, 4.0)
    several = d.grids_for_features(trace_boxes(tr), margin, tile_cells=64)
    assert len(several.grids) > 1
    assert sum(g.values.size for g in several.grids) < d.width * d.height
    one = d.grid_for(tr.bounds(), margin)
    a = fit_trace_planes(tr, several, sigma_xy_m=4, sigma_z_m=1, draws=20, seed=1).planes
    b = fit_trace_planes(tr, one, sigma_xy_m=4, sigma_z_m=1, draws=20, seed=1).planes
    for name in ("dip", "dip_dir", "dip_lo95", "dip_dir_hi95", "rms_m"):
        np.testing.assert_array_equal(getattr(a, name), getattr(b, name))

"""Figures: the equal-area projection, Kamb counting, rose binning, Mohr stresses, and that every
figure draws (matplotlib, Agg).  Frames: vectors are (east, north, up)."""
from __future__ import annotations

import ast
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from slipsense.figures import mohr, rose, stereonet
from slipsense.figures.stereonet import (great_circle_xy, kamb_counting_angle, kamb_density, kamb_density_at,
                                         line_to_xy, xy_to_line)

ENGINE = Path(__file__).resolve().parents[1] / "engine" / "slipsense"


# --- projection ------------------------------------------------------------------------------


@pytest.mark.parametrize("trend,plunge", [(0.0, 90.0), (90.0, 0.0), (90.0, 30.0), (45.0, 60.0), (200.0, 10.0),
                                          (359.9, 45.0), (123.4, 0.0)])
def test_projection_is_snyders_lambert_equal_area(trend, plunge):
    # Snyder (1987) Map Projections - A Working Manual, USGS PP 1395, Lambert azimuthal equal-area,
    # polar aspect, unit primitive: r = sqrt(2) sin((90 - p)/2), x = r sin t, y = r cos t.
    r = np.sqrt(2.0) * np.sin(np.radians(90.0 - plunge) / 2.0)
    x, y = line_to_xy(trend, plunge)
    assert x == pytest.approx(r * np.sin(np.radians(trend)), abs=1e-12)
    assert y == pytest.approx(r * np.cos(np.radians(trend)), abs=1e-12)


def test_projection_agrees_with_pyprojs_laea():
    # Library check: pyproj's laea with lat_0 = -90 and R = 1/sqrt(2) (references.md); a line of
    # plunge p and trend t is the point of latitude -p and longitude t.
    import pyproj

    proj = pyproj.Proj(proj="laea", lat_0=-90, lon_0=0, R=1 / np.sqrt(2.0))
    rng = np.random.default_rng(1)
    t = rng.uniform(0, 360, 500)
    p = rng.uniform(0, 89.9, 500)
    px, py = proj(t, -p)
    x, y = line_to_xy(t, p)
    np.testing.assert_allclose(x, px, atol=1e-9)
    np.testing.assert_allclose(y, py, atol=1e-9)


def test_upward_lines_plot_at_their_lower_twins():
    assert line_to_xy(10.0, -30.0) == pytest.approx(line_to_xy(190.0, 30.0))


@settings(max_examples=200, deadline=None)
@given(st.floats(0.0, 359.99), st.floats(0.0, 89.99))
def test_inverse_projection_round_trip(t, p):
    t2, p2 = xy_to_line(*line_to_xy(t, p))
    assert float(p2) == pytest.approx(p, abs=1e-7)
    if p < 89.9:
        assert abs((float(t2) - t + 180) % 360 - 180) < 1e-6


def test_equal_area_uniform_directions_fill_the_disc_uniformly():
    # Lambert's equal-area property: directions uniform on the lower hemisphere project to points
    # uniform in the disc, so the fraction within radius r is r^2 (derived from the definition).
    rng = np.random.default_rng(7)
    v = rng.normal(size=(200_000, 3))
    v /= np.linalg.norm(v, axis=1, keepdims=True)
    v[:, 2] = -np.abs(v[:, 2])
    t = np.degrees(np.arctan2(v[:, 0], v[:, 1]))
    p = np.degrees(np.arcsin(-v[:, 2]))
    x, y = line_to_xy(t, p)
    r = np.hypot(x, y)
    for q in (0.2, 0.5, 0.8):
        assert np.mean(r <= q) == pytest.approx(q * q, abs=0.005)


def test_great_circles_lie_in_their_planes():
    from slipsense.core.orientation import line_to_vector, plane_to_normal

    for dd, dip in ((120.0, 30.0), (0.0, 90.0), (275.0, 60.0), (10.0, 0.0)):
        x, y = great_circle_xy(dd, dip)
        t, p = xy_to_line(x, y)
        v = line_to_vector(t, np.clip(p, 0, 90))
        assert np.max(np.abs(v @ plane_to_normal(dd, dip))) < 1e-9
        if 0 < dip < 90:  # the dip line is on the circle, strike ends on the primitive
            assert np.min(np.hypot(*(np.array(line_to_xy(dd, dip))[:, None] - np.array([x, y])))) < 1e-9
            assert np.hypot(x[0], y[0]) == pytest.approx(1.0) and np.hypot(x[-1], y[-1]) == pytest.approx(1.0)


# --- Kamb ------------------------------------------------------------------------------------


def test_kamb_counting_area_from_the_significance_level():
    # Kamb (1959, J. Geophys. Res. 64): expected uniform count N*A equals sigma binomial standard
    # deviations: N*A = 3*sqrt(N*A*(1-A)) -> A = 9/(N+9); cap area fraction 1 - cos(theta).
    for n in (10, 40, 100, 1000):
        a = 9.0 / (n + 9.0)
        assert kamb_counting_angle(n) == pytest.approx(np.degrees(np.arccos(1 - a)), abs=1e-12)
        assert n * a == pytest.approx(3.0 * np.sqrt(n * a * (1 - a)))
    with pytest.raises(ValueError, match="at least 1"):
        kamb_counting_angle(0)


def test_kamb_density_of_a_uniform_sample_is_sigma_on_average():
    rng = np.random.default_rng(3)
    v = rng.normal(size=(2000, 3))
    v /= np.linalg.norm(v, axis=1, keepdims=True)
    t = np.degrees(np.arctan2(v[:, 0], v[:, 1]))
    p = np.degrees(np.arcsin(np.abs(v[:, 2])))
    kg = kamb_density(t, p, sigma=3.0, grid_n=41)
    assert np.nanmean(kg.density) == pytest.approx(3.0, rel=0.05)


def test_kamb_density_agrees_with_mplstereonet():
    # Reference library (tests only): mplstereonet's unsmoothed "kamb" method returns
    # max((count - 0.5)/sigma_binomial, 0) on its own grid of counters; ours is count/sigma_binomial.
    import mplstereonet
    from mplstereonet import stereonet_math as sm

    rng = np.random.default_rng(11)
    strike = np.concatenate([rng.normal(30, 12, 40), rng.uniform(0, 360, 20)]) % 360
    dip = np.clip(np.concatenate([rng.normal(60, 8, 40), rng.uniform(0, 90, 20)]), 1, 89)
    lon, lat, dens = mplstereonet.density_grid(strike, dip, measurement="poles", method="kamb", sigma=3,
                                               gridsize=(30, 30))
    plunge, bearing = sm.geographic2plunge_bearing(lon.ravel(), lat.ravel())
    pt, pp = (np.mod(np.asarray(strike) + 90.0 + 180.0, 360.0), 90.0 - np.asarray(dip))  # RHR poles
    counts, ours, n, angle, a = kamb_density_at(bearing, plunge, pt, pp, sigma=3.0)
    sd = np.sqrt(n * a * (1 - a))
    ref = dens.ravel()
    on = ref > 0
    np.testing.assert_allclose(ours[on], ref[on] + 0.5 / sd, atol=1e-9)
    assert np.all(counts[~on] <= 0.5 + 1e-9)


# --- rose --------------------------------------------------------------------------------------


def test_rose_segments_are_length_weighted_and_oriented_by_the_right_hand_rule():
    north_then_east = [np.array([[0.0, 0.0], [0.0, 100.0], [50.0, 100.0]])]
    az, ln = rose.segment_azimuths(north_then_east)
    np.testing.assert_allclose(az, [0.0, 90.0])
    np.testing.assert_allclose(ln, [100.0, 50.0])
    # the same trace digitised backward (segments 270 then 180), on a plane dipping WSW (strike 170)
    south = [north_then_east[0][::-1]]
    az, _ = rose.segment_azimuths(south, dip_dir=260.0)
    np.testing.assert_allclose(az, [90.0, 180.0])  # each within 90 deg of the strike 170
    az, _ = rose.segment_azimuths(south, dip_dir=100.0)  # strike 010
    np.testing.assert_allclose(az, [90.0, 0.0])
    edges, tot = rose.rose_bins([0.0, 90.0], [100.0, 50.0], 10.0, axial=True)
    assert len(edges) == 37 and tot.sum() == pytest.approx(150.0)
    assert tot[0] == tot[18] == pytest.approx(50.0) and tot[9] == tot[27] == pytest.approx(25.0)
    _, tot = rose.rose_bins([5.0, 95.0], [1.0, 2.0], 10.0, axial=False)
    assert tot[0] == 1.0 and tot[9] == 2.0 and tot.sum() == 3.0
    with pytest.raises(ValueError, match="divide 360"):
        rose.rose_bins([0.0], [1.0], 7.0)


# --- Mohr --------------------------------------------------------------------------------------


def test_plane_stresses_textbook_example():
    # Common practice, a textbook exercise (references.md): sigma1 28, sigma3 8 MPa, plane normal at
    # 60 deg to sigma1 -> sigma_n 13 MPa, tau 8.660 MPa.  sigma1 east, sigma2 north, sigma3 up; the
    # plane's upward normal (0.5, 0, 0.866) is 60 deg from east: dip 30 toward 090.
    axes = np.array([[1.0, 0, 0], [0, 1.0, 0], [0, 0, 1.0]])
    sn, tau = mohr.plane_stresses([28.0, 8.0, 8.0], axes, 90.0, 30.0)
    assert float(sn) == pytest.approx(13.0, abs=1e-9)
    assert float(tau) == pytest.approx(8.660254, abs=1e-6)


def test_every_plane_plots_between_the_mohr_circles():
    rng = np.random.default_rng(5)
    s1, s2, s3 = 60.0, 41.0, 25.0
    q, _ = np.linalg.qr(rng.normal(size=(3, 3)))
    sn, tau = mohr.plane_stresses([s1, s2, s3], q, rng.uniform(0, 360, 500), rng.uniform(0, 90, 500))
    inside_big = (sn - (s1 + s3) / 2) ** 2 + tau ** 2 <= ((s1 - s3) / 2) ** 2 + 1e-9
    outside_12 = (sn - (s1 + s2) / 2) ** 2 + tau ** 2 >= ((s1 - s2) / 2) ** 2 - 1e-9
    outside_23 = (sn - (s2 + s3) / 2) ** 2 + tau ** 2 >= ((s2 - s3) / 2) ** 2 - 1e-9
    assert inside_big.all() and outside_12.all() and outside_23.all()
    fig = mohr.mohr_figure([s1, s2, s3], sn[:20], tau[:20], pore_pressure=10.0, slip_tendency=tau[:20] / (sn[:20] - 10))
    assert fig.axes
    with pytest.raises(ValueError, match="σ1 ≥ σ2 ≥ σ3"):
        mohr.mohr_figure([1.0, 2.0, 0.0], sn, tau)


# --- drawing -----------------------------------------------------------------------------------


def test_slip_arrows_point_the_way_the_hanging_wall_moved():
    from slipsense.core.slip import rake_to_vector

    fig = stereonet.new_figure()
    net = stereonet.Stereonet(fig.add_subplot(111))
    dd = np.array([90.0, 90.0, 0.0])
    dip = np.array([60.0, 60.0, 90.0])
    rake = np.array([-90.0, 90.0, 180.0])  # normal, reverse, dextral
    cls = net.slip(dd, dip, rake_to_vector(dd, dip, rake))
    assert list(cls) == ["normal", "reverse", "dextral"]
    arrows = [a for a in net.ax.texts if hasattr(a, "xyann")]
    assert len(arrows) == 3
    radial = []
    for a in arrows:
        (x1, y1), (x0, y0) = a.xy, a.xyann
        radial.append(np.dot([x1 - x0, y1 - y0], [x0, y0]))
    assert radial[0] > 0 and radial[1] < 0  # normal outward, reverse inward
    # dextral on a vertical E-W fault (hanging wall = the dip_dir (north) side): it moved east
    (x1, y1), (x0, y0) = arrows[2].xy, arrows[2].xyann
    assert x1 - x0 > 0 and abs(y1 - y0) < 1e-9


def test_sense_classes():
    assert list(stereonet.sense_class(["normal-dextral", "thrust", "oblique dextral-reverse", "", None,
                                       "sinistral strike-slip"])) == ["normal", "reverse", "dextral", "other",
                                                                       "other", "sinistral"]


def test_every_figure_draws(tmp_path):
    rng = np.random.default_rng(2)
    dd, dip = rng.uniform(0, 360, 30), rng.uniform(5, 89, 30)
    dd[3] = np.nan  # an ill-posed plane is left out, not drawn at 0
    q = np.array(["good", "fair", "poor", "ill-posed", "good", "good"] * 5, dtype=object)
    figs = [stereonet.planes_figure(dd, dip, labels=[f"F{i}" for i in range(30)], quality=q),
            stereonet.fault_slip_figure(dd[4:], dip[4:], rng.normal(size=(26, 3)), p_axes=(dd[4:], dip[4:]),
                                        t_axes=(dd[4:], dip[4:])),
            stereonet.stress_figure({"sigma1": (95.0, 2.0), "sigma2": (5.0, 1.0), "sigma3": (270.0, 88.0)},
                                    {"sigma1": (rng.normal(95, 4, 50), np.abs(rng.normal(2, 3, 50)))},
                                    cones={"sigma1": 8.0, "sigma3": 30.0}),
            rose.rose_figure([[np.cumsum(rng.normal(size=(50, 2)), axis=0) * 10]], [120.0])]
    for k, f in enumerate(figs):
        path = tmp_path / f"f{k}.png"
        f.savefig(path)
        assert path.stat().st_size > 5000


def test_palettes_read_without_colour():
    """Every quality class and sense class differs by more than colour (line style or marker
    shape), so the figures and map styles read in greyscale (Okabe & Ito 2008 colours)."""
    from slipsense.styles import QUALITY_STYLE

    assert len({v[1] for v in QUALITY_STYLE.values()}) == 4 and len({v[3] for v in QUALITY_STYLE.values()}) == 4
    assert len({v[1] for v in stereonet.SENSE_STYLE.values()}) == len(stereonet.SENSE_STYLE)
    assert len({v[1] for v in stereonet.STRESS_STYLE.values()}) == 3


def test_matplotlib_only_in_figures():
    for path in ENGINE.rglob("*.py"):
        rel = path.relative_to(ENGINE)
        if rel.parts[0] == "figures":
            continue
        tree = ast.parse(path.read_text())
        for node in ast.walk(tree):
            names = [a.name for a in node.names] if isinstance(node, ast.Import) else \
                [node.module or ""] if isinstance(node, ast.ImportFrom) else []
            assert not any(n.split(".")[0] == "matplotlib" for n in names), rel

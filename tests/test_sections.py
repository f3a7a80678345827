"""Cross-sections: apparent dips, section geometry, profiles, projection, and the forward model of
a faulted marker seen in sections at several angles to strike.

Frame of every vector and point here: (east, north, up), metres.  Each external check names its
source beside it.
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from conftest import DEMO
from slipsense.core.raster import Grid
from slipsense.core.sections import (
    Section,
    angle_to_strike,
    apparent_dip,
    fit_parallel_planes,
    panel_apparent_dips,
    panel_lines,
    project_points,
    section_profile,
    separations,
    true_dip_from_apparent,
)
from slipsense.core.traces import Traces
from slipsense.errors import DataError, GeometryError, InputError
from slipsense.steps import ContactSet, PlaneSet, PointSet, cross_sections


def unit(v):
    v = np.asarray(v, float)
    return v / np.linalg.norm(v)


def normal_of(dip_dir, dip):
    """Upward unit normal written out here from CONVENTIONS.md (not slipsense's function)."""
    d, g = math.radians(dip_dir), math.radians(dip)
    return np.array([math.sin(d) * math.sin(g), math.cos(d) * math.sin(g), math.cos(g)])


# --------------------------------------------------------------------------- apparent dip
@pytest.mark.parametrize("dip,beta,expected", [
    # derived from tan a = tan d sin b (Ragan 2009, Structural Geology: An Introduction to
    # Geometrical Techniques, 4th ed.); values listed in references.md
    (30.0, 45.0, 22.2077), (30.0, 60.0, 26.5651), (30.0, 90.0, 30.0), (30.0, 0.0, 0.0),
    (60.0, 30.0, math.degrees(math.atan(math.tan(math.radians(60)) * 0.5))),
    (90.0, 20.0, 90.0),
])
def test_apparent_dip_published_formula(dip, beta, expected):
    assert apparent_dip(dip, beta) == pytest.approx(expected, abs=1e-4)


def test_apparent_dip_textbook_worked_example():
    # University lab exercise "Example 3: Determine true dip of a plane given two apparent dips"
    # (studylib.net doc 6673877): a dike with apparent dips of 20 deg along 296 and 30 deg along
    # 046 has the attitude strike 090, true dip 40 N (a graphical solution: read to about 1 deg).
    dip_dir, dip = 0.0, 40.0
    for azimuth, app in ((296.0, 20.0), (46.0, 30.0)):
        beta = angle_to_strike(azimuth, dip_dir)
        assert apparent_dip(dip, beta) == pytest.approx(app, abs=0.5)
        assert true_dip_from_apparent(app, beta) == pytest.approx(dip, abs=1.0)


def test_true_dip_inverts_apparent_dip_and_strike_sections_say_nothing():
    rng = np.random.default_rng(3)
    dip = rng.uniform(1, 89, 200)
    beta = rng.uniform(1, 90, 200)
    assert np.allclose(true_dip_from_apparent(apparent_dip(dip, beta), beta), dip)
    assert np.isnan(true_dip_from_apparent(10.0, 0.0))
    assert np.isnan(apparent_dip(90.0, 0.0))  # a vertical plane seen in a section along it


def test_panel_lines_against_direct_geometry():
    """The slope of the plane's line in the panel, measured from two points of the plane straight
    below the section line (plane elevations written out here), is the apparent dip."""
    rng = np.random.default_rng(7)
    sec = Section.from_vertices([[0.0, 0.0], [3000.0, 1000.0], [3500.0, 4000.0]])
    for _ in range(30):
        dd, dp = rng.uniform(0, 360), rng.uniform(1, 85)
        p = np.array([rng.uniform(0, 3000), rng.uniform(0, 3000), rng.uniform(0, 1000)])
        n = normal_of(dd, dp)
        A, B, C = panel_lines(sec, [dd], [dp], p[None])
        app, toward, sense = panel_apparent_dips(A, B, sec.azimuth[None, :])
        for k in range(sec.n_segments):
            a, b = sec.vertices[k], sec.vertices[k + 1]
            z = lambda q: p[2] - (n[0] * (q[0] - p[0]) + n[1] * (q[1] - p[1])) / n[2]  # noqa: E731
            slope = (z(b) - z(a)) / np.hypot(*(b - a))
            assert app[0, k] == pytest.approx(math.degrees(math.atan(abs(slope))), abs=1e-9)
            assert sense[0, k] == ("end" if slope < 0 else "start")
            # the line A s + B z + C = 0 passes through the plane's point below the segment start
            assert A[0, k] * 0 + B[0, k] * z(a) + C[0, k] == pytest.approx(0.0, abs=1e-6)


def test_demo_ground_truth_apparent_dips():
    """The demo's ground truth (written by its own generator, independent of slipsense) lists the
    apparent dip of every true fault plane in every leg of the section lines."""
    truth = json.loads((DEMO / "ground_truth.json").read_text())
    faults = {f["fault_id"]: (f["dip_dir"], f["dip"]) for f in truth["faults"]}
    n = 0
    for s in truth["sections"]:
        for leg in s["legs"]:
            sec = Section.from_vertices([[leg["start"]["x"], leg["start"]["y"]], [leg["end"]["x"], leg["end"]["y"]]])
            assert sec.azimuth[0] == pytest.approx(leg["azimuth"], abs=1e-5)
            for c in leg["crossings"]:
                dd, dp = faults[c["fault_id"]]
                A, B, C = panel_lines(sec, [dd], [dp], [[c["x"], c["y"], 0.0]])
                app, _, sense = panel_apparent_dips(A, B, sec.azimuth)
                assert app[0, 0] == pytest.approx(c["apparent_dip"], abs=1e-4)
                assert angle_to_strike(sec.azimuth[0], dd) == pytest.approx(c["angle_section_to_strike"], abs=1e-5)
                assert sense[0, 0] == ("end" if "end" in c["apparent_dip_toward"] else "start")
                n += 1
    assert n >= 8


def test_vertical_plane_parallel_to_the_section_has_no_line():
    sec = Section.from_vertices([[0, 0], [1000, 0]])
    A, B, C = panel_lines(sec, [0.0], [90.0], [[0, 50, 0]])
    app, toward, sense = panel_apparent_dips(A, B, sec.azimuth)
    assert sense[0, 0] == "parallel" and np.isnan(app[0, 0])


# --------------------------------------------------------------------------- section geometry
def test_bent_section_segments_azimuths_and_bends():
    sec = Section.from_vertices([[0, 0], [0, 0], [300, 400], [300, 400.0000001], [300, 1400]])
    assert sec.dropped == 2
    # hand-worked: first leg 3-4-5 triangle, azimuth atan2(300, 400) = 36.8699 deg
    assert sec.length_m.tolist() == pytest.approx([500.0, 1000.0])
    assert sec.azimuth.tolist() == pytest.approx([math.degrees(math.atan2(300, 400)), 0.0])
    assert sec.bend_angle.tolist() == pytest.approx([-math.degrees(math.atan2(300, 400))])
    assert sec.start_m.tolist() == [0.0, 500.0]
    with pytest.raises(GeometryError, match="zero length"):
        Section.from_vertices([[5, 5], [5, 5], [5, 5]])


@settings(max_examples=60, deadline=None)
@given(st.floats(-2000, 2000), st.floats(-2000, 2000), st.floats(-500, 2500), st.floats(0, 360))
def test_map_section_round_trip_straight(x, y, z, az):
    a = math.radians(az)
    sec = Section.from_vertices([[100.0, 200.0], [100.0 + 1500 * math.sin(a), 200.0 + 1500 * math.cos(a)]])
    sp = sec.to_section([x, y, z])
    back = sec.to_map(sp.distance_m, sp.elevation_m, sp.offset_m)
    assert np.allclose(back, [x, y, z], atol=1e-6)
    # and the other way
    q = sec.to_map(700.0, z, -250.0)
    sp2 = sec.to_section(q)
    assert (float(sp2.distance_m), float(sp2.offset_m), float(sp2.elevation_m)) == pytest.approx((700.0, -250.0, z))


def test_map_section_round_trip_bent():
    sec = Section.from_vertices([[0, 0], [1000, 0], [1000, 1000], [2000, 2000]])
    rng = np.random.default_rng(11)
    d = rng.uniform(0, sec.total_length_m, 500)
    z = rng.uniform(0, 1000, 500)
    off = rng.uniform(-80, 80, 500)
    # keep away from the bends' wedges, where the nearest point of the line is the vertex
    k = sec.segment_at(d)
    local = d - sec.start_m[k]
    ok = (local > 100) & (local < sec.length_m[k] - 100)
    pts = sec.to_map(d[ok], z[ok], off[ok])
    sp = sec.to_section(pts)
    assert np.allclose(sp.distance_m, d[ok]) and np.allclose(sp.offset_m, off[ok]) and np.allclose(sp.elevation_m, z[ok])
    assert np.all(sp.segment == k[ok])
    # points on the line itself, across the bends too
    on = sec.to_map(np.linspace(0, sec.total_length_m, 97), 10.0)
    assert np.allclose(sec.to_section(on).distance_m, np.linspace(0, sec.total_length_m, 97))
    # right of a segment is positive offset: 10 m south of the first (eastward) leg
    assert float(sec.to_section([500, -10]).offset_m) == pytest.approx(10.0)


# --------------------------------------------------------------------------- profile
def _bumpy(x, y):
    return 900.0 + 40.0 * np.sin(x / 170.0) + 25.0 * np.cos(y / 230.0) + 0.03 * x


def _grid(x0=0.0, y0=4000.0, nx=400, ny=400, cell=10.0, f=_bumpy):
    xc = x0 + cell * (np.arange(nx) + 0.5)
    yc = y0 - cell * (np.arange(ny) + 0.5)
    gx, gy = np.meshgrid(xc, yc)
    return Grid(f(gx, gy), (cell, 0.0, x0, 0.0, -cell, y0)), xc, yc


def test_profile_against_rasterio_sampling_at_cell_centres(tmp_path):
    """A section along a row of cell centres, sampled every cell: every sample is a cell centre, so
    it must equal rasterio's own ``sample`` there (rasterio, a library check)."""
    import rasterio
    from rasterio.transform import from_origin

    grid, xc, yc = _grid()
    path = tmp_path / "dem.tif"
    with rasterio.open(path, "w", driver="GTiff", width=400, height=400, count=1, dtype="float64",
                       crs="EPSG:32633", transform=from_origin(0.0, 4000.0, 10.0, 10.0)) as ds:
        ds.write(grid.values, 1)
    sec = Section.from_vertices([[xc[20], yc[50]], [xc[300], yc[50]], [xc[300], yc[250]]])  # bent too
    prof = section_profile(sec, grid)
    assert np.all(np.diff(prof.distance_m) == pytest.approx(10.0))
    with rasterio.open(path) as ds:
        ref = np.array([v[0] for v in ds.sample(list(zip(prof.x, prof.y)))])
    assert np.allclose(prof.elevation_m, ref, atol=1e-9)
    assert prof.distance_m[-1] == pytest.approx(sec.total_length_m)


def test_profile_against_scipy_linear_interpolation():
    """An oblique bent section: bilinear elevations equal SciPy's linear RegularGridInterpolator on
    the cell centres (library check)."""
    from scipy.interpolate import RegularGridInterpolator

    grid, xc, yc = _grid()
    sec = Section.from_vertices([[333.3, 3700.1], [2901.7, 1210.4], [3600.2, 2500.9]])
    prof = section_profile(sec, grid)
    f = RegularGridInterpolator((yc[::-1], xc), grid.values[::-1], method="linear")
    ref = f(np.column_stack([prof.y, prof.x]))
    assert np.allclose(prof.elevation_m, ref, atol=1e-9)
    steps_ = np.diff(prof.distance_m)
    assert steps_.max() <= 10.0 + 1e-9
    # every vertex (bend) is a sample
    for v in sec.vertices:
        assert np.min(np.hypot(prof.x - v[0], prof.y - v[1])) < 1e-6


# --------------------------------------------------------------------------- projection
def test_projection_along_strike_and_perpendicular():
    sec = Section.from_vertices([[0, 0], [2000, 0]])  # east-west, azimuth 090
    # a plane striking 045 (dip_dir 135) 100 m north of the line at x = 1000: its strike line
    # x - 1000 = y - 100 meets y = 0 at x = 900, after sqrt(2) * 100 m of travel (hand geometry)
    pr = project_points(sec, [[1000.0, 100.0]], 500.0, "strike", dip_dir=[135.0])
    assert float(pr.distance_m[0]) == pytest.approx(900.0)
    assert float(pr.travel_m[0]) == pytest.approx(100 * math.sqrt(2))
    assert pr.method[0] == "strike" and pr.status[0] == "ok" and float(pr.offset_m[0]) == pytest.approx(-100.0)
    pr = project_points(sec, [[1000.0, 100.0]], 500.0, "perpendicular")
    assert float(pr.distance_m[0]) == pytest.approx(1000.0) and float(pr.travel_m[0]) == pytest.approx(100.0)
    # too far; strike along the section (falls back to perpendicular); just past the end but its
    # strike line meets the section at x = 1995; its strike line meets the line beyond the end
    pr = project_points(sec, [[1000.0, 900.0], [1000.0, 50.0], [2005.0, 10.0], [2600.0, 10.0]], 500.0, "strike",
                        dip_dir=[135.0, 0.0, 135.0, 135.0])
    assert list(pr.status) == ["too far", "strike fallback", "ok", "beyond the ends"]
    assert pr.method[1] == "perpendicular" and float(pr.distance_m[1]) == pytest.approx(1000.0)
    assert float(pr.distance_m[2]) == pytest.approx(1995.0)
    pr = project_points(sec, [[2600.0, 10.0]], 500.0, "perpendicular")
    assert pr.status[0] == "beyond the ends" and pr.segment[0] == -1
    with pytest.raises(InputError, match="strike, perpendicular"):
        project_points(sec, [[0, 0]], 10.0, "sideways")


# --------------------------------------------------------------------------- separations
def test_separation_textbook_case():
    """A horizontal bed with vertical separation 10 m (hanging wall down) on a fault dipping 30 deg,
    seen in a dip section: the separation along the fault's line (the dip separation) is 20 m
    (references.md: exam-style check, published)."""
    m = np.array([0.0, 0.0, 1.0])
    o = unit([-math.cos(math.radians(30)), 0.0, math.sin(math.radians(30))])  # up the dip of a fault dipping east
    t = np.array([1.0, 0.0, 0.0])
    s = separations(m, [0, 0, -10.0], [0, 0, 0.0], o, t)
    assert s["separation_m"] == pytest.approx(-20.0)
    assert s["vertical_separation_m"] == pytest.approx(-10.0)
    assert np.isnan(s["horizontal_separation_m"])  # a horizontal bed has no horizontal separation


def test_parallel_plane_fit_against_explicit_svd():
    """The shared normal equals the smallest right singular vector of the stacked, per-group
    centred points (an explicit SVD written here)."""
    rng = np.random.default_rng(5)
    n = normal_of(352.0, 11.0)
    pts, grp = [], []
    for gi, shift in enumerate([0.0, 80.0, -45.0]):
        xy = rng.uniform(-500, 500, (60, 2))
        z = -(n[0] * xy[:, 0] + n[1] * xy[:, 1]) / n[2] + shift + rng.normal(0, 1.0, 60)
        pts.append(np.column_stack([xy, z]))
        grp += [gi] * 60
    pts = np.vstack(pts)
    grp = np.array(grp)
    f = fit_parallel_planes(pts, grp, 3)
    centred = np.vstack([pts[grp == g] - pts[grp == g].mean(0) for g in range(3)])
    v = np.linalg.svd(centred)[2][-1]
    v = v if v[2] > 0 else -v
    assert np.allclose(f.normal, v, atol=1e-9)
    assert np.allclose(f.centroid, [pts[grp == g].mean(0) for g in range(3)])
    # batched: the same over a leading axis
    fb = fit_parallel_planes(np.stack([pts, pts]), grp, 3)
    assert np.allclose(fb.normal[1], f.normal)


# --------------------------------------------------------------------------- forward model
FAULT = (100.0, 55.0)             # dip_dir, dip of the fault (strike 010)
FAULT_P = np.array([2000.0, 2000.0, 0.0])
SLIP_RAKE = -60.0                 # normal-sinistral
SLIP_NET = 150.0
BED = (20.0, 35.0)                # marker 1
DYKE = (190.0, 75.0)              # marker 2 (non-parallel cutoff)


def _slip_vector():
    d, g, lam = map(math.radians, (FAULT[0], FAULT[1], SLIP_RAKE))
    s = np.array([math.sin(d - math.pi / 2), math.cos(d - math.pi / 2), 0.0])
    e = -np.array([math.sin(d) * math.cos(g), math.cos(d) * math.cos(g), -math.sin(g)])
    return SLIP_NET * (math.cos(lam) * s + math.sin(lam) * e)


def _contact_points(interp, dip_dir, dip, point, along, fault_side):
    """Contact of a marker plane with the bilinear DEM (SciPy's linear interpolator = the truth),
    by bisection along the marker's dip direction, one root per along-strike station; only the
    part on one side of the fault (``fault_side`` +1 hanging wall, -1 footwall) more than 20 m
    from it and inside the DEM."""
    n = normal_of(dip_dir, dip)
    dh = unit([n[0], n[1], 0.0])[:2]
    sh = np.array([dh[1], -dh[0]])
    base = point[:2] + along[:, None] * sh                                   # (S, 2)

    def g(t):  # t (S, ...) -> plane minus ground
        xy = base.reshape((-1,) + (1,) * (t.ndim - 1) + (2,)) + t[..., None] * dh
        zp = point[2] - (n[0] * (xy[..., 0] - point[0]) + n[1] * (xy[..., 1] - point[1])) / n[2]
        zg = interp(np.stack([xy[..., 1], xy[..., 0]], -1))
        return zp - zg

    ts = np.broadcast_to(np.linspace(-1500, 1500, 301), (along.size, 301))
    v = g(ts)
    change = np.isfinite(v[:, :-1]) & np.isfinite(v[:, 1:]) & (np.sign(v[:, :-1]) != np.sign(v[:, 1:]))
    one = change.sum(axis=1) == 1
    k = np.argmax(change, axis=1)
    lo, hi = ts[np.arange(along.size), k], ts[np.arange(along.size), k + 1]
    glo = v[np.arange(along.size), k]
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        gm = g(mid)
        left = np.sign(gm) == np.sign(glo)
        lo, glo = np.where(left, mid, lo), np.where(left, gm, glo)
        hi = np.where(left, hi, mid)
    t = 0.5 * (lo + hi)
    xy = base + t[:, None] * dh
    nf = normal_of(*FAULT)
    q = np.column_stack([xy, interp(np.column_stack([xy[:, 1], xy[:, 0]]))])
    side = fault_side * ((q - FAULT_P) @ nf)
    keep = one & (side > 20.0) & np.all((xy > 150) & (xy < 3850), axis=1) & np.isfinite(q[:, 2])
    return xy[keep]


@pytest.fixture(scope="module")
def faulted_world():
    """A bumpy DEM; a fault; two markers whose hanging-wall pieces are the footwall pieces moved by
    the known slip.  The contacts are traced on the DEM by root finding (SciPy), not by slipsense."""
    from scipy.interpolate import RegularGridInterpolator

    grid, xc, yc = _grid()
    interp = RegularGridInterpolator((yc[::-1], xc), grid.values[::-1], method="linear", bounds_error=False,
                                     fill_value=np.nan)
    u = _slip_vector()
    pieces, markers, names = [], [], []
    along = np.arange(-2500, 2500, 1.0)
    for name, (dd, dp), p_fw in (("bed", BED, np.array([2000.0, 1900.0, 880.0])),
                                 ("dyke", DYKE, np.array([2100.0, 2000.0, 950.0]))):
        for side, p in ((-1, p_fw), (1, p_fw + u)):
            xy = _contact_points(interp, dd, dp, p, along, side)
            assert len(xy) > 200
            pieces.append(xy)
            markers.append(name)
            names.append(f"{name}-{'hw' if side > 0 else 'fw'}")
    # the fault trace (only its extent matters): points of the fault plane at DEM level
    s_f = unit([math.sin(math.radians(FAULT[0] - 90)), math.cos(math.radians(FAULT[0] - 90)), 0.0])[:2]
    trace = FAULT_P[:2] + np.linspace(-1800, 1800, 10)[:, None] * s_f
    faults = PlaneSet(["F"], np.array([FAULT[0]]), np.array([FAULT[1]]),
                      np.array([[FAULT_P[0], FAULT_P[1], 0.0]]), [trace])
    return {"grid": grid, "faults": faults, "pieces": pieces, "markers": markers, "names": names, "u": u}


def _cutoff(marker_dd, marker_dp, marker_p, sec_xy0, sec_az):
    """Intersection of marker plane, fault plane and vertical section plane (a 3x3 solve)."""
    nm, nf = normal_of(marker_dd, marker_dp), normal_of(*FAULT)
    a = math.radians(sec_az)
    ns = np.array([math.cos(a), -math.sin(a), 0.0])
    A = np.vstack([nm, nf, ns])
    b = np.array([nm @ marker_p, nf @ FAULT_P, ns @ np.array([sec_xy0[0], sec_xy0[1], 0.0])])
    return np.linalg.solve(A, b)


@pytest.mark.parametrize("beta", [90.0, 60.0, 35.0])
def test_forward_model_offsets_and_net_slip_exact(faulted_world, beta):
    w = faulted_world
    strike = FAULT[0] - 90.0
    az = strike + beta
    a = math.radians(az)
    c = FAULT_P[:2]
    line = np.array([c - 1200 * np.array([math.sin(a), math.cos(a)]), c + 1200 * np.array([math.sin(a), math.cos(a)])])
    atts = {"bed": (BED[0], BED[1], "given"), "dyke": (DYKE[0], DYKE[1], "given")}
    contacts = ContactSet(w["names"], w["markers"], Traces.from_lines(w["pieces"]), atts)
    res = cross_sections(["S"], [line], w["grid"], faults=w["faults"], contacts=contacts, distance_m=3000.0,
                         depth_m=1500.0, draws=0)
    fl = res.tables["section_faults"]
    # apparent dip of the fault: Ragan's formula, written out here
    assert fl.columns["apparent_dip"][0] == pytest.approx(
        math.degrees(math.atan(math.tan(math.radians(FAULT[1])) * math.sin(math.radians(beta)))), abs=1e-9)
    off = res.tables["section_offsets"]
    assert sorted(off.columns["marker_id"]) == ["bed", "dyke"]
    u = w["u"]
    nf = normal_of(*FAULT)
    ns = np.array([math.cos(a), -math.sin(a), 0.0])
    o = unit(np.cross(nf, ns))
    o = o if o[2] > 0 else -o
    t = np.array([math.sin(a), math.cos(a), 0.0])
    for i, name in enumerate(off.columns["marker_id"]):
        dd, dp = BED if name == "bed" else DYKE
        p_fw = np.array([2000.0, 1900.0, 880.0]) if name == "bed" else np.array([2100.0, 2000.0, 950.0])
        ch = _cutoff(dd, dp, p_fw + u, line[0], az)
        cf = _cutoff(dd, dp, p_fw, line[0], az)
        nm = normal_of(dd, dp)
        # geometry: separation along the fault's line, vertical and horizontal separation
        assert off.columns["separation_m"][i] == pytest.approx((ch - cf) @ o, abs=0.05)
        assert off.columns["vertical_separation_m"][i] == pytest.approx((nm @ u) / nm[2], abs=0.05)
        if abs(nm @ t) / np.hypot(nm[0], nm[1]) < math.sin(math.radians(5.0)):
            assert np.isnan(off.columns["horizontal_separation_m"][i])  # the marker strikes along the section
        else:
            assert off.columns["horizontal_separation_m"][i] == pytest.approx((nm @ u) / (nm @ t), abs=0.05)
        assert off.columns["hw_elevation_m"][i] == pytest.approx(ch[2], abs=0.05)
        assert off.columns["fw_elevation_m"][i] == pytest.approx(cf[2], abs=0.05)
    ns_t = res.tables["section_net_slip"]
    row = next(ns_t.rows())
    assert row["status"] == "unique"
    assert row["net_slip_m"] == pytest.approx(SLIP_NET, rel=1e-4)
    assert row["rake"] == pytest.approx(SLIP_RAKE, abs=0.01)
    assert row["sense"] == "normal-sinistral"


def test_forward_model_one_marker_is_under_determined_until_a_slip_direction(faulted_world):
    w = faulted_world
    a = math.radians(FAULT[0])  # a dip section
    c = FAULT_P[:2]
    line = np.array([c - 1200 * np.array([math.sin(a), math.cos(a)]), c + 1200 * np.array([math.sin(a), math.cos(a)])])
    keep = [i for i, m in enumerate(w["markers"]) if m == "bed"]
    contacts = ContactSet([w["names"][i] for i in keep], ["bed"] * 2, Traces.from_lines([w["pieces"][i] for i in keep]),
                          {"bed": (BED[0], BED[1], "given")})
    res = cross_sections(["S"], [line], w["grid"], faults=w["faults"], contacts=contacts, distance_m=3000.0,
                         depth_m=1500.0, draws=0)
    row = next(res.tables["section_net_slip"].rows())
    assert row["status"] == "under-determined" and row["net_slip_m"] is None
    assert row["min_slip_m"] is not None and row["min_slip_m"] < SLIP_NET
    assert any("under-determined" in x for x in res.warnings)
    # the same section with stations giving the slip direction (their true rake): unique
    stations = PointSet(["K1", "K2", "K3"], np.array([[1900.0, 2300.0], [2100.0, 1700.0], [2000.0, 2500.0]]),
                        np.full(3, FAULT[0]), np.full(3, FAULT[1]), ["F", "F", "F"], rake=np.full(3, SLIP_RAKE))
    res = cross_sections(["S"], [line], w["grid"], faults=w["faults"], contacts=contacts, stations=stations,
                         distance_m=3000.0, depth_m=1500.0, draws=0)
    row = next(res.tables["section_net_slip"].rows())
    assert row["status"] == "unique" and row["net_slip_m"] == pytest.approx(SLIP_NET, rel=1e-4)
    assert row["slip_direction"] == "stations (3)"


def test_forward_model_with_noise_truth_inside_the_intervals(faulted_world):
    """Digitising noise (2 m) on every contact vertex, attitudes fitted: the known slip lies inside
    the reported 95 % intervals."""
    w = faulted_world
    rng = np.random.default_rng(42)
    noisy = [p[::5] + rng.normal(0.0, 2.0, p[::5].shape) for p in w["pieces"]]
    a = math.radians(FAULT[0] - 90.0 + 70.0)
    c = FAULT_P[:2]
    line = np.array([c - 1200 * np.array([math.sin(a), math.cos(a)]), c + 1200 * np.array([math.sin(a), math.cos(a)])])
    contacts = ContactSet(w["names"], w["markers"], Traces.from_lines(noisy))
    res = cross_sections(["S"], [line], w["grid"], faults=w["faults"], contacts=contacts, distance_m=3000.0,
                         depth_m=1500.0, draws=150, sigma_xy_m=2.0, sigma_z_m=0.5, seed=1)
    row = next(res.tables["section_net_slip"].rows())
    assert row["status"] in ("unique", "over-determined")
    assert row["net_slip_lo95"] <= SLIP_NET <= row["net_slip_hi95"]
    assert row["rake_lo95"] <= SLIP_RAKE <= row["rake_hi95"]
    assert row["net_slip_hi95"] - row["net_slip_lo95"] < 60.0  # informative, not vacuous
    att = res.tables["section_contacts"].columns["attitude"]
    assert set(att) == {"fitted near the section"}


# --------------------------------------------------------------------------- bad input
def _plane(dd, dp, p, trace):
    return PlaneSet(["P"], np.array([dd]), np.array([dp]), np.array([p], float), [np.asarray(trace, float)])


def test_section_shorter_than_a_cell_off_the_dem_and_zero_length():
    grid, _, _ = _grid()
    with pytest.raises(DataError, match="shorter than one DEM cell"):
        cross_sections(["tiny"], [np.array([[1000.0, 1000.0], [1004.0, 1003.0]])], grid)
    with pytest.raises(DataError, match="off the DEM"):
        cross_sections(["far"], [np.array([[90000.0, 1000.0], [91000.0, 1000.0]])], grid)
    with pytest.raises(DataError, match="zero length"):
        cross_sections(["dot"], [np.array([[100.0, 100.0], [100.0, 100.0]])], grid)
    res = cross_sections(["ok", "tiny", "rep"], [np.array([[500.0, 500.0], [1500.0, 500.0]]),
                                                  np.array([[1000.0, 1000.0], [1004.0, 1003.0]]),
                                                  np.array([[500.0, 900.0], [500.0, 900.0], [1500.0, 900.0]])], grid)
    assert res.summary["sections"] == 2 and res.summary["sections_skipped"] == 1
    assert any("section tiny" in m and "shorter than one DEM cell" in m for m in res.warnings)
    assert any("section rep" in m and "zero-length segment" in m for m in res.warnings)
    res = cross_sections(["half"], [np.array([[3000.0, 2000.0], [5000.0, 2000.0]])], grid)
    assert any("off the DEM or on nodata" in m for m in res.warnings)


def test_plane_parallel_to_the_section_is_flagged():
    grid, _, _ = _grid()
    line = [np.array([[500.0, 2000.0], [3500.0, 2000.0]])]
    # vertical plane striking along the section, 50 m off it: no line of intersection
    res = cross_sections(["S"], line, grid, faults=_plane(0.0, 90.0, [2000.0, 2050.0, 900.0], [[1000, 2050], [3000, 2050]]))
    row = next(res.tables["section_faults"].rows())
    assert row["status"] == "parallel" and row["apparent_dip"] is None
    assert any("parallel to the section" in m for m in res.warnings)
    # a dipping plane striking 2 degrees off the section: drawn, flagged near-parallel
    res = cross_sections(["S"], line, grid, faults=_plane(2.0, 40.0, [2000.0, 2050.0, 900.0], [[1000, 2050], [3000, 2050]]))
    row = next(res.tables["section_faults"].rows())
    assert row["status"] == "near-parallel" and row["apparent_dip"] < 2.0


def test_plane_out_of_reach_is_left_out_and_said_so():
    grid, _, _ = _grid()
    line = [np.array([[500.0, 3500.0], [3500.0, 3500.0]])]
    # a N-S fault whose mapped trace ends 1500 m south of the section
    res = cross_sections(["S"], line, grid, faults=_plane(90.0, 60.0, [2000.0, 1000.0, 900.0], [[2000, 500], [2000, 2000]]),
                         distance_m=500.0)
    row = next(res.tables["section_faults"].rows())
    assert row["status"] == "out of reach" and row["segment"] == 0
    assert any("does not reach the section within 500 m" in m for m in res.warnings)
    res = cross_sections(["S"], line, grid, faults=_plane(90.0, 60.0, [2000.0, 1000.0, 900.0], [[2000, 500], [2000, 2000]]),
                         distance_m=2000.0)
    assert next(res.tables["section_faults"].rows())["status"] == "ok"


def test_bad_parameters_give_clear_messages():
    grid, _, _ = _grid()
    line = [np.array([[500.0, 500.0], [1500.0, 500.0]])]
    for kw, msg in ((dict(projection="sideways"), "strike, perpendicular"), (dict(distance_m=-1.0), "distance"),
                    (dict(depth_m=0.0), "depth"), (dict(draws=-3), "draws"), (dict(tick_m=0.0), "tick")):
        with pytest.raises(InputError, match=msg):
            cross_sections(["S"], line, grid, **kw)
    with pytest.raises(DataError, match="empty"):
        cross_sections([], [], grid)


def test_map_layers_lie_in_the_vertical_section_plane(faulted_world):
    w = faulted_world
    line = np.array([[600.0, 900.0], [2000.0, 2000.0], [3400.0, 2300.0]])  # bent across the fault
    contacts = ContactSet(w["names"], w["markers"], Traces.from_lines(w["pieces"]))
    res = cross_sections(["S"], [line], w["grid"], faults=w["faults"], contacts=contacts, distance_m=3000.0, draws=0)
    sec = Section.from_vertices(line)
    for name in ("section_profiles", "section_faults", "section_contacts", "section_offsets"):
        t, txz = res.tables[name], res.tables[name + "_xz"]
        assert len(t) == len(txz) and len(t) > 0, name
        segs = t.columns.get("segment")
        for i, (g, gxz) in enumerate(zip(t.geometries, txz.geometries)):
            if len(g) == 0:
                continue
            # in the vertical plane of its own segment (a cut-off may lie on its extension)
            sp = sec.to_section(g) if segs is None else sec.to_section(g, segment=np.full(len(g), segs[i] - 1))
            assert np.allclose(sp.offset_m, 0.0, atol=1e-6), name           # in the vertical plane
            assert np.allclose(sp.distance_m, gxz[:, 0], atol=1e-6), name    # x of the twin = distance
            assert np.allclose(g[:, 2], gxz[:, 1], atol=1e-9), name          # y of the twin = elevation

"""Net slip from the map: mapped marker contacts + fitted fault planes + DEM (map-slip).

1. An analytic world (closed-form topography of tests/conftest.py, exact marker planes): contact
   points made by contouring the marker planes on the DEM, on both sides of a fault whose hanging
   wall is moved by a known slip; the method must return that slip exactly.
2. The demo scenario (demo_gpkg/, its truth in ground_truth.json written by the generator, which
   does not import slipsense): the slip of every fault that both markers cross (F1, F2, F3, F5)
   recovered from the demo layers alone (trace-planes output, marker_contacts, DEM, optionally
   slip_stations) must hold the true slip within its reported 95 % intervals.
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest

from conftest import CELL, CENTRE, DEMO, NX, NY, X0, Y0, dem_z, plane_trace, read_gpkg
from slipsense.core import netslip as ns
from slipsense.core.raster import Grid, contour_segments

TRUTH = json.loads((DEMO / "ground_truth.json").read_text())
SLIP = {f["fault_id"]: f["slip"] for f in TRUTH["faults"]}
RIGID = {p["piece_id"]: p["rigid"] for p in TRUTH["marker_pieces"]}
MARKED = ("F1", "F2", "F3", "F5")  # both markers cross these (demo_gpkg/README.md)


def _unit_normal(dip_dir, dip):
    a, g = math.radians(dip_dir), math.radians(dip)
    return np.array([math.sin(a) * math.sin(g), math.cos(a) * math.sin(g), math.cos(g)])


# --------------------------------------------------------------------------- analytic world
def test_noise_free_contacts_give_the_exact_slip():
    xc = X0 + CELL * (np.arange(NX) + 0.5)
    yc = Y0 - CELL * (np.arange(NY) + 0.5)
    gx, gy = np.meshgrid(xc, yc)
    gz = dem_z(gx, gy)
    grid = Grid(gz, (CELL, 0.0, X0, 0.0, -CELL, Y0))
    fdd, fdp = 90.0, 60.0
    nf = _unit_normal(fdd, fdp)
    p_f = CENTRE.copy()
    trace = plane_trace(fdd, fdp, p_f, -1500, 1500)
    # slip: rake -60 on the plane, 150 m (u = cos l s + sin l e, written out)
    s = np.array([math.sin(math.radians(0.0)), math.cos(math.radians(0.0)), 0.0])
    e = np.cross(nf, s)
    lam = math.radians(-60.0)
    u = 150.0 * (math.cos(lam) * s + math.sin(lam) * e)
    above = (np.stack([gx, gy, gz], -1) - p_f) @ nf > 0
    pieces, marks, ids = [], [], []
    for name, att, p_m in (("bed", (10.0, 15.0), CENTRE + [0, 0, -60.0]), ("dyke", (175.0, 80.0), CENTRE + [0, 200.0, 0])):
        m = _unit_normal(*att)
        for side, shift in (("hw", u), ("fw", np.zeros(3))):
            f = (np.stack([gx, gy, gz], -1) - (p_m + shift)) @ m
            keep = above if side == "hw" else ~above
            segs = contour_segments(xc, yc, np.where(keep, f, np.nan))
            pts = segs.reshape(-1, 2)
            pieces.append(pts)
            marks.append(name)
            ids.append(f"{name}-{side}")
    res, fits = ns.slip_from_contacts(fdd, fdp, p_f, trace, pieces, marks, ids, grid, window_m=1200.0,
                                      reach_m=60.0, sigma_xy_m=0.0, sigma_z_m=0.0, draws=0)
    assert res.status == "unique", res.note
    got = np.array([res.slip_e, res.slip_n, res.slip_u])
    assert np.allclose(got, u, atol=1e-6), (got, u)
    for f in fits:
        assert f.status == "fitted" and f.rms_m < 1e-6
        att = {"bed": (10.0, 15.0), "dyke": (175.0, 80.0)}[f.marker_id]
        assert abs(abs(_unit_normal(f.dip_dir, f.dip) @ _unit_normal(*att)) - 1) < 1e-12
        # separation from the fit equals the one measured by intersecting lines with the planes
        m = _unit_normal(*att)
        assert f.separation_normal_m == pytest.approx(float(m @ u), abs=1e-6)


# --------------------------------------------------------------------------- demo
@pytest.fixture(scope="module")
def demo_runs(tmp_path_factory):
    from slipsense.cli.main import main

    d = tmp_path_factory.mktemp("mapslip")
    planes = d / "planes.gpkg"
    assert main(["trace-planes", "--dem", str(DEMO / "dem.tif"), "--traces", str(DEMO / "demo.gpkg"),
                 "--layer", "fault_traces", "--id-field", "fault_id", "--out", str(planes), "--quiet"]) == 0
    out = {}
    for name, extra in (("markers", []), ("stations", ["--stations", str(DEMO / "demo.gpkg"),
                                                       "--stations-layer", "slip_stations"])):
        path = d / f"{name}.gpkg"
        code = main(["map-slip", "--planes", str(planes), "--contacts", str(DEMO / "demo.gpkg"),
                     "--contacts-layer", "marker_contacts", "--marker-field", "marker_id",
                     "--dem", str(DEMO / "dem.tif"), "--out", str(path), "--quiet", *extra])
        assert code == 0
        out[name] = path
    return planes, out


def _inside(v, lo, hi):
    return lo <= v <= hi


def _inside_angle(v, lo, hi):
    return ((v - lo) % 360.0) <= ((hi - lo) % 360.0)


@pytest.mark.parametrize("run", ["markers", "stations"])
@pytest.mark.parametrize("fault", MARKED)
def test_demo_slip_recovered_within_its_interval(demo_runs, run, fault):
    df = read_gpkg(demo_runs[1][run], "net_slip").set_index("fault_id")
    row = df.loc[fault]
    t = SLIP[fault]
    assert row.status == ("unique" if run == "markers" else "over-determined")
    assert row.n_markers == 2 and row.cutoff_angle > 45
    assert _inside(t["net_slip_m"], row.net_slip_lo95, row.net_slip_hi95)
    assert _inside_angle(t["rake"], row.rake_lo95, row.rake_hi95)
    for comp in ("strike_slip", "dip_slip", "throw", "heave"):
        assert _inside(t[comp + "_m"], row[comp + "_lo95"], row[comp + "_hi95"]), comp
    assert _inside(math.hypot(t["slip_e"], t["slip_n"]), row.horizontal_slip_lo95, row.horizontal_slip_hi95)
    assert row.sense == t["sense"]
    # not trivially wide: within 5 % of the net slip, a few degrees of rake
    assert row.net_slip_hi95 - row.net_slip_lo95 < 0.1 * t["net_slip_m"]
    assert row.net_slip_m == pytest.approx(t["net_slip_m"], rel=0.02)
    if run == "stations":
        assert row.n_stations == 8 and np.isfinite(row.station_rake)


def test_demo_unmarked_fault_has_no_row_and_a_warning(demo_runs, tmp_path):
    from slipsense.tools.netslip import map_slip_file

    df = read_gpkg(demo_runs[1]["markers"], "net_slip")
    assert "F4" not in set(df.fault_id)
    step = map_slip_file(str(demo_runs[0]), str(DEMO / "demo.gpkg"), str(DEMO / "dem.tif"),
                         str(tmp_path / "o.gpkg"), contacts_layer="marker_contacts", draws=20)
    assert any("F4" in w and "no marker" in w for w in step.warnings)


def test_demo_marker_fits(demo_runs):
    fits = read_gpkg(demo_runs[1]["markers"], "marker_fits")
    truth = {(m["marker_id"], d["fault_id"]): d for m in TRUTH["markers"] for d in m.get("displaced_by", [])}
    base = {m["marker_id"]: m["base_plane"] for m in TRUTH["markers"] if "base_plane" in m}
    assert len(fits) == 8
    for _, r in fits.iterrows():
        t = truth[(r.marker_id, r.fault_id)]
        b = base[r.marker_id]
        ang = math.degrees(math.acos(min(1.0, abs(_unit_normal(r.dip_dir, r.dip) @ _unit_normal(b["dip_dir"], b["dip"])))))
        assert ang < 1.5, (r.fault_id, r.marker_id, ang)
        assert r.cutoff_rake == pytest.approx(t["cutoff_rake"], abs=2.0)
        # separations follow from the fitted planes (the dip separation of a steep dyke on a
        # steep fault moves fast with the attitudes, hence the loose 10 %)
        assert r.dip_separation_m == pytest.approx(t["dip_separation_m"], rel=0.10)
        if abs(t["strike_separation_m"]) > 100:
            assert r.strike_separation_m == pytest.approx(t["strike_separation_m"], rel=0.10)
        # pieces used sit on the right side, as the truth's cut ends say
        sides = {c["piece_id"]: c["side"] for c in t["cut_ends"]}
        for p in filter(None, r.hw_pieces.split(", ")):
            assert sides.get(p, "hanging_wall") == "hanging_wall"
        for p in filter(None, r.fw_pieces.split(", ")):
            assert sides.get(p, "footwall") == "footwall"
        # a piece set aside must really be bent (never throw away a rigid piece)
        for p in filter(None, r.dropped_pieces.split(", ")):
            assert RIGID[p.split(" ")[0]] is False
    f2 = fits[(fits.fault_id == "F2") & (fits.marker_id == "bed_A")].iloc[0]
    assert "bed_A-007" in f2.dropped_pieces  # bent by the F1 taper band (ground truth: rigid false)


def test_demo_slip_vectors_start_on_the_fault_and_have_the_net_slip(demo_runs):
    planes = read_gpkg(demo_runs[0], "trace_planes").set_index("trace_id")
    vec = read_gpkg(demo_runs[1]["markers"], "slip_vectors").set_index("fault_id")
    ns_ = read_gpkg(demo_runs[1]["markers"], "net_slip").set_index("fault_id")
    import shapely

    for fid in MARKED:
        xyz = np.asarray(shapely.get_coordinates(vec.loc[fid].geometry, include_z=True))
        p = planes.loc[fid]
        n = _unit_normal(p.dip_dir, p.dip)
        c = np.array([p.centroid_x, p.centroid_y, p.centroid_z])
        assert abs((xyz[0] - c) @ n) < 1e-3 and abs((xyz[1] - c) @ n) < 1e-3
        assert np.linalg.norm(xyz[1] - xyz[0]) == pytest.approx(ns_.loc[fid].net_slip_m, rel=1e-9)
        assert "piercing" in vec.loc[fid].anchor


def test_demo_map_slip_bad_input(cli, demo_runs, tmp_path):
    planes = demo_runs[0]
    code, _, err = cli("map-slip", "--planes", planes, "--contacts", DEMO / "demo.gpkg",
                       "--contacts-layer", "marker_contacts", "--marker-field", "unit",
                       "--dem", DEMO / "dem.tif", "--out", tmp_path / "o.gpkg")
    assert code == 2 and "has no field 'unit'" in err and "Traceback" not in err
    code, _, err = cli("map-slip", "--planes", planes, "--contacts", DEMO / "demo.gpkg",
                       "--contacts-layer", "marker_contacts", "--dem", DEMO / "dem.tif",
                       "--distance", "-5", "--out", tmp_path / "o.gpkg")
    assert code == 2 and "must be > 0" in err
    code, _, err = cli("map-slip", "--planes", planes, "--contacts", DEMO / "demo.gpkg",
                       "--contacts-layer", "marker_contacts", "--dem", DEMO / "dem.tif",
                       "--out", planes)
    assert code == 2 and "also an input" in err


def test_demo_with_bed_attitude_from_the_bedding_readings(demo_runs, cli, tmp_path):
    """bed_A's attitude given as the vector mean of the demo's 40 bedding readings (a user's usual
    route) instead of fitted; the dyke is still fitted."""
    bedding = read_gpkg(DEMO / "demo.gpkg", "bedding")
    n = np.sum([_unit_normal(a, b) for a, b in zip(bedding.dip_dir, bedding.dip)], axis=0)
    n /= np.linalg.norm(n)
    dd = math.degrees(math.atan2(n[0], n[1])) % 360
    dp = math.degrees(math.acos(n[2]))
    out = tmp_path / "given.gpkg"
    code, _, err = cli("map-slip", "--planes", demo_runs[0], "--contacts", DEMO / "demo.gpkg",
                       "--contacts-layer", "marker_contacts", "--dem", DEMO / "dem.tif",
                       "--marker-attitude", f"bed_A={dd:.2f}/{dp:.2f}", "--sigma-attitude", "1.0",
                       "--draws", "200", "--out", out, "--quiet")
    assert code == 0, err
    df = read_gpkg(out, "net_slip").set_index("fault_id")
    fits = read_gpkg(out, "marker_fits")
    assert set(fits[fits.marker_id == "bed_A"].status) == {"given attitude"}
    for fid in MARKED:
        row, t = df.loc[fid], SLIP[fid]
        assert _inside(t["net_slip_m"], row.net_slip_lo95, row.net_slip_hi95), fid
        assert _inside_angle(t["rake"], row.rake_lo95, row.rake_hi95), fid
    code, _, err = cli("map-slip", "--planes", demo_runs[0], "--contacts", DEMO / "demo.gpkg",
                       "--contacts-layer", "marker_contacts", "--dem", DEMO / "dem.tif",
                       "--marker-attitude", "bed_A=352", "--out", tmp_path / "bad.gpkg")
    assert code == 2 and "write MARKER=DIP_DIR/DIP" in err

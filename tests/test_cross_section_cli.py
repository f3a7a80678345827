"""``slipsense cross-section`` end to end on the demo scenario: the three section lines, their
layers and figures, checked against the demo's ground truth (written by its own generator, not by
slipsense), plus bad input."""
from __future__ import annotations

import json
import shutil
import sqlite3

import numpy as np
import pytest

from conftest import DEMO, read_gpkg

GPKG = str(DEMO / "demo.gpkg")
DEM = str(DEMO / "dem.tif")
TRUTH = json.loads((DEMO / "ground_truth.json").read_text())
LAYERS = ["section_segments", "section_profiles", "section_profiles_xz", "section_faults", "section_faults_xz",
          "section_contacts", "section_contacts_xz", "section_points", "section_points_xz", "section_offsets",
          "section_offsets_xz", "section_net_slip", "section_net_slip_xz"]


def section_args(planes, out, *extra):
    return ["cross-section", "--sections", GPKG, "--sections-layer", "section_lines", "--id-field", "section_id",
            "--dem", DEM, "--planes", planes, "--out", out, *extra]


@pytest.fixture(scope="module")
def planes(tmp_path_factory):
    from slipsense.cli.main import main

    d = tmp_path_factory.mktemp("xs")
    out = d / "faults.gpkg"
    assert main(["trace-planes", "--dem", DEM, "--traces", GPKG, "--layer", "fault_traces", "--id-field",
                 "fault_id", "--out", str(out), "--draws", "100", "--quiet"]) == 0
    return str(out)


@pytest.fixture(scope="module")
def demo_run(planes, tmp_path_factory):
    """The demo's three sections with every input, figures at 2x exaggeration."""
    import contextlib
    import io

    from slipsense.cli.main import main

    d = tmp_path_factory.mktemp("xs_out")
    out, figs = d / "sections.gpkg", d / "figures"
    figs.mkdir()
    args = section_args(planes, str(out), "--contacts", GPKG, "--contacts-layer", "marker_contacts", "--bedding", GPKG,
                        "--bedding-layer", "bedding", "--stations", GPKG, "--stations-layer", "slip_stations",
                        "--boreholes", GPKG, "--boreholes-layer", "borehole_collars", "--distance", "1000",
                        "--draws", "100", "--figures", str(figs), "--exaggeration", "2", "--json")
    so, se = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(so), contextlib.redirect_stderr(se):
        code = main(args)
    assert code == 0, se.getvalue()
    return {"out": str(out), "figs": figs, "summary": json.loads(so.getvalue()), "stderr": se.getvalue()}


def test_all_three_sections_run_and_write_every_layer(demo_run):
    s = demo_run["summary"]
    assert s["sections"] == 3 and s["sections_skipped"] == 0
    assert s["layers"] == LAYERS
    segs = read_gpkg(demo_run["out"], "section_segments")
    assert segs.groupby("section_id").size().to_dict() == {"A-A'": 1, "B-B'": 2, "C-C'": 1}
    # the bend of B-B' (ground truth legs: azimuths 334.290 and 73.413)
    b = segs[segs.section_id == "B-B'"].sort_values("segment")
    legs = next(x for x in TRUTH["sections"] if x["section_id"] == "B-B'")["legs"]
    assert b.azimuth.tolist() == pytest.approx([legs[0]["azimuth"], legs[1]["azimuth"]], abs=1e-4)
    assert b.length_m.tolist() == pytest.approx([legs[0]["length_m"], legs[1]["length_m"]], abs=1e-3)
    assert "qualified professional" in json.loads(
        read_gpkg(demo_run["out"], "slipsense_provenance").record.iloc[0])["caution"]


def test_fault_crossings_match_the_ground_truth(demo_run):
    """Every true crossing of a fault trace with a section leg (ground_truth.json) is drawn: same
    leg, ground crossing within 10 m, and the true apparent dip inside the reported interval."""
    f = read_gpkg(demo_run["out"], "section_faults")
    n = 0
    for sec in TRUTH["sections"]:
        for leg in sec["legs"]:
            for c in leg["crossings"]:
                rows = f[(f.section_id == sec["section_id"]) & (f.fault_id == c["fault_id"]) & (f.segment == leg["leg"])]
                assert len(rows) >= 1, (sec["section_id"], c["fault_id"])
                r = rows.iloc[0]
                assert abs(r.surface_distance_m - c["distance_along_section_m"]) < 10.0  # along the whole line
                assert r.apparent_dip_lo95 - 0.05 <= c["apparent_dip"] <= r.apparent_dip_hi95 + 0.05
                assert r.dips_toward == ("end" if "end" in c["apparent_dip_toward"] else "start")
                n += 1
    assert n == sum(len(leg["crossings"]) for s in TRUTH["sections"] for leg in s["legs"])
    # faults the ground truth does not list for a section are left out, and say so
    left = f[f.status == "out of reach"]
    assert set(zip(left.section_id, left.fault_id)) >= {("A-A'", "F4"), ("C-C'", "F3"), ("C-C'", "F4")}
    assert "does not reach the section" in demo_run["stderr"]


def test_net_slip_matches_the_ground_truth_within_its_intervals(demo_run):
    ns = read_gpkg(demo_run["out"], "section_net_slip")
    true = {f["fault_id"]: f["slip"] for f in TRUTH["faults"]}
    solved = ns[ns.status.isin(["unique", "over-determined", "ill-conditioned"])]
    assert len(solved) >= 5
    for _, r in solved.iterrows():
        t = true[r.fault_id]
        assert r.net_slip_lo95 <= t["net_slip_m"] <= r.net_slip_hi95, (r.section_id, r.fault_id)
        lo, hi, rake = r.rake_lo95, r.rake_hi95, t["rake"]
        inside = lo <= rake <= hi if lo <= hi else (rake >= lo or rake <= hi)  # an interval through +-180
        assert inside, (r.section_id, r.fault_id, lo, rake, hi)
    # two markers without any slip direction pin F3 in A-A' and F5 in C-C' closely
    for sid, fid in (("A-A'", "F3"), ("C-C'", "F5")):
        r = ns[(ns.section_id == sid) & (ns.fault_id == fid)].iloc[0]
        assert "bed_A" in r.markers and "dyke_1" in r.markers
        assert r.net_slip_hi95 - r.net_slip_lo95 < 0.1 * true[fid]["net_slip_m"]
    # F4 has stations but no marker crosses it: no amount, and said so
    r = ns[(ns.section_id == "B-B'") & (ns.fault_id == "F4")].iloc[0]
    assert r.status == "under-determined" and np.isnan(r.net_slip_m)


def test_offsets_projected_points_and_geometry(demo_run):
    out = demo_run["out"]
    off = read_gpkg(out, "section_offsets")
    assert {"separation_m", "vertical_separation_m", "horizontal_separation_m", "separation_lo95"} <= set(off.columns)
    r = off[(off.section_id == "A-A'") & (off.fault_id == "F3") & (off.marker_id == "bed_A")].iloc[0]
    # truth: the F3 slip (ground truth) seen by bed_A: vertical separation = m.u / m_z
    from slipsense.core.orientation import plane_to_normal

    u = np.array([TRUTH["faults"][2]["slip"][k] for k in ("slip_e", "slip_n", "slip_u")])
    m = plane_to_normal(352.0, 11.0)
    assert r.vertical_separation_lo95 - 1 <= (m @ u) / m[2] <= r.vertical_separation_hi95 + 1
    pts = read_gpkg(out, "section_points")
    assert set(pts.kind) == {"bedding", "fault-slip", "borehole"}
    assert set(pts.projection) <= {"strike", "perpendicular"}
    assert (pts.offset_m.abs() <= 1000.0 + 1e-6).all()
    holes = pts[pts.kind == "borehole"]
    bh = {b["hole_id"]: b for b in TRUTH["boreholes"]}
    for _, h in holes.iterrows():  # the hit elevation is the true one within the fitted plane's error
        assert abs(h.elevation_m - bh[h.point_id]["intersections"][0]["elevation_m"]) < 15.0
    faults = read_gpkg(out, "section_faults")
    assert all(g.has_z for g in faults.geometry if g is not None)
    with sqlite3.connect(out) as con:
        srs = dict(con.execute("SELECT g.table_name, s.srs_name FROM gpkg_geometry_columns g JOIN "
                               "gpkg_spatial_ref_sys s ON g.srs_id = s.srs_id").fetchall())
    assert srs["section_faults"] == "WGS 84 / UTM zone 33N"
    assert srs["section_faults_xz"].startswith("slipsense section coordinates")


def test_figures_are_written_readable_and_state_the_exaggeration(demo_run):
    import matplotlib.image as mpimg

    files = sorted(p.name for p in demo_run["figs"].iterdir())
    assert files == [f"section_{s}_.{e}" for s in ("A-A", "B-B", "C-C") for e in ("png", "svg")]
    for p in demo_run["figs"].iterdir():
        assert p.stat().st_size > 10_000
    img = mpimg.imread(demo_run["figs"] / "section_A-A_.png")
    assert img.shape[1] > 1000 and float(np.var(img[..., :3])) > 1e-3  # not blank
    svg = (demo_run["figs"] / "section_B-B_.svg").read_text()
    assert "vertical exaggeration 2:1" in svg and "bend 334°→073°" in svg
    assert "qualified professional" in svg and "Net slip" in svg


def test_figure_at_true_scale_says_so(tmp_path):
    from slipsense.figures.section import draw_section
    from slipsense.steps import cross_sections
    from slipsense.core.raster import Grid

    xc = np.arange(200) * 10.0 + 5
    gx, gy = np.meshgrid(xc, 2000 - xc)
    grid = Grid(500 + 30 * np.sin(gx / 200.0) + 0 * gy, (10.0, 0, 0, 0, -10.0, 2000.0))
    res = cross_sections(["X-X'"], [np.array([[100.0, 1000.0], [1900.0, 1000.0]])], grid)
    fig = draw_section(res.tables, "X-X'")
    svg = tmp_path / "x.svg"
    import matplotlib

    with matplotlib.rc_context({"svg.fonttype": "none"}):
        fig.savefig(svg)
    assert "vertical exaggeration 1:1 (true scale)" in svg.read_text()


@pytest.mark.parametrize("extra,message", [
    (["--projection", "sideways"], "invalid choice"),
    (["--marker-attitude", "bed_A=steep"], "MARKER=DIPDIR/DIP"),
    (["--contacts", GPKG, "--contacts-layer", "marker_contacts", "--marker-attitude", "nosuch=10/10"],
     "not a marker_id value"),
    (["--contacts", GPKG, "--contacts-layer", "marker_contacts", "--marker-attitude", "bed_A=10/95"],
     "dip must be in [0, 90]"),
    (["--depth", "-5"], "depth must be > 0"),
    (["--exaggeration", "0"], "exaggeration must be > 0"),
    (["--id-field", "nosuch"], "has no field 'nosuch'"),
    (["--marker-attitude", "bed_A=bedding"], "no contact layer"),
])
def test_bad_input_gives_one_line_message(cli, planes, tmp_path, extra, message):
    args = section_args(planes, str(tmp_path / "o.gpkg"), "--draws", "0", *extra)
    if "--id-field" in extra:
        args.remove("--id-field")
        args.remove("section_id")
        args += ["--id-field", "nosuch"]
    code, _, err = cli(*args)
    assert code == 2, err
    assert message in err and "Traceback" not in err
    assert len([x for x in err.strip().splitlines() if x.startswith("slipsense")]) <= 1


def test_sections_off_the_dem_and_bad_station_angles(cli, planes, tmp_path):
    from conftest import write_lines, write_points

    far = write_lines(tmp_path / "far.gpkg", "lines", [np.array([[700000.0, 5000000.0], [701000.0, 5000000.0]])],
                      ["Z-Z'"], field="section_id")
    code, _, err = cli("cross-section", "--sections", far, "--dem", DEM, "--out", str(tmp_path / "o.gpkg"))
    assert code == 2 and "off the DEM" in err
    st = write_points(tmp_path / "st.gpkg", "st", [(505000.0, 5095000.0)],
                      {"fault_id": ["F1"], "dip_dir": [98.0], "dip": [97.0], "rake": [-80.0]})
    code, _, err = cli(*section_args(planes, str(tmp_path / "o.gpkg"), "--stations", st, "--draws", "0"))
    assert code == 2 and "field 'dip' = 97.0 is outside [0, 90]" in err


def test_outputs_and_figures_are_never_silently_replaced(cli, planes, tmp_path):
    out = str(tmp_path / "o.gpkg")
    figs = tmp_path / "f"
    figs.mkdir()
    assert cli(*section_args(planes, out, "--draws", "0", "--figures", str(figs)))[0] == 0
    code, _, err = cli(*section_args(planes, out, "--draws", "0"))
    assert code == 2 and "already has layer" in err
    code, _, err = cli(*section_args(planes, str(tmp_path / "o2.gpkg"), "--draws", "0", "--figures", str(figs)))
    assert code == 2 and "exists already" in err and not (tmp_path / "o2.gpkg").exists()
    assert cli(*section_args(planes, out, "--draws", "0", "--figures", str(figs), "--overwrite"))[0] == 0
    # the output is never an input
    g = tmp_path / "copy.gpkg"
    shutil.copyfile(GPKG, g)
    code, _, err = cli("cross-section", "--sections", str(g), "--sections-layer", "section_lines", "--dem", DEM,
                       "--out", str(g))
    assert code == 2 and "also an input" in err

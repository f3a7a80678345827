"""The CLI end to end on the analytic world: outputs, output safety, provenance and bad input."""
from __future__ import annotations

import json
import os
import sqlite3

import numpy as np
import pytest

from conftest import CRS, TRUTH, X0, Y0, read_gpkg, write_dem, write_lines, write_points
from slipsense.core.orientation import angle_between_planes


def run_planes(cli, world, out, *extra):
    return cli("trace-planes", "--dem", world["dem"], "--traces", world["traces"], "--layer",
               "fault_traces", "--id-field", "fault_id", "--out", out, "--draws", "60", "--json", *extra)


def test_trace_planes_end_to_end(cli, world, tmp_path):
    out = tmp_path / "out.gpkg"
    code, stdout, stderr = run_planes(cli, world, out)
    assert code == 0, stderr
    summary = json.loads(stdout)
    assert summary["traces"] == 5 and summary["quality"]["ill-posed"] == 1
    df = read_gpkg(out, "trace_planes")
    need = ["trace_id", "dip_dir", "dip", "strike", "dip_lo95", "dip_hi95", "dip_dir_lo95",
            "dip_dir_hi95", "n_points", "relief_m", "rms_m", "quality"]
    assert all(c in df.columns for c in need)
    for _, row in df.iterrows():
        if row.trace_id == "S":
            assert row.quality == "ill-posed" and row.dip is None or np.isnan(row.dip)
            continue
        assert angle_between_planes(row.dip_dir, row.dip, *TRUTH[row.trace_id]) < 0.2
        assert (row.strike - row.dip_dir) % 360 == pytest.approx(270.0)
    assert "ill-posed" in stderr  # per-feature warning, not a failure


def test_provenance_and_north_reference(cli, world, tmp_path):
    out = tmp_path / "out.gpkg"
    assert run_planes(cli, world, out)[0] == 0
    prov = read_gpkg(out, "slipsense_provenance")
    rec = json.loads(prov.loc[prov.layer == "trace_planes", "record"].iloc[0])
    assert rec["command"] == "trace-planes" and rec["north_reference"] == "grid"
    assert rec["working_crs"] == "EPSG:32633"
    import hashlib

    digest = hashlib.sha256(open(world["dem"], "rb").read()).hexdigest()
    assert digest in [i["sha256"] for i in rec["inputs"]]
    assert rec["parameters"]["draws"] == 60 and "qualified professional" in rec["caution"]


def test_existing_layer_needs_overwrite_and_other_layers_survive(cli, world, tmp_path):
    out = tmp_path / "out.gpkg"
    write_points(out, "my_notes", [(X0 + 10, Y0 - 10)], {"note": ["keep me"]})
    assert run_planes(cli, world, out)[0] == 0
    code, _, err = run_planes(cli, world, out)
    assert code == 2 and "already has layer 'trace_planes'" in err and "--overwrite" in err
    assert run_planes(cli, world, out, "--overwrite")[0] == 0
    assert read_gpkg(out, "my_notes").note[0] == "keep me"
    prov = read_gpkg(out, "slipsense_provenance")
    assert (prov.layer == "trace_planes").sum() == 1


def test_interrupted_write_leaves_earlier_file_intact(cli, world, tmp_path, monkeypatch):
    out = tmp_path / "out.gpkg"
    assert run_planes(cli, world, out)[0] == 0
    before = open(out, "rb").read()
    import pyogrio

    calls = {"n": 0}
    real = pyogrio.write_dataframe

    def failing(*a, **k):
        calls["n"] += 1
        if calls["n"] == 2:
            raise KeyboardInterrupt
        return real(*a, **k)

    monkeypatch.setattr(pyogrio, "write_dataframe", failing)
    code, _, err = run_planes(cli, world, out, "--overwrite", "--window", "800")
    assert code == 130 and "intact" in err
    assert open(out, "rb").read() == before
    assert not [p for p in os.listdir(tmp_path) if p.startswith(".slipsense-")]


def test_inputs_are_never_written(cli, world, tmp_path):
    digest = open(world["traces"], "rb").read()
    code, _, err = run_planes(cli, world, world["traces"])
    assert code == 2 and "also an input" in err
    assert open(world["traces"], "rb").read() == digest


def test_windows_layer(cli, world, tmp_path):
    out = tmp_path / "w.gpkg"
    code, stdout, _ = run_planes(cli, world, out, "--window", "800")
    assert code == 0 and json.loads(stdout)["windows"] > 5
    w = read_gpkg(out, "trace_windows")
    good = w[w.trace_id == "A"]
    assert np.allclose(good.dip.astype(float), 60.0, atol=0.5)


def test_geographic_traces_are_reprojected(cli, world, tmp_path):
    """Traces in EPSG:4326 over the UTM DEM are transformed to the DEM's CRS (pyproj)."""
    from pyproj import Transformer

    tf = Transformer.from_crs(CRS, "EPSG:4326", always_xy=True)
    a = world["lines"]["A"]
    lon, lat = tf.transform(a[:, 0], a[:, 1])
    src = write_lines(tmp_path / "geo.gpkg", "t", [np.column_stack([lon, lat])], ["A"], crs="EPSG:4326")
    out = tmp_path / "o.gpkg"
    code, _, err = cli("trace-planes", "--dem", world["dem"], "--traces", src, "--id-field", "fault_id",
                       "--out", out, "--draws", "0")
    assert code == 0, err
    row = read_gpkg(out, "trace_planes").iloc[0]
    assert angle_between_planes(row.dip_dir, row.dip, *TRUTH["A"]) < 0.2


def test_geographic_dem_is_refused_or_warped(cli, world, tmp_path):
    """A DEM in degrees is never fitted in degrees: it is warped to the UTM zone, said in output."""
    import rasterio
    from rasterio.warp import calculate_default_transform, reproject

    geo = tmp_path / "geo_dem.tif"
    with rasterio.open(world["dem"]) as src:
        t, w, h = calculate_default_transform(src.crs, "EPSG:4326", src.width, src.height, *src.bounds)
        with rasterio.open(geo, "w", driver="GTiff", width=w, height=h, count=1, dtype="float32",
                           crs="EPSG:4326", transform=t, nodata=-9999) as dst:
            reproject(rasterio.band(src, 1), rasterio.band(dst, 1))
    out = tmp_path / "o.gpkg"
    code, stdout, err = cli("trace-planes", "--dem", geo, "--traces", world["traces"], "--layer",
                            "fault_traces", "--id-field", "fault_id", "--out", out, "--draws", "0", "--json")
    assert code == 0, err
    assert json.loads(stdout)["working_crs"].startswith("EPSG:326")
    assert "DEM is geographic" in err
    row = read_gpkg(out, "trace_planes").set_index("trace_id").loc["A"]
    assert angle_between_planes(row.dip_dir, row.dip, *TRUTH["A"]) < 1.5


@pytest.mark.parametrize(
    "case, message",
    [
        ("missing_field", "has no field 'nosuch'"),
        ("missing_layer", "has no layer 'nosuch'"),
        ("empty", "is empty"),
        ("no_crs", "has no coordinate reference system"),
        ("off_dem", "off the DEM"),
        ("bad_dem", "cannot open DEM"),
        ("bad_sigma", "sigma-xy must be >= 0"),
        ("not_gpkg", "must be a GeoPackage"),
    ],
)
def test_bad_input_gives_one_line_message(cli, world, tmp_path, case, message):
    import geopandas as gpd
    import pyogrio
    import shapely

    dem, traces, layer, idf = world["dem"], world["traces"], "fault_traces", "fault_id"
    out = tmp_path / "o.gpkg"
    extra = []
    if case == "missing_field":
        idf = "nosuch"
    elif case == "missing_layer":
        layer = "nosuch"
    elif case == "empty":
        traces = str(tmp_path / "e.gpkg")
        gdf = gpd.GeoDataFrame({"fault_id": []}, geometry=[], crs=CRS)
        pyogrio.write_dataframe(gdf, traces, layer="fault_traces", geometry_type="LineString")
    elif case == "no_crs":
        traces = str(tmp_path / "n.gpkg")
        gdf = gpd.GeoDataFrame({"fault_id": ["A"]}, geometry=[shapely.LineString(world["lines"]["A"])])
        pyogrio.write_dataframe(gdf, traces, layer="fault_traces")
    elif case == "off_dem":
        traces = write_lines(tmp_path / "far.gpkg", "fault_traces", [world["lines"]["A"] + 1e5], ["A"])
    elif case == "bad_dem":
        dem = str(tmp_path / "nothing.tif")
        open(dem, "w").write("not a raster")
    elif case == "bad_sigma":
        extra = ["--sigma-xy", "-1"]
    elif case == "not_gpkg":
        out = tmp_path / "o.shp"
    code, stdout, err = cli("trace-planes", "--dem", dem, "--traces", traces, "--layer", layer,
                            "--id-field", idf, "--out", out, *extra)
    assert code == 2
    assert message in err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err
    assert not os.path.exists(out) or case == "not_gpkg"


def test_nodata_under_trace_is_flagged(cli, world, tmp_path):
    import rasterio

    with rasterio.open(world["dem"]) as ds:
        v = ds.read(1)
    v[150:250, :] = -9999.0
    dem = write_dem(tmp_path / "holes.tif", v)
    out = tmp_path / "o.gpkg"
    code, _, err = cli("trace-planes", "--dem", dem, "--traces", world["traces"], "--layer", "fault_traces",
                       "--id-field", "fault_id", "--out", out, "--draws", "0")
    assert code == 0
    assert "fell on DEM nodata" in err
    df = read_gpkg(out, "trace_planes")
    assert (df.n_nodata > 0).any()


def test_invalid_and_empty_geometries_are_flagged_not_fatal(cli, world, tmp_path):
    import geopandas as gpd
    import pyogrio
    import shapely

    src = str(tmp_path / "mixed.gpkg")
    gdf = gpd.GeoDataFrame({"fault_id": ["A", "E"]},
                           geometry=[shapely.LineString(world["lines"]["A"]), shapely.LineString()], crs=CRS)
    pyogrio.write_dataframe(gdf, src, layer="t")
    out = tmp_path / "o.gpkg"
    code, _, err = cli("trace-planes", "--dem", world["dem"], "--traces", src, "--id-field", "fault_id",
                       "--out", out, "--draws", "0")
    assert code == 0 and "empty geometry, skipped" in err
    assert read_gpkg(out, "trace_planes").trace_id.tolist() == ["A"]


def test_three_point_and_collinear(cli, tmp_path):
    """Three-point check from references.md (Vacher 2000; inputs from a lab exercise):
    A (400, 100, 400), B (0, 0, 200), C (0, 300, 500) -> dip direction 194.036, dip 45.868."""
    pts = [(400, 100), (0, 0), (0, 300), (0, 0), (10, 10), (20, 20), (30, 30)]
    z = [400, 200, 500, 0, 1, 2, 3]
    g = ["lab", "lab", "lab", "line", "line", "line", "line"]
    src = write_points(tmp_path / "p.gpkg", "pts", [(X0 + x, Y0 - 5000 + y) for x, y in pts], {"grp": g, "z": z})
    out = tmp_path / "o.gpkg"
    code, stdout, err = cli("three-point", "--points", src, "--group-field", "grp", "--z-field", "z",
                            "--out", out, "--json")
    assert code == 0, err
    df = read_gpkg(out, "point_planes").set_index("plane_id")
    assert df.loc["lab", "dip_dir"] == pytest.approx(194.036, abs=1e-3)
    assert df.loc["lab", "dip"] == pytest.approx(45.868, abs=1e-3)
    assert df.loc["lab", "strike"] == pytest.approx(104.036, abs=1e-3)
    assert df.loc["line", "quality"] == "ill-posed" and np.isnan(df.loc["line", "dip"])


def test_three_point_from_dem_and_missing_z(cli, world, tmp_path):
    a = world["lines"]["A"][::40]
    src = write_points(tmp_path / "p.gpkg", "pts", a, {"grp": ["A"] * len(a), "z": [None] + [1.0] * (len(a) - 1)})
    out = tmp_path / "o.gpkg"
    code, _, err = cli("three-point", "--points", src, "--group-field", "grp", "--dem", world["dem"], "--out", out)
    assert code == 0, err
    row = read_gpkg(out, "point_planes").iloc[0]
    assert angle_between_planes(row.dip_dir, row.dip, *TRUTH["A"]) < 0.2
    code, _, err = cli("three-point", "--points", src, "--group-field", "grp", "--z-field", "z",
                       "--out", tmp_path / "o2.gpkg")
    assert code == 0 and "field 'z' is empty; point dropped" in err


def test_contours_outcrop_and_depth_commands(cli, world, tmp_path):
    out = tmp_path / "o.gpkg"
    assert run_planes(cli, world, out)[0] == 0
    code, stdout, err = cli("structure-contours", "--planes", out, "--interval", "100", "--out", out, "--json")
    assert code == 2 and "also an input" in err  # the planes file is an input: never written
    out2 = tmp_path / "derived.gpkg"
    code, stdout, err = cli("structure-contours", "--planes", out, "--interval", "100", "--out", out2, "--json")
    assert code == 0, err
    sc = read_gpkg(out2, "structure_contours")
    assert set(sc.plane_id) == {"A", "B", "D"}  # C is vertical, S ill-posed: warned, no lines
    assert "vertical or horizontal" in err and "ill-posed" in err
    assert np.allclose(sc.elevation_m % 100, 0)
    code, _, err = cli("outcrop-trace", "--planes", out, "--dem", world["dem"], "--distance", "300", "--out", out2)
    assert code == 0, err
    ot = read_gpkg(out2, "outcrop_traces")
    assert {"A", "B", "C", "D"} <= set(ot.plane_id)
    collars = write_points(tmp_path / "c.gpkg", "collars", [world["lines"]["A"][75] + [300, 0]],
                           {"hole": ["H1"], "fault": ["A"], "trend": [0.0], "plunge": [90.0]})
    code, stdout, err = cli("plane-depth", "--collars", collars, "--id-field", "hole", "--plane-field", "fault",
                            "--trend-field", "trend", "--plunge-field", "plunge", "--planes", out,
                            "--dem", world["dem"], "--out", out2, "--json")
    assert code == 0, err
    d = read_gpkg(out2, "plane_depths").iloc[0]
    # 300 m into the hanging wall of a 60-degree plane whose trace point is at the surface:
    # depth = 300 tan 60 + (collar z - trace z) (common practice: the depth rule of a dipping plane)
    from conftest import dem_z

    t = world["lines"]["A"][75]
    expect = 300 * np.tan(np.radians(60)) + dem_z(t[0] + 300, t[1]) - dem_z(*t)
    assert d.status == "ok" and d.depth_m == pytest.approx(expect, abs=1.0)


def test_plane_depth_bad_angle_names_feature_and_field(cli, world, tmp_path):
    out = tmp_path / "o.gpkg"
    assert run_planes(cli, world, out)[0] == 0
    collars = write_points(tmp_path / "c.gpkg", "collars", [world["lines"]["A"][10]], {"plunge": [97.0]})
    code, _, err = cli("plane-depth", "--collars", collars, "--plunge-field", "plunge", "--planes", out,
                       "--dem", world["dem"], "--out", tmp_path / "d.gpkg")
    assert code == 2 and "feature 1: field 'plunge' = 97.0 is outside [0, 90]" in err


def test_orientations_command(cli, tmp_path):
    xy = [(X0 + 100, Y0 - 100)] * 4
    src = write_points(tmp_path / "m.gpkg", "m", xy, {"txt": ["N30E 45SE", "210/45SE", "030/45", "junk"]})
    out = tmp_path / "o.gpkg"
    code, stdout, err = cli("orientations", "--points", src, "--text-field", "txt", "--out", out, "--json")
    assert code == 0
    df = read_gpkg(out, "orientations")
    assert df.dip_dir[:2].tolist() == [120.0, 120.0]
    assert "no dip quadrant" in df.status[2] and "cannot read" in df.status[3]
    assert json.loads(stdout)["flagged"] == 2
    # magnetic readings with a declination of +10 (east) read 10 degrees more on true north,
    # then lose the grid convergence (pyproj) to land on grid north
    out2 = tmp_path / "o2.gpkg"
    code, _, err = cli("orientations", "--points", src, "--text-field", "txt", "--north", "magnetic",
                       "--declination", "10", "--out", out2)
    m = read_gpkg(out2, "orientations")
    assert m.dip_dir[0] == pytest.approx((120 + 10 - m.convergence[0]) % 360)


def test_no_command_and_bad_usage(cli):
    assert cli()[0] == 2
    code, _, err = cli("trace-planes", "--dem")
    assert code == 2


def test_sqlite_view_of_output(cli, world, tmp_path):
    """The output is a plain GeoPackage any reader sees: NaN orientation is stored as NULL."""
    out = tmp_path / "o.gpkg"
    assert run_planes(cli, world, out)[0] == 0
    con = sqlite3.connect(out)
    rows = con.execute("select trace_id, dip from trace_planes order by trace_id").fetchall()
    con.close()
    assert dict(rows)["S"] is None and dict(rows)["A"] == pytest.approx(60.0, abs=0.2)


def test_layer_metadata_records_north_reference(cli, world, tmp_path):
    import pyogrio

    out = tmp_path / "o.gpkg"
    assert run_planes(cli, world, out)[0] == 0
    meta = pyogrio.read_info(str(out), layer="trace_planes")["layer_metadata"]
    assert meta["north_reference"] == "grid" and meta["working_crs"] == "EPSG:32633"
    con = sqlite3.connect(out)
    assert con.execute("pragma user_version").fetchone()[0] == 10200  # GeoPackage 1.2
    con.close()


def test_new_output_file_has_the_usual_permissions(cli, world, tmp_path):
    out = tmp_path / "o.gpkg"
    assert run_planes(cli, world, out)[0] == 0
    umask = os.umask(0)
    os.umask(umask)
    assert (os.stat(out).st_mode & 0o777) == (0o666 & ~umask)

"""Every algorithm in-process on synthetic data (and on the demo data when present): the plugin's
outputs equal the engine's results on the same data read without QGIS, field by field."""
import numpy as np
import pytest

import qgisreference as ref
from qgishelpers import assert_rows_equal, geometries, gpkg_columns, gpkg_tables, layer, layer_rows, ogr_dest, run

TRACE_KW = dict(sigma_xy_m=5.0, sigma_z_m=2.0, draws=60, seed=3)


def trace_params(data, out, **extra):
    p = {"INPUT": data["gpkg"] + "|layername=fault_traces", "ID_FIELD": "fault_id", "DEM": data["dem"],
         "SIGMA_XY": 5.0, "SIGMA_Z": 2.0, "DRAWS": 60, "SEED": 3, "OUTPUT": ogr_dest(out, "trace_planes")}
    p.update(extra)
    return p


def table_rows(table):
    return list(table.rows())


@pytest.fixture(scope="module")
def planes_gpkg(synth, tmp_path_factory):
    """trace_planes and point_planes of the synthetic data, written by the plugin."""
    out = str(tmp_path_factory.mktemp("planes") / "planes.gpkg")
    run("slipsense:traceplanes", trace_params(synth, out))
    run("slipsense:pointplanes", {"INPUT": synth["gpkg"] + "|layername=contact_points", "GROUP_FIELD": "group_id",
                                  "Z_FIELD": "z_m", "OUTPUT": ogr_dest(out, "point_planes")})
    return out


def test_traceplanes_equals_engine(synth, tmp_path):
    out = str(tmp_path / "o.gpkg")
    res = run("slipsense:traceplanes", trace_params(synth, out, WINDOW=300.0,
                                                    OUTPUT_WINDOWS=ogr_dest(out, "trace_windows")))
    expect = ref.trace_planes(synth["gpkg"], "fault_traces", synth["dem"], "fault_id", window_m=300.0, **TRACE_KW)
    assert_rows_equal(layer_rows(layer(out, "trace_planes")), table_rows(expect.tables["trace_planes"]))
    assert_rows_equal(layer_rows(layer(out, "trace_windows")), table_rows(expect.tables["trace_windows"]))
    # the fit recovers the synthetic faults (dip direction / dip of synthdata.FAULTS)
    rows = {r["trace_id"]: r for r in layer_rows(layer(out, "trace_planes"))}
    assert rows["F1"]["dip_dir"] == pytest.approx(110.0, abs=1.0) and rows["F1"]["dip"] == pytest.approx(35.0, abs=1.0)
    assert rows["F2"]["dip_dir"] == pytest.approx(250.0, abs=1.0) and rows["F2"]["dip"] == pytest.approx(40.0, abs=1.0)
    assert res["N_TRACES"] == 2 and res["N_GOOD"] + res["N_FAIR"] + res["N_POOR"] + res["N_ILL_POSED"] == 2
    assert res["N_WINDOWS"] == len(expect.tables["trace_windows"])
    # geometry: the traces as read, multi-part kept
    geoms = geometries(layer(out, "trace_planes"))
    feats = ref.read_features(synth["gpkg"], "fault_traces")
    for g, (_, _, parts) in zip(geoms, feats):
        np.testing.assert_allclose(g[:, :2], np.concatenate(parts), atol=1e-6)
    assert layer(out, "trace_planes").featureCount() == 2
    assert gpkg_tables(out) == ["trace_planes", "trace_windows"]


def test_fields_types_and_order_follow_the_table(synth, tmp_path):
    out = str(tmp_path / "o.gpkg")
    run("slipsense:traceplanes", trace_params(synth, out, DRAWS=0))
    expect = ref.trace_planes(synth["gpkg"], "fault_traces", synth["dem"], "fault_id", sigma_xy_m=5.0,
                              sigma_z_m=2.0, draws=0).tables["trace_planes"]
    sql = {"float": "REAL", "int": "INTEGER", "str": "TEXT"}
    assert gpkg_columns(out, "trace_planes") == [(n, sql[expect.types[n]]) for n in expect.columns]
    # NaN -> NULL: without draws the intervals are NULL
    rows = layer_rows(layer(out, "trace_planes"))
    assert all(r["dip_lo95"] is None and r["dip_dir_hi95"] is None for r in rows)
    assert all(isinstance(r["n_points"], int) for r in rows)


def test_traceplanes_default_ids_are_feature_ids(synth, tmp_path):
    out = str(tmp_path / "o.gpkg")
    p = trace_params(synth, out, DRAWS=0)
    del p["ID_FIELD"]
    run("slipsense:traceplanes", p)
    assert [r["trace_id"] for r in layer_rows(layer(out, "trace_planes"))] == ["1", "2"]


def test_traces_in_another_crs_are_transformed_to_the_dem(synth, tmp_path):
    """Lines in EPSG:4326 give the same planes (up to the round trip of the coordinates)."""
    import processing

    wgs = str(tmp_path / "wgs.gpkg")
    processing.run("native:reprojectlayer", {"INPUT": synth["gpkg"] + "|layername=fault_traces",
                                             "TARGET_CRS": "EPSG:4326", "OUTPUT": ogr_dest(wgs, "fault_traces")})
    out = str(tmp_path / "o.gpkg")
    run("slipsense:traceplanes", trace_params({"gpkg": wgs, "dem": synth["dem"]}, out, DRAWS=0))
    out2 = str(tmp_path / "o2.gpkg")
    run("slipsense:traceplanes", trace_params(synth, out2, DRAWS=0))
    a, b = layer_rows(layer(out, "trace_planes")), layer_rows(layer(out2, "trace_planes"))
    assert_rows_equal(a, b, rel=1e-6, abs_=1e-3)
    assert layer(out, "trace_planes").crs().authid() == "EPSG:32633"


@pytest.mark.parametrize("source", ["z_field", "dem"])
def test_pointplanes_equals_engine(synth, tmp_path, source):
    out = str(tmp_path / "o.gpkg")
    params = {"INPUT": synth["gpkg"] + "|layername=contact_points", "GROUP_FIELD": "group_id",
              "OUTPUT": ogr_dest(out, "point_planes")}
    if source == "z_field":
        params["Z_FIELD"] = "z_m"
        expect = ref.point_planes(synth["gpkg"], "contact_points", "group_id", z_field="z_m")
    else:
        params["DEM"] = synth["dem"]
        expect = ref.point_planes(synth["gpkg"], "contact_points", "group_id", dem=synth["dem"])
    res = run("slipsense:pointplanes", params)
    rows = layer_rows(layer(out, "point_planes"))
    assert_rows_equal(rows, table_rows(expect.tables["point_planes"]))
    # groups are the sorted group values as text (not the order of first appearance: C2 comes first)
    assert [r["plane_id"] for r in rows] == ["C10", "C2", "C3"]
    assert res["N_GROUPS"] == 3
    if source == "z_field":  # exact planes through the synthetic points (synthdata.contact_points)
        by = {r["plane_id"]: r for r in rows}
        assert by["C2"]["n_points"] == 3
        assert (by["C2"]["dip_dir"], by["C2"]["dip"]) == pytest.approx((200.0, 35.0), abs=0.05)  # x, y written to 1 mm
        assert (by["C3"]["dip_dir"], by["C3"]["dip"]) == pytest.approx((300.0, 60.0), abs=0.05)
    g = geometries(layer(out, "point_planes"))
    assert [len(v) for v in g] == [6, 3, 8]


def test_pointplanes_with_errors_is_reproducible(synth, tmp_path):
    params = {"INPUT": synth["gpkg"] + "|layername=contact_points", "GROUP_FIELD": "group_id", "Z_FIELD": "z_m",
              "SIGMA_XY": 3.0, "SIGMA_Z": 1.0, "DRAWS": 50, "SEED": 11}
    a = run("slipsense:pointplanes", dict(params, OUTPUT=ogr_dest(str(tmp_path / "a.gpkg"), "p")))
    b = run("slipsense:pointplanes", dict(params, OUTPUT=ogr_dest(str(tmp_path / "b.gpkg"), "p")))
    ra, rb = layer_rows(layer(str(tmp_path / "a.gpkg"), "p")), layer_rows(layer(str(tmp_path / "b.gpkg"), "p"))
    assert_rows_equal(ra, rb, rel=0, abs_=0)
    expect = ref.point_planes(synth["gpkg"], "contact_points", "group_id", z_field="z_m", sigma_xy_m=3.0,
                              sigma_z_m=1.0, draws=50, seed=11)
    assert_rows_equal(ra, table_rows(expect.tables["point_planes"]))
    assert ra[0]["dip_lo95"] is not None
    assert a["N_GROUPS"] == b["N_GROUPS"] == 3


@pytest.mark.parametrize("table", ["trace_planes", "point_planes"])
def test_structurecontours_equals_engine(planes_gpkg, tmp_path, table):
    out = str(tmp_path / "o.gpkg")
    res = run("slipsense:structurecontours", {"PLANES": f"{planes_gpkg}|layername={table}", "INTERVAL": 25.0,
                                              "DEPTH": 200.0, "OUTPUT": ogr_dest(out, "structure_contours")})
    ids, dd, dp, cen, ext = ref.read_planes(planes_gpkg, table)
    expect = ref.steps.structure_contours(ids, dd, dp, cen, ext, interval_m=25.0, depth_m=200.0)
    lyr = layer(out, "structure_contours")
    assert_rows_equal(layer_rows(lyr), table_rows(expect.tables["structure_contours"]))
    for g, e in zip(geometries(lyr), expect.tables["structure_contours"].geometries):
        np.testing.assert_allclose(g, e, rtol=0, atol=1e-6)
    assert res["N_CONTOURS"] == len(expect.tables["structure_contours"]) > 0
    # contours are horizontal lines at the elevation of their field
    assert all(np.allclose(g[:, 2], r["elevation_m"]) for g, r in zip(geometries(lyr), layer_rows(lyr)))


def test_structurecontours_elevation_limits(planes_gpkg, tmp_path):
    out = str(tmp_path / "o.gpkg")
    run("slipsense:structurecontours", {"PLANES": f"{planes_gpkg}|layername=trace_planes", "INTERVAL": 50.0,
                                        "Z_MIN": 400.0, "Z_MAX": 600.0, "OUTPUT": ogr_dest(out, "c")})
    z = sorted({r["elevation_m"] for r in layer_rows(layer(out, "c"))})
    assert z == [400.0, 450.0, 500.0, 550.0, 600.0]


def test_outcroptraces_equals_engine(synth, planes_gpkg, tmp_path):
    out = str(tmp_path / "o.gpkg")
    res = run("slipsense:outcroptraces", {"PLANES": f"{planes_gpkg}|layername=trace_planes", "DEM": synth["dem"],
                                          "DISTANCE": 300.0, "OUTPUT": ogr_dest(out, "outcrop_traces")})
    ids, dd, dp, cen, ext = ref.read_planes(planes_gpkg, "trace_planes")
    expect = ref.steps.outcrop_traces(ids, dd, dp, cen, ext, ref.full_grid(synth["dem"]), max_distance_m=300.0)
    lyr = layer(out, "outcrop_traces")
    assert_rows_equal(layer_rows(lyr), table_rows(expect.tables["outcrop_traces"]))
    for g, e in zip(geometries(lyr), expect.tables["outcrop_traces"].geometries):
        np.testing.assert_allclose(g, np.concatenate(e), rtol=0, atol=1e-6)
    assert res["N_PREDICTED"] == 2


def test_planedepths_equals_engine(synth, planes_gpkg, tmp_path):
    out = str(tmp_path / "o.gpkg")
    res = run("slipsense:planedepths", {
        "COLLARS": synth["gpkg"] + "|layername=borehole_collars", "ID_FIELD": "collar_id",
        "TREND_FIELD": "trend", "PLUNGE_FIELD": "plunge", "PLANE_FIELD": "fault_id",
        "PLANES": f"{planes_gpkg}|layername=trace_planes", "DEM": synth["dem"],
        "OUTPUT": ogr_dest(out, "plane_depths")})
    feats = ref.read_features(synth["gpkg"], "borehole_collars")
    ids, dd, dp, cen, _ = ref.read_planes(planes_gpkg, "trace_planes")
    xy = np.array([p[0][0] for _, _, p in feats])
    expect = ref.steps.plane_depths(
        [a["collar_id"] for _, a, _ in feats], xy, ref.full_grid(synth["dem"]),
        np.array([a["trend"] for _, a, _ in feats]), np.array([a["plunge"] for _, a, _ in feats]),
        ids, dd, dp, cen, pair_plane=[a["fault_id"] for _, a, _ in feats],
        dip_interval=(ref.plane_column(planes_gpkg, "trace_planes", "dip_lo95"),
                      ref.plane_column(planes_gpkg, "trace_planes", "dip_hi95")),
        dip_dir_interval=(ref.plane_column(planes_gpkg, "trace_planes", "dip_dir_lo95"),
                          ref.plane_column(planes_gpkg, "trace_planes", "dip_dir_hi95")))
    lyr = layer(out, "plane_depths")
    assert_rows_equal(layer_rows(lyr), table_rows(expect.tables["plane_depths"]))
    for g, e in zip(geometries(lyr), expect.tables["plane_depths"].geometries):
        np.testing.assert_allclose(g[0], e, rtol=0, atol=1e-6)
    assert res["N_PAIRS"] == 3 and res["N_HITS"] == 3
    rows = layer_rows(lyr)
    assert all(r["depth_lo95"] <= r["depth_m"] <= r["depth_hi95"] for r in rows)


def test_planedepths_all_pairs_vertical_with_z_field(synth, planes_gpkg, tmp_path):
    out = str(tmp_path / "o.gpkg")
    import processing

    pts = str(tmp_path / "pts.gpkg")
    processing.run("native:fieldcalculator", {
        "INPUT": synth["gpkg"] + "|layername=borehole_collars", "FIELD_NAME": "z", "FIELD_TYPE": 0,
        "FIELD_LENGTH": 0, "FIELD_PRECISION": 0, "FORMULA": "600", "OUTPUT": ogr_dest(pts, "c")})
    res = run("slipsense:planedepths", {"COLLARS": pts + "|layername=c", "Z_FIELD": "z",
                                        "PLANES": f"{planes_gpkg}|layername=trace_planes",
                                        "OUTPUT": ogr_dest(out, "d")})
    rows = layer_rows(layer(out, "d"))
    assert res["N_PAIRS"] == 6 and len(rows) == 6
    assert {r["collar_z"] for r in rows} == {600.0}
    assert {(r["trend"], r["plunge"]) for r in rows} == {(0.0, 90.0)}
    assert [r["collar_id"] for r in rows[:2]] == ["1", "1"]


# ---------------------------------------------------------------------------------------------
# Demo data (demo_gpkg/), when it exists


def test_demo_all_algorithms(demo, tmp_path):
    out = str(tmp_path / "demo_out.gpkg")
    res = run("slipsense:traceplanes", {"INPUT": demo["gpkg"] + "|layername=fault_traces", "ID_FIELD": "fault_id",
                                        "DEM": demo["dem"], "OUTPUT": ogr_dest(out, "trace_planes")})
    expect = ref.trace_planes(demo["gpkg"], "fault_traces", demo["dem"], "fault_id")
    rows = layer_rows(layer(out, "trace_planes"))
    assert_rows_equal(rows, table_rows(expect.tables["trace_planes"]))
    assert res["N_TRACES"] == len(expect.tables["trace_planes"]) == 5
    # the demo's ground truth (demo_gpkg/README.md): dip direction / dip of F1-F5
    truth = {"F1": (98, 60), "F2": (282, 58), "F3": (95, 27), "F4": (155, 87), "F5": (310, 70)}
    for r in rows:
        assert r["quality"] == "good", r
        assert (r["dip_dir"], r["dip"]) == pytest.approx(truth[r["trace_id"]], abs=1.5), r
    res = run("slipsense:pointplanes", {"INPUT": demo["gpkg"] + "|layername=contact_points",
                                        "GROUP_FIELD": "group_id", "Z_FIELD": "z_m",
                                        "OUTPUT": ogr_dest(out, "point_planes")})
    expect = ref.point_planes(demo["gpkg"], "contact_points", "group_id", z_field="z_m")
    rows = {r["plane_id"]: r for r in layer_rows(layer(out, "point_planes"))}
    assert_rows_equal(list(rows.values()), table_rows(expect.tables["point_planes"]))
    assert rows["collinear_test"]["quality"] == "ill-posed" and rows["collinear_test"]["dip"] is None
    for g in ("bedA_grp1", "bedA_grp2", "bedA_grp3"):  # bed_A: 352/11
        assert (rows[g]["dip_dir"], rows[g]["dip"]) == pytest.approx((352.0, 11.0), abs=0.01)
    run("slipsense:structurecontours", {"PLANES": out + "|layername=trace_planes",
                                        "OUTPUT": ogr_dest(out, "structure_contours")})
    run("slipsense:outcroptraces", {"PLANES": out + "|layername=trace_planes", "DEM": demo["dem"],
                                    "OUTPUT": ogr_dest(out, "outcrop_traces")})
    res = run("slipsense:planedepths", {"COLLARS": demo["gpkg"] + "|layername=borehole_collars",
                                        "ID_FIELD": "hole_id", "TREND_FIELD": "trend", "PLUNGE_FIELD": "plunge",
                                        "PLANES": out + "|layername=trace_planes", "DEM": demo["dem"],
                                        "OUTPUT": ogr_dest(out, "plane_depths")})
    assert res["N_PAIRS"] == 25 and res["N_HITS"] > 0
    assert set(gpkg_tables(out)) == {"trace_planes", "point_planes", "structure_contours", "outcrop_traces",
                                     "plane_depths"}

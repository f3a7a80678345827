"""slipsense:netslip and slipsense:mapslip in-process and through qgis_process: the same layers as the
command line, field by field (the demo for map slip; a CSV table of separations for net slip), clear
errors, help texts with the caution."""
import json
import subprocess

import numpy as np
import pytest

from qgishelpers import geometries, gpkg_columns, gpkg_rows, gpkg_tables, layer, ogr_dest, run, run_qgis_process

CAUTION = "must be checked by a qualified professional against local codes and licensed practice"


def cli_run(cli, *args):
    proc = subprocess.run([cli, *map(str, args), "--json", "--quiet"], capture_output=True, text=True,
                          timeout=300, stdin=subprocess.DEVNULL)
    assert proc.returncode == 0, proc.stderr[-3000:]
    return json.loads(proc.stdout)


def assert_same(a_path, b_path, table, b_table=None):
    """Same columns, rows (floats to 1e-9) and geometries."""
    b_table = b_table or table
    assert [c for c, _ in gpkg_columns(a_path, table)] == [c for c, _ in gpkg_columns(b_path, b_table)]
    _, ra = gpkg_rows(a_path, table)
    _, rb = gpkg_rows(b_path, b_table)
    assert len(ra) == len(rb) > 0
    for i, (x, y) in enumerate(zip(ra, rb)):
        for k in x:
            u, v = x[k], y[k]
            if isinstance(u, float) or isinstance(v, float):
                assert (u is None) == (v is None), f"{table} row {i} {k}: {u!r} != {v!r}"
                if u is not None:
                    assert u == pytest.approx(v, rel=1e-9, abs=1e-9), f"{table} row {i} {k}: {u!r} != {v!r}"
            else:
                assert u == v, f"{table} row {i} {k}: {u!r} != {v!r}"
    for g, h in zip(geometries(layer(a_path, table)), geometries(layer(b_path, b_table))):
        assert g.shape == h.shape
        np.testing.assert_allclose(g, h, rtol=0, atol=1e-6)


@pytest.fixture(scope="module")
def demo_planes(demo, cli, tmp_path_factory):
    path = str(tmp_path_factory.mktemp("planes") / "planes.gpkg")
    cli_run(cli, "trace-planes", "--dem", demo["dem"], "--traces", demo["gpkg"], "--layer", "fault_traces",
            "--id-field", "fault_id", "--draws", "60", "--out", path)
    return path


def mapslip_params(demo, planes, out, **extra):
    p = {"PLANES": planes + "|layername=trace_planes", "CONTACTS": demo["gpkg"] + "|layername=marker_contacts",
         "MARKER_FIELD": "marker_id", "DEM": demo["dem"], "STATIONS": demo["gpkg"] + "|layername=slip_stations",
         "DRAWS": 60, "SEED": 2, "OUTPUT": ogr_dest(out, "net_slip"),
         "OUTPUT_VECTORS": ogr_dest(out, "slip_vectors"), "OUTPUT_FITS": ogr_dest(out, "marker_fits")}
    p.update(extra)
    return p


def test_mapslip_demo_equals_command_line(demo, demo_planes, cli, tmp_path):
    q, c = str(tmp_path / "qgis.gpkg"), str(tmp_path / "cli.gpkg")
    res = run("slipsense:mapslip", mapslip_params(demo, demo_planes, q))
    cli_run(cli, "map-slip", "--planes", demo_planes, "--contacts", demo["gpkg"], "--contacts-layer",
            "marker_contacts", "--marker-field", "marker_id", "--dem", demo["dem"], "--stations", demo["gpkg"],
            "--stations-layer", "slip_stations", "--draws", "60", "--seed", "2", "--out", c)
    for table in ("net_slip", "slip_vectors", "marker_fits"):
        assert_same(q, c, table)
    assert res["N_FAULTS"] == 4 and res["N_OVER_DETERMINED"] == 4
    assert res["OUTPUT"] == f"{q}|layername=net_slip"
    assert gpkg_tables(q) == ["marker_fits", "net_slip", "slip_vectors"]


SEP_HEADER = ["fault_id", "marker_id", "marker_dip_dir", "marker_dip", "fault_dip_dir", "fault_dip",
              "observation", "separation_m", "sigma_m", "rake", "rake_sigma"]
SEP_ROWS = [
    ["F1", "bed_A", 352, 11, 98, 60, "strike", -730.49, 2, "", ""],
    ["F1", "bed_A", 352, 11, 98, 60, "dip", -152.88, 2, "", ""],
    ["F1", "dyke_1", 188, 80, 98, 60, "dip", -320.43, 2, "", ""],
    ["F9", "bed", 0, 0, 90, 30, "vertical", -10, 0.5, "", ""],
    ["F9", "", "", "", "", "", "rake", "", "", -90, 2],
    ["F8", "bed", 0, 0, 90, 30, "vertical", -10, 0.5, "", ""],
]


def _csv(path, rows, header=SEP_HEADER):
    with open(path, "w") as f:
        f.write(",".join(header) + "\n")
        for r in rows:
            f.write(",".join(str(v) for v in r) + "\n")
    return str(path)


def test_netslip_csv_equals_command_line(qgis_app, cli, tmp_path):
    table = _csv(tmp_path / "seps.csv", SEP_ROWS)
    q, c = str(tmp_path / "qgis.gpkg"), str(tmp_path / "cli.gpkg")
    res = run("slipsense:netslip", {"INPUT": table, "DRAWS": 80, "SEED": 5, "OUTPUT": ogr_dest(q, "net_slip")})
    cli_run(cli, "net-slip", "--table", table, "--draws", "80", "--seed", "5", "--out", c)
    assert_same(q, c, "net_slip")
    rows = {r["fault_id"]: r for r in gpkg_rows(q, "net_slip")[1]}
    assert rows["F1"]["status"] == "over-determined" and rows["F1"]["net_slip_m"] == pytest.approx(160.0, rel=0.01)
    assert rows["F9"]["status"] == "unique" and rows["F9"]["net_slip_m"] == pytest.approx(20.0, rel=1e-6)
    assert rows["F8"]["status"] == "under-determined" and rows["F8"]["net_slip_m"] is None
    assert rows["F8"]["dip_slip_only_m"] == pytest.approx(-20.0)
    assert (res["N_FAULTS"], res["N_UNIQUE"], res["N_OVER_DETERMINED"], res["N_UNDER_DETERMINED"]) == (3, 1, 1, 1)


@pytest.mark.parametrize("column, value, match", [
    ("marker_dip", 97, r"feature 1: field 'marker_dip' = 97.0 is outside \[0, 90\] degrees"),
    ("observation", "sideways", r"field 'observation': unknown observation 'sideways'"),
    ("separation_m", "", r"field 'separation_m' is empty"),
])
def test_netslip_bad_rows_are_clear(qgis_app, tmp_path, column, value, match):
    from qgis.core import QgsProcessingException

    row = list(SEP_ROWS[0])
    row[SEP_HEADER.index(column)] = value
    table = _csv(tmp_path / "bad.csv", [row])
    with pytest.raises(QgsProcessingException, match=match):
        run("slipsense:netslip", {"INPUT": table, "OUTPUT": ogr_dest(str(tmp_path / "o.gpkg"), "o")})


def test_netslip_missing_field_is_clear(qgis_app, tmp_path):
    from qgis.core import QgsProcessingException

    head = [h for h in SEP_HEADER if h != "observation"]
    table = _csv(tmp_path / "noobs.csv", [[v for h, v in zip(SEP_HEADER, SEP_ROWS[0]) if h != "observation"]], head)
    with pytest.raises(QgsProcessingException, match="has no field 'observation'"):
        run("slipsense:netslip", {"INPUT": table, "OUTPUT": ogr_dest(str(tmp_path / "o.gpkg"), "o")})


def test_mapslip_bad_parameters_are_clear(demo, demo_planes, tmp_path):
    from qgis.core import QgsProcessingException

    out = str(tmp_path / "o.gpkg")
    with pytest.raises(QgsProcessingException, match="has no field 'nosuch'"):
        run("slipsense:mapslip", mapslip_params(demo, demo_planes, out, MARKER_FIELD="nosuch"))
    with pytest.raises(QgsProcessingException, match="has no field 'azimuth'"):
        run("slipsense:mapslip", mapslip_params(demo, demo_planes, out, STATION_TREND_FIELD="azimuth"))
    with pytest.raises(QgsProcessingException, match="same layer as the input"):
        run("slipsense:mapslip", mapslip_params(demo, demo_planes, out,
                                                OUTPUT=ogr_dest(demo["gpkg"], "marker_contacts")))


def test_manners(qgis_app):
    from qgis.core import QgsApplication
    from qgis.core import QgsProcessingParameterDefinition as D

    for alg_id, words in (("slipsense:netslip", ("Xu et al. 2007", "under-determined", "footwall marker")),
                          ("slipsense:mapslip", ("parallel", "hanging wall", "under-determined"))):
        alg = QgsApplication.processingRegistry().algorithmById(alg_id)
        assert alg.group() == "Fault kinematics" and alg.groupId() == "faultkinematics"
        text = alg.shortHelpString()
        for w in (CAUTION, "grid north") + words:
            assert w in text, (alg_id, w)
        p = {d.name(): d for d in alg.parameterDefinitions()}
        assert p["DRAWS"].flags() & D.FlagAdvanced and p["SEED"].flags() & D.FlagAdvanced
    alg = QgsApplication.processingRegistry().algorithmById("slipsense:mapslip")
    p = {d.name(): d for d in alg.parameterDefinitions()}
    assert p["DISTANCE"].defaultValue() == 1000.0 and p["REACH"].defaultValue() == 100.0
    assert p["STATIONS"].flags() & D.FlagOptional and p["OUTPUT_FITS"].flags() & D.FlagOptional


def test_qgis_process_runs_both(demo, demo_planes, qp_env, tmp_path):
    out = str(tmp_path / "results.gpkg")
    proc = run_qgis_process(["--json", "run", "slipsense:mapslip", "--",
                             f"PLANES={demo_planes}|layername=trace_planes",
                             f"CONTACTS={demo['gpkg']}|layername=marker_contacts", "MARKER_FIELD=marker_id",
                             f"DEM={demo['dem']}", "BAND=1", "DRAWS=20",
                             f"OUTPUT=ogr:dbname='{out}' table=\"slip\""], qp_env)
    assert proc.returncode == 0, proc.stderr[-3000:]
    data = json.loads(proc.stdout)
    assert data["results"]["OUTPUT"] == f"{out}|layername=slip" and data["results"]["N_UNIQUE"] == 4
    table = _csv(tmp_path / "seps.csv", SEP_ROWS)
    proc = run_qgis_process(["--json", "run", "slipsense:netslip", "--", f"INPUT={table}", "DRAWS=20",
                             f"OUTPUT=ogr:dbname='{out}' table=\"seps_slip\""], qp_env)
    assert proc.returncode == 0, proc.stderr[-3000:]
    assert json.loads(proc.stdout)["results"]["N_FAULTS"] == 3
    assert set(gpkg_tables(out)) == {"slip", "seps_slip"}
    proc = run_qgis_process(["--json", "run", "slipsense:netslip", "--", f"INPUT={demo_planes}|layername=trace_planes",
                             f"OUTPUT={tmp_path / 'bad.gpkg'}"], qp_env)
    assert proc.returncode != 0 and "has no field 'fault_id'" in proc.stderr

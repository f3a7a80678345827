"""slipsense:stressinversion and slipsense:sliptendency in-process and through qgis_process: the same
layers as the command line, field by field (demo data), clear errors, manners."""
import json
import subprocess

import numpy as np
import pytest

from qgishelpers import gpkg_columns, gpkg_rows, gpkg_tables, geometries, layer, ogr_dest, run, run_qgis_process

INV = "slipsense:stressinversion"
TEND = "slipsense:sliptendency"


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
    ga, gb = geometries(layer(a_path, table)), geometries(layer(b_path, b_table))
    assert len(ga) == len(gb)
    for g, h in zip(ga, gb):
        np.testing.assert_allclose(g, h, rtol=0, atol=1e-6)


STATIONS_CLI = ("--layer", "slip_stations", "--id-field", "station_id", "--trend-field", "trend",
                "--plunge-field", "plunge", "--sense-field", "sense")


def inv_params(demo, out, **extra):
    p = {"INPUT": demo["gpkg"] + "|layername=slip_stations", "ID_FIELD": "station_id", "TREND_FIELD": "trend",
         "PLUNGE_FIELD": "plunge", "SENSE_FIELD": "sense", "GROUP_FIELD": "phase", "RESAMPLES": 200, "SEED": 3,
         "OUTPUT": ogr_dest(out, "stress_axes"), "OUTPUT_MISFITS": ogr_dest(out, "stress_misfits")}
    p.update(extra)
    return p


@pytest.fixture(scope="module")
def cli_results(demo, cli, tmp_path_factory):
    """Command-line runs on the demo: trace planes (with windows), inversion, tendencies."""
    d = tmp_path_factory.mktemp("stress_cli")
    planes, inv, st = str(d / "planes.gpkg"), str(d / "inv.gpkg"), str(d / "st.gpkg")
    cli_run(cli, "trace-planes", "--dem", demo["dem"], "--traces", demo["gpkg"], "--layer", "fault_traces",
            "--id-field", "fault_id", "--draws", "0", "--window", "1500", "--out", planes)
    cli_run(cli, "stress-inversion", "--stations", demo["gpkg"], *STATIONS_CLI, "--group-field", "phase",
            "--resamples", "200", "--seed", "3", "--out", inv)
    cli_run(cli, "slip-tendency", "--planes", planes, "--planes-layer", "trace_planes", "--shmax-azimuth", "35",
            "--regime", "SS", "--sv-gradient", "25", "--shmax-gradient", "30", "--shmin-gradient", "16",
            "--pp-gradient", "10", "--depth", "2000", "--out", st)
    cli_run(cli, "slip-tendency", "--planes", planes, "--planes-layer", "trace_windows", "--inversion", inv,
            "--group", "extension", "--sv-gradient", "25", "--pp-gradient", "10", "--depth", "2000",
            "--out", st, "--out-layer", "windows_ext")
    return {"planes": planes, "inv": inv, "st": st}


def test_inversion_equals_command_line(demo, cli_results, tmp_path):
    q = str(tmp_path / "qgis.gpkg")
    res = run(INV, inv_params(demo, q))
    assert_same(q, cli_results["inv"], "stress_axes")
    assert_same(q, cli_results["inv"], "stress_misfits")
    assert res["N_DATA"] == 120 and res["N_USED"] == 120 and res["N_GROUPS"] == 2 and res["N_ILL_POSED"] == 0
    assert gpkg_tables(q) == ["stress_axes", "stress_misfits"]
    regimes = {r["group_id"]: r["regime"] for r in gpkg_rows(q, "stress_axes")[1]}
    assert regimes == {"compression": "TF", "extension": "NF"}


def test_tendency_from_gradients_equals_command_line(demo, cli_results, tmp_path):
    q = str(tmp_path / "qgis.gpkg")
    res = run(TEND, {"PLANES": cli_results["planes"] + "|layername=trace_planes", "STRESS": 0, "SHMAX_AZIMUTH": 35,
                     "REGIME": 2, "SV_GRADIENT": 25, "SHMAX_GRADIENT": 30, "SHMIN_GRADIENT": 16, "PP_GRADIENT": 10,
                     "DEPTH": 2000, "OUTPUT": ogr_dest(q, "slip_tendency")})
    assert_same(q, cli_results["st"], "slip_tendency")
    assert res["N_PLANES"] == 5 and res["N_AT_FAILURE"] == 1
    # demo ground truth: the Velloch Fault (F4) alone exceeds slip tendency 0.6
    rows = gpkg_rows(q, "slip_tendency")[1]
    assert [r["plane_id"] for r in rows if r["slip_tendency"] > 0.6] == ["F4"]


def test_tendency_from_an_inversion_equals_command_line(demo, cli_results, tmp_path):
    q = str(tmp_path / "qgis.gpkg")
    run(TEND, {"PLANES": cli_results["planes"] + "|layername=trace_windows", "STRESS": 2,
               "INVERSION": cli_results["inv"] + "|layername=stress_axes", "GROUP_NAME": "extension",
               "SV_GRADIENT": 25, "PP_GRADIENT": 10, "DEPTH": 2000, "OUTPUT": ogr_dest(q, "windows_ext")})
    assert_same(q, cli_results["st"], "windows_ext")


@pytest.mark.parametrize("alg,extra,match", [
    (TEND, {"STRESS": 0, "SHMAX_AZIMUTH": 35, "SV_GRADIENT": 25, "DEPTH": 1000},
     "a stress from gradients needs SHmax gradient, Shmin gradient, pore-pressure gradient"),
    (TEND, {"STRESS": 0, "SHMAX_AZIMUTH": 35, "SV_GRADIENT": 25, "SHMAX_GRADIENT": 30, "SHMIN_GRADIENT": 16,
            "PP_GRADIENT": 10}, "this stress grows with depth"),
    (TEND, {"STRESS": 1, "SIGMA1": 20, "SIGMA2": 25, "SIGMA3": 30, "SIGMA1_TREND": 35, "SIGMA1_PLUNGE": 0,
            "SIGMA3_TREND": 125, "SIGMA3_PLUNGE": 0, "PORE_PRESSURE": 0}, "sigma1 must be >= sigma3"),
    (TEND, {"STRESS": 2}, "needs a stress inversion result"),
])
def test_bad_stress_is_a_clear_error(cli_results, tmp_path, alg, extra, match):
    from qgis.core import QgsProcessingException

    p = {"PLANES": cli_results["planes"] + "|layername=trace_planes", "OUTPUT": ogr_dest(str(tmp_path / "o.gpkg"), "o")}
    p.update(extra)
    with pytest.raises(QgsProcessingException, match=match):
        run(alg, p)


def test_too_few_stations_is_a_clear_error(demo, tmp_path):
    from osgeo import ogr
    from qgis.core import QgsProcessingException

    import qgissynth

    path = str(tmp_path / "few.gpkg")
    ds = ogr.GetDriverByName("GPKG").CreateDataSource(path)
    lyr = qgissynth._layer(ds, "st", ogr.wkbPoint, 32633, [("dip_dir", ogr.OFTReal), ("dip", ogr.OFTReal),
                                                            ("rake", ogr.OFTReal)])
    for i, (dd, dp, rk) in enumerate([(90, 60, -90), (270, 60, -90), (0, 50, -80)]):
        qgissynth._add(lyr, f"POINT ({500100 + 10 * i} 4099000)", dip_dir=dd, dip=dp, rake=rk)
    ds = None
    with pytest.raises(QgsProcessingException, match="needs at least 4 fault-slip data"):
        run(INV, {"INPUT": path + "|layername=st", "RAKE_FIELD": "rake", "OUTPUT": ogr_dest(str(tmp_path / "o.gpkg"), "o")})
    with pytest.raises(QgsProcessingException, match="exactly one form"):
        run(INV, {"INPUT": path + "|layername=st", "OUTPUT": ogr_dest(str(tmp_path / "o.gpkg"), "o")})


def test_manners(qgis_app):
    from qgis.core import QgsApplication
    from qgis.core import QgsProcessingParameterDefinition as D

    reg = QgsApplication.processingRegistry()
    inv, tend = reg.algorithmById(INV), reg.algorithmById(TEND)
    for alg in (inv, tend):
        assert alg.group() == "Stress" and alg.groupId() == "stress"
        assert "qualified professional" in alg.shortHelpString()
    assert "Michael (1984" in inv.shortHelpString() and "Zoback (1992)" in inv.shortHelpString()
    text = tend.shortHelpString()
    assert "not a hazard assessment" in text and "Morris, Ferrill" in text and "local regulation" in text
    p = {d.name(): d for d in inv.parameterDefinitions()}
    assert p["RESAMPLES"].defaultValue() == 1000 and p["RESAMPLES"].flags() & D.FlagAdvanced
    assert p["OUTPUT_MISFITS"].flags() & D.FlagOptional
    p = {d.name(): d for d in tend.parameterDefinitions()}
    assert p["FRICTION"].defaultValue() == 0.6 and p["DEPTH"].flags() & D.FlagOptional


def test_qgis_process_runs_both(demo, cli_results, qp_env, tmp_path):
    out = str(tmp_path / "results.gpkg")
    proc = run_qgis_process(["--json", "run", INV, "--", f"INPUT={demo['gpkg']}|layername=slip_stations",
                             "RAKE_FIELD=rake", "GROUP_FIELD=phase", "RESAMPLES=50",
                             f"OUTPUT=ogr:dbname='{out}' table=\"axes\""], qp_env)
    assert proc.returncode == 0, proc.stderr[-3000:]
    data = json.loads(proc.stdout)
    assert data["results"]["OUTPUT"] == f"{out}|layername=axes" and data["results"]["N_GROUPS"] == 2
    proc = run_qgis_process(["--json", "run", TEND, "--", f"PLANES={cli_results['planes']}|layername=trace_planes",
                             "STRESS=1", "SIGMA1=60", "SIGMA2=50", "SIGMA3=32", "SIGMA1_TREND=35", "SIGMA1_PLUNGE=0",
                             "SIGMA3_TREND=125", "SIGMA3_PLUNGE=0", "PORE_PRESSURE=20",
                             f"OUTPUT=ogr:dbname='{out}' table=\"tendency\""], qp_env)
    assert proc.returncode == 0, proc.stderr[-3000:]
    assert json.loads(proc.stdout)["results"]["N_AT_FAILURE"] == 1
    assert set(gpkg_tables(out)) == {"axes", "tendency"}

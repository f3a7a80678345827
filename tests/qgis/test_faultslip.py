"""slipsense:faultslip in-process and through qgis_process: the same layers as the command line,
field by field (demo slip_stations and a layer of bad rows), clear errors, manners."""
import json
import subprocess

import numpy as np
import pytest

from qgishelpers import gpkg_columns, gpkg_rows, gpkg_tables, geometries, layer, ogr_dest, run, run_qgis_process

ALG = "slipsense:faultslip"
CAUTION = "must be checked by a qualified professional against local codes and licensed practice"


def cli_run(cli, *args):
    proc = subprocess.run([cli, *map(str, args), "--json", "--quiet"], capture_output=True, text=True,
                          timeout=300, stdin=subprocess.DEVNULL)
    assert proc.returncode == 0, proc.stderr[-3000:]
    return json.loads(proc.stdout)


def assert_same(a_path, b_path, table, b_table=None):
    """Same columns, rows (floats to 1e-9) and point geometries."""
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
        np.testing.assert_allclose(g, h, rtol=0, atol=1e-6)


class Feedback:
    """A QgsProcessingFeedback that keeps the warnings (made lazily: QGIS must be up)."""

    def __new__(cls):
        from qgis.core import QgsProcessingFeedback

        class _F(QgsProcessingFeedback):
            def __init__(self):
                super().__init__()
                self.warnings = []

            def pushWarning(self, msg):  # noqa: N802 - QGIS name
                self.warnings.append(msg)
                super().pushWarning(msg)

        return _F()


def demo_params(demo, out, **extra):
    p = {"INPUT": demo["gpkg"] + "|layername=slip_stations", "ID_FIELD": "station_id",
         "TREND_FIELD": "trend", "PLUNGE_FIELD": "plunge", "SENSE_FIELD": "sense", "GROUP_FIELD": "phase",
         "RESAMPLES": 200, "SEED": 3, "OUTPUT": ogr_dest(out, "fault_slip"),
         "OUTPUT_AXES": ogr_dest(out, "kinematic_axes")}
    p.update(extra)
    return p


def test_demo_equals_command_line(demo, cli, tmp_path):
    q, c = str(tmp_path / "qgis.gpkg"), str(tmp_path / "cli.gpkg")
    res = run(ALG, demo_params(demo, q))
    cli_run(cli, "fault-slip", "--stations", demo["gpkg"], "--layer", "slip_stations", "--id-field", "station_id",
            "--trend-field", "trend", "--plunge-field", "plunge", "--sense-field", "sense", "--group-field", "phase",
            "--resamples", "200", "--seed", "3", "--out", c)
    assert_same(q, c, "fault_slip")
    assert_same(q, c, "kinematic_axes")
    assert res["N_DATA"] == 120 and res["N_CONSISTENT"] == 120 and res["N_GROUPS"] == 2
    assert res["OUTPUT"] == f"{q}|layername=fault_slip"
    assert gpkg_tables(q) == ["fault_slip", "kinematic_axes"]
    # the layer's rake field holds the generator's true rake (demo ground truth, 0.01°)
    _, rows = gpkg_rows(q, "fault_slip")
    _, src = gpkg_rows(demo["gpkg"], "slip_stations")
    assert max(abs((r["rake"] - s["rake"] + 180) % 360 - 180) for r, s in zip(rows, src)) < 0.02


def test_rake_form_equals_command_line(demo, cli, tmp_path):
    q, c = str(tmp_path / "qgis.gpkg"), str(tmp_path / "cli.gpkg")
    run(ALG, {"INPUT": demo["gpkg"] + "|layername=slip_stations", "RAKE_FIELD": "rake", "SENSE_FIELD": "sense",
              "GROUP_FIELD": "fault_id", "RESAMPLES": 50, "OUTPUT": ogr_dest(q, "fs"),
              "OUTPUT_AXES": ogr_dest(q, "ax")})
    cli_run(cli, "fault-slip", "--stations", demo["gpkg"], "--layer", "slip_stations", "--rake-field", "rake",
            "--sense-field", "sense", "--group-field", "fault_id", "--resamples", "50", "--out", c)
    assert_same(q, c, "fs", "fault_slip")
    assert_same(q, c, "ax", "kinematic_axes")


@pytest.fixture
def bad_gpkg(qgis_app, tmp_path):
    """Stations with a dip of 97, a lineation 40° off its plane, an unknown sense word, a NULL
    sense, a text pitch end and a sense that contradicts the rake of the lineation."""
    from osgeo import ogr

    import qgissynth

    path = str(tmp_path / "bad.gpkg")
    ds = ogr.GetDriverByName("GPKG").CreateDataSource(path)
    lyr = qgissynth._layer(ds, "st", ogr.wkbPoint, 32633,
                           [("sid", ogr.OFTString), ("dd", ogr.OFTReal), ("dip", ogr.OFTReal),
                            ("tr", ogr.OFTReal), ("pl", ogr.OFTReal), ("sense", ogr.OFTString)])
    rows = [("a", 90, 60, 90, 60, "normal"), ("b", 90, 97, 90, 60, "normal"), ("c", 90, 60, 90, 20, "normal"),
            ("d", 90, 60, 90, 60, "sideways"), ("e", 90, 60, 90, 60, None), ("f", 270, 60, 270, 60, "150")]
    for i, (sid, dd, dip, tr, pl, sense) in enumerate(rows):
        attrs = dict(sid=sid, dd=dd, dip=dip, tr=tr, pl=pl)
        if sense is not None:
            attrs["sense"] = sense
        qgissynth._add(lyr, f"POINT ({500100 + 10 * i} 4099000)", **attrs)
    ds = None
    return path


def test_bad_rows_are_flagged_like_the_command_line(bad_gpkg, cli, tmp_path):
    q, c = str(tmp_path / "qgis.gpkg"), str(tmp_path / "cli.gpkg")
    fb = Feedback()
    res = run(ALG, {"INPUT": bad_gpkg + "|layername=st", "ID_FIELD": "sid", "DIP_DIR_FIELD": "dd",
                    "TREND_FIELD": "tr", "PLUNGE_FIELD": "pl", "SENSE_FIELD": "sense",
                    "OUTPUT": ogr_dest(q, "fault_slip"), "OUTPUT_AXES": ogr_dest(q, "kinematic_axes")}, feedback=fb)
    cli_run(cli, "fault-slip", "--stations", bad_gpkg, "--id-field", "sid", "--dip-dir-field", "dd",
            "--trend-field", "tr", "--plunge-field", "pl", "--sense-field", "sense", "--out", c)
    assert_same(q, c, "fault_slip")
    assert_same(q, c, "kinematic_axes")
    status = {r["station_id"]: r["status"] for r in gpkg_rows(q, "fault_slip")[1]}
    assert status["a"] == "consistent" and status["b"] == "rejected: dip = 97 is outside [0, 90] degrees"
    assert status["c"].startswith("rejected: lineation 90/20 is 40.0° off its plane")
    assert status["d"].startswith("rejected: unknown sense 'sideways': use normal, reverse")
    assert status["e"].startswith("ambiguous: no sense given")
    assert status["f"] == ("contradicts: hanging-wall motion azimuth 150 is 60° from the slip trend 90 "
                           "(more than 45°)")
    assert "feature 2: field 'dip' = 97 is outside [0, 90] degrees; datum rejected" in fb.warnings
    assert any(w.startswith("feature 4: field 'sense': unknown sense 'sideways'") for w in fb.warnings)
    assert (res["N_CONSISTENT"], res["N_REJECTED"], res["N_AMBIGUOUS"], res["N_CONTRADICTS"]) == (1, 3, 1, 1)


@pytest.mark.parametrize("extra,match", [
    ({"TREND_FIELD": "nosuch", "PLUNGE_FIELD": "pl"}, "has no field 'nosuch'"),
    ({}, "exactly one form"),
    ({"TREND_FIELD": "tr"}, "needs both TREND_FIELD and PLUNGE_FIELD"),
    ({"PITCH_FIELD": "pl"}, "needs both PITCH_FIELD and PITCH_END_FIELD"),
])
def test_bad_parameters_are_clear(bad_gpkg, tmp_path, extra, match):
    from qgis.core import QgsProcessingException

    p = {"INPUT": bad_gpkg + "|layername=st", "DIP_DIR_FIELD": "dd", "OUTPUT": ogr_dest(str(tmp_path / "o.gpkg"), "o")}
    p.update(extra)
    with pytest.raises(QgsProcessingException, match=match):
        run(ALG, p)


def test_output_over_the_input_is_refused(demo, tmp_path):
    from qgis.core import QgsProcessingException

    with pytest.raises(QgsProcessingException, match="same layer as the input"):
        run(ALG, demo_params(demo, demo["gpkg"], OUTPUT=ogr_dest(demo["gpkg"], "slip_stations"),
                             OUTPUT_AXES=None))


def test_manners(qgis_app):
    from qgis.core import QgsApplication
    from qgis.core import QgsProcessingParameterDefinition as D

    alg = QgsApplication.processingRegistry().algorithmById(ALG)
    assert alg.name() == "faultslip" and alg.group() == "Fault kinematics" and alg.groupId() == "faultkinematics"
    text = alg.shortHelpString()
    for words in (CAUTION, "Marrett &amp; Allmendinger (1990)", "Aki &amp; Richards 1980", "grid north",
                  "misfit tolerance", "hanging wall"):
        assert words in text, words
    p = {d.name(): d for d in alg.parameterDefinitions()}
    assert p["MISFIT_TOL"].defaultValue() == 20.0 and p["MISFIT_TOL"].maximum() == 90.0
    assert p["RESAMPLES"].flags() & D.FlagAdvanced and p["SEED"].flags() & D.FlagAdvanced
    assert p["OUTPUT_AXES"].flags() & D.FlagOptional and p["DIP_DIR_FIELD"].defaultValue() == "dip_dir"


def test_qgis_process_runs_into_a_named_table(demo, qp_env, tmp_path):
    out = str(tmp_path / "results.gpkg")
    proc = run_qgis_process(["--json", "run", ALG, "--", f"INPUT={demo['gpkg']}|layername=slip_stations",
                             "ID_FIELD=station_id", "RAKE_FIELD=rake", "RESAMPLES=20",
                             f"OUTPUT=ogr:dbname='{out}' table=\"slip_data\"",
                             f"OUTPUT_AXES=ogr:dbname='{out}' table=\"axes\""], qp_env)
    assert proc.returncode == 0, proc.stderr[-3000:]
    data = json.loads(proc.stdout)
    assert data["results"]["OUTPUT"] == f"{out}|layername=slip_data" and data["results"]["N_DATA"] == 120
    assert set(gpkg_tables(out)) == {"slip_data", "axes"}
    assert len(gpkg_rows(out, "axes")[1]) == 1

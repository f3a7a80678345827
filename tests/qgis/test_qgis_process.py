"""qgis_process smoke tests (subprocess): the provider is listed, each algorithm runs from the
command line into a named GeoPackage table that keeps the file's other tables, failures give a
non-zero exit and the message, and the release ZIP installs into a fresh profile and runs."""
import json
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

from qgishelpers import PLUGIN_DIR, PLUGIN_ID, PROVIDER_ID, qgis_process_env, run_qgis_process
from qgishelpers import gpkg_rows, gpkg_tables

ALGORITHMS = ("traceplanes", "pointplanes", "structurecontours", "outcroptraces", "planedepths")
ALGORITHMS += ("netslip", "mapslip")  # net slip (issue 4)
ALGORITHMS += ("faultslip",)  # fault-slip data and kinematic axes (issue 4)
ALGORITHMS += ("stressinversion", "sliptendency")  # stress (issue 6)
ALGORITHMS += ("crosssection",)  # cross-sections (issue 5)


def _json(proc):
    assert proc.returncode == 0, f"rc {proc.returncode}\nstdout: {proc.stdout[-2000:]}\nstderr: {proc.stderr[-3000:]}"
    return json.loads(proc.stdout)


def dest(path, table):
    return f"OUTPUT=ogr:dbname='{path}' table=\"{table}\""


def test_provider_and_algorithms_are_listed(qp_env):
    data = _json(run_qgis_process(["--json", "list"], qp_env))
    assert PROVIDER_ID in data["providers"], "the plugin did not load (see stderr of qgis_process list)"
    algs = data["providers"][PROVIDER_ID]["algorithms"]
    assert sorted(algs) == sorted(f"{PROVIDER_ID}:{a}" for a in ALGORITHMS)
    help_ = _json(run_qgis_process(["--json", "help", "slipsense:traceplanes"], qp_env))
    params = help_["parameters"]
    assert {"INPUT", "ID_FIELD", "DEM", "BAND", "SPACING", "SIGMA_XY", "SIGMA_Z", "DRAWS", "SEED", "WINDOW",
            "OUTPUT", "OUTPUT_WINDOWS"} <= set(params)
    assert help_["algorithm_details"]["group"] == "Fault geometry"
    assert help_["algorithm_details"]["can_cancel"] is True


def test_every_algorithm_runs_into_a_named_table(synth, qp_env, tmp_path):
    out = tmp_path / "results.gpkg"
    shutil.copyfile(synth["gpkg"], out)  # the output file already holds other layers
    g = str(out)
    runs = [
        ("traceplanes", [f"INPUT={synth['gpkg']}|layername=fault_traces", "ID_FIELD=fault_id",
                         f"DEM={synth['dem']}", "BAND=1", "DRAWS=20", dest(g, "trace_planes")]),
        ("pointplanes", [f"INPUT={synth['gpkg']}|layername=contact_points", "GROUP_FIELD=group_id",
                         "Z_FIELD=z_m", dest(g, "point_planes")]),
        ("structurecontours", [f"PLANES={g}|layername=trace_planes", "INTERVAL=50", dest(g, "structure_contours")]),
        ("outcroptraces", [f"PLANES={g}|layername=trace_planes", f"DEM={synth['dem']}", "DISTANCE=300",
                           dest(g, "outcrop_traces")]),
        ("planedepths", [f"COLLARS={synth['gpkg']}|layername=borehole_collars", "ID_FIELD=collar_id",
                         f"PLANES={g}|layername=trace_planes", f"DEM={synth['dem']}", dest(g, "plane_depths")]),
    ]
    for alg, args in runs:
        data = _json(run_qgis_process(["--json", "run", f"slipsense:{alg}", "--", *args], qp_env))
        table = args[-1].split('table="')[1].rstrip('"')
        assert data["results"]["OUTPUT"] == f"{g}|layername={table}"
        assert any("slipsense engine" in m for m in data["log"]["info"])
        assert len(gpkg_rows(g, table)[1]) > 0, alg
    assert set(gpkg_tables(g)) == {"fault_traces", "contact_points", "borehole_collars", "trace_planes",
                                   "point_planes", "structure_contours", "outcrop_traces", "plane_depths"}
    assert len(gpkg_rows(g, "fault_traces")[1]) == 2  # the input layers are intact
    assert data["results"]["N_PAIRS"] == 6


def test_failure_gives_nonzero_exit_and_the_message(synth, qp_env, tmp_path):
    proc = run_qgis_process(["--json", "run", "slipsense:traceplanes", "--",
                             f"INPUT={synth['gpkg']}|layername=fault_traces", "ID_FIELD=nosuch",
                             f"DEM={synth['dem']}", "BAND=1", f"OUTPUT={tmp_path / 'o.gpkg'}"], qp_env)
    assert proc.returncode != 0
    assert "has no field 'nosuch'" in proc.stderr
    assert not (tmp_path / "o.gpkg").exists()


def test_release_zip_installs_into_a_fresh_profile(synth, tmp_path):
    built = subprocess.run([sys.executable, str(PLUGIN_DIR / "build_zip.py"), "--out", str(tmp_path / "dist")],
                           capture_output=True, text=True, check=True)
    zpath = Path(built.stdout.strip())
    assert zpath.name == "slipsense_qgis-0.1.0.zip" and zpath.exists()
    with zipfile.ZipFile(zpath) as zf:
        names = zf.namelist()
    assert all(n.startswith(f"{PLUGIN_ID}/") for n in names)
    assert f"{PLUGIN_ID}/metadata.txt" in names and f"{PLUGIN_ID}/slipsense/steps/__init__.py" in names
    assert f"{PLUGIN_ID}/slipsense/core/traces.py" in names
    assert not any("__pycache__" in n or n.endswith(".pyc") for n in names)
    assert not any(n.startswith(f"{PLUGIN_ID}/slipsense/{p}/") for n in names for p in ("io", "tools", "cli"))

    root = tmp_path / "fresh"
    env = qgis_process_env(root, plugin_path=False, engine_path=False, enable=False)
    plugins = root / "profile" / "profiles" / "default" / "python" / "plugins"
    plugins.mkdir(parents=True)
    with zipfile.ZipFile(zpath) as zf:
        zf.extractall(plugins)
    enabled = run_qgis_process(["plugins", "enable", PLUGIN_ID], env)
    assert enabled.returncode == 0, enabled.stderr[-2000:]
    out = tmp_path / "zip.gpkg"
    data = _json(run_qgis_process(["--json", "run", "slipsense:pointplanes", "--",
                                   f"INPUT={synth['gpkg']}|layername=contact_points", "GROUP_FIELD=group_id",
                                   "Z_FIELD=z_m", dest(out, "point_planes")], env))
    assert any("(vendored)" in m for m in data["log"]["info"]), data["log"]
    assert data["results"]["N_GROUPS"] == 3
    assert [r["plane_id"] for r in gpkg_rows(out, "point_planes")[1]] == ["C10", "C2", "C3"]


def test_output_over_input_fails_from_the_command_line(synth, qp_env, tmp_path):
    g = tmp_path / "copy.gpkg"
    shutil.copyfile(synth["gpkg"], g)
    proc = run_qgis_process(["--json", "run", "slipsense:pointplanes", "--",
                             f"INPUT={g}|layername=contact_points", "GROUP_FIELD=group_id", "Z_FIELD=z_m",
                             dest(g, "contact_points")], qp_env)
    assert proc.returncode != 0 and "same layer as the input INPUT" in proc.stderr
    assert len(gpkg_rows(g, "contact_points")[1]) == 17

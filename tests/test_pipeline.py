"""``slipsense run``: analysis files, checks before work, snapshots between steps, atomic results,
exit codes, the quality gate, provenance, and the default QGIS styles of every layer.

The data are the analytic world of conftest.py (planes of known attitude; trace "S" is a straight
line on a planar ramp and must come out ill-posed)."""
from __future__ import annotations

import hashlib
import json
import os
import shutil
import sqlite3
import xml.dom.minidom

import numpy as np
import pytest

from conftest import read_gpkg

BASE = """
[analysis]
name = "test analysis"
seed = 4
{analysis}

[inputs]
dem = "data/dem.tif"
map = {{ path = "data/traces.gpkg", layers = {{ fault_traces = ["fault_id"] }} }}

[outputs]
folder = "out"
gpkg = "results.gpkg"
report = false
{outputs}

[[steps]]
name = "faults"
command = "trace-planes"
dem = "@dem"
traces = "@map"
layer = "fault_traces"
id_field = "fault_id"
draws = 20
{faults}

[[steps]]
name = "contours"
command = "structure-contours"
planes = "@faults"
interval = 100
depth = 300
{steps}
"""


@pytest.fixture
def project(world, tmp_path):
    d = tmp_path / "proj"
    (d / "data").mkdir(parents=True)
    shutil.copyfile(world["dem"], d / "data" / "dem.tif")
    shutil.copyfile(world["traces"], d / "data" / "traces.gpkg")

    def write(text=None, name="analysis.toml", **parts):
        body = text if text is not None else BASE.format(**{k: parts.get(k, "") for k in
                                                           ("analysis", "outputs", "faults", "steps")})
        (d / name).write_text(body)
        return d / name

    write.dir = d
    return write


def _run(cli, *args):
    return cli("run", *args)


def test_analysis_runs_and_later_steps_read_earlier_layers(project, cli):
    f = project()
    code, out, err = _run(cli, f)
    assert code == 0, err
    res = project.dir / "out" / "results.gpkg"
    assert f"results: {res}" in out and "qualified professional" in out
    planes = read_gpkg(res, "trace_planes").set_index("trace_id")
    assert planes.loc["A", "dip"] == pytest.approx(60.0, abs=1.0)
    contours = read_gpkg(res, "structure_contours")
    assert set(contours.plane_id) >= {"A", "B", "D"}
    # provenance: the contours step read the snapshot after step "faults", named as such, hashed
    prov = read_gpkg(res, "slipsense_provenance").set_index("layer")
    rec = json.loads(prov.loc["structure_contours", "record"])
    assert rec["parameters"]["planes"] == "@faults"
    assert rec["inputs"][0]["file"] == "@faults" and len(rec["inputs"][0]["sha256"]) == 64
    assert rec["analysis"]["step"] == "contours" and rec["analysis"]["sha256"] == hashlib.sha256(f.read_bytes()).hexdigest()
    rec = json.loads(prov.loc["trace_planes", "record"])
    assert rec["parameters"]["seed"] == 4  # the analysis seed reaches every step that takes one
    assert {i["file"] for i in rec["inputs"]} == {"dem.tif", "traces.gpkg"}
    run = read_gpkg(res, "slipsense_run")
    r = json.loads(run.record[0])
    assert r["sha256"] == run.sha256[0] and r["steps_run"][1]["command_line"].startswith(
        "slipsense structure-contours --planes @faults")
    assert run.analysis_text[0] == f.read_text()
    assert "numpy" in r["versions"] and r["quality"]["trace_planes"]["ill-posed"] == 1
    # nothing else is left in the output folder (no work files)
    assert sorted(os.listdir(project.dir / "out")) == ["results.gpkg"]
    # the inputs were not touched
    assert read_gpkg(project.dir / "data" / "traces.gpkg", "fault_traces").shape[0] == 5


def test_results_are_deterministic_for_a_seed(project, cli):
    f = project()
    assert _run(cli, f, "--out-dir", project.dir / "a")[0] == 0
    assert _run(cli, f, "--out-dir", project.dir / "b")[0] == 0
    a = read_gpkg(project.dir / "a" / "results.gpkg", "trace_planes").drop(columns="geometry")
    b = read_gpkg(project.dir / "b" / "results.gpkg", "trace_planes").drop(columns="geometry")
    assert a.equals(b)
    g = project(name="other.toml", analysis="").read_text().replace("seed = 4", "seed = 5")
    (project.dir / "other.toml").write_text(g)
    assert _run(cli, project.dir / "other.toml", "--out-dir", project.dir / "c")[0] == 0
    c = read_gpkg(project.dir / "c" / "results.gpkg", "trace_planes").drop(columns="geometry")
    assert not np.allclose(a.dip_lo95.astype(float).fillna(0), c.dip_lo95.astype(float).fillna(0))


@pytest.mark.parametrize("parts,message", [
    ({"faults": "windo = 1500"}, "step 1 ('faults', trace-planes): unknown key 'windo' for trace-planes (did you mean 'window'?)"),
    ({"faults": "out = 'x.gpkg'"}, "key 'out' cannot be set in a step"),
    ({"faults": "sigma_xy = 'many'"}, "sigma_xy: invalid float value: 'many'"),
    ({"faults": "spacing = true"}, "spacing takes a value, not true"),
    ({"steps": "[[steps]]\ncommand = \"structure-contour\"\nplanes = \"@faults\""},
     "unknown command 'structure-contour' (did you mean 'structure-contours'?)"),
    ({"steps": "[[steps]]\ncommand = \"outcrop-trace\"\nplanes = \"@faults\""},
     "the following arguments are required: dem"),
    ({"steps": "[[steps]]\ncommand = \"structure-contours\"\nname = \"c2\"\nplanes = \"@fualts\""},
     "'@fualts' names no input and no earlier step (did you mean 'faults'?)"),
    ({"steps": "[[steps]]\ncommand = \"structure-contours\"\nplanes = \"@faults\""},
     "both write layer 'structure_contours'"),
    ({"analysis": "fail_below = \"fiar\""}, "fail_below must be one of good, fair, poor, ill-posed, got 'fiar' (did you mean 'fair'?)"),
    ({"outputs": "colour = 1"}, "unknown key 'colour' in [outputs]"),
])
def test_bad_analysis_files_fail_before_any_work(project, cli, parts, message):
    f = project(**parts)
    code, out, err = _run(cli, f)
    assert code == 2, (out, err)
    assert message in err, err
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert not (project.dir / "out").exists()  # nothing was computed or written


def test_missing_inputs_layers_and_fields_are_named(project, cli):
    text = project().read_text()
    for old, new, message in [
        ('"data/dem.tif"', '"data/dem_missing.tif"', "input 'dem' not found"),
        ('fault_traces = ["fault_id"]', 'fault_traces = ["fault_name"]', "layer 'fault_traces' has no field 'fault_name'"),
        ('layer = "fault_traces"', 'layer = "fault_trace"',
         "layer = 'fault_trace': traces.gpkg has no such layer (did you mean 'fault_traces'?)"),
        ('id_field = "fault_id"', 'id_field = "fault"', "id_field = 'fault' is not a field of traces.gpkg|fault_traces"),
    ]:
        (project.dir / "bad.toml").write_text(text.replace(old, new))
        code, _, err = _run(cli, project.dir / "bad.toml")
        assert code == 2 and message in err, err
    (project.dir / "bad.toml").write_text(text.replace("[outputs]", "[outputs"))
    code, _, err = _run(cli, project.dir / "bad.toml")
    assert code == 2 and "bad.toml: not valid TOML" in err
    code, _, err = _run(cli, project.dir / "nope.toml")
    assert code == 2 and "analysis file not found" in err


def test_results_are_never_silently_replaced_and_a_failed_run_leaves_them_intact(project, cli):
    f = project()
    assert _run(cli, f)[0] == 0
    res = project.dir / "out" / "results.gpkg"
    before = res.read_bytes()
    code, _, err = _run(cli, f)
    assert code == 2 and "exists: use --overwrite" in err
    # a step that fails while running (a layer only known after the first step) -> exit 2, intact
    bad = project(name="bad.toml", steps='[[steps]]\nname = "c2"\ncommand = "outcrop-trace"\nplanes = "@faults"\n'
                                         'dem = "@dem"\nlayer = "no_such_layer"\nout_layer = "o2"')
    code, _, err = _run(cli, bad, "--overwrite")
    assert code == 2 and "step 3 'c2' (outcrop-trace) failed" in err and "no layer 'no_such_layer'" in err
    assert res.read_bytes() == before
    assert sorted(os.listdir(project.dir / "out")) == ["results.gpkg"]  # the work folder is gone
    assert _run(cli, f, "--overwrite")[0] == 0


def test_quality_gate_exit_code(project, cli):
    f = project(analysis='fail_below = "poor"')
    code, out, err = _run(cli, f, "--json")
    assert code == 3, err
    s = json.loads(out)
    assert s["gate"] == "failed" and s["exit_code"] == 3
    assert {"layer": "trace_planes", "quality": "ill-posed", "count": 1} in s["below_gate"]
    assert s["quality"]["ill-posed"] == 1 and sum(s["quality"].values()) == 5
    assert (project.dir / "out" / "results.gpkg").exists()  # results are written, the gate only reports
    # the command line overrides the file; no gate, no failure
    code, out, _ = _run(cli, f, "--out-dir", project.dir / "o2", "--fail-below", "ill-posed", "--json")
    assert code == 0 and json.loads(out)["gate"] == "passed"
    g = project(name="g.toml", analysis='fail_below = "good"\nfail_layers = ["trace_windows"]')
    code, _, err = _run(cli, g, "--out-dir", project.dir / "o3")
    assert code == 2 and "fail_layers names 'trace_windows', which the run did not write" in err


def test_check_json_quiet_and_summary(project, cli):
    f = project()
    code, out, err = _run(cli, f, "--check")
    assert code == 0 and "2 steps, checked" in out and "slipsense structure-contours --planes @faults" in out
    assert not (project.dir / "out").exists()
    code, out, err = _run(cli, f, "--check", "--json")
    rec = json.loads(out)
    assert rec["steps"][0]["options"]["draws"] == 20 and rec["steps"][1]["command"] == "structure-contours"
    code, out, err = _run(cli, f, "--quiet")
    assert code == 0 and err == ""
    assert "quality: good 4, fair 0, poor 0, ill-posed 1" in out
    assert "faults    trace-planes" in out or "faults  " in out


def test_progress_per_step_on_a_terminal(project):
    import io

    from slipsense.cli.run import step_commands
    from slipsense.pipeline import load_analysis, run_plan

    cmds = step_commands()
    plan = load_analysis(str(project()), cmds)
    stream = io.StringIO()
    res = run_plan(plan, cmds, show_progress=True, stream=stream)
    text = stream.getvalue()
    assert "[1/2] faults: slipsense trace-planes" in text and "[2/2] contours" in text
    assert "done in" in text and "trace_planes (good 4, ill-posed 1)" in text
    assert "trace-planes [" in text  # the command's own progress bar is passed through
    assert res.steps[0].warnings and "S" in " ".join(res.steps[0].warnings)


def test_every_cli_command_is_a_step():
    from slipsense.cli.main import COMMANDS
    from slipsense.cli.run import step_commands

    cmds = step_commands()
    assert set(cmds) == set(COMMANDS) - {"run"}
    for c in cmds.values():
        assert hasattr(c.parser, "parse_args") and callable(c.run)


def test_output_folders_of_steps_are_moved_into_place(project, cli, tmp_path):
    """A step option whose value is a folder (metavar DIR) is written in the work folder and moved
    to the output folder at the end (checked with a stand-in command)."""
    import argparse

    from slipsense.pipeline import Command, load_analysis, run_plan

    def run_fig(args):
        os.makedirs(args.figures, exist_ok=True)
        with open(os.path.join(args.figures, "a.txt"), "w") as fh:
            fh.write("x")
        return 0

    p = argparse.ArgumentParser()
    p.add_argument("--figures", metavar="DIR")
    p.add_argument("--note")
    from slipsense.cli.run import step_commands

    cmds = dict(step_commands())
    cmds["draw"] = Command("draw", p, run_fig)
    f = project(steps='[[steps]]\ncommand = "draw"\nfigures = "figs"\nnote = "@@literal"')
    plan = load_analysis(str(f), cmds)
    assert plan.steps[2].display() == "slipsense draw --figures " + str(project.dir / "out" / "figs") + " --note @literal"
    run_plan(plan, cmds)
    assert (project.dir / "out" / "figs" / "a.txt").read_text() == "x"
    os.remove(project.dir / "out" / "results.gpkg")
    with pytest.raises(Exception, match="is not empty: use --overwrite"):
        load_analysis(str(f), cmds, overwrite=False)


# --- styles ------------------------------------------------------------------------------------


def test_every_output_layer_gets_a_default_qgis_style(project, cli):
    from slipsense.styles import choose_style, read_styles

    f = project(faults="window = 800")
    assert _run(cli, f)[0] == 0
    res = project.dir / "out" / "results.gpkg"
    styles = read_styles(res)
    assert {k: v[2].split(": ")[1] for k, v in styles.items()} == {
        "trace_planes": "fault_traces", "trace_windows": "fault_traces", "structure_contours": "contours"}
    with sqlite3.connect(res) as con:
        row = con.execute("SELECT f_table_catalog, f_table_schema, f_geometry_column, useAsDefault, styleQML, "
                          "owner FROM layer_styles WHERE f_table_name='trace_planes'").fetchone()
        reg = con.execute("SELECT data_type FROM gpkg_contents WHERE table_name='layer_styles'").fetchone()
        cols = [r[1] for r in con.execute("PRAGMA table_info(layer_styles)")]
    assert reg == ("attributes",)
    assert cols == ["id", "f_table_catalog", "f_table_schema", "f_table_name", "f_geometry_column", "styleName",
                    "styleQML", "styleSLD", "useAsDefault", "description", "owner", "ui", "update_time"]
    assert row[:4] == ("", "", "geom", 1) and row[5] == "slipsense"
    doc = xml.dom.minidom.parseString(row[4].encode())
    r = doc.getElementsByTagName("renderer-v2")[0]
    assert r.getAttribute("type") == "categorizedSymbol" and r.getAttribute("attr") == "quality"
    assert [c.getAttribute("value") for c in doc.getElementsByTagName("category")] == ["good", "fair", "poor", "ill-posed"]
    assert doc.documentElement.getAttribute("labelsEnabled") == "1"
    # choice by fields, for layers other capabilities write
    assert choose_style("slip_tendency", "MULTILINESTRING", ["plane_id", "slip_tendency"]) == "tendency"
    assert choose_style("fault_slip", "POINT", ["trend", "plunge", "sense"]) == "slip_arrows"
    assert choose_style("slip_vectors", "LINESTRINGZ", ["fault_id", "net_slip_m"]) == "slip_vector_lines"
    assert choose_style("orientations", "POINT", ["dip_dir", "dip", "strike"]) == "measured_planes"
    assert choose_style("slipsense_provenance", None, ["layer"]) is None


def test_all_styles_are_well_formed_qml():
    from slipsense.styles import style_qml

    fields = ["dip_dir", "dip", "strike", "quality", "slip_tendency", "elevation_m", "net_slip_m", "trend",
              "slip_trend", "sense", "depth_m", "status"]
    for key in ("fault_traces", "tendency", "contours", "slip_vector_lines", "slip_arrows", "depths",
                "measured_planes", "quality", "predicted_traces", "plain"):
        for geom in ("POINT", "MULTILINESTRING", "POLYGON"):
            if key in ("fault_traces", "contours", "slip_vector_lines", "predicted_traces") and geom != "MULTILINESTRING":
                continue
            if key in ("slip_arrows", "depths", "measured_planes") and geom != "POINT":
                continue
            doc = xml.dom.minidom.parseString(style_qml(key, geom, fields).encode())
            assert doc.documentElement.tagName == "qgis"


def test_a_users_own_default_style_is_kept(tmp_path):
    from slipsense.styles import add_default_styles

    import geopandas as gpd
    import pyogrio
    import shapely

    p = tmp_path / "x.gpkg"
    pyogrio.write_dataframe(gpd.GeoDataFrame({"quality": ["good"]}, geometry=[shapely.Point(0, 0)],
                                             crs="EPSG:32633"), p, layer="pts", driver="GPKG")
    add_default_styles(str(p), ["pts"])
    with sqlite3.connect(p) as con:
        con.execute("UPDATE layer_styles SET owner='me', styleName='mine'")
    add_default_styles(str(p), ["pts"])
    add_default_styles(str(p), ["pts"])  # our own row is replaced, not duplicated
    with sqlite3.connect(p) as con:
        rows = sorted(con.execute("SELECT owner, useAsDefault FROM layer_styles"))
    assert rows == [("me", 1), ("slipsense", 0)]

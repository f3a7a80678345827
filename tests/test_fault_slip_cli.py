"""``slipsense fault-slip`` end to end: the demo stations, provenance, every lineation form, and bad
input (a clear one-line message or a per-feature flag, never a traceback)."""
from __future__ import annotations

import json

import numpy as np
import pytest

from conftest import DEMO, X0, Y0, read_gpkg, write_points
from slipsense.tables import FAULT_SLIP_FIELDS, KINEMATIC_AXES_FIELDS

GPKG = str(DEMO / "demo.gpkg")


def demo_run(cli, out, *extra):
    return cli("fault-slip", "--stations", GPKG, "--layer", "slip_stations", "--id-field", "station_id",
               "--trend-field", "trend", "--plunge-field", "plunge", "--sense-field", "sense",
               "--out", out, "--resamples", "200", "--json", *extra)


def axis_angle(t1, p1, t2, p2):
    def v(t, p):
        t, p = np.radians(t), np.radians(p)
        return np.array([np.sin(t) * np.cos(p), np.cos(t) * np.cos(p), -np.sin(p)])
    return np.degrees(np.arccos(min(1.0, abs(float(v(t1, p1) @ v(t2, p2))))))


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory):
    from slipsense.cli.main import main
    import contextlib
    import io

    out = tmp_path_factory.mktemp("fs") / "demo.gpkg"
    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        code = main(["fault-slip", "--stations", GPKG, "--layer", "slip_stations", "--id-field", "station_id",
                     "--trend-field", "trend", "--plunge-field", "plunge", "--sense-field", "sense",
                     "--group-field", "phase", "--out", str(out), "--resamples", "300", "--json"])
    assert code == 0
    return out, json.loads(buf.getvalue())


def test_demo_rakes_and_layout(demo_out):
    out, summary = demo_out
    assert summary["data"] == 120 and summary["status"]["consistent"] == 120 and summary["groups"] == 2
    df = read_gpkg(out, "fault_slip")
    assert list(df.columns[:-1]) == [n for n, _ in FAULT_SLIP_FIELDS]
    src = read_gpkg(GPKG, "slip_stations")
    assert df.station_id.tolist() == src.station_id.tolist() and df.fault_id.tolist() == src.fault_id.tolist()
    # the layer's rake is the generator's true rake (0.01° rounding)
    assert np.max(np.abs((df.rake - src.rake + 180) % 360 - 180)) < 0.02
    np.testing.assert_allclose(np.c_[df.geometry.x, df.geometry.y], np.c_[src.geometry.x, src.geometry.y])
    assert (df.strike - df.dip_dir) .mod(360).round(9).eq(270).all()
    # slip plunge sign: hanging wall down on normal faults, up on reverse ones
    assert (df.plunge[df.sense_given == "normal"] > 0).all() and (df.plunge[df.sense_given == "reverse"] < 0).all()


def test_demo_population_axes(demo_out):
    # Kinematic axes are not stress axes, but for these Andersonian populations they should lie
    # close to the phases' principal stresses (ground_truth.json; a loose, qualitative check):
    # extension T near sigma3 272/01 and P near sigma1 010/84; compression P near sigma1 095/02.
    out, _ = demo_out
    ax = read_gpkg(out, "kinematic_axes")
    assert list(ax.columns[:-1]) == [n for n, _ in KINEMATIC_AXES_FIELDS]
    ext = ax[ax.group_id == "extension"].iloc[0]
    comp = ax[ax.group_id == "compression"].iloc[0]
    assert ext.n_data == 56 and comp.n_data == 64 and ext.resamples == 300
    assert axis_angle(ext.t_trend, ext.t_plunge, 272.4, 0.8) < 8
    assert axis_angle(ext.p_trend, ext.p_plunge, 10.0, 84.0) < 8
    assert axis_angle(comp.p_trend, comp.p_plunge, 95.0, 2.0) < 10
    assert 0 < ext.t_cone95 < 15 and 0 < comp.p_cone95 < 15


def test_provenance(demo_out):
    out, _ = demo_out
    prov = read_gpkg(out, "slipsense_provenance")
    rec = json.loads(prov.loc[prov.layer == "fault_slip", "record"].iloc[0])
    assert rec["command"] == "fault-slip" and rec["north_reference"] == "grid"
    assert rec["parameters"]["group_field"] == "phase" and rec["parameters"]["misfit_tol_deg"] == 20.0
    assert rec["working_crs"] == "EPSG:32633" and "qualified professional" in rec["caution"]
    assert set(prov.layer) >= {"fault_slip", "kinematic_axes"}


def test_rake_form_and_reproducible_seed(cli, tmp_path):
    a, b = tmp_path / "a.gpkg", tmp_path / "b.gpkg"
    for out in (a, b):
        code, _, err = cli("fault-slip", "--stations", GPKG, "--layer", "slip_stations", "--rake-field", "rake",
                           "--sense-field", "sense", "--group-field", "fault_id", "--seed", "5",
                           "--resamples", "100", "--out", out)
        assert code == 0, err
    x, y = read_gpkg(a, "kinematic_axes"), read_gpkg(b, "kinematic_axes")
    assert x.group_id.tolist() == ["F1", "F2", "F3", "F4", "F5", "minor"]
    np.testing.assert_array_equal(x.t_cone95.to_numpy(float), y.t_cone95.to_numpy(float))
    fs = read_gpkg(a, "fault_slip")
    assert (fs.misfit_deg == 0).all() and fs.station_id.tolist()[:2] == ["1", "2"]  # default: feature ids


@pytest.fixture
def bad_layer(tmp_path):
    xy = [(X0 + 100 * i, Y0 - 100) for i in range(6)]
    data = {"sid": ["a", "b", "c", "d", "e", "f"],
            "dd": [90.0, 90.0, 90.0, 90.0, 90.0, 90.0],
            "dip": [60.0, 97.0, 60.0, 60.0, 60.0, 60.0],
            "tr": [90.0, 90.0, 90.0, 90.0, 0.0, 90.0],
            "pl": [60.0, 60.0, 20.0, 60.0, 3.0, 60.0],
            "sense": ["normal", "normal", "normal", "sideways", "normal", "reverse-dextral"]}
    return write_points(tmp_path / "bad.gpkg", "st", xy, data)


def test_bad_rows_are_flagged_not_fatal(cli, bad_layer, tmp_path):
    out = tmp_path / "o.gpkg"
    code, stdout, err = cli("fault-slip", "--stations", bad_layer, "--id-field", "sid", "--dip-dir-field", "dd",
                            "--trend-field", "tr", "--plunge-field", "pl", "--sense-field", "sense",
                            "--out", out, "--json")
    assert code == 0, err
    assert "Traceback" not in err
    st = read_gpkg(out, "fault_slip").set_index("station_id").status
    assert st["a"] == "consistent"
    assert "bad.gpkg|st feature 2: field 'dip' = 97 is outside [0, 90] degrees; datum rejected" in err
    assert st["b"] == "rejected: dip = 97 is outside [0, 90] degrees"
    assert "feature 3: fields 'tr'/'pl': lineation 90/20 is 40.0° off its plane 90/60 (tolerance 20°)" in err
    assert "feature 4: field 'sense': unknown sense 'sideways': use normal, reverse" in err
    assert st["e"].startswith("ambiguous: sense normal cannot pick the end")
    assert st["f"] == "consistent"  # down-dip line: dextral cannot be checked, reverse picks the end
    assert json.loads(stdout)["status"] == {"consistent": 2, "contradicts": 0, "ambiguous": 1, "rejected": 3}


@pytest.mark.parametrize("args,message", [
    (["--trend-field", "nosuch", "--plunge-field", "pl"], "has no field 'nosuch'; its fields are"),
    (["--dip-field", "DIP", "--trend-field", "tr", "--plunge-field", "pl"], "has no field 'DIP'"),
    (["--trend-field", "tr"], "needs both --trend-field and --plunge-field"),
    (["--trend-field", "tr", "--plunge-field", "pl", "--rake-field", "dip"], "exactly one form"),
    ([], "exactly one form"),
    (["--pitch-field", "pl"], "needs both --pitch-field and --pitch-end-field"),
    (["--trend-field", "tr", "--plunge-field", "pl", "--misfit-tol", "120"], "misfit tolerance must be in [0, 90]"),
    (["--trend-field", "tr", "--plunge-field", "pl", "--resamples", "-3"], "resamples must be >= 0"),
])
def test_bad_options_give_one_line(cli, bad_layer, tmp_path, args, message):
    out = tmp_path / "o.gpkg"
    code, _, err = cli("fault-slip", "--stations", bad_layer, "--dip-dir-field", "dd", *args, "--out", out)
    assert code == 2 and message in err and err.count("\n") == 1, err
    assert not out.exists()


def test_output_safety(cli, tmp_path):
    out = tmp_path / "o.gpkg"
    assert demo_run(cli, out)[0] == 0
    code, _, err = demo_run(cli, out)
    assert code == 2 and "already has layer 'fault_slip'" in err
    assert demo_run(cli, out, "--overwrite")[0] == 0
    code, _, err = demo_run(cli, GPKG)
    assert code == 2 and "is also an input" in err
    code, _, err = demo_run(cli, tmp_path / "x.gpkg", "--axes-layer", "fault_slip")
    assert code == 2 and "name them apart" in err


def test_geographic_layer_warns_about_north(cli, tmp_path):
    src = write_points(tmp_path / "geo.gpkg", "st", [(15.0, 46.0), (15.01, 46.0)],
                       {"dip_dir": [90.0, 90.0], "dip": [60.0, 60.0], "rake": [-90.0, -80.0]}, crs="EPSG:4326")
    code, _, err = cli("fault-slip", "--stations", src, "--rake-field", "rake", "--out", tmp_path / "o.gpkg")
    assert code == 0 and "geographic CRS: its azimuths are used as measured" in err
    rec = json.loads(read_gpkg(tmp_path / "o.gpkg", "slipsense_provenance").record.iloc[0])
    assert rec["north_reference"].startswith("as measured") and rec["working_crs"] == "EPSG:32633"

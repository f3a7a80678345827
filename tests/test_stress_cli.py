"""stress-inversion, slip-tendency and anderson end to end: outputs, provenance, bad input.

Synthetic stations are written here with pyogrio: slip from a known tensor by the Wallace (1951) -
Bott (1959) rule (written out in the test), recorded as a field geologist would — a slickenline
axis (trend/plunge, lower hemisphere) plus the dominant sense word.  Frame: (east, north, up).
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest

from conftest import X0, Y0, read_gpkg, write_lines, write_points
from slipsense.core.orientation import line_to_vector

SIGMA1, SIGMA3, PHI = (10.0, 80.0), (270.0, 2.0), 0.4  # trend, plunge (degrees); normal faulting


def _axes():
    s1 = line_to_vector(*SIGMA1)
    s3 = line_to_vector(*SIGMA3)
    s3 = s3 - (s3 @ s1) * s1
    s3 /= np.linalg.norm(s3)
    return s1, np.cross(s3, s1), s3


def stations(n, seed=0, noise_deg=5.0, tensor_axes=None, phi=PHI):
    """Fault-slip stations (dip_dir, dip, trend, plunge, sense) from a known tensor."""
    rng = np.random.default_rng(seed)
    s1, s2, s3 = tensor_axes or _axes()
    t = np.outer(s1, s1) + phi * np.outer(s2, s2)
    rows = []
    while len(rows) < n:
        dd, dip = rng.uniform(0, 360), rng.uniform(20, 85)
        d, g = math.radians(dd), math.radians(dip)
        n_up = np.array([math.sin(d) * math.sin(g), math.cos(d) * math.sin(g), math.cos(g)])
        n_fw = -n_up
        tr = t @ n_fw
        tau = tr - (tr @ n_fw) * n_fw
        if np.linalg.norm(tau) < 0.2:
            continue
        u = tau / np.linalg.norm(tau)
        a = math.radians(rng.normal(0, noise_deg))
        u = math.cos(a) * u + math.sin(a) * np.cross(n_up, u)
        strike = np.array([math.sin(d - math.pi / 2), math.cos(d - math.pi / 2), 0.0])
        updip = np.cross(n_up, strike)  # n x s = e (up-dip) for the right-handed (s, e, n)
        updip = -updip if updip[2] < 0 else updip
        ds, ss = u @ updip, u @ strike
        if abs(ds) >= abs(ss):
            sense = "reverse" if ds > 0 else "normal"
        else:
            sense = "sinistral" if ss > 0 else "dextral"
        axis = u if u[2] <= 0 else -u
        rows.append((round(dd, 2), round(dip, 2), round(math.degrees(math.atan2(axis[0], axis[1])) % 360, 2),
                     round(math.degrees(math.asin(-axis[2])), 2), sense))
    return rows


def write_stations(path, rows, groups=None, layer="stations"):
    xy = [(X0 + 100.0 * i, Y0 - 100.0) for i in range(len(rows))]
    data = {"station_id": [f"S{i:03d}" for i in range(len(rows))],
            "dip_dir": [r[0] for r in rows], "dip": [r[1] for r in rows],
            "trend": [r[2] for r in rows], "plunge": [r[3] for r in rows], "sense": [r[4] for r in rows]}
    if groups is not None:
        data["phase"] = groups
    return write_points(path, layer, xy, data)


LINEATION = ("--trend-field", "trend", "--plunge-field", "plunge", "--sense-field", "sense")


def invert(cli, src, out, *extra):
    return cli("stress-inversion", "--stations", src, "--layer", "stations", "--id-field", "station_id",
               *LINEATION, "--resamples", "200", "--out", out, "--json", *extra)


def angle(t1, p1, t2, p2):
    a, b = line_to_vector(t1, p1), line_to_vector(t2, p2)
    return math.degrees(math.acos(min(1.0, abs(float(a @ b)))))


def test_stress_inversion_end_to_end(cli, tmp_path):
    src = write_stations(tmp_path / "st.gpkg", stations(40))
    out = tmp_path / "out.gpkg"
    code, stdout, stderr = invert(cli, src, out)
    assert code == 0, stderr
    summary = json.loads(stdout)
    assert summary["groups"]["all"]["quality"] == "good"
    ax = read_gpkg(out, "stress_axes")
    need = ["group_id", "n_data", "sigma1_trend", "sigma1_plunge", "sigma1_cone95", "sigma2_trend", "sigma2_plunge",
            "sigma3_trend", "sigma3_plunge", "sigma3_cone95", "phi", "phi_lo95", "phi_hi95", "regime", "shmax_azimuth",
            "rd_sigma1_trend", "rd_sigma3_trend", "quality"]
    assert all(c in ax.columns for c in need)
    row = ax.iloc[0]
    assert row.n_data == 40 and row.regime == "NF" and row.resamples == 200
    assert angle(row.sigma1_trend, row.sigma1_plunge, *SIGMA1) <= row.sigma1_cone95
    assert angle(row.sigma3_trend, row.sigma3_plunge, *SIGMA3) <= row.sigma3_cone95
    assert row.phi_lo95 <= PHI <= row.phi_hi95
    mis = read_gpkg(out, "stress_misfits")
    assert len(mis) == 40 and mis.misfit.max() < 30.0 and (mis.used == 1).all()
    assert mis.geometry.iloc[3].x == pytest.approx(X0 + 300.0)
    prov = read_gpkg(out, "slipsense_provenance")
    rec = json.loads(prov.loc[prov.layer == "stress_axes", "record"].iloc[0])
    assert rec["command"] == "stress-inversion" and rec["parameters"]["resamples"] == 200
    assert rec["north_reference"] == "grid" and "qualified professional" in rec["caution"]


def test_groups_with_one_ill_posed_group(cli, tmp_path):
    rows = stations(30) + stations(3, seed=5)
    src = write_stations(tmp_path / "st.gpkg", rows, groups=["a"] * 30 + ["b"] * 3)
    out = tmp_path / "out.gpkg"
    code, stdout, stderr = invert(cli, src, out, "--group-field", "phase")
    assert code == 0, stderr
    ax = read_gpkg(out, "stress_axes").set_index("group_id")
    assert ax.loc["a", "quality"] in ("good", "fair") and ax.loc["b", "quality"] == "ill-posed"
    assert ax.loc["b", "sigma1_trend"] is None or np.isnan(ax.loc["b", "sigma1_trend"])
    assert "group b: stress inversion needs at least 4 fault-slip data" in stderr


def test_mixed_phases_warn(cli, tmp_path):
    thrust = (line_to_vector(90.0, 0.0), line_to_vector(0.0, 0.0), np.array([0.0, 0.0, 1.0]))
    rows = stations(30) + stations(30, seed=3, tensor_axes=(thrust[0], np.cross(thrust[2], thrust[0]), thrust[2]))
    src = write_stations(tmp_path / "st.gpkg", rows)
    code, stdout, stderr = invert(cli, src, tmp_path / "out.gpkg")
    assert code == 0
    assert "may mix stress phases" in stderr
    assert read_gpkg(tmp_path / "out.gpkg", "stress_axes").flag[0] == "mixed phases?"


@pytest.mark.parametrize("rows,match", [
    (stations(3), "needs at least 4 fault-slip data"),
    ([(90.0, 60.0, 90.0, 60.0, "normal")] * 3 + [(90.0, 60.0, 0.0, 0.0, "sinistral")] * 3,
     "lie on parallel planes"),
])
def test_inversion_bad_data_is_one_clear_line(cli, tmp_path, rows, match):
    src = write_stations(tmp_path / "st.gpkg", rows)
    code, _, stderr = invert(cli, src, tmp_path / "out.gpkg")
    assert code == 2
    lines = [ln for ln in stderr.strip().splitlines() if not ln.startswith("warning")]
    assert len(lines) == 1 and match in lines[0] and "Traceback" not in stderr


def test_inversion_field_and_option_errors(cli, tmp_path):
    src = write_stations(tmp_path / "st.gpkg", stations(8))
    code, _, err = cli("stress-inversion", "--stations", src, "--trend-field", "trend", "--plunge-field", "strike",
                       "--sense-field", "sense", "--out", tmp_path / "o.gpkg")
    assert code == 2 and "has no field 'strike'" in err
    code, _, err = cli("stress-inversion", "--stations", src, "--out", tmp_path / "o.gpkg")
    assert code == 2 and "exactly one form" in err
    out = tmp_path / "o2.gpkg"
    assert invert(cli, src, out)[0] == 0
    code, _, err = invert(cli, src, out)
    assert code == 2 and "already has layer 'stress_axes'" in err
    assert invert(cli, src, out, "--overwrite")[0] == 0


def test_a_bad_station_is_flagged_not_fatal(cli, tmp_path):
    rows = stations(12)
    rows[4] = (rows[4][0], 97.0, rows[4][2], rows[4][3], rows[4][4])
    src = write_stations(tmp_path / "st.gpkg", rows)
    code, _, err = invert(cli, src, tmp_path / "o.gpkg")
    assert code == 0 and "field 'dip' = 97 is outside [0, 90]" in err
    mis = read_gpkg(tmp_path / "o.gpkg", "stress_misfits")
    assert mis.used.tolist().count(0) == 1 and mis.status[4].startswith("rejected")


# ------------------------------------------------------------------ slip-tendency


@pytest.fixture
def planes(tmp_path):
    """A plane layer as trace-planes writes it (lines with dip_dir/dip), including an ill-posed row."""
    lines = [np.array([[X0 + 100, Y0 - 100], [X0 + 900, Y0 - 900]]) + 1000.0 * k for k in range(4)]
    return write_lines(tmp_path / "planes.gpkg", "trace_planes", lines, ["F1", "F2", "F4", "F9"], field="trace_id",
                       extra={"dip_dir": [98.0, 282.0, 155.0, None], "dip": [60.0, 58.0, 87.0, None]})


GRADIENTS = ("--shmax-azimuth", "35", "--sv-gradient", "25", "--shmax-gradient", "30", "--shmin-gradient", "16",
             "--pp-gradient", "10")


def test_slip_tendency_from_gradients(cli, planes, tmp_path):
    out = tmp_path / "st.gpkg"
    code, stdout, stderr = cli("slip-tendency", "--planes", planes, "--planes-layer", "trace_planes", *GRADIENTS,
                               "--regime", "strike-slip", "--depth", "2000", "--out", out, "--json")
    assert code == 0, stderr
    df = read_gpkg(out, "slip_tendency").set_index("plane_id")
    need = ["dip_dir", "dip", "depth_m", "sigma_n_mpa", "tau_mpa", "slip_tendency", "dilation_tendency",
            "dp_to_failure_mpa", "predicted_rake", "flag"]
    assert all(c in df.columns for c in need)
    # demo_gpkg/ground_truth.json present_day_stress (the demo generator's own computation) for
    # F1 (98/60) and F4 (155/87) at 2 km: slip tendency 0.535181 and 0.636957.
    assert df.loc["F1", "slip_tendency"] == pytest.approx(0.535181, abs=1e-6)
    assert df.loc["F4", "slip_tendency"] == pytest.approx(0.636957, abs=1e-6)
    assert df.loc["F4", "flag"] == "at failure" and df.loc["F4", "dp_to_failure_mpa"] < 0
    assert df.loc["F4", "sigma1_mpa"] == pytest.approx(60.0) and df.loc["F4", "pore_pressure_mpa"] == pytest.approx(20.0)
    assert df.loc["F4", "geometry"].geom_type == "MultiLineString"
    assert "no orientation" in stderr and json.loads(stdout)["flags"]["not evaluated"] == 1


def test_slip_tendency_from_principal_magnitudes(cli, planes, tmp_path):
    out = tmp_path / "st.gpkg"
    code, _, err = cli("slip-tendency", "--planes", planes, "--sigma1", "60", "--sigma2", "50", "--sigma3", "32",
                       "--sigma1-axis", "035/00", "--sigma3-axis", "125/00", "--pore-pressure", "20", "--out", out)
    assert code == 0, err
    df = read_gpkg(out, "slip_tendency").set_index("plane_id")
    assert df.loc["F1", "slip_tendency"] == pytest.approx(0.535181, abs=1e-6)  # same state as the gradients at 2 km
    assert df.loc["F1", "depth_m"] is None or np.isnan(df.loc["F1", "depth_m"])


def test_slip_tendency_from_an_inversion(cli, planes, tmp_path):
    src = write_stations(tmp_path / "st.gpkg", stations(40))
    inv = tmp_path / "inv.gpkg"
    assert invert(cli, src, inv)[0] == 0
    out = tmp_path / "st.gpkg"
    code, stdout, err = cli("slip-tendency", "--planes", planes, "--inversion", inv, "--sv-gradient", "25",
                            "--pp-gradient", "10", "--depth", "1500", "--out", out, "--json")
    assert code == 0, err
    s = json.loads(stdout)
    assert s["stress"]["kind"] == "inverted axes, frictional limit" and s["stress"]["vertical_axis"] == "sigma1"
    df = read_gpkg(out, "slip_tendency")
    # frictional limit: no plane exceeds the friction (Jaeger & Cook 1979; optimal planes are at mu)
    assert np.nanmax(df.slip_tendency.astype(float)) <= 0.6 + 1e-9


@pytest.mark.parametrize("args,match", [
    ((), "give the stress"),
    (GRADIENTS, "give --depth"),
    (GRADIENTS + ("--depth", "2000", "--regime", "NF"), "regime NF needs Sv >= SHmax >= Shmin"),
    (("--sigma1", "60", "--sigma2", "50", "--sigma3", "-5", "--sigma1-axis", "035/00", "--sigma3-axis", "125/00",
      "--pore-pressure", "0"), "must be >= 0 MPa"),
    (("--sigma1", "20", "--sigma2", "25", "--sigma3", "30", "--sigma1-axis", "035/00", "--sigma3-axis", "125/00",
      "--pore-pressure", "0"), "sigma1 must be >= sigma3"),
    (("--sigma1", "60", "--sigma2", "50", "--sigma3", "30", "--sigma1-axis", "035/00", "--sigma3-axis", "090/00",
      "--pore-pressure", "0"), "must be perpendicular"),
    (("--sigma1", "60", "--sigma2", "50", "--sigma3", "30", "--sigma1-axis", "035/00"), "needs sigma3 axis, pore pressure"),
    (("--sigma1", "60", "--shmax-azimuth", "35"), "give the stress one way"),
    (GRADIENTS + ("--depth", "2000", "--friction", "-1"), "friction coefficient must be in"),
])
def test_slip_tendency_bad_stress_is_one_clear_line(cli, planes, tmp_path, args, match):
    code, _, err = cli("slip-tendency", "--planes", planes, *args, "--out", tmp_path / "x.gpkg")
    assert code == 2, err
    lines = [ln for ln in err.strip().splitlines() if not ln.startswith("warning")]
    assert len(lines) == 1 and match in lines[0], err


def test_anderson_command(cli, tmp_path):
    rows = [(90.0, 60.0, 90.0, 60.0, "normal"), (90.0, 40.0, 90.0, 40.0, "normal"),
            (90.0, 30.0, 90.0, 30.0, "reverse"), (90.0, 88.0, 0.0, 0.0, "sinistral")]
    src = write_stations(tmp_path / "st.gpkg", rows)
    out = tmp_path / "a.gpkg"
    code, stdout, err = cli("anderson", "--stations", src, "--layer", "stations", "--id-field", "station_id",
                            *LINEATION, "--out", out, "--json", "--shmax-azimuth", "0", "--regime", "NF")
    assert code == 0, err
    df = read_gpkg(out, "anderson")
    assert df.fault_kind.tolist() == ["normal", "normal", "reverse", "strike-slip"]
    assert df.flag.tolist() == ["", "shallower than Andersonian", "", ""]
    # Anderson (1951): sigma1 lies theta = 29.518 degrees from the fault, on its steep side, in the
    # dip-slip plane: plunge 60 + 29.518 = 89.518 for the 60-degree normal fault
    assert df.sigma1_plunge[0] == pytest.approx(89.518, abs=0.001)
    s = json.loads(stdout)
    assert s["anderson"]["normal_dip"] == pytest.approx(60.482) and sorted(p[0] for p in s["conjugate_planes"]) == [90.0, 270.0]
    assert "possible reactivation or rotation" in err

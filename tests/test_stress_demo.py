"""The demo scenario: its fault-slip stations invert to the stress phases it was built with, and its
faults get the stated present-day tendencies.

The truth is demo_gpkg/ground_truth.json, written by demo_gpkg/generate_demo.py (which does not
import slipsense): ``stress_phases`` (axes and phi of the two phases; the stations' slip is the
Wallace-Bott direction of their phase's stress on the measured plane, rotated in-plane by
N(0, 5 deg)) and ``present_day_stress`` (the generator's own slip and dilation tendency of each
fault at 2 km).
"""
from __future__ import annotations

import json
import math

import pytest

from conftest import DEMO, read_gpkg
from slipsense.core.orientation import line_to_vector

TRUTH = json.loads((DEMO / "ground_truth.json").read_text())
STATIONS = ["--stations", str(DEMO / "demo.gpkg"), "--layer", "slip_stations", "--id-field", "station_id",
            "--trend-field", "trend", "--plunge-field", "plunge", "--sense-field", "sense"]


def angle(t1, p1, t2, p2):
    a, b = line_to_vector(t1, p1), line_to_vector(t2, p2)
    return math.degrees(math.acos(min(1.0, abs(float(a @ b)))))


@pytest.fixture(scope="module")
def inversion(tmp_path_factory):
    from slipsense.cli.main import main

    out = tmp_path_factory.mktemp("stress") / "stress.gpkg"
    assert main(["stress-inversion", *STATIONS, "--group-field", "phase", "--out", str(out), "--quiet"]) == 0
    return out, read_gpkg(out, "stress_axes").set_index("group_id")


@pytest.mark.parametrize("phase,regime", [("compression", "TF"), ("extension", "NF")])
def test_demo_phases_invert_to_the_scenario_stress(inversion, phase, regime):
    _, df = inversion
    row = df.loc[phase]
    true = TRUTH["stress_phases"][phase]
    assert row.quality == "good" and row.flag == ""
    assert row.n_data == {"compression": 64, "extension": 56}[phase]
    for k in (1, 2, 3):
        off = angle(row[f"sigma{k}_trend"], row[f"sigma{k}_plunge"], true[f"sigma{k}_trend"], true[f"sigma{k}_plunge"])
        assert off <= row[f"sigma{k}_cone95"], (k, off, row[f"sigma{k}_cone95"])
    assert row.phi_lo95 <= true["phi"] <= row.phi_hi95
    # Zoback (1992): sigma3 plunging 87 (compression) is thrust faulting, sigma1 plunging 84 normal
    assert row.regime == regime and row.regime_support > 0.95
    # right dihedra (Angelier & Mechler 1977), the independent estimate: sigma1 near the truth and
    # the truth inside the region the method reports
    off1 = angle(row.rd_sigma1_trend, row.rd_sigma1_plunge, true["sigma1_trend"], true["sigma1_plunge"])
    assert off1 < 10.0 and off1 <= row.rd_sigma1_spread
    off3 = angle(row.rd_sigma3_trend, row.rd_sigma3_plunge, true["sigma3_trend"], true["sigma3_plunge"])
    assert off3 <= row.rd_sigma3_spread


def test_demo_misfits_are_small_within_each_phase(inversion):
    out, _ = inversion
    mis = read_gpkg(out, "stress_misfits")
    assert (mis.used == 1).all() and len(mis) == TRUTH["slip_stations"]["n_total"]
    # the stations' slip was rotated by N(0, 5 deg) in-plane and planes scattered by 4-8 deg
    assert mis.misfit.astype(float).median() < 6.0 and mis.misfit.astype(float).max() < 30.0


def test_demo_all_stations_together_look_mixed(tmp_path):
    from slipsense.cli.main import main
    import contextlib
    import io

    err = io.StringIO()
    with contextlib.redirect_stderr(err):
        assert main(["stress-inversion", *STATIONS, "--resamples", "200", "--out", str(tmp_path / "all.gpkg")]) == 0
    assert "may mix stress phases" in err.getvalue()
    row = read_gpkg(tmp_path / "all.gpkg", "stress_axes").iloc[0]
    assert row.flag == "mixed phases?" and row.quality == "poor"


@pytest.fixture(scope="module")
def demo_planes(tmp_path_factory):
    from slipsense.cli.main import main

    out = tmp_path_factory.mktemp("planes") / "faults.gpkg"
    assert main(["trace-planes", "--dem", str(DEMO / "dem.tif"), "--traces", str(DEMO / "demo.gpkg"), "--layer",
                 "fault_traces", "--id-field", "fault_id", "--draws", "0", "--out", str(out), "--quiet"]) == 0
    return out


def test_demo_faults_in_the_present_day_stress(demo_planes, tmp_path):
    from slipsense.cli.main import main

    p = TRUTH["present_day_stress"]
    out = tmp_path / "st.gpkg"
    assert main(["slip-tendency", "--planes", str(demo_planes), "--planes-layer", "trace_planes",
                 "--shmax-azimuth", str(p["shmax_azimuth"]), "--regime", "SS",
                 "--sv-gradient", str(p["sv_gradient_mpa_per_km"]), "--shmax-gradient", str(p["shmax_gradient_mpa_per_km"]),
                 "--shmin-gradient", str(p["shmin_gradient_mpa_per_km"]),
                 "--pp-gradient", str(p["pore_pressure_gradient_mpa_per_km"]),
                 "--depth", str(p["reference_depth_m"]), "--out", str(out), "--quiet"]) == 0
    df = read_gpkg(out, "slip_tendency").set_index("plane_id")
    for f in p["faults"]:
        row = df.loc[f["fault_id"]]
        # fitted planes are within ~0.2 deg of the true planes, so the tendencies agree closely
        assert row.slip_tendency == pytest.approx(f["slip_tendency"], abs=0.005)
        assert row.dilation_tendency == pytest.approx(f["dilation_tendency"], abs=0.005)
        assert row.sigma_n_mpa == pytest.approx(f["normal_stress_mpa"], abs=0.2)
        assert row.tau_mpa == pytest.approx(f["shear_stress_mpa"], abs=0.2)
        assert abs((row.predicted_rake - f["predicted_rake"] + 180) % 360 - 180) < 2.0
        assert (row.flag == "at failure") == f["exceeds_friction_0_6"]
    # the scenario: the Velloch Fault (F4) is the only main fault above slip tendency 0.6
    assert df.index[df.slip_tendency.astype(float) > 0.6].tolist() == ["F4"]


def test_demo_stations_anderson_check(tmp_path):
    from slipsense.cli.main import main

    out = tmp_path / "a.gpkg"
    assert main(["anderson", *STATIONS, "--out", str(out), "--quiet"]) == 0
    df = read_gpkg(out, "anderson")
    st = read_gpkg(DEMO / "demo.gpkg", "slip_stations")
    kinds = dict(zip(st.station_id, st.fault_id))
    by_fault = {}
    for sid, kind in zip(df.station_id, df.fault_kind):
        by_fault.setdefault(kinds[sid], []).append(kind)
    # the graben faults are normal, the Kammerdune Thrust reverse, the Velloch Fault strike-slip
    # (rake 169: a few of its scattered stations fall past 22.5 degrees from pure strike-slip)
    assert set(by_fault["F1"]) == {"normal"} and set(by_fault["F2"]) == {"normal"}
    assert set(by_fault["F3"]) == {"reverse"}
    assert by_fault["F4"].count("strike-slip") >= 6 and set(by_fault["F4"]) <= {"strike-slip", "oblique"}
    assert by_fault["F5"].count("oblique") >= 6  # dextral-reverse, rake 142
    main_faults = df[[kinds[s] in ("F1", "F2", "F3", "F4") for s in df.station_id]]
    # all typed main-fault stations dip within 15 deg of Anderson's prediction for mu 0.6
    assert main_faults.flag.isin(["", "oblique: no Andersonian type"]).all()

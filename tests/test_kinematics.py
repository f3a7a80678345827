"""Tests of slipsense.core.kinematics: fault-slip measurements, auxiliary plane, kinematic axes,
summed kinematic tensor and its bootstrap, and the fault-slip step.

Frames: slipsense vectors are (east, north, up).  Aki & Richards (1980) vectors (references.md)
are (north, east, down); ObsPy's moment tensors are (up, south, east) and its axes azimuth /
plunge; its planes strike (right-hand rule) / dip / rake like ours.  Conversions are explicit
(helpers from test_slip).  Expected values written "by hand" are worked out in the comments from
CONVENTIONS.md, not produced by slipsense.
"""
from __future__ import annotations

import json
import math

import numpy as np
import pyogrio
import pytest
from obspy.imaging.beachball import MomentTensor, aux_plane, mt2axes

from conftest import DEMO
from slipsense import steps
from slipsense.core import kinematics as k
from slipsense.core.slip import SenseRules, plane_basis, pt_axes, rake_to_vector
from slipsense.errors import InputError
from slipsense.tables import FAULT_SLIP_FIELDS
from test_slip import ar_vectors_ned, axial, ned_tensor_to_use, ned_to_enu, random_triples

R3 = math.sqrt(3.0)


def lower_axis(v):
    """Trend/plunge of a vector as a lower-hemisphere axis, written out from CONVENTIONS.md."""
    v = np.asarray(v, float)
    v = -v if v[2] > 0 else v
    return math.degrees(math.atan2(v[0], v[1])) % 360.0, math.degrees(math.asin(-v[2]))


def dominant_word(rake):
    """The demo generator's rule: |rake| 45–135 -> normal/reverse, else sinistral/dextral."""
    if 45.0 <= abs(rake) <= 135.0:
        return "reverse" if rake > 0 else "normal"
    return "sinistral" if abs(rake) < 90.0 else "dextral"


def rdiff(a, b):
    return np.abs((np.asarray(a) - np.asarray(b) + 180.0) % 360.0 - 180.0)


# --------------------------------------------------------------------------- parse_sense
@pytest.mark.parametrize("text,dip_sign,strike_sign", [
    ("normal", -1, 0), ("Reverse", 1, 0), (" THRUST ", 1, 0), ("dextral", 0, -1), ("sinistral", 0, 1),
    ("normal-dextral", -1, -1), ("sinistral-reverse", 1, 1), ("normal dextral", -1, -1),
])
def test_parse_sense_words(text, dip_sign, strike_sign):
    s = k.parse_sense(text)
    assert (s.dip_sign, s.strike_sign) == (dip_sign, strike_sign) and math.isnan(s.azimuth)


def test_parse_sense_azimuths_and_empty():
    assert k.parse_sense(265).azimuth == 265.0 and k.parse_sense("080").azimuth == 80.0
    assert k.parse_sense(360.0).azimuth == 0.0
    for empty in (None, "", "  ", float("nan")):
        assert not k.parse_sense(empty).given


@pytest.mark.parametrize("bad,match", [
    ("sideways", "unknown sense 'sideways': use normal, reverse"),
    ("normal-reverse", "joins two dip-slip words"),
    ("dextral-sinistral", "joins two strike-slip words"),
    ("normal-dextral-normal", "at most two"),
    ("400", r"azimuth must be in \[0, 360\]"),
    (True, "unknown sense"),
])
def test_parse_sense_errors_list_the_options(bad, match):
    with pytest.raises(InputError, match=match):
        k.parse_sense(bad)


def test_parse_strike_end():
    assert k.parse_strike_end("nne") == 22.5 and k.parse_strike_end(210) == 210.0
    with pytest.raises(InputError, match="compass point"):
        k.parse_strike_end("up")


# --------------------------------------------------------------------------- lineation forms
def test_trend_plunge_with_dominant_word_recovers_random_rakes():
    # Slip from the Aki & Richards formula (references.md, NED -> ENU here), its lineation as a
    # lower-hemisphere axis, the dominant sense word: the rake must come back exactly.
    strike, dip, rake = random_triples(400, 11)
    _, u_ned = ar_vectors_ned(strike, dip, rake)
    u = ned_to_enu(u_ned)
    tp = np.array([lower_axis(v) for v in u])
    d = k.slip_from_measurements((strike + 90.0) % 360.0, dip, trend=tp[:, 0], plunge=tp[:, 1],
                                 sense=[dominant_word(r) for r in rake])
    assert set(d.status) == {"consistent"}
    assert rdiff(d.rake, rake).max() < 1e-7
    np.testing.assert_allclose(d.slip, u, atol=1e-9)
    assert np.nanmax(d.misfit_deg) < 1e-6


def test_two_words_and_motion_azimuth_recover_random_rakes():
    strike, dip, rake = random_triples(300, 12)
    u = ned_to_enu(ar_vectors_ned(strike, dip, rake)[1])
    tp = np.array([lower_axis(v) for v in u])
    words = [("reverse" if r > 0 else "normal") + "-" + ("sinistral" if abs(r) < 90 else "dextral") for r in rake]
    d = k.slip_from_measurements((strike + 90.0) % 360.0, dip, trend=tp[:, 0], plunge=tp[:, 1], sense=words)
    clear = (np.abs(np.sin(np.radians(rake))) > 0.2) & (np.abs(np.cos(np.radians(rake))) > 0.2)
    assert rdiff(d.rake[clear], rake[clear]).max() < 1e-7
    azim = np.degrees(np.arctan2(u[:, 0], u[:, 1])) % 360.0
    d2 = k.slip_from_measurements((strike + 90.0) % 360.0, dip, trend=tp[:, 0], plunge=tp[:, 1], sense=list(azim))
    steep = np.hypot(u[:, 0], u[:, 1]) > 0.2
    assert rdiff(d2.rake[steep], rake[steep]).max() < 1e-7


def test_rake_input_is_canonical():
    d = k.slip_from_measurements([90.0, 90.0, 200.0], [60.0, 60.0, 30.0], rake=[-180.0, 45.0, -90.0])
    np.testing.assert_allclose(d.rake, [180.0, 45.0, -90.0], atol=1e-12)
    np.testing.assert_allclose(d.misfit_deg, 0.0)
    assert d.sense.tolist() == ["dextral", "sinistral-reverse", "normal"]  # 45: tie, strike-slip first


def test_pitch_by_hand():
    # Plane 090/60 (strike 000).  Pitch 30 from the N end, turning down dip, sinistral:
    # u = cos30·(0, 1, 0) + sin30·(cos60, 0, −sin60) = (0.25, 0.866, −0.433): rake −30,
    # trend atan2(0.25, 0.866) = 16.10°, plunge asin(0.433) = 25.66°.
    d = k.slip_from_measurements(90.0, 60.0, pitch=30.0, pitch_from="N", sense="sinistral")
    np.testing.assert_allclose(d.slip, [0.25, R3 / 2, -R3 / 4], atol=1e-12)
    assert d.rake == pytest.approx(-30.0) and d.trend == pytest.approx(16.1021, abs=1e-4)
    assert d.plunge == pytest.approx(25.6589, abs=1e-4) and d.sense == "sinistral-normal"
    # From the S end the line plunges south; sinistral (hanging wall north) is then its upper end.
    d = k.slip_from_measurements(90.0, 60.0, pitch=30.0, pitch_from="S", sense="sinistral")
    assert d.rake == pytest.approx(30.0) and d.plunge == pytest.approx(-25.6589, abs=1e-4)
    # Any name within 80° of an end names it: NNE, "020", SW -> N, N, S.
    same = k.slip_from_measurements([90.0] * 3, [60.0] * 3, pitch=[30.0] * 3, pitch_from=["NNE", "020", "SW"],
                                    sense=["sinistral"] * 3)
    np.testing.assert_allclose(same.rake, [-30.0, -30.0, 30.0], atol=1e-9)


def test_pitch_end_square_to_strike_is_rejected():
    d = k.slip_from_measurements([90.0], [60.0], pitch=[30.0], pitch_from=["E"], sense=["normal"])
    assert d.status[0].startswith("rejected: the strike end E (90°) is within 10° of square")
    assert d.bad_input[0] == "pitch_from" and np.isnan(d.rake[0])
    with pytest.raises(InputError, match="does not name an end"):
        k.slip_from_measurements(90.0, 60.0, pitch=30.0, pitch_from="E", sense="normal")


def test_pitch_from_random_rakes():
    # Pitch by hand from u = cos λ·s − sin λ·d (d down-dip): the half of the axis that turns down
    # dip is u for λ < 0 and −u for λ > 0, so the pitch is |λ| (or 180 − |λ|) from the strike end
    # s = dip_dir − 90 when λ is in (−90, 0) or (90, 180), and from the opposite end otherwise.
    strike, dip, rake = random_triples(200, 13)
    pitch = np.where(np.abs(rake) <= 90, np.abs(rake), 180 - np.abs(rake))
    end = np.where((rake < 0) == (np.abs(rake) < 90), strike, strike + 180.0) % 360.0
    d = k.slip_from_measurements((strike + 90.0) % 360.0, dip, pitch=pitch, pitch_from=list(end),
                                 sense=[dominant_word(r) for r in rake])
    assert rdiff(d.rake, rake).max() < 1e-7


# --------------------------------------------------------------------------- misfit
def test_small_misfit_is_projected_large_is_rejected():
    # Plane 090/60; lineations in the vertical E-W plane through the dip line (which holds the
    # normal), so the misfit is the plunge difference: 070 -> 10°, 020 -> 40° (by hand).
    d = k.slip_from_measurements([90.0, 90.0], [60.0, 60.0], trend=[90.0, 90.0], plunge=[70.0, 20.0],
                                 sense=["normal", "normal"])
    assert d.misfit_deg[0] == pytest.approx(10.0) and d.rake[0] == pytest.approx(-90.0)
    assert d.status[0] == "consistent"
    assert d.misfit_deg[1] == pytest.approx(40.0) and np.isnan(d.rake[1]) and np.all(np.isnan(d.slip[1]))
    assert d.status[1] == ("rejected: lineation 90/20 is 40.0° off its plane 90/60 (tolerance 20°): "
                           "check the plane and lineation readings")
    with pytest.raises(InputError, match="40.0° off its plane"):
        k.slip_from_measurements(90.0, 60.0, trend=90.0, plunge=20.0, sense="normal")


def test_misfit_tolerance_boundary_and_parameter():
    d = k.slip_from_measurements([90.0] * 2, [60.0] * 2, trend=[90.0] * 2, plunge=[79.99, 80.01],
                                 sense=["normal"] * 2)
    assert d.status.tolist()[0] == "consistent" and d.status[1].startswith("rejected")
    d = k.slip_from_measurements(90.0, 60.0, trend=90.0, plunge=20.0, sense="normal", misfit_tol_deg=45.0)
    assert d.status == "consistent" and d.rake == pytest.approx(-90.0)
    with pytest.raises(InputError, match="misfit tolerance"):
        k.slip_from_measurements(90.0, 60.0, trend=90.0, plunge=20.0, sense="normal", misfit_tol_deg=-1)


# --------------------------------------------------------------------------- sense checks
def test_contradicting_sense_is_flagged():
    d = k.slip_from_measurements([90.0] * 4, [60.0] * 4, rake=[60.0, 60.0, -150.0, -150.0],
                                 sense=["normal", "reverse-sinistral", "dextral", "normal-sinistral"])
    assert d.status[0] == "contradicts: sense normal but rake +60 is reverse"
    assert d.status[1] == "consistent" and d.status[2] == "consistent"
    assert d.status[3] == "contradicts: sense normal-sinistral but rake -150 is dextral"
    assert d.rake[0] == pytest.approx(60.0)  # the rake is kept, the row is flagged


def test_second_word_the_chosen_end_cannot_satisfy():
    # Plane 090/60, lineation pitching 45 from the N end: its lower (normal) end heads north = along
    # strike = sinistral, so "normal-dextral" contradicts and "normal-sinistral" is consistent.
    d = k.slip_from_measurements([90.0] * 2, [60.0] * 2, pitch=[45.0] * 2, pitch_from=["N"] * 2,
                                 sense=["normal-dextral", "normal-sinistral"])
    assert d.status[0] == "contradicts: sense normal-dextral: the normal end of the lineation is sinistral"
    assert d.status[1] == "consistent" and d.rake[1] == pytest.approx(-45.0)


def test_dip_slip_word_on_near_horizontal_lineation_is_ambiguous():
    # A lineation 3° from the strike line: "normal" cannot tell its ends apart; 10.5° can (rule 10°).
    d = k.slip_from_measurements([90.0] * 3, [60.0] * 3, pitch=[3.0, 9.5, 10.5], pitch_from=["N"] * 3,
                                 sense=["normal"] * 3)
    assert d.status[0].startswith("ambiguous: sense normal cannot pick the end of a lineation 3.0° from "
                                  "the strike line")
    assert d.status[1].startswith("ambiguous") and d.status[2] == "consistent"
    assert np.isnan(d.rake[0]) and d.sense[0] == "" and d.rake[2] == pytest.approx(-10.5)
    # the strike-slip word on a down-dip lineation, likewise
    d = k.slip_from_measurements(90.0, 60.0, pitch=88.0, pitch_from="N", sense="dextral")
    assert d.status.startswith("ambiguous: sense dextral cannot pick the end of a lineation 2.0° from the dip line")
    # the threshold lives in SenseRules
    d = k.slip_from_measurements(90.0, 60.0, pitch=3.0, pitch_from="N", sense="normal",
                                 rules=SenseRules(sense_min_deg=2.0))
    assert d.status == "consistent"


def test_no_sense_on_an_axis_is_ambiguous():
    d = k.slip_from_measurements([90.0], [60.0], trend=[90.0], plunge=[60.0])
    assert d.status[0].startswith("ambiguous: no sense given") and np.isnan(d.rake[0])


def test_motion_azimuth_sense():
    d = k.slip_from_measurements([90.0] * 4, [60.0] * 4, trend=[90.0] * 4, plunge=[60.0] * 4,
                                 sense=[90, "270", 0, 150])
    assert d.rake[0] == pytest.approx(-90.0) and d.rake[1] == pytest.approx(90.0)
    assert d.status[2].startswith("ambiguous: hanging-wall motion azimuth 0 is within 10° of square")
    assert d.status[3] == "contradicts: hanging-wall motion azimuth 150 is 60° from the slip trend 90 (more than 45°)"


# --------------------------------------------------------------------------- bad input
@pytest.mark.parametrize("kw,match", [
    (dict(dip=97.0), r"dip = 97 is outside \[0, 90\] degrees"),
    (dict(dip_dir=400.0), r"dip_dir = 400 is outside \[0, 360\]"),
    (dict(plunge=-5.0), r"plunge = -5 is outside"),
    (dict(dip=float("nan")), "dip is missing"),
    (dict(sense="upward"), "unknown sense 'upward': use normal, reverse"),
])
def test_bad_scalar_input_raises(kw, match):
    args = dict(dip_dir=90.0, dip=60.0, trend=90.0, plunge=60.0, sense="normal")
    args.update(kw)
    with pytest.raises(InputError, match=match):
        k.slip_from_measurements(args.pop("dip_dir"), args.pop("dip"), **args)


def test_bad_rows_are_flagged_in_a_batch():
    d = k.slip_from_measurements([90.0, 90.0, 90.0], [97.0, 60.0, 60.0], trend=[90.0, 90.0, 90.0],
                                 plunge=[60.0, 60.0, 60.0], sense=["normal", "upward", "normal"])
    assert d.status[0] == "rejected: dip = 97 is outside [0, 90] degrees" and d.bad_input[0] == "dip"
    assert d.status[1].startswith("rejected: unknown sense 'upward'") and d.bad_input[1] == "sense"
    assert d.status[2] == "consistent"
    assert np.isnan(d.dip[0]) and d.dip[1] == 60.0  # a bad plane is not reported as a plane
    with pytest.raises(InputError, match="datum 0: dip = 97"):
        k.slip_from_measurements([90.0], [97.0], rake=[10.0], strict=True)


@pytest.mark.parametrize("kw,match", [
    (dict(), "exactly one form"),
    (dict(trend=10.0, plunge=10.0, rake=5.0), "exactly one form"),
    (dict(trend=10.0), "needs both trend and plunge"),
    (dict(pitch=10.0), "needs both the pitch and the strike end"),
])
def test_lineation_forms_are_checked(kw, match):
    with pytest.raises(InputError, match=match):
        k.slip_from_measurements(90.0, 60.0, **kw)


# --------------------------------------------------------------------------- vertical faults, batch
def test_vertical_fault_hanging_wall_is_the_dip_dir_side():
    # N-S vertical plane, horizontal N-S lineation.  As 090/90 the hanging wall is the east block;
    # "sinistral" = east block north (rake 0).  As 270/90 it is the west block, which moved south:
    # also sinistral, rake 0, opposite vector.  Vertical lineation + "normal": dip_dir side down.
    a = k.slip_from_measurements(90.0, 90.0, trend=0.0, plunge=0.0, sense="sinistral")
    b = k.slip_from_measurements(270.0, 90.0, trend=0.0, plunge=0.0, sense="sinistral")
    np.testing.assert_allclose(a.slip, [0, 1, 0], atol=1e-12)
    np.testing.assert_allclose(b.slip, [0, -1, 0], atol=1e-12)
    assert abs(a.rake) < 1e-9 and abs(b.rake) < 1e-9
    np.testing.assert_allclose(a.normal, [1, 0, 0], atol=1e-12)
    np.testing.assert_allclose(b.normal, [-1, 0, 0], atol=1e-12)
    c = k.slip_from_measurements(90.0, 90.0, trend=0.0, plunge=90.0, sense="normal")
    np.testing.assert_allclose(c.slip, [0, 0, -1], atol=1e-12)
    assert c.rake == pytest.approx(-90.0) and c.plunge == pytest.approx(90.0)


def test_batch_agrees_with_scalar_kernel():
    strike, dip, rake = random_triples(30, 14)
    u = ned_to_enu(ar_vectors_ned(strike, dip, rake)[1])
    tp = np.array([lower_axis(v) for v in u])
    words = [dominant_word(r) for r in rake]
    batch = k.slip_from_measurements((strike + 90.0) % 360.0, dip, trend=tp[:, 0], plunge=tp[:, 1], sense=words)
    for i in range(len(rake)):
        one = k.slip_from_measurements((strike[i] + 90.0) % 360.0, dip[i], trend=tp[i, 0], plunge=tp[i, 1], sense=words[i])
        assert one.rake == pytest.approx(batch.rake[i], abs=1e-12) and one.status == batch.status[i]
        np.testing.assert_allclose(one.slip, batch.slip[i], atol=1e-14)


def test_normals_and_slips_are_ready_for_stress_inversion():
    strike, dip, rake = random_triples(100, 15)
    d = k.slip_from_measurements((strike + 90.0) % 360.0, dip, rake=rake)
    np.testing.assert_allclose(np.linalg.norm(d.normal, axis=1), 1.0)
    np.testing.assert_allclose(np.linalg.norm(d.slip, axis=1), 1.0)
    np.testing.assert_allclose(np.sum(d.normal * d.slip, axis=1), 0.0, atol=1e-12)
    assert np.all(d.normal[:, 2] > 0)  # upward = into the hanging wall
    np.testing.assert_allclose(d.normal, ned_to_enu(ar_vectors_ned(strike, dip, rake)[0]), atol=1e-12)


# --------------------------------------------------------------------------- demo data
def _stations():
    f = pyogrio.read_dataframe(DEMO / "demo.gpkg", layer="slip_stations")
    truth = json.loads((DEMO / "ground_truth.json").read_text())
    return f, truth


def test_demo_stations_recover_true_rake_and_slip():
    # demo_gpkg (independent generator): layer rake is the true rake (0.01°), ground_truth.json has
    # each station's unit slip (1e-6).  Attitudes are rounded to 0.01°, so the lineation is within
    # about 0.01° of its plane.
    f, truth = _stations()
    d = k.slip_from_measurements(f.dip_dir.values, f.dip.values, trend=f.trend.values, plunge=f.plunge.values,
                                 sense=list(f.sense))
    assert set(d.status) == {"consistent"} and np.nanmax(d.misfit_deg) < 0.02
    assert rdiff(d.rake, f.rake.values).max() < 0.02
    by_id = {s["station_id"]: s for s in truth["slip_stations"]["stations"]}
    u = np.array([[by_id[i]["slip_unit"][c] for c in "enu"] for i in f.station_id])
    assert np.degrees(np.arccos(np.clip(np.sum(u * d.slip, axis=1), -1, 1))).max() < 0.1


def test_demo_fault_slickenlines_give_the_true_rake():
    _, truth = _stations()
    for fault in truth["faults"]:
        g = fault["slip"]
        d = k.slip_from_measurements(fault["dip_dir"], fault["dip"], trend=g["slickenline_trend"],
                                     plunge=g["slickenline_plunge"], sense=g["dominant_sense"])
        assert d.rake == pytest.approx(g["rake"], abs=1e-5), fault["fault_id"]
        np.testing.assert_allclose(d.slip, [g["unit_vector"][c] for c in "enu"], atol=2e-6)


# --------------------------------------------------------------------------- auxiliary plane
def test_auxiliary_plane_against_obspy():
    # ObsPy 1.5 aux_plane (library).  Compared as planes and through the double couple (which is
    # the same for both planes); the rakes directly where the auxiliary plane is not near vertical.
    strike, dip, rake = random_triples(300, 16)
    dd2, dp2, rk2 = k.auxiliary_plane(strike + 90.0, dip, rake)
    for i in range(len(strike)):
        f2, d2, r2 = aux_plane(strike[i], dip[i], rake[i])
        n_o = plane_basis(f2 + 90.0, d2)[2]
        n_k = plane_basis(dd2[i], dp2[i])[2]
        assert axial(n_o, n_k) < 1e-6
        mo = np.outer(n_o, rake_to_vector(f2 + 90.0, d2, r2))
        mk = np.outer(n_k, rake_to_vector(dd2[i], dp2[i], rk2[i]))
        np.testing.assert_allclose(mo + mo.T, mk + mk.T, atol=1e-8)
        if d2 < 89.0:
            assert d2 == pytest.approx(dp2[i], abs=1e-7) and rdiff(r2, rk2[i]) < 1e-6
            assert rdiff(f2 + 90.0, dd2[i]) < 1e-6


# --------------------------------------------------------------------------- kinematic axes
def test_kinematic_axes_per_datum_marrett_allmendinger():
    # references.md (derived from Marrett & Allmendinger 1990): (0, 60, −90) -> P 270/75, T 090/15;
    # (0, 90, 0) -> P 315/00, T 225/00, B vertical.  Through the measurement path: lineations by hand.
    d = k.slip_from_measurements([90.0, 90.0, 90.0], [60.0, 90.0, 97.0], trend=[90.0, 0.0, 0.0],
                                 plunge=[60.0, 0.0, 0.0], sense=["normal", "sinistral", "normal"])
    ax = k.kinematic_axes(d)
    assert (ax["p_trend"][0], ax["p_plunge"][0]) == pytest.approx((270.0, 75.0))
    assert (ax["t_trend"][0], ax["t_plunge"][0]) == pytest.approx((90.0, 15.0))
    assert rdiff(ax["p_trend"][1], 315.0) % 180 < 1e-9 and ax["p_plunge"][1] == pytest.approx(0.0, abs=1e-9)
    assert rdiff(ax["t_trend"][1], 225.0) % 180 < 1e-9 and ax["b_plunge"][1] == pytest.approx(90.0)
    assert np.isnan(ax["p_trend"][2]) and np.all(np.isnan(ax["t"][2]))  # rejected row: no axes
    one = k.kinematic_axes(k.slip_from_measurements(90.0, 60.0, rake=-90.0))
    assert one["p_plunge"] == pytest.approx(75.0)


def _rotation(axis, angle_deg):
    a = np.asarray(axis, float) / np.linalg.norm(axis)
    t = math.radians(angle_deg)
    kx = np.array([[0, -a[2], a[1]], [a[2], 0, -a[0]], [-a[1], a[0], 0]])
    return np.eye(3) + math.sin(t) * kx + (1 - math.cos(t)) * kx @ kx


def population(t_axis, p_axis, n, scatter_deg, seed):
    """Fault-slip data whose own T/P axes scatter about known T and P (Marrett & Allmendinger
    1990: n = (T + P)/√2, u = (T − P)/√2), with the fault and auxiliary planes mixed at random."""
    rng = np.random.default_rng(seed)
    t_axis, p_axis = np.asarray(t_axis, float), np.asarray(p_axis, float)
    normals, slips = [], []
    for _ in range(n):
        r = _rotation(rng.normal(size=3), rng.normal(0.0, scatter_deg))
        t, p = r @ t_axis, r @ p_axis
        nn, uu = (t + p) / math.sqrt(2), (t - p) / math.sqrt(2)
        if rng.random() < 0.5:
            nn, uu = uu, nn  # the auxiliary plane: the same kinematics
        if rng.random() < 0.5:
            nn, uu = -nn, -uu  # the footwall's view: the same kinematics
        normals.append(nn)
        slips.append(uu)
    return np.array(normals), np.array(slips)


T_TRUE = np.array([math.sin(math.radians(100)) * math.cos(math.radians(10)),
                   math.cos(math.radians(100)) * math.cos(math.radians(10)), -math.sin(math.radians(10))])
P_TRUE = np.cross(T_TRUE, [0.0, 0.0, 1.0])
P_TRUE = np.cross(P_TRUE, T_TRUE)
P_TRUE /= np.linalg.norm(P_TRUE)


def test_summed_tensor_recovers_known_axes():
    # noise-free: exactly
    n, u = population(T_TRUE, P_TRUE, 20, 0.0, 1)
    ax = k.summed_kinematic_tensor(n, u)
    assert axial(ax.t, T_TRUE) < 1e-9 and axial(ax.p, P_TRUE) < 1e-9
    np.testing.assert_allclose(ax.eigenvalues, [0.5, 0.0, -0.5], atol=1e-12)
    # scattered (10°): within a few degrees, and inside the 95 % cones
    n, u = population(T_TRUE, P_TRUE, 300, 10.0, 2)
    ax = k.bootstrap_kinematic_axes(n, u, resamples=300, seed=3)
    assert axial(ax.t, T_TRUE) < 3.0 and axial(ax.p, P_TRUE) < 3.0
    assert axial(ax.t, T_TRUE) < ax.t_cone95 + 1.0 and axial(ax.p, P_TRUE) < ax.p_cone95 + 1.0
    assert ax.t_plunge >= 0 and ax.p_plunge >= 0


def test_summed_tensor_against_obspy_axes_of_summed_double_couples():
    # ObsPy 1.5 mt2axes (library) of the sum of the data's double couples n uᵀ + u nᵀ.
    strike, dip, rake = random_triples(12, 17)
    rng = np.random.default_rng(5)
    w = rng.uniform(0.5, 2.0, 12)
    n_ned, u_ned = ar_vectors_ned(strike, dip, rake)
    m = sum(wi * (np.outer(a, b) + np.outer(b, a)) for wi, a, b in zip(w, n_ned, u_ned))
    t, b, p = mt2axes(MomentTensor(ned_tensor_to_use(m), 0))
    ours = k.summed_kinematic_tensor(ned_to_enu(n_ned), ned_to_enu(u_ned), weights=w)
    for name, a in (("t", t), ("b", b), ("p", p)):
        trend, plunge = getattr(ours, f"{name}_trend"), getattr(ours, f"{name}_plunge")
        v = [math.sin(math.radians(trend)) * math.cos(math.radians(plunge)),
             math.cos(math.radians(trend)) * math.cos(math.radians(plunge)), -math.sin(math.radians(plunge))]
        w_ = [math.sin(math.radians(a.strike)) * math.cos(math.radians(a.dip)),
              math.cos(math.radians(a.strike)) * math.cos(math.radians(a.dip)), -math.sin(math.radians(a.dip))]
        assert axial(v, w_) < 1e-6, name


def test_single_datum_tensor_is_its_pt_axes():
    u = rake_to_vector(130.0, 40.0, 25.0)
    ax = k.summed_kinematic_tensor(plane_basis(130.0, 40.0)[2][None], u[None])
    ref = pt_axes(130.0, 40.0, u)
    assert axial(ax.t, ref["t"]) < 1e-9 and axial(ax.p, ref["p"]) < 1e-9 and axial(ax.b, ref["b"]) < 1e-9


def test_bootstrap_reproducible_and_cones_shrink_with_more_data():
    n, u = population(T_TRUE, P_TRUE, 400, 15.0, 7)
    a = k.bootstrap_kinematic_axes(n, u, resamples=200, seed=9)
    b = k.bootstrap_kinematic_axes(n, u, resamples=200, seed=9)
    c = k.bootstrap_kinematic_axes(n, u, resamples=200, seed=10)
    assert (a.t_cone95, a.p_cone95, a.b_cone95) == (b.t_cone95, b.p_cone95, b.b_cone95)
    assert a.t_cone95 != c.t_cone95
    small = k.bootstrap_kinematic_axes(n[:15], u[:15], resamples=200, seed=9)
    assert small.t_cone95 > 2 * a.t_cone95 and small.p_cone95 > 2 * a.p_cone95
    one = k.bootstrap_kinematic_axes(n[:1], u[:1], resamples=200)
    assert math.isnan(one.t_cone95) and one.resamples == 0
    assert k.bootstrap_kinematic_axes(n, u, resamples=0).resamples == 0


def test_summed_tensor_bad_input():
    with pytest.raises(InputError, match="at least one datum"):
        k.summed_kinematic_tensor(np.zeros((0, 3)), np.zeros((0, 3)))
    with pytest.raises(InputError, match="finite"):
        k.summed_kinematic_tensor([[0, 0, 1.0]], [[np.nan, 0, 0]])
    with pytest.raises(InputError, match="weights"):
        k.summed_kinematic_tensor([[0, 0, 1.0]], [[1.0, 0, 0]], weights=[-1.0])


def test_population_status_words():
    assert k.population_status(0) == "no usable data"
    assert k.population_status(1, [0.5, 0, -0.5]) == "one datum: no confidence cones"
    assert k.population_status(3, [0.4, 0.1, -0.5]) == "few data (n < 5): cones are rough"
    assert k.population_status(50, [0.25, 0.24, -0.49]) == "T and B not resolved"
    assert k.population_status(50, [0.4, 0.1, -0.5]) == "ok"


# --------------------------------------------------------------------------- the step
def test_step_tables_and_messages():
    res = steps.fault_slip(
        ["a", "b", "c", None], [90.0, "90", 90.0, 90.0], [60.0, 60.0, "steep", 97.0],
        trend=[90.0, 90.0, 90.0, 90.0], plunge=[60.0, 60.0, 60.0, 60.0],
        sense=["normal", "reverse", "normal", "normal"], feature_ids=[1, 2, 3, 4],
        group_values=["g1", "g1", "g2", None], xy=[[0, 0], [10, 0], [20, 0], [30, 0]],
        labels=[f"lyr feature {i}" for i in range(1, 5)], fields={"dip": "DIP", "group": "grp"}, resamples=50)
    t = res.tables["fault_slip"]
    assert list(t.columns) == [n for n, _ in FAULT_SLIP_FIELDS]
    assert t.columns["station_id"].tolist() == ["a", "b", "c", "4"]
    assert t.columns["status"][2] == "rejected: dip = 'steep' is not a number"
    assert "lyr feature 3: field 'DIP' = 'steep' is not a number; datum rejected" in res.warnings
    assert "lyr feature 4: field 'DIP' = 97 is outside [0, 90] degrees; datum rejected" in res.warnings
    assert "lyr feature 4: field 'grp' is empty; the datum belongs to no group" in res.warnings
    a = res.tables["kinematic_axes"]
    assert a.columns["group_id"].tolist() == ["g1", "g2"] and a.columns["n_data"].tolist() == [2, 0]
    assert a.columns["status"][1] == "no usable data" and np.isnan(a.columns["t_trend"][1])
    assert res.summary["status"] == {"consistent": 2, "contradicts": 0, "ambiguous": 0, "rejected": 2}


def test_step_needs_data():
    with pytest.raises(InputError, match="empty"):
        steps.fault_slip([], [], [], rake=[])

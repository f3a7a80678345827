"""Tests of slipsense.core.slip: rake <-> slip vector, components, sense words, fault type, P/T/B.

Frames: slipsense vectors are (east, north, up).  Aki & Richards (1980) and ObsPy work in
(north, east, down) for vectors; ObsPy's moment tensors are (up, south, east) ("USE": r, theta,
phi) and its axes come as azimuth ("strike") / plunge ("dip").  Planes in both are strike (right-hand
rule, i.e. dip direction − 90) / dip / rake, the same Aki & Richards rake as slipsense.  Every
cross-check converts explicitly with the helpers below.
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from obspy.imaging.beachball import MomentTensor, aux_plane, mt2axes, mt2plane

from conftest import DEMO
from slipsense.core import slip as sl
from slipsense.core.orientation import line_to_vector


def ned_to_enu(v):
    v = np.asarray(v, float)
    return np.stack([v[..., 1], v[..., 0], -v[..., 2]], axis=-1)


def ar_vectors_ned(strike, dip, rake):
    """Normal and slip in (north, east, down), Aki & Richards (1980) as written in references.md:
    n = (−sin δ sin φ, sin δ cos φ, −cos δ), u = (cos λ cos φ + cos δ sin λ sin φ,
    cos λ sin φ − cos δ sin λ cos φ, −sin λ sin δ)."""
    f, d, r = (np.radians(np.asarray(x, float)) for x in (strike, dip, rake))
    n = np.stack([-np.sin(d) * np.sin(f), np.sin(d) * np.cos(f), -np.cos(d)], axis=-1)
    u = np.stack([np.cos(r) * np.cos(f) + np.cos(d) * np.sin(r) * np.sin(f),
                  np.cos(r) * np.sin(f) - np.cos(d) * np.sin(r) * np.cos(f),
                  -np.sin(r) * np.sin(d)], axis=-1)
    return n, u


def ned_tensor_to_use(m):
    """(north, east, down) tensor -> ObsPy's six (Mrr, Mtt, Mpp, Mrt, Mrp, Mtp); r = up = −down,
    t = south = −north, p = east."""
    return [m[2, 2], m[0, 0], m[1, 1], m[0, 2], -m[1, 2], -m[0, 1]]


def axial(u, v):
    u, v = np.asarray(u, float), np.asarray(v, float)
    return np.degrees(np.arctan2(np.linalg.norm(np.cross(u, v), axis=-1), np.abs(np.sum(u * v, axis=-1))))


def random_triples(n, seed):
    rng = np.random.default_rng(seed)
    return rng.uniform(0, 360, n), rng.uniform(1, 89, n), rng.uniform(-180, 180, n)


# --------------------------------------------------------------------------- rake <-> vector
def test_rake_to_vector_matches_aki_richards_for_random_triples():
    # Aki & Richards (1980) slip vector formula (references.md), in (north, east, down).
    strike, dip, rake = random_triples(500, 1)
    _, u_ned = ar_vectors_ned(strike, dip, rake)
    u = sl.rake_to_vector(strike + 90.0, dip, rake)
    np.testing.assert_allclose(u, ned_to_enu(u_ned), atol=1e-12)


def test_references_check_120_60_minus30():
    # references.md (derived, agrees with pyrocko): (120, 60, −30) -> u (NED) = (−0.6495, 0.6250, 0.4330).
    u = sl.rake_to_vector(210.0, 60.0, -30.0)
    np.testing.assert_allclose(u, ned_to_enu([-0.6495, 0.6250, 0.4330]), atol=1e-4)


def test_vector_to_rake_round_trip_and_range():
    strike, dip, rake = random_triples(500, 2)
    back = sl.vector_to_rake(strike + 90.0, dip, sl.rake_to_vector(strike + 90.0, dip, rake))
    np.testing.assert_allclose((back - rake + 180.0) % 360.0 - 180.0, 0.0, atol=1e-9)
    assert np.all((back > -180.0) & (back <= 180.0))
    # Dextral: +180, never -180
    assert sl.vector_to_rake(90.0, 60.0, [0.0, -1.0, 0.0]) == 180.0
    assert sl.vector_to_rake(90.0, 60.0, [0.0, -1.0, -1e-17]) == pytest.approx(180.0)
    assert math.isnan(sl.vector_to_rake(90.0, 60.0, sl.plane_basis(90.0, 60.0)[2]))


@settings(max_examples=200, deadline=None)
@given(st.floats(0, 360), st.floats(0, 90), st.floats(-179.999, 180))
def test_rake_round_trip_property(dd, dip, rake):
    u = sl.rake_to_vector(dd, dip, rake)
    assert np.linalg.norm(u) == pytest.approx(1.0)
    assert abs(np.dot(u, sl.plane_basis(dd, dip)[2])) < 1e-12  # in the plane
    back = sl.vector_to_rake(dd, dip, u)
    assert abs((back - rake + 180.0) % 360.0 - 180.0) < 1e-9


def test_slip_of_obspy_auxiliary_plane_is_our_normal():
    # ObsPy 1.5 aux_plane (library): the auxiliary plane's normal is the slip vector and its slip
    # is the fault normal (Aki & Richards 1980).  Both as axes, then with the double couple's sign.
    strike, dip, rake = random_triples(300, 3)
    for f, d, r in zip(strike, dip, rake):
        f2, d2, r2 = aux_plane(f, d, r)
        n1, u1 = sl.plane_basis(f + 90.0, d)[2], sl.rake_to_vector(f + 90.0, d, r)
        n2, u2 = sl.plane_basis(f2 + 90.0, d2)[2], sl.rake_to_vector(f2 + 90.0, d2, r2)
        assert axial(n2, u1) < 1e-6 and axial(u2, n1) < 1e-6
        np.testing.assert_allclose(np.outer(n1, u1) + np.outer(u1, n1),
                                   np.outer(n2, u2) + np.outer(u2, n2), atol=1e-9)


# --------------------------------------------------------------------------- components
def _demo_truth():
    return json.loads((DEMO / "ground_truth.json").read_text())["faults"]


@pytest.mark.parametrize("fault", [f["fault_id"] for f in _demo_truth()])
def test_components_against_demo_ground_truth(fault):
    # demo_gpkg/ground_truth.json, written by the demo generator (which does not import slipsense).
    f = next(x for x in _demo_truth() if x["fault_id"] == fault)
    g = f["slip"]
    vec = sl.rake_to_vector(f["dip_dir"], f["dip"], g["rake"]) * g["net_slip_m"]
    np.testing.assert_allclose(vec, [g["slip_e"], g["slip_n"], g["slip_u"]], atol=2e-4)
    np.testing.assert_allclose(sl.rake_to_vector(f["dip_dir"], f["dip"], g["rake"]),
                               [g["unit_vector"][k] for k in "enu"], atol=2e-6)
    c = sl.slip_components(f["dip_dir"], f["dip"], [g["slip_e"], g["slip_n"], g["slip_u"]])
    for k in ("net_slip_m", "strike_slip_m", "dip_slip_m", "throw_m", "heave_m", "rake"):
        assert c[k] == pytest.approx(g[k], abs=2e-4), k
    assert c["heave_signed_m"] == pytest.approx(g["heave_toward_dip_dir_m"], abs=2e-4)
    # the slickenline of the truth is the slip's lower-hemisphere axis
    assert axial(line_to_vector(g["slickenline_trend"], g["slickenline_plunge"]), vec) < 1e-4
    assert sl.sense_words(g["rake"], g["net_slip_m"]) == g["sense"]


def test_fault_types_of_demo_faults():
    # demo README table: F3 is a 27°-dipping thrust, F4 dextral, F5 dextral-reverse
    types = {f["fault_id"]: sl.fault_type(f["slip"]["rake"], f["dip"]) for f in _demo_truth()}
    assert types == {"F1": "normal", "F2": "normal", "F3": "thrust", "F4": "dextral strike-slip",
                     "F5": "oblique dextral-reverse"}


def test_component_signs_by_hand():
    # A 60° east-dipping plane (strike 000): normal slip of 10 m straight down dip.
    c = sl.slip_components(90.0, 60.0, 10.0 * sl.rake_to_vector(90.0, 60.0, -90.0))
    assert c["dip_slip_m"] == pytest.approx(-10.0) and c["strike_slip_m"] == pytest.approx(0.0, abs=1e-12)
    assert c["throw_m"] == pytest.approx(-10.0 * math.sin(math.radians(60)))
    assert c["heave_m"] == pytest.approx(5.0) and c["heave_signed_m"] == pytest.approx(5.0)
    assert c["slip_trend"] == pytest.approx(90.0) and c["slip_plunge"] == pytest.approx(60.0)
    # hanging wall moving up: negative plunge; trend always in [0, 360)
    c = sl.slip_components(90.0, 60.0, [-1e-15, 0.5, math.sqrt(0.75)])
    assert c["slip_plunge"] < 0 and 0.0 <= c["slip_trend"] < 360.0


def test_horizontal_reference_check_throw_and_dip_separation():
    # references.md (published exam-style): pure dip slip on a 30° fault with 10 m vertical
    # separation of a horizontal bed -> net slip 20 m.
    c = sl.slip_components(0.0, 30.0, 20.0 * sl.rake_to_vector(0.0, 30.0, -90.0))
    assert c["throw_m"] == pytest.approx(-10.0)


# --------------------------------------------------------------------------- words
@pytest.mark.parametrize("rake,words", [
    # Thresholds of SenseRules (common practice: octant bins, pure within 22.5°), at their boundaries.
    (-90.0, "normal"), (90.0, "reverse"), (0.0, "sinistral"), (180.0, "dextral"), (-180.0, "dextral"),
    (-67.5, "normal"), (-67.4, "normal-sinistral"), (-112.5, "normal"), (-112.6, "normal-dextral"),
    (-22.5, "sinistral"), (-22.6, "sinistral-normal"), (157.5, "dextral"), (157.4, "dextral-reverse"),
    (22.6, "sinistral-reverse"), (67.4, "reverse-sinistral"),
    (-45.0, "sinistral-normal"), (135.0, "dextral-reverse"),  # ties: strike-slip word first (documented)
])
def test_sense_words_at_thresholds(rake, words):
    assert sl.sense_words(rake) == words


@pytest.mark.parametrize("rake,dip,kind", [
    (90.0, 45.0, "thrust"), (90.0, 45.01, "reverse"), (90.0, 27.0, "thrust"), (-90.0, 20.0, "normal"),
    (100.0, 30.0, "thrust"), (130.0, 30.0, "oblique thrust-dextral"), (150.0, 30.0, "oblique dextral-thrust"),
    (150.0, 70.0, "oblique dextral-reverse"), (-30.0, 80.0, "oblique sinistral-normal"),
    (-170.0, 89.0, "dextral strike-slip"), (10.0, 89.0, "sinistral strike-slip"),
])
def test_fault_type_at_thresholds(rake, dip, kind):
    # thrust_max_dip 45° (common practice: "thrust = reverse on a low-angle plane"), inclusive.
    assert sl.fault_type(rake, dip) == kind


def test_words_for_zero_unknown_and_nan():
    assert sl.sense_words(-90.0, 0.0) == "none" and sl.fault_type(-90.0, 60.0, 0.0) == "none"
    assert sl.sense_words(np.nan) == "" and sl.fault_type(np.nan, 60.0) == ""
    # an unknown (NaN) magnitude is not zero slip (bug fixed: it used to say "none")
    assert sl.sense_words(-90.0, np.nan) == "" and sl.fault_type(-90.0, 60.0, np.nan) == ""
    out = sl.sense_words(np.array([-90.0, 90.0, np.nan]), np.array([1.0, 0.0, 1.0]))
    assert out.tolist() == ["normal", "none", ""]


def test_rules_are_one_place():
    strict = sl.SenseRules(pure_deg=10.0, thrust_max_dip=30.0)
    assert sl.sense_words(-75.0, rules=strict) == "normal-sinistral"
    assert sl.fault_type(90.0, 40.0, rules=strict) == "reverse"


# --------------------------------------------------------------------------- P/T/B axes
def _assert_axis(trend, plunge, want_trend, want_plunge, tol=1e-3):
    assert axial(line_to_vector(trend, plunge), line_to_vector(want_trend, want_plunge)) < tol


def test_pt_axes_marrett_allmendinger_checks():
    # references.md (derived from Marrett & Allmendinger 1990, 0.001°):
    # (strike 0, dip 60, rake −90) -> P 270/75, T 090/15.
    ax = sl.pt_axes(90.0, 60.0, sl.rake_to_vector(90.0, 60.0, -90.0))
    _assert_axis(ax["p_trend"], ax["p_plunge"], 270.0, 75.0)
    _assert_axis(ax["t_trend"], ax["t_plunge"], 90.0, 15.0)
    assert ax["p_trend"] == pytest.approx(270.0) and ax["t_trend"] == pytest.approx(90.0)
    # (0, 90, 0) -> P 315/00, T 225/00, B vertical.
    ax = sl.pt_axes(90.0, 90.0, sl.rake_to_vector(90.0, 90.0, 0.0))
    _assert_axis(ax["p_trend"], ax["p_plunge"], 315.0, 0.0)
    _assert_axis(ax["t_trend"], ax["t_plunge"], 225.0, 0.0)
    assert ax["b_plunge"] == pytest.approx(90.0)


def test_pt_axes_against_obspy_for_random_double_couples():
    # Double couple M = n uᵀ + u nᵀ (Aki & Richards 1980) from the references.md vectors (NED),
    # handed to ObsPy 1.5's mt2axes (library; GMT's eigen-axes) and mt2plane.
    strike, dip, rake = random_triples(300, 4)
    n_ned, u_ned = ar_vectors_ned(strike, dip, rake)
    ours = sl.pt_axes(strike + 90.0, dip, sl.rake_to_vector(strike + 90.0, dip, rake))
    for i in range(len(strike)):
        m = np.outer(n_ned[i], u_ned[i]) + np.outer(u_ned[i], n_ned[i])
        mt = MomentTensor(ned_tensor_to_use(m), 0)
        t, nn, p = mt2axes(mt)
        for name, ax in (("t", t), ("p", p), ("b", nn)):
            _assert_axis(ours[f"{name}_trend"][i], ours[f"{name}_plunge"][i], ax.strike, ax.dip, tol=1e-6)
        plane = mt2plane(mt)  # one of the two nodal planes
        n_o = sl.plane_basis(plane.strike + 90.0, plane.dip)[2]
        n_ours = sl.plane_basis(strike[i] + 90.0, dip[i])[2]
        u_ours = sl.rake_to_vector(strike[i] + 90.0, dip[i], rake[i])
        assert min(axial(n_o, n_ours), axial(n_o, u_ours)) < 1e-5


def test_aki_richards_box_4_4_moment_tensor_equals_n_u_plus_u_n():
    # Aki & Richards (1980) Box 4.4 components (x north, y east, z down; from memory), checked
    # against the double couple of the references.md vectors; ties the two published forms together.
    strike, dip, rake = random_triples(50, 5)
    for f, d, r in zip(*(np.radians(x) for x in (strike, dip, rake))):
        box = np.empty((3, 3))
        box[0, 0] = -(np.sin(d) * np.cos(r) * np.sin(2 * f) + np.sin(2 * d) * np.sin(r) * np.sin(f) ** 2)
        box[0, 1] = np.sin(d) * np.cos(r) * np.cos(2 * f) + 0.5 * np.sin(2 * d) * np.sin(r) * np.sin(2 * f)
        box[0, 2] = -(np.cos(d) * np.cos(r) * np.cos(f) + np.cos(2 * d) * np.sin(r) * np.sin(f))
        box[1, 1] = np.sin(d) * np.cos(r) * np.sin(2 * f) - np.sin(2 * d) * np.sin(r) * np.cos(f) ** 2
        box[1, 2] = -(np.cos(d) * np.cos(r) * np.sin(f) - np.cos(2 * d) * np.sin(r) * np.cos(f))
        box[2, 2] = np.sin(2 * d) * np.sin(r)
        box[1, 0], box[2, 0], box[2, 1] = box[0, 1], box[0, 2], box[1, 2]
        n, u = ar_vectors_ned(np.degrees(f), np.degrees(d), np.degrees(r))
        np.testing.assert_allclose(box, np.outer(n, u) + np.outer(u, n), atol=1e-12)


def test_pt_axes_are_unit_even_for_slightly_out_of_plane_slip():
    u = sl.rake_to_vector(90.0, 60.0, -60.0) + [0.0, 0.0, 0.01]
    ax = sl.pt_axes(90.0, 60.0, u)
    for k in "ptb":
        assert np.linalg.norm(ax[k]) == pytest.approx(1.0)

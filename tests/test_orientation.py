"""Tests of slipsense.core.orientation.

Frames: slipsense vectors are (east, north, up).  mplstereonet's "world" vectors are also
(east, north, up) (its ``vector2plunge_bearing(0, 1, -1)`` is plunge 45 towards north; checked in
``test_mplstereonet_frame``), its planes are right-hand-rule strike/dip, and its lines
plunge/bearing (note the order).  ObsPy's ``beachball.strike_dip`` takes a normal as
(north, east, up).  Each cross-check converts explicitly.
"""
from __future__ import annotations

import math
import warnings

import mplstereonet
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from obspy.imaging.beachball import strike_dip as obspy_strike_dip

from cases import PLANE_IDS, PLANES
from slipsense.core import orientation as o
from slipsense.errors import AngleError, OrientationParseError

AZ = st.floats(0.0, 360.0, allow_nan=False, exclude_max=True)
ANY_AZ = st.floats(-1e4, 1e4, allow_nan=False)
DIP = st.floats(0.0, 90.0, allow_nan=False)
COMPONENT = st.floats(-1e3, 1e3, allow_nan=False)
VECTOR = st.tuples(COMPONENT, COMPONENT, COMPONENT).filter(lambda v: math.hypot(*v) > 1e-3)


def azdiff(a, b):
    """Smallest absolute difference of azimuths (degrees)."""
    return np.abs((np.asarray(a) - np.asarray(b) + 180.0) % 360.0 - 180.0)


def axial_angle(u, v):
    """Angle (degrees) between two vectors taken as axes (atan2 form: accurate near 0)."""
    u = np.asarray(u, float)
    v = np.asarray(v, float)
    cross = np.linalg.norm(np.cross(u, v), axis=-1)
    return np.degrees(np.arctan2(cross, np.abs(np.sum(u * v, axis=-1))))


# --------------------------------------------------------------------------- canonical cases
@pytest.mark.parametrize("case", PLANES, ids=PLANE_IDS)
def test_canonical_planes(case):
    np.testing.assert_allclose(o.plane_to_normal(case.dip_dir, case.dip), case.normal, atol=1e-12)
    assert o.dip_dir_to_strike(case.dip_dir) == pytest.approx(case.strike)
    assert o.strike_to_dip_dir(case.strike) == pytest.approx(case.dip_dir)
    trend, plunge = o.plane_to_pole(case.dip_dir, case.dip)
    assert (trend, plunge) == pytest.approx(case.pole)
    dd, d = o.normal_to_plane(case.normal)
    assert d == pytest.approx(case.dip, abs=1e-9)
    assert azdiff(dd, case.dip_dir) < 1e-9


def test_horizontal_plane_reports_dip_dir_zero():
    assert o.normal_to_plane([0.0, 0.0, 1.0]) == (0.0, 0.0)
    assert o.normal_to_plane([0.0, 0.0, -5.0]) == (0.0, 0.0)


def test_vertical_plane_keeps_given_sense_and_zero_normal_is_nan():
    assert o.normal_to_plane([-1.0, 0.0, 0.0]) == pytest.approx((270.0, 90.0))
    assert o.normal_to_plane([1.0, 0.0, 0.0]) == pytest.approx((90.0, 90.0))
    dd, d = o.normal_to_plane([0.0, 0.0, 0.0])
    assert math.isnan(dd) and math.isnan(d)


def test_batch_shapes():
    dd = np.array([[10.0, 20.0], [30.0, 40.0]])
    n = o.plane_to_normal(dd, 30.0)
    assert n.shape == (2, 2, 3)
    back_dd, back_d = o.normal_to_plane(n)
    np.testing.assert_allclose(back_dd, dd)
    np.testing.assert_allclose(back_d, 30.0)


# --------------------------------------------------------------------------- round trips
@given(ANY_AZ)
def test_normalize_azimuth_range_and_congruence(a):
    r = o.normalize_azimuth(a)
    assert 0.0 <= r < 360.0
    assert azdiff(r, a) < 1e-9


def test_normalize_azimuth_edge_values():
    assert o.normalize_azimuth(360.0) == 0.0
    assert o.normalize_azimuth(-1e-17) == 0.0  # np.mod(-1e-17, 360) rounds to 360.0
    assert o.normalize_azimuth(-30.0) == 330.0
    np.testing.assert_array_equal(o.normalize_azimuth([720.0, -90.0]), [0.0, 270.0])


@given(AZ)
def test_strike_dip_dir_round_trip(dd):
    s = o.dip_dir_to_strike(dd)
    assert 0.0 <= s < 360.0
    assert azdiff(s, dd - 90.0) < 1e-9  # right-hand rule
    assert azdiff(o.strike_to_dip_dir(s), dd) < 1e-9


@given(AZ, DIP)
def test_plane_normal_round_trip(dd, dip):
    n = o.plane_to_normal(dd, dip)
    assert np.linalg.norm(n) == pytest.approx(1.0)
    assert n[2] >= 0.0
    dd2, dip2 = o.normal_to_plane(n)
    assert dip2 == pytest.approx(dip, abs=1e-6)
    if 1e-6 < dip < 90.0:
        assert azdiff(dd2, dd) < 1e-6
    # Whatever the degenerate case, the plane itself is recovered.
    assert axial_angle(o.plane_to_normal(dd2, dip2), n) < 1e-6


@given(VECTOR)
def test_normal_plane_round_trip(v):
    dd, dip = o.normal_to_plane(v)
    assert 0.0 <= dd < 360.0 and 0.0 <= dip <= 90.0
    assert axial_angle(o.plane_to_normal(dd, dip), v) < 1e-6


@given(AZ, DIP)
def test_plane_pole_round_trip(dd, dip):
    t, p = o.plane_to_pole(dd, dip)
    assert 0.0 <= t < 360.0 and 0.0 <= p <= 90.0
    # The pole is the downward normal: the same axis as the plane's normal.
    assert axial_angle(o.line_to_vector(t, p), o.plane_to_normal(dd, dip)) < 1e-6
    dd2, dip2 = o.pole_to_plane(t, p)
    assert dip2 == pytest.approx(dip)
    assert azdiff(dd2, dd) < 1e-9


@given(AZ, DIP)
def test_line_vector_round_trip(t, p):
    v = o.line_to_vector(t, p)
    assert np.linalg.norm(v) == pytest.approx(1.0)
    assert v[2] <= 0.0  # points down
    t2, p2 = o.vector_to_line(v)
    assert p2 == pytest.approx(p, abs=1e-6)
    if p < 90.0 - 1e-6:
        assert azdiff(t2, t) < 1e-6 / max(math.cos(math.radians(p)), 1e-6)
    np.testing.assert_allclose(o.line_to_vector(t2, p2), v, atol=1e-6)


@given(VECTOR)
def test_vector_line_round_trip_is_axial(v):
    t, p = o.vector_to_line(v)
    assert 0.0 <= t < 360.0 and 0.0 <= p <= 90.0
    assert axial_angle(o.line_to_vector(t, p), v) < 1e-6
    # An upward vector is the same axis as its lower-hemisphere twin.
    t2, p2 = o.vector_to_line(-np.asarray(v))
    assert p2 == pytest.approx(p, abs=1e-6)
    if 1e-6 < p < 89.99:
        assert azdiff(t, t2) < 1e-5


def test_vertical_line_trend_zero_and_zero_vector_nan():
    assert o.vector_to_line([0.0, 0.0, 2.0]) == (0.0, 90.0)
    t, p = o.vector_to_line([0.0, 0.0, 0.0])
    assert math.isnan(t) and math.isnan(p)


@given(AZ, DIP)
def test_strike_and_dip_vectors_lie_in_plane(dd, dip):
    n = o.plane_to_normal(dd, dip)
    s = o.strike_vector(dd)
    d = o.dip_vector(dd, dip)
    assert abs(np.dot(n, s)) < 1e-12 and abs(np.dot(n, d)) < 1e-12
    # Right-hand rule: strike × down-dip points along the downward normal, i.e. the plane dips to
    # the right of an observer facing along strike (for dip > 0).
    if dip > 1e-3:
        assert np.dot(np.cross(s, d), n) == pytest.approx(-1.0, abs=1e-9)


@pytest.mark.parametrize("func", [o.plane_to_normal, o.plane_to_pole, o.dip_vector])
def test_dip_out_of_range_raises(func):
    with pytest.raises(AngleError, match=r"dip must be in \[0, 90\] degrees, got 97"):
        func(10.0, 97.0)


def test_plunge_out_of_range_raises():
    with pytest.raises(AngleError, match=r"plunge must be in \[0, 90\] degrees, got -1"):
        o.line_to_vector(10.0, -1.0)
    with pytest.raises(AngleError, match="plunge must be in"):
        o.pole_to_plane(10.0, float("nan"))


# --------------------------------------------------------------------------- reference libraries
def test_mplstereonet_frame():
    """Pin the reading of mplstereonet's world frame used below: (east, north, up)."""
    plunge, bearing = mplstereonet.vector2plunge_bearing(0.0, 1.0, -1.0)
    assert (plunge[0], bearing[0]) == pytest.approx((45.0, 0.0))
    plunge, bearing = mplstereonet.vector2plunge_bearing(1.0, 0.0, 0.0)
    assert (plunge[0], bearing[0] % 180.0) == pytest.approx((0.0, 90.0), abs=1e-9)


RNG = np.random.default_rng(20240611)
N_REF = 2000
REF_DD = RNG.uniform(0.0, 360.0, N_REF)
REF_DIP = RNG.uniform(0.0, 90.0, N_REF)
REF_T = RNG.uniform(0.0, 360.0, N_REF)
REF_P = RNG.uniform(0.0, 90.0, N_REF)


def test_plane_to_normal_vs_mplstereonet_pole():
    # mplstereonet.pole takes an RHR strike; its lon/lat -> stereonet2xyz gives the pole as a
    # lower-hemisphere (downward) vector in (east, north, up); our pole is minus the upward normal.
    lon, lat = mplstereonet.pole(o.dip_dir_to_strike(REF_DD), REF_DIP)
    ref = np.stack(mplstereonet.stereonet2xyz(lon, lat), axis=-1)
    ours = -o.plane_to_normal(REF_DD, REF_DIP)
    np.testing.assert_allclose(ours, ref, atol=1e-9)


def test_plane_to_pole_vs_mplstereonet():
    lon, lat = mplstereonet.pole(o.dip_dir_to_strike(REF_DD), REF_DIP)
    ref_plunge, ref_bearing = mplstereonet.geographic2plunge_bearing(lon, lat)
    trend, plunge = o.plane_to_pole(REF_DD, REF_DIP)
    np.testing.assert_allclose(plunge, ref_plunge, atol=1e-7)
    steep = ref_plunge < 90.0 - 1e-6  # the trend of a vertical pole is arbitrary
    assert np.all(azdiff(trend[steep], ref_bearing[steep]) < 1e-6)


def test_line_to_vector_vs_mplstereonet():
    lon, lat = mplstereonet.line(REF_P, REF_T)  # plunge first, then bearing
    ref = np.stack(mplstereonet.stereonet2xyz(lon, lat), axis=-1)
    np.testing.assert_allclose(o.line_to_vector(REF_T, REF_P), ref, atol=1e-9)


def test_vector_to_line_and_normal_to_plane_vs_mplstereonet():
    v = RNG.normal(size=(N_REF, 3))
    ref_plunge, ref_bearing = mplstereonet.vector2plunge_bearing(v[:, 0], v[:, 1], v[:, 2])
    t, p = o.vector_to_line(v)
    np.testing.assert_allclose(p, ref_plunge, atol=1e-7)
    assert np.all(azdiff(t, ref_bearing) < 1e-6)
    # vector2pole treats the vector as a plane normal and returns an RHR strike/dip.
    ref_strike, ref_dip = mplstereonet.vector2pole(v[:, 0], v[:, 1], v[:, 2])
    dd, dip = o.normal_to_plane(v)
    np.testing.assert_allclose(dip, ref_dip, atol=1e-7)
    assert np.all(azdiff(dd, ref_strike + 90.0) < 1e-6)


def test_normal_to_plane_vs_obspy():
    # ObsPy's strike_dip(n, e, u) takes the normal as (north, east, up) and returns RHR strike/dip.
    v = RNG.normal(size=(300, 3))
    for e, n, u in v:
        ref_strike, ref_dip = obspy_strike_dip(n, e, u)
        dd, dip = o.normal_to_plane([e, n, u])
        assert dip == pytest.approx(ref_dip, abs=1e-6)
        assert azdiff(dd, ref_strike + 90.0) < 1e-6


def test_angles_vs_mplstereonet_angular_distance():
    t2 = RNG.uniform(0.0, 360.0, N_REF)
    p2 = RNG.uniform(0.0, 90.0, N_REF)
    ref = np.degrees(
        mplstereonet.angular_distance(
            mplstereonet.line(REF_P, REF_T), mplstereonet.line(p2, t2), bidirectional=True
        )
    )
    np.testing.assert_allclose(o.angle_between_lines(REF_T, REF_P, t2, p2), ref, atol=1e-6)
    ref_planes = np.degrees(
        mplstereonet.angular_distance(
            mplstereonet.pole(o.dip_dir_to_strike(REF_DD), REF_DIP),
            mplstereonet.pole(o.dip_dir_to_strike(t2), p2),
            bidirectional=True,
        )
    )
    np.testing.assert_allclose(o.angle_between_planes(REF_DD, REF_DIP, t2, p2), ref_planes, atol=1e-6)


# --------------------------------------------------------------------------- angles
@given(AZ, DIP, AZ, DIP)
def test_angle_between_lines_symmetric_and_in_range(t1, p1, t2, p2):
    a = o.angle_between_lines(t1, p1, t2, p2)
    assert 0.0 <= a <= 90.0
    assert a == pytest.approx(o.angle_between_lines(t2, p2, t1, p1), abs=1e-9)


@given(AZ, DIP, AZ, DIP)
def test_angle_between_planes_symmetric_and_equals_pole_angle(d1, g1, d2, g2):
    a = o.angle_between_planes(d1, g1, d2, g2)
    assert 0.0 <= a <= 90.0
    assert a == pytest.approx(o.angle_between_planes(d2, g2, d1, g1), abs=1e-9)
    assert a == pytest.approx(o.angle_between_lines(*o.plane_to_pole(d1, g1), *o.plane_to_pole(d2, g2)), abs=1e-6)


@given(AZ)
def test_angle_between_lines_is_axial(t):
    # A horizontal line and the same line read from its other end are one axis.
    assert o.angle_between_lines(t, 0.0, t + 180.0, 0.0) == pytest.approx(0.0, abs=1e-6)
    assert o.angle_between_lines(t, 0.0, t + 90.0, 0.0) == pytest.approx(90.0, abs=1e-6)


@given(AZ)
def test_vertical_planes_of_opposite_dip_dir_are_the_same_plane(dd):
    assert o.angle_between_planes(dd, 90.0, dd + 180.0, 90.0) == 0.0
    assert o.angle_between_planes(dd, 90.0, dd + 90.0, 90.0) == pytest.approx(90.0)


def test_angle_between_planes_simple_value():
    # Two planes of the same dip direction differ by their dip difference.
    assert o.angle_between_planes(40.0, 30.0, 40.0, 75.0) == pytest.approx(45.0)


# --------------------------------------------------------------------------- Ragan (2009) apparent dip
def apparent_dip_from_vectors(dip_dir, dip, beta):
    """Plunge of the intersection of a plane with a vertical section at angle ``beta`` from strike.

    The section's trend is strike + beta; its plane is vertical, so its normal is the horizontal
    unit vector perpendicular to that trend.  The intersection line is n_plane × n_section.
    """
    section_trend = math.radians(o.dip_dir_to_strike(dip_dir) + beta)
    n_section = np.array([math.cos(section_trend), -math.sin(section_trend), 0.0])
    line = np.cross(o.plane_to_normal(dip_dir, dip), n_section)
    return o.vector_to_line(line)[1]


def ragan_apparent_dip(dip, beta):
    """Ragan (2009) Structural Geology: An Introduction to Geometrical Techniques, 4th ed.:
    tan α = tan δ · sin β."""
    return math.degrees(math.atan(math.tan(math.radians(dip)) * math.sin(math.radians(beta))))


@pytest.mark.parametrize(
    "dip, beta, expected",
    # Derived values from references.md (computed from Ragan's formula, 0.01°).
    [(30.0, 45.0, 22.2077), (30.0, 60.0, 26.5651), (30.0, 90.0, 30.0), (30.0, 0.0, 0.0)],
)
def test_apparent_dip_reference_values(dip, beta, expected):
    assert ragan_apparent_dip(dip, beta) == pytest.approx(expected, abs=0.01)
    assert apparent_dip_from_vectors(123.0, dip, beta) == pytest.approx(expected, abs=0.01)


@settings(max_examples=200)
@given(AZ, st.floats(0.0, 89.0), st.floats(0.5, 179.5))
def test_apparent_dip_vectors_match_ragan(dd, dip, beta):
    assert apparent_dip_from_vectors(dd, dip, beta) == pytest.approx(ragan_apparent_dip(dip, beta), abs=1e-7)


def test_two_apparent_dips_define_the_plane():
    """references.md: apparent dips 20° towards N10E and 15° towards N85W define the plane
    (derived: strike 240.43° RHR, dip 25.28°); the normal is the cross product of the two lines."""
    l1 = o.line_to_vector(10.0, 20.0)
    l2 = o.line_to_vector(275.0, 15.0)
    dd, dip = o.normal_to_plane(np.cross(l1, l2))
    assert o.dip_dir_to_strike(dd) == pytest.approx(240.43, abs=0.01)
    assert dip == pytest.approx(25.28, abs=0.01)
    # Independent confirmation with Ragan's inverse, tan δ = tan α / sin β, for each line.
    for trend, alpha in [(10.0, 20.0), (275.0, 15.0)]:
        beta = math.radians(trend - o.dip_dir_to_strike(dd))
        true_dip = math.degrees(math.atan(math.tan(math.radians(alpha)) / abs(math.sin(beta))))
        assert true_dip == pytest.approx(dip, abs=1e-9)


# --------------------------------------------------------------------------- parse_plane
@pytest.mark.parametrize(
    "text, expected",
    [
        ("N30E 45SE", (120.0, 45.0)),
        ("030/45SE", (120.0, 45.0)),
        ("030/45 SE", (120.0, 45.0)),
        ("30 45 SE", (120.0, 45.0)),
        ("210/45 SE", (120.0, 45.0)),
        ("n30e 45se", (120.0, 45.0)),
        ("S30W 45NW", (300.0, 45.0)),
        ("N30W 60SW", (240.0, 60.0)),
        ("S45E 20NE", (45.0, 20.0)),
        ("S10W 30E", (100.0, 30.0)),
        ("N 0 E 90 W", (270.0, 90.0)),
        ("350/10 E", (80.0, 10.0)),  # dip direction 350 + 90 wraps past 360
        ("0/0 E", (90.0, 0.0)),
    ],
)
def test_parse_plane_forms(text, expected):
    dd, dip = o.parse_plane(text)
    assert dip == pytest.approx(expected[1])
    assert azdiff(dd, expected[0]) < 1e-9


@pytest.mark.parametrize(
    "strike, dip",
    [("N30E", "45SE"), ("S30W", "45NW"), ("N30W", "60SW"), ("S45E", "20NE"), ("S10W", "30E"), ("N80W", "5N")],
)
def test_parse_plane_vs_mplstereonet(strike, dip):
    # mplstereonet.parse_strike_dip returns an RHR strike; its dip direction is strike + 90.
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DeprecationWarning)  # mplstereonet's 2-D np.cross (numpy 2)
        ref_strike, ref_dip = mplstereonet.parse_strike_dip(strike, dip)
    dd, d = o.parse_plane(f"{strike} {dip}")
    assert d == pytest.approx(ref_dip)
    assert azdiff(dd, ref_strike + 90.0) < 1e-9


def test_parse_plane_right_hand_rule():
    assert o.parse_plane("030/45", right_hand_rule=True) == (120.0, 45.0)
    assert o.parse_plane("350 45", right_hand_rule=True) == (80.0, 45.0)
    # A quadrant still wins over the declaration when given.
    assert o.parse_plane("030/45 NW", right_hand_rule=True) == (300.0, 45.0)


@pytest.mark.parametrize(
    "text, error, match",
    [
        ("030/97SE", AngleError, r"dip must be in \[0, 90\] degrees, got 97"),
        ("030/45", OrientationParseError, "has no dip quadrant"),
        ("N30E 45", OrientationParseError, "declare right-hand-rule input"),
        ("000/45 N", OrientationParseError, "lies along strike"),
        ("N45E 30NE", OrientationParseError, "lies along strike"),
        ("090/30 W", OrientationParseError, "lies along strike"),
        ("banana", OrientationParseError, "cannot read a plane from 'banana'"),
        ("030/45/SE/12", OrientationParseError, "cannot read a plane"),
        ("", OrientationParseError, "cannot read a plane"),
        ("N95E 45SE", OrientationParseError, r"quadrant bearing angle must be in \[0, 90\]"),
        ("400/45 SE", AngleError, r"strike must be in \[0, 360\]"),
        ("030/45 NS", OrientationParseError, "dip quadrant must be one of"),
    ],
)
def test_parse_plane_errors(text, error, match):
    with pytest.raises(error, match=match):
        o.parse_plane(text)


def test_parse_plane_non_string():
    with pytest.raises(OrientationParseError, match="cannot read a plane"):
        o.parse_plane(None)


def test_parse_planes_names_the_row():
    dd, dip = o.parse_planes(["N30E 45SE", "350/10 E"])
    np.testing.assert_allclose(dd, [120.0, 80.0])
    np.testing.assert_allclose(dip, [45.0, 10.0])
    with pytest.raises(OrientationParseError, match="row 1: cannot read a plane"):
        o.parse_planes(["N30E 45SE", "oops"])


def test_strike_dip_to_plane_errors():
    with pytest.raises(OrientationParseError, match="has no dip quadrant"):
        o.strike_dip_to_plane(30.0, 45.0)
    assert o.strike_dip_to_plane(30.0, 45.0, right_hand_rule=True) == (120.0, 45.0)
    with pytest.raises(AngleError, match="dip must be in"):
        o.strike_dip_to_plane(30.0, 97.0, "SE")


@given(AZ, st.floats(1.0, 89.0), st.floats(-80.0, 80.0))
def test_quadrant_picks_the_side_of_strike(dd, dip, off):
    # A quadrant within 80° of the true dip direction always selects it, whichever strike end is given.
    quads = {"N": 0.0, "NE": 45.0, "E": 90.0, "SE": 135.0, "S": 180.0, "SW": 225.0, "W": 270.0, "NW": 315.0}
    target = dd + off
    q = min(quads, key=lambda k: azdiff(quads[k], target))
    if azdiff(quads[q], dd) >= 89.0:
        return  # the nearest named quadrant is (almost) along strike: not a fair input
    for strike in (dd - 90.0, dd + 90.0):
        got, got_dip = o.strike_dip_to_plane(o.normalize_azimuth(strike), dip, q)
        assert azdiff(got, dd) < 1e-9 and got_dip == dip


# --------------------------------------------------------------------------- north references
@given(AZ, st.floats(-10.0, 10.0))
def test_grid_true_round_trip(az, gamma):
    t = o.grid_to_true_azimuth(az, gamma)
    assert 0.0 <= t < 360.0
    assert azdiff(t, az + gamma) < 1e-9  # true = grid + convergence
    assert azdiff(o.true_to_grid_azimuth(t, gamma), az) < 1e-9


def test_magnetic_to_true_sign():
    # Common practice (compass mnemonic "declination east, magnetic least"): with a declination of
    # 10° E a compass bearing of 50° is a true bearing of 60°; with 10° W it is 40°.
    assert o.magnetic_to_true_azimuth(50.0, 10.0) == pytest.approx(60.0)
    assert o.magnetic_to_true_azimuth(50.0, -10.0) == pytest.approx(40.0)
    assert o.magnetic_to_true_azimuth(355.0, 10.0) == pytest.approx(5.0)


@pytest.mark.parametrize(
    "epsg, lon, lat, sign",
    [
        (32633, 17.0, 45.0, +1),  # UTM 33N, east of the central meridian (15° E)
        (32633, 13.0, 45.0, -1),  # west of it
        (32733, 17.0, -30.0, -1),  # UTM 33S, east of the central meridian, southern hemisphere
    ],
)
def test_meridian_convergence_sign_vs_geodesic(epsg, lon, lat, sign):
    """Pin pyproj's convergence sign (through slipsense.io.crs) against pyproj.Geod.

    Grid north at a point is the direction to a point 1 km further up the grid (same x, y + 1000);
    the geodesic forward azimuth of that step is the true azimuth of grid north.  Since
    true = grid + convergence and grid north has grid azimuth 0, that azimuth is the convergence.
    East of the central meridian in the northern hemisphere grid north lies east of true north, so
    the convergence is positive (Snyder 1987, Map Projections — A Working Manual, USGS PP 1395).
    """
    from pyproj import CRS, Geod, Transformer

    from slipsense.io.crs import meridian_convergence

    crs = CRS.from_epsg(epsg)
    to_map = Transformer.from_crs(crs.geodetic_crs, crs, always_xy=True)
    to_geo = Transformer.from_crs(crs, crs.geodetic_crs, always_xy=True)
    x, y = to_map.transform(lon, lat)
    lon1, lat1 = to_geo.transform(x, y)
    lon2, lat2 = to_geo.transform(x, y + 1000.0)
    az12 = Geod(ellps="WGS84").inv(lon1, lat1, lon2, lat2)[0]
    gamma = float(meridian_convergence(crs, x, y))
    assert np.sign(gamma) == sign
    assert gamma == pytest.approx(az12, abs=1e-3)
    # So a grid azimuth converts to the geodesic's true azimuth with grid_to_true_azimuth.
    assert azdiff(o.grid_to_true_azimuth(0.0, gamma), az12) < 1e-3


# --------------------------------------------------------------------------- circular_interval
@given(st.floats(100.0, 200.0), st.lists(st.floats(-60.0, 60.0), min_size=5, max_size=50))
def test_circular_interval_matches_percentile_away_from_north(centre, devs):
    s = centre + np.asarray(devs)
    lo, hi = o.circular_interval(s, centre)
    ref_lo, ref_hi = np.percentile(s, [2.5, 97.5])
    assert lo == pytest.approx(ref_lo, abs=1e-9) and hi == pytest.approx(ref_hi, abs=1e-9)


@given(
    st.floats(100.0, 200.0),
    st.lists(st.floats(-60.0, 60.0), min_size=5, max_size=50),
    st.floats(-720.0, 720.0),
)
def test_circular_interval_rotates_with_the_samples(centre, devs, shift):
    s = centre + np.asarray(devs)
    lo, hi = o.circular_interval(s, centre)
    lo2, hi2 = o.circular_interval(s + shift, centre + shift)
    assert azdiff(lo2, lo + shift) < 1e-6 and azdiff(hi2, hi + shift) < 1e-6


def test_circular_interval_straddles_north_and_batches():
    s = np.array([350.0, 355.0, 0.0, 5.0, 10.0])
    lo, hi = o.circular_interval(s, 0.0, q=(0.0, 100.0))
    assert (lo, hi) == pytest.approx((350.0, 10.0))  # lo > hi: wraps through north
    batch = np.stack([s, s + 90.0])  # (2, 5): samples along the last axis
    lo, hi = o.circular_interval(batch, np.array([0.0, 90.0]), q=(0.0, 100.0))
    np.testing.assert_allclose(lo, [350.0, 80.0])
    np.testing.assert_allclose(hi, [10.0, 100.0])
    lo, hi = o.circular_interval(batch.T, np.array([0.0, 90.0]), q=(0.0, 100.0), axis=0)
    np.testing.assert_allclose(lo, [350.0, 80.0])

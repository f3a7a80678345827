#!/usr/bin/env python3
"""Generate the invented "Kestravane Uplands" demonstration data set for slipsense.

The script is the *independent ground truth* against which the slipsense engine is tested, so it
deliberately does not import slipsense. Everything here is invented: the landscape, the faults, the
rocks and all names. Only the projected frame (EPSG:32633, WGS 84 / UTM zone 33N) is real, and it is
used purely as a metric frame; the terrain does not resemble the real ground at those coordinates.

Outputs (written to --out-dir, default: the folder holding this script):

* ``dem.tif``           Float32 GeoTIFF, 1200 x 1000 cells of 10 m, tiled, deflate, nodata -9999.
* ``demo.gpkg``         vector layers: fault_traces, marker_contacts, slip_stations, bedding,
                        section_lines, borehole_collars, contact_points (all EPSG:32633).
* ``ground_truth.json`` the exact values used to build all of the above.

Conventions follow the project's CONVENTIONS.md: x east, y north, z up, metres,
degrees, azimuths clockwise from grid north; planes as dip direction / dip with right-hand-rule
strike; rake after Aki & Richards (1980); slip = hanging wall relative to footwall; stress
compression positive.

Run:  python demo_gpkg/generate_demo.py [--out-dir DIR] [--quicklook PNG]

The output is deterministic: a fixed master seed drives one independent random stream per purpose,
GeoPackage timestamps are pinned (GDAL config option OGR_CURRENT_DATE) and all written numbers are
rounded, so a rerun in the same environment reproduces the same values (and, in practice, bytes).
"""
from __future__ import annotations

import argparse
import hashlib
import json
import math
import sys
import zlib
from pathlib import Path

import numpy as np

import contourpy
import geopandas as gpd
import pyogrio
import rasterio
import shapely
from rasterio.transform import from_origin
from shapely.geometry import LineString, Point

# --------------------------------------------------------------------------------------------
# Fixed parameters
# --------------------------------------------------------------------------------------------
GENERATOR_VERSION = "1.0"
SEED = 20240611                      # master seed; every random stream derives from it
EPSG = 32633
CRS = f"EPSG:{EPSG}"
CELL = 10.0                          # DEM cell size [m]
NX, NY = 1200, 1000                  # DEM columns (east) and rows (north)
X_WEST = 500000.0                    # west edge of the DEM [m, easting]
Y_NORTH = 5100000.0                  # north edge of the DEM [m, northing]
Y_SOUTH = Y_NORTH - NY * CELL        # south edge (5 090 000 m)
NODATA = -9999.0
FIXED_TIMESTAMP = "2024-01-01T00:00:00.000Z"   # pinned GeoPackage timestamps

TRACE_SPACING_M = 20.0               # vertex spacing of digitised fault traces
TRACE_NOISE_M = 4.0                  # digitising noise, N(0, sigma) in x and in y, per vertex
CONTACT_SPACING_M = 20.0             # vertex spacing of marker contact lines
CONTACT_NOISE_M = 3.0                # noise on contact vertices, N(0, sigma) in x and in y
CONTACT_GAP_M = 15.0                 # contacts are cut this far (map distance) from fault traces
MIN_PIECE_M = 100.0                  # contact pieces shorter than this are dropped
DENSIFY_M = 2.0                      # internal densification step when cutting contacts
PLANE_SCATTER_DEG = 4.0              # main-fault stations: normal tilted by N(0, 4 deg) per axis
SLIP_SCATTER_DEG = 5.0               # all stations: slip rotated in-plane by N(0, 5 deg)
MINOR_SET_SCATTER_DEG = 8.0          # minor faults: scatter about the conjugate set, per axis
BEDDING_SCATTER_DEG = 3.0            # bedding: normal tilted by N(0, 3 deg) per axis
TAPER_FLAT_FRACTION = 0.70           # slip is full over the central 70 % of a fault's length
N_MAIN_STATIONS = 8                  # slip stations per main fault
N_MINOR_PER_PHASE = 40               # minor-fault stations per stress phase
N_BEDDING = 40
MIN_REDUCED_SHEAR = 0.25             # minor faults need |tau| >= 0.25 (sigma1 - sigma3)
# Minor-fault mix per phase: cumulative probabilities of (set containing sigma2, set containing
# sigma3); the rest are random planes. Sets are conjugate pairs at 30 degrees to sigma1.
MINOR_SETS = {"compression": (0.40, 0.75), "extension": (0.75, 0.75)}

SCENARIO_NAME = "Kestravane Uplands"

# Stress phases. Axes are trend/plunge in degrees (grid north); sigma3 is given as a hint that is
# orthogonalised against sigma1. Magnitudes are illustrative values at the reference depth; the
# fault-slip data only constrain the axes and phi.
PHASES = {
    "compression": dict(
        order=1, age="earlier",
        description="E-W shortening (sigma1 near-horizontal, sigma3 near-vertical); drove the "
                    "Kammerdune Thrust (F3), the Velloch Fault (F4, strike-slip) and the Sernadi "
                    "Fault (F5, oblique dextral-reverse).",
        sigma1=(95.0, 2.0), sigma3_hint=(0.0, 88.0), phi=0.35,
        sigma1_mpa=150.0, sigma3_mpa=75.0, reference_depth_m=3000.0),
    "extension": dict(
        order=2, age="later",
        description="E-W extension (sigma1 near-vertical, sigma3 near-horizontal E-W); formed the "
                    "Ulvessa Graben between the Tavrin (F1) and Ostrelle (F2) faults.",
        sigma1=(10.0, 84.0), sigma3_hint=(92.0, 3.0), phi=0.45,
        sigma1_mpa=75.0, sigma3_mpa=40.0, reference_depth_m=3000.0),
}

# Main faults. centre = (east, north) offsets in metres from the SW corner of the DEM; the plane
# passes through the ground surface at that point. length = along-strike extent.
FAULTS = [
    dict(fault_id="F1", name="Tavrin Fault", kind="normal", phase="extension",
         centre=(3300.0, 5000.0), dip_dir=98.0, dip=60.0, length=6400.0, net_slip=160.0,
         note="western graben-bounding normal fault, dips east"),
    dict(fault_id="F2", name="Ostrelle Fault", kind="normal", phase="extension",
         centre=(5600.0, 5000.0), dip_dir=282.0, dip=58.0, length=6400.0, net_slip=130.0,
         note="eastern graben-bounding normal fault, dips west"),
    dict(fault_id="F3", name="Kammerdune Thrust", kind="thrust", phase="compression",
         centre=(9400.0, 5600.0), dip_dir=95.0, dip=27.0, length=5400.0, net_slip=380.0,
         note="low-angle thrust, dips east, hanging wall carried west"),
    dict(fault_id="F4", name="Velloch Fault", kind="strike-slip", phase="compression",
         centre=(7600.0, 1500.0), dip_dir=155.0, dip=87.0, length=4200.0, net_slip=300.0,
         note="near-vertical strike-slip fault"),
    dict(fault_id="F5", name="Sernadi Fault", kind="oblique-slip", phase="compression",
         centre=(1500.0, 4900.0), dip_dir=310.0, dip=70.0, length=4000.0, net_slip=140.0,
         note="steep oblique-slip fault, dextral-reverse"),
]

# Marker surfaces before faulting. point = (east offset, north offset, elevation).
MARKERS = [
    dict(marker_id="bed_A", kind="bed", name="top of the Isvarre Limestone",
         dip_dir=352.0, dip=11.0, point=(6000.0, 5000.0, 1150.0)),
    dict(marker_id="dyke_1", kind="dyke", name="western margin of the Toralk dyke",
         dip_dir=188.0, dip=80.0, point=(6000.0, 5150.0, 1200.0)),
]

# Borehole collars: placed `along` metres along strike and `across` metres horizontally in the
# dip direction from a fault's centre point, i.e. on its hanging wall.
BOREHOLES = [
    dict(hole_id="BH-1", fault_id="F1", along=300.0, across=450.0, trend=0.0, plunge=90.0),
    dict(hole_id="BH-2", fault_id="F2", along=-600.0, across=500.0, trend=0.0, plunge=90.0),
    dict(hole_id="BH-3", fault_id="F3", along=400.0, across=1200.0, trend=275.0, plunge=65.0),
    dict(hole_id="BH-4", fault_id="F5", along=-200.0, across=350.0, trend=0.0, plunge=90.0),
    dict(hole_id="BH-5", fault_id="F4", along=300.0, across=200.0, trend=335.0, plunge=60.0),
]

# Section lines, vertices as offsets from the SW corner.
SECTIONS = [
    dict(section_id="A-A'", vertices=[(300.0, 6300.0), (11700.0, 4700.0)],
         note="straight, roughly perpendicular to the graben faults, crosses F5, F1, F2, F3"),
    dict(section_id="B-B'", vertices=[(8300.0, 200.0), (7000.0, 2900.0), (11700.0, 4300.0)],
         note="bent: first leg across F4, second leg obliquely across the south of F3"),
    dict(section_id="C-C'", vertices=[(150.0, 3900.0), (6900.0, 7800.0)],
         note="straight, oblique: crosses F5, then F1 and F2 at about 50 degrees to strike"),
]

PRESENT_DAY = dict(
    regime="strike-slip", shmax_azimuth=35.0,
    sv_gradient_mpa_per_km=25.0, shmax_gradient_mpa_per_km=30.0,
    shmin_gradient_mpa_per_km=16.0, pore_pressure_gradient_mpa_per_km=10.0,
    friction_coefficient=0.6, reference_depth_m=2000.0)


# --------------------------------------------------------------------------------------------
# Random streams
# --------------------------------------------------------------------------------------------
def stream(name: str) -> np.random.Generator:
    """Independent, reproducible random generator for one purpose (seeded by SEED and name)."""
    return np.random.default_rng(np.random.SeedSequence([SEED, zlib.crc32(name.encode())]))


# --------------------------------------------------------------------------------------------
# Directions, planes and slip (CONVENTIONS.md)
# --------------------------------------------------------------------------------------------
def unit(v: np.ndarray) -> np.ndarray:
    """Vector scaled to unit length."""
    v = np.asarray(v, dtype=float)
    return v / np.linalg.norm(v)


def horizontal(az_deg: float) -> np.ndarray:
    """Unit horizontal vector of azimuth az: (sin a, cos a, 0)."""
    a = math.radians(az_deg)
    return np.array([math.sin(a), math.cos(a), 0.0])


def line_vector(trend: float, plunge: float) -> np.ndarray:
    """Unit vector of a line, downward positive plunge: (sin t cos p, cos t cos p, -sin p)."""
    t, p = math.radians(trend), math.radians(plunge)
    return np.array([math.sin(t) * math.cos(p), math.cos(t) * math.cos(p), -math.sin(p)])


def trend_plunge(v: np.ndarray) -> tuple[float, float]:
    """Trend/plunge of the lower-hemisphere end of the axis of v (plunge 0-90)."""
    v = unit(v)
    if v[2] > 0:
        v = -v
    plunge = math.degrees(math.asin(min(1.0, -v[2])))
    trend = math.degrees(math.atan2(v[0], v[1])) % 360.0
    if plunge > 89.9999:
        trend = 0.0
    return trend, plunge


def plane_normal(dip_dir: float, dip: float) -> np.ndarray:
    """Upward unit normal n = (sin d sin delta, cos d sin delta, cos delta)."""
    d, s = math.radians(dip_dir), math.radians(dip)
    return np.array([math.sin(d) * math.sin(s), math.cos(d) * math.sin(s), math.cos(s)])


def plane_from_normal(n: np.ndarray) -> tuple[float, float]:
    """Dip direction and dip of the plane with (either) normal n."""
    n = unit(n)
    if n[2] < 0:
        n = -n
    dip = math.degrees(math.acos(min(1.0, n[2])))
    dip_dir = math.degrees(math.atan2(n[0], n[1])) % 360.0 if dip > 1e-9 else 0.0
    return dip_dir, dip


def strike_vector(dip_dir: float) -> np.ndarray:
    """Right-hand-rule strike direction: azimuth dip_dir - 90."""
    return horizontal(dip_dir - 90.0)


def dip_vector(dip_dir: float, dip: float) -> np.ndarray:
    """Unit down-dip vector."""
    return line_vector(dip_dir, dip)


def rake_of(u: np.ndarray, dip_dir: float, dip: float) -> float:
    """Aki & Richards rake (-180, 180] of an in-plane slip vector u."""
    r = math.degrees(math.atan2(float(u @ -dip_vector(dip_dir, dip)),
                                float(u @ strike_vector(dip_dir))))
    return 180.0 if r <= -180.0 else r


def slip_vector(dip_dir: float, dip: float, rake: float) -> np.ndarray:
    """Unit slip vector u = cos(rake) s + sin(rake) (-dip vector)."""
    lam = math.radians(rake)
    return math.cos(lam) * strike_vector(dip_dir) - math.sin(lam) * dip_vector(dip_dir, dip)


def slip_components(dip_dir: float, dip: float, rake: float, net: float) -> dict:
    """Slip components as defined in CONVENTIONS.md (metres)."""
    lam, dlt = math.radians(rake), math.radians(dip)
    u = slip_vector(dip_dir, dip, rake)
    dip_slip = net * math.sin(lam)
    return dict(
        net_slip_m=net,
        strike_slip_m=net * math.cos(lam),           # + along strike = sinistral
        dip_slip_m=dip_slip,                         # + up-dip = reverse
        throw_m=net * float(u[2]),                   # vertical, + = hanging wall up
        heave_m=abs(dip_slip) * math.cos(dlt),       # horizontal, perpendicular to strike (>= 0)
        heave_toward_dip_dir_m=-dip_slip * math.cos(dlt),   # signed: + = extension across fault
        slip_e=net * float(u[0]), slip_n=net * float(u[1]), slip_u=net * float(u[2]))


# Classification thresholds used for the words in this data set (common practice: a component
# is named when the slip vector lies more than 22.5 degrees away from the pure other end-member).
PURE_SENSE_TOLERANCE_DEG = 22.5


def sense_words(rake: float) -> tuple[str, str]:
    """(full sense, dominant sense) of a rake, e.g. ("reverse-dextral", "reverse")."""
    ar = abs(rake)
    dip_word = "reverse" if rake > 0 else "normal"
    ss_word = "sinistral" if ar < 90 else "dextral"
    dominant = dip_word if 45.0 <= ar <= 135.0 else ss_word
    if abs(ar - 90.0) <= PURE_SENSE_TOLERANCE_DEG:
        full = dip_word
    elif ar <= PURE_SENSE_TOLERANCE_DEG or ar >= 180.0 - PURE_SENSE_TOLERANCE_DEG:
        full = ss_word
    else:
        full = f"{dip_word}-{ss_word}" if dominant == dip_word else f"{ss_word}-{dip_word}"
    return full, dominant


def perturb_direction(v: np.ndarray, sigma_deg: float, rng: np.random.Generator) -> np.ndarray:
    """Tilt a unit vector by independent N(0, sigma) angles about two perpendicular axes."""
    v = unit(v)
    a = unit(np.cross(v, [0.0, 0.0, 1.0]) if abs(v[2]) < 0.9 else np.cross(v, [1.0, 0.0, 0.0]))
    b = np.cross(v, a)
    ta, tb = np.radians(rng.normal(0.0, sigma_deg, 2))
    return unit(v + math.tan(ta) * a + math.tan(tb) * b)


def rotate_in_plane(u: np.ndarray, n: np.ndarray, angle_deg: float) -> np.ndarray:
    """Rotate u (perpendicular to unit n) about n by angle (right-handed)."""
    a = math.radians(angle_deg)
    return unit(u * math.cos(a) + np.cross(n, u) * math.sin(a))


def angle_between(a: np.ndarray, b: np.ndarray) -> float:
    """Angle in degrees between two vectors."""
    return math.degrees(math.acos(float(np.clip(unit(a) @ unit(b), -1.0, 1.0))))


# --------------------------------------------------------------------------------------------
# Stress
# --------------------------------------------------------------------------------------------
def build_phase(name: str, cfg: dict) -> dict:
    """Principal axes (orthonormal), magnitudes and full tensors of a stress phase."""
    e1 = line_vector(*cfg["sigma1"])
    h = line_vector(*cfg["sigma3_hint"])
    e3 = unit(h - (h @ e1) * e1)
    e2 = unit(np.cross(e3, e1))
    s1, s3, phi = cfg["sigma1_mpa"], cfg["sigma3_mpa"], cfg["phi"]
    s2 = s3 + phi * (s1 - s3)
    axes = [e1, e2, e3]
    tensor = sum(s * np.outer(e, e) for s, e in zip((s1, s2, s3), axes))
    reduced = sum(s * np.outer(e, e) for s, e in zip((1.0, phi, 0.0), axes))
    return dict(name=name, cfg=cfg, axes=axes, values=(s1, s2, s3), tensor=tensor, reduced=reduced)


def wallace_bott(sigma: np.ndarray, dip_dir: float, dip: float) -> tuple[np.ndarray, float, float]:
    """Hanging-wall slip direction predicted by the Wallace (1951) - Bott (1959) hypothesis.

    Sign (compression positive): take n as the unit normal pointing from the hanging wall into
    the footwall (the downward normal, i.e. the pole). t = sigma . n is then the traction that the
    hanging wall exerts on the footwall across the plane, and its shear part
    tau = t - (n . t) n is the direction in which the hanging wall drags the footwall, i.e. the
    direction the hanging wall slips relative to the footwall. (The footwall exerts -tau on the
    hanging wall, the frictional resistance.) Checked in self_checks(): sigma1 vertical on a 60
    degree plane gives normal slip; sigma1 horizontal perpendicular to strike on a 30 degree plane
    gives reverse slip.

    Returns (unit slip vector, |tau|, n.t) in the units of sigma.
    """
    n = -plane_normal(dip_dir, dip)
    t = sigma @ n
    sn = float(n @ t)
    tau = t - sn * n
    mag = float(np.linalg.norm(tau))
    return tau / mag, mag, sn


def self_checks() -> None:
    """Assertions on the sign conventions (raise AssertionError on failure)."""
    # sigma1 vertical, sigma3 E-W: a 60 degree plane dipping east must slip normally.
    s = build_phase("t", dict(sigma1=(0.0, 90.0), sigma3_hint=(90.0, 0.0), phi=0.5,
                              sigma1_mpa=1.0, sigma3_mpa=0.0))["reduced"]
    for dd in (90.0, 270.0, 37.0):
        u, _, _ = wallace_bott(s, dd, 60.0)
        assert rake_of(u, dd, 60.0) < -45.0 and u[2] < 0, "hanging wall must move down"
        if dd in (90.0, 270.0):
            assert abs(rake_of(u, dd, 60.0) + 90.0) < 1e-6
    # sigma1 horizontal E-W, perpendicular to a N-S strike: 30 degree plane must be reverse.
    s = build_phase("t", dict(sigma1=(90.0, 0.0), sigma3_hint=(0.0, 90.0), phi=0.5,
                              sigma1_mpa=1.0, sigma3_mpa=0.0))["reduced"]
    for dd in (90.0, 270.0):
        u, _, _ = wallace_bott(s, dd, 30.0)
        assert abs(rake_of(u, dd, 30.0) - 90.0) < 1e-6 and u[2] > 0
    # rake conventions: +90 reverse (up-dip), 0 sinistral, 180 dextral.
    assert slip_vector(90.0, 45.0, 90.0)[2] > 0
    assert np.allclose(slip_vector(90.0, 45.0, 0.0), [0.0, 1.0, 0.0])    # strike N, HW east moves N
    assert sense_words(0.0)[0] == "sinistral" and sense_words(180.0)[0] == "dextral"
    assert sense_words(-90.0)[0] == "normal" and sense_words(132.0)[0] == "reverse-dextral"
    assert abs(rake_of(slip_vector(123.0, 56.0, -33.0), 123.0, 56.0) + 33.0) < 1e-9
    # lower-hemisphere trend/plunge
    assert np.allclose(trend_plunge(np.array([0.0, 1.0, 1.0])), (180.0, 45.0))


# --------------------------------------------------------------------------------------------
# DEM
# --------------------------------------------------------------------------------------------
XS = X_WEST + CELL * (0.5 + np.arange(NX))          # pixel-centre eastings (west -> east)
YS = Y_SOUTH + CELL * (0.5 + np.arange(NY))         # pixel-centre northings (south -> north)


def fractal_field(rng: np.random.Generator, beta: float, lmin: float, lmax: float) -> np.ndarray:
    """Band-limited fractal noise on the DEM grid (power spectrum ~ k^-beta), mean 0, std 1.

    lmin/lmax [m] are soft short/long wavelength limits. The field is synthesised on a 30 %
    larger periodic grid and cropped so that it does not wrap around the map.
    """
    py, px = int(NY * 1.3), int(NX * 1.3)
    kx = np.fft.rfftfreq(px, d=CELL)
    ky = np.fft.fftfreq(py, d=CELL)
    k = np.hypot(ky[:, None], kx[None, :])
    k[0, 0] = 1e-12
    amp = k ** (-beta / 2.0) * np.exp(-(k * lmin) ** 2) * (1.0 - np.exp(-(k * lmax) ** 2))
    f = np.fft.irfft2(np.fft.rfft2(rng.standard_normal((py, px))) * amp, s=(py, px))[:NY, :NX]
    f = f - f.mean()
    return f / f.std()


def fractal_profile(rng: np.random.Generator, n: int, beta: float, lmin: float, lmax: float):
    """1-D band-limited fractal noise of n samples at CELL spacing, mean 0, std 1."""
    k = np.fft.rfftfreq(2 * n, d=CELL)
    k[0] = 1e-12
    amp = k ** (-beta / 2.0) * np.exp(-(k * lmin) ** 2) * (1.0 - np.exp(-(k * lmax) ** 2))
    f = np.fft.irfft(np.fft.rfft(rng.standard_normal(2 * n)) * amp, n=2 * n)[:n]
    f = f - f.mean()
    return f / f.std()


# Main E-W valleys (north offsets of their mean axes; the outer two lie off the map and only
# shape the ridges at the map edges).
VALLEY_AXES = (-1700.0, 900.0, 3500.0, 6100.0, 8700.0, 11300.0)


def make_terrain(rng: np.random.Generator) -> tuple[np.ndarray, dict]:
    """Procedural ridge-and-valley relief [m] on the grid (rows south -> north).

    Components: (1) sinuous E-W main valleys whose floors rise eastward (drainage to the west);
    the height above the floor grows with the normalised distance t to the nearest valley as
    R t (2 - t) (V-shaped near the river, rounded on the divides), with a local relief R of
    220-600 m that varies smoothly across the map; (2) tributary valleys joining the main valleys
    at acute angles pointing downstream, V-shaped, dying out towards the divides; (3) medium-scale
    fractal relief on the slopes and ridges; (4) small-scale fractal roughness.
    """
    xl = XS - X_WEST
    yl = YS - Y_SOUTH
    XX, YY = np.meshgrid(xl, yl)
    axes = []
    for k, y0 in enumerate(VALLEY_AXES):
        wig = 260.0 * np.sin(2 * np.pi * xl / (4300.0 + 500.0 * k) + 1.3 * k)
        axes.append(y0 + wig + 180.0 * fractal_profile(rng, NX, 3.0, 300.0, 6000.0))
    axes = np.array(axes)                                    # (n_valleys, NX)
    dist = np.abs(YY[None, :, :] - axes[:, None, :])         # N-S distance to each valley axis
    order = np.argsort(dist, axis=0)
    d1 = np.take_along_axis(dist, order[:1], 0)[0]
    d2 = np.take_along_axis(dist, order[1:2], 0)[0]
    t = np.clip(2.0 * d1 / (d1 + d2), 0.0, 1.0)
    shape = t * (2.0 - t)
    floor = 820.0 + 0.018 * XX
    relief = np.clip(400.0 + 110.0 * fractal_field(rng, 3.0, 1500.0, 10000.0), 220.0, 600.0)

    incision = np.zeros((NY, NX))
    half_spacing = 1300.0
    for k in range(len(VALLEY_AXES)):
        x = -400.0 + rng.uniform(0.0, 500.0)
        while x < 12400.0:
            side = 1.0 if rng.uniform() < 0.5 else -1.0
            length = rng.uniform(0.6, 0.95) * half_spacing
            theta = math.radians(rng.uniform(15.0, 40.0))
            width = rng.uniform(160.0, 300.0)
            wavelength = rng.uniform(400.0, 800.0)
            wig_amp = rng.uniform(20.0, 60.0)
            x_next = x + rng.uniform(550.0, 1100.0)
            i_m = int(np.clip(round(x / CELL), 0, NX - 1))
            ym = float(axes[k, i_m])
            y_lo, y_hi = sorted((ym - 50.0 * side, ym + length * side))
            x_lo, x_hi = x - width - 100.0, x + length * math.tan(theta) + width + 100.0
            rows = np.flatnonzero((yl >= y_lo) & (yl <= y_hi))
            cols = np.flatnonzero((xl >= x_lo) & (xl <= x_hi))
            if rows.size and cols.size:
                sub_x, sub_y = np.meshgrid(xl[cols], yl[rows])
                along = (sub_y - ym) * side                 # 0 at the mouth, `length` at the head
                xc = x + along * math.tan(theta) + wig_amp * np.sin(2 * np.pi * along / wavelength)
                d = np.abs(sub_x - xc) * math.cos(theta)
                s = along / length
                g = np.where((s > -0.05) & (s < 1.0), np.clip(1.0 - s, 0.0, 1.0) ** 0.6, 0.0)
                v = np.clip(1.0 - d / width, 0.0, 1.0) ** 1.4
                block = incision[np.ix_(rows, cols)]
                incision[np.ix_(rows, cols)] = np.maximum(block, 0.5 * v * g)
            x = x_next

    medium = fractal_field(rng, 3.0, 400.0, 3000.0)
    rough = fractal_field(rng, 3.2, 30.0, 1500.0)
    z = floor + relief * shape * (1.0 - incision) + 35.0 * medium * shape + 10.0 * rough
    info = dict(valley_axes_north_offsets_m=list(VALLEY_AXES[1:-1]),
                floor_elevation_m="820 + 0.018 * (x - x_west): rivers drain westward")
    return z, info


def add_lake(z: np.ndarray) -> tuple[np.ndarray, dict]:
    """Cut an elliptical nodata 'lake' into the lowest part of a NW valley floor."""
    xl = XS - X_WEST
    yl = YS - Y_SOUTH
    win_r = np.flatnonzero((yl > 8000.0) & (yl < 9600.0))
    win_c = np.flatnonzero((xl > 600.0) & (xl < 2200.0))
    sub = z[np.ix_(win_r, win_c)]
    j, i = np.unravel_index(np.argmin(sub), sub.shape)
    cx, cy = XS[win_c[i]], YS[win_r[j]]
    a, b = 260.0, 130.0                                      # semi-axes (E-W, N-S) [m]
    XX, YY = np.meshgrid(XS, YS)
    inside = ((XX - cx) / a) ** 2 + ((YY - cy) / b) ** 2 <= 1.0
    z = z.copy()
    z[inside] = np.nan
    return z, dict(kind="elliptical nodata patch (an invented lake, Lake Mirrow)",
                   centre_x=cx, centre_y=cy, semi_axis_east_m=a, semi_axis_north_m=b,
                   n_cells=int(inside.sum()), area_m2=float(inside.sum() * CELL * CELL),
                   bounds=[float(XX[inside].min() - CELL / 2), float(YY[inside].min() - CELL / 2),
                           float(XX[inside].max() + CELL / 2), float(YY[inside].max() + CELL / 2)])


class Dem:
    """DEM on the pixel-centre grid (rows south -> north), values exactly as stored in Float32."""

    def __init__(self, z: np.ndarray):
        self.z = z                              # float64 copy of the Float32 values, NaN = nodata
        self.XX, self.YY = np.meshgrid(XS, YS)

    def at(self, x, y) -> np.ndarray:
        """Bilinear interpolation between pixel centres (NaN if a corner is nodata)."""
        x = np.asarray(x, dtype=float)
        y = np.asarray(y, dtype=float)
        fx = (x - XS[0]) / CELL
        fy = (y - YS[0]) / CELL
        i0 = np.clip(np.floor(fx).astype(int), 0, NX - 2)
        j0 = np.clip(np.floor(fy).astype(int), 0, NY - 2)
        tx, ty = fx - i0, fy - j0
        z = self.z
        return ((1 - tx) * (1 - ty) * z[j0, i0] + tx * (1 - ty) * z[j0, i0 + 1]
                + (1 - tx) * ty * z[j0 + 1, i0] + tx * ty * z[j0 + 1, i0 + 1])


EDGE_MASK = np.zeros((NY, NX), dtype=bool)     # outer EDGE_CELLS rows/columns are not contoured
EDGE_CELLS = 2
EDGE_MASK[:EDGE_CELLS, :] = EDGE_MASK[-EDGE_CELLS:, :] = True
EDGE_MASK[:, :EDGE_CELLS] = EDGE_MASK[:, -EDGE_CELLS:] = True


def zero_contours(field: np.ndarray, mask: np.ndarray | None = None) -> list[np.ndarray]:
    """Zero contour lines of a grid field (pixel-centre grid), as (n, 2) vertex arrays.

    Vertices lie on cell edges, where the field is interpolated linearly between the two nodes;
    for fields linear in the DEM value this equals bilinear DEM interpolation, so the vertices
    lie exactly on the surface intersection as seen by a bilinear DEM sampler. Quads touching a
    masked node (nodata, the outer EDGE_CELLS cells of the grid, or the caller's mask) are
    skipped whole (corner_mask=False), so no vertex lies on a quad diagonal.
    """
    m = ~np.isfinite(field) | EDGE_MASK
    if mask is not None:
        m = m | mask
    z = np.ma.array(np.where(m, 0.0, field), mask=m)
    gen = contourpy.contour_generator(x=XS, y=YS, z=z, line_type="Separate", name="serial",
                                      corner_mask=False)
    return [np.asarray(v, dtype=float) for v in gen.lines(0.0) if len(v) >= 2]


def polyline_length(v: np.ndarray) -> float:
    """Length of a polyline [m]."""
    return float(np.hypot(*np.diff(v, axis=0).T).sum()) if len(v) > 1 else 0.0


def resample(v: np.ndarray, spacing: float) -> np.ndarray:
    """Resample a polyline to equally spaced vertices (about `spacing`), keeping both ends."""
    seg = np.hypot(*np.diff(v, axis=0).T)
    s = np.concatenate([[0.0], np.cumsum(seg)])
    n = max(1, int(round(s[-1] / spacing)))
    t = np.linspace(0.0, s[-1], n + 1)
    return np.column_stack([np.interp(t, s, v[:, 0]), np.interp(t, s, v[:, 1])])


def densify(v: np.ndarray, step: float) -> tuple[np.ndarray, np.ndarray]:
    """Insert points so that no segment exceeds `step`; returns points and an is-original flag."""
    pts, raw = [], []
    for a, b in zip(v[:-1], v[1:]):
        k = max(1, int(math.ceil(math.hypot(*(b - a)) / step)))
        f = np.arange(k)[:, None] / k
        pts.append(a + (b - a) * f)
        r = np.zeros(k, dtype=bool)
        r[0] = True
        raw.append(r)
    pts.append(v[-1:])
    raw.append(np.array([True]))
    return np.vstack(pts), np.concatenate(raw)


def is_closed(v: np.ndarray, tol: float = 1e-6) -> bool:
    """True if the first and last vertices coincide."""
    return len(v) > 3 and math.hypot(*(v[0] - v[-1])) <= tol


# --------------------------------------------------------------------------------------------
# Faults and the displacement field
# --------------------------------------------------------------------------------------------
class Fault:
    """A planar fault of finite along-strike extent with a uniform (tapered) slip vector."""

    def __init__(self, cfg: dict, dem: Dem, phases: dict):
        self.cfg = cfg
        self.fault_id = cfg["fault_id"]
        self.dip_dir, self.dip = cfg["dip_dir"], cfg["dip"]
        self.strike = (self.dip_dir - 90.0) % 360.0
        self.n = plane_normal(self.dip_dir, self.dip)          # upward normal (into hanging wall)
        self.s = strike_vector(self.dip_dir)
        cx, cy = X_WEST + cfg["centre"][0], Y_SOUTH + cfg["centre"][1]
        self.c = np.array([cx, cy, float(dem.at(cx, cy))])     # point on plane, on the surface
        self.length = cfg["length"]
        self.phase = cfg["phase"]
        u, tau, sn = wallace_bott(phases[self.phase]["reduced"], self.dip_dir, self.dip)
        self.u = u
        self.reduced_shear, self.reduced_normal = tau, sn
        self.rake = rake_of(u, self.dip_dir, self.dip)
        self.net = cfg["net_slip"]
        self.slip = self.net * u                               # hanging wall rel. footwall [m]

    def along(self, x, y) -> np.ndarray:
        """Horizontal along-strike coordinate [m] relative to the centre point."""
        return (np.asarray(x) - self.c[0]) * self.s[0] + (np.asarray(y) - self.c[1]) * self.s[1]

    def taper(self, x, y) -> np.ndarray:
        """1 over the central 70 % of the length, cosine taper to 0 at the tips, 0 beyond."""
        a = np.abs(self.along(x, y))
        half, flat = self.length / 2.0, TAPER_FLAT_FRACTION * self.length / 2.0
        w = np.clip((a - flat) / (half - flat), 0.0, 1.0)
        return np.where(a >= half, 0.0, 0.5 * (1.0 + np.cos(np.pi * w)))

    def signed_distance(self, x, y, z) -> np.ndarray:
        """Distance from the plane [m], positive on the hanging-wall side (above the plane)."""
        return ((np.asarray(x) - self.c[0]) * self.n[0] + (np.asarray(y) - self.c[1]) * self.n[1]
                + (np.asarray(z) - self.c[2]) * self.n[2])

    def in_extent(self, x, y) -> np.ndarray:
        """True strictly inside the along-strike extent."""
        return np.abs(self.along(x, y)) < self.length / 2.0


def membership(faults: list[Fault], x, y, z) -> np.ndarray:
    """Bit mask of the faults whose hanging wall (inside the extent) contains (x, y, z)."""
    m = np.zeros(np.shape(x), dtype=np.int64)
    for k, f in enumerate(faults):
        hw = (f.signed_distance(x, y, z) > 0.0) & f.in_extent(x, y)
        m |= hw.astype(np.int64) << k
    return m


def displacement(faults: list[Fault], mask, x, y) -> np.ndarray:
    """Displacement (..., 3) [m] of material now at (x, y) in the block with bit mask `mask`.

    Present-configuration definition: a point now in the hanging wall of fault k (inside its
    extent) has been moved by taper_k(x, y) * slip_k, so it came from q - sum_k(...). Slip
    vectors lie in their planes, so a translated point stays on its side of the fault.
    """
    mask = np.broadcast_to(np.asarray(mask), np.shape(x))
    out = np.zeros(np.shape(x) + (3,))
    for k, f in enumerate(faults):
        on = ((mask >> k) & 1).astype(float) * f.taper(x, y)
        out += on[..., None] * f.slip
    return out


def fault_trace(f: Fault, dem: Dem) -> tuple[np.ndarray, list[np.ndarray]]:
    """Noise-free surface trace (longest connected piece) and all pieces inside the extent."""
    sd = f.signed_distance(dem.XX, dem.YY, dem.z)
    pieces = zero_contours(sd, mask=~f.in_extent(dem.XX, dem.YY))
    pieces.sort(key=polyline_length, reverse=True)
    return pieces[0], pieces


# --------------------------------------------------------------------------------------------
# Marker contacts
# --------------------------------------------------------------------------------------------
def runs(keep: np.ndarray) -> list[tuple[int, int]]:
    """(start, stop) index pairs of consecutive True values."""
    k = np.concatenate([[False], keep, [False]]).astype(int)
    d = np.diff(k)
    return list(zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1)))


def marker_pieces(marker: dict, faults: list[Fault], dem: Dem, cut_zone) -> list[dict]:
    """Contact lines of one displaced marker surface with the DEM, cut at the fault traces.

    For every block (combination of hanging walls) found on the map, the marker surface displaced
    as that block is intersected with the DEM over the whole map (a continuous field), and only
    the parts lying in that block and farther than CONTACT_GAP_M from any fault trace are kept.
    Pieces split only where a taper reaches zero (no offset) are merged again afterwards.
    """
    n_m = plane_normal(marker["dip_dir"], marker["dip"])
    p_m = marker["p"]
    grid_mask = membership(faults, dem.XX, dem.YY, dem.z)
    blocks = sorted(int(b) for b in np.unique(grid_mask[np.isfinite(dem.z)]))
    pieces = []
    for b in blocks:
        d = displacement(faults, b, dem.XX, dem.YY)
        field = (n_m[0] * (dem.XX - d[..., 0] - p_m[0]) + n_m[1] * (dem.YY - d[..., 1] - p_m[1])
                 + n_m[2] * (dem.z - d[..., 2] - p_m[2]))
        for line in zero_contours(field):
            closed = is_closed(line)
            pts, raw = densify(line, DENSIFY_M)
            zz = dem.at(pts[:, 0], pts[:, 1])
            keep = (membership(faults, pts[:, 0], pts[:, 1], zz) == b)
            keep &= ~shapely.contains_xy(cut_zone, pts[:, 0], pts[:, 1])
            keep &= np.isfinite(zz)
            if closed and keep.all():
                pieces.append(dict(pts=pts, raw=raw, closed=True))
                continue
            if closed and not keep.all():                     # rotate to start at a cut
                r = int(np.flatnonzero(~keep)[0])
                pts = np.vstack([pts[r:-1], pts[:r + 1]])
                raw = np.concatenate([raw[r:-1], raw[:r + 1]])
                keep = np.concatenate([keep[r:-1], keep[:r + 1]])
            for i0, i1 in runs(keep):
                if i1 - i0 >= 2:
                    pieces.append(dict(pts=pts[i0:i1], raw=raw[i0:i1], closed=False))
    pieces = merge_pieces(pieces, cut_zone)
    return [p for p in pieces if polyline_length(p["pts"]) >= MIN_PIECE_M]


def merge_pieces(pieces: list[dict], cut_zone, tol: float = 2.5 * DENSIFY_M) -> list[dict]:
    """Join open pieces whose ends touch away from the fault traces (split at a zero taper)."""
    far = shapely.buffer(cut_zone, 5.0)
    shapely.prepare(far)

    def joinable(p):
        return not shapely.contains_xy(far, p[0], p[1])

    changed = True
    while changed:
        changed = False
        opens = [i for i, p in enumerate(pieces) if not p["closed"]]
        for ii, i in enumerate(opens):
            for j in opens[ii + 1:]:
                a, b = pieces[i], pieces[j]
                pa0, pa1, pb0, pb1 = a["pts"][0], a["pts"][-1], b["pts"][0], b["pts"][-1]
                if math.hypot(*(pa1 - pb0)) <= tol and joinable(pa1):
                    first, second = (a, False), (b, False)          # a + b
                elif math.hypot(*(pa1 - pb1)) <= tol and joinable(pa1):
                    first, second = (a, False), (b, True)           # a + reversed(b)
                elif math.hypot(*(pa0 - pb1)) <= tol and joinable(pa0):
                    first, second = (b, False), (a, False)          # b + a
                elif math.hypot(*(pa0 - pb0)) <= tol and joinable(pa0):
                    first, second = (a, True), (b, False)           # reversed(a) + b
                else:
                    continue
                parts = [(q["pts"][::-1], q["raw"][::-1]) if rev else (q["pts"], q["raw"])
                         for q, rev in (first, second)]
                pieces[i] = dict(pts=np.vstack([parts[0][0], parts[1][0]]),
                                 raw=np.concatenate([parts[0][1], parts[1][1]]), closed=False)
                del pieces[j]
                changed = True
                break
            if changed:
                break
    for p in pieces:
        gap = math.hypot(*(p["pts"][0] - p["pts"][-1]))
        if not p["closed"] and len(p["pts"]) > 3 and gap <= tol and joinable(p["pts"][0]):
            p["pts"] = np.vstack([p["pts"], p["pts"][:1]])
            p["raw"] = np.concatenate([p["raw"], [False]])
            p["closed"] = True
    return pieces


# --------------------------------------------------------------------------------------------
# Helpers for output
# --------------------------------------------------------------------------------------------
def rnd(x, nd=6):
    """Round floats (recursively through lists/tuples/dicts/arrays) for stable JSON."""
    if isinstance(x, dict):
        return {k: rnd(v, nd) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [rnd(v, nd) for v in x]
    if isinstance(x, np.ndarray):
        return rnd(x.tolist(), nd)
    if isinstance(x, (float, np.floating)):
        v = round(float(x), nd)
        return 0.0 if v == 0 else v
    if isinstance(x, np.integer):
        return int(x)
    if isinstance(x, np.bool_):
        return bool(x)
    return x


def vec3(v) -> dict:
    """Vector as an {e, n, u} dict."""
    return dict(e=float(v[0]), n=float(v[1]), u=float(v[2]))


def plane_point(n: np.ndarray, p: np.ndarray, x: float, y: float) -> float:
    """Elevation of the plane (upward normal n through p) at (x, y)."""
    return float(p[2] - (n[0] * (x - p[0]) + n[1] * (y - p[1])) / n[2])


def cutoff_info(fault: Fault, marker_n: np.ndarray) -> dict:
    """Cutoff line of a marker on a fault and the separations produced by the fault's slip."""
    l = unit(np.cross(fault.n, marker_n))
    if l[2] > 0:
        l = -l
    up = -dip_vector(fault.dip_dir, fault.dip)
    ls, lu = float(l @ fault.s), float(l @ up)
    us, uu = float(fault.slip @ fault.s), float(fault.slip @ up)
    tr, pl = trend_plunge(l)
    return dict(
        cutoff_trend=tr, cutoff_plunge=pl,
        cutoff_rake=rake_of(l, fault.dip_dir, fault.dip),
        strike_separation_m=(us - uu * ls / lu) if abs(lu) > 1e-9 else None,
        dip_separation_m=(uu - us * lu / ls) if abs(ls) > 1e-9 else None)


# --------------------------------------------------------------------------------------------
# Main build
# --------------------------------------------------------------------------------------------
def build(out_dir: Path, quicklook: Path | None = None) -> dict:
    """Generate every output file in out_dir and return the ground-truth dictionary."""
    self_checks()
    out_dir.mkdir(parents=True, exist_ok=True)
    phases = {k: build_phase(k, v) for k, v in PHASES.items()}

    # ---- DEM -------------------------------------------------------------------------------
    z, terrain_info = make_terrain(stream("terrain"))
    z, lake = add_lake(z)
    z32 = np.where(np.isnan(z), NODATA, np.round(z, 2)).astype(np.float32)
    zf = z32.astype(np.float64)
    zf[z32 == np.float32(NODATA)] = np.nan
    dem = Dem(zf)
    write_dem(out_dir / "dem.tif", z32)

    # ---- faults and traces -----------------------------------------------------------------
    faults = [Fault(cfg, dem, phases) for cfg in FAULTS]
    traces, all_pieces = {}, {}
    for f in faults:
        traces[f.fault_id], all_pieces[f.fault_id] = fault_trace(f, dem)
    true_lines = [LineString(p) for fid in all_pieces for p in all_pieces[fid]]
    cut_zone = shapely.union_all([shapely.buffer(ln, CONTACT_GAP_M) for ln in true_lines])
    shapely.prepare(cut_zone)
    main_lines = {fid: LineString(v) for fid, v in traces.items()}
    for i, a in enumerate(faults):
        for b in faults[i + 1:]:
            dmin = main_lines[a.fault_id].distance(main_lines[b.fault_id])
            assert dmin > 300.0, f"traces {a.fault_id} and {b.fault_id} too close ({dmin:.0f} m)"

    rng = stream("trace-noise")
    trace_rows = []
    for f in faults:
        v = resample(traces[f.fault_id], TRACE_SPACING_M)
        v = v + rng.normal(0.0, TRACE_NOISE_M, v.shape)
        trace_rows.append(dict(fault_id=f.fault_id, name=f.cfg["name"],
                               geometry=LineString(np.round(v, 2))))

    # ---- markers -----------------------------------------------------------------------------
    for m in MARKERS:
        m["p"] = np.array([X_WEST + m["point"][0], Y_SOUTH + m["point"][1], m["point"][2]])
        m["n"] = plane_normal(m["dip_dir"], m["dip"])
    rng = stream("contact-noise")
    contact_rows, piece_truth, bed_pieces = [], [], []
    crossings = {}
    for m in MARKERS:
        pieces = marker_pieces(m, faults, dem, cut_zone)
        pieces.sort(key=lambda p: (round(float(p["pts"][:, 0].min()), 1),
                                   round(float(p["pts"][:, 1].min()), 1)))
        for i, p in enumerate(pieces, 1):
            pid = f"{m['marker_id']}-{i:03d}"
            pts = p["pts"]
            zz = dem.at(pts[:, 0], pts[:, 1])
            mask = membership(faults, pts[:, 0], pts[:, 1], zz)
            disp = displacement(faults, mask, pts[:, 0], pts[:, 1])
            rigid = bool(np.ptp(disp, axis=0).max() < 1e-6)
            hw = sorted({f.fault_id for k, f in enumerate(faults)
                         if np.any(((mask >> k) & 1) & (f.taper(pts[:, 0], pts[:, 1]) > 0))})
            v = resample(pts, CONTACT_SPACING_M)
            v = v + rng.normal(0.0, CONTACT_NOISE_M, v.shape)
            if p["closed"]:
                v[-1] = v[0]
            contact_rows.append(dict(marker_id=m["marker_id"], kind=m["kind"], piece_id=pid,
                                     geometry=LineString(np.round(v, 2))))
            mid = len(pts) // 2
            piece_truth.append(dict(
                piece_id=pid, marker_id=m["marker_id"], closed=p["closed"],
                length_m=polyline_length(pts), hanging_wall_of=hw, rigid=rigid,
                translation_m=vec3(disp[mid]),
                translation_range_m=[float(np.ptp(disp[:, c])) for c in range(3)],
                plane_point_at_midpoint=vec3(m["p"] + disp[mid])))
            p.update(piece_id=pid, rigid=rigid, disp=disp[mid], zz=zz)
            if m["marker_id"] == "bed_A":
                bed_pieces.append(p)
            for end in (pts[0], pts[-1]):
                if p["closed"]:
                    continue
                pt = Point(end)
                dists = {fid: min(LineString(q).distance(pt) for q in all_pieces[fid])
                         for fid in all_pieces}
                fid = min(dists, key=dists.get)
                if dists[fid] < CONTACT_GAP_M + 5.0:
                    f = next(ff for ff in faults if ff.fault_id == fid)
                    side = ("hanging_wall" if f.signed_distance(end[0], end[1], dem.at(*end)) > 0
                            else "footwall")
                    crossings.setdefault((m["marker_id"], fid), []).append(dict(
                        piece_id=pid, side=side, x=float(end[0]), y=float(end[1]),
                        along_strike_m=float(f.along(*end)), taper=float(f.taper(*end))))
    marker_truth = marker_summary(faults, crossings)

    # ---- slip stations -----------------------------------------------------------------------
    station_rows, station_truth = make_stations(faults, phases, traces, dem, lake)

    # ---- bedding -----------------------------------------------------------------------------
    bedding_rows = make_bedding(bed_pieces, MARKERS[0])

    # ---- sections ----------------------------------------------------------------------------
    section_rows, section_truth = make_sections(faults, main_lines)

    # ---- boreholes ---------------------------------------------------------------------------
    collar_rows, hole_truth = make_boreholes(faults, dem)

    # ---- contact points ----------------------------------------------------------------------
    cp_rows, cp_truth = make_contact_points(bed_pieces, MARKERS[0], dem)

    # ---- write vectors -----------------------------------------------------------------------
    layers = {
        "fault_traces": (trace_rows, ["fault_id", "name"]),
        "marker_contacts": (contact_rows, ["marker_id", "kind", "piece_id"]),
        "slip_stations": (station_rows, ["station_id", "fault_id", "phase", "dip_dir", "dip",
                                         "trend", "plunge", "sense", "rake"]),
        "bedding": (bedding_rows, ["station_id", "dip_dir", "dip"]),
        "section_lines": (section_rows, ["section_id"]),
        "borehole_collars": (collar_rows, ["hole_id", "target_fault", "trend", "plunge", "total_depth_m"]),
        "contact_points": (cp_rows, ["group_id", "z_m"]),
    }
    write_gpkg(out_dir / "demo.gpkg", layers)

    # ---- truth -------------------------------------------------------------------------------
    truth = assemble_truth(dem, z32, terrain_info, lake, phases, faults, traces, all_pieces,
                           trace_rows, marker_truth, piece_truth, station_truth, section_truth,
                           hole_truth, cp_truth, layers)
    (out_dir / "ground_truth.json").write_text(json.dumps(rnd(truth), indent=2) + "\n")
    if quicklook is not None:
        render_quicklook(quicklook, dem, faults, trace_rows, contact_rows, station_rows,
                         section_rows, collar_rows, cp_rows)
    return truth


# --------------------------------------------------------------------------------------------
def marker_summary(faults: list[Fault], crossings: dict) -> list[dict]:
    """Ground truth for the marker surfaces: base plane, displacing faults, separations."""
    out = []
    for m in MARKERS:
        entry = dict(marker_id=m["marker_id"], kind=m["kind"], name=m["name"],
                     base_plane=dict(dip_dir=m["dip_dir"], dip=m["dip"],
                                     strike=(m["dip_dir"] - 90.0) % 360.0,
                                     point=vec3(m["p"]),
                                     note="orientation and position before faulting; every "
                                          "block keeps the orientation and is translated "
                                          "(see marker_pieces[].translation_m)"),
                     displaced_by=[])
        for f in faults:
            cr = crossings.get((m["marker_id"], f.fault_id), [])
            if not cr:
                continue
            cr = sorted(cr, key=lambda c: c["along_strike_m"])
            entry["displaced_by"].append(dict(
                fault_id=f.fault_id,
                offset_at_fault_centre_m=vec3(f.slip),
                offset_net_m=f.net,
                note="offset = displacement of the hanging-wall piece relative to the footwall "
                     "piece, equal to the fault's slip vector where taper = 1",
                cut_ends=cr,
                n_cut_ends_untapered=dict(
                    hanging_wall=sum(1 for c in cr if c["side"] == "hanging_wall"
                                     and c["taper"] > 0.999999),
                    footwall=sum(1 for c in cr if c["side"] == "footwall"
                                 and c["taper"] > 0.999999)),
                cut_ends_note="ends of marker_contacts pieces that stop within "
                              f"{CONTACT_GAP_M:g} m (+5 m) of this fault's trace; the two ends "
                              "of one geological crossing are apart by the map separation",
                **cutoff_info(f, m["n"])))
        out.append(entry)
    bed, dyke = MARKERS
    pl = unit(np.cross(bed["n"], dyke["n"]))
    tr, pp = trend_plunge(pl)
    out.append(dict(marker_id="bed_A x dyke_1", kind="piercing line (intersection of the two "
                    "marker surfaces)", trend=tr, plunge=pp))
    return out


def make_stations(faults, phases, traces, dem, lake) -> tuple[list[dict], list[dict]]:
    """Fault-slip stations: 8 per main fault plus N_MINOR_PER_PHASE minor faults per phase."""
    rows, truth = [], []
    rng = stream("stations-main")
    sid = 0

    def add(fault_id, phase, x, y, n_meas, u_meas, true_plane, plane_dev, slip_dev, wb_u):
        nonlocal sid
        sid += 1
        dd, dp = plane_from_normal(n_meas)
        rake = rake_of(u_meas, dd, dp)
        tr, pl = trend_plunge(u_meas)
        full, dom = sense_words(rake)
        rows.append(dict(station_id=f"S{sid:03d}", fault_id=fault_id, phase=phase,
                         dip_dir=round(dd, 2), dip=round(dp, 2), trend=round(tr, 2),
                         plunge=round(pl, 2), sense=dom, rake=round(rake, 2),
                         geometry=Point(round(x, 2), round(y, 2))))
        truth.append(dict(station_id=f"S{sid:03d}", fault_id=fault_id, phase=phase,
                          slip_unit=vec3(u_meas), sense_full=full, true_plane=true_plane,
                          plane_deviation_deg=plane_dev, slip_rotation_deg=slip_dev,
                          wallace_bott_on_measured_plane=vec3(wb_u)))

    for f in faults:
        line = LineString(traces[f.fault_id])
        sigma = phases[f.phase]["reduced"]
        for i in range(N_MAIN_STATIONS):
            frac = 0.12 + 0.76 * (i + rng.uniform(0.2, 0.8)) / N_MAIN_STATIONS
            p0 = np.array(line.interpolate(frac, normalized=True).coords[0])
            p1 = np.array(line.interpolate(min(1.0, frac + 0.002), normalized=True).coords[0])
            tang = unit(p1 - p0)
            off = rng.uniform(10.0, 60.0) * (1 if rng.uniform() < 0.5 else -1)
            x, y = p0 + off * np.array([tang[1], -tang[0]])
            n_meas = perturb_direction(f.n, PLANE_SCATTER_DEG, rng)
            dd, dp = plane_from_normal(n_meas)
            n_up = plane_normal(dd, dp)
            u_wb, _, _ = wallace_bott(sigma, dd, dp)
            rot = float(rng.normal(0.0, SLIP_SCATTER_DEG))
            u = rotate_in_plane(u_wb, n_up, rot)
            add(f.fault_id, f.phase, x, y, n_up, u,
                dict(dip_dir=f.dip_dir, dip=f.dip, rake=f.rake),
                angle_between(n_up, f.n), rot, u_wb)

    rng = stream("stations-minor")
    lake_zone = Point(lake["centre_x"], lake["centre_y"]).buffer(500.0)
    for phase_name in ("compression", "extension"):
        ph = phases[phase_name]
        e1, e2, e3 = ph["axes"]
        count = 0
        while count < N_MINOR_PER_PHASE:
            r = rng.uniform()
            sgn = 1.0 if rng.uniform() < 0.5 else -1.0
            c60, s60 = math.cos(math.radians(60.0)), math.sin(math.radians(60.0))
            if r < MINOR_SETS[phase_name][0]:          # Andersonian sets: contain sigma2
                n_meas = perturb_direction(c60 * e1 + sgn * s60 * e3, MINOR_SET_SCATTER_DEG, rng)
            elif r < MINOR_SETS[phase_name][1]:        # strike-slip sets: contain sigma3
                n_meas = perturb_direction(c60 * e1 + sgn * s60 * e2, MINOR_SET_SCATTER_DEG, rng)
            else:                                      # random orientation
                n_meas = unit(rng.normal(size=3))
            dd, dp = plane_from_normal(n_meas)
            if dp < 5.0:
                continue
            u_wb, tau, _ = wallace_bott(ph["reduced"], dd, dp)
            if tau < MIN_REDUCED_SHEAR:
                continue
            x = X_WEST + rng.uniform(300.0, NX * CELL - 300.0)
            y = Y_SOUTH + rng.uniform(300.0, NY * CELL - 300.0)
            if lake_zone.contains(Point(x, y)):
                continue
            rot = float(rng.normal(0.0, SLIP_SCATTER_DEG))
            n_up = plane_normal(dd, dp)
            u = rotate_in_plane(u_wb, n_up, rot)
            add("minor", phase_name, x, y, n_up, u, None, 0.0, rot, u_wb)
            count += 1
    return rows, truth


def make_bedding(bed_pieces: list[dict], marker: dict) -> list[dict]:
    """Bedding attitudes near the bed_A outcrop, scattered N(0, 3 deg) about the true attitude."""
    rng = stream("bedding")
    lengths = np.array([polyline_length(p["pts"]) for p in bed_pieces])
    rows = []
    for i in range(N_BEDDING):
        k = int(rng.choice(len(bed_pieces), p=lengths / lengths.sum()))
        pts = bed_pieces[k]["pts"]
        x, y = pts[int(rng.integers(len(pts)))] + rng.uniform(-40.0, 40.0, 2)
        x = float(np.clip(x, X_WEST + 50.0, X_WEST + NX * CELL - 50.0))
        y = float(np.clip(y, Y_SOUTH + 50.0, Y_NORTH - 50.0))
        dd, dp = plane_from_normal(perturb_direction(marker["n"], BEDDING_SCATTER_DEG, rng))
        rows.append(dict(station_id=f"BD{i + 1:02d}", dip_dir=round(dd, 2), dip=round(dp, 2),
                         geometry=Point(round(float(x), 2), round(float(y), 2))))
    return rows


def make_sections(faults, main_lines) -> tuple[list[dict], list[dict]]:
    """Section lines and, per leg, where it crosses each fault trace and the apparent dip."""
    rows, truth = [], []
    for sec in SECTIONS:
        verts = [(X_WEST + x, Y_SOUTH + y) for x, y in sec["vertices"]]
        rows.append(dict(section_id=sec["section_id"], geometry=LineString(verts)))
        legs, start = [], 0.0
        for i, (a, b) in enumerate(zip(verts[:-1], verts[1:])):
            leg = LineString([a, b])
            az = math.degrees(math.atan2(b[0] - a[0], b[1] - a[1])) % 360.0
            cross = []
            for f in faults:
                inter = leg.intersection(main_lines[f.fault_id])
                for g in getattr(inter, "geoms", [inter]):
                    if g.is_empty or g.geom_type != "Point":
                        continue
                    beta = math.radians(az - f.strike)
                    app = math.degrees(math.atan(math.tan(math.radians(f.dip))
                                                 * abs(math.sin(beta))))
                    toward = "end" if float(horizontal(az) @ f.n) > 0 else "start"
                    start_lbl, end_lbl = sec["section_id"].split("-")
                    cross.append(dict(fault_id=f.fault_id, x=g.x, y=g.y,
                                      distance_along_section_m=start + leg.project(g),
                                      along_strike_m=float(f.along(g.x, g.y)),
                                      apparent_dip=app,
                                      apparent_dip_toward=f"{toward} of the section ("
                                      f"{start_lbl if toward == 'start' else end_lbl})",
                                      angle_section_to_strike=math.degrees(
                                          math.acos(abs(math.cos(beta))))))
            cross.sort(key=lambda c: c["distance_along_section_m"])
            legs.append(dict(leg=i + 1, start=dict(x=a[0], y=a[1]), end=dict(x=b[0], y=b[1]),
                             azimuth=az, length_m=leg.length, crossings=cross))
            start += leg.length
        truth.append(dict(section_id=sec["section_id"], note=sec["note"], n_vertices=len(verts),
                          total_length_m=start, legs=legs))
    return rows, truth


def make_boreholes(faults, dem) -> tuple[list[dict], list[dict]]:
    """Collars on hanging walls and the exact line-plane intersections of each hole."""
    rows, truth = [], []
    byid = {f.fault_id: f for f in faults}
    for bh in BOREHOLES:
        f = byid[bh["fault_id"]]
        xy = f.c[:2] + bh["along"] * f.s[:2] + bh["across"] * horizontal(f.dip_dir)[:2]
        xy = np.round(xy, 2)                       # exactly the stored collar coordinates
        collar = np.array([xy[0], xy[1], float(dem.at(*xy))])
        assert f.signed_distance(*collar) > 0, bh["hole_id"]
        v = line_vector(bh["trend"], bh["plunge"])
        hits = []
        for g in faults:
            den = float(g.n @ v)
            if abs(den) < 1e-12:
                continue
            t = -float(g.signed_distance(*collar)) / den
            if t <= 0:
                continue
            p = collar + t * v
            if abs(float(g.along(p[0], p[1]))) >= g.length / 2.0:
                continue
            hits.append((t, g, p))
        hits.sort(key=lambda h: h[0])
        assert hits and hits[0][1] is f, f"{bh['hole_id']} must hit {f.fault_id} first"
        t0 = hits[0][0]
        total = math.ceil((t0 + 250.0) / 50.0) * 50.0
        rows.append(dict(hole_id=bh["hole_id"], target_fault=f.fault_id, trend=bh["trend"],
                         plunge=bh["plunge"], total_depth_m=total,
                         geometry=Point(float(collar[0]), float(collar[1]))))
        inter = []
        for t, g, p in hits:
            if t > total:
                continue
            inter.append(dict(fault_id=g.fault_id, measured_depth_m=t,
                              point=vec3(p), elevation_m=float(p[2]),
                              vertical_depth_below_collar_m=float(collar[2] - p[2]),
                              depth_below_ground_at_point_m=float(dem.at(p[0], p[1]) - p[2]),
                              along_strike_m=float(g.along(p[0], p[1])),
                              angle_hole_to_plane=90.0 - angle_between(v, g.n)
                              if angle_between(v, g.n) <= 90 else angle_between(v, g.n) - 90.0))
        truth.append(dict(hole_id=bh["hole_id"], target_fault=f.fault_id,
                          collar=vec3(collar), collar_z_source="bilinear DEM at collar",
                          trend=bh["trend"], plunge=bh["plunge"], direction=vec3(v),
                          total_depth_m=total, intersections=inter,
                          other_planes_beyond_total_depth=[dict(fault_id=g.fault_id,
                                                                measured_depth_m=t)
                                                           for t, g, p in hits if t > total]))
    return rows, truth


def make_contact_points(bed_pieces, marker, dem) -> tuple[list[dict], list[dict]]:
    """Point groups on rigid bed_A pieces (exact DEM/plane intersections) + a collinear group."""
    rows, truth = [], []
    cands = []
    for p in bed_pieces:
        if not p["rigid"]:
            continue
        raw = p["pts"][p["raw"]]
        if len(raw) < 20:
            continue
        zr = dem.at(raw[:, 0], raw[:, 1])
        span = float(np.hypot(*(raw.max(0) - raw.min(0))))
        if np.ptp(zr) < 40.0 or span < 400.0:
            continue
        cands.append((float(np.ptp(zr)), p, raw, zr))
    cands.sort(key=lambda c: -c[0])
    chosen, used_disp = [], []
    for c in cands:
        if any(np.allclose(c[1]["disp"], d, atol=1e-3) for d in used_disp):
            continue
        chosen.append(c)
        used_disp.append(c[1]["disp"])
        if len(chosen) == 3:
            break
    for c in cands:                                   # fill up if fewer distinct blocks
        if len(chosen) >= 3:
            break
        if all(c[1] is not k[1] for k in chosen):
            chosen.append(c)
    npts = [5, 7, 9]
    for gi, (rel, p, raw, zr) in enumerate(chosen):
        k = npts[gi % len(npts)]
        idx = np.unique(np.round(np.linspace(0, len(raw) - 1, k)).astype(int))
        gid = f"bedA_grp{gi + 1}"
        pp = marker["p"] + p["disp"]
        resid = []
        for j in idx:
            x, y, zz = float(raw[j, 0]), float(raw[j, 1]), float(zr[j])
            rows.append(dict(group_id=gid, z_m=round(zz, 3), geometry=Point(round(x, 3),
                                                                                round(y, 3))))
            resid.append(zz - plane_point(marker["n"], pp, x, y))
        assert max(abs(r) for r in resid) < 0.05, resid
        truth.append(dict(group_id=gid, marker_id="bed_A", piece_id=p["piece_id"],
                          n_points=len(idx), dip_dir=marker["dip_dir"], dip=marker["dip"],
                          strike=(marker["dip_dir"] - 90.0) % 360.0, point_on_plane=vec3(pp),
                          max_abs_residual_m=max(abs(r) for r in resid),
                          elevation_range_m=float(np.ptp(zr[idx])),
                          expected_quality="good",
                          note="points are noise-free vertices of the contact on the DEM "
                               "(z = bilinear DEM), lying on the translated bed_A plane"))
    # deliberately ill-posed group: 4 collinear points on a uniform ramp
    a = np.array([X_WEST + 10400.0, Y_SOUTH + 9200.0])
    b = np.array([X_WEST + 11200.0, Y_SOUTH + 9500.0])
    for t in (0.0, 0.3, 0.65, 1.0):
        x, y = a + t * (b - a)
        rows.append(dict(group_id="collinear_test", z_m=round(1300.0 + 60.0 * t, 3),
                         geometry=Point(round(float(x), 3), round(float(y), 3))))
    truth.append(dict(group_id="collinear_test", n_points=4, expected_quality="ill-posed",
                      note="4 points on one straight map line with z rising linearly "
                           "(1300 m to 1360 m): any plane containing that line fits, so the "
                           "plane is undetermined; z_m is synthetic, not from the DEM",
                      line_start=dict(x=a[0], y=a[1], z=1300.0),
                      line_end=dict(x=b[0], y=b[1], z=1360.0)))
    return rows, truth


# --------------------------------------------------------------------------------------------
# Writers
# --------------------------------------------------------------------------------------------
def write_dem(path: Path, z32: np.ndarray) -> None:
    """Write the DEM (rows flipped to north-up) as a tiled, deflate-compressed Float32 GeoTIFF."""
    profile = dict(driver="GTiff", width=NX, height=NY, count=1, dtype="float32", crs=CRS,
                   transform=from_origin(X_WEST, Y_NORTH, CELL, CELL), nodata=NODATA,
                   tiled=True, blockxsize=256, blockysize=256, compress="deflate", predictor=3,
                   zlevel=9)
    for old in (path, path.with_name(path.name + ".aux.xml")):   # also drop stale GDAL PAM stats
        if old.exists():
            old.unlink()
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(np.flipud(z32), 1)
        dst.update_tags(1, units="metre", vertical_reference="invented (heights above an "
                        "arbitrary datum)")
        dst.update_tags(source=f"slipsense demo generator {GENERATOR_VERSION}, seed {SEED}",
                        scenario=f"{SCENARIO_NAME} (invented)", north_reference="grid")
        dst.set_band_description(1, "elevation_m")


def write_gpkg(path: Path, layers: dict) -> None:
    """Write every layer into one GeoPackage with pinned timestamps."""
    pyogrio.set_gdal_config_options({"OGR_CURRENT_DATE": FIXED_TIMESTAMP})
    if path.exists():
        path.unlink()
    for name, (rows, fields) in layers.items():
        gdf = gpd.GeoDataFrame([{k: r[k] for k in fields} for r in rows],
                               geometry=[r["geometry"] for r in rows], crs=CRS)
        first = not path.exists()
        pyogrio.write_dataframe(
            gdf, path, layer=name, driver="GPKG", append=not first,
            # GeoPackage 1.2: read without warnings by the GDAL of QGIS 3.22 LTR
            dataset_options={"VERSION": "1.2"} if first else None,
            layer_metadata={"north_reference": "grid", "crs": CRS,
                            "source": f"slipsense demo generator {GENERATOR_VERSION}, "
                                      f"seed {SEED}",
                            "scenario": f"{SCENARIO_NAME} (invented data)"})
    pyogrio.set_gdal_config_options({"OGR_CURRENT_DATE": None})


def assemble_truth(dem, z32, terrain_info, lake, phases, faults, traces, all_pieces,
                   trace_rows, marker_truth, piece_truth, station_truth, section_truth,
                   hole_truth, cp_truth, layers) -> dict:
    """Collect everything into the ground-truth dictionary."""
    valid = np.isfinite(dem.z)
    pd = PRESENT_DAY
    depth_km = pd["reference_depth_m"] / 1000.0
    sh, shmin, sv = (pd["shmax_gradient_mpa_per_km"] * depth_km,
                     pd["shmin_gradient_mpa_per_km"] * depth_km, pd["sv_gradient_mpa_per_km"]
                     * depth_km)
    pp = pd["pore_pressure_gradient_mpa_per_km"] * depth_km
    eh, eh2, ev = horizontal(pd["shmax_azimuth"]), horizontal(pd["shmax_azimuth"] + 90), \
        np.array([0.0, 0.0, 1.0])
    pres = sh * np.outer(eh, eh) + shmin * np.outer(eh2, eh2) + sv * np.outer(ev, ev)
    s1, s3 = max(sh, sv, shmin), min(sh, sv, shmin)
    present_faults = []
    for f in faults:
        t = pres @ f.n
        sn = float(f.n @ t)
        tau = float(np.linalg.norm(t - sn * f.n))
        u_now, _, _ = wallace_bott(pres, f.dip_dir, f.dip)
        rake_now = rake_of(u_now, f.dip_dir, f.dip)
        present_faults.append(dict(fault_id=f.fault_id, normal_stress_mpa=sn, shear_stress_mpa=tau,
                                   predicted_rake=rake_now,
                                   predicted_sense=sense_words(rake_now)[0],
                                   effective_normal_stress_mpa=sn - pp,
                                   slip_tendency=tau / (sn - pp),
                                   dilation_tendency=(s1 - sn) / (s1 - s3),
                                   exceeds_friction_0_6=tau / (sn - pp) >= 0.6))

    def phase_json(ph):
        cfg = ph["cfg"]
        names = ("sigma1", "sigma2", "sigma3")
        ax = {}
        for nm, e, val in zip(names, ph["axes"], ph["values"]):
            tr, pl = trend_plunge(e)
            ax[nm] = dict(trend=tr, plunge=pl, magnitude_mpa=val, unit_vector=vec3(e))
        flat = {f"{nm}_{w}": ax[nm][w] for nm in names for w in ("trend", "plunge")}
        return dict(order=cfg["order"], age=cfg["age"], description=cfg["description"],
                    **flat, phi=cfg["phi"], principal_axes=ax,
                    reference_depth_m=cfg["reference_depth_m"],
                    tensor_mpa_enu=ph["tensor"].tolist(),
                    reduced_tensor_enu=ph["reduced"].tolist(),
                    reduced_tensor_note="sigma1 = 1, sigma3 = 0, sigma2 = phi; rows/cols = "
                                        "east, north, up; compression positive",
                    magnitudes_note="illustrative; fault-slip data constrain only axes and phi",
                    faults=[f.fault_id for f in faults if f.phase == ph["name"]])

    fault_json = []
    for f, row in zip(faults, trace_rows):
        comps = slip_components(f.dip_dir, f.dip, f.rake, f.net)
        full, dom = sense_words(f.rake)
        ltr, lpl = trend_plunge(f.u)
        half = f.length / 2.0
        ends = [f.c[:2] + sgn * half * f.s[:2] for sgn in (-1, 1)]
        others = [dict(length_m=polyline_length(p), start=dict(x=p[0, 0], y=p[0, 1]))
                  for p in all_pieces[f.fault_id][1:]]
        fault_json.append(dict(
            fault_id=f.fault_id, name=f.cfg["name"], type=f.cfg["kind"], description=f.cfg["note"],
            phase=f.phase, dip_dir=f.dip_dir, dip=f.dip, strike=f.strike,
            upward_normal=vec3(f.n), point_on_plane=dict(x=f.c[0], y=f.c[1], z=f.c[2],
                                                         note="on the ground surface (bilinear "
                                                              "DEM); centre of the extent"),
            along_strike_extent=dict(length_m=f.length, from_m=-half, to_m=half,
                                     untapered_from_m=-TAPER_FLAT_FRACTION * half,
                                     untapered_to_m=TAPER_FLAT_FRACTION * half,
                                     tip_line_points=[dict(x=e[0], y=e[1]) for e in ends],
                                     note="along-strike coordinate = horizontal distance from "
                                          "point_on_plane along the strike direction"),
            slip=dict(rake=f.rake, **comps, unit_vector=vec3(f.u), sense=full,
                      dominant_sense=dom, slickenline_trend=ltr, slickenline_plunge=lpl,
                      source="Wallace-Bott shear direction of the phase's stress on the plane",
                      reduced_shear_stress=f.reduced_shear,
                      reduced_normal_stress=f.reduced_normal),
            trace=dict(length_m=float(row["geometry"].length),
                       noise_free_length_m=polyline_length(traces[f.fault_id]),
                       n_vertices=len(row["geometry"].coords),
                       vertex_spacing_m=TRACE_SPACING_M, noise_sigma_m=TRACE_NOISE_M,
                       relief_along_trace_m=float(np.ptp(dem.at(*traces[f.fault_id].T))),
                       other_pieces_not_in_layer=others)))

    layer_doc = {name: dict(geometry=("Point" if rows and rows[0]["geometry"].geom_type == "Point"
                                      else "LineString"), fields=fields, n_features=len(rows))
                 for name, (rows, fields) in layers.items()}
    return dict(
        scenario=dict(
            name=f"{SCENARIO_NAME} (invented)",
            description=(
                "Invented upland of E-W river valleys cut into a gently north-dipping limestone "
                "succession (bed_A) intruded by a steep E-W dyke (dyke_1). An earlier E-W "
                "shortening phase produced the east-dipping Kammerdune Thrust (F3), the "
                "dextral Velloch Fault (F4) and the oblique dextral-reverse Sernadi Fault (F5). "
                "A later E-W extension phase produced the Ulvessa Graben between the east-"
                "dipping Tavrin Fault (F1) and the west-dipping Ostrelle Fault (F2). All data, "
                "names and the landscape are invented; only the CRS is real."),
            warning="INVENTED DATA for testing and teaching; not a real place."),
        generator=dict(script="demo_gpkg/generate_demo.py", version=GENERATOR_VERSION, seed=SEED,
                       random_streams="numpy SeedSequence([seed, crc32(name)]) per purpose",
                       independent_of_engine=True),
        units=dict(length="metre", elevation="metre", angle="degree",
                   azimuth="degrees clockwise from grid north", stress="MPa"),
        crs=dict(epsg=EPSG, name="WGS 84 / UTM zone 33N", north_reference="grid",
                 note="all azimuths in every layer and in this file are grid azimuths"),
        conventions=dict(
            document="shared CONVENTIONS.md",
            plane="dip_dir / dip; strike = dip_dir - 90 (right-hand rule); upward normal "
                  "(sin d sin delta, cos d sin delta, cos delta)",
            line="trend / plunge, lower hemisphere, v = (sin t cos p, cos t cos p, -sin p)",
            slip="hanging wall relative to footwall; vertical fault: hanging wall = dip_dir side",
            rake="Aki & Richards: from strike (RHR) to slip in the plane, (-180, 180]; +90 "
                 "reverse, -90 normal, 0 sinistral, 180 dextral",
            components="strike_slip_m + = sinistral; dip_slip_m + = reverse (up-dip); throw_m + "
                       "= hanging wall up; heave_m = |horizontal component perpendicular to "
                       "strike| (unsigned; heave_toward_dip_dir_m is the signed version, + = "
                       "extension)",
            sense_words=f"pure if within {PURE_SENSE_TOLERANCE_DEG} deg of the end-member, "
                        "else 'dominant-secondary'; stations carry only the dominant word "
                        "(|rake| 45-135: normal/reverse, else sinistral/dextral)",
            wallace_bott=wallace_bott.__doc__.split("Returns")[0].strip().replace("\n    ", " "),
            stress="compression positive, sigma1 >= sigma2 >= sigma3, phi = (s2 - s3)/(s1 - s3)"),
        dem=dict(
            file="dem.tif", driver="GTiff", dtype="float32", width=NX, height=NY,
            cell_size_m=CELL, nodata=NODATA, tiled="256 x 256", compression="deflate, predictor 3",
            bounds=dict(west=X_WEST, south=Y_SOUTH, east=X_WEST + NX * CELL, north=Y_NORTH),
            first_pixel_centre=dict(x=X_WEST + CELL / 2, y=Y_NORTH - CELL / 2),
            sampling="values are at pixel centres; all truth elevations use bilinear "
                     "interpolation between pixel centres of the stored Float32 values",
            elevation_min_m=float(np.nanmin(dem.z)), elevation_max_m=float(np.nanmax(dem.z)),
            elevation_mean_m=float(np.nanmean(dem.z)),
            local_relief="200-600 m between valley floors and ridge crests",
            sha256=hashlib.sha256(z32.tobytes()).hexdigest(),
            sha256_note="of the raw Float32 array in south-to-north row order (not the file)",
            n_valid_cells=int(valid.sum()), nodata_patch=lake, terrain=terrain_info),
        noise=dict(trace_vertex_sigma_m=TRACE_NOISE_M, trace_vertex_spacing_m=TRACE_SPACING_M,
                   contact_vertex_sigma_m=CONTACT_NOISE_M,
                   contact_vertex_spacing_m=CONTACT_SPACING_M,
                   contact_gap_at_faults_m=CONTACT_GAP_M,
                   min_contact_piece_length_m=MIN_PIECE_M,
                   main_station_plane_scatter_deg_per_axis=PLANE_SCATTER_DEG,
                   station_slip_inplane_rotation_sigma_deg=SLIP_SCATTER_DEG,
                   minor_fault_set_scatter_deg_per_axis=MINOR_SET_SCATTER_DEG,
                   bedding_scatter_deg_per_axis=BEDDING_SCATTER_DEG,
                   angles_rounded_to_deg=0.01, coordinates_rounded_to_m=0.01,
                   contact_points="no noise (exact)"),
        stress_phases={k: phase_json(v) for k, v in phases.items()},
        present_day_stress=dict(
            **pd, sigma1=f"SHmax (horizontal, azimuth {pd['shmax_azimuth']:g})", sigma2="Sv",
            sigma3=f"Shmin (horizontal, azimuth {(pd['shmax_azimuth'] + 90.0) % 180.0:g})",
            shmin_azimuth=(pd["shmax_azimuth"] + 90.0) % 180.0,
            tensor_at_reference_depth_mpa_enu=pres.tolist(),
            pore_pressure_at_reference_depth_mpa=pp,
            note="for reactivation screening; tendencies are depth-independent because all "
                 "magnitudes scale linearly with depth",
            faults=present_faults),
        faults=fault_json,
        displacement_model=dict(
            description=(
                "Present-configuration block model: a point q now in the hanging wall of fault "
                "k (signed distance to plane > 0 and |along-strike coordinate| < length/2) has "
                "been translated by taper_k(q) * slip_k; displacements of several faults add. "
                "A marker contact is the zero set of n_m . (q - D(q) - p_m) on the DEM surface. "
                "Because slip vectors lie in their planes, the relative offset across fault k of "
                "any marker equals taper_k * slip_k, i.e. exactly the slip vector where taper=1."),
            taper=f"1 for |a| <= {TAPER_FLAT_FRACTION} L/2, 0.5 (1 + cos(pi w)) with w = (|a| - "
                  f"{TAPER_FLAT_FRACTION} L/2) / ((1 - {TAPER_FLAT_FRACTION}) L/2) up to |a| = "
                  "L/2, 0 beyond",
            caution="the tapers act on the whole hanging-wall half-space inside each fault's "
                    "along-strike band, so marker pieces crossing a taper band are gently bent "
                    "(marker_pieces[].rigid = false); pieces with rigid = true are exact planes"),
        markers=marker_truth,
        marker_pieces=piece_truth,
        slip_stations=dict(
            n_total=len(station_truth),
            n_main=sum(1 for s in station_truth if s["fault_id"] != "minor"),
            n_minor=sum(1 for s in station_truth if s["fault_id"] == "minor"),
            method="main faults: plane = true plane tilted by the plane scatter; slip = "
                   "Wallace-Bott direction of the phase stress on that measured plane, rotated "
                   "in-plane by N(0, 5 deg). Minor faults: conjugate sets at 30 deg to sigma1 "
                   "scattered by the set scatter (compression: 40 % sets containing sigma2 = "
                   "thrusts, 35 % sets containing sigma3 = strike-slip; extension: 75 % sets "
                   "containing sigma2 = normal faults), the rest random planes; reduced shear "
                   f">= {MIN_REDUCED_SHEAR}; same slip rotation noise.",
            trend_plunge="lower-hemisphere axis of the slickenline; the sense word selects the "
                         "end the hanging wall moved toward",
            stations=station_truth),
        bedding=dict(n=N_BEDDING, true_dip_dir=MARKERS[0]["dip_dir"], true_dip=MARKERS[0]["dip"],
                     scatter_deg_per_axis=BEDDING_SCATTER_DEG,
                     note="all blocks keep the bed_A attitude (translations only)"),
        sections=section_truth,
        boreholes=hole_truth,
        contact_point_groups=cp_truth,
        layers=dict(file="demo.gpkg", crs=CRS, **layer_doc))


# --------------------------------------------------------------------------------------------
def render_quicklook(path: Path, dem, faults, trace_rows, contact_rows, station_rows,
                     section_rows, collar_rows, cp_rows) -> None:
    """Hillshade map with all vector layers, for a visual check (not part of the data set)."""
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.colors import LightSource

    z = np.where(np.isfinite(dem.z), dem.z, np.nanmin(dem.z))
    ls = LightSource(315, 45)
    rgb = ls.shade(z, plt.get_cmap("gist_earth"), vert_exag=2, dx=CELL, dy=CELL,
                   blend_mode="soft")
    rgb[~np.isfinite(dem.z)] = (0.3, 0.5, 0.9, 1.0)
    fig, ax = plt.subplots(figsize=(15, 12.5))
    ext = [X_WEST, X_WEST + NX * CELL, Y_SOUTH, Y_NORTH]
    ax.imshow(rgb, origin="lower", extent=ext)
    ax.contour(XS, YS, dem.z, levels=np.arange(700, 2000, 50), colors="k", linewidths=0.2,
               alpha=0.5)
    colors = dict(bed_A="yellow", dyke_1="magenta")
    for r in contact_rows:
        ax.plot(*r["geometry"].xy, color=colors[r["marker_id"]], lw=1.2)
    for r in trace_rows:
        ax.plot(*r["geometry"].xy, color="red", lw=1.8)
        x, y = r["geometry"].coords[len(r["geometry"].coords) // 2]
        ax.text(x + 60, y, r["fault_id"], color="red", fontsize=13, weight="bold")
    for r in section_rows:
        ax.plot(*r["geometry"].xy, "w--", lw=1)
        ax.text(*r["geometry"].coords[0], r["section_id"], color="w")
    for r in station_rows:
        ax.plot(r["geometry"].x, r["geometry"].y, "k^" if r["fault_id"] != "minor" else "kx",
                ms=4)
    for r in collar_rows:
        ax.plot(r["geometry"].x, r["geometry"].y, "co", ms=7)
        ax.text(r["geometry"].x + 50, r["geometry"].y, r["hole_id"], color="c")
    for r in cp_rows:
        ax.plot(r["geometry"].x, r["geometry"].y, "b.", ms=5)
    for f in faults:
        half = f.length / 2
        for sgn in (-1, 1):
            e = f.c[:2] + sgn * half * f.s[:2]
            ax.plot(*e, "r+", ms=10)
    ax.set_xlim(ext[:2])
    ax.set_ylim(ext[2:])
    ax.set_aspect("equal")
    fig.tight_layout()
    fig.savefig(path, dpi=90)
    plt.close(fig)


def main(argv: list[str] | None = None) -> int:
    """Command-line entry point."""
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--out-dir", type=Path, default=Path(__file__).resolve().parent,
                    help="output folder (default: the folder of this script)")
    ap.add_argument("--quicklook", type=Path, default=None,
                    help="also render a PNG map for a visual check (not part of the data set)")
    args = ap.parse_args(argv)
    truth = build(args.out_dir, args.quicklook)
    for f in truth["faults"]:
        s = f["slip"]
        print(f"{f['fault_id']} {f['name']:<18} dip_dir {f['dip_dir']:6.1f} dip {f['dip']:4.1f} "
              f"rake {s['rake']:7.2f} net {s['net_slip_m']:5.0f} m  {s['sense']}  "
              f"trace {f['trace']['length_m']:.0f} m")
    print(f"wrote {args.out_dir}")
    return 0


if __name__ == "__main__":
    sys.exit(main())

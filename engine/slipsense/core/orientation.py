"""Orientations of planes and lines: conversions, validation, angles, north references.

Conventions (``CONVENTIONS.md`` of the project, stated once here and relied on everywhere):

* Frame: x = east, y = north, z = up; vectors are ``(..., 3)`` arrays ``(e, n, u)``.
* Angles in **degrees** on every public function; azimuths clockwise from north in [0, 360).
* Planes are canonical as ``dip_dir`` (0–360) / ``dip`` (0–90).  Strike follows the right-hand
  rule: ``strike = dip_dir - 90 (mod 360)``.  Upward unit normal
  ``n = (sin d sin δ, cos d sin δ, cos δ)``; the pole is the downward normal
  (trend ``d + 180``, plunge ``90 - δ``).  A horizontal plane has dip 0 and reports dip_dir 0.
* Lines have trend (azimuth of the downward-plunging end) and plunge (0–90, down positive):
  ``v = (sin t cos p, cos t cos p, -sin p)``; an upward vector is the same axis as its lower
  twin.

Only numpy is imported.  Functions broadcast over leading axes; scalars in give scalars out.
"""
from __future__ import annotations

import re

import numpy as np

from ..errors import AngleError, OrientationParseError

__all__ = [
    "normalize_azimuth",
    "check_dip",
    "check_plunge",
    "check_azimuth",
    "dip_dir_to_strike",
    "strike_to_dip_dir",
    "plane_to_normal",
    "normal_to_plane",
    "plane_to_pole",
    "pole_to_plane",
    "line_to_vector",
    "vector_to_line",
    "dip_vector",
    "strike_vector",
    "angle_between_lines",
    "angle_between_planes",
    "parse_plane",
    "parse_planes",
    "strike_dip_to_plane",
    "grid_to_true_azimuth",
    "true_to_grid_azimuth",
    "magnetic_to_true_azimuth",
    "circular_interval",
]

_EPS = 1e-12


def _out(x):
    """Return a Python float for 0-d results, the array otherwise."""
    x = np.asarray(x)
    return float(x) if x.ndim == 0 else x


def normalize_azimuth(az):
    """Wrap azimuths (degrees) into [0, 360).

    >>> normalize_azimuth(-30.0)
    330.0
    >>> normalize_azimuth(360.0)
    0.0
    """
    a = np.mod(np.asarray(az, dtype=float), 360.0)
    a = np.where(a >= 360.0, 0.0, a)  # np.mod(-1e-17, 360) == 360.0
    return _out(a)


def _check_range(name, value, lo, hi):
    v = np.asarray(value, dtype=float)
    bad = ~np.isfinite(v) | (v < lo) | (v > hi)
    if np.any(bad):
        first = v[bad].ravel()[0] if v.ndim else float(v)
        raise AngleError(f"{name} must be in [{lo:g}, {hi:g}] degrees, got {first!r}")
    return v


def check_dip(dip):
    """Return ``dip`` as a float array, raising :class:`AngleError` unless all are in [0, 90]."""
    return _check_range("dip", dip, 0.0, 90.0)


def check_plunge(plunge):
    """Return ``plunge`` as a float array, raising :class:`AngleError` unless all are in [0, 90]."""
    return _check_range("plunge", plunge, 0.0, 90.0)


def check_azimuth(az, name="azimuth"):
    """Return an azimuth array, raising :class:`AngleError` unless all are finite and in [-360, 720]."""
    return _check_range(name, az, -360.0, 720.0)


def dip_dir_to_strike(dip_dir):
    """Right-hand-rule strike (degrees) of planes of dip direction ``dip_dir`` (degrees).

    >>> dip_dir_to_strike(90.0)
    0.0
    >>> dip_dir_to_strike(45.0)
    315.0
    """
    return normalize_azimuth(np.asarray(dip_dir, dtype=float) - 90.0)


def strike_to_dip_dir(strike):
    """Dip direction (degrees) of planes given by right-hand-rule ``strike`` (degrees)."""
    return normalize_azimuth(np.asarray(strike, dtype=float) + 90.0)


def plane_to_normal(dip_dir, dip):
    """Upward unit normals ``(..., 3)`` (east, north, up) of planes ``dip_dir``/``dip`` (degrees).

    >>> plane_to_normal(90.0, 90.0).round(12).tolist()
    [1.0, 0.0, 0.0]
    """
    d = np.radians(np.asarray(dip_dir, dtype=float))
    g = np.radians(check_dip(dip))
    d, g = np.broadcast_arrays(d, g)
    return np.stack([np.sin(d) * np.sin(g), np.cos(d) * np.sin(g), np.cos(g)], axis=-1)


def normal_to_plane(normal):
    """Dip direction and dip (degrees) of planes with normals ``(..., 3)`` (any sense, any length).

    The normal is flipped upward first.  A horizontal plane gives ``(0, 0)``; a vertical plane
    gives the dip direction of the normal's horizontal part as given (either of two valid ones).
    Zero-length normals give NaN.

    Returns
    -------
    dip_dir, dip : float or ndarray
    """
    n = np.asarray(normal, dtype=float)
    length = np.linalg.norm(n, axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        n = n / length[..., None]
    sign = np.where(n[..., 2] < 0, -1.0, 1.0)
    # Vertical planes: keep the given horizontal sense (up component is 0 either way).
    sign = np.where(np.abs(n[..., 2]) < _EPS, 1.0, sign)
    n = n * sign[..., None]
    # abs(): a normal whose up component is a rounding-level negative (kept unflipped above as a
    # vertical plane) must still give a dip of at most 90.
    # atan2 rather than acos: full precision for gentle dips too (acos(1 - 1e-16) is 0).
    horiz = np.hypot(n[..., 0], n[..., 1])
    dip = np.degrees(np.arctan2(horiz, np.abs(n[..., 2])))
    dip_dir = np.where(horiz < 1e-10, 0.0, np.degrees(np.arctan2(n[..., 0], n[..., 1])))
    dip_dir = normalize_azimuth(dip_dir)
    bad = ~(length > 0)
    dip = np.where(bad, np.nan, dip)
    dip_dir = np.where(bad, np.nan, dip_dir)
    return _out(dip_dir), _out(dip)


def plane_to_pole(dip_dir, dip):
    """Trend and plunge (degrees) of the poles (downward normals) of planes ``dip_dir``/``dip``.

    >>> plane_to_pole(120.0, 30.0)
    (300.0, 60.0)
    """
    dip = check_dip(dip)
    return normalize_azimuth(np.asarray(dip_dir, dtype=float) + 180.0), _out(90.0 - dip)


def pole_to_plane(trend, plunge):
    """Dip direction and dip (degrees) of the planes whose poles are ``trend``/``plunge`` (degrees)."""
    plunge = check_plunge(plunge)
    return normalize_azimuth(np.asarray(trend, dtype=float) + 180.0), _out(90.0 - plunge)


def line_to_vector(trend, plunge):
    """Unit vectors ``(..., 3)`` (east, north, up) pointing down along lines ``trend``/``plunge``.

    >>> line_to_vector(0.0, 90.0).round(12).tolist()
    [0.0, 0.0, -1.0]
    """
    t = np.radians(np.asarray(trend, dtype=float))
    p = np.radians(check_plunge(plunge))
    t, p = np.broadcast_arrays(t, p)
    return np.stack([np.sin(t) * np.cos(p), np.cos(t) * np.cos(p), -np.sin(p)], axis=-1)


def vector_to_line(vector):
    """Trend and plunge (degrees) of vectors ``(..., 3)``, taken as axes (lower hemisphere).

    Upward vectors are flipped down.  A vertical line reports trend 0; a horizontal line keeps the
    trend of the vector as given.  Zero vectors give NaN.
    """
    v = np.asarray(vector, dtype=float)
    length = np.linalg.norm(v, axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        v = v / length[..., None]
    sign = np.where(v[..., 2] > _EPS, -1.0, 1.0)
    v = v * sign[..., None]
    plunge = np.degrees(np.arcsin(np.clip(-v[..., 2], -1.0, 1.0)))
    plunge = np.clip(plunge, 0.0, 90.0)
    horiz = np.hypot(v[..., 0], v[..., 1])
    trend = np.where(horiz < 1e-10, 0.0, np.degrees(np.arctan2(v[..., 0], v[..., 1])))
    trend = normalize_azimuth(trend)
    bad = ~(length > 0)
    return _out(np.where(bad, np.nan, trend)), _out(np.where(bad, np.nan, plunge))


def strike_vector(dip_dir):
    """Horizontal unit vectors ``(..., 3)`` along right-hand-rule strike of planes ``dip_dir``."""
    s = np.radians(np.asarray(dip_dir, dtype=float) - 90.0)
    return np.stack([np.sin(s), np.cos(s), np.zeros_like(s)], axis=-1)


def dip_vector(dip_dir, dip):
    """Unit vectors ``(..., 3)`` pointing down the dip of planes ``dip_dir``/``dip`` (degrees)."""
    return line_to_vector(*np.broadcast_arrays(np.asarray(dip_dir, dtype=float), check_dip(dip)))


def _axial_angle(a, b):
    """Angle (degrees, 0–90) between unit vectors taken as axes.

    atan2(|a × b|, |a · b|) rather than acos(|a · b|): acos loses about 1e-6 degrees near 0.
    """
    cross = np.linalg.norm(np.cross(a, b), axis=-1)
    return np.degrees(np.arctan2(cross, np.abs(np.sum(a * b, axis=-1))))


def angle_between_lines(trend1, plunge1, trend2, plunge2):
    """Acute angle (degrees, 0–90) between lines taken as axes."""
    a = line_to_vector(trend1, plunge1)
    b = line_to_vector(trend2, plunge2)
    return _out(_axial_angle(a, b))


def angle_between_planes(dip_dir1, dip1, dip_dir2, dip2):
    """Acute angle (degrees, 0–90) between planes (the angle between their normals as axes).

    Vertical planes of opposite dip direction are the same plane:

    >>> angle_between_planes(90.0, 90.0, 270.0, 90.0)
    0.0
    """
    a = plane_to_normal(dip_dir1, dip1)
    b = plane_to_normal(dip_dir2, dip2)
    return _out(np.round(_axial_angle(a, b), 10))


# --------------------------------------------------------------------------- text input
_QUADRANT_AZ = {
    "N": 0.0, "NE": 45.0, "E": 90.0, "SE": 135.0, "S": 180.0, "SW": 225.0, "W": 270.0, "NW": 315.0,
}
_BEARING = re.compile(r"^([NS])\s*(\d+(?:\.\d*)?)\s*([EW])$")
_NUMBER = r"(\d+(?:\.\d*)?)"
_PLANE = re.compile(
    r"^\s*(?P<strike>[NS]\s*\d+(?:\.\d*)?\s*[EW]|\d+(?:\.\d*)?)\s*[/,\s]\s*"
    + _NUMBER.replace("(", "(?P<dip>", 1)
    + r"\s*(?P<quad>[NSEW]{1,2})?\s*$",
    re.IGNORECASE,
)


def _parse_strike(text):
    t = text.strip().upper().replace(" ", "")
    m = _BEARING.match(t)
    if m:
        ns, ang, ew = m.groups()
        ang = float(ang)
        if ang > 90:
            raise OrientationParseError(f"quadrant bearing angle must be in [0, 90], got {text!r}")
        if ns == "N":
            return ang if ew == "E" else 360.0 - ang
        return 180.0 - ang if ew == "E" else 180.0 + ang
    val = float(t)
    if not 0.0 <= val <= 360.0:
        raise AngleError(f"strike must be in [0, 360] degrees, got {val!r}")
    return val


def strike_dip_to_plane(strike, dip, quadrant=None, *, right_hand_rule=False):
    """Dip direction and dip (degrees) from a strike, a dip and a dip quadrant.

    Parameters
    ----------
    strike : float
        Strike azimuth, degrees (either end of the strike line when ``quadrant`` is given).
    dip : float
        Dip, degrees in [0, 90].
    quadrant : str, optional
        Rough dip direction (``"N"``, ``"SE"``, ...); picks which side of the strike line the plane
        dips to.  Must not lie along the strike line.
    right_hand_rule : bool
        Declare that ``strike`` follows the right-hand rule; only then may ``quadrant`` be omitted.

    Raises
    ------
    OrientationParseError
        No quadrant and no right-hand-rule declaration (ambiguous), or a quadrant parallel to strike.
    """
    dip = float(check_dip(dip))
    strike = float(strike)
    if quadrant is None or quadrant == "":
        if not right_hand_rule:
            raise OrientationParseError(
                f"strike {strike:g} with dip {dip:g} has no dip quadrant: give one (e.g. 'SE') or "
                "declare right-hand-rule input"
            )
        return normalize_azimuth(strike + 90.0), dip
    q = str(quadrant).strip().upper()
    if q not in _QUADRANT_AZ:
        raise OrientationParseError(
            f"dip quadrant must be one of {', '.join(_QUADRANT_AZ)}, got {quadrant!r}"
        )
    qaz = _QUADRANT_AZ[q]
    candidates = [normalize_azimuth(strike + 90.0), normalize_azimuth(strike - 90.0)]
    diffs = [abs((c - qaz + 180.0) % 360.0 - 180.0) for c in candidates]
    if abs(diffs[0] - diffs[1]) < 1e-9 or min(diffs) >= 90.0 - 1e-9:
        raise OrientationParseError(
            f"dip quadrant {q} lies along strike {strike:g}: it does not say which way the plane dips"
        )
    return candidates[int(np.argmin(diffs))], dip


def parse_plane(text, *, right_hand_rule=False):
    """Parse a plane written as strike and dip with a dip quadrant.

    Accepted forms: ``"N30E 45SE"``, ``"030/45SE"``, ``"030/45 SE"``, ``"30 45 SE"``; with
    ``right_hand_rule=True`` also a bare ``"030/45"``.

    Returns
    -------
    dip_dir, dip : float
        Degrees.

    >>> parse_plane("N30E 45SE")
    (120.0, 45.0)
    >>> parse_plane("210/45 SE")
    (120.0, 45.0)
    """
    if not isinstance(text, str) or not text.strip():
        raise OrientationParseError(f"cannot read a plane from {text!r}")
    m = _PLANE.match(text.strip())
    if not m:
        raise OrientationParseError(
            f"cannot read a plane from {text!r}: expected e.g. 'N30E 45SE' or '030/45SE'"
        )
    strike = _parse_strike(m.group("strike"))
    dip = float(m.group("dip"))
    return strike_dip_to_plane(strike, dip, m.group("quad"), right_hand_rule=right_hand_rule)


def parse_planes(texts, *, right_hand_rule=False):
    """Parse many plane texts (see :func:`parse_plane`); errors name the row index."""
    out = np.empty((len(texts), 2))
    for i, t in enumerate(texts):
        try:
            out[i] = parse_plane(t, right_hand_rule=right_hand_rule)
        except OrientationParseError as exc:
            raise OrientationParseError(f"row {i}: {exc}") from exc
    return out[:, 0], out[:, 1]


# --------------------------------------------------------------------------- north references
def grid_to_true_azimuth(azimuth_grid, convergence):
    """True-north azimuths from grid-north azimuths (degrees).

    ``convergence`` is the meridian convergence γ in degrees, the angle **from true north to grid
    north**, positive when grid north lies east (clockwise) of true north — the sign of pyproj's
    ``Proj.get_factors(...).meridian_convergence`` (pinned by a test).  Then
    ``true = grid + γ``.
    """
    return normalize_azimuth(np.asarray(azimuth_grid, dtype=float) + np.asarray(convergence, float))


def true_to_grid_azimuth(azimuth_true, convergence):
    """Grid-north azimuths from true-north azimuths; inverse of :func:`grid_to_true_azimuth`."""
    return normalize_azimuth(np.asarray(azimuth_true, dtype=float) - np.asarray(convergence, float))


def magnetic_to_true_azimuth(azimuth_magnetic, declination):
    """True-north azimuths from magnetic compass azimuths (degrees).

    ``declination`` is the magnetic declination in degrees, **east positive** (magnetic north east
    of true north), so ``true = magnetic + declination``.
    """
    return normalize_azimuth(
        np.asarray(azimuth_magnetic, dtype=float) + np.asarray(declination, dtype=float)
    )


def circular_interval(samples, centre, q=(2.5, 97.5), axis=-1):
    """Percentile interval of azimuth samples around ``centre`` (degrees), wrapped to [0, 360).

    Deviations from ``centre`` are wrapped to (-180, 180] before the percentiles are taken, so an
    interval may straddle north (``lo > hi`` then means it wraps through 0).
    """
    s = np.asarray(samples, dtype=float)
    c = np.expand_dims(np.asarray(centre, dtype=float), axis)
    dev = (s - c + 180.0) % 360.0 - 180.0
    lo, hi = np.nanpercentile(dev, q, axis=axis)
    c = np.squeeze(c, axis)
    return normalize_azimuth(c + lo), normalize_azimuth(c + hi)

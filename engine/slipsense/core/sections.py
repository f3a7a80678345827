"""Vertical cross-sections along (possibly bent) section lines (numpy only).

A section line is a map polyline; each of its segments ("legs") carries a vertical plane, the
*panel* of that segment.  Section coordinates are ``distance_m`` (along the line from its first
vertex, continuous across bends) and ``elevation_m``; a point off the line also has a signed
``offset_m`` (horizontal distance from the line, positive to the right when one faces along the
section).

Conventions (CONVENTIONS.md): x = east, y = north, z = up, metres; angles in degrees; planes as
dip direction / dip with right-hand-rule strike; azimuths from grid north of the working CRS.

What is here:

* :class:`Section` — segments, azimuths, bends, and map <-> section coordinates both ways.
* :func:`section_profile` — the topographic profile sampled at DEM resolution (bilinear).
* :func:`apparent_dip`, :func:`true_dip_from_apparent`, :func:`angle_to_strike` —
  tan α = tan δ · sin β (Ragan 2009).
* :func:`panel_lines` — where planes cut each panel (a line ``A s + B z + C = 0``), with their
  apparent dips; :func:`clip_panel_line` and :func:`below_ground` clip such a line to a region
  and to the ground.
* :func:`project_points` — measurements near the line moved onto it along their strike or
  perpendicular to the section.
* :func:`fit_parallel_planes` — one attitude shared by all pieces of a marker (the fault blocks
  only translate it), one position per piece.
* :func:`separations` — apparent offsets of a marker across a fault: along the fault's line in
  the section, vertical and horizontal.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import GeometryError, InputError
from .orientation import check_dip, normal_to_plane, normalize_azimuth, plane_to_normal, strike_vector
from .raster import sample_bilinear

__all__ = [
    "Section",
    "SectionPoints",
    "Profile",
    "section_profile",
    "angle_to_strike",
    "apparent_dip",
    "true_dip_from_apparent",
    "panel_lines",
    "panel_apparent_dips",
    "clip_panel_line",
    "below_ground",
    "Projected",
    "project_points",
    "PROJECTION_METHODS",
    "mean_plane",
    "fit_parallel_planes",
    "ParallelPlanes",
    "separations",
    "panel_basis",
]

_EPS = 1e-12

#: How point measurements are moved onto a section; the first is the default.
PROJECTION_METHODS = ("strike", "perpendicular")


def _out(x):
    x = np.asarray(x)
    return float(x) if x.ndim == 0 else x


# --------------------------------------------------------------------------- section geometry
@dataclass(frozen=True)
class SectionPoints:
    """Map points expressed in section coordinates (arrays of equal length).

    Attributes
    ----------
    distance_m : distance along the section from its first vertex (m); the nearest point of the
        line, extrapolated beyond the two ends along the end segments
    elevation_m : the points' elevations (m), NaN when 2-D points were given
    offset_m : signed horizontal distance from the line (m), + to the right of the section
        direction
    segment : index of the segment (panel) the point belongs to (0-based)
    beyond : True where the point lies before the start or after the end of the line
    """

    distance_m: np.ndarray
    elevation_m: np.ndarray
    offset_m: np.ndarray
    segment: np.ndarray
    beyond: np.ndarray


@dataclass(frozen=True)
class Section:
    """A section line: its vertices and, per segment, azimuth, length and start distance.

    Build it with :meth:`from_vertices`, which drops zero-length segments (repeated vertices)
    and counts them in ``dropped``.

    Attributes
    ----------
    vertices : (V, 2) metres, V >= 2, consecutive vertices distinct
    dropped : int, zero-length segments removed from the input
    """

    vertices: np.ndarray
    dropped: int = 0

    def __post_init__(self):
        v = np.asarray(self.vertices, dtype=float)
        if v.ndim != 2 or v.shape[1] < 2 or v.shape[0] < 2:
            raise GeometryError(f"a section line needs at least 2 vertices, got shape {v.shape}")
        v = v[:, :2]
        if not np.all(np.isfinite(v)):
            raise GeometryError("section vertices must be finite numbers")
        d = np.diff(v, axis=0)
        if np.any(np.hypot(d[:, 0], d[:, 1]) <= 0):
            raise GeometryError("a section line has a zero-length segment (use Section.from_vertices)")
        object.__setattr__(self, "vertices", v)

    @classmethod
    def from_vertices(cls, xy, min_segment_m=1e-3):
        """Section from a polyline, dropping segments shorter than ``min_segment_m`` (m).

        Raises
        ------
        GeometryError
            When fewer than two distinct vertices remain (a line of zero length).

        >>> s = Section.from_vertices([[0, 0], [0, 0], [100, 0], [100, 100]])
        >>> s.dropped, s.n_segments, s.azimuth.tolist()
        (1, 2, [90.0, 0.0])
        """
        v = np.asarray(xy, dtype=float)
        if v.ndim != 2 or v.shape[0] < 1:
            raise GeometryError(f"a section line needs an (n, 2) array of vertices, got shape {v.shape}")
        v = v[:, :2]
        if not np.all(np.isfinite(v)):
            raise GeometryError("section vertices must be finite numbers")
        keep = [0]
        for i in range(1, v.shape[0]):
            if np.hypot(*(v[i] - v[keep[-1]])) >= min_segment_m:
                keep.append(i)
        if len(keep) < 2:
            raise GeometryError("the section line has zero length (all its vertices coincide)")
        return cls(v[keep], v.shape[0] - len(keep))

    # -- per segment ------------------------------------------------------------------------
    @property
    def n_segments(self):
        return self.vertices.shape[0] - 1

    @property
    def length_m(self):
        """(K,) segment lengths, metres."""
        d = np.diff(self.vertices, axis=0)
        return np.hypot(d[:, 0], d[:, 1])

    @property
    def start_m(self):
        """(K,) distance along the section at the start of each segment, metres."""
        return np.concatenate([[0.0], np.cumsum(self.length_m)[:-1]])

    @property
    def end_m(self):
        return np.cumsum(self.length_m)

    @property
    def total_length_m(self):
        return float(np.sum(self.length_m))

    @property
    def direction(self):
        """(K, 2) unit horizontal directions of the segments (east, north)."""
        d = np.diff(self.vertices, axis=0)
        return d / self.length_m[:, None]

    @property
    def right(self):
        """(K, 2) unit horizontal normals pointing to the right of each segment."""
        d = self.direction
        return np.column_stack([d[:, 1], -d[:, 0]])

    @property
    def azimuth(self):
        """(K,) azimuth of each segment, degrees from grid north in [0, 360)."""
        d = self.direction
        return np.atleast_1d(normalize_azimuth(np.degrees(np.arctan2(d[:, 0], d[:, 1]))))

    @property
    def bend_angle(self):
        """(K − 1,) change of azimuth at each interior vertex, degrees in (−180, 180], + clockwise."""
        a = self.azimuth
        return (np.diff(a) + 180.0) % 360.0 - 180.0

    def segment_at(self, distance_m):
        """Index of the segment holding each distance (ends extrapolate onto the end segments)."""
        d = np.asarray(distance_m, dtype=float)
        k = np.searchsorted(self.end_m, d, side="left")
        return np.clip(k, 0, self.n_segments - 1)

    # -- coordinates ------------------------------------------------------------------------
    def to_map(self, distance_m, elevation_m=0.0, offset_m=0.0, segment=None):
        """Map points (..., 3) of section coordinates.

        Parameters
        ----------
        distance_m, elevation_m, offset_m : array_like, broadcast together (m)
            ``offset_m`` moves the point horizontally to the right of the segment (negative: left).
        segment : array_like of int, optional
            Panel to place each point in (default: the segment holding its distance).  A distance
            outside the segment extrapolates along that segment's line.

        >>> s = Section.from_vertices([[0, 0], [100, 0], [100, 100]])
        >>> s.to_map(150.0, 20.0).tolist()
        [100.0, 50.0, 20.0]
        """
        d, z, off = np.broadcast_arrays(np.asarray(distance_m, float), np.asarray(elevation_m, float),
                                        np.asarray(offset_m, float))
        k = self.segment_at(d) if segment is None else np.broadcast_to(np.asarray(segment, np.intp), d.shape)
        local = d - self.start_m[k]
        xy = self.vertices[k] + local[..., None] * self.direction[k] + off[..., None] * self.right[k]
        return np.concatenate([xy, z[..., None]], axis=-1)

    def to_section(self, points, segment=None):
        """Section coordinates of map points ``(..., 2)`` or ``(..., 3)``.

        The nearest point of the section line gives distance and offset; beyond the two ends the
        end segments are extended (``beyond`` is then True).  Outside a bend, points in the wedge
        whose nearest point is the bend vertex map to that vertex, so for them ``to_map`` does
        not give the point back (the only ambiguity of a bent section).  With ``segment`` the
        point is projected perpendicularly onto that segment's (extended) line instead.

        Returns
        -------
        SectionPoints
        """
        p = np.asarray(points, dtype=float)
        shape = p.shape[:-1]
        p = p.reshape(-1, p.shape[-1])
        z = p[:, 2] if p.shape[1] >= 3 else np.full(p.shape[0], np.nan)
        v0 = self.vertices[:-1]
        dirs = self.direction
        L = self.length_m
        rel = p[:, None, :2] - v0[None]                       # (N, K, 2)
        along = np.sum(rel * dirs[None], axis=-1)            # (N, K)
        side = np.sum(rel * self.right[None], axis=-1)
        K = self.n_segments
        lo = np.full(K, 0.0)
        hi = L.copy()
        lo[0] = -np.inf
        hi[-1] = np.inf
        clipped = np.clip(along, lo[None], hi[None])
        foot = v0[None] + clipped[..., None] * dirs[None]
        dist = np.hypot(*(p[:, None, :2] - foot).transpose(2, 0, 1))
        if segment is None:
            k = np.argmin(dist, axis=1)
        else:
            k = np.broadcast_to(np.asarray(segment, np.intp).ravel(), (p.shape[0],)).copy()
        rows = np.arange(p.shape[0])
        a = along[rows, k] if segment is not None else clipped[rows, k]
        s = side[rows, k]
        if segment is None:
            # At a bend wedge the perpendicular part is not the whole distance: keep |offset| equal
            # to the distance to the line, with the side's sign.
            s = np.where(np.abs(dist[rows, k] - np.abs(s)) > 1e-9, np.sign(s) * dist[rows, k], s)
            s = np.where(s == 0, 0.0, s)
        distance = self.start_m[k] + a
        beyond = (distance < 0) | (distance > self.total_length_m)
        r = lambda x: x.reshape(shape)  # noqa: E731
        return SectionPoints(r(distance), r(z), r(s), r(k), r(beyond))


def panel_basis(section):
    """Per segment: origin (K, 3) at z = 0, horizontal direction t (K, 3), right normal (K, 3)."""
    K = section.n_segments
    origin = np.column_stack([section.vertices[:-1], np.zeros(K)])
    t = np.column_stack([section.direction, np.zeros(K)])
    r = np.column_stack([section.right, np.zeros(K)])
    return origin, t, r


# --------------------------------------------------------------------------- profile
@dataclass(frozen=True)
class Profile:
    """The topographic profile of a section (arrays of equal length M).

    Attributes
    ----------
    distance_m : along the section (m), increasing; every vertex (bend) is a sample
    x, y : map coordinates of the samples (m)
    elevation_m : bilinear DEM elevation (m); NaN on nodata or off the DEM
    segment : panel of each sample (a bend vertex belongs to the segment before it)
    spacing_m : the sampling step asked for (m); each segment is cut into equal steps no longer
    """

    distance_m: np.ndarray
    x: np.ndarray
    y: np.ndarray
    elevation_m: np.ndarray
    segment: np.ndarray
    spacing_m: float

    def elevation_at(self, distance_m):
        """Ground elevation at distances (m), linear between samples; NaN next to nodata and
        outside the section."""
        d = np.asarray(distance_m, dtype=float)
        z = self.elevation_m
        out = np.interp(d, self.distance_m, np.nan_to_num(z, nan=0.0))
        # NaN wherever an interpolation neighbour carrying weight is NaN.
        j = np.clip(np.searchsorted(self.distance_m, d, side="right"), 1, len(z) - 1)
        z0, z1 = z[j - 1], z[j]
        d0, d1 = self.distance_m[j - 1], self.distance_m[j]
        with np.errstate(invalid="ignore", divide="ignore"):
            f = np.where(d1 > d0, (d - d0) / (d1 - d0), 0.0)
        bad = (np.isnan(z0) & (f < 1)) | (np.isnan(z1) & (f > 0))
        bad |= (d < self.distance_m[0] - 1e-9) | (d > self.distance_m[-1] + 1e-9)
        return _out(np.where(bad, np.nan, out))


def section_profile(section, grid, spacing_m=None):
    """Sample the DEM along the section line.

    Parameters
    ----------
    section : Section
    grid : Grid, the DEM window (metres)
    spacing_m : float, optional
        Sampling step (m); default the DEM cell size, so the profile has the DEM's resolution.
        Every vertex is sampled, and each segment is cut into equal steps no longer than this.

    Returns
    -------
    Profile

    Notes
    -----
    Elevations are bilinear between cell centres (:func:`slipsense.core.raster.sample_bilinear`),
    the same sampler every other step uses.
    """
    step = grid.cell_size if spacing_m is None else float(spacing_m)
    if not step > 0:
        raise InputError(f"profile spacing must be > 0 metres, got {spacing_m!r}")
    dist, seg = [np.zeros(1)], [np.zeros(1, np.intp)]
    for k, (s0, L) in enumerate(zip(section.start_m, section.length_m)):
        n = max(int(np.ceil(L / step - 1e-9)), 1)
        dist.append(s0 + L * np.arange(1, n + 1) / n)
        seg.append(np.full(n, k, np.intp))
    d = np.concatenate(dist)
    k = np.concatenate(seg)
    xyz = section.to_map(d, 0.0, 0.0, segment=k)
    # exact vertices at the ends of segments (no rounding drift from the cumulative distance)
    ends = np.concatenate([[0], np.cumsum([max(int(np.ceil(L / step - 1e-9)), 1) for L in section.length_m])])
    xyz[ends, :2] = section.vertices
    z = sample_bilinear(grid, xyz[:, 0], xyz[:, 1])
    return Profile(d, xyz[:, 0], xyz[:, 1], np.asarray(z, float), k, step)


# --------------------------------------------------------------------------- apparent dip
def angle_to_strike(azimuth, dip_dir):
    """Acute angle β (degrees, 0–90) between a section azimuth and the strike of planes.

    >>> angle_to_strike(90.0, 90.0), angle_to_strike(45.0, 315.0)
    (90.0, 0.0)
    """
    strike = np.asarray(dip_dir, dtype=float) - 90.0
    d = np.mod(np.asarray(azimuth, dtype=float) - strike, 180.0)
    return _out(np.minimum(d, 180.0 - d))


def apparent_dip(dip, beta):
    """Apparent dip α (degrees) of planes of true ``dip`` in a vertical section at ``beta``
    (degrees) to their strike: tan α = tan δ · sin β (Ragan 2009, *Structural Geology: An
    Introduction to Geometrical Techniques*, 4th ed.).

    A vertical plane has apparent dip 90 except in a section parallel to it (β = 0), where the
    apparent dip is undefined (NaN).

    >>> round(apparent_dip(30.0, 45.0), 4), apparent_dip(30.0, 0.0), apparent_dip(90.0, 20.0)
    (22.2077, 0.0, 90.0)
    """
    d = np.radians(check_dip(dip))
    b = np.radians(np.asarray(beta, dtype=float))
    if np.any(~np.isfinite(b) | (np.asarray(beta, float) < 0) | (np.asarray(beta, float) > 90)):
        raise InputError(f"the angle between section and strike must be in [0, 90] degrees, got {beta!r}")
    num = np.sin(d) * np.sin(b)
    den = np.where(np.asarray(dip, float) >= 90.0, 0.0, np.cos(d))  # cos(pi/2) is 6e-17, not 0
    a = np.degrees(np.arctan2(num, den))
    a = np.where((den < _EPS) & (np.abs(np.sin(b)) < _EPS), np.nan, a)
    return _out(a)


def true_dip_from_apparent(apparent, beta):
    """True dip δ (degrees) from an apparent dip in a section at ``beta`` to strike (degrees):
    tan δ = tan α / sin β (Ragan 2009).  NaN for β = 0 (a strike section says nothing of dip)
    or an apparent dip that no plane can show (α > 0 at β = 0)."""
    a = np.radians(np.asarray(apparent, dtype=float))
    b = np.radians(np.asarray(beta, dtype=float))
    with np.errstate(invalid="ignore", divide="ignore"):
        d = np.degrees(np.arctan2(np.tan(a), np.sin(b)))
    return _out(np.where(np.sin(b) < _EPS, np.nan, d))


def panel_lines(section, dip_dir, dip, point):
    """Where planes cut the vertical panel of every segment.

    In panel ``k`` a point is ``origin_k + s t_k + z e_up`` with ``s`` the distance from the
    segment's start (m) and ``z`` the elevation (m).  A plane with upward unit normal ``n``
    through ``point`` meets the panel on the line ``A s + B z + C = 0``.

    Parameters
    ----------
    section : Section
    dip_dir, dip : (G,) degrees
    point : (G, 3) metres, a point on each plane

    Returns
    -------
    A, B, C : (G, K) arrays
        ``A = n·t_k = sin δ cos(d − az_k)``, ``B = n_z = cos δ``, ``C = n·(origin_k − point)``.
        ``A = B = 0`` is a vertical plane parallel to the panel (no line, or the panel itself).
    """
    n = plane_to_normal(np.atleast_1d(np.asarray(dip_dir, float)), np.atleast_1d(np.asarray(dip, float)))
    c = np.asarray(point, dtype=float).reshape(-1, 3)
    origin, t, _ = panel_basis(section)
    A = n @ t.T
    B = np.broadcast_to(n[:, 2:3], A.shape).copy()
    C = np.einsum("gi,gki->gk", n, origin[None] - c[:, None, :])
    return A, B, C


def panel_apparent_dips(A, B, azimuth):
    """Apparent dip (degrees) and the azimuth it dips toward for panel lines ``A s + B z + C = 0``.

    Returns
    -------
    apparent : arctan(|A| / B) in degrees, 90 for vertical lines, NaN where A = B = 0
    toward : the section azimuth (dips toward the section's end) or its opposite (toward the
        start); for a horizontal line the section azimuth; NaN where undefined
    sense : "end", "start", "vertical", "horizontal" or "parallel"
    """
    A = np.asarray(A, float)
    B = np.asarray(B, float)
    az = np.broadcast_to(np.asarray(azimuth, float), A.shape)
    app = np.degrees(np.arctan2(np.abs(A), B))
    par = (np.abs(A) < 1e-12) & (np.abs(B) < 1e-12)
    app = np.where(par, np.nan, app)
    toward = np.where(A < -1e-12, normalize_azimuth(az + 180.0), az)
    toward = np.where(par, np.nan, toward)
    sense = np.where(par, "parallel", np.where(np.abs(B) < 1e-12, "vertical",
                     np.where(np.abs(A) < 1e-12, "horizontal", np.where(A > 0, "end", "start"))))
    return app, toward, sense


# --------------------------------------------------------------------------- clipping
def clip_panel_line(A, B, C, halfplanes=()):
    """The part of the line ``A s + B z + C = 0`` inside the half-planes ``g s + h z + k >= 0``.

    Parameters
    ----------
    A, B, C : float, the line (not both A and B zero)
    halfplanes : iterable of (g, h, k)

    Returns
    -------
    (q0, w, tau0, tau1) or None
        Points of the line are ``q0 + tau w`` with ``q0`` (s, z) the foot of the origin and ``w``
        the unit direction pointing down (or toward +s for a horizontal line); ``tau0 < tau1``
        bound the part inside (infinite bounds are possible).  None when nothing is inside.
    """
    nn = A * A + B * B
    if not nn > 0:
        return None
    q0 = np.array([-C * A / nn, -C * B / nn])
    w = np.array([B, -A]) / np.sqrt(nn)
    if w[1] > 1e-15 or (abs(w[1]) <= 1e-15 and w[0] < 0):
        w = -w
    lo, hi = -np.inf, np.inf
    for g, h, k in halfplanes:
        a = g * w[0] + h * w[1]
        b = g * q0[0] + h * q0[1] + k
        if abs(a) < 1e-15:
            if b < -1e-9:
                return None
            continue
        r = -b / a
        if a > 0:
            lo = max(lo, r)
        else:
            hi = min(hi, r)
        if lo >= hi:
            return None
    return q0, w, lo, hi


def below_ground(q0, w, tau0, tau1, start_m, profile, tol_m=1e-6):
    """Pieces ``[(ta, tb), ...]`` of a clipped panel line that lie at or below the ground.

    Between profile samples both the ground and the line are linear in the line parameter, so
    the crossings are exact for the piecewise-linear profile.  Stretches next to nodata count as
    not below ground (they are dropped).

    Parameters
    ----------
    q0, w, tau0, tau1 : from :func:`clip_panel_line` (finite bounds)
    start_m : distance along the section of the panel's origin (m)
    profile : Profile
    """
    if not (np.isfinite(tau0) and np.isfinite(tau1)) or tau1 <= tau0:
        return []
    s0 = start_m + q0[0] + tau0 * w[0]
    s1 = start_m + q0[0] + tau1 * w[0]
    taus = [tau0, tau1]
    if abs(w[0]) > 1e-12:
        lo, hi = min(s0, s1), max(s0, s1)
        inside = profile.distance_m[(profile.distance_m > lo) & (profile.distance_m < hi)]
        taus += list((inside - start_m - q0[0]) / w[0])
    taus = np.unique(np.asarray(taus, float))
    s = start_m + q0[0] + taus * w[0]
    zl = q0[1] + taus * w[1]
    f = profile.elevation_at(s) - zl
    f = np.atleast_1d(f)
    parts = []
    cur = None
    for i in range(len(taus) - 1):
        fa, fb = f[i], f[i + 1]
        ta, tb = taus[i], taus[i + 1]
        if not (np.isfinite(fa) and np.isfinite(fb)):
            if cur is not None:
                parts.append(cur)
                cur = None
            continue
        ina, inb = fa >= -tol_m, fb >= -tol_m
        if ina and inb:
            cur = (ta if cur is None else cur[0], tb)
        elif ina and not inb:
            tx = ta + (tb - ta) * fa / (fa - fb)
            cur = (ta if cur is None else cur[0], tx)
            parts.append(cur)
            cur = None
        elif inb and not ina:
            tx = ta + (tb - ta) * fa / (fa - fb)
            if cur is not None:
                parts.append(cur)
            cur = (tx, tb)
        else:
            if cur is not None:
                parts.append(cur)
                cur = None
    if cur is not None:
        parts.append(cur)
    return [(a, b) for a, b in parts if b - a > 1e-6]


# --------------------------------------------------------------------------- projection
@dataclass(frozen=True)
class Projected:
    """Point measurements moved onto a section (arrays of equal length).

    Attributes
    ----------
    distance_m : where the point lands, along the section (m); NaN when not projected
    segment : panel it lands in (−1 when not projected)
    offset_m : signed distance of the point from the section line (m, + right), before projection
    travel_m : horizontal distance the point was moved (m)
    method : "strike", "perpendicular", or "" when not projected
    status : "ok", "too far", "beyond the ends", "strike fallback" (the strike line meets the
        section at less than ``min_angle`` or not at all, so the point was moved perpendicular to
        the section instead), "no attitude"
    """

    distance_m: np.ndarray
    segment: np.ndarray
    offset_m: np.ndarray
    travel_m: np.ndarray
    method: np.ndarray
    status: np.ndarray


def project_points(section, xy, max_distance_m, method="strike", dip_dir=None, min_angle=10.0):
    """Move point measurements within ``max_distance_m`` of a section onto it.

    Parameters
    ----------
    section : Section
    xy : (N, 2) metres
    max_distance_m : float, points farther from the line than this are left out ("too far")
    method : "strike" (default) or "perpendicular"
        ``strike`` moves each point along the strike line of its own plane (``dip_dir`` needed),
        which keeps it on that plane and at its elevation: it lands where that plane's trace at
        the point's elevation crosses the section.  ``perpendicular`` moves it to the nearest point
        of the line.  Both keep the elevation.
    dip_dir : (N,) degrees, the measured planes (for ``strike``); NaN rows fall back to
        perpendicular ("no attitude")
    min_angle : degrees; a strike line meeting the section at less than this (or not within the
        section at all) falls back to perpendicular projection ("strike fallback").  Project
        choice: at small angles the strike line travels far (travel = distance / sin angle).

    Returns
    -------
    Projected
    """
    if method not in PROJECTION_METHODS:
        raise InputError(f"projection must be one of {', '.join(PROJECTION_METHODS)}, got {method!r}")
    if not max_distance_m >= 0:
        raise InputError(f"projection distance must be >= 0 metres, got {max_distance_m!r}")
    p = np.asarray(xy, dtype=float).reshape(-1, 2)
    n = p.shape[0]
    sp = section.to_section(p)
    dist = sp.distance_m.astype(float).copy()
    seg = sp.segment.astype(np.intp).copy()
    travel = np.abs(sp.offset_m).astype(float)
    meth = np.full(n, "perpendicular", dtype=object)
    status = np.full(n, "ok", dtype=object)
    if method == "strike":
        if dip_dir is None:
            raise InputError("projection along strike needs the dip directions of the measured planes")
        dd = np.broadcast_to(np.asarray(dip_dir, float), (n,))
        sv = strike_vector(np.nan_to_num(dd))[:, :2]                     # (N, 2)
        v0 = section.vertices[:-1]
        t = section.direction
        L = section.length_m
        # Solve v0_k + s t_k = p + lam sv  for s, lam, all points x segments.
        rel = p[:, None, :] - v0[None]                                   # (N, K, 2)
        det = t[None, :, 0] * (-sv[:, None, 1]) - t[None, :, 1] * (-sv[:, None, 0])
        with np.errstate(invalid="ignore", divide="ignore"):
            s = (rel[..., 0] * (-sv[:, None, 1]) - rel[..., 1] * (-sv[:, None, 0])) / det
            lam = (t[None, :, 0] * rel[..., 1] - t[None, :, 1] * rel[..., 0]) / det
        sinb = np.abs(det)
        ok = (sinb >= np.sin(np.radians(min_angle))) & (s >= -1e-9) & (s <= L[None] + 1e-9)
        cost = np.where(ok, np.abs(lam), np.inf)
        k = np.argmin(cost, axis=1)
        rows = np.arange(n)
        hit = np.isfinite(cost[rows, k]) & np.isfinite(dd)
        dist = np.where(hit, section.start_m[k] + s[rows, k], dist)
        seg = np.where(hit, k, seg)
        travel = np.where(hit, np.abs(lam[rows, k]), travel)
        meth = np.where(hit, "strike", meth)
        status = np.where(hit, status, np.where(np.isfinite(dd), "strike fallback", "no attitude"))
    far = np.abs(sp.offset_m) > max_distance_m
    beyond = sp.beyond & (meth == "perpendicular")
    status = np.where(beyond, "beyond the ends", status)
    status = np.where(far, "too far", status)
    drop = far | beyond
    dist = np.where(drop, np.nan, dist)
    seg = np.where(drop, -1, seg)
    travel = np.where(drop, np.nan, travel)
    meth = np.where(drop, "", meth)
    return Projected(dist, seg.astype(np.intp), np.asarray(sp.offset_m, float), travel,
                     np.asarray(meth, dtype=object), np.asarray(status, dtype=object))


# --------------------------------------------------------------------------- marker planes
def mean_plane(dip_dir, dip):
    """Mean attitude of planes: the normalised sum of their upward unit normals.

    Returns
    -------
    dip_dir, dip : degrees; resultant : mean resultant length R̄ in [0, 1] (1 = all identical;
    the usual measure of spread of unit vectors, common practice)
    """
    n = plane_to_normal(np.asarray(dip_dir, float), np.asarray(dip, float)).reshape(-1, 3)
    n = n[np.isfinite(n).all(axis=1)]
    if n.shape[0] == 0:
        return np.nan, np.nan, np.nan
    r = n.sum(axis=0)
    dd, dp = normal_to_plane(r)
    return float(dd), float(dp), float(np.linalg.norm(r) / n.shape[0])


@dataclass(frozen=True)
class ParallelPlanes:
    """Parallel planes: one shared attitude, one position per group (arrays broadcast over the
    leading axes of the points, e.g. Monte Carlo draws).

    Attributes
    ----------
    normal : (..., 3) shared upward unit normal (NaN when fewer than 3 points)
    centroid : (..., G, 3) a point on each group's plane: the centroid of its points (m; NaN for
        an empty group)
    count : (..., G) points used per group
    rms_m : (...) rms distance of the points from their group's plane (m)
    width_m : (...) spread of the centred points across their best-fit line (sqrt of the middle
        eigenvalue of the pooled scatter, m): small for straight pieces on planar ground, where the
        attitude is not determined
    """

    normal: np.ndarray
    centroid: np.ndarray
    count: np.ndarray
    rms_m: np.ndarray
    width_m: np.ndarray


def fit_parallel_planes(points, group, n_groups, fixed_normal=None):
    """Planes sharing one attitude, each group (a fault block's piece of a marker) at its own
    position — batched over leading axes.

    A marker surface cut by faults into blocks that only translated keeps one attitude: the shared
    normal is the eigenvector of the smallest eigenvalue of the summed scatter matrices of the
    groups, each centred on its own centroid (total least squares of parallel planes; Fernández
    2005 for one plane).

    Parameters
    ----------
    points : (..., N, 3) metres; rows with a NaN are ignored
    group : (N,) int, the group of each point in [0, n_groups); −1 = not used
    n_groups : int
    fixed_normal : (3,), optional; the attitude as given (only the positions are fitted)

    Returns
    -------
    ParallelPlanes

    >>> pts = np.array([[0, 0, 0], [10, 0, 0], [0, 10, 1], [0, 0, 5], [10, 0, 5], [0, 10, 6.]])
    >>> f = fit_parallel_planes(pts, [0, 0, 0, 1, 1, 1], 2)
    >>> np.round(f.normal / f.normal[2] * 10, 6).tolist(), f.centroid[..., 2].round(3).tolist()
    ([0.0, -1.0, 10.0], [0.333, 5.333])
    """
    p = np.asarray(points, dtype=float)
    g = np.asarray(group, dtype=np.intp).reshape(-1)
    if p.shape[-1] != 3 or p.shape[-2] != g.size:
        raise GeometryError(f"points must be (..., {g.size}, 3), got {p.shape}")
    onehot = (g[None, :] == np.arange(n_groups)[:, None]).astype(float)        # (G, N)
    valid = np.isfinite(p).all(axis=-1)                                            # (..., N)
    w = valid.astype(float)
    q = np.where(valid[..., None], p, 0.0)
    ref = np.nanmean(np.where(valid[..., None] & (g >= 0)[:, None], p, np.nan), axis=-2) \
        if np.any(valid & (g >= 0)) else np.zeros(p.shape[:-2] + (3,))
    ref = np.nan_to_num(ref)
    q = np.where(valid[..., None], q - ref[..., None, :], 0.0)
    cnt = np.einsum("gn,...n->...g", onehot, w)                                   # (..., G)
    with np.errstate(invalid="ignore", divide="ignore"):
        cen = np.einsum("gn,...ni->...gi", onehot, q) / cnt[..., None]
    used = valid & (g >= 0)
    gi = np.clip(g, 0, max(n_groups - 1, 0))
    d = np.where(used[..., None], q - np.nan_to_num(cen)[..., gi, :], 0.0)
    scat = np.einsum("...ni,...nj->...ij", d, d)
    n_used = used.sum(axis=-1)
    evals, evecs = np.linalg.eigh(scat)
    if fixed_normal is None:
        m = evecs[..., :, 0]
    else:
        f = np.asarray(fixed_normal, float)
        m = np.broadcast_to(f / np.linalg.norm(f), evecs.shape[:-1]).copy()
    m = m * np.where(m[..., 2:3] < 0, -1.0, 1.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        width = np.sqrt(np.clip(evals[..., 1], 0, None) / n_used)
        res = np.sum(d * m[..., None, :], axis=-1)
        rms = np.sqrt(np.sum(np.where(used, res * res, 0.0), axis=-1) / n_used)
    few = n_used < 3
    m = np.where(few[..., None], np.nan, m)
    cen = cen + ref[..., None, :]
    return ParallelPlanes(m, cen, cnt, np.where(few, np.nan, rms), np.where(few, np.nan, width))


# --------------------------------------------------------------------------- separations
def separations(normal, point_hw, point_fw, line_dir, section_dir):
    """Apparent offsets of a planar marker across a fault, seen in a vertical section.

    Parameters
    ----------
    normal : (..., 3) unit normal of the marker (either sense)
    point_hw, point_fw : (..., 3) a point on the marker in the hanging wall and in the footwall (m)
    line_dir : (..., 3) unit direction of the fault's line in the section (the observation line),
        pointing up (or, for a horizontal line, toward the section's end)
    section_dir : (..., 3) unit horizontal direction of the section panel

    Returns
    -------
    dict of (...) arrays, metres:

    * ``separation_m`` — from the footwall cut-off to the hanging-wall cut-off along the fault's
      line in the section, + up the line (the hanging-wall piece appears raised: apparent
      reverse), − down (apparent normal); NaN where the marker is parallel to that line.
    * ``vertical_separation_m`` — hanging-wall marker minus footwall marker, measured vertically
      (+ = hanging-wall piece higher); NaN for a vertical marker.
    * ``horizontal_separation_m`` — from the footwall to the hanging-wall marker, measured
      horizontally along the section (+ toward its end); NaN where the marker strikes along the
      section.
    * ``normal_offset_m`` — ``m·(p_hw − p_fw)``, the offset normal to the marker.

    Notes
    -----
    With ``Δ = m·(p_hw − p_fw)``: separation along a line of direction ``o`` is ``Δ / (m·o)``
    (Xu et al. 2009, *Tectonophysics* 467: the separation on any line of the fault plane).  The
    slip ``u`` of the hanging wall satisfies ``m·u = Δ`` — one equation per marker, whatever the
    line of observation — so one marker and no slip direction leave the slip under-determined.
    """
    m = np.asarray(normal, float)
    delta = np.sum(m * (np.asarray(point_hw, float) - np.asarray(point_fw, float)), axis=-1)
    mo = np.sum(m * np.asarray(line_dir, float), axis=-1)
    mt = np.sum(m * np.asarray(section_dir, float), axis=-1)
    mz = m[..., 2]
    with np.errstate(invalid="ignore", divide="ignore"):
        along = np.where(np.abs(mo) < 1e-9, np.nan, delta / mo)
        vert = np.where(np.abs(mz) < 1e-9, np.nan, delta / mz)
        horiz = np.where(np.abs(mt) < 1e-9, np.nan, delta / mt)
    return {"separation_m": _out(along), "vertical_separation_m": _out(vert),
            "horizontal_separation_m": _out(horiz), "normal_offset_m": _out(delta)}

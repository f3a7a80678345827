"""Fault planes from map traces over a DEM, and what follows from a plane: structure contours,
the predicted outcrop trace, and the depth to the plane below points (numpy only).

Traces are ragged and travel as flat arrays (see :class:`Traces`): vertex coordinates, part
offsets, and the trace each part belongs to.  A MultiLineString is one trace of several parts and
is fitted as one plane.

Method (the "rule of Vs" done as a fit): each trace is densified to a spacing (default the DEM cell
size), the DEM is sampled bilinearly under every point, and a total-least-squares plane is fitted
through the 3-D points (:mod:`slipsense.core.planes`).  Uncertainty comes from Monte Carlo draws:
each digitised vertex is moved by independent Gaussian errors of ``sigma_xy_m`` in x and y (the
densified points between two vertices move with them, as a digitising error would), the DEM is
sampled again at the moved points and ``sigma_z_m`` Gaussian error is added to every sample; the
central 95 % of the refitted orientations is the interval.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import GeometryError, InputError
from .orientation import line_to_vector, plane_to_normal
from .planes import PlaneResults, QualityRules, planes_from_points
from .raster import Grid, contour_segments, sample_bilinear, sample_grouped

__all__ = [
    "Traces",
    "Densified",
    "densify",
    "TracePlanes",
    "fit_trace_planes",
    "window_groups",
    "structure_contours",
    "predicted_trace_segments",
    "plane_elevation",
    "depth_to_plane",
    "DepthResults",
]


@dataclass(frozen=True)
class Traces:
    """Many map traces as flat arrays.

    Attributes
    ----------
    xy : (N, 2) float, metres in the working CRS
        All vertices, part after part.
    part_offsets : (P + 1,) int
        Part ``p`` is ``xy[part_offsets[p]:part_offsets[p+1]]``.
    part_trace : (P,) int
        Index of the trace each part belongs to, non-decreasing.
    n_traces : int
    """

    xy: np.ndarray
    part_offsets: np.ndarray
    part_trace: np.ndarray
    n_traces: int

    def __post_init__(self):
        xy = np.asarray(self.xy, dtype=float).reshape(-1, 2)
        po = np.asarray(self.part_offsets, dtype=np.intp)
        pt = np.asarray(self.part_trace, dtype=np.intp)
        if po.size != pt.size + 1 or po[0] != 0 or po[-1] != xy.shape[0]:
            raise GeometryError("part offsets do not match the vertices")
        if pt.size and (np.any(np.diff(pt) < 0) or pt[-1] >= self.n_traces or pt[0] < 0):
            raise GeometryError("parts must be ordered by trace")
        if not np.all(np.isfinite(xy)):
            raise GeometryError("trace vertices must be finite numbers")
        object.__setattr__(self, "xy", xy)
        object.__setattr__(self, "part_offsets", po)
        object.__setattr__(self, "part_trace", pt)

    @classmethod
    def from_lines(cls, lines):
        """Build from a list of traces, each an (n, 2) array or a list of such parts."""
        xy, offs, owner = [], [0], []
        for t, line in enumerate(lines):
            is_parts = isinstance(line, (list, tuple)) and len(line) > 0 and np.ndim(line[0]) == 2
            parts = list(line) if is_parts else [line]
            for part in parts:
                a = np.asarray(part, dtype=float)[:, :2]
                xy.append(a)
                offs.append(offs[-1] + len(a))
                owner.append(t)
        xy = np.concatenate(xy) if xy else np.zeros((0, 2))
        return cls(xy, np.array(offs), np.array(owner, dtype=np.intp), len(lines))

    def bounds(self):
        """(xmin, ymin, xmax, ymax) of all vertices."""
        return (*self.xy.min(axis=0), *self.xy.max(axis=0))


@dataclass(frozen=True)
class Densified:
    """Points along traces at a spacing, remembered as blends of two digitised vertices.

    ``xy[k] = (1 - frac[k]) * vertices[i0[k]] + frac[k] * vertices[i0[k] + 1]`` (``frac`` 0 for a
    part's last vertex, with ``i0`` pointing at it).  ``part`` and ``trace`` give each point's
    owners, ``along_m`` its distance along its part.
    """

    xy: np.ndarray
    i0: np.ndarray
    frac: np.ndarray
    part: np.ndarray
    trace: np.ndarray
    along_m: np.ndarray

    def at(self, vertices):
        """The same points for moved ``vertices`` (N, 2)."""
        v = np.asarray(vertices, dtype=float)
        i1 = np.minimum(self.i0 + 1, v.shape[0] - 1)
        f = self.frac[:, None]
        return v[self.i0] * (1.0 - f) + v[i1] * f


def densify(traces, spacing_m):
    """Points every ``spacing_m`` metres (at most) along every part, keeping every vertex.

    Returns
    -------
    Densified
    """
    if not spacing_m > 0:
        raise InputError(f"spacing must be > 0 metres, got {spacing_m!r}")
    xy = traces.xy
    po = traces.part_offsets
    n_parts = po.size - 1
    # Segments are (k, k+1) inside a part.
    seg_start = np.arange(xy.shape[0] - 1) if xy.shape[0] > 1 else np.zeros(0, np.intp)
    vertex_part = np.repeat(np.arange(n_parts), np.diff(po))
    same = vertex_part[seg_start] == vertex_part[np.minimum(seg_start + 1, xy.shape[0] - 1)] if seg_start.size else seg_start.astype(bool)
    seg_start = seg_start[same]
    d = xy[seg_start + 1] - xy[seg_start]
    seg_len = np.hypot(d[:, 0], d[:, 1])
    n_sub = np.maximum(np.ceil(seg_len / spacing_m).astype(np.intp), 1)
    i0 = np.repeat(seg_start, n_sub)
    first = np.repeat(np.cumsum(n_sub) - n_sub, n_sub)
    k = np.arange(i0.size) - first
    frac = k / np.repeat(n_sub, n_sub)
    # Add the last vertex of each part (and lone-vertex parts).
    last = po[1:] - 1
    valid_last = np.diff(po) > 0
    i0 = np.concatenate([i0, last[valid_last]])
    frac = np.concatenate([frac, np.zeros(int(valid_last.sum()))])
    order = np.lexsort((frac, i0))
    i0, frac = i0[order], frac[order]
    part = vertex_part[i0]
    pts = Densified(np.zeros((0, 2)), i0, frac, part, traces.part_trace[part], np.zeros(0))
    pxy = pts.at(xy)
    step = np.zeros(pxy.shape[0])
    if pxy.shape[0] > 1:
        step[1:] = np.hypot(*(pxy[1:] - pxy[:-1]).T)
        step[1:][part[1:] != part[:-1]] = 0.0
    along = np.cumsum(step)
    part_start = np.searchsorted(part, np.arange(n_parts))
    along = along - along[np.minimum(part_start, max(along.size - 1, 0))][part] if along.size else along
    return Densified(pxy, i0, frac, part, traces.part_trace[part], along)


@dataclass(frozen=True)
class TracePlanes:
    """Result of :func:`fit_trace_planes`.

    Attributes
    ----------
    planes : PlaneResults
        One row per trace.
    n_nodata : (T,) int
        Densified points dropped because the DEM had no value there (or they were off the DEM).
    n_total : (T,) int
        Densified points per trace before dropping.
    windows : PlaneResults or None
        One row per along-trace window (when asked).
    window_trace : (W,) int, window_start_m, window_end_m : (W,) metres along the part
    window_part : (W,) int
    points : Densified
        The densified points (for drawing what was fitted).
    """

    planes: PlaneResults
    n_nodata: np.ndarray
    n_total: np.ndarray
    windows: PlaneResults | None
    window_trace: np.ndarray
    window_part: np.ndarray
    window_start_m: np.ndarray
    window_end_m: np.ndarray
    points: Densified


def window_groups(points, window_m, step_m=None):
    """Index groups of densified points in along-trace windows.

    Windows of length ``window_m`` start every ``step_m`` (default half a window) along each part;
    a part shorter than a window gives one window over its whole length.

    Returns
    -------
    index : (M,) int   point indices, window after window
    offsets : (W + 1,) int
    part, start_m, end_m : (W,)
    """
    if not window_m > 0:
        raise InputError(f"window must be > 0 metres, got {window_m!r}")
    step = window_m / 2.0 if step_m is None else float(step_m)
    idx, offs, wpart, ws, we = [], [0], [], [], []
    part = points.part
    bounds = np.flatnonzero(np.r_[True, part[1:] != part[:-1], True]) if part.size else np.array([0])
    for a, b in zip(bounds[:-1], bounds[1:]):
        s = points.along_m[a:b]
        length = s[-1] if s.size else 0.0
        starts = np.arange(0.0, max(length - window_m, 0.0) + 1e-9, step)
        lo = np.searchsorted(s, starts, side="left")
        hi = np.searchsorted(s, starts + window_m, side="right")
        for st, l_, h_ in zip(starts, lo, hi):
            idx.append(np.arange(a + l_, a + h_))
            offs.append(offs[-1] + (h_ - l_))
            wpart.append(part[a])
            ws.append(st)
            we.append(min(st + window_m, length))
    index = np.concatenate(idx) if idx else np.zeros(0, np.intp)
    return index, np.array(offs), np.array(wpart, np.intp), np.array(ws), np.array(we)


def fit_trace_planes(traces, grid, *, spacing_m=None, sigma_xy_m=0.0, sigma_z_m=0.0, draws=0,
                     seed=0, window_m=None, rules=QualityRules(), progress=None):
    """Best-fit fault planes of map traces draped on a DEM, with intervals and quality.

    Parameters
    ----------
    traces : Traces
        Map traces, metres, in the CRS of ``grid``.
    grid : Grid or GridSet
        DEM window covering the traces (plus the margin of
        :func:`slipsense.steps.dem_margin_m`), or one window per group of traces (a GridSet whose
        groups are the trace indices); elevations in metres.
    spacing_m : float, optional
        Densification spacing, metres (default: the DEM cell size).
    sigma_xy_m : float
        1-sigma horizontal digitising/mapping error of each vertex, metres.
    sigma_z_m : float
        1-sigma DEM elevation error, metres.
    draws : int
        Monte Carlo draws (0: no intervals).  Reproducible for ``seed``.
    window_m : float, optional
        Also fit planes in along-trace windows of this length (metres, 50 % overlap).
    progress : callable, optional
        ``progress(fraction)`` is called as draws proceed; it may raise to cancel.

    Returns
    -------
    TracePlanes
    """
    spacing = grid.cell_size if spacing_m is None else float(spacing_m)
    for name, v in (("sigma-xy", sigma_xy_m), ("sigma-z", sigma_z_m)):
        if not (np.isfinite(v) and v >= 0):
            raise InputError(f"{name} must be >= 0 metres, got {v!r}")
    if draws < 0:
        raise InputError(f"draws must be >= 0, got {draws!r}")
    dens = densify(traces, spacing)
    z = sample_grouped(grid, dens.xy[:, 0], dens.xy[:, 1], dens.trace)
    pts = np.column_stack([dens.xy, z])
    t = traces.n_traces
    n_total = np.bincount(dens.trace, minlength=t)
    n_nodata = np.bincount(dens.trace, weights=~np.isfinite(z), minlength=t).astype(int)
    offsets = np.r_[0, np.cumsum(n_total)]
    vertices = traces.xy

    def make_perturb(index=None):
        def perturb(rng):
            moved = vertices + rng.normal(scale=sigma_xy_m, size=vertices.shape) if sigma_xy_m > 0 else vertices
            dxy = dens.at(moved)
            if index is not None:
                dxy = dxy[index]
            x, y = dxy[:, 0], dxy[:, 1]
            z = sample_grouped(grid, x, y, dens.trace if index is None else dens.trace[index])
            if sigma_z_m > 0:
                z = z + rng.normal(scale=sigma_z_m, size=z.shape)
            return x, y, z
        return perturb

    state = {"done": 0}
    total = max(int(draws), 1) * (2 if window_m else 1)

    def counting(perturb):
        def wrapped(rng):
            state["done"] += 1
            if progress is not None:
                progress(min(state["done"] / total, 1.0))
            return perturb(rng)
        return wrapped

    planes = planes_from_points(
        pts, offsets, sigma_xy_m=sigma_xy_m, sigma_z_m=sigma_z_m, draws=draws, seed=seed,
        perturb=counting(make_perturb()), rules=rules,
    )
    windows = None
    empty = np.zeros(0)
    wtrace, wpart, ws, we = empty.astype(np.intp), empty.astype(np.intp), empty, empty
    if window_m:
        index, woffs, wpart, ws, we = window_groups(dens, float(window_m))
        wtrace = traces.part_trace[wpart] if wpart.size else wpart
        windows = planes_from_points(
            pts[index], woffs, sigma_xy_m=sigma_xy_m, sigma_z_m=sigma_z_m, draws=draws,
            seed=seed + 1, perturb=counting(make_perturb(index)), rules=rules,
        )
    if progress is not None:
        progress(1.0)
    return TracePlanes(planes, n_nodata, n_total, windows, wtrace, wpart, ws, we, dens)


def plane_elevation(x, y, point, dip_dir, dip):
    """Elevation (m) of the plane through ``point`` (x, y, z) with ``dip_dir``/``dip`` at (x, y).

    NaN for vertical planes.
    """
    n = plane_to_normal(dip_dir, dip)
    p = np.asarray(point, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        z = p[..., 2] - (n[..., 0] * (np.asarray(x) - p[..., 0]) + n[..., 1] * (np.asarray(y) - p[..., 1])) / n[..., 2]
    return np.where(np.abs(n[..., 2]) < 1e-9, np.nan, z)


def structure_contours(centroid, dip_dir, dip, along_min_m, along_max_m, z_min, z_max, interval_m):
    """Strike lines (structure contours) of one plane at a regular elevation interval.

    Parameters
    ----------
    centroid : (3,) a point on the plane, metres
    dip_dir, dip : degrees
    along_min_m, along_max_m : extent of the lines along strike, measured from the centroid (m)
    z_min, z_max : elevation range to draw (m)
    interval_m : contour interval (m); contours sit at whole multiples of it

    Returns
    -------
    elevations : (K,) metres
    lines : (K, 2, 2) end points [[x0, y0], [x1, y1]]

    Raises
    ------
    InputError
        For a vertical or horizontal plane (no strike lines can be drawn) or a bad interval.
    """
    if not interval_m > 0:
        raise InputError(f"contour interval must be > 0 metres, got {interval_m!r}")
    if not (0.0 < dip < 90.0 - 1e-6):
        raise InputError(f"no structure contours for a plane of dip {dip:g}: it must dip between 0 and 90")
    c = np.asarray(centroid, dtype=float)
    zs = np.arange(np.ceil(z_min / interval_m), np.floor(z_max / interval_m) + 1) * interval_m
    d = np.radians(dip_dir)
    down = np.array([np.sin(d), np.cos(d)])
    s = np.array([np.sin(d - np.pi / 2), np.cos(d - np.pi / 2)])
    h = (c[2] - zs) / np.tan(np.radians(dip))
    base = c[:2][None] + h[:, None] * down[None]
    lines = np.stack([base + along_min_m * s, base + along_max_m * s], axis=1)
    return zs, lines


def predicted_trace_segments(grid, point, dip_dir, dip, near_xy=None, max_distance_m=None):
    """Where the plane should crop out: the zero contour of DEM − plane elevation.

    Parameters
    ----------
    grid : Grid
    point : (3,) a point on the plane (m); dip_dir, dip : degrees
    near_xy : (n, 2) optional polyline (the mapped trace); with ``max_distance_m`` only segments
        whose midpoints lie within that distance of it are kept.

    Returns
    -------
    (S, 2, 2) segment end points (join them with a geometry library for drawing).
    """
    xc, yc = grid.cell_centres()
    gx, gy = np.meshgrid(xc, yc)
    if dip >= 90.0 - 1e-9:
        n = plane_to_normal(dip_dir, 90.0)
        diff = (gx - point[0]) * n[0] + (gy - point[1]) * n[1]
        diff = np.where(np.isfinite(grid.values), diff, np.nan)
    else:
        diff = grid.values - plane_elevation(gx, gy, point, dip_dir, dip)
    segs = contour_segments(xc, yc, diff, 0.0)
    if near_xy is not None and max_distance_m is not None and segs.shape[0]:
        mid = segs.mean(axis=1)
        segs = segs[distance_to_polyline(mid, np.asarray(near_xy, float)) <= max_distance_m]
    return segs


def distance_to_polyline(points, line, chunk=4096):
    """Shortest distance (m) from each of ``points`` (M, 2) to the polyline ``line`` (n, 2)."""
    p = np.asarray(points, dtype=float)
    a = line[:-1]
    b = line[1:]
    if a.shape[0] == 0:
        return np.hypot(*(p - line[0]).T)
    ab = b - a
    ab2 = np.maximum(np.sum(ab * ab, axis=1), 1e-300)
    out = np.empty(p.shape[0])
    for s in range(0, p.shape[0], chunk):
        q = p[s:s + chunk, None, :]
        t = np.clip(np.sum((q - a[None]) * ab[None], axis=2) / ab2[None], 0.0, 1.0)
        proj = a[None] + t[..., None] * ab[None]
        out[s:s + chunk] = np.sqrt(np.min(np.sum((q - proj) ** 2, axis=2), axis=1))
    return out


@dataclass(frozen=True)
class DepthResults:
    """Where lines from points (e.g. borehole collars) meet planes.

    Attributes (arrays of equal length)
    ----------
    along_m : distance from the collar along the hole to the plane (m); NaN if never met
    depth_m : vertical depth of the intersection below the collar (m)
    x, y, z : the 3-D intersection point (m)
    status : "ok", "parallel" (hole parallel to the plane), "above" (the plane lies behind the
        collar, up the hole direction), "ill-posed" (no plane orientation)
    """

    along_m: np.ndarray
    depth_m: np.ndarray
    x: np.ndarray
    y: np.ndarray
    z: np.ndarray
    status: np.ndarray


def depth_to_plane(collar, trend, plunge, point, dip_dir, dip):
    """Intersect holes (collar + trend/plunge, degrees) with planes (point + dip_dir/dip).

    All arguments broadcast: ``collar`` and ``point`` are (..., 3) metres (east, north, up);
    plunge 90 is a vertical hole.  The hole runs down from the collar in direction
    ``(sin t cos p, cos t cos p, −sin p)``.
    """
    c = np.asarray(collar, dtype=float)
    p = np.asarray(point, dtype=float)
    dd = np.asarray(dip_dir, dtype=float)
    dp = np.asarray(dip, dtype=float)
    ill = ~(np.isfinite(dd) & np.isfinite(dp))
    n = plane_to_normal(np.nan_to_num(dd), np.nan_to_num(dp))
    u = line_to_vector(trend, plunge)
    denom = np.sum(n * u, axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        t = np.sum(n * (p - c), axis=-1) / denom
    parallel = np.abs(denom) < 1e-9
    above = (t < 0) & ~parallel
    hit = c + np.nan_to_num(t)[..., None] * u
    bad = ill | parallel | above
    nanif = lambda v: np.where(bad, np.nan, v)  # noqa: E731
    status = np.where(ill, "ill-posed", np.where(parallel, "parallel", np.where(above, "above", "ok")))
    return DepthResults(nanif(t), nanif(c[..., 2] - hit[..., 2]), nanif(hit[..., 0]),
                        nanif(hit[..., 1]), nanif(hit[..., 2]), np.asarray(status))

"""Steps for fault planes: from traces over a DEM, from points, and the plane at depth (numpy only)."""
from __future__ import annotations

import numpy as np

from ..core.orientation import check_azimuth, check_plunge
from ..core.planes import planes_from_points
from ..core.raster import Grid, sample_bilinear
from ..core.traces import (
    depth_to_plane,
    fit_trace_planes,
    predicted_trace_segments,
    structure_contours as _structure_contours,
)
from ..errors import DataError, InputError
from ..tables.planes import (
    contour_table,
    depth_table,
    outcrop_table,
    point_plane_table,
    trace_plane_table,
    window_table,
)
from .base import StepResult, quality_counts

__all__ = ["trace_planes", "point_planes", "structure_contours", "outcrop_traces", "plane_depths"]


def _plane_warnings(kind, ids, planes):
    out = []
    for i, q, why in zip(ids, planes.quality, planes.reason):
        if q in ("ill-posed", "poor"):
            out.append(f"{kind} {i}: {q} ({why})")
    return out


def trace_planes(trace_ids, traces, grid, *, spacing_m=None, sigma_xy_m=5.0, sigma_z_m=2.0,
                 draws=200, seed=0, window_m=None, progress=None):
    """Fault planes from map traces over a DEM (see :func:`slipsense.core.traces.fit_trace_planes`).

    Parameters
    ----------
    trace_ids : sequence of str, one per trace
    traces : Traces, metres in the DEM's CRS
    grid : Grid covering the traces
    spacing_m, sigma_xy_m, sigma_z_m, draws, seed, window_m : see the core function.

    Returns
    -------
    StepResult with tables ``trace_planes`` and (with ``window_m``) ``trace_windows``.
    """
    if traces.n_traces == 0:
        raise DataError("no traces to fit: the trace layer is empty")
    res = fit_trace_planes(traces, grid, spacing_m=spacing_m, sigma_xy_m=sigma_xy_m,
                           sigma_z_m=sigma_z_m, draws=draws, seed=seed, window_m=window_m,
                           progress=progress)
    tables = {"trace_planes": trace_plane_table(trace_ids, res)}
    warnings = []
    for i, nd, nt in zip(trace_ids, res.n_nodata, res.n_total):
        if nd:
            what = "all" if nd == nt else f"{nd} of {nt}"
            warnings.append(f"trace {i}: {what} points fell on DEM nodata or off the DEM and were dropped")
    warnings += _plane_warnings("trace", trace_ids, res.planes)
    if res.windows is not None:
        tables["trace_windows"] = window_table(trace_ids, res)
    summary = {"traces": int(traces.n_traces), "quality": quality_counts(res.planes.quality),
               "points": int(res.n_total.sum()), "points_dropped": int(res.n_nodata.sum())}
    if res.windows is not None:
        summary["windows"] = len(res.windows)
    return StepResult(tables, summary, warnings)


def point_planes(group_ids, groups, *, sigma_xy_m=0.0, sigma_z_m=0.0, draws=0, seed=0):
    """Planes through groups of 3-D points (three-point problem for three, least squares beyond).

    Parameters
    ----------
    group_ids : sequence of str
    groups : list of (n, 3) arrays, metres (east, north, up)

    Returns
    -------
    StepResult with table ``point_planes``.
    """
    if len(groups) == 0:
        raise DataError("no points to fit: the point layer is empty")
    pts = np.concatenate([np.asarray(g, float).reshape(-1, 3) for g in groups])
    offsets = np.r_[0, np.cumsum([len(g) for g in groups])]
    planes = planes_from_points(pts, offsets, sigma_xy_m=sigma_xy_m, sigma_z_m=sigma_z_m,
                                draws=draws, seed=seed)
    table = point_plane_table(group_ids, planes, [np.asarray(g, float).reshape(-1, 3)[:, :2] for g in groups])
    return StepResult({"point_planes": table},
                      {"groups": len(groups), "quality": quality_counts(planes.quality)},
                      _plane_warnings("group", group_ids, planes))


def _usable(dip_dir, dip):
    return np.isfinite(np.asarray(dip_dir, float)) & np.isfinite(np.asarray(dip, float))


def structure_contours(plane_ids, dip_dir, dip, centroids, extents_xy, *, interval_m, z_min=None,
                       z_max=None, depth_m=500.0, margin_m=250.0):
    """Strike lines of fitted planes at a regular elevation interval.

    Parameters
    ----------
    plane_ids : sequence of str
    dip_dir, dip : (G,) degrees; centroids : (G, 3) metres, a point on each plane
    extents_xy : list of (n, 2) arrays, the map geometry of each plane (its trace or points); the
        strike lines span its extent along strike plus ``margin_m`` at each end.
    interval_m : contour interval, metres
    z_min, z_max : elevation range (m); default ``centroid_z - depth_m`` to ``centroid_z + depth_m``
    depth_m : half-height of the default elevation range, metres
    """
    dip_dir = np.asarray(dip_dir, float)
    dip = np.asarray(dip, float)
    c = np.asarray(centroids, float)
    per, warnings = [], []
    for i, pid in enumerate(plane_ids):
        if not _usable(dip_dir[i], dip[i]):
            per.append(None)
            warnings.append(f"plane {pid}: no orientation (ill-posed), no contours")
            continue
        if not (0.0 < dip[i] < 89.9):
            per.append(None)
            warnings.append(f"plane {pid}: dip {dip[i]:.1f} gives no strike lines (vertical or horizontal)")
            continue
        d = np.radians(dip_dir[i] - 90.0)
        s = np.array([np.sin(d), np.cos(d)])
        ext = np.asarray(extents_xy[i], float).reshape(-1, 2)
        along = (ext - c[i, :2]) @ s
        lo = (along.min() if along.size else 0.0) - margin_m
        hi = (along.max() if along.size else 0.0) + margin_m
        zlo = c[i, 2] - depth_m if z_min is None else z_min
        zhi = c[i, 2] + depth_m if z_max is None else z_max
        zs, lines = _structure_contours(c[i], dip_dir[i], dip[i], lo, hi, zlo, zhi, interval_m)
        per.append((zs, lines, float(dip_dir[i]), float(dip[i])))
    table = contour_table(plane_ids, per)
    return StepResult({"structure_contours": table},
                      {"planes": len(plane_ids), "contours": len(table)}, warnings)


def outcrop_traces(plane_ids, dip_dir, dip, centroids, near_xy, grid, *, max_distance_m=1000.0,
                   progress=None):
    """Predicted outcrop traces of planes across the DEM within ``max_distance_m`` of their traces.

    The prediction is where the fitted plane meets the DEM surface: the zero line of
    DEM − plane elevation, kept where it lies within ``max_distance_m`` (metres) of the mapped
    trace — where the fault should continue under cover.
    """
    if not max_distance_m > 0:
        raise InputError(f"distance must be > 0 metres, got {max_distance_m!r}")
    dip_dir = np.asarray(dip_dir, float)
    dip = np.asarray(dip, float)
    c = np.asarray(centroids, float)
    segs, warnings = [], []
    for i, pid in enumerate(plane_ids):
        if progress is not None:
            progress(i / max(len(plane_ids), 1))
        if not _usable(dip_dir[i], dip[i]):
            segs.append(None)
            warnings.append(f"plane {pid}: no orientation (ill-posed), no predicted trace")
            continue
        near = np.asarray(near_xy[i], float).reshape(-1, 2)
        sub = _subgrid(grid, near, max_distance_m)
        if sub is None:
            segs.append(None)
            warnings.append(f"plane {pid}: its trace is off the DEM")
            continue
        s = predicted_trace_segments(sub, c[i], dip_dir[i], dip[i], near, max_distance_m)
        if len(s) == 0:
            warnings.append(f"plane {pid}: the plane does not meet the DEM within {max_distance_m:g} m")
        segs.append(s)
    table = outcrop_table(plane_ids, segs, max_distance_m)
    return StepResult({"outcrop_traces": table},
                      {"planes": len(plane_ids), "predicted": len(table)}, warnings)


def _subgrid(grid, xy, margin):
    """The part of ``grid`` within ``margin`` of the bounding box of ``xy`` (or None)."""
    a, _, c, _, e, f = grid.transform
    rows, cols = grid.values.shape
    x0, y0 = xy.min(axis=0) - margin
    x1, y1 = xy.max(axis=0) + margin
    c0 = int(max(np.floor((x0 - c) / a), 0))
    c1 = int(min(np.ceil((x1 - c) / a), cols))
    r0 = int(max(np.floor((y1 - f) / e), 0))
    r1 = int(min(np.ceil((y0 - f) / e), rows))
    if c1 - c0 < 2 or r1 - r0 < 2:
        return None
    return Grid(grid.values[r0:r1, c0:c1], (a, 0.0, c + c0 * a, 0.0, e, f + r0 * e), grid.origin,
                (grid.offset[0] + c0, grid.offset[1] + r0))


def plane_depths(collar_ids, collar_xy, grid, trend, plunge, plane_ids, dip_dir, dip, centroids,
                 *, collar_z=None, pair_plane=None, dip_interval=None, dip_dir_interval=None):
    """Depth to fitted planes below points (e.g. planned borehole collars).

    Parameters
    ----------
    collar_ids : (C,) str; collar_xy : (C, 2) metres
    grid : Grid or None; collar elevations are sampled from it unless ``collar_z`` is given
    trend, plunge : (C,) degrees, hole direction (plunge 90 = vertical)
    plane_ids, dip_dir, dip, centroids : the planes (G,)
    pair_plane : (C,) str, optional
        The plane id each collar is to be intersected with; default every collar × every plane.
    dip_interval, dip_dir_interval : pairs of (G,) arrays (lo, hi), degrees, optional
        The planes' 95 % intervals.  The depth range ``depth_lo95``/``depth_hi95`` is then the
        smallest and largest depth over the planes at the corners of the two intervals (an
        approximation that ignores the smaller uncertainty of the plane's position).

    Returns
    -------
    StepResult with table ``plane_depths``; ``depth_below_surface_m`` is the depth of the
    intersection below the ground straight above it (needs the DEM).
    """
    xy = np.asarray(collar_xy, float).reshape(-1, 2)
    n_c = xy.shape[0]
    if n_c == 0:
        raise DataError("no collars: the point layer is empty")
    trend = check_azimuth(np.broadcast_to(np.asarray(trend, float), (n_c,)), "trend")
    plunge = check_plunge(np.broadcast_to(np.asarray(plunge, float), (n_c,)))
    warnings = []
    if collar_z is None:
        if grid is None:
            raise InputError("collar elevations need a DEM or a z field")
        z = sample_bilinear(grid, xy[:, 0], xy[:, 1])
    else:
        z = np.asarray(collar_z, float)
    for cid, zz in zip(collar_ids, z):
        if not np.isfinite(zz):
            warnings.append(f"collar {cid}: no elevation (off the DEM or nodata); skipped")
    plane_ids = [str(p) for p in plane_ids]
    pidx = {p: k for k, p in enumerate(plane_ids)}
    ci, pi = [], []
    for k in range(n_c):
        if not np.isfinite(z[k]):
            continue
        if pair_plane is None:
            targets = range(len(plane_ids))
        else:
            if pair_plane[k] is None:
                warnings.append(f"collar {collar_ids[k]}: no plane named in its plane field; skipped")
                continue
            want = str(pair_plane[k])
            if want not in pidx:
                warnings.append(f"collar {collar_ids[k]}: plane {want!r} is not in the plane layer")
                continue
            targets = [pidx[want]]
        for p in targets:
            ci.append(k)
            pi.append(p)
    ci = np.asarray(ci, dtype=np.intp)
    pi = np.asarray(pi, dtype=np.intp)
    collars = np.column_stack([xy, z])[ci] if ci.size else np.zeros((0, 3))
    cen = np.asarray(centroids, float).reshape(-1, 3)
    res = depth_to_plane(collars, trend[ci], plunge[ci], cen[pi], np.asarray(dip_dir, float)[pi],
                         np.asarray(dip, float)[pi])
    lo_hi = np.full((2, ci.size), np.nan)
    if dip_interval is not None and dip_dir_interval is not None and ci.size:
        corners = []
        for dpk in (np.asarray(dip_interval[0], float), np.asarray(dip_interval[1], float)):
            for ddk in (np.asarray(dip_dir_interval[0], float), np.asarray(dip_dir_interval[1], float)):
                r = depth_to_plane(collars, trend[ci], plunge[ci], cen[pi], ddk[pi], dpk[pi])
                corners.append(r.depth_m)
        corners = np.vstack(corners + [res.depth_m])
        with np.errstate(invalid="ignore"):
            any_nan = np.any(~np.isfinite(corners), axis=0)
            lo_hi = np.where(any_nan, np.nan, np.vstack([corners.min(0), corners.max(0)]))
    ids_c = [str(collar_ids[k]) for k in ci]
    ids_p = [plane_ids[p] for p in pi]
    for a, b, st in zip(ids_c, ids_p, res.status):
        if st != "ok":
            warnings.append(f"collar {a} / plane {b}: {st}")
    below = np.full(ci.size, np.nan)
    if grid is not None and ci.size:
        hit = np.isfinite(res.x)
        below[hit] = sample_bilinear(grid, res.x[hit], res.y[hit]) - res.z[hit]
        for a, b in zip(np.asarray(ids_c, dtype=object)[hit & ~np.isfinite(below)],
                        np.asarray(ids_p, dtype=object)[hit & ~np.isfinite(below)]):
            warnings.append(f"collar {a} / plane {b}: the intersection lies off the DEM window; "
                            "no depth below the ground there")
    table = depth_table(ids_c, ids_p, collars, trend[ci], plunge[ci], res, lo_hi, below)
    return StepResult({"plane_depths": table},
                      {"collars": n_c, "pairs": len(ci), "hits": int(np.sum(res.status == "ok"))},
                      warnings)

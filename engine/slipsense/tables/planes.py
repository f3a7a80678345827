"""Tables of the plane capabilities (numpy only)."""
from __future__ import annotations

import numpy as np

from . import Table

#: Fields every plane table shares, in order, with their types.
PLANE_FIELDS = (
    ("dip_dir", "float"), ("dip", "float"), ("strike", "float"),
    ("dip_lo95", "float"), ("dip_hi95", "float"), ("dip_dir_lo95", "float"), ("dip_dir_hi95", "float"),
    ("n_points", "int"), ("relief_m", "float"), ("rms_m", "float"), ("misfit_ratio", "float"),
    ("coplanarity", "float"), ("collinearity", "float"),
    ("quality", "str"), ("reason", "str"),
    ("centroid_x", "float"), ("centroid_y", "float"), ("centroid_z", "float"),
)


def _plane_columns(planes, prefix_cols, prefix_types):
    cols = dict(prefix_cols)
    types = dict(prefix_types)
    for name, kind in PLANE_FIELDS:
        cols[name] = np.asarray(getattr(planes, name))
        types[name] = kind
    return cols, types


def trace_plane_table(trace_ids, result):
    """Table of ``trace_planes``: one row per input trace (geometry: the trace).

    ``trace_ids`` are the traces' identifiers (strings); ``result`` a
    :class:`~slipsense.core.traces.TracePlanes`.
    """
    ids = np.asarray([str(i) for i in trace_ids], dtype=object)
    cols, types = _plane_columns(result.planes, {"trace_id": ids}, {"trace_id": "str"})
    cols["n_nodata"] = np.asarray(result.n_nodata, dtype=int)
    types["n_nodata"] = "int"
    return Table(cols, types, "MultiLineString", None, np.arange(len(ids)))


def window_table(trace_ids, result):
    """Table of ``trace_windows``: one row per along-trace window (geometry: the window's piece)."""
    w = result.windows
    if w is None:
        return None
    ids = np.asarray([str(i) for i in trace_ids], dtype=object)
    cols, types = _plane_columns(
        w,
        {"trace_id": ids[result.window_trace] if len(result.window_trace) else np.zeros(0, object),
         "window_no": np.arange(len(w)) if len(w) else np.zeros(0, int),
         "start_m": result.window_start_m, "end_m": result.window_end_m},
        {"trace_id": "str", "window_no": "int", "start_m": "float", "end_m": "float"},
    )
    pts = result.points
    geoms = []
    for part, s0, s1 in zip(result.window_part, result.window_start_m, result.window_end_m):
        sel = (pts.part == part) & (pts.along_m >= s0 - 1e-9) & (pts.along_m <= s1 + 1e-9)
        geoms.append(pts.xy[sel])
    return Table(cols, types, "LineString", geoms, result.window_trace)


def point_plane_table(group_ids, planes, group_points):
    """Table of ``point_planes``: one row per point group (geometry: the group's points)."""
    ids = np.asarray([str(i) for i in group_ids], dtype=object)
    cols, types = _plane_columns(planes, {"plane_id": ids}, {"plane_id": "str"})
    return Table(cols, types, "MultiPoint", list(group_points), None)


def contour_table(plane_ids, per_plane):
    """Table of ``structure_contours``.

    ``per_plane``: list of ``(elevations (K,), lines (K, 2, 2), dip_dir, dip)`` per plane, or None
    where none could be drawn.
    """
    pid, z, dd, dp, geoms = [], [], [], [], []
    for i, item in zip(plane_ids, per_plane):
        if item is None:
            continue
        zs, lines, d1, d2 = item
        for zk, line in zip(zs, lines):
            pid.append(str(i))
            z.append(float(zk))
            dd.append(d1)
            dp.append(d2)
            geoms.append(np.column_stack([line, np.full(2, zk)]))
    cols = {"plane_id": np.asarray(pid, dtype=object), "elevation_m": np.asarray(z, float),
            "dip_dir": np.asarray(dd, float), "dip": np.asarray(dp, float)}
    types = {"plane_id": "str", "elevation_m": "float", "dip_dir": "float", "dip": "float"}
    return Table(cols, types, "LineStringZ", geoms, None)


def outcrop_table(plane_ids, segments, max_distance_m):
    """Table of ``outcrop_traces``: predicted outcrop of each plane as segments (MultiLineString)."""
    pid, nseg, geoms = [], [], []
    for i, segs in zip(plane_ids, segments):
        if segs is None or len(segs) == 0:
            continue
        pid.append(str(i))
        nseg.append(len(segs))
        geoms.append([s for s in segs])
    cols = {"plane_id": np.asarray(pid, dtype=object), "n_segments": np.asarray(nseg, int),
            "max_distance_m": np.full(len(pid), float(max_distance_m))}
    types = {"plane_id": "str", "n_segments": "int", "max_distance_m": "float"}
    return Table(cols, types, "MultiLineString", geoms, None)


def depth_table(collar_ids, plane_ids, collars, trend, plunge, res, depth_range=None, below_surface=None):
    """Table of ``plane_depths``: one row per (collar, plane) pair, geometry the 3-D intersection
    point (or the collar where the hole never meets the plane)."""
    cx, cy, cz = np.asarray(collars, float).T
    cols = {
        "collar_id": np.asarray([str(c) for c in collar_ids], dtype=object),
        "plane_id": np.asarray([str(p) for p in plane_ids], dtype=object),
        "collar_z": cz, "trend": np.asarray(trend, float), "plunge": np.asarray(plunge, float),
        "along_hole_m": res.along_m, "depth_m": res.depth_m,
        "depth_lo95": np.full(len(cx), np.nan) if depth_range is None else depth_range[0],
        "depth_hi95": np.full(len(cx), np.nan) if depth_range is None else depth_range[1],
        "depth_below_surface_m": np.full(len(cx), np.nan) if below_surface is None else below_surface,
        "hit_x": res.x, "hit_y": res.y, "hit_z": res.z,
        "status": np.asarray(res.status, dtype=object),
    }
    types = {"collar_id": "str", "plane_id": "str", "collar_z": "float", "trend": "float",
             "plunge": "float", "along_hole_m": "float", "depth_m": "float", "depth_lo95": "float",
             "depth_hi95": "float", "depth_below_surface_m": "float", "hit_x": "float",
             "hit_y": "float", "hit_z": "float", "status": "str"}
    geoms = []
    for i in range(len(cx)):
        if np.isfinite(res.x[i]):
            geoms.append(np.array([res.x[i], res.y[i], res.z[i]]))
        else:
            geoms.append(np.array([cx[i], cy[i], cz[i]]))
    return Table(cols, types, "PointZ", geoms, None)

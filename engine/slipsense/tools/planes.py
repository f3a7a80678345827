"""File-level tools for fault planes: from traces over a DEM, from points, structure contours,
predicted outcrop traces and depth to planes."""
from __future__ import annotations

import numpy as np

from .. import steps
from ..errors import DataError
from ..io.dem import open_dem
from ..io.vector import check_output, lines_to_traces, points_xy, read_layer
from .common import provenance, write_result

__all__ = [
    "trace_planes_file",
    "three_point_file",
    "structure_contours_file",
    "outcrop_trace_file",
    "plane_depth_file",
    "read_planes",
]


def trace_planes_file(dem, traces, out, *, layer=None, id_field=None, out_layer="trace_planes",
                      windows_layer="trace_windows", band=1, z_factor=1.0, spacing_m=None,
                      sigma_xy_m=5.0, sigma_z_m=2.0, draws=200, seed=0, window_m=None,
                      overwrite=False, progress=None, threads=1, workers=None, scheduler=None,
                      cache_mb=512.0):
    """Fit a plane to every trace of a line layer over a DEM and write ``out_layer`` (and windows).

    The DEM is read block by block (its internal tiling), each block once while traces need it.
    ``threads`` runs spatial tiles of traces on that many threads; ``workers`` (a local Dask
    cluster of that many processes) or ``scheduler`` (the address of a running dask.distributed
    scheduler) runs them on Dask.  The numbers are the same whichever way the work is run.

    Returns the :class:`~slipsense.steps.StepResult` (with ``summary['layers']`` written).
    """
    names = {"trace_planes": out_layer}
    if window_m:
        names["trace_windows"] = windows_layer
    check_output(out, list(names.values()), overwrite, inputs=[dem, traces])
    d = open_dem(dem, band=band, z_factor=z_factor)
    lyr = read_layer(traces, layer, fields=[id_field] if id_field else [], working_crs=d.working_crs)
    ids, tr = lines_to_traces(lyr, id_field)
    margin = steps.dem_margin_m(d.cell_size, sigma_xy_m)
    if threads is None or int(threads) < 1:
        raise DataError(f"threads must be >= 1, got {threads!r}")
    if workers is not None and int(workers) < 1:
        raise DataError(f"workers must be >= 1, got {workers!r}")
    if not (cache_mb > 0):
        raise DataError(f"cache must be > 0 MB, got {cache_mb!r}")
    if d.warped and (workers or scheduler):
        raise DataError(f"DEM {dem} is geographic: --workers/--scheduler need a projected DEM read by blocks "
                        "(warp it to a projected CRS first)")
    cluster = None
    if d.warped:  # a geographic DEM is warped window by window
        grid = d.grids_for_features(trace_boxes(tr), margin)
        runner = None
    else:  # only the DEM blocks under the traces are read, each once
        d.window_for(tr.bounds(), margin)  # one clear message when the traces miss the DEM
        runner = None
        if workers or scheduler:
            from ..io.distributed import DaskRunner

            cluster = runner = DaskRunner(workers=workers, scheduler=scheduler)
        elif threads and int(threads) > 1:
            from ..core.raster import ThreadRunner

            runner = ThreadRunner(int(threads))
        grid = d.block_raster(margin, cache_mb=cache_mb, runner=runner)
    try:
        step = steps.trace_planes(ids, tr, grid, spacing_m=spacing_m, sigma_xy_m=sigma_xy_m,
                                  sigma_z_m=sigma_z_m, draws=draws, seed=seed, window_m=window_m,
                                  progress=progress)
    finally:
        if cluster is not None:
            cluster.close()
    if not d.warped:
        step.summary["dem_blocks_read"] = int(grid.stats["blocks_read"])
    step.warnings = lyr.skipped + step.warnings
    params = {"dem": dem, "traces": traces, "layer": layer, "id_field": id_field, "band": band,
              "z_factor": z_factor, "spacing_m": spacing_m or d.cell_size, "sigma_xy_m": sigma_xy_m,
              "sigma_z_m": sigma_z_m, "draws": draws, "seed": seed, "window_m": window_m}
    prov = provenance("trace-planes", params, [dem, traces], d.working_crs)
    step.summary["layers"] = write_result(out, step, names, d.working_crs, prov, overwrite, lyr.frame)
    step.summary["working_crs"] = prov["working_crs"]
    if d.warped:
        step.warnings.insert(0, f"DEM is geographic: computed in {prov['working_crs']} (DEM warped bilinearly)")
    return step


def three_point_file(points, out, *, layer=None, group_field, z_field=None, dem=None, band=1,
                     z_factor=1.0, out_layer="point_planes", sigma_xy_m=0.0, sigma_z_m=0.0,
                     draws=0, seed=0, overwrite=False):
    """Fit a plane to each group of points (three-point problem or least squares).

    Elevations come from ``z_field`` (metres) or from the DEM under each point.  Groups are taken in
    order of the sorted group values (as text).
    """
    if (z_field is None) == (dem is None):
        raise DataError("give exactly one source of elevations: a z field or a DEM")
    check_output(out, [out_layer], overwrite, inputs=[points, dem])
    d = open_dem(dem, band=band, z_factor=z_factor) if dem else None
    fields = [group_field] + ([z_field] if z_field else [])
    lyr = read_layer(points, layer, fields=fields, geometry=("Point",),
                     working_crs=d.working_crs if d else None)
    xy = points_xy(lyr)
    if z_field:
        z = np.asarray(lyr.frame[z_field], dtype=float)
    else:
        grid = d.grid_for((*xy.min(0), *xy.max(0)), steps.dem_margin_m(d.cell_size, sigma_xy_m))
        from ..core.raster import sample_bilinear

        z = sample_bilinear(grid, xy[:, 0], xy[:, 1])
    raw = lyr.frame[group_field]
    null = raw.isna().to_numpy()
    groups_raw = np.array([_label(v) for v in raw], dtype=object)
    null_msgs = [f"{lyr.name} feature {fid}: field {group_field!r} is empty; point dropped"
                 for fid in np.asarray(lyr.feature_ids)[null]]
    z = np.where(null, np.nan, z)
    ids, groups, warnings = group_points(groups_raw, xy, z, lyr.feature_ids[~null], lyr.name, z_field,
                                         keep=~null)
    warnings = null_msgs + warnings
    step = steps.point_planes(ids, groups, sigma_xy_m=sigma_xy_m, sigma_z_m=sigma_z_m,
                              draws=draws, seed=seed)
    step.warnings = lyr.skipped + warnings + step.warnings
    params = {"points": points, "layer": layer, "group_field": group_field, "z_field": z_field,
              "dem": dem, "band": band, "z_factor": z_factor, "sigma_xy_m": sigma_xy_m,
              "sigma_z_m": sigma_z_m, "draws": draws, "seed": seed}
    prov = provenance("three-point", params, [points, dem], lyr.crs)
    step.summary["layers"] = write_result(out, step, {"point_planes": out_layer}, lyr.crs, prov, overwrite)
    step.summary["working_crs"] = prov["working_crs"]
    return step


def _label(v):
    """Group/plane label as text: integers in float fields lose their '.0'."""
    if isinstance(v, float) and v.is_integer():
        return str(int(v))
    return str(v)


def trace_boxes(traces):
    """(T, 4) bounding boxes of the traces of a :class:`Traces`."""
    vt = np.repeat(traces.part_trace, np.diff(traces.part_offsets))
    xy = traces.xy
    boxes = np.full((traces.n_traces, 4), np.nan)
    for k, fn in ((0, np.fmin), (1, np.fmin), (2, np.fmax), (3, np.fmax)):
        col = xy[:, k % 2]
        init = np.inf if fn is np.fmin else -np.inf
        out = np.full(traces.n_traces, init)
        fn.at(out, vt, col)
        boxes[:, k] = out
    return boxes


def group_points(group_values, xy, z, feature_ids, name, z_field, keep=None):
    """Split points into groups by value (sorted as text); points with no elevation are dropped
    with a message naming the feature.  Returns ``ids, groups, warnings``."""
    warnings = []
    keep = np.ones(len(z), bool) if keep is None else np.asarray(keep, bool)
    ok = np.isfinite(z)
    for fid in np.asarray(feature_ids)[~ok[keep]]:
        what = f"field {z_field!r} is empty" if z_field else "no DEM value under it"
        warnings.append(f"{name} feature {fid}: {what}; point dropped")
    ok &= keep
    ids = sorted(set(group_values[ok].tolist()))
    groups = [np.column_stack([xy[ok & (group_values == g)], z[ok & (group_values == g)]]) for g in ids]
    if not ids:
        raise DataError(f"{name}: no point has an elevation")
    return ids, groups, warnings


def read_planes(path, layer):
    """Read a plane layer written by trace-planes or three-point.

    Returns ``(Layer, ids, dip_dir, dip, centroids (G, 3), extents list of (n, 2))``.
    """
    lyr = read_layer(path, layer, fields=["dip_dir", "dip", "centroid_x", "centroid_y", "centroid_z"],
                     geometry=("LineString", "MultiLineString", "Point", "MultiPoint"))
    f = lyr.frame
    idf = "trace_id" if "trace_id" in f.columns else "plane_id" if "plane_id" in f.columns else None
    ids = f[idf].astype(str).tolist() if idf else [str(i) for i in lyr.feature_ids]
    import shapely

    num = lambda c: np.asarray(f[c].astype(float).fillna(np.nan), float)  # noqa: E731
    cen = np.column_stack([num("centroid_x"), num("centroid_y"), num("centroid_z")])
    extents = [np.asarray(shapely.get_coordinates(g))[:, :2] for g in f.geometry.values]
    return lyr, ids, num("dip_dir"), num("dip"), cen, extents


def structure_contours_file(planes, out, *, layer="trace_planes", interval_m=50.0, depth_m=500.0,
                            z_min=None, z_max=None, out_layer="structure_contours", overwrite=False):
    """Structure contours (strike lines) of the planes in a plane layer."""
    check_output(out, [out_layer], overwrite, inputs=[planes])
    lyr, ids, dd, dp, cen, ext = read_planes(planes, layer)
    step = steps.structure_contours(ids, dd, dp, cen, ext, interval_m=interval_m, depth_m=depth_m,
                                    z_min=z_min, z_max=z_max)
    params = {"planes": planes, "layer": layer, "interval_m": interval_m, "depth_m": depth_m,
              "z_min": z_min, "z_max": z_max}
    prov = provenance("structure-contours", params, [planes], lyr.crs)
    step.summary["layers"] = write_result(out, step, {"structure_contours": out_layer}, lyr.crs, prov, overwrite)
    return step


def outcrop_trace_file(planes, dem, out, *, layer="trace_planes", band=1, z_factor=1.0,
                       max_distance_m=1000.0, out_layer="outcrop_traces", overwrite=False,
                       progress=None):
    """Predicted outcrop traces of fitted planes across a DEM, near their mapped traces."""
    check_output(out, [out_layer], overwrite, inputs=[planes, dem])
    d = open_dem(dem, band=band, z_factor=z_factor)
    lyr, ids, dd, dp, cen, ext = read_planes(planes, layer)
    _same_crs(lyr.crs, d.working_crs, lyr.name, dem)
    allxy = np.concatenate(ext)
    grid = d.grid_for((*allxy.min(0), *allxy.max(0)), max_distance_m + steps.dem_margin_m(d.cell_size, cells=2.0))
    step = steps.outcrop_traces(ids, dd, dp, cen, ext, grid, max_distance_m=max_distance_m,
                                progress=progress)
    params = {"planes": planes, "layer": layer, "dem": dem, "band": band, "z_factor": z_factor,
              "max_distance_m": max_distance_m}
    prov = provenance("outcrop-trace", params, [planes, dem], d.working_crs)
    step.summary["layers"] = write_result(out, step, {"outcrop_traces": out_layer}, d.working_crs, prov, overwrite)
    return step


def _same_crs(a, b, what, dem):
    if a != b:
        raise DataError(
            f"{what} is in {a.name} but the DEM {dem} works in {b.name}: fit the planes on this DEM, "
            "or reproject one of them"
        )


def plane_depth_file(collars, planes, out, *, layer=None, planes_layer="trace_planes", id_field=None,
                     trend_field=None, plunge_field=None, plane_field=None, dem=None, z_field=None,
                     band=1, z_factor=1.0, out_layer="plane_depths", overwrite=False):
    """Depth to fitted planes below collars (vertical holes, or inclined by trend/plunge fields)."""
    if (z_field is None) == (dem is None):
        raise DataError("give exactly one source of collar elevations: a z field or a DEM")
    check_output(out, [out_layer], overwrite, inputs=[collars, planes, dem])
    plyr, pids, dd, dp, cen, _ = read_planes(planes, planes_layer)
    fields = [f for f in (id_field, trend_field, plunge_field, plane_field, z_field) if f]
    lyr = read_layer(collars, layer, fields=fields, geometry=("Point",), working_crs=plyr.crs)
    xy = points_xy(lyr)
    f = lyr.frame
    cids = f[id_field].astype(str).tolist() if id_field else [str(i) for i in lyr.feature_ids]
    trend = np.asarray(f[trend_field], float) if trend_field else np.zeros(len(f))
    plunge = np.asarray(f[plunge_field], float) if plunge_field else np.full(len(f), 90.0)
    grid = None
    zc = None
    if dem:
        d = open_dem(dem, band=band, z_factor=z_factor)
        _same_crs(plyr.crs, d.working_crs, plyr.name, dem)
        grid = d.grid_for((*xy.min(0), *xy.max(0)), steps.collar_margin_m(d.cell_size))
    else:
        zc = np.asarray(f[z_field], float)
    pair = None
    if plane_field:
        pair = [None if v is None or (isinstance(v, float) and np.isnan(v)) else _label(v)
                for v in f[plane_field]]
    _check_angles(lyr.name, lyr.feature_ids, trend, plunge, trend_field, plunge_field)
    pf = plyr.frame
    have = all(c in pf.columns for c in ("dip_lo95", "dip_hi95", "dip_dir_lo95", "dip_dir_hi95"))
    col = lambda c: np.asarray(pf[c].astype(float), float)  # noqa: E731
    step = steps.plane_depths(cids, xy, grid, trend, plunge, pids, dd, dp, cen, collar_z=zc,
                              pair_plane=pair,
                              dip_interval=(col("dip_lo95"), col("dip_hi95")) if have else None,
                              dip_dir_interval=(col("dip_dir_lo95"), col("dip_dir_hi95")) if have else None)
    step.warnings = lyr.skipped + step.warnings
    params = {"collars": collars, "layer": layer, "planes": planes, "planes_layer": planes_layer,
              "id_field": id_field, "trend_field": trend_field, "plunge_field": plunge_field,
              "plane_field": plane_field, "dem": dem, "z_field": z_field}
    prov = provenance("plane-depth", params, [collars, planes, dem], plyr.crs)
    step.summary["layers"] = write_result(out, step, {"plane_depths": out_layer}, plyr.crs, prov, overwrite)
    return step


def _check_angles(name, fids, trend, plunge, trend_field, plunge_field):
    """One-line error naming the feature and field of the first impossible angle."""
    for arr, field, lo, hi in ((trend, trend_field, 0.0, 360.0), (plunge, plunge_field, 0.0, 90.0)):
        bad = ~np.isfinite(arr) | (arr < lo) | (arr > hi)
        if np.any(bad):
            k = int(np.flatnonzero(bad)[0])
            raise DataError(
                f"{name} feature {fids[k]}: field {field!r} = {float(arr[k])!r} is outside [{lo:g}, {hi:g}] degrees"
            )


__all__ += ["group_points"]

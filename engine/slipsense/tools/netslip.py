"""File-level tools for net slip: from a table of separations, and from mapped marker contacts."""
from __future__ import annotations

import os

import numpy as np

from .. import steps
from ..errors import DataError, FileFormatError
from ..io.dem import open_dem
from ..io.vector import check_output, list_layers, points_xy, read_layer, table_to_frame, write_tables
from ..steps.netslip import TABLE_FIELDS
from .common import provenance, write_result

__all__ = ["net_slip_file", "map_slip_file", "read_separations"]


def _null(v):
    if v is None:
        return True
    try:
        return bool(v != v)  # NaN
    except TypeError:  # pandas.NA
        return True


def read_separations(path, layer=None):
    """Read a separation table (GeoPackage table or point layer, CSV, any GDAL vector format).

    Returns ``(rows, name, crs)``: ``rows`` as :func:`slipsense.steps.net_slip` takes them (``xy``
    only for a point layer), ``name`` for messages, ``crs`` of the points or None.
    """
    import pyogrio

    if not os.path.exists(path):
        raise FileFormatError(f"input file not found: {path}")
    layers = list_layers(path)
    if layer is None:
        if len(layers) != 1:
            raise DataError(f"{path} has layers {layers}: choose one with --layer")
        layer = layers[0]
    if layer not in layers:
        raise DataError(f"{path} has no layer {layer!r}; it has {layers}")
    name = f"{path}|{layer}"
    try:
        info = pyogrio.read_info(path, layer=layer)
    except Exception as exc:  # pyogrio's own errors
        raise FileFormatError(f"cannot read {name}: {exc}") from exc
    crs = None
    xy = None
    if info.get("geometry_type") in (None, "Unknown") and not info.get("crs"):
        try:
            frame = pyogrio.read_dataframe(path, layer=layer, read_geometry=False, fid_as_index=True)
        except Exception as exc:
            raise FileFormatError(f"cannot read {name}: {exc}") from exc
        if len(frame) == 0:
            raise DataError(f"{name} is empty: no separations to work on")
        fids = np.asarray(frame.index)
        # CSV rows count from 1 in a spreadsheet; the fid is what GDAL reports
    else:
        lyr = read_layer(path, layer, geometry=("Point", "MultiPoint"))
        frame = lyr.frame
        fids = lyr.feature_ids
        xy = points_xy(lyr)
        crs = lyr.crs
    rows = {"names": [f"{name} feature {fid}" for fid in fids]}
    for f in TABLE_FIELDS:
        if f in frame.columns:
            rows[f] = [None if _null(v) else v for v in frame[f].tolist()]
    if xy is not None:
        rows["xy"] = xy
    return rows, name, crs


def _attribute_frame(table):
    """A DataFrame (no geometry) from a geometry-less Table (types as table_to_frame gives them)."""
    import pandas as pd
    from dataclasses import replace

    pts = replace(table, geometry_type="Point", geometries=[(0.0, 0.0)] * len(table))
    frame = table_to_frame(pts, None)
    return pd.DataFrame(frame.drop(columns="geometry"))


def net_slip_file(table, out, *, layer=None, out_layer="net_slip", sigma_m=None, sigma_marker_deg=2.0,
                  sigma_fault_deg=2.0, rake_sigma_deg=10.0, draws=200, seed=0, overwrite=False):
    """Net slip per fault from a separation table; writes ``out_layer`` (points at each fault's first
    row when the table is a point layer, else an attribute table)."""
    check_output(out, [out_layer], overwrite, inputs=[table])
    rows, name, crs = read_separations(table, layer)
    step = steps.net_slip(rows, source=name, sigma_m=sigma_m, sigma_marker_deg=sigma_marker_deg,
                          sigma_fault_deg=sigma_fault_deg, rake_sigma_deg=rake_sigma_deg, draws=draws,
                          seed=seed)
    params = {"table": table, "layer": layer, "sigma_m": sigma_m, "sigma_marker_deg": sigma_marker_deg,
              "sigma_fault_deg": sigma_fault_deg, "rake_sigma_deg": rake_sigma_deg, "draws": draws,
              "seed": seed}
    prov = provenance("net-slip", params, [table], crs)
    tbl = step.tables["net_slip"]
    if tbl.geometry_type == "None":
        write_tables(out, {out_layer: _attribute_frame(tbl)}, prov, overwrite=overwrite)
        step.summary["layers"] = [out_layer]
    else:
        step.summary["layers"] = write_result(out, step, {"net_slip": out_layer}, crs, prov, overwrite)
    step.summary["working_crs"] = prov["working_crs"]
    return step


def _parts(geom):
    import shapely

    if geom.geom_type == "LineString":
        return [np.asarray(shapely.get_coordinates(geom))[:, :2]]
    return [np.asarray(shapely.get_coordinates(g))[:, :2] for g in geom.geoms]


def map_slip_file(planes, contacts, dem, out, *, planes_layer="trace_planes", contacts_layer=None,
                  marker_field="marker_id", piece_field=None, stations=None, stations_layer=None,
                  station_fault_field="fault_id", station_dip_dir_field="dip_dir",
                  station_dip_field="dip", station_trend_field="trend", station_plunge_field="plunge",
                  station_sense_field="sense", station_rake_field=None, band=1, z_factor=1.0,
                  window_m=1000.0, reach_m=100.0, sigma_xy_m=5.0, sigma_z_m=2.0, marker_attitudes=None,
                  sigma_attitude_deg=2.0, draws=200, seed=0, out_layer="net_slip",
                  vectors_layer="slip_vectors", fits_layer="marker_fits",
                  overwrite=False, progress=None):
    """Net slip of fitted fault planes from marker contacts over a DEM (and slip stations).

    ``planes`` is a plane layer written by ``trace-planes`` (its traces are the fault traces);
    ``contacts`` a line layer of marker contacts, one feature per piece (``piece_field``, default
    ``piece_id`` when the layer has it, else the feature id; a multi-part feature is one piece per
    part).  Stations (optional): a point layer with the fault each belongs to and a fault-slip
    measurement: trend/plunge + sense (default), or a rake field.  ``marker_attitudes``: markers
    whose attitude is given (``["bed_A=352/11"]``, dip direction/dip) rather than fitted.
    """
    given = steps.netslip.parse_marker_attitudes(marker_attitudes)
    names = {"net_slip": out_layer, "slip_vectors": vectors_layer, "marker_fits": fits_layer}
    if len(set(names.values())) != 3:
        raise DataError(f"the output layers must have three different names, got {sorted(names.values())}")
    check_output(out, list(names.values()), overwrite, inputs=[planes, contacts, dem, stations])
    d = open_dem(dem, band=band, z_factor=z_factor)
    from .planes import read_planes

    plyr, ids, dd, dp, cen, _ = read_planes(planes, planes_layer)
    if plyr.crs != d.working_crs:
        raise DataError(f"{plyr.name} is in {plyr.crs.name} but the DEM {dem} works in {d.working_crs.name}: "
                        "fit the planes on this DEM, or reproject one of them")
    pf = plyr.frame
    traces = [_parts(g) for g in pf.geometry.values]
    have = all(c in pf.columns for c in ("dip_lo95", "dip_hi95", "dip_dir_lo95", "dip_dir_hi95"))
    col = lambda c: np.asarray(pf[c].astype(float), float)  # noqa: E731
    clyr = read_layer(contacts, contacts_layer, fields=[marker_field] + ([piece_field] if piece_field else []),
                      working_crs=d.working_crs)
    cf = clyr.frame
    pfield = piece_field or ("piece_id" if "piece_id" in cf.columns else None)
    pieces, pmark, pids = [], [], []
    warnings = list(clyr.skipped)
    for fid, g, mk, pc in zip(clyr.feature_ids, cf.geometry.values, cf[marker_field].tolist(),
                              cf[pfield].tolist() if pfield else [None] * len(cf)):
        if _null(mk):
            warnings.append(f"{clyr.name} feature {fid}: field {marker_field!r} is empty; contact skipped")
            continue
        label = str(pc) if pfield and not _null(pc) else f"feature {fid}"
        parts = _parts(g)
        for k, part in enumerate(parts):
            pieces.append(part)
            pmark.append(str(mk))
            pids.append(label if len(parts) == 1 else f"{label}/{k + 1}")
    st = None
    if stations:
        fields = [station_fault_field, station_dip_dir_field, station_dip_field]
        fields += [station_rake_field] if station_rake_field else [station_trend_field, station_plunge_field,
                                                                   station_sense_field]
        slyr = read_layer(stations, stations_layer, fields=fields, geometry=("Point",), working_crs=d.working_crs)
        sf = slyr.frame
        vals = lambda c: [None if _null(v) else v for v in sf[c].tolist()]  # noqa: E731
        st = {"fault": [None if v is None else str(v) for v in vals(station_fault_field)],
              "labels": [f"{slyr.name} feature {fid}" for fid in slyr.feature_ids],
              "dip_dir": np.asarray([np.nan if v is None else float(v) for v in vals(station_dip_dir_field)]),
              "dip": np.asarray([np.nan if v is None else float(v) for v in vals(station_dip_field)])}
        if station_rake_field:
            st["rake"] = np.asarray([np.nan if v is None else float(v) for v in vals(station_rake_field)])
        else:
            st["trend"] = np.asarray([np.nan if v is None else float(v) for v in vals(station_trend_field)])
            st["plunge"] = np.asarray([np.nan if v is None else float(v) for v in vals(station_plunge_field)])
            st["sense"] = vals(station_sense_field)
        warnings += slyr.skipped
    allxy = np.concatenate([np.concatenate(t) for t in traces])
    grid = d.grid_for((*allxy.min(0), *allxy.max(0)),
                      steps.map_slip_margin_m(d.cell_size, window_m, sigma_xy_m))
    step = steps.map_slip(
        ids, dd, dp, cen, traces, pieces, pmark, pids, grid,
        dip_interval=(col("dip_lo95"), col("dip_hi95")) if have else None,
        dip_dir_interval=(col("dip_dir_lo95"), col("dip_dir_hi95")) if have else None,
        stations=st, window_m=window_m, reach_m=reach_m, sigma_xy_m=sigma_xy_m, sigma_z_m=sigma_z_m,
        marker_attitudes=given, sigma_attitude_deg=sigma_attitude_deg, draws=draws, seed=seed,
        progress=progress,
    )
    step.warnings = warnings + step.warnings
    params = {"planes": planes, "planes_layer": planes_layer, "contacts": contacts,
              "contacts_layer": contacts_layer, "marker_field": marker_field, "piece_field": pfield,
              "dem": dem, "band": band, "z_factor": z_factor, "stations": stations,
              "stations_layer": stations_layer, "station_fault_field": station_fault_field,
              "window_m": window_m, "reach_m": reach_m, "sigma_xy_m": sigma_xy_m, "sigma_z_m": sigma_z_m,
              "marker_attitudes": given, "sigma_attitude_deg": sigma_attitude_deg if given else None,
              "draws": draws, "seed": seed}
    if stations:
        params.update({"station_dip_dir_field": station_dip_dir_field, "station_dip_field": station_dip_field,
                       "station_rake_field": station_rake_field,
                       "station_trend_field": None if station_rake_field else station_trend_field,
                       "station_plunge_field": None if station_rake_field else station_plunge_field,
                       "station_sense_field": None if station_rake_field else station_sense_field})
    prov = provenance("map-slip", params, [planes, contacts, dem, stations], d.working_crs)
    step.summary["layers"] = write_result(out, step, names, d.working_crs, prov, overwrite)
    step.summary["working_crs"] = prov["working_crs"]
    return step

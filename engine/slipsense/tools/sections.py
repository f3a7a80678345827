"""File-level tool for cross-sections: section lines, a DEM, planes, contacts and point data in;
section layers (and, optionally, figures) out."""
from __future__ import annotations

import os
import re

import numpy as np

from .. import steps
from ..steps.sections import parse_marker_attitudes
from ..core.traces import Traces
from ..errors import DataError, InputError, OutputExistsError
from ..io.dem import open_dem
from ..io.vector import check_output, lines_to_traces, points_xy, read_layer, table_to_frame, write_tables
from ..tables.sections import SECTION_CRS_WKT
from .common import provenance
from .planes import _label, read_planes

__all__ = ["cross_section_file", "SECTION_OUTPUTS", "figure_paths"]

#: Output layers: the step's table name -> default layer name (the same).
SECTION_OUTPUTS = (
    "section_segments", "section_profiles", "section_profiles_xz", "section_faults", "section_faults_xz",
    "section_contacts", "section_contacts_xz", "section_points", "section_points_xz", "section_offsets",
    "section_offsets_xz", "section_net_slip", "section_net_slip_xz",
)

def _col(frame, name, n, kind=float):
    if not name or name not in frame.columns:
        return None
    vals = frame[name].tolist()
    if kind is float:
        out = np.full(n, np.nan)
        for i, v in enumerate(vals):
            try:
                out[i] = np.nan if v is None else float(v)
            except (TypeError, ValueError):
                out[i] = np.nan
        return out
    return [None if v is None or (isinstance(v, float) and np.isnan(v)) else _label(v) for v in vals]


def _ids(lyr, field):
    f = lyr.frame
    if field and field in f.columns:
        return [str(fid) if v is None else v for v, fid in zip(_col(f, field, len(f), str), lyr.feature_ids)]
    return [str(fid) for fid in lyr.feature_ids]


def _check_angles(lyr, values, field, lo, hi):
    bad = np.isfinite(values) & ((values < lo) | (values > hi))
    if np.any(bad):
        k = int(np.flatnonzero(bad)[0])
        raise DataError(f"{lyr.name} feature {lyr.feature_ids[k]}: field {field!r} = {float(values[k])!r} "
                        f"is outside [{lo:g}, {hi:g}] degrees")


def _points_layer(path, layer, fields, working_crs):
    lyr = read_layer(path, layer, fields=[f for f in fields if f], geometry=("Point",), working_crs=working_crs)
    return lyr, points_xy(lyr)


def figure_paths(folder, section_ids):
    """``{section_id: (png, svg)}`` with file names made safe (``A-A'`` -> ``section_A-A_``)."""
    out = {}
    for sid in section_ids:
        safe = re.sub(r"[^A-Za-z0-9_.-]+", "_", str(sid)) or "section"
        out[str(sid)] = (os.path.join(folder, f"section_{safe}.png"), os.path.join(folder, f"section_{safe}.svg"))
    return out


def cross_section_file(sections, dem, out, *, sections_layer=None, id_field=None, planes=None,
                       planes_layer="trace_planes", contacts=None, contacts_layer=None, marker_field="marker_id",
                       piece_field="piece_id", marker_attitudes=None, bedding=None, bedding_layer=None,
                       stations=None, stations_layer=None, station_fault_field="fault_id",
                       boreholes=None, boreholes_layer=None, hole_id_field="hole_id", hole_trend_field="trend",
                       hole_plunge_field="plunge", hole_depth_field="total_depth_m",
                       hole_target_field="target_fault", band=1, z_factor=1.0, distance_m=500.0,
                       depth_m=1000.0, projection="strike", spacing_m=None, sigma_xy_m=5.0, sigma_z_m=2.0,
                       draws=200, seed=0, tick_m=100.0, exaggeration=1.0, figures=None, prefix="",
                       overwrite=False, progress=None):
    """Cross-sections along the lines of ``sections`` over ``dem``, written into ``out``.

    Planes come from a plane layer (``trace_planes`` of trace-planes, or ``point_planes``);
    contacts from a line layer of marker pieces (one piece per fault block, ``marker_field`` names
    the marker); bedding and fault-slip stations from point layers with ``dip_dir``/``dip`` fields
    (stations also ``fault_id`` and ``trend``/``plunge``/``sense`` or ``rake`` for their slip
    direction); boreholes from a collar layer (fields by default ``hole_id``, ``trend``,
    ``plunge``, ``total_depth_m``, ``target_fault`` when present; vertical holes otherwise).
    ``figures`` is a folder for one PNG and one SVG per section (``exaggeration`` = vertical
    exaggeration of the figure only).

    Returns the :class:`~slipsense.steps.StepResult` (``summary['layers']``, ``summary['figures']``).
    """
    if not (np.isfinite(exaggeration) and exaggeration > 0):
        raise InputError(f"vertical exaggeration must be > 0, got {exaggeration!r}")
    names = {t: prefix + t for t in SECTION_OUTPUTS}
    ins = [sections, dem, planes, contacts, bedding, stations, boreholes]
    check_output(out, list(names.values()), overwrite, inputs=ins)
    fig_paths = None
    if figures:
        if not os.path.isdir(figures):
            raise DataError(f"the figure folder {figures} does not exist")
    atts = parse_marker_attitudes(marker_attitudes)
    d = open_dem(dem, band=band, z_factor=z_factor)
    crs = d.working_crs
    slyr = read_layer(sections, sections_layer, fields=[id_field] if id_field else [], working_crs=crs)
    sids, str_ = lines_to_traces(slyr, id_field)
    lines, warnings = [], list(slyr.skipped)
    for i in range(str_.n_traces):
        parts = [p for p in range(str_.part_trace.size) if str_.part_trace[p] == i]
        if len(parts) > 1:
            warnings.append(f"{slyr.name} section {sids[i]}: a multi-part line; only its first part is used")
        p = parts[0]
        lines.append(str_.xy[str_.part_offsets[p]:str_.part_offsets[p + 1]])
    if fig_paths is None and figures:
        fig_paths = figure_paths(figures, sids)
        if not overwrite:
            for png, svg in fig_paths.values():
                for f in (png, svg):
                    if os.path.exists(f):
                        raise OutputExistsError(f"the figure {f} exists already: use --overwrite to replace it")
    allxy = str_.xy
    margin = distance_m + steps.dem_margin_m(d.cell_size, sigma_xy_m)
    grid = d.grid_for((*allxy.min(0), *allxy.max(0)), margin)

    faults = None
    if planes:
        plyr, pids, dd, dp, cen, ext = read_planes(planes, planes_layer)
        if plyr.crs != crs:
            raise DataError(f"{plyr.name} is in {plyr.crs.name} but the DEM {dem} works in {crs.name}: plane "
                            "dip directions are azimuths of their layer's grid; fit the planes on this DEM")
        f = plyr.frame
        have = all(c in f.columns for c in ("dip_lo95", "dip_hi95", "dip_dir_lo95", "dip_dir_hi95"))
        col = lambda c: np.asarray(f[c].astype(float), float)  # noqa: E731
        faults = steps.PlaneSet(pids, dd, dp, cen, ext,
                                (col("dip_lo95"), col("dip_hi95")) if have else None,
                                (col("dip_dir_lo95"), col("dip_dir_hi95")) if have else None)
    contact_set = None
    if contacts:
        clyr = read_layer(contacts, contacts_layer, fields=[marker_field], working_crs=crs)
        mids = _col(clyr.frame, marker_field, len(clyr.frame), str)
        keep = [i for i, m in enumerate(mids) if m is not None]
        for i in range(len(mids)):
            if mids[i] is None:
                warnings.append(f"{clyr.name} feature {clyr.feature_ids[i]}: field {marker_field!r} is empty; "
                                "contact left out")
        pieces = _ids(clyr, piece_field)
        if len(set(pieces)) != len(pieces):
            pieces = [f"{p}#{fid}" for p, fid in zip(pieces, clyr.feature_ids)]
        import shapely

        geoms = clyr.frame.geometry.values
        lines_c = []
        for i in keep:
            g = geoms[i]
            parts = [g] if g.geom_type == "LineString" else list(g.geoms)
            lines_c.append([np.asarray(shapely.get_coordinates(p))[:, :2] for p in parts])
        unknown = sorted(set(atts) - {mids[i] for i in keep})
        if unknown:
            raise DataError(f"marker attitude given for {unknown[0]!r}, which is not a {marker_field} value "
                            f"of {clyr.name}")
        if keep:
            contact_set = steps.ContactSet([pieces[i] for i in keep], [mids[i] for i in keep],
                                           Traces.from_lines(lines_c), atts)
        warnings += clyr.skipped
    elif atts:
        raise DataError("marker attitudes were given but no contact layer (--contacts)")
    bed_set = None
    if bedding:
        blyr, bxy = _points_layer(bedding, bedding_layer, ["dip_dir", "dip"], crs)
        n = len(blyr.frame)
        bdd, bdp = _col(blyr.frame, "dip_dir", n), _col(blyr.frame, "dip", n)
        _check_angles(blyr, bdp, "dip", 0, 90)
        _check_angles(blyr, bdd, "dip_dir", 0, 360)
        bed_set = steps.PointSet(_ids(blyr, "station_id"), bxy, bdd, bdp)
        warnings += blyr.skipped
    st_set = None
    if stations:
        tlyr, txy = _points_layer(stations, stations_layer, ["dip_dir", "dip"], crs)
        f = tlyr.frame
        n = len(f)
        tdd, tdp = _col(f, "dip_dir", n), _col(f, "dip", n)
        _check_angles(tlyr, tdp, "dip", 0, 90)
        _check_angles(tlyr, tdd, "dip_dir", 0, 360)
        lin = {}
        if all(c in f.columns for c in ("trend", "plunge", "sense")):
            lin = {"trend": _col(f, "trend", n), "plunge": _col(f, "plunge", n), "sense": _col(f, "sense", n, str)}
        elif "rake" in f.columns:
            lin = {"rake": _col(f, "rake", n)}
        fault_ids = _col(f, station_fault_field, n, str)
        if fault_ids is None:
            warnings.append(f"{tlyr.name} has no field {station_fault_field!r}: stations are drawn but give no "
                            "fault a slip direction")
        else:
            fault_ids = ["" if v is None else v for v in fault_ids]
        if not lin:
            warnings.append(f"{tlyr.name} has neither trend/plunge/sense nor rake fields: stations give no slip "
                            "direction")
        st_set = steps.PointSet(_ids(tlyr, "station_id"), txy, tdd, tdp, fault_ids, **lin)
        warnings += tlyr.skipped
    hole_set = None
    if boreholes:
        hlyr, hxy = _points_layer(boreholes, boreholes_layer, [], crs)
        f = hlyr.frame
        n = len(f)
        tr = _col(f, hole_trend_field, n)
        pl = _col(f, hole_plunge_field, n)
        tr = np.zeros(n) if tr is None else np.nan_to_num(tr, nan=0.0)
        pl = np.full(n, 90.0) if pl is None else np.where(np.isfinite(pl), pl, 90.0)
        _check_angles(hlyr, pl, hole_plunge_field, 0, 90)
        _check_angles(hlyr, tr, hole_trend_field, 0, 360)
        hole_set = steps.HoleSet(_ids(hlyr, hole_id_field), hxy, tr, pl, _col(f, hole_depth_field, n),
                                 _col(f, hole_target_field, n, str))
        warnings += hlyr.skipped

    step = steps.cross_sections(sids, lines, grid, faults=faults, contacts=contact_set, bedding=bed_set,
                                stations=st_set, holes=hole_set, distance_m=distance_m, depth_m=depth_m,
                                projection=projection, spacing_m=spacing_m, sigma_xy_m=sigma_xy_m,
                                sigma_z_m=sigma_z_m, draws=draws, seed=seed, tick_m=tick_m, progress=progress)
    step.warnings = warnings + step.warnings
    params = {"sections": sections, "sections_layer": sections_layer, "id_field": id_field, "dem": dem,
              "band": band, "z_factor": z_factor, "planes": planes, "planes_layer": planes_layer,
              "contacts": contacts, "contacts_layer": contacts_layer, "marker_field": marker_field,
              "piece_field": piece_field, "marker_attitudes": list(marker_attitudes or ()),
              "bedding": bedding, "bedding_layer": bedding_layer, "stations": stations,
              "stations_layer": stations_layer, "station_fault_field": station_fault_field,
              "boreholes": boreholes, "boreholes_layer": boreholes_layer, "distance_m": distance_m,
              "depth_m": depth_m, "projection": projection, "spacing_m": spacing_m or d.cell_size,
              "sigma_xy_m": sigma_xy_m, "sigma_z_m": sigma_z_m, "draws": draws, "seed": seed,
              "tick_m": tick_m, "exaggeration": exaggeration}
    prov = provenance("cross-section", params, [p for p in ins if p], crs)
    from pyproj import CRS

    section_crs = CRS.from_wkt(SECTION_CRS_WKT)  # x = distance, y = elevation (m): not a map CRS
    frames = {layer: table_to_frame(step.tables[t], section_crs if t.endswith("_xz") else crs)
              for t, layer in names.items()}
    write_tables(out, frames, prov, overwrite=overwrite)
    step.summary["layers"] = list(frames)
    step.summary["working_crs"] = prov["working_crs"]
    if d.warped:
        step.warnings.insert(0, f"DEM is geographic: computed in {prov['working_crs']} (DEM warped bilinearly)")
    if figures:
        from ..figures.section import draw_sections

        step.summary["figures"] = draw_sections(step, fig_paths, exaggeration=exaggeration, overwrite=overwrite)
    return step

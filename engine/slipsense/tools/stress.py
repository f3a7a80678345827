"""File-level tools for stress: fault-slip stress inversion, slip and dilation tendency of planes,
and the Andersonian check."""
from __future__ import annotations

import numpy as np

from .. import steps
from ..errors import DataError
from ..io.vector import check_output, points_xy, read_layer
from .common import provenance, write_result

__all__ = ["stress_inversion_file", "slip_tendency_file", "anderson_file", "read_inversion"]

_LINEATION_HELP = ("give the lineation in exactly one form: --trend-field with --plunge-field, --rake-field, "
                   "or --pitch-field with --pitch-end-field")


def _null(v):
    if v is None:
        return True
    try:
        return bool(v != v)  # NaN
    except TypeError:  # pandas.NA
        return True


def _check_lineation(trend_field, plunge_field, rake_field, pitch_field, pitch_end_field):
    forms = [bool(trend_field or plunge_field), bool(rake_field), bool(pitch_field or pitch_end_field)]
    if sum(forms) != 1:
        raise DataError(_LINEATION_HELP)
    if forms[0] and not (trend_field and plunge_field):
        raise DataError("a lineation as trend/plunge needs both --trend-field and --plunge-field")
    if forms[2] and not (pitch_field and pitch_end_field):
        raise DataError("a lineation as pitch needs both --pitch-field and --pitch-end-field "
                        "(the strike end it is measured from)")


def _read_stations(stations, layer, id_field, fields, extra=()):
    wanted = [id_field] + [v for v in fields.values() if v] + [e for e in extra if e]
    lyr = read_layer(stations, layer, fields=[f for f in wanted if f], geometry=("Point",))
    frame = lyr.frame

    def col(name):
        return None if not name else [None if _null(v) else v for v in frame[name].tolist()]

    fids = [int(i) for i in lyr.feature_ids]
    ids = col(id_field) if id_field else fids
    labels = [f"{lyr.name} feature {fid}" for fid in lyr.feature_ids]
    kw = {k: col(fields.get(k)) for k in ("trend", "plunge", "rake", "pitch", "pitch_from", "sense")}
    return lyr, col, fids, ids, labels, kw


def _north(lyr, step):
    if lyr.source_crs is not None and lyr.source_crs.is_geographic:
        step.warnings.insert(0, f"{lyr.name} is in a geographic CRS: its azimuths are used as measured (not "
                                f"converted to grid north of {lyr.crs.name}); refer them to grid north first with "
                                "'slipsense orientations' if they are true or magnetic")
        return "as measured (the input layer is geographic)"
    return "grid"


def stress_inversion_file(stations, out, *, layer=None, id_field=None, dip_dir_field="dip_dir", dip_field="dip",
                          trend_field=None, plunge_field=None, rake_field=None, pitch_field=None,
                          pitch_end_field=None, sense_field=None, group_field=None, misfit_tol_deg=None,
                          resamples=1000, seed=0, refine=True, out_layer="stress_axes",
                          misfits_layer="stress_misfits", overwrite=False):
    """Invert fault-slip stations for the reduced stress tensor, per group; write the axes and misfits.

    Returns the :class:`~slipsense.steps.StepResult` (with ``summary['layers']`` written).
    """
    _check_lineation(trend_field, plunge_field, rake_field, pitch_field, pitch_end_field)
    if out_layer == misfits_layer:
        raise DataError(f"the axes layer and the misfits layer are both named {out_layer!r}: name them apart")
    names = {"stress_axes": out_layer, "stress_misfits": misfits_layer}
    check_output(out, list(names.values()), overwrite, inputs=[stations])
    fields = {"dip_dir": dip_dir_field, "dip": dip_field, "trend": trend_field, "plunge": plunge_field,
              "rake": rake_field, "pitch": pitch_field, "pitch_from": pitch_end_field, "sense": sense_field,
              "group": group_field}
    lyr, col, fids, ids, labels, kw = _read_stations(stations, layer, id_field, fields)
    step = steps.stress_inversion(
        ids, col(dip_dir_field), col(dip_field), feature_ids=fids, group_values=col(group_field),
        xy=points_xy(lyr), labels=labels, fields={k: v for k, v in fields.items() if v},
        misfit_tol_deg=misfit_tol_deg, resamples=resamples, seed=seed, refine=refine, **kw)
    step.warnings = lyr.skipped + step.warnings
    north = _north(lyr, step)
    params = {"stations": stations, "layer": layer, "id_field": id_field, "dip_dir_field": dip_dir_field,
              "dip_field": dip_field, "trend_field": trend_field, "plunge_field": plunge_field,
              "rake_field": rake_field, "pitch_field": pitch_field, "pitch_end_field": pitch_end_field,
              "sense_field": sense_field, "group_field": group_field, "misfit_tol_deg": misfit_tol_deg,
              "resamples": resamples, "seed": seed, "refine": bool(refine)}
    prov = provenance("stress-inversion", params, [stations], lyr.crs, north_reference=north)
    step.summary["layers"] = write_result(out, step, names, lyr.crs, prov, overwrite)
    step.summary["working_crs"] = prov["working_crs"]
    return step


def read_inversion(path, layer="stress_axes", group=None):
    """One row of an inversion output layer as a dict (``sigma1_trend`` ... ``phi``, ``group_id``) and
    the layer (for its CRS)."""
    lyr = read_layer(path, layer, fields=["sigma1_trend", "sigma1_plunge", "sigma3_trend", "sigma3_plunge", "phi"],
                     geometry=("Point",))
    f = lyr.frame
    groups = [str(g) for g in f["group_id"]] if "group_id" in f.columns else [str(i) for i in lyr.feature_ids]
    if group is None:
        if len(f) != 1:
            raise DataError(f"{lyr.name} has {len(f)} stress groups {groups}: choose one with --group")
        k = 0
    else:
        if str(group) not in groups:
            raise DataError(f"{lyr.name} has no group {group!r}; it has {groups}")
        k = groups.index(str(group))
    row = f.iloc[k]
    out = {c: (np.nan if _null(row[c]) else float(row[c]))
           for c in ("sigma1_trend", "sigma1_plunge", "sigma2_trend", "sigma2_plunge", "sigma3_trend",
                     "sigma3_plunge", "phi") if c in f.columns}
    out["group_id"] = groups[k]
    if not np.isfinite(out.get("phi", np.nan)):
        raise DataError(f"{lyr.name} group {groups[k]!r} has no stress (ill-posed): choose another group")
    return out, lyr


def _plane_ids(lyr, id_field):
    f = lyr.frame
    names = [n for n in (id_field, *steps.stress.PLANE_ID_FIELDS, "window_no") if n and n in f.columns]
    cols = {n: [None if _null(v) else v for v in f[n].tolist()] for n in names}
    return steps.stress.plane_labels(cols, [int(i) for i in lyr.feature_ids], id_field)


def _num(frame, name, lyr):
    import pandas as pd

    vals = pd.to_numeric(frame[name], errors="coerce")
    bad = vals.isna() & ~frame[name].isna()
    if bad.any():
        fid = lyr.feature_ids[int(np.flatnonzero(bad.to_numpy())[0])]
        raise DataError(f"{lyr.name} feature {fid}: field {name!r} = {frame[name][bad].iloc[0]!r} is not a number")
    return np.asarray(vals.astype(float).fillna(np.nan), float)


def slip_tendency_file(planes, out, *, planes_layer=None, id_field=None, dip_dir_field="dip_dir", dip_field="dip",
                       depth_m=None, depth_field=None, sigma1_mpa=None, sigma2_mpa=None, sigma3_mpa=None,
                       sigma1_axis=None, sigma3_axis=None, pore_pressure_mpa=None, shmax_azimuth=None,
                       regime=None, sv_gradient=None, shmax_gradient=None, shmin_gradient=None,
                       pore_pressure_gradient=None, inversion=None, inversion_layer="stress_axes", group=None,
                       friction=0.6, cohesion_mpa=0.0, near_failure=None, out_layer="slip_tendency",
                       overwrite=False):
    """Slip and dilation tendency of every plane of a layer with ``dip_dir``/``dip`` fields.

    The stress is given in one of the three ways of :func:`slipsense.steps.stress_state`
    (``inversion`` names an inversion output GeoPackage).  ``depth_m`` or ``depth_field`` (metres
    below the ground surface) is needed when the stress grows with depth.
    """
    check_output(out, [out_layer], overwrite, inputs=[planes, inversion])
    fields = [id_field, dip_dir_field, dip_field, depth_field]
    lyr = read_layer(planes, planes_layer, fields=[f for f in fields if f],
                     geometry=("LineString", "MultiLineString", "Point", "MultiPoint", "Polygon", "MultiPolygon"))
    inverted = None
    if inversion:
        inverted, ilyr = read_inversion(inversion, inversion_layer, group)
        if ilyr.crs != lyr.crs:
            raise DataError(f"the inversion {ilyr.name} is in {ilyr.crs.name} but the planes {lyr.name} are in "
                            f"{lyr.crs.name}: stress axes and dip directions must share one grid north")
    elif group is not None:
        raise DataError("--group chooses a group of an inversion result: give --inversion too")
    state = steps.stress_state(
        sigma1_mpa=sigma1_mpa, sigma2_mpa=sigma2_mpa, sigma3_mpa=sigma3_mpa, sigma1_axis=sigma1_axis,
        sigma3_axis=sigma3_axis, pore_pressure_mpa=pore_pressure_mpa, shmax_azimuth=shmax_azimuth, regime=regime,
        sv_gradient=sv_gradient, shmax_gradient=shmax_gradient, shmin_gradient=shmin_gradient,
        pore_pressure_gradient=pore_pressure_gradient, inverted=inverted, friction=friction)
    if depth_m is not None and depth_field:
        raise DataError("give the depth one way: --depth or --depth-field")
    depth = None
    if depth_field:
        depth = _num(lyr.frame, depth_field, lyr)
    elif depth_m is not None:
        depth = float(depth_m)
    if state.depth_dependent and depth is None:
        raise DataError("this stress grows with depth: give --depth METRES (the depth of interest below the ground "
                        "surface) or --depth-field; slip and dilation tendency do not depend on it, the stresses in "
                        "MPa and the pore pressure to failure do")
    ids = _plane_ids(lyr, id_field)
    f = lyr.frame
    first = f.geometry.values[0].geom_type if len(f) else "MultiLineString"
    geom = "MultiLineString" if "Line" in first else ("Point" if first == "Point" else first)
    step = steps.slip_tendency(ids, _num(f, dip_dir_field, lyr), _num(f, dip_field, lyr), state, depth_m=depth,
                               friction=friction, cohesion_mpa=cohesion_mpa, near_failure=near_failure,
                               geometry_type=geom)
    step.warnings = lyr.skipped + step.warnings
    north = _north(lyr, step)
    params = {"planes": planes, "planes_layer": planes_layer, "id_field": id_field, "dip_dir_field": dip_dir_field,
              "dip_field": dip_field, "depth_m": depth_m, "depth_field": depth_field, "stress": state.description,
              "inversion": inversion, "inversion_layer": inversion_layer if inversion else None, "group": group,
              "friction": friction, "cohesion_mpa": cohesion_mpa, "near_failure": step.summary["near_failure"]}
    prov = provenance("slip-tendency", params, [planes, inversion], lyr.crs, north_reference=north)
    step.summary["layers"] = write_result(out, step, {"slip_tendency": out_layer}, lyr.crs, prov, overwrite, f)
    step.summary["working_crs"] = prov["working_crs"]
    return step


def anderson_file(faults, out, *, layer=None, id_field=None, dip_dir_field="dip_dir", dip_field="dip",
                  trend_field=None, plunge_field=None, rake_field=None, pitch_field=None, pitch_end_field=None,
                  sense_field=None, misfit_tol_deg=None, friction=0.6, tolerance_deg=15.0, shmax_azimuth=None,
                  regime=None, out_layer="anderson", overwrite=False):
    """Andersonian check of faults with slip (stations), and the axes that would drive each."""
    _check_lineation(trend_field, plunge_field, rake_field, pitch_field, pitch_end_field)
    check_output(out, [out_layer], overwrite, inputs=[faults])
    fields = {"dip_dir": dip_dir_field, "dip": dip_field, "trend": trend_field, "plunge": plunge_field,
              "rake": rake_field, "pitch": pitch_field, "pitch_from": pitch_end_field, "sense": sense_field}
    lyr, col, fids, ids, labels, kw = _read_stations(faults, layer, id_field, fields)
    step = steps.anderson(ids, col(dip_dir_field), col(dip_field), feature_ids=fids, xy=points_xy(lyr),
                          labels=labels, fields={k: v for k, v in fields.items() if v}, misfit_tol_deg=misfit_tol_deg,
                          friction=friction, tolerance_deg=tolerance_deg, shmax_azimuth=shmax_azimuth,
                          regime=regime, **kw)
    step.warnings = lyr.skipped + step.warnings
    north = _north(lyr, step)
    params = {"faults": faults, "layer": layer, "id_field": id_field, "dip_dir_field": dip_dir_field,
              "dip_field": dip_field, "trend_field": trend_field, "plunge_field": plunge_field,
              "rake_field": rake_field, "pitch_field": pitch_field, "pitch_end_field": pitch_end_field,
              "sense_field": sense_field, "misfit_tol_deg": misfit_tol_deg, "friction": friction,
              "tolerance_deg": tolerance_deg, "shmax_azimuth": shmax_azimuth, "regime": regime}
    prov = provenance("anderson", params, [faults], lyr.crs, north_reference=north)
    step.summary["layers"] = write_result(out, step, {"anderson": out_layer}, lyr.crs, prov, overwrite)
    step.summary["working_crs"] = prov["working_crs"]
    return step

"""File-level tool for fault-slip data: a station point layer in, slip and kinematic axes out."""
from __future__ import annotations

from .. import steps
from ..errors import DataError
from ..io.vector import check_output, points_xy, read_layer
from .common import provenance, write_result

__all__ = ["fault_slip_file"]


def fault_slip_file(stations, out, *, layer=None, id_field=None, dip_dir_field="dip_dir",
                    dip_field="dip", trend_field=None, plunge_field=None, rake_field=None,
                    pitch_field=None, pitch_end_field=None, sense_field=None, fault_field=None,
                    group_field=None, misfit_tol_deg=None, resamples=500, seed=0,
                    out_layer="fault_slip", axes_layer="kinematic_axes", overwrite=False):
    """Slip, rake, sense and P/T/B axes of fault-slip stations, and summed-tensor axes per group.

    The lineation comes from exactly one of: ``trend_field`` + ``plunge_field``, ``rake_field``,
    or ``pitch_field`` + ``pitch_end_field``.  ``fault_field`` defaults to ``fault_id`` when the
    layer has it.  Azimuths in the fields are taken as grid azimuths of the layer's CRS.
    Per-station problems are flags (field ``status``) and warnings, not failures.

    Returns the :class:`~slipsense.steps.StepResult` (with ``summary['layers']`` written).
    """
    forms = [bool(trend_field or plunge_field), bool(rake_field), bool(pitch_field or pitch_end_field)]
    if sum(forms) != 1:
        raise DataError("give the lineation in exactly one form: --trend-field with --plunge-field, "
                        "--rake-field, or --pitch-field with --pitch-end-field")
    if forms[0] and not (trend_field and plunge_field):
        raise DataError("a lineation as trend/plunge needs both --trend-field and --plunge-field")
    if forms[2] and not (pitch_field and pitch_end_field):
        raise DataError("a lineation as pitch needs both --pitch-field and --pitch-end-field "
                        "(the strike end it is measured from)")
    if not dip_dir_field or not dip_field:
        raise DataError("the fault planes need a dip-direction field and a dip field")
    names = {"fault_slip": out_layer, "kinematic_axes": axes_layer}
    if out_layer == axes_layer:
        raise DataError(f"the data layer and the axes layer are both named {out_layer!r}: name them apart")
    check_output(out, list(names.values()), overwrite, inputs=[stations])
    wanted = [id_field, dip_dir_field, dip_field, trend_field, plunge_field, rake_field, pitch_field,
              pitch_end_field, sense_field, fault_field, group_field]
    lyr = read_layer(stations, layer, fields=[f for f in wanted if f], geometry=("Point",))
    frame = lyr.frame
    if fault_field is None and steps.kinematics.DEFAULT_FAULT_FIELD in frame.columns:
        fault_field = steps.kinematics.DEFAULT_FAULT_FIELD

    def col(name):
        return None if not name else [None if _null(v) else v for v in frame[name].tolist()]

    fids = [int(i) for i in lyr.feature_ids]
    ids = col(id_field) if id_field else fids
    labels = [f"{lyr.name} feature {fid}" for fid in lyr.feature_ids]
    fields = {"dip_dir": dip_dir_field, "dip": dip_field, "trend": trend_field, "plunge": plunge_field,
              "rake": rake_field, "pitch": pitch_field, "pitch_from": pitch_end_field,
              "sense": sense_field, "group": group_field}
    step = steps.fault_slip(
        ids, col(dip_dir_field), col(dip_field), feature_ids=fids, trend=col(trend_field), plunge=col(plunge_field),
        rake=col(rake_field), pitch=col(pitch_field), pitch_from=col(pitch_end_field),
        sense=col(sense_field), fault_ids=col(fault_field), group_values=col(group_field),
        xy=points_xy(lyr), labels=labels, fields={k: v for k, v in fields.items() if v},
        misfit_tol_deg=misfit_tol_deg, resamples=resamples, seed=seed,
    )
    step.warnings = lyr.skipped + step.warnings
    north = "grid"
    if lyr.source_crs is not None and lyr.source_crs.is_geographic:
        north = "as measured (the station layer is geographic)"
        step.warnings.insert(0, f"{lyr.name} is in a geographic CRS: its azimuths are used as measured "
                                f"(not converted to grid north of {lyr.crs.name}); refer them to grid "
                                "north first with 'slipsense orientations' if they are true or magnetic")
    params = {"stations": stations, "layer": layer, "id_field": id_field, "dip_dir_field": dip_dir_field,
              "dip_field": dip_field, "trend_field": trend_field, "plunge_field": plunge_field,
              "rake_field": rake_field, "pitch_field": pitch_field, "pitch_end_field": pitch_end_field,
              "sense_field": sense_field, "fault_field": fault_field, "group_field": group_field,
              "misfit_tol_deg": step.summary["misfit_tol_deg"], "resamples": resamples, "seed": seed}
    prov = provenance("fault-slip", params, [stations], lyr.crs, north_reference=north)
    step.summary["layers"] = write_result(out, step, names, lyr.crs, prov, overwrite)
    step.summary["working_crs"] = prov["working_crs"]
    return step


def _null(v):
    if v is None:
        return True
    try:
        return bool(v != v)  # NaN
    except TypeError:  # pandas.NA
        return True

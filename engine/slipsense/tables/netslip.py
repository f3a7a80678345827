"""Tables of the net-slip capabilities: ``net_slip``, ``slip_vectors``, ``marker_fits`` (numpy only)."""
from __future__ import annotations

import numpy as np

from . import Table

#: Fields of every ``net_slip`` row, in order, with their types (CONVENTIONS.md names; intervals
#: ``<name>_lo95``/``_hi95``).  NULL (NaN) where a value cannot be computed: an under-determined
#: row has no net slip but carries its family (``min_slip_m``, ``dip_slip_only_m``,
#: ``strike_slip_only_m``).
NETSLIP_FIELDS = (
    ("fault_id", "str"), ("status", "str"),
    ("net_slip_m", "float"), ("net_slip_lo95", "float"), ("net_slip_hi95", "float"),
    ("rake", "float"), ("rake_lo95", "float"), ("rake_hi95", "float"),
    ("slip_trend", "float"), ("slip_trend_lo95", "float"), ("slip_trend_hi95", "float"),
    ("slip_plunge", "float"), ("slip_plunge_lo95", "float"), ("slip_plunge_hi95", "float"),
    ("strike_slip_m", "float"), ("strike_slip_lo95", "float"), ("strike_slip_hi95", "float"),
    ("dip_slip_m", "float"), ("dip_slip_lo95", "float"), ("dip_slip_hi95", "float"),
    ("throw_m", "float"), ("throw_lo95", "float"), ("throw_hi95", "float"),
    ("heave_m", "float"), ("heave_lo95", "float"), ("heave_hi95", "float"),
    ("horizontal_slip_m", "float"), ("horizontal_slip_lo95", "float"), ("horizontal_slip_hi95", "float"),
    ("slip_e", "float"), ("slip_n", "float"), ("slip_u", "float"),
    ("sense", "str"), ("n_markers", "int"), ("n_constraints", "int"),
    ("residual_m", "float"), ("misfit_ratio", "float"), ("cutoff_angle", "float"), ("markers", "str"),
    ("min_slip_m", "float"), ("min_slip_lo95", "float"), ("min_slip_hi95", "float"),
    ("min_slip_rake", "float"), ("dip_slip_only_m", "float"), ("strike_slip_only_m", "float"),
    ("fault_dip_dir", "float"), ("fault_dip", "float"),
)

#: Extra fields of ``net_slip`` rows made from the map (``map-slip``).
MAP_FIELDS = (
    ("n_stations", "int"), ("station_rake", "float"), ("station_rake_sigma", "float"),
    ("marker_misfit", "float"),
)

MARKER_FIT_FIELDS = (
    ("fault_id", "str"), ("marker_id", "str"), ("status", "str"),
    ("dip_dir", "float"), ("dip", "float"), ("dip_lo95", "float"), ("dip_hi95", "float"),
    ("n_hw", "int"), ("n_fw", "int"), ("hw_pieces", "str"), ("fw_pieces", "str"),
    ("dropped_pieces", "str"), ("rms_m", "float"), ("misfit_ratio", "float"),
    ("separation_normal_m", "float"), ("separation_sigma_m", "float"),
    ("strike_separation_m", "float"), ("dip_separation_m", "float"), ("vertical_separation_m", "float"),
    ("cutoff_trend", "float"), ("cutoff_plunge", "float"), ("cutoff_rake", "float"), ("note", "str"),
)


def _column(values, kind):
    if kind == "float":
        return np.asarray([np.nan if v is None else float(v) for v in values], float)
    if kind == "int":
        return np.asarray(values, dtype=int) if len(values) else np.zeros(0, int)
    return np.asarray([str(v) for v in values], dtype=object)


def net_slip_table(fault_ids, results, geometries=None, geometry_type="PointZ", extra=None):
    """Table of ``net_slip``: one row per fault.

    ``results`` are :class:`~slipsense.core.netslip.NetSlip`; ``extra`` a list of dicts with the
    :data:`MAP_FIELDS` (map-slip rows); ``geometries`` one point per row, or None for an attribute
    table (``geometry_type`` "None").
    """
    cols, types = {}, {}
    for name, kind in NETSLIP_FIELDS:
        vals = [str(f) for f in fault_ids] if name == "fault_id" else [r.values[name] for r in results]
        cols[name] = _column(vals, kind)
        types[name] = kind
    if extra is not None:
        for name, kind in MAP_FIELDS:
            cols[name] = _column([e[name] for e in extra], kind)
            types[name] = kind
    cols["note"] = _column([r.values["note"] for r in results], "str")
    types["note"] = "str"
    if geometries is None:
        return Table(cols, types, "None", [None] * len(results), None)
    return Table(cols, types, geometry_type, list(geometries), None)


def marker_fit_table(fault_ids, fits):
    """Table of ``marker_fits``: one row per fault and marker (geometry: the contact vertices used)."""
    cols = {name: _column([fid for fid in fault_ids] if name == "fault_id" else
                          [getattr(f, name) for f in fits], kind) for name, kind in MARKER_FIT_FIELDS}
    types = dict(MARKER_FIT_FIELDS)
    geoms = [list(f.geometry) for f in fits]
    return Table(cols, types, "MultiLineString", geoms, None)


def slip_vector_table(fault_ids, results, lines, anchors):
    """Table of ``slip_vectors``: the slip vector as a 3-D line from the footwall point to the
    hanging-wall point (``anchor`` says where it is drawn)."""
    cols = {
        "fault_id": _column(fault_ids, "str"),
        "status": _column([r.values["status"] for r in results], "str"),
        "net_slip_m": _column([r.values["net_slip_m"] for r in results], "float"),
        "rake": _column([r.values["rake"] for r in results], "float"),
        "sense": _column([r.values["sense"] for r in results], "str"),
        "anchor": _column(anchors, "str"),
    }
    types = {"fault_id": "str", "status": "str", "net_slip_m": "float", "rake": "float",
             "sense": "str", "anchor": "str"}
    return Table(cols, types, "LineStringZ", [np.asarray(g, float) for g in lines], None)

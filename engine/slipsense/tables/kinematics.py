"""Tables of the fault-slip capability: per-datum slip and kinematic axes, and population axes
(numpy only)."""
from __future__ import annotations

import numpy as np

from . import Table

#: Fields of the per-datum layer (``fault_slip``), in order, with their types.
FAULT_SLIP_FIELDS = (
    ("station_id", "str"), ("fault_id", "str"), ("group_id", "str"),
    ("dip_dir", "float"), ("dip", "float"), ("strike", "float"),
    ("trend", "float"), ("plunge", "float"), ("rake", "float"), ("misfit_deg", "float"),
    ("sense_given", "str"), ("sense", "str"), ("fault_type", "str"), ("status", "str"),
    ("p_trend", "float"), ("p_plunge", "float"), ("t_trend", "float"), ("t_plunge", "float"),
    ("b_trend", "float"), ("b_plunge", "float"),
)

#: Fields of the population layer (``kinematic_axes``), in order, with their types.
KINEMATIC_AXES_FIELDS = (
    ("group_id", "str"), ("n_data", "int"), ("n_total", "int"),
    ("t_trend", "float"), ("t_plunge", "float"), ("t_cone95", "float"),
    ("p_trend", "float"), ("p_plunge", "float"), ("p_cone95", "float"),
    ("b_trend", "float"), ("b_plunge", "float"), ("b_cone95", "float"),
    ("t_eigenvalue", "float"), ("b_eigenvalue", "float"), ("p_eigenvalue", "float"),
    ("resamples", "int"), ("status", "str"),
)


def _text(values):
    return np.asarray(["" if v is None else str(v) for v in values], dtype=object)


def fault_slip_table(station_ids, fault_ids, group_ids, sense_given, data, axes, xy):
    """Table ``fault_slip``: one row per input station (geometry: the station point).

    ``data`` is a :class:`~slipsense.core.kinematics.FaultSlip` (arrays), ``axes`` the dict of
    :func:`~slipsense.core.kinematics.kinematic_axes`, ``xy`` (N, 2) metres.  ``trend``/``plunge``
    are the hanging-wall motion direction (plunge + down, − up).
    """
    cols = {
        "station_id": _text(station_ids), "fault_id": _text(fault_ids), "group_id": _text(group_ids),
        "dip_dir": data.dip_dir, "dip": data.dip, "strike": data.strike,
        "trend": data.trend, "plunge": data.plunge, "rake": data.rake, "misfit_deg": data.misfit_deg,
        "sense_given": _text(sense_given), "sense": _text(data.sense),
        "fault_type": _text(data.fault_type), "status": _text(data.status),
    }
    for k in ("p", "t", "b"):
        cols[f"{k}_trend"] = axes[f"{k}_trend"]
        cols[f"{k}_plunge"] = axes[f"{k}_plunge"]
    types = dict(FAULT_SLIP_FIELDS)
    cols = {name: (np.asarray(cols[name], dtype=float) if kind == "float" else cols[name])
            for name, kind in FAULT_SLIP_FIELDS}
    xy = np.asarray(xy, dtype=float).reshape(-1, 2)
    return Table(cols, types, "Point", [p for p in xy], None)


def kinematic_axes_table(group_ids, results, n_data, n_total, statuses, xy):
    """Table ``kinematic_axes``: one row per group (geometry: the mean position of its data).

    ``results`` holds one :class:`~slipsense.core.kinematics.KinematicAxes` per group, or None
    where the group has no usable data.
    """
    g = len(group_ids)
    cols = {name: (np.full(g, np.nan) if kind == "float" else None) for name, kind in KINEMATIC_AXES_FIELDS}
    cols["group_id"] = _text(group_ids)
    cols["n_data"] = np.asarray(n_data, dtype=int).reshape(g)
    cols["n_total"] = np.asarray(n_total, dtype=int).reshape(g)
    cols["status"] = _text(statuses)
    cols["resamples"] = np.zeros(g, dtype=int)
    for i, r in enumerate(results):
        if r is None:
            continue
        for k in ("t", "p", "b"):
            cols[f"{k}_trend"][i] = getattr(r, f"{k}_trend")
            cols[f"{k}_plunge"][i] = getattr(r, f"{k}_plunge")
            cols[f"{k}_cone95"][i] = getattr(r, f"{k}_cone95")
        cols["t_eigenvalue"][i], cols["b_eigenvalue"][i], cols["p_eigenvalue"][i] = r.eigenvalues
        cols["resamples"][i] = r.resamples
    types = dict(KINEMATIC_AXES_FIELDS)
    xy = np.asarray(xy, dtype=float).reshape(-1, 2)
    return Table(cols, types, "Point", [p for p in xy], None)

"""Tables of the stress capabilities: inverted stress axes, per-datum misfits, slip and dilation
tendency of planes, and the Andersonian check (numpy only)."""
from __future__ import annotations

import numpy as np

from . import Table

#: Fields of ``stress_axes`` (one row per group of fault-slip data), in order, with their types.
STRESS_AXES_FIELDS = (
    ("group_id", "str"), ("n_data", "int"), ("n_total", "int"),
    ("sigma1_trend", "float"), ("sigma1_plunge", "float"), ("sigma1_cone95", "float"),
    ("sigma2_trend", "float"), ("sigma2_plunge", "float"), ("sigma2_cone95", "float"),
    ("sigma3_trend", "float"), ("sigma3_plunge", "float"), ("sigma3_cone95", "float"),
    ("phi", "float"), ("phi_lo95", "float"), ("phi_hi95", "float"),
    ("regime", "str"), ("regime_support", "float"),
    ("shmax_azimuth", "float"), ("shmax_lo95", "float"), ("shmax_hi95", "float"),
    ("misfit_mean", "float"), ("misfit_median", "float"), ("n_large_misfit", "int"),
    ("rd_sigma1_trend", "float"), ("rd_sigma1_plunge", "float"), ("rd_sigma1_score", "float"),
    ("rd_sigma1_spread", "float"), ("rd_sigma1_offset", "float"),
    ("rd_sigma3_trend", "float"), ("rd_sigma3_plunge", "float"), ("rd_sigma3_score", "float"),
    ("rd_sigma3_spread", "float"), ("rd_sigma3_offset", "float"),
    ("method", "str"), ("resamples", "int"), ("seed", "int"),
    ("quality", "str"), ("reason", "str"), ("flag", "str"),
)

#: Fields of ``stress_misfits`` (one row per fault-slip datum).
STRESS_MISFIT_FIELDS = (
    ("station_id", "str"), ("group_id", "str"), ("status", "str"), ("used", "int"),
    ("dip_dir", "float"), ("dip", "float"), ("rake", "float"),
    ("slip_trend", "float"), ("slip_plunge", "float"),
    ("predicted_rake", "float"), ("misfit", "float"), ("shear_reduced", "float"),
    ("normal_reduced", "float"), ("flag", "str"),
)

#: Fields of ``slip_tendency`` (one row per plane).
SLIP_TENDENCY_FIELDS = (
    ("plane_id", "str"), ("dip_dir", "float"), ("dip", "float"), ("depth_m", "float"),
    ("sigma1_mpa", "float"), ("sigma2_mpa", "float"), ("sigma3_mpa", "float"),
    ("pore_pressure_mpa", "float"),
    ("sigma_n_mpa", "float"), ("tau_mpa", "float"), ("sigma_n_eff_mpa", "float"),
    ("slip_tendency", "float"), ("dilation_tendency", "float"), ("dp_to_failure_mpa", "float"),
    ("predicted_rake", "float"), ("predicted_sense", "str"), ("friction", "float"), ("flag", "str"),
)

#: Fields of ``anderson`` (one row per fault with slip).
ANDERSON_FIELDS = (
    ("station_id", "str"), ("status", "str"), ("dip_dir", "float"), ("dip", "float"), ("rake", "float"),
    ("fault_kind", "str"), ("predicted_dip", "float"), ("dip_departure", "float"), ("flag", "str"),
    ("sigma1_trend", "float"), ("sigma1_plunge", "float"), ("sigma2_trend", "float"),
    ("sigma2_plunge", "float"), ("sigma3_trend", "float"), ("sigma3_plunge", "float"),
    ("theta", "float"),
)


def _text(values):
    return np.asarray(["" if v is None else str(v) for v in values], dtype=object)


def _empty(fields, n):
    cols = {}
    for name, kind in fields:
        if kind == "float":
            cols[name] = np.full(n, np.nan)
        elif kind == "int":
            cols[name] = np.zeros(n, dtype=int)
        else:
            cols[name] = np.full(n, "", dtype=object)
    return cols


def stress_axes_table(group_ids, results, n_total, xy, reasons, *, method, seed, large_misfit_deg=30.0):
    """Table ``stress_axes``: one row per group (geometry: the mean position of its data).

    ``results`` holds a :class:`~slipsense.core.stress.StressInversion` per group, or None where
    the group could not be inverted (ill-posed: NULL axes, ``reason`` says why, from
    ``reasons``).
    """
    g = len(group_ids)
    cols = _empty(STRESS_AXES_FIELDS, g)
    cols["group_id"] = _text(group_ids)
    cols["n_total"] = np.asarray(n_total, dtype=int).reshape(g)
    cols["method"][:] = method
    cols["seed"][:] = int(seed)
    for i, r in enumerate(results):
        if r is None:
            cols["quality"][i] = "ill-posed"
            cols["reason"][i] = reasons[i]
            continue
        cols["n_data"][i] = r.n_data
        for k in range(3):
            cols[f"sigma{k + 1}_trend"][i] = r.trend[k]
            cols[f"sigma{k + 1}_plunge"][i] = r.plunge[k]
            cols[f"sigma{k + 1}_cone95"][i] = r.cone95[k]
        for name in ("phi", "phi_lo95", "phi_hi95", "regime_support", "shmax_azimuth", "shmax_lo95",
                     "shmax_hi95"):
            cols[name][i] = getattr(r, name)
        cols["regime"][i] = r.regime
        cols["misfit_mean"][i] = float(np.mean(r.misfit))
        cols["misfit_median"][i] = float(np.median(r.misfit))
        cols["n_large_misfit"][i] = int(np.sum(r.misfit > large_misfit_deg))
        rd = r.right_dihedra
        for k, vec in ((1, rd.sigma1), (3, rd.sigma3)):
            cols[f"rd_sigma{k}_trend"][i] = getattr(rd, f"sigma{k}_trend")
            cols[f"rd_sigma{k}_plunge"][i] = getattr(rd, f"sigma{k}_plunge")
            cols[f"rd_sigma{k}_score"][i] = getattr(rd, f"sigma{k}_score")
            cols[f"rd_sigma{k}_spread"][i] = getattr(rd, f"sigma{k}_spread")
            ax = r.axes[k - 1]
            cols[f"rd_sigma{k}_offset"][i] = float(np.degrees(np.arctan2(
                np.linalg.norm(np.cross(vec, ax)), abs(float(np.dot(vec, ax))))))
        cols["resamples"][i] = r.resamples
        cols["quality"][i] = r.quality
        cols["reason"][i] = r.reason
        cols["flag"][i] = "mixed phases?" if r.mixed else ""
    xy = np.asarray(xy, dtype=float).reshape(-1, 2)
    return Table(cols, dict(STRESS_AXES_FIELDS), "Point", [p for p in xy], None)


def stress_misfit_table(columns, xy):
    """Table ``stress_misfits``: one row per datum (geometry: the station point).

    ``columns``: dict of the :data:`STRESS_MISFIT_FIELDS` (arrays of length N); missing ones are
    NULL.
    """
    n = len(np.asarray(xy).reshape(-1, 2))
    cols = _empty(STRESS_MISFIT_FIELDS, n)
    for name, kind in STRESS_MISFIT_FIELDS:
        if name in columns:
            v = columns[name]
            cols[name] = np.asarray(v, dtype=float) if kind == "float" else (
                np.asarray(v, dtype=int) if kind == "int" else _text(v))
    xy = np.asarray(xy, dtype=float).reshape(-1, 2)
    return Table(cols, dict(STRESS_MISFIT_FIELDS), "Point", [p for p in xy], None)


def slip_tendency_table(plane_ids, dip_dir, dip, depth_m, values, predicted_rake, predicted_sense, friction,
                        flags, geometry_type, geometries=None):
    """Table ``slip_tendency``: one row per plane.

    Geometry: ``geometries`` (one coordinate array, or a list of part arrays, per row), or — when
    None — the input feature of each row (``source_index`` = row number).
    """
    n = len(plane_ids)
    cols = _empty(SLIP_TENDENCY_FIELDS, n)
    cols["plane_id"] = _text(plane_ids)
    cols["dip_dir"] = np.asarray(dip_dir, float).reshape(n)
    cols["dip"] = np.asarray(dip, float).reshape(n)
    cols["depth_m"] = np.asarray(depth_m, float).reshape(n)
    for name in ("sigma1_mpa", "sigma2_mpa", "sigma3_mpa", "pore_pressure_mpa", "sigma_n_mpa", "tau_mpa",
                 "sigma_n_eff_mpa", "slip_tendency", "dilation_tendency", "dp_to_failure_mpa"):
        cols[name] = np.asarray(values[name], float).reshape(n)
    cols["predicted_rake"] = np.asarray(predicted_rake, float).reshape(n)
    cols["predicted_sense"] = _text(predicted_sense)
    cols["friction"] = np.full(n, float(friction))
    cols["flag"] = _text(flags)
    return Table(cols, dict(SLIP_TENDENCY_FIELDS), geometry_type, geometries,
                 None if geometries is not None else np.arange(n))


def anderson_table(station_ids, status, dip_dir, dip, rake, check, axes_lines, theta, xy):
    """Table ``anderson``: one row per fault-slip datum (geometry: the station point).

    ``check`` is the dict of :func:`~slipsense.core.stress.anderson_check`; ``axes_lines`` a dict
    ``sigma{k}_trend``/``sigma{k}_plunge`` -> (N,) of the driving axes.
    """
    n = len(station_ids)
    cols = _empty(ANDERSON_FIELDS, n)
    cols["station_id"] = _text(station_ids)
    cols["status"] = _text(status)
    cols["dip_dir"] = np.asarray(dip_dir, float).reshape(n)
    cols["dip"] = np.asarray(dip, float).reshape(n)
    cols["rake"] = np.asarray(rake, float).reshape(n)
    cols["fault_kind"] = _text(check["kind"])
    cols["predicted_dip"] = np.asarray(check["predicted_dip"], float)
    cols["dip_departure"] = np.asarray(check["dip_departure"], float)
    cols["flag"] = _text(check["flag"])
    for k, v in axes_lines.items():
        cols[k] = np.asarray(v, float).reshape(n)
    cols["theta"] = np.full(n, float(theta))
    xy = np.asarray(xy, dtype=float).reshape(-1, 2)
    return Table(cols, dict(ANDERSON_FIELDS), "Point", [p for p in xy], None)

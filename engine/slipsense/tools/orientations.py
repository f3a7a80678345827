"""Plane measurements from a point layer, referred to grid north of the working CRS."""
from __future__ import annotations

import numpy as np

from ..core.orientation import (
    dip_dir_to_strike,
    magnetic_to_true_azimuth,
    normalize_azimuth,
    parse_plane,
    plane_to_pole,
    strike_dip_to_plane,
    true_to_grid_azimuth,
)
from ..errors import DataError, InputError
from ..io.crs import meridian_convergence, transformer
from ..io.vector import check_output, points_xy, read_layer
from ..tables import Table
from .common import provenance, write_result

__all__ = ["orientations_file", "declination_from_model"]

NORTHS = ("grid", "true", "magnetic")


def declination_from_model(lon, lat, decimal_year):
    """Magnetic declination (degrees, east positive) from the World Magnetic Model (pygeomag)."""
    try:
        from pygeomag import GeoMag
    except ImportError as exc:  # pragma: no cover - pygeomag is a dependency
        raise InputError("the geomagnetic model needs the 'pygeomag' package; or give --declination") from exc
    gm = GeoMag()
    return np.array([gm.calculate(glat=float(b), glon=float(a), alt=0.0, time=float(decimal_year)).d
                     for a, b in zip(np.atleast_1d(lon), np.atleast_1d(lat))])


def orientations_file(points, out, *, layer=None, id_field=None, text_field=None, dip_dir_field=None,
                      strike_field=None, dip_field=None, quadrant_field=None, right_hand_rule=False,
                      north="grid", declination=None, model_year=None, out_layer="orientations",
                      overwrite=False):
    """Read plane measurements and write them as grid-north dip direction/dip.

    Measurements come as text (``text_field``: "N30E 45SE", "030/45SE"), as ``dip_dir_field`` +
    ``dip_field``, or as ``strike_field`` + ``dip_field`` (+ ``quadrant_field`` unless
    ``right_hand_rule``).  ``north`` says what the azimuths were measured from: "grid", "true"
    (corrected with the meridian convergence at each point) or "magnetic" (corrected first with
    ``declination``, degrees east positive, or with the World Magnetic Model at ``model_year``).
    A measurement that cannot be read is flagged on its feature (field ``status``), not fatal.
    """
    if north not in NORTHS:
        raise InputError(f"north must be one of {', '.join(NORTHS)}, got {north!r}")
    forms = [bool(text_field), bool(dip_dir_field), bool(strike_field)]
    if sum(forms) != 1:
        raise DataError("give exactly one of: a text field, a dip-direction field, a strike field")
    if (dip_dir_field or strike_field) and not dip_field:
        raise DataError("a dip field is needed with a dip-direction or strike field")
    if north == "magnetic" and (declination is None) == (model_year is None):
        raise InputError("magnetic azimuths need exactly one of --declination DEGREES or --model-year YEAR")
    check_output(out, [out_layer], overwrite, inputs=[points])
    fields = [f for f in (id_field, text_field, dip_dir_field, strike_field, dip_field, quadrant_field) if f]
    lyr = read_layer(points, layer, fields=fields, geometry=("Point",))
    f = lyr.frame
    n = len(f)
    dd = np.full(n, np.nan)
    dp = np.full(n, np.nan)
    status = np.full(n, "ok", dtype=object)
    for k in range(n):
        fid = lyr.feature_ids[k]
        try:
            if text_field:
                dd[k], dp[k] = parse_plane(str(f[text_field].iloc[k]), right_hand_rule=right_hand_rule)
            elif dip_dir_field:
                a, b = float(f[dip_dir_field].iloc[k]), float(f[dip_field].iloc[k])
                if not (0 <= a <= 360):
                    raise InputError(f"dip direction must be in [0, 360] degrees, got {a!r}")
                dd[k], dp[k] = strike_dip_to_plane(a - 90.0, b, None, right_hand_rule=True)
            else:
                q = f[quadrant_field].iloc[k] if quadrant_field else None
                dd[k], dp[k] = strike_dip_to_plane(float(f[strike_field].iloc[k]), float(f[dip_field].iloc[k]),
                                                   q, right_hand_rule=right_hand_rule)
        except (InputError, ValueError, TypeError) as exc:
            status[k] = f"feature {fid}: {exc}"
    xy = points_xy(lyr)
    dd_in = dd.copy()
    decl = np.zeros(n)
    conv = np.zeros(n)
    if north in ("true", "magnetic"):
        conv = meridian_convergence(lyr.crs, xy[:, 0], xy[:, 1])
    if north == "magnetic":
        if declination is not None:
            decl = np.full(n, float(declination))
        else:
            lon, lat = transformer(lyr.crs, lyr.crs.geodetic_crs).transform(xy[:, 0], xy[:, 1])
            decl = declination_from_model(lon, lat, model_year)
        dd = magnetic_to_true_azimuth(dd, decl)
    if north in ("true", "magnetic"):
        dd = true_to_grid_azimuth(dd, conv)
    dd = np.where(np.isfinite(dd), normalize_azimuth(np.nan_to_num(dd)), np.nan)
    ok = np.isfinite(dd)
    ids = f[id_field].astype(str).to_numpy() if id_field else np.array([str(i) for i in lyr.feature_ids])
    pole_t, pole_p = plane_to_pole(np.nan_to_num(dd), np.nan_to_num(dp))
    cols = {
        "station_id": ids.astype(object),
        "dip_dir": dd, "dip": dp,
        "strike": np.where(ok, dip_dir_to_strike(np.nan_to_num(dd)), np.nan),
        "pole_trend": np.where(ok, pole_t, np.nan), "pole_plunge": np.where(ok, pole_p, np.nan),
        "dip_dir_measured": dd_in, "declination": decl, "convergence": conv,
        "status": status,
    }
    types = {k: "float" for k in cols}
    types["station_id"] = "str"
    types["status"] = "str"
    table = Table(cols, types, "Point", [p for p in xy], None)

    class _Step:  # a StepResult without importing steps (nothing to compute there)
        tables = {"orientations": table}
        summary = {"measurements": n, "read": int(ok.sum()), "flagged": int((~ok).sum()), "north_in": north}
        warnings = lyr.skipped + [s for s in status if s != "ok"]

    params = {"points": points, "layer": layer, "text_field": text_field, "dip_dir_field": dip_dir_field,
              "strike_field": strike_field, "dip_field": dip_field, "quadrant_field": quadrant_field,
              "right_hand_rule": right_hand_rule, "north": north, "declination": declination,
              "model_year": model_year}
    prov = provenance("orientations", params, [points], lyr.crs, north_reference="grid")
    _Step.summary["layers"] = write_result(out, _Step, {"orientations": out_layer}, lyr.crs, prov, overwrite)
    return _Step

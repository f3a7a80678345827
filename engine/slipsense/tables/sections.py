"""Tables of the cross-section capability (numpy only).

Every drawable layer comes twice, with the same rows and fields:

* in map coordinates (working CRS), as 3-D lines lying in the vertical plane of the section
  (``LineStringZ``), so QGIS shows them on the map (along the section line) and in 3-D;
* in section coordinates, ``<name>_xz``: x = ``distance_m`` along the section, y =
  ``elevation_m``, true scale (no CRS), for drawing the section.

Rows that have nothing to draw (a plane left out of the section, say) keep a NULL geometry so the
layer still says why.
"""
from __future__ import annotations

import numpy as np

from . import Table
from .netslip import NETSLIP_FIELDS

__all__ = [
    "SECTION_CRS_WKT",
    "SEGMENT_FIELDS",
    "PROFILE_FIELDS",
    "FAULT_FIELDS",
    "CONTACT_FIELDS",
    "POINT_FIELDS",
    "OFFSET_FIELDS",
    "NET_SLIP_FIELDS",
    "SECTION_LAYERS",
    "section_table",
]

#: The engineering (local) CRS of the ``*_xz`` layers: x = distance along the section, y = elevation,
#: metres.  Not a map CRS: QGIS shows these layers on their own, as the section drawing.
SECTION_CRS_WKT = (
    'LOCAL_CS["slipsense section coordinates (x = distance along the section, y = elevation)",'
    'LOCAL_DATUM["section",32767],UNIT["metre",1],AXIS["distance",EAST],AXIS["elevation",NORTH]]'
)

SEGMENT_FIELDS = (
    ("section_id", "str"), ("segment", "int"), ("azimuth", "float"), ("length_m", "float"),
    ("distance_start_m", "float"), ("distance_end_m", "float"), ("bend_angle", "float"),
)
PROFILE_FIELDS = (
    ("section_id", "str"), ("part", "int"), ("distance_start_m", "float"), ("distance_end_m", "float"),
    ("elevation_min_m", "float"), ("elevation_max_m", "float"), ("n_samples", "int"),
    ("spacing_m", "float"),
)
_LINE_FIELDS = (
    ("angle_to_strike", "float"), ("apparent_dip", "float"), ("apparent_dip_lo95", "float"),
    ("apparent_dip_hi95", "float"), ("apparent_dip_toward", "float"), ("dips_toward", "str"),
)
FAULT_FIELDS = (
    ("section_id", "str"), ("segment", "int"), ("fault_id", "str"), ("part", "int"),
    ("dip_dir", "float"), ("dip", "float"), ("strike", "float"),
) + _LINE_FIELDS + (
    ("surface_distance_m", "float"), ("surface_elevation_m", "float"),
    ("top_distance_m", "float"), ("top_elevation_m", "float"),
    ("base_distance_m", "float"), ("base_elevation_m", "float"),
    ("status", "str"),
)
CONTACT_FIELDS = (
    ("section_id", "str"), ("segment", "int"), ("marker_id", "str"), ("block", "str"), ("part", "int"),
    ("pieces", "str"), ("dip_dir", "float"), ("dip", "float"), ("strike", "float"),
) + _LINE_FIELDS + (
    ("attitude", "str"), ("top_distance_m", "float"), ("top_elevation_m", "float"),
    ("base_distance_m", "float"), ("base_elevation_m", "float"), ("status", "str"),
)
POINT_FIELDS = (
    ("section_id", "str"), ("segment", "int"), ("kind", "str"), ("point_id", "str"), ("fault_id", "str"),
    ("x", "float"), ("y", "float"), ("z", "float"),
    ("distance_m", "float"), ("elevation_m", "float"), ("offset_m", "float"), ("travel_m", "float"),
    ("projection", "str"), ("dip_dir", "float"), ("dip", "float"),
) + _LINE_FIELDS + (("status", "str"),)
OFFSET_FIELDS = (
    ("section_id", "str"), ("segment", "int"), ("fault_id", "str"), ("marker_id", "str"),
    ("hw_block", "str"), ("fw_block", "str"),
    ("separation_m", "float"), ("separation_lo95", "float"), ("separation_hi95", "float"),
    ("vertical_separation_m", "float"), ("vertical_separation_lo95", "float"),
    ("vertical_separation_hi95", "float"),
    ("horizontal_separation_m", "float"), ("horizontal_separation_lo95", "float"),
    ("horizontal_separation_hi95", "float"),
    ("line_trend", "float"), ("line_plunge", "float"),
    ("hw_distance_m", "float"), ("hw_elevation_m", "float"),
    ("fw_distance_m", "float"), ("fw_elevation_m", "float"),
    ("cutoffs", "str"), ("status", "str"),
)
#: Fields of ``section_net_slip``: the section, then the shared net-slip layout of
#: :data:`slipsense.tables.netslip.NETSLIP_FIELDS` (one row per fault in the section), then where the
#: slip direction came from and where the fault meets the ground in the section.
NET_SLIP_FIELDS = (("section_id", "str"),) + NETSLIP_FIELDS + (
    ("slip_direction", "str"), ("n_stations", "int"), ("station_rake", "float"),
    ("station_rake_sigma", "float"), ("distance_m", "float"), ("elevation_m", "float"), ("note", "str"),
)

#: layer name -> (fields, map geometry type); each also has a ``<name>_xz`` twin except the
#: segments (map only) and the net slip (one point per fault, both).
SECTION_LAYERS = {
    "section_segments": (SEGMENT_FIELDS, "LineString"),
    "section_profiles": (PROFILE_FIELDS, "LineStringZ"),
    "section_faults": (FAULT_FIELDS, "LineStringZ"),
    "section_contacts": (CONTACT_FIELDS, "LineStringZ"),
    "section_points": (POINT_FIELDS, "LineStringZ"),
    "section_offsets": (OFFSET_FIELDS, "LineStringZ"),
    "section_net_slip": (NET_SLIP_FIELDS, "PointZ"),
}


def _empty(kind):
    return np.zeros(0, dtype=object if kind == "str" else (int if kind == "int" else float))


def section_table(name, rows, map_geoms, xz_geoms=None):
    """The map table (and, with ``xz_geoms``, its section-coordinate twin) of layer ``name``.

    Parameters
    ----------
    name : a key of :data:`SECTION_LAYERS`
    rows : list of dicts with every field of the layer (NaN / "" for missing values)
    map_geoms : list of coordinate arrays (map CRS; (n, 3) for 3-D lines, (3,) for points)
    xz_geoms : list of (n, 2) or (2,) arrays in (distance_m, elevation_m), optional

    Returns
    -------
    (Table, Table or None)
    """
    fields, kind = SECTION_LAYERS[name]
    types = dict(fields)
    cols = {}
    for f, t in fields:
        vals = [r[f] for r in rows]
        if not vals:
            cols[f] = _empty(t)
        elif t == "str":
            cols[f] = np.asarray([("" if v is None else str(v)) for v in vals], dtype=object)
        elif t == "int":
            cols[f] = np.asarray(vals, dtype=int)
        else:
            cols[f] = np.asarray([np.nan if v is None else float(v) for v in vals], dtype=float)
    map_t = Table(cols, types, kind, list(map_geoms), None)
    xz_t = None
    if xz_geoms is not None:
        xz_kind = "Point" if kind == "PointZ" else "LineString"
        xz_t = Table(dict(cols), dict(types), xz_kind, list(xz_geoms), None)
    return map_t, xz_t

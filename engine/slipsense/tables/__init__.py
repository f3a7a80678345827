"""Output tables: the one place that says which fields each output layer has (numpy only).

The CLI (through :mod:`slipsense.io`) and the QGIS plugin both turn core results into layers with
these functions, so the two write the same fields with the same values.  A :class:`Table` is
columns (name -> array) with a type for each, plus geometries as plain coordinate arrays.
One module per topic; everything is re-exported here.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

@dataclass(frozen=True)
class Table:
    """Columns for one output layer.

    Attributes
    ----------
    columns : dict of name -> (R,) array
    types : dict of name -> "float" | "int" | "str"
    geometry_type : "LineString", "MultiLineString", "Point", "LineStringZ" or "PointZ"
    geometries : list of (n, 2|3) arrays (one per row; a list of arrays for multi-part), or None
        when each row takes the geometry of the input feature named by ``source_index``.
    source_index : (R,) int or None
        Row -> input feature (for copying geometry or attributes).
    """

    columns: dict
    types: dict
    geometry_type: str
    geometries: list | None = None
    source_index: np.ndarray | None = None
    notes: list = field(default_factory=list)

    def __len__(self):
        first = next(iter(self.columns.values()), None)
        return 0 if first is None else len(first)

    def rows(self):
        """Each row as a dict of plain Python values (None for NaN floats)."""
        names = list(self.columns)
        for i in range(len(self)):
            yield {n: _plain(self.columns[n][i], self.types[n]) for n in names}


def _plain(v, kind):
    if kind == "float":
        v = float(v)
        return None if not np.isfinite(v) else v
    if kind == "int":
        return int(v)
    return str(v)



from .kinematics import FAULT_SLIP_FIELDS, KINEMATIC_AXES_FIELDS, fault_slip_table, kinematic_axes_table  # noqa: E402
from .netslip import NETSLIP_FIELDS, marker_fit_table, net_slip_table, slip_vector_table  # noqa: E402
from .sections import SECTION_LAYERS, section_table  # noqa: E402
from .stress import (  # noqa: E402
    ANDERSON_FIELDS,
    SLIP_TENDENCY_FIELDS,
    STRESS_AXES_FIELDS,
    STRESS_MISFIT_FIELDS,
    anderson_table,
    slip_tendency_table,
    stress_axes_table,
    stress_misfit_table,
)
from .planes import (  # noqa: E402
    PLANE_FIELDS,
    contour_table,
    depth_table,
    outcrop_table,
    point_plane_table,
    trace_plane_table,
    window_table,
)

__all__ = [
    "Table",
    "trace_plane_table",
    "window_table",
    "point_plane_table",
    "contour_table",
    "outcrop_table",
    "depth_table",
    "PLANE_FIELDS",
    "fault_slip_table",
    "kinematic_axes_table",
    "FAULT_SLIP_FIELDS",
    "KINEMATIC_AXES_FIELDS",
    "net_slip_table",
    "marker_fit_table",
    "slip_vector_table",
    "NETSLIP_FIELDS",
    "section_table",
    "SECTION_LAYERS",
    "stress_axes_table",
    "stress_misfit_table",
    "slip_tendency_table",
    "anderson_table",
    "STRESS_AXES_FIELDS",
    "STRESS_MISFIT_FIELDS",
    "SLIP_TENDENCY_FIELDS",
    "ANDERSON_FIELDS",
]

"""Capabilities as array-in, table-out steps (numpy only).

Each function here is what one CLI subcommand and one QGIS processing algorithm run: the callers
only read features into arrays and write the returned :class:`~slipsense.tables.Table` objects.
Every step returns a :class:`StepResult` with its tables, a summary and per-feature warnings.
One module per topic; everything is re-exported here.
"""
from .base import StepResult, collar_margin_m, dem_margin_m, quality_counts
from .planes import outcrop_traces, plane_depths, point_planes, structure_contours, trace_planes
from .kinematics import fault_slip
from .netslip import map_slip, map_slip_margin_m, net_slip, station_slip
from .sections import ContactSet, HoleSet, PlaneSet, PointSet, cross_sections
from .stress import anderson, slip_tendency, stress_inversion, stress_state

__all__ = [
    "StepResult",
    "dem_margin_m",
    "collar_margin_m",
    "quality_counts",
    "trace_planes",
    "point_planes",
    "structure_contours",
    "outcrop_traces",
    "plane_depths",
    "fault_slip",
    "net_slip",
    "map_slip",
    "map_slip_margin_m",
    "station_slip",
    "cross_sections",
    "PlaneSet",
    "ContactSet",
    "PointSet",
    "HoleSet",
    "stress_inversion",
    "stress_state",
    "slip_tendency",
    "anderson",
]

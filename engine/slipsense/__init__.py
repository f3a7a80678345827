"""slipsense: fault orientation, slip and stress from mapped geology.

Conventions (see the project's CONVENTIONS in DEVELOPERS.md): x = east, y = north, z = up, metres;
angles in degrees; planes as dip direction / dip (0–360 / 0–90) with right-hand-rule strike;
azimuths from grid north of the working projected CRS unless a layer says otherwise; slip is the
hanging wall's motion relative to the footwall, rake after Aki & Richards (1980).

Results are interpretations for screening; they must be checked by a qualified professional
against local codes and licensed practice before they inform hazard, slope, foundation or
drilling decisions.
"""
__version__ = "0.1.0"

from .core.orientation import (  # noqa: E402
    angle_between_lines,
    angle_between_planes,
    dip_dir_to_strike,
    line_to_vector,
    normal_to_plane,
    parse_plane,
    plane_to_normal,
    plane_to_pole,
    strike_to_dip_dir,
    vector_to_line,
)
from .core.planes import planes_from_points, three_point  # noqa: E402
from .errors import SlipsenseError  # noqa: E402

__all__ = [
    "__version__",
    "SlipsenseError",
    "angle_between_lines",
    "angle_between_planes",
    "dip_dir_to_strike",
    "line_to_vector",
    "normal_to_plane",
    "parse_plane",
    "plane_to_normal",
    "plane_to_pole",
    "strike_to_dip_dir",
    "vector_to_line",
    "planes_from_points",
    "three_point",
]

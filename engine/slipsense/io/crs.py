"""Coordinate reference systems: checks, the working CRS, UTM choice, meridian convergence."""
from __future__ import annotations

import numpy as np

from ..errors import CRSError

__all__ = ["as_crs", "require_projected", "utm_crs_for", "transformer", "meridian_convergence"]


def as_crs(crs, what):
    """A :class:`pyproj.CRS` from anything pyproj accepts; :class:`CRSError` naming ``what``."""
    from pyproj import CRS
    from pyproj.exceptions import CRSError as _PE

    if crs is None or crs == "":
        raise CRSError(f"{what} has no coordinate reference system: assign one in your GIS first")
    try:
        return CRS.from_user_input(crs)
    except _PE as exc:
        raise CRSError(f"{what} has a coordinate reference system pyproj cannot read: {crs!r}") from exc


def require_projected(crs, what):
    """Raise :class:`CRSError` unless ``crs`` is projected with metre units."""
    if crs.is_geographic:
        raise CRSError(
            f"{what} is in geographic coordinates ({crs.name}); computations need a projected CRS in "
            "metres: reproject it (e.g. to the local UTM zone) first"
        )
    units = {ax.unit_name for ax in crs.axis_info[:2]}
    if not units <= {"metre", "meter", "m"}:
        raise CRSError(f"{what} has map units {sorted(units)}; slipsense needs metres")
    return crs


def utm_crs_for(lon, lat):
    """The WGS 84 UTM zone CRS at (lon, lat) degrees."""
    from pyproj import CRS
    from pyproj.aoi import AreaOfInterest
    from pyproj.database import query_utm_crs_info

    info = query_utm_crs_info(
        datum_name="WGS 84",
        area_of_interest=AreaOfInterest(float(lon), float(lat), float(lon), float(lat)),
    )
    if not info:
        raise CRSError(f"no UTM zone found at lon {lon:g}, lat {lat:g}")
    return CRS.from_epsg(int(info[0].code))


def transformer(src, dst):
    """An always-x-y pyproj transformer from ``src`` to ``dst``."""
    from pyproj import Transformer

    return Transformer.from_crs(src, dst, always_xy=True)


def meridian_convergence(crs, x, y):
    """Meridian convergence (degrees) at map points ``x``, ``y`` of projected ``crs``.

    The angle from true north to grid north, positive when grid north is clockwise (east) of true
    north, as pyproj's ``Proj.get_factors().meridian_convergence`` gives it (a test pins the sign
    against geodesic azimuths).  ``true azimuth = grid azimuth + convergence``.
    """
    from pyproj import Proj

    lon, lat = transformer(crs, crs.geodetic_crs).transform(np.asarray(x, float), np.asarray(y, float))
    f = Proj(crs).get_factors(lon, lat)
    return np.asarray(f.meridian_convergence, dtype=float)

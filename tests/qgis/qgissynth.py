"""Small synthetic field data for the QGIS tests: a hilly DEM and a dipping fault that crops out on it.

The DEM is an analytic surface sampled at cell centres (EPSG:32633, 10 m cells).  Fault traces are
found in the test itself, independently of the engine: for points along strike, the outcrop is
where the surface crosses the plane, found by bisection down dip.  Written with GDAL/OGR (shipped
with QGIS) so the files are the same kind as the demo's: a GeoTIFF and a GeoPackage with layers
``fault_traces`` (field ``fault_id``), ``contact_points`` (``group_id``, ``z_m``) and
``borehole_collars`` (``collar_id``, ``trend``, ``plunge``, ``fault_id``).
"""
import numpy as np

EPSG = 32633
X0, Y0 = 500000.0, 4100000.0  # upper-left corner
CELL = 10.0
COLS, ROWS = 160, 120
NODATA = -9999.0

#: (fault_id, point on the plane (x, y, z), dip_dir, dip)
FAULTS = (
    ("F1", (500500.0, 4099500.0, 520.0), 110.0, 35.0),
    ("F2", (501000.0, 4099300.0, 520.0), 250.0, 40.0),
)


def surface(x, y):
    """Terrain elevation (m) at map coordinates: a tilted valley with hills."""
    u = (x - X0) / 1600.0
    v = (Y0 - y) / 1200.0
    return (
        500.0 + 40.0 * np.sin(2.1 * u + 0.3) * np.cos(1.7 * v) + 90.0 * np.cos(9.0 * v - 1.0)
        + 25.0 * u - 15.0 * v
    )


def dem_values():
    xc = X0 + CELL * (np.arange(COLS) + 0.5)
    yc = Y0 - CELL * (np.arange(ROWS) + 0.5)
    gx, gy = np.meshgrid(xc, yc)
    z = surface(gx, gy).astype(np.float32)
    z[:6, -8:] = NODATA  # a nodata corner, away from the faults
    return z


def plane_z(x, y, point, dip_dir, dip):
    d = np.radians(dip_dir)
    down = (x - point[0]) * np.sin(d) + (y - point[1]) * np.cos(d)
    return point[2] - down * np.tan(np.radians(dip))


def outcrop_trace(point, dip_dir, dip, half_length=400.0, step=20.0):
    """Vertices where the surface meets the plane, along strike through ``point``."""
    d = np.radians(dip_dir)
    down = np.array([np.sin(d), np.cos(d)])
    strike = np.array([np.sin(d - np.pi / 2), np.cos(d - np.pi / 2)])
    out = []
    for s in np.arange(-half_length, half_length + 1e-9, step):
        base = np.array(point[:2]) + s * strike

        def gap(t):
            x, y = base + t * down
            return surface(x, y) - plane_z(x, y, point, dip_dir, dip)

        lo, hi = -600.0, 600.0
        if np.sign(gap(lo)) == np.sign(gap(hi)):
            continue
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            if np.sign(gap(mid)) == np.sign(gap(lo)):
                lo = mid
            else:
                hi = mid
        out.append(base + 0.5 * (lo + hi) * down)
    return np.array(out)


def write_dem(path, epsg=EPSG, rotated=False):
    from osgeo import gdal, osr

    drv = gdal.GetDriverByName("GTiff")
    ds = drv.Create(str(path), COLS, ROWS, 1, gdal.GDT_Float32)
    gt = (X0, CELL, 0.0, Y0, 0.0, -CELL) if not rotated else (X0, CELL, 0.5, Y0, 0.5, -CELL)
    ds.SetGeoTransform(gt)
    if epsg:
        srs = osr.SpatialReference()
        srs.ImportFromEPSG(epsg)
        ds.SetProjection(srs.ExportToWkt())
    band = ds.GetRasterBand(1)
    band.SetNoDataValue(NODATA)
    band.WriteArray(dem_values())
    ds.FlushCache()
    ds = None
    return str(path)


def _layer(ds, name, geom_type, epsg, fields):
    from osgeo import ogr, osr

    srs = None
    if epsg:
        srs = osr.SpatialReference()
        srs.ImportFromEPSG(epsg)
        srs.SetAxisMappingStrategy(osr.OAMS_TRADITIONAL_GIS_ORDER)
    lyr = ds.CreateLayer(name, srs, geom_type)
    for fname, ftype in fields:
        lyr.CreateField(ogr.FieldDefn(fname, ftype))
    return lyr


def _add(lyr, wkt, **attrs):
    from osgeo import ogr

    f = ogr.Feature(lyr.GetLayerDefn())
    for k, v in attrs.items():
        f.SetField(k, v)
    f.SetGeometry(ogr.CreateGeometryFromWkt(wkt))
    lyr.CreateFeature(f)


def traces():
    """fault_id -> (n, 2) trace vertices (F2 split into two parts around a gap)."""
    out = {}
    for fid, point, dd, dp in FAULTS:
        out[fid] = outcrop_trace(point, dd, dp)
    return out


def contact_points():
    """(group_id, x, y, z_m) rows: three groups of points on known planes (one of 3 points)."""
    rows = []
    rng = np.random.default_rng(7)
    specs = (("C10", (500300.0, 4099700.0, 480.0), 30.0, 20.0, 6),
             ("C2", (500900.0, 4099600.0, 500.0), 200.0, 35.0, 3),
             ("C3", (501200.0, 4099200.0, 450.0), 300.0, 60.0, 8))
    for gid, p, dd, dp, n in specs:
        xy = np.array(p[:2]) + rng.uniform(-150, 150, size=(n, 2))
        for x, y in xy:
            rows.append((gid, float(x), float(y), float(plane_z(x, y, p, dd, dp))))
    # interleave groups so first-appearance order differs from sorted order
    return rows[6:9] + rows[:6] + rows[9:]


COLLARS = (
    ("BH1", 500650.0, 4099450.0, 0.0, 90.0, "F1"),
    ("BH2", 500800.0, 4099350.0, 290.0, 60.0, "F1"),
    ("BH3", 500950.0, 4099250.0, 70.0, 70.0, "F2"),
)


def write_vectors(path, epsg=EPSG, with_points=True):
    """The GeoPackage with the three layers; returns its path."""
    from osgeo import ogr

    drv = ogr.GetDriverByName("GPKG")
    ds = drv.CreateDataSource(str(path))
    lyr = _layer(ds, "fault_traces", ogr.wkbMultiLineString, epsg, [("fault_id", ogr.OFTString)])
    for fid, xy in traces().items():
        if fid == "F2":
            k = len(xy) // 2
            parts = [xy[:k], xy[k + 1:]]
        else:
            parts = [xy]
        wkt = "MULTILINESTRING (" + ", ".join(
            "(" + ", ".join(f"{x:.3f} {y:.3f}" for x, y in part) + ")" for part in parts) + ")"
        _add(lyr, wkt, fault_id=fid)
    if with_points:
        lyr = _layer(ds, "contact_points", ogr.wkbPoint, epsg,
                     [("group_id", ogr.OFTString), ("z_m", ogr.OFTReal)])
        for gid, x, y, z in contact_points():
            _add(lyr, f"POINT ({x:.3f} {y:.3f})", group_id=gid, z_m=z)
        lyr = _layer(ds, "borehole_collars", ogr.wkbPoint, epsg,
                     [("collar_id", ogr.OFTString), ("trend", ogr.OFTReal), ("plunge", ogr.OFTReal),
                      ("fault_id", ogr.OFTString)])
        for cid, x, y, t, p, f in COLLARS:
            _add(lyr, f"POINT ({x} {y})", collar_id=cid, trend=t, plunge=p, fault_id=f)
    ds = None
    return str(path)


def write_empty_lines(path, epsg=EPSG):
    from osgeo import ogr

    ds = ogr.GetDriverByName("GPKG").CreateDataSource(str(path))
    _layer(ds, "fault_traces", ogr.wkbLineString, epsg, [("fault_id", ogr.OFTString)])
    ds = None
    return str(path)

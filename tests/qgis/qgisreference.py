"""Engine runs on data read WITHOUT the plugin (GDAL/OGR directly, the whole DEM at once), to
check that the plugin's adapter hands the engine the same arrays: same trace vertices, same DEM
cells, same ids and groups.  This mirrors what the command line does with rasterio/pyogrio.
"""
import numpy as np
from osgeo import gdal, ogr

from slipsense import steps
from slipsense.core.raster import Grid, sample_bilinear
from slipsense.core.traces import Traces


def full_grid(dem_path, band=1):
    ds = gdal.Open(str(dem_path))
    b = ds.GetRasterBand(band)
    mask = b.GetMaskBand().ReadAsArray() == 0  # GDAL's nodata mask, as rasterio's masked read
    v = b.ReadAsArray().astype(float)
    v[mask] = np.nan
    return Grid.from_array(v, _affine(ds.GetGeoTransform()), None)


def _affine(gt):
    return (gt[1], gt[2], gt[0], gt[4], gt[5], gt[3])


def read_features(gpkg, layer):
    """[(fid, {field: value}, geometry as list of (n, 2) parts)] in fid order."""
    ds = ogr.Open(str(gpkg))
    lyr = ds.GetLayerByName(layer)
    out = []
    for f in lyr:
        g = f.GetGeometryRef()
        parts = []
        if g is not None:
            gt = ogr.GT_Flatten(g.GetGeometryType())
            if gt in (ogr.wkbMultiLineString, ogr.wkbMultiPoint):
                geoms = [g.GetGeometryRef(i) for i in range(g.GetGeometryCount())]
            else:
                geoms = [g]
            for p in geoms:
                parts.append(np.array(p.GetPoints(), dtype=float)[:, :2])
        out.append((f.GetFID(), {k: f.GetField(k) for k in f.keys()}, parts))
    return out


def trace_planes(gpkg, layer, dem, id_field, **kw):
    feats = read_features(gpkg, layer)
    ids = [str(a[id_field]) if id_field else str(fid) for fid, a, _ in feats]
    return steps.trace_planes(ids, Traces.from_lines([p for _, _, p in feats]), full_grid(dem), **kw)


def point_planes(gpkg, layer, group_field, z_field=None, dem=None, **kw):
    feats = read_features(gpkg, layer)
    xy = np.array([p[0][0] for _, _, p in feats])
    if z_field:
        z = np.array([np.nan if a[z_field] is None else a[z_field] for _, a, _ in feats], float)
    else:
        z = sample_bilinear(full_grid(dem), xy[:, 0], xy[:, 1])
    g = np.array([str(a[group_field]) for _, a, _ in feats])
    ok = np.isfinite(z)
    ids = sorted(set(g[ok].tolist()))
    groups = [np.column_stack([xy[ok & (g == k)], z[ok & (g == k)]]) for k in ids]
    return steps.point_planes(ids, groups, **kw)


def read_planes(gpkg, layer):
    feats = read_features(gpkg, layer)
    idf = "trace_id" if "trace_id" in feats[0][1] else "plane_id"
    num = lambda v: np.nan if v is None else float(v)  # noqa: E731
    ids = [str(a[idf]) for _, a, _ in feats]
    dd = np.array([num(a["dip_dir"]) for _, a, _ in feats])
    dp = np.array([num(a["dip"]) for _, a, _ in feats])
    cen = np.array([[num(a["centroid_x"]), num(a["centroid_y"]), num(a["centroid_z"])] for _, a, _ in feats])
    ext = [np.concatenate(p) for _, _, p in feats]
    return ids, dd, dp, cen, ext


def plane_column(gpkg, layer, name):
    """One numeric column of a plane layer (NaN for NULL), in fid order."""
    return np.array([np.nan if a[name] is None else float(a[name]) for _, a, _ in read_features(gpkg, layer)])

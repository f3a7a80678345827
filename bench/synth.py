"""Synthetic inputs for the benchmarks: a large tiled, deflate-compressed GeoTIFF DEM of analytic
terrain and fault traces that are true outcrop traces of planes on that terrain.

Nothing here imports slipsense: the data are made from closed-form geometry only.
"""
from __future__ import annotations

import numpy as np

CRS = "EPSG:32633"
X0, Y0 = 300_000.0, 5_300_000.0  # upper-left corner of every synthetic DEM


def terrain(x, y):
    """Elevation (m) of the analytic terrain: three wave trains and a gentle ramp (slopes < 0.6)."""
    x = np.asarray(x, dtype=float) - X0
    y = np.asarray(y, dtype=float) - Y0
    return (600.0 + 100.0 * np.sin(2 * np.pi * x / 3000.0) * np.cos(2 * np.pi * y / 4100.0)
            + 40.0 * np.sin(2 * np.pi * (x + 0.6 * y) / 1300.0)
            + 10.0 * np.sin(2 * np.pi * (0.7 * x - y) / 450.0) + 0.004 * x)


def write_dem(path, width, height, cell=10.0, block=256, compress="deflate", predictor=3, nodata_holes=0,
              seed=0):
    """Write a ``width`` x ``height`` float32 GeoTIFF, tiled ``block`` x ``block``, compressed.

    ``nodata_holes`` round lakes of nodata (-9999) are cut into it.  Rows are written one strip of
    tiles at a time, so memory stays small whatever the size.
    """
    import rasterio
    from rasterio.transform import from_origin
    from rasterio.windows import Window

    rng = np.random.default_rng(seed)
    holes = np.column_stack([rng.uniform(0, width * cell, nodata_holes) + X0,
                             Y0 - rng.uniform(0, height * cell, nodata_holes),
                             rng.uniform(50, 400, nodata_holes)])
    profile = dict(driver="GTiff", width=width, height=height, count=1, dtype="float32", crs=CRS,
                   transform=from_origin(X0, Y0, cell, cell), nodata=-9999.0, tiled=True,
                   blockxsize=block, blockysize=block, compress=compress, predictor=predictor,
                   BIGTIFF="IF_SAFER")
    xc = X0 + cell * (np.arange(width) + 0.5)
    with rasterio.open(path, "w", **profile) as ds:
        for r0 in range(0, height, block):
            nr = min(block, height - r0)
            yc = Y0 - cell * (np.arange(r0, r0 + nr) + 0.5)
            gx, gy = np.meshgrid(xc, yc)
            z = terrain(gx, gy).astype(np.float32)
            for hx, hy, hr in holes:
                if abs(hy - yc.mean()) < hr + block * cell:
                    z[(gx - hx) ** 2 + (gy - hy) ** 2 < hr * hr] = -9999.0
            ds.write(z, 1, window=Window(0, r0, width, nr))
    return str(path)


def plane_traces(n, width, height, cell=10.0, length_m=(300.0, 5000.0), step_m=20.0, seed=1,
                 margin_m=600.0):
    """``n`` outcrop traces of random planes on :func:`terrain`, lengths uniform in ``length_m``.

    Each trace is the intersection of a plane (dip 40-85 degrees, any dip direction) through a
    random point on the terrain, followed along strike every ``step_m`` metres and solved across
    strike by fixed-point iteration (the terrain's slope stays below the plane's, so it converges).
    Returns ``(lines, truth)`` with ``truth`` an (n, 2) array of dip direction / dip.
    """
    rng = np.random.default_rng(seed)
    w, h = width * cell, height * cell
    lengths = rng.uniform(*length_m, n)
    dip_dir = rng.uniform(0.0, 360.0, n)
    dip = rng.uniform(40.0, 85.0, n)
    reach = np.minimum(lengths / 2 + margin_m, min(w, h) / 2 - 1.0)
    cx = X0 + rng.uniform(reach, w - reach)
    cy = Y0 - rng.uniform(reach, h - reach)
    cz = terrain(cx, cy)
    d = np.radians(dip_dir)
    dh = np.stack([np.sin(d), np.cos(d)], -1)
    sh = np.stack([np.sin(d - np.pi / 2), np.cos(d - np.pi / 2)], -1)
    tan = np.tan(np.radians(dip))
    lines = []
    kmax = int(np.ceil(length_m[1] / step_m)) + 1
    # All traces at once on a padded (n, kmax) array of along-strike positions.
    s = (np.arange(kmax)[None] * step_m) - lengths[:, None] / 2
    hdist = np.zeros_like(s)
    for _ in range(60):
        px = cx[:, None] + s * sh[:, None, 0] + hdist * dh[:, None, 0]
        py = cy[:, None] + s * sh[:, None, 1] + hdist * dh[:, None, 1]
        hdist = 0.5 * hdist + 0.5 * (cz[:, None] - terrain(px, py)) / tan[:, None]
    px = cx[:, None] + s * sh[:, None, 0] + hdist * dh[:, None, 0]
    py = cy[:, None] + s * sh[:, None, 1] + hdist * dh[:, None, 1]
    for i in range(n):
        k = int(lengths[i] // step_m) + 1
        lines.append(np.column_stack([px[i, :k], py[i, :k]]))
    return lines, np.column_stack([dip_dir, dip])


def write_traces(path, lines, layer="fault_traces"):
    """Write the traces as a GeoPackage line layer with a ``fault_id`` field."""
    import geopandas as gpd
    import pyogrio
    import shapely

    gdf = gpd.GeoDataFrame({"fault_id": [f"T{i:06d}" for i in range(len(lines))]},
                           geometry=[shapely.LineString(c) for c in lines], crs=CRS)
    pyogrio.write_dataframe(gdf, str(path), layer=layer, driver="GPKG")
    return str(path)

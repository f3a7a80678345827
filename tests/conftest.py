"""Shared fixtures: a small analytic world (DEM + traces of known planes), written with rasterio
and pyogrio directly — its truth comes from closed-form geometry, not from slipsense."""
from __future__ import annotations

import os
import sys
from pathlib import Path

import numpy as np
import pytest

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_gpkg"
sys.path.insert(0, str(ROOT / "engine"))

CRS = "EPSG:32633"
X0, Y0 = 500_000.0, 5_104_000.0  # upper-left corner of the analytic DEM
CELL = 10.0
NX, NY = 400, 400


def dem_z(x, y):
    """Analytic topography: E-W valleys every 1.2 km (120 m amplitude) on a 2 % eastward ramp."""
    return 400.0 + 120.0 * np.sin(2 * np.pi * (y - Y0) / 1200.0) + 0.02 * (x - X0)


def plane_trace(dip_dir, dip, p0, s_min, s_max, step=20.0):
    """Vertices of the outcrop trace of a plane through ``p0`` on :func:`dem_z` (closed form +
    fixed-point iteration across strike), every ``step`` metres along strike."""
    d = np.radians(dip_dir)
    dh = np.array([np.sin(d), np.cos(d)])
    sh = np.array([np.sin(d - np.pi / 2), np.cos(d - np.pi / 2)])
    s = np.arange(s_min, s_max + 1e-9, step)
    h = np.zeros_like(s)
    tan = np.tan(np.radians(dip))
    for _ in range(200):
        xy = p0[:2] + s[:, None] * sh + h[:, None] * dh
        h_new = (p0[2] - dem_z(xy[:, 0], xy[:, 1])) / tan
        if np.max(np.abs(h_new - h)) < 1e-9:
            break
        h = h_new
    return p0[:2] + s[:, None] * sh + h[:, None] * dh


def vertical_trace(strike, p0, s_min, s_max, step=20.0):
    t = np.radians(strike)
    s = np.arange(s_min, s_max + 1e-9, step)
    return p0[:2] + s[:, None] * np.array([np.sin(t), np.cos(t)])


def write_dem(path, values=None, nodata=-9999.0, crs=CRS, transform=None):
    import rasterio
    from rasterio.transform import from_origin

    if values is None:
        xc = X0 + CELL * (np.arange(NX) + 0.5)
        yc = Y0 - CELL * (np.arange(NY) + 0.5)
        gx, gy = np.meshgrid(xc, yc)
        values = dem_z(gx, gy)
    t = transform or from_origin(X0, Y0, CELL, CELL)
    with rasterio.open(path, "w", driver="GTiff", width=values.shape[1], height=values.shape[0], count=1,
                       dtype="float32", crs=crs, transform=t, nodata=nodata) as ds:
        ds.write(values.astype("float32"), 1)
    return str(path)


def write_lines(path, layer, lines, ids, crs=CRS, field="fault_id", extra=None):
    import geopandas as gpd
    import pyogrio
    import shapely

    data = {field: ids}
    data.update(extra or {})
    gdf = gpd.GeoDataFrame(data, geometry=[shapely.LineString(c) if np.ndim(c) == 2 else shapely.MultiLineString(c)
                                           for c in lines], crs=crs)
    pyogrio.write_dataframe(gdf, str(path), layer=layer, driver="GPKG")
    return str(path)


def write_points(path, layer, xy, data, crs=CRS):
    import geopandas as gpd
    import pyogrio
    import shapely

    gdf = gpd.GeoDataFrame(data, geometry=[shapely.Point(p) for p in xy], crs=crs)
    pyogrio.write_dataframe(gdf, str(path), layer=layer, driver="GPKG")
    return str(path)


CENTRE = np.array([X0 + 2000.0, Y0 - 2000.0, 0.0])
CENTRE[2] = dem_z(CENTRE[0], CENTRE[1])

#: fault_id -> (dip_dir, dip) of the analytic test planes
TRUTH = {"A": (90.0, 60.0), "B": (120.0, 30.0), "C": (315.0, 90.0), "D": (250.0, 50.0)}


@pytest.fixture(scope="session")
def world(tmp_path_factory):
    """DEM and traces of three known planes plus a straight trace on a planar ramp (ill-posed)."""
    d = tmp_path_factory.mktemp("world")
    dem = write_dem(d / "dem.tif")
    a = plane_trace(90.0, 60.0, CENTRE + [-600, 0, 0], -1500, 1500)
    b = plane_trace(120.0, 30.0, CENTRE + [300, 300, 0], -900, 900)
    dd = plane_trace(250.0, 50.0, CENTRE + [-1200, 1200, 0], -600, 600)
    c = vertical_trace(45.0, CENTRE + [900, -900, 0], -700, 700)
    # A straight E-W line along a valley floor-parallel line: constant y on a linear ramp -> collinear.
    y_flat = Y0 - 300.0  # sin term constant along the line
    straight = np.column_stack([np.linspace(X0 + 500, X0 + 2500, 60), np.full(60, y_flat)])
    traces = write_lines(d / "traces.gpkg", "fault_traces", [a, b, c, dd, straight], ["A", "B", "C", "D", "S"])
    return {"dir": d, "dem": dem, "traces": traces, "lines": {"A": a, "B": b, "C": c, "D": dd, "S": straight}}


@pytest.fixture
def cli(tmp_path):
    """Run the CLI in-process; returns (exit code, stdout, stderr)."""
    from slipsense.cli.main import main

    def run(*args):
        import contextlib
        import io

        out, err = io.StringIO(), io.StringIO()
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                code = main([str(a) for a in args])
            except SystemExit as exc:  # argparse usage errors
                code = exc.code
        return code, out.getvalue(), err.getvalue()

    return run


def read_gpkg(path, layer):
    import pyogrio

    return pyogrio.read_dataframe(str(path), layer=layer)


os.environ.setdefault("PYTHONHASHSEED", "0")

try:  # hypothesis is in the engine venv, not in Debian's python that runs tests/qgis
    from hypothesis import settings as _hyp_settings

    # The same examples on every run: a CI result never depends on a random draw of cases.
    _hyp_settings.register_profile("slipsense", derandomize=True, deadline=None, print_blob=True)
    _hyp_settings.load_profile("slipsense")
except ImportError:  # pragma: no cover
    pass

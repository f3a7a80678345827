"""DEM access through rasterio: only the windows (or the blocks) under the features are read.

Two ways in: :meth:`Dem.grid_for` / :meth:`Dem.grids_for_features` read windows into
:class:`~slipsense.core.raster.Grid` objects; :meth:`Dem.block_raster` gives a
:class:`~slipsense.core.raster.BlockRaster` that reads the file's own blocks (its internal tiling)
lazily, each at most once while work needs it, and samples bit for bit the same values.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..core.raster import Grid
from ..errors import CRSError, DataError, FileFormatError
from .crs import as_crs, require_projected, utm_crs_for

__all__ = ["Dem", "DemBlocks", "open_dem"]


@dataclass
class Dem:
    """An open DEM: its path, CRS, transform, nodata and size; read windows with :meth:`grid_for`.

    Attributes
    ----------
    path : str
    crs : pyproj.CRS of the raster
    working_crs : pyproj.CRS the computation runs in (the raster's own when projected, else the UTM
        zone of the raster's centre, into which windows are warped bilinearly)
    z_factor : float multiplying raster values to get metres (e.g. 0.3048 for feet)
    """

    path: str
    band: int
    crs: object
    working_crs: object
    transform: tuple
    width: int
    height: int
    nodata: float | None
    z_factor: float = 1.0

    @property
    def warped(self):
        return self.working_crs != self.crs

    @property
    def cell_size(self):
        return min(abs(self.transform[0]), abs(self.transform[4]))

    def grid_for(self, bounds, margin_m=0.0):
        """Read the window covering ``bounds`` (xmin, ymin, xmax, ymax; working CRS) plus margin.

        The window is aligned to the raster's cells, so two readers asking for the same bounds get
        exactly the same cells.  Raises :class:`DataError` when the bounds miss the DEM.
        """
        import rasterio
        from rasterio.windows import Window

        if self.warped:
            return self._warped_grid(bounds, margin_m)
        a, _, c, _, e, f = self.transform
        col0, row0, col1, row1 = self.window_for(bounds, margin_m)
        with rasterio.open(self.path) as ds:
            data = ds.read(self.band, window=Window(col0, row0, col1 - col0, row1 - row0), masked=True)
        values = np.ma.filled(data.astype(float), np.nan)
        t = (a, 0.0, c + col0 * a, 0.0, e, f + row0 * e)
        return Grid.from_array(values, t, None, self.z_factor, origin=(c, f), offset=(col0, row0))

    def window_for(self, bounds, margin_m=0.0):
        """``(col0, row0, col1, row1)`` of the cells covering ``bounds`` plus margin (working CRS).

        Raises :class:`DataError` when the bounds miss the DEM.
        """
        a, _, c, _, e, f = self.transform
        x0, y0, x1, y1 = bounds
        x0 -= margin_m
        y0 -= margin_m
        x1 += margin_m
        y1 += margin_m
        col0 = max(int(math.floor((x0 - c) / a)), 0)
        col1 = min(int(math.ceil((x1 - c) / a)), self.width)
        row0 = max(int(math.floor((y1 - f) / e)), 0)
        row1 = min(int(math.ceil((y0 - f) / e)), self.height)
        if col1 - col0 < 2 or row1 - row0 < 2:
            raise DataError(
                f"the features lie off the DEM {self.path} (they cover x {bounds[0]:.0f}–{bounds[2]:.0f}, "
                f"y {bounds[1]:.0f}–{bounds[3]:.0f} in its CRS)"
            )
        return col0, row0, col1, row1

    def grids_for_features(self, boxes, margin_m=0.0, tile_cells=1024):
        """Windows under groups of features, not the whole raster.

        ``boxes`` is (F, 4) feature bounding boxes (xmin, ymin, xmax, ymax).  Features are grouped by
        the ``tile_cells``-sized tile their box centre falls in; each group gets one window covering
        its boxes plus ``margin_m``.  Returns a single :class:`Grid` when one window serves all,
        else a :class:`GridSet` (sampling either gives the same values).
        """
        from ..core.raster import GridSet

        b = np.asarray(boxes, dtype=float).reshape(-1, 4)
        tile = tile_cells * self.cell_size
        cx = np.floor((b[:, 0] + b[:, 2]) / 2 / tile).astype(np.int64)
        cy = np.floor((b[:, 1] + b[:, 3]) / 2 / tile).astype(np.int64)
        keys, group = np.unique(np.stack([cx, cy], 1), axis=0, return_inverse=True)
        group = np.asarray(group).reshape(-1)
        if len(keys) == 1:
            return self.grid_for((*b[:, :2].min(0), *b[:, 2:].max(0)), margin_m)
        grids = []
        for k in range(len(keys)):
            m = b[group == k]
            grids.append(self.grid_for((*m[:, :2].min(0), *m[:, 2:].max(0)), margin_m))
        return GridSet(tuple(grids), group)

    def block_raster(self, margin_m=0.0, cache_mb=512.0, runner=None):
        """The whole DEM as a :class:`~slipsense.core.raster.BlockRaster` read block by block.

        Raises :class:`DataError` for a geographic DEM (warp it, or use :meth:`grid_for`).
        """
        return self.block_spec(margin_m, cache_mb).open(runner)

    def block_spec(self, margin_m=0.0, cache_mb=512.0):
        """A picklable :class:`DemBlocks` recipe of :meth:`block_raster` (for worker processes)."""
        if self.warped:
            raise DataError(f"DEM {self.path} is geographic: it is warped by windows, not read by blocks")
        return DemBlocks(self.path, self.band, self.z_factor, float(margin_m), float(cache_mb))

    def _warped_grid(self, bounds, margin_m):
        import rasterio
        from rasterio.warp import Resampling, reproject, transform_bounds

        res = self._metric_resolution()
        x0, y0, x1, y1 = (bounds[0] - margin_m, bounds[1] - margin_m, bounds[2] + margin_m, bounds[3] + margin_m)
        cols = max(int(math.ceil((x1 - x0) / res)), 2)
        rows = max(int(math.ceil((y1 - y0) / res)), 2)
        t = (res, 0.0, x0, 0.0, -res, y1)
        from affine import Affine

        out = np.full((rows, cols), np.nan)
        with rasterio.open(self.path) as ds:
            reproject(
                rasterio.band(ds, self.band), out, dst_transform=Affine(*t),
                dst_crs=self.working_crs.to_wkt(), dst_nodata=np.nan, resampling=Resampling.bilinear,
            )
        if not np.isfinite(out).any():
            lb = transform_bounds(self.working_crs.to_wkt(), self.crs.to_wkt(), x0, y0, x1, y1)
            raise DataError(f"the features lie off the DEM {self.path} (lon/lat {lb})")
        return Grid.from_array(out, t, None, self.z_factor)

    def _metric_resolution(self):
        lat = abs(self.transform[5] + self.transform[4] * self.height / 2)
        deg = min(abs(self.transform[0]), abs(self.transform[4]))
        return max(deg * 111_320.0 * max(math.cos(math.radians(min(lat, 89.0))), 0.05), 0.01)


#: Storage types that hold every value of the raster's type exactly in float32.
_FLOAT32_EXACT = {"float32", "int8", "uint8", "int16", "uint16"}


@dataclass(frozen=True)
class DemBlocks:
    """How to open a DEM block by block: picklable, so worker processes open their own copy."""

    path: str
    band: int = 1
    z_factor: float = 1.0
    margin_m: float = 0.0
    cache_mb: float = 512.0

    def open(self, runner=None):
        """A :class:`~slipsense.core.raster.BlockRaster` over the file (opened once, lazily)."""
        import rasterio

        from ..core.raster import BlockRaster

        with rasterio.open(self.path) as ds:
            bh, bw = ds.block_shapes[self.band - 1]
            dtype = ds.dtypes[self.band - 1]
            width, height, t = ds.width, ds.height, tuple(ds.transform)[:6]
        # Tiles are read as they are; strips or huge blocks are read in 256 x 256 windows
        # (GDAL's own cache keeps the strips they cut).
        if not (16 <= bh <= 4096 and 16 <= bw <= 4096):
            bh, bw = 256, 256
        storage = np.float32 if dtype in _FLOAT32_EXACT else np.float64
        return BlockRaster(_BlockReader(self.path, self.band), width, height, t, (bh, bw),
                           z_factor=self.z_factor, margin_m=self.margin_m, cache_mb=self.cache_mb,
                           runner=runner, spec=self, storage=storage)


#: GDAL block cache while reading blocks, bytes (it only helps with strip-organised files).
GDAL_CACHE_BYTES = 64 * 2**20


class _BlockReader:
    """Reads windows of one band with rasterio (nodata and masks as NaN); keeps the file open."""

    def __init__(self, path, band):
        self.path = path
        self.band = band
        self._ds = None

    def __call__(self, col0, row0, ncols, nrows):
        import rasterio
        from rasterio.windows import Window

        # slipsense keeps the blocks it needs itself: GDAL's own block cache (by default 5 % of
        # the RAM) is held small so that memory does not grow with the DEM.
        with rasterio.Env(GDAL_CACHEMAX=GDAL_CACHE_BYTES):
            if self._ds is None:
                self._ds = rasterio.open(self.path)
            data = self._ds.read(self.band, window=Window(col0, row0, ncols, nrows), masked=True)
        return np.ma.filled(data.astype(float), np.nan)

    def __del__(self):
        ds, self._ds = self._ds, None
        if ds is not None:
            try:
                ds.close()
            except Exception:  # noqa: BLE001 - closing at interpreter exit
                pass


def open_dem(path, band=1, z_factor=1.0, working_crs=None):
    """Open a DEM any GDAL driver reads (GeoTIFF, GeoPackage raster, VRT) and check it.

    Parameters
    ----------
    path : str
    band : int, 1-based
    z_factor : float
        Vertical unit factor to metres (1 for metres, 0.3048 for international feet).
    working_crs : optional
        Force the working CRS (the DEM is then warped into it when different).

    Raises
    ------
    FileFormatError for unreadable files, CRSError for a missing CRS, DataError for a bad band.
    """
    import rasterio
    from rasterio.errors import RasterioIOError

    if not (np.isfinite(z_factor) and z_factor > 0):
        raise DataError(f"vertical factor must be > 0, got {z_factor!r}")
    try:
        ds = rasterio.open(path)
    except RasterioIOError as exc:
        raise FileFormatError(f"cannot open DEM {path}: {exc}") from exc
    with ds:
        if not 1 <= band <= ds.count:
            raise DataError(f"DEM {path} has {ds.count} band(s); band {band} does not exist")
        crs = as_crs(ds.crs.to_wkt() if ds.crs else None, f"DEM {path}")
        t = tuple(ds.transform)[:6]
        if t[1] != 0 or t[3] != 0:
            raise DataError(f"DEM {path} is rotated; warp it north-up first")
        if crs.is_geographic:
            lon = t[2] + t[0] * ds.width / 2
            lat = t[5] + t[4] * ds.height / 2
            work = utm_crs_for(lon, lat) if working_crs is None else working_crs
        else:
            work = require_projected(crs, f"DEM {path}") if working_crs is None else working_crs
        if working_crs is not None:
            require_projected(work, "the working CRS")
        nodata = ds.nodatavals[band - 1]
        return Dem(str(path), band, crs, work, t, ds.width, ds.height, nodata, float(z_factor))

"""Grids of elevations in memory and bilinear sampling of them (numpy only).

A :class:`Grid` is a north-up raster window: a 2-D array of values in metres and the affine
transform of its cells in the rasterio/affine order ``(a, b, c, d, e, f)``:
``x = a*col + b*row + c``, ``y = d*col + e*row + f`` for the cell *corner* (col, row); cell centres
are at ``col + 0.5, row + 0.5``.  Rotated grids (b or d non-zero) are refused.  NaN marks nodata.

The same functions serve the CLI (the grid comes from rasterio) and the QGIS plugin (the grid comes
from a QGIS raster block), so both sample identically.
"""
from __future__ import annotations

import threading
from collections import OrderedDict
from dataclasses import dataclass

import numpy as np

from ..errors import DataError

__all__ = ["Grid", "GridSet", "BlockRaster", "ThreadRunner", "sample_bilinear", "sample_grouped", "contour_segments"]


@dataclass(frozen=True)
class Grid:
    """A north-up window of a raster.

    Attributes
    ----------
    values : ndarray, shape (rows, cols), float
        Elevations in metres (already multiplied by any vertical unit factor); NaN is nodata.
    transform : tuple of 6 floats
        ``(a, b, c, d, e, f)`` as in rasterio's ``Affine``; ``a`` > 0 is the cell width (m),
        ``e`` < 0 the negative cell height (m), ``(c, f)`` the upper-left corner.
    """

    values: np.ndarray
    transform: tuple
    origin: tuple | None = None
    offset: tuple = (0, 0)

    def __post_init__(self):
        v = np.asarray(self.values, dtype=float)
        if v.ndim != 2 or v.shape[0] < 1 or v.shape[1] < 1:
            raise DataError(f"a grid needs a 2-D array of values, got shape {v.shape}")
        t = tuple(float(x) for x in self.transform)[:6]
        if len(t) != 6:
            raise DataError("a grid transform needs 6 numbers (a, b, c, d, e, f)")
        if t[1] != 0.0 or t[3] != 0.0:
            raise DataError("rotated or sheared rasters are not supported; warp the DEM north-up first")
        if not (t[0] > 0 and t[4] < 0):
            raise DataError("the raster must be north-up with positive cell width and negative height")
        object.__setattr__(self, "values", v)
        object.__setattr__(self, "transform", t)
        object.__setattr__(self, "_has_nodata", bool(np.isnan(v).any()))
        if self.origin is not None:
            object.__setattr__(self, "origin", (float(self.origin[0]), float(self.origin[1])))
        object.__setattr__(self, "offset", (int(self.offset[0]), int(self.offset[1])))

    @classmethod
    def from_array(cls, values, transform, nodata=None, z_factor=1.0, origin=None, offset=(0, 0)):
        """Build a grid, turning ``nodata`` cells into NaN and scaling by ``z_factor``.

        ``origin`` (x, y of the whole raster's upper-left corner) and ``offset`` (col, row of this
        window in the raster) make sampling independent of the window: points are located from the
        raster's own origin, so any two windows of one raster give bit-identical values.
        """
        v = np.array(values, dtype=float)
        if nodata is not None and np.isfinite(nodata):
            v[v == nodata] = np.nan
        v[~np.isfinite(v)] = np.nan
        return cls(v * float(z_factor), transform, origin, offset)

    @property
    def cell_size(self):
        """The smaller of cell width and height, metres."""
        return min(self.transform[0], -self.transform[4])

    @property
    def shape(self):
        return self.values.shape

    def bounds(self):
        """``(xmin, ymin, xmax, ymax)`` of the grid's outer cell edges."""
        a, _, c, _, e, f = self.transform
        rows, cols = self.values.shape
        return (c, f + e * rows, c + a * cols, f)

    def cell_centres(self):
        """x (cols,) and y (rows,) coordinates of cell centres."""
        a, _, c, _, e, f = self.transform
        rows, cols = self.values.shape
        return c + a * (np.arange(cols) + 0.5), f + e * (np.arange(rows) + 0.5)


def sample_bilinear(grid, x, y):
    """Bilinear interpolation of ``grid`` at map points ``x``, ``y`` (metres, grid CRS).

    Between cell centres the four surrounding centres are blended; in the outer half cell the
    nearest edge values are used.  Points outside the grid, or with any of their four neighbours
    NaN (nodata) that carries a non-zero weight, give NaN; so a valid cell's own centre returns its
    value exactly, whichever side a nodata cell lies on.

    Parameters
    ----------
    grid : Grid
    x, y : array_like
        Any equal shapes.

    Returns
    -------
    ndarray
        Elevations in metres, shape of ``x``.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    a, _, c, _, e, f = grid.transform
    rows, cols = grid.values.shape
    if grid.origin is None:
        col = (x - c) / a - 0.5
        row = (y - f) / e - 0.5
    else:  # from the raster's own origin: the same numbers whatever the window
        col = (x - grid.origin[0]) / a - (grid.offset[0] + 0.5)
        row = (y - grid.origin[1]) / e - (grid.offset[1] + 0.5)
    return _bilinear(grid.values.ravel(), rows, cols, col, row, grid._has_nodata)


def _bilinear(flat, rows, cols, col, row, has_nodata):
    """Bilinear blend of the (rows, cols) values ``flat`` at fractional cell-centre coordinates.

    The arithmetic is the same whichever path is taken: when every point lies strictly inside
    the centre lattice the clipping and the outside test are skipped, as they change nothing.
    """
    inside = col.size > 0 and cols > 1 and rows > 1 and bool(
        col.min() >= 0.0 and col.max() < cols - 1.0 and row.min() >= 0.0 and row.max() < rows - 1.0)
    if inside:
        outside = None
        c0 = col.astype(np.intp)  # truncation is floor for col >= 0
        r0 = row.astype(np.intp)
    else:
        outside = ~((col >= -0.5) & (col <= cols - 0.5) & (row >= -0.5) & (row <= rows - 0.5))
        col = np.clip(col, 0.0, cols - 1.0)
        row = np.clip(row, 0.0, rows - 1.0)
        c0 = np.minimum(np.floor(col).astype(np.intp), max(cols - 2, 0))
        r0 = np.minimum(np.floor(row).astype(np.intp), max(rows - 2, 0))
    fc = col - c0
    fr = row - r0
    i00 = r0 * cols
    i00 += c0
    dc = 1 if cols > 1 else 0
    dr = cols if rows > 1 else 0
    gc = 1 - fc
    gr = 1 - fr
    w00, w01, w10, w11 = gc * gr, fc * gr, gc * fr, fc * fr
    # Four gathers from the flat array; z = ((v00 w00 + v01 w01) + v10 w10) + v11 w11.
    z = np.take(flat, i00) * w00
    z += np.take(flat, i00 + dc) * w01
    z += np.take(flat, i00 + dr) * w10
    z += np.take(flat, i00 + (dr + dc)) * w11
    if has_nodata:
        # Only neighbours that carry weight count: a NaN (nodata) neighbour with weight > 0 makes
        # the result NaN, one with weight 0 (the point lies on the far cell-centre line) does not.
        # (Plain NaN * 0 would poison exact cell-centre values on one side of a nodata cell only.)
        redo = np.flatnonzero(np.isnan(z))
        if redo.size:
            zz = np.zeros(redo.size)
            base = i00.ravel()[redo]
            for off, w in ((0, w00), (dc, w01), (dr, w10), (dr + dc, w11)):
                vals = np.take(flat, base + off)
                ww = w.ravel()[redo]
                zz += np.where(ww > 0, vals * ww, 0.0)
            shape = np.shape(z)
            z = np.array(z, dtype=float).reshape(-1)
            z[redo] = zz
            z = z.reshape(shape)
    if outside is None:
        return z
    return np.where(outside, np.nan, z)


@dataclass(frozen=True)
class GridSet:
    """Several windows of the same raster, one per group of features (e.g. clusters of traces).

    ``grids[k]`` covers the features whose group index maps to ``k`` through ``group_grid``.
    Bilinear sampling is local, so sampling a point from any window that contains it and its four
    neighbours gives the same value as sampling the whole raster: a GridSet and a single window
    covering everything give identical results.
    """

    grids: tuple
    group_grid: np.ndarray

    @property
    def cell_size(self):
        return min(g.cell_size for g in self.grids)


def sample_grouped(grid, x, y, group):
    """Sample a :class:`Grid` (``group`` ignored), a :class:`BlockRaster` (``group`` ignored) or a
    :class:`GridSet` (each point from the window of its group) at ``x``, ``y``; shapes as in
    :func:`sample_bilinear`."""
    if isinstance(grid, Grid):
        return sample_bilinear(grid, x, y)
    if isinstance(grid, BlockRaster):
        return grid.sample(x, y)
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    which = np.asarray(grid.group_grid)[np.asarray(group)]
    z = np.full(x.shape, np.nan)
    for k, g in enumerate(grid.grids):
        sel = which == k
        if np.any(sel):
            z[sel] = sample_bilinear(g, x[sel], y[sel])
    return z


class BlockRaster:
    """A whole north-up raster read lazily in its own blocks, each block read once while needed.

    Sampling a BlockRaster gives exactly the values of :func:`sample_bilinear` on a :class:`Grid`
    of the whole raster (located from the raster's origin), so it agrees bit for bit with any
    window of the raster, e.g. the one the QGIS plugin reads.  Only the blocks that the points
    (and their four neighbours) touch are read.

    Parameters
    ----------
    read_block : callable
        ``read_block(col0, row0, ncols, nrows) -> (nrows, ncols) float array`` of raw raster
        values with NaN for nodata (the adapter in :mod:`slipsense.io.dem` wraps rasterio).
    width, height : int, cells of the whole raster
    transform : 6 floats, rasterio order, north-up
    block_shape : (rows, cols) of a block, normally the file's internal tiling
    z_factor : float, multiplies raw values to give metres
    margin_m : float, metres
        How far around the unperturbed points the blocks of a work unit reach (see
        :func:`slipsense.steps.dem_margin_m`); points beyond are still sampled exactly, by
        reading their blocks when they come.
    cache_mb : float
        Soft cap of the block cache.  Blocks are evicted as soon as no planned work needs them,
        and least-recently-used blocks beyond the cap.
    runner : optional
        How independent work units are run: ``runner.map(func, items) -> list`` (in order).
        Default: one after the other in this thread.
    spec : optional
        A picklable recipe from which a worker process re-creates this raster (``spec.open()``).

    Notes
    -----
    ``stats`` counts ``blocks_read`` (reads from the file), ``unique_blocks`` and ``cells_read``.
    """

    def __init__(self, read_block, width, height, transform, block_shape, *, z_factor=1.0,
                 margin_m=0.0, cache_mb=512.0, runner=None, spec=None, storage=np.float32):
        t = tuple(float(v) for v in transform)[:6]
        if t[1] != 0.0 or t[3] != 0.0 or not (t[0] > 0 and t[4] < 0):
            raise DataError("the raster must be north-up with positive cell width and negative height")
        self._read = read_block
        self.width = int(width)
        self.height = int(height)
        self.transform = t
        self.origin = (t[2], t[5])
        bh, bw = (int(v) for v in block_shape)
        self.block_shape = (max(bh, 1), max(bw, 1))
        self.nbx = -(-self.width // self.block_shape[1])
        self.nby = -(-self.height // self.block_shape[0])
        self.z_factor = float(z_factor)
        self.margin_m = float(margin_m)
        self.cache_mb = float(cache_mb)
        self.runner = runner
        self.spec = spec
        self.storage = np.dtype(storage)
        self._cache = OrderedDict()
        self._uses = {}
        self._lock = threading.RLock()
        self._seen = set()
        self.stats = {"blocks_read": 0, "unique_blocks": 0, "cells_read": 0, "peak_cached_blocks": 0}

    @property
    def cell_size(self):
        return min(self.transform[0], -self.transform[4])

    @property
    def shape(self):
        return (self.height, self.width)

    # -- locating ---------------------------------------------------------------------------
    def _colrow(self, x, y):
        a, _, _, _, e, _ = self.transform
        col = (np.asarray(x, dtype=float) - self.origin[0]) / a - 0.5
        row = (np.asarray(y, dtype=float) - self.origin[1]) / e - 0.5
        return col, row

    def blocks_near(self, x, y, margin_m=None):
        """Sorted ids (``bi * nbx + bj``) of the blocks within ``margin_m`` (default the raster's
        margin) plus one cell of the points, clipped to the raster."""
        m = self.margin_m if margin_m is None else float(margin_m)
        col, row = self._colrow(np.ravel(x), np.ravel(y))
        if col.size == 0:
            return np.zeros(0, np.int64)
        mc = int(np.ceil(m / self.transform[0])) + 1
        mr = int(np.ceil(m / -self.transform[4])) + 1
        c = np.floor(col)
        r = np.floor(row)
        ok = np.isfinite(c) & np.isfinite(r)
        c, r = c[ok], r[ok]
        bh, bw = self.block_shape
        lo_c = np.clip((c - mc) // bw, 0, self.nbx - 1).astype(np.int64)
        hi_c = np.clip((c + mc + 1) // bw, 0, self.nbx - 1).astype(np.int64)
        lo_r = np.clip((r - mr) // bh, 0, self.nby - 1).astype(np.int64)
        hi_r = np.clip((r + mr + 1) // bh, 0, self.nby - 1).astype(np.int64)
        span_r = int((hi_r - lo_r).max())
        span_c = int((hi_c - lo_c).max())
        ids = []
        for dr in range(span_r + 1):
            for dc in range(span_c + 1):
                bi = lo_r + dr
                bj = lo_c + dc
                sel = (bi <= hi_r) & (bj <= hi_c)
                ids.append(bi[sel] * self.nbx + bj[sel])
        return np.unique(np.concatenate(ids))

    def window_cells(self, ids):
        """Cells of the block-aligned window spanning blocks ``ids``."""
        ids = np.asarray(ids, np.int64)
        if ids.size == 0:
            return 0
        bi, bj = np.divmod(ids, self.nbx)
        bh, bw = self.block_shape
        rows = min((int(bi.max()) + 1) * bh, self.height) - int(bi.min()) * bh
        cols = min((int(bj.max()) + 1) * bw, self.width) - int(bj.min()) * bw
        return rows * cols

    # -- cache --------------------------------------------------------------------------------
    def plan(self, id_lists):
        """Announce the blocks each coming work unit needs, so that a block stays cached until
        the last unit needing it has released it (and is read once)."""
        with self._lock:
            for ids in id_lists:
                for k in np.asarray(ids, np.int64).tolist():
                    self._uses[k] = self._uses.get(k, 0) + 1

    def release(self, ids):
        """A work unit is done with blocks ``ids``: evict those no planned unit needs any more."""
        with self._lock:
            for k in np.asarray(ids, np.int64).tolist():
                left = self._uses.get(k, 0) - 1
                if left > 0:
                    self._uses[k] = left
                else:
                    self._uses.pop(k, None)
                    self._cache.pop(k, None)

    def _block(self, k):
        """Raw values of block ``k`` (NaN for nodata), read on first use; call under the lock."""
        blk = self._cache.get(k)
        if blk is not None:
            self._cache.move_to_end(k)
            return blk
        bi, bj = divmod(int(k), self.nbx)
        bh, bw = self.block_shape
        r0, c0 = bi * bh, bj * bw
        nr, nc = min(bh, self.height - r0), min(bw, self.width - c0)
        blk = np.asarray(self._read(c0, r0, nc, nr), dtype=self.storage)
        if blk.shape != (nr, nc):
            raise DataError(f"a DEM block read gave shape {blk.shape}, expected {(nr, nc)}")
        blk = np.where(np.isfinite(blk), blk, np.nan).astype(self.storage, copy=False)
        self.stats["blocks_read"] += 1
        self.stats["cells_read"] += blk.size
        if k not in self._seen:
            self._seen.add(k)
            self.stats["unique_blocks"] += 1
        self._cache[k] = blk
        cap = max(int(self.cache_mb * 2**20 // max(bh * bw * self.storage.itemsize, 1)), 4)
        while len(self._cache) > cap:
            self._cache.popitem(last=False)  # least recently used
        self.stats["peak_cached_blocks"] = max(self.stats["peak_cached_blocks"], len(self._cache))
        return blk

    def window_values(self, ids):
        """Values (metres; float32 where that is exact) of the block-aligned window spanning
        blocks ``ids``, with exactly those blocks filled (the others NaN), and its (col, row)
        offset in the raster."""
        ids = np.asarray(ids, np.int64)
        bh, bw = self.block_shape
        bi, bj = np.divmod(ids, self.nbx)
        r0, c0 = int(bi.min()) * bh, int(bj.min()) * bw
        r1 = min((int(bi.max()) + 1) * bh, self.height)
        c1 = min((int(bj.max()) + 1) * bw, self.width)
        dtype = self.storage if self.z_factor == 1.0 else np.float64
        values = np.full((r1 - r0, c1 - c0), np.nan, dtype=dtype)
        with self._lock:
            for k, i, j in zip(ids.tolist(), bi.tolist(), bj.tolist()):
                blk = self._block(k)
                rr, cc = i * bh - r0, j * bw - c0
                values[rr:rr + blk.shape[0], cc:cc + blk.shape[1]] = blk
        if self.z_factor != 1.0:
            values *= self.z_factor
        return values, (c0, r0)

    def window(self, ids):
        """A :class:`Grid` over the block-aligned window spanning blocks ``ids``, with exactly
        those blocks filled (the others NaN); values in metres, located from the raster origin."""
        values, (c0, r0) = self.window_values(ids)
        a, _, _, _, e, _ = self.transform
        t = (a, 0.0, self.origin[0] + c0 * a, 0.0, e, self.origin[1] + r0 * e)
        return Grid(values.astype(float, copy=False), t, self.origin, (c0, r0))

    # -- sampling -----------------------------------------------------------------------------
    def repair(self, shape, offset, ids, x, y, z):
        """Exact values where ``z`` = sampling of the window of ``shape`` at ``offset`` (from
        :meth:`window` over blocks ``ids``) may differ from the whole raster: NaN where a
        neighbour lies in a block not read, and points in the window's outer cell where the
        window edge is not the raster's.  ``z`` is changed in place and returned."""
        rows, cols = shape
        c_lo, r_lo = offset
        c_hi, r_hi = c_lo + cols, r_lo + rows
        a, e = self.transform[0], self.transform[4]
        bad = np.isnan(z)
        if x.size:
            cmin = (float(x.min()) - self.origin[0]) / a - 0.5
            cmax = (float(x.max()) - self.origin[0]) / a - 0.5
            rmin = (float(y.max()) - self.origin[1]) / e - 0.5
            rmax = (float(y.min()) - self.origin[1]) / e - 0.5
            safe = ((c_lo == 0 or cmin >= c_lo) and (c_hi == self.width or cmax < c_hi - 1)
                    and (r_lo == 0 or rmin >= r_lo) and (r_hi == self.height or rmax < r_hi - 1))
            if not safe:
                col, row = self._colrow(x, y)
                bad |= ((c_lo > 0) & (col < c_lo)) | ((c_hi < self.width) & (col >= c_hi - 1))
                bad |= ((r_lo > 0) & (row < r_lo)) | ((r_hi < self.height) & (row >= r_hi - 1))
        if not bad.any():
            return z
        idx = np.flatnonzero(bad.reshape(-1))
        xf, yf = x.reshape(-1)[idx], y.reshape(-1)[idx]
        # A NaN whose four neighbours all lie in blocks of the window is genuine nodata.
        col, row = self._colrow(xf, yf)
        w, h = self.width, self.height
        c0 = np.minimum(np.floor(np.clip(col, 0.0, w - 1.0)), max(w - 2, 0)).astype(np.int64)
        r0 = np.minimum(np.floor(np.clip(row, 0.0, h - 1.0)), max(h - 2, 0)).astype(np.int64)
        bh, bw = self.block_shape
        have = np.zeros(self.nbx * self.nby, bool) if self.nbx * self.nby <= 4_000_000 else None
        if have is not None:
            have[np.asarray(ids, np.int64)] = True
            known = (c0 >= c_lo) & (c0 + 1 < c_hi) & (r0 >= r_lo) & (r0 + 1 < r_hi)
            for dr in (0, 1 if h > 1 else 0):
                for dc in (0, 1 if w > 1 else 0):
                    known &= have[((r0 + dr) // bh) * self.nbx + (c0 + dc) // bw]
            outside = ~((col >= -0.5) & (col <= w - 0.5) & (row >= -0.5) & (row <= h - 0.5))
            redo = ~(known & ~outside) & ~outside
        else:
            redo = np.ones(idx.size, bool)
        if redo.any():
            zf = z.reshape(-1)
            zf[idx[redo]] = self.sample(xf[redo], yf[redo])
            return zf.reshape(z.shape)
        return z

    def sample(self, x, y):
        """Bilinear values at ``x``, ``y`` (any equal shapes), exactly as on the whole raster."""
        x = np.asarray(x, dtype=float)
        y = np.asarray(y, dtype=float)
        out = np.full(x.shape, np.nan)
        xf, yf = x.reshape(-1), y.reshape(-1)
        col, row = self._colrow(xf, yf)
        w, h = self.width, self.height
        inside = (col >= -0.5) & (col <= w - 0.5) & (row >= -0.5) & (row <= h - 0.5)
        idx = np.flatnonzero(inside)
        if idx.size == 0:
            return out
        c0 = np.minimum(np.floor(np.clip(col[idx], 0.0, w - 1.0)), max(w - 2, 0)).astype(np.int64)
        r0 = np.minimum(np.floor(np.clip(row[idx], 0.0, h - 1.0)), max(h - 2, 0)).astype(np.int64)
        bh, bw = self.block_shape
        key = (r0 // bh) * self.nbx + (c0 // bw)
        order = np.argsort(key, kind="stable")
        key_s = key[order]
        starts = np.flatnonzero(np.r_[True, key_s[1:] != key_s[:-1]])
        ends = np.r_[starts[1:], key_s.size]
        flat = out.reshape(-1)
        for s_, e_ in zip(starts.tolist(), ends.tolist()):
            k = int(key_s[s_])
            bi, bj = divmod(k, self.nbx)
            # The block and the next row/column of cells: every neighbour of its points.
            ids = [k]
            if bj + 1 < self.nbx:
                ids.append(k + 1)
            if bi + 1 < self.nby:
                ids.append(k + self.nbx)
                if bj + 1 < self.nbx:
                    ids.append(k + self.nbx + 1)
            g = self.window(np.array(ids, np.int64))
            sel = idx[order[s_:e_]]
            flat[sel] = sample_bilinear(g, xf[sel], yf[sel])
        return out


class ThreadRunner:
    """Runs independent work units on threads (numpy releases the GIL in its array loops).

    ``map(func, items, grid, done)`` calls ``func(item, grid)`` for every item and returns the
    results in the order of ``items``; ``done(k)`` is called (in the calling thread) as item ``k``
    finishes, and may raise to cancel the rest.
    """

    plans = True

    def __init__(self, threads=2):
        self.threads = max(int(threads), 1)

    def map(self, func, items, grid, done=None):
        from concurrent.futures import FIRST_COMPLETED, ThreadPoolExecutor, wait

        if self.threads == 1:
            out = []
            for k, item in enumerate(items):
                out.append(func(item, grid))
                if done is not None:
                    done(k)
            return out
        pool = ThreadPoolExecutor(self.threads)
        try:
            futures = {pool.submit(func, item, grid): k for k, item in enumerate(items)}
            pending = set(futures)
            while pending:
                finished, pending = wait(pending, return_when=FIRST_COMPLETED)
                for fut in finished:
                    fut.result()
                    if done is not None:
                        done(futures[fut])
            by_index = {k: f.result() for f, k in futures.items()}
            return [by_index[k] for k in range(len(items))]
        finally:
            pool.shutdown(wait=True, cancel_futures=True)


def contour_segments(x, y, values, level=0.0):
    """Line segments of the ``level`` contour of a grid of values (marching squares).

    Parameters
    ----------
    x : ndarray (cols,)
        Cell-centre x coordinates (increasing).
    y : ndarray (rows,)
        Cell-centre y coordinates.
    values : ndarray (rows, cols)
        NaN cells are skipped (no contour through a square with a NaN corner).

    Returns
    -------
    ndarray (S, 2, 2)
        Segment end points ``[[x0, y0], [x1, y1]]``.  Saddle squares are split by the square's
        mean value.  Values exactly at ``level`` count as above it.  No zero-length segments.
    """
    v = np.asarray(values, dtype=float) - level
    if v.shape[0] < 2 or v.shape[1] < 2:
        return np.zeros((0, 2, 2))
    v00, v01 = v[:-1, :-1], v[:-1, 1:]
    v10, v11 = v[1:, :-1], v[1:, 1:]
    finite = np.isfinite(v00) & np.isfinite(v01) & np.isfinite(v10) & np.isfinite(v11)
    b00, b01, b10, b11 = (v00 >= 0), (v01 >= 0), (v10 >= 0), (v11 >= 0)
    cross_top = (b00 != b01) & finite
    cross_right = (b01 != b11) & finite
    cross_bottom = (b10 != b11) & finite
    cross_left = (b00 != b10) & finite
    ncross = cross_top.astype(int) + cross_right + cross_bottom + cross_left
    rr, cc = np.nonzero(ncross >= 2)
    if rr.size == 0:
        return np.zeros((0, 2, 2))

    def frac(va, vb):
        with np.errstate(invalid="ignore", divide="ignore"):
            t = va / (va - vb)
        return np.clip(np.nan_to_num(t, nan=0.5), 0.0, 1.0)

    xa, xb = x[cc], x[cc + 1]
    ya, yb = y[rr], y[rr + 1]
    a00, a01, a10, a11 = v00[rr, cc], v01[rr, cc], v10[rr, cc], v11[rr, cc]
    # Crossing points on the four edges (NaN where the edge does not cross).
    pts = np.full((rr.size, 4, 2), np.nan)
    t = frac(a00, a01)
    pts[:, 0] = np.stack([xa + t * (xb - xa), ya], -1)  # top edge (row r)
    t = frac(a01, a11)
    pts[:, 1] = np.stack([xb, ya + t * (yb - ya)], -1)  # right edge
    t = frac(a10, a11)
    pts[:, 2] = np.stack([xa + t * (xb - xa), yb], -1)  # bottom edge (row r+1)
    t = frac(a00, a10)
    pts[:, 3] = np.stack([xa, ya + t * (yb - ya)], -1)  # left edge
    has = np.stack(
        [cross_top[rr, cc], cross_right[rr, cc], cross_bottom[rr, cc], cross_left[rr, cc]], -1
    )
    segs = []
    two = has.sum(1) == 2
    if np.any(two):
        idx = np.argsort(~has[two], axis=1, kind="stable")[:, :2]
        p = pts[two]
        segs.append(np.stack([p[np.arange(len(p)), idx[:, 0]], p[np.arange(len(p)), idx[:, 1]]], 1))
    four = has.sum(1) == 4
    if np.any(four):
        p = pts[four]
        centre = (a00 + a01 + a10 + a11)[four] / 4.0
        corner_above = b00[rr, cc][four]
        # If the centre has the sign of corner 00, corners 00 and 11 are joined through the middle:
        # cut off corners 01 and 10 (pair top-right, bottom-left); otherwise cut 00 and 11.
        join = (centre >= 0) == corner_above
        s1 = np.where(join[:, None], p[:, 0], p[:, 0])
        e1 = np.where(join[:, None], p[:, 1], p[:, 3])
        s2 = np.where(join[:, None], p[:, 2], p[:, 2])
        e2 = np.where(join[:, None], p[:, 3], p[:, 1])
        segs.append(np.stack([s1, e1], 1))
        segs.append(np.stack([s2, e2], 1))
    if not segs:
        return np.zeros((0, 2, 2))
    out = np.concatenate(segs, 0)
    # A contour through a grid vertex whose value is exactly the level gives, in the square where
    # that vertex is the only one "above", two crossings at the vertex itself: drop those
    # zero-length segments (they join nothing).
    return out[np.any(out[:, 0] != out[:, 1], axis=1)]

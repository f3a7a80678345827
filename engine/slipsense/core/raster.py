"""Grids of elevations in memory and bilinear sampling of them (numpy only).

A :class:`Grid` is a north-up raster window: a 2-D array of values in metres and the affine
transform of its cells in the rasterio/affine order ``(a, b, c, d, e, f)``:
``x = a*col + b*row + c``, ``y = d*col + e*row + f`` for the cell *corner* (col, row); cell centres
are at ``col + 0.5, row + 0.5``.  Rotated grids (b or d non-zero) are refused.  NaN marks nodata.

The same functions serve the CLI (the grid comes from rasterio) and the QGIS plugin (the grid comes
from a QGIS raster block), so both sample identically.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import DataError

__all__ = ["Grid", "GridSet", "sample_bilinear", "sample_grouped", "contour_segments"]


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
    outside = ~((col >= -0.5) & (col <= cols - 0.5) & (row >= -0.5) & (row <= rows - 0.5))
    col = np.clip(col, 0.0, cols - 1.0)
    row = np.clip(row, 0.0, rows - 1.0)
    c0 = np.minimum(np.floor(col).astype(np.intp), max(cols - 2, 0))
    r0 = np.minimum(np.floor(row).astype(np.intp), max(rows - 2, 0))
    fc = col - c0
    fr = row - r0
    # Gather the four neighbours from the flat array (one pass each).
    flat = grid.values.ravel()
    i00 = r0 * cols + c0
    dc = 1 if cols > 1 else 0
    dr = cols if rows > 1 else 0
    w00, w01, w10, w11 = (1 - fc) * (1 - fr), fc * (1 - fr), (1 - fc) * fr, fc * fr
    z = flat[i00] * w00 + flat[i00 + dc] * w01 + flat[i00 + dr] * w10 + flat[i00 + dr + dc] * w11
    if grid._has_nodata:
        # Only neighbours that carry weight count: a NaN (nodata) neighbour with weight > 0 makes
        # the result NaN, one with weight 0 (the point lies on the far cell-centre line) does not.
        # (Plain NaN * 0 would poison exact cell-centre values on one side of a nodata cell only.)
        redo = np.flatnonzero(np.isnan(z))
        if redo.size:
            zz = np.zeros(redo.size)
            for off, w in ((0, w00), (dc, w01), (dr, w10), (dr + dc, w11)):
                vals = flat[i00.ravel()[redo] + off]
                ww = w.ravel()[redo]
                zz += np.where(ww > 0, vals * ww, 0.0)
            shape = np.shape(z)
            z = np.array(z, dtype=float).reshape(-1)
            z[redo] = zz
            z = z.reshape(shape)
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
    """Sample a :class:`Grid` (``group`` ignored) or a :class:`GridSet` (each point from the
    window of its group) at ``x``, ``y``; shapes as in :func:`sample_bilinear`."""
    if isinstance(grid, Grid):
        return sample_bilinear(grid, x, y)
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    which = np.asarray(grid.group_grid)[np.asarray(group)]
    z = np.full(x.shape, np.nan)
    for k, g in enumerate(grid.grids):
        sel = which == k
        if np.any(sel):
            z[sel] = sample_bilinear(g, x[sel], y[sel])
    return z


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

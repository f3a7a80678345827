"""Fault planes from map traces over a DEM, and what follows from a plane: structure contours,
the predicted outcrop trace, and the depth to the plane below points (numpy only).

Traces are ragged and travel as flat arrays (see :class:`Traces`): vertex coordinates, part
offsets, and the trace each part belongs to.  A MultiLineString is one trace of several parts and
is fitted as one plane.

Method (the "rule of Vs" done as a fit): each trace is densified to a spacing (default the DEM cell
size), the DEM is sampled bilinearly under every point, and a total-least-squares plane is fitted
through the 3-D points (:mod:`slipsense.core.planes`).  Uncertainty comes from Monte Carlo draws:
each digitised vertex is moved by independent Gaussian errors of ``sigma_xy_m`` in x and y (the
densified points between two vertices move with them, as a digitising error would), the DEM is
sampled again at the moved points and ``sigma_z_m`` Gaussian error is added to every sample; the
central 95 % of the refitted orientations is the interval.
"""
from __future__ import annotations

from dataclasses import dataclass
from dataclasses import fields as dataclass_fields
from functools import partial

import numpy as np

from ..errors import GeometryError, InputError
from .orientation import line_to_vector, plane_to_normal
from .planes import (GroupFit, PlaneResults, QualityRules, assemble_planes, concat_fits, draw_summary,
                     fit_groups)
from .raster import BlockRaster, Grid, GridSet, _bilinear, contour_segments, sample_bilinear, sample_grouped

__all__ = [
    "Traces",
    "Densified",
    "densify",
    "TracePlanes",
    "fit_trace_planes",
    "window_groups",
    "structure_contours",
    "predicted_trace_segments",
    "plane_elevation",
    "depth_to_plane",
    "DepthResults",
    "run_tile",
]


@dataclass(frozen=True)
class Traces:
    """Many map traces as flat arrays.

    Attributes
    ----------
    xy : (N, 2) float, metres in the working CRS
        All vertices, part after part.
    part_offsets : (P + 1,) int
        Part ``p`` is ``xy[part_offsets[p]:part_offsets[p+1]]``.
    part_trace : (P,) int
        Index of the trace each part belongs to, non-decreasing.
    n_traces : int
    """

    xy: np.ndarray
    part_offsets: np.ndarray
    part_trace: np.ndarray
    n_traces: int

    def __post_init__(self):
        xy = np.asarray(self.xy, dtype=float).reshape(-1, 2)
        po = np.asarray(self.part_offsets, dtype=np.intp)
        pt = np.asarray(self.part_trace, dtype=np.intp)
        if po.size != pt.size + 1 or po[0] != 0 or po[-1] != xy.shape[0]:
            raise GeometryError("part offsets do not match the vertices")
        if pt.size and (np.any(np.diff(pt) < 0) or pt[-1] >= self.n_traces or pt[0] < 0):
            raise GeometryError("parts must be ordered by trace")
        if not np.all(np.isfinite(xy)):
            raise GeometryError("trace vertices must be finite numbers")
        object.__setattr__(self, "xy", xy)
        object.__setattr__(self, "part_offsets", po)
        object.__setattr__(self, "part_trace", pt)

    @classmethod
    def from_lines(cls, lines):
        """Build from a list of traces, each an (n, 2) array or a list of such parts."""
        xy, offs, owner = [], [0], []
        for t, line in enumerate(lines):
            is_parts = isinstance(line, (list, tuple)) and len(line) > 0 and np.ndim(line[0]) == 2
            parts = list(line) if is_parts else [line]
            for part in parts:
                a = np.asarray(part, dtype=float)[:, :2]
                xy.append(a)
                offs.append(offs[-1] + len(a))
                owner.append(t)
        xy = np.concatenate(xy) if xy else np.zeros((0, 2))
        return cls(xy, np.array(offs), np.array(owner, dtype=np.intp), len(lines))

    def bounds(self):
        """(xmin, ymin, xmax, ymax) of all vertices."""
        return (*self.xy.min(axis=0), *self.xy.max(axis=0))


@dataclass(frozen=True)
class Densified:
    """Points along traces at a spacing, remembered as blends of two digitised vertices.

    ``xy[k] = (1 - frac[k]) * vertices[i0[k]] + frac[k] * vertices[i0[k] + 1]`` (``frac`` 0 for a
    part's last vertex, with ``i0`` pointing at it).  ``part`` and ``trace`` give each point's
    owners, ``along_m`` its distance along its part.
    """

    xy: np.ndarray
    i0: np.ndarray
    frac: np.ndarray
    part: np.ndarray
    trace: np.ndarray
    along_m: np.ndarray

    def at(self, vertices):
        """The same points for moved ``vertices`` (N, 2)."""
        v = np.asarray(vertices, dtype=float)
        i1 = np.minimum(self.i0 + 1, v.shape[0] - 1)
        f = self.frac[:, None]
        return v[self.i0] * (1.0 - f) + v[i1] * f


def densify(traces, spacing_m):
    """Points every ``spacing_m`` metres (at most) along every part, keeping every vertex.

    Returns
    -------
    Densified
    """
    if not spacing_m > 0:
        raise InputError(f"spacing must be > 0 metres, got {spacing_m!r}")
    xy = traces.xy
    po = traces.part_offsets
    n_parts = po.size - 1
    # Segments are (k, k+1) inside a part.
    seg_start = np.arange(xy.shape[0] - 1) if xy.shape[0] > 1 else np.zeros(0, np.intp)
    vertex_part = np.repeat(np.arange(n_parts), np.diff(po))
    same = vertex_part[seg_start] == vertex_part[np.minimum(seg_start + 1, xy.shape[0] - 1)] if seg_start.size else seg_start.astype(bool)
    seg_start = seg_start[same]
    d = xy[seg_start + 1] - xy[seg_start]
    seg_len = np.hypot(d[:, 0], d[:, 1])
    n_sub = np.maximum(np.ceil(seg_len / spacing_m).astype(np.intp), 1)
    i0 = np.repeat(seg_start, n_sub)
    first = np.repeat(np.cumsum(n_sub) - n_sub, n_sub)
    k = np.arange(i0.size) - first
    frac = k / np.repeat(n_sub, n_sub)
    # Add the last vertex of each part (and lone-vertex parts).
    last = po[1:] - 1
    valid_last = np.diff(po) > 0
    i0 = np.concatenate([i0, last[valid_last]])
    frac = np.concatenate([frac, np.zeros(int(valid_last.sum()))])
    order = np.lexsort((frac, i0))
    i0, frac = i0[order], frac[order]
    part = vertex_part[i0]
    pts = Densified(np.zeros((0, 2)), i0, frac, part, traces.part_trace[part], np.zeros(0))
    pxy = pts.at(xy)
    step = np.zeros(pxy.shape[0])
    if pxy.shape[0] > 1:
        step[1:] = np.hypot(*(pxy[1:] - pxy[:-1]).T)
        step[1:][part[1:] != part[:-1]] = 0.0
    along = np.cumsum(step)
    part_start = np.searchsorted(part, np.arange(n_parts))
    along = along - along[np.minimum(part_start, max(along.size - 1, 0))][part] if along.size else along
    return Densified(pxy, i0, frac, part, traces.part_trace[part], along)


@dataclass(frozen=True)
class TracePlanes:
    """Result of :func:`fit_trace_planes`.

    Attributes
    ----------
    planes : PlaneResults
        One row per trace.
    n_nodata : (T,) int
        Densified points dropped because the DEM had no value there (or they were off the DEM).
    n_total : (T,) int
        Densified points per trace before dropping.
    windows : PlaneResults or None
        One row per along-trace window (when asked).
    window_trace : (W,) int, window_start_m, window_end_m : (W,) metres along the part
    window_part : (W,) int
    points : Densified
        The densified points (for drawing what was fitted).
    """

    planes: PlaneResults
    n_nodata: np.ndarray
    n_total: np.ndarray
    windows: PlaneResults | None
    window_trace: np.ndarray
    window_part: np.ndarray
    window_start_m: np.ndarray
    window_end_m: np.ndarray
    points: Densified


def window_groups(points, window_m, step_m=None):
    """Index groups of densified points in along-trace windows.

    Windows of length ``window_m`` start every ``step_m`` (default half a window) along each part;
    a part shorter than a window gives one window over its whole length.

    Returns
    -------
    index : (M,) int   point indices, window after window
    offsets : (W + 1,) int
    part, start_m, end_m : (W,)
    """
    if not window_m > 0:
        raise InputError(f"window must be > 0 metres, got {window_m!r}")
    step = window_m / 2.0 if step_m is None else float(step_m)
    idx, offs, wpart, ws, we = [], [0], [], [], []
    part = points.part
    bounds = np.flatnonzero(np.r_[True, part[1:] != part[:-1], True]) if part.size else np.array([0])
    for a, b in zip(bounds[:-1], bounds[1:]):
        s = points.along_m[a:b]
        length = s[-1] if s.size else 0.0
        starts = np.arange(0.0, max(length - window_m, 0.0) + 1e-9, step)
        lo = np.searchsorted(s, starts, side="left")
        hi = np.searchsorted(s, starts + window_m, side="right")
        for st, l_, h_ in zip(starts, lo, hi):
            idx.append(np.arange(a + l_, a + h_))
            offs.append(offs[-1] + (h_ - l_))
            wpart.append(part[a])
            ws.append(st)
            we.append(min(st + window_m, length))
    index = np.concatenate(idx) if idx else np.zeros(0, np.intp)
    return index, np.array(offs), np.array(wpart, np.intp), np.array(ws), np.array(we)


def fit_trace_planes(traces, grid, *, spacing_m=None, sigma_xy_m=0.0, sigma_z_m=0.0, draws=0,
                     seed=0, window_m=None, rules=QualityRules(), progress=None):
    """Best-fit fault planes of map traces draped on a DEM, with intervals and quality.

    Parameters
    ----------
    traces : Traces
        Map traces, metres, in the CRS of ``grid``.
    grid : Grid, GridSet or BlockRaster
        DEM window covering the traces (plus the margin of
        :func:`slipsense.steps.dem_margin_m`), one window per group of traces (a GridSet whose
        groups are the trace indices), or the whole DEM read lazily by blocks; elevations in
        metres.  All three sample bit for bit the same values.
    spacing_m : float, optional
        Densification spacing, metres (default: the DEM cell size).
    sigma_xy_m : float
        1-sigma horizontal digitising/mapping error of each vertex, metres.
    sigma_z_m : float
        1-sigma DEM elevation error, metres.
    draws : int
        Monte Carlo draws (0: no intervals).  Reproducible for ``seed``: trace ``k`` (its index
        in ``traces``) draws from its own random stream, numpy's ``SeedSequence(seed,
        spawn_key=(k,))``, so its result does not depend on the other traces or on how the work
        is split.
    window_m : float, optional
        Also fit planes in along-trace windows of this length (metres, 50 % overlap).  Windows
        are refitted in the same draws as their trace (same moved vertices and DEM samples).
    progress : callable, optional
        ``progress(fraction)`` is called as draws proceed; it may raise to cancel.

    Returns
    -------
    TracePlanes

    Notes
    -----
    Work goes in spatial tiles of traces (a Hilbert-curve order of the traces' centres), each
    tile sampling one DEM window, and in batches of at most :data:`BATCH_POINTS` points whose
    draws run in chunks of at most :data:`CHUNK_ELEMENTS` point-draws, so memory stays bounded
    whatever the number of traces and the DEM size.  A :class:`~slipsense.core.raster.BlockRaster`
    may carry a ``runner`` that runs the tiles on threads or on a cluster; results are the same.

    The DEM error ``sigma_z_m`` enters each draw in closed form.  Adding independent
    N(0, σ²) errors ε to the elevations of n points changes their centred scatter matrix S only
    through ``a = Σx̃ε``, ``b = Σỹε``, ``c = Σz̃ε`` (jointly Gaussian with covariance σ²S) and
    ``q = Σ(ε − ε̄)²``; with S = LLᵀ (Cholesky), ``(a, b, c) = σLu`` for u ~ N(0, I₃) and
    ``q = σ²(|u|² + χ²ₙ₋₄)``, the χ² independent of u (Cochran 1934, "The distribution of
    quadratic forms in a normal system", Proc. Camb. Phil. Soc. 30).  The draw's plane is then
    exactly distributed as if every sample had been perturbed, for 4 random numbers instead of n.
    Rank-deficient S (e.g. all points at one x) drops the zero pivots and their degrees of freedom.
    """
    spacing = grid.cell_size if spacing_m is None else float(spacing_m)
    for name, v in (("sigma-xy", sigma_xy_m), ("sigma-z", sigma_z_m)):
        if not (np.isfinite(v) and v >= 0):
            raise InputError(f"{name} must be >= 0 metres, got {v!r}")
    if draws < 0:
        raise InputError(f"draws must be >= 0, got {draws!r}")
    if draws and seed < 0:
        raise InputError(f"seed must be >= 0, got {seed!r}")
    dens = densify(traces, spacing)
    t = traces.n_traces
    n_total = np.bincount(dens.trace, minlength=t)
    windows = None
    empty = np.zeros(0)
    wtrace, wpart, ws, we = empty.astype(np.intp), empty.astype(np.intp), empty, empty
    index = woffs = None
    if window_m:
        index, woffs, wpart, ws, we = window_groups(dens, float(window_m))
        wtrace = traces.part_trace[wpart] if wpart.size else wpart
    params = _DrawParams(float(sigma_xy_m), float(sigma_z_m), int(draws), int(seed), bool(window_m))
    tiles = _plan_tiles(traces, dens, grid, index, woffs, wtrace, params)
    total = float(sum(tl.work for tl in tiles)) or 1.0
    runner = getattr(grid, "runner", None)
    if isinstance(grid, BlockRaster) and getattr(runner, "plans", True):
        grid.plan([tl.blocks for tl in tiles])  # each block stays cached until its last tile is done
    state = {"done": 0.0}

    def step(work):
        state["done"] += work
        if progress is not None:
            progress(min(state["done"] / total, 1.0))

    if runner is None:
        results = [run_tile(tl, grid, params, step) for tl in tiles]
    else:
        results = runner.map(partial(run_tile, params=params), tiles, grid,
                             lambda k: step(tiles[k].work))
    batches = [r for tile in results for r in tile]
    planes, n_nodata = _assemble(batches, t, params, rules, windows=False)
    if window_m:
        windows, _ = _assemble(batches, len(wtrace), params, rules, windows=True)
    if progress is not None:
        progress(1.0)
    return TracePlanes(planes, n_nodata, n_total, windows, wtrace, wpart, ws, we, dens)


# -- Monte Carlo work: tiles, batches, random streams, the batched kernel ------------------------

#: Point-draws (draws × points) in one chunk of the Monte Carlo kernel; bounds its memory (about
#: twenty float arrays of this size are alive at once: ~80 MB at 2**19).
CHUNK_ELEMENTS = 2 ** 16
#: Densified points in one batch of traces (a single longer trace makes its own batch).
BATCH_POINTS = 4096
#: Largest DEM window (cells) sampled by one tile of traces; larger spans are sampled block by block.
TILE_CELLS = 2048 * 2048
#: Batches in one tile at most (a tile is one task when a runner spreads the work).
TILE_BATCHES = 16


@dataclass(frozen=True)
class _DrawParams:
    sigma_xy_m: float
    sigma_z_m: float
    draws: int
    seed: int
    windows: bool

    @property
    def monte_carlo(self):
        return self.draws > 0 and (self.sigma_xy_m > 0 or self.sigma_z_m > 0)


@dataclass
class _Batch:
    """Traces fitted together: their vertices, densified points and windows (local indices)."""

    traces: np.ndarray  # (G,) indices of the traces in the whole set
    vxy: np.ndarray  # (V, 2) their digitised vertices
    vcount: np.ndarray  # (G,) vertices per trace
    i0: np.ndarray  # (P,) vertex (local) before each densified point
    frac: np.ndarray  # (P,)
    xy: np.ndarray  # (P, 2) the densified points
    poffs: np.ndarray  # (G + 1,) points per trace
    wids: np.ndarray  # (W,) indices of the windows in the whole set
    wcount: np.ndarray  # (G,) windows per trace
    widx: np.ndarray  # (M,) local point indices, window after window
    woffs: np.ndarray  # (W + 1,)


@dataclass
class _Tile:
    """Neighbouring batches sampling one DEM window (``blocks`` of a BlockRaster)."""

    batches: list
    blocks: object = None
    direct: bool = False
    work: float = 0.0


def _hilbert(ix, iy, order):
    """Index along a Hilbert curve of cells (ix, iy) of a 2**order square (for locality only)."""
    n = 1 << order
    x = ix.astype(np.int64).copy()
    y = iy.astype(np.int64).copy()
    d = np.zeros(x.shape, np.int64)
    s = n >> 1
    while s > 0:
        rx = (x & s) > 0
        ry = (y & s) > 0
        d += s * s * ((3 * rx.astype(np.int64)) ^ ry.astype(np.int64))
        flip = ~ry & rx
        x = np.where(flip, n - 1 - x, x)
        y = np.where(flip, n - 1 - y, y)
        swap = ~ry
        x, y = np.where(swap, y, x), np.where(swap, x, y)
        s >>= 1
    return d


def _plan_tiles(traces, dens, grid, windex, woffs, wtrace, params):
    """Split the traces into spatial tiles of batches (see :func:`fit_trace_planes`)."""
    t = traces.n_traces
    pcount = np.bincount(dens.trace, minlength=t)
    poffs = np.r_[0, np.cumsum(pcount)]
    vtrace = np.repeat(traces.part_trace, np.diff(traces.part_offsets))
    vcount = np.bincount(vtrace, minlength=t) if vtrace.size else np.zeros(t, np.intp)
    voffs = np.r_[0, np.cumsum(vcount)]
    if windex is not None:
        wcount = np.bincount(wtrace, minlength=t) if wtrace.size else np.zeros(t, np.intp)
    else:
        wcount = np.zeros(t, np.intp)
    wstart = np.r_[0, np.cumsum(wcount)]
    # Box centre of each trace, then a Hilbert-curve order of the centres.
    xy = dens.xy
    lo = np.zeros((t, 2))
    hi = np.zeros((t, 2))
    has = pcount > 0
    if xy.shape[0]:
        st = np.minimum(poffs[:-1], xy.shape[0] - 1)
        lo = np.minimum.reduceat(xy, st, axis=0)
        hi = np.maximum.reduceat(xy, st, axis=0)
        lo[~has] = 0.0
        hi[~has] = 0.0
    centre = (lo + hi) / 2
    if t > 1:
        c0 = centre.min(0)
        span = max(float((centre.max(0) - c0).max()), 1e-9)
        q = np.clip(((centre - c0) / span * 1023).astype(np.int64), 0, 1023)
        order = np.argsort(_hilbert(q[:, 0], q[:, 1], 10), kind="stable")
    else:
        order = np.arange(t)
    # Tiles: consecutive traces in that order while their DEM window (block-aligned, with the
    # margin) stays within TILE_CELLS; batches: consecutive traces of a tile, up to BATCH_POINTS
    # points.  A single trace wider than a tile makes its own tile, sampled block by block.
    blocky = isinstance(grid, BlockRaster)
    if blocky:
        a_, e_ = grid.transform[0], -grid.transform[4]
        bh, bw = grid.block_shape
        m = grid.margin_m
        c_lo = np.floor(((lo[:, 0] - m) - grid.origin[0]) / a_ / bw)
        c_hi = np.floor(((hi[:, 0] + m) - grid.origin[0]) / a_ / bw)
        r_lo = np.floor((grid.origin[1] - (hi[:, 1] + m)) / e_ / bh)
        r_hi = np.floor((grid.origin[1] - (lo[:, 1] - m)) / e_ / bh)
        limit = TILE_CELLS / float(bh * bw)
    tile_groups, cur, box = [], [], None
    for k in order.tolist():
        if blocky:
            kb = (c_lo[k], c_hi[k], r_lo[k], r_hi[k])
            nb = kb if box is None else (min(box[0], kb[0]), max(box[1], kb[1]), min(box[2], kb[2]), max(box[3], kb[3]))
            if cur and (nb[1] - nb[0] + 1) * (nb[3] - nb[2] + 1) > limit:
                tile_groups.append(cur)
                cur, nb = [], kb
            box = nb
        cur.append(k)
    if cur:
        tile_groups.append(cur)
    groups, group_tile = [], []
    for ti, tg in enumerate(tile_groups):
        cur, cur_p = [], 0
        for k in tg:
            n = int(pcount[k])
            if cur and cur_p + n > BATCH_POINTS:
                groups.append(cur)
                group_tile.append(ti)
                cur, cur_p = [], 0
            cur.append(k)
            cur_p += n
        if cur:
            groups.append(cur)
            group_tile.append(ti)
    i1_all = dens.i0
    batches = []
    for g in groups:
        ga = np.asarray(g, np.intp)
        vsl = [np.arange(voffs[k], voffs[k + 1]) for k in g]
        psl = [np.arange(poffs[k], poffs[k + 1]) for k in g]
        vidx = np.concatenate(vsl) if vsl else np.zeros(0, np.intp)
        pidx = np.concatenate(psl) if psl else np.zeros(0, np.intp)
        vc = vcount[ga]
        pc = pcount[ga]
        # local vertex index = global - first vertex of the trace + its local start
        shift = np.repeat(np.r_[0, np.cumsum(vc)][:-1] - voffs[ga], pc)
        i0 = i1_all[pidx] + shift
        wl, wo, wi = [np.zeros(0, np.intp)], [0], []
        if windex is not None:
            lstart = np.r_[0, np.cumsum(pc)][:-1]
            for j, k in enumerate(g):
                for w in range(wstart[k], wstart[k + 1]):
                    pts_ = windex[woffs[w]:woffs[w + 1]] - poffs[k] + lstart[j]
                    wl.append(pts_)
                    wo.append(wo[-1] + pts_.size)
                    wi.append(w)
        batches.append(_Batch(ga, traces.xy[vidx], vc, i0.astype(np.intp), dens.frac[pidx], xy[pidx],
                              np.r_[0, np.cumsum(pc)], np.asarray(wi, np.intp), wcount[ga],
                              np.concatenate(wl).astype(np.intp), np.asarray(wo, np.intp)))
    draws = max(params.draws, 1) if params.monte_carlo else 1
    tiles = []
    k = 0
    while k < len(batches):
        j = k
        while j < len(batches) and group_tile[j] == group_tile[k] and j - k < TILE_BATCHES:
            j += 1
        bs = batches[k:j]
        work = float(sum(b_.xy.shape[0] for b_ in bs)) * draws
        if blocky:
            pts = np.concatenate([b_.xy for b_ in bs])
            ids = grid.blocks_near(pts[:, 0], pts[:, 1])
            tiles.append(_Tile(bs, ids, grid.window_cells(ids) > TILE_CELLS * 1.5, work))
        else:
            tiles.append(_Tile(bs, None, False, work))
        k = j
    return tiles


class _Sampler:
    """DEM values at points for one tile: the tile's window, exact where it cannot serve."""

    def __init__(self, grid, tile):
        self.grid = grid
        self.values = None
        if isinstance(grid, BlockRaster) and not tile.direct and tile.blocks is not None and len(tile.blocks):
            self.values, self.offset = grid.window_values(tile.blocks)
            self.flat = self.values.reshape(-1)
            self.has_nodata = bool(np.isnan(self.flat).any())
            self.ids = tile.blocks

    def __call__(self, x, y, group):
        g = self.grid
        if isinstance(g, Grid):
            return sample_bilinear(g, x, y)
        if isinstance(g, GridSet):
            return sample_grouped(g, x, y, np.broadcast_to(group, np.shape(x)))
        if self.values is None:
            return g.sample(x, y)
        # As sample_bilinear on a Grid of this window (origin and offset), on its float32 values.
        a, e = g.transform[0], g.transform[4]
        col = (x - g.origin[0]) / a - (self.offset[0] + 0.5)
        row = (y - g.origin[1]) / e - (self.offset[1] + 0.5)
        rows, cols = self.values.shape
        z = _bilinear(self.flat, rows, cols, col, row, self.has_nodata)
        return g.repair(self.values.shape, self.offset, self.ids, x, y, z)


def run_tile(tile, grid, params, progress=None):
    """Fit the batches of one tile (a unit of work a runner may send elsewhere).

    Returns a list of per-batch results.  ``progress(work)`` is called after each batch with the
    point-draws it did.
    """
    sampler = _Sampler(grid, tile)
    out = []
    try:
        for b in tile.batches:
            out.append(_run_batch(b, sampler, params, progress))
            if progress is not None and not params.monte_carlo:
                progress(float(b.xy.shape[0]))
    finally:
        if isinstance(grid, BlockRaster) and tile.blocks is not None:
            grid.release(tile.blocks)
    return out


@dataclass
class _BatchResult:
    traces: np.ndarray
    fit: object
    mc: object
    n_nodata: np.ndarray
    wids: np.ndarray
    wfit: object
    wmc: object


def _run_batch(b, sampler, params, progress=None):
    g = b.traces.size
    gid = np.repeat(np.arange(g), np.diff(b.poffs))
    ptrace = b.traces[gid]
    x0 = np.ascontiguousarray(b.xy[:, 0])
    y0 = np.ascontiguousarray(b.xy[:, 1])
    z0 = sampler(x0, y0, ptrace) if x0.size else np.zeros(0)
    pts = np.column_stack([x0, y0, z0])
    fit = fit_groups(pts, b.poffs)
    n_nodata = np.bincount(gid, weights=~np.isfinite(z0), minlength=g).astype(int)
    wfit = fit_groups(pts[b.widx], b.woffs) if params.windows else None
    mc = wmc = None
    if params.monte_carlo:
        normals, rms2, wn, wr = _draw_batch(b, sampler, params, gid, ptrace, x0, y0, z0, fit, wfit, progress)
        mc = draw_summary(fit, normals, rms2)
        if params.windows:
            wmc = draw_summary(wfit, wn, wr)
    return _BatchResult(b.traces, fit, mc, n_nodata, b.wids, wfit, wmc)


class _Groups:
    """Contiguous groups of columns (a trace's or a window's points) and their sums."""

    def __init__(self, offs):
        self.offs = np.asarray(offs, np.intp)
        counts = np.diff(self.offs)
        self.size = counts.size
        self.n = counts.astype(float)
        self.empty = counts == 0
        self.any_empty = bool(self.empty.any())
        self.starts = None

    def sum(self, a):
        """Sums of the columns of ``a`` (D, N) per group -> (D, G); a group's sum depends on its
        own columns only."""
        if a.shape[1] == 0:
            return np.zeros((a.shape[0], self.size))
        if self.starts is None or self.starts_n != a.shape[1]:
            self.starts = np.minimum(self.offs[:-1], a.shape[1] - 1)
            self.starts_n = a.shape[1]
        out = np.add.reduceat(a, self.starts, axis=1)
        if self.any_empty:
            out[:, self.empty] = 0.0
        return out


def _moments(x, y, z, rx, ry, rz, groups):
    """Point count and first and second moment sums of points relative to their group's reference."""
    xl = x - rx
    yl = y - ry
    zl = z - rz
    valid = np.isfinite(zl)
    if valid.all():
        n = np.broadcast_to(groups.n, (xl.shape[0], groups.size))
    else:
        xl = np.where(valid, xl, 0.0)
        yl = np.where(valid, yl, 0.0)
        zl = np.where(valid, zl, 0.0)
        n = groups.sum(valid.astype(float))
    s = groups.sum
    sums = (s(xl), s(yl), s(zl), s(xl * xl), s(xl * yl), s(xl * zl), s(yl * yl), s(yl * zl), s(zl * zl))
    return n, sums


class _Streams:
    """The random streams of a batch's groups: ``owner[g]`` is the stream of group ``g``; groups of
    one stream are consecutive."""

    def __init__(self, rngs, owner, k_full):
        self.rngs = rngs
        self.owner = np.asarray(owner, np.intp)
        self.k_full = k_full

    def gamma(self, gfull, k):
        """Standard gamma variates of shapes ``k`` (D, G) from the up-front variates ``gfull`` of
        shapes ``k_full``: exact splits where they differ (a draw lost points to nodata),
        Gamma(k) = Gamma(K) x Beta(k, K - k) for k < K and Gamma(K) + Gamma(k - K) for k > K, the
        extra variates drawn from each group's stream in draw order."""
        mism = k != self.k_full[None]
        if not mism.any():
            return gfull
        out = np.array(gfull, dtype=float)
        kf = np.broadcast_to(self.k_full[None], k.shape)
        for d, gi in np.argwhere(mism).tolist():  # C order: draw-major, so chunking cannot matter
            r = self.rngs[self.owner[gi]]
            ka, kk = float(k[d, gi]), float(kf[d, gi])
            if ka <= 0.0:
                out[d, gi] = 0.0
            elif ka < kk:
                out[d, gi] = gfull[d, gi] * r.beta(ka, kk - ka)
            else:
                out[d, gi] = gfull[d, gi] + r.standard_gamma(ka - kk)
        return out


def _draw_planes(n, sums, sigma_z, u, gfull, streams):
    """Normals and residual variances of one chunk of draws from moment sums (D, G), with the
    DEM error added in closed form (see :func:`fit_trace_planes`, Notes).

    ``u`` (D, G, 3) standard normals; ``gfull`` (D, G) standard gamma variates of the shapes a
    group has when no point is lost (``streams.k_full``).
    """
    sx, sy, sz, sxx, sxy, sxz, syy, syz, szz = sums
    d, g = n.shape
    pos = n > 0
    with np.errstate(invalid="ignore", divide="ignore"):
        inv = np.where(pos, 1.0 / n, 0.0)
    mx, my, mz = sx * inv, sy * inv, sz * inv
    cxx = sxx - sx * mx
    cxy = sxy - sx * my
    cxz = sxz - sx * mz
    cyy = syy - sy * my
    cyz = syz - sy * mz
    czz = szz - sz * mz
    if sigma_z > 0:
        with np.errstate(invalid="ignore", divide="ignore"):
            tol = 1e-13 * np.maximum(cxx + cyy + czz, 0.0)
            p1 = cxx > tol
            l11 = np.sqrt(np.where(p1, cxx, 1.0))
            l21 = np.where(p1, cxy / l11, 0.0)
            l31 = np.where(p1, cxz / l11, 0.0)
            l11 = np.where(p1, l11, 0.0)
            d2 = cyy - l21 * l21
            p2 = d2 > tol
            l22 = np.sqrt(np.where(p2, d2, 1.0))
            l32 = np.where(p2, (cyz - l31 * l21) / l22, 0.0)
            l22 = np.where(p2, l22, 0.0)
            d3 = czz - l31 * l31 - l32 * l32
            p3 = d3 > tol
            l33 = np.where(p3, np.sqrt(np.where(p3, d3, 1.0)), 0.0)
        u1, u2, u3 = u[..., 0], u[..., 1], u[..., 2]
        rank = p1.astype(float) + p2 + p3
        k = np.maximum(n - 1.0 - rank, 0.0) / 2.0
        chi2 = 2.0 * streams.gamma(gfull, k)
        active = p1 * (u1 * u1) + p2 * (u2 * u2) + p3 * (u3 * u3)
        cxz = cxz + sigma_z * (l11 * u1)
        cyz = cyz + sigma_z * (l21 * u1 + l22 * u2)
        czz = czz + 2.0 * sigma_z * (l31 * u1 + l32 * u2 + l33 * u3) + sigma_z * sigma_z * (active + chi2)
    m = np.empty((d, g, 3, 3))
    m[..., 0, 0] = cxx
    m[..., 0, 1] = m[..., 1, 0] = cxy
    m[..., 0, 2] = m[..., 2, 0] = cxz
    m[..., 1, 1] = cyy
    m[..., 1, 2] = m[..., 2, 1] = cyz
    m[..., 2, 2] = czz
    ok = n >= 3
    m[~ok] = np.eye(3)
    evals, evecs = np.linalg.eigh(m)
    normal = evecs[..., :, 0]
    normal[~ok] = np.nan
    var3 = np.where(ok, np.clip(evals[..., 0], 0.0, None) * inv, np.nan)
    return normal, var3


def _stream(seed, key):
    return np.random.Generator(np.random.PCG64(np.random.SeedSequence(seed, spawn_key=key)))


def _draw_batch(b, sampler, params, gid, ptrace, x0, y0, z0, fit, wfit, progress=None):
    """All Monte Carlo draws of one batch: (D, G, 3) normals, (D, G) residual variances, and the
    same for its windows."""
    draws, sxy, sz = params.draws, params.sigma_xy_m, params.sigma_z_m
    g = b.traces.size
    nv = b.vxy.shape[0]
    npts = b.xy.shape[0]
    nw = b.wids.size
    vo = np.r_[0, np.cumsum(b.vcount)]
    wo = np.r_[0, np.cumsum(b.wcount)]
    tg = _Groups(b.poffs)
    wg = _Groups(b.woffs) if params.windows else None
    # One stream per trace k: numpy's child k of the seed, SeedSequence(seed, spawn_key=(k,)).
    # It gives, in this order: the vertex errors of every draw, the trace's three normals per
    # draw, its gamma variates per draw, then (rarely) the corrections of _Streams.gamma.  The
    # trace's windows use that child's own first child, spawn_key=(k, 0), the same way.
    rngs = [_stream(params.seed, (int(k),)) for k in b.traces]
    wrngs = [_stream(params.seed, (int(k), 0)) for k in b.traces] if params.windows else []
    kt = np.maximum(tg.n - 4.0, 0.0) / 2.0
    kw = np.maximum(wg.n - 4.0, 0.0) / 2.0 if wg is not None else None
    nxy = np.empty((draws, 2, nv)) if sxy > 0 else None
    ut = gt = uw = gw = None
    if sz > 0:
        ut, gt = np.empty((draws, g, 3)), np.empty((draws, g))
        if params.windows:
            uw, gw = np.empty((draws, nw, 3)), np.empty((draws, nw))
    for j, r in enumerate(rngs):
        if sxy > 0:
            nxy[:, :, vo[j]:vo[j + 1]] = r.standard_normal((draws, 2, int(b.vcount[j])))
        if sz > 0:
            ut[:, j, :] = r.standard_normal((draws, 3))
            gt[:, j] = r.standard_gamma(np.full(draws, kt[j]))
            if params.windows and b.wcount[j]:
                w0, w1 = wo[j], wo[j + 1]
                uw[:, w0:w1, :] = wrngs[j].standard_normal((draws, w1 - w0, 3))
                gw[:, w0:w1] = wrngs[j].standard_gamma(np.broadcast_to(kw[w0:w1], (draws, w1 - w0)))
    st = _Streams(rngs, np.arange(g), kt)
    sw = _Streams(wrngs, np.repeat(np.arange(g), b.wcount), kw) if params.windows else None
    ref = np.nan_to_num(fit.centroid)
    rx, ry, rz = (np.take(ref[:, k], gid) for k in range(3))
    if params.windows:
        wref = np.nan_to_num(wfit.centroid)
        wgid = np.repeat(np.arange(nw), np.diff(b.woffs))
        wrx, wry, wrz = (np.take(wref[:, k], wgid) for k in range(3))
    normals = np.empty((draws, g, 3))
    rms2 = np.empty((draws, g))
    wn = np.empty((draws, nw, 3)) if params.windows else None
    wr = np.empty((draws, nw)) if params.windows else None
    # At most CHUNK_ELEMENTS point-draws, and at least 16 chunks so that progress (and a cancel)
    # comes often; the numbers do not depend on the chunking.
    chunk = max(1, min(-(-draws // 16), CHUNK_ELEMENTS // max(npts + b.widx.size, 1)))
    f = b.frac
    f0 = 1.0 - f
    i0 = b.i0
    i1 = np.minimum(i0 + 1, max(nv - 1, 0))
    vxy_t = np.ascontiguousarray(b.vxy.T)[None]
    for d0 in range(0, draws, chunk):
        d1 = min(draws, d0 + chunk)
        if sxy > 0 and npts:
            mv = vxy_t + sxy * nxy[d0:d1]
            vx, vy = mv[:, 0], mv[:, 1]
            x = np.take(vx, i0, axis=1)
            x *= f0
            x += np.take(vx, i1, axis=1) * f
            y = np.take(vy, i0, axis=1)
            y *= f0
            y += np.take(vy, i1, axis=1) * f
            z = sampler(x, y, ptrace)
        else:  # the points do not move: the same DEM samples in every draw
            x, y, z = x0[None], y0[None], z0[None]
        n, sums = _moments(x, y, z, rx, ry, rz, tg)
        if n.shape[0] != d1 - d0:
            n = np.broadcast_to(n, (d1 - d0, g))
            sums = tuple(np.broadcast_to(s_, (d1 - d0, g)) for s_ in sums)
        normals[d0:d1], rms2[d0:d1] = _draw_planes(
            n, sums, sz, None if ut is None else ut[d0:d1], None if gt is None else gt[d0:d1], st)
        if params.windows and nw:
            xw = np.take(x, b.widx, axis=1)
            yw = np.take(y, b.widx, axis=1)
            zw = np.take(z, b.widx, axis=1)
            n, sums = _moments(xw, yw, zw, wrx, wry, wrz, wg)
            if n.shape[0] != d1 - d0:
                n = np.broadcast_to(n, (d1 - d0, nw))
                sums = tuple(np.broadcast_to(s_, (d1 - d0, nw)) for s_ in sums)
            wn[d0:d1], wr[d0:d1] = _draw_planes(
                n, sums, sz, None if uw is None else uw[d0:d1], None if gw is None else gw[d0:d1], sw)
        if progress is not None:
            progress(float(npts) * (d1 - d0))
    return normals, rms2, wn, wr


def _assemble(batches, count, params, rules, windows):
    """PlaneResults (in the order of the whole set) from per-batch results."""
    if windows:
        ids = [r.wids for r in batches]
        fits = [r.wfit for r in batches]
        mcs = [r.wmc for r in batches]
    else:
        ids = [r.traces for r in batches]
        fits = [r.fit for r in batches]
        mcs = [r.mc for r in batches]
    order = np.concatenate(ids) if ids else np.zeros(0, np.intp)
    inv = np.empty(count, np.intp)
    inv[order] = np.arange(order.size)
    fit = concat_fits(fits) if fits else fit_groups(np.zeros((0, 3)), np.zeros(1, np.intp))
    fit = GroupFit(*(getattr(fit, k.name)[inv] for k in dataclass_fields(GroupFit)))
    mc = None
    if params.monte_carlo:
        mc = tuple(np.concatenate([m[k] for m in mcs])[inv] for k in range(5))
    planes = assemble_planes(fit, mc, params.sigma_xy_m, params.sigma_z_m, rules)
    nod = None
    if not windows:
        nod = np.concatenate([r.n_nodata for r in batches])[inv] if batches else np.zeros(0, int)
    return planes, nod


def plane_elevation(x, y, point, dip_dir, dip):
    """Elevation (m) of the plane through ``point`` (x, y, z) with ``dip_dir``/``dip`` at (x, y).

    NaN for vertical planes.
    """
    n = plane_to_normal(dip_dir, dip)
    p = np.asarray(point, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        z = p[..., 2] - (n[..., 0] * (np.asarray(x) - p[..., 0]) + n[..., 1] * (np.asarray(y) - p[..., 1])) / n[..., 2]
    return np.where(np.abs(n[..., 2]) < 1e-9, np.nan, z)


def structure_contours(centroid, dip_dir, dip, along_min_m, along_max_m, z_min, z_max, interval_m):
    """Strike lines (structure contours) of one plane at a regular elevation interval.

    Parameters
    ----------
    centroid : (3,) a point on the plane, metres
    dip_dir, dip : degrees
    along_min_m, along_max_m : extent of the lines along strike, measured from the centroid (m)
    z_min, z_max : elevation range to draw (m)
    interval_m : contour interval (m); contours sit at whole multiples of it

    Returns
    -------
    elevations : (K,) metres
    lines : (K, 2, 2) end points [[x0, y0], [x1, y1]]

    Raises
    ------
    InputError
        For a vertical or horizontal plane (no strike lines can be drawn) or a bad interval.
    """
    if not interval_m > 0:
        raise InputError(f"contour interval must be > 0 metres, got {interval_m!r}")
    if not (0.0 < dip < 90.0 - 1e-6):
        raise InputError(f"no structure contours for a plane of dip {dip:g}: it must dip between 0 and 90")
    c = np.asarray(centroid, dtype=float)
    zs = np.arange(np.ceil(z_min / interval_m), np.floor(z_max / interval_m) + 1) * interval_m
    d = np.radians(dip_dir)
    down = np.array([np.sin(d), np.cos(d)])
    s = np.array([np.sin(d - np.pi / 2), np.cos(d - np.pi / 2)])
    h = (c[2] - zs) / np.tan(np.radians(dip))
    base = c[:2][None] + h[:, None] * down[None]
    lines = np.stack([base + along_min_m * s, base + along_max_m * s], axis=1)
    return zs, lines


def predicted_trace_segments(grid, point, dip_dir, dip, near_xy=None, max_distance_m=None):
    """Where the plane should crop out: the zero contour of DEM − plane elevation.

    Parameters
    ----------
    grid : Grid
    point : (3,) a point on the plane (m); dip_dir, dip : degrees
    near_xy : (n, 2) optional polyline (the mapped trace); with ``max_distance_m`` only segments
        whose midpoints lie within that distance of it are kept.

    Returns
    -------
    (S, 2, 2) segment end points (join them with a geometry library for drawing).
    """
    xc, yc = grid.cell_centres()
    gx, gy = np.meshgrid(xc, yc)
    if dip >= 90.0 - 1e-9:
        n = plane_to_normal(dip_dir, 90.0)
        diff = (gx - point[0]) * n[0] + (gy - point[1]) * n[1]
        diff = np.where(np.isfinite(grid.values), diff, np.nan)
    else:
        diff = grid.values - plane_elevation(gx, gy, point, dip_dir, dip)
    segs = contour_segments(xc, yc, diff, 0.0)
    if near_xy is not None and max_distance_m is not None and segs.shape[0]:
        mid = segs.mean(axis=1)
        segs = segs[distance_to_polyline(mid, np.asarray(near_xy, float)) <= max_distance_m]
    return segs


def distance_to_polyline(points, line, chunk=4096):
    """Shortest distance (m) from each of ``points`` (M, 2) to the polyline ``line`` (n, 2)."""
    p = np.asarray(points, dtype=float)
    a = line[:-1]
    b = line[1:]
    if a.shape[0] == 0:
        return np.hypot(*(p - line[0]).T)
    ab = b - a
    ab2 = np.maximum(np.sum(ab * ab, axis=1), 1e-300)
    out = np.empty(p.shape[0])
    for s in range(0, p.shape[0], chunk):
        q = p[s:s + chunk, None, :]
        t = np.clip(np.sum((q - a[None]) * ab[None], axis=2) / ab2[None], 0.0, 1.0)
        proj = a[None] + t[..., None] * ab[None]
        out[s:s + chunk] = np.sqrt(np.min(np.sum((q - proj) ** 2, axis=2), axis=1))
    return out


@dataclass(frozen=True)
class DepthResults:
    """Where lines from points (e.g. borehole collars) meet planes.

    Attributes (arrays of equal length)
    ----------
    along_m : distance from the collar along the hole to the plane (m); NaN if never met
    depth_m : vertical depth of the intersection below the collar (m)
    x, y, z : the 3-D intersection point (m)
    status : "ok", "parallel" (hole parallel to the plane), "above" (the plane lies behind the
        collar, up the hole direction), "ill-posed" (no plane orientation)
    """

    along_m: np.ndarray
    depth_m: np.ndarray
    x: np.ndarray
    y: np.ndarray
    z: np.ndarray
    status: np.ndarray


def depth_to_plane(collar, trend, plunge, point, dip_dir, dip):
    """Intersect holes (collar + trend/plunge, degrees) with planes (point + dip_dir/dip).

    All arguments broadcast: ``collar`` and ``point`` are (..., 3) metres (east, north, up);
    plunge 90 is a vertical hole.  The hole runs down from the collar in direction
    ``(sin t cos p, cos t cos p, −sin p)``.
    """
    c = np.asarray(collar, dtype=float)
    p = np.asarray(point, dtype=float)
    dd = np.asarray(dip_dir, dtype=float)
    dp = np.asarray(dip, dtype=float)
    ill = ~(np.isfinite(dd) & np.isfinite(dp))
    n = plane_to_normal(np.nan_to_num(dd), np.nan_to_num(dp))
    u = line_to_vector(trend, plunge)
    denom = np.sum(n * u, axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        t = np.sum(n * (p - c), axis=-1) / denom
    parallel = np.abs(denom) < 1e-9
    above = (t < 0) & ~parallel
    hit = c + np.nan_to_num(t)[..., None] * u
    bad = ill | parallel | above
    nanif = lambda v: np.where(bad, np.nan, v)  # noqa: E731
    status = np.where(ill, "ill-posed", np.where(parallel, "parallel", np.where(above, "above", "ok")))
    return DepthResults(nanif(t), nanif(c[..., 2] - hit[..., 2]), nanif(hit[..., 0]),
                        nanif(hit[..., 1]), nanif(hit[..., 2]), np.asarray(status))

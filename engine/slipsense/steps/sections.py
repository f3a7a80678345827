"""Cross-sections along section lines: profile, planes, contacts, projected data, apparent offsets
and the net slip behind them (numpy only).

The step :func:`cross_sections` is what the ``cross-section`` command and the QGIS algorithm
``slipsense:crosssection`` run.  Callers read features into the small input records below and
write the returned tables.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from ..core.kinematics import slip_from_measurements
from ..core.netslip import (
    Constraints,
    contact_noise_variance,
    direction_rows,
    mean_slip_direction,
    separation_rows,
    solve_net_slip,
)
from ..core.orientation import dip_dir_to_strike, normal_to_plane, plane_to_normal, vector_to_line
from ..core.raster import sample_bilinear
from ..core.sections import (
    PROJECTION_METHODS,
    Section,
    angle_to_strike,
    below_ground,
    clip_panel_line,
    fit_parallel_planes,
    mean_plane,
    panel_apparent_dips,
    panel_basis,
    panel_lines,
    project_points,
    section_profile,
    separations,
)
from ..core.traces import densify, depth_to_plane, distance_to_polyline
from ..errors import DataError, GeometryError, InputError
from ..tables.sections import SECTION_CRS_WKT, section_table
from .base import StepResult

__all__ = ["PlaneSet", "ContactSet", "PointSet", "HoleSet", "cross_sections", "SECTION_RULES",
           "SectionRules", "parse_marker_attitudes", "PROJECTION_METHODS", "SECTION_CRS_WKT"]

_ATT = re.compile(r"^\s*([^=]+?)\s*=\s*(?:(bedding)|(-?\d+(?:\.\d*)?)\s*/\s*(\d+(?:\.\d*)?))\s*$", re.IGNORECASE)


def parse_marker_attitudes(items):
    """Marker attitudes from text: ``["bed_A=352/11", "dyke_1=bedding"]`` or one string
    ``"bed_A=352/11; dyke_1=bedding"`` -> ``{"bed_A": (352.0, 11.0, "given"), "dyke_1": "bedding"}``.

    ``MARKER=DIPDIR/DIP`` is the marker's attitude (degrees, dip direction / dip); ``MARKER=bedding``
    takes the mean of the bedding readings.

    >>> parse_marker_attitudes("bed_A=352/11; dyke_1=bedding")
    {'bed_A': (352.0, 11.0, 'given'), 'dyke_1': 'bedding'}
    """
    if items is None:
        return {}
    if isinstance(items, str):
        items = [t for t in items.split(";") if t.strip()]
    out = {}
    for item in items:
        m = _ATT.match(str(item))
        if not m:
            raise InputError(f"marker attitude {item!r}: write MARKER=DIPDIR/DIP (e.g. bed_A=352/11) "
                             "or MARKER=bedding")
        out[m.group(1)] = "bedding" if m.group(2) else (float(m.group(3)), float(m.group(4)), "given")
    return out


# --------------------------------------------------------------------------- inputs
@dataclass(frozen=True)
class PlaneSet:
    """Planes to cut by the sections (fitted faults or measured planes).

    ids : list of str; dip_dir, dip : (G,) degrees (NaN = no orientation); point : (G, 3) metres,
    a point on each plane; extents : list of (n, 2) arrays, the mapped trace (or points) of each
    plane; dip_interval, dip_dir_interval : optional pairs of (G,) arrays (lo, hi), degrees.
    """

    ids: list
    dip_dir: np.ndarray
    dip: np.ndarray
    point: np.ndarray
    extents: list
    dip_interval: tuple | None = None
    dip_dir_interval: tuple | None = None


@dataclass(frozen=True)
class ContactSet:
    """Mapped contact pieces of planar markers (one piece per fault block).

    piece_ids, marker_ids : list of str, one per piece; traces : Traces, one trace per piece (m);
    attitudes : dict marker id -> (dip_dir, dip, source word) for markers whose attitude is given
    (e.g. ``"given"`` or ``"bedding mean"``); the others are fitted to their pieces over the DEM.
    """

    piece_ids: list
    marker_ids: list
    traces: object
    attitudes: dict | None = None


@dataclass(frozen=True)
class PointSet:
    """Point measurements of planes (bedding readings, fault-slip stations).

    ids : list of str; xy : (N, 2) metres; dip_dir, dip : (N,) degrees; plane_ids : list of str
    (the fault each station belongs to, ``""`` for none) or None; z : (N,) metres or None (then
    the DEM under each point).  Fault-slip stations also carry their lineation in one of the forms
    of :func:`slipsense.core.kinematics.slip_from_measurements`: ``trend``/``plunge`` (axis,
    degrees) with ``sense`` (words), or ``rake`` (degrees); only stations whose slip comes out
    ``consistent`` give their fault a slip direction.
    """

    ids: list
    xy: np.ndarray
    dip_dir: np.ndarray
    dip: np.ndarray
    plane_ids: list | None = None
    z: np.ndarray | None = None
    trend: np.ndarray | None = None
    plunge: np.ndarray | None = None
    sense: list | None = None
    rake: np.ndarray | None = None


@dataclass(frozen=True)
class HoleSet:
    """Boreholes: collars (xy, z from the DEM unless given), trend/plunge (degrees), total depth
    along the hole (m, NaN = down to the section's base), the fault each targets (or None: all)."""

    ids: list
    xy: np.ndarray
    trend: np.ndarray
    plunge: np.ndarray
    total_depth_m: np.ndarray | None = None
    targets: list | None = None
    z: np.ndarray | None = None


@dataclass(frozen=True)
class SectionRules:
    """Thresholds of the section step; the one place they live.

    * ``min_angle`` (10°): a strike line meeting the section at less than this falls back to
      perpendicular projection (project choice: the travel distance grows as 1 / sin angle).
    * ``near_parallel`` (5°): a plane whose strike is within this of a panel is flagged
      ``near-parallel``: its apparent dip is near 0 and its line's depth depends strongly on its
      dip (project choice).
    * ``min_width_factor`` (3): a marker whose pooled pieces spread across their best-fit line by
      less than this × the larger position error has no fitted attitude (as
      :class:`slipsense.core.planes.QualityRules`).
    * ``straddle`` (0.2): a contact piece with more than this fraction of its points on the other
      side of a fault in the panel straddles it and is left out of that panel (project choice).
    """

    min_angle: float = 10.0
    near_parallel: float = 5.0
    min_width_factor: float = 3.0
    straddle: float = 0.2


SECTION_RULES = SectionRules()


# --------------------------------------------------------------------------- helpers
def _fmt_block(names, signs):
    return " ".join(f"{n}:{'hw' if s > 0 else 'fw'}" for n, s in zip(names, signs))


def _interval(draws, axis=0):
    d = np.asarray(draws, float)
    if d.size == 0 or d.shape[axis] == 0:
        return np.nan, np.nan
    with np.errstate(invalid="ignore"):
        finite = np.isfinite(d)
    if not finite.any():
        return np.nan, np.nan
    lo, hi = np.nanpercentile(d, [2.5, 97.5], axis=axis)
    return lo, hi


def _up_line(n_fault, right):
    """Unit direction of a plane's line in a panel (normal ``right``), pointing up (or, when
    horizontal, along the panel direction ``t = up × right``)."""
    o = np.cross(n_fault, right)
    norm = np.linalg.norm(o, axis=-1, keepdims=True)
    with np.errstate(invalid="ignore", divide="ignore"):
        o = o / norm
    t = np.cross(np.array([0.0, 0.0, 1.0]), right)
    flip = (o[..., 2] < -1e-12) | ((np.abs(o[..., 2]) <= 1e-12) & (np.sum(o * t, axis=-1) < 0))
    return np.where(flip[..., None], -o, o)


def _gauss_orientation_draws(rng, dip_dir, dip, dip_interval, dip_dir_interval, draws):
    """Normals (D, G, 3) drawn from Gaussian approximations of the 95 % intervals (sigma =
    half-width / 1.96); the orientation itself where no interval is known."""
    g = dip.size
    dd = np.broadcast_to(dip_dir, (draws, g)).copy()
    dp = np.broadcast_to(dip, (draws, g)).copy()
    if dip_interval is not None and dip_dir_interval is not None:
        lo, hi = (np.asarray(v, float) for v in dip_interval)
        s_dip = np.where(np.isfinite(lo) & np.isfinite(hi), (hi - lo) / (2 * 1.96), 0.0)
        lo2, hi2 = (np.asarray(v, float) for v in dip_dir_interval)
        width = np.mod(hi2 - lo2, 360.0)
        s_dd = np.where(np.isfinite(lo2) & np.isfinite(hi2), width / (2 * 1.96), 0.0)
        dp = dp + rng.standard_normal((draws, g)) * s_dip
        dd = dd + rng.standard_normal((draws, g)) * s_dd
    dp = np.abs(dp)
    over = dp > 90.0  # a draw past vertical dips the other way
    dp = np.where(over, 180.0 - dp, dp)
    dd = np.where(over, dd + 180.0, dd)
    return plane_to_normal(np.mod(np.nan_to_num(dd), 360.0), np.clip(np.nan_to_num(dp), 0, 90))


def _finite_runs(mask):
    """(start, stop) index pairs of the runs of True in ``mask``."""
    m = np.concatenate([[False], np.asarray(mask, bool), [False]])
    d = np.diff(m.astype(int))
    return list(zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1)))


def _check_inputs(distance_m, depth_m, projection, draws, tick_m, sigma_xy_m, sigma_z_m):
    if not (np.isfinite(distance_m) and distance_m >= 0):
        raise InputError(f"distance must be >= 0 metres, got {distance_m!r}")
    if not (np.isfinite(depth_m) and depth_m > 0):
        raise InputError(f"depth must be > 0 metres, got {depth_m!r}")
    if projection not in PROJECTION_METHODS:
        raise InputError(f"projection must be one of {', '.join(PROJECTION_METHODS)}, got {projection!r}")
    if int(draws) < 0:
        raise InputError(f"draws must be >= 0, got {draws!r}")
    if not (np.isfinite(tick_m) and tick_m > 0):
        raise InputError(f"tick length must be > 0 metres, got {tick_m!r}")
    for name, v in (("sigma-xy", sigma_xy_m), ("sigma-z", sigma_z_m)):
        if not (np.isfinite(v) and v >= 0):
            raise InputError(f"{name} must be >= 0 metres, got {v!r}")


# --------------------------------------------------------------------------- markers
class _Markers:
    """Contact pieces lifted onto the DEM, with Monte Carlo copies, and their attitudes.

    A marker's attitude is fitted where it is used: for each panel, to the pieces of that marker
    near the panel, one plane per fault block (:meth:`local`).  Where those pieces cannot fix an
    attitude (straight pieces on planar ground), the fit to all the marker's pieces is used; a
    given attitude (or the bedding mean) is used as it is.
    """

    def __init__(self, contacts, grid, spacing, sigma_xy, sigma_z, draws, seed, rules, warnings):
        self.piece_ids = [str(p) for p in contacts.piece_ids]
        mids = [str(m) for m in contacts.marker_ids]
        self.names = sorted(set(mids))
        self.index = np.array([self.names.index(m) for m in mids], dtype=np.intp)
        self.grid, self.sigma_xy, self.sigma_z = grid, float(sigma_xy), float(sigma_z)
        self.floor = rules.min_width_factor * max(sigma_xy, sigma_z, 1e-3)
        tr = contacts.traces
        dens = densify(tr, spacing)
        order = np.argsort(dens.trace, kind="stable")
        xy = dens.xy[order]
        z = sample_bilinear(grid, xy[:, 0], xy[:, 1])
        self.piece_of_point = dens.trace[order]
        self.offsets = np.searchsorted(self.piece_of_point, np.arange(tr.n_traces + 1))
        self.points = np.column_stack([xy, z])
        for i in range(tr.n_traces):
            k = int(np.sum(~np.isfinite(z[self.piece_of_point == i])))
            if k:
                warnings.append(f"contact {self.piece_ids[i]}: {k} points off the DEM or on nodata were dropped")
        att = contacts.attitudes or {}
        self.fixed = {}
        self.source = {}
        for name in self.names:
            if name in att:
                dd, dp, word = att[name]
                self.fixed[name] = plane_to_normal(float(dd), float(dp))
                self.source[name] = word
        self.draws = int(draws)
        if self.draws:
            rng = np.random.default_rng(seed)
            pd = np.empty((self.draws,) + self.points.shape)
            for d in range(self.draws):
                v = tr.xy + rng.standard_normal(tr.xy.shape) * sigma_xy
                q = dens.at(v)[order]
                zz = sample_bilinear(grid, q[:, 0], q[:, 1]) + rng.standard_normal(q.shape[0]) * sigma_z
                pd[d] = np.column_stack([q, zz])
            self.point_draws = pd
        else:
            self.point_draws = None
        # the fit to all pieces of each marker (the fall-back attitude)
        self.global_normal = {}
        for m, name in enumerate(self.names):
            sel = self.index[self.piece_of_point] == m
            grp = np.where(sel, self.piece_of_point, -1)
            f = fit_parallel_planes(self.points, grp, tr.n_traces, self.fixed.get(name))
            usable = np.isfinite(f.normal).all() and (name in self.fixed or f.width_m >= self.floor)
            self.global_normal[name] = f.normal if usable else None
            if not usable:
                warnings.append(
                    f"marker {name}: its pieces are too straight over too little relief to fit an attitude "
                    f"(spread {float(f.width_m):.1f} m across their best-fit line, below {self.floor:g} m); "
                    "give its attitude instead; no contact lines")

    def piece_points(self, i):
        return self.points[self.offsets[i]:self.offsets[i + 1]]

    def local(self, m, blocks, segment_xy, reach_m):
        """Fit marker ``m`` near one panel: ``blocks`` is a list of piece lists (one per block).

        Returns a dict with ``normal`` (3,), ``normal_draws`` (D, 3) or None, ``centroid`` (B, 3),
        ``centroid_draws`` (D, B, 3) or None, ``attitude`` (the word), ``misfit_ratio``; or None
        when the marker has no usable attitude.
        """
        name = self.names[m]
        grp = np.full(self.points.shape[0], -1, np.intp)
        for b, pieces in enumerate(blocks):
            for i in pieces:
                a, e = self.offsets[i], self.offsets[i + 1]
                near = distance_to_polyline(self.points[a:e, :2], segment_xy) <= reach_m
                grp[a:e] = np.where(near, b, -1)
        fixed = self.fixed.get(name)
        word = self.source.get(name, "fitted near the section")
        f = fit_parallel_planes(self.points, grp, len(blocks), fixed)
        if fixed is None and not (f.width_m >= self.floor):
            fixed = self.global_normal[name]
            if fixed is None:
                return None
            word = "fitted to all pieces"
            f = fit_parallel_planes(self.points, grp, len(blocks), fixed)
        if not np.isfinite(f.normal).all():
            return None
        out = {"normal": f.normal, "centroid": f.centroid, "attitude": word, "normal_draws": None,
               "centroid_draws": None, "misfit_ratio": np.nan}
        use = grp >= 0
        var = contact_noise_variance(self.grid, self.points[use, :2], f.normal, self.sigma_xy, self.sigma_z)
        expected = float(np.sqrt(np.nanmean(var))) if np.isfinite(var).any() else np.nan
        ratio = float(f.rms_m) / expected if expected > 0 else np.nan
        out["misfit_ratio"] = ratio
        if self.point_draws is not None:
            fd = fit_parallel_planes(self.point_draws, grp, len(blocks), fixed)
            nd = fd.normal * np.where(np.sum(fd.normal * f.normal, -1) < 0, -1.0, 1.0)[:, None]
            cd = fd.centroid
            # the misfit ratio widens the draws (reduced chi-square scaling, common practice)
            scale = max(1.0, ratio) if np.isfinite(ratio) else 1.0
            if scale > 1.0:
                nd = f.normal + scale * (nd - f.normal)
                nd = nd / np.linalg.norm(nd, axis=-1, keepdims=True)
                cd = f.centroid + scale * (cd - f.centroid)
            out["normal_draws"], out["centroid_draws"] = nd, cd
        return out


# --------------------------------------------------------------------------- main step
def cross_sections(section_ids, lines, grid, *, faults=None, contacts=None, bedding=None, stations=None,
                   holes=None, distance_m=500.0, depth_m=1000.0, projection="strike", spacing_m=None,
                   sigma_xy_m=5.0, sigma_z_m=2.0, draws=200, seed=0, tick_m=100.0,
                   rules=SECTION_RULES, progress=None):
    """Vertical cross-sections along section lines.

    Parameters
    ----------
    section_ids : list of str
    lines : list of (n, 2) arrays, the section lines (metres, working CRS)
    grid : Grid covering the sections (the DEM, metres)
    faults : PlaneSet, optional — fitted faults (e.g. a ``trace_planes`` layer) or measured planes
    contacts : ContactSet, optional — mapped pieces of planar markers (beds, dykes)
    bedding, stations : PointSet, optional — readings projected onto the sections; stations with
        ``plane_ids`` and ``slip`` also give the slip direction of their fault
    holes : HoleSet, optional — boreholes; where they meet the faults in a section is projected
    distance_m : float (m, default 500)
        A plane is drawn only where it lies within this distance, along its strike, of its mapped
        extent; contact pieces and point measurements farther than this from the section line are
        left out.
    depth_m : float (m, default 1000)
        Lines run from the ground down to this depth below the lowest ground point of the section.
    projection : "strike" (default) or "perpendicular" — how point measurements are moved onto
        the section (see :func:`slipsense.core.sections.project_points`)
    spacing_m : profile step (m); default the DEM cell size
    sigma_xy_m, sigma_z_m, draws, seed : Monte Carlo errors of the contact vertices (m) and of
        the DEM (m) for the intervals of the offsets and of the net slip; the faults' orientations
        are drawn from Gaussian approximations of their 95 % intervals.
    tick_m : length of the dip ticks of projected measurements (m)

    Returns
    -------
    StepResult with tables ``section_segments``, ``section_profiles``, ``section_faults``,
    ``section_contacts``, ``section_points``, ``section_offsets``, ``section_net_slip`` (map
    coordinates) and ``*_xz`` twins in section coordinates.

    Notes
    -----
    Apparent dips follow tan α = tan δ · sin β (Ragan 2009).  A marker's blocks are told apart by
    the side of each fault plane in the panel their pieces lie on.  The offset of a marker across a
    fault, ``Δ = m·(p_hw − p_fw)``, gives one equation ``m·u = Δ`` on the slip ``u``; the net slip
    is solved by :mod:`slipsense.core.netslip` from all markers across the fault in the section
    and, when stations of the fault give one, the slip direction.  With one marker and no slip
    direction the slip is under-determined and no slip is reported (only the family of
    solutions).
    """
    _check_inputs(distance_m, depth_m, projection, draws, tick_m, sigma_xy_m, sigma_z_m)
    if len(lines) == 0:
        raise DataError("no section lines: the section layer is empty")
    warnings = []
    spacing = grid.cell_size if spacing_m is None else float(spacing_m)
    rng = np.random.default_rng(seed)
    draws = int(draws)

    # -- faults
    G = 0 if faults is None else len(faults.ids)
    if G:
        fdd = np.asarray(faults.dip_dir, float)
        fdp = np.asarray(faults.dip, float)
        fpt = np.asarray(faults.point, float).reshape(-1, 3)
        fok = np.isfinite(fdd) & np.isfinite(fdp) & np.isfinite(fpt).all(axis=1)
        fn = plane_to_normal(np.nan_to_num(fdd), np.clip(np.nan_to_num(fdp), 0, 90))
        fn_draws = (_gauss_orientation_draws(rng, np.nan_to_num(fdd), np.clip(np.nan_to_num(fdp), 0, 90),
                                             faults.dip_interval, faults.dip_dir_interval, draws)
                    if draws else np.zeros((0, G, 3)))
        for i in np.flatnonzero(~fok):
            warnings.append(f"plane {faults.ids[i]}: no orientation (ill-posed), left out of the sections")
    # -- markers
    markers = None
    if contacts is not None and contacts.attitudes:
        att = {}
        for name, value in contacts.attitudes.items():
            if isinstance(value, str) and value == "bedding":
                if bedding is None or not len(bedding.ids):
                    raise InputError(f"marker {name}: its attitude is to come from the bedding readings, "
                                     "but no bedding layer was given")
                dd_b, dp_b, rbar = mean_plane(bedding.dip_dir, bedding.dip)
                att[name] = (dd_b, dp_b, "bedding mean")
                warnings.append(f"marker {name}: attitude {dd_b:.1f}/{dp_b:.1f} from the mean of "
                                f"{len(bedding.ids)} bedding readings (mean resultant length {rbar:.3f})")
            else:
                dd_a, dp_a = (float(v) for v in value[:2])
                if not (0.0 <= dp_a <= 90.0 and np.isfinite(dd_a)):
                    raise InputError(f"marker {name}: attitude {dd_a:g}/{dp_a:g} is not a dip direction / dip "
                                     "(dip must be in [0, 90] degrees)")
                att[name] = (dd_a, dp_a, value[2] if len(value) > 2 else "given")
        contacts = ContactSet(contacts.piece_ids, contacts.marker_ids, contacts.traces, att)
    if contacts is not None and len(contacts.piece_ids):
        markers = _Markers(contacts, grid, spacing, sigma_xy_m, sigma_z_m, draws, seed + 1, rules, warnings)
    # -- slip directions from stations
    slip_dirs = {}
    has_lineation = stations is not None and (stations.rake is not None or stations.trend is not None)
    if stations is not None and stations.plane_ids is not None and has_lineation and len(stations.ids):
        data = slip_from_measurements(
            np.asarray(stations.dip_dir, float), np.asarray(stations.dip, float),
            trend=None if stations.trend is None else np.asarray(stations.trend, float),
            plunge=None if stations.plunge is None else np.asarray(stations.plunge, float),
            rake=None if stations.rake is None else np.asarray(stations.rake, float),
            sense=None if stations.sense is None else list(stations.sense), strict=False)
        sl = np.where(data.usable[:, None], np.asarray(data.slip, float).reshape(-1, 3), np.nan)
        n_bad = int(np.sum(~data.usable))
        if n_bad:
            warnings.append(f"{n_bad} fault-slip station(s) have no consistent slip direction "
                            "(see the fault-slip command for why) and give none")
        pid = np.asarray([str(p) for p in stations.plane_ids], dtype=object)
        for name in sorted(set(pid.tolist()) - {""}):
            sel = (pid == name) & np.isfinite(sl).all(axis=1)
            if sel.any():
                slip_dirs[name] = sl[sel]

    layers = {k: ([], [], []) for k in ("section_segments", "section_profiles", "section_faults",
                                         "section_contacts", "section_points", "section_offsets",
                                         "section_net_slip")}
    summary_sections = []
    done = 0
    for si, (sid, line) in enumerate(zip(section_ids, lines)):
        if progress is not None:
            progress(si / max(len(lines), 1))
        sid = str(sid)
        try:
            sec = Section.from_vertices(np.asarray(line, float).reshape(-1, 2))
        except GeometryError as exc:
            warnings.append(f"section {sid}: {exc}; skipped")
            continue
        if sec.dropped:
            warnings.append(f"section {sid}: {sec.dropped} zero-length segment(s) (repeated vertices) dropped")
        if sec.total_length_m < grid.cell_size:
            warnings.append(f"section {sid}: {sec.total_length_m:.2f} m long, shorter than one DEM cell "
                            f"({grid.cell_size:g} m); skipped")
            continue
        prof = section_profile(sec, grid, spacing)
        good = np.isfinite(prof.elevation_m)
        if not good.any():
            warnings.append(f"section {sid}: it lies off the DEM (no elevation anywhere along it); skipped")
            continue
        if not good.all():
            frac = 100.0 * (1 - good.mean())
            warnings.append(f"section {sid}: {frac:.0f} % of the profile is off the DEM or on nodata "
                            "(gaps in the profile)")
        ctx = _SectionContext(sid, sec, prof, depth_m, distance_m, rules)
        ctx.segments(layers["section_segments"])
        ctx.profiles(layers["section_profiles"])
        if G:
            ctx.faults(faults, fok, fn, fn_draws, layers["section_faults"], warnings)
        if markers is not None:
            ctx.contacts(markers, layers["section_contacts"], warnings)
            ctx.offsets(markers, faults, fn_draws if G else np.zeros((0, 0, 3)), layers["section_offsets"],
                        warnings)
        if ctx.offset_rows or (G and slip_dirs):
            ctx.net_slip(faults, fn, fn_draws, slip_dirs, _solve_fault_slip, layers["section_net_slip"],
                         warnings, draws, seed + 2 + si)
        for kind, pts in (("bedding", bedding), ("fault-slip", stations)):
            if pts is not None and len(pts.ids):
                ctx.points(kind, pts, grid, projection, tick_m, layers["section_points"], warnings)
        if holes is not None and len(holes.ids) and G:
            ctx.holes(holes, faults, fok, grid, projection, tick_m, layers["section_points"], warnings)
        summary_sections.append(ctx.summary())
        done += 1
    if progress is not None:
        progress(1.0)
    if done == 0:
        raise DataError("no section could be drawn: " + "; ".join(w for w in warnings if w.startswith("section"))[:500])

    tables = {}
    for name, (rows, mg, xg) in layers.items():
        has_xz = name != "section_segments"
        t_map, t_xz = section_table(name, rows, mg, xg if has_xz else None)
        tables[name] = t_map
        if has_xz:
            tables[name + "_xz"] = t_xz
    ns = layers["section_net_slip"][0]
    summary = {
        "sections": done,
        "sections_skipped": len(lines) - done,
        "fault_lines": len([r for r in layers["section_faults"][0] if r["part"] > 0]),
        "contact_lines": len(layers["section_contacts"][0]),
        "projected_points": len(layers["section_points"][0]),
        "offsets": len(layers["section_offsets"][0]),
        "net_slip": {w: sum(1 for r in ns if r["status"] == w)
                     for w in ("unique", "over-determined", "ill-conditioned", "under-determined")},
        "per_section": summary_sections,
        "projection": projection,
        "distance_m": float(distance_m),
        "depth_m": float(depth_m),
    }
    return StepResult(tables, summary, warnings)


class _SectionContext:
    """Everything of one section while its tables are built."""

    def __init__(self, sid, sec, prof, depth_m, distance_m, rules):
        self.sid, self.sec, self.prof, self.rules = sid, sec, prof, rules
        self.D = float(distance_m)
        zmin = float(np.nanmin(prof.elevation_m))
        zmax = float(np.nanmax(prof.elevation_m))
        self.z_base = zmin - float(depth_m)
        self.z_top = zmax + 1.0
        self.origin, self.t, self.r = panel_basis(sec)
        self.present = {}        # (fault index, segment) -> dict of the fault's line in the panel
        self.offset_rows = []    # (row, constraint) for the net slip
        self.n_left_out = 0
        self._fid = []
        self.fault_normals = self.fault_points = None
        self._block_cache, self._local_cache = {}, {}

    # -- helpers --------------------------------------------------------------------------
    def _map(self, k, s_local, z):
        d = self.sec.start_m[k] + np.asarray(s_local, float)
        return self.sec.to_map(d, z, 0.0, segment=np.full(np.shape(d), k))

    def _base_halfplanes(self, k):
        L = self.sec.length_m[k]
        return [(1.0, 0.0, 0.0), (-1.0, 0.0, L), (0.0, 1.0, -self.z_base), (0.0, -1.0, self.z_top)]

    def _parts(self, k, A, B, C, extra):
        clip = clip_panel_line(A, B, C, self._base_halfplanes(k) + list(extra))
        if clip is None:
            return None, []
        q0, w, t0, t1 = clip
        return (q0, w), below_ground(q0, w, t0, t1, self.sec.start_m[k], self.prof)

    def _line_geoms(self, k, q0, w, ta, tb):
        s = np.array([q0[0] + ta * w[0], q0[0] + tb * w[0]])
        z = np.array([q0[1] + ta * w[1], q0[1] + tb * w[1]])
        xyz = self._map(k, s, z)
        return xyz, np.column_stack([self.sec.start_m[k] + s, z])

    def summary(self):
        return {"section_id": self.sid, "length_m": round(self.sec.total_length_m, 3),
                "segments": int(self.sec.n_segments), "base_elevation_m": round(self.z_base, 3),
                "faults": sorted({self._fid[g] for g, _ in self.present}) if self.present else [],
                "planes_left_out": self.n_left_out}

    # -- segments and profile -------------------------------------------------------------
    def segments(self, out):
        rows, mg, _ = out
        sec = self.sec
        bends = np.concatenate([[0.0], sec.bend_angle])
        for k in range(sec.n_segments):
            rows.append({"section_id": self.sid, "segment": k + 1, "azimuth": float(sec.azimuth[k]),
                         "length_m": float(sec.length_m[k]), "distance_start_m": float(sec.start_m[k]),
                         "distance_end_m": float(sec.end_m[k]), "bend_angle": float(bends[k])})
            mg.append(sec.vertices[k:k + 2].copy())

    def profiles(self, out):
        rows, mg, xg = out
        p = self.prof
        good = np.isfinite(p.elevation_m)
        for part, (a, b) in enumerate(_finite_runs(good), start=1):
            if b - a < 2:
                continue
            z = p.elevation_m[a:b]
            rows.append({"section_id": self.sid, "part": part, "distance_start_m": float(p.distance_m[a]),
                         "distance_end_m": float(p.distance_m[b - 1]), "elevation_min_m": float(z.min()),
                         "elevation_max_m": float(z.max()), "n_samples": int(b - a),
                         "spacing_m": float(p.spacing_m)})
            mg.append(np.column_stack([p.x[a:b], p.y[a:b], z]))
            xg.append(np.column_stack([p.distance_m[a:b], z]))

    # -- faults ---------------------------------------------------------------------------
    def faults(self, faults, fok, fn, fn_draws, out, warnings):
        rows, mg, xg = out
        sec = self.sec
        self._fid = [str(i) for i in faults.ids]
        dd = np.asarray(faults.dip_dir, float)
        dp = np.asarray(faults.dip, float)
        pt = np.asarray(faults.point, float).reshape(-1, 3)
        self.fault_normals, self.fault_points = fn, pt
        A, B, C = panel_lines(sec, np.nan_to_num(dd), np.clip(np.nan_to_num(dp), 0, 90), np.nan_to_num(pt))
        app, toward, sense = panel_apparent_dips(A, B, sec.azimuth[None, :])
        lo95 = hi95 = None
        if faults.dip_interval is not None and faults.dip_dir_interval is not None:
            corners = []
            for dpk in faults.dip_interval:
                for ddk in faults.dip_dir_interval:
                    a2, b2, _ = panel_lines(sec, np.nan_to_num(np.asarray(ddk, float)),
                                            np.clip(np.nan_to_num(np.asarray(dpk, float)), 0, 90), np.nan_to_num(pt))
                    corners.append(np.degrees(np.arctan2(np.abs(a2), b2)))
            corners = np.stack(corners + [app])
            bad = ~(np.isfinite(np.asarray(faults.dip_interval[0], float)) &
                    np.isfinite(np.asarray(faults.dip_dir_interval[0], float)))
            lo95 = np.where(bad[:, None], np.nan, corners.min(0))
            hi95 = np.where(bad[:, None], np.nan, corners.max(0))
        for g, gid in enumerate(self._fid):
            base = {"section_id": self.sid, "fault_id": gid, "dip_dir": dd[g], "dip": dp[g],
                    "strike": float(dip_dir_to_strike(dd[g])) if np.isfinite(dd[g]) else np.nan}
            if not fok[g]:
                rows.append(dict(base, segment=0, part=0, **_nan_line(), status="ill-posed"))
                mg.append(np.zeros((0, 3)))
                xg.append(np.zeros((0, 2)))
                continue
            ext = np.asarray(faults.extents[g], float).reshape(-1, 2)
            ext = ext[np.isfinite(ext).all(axis=1)]
            if ext.shape[0] == 0:
                ext = pt[g:g + 1, :2]
            sv = np.array([np.sin(np.radians(dd[g] - 90)), np.cos(np.radians(dd[g] - 90))])
            a_ext = (ext - pt[g, :2]) @ sv
            a_lo, a_hi = a_ext.min() - self.D, a_ext.max() + self.D
            # where along the section the mapped extent comes closest (to pick its ground crossing)
            sp = sec.to_section(ext)
            s_ref = float(sp.distance_m[np.argmin(np.abs(sp.offset_m))])
            drawn, statuses = 0, set()
            for k in range(sec.n_segments):
                if sense[g, k] == "parallel":
                    statuses.add("parallel")
                    continue
                ts = np.array([self.t[k, 0], self.t[k, 1]]) @ sv
                o0 = (self.origin[k, :2] - pt[g, :2]) @ sv
                extra = []
                if dp[g] > 1e-6:  # along-strike extent (a horizontal plane has no strike)
                    extra = [(ts, 0.0, o0 - a_lo), (-ts, 0.0, a_hi - o0)]
                else:
                    if np.min(distance_to_polyline(ext, sec.vertices[k:k + 2])) > self.D:
                        continue
                geom, parts = self._parts(k, A[g, k], B[g, k], C[g, k], extra)
                if not parts:
                    continue
                q0, w = geom
                beta = float(angle_to_strike(sec.azimuth[k], dd[g]))
                status = "near-parallel" if beta < self.rules.near_parallel and dp[g] < 90 else "ok"
                tops = []
                for (ta, tb) in parts:
                    s_top, z_top = q0[0] + ta * w[0], q0[1] + ta * w[1]
                    tops.append((abs(sec.start_m[k] + s_top - s_ref), sec.start_m[k] + s_top, z_top))
                surf = min(tops)  # the ground crossing nearest the mapped trace
                self.present[(g, k)] = {"A": A[g, k], "B": B[g, k], "C": C[g, k], "q0": q0, "w": w,
                                        "surface": (surf[1], surf[2]), "beta": beta}
                for part, (ta, tb) in enumerate(parts, start=1):
                    xyz, xz = self._line_geoms(k, q0, w, ta, tb)
                    rows.append(dict(base, segment=k + 1, part=part, angle_to_strike=beta,
                                     apparent_dip=float(app[g, k]),
                                     apparent_dip_lo95=np.nan if lo95 is None else float(lo95[g, k]),
                                     apparent_dip_hi95=np.nan if hi95 is None else float(hi95[g, k]),
                                     apparent_dip_toward=float(toward[g, k]), dips_toward=str(sense[g, k]),
                                     surface_distance_m=surf[1], surface_elevation_m=surf[2],
                                     top_distance_m=float(xz[0, 0]), top_elevation_m=float(xz[0, 1]),
                                     base_distance_m=float(xz[1, 0]), base_elevation_m=float(xz[1, 1]),
                                     status=status))
                    mg.append(xyz)
                    xg.append(xz)
                    drawn += 1
                if status == "near-parallel":
                    warnings.append(f"section {self.sid} segment {k + 1}: plane {gid} strikes within "
                                    f"{self.rules.near_parallel:g} degrees of the section (apparent dip "
                                    f"{app[g, k]:.1f}); its line's depth depends strongly on its dip")
            if not drawn:
                self.n_left_out += 1
                if "parallel" in statuses and len(statuses) == 1:
                    word = "parallel"
                    why = "is vertical and parallel to the section: no line of intersection"
                else:
                    word = "out of reach"
                    why = (f"does not reach the section within {self.D:g} m of its mapped extent "
                           "(along strike), or only above ground")
                warnings.append(f"section {self.sid}: plane {gid} {why}; left out")
                rows.append(dict(base, segment=0, part=0, **_nan_line(), status=word))
                mg.append(np.zeros((0, 3)))
                xg.append(np.zeros((0, 2)))

    def _faults_in(self, k):
        return sorted(g for (g, kk) in self.present if kk == k)

    # -- contacts -------------------------------------------------------------------------
    def _blocks(self, markers, k, warnings):
        """Marker blocks in panel k: {marker index: [(signs, [piece indices]), ...]} (sorted)."""
        if k in self._block_cache:
            return self._block_cache[k]
        present = self._faults_in(k)
        seg = self.sec.vertices[k:k + 2]
        blocks = {}
        for i in range(len(markers.piece_ids)):
            m = int(markers.index[i])
            if markers.global_normal[markers.names[m]] is None:
                continue
            pts = markers.piece_points(i)
            pts = pts[np.isfinite(pts).all(axis=1)]
            if pts.shape[0] == 0 or np.min(distance_to_polyline(pts[:, :2], seg)) > self.D:
                continue
            signs = []
            for g in present:
                val = (pts - self.fault_points[g]) @ self.fault_normals[g]
                pos = float(np.mean(val > 0))
                if min(pos, 1 - pos) > self.rules.straddle:
                    warnings.append(f"section {self.sid} segment {k + 1}: contact {markers.piece_ids[i]} "
                                    f"straddles plane {self._fid[g]}; left out of this segment")
                    signs = None
                    break
                signs.append(1 if pos >= 0.5 else -1)
            if signs is None:
                continue
            blocks.setdefault(m, {}).setdefault(tuple(signs), []).append(i)
        out = {m: sorted(b.items()) for m, b in blocks.items()}
        self._block_cache[k] = out
        return out

    def _local(self, markers, k, m, warnings):
        key = (k, m)
        if key not in self._local_cache:
            blocks = self._blocks(markers, k, warnings).get(m, [])
            fit = markers.local(m, [p for _, p in blocks], self.sec.vertices[k:k + 2], self.D) if blocks else None
            if fit is not None:
                fit["blocks"] = blocks
            self._local_cache[key] = fit
        return self._local_cache[key]

    def contacts(self, markers, out, warnings):
        rows, mg, xg = out
        sec = self.sec
        for k in range(sec.n_segments):
            present = self._faults_in(k)
            names = [self._fid[g] for g in present]
            for m in sorted(self._blocks(markers, k, warnings)):
                fit = self._local(markers, k, m, warnings)
                if fit is None:
                    continue
                dd, dp = (float(v) for v in normal_to_plane(fit["normal"]))
                for b, (signs, pieces) in enumerate(fit["blocks"]):
                    p = fit["centroid"][b]
                    A, B, C = (v[0, 0] for v in panel_lines(_one(sec, k), dd, dp, p[None]))
                    extra = [(sgn * self.present[(g, k)]["A"], sgn * self.present[(g, k)]["B"],
                              sgn * self.present[(g, k)]["C"]) for g, sgn in zip(present, signs)]
                    geom, parts = self._parts(k, A, B, C, extra)
                    app, toward, sense = panel_apparent_dips(np.array([A]), np.array([B]), sec.azimuth[k])
                    beta = float(angle_to_strike(sec.azimuth[k], dd))
                    for part, (ta, tb) in enumerate(parts, start=1):
                        q0, w = geom
                        xyz, xz = self._line_geoms(k, q0, w, ta, tb)
                        rows.append({"section_id": self.sid, "segment": k + 1, "marker_id": markers.names[m],
                                     "block": _fmt_block(names, signs), "part": part,
                                     "pieces": ",".join(markers.piece_ids[i] for i in pieces),
                                     "dip_dir": dd, "dip": dp, "strike": float(dip_dir_to_strike(dd)),
                                     "angle_to_strike": beta, "apparent_dip": float(app[0]),
                                     "apparent_dip_lo95": np.nan, "apparent_dip_hi95": np.nan,
                                     "apparent_dip_toward": float(toward[0]), "dips_toward": str(sense[0]),
                                     "attitude": fit["attitude"],
                                     "top_distance_m": float(xz[0, 0]), "top_elevation_m": float(xz[0, 1]),
                                     "base_distance_m": float(xz[1, 0]), "base_elevation_m": float(xz[1, 1]),
                                     "status": "ok"})
                        mg.append(xyz)
                        xg.append(xz)

    # -- offsets --------------------------------------------------------------------------
    def offsets(self, markers, faults, fn_draws, out, warnings):
        sec = self.sec
        for k in range(sec.n_segments):
            present = self._faults_in(k)
            names = [self._fid[g] for g in present]
            for m in sorted(self._blocks(markers, k, warnings)):
                fit = self._local(markers, k, m, warnings)
                if fit is None:
                    continue
                blocks = fit["blocks"]
                for j, g in enumerate(present):
                    for bh, (s_h, _) in enumerate(blocks):
                        for bf, (s_f, _) in enumerate(blocks):
                            if s_h[j] < 0 or s_f[j] > 0:
                                continue
                            if any(a != b for i, (a, b) in enumerate(zip(s_h, s_f)) if i != j):
                                continue
                            self._offset_row(markers, m, fit, g, k, names, bh, bf, fn_draws, out, warnings)

    def _offset_row(self, markers, m, fit, g, k, names, bh, bf, fn_draws, out, warnings):
        rows, mg, xg = out
        sec = self.sec
        up = np.array([0.0, 0.0, 1.0])
        f = self.present[(g, k)]
        o = _up_line(self.fault_normals[g], self.r[k])
        Q = self.origin[k] + f["q0"][0] * self.t[k] + f["q0"][1] * up
        nrm = fit["normal"]
        ph, pf = fit["centroid"][bh], fit["centroid"][bf]
        t3 = self.t[k]
        sep = separations(nrm, ph, pf, o, t3)
        beta_m = float(angle_to_strike(sec.azimuth[k], normal_to_plane(nrm)[0]))
        strike_along = beta_m < self.rules.near_parallel
        mo = float(nrm @ o)
        cut = {"hw": (np.nan, np.nan), "fw": (np.nan, np.nan)}
        status = "ok"
        if not np.isfinite(sep["separation_m"]) or abs(mo) < 0.01:
            status = "marker parallel to the fault's line in the section"
        else:
            for side, p in (("hw", ph), ("fw", pf)):
                c = Q + (float(nrm @ (p - Q)) / mo) * o
                cut[side] = (float(sec.start_m[k] + (c - self.origin[k]) @ t3), float(c[2]))
        above = []
        for side, word in (("hw", "hanging-wall"), ("fw", "footwall")):
            d_, z_ = cut[side]
            if np.isfinite(d_):
                zg = self.prof.elevation_at(d_)
                if np.isfinite(zg) and z_ > zg + 1e-6:
                    above.append(word)
                elif z_ < self.z_base:
                    above.append(word + " below the section's base:")
        for side, word in (("hw", "hanging-wall"), ("fw", "footwall")):
            d_ = cut[side][0]
            if np.isfinite(d_) and not (sec.start_m[k] - 1e-6 <= d_ <= sec.end_m[k] + 1e-6):
                above.append(word + " beyond the segment:")
        cutoffs = "below ground" if not above else " and ".join(above) + " cut-off above ground (eroded)"
        cutoffs = cutoffs.replace(" beyond the segment: cut-off above ground (eroded)",
                                  " cut-off beyond the segment (on its extended plane)")
        cutoffs = cutoffs.replace(" below the section's base: cut-off above ground (eroded)",
                                  " cut-off below the section's base")
        if strike_along:
            cutoffs += f"; the marker strikes within {self.rules.near_parallel:g} degrees of the section"
        iv = {}
        n_d = delta_d = o_d = None
        if fit["normal_draws"] is not None:
            n_d = fit["normal_draws"]
            ph_d, pf_d = fit["centroid_draws"][:, bh], fit["centroid_draws"][:, bf]
            o_d = _up_line(fn_draws[:, g, :], self.r[k][None]) if fn_draws.shape[0] else np.broadcast_to(o, n_d.shape)
            sd = separations(n_d, ph_d, pf_d, o_d, np.broadcast_to(t3, n_d.shape))
            for key in ("separation_m", "vertical_separation_m", "horizontal_separation_m"):
                iv[key] = _interval(sd[key])
            delta_d = sd["normal_offset_m"]
        tr, pl = vector_to_line(o)
        row = {"section_id": self.sid, "segment": k + 1, "fault_id": self._fid[g], "marker_id": markers.names[m],
               "hw_block": _fmt_block(names, fit["blocks"][bh][0]), "fw_block": _fmt_block(names, fit["blocks"][bf][0]),
               "line_trend": float(tr), "line_plunge": float(pl),
               "hw_distance_m": cut["hw"][0], "hw_elevation_m": cut["hw"][1],
               "fw_distance_m": cut["fw"][0], "fw_elevation_m": cut["fw"][1],
               "cutoffs": cutoffs, "status": status}
        for key, p in (("separation_m", "separation"), ("vertical_separation_m", "vertical_separation"),
                       ("horizontal_separation_m", "horizontal_separation")):
            val = float(sep[key])
            lo, hi = iv.get(key, (np.nan, np.nan))
            if key == "horizontal_separation_m" and strike_along:
                val = lo = hi = np.nan  # undefined: the marker runs along the section
            if key == "separation_m" and status != "ok":
                val = lo = hi = np.nan
            row[key] = val
            row[p + "_lo95"] = float(lo)
            row[p + "_hi95"] = float(hi)
        rows.append(row)
        if np.isfinite(cut["hw"][0]):
            xz = np.array([[cut["fw"][0], cut["fw"][1]], [cut["hw"][0], cut["hw"][1]]])
            xyz = self._map(k, xz[:, 0] - sec.start_m[k], xz[:, 1])
        else:
            xz, xyz = np.zeros((0, 2)), np.zeros((0, 3))
        mg.append(xyz)
        xg.append(xz)
        self.offset_rows.append({"fault": g, "marker": markers.names[m], "normal": nrm,
                                 "delta": float(sep["normal_offset_m"]),
                                 "separation": float(sep["separation_m"]) if status == "ok" else np.nan,
                                 "line": o, "segment": k, "normal_draws": n_d, "delta_draws": delta_d,
                                 "line_draws": o_d})

    # -- net slip -------------------------------------------------------------------------
    def net_slip(self, faults, fn, fn_draws, slip_dirs, solver, out, warnings, draws, seed):
        rows, mg, xg = out
        by_fault = {}
        for c in self.offset_rows:
            by_fault.setdefault(c["fault"], []).append(c)
        for g in sorted({g for g, _ in self.present}):
            cons = by_fault.get(g, [])
            gid = self._fid[g]
            if not cons and gid not in slip_dirs:
                continue
            res, extra = solver(float(faults.dip_dir[g]), float(faults.dip[g]), fn[g],
                                fn_draws[:, g, :] if fn_draws.shape[0] else None, cons, slip_dirs.get(gid),
                                draws=draws, seed=seed + g)
            k_surf = min(kk for (gg, kk) in self.present if gg == g)
            d_s, z_s = self.present[(g, k_surf)]["surface"]
            row = dict(res.values)
            row.update(extra)
            row.update({"section_id": self.sid, "fault_id": gid, "distance_m": float(d_s),
                        "elevation_m": float(z_s)})
            rows.append(row)
            mg.append(self.sec.to_map(d_s, z_s))
            xg.append(np.array([d_s, z_s]))
            if row["status"] not in ("unique", "over-determined"):
                warnings.append(f"section {self.sid}: net slip on {gid} is {row['status']}"
                                + (f" ({row['note']})" if row["note"] else ""))

    # -- projected points -----------------------------------------------------------------
    def _tick(self, k, d, z, app, sense, tick_m):
        """A dip tick centred at (d, z) in panel k, dipping ``app`` degrees toward ``sense``."""
        a = np.radians(app)
        sgn = 1.0 if sense in ("end", "horizontal") else -1.0
        if sense == "vertical":
            ds, dz = 0.0, -1.0
        else:
            ds, dz = sgn * np.cos(a), -np.sin(a)
        h = tick_m / 2.0
        xz = np.array([[d - h * ds, z - h * dz], [d + h * ds, z + h * dz]])
        xyz = self.sec.to_map(xz[:, 0], xz[:, 1], 0.0, segment=np.full(2, k))
        return xyz, xz

    def _point_rows(self, kind, ids, plane_ids, xy, z, dd, dp, projection, tick_m, out, status_extra=None):
        rows, mg, xg = out
        sec = self.sec
        pr = project_points(sec, xy, self.D, projection, dip_dir=dd, min_angle=self.rules.min_angle)
        for i in range(len(ids)):
            if pr.segment[i] < 0:
                continue
            if not np.isfinite(z[i]):
                continue
            k = int(pr.segment[i])
            d = float(pr.distance_m[i])
            A, B, _ = panel_lines(_one(sec, k), dd[i], dp[i], np.array([[xy[i, 0], xy[i, 1], z[i]]]))
            app, toward, sense = panel_apparent_dips(A, B, sec.azimuth[k])
            beta = float(angle_to_strike(sec.azimuth[k], dd[i]))
            xyz, xz = self._tick(k, d, float(z[i]), float(app[0, 0]), str(sense[0, 0]), tick_m)
            st = str(pr.status[i])
            if status_extra is not None and status_extra[i]:
                st = status_extra[i] if st == "ok" else f"{st}; {status_extra[i]}"
            rows.append({"section_id": self.sid, "segment": k + 1, "kind": kind, "point_id": str(ids[i]),
                         "fault_id": "" if plane_ids is None else str(plane_ids[i]),
                         "x": float(xy[i, 0]), "y": float(xy[i, 1]), "z": float(z[i]),
                         "distance_m": d, "elevation_m": float(z[i]), "offset_m": float(pr.offset_m[i]),
                         "travel_m": float(pr.travel_m[i]), "projection": str(pr.method[i]),
                         "dip_dir": float(dd[i]), "dip": float(dp[i]), "angle_to_strike": beta,
                         "apparent_dip": float(app[0, 0]), "apparent_dip_lo95": np.nan,
                         "apparent_dip_hi95": np.nan, "apparent_dip_toward": float(toward[0, 0]),
                         "dips_toward": str(sense[0, 0]), "status": st})
            mg.append(xyz)
            xg.append(xz)

    def points(self, kind, pts, grid, projection, tick_m, out, warnings):
        xy = np.asarray(pts.xy, float).reshape(-1, 2)
        z = sample_bilinear(grid, xy[:, 0], xy[:, 1]) if pts.z is None else np.asarray(pts.z, float)
        dd = np.asarray(pts.dip_dir, float)
        dp = np.asarray(pts.dip, float)
        ok = np.isfinite(dd) & np.isfinite(dp) & np.isfinite(z)
        sel = np.flatnonzero(ok)
        self._point_rows(kind, [pts.ids[i] for i in sel], None if pts.plane_ids is None else
                         [pts.plane_ids[i] for i in sel], xy[sel], z[sel], dd[sel], dp[sel], projection,
                         tick_m, out)

    def holes(self, holes, faults, fok, grid, projection, tick_m, out, warnings):
        xy = np.asarray(holes.xy, float).reshape(-1, 2)
        z = sample_bilinear(grid, xy[:, 0], xy[:, 1]) if holes.z is None else np.asarray(holes.z, float)
        present = sorted({g for g, _ in self.present})
        ids, pids, hx, hz, hdd, hdp, extra = [], [], [], [], [], [], []
        for i, hid in enumerate(holes.ids):
            if not np.isfinite(z[i]):
                continue
            for g in present:
                if holes.targets is not None and holes.targets[i] not in (None, "") and \
                        str(holes.targets[i]) != self._fid[g]:
                    continue
                res = depth_to_plane(np.array([xy[i, 0], xy[i, 1], z[i]]), holes.trend[i], holes.plunge[i],
                                     np.asarray(faults.point, float)[g], faults.dip_dir[g], faults.dip[g])
                if str(res.status) != "ok":
                    continue
                td = np.nan if holes.total_depth_m is None else float(holes.total_depth_m[i])
                if np.isfinite(td) and float(res.along_m) > td:
                    continue
                if float(res.z) < self.z_base:
                    continue
                ids.append(str(hid))
                pids.append(self._fid[g])
                hx.append((float(res.x), float(res.y)))
                hz.append(float(res.z))
                hdd.append(float(faults.dip_dir[g]))
                hdp.append(float(faults.dip[g]))
                extra.append(f"hit at {float(res.along_m):.1f} m along the hole")
        if ids:
            self._point_rows("borehole", ids, pids, np.array(hx), np.array(hz), np.array(hdd), np.array(hdp),
                             projection, tick_m, out, status_extra=extra)


def _solve_fault_slip(dip_dir, dip, normal, normal_draws, constraints, station_slips, *, draws=0, seed=0):
    """Net slip of one fault from the offsets measured in a section (and a slip direction).

    Each offset row is the separation ``S`` along the fault's line in the section, which the
    net-slip solver turns into ``m·u = S (m·o)`` (:func:`slipsense.core.netslip.separation_rows`);
    stations of the fault add their mean slip direction
    (:func:`slipsense.core.netslip.mean_slip_direction`).  Row 0 of every array is the central
    estimate, the others are the Monte Carlo draws of the section step; the solver
    (:func:`slipsense.core.netslip.solve_net_slip`) gives the status word and the intervals.

    Returns ``(NetSlip, extra fields)``.
    """
    D = 0 if normal_draws is None else int(normal_draws.shape[0])
    nf = np.vstack([np.asarray(normal, float)[None], normal_draws]) if D else np.asarray(normal, float)[None]
    rows_a, rows_b, sig, isd, groups, kinds, notes = [], [], [], [], [], [], []
    for c in constraints:
        m = c["normal"][None]
        o = c["line"][None]
        S = np.array([c["separation"]])
        sigma = np.nan
        if D and c["normal_draws"] is not None:
            m = np.vstack([m, c["normal_draws"]])
            o = np.vstack([o, c["line_draws"]])
            with np.errstate(invalid="ignore", divide="ignore"):
                sd = c["delta_draws"] / np.sum(c["normal_draws"] * c["line_draws"], axis=-1)
            S = np.concatenate([S, sd])
            if np.isfinite(sd).sum() >= 2:
                sigma = float(np.nanstd(sd))
        if not (sigma > 0):
            sigma = 1.0  # no draws: an assumed 1 m (1-sigma); say so
            if "no Monte Carlo draws" not in " ".join(notes):
                notes.append("no Monte Carlo draws: separations given an assumed 1-sigma of 1 m")
        if not np.isfinite(S[0]):
            notes.append(f"{c['marker']}: parallel to the fault's line in the section; no constraint")
            continue
        if m.shape[0] != nf.shape[0]:  # markers without draws against faults with draws
            m = np.broadcast_to(m[:1], nf.shape).copy()
            o = np.broadcast_to(o[:1], nf.shape).copy()
            S = np.broadcast_to(S[:1], (nf.shape[0],)).copy()
        a, b, sb, ok = separation_rows(nf, m, o, S, sigma)
        if not ok[0]:
            notes.append(f"{c['marker']}: no cutoff line on the fault (parallel to it) or separation undefined")
            continue
        rows_a.append(a)
        rows_b.append(b)
        sig.append(float(sb[0]))
        isd.append(False)
        groups.append(c["marker"])
        kinds.append("marker")
    extra = {"slip_direction": "none", "n_stations": 0, "station_rake": np.nan, "station_rake_sigma": np.nan}
    if station_slips is not None and len(station_slips):
        rake, rsig, n_used, n_rej = mean_slip_direction(dip_dir, dip, station_slips)
        extra.update(n_stations=int(n_used), station_rake=rake, station_rake_sigma=rsig)
        if np.isfinite(rake):
            extra["slip_direction"] = f"stations ({n_used})"
            rng = np.random.default_rng(seed)
            lam = np.concatenate([[rake], rake + rng.standard_normal(D) * rsig]) if D else np.array([rake])
            a, b = direction_rows(lam)
            rows_a.append(a)
            rows_b.append(b)
            sig.append(float(np.radians(rsig)))
            isd.append(True)
            groups.append("slip direction")
            kinds.append("direction")
        if n_rej:
            notes.append(f"{n_rej} station(s) more than the tolerance off the fault plane not used")
    if rows_a:
        a = np.stack(rows_a, axis=1)
        b = np.stack(rows_b, axis=1)
    else:
        a = np.zeros((nf.shape[0], 0, 2))
        b = np.zeros((nf.shape[0], 0))
    con = Constraints(a, b, np.asarray(sig, float), nf, np.asarray(isd, bool), np.asarray(groups, dtype=object),
                      np.asarray(kinds, dtype=object), notes)
    return solve_net_slip(con), extra


def _one(sec, k):
    """The one-segment section of segment ``k`` (same origin and direction as that panel)."""
    return Section(sec.vertices[k:k + 2])


def _nan_line():
    return {"angle_to_strike": np.nan, "apparent_dip": np.nan, "apparent_dip_lo95": np.nan,
            "apparent_dip_hi95": np.nan, "apparent_dip_toward": np.nan, "dips_toward": "",
            "surface_distance_m": np.nan, "surface_elevation_m": np.nan, "top_distance_m": np.nan,
            "top_elevation_m": np.nan, "base_distance_m": np.nan, "base_elevation_m": np.nan}

"""Planes through points: the three-point solution, batched total-least-squares fits, quality.

Points are ``(N, 3)`` arrays (east, north, up) in metres.  Many point sets travel together as one
flat array plus ``offsets`` (``G + 1`` indices, group ``g`` is ``points[offsets[g]:offsets[g+1]]``),
so thousands of planes are fitted in a few vectorised steps.

Method
------
The best-fit plane passes through the centroid with normal = the eigenvector of the smallest
eigenvalue of the scatter matrix of the centred points (total least squares; Fernández 2005,
"Obtaining a best fitting plane through 3D georeferenced data", J. Struct. Geol. 27(5)).  With the
eigenvalues S1 >= S2 >= S3 Fernández defines coplanarity ``M = ln(S1/S3)`` and collinearity
``K = ln(S1/S2) / ln(S2/S3)``; a plane is considered reliable for M > 4 and K < 0.8 (thresholds
from memory, corroborated second-hand).  Three points give the exact plane of
Vacher (2000), "Computational Geology 12 — Cramer's rule and the three-point problem".
"""
from __future__ import annotations

import warnings
from dataclasses import dataclass, fields

import numpy as np

from ..errors import GeometryError
from .orientation import dip_dir_to_strike, normal_to_plane, normalize_azimuth

__all__ = [
    "GroupFit",
    "fit_groups",
    "three_point",
    "assess_quality",
    "QUALITY_LEVELS",
    "QualityRules",
    "PlaneResults",
    "planes_from_points",
    "align_normals",
    "draw_summary",
    "assemble_planes",
    "concat_fits",
]

#: Quality words, best first.
QUALITY_LEVELS = ("good", "fair", "poor", "ill-posed")


@dataclass(frozen=True)
class GroupFit:
    """Raw batched fit of ``G`` point groups (arrays of length ``G``).

    Attributes
    ----------
    centroid : (G, 3) metres
    normal : (G, 3) upward unit normals (NaN for groups with < 3 points)
    eigvals : (G, 3) variances along the principal axes, m², descending (S1/n, S2/n, S3/n)
    n_points : (G,) int
    rms_m : (G,) rms distance of the points from the plane, m
    relief_m : (G,) max − min elevation of the group's points, m
    """

    centroid: np.ndarray
    normal: np.ndarray
    eigvals: np.ndarray
    n_points: np.ndarray
    rms_m: np.ndarray
    relief_m: np.ndarray


def _group_index(offsets, n):
    offsets = np.asarray(offsets, dtype=np.intp)
    if offsets.ndim != 1 or offsets.size < 1 or offsets[0] != 0 or offsets[-1] != n:
        raise GeometryError("offsets must start at 0 and end at the number of points")
    if np.any(np.diff(offsets) < 0):
        raise GeometryError("offsets must not decrease")
    counts = np.diff(offsets)
    return np.repeat(np.arange(counts.size), counts), counts


def _group_reduce(ufunc, values, offsets, empty):
    """``ufunc.reduceat`` over contiguous groups of rows; empty groups get ``empty``."""
    starts = np.asarray(offsets[:-1], dtype=np.intp)
    counts = np.diff(offsets)
    n = values.shape[0]
    if n == 0:
        return np.full((starts.size,) + values.shape[1:], empty, dtype=float)
    out = ufunc.reduceat(values, np.minimum(starts, n - 1), axis=0)
    out[counts == 0] = empty
    return out


def _group_sum(values, offsets):
    """Sum rows of ``values`` (N, k) over contiguous groups; empty groups give 0."""
    return _group_reduce(np.add, values, offsets, 0.0)


def fit_groups(points, offsets, weights=None):
    """Total-least-squares planes of many point groups at once.

    Parameters
    ----------
    points : (N, 3) array, metres (east, north, up)
        Rows with a NaN coordinate are ignored.
    offsets : (G + 1,) int array
        Group boundaries in ``points``.
    weights : (N,) array of 0/1, optional
        Extra mask; rows with weight 0 are ignored.

    Returns
    -------
    GroupFit
    """
    p = np.asarray(points, dtype=float)
    if p.ndim != 2 or p.shape[1] != 3:
        raise GeometryError(f"points must have shape (N, 3), got {p.shape}")
    gid, counts = _group_index(offsets, p.shape[0])
    offsets = np.asarray(offsets, dtype=np.intp)
    g = counts.size
    valid = np.isfinite(p).all(axis=1)
    if weights is not None:
        valid &= np.asarray(weights, dtype=float) > 0
    w = valid.astype(float)
    n = _group_sum(w[:, None], offsets)[:, 0]
    # Subtract a per-group reference point first so sums stay small (UTM coordinates are ~1e6 m).
    ref = np.zeros((g, 3))
    nz = counts > 0
    ref[nz] = np.nan_to_num(p[offsets[:-1][nz]])
    local = np.where(valid[:, None], p - ref[gid], 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = _group_sum(local, offsets) / n[:, None]
    mean = np.nan_to_num(mean)
    c = np.where(valid[:, None], local - mean[gid], 0.0)
    # The six distinct products of the symmetric scatter matrix, summed per group in one pass.
    prods = np.column_stack([c[:, 0] * c[:, 0], c[:, 0] * c[:, 1], c[:, 0] * c[:, 2],
                             c[:, 1] * c[:, 1], c[:, 1] * c[:, 2], c[:, 2] * c[:, 2]])
    sxx, sxy, sxz, syy, syz, szz = _group_sum(prods, offsets).T
    scatter = np.stack([np.stack([sxx, sxy, sxz], -1), np.stack([sxy, syy, syz], -1),
                        np.stack([sxz, syz, szz], -1)], -2)
    ok = n >= 3
    scatter[~ok] = np.eye(3)
    evals, evecs = np.linalg.eigh(scatter)  # ascending
    normal = evecs[:, :, 0]
    normal = normal * np.where(normal[:, 2] < 0, -1.0, 1.0)[:, None]
    with np.errstate(invalid="ignore", divide="ignore"):
        var = evals[:, ::-1] / n[:, None]
    var = np.clip(var, 0.0, None)
    # The smallest variance straight from the residuals: exact to rounding of the residuals
    # themselves, not of the largest eigenvalue, so near-exact fits agree across platforms.
    resid = np.sum(c * normal[gid], axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        var[:, 2] = _group_sum((resid * resid)[:, None], offsets)[:, 0] / n
    var[~ok] = np.nan
    normal[~ok] = np.nan
    centroid = ref + mean
    centroid[n == 0] = np.nan
    rms = np.sqrt(var[:, 2])
    z = p[:, 2]
    zmax = _group_reduce(np.maximum, np.where(valid, z, -np.inf), offsets, -np.inf)
    zmin = _group_reduce(np.minimum, np.where(valid, z, np.inf), offsets, np.inf)
    relief = np.where(n > 0, zmax - zmin, np.nan)
    return GroupFit(centroid, normal, var, n.astype(int), rms, relief)


def _draw_fit(x, y, z, offsets, gid, ref):
    """Normals and residual variances of groups of points given as three 1-D arrays.

    The lean kernel of the Monte Carlo loop: the same total-least-squares fit as
    :func:`fit_groups` (a test checks they agree) without centroids or relief.  ``ref`` (G, 3) is a
    reference point per group subtracted first for precision.
    """
    valid = np.isfinite(x) & np.isfinite(y) & np.isfinite(z)
    n = _group_sum(valid.astype(float)[:, None], offsets)[:, 0]
    cols = []
    for k, v in enumerate((x, y, z)):
        loc = np.where(valid, v - ref[gid, k], 0.0)
        with np.errstate(invalid="ignore", divide="ignore"):
            m = _group_sum(loc[:, None], offsets)[:, 0] / n
        loc -= np.nan_to_num(m)[gid]
        loc[~valid] = 0.0
        cols.append(loc)
    cx, cy, cz = cols
    s6 = _group_sum(np.column_stack([cx * cx, cx * cy, cx * cz, cy * cy, cy * cz, cz * cz]), offsets)
    sxx, sxy, sxz, syy, syz, szz = s6.T
    scatter = np.stack([np.stack([sxx, sxy, sxz], -1), np.stack([sxy, syy, syz], -1),
                        np.stack([sxz, syz, szz], -1)], -2)
    ok = n >= 3
    scatter[~ok] = np.eye(3)
    evals, evecs = np.linalg.eigh(scatter)
    normal = evecs[:, :, 0]
    normal[~ok] = np.nan
    with np.errstate(invalid="ignore", divide="ignore"):
        var3 = np.where(ok, np.clip(evals[:, 0], 0.0, None) / n, np.nan)
    return normal, var3


def three_point(a, b, c):
    """Exact plane through three points (east, north, up; metres).

    Returns
    -------
    dip_dir, dip : float or ndarray, degrees
        NaN where the three points are collinear (or coincide).

    Notes
    -----
    ``n = (B − A) × (C − A)`` flipped upward; dip = acos(n_up/|n|), dip direction = atan2(n_E, n_N)
    (Vacher 2000).
    """
    a, b, c = (np.asarray(v, dtype=float) for v in (a, b, c))
    n = np.cross(b - a, c - a)
    scale = np.linalg.norm(b - a, axis=-1) * np.linalg.norm(c - a, axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        degenerate = np.linalg.norm(n, axis=-1) <= 1e-9 * scale
    degenerate = degenerate | ~(scale > 0)
    n = np.where(np.asarray(degenerate)[..., None], np.nan, n)
    return normal_to_plane(n)


def align_normals(normals, reference):
    """Flip ``normals`` (..., 3) so each points to the same side as ``reference`` (..., 3)."""
    s = np.sign(np.sum(normals * reference, axis=-1))
    s = np.where(s == 0, 1.0, s)
    return normals * s[..., None]


@dataclass(frozen=True)
class QualityRules:
    """Thresholds of the quality words; the one place they live (written out in the README).

    * ``ill-posed`` when any of: fewer than 3 usable points; the points' spread across their
      best-fit line (sqrt of the middle eigenvalue) is below ``min_width_factor`` × the larger of
      the position errors (collinear points, a straight trace on a planar slope or flat ground);
      the elevation relief is below ``min_relief_factor`` × sigma-z (project choice: relief not
      clearly above the DEM error); the Monte Carlo 95 % dip interval is wider than
      ``ill_posed_dip_width``.
    * ``good`` needs Fernández (2005) coplanarity M > 4 and collinearity K < 0.8 (from memory),
      and, with Monte Carlo draws, dip interval ≤ ``good_dip_width`` and (for dips over
      ``azimuth_min_dip``) dip-direction interval ≤ ``good_dip_dir_width``.
    * ``fair``: M > 2 and K < 1.6 and intervals ≤ ``fair_*`` (project choice).
    * ``poor``: everything else that is not ill-posed.
    * A misfit ratio (observed rms / rms the stated errors explain) above ``good_misfit`` caps the
      word at ``fair``, above ``fair_misfit`` at ``poor`` (project choice): the trace is not a plane
      within the stated errors (a curved or segmented fault, or larger errors than stated).  The
      intervals are widened by the ratio in any case.
    """

    min_width_factor: float = 3.0
    min_relief_factor: float = 3.0
    ill_posed_dip_width: float = 45.0
    good_m: float = 4.0
    good_k: float = 0.8
    fair_m: float = 2.0
    fair_k: float = 1.6
    good_dip_width: float = 10.0
    good_dip_dir_width: float = 20.0
    fair_dip_width: float = 20.0
    fair_dip_dir_width: float = 45.0
    azimuth_min_dip: float = 15.0
    good_misfit: float = 2.0
    fair_misfit: float = 5.0


def assess_quality(
    n_points,
    eigvals,
    relief_m,
    sigma_xy_m=0.0,
    sigma_z_m=0.0,
    dip=None,
    dip_width=None,
    dip_dir_width=None,
    rules=QualityRules(),
    misfit_ratio=None,
):
    """Quality word and reason for each fitted plane (the only place the criteria live).

    Parameters
    ----------
    n_points : (G,) int
    eigvals : (G, 3) variances (m²) along principal axes, descending
    relief_m : (G,) metres
    sigma_xy_m, sigma_z_m : float
        Horizontal and vertical position errors (1 sigma, metres) assumed for the points.
    dip, dip_width, dip_dir_width : (G,) degrees, optional
        Fitted dip and widths of the Monte Carlo 95 % intervals (NaN or None when no draws).
    misfit_ratio : (G,) optional
        Observed rms / rms explained by the stated errors (NaN or None when no draws).

    Returns
    -------
    quality : (G,) array of str, one of :data:`QUALITY_LEVELS`
    reason : (G,) array of str, empty for ``good``
    coplanarity, collinearity : (G,) float
        Fernández (2005) M and K (NaN where undefined).
    """
    r = rules
    n = np.asarray(n_points)
    ev = np.asarray(eigvals, dtype=float)
    g = n.shape[0]
    s1, s2, s3 = ev[:, 0], ev[:, 1], ev[:, 2]
    tiny = 1e-300
    # Floor S3 (and S2) at 1e-18 x S1: below that the eigenvalue is rounding noise, and M and K
    # would depend on the platform's arithmetic (M is then at most ln 1e18 = 41.4).
    s3 = np.maximum(s3, 1e-18 * s1)
    s2 = np.maximum(s2, s3)
    with np.errstate(invalid="ignore", divide="ignore"):
        m = np.log((s1 + tiny) / (s3 + tiny))
        k = np.log((s1 + tiny) / (s2 + tiny)) / np.log((s2 + tiny) / (s3 + tiny))
    nanarr = np.full(g, np.nan)
    dip = nanarr if dip is None else np.asarray(dip, dtype=float)
    dw = nanarr if dip_width is None else np.asarray(dip_width, dtype=float)
    aw = nanarr if dip_dir_width is None else np.asarray(dip_dir_width, dtype=float)
    err = max(float(sigma_xy_m), float(sigma_z_m))
    width = np.sqrt(np.clip(s2, 0, None))
    quality = np.full(g, "poor", dtype=object)
    reason = np.full(g, "", dtype=object)

    def mark(mask, word, why):
        sel = mask & (reason == "")
        quality[sel] = word
        reason[sel] = why

    few = ~(n >= 3)
    mark(few, "ill-posed", "fewer than 3 usable points")
    collinear = (width <= r.min_width_factor * err) | (s2 <= 1e-12 * np.maximum(s1, tiny))
    mark(collinear & ~few, "ill-posed", "points are (nearly) collinear: a straight trace on planar ground")
    low = (float(sigma_z_m) > 0) & (np.asarray(relief_m) < r.min_relief_factor * float(sigma_z_m))
    mark(low, "ill-posed", "relief is not clearly above the DEM error")
    mark(dw > r.ill_posed_dip_width, "ill-posed", "Monte Carlo dip interval is too wide to constrain the plane")
    steep = dip > r.azimuth_min_dip
    good = (m > r.good_m) & (k < r.good_k) & ~(dw > r.good_dip_width) & ~(steep & (aw > r.good_dip_dir_width))
    fair = (m > r.fair_m) & (k < r.fair_k) & ~(dw > r.fair_dip_width) & ~(steep & (aw > r.fair_dip_dir_width))
    mis = nanarr if misfit_ratio is None else np.asarray(misfit_ratio, dtype=float)
    rest = reason == ""
    quality[rest & good] = "good"
    quality[rest & ~good & fair] = "fair"
    reason[rest & ~good & fair] = "weaker coplanarity or wider intervals than 'good'"
    reason[rest & ~good & ~fair] = "low coplanarity (M), high collinearity (K) or wide intervals"
    why = "misfit {:.1f}x what the stated errors explain: curved/segmented fault or larger errors; intervals widened"
    for word, limit, allowed in (("fair", r.good_misfit, ("good",)), ("poor", r.fair_misfit, ("good", "fair"))):
        cap = rest & (mis > limit) & np.isin(quality, allowed)
        for i in np.flatnonzero(cap):
            quality[i] = word
            reason[i] = why.format(mis[i])
    m = np.where(few, np.nan, m)
    k = np.where(few, np.nan, k)
    return quality.astype(str), reason.astype(str), m, k


_RESULT_FIELDS = (
    "dip_dir", "dip", "strike", "dip_lo95", "dip_hi95", "dip_dir_lo95", "dip_dir_hi95",
    "n_points", "relief_m", "rms_m", "misfit_ratio", "coplanarity", "collinearity", "quality", "reason",
    "centroid_x", "centroid_y", "centroid_z",
)


@dataclass(frozen=True)
class PlaneResults:
    """Fitted planes, one row per group; every field an equal-length array.

    Angles in degrees (dip direction / dip, right-hand-rule strike, grid north of the working CRS);
    lengths in metres.  ``*_lo95``/``*_hi95`` bound the central 95 % of the Monte Carlo draws (NaN
    without draws; a dip-direction interval with lo > hi wraps through north).  Rows whose quality is
    ``ill-posed`` carry NaN orientation: no confident value is given.
    """

    dip_dir: np.ndarray
    dip: np.ndarray
    strike: np.ndarray
    dip_lo95: np.ndarray
    dip_hi95: np.ndarray
    dip_dir_lo95: np.ndarray
    dip_dir_hi95: np.ndarray
    n_points: np.ndarray
    relief_m: np.ndarray
    rms_m: np.ndarray
    misfit_ratio: np.ndarray
    coplanarity: np.ndarray
    collinearity: np.ndarray
    quality: np.ndarray
    reason: np.ndarray
    centroid_x: np.ndarray
    centroid_y: np.ndarray
    centroid_z: np.ndarray

    def __len__(self):
        return len(self.dip)

    def columns(self):
        """The fields as a dict of arrays, ready for a layer writer."""
        return {f.name: getattr(self, f.name) for f in fields(self)}

    def normals(self):
        """Upward unit normals (G, 3) of the planes (NaN rows for ill-posed)."""
        from .orientation import plane_to_normal

        dd = np.nan_to_num(self.dip_dir)
        d = np.nan_to_num(self.dip)
        n = plane_to_normal(dd, d)
        return np.where(np.isfinite(self.dip)[:, None], n, np.nan)

    def centroids(self):
        return np.stack([self.centroid_x, self.centroid_y, self.centroid_z], axis=-1)


def _interval_stats(reference_normal, draw_normals):
    """Dip interval and dip-direction deviation interval (degrees) from Monte Carlo normals.

    Each draw's normal is first turned to the side of the reference normal, so near-vertical
    planes whose draws dip either way stay continuous: a draw dip above 90 means "dips the other
    way".  Returns ``dip_lo, dip_hi, dev_lo, dev_hi`` where the dev values are dip-direction
    deviations from the reference, wrapped to (-180, 180].
    """
    aligned = align_normals(draw_normals, reference_normal[None])
    dip_s = np.degrees(np.arccos(np.clip(aligned[..., 2], -1.0, 1.0)))
    dd_s = np.degrees(np.arctan2(aligned[..., 0], aligned[..., 1]))
    dd0 = np.degrees(np.arctan2(reference_normal[:, 0], reference_normal[:, 1]))
    dev = (dd_s - dd0[None] + 180.0) % 360.0 - 180.0
    dip_lo, dip_hi = _nan_percentiles(dip_s, (2.5, 97.5))
    dev_lo, dev_hi = _nan_percentiles(dev, (2.5, 97.5))
    return dip_lo, dip_hi, dev_lo, dev_hi


def _nan_percentiles(a, qs):
    """Percentiles along axis 0 ignoring NaN, vectorised over columns (numpy's ``nanpercentile``
    with linear interpolation, without its per-column Python loop).  All-NaN columns give NaN."""
    s = np.sort(a, axis=0)  # NaN sorts last
    k = np.sum(np.isfinite(a), axis=0)
    cols = np.arange(a.shape[1])
    out = []
    for q in qs:
        pos = (k - 1) * (q / 100.0)
        lo = np.clip(np.floor(pos).astype(np.intp), 0, a.shape[0] - 1)
        hi = np.clip(lo + 1, 0, a.shape[0] - 1)
        hi = np.minimum(hi, np.maximum(k - 1, 0))
        f = pos - lo
        v = s[lo, cols] * (1 - f) + s[hi, cols] * f
        out.append(np.where(k > 0, v, np.nan))
    return out


def planes_from_points(points, offsets, *, sigma_xy_m=0.0, sigma_z_m=0.0, draws=0, seed=0,
                       perturb=None, rules=QualityRules()):
    """Fit planes to point groups with Monte Carlo intervals and quality words.

    Parameters
    ----------
    points : (N, 3) metres (east, north, up); NaN rows are ignored.
    offsets : (G + 1,) group boundaries.
    sigma_xy_m, sigma_z_m : float
        1-sigma horizontal and vertical position errors, metres.
    draws : int
        Number of Monte Carlo draws (0: no intervals).
    seed : int
        Seed of the random generator (results are reproducible for a seed).
    perturb : callable, optional
        ``perturb(rng) -> (x, y, z)`` returning one perturbed copy of ``points`` as three (N,)
        arrays (NaN where a draw loses a point).  Default: independent Gaussian errors of ``sigma_xy_m`` in x and y and
        ``sigma_z_m`` in z on every point.  Trace fits pass a perturbation that moves digitised
        vertices and re-samples the DEM.

    Returns
    -------
    PlaneResults
    """
    pts = np.asarray(points, dtype=float)
    fit = fit_groups(pts, offsets)
    g = fit.normal.shape[0]
    mc = None
    if draws and draws > 0 and (sigma_xy_m > 0 or sigma_z_m > 0):
        rng = np.random.default_rng(seed)
        if perturb is None:
            sig = np.array([sigma_xy_m, sigma_xy_m, sigma_z_m], dtype=float)

            def perturb(r):
                q = pts + r.normal(size=pts.shape) * sig
                return q[:, 0], q[:, 1], q[:, 2]

        normals = np.empty((int(draws), g, 3))
        rms2 = np.empty((int(draws), g))
        offs = np.asarray(offsets, dtype=np.intp)
        gid, _ = _group_index(offs, pts.shape[0])
        ref = np.nan_to_num(fit.centroid)
        for i in range(int(draws)):
            normals[i], rms2[i] = _draw_fit(*perturb(rng), offs, gid, ref)
        mc = draw_summary(fit, normals, rms2)
    return assemble_planes(fit, mc, sigma_xy_m, sigma_z_m, rules)


def draw_summary(fit, normals, rms2):
    """Interval bounds and misfit ratio of groups from their Monte Carlo draws.

    Parameters
    ----------
    fit : GroupFit
        The fit of the unperturbed points (G groups).
    normals : (D, G, 3) unit normals of the D draws (NaN where a draw has no plane)
    rms2 : (D, G) residual variance of each draw, m²

    Returns
    -------
    tuple of (G,) arrays ``(dip_lo, dip_hi, dev_lo, dev_hi, misfit)``: the raw (not yet widened)
    dip interval, the dip-direction deviation interval from the fitted dip direction (degrees),
    and the misfit ratio.  Every column depends only on its own group's draws.
    """
    with np.errstate(invalid="ignore", divide="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN columns of ill-posed groups
        lo, hi, dlo, dhi = _interval_stats(fit.normal, normals)
        # Misfit check: a draw's residual variance is about the data's plus the stated errors'
        # own, so their difference estimates what the stated errors alone explain.
        noise2 = np.nanmedian(rms2, axis=0) - fit.rms_m ** 2
        misfit = fit.rms_m / np.sqrt(np.maximum(noise2, 1e-24))
    return lo, hi, dlo, dhi, misfit


def concat_fits(fits):
    """One :class:`GroupFit` from several, groups in the order given."""
    if len(fits) == 1:
        return fits[0]
    return GroupFit(*(np.concatenate([getattr(f, k.name) for f in fits]) for k in fields(GroupFit)))


def assemble_planes(fit, mc, sigma_xy_m=0.0, sigma_z_m=0.0, rules=QualityRules()):
    """:class:`PlaneResults` from a fit and (optionally) its :func:`draw_summary`.

    The intervals are widened by the misfit ratio where it exceeds 1, the quality words are given
    by :func:`assess_quality`, and ill-posed rows lose their orientation.
    """
    dip_dir, dip = normal_to_plane(fit.normal)
    dip_dir = np.atleast_1d(dip_dir)
    dip = np.atleast_1d(dip)
    g = dip.shape[0]
    misfit = np.full(g, np.nan)
    lo = np.full(g, np.nan)
    hi = np.full(g, np.nan)
    dlo = np.full(g, np.nan)
    dhi = np.full(g, np.nan)
    if mc is not None:
        lo, hi, dlo, dhi, misfit = mc
        # Inflate the intervals by the misfit ratio where the plane fits worse than the stated
        # errors explain (the usual reduced-chi-square scaling of least squares; common practice).
        inflate = np.where(misfit > 1.0, misfit, 1.0)
        lo = dip + inflate * (lo - dip)
        hi = dip + inflate * (hi - dip)
        dlo = inflate * dlo
        dhi = inflate * dhi
    dip_width = hi - lo
    dd_width = dhi - dlo
    quality, reason, m, k = assess_quality(
        fit.n_points, fit.eigvals, fit.relief_m, sigma_xy_m, sigma_z_m, dip, dip_width, dd_width, rules,
        misfit_ratio=misfit,
    )
    ill = quality == "ill-posed"
    nan = np.nan
    dip_out = np.where(ill, nan, dip)
    dd_out = np.where(ill, nan, dip_dir)
    return PlaneResults(
        dip_dir=dd_out,
        dip=dip_out,
        strike=np.where(ill, nan, np.atleast_1d(dip_dir_to_strike(dip_dir))),
        dip_lo95=np.where(ill, nan, np.clip(lo, 0.0, 90.0)),
        dip_hi95=np.where(ill, nan, np.clip(hi, 0.0, 90.0)),
        dip_dir_lo95=np.where(ill | ~np.isfinite(dlo), nan, normalize_azimuth(dip_dir + np.nan_to_num(dlo))),
        dip_dir_hi95=np.where(ill | ~np.isfinite(dhi), nan, normalize_azimuth(dip_dir + np.nan_to_num(dhi))),
        n_points=fit.n_points,
        relief_m=fit.relief_m,
        rms_m=fit.rms_m,
        misfit_ratio=misfit,
        coplanarity=m,
        collinearity=k,
        quality=quality,
        reason=np.where(
            (~ill) & (hi > 90.0), np.char.add(reason.astype(str), "; interval includes planes dipping the other way"), reason
        ).astype(str),
        centroid_x=fit.centroid[:, 0],
        centroid_y=fit.centroid[:, 1],
        centroid_z=fit.centroid[:, 2],
    )

"""Net slip from displaced markers: separations, cutoff lines, piercing points (numpy only).

Conventions (CONVENTIONS.md): vectors are ``(..., 3)`` arrays (east, north, up), metres; angles in
degrees on every public function.  The slip vector ``u`` is the displacement of the **hanging
wall relative to the footwall** and lies in the fault plane::

    u = x · s + y · e        s: right-hand-rule strike unit vector, e: up-dip unit vector

so ``x = strike_slip_m`` (+ sinistral) and ``y = dip_slip_m`` (+ reverse); the rake is
``atan2(y, x)`` (Aki & Richards 1980).

**Separation equation.**  A planar marker (bed, dyke, vein) with unit normal ``m`` is cut by the
fault; the hanging-wall piece is the footwall piece translated by ``u``.  A separation ``S``
measured from the footwall marker to the hanging-wall marker along any direction ``o`` (strike
separation on the map: ``o = s``; dip separation: ``o = e``; vertical separation: ``o = up``;
along the fault's line in a section; ...) satisfies::

    m · u = S (m · o)

one linear equation in ``(x, y)``: ``[m·s, m·e] · (x, y) = S (m·o)``.  It says nothing about slip
along the marker's cutoff line (the line ``m × n`` common to marker and fault), so one marker
alone leaves the slip **under-determined**; two markers with non-parallel cutoffs pin it.  A slip
direction (rake ``λ``, e.g. from slickenlines) adds ``−sin λ · x + cos λ · y = 0``.  Piercing
points (the same line, e.g. a dyke–bed intersection or a channel axis, pierced on both sides)
give ``u`` directly as the hanging-wall point minus the footwall point, projected onto the fault
plane.  All equations are solved together by weighted least squares.

The equation agrees with Xu et al. (2007) "Methods for quantitatively determining fault slip using
fault separation", J. Struct. Geol. 29, and Xu, Nieto-Samaniego & Alaniz-Álvarez (2009)
"Quantification of true displacement using apparent displacement along an arbitrary line on a
fault plane", Tectonophysics 467: with pitches in the fault plane from the same strike direction
(γ slip, β cutoff, φ observation line) ``|u| = S |sin(φ − β)| / |sin(γ − β)|``.

**From the map** (:func:`slip_from_contacts`): the contact lines of a marker on both sides of a
fault trace are lifted onto the DEM, each piece is assigned to the hanging wall or the footwall by
the side of the fitted fault plane its points lie on (above the plane = hanging wall; for a
vertical plane the ``dip_dir`` side), and the two sides are fitted as two **parallel planes** (the
centred scatter matrices of the two sides pooled; the shared normal ``m`` is the eigenvector of
the smallest eigenvalue).  With side centroids ``c`` the separation equation becomes
``m · u = m · (c_HW − c_FW)``.

Only numpy is imported.
"""
from __future__ import annotations

import re
from dataclasses import dataclass, field

import numpy as np

from ..errors import AngleError, InputError
from .orientation import (
    check_dip,
    line_to_vector,
    normal_to_plane,
    normalize_azimuth,
    plane_to_normal,
    vector_to_line,
)
from .raster import sample_bilinear
from .slip import sense_words, slip_components, vector_to_rake
from .traces import distance_to_polyline

__all__ = [
    "NetSlipRules",
    "NETSLIP_RULES",
    "OBSERVATIONS",
    "STATUS_WORDS",
    "parse_observation",
    "observation_vectors",
    "fault_basis",
    "separation_rows",
    "direction_rows",
    "piercing_rows",
    "solve_rows",
    "classify_rows",
    "slip_family",
    "Constraints",
    "NetSlip",
    "solve_net_slip",
    "slip_from_separations",
    "slip_from_piercing_points",
    "cutoff_line",
    "fit_parallel_planes",
    "contact_noise_variance",
    "MarkerFit",
    "slip_from_contacts",
    "mean_slip_direction",
    "trace_distance",
]

_EPS = 1e-12


@dataclass(frozen=True)
class NetSlipRules:
    """Thresholds of the net-slip solution: the one place they live (all project choices).

    * ``min_cutoff_angle`` (10°): when the largest angle between the constraint lines (the marker
      cutoff lines in the fault plane, and the slip direction when one is given) is below this,
      the slip is reported ``ill-conditioned``: a small error in a separation or an attitude moves
      the solution far along the nearly common line.  Judgement: at 10° the error along the
      cutoffs is about 6 times the error across them (1 / sin 10°).
    * ``parallel_angle`` (1e-6°): constraint lines closer than this are parallel: the slip along
      them is unknown (``under-determined``).
    * ``min_row_norm`` (1e-6): a marker whose normal is within this (|m × n|, i.e. about 0.00006°)
      of the fault normal has no cutoff line and gives no constraint.
    * ``min_obs_cosine`` (0.01): a separation measured along a line within about 0.6° of the
      marker plane (|m · o| below this) is undefined (the line never reaches the other marker);
      such a row is refused.
    * ``piece_misfit_max`` (2.0) and ``piece_misfit_median_factor`` (2.0): a contact piece whose
      rms distance from the fitted marker plane exceeds both this multiple of what the stated
      digitising and DEM errors explain and this multiple of the median of the pieces of the same
      fit is set aside (bent, mis-assigned or in another block), as long as its side keeps another
      piece; otherwise it stays and the row carries a note.
    * ``max_station_misfit`` (20°): a slip-direction datum more than this off the fitted fault
      plane is not used for that fault.
    * ``station_min_count`` (3) and ``station_sigma_default`` (10°): the slip direction from
      stations is the mean of their directions in the fault plane, with their angular spread
      (circular standard deviation) as its 1-sigma; with fewer stations than ``station_min_count``
      the spread is not trusted and ``station_sigma_default`` is used.
    """

    min_cutoff_angle: float = 10.0
    parallel_angle: float = 1e-6
    min_row_norm: float = 1e-6
    min_obs_cosine: float = 0.01
    piece_misfit_max: float = 2.0
    piece_misfit_median_factor: float = 2.0
    max_station_misfit: float = 20.0
    station_min_count: int = 3
    station_sigma_default: float = 10.0


NETSLIP_RULES = NetSlipRules()

#: Observation words of a separation and what they measure along.
OBSERVATIONS = {
    "strike": "along the fault's right-hand-rule strike (strike separation on the map)",
    "dip": "up the fault's dip line (dip separation)",
    "vertical": "straight up (vertical separation)",
    "horizontal": "horizontally toward the fault's dip direction, across strike (horizontal separation in a dip section)",
    "section AZ": "up along the fault's line in a vertical section of azimuth AZ",
    "line T/P": "along the line of trend T and plunge P (degrees, plunge down positive)",
}

#: Status words of a net-slip solution.
STATUS_WORDS = ("unique", "over-determined", "ill-conditioned", "under-determined")

_KIND_CODES = {"strike": 0, "dip": 1, "vertical": 2, "horizontal": 3, "section": 4, "line": 5}
_LINE = re.compile(r"^(?:line\s*)?(-?\d+(?:\.\d*)?)\s*/\s*(-?\d+(?:\.\d*)?)$")
_SECTION = re.compile(r"^section\s*(-?\d+(?:\.\d*)?)$")


def parse_observation(text):
    """Read an observation word: ``(kind, trend, plunge)``.

    ``strike``, ``dip``, ``vertical``, ``horizontal``, ``section AZ`` (a vertical section of
    azimuth AZ; the trend is AZ) and ``line T/P`` or just ``T/P`` (a line of trend T, plunge P).

    >>> parse_observation("Strike"), parse_observation("line 245/12"), parse_observation("section 90")
    (('strike', nan, nan), ('line', 245.0, 12.0), ('section', 90.0, nan))

    Raises
    ------
    InputError naming the word and the valid ones.
    """
    t = str(text).strip().lower() if text is not None else ""
    t = re.sub(r"\s+", " ", t)
    if t in ("strike", "dip", "vertical", "horizontal"):
        return t, float("nan"), float("nan")
    m = _LINE.match(t)
    if m:
        tr, pl = float(m.group(1)), float(m.group(2))
        if not 0.0 <= pl <= 90.0:
            raise AngleError(f"observation {text!r}: plunge must be in [0, 90] degrees, got {pl!r}")
        if not -360.0 <= tr <= 720.0:
            raise AngleError(f"observation {text!r}: trend must be in [0, 360] degrees, got {tr!r}")
        return "line", float(normalize_azimuth(tr)), pl
    m = _SECTION.match(t)
    if m:
        return "section", float(normalize_azimuth(float(m.group(1)))), float("nan")
    valid = ", ".join(repr(k) for k in OBSERVATIONS)
    raise InputError(f"unknown observation {text!r}: use one of {valid}")


def fault_basis(normal):
    """Strike ``s``, up-dip ``e`` and normal ``n`` unit vectors (..., 3) from fault normals.

    ``normal`` points into the hanging wall (the upward normal; for a vertical plane the one toward
    ``dip_dir``).  ``s = (−n_N, n_E, 0)/|n_h|`` (right-hand rule), ``e = n × s`` so that
    ``s × e = n``.  Equal to :func:`slipsense.core.slip.plane_basis` for upward normals.  A
    horizontal plane takes strike 270 (west), as its reported dip_dir 0 gives.
    """
    n = np.asarray(normal, dtype=float)
    n = n / np.linalg.norm(n, axis=-1, keepdims=True)
    h = np.hypot(n[..., 0], n[..., 1])
    flat = h < 1e-12
    hs = np.where(flat, 1.0, h)
    s = np.stack([np.where(flat, -1.0, -n[..., 1] / hs), np.where(flat, 0.0, n[..., 0] / hs),
                  np.zeros_like(h)], axis=-1)
    e = np.cross(n, s)
    return s, e, n


def observation_vectors(kind, trend, plunge, fault_normal):
    """Unit observation directions (..., 3) for observation kinds on faults of normal ``fault_normal``.

    Parameters
    ----------
    kind : (...) str array of ``strike``, ``dip``, ``vertical``, ``horizontal``, ``section``, ``line``
    trend, plunge : (...) degrees (``line``: the line; ``section``: trend = section azimuth)
    fault_normal : (..., 3) normals into the hanging wall (broadcast against ``kind``)

    Returns
    -------
    (..., 3) unit vectors; NaN where a section runs along the fault's strike (no line in it).
    """
    kind = np.asarray(kind, dtype=object)
    s, e, n = fault_basis(fault_normal)
    shape = np.broadcast_shapes(kind.shape, s.shape[:-1])
    kind = np.broadcast_to(kind, shape)
    s, e, n = (np.broadcast_to(v, shape + (3,)) for v in (s, e, n))
    tr = np.broadcast_to(np.asarray(trend, float), shape)
    pl = np.broadcast_to(np.asarray(plunge, float), shape)
    out = np.full(shape + (3,), np.nan)
    up = np.array([0.0, 0.0, 1.0])
    sel = kind == "strike"
    out[sel] = s[sel]
    sel = kind == "dip"
    out[sel] = e[sel]
    sel = kind == "vertical"
    out[sel] = up
    sel = kind == "horizontal"
    if np.any(sel):
        h = np.stack([n[sel][:, 0], n[sel][:, 1], np.zeros(int(sel.sum()))], axis=-1)
        hn = np.linalg.norm(h, axis=-1, keepdims=True)
        out[sel] = np.where(hn > 1e-12, h / np.maximum(hn, 1e-300), np.nan)
    sel = kind == "line"
    if np.any(sel):
        out[sel] = line_to_vector(tr[sel], pl[sel])
    sel = kind == "section"
    if np.any(sel):
        a = np.radians(tr[sel])
        # the section plane is vertical with horizontal direction (sin a, cos a, 0); its normal is
        # (cos a, -sin a, 0); the line common to section and fault is n_sec x n_fault.
        nsec = np.stack([np.cos(a), -np.sin(a), np.zeros_like(a)], axis=-1)
        v = np.cross(nsec, n[sel])
        vn = np.linalg.norm(v, axis=-1, keepdims=True)
        v = v / np.maximum(vn, 1e-300)
        # point it up the fault (up-dip part >= 0); along strike (a horizontal fault) keep the
        # section's own direction
        flip = np.where(np.sum(v * e[sel], axis=-1) < 0, -1.0, 1.0)
        v = v * flip[:, None]
        out[sel] = np.where(vn > 1e-9, v, np.nan)
    return out


def separation_rows(fault_normal, marker_normal, obs, separation_m, sigma_m, rules=NETSLIP_RULES):
    """Rows ``a · (x, y) = b`` of the separation equation ``m · u = S (m · o)``.

    Parameters
    ----------
    fault_normal : (..., 3) normals into the hanging wall
    marker_normal : (..., 3) marker unit normals (either sense)
    obs : (..., 3) unit observation directions (see :func:`observation_vectors`)
    separation_m : (...) metres, from the footwall marker to the hanging-wall marker along ``obs``
    sigma_m : (...) 1-sigma of the separations, metres

    Returns
    -------
    a : (..., 2), b : (...) metres, sigma_b : (...) metres (1-sigma of ``b``)
    ok : (...) bool, False where the marker has no cutoff (parallel to the fault) or the
    observation line runs within the marker plane (the separation is undefined).
    """
    s, e, n = fault_basis(fault_normal)
    m = np.asarray(marker_normal, float)
    m = m / np.linalg.norm(m, axis=-1, keepdims=True)
    o = np.asarray(obs, float)
    a = np.stack([np.sum(m * s, -1), np.sum(m * e, -1)], axis=-1)
    mo = np.sum(m * o, -1)
    sep = np.asarray(separation_m, float)
    b = sep * mo
    sigma_b = np.abs(np.asarray(sigma_m, float) * mo)
    with np.errstate(invalid="ignore"):
        ok = (np.linalg.norm(a, axis=-1) > rules.min_row_norm) & (np.abs(mo) >= rules.min_obs_cosine)
        ok &= np.isfinite(b)
    return a, b, sigma_b, ok


def direction_rows(rake):
    """Rows of a slip-direction constraint: ``−sin λ · x + cos λ · y = 0`` for rake ``λ`` (deg).

    Returns ``a (..., 2)``, ``b (...)`` (zeros).  Its sigma in metres is ``|u| · σ_λ`` (radians),
    which :func:`solve_rows` applies.
    """
    lam = np.radians(np.asarray(rake, float))
    a = np.stack([-np.sin(lam), np.cos(lam)], axis=-1)
    return a, np.zeros(lam.shape)


def piercing_rows(fault_normal, fw_point, hw_point):
    """Rows of a piercing-point pair: ``x = Δ · s``, ``y = Δ · e`` with ``Δ = hw − fw`` (metres).

    Returns
    -------
    a : (..., 2, 2), b : (..., 2) metres, misfit_m : (...) the part of ``Δ`` normal to the fault
    plane (metres, + into the hanging wall) that the projection drops.
    """
    s, e, n = fault_basis(fault_normal)
    d = np.asarray(hw_point, float) - np.asarray(fw_point, float)
    b = np.stack([np.sum(d * s, -1), np.sum(d * e, -1)], axis=-1)
    a = np.broadcast_to(np.eye(2), b.shape[:-1] + (2, 2)).copy()
    return a, b, np.sum(d * n, -1)


def solve_rows(a, b, sigma_b, is_direction=None, direction_sigma_rad=None, iterations=4):
    """Weighted least-squares slip ``(x, y)`` from rows ``a · (x, y) = b``, batched.

    Parameters
    ----------
    a : (..., K, 2); b : (..., K) metres; sigma_b : (..., K) metres (1-sigma; direction rows are
        ignored here)
    is_direction : (K,) bool, optional; rows that are slip-direction constraints, whose sigma in
        metres is ``max(|u|, 1e-9) · direction_sigma_rad`` (iterated: it depends on the solution).
    direction_sigma_rad : (..., K) radians

    Returns
    -------
    x : (..., 2) metres; the minimum-norm least-squares solution where the rows leave a direction
    free (under-determined).
    sigma : (..., K) the sigmas used for every row (metres)
    """
    a = np.asarray(a, float)
    b = np.asarray(b, float)
    sig = np.array(np.broadcast_to(np.asarray(sigma_b, float), b.shape))
    K = b.shape[-1]
    isd = np.zeros(K, bool) if is_direction is None else np.asarray(is_direction, bool)
    if np.any(isd):
        dsig = np.broadcast_to(np.asarray(direction_sigma_rad, float), b.shape)
        # first pass: the scale of the slip from the displacement rows alone (or 1 m)
        scale = np.ones(b.shape[:-1])
        if np.any(~isd):
            x0 = _wls(a[..., ~isd, :], b[..., ~isd], sig[..., ~isd])
            scale = np.maximum(np.linalg.norm(x0, axis=-1), 1e-9)
        sig[..., isd] = scale[..., None] * dsig[..., isd]
        for _ in range(iterations):
            x = _wls(a, b, sig)
            mag = np.maximum(np.linalg.norm(x, axis=-1), 1e-9)
            sig[..., isd] = mag[..., None] * dsig[..., isd]
    sig = np.maximum(sig, 1e-12)
    return _wls(a, b, sig), sig


def _wls(a, b, sigma):
    w = 1.0 / np.maximum(np.asarray(sigma, float), 1e-12) ** 2
    N = np.einsum("...k,...ki,...kj->...ij", w, a, a)
    r = np.einsum("...k,...ki,...k->...i", w, a, b)
    # scale-free pseudo-inverse: singular values below 1e-10 of the largest are dropped
    return np.einsum("...ij,...j->...i", np.linalg.pinv(N, rcond=1e-10), r)


def _row_angles(a):
    """Largest axial angle (deg) between the rows' directions (K, 2); 0 for < 2 rows."""
    a = np.asarray(a, float).reshape(-1, 2)
    if a.shape[0] < 2:
        return 0.0
    u = a / np.maximum(np.linalg.norm(a, axis=-1, keepdims=True), 1e-300)
    cross = np.abs(u[:, None, 0] * u[None, :, 1] - u[:, None, 1] * u[None, :, 0])
    dot = np.abs(u @ u.T)
    return float(np.degrees(np.max(np.arctan2(cross, dot))))


def classify_rows(a, is_direction, rules=NETSLIP_RULES):
    """Status word and cutoff angle of a set of rows (K, 2).

    The cutoff angle is the largest angle between the constraint lines in the fault plane: each
    row leaves the slip free along one line (a marker's cutoff line; the slip direction itself for
    a direction row), perpendicular to the row in ``(x, y)``.

    Returns ``(status, cutoff_angle, why)``.
    """
    a = np.asarray(a, float).reshape(-1, 2)
    isd = np.asarray(is_direction, bool).reshape(-1)
    if a.shape[0] == 0:
        return "under-determined", float("nan"), "no usable constraint"
    if not np.any(~isd):
        return "under-determined", _row_angles(a), "slip direction only: no marker offset gives the amount"
    angle = _row_angles(a)
    if angle < rules.parallel_angle:
        return "under-determined", angle, "one cutoff direction only: the slip along the cutoff line is unknown"
    if angle < rules.min_cutoff_angle:
        return ("ill-conditioned", angle,
                f"constraint lines within {angle:.2f} deg of each other (threshold {rules.min_cutoff_angle:g})")
    return ("unique" if a.shape[0] == 2 else "over-determined"), angle, ""


def slip_family(a, b, sigma_b):
    """The family of solutions left by (nearly) parallel displacement rows.

    With ``â`` the best-determined direction (the dominant eigenvector of the weighted normal
    matrix) and ``c = â · x`` its solved component, every slip with ``â · u = c`` fits.  Returns
    ``min_slip_m`` (|c|, the slip perpendicular to the cutoff), ``min_slip_rake`` (deg),
    ``dip_slip_only_m`` (the pure dip-slip member, signed + reverse; NaN when the cutoff runs down
    the dip) and ``strike_slip_only_m`` (the pure strike-slip member, + sinistral; NaN when the
    cutoff runs along strike).  Vectorised over leading axes.
    """
    a = np.asarray(a, float)
    b = np.asarray(b, float)
    w = 1.0 / np.maximum(np.asarray(sigma_b, float), 1e-12) ** 2
    N = np.einsum("...k,...ki,...kj->...ij", w, a, a)
    _, vec = np.linalg.eigh(N)
    ahat = vec[..., :, 1]
    x = _wls(a, b, sigma_b)
    c = np.sum(ahat * x, -1)
    xmin = c[..., None] * ahat
    with np.errstate(invalid="ignore", divide="ignore"):
        dip_only = np.where(np.abs(ahat[..., 1]) > 1e-9, c / ahat[..., 1], np.nan)
        strike_only = np.where(np.abs(ahat[..., 0]) > 1e-9, c / ahat[..., 0], np.nan)
    rake = np.degrees(np.arctan2(xmin[..., 1], xmin[..., 0]))
    rake = np.where(rake <= -180.0, 180.0, rake)
    return {"min_slip_m": np.abs(c), "min_slip_rake": np.where(np.abs(c) > 0, rake, np.nan),
            "dip_slip_only_m": dip_only, "strike_slip_only_m": strike_only}


# --------------------------------------------------------------------------- one fault, solved
@dataclass(frozen=True)
class Constraints:
    """The constraint rows of one fault, for the central solution and for every Monte Carlo draw.

    Attributes
    ----------
    a : (D + 1, K, 2); b : (D + 1, K) metres; sigma : (K,) metres (1-sigma of ``b``; radians for
        direction rows)
    fault_normal : (D + 1, 3) normals into the hanging wall (row 0 = central, then the draws)
    is_direction : (K,) bool
    group : (K,) str  what each row comes from (a marker id, ``slip direction``, a piercing pair)
    kinds : (K,) str  ``marker``, ``direction`` or ``piercing``
    notes : list of str
    """

    a: np.ndarray
    b: np.ndarray
    sigma: np.ndarray
    fault_normal: np.ndarray
    is_direction: np.ndarray
    group: np.ndarray
    kinds: np.ndarray
    notes: list = field(default_factory=list)


#: Quantities of a net-slip solution that carry 95 % intervals (name -> kind).
INTERVAL_FIELDS = (
    ("net_slip_m", "net_slip"), ("rake", "rake"), ("slip_trend", "slip_trend"),
    ("slip_plunge", "slip_plunge"), ("strike_slip_m", "strike_slip"), ("dip_slip_m", "dip_slip"),
    ("throw_m", "throw"), ("heave_m", "heave"), ("horizontal_slip_m", "horizontal_slip"),
)


@dataclass(frozen=True)
class NetSlip:
    """The net slip of one fault: values, 95 % intervals, status and the family when it is not unique.

    ``values`` maps the output field names (CONVENTIONS.md; intervals ``<name>_lo95``/``_hi95``
    with ``_m`` dropped, e.g. ``net_slip_lo95``) to floats (NaN = unknown) or strings.  Also
    available as attributes (``result.net_slip_m``).
    """

    values: dict

    def __getattr__(self, name):
        try:
            return self.__dict__["values"][name]
        except KeyError:
            raise AttributeError(name) from None


def _interval_name(name):
    return (name[:-2] if name.endswith("_m") else name) + "_lo95", (name[:-2] if name.endswith("_m") else name) + "_hi95"


def _circular_percentiles(samples, centre, q=(2.5, 97.5)):
    dev = (np.asarray(samples, float) - centre + 180.0) % 360.0 - 180.0
    dev = dev[np.isfinite(dev)]
    if dev.size == 0:
        return float("nan"), float("nan"), dev
    lo, hi = np.percentile(dev, q)
    return lo, hi, dev


def _empty_values():
    v = {"status": "", "note": "", "sense": ""}
    for name, _ in INTERVAL_FIELDS:
        v[name] = float("nan")
        lo, hi = _interval_name(name)
        v[lo] = v[hi] = float("nan")
    for k in ("slip_e", "slip_n", "slip_u", "residual_m", "misfit_ratio", "cutoff_angle",
              "min_slip_m", "min_slip_lo95", "min_slip_hi95", "min_slip_rake", "dip_slip_only_m",
              "strike_slip_only_m", "fault_dip_dir", "fault_dip"):
        v[k] = float("nan")
    v["n_markers"] = 0
    v["n_constraints"] = 0
    v["markers"] = ""
    return v


def solve_net_slip(con, rules=NETSLIP_RULES, widen=True):
    """Solve one fault's constraints (central + draws) into a :class:`NetSlip`.

    Intervals are the central 95 % of the draws (azimuths and rakes taken around the central value);
    when the rows are redundant and their misfit ratio (rms of residual / sigma, per degree of
    freedom) exceeds 1, the draws' deviations from the central value are scaled by it (the usual
    reduced-chi-square widening, common practice; as for the fitted planes).
    """
    v = _empty_values()
    a_all, b_all = np.asarray(con.a, float), np.asarray(con.b, float)
    K = a_all.shape[1]
    isd = np.asarray(con.is_direction, bool)
    nrm = np.asarray(con.fault_normal, float)
    dd0, dp0 = normal_to_plane(nrm[0])
    v["fault_dip_dir"], v["fault_dip"] = float(dd0), float(dp0)
    v["n_constraints"] = int(K)
    marker_groups = [str(g) for g, k in zip(con.group, con.kinds) if k == "marker"]
    v["n_markers"] = len(dict.fromkeys(marker_groups))
    v["markers"] = ", ".join(dict.fromkeys(str(g) for g in con.group))
    notes = list(con.notes)
    status, angle, why = classify_rows(a_all[0], isd, rules)
    v["status"], v["cutoff_angle"] = status, angle
    if why:
        notes.append(why)
    if K == 0:
        v["note"] = "; ".join(notes)
        return NetSlip(v)
    sig = np.asarray(con.sigma, float)
    x, sig_used = solve_rows(a_all, b_all, np.where(isd, 0.0, sig), isd, np.where(isd, sig, 0.0))
    if a_all.shape[0] > 2 and np.any(~isd):
        # Effective 1-sigma of each displacement row: the spread of its residual at the central
        # solution over the draws (separation, attitude and fault errors together), never below
        # the stated one.  Re-solve with these weights.
        r_draw = np.einsum("dki,i->dk", a_all[1:], x[0]) - b_all[1:]
        eff = np.sqrt(np.nanmean((r_draw - (a_all[0] @ x[0] - b_all[0])) ** 2, axis=0))
        sig = np.where(isd, sig, np.maximum(sig, np.nan_to_num(eff)))
        x, sig_used = solve_rows(a_all, b_all, np.where(isd, 0.0, sig), isd, np.where(isd, sig, 0.0))
    x0 = x[0]
    disp = ~isd
    resid = np.einsum("ki,i->k", a_all[0], x0) - b_all[0]
    free = 2 if status != "under-determined" else 1
    if not np.any(disp):
        free = K  # direction only: nothing redundant to speak of
    dof = K - free
    if dof > 0:
        v["residual_m"] = float(np.sqrt(np.mean(resid ** 2)))
        v["misfit_ratio"] = float(np.sqrt(np.sum((resid / sig_used[0]) ** 2) / dof))
    scale = max(1.0, v["misfit_ratio"]) if (widen and np.isfinite(v["misfit_ratio"])) else 1.0
    if status in ("under-determined", "ill-conditioned") and np.any(disp):
        fam = slip_family(a_all[:, disp], b_all[:, disp], sig_used[:, disp])
        for k in ("min_slip_m", "min_slip_rake", "dip_slip_only_m", "strike_slip_only_m"):
            v[k] = float(fam[k][0])
        if a_all.shape[0] > 1:
            d = fam["min_slip_m"][1:] - fam["min_slip_m"][0]
            d = d[np.isfinite(d)] * scale
            if d.size:
                lo, hi = np.percentile(d, (2.5, 97.5))
                v["min_slip_lo95"] = float(fam["min_slip_m"][0] + lo)
                v["min_slip_hi95"] = float(fam["min_slip_m"][0] + hi)
    if status == "under-determined":
        v["note"] = "; ".join(notes)
        return NetSlip(v)
    s, e, _ = fault_basis(nrm)
    u = x[..., :1] * s + x[..., 1:] * e
    ddr, dpr = normal_to_plane(nrm)
    ddr, dpr = np.atleast_1d(ddr), np.atleast_1d(dpr)
    comp = slip_components(ddr, dpr, u)
    for name, _ in INTERVAL_FIELDS:
        v[name] = float(comp[name][0])
    for k in ("slip_e", "slip_n", "slip_u"):
        v[k] = float(comp[k][0])
    v["sense"] = str(sense_words(v["rake"], v["net_slip_m"]))
    if u.shape[0] > 1:
        for name, _ in INTERVAL_FIELDS:
            lo_n, hi_n = _interval_name(name)
            c = v[name]
            if name in ("rake", "slip_trend"):
                lo, hi, dev = _circular_percentiles(comp[name][1:], c)
                if dev.size:
                    lo, hi = np.percentile(dev * scale, (2.5, 97.5))
                    if name == "rake":
                        v[lo_n] = float((c + lo + 180.0) % 360.0 - 180.0)
                        v[hi_n] = float((c + hi + 180.0) % 360.0 - 180.0)
                    else:
                        v[lo_n] = float(normalize_azimuth(c + lo))
                        v[hi_n] = float(normalize_azimuth(c + hi))
                continue
            d = comp[name][1:] - c
            d = d[np.isfinite(d)] * scale
            if d.size:
                lo, hi = np.percentile(d, (2.5, 97.5))
                v[lo_n], v[hi_n] = float(c + lo), float(c + hi)
                if name in ("net_slip_m", "heave_m", "horizontal_slip_m"):
                    v[lo_n] = max(v[lo_n], 0.0)
    if np.any(isd) and np.any(disp):
        # the markers fix the sense; a slip direction whose sense points the other way is a conflict
        lam = np.arctan2(x0[1], x0[0])
        dirs = np.stack([np.cos(lam), np.sin(lam)])
        for k in np.flatnonzero(isd):
            given = np.array([a_all[0, k, 1], -a_all[0, k, 0]])  # (cos λ, sin λ) of the datum
            if float(given @ dirs) < 0:
                notes.append(f"sense conflict: the markers give the opposite sense to the slip direction of {con.group[k]}")
                break
    v["note"] = "; ".join(notes)
    return NetSlip(v)


# --------------------------------------------------------------------------- perturbations
def _tangent_basis(v):
    v = np.asarray(v, float)
    ref = np.where(np.abs(v[..., 2:3]) < 0.9, np.array([0.0, 0.0, 1.0]), np.array([1.0, 0.0, 0.0]))
    t1 = np.cross(v, ref)
    t1 /= np.linalg.norm(t1, axis=-1, keepdims=True)
    t2 = np.cross(v, t1)
    return t1, t2


def _perturb_unit(v, sigma_rad, rng, draws):
    """``draws`` copies of unit vectors ``v`` (..., 3) moved by isotropic angular noise ``sigma_rad``."""
    v = np.asarray(v, float)
    t1, t2 = _tangent_basis(v)
    g = rng.standard_normal((draws,) + v.shape[:-1] + (2,))
    sr = np.asarray(sigma_rad, float)[..., None]
    out = v + sr * (g[..., 0:1] * t1 + g[..., 1:2] * t2)
    return out / np.linalg.norm(out, axis=-1, keepdims=True)


def _perturb_fault(dip_dir, dip, sigma_dip_deg, sigma_dip_dir_deg, rng, draws):
    """Fault normals (draws, 3) with Gaussian errors in dip and dip direction.

    A draw that tips past vertical is folded back (its up component made positive), so the hanging
    wall stays on the same side; near-vertical faults thus get a dip interval that stops at 90.
    """
    n = plane_to_normal(dip_dir, dip)
    d, g = np.radians(dip_dir), np.radians(dip)
    t_dip = np.array([np.sin(d) * np.cos(g), np.cos(d) * np.cos(g), -np.sin(g)])
    t_az = np.array([np.cos(d), -np.sin(d), 0.0])
    z = rng.standard_normal((draws, 2))
    out = (n + np.radians(sigma_dip_deg) * z[:, :1] * t_dip
           + np.radians(sigma_dip_dir_deg) * np.sin(g) * z[:, 1:] * t_az)
    out[:, 2] = np.abs(out[:, 2])
    return out / np.linalg.norm(out, axis=-1, keepdims=True)


# --------------------------------------------------------------------------- from a table
def slip_from_separations(fault_dip_dir, fault_dip, *, marker_ids=(), marker_dip_dir=(),
                          marker_dip=(), observation=(), obs_trend=(), obs_plunge=(),
                          separation_m=(), sigma_m=(), rake=(), rake_sigma=(), fw_points=None,
                          hw_points=None, piercing_sigma_m=(), piercing_ids=None,
                          sigma_marker_deg=2.0, sigma_fault_deg=2.0, draws=200, seed=0,
                          rules=NETSLIP_RULES):
    """Net slip of one fault from separations, slip directions and piercing points.

    Parameters
    ----------
    fault_dip_dir, fault_dip : float, degrees
    marker_ids : (K,) str, one per separation (rows of the same marker share its attitude)
    marker_dip_dir, marker_dip : (K,) degrees, the marker's attitude on each row
    observation : (K,) str kinds (``strike``, ``dip``, ``vertical``, ``horizontal``, ``section``,
        ``line``; see :func:`parse_observation`); obs_trend, obs_plunge : (K,) degrees for
        ``line``/``section``
    separation_m : (K,) metres, from the footwall marker to the hanging-wall marker along the
        observation direction (signed); sigma_m : (K,) its 1-sigma, metres (> 0)
    rake, rake_sigma : (J,) degrees: slip directions (Aki & Richards rake on this fault) and their
        1-sigma
    fw_points, hw_points : (P, 3) metres, piercing points of the same lines on the footwall and the
        hanging wall; piercing_sigma_m : (P,) 1-sigma of each coordinate, metres
    sigma_marker_deg, sigma_fault_deg : 1-sigma angular errors (per axis) of the marker and fault
        attitudes, degrees
    draws, seed : Monte Carlo draws (0 = none) and seed

    Returns
    -------
    NetSlip

    Examples
    --------
    A horizontal bed with a vertical separation of 10 m (hanging wall down) on a fault dipping 30°,
    with pure dip slip: net slip 20 m, normal (the textbook exercise of references.md).

    >>> r = slip_from_separations(90.0, 30.0, marker_ids=["bed"], marker_dip_dir=[0.0],
    ...     marker_dip=[0.0], observation=["vertical"], separation_m=[-10.0], sigma_m=[0.1],
    ...     rake=[-90.0], rake_sigma=[1.0], draws=0)
    >>> round(r.net_slip_m, 6), r.status, r.sense
    (20.0, 'unique', 'normal')
    """
    check_dip(fault_dip)
    mdd = np.asarray(marker_dip_dir, float).reshape(-1)
    mdp = np.asarray(marker_dip, float).reshape(-1)
    K = mdd.size
    if K:
        check_dip(mdp)
    mids = np.asarray([str(x) for x in marker_ids], dtype=object).reshape(-1)
    kinds = np.asarray([str(x) for x in observation], dtype=object).reshape(-1)
    otr = np.broadcast_to(np.asarray(obs_trend if len(obs_trend) else np.full(K, np.nan), float), (K,))
    opl = np.broadcast_to(np.asarray(obs_plunge if len(obs_plunge) else np.full(K, np.nan), float), (K,))
    S = np.asarray(separation_m, float).reshape(-1)
    sg = np.asarray(sigma_m, float).reshape(-1)
    if not (mids.size == kinds.size == S.size == sg.size == K):
        raise InputError("marker ids, attitudes, observations, separations and sigmas must have one value per separation")
    if K and not np.all(sg > 0):
        raise InputError(f"separation sigma must be > 0 metres, got {float(sg[~(sg > 0)][0])!r}")
    bad = [k for k in kinds if k not in _KIND_CODES]
    if bad:
        raise InputError(f"unknown observation {bad[0]!r}: use one of {', '.join(repr(k) for k in OBSERVATIONS)}")
    lam = np.asarray(rake, float).reshape(-1)
    lsg = np.asarray(rake_sigma, float).reshape(-1)
    J = lam.size
    if lsg.size != J:
        raise InputError("every slip direction needs its sigma (degrees)")
    if J and not (np.all(np.isfinite(lam)) and np.all((lam >= -180) & (lam <= 180))):
        raise AngleError(f"rake must be in [-180, 180] degrees, got {float(lam[~((lam >= -180) & (lam <= 180))][0])!r}")
    if J and not np.all(lsg > 0):
        raise InputError(f"rake sigma must be > 0 degrees, got {float(lsg[~(lsg > 0)][0])!r}")
    fw = np.zeros((0, 3)) if fw_points is None else np.asarray(fw_points, float).reshape(-1, 3)
    hw = np.zeros((0, 3)) if hw_points is None else np.asarray(hw_points, float).reshape(-1, 3)
    P = fw.shape[0]
    if hw.shape[0] != P:
        raise InputError("piercing points come in pairs: one footwall and one hanging-wall point each")
    psg = np.broadcast_to(np.asarray(piercing_sigma_m if len(np.atleast_1d(piercing_sigma_m)) else 1.0, float), (P,))
    pids = [f"piercing {i + 1}" for i in range(P)] if piercing_ids is None else [str(p) for p in piercing_ids]

    rng = np.random.default_rng(seed)
    D = int(max(draws, 0))
    n0 = plane_to_normal(fault_dip_dir, fault_dip)
    nf = np.vstack([n0[None], _perturb_fault(fault_dip_dir, fault_dip, sigma_fault_deg,
                                             sigma_fault_deg, rng, D)]) if D else n0[None]
    # one attitude per marker (its first row's), perturbed once per draw
    groups = list(dict.fromkeys(mids.tolist()))
    notes = []
    gidx = np.array([groups.index(g) for g in mids], dtype=np.intp) if K else np.zeros(0, np.intp)
    mnorm = np.zeros((len(groups), 3))
    for gi, g in enumerate(groups):
        rows = np.flatnonzero(mids == g)
        first = rows[0]
        mnorm[gi] = plane_to_normal(mdd[first], mdp[first])
        for r in rows[1:]:
            if np.degrees(np.arccos(min(1.0, abs(float(plane_to_normal(mdd[r], mdp[r]) @ mnorm[gi]))))) > 0.01:
                raise InputError(f"marker {g!r} has two attitudes ({mdd[first]:g}/{mdp[first]:g} and "
                                 f"{mdd[r]:g}/{mdp[r]:g}): "
                                 "give one attitude per marker, or name the markers apart")
    if D and len(groups):
        mdraw = _perturb_unit(mnorm, np.radians(sigma_marker_deg), rng, D)
        mall = np.concatenate([mnorm[None], mdraw])  # (D+1, G, 3)
    else:
        mall = mnorm[None]
    Sall = np.vstack([S[None], S[None] + rng.standard_normal((D, K)) * sg]) if D else S[None]
    if K:
        obs = observation_vectors(kinds[None, :], otr[None, :], opl[None, :], nf[:, None, :])
    else:
        obs = np.zeros((nf.shape[0], 0, 3))
    mrow = mall[:, gidx, :] if K else np.zeros((nf.shape[0], 0, 3))
    a_s, b_s, sb, ok = separation_rows(nf[:, None, :], mrow, obs, Sall, sg[None, :], rules)
    keep = ok[0] if K else np.zeros(0, bool)
    for k in np.flatnonzero(~keep):
        if not np.all(np.isfinite(obs[0, k])):
            notes.append(f"separation {k + 1} ({mids[k]}, {kinds[k]}): the observation direction is undefined on "
                         "this fault (a section along its strike, or 'horizontal' on a horizontal fault); row not used")
        elif np.linalg.norm(a_s[0, k]) <= rules.min_row_norm:
            notes.append(f"marker {mids[k]} is parallel to the fault: no cutoff line; row not used")
        else:
            notes.append(f"separation {k + 1} ({mids[k]}, {kinds[k]}): the observation line lies in the marker plane, "
                         "so the separation is undefined; row not used")
    a_parts = [a_s[:, keep]]
    b_parts = [b_s[:, keep]]
    s_parts = [sb[0, keep]]
    g_parts = list(mids[keep])
    k_parts = ["marker"] * int(keep.sum())
    d_parts = [np.zeros(int(keep.sum()), bool)]
    if J:
        lall = lam[None] + (rng.standard_normal((D, J)) * lsg if D else np.zeros((0, J)))
        lall = np.vstack([lam[None], lall]) if D else lam[None]
        ad, bd = direction_rows(lall)
        a_parts.append(ad)
        b_parts.append(bd)
        s_parts.append(np.radians(lsg))
        g_parts += ["slip direction"] * J
        k_parts += ["direction"] * J
        d_parts.append(np.ones(J, bool))
    if P:
        pert_fw = fw[None] + (rng.standard_normal((D, P, 3)) * psg[None, :, None] if D else np.zeros((0, P, 3)))
        pert_hw = hw[None] + (rng.standard_normal((D, P, 3)) * psg[None, :, None] if D else np.zeros((0, P, 3)))
        fwa = np.concatenate([fw[None], pert_fw]) if D else fw[None]
        hwa = np.concatenate([hw[None], pert_hw]) if D else hw[None]
        ap, bp, mis = piercing_rows(nf[:, None, :], fwa, hwa)
        a_parts.append(ap.reshape(ap.shape[0], 2 * P, 2))
        b_parts.append(bp.reshape(bp.shape[0], 2 * P))
        s_parts.append(np.repeat(psg * np.sqrt(2.0), 2))
        for i in range(P):
            g_parts += [pids[i]] * 2
            k_parts += ["piercing"] * 2
            d = np.linalg.norm(hw[i] - fw[i])
            ang = np.degrees(np.arcsin(min(1.0, abs(mis[0, i]) / d))) if d > 0 else 0.0
            notes.append(f"{pids[i]}: offset {mis[0, i]:+.2f} m off the fault plane ({ang:.1f} deg), projected onto it")
        d_parts.append(np.zeros(2 * P, bool))
    con = Constraints(
        np.concatenate(a_parts, axis=1), np.concatenate(b_parts, axis=1), np.concatenate(s_parts),
        nf, np.concatenate(d_parts), np.asarray(g_parts, dtype=object), np.asarray(k_parts, dtype=object), notes,
    )
    return solve_net_slip(con, rules)


def slip_from_piercing_points(fault_dip_dir, fault_dip, fw_point, hw_point):
    """Net slip vector of a piercing-point pair: ``hw − fw`` projected onto the fault plane.

    Returns ``(slip (..., 3) metres, misfit_m (...) the dropped normal part (+ into the hanging
    wall), misfit_angle (...) degrees between the offset and the plane)``.

    >>> u, mis, ang = slip_from_piercing_points(90.0, 90.0, [0, 0, 0], [1.0, 0.0, 10.0])
    >>> [round(float(c), 9) + 0.0 for c in u], round(float(mis), 9)
    ([0.0, 0.0, 10.0], 1.0)
    """
    n = plane_to_normal(fault_dip_dir, fault_dip)
    d = np.asarray(hw_point, float) - np.asarray(fw_point, float)
    mis = np.sum(d * n, -1)
    u = d - mis[..., None] * n
    with np.errstate(invalid="ignore", divide="ignore"):
        ang = np.degrees(np.arcsin(np.clip(np.abs(mis) / np.linalg.norm(d, axis=-1), 0.0, 1.0)))
    return u, mis, ang


def cutoff_line(fault_dip_dir, fault_dip, marker_normal):
    """The cutoff line of a marker on a fault: trend, plunge (lower hemisphere) and rake (deg).

    The line ``m × n`` common to the marker and the fault plane, taken downward (a horizontal
    cutoff keeps the strike-ward sense).  Its rake is measured like a slip's, from strike.  NaN
    when the marker is parallel to the fault.
    """
    n = plane_to_normal(fault_dip_dir, fault_dip)
    c = np.cross(np.asarray(marker_normal, float), n)
    length = np.linalg.norm(c, axis=-1)
    c = c / np.maximum(length, 1e-300)[..., None]
    s, _, _ = fault_basis(n)
    flip = np.where(c[..., 2] > 1e-12, -1.0, np.where(np.abs(c[..., 2]) <= 1e-12,
                                                       np.where(np.sum(c * s, -1) < 0, -1.0, 1.0), 1.0))
    c = c * flip[..., None]
    tr, pl = vector_to_line(c)
    rk = vector_to_rake(fault_dip_dir, fault_dip, c)
    bad = length < 1e-9
    return (np.where(bad, np.nan, tr), np.where(bad, np.nan, pl), np.where(bad, np.nan, rk))


# --------------------------------------------------------------------------- from the map
def fit_parallel_planes(points, hanging):
    """Two parallel planes through two point sets that share one orientation, batched.

    Parameters
    ----------
    points : (..., N, 3) metres (NaN rows ignored)
    hanging : (N,) bool, True for hanging-wall points, False for footwall points

    Returns
    -------
    normal : (..., 3) shared unit normal (upward; the eigenvector of the smallest eigenvalue of the
        pooled centred scatter matrices of the two sides)
    c_hw, c_fw : (..., 3) side centroids
    distance : (..., N) signed distance of every point from its side's plane, metres
    eigvals : (..., 3) pooled scatter eigenvalues / N, descending, m²
    """
    p = np.asarray(points, float)
    hw = np.asarray(hanging, bool)
    valid = np.all(np.isfinite(p), axis=-1)
    cent = {}
    S = 0.0
    for key, mask in (("hw", hw), ("fw", ~hw)):
        w = (valid & mask).astype(float)
        cnt = np.maximum(np.sum(w, -1), 1.0)
        q = np.where(w[..., None] > 0, p, 0.0)
        c = np.sum(q, axis=-2) / cnt[..., None]
        d = np.where(w[..., None] > 0, p - c[..., None, :], 0.0)
        S = S + np.einsum("...ni,...nj->...ij", d, d)
        cent[key] = c
    evals, evecs = np.linalg.eigh(S)
    m = evecs[..., :, 0]
    m = m * np.where(m[..., 2:3] < 0, -1.0, 1.0)
    c_side = np.where(hw[:, None], cent["hw"][..., None, :], cent["fw"][..., None, :])
    dist = np.sum((p - c_side) * m[..., None, :], -1)
    n_ok = np.maximum(np.sum(valid, -1), 1)
    return m, cent["hw"], cent["fw"], np.where(valid, dist, np.nan), evals[..., ::-1] / n_ok[..., None]


def contact_noise_variance(grid, xy, normal, sigma_xy_m, sigma_z_m):
    """Expected variance (m²) of the distance of a digitised contact vertex from its marker plane.

    A vertex moved by Gaussian ``sigma_xy_m`` in x and y lands on the DEM at a height changed by
    the slope; its distance from a plane of unit normal ``m`` changes by ``(m_h + m_z ∇z) · δ``,
    so the variance is ``σ_xy² |m_h + m_z ∇z|² + σ_z² m_z²`` (linearised; ∇z by central
    differences of the bilinear DEM over one cell).
    """
    xy = np.asarray(xy, float).reshape(-1, 2)
    m = np.asarray(normal, float)
    h = grid.cell_size
    zx = (sample_bilinear(grid, xy[:, 0] + h / 2, xy[:, 1]) - sample_bilinear(grid, xy[:, 0] - h / 2, xy[:, 1])) / h
    zy = (sample_bilinear(grid, xy[:, 0], xy[:, 1] + h / 2) - sample_bilinear(grid, xy[:, 0], xy[:, 1] - h / 2)) / h
    gx = m[0] + m[2] * np.nan_to_num(zx)
    gy = m[1] + m[2] * np.nan_to_num(zy)
    return sigma_xy_m ** 2 * (gx * gx + gy * gy) + (sigma_z_m * m[2]) ** 2


@dataclass(frozen=True)
class MarkerFit:
    """How one marker was fitted on both sides of one fault (for the ``marker_fits`` layer).

    Angles in degrees, lengths in metres.  ``separation_normal_m`` is ``m · (c_HW − c_FW)`` with
    the upward marker normal (the distance between the two parallel planes; + = the hanging-wall
    marker lies above the footwall marker).  ``strike_separation_m``, ``dip_separation_m`` and
    ``vertical_separation_m`` follow from it (separation equation; from the footwall cutoff to the
    hanging-wall cutoff, + along strike / up-dip / up).  ``misfit_ratio`` is the largest piece's
    rms distance from the plane over what the stated errors explain.
    """

    marker_id: str
    status: str
    dip_dir: float = float("nan")
    dip: float = float("nan")
    dip_lo95: float = float("nan")
    dip_hi95: float = float("nan")
    n_hw: int = 0
    n_fw: int = 0
    hw_pieces: str = ""
    fw_pieces: str = ""
    dropped_pieces: str = ""
    rms_m: float = float("nan")
    misfit_ratio: float = float("nan")
    separation_normal_m: float = float("nan")
    separation_sigma_m: float = float("nan")
    strike_separation_m: float = float("nan")
    dip_separation_m: float = float("nan")
    vertical_separation_m: float = float("nan")
    cutoff_trend: float = float("nan")
    cutoff_plunge: float = float("nan")
    cutoff_rake: float = float("nan")
    note: str = ""
    geometry: list = field(default_factory=list)
    cutoff_xy: tuple = (float("nan"), float("nan"))
    c_hw: tuple | None = None
    c_fw: tuple | None = None


def trace_distance(xy, trace_parts):
    """Map distance (m) from points (M, 2) to a trace given as one (n, 2) array or a list of parts."""
    parts = [trace_parts] if isinstance(trace_parts, np.ndarray) else list(trace_parts)
    xy = np.asarray(xy, float).reshape(-1, 2)
    return np.min([distance_to_polyline(xy, np.asarray(p, float).reshape(-1, 2)) for p in parts], axis=0)


def _piece_selection(trace_xy, pieces_xy, reach_m, window_m):
    """Pieces that reach within ``reach_m`` of the trace; their vertices within ``window_m``."""
    out = []
    for i, xy in enumerate(pieces_xy):
        xy = np.asarray(xy, float).reshape(-1, 2)
        if xy.shape[0] == 0:
            continue
        dist = trace_distance(xy, trace_xy)
        if not dist.min() <= reach_m:
            continue
        sel = dist <= window_m
        if sel.sum() >= 2:
            out.append((i, sel, xy[int(np.argmin(dist))]))
    return out


def mean_slip_direction(dip_dir, dip, slip_units, rules=NETSLIP_RULES):
    """Mean rake (deg) and 1-sigma (deg) of slip unit vectors (N, 3) on a plane.

    The vectors are projected onto the plane (those more than ``rules.max_station_misfit`` off it
    are left out); the mean is the direction of the summed in-plane unit vectors and the sigma
    their circular standard deviation ``sqrt(−2 ln R̄)`` (Mardia & Jupp 2000, *Directional
    Statistics*), or ``rules.station_sigma_default`` with fewer than ``rules.station_min_count``
    data.  Returns ``(rake, sigma, n_used, n_rejected)``; NaN rake when none is usable.
    """
    v = np.asarray(slip_units, float).reshape(-1, 3)
    if v.shape[0] == 0:
        return float("nan"), float("nan"), 0, 0
    n = plane_to_normal(dip_dir, dip)
    v = v / np.linalg.norm(v, axis=-1, keepdims=True)
    off = np.degrees(np.arcsin(np.clip(np.abs(v @ n), 0, 1)))
    use = np.isfinite(off) & (off <= rules.max_station_misfit)
    if not np.any(use):
        return float("nan"), float("nan"), 0, int(v.shape[0])
    lam = np.radians(np.atleast_1d(vector_to_rake(dip_dir, dip, v[use])))
    C, S = np.mean(np.cos(lam)), np.mean(np.sin(lam))
    R = np.hypot(C, S)
    mean = float(np.degrees(np.arctan2(S, C)))
    mean = 180.0 if mean <= -180.0 else mean
    k = int(use.sum())
    if k >= rules.station_min_count:
        sigma = float(np.degrees(np.sqrt(max(-2.0 * np.log(max(R, 1e-12)), 0.0))))
        sigma = max(sigma, 0.5)
    else:
        sigma = float(rules.station_sigma_default)
    return mean, sigma, k, int(v.shape[0] - k)


def slip_from_contacts(fault_dip_dir, fault_dip, fault_point, trace_xy, pieces_xy, piece_marker,
                       piece_ids, grid, *, dip_interval=None, dip_dir_interval=None,
                       window_m=1000.0, reach_m=100.0, sigma_xy_m=5.0, sigma_z_m=2.0,
                       marker_attitudes=None, sigma_attitude_deg=2.0, slip_rake=None,
                       slip_rake_sigma=None, slip_label="slip direction", draws=200, seed=0,
                       rules=NETSLIP_RULES):
    """Net slip of one fault from mapped marker contacts over a DEM (issue 4, "from the map").

    Method:

    1. The marker pieces that come within ``reach_m`` (map distance) of the fault trace are its
       cut-off pieces; their vertices within ``window_m`` of the trace are used (a window keeps the
       fit local, where the blocks are most nearly rigid).
    2. Each vertex is lifted onto the DEM (bilinear).  A piece is in the hanging wall when its
       points lie above the fitted fault plane (for a vertical plane: on the ``dip_dir`` side); a
       piece with more than 20 % of its points on each side is set aside (it straddles the plane).
    3. Each marker's pieces are fitted as two parallel planes (one per side,
       :func:`fit_parallel_planes`) unless its attitude is given in ``marker_attitudes``; a piece that
       fits much worse than the digitising errors explain and than the other pieces is set aside
       (``NetSlipRules.piece_misfit_*``) and the fit is repeated.
    4. Each marker gives ``m · u = m · (c_HW − c_FW)``; its 1-sigma is linearised from the
       residuals and the spread of the points (centroid errors plus the tilt of the planes about
       their centroids).  A slip direction (``slip_rake`` with sigma, e.g. the mean of slickenline
       stations) adds a row.  Everything is solved by :func:`solve_net_slip`.
    5. Monte Carlo: each draw moves every used vertex by Gaussian ``sigma_xy_m`` in x and y,
       re-samples the DEM, adds ``sigma_z_m``, re-fits the markers, tilts the fault plane within
       its 95 % intervals (1-sigma = interval width / 3.92) and perturbs the slip direction.

    Parameters
    ----------
    fault_dip_dir, fault_dip : degrees; fault_point : (3,) metres, a point on the plane
    trace_xy : (n, 2) the mapped fault trace (metres), or a list of such parts
    pieces_xy : list of (n_i, 2) marker contact pieces; piece_marker, piece_ids : their marker and
        piece identifiers (str)
    grid : Grid, the DEM (metres)
    dip_interval, dip_dir_interval : (lo, hi) degrees, the fault's 95 % intervals (optional)
    marker_attitudes : dict marker -> (dip_dir, dip) degrees, optional: attitudes given (e.g. the
        mean of bedding readings) instead of fitted; perturbed by ``sigma_attitude_deg`` (1-sigma per
        axis) in the draws

    Returns
    -------
    (NetSlip, list of MarkerFit)
    """
    rng = np.random.default_rng(seed)
    D = int(max(draws, 0))
    if isinstance(trace_xy, np.ndarray):
        trace_xy = [trace_xy]
    trace_xy = [np.asarray(p, float).reshape(-1, 2) for p in trace_xy]
    nf0 = plane_to_normal(fault_dip_dir, fault_dip)
    c0 = np.asarray(fault_point, float)
    sd_dip = sd_dd = 0.0
    if dip_interval is not None and np.all(np.isfinite(dip_interval)):
        sd_dip = max(float(dip_interval[1]) - float(dip_interval[0]), 0.0) / 3.92
    if dip_dir_interval is not None and np.all(np.isfinite(dip_dir_interval)):
        sd_dd = float((float(dip_dir_interval[1]) - float(dip_dir_interval[0])) % 360.0) / 3.92
    nf = np.vstack([nf0[None], _perturb_fault(fault_dip_dir, fault_dip, sd_dip, sd_dd, rng, D)]) if D else nf0[None]
    markers = list(dict.fromkeys(str(m) for m in piece_marker))
    sel = _piece_selection(trace_xy, pieces_xy, reach_m, window_m)
    fits = []
    rows_a, rows_b, rows_s, groups, kinds, isd = [], [], [], [], [], []
    notes = []
    for mk in markers:
        cand = [(i, s_, end) for i, s_, end in sel if str(piece_marker[i]) == mk]
        if not cand:
            continue
        pts, side, pid_of, used = [], [], [], []
        geoms = {}
        skipped = []
        for i, s_, end in cand:
            xy = np.asarray(pieces_xy[i], float).reshape(-1, 2)[s_]
            z = sample_bilinear(grid, xy[:, 0], xy[:, 1])
            ok = np.isfinite(z)
            if ok.sum() < 2:
                skipped.append(f"{piece_ids[i]} (off the DEM)")
                continue
            p = np.column_stack([xy[ok], z[ok]])
            sdist = (p - c0) @ nf0
            frac = float(np.mean(sdist > 0))
            if 0.2 < frac < 0.8:
                skipped.append(f"{piece_ids[i]} (straddles the fault plane)")
                continue
            pts.append(p)
            side.append(np.full(p.shape[0], frac >= 0.5))
            pid_of.append(np.full(p.shape[0], len(used)))
            used.append((i, frac >= 0.5, end))
            geoms[len(used) - 1] = xy[ok]
        has_hw = any(h for _, h, _ in used)
        has_fw = any(not h for _, h, _ in used)
        if not (has_hw and has_fw):
            which = "hanging wall" if not has_hw else "footwall"
            fits.append(MarkerFit(mk, "one side only", note=f"no {mk} piece reaches the trace on the {which} side"
                                  + (f"; set aside: {', '.join(skipped)}" if skipped else ""),
                                  hw_pieces=", ".join(str(piece_ids[i]) for i, h, _ in used if h),
                                  fw_pieces=", ".join(str(piece_ids[i]) for i, h, _ in used if not h)))
            continue
        P = np.vstack(pts)
        hw = np.concatenate(side)
        pid = np.concatenate(pid_of)
        active = np.ones(len(used), bool)
        given = None
        if marker_attitudes is not None and mk in marker_attitudes:
            given = plane_to_normal(*marker_attitudes[mk])
        while True:
            act_pts = active[pid]
            if given is None:
                m, chw, cfw, dist, ev = fit_parallel_planes(P[act_pts], hw[act_pts])
            else:
                m = np.asarray(given, float) / np.linalg.norm(given)
                m = m * (1.0 if m[2] >= 0 else -1.0)
                chw = P[act_pts & hw].mean(0)
                cfw = P[act_pts & ~hw].mean(0)
                cs = np.where(hw[act_pts][:, None], chw, cfw)
                dist = (P[act_pts] - cs) @ m
            var = contact_noise_variance(grid, P[act_pts][:, :2], m, sigma_xy_m, sigma_z_m)
            ratios = np.full(len(used), np.nan)
            rms_p = np.full(len(used), np.nan)
            ids_act = pid[act_pts]
            for k in np.flatnonzero(active):
                sk = ids_act == k
                rms_p[k] = float(np.sqrt(np.mean(dist[sk] ** 2)))
                ratios[k] = rms_p[k] / max(float(np.sqrt(np.mean(var[sk]))), 1e-3)  # 1 mm floor
            med = float(np.nanmedian(ratios[active]))
            worst = int(np.nanargmax(np.where(active, ratios, -np.inf)))
            bad = (ratios[worst] > rules.piece_misfit_max and
                   ratios[worst] > rules.piece_misfit_median_factor * med)
            same_side = [k for k in np.flatnonzero(active) if used[k][1] == used[worst][1] and k != worst]
            if bad and same_side:
                active[worst] = False
                skipped.append(f"{piece_ids[used[worst][0]]} (misfit {ratios[worst]:.1f} x the stated errors)")
                continue
            break
        act_pts = active[pid]
        Pa, hwa = P[act_pts], hw[act_pts]
        dist_a = dist
        n_hw, n_fw = int(hwa.sum()), int((~hwa).sum())
        resid_var = float(np.sum(dist_a ** 2) / max(Pa.shape[0] - 4, 1))
        # linearised 1-sigma of b = m . (c_hw - c_fw): centroid errors + tilt of the planes about
        # their centroids (from the fit's eigenvalues, or the given attitude's sigma)
        dc = chw - cfw
        if given is None:
            ca = np.where(hwa[:, None], Pa - chw, Pa - cfw)
            ev_, evec = np.linalg.eigh(ca.T @ ca)
            tilt_var = resid_var * sum((float(dc @ evec[:, j]) ** 2) / max(ev_[j], 1e-9) for j in (1, 2))
        else:
            tilt_var = float(np.sum((dc - (dc @ m) * m) ** 2)) * np.radians(sigma_attitude_deg) ** 2
        sig_b = float(np.sqrt(resid_var * (1.0 / n_hw + 1.0 / n_fw) + tilt_var))
        b0 = float(m @ dc)
        # Monte Carlo of the marker fit: move the vertices, re-sample the DEM
        xy_a = Pa[:, :2]
        if D:
            jig = xy_a[None] + rng.standard_normal((D,) + xy_a.shape) * sigma_xy_m
            zz = sample_bilinear(grid, jig[..., 0], jig[..., 1]) + rng.standard_normal(jig.shape[:2]) * sigma_z_m
            Pd = np.concatenate([jig, zz[..., None]], axis=-1)
            if given is None:
                md, chd, cfd, _, _ = fit_parallel_planes(Pd, hwa)
                md = md * np.where(np.sum(md * m, -1) < 0, -1.0, 1.0)[:, None]
            else:
                w_h = hwa.astype(float)
                chd = np.nansum(Pd * w_h[None, :, None], 1) / w_h.sum()
                cfd = np.nansum(Pd * (1 - w_h)[None, :, None], 1) / (1 - w_h).sum()
                md = _perturb_unit(m, np.radians(sigma_attitude_deg), rng, D)
            m_all = np.vstack([m[None], md])
            b_all = np.concatenate([[b0], np.sum(md * (chd - cfd), -1)])
        else:
            m_all = m[None]
            b_all = np.array([b0])
        s_all, e_all, _ = fault_basis(nf)
        a_row = np.stack([np.sum(m_all * s_all, -1), np.sum(m_all * e_all, -1)], -1)
        dd_m, dp_m = normal_to_plane(m)
        ms = float(m @ s_all[0])
        me = float(m @ e_all[0])
        tr, pl, rk = cutoff_line(fault_dip_dir, fault_dip, m)
        lo = hi = float("nan")
        if D and given is None:
            dps = np.degrees(np.arccos(np.clip(np.abs(md[:, 2]), 0, 1)))
            lo, hi = (float(q) for q in np.percentile(dps, (2.5, 97.5)))
        note = ""
        if skipped:
            note = "set aside: " + ", ".join(skipped)
        worst_ratio = float(np.nanmax(ratios[active]))
        if worst_ratio > rules.piece_misfit_max:
            note = (note + "; " if note else "") + (
                f"poor marker fit: a piece lies {worst_ratio:.1f} x farther from the plane than the stated errors explain")
        status = "fitted" if given is None else "given attitude"
        if np.linalg.norm(a_row[0]) <= rules.min_row_norm:
            status = "parallel to fault"
        cut = np.mean([used[k][2] for k in np.flatnonzero(active)], axis=0)
        fits.append(MarkerFit(
            mk, status, float(dd_m), float(dp_m), lo, hi, n_hw, n_fw,
            ", ".join(str(piece_ids[used[k][0]]) for k in np.flatnonzero(active) if used[k][1]),
            ", ".join(str(piece_ids[used[k][0]]) for k in np.flatnonzero(active) if not used[k][1]),
            ", ".join(skipped), float(np.sqrt(np.mean(dist_a ** 2))), worst_ratio, b0, sig_b,
            b0 / ms if abs(ms) > 1e-9 else float("nan"), b0 / me if abs(me) > 1e-9 else float("nan"),
            b0 / m[2] if abs(m[2]) > 1e-9 else float("nan"), float(tr), float(pl), float(rk), note,
            [geoms[k] for k in np.flatnonzero(active)], (float(cut[0]), float(cut[1])),
            tuple(float(v) for v in chw), tuple(float(v) for v in cfw),
        ))
        if status == "parallel to fault":
            notes.append(f"{mk} is parallel to the fault: no cutoff line")
            continue
        if worst_ratio > rules.piece_misfit_max:
            notes.append(f"{mk}: poor marker fit (misfit {worst_ratio:.1f})")
        rows_a.append(a_row)
        rows_b.append(b_all)
        rows_s.append(sig_b)
        groups.append(mk)
        kinds.append("marker")
        isd.append(False)
    if slip_rake is not None and np.isfinite(slip_rake):
        lam = float(slip_rake) + (rng.standard_normal(D) * float(slip_rake_sigma) if D else np.zeros(0))
        ad, bd = direction_rows(np.concatenate([[float(slip_rake)], np.atleast_1d(lam)]))
        rows_a.append(ad)
        rows_b.append(bd)
        rows_s.append(np.radians(float(slip_rake_sigma)))
        groups.append(slip_label)
        kinds.append("direction")
        isd.append(True)
    if rows_a:
        a = np.stack(rows_a, axis=1)
        b = np.stack(rows_b, axis=1)
    else:
        a = np.zeros((nf.shape[0], 0, 2))
        b = np.zeros((nf.shape[0], 0))
    con = Constraints(a, b, np.asarray(rows_s, float), nf, np.asarray(isd, bool),
                      np.asarray(groups, dtype=object), np.asarray(kinds, dtype=object), notes)
    return solve_net_slip(con, rules), fits


__all__ += ["INTERVAL_FIELDS"]

"""Slip vectors on fault planes: rake, components, sense words, fault type, P/T/B axes (numpy only).

Conventions (CONVENTIONS.md):

* The slip vector is the displacement of the **hanging wall relative to the footwall**; for a
  vertical fault the "hanging wall" is the block on the ``dip_dir`` side.
* Rake (Aki & Richards 1980, *Quantitative Seismology*) is the angle in the fault plane from the
  right-hand-rule strike direction ``s`` to the slip vector, in (−180, 180]: +90 reverse, −90
  normal, 0 sinistral (left-lateral), ±180 dextral (right-lateral).  Slip unit vector
  ``u = cos λ · s + sin λ · e`` with ``e`` the up-dip unit vector (``e = −dip vector``).
* Components in metres: ``strike_slip_m = U·s`` (+ = sinistral), ``dip_slip_m = U·e``
  (+ = up-dip = reverse), ``throw_m = U_up`` (+ = hanging wall up), ``heave_m`` = |horizontal
  component perpendicular to strike| (unsigned; ``heave_signed_m`` is + for extension, i.e. the
  hanging wall moving away from the footwall horizontally, toward the dip direction).

Vectors are ``(..., 3)`` arrays (east, north, up); angles in degrees.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .orientation import dip_vector, normalize_azimuth, plane_to_normal, strike_vector, vector_to_line

__all__ = [
    "SenseRules",
    "SENSE_RULES",
    "plane_basis",
    "rake_to_vector",
    "vector_to_rake",
    "slip_components",
    "sense_words",
    "fault_type",
    "pt_axes",
]


@dataclass(frozen=True)
class SenseRules:
    """Thresholds of the sense words and fault types: the one place they live.

    * ``pure_deg`` (22.5): a slip within this angle of pure dip-slip (rake ±90) or pure strike-slip
      (rake 0/180) gets a single word; otherwise two words, the dominant component first
      (octant bins; common practice).
    * ``thrust_max_dip`` (45): a reverse(-dominant) fault dipping at most this is a thrust
      (common practice: "thrust = reverse on a low-angle plane"; some authors use 30°).
    * ``min_slip_m`` (0): slips at or below this magnitude are "none" (an unknown, NaN,
      magnitude gives ``""``, not "none").

    Reading field data (:func:`slipsense.core.kinematics.slip_from_measurements`):

    * ``misfit_tol_deg`` (20): a lineation at most this far off its measured fault plane is
      projected onto the plane; a larger misfit is rejected.  Judgement (common practice): compass
      readings of a plane and of a lineation each carry a few degrees of error and fault surfaces
      undulate, so misfits up to about 10° are routine; 20° leaves room for that and still rejects
      a lineation that cannot belong to the plane (a mis-read or mis-recorded pair).
    * ``sense_min_deg`` (10): a sense word can only pick the end of a lineation (or be checked
      against a rake) when the component it speaks of is clear: a dip-slip word (normal, reverse)
      needs the lineation at least this far from the strike line, a strike-slip word (dextral,
      sinistral) at least this far from the dip line, and a hanging-wall motion azimuth a line at
      least this far from vertical and from the horizontal perpendicular to that azimuth.
      Judgement: about twice a typical compass error.
    * ``motion_azimuth_max_deg`` (45): a hanging-wall motion azimuth more than this from the
      trend of the slip it selects contradicts the lineation (judgement).
    """

    pure_deg: float = 22.5
    thrust_max_dip: float = 45.0
    min_slip_m: float = 0.0
    misfit_tol_deg: float = 20.0
    sense_min_deg: float = 10.0
    motion_azimuth_max_deg: float = 45.0


SENSE_RULES = SenseRules()


def plane_basis(dip_dir, dip):
    """Strike ``s``, up-dip ``e`` and upward normal ``n`` unit vectors (..., 3) of planes.

    ``(s, e, n)`` is right-handed for a non-vertical plane: ``s × e = n``.
    """
    dip_dir = np.asarray(dip_dir, dtype=float)
    dip = np.asarray(dip, dtype=float)
    s = strike_vector(dip_dir) * np.ones(np.broadcast(dip_dir, dip).shape)[..., None]
    e = -dip_vector(dip_dir, dip)
    n = plane_to_normal(dip_dir, dip)
    return s, e, n


def rake_to_vector(dip_dir, dip, rake):
    """Unit hanging-wall slip vectors (..., 3) of planes ``dip_dir``/``dip`` with ``rake`` (deg).

    >>> rake_to_vector(90.0, 60.0, -90.0).round(6).tolist()   # normal slip, down the dip
    [0.5, 0.0, -0.866025]
    """
    s, e, _ = plane_basis(dip_dir, dip)
    lam = np.radians(np.asarray(rake, dtype=float))[..., None]
    return np.cos(lam) * s + np.sin(lam) * e


def vector_to_rake(dip_dir, dip, vector):
    """Rake (degrees, (−180, 180]) of a slip vector after projecting it into the plane.

    Returns NaN for a vector normal to the plane (no in-plane part).
    """
    s, e, n = plane_basis(dip_dir, dip)
    v = np.asarray(vector, dtype=float)
    a = np.sum(v * s, axis=-1)
    b = np.sum(v * e, axis=-1)
    inplane = np.hypot(a, b)
    total = np.linalg.norm(v, axis=-1)
    rake = np.degrees(np.arctan2(b, a))
    rake = np.where(rake <= -180.0, 180.0, rake) + 0.0  # + 0.0: no "-0.0" rakes
    with np.errstate(invalid="ignore"):
        bad = ~(inplane > 1e-12 * np.maximum(total, 1e-300))
    out = np.where(bad, np.nan, rake)
    return float(out) if np.ndim(out) == 0 else out


def slip_components(dip_dir, dip, slip_m):
    """Components of slip vectors ``slip_m`` (..., 3) metres (east, north, up) on planes.

    The vector is used as given (it should lie in the plane; project it first if it does not).

    Returns
    -------
    dict of arrays: ``net_slip_m``, ``strike_slip_m`` (+ sinistral), ``dip_slip_m`` (+ reverse),
    ``throw_m`` (+ hanging wall up), ``heave_m`` (unsigned), ``heave_signed_m`` (+ extension),
    ``horizontal_slip_m`` (map offset of a point), ``slip_e``, ``slip_n``, ``slip_u``, ``rake``,
    ``slip_trend`` (azimuth of the horizontal part of the motion) and ``slip_plunge`` (degrees,
    + downward, − when the hanging wall moved up).
    """
    s, e, n = plane_basis(dip_dir, dip)
    u = np.asarray(slip_m, dtype=float)
    dd = np.radians(np.asarray(dip_dir, dtype=float))
    dh = np.stack([np.sin(dd), np.cos(dd), np.zeros_like(dd)], axis=-1)
    net = np.linalg.norm(u, axis=-1)
    horiz = np.hypot(u[..., 0], u[..., 1])
    heave_s = np.sum(u * dh, axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        plunge = np.degrees(np.arcsin(np.clip(-u[..., 2] / net, -1.0, 1.0)))
    trend = np.asarray(normalize_azimuth(np.degrees(np.arctan2(u[..., 0], u[..., 1]))))  # < 360
    trend = np.where(horiz < 1e-12, 0.0, trend)
    return {
        "net_slip_m": net,
        "strike_slip_m": np.sum(u * s, axis=-1),
        "dip_slip_m": np.sum(u * e, axis=-1),
        "throw_m": u[..., 2],
        "heave_m": np.abs(heave_s),
        "heave_signed_m": heave_s,
        "horizontal_slip_m": horiz,
        "slip_e": u[..., 0],
        "slip_n": u[..., 1],
        "slip_u": u[..., 2],
        "rake": vector_to_rake(dip_dir, dip, u),
        "slip_trend": trend,
        "slip_plunge": np.where(net > 0, plunge, np.nan),
    }


def _words(rake, rules):
    r = float(rake)
    dip_part = "reverse" if r > 0 else "normal"
    strike_part = "sinistral" if abs(r) < 90 else "dextral"
    from_dip = abs(abs(r) - 90.0)          # 0 = pure dip-slip
    from_strike = min(abs(r), 180.0 - abs(r))  # 0 = pure strike-slip
    if from_dip <= rules.pure_deg:
        return dip_part, None
    if from_strike <= rules.pure_deg:
        return strike_part, None
    if from_dip < from_strike:
        return dip_part, strike_part
    return strike_part, dip_part


def sense_words(rake, net_slip_m=None, rules=SENSE_RULES):
    """The ``sense`` field in words, dominant component first.

    ``normal``, ``reverse``, ``dextral``, ``sinistral`` or two of them joined by a hyphen
    (``normal-dextral``: mainly normal with a dextral part), ``none`` for zero slip and ``""`` for
    a NaN rake or a NaN (unknown) magnitude.  When both components are equally far from pure
    (|rake| 45 or 135) the strike-slip word comes first.  Thresholds: :class:`SenseRules`.

    >>> sense_words(-90.0), sense_words(-45.0 - 20.0), sense_words(170.0)
    ('normal', 'normal-sinistral', 'dextral')
    """
    r = np.atleast_1d(np.asarray(rake, dtype=float))
    mags = None if net_slip_m is None else np.broadcast_to(np.asarray(net_slip_m, float), r.shape)
    out = []
    for i, v in enumerate(r.ravel()):
        if not np.isfinite(v) or (mags is not None and not np.isfinite(mags.ravel()[i])):
            out.append("")
        elif mags is not None and not (mags.ravel()[i] > rules.min_slip_m):
            out.append("none")
        else:
            a, b = _words(v, rules)
            out.append(a if b is None else f"{a}-{b}")
    res = np.array(out, dtype=object).reshape(r.shape)
    return res.item() if np.ndim(rake) == 0 else res


def fault_type(rake, dip, net_slip_m=None, rules=SENSE_RULES):
    """Fault type in words from rake and dip.

    ``normal``, ``reverse``, ``thrust`` (reverse on a plane dipping ≤ ``thrust_max_dip``),
    ``dextral strike-slip``, ``sinistral strike-slip``, or ``oblique <a>-<b>`` with the dominant
    component first (``oblique normal-dextral``, ``oblique thrust-sinistral``); ``none`` and
    ``""`` as in :func:`sense_words`.

    >>> fault_type(95.0, 27.0), fault_type(142.0, 70.0)
    ('thrust', 'oblique dextral-reverse')
    """
    r = np.atleast_1d(np.asarray(rake, dtype=float))
    d = np.broadcast_to(np.asarray(dip, dtype=float), r.shape)
    mags = None if net_slip_m is None else np.broadcast_to(np.asarray(net_slip_m, float), r.shape)
    out = []
    for i, v in enumerate(r.ravel()):
        if not np.isfinite(v) or (mags is not None and not np.isfinite(mags.ravel()[i])):
            out.append("")
            continue
        if mags is not None and not (mags.ravel()[i] > rules.min_slip_m):
            out.append("none")
            continue
        a, b = _words(v, rules)
        low = d.ravel()[i] <= rules.thrust_max_dip
        a = "thrust" if (a == "reverse" and low) else a
        b = "thrust" if (b == "reverse" and low) else b
        if b is None:
            out.append(f"{a} strike-slip" if a in ("dextral", "sinistral") else a)
        else:
            out.append(f"oblique {a}-{b}")
    res = np.array(out, dtype=object).reshape(r.shape)
    return res.item() if np.ndim(rake) == 0 else res


def pt_axes(dip_dir, dip, slip_unit):
    """P, T and B kinematic axes of fault-slip data (Marrett & Allmendinger 1990).

    With ``n`` the normal pointing into the hanging wall (the upward normal; for a vertical plane
    the one toward ``dip_dir``) and ``u`` the unit hanging-wall slip, ``T ∝ n + u``,
    ``P ∝ n − u`` and ``B = n × u`` (Marrett & Allmendinger 1990, "Kinematic analysis of
    fault-slip data", J. Struct. Geol. 12(8)).

    Returns
    -------
    dict with ``p_trend``, ``p_plunge``, ``t_trend``, ``t_plunge``, ``b_trend``, ``b_plunge``
    (degrees, lower hemisphere) and the unit vectors ``p``, ``t``, ``b`` (..., 3).
    """
    n = plane_to_normal(dip_dir, dip)
    u = np.asarray(slip_unit, dtype=float)
    u = u / np.linalg.norm(u, axis=-1, keepdims=True)
    t = n + u
    p = n - u
    b = np.cross(n, u)
    # Unit axes even when u is not exactly in the plane (then n + u and n - u are not of length √2).
    t, p, b = (v / np.linalg.norm(v, axis=-1, keepdims=True) for v in (t, p, b))
    out = {"p": p, "t": t, "b": b}
    for name, v in (("p", p), ("t", t), ("b", b)):
        tr, pl = vector_to_line(v)
        out[f"{name}_trend"] = tr
        out[f"{name}_plunge"] = pl
    return out

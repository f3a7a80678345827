"""Stress: Andersonian faulting, stress tensors, fault-slip inversion, regime, tendencies (numpy only).

Conventions (CONVENTIONS.md), stated once here:

* **Compression positive** (geological convention); principal stresses σ1 ≥ σ2 ≥ σ3; stress ratio
  ``φ = (σ2 − σ3)/(σ1 − σ3)`` in [0, 1].  Effective stress = total stress − pore pressure.
* Tensors are ``(..., 3, 3)`` arrays in the (east, north, up) frame, in MPa unless called
  *reduced* (σ1 = 1, σ3 = 0, σ2 = φ; dimensionless).  Principal *axes* are ``(..., 3, 3)`` arrays
  whose rows ``axes[..., k, :]`` are the unit vectors of σ(k+1).  Lines are trend/plunge degrees
  (lower hemisphere).  Gradients are MPa per km of depth below the ground surface; depths metres.
* A fault-slip datum is a plane normal ``n`` **pointing into the hanging wall** (the upward normal
  of :func:`~slipsense.core.orientation.plane_to_normal`; for a vertical plane the one toward its
  ``dip_dir``) and the unit **hanging-wall slip** ``u`` (the hanging wall's motion relative to the
  footwall).
* **Wallace–Bott sign.**  Slip parallels the resolved shear traction (Wallace 1951, *J. Geol.* 59;
  Bott 1959, *Geol. Mag.* 96).  With compression positive the hanging wall moves along the shear
  part of ``σ · n_fw``, where ``n_fw = −n`` points from the hanging wall into the footwall:
  ``u ∥ τ = σ n_fw − (n_fw · σ n_fw) n_fw``.  (The hanging wall is pushed by the footwall with the
  traction ``−σ n_fw`` in tension-positive terms; when friction gives way the hanging wall moves
  opposite to the shear it was held by.)  Checks, in the tests: σ1 vertical gives normal slip on
  a 60° plane, σ1 horizontal across strike gives reverse slip on a 30° plane.

Only numpy is imported.  Functions broadcast over leading axes where that is natural; the
inversion works on one data set at a time and is vectorised over its bootstrap resamples.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import DataError, InputError
from .orientation import line_to_vector, normal_to_plane, vector_to_line
from .slip import SENSE_RULES, vector_to_rake

__all__ = [
    "BYERLEE_FRICTION",
    "AndersonAngles",
    "AndersonRules",
    "ANDERSON_RULES",
    "anderson_angles",
    "check_friction",
    "conjugate_planes",
    "driving_axes",
    "anderson_check",
    "check_principal",
    "check_phi",
    "orthonormal_axes",
    "axes_from_lines",
    "tensor_from_principal",
    "reduced_tensor",
    "principal_stresses",
    "axes_to_lines",
    "andersonian_axes",
    "frictional_limit_ratio",
    "StressState",
    "principal_state",
    "gradient_state",
    "inverted_state",
    "resolve_traction",
    "misfit_angles",
    "InversionRules",
    "INVERSION_RULES",
    "StressInversion",
    "invert_stress",
    "RightDihedra",
    "right_dihedra",
    "REGIMES",
    "stress_regime",
    "regime_code",
    "shmax_azimuth",
    "ReactivationRules",
    "REACTIVATION_RULES",
    "fault_reactivation",
]

#: Default friction coefficient (Byerlee 1978, "Friction of rocks", Pure Appl. Geophys. 116:
#: 0.6–0.85 for most crustal rocks; 0.6 the usual screening value).
BYERLEE_FRICTION = 0.6

_EPS = 1e-12


def _unit(v):
    v = np.asarray(v, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        return v / np.linalg.norm(v, axis=-1, keepdims=True)


def _dot(a, b):
    return np.einsum("...i,...i->...", a, b)


def _axial_angle(a, b):
    """Angle (degrees, 0–90) between unit vectors taken as axes."""
    cross = np.linalg.norm(np.cross(a, b), axis=-1)
    return np.degrees(np.arctan2(cross, np.abs(_dot(a, b))))


def _scalar(x):
    x = np.asarray(x)
    return float(x) if x.ndim == 0 else x


# ============================================================================ Andersonian faulting


def check_friction(friction):
    """Return the friction coefficient as a float; raise unless it is finite and in (0, 5]."""
    mu = float(friction)
    if not (np.isfinite(mu) and 0.0 < mu <= 5.0):
        raise InputError(f"friction coefficient must be in (0, 5], got {friction!r} (usual range 0.6-0.85)")
    return mu


@dataclass(frozen=True)
class AndersonAngles:
    """Fault angles predicted by Anderson's theory of faulting for one friction coefficient.

    Attributes (degrees except ``friction``)
    ----------------------------------------
    friction : μ
    friction_angle : φf = arctan μ
    theta : angle between the fault and σ1, θ = 45° − φf/2 (the fault normal is at 90° − θ)
    normal_dip : 90° − θ (σ1 vertical)
    thrust_dip : θ (σ3 vertical)
    strike_slip_dip : 90 (σ2 vertical)
    conjugate_angle : 2θ, the acute angle between the two conjugate planes, bisected by σ1
    """

    friction: float
    friction_angle: float
    theta: float
    normal_dip: float
    thrust_dip: float
    strike_slip_dip: float
    conjugate_angle: float

    def __post_init__(self):
        check_friction(self.friction)
        if not 0.0 < self.theta < 45.0:
            raise InputError(f"theta must be in (0, 45) degrees, got {self.theta!r}")


def anderson_angles(friction=BYERLEE_FRICTION):
    """Andersonian fault angles for friction coefficient ``friction`` (Coulomb criterion).

    Notes
    -----
    A cohesionless Coulomb fault forms at θ = 45° − φf/2 to σ1 with μ = tan φf, in the plane of
    σ1 and σ3; with one principal stress vertical (the free surface) normal faults dip 90° − θ,
    thrusts θ and strike-slip faults are vertical (Anderson 1951, *The Dynamics of Faulting*).

    >>> a = anderson_angles(0.6)
    >>> round(a.theta, 3), round(a.normal_dip, 3), round(a.thrust_dip, 3)
    (29.518, 60.482, 29.518)
    """
    mu = check_friction(friction)
    phi_f = np.degrees(np.arctan(mu))
    theta = 45.0 - phi_f / 2.0
    return AndersonAngles(mu, float(phi_f), float(theta), float(90.0 - theta), float(theta), 90.0,
                          float(2.0 * theta))


def conjugate_planes(sigma1, sigma3, friction=BYERLEE_FRICTION):
    """The conjugate pair of Coulomb planes of a stress state: dip_dir, dip arrays (..., 2).

    Both planes contain σ2 and lie at θ (:func:`anderson_angles`) either side of σ1.  Their
    normals are ``sin θ · σ1 ± cos θ · σ3``.

    Parameters
    ----------
    sigma1, sigma3 : (..., 3) unit vectors (east, north, up), orthogonal
    """
    th = np.radians(anderson_angles(friction).theta)
    s1 = _unit(sigma1)
    s3 = _unit(sigma3)
    n = np.stack([np.sin(th) * s1 + np.cos(th) * s3, np.sin(th) * s1 - np.cos(th) * s3], axis=-2)
    return normal_to_plane(n)


def driving_axes(normals, slips, friction=BYERLEE_FRICTION):
    """Principal stress axes that would drive slip ``slips`` on planes ``normals`` (Coulomb).

    σ1 and σ3 lie in the plane of the normal and the slip vector, σ1 at θ to the fault on the
    side away from the slip direction; σ2 is the null axis ``n × u``:
    ``σ1 = sin θ · n − cos θ · u``, ``σ3 = cos θ · n + sin θ · u``.

    Parameters
    ----------
    normals : (..., 3) unit normals into the hanging wall
    slips : (..., 3) unit hanging-wall slip vectors (in the plane)
    friction : μ (θ = 45° − arctan(μ)/2)

    Returns
    -------
    axes : (..., 3, 3) rows σ1, σ2, σ3 (unit vectors)
    """
    th = np.radians(anderson_angles(friction).theta)
    n = _unit(normals)
    u = _unit(slips)
    s1 = np.sin(th) * n - np.cos(th) * u
    s3 = np.cos(th) * n + np.sin(th) * u
    s2 = np.cross(s3, s1)
    return np.stack([s1, s2, s3], axis=-2)


@dataclass(frozen=True)
class AndersonRules:
    """Thresholds of the Andersonian dip check (project choices, common practice).

    * ``tolerance_deg`` (15): a fault whose dip departs from the Andersonian dip of its type by
      more than this is flagged (natural normal faults dip about 45–75°, thrusts 15–45°).
    * ``pure_deg``: the fault type is normal / reverse / strike-slip only when the rake is within
      this angle of pure dip-slip or strike-slip (the sense-word bins of
      :data:`~slipsense.core.slip.SENSE_RULES`); other faults are ``oblique`` and get no
      prediction (Anderson's types have one principal stress vertical).
    """

    tolerance_deg: float = 15.0
    pure_deg: float = SENSE_RULES.pure_deg


ANDERSON_RULES = AndersonRules()


def anderson_check(dip, rake, friction=BYERLEE_FRICTION, rules=ANDERSON_RULES):
    """Compare fault dips with the Andersonian dip for their slip type.

    Parameters
    ----------
    dip : (N,) degrees; rake : (N,) degrees (Aki & Richards)
    friction : μ

    Returns
    -------
    dict of (N,) arrays: ``kind`` (``normal``, ``reverse``, ``strike-slip``, ``oblique`` or ``""``
    for NaN input), ``predicted_dip`` (degrees, NaN for oblique), ``dip_departure`` (dip −
    predicted, degrees) and ``flag`` (``""``, ``steeper than Andersonian``, ``shallower than
    Andersonian``, ``oblique: no Andersonian type``).  A flag is a prompt to look again (possible
    reactivation of an older structure, rotation after faulting, or a different friction), not a
    verdict.
    """
    a = anderson_angles(friction)
    dip = np.atleast_1d(np.asarray(dip, dtype=float))
    rake = np.broadcast_to(np.atleast_1d(np.asarray(rake, dtype=float)), dip.shape)
    r = np.abs(rake)
    from_dip = np.abs(r - 90.0)
    from_strike = np.minimum(r, 180.0 - r)
    ok = np.isfinite(dip) & np.isfinite(rake)
    kind = np.full(dip.shape, "", dtype=object)
    pred = np.full(dip.shape, np.nan)
    dipslip = ok & (from_dip <= rules.pure_deg)
    strike = ok & ~dipslip & (from_strike <= rules.pure_deg)
    normal = dipslip & (rake < 0)
    reverse = dipslip & (rake > 0)
    kind[normal] = "normal"
    kind[reverse] = "reverse"
    kind[strike] = "strike-slip"
    kind[ok & ~dipslip & ~strike] = "oblique"
    pred[normal] = a.normal_dip
    pred[reverse] = a.thrust_dip
    pred[strike] = a.strike_slip_dip
    dep = dip - pred
    flag = np.full(dip.shape, "", dtype=object)
    with np.errstate(invalid="ignore"):
        flag[dep > rules.tolerance_deg] = "steeper than Andersonian"
        flag[dep < -rules.tolerance_deg] = "shallower than Andersonian"
    flag[kind == "oblique"] = "oblique: no Andersonian type"
    return {"kind": kind, "predicted_dip": pred, "dip_departure": dep, "flag": flag}


# ============================================================================ tensors


def check_principal(magnitudes, what="principal stresses"):
    """Check principal magnitudes ``(..., 3)`` MPa (σ1, σ2, σ3): finite, ≥ 0, σ1 ≥ σ2 ≥ σ3.

    Raises :class:`InputError` with the offending values.
    """
    m = np.asarray(magnitudes, dtype=float)
    if m.shape[-1:] != (3,):
        raise InputError(f"{what} need three values (sigma1, sigma2, sigma3), got shape {m.shape}")
    flat = m.reshape(-1, 3)
    for s1, s2, s3 in flat:
        if not np.all(np.isfinite([s1, s2, s3])):
            raise InputError(f"{what} must be finite numbers (MPa), got {s1!r}, {s2!r}, {s3!r}")
        if min(s1, s2, s3) < 0.0:
            raise InputError(
                f"{what} must be >= 0 MPa (compression positive), got sigma1 {s1:g}, sigma2 {s2:g}, sigma3 {s3:g}")
        if s1 < s3:
            raise InputError(f"sigma1 must be >= sigma3 (compression positive), got sigma1 {s1:g} < sigma3 {s3:g} MPa")
        if not s1 >= s2 >= s3:
            raise InputError(
                f"sigma2 must lie between sigma3 and sigma1, got sigma1 {s1:g}, sigma2 {s2:g}, sigma3 {s3:g} MPa")
    return m


def check_phi(phi):
    """Return φ as a float array, raising :class:`InputError` unless all are in [0, 1]."""
    p = np.asarray(phi, dtype=float)
    bad = ~np.isfinite(p) | (p < 0.0) | (p > 1.0)
    if np.any(bad):
        v = p[bad].ravel()[0] if p.ndim else float(p)
        raise InputError(f"stress ratio phi = (s2 - s3)/(s1 - s3) must be in [0, 1], got {v!r}")
    return p


def orthonormal_axes(sigma1, sigma3, tolerance_deg=5.0):
    """Principal axes (..., 3, 3) from σ1 and σ3 directions that should be perpendicular.

    σ1 is kept; σ3 is made exactly perpendicular to it (Gram–Schmidt); σ2 = σ3 × σ1.  Raises
    :class:`InputError` when σ1 and σ3 depart from perpendicular by more than ``tolerance_deg``.
    """
    s1 = _unit(sigma1)
    s3 = _unit(sigma3)
    off = 90.0 - np.degrees(np.arccos(np.clip(np.abs(_dot(s1, s3)), 0.0, 1.0)))
    if np.any(~np.isfinite(off)) or np.any(off > tolerance_deg):
        worst = float(np.nanmax(np.atleast_1d(off))) if np.any(np.isfinite(off)) else float("nan")
        raise InputError(
            f"the sigma1 and sigma3 axes must be perpendicular (within {tolerance_deg:g} degrees); "
            f"they are {90.0 - worst:.1f} degrees apart")
    s3 = _unit(s3 - _dot(s3, s1)[..., None] * s1)
    s2 = np.cross(s3, s1)
    return np.stack([s1, s2, s3], axis=-2)


def axes_from_lines(sigma1_trend, sigma1_plunge, sigma3_trend, sigma3_plunge, tolerance_deg=5.0):
    """Principal axes (..., 3, 3) from the trend/plunge (degrees) of σ1 and σ3."""
    return orthonormal_axes(line_to_vector(sigma1_trend, sigma1_plunge),
                            line_to_vector(sigma3_trend, sigma3_plunge), tolerance_deg)


def tensor_from_principal(magnitudes, axes):
    """Stress tensor ``Σ σk vk vkᵀ`` (..., 3, 3) from magnitudes (..., 3) and axes (..., 3, 3).

    Magnitudes are used as given (MPa or reduced); check them with :func:`check_principal`.
    """
    m = np.asarray(magnitudes, dtype=float)
    a = np.asarray(axes, dtype=float)
    return np.einsum("...k,...ki,...kj->...ij", m, a, a)


def reduced_tensor(axes, phi):
    """Reduced tensor (σ1 = 1, σ2 = φ, σ3 = 0) with principal axes ``axes`` (..., 3, 3)."""
    p = check_phi(phi)
    mags = np.stack(np.broadcast_arrays(np.ones_like(p), p, np.zeros_like(p)), axis=-1)
    return tensor_from_principal(mags, axes)


def principal_stresses(tensor):
    """Principal magnitudes (..., 3) in decreasing order (σ1 ≥ σ2 ≥ σ3) and axes (..., 3, 3).

    The tensor must be symmetric; the sign of each axis vector is arbitrary (they are axes).
    """
    t = np.asarray(tensor, dtype=float)
    w, v = np.linalg.eigh(0.5 * (t + np.swapaxes(t, -1, -2)))
    return w[..., ::-1], np.swapaxes(v[..., :, ::-1], -1, -2)


def axes_to_lines(axes):
    """Trend and plunge (degrees, lower hemisphere) of each axis: two (..., 3) arrays."""
    return vector_to_line(np.asarray(axes, dtype=float))


def _horizontal(az_deg):
    a = np.radians(np.asarray(az_deg, dtype=float))
    return np.stack([np.sin(a), np.cos(a), np.zeros_like(a)], axis=-1)


_REGIME_WORDS = {
    "NF": "NF", "normal": "NF", "normal faulting": "NF", "extension": "NF", "extensional": "NF",
    "SS": "SS", "strike-slip": "SS", "strike slip": "SS", "strikeslip": "SS",
    "TF": "TF", "thrust": "TF", "reverse": "TF", "thrust faulting": "TF", "compression": "TF",
}


def regime_code(regime):
    """``NF``, ``SS`` or ``TF`` from a regime code or word (None stays None); InputError otherwise."""
    if regime is None:
        return None
    key = str(regime).strip()
    code = _REGIME_WORDS.get(key) or _REGIME_WORDS.get(key.lower()) or _REGIME_WORDS.get(key.upper())
    if code is None:
        raise InputError(f"regime must be one of NF (normal), SS (strike-slip), TF (thrust/reverse), got {regime!r}")
    return code


def andersonian_axes(shmax_azimuth, sv, shmax, shmin, regime=None):
    """Principal magnitudes and axes of an Andersonian state (one principal stress vertical).

    Parameters
    ----------
    shmax_azimuth : degrees, azimuth of the maximum horizontal stress SHmax
    sv, shmax, shmin : vertical, maximum and minimum horizontal stress (MPa, or MPa/km: any unit,
        used only for ordering and returned as given), compression positive, shmax ≥ shmin ≥ 0
    regime : optional ``NF`` / ``SS`` / ``TF`` (or ``normal``, ``strike-slip``, ``thrust``,
        ``reverse``): checked against the order of the magnitudes

    Returns
    -------
    magnitudes : (3,) σ1 ≥ σ2 ≥ σ3; axes : (3, 3) rows σ1, σ2, σ3; regime : ``NF``, ``SS`` or ``TF``
    """
    vals = {"Sv": float(sv), "SHmax": float(shmax), "Shmin": float(shmin)}
    for k, v in vals.items():
        if not np.isfinite(v):
            raise InputError(f"{k} must be a finite number, got {v!r}")
        if v < 0.0:
            raise InputError(f"{k} must be >= 0 (compression positive), got {v:g}")
    if vals["SHmax"] < vals["Shmin"]:
        raise InputError(f"SHmax must be >= Shmin, got SHmax {vals['SHmax']:g} < Shmin {vals['Shmin']:g}")
    az = float(shmax_azimuth)
    if not np.isfinite(az):
        raise InputError(f"SHmax azimuth must be a finite number of degrees, got {shmax_azimuth!r}")
    dirs = {"Sv": np.array([0.0, 0.0, 1.0]), "SHmax": _horizontal(az), "Shmin": _horizontal(az + 90.0)}
    # order: the vertical stress's place among the horizontal ones gives the regime
    if vals["Sv"] >= vals["SHmax"]:
        order, code = ("Sv", "SHmax", "Shmin"), "NF"
    elif vals["Sv"] >= vals["Shmin"]:
        order, code = ("SHmax", "Sv", "Shmin"), "SS"
    else:
        order, code = ("SHmax", "Shmin", "Sv"), "TF"
    want = regime_code(regime)
    if want is not None and want != code:
        rule = {"NF": "Sv >= SHmax >= Shmin", "SS": "SHmax >= Sv >= Shmin", "TF": "SHmax >= Shmin >= Sv"}[want]
        raise InputError(
            f"regime {want} needs {rule}, but Sv {vals['Sv']:g}, SHmax {vals['SHmax']:g}, Shmin {vals['Shmin']:g} "
            f"give {code}")
    mags = np.array([vals[k] for k in order])
    axes = np.stack([dirs[k] for k in order])
    return mags, axes, code


def frictional_limit_ratio(friction=BYERLEE_FRICTION):
    """(σ1 − Pp)/(σ3 − Pp) at which an optimally oriented cohesionless fault is at failure.

    ``(√(μ² + 1) + μ)²`` (Jaeger & Cook 1979, *Fundamentals of Rock Mechanics*; Zoback 2007,
    *Reservoir Geomechanics*, the "frictional limit" of a critically stressed crust): 3.12 for
    μ = 0.6.
    """
    mu = check_friction(friction)
    return float((np.sqrt(mu * mu + 1.0) + mu) ** 2)


@dataclass(frozen=True)
class StressState:
    """A stress state with fixed principal axes whose magnitudes are fixed or grow with depth.

    Attributes
    ----------
    axes : (3, 3) rows σ1, σ2, σ3 (unit vectors, east-north-up)
    magnitudes_mpa : (3,) fixed σ1 ≥ σ2 ≥ σ3 (MPa), or None
    gradients_mpa_per_km : (3,) principal stress gradients (MPa/km), or None
    pore_pressure_mpa : fixed pore pressure (MPa), or None
    pore_pressure_gradient_mpa_per_km : pore-pressure gradient (MPa/km), or None
    description : dict (JSON-able) of how the state was specified, for summaries and provenance

    Exactly one of the two magnitude descriptions and one of the two pore-pressure descriptions
    is given.  Gradient states are zero at the surface and linear in depth, so ratios (slip and
    dilation tendency) do not depend on depth; stresses in MPa do.
    """

    axes: np.ndarray
    magnitudes_mpa: np.ndarray | None = None
    gradients_mpa_per_km: np.ndarray | None = None
    pore_pressure_mpa: float | None = None
    pore_pressure_gradient_mpa_per_km: float | None = None
    description: dict = field(default_factory=dict)

    def __post_init__(self):
        a = np.asarray(self.axes, dtype=float)
        if a.shape != (3, 3) or not np.allclose(a @ a.T, np.eye(3), atol=1e-6):
            raise InputError("stress axes must be three orthonormal vectors")
        if (self.magnitudes_mpa is None) == (self.gradients_mpa_per_km is None):
            raise InputError("give either fixed principal magnitudes (MPa) or gradients (MPa/km), not both")
        if (self.pore_pressure_mpa is None) == (self.pore_pressure_gradient_mpa_per_km is None):
            raise InputError("give either a pore pressure (MPa) or a pore-pressure gradient (MPa/km), not both")
        mags = self.magnitudes_mpa if self.magnitudes_mpa is not None else self.gradients_mpa_per_km
        check_principal(mags, "principal stresses" if self.magnitudes_mpa is not None else "principal stress gradients")
        pp = self.pore_pressure_mpa if self.pore_pressure_mpa is not None else self.pore_pressure_gradient_mpa_per_km
        if not (np.isfinite(pp) and pp >= 0.0):
            raise InputError(f"pore pressure must be >= 0 (MPa or MPa/km), got {pp!r}")

    @property
    def depth_dependent(self):
        return self.gradients_mpa_per_km is not None

    def at_depth(self, depth_m):
        """Tensors (G, 3, 3) MPa, principal magnitudes (G, 3) MPa and pore pressure (G,) MPa.

        ``depth_m`` (G,) metres below the ground surface is used by gradient states only (NaN
        gives NaN stresses); fixed states ignore it.
        """
        d = np.atleast_1d(np.asarray(depth_m, dtype=float))
        if self.depth_dependent:
            if np.any(np.isfinite(d) & (d < 0)):
                raise InputError(f"depth must be >= 0 metres below the surface, got {float(np.nanmin(d)):g}")
            km = d / 1000.0
            mags = km[:, None] * np.asarray(self.gradients_mpa_per_km, float)[None, :]
        else:
            mags = np.broadcast_to(np.asarray(self.magnitudes_mpa, float), (d.size, 3)).copy()
        if self.pore_pressure_gradient_mpa_per_km is not None:
            pp = d / 1000.0 * float(self.pore_pressure_gradient_mpa_per_km)
        else:
            pp = np.full(d.size, float(self.pore_pressure_mpa))
        return tensor_from_principal(mags, np.asarray(self.axes, float)), mags, pp


def principal_state(sigma1_mpa, sigma2_mpa, sigma3_mpa, axes, pore_pressure_mpa):
    """A fixed stress state from principal magnitudes (MPa), axes (3, 3) and pore pressure (MPa)."""
    mags = check_principal(np.array([sigma1_mpa, sigma2_mpa, sigma3_mpa], dtype=float))
    tr, pl = axes_to_lines(axes)
    desc = {"kind": "principal magnitudes", "sigma1_mpa": float(mags[0]), "sigma2_mpa": float(mags[1]),
            "sigma3_mpa": float(mags[2]), "pore_pressure_mpa": float(pore_pressure_mpa),
            "sigma1": [round(float(tr[0]), 3), round(float(pl[0]), 3)],
            "sigma2": [round(float(tr[1]), 3), round(float(pl[1]), 3)],
            "sigma3": [round(float(tr[2]), 3), round(float(pl[2]), 3)]}
    return StressState(np.asarray(axes, float), magnitudes_mpa=mags, pore_pressure_mpa=float(pore_pressure_mpa),
                       description=desc)


def gradient_state(shmax_azimuth, sv_gradient, shmax_gradient, shmin_gradient, pore_pressure_gradient,
                   regime=None):
    """An Andersonian stress state from SHmax azimuth and gradients (MPa/km), zero at the surface."""
    for name, v in (("Sv gradient", sv_gradient), ("SHmax gradient", shmax_gradient),
                    ("Shmin gradient", shmin_gradient), ("pore-pressure gradient", pore_pressure_gradient)):
        if v is None or not np.isfinite(float(v)):
            raise InputError(f"{name} must be a number of MPa/km, got {v!r}")
        if float(v) < 0:
            raise InputError(f"{name} must be >= 0 MPa/km (compression positive), got {float(v):g}")
    mags, axes, code = andersonian_axes(shmax_azimuth, sv_gradient, shmax_gradient, shmin_gradient, regime)
    desc = {"kind": "Andersonian gradients", "regime": code, "shmax_azimuth": float(shmax_azimuth) % 180.0,
            "sv_gradient_mpa_per_km": float(sv_gradient), "shmax_gradient_mpa_per_km": float(shmax_gradient),
            "shmin_gradient_mpa_per_km": float(shmin_gradient),
            "pore_pressure_gradient_mpa_per_km": float(pore_pressure_gradient)}
    return StressState(axes, gradients_mpa_per_km=mags, pore_pressure_gradient_mpa_per_km=float(pore_pressure_gradient),
                       description=desc)


def inverted_state(axes, phi, *, sv_gradient=None, pore_pressure_gradient=None, friction=BYERLEE_FRICTION,
                   sigma1_mpa=None, sigma3_mpa=None, pore_pressure_mpa=None):
    """A stress state from inverted axes and φ plus stated magnitude assumptions.

    Fault-slip inversion gives the axes and φ only.  Magnitudes come from one of two assumptions:

    * **frictional limit** (``sv_gradient``, ``pore_pressure_gradient`` in MPa/km, ``friction``):
      the principal stress nearest vertical equals the overburden Sv, and σ1 − Pp = q (σ3 − Pp)
      with ``q`` = :func:`frictional_limit_ratio` (a critically stressed crust: optimally oriented
      faults are exactly at failure, so the largest slip tendency equals μ by construction);
    * **given σ1 and σ3** (``sigma1_mpa``, ``sigma3_mpa``, ``pore_pressure_mpa``): σ2 = σ3 + φ(σ1 − σ3).
    """
    axes = np.asarray(axes, dtype=float)
    p = float(check_phi(phi))
    if sigma1_mpa is not None or sigma3_mpa is not None:
        if sigma1_mpa is None or sigma3_mpa is None or pore_pressure_mpa is None:
            raise InputError("with inverted axes give sigma1 and sigma3 (MPa) and the pore pressure (MPa), "
                             "or the Sv and pore-pressure gradients (frictional limit)")
        s1, s3 = float(sigma1_mpa), float(sigma3_mpa)
        s2 = s3 + p * (s1 - s3)
        st = principal_state(s1, s2, s3, axes, pore_pressure_mpa)
        st.description.update({"kind": "inverted axes, given sigma1 and sigma3", "phi": p})
        return st
    if sv_gradient is None or pore_pressure_gradient is None:
        raise InputError("with inverted axes give the Sv and pore-pressure gradients (frictional limit), "
                         "or sigma1, sigma3 and the pore pressure (MPa)")
    sv, pp = float(sv_gradient), float(pore_pressure_gradient)
    if not (np.isfinite(sv) and sv > 0):
        raise InputError(f"Sv gradient must be > 0 MPa/km, got {sv_gradient!r}")
    if not (np.isfinite(pp) and 0 <= pp < sv):
        raise InputError(f"pore-pressure gradient must be >= 0 and below the Sv gradient ({sv:g} MPa/km), got {pore_pressure_gradient!r}")
    q = frictional_limit_ratio(friction)
    k = int(np.argmax(np.abs(axes[:, 2])))  # the axis nearest vertical carries Sv
    ev = sv - pp
    if k == 0:
        s1e = ev
        s3e = ev / q
    elif k == 2:
        s3e = ev
        s1e = q * ev
    else:
        s3e = ev / (1.0 + p * (q - 1.0))
        s1e = q * s3e
    s2e = s3e + p * (s1e - s3e)
    grads = np.array([s1e, s2e, s3e]) + pp
    tilt = float(np.degrees(np.arccos(min(1.0, abs(axes[k, 2])))))
    desc = {"kind": "inverted axes, frictional limit", "phi": p, "friction": float(friction),
            "vertical_axis": f"sigma{k + 1}", "vertical_axis_tilt": round(tilt, 3),
            "sv_gradient_mpa_per_km": sv, "pore_pressure_gradient_mpa_per_km": pp,
            "principal_gradients_mpa_per_km": [float(g) for g in grads]}
    return StressState(axes, gradients_mpa_per_km=grads, pore_pressure_gradient_mpa_per_km=pp, description=desc)


# ============================================================================ tractions


def resolve_traction(tensor, normals):
    """Normal and shear stress on planes, and the Wallace–Bott hanging-wall slip direction.

    Parameters
    ----------
    tensor : (..., 3, 3) compression positive (MPa or reduced)
    normals : (..., 3) unit normals into the hanging wall (the sense matters only for the slip
        direction)

    Returns
    -------
    sigma_n : (...) normal stress (compression positive)
    tau : (...) magnitude of the shear traction
    slip : (..., 3) unit vector of the predicted hanging-wall slip (NaN where tau is 0)
    """
    t = np.asarray(tensor, dtype=float)
    n_fw = -_unit(normals)
    trac = np.einsum("...ij,...j->...i", t, n_fw)
    sn = _dot(trac, n_fw)
    shear = trac - sn[..., None] * n_fw
    tau = np.linalg.norm(shear, axis=-1)
    scale = np.max(np.abs(t), axis=(-2, -1)) if t.ndim >= 2 else 1.0
    with np.errstate(invalid="ignore", divide="ignore"):
        slip = np.where((tau > 1e-12 * np.maximum(scale, 1e-300))[..., None], shear / tau[..., None], np.nan)
    return sn, tau, slip


def misfit_angles(tensor, normals, slips):
    """Angle (degrees, 0–180) between observed slip and the Wallace–Bott direction (NaN: no shear)."""
    _, _, pred = resolve_traction(tensor, normals)
    u = _unit(slips)
    return np.degrees(np.arccos(np.clip(_dot(pred, u), -1.0, 1.0)))


# ============================================================================ stress inversion

# Basis of the traceless symmetric tensors: m0 (ee − uu), m1 (en), m2 (eu), m3 (nn − uu), m4 (nu).
_BASIS = np.zeros((5, 3, 3))
_BASIS[0] = np.diag([1.0, 0.0, -1.0])
_BASIS[1][0, 1] = _BASIS[1][1, 0] = 1.0
_BASIS[2][0, 2] = _BASIS[2][2, 0] = 1.0
_BASIS[3] = np.diag([0.0, 1.0, -1.0])
_BASIS[4][1, 2] = _BASIS[4][2, 1] = 1.0


def _design(n_fw):
    """(N, 3, 5): the shear traction on planes of normal ``n_fw`` of each basis tensor."""
    bn = np.einsum("kij,nj->nki", _BASIS, n_fw)  # (N, 5, 3)
    normal = np.einsum("nki,ni->nk", bn, n_fw)
    shear = bn - normal[:, :, None] * n_fw[:, None, :]
    return np.swapaxes(shear, 1, 2)


def _tensor(m):
    return np.einsum("...k,kij->...ij", m, _BASIS)


@dataclass(frozen=True)
class InversionRules:
    """Thresholds of the stress inversion (project choices unless a source is named).

    * ``min_data`` (4): fewer data cannot constrain the four unknowns (three angles and φ) of the
      reduced tensor (Michael 1984).
    * ``parallel_deg`` (1): data whose planes all lie within this angle of one plane are "all
      parallel"; ``min_rank_ratio`` (1e-9): the smallest/largest eigenvalue of the normal matrix
      below which the planes span too few orientations (a singular system).
    * ``max_offplane_deg`` (10): a slip vector further than this out of its plane is rejected;
      smaller departures are projected onto the plane.
    * ``mixed_misfit_deg`` (30), ``mixed_fraction`` (0.25): when more than this fraction of data
      misfit the best stress by more than this angle, the data may mix stress phases (a warning).
    * quality: ``good`` when the σ1 and σ3 cones are ≤ ``good_cone_deg`` (15) and the mean misfit
      ≤ ``good_misfit_deg`` (20); ``fair`` for ≤ ``fair_cone_deg`` (30) and ≤
      ``fair_misfit_deg`` (30); else ``poor``; mixed data are at most ``fair``.
    * ``band`` (0.05): right-dihedra axes are the mean of the grid directions whose score is within
      this of the best score.
    """

    min_data: int = 4
    parallel_deg: float = 1.0
    min_rank_ratio: float = 1e-9
    max_offplane_deg: float = 10.0
    mixed_misfit_deg: float = 30.0
    mixed_fraction: float = 0.25
    good_cone_deg: float = 15.0
    good_misfit_deg: float = 20.0
    fair_cone_deg: float = 30.0
    fair_misfit_deg: float = 30.0
    band: float = 0.05


INVERSION_RULES = InversionRules()


@dataclass(frozen=True)
class RightDihedra:
    """Right-dihedra estimate of σ1 and σ3 (Angelier & Mechler 1977).

    Attributes
    ----------
    sigma1, sigma3 : (3,) unit vectors (not forced perpendicular)
    sigma1_trend, sigma1_plunge, sigma3_trend, sigma3_plunge : degrees
    sigma1_score, sigma3_score : fraction of data whose compressional (resp. tensional) dihedron
        holds the best direction (1 = all data agree)
    sigma1_spread, sigma3_spread : angular radius (degrees) of the best-scoring region around the
        estimate: the method locates each axis within a region, not at a point
    """

    sigma1: np.ndarray
    sigma3: np.ndarray
    sigma1_trend: float
    sigma1_plunge: float
    sigma3_trend: float
    sigma3_plunge: float
    sigma1_score: float
    sigma3_score: float
    sigma1_spread: float
    sigma3_spread: float


def _hemisphere_grid(n):
    """~``n`` nearly uniform unit vectors on the lower hemisphere (a Fibonacci lattice)."""
    k = np.arange(n) + 0.5
    z = -k / n  # uniform in z on (-1, 0): equal area
    golden = np.pi * (3.0 - np.sqrt(5.0))
    az = golden * k
    r = np.sqrt(1.0 - z * z)
    return np.column_stack([r * np.sin(az), r * np.cos(az), z])


def _mean_axis(d, w):
    t = np.einsum("g,gi,gj->ij", w, d, d)
    _, v = np.linalg.eigh(t)
    return v[:, -1]


def right_dihedra(normals, slips, grid_size=6000, band=INVERSION_RULES.band):
    """σ1 and σ3 by the right-dihedra method (Angelier & Mechler 1977), on a hemisphere grid.

    Each datum divides directions into a compressional and a tensional pair of dihedra, bounded by
    the fault plane and the auxiliary plane (normal = slip): a direction ``d`` is compressional
    when ``(d·n)(d·u) < 0``.  σ1 lies in the directions compressional for most data, σ3 in those
    tensional for most data.  The estimate is the mean axis of the grid directions whose score is
    within ``band`` of the best one.  It needs no assumption on |τ| nor on φ, which makes it robust
    for small or mixed data sets, and independent of the linear inversion.

    Angelier, J. & Mechler, P. (1977) "Sur une méthode graphique de recherche des contraintes
    principales également utilisable en tectonique et en séismologie : la méthode des dièdres
    droits", Bull. Soc. géol. France 19(6).
    """
    n = _unit(np.asarray(normals, float).reshape(-1, 3))
    u = _unit(np.asarray(slips, float).reshape(-1, 3))
    g = _hemisphere_grid(int(grid_size))
    comp = np.zeros(len(g))
    tens = np.zeros(len(g))
    for k in range(0, len(n), 256):
        prod = (g @ n[k:k + 256].T) * (g @ u[k:k + 256].T)  # (G, chunk)
        comp += np.sum(prod < 0, axis=1)
        tens += np.sum(prod > 0, axis=1)
    comp /= len(n)
    tens /= len(n)
    out = []
    for score in (comp, tens):
        best = float(score.max())
        w = np.clip(score - (best - band), 0.0, None)
        if not np.any(w > 0):
            w = (score >= best).astype(float)
        axis = _mean_axis(g, w)
        spread = float(np.max(_axial_angle(g[w > 0], axis[None, :])))
        out.append((axis, best, spread))
    (s1, c1, r1), (s3, c3, r3) = out
    t1, p1 = vector_to_line(s1)
    t3, p3 = vector_to_line(s3)
    return RightDihedra(s1, s3, float(t1), float(p1), float(t3), float(p3), c1, c3, r1, r3)


@dataclass(frozen=True)
class StressInversion:
    """Result of one fault-slip stress inversion (see :func:`invert_stress`).

    Angles in degrees; the tensor is reduced (σ1 = 1, σ3 = 0, σ2 = φ), east-north-up.

    Attributes
    ----------
    n_data : int
    tensor : (3, 3) reduced tensor;  axes : (3, 3) rows σ1, σ2, σ3
    trend, plunge : (3,) of σ1, σ2, σ3
    cone95 : (3,) bootstrap 95 % confidence cone half-angles of σ1, σ2, σ3 (NaN without resamples)
    phi, phi_lo95, phi_hi95 : stress ratio and its bootstrap 95 % interval
    regime : Zoback (1992) code; regime_support : fraction of resamples with the same regime
    shmax_azimuth, shmax_lo95, shmax_hi95 : SHmax (0–180) and its interval (lo > hi wraps
        through 0); NaN when the horizontal stresses are equal
    misfit : (N,) angle between each observed slip and the predicted shear direction
    predicted_slip : (N, 3) unit predicted hanging-wall slip;  shear : (N,) |τ| in the reduced tensor
    resamples : bootstrap resamples used;  dropped_resamples : singular resamples left out
    iterations : refinement iterations of the best fit (0 = plain Michael 1984)
    mixed : True when the misfits suggest mixed stress phases
    quality, reason : quality word and why
    right_dihedra : :class:`RightDihedra`
    """

    n_data: int
    tensor: np.ndarray
    axes: np.ndarray
    trend: np.ndarray
    plunge: np.ndarray
    cone95: np.ndarray
    phi: float
    phi_lo95: float
    phi_hi95: float
    regime: str
    regime_support: float
    shmax_azimuth: float
    shmax_lo95: float
    shmax_hi95: float
    misfit: np.ndarray
    predicted_slip: np.ndarray
    shear: np.ndarray
    resamples: int
    dropped_resamples: int
    iterations: int
    mixed: bool
    quality: str
    reason: str
    right_dihedra: RightDihedra
    warnings: tuple = ()


def _check_data(normals, slips, rules):
    n = np.asarray(normals, dtype=float)
    s = np.asarray(slips, dtype=float)
    if n.ndim != 2 or n.shape[-1] != 3 or s.shape != n.shape:
        raise InputError(f"normals and slips must both be (N, 3) arrays, got {n.shape} and {s.shape}")
    bad = ~np.all(np.isfinite(n), axis=1) | ~np.all(np.isfinite(s), axis=1)
    if np.any(bad):
        raise InputError(f"datum {int(np.flatnonzero(bad)[0])}: its plane normal or slip vector is not a finite number")
    if len(n) < rules.min_data:
        raise DataError(
            f"stress inversion needs at least {rules.min_data} fault-slip data (planes with slip), got {len(n)}")
    ln = np.linalg.norm(n, axis=1)
    ls = np.linalg.norm(s, axis=1)
    zero = (ln < _EPS) | (ls < _EPS)
    if np.any(zero):
        raise InputError(f"datum {int(np.flatnonzero(zero)[0])}: zero-length plane normal or slip vector")
    n = n / ln[:, None]
    s = s / ls[:, None]
    off = np.degrees(np.arcsin(np.clip(np.abs(_dot(n, s)), 0.0, 1.0)))
    if np.any(off > rules.max_offplane_deg):
        k = int(np.argmax(off))
        raise InputError(
            f"datum {k}: the slip vector is {off[k]:.1f} degrees out of its plane (more than "
            f"{rules.max_offplane_deg:g}); check the plane and lineation")
    s = _unit(s - _dot(s, n)[:, None] * n)
    # all planes parallel?
    mean_n = _mean_axis(n, np.ones(len(n)))
    spread = float(np.max(_axial_angle(n, mean_n[None, :])))
    if spread < rules.parallel_deg:
        raise DataError(
            f"all {len(n)} fault-slip data lie on parallel planes (within {spread:.2f} degrees): one plane "
            "orientation cannot constrain the stress tensor; add data from differently oriented faults")
    return n, s


def _solve(G, h):
    return np.linalg.solve(G, h[..., None])[..., 0]


def _refined(A, s, G_i, counts, m0, max_iter, tol):
    """Fixed-point refinement of the Michael solution for resamples (B, N counts).

    Each datum's target unit slip is rescaled by the |τ| the current tensor predicts on its plane
    (normalised to a mean of 1), and the linear system is solved again, until the tensor stops
    changing.  The true tensor of noise-free Wallace–Bott data is a fixed point, so it is recovered
    exactly; plain Michael (1984) assumes equal |τ| on all planes and is biased when they differ.
    The fixed-point steps are accelerated with SQUAREM (Varadhan & Roland 2008, "Simple and
    globally convergent methods for accelerating the convergence of any EM algorithm", Scand. J.
    Stat. 35), which changes the path, not the fixed point.  Returns the tensors (B, 5) and the
    number of steps taken by each.
    """
    N = len(A)
    G_inv = np.linalg.inv((counts @ G_i.reshape(N, 25)).reshape(-1, 5, 5))
    Af = A.reshape(N * 3, 5)
    hs = np.einsum("nik,ni->nk", A, s)
    tot = counts.sum(axis=1)

    def step(m, rows):
        tau = np.linalg.norm((Af @ m.T).reshape(N, 3, -1), axis=1).T  # (b, N)
        w = counts[rows]
        c = tau / ((np.sum(w * tau, axis=1) / tot[rows])[:, None])
        return np.matmul(G_inv[rows], ((w * c) @ hs)[:, :, None])[:, :, 0]

    m = np.array(m0, dtype=float)
    its = np.zeros(len(m), int)
    rows = np.arange(len(m))
    for _ in range(max_iter):
        if rows.size == 0:
            break
        x = m[rows]
        f1 = step(x, rows)
        f2 = step(f1, rows)
        r = f1 - x
        v = f2 - 2.0 * f1 + x
        nr = np.linalg.norm(r, axis=1)
        nv = np.linalg.norm(v, axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            alpha = np.where(nv > 0, -nr / nv, -1.0)
        alpha = np.minimum(alpha, -1.0)[:, None]  # alpha = -1 is two plain steps
        x_new = step(x - 2.0 * alpha * r + alpha * alpha * v, rows)  # a stabilising plain step
        change = np.linalg.norm(x_new - x, axis=1) / np.maximum(np.linalg.norm(x_new, axis=1), _EPS)
        m[rows] = x_new
        its[rows] += 3
        rows = rows[change > tol]
    return m, its


def _axes_phi(m):
    """Principal axes (B, 3, 3), φ (B,) and the reduced tensors (B, 3, 3) of tensors ``m`` (B, 5)."""
    mags, axes = principal_stresses(_tensor(m))
    span = mags[:, 0] - mags[:, 2]
    with np.errstate(invalid="ignore", divide="ignore"):
        phi = (mags[:, 1] - mags[:, 2]) / span
    return axes, np.clip(phi, 0.0, 1.0), span


def _axial_interval(samples, centre, period=180.0):
    dev = (np.asarray(samples, float) - centre + period / 2.0) % period - period / 2.0
    dev = dev[np.isfinite(dev)]
    if dev.size == 0:
        return np.nan, np.nan
    lo, hi = np.percentile(dev, [2.5, 97.5])
    return float((centre + lo) % period), float((centre + hi) % period)


def invert_stress(normals, slips, *, resamples=1000, seed=0, refine=True, max_iter=200, tol=1e-9,
                  rules=INVERSION_RULES, rd_grid=6000):
    """Reduced stress tensor from fault-slip data (Michael 1984), with bootstrap confidence.

    Parameters
    ----------
    normals : (N, 3) unit plane normals pointing into the hanging wall (east, north, up)
    slips : (N, 3) unit hanging-wall slip vectors (projected onto their planes when slightly off)
    resamples : bootstrap resamples (0 = none; Michael 1987 used a few hundred to a thousand)
    seed : random seed of the resampling (results are reproducible for a seed)
    refine : rescale each datum by the |τ| of the current estimate and solve again until stable
        (a project addition that removes the equal-|τ| assumption; ``False`` = plain Michael 1984)
    rules : :class:`InversionRules`

    Returns
    -------
    StressInversion

    Raises
    ------
    DataError
        Fewer than ``rules.min_data`` data, all planes parallel, or planes spanning too few
        orientations to determine the tensor (a singular system).
    InputError
        Non-finite or zero vectors, or a slip vector far out of its plane.

    Notes
    -----
    Michael, A. J. (1984) "Determination of stress from slip data: faults and folds", JGR 89(B13):
    the shear traction of a traceless reduced tensor on each plane is set equal to the unit slip
    vector (assuming similar |τ| on all faults) and the five unknowns are found by linear least
    squares.  Michael (1987) "Use of focal mechanisms to determine stress: a control study", JGR
    92(B1): confidence from bootstrap resampling of the data.  Here the cones are the 95th
    percentile of the angle between each resample's axis and the best-fit axis, and the φ interval
    the 2.5–97.5 percentiles.  φ is less well determined than the axes: with ``refine=False`` it is
    biased by the equal-|τ| assumption.  σ2 and σ3 (or σ1 and σ2) are poorly defined when φ is
    near 0 (or 1); their cones say so.
    """
    n, s = _check_data(normals, slips, rules)
    N = len(n)
    n_fw = -n
    A = _design(n_fw)  # (N, 3, 5)
    G_i = np.einsum("nik,nil->nkl", A, A)
    h_i = np.einsum("nik,ni->nk", A, s)
    G = G_i.sum(axis=0)
    ev = np.linalg.eigvalsh(G)
    if not ev[0] > rules.min_rank_ratio * ev[-1]:
        rank = int(np.sum(ev > rules.min_rank_ratio * ev[-1]))
        raise DataError(
            f"the {N} fault-slip data do not determine the stress tensor: their planes span only {rank} "
            "of the 5 independent directions needed (e.g. only one or two plane orientations); add data "
            "from differently oriented faults")
    ones = np.ones((1, N))
    m_best = _solve(G[None], h_i.sum(axis=0)[None])
    iters = np.zeros(1, int)
    if refine:
        m_best, iters = _refined(A, s, G_i, ones, m_best, max_iter, tol)
    axes_b, phi_b, span_b = _axes_phi(m_best)
    axes = axes_b[0]
    phi = float(phi_b[0])
    if not span_b[0] > 0:
        raise DataError("the fault-slip data give an isotropic stress (no shear): the tensor is undetermined")
    red = tensor_from_principal(np.array([1.0, phi, 0.0]), axes)
    tr, pl = axes_to_lines(axes)
    _, shear, pred = resolve_traction(red, n)
    misfit = np.degrees(np.arccos(np.clip(_dot(pred, s), -1.0, 1.0)))
    regime, _ = stress_regime(pl[0], pl[1], pl[2], tr[0], tr[1], tr[2])
    regime = str(regime)
    shmax = float(shmax_azimuth(red))

    warnings = []
    cones = np.full(3, np.nan)
    phi_lo = phi_hi = np.nan
    sh_lo = sh_hi = np.nan
    support = np.nan
    used = dropped = 0
    if resamples and resamples > 0:
        rng = np.random.default_rng(seed)
        B = int(resamples)
        idx = rng.integers(0, N, size=(B, N))
        counts = np.zeros((B, N))
        np.add.at(counts, (np.repeat(np.arange(B), N), idx.ravel()), 1.0)
        Gb = (counts @ G_i.reshape(N, 25)).reshape(-1, 5, 5)
        evb = np.linalg.eigvalsh(Gb)
        ok = evb[:, 0] > rules.min_rank_ratio * evb[:, -1]
        dropped = int(np.sum(~ok))
        counts, Gb = counts[ok], Gb[ok]
        used = int(len(counts))
        if used:
            mb = _solve(Gb, counts @ h_i)
            if refine:
                mb, _ = _refined(A, s, G_i, counts, mb, max_iter, tol)
            ax_b, ph_b, sp_b = _axes_phi(mb)
            good = sp_b > 0
            ax_b, ph_b = ax_b[good], ph_b[good]
            for k in range(3):
                ang = _axial_angle(ax_b[:, k, :], axes[k][None, :])
                cones[k] = float(np.percentile(ang, 95.0))
            phi_lo, phi_hi = (float(v) for v in np.percentile(ph_b, [2.5, 97.5]))
            red_b = tensor_from_principal(np.column_stack([np.ones_like(ph_b), ph_b, np.zeros_like(ph_b)]), ax_b)
            sh_b = shmax_azimuth(red_b)
            if np.isfinite(shmax):
                sh_lo, sh_hi = _axial_interval(sh_b, shmax)
            trb, plb = axes_to_lines(ax_b)
            reg_b, _ = stress_regime(plb[:, 0], plb[:, 1], plb[:, 2], trb[:, 0], trb[:, 1], trb[:, 2])
            support = float(np.mean(np.asarray(reg_b) == regime))
        if dropped:
            warnings.append(f"{dropped} of {B} bootstrap resamples were singular (too few distinct planes) and were left out")
    rd = right_dihedra(n, s, grid_size=rd_grid, band=rules.band)

    large = misfit > rules.mixed_misfit_deg
    mixed = bool(np.mean(large) > rules.mixed_fraction)
    if mixed:
        warnings.append(
            f"{int(large.sum())} of {N} data ({100.0 * large.mean():.0f} %) misfit the best-fit stress by more "
            f"than {rules.mixed_misfit_deg:g} degrees: the data may mix stress phases; separate them (e.g. by a "
            "phase field) and invert each set")
    quality, reason = _assess(cones, misfit, mixed, used, rules)
    return StressInversion(
        n_data=N, tensor=red, axes=axes, trend=np.asarray(tr, float), plunge=np.asarray(pl, float), cone95=cones,
        phi=phi, phi_lo95=phi_lo, phi_hi95=phi_hi, regime=regime, regime_support=support,
        shmax_azimuth=shmax, shmax_lo95=sh_lo, shmax_hi95=sh_hi, misfit=misfit, predicted_slip=pred,
        shear=shear, resamples=used, dropped_resamples=dropped, iterations=int(iters[0]), mixed=mixed,
        quality=quality, reason=reason, right_dihedra=rd, warnings=tuple(warnings))


def _assess(cones, misfit, mixed, used, rules):
    """Quality word of an inversion (the one place its criteria live; see :class:`InversionRules`)."""
    mean = float(np.nanmean(misfit))
    worst = float(max(cones[0], cones[2])) if used else np.nan
    why = [f"mean misfit {mean:.1f} deg"]
    if used:
        why.append(f"sigma1 cone {cones[0]:.1f}, sigma3 cone {cones[2]:.1f} deg")
    else:
        why.append("no bootstrap: no confidence cones")
    if mixed:
        why.append("misfits suggest mixed stress phases")
    if used and worst <= rules.good_cone_deg and mean <= rules.good_misfit_deg and not mixed:
        q = "good"
    elif used and worst <= rules.fair_cone_deg and mean <= rules.fair_misfit_deg:
        q = "fair"
    else:
        q = "poor"
    return q, "; ".join(why)


# ============================================================================ regime and SHmax

#: Zoback (1992) World Stress Map regimes, in the order of Table 1.
REGIMES = {
    "NF": "normal faulting",
    "NS": "normal faulting with strike-slip",
    "SS": "strike-slip faulting",
    "TS": "thrust faulting with strike-slip",
    "TF": "thrust faulting",
    "unknown": "not classified (oblique axes)",
}


def stress_regime(sigma1_plunge, sigma2_plunge, sigma3_plunge, sigma1_trend, sigma2_trend, sigma3_trend):
    """Stress regime and SHmax azimuth from principal-axis plunges (Zoback 1992, Table 1).

    Rows, tried in this order (plunges of σ1, σ2, σ3 in degrees; SHmax azimuth):

    ====  =====================================  ===============
    NF    pl1 ≥ 52, pl3 ≤ 35                     az σ2
    NS    40 ≤ pl1 < 52, pl3 ≤ 20                az σ3 + 90
    SS    pl1 < 40, pl2 ≥ 45, pl3 ≤ 20           az σ3 + 90
    SS    pl1 ≤ 20, pl2 ≥ 45, pl3 < 40           az σ1
    TS    pl1 ≤ 20, 40 ≤ pl3 < 52                az σ1
    TF    pl1 ≤ 35, pl3 ≥ 52                     az σ1
    ====  =====================================  ===============

    anything else is ``unknown`` (SHmax NaN).  Plunges are rounded to 1e-6° before comparison so
    that a computed 51.9999999 counts as 52.  Zoback, M. L. (1992) "First- and second-order
    patterns of stress in the lithosphere: the World Stress Map project", JGR 97(B8).

    Returns
    -------
    regime : str or (N,) object array;  shmax : azimuth 0–180 (degrees) or NaN
    """
    p1, p2, p3, t1, t2, t3 = (np.round(np.asarray(v, dtype=float), 6) for v in
                              (sigma1_plunge, sigma2_plunge, sigma3_plunge, sigma1_trend, sigma2_trend, sigma3_trend))
    p1, p2, p3, t1, t2, t3 = np.broadcast_arrays(p1, p2, p3, t1, t2, t3)
    rows = [
        ("NF", (p1 >= 52) & (p3 <= 35), t2),
        ("NS", (p1 >= 40) & (p1 < 52) & (p3 <= 20), t3 + 90.0),
        ("SS", (p1 < 40) & (p2 >= 45) & (p3 <= 20), t3 + 90.0),
        ("SS", (p1 <= 20) & (p2 >= 45) & (p3 < 40), t1),
        ("TS", (p1 <= 20) & (p3 >= 40) & (p3 < 52), t1),
        ("TF", (p1 <= 35) & (p3 >= 52), t1),
    ]
    regime = np.full(p1.shape, "unknown", dtype=object)
    shmax = np.full(p1.shape, np.nan)
    done = np.zeros(p1.shape, bool)
    for code, cond, az in rows:
        take = cond & ~done
        regime[take] = code
        shmax[take] = np.mod(az[take], 180.0)
        done |= take
    if regime.ndim == 0:
        return str(regime.item()), float(shmax)
    return regime, shmax


def shmax_azimuth(tensor, rel_tol=1e-9):
    """Azimuth (0–180 degrees) of the maximum horizontal stress of full tensors (..., 3, 3).

    SHmax is the horizontal direction in which the normal stress is largest (Lund & Townend 2007,
    "Calculating horizontal stress orientations with full or partial knowledge of the tectonic
    stress tensor", GJI 170): with h = (sin α, cos α, 0), ``σ(α) = hᵀσh`` is largest at
    ``2α = atan2(2 σ_en, σ_nn − σ_ee)``.  It depends on the whole tensor (axes and φ), not only on
    the σ1 axis.  NaN when the horizontal stresses are equal in all directions.
    """
    t = np.asarray(tensor, dtype=float)
    see, snn, sen = t[..., 0, 0], t[..., 1, 1], 0.5 * (t[..., 0, 1] + t[..., 1, 0])
    scale = np.max(np.abs(t - np.trace(t, axis1=-2, axis2=-1)[..., None, None] / 3.0 * np.eye(3)), axis=(-2, -1))
    a = 0.5 * np.degrees(np.arctan2(2.0 * sen, snn - see))
    flat = np.hypot(snn - see, 2.0 * sen) <= rel_tol * np.maximum(scale, 1e-300)
    return _scalar(np.where(flat, np.nan, np.mod(a, 180.0)))


# ============================================================================ tendencies


@dataclass(frozen=True)
class ReactivationRules:
    """Flags of the reactivation screening (project choices).

    * ``near_fraction`` (0.8): ``near failure`` when the shear stress reaches this fraction of the
      frictional strength, (τ − c)/(μ σn') ≥ 0.8 (with c = 0: slip tendency ≥ 0.8 μ).
    * ``at failure`` when it reaches the strength (slip tendency ≥ μ for c = 0: the plane is
      critically stressed, and the pore-pressure increase to failure is ≤ 0).
    * ``tensile`` when the effective normal stress is ≤ 0 (the plane would open).
    """

    near_fraction: float = 0.8


REACTIVATION_RULES = ReactivationRules()


def fault_reactivation(tensor, normals, pore_pressure_mpa=0.0, friction=BYERLEE_FRICTION, cohesion_mpa=0.0,
                       rules=REACTIVATION_RULES):
    """Slip tendency, dilation tendency and pore pressure to failure of planes in a stress state.

    Parameters
    ----------
    tensor : (3, 3) or (G, 3, 3) total stress, MPa, compression positive
    normals : (G, 3) unit normals into the hanging wall
    pore_pressure_mpa : scalar or (G,) MPa
    friction : μ of the Coulomb criterion τ = c + μ σn' (Byerlee 1978: 0.6–0.85)
    cohesion_mpa : c, MPa (default 0: an existing fault)

    Returns
    -------
    dict of (G,) arrays:

    * ``sigma_n_mpa``, ``tau_mpa`` — normal (compression positive) and shear stress
    * ``sigma_n_eff_mpa`` — σn − Pp
    * ``slip_tendency`` — τ/σn' (Morris, Ferrill & Henderson 1996, "Slip-tendency analysis and
      fault reactivation", Geology 24(3)); NaN when σn' ≤ 0
    * ``dilation_tendency`` — (σ1 − σn)/(σ1 − σ3) (Ferrill et al. 1999, GSA Today 9(5)); NaN for
      an isotropic stress
    * ``dp_to_failure_mpa`` — pore-pressure increase that brings the plane to Coulomb failure,
      σn' − (τ − c)/μ (≤ 0: at or beyond failure now)
    * ``slip`` (G, 3) — the Wallace–Bott hanging-wall slip direction (unit)
    * ``flag`` — ``""``, ``near failure``, ``at failure``, ``tensile`` (:class:`ReactivationRules`)
    """
    mu = check_friction(friction)
    c = float(cohesion_mpa)
    if not (np.isfinite(c) and c >= 0):
        raise InputError(f"cohesion must be >= 0 MPa, got {cohesion_mpa!r}")
    n = _unit(np.asarray(normals, float).reshape(-1, 3))
    t = np.asarray(tensor, dtype=float)
    t = np.broadcast_to(t, (len(n), 3, 3)) if t.ndim == 2 else t
    pp = np.broadcast_to(np.asarray(pore_pressure_mpa, float), (len(n),))
    sn, tau, slip = resolve_traction(t, n)
    mags, _ = principal_stresses(t)
    eff = sn - pp
    span = mags[:, 0] - mags[:, 2]
    with np.errstate(invalid="ignore", divide="ignore"):
        ts = np.where(eff > 0, tau / eff, np.nan)
        td = np.where(span > 1e-12 * np.maximum(np.abs(mags[:, 0]), 1e-300), (mags[:, 0] - sn) / span, np.nan)
        ratio = np.where(eff > 0, (tau - c) / (mu * eff), np.nan)
    dp = eff - (tau - c) / mu
    flag = np.full(len(n), "", dtype=object)
    with np.errstate(invalid="ignore"):
        flag[ratio >= rules.near_fraction] = "near failure"
        flag[ratio >= 1.0 - 1e-12] = "at failure"
    flag[eff <= 0] = "tensile"
    flag[~np.isfinite(sn)] = ""
    return {"sigma_n_mpa": sn, "tau_mpa": tau, "sigma_n_eff_mpa": eff, "slip_tendency": ts,
            "dilation_tendency": np.clip(td, 0.0, 1.0), "dp_to_failure_mpa": dp, "slip": slip, "flag": flag,
            "sigma1_mpa": mags[:, 0], "sigma2_mpa": mags[:, 1], "sigma3_mpa": mags[:, 2],
            "pore_pressure_mpa": np.asarray(pp, float)}


def predicted_rake(dip_dir, dip, slip):
    """Rake (degrees) of predicted slip directions on planes (NaN where there is no shear)."""
    return vector_to_rake(dip_dir, dip, slip)


__all__ += ["predicted_rake"]

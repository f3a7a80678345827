"""Fault-slip measurements and kinematic axes (numpy only).

A fault-slip datum is a fault plane (``dip_dir``/``dip``) with a slip lineation and a sense.  The
lineation comes in one of three forms:

* ``trend``/``plunge`` of the slickenline as a lower-hemisphere **axis** (plunge 0–90, down
  positive); the sense picks the end the hanging wall moved toward;
* ``rake`` (Aki & Richards 1980, degrees in [−180, 180]): a full direction, sense included;
* field ``pitch`` (0–90) measured in the plane from a named end of the strike line
  (``pitch_from``: a compass point such as ``"N"`` or ``"SW"`` or an azimuth in degrees naming
  the nearer end), turning down the dip; again an axis whose end the sense picks.

The sense is a word — ``normal``, ``reverse`` (``thrust`` is read as reverse), ``dextral``,
``sinistral`` — or one dip-slip and one strike-slip word joined by a hyphen (``normal-dextral``),
or the azimuth (0–360, degrees) the hanging wall moved toward.  :func:`parse_sense` is the one
place that reads it.

Conventions (CONVENTIONS.md): frame (east, north, up); the slip is the hanging wall's motion
relative to the footwall; for a vertical plane the hanging wall is the block on the ``dip_dir``
side.  The normals returned point **into the hanging wall** (the upward normal; for a vertical
plane the horizontal one toward ``dip_dir``), and the slips are unit hanging-wall slip vectors,
so ``(normal, slip)`` pairs can go straight into a stress inversion (Wallace 1951; Bott 1959) or
into :func:`summed_kinematic_tensor`.

Thresholds (misfit tolerance, how clear a component must be for a sense word to speak to it,
how far a motion azimuth may stray) live in :class:`slipsense.core.slip.SenseRules`; the rules
for population axes in :class:`PopulationRules`.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .orientation import dip_dir_to_strike, line_to_vector, normal_to_plane, normalize_azimuth, vector_to_line
from .slip import (
    SENSE_RULES,
    fault_type as _fault_type,
    plane_basis,
    pt_axes,
    rake_to_vector,
    sense_words,
    slip_components,
    vector_to_rake,
)

__all__ = [
    "SENSE_WORDS",
    "Sense",
    "parse_sense",
    "parse_strike_end",
    "FaultSlip",
    "slip_from_measurements",
    "auxiliary_plane",
    "kinematic_axes",
    "KinematicAxes",
    "PopulationRules",
    "POPULATION_RULES",
    "summed_kinematic_tensor",
    "bootstrap_kinematic_axes",
    "population_status",
]

#: Sense words -> (component, sign): "dip" +1 = reverse (up-dip), "strike" +1 = sinistral.
SENSE_WORDS = {
    "normal": ("dip", -1),
    "reverse": ("dip", 1),
    "thrust": ("dip", 1),
    "dextral": ("strike", -1),
    "sinistral": ("strike", 1),
}

_COMPASS = {
    "N": 0.0, "NNE": 22.5, "NE": 45.0, "ENE": 67.5, "E": 90.0, "ESE": 112.5, "SE": 135.0,
    "SSE": 157.5, "S": 180.0, "SSW": 202.5, "SW": 225.0, "WSW": 247.5, "W": 270.0, "WNW": 292.5,
    "NW": 315.0, "NNW": 337.5,
}

_SENSE_HELP = (
    "use normal, reverse (or thrust), dextral or sinistral; one dip-slip and one strike-slip word "
    "joined by '-' (e.g. 'normal-dextral', dominant first); or the azimuth 0-360 the hanging wall "
    "moved toward"
)


def _is_missing(value):
    if value is None:
        return True
    if isinstance(value, str):
        return value.strip() == ""
    try:
        return bool(np.isnan(value))
    except (TypeError, ValueError):
        return False


# --------------------------------------------------------------------------- reading the sense
@dataclass(frozen=True)
class Sense:
    """A parsed sense of slip.

    Attributes
    ----------
    text : str  the value as given (stripped)
    dip_sign : int  +1 reverse, −1 normal, 0 not stated
    strike_sign : int  +1 sinistral, −1 dextral, 0 not stated
    azimuth : float  azimuth (degrees) the hanging wall moved toward, NaN if not given
    words : tuple of str  the canonical words in the order given (``thrust`` -> ``reverse``)
    """

    text: str = ""
    dip_sign: int = 0
    strike_sign: int = 0
    azimuth: float = float("nan")
    words: tuple = ()

    @property
    def given(self):
        return bool(self.words) or bool(np.isfinite(self.azimuth))


def parse_sense(value):
    """Read a sense of slip (a word, two words, or a hanging-wall motion azimuth).

    ``None``, NaN and ``""`` give an empty :class:`Sense`.  Case and surrounding spaces do not
    matter; two words may be joined by a hyphen or a space.

    Raises
    ------
    InputError
        For an unknown word (the message lists the options), two words of the same kind
        (``normal-reverse``), more than two words, or an azimuth outside [0, 360].

    >>> parse_sense("Normal-Dextral").words, parse_sense("normal-dextral").strike_sign
    (('normal', 'dextral'), -1)
    >>> parse_sense(265).azimuth
    265.0
    """
    if _is_missing(value):
        return Sense()
    if isinstance(value, (bool, np.bool_)):
        raise InputError(f"unknown sense {value!r}: {_SENSE_HELP}")
    if isinstance(value, (int, float, np.integer, np.floating)):
        text, number = f"{float(value):g}", float(value)
    else:
        text = str(value).strip()
        try:
            number = float(text)
        except ValueError:
            number = None
    if number is not None:
        if not (np.isfinite(number) and 0.0 <= number <= 360.0):
            raise InputError(f"a hanging-wall motion azimuth must be in [0, 360] degrees, got {text!r}")
        return Sense(text, azimuth=float(normalize_azimuth(number)))
    parts = [p for p in re.split(r"[\s\-]+", text.lower()) if p]
    unknown = [p for p in parts if p not in SENSE_WORDS]
    if unknown or not parts:
        raise InputError(f"unknown sense {text!r}: {_SENSE_HELP}")
    if len(parts) > 2:
        raise InputError(f"sense {text!r} has {len(parts)} words; at most two: {_SENSE_HELP}")
    kinds = [SENSE_WORDS[p][0] for p in parts]
    if len(parts) == 2 and kinds[0] == kinds[1]:
        raise InputError(f"sense {text!r} joins two {'dip' if kinds[0] == 'dip' else 'strike'}-slip "
                         f"words: {_SENSE_HELP}")
    dip_sign = next((SENSE_WORDS[p][1] for p in parts if SENSE_WORDS[p][0] == "dip"), 0)
    strike_sign = next((SENSE_WORDS[p][1] for p in parts if SENSE_WORDS[p][0] == "strike"), 0)
    words = tuple("reverse" if p == "thrust" else p for p in parts)
    return Sense(text, dip_sign, strike_sign, float("nan"), words)


def parse_strike_end(value):
    """Azimuth (degrees) named by a pitch's strike end: a compass point (``"N"``, ``"SW"``,
    ``"NNE"``; 16 points) or a number of degrees (0–360).

    Raises
    ------
    InputError  for anything else.

    >>> parse_strike_end("sw"), parse_strike_end("030")
    (225.0, 30.0)
    """
    if _is_missing(value):
        raise InputError("the strike end the pitch is measured from is missing")
    text = str(value).strip()
    try:
        az = float(text)
    except ValueError:
        key = text.upper()
        if key not in _COMPASS:
            raise InputError(
                f"cannot read the strike end {text!r}: give a compass point ({', '.join(_COMPASS)}) "
                "or an azimuth in degrees"
            ) from None
        return _COMPASS[key]
    if not (np.isfinite(az) and 0.0 <= az <= 360.0):
        raise InputError(f"the strike end azimuth must be in [0, 360] degrees, got {text!r}")
    return float(normalize_azimuth(az))


# --------------------------------------------------------------------------- fault-slip data
@dataclass(frozen=True)
class FaultSlip:
    """Fault-slip data, one entry per datum (arrays of equal length, or scalars for one datum).

    Attributes
    ----------
    dip_dir, dip, strike : degrees (the plane as given; strike by the right-hand rule)
    normal : (N, 3) unit normal into the hanging wall (the upward normal; for a vertical plane
        the one toward ``dip_dir``), (east, north, up)
    slip : (N, 3) unit slip of the hanging wall relative to the footwall (east, north, up);
        NaN where the datum was rejected or is ambiguous
    rake : degrees, (−180, 180], Aki & Richards
    trend, plunge : degrees, direction of the hanging-wall motion: trend 0–360 of its
        horizontal part, plunge + downward and − when the hanging wall moved up (a full
        direction, not an axis)
    misfit_deg : angle (degrees) between the measured lineation and its plane before projection
        (0 for rake and pitch input; NaN where the row could not be read)
    sense : the slip in words (dominant first: ``normal``, ``normal-dextral``, ...; ``""`` where
        no slip); fault_type : ``thrust``, ``oblique normal-dextral``, ... (see
        :func:`slipsense.core.slip.fault_type`)
    status : ``consistent``; ``contradicts: ...`` (the sense disagrees with the lineation or
        rake: the numbers follow the lineation and the word that picked its end, or the rake);
        ``ambiguous: ...`` (the sense cannot pick the end: no slip numbers); ``rejected: ...``
        (bad input or a lineation too far off its plane: no slip numbers)
    bad_input : name of the input that was rejected (``dip_dir``, ``dip``, ``trend``,
        ``plunge``, ``lineation``, ``rake``, ``pitch``, ``pitch_from``, ``sense``) or ``""``
    """

    dip_dir: np.ndarray
    dip: np.ndarray
    strike: np.ndarray
    normal: np.ndarray
    slip: np.ndarray
    rake: np.ndarray
    trend: np.ndarray
    plunge: np.ndarray
    misfit_deg: np.ndarray
    sense: np.ndarray
    fault_type: np.ndarray
    status: np.ndarray
    bad_input: np.ndarray

    @property
    def usable(self):
        """True where the datum is consistent (the data a population analysis should use)."""
        return np.asarray(self.status) == "consistent"

    def __len__(self):
        return int(np.size(self.rake))


def _objects(values, n, name):
    if values is None:
        return [None] * n
    if isinstance(values, (str, bytes)) or np.ndim(values) == 0:
        return [values] * n
    out = list(values)
    if len(out) != n:
        raise InputError(f"{name} has {len(out)} values for {n} data")
    return out


def _floats(values, name):
    if values is None:
        return None
    try:
        return np.asarray(values, dtype=float)
    except (TypeError, ValueError) as exc:
        raise InputError(f"{name} must be numbers (degrees): {exc}") from exc


def _fmt(v):
    return f"{v:g}"


def slip_from_measurements(dip_dir, dip, *, trend=None, plunge=None, rake=None, pitch=None,
                           pitch_from=None, sense=None, misfit_tol_deg=None, rules=SENSE_RULES,
                           strict=None):
    """Slip vectors, rakes and sense words of fault-slip measurements.

    Parameters
    ----------
    dip_dir, dip : array_like (N,), degrees
        The fault planes (dip direction 0–360, dip 0–90).
    trend, plunge : array_like (N,), degrees, optional
        The slip lineation as an axis (plunge 0–90 down positive).  Not exactly in its plane:
        projected onto it when the misfit is at most ``misfit_tol_deg``, rejected otherwise.
    rake : array_like (N,), degrees in [−180, 180], optional
        Aki & Richards rake (a full direction: the sense is checked against it, not needed).
    pitch : array_like (N,), degrees in [0, 90], optional
        Field pitch of the lineation, measured in the plane from the strike end named by
        ``pitch_from`` (compass point or azimuth, see :func:`parse_strike_end`), turning down dip.
        The named direction must be more than ``rules.sense_min_deg`` from square to the strike.
    sense : str, number or sequence (N,) of them, optional
        See :func:`parse_sense`; needed with trend/plunge and pitch (it picks the end of the axis).
        A single word states the sign of that component only; two words state both.
    misfit_tol_deg : float, optional
        Largest accepted angle between a lineation and its plane, degrees; default
        ``rules.misfit_tol_deg`` = 20 (see :class:`~slipsense.core.slip.SenseRules` for why).
    rules : SenseRules
    strict : bool, optional
        Raise :class:`InputError` on the first rejected datum instead of flagging it.  Default:
        strict for scalar input, flagging for arrays.

    Give the lineation in exactly one form.

    Returns
    -------
    FaultSlip
        Arrays (N,), or scalars when every input is a scalar.

    Raises
    ------
    InputError
        No or several lineation forms, mismatched lengths, a bad tolerance; with ``strict`` any
        rejected datum.

    Notes
    -----
    The sense picks the end of an axis from the component it speaks of: a dip-slip word from
    the up-dip component ``a·e``, a strike-slip word from the along-strike component ``a·s``
    (``s`` right-hand-rule strike, ``e`` up-dip), an azimuth from the horizontal part.  With two
    words the one whose component is larger picks the end and the other is checked.  A component
    smaller than ``sin(rules.sense_min_deg)`` cannot pick an end (status ``ambiguous``) and is
    not checked.  The rake follows Aki & Richards (1980); the slip of rake ``λ`` is
    ``cos λ·s + sin λ·e``.

    Examples
    --------
    A normal fault dipping 60° east with a down-dip slickenline:

    >>> d = slip_from_measurements(90.0, 60.0, trend=90.0, plunge=60.0, sense="normal")
    >>> round(d.rake, 6), d.sense, d.status
    (-90.0, 'normal', 'consistent')

    A vertical plane: the hanging wall is the ``dip_dir`` (east) side; it moved north here:

    >>> d = slip_from_measurements(90.0, 90.0, trend=0.0, plunge=0.0, sense="sinistral")
    >>> abs(d.rake) < 1e-9, d.fault_type
    (True, 'sinistral strike-slip')
    >>> slip_from_measurements([90.0], [60.0], rake=[60.0], sense=["normal"]).status[0]
    'contradicts: sense normal but rake +60 is reverse'
    """
    forms = [trend is not None or plunge is not None, rake is not None,
             pitch is not None or pitch_from is not None]
    if sum(forms) != 1:
        raise InputError("give the lineation in exactly one form: trend and plunge, rake, or pitch "
                         "with the strike end it is measured from")
    if forms[0] and (trend is None or plunge is None):
        raise InputError("a lineation given as trend/plunge needs both trend and plunge")
    if forms[2] and (pitch is None or pitch_from is None):
        raise InputError("a lineation given as pitch needs both the pitch and the strike end it is "
                         "measured from")
    tol = float(rules.misfit_tol_deg if misfit_tol_deg is None else misfit_tol_deg)
    if not 0.0 <= tol <= 90.0:
        raise InputError(f"the misfit tolerance must be in [0, 90] degrees, got {tol!r}")

    numbers = {"dip_dir": _floats(dip_dir, "dip_dir"), "dip": _floats(dip, "dip"),
               "trend": _floats(trend, "trend"), "plunge": _floats(plunge, "plunge"),
               "rake": _floats(rake, "rake"), "pitch": _floats(pitch, "pitch")}
    given = {k: v for k, v in numbers.items() if v is not None}
    scalar = all(v.ndim == 0 for v in given.values()) and all(
        x is None or isinstance(x, str) or np.ndim(x) == 0 for x in (sense, pitch_from))
    try:
        shape = np.broadcast(*given.values()).shape
    except ValueError as exc:
        raise InputError(f"the inputs have different lengths: {exc}") from exc
    n = int(np.prod(shape)) if shape else 1
    if len(shape) > 1:
        raise InputError("fault-slip inputs must be one-dimensional (one value per datum)")
    for obj in (sense, pitch_from):
        if obj is not None and not isinstance(obj, str) and np.ndim(obj) == 1 and shape == ():
            n = len(obj)
    arr = {k: np.broadcast_to(np.atleast_1d(v), (n,)).astype(float) for k, v in given.items()}
    if strict is None:
        strict = scalar

    status = np.full(n, "", dtype=object)
    bad = np.full(n, "", dtype=object)

    def flag(mask, role, messages):
        mask = mask & (bad == "")
        for i in np.flatnonzero(mask):
            bad[i] = role
            status[i] = "rejected: " + (messages[i] if isinstance(messages, list) else messages)

    limits = {"dip_dir": (0.0, 360.0), "dip": (0.0, 90.0), "trend": (0.0, 360.0),
              "plunge": (0.0, 90.0), "rake": (-180.0, 180.0), "pitch": (0.0, 90.0)}
    for role, (lo, hi) in limits.items():
        if role not in arr:
            continue
        v = arr[role]
        missing = ~np.isfinite(v)
        flag(missing, role, f"{role} is missing")
        with np.errstate(invalid="ignore"):
            out = ~missing & ((v < lo) | (v > hi))
        flag(out, role, [f"{role} = {_fmt(x)} is outside [{_fmt(lo)}, {_fmt(hi)}] degrees" for x in v])

    senses = []
    sense_objs = _objects(sense, n, "sense")
    for i, value in enumerate(sense_objs):
        try:
            senses.append(parse_sense(value))
        except InputError as exc:
            senses.append(Sense())
            flag(np.arange(n) == i, "sense", str(exc))
    ends = np.full(n, np.nan)
    if forms[2]:
        for i, value in enumerate(_objects(pitch_from, n, "pitch_from")):
            try:
                ends[i] = parse_strike_end(value)
            except InputError as exc:
                flag(np.arange(n) == i, "pitch_from", str(exc))

    plane_ok = ~np.isin(bad, ["dip_dir", "dip"])
    ok = bad == ""
    dd = np.where(plane_ok, arr["dip_dir"], 0.0)
    dp = np.where(plane_ok, arr["dip"], 45.0)
    s, e, nrm = plane_basis(dd, dp)
    smin = np.sin(np.radians(rules.sense_min_deg))
    misfit = np.where(ok, 0.0, np.nan)
    signed = False
    if forms[0]:
        tr = np.where(ok, arr["trend"], 0.0)
        pl = np.where(ok, arr["plunge"], 0.0)
        v = line_to_vector(tr, pl)
        vn = np.sum(v * nrm, axis=-1)
        mis = np.degrees(np.arcsin(np.clip(np.abs(vn), 0.0, 1.0)))
        misfit = np.where(ok, mis, np.nan)
        a = v - vn[:, None] * nrm
        length = np.linalg.norm(a, axis=-1)
        a = a / np.where(length > 0, length, 1.0)[:, None]
        far = ok & (mis > tol)
        flag(far, "lineation",
             [f"lineation {_fmt(t)}/{_fmt(p)} is {m:.1f}° off its plane {_fmt(d1)}/{_fmt(d2)} "
              f"(tolerance {_fmt(tol)}°): check the plane and lineation readings"
              for t, p, m, d1, d2 in zip(tr, pl, mis, dd, dp)])
    elif forms[1]:
        a = rake_to_vector(dd, dp, np.where(ok, arr["rake"], 0.0))
        signed = True
    else:
        strike = np.asarray(dip_dir_to_strike(dd), dtype=float).reshape(n)
        az = np.where(np.isfinite(ends), ends, 0.0)
        diff = np.abs((az - strike + 180.0) % 360.0 - 180.0)  # 0–180 from the RHR strike end
        square = ok & (np.abs(diff - 90.0) < rules.sense_min_deg)
        flag(square, "pitch_from",
             [f"the strike end {o!s} ({_fmt(z)}°) is within {_fmt(rules.sense_min_deg)}° of square "
              f"to the strike line {st:03.0f}–{(st + 180) % 360:03.0f}: it does not name an end"
              for o, z, st in zip(_objects(pitch_from, n, "pitch_from"), az, strike)])
        end = np.where(diff < 90.0, strike, strike + 180.0)
        er = np.radians(end)
        h = np.stack([np.sin(er), np.cos(er), np.zeros(n)], axis=-1)
        pr = np.radians(np.where(ok, arr["pitch"], 0.0))[:, None]
        a = np.cos(pr) * h + np.sin(pr) * (-e)
    ok = bad == ""

    # -- pick the end of the axis (unsigned forms) and check the sense -------------------------
    dip_sign = np.array([x.dip_sign for x in senses], dtype=float)
    strike_sign = np.array([x.strike_sign for x in senses], dtype=float)
    mazi = np.array([x.azimuth for x in senses], dtype=float)
    has_words = (dip_sign != 0) | (strike_sign != 0)
    has_az = np.isfinite(mazi)
    mr = np.radians(np.where(has_az, mazi, 0.0))
    adir = np.stack([np.sin(mr), np.cos(mr)], axis=-1)
    ce = np.sum(a * e, axis=-1)
    cs = np.sum(a * s, axis=-1)
    hlen = np.hypot(a[:, 0], a[:, 1])
    with np.errstate(invalid="ignore", divide="ignore"):
        hdot = np.sum(a[:, :2] * adir, axis=-1) / hlen
    hdot = np.where(hlen > 0, hdot, 0.0)
    amb_msg = np.full(n, "", dtype=object)
    picked_by = np.full(n, "", dtype=object)
    if signed:
        sign = np.ones(n)
    else:
        dip_ok = np.abs(ce) >= smin
        str_ok = np.abs(cs) >= smin
        use_dip = (dip_sign != 0) & dip_ok & ((strike_sign == 0) | ~str_ok | (np.abs(ce) >= np.abs(cs)))
        use_str = (strike_sign != 0) & str_ok & ~use_dip
        az_ok = has_az & (hlen >= smin) & (np.abs(hdot) >= smin)
        picked_by = np.where(use_dip, "dip", np.where(use_str, "strike", ""))
        sign = np.where(use_dip, dip_sign * np.sign(ce),
                        np.where(use_str, strike_sign * np.sign(cs),
                                 np.where(~has_words & az_ok, np.sign(hdot), 0.0)))
        from_strike = np.degrees(np.arcsin(np.clip(np.abs(ce), 0.0, 1.0)))
        from_dip = np.degrees(np.arcsin(np.clip(np.abs(cs), 0.0, 1.0)))
        mind = _fmt(rules.sense_min_deg)
        for i in np.flatnonzero(ok & (sign == 0)):
            sv = senses[i]
            if not sv.given:
                amb_msg[i] = ("no sense given: a lineation alone does not say which way the "
                              "hanging wall moved")
            elif has_words[i] and dip_sign[i] != 0:
                amb_msg[i] = (f"sense {sv.text} cannot pick the end of a lineation "
                              f"{from_strike[i]:.1f}° from the strike line (a dip-slip word needs "
                              f"{mind}°): give its strike-slip sense")
            elif has_words[i]:
                amb_msg[i] = (f"sense {sv.text} cannot pick the end of a lineation "
                              f"{from_dip[i]:.1f}° from the dip line (a strike-slip word needs "
                              f"{mind}°): give its dip-slip sense")
            elif hlen[i] < smin:
                amb_msg[i] = (f"the lineation is within {mind}° of vertical: a hanging-wall motion "
                              "azimuth cannot pick its end; give a sense word")
            else:
                amb_msg[i] = (f"hanging-wall motion azimuth {sv.text} is within {mind}° of square "
                              "to the lineation: it cannot pick its end")
    u = a * sign[:, None]
    resolved = ok & (sign != 0)

    ue = np.sum(u * e, axis=-1)
    us = np.sum(u * s, axis=-1)
    uh = np.hypot(u[:, 0], u[:, 1])
    with np.errstate(invalid="ignore", divide="ignore"):
        udot = np.sum(u[:, :2] * adir, axis=-1) / uh
    contra = np.full(n, "", dtype=object)
    rake_in = arr.get("rake")
    for i in np.flatnonzero(resolved):
        sv = senses[i]
        if not sv.given:
            continue
        actual_dip = "reverse" if ue[i] > 0 else "normal"
        actual_str = "sinistral" if us[i] > 0 else "dextral"
        wrong = []
        if dip_sign[i] != 0 and abs(ue[i]) >= smin and np.sign(ue[i]) != dip_sign[i]:
            wrong.append(actual_dip)
        if strike_sign[i] != 0 and abs(us[i]) >= smin and np.sign(us[i]) != strike_sign[i]:
            wrong.append(actual_str)
        if wrong:
            if signed:
                contra[i] = f"sense {sv.text} but rake {rake_in[i]:+g} is {'-'.join(wrong)}"
            else:
                picked = actual_dip if picked_by[i] == "dip" else actual_str
                contra[i] = f"sense {sv.text}: the {picked} end of the lineation is {'-'.join(wrong)}"
        elif has_az[i] and uh[i] >= smin:
            ang = np.degrees(np.arccos(np.clip(udot[i], -1.0, 1.0)))
            if ang > rules.motion_azimuth_max_deg:
                trend_u = np.degrees(np.arctan2(u[i, 0], u[i, 1])) % 360.0
                contra[i] = (f"hanging-wall motion azimuth {sv.text} is {ang:.0f}° from the slip "
                             f"trend {trend_u:.0f} (more than {_fmt(rules.motion_azimuth_max_deg)}°)")

    for i in range(n):
        if bad[i]:
            continue
        if amb_msg[i]:
            status[i] = "ambiguous: " + amb_msg[i]
        elif contra[i]:
            status[i] = "contradicts: " + contra[i]
        else:
            status[i] = "consistent"

    slip = np.where(resolved[:, None], u, np.nan)
    comp = slip_components(dd, dp, np.where(resolved[:, None], u, 0.0))
    rk = np.where(resolved, vector_to_rake(dd, dp, np.where(resolved[:, None], u, s)), np.nan)
    result = FaultSlip(
        dip_dir=np.where(plane_ok, arr["dip_dir"], np.nan),
        dip=np.where(plane_ok, arr["dip"], np.nan),
        strike=np.where(plane_ok, np.asarray(dip_dir_to_strike(dd), float).reshape(n), np.nan),
        normal=np.where(plane_ok[:, None], nrm, np.nan),
        slip=slip,
        rake=rk,
        trend=np.where(resolved, comp["slip_trend"], np.nan),
        plunge=np.where(resolved, comp["slip_plunge"], np.nan),
        misfit_deg=np.where(ok | (bad == "lineation"), misfit, np.nan),
        sense=np.asarray(sense_words(rk, rules=rules), dtype=object).reshape(n),
        fault_type=np.asarray(_fault_type(rk, np.where(plane_ok, arr["dip"], np.nan), rules=rules),
                              dtype=object).reshape(n),
        status=status,
        bad_input=bad,
    )
    if strict:
        rejected = np.flatnonzero(bad != "")
        if rejected.size:
            i = int(rejected[0])
            where = "" if scalar else f"datum {i}: "
            raise InputError(where + status[i][len("rejected: "):])
    if scalar:
        return FaultSlip(**{k: _first(getattr(result, k)) for k in result.__dataclass_fields__})
    return result


def _first(v):
    v = np.asarray(v)
    x = v[0]
    if v.ndim == 1:
        return x.item() if hasattr(x, "item") else x
    return x


def auxiliary_plane(dip_dir, dip, rake):
    """The auxiliary plane of fault planes with slip of ``rake`` (all degrees).

    Its normal is the slip vector; its slip is the fault normal, with signs such that the
    double couple (the kinematic tensor ``n u + u n``) is the same.

    Returns
    -------
    dip_dir, dip, rake : arrays (or floats), degrees.  For a vertical auxiliary plane the
    dip direction is the horizontal direction of the slip vector.

    >>> [round(x, 6) for x in auxiliary_plane(90.0, 45.0, 90.0)]   # 45° thrust: the other 45° plane
    [270.0, 45.0, 90.0]
    """
    n = plane_basis(dip_dir, dip)[2]
    u = rake_to_vector(dip_dir, dip, rake)
    flip = np.where(u[..., 2] < -1e-12, -1.0, 1.0)[..., None]
    n2, u2 = u * flip, n * flip
    dd2, dp2 = normal_to_plane(n2)
    rk2 = vector_to_rake(dd2, dp2, u2)
    return dd2, dp2, rk2


def kinematic_axes(data):
    """P, T and B axes of each datum of a :class:`FaultSlip` (Marrett & Allmendinger 1990).

    Returns the dict of :func:`slipsense.core.slip.pt_axes` (``p_trend``, ``p_plunge``, ...,
    lower-hemisphere degrees, and unit vectors ``p``, ``t``, ``b``), NaN where there is no slip.
    """
    slip = np.atleast_2d(np.asarray(data.slip, float))
    dd = np.atleast_1d(np.asarray(data.dip_dir, float))
    dp = np.atleast_1d(np.asarray(data.dip, float))
    good = np.all(np.isfinite(slip), axis=-1) & np.isfinite(dd) & np.isfinite(dp)
    ax = pt_axes(np.where(good, dd, 0.0), np.where(good, dp, 45.0),
                 np.where(good[:, None], slip, [0.0, 1.0, 0.0]) if slip.size else slip)
    out = {}
    for k, v in ax.items():
        v = np.asarray(v, float)
        out[k] = np.where(good[:, None] if v.ndim == 2 else good, v, np.nan)
    if np.ndim(data.rake) == 0:
        out = {k: (v[0] if v.ndim == 2 else float(v[0])) for k, v in out.items()}
    return out


# --------------------------------------------------------------------------- populations
@dataclass(frozen=True)
class PopulationRules:
    """Rules of the population axes (the one place they live).

    * ``min_data`` (5): fewer usable data make the bootstrap cones rough (judgement: a resample
      of four data repeats some of them in most draws).
    * ``resolved_ratio`` (0.1): two principal axes whose eigenvalues differ by less than this
      fraction of the T–P eigenvalue spread are not resolved from each other (judgement: the
      tensor is then close to axially symmetric and those two axes can swap).
    """

    min_data: int = 5
    resolved_ratio: float = 0.1


POPULATION_RULES = PopulationRules()


@dataclass(frozen=True)
class KinematicAxes:
    """Principal axes of a summed kinematic tensor.

    Attributes
    ----------
    tensor : (3, 3) the weighted mean of ``(n uᵀ + u nᵀ)/2`` (east, north, up); eigenvalues in
        [−0.5, 0.5], +0.5 for a lone datum's T axis
    eigenvalues : (3,) of T, B, P (largest, intermediate, smallest)
    t, b, p : (3,) unit vectors, lower hemisphere (down or horizontal)
    t_trend, t_plunge, b_trend, b_plunge, p_trend, p_plunge : degrees
    t_cone95, b_cone95, p_cone95 : half-angle (degrees) of the bootstrap confidence cone of each
        axis (NaN without a bootstrap or with fewer than two data)
    n_data : int; resamples : int (0 without a bootstrap); level : percent
    """

    tensor: np.ndarray
    eigenvalues: np.ndarray
    t: np.ndarray
    b: np.ndarray
    p: np.ndarray
    t_trend: float
    t_plunge: float
    b_trend: float
    b_plunge: float
    p_trend: float
    p_plunge: float
    t_cone95: float = float("nan")
    b_cone95: float = float("nan")
    p_cone95: float = float("nan")
    n_data: int = 0
    resamples: int = 0
    level: float = 95.0


def _pairs(normals, slips, weights):
    n = np.asarray(normals, dtype=float).reshape(-1, 3)
    u = np.asarray(slips, dtype=float).reshape(-1, 3)
    if n.shape != u.shape:
        raise InputError(f"normals and slips differ in number: {n.shape[0]} and {u.shape[0]}")
    if n.shape[0] == 0:
        raise InputError("no fault-slip data: the summed kinematic tensor needs at least one datum")
    if not (np.all(np.isfinite(n)) and np.all(np.isfinite(u))):
        raise InputError("normals and slips must be finite: leave out data without a slip")
    ln = np.linalg.norm(n, axis=-1)
    lu = np.linalg.norm(u, axis=-1)
    if np.any(ln == 0) or np.any(lu == 0):
        raise InputError("normals and slips must not be zero vectors")
    n = n / ln[:, None]
    u = u / lu[:, None]
    if weights is None:
        w = np.ones(n.shape[0])
    else:
        w = np.broadcast_to(np.asarray(weights, dtype=float), (n.shape[0],)).copy()
        if not (np.all(np.isfinite(w)) and np.all(w >= 0) and w.sum() > 0):
            raise InputError("weights must be finite, non-negative and not all zero")
    m = 0.5 * (n[:, :, None] * u[:, None, :] + u[:, :, None] * n[:, None, :])
    return m.reshape(-1, 9), w


def _lower(v):
    v = np.asarray(v, float)
    return np.where((v[..., 2:3] > 1e-12), -v, v)


def _axes_from_tensor(tensor):
    vals, vecs = np.linalg.eigh(tensor)  # ascending: P, B, T
    return vals[..., ::-1], _lower(np.swapaxes(vecs[..., ::-1], -1, -2))  # rows T, B, P


def summed_kinematic_tensor(normals, slips, weights=None):
    """Principal axes of the summed kinematic (moment-like) tensor of fault-slip data.

    Parameters
    ----------
    normals : (N, 3) normals into the hanging wall (any length; ``FaultSlip.normal``)
    slips : (N, 3) hanging-wall slip directions (any length; ``FaultSlip.slip``)
    weights : (N,), optional, e.g. displacement magnitudes; default equal weights

    Returns
    -------
    KinematicAxes (no cones; see :func:`bootstrap_kinematic_axes`)

    Notes
    -----
    Marrett & Allmendinger (1990), "Kinematic analysis of fault-slip data", J. Struct. Geol.
    12(8): each datum contributes the symmetric tensor ``(n uᵀ + u nᵀ)/2``, whose eigenvectors
    are its T (``∝ n + u``, eigenvalue +½), P (``∝ n − u``, −½) and B (``n × u``, 0) axes.  The
    (weighted) sum's largest eigenvalue gives T, the smallest P, the intermediate B.  Flipping
    both ``n`` and ``u`` (the footwall's view) leaves the tensor unchanged, as does swapping them
    (the auxiliary plane): fault-slip data cannot tell the fault plane from its auxiliary plane.

    >>> ax = summed_kinematic_tensor([[0.866025, 0.0, 0.5]], [[0.5, 0.0, -0.866025]])
    >>> round(ax.t_trend, 3), round(ax.t_plunge, 3), round(ax.p_trend, 3), round(ax.p_plunge, 3)
    (90.0, 15.0, 270.0, 75.0)
    """
    m, w = _pairs(normals, slips, weights)
    tensor = (w @ m / w.sum()).reshape(3, 3)
    vals, axes = _axes_from_tensor(tensor)
    tp = [vector_to_line(v) for v in axes]
    return KinematicAxes(tensor, vals, axes[0], axes[1], axes[2],
                         float(tp[0][0]), float(tp[0][1]), float(tp[1][0]), float(tp[1][1]),
                         float(tp[2][0]), float(tp[2][1]), n_data=int(len(w)))


def _axial_deg(a, b):
    cross = np.linalg.norm(np.cross(a, b), axis=-1)
    return np.degrees(np.arctan2(cross, np.abs(np.sum(a * b, axis=-1))))


def bootstrap_kinematic_axes(normals, slips, weights=None, *, resamples=500, seed=0, level=95.0):
    """Summed kinematic tensor axes with bootstrap confidence cones.

    Parameters
    ----------
    normals, slips, weights : as :func:`summed_kinematic_tensor`
    resamples : int, number of bootstrap resamples (data drawn with replacement)
    seed : int; the result is reproducible for a seed
    level : percent; the cone half-angle of each axis is this percentile of the angles (as axes)
        between the resampled axis and the axis of all the data

    Returns
    -------
    KinematicAxes with ``t_cone95``, ``b_cone95``, ``p_cone95`` (degrees; NaN for one datum or
    ``resamples`` 0)

    Notes
    -----
    Non-parametric bootstrap (Efron 1979) of the Marrett & Allmendinger (1990) tensor; all
    resamples at once: the draw counts (resamples × N, multinomial) times the weights give the
    resampled tensors in one matrix product, and one batched eigen-decomposition gives their axes.
    Where two eigenvalues are close the two axes swap between resamples and their cones widen
    toward 90°: an honest sign that those axes are not resolved.
    """
    m, w = _pairs(normals, slips, weights)
    base = summed_kinematic_tensor(normals, slips, weights)
    resamples = int(resamples)
    if resamples < 0:
        raise InputError(f"resamples must be >= 0, got {resamples}")
    if not 0 < float(level) < 100:
        raise InputError(f"the confidence level must be in (0, 100) percent, got {level!r}")
    n = len(w)
    cones = [np.nan, np.nan, np.nan]
    if resamples > 0 and n > 1:
        rng = np.random.default_rng(seed)
        counts = rng.multinomial(n, np.full(n, 1.0 / n), size=resamples).astype(float)
        cw = counts * w
        total = cw.sum(axis=1)
        total = np.where(total > 0, total, 1.0)  # an all-zero-weight draw gives a zero tensor
        tensors = ((cw @ m) / total[:, None]).reshape(-1, 3, 3)
        _, axes = _axes_from_tensor(tensors)  # (R, 3, 3): rows T, B, P
        ref = np.stack([base.t, base.b, base.p])
        ang = _axial_deg(axes, ref[None, :, :])  # (R, 3)
        cones = list(np.percentile(ang, float(level), axis=0))
    return KinematicAxes(base.tensor, base.eigenvalues, base.t, base.b, base.p,
                         base.t_trend, base.t_plunge, base.b_trend, base.b_plunge,
                         base.p_trend, base.p_plunge, float(cones[0]), float(cones[1]),
                         float(cones[2]), n, resamples if n > 1 else 0, float(level))


def population_status(n_used, eigenvalues=None, rules=POPULATION_RULES):
    """Words on how far population axes can be trusted.

    ``"no usable data"``, ``"one datum: no confidence cones"``, ``"few data (n < 5): cones are
    rough"``, ``"T and B not resolved"``/``"P and B not resolved"`` (eigenvalues within
    ``rules.resolved_ratio`` of the T–P spread; axially symmetric populations), or ``"ok"``;
    several joined by ``"; "``.
    """
    if n_used == 0:
        return "no usable data"
    notes = []
    if n_used == 1:
        notes.append("one datum: no confidence cones")
    elif n_used < rules.min_data:
        notes.append(f"few data (n < {rules.min_data}): cones are rough")
    if eigenvalues is not None and n_used > 1:
        lt, lb, lp = (float(x) for x in eigenvalues)
        spread = lt - lp
        if not spread > 1e-12:
            notes.append("axes not resolved (the tensor is zero: the data cancel)")
        else:
            if (lt - lb) < rules.resolved_ratio * spread:
                notes.append("T and B not resolved")
            if (lb - lp) < rules.resolved_ratio * spread:
                notes.append("P and B not resolved")
    return "; ".join(notes) if notes else "ok"

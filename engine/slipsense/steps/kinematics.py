"""Step for fault-slip data: slip, rake, sense and P/T/B axes per datum, and population axes
(numpy only)."""
from __future__ import annotations

import dataclasses

import numpy as np

from ..core.kinematics import (
    POPULATION_RULES,
    bootstrap_kinematic_axes,
    kinematic_axes,
    population_status,
    slip_from_measurements,
)
from ..core.slip import SENSE_RULES
from ..errors import DataError, InputError
from ..tables.kinematics import fault_slip_table, kinematic_axes_table
from .base import StepResult

__all__ = ["fault_slip", "read_fault_slip", "group_label", "group_labels", "DEFAULT_FAULT_FIELD", "STATUS_KINDS"]

#: Field copied to ``fault_id`` when the caller names none and the layer has it.
DEFAULT_FAULT_FIELD = "fault_id"

#: Status kinds of a datum (the first word of ``status``).
STATUS_KINDS = ("consistent", "contradicts", "ambiguous", "rejected")


def group_label(value):
    """Group label as text (None for NULL/NaN/empty); integers stored as floats lose their '.0'."""
    if value is None:
        return None
    if isinstance(value, (float, np.floating)):
        if np.isnan(value):
            return None
        if float(value).is_integer():
            return str(int(value))
    text = str(value)
    return text if text.strip() else None


def _numeric(values, role, n):
    """Raw field values (numbers, numeric text, None) -> floats; text that is no number -> NaN
    with a message per row."""
    if values is None:
        return None, {}
    raw = list(values) if not np.ndim(values) == 0 else [values] * n
    out = np.full(len(raw), np.nan)
    bad = {}
    for i, v in enumerate(raw):
        if v is None:
            continue
        if isinstance(v, (bool, np.bool_)):
            bad[i] = f"{role} = {v!r} is not a number"
            continue
        try:
            out[i] = float(v)
        except (TypeError, ValueError):
            if str(v).strip():
                bad[i] = f"{role} = {str(v)!r} is not a number"
    return out, bad


def _named(message, role, fields):
    """Replace the leading input name of a core message by its field name."""
    name = fields.get(role)
    if role == "lineation":
        t, p = fields.get("trend"), fields.get("plunge")
        return f"fields {t!r}/{p!r}: {message}" if t and p else message
    if name and message.startswith(role + " "):
        return f"field {name!r}" + message[len(role):]
    if name:
        return f"field {name!r}: {message}"
    return message


def read_fault_slip(station_ids, dip_dir, dip, *, feature_ids=None, trend=None, plunge=None, rake=None,
                    pitch=None, pitch_from=None, sense=None, labels=None, fields=None, misfit_tol_deg=None,
                    rules=SENSE_RULES, rejected_note="datum not used", flagged_note="datum not used"):
    """Raw field values of fault-slip stations -> ``(ids, FaultSlip, warnings)``.

    The one reading of stations shared by ``fault-slip``, ``stress-inversion`` and ``anderson``
    (through :func:`slipsense.core.kinematics.slip_from_measurements`): text that is no number,
    missing values and lineations far off their planes are flagged per datum, never fatal.  Only
    data whose ``status`` is ``consistent`` should enter a stress inversion.  ``rejected_note`` and
    ``flagged_note`` end the warnings of rejected and of other non-consistent data (``None``: no
    ending).
    """
    raw_ids = list(station_ids)
    n = len(raw_ids)
    if n == 0:
        raise DataError("no fault-slip data: the station layer is empty")
    fallback = list(range(n)) if feature_ids is None else list(feature_ids)
    ids = [group_label(v) or str(f) for v, f in zip(raw_ids, fallback)]
    fields = dict(fields or {})
    labels = [f"station {i}" for i in ids] if labels is None else [str(x) for x in labels]
    num, text_bad = {}, {}
    for role, values in (("dip_dir", dip_dir), ("dip", dip), ("trend", trend), ("plunge", plunge),
                         ("rake", rake), ("pitch", pitch)):
        arr, bad = _numeric(values, role, n)
        num[role] = arr
        for i, msg in bad.items():
            text_bad.setdefault(i, (role, msg))
    data = slip_from_measurements(
        num["dip_dir"], num["dip"], trend=num["trend"], plunge=num["plunge"], rake=num["rake"],
        pitch=num["pitch"], pitch_from=None if pitch_from is None else list(pitch_from),
        sense=None if sense is None else list(sense), misfit_tol_deg=misfit_tol_deg, rules=rules,
        strict=False)
    status = np.array(data.status, dtype=object)
    bad_input = np.array(data.bad_input, dtype=object)
    for i, (role, msg) in text_bad.items():
        status[i] = "rejected: " + msg
        bad_input[i] = role
    if text_bad:
        data = dataclasses.replace(data, status=status, bad_input=bad_input)
    warnings = []
    for i in range(n):
        st = status[i]
        if st == "consistent":
            continue
        if st.startswith("rejected: "):
            warnings.append(f"{labels[i]}: {_named(st[len('rejected: '):], bad_input[i], fields)}"
                            + (f"; {rejected_note}" if rejected_note else ""))
        else:
            warnings.append(f"{labels[i]}: {st}" + (f"; {flagged_note}" if flagged_note else ""))
    return ids, data, warnings


def _groups(group_values, n, labels, fields, warnings):
    if group_values is None:
        return ["all"] * n
    glabels = [group_label(v) for v in group_values]
    if len(glabels) != n:
        raise InputError(f"group values: {len(glabels)} for {n} stations")
    for i, g in enumerate(glabels):
        if g is None:
            warnings.append(f"{labels[i]}: field {fields.get('group', 'group')!r} is empty; the datum belongs to no group")
    return glabels


def group_labels(group_values, n, labels, fields, warnings):
    """Group label of each datum (text; None for NULL, with a warning); one group "all" when no
    group field is given."""
    if group_values is None:
        return ["all"] * n
    glabels = [group_label(v) for v in group_values]
    if len(glabels) != n:
        raise InputError(f"group values: {len(glabels)} for {n} stations")
    for i, g in enumerate(glabels):
        if g is None:
            warnings.append(f"{labels[i]}: field {fields.get('group', 'group')!r} is empty; the datum belongs to no group")
    return glabels


def fault_slip(station_ids, dip_dir, dip, *, feature_ids=None, trend=None, plunge=None, rake=None, pitch=None,
               pitch_from=None, sense=None, fault_ids=None, group_values=None, xy=None, labels=None,
               fields=None, misfit_tol_deg=None, resamples=500, seed=0, rules=SENSE_RULES,
               population_rules=POPULATION_RULES):
    """Fault-slip data: slip and kinematic axes per datum, summed-tensor axes per group.

    Parameters
    ----------
    station_ids : sequence (N,) of identifiers (text; None where NULL)
    feature_ids : sequence (N,), optional; the id of a station whose identifier is NULL
    dip_dir, dip : sequences (N,), degrees; raw field values (numbers, numeric text or None)
    trend, plunge | rake | pitch, pitch_from : the lineation in one form (see
        :func:`slipsense.core.kinematics.slip_from_measurements`), raw field values
    sense : sequence (N,) of sense words or motion azimuths, optional
    fault_ids : sequence (N,), optional; copied to ``fault_id``
    group_values : sequence (N,), optional; one population per distinct value (as text, sorted);
        default one population "all".  NULL values belong to no group.
    xy : (N, 2) metres, station positions (geometry)
    labels : sequence (N,) of str naming each station in messages (default ``station <id>``)
    fields : dict role -> field name (``dip_dir``, ``dip``, ``trend``, ...) for messages
    misfit_tol_deg : lineation-to-plane tolerance, degrees (default ``rules.misfit_tol_deg``, 20)
    resamples, seed : bootstrap of the population axes (reproducible for a seed)

    Returns
    -------
    StepResult with tables ``fault_slip`` (one row per station) and ``kinematic_axes`` (one row
    per group).  Only ``consistent`` data enter the population axes.  Per-datum problems are
    warnings (naming the station and field) and the ``status`` field, never errors.
    """
    fields = dict(fields or {})
    ids, data, warnings = read_fault_slip(
        station_ids, dip_dir, dip, feature_ids=feature_ids, trend=trend, plunge=plunge, rake=rake, pitch=pitch,
        pitch_from=pitch_from, sense=sense, labels=labels, fields=fields, misfit_tol_deg=misfit_tol_deg,
        rules=rules, rejected_note="datum rejected", flagged_note=None)
    n = len(ids)
    labels = [f"station {i}" for i in ids] if labels is None else [str(x) for x in labels]
    resamples = int(resamples)
    if resamples < 0:
        raise InputError(f"resamples must be >= 0, got {resamples}")
    axes = kinematic_axes(data)

    xy = np.zeros((n, 2)) if xy is None else np.asarray(xy, dtype=float).reshape(n, 2)
    glabels = group_labels(group_values, n, labels, fields, warnings)
    order = sorted({g for g in glabels if g is not None})
    usable = data.usable
    garr = np.array(["" if g is None else g for g in glabels], dtype=object)
    results, n_used, n_total, gstatus, gxy = [], [], [], [], []
    for g in order:
        member = garr == g
        use = member & usable
        k = int(use.sum())
        n_used.append(k)
        n_total.append(int(member.sum()))
        gxy.append(xy[use].mean(axis=0) if k else xy[member].mean(axis=0))
        if k == 0:
            results.append(None)
            gstatus.append(population_status(0, rules=population_rules))
            continue
        r = bootstrap_kinematic_axes(data.normal[use], data.slip[use], resamples=resamples, seed=seed)
        results.append(r)
        gstatus.append(population_status(k, r.eigenvalues, rules=population_rules))
    for g, st in zip(order, gstatus):
        if st != "ok":
            warnings.append(f"group {g}: kinematic axes: {st}")

    fids = [""] * n if fault_ids is None else [group_label(v) or "" for v in fault_ids]
    given = [""] * n if sense is None else [(group_label(v) or "").strip() for v in sense]
    tables = {
        "fault_slip": fault_slip_table(ids, fids, [g or "" for g in glabels], given, data, axes, xy),
        "kinematic_axes": kinematic_axes_table(order, results, n_used, n_total, gstatus, gxy),
    }
    kinds = {k: int(sum(1 for s in data.status if str(s).split(":")[0] == k)) for k in STATUS_KINDS}
    summary = {"data": n, "status": kinds, "groups": len(order),
               "misfit_tol_deg": float(rules.misfit_tol_deg if misfit_tol_deg is None else misfit_tol_deg),
               "resamples": resamples, "seed": int(seed)}
    return StepResult(tables, summary, warnings)

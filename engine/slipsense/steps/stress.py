"""Steps for stress: fault-slip stress inversion, slip and dilation tendency of planes, the
Andersonian check, and the stress states they use (numpy only)."""
from __future__ import annotations

import dataclasses

import numpy as np

from ..core.orientation import plane_to_normal
from ..core.slip import sense_words
from ..core.stress import (
    ANDERSON_RULES,
    BYERLEE_FRICTION,
    INVERSION_RULES,
    REACTIVATION_RULES,
    anderson_angles,
    anderson_check,
    andersonian_axes,
    axes_from_lines,
    axes_to_lines,
    check_friction,
    conjugate_planes,
    driving_axes,
    fault_reactivation,
    gradient_state,
    invert_stress,
    inverted_state,
    predicted_rake,
    principal_state,
    regime_code,
    resolve_traction,
)
from ..errors import DataError, InputError, SlipsenseError
from ..tables.stress import anderson_table, slip_tendency_table, stress_axes_table, stress_misfit_table
from .base import StepResult
from .kinematics import group_label, group_labels, read_fault_slip

__all__ = ["stress_inversion", "stress_state", "slip_tendency", "anderson", "read_fault_slip", "plane_labels",
           "PLANE_ID_FIELDS"]

#: Fields that name a plane, in the order they are looked for (``window_no`` is appended for windows).
PLANE_ID_FIELDS = ("trace_id", "plane_id", "station_id", "fault_id")


def plane_labels(columns, feature_ids, id_field=None):
    """Identifiers of planes: the ``id_field`` values, else the first of :data:`PLANE_ID_FIELDS`
    present in ``columns`` (with ``:<window_no>`` for a layer of along-trace windows), else the
    feature ids.  ``columns``: dict field name -> sequence of values."""
    if id_field:
        return [group_label(v) or str(f) for v, f in zip(columns[id_field], feature_ids)]
    for name in PLANE_ID_FIELDS:
        if name in columns:
            ids = [group_label(v) or str(f) for v, f in zip(columns[name], feature_ids)]
            if "window_no" in columns:
                ids = [f"{i}:{group_label(w)}" for i, w in zip(ids, columns["window_no"])]
            return ids
    return [str(f) for f in feature_ids]


def stress_inversion(station_ids, dip_dir, dip, *, feature_ids=None, trend=None, plunge=None, rake=None,
                     pitch=None, pitch_from=None, sense=None, group_values=None, xy=None, labels=None,
                     fields=None, misfit_tol_deg=None, resamples=1000, seed=0, refine=True,
                     rules=INVERSION_RULES):
    """Reduced stress tensor of each group of fault-slip data (Michael 1984, bootstrap cones).

    Parameters
    ----------
    station_ids, dip_dir, dip, trend, plunge | rake | pitch, pitch_from, sense, feature_ids,
    labels, fields, misfit_tol_deg : raw field values and names, as for
        :func:`slipsense.steps.fault_slip` (one lineation form)
    group_values : sequence (N,), optional; one inversion per distinct value (as text, sorted),
        e.g. a deformation phase; default one group ``all``.  NULL values belong to no group.
    xy : (N, 2) metres, station positions (geometry of the misfit layer; group means for axes)
    resamples, seed : bootstrap resamples (reproducible for a seed)
    refine : iterative |τ| rescaling of the Michael solution (see
        :func:`slipsense.core.stress.invert_stress`); False = plain Michael (1984)

    Returns
    -------
    StepResult with tables ``stress_axes`` (one row per group) and ``stress_misfits`` (one row per
    datum).  A group that cannot be inverted (fewer than 4 usable data, parallel planes, a
    singular system) gets an ``ill-posed`` row with NULL axes and a warning; when no group can be
    inverted the step raises :class:`DataError` with the reason.
    """
    resamples = int(resamples)
    if resamples < 0:
        raise InputError(f"resamples must be >= 0, got {resamples}")
    fields = dict(fields or {})
    ids, data, warnings = read_fault_slip(
        station_ids, dip_dir, dip, feature_ids=feature_ids, trend=trend, plunge=plunge, rake=rake, pitch=pitch,
        pitch_from=pitch_from, sense=sense, labels=labels, fields=fields, misfit_tol_deg=misfit_tol_deg)
    n = len(ids)
    labels = [f"station {i}" for i in ids] if labels is None else [str(x) for x in labels]
    glabels = group_labels(group_values, n, labels, fields, warnings)
    xy = np.zeros((n, 2)) if xy is None else np.asarray(xy, dtype=float).reshape(n, 2)
    garr = np.array(["" if g is None else g for g in glabels], dtype=object)
    order = sorted({g for g in glabels if g is not None})
    usable = np.asarray(data.usable, bool)

    cols = {"station_id": ids, "group_id": garr, "status": np.asarray(data.status, dtype=object),
            "used": np.zeros(n, int), "dip_dir": data.dip_dir, "dip": data.dip, "rake": data.rake,
            "slip_trend": data.trend, "slip_plunge": data.plunge,
            "predicted_rake": np.full(n, np.nan), "misfit": np.full(n, np.nan),
            "shear_reduced": np.full(n, np.nan), "normal_reduced": np.full(n, np.nan),
            "flag": np.full(n, "", dtype=object)}
    results, reasons, n_total, gxy, per_group = [], [], [], [], {}
    for g in order:
        member = garr == g
        use = member & usable
        n_total.append(int(member.sum()))
        gxy.append(xy[use].mean(axis=0) if use.any() else xy[member].mean(axis=0))
        try:
            r = invert_stress(data.normal[use], data.slip[use], resamples=resamples, seed=seed, refine=refine,
                              rules=rules)
        except SlipsenseError as exc:
            msg = str(exc)
            if int(use.sum()) < int(member.sum()):
                msg += f" ({int(use.sum())} of {int(member.sum())} data in the group are usable)"
            results.append(None)
            reasons.append(msg)
            warnings.append(f"group {g}: {msg}; no stress (ill-posed)")
            per_group[g] = {"quality": "ill-posed", "reason": msg}
            continue
        results.append(r)
        reasons.append(r.reason)
        warnings.extend(f"group {g}: {w}" for w in r.warnings)
        k = np.flatnonzero(use)
        cols["used"][k] = 1
        cols["misfit"][k] = r.misfit
        cols["shear_reduced"][k] = r.shear
        sn, _, _ = resolve_traction(r.tensor, data.normal[use])
        cols["normal_reduced"][k] = sn
        cols["predicted_rake"][k] = predicted_rake(data.dip_dir[use], data.dip[use], r.predicted_slip)
        large = r.misfit > rules.mixed_misfit_deg
        cols["flag"][k[large]] = f"misfit > {rules.mixed_misfit_deg:g}"
        per_group[g] = {
            "n_data": r.n_data, "quality": r.quality,
            "sigma1": f"{r.trend[0]:05.1f}/{r.plunge[0]:04.1f}", "sigma2": f"{r.trend[1]:05.1f}/{r.plunge[1]:04.1f}",
            "sigma3": f"{r.trend[2]:05.1f}/{r.plunge[2]:04.1f}",
            "cones95": [None if not np.isfinite(c) else round(float(c), 2) for c in r.cone95],
            "phi": round(r.phi, 3),
            "phi_95": [None if not np.isfinite(v) else round(float(v), 3) for v in (r.phi_lo95, r.phi_hi95)],
            "regime": r.regime, "shmax_azimuth": None if not np.isfinite(r.shmax_azimuth) else round(r.shmax_azimuth, 1),
            "misfit_mean": round(float(np.mean(r.misfit)), 2), "mixed": r.mixed,
        }
    if order and all(r is None for r in results):
        if len(order) == 1:
            raise DataError(reasons[0] if group_values is None else f"group {order[0]}: {reasons[0]}")
        raise DataError("no group could be inverted: " + "; ".join(f"group {g}: {m}" for g, m in zip(order, reasons)))
    if not order:
        raise DataError("no fault-slip datum belongs to a group: the group field is empty everywhere")
    method = "Michael (1984) with |tau| rescaling" if refine else "Michael (1984)"
    tables = {
        "stress_axes": stress_axes_table(order, results, n_total, gxy, reasons, method=method, seed=seed,
                                         large_misfit_deg=rules.mixed_misfit_deg),
        "stress_misfits": stress_misfit_table(cols, xy),
    }
    summary = {"data": n, "usable": int(usable.sum()), "groups": per_group, "resamples": resamples,
               "seed": int(seed), "method": method}
    return StepResult(tables, summary, warnings)


def _line(value, name):
    try:
        t, p = (float(v) for v in value)
    except (TypeError, ValueError):
        raise InputError(f"{name} must be a trend and a plunge in degrees, got {value!r}") from None
    return t, p


def stress_state(*, sigma1_mpa=None, sigma2_mpa=None, sigma3_mpa=None, sigma1_axis=None, sigma3_axis=None,
                 pore_pressure_mpa=None, shmax_azimuth=None, regime=None, sv_gradient=None,
                 shmax_gradient=None, shmin_gradient=None, pore_pressure_gradient=None, inverted=None,
                 friction=BYERLEE_FRICTION):
    """The stress state of a slip-tendency run, given one of three ways.

    * **principal**: ``sigma1_mpa``, ``sigma2_mpa``, ``sigma3_mpa`` (total stresses, MPa,
      compression positive), ``sigma1_axis`` and ``sigma3_axis`` (trend, plunge) degrees,
      ``pore_pressure_mpa``;
    * **gradients** (Andersonian, zero at the surface): ``shmax_azimuth`` (degrees),
      ``sv_gradient``, ``shmax_gradient``, ``shmin_gradient``, ``pore_pressure_gradient``
      (MPa/km), optional ``regime`` (NF / SS / TF) checked against their order;
    * **inverted**: ``inverted`` = a dict with ``sigma1_trend``, ``sigma1_plunge``,
      ``sigma3_trend``, ``sigma3_plunge`` and ``phi`` (a row of ``stress_axes``), plus either
      ``sv_gradient`` and ``pore_pressure_gradient`` (frictional-limit magnitudes for
      ``friction``) or ``sigma1_mpa``, ``sigma3_mpa`` and ``pore_pressure_mpa``.

    Returns a :class:`~slipsense.core.stress.StressState`.  Mixed or incomplete specifications
    raise :class:`InputError` naming what is missing.
    """
    principal = {"sigma1": sigma1_mpa, "sigma2": sigma2_mpa, "sigma3": sigma3_mpa, "sigma1 axis": sigma1_axis,
                 "sigma3 axis": sigma3_axis, "pore pressure": pore_pressure_mpa}
    grads = {"SHmax azimuth": shmax_azimuth, "Sv gradient": sv_gradient, "SHmax gradient": shmax_gradient,
             "Shmin gradient": shmin_gradient, "pore-pressure gradient": pore_pressure_gradient}

    def missing(d):
        return [k for k, v in d.items() if v is None]

    if inverted is not None:
        extra = [k for k, v in (("SHmax azimuth", shmax_azimuth), ("SHmax gradient", shmax_gradient),
                                ("Shmin gradient", shmin_gradient), ("sigma2", sigma2_mpa),
                                ("sigma1 axis", sigma1_axis), ("sigma3 axis", sigma3_axis)) if v is not None]
        if extra:
            raise InputError(f"with an inverted stress the axes and phi come from the inversion; do not give {', '.join(extra)}")
        try:
            t1, p1, t3, p3, phi = (float(inverted[k]) for k in
                                   ("sigma1_trend", "sigma1_plunge", "sigma3_trend", "sigma3_plunge", "phi"))
        except (KeyError, TypeError, ValueError):
            raise DataError("the inverted stress has no axes or phi (an ill-posed group?)") from None
        if not all(np.isfinite([t1, p1, t3, p3, phi])):
            raise DataError("the inverted stress has NULL axes or phi (an ill-posed group): choose another group")
        axes = axes_from_lines(t1, p1, t3, p3, tolerance_deg=1.0)
        st = inverted_state(axes, phi, sv_gradient=sv_gradient, pore_pressure_gradient=pore_pressure_gradient,
                            friction=friction, sigma1_mpa=sigma1_mpa, sigma3_mpa=sigma3_mpa,
                            pore_pressure_mpa=pore_pressure_mpa)
        if "group_id" in inverted:
            st.description["group_id"] = str(inverted["group_id"])
        return st
    given_p = [k for k, v in principal.items() if v is not None and k != "pore pressure"]
    given_g = [k for k, v in grads.items() if v is not None]
    if given_p and given_g:
        raise InputError(f"give the stress one way: principal magnitudes ({', '.join(given_p)}) and "
                         f"gradients ({', '.join(given_g)}) were both given")
    if given_g or regime is not None:
        miss = missing(grads)
        if miss:
            raise InputError(f"a stress from gradients needs {', '.join(miss)} (MPa/km; azimuth in degrees)")
        if pore_pressure_mpa is not None:
            raise InputError("with gradients give the pore-pressure gradient (MPa/km), not a pore pressure")
        return gradient_state(shmax_azimuth, sv_gradient, shmax_gradient, shmin_gradient, pore_pressure_gradient,
                              regime)
    if given_p:
        miss = missing(principal)
        if miss:
            raise InputError(f"a stress from principal magnitudes needs {', '.join(miss)} "
                             "(MPa; axes as trend/plunge degrees)")
        t1, p1 = _line(sigma1_axis, "the sigma1 axis")
        t3, p3 = _line(sigma3_axis, "the sigma3 axis")
        axes = axes_from_lines(t1, p1, t3, p3)
        return principal_state(sigma1_mpa, sigma2_mpa, sigma3_mpa, axes, pore_pressure_mpa)
    raise InputError(
        "give the stress: principal magnitudes (sigma1, sigma2, sigma3 MPa, sigma1 and sigma3 axes, pore "
        "pressure), or SHmax azimuth with Sv, SHmax, Shmin and pore-pressure gradients (MPa/km), or an "
        "inversion result with magnitude assumptions")


def slip_tendency(plane_ids, dip_dir, dip, state, *, depth_m=None, friction=BYERLEE_FRICTION, cohesion_mpa=0.0,
                  near_failure=None, rules=REACTIVATION_RULES, geometry_type="MultiLineString", geometries=None):
    """Normal and shear stress, slip and dilation tendency, pore pressure to failure of planes.

    Parameters
    ----------
    plane_ids : sequence (G,) of str
    dip_dir, dip : (G,) degrees (NaN: a plane without orientation, reported and left NULL)
    state : :class:`~slipsense.core.stress.StressState` (see :func:`stress_state`)
    depth_m : scalar or (G,) metres below the ground surface; needed when the state grows with
        depth (NaN depth: NULL row); ignored (and reported NULL) for fixed magnitudes
    friction, cohesion_mpa : Coulomb failure criterion τ = c + μ σn'
    near_failure : fraction of the frictional strength flagged ``near failure`` (default
        ``rules.near_fraction``, 0.8)
    geometry_type, geometries : the output geometry (default: each input feature's, by row)

    Returns
    -------
    StepResult with table ``slip_tendency``.
    """
    mu = check_friction(friction)
    if near_failure is not None:
        nf = float(near_failure)
        if not (np.isfinite(nf) and 0.0 < nf <= 1.0):
            raise InputError(f"the near-failure fraction must be in (0, 1], got {near_failure!r}")
        rules = dataclasses.replace(rules, near_fraction=nf)
    dd = np.asarray(dip_dir, dtype=float).reshape(-1)
    dp = np.asarray(dip, dtype=float).reshape(-1)
    g = len(plane_ids)
    if g == 0:
        raise DataError("no planes: the plane layer is empty")
    if dd.shape != (g,) or dp.shape != (g,):
        raise InputError(f"dip_dir and dip need one value per plane ({g})")
    warnings = []
    bad = ~np.isfinite(dd) | ~np.isfinite(dp)
    with np.errstate(invalid="ignore"):
        out = ~bad & ((dp < 0) | (dp > 90))
    for i in np.flatnonzero(out):
        warnings.append(f"plane {plane_ids[i]}: dip {dp[i]:g} is outside [0, 90] degrees; not evaluated")
    for i in np.flatnonzero(bad):
        warnings.append(f"plane {plane_ids[i]}: no orientation (ill-posed); not evaluated")
    bad |= out
    if state.depth_dependent:
        if depth_m is None:
            raise InputError("this stress grows with depth: give the depth (m below the surface) of the planes")
        depth = np.broadcast_to(np.asarray(depth_m, dtype=float), (g,)).copy()
        for i in np.flatnonzero(~np.isfinite(depth) & ~bad):
            warnings.append(f"plane {plane_ids[i]}: no depth; not evaluated")
        if np.any(np.isfinite(depth) & (depth < 0)):
            k = int(np.flatnonzero(np.isfinite(depth) & (depth < 0))[0])
            raise InputError(f"plane {plane_ids[k]}: depth {depth[k]:g} m is above the surface; depths are "
                             "metres below the ground surface, >= 0")
        bad |= ~np.isfinite(depth)
    else:
        depth = np.full(g, np.nan) if depth_m is None else np.broadcast_to(np.asarray(depth_m, float), (g,)).copy()
    normals = plane_to_normal(np.where(bad, 0.0, dd), np.where(bad, 45.0, dp))
    tensors, _, pp = state.at_depth(np.where(bad, 0.0, np.nan_to_num(depth, nan=0.0)) if state.depth_dependent
                                    else np.zeros(g))
    res = fault_reactivation(tensors, normals, pp, friction=mu, cohesion_mpa=cohesion_mpa, rules=rules)
    rake = predicted_rake(np.where(bad, 0.0, dd), np.where(bad, 45.0, dp), res["slip"])
    rake = np.atleast_1d(np.asarray(rake, float))
    for k in res:
        if k in ("slip", "flag"):
            continue
        res[k] = np.where(bad, np.nan, res[k])
    rake = np.where(bad, np.nan, rake)
    flags = np.where(bad, "not evaluated", res["flag"]).astype(object)
    senses = sense_words(rake)
    senses = np.where(bad, "", np.asarray(senses, dtype=object))
    table = slip_tendency_table(plane_ids, dd, dp, depth, res, rake, senses, mu, flags, geometry_type, geometries)
    ts = res["slip_tendency"]
    summary = {"planes": g, "evaluated": int((~bad).sum()), "friction": mu, "cohesion_mpa": float(cohesion_mpa),
               "near_failure": rules.near_fraction,
               "stress": state.description,
               "flags": {w: int(np.sum(flags == w)) for w in ("at failure", "near failure", "tensile", "not evaluated")}}
    if np.any(np.isfinite(ts)):
        k = int(np.nanargmax(ts))
        summary["highest_slip_tendency"] = {"plane_id": str(plane_ids[k]), "slip_tendency": round(float(ts[k]), 4)}
    for i in np.flatnonzero(flags == "at failure"):
        warnings.append(f"plane {plane_ids[i]}: at frictional failure in this stress (slip tendency "
                        f"{ts[i]:.3f} >= friction {mu:g}): a candidate for reactivation, for review")
    return StepResult({"slip_tendency": table}, summary, warnings)


def anderson(station_ids, dip_dir, dip, *, feature_ids=None, trend=None, plunge=None, rake=None, pitch=None,
             pitch_from=None, sense=None, xy=None, labels=None, fields=None, misfit_tol_deg=None,
             friction=BYERLEE_FRICTION, tolerance_deg=ANDERSON_RULES.tolerance_deg, shmax_azimuth=None,
             regime=None):
    """Andersonian check of faults with known slip, and the principal axes that would drive them.

    For each datum: its type from the rake (normal, reverse, strike-slip; oblique gets no
    prediction), the Andersonian dip of that type for ``friction`` (θ = 45° − arctan(μ)/2), the
    departure of the measured dip, a flag beyond ``tolerance_deg``, and the σ1/σ2/σ3 axes that would
    drive the measured slip (σ1 at θ to the fault in the plane of normal and slip).  With
    ``shmax_azimuth`` and ``regime`` the summary also gives the predicted conjugate planes.

    Returns
    -------
    StepResult with table ``anderson``; the summary lists the Andersonian angles.
    """
    mu = check_friction(friction)
    tol = float(tolerance_deg)
    if not (np.isfinite(tol) and 0 < tol < 90):
        raise InputError(f"the dip tolerance must be in (0, 90) degrees, got {tolerance_deg!r}")
    ids, data, warnings = read_fault_slip(
        station_ids, dip_dir, dip, feature_ids=feature_ids, trend=trend, plunge=plunge, rake=rake, pitch=pitch,
        pitch_from=pitch_from, sense=sense, labels=labels, fields=fields, misfit_tol_deg=misfit_tol_deg)
    n = len(ids)
    use = np.asarray(data.usable, bool)
    rk = np.where(use, data.rake, np.nan)
    rules = dataclasses.replace(ANDERSON_RULES, tolerance_deg=tol)
    check = anderson_check(np.where(use, data.dip, np.nan), rk, mu, rules)
    lines = {f"sigma{k}_{w}": np.full(n, np.nan) for k in (1, 2, 3) for w in ("trend", "plunge")}
    if use.any():
        ax = driving_axes(data.normal[use], data.slip[use], mu)
        tr, pl = axes_to_lines(ax)
        for k in range(3):
            lines[f"sigma{k + 1}_trend"][use] = tr[:, k]
            lines[f"sigma{k + 1}_plunge"][use] = pl[:, k]
    a = anderson_angles(mu)
    xy = np.zeros((n, 2)) if xy is None else np.asarray(xy, dtype=float).reshape(n, 2)
    table = anderson_table(ids, data.status, data.dip_dir, data.dip, rk, check, lines, a.theta, xy)
    labels = [f"station {i}" for i in ids] if labels is None else [str(x) for x in labels]
    for i in np.flatnonzero(np.isin(check["flag"], ["steeper than Andersonian", "shallower than Andersonian"])):
        warnings.append(f"{labels[i]}: {check['kind'][i]} fault dipping {data.dip[i]:.1f}, {check['flag'][i]} "
                        f"({check['predicted_dip'][i]:.1f} predicted): possible reactivation or rotation, not a verdict")
    summary = {"data": n, "usable": int(use.sum()), "friction": mu, "tolerance_deg": tol,
               "anderson": {"theta": round(a.theta, 3), "friction_angle": round(a.friction_angle, 3),
                            "normal_dip": round(a.normal_dip, 3), "thrust_dip": round(a.thrust_dip, 3),
                            "strike_slip_dip": a.strike_slip_dip, "conjugate_angle": round(a.conjugate_angle, 3)},
               "flags": {w: int(np.sum(check["flag"] == w)) for w in
                         ("steeper than Andersonian", "shallower than Andersonian", "oblique: no Andersonian type")}}
    if shmax_azimuth is not None or regime is not None:
        if shmax_azimuth is None or regime is None:
            raise InputError("the conjugate planes need both the SHmax azimuth and the regime (NF, SS or TF)")
        code = regime_code(regime)
        # any magnitudes in the regime's order give its axes
        sv, sh, sh_min = {"NF": (3.0, 2.0, 1.0), "SS": (2.0, 3.0, 1.0), "TF": (1.0, 3.0, 2.0)}[code]
        _, axes, _ = andersonian_axes(shmax_azimuth, sv, sh, sh_min, code)
        pdd, pdip = conjugate_planes(axes[0], axes[2], mu)
        summary["conjugate_planes"] = [[round(float(pdd[k]), 2), round(float(pdip[k]), 2)] for k in range(2)]
        summary["conjugate_regime"] = code
    return StepResult({"anderson": table}, summary, warnings)

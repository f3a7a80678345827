"""Steps for net slip: from a table of separations, and from mapped marker contacts (numpy only)."""
from __future__ import annotations

import numpy as np

from ..core.netslip import (
    NETSLIP_RULES,
    parse_observation,
    slip_from_contacts,
    slip_from_separations,
    mean_slip_direction,
)
from ..core.orientation import plane_to_normal
from ..core.raster import sample_bilinear
from ..errors import DataError, InputError
from ..tables.netslip import marker_fit_table, net_slip_table, slip_vector_table
from .base import StepResult

__all__ = ["net_slip", "map_slip", "map_slip_margin_m", "station_slip", "SEPARATION_FIELDS", "TABLE_FIELDS",
           "status_counts", "parse_marker_attitudes"]

#: Fields of a separation table (see the README): name -> (what, needed by)
SEPARATION_FIELDS = {
    "fault_id": "the fault each row belongs to (text)",
    "observation": "strike | dip | vertical | horizontal | section AZ | line T/P | rake | piercing",
    "marker_id": "the displaced marker (separation rows)",
    "marker_dip_dir": "marker dip direction, degrees (separation rows)",
    "marker_dip": "marker dip, degrees (separation rows)",
    "fault_dip_dir": "fault dip direction, degrees (at least one row per fault)",
    "fault_dip": "fault dip, degrees (at least one row per fault)",
    "separation_m": "separation from the footwall marker to the hanging-wall marker along the observation, m (signed)",
    "sigma_m": "1-sigma of the separation (or of each piercing-point coordinate), m (optional)",
    "rake": "slip direction as rake, degrees (rake rows)",
    "rake_sigma": "1-sigma of the rake, degrees (rake rows, optional)",
    "fw_x": "footwall piercing point x, m (piercing rows; also fw_y, fw_z, hw_x, hw_y, hw_z)",
}

_PIERCE = ("fw_x", "fw_y", "fw_z", "hw_x", "hw_y", "hw_z")

#: Every field a separation table may have (the readers take these when present).
TABLE_FIELDS = tuple(SEPARATION_FIELDS) + _PIERCE[1:]


def status_counts(results):
    """Counts of each status word (all four always present)."""
    from ..core.netslip import STATUS_WORDS

    st = [r.values["status"] for r in results]
    return {w: int(sum(s == w for s in st)) for w in STATUS_WORDS}


def _text(v):
    if v is None:
        return None
    if isinstance(v, float):
        if not np.isfinite(v):
            return None
        if v.is_integer():
            return str(int(v))
    s = str(v).strip()
    return s or None


def _num(col, k):
    if col is None:
        return float("nan")
    v = col[k]
    try:
        return float("nan") if v is None else float(v)
    except (TypeError, ValueError):
        return float("nan")


def net_slip(rows, *, source="the table", sigma_m=None, sigma_marker_deg=2.0, sigma_fault_deg=2.0,
             rake_sigma_deg=10.0, draws=200, seed=0, rules=NETSLIP_RULES):
    """Net slip per fault from a table of separations, slip directions and piercing points.

    Parameters
    ----------
    rows : dict of field name -> sequence (one value per row; None/NaN = NULL), with
        ``names`` (row labels for messages, e.g. ``"seps.gpkg|seps feature 3"``) and optionally
        ``xy`` ((R, 2) points; the output is then a point layer, at each fault's first row).
        Fields: see :data:`SEPARATION_FIELDS`; a field the table lacks is absent or None.
    source : name of the table in messages
    sigma_m : default 1-sigma of separations (m) where ``sigma_m`` is NULL; None = required
    sigma_marker_deg, sigma_fault_deg : 1-sigma attitude errors (degrees, per axis)
    rake_sigma_deg : default 1-sigma of rakes where ``rake_sigma`` is NULL
    draws, seed : Monte Carlo

    Returns
    -------
    StepResult with table ``net_slip`` (one row per fault, faults sorted as text).

    Raises
    ------
    InputError naming the row and field of the first bad value.
    """
    names = list(rows["names"])
    R = len(names)
    if R == 0:
        raise DataError(f"{source} is empty: no separations to work on")
    col = {k: rows.get(k) for k in SEPARATION_FIELDS if k != "fw_x"}
    for k in _PIERCE:
        col[k] = rows.get(k)
    for need in ("fault_id", "observation"):
        if col[need] is None:
            raise DataError(f"{source} has no field {need!r} ({SEPARATION_FIELDS[need]})")

    def missing(field, k, why):
        if col[field] is None:
            raise DataError(f"{source} has no field {field!r}, which {why} rows need")
        raise DataError(f"{names[k]}: field {field!r} is empty (NULL); {why} rows need it")

    def angle(field, k, lo, hi, why):
        v = _num(col[field], k)
        if not np.isfinite(v):
            missing(field, k, why)
        if not lo <= v <= hi:
            raise InputError(f"{names[k]}: field {field!r} = {v!r} is outside [{lo:g}, {hi:g}] degrees")
        return v

    per = {}
    order = []
    for k in range(R):
        fid = _text(col["fault_id"][k])
        if fid is None:
            raise DataError(f"{names[k]}: field 'fault_id' is empty (NULL)")
        word = _text(col["observation"][k])
        if word is None:
            raise DataError(f"{names[k]}: field 'observation' is empty (NULL)")
        f = per.setdefault(fid, {"sep": [], "rake": [], "pierce": [], "att": None, "xy": None, "rows": []})
        if fid not in order:
            order.append(fid)
        f["rows"].append(k)
        if rows.get("xy") is not None and f["xy"] is None:
            f["xy"] = np.asarray(rows["xy"][k], float)
        fdd, fdp = _num(col["fault_dip_dir"], k), _num(col["fault_dip"], k)
        if np.isfinite(fdd) or np.isfinite(fdp):
            fdd = angle("fault_dip_dir", k, 0.0, 360.0, "every fault's")
            fdp = angle("fault_dip", k, 0.0, 90.0, "every fault's")
            if f["att"] is None:
                f["att"] = (fdd, fdp, k)
            else:
                n0 = plane_to_normal(*f["att"][:2])
                n1 = plane_to_normal(fdd, fdp)
                if np.degrees(np.arccos(min(1.0, float(n0 @ n1)))) > 0.01:
                    raise InputError(
                        f"{names[k]}: fault {fid} has attitude {fdd:g}/{fdp:g} here but "
                        f"{f['att'][0]:g}/{f['att'][1]:g} in {names[f['att'][2]]}: give one attitude per fault"
                    )
        w = word.lower()
        if w == "rake":
            lam = angle("rake", k, -180.0, 180.0, "rake")
            sg = _num(col["rake_sigma"], k)
            sg = rake_sigma_deg if not np.isfinite(sg) else sg
            if not sg > 0:
                raise InputError(f"{names[k]}: field 'rake_sigma' = {sg!r} must be > 0 degrees")
            f["rake"].append((lam, sg))
            continue
        sgm = _num(col["sigma_m"], k)
        if not np.isfinite(sgm):
            if sigma_m is None:
                missing("sigma_m", k, "separation and piercing")
            sgm = float(sigma_m)
        if not sgm > 0:
            raise InputError(f"{names[k]}: field 'sigma_m' = {sgm!r} must be > 0 metres")
        if w == "piercing":
            pts = []
            for p in _PIERCE:
                v = _num(col[p], k)
                if not np.isfinite(v):
                    missing(p, k, "piercing")
                pts.append(v)
            f["pierce"].append((pts[:3], pts[3:], sgm, names[k]))
            continue
        try:
            kind, tr, pl = parse_observation(word)
        except InputError as exc:
            raise InputError(f"{names[k]}: field 'observation': {exc} (or 'rake', 'piercing')") from None
        mid = _text(col["marker_id"][k]) if col["marker_id"] is not None else None
        if mid is None:
            missing("marker_id", k, "separation")
        mdd = angle("marker_dip_dir", k, 0.0, 360.0, "separation")
        mdp = angle("marker_dip", k, 0.0, 90.0, "separation")
        sep = _num(col["separation_m"], k)
        if not np.isfinite(sep):
            missing("separation_m", k, "separation")
        f["sep"].append((mid, mdd, mdp, kind, tr, pl, sep, sgm, k))
    results, ids, geoms, warnings = [], [], [], []
    for fid in sorted(order):
        f = per[fid]
        if f["att"] is None:
            raise DataError(f"fault {fid}: no row gives its attitude (fields 'fault_dip_dir', 'fault_dip')")
        seps = f["sep"]
        # one attitude per marker: checked here to name the rows
        first = {}
        for s in seps:
            if s[0] in first:
                a, b = plane_to_normal(*first[s[0]][1:3]), plane_to_normal(s[1], s[2])
                if np.degrees(np.arccos(min(1.0, abs(float(a @ b))))) > 0.01:
                    raise InputError(
                        f"{names[s[8]]}: marker {s[0]} of fault {fid} has attitude {s[1]:g}/{s[2]:g} here but "
                        f"{first[s[0]][1]:g}/{first[s[0]][2]:g} in {names[first[s[0]][8]]}: give one attitude per marker"
                    )
            else:
                first[s[0]] = s
        res = slip_from_separations(
            f["att"][0], f["att"][1],
            marker_ids=[s[0] for s in seps], marker_dip_dir=[s[1] for s in seps],
            marker_dip=[s[2] for s in seps], observation=[s[3] for s in seps],
            obs_trend=[s[4] for s in seps], obs_plunge=[s[5] for s in seps],
            separation_m=[s[6] for s in seps], sigma_m=[s[7] for s in seps],
            rake=[r[0] for r in f["rake"]], rake_sigma=[r[1] for r in f["rake"]],
            fw_points=[p[0] for p in f["pierce"]] or None, hw_points=[p[1] for p in f["pierce"]] or None,
            piercing_sigma_m=[p[2] for p in f["pierce"]], piercing_ids=[p[3] for p in f["pierce"]],
            sigma_marker_deg=sigma_marker_deg, sigma_fault_deg=sigma_fault_deg, draws=draws, seed=seed,
            rules=rules,
        )
        results.append(res)
        ids.append(fid)
        geoms.append(f["xy"])
        st = res.values["status"]
        if st in ("under-determined", "ill-conditioned") or "conflict" in res.values["note"]:
            warnings.append(f"fault {fid}: {st}" + (f" ({res.values['note']})" if res.values["note"] else ""))
    has_xy = rows.get("xy") is not None and all(g is not None and np.all(np.isfinite(g)) for g in geoms)
    table = net_slip_table(ids, results, [g.reshape(-1)[:2] for g in geoms] if has_xy else None,
                           geometry_type="Point")
    summary = {"faults": len(ids), "rows": R, "status": status_counts(results)}
    return StepResult({"net_slip": table}, summary, warnings)


def _nearest_on_polyline(point, line):
    """The point of polyline ``line`` (n, 2) nearest to ``point`` (2,)."""
    a, b = line[:-1], line[1:]
    if a.shape[0] == 0:
        return line[0]
    ab = b - a
    t = np.clip(np.sum((point - a) * ab, 1) / np.maximum(np.sum(ab * ab, 1), 1e-300), 0, 1)
    proj = a + t[:, None] * ab
    return proj[int(np.argmin(np.sum((proj - point) ** 2, 1)))]


def parse_marker_attitudes(items):
    """Given marker attitudes from text: ``["bed_A=352/11", "dyke_1=188/80"]`` or one string
    ``"bed_A=352/11; dyke_1=188/80"`` -> ``{"bed_A": (352.0, 11.0), ...}`` (dip direction/dip,
    degrees).  Raises InputError naming the item."""
    from ..core.orientation import check_dip

    if items is None:
        return None
    if isinstance(items, str):
        items = [p for p in items.replace(",", ";").split(";")]
    out = {}
    for item in items:
        item = str(item).strip()
        if not item:
            continue
        name, sep, att = item.partition("=")
        dd, sep2, dp = att.partition("/")
        try:
            if not (sep and sep2 and name.strip()):
                raise ValueError
            dd, dp = float(dd), float(dp)
        except ValueError:
            raise InputError(f"marker attitude {item!r}: write MARKER=DIP_DIR/DIP, e.g. bed_A=352/11") from None
        if not 0.0 <= dd <= 360.0:
            raise InputError(f"marker attitude {item!r}: dip direction must be in [0, 360] degrees, got {dd!r}")
        try:
            check_dip(dp)
        except InputError as exc:
            raise InputError(f"marker attitude {item!r}: {exc}") from None
        out[name.strip()] = (dd, dp)
    return out or None


def station_slip(stations):
    """Hanging-wall slip unit vectors (S, 3) of slip stations, by
    :func:`slipsense.core.kinematics.slip_from_measurements`.

    ``stations``: dict with ``dip_dir``, ``dip`` and one lineation form (``trend`` + ``plunge``,
    ``rake``, or ``pitch`` + ``pitch_from``), plus ``sense`` where the form needs it.  Returns
    ``(slip, status)``; rows that are not ``consistent`` get NaN.
    """
    from ..core.kinematics import slip_from_measurements

    kw = {k: stations[k] for k in ("trend", "plunge", "rake", "pitch", "pitch_from", "sense")
          if stations.get(k) is not None}
    fs = slip_from_measurements(stations["dip_dir"], stations["dip"], strict=False, **kw)
    slip = np.array(np.asarray(fs.slip, float).reshape(-1, 3))
    status = np.atleast_1d(np.asarray(fs.status, dtype=object))
    slip[np.asarray([str(s) != "consistent" for s in status])] = np.nan
    return slip, status


def map_slip_margin_m(cell_m, window_m, sigma_xy_m):
    """DEM margin (m) around the fault traces for map-slip: the window, plus the Monte Carlo moves
    and a few cells (the command line and the QGIS plugin read the same cells)."""
    from .base import dem_margin_m

    return float(window_m) + dem_margin_m(cell_m, sigma_xy_m)


def map_slip(fault_ids, dip_dir, dip, centroids, traces, pieces_xy, piece_marker, piece_ids, grid, *,
             dip_interval=None, dip_dir_interval=None, stations=None,
             window_m=1000.0, reach_m=100.0, sigma_xy_m=5.0, sigma_z_m=2.0, draws=200, seed=0,
             marker_attitudes=None, sigma_attitude_deg=2.0, rules=NETSLIP_RULES, progress=None):
    """Net slip of mapped faults from marker contacts over a DEM (and optional slip stations).

    Parameters
    ----------
    fault_ids : (G,) str; dip_dir, dip : (G,) degrees; centroids : (G, 3) m, the fitted planes
    traces : list (one per fault) of lists of (n, 2) arrays: each fault's mapped trace parts
    pieces_xy : list of (n, 2) arrays, marker contact pieces; piece_marker, piece_ids : (P,) str
    grid : Grid (DEM, metres) covering the traces and contacts (see :func:`map_slip_margin_m`)
    dip_interval, dip_dir_interval : pairs of (G,) arrays (lo, hi), the planes' 95 % intervals
    stations : dict, optional: slip stations, with ``fault`` (S,) (the fault each belongs to),
        ``labels`` (S,) and the measurement arrays of :func:`station_slip`
    window_m, reach_m, sigma_xy_m, sigma_z_m, draws, seed : see
        :func:`slipsense.core.netslip.slip_from_contacts`
    marker_attitudes : dict marker -> (dip_dir, dip) degrees, optional: given attitudes (e.g. from
        bedding readings; see :func:`parse_marker_attitudes`), used instead of fitting, with
        ``sigma_attitude_deg`` (1-sigma per axis) in the draws

    Returns
    -------
    StepResult with tables ``net_slip`` (PointZ at the trace), ``slip_vectors`` (LineStringZ)
    and ``marker_fits`` (MultiLineString of the contact vertices used).
    """
    G = len(fault_ids)
    if G == 0:
        raise DataError("no fault planes to work on: the plane layer is empty")
    if len(pieces_xy) == 0:
        raise DataError("no marker contacts to work on: the contact layer is empty")
    if not window_m > 0 or not reach_m > 0:
        raise InputError(f"distance and reach must be > 0 metres, got {window_m!r} and {reach_m!r}")
    if not (sigma_xy_m >= 0 and sigma_z_m >= 0):
        raise InputError("sigma-xy and sigma-z must be >= 0 metres")
    dip_dir = np.asarray(dip_dir, float)
    dip = np.asarray(dip, float)
    cen = np.asarray(centroids, float).reshape(-1, 3)
    results, fits_all, fit_fault, extra, geoms, lines, anchors, ids, warnings = ([] for _ in range(9))
    st_slip = st_fault = None
    if stations is not None:
        st_slip, st_status = station_slip(stations)
        st_fault = np.asarray([_text(f) for f in stations["fault"]], dtype=object)
        labels = stations.get("labels") or [f"station {i}" for i in range(len(st_fault))]
        known = {str(f) for f in fault_ids}
        for lab, f, st in zip(labels, st_fault, st_status):
            if f in known and str(st) != "consistent":
                warnings.append(f"{lab}: not used for fault {f} ({st})")
    for g in range(G):
        if progress is not None:
            progress(g / G)
        fid = str(fault_ids[g])
        if not (np.isfinite(dip_dir[g]) and np.isfinite(dip[g])):
            warnings.append(f"fault {fid}: no orientation (ill-posed plane); skipped")
            continue
        trace = [np.asarray(p, float).reshape(-1, 2) for p in traces[g]]
        rake = rake_sigma = float("nan")
        n_st = 0
        if st_slip is not None:
            vecs = st_slip[st_fault == fid]
            vecs = vecs[np.all(np.isfinite(vecs), axis=1)]
            if vecs.shape[0]:
                rake, rake_sigma, n_st, n_rej = mean_slip_direction(dip_dir[g], dip[g], vecs, rules)
                if n_rej:
                    warnings.append(f"fault {fid}: {n_rej} slip station(s) more than "
                                    f"{rules.max_station_misfit:g} deg off the fitted plane were not used")
        di = None if dip_interval is None else (dip_interval[0][g], dip_interval[1][g])
        ddi = None if dip_dir_interval is None else (dip_dir_interval[0][g], dip_dir_interval[1][g])
        res, fits = slip_from_contacts(
            dip_dir[g], dip[g], cen[g], trace, pieces_xy, piece_marker, piece_ids, grid,
            dip_interval=di, dip_dir_interval=ddi, window_m=window_m, reach_m=reach_m,
            sigma_xy_m=sigma_xy_m, sigma_z_m=sigma_z_m, marker_attitudes=marker_attitudes,
            sigma_attitude_deg=sigma_attitude_deg,
            slip_rake=rake if n_st else None, slip_rake_sigma=rake_sigma,
            slip_label=f"slip direction ({n_st} stations)", draws=draws, seed=seed + g, rules=rules,
        )
        fitted = [f for f in fits if f.status in ("fitted", "given attitude")]
        if not fitted:
            for f in fits:
                warnings.append(f"fault {fid}, marker {f.marker_id}: {f.note or f.status}")
            if not fits:
                warnings.append(f"fault {fid}: no marker piece comes within {reach_m:g} m of its trace; no slip")
            continue
        for f in fits:
            fits_all.append(f)
            fit_fault.append(fid)
            if f.note:
                warnings.append(f"fault {fid}, marker {f.marker_id}: {f.note}")
        # where to draw: the trace point nearest the cut-off ends used
        ends = np.array([f.cutoff_xy for f in fitted])
        p2 = min((_nearest_on_polyline(ends.mean(0), part) for part in trace),
                 key=lambda q: float(np.sum((q - ends.mean(0)) ** 2)))
        z = float(sample_bilinear(grid, np.array([p2[0]]), np.array([p2[1]]))[0])
        if not np.isfinite(z):
            nf = plane_to_normal(dip_dir[g], dip[g])
            z = float(cen[g, 2] - ((p2 - cen[g, :2]) @ nf[:2]) / nf[2]) if nf[2] > 1e-9 else float(cen[g, 2])
        p0 = np.array([p2[0], p2[1], z])
        u = np.array([res.values["slip_e"], res.values["slip_n"], res.values["slip_u"]])
        anchor = "trace"
        start = p0
        pp = _piercing_point(dip_dir[g], dip[g], cen[g], fitted)
        if pp is not None and np.all(np.isfinite(u)):
            start, anchor = pp, f"footwall piercing point of {fitted[0].marker_id} and {fitted[1].marker_id}"
        if np.all(np.isfinite(u)):
            lines.append(np.vstack([start, start + u]))
            anchors.append(anchor)
        else:
            lines.append(None)
            anchors.append("")
        results.append(res)
        ids.append(fid)
        geoms.append(p0)
        extra.append({"n_stations": n_st, "station_rake": rake, "station_rake_sigma": rake_sigma,
                      "marker_misfit": max([f.misfit_ratio for f in fitted], default=float("nan"))})
        st = res.values["status"]
        if st in ("under-determined", "ill-conditioned") or "conflict" in res.values["note"]:
            warnings.append(f"fault {fid}: {st}" + (f" ({res.values['note']})" if res.values["note"] else ""))
    if progress is not None:
        progress(1.0)
    if not ids:
        warnings.append("no marker piece reaches any fault trace on both sides: nothing to compute "
                        f"(reach {reach_m:g} m)")
    table = net_slip_table(ids, results, geoms, "PointZ", extra)
    keep = [i for i, ln in enumerate(lines) if ln is not None]
    vec = slip_vector_table([ids[i] for i in keep], [results[i] for i in keep], [lines[i] for i in keep],
                            [anchors[i] for i in keep])
    fit_table = marker_fit_table(fit_fault, fits_all)
    summary = {"faults": len(ids), "status": status_counts(results), "marker_fits": len(fits_all)}
    return StepResult({"net_slip": table, "slip_vectors": vec, "marker_fits": fit_table}, summary, warnings)


def _piercing_point(dip_dir, dip, point, fitted):
    """The footwall point where the line common to the first two fitted markers meets the fault
    plane (None when the three planes do not meet in one well-defined point)."""
    if len(fitted) < 2:
        return None
    a, b = fitted[0], fitted[1]
    if a.c_fw is None or b.c_fw is None:
        return None
    nf = plane_to_normal(dip_dir, dip)
    ma, mb = plane_to_normal(a.dip_dir, a.dip), plane_to_normal(b.dip_dir, b.dip)
    M = np.vstack([nf, ma, mb])
    if abs(np.linalg.det(M)) < 0.05:  # nearly parallel planes: the point is poorly defined
        return None
    rhs = np.array([nf @ np.asarray(point, float), ma @ np.asarray(a.c_fw), mb @ np.asarray(b.c_fw)])
    return np.linalg.solve(M, rhs)

"""Cross-section figures (PNG and SVG) from the tables of :func:`slipsense.steps.cross_sections`.

What a figure shows, in section coordinates (distance along the section, elevation):

* the topographic profile, with the ground below it shaded;
* fault lines (thick, solid) labelled with their id and apparent dip;
* contact lines of each marker (its own colour and dash pattern);
* projected measurements as dip ticks at their apparent dip (bedding: circles, fault-slip
  stations: triangles, borehole intersections: squares);
* the apparent offsets: the separation along each fault's line between the footwall and the
  hanging-wall cut-off, labelled;
* the net slip of each fault in a box, or the word that says why there is none;
* a scale bar, the vertical exaggeration (default 1:1, always written on the figure), the azimuth
  at each end, bend markers, and a caution line.

Colours are the Okabe–Ito palette (distinguishable with the common colour-vision deficiencies)
and every kind of line also differs in width or dash pattern, so the figure reads in greyscale.
Only matplotlib (and numpy) are used; the Agg back end is selected, so no display is needed.
"""
from __future__ import annotations

import os
import re
import tempfile

import numpy as np

from ..styles import OKABE_ITO

__all__ = ["draw_section", "draw_sections", "CAUTION_LINE", "PALETTE"]

#: Okabe & Ito (2008) colour-blind-safe palette (the project's, :data:`slipsense.styles.OKABE_ITO`).
PALETTE = {k: "#%02X%02X%02X" % rgb for k, rgb in OKABE_ITO.items()}
PALETTE.update(sky=PALETTE["sky_blue"], green=PALETTE["bluish_green"], purple=PALETTE["reddish_purple"])
_MARKER_STYLES = [(PALETTE["blue"], (0, (6, 2))), (PALETTE["green"], (0, (3, 1.5, 1, 1.5))),
                  (PALETTE["purple"], (0, (1, 1.2))), (PALETTE["orange"], (0, (8, 2, 2, 2))),
                  (PALETTE["sky"], (0, (4, 4)))]
_POINT_STYLES = {"bedding": ("o", PALETTE["blue"], "none"), "fault-slip": ("^", PALETTE["black"], PALETTE["black"]),
                 "borehole": ("s", PALETTE["orange"], PALETTE["orange"])}

CAUTION_LINE = ("Caution: an interpretation for screening - faults and contacts are planes extrapolated from "
                "the map; check by a qualified professional against local codes and licensed practice.")


def _rows(table, section_id):
    """(rows, geometries) of one section from a Table."""
    if table is None or len(table) == 0:
        return [], []
    sid = np.asarray(table.columns["section_id"]).astype(str)
    idx = np.flatnonzero(sid == str(section_id))
    names = list(table.columns)
    rows = [{n: table.columns[n][i] for n in names} for i in idx]
    geoms = [np.asarray(table.geometries[i], float) for i in idx]
    return rows, geoms


def _ends(section_id):
    """End labels: ``A-A'`` -> ("A", "A'"), else ("start", "end")."""
    m = re.match(r"^\s*([^-\s]+)\s*-\s*([^-\s]+)\s*$", str(section_id))
    return (m.group(1), m.group(2)) if m else ("start", "end")


def _nice_step(span):
    raw = span / 4.0
    mag = 10 ** np.floor(np.log10(max(raw, 1e-9)))
    for f in (1, 2, 5, 10):
        if f * mag >= raw:
            return f * mag
    return 10 * mag


def _fmt(v, nd=0):
    return "n/a" if v is None or not np.isfinite(v) else f"{v:.{nd}f}"


def draw_section(tables, section_id, *, exaggeration=1.0, width_in=11.0, dpi=150, title=None):
    """A matplotlib Figure of one section.

    Parameters
    ----------
    tables : dict of Tables (``StepResult.tables`` of :func:`slipsense.steps.cross_sections`)
    section_id : str
    exaggeration : vertical exaggeration of the drawing (1 = true scale)
    width_in, dpi : figure width (inches) and resolution of raster output
    """
    import matplotlib

    matplotlib.use("Agg", force=False)
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D

    if not (np.isfinite(exaggeration) and exaggeration > 0):
        raise ValueError(f"vertical exaggeration must be > 0, got {exaggeration!r}")
    ve = float(exaggeration)
    seg_rows, _ = _rows(tables.get("section_segments"), section_id)
    prof_rows, prof_g = _rows(tables.get("section_profiles_xz"), section_id)
    fault_rows, fault_g = _rows(tables.get("section_faults_xz"), section_id)
    cont_rows, cont_g = _rows(tables.get("section_contacts_xz"), section_id)
    pt_rows, pt_g = _rows(tables.get("section_points_xz"), section_id)
    off_rows, off_g = _rows(tables.get("section_offsets_xz"), section_id)
    ns_rows, _ = _rows(tables.get("section_net_slip_xz"), section_id)
    if not seg_rows:
        raise ValueError(f"no section {section_id!r} in the tables")
    length = float(max(r["distance_end_m"] for r in seg_rows))
    zs = [g[:, 1] for g in prof_g if g.size] + [g[:, 1] for g in fault_g if g.size]
    zall = np.concatenate(zs) if zs else np.array([0.0, 1.0])
    zmin, zmax = float(np.nanmin(zall)), float(np.nanmax(zall))
    ztop = zmax + 0.12 * (zmax - zmin + 1.0)
    # Layout in inches: the axes keep the exaggeration exactly (1 m across = 1/ve m up).
    left, right, top = 0.85, 0.3, 0.62
    aw = width_in - left - right
    ah = aw * (ztop - zmin) * ve / length
    if ah < 1.4:  # a flat section: more sky, same scale
        ah = 1.4
        ztop = zmin + ah * length / (aw * ve)
    xmax = length
    if ah > 6.0:  # a short, deep section: the axes get wider in data, same scale
        ah = 6.0
        xmax = (ztop - zmin) * ve * aw / ah
    n_lines = len(ns_rows) + 1
    below = 0.55 + 0.55 + 0.17 * n_lines + 0.45
    H = top + ah + below
    fig = Figure(figsize=(width_in, H), dpi=dpi)
    ax = fig.add_axes([left / width_in, below / H, aw / width_in, ah / H])
    ax.set_xlim(0, xmax)
    ax.set_ylim(zmin, ztop)
    ax.set_aspect(ve, adjustable="box")
    ax.set_xlabel("distance along the section (m)")
    ax.set_ylabel("elevation (m)")
    ax.grid(True, color="#dddddd", linewidth=0.5, zorder=0)

    # ground
    for g in prof_g:
        if g.shape[0] >= 2:
            ax.fill_between(g[:, 0], g[:, 1], zmin, color="#eeeeee", zorder=1, linewidth=0)
            ax.plot(g[:, 0], g[:, 1], color=PALETTE["black"], linewidth=1.3, zorder=6)
    # bends
    for r in seg_rows[1:]:
        d = float(r["distance_start_m"])
        ax.axvline(d, color="#777777", linewidth=0.8, linestyle=(0, (2, 2)), zorder=2)
        prev = [s for s in seg_rows if int(s["segment"]) == int(r["segment"]) - 1][0]
        ax.text(d, ztop, f" bend {float(prev['azimuth']):03.0f}°→{float(r['azimuth']):03.0f}°", fontsize=7,
                va="top", ha="left", color="#444444", zorder=9)
    # contacts
    markers = sorted({str(r["marker_id"]) for r in cont_rows} | {str(r["marker_id"]) for r in off_rows})
    mstyle = {m: _MARKER_STYLES[i % len(_MARKER_STYLES)] for i, m in enumerate(markers)}
    for r, g in zip(cont_rows, cont_g):
        if g.shape[0] >= 2:
            c, ls = mstyle[str(r["marker_id"])]
            ax.plot(g[:, 0], g[:, 1], color=c, linestyle=ls, linewidth=1.6, zorder=4)
    # faults
    labelled = set()
    for r, g in zip(fault_rows, fault_g):
        if g.shape[0] < 2:
            continue
        ax.plot(g[:, 0], g[:, 1], color=PALETTE["vermillion"], linewidth=2.6, solid_capstyle="butt", zorder=5)
        key = str(r["fault_id"])
        if key not in labelled:
            labelled.add(key)
            ax.annotate(f"{key} {float(r['apparent_dip']):.0f}°", (g[0, 0], g[0, 1]), xytext=(0, 6),
                        textcoords="offset points", ha="center", va="bottom", fontsize=8, fontweight="bold",
                        color=PALETTE["vermillion"], zorder=10,
                        bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.8))
    # offsets: the separation along the fault's line, FW cut-off -> HW cut-off
    for r, g in zip(off_rows, off_g):
        if g.shape[0] < 2 or not np.isfinite(g).all():
            continue
        inside = np.all((g[:, 0] >= 0) & (g[:, 0] <= length) & (g[:, 1] >= zmin) & (g[:, 1] <= ztop))
        c, _ = mstyle[str(r["marker_id"])]
        if inside:
            ax.annotate("", xy=(g[1, 0], g[1, 1]), xytext=(g[0, 0], g[0, 1]), zorder=8,
                        arrowprops=dict(arrowstyle="-|>", color=c, linewidth=1.4, shrinkA=0, shrinkB=0))
            ax.plot(g[:, 0], g[:, 1], "o", color=c, markersize=3.5, markeredgecolor="black", markeredgewidth=0.4,
                    zorder=8)
            mid = g.mean(axis=0)
            ax.annotate(f"{r['marker_id']}: S {_fmt(float(r['separation_m']))} m", (mid[0], mid[1]),
                        xytext=(6, 0), textcoords="offset points", fontsize=7, va="center", color="black", zorder=10,
                        bbox=dict(boxstyle="round,pad=0.15", fc="white", ec=c, lw=0.6, alpha=0.85))
    # projected measurements: dip ticks drawn at the apparent dip as it looks with this exaggeration
    tick = 0.018 * xmax
    for r, g in zip(pt_rows, pt_g):
        kind = str(r["kind"])
        marker, ec, fc = _POINT_STYLES.get(kind, ("x", "black", "black"))
        d, z = float(r["distance_m"]), float(r["elevation_m"])
        app = np.radians(float(r["apparent_dip"]))
        sense = str(r["dips_toward"])
        sgn = 1.0 if sense in ("end", "horizontal") else -1.0
        ang = np.arctan(ve * np.tan(app)) if sense != "vertical" else np.pi / 2
        dx, dz = sgn * np.cos(ang) * tick, -np.sin(ang) * tick / ve
        ax.plot([d - dx / 2, d + dx / 2], [z - dz / 2, z + dz / 2], color=ec, linewidth=1.0, zorder=7)
        ax.plot([d], [z], marker=marker, markersize=4, markeredgecolor=ec, markerfacecolor=fc,
                markeredgewidth=0.8, linestyle="none", zorder=7)

    # ends, azimuths
    a_lab, b_lab = _ends(section_id)
    az0 = float(seg_rows[0]["azimuth"])
    az1 = float(seg_rows[-1]["azimuth"])
    ax.text(0.0, 1.015, f"{a_lab}  ({(az0 + 180) % 360:03.0f}°)", transform=ax.transAxes, ha="left",
            va="bottom", fontsize=10, fontweight="bold")
    ax.text(length / xmax, 1.015, f"({az1:03.0f}°)  {b_lab}", transform=ax.transAxes, ha="right", va="bottom",
            fontsize=10, fontweight="bold")
    ve_text = "vertical exaggeration 1:1 (true scale)" if ve == 1 else f"vertical exaggeration {ve:g}:1 (x{ve:g})"
    fig.text(left / width_in, 1 - 0.08 / H, title or f"Section {section_id}", fontsize=12, fontweight="bold",
             va="top")
    fig.text(1 - right / width_in, 1 - 0.1 / H, ve_text + "; azimuths from grid north", fontsize=9, ha="right",
             va="top")
    # scale bar (horizontal; a vertical one too when exaggerated)
    step = _nice_step(length / 3.0)
    x0 = 0.02 * xmax
    y0 = zmin + 0.07 * (ztop - zmin)
    ax.plot([x0, x0 + step], [y0, y0], color="black", linewidth=3, solid_capstyle="butt", zorder=11)
    ax.text(x0 + step / 2, y0 + 0.015 * (ztop - zmin), f"{step:g} m", ha="center", va="bottom", fontsize=8,
            zorder=11, bbox=dict(boxstyle="round,pad=0.1", fc="white", ec="none", alpha=0.8))
    if ve != 1:
        ax.plot([x0, x0], [y0, y0 + step / ve], color="black", linewidth=3, solid_capstyle="butt", zorder=11)
        ax.text(x0, y0 + step / ve, f" {step / ve:g} m", ha="left", va="center", fontsize=8, zorder=11)
    # legend (below the axes)
    handles = [Line2D([], [], color=PALETTE["black"], linewidth=1.3, label="ground surface"),
               Line2D([], [], color=PALETTE["vermillion"], linewidth=2.6, label="fault (id, apparent dip)")]
    for m in markers:
        c, ls = mstyle[m]
        handles.append(Line2D([], [], color=c, linestyle=ls, linewidth=1.6, label=f"contact: {m}"))
    kinds = sorted({str(r["kind"]) for r in pt_rows})
    for k in kinds:
        marker, ec, fc = _POINT_STYLES.get(k, ("x", "black", "black"))
        handles.append(Line2D([], [], color=ec, marker=marker, markerfacecolor=fc, linewidth=1.0,
                              label=f"{k} (dip tick)"))
    if off_rows:
        handles.append(Line2D([], [], color="#555555", marker="o", markersize=3.5, linewidth=1.4,
                              label="separation S: footwall -> hanging-wall cut-off"))
    fig.legend(handles=handles, loc="upper left", bbox_to_anchor=(left / width_in, (below - 0.5) / H),
               ncol=4, fontsize=7.5, frameon=False, borderaxespad=0.0)
    # net slip lines
    lines = []
    for r in ns_rows:
        st = str(r["status"])
        if st in ("unique", "over-determined", "ill-conditioned") and np.isfinite(float(r["net_slip_m"])):
            lines.append(f"{r['fault_id']}: net slip {_fmt(float(r['net_slip_m']))} m "
                         f"[{_fmt(float(r['net_slip_lo95']))}-{_fmt(float(r['net_slip_hi95']))}], "
                         f"rake {_fmt(float(r['rake']))}° [{_fmt(float(r['rake_lo95']))}, "
                         f"{_fmt(float(r['rake_hi95']))}], {r['sense']} - {st}; from {r['markers']}")
        else:
            extra = ""
            if np.isfinite(float(r["min_slip_m"])):
                extra = f" (at least {_fmt(float(r['min_slip_m']))} m)"
            lines.append(f"{r['fault_id']}: {st} - no single slip{extra}; from {r['markers'] or 'nothing'}")
    if lines:
        fig.text(left / width_in, (below - 1.1) / H, "Net slip, 95 % intervals:\n" + "\n".join(lines),
                 fontsize=7.5, va="top", ha="left", family="monospace")
    fig.text(left / width_in, 0.12 / H, CAUTION_LINE, fontsize=7, style="italic", color="#333333", va="bottom")
    return fig


def _atomic_save(fig, path, **kw):
    folder = os.path.dirname(os.path.abspath(path))
    fd, tmp = tempfile.mkstemp(prefix=".slipsense-", suffix=os.path.splitext(path)[1], dir=folder)
    os.close(fd)
    try:
        fig.savefig(tmp, **kw)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.remove(tmp)
        raise


def draw_sections(step, paths, *, exaggeration=1.0, overwrite=False, dpi=150):
    """Write one PNG and one SVG per section.

    Parameters
    ----------
    step : StepResult of :func:`slipsense.steps.cross_sections`
    paths : dict section id -> (png path, svg path)
    exaggeration : vertical exaggeration (1 = true scale; the figure says which)
    overwrite : replace existing files (otherwise an existing file is an error)

    Returns
    -------
    list of the files written
    """
    import matplotlib

    from ..errors import OutputExistsError

    written = []
    drawn = {str(s) for s in np.asarray(step.tables["section_segments"].columns["section_id"]).astype(str)}
    with matplotlib.rc_context({"svg.fonttype": "none", "font.size": 9}):
        for sid, (png, svg) in paths.items():
            if sid not in drawn:
                continue
            for p in (png, svg):
                if os.path.exists(p) and not overwrite:
                    raise OutputExistsError(f"the figure {p} exists already: use --overwrite to replace it")
            fig = draw_section(step.tables, sid, exaggeration=exaggeration, dpi=dpi)
            _atomic_save(fig, png, dpi=dpi)
            _atomic_save(fig, svg)
            written += [png, svg]
    return written

"""One self-contained HTML report of a results GeoPackage.

Everything is inside the one file: the CSS, and the figures as base64 PNG ``data:`` URIs; the
page loads nothing from anywhere (no scripts, fonts, style sheets or images from outside), so it
opens offline and can be mailed or archived as it is.

The report reads whatever layers the run produced and recognises them by their fields (a plane
layer has ``dip_dir``, ``dip``, ``quality`` and an id; fault-slip data have ``station_id``,
``trend``, ``plunge`` and ``sense``; a tendency layer has ``slip_tendency``; ...), so new
capabilities appear in it without changes here when they use the shared field names.
"""
from __future__ import annotations

import base64
import html
import io
import json
import os
import sqlite3

import numpy as np

__all__ = ["build_report", "read_results", "figures_for"]

PROVENANCE = "slipsense_provenance"
SKIP = {"slipsense_provenance", "slipsense_run", "layer_styles"}

CAUTIONS = [
    "Results are interpretations for screening. They must be reviewed by a qualified professional "
    "against local codes and licensed practice before they inform hazard, slope, foundation, "
    "drilling, mining, geothermal or storage decisions.",
    "A fitted plane is only as good as the mapping, the DEM and the assumption that the fault is planar over "
    "the fitted length; intervals cover the stated mapping and DEM errors, not a wrong model.",
    "Ill-posed results carry no orientation or value on purpose: the data cannot constrain them.",
    "Slip and dilation tendency are screening ratios in an assumed stress state; reactivation screening is not a "
    "hazard assessment.",
    "Azimuths are from grid north of the working CRS unless the provenance says otherwise.",
]

CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,"DejaVu Sans",Arial,sans-serif;margin:0;color:#111;
background:#fff;line-height:1.4}
main{max-width:1180px;margin:0 auto;padding:1.2em 1.6em 3em}
h1{font-size:1.6em;margin:.2em 0}h2{font-size:1.25em;margin-top:1.8em;border-bottom:2px solid #0072B2;padding-bottom:.15em}
h3{font-size:1.05em;margin:1.2em 0 .4em}
.meta{color:#444;font-size:.9em}
.caution{border-left:6px solid #D55E00;background:#fff4ec;padding:.6em 1em;margin:1em 0}
.caution ul{margin:.3em 0 .2em 1.2em;padding:0}
.wide{overflow-x:auto}
table{border-collapse:collapse;font-size:.86em;margin:.4em 0 1em}
th,td{border:1px solid #bbb;padding:.25em .5em;text-align:left;vertical-align:top}
th{background:#eef4fa}
td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
.q-good{background:#dcecf7}.q-fair{background:#fbeed2}.q-poor{background:#f8dcc8}.q-ill-posed{background:#e6e6e6}
.q-good::before{content:"\\25CF  "}.q-fair::before{content:"\\25A0  "}.q-poor::before{content:"\\25B2  "}
.q-ill-posed::before{content:"\\2715  "}
figure{margin:1.2em 0;page-break-inside:avoid}
figure img{max-width:100%;height:auto;border:1px solid #ddd}
figcaption{font-size:.88em;color:#333;max-width:900px}
pre{background:#f6f6f6;border:1px solid #ddd;padding:.5em;overflow-x:auto;font-size:.8em;white-space:pre-wrap}
details{margin:.3em 0}
.gate-failed{color:#b00020;font-weight:bold}.gate-passed{color:#006644;font-weight:bold}
@media print{main{max-width:none}figure img{border:none}}
"""


# ---------------------------------------------------------------------------------------------
# Reading


def read_results(gpkg):
    """``{layer: GeoDataFrame}`` of the feature and attribute layers (not provenance/styles/run),
    and ``{layer: provenance record}``."""
    import pyogrio

    layers = {}
    for name, _ in pyogrio.list_layers(gpkg):
        if name in SKIP:
            continue
        layers[str(name)] = pyogrio.read_dataframe(gpkg, layer=name)
    prov = {}
    if PROVENANCE in {n for n, _ in pyogrio.list_layers(gpkg)}:
        df = pyogrio.read_dataframe(gpkg, layer=PROVENANCE, read_geometry=False)
        for r in df.itertuples():
            try:
                prov[r.layer] = json.loads(r.record)
            except (TypeError, ValueError):
                prov[r.layer] = {}
    return layers, prov


def _geometry_types(gpkg):
    con = sqlite3.connect(gpkg)
    try:
        return {r[0]: r[1] for r in con.execute("SELECT table_name, geometry_type_name FROM gpkg_geometry_columns")}
    finally:
        con.close()


def _has(df, *cols):
    return all(c in df.columns for c in cols)


def _num(df, col):
    if col not in df.columns:
        return np.full(len(df), np.nan)
    return np.asarray(df[col].astype(float).fillna(np.nan), float)


def _plane_layers(layers):
    """Layers of fitted planes: dip_dir, dip, quality and an id (windows and tendency excluded)."""
    out = {}
    for name, df in layers.items():
        if _has(df, "dip_dir", "dip", "quality") and ("trace_id" in df.columns or "plane_id" in df.columns) \
                and "window_no" not in df.columns and "slip_tendency" not in df.columns:
            out[name] = df
    return out


def _id_col(df):
    for c in ("trace_id", "plane_id", "fault_id"):
        if c in df.columns:
            return c
    return None


# ---------------------------------------------------------------------------------------------
# Figures


def _png(fig):
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=fig.dpi)
    w, h = (int(round(v)) for v in fig.get_size_inches() * fig.dpi)
    return buf.getvalue(), w, h


def _parts(geom):
    import shapely

    if geom is None or geom.is_empty:
        return []
    if geom.geom_type.startswith("Multi"):
        return [np.asarray(shapely.get_coordinates(g)) for g in geom.geoms]
    return [np.asarray(shapely.get_coordinates(geom))]


def figures_for(layers, settings=None):
    """The report's figures: list of ``(key, title, caption, matplotlib Figure)``."""
    from ..figures import mohr, rose, stereonet

    settings = settings or {}
    dpi = int(settings.get("dpi", 110))
    sigma = float(settings.get("kamb_sigma", 3.0))
    out = []
    planes = _plane_layers(layers)
    measured = [(n, df) for n, df in layers.items() if _has(df, "dip_dir", "dip", "pole_trend")]
    for name, df in planes.items():
        ok = np.isfinite(_num(df, "dip"))
        extra = None
        note = ""
        if measured:
            mname, mdf = measured[0]
            extra = (_num(mdf, "dip_dir"), _num(mdf, "dip"))
            note = f" Kamb contours and small dots: the {len(mdf)} measured planes of layer {mname}."
        fig = stereonet.planes_figure(_num(df, "dip_dir"), _num(df, "dip"), labels=df[_id_col(df)].astype(str).values,
                                      quality=df["quality"].astype(str).values, extra_poles=extra, sigma=sigma,
                                      title=f"Planes of layer {name} ({int(ok.sum())} oriented)", dpi=dpi)
        out.append((f"stereonet_{name}", f"Stereonet: {name}",
                    f"Great circles and poles of the {len(df)} planes of layer {name}, by quality word; "
                    f"ill-posed planes have no orientation and are not drawn.{note}", fig))
        if "trace_id" in df.columns and df.geometry is not None and df.geometry.notna().any():
            traces = [_parts(g) for g in df.geometry.values]
            fig = rose.rose_figure(traces, _num(df, "dip_dir"), bin_deg=float(settings.get("rose_bin_deg", 10.0)),
                                   dpi=dpi)
            out.append((f"rose_{name}", f"Rose diagram: {name}",
                        "Length-weighted rose of the mapped trace segments; each segment is oriented as the "
                        "right-hand-rule strike of its fitted plane when every trace has one, otherwise shown "
                        "axially. Petal area is proportional to length.", fig))
    if measured and not planes:
        mname, mdf = measured[0]
        fig = stereonet.planes_figure(_num(mdf, "dip_dir"), _num(mdf, "dip"), sigma=sigma,
                                      title=f"Measured planes of layer {mname}", dpi=dpi)
        out.append((f"stereonet_{mname}", f"Stereonet: {mname}", "Measured planes with Kamb contours of their poles.",
                    fig))
    for name, df in layers.items():
        if _has(df, "station_id", "dip_dir", "dip", "trend", "plunge", "sense"):
            status = df["status"].astype(str).values if "status" in df.columns else np.full(len(df), "")
            keep = status != "rejected"
            t, p = _num(df, "trend")[keep], _num(df, "plunge")[keep]
            tr, pr = np.radians(t), np.radians(p)
            u = np.column_stack([np.sin(tr) * np.cos(pr), np.cos(tr) * np.cos(pr), -np.sin(pr)])
            pax = (_num(df, "p_trend")[keep], _num(df, "p_plunge")[keep]) if "p_trend" in df.columns else None
            tax = (_num(df, "t_trend")[keep], _num(df, "t_plunge")[keep]) if "t_trend" in df.columns else None
            fig = stereonet.fault_slip_figure(_num(df, "dip_dir")[keep], _num(df, "dip")[keep], u,
                                              sense=df["sense"].astype(str).values[keep], p_axes=pax, t_axes=tax,
                                              title=f"Fault-slip data of layer {name} (N = {int(keep.sum())})", dpi=dpi)
            out.append((f"faultslip_{name}", f"Fault-slip data: {name}",
                        f"{int(keep.sum())} fault-slip data (rejected data left out). Arrows: map direction of the "
                        "hanging wall's motion relative to the footwall, drawn from the lower end of the slip line.",
                        fig))
    boot = {n: df for n, df in layers.items() if _has(df, "sigma1_trend", "sigma1_plunge") and
            ("resample" in df.columns or n.endswith("bootstrap"))}
    for name, df in layers.items():
        if name in boot or not _has(df, "sigma1_trend", "sigma1_plunge", "sigma3_trend", "phi"):
            continue
        gcol = "group_id" if "group_id" in df.columns else None
        for k in range(len(df)):
            row = df.iloc[k]
            if not np.isfinite(float(row["sigma1_trend"]) if row["sigma1_trend"] is not None else np.nan):
                continue
            axes = {f"sigma{j}": (float(row[f"sigma{j}_trend"]), float(row[f"sigma{j}_plunge"])) for j in (1, 2, 3)}
            cones = {f"sigma{j}": float(row[f"sigma{j}_cone95"]) for j in (1, 2, 3) if f"sigma{j}_cone95" in df.columns}
            group = str(row[gcol]) if gcol else ""
            clouds = None
            for bdf in boot.values():
                sel = bdf[gcol].astype(str).values == group if (gcol and gcol in bdf.columns) else np.ones(len(bdf), bool)
                clouds = {f"sigma{j}": (_num(bdf, f"sigma{j}_trend")[sel], _num(bdf, f"sigma{j}_plunge")[sel])
                          for j in (1, 2, 3) if f"sigma{j}_trend" in bdf.columns}
            phi = float(row["phi"]) if row["phi"] is not None else np.nan
            note = f"φ = {phi:.2f}" + (f", regime {row['regime']}" if "regime" in df.columns and row["regime"] else "")
            fig = stereonet.stress_figure(axes, clouds, cones=cones,
                                          title=f"Stress axes{': ' + group if group else ''} ({name})", note=note, dpi=dpi)
            out.append((f"stress_{name}_{k}", f"Stress axes: {group or name}",
                        f"Principal stress axes of group {group or '(all)'} from layer {name}; " + note +
                        (". Circles: 95 % bootstrap confidence cones." if cones else "") +
                        (" Small symbols: bootstrap resamples." if clouds else ""), fig))
    for name, df in layers.items():
        if not _has(df, "slip_tendency", "sigma_n_mpa", "tau_mpa", "sigma1_mpa", "sigma2_mpa", "sigma3_mpa"):
            continue
        s = np.column_stack([_num(df, c) for c in ("sigma1_mpa", "sigma2_mpa", "sigma3_mpa")])
        pp = _num(df, "pore_pressure_mpa") if "pore_pressure_mpa" in df.columns else np.zeros(len(df))
        ok = np.all(np.isfinite(s), axis=1) & np.isfinite(pp)
        if not np.any(ok):
            continue
        mu = _num(df, "friction")
        mu = float(np.nanmedian(mu)) if np.any(np.isfinite(mu)) else 0.6
        ids = df[_id_col(df)].astype(str).values if _id_col(df) else None
        states = np.unique(np.column_stack([s[ok], pp[ok]]).round(6), axis=0)
        sn, tau = _num(df, "sigma_n_mpa"), _num(df, "tau_mpa")
        if len(states) == 1:
            principal, p0, unit = states[0][:3], float(states[0][3]), "MPa"
        else:  # several depths: every state scaled by its own σ1' (same shape for gradient states)
            scale = s[:, 0] - pp
            sn, tau = (sn - pp) / scale, tau / scale
            principal = np.nanmedian((s - pp[:, None]) / scale[:, None], axis=0)
            p0, unit = 0.0, "× σ1'"
        fig = mohr.mohr_figure(principal, sn, tau, pore_pressure=p0, friction=mu,
                               labels=ids, slip_tendency=_num(df, "slip_tendency"), unit=unit,
                               title=f"Mohr diagram of layer {name}", dpi=dpi)
        out.append((f"mohr_{name}", f"Mohr diagram: {name}",
                    f"Mohr circles of the stress state of layer {name}, its planes at (σn', τ) coloured by slip "
                    f"tendency class, and the frictional failure line for μ = {mu:g}.", fig))
    out += _section_figures(layers, dpi)
    return out


def _section_figures(layers, dpi):
    """Section figures through :mod:`slipsense.figures.section` when it offers a function for
    results layers (``figures_from_layers(layers, dpi=...)`` returning (key, title, caption, Figure))."""
    try:
        from ..figures import section
    except ImportError:
        return []
    fn = getattr(section, "figures_from_layers", None)
    if fn is None:
        return []
    try:
        return list(fn(layers, dpi=dpi))
    except (KeyError, ValueError, TypeError):  # layers of another shape: no section figures
        return []


# ---------------------------------------------------------------------------------------------
# HTML


def _e(v):
    return html.escape("" if v is None else str(v))


def _fmt(v, nd=1):
    try:
        f = float(v)
    except (TypeError, ValueError):
        return _e(v)
    return "–" if not np.isfinite(f) else f"{f:.{nd}f}"


def _interval(v, lo, hi, nd=1):
    if not np.isfinite(v):
        return "–"
    if np.isfinite(lo) and np.isfinite(hi):
        return f"{v:.{nd}f} [{lo:.{nd}f}, {hi:.{nd}f}]"
    return f"{v:.{nd}f}"


def _q(word):
    w = _e(word)
    return f'<td class="q-{w}">{w}</td>' if word in ("good", "fair", "poor", "ill-posed") else f"<td>{w}</td>"


def _faults_table(layers):
    planes = _plane_layers(layers)
    if not planes:
        return "<p>No plane layer in these results.</p>"
    slip_data = next((df for df in layers.values() if _has(df, "station_id", "fault_id", "sense", "fault_type")), None)
    net = next((df for df in layers.values() if _has(df, "fault_id", "net_slip_m") and "marker_id" not in df.columns
                and "section_id" not in df.columns), None)
    tend = next((df for df in layers.values() if _has(df, "slip_tendency", "plane_id")), None)
    depth = next((df for df in layers.values() if _has(df, "collar_id", "plane_id", "depth_m")), None)
    parts = []
    for name, df in planes.items():
        idc = _id_col(df)
        ids = set(df[idc].astype(str))

        def joins(other, col):
            return other is not None and bool(ids & set(other[col].astype(str)))

        slip_data_k = slip_data if joins(slip_data, "fault_id") else None
        net_k = net if joins(net, "fault_id") else None
        tend_k = tend if joins(tend, "plane_id") else None
        depth_k = depth if joins(depth, "plane_id") else None
        head = ["fault", "dip direction [95 %]", "dip [95 %]", "strike (RHR)", "quality", "misfit ratio"]
        if slip_data_k is not None:
            head.append("fault-slip data (type)")
        if net_k is not None:
            head += ["net slip m [95 %]", "rake", "sense", "throw m"]
        if tend_k is not None:
            head += ["slip tendency", "dilation tendency"]
        if depth_k is not None:
            head.append("depth below collars m")
        rows = []
        for k in range(len(df)):
            r = df.iloc[k]
            fid = str(r[idc])
            cells = [f"<td>{_e(fid)}</td>",
                     f'<td class="num">{_interval(_f(r, "dip_dir"), _f(r, "dip_dir_lo95"), _f(r, "dip_dir_hi95"), 2)}</td>',
                     f'<td class="num">{_interval(_f(r, "dip"), _f(r, "dip_lo95"), _f(r, "dip_hi95"), 2)}</td>',
                     f'<td class="num">{_fmt(_f(r, "strike"))}</td>', _q(str(r["quality"])),
                     f'<td class="num">{_fmt(_f(r, "misfit_ratio"), 2)}</td>']
            if slip_data_k is not None:
                sel = slip_data_k[slip_data_k["fault_id"].astype(str) == fid]
                if "status" in sel.columns:
                    sel = sel[sel["status"].astype(str) != "rejected"]
                kinds = sel["fault_type"].astype(str).value_counts()
                cells.append(f"<td>{len(sel)}" + (f" ({_e(kinds.index[0])})" if len(kinds) else "") + "</td>")
            if net_k is not None:
                sel = net_k[net_k["fault_id"].astype(str) == fid]
                if len(sel):
                    s = sel.iloc[0]
                    status = f" <small>{_e(s['status'])}</small>" if "status" in sel.columns and s["status"] else ""
                    cells += [f'<td class="num">{_interval(_f(s, "net_slip_m"), _f(s, "net_slip_lo95"), _f(s, "net_slip_hi95"), 0)}{status}</td>',
                              f'<td class="num">{_fmt(_f(s, "rake"))}</td>', f"<td>{_e(s.get('sense', ''))}</td>",
                              f'<td class="num">{_fmt(_f(s, "throw_m"), 0)}</td>']
                else:
                    cells += ["<td>–</td>"] * 4
            if tend_k is not None:
                sel = tend_k[tend_k["plane_id"].astype(str) == fid]
                if len(sel):
                    s = sel.iloc[0]
                    flag = f" <small>{_e(s['flag'])}</small>" if "flag" in sel.columns and s["flag"] else ""
                    cells += [f'<td class="num">{_fmt(_f(s, "slip_tendency"), 2)}{flag}</td>',
                              f'<td class="num">{_fmt(_f(s, "dilation_tendency"), 2)}</td>']
                else:
                    cells += ["<td>–</td>"] * 2
            if depth_k is not None:
                sel = depth_k[depth_k["plane_id"].astype(str) == fid]
                items = [f"{_e(c)}: {_fmt(d, 0)}" for c, d in zip(sel["collar_id"], _num(sel, "depth_m")) if np.isfinite(d)]
                cells.append(f"<td>{'; '.join(items) or '–'}</td>")
            rows.append("<tr>" + "".join(cells) + "</tr>")
        parts.append(f"<h3>Layer {_e(name)}</h3><div class=wide><table><thead><tr>" +
                     "".join(f"<th>{_e(h)}</th>" for h in head) + "</tr></thead><tbody>" + "".join(rows) +
                     "</tbody></table></div>")
    parts.append("<p class=meta>Angles in degrees from grid north of the working CRS; dip direction intervals "
                 "with lo &gt; hi wrap through north. Quality words: see the README (good, fair, poor, ill-posed).</p>")
    return "\n".join(parts)


def _f(row, col):
    try:
        v = row[col]
    except (KeyError, IndexError):
        return np.nan
    try:
        return float(v) if v is not None else np.nan
    except (TypeError, ValueError):
        return np.nan


def _layers_table(layers, prov, gtypes, quality):
    rows = []
    for name, df in layers.items():
        q = quality.get(name)
        qtxt = ", ".join(f"{w} {n}" for w, n in q.items() if n) if q else ""
        p = prov.get(name, {})
        rows.append(f"<tr><td>{_e(name)}</td><td>{_e(gtypes.get(name, 'table'))}</td><td class=num>{len(df)}</td>"
                    f"<td>{_e(p.get('command', ''))}</td><td>{_e(qtxt)}</td></tr>")
    return ("<table><thead><tr><th>layer</th><th>geometry</th><th>features</th><th>made by</th>"
            "<th>quality words</th></tr></thead><tbody>" + "".join(rows) + "</tbody></table>")


def _provenance_html(prov, record):
    inputs = {}
    crs, north = set(), set()
    for rec in prov.values():
        for inp in rec.get("inputs", []):
            key = (inp.get("file"), inp.get("sha256"))
            inputs.setdefault(key, inp)
        if rec.get("working_crs"):
            crs.add(str(rec["working_crs"]))
        if rec.get("north_reference"):
            north.add(str(rec["north_reference"]))
    rows = "".join(f"<tr><td>{_e(f)}</td><td><code>{_e(s)}</code></td><td>{_e(i.get('path', ''))}</td></tr>"
                   for (f, s), i in sorted(inputs.items(), key=lambda kv: str(kv[0])))
    vers = record.get("versions", {})
    vrows = "".join(f"<tr><td>{_e(k)}</td><td>{_e(v)}</td></tr>" for k, v in vers.items())
    return (f"<p>Working CRS: <b>{_e(', '.join(sorted(crs)) or 'unknown')}</b>; north reference: "
            f"<b>{_e(', '.join(sorted(north)) or 'unknown')}</b>.</p>"
            f"<p>Analysis file: <code>{_e(record.get('file'))}</code>, SHA-256 <code>{_e(record.get('sha256'))}</code>; "
            f"run at {_e(record.get('time_utc'))} (UTC).</p>"
            "<h3>Inputs</h3><table><thead><tr><th>file</th><th>SHA-256</th><th>path or origin</th></tr></thead><tbody>"
            + rows + "</tbody></table><h3>Versions</h3><table><tbody>" + vrows + "</tbody></table>")


def _steps_html(record):
    parts = []
    for s in record.get("steps_run", []):
        warn = s.get("warnings", [])
        w = ""
        if warn:
            w = (f"<details><summary>{len(warn)} warning{'s' if len(warn) != 1 else ''}</summary><pre>"
                 + _e("\n".join(warn)) + "</pre></details>")
        parts.append(f"<h3>{_e(s['name'])} <small>({_e(s['command'])}, {s.get('seconds', 0):.1f} s)</small></h3>"
                     f"<pre>{_e(s.get('command_line', ''))}</pre><p>Layers: {_e(', '.join(s.get('layers', [])) or 'none')}</p>"
                     + w)
    return "\n".join(parts)


def png_size(data):
    """(width, height) in pixels from a PNG's IHDR chunk."""
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("not a PNG file")
    return int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")


def build_report(gpkg, record, settings=None, images=None):
    """HTML text of the report of results GeoPackage ``gpkg`` and the PNG bytes of its figures.

    ``record``: the run record (:mod:`slipsense.pipeline.runner`: analysis, steps, versions,
    quality); ``settings``: the ``[figures]`` table; ``images``: further figures as
    ``(key, title, caption, png bytes)`` (e.g. the section figures a step wrote).
    Returns ``(html, {key: png bytes})``.
    """
    settings = dict(settings or {})
    layers, prov = read_results(gpkg)
    gtypes = _geometry_types(gpkg)
    quality = record.get("quality", {})
    figs = []
    pngs = {}
    if settings.get("enabled", True):
        for key, title, caption, fig in figures_for(layers, settings):
            data, w, h = _png(fig)
            pngs[key] = data
            figs.append((key, title, caption, data, w, h))
    for key, title, caption, data in images or []:
        w, h = png_size(data)
        figs.append((key, title, caption, data, w, h))
    totals = {w: sum(q.get(w, 0) for q in quality.values()) for w in ("good", "fair", "poor", "ill-posed")}
    gate = record.get("gate_result")
    fig_html = "\n".join(
        f'<figure id="fig-{_e(k)}"><img src="data:image/png;base64,{base64.b64encode(d).decode("ascii")}" '
        f'width="{w}" height="{h}" alt="{_e(t)}"><figcaption><b>Figure {i}.</b> {_e(t)}. {_e(c)}</figcaption></figure>'
        for i, (k, t, c, d, w, h) in enumerate(figs, 1)) or "<p>No figures for these layers.</p>"
    caution = "<ul>" + "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS) + "</ul>"
    title = record.get("analysis") or os.path.basename(gpkg)
    desc = record.get("description") or ""
    gate_html = ""
    if gate:
        gate_html = f'<p>Quality gate (fail below <b>{_e(record.get("fail_below"))}</b>): <span class="gate-{_e(gate)}">{_e(gate)}</span></p>'
    doc = f"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="{_e(record.get('versions', {}).get('slipsense', 'slipsense'))}">
<title>{_e(title)} — slipsense report</title>
<style>{CSS}</style>
</head>
<body>
<main>
<header>
<h1>{_e(title)}</h1>
<p>{_e(desc)}</p>
<p class="meta">slipsense report of <code>{_e(os.path.basename(record.get('results') or gpkg))}</code>, analysis file
<code>{_e(record.get('file', ''))}</code>, {_e(record.get('time_utc', ''))} UTC.</p>
</header>
<section class="caution" id="caution"><b>Caution.</b>{caution}</section>
<section id="summary"><h2>Results at a glance</h2>
<p>Quality words over all layers: {", ".join(f'<span class="q-{w}">{w} {n}</span>' for w, n in totals.items())}.</p>
{gate_html}
{_layers_table(layers, prov, gtypes, quality)}
</section>
<section id="faults"><h2>Faults</h2>
{_faults_table(layers)}
</section>
<section id="figures"><h2>Figures</h2>
{fig_html}
</section>
<section id="steps"><h2>Steps and parameters</h2>
<p>Each step is an ordinary <code>slipsense</code> command; <code>@name</code> is a named input or the layers an
earlier step wrote (a snapshot of the results taken after that step).</p>
{_steps_html(record)}
<details><summary>The analysis file</summary><pre>{_e(record.get('text', ''))}</pre></details>
</section>
<section id="provenance"><h2>Provenance</h2>
{_provenance_html(prov, record)}
</section>
<section class="caution"><b>Caution.</b> {_e(CAUTIONS[0])}</section>
</main>
</body>
</html>
"""
    return doc, pngs

"""Default QGIS styles of the output layers, stored in the GeoPackage's ``layer_styles`` table.

QGIS (3.x) reads a style row of ``layer_styles`` whose ``useAsDefault`` is true when it opens a
GeoPackage layer, so every layer slipsense writes opens looking right without restyling:

* fault traces (lines with ``dip_dir``/``dip``): coloured and dashed by ``quality``, a dip tick
  at the middle of the trace pointing down the dip direction, and the dip as a label;
* slip vectors: arrows (points rotated to the hanging-wall motion azimuth; lines drawn as arrows
  from their first to their last vertex);
* quality (any layer with a ``quality`` field): colour **and** line style or marker shape;
* slip tendency (``slip_tendency``): graduated in fixed classes 0-0.2-0.4-0.6-0.8-1 (0.6 is the
  default friction coefficient, Byerlee 1978), colour and width both increasing;
* measured planes (points with ``dip_dir``/``dip``): a strike line with a dip tick and label;
* structure contours (``elevation_m``), predicted outcrop traces, depths to planes, and a plain
  symbol for anything else.

Colours are the Okabe & Ito (2008, "Color Universal Design") palette, which colour-blind readers
can tell apart; every class also differs by line style, marker shape or width, so the styles
still read in greyscale.  Azimuth rotations are clockwise from the top of the map, which is grid
north of the layer's CRS when QGIS shows the layer in that CRS (slipsense writes outputs in their
working CRS).

The QML is assembled from the fragments in ``templates/`` (QGIS 3.22 QML, written for
slipsense).  Only the standard library is used here (``sqlite3``), so the hook in
:func:`slipsense.io.vector.write_tables` costs nothing heavy.
"""
from __future__ import annotations

import datetime as _dt
import os
import sqlite3
from functools import lru_cache
from xml.sax.saxutils import escape

__all__ = [
    "OKABE_ITO",
    "QUALITY_STYLE",
    "STYLE_NAME",
    "choose_style",
    "style_qml",
    "add_default_styles",
    "read_styles",
]

#: Okabe & Ito (2008) colour-blind-safe palette (RGB).
OKABE_ITO = {
    "black": (0, 0, 0), "orange": (230, 159, 0), "sky_blue": (86, 180, 233),
    "bluish_green": (0, 158, 115), "yellow": (240, 228, 66), "blue": (0, 114, 178),
    "vermillion": (213, 94, 0), "reddish_purple": (204, 121, 167), "grey": (120, 120, 120),
}

#: quality word -> (colour, line style, line width mm, marker shape); colour and shape/dash both
#: differ, so the classes read by colour, in greyscale and for colour-blind readers.
QUALITY_STYLE = {
    "good": ("blue", "solid", 0.8, "circle"),
    "fair": ("orange", "dash", 0.7, "square"),
    "poor": ("vermillion", "dot", 0.6, "triangle"),
    "ill-posed": ("grey", "dash dot", 0.4, "cross2"),
}

#: Slip/dilation tendency classes: (lower, upper, colour (viridis-like, light to dark), width mm).
TENDENCY_CLASSES = (
    (0.0, 0.2, (253, 231, 37), 0.4),
    (0.2, 0.4, (94, 201, 98), 0.6),
    (0.4, 0.6, (33, 145, 140), 0.8),
    (0.6, 0.8, (59, 82, 139), 1.1),
    (0.8, 100.0, (68, 1, 84), 1.4),
)

STYLE_NAME = "slipsense default"
OWNER = "slipsense"
STYLE_TABLE = "layer_styles"
_TEMPLATES = os.path.join(os.path.dirname(__file__), "templates")


@lru_cache(maxsize=None)
def _template(name):
    with open(os.path.join(_TEMPLATES, name), encoding="utf-8") as f:
        return f.read()


def _fill(name, **values):
    text = _template(name)
    for key, value in values.items():
        text = text.replace("{{" + key + "}}", str(value))
    if "{{" in text:
        raise ValueError(f"style template {name}: unfilled placeholder in {text[text.index('{{'):][:40]!r}")
    return text


def _rgba(colour, alpha=255):
    rgb = OKABE_ITO[colour] if isinstance(colour, str) else colour
    return ",".join(str(int(c)) for c in (*rgb, alpha))


def _attr(text):
    """Text for an XML attribute value (the templates put it between double quotes)."""
    return escape(str(text), {'"': "&quot;"})


# ---------------------------------------------------------------------------------------------
# Symbol layers


def _line(colour, width, style="solid", alpha=255):
    return _fill("layer_simple_line.xml", COLOR=_rgba(colour, alpha), WIDTH=width, STYLE=style)


def _marker_layer(shape, colour, size, outline="black", outline_width=0.2, offset="0,0", angle=None):
    dd = _fill("data_defined_angle.xml", EXPRESSION=_attr(angle)) if angle else ""
    return _fill("layer_simple_marker.xml", SHAPE=shape, COLOR=_rgba(colour), OUTLINE=_rgba(outline),
                 OUTLINE_WIDTH=outline_width, SIZE=size, OFFSET=offset, DATA_DEFINED=dd)


def _symbol(kind, name, layers):
    return _fill("symbol.xml", TYPE=kind, NAME=name, LAYERS="\n".join(layers))


def _tick_line(name, colour, width, angle_expr, length=3.2):
    """A marker at the middle of a line: a tick of ``length`` mm from the line toward ``angle_expr``
    (the marker shape "line" is vertical; its offset is rotated with the marker)."""
    sub = _symbol("marker", f"@{name}@1", [
        _marker_layer("line", colour, length, outline=colour, outline_width=width,
                      offset=f"0,{-length / 2:g}", angle=angle_expr)])
    return _fill("layer_marker_line.xml", PLACEMENT="centralpoint", ROTATE="0", INTERVAL="3", SUBSYMBOL=sub)


def _arrow_line(name, colour, width=0.6, head=2.6):
    sub = _symbol("fill", f"@{name}@0", [_fill("layer_simple_fill.xml", COLOR=_rgba(colour),
                                                 OUTLINE=_rgba("black"), OUTLINE_WIDTH=0.15)])
    return _fill("layer_arrow_line.xml", WIDTH=width, HEAD=head, SUBSYMBOL=sub)


def _fill_layer(colour, alpha=90):
    return _fill("layer_simple_fill.xml", COLOR=_rgba(colour, alpha), OUTLINE=_rgba(colour), OUTLINE_WIDTH=0.4)


# ---------------------------------------------------------------------------------------------
# Renderers and labels


def _single(symbol):
    return _fill("renderer_single.xml", SYMBOLS=symbol)


def _categorized(field, cats):
    """``cats``: list of (value, label, symbol_xml_builder(name))."""
    categories, symbols = [], []
    for k, (value, label, build) in enumerate(cats):
        categories.append(_fill("category.xml", VALUE=_attr(value), LABEL=_attr(label), SYMBOL=k))
        symbols.append(build(str(k)))
    return _fill("renderer_categorized.xml", FIELD=_attr(field), CATEGORIES="\n".join(categories),
                 SYMBOLS="\n".join(symbols))


def _graduated(field, ranges):
    rows, symbols = [], []
    for k, (lo, hi, label, build) in enumerate(ranges):
        rows.append(_fill("range.xml", LOWER=lo, UPPER=hi, LABEL=_attr(label), SYMBOL=k))
        symbols.append(build(str(k)))
    return _fill("renderer_graduated.xml", FIELD=_attr(field), RANGES="\n".join(rows), SYMBOLS="\n".join(symbols))


#: QgsPalLayerSettings placements: 0 around point, 3 curved (lines), 4 horizontal.
def _labels(expression, placement, layer_type, size=8, dist=1.0, flags=10, repeat=0, colour="black"):
    return _fill("labeling.xml", EXPRESSION=_attr(expression), SIZE=size, COLOR=_rgba(colour), PLACEMENT=placement,
                 FLAGS=flags, DIST=dist, REPEAT=repeat, LAYER_TYPE=layer_type)


_GEOMETRY_CODE = {"point": 0, "line": 1, "polygon": 2}
_LABEL_LAYER_TYPE = {"point": "PointGeometry", "line": "LineGeometry", "polygon": "PolygonGeometry"}


# ---------------------------------------------------------------------------------------------
# Choosing a style


def geometry_family(geometry_type):
    """'point', 'line', 'polygon' or None for a GeoPackage geometry type name."""
    g = (geometry_type or "").upper()
    if "POINT" in g:
        return "point"
    if "LINE" in g or ("CURVE" in g and "POLYGON" not in g):
        return "line"
    if "POLYGON" in g or "SURFACE" in g:
        return "polygon"
    return None


def choose_style(name, geometry_type, fields):
    """The style key for a layer (first rule that matches), or None for a non-spatial table.

    Rules, in order: ``slip_tendency`` -> tendency; line with ``elevation_m`` -> contours; line
    with ``dip_dir`` and ``dip`` -> fault traces; line with ``net_slip_m`` or ``slip_e`` ->
    slip-vector arrows; point with a slip azimuth (``slip_trend``, or ``trend`` with ``sense`` or
    ``rake``) -> slip arrows; point with ``depth_m`` and ``status`` -> depths; point with
    ``dip_dir`` and ``dip`` but no ``quality`` -> measured planes; ``quality`` -> quality classes;
    a line layer named like an outcrop trace -> predicted trace; otherwise a plain symbol.
    """
    fam = geometry_family(geometry_type)
    if fam is None:
        return None
    f = set(fields)
    if "slip_tendency" in f:
        return "tendency"
    if fam == "line" and "elevation_m" in f:
        return "contours"
    if fam == "line" and {"dip_dir", "dip"} <= f:
        return "fault_traces"
    if fam == "line" and ("net_slip_m" in f or "slip_e" in f):
        return "slip_vector_lines"
    if fam == "point" and ("slip_trend" in f or ("trend" in f and ({"sense", "rake"} & f))):
        return "slip_arrows"
    if fam == "point" and {"depth_m", "status"} <= f:
        return "depths"
    if fam == "point" and {"dip_dir", "dip"} <= f and "quality" not in f:
        return "measured_planes"
    if "quality" in f:
        return "quality"
    if fam == "line" and "outcrop" in name.lower():
        return "predicted_traces"
    return "plain"


def _quality_symbols(fam, extra=None):
    """Category list for the four quality words on a geometry family."""
    cats = []
    for word, (colour, dash, width, shape) in QUALITY_STYLE.items():
        if fam == "line":
            def build(n, colour=colour, dash=dash, width=width, word=word):
                layers = [_line(colour, width, dash)]
                if extra and word != "ill-posed":  # ill-posed planes have no orientation: no tick
                    layers.append(extra(n, colour, width))
                return _symbol("line", n, layers)
        elif fam == "point":
            def build(n, colour=colour, shape=shape):
                return _symbol("marker", n, [_marker_layer(shape, colour, 2.6, outline_width=0.25)])
        else:
            def build(n, colour=colour):
                return _symbol("fill", n, [_fill_layer(colour)])
        cats.append((word, word, build))
    return cats


def _slip_azimuth_expression(fields):
    f = set(fields)
    for name in ("slip_trend", "motion_azimuth", "hw_trend"):
        if name in f:
            return f'"{name}"'
    return '"trend"'


def style_qml(key, geometry_type, fields, name=""):
    """QML text (QGIS 3.22) of style ``key`` for a layer of ``geometry_type`` with ``fields``."""
    fam = geometry_family(geometry_type)
    f = set(fields)
    labeling = ""
    if key == "fault_traces":
        def tick(n, colour, width):
            return _tick_line(n, colour, width, '"dip_dir"')
        renderer = (_categorized("quality", _quality_symbols("line", tick)) if "quality" in f
                    else _single(_symbol("line", "0", [_line("black", 0.7), tick("0", "black", 0.7)])))
        labeling = _labels('CASE WHEN "dip" IS NULL THEN \'\' ELSE to_string(round("dip")) END', 4, "LineGeometry",
                           size=8, dist=1.5)
    elif key == "tendency":
        ranges = []
        for lo, hi, colour, width in TENDENCY_CLASSES:
            label = f"{lo:g} - {hi:g}" if hi < 10 else f">= {lo:g}"
            if fam == "line":
                def build(n, colour=colour, width=width):
                    return _symbol("line", n, [_line(colour, width)])
            elif fam == "point":
                def build(n, colour=colour, width=width):
                    return _symbol("marker", n, [_marker_layer("circle", colour, 1.6 + 2 * width)])
            else:
                def build(n, colour=colour):
                    return _symbol("fill", n, [_fill_layer(colour, 160)])
            ranges.append((lo, hi, label, build))
        renderer = _graduated("slip_tendency", ranges)
        labeling = _labels('format_number("slip_tendency", 2)', 4 if fam == "line" else 0, _LABEL_LAYER_TYPE[fam],
                           size=7, dist=1.2)
    elif key == "contours":
        renderer = _single(_symbol("line", "0", [_line("sky_blue", 0.35)]))
        labeling = _labels('to_string(round("elevation_m"))', 3, "LineGeometry", size=7, flags=9, repeat=60,
                           colour=(40, 90, 130))
    elif key == "slip_vector_lines":
        renderer = _single(_symbol("line", "0", [_arrow_line("0", "vermillion")]))
        if "net_slip_m" in f:
            labeling = _labels('format_number("net_slip_m", 0) || \' m\'', 4, "LineGeometry", size=7)
    elif key == "slip_arrows":
        angle = _slip_azimuth_expression(fields)
        renderer = _single(_symbol("marker", "0", [
            _marker_layer("arrow", "vermillion", 5.0, outline_width=0.2, angle=angle)]))
    elif key == "depths":
        ok = lambda n: _symbol("marker", n, [_marker_layer("circle", "bluish_green", 3.0)])  # noqa: E731
        other = lambda n: _symbol("marker", n, [_marker_layer("cross2", "grey", 3.0, outline="grey", outline_width=0.5)])  # noqa: E731
        renderer = _categorized("status", [("ok", "ok", ok), ("parallel", "parallel", other),
                                           ("above", "above", other), ("ill-posed", "ill-posed", other)])
        labeling = _labels('CASE WHEN "depth_m" IS NULL THEN \'\' ELSE format_number("depth_m", 0) || \' m\' END',
                           0, "PointGeometry", size=7)
    elif key == "measured_planes":
        renderer = _single(_symbol("marker", "0", [
            _marker_layer("line", "black", 4.0, outline_width=0.5, angle='"strike"' if "strike" in f
                          else '"dip_dir" - 90'),
            _marker_layer("line", "black", 1.6, outline_width=0.5, offset="0,-0.8", angle='"dip_dir"')]))
        labeling = _labels('CASE WHEN "dip" IS NULL THEN \'\' ELSE to_string(round("dip")) END', 0,
                           "PointGeometry", size=7, dist=1.5)
    elif key == "quality":
        renderer = _categorized("quality", _quality_symbols(fam))
    elif key == "predicted_traces":
        renderer = _single(_symbol("line", "0", [_line("reddish_purple", 0.6, "dash")]))
    elif key == "plain":
        if fam == "line":
            renderer = _single(_symbol("line", "0", [_line("black", 0.5)]))
        elif fam == "point":
            renderer = _single(_symbol("marker", "0", [_marker_layer("circle", "sky_blue", 2.4)]))
        else:
            renderer = _single(_symbol("fill", "0", [_fill_layer("sky_blue")]))
    else:
        raise ValueError(f"unknown style {key!r}")
    return _fill("document.qml", STYLE=escape(key), LABELS_ENABLED=1 if labeling else 0, RENDERER=renderer,
                 LABELING=labeling, GEOMETRY_CODE=_GEOMETRY_CODE[fam])


# ---------------------------------------------------------------------------------------------
# The layer_styles table


_CREATE = (
    'CREATE TABLE "layer_styles" ( "id" INTEGER PRIMARY KEY AUTOINCREMENT NOT NULL, '
    '"f_table_catalog" TEXT(256), "f_table_schema" TEXT(256), "f_table_name" TEXT(256), '
    '"f_geometry_column" TEXT(256), "styleName" TEXT(30), "styleQML" TEXT, "styleSLD" TEXT, '
    '"useAsDefault" BOOLEAN, "description" TEXT, "owner" TEXT(30), "ui" TEXT(30), '
    '"update_time" DATETIME DEFAULT (strftime(\'%Y-%m-%dT%H:%M:%fZ\',\'now\')))'
)


def _now():
    return _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%S.000Z")


def _ensure_table(con):
    have = con.execute("SELECT name FROM sqlite_master WHERE type='table' AND name=?", (STYLE_TABLE,)).fetchone()
    if not have:
        con.execute(_CREATE)
    registered = con.execute("SELECT 1 FROM gpkg_contents WHERE table_name=?", (STYLE_TABLE,)).fetchone()
    if not registered:
        con.execute("INSERT INTO gpkg_contents (table_name, data_type, identifier, description, last_change, srs_id) "
                    "VALUES (?, 'attributes', ?, '', ?, 0)", (STYLE_TABLE, STYLE_TABLE, _now()))
        ogr = con.execute("SELECT name FROM sqlite_master WHERE type='table' AND name='gpkg_ogr_contents'").fetchone()
        if ogr:
            con.execute("INSERT OR REPLACE INTO gpkg_ogr_contents (table_name, feature_count) VALUES (?, NULL)",
                        (STYLE_TABLE,))


def _layer_info(con, table):
    row = con.execute("SELECT column_name, geometry_type_name FROM gpkg_geometry_columns WHERE table_name=?",
                      (table,)).fetchone()
    if row is None:
        return None
    fields = [r[1] for r in con.execute(f'PRAGMA table_info("{table}")')]
    return row[0], row[1], fields


def add_default_styles(path, layers):
    """Write a default style row into ``layer_styles`` of the GeoPackage ``path`` for each layer
    name in ``layers`` (non-spatial tables are skipped).

    An earlier slipsense style of the same layer is replaced; a user's own style rows are kept,
    and when a user's style is the default the new row is stored but not made the default.
    Returns ``{layer: style key}`` of the styles written.
    """
    written = {}
    con = sqlite3.connect(path)
    try:
        with con:
            for table in layers:
                info = _layer_info(con, table)
                if info is None:
                    continue
                geom_col, geom_type, fields = info
                key = choose_style(table, geom_type, fields)
                if key is None:
                    continue
                qml = style_qml(key, geom_type, fields, table)
                _ensure_table(con)
                con.execute('DELETE FROM "layer_styles" WHERE f_table_name=? AND owner=?', (table, OWNER))
                other_default = con.execute(
                    'SELECT 1 FROM "layer_styles" WHERE f_table_name=? AND useAsDefault=1', (table,)).fetchone()
                con.execute(
                    'INSERT INTO "layer_styles" (f_table_catalog, f_table_schema, f_table_name, f_geometry_column, '
                    'styleName, styleQML, styleSLD, useAsDefault, description, owner, ui, update_time) '
                    "VALUES ('', '', ?, ?, ?, ?, '', ?, ?, ?, NULL, ?)",
                    (table, geom_col, STYLE_NAME, qml, 0 if other_default else 1,
                     f"slipsense default style: {key}", OWNER, _now()))
                written[table] = key
    finally:
        con.close()
    return written


def read_styles(path):
    """``{layer: (styleName, useAsDefault, description)}`` of the rows in ``layer_styles``."""
    con = sqlite3.connect(path)
    try:
        have = con.execute("SELECT name FROM sqlite_master WHERE type='table' AND name=?", (STYLE_TABLE,)).fetchone()
        if not have:
            return {}
        return {r[0]: (r[1], bool(r[2]), r[3]) for r in con.execute(
            'SELECT f_table_name, styleName, useAsDefault, description FROM "layer_styles" ORDER BY id')}
    finally:
        con.close()

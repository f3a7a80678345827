"""QGIS <-> numpy: features and raster cells into engine arrays, engine tables into sinks.

No computation happens here: coordinates are transformed by QGIS (``QgsFeatureRequest`` with a
destination CRS and the context's transform context), raster cells are copied as they are, and
:class:`Table` columns are written field by field.  All maths is in the engine.
"""
import math
import os
import re

import numpy as np
from qgis.core import (
    QgsFeature,
    QgsFeatureRequest,
    QgsFields,
    QgsField,
    QgsGeometry,
    QgsLineString,
    QgsMultiLineString,
    QgsMultiPoint,
    QgsPoint,
    QgsProcessingException,
    QgsProviderRegistry,
    QgsRectangle,
)

from .compat import FAST_INSERT, FIELD_TYPES, RASTER_NUMPY_TYPES, WKB, crs_is_metres
from .engine import Grid, steps

__all__ = [
    "Canceled",
    "crs_is_missing",
    "require_defined_crs",
    "require_crs",
    "read_lines",
    "read_points",
    "read_planes",
    "raster_window",
    "raster_cell_size",
    "dem_margin_m",
    "array_to_geometry",
    "table_fields",
    "write_table",
    "layer_location",
    "output_location",
]


class Canceled(Exception):
    """Raised from a progress callback when the user cancels; becomes 'canceled'."""


# --------------------------------------------------------------------------------------------
# CRS


def crs_is_missing(crs):
    """True for no CRS, an invalid one, or a GeoPackage's "Undefined geographic/Cartesian SRS"
    (srs_id 0 / -1, which QGIS shows as a valid CRS without an authority)."""
    if crs is None or not crs.isValid():
        return True
    return not crs.authid() and crs.description().lower().startswith("undefined")


def require_defined_crs(crs, what):
    """Fail when ``crs`` is missing (a layer that will be transformed to the working CRS)."""
    if crs_is_missing(crs):
        raise QgsProcessingException(
            f"{what} has no coordinate reference system (CRS); assign one before running"
        )
    return crs


def require_crs(crs, what):
    """Fail unless ``crs`` is defined, projected and in metres (the working CRS of every step)."""
    require_defined_crs(crs, what)
    if crs.isGeographic():
        raise QgsProcessingException(
            f"{what} is in a geographic CRS ({crs.authid() or crs.description()}): lengths and "
            "azimuths need a projected CRS in metres; reproject it (e.g. to its UTM zone) first"
        )
    if not crs_is_metres(crs):
        raise QgsProcessingException(
            f"{what} is in a CRS whose units are not metres ({crs.authid() or crs.description()}); "
            "reproject it to a projected CRS in metres first"
        )
    return crs


# --------------------------------------------------------------------------------------------
# Vector features -> arrays


def _request(crs, context):
    return QgsFeatureRequest().setDestinationCrs(crs, context.transformContext())


def _ticker(feedback, total, lo, hi):
    step = max(total // 50, 1)

    def tick(i):
        if feedback is None:
            return
        if feedback.isCanceled():
            raise Canceled()
        if i % step == 0 and total:
            feedback.setProgress(lo + (hi - lo) * i / total)

    return tick


def _value(feature, name):
    """Attribute as a plain Python value, None for NULL."""
    v = feature[name]
    if v is None:
        return None
    try:
        if hasattr(v, "isNull") and v.isNull():  # QVariant NULL
            return None
    except TypeError:
        pass
    return v


def _text(v):
    """Identifier text of an attribute value (``3`` -> "3", ``2.5`` -> "2.5")."""
    return str(v)


def _line_parts(geom):
    """2-D vertex arrays of the parts of a (multi)line geometry, in order."""
    parts = []
    if geom.isMultipart():
        for line in geom.asMultiPolyline():
            parts.append(np.array([[p.x(), p.y()] for p in line], dtype=float).reshape(-1, 2))
    else:
        line = geom.asPolyline()
        parts.append(np.array([[p.x(), p.y()] for p in line], dtype=float).reshape(-1, 2))
    return [p for p in parts if len(p)]


def read_lines(source, crs, context, feedback, id_field=None, span=(0.0, 10.0)):
    """Lines of ``source`` in ``crs``: ids (str) and parts (list of (n, 2) arrays) per feature.

    Features with no geometry are skipped (listed in ``skipped``).  Without ``id_field`` the id is
    the feature id (the ``fid`` of a GeoPackage).  A NULL or repeated id is an error (as on the
    command line).
    """
    ids, lines, skipped = [], [], []
    total = source.featureCount()
    tick = _ticker(feedback, max(total, 1), *span)
    for i, f in enumerate(source.getFeatures(_request(crs, context))):
        tick(i)
        name = _text(f.id())
        if id_field:
            v = _value(f, id_field)
            if v is None:
                raise QgsProcessingException(f"feature {f.id()}: the id field {id_field!r} is empty (NULL)")
            name = _text(v)
        g = f.geometry()
        parts = [] if g is None or g.isNull() or g.isEmpty() else _line_parts(g)
        if not parts:
            skipped.append(name)
            continue
        ids.append(name)
        lines.append(parts)
    if len(set(ids)) != len(ids):
        dup = sorted({i for i in ids if ids.count(i) > 1})
        raise QgsProcessingException(f"trace ids in {id_field or 'the feature id'} are not unique: {dup[:5]}")
    return ids, lines, skipped


def read_points(source, crs, context, feedback, fields=(), span=(0.0, 10.0)):
    """Points of ``source`` in ``crs``.

    Returns
    -------
    fids : list of int (feature ids)
    xy : (N, 2) float array
    values : dict field name -> list of plain values (None for NULL)
    skipped : list of feature ids without a point geometry
    """
    fids, xy, skipped = [], [], []
    values = {n: [] for n in fields}
    total = source.featureCount()
    tick = _ticker(feedback, max(total, 1), *span)
    for i, f in enumerate(source.getFeatures(_request(crs, context))):
        tick(i)
        g = f.geometry()
        if g is None or g.isNull() or g.isEmpty():
            skipped.append(f.id())
            continue
        pts = g.asMultiPoint() if g.isMultipart() else [g.asPoint()]
        if len(pts) != 1:
            skipped.append(f.id())
            continue
        fids.append(f.id())
        xy.append((pts[0].x(), pts[0].y()))
        for n in fields:
            values[n].append(_value(f, n))
    return fids, np.array(xy, dtype=float).reshape(-1, 2), values, skipped


PLANE_ID_FIELDS = ("trace_id", "plane_id")  # the order the command line looks for them
PLANE_NUMBER_FIELDS = ("dip_dir", "dip", "centroid_x", "centroid_y", "centroid_z")


def plane_id_field(source):
    """The id field of a plane layer (``trace_id`` or ``plane_id``), or None (then: feature ids)."""
    names = source.fields().names()
    return next((n for n in PLANE_ID_FIELDS if n in names), None)


def read_planes(source, crs, context, feedback, span=(0.0, 10.0), optional=()):
    """Planes from a layer written by *trace planes* or *planes from points*.

    Centroid coordinates are read as they are: the layer must already be in ``crs`` (the caller
    checks), because its dip directions are azimuths from grid north of that CRS.

    Returns
    -------
    ids : list of str
    dip_dir, dip : (G,) float, NaN for NULL
    centroids : (G, 3) float
    vertices : list of (n, 2) arrays, all vertices of each feature's geometry (its trace or points)
    columns : dict name -> (G,) float, only with ``optional``: those of the numeric fields named
        there that the layer has (NaN for NULL)
    """
    id_name = plane_id_field(source)
    have = [n for n in optional if n in source.fields().names()]
    extra = {n: [] for n in have}
    ids, dd, dp, cen, verts = [], [], [], [], []
    total = source.featureCount()
    tick = _ticker(feedback, max(total, 1), *span)

    def num(f, n):
        v = _value(f, n)
        return math.nan if v is None else float(v)

    for i, f in enumerate(source.getFeatures(_request(crs, context))):
        tick(i)
        v = _value(f, id_name) if id_name else None
        ids.append(_text(f.id()) if v is None else _text(v))
        dd.append(num(f, "dip_dir"))
        dp.append(num(f, "dip"))
        cen.append((num(f, "centroid_x"), num(f, "centroid_y"), num(f, "centroid_z")))
        for n in have:
            extra[n].append(num(f, n))
        g = f.geometry()
        if g is None or g.isNull() or g.isEmpty():
            verts.append(np.array([[cen[-1][0], cen[-1][1]]]))
        else:
            verts.append(np.array([[v.x(), v.y()] for v in g.vertices()], dtype=float).reshape(-1, 2))
    out = (ids, np.array(dd, float), np.array(dp, float), np.array(cen, float).reshape(-1, 3), verts)
    if optional:
        out += ({n: np.array(v, float) for n, v in extra.items()},)
    return out


# --------------------------------------------------------------------------------------------
# Raster -> Grid


def _is_rotated(layer):
    """True when the raster file has a rotated/sheared geotransform.

    QGIS shows such rasters through a north-up warped view, whose cells are not the file's cells;
    the engine must sample the file's own cells (as the command line does), so they are refused.
    """
    if layer.providerType() != "gdal":
        return False
    try:
        from osgeo import gdal
    except ImportError:  # pragma: no cover - QGIS always ships GDAL's Python bindings
        return False
    path = QgsProviderRegistry.instance().decodeUri("gdal", layer.source()).get("path") or layer.source()
    ds = gdal.Open(path)
    if ds is None:
        return False
    gt = ds.GetGeoTransform(can_return_null=True)
    return bool(gt) and (gt[2] != 0.0 or gt[4] != 0.0)


def dem_margin_m(cell_m, sigma_xy_m=0.0, cells=3.0):
    """Margin (m) of DEM read around the features: the engine's ``steps.dem_margin_m``, which
    the command line uses too, so both read the same DEM cells."""
    return steps.dem_margin_m(cell_m, sigma_xy_m, cells=cells)


def raster_cell_size(layer):
    return min(layer.rasterUnitsPerPixelX(), layer.rasterUnitsPerPixelY())


def raster_window(layer, band, bounds, margin_m, what="the features", feedback=None):
    """The DEM's cells under ``bounds`` (xmin, ymin, xmax, ymax; DEM CRS) plus ``margin_m``.

    The window is snapped to the DEM's own cell grid (the same floor/ceil rule as the command
    line's rasterio window), read with the data provider's ``block()`` at the native resolution,
    so the cells are exactly the DEM's cells.  Nodata (the source's value, and any user nodata
    ranges set on the layer) becomes NaN.
    """
    prov = layer.dataProvider()
    if prov is None or not layer.isValid():
        raise QgsProcessingException(f"the DEM layer {layer.name()!r} is not valid")
    n_bands = layer.bandCount()
    if not 1 <= band <= n_bands:
        raise QgsProcessingException(f"the DEM has {n_bands} band(s); band {band} does not exist")
    width, height = prov.xSize(), prov.ySize()
    if width < 1 or height < 1:
        raise QgsProcessingException("the DEM has no cell grid (is it a web service?); use a file DEM")
    if _is_rotated(layer):
        raise QgsProcessingException(
            "the DEM is rotated (its geotransform has rotation terms); warp it north-up first, "
            "e.g. with GDAL Warp (reproject)"
        )
    ext = prov.extent()
    a = layer.rasterUnitsPerPixelX()
    e = -layer.rasterUnitsPerPixelY()
    c, f = ext.xMinimum(), ext.yMaximum()
    x0, y0, x1, y1 = bounds
    x0 -= margin_m
    y0 -= margin_m
    x1 += margin_m
    y1 += margin_m
    col0 = max(int(math.floor((x0 - c) / a)), 0)
    col1 = min(int(math.ceil((x1 - c) / a)), width)
    row0 = max(int(math.floor((y1 - f) / e)), 0)
    row1 = min(int(math.ceil((y0 - f) / e)), height)
    if col1 - col0 < 2 or row1 - row0 < 2:
        raise QgsProcessingException(
            f"the DEM does not cover {what}: they span x {bounds[0]:.0f}–{bounds[2]:.0f}, "
            f"y {bounds[1]:.0f}–{bounds[3]:.0f} in the DEM's CRS, the DEM x {ext.xMinimum():.0f}–"
            f"{ext.xMaximum():.0f}, y {ext.yMinimum():.0f}–{ext.yMaximum():.0f}"
        )
    w, h = col1 - col0, row1 - row0
    rect = QgsRectangle(c + col0 * a, f + row1 * e, c + col1 * a, f + row0 * e)
    block = prov.block(band, rect, w, h)
    if block is None or not block.isValid() or block.width() != w or block.height() != h:
        raise QgsProcessingException("could not read the DEM cells (the data provider returned no block)")
    dtype = RASTER_NUMPY_TYPES.get(block.dataType())
    if dtype is None:
        raise QgsProcessingException(f"the DEM's data type ({block.dataType()}) is not a real number type")
    raw = np.frombuffer(bytes(block.data()), dtype=dtype).reshape(h, w)
    nodata = np.zeros(raw.shape, dtype=bool)
    if block.hasNoDataValue():
        nd = block.noDataValue()
        if math.isfinite(nd):
            try:
                nodata |= raw == np.array(nd).astype(dtype)  # compare in the band's own type, as GDAL does
            except (OverflowError, ValueError):
                pass
    for r in prov.userNoDataValues(band):
        nodata |= (raw >= r.min()) & (raw <= r.max())
    values = raw.astype(float)
    values[nodata] = np.nan
    transform = (a, 0.0, c + col0 * a, 0.0, e, f + row0 * e)
    # origin/offset: sample from the raster's own origin, exactly as the command line does
    return Grid.from_array(values, transform, None, origin=(c, f), offset=(col0, row0))


# --------------------------------------------------------------------------------------------
# Table -> sink


def table_fields(table):
    """QgsFields with exactly the table's columns, in order."""
    fields = QgsFields()
    for name in table.columns:
        fields.append(QgsField(name, FIELD_TYPES[table.types[name]]))
    return fields


def _line(arr):
    a = np.asarray(arr, dtype=float)
    if a.shape[1] >= 3:
        return QgsLineString(a[:, 0].tolist(), a[:, 1].tolist(), a[:, 2].tolist())
    return QgsLineString(a[:, 0].tolist(), a[:, 1].tolist())


def _multiline(parts):
    m = QgsMultiLineString()
    for p in parts:
        if len(p) >= 2:  # a part of one vertex is no line (the command line drops it too)
            m.addGeometry(_line(p))
    return m


def array_to_geometry(kind, item):
    """A QgsGeometry of engine geometry type ``kind`` from its coordinate array(s).

    Lines of fewer than two vertices give a null geometry, as on the command line.
    """
    if kind == "MultiLineString":
        return QgsGeometry(_multiline(item if isinstance(item, (list, tuple)) or np.ndim(item) == 3 else [item]))
    if kind in ("LineString", "LineStringZ"):
        return QgsGeometry(_line(item)) if len(item) >= 2 else QgsGeometry()
    if kind == "MultiPoint":
        m = QgsMultiPoint()
        for p in np.asarray(item, dtype=float).reshape(-1, np.shape(item)[-1]):
            m.addGeometry(QgsPoint(float(p[0]), float(p[1])))
        return QgsGeometry(m)
    if kind in ("Point", "PointZ"):
        p = np.asarray(item, dtype=float).ravel()
        if kind == "PointZ":
            return QgsGeometry(QgsPoint(float(p[0]), float(p[1]), float(p[2])))
        return QgsGeometry(QgsPoint(float(p[0]), float(p[1])))
    raise QgsProcessingException(f"unknown engine geometry type {kind!r}")


def write_table(alg, parameters, key, context, feedback, table, crs, source_geometries=None):
    """Write ``table`` to the feature sink ``key`` in ``crs``.

    Geometry comes from the table's coordinate arrays, or (``table.geometries is None``) from
    ``source_geometries[table.source_index[row]]`` — the input feature's parts as read, in the
    working CRS.  NaN becomes NULL.  Returns ``(dest_id, count)``, or ``(None, 0)`` for an optional
    sink that was not asked for.
    """
    fields = table_fields(table)
    kind = table.geometry_type
    sink, dest_id = alg.parameterAsSink(parameters, key, context, fields, WKB[kind], crs)
    if sink is None:
        if parameters.get(key) is None:
            return None, 0
        raise QgsProcessingException(alg.invalidSinkError(parameters, key))
    n = 0
    for row_no, row in enumerate(table.rows()):
        if feedback is not None and row_no % 1000 == 0 and feedback.isCanceled():
            raise Canceled()
        feat = QgsFeature(fields)
        feat.setAttributes([row[name] for name in table.columns])
        if table.geometries is not None:
            item = table.geometries[row_no]
        else:
            item = source_geometries[int(table.source_index[row_no])]
        feat.setGeometry(array_to_geometry(kind, item))
        if not sink.addFeature(feat, FAST_INSERT):
            raise QgsProcessingException(alg.writeFeatureError(sink, parameters, key))
        n += 1
    return dest_id, n


# --------------------------------------------------------------------------------------------
# Where layers live (to refuse writing an output over an input)


def _norm(path):
    return os.path.normcase(os.path.realpath(path)) if path else None


def layer_location(layer):
    """``(file path, layer name or None)`` of a file-based layer, or None."""
    if layer is None:
        return None
    try:
        parts = QgsProviderRegistry.instance().decodeUri(layer.providerType(), layer.source())
    except Exception:  # noqa: BLE001 - unknown providers simply have no file location
        return None
    path = parts.get("path")
    if not path or not os.path.exists(path):
        return None
    # None: the file's first layer, or a single-layer file (a clash with any table of it is refused)
    return _norm(path), parts.get("layerName") or None


_OGR_URI = re.compile(r"""^ogr:dbname='(?P<path>(?:[^']|'')*)'\s+table="(?P<table>(?:[^"]|"")*)"\s*""")


def output_location(destination):
    """``(file path, table or None, whole_file)`` of a sink destination string, or None.

    ``whole_file`` is True for a plain file path (the writer re-creates the whole file) and False
    for ``ogr:dbname='x.gpkg' table="name"`` (only that table is replaced).
    """
    if not destination or destination.startswith(("memory:", "TEMPORARY_OUTPUT")):
        return None
    m = _OGR_URI.match(destination)
    if m:
        return _norm(m.group("path").replace("''", "'")), m.group("table").replace('""', '"'), False
    if "://" in destination or destination.startswith(("postgres:", "spatialite:", "oracle:", "mssql:")):
        return None
    path = destination.split("|")[0]
    return _norm(path), os.path.splitext(os.path.basename(path))[0], True

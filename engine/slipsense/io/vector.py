"""Vector layers in and out (GeoPackage and anything GDAL reads), with the checks users need.

Reading never writes.  Writing goes to a temporary copy of the output GeoPackage that replaces
the file only when every layer is written (an interrupted run leaves the earlier file intact);
other layers in the file are kept, and an existing layer is replaced only with ``overwrite``.
"""
from __future__ import annotations

import os
import tempfile
from dataclasses import dataclass

import numpy as np

from ..core.traces import Traces
from ..errors import DataError, FileFormatError, GeometryError, OutputExistsError
from .crs import as_crs, require_projected, transformer, utm_crs_for

__all__ = [
    "Layer",
    "read_layer",
    "lines_to_traces",
    "points_xy",
    "list_layers",
    "check_output",
    "write_tables",
    "table_to_frame",
]

PROVENANCE_LAYER = "slipsense_provenance"


@dataclass
class Layer:
    """A layer read into memory, reprojected to the working CRS.

    Attributes
    ----------
    frame : geopandas.GeoDataFrame (rows with unusable geometry removed)
    name : str  "path|layer" for messages
    crs : pyproj.CRS of the frame (working CRS)
    source_crs : pyproj.CRS of the file
    feature_ids : (n,) original feature ids (fid) of the kept rows
    skipped : list of str  per-feature messages for rows left out
    """

    frame: object
    name: str
    crs: object
    source_crs: object
    feature_ids: np.ndarray
    skipped: list


def list_layers(path):
    import pyogrio

    try:
        return [str(n) for n, _ in pyogrio.list_layers(path)]
    except Exception as exc:  # pyogrio raises DataSourceError and friends
        raise FileFormatError(f"cannot open {path}: {exc}") from exc


def read_layer(path, layer=None, *, fields=(), geometry=("LineString", "MultiLineString"),
               working_crs=None, require_crs=True):
    """Read one layer, check it, and bring it into ``working_crs``.

    Parameters
    ----------
    path : str
    layer : str, optional (the only layer when omitted; an error if there are several)
    fields : field names that must exist
    geometry : accepted geometry types (Z variants are accepted and flattened)
    working_crs : pyproj.CRS, optional
        Target CRS.  Default: the layer's own CRS when projected in metres; the UTM zone of the
        layer's centre when it is geographic.

    Raises
    ------
    DataError (missing layer or field, empty layer), CRSError, FileFormatError
    """
    import pyogrio

    if not os.path.exists(path):
        raise FileFormatError(f"input file not found: {path}")
    layers = list_layers(path)
    if layer is None:
        if len(layers) != 1:
            raise DataError(f"{path} has layers {layers}: choose one with --layer")
        layer = layers[0]
    if layer not in layers:
        raise DataError(f"{path} has no layer {layer!r}; it has {layers}")
    name = f"{path}|{layer}"
    try:
        frame = pyogrio.read_dataframe(path, layer=layer, fid_as_index=True)
    except Exception as exc:
        raise FileFormatError(f"cannot read {name}: {exc}") from exc
    missing = [f for f in fields if f and f not in frame.columns]
    if missing:
        have = [c for c in frame.columns if c != "geometry"]
        raise DataError(f"{name} has no field {missing[0]!r}; its fields are {have}")
    if len(frame) == 0:
        raise DataError(f"{name} is empty: no features to work on")
    src_crs = None
    if frame.crs is not None:
        src_crs = as_crs(frame.crs.to_wkt(), name)
    elif require_crs:
        as_crs(None, name)
    skipped = []
    geoms = frame.geometry
    keep = np.ones(len(frame), bool)
    fids = np.asarray(frame.index)
    for k, (fid, g) in enumerate(zip(fids, geoms)):
        if g is None or g.is_empty:
            skipped.append(f"{name} feature {fid}: empty geometry, skipped")
            keep[k] = False
        elif g.geom_type not in geometry:
            skipped.append(f"{name} feature {fid}: {g.geom_type} geometry where {'/'.join(geometry)} is expected, skipped")
            keep[k] = False
        elif not g.is_valid:
            skipped.append(f"{name} feature {fid}: invalid geometry, skipped")
            keep[k] = False
    frame = frame[keep]
    if len(frame) == 0:
        raise DataError(f"{name} has no usable features: " + "; ".join(skipped[:3]))
    crs = src_crs
    if src_crs is not None:
        if working_crs is None:
            if src_crs.is_geographic:
                c = frame.geometry.union_all().centroid if hasattr(frame.geometry, "union_all") else frame.unary_union.centroid
                working_crs = utm_crs_for(c.x, c.y)
            else:
                working_crs = require_projected(src_crs, name)
        if working_crs != src_crs:
            frame = frame.to_crs(working_crs.to_wkt())
        crs = working_crs
    return Layer(frame, name, crs, src_crs, np.asarray(frame.index), skipped)


def lines_to_traces(layer, id_field=None):
    """Traces (flat arrays) and ids from a line layer; MultiLineStrings become one multi-part trace.

    Returns
    -------
    ids : list of str (the ``id_field`` values, or the feature ids)
    traces : Traces
    """
    import shapely

    lines = []
    ids = []
    for fid, row in zip(layer.feature_ids, layer.frame.itertuples(index=False)):
        g = row.geometry
        parts = [g] if g.geom_type == "LineString" else list(g.geoms)
        lines.append([np.asarray(shapely.get_coordinates(p))[:, :2] for p in parts])
        if id_field:
            v = getattr(row, id_field) if id_field.isidentifier() else layer.frame.loc[fid, id_field]
            if v is None or (isinstance(v, float) and np.isnan(v)):
                raise DataError(f"{layer.name} feature {fid}: field {id_field!r} is empty")
            ids.append(str(v))
        else:
            ids.append(str(fid))
    if len(set(ids)) != len(ids):
        dup = sorted({i for i in ids if ids.count(i) > 1})
        raise DataError(f"{layer.name}: ids in {id_field or 'fid'} are not unique: {dup[:5]}")
    return ids, Traces.from_lines(lines)


def points_xy(layer):
    """(n, 2) coordinates of a point layer (Z dropped)."""
    import shapely

    return np.asarray(shapely.get_coordinates(layer.frame.geometry.values))[:, :2]


def check_output(path, layer_names, overwrite, inputs=()):
    """Fail before any work when an output layer exists (without ``overwrite``) or the output is an
    input file (inputs are never written)."""
    out = os.path.realpath(path)
    for p in inputs:
        if p and os.path.exists(p) and os.path.realpath(p) == out:
            raise OutputExistsError(f"the output {path} is also an input: inputs are never written, choose another file")
    if not str(path).lower().endswith(".gpkg"):
        raise DataError(f"the output must be a GeoPackage (.gpkg), got {path}")
    parent = os.path.dirname(out) or "."
    if not os.path.isdir(parent):
        raise FileFormatError(f"the output folder {parent} does not exist")
    if os.path.exists(path):
        have = set(list_layers(path))
        clash = [n for n in layer_names if n in have]
        if clash and not overwrite:
            raise OutputExistsError(
                f"{path} already has layer {clash[0]!r}: use --overwrite to replace it, or --out-layer to name another"
            )


def _geometry(kind, coords):
    import shapely

    if kind == "MultiLineString":
        parts = coords if isinstance(coords, list) else [coords]
        return shapely.MultiLineString([np.asarray(p) for p in parts if len(p) >= 2]) if parts else None
    if kind in ("LineString", "LineStringZ"):
        return shapely.LineString(coords) if len(coords) >= 2 else None
    if kind in ("Point", "PointZ"):
        return shapely.Point(coords)
    if kind == "MultiPoint":
        return shapely.MultiPoint(np.asarray(coords))
    raise ValueError(kind)


def table_to_frame(table, crs, source=None):
    """A GeoDataFrame from a :class:`~slipsense.tables.Table` (NaN floats become nulls)."""
    import geopandas as gpd
    import pandas as pd
    import shapely

    data = {}
    for name, kind in table.types.items():
        col = table.columns[name]
        if kind == "float":
            data[name] = pd.array(np.asarray(col, float), dtype="Float64")
            data[name][~np.isfinite(np.asarray(col, float))] = pd.NA
        elif kind == "int":
            data[name] = np.asarray(col, dtype=np.int64)
        else:
            data[name] = np.asarray(col, dtype=object).astype(str)
    if table.geometries is None:
        geoms = source.geometry.values[np.asarray(table.source_index)] if len(table) else []
        geoms = [g if g is None or g.geom_type.startswith("Multi") else shapely.MultiLineString([g]) if g.geom_type == "LineString" else g for g in geoms]
    else:
        geoms = [_geometry(table.geometry_type, c) for c in table.geometries]
    return gpd.GeoDataFrame(pd.DataFrame(data), geometry=list(geoms), crs=crs.to_wkt() if crs is not None else None)


def write_tables(path, frames, provenance, overwrite=False):
    """Write GeoDataFrames (name -> frame) into the GeoPackage ``path`` atomically.

    Existing other layers are kept; existing layers of the same names are replaced only with
    ``overwrite``.  ``provenance`` (a dict) is written as one row per output layer into the
    ``slipsense_provenance`` table.
    """
    import json
    import shutil

    import pandas as pd
    import pyogrio

    check_output(path, list(frames), overwrite)
    folder = os.path.dirname(os.path.abspath(path))
    fd, tmp = tempfile.mkstemp(prefix=".slipsense-", suffix=".gpkg", dir=folder)
    os.close(fd)
    try:
        if os.path.exists(path):
            shutil.copyfile(path, tmp)
        else:
            os.remove(tmp)
        existing = set(list_layers(tmp)) if os.path.exists(tmp) else set()
        meta = {"north_reference": str(provenance.get("north_reference", "grid")),
                "working_crs": str(provenance.get("working_crs", "")),
                "made_by": f"{provenance.get('engine', 'slipsense')} {provenance.get('command', '')}".strip()}
        for name, frame in frames.items():
            opts = {"OVERWRITE": "YES"} if name in existing else None
            # GeoPackage 1.2 for new files: the GDAL of QGIS 3.22 LTR reads it without warnings.
            dopts = None if os.path.exists(tmp) else {"VERSION": "1.2"}
            pyogrio.write_dataframe(frame, tmp, layer=name, driver="GPKG", layer_options=opts,
                                    dataset_options=dopts, promote_to_multi=False, layer_metadata=meta)
        rows = []
        if PROVENANCE_LAYER in (set(list_layers(tmp)) if os.path.exists(tmp) else set()):
            old = pyogrio.read_dataframe(tmp, layer=PROVENANCE_LAYER, read_geometry=False)
            rows = [r for r in old.to_dict("records") if r.get("layer") not in frames]
        for name in frames:
            rows.append({"layer": name, "made_by": provenance.get("command", ""),
                         "record": json.dumps(provenance, sort_keys=True, default=str)})
        prov = pd.DataFrame(rows, columns=["layer", "made_by", "record"])
        opts = {"OVERWRITE": "YES"} if PROVENANCE_LAYER in set(list_layers(tmp)) else None
        dopts = None if os.path.exists(tmp) else {"VERSION": "1.2"}
        pyogrio.write_dataframe(prov, tmp, layer=PROVENANCE_LAYER, driver="GPKG", layer_options=opts,
                                dataset_options=dopts)
        from ..styles import add_default_styles  # default QGIS style of each layer (layer_styles)

        add_default_styles(tmp, list(frames))
        # mkstemp makes the file private (0600): give it the mode of the file it replaces, or the
        # usual mode under the user's umask for a new file.
        if os.path.exists(path):
            os.chmod(tmp, os.stat(path).st_mode & 0o7777)
        else:
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp, 0o666 & ~umask)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.remove(tmp)
        raise

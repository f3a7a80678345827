"""QGIS API names that moved between versions, looked up once.

QGIS 3.22 (the oldest supported) keeps enums on the classes (``QgsProcessing.TypeVectorLine``,
``QgsUnitTypes.DistanceMeters``, ``QgsWkbTypes.MultiLineString``); later versions moved them under
``Qgis`` (``Qgis.ProcessingSourceType.VectorLine``, ...) and keep the old names only for a while.
Everything else in the plugin imports these names from here, never the version-dependent spelling.
"""
from qgis.core import (
    Qgis,
    QgsFeatureSink,
    QgsProcessing,
    QgsProcessingParameterDefinition,
    QgsProcessingParameterField,
    QgsProcessingParameterNumber,
    QgsUnitTypes,
    QgsWkbTypes,
)
from qgis.PyQt.QtCore import QVariant

__all__ = [
    "QGIS_VERSION_INT",
    "SOURCE_LINE",
    "SOURCE_POINT",
    "SOURCE_ANY_GEOMETRY",
    "NUMBER_DOUBLE",
    "NUMBER_INTEGER",
    "FIELD_ANY",
    "FIELD_NUMERIC",
    "FLAG_ADVANCED",
    "FLAG_OPTIONAL",
    "FAST_INSERT",
    "DISTANCE_METERS",
    "WKB",
    "FIELD_TYPES",
    "RASTER_NUMPY_TYPES",
    "crs_is_metres",
    "add_flags",
]

QGIS_VERSION_INT = Qgis.QGIS_VERSION_INT


def _first(*candidates):
    """The first of ``(owner, "dotted.name")`` pairs that exists."""
    for owner, dotted in candidates:
        obj = owner
        try:
            for part in dotted.split("."):
                obj = getattr(obj, part)
        except AttributeError:
            continue
        return obj
    raise AttributeError(f"none of {[d for _, d in candidates]} exists in this QGIS")


SOURCE_LINE = _first((Qgis, "ProcessingSourceType.VectorLine"), (QgsProcessing, "TypeVectorLine"))
SOURCE_POINT = _first((Qgis, "ProcessingSourceType.VectorPoint"), (QgsProcessing, "TypeVectorPoint"))
SOURCE_ANY_GEOMETRY = _first(
    (Qgis, "ProcessingSourceType.VectorAnyGeometry"), (QgsProcessing, "TypeVectorAnyGeometry")
)
NUMBER_DOUBLE = _first(
    (Qgis, "ProcessingNumberParameterType.Double"), (QgsProcessingParameterNumber, "Double")
)
NUMBER_INTEGER = _first(
    (Qgis, "ProcessingNumberParameterType.Integer"), (QgsProcessingParameterNumber, "Integer")
)
FIELD_ANY = _first((Qgis, "ProcessingFieldParameterDataType.Any"), (QgsProcessingParameterField, "Any"))
FIELD_NUMERIC = _first(
    (Qgis, "ProcessingFieldParameterDataType.Numeric"), (QgsProcessingParameterField, "Numeric")
)
FLAG_ADVANCED = _first(
    (Qgis, "ProcessingParameterFlag.Advanced"), (QgsProcessingParameterDefinition, "FlagAdvanced")
)
FLAG_OPTIONAL = _first(
    (Qgis, "ProcessingParameterFlag.Optional"), (QgsProcessingParameterDefinition, "FlagOptional")
)
FAST_INSERT = _first((QgsFeatureSink, "FastInsert"), (QgsFeatureSink, "Flag.FastInsert"))
DISTANCE_METERS = _first((Qgis, "DistanceUnit.Meters"), (QgsUnitTypes, "DistanceMeters"))

#: Engine geometry type names -> QGIS WKB types.
WKB = {
    name: _first((Qgis, f"WkbType.{name}"), (QgsWkbTypes, name))
    for name in ("Point", "PointZ", "MultiPoint", "LineString", "LineStringZ", "MultiLineString",
                 "MultiLineStringZ")
}

#: Engine column types -> QGIS field types (QVariant in 3.22; QMetaType from 3.38 accepts these too).
FIELD_TYPES = {"float": QVariant.Double, "int": QVariant.LongLong, "str": QVariant.String}

#: QGIS raster data types -> numpy dtype names (complex types are refused by the adapter).
RASTER_NUMPY_TYPES = {
    _first((Qgis, "DataType.Byte"), (Qgis, "Byte")): "uint8",
    _first((Qgis, "DataType.UInt16"), (Qgis, "UInt16")): "uint16",
    _first((Qgis, "DataType.Int16"), (Qgis, "Int16")): "int16",
    _first((Qgis, "DataType.UInt32"), (Qgis, "UInt32")): "uint32",
    _first((Qgis, "DataType.Int32"), (Qgis, "Int32")): "int32",
    _first((Qgis, "DataType.Float32"), (Qgis, "Float32")): "float32",
    _first((Qgis, "DataType.Float64"), (Qgis, "Float64")): "float64",
}
try:  # Int8 exists from QGIS 3.30
    RASTER_NUMPY_TYPES[_first((Qgis, "DataType.Int8"))] = "int8"
except AttributeError:
    pass


def crs_is_metres(crs):
    """True when the CRS's map units are metres."""
    return crs.mapUnits() == DISTANCE_METERS


def add_flags(param, *flags):
    """Set extra flags on a processing parameter (flags() | flag works on both enum styles)."""
    f = param.flags()
    for flag in flags:
        f = f | flag
    param.setFlags(f)
    return param

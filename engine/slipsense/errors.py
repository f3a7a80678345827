"""Exceptions of slipsense.

One root, :class:`SlipsenseError`; subclasses mix in the built-in exception a caller would
expect (``ValueError`` for bad values, ``OSError`` for files).  This module imports nothing heavy.
"""
from __future__ import annotations

__all__ = [
    "SlipsenseError",
    "InputError",
    "AngleError",
    "OrientationParseError",
    "GeometryError",
    "CRSError",
    "DataError",
    "OutputExistsError",
    "FileFormatError",
]


class SlipsenseError(Exception):
    """Root of every error slipsense raises on purpose."""


class InputError(SlipsenseError, ValueError):
    """A value given by the user is outside what the computation accepts."""


class AngleError(InputError):
    """An angle is outside its allowed range (e.g. dip not in [0, 90])."""


class OrientationParseError(InputError):
    """Orientation text (e.g. ``"N30E 45SE"``) could not be understood."""


class GeometryError(InputError):
    """A geometry is empty, invalid, or of the wrong type."""


class CRSError(InputError):
    """A coordinate reference system is missing, geographic where metres are needed, or mismatched."""


class DataError(InputError):
    """A layer, field or raster does not hold what the step needs (missing field, empty layer, nodata)."""


class OutputExistsError(SlipsenseError, FileExistsError):
    """An output layer exists already and ``overwrite`` was not asked for."""


class FileFormatError(SlipsenseError, OSError):
    """A file could not be read or written in the expected format."""

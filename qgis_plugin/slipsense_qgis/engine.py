"""The slipsense engine as the plugin sees it: the copy vendored in the release ZIP, else the one
on ``sys.path`` (development: ``PYTHONPATH=<repo>/engine``).

Only the numpy-only parts are used here (``steps``, ``tables``, ``core``, ``errors``); the engine's
``io``/``tools``/``cli`` need rasterio and geopandas and are never imported by the plugin.
"""
try:
    from .slipsense import __version__, steps  # vendored in the release ZIP
    from .slipsense.core.raster import Grid, sample_bilinear
    from .slipsense.core.traces import Traces
    from .slipsense.errors import SlipsenseError
    ORIGIN = "vendored"
except ModuleNotFoundError as exc:
    if exc.name != __name__.rpartition(".")[0] + ".slipsense":
        raise  # the vendored copy exists but is broken: say so, do not silently use another
    from slipsense import __version__, steps
    from slipsense.core.raster import Grid, sample_bilinear
    from slipsense.core.traces import Traces
    from slipsense.errors import SlipsenseError
    ORIGIN = "sys.path"

__all__ = ["__version__", "steps", "Grid", "sample_bilinear", "Traces", "SlipsenseError", "ORIGIN"]

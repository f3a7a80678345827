"""Reading a layer of fitted planes (output of trace planes or planes from points)."""
from qgis.core import QgsProcessingException, QgsProcessingParameterFeatureSource

from .. import adapter
from ..compat import SOURCE_ANY_GEOMETRY

PLANES_HELP = (
    "<p><b>Planes</b>: a layer written by <i>Fault planes from traces over a DEM</i> or <i>Planes "
    "from groups of points</i> (fields <tt>dip_dir</tt>, <tt>dip</tt>, <tt>centroid_x</tt>, "
    "<tt>centroid_y</tt>, <tt>centroid_z</tt>; ids from <tt>trace_id</tt> or <tt>plane_id</tt>, else "
    "the feature id). Its "
    "dip directions are azimuths from grid north of its own CRS, so it must be in the working CRS. "
    "Planes without an orientation (ill-posed) are reported and skipped.</p>"
)


def add_planes_parameter(alg, key):
    alg.addParameter(QgsProcessingParameterFeatureSource(
        key, alg.tr("Fitted planes (trace planes or point planes)"), [SOURCE_ANY_GEOMETRY]))


def planes_source(alg, parameters, key, context):
    """The plane layer, checked for its fields and CRS validity."""
    src = alg.source(parameters, key, context, "the plane layer")
    names = src.fields().names()
    missing = [n for n in adapter.PLANE_NUMBER_FIELDS if n not in names]
    if missing:
        raise QgsProcessingException(
            f"the plane layer lacks the field(s) {', '.join(missing)} ({key}); use the output of "
            "'Fault planes from traces over a DEM' or 'Planes from groups of points'")
    adapter.require_defined_crs(src.sourceCrs(), "the plane layer")
    return src


def require_same_crs(src, crs, what):
    """The plane layer must be in the working CRS: its azimuths are relative to that grid north."""
    if src.sourceCrs() != crs:
        raise QgsProcessingException(
            f"the plane layer is in {src.sourceCrs().authid() or 'another CRS'} but {what} is in "
            f"{crs.authid() or crs.description()}: plane dip directions are azimuths from grid north of "
            "their layer's CRS and would change with the CRS; use planes fitted in the DEM's CRS")

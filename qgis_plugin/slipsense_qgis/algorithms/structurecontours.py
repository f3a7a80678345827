"""Structure contours of fitted planes (engine step ``structure_contours``)."""
from qgis.core import QgsProcessingParameterFeatureSink

from .. import adapter
from ..compat import SOURCE_LINE
from ..engine import steps
from .base import SlipsenseAlgorithm
from .planes_input import PLANES_HELP, add_planes_parameter, planes_source


class StructureContoursAlgorithm(SlipsenseAlgorithm):
    PLANES = "PLANES"
    INTERVAL = "INTERVAL"
    DEPTH = "DEPTH"
    Z_MIN = "Z_MIN"
    Z_MAX = "Z_MAX"
    OUTPUT = "OUTPUT"

    SHOW_QUALITY = False
    HELP = (
        "<p>Draws structure contours (strike lines) of each fitted plane: horizontal lines on the "
        "plane at whole multiples of the contour interval, from the plane's centroid elevation minus "
        "to plus the depth range (or between the lowest and highest elevations given). Each line runs along strike over the extent of the plane's map "
        "geometry (its trace or points) plus 250 m at each end. Vertical and horizontal planes have "
        "no strike lines and are reported.</p>"
        + PLANES_HELP +
        "<p><b>Output</b> <tt>structure_contours</tt>: 3-D lines with <tt>plane_id</tt>, "
        "<tt>elevation_m</tt>, <tt>dip_dir</tt>, <tt>dip</tt>, in the plane layer's CRS (projected, "
        "metres).</p>"
    )

    def name(self):
        return "structurecontours"

    def displayName(self):
        return self.tr("Structure contours of fitted planes")

    def initAlgorithm(self, config=None):
        add_planes_parameter(self, self.PLANES)
        self.add_number(self.INTERVAL, "Contour interval (m)", 50.0, minimum=0.001)
        self.add_number(self.DEPTH, "Elevation range above and below the centroid (m)", 500.0, minimum=0.0)
        self.add_number(self.Z_MIN, "Lowest contour elevation (m; overrides the range)", None,
                        advanced=True, optional=True)
        self.add_number(self.Z_MAX, "Highest contour elevation (m; overrides the range)", None,
                        advanced=True, optional=True)
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT, self.tr("Structure contours"), SOURCE_LINE))
        self.add_count_outputs(extra=(("N_CONTOURS", "Number of contour lines"),
                                      ("N_PLANES", "Number of planes")), quality=False)

    def compute(self, parameters, context, feedback):
        self.refuse_overwrite(parameters, context, (self.OUTPUT,), vector_inputs=(self.PLANES,))
        src = planes_source(self, parameters, self.PLANES, context)
        crs = adapter.require_crs(src.sourceCrs(), "the plane layer")
        interval = self.parameterAsDouble(parameters, self.INTERVAL, context)
        depth = self.parameterAsDouble(parameters, self.DEPTH, context)
        z_lim = [self.parameterAsDouble(parameters, k, context) if parameters.get(k) is not None else None
                 for k in (self.Z_MIN, self.Z_MAX)]
        ids, dip_dir, dip, centroids, verts = adapter.read_planes(src, crs, context, feedback, (0.0, 30.0))
        self.check_canceled(feedback)
        result = steps.structure_contours(ids, dip_dir, dip, centroids, verts, interval_m=interval,
                                          depth_m=depth, z_min=z_lim[0], z_max=z_lim[1])
        self.check_canceled(feedback)
        feedback.setProgress(70)
        self.push_warnings(feedback, result.warnings)
        out_id, n = adapter.write_table(self, parameters, self.OUTPUT, context, feedback,
                                        result.tables["structure_contours"], crs)
        return {self.OUTPUT: out_id, "N_CONTOURS": n, "N_PLANES": len(ids)}

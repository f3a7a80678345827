"""Predicted outcrop traces of fitted planes (engine step ``outcrop_traces``)."""
import numpy as np
from qgis.core import (
    QgsProcessingException,
    QgsProcessingParameterFeatureSink,
    QgsProcessingParameterRasterLayer,
)

from .. import adapter
from ..compat import SOURCE_LINE
from ..engine import steps
from .base import SlipsenseAlgorithm
from .planes_input import PLANES_HELP, add_planes_parameter, planes_source, require_same_crs


class OutcropTracesAlgorithm(SlipsenseAlgorithm):
    PLANES = "PLANES"
    DEM = "DEM"
    BAND = "BAND"
    DISTANCE = "DISTANCE"
    OUTPUT = "OUTPUT"

    SHOW_QUALITY = False
    HELP = (
        "<p>Predicts where each fitted plane crops out: the line where the plane meets the DEM "
        "surface (the zero contour of DEM elevation minus plane elevation), kept within a distance "
        "of the plane's mapped trace or points — where the fault should continue, e.g. under "
        "cover. The prediction follows the plane as fitted; its uncertainty grows with distance "
        "from the trace and with the width of the dip intervals.</p>"
        + PLANES_HELP +
        "<p><b>Output</b> <tt>outcrop_traces</tt>: one multi-line per plane with <tt>plane_id</tt>, "
        "<tt>n_segments</tt>, <tt>max_distance_m</tt>, in the DEM's CRS.</p>"
    )

    def name(self):
        return "outcroptraces"

    def displayName(self):
        return self.tr("Predicted outcrop traces")

    def initAlgorithm(self, config=None):
        add_planes_parameter(self, self.PLANES)
        self.addParameter(QgsProcessingParameterRasterLayer(self.DEM, self.tr("DEM (elevations in metres)")))
        self.add_band(self.BAND, self.DEM)
        self.add_number(self.DISTANCE, "Distance from the mapped trace (m)", 1000.0, minimum=0.001)
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT, self.tr("Predicted outcrop traces"), SOURCE_LINE))
        self.add_count_outputs(extra=(("N_PREDICTED", "Number of planes with a predicted trace"),
                                      ("N_PLANES", "Number of planes")), quality=False)

    def compute(self, parameters, context, feedback):
        self.refuse_overwrite(parameters, context, (self.OUTPUT,), vector_inputs=(self.PLANES,),
                              raster_inputs=(self.DEM,))
        dem = self.parameterAsRasterLayer(parameters, self.DEM, context)
        if dem is None:
            raise QgsProcessingException(self.invalidRasterError(parameters, self.DEM))
        crs = adapter.require_crs(dem.crs(), "the DEM")
        src = planes_source(self, parameters, self.PLANES, context)
        require_same_crs(src, crs, "the DEM")
        distance = self.parameterAsDouble(parameters, self.DISTANCE, context)
        ids, dip_dir, dip, centroids, verts = adapter.read_planes(src, crs, context, feedback, (0.0, 5.0))
        allv = np.concatenate(verts)
        allv = allv[np.isfinite(allv).all(axis=1)]
        if allv.shape[0] == 0:
            raise QgsProcessingException("the plane layer has no usable geometries or centroids")
        lo, hi = allv.min(axis=0), allv.max(axis=0)
        margin = distance + adapter.dem_margin_m(adapter.raster_cell_size(dem), cells=2.0)
        grid = adapter.raster_window(dem, self.band(parameters, self.BAND, context), (*lo, *hi), margin,
                                     "the planes", feedback)
        self.check_canceled(feedback)
        result = steps.outcrop_traces(ids, dip_dir, dip, centroids, verts, grid, max_distance_m=distance,
                                      progress=self.progress(feedback, 10.0, 90.0))
        self.push_warnings(feedback, result.warnings)
        out_id, n = adapter.write_table(self, parameters, self.OUTPUT, context, feedback,
                                        result.tables["outcrop_traces"], crs)
        return {self.OUTPUT: out_id, "N_PREDICTED": n, "N_PLANES": len(ids)}

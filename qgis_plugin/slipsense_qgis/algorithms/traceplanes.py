"""Fault planes from map traces over a DEM (engine step ``trace_planes``)."""
from qgis.core import (
    QgsProcessingException,
    QgsProcessingOutputNumber,
    QgsProcessingParameterFeatureSink,
    QgsProcessingParameterFeatureSource,
    QgsProcessingParameterField,
    QgsProcessingParameterRasterLayer,
)

from .. import adapter
from ..compat import FIELD_ANY, SOURCE_LINE
from ..engine import Traces, steps
from .base import SlipsenseAlgorithm


class TracePlanesAlgorithm(SlipsenseAlgorithm):
    INPUT = "INPUT"
    ID_FIELD = "ID_FIELD"
    DEM = "DEM"
    BAND = "BAND"
    SPACING = "SPACING"
    SIGMA_XY = "SIGMA_XY"
    SIGMA_Z = "SIGMA_Z"
    DRAWS = "DRAWS"
    SEED = "SEED"
    WINDOW = "WINDOW"
    OUTPUT = "OUTPUT"
    OUTPUT_WINDOWS = "OUTPUT_WINDOWS"

    HELP = (
        "<p>Fits a best-fit fault plane to each mapped fault trace draped on a DEM. Each trace "
        "(a line, or a multi-line as one fault) is densified to a spacing (default the DEM cell "
        "size), the DEM is sampled bilinearly under every point, and a total-least-squares plane is "
        "fitted through the 3-D points (best-fit plane of Fernández 2005, the rule of Vs done as a "
        "fit). Uncertainty comes from Monte Carlo draws: the digitised vertices move by Gaussian "
        "errors of <i>sigma xy</i>, the DEM is sampled again and <i>sigma z</i> is added; the central "
        "95 % of the refitted orientations gives the <tt>*_lo95</tt>/<tt>*_hi95</tt> fields. The "
        "draws are reproducible for a seed.</p>"
        "<p>With a window length, planes are also fitted in overlapping along-trace windows "
        "(50 % overlap) to show how the orientation changes along the fault.</p>"
        "<p>The working CRS is the DEM's (projected, metres); traces in another CRS are "
        "transformed to it and the outputs are written in it. Points that fall on DEM nodata are "
        "dropped and reported.</p>"
        "<p><b>Output</b> <tt>trace_planes</tt>: one row per trace with <tt>trace_id</tt>, "
        "<tt>dip_dir</tt>, <tt>dip</tt>, <tt>strike</tt>, 95 % intervals, <tt>n_points</tt>, "
        "<tt>relief_m</tt>, <tt>rms_m</tt>, <tt>coplanarity</tt>, <tt>collinearity</tt>, "
        "<tt>quality</tt>, <tt>reason</tt>, the centroid and <tt>n_nodata</tt>.</p>"
    )

    def name(self):
        return "traceplanes"

    def displayName(self):
        return self.tr("Fault planes from traces over a DEM")

    def initAlgorithm(self, config=None):
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.INPUT, self.tr("Fault traces (lines)"), [SOURCE_LINE]))
        self.addParameter(QgsProcessingParameterField(
            self.ID_FIELD, self.tr("Trace id field (default: feature id)"), None, self.INPUT,
            FIELD_ANY, optional=True))
        self.addParameter(QgsProcessingParameterRasterLayer(self.DEM, self.tr("DEM (elevations in metres)")))
        self.add_band(self.BAND, self.DEM)
        self.add_number(self.SPACING, "Point spacing along the traces (m; 0 = DEM cell size)", 0.0,
                        minimum=0.0, advanced=True)
        self.add_number(self.SIGMA_XY, "Horizontal error of trace vertices, 1 sigma (m)", 5.0, minimum=0.0)
        self.add_number(self.SIGMA_Z, "DEM elevation error, 1 sigma (m)", 2.0, minimum=0.0)
        self.add_number(self.DRAWS, "Monte Carlo draws (0 = no intervals)", 200, minimum=0,
                        maximum=100000, integer=True, advanced=True)
        self.add_number(self.SEED, "Random seed", 0, minimum=0, integer=True, advanced=True)
        self.add_number(self.WINDOW, "Along-trace window length (m; 0 = no windows)", 0.0, minimum=0.0)
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT, self.tr("Trace planes"), SOURCE_LINE))
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT_WINDOWS, self.tr("Trace window planes"), SOURCE_LINE, None, True, False))
        self.add_count_outputs(extra=(("N_TRACES", "Number of traces"),
                                      ("N_WINDOWS", "Number of windows"),
                                      ("N_POINTS_DROPPED", "Points dropped on DEM nodata")))
        self.addOutput(QgsProcessingOutputNumber("N_POINTS", self.tr("Number of fitted points")))

    def compute(self, parameters, context, feedback):
        self.refuse_overwrite(parameters, context, (self.OUTPUT, self.OUTPUT_WINDOWS),
                              vector_inputs=(self.INPUT,), raster_inputs=(self.DEM,))
        dem = self.parameterAsRasterLayer(parameters, self.DEM, context)
        if dem is None:
            raise QgsProcessingException(self.invalidRasterError(parameters, self.DEM))
        crs = adapter.require_crs(dem.crs(), "the DEM")
        band = self.band(parameters, self.BAND, context)
        source = self.source(parameters, self.INPUT, context, "the trace layer")
        adapter.require_defined_crs(source.sourceCrs(), "the trace layer")
        id_field = self.parameterAsString(parameters, self.ID_FIELD, context) or None
        self.require_field(source, id_field, "the trace layer", self.ID_FIELD)
        spacing = self.parameterAsDouble(parameters, self.SPACING, context)
        sigma_xy = self.parameterAsDouble(parameters, self.SIGMA_XY, context)
        sigma_z = self.parameterAsDouble(parameters, self.SIGMA_Z, context)
        draws = self.parameterAsInt(parameters, self.DRAWS, context)
        seed = self.parameterAsInt(parameters, self.SEED, context)
        window = self.parameterAsDouble(parameters, self.WINDOW, context)

        feedback.pushInfo(f"working CRS: {crs.authid() or crs.description()} (the DEM's); azimuths from its grid north")
        ids, lines, skipped = adapter.read_lines(source, crs, context, feedback, id_field, (0.0, 5.0))
        for s in skipped:
            feedback.pushWarning(f"trace {s}: no line geometry; skipped")
        if not lines:
            raise QgsProcessingException("the trace layer has no line geometries")
        traces = Traces.from_lines(lines)
        margin = adapter.dem_margin_m(adapter.raster_cell_size(dem), sigma_xy)
        grid = adapter.raster_window(dem, band, traces.bounds(), margin, "the traces", feedback)
        self.check_canceled(feedback)

        result = steps.trace_planes(
            ids, traces, grid, spacing_m=spacing or None, sigma_xy_m=sigma_xy, sigma_z_m=sigma_z,
            draws=draws, seed=seed, window_m=window or None, progress=self.progress(feedback, 5.0, 95.0),
        )
        self.push_warnings(feedback, result.warnings)

        out_id, n = adapter.write_table(self, parameters, self.OUTPUT, context, feedback,
                                        result.tables["trace_planes"], crs, lines)
        results = {self.OUTPUT: out_id}
        win_table = result.tables.get("trace_windows")
        if parameters.get(self.OUTPUT_WINDOWS) is not None:
            if win_table is None:
                feedback.pushWarning("no window planes: set an along-trace window length (WINDOW) > 0")
            else:
                win_id, _ = adapter.write_table(self, parameters, self.OUTPUT_WINDOWS, context, feedback,
                                                win_table, crs)
                results[self.OUTPUT_WINDOWS] = win_id
        results.update(self.quality_results(result.summary))
        results.update(N_TRACES=n, N_WINDOWS=int(result.summary.get("windows", 0)),
                       N_POINTS=int(result.summary["points"]),
                       N_POINTS_DROPPED=int(result.summary["points_dropped"]))
        feedback.pushInfo(f"{n} trace planes: " + ", ".join(
            f"{v} {k}" for k, v in result.summary["quality"].items()))
        return results

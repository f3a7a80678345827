"""Planes through groups of points (engine step ``point_planes``)."""
import numpy as np
from qgis.core import (
    QgsProcessingException,
    QgsProcessingParameterFeatureSink,
    QgsProcessingParameterFeatureSource,
    QgsProcessingParameterField,
    QgsProcessingParameterRasterLayer,
)

from .. import adapter
from ..compat import FIELD_ANY, FIELD_NUMERIC, SOURCE_POINT
from ..engine import sample_bilinear, steps
from .base import SlipsenseAlgorithm


def group_order(values):
    """Group ids in output order: the distinct values as text, sorted (as the command line does)."""
    return sorted(set(values))


class PointPlanesAlgorithm(SlipsenseAlgorithm):
    INPUT = "INPUT"
    GROUP_FIELD = "GROUP_FIELD"
    Z_FIELD = "Z_FIELD"
    DEM = "DEM"
    BAND = "BAND"
    SIGMA_XY = "SIGMA_XY"
    SIGMA_Z = "SIGMA_Z"
    DRAWS = "DRAWS"
    SEED = "SEED"
    OUTPUT = "OUTPUT"

    HELP = (
        "<p>Fits one plane through each group of points, e.g. points mapped on one geological "
        "contact or fault. Three points give the exact plane of the classic three-point problem "
        "(Vacher 2000); more points give the total-least-squares best-fit plane through their "
        "centroid (Fernández 2005). Elevations come from a numeric field (<i>Z field</i>, metres) "
        "or, when none is given, from the DEM sampled bilinearly under each point. With position "
        "errors (sigma xy, sigma z, metres) Monte Carlo draws give 95 % intervals, reproducible for "
        "a seed.</p>"
        "<p>Groups are the distinct values of the group field (as text, in sorted order); points "
        "with a NULL group or no elevation are dropped and reported. The working CRS is the DEM's when the DEM gives the "
        "elevations, else the point layer's; it must be projected with metre units.</p>"
        "<p><b>Output</b> <tt>point_planes</tt>: one row per group (geometry: its points) with "
        "<tt>plane_id</tt>, <tt>dip_dir</tt>, <tt>dip</tt>, <tt>strike</tt>, intervals, "
        "<tt>n_points</tt>, <tt>relief_m</tt>, <tt>rms_m</tt>, coplanarity, collinearity, "
        "<tt>quality</tt>, <tt>reason</tt> and the centroid.</p>"
    )

    def name(self):
        return "pointplanes"

    def displayName(self):
        return self.tr("Planes from groups of points")

    def initAlgorithm(self, config=None):
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.INPUT, self.tr("Points"), [SOURCE_POINT]))
        self.addParameter(QgsProcessingParameterField(
            self.GROUP_FIELD, self.tr("Group field (one plane per value)"), None, self.INPUT, FIELD_ANY))
        self.addParameter(QgsProcessingParameterField(
            self.Z_FIELD, self.tr("Elevation field (m; or leave empty and give a DEM)"), None, self.INPUT,
            FIELD_NUMERIC, optional=True))
        self.addParameter(QgsProcessingParameterRasterLayer(
            self.DEM, self.tr("DEM for elevations (m; used when no elevation field)"), optional=True))
        self.add_band(self.BAND, self.DEM)
        self.add_number(self.SIGMA_XY, "Horizontal position error, 1 sigma (m)", 0.0, minimum=0.0)
        self.add_number(self.SIGMA_Z, "Elevation error, 1 sigma (m)", 0.0, minimum=0.0)
        self.add_number(self.DRAWS, "Monte Carlo draws (0 = no intervals; used when an error is > 0)", 0, minimum=0,
                        maximum=100000, integer=True, advanced=True)
        self.add_number(self.SEED, "Random seed", 0, minimum=0, integer=True, advanced=True)
        self.addParameter(QgsProcessingParameterFeatureSink(self.OUTPUT, self.tr("Point planes"), SOURCE_POINT))
        self.add_count_outputs(extra=(("N_GROUPS", "Number of groups"),))

    def compute(self, parameters, context, feedback):
        self.refuse_overwrite(parameters, context, (self.OUTPUT,), vector_inputs=(self.INPUT,),
                              raster_inputs=(self.DEM,))
        source = self.source(parameters, self.INPUT, context, "the point layer")
        group_field = self.parameterAsString(parameters, self.GROUP_FIELD, context)
        if not group_field:
            raise QgsProcessingException("a group field (GROUP_FIELD) is needed")
        self.require_field(source, group_field, "the point layer", self.GROUP_FIELD)
        z_field = self.parameterAsString(parameters, self.Z_FIELD, context) or None
        self.require_field(source, z_field, "the point layer", self.Z_FIELD)
        dem = self.parameterAsRasterLayer(parameters, self.DEM, context) if parameters.get(self.DEM) else None
        if z_field is None and dem is None:
            raise QgsProcessingException("give an elevation field (Z_FIELD) or a DEM: the points need elevations")
        if z_field and dem is not None:
            raise QgsProcessingException(
                "give either an elevation field (Z_FIELD) or a DEM, not both: one source of elevations")
        adapter.require_defined_crs(source.sourceCrs(), "the point layer")
        if dem is not None:
            crs = adapter.require_crs(dem.crs(), "the DEM")
        else:
            crs = adapter.require_crs(source.sourceCrs(), "the point layer")
        feedback.pushInfo(f"working CRS: {crs.authid() or crs.description()}; azimuths from its grid north")

        fields = [group_field] + ([z_field] if z_field else [])
        fids, xy, values, skipped = adapter.read_points(source, crs, context, feedback, fields, (0.0, 40.0))
        for s in skipped:
            feedback.pushWarning(f"point {s}: no single point geometry; skipped")
        if xy.shape[0] == 0:
            raise QgsProcessingException("the point layer has no point geometries")
        sigma_xy = self.parameterAsDouble(parameters, self.SIGMA_XY, context)
        sigma_z = self.parameterAsDouble(parameters, self.SIGMA_Z, context)
        if z_field:
            z = np.array([np.nan if v is None else float(v) for v in values[z_field]], dtype=float)
        else:
            margin = adapter.dem_margin_m(adapter.raster_cell_size(dem), sigma_xy)
            bounds = (*xy.min(axis=0), *xy.max(axis=0))
            grid = adapter.raster_window(dem, self.band(parameters, self.BAND, context), bounds, margin,
                                         "the points", feedback)
            z = sample_bilinear(grid, xy[:, 0], xy[:, 1])
        gvals = values[group_field]
        use = []
        for i, (fid, zz, g) in enumerate(zip(fids, z, gvals)):
            if g is None:
                feedback.pushWarning(f"point {fid}: the group field is NULL; point dropped")
            elif not np.isfinite(zz):
                what = f"field {z_field!r} is NULL" if z_field else "no DEM value under it"
                feedback.pushWarning(f"point {fid}: {what}; point dropped")
            else:
                use.append(i)
        if not use:
            raise QgsProcessingException("no point has both a group and an elevation")
        labels = [str(gvals[i]) for i in use]
        order = group_order(labels)
        members = {g: [] for g in order}
        for i, g in zip(use, labels):
            members[g].append(i)
        pts = np.column_stack([xy, z])
        groups = [pts[members[g]] for g in order]
        self.check_canceled(feedback)
        feedback.setProgress(50)

        result = steps.point_planes(
            order, groups, sigma_xy_m=sigma_xy, sigma_z_m=sigma_z,
            draws=self.parameterAsInt(parameters, self.DRAWS, context),
            seed=self.parameterAsInt(parameters, self.SEED, context),
        )
        self.check_canceled(feedback)
        feedback.setProgress(90)
        self.push_warnings(feedback, result.warnings)
        out_id, n = adapter.write_table(self, parameters, self.OUTPUT, context, feedback,
                                        result.tables["point_planes"], crs)
        results = {self.OUTPUT: out_id, "N_GROUPS": n}
        results.update(self.quality_results(result.summary))
        return results

"""Depth to fitted planes below points, e.g. planned borehole collars (engine step ``plane_depths``)."""
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
from ..engine import steps
from .base import SlipsenseAlgorithm
from .planes_input import PLANES_HELP, add_planes_parameter, planes_source, require_same_crs


class PlaneDepthsAlgorithm(SlipsenseAlgorithm):
    COLLARS = "COLLARS"
    ID_FIELD = "ID_FIELD"
    TREND_FIELD = "TREND_FIELD"
    PLUNGE_FIELD = "PLUNGE_FIELD"
    PLANE_FIELD = "PLANE_FIELD"
    PLANES = "PLANES"
    DEM = "DEM"
    BAND = "BAND"
    OUTPUT = "OUTPUT"

    SHOW_QUALITY = False
    HELP = (
        "<p>Intersects lines from points (e.g. planned borehole collars) with fitted planes: the "
        "collar elevation is sampled bilinearly from the DEM, the hole runs from the collar in its "
        "trend/plunge (degrees; trend from grid north, plunge positive down, 90 = vertical; "
        "default a vertical hole) and the along-hole distance, the vertical depth and the 3-D point "
        "where it meets each plane are reported. A <i>plane field</i> pairs each collar with one "
        "plane id; without it every collar is paired with every plane.</p>"
        "<p><tt>status</tt> is <i>ok</i>, <i>parallel</i> (the hole never meets the plane), "
        "<i>above</i> (the plane lies behind the collar, up the hole) or <i>ill-posed</i> (the plane "
        "has no orientation). The plane is treated as infinite and exactly planar: the real fault "
        "may bend, step or end before the predicted depth.</p>"
        + PLANES_HELP +
        "<p><b>Output</b> <tt>plane_depths</tt>: 3-D points (the intersection, or the collar where "
        "there is none) with <tt>collar_id</tt>, <tt>plane_id</tt>, <tt>collar_z</tt>, "
        "<tt>trend</tt>, <tt>plunge</tt>, <tt>along_hole_m</tt>, <tt>depth_m</tt>, "
        "<tt>hit_x</tt>/<tt>hit_y</tt>/<tt>hit_z</tt> and <tt>status</tt>, in the DEM's CRS.</p>"
    )

    def name(self):
        return "planedepths"

    def displayName(self):
        return self.tr("Depth to fault planes at points")

    def initAlgorithm(self, config=None):
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.COLLARS, self.tr("Collars (points)"), [SOURCE_POINT]))
        self.addParameter(QgsProcessingParameterField(
            self.ID_FIELD, self.tr("Collar id field (default: feature id)"), None, self.COLLARS, FIELD_ANY,
            optional=True))
        self.addParameter(QgsProcessingParameterField(
            self.TREND_FIELD, self.tr("Hole trend field (degrees from grid north; default 0)"), None,
            self.COLLARS, FIELD_NUMERIC, optional=True))
        self.addParameter(QgsProcessingParameterField(
            self.PLUNGE_FIELD, self.tr("Hole plunge field (degrees down, 90 = vertical; default 90)"), None,
            self.COLLARS, FIELD_NUMERIC, optional=True))
        self.addParameter(QgsProcessingParameterField(
            self.PLANE_FIELD, self.tr("Plane id field pairing each collar with a plane (default: all planes)"),
            None, self.COLLARS, FIELD_ANY, optional=True))
        add_planes_parameter(self, self.PLANES)
        self.addParameter(QgsProcessingParameterRasterLayer(self.DEM, self.tr("DEM for collar elevations (m)")))
        self.add_band(self.BAND, self.DEM)
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT, self.tr("Plane depths"), SOURCE_POINT))
        self.add_count_outputs(extra=(("N_PAIRS", "Number of collar/plane pairs"),
                                      ("N_HITS", "Number of pairs where the hole meets the plane")),
                               quality=False)

    def compute(self, parameters, context, feedback):
        self.refuse_overwrite(parameters, context, (self.OUTPUT,),
                              vector_inputs=(self.COLLARS, self.PLANES), raster_inputs=(self.DEM,))
        dem = self.parameterAsRasterLayer(parameters, self.DEM, context)
        if dem is None:
            raise QgsProcessingException(self.invalidRasterError(parameters, self.DEM))
        crs = adapter.require_crs(dem.crs(), "the DEM")
        collars = self.source(parameters, self.COLLARS, context, "the collar layer")
        if not collars.sourceCrs().isValid():
            raise QgsProcessingException(
                "the collar layer has no coordinate reference system (CRS); assign one before running")
        names = {}
        for key in (self.ID_FIELD, self.TREND_FIELD, self.PLUNGE_FIELD, self.PLANE_FIELD):
            names[key] = self.parameterAsString(parameters, key, context) or None
            self.require_field(collars, names[key], "the collar layer", key)
        if names[self.TREND_FIELD] and collars.sourceCrs() != crs:
            raise QgsProcessingException(
                "hole trends are azimuths from grid north of the collar layer's CRS, which differs from "
                "the DEM's; reproject the collars to the DEM's CRS (and give trends in it) first")
        planes = planes_source(self, parameters, self.PLANES, context)
        require_same_crs(planes, crs, "the DEM")

        fields = [n for n in names.values() if n]
        fids, xy, values, skipped = adapter.read_points(collars, crs, context, feedback, fields, (0.0, 30.0))
        for s in skipped:
            feedback.pushWarning(f"collar {s}: no single point geometry; skipped")
        if xy.shape[0] == 0:
            raise QgsProcessingException("the collar layer has no point geometries")
        idf = names[self.ID_FIELD]
        ids = [str(f) if idf is None or values[idf][i] is None else str(values[idf][i])
               for i, f in enumerate(fids)]

        def numbers(key, default):
            name = names[key]
            if name is None:
                return np.full(len(fids), default, dtype=float)
            vals = values[name]
            for cid, v in zip(ids, vals):
                if v is None:
                    feedback.pushWarning(f"collar {cid}: NULL {name}; using {default:g}")
            return np.array([default if v is None else float(v) for v in vals], dtype=float)

        trend = numbers(self.TREND_FIELD, 0.0)
        plunge = numbers(self.PLUNGE_FIELD, 90.0)
        pair = None
        keep = np.arange(len(fids))
        if names[self.PLANE_FIELD]:
            pv = values[names[self.PLANE_FIELD]]
            keep = np.array([i for i, v in enumerate(pv) if v is not None], dtype=int)
            for i, v in enumerate(pv):
                if v is None:
                    feedback.pushWarning(f"collar {ids[i]}: no plane id (NULL); skipped")
            pair = [str(pv[i]) for i in keep]
        if keep.size == 0:
            raise QgsProcessingException("no collar has a plane id to pair with")

        pids, dip_dir, dip, centroids, _ = adapter.read_planes(planes, crs, context, feedback, (30.0, 50.0))
        margin = adapter.dem_margin_m(adapter.raster_cell_size(dem))
        bounds = (*xy[keep].min(axis=0), *xy[keep].max(axis=0))
        grid = adapter.raster_window(dem, self.band(parameters, self.BAND, context), bounds, margin,
                                     "the collars", feedback)
        self.check_canceled(feedback)
        result = steps.plane_depths([ids[i] for i in keep], xy[keep], grid, trend[keep], plunge[keep],
                                    pids, dip_dir, dip, centroids, pair_plane=pair)
        self.check_canceled(feedback)
        feedback.setProgress(80)
        self.push_warnings(feedback, result.warnings)
        out_id, n = adapter.write_table(self, parameters, self.OUTPUT, context, feedback,
                                        result.tables["plane_depths"], crs)
        return {self.OUTPUT: out_id, "N_PAIRS": n, "N_HITS": int(result.summary["hits"])}

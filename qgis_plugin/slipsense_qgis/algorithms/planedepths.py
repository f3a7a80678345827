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
    Z_FIELD = "Z_FIELD"
    DEM = "DEM"
    BAND = "BAND"
    OUTPUT = "OUTPUT"

    SHOW_QUALITY = False
    HELP = (
        "<p>Intersects lines from points (e.g. planned borehole collars) with fitted planes: the "
        "collar elevation is sampled bilinearly from the DEM (or read from an elevation field, "
        "metres), the hole runs from the collar in its "
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
        "<tt>depth_lo95</tt>/<tt>depth_hi95</tt> (the depth range over the planes at the corners "
        "of their 95 % dip and dip-direction intervals, when the plane layer has them), "
        "<tt>hit_x</tt>/<tt>hit_y</tt>/<tt>hit_z</tt> and <tt>status</tt>, in the working CRS (the "
        "DEM's, or the plane layer's with an elevation field). NULL trends or plunges are errors.</p>"
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
        self.addParameter(QgsProcessingParameterRasterLayer(
            self.DEM, self.tr("DEM for collar elevations (m; or give an elevation field)"), optional=True))
        self.addParameter(QgsProcessingParameterField(
            self.Z_FIELD, self.tr("Collar elevation field (m; instead of the DEM)"), None, self.COLLARS,
            FIELD_NUMERIC, optional=True))
        self.add_band(self.BAND, self.DEM)
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT, self.tr("Plane depths"), SOURCE_POINT))
        self.add_count_outputs(extra=(("N_PAIRS", "Number of collar/plane pairs"),
                                      ("N_HITS", "Number of pairs where the hole meets the plane")),
                               quality=False)

    def compute(self, parameters, context, feedback):
        self.refuse_overwrite(parameters, context, (self.OUTPUT,),
                              vector_inputs=(self.COLLARS, self.PLANES), raster_inputs=(self.DEM,))
        collars = self.source(parameters, self.COLLARS, context, "the collar layer")
        adapter.require_defined_crs(collars.sourceCrs(), "the collar layer")
        names = {}
        for key in (self.ID_FIELD, self.TREND_FIELD, self.PLUNGE_FIELD, self.PLANE_FIELD, self.Z_FIELD):
            names[key] = self.parameterAsString(parameters, key, context) or None
            self.require_field(collars, names[key], "the collar layer", key)
        dem = self.parameterAsRasterLayer(parameters, self.DEM, context) if parameters.get(self.DEM) else None
        if (dem is None) == (names[self.Z_FIELD] is None):
            raise QgsProcessingException(
                "give exactly one source of collar elevations: a DEM or an elevation field (Z_FIELD)")
        planes = planes_source(self, parameters, self.PLANES, context)
        if dem is not None:
            crs = adapter.require_crs(dem.crs(), "the DEM")
            require_same_crs(planes, crs, "the DEM")
        else:
            crs = adapter.require_crs(planes.sourceCrs(), "the plane layer")
        if names[self.TREND_FIELD] and collars.sourceCrs() != crs:
            raise QgsProcessingException(
                "hole trends are azimuths from grid north of the collar layer's CRS, which differs from "
                f"the working CRS ({crs.authid()}); reproject the collars (and their trends) to it first")

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
                    raise QgsProcessingException(f"collar {cid}: the field {name!r} is empty (NULL)")
            return np.array([float(v) for v in vals], dtype=float)

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

        interval_fields = ("dip_lo95", "dip_hi95", "dip_dir_lo95", "dip_dir_hi95")
        pids, dip_dir, dip, centroids, _, cols = adapter.read_planes(planes, crs, context, feedback, (30.0, 50.0),
                                                                     optional=interval_fields)
        intervals = {}
        if all(n in cols for n in interval_fields):  # a depth range from the planes' 95 % intervals
            intervals = dict(dip_interval=(cols["dip_lo95"], cols["dip_hi95"]),
                             dip_dir_interval=(cols["dip_dir_lo95"], cols["dip_dir_hi95"]))
        grid, collar_z = None, None
        if dem is not None:
            margin = steps.collar_margin_m(adapter.raster_cell_size(dem))
            bounds = (*xy[keep].min(axis=0), *xy[keep].max(axis=0))
            grid = adapter.raster_window(dem, self.band(parameters, self.BAND, context), bounds, margin,
                                         "the collars", feedback)
        else:
            zf = names[self.Z_FIELD]
            collar_z = np.array([np.nan if values[zf][i] is None else float(values[zf][i]) for i in keep])
        self.check_canceled(feedback)
        result = steps.plane_depths([ids[i] for i in keep], xy[keep], grid, trend[keep], plunge[keep],
                                    pids, dip_dir, dip, centroids, collar_z=collar_z, pair_plane=pair,
                                    **intervals)
        self.check_canceled(feedback)
        feedback.setProgress(80)
        self.push_warnings(feedback, result.warnings)
        out_id, n = adapter.write_table(self, parameters, self.OUTPUT, context, feedback,
                                        result.tables["plane_depths"], crs)
        return {self.OUTPUT: out_id, "N_PAIRS": n, "N_HITS": int(result.summary["hits"])}

"""Net slip of fitted faults from mapped marker contacts over a DEM (engine step ``map_slip``)."""
import numpy as np
from qgis.core import (
    QgsProcessingException,
    QgsProcessingParameterFeatureSink,
    QgsProcessingParameterFeatureSource,
    QgsProcessingParameterField,
    QgsProcessingParameterRasterLayer,
    QgsProcessingParameterString,
)

from .. import adapter
from ..compat import FIELD_ANY, FIELD_NUMERIC, FLAG_ADVANCED, SOURCE_LINE, SOURCE_POINT, add_flags
from ..engine import steps
from .base import SlipsenseAlgorithm
from .netslip import STATUS_HELP
from .planes_input import PLANES_HELP, add_planes_parameter, planes_source, require_same_crs


def read_contacts(source, crs, context, feedback, marker_field, piece_field, span=(0.0, 10.0)):
    """Marker contact pieces: (n, 2) vertex arrays with their marker and piece names.

    A feature with a NULL marker is skipped (a warning); a multi-part feature gives one piece per
    part, named ``<piece>/<k>`` (as on the command line).
    """
    pieces, marks, ids, warnings = [], [], [], []
    total = source.featureCount()
    for i, f in enumerate(source.getFeatures(adapter._request(crs, context))):
        if i % 100 == 0:
            if feedback.isCanceled():
                raise adapter.Canceled()
            feedback.setProgress(span[0] + (span[1] - span[0]) * i / max(total, 1))
        mk = adapter._value(f, marker_field)
        g = f.geometry()
        if mk is None:
            warnings.append(f"the contact layer feature {f.id()}: field {marker_field!r} is empty; contact skipped")
            continue
        parts = [] if g is None or g.isNull() or g.isEmpty() else adapter._line_parts(g)
        if not parts:
            warnings.append(f"the contact layer feature {f.id()}: empty geometry, skipped")
            continue
        pc = adapter._value(f, piece_field) if piece_field else None
        label = str(pc) if pc is not None else f"feature {f.id()}"
        for k, part in enumerate(parts):
            pieces.append(part)
            marks.append(str(mk))
            ids.append(label if len(parts) == 1 else f"{label}/{k + 1}")
    return pieces, marks, ids, warnings


class MapSlipAlgorithm(SlipsenseAlgorithm):
    PLANES = "PLANES"
    CONTACTS = "CONTACTS"
    MARKER_FIELD = "MARKER_FIELD"
    PIECE_FIELD = "PIECE_FIELD"
    DEM = "DEM"
    BAND = "BAND"
    STATIONS = "STATIONS"
    STATION_FAULT_FIELD = "STATION_FAULT_FIELD"
    STATION_DIP_DIR_FIELD = "STATION_DIP_DIR_FIELD"
    STATION_DIP_FIELD = "STATION_DIP_FIELD"
    STATION_TREND_FIELD = "STATION_TREND_FIELD"
    STATION_PLUNGE_FIELD = "STATION_PLUNGE_FIELD"
    STATION_SENSE_FIELD = "STATION_SENSE_FIELD"
    STATION_RAKE_FIELD = "STATION_RAKE_FIELD"
    DISTANCE = "DISTANCE"
    REACH = "REACH"
    SIGMA_XY = "SIGMA_XY"
    SIGMA_Z = "SIGMA_Z"
    MARKER_ATTITUDES = "MARKER_ATTITUDES"
    SIGMA_ATTITUDE = "SIGMA_ATTITUDE"
    DRAWS = "DRAWS"
    SEED = "SEED"
    OUTPUT = "OUTPUT"
    OUTPUT_VECTORS = "OUTPUT_VECTORS"
    OUTPUT_FITS = "OUTPUT_FITS"

    GROUP = "Fault kinematics"
    GROUP_ID = "faultkinematics"
    SHOW_QUALITY = False
    HELP = (
        "<p>Net slip of fitted fault planes from the marker contacts mapped on both sides of their "
        "traces. For each plane, the contact pieces of each marker (bed, dyke, ...) that come within "
        "the <i>reach</i> of its trace are its cut-off pieces; their vertices within the "
        "<i>distance</i> of the trace are lifted onto the DEM (bilinear). A piece whose points lie "
        "above the fitted fault plane is in the hanging wall, below it in the footwall (on a vertical "
        "plane the hanging wall is the dip-direction side). Each marker is fitted as two parallel "
        "planes, one per side (the pooled scatter of the two sides; normal m = eigenvector of the "
        "smallest eigenvalue), and gives m·u = m·(c_HW − c_FW), c the side centroids: the "
        "separation equation of Xu et al. (2007, J. Struct. Geol. 29). Two markers with "
        "non-parallel cutoffs give the slip vector u; slip stations of the fault (slickenlines with "
        "a sense, read like <i>Fault-slip data</i>; optional) add its mean direction in the plane, "
        "with their spread as its error. A piece lying much farther from its plane than the stated "
        "errors explain — and than the other pieces — is set aside (bent, or in another block) "
        "when its side keeps another piece.</p>"
        "<p>95 % intervals come from Monte Carlo draws: the contact vertices move by <i>sigma xy</i>, "
        "the DEM is sampled again with <i>sigma z</i> added, the markers are refitted and the "
        "fault plane is tilted within its reported 95 % intervals (reproducible for a seed).</p>"
        + PLANES_HELP + STATUS_HELP +
        "<p><b>Outputs</b>: <tt>net_slip</tt> (a 3-D point on the trace near the cut-offs, with "
        "<tt>net_slip_m</tt>, <tt>rake</tt>, <tt>slip_trend</tt>/<tt>slip_plunge</tt> (the "
        "direction the hanging wall moved; plunge − when it moved up), the components and 95 % "
        "intervals, <tt>n_stations</tt>, <tt>station_rake</tt>, <tt>marker_misfit</tt>); "
        "<tt>slip_vectors</tt> (a 3-D line from the footwall piercing point of the first two markers "
        "to the hanging-wall one, or from the trace point); <tt>marker_fits</tt> (per fault and "
        "marker: the fitted attitude, the pieces used and set aside, rms and misfit ratio, the "
        "separations and the cutoff line; geometry: the contact vertices used).</p>"
    )

    def name(self):
        return "mapslip"

    def displayName(self):
        return self.tr("Net slip from mapped marker contacts")

    def initAlgorithm(self, config=None):
        add_planes_parameter(self, self.PLANES)
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.CONTACTS, self.tr("Marker contacts (lines, one piece per feature)"), [SOURCE_LINE]))
        self.addParameter(QgsProcessingParameterField(
            self.MARKER_FIELD, self.tr("Marker field"), "marker_id", self.CONTACTS, FIELD_ANY))
        self.addParameter(QgsProcessingParameterField(
            self.PIECE_FIELD, self.tr("Piece id field (default: piece_id when present, else the feature id)"),
            None, self.CONTACTS, FIELD_ANY, optional=True))
        self.addParameter(QgsProcessingParameterRasterLayer(self.DEM, self.tr("DEM (elevations in metres)")))
        self.add_band(self.BAND, self.DEM)
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.STATIONS, self.tr("Slip stations (points, optional)"), [SOURCE_POINT], optional=True))
        for key, label, default, kind in (
            (self.STATION_FAULT_FIELD, "Station fault field", "fault_id", FIELD_ANY),
            (self.STATION_DIP_DIR_FIELD, "Station plane dip direction field (degrees)", "dip_dir", FIELD_NUMERIC),
            (self.STATION_DIP_FIELD, "Station plane dip field (degrees)", "dip", FIELD_NUMERIC),
            (self.STATION_TREND_FIELD, "Slickenline trend field (degrees)", "trend", FIELD_NUMERIC),
            (self.STATION_PLUNGE_FIELD, "Slickenline plunge field (degrees, down)", "plunge", FIELD_NUMERIC),
            (self.STATION_SENSE_FIELD, "Sense field (normal, reverse, dextral, sinistral, ...)", "sense", FIELD_ANY),
            (self.STATION_RAKE_FIELD, "Rake field instead of trend/plunge/sense (degrees)", None, FIELD_NUMERIC),
        ):
            self.addParameter(QgsProcessingParameterField(key, self.tr(label), default, self.STATIONS, kind,
                                                          optional=True))
        self.add_number(self.DISTANCE, "Use contact vertices within this distance of the trace (m)", 1000.0,
                        minimum=1.0)
        self.add_number(self.REACH, "A piece is a cut-off piece within this distance of the trace (m)", 100.0,
                        minimum=0.1)
        self.add_number(self.SIGMA_XY, "Horizontal error of contact vertices, 1 sigma (m)", 5.0, minimum=0.0)
        self.add_number(self.SIGMA_Z, "DEM elevation error, 1 sigma (m)", 2.0, minimum=0.0)
        p = QgsProcessingParameterString(
            self.MARKER_ATTITUDES, self.tr("Given marker attitudes instead of fitting, e.g. bed_A=352/11; "
                                           "dyke_1=188/80 (dip direction/dip, degrees)"), None, False, True)
        add_flags(p, FLAG_ADVANCED)
        self.addParameter(p)
        self.add_number(self.SIGMA_ATTITUDE, "Error of given marker attitudes, 1 sigma per axis (degrees)", 2.0,
                        minimum=0.0, maximum=45.0, advanced=True)
        self.add_number(self.DRAWS, "Monte Carlo draws (0 = no intervals)", 200, minimum=0,
                        maximum=100000, integer=True, advanced=True)
        self.add_number(self.SEED, "Random seed", 0, minimum=0, integer=True, advanced=True)
        self.addParameter(QgsProcessingParameterFeatureSink(self.OUTPUT, self.tr("Net slip"), SOURCE_POINT))
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT_VECTORS, self.tr("Slip vectors (3-D lines)"), SOURCE_LINE, None, True, False))
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT_FITS, self.tr("Marker fits"), SOURCE_LINE, None, True, False))
        self.add_count_outputs(extra=(("N_FAULTS", "Number of faults with a result"),
                                      ("N_UNIQUE", "Number of unique solutions"),
                                      ("N_OVER_DETERMINED", "Number of over-determined solutions"),
                                      ("N_ILL_CONDITIONED", "Number of ill-conditioned solutions"),
                                      ("N_UNDER_DETERMINED", "Number of under-determined faults")),
                               quality=False)

    def compute(self, parameters, context, feedback):
        self.refuse_overwrite(parameters, context, (self.OUTPUT, self.OUTPUT_VECTORS, self.OUTPUT_FITS),
                              vector_inputs=(self.PLANES, self.CONTACTS, self.STATIONS),
                              raster_inputs=(self.DEM,))
        dem = self.parameterAsRasterLayer(parameters, self.DEM, context)
        if dem is None:
            raise QgsProcessingException(self.invalidRasterError(parameters, self.DEM))
        crs = adapter.require_crs(dem.crs(), "the DEM")
        band = self.band(parameters, self.BAND, context)
        planes = planes_source(self, parameters, self.PLANES, context)
        require_same_crs(planes, crs, "the DEM")
        contacts = self.source(parameters, self.CONTACTS, context, "the contact layer")
        adapter.require_defined_crs(contacts.sourceCrs(), "the contact layer")
        marker_field = self.parameterAsString(parameters, self.MARKER_FIELD, context) or None
        if not marker_field:
            raise QgsProcessingException("name the marker field of the contact layer (MARKER_FIELD)")
        self.require_field(contacts, marker_field, "the contact layer", self.MARKER_FIELD)
        piece_field = self.parameterAsString(parameters, self.PIECE_FIELD, context) or None
        self.require_field(contacts, piece_field, "the contact layer", self.PIECE_FIELD)
        if piece_field is None and "piece_id" in contacts.fields().names():
            piece_field = "piece_id"
        window = self.parameterAsDouble(parameters, self.DISTANCE, context)
        reach = self.parameterAsDouble(parameters, self.REACH, context)
        sigma_xy = self.parameterAsDouble(parameters, self.SIGMA_XY, context)
        sigma_z = self.parameterAsDouble(parameters, self.SIGMA_Z, context)
        draws = self.parameterAsInt(parameters, self.DRAWS, context)
        seed = self.parameterAsInt(parameters, self.SEED, context)
        given = steps.netslip.parse_marker_attitudes(
            self.parameterAsString(parameters, self.MARKER_ATTITUDES, context) or None)

        feedback.pushInfo(f"working CRS: {crs.authid() or crs.description()} (the DEM's); azimuths from its grid north")
        intervals = ("dip_lo95", "dip_hi95", "dip_dir_lo95", "dip_dir_hi95")
        pids, dip_dir, dip, centroids, _, cols = adapter.read_planes(planes, crs, context, feedback, (0.0, 5.0),
                                                                     optional=intervals)
        _, traces, _ = adapter.read_lines(planes, crs, context, feedback, None, (5.0, 10.0))
        if len(traces) != len(pids):
            raise QgsProcessingException("every plane needs its trace (line geometry) for map slip")
        pieces, marks, ids, warnings = read_contacts(contacts, crs, context, feedback, marker_field,
                                                     piece_field, (10.0, 20.0))
        stations = None
        if parameters.get(self.STATIONS) is not None:
            src = self.parameterAsSource(parameters, self.STATIONS, context)
            if src is not None:
                adapter.require_defined_crs(src.sourceCrs(), "the station layer")
                keys = [self.STATION_FAULT_FIELD, self.STATION_DIP_DIR_FIELD, self.STATION_DIP_FIELD]
                rake_field = self.parameterAsString(parameters, self.STATION_RAKE_FIELD, context) or None
                keys += [self.STATION_RAKE_FIELD] if rake_field else [
                    self.STATION_TREND_FIELD, self.STATION_PLUNGE_FIELD, self.STATION_SENSE_FIELD]
                names = {}
                for key in keys:
                    names[key] = self.parameterAsString(parameters, key, context) or None
                    if not names[key]:
                        raise QgsProcessingException(f"name the station field {key}")
                    self.require_field(src, names[key], "the station layer", key)
                fids, _, values, skipped = adapter.read_points(src, crs, context, feedback,
                                                               list(dict.fromkeys(names.values())), (20.0, 25.0))
                warnings += [f"the station layer feature {s}: no point geometry, skipped" for s in skipped]

                def nums(key):
                    return np.array([np.nan if v is None else float(v) for v in values[names[key]]], float)

                stations = {"fault": [None if v is None else str(v) for v in values[names[self.STATION_FAULT_FIELD]]],
                            "labels": [f"the station layer feature {fid}" for fid in fids],
                            "dip_dir": nums(self.STATION_DIP_DIR_FIELD), "dip": nums(self.STATION_DIP_FIELD)}
                if rake_field:
                    stations["rake"] = nums(self.STATION_RAKE_FIELD)
                else:
                    stations["trend"] = nums(self.STATION_TREND_FIELD)
                    stations["plunge"] = nums(self.STATION_PLUNGE_FIELD)
                    stations["sense"] = list(values[names[self.STATION_SENSE_FIELD]])
        allxy = np.concatenate([np.concatenate(t) for t in traces])
        margin = steps.map_slip_margin_m(adapter.raster_cell_size(dem), window, sigma_xy)
        grid = adapter.raster_window(dem, band, (*allxy.min(0), *allxy.max(0)), margin, "the fault traces",
                                     feedback)
        self.check_canceled(feedback)
        have = all(n in cols for n in intervals)
        result = steps.map_slip(
            pids, dip_dir, dip, centroids, traces, pieces, marks, ids, grid,
            dip_interval=(cols["dip_lo95"], cols["dip_hi95"]) if have else None,
            dip_dir_interval=(cols["dip_dir_lo95"], cols["dip_dir_hi95"]) if have else None,
            stations=stations, window_m=window, reach_m=reach, sigma_xy_m=sigma_xy, sigma_z_m=sigma_z,
            marker_attitudes=given,
            sigma_attitude_deg=self.parameterAsDouble(parameters, self.SIGMA_ATTITUDE, context),
            draws=draws, seed=seed, progress=self.progress(feedback, 25.0, 90.0),
        )
        self.push_warnings(feedback, warnings + result.warnings)
        out_id, n = adapter.write_table(self, parameters, self.OUTPUT, context, feedback,
                                        result.tables["net_slip"], crs)
        results = {self.OUTPUT: out_id}
        for key, name in ((self.OUTPUT_VECTORS, "slip_vectors"), (self.OUTPUT_FITS, "marker_fits")):
            if parameters.get(key) is not None:
                results[key], _ = adapter.write_table(self, parameters, key, context, feedback,
                                                      result.tables[name], crs)
        st = result.summary["status"]
        results.update(N_FAULTS=n, N_UNIQUE=st["unique"], N_OVER_DETERMINED=st["over-determined"],
                       N_ILL_CONDITIONED=st["ill-conditioned"], N_UNDER_DETERMINED=st["under-determined"])
        return results

"""Cross-sections along section lines (engine step ``cross_sections``).

The figures of the command line (``--figures``) are not drawn here (QGIS's Python may lack
matplotlib); the layers are the same, field by field.
"""
import math

import numpy as np
from qgis.core import (
    QgsCoordinateReferenceSystem,
    QgsProcessingException,
    QgsProcessingParameterEnum,
    QgsProcessingParameterFeatureSink,
    QgsProcessingParameterFeatureSource,
    QgsProcessingParameterField,
    QgsProcessingParameterRasterLayer,
    QgsProcessingParameterString,
)

from .. import adapter
from ..compat import FIELD_ANY, FLAG_ADVANCED, SOURCE_LINE, SOURCE_POINT, add_flags
from ..engine import Traces, steps
from .base import SlipsenseAlgorithm
from .planes_input import PLANES_HELP

PROJECTIONS = ("strike", "perpendicular")

#: sink key -> (engine table, display name, required)
SINKS = (
    ("OUTPUT_PROFILES", "section_profiles", "Topographic profiles (3-D lines)", True),
    ("OUTPUT_FAULTS", "section_faults", "Fault lines in the sections (3-D lines)", True),
    ("OUTPUT_CONTACTS", "section_contacts", "Contact lines in the sections (3-D lines)", False),
    ("OUTPUT_POINTS", "section_points", "Projected measurements as dip ticks (3-D lines)", False),
    ("OUTPUT_OFFSETS", "section_offsets", "Apparent offsets (3-D lines, footwall to hanging-wall cut-off)", False),
    ("OUTPUT_NET_SLIP", "section_net_slip", "Net slip per fault and section (3-D points)", False),
    ("OUTPUT_SEGMENTS", "section_segments", "Section segments (azimuth, length, bends)", False),
    ("OUTPUT_PROFILES_XZ", "section_profiles_xz", "Profiles in section coordinates (distance, elevation)", False),
    ("OUTPUT_FAULTS_XZ", "section_faults_xz", "Fault lines in section coordinates", False),
    ("OUTPUT_CONTACTS_XZ", "section_contacts_xz", "Contact lines in section coordinates", False),
    ("OUTPUT_POINTS_XZ", "section_points_xz", "Dip ticks in section coordinates", False),
    ("OUTPUT_OFFSETS_XZ", "section_offsets_xz", "Apparent offsets in section coordinates", False),
    ("OUTPUT_NET_SLIP_XZ", "section_net_slip_xz", "Net slip points in section coordinates", False),
)


def _label(v):
    """Identifier text of an attribute value, as the command line writes it (``3.0`` -> "3")."""
    if isinstance(v, float) and v.is_integer():
        return str(int(v))
    return str(v)


def _numbers(values, n):
    out = np.full(n, np.nan)
    for i, v in enumerate(values):
        try:
            out[i] = math.nan if v is None else float(v)
        except (TypeError, ValueError):
            out[i] = math.nan
    return out


def _check_angles(what, fids, values, field, lo, hi):
    bad = np.isfinite(values) & ((values < lo) | (values > hi))
    if np.any(bad):
        k = int(np.flatnonzero(bad)[0])
        raise QgsProcessingException(f"{what} feature {fids[k]}: field {field!r} = {float(values[k])!r} is outside "
                                     f"[{lo:g}, {hi:g}] degrees")


def read_contact_pieces(source, crs, context, feedback, marker_field, piece_field, span):
    """One piece per feature (a multi-line is one piece of several parts), as on the command line:
    marker ids, piece ids (``piece_field``, else the feature id; repeated ids get ``#fid``), parts."""
    marks, ids, fids, lines, warnings = [], [], [], [], []
    total = source.featureCount()
    for i, f in enumerate(source.getFeatures(adapter._request(crs, context))):
        if i % 100 == 0:
            if feedback.isCanceled():
                raise adapter.Canceled()
            feedback.setProgress(span[0] + (span[1] - span[0]) * i / max(total, 1))
        g = f.geometry()
        parts = [] if g is None or g.isNull() or g.isEmpty() else adapter._line_parts(g)
        if not parts:
            warnings.append(f"the contact layer feature {f.id()}: empty geometry, skipped")
            continue
        mk = adapter._value(f, marker_field)
        if mk is None:
            warnings.append(f"the contact layer feature {f.id()}: field {marker_field!r} is empty; contact left out")
            continue
        pc = adapter._value(f, piece_field) if piece_field else None
        marks.append(_label(mk))
        ids.append(str(f.id()) if pc is None else _label(pc))
        fids.append(f.id())
        lines.append(parts)
    if len(set(ids)) != len(ids):
        ids = [f"{p}#{fid}" for p, fid in zip(ids, fids)]
    return marks, ids, lines, warnings


class CrossSectionAlgorithm(SlipsenseAlgorithm):
    SECTIONS = "SECTIONS"
    ID_FIELD = "ID_FIELD"
    DEM = "DEM"
    BAND = "BAND"
    PLANES = "PLANES"
    CONTACTS = "CONTACTS"
    MARKER_FIELD = "MARKER_FIELD"
    PIECE_FIELD = "PIECE_FIELD"
    MARKER_ATTITUDES = "MARKER_ATTITUDES"
    BEDDING = "BEDDING"
    STATIONS = "STATIONS"
    STATION_FAULT_FIELD = "STATION_FAULT_FIELD"
    BOREHOLES = "BOREHOLES"
    DISTANCE = "DISTANCE"
    DEPTH = "DEPTH"
    PROJECTION = "PROJECTION"
    SPACING = "SPACING"
    TICK = "TICK"
    SIGMA_XY = "SIGMA_XY"
    SIGMA_Z = "SIGMA_Z"
    DRAWS = "DRAWS"
    SEED = "SEED"

    GROUP = "Cross-sections"
    GROUP_ID = "crosssections"
    SHOW_QUALITY = False
    HELP = (
        "<p>Draws vertical cross-sections along section lines; a bent line is handled leg by leg, "
        "each leg in its own vertical plane with its own azimuth. It gives the topographic profile "
        "(bilinear DEM samples at the DEM's cell size); every fault plane and planar contact as its "
        "line of intersection with each leg's plane, with its apparent dip "
        "(tan α = tan δ · sin β, Ragan 2009, β the angle between section and strike), from the ground "
        "down to the <i>depth</i> below the section's lowest ground point. A plane is drawn only "
        "within the <i>distance</i> of its mapped extent along its strike; planes that do not reach "
        "the section are left out and say so (<tt>status</tt> <i>out of reach</i>; <i>parallel</i> "
        "for a vertical plane along the section; <i>near-parallel</i> flags a strike within 5° of the "
        "section).</p>"
        "<p><b>Contacts</b>: each marker piece (one per fault block) lies on one side of every fault "
        "in the leg; pieces of a marker within the distance of a leg are fitted as parallel planes "
        "(one attitude, one position per block) unless an attitude is given "
        "(<tt>bed_A=352/11; dyke_1=bedding</tt>, <i>bedding</i> = the mean of the bedding readings). "
        "<b>Projected data</b>: bedding readings, fault-slip stations and borehole intersections "
        "within the distance are moved onto the section along the strike of their plane "
        "(default) or perpendicular to it, keeping their elevation, and drawn as dip ticks.</p>"
        "<p><b>Offsets and net slip</b>: for each marker on both sides of each fault the separation "
        "along the fault's line in the section (from the footwall to the hanging-wall cut-off, "
        "+ up the line), the vertical and the horizontal separation; each gives m·u = S (m·o) on "
        "the slip u (Xu et al. 2007, 2009). With two markers whose cut-offs are not parallel, or one "
        "marker and the slip direction of the fault's stations (field <tt>fault_id</tt>; lineation as "
        "<tt>trend</tt>/<tt>plunge</tt>/<tt>sense</tt> or <tt>rake</tt>), the net slip and its "
        "components follow, with 95 % Monte Carlo intervals (contact vertices moved by sigma xy, "
        "the DEM by sigma z, the fault within its 95 % intervals). One marker alone leaves the slip "
        "<i>under-determined</i>: no net slip is given, only the least slip that fits.</p>"
        + PLANES_HELP +
        "<p><b>Outputs</b> in map coordinates (3-D lines lying in each leg's vertical plane, so they "
        "show on the map and in 3-D): profiles, faults, contacts, dip ticks, offsets, net slip "
        "points and the segments; and the same rows in section coordinates (<tt>*_xz</tt>: x = "
        "distance along the section, y = elevation, metres, a local CRS) for drawing. Fields: "
        "<tt>section_id</tt>, <tt>segment</tt>, <tt>fault_id</tt>, <tt>dip_dir</tt>, <tt>dip</tt>, "
        "<tt>apparent_dip</tt> (with 95 % interval), <tt>apparent_dip_toward</tt>, "
        "<tt>distance_m</tt>, <tt>elevation_m</tt>, <tt>separation_m</tt>, "
        "<tt>vertical_separation_m</tt>, <tt>horizontal_separation_m</tt>, <tt>net_slip_m</tt>, "
        "<tt>rake</tt>, <tt>strike_slip_m</tt>, <tt>dip_slip_m</tt>, <tt>throw_m</tt>, "
        "<tt>heave_m</tt> with <tt>_lo95</tt>/<tt>_hi95</tt>, <tt>sense</tt>, <tt>status</tt>. "
        "The figures of the command line are not drawn in QGIS.</p>"
    )

    def name(self):
        return "crosssection"

    def displayName(self):
        return self.tr("Cross-sections with apparent dips, offsets and net slip")

    def initAlgorithm(self, config=None):
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.SECTIONS, self.tr("Section lines"), [SOURCE_LINE]))
        self.addParameter(QgsProcessingParameterField(
            self.ID_FIELD, self.tr("Section id field (default: feature id)"), None, self.SECTIONS, FIELD_ANY,
            optional=True))
        self.addParameter(QgsProcessingParameterRasterLayer(self.DEM, self.tr("DEM (elevations in metres)")))
        self.add_band(self.BAND, self.DEM)
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.PLANES, self.tr("Fitted planes (trace planes or point planes, optional)"), [SOURCE_LINE, SOURCE_POINT],
            optional=True))
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.CONTACTS, self.tr("Marker contacts (lines, one piece per fault block, optional)"), [SOURCE_LINE],
            optional=True))
        self.addParameter(QgsProcessingParameterField(
            self.MARKER_FIELD, self.tr("Marker field"), "marker_id", self.CONTACTS, FIELD_ANY, optional=True))
        self.addParameter(QgsProcessingParameterField(
            self.PIECE_FIELD, self.tr("Piece id field (default: piece_id when present, else the feature id)"),
            None, self.CONTACTS, FIELD_ANY, optional=True))
        p = QgsProcessingParameterString(
            self.MARKER_ATTITUDES, self.tr("Given marker attitudes instead of fitting, e.g. bed_A=352/11; "
                                           "dyke_1=bedding (dip direction/dip, degrees)"), None, False, True)
        add_flags(p, FLAG_ADVANCED)
        self.addParameter(p)
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.BEDDING, self.tr("Bedding readings (points with dip_dir, dip; optional)"), [SOURCE_POINT],
            optional=True))
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.STATIONS, self.tr("Fault-slip stations (points with dip_dir, dip and trend/plunge/sense or rake; "
                                   "optional)"), [SOURCE_POINT], optional=True))
        self.addParameter(QgsProcessingParameterField(
            self.STATION_FAULT_FIELD, self.tr("Station fault field"), "fault_id", self.STATIONS, FIELD_ANY,
            optional=True))
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.BOREHOLES, self.tr("Borehole collars (points; fields hole_id, trend, plunge, total_depth_m, "
                                    "target_fault when present; optional)"), [SOURCE_POINT], optional=True))
        self.add_number(self.DISTANCE, "Distance: reach of planes beyond their mapped extent, and of data from "
                                       "the section line (m)", 500.0, minimum=0.0)
        self.add_number(self.DEPTH, "Depth below the lowest ground point of each section (m)", 1000.0,
                        minimum=0.001)
        self.addParameter(QgsProcessingParameterEnum(
            self.PROJECTION, self.tr("Move point data onto the section"),
            [self.tr("along the strike of their plane"), self.tr("perpendicular to the section")], False, 0))
        self.add_number(self.SPACING, "Profile step (m; 0 = the DEM cell size)", 0.0, minimum=0.0, advanced=True)
        self.add_number(self.TICK, "Dip tick length in the map layers (m)", 100.0, minimum=0.001, advanced=True)
        self.add_number(self.SIGMA_XY, "Horizontal error of contact vertices, 1 sigma (m)", 5.0, minimum=0.0,
                        advanced=True)
        self.add_number(self.SIGMA_Z, "DEM elevation error, 1 sigma (m)", 2.0, minimum=0.0, advanced=True)
        self.add_number(self.DRAWS, "Monte Carlo draws (0 = no intervals)", 200, minimum=0, maximum=100000,
                        integer=True, advanced=True)
        self.add_number(self.SEED, "Random seed", 0, minimum=0, integer=True, advanced=True)
        for key, table, label, required in SINKS:
            kind = SOURCE_POINT if table.startswith("section_net_slip") else SOURCE_LINE
            self.addParameter(QgsProcessingParameterFeatureSink(key, self.tr(label), kind, None, not required, True))
        self.add_count_outputs(extra=(("N_SECTIONS", "Number of sections drawn"),
                                      ("N_FAULT_LINES", "Number of fault lines"),
                                      ("N_OFFSETS", "Number of apparent offsets"),
                                      ("N_UNIQUE", "Number of unique or over-determined net slips"),
                                      ("N_UNDER_DETERMINED", "Number of under-determined faults")),
                               quality=False)

    # -- reading ---------------------------------------------------------------------------
    def _optional_source(self, parameters, key, context, what):
        if parameters.get(key) is None:
            return None
        src = self.parameterAsSource(parameters, key, context)
        if src is None:
            return None
        if src.featureCount() == 0:
            raise QgsProcessingException(f"{what} is empty: it has no features")
        adapter.require_defined_crs(src.sourceCrs(), what)
        return src

    def _points(self, src, crs, context, feedback, fields, what, span):
        names = src.fields().names()
        for f in fields:
            if f not in names:
                raise QgsProcessingException(f"{what} has no field {f!r}; its fields are: {', '.join(names)}")
        wanted = [n for n in dict.fromkeys(fields + ["station_id", "trend", "plunge", "sense", "rake", "hole_id",
                                                     "total_depth_m", "target_fault"]) if n in names]
        fids, xy, values, skipped = adapter.read_points(src, crs, context, feedback, wanted, span)
        return fids, xy, values, skipped, names

    def compute(self, parameters, context, feedback):
        sink_keys = tuple(k for k, _, _, _ in SINKS)
        self.refuse_overwrite(parameters, context, sink_keys,
                              vector_inputs=(self.SECTIONS, self.PLANES, self.CONTACTS, self.BEDDING, self.STATIONS,
                                             self.BOREHOLES), raster_inputs=(self.DEM,))
        dem = self.parameterAsRasterLayer(parameters, self.DEM, context)
        if dem is None:
            raise QgsProcessingException(self.invalidRasterError(parameters, self.DEM))
        crs = adapter.require_crs(dem.crs(), "the DEM")
        band = self.band(parameters, self.BAND, context)
        sections = self.source(parameters, self.SECTIONS, context, "the section layer")
        adapter.require_defined_crs(sections.sourceCrs(), "the section layer")
        id_field = self.parameterAsString(parameters, self.ID_FIELD, context) or None
        self.require_field(sections, id_field, "the section layer", self.ID_FIELD)
        distance = self.parameterAsDouble(parameters, self.DISTANCE, context)
        depth = self.parameterAsDouble(parameters, self.DEPTH, context)
        projection = PROJECTIONS[self.parameterAsEnum(parameters, self.PROJECTION, context)]
        spacing = self.parameterAsDouble(parameters, self.SPACING, context) or None
        tick = self.parameterAsDouble(parameters, self.TICK, context)
        sigma_xy = self.parameterAsDouble(parameters, self.SIGMA_XY, context)
        sigma_z = self.parameterAsDouble(parameters, self.SIGMA_Z, context)
        draws = self.parameterAsInt(parameters, self.DRAWS, context)
        seed = self.parameterAsInt(parameters, self.SEED, context)
        atts = steps.sections.parse_marker_attitudes(
            self.parameterAsString(parameters, self.MARKER_ATTITUDES, context) or None)
        feedback.pushInfo(f"working CRS: {crs.authid() or crs.description()} (the DEM's); azimuths from its grid north")

        warnings = []
        sids, slines, skipped = adapter.read_lines(sections, crs, context, feedback, id_field, (0.0, 5.0))
        warnings += [f"the section layer feature {s}: empty geometry, skipped" for s in skipped]
        if not slines:
            raise QgsProcessingException("the section layer has no line geometries")
        lines = []
        for sid, parts in zip(sids, slines):
            if len(parts) > 1:
                warnings.append(f"the section layer section {sid}: a multi-part line; only its first part is used")
            lines.append(parts[0])
        allxy = np.concatenate([np.concatenate(p) for p in slines])

        faults = None
        psrc = self._optional_source(parameters, self.PLANES, context, "the plane layer")
        if psrc is not None:
            missing = [n for n in adapter.PLANE_NUMBER_FIELDS if n not in psrc.fields().names()]
            if missing:
                raise QgsProcessingException(f"the plane layer lacks the field(s) {', '.join(missing)} (PLANES)")
            if psrc.sourceCrs() != crs:
                raise QgsProcessingException(
                    f"the plane layer is in {psrc.sourceCrs().authid()} but the DEM is in {crs.authid()}: plane dip "
                    "directions are azimuths of their layer's grid; use planes fitted on this DEM")
            intervals = ("dip_lo95", "dip_hi95", "dip_dir_lo95", "dip_dir_hi95")
            pids, dd, dp, cen, verts, cols = adapter.read_planes(psrc, crs, context, feedback, (5.0, 10.0),
                                                                 optional=intervals)
            have = all(n in cols for n in intervals)
            faults = steps.PlaneSet(pids, dd, dp, cen, verts,
                                    (cols["dip_lo95"], cols["dip_hi95"]) if have else None,
                                    (cols["dip_dir_lo95"], cols["dip_dir_hi95"]) if have else None)
        contacts = None
        csrc = self._optional_source(parameters, self.CONTACTS, context, "the contact layer")
        if csrc is not None:
            marker_field = self.parameterAsString(parameters, self.MARKER_FIELD, context) or "marker_id"
            self.require_field(csrc, marker_field, "the contact layer", self.MARKER_FIELD)
            piece_field = self.parameterAsString(parameters, self.PIECE_FIELD, context) or None
            self.require_field(csrc, piece_field, "the contact layer", self.PIECE_FIELD)
            if piece_field is None and "piece_id" in csrc.fields().names():
                piece_field = "piece_id"
            marks, pieces, clines, w = read_contact_pieces(csrc, crs, context, feedback, marker_field, piece_field,
                                                           (10.0, 15.0))
            warnings += w
            unknown = sorted(set(atts) - set(marks))
            if unknown:
                raise QgsProcessingException(f"marker attitude given for {unknown[0]!r}, which is not a "
                                             f"{marker_field} value of the contact layer")
            if marks:
                contacts = steps.ContactSet(pieces, marks, Traces.from_lines(clines), atts)
        elif atts:
            raise QgsProcessingException("marker attitudes were given but no contact layer (CONTACTS)")

        def ids_of(fids, values, field):
            if field in values:
                return [str(f) if v is None else _label(v) for f, v in zip(fids, values[field])]
            return [str(f) for f in fids]

        bedding = None
        bsrc = self._optional_source(parameters, self.BEDDING, context, "the bedding layer")
        if bsrc is not None:
            fids, xy, values, skipped, _ = self._points(bsrc, crs, context, feedback, ["dip_dir", "dip"],
                                                        "the bedding layer", (15.0, 18.0))
            n = len(fids)
            bdd, bdp = _numbers(values["dip_dir"], n), _numbers(values["dip"], n)
            _check_angles("the bedding layer", fids, bdp, "dip", 0, 90)
            _check_angles("the bedding layer", fids, bdd, "dip_dir", 0, 360)
            bedding = steps.PointSet(ids_of(fids, values, "station_id"), xy, bdd, bdp)
        stations = None
        ssrc = self._optional_source(parameters, self.STATIONS, context, "the station layer")
        if ssrc is not None:
            fault_field = self.parameterAsString(parameters, self.STATION_FAULT_FIELD, context) or "fault_id"
            fids, xy, values, skipped, names = self._points(
                ssrc, crs, context, feedback, ["dip_dir", "dip"] + ([fault_field] if fault_field in
                                                                   ssrc.fields().names() else []),
                "the station layer", (18.0, 21.0))
            n = len(fids)
            sdd, sdp = _numbers(values["dip_dir"], n), _numbers(values["dip"], n)
            _check_angles("the station layer", fids, sdp, "dip", 0, 90)
            _check_angles("the station layer", fids, sdd, "dip_dir", 0, 360)
            lin = {}
            if all(c in names for c in ("trend", "plunge", "sense")):
                lin = {"trend": _numbers(values["trend"], n), "plunge": _numbers(values["plunge"], n),
                       "sense": [None if v is None else _label(v) for v in values["sense"]]}
            elif "rake" in names:
                lin = {"rake": _numbers(values["rake"], n)}
            else:
                warnings.append("the station layer has neither trend/plunge/sense nor rake fields: stations give no "
                                "slip direction")
            fault_ids = None
            if fault_field in values:
                fault_ids = ["" if v is None else _label(v) for v in values[fault_field]]
            else:
                warnings.append(f"the station layer has no field {fault_field!r}: stations are drawn but give no fault "
                                "a slip direction")
            stations = steps.PointSet(ids_of(fids, values, "station_id"), xy, sdd, sdp, fault_ids, **lin)
        holes = None
        hsrc = self._optional_source(parameters, self.BOREHOLES, context, "the borehole layer")
        if hsrc is not None:
            fids, xy, values, skipped, names = self._points(hsrc, crs, context, feedback, [], "the borehole layer",
                                                            (21.0, 24.0))
            n = len(fids)
            tr = np.nan_to_num(_numbers(values["trend"], n), nan=0.0) if "trend" in values else np.zeros(n)
            pl = _numbers(values["plunge"], n) if "plunge" in values else np.full(n, 90.0)
            pl = np.where(np.isfinite(pl), pl, 90.0)
            _check_angles("the borehole layer", fids, pl, "plunge", 0, 90)
            _check_angles("the borehole layer", fids, tr, "trend", 0, 360)
            td = _numbers(values["total_depth_m"], n) if "total_depth_m" in values else None
            tg = ([None if v is None else _label(v) for v in values["target_fault"]]
                  if "target_fault" in values else None)
            holes = steps.HoleSet(ids_of(fids, values, "hole_id"), xy, tr, pl, td, tg)

        margin = distance + adapter.dem_margin_m(adapter.raster_cell_size(dem), sigma_xy)
        grid = adapter.raster_window(dem, band, (*allxy.min(0), *allxy.max(0)), margin, "the section lines",
                                     feedback)
        self.check_canceled(feedback)
        result = steps.cross_sections(
            sids, lines, grid, faults=faults, contacts=contacts, bedding=bedding, stations=stations, holes=holes,
            distance_m=distance, depth_m=depth, projection=projection, spacing_m=spacing, sigma_xy_m=sigma_xy,
            sigma_z_m=sigma_z, draws=draws, seed=seed, tick_m=tick, progress=self.progress(feedback, 25.0, 90.0))
        self.push_warnings(feedback, warnings + result.warnings)
        xz_crs = QgsCoordinateReferenceSystem.fromWkt(steps.sections.SECTION_CRS_WKT)
        results = {}
        for key, table, _, _ in SINKS:
            out_crs = xz_crs if table.endswith("_xz") else crs
            dest, _ = adapter.write_table(self, parameters, key, context, feedback, result.tables[table], out_crs)
            if dest is not None:
                results[key] = dest
        s = result.summary
        results.update(N_SECTIONS=s["sections"], N_FAULT_LINES=s["fault_lines"], N_OFFSETS=s["offsets"],
                       N_UNIQUE=s["net_slip"]["unique"] + s["net_slip"]["over-determined"],
                       N_UNDER_DETERMINED=s["net_slip"]["under-determined"])
        return results

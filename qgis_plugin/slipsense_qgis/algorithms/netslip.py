"""Net slip from a table of marker separations (engine step ``net_slip``)."""
from qgis.core import (
    Qgis,
    QgsFeature,
    QgsProcessing,
    QgsProcessingException,
    QgsProcessingParameterFeatureSink,
    QgsProcessingParameterFeatureSource,
    QgsWkbTypes,
)

from .. import adapter
from ..adapter import Canceled
from ..compat import FAST_INSERT, SOURCE_ANY_GEOMETRY, _first
from ..engine import steps
from .base import SlipsenseAlgorithm

#: Any vector layer, also a table without geometry (a CSV); and the "no geometry" sink type.
#: (Version-dependent names: candidates for compat.py.)
SOURCE_ANY_VECTOR = _first((Qgis, "ProcessingSourceType.Vector"), (QgsProcessing, "TypeVector"))
WKB_NONE = _first((Qgis, "WkbType.NoGeometry"), (QgsWkbTypes, "NoGeometry"))

SEPARATION_HELP = (
    "<p><b>Separation table</b>: one row per measurement, fields named <tt>fault_id</tt>; "
    "<tt>observation</tt> = <i>strike</i> | <i>dip</i> | <i>vertical</i> | <i>horizontal</i> | "
    "<i>section AZ</i> | <i>line T/P</i> (the direction the separation is measured along: the "
    "fault's right-hand-rule strike, up its dip line, straight up, horizontally toward its dip "
    "direction, up the fault's line in a vertical section of azimuth AZ, or along the line of trend "
    "T / plunge P, degrees), or <i>rake</i> (a slip direction) or <i>piercing</i> (a piercing-point "
    "pair); <tt>marker_id</tt>, <tt>marker_dip_dir</tt>, <tt>marker_dip</tt> (degrees); "
    "<tt>fault_dip_dir</tt>, <tt>fault_dip</tt> (at least one row per fault); "
    "<tt>separation_m</tt> (from the footwall marker to the hanging-wall marker along the "
    "observation direction, signed: + along strike, up-dip, up, toward the dip direction, along "
    "the line); <tt>sigma_m</tt> (1 sigma, m); <tt>rake</tt>, <tt>rake_sigma</tt> (degrees, Aki "
    "&amp; Richards 1980) on rake rows; <tt>fw_x</tt>, <tt>fw_y</tt>, <tt>fw_z</tt>, "
    "<tt>hw_x</tt>, <tt>hw_y</tt>, <tt>hw_z</tt> (m) on piercing rows. A CSV without geometry is "
    "fine; a point layer puts each fault's result at its first row.</p>"
)

STATUS_HELP = (
    "<p><b>Status</b>: <i>unique</i> (exactly determined), <i>over-determined</i> (more "
    "constraints than needed: <tt>residual_m</tt> and <tt>misfit_ratio</tt> say how well they "
    "agree), <i>ill-conditioned</i> (the constraint lines — the markers' cutoff lines in the fault "
    "plane and the slip direction — lie within 10° of each other: the numbers are reported with "
    "wide intervals, and the family below too) or <i>under-determined</i> (one cutoff direction "
    "only, e.g. one marker and no slip direction): then no net slip is given (NULL), only the family "
    "of solutions: <tt>min_slip_m</tt> (the slip perpendicular to the cutoff, with its interval and "
    "<tt>min_slip_rake</tt>), <tt>dip_slip_only_m</tt> and <tt>strike_slip_only_m</tt> (the pure "
    "dip-slip and pure strike-slip members, signed). Components follow the conventions: "
    "<tt>strike_slip_m</tt> + sinistral, <tt>dip_slip_m</tt> + reverse, <tt>throw_m</tt> + "
    "hanging wall up, <tt>heave_m</tt> unsigned, <tt>horizontal_slip_m</tt> the map offset, "
    "<tt>slip_e/n/u</tt> the vector; <tt>sense</tt> in words.</p>"
)


def write_rows(alg, parameters, key, context, feedback, table, crs):
    """Write a geometry-less engine table to a 'no geometry' sink (attributes only)."""
    fields = adapter.table_fields(table)
    sink, dest_id = alg.parameterAsSink(parameters, key, context, fields, WKB_NONE, crs)
    if sink is None:
        raise QgsProcessingException(alg.invalidSinkError(parameters, key))
    n = 0
    for row in table.rows():
        if feedback is not None and feedback.isCanceled():
            raise Canceled()
        feat = QgsFeature(fields)
        feat.setAttributes([row[name] for name in table.columns])
        if not sink.addFeature(feat, FAST_INSERT):
            raise QgsProcessingException(alg.writeFeatureError(sink, parameters, key))
        n += 1
    return dest_id, n


class NetSlipAlgorithm(SlipsenseAlgorithm):
    INPUT = "INPUT"
    SIGMA = "SIGMA"
    SIGMA_MARKER = "SIGMA_MARKER"
    SIGMA_FAULT = "SIGMA_FAULT"
    SIGMA_RAKE = "SIGMA_RAKE"
    DRAWS = "DRAWS"
    SEED = "SEED"
    OUTPUT = "OUTPUT"

    GROUP = "Fault kinematics"
    GROUP_ID = "faultkinematics"
    SHOW_QUALITY = False
    HELP = (
        "<p>Net slip of faults from displaced planar markers (beds, dykes, veins). The slip vector "
        "u of the hanging wall relative to the footwall lies in the fault plane; a separation S "
        "measured from the footwall marker to the hanging-wall marker along any direction o gives "
        "one linear equation m·u = S (m·o), m the marker's normal (Xu et al. 2007, J. Struct. "
        "Geol. 29; Xu, Nieto-Samaniego &amp; Alaniz-Álvarez 2009, Tectonophysics 467). It leaves "
        "the slip free along the marker's cutoff line, so one marker alone never gives the net "
        "slip; two markers with non-parallel cutoffs do, and a slip direction (rake, e.g. from "
        "slickenlines) or piercing points (the same line pierced on both sides: u = hanging-wall "
        "point − footwall point, projected onto the fault) add constraints. All rows of a fault "
        "are solved together by weighted least squares. 95 % intervals come from Monte Carlo "
        "draws over the separations, the marker and fault attitudes and the rakes (reproducible "
        "for a seed).</p>"
        + SEPARATION_HELP + STATUS_HELP
    )

    def name(self):
        return "netslip"

    def displayName(self):
        return self.tr("Net slip from marker separations")

    def initAlgorithm(self, config=None):
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.INPUT, self.tr("Separation table (any vector layer or CSV)"), [SOURCE_ANY_VECTOR]))
        self.add_number(self.SIGMA, "Separation error where sigma_m is empty, 1 sigma (m; 0 = sigma_m required)",
                        0.0, minimum=0.0)
        self.add_number(self.SIGMA_MARKER, "Marker attitude error, 1 sigma per axis (degrees)", 2.0,
                        minimum=0.0, maximum=45.0)
        self.add_number(self.SIGMA_FAULT, "Fault attitude error, 1 sigma per axis (degrees)", 2.0,
                        minimum=0.0, maximum=45.0)
        self.add_number(self.SIGMA_RAKE, "Rake error where rake_sigma is empty, 1 sigma (degrees)", 10.0,
                        minimum=0.001, maximum=90.0)
        self.add_number(self.DRAWS, "Monte Carlo draws (0 = no intervals)", 200, minimum=0,
                        maximum=100000, integer=True, advanced=True)
        self.add_number(self.SEED, "Random seed", 0, minimum=0, integer=True, advanced=True)
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT, self.tr("Net slip"), SOURCE_ANY_GEOMETRY))
        self.add_count_outputs(extra=(("N_FAULTS", "Number of faults"),
                                      ("N_UNIQUE", "Number of unique solutions"),
                                      ("N_OVER_DETERMINED", "Number of over-determined solutions"),
                                      ("N_ILL_CONDITIONED", "Number of ill-conditioned solutions"),
                                      ("N_UNDER_DETERMINED", "Number of under-determined faults")),
                               quality=False)

    def compute(self, parameters, context, feedback):
        self.refuse_overwrite(parameters, context, (self.OUTPUT,), vector_inputs=(self.INPUT,))
        source = self.source(parameters, self.INPUT, context, "the separation table")
        names = source.fields().names()
        for need in ("fault_id", "observation"):
            if need not in names:
                raise QgsProcessingException(
                    f"the separation table has no field {need!r}; its fields are: {', '.join(names)}")
        has_geom = source.wkbType() not in (WKB_NONE,) and QgsWkbTypes.geometryType(source.wkbType()) == \
            QgsWkbTypes.PointGeometry
        crs = None
        if has_geom:
            crs = adapter.require_crs(source.sourceCrs(), "the separation table")
        fields = [f for f in steps.netslip.TABLE_FIELDS if f in names]
        rows = {"names": []}
        for f in fields:
            rows[f] = []
        xy = []
        request = adapter._request(crs, context) if crs is not None else None
        feats = source.getFeatures(request) if request is not None else source.getFeatures()
        for i, feat in enumerate(feats):
            if i % 200 == 0:
                self.check_canceled(feedback)
            rows["names"].append(f"the separation table feature {feat.id()}")
            for f in fields:
                rows[f].append(adapter._value(feat, f))
            if has_geom:
                g = feat.geometry()
                if g is None or g.isNull() or g.isEmpty():
                    has_geom = False
                else:
                    p = g.asMultiPoint()[0] if g.isMultipart() else g.asPoint()
                    xy.append((p.x(), p.y()))
        if has_geom:
            rows["xy"] = xy
        sigma = self.parameterAsDouble(parameters, self.SIGMA, context)
        result = steps.net_slip(
            rows, source="the separation table", sigma_m=sigma if sigma > 0 else None,
            sigma_marker_deg=self.parameterAsDouble(parameters, self.SIGMA_MARKER, context),
            sigma_fault_deg=self.parameterAsDouble(parameters, self.SIGMA_FAULT, context),
            rake_sigma_deg=self.parameterAsDouble(parameters, self.SIGMA_RAKE, context),
            draws=self.parameterAsInt(parameters, self.DRAWS, context),
            seed=self.parameterAsInt(parameters, self.SEED, context),
        )
        feedback.setProgress(80)
        self.push_warnings(feedback, result.warnings)
        table = result.tables["net_slip"]
        if table.geometry_type == "None":
            out_id, n = write_rows(self, parameters, self.OUTPUT, context, feedback, table,
                                   source.sourceCrs())
        else:
            out_id, n = adapter.write_table(self, parameters, self.OUTPUT, context, feedback, table, crs)
        st = result.summary["status"]
        return {self.OUTPUT: out_id, "N_FAULTS": n, "N_UNIQUE": st["unique"],
                "N_OVER_DETERMINED": st["over-determined"], "N_ILL_CONDITIONED": st["ill-conditioned"],
                "N_UNDER_DETERMINED": st["under-determined"]}

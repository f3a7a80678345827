"""Fault-slip data and kinematic axes (engine step ``fault_slip``)."""
from qgis.core import (
    QgsProcessingException,
    QgsProcessingParameterFeatureSink,
    QgsProcessingParameterFeatureSource,
    QgsProcessingParameterField,
)

from .. import adapter
from ..compat import FIELD_ANY, FIELD_NUMERIC, SOURCE_POINT
from ..engine import steps
from .base import SlipsenseAlgorithm


class FaultSlipAlgorithm(SlipsenseAlgorithm):
    INPUT = "INPUT"
    ID_FIELD = "ID_FIELD"
    DIP_DIR_FIELD = "DIP_DIR_FIELD"
    DIP_FIELD = "DIP_FIELD"
    TREND_FIELD = "TREND_FIELD"
    PLUNGE_FIELD = "PLUNGE_FIELD"
    RAKE_FIELD = "RAKE_FIELD"
    PITCH_FIELD = "PITCH_FIELD"
    PITCH_END_FIELD = "PITCH_END_FIELD"
    SENSE_FIELD = "SENSE_FIELD"
    FAULT_FIELD = "FAULT_FIELD"
    GROUP_FIELD = "GROUP_FIELD"
    MISFIT_TOL = "MISFIT_TOL"
    RESAMPLES = "RESAMPLES"
    SEED = "SEED"
    OUTPUT = "OUTPUT"
    OUTPUT_AXES = "OUTPUT_AXES"

    GROUP = "Fault kinematics"
    GROUP_ID = "faultkinematics"
    SHOW_QUALITY = False
    HELP = (
        "<p>Reads fault-slip data: at each station a fault plane (dip direction / dip fields, "
        "degrees) with a slip lineation given in one of three forms — the slickenline's trend and "
        "plunge (degrees, plunge 0–90 down; an axis whose end the sense picks), a rake (degrees "
        "−180 to 180, Aki &amp; Richards 1980: +90 reverse, −90 normal, 0 sinistral, 180 dextral), "
        "or a field pitch (0–90) measured in the plane from a named end of the strike line (a "
        "compass point such as N or SW, or an azimuth) — and a sense: <i>normal</i>, "
        "<i>reverse</i> (or <i>thrust</i>), <i>dextral</i>, <i>sinistral</i>, one dip-slip and one "
        "strike-slip word joined by a hyphen (<i>normal-dextral</i>), or the azimuth the hanging "
        "wall moved toward. The slip is the hanging wall's motion relative to the footwall; on a "
        "vertical fault the hanging wall is the block on the dip-direction side.</p>"
        "<p>A lineation up to the <i>misfit tolerance</i> (degrees, default 20: field readings of "
        "a plane and a line carry a few degrees of error each) off its plane is projected onto it; "
        "beyond it the station is rejected. A sense word picks the end of the lineation only where "
        "its component is clear (the lineation at least 10° from the strike line for normal/"
        "reverse, from the dip line for dextral/sinistral); otherwise the station is "
        "<i>ambiguous</i> and gets no slip. A sense that disagrees with the lineation or rake is "
        "flagged <i>contradicts</i>. Each datum's P, T and B axes follow Marrett &amp; "
        "Allmendinger (1990): T ∝ n + u, P ∝ n − u, B = n × u (n the normal into the hanging "
        "wall, u the slip). For each group (all data, or each value of a group field such as "
        "phase or fault_id) the consistent data are summed into the kinematic tensor of Marrett "
        "&amp; Allmendinger (1990), whose largest eigenvalue gives T, the smallest P; 95 % "
        "confidence cones (half-angles, degrees) come from a bootstrap of the data, reproducible "
        "for a seed. Kinematic axes are not stress axes.</p>"
        "<p>The station layer must be in a projected CRS in metres; its azimuths are taken as grid "
        "azimuths of that CRS.</p>"
        "<p><b>Output</b> <tt>fault_slip</tt> (station points): <tt>station_id</tt>, "
        "<tt>fault_id</tt>, <tt>group_id</tt>, <tt>dip_dir</tt>, <tt>dip</tt>, <tt>strike</tt>, "
        "<tt>trend</tt>/<tt>plunge</tt> of the hanging-wall motion (plunge + down, − up), "
        "<tt>rake</tt>, <tt>misfit_deg</tt>, <tt>sense_given</tt>, <tt>sense</tt> (from the rake, "
        "dominant component first), <tt>fault_type</tt>, <tt>status</tt> (consistent, contradicts, "
        "ambiguous or rejected, with the reason) and <tt>p_</tt>/<tt>t_</tt>/<tt>b_trend</tt>, "
        "<tt>_plunge</tt>. <b>Output</b> <tt>kinematic_axes</tt> (one point per group at its mean "
        "position): <tt>group_id</tt>, <tt>n_data</tt> (used), <tt>n_total</tt>, trend, plunge and "
        "<tt>_cone95</tt> of T, P and B, the eigenvalues, <tt>resamples</tt> and <tt>status</tt>.</p>"
    )

    FIELD_KEYS = ("ID_FIELD", "DIP_DIR_FIELD", "DIP_FIELD", "TREND_FIELD", "PLUNGE_FIELD", "RAKE_FIELD",
                  "PITCH_FIELD", "PITCH_END_FIELD", "SENSE_FIELD", "FAULT_FIELD", "GROUP_FIELD")

    def name(self):
        return "faultslip"

    def displayName(self):
        return self.tr("Fault-slip data and kinematic axes")

    def initAlgorithm(self, config=None):
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.INPUT, self.tr("Fault-slip stations (points)"), [SOURCE_POINT]))

        def field(key, label, default=None, numeric=False, optional=True):
            self.addParameter(QgsProcessingParameterField(
                key, self.tr(label), default, self.INPUT, FIELD_NUMERIC if numeric else FIELD_ANY,
                optional=optional))

        field(self.ID_FIELD, "Station id field (default: feature id)")
        # Optional with a default on purpose: QGIS 3.22 does not apply a field parameter's default
        # when the value is omitted (then a mandatory one is "missing"); compute() falls back to it.
        field(self.DIP_DIR_FIELD, "Fault dip direction field (degrees 0–360; default dip_dir)", "dip_dir", True)
        field(self.DIP_FIELD, "Fault dip field (degrees 0–90; default dip)", "dip", True)
        field(self.TREND_FIELD, "Slickenline trend field (degrees; with the plunge field)", None, True)
        field(self.PLUNGE_FIELD, "Slickenline plunge field (degrees 0–90 down)", None, True)
        field(self.RAKE_FIELD, "Rake field (degrees −180 to 180; instead of trend/plunge)", None, True)
        field(self.PITCH_FIELD, "Pitch field (degrees 0–90; instead of trend/plunge)", None, True)
        field(self.PITCH_END_FIELD, "Strike end of the pitch field (N, SW, ... or azimuth)")
        field(self.SENSE_FIELD, "Sense field (normal, reverse, dextral, sinistral, normal-dextral, ... or azimuth)")
        field(self.FAULT_FIELD, "Fault name field (default: fault_id if present)")
        field(self.GROUP_FIELD, "Group field: one set of population axes per value (default: all data)")
        self.add_number(self.MISFIT_TOL, "Misfit tolerance of lineation to plane (degrees)", 20.0,
                        minimum=0.0, maximum=90.0)
        self.add_number(self.RESAMPLES, "Bootstrap resamples for the 95 % cones (0 = none)", 500, minimum=0,
                        maximum=100000, integer=True, advanced=True)
        self.add_number(self.SEED, "Random seed", 0, minimum=0, integer=True, advanced=True)
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT, self.tr("Fault-slip data"), SOURCE_POINT))
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT_AXES, self.tr("Population kinematic axes"), SOURCE_POINT, None, True, True))
        self.add_count_outputs(extra=(("N_DATA", "Number of stations"),
                                      ("N_CONSISTENT", "Number of consistent stations"),
                                      ("N_CONTRADICTS", "Number of stations whose sense contradicts"),
                                      ("N_AMBIGUOUS", "Number of ambiguous stations"),
                                      ("N_REJECTED", "Number of rejected stations"),
                                      ("N_GROUPS", "Number of groups")), quality=False)

    def compute(self, parameters, context, feedback):
        self.refuse_overwrite(parameters, context, (self.OUTPUT, self.OUTPUT_AXES), vector_inputs=(self.INPUT,))
        source = self.source(parameters, self.INPUT, context, "the station layer")
        crs = adapter.require_crs(source.sourceCrs(), "the station layer")
        names = {}
        defaults = {self.DIP_DIR_FIELD: "dip_dir", self.DIP_FIELD: "dip"}  # as on the command line
        for key in self.FIELD_KEYS:
            names[key] = self.parameterAsString(parameters, key, context) or defaults.get(key)
            self.require_field(source, names[key], "the station layer", key)
        tp = bool(names[self.TREND_FIELD] or names[self.PLUNGE_FIELD])
        pitch = bool(names[self.PITCH_FIELD] or names[self.PITCH_END_FIELD])
        if tp + bool(names[self.RAKE_FIELD]) + pitch != 1:
            raise QgsProcessingException(
                "give the lineation in exactly one form: TREND_FIELD with PLUNGE_FIELD, RAKE_FIELD, or "
                "PITCH_FIELD with PITCH_END_FIELD")
        if tp and not (names[self.TREND_FIELD] and names[self.PLUNGE_FIELD]):
            raise QgsProcessingException("a lineation as trend/plunge needs both TREND_FIELD and PLUNGE_FIELD")
        if pitch and not (names[self.PITCH_FIELD] and names[self.PITCH_END_FIELD]):
            raise QgsProcessingException("a lineation as pitch needs both PITCH_FIELD and PITCH_END_FIELD "
                                         "(the strike end it is measured from)")
        if names[self.FAULT_FIELD] is None and steps.kinematics.DEFAULT_FAULT_FIELD in source.fields().names():
            names[self.FAULT_FIELD] = steps.kinematics.DEFAULT_FAULT_FIELD
        feedback.pushInfo(f"working CRS: {crs.authid() or crs.description()} (the station layer's); "
                          "azimuths from its grid north")

        wanted = list(dict.fromkeys(n for n in names.values() if n))
        fids, xy, values, skipped = adapter.read_points(source, crs, context, feedback, wanted, (0.0, 30.0))
        for s in skipped:
            feedback.pushWarning(f"station {s}: no single point geometry; skipped")
        if xy.shape[0] == 0:
            raise QgsProcessingException("the station layer has no point geometries")

        def col(key):
            return values[names[key]] if names[key] else None

        roles = {"dip_dir": self.DIP_DIR_FIELD, "dip": self.DIP_FIELD, "trend": self.TREND_FIELD,
                 "plunge": self.PLUNGE_FIELD, "rake": self.RAKE_FIELD, "pitch": self.PITCH_FIELD,
                 "pitch_from": self.PITCH_END_FIELD, "sense": self.SENSE_FIELD, "group": self.GROUP_FIELD}
        self.check_canceled(feedback)
        feedback.setProgress(40)
        result = steps.fault_slip(
            col(self.ID_FIELD) if names[self.ID_FIELD] else fids, col(self.DIP_DIR_FIELD), col(self.DIP_FIELD),
            feature_ids=fids, trend=col(self.TREND_FIELD), plunge=col(self.PLUNGE_FIELD), rake=col(self.RAKE_FIELD),
            pitch=col(self.PITCH_FIELD), pitch_from=col(self.PITCH_END_FIELD), sense=col(self.SENSE_FIELD),
            fault_ids=col(self.FAULT_FIELD), group_values=col(self.GROUP_FIELD), xy=xy,
            labels=[f"feature {f}" for f in fids],
            fields={r: names[k] for r, k in roles.items() if names[k]},
            misfit_tol_deg=self.parameterAsDouble(parameters, self.MISFIT_TOL, context),
            resamples=self.parameterAsInt(parameters, self.RESAMPLES, context),
            seed=self.parameterAsInt(parameters, self.SEED, context),
        )
        self.check_canceled(feedback)
        feedback.setProgress(80)
        self.push_warnings(feedback, result.warnings)
        out_id, n = adapter.write_table(self, parameters, self.OUTPUT, context, feedback,
                                        result.tables["fault_slip"], crs)
        results = {self.OUTPUT: out_id}
        if parameters.get(self.OUTPUT_AXES) is not None:
            axes_id, _ = adapter.write_table(self, parameters, self.OUTPUT_AXES, context, feedback,
                                             result.tables["kinematic_axes"], crs)
            results[self.OUTPUT_AXES] = axes_id
        st = result.summary["status"]
        results.update(N_DATA=n, N_CONSISTENT=st["consistent"], N_CONTRADICTS=st["contradicts"],
                       N_AMBIGUOUS=st["ambiguous"], N_REJECTED=st["rejected"], N_GROUPS=result.summary["groups"])
        feedback.pushInfo(f"{n} stations: " + ", ".join(f"{v} {k}" for k, v in st.items()))
        return results

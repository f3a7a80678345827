"""Stress inversion of fault-slip data (engine step ``stress_inversion``)."""
from qgis.core import (
    QgsProcessingException,
    QgsProcessingParameterBoolean,
    QgsProcessingParameterFeatureSink,
    QgsProcessingParameterFeatureSource,
    QgsProcessingParameterField,
)

from .. import adapter
from ..compat import FIELD_ANY, FIELD_NUMERIC, FLAG_ADVANCED, SOURCE_POINT, add_flags
from ..engine import steps
from .base import SlipsenseAlgorithm

STRESS_CAUTION = (
    "<p><b>Stress results are interpretations.</b> A palaeostress from fault-slip data rests on the "
    "Wallace–Bott assumption (slip parallel to the resolved shear) and on data of one stress phase; "
    "it must be reviewed by a qualified professional before it informs any decision.</p>"
)


def check_lineation(names, keys):
    """One lineation form (as on the command line); ``keys`` = (trend, plunge, rake, pitch, pitch end)."""
    trend, plunge, rake, pitch, end = (names[k] for k in keys)
    tp, pf = bool(trend or plunge), bool(pitch or end)
    if tp + bool(rake) + pf != 1:
        raise QgsProcessingException(
            "give the lineation in exactly one form: TREND_FIELD with PLUNGE_FIELD, RAKE_FIELD, or "
            "PITCH_FIELD with PITCH_END_FIELD")
    if tp and not (trend and plunge):
        raise QgsProcessingException("a lineation as trend/plunge needs both TREND_FIELD and PLUNGE_FIELD")
    if pf and not (pitch and end):
        raise QgsProcessingException("a lineation as pitch needs both PITCH_FIELD and PITCH_END_FIELD "
                                     "(the strike end it is measured from)")


def add_station_fields(alg, group=True):
    def field(key, label, default=None, numeric=False):
        alg.addParameter(QgsProcessingParameterField(
            key, alg.tr(label), default, alg.INPUT, FIELD_NUMERIC if numeric else FIELD_ANY, optional=True))

    field(alg.ID_FIELD, "Station id field (default: feature id)")
    # optional with a default: QGIS 3.22 does not apply a field default when the value is omitted
    field(alg.DIP_DIR_FIELD, "Fault dip direction field (degrees 0–360; default dip_dir)", "dip_dir", True)
    field(alg.DIP_FIELD, "Fault dip field (degrees 0–90; default dip)", "dip", True)
    field(alg.TREND_FIELD, "Slickenline trend field (degrees; with the plunge field)", None, True)
    field(alg.PLUNGE_FIELD, "Slickenline plunge field (degrees 0–90 down)", None, True)
    field(alg.RAKE_FIELD, "Rake field (degrees −180 to 180; instead of trend/plunge)", None, True)
    field(alg.PITCH_FIELD, "Pitch field (degrees 0–90; instead of trend/plunge)", None, True)
    field(alg.PITCH_END_FIELD, "Strike end of the pitch field (N, SW, ... or azimuth)")
    field(alg.SENSE_FIELD, "Sense field (normal, reverse, dextral, sinistral, normal-dextral, ... or azimuth)")
    if group:
        field(alg.GROUP_FIELD, "Group field: one inversion per value, e.g. phase (default: all data)")
    alg.add_number(alg.MISFIT_TOL, "Misfit tolerance of lineation to plane (degrees)", 20.0, minimum=0.0,
                   maximum=90.0)


def read_stations(alg, parameters, context, feedback, keys):
    """Station layer, field names, and the raw columns (the same inputs as the command line)."""
    source = alg.source(parameters, alg.INPUT, context, "the station layer")
    crs = adapter.require_crs(source.sourceCrs(), "the station layer")
    defaults = {alg.DIP_DIR_FIELD: "dip_dir", alg.DIP_FIELD: "dip"}
    names = {}
    for key in keys:
        names[key] = alg.parameterAsString(parameters, key, context) or defaults.get(key)
        alg.require_field(source, names[key], "the station layer", key)
    check_lineation(names, (alg.TREND_FIELD, alg.PLUNGE_FIELD, alg.RAKE_FIELD, alg.PITCH_FIELD, alg.PITCH_END_FIELD))
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

    roles = {"dip_dir": alg.DIP_DIR_FIELD, "dip": alg.DIP_FIELD, "trend": alg.TREND_FIELD,
             "plunge": alg.PLUNGE_FIELD, "rake": alg.RAKE_FIELD, "pitch": alg.PITCH_FIELD,
             "pitch_from": alg.PITCH_END_FIELD, "sense": alg.SENSE_FIELD}
    if hasattr(alg, "GROUP_FIELD"):
        roles["group"] = alg.GROUP_FIELD
    kw = dict(feature_ids=fids, trend=col(alg.TREND_FIELD), plunge=col(alg.PLUNGE_FIELD), rake=col(alg.RAKE_FIELD),
              pitch=col(alg.PITCH_FIELD), pitch_from=col(alg.PITCH_END_FIELD), sense=col(alg.SENSE_FIELD), xy=xy,
              labels=[f"feature {f}" for f in fids], fields={r: names[k] for r, k in roles.items() if names.get(k)},
              misfit_tol_deg=alg.parameterAsDouble(parameters, alg.MISFIT_TOL, context))
    ids = col(alg.ID_FIELD) if names[alg.ID_FIELD] else fids
    return crs, names, col, ids, kw


class StressInversionAlgorithm(SlipsenseAlgorithm):
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
    GROUP_FIELD = "GROUP_FIELD"
    MISFIT_TOL = "MISFIT_TOL"
    RESAMPLES = "RESAMPLES"
    SEED = "SEED"
    PLAIN = "PLAIN"
    OUTPUT = "OUTPUT"
    OUTPUT_MISFITS = "OUTPUT_MISFITS"

    GROUP = "Stress"
    GROUP_ID = "stress"
    SHOW_QUALITY = False
    FIELD_KEYS = ("ID_FIELD", "DIP_DIR_FIELD", "DIP_FIELD", "TREND_FIELD", "PLUNGE_FIELD", "RAKE_FIELD",
                  "PITCH_FIELD", "PITCH_END_FIELD", "SENSE_FIELD", "GROUP_FIELD")
    HELP = (
        "<p>Inverts fault-slip data (a plane, a slip lineation and a sense at each station, read as in "
        "<i>Fault-slip data and kinematic axes</i>) for the <b>reduced stress tensor</b>: the σ1, σ2, σ3 "
        "axes (trend/plunge, degrees) and the stress ratio φ = (σ2 − σ3)/(σ1 − σ3). Compression positive. "
        "Method: the linear least-squares inversion of Michael (1984, JGR 89) of the Wallace (1951) – Bott "
        "(1959) condition that slip parallels the resolved shear traction, refined by rescaling each datum "
        "by the shear the current tensor predicts on its plane, which removes Michael's assumption of equal "
        "shear on all faults (tick <i>plain Michael</i> to keep it; φ is then biased). 95 % confidence: "
        "bootstrap resampling of the data (Michael 1987), reproducible for a seed: cone half-angles of the "
        "axes (the 95th percentile of the resampled axes' angle to the best axis) and the 2.5–97.5 % range "
        "of φ. Per datum: the misfit angle between observed and predicted slip. The regime (NF, NS, SS, TS, "
        "TF or unknown) follows the World Stress Map plunge criteria of Zoback (1992); SHmax is the "
        "horizontal direction of largest normal stress of the full tensor (Lund &amp; Townend 2007). The "
        "right-dihedra method (Angelier &amp; Mechler 1977) gives an independent σ1 and σ3 with the score "
        "(fraction of data agreeing) and the angular radius of the best region.</p>"
        "<p>Fewer than 4 usable data, planes all parallel, or planes of too few orientations are "
        "<i>ill-posed</i>: no stress is given (NULL) and the reason is written. When many data misfit "
        "by more than 30° the data may mix stress phases: a warning and the flag <i>mixed phases?</i>; "
        "invert each phase separately with the group field. Quality: <i>good</i> for σ1 and σ3 cones "
        "≤ 15° and a mean misfit ≤ 20°, <i>fair</i> for ≤ 30° and ≤ 30°, else <i>poor</i>.</p>"
        "<p><b>Output</b> <tt>stress_axes</tt> (one point per group at its mean position): "
        "<tt>group_id</tt>, <tt>n_data</tt>, <tt>sigma1_trend</tt>, <tt>sigma1_plunge</tt>, "
        "<tt>sigma1_cone95</tt> (likewise 2, 3), <tt>phi</tt>, <tt>phi_lo95</tt>, <tt>phi_hi95</tt>, "
        "<tt>regime</tt>, <tt>regime_support</tt>, <tt>shmax_azimuth</tt> with its interval, misfit "
        "statistics, the right-dihedra fields <tt>rd_*</tt>, <tt>quality</tt>, <tt>reason</tt>, "
        "<tt>flag</tt>. <b>Output</b> <tt>stress_misfits</tt> (station points): <tt>misfit</tt>, "
        "<tt>predicted_rake</tt>, the reduced shear and normal stress, <tt>status</tt>, <tt>used</tt>.</p>"
        + STRESS_CAUTION
    )

    def name(self):
        return "stressinversion"

    def displayName(self):
        return self.tr("Stress inversion of fault-slip data")

    def initAlgorithm(self, config=None):
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.INPUT, self.tr("Fault-slip stations (points)"), [SOURCE_POINT]))
        add_station_fields(self)
        self.add_number(self.RESAMPLES, "Bootstrap resamples for the 95 % cones and phi interval (0 = none)", 1000,
                        minimum=0, maximum=100000, integer=True, advanced=True)
        self.add_number(self.SEED, "Random seed", 0, minimum=0, integer=True, advanced=True)
        p = QgsProcessingParameterBoolean(self.PLAIN, self.tr("Plain Michael (1984): assume equal shear on all "
                                                              "planes"), False, True)
        add_flags(p, FLAG_ADVANCED)
        self.addParameter(p)
        self.addParameter(QgsProcessingParameterFeatureSink(self.OUTPUT, self.tr("Stress axes"), SOURCE_POINT))
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT_MISFITS, self.tr("Misfit per datum"), SOURCE_POINT, None, True, True))
        self.add_count_outputs(extra=(("N_DATA", "Number of stations"), ("N_USED", "Number of usable stations"),
                                      ("N_GROUPS", "Number of groups"),
                                      ("N_ILL_POSED", "Number of groups without a stress (ill-posed)")),
                               quality=False)

    def compute(self, parameters, context, feedback):
        self.refuse_overwrite(parameters, context, (self.OUTPUT, self.OUTPUT_MISFITS), vector_inputs=(self.INPUT,))
        crs, names, col, ids, kw = read_stations(self, parameters, context, feedback, self.FIELD_KEYS)
        self.check_canceled(feedback)
        feedback.setProgress(40)
        result = steps.stress_inversion(
            ids, col(self.DIP_DIR_FIELD), col(self.DIP_FIELD), group_values=col(self.GROUP_FIELD),
            resamples=self.parameterAsInt(parameters, self.RESAMPLES, context),
            seed=self.parameterAsInt(parameters, self.SEED, context),
            refine=not self.parameterAsBool(parameters, self.PLAIN, context), **kw)
        self.check_canceled(feedback)
        feedback.setProgress(80)
        self.push_warnings(feedback, result.warnings)
        out_id, n_groups = adapter.write_table(self, parameters, self.OUTPUT, context, feedback,
                                               result.tables["stress_axes"], crs)
        results = {self.OUTPUT: out_id}
        if parameters.get(self.OUTPUT_MISFITS) is not None:
            mis_id, _ = adapter.write_table(self, parameters, self.OUTPUT_MISFITS, context, feedback,
                                            result.tables["stress_misfits"], crs)
            results[self.OUTPUT_MISFITS] = mis_id
        groups = result.summary["groups"]
        for g, s in groups.items():
            if s.get("quality") == "ill-posed":
                feedback.pushInfo(f"group {g}: ill-posed")
            else:
                feedback.pushInfo(f"group {g}: sigma1 {s['sigma1']}, sigma2 {s['sigma2']}, sigma3 {s['sigma3']}, "
                                  f"phi {s['phi']}, regime {s['regime']}, quality {s['quality']}")
        results.update(N_DATA=result.summary["data"], N_USED=result.summary["usable"], N_GROUPS=n_groups,
                       N_ILL_POSED=sum(1 for s in groups.values() if s.get("quality") == "ill-posed"))
        return results

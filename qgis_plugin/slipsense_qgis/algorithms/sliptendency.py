"""Slip and dilation tendency of mapped faults in a stress state (engine step ``slip_tendency``)."""
import math

import numpy as np
from qgis.core import (
    QgsProcessingException,
    QgsProcessingParameterEnum,
    QgsProcessingParameterFeatureSink,
    QgsProcessingParameterFeatureSource,
    QgsProcessingParameterField,
    QgsProcessingParameterString,
    QgsWkbTypes,
)

from .. import adapter
from ..compat import FIELD_ANY, FIELD_NUMERIC, SOURCE_ANY_GEOMETRY, SOURCE_POINT
from ..engine import steps
from .base import SlipsenseAlgorithm

STRESS_SOURCES = (
    "SHmax azimuth and gradients (MPa/km) at a depth",
    "principal magnitudes (MPa) and axes",
    "a stress inversion, magnitudes at the frictional limit (Sv and pore-pressure gradients)",
    "a stress inversion, with given sigma1, sigma3 and pore pressure (MPa)",
)
REGIMES = ("(no check)", "NF", "SS", "TF")

REACTIVATION_CAUTION = (
    "<p><b>Reactivation screening is not a hazard assessment.</b> The stress, the friction and the "
    "pore pressure are assumptions; a high slip tendency marks a fault for closer study, a low one "
    "does not show that it is safe. Results must be reviewed by a qualified professional under "
    "local regulation.</p>"
)


def _num(v):
    if v is None:
        return math.nan
    try:
        return float(v)
    except (TypeError, ValueError):
        return math.nan


class SlipTendencyAlgorithm(SlipsenseAlgorithm):
    PLANES = "PLANES"
    ID_FIELD = "ID_FIELD"
    DIP_DIR_FIELD = "DIP_DIR_FIELD"
    DIP_FIELD = "DIP_FIELD"
    STRESS = "STRESS"
    SHMAX_AZIMUTH = "SHMAX_AZIMUTH"
    REGIME = "REGIME"
    SV_GRADIENT = "SV_GRADIENT"
    SHMAX_GRADIENT = "SHMAX_GRADIENT"
    SHMIN_GRADIENT = "SHMIN_GRADIENT"
    PP_GRADIENT = "PP_GRADIENT"
    DEPTH = "DEPTH"
    DEPTH_FIELD = "DEPTH_FIELD"
    SIGMA1 = "SIGMA1"
    SIGMA2 = "SIGMA2"
    SIGMA3 = "SIGMA3"
    SIGMA1_TREND = "SIGMA1_TREND"
    SIGMA1_PLUNGE = "SIGMA1_PLUNGE"
    SIGMA3_TREND = "SIGMA3_TREND"
    SIGMA3_PLUNGE = "SIGMA3_PLUNGE"
    PORE_PRESSURE = "PORE_PRESSURE"
    INVERSION = "INVERSION"
    GROUP_NAME = "GROUP_NAME"
    FRICTION = "FRICTION"
    COHESION = "COHESION"
    NEAR_FAILURE = "NEAR_FAILURE"
    OUTPUT = "OUTPUT"

    GROUP = "Stress"
    GROUP_ID = "stress"
    SHOW_QUALITY = False
    HELP = (
        "<p>Reactivation screening of mapped faults: for every plane of a layer with dip direction and "
        "dip fields (fitted trace planes, along-trace windows, measured planes) the normal stress "
        "σn and shear stress τ (MPa, compression positive), the slip tendency τ/σn′ (Morris, Ferrill "
        "&amp; Henderson 1996), the dilation tendency (σ1 − σn)/(σ1 − σ3) (Ferrill et al. 1999), the "
        "pore-pressure increase that brings the plane to Coulomb failure τ = c + μσn′ (MPa; ≤ 0: at "
        "failure now), the predicted slip direction as a rake (Wallace–Bott) and a flag: <i>near "
        "failure</i> (shear ≥ 0.8 of the frictional strength), <i>at failure</i>, <i>tensile</i> "
        "(σn′ ≤ 0). σn′ = σn − pore pressure. Friction μ defaults to 0.6 (Byerlee 1978: 0.6–0.85).</p>"
        "<p><b>Stress</b>, one of: (1) SHmax azimuth with Sv, SHmax, Shmin and pore-pressure gradients "
        "(MPa/km, zero at the surface; the regime, optional, is checked against their order) at a depth "
        "(m below the ground surface, for all planes or from a field): slip and dilation tendency do not "
        "depend on the depth, the stresses in MPa do; (2) principal magnitudes σ1 ≥ σ2 ≥ σ3 (total, MPa), "
        "the σ1 and σ3 axes (trend/plunge, degrees, perpendicular) and the pore pressure (MPa); (3) the "
        "axes and φ of a <i>Stress inversion</i> group, with magnitudes at the frictional limit: the axis "
        "nearest vertical carries Sv and (σ1 − Pp)/(σ3 − Pp) = (√(μ²+1) + μ)² (Jaeger &amp; Cook 1979), "
        "so optimally oriented planes are exactly at failure; or (4) the inversion's axes and φ with "
        "given σ1, σ3 and pore pressure. Azimuths are from grid north of the plane layer's CRS.</p>"
        "<p><b>Output</b> <tt>slip_tendency</tt> (the input geometries): <tt>plane_id</tt>, "
        "<tt>dip_dir</tt>, <tt>dip</tt>, <tt>depth_m</tt>, <tt>sigma1_mpa</tt>, <tt>sigma2_mpa</tt>, "
        "<tt>sigma3_mpa</tt>, <tt>pore_pressure_mpa</tt>, <tt>sigma_n_mpa</tt>, <tt>tau_mpa</tt>, "
        "<tt>sigma_n_eff_mpa</tt>, <tt>slip_tendency</tt>, <tt>dilation_tendency</tt>, "
        "<tt>dp_to_failure_mpa</tt>, <tt>predicted_rake</tt>, <tt>predicted_sense</tt>, "
        "<tt>friction</tt>, <tt>flag</tt>. Style the layer by <tt>slip_tendency</tt> to map it.</p>"
        + REACTIVATION_CAUTION
    )

    def name(self):
        return "sliptendency"

    def displayName(self):
        return self.tr("Slip and dilation tendency of faults")

    def initAlgorithm(self, config=None):
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.PLANES, self.tr("Planes (lines or points with dip direction and dip fields)"), [SOURCE_ANY_GEOMETRY]))

        def field(key, label, default=None, numeric=True):
            self.addParameter(QgsProcessingParameterField(
                key, self.tr(label), default, self.PLANES, FIELD_NUMERIC if numeric else FIELD_ANY, optional=True))

        field(self.ID_FIELD, "Plane id field (default trace_id / plane_id / station_id / fault_id, else feature id)",
              numeric=False)
        field(self.DIP_DIR_FIELD, "Dip direction field (degrees; default dip_dir)", "dip_dir")
        field(self.DIP_FIELD, "Dip field (degrees; default dip)", "dip")
        self.addParameter(QgsProcessingParameterEnum(self.STRESS, self.tr("Stress given as"), list(STRESS_SOURCES),
                                                     False, 0))
        self.add_number(self.SHMAX_AZIMUTH, "SHmax azimuth (degrees)", None, minimum=-360.0, maximum=720.0,
                        optional=True)
        self.addParameter(QgsProcessingParameterEnum(self.REGIME, self.tr("Regime check (gradients)"), list(REGIMES),
                                                     False, 0, True))
        for key, label in ((self.SV_GRADIENT, "Sv gradient (MPa/km)"), (self.SHMAX_GRADIENT, "SHmax gradient (MPa/km)"),
                           (self.SHMIN_GRADIENT, "Shmin gradient (MPa/km)"),
                           (self.PP_GRADIENT, "Pore-pressure gradient (MPa/km; hydrostatic about 10)")):
            self.add_number(key, label, None, optional=True)
        self.add_number(self.DEPTH, "Depth below the ground surface for all planes (m; with gradients)", None,
                        minimum=0.0, optional=True)
        field(self.DEPTH_FIELD, "Depth field (m below the surface; instead of one depth)")
        for key, label in ((self.SIGMA1, "sigma1 (MPa)"), (self.SIGMA2, "sigma2 (MPa)"), (self.SIGMA3, "sigma3 (MPa)"),
                           (self.SIGMA1_TREND, "sigma1 trend (degrees)"), (self.SIGMA1_PLUNGE, "sigma1 plunge (degrees)"),
                           (self.SIGMA3_TREND, "sigma3 trend (degrees)"), (self.SIGMA3_PLUNGE, "sigma3 plunge (degrees)"),
                           (self.PORE_PRESSURE, "Pore pressure (MPa; 0 for dry rock)")):
            self.add_number(key, label, None, optional=True)
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.INVERSION, self.tr("Stress inversion result (stress_axes layer)"), [SOURCE_POINT], None, True))
        self.addParameter(QgsProcessingParameterString(
            self.GROUP_NAME, self.tr("Group of the inversion result (when it has several)"), None, False, True))
        self.add_number(self.FRICTION, "Friction coefficient of the faults", 0.6, minimum=0.01, maximum=5.0)
        self.add_number(self.COHESION, "Cohesion (MPa)", 0.0, minimum=0.0, advanced=True)
        self.add_number(self.NEAR_FAILURE, "Flag 'near failure' at this fraction of the frictional strength", 0.8,
                        minimum=0.01, maximum=1.0, advanced=True)
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT, self.tr("Slip tendency"), SOURCE_ANY_GEOMETRY))
        self.add_count_outputs(extra=(("N_PLANES", "Number of planes"), ("N_EVALUATED", "Number of planes evaluated"),
                                      ("N_AT_FAILURE", "Number of planes at failure"),
                                      ("N_NEAR_FAILURE", "Number of planes near failure")), quality=False)

    def _opt(self, parameters, key, context):
        if parameters.get(key) is None:
            return None
        return self.parameterAsDouble(parameters, key, context)

    def _inversion_row(self, parameters, context, feedback, crs):
        src = self.source(parameters, self.INVERSION, context, "the inversion layer")
        need = ["sigma1_trend", "sigma1_plunge", "sigma3_trend", "sigma3_plunge", "phi"]
        for n in need:
            self.require_field(src, n, "the inversion layer", self.INVERSION)
        if src.sourceCrs() != crs:
            raise QgsProcessingException(
                f"the inversion layer is in {src.sourceCrs().authid()} but the planes are in {crs.authid()}: "
                "stress axes and dip directions must share one grid north")
        names = need + (["group_id"] if "group_id" in src.fields().names() else [])
        fids, _, values, _ = adapter.read_points(src, crs, context, feedback, names, (0.0, 5.0))
        groups = [str(g) for g in values["group_id"]] if "group_id" in values else [str(f) for f in fids]
        want = self.parameterAsString(parameters, self.GROUP_NAME, context) or None
        if want is None:
            if len(groups) != 1:
                raise QgsProcessingException(f"the inversion layer has {len(groups)} stress groups {groups}: "
                                             "choose one (GROUP_NAME)")
            k = 0
        elif want not in groups:
            raise QgsProcessingException(f"the inversion layer has no group {want!r}; it has {groups}")
        else:
            k = groups.index(want)
        row = {n: _num(values[n][k]) for n in need}
        row["group_id"] = groups[k]
        if not math.isfinite(row["phi"]):
            raise QgsProcessingException(f"group {groups[k]!r} of the inversion has no stress (ill-posed): "
                                         "choose another group")
        return row

    def _read_planes(self, source, crs, context, feedback, fields):
        from qgis.core import QgsFeatureRequest

        point = QgsWkbTypes.geometryType(source.wkbType()) == QgsWkbTypes.PointGeometry
        kind = "Point" if point else "MultiLineString"
        fids, geoms, values = [], [], {n: [] for n in fields}
        req = QgsFeatureRequest().setDestinationCrs(crs, context.transformContext())
        for i, f in enumerate(source.getFeatures(req)):
            if feedback.isCanceled():
                raise adapter.Canceled()
            g = f.geometry()
            if g is None or g.isNull() or g.isEmpty():
                feedback.pushWarning(f"feature {f.id()}: empty geometry, skipped")
                continue
            if point:
                pts = g.asMultiPoint() if g.isMultipart() else [g.asPoint()]
                item = np.array([pts[0].x(), pts[0].y()])
            else:
                lines = g.asMultiPolyline() if g.isMultipart() else [g.asPolyline()]
                item = [np.array([[p.x(), p.y()] for p in line], dtype=float).reshape(-1, 2) for line in lines]
            fids.append(f.id())
            geoms.append(item)
            for n in fields:
                v = f[n]
                values[n].append(None if v is None or (hasattr(v, "isNull") and v.isNull()) else v)
        if not fids:
            raise QgsProcessingException("the plane layer has no usable geometries")
        return kind, fids, geoms, values

    def compute(self, parameters, context, feedback):
        self.refuse_overwrite(parameters, context, (self.OUTPUT,), vector_inputs=(self.PLANES, self.INVERSION))
        source = self.source(parameters, self.PLANES, context, "the plane layer")
        crs = adapter.require_crs(source.sourceCrs(), "the plane layer")
        if QgsWkbTypes.geometryType(source.wkbType()) not in (QgsWkbTypes.PointGeometry, QgsWkbTypes.LineGeometry):
            raise QgsProcessingException("the plane layer must hold lines or points")
        names = {}
        for key, default in ((self.ID_FIELD, None), (self.DIP_DIR_FIELD, "dip_dir"), (self.DIP_FIELD, "dip"),
                             (self.DEPTH_FIELD, None)):
            names[key] = self.parameterAsString(parameters, key, context) or default
            self.require_field(source, names[key], "the plane layer", key)
        mode = self.parameterAsEnum(parameters, self.STRESS, context)
        opt = {k: self._opt(parameters, k, context) for k in (
            self.SHMAX_AZIMUTH, self.SV_GRADIENT, self.SHMAX_GRADIENT, self.SHMIN_GRADIENT, self.PP_GRADIENT,
            self.DEPTH, self.SIGMA1, self.SIGMA2, self.SIGMA3, self.SIGMA1_TREND, self.SIGMA1_PLUNGE,
            self.SIGMA3_TREND, self.SIGMA3_PLUNGE, self.PORE_PRESSURE)}
        friction = self.parameterAsDouble(parameters, self.FRICTION, context)
        regime_i = self.parameterAsEnum(parameters, self.REGIME, context) if parameters.get(self.REGIME) is not None else 0
        spec = {"friction": friction}

        def axis(t, p):
            return None if opt[t] is None or opt[p] is None else (opt[t], opt[p])

        if mode == 0:
            spec.update(shmax_azimuth=opt[self.SHMAX_AZIMUTH], sv_gradient=opt[self.SV_GRADIENT],
                        shmax_gradient=opt[self.SHMAX_GRADIENT], shmin_gradient=opt[self.SHMIN_GRADIENT],
                        pore_pressure_gradient=opt[self.PP_GRADIENT], regime=REGIMES[regime_i] if regime_i else None)
        elif mode == 1:
            spec.update(sigma1_mpa=opt[self.SIGMA1], sigma2_mpa=opt[self.SIGMA2], sigma3_mpa=opt[self.SIGMA3],
                        sigma1_axis=axis(self.SIGMA1_TREND, self.SIGMA1_PLUNGE),
                        sigma3_axis=axis(self.SIGMA3_TREND, self.SIGMA3_PLUNGE),
                        pore_pressure_mpa=opt[self.PORE_PRESSURE])
        else:
            if parameters.get(self.INVERSION) is None:
                raise QgsProcessingException("this stress needs a stress inversion result (INVERSION)")
            spec["inverted"] = self._inversion_row(parameters, context, feedback, crs)
            if mode == 2:
                spec.update(sv_gradient=opt[self.SV_GRADIENT], pore_pressure_gradient=opt[self.PP_GRADIENT])
                if spec["sv_gradient"] is None or spec["pore_pressure_gradient"] is None:
                    raise QgsProcessingException("the frictional limit needs the Sv and pore-pressure gradients "
                                                 "(SV_GRADIENT, PP_GRADIENT, MPa/km)")
            else:
                spec.update(sigma1_mpa=opt[self.SIGMA1], sigma3_mpa=opt[self.SIGMA3],
                            pore_pressure_mpa=opt[self.PORE_PRESSURE])
                if None in (spec["sigma1_mpa"], spec["sigma3_mpa"], spec["pore_pressure_mpa"]):
                    raise QgsProcessingException("give sigma1, sigma3 and the pore pressure (SIGMA1, SIGMA3, "
                                                 "PORE_PRESSURE, MPa)")
        state = steps.stress_state(**spec)
        feedback.pushInfo(f"working CRS: {crs.authid() or crs.description()} (the plane layer's); "
                          f"stress: {state.description}")

        id_names = [n for n in (names[self.ID_FIELD], *steps.stress.PLANE_ID_FIELDS, "window_no")
                    if n and n in source.fields().names()]
        fields = list(dict.fromkeys(id_names + [names[self.DIP_DIR_FIELD], names[self.DIP_FIELD]]
                                    + ([names[self.DEPTH_FIELD]] if names[self.DEPTH_FIELD] else [])))
        kind, fids, geoms, values = self._read_planes(source, crs, context, feedback, fields)
        ids = steps.stress.plane_labels(values, fids, names[self.ID_FIELD])
        if names[self.DEPTH_FIELD] and opt[self.DEPTH] is not None:
            raise QgsProcessingException("give the depth one way: DEPTH or DEPTH_FIELD")
        depth = opt[self.DEPTH]
        if names[self.DEPTH_FIELD]:
            depth = np.array([_num(v) for v in values[names[self.DEPTH_FIELD]]])
        if state.depth_dependent and depth is None:
            raise QgsProcessingException(
                "this stress grows with depth: give the depth of interest below the ground surface (DEPTH, m) or "
                "a depth field; slip and dilation tendency do not depend on it, the stresses in MPa do")
        self.check_canceled(feedback)
        feedback.setProgress(40)
        result = steps.slip_tendency(
            ids, np.array([_num(v) for v in values[names[self.DIP_DIR_FIELD]]]),
            np.array([_num(v) for v in values[names[self.DIP_FIELD]]]), state, depth_m=depth, friction=friction,
            cohesion_mpa=self.parameterAsDouble(parameters, self.COHESION, context),
            near_failure=self.parameterAsDouble(parameters, self.NEAR_FAILURE, context), geometry_type=kind,
            geometries=geoms)
        self.check_canceled(feedback)
        feedback.setProgress(80)
        self.push_warnings(feedback, result.warnings)
        out_id, n = adapter.write_table(self, parameters, self.OUTPUT, context, feedback,
                                        result.tables["slip_tendency"], crs)
        fl = result.summary["flags"]
        return {self.OUTPUT: out_id, "N_PLANES": n, "N_EVALUATED": result.summary["evaluated"],
                "N_AT_FAILURE": fl["at failure"], "N_NEAR_FAILURE": fl["near failure"]}

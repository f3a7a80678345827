"""What every slipsense processing algorithm shares: help text, checks, progress and cancel,
engine errors as QgsProcessingException, warnings to the log.
"""
from qgis.core import (
    QgsProcessingAlgorithm,
    QgsProcessingException,
    QgsProcessingOutputNumber,
    QgsProcessingParameterBand,
    QgsProcessingParameterNumber,
)
from qgis.PyQt.QtCore import QCoreApplication

from .. import adapter
from ..adapter import Canceled
from ..compat import FLAG_ADVANCED, FLAG_OPTIONAL, NUMBER_DOUBLE, NUMBER_INTEGER, add_flags
from ..engine import ORIGIN, SlipsenseError
from ..engine import __version__ as ENGINE_VERSION

CONVENTIONS = (
    "<p><b>Conventions.</b> Planes are given as dip direction / dip in degrees (dip direction "
    "0–360 clockwise from north, dip 0–90); strike follows the right-hand rule (strike = dip "
    "direction − 90). Azimuths are measured from <i>grid north</i> of the working CRS, which must "
    "be projected with metre units. Lengths and elevations are in metres; x = east, y = north, "
    "z = up.</p>"
)

QUALITY = (
    "<p><b>Quality</b> of each plane is one of <i>good</i>, <i>fair</i>, <i>poor</i> or "
    "<i>ill-posed</i> (the field <tt>reason</tt> says why). Ill-posed planes (fewer than three "
    "usable points, nearly collinear points — e.g. a straight trace on planar ground — relief not "
    "clearly above the DEM error, or a Monte Carlo dip interval too wide) carry no orientation "
    "(NULL). Good needs the coplanarity M &gt; 4 and collinearity K &lt; 0.8 of Fernández "
    "(2005) and narrow 95 % intervals.</p>"
)

CAUTION = (
    "<p><b>Caution.</b> Results are interpretations for screening. They must be checked by a "
    "qualified professional against local codes and licensed practice before they inform hazard, "
    "slope, foundation or drilling decisions.</p>"
)

QUALITY_OUTPUTS = (("N_GOOD", "good"), ("N_FAIR", "fair"), ("N_POOR", "poor"), ("N_ILL_POSED", "ill-posed"))


class SlipsenseAlgorithm(QgsProcessingAlgorithm):
    """Base of the slipsense algorithms (subclasses set the class constants and two methods)."""

    GROUP = "Fault geometry"
    GROUP_ID = "faultgeometry"
    HELP = ""  # what the algorithm computes (HTML); conventions, quality and caution are appended
    SHOW_QUALITY = True

    def tr(self, text):
        return QCoreApplication.translate("slipsense", text)

    def createInstance(self):
        return type(self)()

    def group(self):
        return self.tr(self.GROUP)

    def groupId(self):
        return self.GROUP_ID

    def shortHelpString(self):
        return self.tr(self.HELP + CONVENTIONS + (QUALITY if self.SHOW_QUALITY else "") + CAUTION)

    # -- parameter helpers --------------------------------------------------------------------

    def add_number(self, key, label, default, minimum=None, maximum=None, integer=False,
                   advanced=False, optional=False):
        p = QgsProcessingParameterNumber(
            key, self.tr(label), NUMBER_INTEGER if integer else NUMBER_DOUBLE, default, optional
        )
        if minimum is not None:
            p.setMinimum(minimum)
        if maximum is not None:
            p.setMaximum(maximum)
        if advanced:
            add_flags(p, FLAG_ADVANCED)
        self.addParameter(p)
        return p

    def add_band(self, key, parent, label="DEM band"):
        # Optional on purpose: QGIS 3.22 does not apply a band parameter's default when the value
        # is omitted (qgis_process then calls the band missing); optional + default 1 works.
        p = QgsProcessingParameterBand(key, self.tr(label), 1, parent, True)
        add_flags(p, FLAG_OPTIONAL)
        self.addParameter(p)
        return p

    def add_count_outputs(self, extra=(), quality=True):
        names = list(QUALITY_OUTPUTS) if quality else []
        for key, word in names:
            self.addOutput(QgsProcessingOutputNumber(key, self.tr(f"Number of {word} planes")))
        for key, label in extra:
            self.addOutput(QgsProcessingOutputNumber(key, self.tr(label)))

    # -- processing helpers -------------------------------------------------------------------

    def source(self, parameters, key, context, what):
        src = self.parameterAsSource(parameters, key, context)
        if src is None:
            raise QgsProcessingException(self.invalidSourceError(parameters, key))
        if src.featureCount() == 0:
            raise QgsProcessingException(f"{what} is empty: it has no features")
        return src

    def require_field(self, source, name, what, key):
        if name and source.fields().indexOf(name) < 0:
            raise QgsProcessingException(
                f"{what} has no field {name!r} ({key}); its fields are: {', '.join(source.fields().names())}"
            )
        return name

    def band(self, parameters, key, context):
        band = self.parameterAsInt(parameters, key, context)
        return band if band and band > 0 else 1

    def refuse_overwrite(self, parameters, context, outputs, vector_inputs=(), raster_inputs=()):
        """Fail when an output would replace (or wipe the file of) an input layer.

        Writing into the input's own GeoPackage table drops it before it is read (QGIS 3.22 then
        writes an empty table); a plain ``file.gpkg`` destination re-creates the whole file.
        """
        ins = []
        for key in vector_inputs:
            if parameters.get(key) is None:
                continue
            loc = adapter.layer_location(self.parameterAsVectorLayer(parameters, key, context))
            if loc:
                ins.append((key, loc))
        for key in raster_inputs:
            if parameters.get(key) is None:
                continue
            loc = adapter.layer_location(self.parameterAsRasterLayer(parameters, key, context))
            if loc:
                ins.append((key, loc))
        seen = {}
        for out in outputs:
            if parameters.get(out) is None:
                continue
            dest = self.parameterAsOutputLayer(parameters, out, context)
            loc = adapter.output_location(dest)
            if loc is None:
                continue
            path, table, whole = loc
            for key, (ipath, iname) in ins:
                if ipath != path:
                    continue
                if whole:
                    raise QgsProcessingException(
                        f"{out} would re-create the file {dest!r}, which holds the input {key}; "
                        "write to another file, or to a new table of it with "
                        "ogr:dbname='file.gpkg' table=\"name\""
                    )
                if iname is None or iname == table:
                    raise QgsProcessingException(
                        f"{out} is the same layer as the input {key} ({dest}); choose another "
                        "output table or file"
                    )
            if (path, table) in seen:
                raise QgsProcessingException(f"{out} and {seen[(path, table)]} are the same layer ({dest})")
            seen[(path, table)] = out

    def progress(self, feedback, lo, hi):
        """A ``progress(fraction)`` callback for the engine mapping to ``lo``–``hi`` percent.

        It raises :class:`Canceled` once the user cancels, which stops the engine step.
        """

        def report(fraction):
            feedback.setProgress(lo + (hi - lo) * float(fraction))
            if feedback.isCanceled():
                raise Canceled()

        return report

    def check_canceled(self, feedback):
        if feedback.isCanceled():
            raise Canceled()

    def push_warnings(self, feedback, warnings, limit=200):
        for w in warnings[:limit]:
            feedback.pushWarning(w)
        if len(warnings) > limit:
            feedback.pushWarning(f"... and {len(warnings) - limit} more warnings")

    def processAlgorithm(self, parameters, context, feedback):
        feedback.pushInfo(f"slipsense engine {ENGINE_VERSION} ({ORIGIN})")
        try:
            result = self.compute(parameters, context, feedback)
        except Canceled:
            raise QgsProcessingException("canceled") from None
        except SlipsenseError as exc:
            raise QgsProcessingException(str(exc)) from exc
        feedback.setProgress(100)
        return result

    def compute(self, parameters, context, feedback):  # pragma: no cover - subclasses implement
        raise NotImplementedError

    @staticmethod
    def quality_results(summary):
        q = summary.get("quality", {})
        return {key: int(q.get(word, 0)) for key, word in QUALITY_OUTPUTS}

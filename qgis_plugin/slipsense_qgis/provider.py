"""The slipsense processing provider (algorithm ids ``slipsense:<name>``)."""
from qgis.core import QgsProcessingProvider

from .algorithms import ALGORITHMS
from .engine import __version__ as ENGINE_VERSION


class SlipsenseProvider(QgsProcessingProvider):
    def id(self):
        return "slipsense"

    def name(self):
        return "slipsense"

    def longName(self):
        return f"slipsense (engine {ENGINE_VERSION})"

    def versionInfo(self):
        return ENGINE_VERSION

    def loadAlgorithms(self):
        for alg in ALGORITHMS:
            self.addAlgorithm(alg())

"""Plugin entry: registers the processing provider (desktop calls initGui, qgis_process initProcessing)."""
from qgis.core import QgsApplication


class SlipsensePlugin:
    def __init__(self, iface):
        self.iface = iface  # None under qgis_process: never touched
        self.provider = None

    def initProcessing(self):
        if self.provider is None:
            from .provider import SlipsenseProvider

            self.provider = SlipsenseProvider()
            QgsApplication.processingRegistry().addProvider(self.provider)

    def initGui(self):
        self.initProcessing()

    def unload(self):
        if self.provider is not None:
            QgsApplication.processingRegistry().removeProvider(self.provider)
            self.provider = None

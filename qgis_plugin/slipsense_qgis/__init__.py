"""slipsense for QGIS: a processing provider over the slipsense engine.

QGIS loads the plugin through :func:`classFactory`; under ``qgis_process`` ``iface`` is None, so
nothing here touches the GUI.
"""


def classFactory(iface):  # noqa: N802 - name fixed by QGIS
    from .plugin import SlipsensePlugin

    return SlipsensePlugin(iface)

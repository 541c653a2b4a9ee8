"""The QGIS plugin object: adds the zsplan Processing provider."""
from __future__ import annotations

import importlib

from qgis.core import Qgis, QgsApplication, QgsMessageLog

__all__ = ["ZsplanPlugin"]

_MISSING = ("The zsplan plugin needs the zsplan package (and numpy, shapely 2, pint, "
            "PyYAML ...) in the Python that QGIS runs: {error}. See docs/qgis.md, "
            "'Install', for how to add it.")


class ZsplanPlugin:
    """Registers the provider when QGIS initialises Processing.

    Parameters
    ----------
    iface : QgisInterface or None
        QGIS's interface (``None`` when used headless).
    """

    def __init__(self, iface=None):
        self.iface = iface
        self.provider = None
        self._reported = False

    def initProcessing(self):
        if self.provider is not None:
            return
        try:
            # fail early, here, if zsplan or one of its dependencies is missing
            importlib.import_module("zsplan.check")
            from .provider import ZsplanProvider
        except ImportError as exc:
            if not self._reported:          # QGIS calls initProcessing, then initGui
                self._reported = True
                msg = _MISSING.format(error=exc)
                QgsMessageLog.logMessage(msg, "zsplan", Qgis.Critical)
                if self.iface is not None:
                    self.iface.messageBar().pushMessage("zsplan", msg, level=Qgis.Critical)
            return
        self.provider = ZsplanProvider()
        QgsApplication.processingRegistry().addProvider(self.provider)

    def initGui(self):
        self.initProcessing()

    def unload(self):
        if self.provider is not None:
            QgsApplication.processingRegistry().removeProvider(self.provider)
            self.provider = None

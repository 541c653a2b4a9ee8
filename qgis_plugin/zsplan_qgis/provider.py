"""The zsplan Processing provider: registers the plugin's algorithms."""
from __future__ import annotations

import os

from qgis.core import QgsProcessingProvider
from qgis.PyQt.QtGui import QIcon

__all__ = ["ZsplanProvider", "plugin_icon", "PROVIDER_ID"]

#: Algorithms are called ``zsplan:checkroutes`` and ``zsplan:writeplan``.
PROVIDER_ID = "zsplan"


def plugin_icon() -> QIcon:
    return QIcon(os.path.join(os.path.dirname(__file__), "icon.svg"))


class ZsplanProvider(QgsProcessingProvider):
    """Processing provider for zsplan's route check and plan writer."""

    def id(self):
        return PROVIDER_ID

    def name(self):
        return "zsplan"

    def longName(self):
        import zsplan
        return f"zsplan {zsplan.__version__} (earth-fault loop check of drawn routes)"

    def icon(self):
        return plugin_icon()

    def loadAlgorithms(self):
        from .algorithms import CheckRoutes, WritePlan
        self.addAlgorithm(CheckRoutes())
        self.addAlgorithm(WritePlan())

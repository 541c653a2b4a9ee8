"""Real QGIS, headless: one QgsApplication and Processing for the session.

Run with the system Python that has Debian's python3-qgis (see .ci/qgis):
QT_QPA_PLATFORM=offscreen, the plugin folder on sys.path, the zsplan
provider registered through the plugin's own classFactory.
"""
from __future__ import annotations

import os
import sys
from pathlib import Path

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
os.environ.setdefault("XDG_RUNTIME_DIR", "/tmp/runtime-" + str(os.getuid()))

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "qgis_plugin"))
sys.path.insert(0, str(Path(__file__).resolve().parent))
for p in ("/usr/share/qgis/python/plugins", "/usr/share/qgis/python"):
    if Path(p).is_dir() and p not in sys.path:
        sys.path.append(p)

from qgis.core import QgsApplication, QgsProcessingFeedback  # noqa: E402

_APP = None


@pytest.fixture(scope="session")
def qgis_app():
    """QgsApplication + Processing + the zsplan provider (via classFactory)."""
    global _APP
    os.makedirs(os.environ["XDG_RUNTIME_DIR"], mode=0o700, exist_ok=True)
    QgsApplication.setPrefixPath("/usr", True)
    _APP = QgsApplication([], False)
    _APP.initQgis()
    from processing.core.Processing import Processing
    Processing.initialize()
    from zsplan_qgis import classFactory
    plugin = classFactory(None)
    plugin.initProcessing()
    assert plugin.provider is not None, "the zsplan provider did not load"
    yield _APP
    plugin.unload()
    # no exitQgis(): tearing QGIS down at interpreter exit is the safe order


class Feedback(QgsProcessingFeedback):
    """Keeps what an algorithm reports, as the Processing dialog would show it."""

    def __init__(self):
        super().__init__()
        self.errors: list[str] = []
        self.infos: list[str] = []
        self.warnings: list[str] = []

    def reportError(self, error, fatalError=False):  # noqa: N802 (QGIS API)
        self.errors.append(error)

    def pushInfo(self, info):  # noqa: N802
        self.infos.append(info)

    def pushWarning(self, warning):  # noqa: N802
        self.warnings.append(warning)


@pytest.fixture
def feedback():
    return Feedback()

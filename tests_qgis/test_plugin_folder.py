"""The plugin folder is what QGIS's plugin manager expects, and ours."""
from __future__ import annotations

import configparser
import re
import tomllib
from pathlib import Path

import zsplan

ROOT = Path(__file__).resolve().parents[1]
PLUGIN = ROOT / "qgis_plugin" / "zsplan_qgis"


def test_metadata_has_what_qgis_reads():
    meta = configparser.ConfigParser()
    meta.read(PLUGIN / "metadata.txt", encoding="utf-8")
    g = meta["general"]
    for key in ("name", "qgisMinimumVersion", "description", "about", "version", "author"):
        assert g.get(key, "").strip(), key
    assert g["qgisMinimumVersion"] == "3.22"           # Debian bookworm's QGIS
    assert g["hasProcessingProvider"] == "yes"
    assert (PLUGIN / g["icon"]).is_file()
    assert g["version"] == zsplan.__version__          # plugin and package move together


def test_licence_matches_the_package():
    licence = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["license"]["text"]
    assert licence == "MIT"
    assert (PLUGIN / "LICENSE").read_text().startswith("MIT License")


def test_class_factory_and_qt_through_qgis_pyqt():
    init = (PLUGIN / "__init__.py").read_text()
    assert re.search(r"^def classFactory\(iface\)", init, re.M)
    for py in PLUGIN.glob("*.py"):
        text = py.read_text()
        assert not re.search(r"^\s*(from|import) PyQt[56]", text, re.M), py.name


def test_missing_zsplan_is_reported_not_raised(qgis_app, monkeypatch):
    import zsplan_qgis.plugin as plugin_mod

    def no_zsplan(name):
        raise ModuleNotFoundError("No module named 'shapely'", name="shapely")

    pushed = []

    class Bar:
        def pushMessage(self, title, text, level=None):  # noqa: N802 (QGIS API)
            pushed.append(text)

    class Iface:
        def messageBar(self):  # noqa: N802
            return Bar()

    monkeypatch.setattr(plugin_mod.importlib, "import_module", no_zsplan)
    p = plugin_mod.ZsplanPlugin(Iface())
    p.initProcessing()
    p.initGui()                      # QGIS calls both; the user is told once
    assert p.provider is None
    assert len(pushed) == 1 and "shapely" in pushed[0] and "docs/qgis.md" in pushed[0]
    p.unload()

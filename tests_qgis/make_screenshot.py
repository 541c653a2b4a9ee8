"""Render docs/qgis-layer.png: the invented plan of tests_qgis/plandata.py checked
by the plugin, as QGIS draws it (walls, board, outlets, the styled routes and
the legend), through a print layout.

Run with the QGIS venv (see .ci/qgis):

    QT_QPA_PLATFORM=offscreen .venv-qgis/bin/python tests_qgis/make_screenshot.py [OUT.png]
"""
from __future__ import annotations

import os
import sys
import tempfile
from pathlib import Path

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path[:0] = [str(ROOT / "qgis_plugin"), str(HERE)]
sys.path.append("/usr/share/qgis/python/plugins")

from qgis.core import (  # noqa: E402
    QgsApplication, QgsGeometry, QgsLayoutExporter, QgsLayoutItemLabel,
    QgsLayoutItemLegend, QgsLayoutItemMap, QgsLayoutPoint, QgsLayoutSize, QgsLineSymbol,
    QgsMarkerSymbol, QgsPalLayerSettings, QgsPointXY, QgsPrintLayout, QgsProject,
    QgsTextFormat, QgsUnitTypes, QgsVectorLayerSimpleLabeling,
)
from qgis.PyQt.QtCore import QVariant  # noqa: E402
from qgis.PyQt.QtGui import QColor, QFont  # noqa: E402

# the floor plan's walls (plan metres, y down; invented)
WALLS = [
    [(0, 0), (12.2, 0), (12.2, 8.2), (0, 8.2), (0, 0)],
    [(6.6, 0), (6.6, 3.2)], [(6.6, 4.3), (6.6, 8.2)],        # office partition, door
]


def main(out: Path) -> None:
    QgsApplication.setPrefixPath("/usr", True)
    app = QgsApplication([], False)
    app.initQgis()
    from processing.core.Processing import Processing
    Processing.initialize()
    from zsplan_qgis import classFactory
    plugin = classFactory(None)
    plugin.initProcessing()
    import processing
    import plandata

    project = QgsProject.instance()
    walls = plandata.memory_layer("LineString", "walls", [("kind", QVariant.String)])
    for w in WALLS:
        plandata.add(walls, QgsGeometry.fromPolylineXY([QgsPointXY(x, -y) for x, y in w]),
                     {"kind": "wall"})
    walls.renderer().setSymbol(QgsLineSymbol.createSimple(
        {"color": "#8a8f98", "width": "1.2", "width_unit": "MM", "capstyle": "square"}))

    routes, boards, outlets = (plandata.routes_layer(), plandata.boards_layer(),
                               plandata.outlets_layer())
    with tempfile.TemporaryDirectory() as tmp:
        plan = Path(tmp) / "brackenfold.yaml"
        plan.write_text(plandata.PLAN_FILE, encoding="utf-8")
        res = processing.run("zsplan:checkroutes", {
            "ROUTES": routes, "BOARDS": boards, "OUTLETS": outlets, "PLAN": str(plan),
            "OUTPUT": "TEMPORARY_OUTPUT"})
    checked = res["OUTPUT"]
    checked.setName("Checked routes (zsplan)")

    boards.setName("Board")
    boards.renderer().setSymbol(QgsMarkerSymbol.createSimple(
        {"name": "square", "color": "#3b4250", "size": "3.2", "outline_color": "#3b4250"}))
    outlets.setName("Outlets")
    outlets.renderer().setSymbol(QgsMarkerSymbol.createSimple(
        {"name": "circle", "color": "#ffffff", "size": "2.2", "outline_color": "#3b4250",
         "outline_width": "0.4"}))
    lab = QgsPalLayerSettings()
    lab.fieldName = "name"
    lab.placement = QgsPalLayerSettings.OverPoint
    lab.yOffset = -2.2
    fmt = QgsTextFormat()
    fmt.setFont(QFont("DejaVu Sans"))
    fmt.setSize(7)
    fmt.setColor(QColor("#3b4250"))
    lab.setFormat(fmt)
    outlets.setLabeling(QgsVectorLayerSimpleLabeling(lab))
    outlets.setLabelsEnabled(True)
    walls.setName("Walls")
    for lyr in (walls, checked, boards, outlets):
        project.addMapLayer(lyr)
    project.setCrs(checked.crs())

    layout = QgsPrintLayout(project)
    layout.initializeDefaults()
    page = layout.pageCollection().page(0)
    page.setPageSize(QgsLayoutSize(297, 172, QgsUnitTypes.LayoutMillimeters))

    title = QgsLayoutItemLabel(layout)
    title.setText("Unit 2, Brackenfold Yard (invented): routes checked by zsplan in QGIS 3.22")
    title.setFont(QFont("DejaVu Sans", 13))
    title.attemptMove(QgsLayoutPoint(8, 5))
    title.attemptResize(QgsLayoutSize(280, 9))
    layout.addLayoutItem(title)

    m = QgsLayoutItemMap(layout)
    layout.addLayoutItem(m)
    m.attemptMove(QgsLayoutPoint(8, 16))
    m.attemptResize(QgsLayoutSize(190, 140))
    m.setLayers([outlets, boards, checked, walls])
    m.setCrs(checked.crs())
    ext = walls.extent()
    ext.grow(0.6)
    # widen the extent to the map item's proportions, then set it
    w, h = 190.0, 140.0
    if ext.width() / ext.height() < w / h:
        grow = (w / h * ext.height() - ext.width()) / 2
        ext.setXMinimum(ext.xMinimum() - grow)
        ext.setXMaximum(ext.xMaximum() + grow)
    else:
        grow = (ext.width() * h / w - ext.height()) / 2
        ext.setYMinimum(ext.yMinimum() - grow)
        ext.setYMaximum(ext.yMaximum() + grow)
    m.setExtent(ext)
    m.setFrameEnabled(True)

    legend = QgsLayoutItemLegend(layout)
    legend.setLinkedMap(m)
    legend.setAutoUpdateModel(False)
    root = legend.model().rootGroup()
    root.clear()
    root.addLayer(checked)
    legend.setTitle("Margin = 1 − Zs / Zs max")
    legend.setStyleFont(1, QFont("DejaVu Sans", 10))
    legend.attemptMove(QgsLayoutPoint(203, 16))
    layout.addLayoutItem(legend)
    legend.adjustBoxSize()

    note = QgsLayoutItemLabel(layout)
    note.setText("Labels: circuit, status, margin. Colour and dash follow the margin band "
                 "(fail, tight, pass); status also counts voltage drop, cpc and rating checks.\n"
                 "Design aid only: results rest on the inputs and the method. Verify by "
                 "inspection and testing; local wiring regulations and a qualified "
                 "electrician govern.")
    note.setFont(QFont("DejaVu Sans", 8))
    note.attemptMove(QgsLayoutPoint(8, 160))
    note.attemptResize(QgsLayoutSize(280, 10))
    layout.addLayoutItem(note)

    exporter = QgsLayoutExporter(layout)
    settings = QgsLayoutExporter.ImageExportSettings()
    settings.dpi = 110
    result = exporter.exportToImage(str(out), settings)
    if result != QgsLayoutExporter.Success:
        raise SystemExit(f"export failed: {exporter.errorMessage()}")
    print(f"wrote {out}")
    plugin.unload()


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else ROOT / "docs" / "qgis-layer.png")

"""The output layer is drawn with zsplan's palette: band by band, dash by band,
margins on a band edge in the palette's band, and a map really shows it."""
from __future__ import annotations

import numpy as np
import processing
import pytest
from qgis.core import (
    QgsExpressionContextUtils,
    QgsMapRendererCustomPainterJob,
    QgsMapSettings,
    QgsRenderContext,
)
from qgis.PyQt.QtCore import QSize, QVariant
from qgis.PyQt.QtGui import QColor, QImage, QPainter

import plandata
from zsplan import palette
from zsplan.colourscience import ciede2000, hex_to_srgb, srgb_to_lab
from zsplan_qgis.styling import margin_renderer

TIGHT = 0.2   # zsplan's default tight threshold (docs/plan-format.md, settings.tight)


def _symbols(renderer, rows):
    """(margin, band) rows -> the symbol the renderer draws for each."""
    layer = plandata.memory_layer("LineString", "t", [("margin", QVariant.Double),
                                                      ("band", QVariant.String)])
    for m, b in rows:
        from qgis.core import QgsGeometry, QgsPointXY
        plandata.add(layer, QgsGeometry.fromPolylineXY([QgsPointXY(0, 0), QgsPointXY(1, 0)]),
                     {"margin": m, "band": b})
    ctx = QgsRenderContext()
    ctx.expressionContext().appendScope(QgsExpressionContextUtils.layerScope(layer))
    renderer.startRender(ctx, layer.fields())
    out = []
    for f in layer.getFeatures():
        ctx.expressionContext().setFeature(f)
        sym = renderer.symbolForFeature(f, ctx)
        out.append(None if sym is None else sym.clone())
    renderer.stopRender(ctx)
    return out


def _style(sym):
    sl = sym.symbolLayer(0)
    dash = " ".join(f"{x:g}" for x in sl.customDashVector()) if sl.useCustomDashPattern() else None
    return sl.color().name(), dash, round(sl.width(), 6)


def _de(a: str, b: str) -> float:
    return float(ciede2000(srgb_to_lab(hex_to_srgb(a)), srgb_to_lab(hex_to_srgb(b))))


def test_every_margin_gets_its_band_style_and_a_close_palette_colour(qgis_app):
    margins = np.round(np.linspace(-1.0, 1.0, 401), 6)
    rows = [(float(m), str(palette.band(m, TIGHT))) for m in margins]
    syms = _symbols(margin_renderer(TIGHT), rows)
    worst = 0.0
    for (m, b), sym in zip(rows, syms):
        assert sym is not None, m
        colour, dash, width = _style(sym)
        assert (dash, width) == palette.style(b), m
        # the colour is the palette's colour of a margin in the same band ...
        d = _de(colour, palette.colour(m, TIGHT))
        worst = max(worst, d)
        # ... within 4 CIEDE2000 units of the margin's own colour (classes of a
        # band are narrow; zsplan_qgis.styling design choice, no published source),
        # while neighbouring bands stay at least 15 apart (zsplan.palette)
        assert d <= 4.0, (m, colour, palette.colour(m, TIGHT), d)
    assert worst > 0.5       # stepped, not exact: the test would see a wrong class


@pytest.mark.parametrize("margin, band, expected", [
    (0.0, "tight", "tight"),        # Zs = Zs max is allowed: tight (BS 7671 Reg. 411.4.4)
    (-0.001, "fail", "fail"),
    (TIGHT, "pass", "pass"),        # margin = tight is a pass (zsplan.palette.band)
    (0.199, "tight", "tight"),
    (None, "fail", "fail"),         # no Zs limit at all: failed its disconnection check
    (0.0, "fail", "fail"),          # -1e-12 rounded for display to 0.0: still a fail
    (TIGHT, "tight", "tight"),      # 0.1999999999 rounded for display to 0.2: still tight
    (-5.0, "fail", "fail"),
    (1.0, "pass", "pass"),
])
def test_band_edges(qgis_app, margin, band, expected):
    sym, = _symbols(margin_renderer(TIGHT), [(margin, band)])
    assert sym is not None
    colour, dash, width = _style(sym)
    assert (dash, width) == palette.style(expected)
    assert str(palette.band(_nearest_margin(colour), TIGHT)) == expected


_GRID = np.linspace(-0.6, 0.8, 1401)
_GRID_LAB = srgb_to_lab(hex_to_srgb(palette.colour(_GRID, TIGHT)))


def _nearest_margin(colour: str) -> float:
    """The margin whose palette colour is closest to ``colour``."""
    d = ciede2000(srgb_to_lab(hex_to_srgb(colour))[None, :], _GRID_LAB)
    return float(_GRID[int(np.argmin(d))])


def test_tight_threshold_of_the_plan_moves_the_classes(qgis_app):
    # with tight = 30 % a margin of 0.25 is tight, not pass
    sym, = _symbols(margin_renderer(0.3), [(0.25, "tight")])
    assert _style(sym)[1:] == palette.style("tight")


def test_rendered_map_shows_each_circuit_in_its_colour(qgis_app, tmp_path, feedback):
    plan = tmp_path / "site.yaml"
    plan.write_text(plandata.PLAN_FILE, encoding="utf-8")
    res = processing.run("zsplan:checkroutes", {
        "ROUTES": plandata.routes_layer(), "BOARDS": plandata.boards_layer(),
        "OUTLETS": plandata.outlets_layer(), "PLAN": str(plan), "OUTPUT": "TEMPORARY_OUTPUT"},
        feedback=feedback)
    layer = res["OUTPUT"]
    layer.setLabelsEnabled(False)
    settings = QgsMapSettings()
    settings.setLayers([layer])
    settings.setDestinationCrs(layer.crs())
    ext = layer.extent()
    ext.grow(0.5)
    settings.setExtent(ext)
    settings.setOutputSize(QSize(900, 650))
    settings.setOutputDpi(200)
    settings.setBackgroundColor(QColor("white"))
    img = QImage(settings.outputSize(), QImage.Format_ARGB32)
    img.fill(QColor("white"))
    painter = QPainter(img)
    job = QgsMapRendererCustomPainterJob(settings, painter)
    job.start()
    job.waitForFinished()
    painter.end()
    path = tmp_path / "map.png"
    assert img.save(str(path))

    ptr = img.constBits()
    ptr.setsize(img.sizeInBytes())
    px = np.frombuffer(ptr, np.uint8).reshape(img.height(), img.bytesPerLine() // 4, 4)
    rgb = px[:, :img.width(), 2::-1].reshape(-1, 3)          # BGRA -> RGB
    present = {"#%02x%02x%02x" % tuple(c) for c in np.unique(rgb, axis=0)}
    renderer = layer.renderer()
    for f in layer.getFeatures():
        ctx = QgsRenderContext()
        ctx.expressionContext().appendScope(QgsExpressionContextUtils.layerScope(layer))
        renderer.startRender(ctx, layer.fields())
        ctx.expressionContext().setFeature(f)
        colour = renderer.symbolForFeature(f, ctx).color().name()
        renderer.stopRender(ctx)
        assert colour in present, (f["circuit"], colour)
        assert str(palette.band(_nearest_margin(colour), TIGHT)) == f["band"]
    assert {f["band"] for f in layer.getFeatures()} == {"fail", "tight", "pass"}

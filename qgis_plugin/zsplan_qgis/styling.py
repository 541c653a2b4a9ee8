"""zsplan's margin palette as a QGIS graduated renderer.

The colours, bands, dash patterns and line weights are
:mod:`zsplan.palette`'s; this module only translates them.  The palette is
continuous within a band; QGIS draws classes, so each band is cut into a few
classes coloured at their middle margin (:data:`STEPS` per band), plus a
class below margin -0.5 and one above the pass colour's saturation point,
where the palette's colour no longer changes.

A graduated class matches ``lower <= value <= upper`` (the first class that
matches wins), while the palette's bands are half-open (margin 0 is tight,
margin = tight is a pass).  Each class therefore ends at the largest double
below the next class's lower bound (:func:`math.nextafter`), so a margin on
a band boundary falls in the band the palette gives it.

The classes are drawn on the ``margin`` field, which is the results' margin
rounded (down) for display, so that it equals ``zsplan check --json``.  Close
to a band edge, rounding could move a margin across the edge (a margin of
-1e-12 fails but shows as 0.0).  The layer therefore also carries ``band``,
the palette's band of the *unrounded* margin (:func:`band_of`, as zsplan's own
plan renderer takes it), and the renderer's value expression
(:func:`class_expression`) keeps each feature's value inside its ``band``:

.. code-block:: none

   CASE WHEN "band" = 'fail'  THEN min(coalesce("margin", -1e12), -1e-9)
        WHEN "band" = 'tight' THEN max(min("margin", tight - 1e-9), 0)
        WHEN "band" = 'pass'  THEN max("margin", tight)
        ELSE coalesce("margin", -1e12) END

A circuit without a margin (its device's data show no operation within the
required time) has failed its disconnection check and is drawn as a fail.
"""
from __future__ import annotations

import math

from qgis.core import (
    QgsGraduatedSymbolRenderer,
    QgsLineSymbol,
    QgsRendererRange,
    QgsSimpleLineSymbolLayer,
    QgsUnitTypes,
)
from qgis.PyQt.QtCore import Qt
from qgis.PyQt.QtGui import QColor

from zsplan import palette

__all__ = ["margin_renderer", "class_bounds", "class_expression", "band_of", "label_settings",
           "LOWEST", "HIGHEST", "STEPS"]

#: Classes per band between the band's edges.
STEPS = 3
#: Outer bounds of the outermost classes: wider than any margin (margin
#: = 1 - Zs/Zs max is at most 1).  Finite, so that they survive a project file.
LOWEST, HIGHEST = -1.0e12, 1.0e12
#: How far inside its band a value is kept by :func:`class_expression`.
_INSIDE = 1e-9


def band_of(margin: float, disconnection: str | None, tight: float = palette.DEFAULT_TIGHT) -> str:
    """The palette band of an unrounded margin, a failed disconnection check
    without a finite margin counted as ``"fail"`` (as zsplan's plan renderer does)."""
    b = str(palette.band(margin, tight))
    if b == "none" and disconnection == "fail":
        b = "fail"
    return b


def class_expression(tight: float = palette.DEFAULT_TIGHT) -> str:
    """The renderer's value: the ``margin`` field kept inside the ``band`` field's band."""
    t = float(tight)
    return (f"CASE WHEN \"band\" = 'fail' THEN min(coalesce(\"margin\", {LOWEST:g}), {-_INSIDE:g}) "
            f"WHEN \"band\" = 'tight' THEN max(min(\"margin\", {t - _INSIDE!r}), 0) "
            f"WHEN \"band\" = 'pass' THEN max(\"margin\", {t!r}) "
            f"ELSE coalesce(\"margin\", {LOWEST:g}) END")


def class_bounds(tight: float = palette.DEFAULT_TIGHT) -> list[tuple[float, float, str, float]]:
    """The classes: ``(lower, upper, band, margin whose colour it takes)``.

    Lower bounds run -1e12, -0.5, ... 0, ... tight, ... pass_full; each
    upper bound is the largest double below the next lower bound.
    """
    pf = palette.pass_full(tight)
    edges = [palette.FAIL_FULL + (0.0 - palette.FAIL_FULL) * i / STEPS for i in range(STEPS)]
    edges += [tight * i / STEPS for i in range(STEPS)]
    edges += [tight + (pf - tight) * i / STEPS for i in range(STEPS)]
    lowers = [LOWEST] + edges + [pf]
    out = []
    for i, lo in enumerate(lowers):
        hi = math.nextafter(lowers[i + 1], -math.inf) if i + 1 < len(lowers) else HIGHEST
        if lo == LOWEST:
            sample = palette.FAIL_FULL          # the fail colour's saturation
        elif i + 1 == len(lowers):
            sample = pf                         # the pass colour's saturation
        else:
            sample = (lo + lowers[i + 1]) / 2.0
        band = str(palette.band(sample, tight))
        out.append((lo, hi, band, sample))
    return out


def _label(lo: float, hi: float, band: str, nxt: float | None) -> str:
    name = {"fail": "Fail", "tight": "Tight", "pass": "Pass"}[band]
    if lo == LOWEST:
        return f"{name}: margin below {nxt:+.2f} (or none)"
    if hi == HIGHEST:
        return f"{name}: margin {lo:+.2f} and above"
    return f"{name}: margin {lo:+.2f} to {nxt:+.2f}"


def _symbol(colour: str, band: str) -> QgsLineSymbol:
    dash, width = palette.style(band)
    sym = QgsLineSymbol()
    layer = QgsSimpleLineSymbolLayer(QColor(colour), width)
    layer.setWidthUnit(QgsUnitTypes.RenderMillimeters)
    layer.setPenCapStyle(Qt.FlatCap)
    layer.setPenJoinStyle(Qt.RoundJoin)
    if dash:
        layer.setUseCustomDashPattern(True)
        layer.setCustomDashVector([float(x) for x in dash.split()])
        layer.setCustomDashPatternUnit(QgsUnitTypes.RenderMillimeters)
    sym.changeSymbolLayer(0, layer)
    return sym


def margin_renderer(tight: float = palette.DEFAULT_TIGHT) -> QgsGraduatedSymbolRenderer:
    """A graduated renderer on the margin with zsplan's palette.

    Parameters
    ----------
    tight : float
        The plan's tight threshold (``settings.tight``). [-]

    Returns
    -------
    QgsGraduatedSymbolRenderer
        Classes from :func:`class_bounds`, each with :func:`zsplan.palette.colour`
        of its sample margin and :func:`zsplan.palette.style` of its band
        (dash pattern and width in millimetres, flat caps).
    """
    bounds = class_bounds(tight)
    ranges = []
    for i, (lo, hi, band, sample) in enumerate(bounds):
        nxt = bounds[i + 1][0] if i + 1 < len(bounds) else None
        colour = palette.colour(sample, tight)
        ranges.append(QgsRendererRange(lo, hi, _symbol(colour, band), _label(lo, hi, band, nxt)))
    return QgsGraduatedSymbolRenderer(class_expression(tight), ranges)


def label_settings():
    """Labels along each route: circuit, status and margin in whole percent
    (rounded down)."""
    from qgis.core import (QgsPalLayerSettings, QgsTextBufferSettings, QgsTextFormat,
                           QgsVectorLayerSimpleLabeling)
    from qgis.PyQt.QtGui import QFont

    s = QgsPalLayerSettings()
    s.isExpression = True
    # the margin in whole percent, rounded down (never shown better than it is)
    s.fieldName = ("concat(\"circuit\", '  ', \"status\", "
                   "if(\"margin\" IS NULL, '', concat('  ', "
                   "to_string(floor(\"margin\" * 100 + 1e-9)), ' %')))")
    s.placement = QgsPalLayerSettings.Line
    fmt = QgsTextFormat()
    fmt.setFont(QFont("DejaVu Sans"))
    fmt.setSize(8)
    fmt.setColor(QColor("#222222"))
    buf = QgsTextBufferSettings()
    buf.setEnabled(True)
    buf.setSize(0.8)
    buf.setColor(QColor("#ffffff"))
    fmt.setBuffer(buf)
    s.setFormat(fmt)
    return QgsVectorLayerSimpleLabeling(s)

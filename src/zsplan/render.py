"""The marked-up plan: routes coloured by margin over the floor plan, as SVG,
PDF and PNG.

:func:`render_svg` draws one sheet (ISO 216, at a drawing scale): the user's
floor plan as a faded underlay (cleaned by :mod:`zsplan.render_underlay`),
every circuit's route in the colour, dash pattern and weight of its margin
band (:mod:`zsplan.palette`), the outlets and boards with zsplan's symbols
(:mod:`zsplan.symbols`), one label per route (:mod:`zsplan.labels`), and a
title block with the legend, the symbols, a scale bar, the counts of pass,
tight and fail and the safety caution.  :func:`schedule_svg` draws the
schedule of expected test values (:mod:`zsplan.render_schedule`).
:func:`write_drawing` writes SVG, PDF (drawing and schedule, one file) or
PNG through cairosvg in its safe mode.

Every number shown is rounded toward the safe side with
:func:`zsplan.results.safe_round` (Zs up, limits down).  The output is
deterministic: the same results give byte-identical SVG (no time stamps
unless a date is asked for, stable order, three-decimal coordinates in
millimetres, fixed ids).

The sheet's user unit is the millimetre (``width="420mm" viewBox="0 0 420
297"``), so a plan point :math:`(x, y)` in metres lands at

.. math:: x_{mm} = x_0 + (x - x_{min}) \\cdot 1000 / N, \\quad
          y_{mm} = y_0 + (y - y_{min}) \\cdot 1000 / N

at scale 1:N (:meth:`zsplan.sheets.Layout.to_paper`), and the floor plan's
user unit :math:`u` lands at :math:`u \\cdot m_u \\cdot 1000 / N` mm with
:math:`m_u` its metres per unit.

References
----------
.. [1] ISO 216:2007 (sheet sizes); ISO 5455:1979 (scales); ISO 128-20:1996
   (line widths); ISO 3098-0:1997 (lettering); all from memory.
.. [2] BS 7671:2018+A2:2022, Regulation 411.4.4 (Zs <= Zs max; from memory).
"""
from __future__ import annotations

import datetime as _dt
import io
import math
import xml.etree.ElementTree as ET
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import shapely
import svgwrite
from shapely.geometry import box

from . import CAUTION, __version__
from . import palette
from .errors import PlanError, Problem
from .labels import PAD_X, LabelSpec, place_labels, text_width
from .outputs import write_atomic
from .results import safe_round
from .sheets import fit, scale_bar, sheet as make_sheet
from .symbols import (SYMBOL_IDS, SYMBOL_SIZE_MM, symbol_defs, use, use_attributes,
                      use_attributes_many)

__all__ = [
    "render_svg",
    "schedule_svg",
    "write_drawing",
    "render",
    "svg_to_pdf",
    "svg_to_png",
    "FONT",
    "PNG_DPI",
]

#: Font asked for in every text (cairosvg reads the first family only).
FONT = "DejaVu Sans"
#: Resolution of PNG output. [dot/inch]
PNG_DPI = 150
INK = "#1f1f1f"              # text and frame; zsplan layout choice
MUTED = "#5c5c5c"            # secondary text; zsplan layout choice
RULE = "#8a8a8a"             # thin rules in the title block; zsplan layout choice
UNDERLAY_OPACITY = 0.45      # floor plan faded under the mark-up; zsplan layout choice
CASING_MM = 0.8              # white casing each side of a route, total extra width; layout choice
LABEL_FONT_MM = 2.5          # ISO 3098 series 2.5 mm (from memory)
SINGLE_ROW_MIN_MM = 360.0    # frame width from which the title block is one row; layout choice
TITLE_BLOCK_ONE_ROW_MM = 32.0
TITLE_BLOCK_TWO_ROWS_MM = 60.0
LANDSCAPE_BIAS = 1.15        # orientation None: landscape wins unless portrait fills 15 % more
#: From this many route labels a sheet counts as dense: label placement gets a
#: budget and labels that find no place are left out and listed in a note.
DENSE_LABELS = 150           # zsplan layout choice
LABEL_BUDGET = 50_000        # candidate label boxes tried on a dense sheet; layout choice
LEADER_CAP = 1_000           # candidate boxes per label in the leader search there; layout choice
NOTE_MM = 2.2                # font size of the "not labelled" note; layout choice

#: Short names of checks for labels (other check names are shown as given).
CHECK_NAMES = {
    "disconnection": "disconnection",
    "zs": "Zs",
    "vdrop": "voltage drop",
    "voltage_drop": "voltage drop",
    "cpc": "cpc size",
    "adiabatic": "cpc size",
    "capacity": "capacity",
    "rcd": "RCD",
}
#: Checks whose failure the route's colour already shows.
_COLOUR_CHECKS = frozenset({"disconnection", "zs"})

_KIND_NAMES = {
    "socket": "Socket-outlet",
    "light": "Lighting point",
    "switch": "Switch",
    "spur": "Connection unit",
    "fixed": "Fixed equipment",
    "board": "Board",
}


# --------------------------------------------------------------------------
# formatting helpers
# --------------------------------------------------------------------------

def _f(v: float) -> str:
    """A coordinate in mm with at most three decimals, no trailing zeros."""
    return _fs((float(v),))[0]


def _fs(values) -> list[str]:
    """:func:`_f` of many numbers at once (a sequence of floats, or an array)."""
    if isinstance(values, np.ndarray):
        values = values.ravel().tolist()
    out = []
    for v in values:
        s = f"{v:.3f}".rstrip("0").rstrip(".")
        out.append("0" if s in ("-0", "") else s)
    return out


def _points_text(pts: np.ndarray) -> str:
    """The ``points`` of a polyline through the rows of ``pts`` (x, y in mm)."""
    s = _fs(pts)
    return " ".join(f"{x},{y}" for x, y in zip(s[0::2], s[1::2]))


def _num(name: str, value, decimals: int) -> str:
    """A displayed figure, rounded toward the safe side; an en dash when unknown."""
    v = safe_round(name, float(value), decimals) if value is not None else None
    if v is None:
        return "–"
    return f"{v:.{decimals}f}"


def _date_text(date) -> str | None:
    if date is None:
        return None
    if isinstance(date, (_dt.date, _dt.datetime)):
        return date.isoformat()[:10]
    text = str(date).strip()
    return text or None


class _Raw:
    """An ElementTree element placed in an svgwrite tree as it is."""

    def __init__(self, element: ET.Element):
        self.element = element

    def get_xml(self) -> ET.Element:
        return self.element


def _raw(text: str) -> _Raw:
    return _Raw(ET.fromstring(text))   # our own generated markup only


def _text(dwg, x, y, s, size, *, weight=None, anchor=None, fill=INK, style=None, **extra):
    t = dwg.text(s, insert=(_f(x), _f(y)))
    t["font-size"] = _f(size)
    if weight:
        t["font-weight"] = weight
    if anchor:
        t["text-anchor"] = anchor
    if style:
        t["font-style"] = style
    t["fill"] = fill
    for k, v in extra.items():
        t[k.replace("_", "-")] = v
    return t


def _wrap(text: str, width: float, size: float, bold: bool = False) -> list[str]:
    words, lines, cur = text.split(), [], ""
    for w in words:
        trial = f"{cur} {w}" if cur else w
        if cur and text_width(trial, size, bold) > width:
            lines.append(cur)
            cur = w
        else:
            cur = trial
    if cur:
        lines.append(cur)
    return lines


def _fit_text(text: str, width: float, size: float, bold: bool = False,
              min_size: float = 1.5) -> tuple[str, float]:
    """Shrink the font (down to ``min_size``), then shorten with an ellipsis."""
    if text_width(text, size, bold) <= width:
        return text, size
    s = max(min_size, size * width / max(text_width(text, size, bold), 1e-9))
    if text_width(text, s, bold) <= width:
        return text, s
    while text and text_width(text + "…", s, bold) > width:
        text = text[:-1]
    return text.rstrip() + "…", s


# --------------------------------------------------------------------------
# what each circuit looks like
# --------------------------------------------------------------------------

@dataclass(frozen=True)
class _Route:
    index: int
    key: str            # "CU1/3"
    band: str           # fail | tight | pass | none
    colour: str
    dash: str | None
    width: float
    status: str
    label: str
    other: tuple        # names of other failing checks
    margin: float


def _measured_margin(measured, board: str, ref: str) -> float:
    for k in ((board, ref), f"{board}/{ref}"):
        if k in measured:
            v = measured[k]
            try:
                return float(v) if v is not None else float("nan")
            except (TypeError, ValueError):
                return float("nan")
    return float("nan")


def _routes(results, measured) -> list[_Route]:
    plan = results.plan
    a = results.circuits
    tight = plan.settings.tight
    out = []
    if measured is not None:
        margins = np.array([_measured_margin(measured, c.board, c.ref) for c in plan.circuits],
                           dtype=float)
    else:
        margins = np.asarray(a["margin"], dtype=float)[:len(plan.circuits)]
    # all colours and bands at once (one palette call, not one per route)
    bands = [str(b) for b in np.asarray(palette.band(margins, tight)).reshape(-1)]
    colours = list(np.asarray(palette.colour(margins, tight), dtype=object).reshape(-1))
    for i, c in enumerate(plan.circuits):
        key = f"{c.board}/{c.ref}"
        status = str(a["status"][i])
        m = float(margins[i])
        b, col = bands[i], str(colours[i])
        checks = results.checks[i] if i < len(results.checks) else {}
        if measured is None and b == "none" and checks.get("disconnection") == "fail":
            # a disconnection fail that the margin cannot show (no finite Zs or Zs max)
            b, col = "fail", palette.colour(palette.FAIL_FULL, tight)
        dash, width = palette.style(b)
        other = tuple(CHECK_NAMES.get(k, k.replace("_", " ")) for k, v in checks.items()
                      if v == "fail" and k not in _COLOUR_CHECKS)
        parts = [key, f"{_num('length_m', a['length_m'][i], 1)} m",
                 f"Zs {_num('zs_ohm', a['zs_ohm'][i], 2)}/{_num('zs_max_ohm', a['zs_max_ohm'][i], 2)} Ω"]
        if measured is not None:
            mm = safe_round("margin", m, 2)
            parts.append("not measured" if mm is None else f"measured margin {100 * mm:.0f} %")
        if other:
            parts.append(", ".join(dict.fromkeys(other)))
        out.append(_Route(i, key, b, col, dash, width, status, " · ".join(parts), other, m))
    return out


# --------------------------------------------------------------------------
# layout
# --------------------------------------------------------------------------

def _content_points(plan) -> np.ndarray:
    pts = [b.at for b in plan.boards if b.at is not None]
    for c in plan.circuits:
        if c.route:
            pts.extend(c.route)
        pts.extend(o.at for o in c.outlets)
    return np.asarray(pts, dtype=float).reshape(-1, 2)


def _extent(plan, underlay) -> tuple[float, float, float, float]:
    pts = _content_points(plan)
    ext = None
    if len(pts):
        ext = [pts[:, 0].min(), pts[:, 1].min(), pts[:, 0].max(), pts[:, 1].max()]
    if underlay is not None and underlay.extent_m is not None:
        u = underlay.extent_m
        ext = list(u) if ext is None else [min(ext[0], u[0]), min(ext[1], u[1]),
                                          max(ext[2], u[2]), max(ext[3], u[3])]
    elif ext is not None:
        # no floor plan: a border round the content (symbols and labels need room)
        pad = max(0.5, 0.05 * max(ext[2] - ext[0], ext[3] - ext[1]))
        ext = [ext[0] - pad, ext[1] - pad, ext[2] + pad, ext[3] + pad]
    if ext is None:
        ext = [0.0, 0.0, 1.0, 1.0]
    return tuple(float(v) for v in ext)


def _title_block_mm(sh) -> float:
    return (TITLE_BLOCK_ONE_ROW_MM if sh.width_mm - 20.0 >= SINGLE_ROW_MIN_MM
            else TITLE_BLOCK_TWO_ROWS_MM)


def _layout(extent, sheet_name, orientation, scale, plan_file):
    if orientation is not None:
        sh = make_sheet(sheet_name, orientation, path="sheet")
        return fit(extent, sh, scale=scale, title_block_mm=_title_block_mm(sh), file=plan_file)
    best = None
    for orient in ("landscape", "portrait"):
        sh = make_sheet(sheet_name, orient, path="sheet")
        lay = fit(extent, sh, scale=scale, title_block_mm=_title_block_mm(sh), strict=False,
                  file=plan_file)
        a = lay.drawing_area
        fill = (lay.drawing.width * lay.drawing.height) / (a.width * a.height)
        # landscape unless portrait holds the drawing clearly larger (one-row title block)
        rank = (lay.fits, lay.mm_per_m, fill * (LANDSCAPE_BIAS if orient == "landscape" else 1.0))
        if best is None or rank > best[0]:
            best = (rank, lay)
    lay = best[1]
    if not lay.fits:
        # neither fits: report as for the default orientation
        sh = make_sheet(sheet_name, "landscape", path="sheet")
        return fit(extent, sh, scale=scale, title_block_mm=_title_block_mm(sh), file=plan_file)
    return lay


# --------------------------------------------------------------------------
# the drawing sheet
# --------------------------------------------------------------------------

def _warning_glyph(dwg, x, y, size, colour=INK):
    """A warning triangle with an exclamation mark, centred on (x, y)."""
    h = size * 0.9
    w = size
    g = dwg.g(**{"class": "warning"})
    tri = dwg.polygon([(_f(x - w / 2), _f(y + h / 2)), (_f(x + w / 2), _f(y + h / 2)),
                       (_f(x), _f(y - h / 2))])
    tri["fill"] = "#ffffff"
    tri["stroke"] = colour
    tri["stroke-width"] = _f(max(0.18, size * 0.09))
    tri["stroke-linejoin"] = "round"
    g.add(tri)
    bar = dwg.line((_f(x), _f(y - h * 0.12)), (_f(x), _f(y + h * 0.18)))
    bar["stroke"] = colour
    bar["stroke-width"] = _f(size * 0.12)
    g.add(bar)
    dot = dwg.circle((_f(x), _f(y + h * 0.33)), _f(size * 0.07))
    dot["fill"] = colour
    g.add(dot)
    return g


def render_svg(results, *, sheet="A3", orientation=None, scale="fit", measured=None,
               date=None) -> str:
    """The marked-up plan on one drawing sheet, as SVG text.

    Parameters
    ----------
    results : zsplan.results.Results
        From :func:`zsplan.check`.
    sheet : str, optional
        ISO 216 size, "A4" to "A0". Default "A3".
    orientation : str, optional
        "landscape" or "portrait"; None (default) takes the one on which the
        plan is drawn larger.
    scale : str or float, optional
        "1:50", 50, "fit" (largest standard scale that fits, default) or
        "exact" (:func:`zsplan.sheets.parse_scale`).
    measured : mapping, optional
        ``{(board, ref): margin}`` from measured values: routes are coloured
        by these margins instead (circuits not in it show as "no result")
        and the legend and title say "measured".
    date : str or datetime.date, optional
        Shown in the title block; none by default, so output is repeatable.

    Returns
    -------
    str
        A standalone SVG document sized in millimetres (true scale).

    Raises
    ------
    PlanError
        Plan does not fit the sheet at the scale; unknown sheet or scale;
        unsafe or unreadable floor plan.
    """
    from .render_underlay import load_underlay

    plan = results.plan
    plan_file = plan.path or ""
    underlay = load_underlay(plan.drawing, plan_file)
    extent = _extent(plan, underlay)
    lay = _layout(extent, sheet, orientation, scale, plan_file)
    routes = _routes(results, measured)
    sh = lay.sheet
    k = lay.mm_per_m

    dwg = _sheet_drawing(sh)
    title = plan.title or (Path(plan_file).stem if plan_file else "Plan")
    dwg.set_desc(title=f"{title}: marked-up plan (zsplan)", desc=CAUTION)

    defs = ET.fromstring(f'<svg xmlns="http://www.w3.org/2000/svg">{symbol_defs(None)}</svg>')[0]
    for el in defs.iter():
        if isinstance(el.tag, str) and el.tag.startswith("{"):
            el.tag = el.tag.split("}", 1)[1]
    clip = ET.SubElement(defs, "clipPath", {"id": "zs-clip-drawing"})
    da = lay.drawing_area
    ET.SubElement(clip, "rect", {"x": _f(da.x), "y": _f(da.y), "width": _f(da.width),
                                 "height": _f(da.height)})
    _legend_gradients(defs, plan.settings.tight)
    dwg.add(_Raw(defs))

    bg = dwg.rect((0, 0), (_f(sh.width_mm), _f(sh.height_mm)), fill="#ffffff")
    bg["id"] = "zs-paper"
    dwg.add(bg)

    # floor plan underlay
    if underlay is not None:
        s = underlay.metres_per_unit * k
        xmin, ymin = lay.extent_m[0], lay.extent_m[1]
        tx = lay.drawing.x - xmin * k
        ty = lay.drawing.y - ymin * k
        outer = ET.Element("g", {"id": "zs-underlay", "clip-path": "url(#zs-clip-drawing)",
                                 "opacity": _f(UNDERLAY_OPACITY)})
        inner = underlay.group
        inner.set("transform", f"matrix({s:.9g} 0 0 {s:.9g} {tx:.6f} {ty:.6f})")
        outer.append(inner)
        dwg.add(_Raw(outer))

    # routes, outlets and boards: thousands of elements, written as SVG text directly
    # (the same bytes ElementTree would write for them, see _attr and _element)
    paper = {}
    order = {"none": 0, "pass": 1, "tight": 2, "fail": 3}
    drawn_routes = [r for r in routes if plan.circuits[r.index].route]
    if drawn_routes:
        counts = np.array([len(plan.circuits[r.index].route) for r in drawn_routes])
        flat = np.asarray([p for r in drawn_routes for p in plan.circuits[r.index].route],
                          dtype=float).reshape(-1, 2)
        xs, ys = lay.to_paper(flat[:, 0], flat[:, 1])
        both = np.column_stack([xs, ys])
        for r, pts in zip(drawn_routes, np.split(both, np.cumsum(counts)[:-1])):
            paper[r.index] = pts
    drawn = sorted(drawn_routes, key=lambda r: (order[r.band], r.index))
    at = len(dwg.elements)      # the layers of text go in here, after the underlay
    layers = [_route_layers(drawn, paper)]

    sym = SYMBOL_SIZE_MM
    layer, centres = _outlet_layer(plan, routes, lay, sym)
    layers.append(layer)
    obstacles = []
    if len(centres):     # the symbols' boxes, made at once
        cx, cy = centres[:, 0], centres[:, 1]
        obstacles.extend(shapely.box(cx - sym / 2, cy - sym / 2, cx + sym / 2, cy + sym / 2))
    layer, board_boxes = _board_layer(plan, lay, sym * 1.3, da)
    layers.append(layer)
    obstacles.extend(board_boxes)

    # labels
    label_order = sorted(drawn, key=lambda r: (-order[r.band], r.index))
    # made one at a time as placement asks for them (on a dense sheet most are
    # never looked at: they would only pile up for the garbage collector)
    specs = (LabelSpec(r.key, r.label, tuple(map(tuple, paper[r.index].tolist())), LABEL_FONT_MM,
                       clearance=r.width / 2 + CASING_MM / 2 + 0.4,
                       prefix=(LABEL_FONT_MM * 1.3 if r.other else 0.0))
             for r in label_order)
    route_lines = _lines([paper[r.index] for r in drawn if len(paper[r.index]) >= 2])
    bounds = (da.x + 1.0, da.y + 1.0, da.right - 1.0, da.bottom - 1.0)
    dense = len(label_order) >= DENSE_LABELS
    if dense:       # room for the note listing labels left out, along the bottom
        obstacles.append(box(da.x, da.bottom - NOTE_MM * 1.2 - 2.0, da.right, da.bottom))
    placed = place_labels(specs, obstacles=obstacles, bounds=bounds, lines=route_lines,
                          budget=LABEL_BUDGET if dense else None,
                          leader_cap=LEADER_CAP if dense else None)
    by_label = {r.key: r for r in routes}
    labels = dwg.g(id="zs-labels", font_family=FONT)
    leaders = dwg.g(id="zs-leaders", fill="none", stroke=INK)
    leaders["stroke-width"] = "0.18"
    for p in placed:
        r = by_label[p.key]
        if p.leader is not None:
            (x0, y0), (x1, y1) = p.leader
            ln = dwg.line((_f(x0), _f(y0)), (_f(x1), _f(y1)))
            ln["data-circuit"] = p.key
            leaders.add(ln)
            dot = dwg.circle((_f(x0), _f(y0)), "0.45", fill=INK)
            leaders.add(dot)
        g = dwg.g(**{"class": f"label label-{r.band}"})
        g["data-circuit"] = p.key
        g["transform"] = f"translate({_f(p.cx)} {_f(p.cy)}) rotate({_f(p.angle)})"
        rect = dwg.rect((_f(-p.width / 2), _f(-p.height / 2)), (_f(p.width), _f(p.height)))
        rect["fill"] = "#ffffff"
        rect["fill-opacity"] = "0.92"
        rect["stroke"] = r.colour
        rect["stroke-width"] = "0.25"
        rect["rx"] = "0.4"
        g.add(rect)
        if r.other:
            gx = -p.width / 2 + PAD_X + p.font_size * 0.95 / 2
            g.add(_warning_glyph(dwg, gx, 0.0, p.font_size * 0.95))
        # start-anchored; a quarter of the room kept for hinted raster text goes left
        spare = p.width - 2 * PAD_X - p.prefix - text_width(p.text, p.font_size)
        tx = -p.width / 2 + PAD_X + p.prefix + 0.25 * max(0.0, spare)
        g.add(_text(dwg, tx, p.font_size * 0.36, p.text, p.font_size))
        labels.add(g)
    dwg.add(leaders)
    dwg.add(labels)
    got = {p.key for p in placed}
    left_out = [r.key for r in label_order if r.key not in got and len(paper[r.index]) >= 2]
    if left_out:
        dwg.add(_unlabelled_note(dwg, da, left_out))

    _frame_and_title_block(dwg, lay, results, routes, measured, underlay, _date_text(date))
    return _serialise(dwg, layers, at)


def _unlabelled_note(dwg, da, keys):
    """A line along the bottom of the drawing area naming the routes left unlabelled."""
    head = "Not labelled on the plan (see the schedule): "
    width = da.width - 2.0
    text = head
    for j, k in enumerate(keys):
        more = len(keys) - j - 1
        tail = f", … and {more} more" if more else ""
        cand = text + ("" if j == 0 else ", ") + k
        if text_width(cand + tail, NOTE_MM) > width - 2.0 and j > 0:
            text = text + f", … and {len(keys) - j} more"
            break
        text = cand
    g = dwg.g(id="zs-unlabelled", font_family=FONT)
    g["data-count"] = str(len(keys))
    h = NOTE_MM * 1.2 + 1.0
    back = dwg.rect((_f(da.x + 0.5), _f(da.bottom - h - 0.5)), (_f(width), _f(h)), fill="#ffffff")
    back["fill-opacity"] = "0.92"
    g.add(back)
    g.add(_text(dwg, da.x + 1.5, da.bottom - 0.5 - h / 2 + NOTE_MM * 0.36, text, NOTE_MM,
                **{"class": "unlabelled"}))
    return g


def _sheet_drawing(sh):
    """An empty SVG sheet in millimetres."""
    dwg = svgwrite.Drawing(size=(f"{sh.width_mm:g}mm", f"{sh.height_mm:g}mm"), debug=False,
                           profile="full", viewBox=f"0 0 {sh.width_mm:g} {sh.height_mm:g}")
    return dwg


def _serialise(dwg, layers=(), at: int | None = None) -> str:
    """The document as text; ``layers`` (pieces of SVG markup) go in after the
    first ``at`` elements of ``dwg`` (default: after all of them).  The pieces
    are joined once, into the document itself (on a whole building they run to
    tens of megabytes)."""
    root = dwg.get_xml()
    if not layers:
        body = ET.tostring(root, encoding="unicode", short_empty_elements=True)
        return '<?xml version="1.0" encoding="UTF-8"?>\n' + body + "\n"
    rest = list(root)[at:] if at is not None else []
    del root[len(root) - len(rest):]
    head = ET.tostring(root, encoding="unicode", short_empty_elements=True)
    # the root's end tag (or, childless, the end of its empty-element tag) comes off
    head = head[:-len("</svg>")] if len(root) else head[:-len(" />")] + ">"
    tail = "".join(ET.tostring(el, encoding="unicode", short_empty_elements=True)
                   for el in rest)
    return "".join(['<?xml version="1.0" encoding="UTF-8"?>\n', head, *layers, tail, "</svg>\n"])


# --------------------------------------------------------------------------
# the big layers as SVG text
# --------------------------------------------------------------------------
# Routes, outlets and boards run to tens of thousands of elements on a whole
# building; building an element tree for each and serialising it took most of
# the render time.  These functions write the same markup as text: the bytes
# ElementTree writes for the same elements (attributes in the order given,
# values escaped by _attr, text by _cdata, " />" closing empty elements).

#: Text content escapes, as ElementTree writes them (``& < >``).
_TEXT_ESCAPES = (("&", "&amp;"), ("<", "&lt;"), (">", "&gt;"))
#: Attribute value escapes, as ElementTree writes them: the text escapes, ``"``,
#: and CR, LF, tab as character references (so they survive attribute-value
#: normalisation).
_ATTR_ESCAPES = _TEXT_ESCAPES + (('"', "&quot;"), ("\r", "&#13;"), ("\n", "&#10;"),
                                 ("\t", "&#09;"))


def _escape(text: str, table) -> str:
    for char, ref in table:            # "&" first: the references are not escaped again
        if char in text:
            text = text.replace(char, ref)
    return text


def _cdata(text: str) -> str:
    """Text content escaped as ElementTree escapes it."""
    return _escape(text, _TEXT_ESCAPES)


def _attr(text: str) -> str:
    """An attribute value escaped as ElementTree escapes it."""
    return _escape(text, _ATTR_ESCAPES)


def _element(tag: str, attrs, text: str | None = None) -> str:
    """One element with ``attrs`` (name, value) in the order given and optional text."""
    a = "".join(f' {k}="{_attr(v)}"' for k, v in attrs)
    if text:
        return f"<{tag}{a}>{_cdata(text)}</{tag}>"
    return f"<{tag}{a} />"


def _group(open_tag: str, children: list[str]) -> str:
    """``<g ...>children</g>``, or ``<g ... />`` when empty (as ElementTree writes it)."""
    if not children:
        return open_tag[:-1] + " />"
    return "".join([open_tag, *children, "</g>"])      # one copy of the text, not three


def _route_layers(drawn, paper) -> str:
    """The white casings under the routes, then the routes in their band's style.

    Each route is a ``polyline`` carrying its circuit, band and status as
    ``data-`` attributes and its label text as a ``title`` (a tooltip in
    viewers)."""
    casings, lines = [], []
    for r in drawn:
        points = _points_text(paper[r.index])
        casings.append(f'<polyline points="{points}" stroke-width="{_f(r.width + CASING_MM)}" />')
        attrs = [("class", f"route route-{r.band}"), ("data-band", r.band),
                 ("data-circuit", r.key), ("data-status", r.status), ("points", points),
                 ("stroke", r.colour)]
        if r.dash:
            attrs.append(("stroke-dasharray", r.dash))
        attrs.append(("stroke-width", _f(r.width)))
        a = "".join(f' {k}="{_attr(v)}"' for k, v in attrs if v)
        label = str(r.label)
        title = f"<title>{_cdata(label)}</title>" if label else "<title />"
        lines.append(f"<polyline{a}>{title}</polyline>")
    casings = _group('<g fill="none" id="zs-casings" opacity="0.85" stroke="#ffffff" '
                     'stroke-linecap="round" stroke-linejoin="round">', casings)
    return "".join([casings, _group('<g fill="none" id="zs-routes" stroke-linecap="butt" '
                                    'stroke-linejoin="round">', lines)])


def _outlet_layer(plan, routes, lay, sym: float) -> tuple[str, np.ndarray]:
    """Every outlet's symbol on a white halo; returns the layer and the symbols' centres."""
    at = [o.at for c in plan.circuits for o in c.outlets]
    if not at:
        return '<g id="zs-outlets" />', np.zeros((0, 2))
    at = np.asarray(at, dtype=float).reshape(-1, 2)
    xs, ys = lay.to_paper(at[:, 0], at[:, 1])
    kinds = [o.kind if o.kind in SYMBOL_IDS else "fixed" for c in plan.circuits for o in c.outlets]
    symbols = use_attributes_many(kinds, xs, ys, sym, INK)
    cx, cy = _fs(xs), _fs(ys)
    halo = f'" fill="#ffffff" fill-opacity="0.9" r="{_f(sym * 0.5)}" />'
    classes = {k: f' class="outlet outlet-{_attr(k)}"' for k in SYMBOL_IDS}
    by_key = {r.index: r for r in routes}
    out = []
    n = 0
    for i, c in enumerate(plan.circuits):
        circuit = f' data-circuit="{_attr(by_key[i].key)}"'
        for o in c.outlets:
            name = f' data-name="{_attr(o.name)}"' if o.name else ""
            out.append(f'<circle cx="{cx[n]}" cy="{cy[n]}{halo}'
                       f"<use {symbols[n]}{classes[kinds[n]]}{circuit}{name} />")
            n += 1
    return _group('<g id="zs-outlets">', out), np.column_stack([xs, ys])


def _board_layer(plan, lay, bsize: float, da) -> tuple[str, list]:
    """Every board's symbol with its reference beside it; returns the layer and the
    boxes (symbol and reference) that labels must keep clear of."""
    out, boxes = [], []
    for b in plan.boards:
        if b.at is None:
            continue
        x, y = lay.to_paper(b.at[0], b.at[1])
        x, y = float(x), float(y)
        out.append(_element("rect", [("fill", "#ffffff"), ("height", _f(bsize)),
                                     ("width", _f(bsize)), ("x", _f(x - bsize / 2)),
                                     ("y", _f(y - bsize / 2))]))
        out.append(f'<use {use_attributes("board", x, y, bsize, INK)} class="board" '
                   f'data-board="{_attr(b.ref)}" />')
        boxes.append(box(x - bsize / 2, y - bsize / 2, x + bsize / 2, y + bsize / 2))
        # board reference, placed above-left of the symbol where it fits
        fs = 3.0
        w = text_width(b.ref, fs, True)
        tx, ty = x - bsize / 2 - 0.8 - w, y - bsize / 2 - 0.6
        if tx < da.x + 1:
            tx = x + bsize / 2 + 0.8
        out.append(_element("text", [("class", "board-ref"), ("fill", INK), ("font-family", FONT),
                                     ("font-size", _f(fs)), ("font-weight", "bold"),
                                     ("x", _f(tx)), ("y", _f(ty))], b.ref))
        boxes.append(box(tx - 0.3, ty - fs * 0.8, tx + w + 0.3, ty + fs * 0.25))
    return _group('<g id="zs-boards">', out), boxes


def _lines(routes) -> list:
    """Shapely lines of routes (arrays of two or more points), made at once."""
    if not routes:
        return []
    coords = np.concatenate(routes)
    index = np.repeat(np.arange(len(routes)), [len(r) for r in routes])
    return list(shapely.linestrings(coords, indices=index))


def _legend_gradients(defs: ET.Element, tight: float) -> None:
    for lb in palette.legend_stops(tight, n=9):
        grad = ET.SubElement(defs, "linearGradient", {"id": f"zs-ramp-{lb.key}", "x1": "0",
                                                        "y1": "0", "x2": "1", "y2": "0"})
        for off, col in lb.stops:
            ET.SubElement(grad, "stop", {"offset": _f(off), "stop-color": col})


# --------------------------------------------------------------------------
# frame and title block
# --------------------------------------------------------------------------

def _frame_and_title_block(dwg, lay, results, routes, measured, underlay, date_text):
    fr, tb = lay.frame, lay.title_block
    g = dwg.g(id="zs-title-block", font_family=FONT)
    frame = dwg.rect((_f(fr.x), _f(fr.y)), (_f(fr.width), _f(fr.height)), fill="none",
                     stroke=INK)
    frame["stroke-width"] = "0.5"
    g.add(frame)
    top = dwg.line((_f(tb.x), _f(tb.y)), (_f(tb.right), _f(tb.y)), stroke=INK)
    top["stroke-width"] = "0.35"
    g.add(top)

    one_row = tb.height <= TITLE_BLOCK_ONE_ROW_MM + 1e-9
    legend_w, key_w, scale_w = 118.0, 52.0, 62.0
    if one_row:
        cells = {"legend": (tb.x, tb.y, legend_w, tb.height),
                 "key": (tb.x + legend_w, tb.y, key_w, tb.height),
                 "scale": (tb.x + legend_w + key_w, tb.y, scale_w, tb.height),
                 "title": (tb.x + legend_w + key_w + scale_w, tb.y,
                           tb.width - legend_w - key_w - scale_w, tb.height)}
    else:
        h = tb.height / 2
        cells = {"legend": (tb.x, tb.y, legend_w, h),
                 "key": (tb.x + legend_w, tb.y, tb.width - legend_w, h),
                 "scale": (tb.x, tb.y + h, scale_w, h),
                 "title": (tb.x + scale_w, tb.y + h, tb.width - scale_w, h)}
        mid = dwg.line((_f(tb.x), _f(tb.y + h)), (_f(tb.right), _f(tb.y + h)), stroke=RULE)
        mid["stroke-width"] = "0.25"
        g.add(mid)
    for name, (x, y, w, h) in cells.items():
        if x > tb.x + 1e-9:
            sep = dwg.line((_f(x), _f(y)), (_f(x), _f(y + h)), stroke=RULE)
            sep["stroke-width"] = "0.25"
            g.add(sep)
    _legend(dwg, g, cells["legend"], results.plan.settings.tight, measured, routes)
    _symbol_key(dwg, g, cells["key"])
    _scale_block(dwg, g, cells["scale"], lay)
    _title(dwg, g, cells["title"], lay, results, routes, measured, underlay, date_text)
    dwg.add(g)


def _legend(dwg, g, cell, tight, measured, routes):
    x, y, w, h = cell
    pad = 3.0
    lg = dwg.g(id="zs-legend")
    head = ("Measured margin, 1 − Zs/Zs max" if measured is not None
            else "Margin to the Zs limit, 1 − Zs/Zs max")
    lg.add(_text(dwg, x + pad, y + 4.6, head, 2.3, weight="bold"))
    bands = palette.legend_stops(tight)
    gap = 2.0
    rw = (w - 2 * pad - 2 * gap) / 3
    ry, rh = y + 6.6, 3.4
    ticks = {"fail": ("≤ −50 %", None), "tight": ("0 %", None),
             "pass": (f"{100 * tight:g} %", f"≥ {100 * palette.pass_full(tight):g} %")}
    for j, lb in enumerate(bands):
        rx = x + pad + j * (rw + gap)
        ramp = dwg.rect((_f(rx), _f(ry)), (_f(rw), _f(rh)), fill=f"url(#zs-ramp-{lb.key})")
        ramp["class"] = f"legend-ramp legend-{lb.key}"
        lg.add(ramp)
        lo, hi = ticks[lb.key]
        lg.add(_text(dwg, rx, ry + rh + 2.4, lo, 1.8, fill=MUTED))
        if hi:
            lg.add(_text(dwg, rx + rw, ry + rh + 2.4, hi, 1.8, fill=MUTED, anchor="end"))
        # line sample in the band's style and colour
        sy = ry + rh + 6.4
        line = dwg.line((_f(rx), _f(sy)), (_f(rx + 11), _f(sy)),
                        stroke=palette.BANDS[lb.key].sample)
        line["stroke-width"] = _f(lb.width_mm)
        line["stroke-linecap"] = "butt"
        line["class"] = f"legend-line legend-{lb.key}"
        if lb.dash:
            line["stroke-dasharray"] = lb.dash
        lg.add(line)
        lg.add(_text(dwg, rx + 12.5, sy + 0.8, lb.label, 2.3, weight="bold"))
        desc = lb.description.replace("Zs within Zs max, ", "")
        for n, ln in enumerate(_wrap(desc, rw, 1.8)[:2]):
            lg.add(_text(dwg, rx, sy + 4.0 + 2.2 * n, ln, 1.8, fill=MUTED))
    # no result, and other checks
    ny = y + h - 2.6
    dash, width = palette.style("none")
    nl = dwg.line((_f(x + pad), _f(ny - 0.6)), (_f(x + pad + 11), _f(ny - 0.6)),
                  stroke=palette.NO_RESULT_COLOUR)
    nl["stroke-width"] = _f(width)
    nl["stroke-dasharray"] = dash
    lg.add(nl)
    none_text = "not measured" if measured is not None else "no result"
    lg.add(_text(dwg, x + pad + 12.5, ny, none_text, 1.8, fill=MUTED))
    gx = x + pad + rw + gap
    lg.add(_warning_glyph(dwg, gx + 1.3, ny - 0.7, 2.4))
    lg.add(_text(dwg, gx + 3.4, ny, "another check fails (see the schedule)", 1.8, fill=MUTED))
    g.add(lg)


def _symbol_key(dwg, g, cell):
    x, y, w, h = cell
    pad = 3.0
    kg = dwg.g(id="zs-symbol-key")
    kg.add(_text(dwg, x + pad, y + 4.6, "Symbols", 2.3, weight="bold"))
    kinds = list(SYMBOL_IDS)
    cols = 2 if w < 90 else 3
    rows = math.ceil(len(kinds) / cols)
    cw = min(45.0, (w - 2 * pad) / cols)
    rh = min(6.5, (h - 8.0) / rows)
    for n, kind in enumerate(kinds):
        cx = x + pad + (n % cols) * cw
        cy = y + 9.5 + (n // cols) * rh
        kg.add(_raw(use(kind, cx + 2.2, cy, 4.4, INK)))
        name, fs = _fit_text(_KIND_NAMES[kind], cw - 6.0, 1.9)
        kg.add(_text(dwg, cx + 5.4, cy + 0.7, name, fs))
    g.add(kg)


def _scale_block(dwg, g, cell, lay):
    x, y, w, h = cell
    pad = 3.0
    sg = dwg.g(id="zs-scale")
    sg.add(_text(dwg, x + pad, y + 4.6, f"Scale {lay.scale_label}", 2.3, weight="bold"))
    sg.add(_text(dwg, x + pad, y + 8.0, f"on {lay.sheet.name} {lay.sheet.orientation}",
                 1.9, fill=MUTED))
    length_m, length_mm, ticks = scale_bar(lay, max_mm=w - 2 * pad - 4.0)
    bx, by, bh = x + pad, y + h * 0.55, 1.6
    bar = dwg.g(id="zs-scale-bar")
    bar["data-length-m"] = f"{length_m:g}"
    bar["data-length-mm"] = _f(length_mm)
    for j in range(len(ticks) - 1):
        x0 = bx + ticks[j][1]
        x1 = bx + ticks[j + 1][1]
        seg = dwg.rect((_f(x0), _f(by)), (_f(x1 - x0), _f(bh)),
                       fill=INK if j % 2 == 0 else "#ffffff")
        bar.add(seg)
    outline = dwg.rect((_f(bx), _f(by)), (_f(length_mm), _f(bh)), fill="none", stroke=INK)
    outline["stroke-width"] = "0.2"
    outline["class"] = "scale-bar-outline"
    bar.add(outline)
    for j, (value, off) in enumerate(ticks):
        label = f"{value:g}" + (" m" if j == len(ticks) - 1 else "")
        bar.add(_text(dwg, bx + off, by + bh + 2.8, label, 1.8, anchor="middle"))
    sg.add(bar)
    sg.add(_text(dwg, x + pad, y + h - 2.6, f"True to scale when printed on {lay.sheet.name} at 100 %",
                 1.7, fill=MUTED))
    g.add(sg)


def _title(dwg, g, cell, lay, results, routes, measured, underlay, date_text):
    x, y, w, h = cell
    pad = 3.0
    tg = dwg.g(id="zs-title")
    plan = results.plan
    inner = w - 2 * pad
    title = plan.title or (Path(plan.path).stem if plan.path else "Plan")
    t, fs = _fit_text(title, inner, 3.5, bold=True, min_size=2.5)
    tg.add(_text(dwg, x + pad, y + 5.2, t, fs, weight="bold", **{"class": "title"}))
    files = []
    if plan.path:
        files.append(f"Plan {Path(plan.path).name}")
    if underlay is not None:
        files.append(f"floor plan {Path(underlay.file).name}")
    kind = "Marked-up plan, measured values" if measured is not None else "Marked-up plan"
    line2 = " · ".join([kind] + files)
    t, fs = _fit_text(line2, inner, 1.9)
    tg.add(_text(dwg, x + pad, y + 9.0, t, fs, fill=MUTED))
    bits = [f"Sheet {lay.sheet.name} {lay.sheet.orientation}", f"scale {lay.scale_label}"]
    if date_text:
        bits.append(f"date {date_text}")
    t, fs = _fit_text(" · ".join(bits), inner, 1.9)
    tg.add(_text(dwg, x + pad, y + 12.2, t, fs, fill=MUTED, **{"class": "sheet-info"}))

    # counts, with a chip of each band's colour
    if measured is not None:
        bands = [r.band for r in routes]
        counts = {k: bands.count(k) for k in ("pass", "tight", "fail")}
        counts_none = bands.count("none")
    else:
        counts = results.summary()
        counts_none = 0
    cy = y + 16.3
    cx = x + pad
    n = len(routes)
    head = f"{n} circuit{'s' if n != 1 else ''}" + (" (measured)" if measured is not None else "") + ":"
    tg.add(_text(dwg, cx, cy, head, 2.2, weight="bold"))
    cx += text_width(head, 2.2, True) + 1.5
    cg = dwg.g(id="zs-counts")
    for key in ("pass", "tight", "fail"):
        chip = dwg.rect((_f(cx), _f(cy - 1.9)), ("2.2", "2.2"), fill=palette.BANDS[key].sample)
        cg.add(chip)
        s = f"{counts[key]} {key}"
        cg.add(_text(dwg, cx + 3.0, cy, s, 2.2, **{"data-band": key, "data-count": str(counts[key])}))
        cx += 3.0 + text_width(s, 2.2) + 2.5
    if counts_none:
        s = f"{counts_none} not measured"
        cg.add(_text(dwg, cx, cy, s, 2.2, fill=MUTED))
        cx += text_width(s, 2.2) + 2.5
    others = sum(1 for r in routes if r.other)
    if others:
        cg.add(_warning_glyph(dwg, cx + 1.2, cy - 0.8, 2.4))
        cg.add(_text(dwg, cx + 3.0, cy, f"{others} with another check failing", 2.2))
    tg.add(cg)

    # the caution
    lines = _wrap("Caution: " + CAUTION, inner, 1.9)
    ly = y + 20.2
    max_lines = max(1, int((y + h - 1.4 - ly) / 2.35) + 1)
    if len(lines) > max_lines:
        lines = _wrap("Caution: " + CAUTION, inner, 1.6)
    step = 2.35 if len(lines) <= max_lines else 2.0
    cau = dwg.g(id="zs-caution")
    for j, ln in enumerate(lines):
        cau.add(_text(dwg, x + pad, ly + j * step, ln, 1.9 if step > 2.1 else 1.6))
    tg.add(cau)
    tg.add(_text(dwg, x + w - pad, y + 5.2, f"zsplan {__version__}", 1.7, anchor="end",
                 fill=MUTED))
    g.add(tg)


# --------------------------------------------------------------------------
# schedule
# --------------------------------------------------------------------------

def schedule_svg(results, *, sheet="A4", orientation="portrait") -> list[str]:
    """The schedule of expected test values, one SVG document per page.

    One row per circuit: board, ref, name, device, cable, length, R1+R2
    expected at the test temperature, the highest acceptable measured Zs,
    Zs max, the calculated Zs, the fault current If, the required
    disconnection time and the status; notes (why a check failed) follow
    the table; every page carries the safety caution in its footer.

    Parameters
    ----------
    results : zsplan.results.Results
    sheet : str, optional
        ISO 216 size. Default "A4".
    orientation : str, optional
        Default "portrait".

    Returns
    -------
    list of str
        SVG documents, in page order.
    """
    from .render_schedule import schedule_pages
    return schedule_pages(results, sheet=sheet, orientation=orientation)


# --------------------------------------------------------------------------
# print output
# --------------------------------------------------------------------------

def svg_to_png(svg: str, dpi: float = PNG_DPI) -> bytes:
    """Rasterise one sheet at ``dpi`` with cairosvg (safe mode; nothing fetched).

    The pixel size is the sheet size in inches times ``dpi`` (25.4 mm per
    inch), so the picture prints at true scale at that resolution.
    """
    import cairosvg
    return cairosvg.svg2png(bytestring=svg.encode("utf-8"), dpi=dpi)


def _pdf_date(date_text: str | None) -> str:
    # a fixed creation date keeps the PDF byte-identical from run to run
    return f"{date_text}T00:00:00" if date_text else "2000-01-01T00:00:00"


def svg_to_pdf(pages, *, title: str = "", date=None) -> bytes:
    """Several SVG sheets as one multi-page PDF, each page at its own size.

    Each sheet is parsed by cairosvg in its safe mode (``bytestring``,
    ``unsafe`` off: no entities, only ``data:`` URLs fetched) and drawn onto
    one shared cairo PDF surface, one page per sheet (the page is resized
    to the sheet before drawing).  The document's creation date is fixed
    (the ``date`` given, else 2000-01-01), so the same input gives the same
    bytes.

    Parameters
    ----------
    pages : sequence of str
        SVG documents sized in physical units.
    title : str, optional
        PDF title.
    date : str or datetime.date, optional

    Returns
    -------
    bytes
    """
    import cairocffi
    from cairosvg.parser import Tree
    from cairosvg.surface import PDFSurface

    out = io.BytesIO()
    shared = cairocffi.PDFSurface(out, 1, 1)
    stamp = _pdf_date(_date_text(date))
    for key, value in ((cairocffi.PDF_METADATA_TITLE, title or "zsplan plan"),
                       (cairocffi.PDF_METADATA_CREATOR, f"zsplan {__version__}"),
                       (cairocffi.PDF_METADATA_CREATE_DATE, stamp),
                       (cairocffi.PDF_METADATA_MOD_DATE, stamp)):
        shared.set_metadata(key, value)

    class _Page(PDFSurface):
        def _create_surface(self, width, height):
            shared.set_size(width, height)
            return shared, width, height

        def finish(self):       # the shared surface is finished once, below
            pass

    for svg in pages:
        tree = Tree(bytestring=svg.encode("utf-8"))
        _Page(tree, None, 96)
        shared.show_page()
    shared.finish()
    return out.getvalue()


_SUFFIXES = (".svg", ".pdf", ".png")


def write_drawing(results, out_path, *, sheet="A3", orientation=None, scale="fit",
                  measured=None, inputs=(), date=None, dpi: float = PNG_DPI) -> None:
    """Write the marked-up plan: ``.svg`` (drawing sheet), ``.pdf`` (drawing
    sheet then the schedule sheets) or ``.png`` (drawing sheet at ``dpi``).

    The file is written atomically (:func:`zsplan.outputs.write_atomic`); the
    plan file, the floor plan and ``inputs`` are never overwritten; nothing
    is written when anything fails.

    Parameters
    ----------
    results : zsplan.results.Results
    out_path : str or os.PathLike
    sheet, orientation, scale, measured, date
        As for :func:`render_svg`.
    inputs : iterable of path, optional
        Further input files that must not be overwritten.
    dpi : float, optional
        PNG resolution. Default 150. [dot/inch]

    Raises
    ------
    PlanError
        Unknown suffix, output path is an input, or any rendering problem.
    """
    suffix = Path(out_path).suffix.lower()
    if suffix not in _SUFFIXES:
        raise PlanError(Problem(str(out_path), f"cannot write {suffix or 'a file without a suffix'!s}; "
                                "expected a name ending in .svg, .pdf or .png"))
    plan = results.plan
    protect = [p for p in (plan.path, plan.drawing.floorplan, *inputs) if p]
    svg = render_svg(results, sheet=sheet, orientation=orientation, scale=scale,
                     measured=measured, date=date)
    if suffix == ".svg":
        data = svg.encode("utf-8")
    elif suffix == ".png":
        data = svg_to_png(svg, dpi)
    else:
        pages = [svg] + schedule_svg(results)
        title = plan.title or (Path(plan.path).stem if plan.path else "zsplan plan")
        data = svg_to_pdf(pages, title=title, date=date)
    write_atomic(out_path, data, inputs=protect)


#: Another name for :func:`write_drawing`.
render = write_drawing

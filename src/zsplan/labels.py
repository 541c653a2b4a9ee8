"""Placing route labels on the marked-up plan so that they stay readable.

Every route gets one label.  :func:`place_labels` puts it beside the route's
longest straight segment, turned to run along it and kept upright (text
reads from the bottom or the right-hand side of the sheet, as ISO 128-style
drawings do), clear of the labels already placed and of the plan symbols.
The placement is greedy, label by label in the order given:

1. candidate boxes along each of the route's longest segments (several
   positions along the segment, on either side of the line, offset by the
   line's half width plus a gap); a candidate must lie inside the drawing
   area and touch no placed label, leader line or symbol; among the free ones
   the best by a score that prefers long segments, the middle of a segment,
   the upper/left side and as few crossings of other routes as possible;
2. the same with a smaller font;
3. a horizontal label near the route joined to it by a thin leader line
   that runs through no other label or symbol (it may cross other leaders);
4. the same, letting the leader cross labels (fewest first);
5. if even that fails, the best candidate of step 1 is used and its
   collisions are counted (:attr:`Placement.collisions`), never hidden.

Text widths are computed from the advance widths of the DejaVu Sans font
(the font the renderers ask for), so the label box fits the printed text.

On a crowded sheet (a budget given) a grid of the symbol boxes proves most
collisions at once, before any search through the obstacles; it only ever
says "blocked" where the search would, so the placement is the same.

References
----------
.. [1] ISO 128-20:1996 / ISO 3098-0:1997, technical drawings: lines and
   lettering (text readable from the bottom or the right-hand side of the
   drawing; from memory).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely
from shapely import STRtree
from shapely.geometry import Polygon, box

__all__ = [
    "LabelSpec",
    "Placement",
    "count_overlaps",
    "label_polygon",
    "place_labels",
    "text_width",
    "upright_angle",
]

#: Font units per em of DejaVu Sans.
UNITS_PER_EM = 2048

# Advance widths of DejaVu Sans 2.37 (Book and Bold), font units of 2048 per
# em, read from the font files with cairo's text extents (metric hinting off).
# Characters in the order of this string:
_CHARS = (" !\"#$%&'()*+,-./0123456789:;<=>?@ABCDEFGHIJKLMNOPQRSTUVWXYZ[\\]^_`"
          "abcdefghijklmnopqrstuvwxyz{|}~·Ω°²³µ–—−≤≥…±×")
_BOOK = (
    651, 821, 942, 1716, 1303, 1946, 1597, 563, 799, 799, 1024, 1716, 651, 739, 651, 690,
    1303, 1303, 1303, 1303, 1303, 1303, 1303, 1303, 1303, 1303, 690, 690, 1716, 1716, 1716,
    1087, 2048, 1401, 1405, 1430, 1577, 1294, 1178, 1587, 1540, 604, 604, 1343, 1141, 1767,
    1532, 1612, 1235, 1612, 1423, 1300, 1251, 1499, 1401, 2025, 1403, 1251, 1403, 799, 690,
    799, 1716, 1024, 1024, 1255, 1300, 1126, 1300, 1260, 721, 1300, 1298, 569, 569, 1186,
    569, 1995, 1298, 1253, 1300, 1300, 842, 1067, 803, 1298, 1212, 1675, 1212, 1212, 1075,
    1303, 690, 1303, 1716, 651, 1565, 1024, 821, 821, 1303, 1024, 2048, 1716, 1716, 1716,
    2048, 1716, 1716)
_BOLD = (
    713, 934, 1067, 1716, 1425, 2052, 1786, 627, 936, 936, 1071, 1716, 778, 850, 778, 748,
    1425, 1425, 1425, 1425, 1425, 1425, 1425, 1425, 1425, 1425, 819, 819, 1716, 1716, 1716,
    1188, 2048, 1585, 1561, 1503, 1700, 1399, 1399, 1681, 1714, 762, 762, 1587, 1305, 2038,
    1714, 1741, 1501, 1741, 1577, 1475, 1397, 1663, 1585, 2259, 1579, 1483, 1485, 936, 748,
    936, 1716, 1024, 1024, 1382, 1466, 1214, 1466, 1389, 891, 1466, 1458, 702, 702, 1362,
    702, 2134, 1458, 1407, 1466, 1466, 1010, 1219, 979, 1458, 1335, 1892, 1321, 1335, 1192,
    1458, 748, 1458, 1716, 778, 1741, 1024, 897, 897, 1507, 1024, 2048, 1716, 1716, 1716,
    2048, 1716, 1716)
_ADVANCE = {False: dict(zip(_CHARS, _BOOK)), True: dict(zip(_CHARS, _BOLD))}
#: Width assumed for a character not in the table (a wide letter). [font units]
_UNKNOWN = 2048


def text_width(text: str, font_size: float, bold: bool = False) -> float:
    """Width of a line of text set in DejaVu Sans.

    .. math:: w = \\frac{s}{2048} \\sum_i a_i

    with :math:`s` the font size and :math:`a_i` the advance widths of the
    characters in font units (2048 per em); unknown characters count as a
    full em.

    Parameters
    ----------
    text : str
    font_size : float
        Font size (em). [mm]
    bold : bool, optional

    Returns
    -------
    float
        Advance width of the text. [mm]
    """
    table = _ADVANCE[bool(bold)]
    units = sum(table.get(ch, _UNKNOWN) for ch in text)
    return units * font_size / UNITS_PER_EM


def upright_angle(dx: float, dy: float) -> float:
    """Text angle (degrees, SVG sense: clockwise on a y-down sheet) for a line
    running along ``(dx, dy)``, turned so that the text stays upright.

    The result lies in [-90, 90): horizontal text reads left to right and
    vertical text reads upwards (from the right-hand side of the sheet).
    """
    a = math.degrees(math.atan2(dy, dx))
    if a >= 90.0:
        a -= 180.0
    elif a < -90.0:
        a += 180.0
    if a >= 90.0 - 1e-9:
        a = -90.0
    return a


def label_polygon(cx: float, cy: float, width: float, height: float, angle_deg: float) -> Polygon:
    """The box of a label centred on ``(cx, cy)`` turned by ``angle_deg``."""
    a = math.radians(angle_deg)
    ux, uy = math.cos(a), math.sin(a)
    nx, ny = -uy, ux
    hw, hh = width / 2.0, height / 2.0
    pts = [(cx + sx * hw * ux + sy * hh * nx, cy + sx * hw * uy + sy * hh * ny)
           for sx, sy in ((-1, -1), (1, -1), (1, 1), (-1, 1))]
    return Polygon(pts)


def label_polygons(cx, cy, width: float, height: float, angle_deg) -> np.ndarray:
    """:func:`label_polygon` of many centres (and angles) at once, as an array of polygons."""
    cx, cy, angle = np.broadcast_arrays(np.asarray(cx, float), np.asarray(cy, float),
                                        np.asarray(angle_deg, float))
    a = np.radians(angle)
    ux, uy = np.cos(a), np.sin(a)
    nx, ny = -uy, ux
    hw, hh = width / 2.0, height / 2.0
    corners = [(sx, sy) for sx, sy in ((-1, -1), (1, -1), (1, 1), (-1, 1), (-1, -1))]
    xy = np.stack([np.stack([cx + sx * hw * ux + sy * hh * nx, cy + sx * hw * uy + sy * hh * ny], axis=-1)
                   for sx, sy in corners], axis=-2)
    return shapely.polygons(xy)


@dataclass(frozen=True)
class LabelSpec:
    """A label to place.

    Attributes
    ----------
    key : str
        Identifies the label (the circuit, ``"CU1/3"``).
    text : str
        One line of text.
    route : tuple of (float, float)
        The route on the sheet. [mm]
    font_size : float
        Preferred font size. [mm]
    clearance : float
        Distance kept between the route's centre line and the label box
        (half the line width plus a gap). [mm]
    prefix : float
        Extra width before the text (for a warning glyph). [mm]
    bold : bool
    """

    key: str
    text: str
    route: tuple
    font_size: float = 2.5
    clearance: float = 0.8
    prefix: float = 0.0
    bold: bool = False


@dataclass(frozen=True)
class Placement:
    """Where a label went.

    ``(cx, cy)`` is the centre of the box, ``angle`` its rotation in degrees
    (SVG sense), ``width`` and ``height`` its size, ``font_size`` the font
    size used; ``leader`` is ``((x_route, y_route), (x_box, y_box))`` when the
    label sits away from its route, else None; ``collisions`` counts the
    placed labels, leaders and symbols it touches (0 unless every other way
    failed).  All lengths in mm.
    """

    key: str
    text: str
    cx: float
    cy: float
    angle: float
    width: float
    height: float
    font_size: float
    prefix: float
    leader: tuple | None = None
    collisions: int = 0

    @property
    def polygon(self) -> Polygon:
        return label_polygon(self.cx, self.cy, self.width, self.height, self.angle)


PAD_X = 0.6      # mm, text to box edge along the text; zsplan layout choice
PAD_Y = 0.35     # mm, above and below; zsplan layout choice
LINE_HEIGHT = 1.2   # box height per unit font size (ascender + descender of DejaVu Sans
                    # is 1.164 em: 1901 + 483 font units); zsplan layout choice
#: Room for text set with hinted metrics: rasterised by cairo at 100-150 dpi,
#: 2-2.5 mm DejaVu Sans text measured up to 4.6 % wider than its advance widths.
RASTER_ALLOWANCE = 1.05
SMALLER = 0.8    # font reduction tried before a leader; zsplan layout choice
MIN_FONT = 1.8   # smallest lettering, ISO 3098 h = 1.8 mm series (from memory)
VERTICAL_PENALTY = 0.3   # horizontal text reads more easily; zsplan layout choice
_ALONG = (0.5, 0.35, 0.65, 0.2, 0.8, 0.05, 0.95)
_MAX_SEGMENTS = 6
LEADER_STEP = 3.0    # mm between rings of leader positions; zsplan layout choice
LEADER_RINGS = 30
_LEADER_CHUNK = 32   # leaders checked at a time, best first (the result is the same)


def _box_size(spec: LabelSpec, fs: float, prefix: float) -> tuple[float, float]:
    w = text_width(spec.text, fs, spec.bold) * RASTER_ALLOWANCE + prefix + 2 * PAD_X
    h = fs * LINE_HEIGHT + 2 * PAD_Y
    return w, h


def _along_candidates(spec: LabelSpec, fs: float):
    """(cx, cy, angle, w, h, base score) for boxes along the route."""
    pts = np.asarray(spec.route, dtype=float)
    prefix = spec.prefix * fs / spec.font_size
    w, h = _box_size(spec, fs, prefix)
    if len(pts) < 2:
        return [], w, h, prefix
    d = np.diff(pts, axis=0)
    lengths = np.hypot(d[:, 0], d[:, 1])
    order = [i for i in np.argsort(-lengths, kind="stable") if lengths[i] > 1e-9][:_MAX_SEGMENTS]
    longest = lengths[order[0]] if order else 0.0
    out = []
    for rank, i in enumerate(order):
        L = float(lengths[i])
        (x0, y0), (dx, dy) = pts[i], d[i]
        ux, uy = dx / L, dy / L
        ang = upright_angle(dx, dy)
        a = math.radians(ang)
        nx, ny = -math.sin(a), math.cos(a)      # box's "down" direction
        off = h / 2.0 + spec.clearance
        free = L - w
        fracs = _ALONG if free > 0 else (0.5,)
        overhang = max(0.0, -free) / w
        for s in fracs:
            t = (w / 2.0 + s * free) if free > 0 else L / 2.0
            px, py = x0 + ux * t, y0 + uy * t
            for side, side_pen in ((-1.0, 0.0), (1.0, 0.15)):
                cx, cy = px + side * off * nx, py + side * off * ny
                score = (0.6 * rank + (1.0 - L / longest) + 0.8 * abs(s - 0.5)
                         + side_pen + 3.0 * overhang + VERTICAL_PENALTY * abs(math.sin(a)))
                out.append((cx, cy, ang, score))
    return out, w, h, prefix


class _Cover:
    """A grid over the axis-aligned box obstacles (the plan symbols): which
    cells lie wholly inside one of them.

    It proves collisions without a search through the obstacles: a label box
    that wholly holds a covered cell touches the obstacle holding the cell,
    and a leader with a point in a covered cell and an end outside that
    obstacle crosses it (runs through its inside and out of it).  The proof
    is only ever "yes"; when it cannot say, the exact search decides, so the
    placement is the same with or without it.  Every cell stays
    :attr:`EPS` clear of its obstacle's edges and every test keeps that
    clearance, far more than the rounding of any coordinate involved, so a
    proof is never an artefact of rounding.
    """

    CELL = 1.0      # mm, cell side; zsplan implementation choice
    MAX_CELLS = 4_000_000   # cells in all, at most (an A0 sheet has 1.0 million of 1 mm)
    MAX_SIDE = 32_768       # cells along a side, at most
    EPS = 1e-6      # mm, clearance from edges kept by cells and tests

    def __init__(self, bounds: np.ndarray):
        self.boxes = bounds
        lo = bounds[:, :2].min(axis=0)
        hi = bounds[:, 2:].max(axis=0)
        w, h = (hi - lo).tolist()
        # larger cells where obstacles spread wider than a sheet (any size is sound)
        self.cell = max(self.CELL, math.sqrt(w * h / self.MAX_CELLS), max(w, h) / self.MAX_SIDE)
        n = np.ceil((hi - lo) / self.cell).astype(int) + 1
        self.xe = lo[0] + self.cell * np.arange(n[0] + 1)     # cell edges
        self.ye = lo[1] + self.cell * np.arange(n[1] + 1)
        i0, i1 = self._inner(self.xe, bounds[:, 0], bounds[:, 2])
        j0, j1 = self._inner(self.ye, bounds[:, 1], bounds[:, 3])
        # each cell's owner: one of the boxes it lies in (any one will do), -1 for none;
        # filled a group of boxes of the same size in cells at a time
        owner = np.full((n[1], n[0]), -1, dtype=np.int32)
        ni, nj = i1 - i0, j1 - j0
        some = np.nonzero((ni > 0) & (nj > 0))[0]
        size = ni[some] * (int(nj.max(initial=0)) + 1) + nj[some]     # (ni, nj) as one number
        for z in np.unique(size).tolist():
            k = some[size == z]
            a, b = int(ni[k[0]]), int(nj[k[0]])
            rows = j0[k][:, None, None] + np.arange(b)[None, :, None]
            cols = i0[k][:, None, None] + np.arange(a)[None, None, :]
            owner[rows, cols] = k[:, None, None].astype(np.int32)
        self.owner = owner
        self.sat = np.zeros((n[1] + 1, n[0] + 1), dtype=np.int32)   # summed-area table
        self.sat[1:, 1:] = (owner >= 0).cumsum(axis=0, dtype=np.int32).cumsum(axis=1,
                                                                           dtype=np.int32)

    @classmethod
    def of(cls, geoms) -> "_Cover | None":
        """The cover of those of ``geoms`` that are axis-aligned rectangles (None if none)."""
        arr = np.asarray(geoms, dtype=object)
        if not len(arr):
            return None
        simple = ((shapely.get_type_id(arr) == 3) & (shapely.get_num_interior_rings(arr) == 0)
                  & (shapely.get_num_coordinates(arr) == 5))
        if not simple.any():
            return None
        idx = np.nonzero(simple)[0]
        xy = shapely.get_coordinates(arr[idx]).reshape(-1, 5, 2)     # the outline: no holes
        b = shapely.bounds(arr[idx])
        # a rectangle: its four corners are the four corners of its bounding box, each
        # once, joined by edges along the axes (not a bow tie)
        x, y = xy[:, :4, 0], xy[:, :4, 1]
        rect = (b[:, 2] > b[:, 0]) & (b[:, 3] > b[:, 1])
        for cx, cy in ((0, 1), (2, 1), (2, 3), (0, 3)):
            rect &= ((x == b[:, [cx]]) & (y == b[:, [cy]])).any(axis=1)
        dx, dy = np.diff(xy[:, :, 0], axis=1), np.diff(xy[:, :, 1], axis=1)
        rect &= ((dx == 0) != (dy == 0)).all(axis=1) & np.isfinite(b).all(axis=1)
        if not rect.any():
            return None
        return cls(b[rect])

    def _inner(self, edges, lo, hi):
        """Indices [first, end) of the cells between ``lo + EPS`` and ``hi - EPS``."""
        first = np.searchsorted(edges, lo + self.EPS, side="left")
        end = np.searchsorted(edges, hi - self.EPS, side="right") - 1
        return first, np.maximum(end, first)

    def holds_covered_cell(self, rects: np.ndarray) -> np.ndarray:
        """Per rectangle ``(x0, y0, x1, y1)``: does it wholly hold a covered cell?"""
        nx, ny = len(self.xe) - 1, len(self.ye) - 1
        i0, i1 = self._inner(self.xe, rects[:, 0], rects[:, 2])
        j0, j1 = self._inner(self.ye, rects[:, 1], rects[:, 3])
        i0, i1 = np.clip(i0, 0, nx), np.clip(i1, 0, nx)
        j0, j1 = np.clip(j0, 0, ny), np.clip(j1, 0, ny)
        s = self.sat
        return (s[j1, i1] - s[j0, i1] - s[j1, i0] + s[j0, i0]) > 0

    def blocks(self, cx, cy, width: float, height: float, angles) -> np.ndarray:
        """Per label box (:func:`label_polygons` of the same arguments): does it surely
        touch an obstacle?

        Only boxes turned by a multiple of 90 degrees are judged (the others
        get False): such a box is, to within ~1e-11 of its size, the
        rectangle of its half width and half height about its centre, so that
        rectangle drawn in by :attr:`EPS` lies inside it."""
        cx, cy, a = np.broadcast_arrays(np.asarray(cx, float), np.asarray(cy, float),
                                        np.asarray(angles, float))
        quarter = np.round(a / 90.0)
        square = np.abs(a - 90.0 * quarter) < 1e-9
        out = np.zeros(len(cx), dtype=bool)
        if square.any():
            across = (quarter[square] % 2) == 1          # turned upright: sides swap
            ex = np.where(across, height / 2.0, width / 2.0)
            ey = np.where(across, width / 2.0, height / 2.0)
            x, y = cx[square], cy[square]
            out[square] = self.holds_covered_cell(np.stack([x - ex, y - ey, x + ex, y + ey],
                                                           axis=1))
        return out

    def crosses(self, starts: np.ndarray, ends: np.ndarray) -> np.ndarray:
        """Per straight line ``start -> end``: does it surely cross an obstacle?

        Points along the line (half a cell apart, ends excluded) are looked
        up in the grid; one in a covered cell lies inside that cell's
        obstacle, and the line crosses the obstacle when one of its ends lies
        outside it."""
        starts = np.asarray(starts, dtype=float).reshape(-1, 2)
        ends = np.asarray(ends, dtype=float).reshape(-1, 2)
        d = ends - starts
        k = np.ceil(np.hypot(d[:, 0], d[:, 1]) / (self.cell / 2)).astype(int) + 1
        line = np.repeat(np.arange(len(starts)), k)
        first = np.cumsum(k) - k
        t = (np.arange(k.sum()) - np.repeat(first, k) + 1) / np.repeat(k + 1, k)   # 0 < t < 1
        x = starts[line, 0] + t * d[line, 0]
        y = starts[line, 1] + t * d[line, 1]
        i = np.searchsorted(self.xe, x, side="right") - 1
        j = np.searchsorted(self.ye, y, side="right") - 1
        inside = (i >= 0) & (i < len(self.xe) - 1) & (j >= 0) & (j < len(self.ye) - 1)
        owner = np.full(len(x), -1)
        owner[inside] = self.owner[j[inside], i[inside]]
        hit = owner >= 0
        b = self.boxes[owner[hit]]
        lh = line[hit]
        out_end = np.zeros(len(lh), dtype=bool)
        for p in (starts[lh], ends[lh]):        # an end outside the (closed) box
            out_end |= ((p[:, 0] < b[:, 0]) | (p[:, 0] > b[:, 2])
                        | (p[:, 1] < b[:, 1]) | (p[:, 1] > b[:, 3]))
        out = np.zeros(len(starts), dtype=bool)
        out[lh[out_end]] = True
        return out


class _Field:
    """Placed labels, leaders and symbols: the hard obstacles.

    With ``cover`` a :class:`_Cover` of the fixed obstacles proves most
    collisions on a crowded sheet at once; a polygon it proves blocked then
    gets a hard count of 1 rather than its full count (enough where only
    "free or not" matters: with a budget, and for a leader that must cross
    nothing)."""

    def __init__(self, obstacles, bounds, lines, cover: bool = False):
        self.fixed = [g for g in obstacles]
        self.cover = _Cover.of(self.fixed) if cover else None
        self.placed: list = []        # label boxes
        self.leaders: list = []       # leader lines, slightly widened
        self.bounds = box(*bounds) if bounds is not None else None
        self.lines = list(lines)
        self.line_tree = STRtree(self.lines) if self.lines else None
        self._snap: dict = {}

    #: labels and leaders placed since the big tree was built that are
    #: searched in a small tree of their own; past this many the big tree is
    #: rebuilt (rebuilding it for every label made n labels cost ~ n^2)
    REBUILD_EVERY = 256

    def _trees(self, leaders: bool):
        """Trees over everything placed so far: a big one, rebuilt now and then, and a small one."""
        n_p, n_l = len(self.placed), (len(self.leaders) if leaders else 0)
        snap = self._snap.get(leaders)
        if snap is None or (n_p - snap[1]) + (n_l - snap[2]) > self.REBUILD_EVERY:
            geoms = self.fixed + self.placed + (self.leaders if leaders else [])
            snap = self._snap[leaders] = (STRtree(geoms) if geoms else None, n_p, n_l)
        big, sp, sl = snap
        newer = self.placed[sp:] + (self.leaders[sl:] if leaders else [])
        return [t for t in (big, STRtree(newer) if newer else None) if t is not None]

    def hits(self, geoms, predicate: str = "intersects", leaders: bool = True) -> np.ndarray:
        """Per geometry, how many placed labels, symbols (and leaders) it meets."""
        arr = np.asarray(geoms, dtype=object)
        count = np.zeros(len(arr), dtype=int)
        for tree in self._trees(leaders):
            pairs = tree.query(arr, predicate=predicate)
            np.add.at(count, pairs[0], 1)
        return count

    def evaluate(self, cx, cy, width: float, height: float, angles):
        """The label boxes of these centres and angles (:func:`label_polygons`), their
        hard collision counts and soft route-crossing counts.

        With a cover, the boxes it proves blocked get a hard count of 1 and
        no polygon (None): on a crowded sheet most boxes are never made.
        The soft count is only wanted of boxes that are free (hard count 0),
        so only those get it (the others' is left at 0).

        Returns ``(polys, hard, soft)``."""
        cx, cy, angles = np.broadcast_arrays(np.asarray(cx, float), np.asarray(cy, float),
                                             np.asarray(angles, float))
        n = len(cx)
        hard = np.zeros(n, dtype=int)
        soft = np.zeros(n, dtype=int)
        polys = np.full(n, None, dtype=object)
        if n == 0:
            return polys, hard, soft
        made = np.arange(n)
        if self.cover is not None:
            blocked = self.cover.blocks(cx, cy, width, height, angles)
            hard[blocked] = 1
            made = np.nonzero(~blocked)[0]
        if len(made):
            arr = label_polygons(cx[made], cy[made], width, height, angles[made])
            polys[made] = arr
            hits = self.hits(arr)
            if self.bounds is not None:
                hits += ~shapely.contains(self.bounds, arr)
            hard[made] = hits
        free = np.nonzero(hard == 0)[0]
        if self.line_tree is not None and len(free):
            pairs = self.line_tree.query(polys[free], predicate="intersects")
            np.add.at(soft, free[pairs[0]], 1)
        return polys, hard, soft


def _choose(field: _Field, cands, w, h):
    if not cands:
        return None
    c = np.asarray([(cx, cy, a) for cx, cy, a, _ in cands], dtype=float).reshape(-1, 3)
    polys, hard, soft = field.evaluate(c[:, 0], c[:, 1], w, h, c[:, 2])
    score = np.array([c[3] for c in cands]) + 1.5 * soft
    free = np.nonzero(hard == 0)[0]
    if len(free):
        best = free[np.lexsort((free, score[free]))[0]]
        return int(best), polys, hard
    return None, polys, hard


def _leader_ring(anchor, w, h, ring, step=LEADER_STEP, directions=16):
    """Horizontal label positions on one ring round an anchor point."""
    ax, ay = anchor
    r = ring * step + max(w, h) / 2.0
    out = []
    for j in range(directions):
        th = 2.0 * math.pi * j / directions
        out.append((ax + r * math.cos(th), ay + r * math.sin(th), 0.0, 0.05 * r))
    return out


def _nearest_on_boxes(polys: np.ndarray, points: np.ndarray) -> np.ndarray:
    """Per box, the point of its outline nearest to the point given, as an (n, 2) array
    (``shapely.ops.nearest_points`` of each pair, at once)."""
    if not len(polys):
        return np.zeros((0, 2))
    seg = shapely.shortest_line(shapely.get_exterior_ring(polys), shapely.points(points))
    return shapely.get_coordinates(seg).reshape(-1, 2, 2)[:, 0, :]


def place_labels(specs, *, obstacles=(), bounds=None, lines=(), budget=None,
                 leader_cap=None) -> list[Placement]:
    """Place labels one after the other, each clear of what came before.

    Parameters
    ----------
    specs : iterable of LabelSpec
        In order of importance (the first gets the best place); read one
        at a time, and not beyond the label that spends the budget.
    obstacles : sequence of shapely geometries
        What no label may touch (plan symbols, fixed texts). [mm]
    bounds : (x0, y0, x1, y1), optional
        Every label must lie inside this box. [mm]
    lines : sequence of shapely geometries
        The routes: labels prefer not to cross them (soft). [mm]
    budget : int, optional
        For dense sheets: the most candidate boxes tried for all labels
        together (along the routes and round them for a leader).  With a
        budget (or a ``leader_cap``) a label that finds no free place is left
        out rather than placed over others or given a leader through other
        labels, and once the budget is spent the remaining labels are left
        out.  Default None: no limit.
    leader_cap : int, optional
        The most candidate boxes tried in the leader search of one label
        (whole rings of positions only).  Default None: every ring.

    Returns
    -------
    list of Placement
        In the order of ``specs``; a label left out (a route of one point, or
        no place within the budget) has none.  The same input gives the same
        result.
    """
    limited = budget is not None or leader_cap is not None
    field = _Field(obstacles, bounds, lines, cover=limited)
    placed: list[Placement] = []
    left = math.inf if budget is None else int(budget)
    for spec in specs:
        if left <= 0:
            break           # the budget is spent: the rest are left out, unlooked at
        result = None
        fonts = [spec.font_size]
        smaller = max(MIN_FONT, spec.font_size * SMALLER)
        if smaller < spec.font_size - 1e-9:
            fonts.append(smaller)
        first = None
        for fs in fonts:
            cands, w, h, prefix = _along_candidates(spec, fs)
            left -= len(cands)
            got = _choose(field, cands, w, h)
            if got is None:
                continue
            idx, polys, hard = got
            if first is None and cands:
                first = (cands, polys, hard, w, h, fs, prefix)
            if idx is not None:
                cx, cy, a, _ = cands[idx]
                result = Placement(spec.key, spec.text, cx, cy, a, w, h, fs, prefix)
                field.placed.append(polys[idx])
                break
        cap = math.inf if leader_cap is None else int(leader_cap)
        # with a budget, no leader through other labels (the label is left out instead)
        for strict in ((True,) if limited else (True, False)):
            if result is None:
                result, used = _place_with_leader(field, spec, fonts[-1], strict=strict,
                                                  cap=min(cap, left))
                left -= used
                cap -= used
        if result is None and first is not None and not limited:
            cands, polys, hard, w, h, fs, prefix = first
            score = np.array([c[3] for c in cands]) + 10.0 * hard
            i = int(np.lexsort((np.arange(len(cands)), score))[0])
            cx, cy, a, _ = cands[i]
            result = Placement(spec.key, spec.text, cx, cy, a, w, h, fs, prefix,
                               collisions=int(hard[i]))
            field.placed.append(polys[i])
        if result is None:      # a route of one point: nothing to label
            continue
        placed.append(result)
    return placed


def _anchors(pts: np.ndarray) -> list[tuple[float, float]]:
    """Points on the route a leader may start from: along its longest segments."""
    d = np.diff(pts, axis=0)
    lengths = np.hypot(d[:, 0], d[:, 1])
    order = [i for i in np.argsort(-lengths, kind="stable") if lengths[i] > 1e-9][:_MAX_SEGMENTS]
    out = []
    for i in order:
        for s in (0.5, 0.25, 0.75, 0.1, 0.9):
            out.append((float(pts[i, 0] + d[i, 0] * s), float(pts[i, 1] + d[i, 1] * s)))
    return out


def _place_with_leader(field: _Field, spec: LabelSpec, fs: float, strict: bool = True,
                       cap=math.inf):
    """A horizontal label near the route, joined to it by a leader line.

    Label positions lie on rings round points of the route's longest
    segments, nearest ring first.  The box must be free; with ``strict`` the
    leader must not run through a label or symbol either (it may cross other
    leaders); without, the leader crossing fewest labels is taken.  At most
    ``cap`` candidate boxes are tried (whole rings only).

    Returns ``(placement or None, number of candidate boxes tried)``.
    """
    pts = np.asarray(spec.route, dtype=float)
    if len(pts) < 2:
        return None, 0
    prefix = spec.prefix * fs / spec.font_size
    w, h = _box_size(spec, fs, prefix)
    anchors_all = _anchors(pts)
    used = 0
    for ring in range(1, LEADER_RINGS + 1):
        if used + 16 * len(anchors_all) > cap:
            break
        used += 16 * len(anchors_all)
        cands, anchors = [], []
        for rank, anchor in enumerate(anchors_all):
            for c in _leader_ring(anchor, w, h, ring):
                cands.append((c[0], c[1], c[2], c[3] + 0.1 * rank))
                anchors.append(anchor)
        c = np.asarray([(cx, cy) for cx, cy, _, _ in cands], dtype=float).reshape(-1, 2)
        polys, hard, soft = field.evaluate(c[:, 0], c[:, 1], w, h, 0.0)
        ok = np.nonzero(hard == 0)[0]
        if not len(ok):
            continue
        score = np.array([cands[k][3] for k in ok]) + 1.5 * soft[ok]
        order = np.lexsort((np.arange(len(ok)), score))     # best first; ties: first candidate
        starts_all = np.asarray(anchors, dtype=float)
        if strict and field.cover is not None:
            # leaders the cover proves to cross a symbol are out at once
            ends_all = _nearest_on_boxes(polys[ok], starts_all[ok])
            order = order[~field.cover.crosses(starts_all[ok[order]], ends_all[order])]
        # leaders are built and checked lazily, best first, a chunk at a time
        chunk = _LEADER_CHUNK if strict else len(order)
        j = end = line = None
        for start in range(0, len(order), chunk):
            js = order[start:start + chunk]
            starts = starts_all[ok[js]]
            ends = _nearest_on_boxes(polys[ok[js]], starts)
            lines = shapely.linestrings(np.stack([starts, ends], axis=1))
            crossings = field.hits(lines, "crosses", leaders=False)
            if strict:
                free = np.nonzero(crossings == 0)[0]
                if not len(free):
                    continue
                t = int(free[0])
            else:
                t = int(np.lexsort((js, score[js] + 5.0 * crossings))[0])
            j, end, line = int(js[t]), tuple(ends[t].tolist()), lines[t]
            break
        if j is None:
            continue
        k = int(ok[j])
        cx, cy, _, _ = cands[k]
        field.placed.append(polys[k])
        field.leaders.append(line.buffer(0.2))
        return Placement(spec.key, spec.text, cx, cy, 0.0, w, h, fs, prefix,
                         leader=(anchors[k], end)), used
    return None, used


def count_overlaps(polygons, obstacles=(), *, min_area: float = 1e-6) -> int:
    """Number of pairs of label boxes that overlap, plus label/obstacle pairs.

    Two shapes overlap when their intersection has an area above
    ``min_area`` (mm²); boxes that merely touch do not count.
    """
    polys = list(polygons)
    n = 0
    for i in range(len(polys)):
        for j in range(i + 1, len(polys)):
            if polys[i].intersection(polys[j]).area > min_area:
                n += 1
        for ob in obstacles:
            if polys[i].intersection(ob).area > min_area:
                n += 1
    return n

"""Paper sheets, drawing scale and page layout of the printed plan.

A plan is printed on an ISO 216 A-series sheet [1]_ at a drawing scale 1:N.
:func:`fit` places the plan's extent (in metres) on the sheet: it picks or
checks the scale, centres the drawing in the space above the title block and
says clearly when the drawing does not fit.  :func:`scale_bar` chooses a
round scale-bar length.

Sheet documents are written in millimetres: ``width="420mm"
height="297mm" viewBox="0 0 420 297"`` (:meth:`Sheet.svg_attrs`), so one
user unit is one millimetre on paper and cairosvg prints at true scale.

Layout of a sheet (all sizes in mm)::

    +--------------------------------------------+
    |  margin                                    |
    |  +--------------------------------------+  |
    |  |  drawing area (the plan is centred)  |  |
    |  |                                      |  |
    |  +--------------------------------------+  |
    |  |  title block strip (legend, caution) |  |
    |  +--------------------------------------+  |
    +--------------------------------------------+

References
----------
.. [1] ISO 216:2007, Writing paper and certain classes of printed matter -
   Trimmed sizes - A and B series, and indication of machine direction,
   Table 1 (A series, trimmed sizes in mm; table number from memory).
.. [2] ISO 5455:1979, Technical drawings - Scales (recommended scales
   1:2, 1:5, 1:10 and their decimal multiples; from memory).
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from .errors import PlanError, Problem

__all__ = [
    "ORIENTATIONS",
    "SHEET_SIZES_MM",
    "STANDARD_SCALES",
    "Box",
    "Layout",
    "Sheet",
    "fit",
    "parse_scale",
    "scale_bar",
    "sheet",
]

#: ISO 216 A-series trimmed sizes, (short side, long side) in mm.
SHEET_SIZES_MM: dict[str, tuple[int, int]] = {
    "A4": (210, 297),   # ISO 216:2007 Table 1
    "A3": (297, 420),   # ISO 216:2007 Table 1
    "A2": (420, 594),   # ISO 216:2007 Table 1
    "A1": (594, 841),   # ISO 216:2007 Table 1
    "A0": (841, 1189),  # ISO 216:2007 Table 1
}

#: Scales offered by ``scale="fit"``, as N of 1:N, largest drawing first.
#: 1:10, 1:20, 1:50, 1:100, 1:200, 1:500 are ISO 5455 recommended scales [2]_;
#: 1:25 and 1:250 are common practice in building drawings (no published source).
STANDARD_SCALES: tuple[int, ...] = (10, 20, 25, 50, 100, 200, 250, 500)

ORIENTATIONS = ("landscape", "portrait")

MARGIN_MM = 10.0          # border round the frame; zsplan layout choice (no published source)
TITLE_BLOCK_MM = 30.0     # height of the title-block strip; zsplan layout choice
GAP_MM = 5.0              # gap between drawing area and title block; zsplan layout choice

_SCALE_RE = re.compile(r"^\s*1\s*:\s*([0-9]+(?:\.[0-9]*)?)\s*$")
_NUM_RE = re.compile(r"^\s*([0-9]+(?:\.[0-9]*)?)\s*$")


@dataclass(frozen=True)
class Box:
    """An axis-aligned rectangle on the sheet. [mm]"""

    x: float
    y: float
    width: float
    height: float

    @property
    def right(self) -> float:
        return self.x + self.width

    @property
    def bottom(self) -> float:
        return self.y + self.height

    @property
    def centre(self) -> tuple[float, float]:
        return (self.x + self.width / 2.0, self.y + self.height / 2.0)


@dataclass(frozen=True)
class Sheet:
    """A sheet of paper in a given orientation. [mm]"""

    name: str
    orientation: str
    width_mm: float
    height_mm: float

    def svg_attrs(self) -> dict[str, str]:
        """Root attributes of a true-scale SVG document of this sheet:
        ``{"width": "420mm", "height": "297mm", "viewBox": "0 0 420 297"}``."""
        return {"width": f"{self.width_mm:g}mm", "height": f"{self.height_mm:g}mm",
                "viewBox": f"0 0 {self.width_mm:g} {self.height_mm:g}"}

    def __str__(self) -> str:
        return f"{self.name} {self.orientation}"


def sheet(name: str = "A3", orientation: str = "landscape", *, file: str = "", path: str = "") -> Sheet:
    """An ISO 216 A-series sheet.

    Parameters
    ----------
    name : str
        "A4", "A3", "A2", "A1" or "A0" (case ignored).
    orientation : str
        "landscape" (long side horizontal) or "portrait".
    file, path : str, optional
        Where the request came from, for the error message.

    Raises
    ------
    PlanError
        For an unknown size or orientation.

    References
    ----------
    .. [1] ISO 216:2007, Table 1.
    """
    key = str(name).strip().upper()
    if key not in SHEET_SIZES_MM:
        raise PlanError(Problem(file, f"sheet {name!r} is not known; expected one of "
                                      f"{', '.join(SHEET_SIZES_MM)}", path))
    orient = str(orientation).strip().lower()
    if orient not in ORIENTATIONS:
        raise PlanError(Problem(file, f"orientation {orientation!r} is not known; expected "
                                      "landscape or portrait", path))
    short, long_ = SHEET_SIZES_MM[key]
    w, h = (long_, short) if orient == "landscape" else (short, long_)
    return Sheet(key, orient, float(w), float(h))


_make_sheet = sheet   # fit() takes a parameter named ``sheet``


def parse_scale(value, *, file: str = "", path: str = ""):
    """Read a drawing scale.

    Parameters
    ----------
    value : str or float
        ``"1:50"``, ``"50"`` or ``50`` (all meaning 1:50), ``"fit"`` (largest
        standard scale that fits) or ``"exact"`` (scale the plan to fill the
        drawing area).

    Returns
    -------
    float or str
        N of 1:N (> 0), or ``"fit"`` / ``"exact"``.

    Raises
    ------
    PlanError
        When the value is not understood or N is not positive.
    """
    if isinstance(value, str):
        text = value.strip().lower()
        if text in ("fit", "exact"):
            return text
        m = _SCALE_RE.match(text) or _NUM_RE.match(text)
        n = float(m.group(1)) if m else None
    elif isinstance(value, (int, float)) and not isinstance(value, bool):
        n = float(value)
    else:
        n = None
    if n is None or not math.isfinite(n) or n <= 0:
        raise PlanError(Problem(file, f"scale {value!r} is not understood; expected 1:N "
                                      "(e.g. 1:50), fit or exact", path))
    return n


def _label(n: float) -> str:
    return f"1:{n:g}" if float(n).is_integer() else f"1:{n:.1f}"


@dataclass(frozen=True)
class Layout:
    """Where the plan goes on the sheet and at what scale.

    Attributes
    ----------
    sheet : Sheet
    scale : float
        N of 1:N.
    mm_per_m : float
        Paper millimetres per real metre, ``1000 / N``. [mm/m]
    extent_m : tuple of float
        The plan's extent ``(xmin, ymin, xmax, ymax)``. [m]
    frame, drawing_area, title_block, drawing : Box
        Frame inside the margins, space for the plan, title-block strip, and
        where the plan's extent lands (centred in the drawing area). [mm]
    problem : str or None
        Why the plan does not fit at this scale (None when it fits).
    """

    sheet: Sheet
    scale: float
    mm_per_m: float
    extent_m: tuple[float, float, float, float]
    frame: Box
    drawing_area: Box
    title_block: Box
    drawing: Box
    problem: str | None = None

    @property
    def fits(self) -> bool:
        return self.problem is None

    @property
    def scale_label(self) -> str:
        """The scale written ``1:N``."""
        return _label(self.scale)

    def to_paper(self, x, y, y_up: bool = False):
        """Map plan coordinates to sheet millimetres.

        .. math:: x_\\mathrm{mm} = x_0 + (x - x_\\min) k, \\quad
                  y_\\mathrm{mm} = y_0 + (y - y_\\min) k

        with :math:`k` = :attr:`mm_per_m` and :math:`(x_0, y_0)` the top-left
        corner of :attr:`drawing`.  With ``y_up=True`` the plan's y axis
        points up the page: :math:`y_\\mathrm{mm} = y_0 + (y_\\max - y) k`.

        Parameters
        ----------
        x, y : array_like
            Plan coordinates. [m]
        y_up : bool, optional
            Plan y increases up the page. Default False (down, as in SVG).

        Returns
        -------
        (numpy.ndarray, numpy.ndarray)
            Sheet coordinates. [mm]
        """
        xmin, ymin, _, ymax = self.extent_m
        k = self.mm_per_m
        xs = self.drawing.x + (np.asarray(x, dtype=float) - xmin) * k
        if y_up:
            ys = self.drawing.y + (ymax - np.asarray(y, dtype=float)) * k
        else:
            ys = self.drawing.y + (np.asarray(y, dtype=float) - ymin) * k
        return xs, ys


def _extent(drawing_extent_m) -> tuple[float, float, float, float]:
    e = np.asarray(drawing_extent_m, dtype=float).ravel()
    if e.size == 2:
        e = np.array([0.0, 0.0, e[0], e[1]])
    if e.size != 4 or not np.all(np.isfinite(e)) or e[2] < e[0] or e[3] < e[1]:
        raise ValueError("drawing extent must be (width, height) or (xmin, ymin, xmax, ymax) "
                         f"in metres with max >= min, got {drawing_extent_m!r}")
    return tuple(float(v) for v in e)


def _areas(sh: Sheet, margin_mm: float, title_block_mm: float):
    frame = Box(margin_mm, margin_mm, sh.width_mm - 2 * margin_mm, sh.height_mm - 2 * margin_mm)
    tb = Box(frame.x, frame.bottom - title_block_mm, frame.width, title_block_mm)
    gap = GAP_MM if title_block_mm > 0 else 0.0
    area = Box(frame.x, frame.y, frame.width, frame.height - title_block_mm - gap)
    if area.width <= 0 or area.height <= 0:
        raise ValueError(f"margins and title block leave no drawing area on {sh}")
    return frame, area, tb


def _fits(w_m, h_m, n, area: Box) -> bool:
    tol = 1e-9
    return w_m * 1000.0 / n <= area.width + tol and h_m * 1000.0 / n <= area.height + tol


def _fmt_m(v: float) -> str:
    return f"{v:.1f}" if v >= 1 else f"{v:.2f}"


def fit(drawing_extent_m, sheet="A3", orientation: str = "landscape", scale="fit", *,
        margin_mm: float = MARGIN_MM, title_block_mm: float = TITLE_BLOCK_MM,
        strict: bool = True, file: str = "", path: str = "") -> Layout:
    """Place a plan of the given extent on a sheet at a drawing scale.

    The plan's width :math:`w` and height :math:`h` (metres) need
    :math:`1000 w / N` by :math:`1000 h / N` millimetres at 1:N.

    - ``scale=N`` or ``"1:N"``: that scale; it must fit.
    - ``scale="fit"``: the largest drawing among :data:`STANDARD_SCALES`
      (the smallest N) that fits the drawing area.
    - ``scale="exact"``: :math:`N = \\max(1000 w / W_a, 1000 h / H_a)`, the
      plan filling the drawing area :math:`W_a \\times H_a` exactly.

    Parameters
    ----------
    drawing_extent_m : sequence of float
        ``(width, height)`` or ``(xmin, ymin, xmax, ymax)``. [m]
    sheet : str or Sheet, optional
        A-series size ("A3" by default) or a :class:`Sheet` (then
        ``orientation`` is ignored).
    orientation : str, optional
        "landscape" (default) or "portrait".
    scale : str or float, optional
        See above; anything :func:`parse_scale` reads. Default "fit".
    margin_mm, title_block_mm : float, optional
        Border round the frame and height of the title-block strip. [mm]
    strict : bool, optional
        Raise :class:`~zsplan.errors.PlanError` when the plan does not fit
        (default); otherwise return the layout with :attr:`Layout.problem` set.
    file, path : str, optional
        Where the request came from, for the error message.

    Returns
    -------
    Layout

    Raises
    ------
    PlanError
        When the plan does not fit at the requested scale (``strict``), or
        no standard scale fits (``"fit"``).  The message gives the size
        needed, the size available and what to try instead, e.g. "the plan is
        23.4 m wide; at 1:50 it needs 468 mm but A3 landscape has 400 mm; try
        --scale 1:100 or --sheet A1".
    """
    ext = _extent(drawing_extent_m)
    w_m, h_m = ext[2] - ext[0], ext[3] - ext[1]
    sh = sheet if isinstance(sheet, Sheet) else _make_sheet(sheet, orientation, file=file, path=path)
    frame, area, tb = _areas(sh, margin_mm, title_block_mm)
    wanted = parse_scale(scale, file=file, path=path)

    problem = None
    if wanted == "exact":
        need = max(w_m * 1000.0 / area.width, h_m * 1000.0 / area.height)
        n = need if need > 0 else float(STANDARD_SCALES[0])
    elif wanted == "fit":
        fitting = [s for s in STANDARD_SCALES if _fits(w_m, h_m, s, area)]
        if fitting:
            n = float(fitting[0])
        else:
            n = float(STANDARD_SCALES[-1])
            problem = _no_fit_message(w_m, h_m, n, sh, area, margin_mm, title_block_mm,
                                      fit_mode=True)
    else:
        n = float(wanted)
        if not _fits(w_m, h_m, n, area):
            problem = _no_fit_message(w_m, h_m, n, sh, area, margin_mm, title_block_mm)

    if problem is not None and strict:
        raise PlanError(Problem(file, problem, path))

    k = 1000.0 / n
    dw, dh = w_m * k, h_m * k
    drawing = Box(area.x + (area.width - dw) / 2.0, area.y + (area.height - dh) / 2.0, dw, dh)
    return Layout(sh, n, k, ext, frame, area, tb, drawing, problem)


def _no_fit_message(w_m, h_m, n, sh: Sheet, area: Box, margin_mm, title_block_mm,
                    fit_mode: bool = False) -> str:
    need_w, need_h = w_m * 1000.0 / n, h_m * 1000.0 / n
    # shown rounded so that the need is never understated nor the space overstated
    nw, nh = math.ceil(need_w - 1e-9), math.ceil(need_h - 1e-9)
    aw, ah = math.floor(area.width + 1e-9), math.floor(area.height + 1e-9)
    too_wide = need_w > area.width + 1e-9
    too_high = need_h > area.height + 1e-9
    at = f"even at {_label(n)}, the smallest standard scale," if fit_mode else f"at {_label(n)}"
    if too_wide and too_high:
        what = (f"the plan is {_fmt_m(w_m)} m wide and {_fmt_m(h_m)} m high; {at} it needs "
                f"{nw} x {nh} mm but {sh} has {aw} x {ah} mm")
    elif too_wide:
        what = (f"the plan is {_fmt_m(w_m)} m wide; {at} it needs {nw} mm "
                f"but {sh} has {aw} mm")
    else:
        what = (f"the plan is {_fmt_m(h_m)} m high; {at} it needs {nh} mm "
                f"but {sh} has {ah} mm above the title block")

    tries = []
    coarser = [s for s in STANDARD_SCALES if s > n and _fits(w_m, h_m, s, area)]
    if coarser:
        tries.append(f"--scale {_label(coarser[0])}")
    names = list(SHEET_SIZES_MM)
    for name in names[names.index(sh.name):]:
        for orient in (sh.orientation, "portrait" if sh.orientation == "landscape" else "landscape"):
            if name == sh.name and orient == sh.orientation:
                continue
            other = sheet(name, orient)
            _, a2, _ = _areas(other, margin_mm, title_block_mm)
            if _fits(w_m, h_m, n, a2):
                tries.append(f"--sheet {name}" if orient == sh.orientation else f"--sheet {name} {orient}")
                break
        else:
            continue
        break
    if fit_mode:
        tries.append("--scale exact")
    elif not tries:
        tries.append("--scale exact")
    return what + "; try " + " or ".join(tries)


_NICE = (1.0, 2.0, 5.0)


def scale_bar(layout: Layout, max_mm: float | None = None):
    """A scale bar of round length for the layout.

    The length is the largest value of the series 1, 2, 5 x 10^k metres whose
    drawn length :math:`L \\cdot 1000 / N` mm does not exceed ``max_mm``.

    Parameters
    ----------
    layout : Layout
    max_mm : float, optional
        Longest bar allowed. Default ``min(100, drawing area width / 4)``. [mm]

    Returns
    -------
    length_m : float
        Real length represented. [m]
    length_mm : float
        Drawn length, ``length_m * layout.mm_per_m``. [mm]
    ticks : tuple of (float, float)
        ``(value_m, offset_mm)`` from 0 to the full length: 5 divisions for
        1 and 5 x 10^k, 4 for 2 x 10^k.
    """
    if max_mm is None:
        max_mm = min(100.0, layout.drawing_area.width / 4.0)
    k = layout.mm_per_m
    if not (max_mm > 0 and k > 0):
        raise ValueError("scale bar needs a positive length and scale")
    top = math.floor(math.log10(max_mm / k))
    length = None
    for e in range(top + 1, top - 3, -1):
        for d in reversed(_NICE):
            cand = d * 10.0 ** e
            if cand * k <= max_mm * (1 + 1e-12):
                length = cand
                break
        if length is not None:
            break
    lead = round(length / 10.0 ** math.floor(math.log10(length) + 1e-12))
    parts = 4 if lead == 2 else 5
    ticks = tuple((round(length * i / parts, 12), length * i / parts * k) for i in range(parts + 1))
    return float(length), float(length * k), ticks

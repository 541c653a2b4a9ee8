"""Zs limits of a device family and a plot of its time-current characteristics.

:func:`limits_table` gives, for each rating of a family (and type, for
circuit-breakers), the current Ia that operates the device within a required
time and the largest earth fault loop impedance that delivers it,

.. math::

    Z_{s,max} = \\frac{C_{min} U_0}{I_a(t)}

(BS 7671 Regulation 411.4.4 [1]_), with the highest measured value to accept
at the test temperature by the rule of 0.8 (BS 7671 Appendix 3 [1]_).  Ia
comes from :func:`zsplan.protection.current_for_time` and Zs,max from
:func:`zsplan.loop.zs_limit`; nothing is recomputed here.  Displayed limits
are rounded down and currents up (:func:`zsplan.results.safe_round`).

:func:`curve_svg` draws the characteristics on log-log axes with decade
gridlines: each curve is the device's longest operating time t(I), straight
between its data points on log-log axes, exactly as the engine interpolates
it.  A given fault current is drawn as a vertical line, a required time as a
horizontal line; where one rating is drawn, the point (Ia, t) and the
device's time at the fault current are marked.

References
----------
.. [1] BS 7671:2018+A2:2022, Regulation 411.4.4, Tables 41.2-41.4 and
   Appendix 3.
.. [2] IEC 60898-1:2015, Table 7; IEC 60269-1:2006+A2:2014, Table 2.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
import textwrap
from xml.sax.saxutils import escape

import numpy as np

from . import CAUTION
from .loop import test_zs_limit, zs_limit
from .protection import CurveSet, current_for_time, family, operating_time
from .results import safe_round

__all__ = ["LimitRow", "limits_table", "select", "curve_svg"]

#: Required times tabulated by default: BS 7671 Table 41.1 (0.4 s, final circuits, TN,
#: 230 V) and Regulation 411.3.2.3 (5 s, distribution and larger circuits).
DEFAULT_TIMES = (0.4, 5.0)


@dataclass(frozen=True)
class LimitRow:
    """Zs limits of one rating at the required times (safely rounded; ``None``: never in time)."""

    rating_a: float
    ia_a: tuple[float | None, ...]          # rounded up to whole amperes
    zs_max_ohm: tuple[float | None, ...]    # rounded down to 0.01 ohm
    zs_test_max_ohm: tuple[float | None, ...]   # rule of 0.8, rounded down to 0.01 ohm


def select(family_name: str, curve: str | None = None, rating: float | None = None):
    """The family, the type letter used and the ratings chosen.

    Raises ``KeyError`` (with a message naming what exists) for an unknown
    family, type or rating.
    """
    fam = family(family_name)
    if fam.kind == "breaker":
        types = [t for t in fam.types() if t is not None]
        if curve is None:
            curve = types[0]
        curve = curve.upper()
        if curve not in types:
            raise KeyError(f"{fam.title}: no type {curve!r}; types are {', '.join(types)}")
    else:
        if curve is not None:
            raise KeyError(f"{fam.title} has no types (B, C, D); leave out the type")
        curve = None
    ratings = fam.ratings(curve)
    if rating is not None:
        if float(rating) not in ratings:
            raise KeyError(f"{fam.title}: no rating {rating:g} A; ratings are "
                           f"{', '.join(f'{r:g}' for r in ratings)} A")
        ratings = [float(rating)]
    return fam, curve, ratings


def _round_up_amperes(ia: float) -> float | None:
    if not math.isfinite(ia):
        return None
    # the same relative nudge as safe_round, so 160.0000001 stays 160
    return float(math.ceil(ia - 1e-9 * max(1.0, ia)))


def limits_table(family_name: str, curve: str | None = None, *, times=DEFAULT_TIMES,
                 u0_v: float = 230.0, cmin: float = 0.95,
                 rating: float | None = None) -> list[LimitRow]:
    """Ia and Zs,max of each rating at each required time.

    Parameters
    ----------
    family_name : str
        A device family (:func:`zsplan.protection.families`).
    curve : str, optional
        Circuit-breaker type (``B``, ``C``, ``D``); default the family's first.
    times : sequence of float
        Required disconnection times. [s]
    u0_v : float
        Nominal voltage to earth. [V]
    cmin : float
        Minimum voltage factor. [-]
    rating : float, optional
        One rating only. [A]

    Returns
    -------
    list of LimitRow

    Examples
    --------
    BS 7671:2018 Table 41.3 gives 1.37 ohm for a type B 32 A breaker, rounded to
    the nearest 0.01 from 218.5 / 160 = 1.3656; zsplan rounds limits down:

    >>> row = limits_table("mcb", "B", rating=32)[0]
    >>> row.zs_max_ohm[0], row.ia_a[0]
    (1.36, 160.0)
    """
    fam, curve, ratings = select(family_name, curve, rating)
    curves = [fam.curves[(curve, r)] for r in ratings]
    cs = CurveSet(curves)
    t = np.asarray(times, dtype=float)
    idx = np.arange(len(ratings))
    ia = current_for_time(cs, idx[:, None], t[None, :])
    zmax = zs_limit(ia, u0_v, cmin)
    ztest = test_zs_limit(zmax, method="rule-of-0.8")
    rows = []
    for k, r in enumerate(ratings):
        rows.append(LimitRow(
            rating_a=r,
            ia_a=tuple(_round_up_amperes(float(v)) for v in ia[k]),
            zs_max_ohm=tuple(safe_round("zs_max_ohm", float(v), 2) if v > 0 else None
                             for v in zmax[k]),
            zs_test_max_ohm=tuple(safe_round("zs_test_max_ohm", float(v), 2) if v > 0 else None
                                  for v in ztest[k])))
    return rows


# ---------------------------------------------------------------------------
# The plot
# ---------------------------------------------------------------------------

#: Line colours of the curves, cycled: a qualitative set chosen for zsplan to stay
#: apart from one another (our choice, no published source).
CURVE_COLOURS = ("#1f4e9a", "#b3541e", "#2e7d5b", "#8a2f7e", "#5d6b0f", "#1b7f9c",
                 "#a8323e", "#4b4b4b", "#6a4fb3", "#9a7a12", "#2a6f8f", "#7a3b1f", "#3f7f3f")


def _fmt(v: float) -> str:
    return f"{v:.2f}".rstrip("0").rstrip(".")


#: stroke of a decade gridline (True) and of a minor one (False)
_GRID_STYLE = {True: 'stroke="#9a9a9a" stroke-width="0.25"',
               False: 'stroke="#dedede" stroke-width="0.15"'}


def _log_ticks(d0: int, d1: int):
    """(value, is_decade) for 1..9 x 10^d, d from d0 to d1, up to 10^d1."""
    for d in range(d0, d1 + 1):
        for m in range(1, 10):
            v = m * 10.0 ** d
            if v > 10.0 ** d1 * 1.0000001:
                break
            yield v, m == 1


def _tick(v: float) -> str:
    """Decade tick label: 0.01, 0.1, 1, 10, 100, 1000, 10 000."""
    if v >= 1:
        s = f"{int(round(v)):,}".replace(",", "\u2009")
        return s
    return f"{v:g}"


def curve_svg(family_name: str, curve: str | None = None, *, rating: float | None = None,
              fault_a: float | None = None, time_s: float | None = None,
              u0_v: float = 230.0, cmin: float = 0.95,
              width_mm: float = 180.0, height_mm: float = 150.0) -> str:
    """An SVG plot of a family's time-current characteristics.

    Parameters
    ----------
    family_name, curve, rating
        As for :func:`limits_table`; with ``rating`` one curve is drawn, else
        every rating of the family (and type).
    fault_a : float, optional
        A fault current to mark (vertical line). [A]
    time_s : float, optional
        A required disconnection time to mark (horizontal line). [s]
    u0_v, cmin : float
        For the Zs,max noted beside the marked point. [V], [-]
    width_mm, height_mm : float
        Size of the drawing. [mm]

    Returns
    -------
    str
        A standalone SVG document, sized in millimetres; byte-identical for
        the same arguments.
    """
    fam, curve, ratings = select(family_name, curve, rating)
    curves = [fam.curves[(curve, r)] for r in ratings]

    cur = np.concatenate([np.asarray(c.current_a) for c in curves])
    lo_i = min(cur.min(), fault_a or np.inf)
    hi_i = max(cur.max(), fault_a or 0)
    lx0 = math.floor(math.log10(lo_i))
    lx1 = math.ceil(math.log10(hi_i) + 1e-12)
    if lx1 - lx0 < 2:
        lx1 = lx0 + 2
    tim = np.concatenate([np.asarray(c.time_s) for c in curves])
    ly0 = min(-2, math.floor(math.log10(min(tim.min(), time_s or np.inf))))
    ly1 = max(4, math.ceil(math.log10(max(tim.max(), time_s or 0)) + 1e-12))

    # layout (mm)
    legend = len(ratings) > 1
    left, right, top, bottom = 22.0, (24.0 if legend else 8.0), 20.0, 31.0
    pw, ph = width_mm - left - right, height_mm - top - bottom

    def X(i):
        return left + (math.log10(i) - lx0) / (lx1 - lx0) * pw

    def Y(t):
        return top + (ly1 - math.log10(t)) / (ly1 - ly0) * ph

    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{_fmt(width_mm)}mm" '
           f'height="{_fmt(height_mm)}mm" viewBox="0 0 {_fmt(width_mm)} {_fmt(height_mm)}" '
           'font-family="sans-serif">']
    kind = f" type {curve}" if curve else ""
    title = f"{fam.title}{kind}: time-current characteristics"
    out.append(f"<title>{escape(title)}</title>")
    out.append(f'<rect width="{_fmt(width_mm)}" height="{_fmt(height_mm)}" fill="#ffffff"/>')
    out.append(f'<text x="{_fmt(left)}" y="8" font-size="4" font-weight="bold">{escape(title)}</text>')
    out.append(f'<text x="{_fmt(left)}" y="13" font-size="2.8" fill="#444444">'
               "Longest operating time t(I) from zsplan's device data; straight lines between "
               "data points on log-log axes</text>")

    # gridlines: minor (2..9 x decade) then decades, then the frame
    grid = []
    for v, major in _log_ticks(lx0, lx1):
        x = X(v)
        grid.append(f'<line x1="{_fmt(x)}" y1="{_fmt(top)}" x2="{_fmt(x)}" y2="{_fmt(top + ph)}" '
                    f'{_GRID_STYLE[major]}/>')
    for v, major in _log_ticks(ly0, ly1):
        y = Y(v)
        grid.append(f'<line x1="{_fmt(left)}" y1="{_fmt(y)}" x2="{_fmt(left + pw)}" y2="{_fmt(y)}" '
                    f'{_GRID_STYLE[major]}/>')
    out.append('<g id="grid">' + "".join(grid) + "</g>")
    out.append(f'<rect x="{_fmt(left)}" y="{_fmt(top)}" width="{_fmt(pw)}" height="{_fmt(ph)}" '
               'fill="none" stroke="#000000" stroke-width="0.35"/>')
    ticks = []
    for d in range(lx0, lx1 + 1):
        ticks.append(f'<text x="{_fmt(X(10.0 ** d))}" y="{_fmt(top + ph + 4)}" font-size="2.8" '
                     f'text-anchor="middle">{_tick(10.0 ** d)}</text>')
    for d in range(ly0, ly1 + 1):
        ticks.append(f'<text x="{_fmt(left - 1.5)}" y="{_fmt(Y(10.0 ** d) + 1)}" font-size="2.8" '
                     f'text-anchor="end">{_tick(10.0 ** d)}</text>')
    ticks.append(f'<text x="{_fmt(left + pw / 2)}" y="{_fmt(top + ph + 9)}" font-size="3.2" '
                 'text-anchor="middle">current I (A)</text>')
    ticks.append(f'<text transform="translate({_fmt(left - 13)} {_fmt(top + ph / 2)}) rotate(-90)" '
                 'font-size="3.2" text-anchor="middle">time t (s)</text>')
    out.append('<g id="axes">' + "".join(ticks) + "</g>")

    # clip the curves to the plotting area
    out.append(f'<clipPath id="plot-area"><rect x="{_fmt(left)}" y="{_fmt(top)}" '
               f'width="{_fmt(pw)}" height="{_fmt(ph)}"/></clipPath>')
    lines = []
    placed: list[tuple[float, float, float, float]] = []
    legend_items = []
    for k, (r, c) in enumerate(zip(ratings, curves)):
        colour = CURVE_COLOURS[k % len(CURVE_COLOURS)]
        pts = " ".join(f"{_fmt(X(i))},{_fmt(Y(t))}" for i, t in zip(c.current_a, c.time_s))
        lines.append(f'<polyline data-rating="{r:g}" points="{pts}" fill="none" stroke="{colour}" '
                     'stroke-width="0.45" stroke-linejoin="round"/>')
        legend_items.append((f"{r:g} A", colour))
        # a label beside the curve's first point, where it does not overlap another
        text = f"{r:g} A"
        w = 1.5 * len(text) + 0.5
        lx, ly = X(c.current_a[0]), Y(c.time_s[0]) - 1.2
        box = (lx - w / 2, ly - 2.4, lx + w / 2, ly + 0.4)
        if box[1] >= top and all(box[2] < b[0] or box[0] > b[2] or box[3] < b[1] or box[1] > b[3]
                                 for b in placed):
            placed.append(box)
            lines.append(f'<text x="{_fmt(lx)}" y="{_fmt(ly)}" font-size="2.6" fill="{colour}" '
                         f'text-anchor="middle">{escape(text)}</text>')
    out.append('<g id="curves" clip-path="url(#plot-area)">' + "".join(lines) + "</g>")

    marks = []
    notes = []
    if fault_a is not None:
        x = X(fault_a)
        marks.append(f'<line x1="{_fmt(x)}" y1="{_fmt(top)}" x2="{_fmt(x)}" y2="{_fmt(top + ph)}" '
                     'stroke="#c0392b" stroke-width="0.4" stroke-dasharray="2 1"/>')
        label = f"If = {_fmt(fault_a)} A"
        marks.append(f'<text x="{_fmt(x + 1)}" y="{_fmt(top + 4)}" font-size="2.8" fill="#c0392b">'
                     f"{escape(label)}</text>")
    if time_s is not None:
        y = Y(time_s)
        marks.append(f'<line x1="{_fmt(left)}" y1="{_fmt(y)}" x2="{_fmt(left + pw)}" y2="{_fmt(y)}" '
                     'stroke="#c0392b" stroke-width="0.4" stroke-dasharray="2 1"/>')
        marks.append(f'<text x="{_fmt(left + pw - 1)}" y="{_fmt(y - 1)}" font-size="2.8" '
                     f'fill="#c0392b" text-anchor="end">t = {_fmt(time_s)} s</text>')
    if len(ratings) == 1:
        cs = CurveSet(curves)
        if time_s is not None:
            ia = float(current_for_time(cs, [0], [time_s])[0])
            if math.isfinite(ia):
                zmax = safe_round("zs_max_ohm", float(zs_limit(ia, u0_v, cmin)), 2)
                ia_up = _round_up_amperes(ia)
                marks.append(f'<circle cx="{_fmt(X(ia))}" cy="{_fmt(Y(time_s))}" r="0.9" '
                             'fill="#ffffff" stroke="#000000" stroke-width="0.35"/>')
                notes.append(f"Ia({_fmt(time_s)} s) = {ia_up:g} A, so Zs max = Cmin U0 / Ia = "
                             f"{_fmt(cmin)} x {_fmt(u0_v)} V / {ia_up:g} A = {zmax:.2f} ohm "
                             "(rounded down)")
            else:
                notes.append(f"The data do not show this device operating within {_fmt(time_s)} s "
                             "at any current.")
        if fault_a is not None:
            t = float(operating_time(cs, [0], [fault_a])[0])
            if math.isfinite(t):
                ty = min(max(t, 10.0 ** ly0), 10.0 ** ly1)
                marks.append(f'<circle cx="{_fmt(X(fault_a))}" cy="{_fmt(Y(ty))}" r="0.9" '
                             'fill="#c0392b"/>')
                t_up = safe_round("disconnect_s", t, 3)
                notes.append(f"At If = {_fmt(fault_a)} A the device operates within {t_up:g} s "
                             "(its longest operating time).")
            else:
                notes.append(f"At If = {_fmt(fault_a)} A the data show no operation at all.")
    out.append('<g id="marks">' + "".join(marks) + "</g>")
    if legend:
        lx = left + pw + 4
        items = [f'<text x="{_fmt(lx)}" y="{_fmt(top + 2.5)}" font-size="2.8" '
                 'font-weight="bold">In</text>']
        for k, (text, colour) in enumerate(legend_items):
            y = top + 7 + 3.6 * k
            items.append(f'<line x1="{_fmt(lx)}" y1="{_fmt(y - 0.9)}" x2="{_fmt(lx + 5)}" '
                         f'y2="{_fmt(y - 0.9)}" stroke="{colour}" stroke-width="0.6"/>'
                         f'<text x="{_fmt(lx + 6.5)}" y="{_fmt(y)}" font-size="2.6">{escape(text)}</text>')
        out.append('<g id="legend">' + "".join(items) + "</g>")

    y = top + ph + 14
    for n in notes:
        out.append(f'<text x="{_fmt(left)}" y="{_fmt(y)}" font-size="2.8">{escape(n)}</text>')
        y += 4
    caution = textwrap.wrap("Caution: " + CAUTION, width=max(40, int((width_mm - left) / 1.25)))
    for k, line in enumerate(caution):
        out.append(f'<text x="{_fmt(left)}" y="{_fmt(height_mm - 2.5 - 3 * (len(caution) - 1 - k))}" '
                   f'font-size="2.4" fill="#444444">{escape(line)}</text>')
    out.append("</svg>")
    return "\n".join(out) + "\n"

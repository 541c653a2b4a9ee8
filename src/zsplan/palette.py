"""Colours and line styles that mark each circuit on the plan by its margin.

The margin of a circuit is

.. math:: m = 1 - Z_s / Z_{s,\\max}

(negative: the loop impedance is above the limit).  It falls into one of
three bands, named as in the results JSON:

============  ==========================  ==================================
band          margin                      colour (this palette)
============  ==========================  ==================================
``"fail"``    m < 0                       magenta, deepening to dark purple
``"tight"``   0 <= m < tight (0.2)        orange, lightening to amber
``"pass"``    m >= tight                  teal, deepening to blue
``"none"``    no result (NaN)             mid grey
============  ==========================  ==================================

A margin of exactly 0 (Zs equal to Zs max) is allowed by BS 7671
(Zs <= Zs max, Regulation 411.4.4) and is therefore *tight*, not a fail;
a margin of exactly ``tight`` is a pass.

Within a band the colour moves continuously with the margin, in straight
lines through CIELAB between two anchor colours per band; it saturates at
m = -0.5 (fail), at m = tight (tight) and at m = max(0.6, tight + 0.2)
(pass).  Between bands it jumps.  The anchors were chosen so that any
colour of one band stays at least 15 CIEDE2000 units from any colour of the
neighbouring band in normal vision and under simulated deuteranopia and
protanopia (Machado et al. 2009, severity 1.0); see ``docs/palette.md`` and
``tests/test_palette.py`` for the measured figures.

Each band also has its own dash pattern and line weight (:func:`style`), so
that a monochrome print still tells the bands apart.

References
----------
.. [1] BS 7671:2018+A2:2022, Requirements for Electrical Installations,
   Regulation 411.4.4 (Zs x Ia <= U0 x Cmin; regulation number from memory).
.. [2] CIE 15:2004, Colorimetry, clause 8.2.1 (CIELAB).
.. [3] G. Sharma, W. Wu and E. N. Dalal, Color Res. Appl. 30(1), 21-30,
   2005 (CIEDE2000).
.. [4] G. M. Machado, M. M. Oliveira and L. A. F. Fernandes, IEEE TVCG
   15(6), 1291-1298, 2009 (colour-vision deficiency simulation).
.. [5] ISO 128-20:1996, Technical drawings - General principles of
   presentation - Part 20: Basic conventions for lines (line-width series
   0.13, 0.18, 0.25, 0.35, 0.5, 0.7, 1 mm ...; from memory).
"""
from __future__ import annotations

from dataclasses import dataclass
from xml.sax.saxutils import escape

import numpy as np

from .colourscience import (
    CVD_KINDS,
    ciede2000,
    hex_to_srgb,
    lab_to_srgb,
    simulate_cvd,
    srgb_to_hex,
    srgb_to_lab,
)

__all__ = [
    "BANDS",
    "BAND_KEYS",
    "DEFAULT_TIGHT",
    "FAIL_FULL",
    "NO_RESULT",
    "NO_RESULT_COLOUR",
    "PASS_FULL",
    "BandInfo",
    "LegendBand",
    "band",
    "colour",
    "colour_lab",
    "legend_stops",
    "pass_full",
    "separation_table",
    "style",
    "swatch_svg",
]

#: Default tight threshold: a pass with margin below this is "tight".
DEFAULT_TIGHT = 0.2   # zsplan's default (plan-format.md, settings.tight); our choice, no published source
#: Margin at which the fail colour stops deepening.
FAIL_FULL = -0.5      # palette design choice (no published source)
#: Margin at which the pass colour stops deepening (when tight <= 0.4).
PASS_FULL = 0.6       # palette design choice (no published source)

# Anchor colours, CIELAB (D65) given as L*, C*ab, h_ab (degrees).  Each band
# runs from its "edge" anchor (the end touching the tighter neighbour) to its
# "far" anchor.  Palette design choice (no published source); separations
# measured in docs/palette.md.
_ANCHORS_LCH = {
    #          edge anchor           far anchor
    "fail":  ((36.0, 58.0, 345.0), (18.0, 40.0, 315.0)),  # m = 0^-  ->  m <= -0.5
    "tight": ((62.0, 66.0, 55.0), (74.0, 72.0, 78.0)),    # m = 0    ->  m -> tight^-
    "pass":  ((62.0, 28.0, 195.0), (52.0, 34.0, 250.0)),  # m = tight -> m >= pass_full
}
_NO_RESULT_HEX = "#787878"   # palette design choice: neutral mid grey (L* about 50)
#: Stroke colour for a circuit without a result.
NO_RESULT_COLOUR = _NO_RESULT_HEX


def _lch_to_lab(L, C, h):
    return np.array([L, C * np.cos(np.radians(h)), C * np.sin(np.radians(h))])


_ANCHORS_LAB = {k: (_lch_to_lab(*a), _lch_to_lab(*b)) for k, (a, b) in _ANCHORS_LCH.items()}

# Line styles for monochrome reading: (SVG stroke-dasharray in mm or None for
# solid, stroke width in mm).  Widths from the ISO 128-20 series [5]; dash
# patterns are palette design choices (no published source).  Dash lengths are
# in the sheet's millimetre user units; draw with stroke-linecap="butt".
_STYLES = {
    "fail": (None, 0.70),        # heavy solid: the line to find first
    "tight": ("2 1", 0.50),      # medium, short dashes: busy, catches the eye second
    "pass": ("6 1.5", 0.35),     # light, long dashes: recedes
    "none": ("0.6 0.9", 0.25),   # fine dots: no result
}

BAND_KEYS = ("fail", "tight", "pass")


@dataclass(frozen=True)
class BandInfo:
    """Display data of one band (or of "no result")."""

    key: str             # state name as in the results JSON
    label: str           # short display name for legends
    description: str     # one line for legends and docs ({tight} is filled in by describe())
    sample: str          # a representative colour, #rrggbb (band centre at the default tight)
    dash: str | None     # SVG stroke-dasharray, mm; None = solid
    width_mm: float      # stroke width, mm

    def describe(self, tight: float = DEFAULT_TIGHT) -> str:
        """The description with the tight threshold written as a percentage."""
        return self.description.format(tight=f"{100 * tight:g} %")


def _validate_tight(tight) -> float:
    t = float(tight)
    if not (0.0 < t < 1.0):
        raise ValueError(f"tight threshold must lie between 0 and 1 (exclusive), got {tight!r}")
    return t


def pass_full(tight: float = DEFAULT_TIGHT) -> float:
    """Margin at which the pass colour saturates: ``max(0.6, tight + 0.2)``."""
    return max(PASS_FULL, _validate_tight(tight) + 0.2)


def band(margin, tight: float = DEFAULT_TIGHT) -> np.ndarray:
    """Band of each margin: ``"fail"``, ``"tight"``, ``"pass"`` or ``"none"``.

    .. math::

        \\text{band}(m) = \\begin{cases}
        \\text{fail} & m < 0 \\\\
        \\text{tight} & 0 \\le m < t \\\\
        \\text{pass} & m \\ge t \\\\
        \\text{none} & m \\text{ is NaN} \\end{cases}

    Margin 0 (Zs = Zs max) is tight, since BS 7671 accepts Zs <= Zs max [1]_.

    Parameters
    ----------
    margin : array_like
        ``1 - Zs / Zs_max``. [-]
    tight : float, optional
        Threshold below which a pass is tight. Default 0.2. [-]

    Returns
    -------
    numpy.ndarray of str
        Same shape as ``margin`` (0-d for a scalar).

    References
    ----------
    .. [1] BS 7671:2018+A2:2022, Regulation 411.4.4.

    Examples
    --------
    >>> band([-0.01, 0.0, 0.19, 0.2, float("nan")]).tolist()
    ['fail', 'tight', 'tight', 'pass', 'none']
    """
    t = _validate_tight(tight)
    m = np.asarray(margin, dtype=float)
    out = np.full(m.shape, "none", dtype="<U5")
    out[m < 0.0] = "fail"
    out[(m >= 0.0) & (m < t)] = "tight"
    out[m >= t] = "pass"
    return out


def _position(m: np.ndarray, t: float):
    """Band index (0 fail, 1 tight, 2 pass, -1 none) and position 0..1 from
    the band's edge anchor to its far anchor."""
    idx = np.full(m.shape, -1, dtype=int)
    pos = np.zeros(m.shape)
    with np.errstate(invalid="ignore"):
        f = m < 0.0
        g = (m >= 0.0) & (m < t)
        p = m >= t
    idx[f], idx[g], idx[p] = 0, 1, 2
    pos[f] = np.clip(m[f] / FAIL_FULL, 0.0, 1.0)
    pos[g] = np.clip(m[g] / t, 0.0, 1.0)
    pos[p] = np.clip((m[p] - t) / (pass_full(t) - t), 0.0, 1.0)
    return idx, pos


def colour_lab(margin, tight: float = DEFAULT_TIGHT) -> np.ndarray:
    """CIELAB colour of each margin (before 8-bit rounding); NaN gives the
    "no result" grey.  Shape ``margin.shape + (3,)``.

    The colour is a straight line through CIELAB [1]_ within each band:

    .. math:: \\mathrm{Lab}(m) = \\mathrm{Lab}_\\mathrm{edge}
              + s(m)\\,(\\mathrm{Lab}_\\mathrm{far} - \\mathrm{Lab}_\\mathrm{edge})

    with :math:`s = \\mathrm{clip}(m / -0.5)` for fail,
    :math:`s = m / t` for tight and
    :math:`s = \\mathrm{clip}((m - t) / (m_\\mathrm{full} - t))` for pass.

    References
    ----------
    .. [1] CIE 15:2004, Colorimetry, clause 8.2.1.
    """
    t = _validate_tight(tight)
    m = np.asarray(margin, dtype=float)
    idx, pos = _position(m, t)
    lab = np.empty(m.shape + (3,))
    lab[...] = srgb_to_lab(hex_to_srgb(_NO_RESULT_HEX))
    for i, key in enumerate(BAND_KEYS):
        sel = idx == i
        a, b = _ANCHORS_LAB[key]
        lab[sel] = a + (b - a) * pos[sel][:, None]
    return lab


def colour(margin, tight: float = DEFAULT_TIGHT):
    """Stroke colour of each margin as ``#rrggbb``.

    Continuous within each band, clamped at the ends (fail saturates at
    margin -0.5, pass at ``max(0.6, tight + 0.2)``), a step between bands;
    NaN (no result) gives mid grey.  See :func:`colour_lab` for the formula.

    Parameters
    ----------
    margin : array_like
        ``1 - Zs / Zs_max``. [-]
    tight : float, optional
        Tight threshold. Default 0.2. [-]

    Returns
    -------
    str or list
        One string for a scalar margin; otherwise a (nested) list of strings
        with the shape of ``margin``.

    Examples
    --------
    >>> colour(0.0) != colour(-1e-9)
    True
    >>> colour([0.1, float("nan")])[1]
    '#787878'
    """
    m = np.asarray(margin, dtype=float)
    hexes = srgb_to_hex(lab_to_srgb(colour_lab(m, tight)).reshape(-1, 3))
    if m.ndim == 0:
        return hexes[0]
    return np.array(hexes, dtype=object).reshape(m.shape).tolist()


def style(band_key: str) -> tuple[str | None, float]:
    """Dash pattern and line weight of a band, for monochrome reading.

    ==========  ======================  ==========
    band        stroke-dasharray [mm]   width [mm]
    ==========  ======================  ==========
    ``fail``    solid (None)            0.70
    ``tight``   ``"2 1"``               0.50
    ``pass``    ``"6 1.5"``             0.35
    ``none``    ``"0.6 0.9"``           0.25
    ==========  ======================  ==========

    Widths are steps of the ISO 128-20 line-width series [1]_.

    Parameters
    ----------
    band_key : str
        ``"fail"``, ``"tight"``, ``"pass"`` or ``"none"``.

    Returns
    -------
    (str or None, float)
        SVG ``stroke-dasharray`` in millimetres (None = solid) and stroke
        width in millimetres.

    References
    ----------
    .. [1] ISO 128-20:1996, clause 4.2 (line widths; from memory).
    """
    try:
        return _STYLES[str(band_key)]
    except KeyError:
        raise ValueError(f"unknown band {band_key!r}; expected one of fail, tight, pass, none") from None


def _centre(key: str, tight: float = DEFAULT_TIGHT) -> float:
    t = _validate_tight(tight)
    return {"fail": FAIL_FULL / 2, "tight": t / 2, "pass": (t + pass_full(t)) / 2}[key]


def _info(key, label, description, sample):
    dash, width = _STYLES[key]
    return BandInfo(key, label, description, sample, dash, width)


#: The three bands in order of increasing margin, with display names,
#: sample colours (band centres at the default tight threshold) and styles.
BANDS: dict[str, BandInfo] = {
    "fail": _info("fail", "Fail", "Zs above Zs max (margin below 0)", colour(_centre("fail"))),
    "tight": _info("tight", "Tight", "Zs within Zs max, margin below {tight}", colour(_centre("tight"))),
    "pass": _info("pass", "Pass", "Zs within Zs max, margin {tight} or more", colour(_centre("pass"))),
}

#: Display data for circuits without a result (not evaluated, input missing).
NO_RESULT = _info("none", "No result", "not evaluated", _NO_RESULT_HEX)


@dataclass(frozen=True)
class LegendBand:
    """One band of the legend: a colour ramp over a margin range.

    ``stops`` are ``(offset, colour)`` pairs along the ramp from ``lo`` (offset
    0) to ``hi`` (offset 1), margin increasing, ready for an SVG
    ``linearGradient`` (sampled closely enough that sRGB interpolation between
    stops stays within 1 CIEDE2000 unit of :func:`colour`).
    """

    key: str
    label: str
    description: str
    lo: float            # margin at offset 0
    hi: float            # margin at offset 1
    stops: tuple[tuple[float, str], ...]
    dash: str | None
    width_mm: float


def legend_stops(tight: float = DEFAULT_TIGHT, n: int = 5) -> tuple[LegendBand, ...]:
    """Colour ramps of the three bands for the plan's legend.

    Parameters
    ----------
    tight : float, optional
        Tight threshold. Default 0.2. [-]
    n : int, optional
        Stops per band (>= 2). Default 5.

    Returns
    -------
    tuple of LegendBand
        fail (-0.5 .. 0), tight (0 .. tight), pass (tight .. pass_full),
        margin increasing along each ramp.  The end stop of the tight ramp
        is taken just below ``tight`` (the tight colour's limit there).
    """
    t = _validate_tight(tight)
    if n < 2:
        raise ValueError("a legend ramp needs at least 2 stops")
    ranges = {"fail": (FAIL_FULL, 0.0), "tight": (0.0, t), "pass": (t, pass_full(t))}
    out = []
    for key in BAND_KEYS:
        lo, hi = ranges[key]
        offsets = np.linspace(0.0, 1.0, n)
        margins = lo + (hi - lo) * offsets
        # the ramp's ends must show their own band's colour: nudge ends that
        # sit on a band boundary into the band
        if key == "fail":
            margins[-1] = -1e-12
        if key == "tight":
            margins[-1] = t - 1e-12
        cols = colour(margins, t)
        info = BANDS[key]
        out.append(LegendBand(key, info.label, info.describe(t), lo, hi,
                              tuple((float(o), c) for o, c in zip(offsets, cols)),
                              info.dash, info.width_mm))
    return tuple(out)


def separation_table(tight: float = DEFAULT_TIGHT, samples: int = 41):
    """Measured CIEDE2000 separations between bands, per colour vision.

    For each vision in :data:`~zsplan.colourscience.CVD_KINDS` and each pair
    of bands, three figures: at the shared edge (colours just either side of
    margin 0 or of margin = tight; for fail/pass the two edge anchors), between
    the band centres, and the minimum over all pairs of colours sampled
    across the two bands.  Also the minimum between "no result" grey and
    each band.

    Returns
    -------
    list of dict
        Keys: ``vision``, ``pair``, ``edge``, ``centre``, ``min``.

    References
    ----------
    .. [1] Sharma, Wu & Dalal 2005 (CIEDE2000); Machado et al. 2009 (CVD).
    """
    t = _validate_tight(tight)
    eps = 1e-9
    span = {"fail": (FAIL_FULL, -eps), "tight": (0.0, t - eps), "pass": (t, pass_full(t))}
    sampled = {k: colour(np.linspace(*span[k], samples), t) for k in BAND_KEYS}
    edge = {("fail", "tight"): (-eps, 0.0), ("tight", "pass"): (t - eps, t),
            ("fail", "pass"): (-eps, t)}
    rows = []

    def lab(hexes, vision):
        return srgb_to_lab(simulate_cvd(hex_to_srgb(hexes), vision))

    for vision in CVD_KINDS:
        for a, b in (("fail", "tight"), ("tight", "pass"), ("fail", "pass")):
            ea, eb = colour(list(edge[(a, b)]), t)
            ca, cb = colour([_centre(a, t), _centre(b, t)], t)
            d_edge = float(ciede2000(lab(ea, vision), lab(eb, vision)))
            d_centre = float(ciede2000(lab(ca, vision), lab(cb, vision)))
            la, lb = lab(sampled[a], vision), lab(sampled[b], vision)
            d_min = float(ciede2000(la[:, None, :], lb[None, :, :]).min())
            rows.append({"vision": vision, "pair": f"{a}/{b}", "edge": d_edge,
                         "centre": d_centre, "min": d_min})
        g = lab(_NO_RESULT_HEX, vision)
        for k in BAND_KEYS:
            d = float(ciede2000(lab(sampled[k], vision), g).min())
            rows.append({"vision": vision, "pair": f"none/{k}", "edge": float("nan"),
                         "centre": float(ciede2000(lab(BANDS[k].sample, vision), g)), "min": d})
    return rows


# --------------------------------------------------------------------------- swatch

def swatch_svg(tight: float = DEFAULT_TIGHT) -> str:
    """An SVG picture of the palette for the documentation.

    Four colour ramps over margin -0.6 .. 0.8 (normal vision, then simulated
    deuteranopia, protanopia and tritanopia) and, below them, a sample line
    of each band in its colour, dash pattern and weight.  Sized in
    millimetres (180 x 92 mm).

    Returns
    -------
    str
        A standalone SVG document.
    """
    t = _validate_tight(tight)
    W, H = 180.0, 92.0
    x0, x1 = 34.0, 172.0          # ramp extent on the page, mm
    m0, m1 = -0.6, 0.8            # margin range shown
    step = 0.5                    # ramp slice width, mm

    def mx(m):
        return x0 + (m - m0) / (m1 - m0) * (x1 - x0)

    font = 'font-family="DejaVu Sans, Arial, sans-serif"'
    parts = [
        '<?xml version="1.0" encoding="UTF-8"?>',
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{W:g}mm" height="{H:g}mm" '
        f'viewBox="0 0 {W:g} {H:g}">',
        f'<rect x="0" y="0" width="{W:g}" height="{H:g}" fill="#ffffff"/>',
        f'<text x="4" y="7" font-size="4" {font} fill="#222222">'
        f'zsplan margin palette (tight threshold {100 * t:g} %)</text>',
    ]
    xs = np.arange(x0, x1, step)
    ms = m0 + (xs + step / 2 - x0) / (x1 - x0) * (m1 - m0)
    base = hex_to_srgb(colour(ms, t))
    row_h, gap, top = 9.0, 3.0, 12.0
    names = {"normal": "normal vision", "deuteranopia": "deuteranopia",
             "protanopia": "protanopia", "tritanopia": "tritanopia"}
    for r, vision in enumerate(CVD_KINDS):
        y = top + r * (row_h + gap)
        seen = srgb_to_hex(simulate_cvd(base, vision))
        parts.append(f'<text x="4" y="{y + row_h / 2 + 1.2:g}" font-size="3" {font} '
                     f'fill="#222222">{escape(names[vision])}</text>')
        parts.append('<g shape-rendering="crispEdges">')
        for i, (x, c) in enumerate(zip(xs, seen)):
            # each slice overlaps the next (drawn over it) so no seams show
            w = step if i == len(xs) - 1 else 2 * step
            parts.append(f'<rect x="{x:.2f}" y="{y:g}" width="{w:.2f}" '
                         f'height="{row_h:g}" fill="{c}"/>')
        parts.append('</g>')
    y_axis = top + len(CVD_KINDS) * (row_h + gap) - gap
    parts.append(f'<line x1="{x0:g}" y1="{y_axis:g}" x2="{x1:g}" y2="{y_axis:g}" '
                 'stroke="#222222" stroke-width="0.25"/>')
    for m in (-0.5, 0.0, t, pass_full(t), 0.8):
        x = mx(m)
        parts.append(f'<line x1="{x:.2f}" y1="{top - 1:g}" x2="{x:.2f}" y2="{y_axis + 1.5:g}" '
                     'stroke="#222222" stroke-width="0.2"/>')
        parts.append(f'<text x="{x:.2f}" y="{y_axis + 5:g}" font-size="2.8" {font} '
                     f'text-anchor="middle" fill="#222222">{m:g}</text>')
    parts.append(f'<text x="{(x0 + x1) / 2:g}" y="{y_axis + 9.5:g}" font-size="3" {font} '
                 'text-anchor="middle" fill="#222222">margin = 1 - Zs / Zs max</text>')
    y = y_axis + 16.0
    items = [BANDS[k] for k in BAND_KEYS] + [NO_RESULT]
    col_w = (W - 8.0) / len(items)
    for i, info in enumerate(items):
        x = 4.0 + i * col_w
        dash = f' stroke-dasharray="{info.dash}"' if info.dash else ""
        parts.append(f'<line x1="{x:g}" y1="{y:g}" x2="{x + col_w - 6:g}" y2="{y:g}" '
                     f'stroke="{info.sample}" stroke-width="{info.width_mm:g}"{dash} '
                     'stroke-linecap="butt"/>')
        parts.append(f'<text x="{x:g}" y="{y + 5:g}" font-size="3" {font} fill="#222222">'
                     f'{escape(info.label)} ({info.sample})</text>')
        parts.append(f'<text x="{x:g}" y="{y + 9:g}" font-size="2.4" {font} fill="#444444">'
                     f'{info.width_mm:g} mm, '
                     f'{escape("dashes " + info.dash + " mm" if info.dash else "solid")}</text>')
    parts.append("</svg>")
    return "\n".join(parts) + "\n"

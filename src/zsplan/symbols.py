"""Plan symbols for outlets and boards.

zsplan draws its own symbols: plain geometric shapes in the spirit of the
IEC 60617 installation symbols [1]_ (not copied from any symbol set).  Each is
a small standalone SVG file shipped as package data in
``zsplan/symbols/<kind>.svg``, stroke only (``currentColor``), with the
insertion point at the centre of a 5 x 5 viewBox, drawn 5 mm square on
paper.

The renderer embeds them once with :func:`symbol_defs` and places each with
:func:`use`, which centres the symbol on the insertion point.

References
----------
.. [1] IEC 60617, Graphical symbols for diagrams (database), section 11:
   architectural and topographical installation plans and diagrams.
"""
from __future__ import annotations

from functools import lru_cache
from importlib import resources
from xml.etree import ElementTree as ET
from xml.sax.saxutils import quoteattr

import defusedxml.ElementTree as SafeET
import numpy as np

__all__ = ["SYMBOL_IDS", "SYMBOL_SIZE_MM", "symbol_defs", "symbol_svg", "use",
           "use_attributes", "use_attributes_many"]

_SVG_NS = "http://www.w3.org/2000/svg"

#: Outlet kind (``Outlet.kind`` in the plan model, plus "board") -> id of the
#: ``<symbol>`` element written by :func:`symbol_defs`.
SYMBOL_IDS: dict[str, str] = {
    "socket": "zs-sym-socket",
    "light": "zs-sym-light",
    "switch": "zs-sym-switch",
    "spur": "zs-sym-spur",
    "fixed": "zs-sym-fixed",
    "board": "zs-sym-board",
}

#: Size of a symbol on paper. [mm]
SYMBOL_SIZE_MM = 5.0   # drawing convention chosen for zsplan (no published source)


def _check_kind(kind: str) -> str:
    if kind not in SYMBOL_IDS:
        raise ValueError(f"no symbol for kind {kind!r}; expected one of {', '.join(SYMBOL_IDS)}")
    return kind


def symbol_svg(kind: str) -> str:
    """The standalone SVG file of one symbol, as text.

    Parameters
    ----------
    kind : str
        One of the keys of :data:`SYMBOL_IDS`.
    """
    _check_kind(kind)
    return resources.files("zsplan").joinpath("symbols", f"{kind}.svg").read_text(encoding="utf-8")


def _strip_ns(el: ET.Element) -> None:
    for e in el.iter():
        if isinstance(e.tag, str) and e.tag.startswith("{"):
            e.tag = e.tag.split("}", 1)[1]


@lru_cache(maxsize=None)
def _symbol_element(kind: str) -> str:
    root = SafeET.fromstring(symbol_svg(kind).encode("utf-8"))
    if root.tag != f"{{{_SVG_NS}}}svg" or "viewBox" not in root.attrib:
        raise RuntimeError(f"package symbol file {kind}.svg is not an SVG with a viewBox")
    _strip_ns(root)
    children = "".join(ET.tostring(child, encoding="unicode").strip() for child in root)
    return (f'<symbol id="{SYMBOL_IDS[kind]}" viewBox={quoteattr(root.attrib["viewBox"])} '
            f'overflow="visible">{children}</symbol>')


def symbol_defs(kinds=None) -> str:
    """An SVG ``<defs>`` fragment with one ``<symbol>`` per kind.

    Parameters
    ----------
    kinds : iterable of str, optional
        Kinds to include; default all of :data:`SYMBOL_IDS`.

    Returns
    -------
    str
        ``<defs><symbol id="zs-sym-socket" viewBox="-2.5 -2.5 5 5">...</defs>``,
        to be placed inside an SVG document whose default namespace is SVG.
    """
    kinds = list(SYMBOL_IDS) if kinds is None else [_check_kind(k) for k in kinds]
    return "<defs>" + "".join(_symbol_element(k) for k in kinds) + "</defs>"


def use(kind: str, x_mm: float, y_mm: float, size_mm: float = SYMBOL_SIZE_MM,
        colour: str | None = None) -> str:
    """A ``<use>`` element placing a symbol centred on ``(x_mm, y_mm)``.

    The symbol's viewport is ``size_mm`` square with its top-left corner at
    ``(x_mm - size_mm / 2, y_mm - size_mm / 2)``, so the centre of the
    viewBox (the insertion point) lands on ``(x_mm, y_mm)``.

    Parameters
    ----------
    kind : str
        One of the keys of :data:`SYMBOL_IDS`.
    x_mm, y_mm : float
        Insertion point in the sheet's user units. [mm]
    size_mm : float, optional
        Drawn size. Default 5. [mm]
    colour : str, optional
        Stroke colour (sets ``color``, which the symbol uses as
        ``currentColor``); default inherited.

    Returns
    -------
    str
        An SVG ``<use>`` element with an SVG 2 ``href`` (read by cairosvg,
        browsers and current editors; no ``xlink`` namespace needed).
    """
    return f"<use {use_attributes(kind, x_mm, y_mm, size_mm, colour)}/>"


def use_attributes(kind: str, x_mm: float, y_mm: float, size_mm: float = SYMBOL_SIZE_MM,
                   colour: str | None = None) -> str:
    """The attributes of :func:`use`'s element, as markup (``href="#..." x="..." ...``),
    for a renderer that writes the element itself and adds attributes of its own."""
    return use_attributes_many([kind], [x_mm], [y_mm], size_mm, colour)[0]


def use_attributes_many(kinds, xs_mm, ys_mm, size_mm: float = SYMBOL_SIZE_MM,
                        colour: str | None = None) -> list[str]:
    """:func:`use_attributes` of many symbols of one size and colour at once.

    Parameters
    ----------
    kinds : sequence of str
        Each one of the keys of :data:`SYMBOL_IDS`.
    xs_mm, ys_mm : array_like
        Insertion points, as many as ``kinds``. [mm]
    size_mm, colour
        As for :func:`use`.
    """
    refs = {k: f'href="#{SYMBOL_IDS[_check_kind(k)]}"' for k in dict.fromkeys(kinds)}
    h = size_mm / 2.0
    # the viewport's top-left corner: the insertion point less half the size
    xs = (np.asarray(xs_mm, dtype=float) - h).tolist()
    ys = (np.asarray(ys_mm, dtype=float) - h).tolist()
    tail = _size_and_colour(size_mm, colour)
    return [f'{refs[k]} x="{x:.3f}" y="{y:.3f}" {tail}' for k, x, y in zip(kinds, xs, ys)]


@lru_cache(maxsize=64)
def _size_and_colour(size_mm: float, colour: str | None) -> str:
    col = f" color={quoteattr(colour)}" if colour else ""
    return f'width="{size_mm:.3f}" height="{size_mm:.3f}"{col}'

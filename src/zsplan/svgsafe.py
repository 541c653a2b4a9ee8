"""Reading untrusted SVG files safely, and cleaning them for embedding.

A floor plan comes from whoever drew it, so zsplan treats every SVG as
untrusted input:

* :func:`parse_svg` refuses oversized files before reading them, refuses
  entity declarations (the "billion laughs" expansion and external entities
  that would read other files), never fetches anything, limits how deeply
  elements may nest, and turns every failure into a
  :class:`~zsplan.errors.PlanError` naming the file and the line.
* :func:`sanitize_for_embedding` returns a copy of a parsed drawing with
  everything active or external removed (scripts, event attributes, foreign
  content, animation, references to other files or web addresses), so the
  renderers can place the floor plan under their mark-up.
* :func:`svg_size` reads the drawing's ``viewBox`` and its physical width and
  height in millimetres.
* :func:`source_line` gives the line on which :func:`parse_svg` found an
  element, for error messages.

References
----------
.. [1] W3C, "Scalable Vector Graphics (SVG) 1.1 (Second Edition)",
   Recommendation, 16 August 2011: 7.7 (the ``viewBox`` attribute),
   7.10 (units), 5.6 (the ``use`` element), 18 (scripting).
.. [2] W3C, "CSS Values and Units Module Level 3": 1 in = 2.54 cm = 96 px,
   1 pt = 1/72 in, 1 pc = 12 pt, 1 Q = 0.25 mm.
.. [3] defusedxml 0.7 documentation: ``forbid_dtd``, ``forbid_entities``,
   ``forbid_external``.
"""
from __future__ import annotations

import copy
import os
import re
import stat
import weakref
import xml.etree.ElementTree as ET
from xml.parsers import expat

from defusedxml import DefusedXmlException, EntitiesForbidden, ExternalReferenceForbidden
from defusedxml.ElementTree import DefusedXMLParser

from .errors import PlanError, Problem
from ._runtime import read_bounded

__all__ = [
    "MAX_BYTES",
    "MAX_DEPTH",
    "parse_svg",
    "sanitize_for_embedding",
    "source_line",
    "svg_size",
    "length_mm",
    "parse_viewbox",
    "local_name",
]

#: Largest SVG file read, in bytes (a floor plan with an embedded raster
#: underlay is typically a few megabytes).
MAX_BYTES = 20_000_000
#: Deepest element nesting accepted (editors write well under 50 levels).
MAX_DEPTH = 200

SVG_NS = "http://www.w3.org/2000/svg"
XLINK_NS = "http://www.w3.org/1999/xlink"
XML_NS = "http://www.w3.org/XML/1998/namespace"
XML_EVENTS_NS = "http://www.w3.org/2001/xml-events"

#: Line of each element found by :func:`parse_svg` (copies have none).
_LINES: "weakref.WeakKeyDictionary[ET.Element, int]" = weakref.WeakKeyDictionary()


def local_name(tag) -> str:
    """Tag or attribute name without its ``{namespace}`` part, lower case."""
    if not isinstance(tag, str):
        return ""
    return tag.rsplit("}", 1)[-1].lower()


def source_line(element: ET.Element) -> int | None:
    """1-based line of ``element``'s start tag, if read by :func:`parse_svg`."""
    try:
        return _LINES.get(element)
    except TypeError:  # pragma: no cover - not weak-referenceable
        return None


# --------------------------------------------------------------------------
# Parsing
# --------------------------------------------------------------------------

class _TooDeep(Exception):
    pass


class _LineTreeBuilder:
    """Tree builder that records each element's line and bounds nesting."""

    def __init__(self, max_depth: int):
        self._tb = ET.TreeBuilder()
        self._depth = 0
        self._max_depth = max_depth
        self.parser = None        # set once the parser exists
        self.lines: list[tuple[ET.Element, int]] = []

    def start(self, tag, attrib):
        self._depth += 1
        if self._depth > self._max_depth:
            raise _TooDeep()
        elem = self._tb.start(tag, attrib)
        self.lines.append((elem, self.parser.parser.CurrentLineNumber))
        return elem

    def end(self, tag):
        self._depth -= 1
        return self._tb.end(tag)

    def data(self, data):
        self._tb.data(data)

    def close(self):
        return self._tb.close()


def _file_problem(name: str, plan_file: str, message: str) -> PlanError:
    """A problem with the file as a whole (missing, too big, unreadable)."""
    if plan_file:
        message += f" (the floor plan named by drawing.floorplan in {plan_file})"
    return PlanError(Problem(file=name, message=message))


def parse_svg(path, *, plan_file: str = "", max_bytes: int = MAX_BYTES) -> ET.Element:
    """Read an SVG file into an element tree, safely.

    The size is checked before anything is read and again while reading (so
    special files and files that grow are bounded too).  The XML is parsed by
    expat through defusedxml [3]_ with a document type declaration allowed
    (older editors write the SVG 1.1 one) but every entity declaration and
    every external reference refused, so an entity bomb or an external entity
    fails at its declaration, in time and memory proportional to the file.
    Nothing is fetched from outside.

    Parameters
    ----------
    path : str or os.PathLike
        The SVG file.
    plan_file : str, optional
        The plan file that names this drawing, mentioned in file-level errors.
    max_bytes : int, optional
        Largest file accepted. [byte]

    Returns
    -------
    xml.etree.ElementTree.Element
        The root ``<svg>`` element.  :func:`source_line` gives each element's
        line.

    Raises
    ------
    PlanError
        Missing, oversized, compressed or malformed file, an entity
        declaration or external reference, nesting deeper than
        :data:`MAX_DEPTH`, or a root element other than ``<svg>``; the problem
        names the file, the line where known, and what was expected.
    """
    name = os.fsdecode(os.fspath(path))
    try:
        info = os.stat(name)
    except FileNotFoundError:
        raise _file_problem(name, plan_file, "no such file; expected an SVG floor plan") from None
    except (OSError, ValueError) as exc:     # ValueError: a NUL in the name
        why = getattr(exc, "strerror", None) or "not a usable file name"
        raise _file_problem(name if name.isprintable() else repr(name), plan_file,
                            f"cannot read the file ({why})") from None
    if stat.S_ISDIR(info.st_mode):
        raise _file_problem(name, plan_file, "is a folder; expected an SVG file")
    if stat.S_ISFIFO(info.st_mode) or stat.S_ISSOCK(info.st_mode):
        # opening or reading a pipe or a socket waits for a writer that may never come;
        # a device is read like a file, within the size bound
        raise _file_problem(name, plan_file, "is a pipe or socket, not a file; expected an "
                            "SVG file")
    size = info.st_size
    too_big = (f"larger than the {max_bytes:,}-byte limit for a floor plan; expected a "
               "smaller SVG (simplify it, or link a smaller underlay image)")
    if size > max_bytes:
        raise _file_problem(name, plan_file, f"the file is {size:,} bytes, {too_big}")
    try:
        data = read_bounded(name, size, max_bytes)
    except OSError as exc:
        raise _file_problem(name, plan_file, f"cannot read the file ({exc.strerror})") from None
    if len(data) > max_bytes:
        raise _file_problem(name, plan_file, f"the file is over {max_bytes:,} bytes, {too_big}")
    if data[:2] == b"\x1f\x8b":
        raise _file_problem(name, plan_file, "is compressed (.svgz); expected a plain SVG "
                            "(save the drawing as plain, uncompressed SVG)")

    builder = _LineTreeBuilder(MAX_DEPTH)
    parser = DefusedXMLParser(target=builder, forbid_dtd=False,
                              forbid_entities=True, forbid_external=True)
    builder.parser = parser

    def fail(message: str, line: int | None) -> PlanError:
        return PlanError(Problem(file=name, message=message, line=line))

    try:
        parser.feed(data)
        root = parser.close()
    except EntitiesForbidden as exc:
        raise fail(
            f"the file declares an XML entity ({exc.name!r}); entity declarations are "
            "refused because they can expand without bound or read other files; "
            "expected a plain SVG without <!ENTITY ...> declarations",
            parser.parser.CurrentLineNumber) from None
    except ExternalReferenceForbidden as exc:
        raise fail(
            f"the file refers to an external resource ({exc.sysid!r}); expected a "
            "self-contained SVG (nothing is fetched from outside)",
            parser.parser.CurrentLineNumber) from None
    except DefusedXmlException as exc:  # pragma: no cover - DTDs are allowed
        raise fail(f"refused unsafe XML ({exc}); expected a plain SVG",
                   parser.parser.CurrentLineNumber) from None
    except _TooDeep:
        raise fail(f"elements are nested more than {MAX_DEPTH} levels deep; expected a "
                   "drawing with ordinary grouping", parser.parser.CurrentLineNumber) from None
    except ET.ParseError as exc:
        line = exc.position[0] if getattr(exc, "position", None) else None
        col = exc.position[1] + 1 if getattr(exc, "position", None) else None
        what = expat.ErrorString(exc.code) if getattr(exc, "code", None) else str(exc)
        where = f" at column {col}" if col is not None else ""
        raise fail(f"not well-formed XML ({what}{where}); expected an SVG document "
                   "saved as plain XML", line) from None
    if root.tag not in ("svg", f"{{{SVG_NS}}}svg"):
        raise fail(f"the document's root element is <{local_name(root.tag)}>; expected "
                   "an SVG drawing whose root element is <svg>", builder.lines[0][1])
    for elem, line in builder.lines:
        _LINES[elem] = line
    return root


# --------------------------------------------------------------------------
# Sizes
# --------------------------------------------------------------------------

#: millimetres per unit [2]_
_MM_PER_UNIT = {
    "mm": 1.0,
    "cm": 10.0,
    "q": 0.25,
    "in": 25.4,
    "pt": 25.4 / 72.0,
    "pc": 25.4 / 6.0,
    "px": 25.4 / 96.0,
    "": 25.4 / 96.0,        # a bare number is in px
}
_LENGTH = re.compile(
    r"^\s*([-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s*([A-Za-z%]*)\s*$")
_NUMBERS = re.compile(r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?")


def length_mm(text) -> tuple[float | None, str]:
    """Read an SVG length such as ``"297mm"``, ``"800"`` or ``"11in"``.

    Returns ``(millimetres, unit)`` with the unit in lower case (``""`` for a
    bare number).  Percentages, font-relative units and unreadable text give
    ``(None, unit)``.  One px is 1/96 in [2]_.
    """
    if text is None:
        return None, ""
    m = _LENGTH.match(str(text))
    if not m:
        return None, "?"
    unit = m.group(2).lower()
    factor = _MM_PER_UNIT.get(unit)
    if factor is None:
        return None, unit
    value = float(m.group(1)) * factor
    if not (value > 0 and value < float("inf")):
        return None, unit
    return value, unit


def parse_viewbox(text) -> tuple[float, float, float, float] | None:
    """Read a ``viewBox`` attribute as ``(min_x, min_y, width, height)``.

    ``None`` when absent, not four numbers, or with a width or height that
    is not positive (such a viewBox disables rendering [1]_).
    """
    if text is None:
        return None
    nums = _NUMBERS.findall(str(text))
    if len(nums) != 4:
        return None
    minx, miny, w, h = (float(n) for n in nums)
    if not (w > 0 and h > 0) or any(v != v or abs(v) == float("inf") for v in (minx, miny, w, h)):
        return None
    return (minx, miny, w, h)


def svg_size(root: ET.Element):
    """The drawing's user-space box and its physical size.

    Parameters
    ----------
    root : xml.etree.ElementTree.Element
        The ``<svg>`` element.

    Returns
    -------
    viewbox : tuple of 4 float or None
        ``(min_x, min_y, width, height)`` in user units: the ``viewBox``
        attribute, or, without one, ``(0, 0, width, height)`` in px (the user
        unit is then the CSS pixel [1]_); ``None`` when neither is given.
    width_mm, height_mm : float or None
        The ``width`` and ``height`` attributes in millimetres (a px or bare
        number is taken at 96 px per inch [2]_); ``None`` when absent or
        relative (``100%``).
    """
    width_mm, _ = length_mm(root.get("width"))
    height_mm, _ = length_mm(root.get("height"))
    vb = parse_viewbox(root.get("viewBox"))
    if vb is None and width_mm is not None and height_mm is not None:
        px = _MM_PER_UNIT["px"]
        vb = (0.0, 0.0, width_mm / px, height_mm / px)
    return vb, width_mm, height_mm


# --------------------------------------------------------------------------
# Sanitising
# --------------------------------------------------------------------------

#: Elements removed outright: active content, foreign content, animation.
_DROP_ELEMENTS = frozenset({
    "script", "foreignobject", "handler", "listener", "iframe", "embed", "object",
    "audio", "video", "canvas", "set", "animate", "animatetransform",
    "animatemotion", "animatecolor", "discard",
})
#: Elements whose whole job is to show what their reference points at: removed
#: when that reference is not a safe one.
_REFERENCING = frozenset({
    "image", "use", "feimage", "tref", "altglyph", "glyphref", "font-face-uri",
    "color-profile", "cursor",
})
_FRAGMENT = re.compile(r"^#[^\W\d][\w.\-:]*$")
_DATA_IMAGE = re.compile(r"^data:image/(?:png|jpeg|jpg|gif);base64,[A-Za-z0-9+/=\s]*$",
                         re.IGNORECASE)
_URL = re.compile(r"url\s*\(\s*(?:\"([^\"]*)\"|'([^']*)'|([^)\"'\s]*))\s*\)",
                  re.IGNORECASE | re.DOTALL)
_URL_START = re.compile(r"url\s*\(", re.IGNORECASE)
#: CSS that loads or runs something other than through url(): always refused.
_CSS_BANNED = ("@import", "image-set(", "image(", "cross-fade(", "element(", "src(",
               "expression(", "javascript:", "behavior", "-moz-binding")


def _safe_reference(value: str) -> bool:
    """A local fragment (``#id``) or an inline PNG, JPEG or GIF image."""
    v = value.strip()
    return bool(_FRAGMENT.match(v) or _DATA_IMAGE.match(v))


def _css_safe(text: str) -> bool:
    """True when a piece of CSS references nothing outside the document."""
    low = text.lower()
    if "\\" in text:          # escapes can spell any of the below
        return False
    if any(b in low for b in _CSS_BANNED):
        return False
    starts = len(_URL_START.findall(text))
    found = _URL.findall(text)
    if starts != len(found):
        return False
    return all(_safe_reference(a or b or c) for a, b, c in found)


def _split_declarations(css: str) -> list[str]:
    """Split a style attribute on ``;`` outside quotes and brackets."""
    out, depth, quote, cur = [], 0, "", []
    for ch in css:
        if quote:
            if ch == quote:
                quote = ""
        elif ch in "\"'":
            quote = ch
        elif ch == "(":
            depth += 1
        elif ch == ")":
            depth = max(0, depth - 1)
        elif ch == ";" and depth == 0:
            out.append("".join(cur))
            cur = []
            continue
        cur.append(ch)
    out.append("".join(cur))
    return [d for d in out if d.strip()]


def _clean_style(style: str) -> str:
    return ";".join(d.strip() for d in _split_declarations(style) if _css_safe(d))


def _remove_child(parent: ET.Element, child: ET.Element) -> None:
    """Remove ``child`` but keep the text that followed it."""
    tail = child.tail
    index = list(parent).index(child)
    parent.remove(child)
    if tail:
        if index > 0:
            prev = parent[index - 1]
            prev.tail = (prev.tail or "") + tail
        else:
            parent.text = (parent.text or "") + tail


def _clean_attributes(elem: ET.Element) -> bool:
    """Clean one element's attributes in place; False if it must go."""
    keep = True
    kind = local_name(elem.tag)
    for key in list(elem.attrib):
        value = elem.attrib[key]
        name = local_name(key)
        ns = key[1:].split("}", 1)[0] if key.startswith("{") else ""
        drop = False
        if name.startswith("on") or ns == XML_EVENTS_NS:
            drop = True
        elif name in ("href", "src"):
            if not _safe_reference(value):
                drop = True
                if kind in _REFERENCING:
                    keep = False
        elif ns == XML_NS and name == "base":
            drop = True
        elif name == "style":
            cleaned = _clean_style(value)
            if cleaned:
                elem.set(key, cleaned)
            else:
                drop = True
        elif "(" in value and not _css_safe(value):
            drop = True      # fill="url(http://...)", filter=..., mask=...
        if drop:
            del elem.attrib[key]
    return keep


def sanitize_for_embedding(root: ET.Element) -> ET.Element:
    """A copy of a drawing that can be embedded without running or fetching anything.

    Removed from the copy:

    * ``<script>``, ``<foreignObject>``, event handlers (``<handler>``,
      ``<listener>``), embedded HTML media and animation elements (``<set>``,
      ``<animate...>``, ``<discard>``), and processing instructions;
    * every event attribute (``on...``) and XML Events attribute;
    * every ``href``/``xlink:href``/``src`` that is not a local fragment
      (``#id``) or an inline ``data:image/png``, ``jpeg`` or ``gif`` base64
      image; elements that exist to show such a reference (``<image>``,
      ``<use>``, ``<feImage>`` and the like) are removed with it;
    * ``xml:base``;
    * style declarations (and presentation attributes) with a ``url(...)``
      that is not a local fragment or inline image, or with ``@import`` or
      another loading function;
    * ``<style>`` elements containing any of those.

    Nothing is read from outside.  The input tree is not changed.

    Parameters
    ----------
    root : xml.etree.ElementTree.Element
        A parsed drawing (see :func:`parse_svg`).

    Returns
    -------
    xml.etree.ElementTree.Element
        The cleaned deep copy.

    References
    ----------
    .. [1] W3C, "Scalable Vector Graphics (SVG) 1.1 (Second Edition)", 18
       (scripting) and 19 (animation).
    """
    clean = copy.deepcopy(root)
    _clean_attributes(clean)
    stack = [clean]
    while stack:
        parent = stack.pop()
        for child in list(parent):
            if not isinstance(child.tag, str):
                if child.tag is ET.ProcessingInstruction:
                    _remove_child(parent, child)
                continue          # comments stay
            kind = local_name(child.tag)
            if kind in _DROP_ELEMENTS:
                _remove_child(parent, child)
                continue
            if kind == "style" and not _css_safe("".join(child.itertext())):
                _remove_child(parent, child)
                continue
            if not _clean_attributes(child):
                _remove_child(parent, child)
                continue
            stack.append(child)
    return clean

"""The user's floor plan as the underlay of the marked-up plan.

The floor plan is untrusted input.  It is read with
:func:`zsplan.svgsafe.parse_svg` (no entities, nothing fetched) and cleaned
with :func:`zsplan.svgsafe.sanitize_for_embedding` (no scripts, event
attributes, animation or references outside the document).  Then, so that it
cannot disturb the mark-up drawn over it:

* every ``id`` is renamed with a prefix (``fp-``) and every local reference
  to it (``href="#..."``, ``url(#...)``, CSS ``#id`` selectors) follows, so
  the drawing cannot redefine the renderer's symbols or gradients;
* every ``<style>`` sheet is scoped to the underlay's group (each selector
  prefixed with ``#zs-floorplan``; at-rules dropped), so its rules cannot
  restyle the routes, labels or title block;
* elements and attributes of editor namespaces are dropped and tags lose
  the SVG namespace, ready to sit inside the sheet's SVG;
* when the routes were drawn in the floor plan (``drawing.routes_layer``),
  the routes, boards and outlets layers are left out: the renderer draws
  them again, coloured.

The floor plan's user units map to plan metres by the drawing's own scale
(``drawing.scale``, ``units_per_metre`` or ``calibrate``), computed exactly
as :func:`zsplan.svgplan.read_drawing` computes it.

References
----------
.. [1] W3C, "Scalable Vector Graphics (SVG) 1.1 (Second Edition)", 2011:
   5.6 (use), 6.4 (style sheets), 7.4-7.7 (transforms, viewBox).
.. [2] W3C, "CSS Syntax Module Level 3" (tokens, qualified rules).
"""
from __future__ import annotations

import os
import re
import xml.etree.ElementTree as ET
from dataclasses import dataclass
from pathlib import Path

import tinycss2

from .errors import PlanError, Problem
from .model import Drawing
from .svgsafe import SVG_NS, XLINK_NS, XML_NS, parse_svg, sanitize_for_embedding, svg_size
from .svgplan import check_scale_options, layer_names, metres_per_unit, norm_name

__all__ = ["Underlay", "SCOPE_ID", "ID_PREFIX", "load_underlay", "scope_css"]

#: id of the group that holds the floor plan in the rendered sheet.
SCOPE_ID = "zs-floorplan"
#: prefix given to every id of the floor plan.
ID_PREFIX = "fp-"

#: root attributes that describe the document, not how to paint it
_ROOT_SKIP = frozenset({"width", "height", "viewbox", "x", "y", "version", "baseprofile",
                        "preserveaspectratio", "id", "zoomandpan", "contentscripttype",
                        "contentstyletype", "enable-background"})
_URL_REF = re.compile(r"(url\(\s*['\"]?)#", re.IGNORECASE)


@dataclass(frozen=True)
class Underlay:
    """A cleaned floor plan ready for embedding.

    Attributes
    ----------
    group : xml.etree.ElementTree.Element
        ``<g id="zs-floorplan">`` holding the drawing, in its own user units
        (the renderer adds the transform to the sheet).
    metres_per_unit : float
        Plan metres per user unit of the floor plan.
    extent_m : (float, float, float, float) or None
        The floor plan's viewBox in plan metres ``(xmin, ymin, xmax, ymax)``.
    file : str
        The floor plan's path.
    """

    group: ET.Element
    metres_per_unit: float
    extent_m: tuple | None
    file: str


def _plan_folder(plan_path: str) -> Path | None:
    if not plan_path:
        return None
    return Path(plan_path).expanduser().resolve().parent


def load_underlay(drawing: Drawing, plan_path: str = "") -> Underlay | None:
    """Read, clean and prepare the plan's floor plan (None when it has none).

    Parameters
    ----------
    drawing : zsplan.model.Drawing
        ``floorplan`` (absolute path) and the real-world scale.
    plan_path : str, optional
        The plan file; the floor plan must lie in its folder or below.

    Raises
    ------
    PlanError
        A floor plan outside the plan's folder, unreadable or unsafe XML, or
        no real-world scale.
    """
    if not drawing or not drawing.floorplan:
        return None
    name = os.fspath(drawing.floorplan)
    folder = _plan_folder(plan_path)
    if folder is not None:
        full = (folder / name).resolve()
        if not full.is_relative_to(folder):
            raise PlanError(Problem(plan_path or name, f"the floor plan {name!r} lies outside "
                                    f"the plan file's folder ({folder}); expected a file in "
                                    "that folder or below it", "drawing.floorplan"))
        name = str(full)
    check_scale_options(name, plan_path, drawing.scale, drawing.units_per_metre,
                         drawing.calibrate)
    root = parse_svg(name, plan_file=plan_path)
    mpu = metres_per_unit(root, name, drawing.scale, drawing.units_per_metre,
                           drawing.calibrate, [])
    vb, _, _ = svg_size(root)
    extent = None
    if vb is not None:
        extent = (vb[0] * mpu, vb[1] * mpu, (vb[0] + vb[2]) * mpu, (vb[1] + vb[3]) * mpu)
    clean = sanitize_for_embedding(root)
    hide = set()
    if drawing.routes_layer:
        hide = {norm_name(drawing.routes_layer), "boards", "outlets"}
    group = _convert(clean, hide)
    return Underlay(group, mpu, extent, name)


def _plain_attr(key: str) -> str | None:
    """Attribute name as written in the sheet, or None to drop it."""
    if key.startswith("{"):
        ns, name = key[1:].split("}", 1)
        if ns == XLINK_NS and name == "href":
            return "href"
        if ns == XML_NS:
            return key          # ElementTree writes xml:space, xml:lang
        return None             # editor namespaces (inkscape:, sodipodi:)
    return key


def _rename_refs(value: str) -> str:
    return _URL_REF.sub(lambda m: m.group(1) + "#" + ID_PREFIX, value)


def _convert_element(src: ET.Element, hide: set) -> ET.Element | None:
    tag = src.tag
    if tag.startswith("{"):
        ns, name = tag[1:].split("}", 1)
        if ns != SVG_NS:
            return None
    else:
        name = tag
    if hide and name == "g" and layer_names(src) & hide:
        return None
    out = ET.Element(name)
    for key, value in src.attrib.items():
        k = _plain_attr(key)
        if k is None:
            continue
        if k == "id":
            value = ID_PREFIX + value
        elif k == "href" and value.startswith("#"):
            value = "#" + ID_PREFIX + value[1:]
        elif "url(" in value.lower():
            value = _rename_refs(value)
        out.set(k, value)
    if name == "style":
        out.text = scope_css("".join(src.itertext()))
        return out
    out.text = src.text
    for child in src:
        if not isinstance(child.tag, str):
            continue             # comments and processing instructions
        conv = _convert_element(child, hide)
        if conv is not None:
            conv.tail = child.tail
            out.append(conv)
        elif child.tail and child.tail.strip():
            # keep text that followed a dropped element inside <text>
            if len(out):
                out[-1].tail = (out[-1].tail or "") + child.tail
            else:
                out.text = (out.text or "") + child.tail
    return out


def _convert(root: ET.Element, hide: set) -> ET.Element:
    body = _convert_element(root, hide)
    group = ET.Element("g")
    group.set("id", SCOPE_ID)
    for key, value in root.attrib.items():
        k = _plain_attr(key)
        if k is None or k.lower() in _ROOT_SKIP or k.startswith("xmlns"):
            continue
        group.set(k, body.get(k, value))
    group.text = body.text
    for child in list(body):
        group.append(child)
    return group


def _split_selectors(tokens):
    groups, cur = [], []
    for tok in tokens:
        if tok.type == "literal" and tok.value == ",":
            groups.append(cur)
            cur = []
        else:
            cur.append(tok)
    groups.append(cur)
    return groups


def scope_css(css: str) -> str:
    """Confine a style sheet to the underlay and follow the renamed ids.

    Each qualified rule's selectors are prefixed with ``#zs-floorplan``
    (descendant combinator) and ``#id`` selectors and ``url(#id)`` values get
    the id prefix; at-rules (``@media``, ``@font-face``, ``@import``...) are
    dropped.  The sheet was already cleaned of external references by
    :func:`zsplan.svgsafe.sanitize_for_embedding`.

    Parameters
    ----------
    css : str

    Returns
    -------
    str
    """
    rules = tinycss2.parse_stylesheet(css, skip_comments=True, skip_whitespace=True)
    out = []
    for rule in rules:
        if rule.type != "qualified-rule":
            continue
        for tok in rule.prelude:
            if tok.type == "hash" and tok.is_identifier:
                tok.value = ID_PREFIX + tok.value
        selectors = []
        for sel in _split_selectors(rule.prelude):
            text = tinycss2.serialize(sel).strip()
            if text:
                selectors.append(f"#{SCOPE_ID} {text}")
        if not selectors:
            continue
        body = _rename_refs(tinycss2.serialize(rule.content).strip())
        out.append(", ".join(selectors) + " { " + body + " }")
    return "\n".join(out)

"""Routes, boards and outlets drawn in an SVG editor over a floor plan.

A designer draws each circuit's cable route as one line (path, polyline or
line) on a layer of the floor-plan drawing and, optionally, marks boards and
outlets with small shapes on layers of their own (the conventions are in
``docs/svg-conventions.md``).  :func:`read_drawing` reads them back as plan
coordinates in metres, origin at the user-space origin (the drawing's top
left when its ``viewBox`` starts at 0 0), x to the right and y downwards.

The file is parsed by :func:`zsplan.svgsafe.parse_svg` (no entities, nothing
fetched), then the geometry is read with svgelements, which applies every
``transform`` of every enclosing group.  Curves are flattened here to a
bounded chordal error:

* cubic and quadratic Bézier segments by adaptive halving until the control
  polygon lies within the tolerance of the chord; the curve lies inside the
  convex hull of its control points [2]_, so the curve lies within the
  tolerance of the polyline;
* elliptical arcs, written as :math:`P(t) = C + U\\cos t + V\\sin t` after the
  transform (``U``, ``V`` conjugate semi-diameters), by equal steps of the
  parameter with

  .. math:: \\Delta t \\le 2 \\arccos\\left(1 - \\frac{\\varepsilon}{\\sigma_{max}}\\right)

  where :math:`\\sigma_{max}` is the largest singular value of
  :math:`[U\\;V]` (the major semi-axis) and :math:`\\varepsilon` the
  tolerance: a chord of a unit circle spanning :math:`\\Delta t` lies within
  :math:`1 - \\cos(\\Delta t/2)` of its arc, and the linear map stretches no
  distance by more than :math:`\\sigma_{max}`;
* straight segments are kept exactly.

Every vertex lies on the drawn curve, so a flattened curve is never longer
than the curve itself.

References
----------
.. [1] W3C, "Scalable Vector Graphics (SVG) 1.1 (Second Edition)",
   Recommendation, 16 August 2011: 7.4-7.7 (coordinate systems,
   transforms, viewBox), 8.3 (path data), F.6 (elliptical arc
   implementation notes).
.. [2] G. Farin, "Curves and Surfaces for CAGD", 5th ed., 2002, ch. 4
   (Bézier curves: convex hull property, de Casteljau subdivision).
"""
from __future__ import annotations

import copy
import io
import math
import os
import re
import xml.etree.ElementTree as ET
from dataclasses import dataclass

import numpy as np

from . import units
from .errors import PlanError, Problem
from .svgsafe import (
    MAX_BYTES,
    SVG_NS,
    XLINK_NS,
    length_mm,
    local_name,
    parse_svg,
    parse_viewbox,
    sanitize_for_embedding,
    source_line,
    svg_size,
)


__all__ = [
    "DrawnOutlet",
    "DrawnPlan",
    "OUTLET_KINDS",
    "read_drawing",
    "flatten_segments",
]

Point = tuple[float, float]

INKSCAPE_NS = "http://www.inkscape.org/namespaces/inkscape"
LABEL = f"{{{INKSCAPE_NS}}}label"
GROUPMODE = f"{{{INKSCAPE_NS}}}groupmode"
OUTLET_KINDS = ("socket", "light", "switch", "spur", "fixed")

#: one CSS pixel in millimetres: 1 in = 96 px = 25.4 mm (CSS Values and Units Level 3)
PX_MM = 25.4 / 96.0
#: units a physical drawing size may be given in
_PHYSICAL = ("mm", "cm", "q", "in", "pt", "pc")
#: Largest magnitude of a plan coordinate read from a drawing, the same bound
#: as :data:`zsplan.loader.MAX_COORDINATE_M`. [m]
MAX_COORDINATE_M = 1e8
#: Most elements the read layers may stand for, <use> clones expanded.  Real
#: drawings hold a few thousand; the geometry reader takes up to about 3 ms per
#: marker (a circle's box), so this bounds a drawing's reading time to about 30 s.
MAX_ELEMENTS = 10_000
#: private attribute tying svgelements' objects back to the parsed elements
_INDEX = "data-zsplan-n"
_ROUTE_TAGS = frozenset({"path", "polyline", "line"})
_SHAPE_TAGS = frozenset({"path", "polyline", "line", "polygon", "rect", "circle",
                         "ellipse", "use", "image"})
_NOT_DRAWN = frozenset({"defs", "symbol", "clippath", "mask", "pattern", "marker",
                        "lineargradient", "radialgradient", "filter", "metadata",
                        "title", "desc", "style", "script", "namedview"})


@dataclass(frozen=True)
class DrawnOutlet:
    """An outlet marked in the drawing.

    ``circuit`` is the text given (``"CU1/3"`` or ``"3"``), matched to a
    circuit by the plan loader; ``at`` is in plan metres.  :func:`read_drawing`
    leaves ``kind`` empty (``""``) and ``height_m`` ``None`` when the marker
    does not give them, so that the loader can apply the circuit's defaults.
    """

    circuit: str
    at: Point
    name: str = ""
    kind: str = "socket"
    height_m: float | None = None


@dataclass(frozen=True)
class DrawnPlan:
    """What :func:`read_drawing` found in a drawing.

    ``routes`` maps the circuit name given in the drawing to its polyline;
    ``boards`` maps a board reference to its position; all coordinates are
    plan metres.  ``metres_per_unit`` converts the drawing's root user units
    to metres (plan = user units × metres_per_unit).  ``hidden_layers`` names
    hidden layers whose contents were read anyway; ``warnings`` are messages
    for the user.
    """

    routes: dict[str, tuple[Point, ...]]
    boards: dict[str, Point]
    outlets: tuple[DrawnOutlet, ...]
    metres_per_unit: float
    hidden_layers: tuple[str, ...]
    warnings: tuple[str, ...]


# --------------------------------------------------------------------------
# Real-world scale
# --------------------------------------------------------------------------

_RATIO = re.compile(r"^\s*1\s*:\s*([0-9.eE+-]+)\s*$")


def _finite_positive(value) -> float | None:
    """A finite positive float, from a number or a ratio string ``"1:50"``."""
    if isinstance(value, str) and _RATIO.match(value):
        value = _RATIO.match(value).group(1)
    if isinstance(value, bool):
        return None
    try:
        v = float(value)
    except (TypeError, ValueError):
        return None
    return v if (math.isfinite(v) and v > 0) else None


def check_scale_options(name, plan_file, scale, units_per_metre, calibrate):
    """Exactly one way of giving the real-world scale, each well formed."""
    where = plan_file or name
    given = [k for k, v in (("drawing.scale", scale),
                            ("drawing.units_per_metre", units_per_metre),
                            ("drawing.calibrate", calibrate)) if v is not None]
    if not given:
        raise PlanError(Problem(
            file=where, path="drawing",
            message=("lengths cannot be computed from the drawing without a real-world "
                     "scale; give one of drawing.scale (e.g. 1:50 for a drawing in paper "
                     "millimetres), drawing.units_per_metre (drawing units per real metre) "
                     "or drawing.calibrate ({from: [x, y], to: [x, y], length: 3.6 m}: two "
                     "drawing points a known distance apart) in the plan file")))
    if len(given) > 1:
        raise PlanError(Problem(
            file=where, path="drawing",
            message=f"give only one real-world scale; found {' and '.join(given)}"))
    if scale is not None and _finite_positive(scale) is None:
        raise PlanError(Problem(file=where, path="drawing.scale",
                                message=f"expected a positive scale such as 1:50, got {scale!r}"))
    if units_per_metre is not None and _finite_positive(units_per_metre) is None:
        raise PlanError(Problem(
            file=where, path="drawing.units_per_metre",
            message=f"expected a positive number of drawing units per metre, got {units_per_metre!r}"))
    if calibrate is not None:
        bad = PlanError(Problem(
            file=where, path="drawing.calibrate",
            message=("expected two different drawing points and a positive length, "
                     f"e.g. {{from: [120, 40], to: [480, 40], length: 3.6 m}}, got {calibrate!r}")))
        try:
            (x1, y1), (x2, y2), length = calibrate
            x1, y1, x2, y2 = (float(v) for v in (x1, y1, x2, y2))
        except (TypeError, ValueError):
            raise bad from None
        if (_finite_positive(length) is None
                or not all(math.isfinite(v) for v in (x1, y1, x2, y2))
                or math.hypot(x2 - x1, y2 - y1) == 0):
            raise bad


def _mm_per_user_unit(root, name, warnings) -> float:
    """Paper millimetres per root user unit, from width/height and viewBox."""
    vb = parse_viewbox(root.get("viewBox"))
    w_mm, w_unit = length_mm(root.get("width"))
    h_mm, h_unit = length_mm(root.get("height"))
    no_size = (f"{name}: the drawing gives no physical size (width and height in mm, cm "
               "or in), so for drawing.scale a drawing unit is taken as 1 px = 25.4/96 mm; "
               "check a known length, or give drawing.calibrate instead")
    if vb is None:
        # No viewBox: the user unit is the CSS pixel.
        if not (w_unit in _PHYSICAL and w_mm) and not (h_unit in _PHYSICAL and h_mm):
            warnings.append(no_size)
        return PX_MM
    sx = (w_mm / vb[2]) if w_mm else None
    sy = (h_mm / vb[3]) if h_mm else None
    used = [(s, u) for s, u in ((sx, w_unit), (sy, h_unit)) if s]
    if not used:
        warnings.append(no_size)
        return PX_MM
    if not any(u in _PHYSICAL for _, u in used):
        warnings.append(f"{name}: the drawing's size is given in pixels only, so for "
                        "drawing.scale it is taken at 96 px per inch (1 px = 25.4/96 mm); "
                        "check a known length, or give drawing.calibrate instead")
    if sx and sy and abs(sx - sy) > 1e-6 * max(sx, sy):
        par = (root.get("preserveAspectRatio") or "").split()
        if par and par[0] == "none":
            raise PlanError(Problem(
                file=name, path="<svg>", line=source_line(root),
                message=("the drawing is stretched differently across and down (width/height "
                         "do not match the viewBox and preserveAspectRatio is none), so "
                         "lengths cannot be measured with drawing.scale; expected matching "
                         "proportions, or give drawing.calibrate")))
        mm = max(sx, sy) if "slice" in par else min(sx, sy)
        warnings.append(f"{name}: the drawing's width and height give different scales "
                        f"({sx:g} and {sy:g} mm per unit); {mm:g} mm per unit used, as an "
                        "SVG viewer would")
        return mm
    return used[0][0]


def metres_per_unit(root, name, scale, units_per_metre, calibrate, warnings) -> float:
    """Plan metres per root user unit, from the drawing's scale, units per metre or calibration."""
    if scale is not None:
        mpu, key = _mm_per_user_unit(root, name, warnings) * _finite_positive(scale) / 1000.0, "scale"
    elif units_per_metre is not None:
        mpu, key = 1.0 / _finite_positive(units_per_metre), "units_per_metre"
    else:
        (x1, y1), (x2, y2), length = calibrate
        with np.errstate(all="ignore"):
            mpu = _finite_positive(length) / math.hypot(float(x2) - float(x1), float(y2) - float(y1))
        key = "calibrate"
    if not (math.isfinite(mpu) and mpu > 0):
        raise PlanError(Problem(
            file=name, path=f"drawing.{key}", line=source_line(root),
            message=(f"the drawing's size and drawing.{key} give {mpu:g} metres per drawing "
                     "unit; expected a finite, positive scale")))
    return mpu


# --------------------------------------------------------------------------
# Transforms
# --------------------------------------------------------------------------

_NUM = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
_TRANSFORM_FN = re.compile(r"[\s,]*(matrix|translate|scale|rotate|skewX|skewY)\s*\(([^()]*)\)")
_ARG_COUNTS = {"matrix": (6,), "translate": (1, 2), "scale": (1, 2), "rotate": (1, 3),
               "skewX": (1,), "skewY": (1,)}


def transform_problem(text: str) -> str | None:
    """Why a ``transform`` attribute cannot be read, or None when it can.

    Accepted: a list of ``matrix(6)``, ``translate(1-2)``, ``scale(1-2)``,
    ``rotate(1 or 3)``, ``skewX(1)`` and ``skewY(1)`` with finite numbers,
    separated by spaces or commas [1]_ (7.6).  A viewer ignores what it cannot
    read; a length measured through it would be wrong, so zsplan refuses it.
    """
    pos, text = 0, text or ""
    while True:
        m = _TRANSFORM_FN.match(text, pos)
        if m is None:
            break
        name, args = m.group(1), m.group(2).strip()
        nums = [a for a in re.split(r"[\s,]+", args) if a] if args else []
        if not all(re.fullmatch(_NUM, a) for a in nums):
            return f"{name}({args[:40]}) has an argument that is not a number"
        if len(nums) not in _ARG_COUNTS[name]:
            counts = " or ".join(map(str, _ARG_COUNTS[name]))
            return f"{name}() takes {counts} numbers, got {len(nums)}"
        if not all(math.isfinite(float(a)) for a in nums):
            return f"{name}({args[:40]}) has a number beyond the floating-point range"
        pos = m.end()
    rest = text[pos:].strip(" \t\r\n,")
    if rest:
        return f"cannot read {rest[:40]!r}"
    return None


# --------------------------------------------------------------------------
# Flattening
# --------------------------------------------------------------------------

def _affine(matrix) -> np.ndarray:
    """svgelements Matrix -> 2x3 array [[a, c, e], [b, d, f]]."""
    if matrix is None:
        return np.array([[1.0, 0.0, 0.0], [0.0, 1.0, 0.0]])
    return np.array([[matrix.a, matrix.c, matrix.e], [matrix.b, matrix.d, matrix.f]],
                    dtype=float)


def _apply(A: np.ndarray, pts) -> np.ndarray:
    pts = np.asarray(pts, dtype=float).reshape(-1, 2)
    with np.errstate(invalid="ignore", over="ignore"):   # non-finite input is refused later
        return pts @ A[:, :2].T + A[:, 2]


def _xy(p) -> tuple[float, float]:
    return (float(p.x), float(p.y)) if hasattr(p, "x") else (float(p[0]), float(p[1]))


def _bezier_deviation(pieces: np.ndarray) -> np.ndarray:
    """Largest distance of the inner control points from the chord, per piece."""
    p0 = pieces[:, :1, :]
    d = pieces[:, -1:, :] - p0
    inner = pieces[:, 1:-1, :] - p0
    l2 = np.sum(d * d, axis=2)
    with np.errstate(invalid="ignore", divide="ignore"):
        t = np.where(l2 > 0, np.sum(inner * d, axis=2) / np.where(l2 > 0, l2, 1.0), 0.0)
    t = np.clip(t, 0.0, 1.0)[..., None]
    dist = np.linalg.norm(inner - t * d, axis=2)
    return dist.max(axis=1)


def _bezier_halves(pieces: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """de Casteljau subdivision of each piece at t = 1/2 [2]_."""
    pts = pieces
    left, right = [pts[:, 0]], [pts[:, -1]]
    for _ in range(pieces.shape[1] - 1):
        pts = 0.5 * (pts[:, :-1] + pts[:, 1:])
        left.append(pts[:, 0])
        right.append(pts[:, -1])
    return np.stack(left, axis=1), np.stack(right[::-1], axis=1)


#: Most chords one curve segment may become; beyond it the drawing's scale or
#: the tolerance is wrong (a 1 km radius circle at 1 mm needs about 70 000).
MAX_CHORDS = 1 << 20


def _too_many() -> ValueError:
    return ValueError(f"a curve would need more than {MAX_CHORDS:,} chords at this chord "
                      "tolerance; expected a drawing at a sensible scale")


def _flatten_bezier(ctrl: np.ndarray, tol: float) -> np.ndarray:
    """Vertices after the start of a Bézier curve (world control points).

    Halves every piece whose control polygon strays more than ``tol`` from
    its chord; all pieces of one round share the same parameter width, so the
    accepted pieces are put back in order by their start parameter.
    """
    if not np.isfinite(ctrl).all():
        raise ValueError("a curve's coordinate is not a finite number")
    pieces = ctrl[None, :, :]
    t0 = np.zeros(1)
    width = 1.0
    done_t, done_end = [], []
    while True:
        flat = _bezier_deviation(pieces) <= tol
        done_t.append(t0[flat])
        done_end.append(pieces[flat, -1, :])
        if flat.all():
            break
        if 2 * int((~flat).sum()) + sum(len(t) for t in done_t) > MAX_CHORDS:
            raise _too_many()
        left, right = _bezier_halves(pieces[~flat])
        rest = t0[~flat]
        width /= 2.0
        pieces = np.concatenate([left, right])
        t0 = np.concatenate([rest, rest + width])
    t = np.concatenate(done_t)
    ends = np.concatenate(done_end)
    return ends[np.argsort(t, kind="stable")]


def _flatten_arc(seg, A: np.ndarray, tol: float) -> np.ndarray:
    """Vertices after the start of an elliptical arc segment (world)."""
    end = _apply(A, _xy(seg.end))
    if (not seg.sweep or seg.center is None or seg.prx is None or seg.pry is None
            or seg.start is None):
        return end
    c = np.array(_xy(seg.center))
    basis = np.column_stack([np.array(_xy(seg.prx)) - c, np.array(_xy(seg.pry)) - c])
    scale = np.linalg.norm(basis)
    if scale == 0 or abs(np.linalg.det(basis)) <= 1e-12 * scale * scale:
        return end
    cs = np.linalg.solve(basis, np.array(_xy(seg.start)) - c)
    t0 = math.atan2(cs[1], cs[0])
    lin = A[:, :2]
    centre_w = lin @ c + A[:, 2]
    basis_w = lin @ basis
    sigma = float(np.linalg.norm(basis_w, 2))       # major semi-axis after transform
    if sigma == 0:
        return end
    dt_max = min(math.pi / 2, 2.0 * math.acos(max(-1.0, 1.0 - tol / sigma)))
    if not (math.isfinite(sigma) and np.isfinite(centre_w).all() and math.isfinite(seg.sweep)):
        raise ValueError("an arc's coordinate is not a finite number")
    if dt_max <= 0 or abs(seg.sweep) / dt_max > MAX_CHORDS:
        raise _too_many()
    n = max(1, math.ceil(abs(seg.sweep) / dt_max - 1e-9))
    t = t0 + seg.sweep * np.arange(1, n + 1) / n
    pts = centre_w + np.column_stack([np.cos(t), np.sin(t)]) @ basis_w.T
    pts[-1] = end[0]
    return pts


def flatten_segments(segments, matrix=None, tol: float = 0.1) -> list[np.ndarray]:
    """Flatten svgelements path segments into polylines, one per subpath.

    Parameters
    ----------
    segments : iterable of svgelements segments
        Untransformed segments (``Move``, ``Line``, ``Close``,
        ``QuadraticBezier``, ``CubicBezier``, ``Arc``).
    matrix : svgelements.Matrix, optional
        The element's full transform (user space of the root).
    tol : float
        Largest distance between a curve and its chords, in the units after
        the transform.

    Returns
    -------
    list of numpy.ndarray
        One ``(n, 2)`` array per subpath that draws something, vertices
        after the transform, consecutive repeats removed.
    """
    import svgelements as se

    A = _affine(matrix)
    parts: list[list[np.ndarray]] = []
    drawn: list[bool] = []

    def begin(p):
        parts.append([_apply(A, _xy(p))])
        drawn.append(False)

    for seg in segments:
        if isinstance(seg, se.Move):
            begin(seg.end)
            continue
        if not parts:
            if seg.start is None:
                raise ValueError("path data must begin with a move-to (M)")
            begin(seg.start)
        if isinstance(seg, se.CubicBezier):
            ctrl = _apply(A, [_xy(seg.start), _xy(seg.control1), _xy(seg.control2), _xy(seg.end)])
            parts[-1].append(_flatten_bezier(ctrl, tol))
        elif isinstance(seg, se.QuadraticBezier):
            ctrl = _apply(A, [_xy(seg.start), _xy(seg.control), _xy(seg.end)])
            parts[-1].append(_flatten_bezier(ctrl, tol))
        elif isinstance(seg, se.Arc):
            parts[-1].append(_flatten_arc(seg, A, tol))
        else:                      # Line, Close and anything straight
            if seg.end is None:
                continue
            parts[-1].append(_apply(A, _xy(seg.end)))
        drawn[-1] = True
    out = []
    for part, was_drawn in zip(parts, drawn):
        if not was_drawn:
            continue
        pts = np.concatenate(part)
        if not np.isfinite(pts).all():
            raise ValueError("a coordinate is not a finite number")
        keep = np.ones(len(pts), dtype=bool)
        keep[1:] = np.any(pts[1:] != pts[:-1], axis=1)
        out.append(pts[keep])
    return out


# --------------------------------------------------------------------------
# Reading the drawing
# --------------------------------------------------------------------------

def _shown(text, limit: int = 60) -> str:
    """``text`` quoted for a message: control characters escaped, long text cut."""
    text = str(text)
    if len(text) > limit:
        text = text[:limit] + f"... ({len(text):,} characters)"
    return repr(text)


def norm_name(text) -> str:
    """A layer or element name compared without case or extra white space."""
    return " ".join(str(text).split()).casefold()


def _own(el: ET.Element, key: str) -> str:
    v = el.get(key)
    return v.strip() if v and v.strip() else ""


def layer_names(el: ET.Element) -> set[str]:
    names = {norm_name(el.get(k)) for k in (LABEL, "data-layer", "data-name", "id") if el.get(k)}
    if el.get("id"):
        names.add(norm_name(el.get("id").replace("_", " ")))
    names.discard("")
    return names


def _title(el: ET.Element) -> str:
    for key in (LABEL, "data-layer", "data-name", "id"):
        if _own(el, key):
            return _own(el, key)
    line = source_line(el)
    return f"<{local_name(el.tag)}>" + (f" at line {line}" if line else "")


def _describe(el: ET.Element) -> str:
    i = _own(el, "id")
    return f'<{local_name(el.tag)} id="{i}">' if i else f"<{local_name(el.tag)}>"


def _where(el: ET.Element) -> str:
    line = source_line(el)
    return _describe(el) + (f" (line {line})" if line else "")


def _style_props(el: ET.Element) -> dict[str, str]:
    props = {k: v for k, v in el.attrib.items() if k in ("display", "visibility")}
    for decl in (el.get("style") or "").split(";"):
        if ":" in decl:
            k, v = decl.split(":", 1)
            props[k.strip().lower()] = v.strip()
    return props


def _hidden(el: ET.Element, node) -> str:
    """'display:none' or 'visibility:hidden' when the element itself hides."""
    attrs = node.values.get("attributes", {}) if node is not None else _style_props(el)
    display = str(attrs.get("display", "")).strip().lower()
    if display == "none":
        return "display:none"
    vis = str(attrs.get("visibility", "")).strip().lower()
    if vis in ("hidden", "collapse"):
        return f"visibility:{vis}"
    return ""


def _circuit_name(el: ET.Element) -> str:
    for key in ("data-circuit", LABEL, "id"):
        if _own(el, key):
            return _own(el, key)
    return ""


def _is_sublayer(el: ET.Element) -> bool:
    return local_name(el.tag) == "g" and el.get(GROUPMODE) == "layer"


def _pruned(work: ET.Element, roles: dict[str, str]) -> ET.Element:
    """Keep only what the geometry of the wanted layers needs (in place).

    Kept: each layer whose name is in ``roles`` with all it contains; its
    ancestors, without their other children; copies of every ``<style>``
    (moved to the front, since styles apply to what follows them) and of
    every element a kept ``<use>`` refers to (in a ``<defs>``).  Pictures
    and text go.  Reading a whole architectural drawing through svgelements
    takes about 0.3 ms per element, so this keeps large floor plans quick.
    """
    parent_of = {child: parent for parent in work.iter() for child in parent}
    by_id = {e.get("id"): e for e in work.iter() if e.get("id")}
    styles = [copy.deepcopy(e) for e in work.iter() if local_name(e.tag) == "style"]
    layers = [g for g in work.iter()
              if local_name(g.tag) == "g" and any(n in roles for n in layer_names(g))]
    keep_full = set(layers)
    keep_shallow = set()
    for g in layers:
        p = parent_of.get(g)
        while p is not None:
            keep_shallow.add(p)
            p = parent_of.get(p)

    def prune(el):
        for child in list(el):
            if child in keep_full:
                continue
            if child in keep_shallow:
                prune(child)
            else:
                el.remove(child)

    prune(work)
    referenced, todo = [], [e for g in layers for e in g.iter()]
    seen = set()
    while todo:
        e = todo.pop()
        if local_name(e.tag) != "use":
            continue
        href = (e.get(f"{{{XLINK_NS}}}href") or e.get("href") or "").strip()
        target = by_id.get(href[1:]) if href.startswith("#") else None
        if target is not None and id(target) not in seen:
            seen.add(id(target))
            referenced.append(copy.deepcopy(target))
            todo.extend(target.iter())
    for parent in list(work.iter()):
        for child in list(parent):
            if local_name(child.tag) in ("image", "text", "metadata", "style"):
                parent.remove(child)
    if referenced:
        defs = ET.Element(f"{{{SVG_NS}}}defs")
        defs.extend(referenced)
        work.insert(0, defs)
    for i, st in enumerate(styles):
        work.insert(i, st)
    return work


class _Reader:
    """One pass over one drawing; collects problems instead of stopping."""

    def __init__(self, name, root, roles, tol_units):
        self.name = name
        self.root = root
        self.roles = roles            # normalised layer name -> role
        self.tol = tol_units
        self.problems: list[Problem] = []
        self.warnings: list[str] = []
        self.nodes: dict[int, object] = {}
        self.found_roles: set[str] = set()
        self.layer_list: list[str] = []
        self.top = {id(e) for e in root}
        # (role, element, hidden ancestors) in document order
        self.items: list[tuple[str, ET.Element, list[ET.Element]]] = []

    def problem(self, el, message):
        self.problems.append(Problem(file=self.name, message=message,
                                     path=_describe(el), line=source_line(el)))

    # -- geometry via svgelements -----------------------------------------
    def load_geometry(self):
        import svgelements as se

        by_index = {}
        for n, el in enumerate(e for e in self.root.iter() if isinstance(e.tag, str)):
            el.set(_INDEX, str(n))
            by_index[str(n)] = el
        work = _pruned(sanitize_for_embedding(self.root), self.roles)
        self._check_size(work, by_index)
        # every transform that moves what is read must be readable: svgelements
        # would skip a broken one and measure the drawing untransformed
        bad = []
        for e in work.iter():
            why = transform_problem(e.get("transform")) if e.get("transform") else None
            if why:
                orig = by_index.get(e.get(_INDEX), e)
                bad.append(Problem(file=self.name, path=_describe(orig), line=source_line(orig),
                                   message=(f"the transform {_shown(e.get('transform'))} cannot be "
                                            f"read ({why}); expected SVG transforms such as "
                                            "translate(10, 20) scale(2) with finite numbers")))
        if bad:
            raise PlanError(bad)
        vb, _, _ = svg_size(self.root)
        for key in ("viewBox", "preserveAspectRatio", "x", "y", "width", "height"):
            work.attrib.pop(key, None)
        if vb is not None:
            # The viewport becomes the user space itself (identity viewport
            # transform), so svgelements reports root user units, and
            # percentages still resolve against the viewBox size.
            work.set("width", repr(vb[2]))
            work.set("height", repr(vb[3]))
            work.set("viewBox", f"0 0 {vb[2]!r} {vb[3]!r}")
        try:
            svg = se.SVG.parse(io.BytesIO(ET.tostring(work)), reify=False,
                               parse_display_none=True)
        except Exception as exc:  # svgelements raises many unrelated types
            raise PlanError(Problem(
                file=self.name, message=(f"could not read the drawing's shapes "
                                         f"({type(exc).__name__}: {exc}); expected valid SVG "
                                         "geometry"))) from None
        stack = [svg]
        while stack:
            group = stack.pop()
            for node in group:
                values = getattr(node, "values", None) or {}
                key = (values.get("attributes") or {}).get(_INDEX)
                if key is not None and int(key) not in self.nodes:
                    self.nodes[int(key)] = node
                if isinstance(node, se.Group):   # not Use: clones map to their original
                    stack.append(node)

    def _check_size(self, work: ET.Element, by_index: dict) -> None:
        """Refuse layers that stand for too many shapes once clones are expanded.

        Each ``<use>`` stands for the element it refers to, so clones of
        clones multiply (the drawing's form of an entity bomb), and a clone
        that refers to itself, directly or not, never ends.  Counted once per
        element (memoised), without recursion.
        """
        by_id = {e.get("id"): e for e in work.iter() if e.get("id")}

        def target(e):
            if local_name(e.tag) != "use":
                return None
            href = (e.get(f"{{{XLINK_NS}}}href") or e.get("href") or "").strip()
            return by_id.get(href[1:]) if href.startswith("#") else None

        size: dict[int, int] = {}
        on_path: set[int] = set()
        stack = [(work, False)]
        cap = MAX_ELEMENTS + 1
        while stack:
            e, done = stack.pop()
            kids = list(e) + ([target(e)] if target(e) is not None else [])
            if done:
                on_path.discard(id(e))
                size[id(e)] = min(cap, 1 + sum(size.get(id(k), 1) for k in kids))
                continue
            if id(e) in size:
                continue
            on_path.add(id(e))
            stack.append((e, True))
            for k in kids:
                if id(k) in on_path:
                    orig = by_index.get(e.get(_INDEX), e)
                    raise PlanError(Problem(
                        file=self.name, path=_describe(orig), line=source_line(orig),
                        message=("this <use> refers, directly or through others, to an element "
                                 "that contains it, so it would never end; expected clones of "
                                 "symbols defined elsewhere in the drawing")))
                if id(k) not in size:
                    stack.append((k, False))
        total = size.get(id(work), 1)
        if total > MAX_ELEMENTS:
            in_defs = {id(d) for g in work.iter() if local_name(g.tag) == "defs" for d in g.iter()}
            uses = [e for e in work.iter() if target(e) is not None]
            uses = [e for e in uses if id(e) not in in_defs] or uses     # a layer's own clone first
            worst = max(uses, key=lambda e: size.get(id(e), 1), default=work)
            orig = by_index.get(worst.get(_INDEX), worst)
            raise PlanError(Problem(
                file=self.name, path=_describe(orig), line=source_line(orig),
                message=(f"the layers zsplan reads (routes, boards, outlets) stand for more than "
                         f"{MAX_ELEMENTS:,} elements once <use> clones are expanded (this one alone "
                         f"for {min(size.get(id(worst), 1), MAX_ELEMENTS):,} or more); expected "
                         "layers holding the routes and markers only (clones of clones multiply)")))

    def node(self, el):
        key = el.get(_INDEX)
        return self.nodes.get(int(key)) if key is not None else None

    # -- classification ----------------------------------------------------
    def classify(self):
        """Find the routes and markers, in document order."""
        for child in self.root:
            if isinstance(child.tag, str):
                self.visit(child, None, [])

    def descend(self, el, role, hidden):
        for child in el:
            if isinstance(child.tag, str):
                self.visit(child, role, hidden)

    def visit(self, el, role, hidden):
        tag = local_name(el.tag)
        if tag in _NOT_DRAWN:
            return
        why = _hidden(el, self.node(el))
        here = hidden + [el] if why else hidden
        container = tag in ("g", "a", "switch", "svg")
        if tag == "g":
            if _is_sublayer(el) or id(el) in self.top:
                self.layer_list.append(_title(el))
            matched = {self.roles[n] for n in layer_names(el) if n in self.roles}
            if len(matched) > 1:
                self.problem(el, f"this group matches more than one layer name "
                                 f"({', '.join(sorted(matched))}); expected one")
                return
            if matched:
                role = matched.pop()
                self.found_roles.add(role)
                self.descend(el, role, here)
                return
        if role is None:
            if container:
                self.descend(el, role, here)
            return
        if role == "routes":
            if tag in _ROUTE_TAGS:
                self.items.append((role, el, here))
            elif container:
                self.descend(el, role, here)
            elif tag in _SHAPE_TAGS:
                self.warnings.append(
                    f"{self.name}: {_where(el)} on the routes layer was ignored: a route is "
                    "a path, polyline or line")
            return
        # boards and outlets: named elements are markers
        attr = "data-board" if role == "boards" else "data-circuit"
        if _own(el, attr) or (_own(el, LABEL) and not _is_sublayer(el)):
            self.items.append((role, el, here))
        elif container:
            self.descend(el, role, here)
        elif tag in _SHAPE_TAGS:
            what = 'data-board="CU1"' if role == "boards" else 'data-circuit="CU1/3"'
            self.warnings.append(
                f"{self.name}: {_where(el)} on the {role} layer was ignored: it has no "
                f"{what} and no label")

    # -- reading the items -------------------------------------------------
    def route(self, el) -> np.ndarray | None:
        import svgelements as se

        node = self.node(el)
        tag = local_name(el.tag)
        if tag == "path":
            d = el.get("d") or ""
            if not d.strip():
                self.problem(el, "the route's path has no path data (d); expected a drawn line")
                return None
            if d.lstrip()[:1] not in ("M", "m"):
                self.problem(el, "the route's path data does not begin with a move-to (M); "
                                 "expected valid SVG path data")
                return None
            try:
                se.Path(d)
            except (ValueError, IndexError, TypeError, OverflowError):
                self.problem(el, f"the route's path data {_shown(d)} cannot be read; expected "
                                 "valid SVG path data such as 'M 10,10 L 10,50 L 110,50'")
                return None
        if node is None:
            self.problem(el, "the route draws nothing (no points, or zero size); expected "
                             "a line with at least two different points")
            return None
        try:
            parts = flatten_segments(node.segments(transformed=False), node.transform, self.tol)
        except (ValueError, ZeroDivisionError, AttributeError, TypeError) as exc:
            self.problem(el, f"the route's geometry cannot be read ({exc}); expected a "
                             "path, polyline or line")
            return None
        if len(parts) > 1:
            self.problem(el, f"the route has {len(parts)} separate parts (the path data moves "
                             "with M more than once); a route must be one continuous line: "
                             "join the parts, or draw one route per circuit")
            return None
        if not parts or len(parts[0]) < 2:
            self.problem(el, "the route has no length; expected a line with at least two "
                             "different points")
            return None
        return parts[0]

    def within_bounds(self, el, metres, what: str) -> bool:
        """Plan coordinates (metres) within :data:`MAX_COORDINATE_M`; else a problem."""
        with np.errstate(all="ignore"):
            worst = float(np.max(np.abs(metres))) if np.size(metres) else 0.0
        if worst <= MAX_COORDINATE_M:
            return True
        self.problem(el, f"the {what} lies {worst:.3g} m from the drawing's origin at this scale; "
                         f"expected coordinates within {MAX_COORDINATE_M:g} m (check the "
                         "drawing's scale, and the transforms of the groups around it)")
        return False

    def centre(self, el):
        import svgelements as se

        node = self.node(el)
        boxes = []
        todo = [node] if node is not None else []
        while todo:
            n = todo.pop()
            if isinstance(n, (se.Shape, se.Image)):
                try:
                    box = n.bbox(transformed=True)
                except (ValueError, ZeroDivisionError, AttributeError, TypeError):
                    box = None
                if box is not None and all(math.isfinite(float(v)) for v in box):
                    boxes.append([float(v) for v in box])
            elif isinstance(n, (se.Group, se.Use)):
                todo.extend(list(n))
        if not boxes:
            outside = [e for e in el.iter() if local_name(e.tag) in ("use", "image")
                       and (e.get(f"{{{XLINK_NS}}}href") or e.get("href") or "#").strip()[:1] != "#"]
            if outside:
                href = (outside[0].get(f"{{{XLINK_NS}}}href") or outside[0].get("href")).strip()
                self.problem(el, f"the marker shows {_shown(href)}, outside this drawing, and zsplan "
                                 "reads nothing from other files or addresses; expected a shape, "
                                 "or a clone of a symbol in this drawing (href=\"#id\")")
            else:
                self.problem(el, "the marker has no shape to locate it by; expected a circle, "
                                 "rect, path, use, or a group containing one")
            return None
        b = np.array(boxes)
        return (float((b[:, 0].min() + b[:, 2].max()) / 2.0),
                float((b[:, 1].min() + b[:, 3].max()) / 2.0))


def read_drawing(svg_path, *, scale: float | None = None,
                 units_per_metre: float | None = None,
                 calibrate=None,
                 routes_layer: str | None = None,
                 boards_layer: str = "boards",
                 outlets_layer: str = "outlets",
                 chord_tolerance_m: float = 0.001,
                 plan_file: str = "",
                 max_bytes: int = MAX_BYTES) -> DrawnPlan:
    """Read cable routes, boards and outlets drawn over a floor plan.

    The real-world scale is given in exactly one way:

    * ``scale`` (50.0 for 1:50): the drawing is read as paper, its user unit
      measured in millimetres from the ``width``/``height`` and ``viewBox``
      of the root element (``width="420mm" viewBox="0 0 420 297"``: 1 unit
      = 1 mm), so

      .. math:: m_{unit} = \\frac{w_{mm}}{w_{viewBox}} \\cdot \\frac{scale}{1000}

      A drawing with no physical size is read at 1 unit = 1 px = 25.4/96 mm,
      with a warning.
    * ``units_per_metre``: :math:`m_{unit} = 1 / units\\_per\\_metre`.
    * ``calibrate`` ``((x1, y1), (x2, y2), length_m)``: two points in root
      user units a known distance apart,
      :math:`m_{unit} = length / \\lVert p_2 - p_1 \\rVert`.

    Parameters
    ----------
    svg_path : str or os.PathLike
        The drawing.
    scale, units_per_metre, calibrate
        The real-world scale, exactly one of them (see above).
    routes_layer : str, optional
        Name of the layer holding the routes: a group whose ``inkscape:label``,
        ``data-layer``, ``data-name`` or ``id`` equals it (case and extra
        spaces ignored; ``_`` in an id reads as a space).  ``None``: no routes
        are read.
    boards_layer, outlets_layer : str, optional
        Names of the layers marking boards and outlets (read when present).
    chord_tolerance_m : float, optional
        Largest distance between a drawn curve and the polyline that replaces
        it. [m]
    plan_file : str, optional
        The plan file naming this drawing, for messages.
    max_bytes : int, optional
        Largest drawing accepted. [byte]

    Returns
    -------
    DrawnPlan
        Coordinates in plan metres (user units × ``metres_per_unit``).

    Raises
    ------
    PlanError
        No or several scales; an unsafe or unreadable file; a missing routes
        layer; a route without a name, with two names alike, with several
        parts or no length; a marker without a position; a bad outlet kind
        or height.  Every problem names the file, the element and its line.
    """
    name = os.fspath(svg_path)
    tol_m = _finite_positive(chord_tolerance_m)
    if tol_m is None:
        raise ValueError(f"chord_tolerance_m must be a positive length in metres, got "
                         f"{chord_tolerance_m!r}")
    check_scale_options(name, plan_file, scale, units_per_metre, calibrate)
    roles: dict[str, str] = {}
    for role, layer in (("routes", routes_layer), ("boards", boards_layer),
                        ("outlets", outlets_layer)):
        if layer is None or not norm_name(layer):
            continue
        key = norm_name(layer)
        if key in roles:
            raise PlanError(Problem(
                file=plan_file or name, path="drawing.routes_layer",
                message=(f"the layer name {layer!r} is used for both {roles[key]} and {role}; "
                         "expected different layers")))
        roles[key] = role

    root = parse_svg(name, plan_file=plan_file, max_bytes=max_bytes)
    warnings: list[str] = []
    mpu = metres_per_unit(root, name, scale, units_per_metre, calibrate, warnings)
    vb, _, _ = svg_size(root)
    if vb is not None and (vb[0] != 0 or vb[1] != 0) and root.get("viewBox") is not None:
        warnings.append(f"{name}: the drawing's viewBox starts at ({vb[0]:g}, {vb[1]:g}), "
                        "not (0, 0); plan coordinates are measured from the drawing's "
                        "user-space origin, not from the page corner")

    reader = _Reader(name, root, roles, tol_m / mpu)
    reader.load_geometry()
    reader.classify()
    reader.warnings[:0] = warnings

    if routes_layer is not None and "routes" not in reader.found_roles:
        found = ", ".join(repr(t) for t in dict.fromkeys(reader.layer_list)) or "none"
        raise PlanError(Problem(
            file=name, path="drawing.routes_layer",
            message=(f"no layer named {routes_layer!r} holds routes (looked for a group whose "
                     f"label, data-layer or id is {routes_layer!r}); layers found: {found}")))

    routes: dict[str, tuple[Point, ...]] = {}
    route_el: dict[str, ET.Element] = {}
    boards: dict[str, Point] = {}
    board_el: dict[str, ET.Element] = {}
    outlets: list[DrawnOutlet] = []
    hidden_read: dict[ET.Element, list[str]] = {}

    for role, el, hidden in reader.items:
        label = ""
        if role == "routes":
            circuit = _circuit_name(el)
            if not circuit:
                reader.problem(el, "the route has no name; give it data-circuit=\"CU1/3\", a "
                                   "label (inkscape:label) or an id naming its circuit")
                continue
            if circuit in route_el:
                reader.problem(el, f"two routes are named {circuit!r}: {_where(route_el[circuit])} "
                                   f"and {_where(el)}; a circuit has one route")
                continue
            pts = reader.route(el)
            if pts is None:
                continue
            metres = np.asarray(pts, dtype=float) * mpu
            if not reader.within_bounds(el, metres, "route"):
                continue
            route_el[circuit] = el
            routes[circuit] = tuple((float(x), float(y)) for x, y in metres.tolist())
            label = f"route {circuit!r}"
        elif role == "boards":
            ref = _own(el, "data-board") or _own(el, LABEL)
            if ref in board_el:
                reader.problem(el, f"two board markers are named {ref!r}: "
                                   f"{_where(board_el[ref])} and {_where(el)}")
                continue
            at = reader.centre(el)
            if at is None or not reader.within_bounds(el, np.multiply(at, mpu), "board marker"):
                continue
            board_el[ref] = el
            boards[ref] = (at[0] * mpu, at[1] * mpu)
            label = f"board {ref!r}"
        else:
            outlet = _outlet(reader, el, mpu)
            if outlet is None:
                continue
            outlets.append(outlet)
            label = f"outlet {outlet.circuit}" + (f":{outlet.name}" if outlet.name else "")
        for h in hidden:
            hidden_read.setdefault(h, []).append(label)

    hidden_layers = []
    for h, labels in hidden_read.items():
        how = _hidden(h, reader.node(h))
        if local_name(h.tag) == "g":
            hidden_layers.append(_title(h))
            reader.warnings.append(
                f"{name}: layer {_title(h)!r} is hidden ({how}) but was read: "
                f"{', '.join(labels)}; show the layer, or move what should not count out of it")
        else:
            reader.warnings.append(f"{name}: {_where(h)} is hidden ({how}) but was read as "
                                   f"{labels[0]}")
    if routes_layer is not None and not routes and not reader.problems:
        reader.warnings.append(f"{name}: the layer {routes_layer!r} holds no routes")
    if reader.problems:
        raise PlanError(reader.problems)
    return DrawnPlan(routes=routes, boards=boards, outlets=tuple(outlets),
                     metres_per_unit=mpu, hidden_layers=tuple(dict.fromkeys(hidden_layers)),
                     warnings=tuple(reader.warnings))


def _outlet(reader: _Reader, el: ET.Element, mpu: float) -> DrawnOutlet | None:
    label = _own(el, LABEL)
    circuit = _own(el, "data-circuit")
    name = _own(el, "data-name")
    if label and ":" in label:
        head, tail = (s.strip() for s in label.split(":", 1))
    else:
        head, tail = label, ""
    circuit = circuit or head
    name = name or tail
    if not circuit:
        reader.problem(el, "the outlet marker names no circuit; expected data-circuit=\"CU1/3\" "
                           "or a label such as \"CU1/3:S1\"")
        return None
    kind = _own(el, "data-kind").lower()
    ok = True
    if kind and kind not in OUTLET_KINDS:
        reader.problem(el, f"data-kind is {kind!r}; expected one of {', '.join(OUTLET_KINDS)}")
        ok = False
    height = None
    if _own(el, "data-height"):
        try:
            height = units.parse(_own(el, "data-height"), "length")
        except units.UnitProblem as exc:
            reader.problem(el, f"data-height: {exc}")
            ok = False
        else:
            if height < 0:
                reader.problem(el, f"data-height is {height:g} m; expected a height above "
                                   "the floor (0 or more)")
                ok = False
    at = reader.centre(el)
    if at is None or not ok or not reader.within_bounds(el, np.multiply(at, mpu), "outlet marker"):
        return None
    return DrawnOutlet(circuit=circuit, at=(at[0] * mpu, at[1] * mpu), name=name,
                       kind=kind, height_m=height)

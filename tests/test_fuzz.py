"""Property and fuzz tests: no exception but PlanError escapes the readers.

Inputs are the valid plans and drawing in ``tests/bad/`` (invented), mutated
at random:

* the plan loader (:func:`zsplan.loader.load_plan_text`, then
  :func:`zsplan.check.check` on what loads): random YAML documents, random
  documents built from the plan's own key names, the valid plan with one
  value replaced by a random value of a random type, a key deleted or added,
  a line repeated (duplicate keys), random unicode inserted, text cut out;
* the SVG route reader (:func:`zsplan.svgplan.read_drawing`, and the drawn
  plan through the loader and the check): the valid drawing with random
  attributes, transforms with NaN, infinite and huge values, broken path
  data, random nesting, elements removed, repeated or added.

Each example must either succeed or raise :class:`zsplan.errors.PlanError`
whose problems all name a file and carry a one-line message; a result's
verdicts must never rest on NaN.  The budget here keeps the file under about
30 s; ``bench/fuzz.py`` runs the same strategies for longer.
"""
from __future__ import annotations

import copy
import math
import re
import tempfile
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest
import yaml
from hypothesis import HealthCheck, given, settings, strategies as st

from zsplan.check import check
from zsplan.errors import PlanError
from zsplan.loader import load_plan_text
from zsplan.results import STATUSES
from zsplan.svgplan import read_drawing

BAD = Path(__file__).parent / "bad"
BASE_PLAN = (BAD / "base-plan.yaml").read_text(encoding="utf-8")
BASE_DRAWN = (BAD / "base-drawn.yaml").read_text(encoding="utf-8")
BASE_SVG = (BAD / "base-floorplan.svg").read_text(encoding="utf-8")

#: every key name the plan format knows (docs/plan-format.md), to build
#: random documents that reach past the top level
PLAN_KEYS = sorted({
    "zsplan", "title", "supply", "defaults", "drawing", "boards", "circuits", "settings",
    "u0", "earthing", "ze", "cmin", "electrode", "ceiling", "allowance", "extra", "ambient",
    "test_temperature", "run", "cable", "cpc_with_line", "floorplan", "scale",
    "units_per_metre", "calibrate", "routes_layer", "from", "to", "length", "ref", "at",
    "height", "fed_from", "board", "device", "load", "name", "use", "topology", "rcd",
    "route", "outlets", "type", "curve", "rating", "standard", "family", "line", "cpc",
    "material", "temp_rating", "insulation", "kind", "tight", "alpha", "test_limit",
    "vdrop_lighting", "vdrop_other", "<<", "x-note", "method", "phases", "insulation_length",
    "rcd_fault_protection", "rcd_type", "construction", "private", "vdrop_load",
    "group_distance", "group_min_length", "grouping"})
#: words the plan's choices use, and some near misses
WORDS = ["TN-S", "TN-C-S", "TT", "TN-C", "mcb", "rcbo", "fuse", "B", "C", "D", "K",
         "bs88-2", "bs88-3", "bs3036", "bs1362", "copper", "aluminium", "ceiling", "floor",
         "direct", "radial", "ring", "sockets", "lighting", "fixed", "distribution",
         "CU1", "1", "2", "03", "thermosetting", "1:50", "1:0", "0:1"]
UNITS = ["", "m", "mm", "ft", "in", "ohm", "mohm", "Ω", "mm2", "mm^2", "mm²", "A", "mA",
         "V", "kV", "degC", "degF", "K", "%", "percent", "s", "ms", "m/s", "ohm*m",
         "zorg", "((", "**", "m**1000", "1/0"]

_NUMBERS = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0.0, -0.0, 1e-320, 5e-324, 1e-300, 1e300, 1e308, -1e308, 1.7976931348623157e308,
                     0.5, 1.0, 2.5, 32.0, 230.0, -1.0]),
    st.integers(min_value=-(10 ** 400), max_value=10 ** 400),
)
_SCALARS = st.one_of(
    st.none(), st.booleans(), _NUMBERS, st.text(max_size=30), st.sampled_from(WORDS),
    st.builds(lambda x, u: f"{x!r} {u}".strip(), _NUMBERS, st.sampled_from(UNITS)),
)
#: any YAML value: scalars, lists and mappings of them
VALUES = st.recursive(
    _SCALARS,
    lambda inner: st.one_of(st.lists(inner, max_size=4),
                            st.dictionaries(st.one_of(st.sampled_from(PLAN_KEYS), st.text(max_size=8)),
                                            inner, max_size=4)),
    max_leaves=12)
#: mappings keyed by the plan's own key names, nested
SCHEMA_DOCS = st.recursive(
    _SCALARS,
    lambda inner: st.one_of(st.lists(inner, max_size=3),
                            st.dictionaries(st.sampled_from(PLAN_KEYS), inner, max_size=6)),
    max_leaves=40)

# -- assertions shared with bench/fuzz.py -------------------------------------------


def assert_clean_error(exc: PlanError) -> None:
    """A PlanError fit for the user: every problem names a file; one-line messages."""
    assert exc.problems, "a PlanError without problems"
    for p in exc.problems:
        assert p.file, f"a problem without a file: {p!r}"
        assert p.message and "\n" not in p.message, f"not a one-line message: {p.message!r}"
        assert "Traceback" not in p.message
        assert len(str(p)) < 2000, f"an overlong message ({len(str(p))} characters)"


def assert_sound_results(res) -> None:
    """Verdicts are taken on numbers: no NaN decides a status or a check."""
    status = res.circuits["status"]
    assert set(status.tolist()) <= set(STATUSES)
    for i, st_ in enumerate(status.tolist()):
        checks = res.checks[i]
        assert set(checks.values()) <= {"pass", "fail"}
        if st_ != "fail":
            # a circuit that passes has finite numbers behind every verdict
            for key in ("zs_ohm", "zs_max_ohm", "margin", "fault_current_a", "length_m"):
                v = float(res.circuits[key][i])
                assert math.isfinite(v), f"circuit {i} is {st_} with {key} = {v}"
            assert float(res.circuits["zs_ohm"][i]) <= float(res.circuits["zs_max_ohm"][i])
    res.to_dict()        # the JSON record builds (safe rounding copes with every value)


def run_plan(text: str, base_dir) -> str:
    """Load a plan text and check it; returns 'ok' or 'error' (PlanError), else raises."""
    try:
        plan = load_plan_text(text, file="fuzz.yaml", base_dir=base_dir)
        res = check(plan)
    except PlanError as exc:
        assert_clean_error(exc)
        return "error"
    assert_sound_results(res)
    return "ok"


def run_drawing(svg_text: str, folder: Path) -> str:
    """Write the drawing, read it directly and through the drawn plan; 'ok' or 'error'."""
    svg = folder / "fuzz-floorplan.svg"
    svg.write_text(svg_text, encoding="utf-8")
    outcome = "ok"
    try:
        read_drawing(svg, scale=50.0, routes_layer="cable routes", plan_file="fuzz.yaml")
    except PlanError as exc:
        assert_clean_error(exc)
        outcome = "error"
    plan_text = BASE_DRAWN.replace("base-floorplan.svg", svg.name)
    if run_plan(plan_text, folder) == "error":
        outcome = "error"
    return outcome


# -- plan mutations -----------------------------------------------------------------


def _paths(node, prefix=()):
    """Every (path, node) in a constructed YAML value (mappings and lists)."""
    yield prefix, node
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _paths(v, prefix + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from _paths(v, prefix + (i,))


def _dump(doc) -> str:
    return yaml.safe_dump(doc, allow_unicode=True, sort_keys=False, width=10 ** 6)


@st.composite
def mutated_plans(draw, base_text: str = BASE_PLAN) -> str:
    """The valid plan with one to three random changes, as YAML text."""
    text = base_text
    for _ in range(draw(st.integers(1, 3))):
        op = draw(st.sampled_from(["replace", "delete", "add", "dup-line", "insert", "cut",
                                   "swap-lines"]))
        if op in ("replace", "delete", "add"):
            try:
                doc = yaml.safe_load(text)
            except yaml.YAMLError:
                continue
            if not isinstance(doc, (dict, list)):
                continue
            paths = [p for p, _ in _paths(doc) if p]
            if not paths:
                continue
            path = draw(st.sampled_from(paths))
            parent = doc
            for k in path[:-1]:
                parent = parent[k]
            key = path[-1]
            if op == "replace":
                parent[key] = draw(VALUES)
            elif op == "delete":
                del parent[key]
            else:
                target = parent[key]
                if isinstance(target, dict):
                    target[draw(st.sampled_from(PLAN_KEYS))] = draw(VALUES)
                elif isinstance(target, list):
                    target.insert(draw(st.integers(0, len(target))), draw(VALUES))
                else:
                    parent[key] = [target, draw(VALUES)]
            try:
                text = _dump(doc)
            except (yaml.YAMLError, ValueError, OverflowError):
                continue
        else:
            lines = text.split("\n")
            i = draw(st.integers(0, max(0, len(lines) - 1)))
            if op == "dup-line":
                lines.insert(i, lines[i])
                text = "\n".join(lines)
            elif op == "swap-lines":
                j = draw(st.integers(0, max(0, len(lines) - 1)))
                lines[i], lines[j] = lines[j], lines[i]
                text = "\n".join(lines)
            elif op == "insert":
                pos = draw(st.integers(0, len(text)))
                text = text[:pos] + draw(st.text(min_size=1, max_size=8)) + text[pos:]
            else:
                a = draw(st.integers(0, len(text)))
                b = draw(st.integers(a, min(len(text), a + 40)))
                text = text[:a] + text[b:]
    return text


# -- drawing mutations --------------------------------------------------------------

_SVG_NUM = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.sampled_from(["NaN", "nan", "inf", "-inf", "1e308", "-1e308", "1e300", "1e-320", "0",
                     "-0", "1e999", "", "+", "-", ".", "e5", "1e", "0x10"]),
    st.integers(-10 ** 30, 10 ** 30).map(str),
    st.floats(-300, 300).map(lambda x: f"{x:g}"),
)
_TRANSFORMS = st.one_of(
    st.builds(lambda n, xs: f"{n}({' '.join(xs)})",
              st.sampled_from(["matrix", "translate", "scale", "rotate", "skewX", "skewY", "nope"]),
              st.lists(_SVG_NUM, min_size=0, max_size=7)),
    st.lists(st.builds(lambda n, a, b: f"{n}({a},{b})", st.sampled_from(["translate", "scale"]),
                       _SVG_NUM, _SVG_NUM), max_size=4).map(" ".join),
    st.text(max_size=20),
)
_PATH_DATA = st.one_of(
    st.lists(st.tuples(st.sampled_from(list("MmLlHhVvCcSsQqTtAaZz") + ["", "X"]),
                       st.lists(_SVG_NUM, max_size=7)),
             max_size=8).map(lambda cmds: " ".join(c + " " + " ".join(ns) for c, ns in cmds)),
    st.builds(lambda a: "M 10,10 " + a, st.text(max_size=20)),
    st.text(max_size=30),
)
_POINTS = st.lists(_SVG_NUM, max_size=8).map(" ".join)
INKSCAPE = "http://www.inkscape.org/namespaces/inkscape"
XLINK = "http://www.w3.org/1999/xlink"
SVGNS = "http://www.w3.org/2000/svg"
_ATTR_VALUES = {
    "transform": _TRANSFORMS,
    "d": _PATH_DATA,
    "points": _POINTS,
    "x1": _SVG_NUM, "y1": _SVG_NUM, "x2": _SVG_NUM, "y2": _SVG_NUM,
    "cx": _SVG_NUM, "cy": _SVG_NUM, "r": _SVG_NUM, "x": _SVG_NUM, "y": _SVG_NUM,
    "width": st.one_of(_SVG_NUM, _SVG_NUM.map(lambda s: s + "mm"), st.sampled_from(["100%", "1e308mm"])),
    "height": st.one_of(_SVG_NUM, _SVG_NUM.map(lambda s: s + "mm")),
    "viewBox": st.lists(_SVG_NUM, max_size=5).map(" ".join),
    "preserveAspectRatio": st.sampled_from(["none", "xMidYMid slice", "xMinYMin meet", "garbage"]),
    "style": st.sampled_from(["display:none", "visibility:hidden", "fill:url(http://198.51.100.7/x)",
                              "stroke:red;;", ":", "display"]),
    "data-circuit": st.sampled_from(["CU1/1", "1", "CU1/9", "", "CU9/1", "CU1/1:S9"]),
    "data-board": st.sampled_from(["CU1", "CU2", "", "1"]),
    "data-height": st.one_of(st.sampled_from(["0.45 m", "-1 m", "1e308 m", "nan m", "3 ohm", "",
                                              "9 ft 13 in"]), st.text(max_size=8)),
    "data-kind": st.sampled_from(["socket", "light", "lamp", ""]),
    "id": st.sampled_from(["cable_routes", "boards", "outlets", "x", "1", ""]),
    f"{{{INKSCAPE}}}label": st.sampled_from(["cable routes", "boards", "outlets", "CU1/1", "CU1/1:S1", ""]),
    f"{{{INKSCAPE}}}groupmode": st.just("layer"),
    "href": st.sampled_from(["#x", "file:///etc/passwd", "http://198.51.100.7/a.svg#p", "other.svg#r",
                             "data:image/png;base64,AAAA"]),
    f"{{{XLINK}}}href": st.sampled_from(["#boards", "file:///etc/hostname", "https://198.51.100.7/"]),
}
_NEW_TAGS = ["path", "polyline", "line", "rect", "circle", "ellipse", "polygon", "g", "use",
             "image", "text", "a", "switch", "svg", "symbol", "defs"]


@st.composite
def mutated_drawings(draw) -> str:
    """The valid drawing with one to four random changes, as SVG text."""
    root = ET.fromstring(BASE_SVG)
    for _ in range(draw(st.integers(1, 4))):
        elems = list(root.iter())
        el = draw(st.sampled_from(elems))
        op = draw(st.sampled_from(["attr", "attr", "attr", "wrap", "remove", "repeat", "add"]))
        parent_of = {c: p for p in root.iter() for c in p}
        if op == "attr":
            name = draw(st.sampled_from(sorted(_ATTR_VALUES)))
            el.set(name, draw(_ATTR_VALUES[name]))
        elif op == "wrap" and el is not root:
            parent = parent_of[el]
            idx = list(parent).index(el)
            parent.remove(el)
            inner = el
            for _ in range(draw(st.integers(1, 30))):
                g = ET.Element(f"{{{SVGNS}}}g")
                if draw(st.booleans()):
                    g.set("transform", draw(_TRANSFORMS))
                g.append(inner)
                inner = g
            parent.insert(idx, inner)
        elif op == "remove" and el is not root:
            parent_of[el].remove(el)
        elif op == "repeat" and el is not root:
            parent = parent_of[el]
            parent.insert(list(parent).index(el), copy.deepcopy(el))
        elif op == "add":
            child = ET.SubElement(el, f"{{{SVGNS}}}{draw(st.sampled_from(_NEW_TAGS))}")
            for name in draw(st.lists(st.sampled_from(sorted(_ATTR_VALUES)), max_size=4)):
                child.set(name, draw(_ATTR_VALUES[name]))
    return ET.tostring(root, encoding="unicode")


# -- the tests ----------------------------------------------------------------------

FUZZ = settings(deadline=None, derandomize=True, database=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                       HealthCheck.filter_too_much])


@pytest.fixture(scope="module")
def folder():
    with tempfile.TemporaryDirectory(prefix="zsplan-fuzz-") as d:
        yield Path(d)


@settings(FUZZ, max_examples=250)
@given(doc=VALUES)
def test_random_yaml_documents(doc, folder):
    run_plan(_dump(doc), folder)


@settings(FUZZ, max_examples=250)
@given(doc=st.dictionaries(st.sampled_from(PLAN_KEYS), SCHEMA_DOCS, max_size=8))
def test_random_documents_from_plan_keys(doc, folder):
    doc = {"zsplan": 1, **doc}
    run_plan(_dump(doc), folder)


@settings(FUZZ, max_examples=150)
@given(text=st.text(max_size=200))
def test_random_text(text, folder):
    run_plan(text, folder)


@settings(FUZZ, max_examples=600)
@given(text=mutated_plans())
def test_mutated_plans(text, folder):
    run_plan(text, folder)


@settings(FUZZ, max_examples=300)
@given(svg=mutated_drawings())
def test_mutated_drawings(svg, folder):
    run_drawing(svg, folder)


def test_the_bases_are_valid(folder):
    # the mutations start from plans and a drawing that load and pass, so an error
    # in a mutated example comes from its mutation
    assert run_plan(BASE_PLAN, BAD) == "ok"
    assert run_plan(BASE_DRAWN, BAD) == "ok"
    assert run_drawing(BASE_SVG, folder) == "ok"

"""Safe SVG parsing and sanitising (zsplan.svgsafe)."""
import os
import time
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from zsplan.errors import PlanError
from zsplan.svgsafe import (
    MAX_DEPTH,
    length_mm,
    local_name,
    parse_svg,
    parse_viewbox,
    sanitize_for_embedding,
    source_line,
    svg_size,
)

DATA = Path(__file__).parent / "data" / "svg"
SVG_OPEN = '<svg xmlns="http://www.w3.org/2000/svg" width="10mm" height="10mm">'


def line_of(path: Path, needle: str) -> int:
    """1-based line of the first line containing ``needle`` (read independently)."""
    for n, text in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
        if needle in text:
            return n
    raise AssertionError(needle)


def only_problem(exc: PlanError):
    assert len(exc.problems) == 1
    return exc.problems[0]


# -- parsing -------------------------------------------------------------------

def test_parse_gives_root_and_source_lines():
    path = DATA / "flat_a3.svg"
    root = parse_svg(path)
    assert local_name(root.tag) == "svg"
    route = next(e for e in root.iter() if e.get("id") == "route-k")
    assert source_line(route) == line_of(path, 'id="route-k"')
    assert source_line(root) == line_of(path, "<svg ")
    # a copy carries no line
    assert source_line(ET.Element("g")) is None


def test_svg11_doctype_is_accepted_and_not_fetched():
    t0 = time.perf_counter()
    root = parse_svg(DATA / "svg11_doctype.svg")
    assert time.perf_counter() - t0 < 2.0
    assert root.find("{http://www.w3.org/2000/svg}g").get("id") == "routes"


@pytest.mark.parametrize("name, entity, declared", [
    ("billion_laughs.svg", "lol", "<!ENTITY lol "),          # exponential expansion
    ("external_entity.svg", "secret", "<!ENTITY secret "),   # would read a local file
    ("external_dtd_entity.svg", "remote", "<!ENTITY % remote "),  # would fetch a DTD
])
def test_entities_refused_quickly(name, entity, declared):
    path = DATA / name
    t0 = time.perf_counter()
    with pytest.raises(PlanError) as info:
        parse_svg(path)
    assert time.perf_counter() - t0 < 2.0
    p = only_problem(info.value)
    assert p.file == str(path)
    assert p.line == line_of(path, declared)
    assert repr(entity) in p.message and "expected" in p.message


def test_oversized_file_refused_before_reading(tmp_path):
    big = tmp_path / "huge.svg"
    with open(big, "wb") as fh:       # a sparse 100 MB file: nothing is written
        fh.truncate(100_000_000)
    t0 = time.perf_counter()
    with pytest.raises(PlanError) as info:
        parse_svg(big, plan_file="plans/flat.yaml")
    assert time.perf_counter() - t0 < 2.0
    p = only_problem(info.value)
    assert p.file == str(big)
    assert "100,000,000 bytes" in p.message and "20,000,000" in p.message
    assert "plans/flat.yaml" in p.message


def test_max_bytes_is_honoured():
    path = DATA / "flat_a3.svg"
    size = path.stat().st_size
    parse_svg(path, max_bytes=size)
    with pytest.raises(PlanError, match="limit"):
        parse_svg(path, max_bytes=size - 1)


@pytest.mark.skipif(not os.path.exists("/dev/zero"), reason="needs /dev/zero")
def test_endless_special_file_is_bounded():
    # stat() says 0 bytes; reading must still stop at the limit
    t0 = time.perf_counter()
    with pytest.raises(PlanError, match="over 10,000 bytes"):
        parse_svg("/dev/zero", max_bytes=10_000)
    assert time.perf_counter() - t0 < 2.0


def test_malformed_xml_names_line_and_expectation(tmp_path):
    bad = tmp_path / "bad.svg"
    bad.write_text(SVG_OPEN + "\n<g>\n</svg>\n")
    with pytest.raises(PlanError) as info:
        parse_svg(bad)
    p = only_problem(info.value)
    assert p.line == 3                      # hand-worked: </svg> closes the <g> of line 2
    assert "mismatched tag" in p.message and "expected an SVG document" in p.message


@pytest.mark.parametrize("text, what", [
    ("", "no element found"),
    ('<html xmlns="http://www.w3.org/1999/xhtml"/>', "root element is <html>"),
    ('<svg xmlns="http://example.org/not-svg"/>', "root element is <svg>"),
])
def test_not_an_svg(tmp_path, text, what):
    f = tmp_path / "x.svg"
    f.write_text(text)
    with pytest.raises(PlanError, match=what):
        parse_svg(f)


def test_missing_file_and_folder(tmp_path):
    with pytest.raises(PlanError) as info:
        parse_svg(tmp_path / "nope.svg", plan_file="p.yaml")
    p = only_problem(info.value)
    assert "nope.svg" in p.file and "no such file" in p.message and "p.yaml" in p.message
    with pytest.raises(PlanError, match="folder"):
        parse_svg(tmp_path)


def test_compressed_svg_refused(tmp_path):
    import gzip
    f = tmp_path / "plan.svgz"
    f.write_bytes(gzip.compress((SVG_OPEN + "</svg>").encode()))
    with pytest.raises(PlanError, match="compressed"):
        parse_svg(f)


def test_deep_nesting_refused(tmp_path):
    f = tmp_path / "deep.svg"
    depth = MAX_DEPTH + 50
    f.write_text(SVG_OPEN + "<g>" * depth + "</g>" * depth + "</svg>")
    t0 = time.perf_counter()
    with pytest.raises(PlanError, match="nested more than"):
        parse_svg(f)
    assert time.perf_counter() - t0 < 2.0


# -- sizes ---------------------------------------------------------------------

@pytest.mark.parametrize("text, mm, unit", [
    ("297mm", 297.0, "mm"),
    ("29.7cm", 297.0, "cm"),
    ("11in", 279.4, "in"),        # CSS Values 3: 1 in = 25.4 mm
    ("72pt", 25.4, "pt"),         # CSS Values 3: 1 pt = 1/72 in
    ("6pc", 25.4, "pc"),          # CSS Values 3: 1 pc = 1/6 in
    ("96px", 25.4, "px"),         # CSS Values 3: 1 px = 1/96 in
    ("96", 25.4, ""),             # SVG 1.1 7.10: a bare number is in px
    ("4Q", 1.0, "q"),             # CSS Values 3: 1 Q = 1/4 mm
    ("100%", None, "%"),
    ("3em", None, "em"),
    ("wide", None, "?"),
    (None, None, ""),
])
def test_length_mm(text, mm, unit):
    value, u = length_mm(text)
    assert u == unit
    assert value == (pytest.approx(mm, rel=1e-12) if mm is not None else None)


def test_svg_size():
    # hand-worked: the fixtures' root attributes
    assert svg_size(parse_svg(DATA / "flat_a3.svg")) == ((0.0, 0.0, 420.0, 297.0), 420.0, 297.0)
    assert svg_size(parse_svg(DATA / "flat_a3_nested.svg")) == (
        (0.0, 0.0, 840.0, 594.0), pytest.approx(420.0), pytest.approx(297.0))
    assert svg_size(parse_svg(DATA / "no_size.svg")) == ((0.0, 0.0, 800.0, 600.0), None, None)
    # no viewBox: the user unit is the px, 96 px = 25.4 mm (CSS Values 3)
    root = ET.fromstring('<svg xmlns="http://www.w3.org/2000/svg" width="96" height="48"/>')
    vb, w, h = svg_size(root)
    assert vb == pytest.approx((0.0, 0.0, 96.0, 48.0)) and w == pytest.approx(25.4)
    assert h == pytest.approx(12.7)
    assert svg_size(ET.fromstring('<svg xmlns="http://www.w3.org/2000/svg"/>')) == (None, None, None)


@pytest.mark.parametrize("text, expected", [
    ("0 0 420 297", (0.0, 0.0, 420.0, 297.0)),
    ("-10,5.5 1e2 50", (-10.0, 5.5, 100.0, 50.0)),
    ("0 0 0 10", None),            # SVG 1.1 7.7: zero width disables rendering
    ("0 0 10", None),
    (None, None),
])
def test_parse_viewbox(text, expected):
    assert parse_viewbox(text) == expected


# -- sanitising ----------------------------------------------------------------

def _by_id(root, ident):
    return next((e for e in root.iter() if e.get("id") == ident), None)


def test_sanitize_removes_active_and_external_content():
    original = parse_svg(DATA / "unsafe_embed.svg")
    clean = sanitize_for_embedding(original)
    tags = {local_name(e.tag) for e in clean.iter()}
    assert not tags & {"script", "foreignobject", "set", "animate", "p"}
    for e in clean.iter():
        assert not any(local_name(k).startswith("on") for k in e.attrib), e
    images = [e.get("id") for e in clean.iter() if local_name(e.tag) == "image"]
    assert images == ["inline-png"]                 # external, file: and svg+xml images gone
    uses = {e.get("id"): e for e in clean.iter() if local_name(e.tag) == "use"}
    assert list(uses) == ["keep-use"]
    assert uses["keep-use"].get("{http://www.w3.org/1999/xlink}href") == "#socket-symbol"
    styles = ["".join(e.itertext()) for e in clean.iter() if local_name(e.tag) == "style"]
    assert styles == [".door { stroke: url(#doorGradient) }"]   # the @import sheet is gone
    assert _by_id(clean, "styled").get("style") == "stroke:blue;filter:url(#shadow)"
    painted = _by_id(clean, "painted")
    assert painted.get("fill") is None and painted.get("stroke") == "url(#doorGradient)"
    link = _by_id(clean, "link")
    assert not link.attrib.get("{http://www.w3.org/1999/xlink}href")
    assert "".join(link.itertext()) == "click"
    assert _by_id(clean, "local-link").get("href") == "#styled"
    assert "".join(_by_id(clean, "t").itertext()) == "before after"   # text around a removed child kept
    text = ET.tostring(clean, encoding="unicode")
    for bad in ("198.51.100.7", "file:", "javascript:", "@import", "alert", "svg+xml"):
        assert bad not in text, bad
    # the input tree is untouched
    assert any(local_name(e.tag) == "script" for e in original.iter())
    assert original.get("onload") == "alert(1)"


def test_sanitize_is_idempotent():
    once = sanitize_for_embedding(parse_svg(DATA / "unsafe_embed.svg"))
    twice = sanitize_for_embedding(once)
    assert ET.tostring(once) == ET.tostring(twice)


def test_sanitize_keeps_a_clean_drawing_unchanged():
    root = parse_svg(DATA / "flat_a3.svg")
    assert ET.tostring(sanitize_for_embedding(root)) == ET.tostring(root)


@pytest.mark.parametrize("style, kept", [
    ("fill:red;stroke:url(#g)", "fill:red;stroke:url(#g)"),
    ("fill:url( 'http://198.51.100.7/a' );stroke:red", "stroke:red"),
    ("fill:u\\72l(http://198.51.100.7/a);stroke:red", "stroke:red"),      # CSS escape
    ("background:image-set('http://198.51.100.7/a.png' 1x);opacity:1", "opacity:1"),
    ("fill:url(data:image/png;base64,iVBORw0KGgo=);stroke:red",
     "fill:url(data:image/png;base64,iVBORw0KGgo=);stroke:red"),          # ';' inside url()
    ("fill:url(http://198.51.100.7/a)", None),
])
def test_sanitize_style_declarations(style, kept):
    root = ET.fromstring('<svg xmlns="http://www.w3.org/2000/svg"><rect id="r"/></svg>')
    root[0].set("style", style)
    assert sanitize_for_embedding(root)[0].get("style") == kept

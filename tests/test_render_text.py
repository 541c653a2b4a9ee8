"""The layers the renderer writes as SVG text (routes, outlets, boards):
escaping of what comes from the plan, the same markup ElementTree writes, and
the note of labels left out on a dense sheet."""
from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest
from defusedxml import ElementTree as SafeET
from hypothesis import given, strategies as st

import zsplan.render as R
from zsplan.check import check
from zsplan.loader import load_plan, load_plan_text
from zsplan.render import render_svg

NS = "{http://www.w3.org/2000/svg}"
DENSE = Path(__file__).parent / "data" / "render" / "dense.yaml"

# Names full of the characters XML gives a meaning to.  The loader accepts any
# printable text, so all of these can reach the sheet.
BOARD = "DB<&>\"'1"
REF = "1&<2>\"'"
OUTLETS = ("L<1>&\"'x", "]]> L2 &amp; ü Ω")
ODD_PLAN = f"""\
zsplan: 1
title: "Odd <names> & \\"quotes\\""
supply: {{earthing: TN-C-S, ze: 0.35 ohm, u0: 230 V, cmin: 0.95}}
defaults: {{ceiling: 2.4 m, allowance: 10 %, extra: 0.5 m, run: ceiling}}
boards:
  - {{ref: "DB<&>\\"'1", at: [1.0, 4.0], height: 1.5 m}}
circuits:
  - ref: "1&<2>\\"'"
    board: "DB<&>\\"'1"
    name: "Lights <&> \\"hall\\""
    use: lighting
    device: {{type: mcb, curve: B, rating: 6 A}}
    cable: {{line: 1.5 mm2, cpc: 1.0 mm2}}
    route: [[1.0, 4.0], [1.0, 2.5], [12.0, 2.5]]
    outlets:
      - {{at: [6.0, 2.5], height: 2.4 m, name: "L<1>&\\"'x", kind: light}}
      - {{at: [12.0, 2.5], height: 2.4 m, name: "]]> L2 &amp; ü Ω", kind: light}}
"""


def test_names_with_markup_characters_come_out_as_written(tmp_path):
    res = check(load_plan_text(ODD_PLAN, file=str(tmp_path / "odd.yaml"), base_dir=tmp_path))
    assert (res.plan.boards[0].ref, res.plan.circuits[0].ref) == (BOARD, REF)
    svg = render_svg(res)
    root = SafeET.fromstring(svg.encode("utf-8"))       # well-formed XML
    key = f"{BOARD}/{REF}"
    (route,) = [e for e in root.iter(f"{NS}polyline") if "route" in (e.get("class") or "")]
    assert route.get("data-circuit") == key
    assert route.find(f"{NS}title").text.startswith(key + " · ")
    outlets = [u for u in root.iter(f"{NS}use") if "outlet" in (u.get("class") or "")]
    assert [u.get("data-name") for u in outlets] == list(OUTLETS)
    assert {u.get("data-circuit") for u in outlets} == {key}
    (board,) = [u for u in root.iter(f"{NS}use") if u.get("class") == "board"]
    assert board.get("data-board") == BOARD
    (ref,) = [t for t in root.iter(f"{NS}text") if t.get("class") == "board-ref"]
    assert ref.text == BOARD
    # nothing from the plan reaches the markup unescaped
    assert "<1>" not in svg and "]]>" not in svg and 'DB<' not in svg


# XML 1.0 characters (no other control characters, no surrogates)
xml_text = st.text(st.characters(blacklist_categories=("Cs",),
                                 blacklist_characters=[chr(c) for c in range(32)
                                                       if c not in (9, 10, 13)]))


@given(value=xml_text, text=xml_text)
def test_markup_written_as_text_is_what_elementtree_writes(value, text):
    # the layers written as text must be byte for byte what ElementTree writes
    # for the same elements (the rest of the sheet is written by ElementTree)
    el = ET.Element("text", {"class": "board-ref", "data-x": value})
    el.text = text
    assert R._element("text", [("class", "board-ref"), ("data-x", value)], text) == \
        ET.tostring(el, encoding="unicode", short_empty_elements=True)
    g = ET.Element("g", {"id": "zs-routes"})
    assert R._group('<g id="zs-routes">', []) == ET.tostring(g, encoding="unicode")
    ET.SubElement(g, "title").text = text
    assert R._group('<g id="zs-routes">', [R._element("title", [], text)]) == \
        ET.tostring(g, encoding="unicode")


def test_attribute_escaping_keeps_line_breaks_and_tabs():
    # XML 1.0 section 3.3.3: literal line breaks and tabs in an attribute value
    # are normalised to spaces by the reader; character references survive
    el = SafeET.fromstring(R._element("g", [("data-name", "a\tb\nc\rd\"e<f&g>")]).encode())
    assert el.get("data-name") == "a\tb\nc\rd\"e<f&g>"


def test_spent_label_budget_lists_every_other_route_in_label_order(monkeypatch):
    res = check(load_plan(DENSE))
    monkeypatch.setattr(R, "DENSE_LABELS", 1)
    monkeypatch.setattr(R, "LABEL_BUDGET", 1)       # spent by the first label's first try
    root = SafeET.fromstring(render_svg(res, sheet="A4").encode("utf-8"))
    labelled = [g.get("data-circuit") for g in root.iter(f"{NS}g")
                if "label" in (g.get("class") or "").split()]
    assert len(labelled) <= 1
    routes = [e for e in root.iter(f"{NS}polyline") if "route" in (e.get("class") or "")]
    assert len(routes) == len(res.plan.circuits) == 30     # dense.yaml: 30 circuits, one board
    note = root.find(f".//{NS}g[@id='zs-unlabelled']")
    assert int(note.get("data-count")) == 30 - len(labelled)
    # labels are tried worst band first, then in plan order; the note keeps that order
    rank = {"fail": 0, "tight": 1, "pass": 2, "none": 3}
    order = sorted(routes, key=lambda e: (rank[e.get("data-band")],
                                          [c.ref for c in res.plan.circuits].index(
                                              e.get("data-circuit").split("/")[1])))
    expected = [e.get("data-circuit") for e in order if e.get("data-circuit") not in labelled]
    shown = re.findall(r"[\w-]+/[\w-]+", "".join(note.itertext()))
    assert shown and shown == expected[:len(shown)]


def test_circuit_without_outlets_leaves_an_empty_outlet_layer(tmp_path):
    text = ODD_PLAN.split("    outlets:")[0]
    res = check(load_plan_text(text, file=str(tmp_path / "bare.yaml"), base_dir=tmp_path))
    assert not res.plan.circuits[0].outlets
    svg = render_svg(res)
    root = SafeET.fromstring(svg.encode("utf-8"))
    outlets = root.find(f".//{NS}g[@id='zs-outlets']")
    assert outlets is not None and len(outlets) == 0
    assert '<g id="zs-outlets" />' in svg               # as ElementTree writes an empty group
    assert len(root.find(f".//{NS}g[@id='zs-routes']")) == 1


def test_symbols_placed_at_once_are_placed_as_one_by_one():
    from zsplan import symbols as sy
    rng = np.random.default_rng(7)
    kinds = list(rng.choice(sorted(sy.SYMBOL_IDS), 200))
    xs, ys = rng.uniform(-50, 1200, 200), rng.uniform(-50, 850, 200)
    many = sy.use_attributes_many(kinds, xs, ys, 5.0, "#1f1f1f")
    assert many == [sy.use_attributes(k, x, y, 5.0, "#1f1f1f") for k, x, y in zip(kinds, xs, ys)]
    el = SafeET.fromstring(sy.use(kinds[0], xs[0], ys[0], 5.0, "#1f1f1f").encode())
    # the viewport's corner is the insertion point less half the size (5 mm / 2)
    assert float(el.get("x")) == pytest.approx(xs[0] - 2.5, abs=5e-4)
    with pytest.raises(ValueError):
        sy.use_attributes_many(["socket", "sofa"], [0, 1], [0, 1])

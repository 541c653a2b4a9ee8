"""The JSON results document written in pieces.

Reference: the version-1 contract's document is :meth:`Results.to_dict`
(docs/plan-format.md); Python's ``json`` module is the independent reader:
the joined pieces must parse to exactly that document.
"""
from __future__ import annotations

import json

import pytest

import zsplan
from zsplan.demo import demo_path
from zsplan.loader import load_plan, load_plan_text


def _doc(res):
    # the document as JSON values (tuples read back as lists)
    return json.loads(json.dumps(res.to_dict(), ensure_ascii=False, allow_nan=False))


@pytest.mark.parametrize("name", ["flat.yaml", "workshop.yaml"])
@pytest.mark.parametrize("batch", [1, 2, 500])
def test_pieces_parse_to_the_document_with_a_record_a_line(name, batch):
    res = zsplan.check(load_plan(demo_path(name)))
    text = "".join(res.json_pieces(batch=batch))
    doc = json.loads(text)
    assert doc == _doc(res)
    assert list(doc) == ["zsplan", "plan", "circuits", "submains", "summary"]
    lines = text.split("\n")
    records = [ln for ln in lines if ln.startswith("    {")]
    assert len(records) == len(doc["circuits"]) + len(doc["submains"])
    assert [json.loads(ln.rstrip(",")) for ln in records] == doc["circuits"] + doc["submains"]
    assert text == "".join(res.json_pieces(batch=7))          # the same text whatever the batch


def test_one_circuit_no_submains_and_text_that_needs_escaping():
    plan = load_plan_text(
        'zsplan: 1\nsupply: {u0: 230 V, earthing: TN-S, ze: 0.35 ohm}\n'
        'boards: [{ref: CU1, at: [0, 0], height: 1.5 m}]\n'
        'circuits:\n  - ref: "1"\n    board: CU1\n    name: "Line\\nbreak \\"quoted\\" é ☃"\n'
        '    device: {type: mcb, curve: B, rating: 16 A}\n'
        '    cable: {line: 2.5 mm2, cpc: 1.5 mm2}\n    route: [[0, 0], [5, 0]]\n'
        '    outlets: [{at: [5, 0], height: 0.45 m}]\n', file="one.yaml")
    res = zsplan.check(plan)
    text = "".join(res.json_pieces())
    doc = json.loads(text)
    assert doc == _doc(res)
    assert doc["circuits"][0]["name"] == 'Line\nbreak "quoted" é ☃'
    assert doc["submains"] == []
    # {, zsplan, plan, "circuits": [, the record, ], submains, summary, }
    assert len(text.split("\n")) == 9

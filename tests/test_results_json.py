"""The JSON results document written in pieces equals the document written whole.

Reference: Python's ``json.dumps`` of :meth:`Results.to_dict` (the version-1
contract's document, docs/plan-format.md) is the text the pieces must join to.
"""
from __future__ import annotations

import json

import pytest

import zsplan
from zsplan.demo import demo_path
from zsplan.loader import load_plan, load_plan_text


def _whole(res):
    return json.dumps(res.to_dict(), ensure_ascii=False, indent=2, allow_nan=False)


@pytest.mark.parametrize("name", ["flat.yaml", "workshop.yaml"])
@pytest.mark.parametrize("batch", [1, 2, 500])
def test_pieces_join_to_the_whole_document(name, batch):
    res = zsplan.check(load_plan(demo_path(name)))
    text = "".join(res.json_pieces(batch=batch))
    assert text == _whole(res)
    assert json.loads(text)["summary"] == res.to_dict()["summary"]


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
    assert text == _whole(res)
    assert json.loads(text)["circuits"][0]["name"] == 'Line\nbreak "quoted" é ☃'
    assert json.loads(text)["submains"] == []

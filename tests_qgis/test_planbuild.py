"""Merging layers into a plan file keeps the plan file's own meaning: scalars
as written, shared (aliased) values unchanged where one circuit overrides
them, floor plans found from where the plan is written."""
from __future__ import annotations

from zsplan.loader import load_plan_text
from zsplan_qgis.planbuild import Feature, Frame, LayerData, build

PLAN = """\
zsplan: 1
supply: {earthing: TN-S, ze: 0.8 ohm}
x-kit:
  b32: &b32 {type: mcb, curve: B, rating: 32 A}
  twin: &twin {line: 2.5 mm2, cpc: 1.5 mm2}
  common: &common {board: CU1, device: *b32, cable: *twin}
drawing:
  floorplan: shed.svg
  scale: 1:50
  routes_layer: cables
boards:
  - {ref: CU1}
circuits:
  - ref: 03
    <<: *common
  - ref: "4"
    <<: *common
"""

SVG = '<svg xmlns="http://www.w3.org/2000/svg" width="100mm" height="100mm" viewBox="0 0 100 100"/>'


def _layers(rating4=None):
    routes = LayerData("routes", (
        Feature(1, ((0.0, 0.0), (4.0, 0.0)), {"circuit": "03", "rating": None}),
        Feature(2, ((0.0, 0.0), (0.0, -3.0)), {"circuit": "CU1/4", "rating": rating4}),
    ), {"circuit": "circuit", "rating": "rating"})
    boards = LayerData("boards", (Feature(7, ((0.0, 0.0),), {"ref": "CU1"}),), {"ref": "ref"})
    return routes, boards


def _plan(tmp_path):
    (tmp_path / "shed.svg").write_text(SVG)
    p = tmp_path / "shed.yaml"
    p.write_text(PLAN)
    return p


def test_scalars_anchors_and_merge_keys_survive(tmp_path):
    routes, boards = _layers(rating4=20.0)
    built = build(_plan(tmp_path), routes, boards)
    plan = built.load()
    c03, c4 = plan.circuits
    assert c03.ref == "03"                     # YAML 1.1 would read 03 as the integer 3
    assert c03.device.rating_a == 32.0         # the shared device is not changed ...
    assert c4.device.rating_a == 20.0          # ... where one circuit overrides it
    assert plan.drawing.scale == 50.0          # '1:50' stays a scale (1:50 -> 50)
    # hand-worked: map (0, -3) -> plan (0, 3); y turned over, x kept
    assert c4.route == ((0.0, 0.0), (0.0, 3.0))
    assert plan.board("CU1").at == (0.0, 0.0)


def test_routes_layer_of_the_plan_file_is_not_read(tmp_path):
    routes, boards = _layers()
    built = build(_plan(tmp_path), routes, boards)
    assert built.load().drawing.routes_layer is None
    assert any("routes_layer is not read" in n for n in built.notes)


def test_floor_plan_follows_the_written_plan(tmp_path):
    routes, boards = _layers()
    plan_file = _plan(tmp_path)
    same = build(plan_file, routes, boards, target_dir=tmp_path)
    assert load_plan_text(same.text, file="x.yaml", base_dir=tmp_path).drawing.floorplan \
        == str((tmp_path / "shed.svg").resolve())
    elsewhere = tmp_path / "out"
    elsewhere.mkdir()
    moved = build(plan_file, routes, boards, target_dir=elsewhere)
    assert load_plan_text(moved.text, file="x.yaml", base_dir=elsewhere).drawing.floorplan is None
    assert any("lies outside the output's folder" in n for n in moved.notes)


def test_scale_factor_and_rounding(tmp_path):
    # 1:50 paper millimetres: 0.05 m per unit; 64 mm -> 3.2 m exactly after rounding
    # to 1 µm (64 * 0.05 = 3.2000000000000006 in binary floating point; hand-worked)
    assert Frame(0.05).to_plan(64.0, -30.0) == (3.2, 1.5)
    assert Frame(0.05).to_map(3.2, 1.5) == (64.0, -30.0)
    assert Frame(1.0).to_plan(2.0, 0.0) == (2.0, 0.0)
    assert str(Frame(1.0).to_plan(2.0, -0.0)[1]) == "0.0"     # no '-0.0' in the file

"""Label placement (zsplan.labels): geometry checked by hand and by shapely."""

import pytest
from shapely.geometry import LineString, box

from zsplan.labels import (
    LINE_HEIGHT,
    PAD_X,
    PAD_Y,
    RASTER_ALLOWANCE,
    LabelSpec,
    count_overlaps,
    label_polygon,
    place_labels,
    text_width,
    upright_angle,
)


@pytest.mark.parametrize("dx, dy, expected", [
    (1, 0, 0.0),        # hand-worked: left to right, horizontal text
    (-1, 0, 0.0),       # hand-worked: right to left is turned round to read left to right
    (0, 1, -90.0),      # hand-worked: down the page -> text reads upwards
    (0, -1, -90.0),     # hand-worked: up the page -> text reads upwards
    (1, 1, 45.0),       # hand-worked: atan2(1, 1) = 45 deg (y down: sloping down to the right)
    (-1, -1, 45.0),     # hand-worked: same line, opposite direction
    (1, -1, -45.0),     # hand-worked: atan2(-1, 1) = -45 deg
    (-1, 1, -45.0),     # hand-worked: 135 deg - 180 deg
])
def test_upright_angle(dx, dy, expected):
    assert upright_angle(dx, dy) == pytest.approx(expected)


def _cairo_width(text, size, bold=False):
    cairocffi = pytest.importorskip("cairocffi")
    surf = cairocffi.ImageSurface(cairocffi.FORMAT_ARGB32, 4, 4)
    ctx = cairocffi.Context(surf)
    ctx.select_font_face("DejaVu Sans", cairocffi.FONT_SLANT_NORMAL,
                         cairocffi.FONT_WEIGHT_BOLD if bold else cairocffi.FONT_WEIGHT_NORMAL)
    opts = ctx.get_font_options()
    opts.set_hint_metrics(cairocffi.HINT_METRICS_OFF)
    ctx.set_font_options(opts)
    ctx.set_font_size(size * 100)
    return ctx.text_extents(text)[4] / 100


@pytest.mark.parametrize("text, bold", [
    ("CU1/3 · 16.1 m · Zs 0.68/1.36 Ω", False),
    ("Flat 4, 27 Amberlowe Street", True),
    ("Lighting, hall, kitchen (2.5/1.5 mm²) ≥ 60 %", False),
])
def test_text_width_matches_the_font(text, bold):
    # the width table must agree with the installed font as cairo measures it
    fam = _cairo_width("x", 1.0)
    if abs(fam - 1212 / 2048) > 0.02:   # DejaVu Sans advance of "x" (font file)
        pytest.skip("DejaVu Sans is not the font cairo found")
    assert text_width(text, 2.5, bold) == pytest.approx(_cairo_width(text, 2.5, bold), rel=0.01)


def test_text_width_is_additive_and_scales_with_size():
    assert text_width("ab", 2.0) == pytest.approx(text_width("a", 2.0) + text_width("b", 2.0))
    assert text_width("Zs", 5.0) == pytest.approx(2 * text_width("Zs", 2.5))
    assert text_width("\u4e2d", 2.0) == pytest.approx(2.0)   # unknown glyph counted as 1 em


def test_label_polygon_rotated_box():
    p = label_polygon(10, 20, 8, 2, 90)
    x0, y0, x1, y1 = p.bounds
    # hand-worked: a 8 x 2 box turned 90 deg is 2 wide, 8 high, same centre
    assert (x1 - x0, y1 - y0) == pytest.approx((2, 8))
    assert p.centroid.coords[0] == pytest.approx((10, 20))
    assert p.area == pytest.approx(16)


def test_single_label_sits_above_middle_of_horizontal_route():
    spec = LabelSpec("A", "CU1/1 · 5.0 m", ((0, 50), (100, 50)), 2.5, clearance=1.0)
    (p,) = place_labels([spec], bounds=(0, 0, 200, 200))
    h = 2.5 * LINE_HEIGHT + 2 * PAD_Y
    w = text_width(spec.text, 2.5) * RASTER_ALLOWANCE + 2 * PAD_X
    assert p.angle == 0.0
    assert p.leader is None and p.collisions == 0
    assert (p.width, p.height) == pytest.approx((w, h))
    # hand-worked: centred on the segment's middle (50), above the line by
    # half the box height plus the clearance
    assert p.cx == pytest.approx(50.0)
    assert p.cy == pytest.approx(50.0 - h / 2 - 1.0)
    assert not p.polygon.intersects(LineString([(0, 50), (100, 50)]))


def test_label_follows_longest_segment_and_stays_upright():
    route = ((0, 0), (5, 0), (5, 80), (8, 80))     # the long segment runs down the page
    (p,) = place_labels([LabelSpec("B", "CU1/2", route)], bounds=(-50, -50, 100, 150))
    assert p.angle == -90.0
    assert p.cx == pytest.approx(5.0, abs=p.height / 2 + 1.0)
    assert 0 < p.cy < 80


def test_labels_on_one_shared_segment_do_not_overlap():
    route = ((0, 0), (120, 0))
    specs = [LabelSpec(f"K{i}", f"DB1/{i} · 12.0 m · Zs 0.55/1.09 Ω", route) for i in range(6)]
    placed = place_labels(specs, bounds=(-10, -60, 130, 60))
    assert len(placed) == 6
    assert count_overlaps([p.polygon for p in placed]) == 0
    assert all(p.collisions == 0 for p in placed)


def test_symbols_are_avoided():
    symbol = box(45, 44, 55, 56)        # an outlet symbol over the middle of the route
    spec = LabelSpec("C", "CU1/3 · 16.1 m", ((0, 50), (100, 50)))
    (p,) = place_labels([spec], obstacles=[symbol], bounds=(0, 0, 200, 200))
    assert not p.polygon.intersects(symbol)


def test_crowded_route_gets_a_leader_ending_on_the_route():
    # a short route boxed in by obstacles on both sides: no room along it
    route = ((50, 50), (60, 50))
    walls = [box(0, 40, 100, 49), box(0, 51, 100, 60)]
    spec = LabelSpec("D", "CU1/4 · 3.0 m · Zs 0.40/1.36 Ω", route)
    (p,) = place_labels([spec], obstacles=walls, bounds=(0, 0, 200, 200))
    assert p.leader is not None and p.collisions == 0
    (ax, ay), (bx, by) = p.leader
    assert LineString(route).distance(LineString([(ax, ay), (ax, ay)]).centroid) < 1e-9
    assert p.polygon.exterior.distance(LineString([(bx, by), (bx, by)]).centroid) < 1e-6
    assert all(not p.polygon.intersects(w) for w in walls)


def test_impossible_placement_is_counted_not_hidden():
    spec = LabelSpec("E", "a rather long label that cannot fit", ((1, 1), (3, 1)))
    (p,) = place_labels([spec], bounds=(0, 0, 4, 2))
    assert p.collisions >= 1


def test_first_label_gets_the_preferred_place():
    route = ((0, 50), (100, 50))
    a, b = place_labels([LabelSpec("first", "X" * 10, route), LabelSpec("second", "X" * 10, route)],
                        bounds=(0, 0, 200, 200))
    assert a.cx == pytest.approx(50.0) and a.cy < 50
    assert count_overlaps([a.polygon, b.polygon]) == 0


def test_count_overlaps():
    a, b, c = box(0, 0, 2, 2), box(1, 1, 3, 3), box(2, 0, 4, 1)   # c touches a only at an edge
    assert count_overlaps([a, b]) == 1
    assert count_overlaps([a, c]) == 0
    assert count_overlaps([a], obstacles=[b, c]) == 1


# --- label budget for dense sheets -------------------------------------------

def test_budget_spent_leaves_the_remaining_labels_out():
    route = ((0, 50), (100, 50))
    specs = [LabelSpec("first", "X" * 10, route), LabelSpec("second", "X" * 10, route)]
    # hand-worked: one 100 mm segment, box ~19 mm wide < 100 mm, so the first font
    # tries 7 positions along x 2 sides = 14 boxes, and the first of them is free
    (a,) = place_labels(specs, bounds=(0, 0, 200, 200), budget=14)
    assert a.key == "first" and a.leader is None and a.collisions == 0
    assert place_labels(specs, bounds=(0, 0, 200, 200), budget=0) == []
    # a budget that is not spent changes nothing
    assert place_labels(specs, bounds=(0, 0, 200, 200), budget=10_000) == \
        place_labels(specs, bounds=(0, 0, 200, 200))


def test_with_a_budget_a_label_with_no_place_is_left_out_not_overlapped():
    spec = LabelSpec("E", "a rather long label that cannot fit", ((1, 1), (3, 1)))
    assert place_labels([spec], bounds=(0, 0, 4, 2), budget=10_000) == []
    assert place_labels([spec], bounds=(0, 0, 4, 2), leader_cap=10_000) == []


def test_leader_cap_bounds_the_leader_search():
    route = ((50, 50), (60, 50))
    walls = [box(0, 40, 100, 49), box(0, 51, 100, 60)]
    spec = LabelSpec("D", "CU1/4 · 3.0 m · Zs 0.40/1.36 Ω", route)
    free = place_labels([spec], obstacles=walls, bounds=(0, 0, 200, 200))
    capped = place_labels([spec], obstacles=walls, bounds=(0, 0, 200, 200), leader_cap=10**6)
    assert capped == free and capped[0].leader is not None
    # no candidate allowed in the leader search: the label cannot sit along the route
    assert place_labels([spec], obstacles=walls, bounds=(0, 0, 200, 200), leader_cap=0) == []

"""Routes, boards and outlets read from SVG drawings (zsplan.svgplan)."""
import math
import time
from pathlib import Path

import numpy as np
import pytest
import shapely

from zsplan.errors import PlanError
from zsplan.svgplan import DrawnOutlet, read_drawing

DATA = Path(__file__).parent / "data" / "svg"
FLAT = DATA / "flat_a3.svg"
NESTED = DATA / "flat_a3_nested.svg"
ARCS = DATA / "arcs.svg"
TOL = 0.001   # default chord tolerance [m]

# hand-worked from flat_a3.svg: 1 user unit = 1 paper mm (width 420mm / viewBox 420),
# 1:50 -> 1 unit = 50 mm = 0.05 m
#   CU1/1: (20,20) (120,20) (120,80) -> (1,1) (6,1) (6,4) m; 100 + 60 = 160 mm paper -> 8.0 m
#   3:     (20,100) (220,100) (220,140) -> (1,5) (11,5) (11,7) m; 200 + 40 = 240 mm -> 12.0 m
#   C7:    (300,20) (300,50) -> (15,1) (15,2.5) m; 30 mm -> 1.5 m
EXPECTED = {
    "CU1/1": ((1.0, 1.0), (6.0, 1.0), (6.0, 4.0)),
    "3": ((1.0, 5.0), (11.0, 5.0), (11.0, 7.0)),
    "C7": ((15.0, 1.0), (15.0, 2.5)),
}
EXPECTED_LENGTH = {"CU1/1": 8.0, "3": 12.0, "C7": 1.5}   # hand-worked (above)


def length(points) -> float:
    return shapely.LineString(points).length


def assert_routes(routes, expected=EXPECTED, abs_tol=1e-9):
    assert set(routes) == set(expected)
    for name, pts in expected.items():
        assert np.allclose(routes[name], pts, rtol=0, atol=abs_tol), (name, routes[name])


def write(tmp_path, body, attrs='width="100mm" height="100mm" viewBox="0 0 100 100"',
          name="drawing.svg"):
    f = tmp_path / name
    f.write_text('<svg xmlns="http://www.w3.org/2000/svg" '
                 'xmlns:xlink="http://www.w3.org/1999/xlink" '
                 'xmlns:inkscape="http://www.inkscape.org/namespaces/inkscape" '
                 f'{attrs}>{body}</svg>')
    return f


def only_problem(exc):
    assert len(exc.problems) == 1, exc.problems
    return exc.problems[0]


# -- scale ---------------------------------------------------------------------

def test_straight_routes_at_1_to_50():
    d = read_drawing(FLAT, scale=50.0, routes_layer="cable routes")
    assert d.metres_per_unit == pytest.approx(0.05, rel=1e-12)   # hand-worked (module note)
    assert_routes(d.routes)
    for name, metres in EXPECTED_LENGTH.items():
        assert abs(length(d.routes[name]) - metres) < 0.001      # within 1 mm
    assert d.warnings == () and d.hidden_layers == ()


def test_nested_transforms_and_viewbox_give_the_same_plan():
    # flat_a3_nested.svg: same sheet (42cm x 29.7cm) with viewBox 840 x 594, so
    # 1 unit = 0.5 paper mm = 0.025 m at 1:50 (hand-worked); routes drawn inside
    # translate/rotate/scale, matrix, translate and rotate-about-a-point groups.
    d = read_drawing(NESTED, scale=50.0, routes_layer="Cable Routes")   # id cable_routes
    assert d.metres_per_unit == pytest.approx(0.025, rel=1e-12)
    assert_routes(d.routes)


def test_calibrate_gives_the_same_plan():
    # hand-worked: (20,20) to (120,20) is 100 units; 5.0 m over them = 0.05 m per unit
    d = read_drawing(FLAT, calibrate=((20, 20), (120, 20), 5.0), routes_layer="cable routes")
    assert d.metres_per_unit == pytest.approx(0.05, rel=1e-12)
    assert_routes(d.routes)
    # hand-worked: in the nested drawing the same wall runs (40,40) to (240,40)
    d = read_drawing(NESTED, calibrate=((40, 40), (240, 40), 5.0), routes_layer="cable routes")
    assert_routes(d.routes)


def test_units_per_metre_gives_the_same_plan():
    d = read_drawing(FLAT, units_per_metre=20, routes_layer="cable routes")   # 1/20 = 0.05 m
    assert_routes(d.routes)
    d = read_drawing(NESTED, units_per_metre=40, routes_layer="cable routes")
    assert_routes(d.routes)


def test_no_scale_is_refused_with_how_to_give_one():
    with pytest.raises(PlanError) as info:
        read_drawing(FLAT, routes_layer="cable routes", plan_file="plans/flat.yaml")
    p = only_problem(info.value)
    assert p.file == "plans/flat.yaml" and p.path == "drawing"
    assert "without a real-world scale" in p.message
    for key in ("drawing.scale", "drawing.units_per_metre", "drawing.calibrate"):
        assert key in p.message


def test_two_scales_are_refused():
    with pytest.raises(PlanError, match="drawing.scale and drawing.units_per_metre"):
        read_drawing(FLAT, scale=50, units_per_metre=20, routes_layer="cable routes")


@pytest.mark.parametrize("kw, key", [
    (dict(scale=0), "drawing.scale"),
    (dict(scale=-50), "drawing.scale"),
    (dict(scale=float("nan")), "drawing.scale"),
    (dict(scale="1:0"), "drawing.scale"),
    (dict(scale=True), "drawing.scale"),
    (dict(units_per_metre=0), "drawing.units_per_metre"),
    (dict(calibrate=((1, 1), (1, 1), 3.0)), "drawing.calibrate"),
    (dict(calibrate=((0, 0), (1, 1), 0)), "drawing.calibrate"),
    (dict(calibrate=((0, 0), 3.0)), "drawing.calibrate"),
])
def test_bad_scale_values(kw, key):
    with pytest.raises(PlanError) as info:
        read_drawing(FLAT, routes_layer="cable routes", **kw)
    assert only_problem(info.value).path == key


def test_scale_may_be_given_as_a_ratio():
    d = read_drawing(FLAT, scale="1:50", routes_layer="cable routes")
    assert d.metres_per_unit == pytest.approx(0.05, rel=1e-12)   # hand-worked (module note)


def test_pixel_sized_drawing_warns(tmp_path):
    f = write(tmp_path, '<g id="routes"><line id="a" x1="0" y1="0" x2="50" y2="0"/></g>',
              attrs='width="192" height="192" viewBox="0 0 96 96"')
    d = read_drawing(f, scale=10, routes_layer="routes")
    # hand-worked: 192 px over 96 units = 2 px per unit = 2 x 25.4/96 mm (CSS Values 3);
    # 50 units = 100 px = 26.458 mm x 10 = 0.26458 m
    assert length(d.routes["a"]) == pytest.approx(100 * 25.4 / 96 * 10 / 1000, rel=1e-12)
    assert any("pixels only" in w for w in d.warnings)


def test_drawing_without_physical_size_warns_and_uses_css_px():
    d = read_drawing(DATA / "no_size.svg", scale=50, routes_layer="routes")
    # hand-worked: 96 px = 1 in = 25.4 mm paper (CSS Values 3); x 50 = 1.27 m
    assert length(d.routes["CU1/1"]) == pytest.approx(1.27, abs=1e-9)
    assert any("25.4/96" in w for w in d.warnings)
    # the other two scales do not need a physical size: no warning
    assert read_drawing(DATA / "no_size.svg", units_per_metre=96,
                        routes_layer="routes").warnings == ()


def test_size_without_viewbox_user_unit_is_px(tmp_path):
    f = write(tmp_path, '<g id="routes"><line id="a" x1="0" y1="0" x2="96" y2="0"/></g>',
              attrs='width="297mm" height="210mm"')
    d = read_drawing(f, scale=100, routes_layer="routes")
    # hand-worked: no viewBox, so a unit is 1 px = 25.4/96 mm; 96 px = 25.4 mm x 100 = 2.54 m
    assert length(d.routes["a"]) == pytest.approx(2.54, abs=1e-9)
    assert d.warnings == ()


def test_unequal_width_and_height_scales(tmp_path):
    body = '<g id="routes"><line id="a" x1="0" y1="0" x2="100" y2="0"/></g>'
    f = write(tmp_path, body, attrs='width="200mm" height="100mm" viewBox="0 0 100 100"')
    d = read_drawing(f, scale=10, routes_layer="routes")
    # hand-worked: 2 mm/unit across, 1 mm/unit down; a viewer shows the smaller:
    # 100 units x 1 mm x 10 = 1.0 m
    assert length(d.routes["a"]) == pytest.approx(1.0, abs=1e-9)
    assert any("different scales" in w for w in d.warnings)
    f = write(tmp_path, body, attrs='width="200mm" height="100mm" viewBox="0 0 100 100" '
                                    'preserveAspectRatio="none"', name="b.svg")
    with pytest.raises(PlanError, match="stretched"):
        read_drawing(f, scale=10, routes_layer="routes")


def test_viewbox_offset_keeps_user_space_and_warns(tmp_path):
    f = write(tmp_path, '<g id="routes"><line id="a" x1="100" y1="50" x2="100" y2="70"/></g>',
              attrs='width="100mm" height="100mm" viewBox="100 50 100 100"')
    d = read_drawing(f, units_per_metre=10, routes_layer="routes")
    # hand-worked: plan = user units / 10
    assert_routes(d.routes, {"a": ((10.0, 5.0), (10.0, 7.0))})
    assert any("viewBox starts at (100, 50)" in w for w in d.warnings)


# -- curves --------------------------------------------------------------------

def chord_error(points, curve) -> float:
    """Largest distance from dense samples of the curve to the polyline."""
    return float(shapely.distance(shapely.LineString(points), shapely.points(curve)).max())


def test_arc_is_flattened_within_tolerance_and_below_the_arc():
    d = read_drawing(ARCS, units_per_metre=100, routes_layer="routes")
    pts = np.array(d.routes["arc"])
    # hand-worked: radius 500 units / 100 = 5 m, a quarter circle: 2 pi r / 4
    analytic = 2 * math.pi * 5.0 / 4
    got = length(pts)
    assert analytic - TOL < got < analytic
    # every vertex on the circle, centre (500, 600) units = (5, 6) m (hand-worked)
    r = np.hypot(pts[:, 0] - 5.0, pts[:, 1] - 6.0)
    assert np.allclose(r, 5.0, rtol=0, atol=1e-9)
    t = np.linspace(math.pi, 1.5 * math.pi, 20001)
    circle = np.column_stack([5 + 5 * np.cos(t), 6 + 5 * np.sin(t)])
    assert chord_error(pts, circle) <= TOL
    # the same arc drawn at a third of the size inside rotate(30) scale(3)
    assert length(d.routes["arc-scaled"]) == pytest.approx(got, abs=1e-9)


def test_cubic_quarter_circle_is_flattened_within_tolerance_and_below_the_arc():
    d = read_drawing(ARCS, units_per_metre=100, routes_layer="routes")
    # hand-worked: radius 25 units = 0.25 m, a quarter circle: 2 pi r / 4.
    # The k = 4/3 (sqrt 2 - 1) cubic runs at most 0.03 % of r outside the circle
    # (from memory), i.e. 0.07 mm here, far inside the 1 mm tolerance.
    analytic = 2 * math.pi * 0.25 / 4
    got = length(d.routes["cubic"])
    assert analytic - TOL < got < analytic


def test_quadratic_vertices_lie_on_the_curve():
    d = read_drawing(ARCS, units_per_metre=100, routes_layer="routes")
    pts = np.array(d.routes["quad"]) * 100        # back to drawing units
    # hand-worked: Q from (0,750) via (100,650) to (200,750): x = 200 t, so
    # y(t) = 750 (1-t)^2 + 1300 t (1-t) + 750 t^2
    t = pts[:, 0] / 200
    assert np.allclose(pts[:, 1], 750 * (1 - t) ** 2 + 1300 * t * (1 - t) + 750 * t ** 2,
                       rtol=0, atol=1e-9)
    s = np.linspace(0, 1, 20001)
    curve = np.column_stack([200 * s, 750 * (1 - s) ** 2 + 1300 * s * (1 - s) + 750 * s ** 2])
    assert chord_error(pts / 100, curve / 100) <= TOL


def test_ellipse_from_stretched_circle():
    d = read_drawing(ARCS, units_per_metre=100, routes_layer="routes")
    pts = np.array(d.routes["ellipse"])
    # hand-worked: circle centre (150,700) r 50 under scale(2,1): ellipse centre
    # (300,700), semi-axes 100 and 50 units = 1 m and 0.5 m, from angle pi to 3pi/2
    t = np.linspace(math.pi, 1.5 * math.pi, 200001)
    ellipse = np.column_stack([3 + np.cos(t), 7 + 0.5 * np.sin(t)])
    reference = length(ellipse)   # numerical reference: 200 000-chord polyline (error < 1e-9 m)
    got = length(pts)
    assert reference - TOL < got < reference
    on = ((pts[:, 0] - 3) / 1.0) ** 2 + ((pts[:, 1] - 7) / 0.5) ** 2
    assert np.allclose(on, 1.0, rtol=0, atol=1e-9)
    assert chord_error(pts, ellipse) <= TOL


def test_finer_tolerance_converges_on_the_arc():
    d = read_drawing(ARCS, units_per_metre=100, routes_layer="routes", chord_tolerance_m=1e-6)
    analytic = 2 * math.pi * 5.0 / 4          # hand-worked, as above
    assert analytic - 1e-6 < length(d.routes["arc"]) < analytic


def test_skewed_arc_stays_on_its_curve(tmp_path):
    f = write(tmp_path, '<g id="routes"><g transform="translate(10 20) skewX(30)">'
                        '<path id="a" d="M 0 0 A 40 40 0 0 1 80 0"/></g></g>')
    d = read_drawing(f, units_per_metre=1000, routes_layer="routes",
                     chord_tolerance_m=1e-4)
    pts = np.array(d.routes["a"]) * 1000
    # hand-worked: local circle centre (40, 0), r 40, upper half (y <= 0) from
    # (0,0) to (80,0); the group maps (x, y) -> (x + tan30 y + 10, y + 20)
    k = math.tan(math.radians(30))
    local = np.column_stack([pts[:, 0] - 10 - k * (pts[:, 1] - 20), pts[:, 1] - 20])
    assert np.allclose(np.hypot(local[:, 0] - 40, local[:, 1]), 40, rtol=0, atol=1e-9)
    t = np.linspace(math.pi, 2 * math.pi, 20001)
    lc = np.column_stack([40 + 40 * np.cos(t), 40 * np.sin(t)])
    curve = np.column_stack([lc[:, 0] + k * lc[:, 1] + 10, lc[:, 1] + 20])
    assert chord_error(pts / 1000, curve / 1000) <= 1e-4


# -- layers, names and errors --------------------------------------------------

def test_hidden_layer_is_read_with_a_warning():
    d = read_drawing(DATA / "hidden_layer.svg", scale=50, routes_layer="cable routes")
    # hand-worked: (10,10)-(10,50) mm at 1:50 -> (0.5,0.5)-(0.5,2.5) m
    assert_routes(d.routes, {"CU1/2": ((0.5, 0.5), (0.5, 2.5))})
    assert d.hidden_layers == ("Cable Routes",)
    assert any("'Cable Routes' is hidden" in w and "CU1/2" in w for w in d.warnings)
    assert any("visibility:hidden" in w for w in d.warnings)   # a hidden outlet marker
    assert len(d.outlets) == 1


def test_duplicate_circuit_names_name_both_elements():
    with pytest.raises(PlanError) as info:
        read_drawing(DATA / "duplicate_routes.svg", scale=50, routes_layer="routes")
    p = only_problem(info.value)
    assert 'id="first"' in p.message and 'id="second"' in p.message
    assert "(line 6)" in p.message and "(line 7)" in p.message and p.line == 7


def test_bad_routes_are_all_reported():
    path = DATA / "bad_routes.svg"
    with pytest.raises(PlanError) as info:
        read_drawing(path, scale=50, routes_layer="routes")
    probs = info.value.problems
    assert [p.line for p in probs] == [4, 5, 6]
    assert all(p.file == str(path) for p in probs)
    assert "no name" in probs[0].message and "data-circuit" in probs[0].message
    assert probs[1].path == '<path id="two-parts">' and "2 separate parts" in probs[1].message
    assert probs[2].path == '<path id="no-length">' and "no length" in probs[2].message


@pytest.mark.parametrize("d, what", [
    ("L 5 5 L 10 10", "move-to"),
    ("M 0 0 L 10 x", "cannot be read"),
    ("", "no path data"),
])
def test_unreadable_path_data(tmp_path, d, what):
    f = write(tmp_path, f'<g id="routes"><path id="r" d="{d}"/></g>')
    with pytest.raises(PlanError, match=what) as info:
        read_drawing(f, scale=50, routes_layer="routes")
    assert only_problem(info.value).path == '<path id="r">'


def test_missing_routes_layer_lists_the_layers():
    with pytest.raises(PlanError) as info:
        read_drawing(FLAT, scale=50, routes_layer="wiring")
    p = only_problem(info.value)
    assert p.path == "drawing.routes_layer"
    assert "'wiring'" in p.message and "'floor plan'" in p.message and "'cable routes'" in p.message


def test_route_naming_order(tmp_path):
    f = write(tmp_path, '<g inkscape:label="routes">'
                        '<line id="i1" inkscape:label="L1" data-circuit="D1" x1="0" y1="0" x2="1" y2="0"/>'
                        '<line id="i2" inkscape:label="L2" x1="0" y1="0" x2="2" y2="0"/>'
                        '<line id="i3" x1="0" y1="0" x2="3" y2="0"/>'
                        '<rect id="box" width="5" height="5"/>'
                        '<text x="1" y="1">note</text></g>')
    d = read_drawing(f, units_per_metre=1, routes_layer="ROUTES ")
    assert set(d.routes) == {"D1", "L2", "i3"}
    assert [w for w in d.warnings if "ignored" in w and 'id="box"' in w]
    assert len(d.warnings) == 1                       # text is ignored silently


def test_routes_layer_none_reads_only_markers():
    d = read_drawing(FLAT, scale=50)
    assert d.routes == {}
    assert set(d.boards) == {"CU1", "DB2"}


def test_unsafe_drawing_is_refused_through_read_drawing():
    t0 = time.perf_counter()
    with pytest.raises(PlanError, match="entity"):
        read_drawing(DATA / "billion_laughs.svg", scale=50, routes_layer="routes")
    assert time.perf_counter() - t0 < 2.0


def test_reading_does_not_touch_the_file():
    before = FLAT.read_bytes()
    read_drawing(FLAT, scale=50, routes_layer="cable routes")
    assert FLAT.read_bytes() == before


def test_large_floor_plan_reads_quickly(tmp_path):
    walls = "".join(f'<path d="M {i % 500} 0 L {i % 500} 90 C 1 2 3 4 5 6"/>'
                    for i in range(5000))
    f = write(tmp_path, f'<g id="plan">{walls}</g><g id="routes">'
                        '<line id="a" x1="0" y1="0" x2="10" y2="0"/></g>')
    t0 = time.perf_counter()
    d = read_drawing(f, units_per_metre=1, routes_layer="routes")
    assert time.perf_counter() - t0 < 2.0
    assert length(d.routes["a"]) == 10.0            # hand-worked


# -- boards and outlets --------------------------------------------------------

def test_boards_and_outlets_from_markers():
    d = read_drawing(FLAT, scale=50, routes_layer="cable routes")
    # hand-worked (1 unit = 0.05 m):
    #   CU1: circle centre (20,20) -> (1, 1); DB2: rect -10..+10 x -3..+3 about
    #   translate(380,250) -> centre (380,250) -> (19, 12.5)
    assert d.boards == {"CU1": pytest.approx((1.0, 1.0)), "DB2": pytest.approx((19.0, 12.5))}
    #   S1: circle (70,20) -> (3.5, 1); S2: rect 118..122 x 78..82 -> (120,80) -> (6, 4);
    #   light: clone of a symbol centred on its origin, placed at (220,140) -> (11, 7);
    #   2400 mm -> 2.4 m
    assert d.outlets == (
        DrawnOutlet("CU1/1", pytest.approx((3.5, 1.0)), "S1", "socket", pytest.approx(0.45)),
        DrawnOutlet("CU1/1", pytest.approx((6.0, 4.0)), "S2", "", None),
        DrawnOutlet("3", pytest.approx((11.0, 7.0)), "", "light", pytest.approx(2.4)),
    )


def test_marker_positions_follow_transforms(tmp_path):
    f = write(tmp_path, '<g inkscape:label="boards" transform="translate(10 0)">'
                        '<g inkscape:groupmode="layer" inkscape:label="ground floor">'
                        '<rect data-board="CU1" x="0" y="0" width="20" height="10" '
                        'transform="rotate(90)"/>'
                        '<circle cx="5" cy="5" r="1"/></g></g>')
    d = read_drawing(f, units_per_metre=10, routes_layer=None)
    # hand-worked: rect centre (10,5) rotated 90 deg -> (-5,10), + (10,0) -> (5,10) units
    # -> (0.5, 1.0) m; the sublayer's label is not a board; the unnamed circle warns
    assert d.boards == {"CU1": pytest.approx((0.5, 1.0))}
    assert any("no data-board" in w for w in d.warnings)


def test_outlet_marker_errors_are_collected(tmp_path):
    f = write(tmp_path, '<g id="outlets">'
                        '<circle id="o1" data-circuit="CU1/1" data-kind="heater" cx="1" cy="1" r="1"/>'
                        '<circle id="o2" data-circuit="CU1/1" data-height="tall" cx="1" cy="1" r="1"/>'
                        '<circle id="o3" data-circuit="CU1/1" data-height="-1 m" cx="1" cy="1" r="1"/>'
                        '<circle id="o4" inkscape:label="CU1/2 : S9" cx="4" cy="2" r="1"/>'
                        '</g>')
    with pytest.raises(PlanError) as info:
        read_drawing(f, units_per_metre=1)
    probs = info.value.problems
    assert [p.path for p in probs] == ['<circle id="o1">', '<circle id="o2">', '<circle id="o3">']
    assert "socket, light, switch, spur, fixed" in probs[0].message
    assert "expected a length" in probs[1].message
    assert "0 or more" in probs[2].message


def test_outlet_label_form(tmp_path):
    f = write(tmp_path, '<g id="outlets">'
                        '<circle inkscape:label="CU1/2 : S9" cx="4" cy="2" r="1"/>'
                        '<circle inkscape:label="7" data-name="hall" cx="0" cy="0" r="1"/></g>')
    d = read_drawing(f, units_per_metre=1)
    # hand-worked: 1 unit = 1 m, so the centres (4,2) and (0,0) are the plan positions
    assert d.outlets == (DrawnOutlet("CU1/2", (4.0, 2.0), "S9", "", None),
                         DrawnOutlet("7", (0.0, 0.0), "hall", "", None))


def test_duplicate_board_markers(tmp_path):
    f = write(tmp_path, '<g id="boards"><circle id="b1" data-board="CU1" cx="1" cy="1" r="1"/>'
                        '<circle id="b2" inkscape:label="CU1" cx="5" cy="1" r="1"/></g>')
    with pytest.raises(PlanError, match='two board markers are named \'CU1\'.*id="b1".*id="b2"'):
        read_drawing(f, units_per_metre=1)


def test_same_layer_for_two_roles_is_refused():
    with pytest.raises(PlanError, match="used for both"):
        read_drawing(FLAT, scale=50, routes_layer="Outlets")


def test_percentages_resolve_against_the_viewbox(tmp_path):
    f = write(tmp_path, '<g id="routes"><line id="a" x1="0" y1="0" x2="50%" y2="0"/></g>',
              attrs='width="400mm" height="200mm" viewBox="0 0 200 100"')
    d = read_drawing(f, units_per_metre=1, routes_layer="routes")
    # hand-worked: SVG 1.1 7.10, x percentages are of the viewport width in user
    # units, 200 (the viewBox), so x2 = 100
    assert_routes(d.routes, {"a": ((0.0, 0.0), (100.0, 0.0))})


def test_layer_hidden_by_a_style_sheet_class_is_noticed(tmp_path):
    f = write(tmp_path, '<style>.off { display: none }</style>'
                        '<g id="routes" class="off"><line id="a" x1="0" y1="0" x2="5" y2="0"/></g>')
    d = read_drawing(f, units_per_metre=1, routes_layer="routes")
    assert d.hidden_layers == ("routes",)
    assert length(d.routes["a"]) == 5.0              # hand-worked


@pytest.mark.parametrize("d, tol, what", [
    ("M 0 0 C 0 1e12 1e12 1e12 1e12 0", 0.001, "more than 1,048,576 chords"),
    # hand-worked: r = 1000 m, 1 nm: dt = 2 acos(1 - 1e-12) = 2.8e-6 rad, pi / dt = 1.1e6 chords
    ("M 0 0 A 1000 1000 0 0 1 2000 0", 1e-9, "more than 1,048,576 chords"),
    ("M 0 0 L 1e400 0", 0.001, "not a finite number"),
])
def test_absurd_geometry_is_refused_quickly(tmp_path, d, tol, what):
    f = write(tmp_path, f'<g id="routes"><path id="r" d="{d}"/></g>')
    t0 = time.perf_counter()
    with pytest.raises(PlanError, match=what):
        read_drawing(f, units_per_metre=1, routes_layer="routes", chord_tolerance_m=tol)
    assert time.perf_counter() - t0 < 5.0

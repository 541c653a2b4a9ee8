"""Routes to cable lengths: hand-worked geometry and properties.

Every expected length is worked by hand in the comment beside it, from the
plan-file contract's definition: board drop + distance along the route +
2 x the drops of outlets passed + the point's own drop, x (1 + allowance),
+ extra.  Plans are invented and built directly from the model dataclasses.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from hypothesis import assume, given, settings, strategies as st

from zsplan.errors import PlanError
from zsplan.geometry import circuit_lengths, drop_m, route_lengths
from zsplan.model import Board, Cable, Circuit, Device, Outlet, Plan, Supply, Where

DEVICE = Device(type="mcb", family="mcb", rating_a=32, curve="B")
CABLE = Cable(line_mm2=2.5, cpc_mm2=1.5)


def board(ref="CU1", at=(0.0, 0.0), height_m=1.6):
    return Board(ref=ref, at=at, height_m=height_m)


def circuit(route, outlets=(), ref="1", board="CU1", **kw):
    kw.setdefault("where", Where(file="test-plan.yaml", path=f"circuits[{ref}]", line=10))
    return Circuit(ref=ref, board=board, device=DEVICE, cable=CABLE,
                   route=None if route is None else tuple(map(tuple, route)),
                   outlets=tuple(outlets), **kw)


def plan(*circuits, boards=None):
    return Plan(path="test-plan.yaml", supply=Supply(ze_ohm=0.35),
                boards=tuple(boards or (board(),)), circuits=tuple(circuits))


def points(cl):
    return {p.name: p for p in cl.points}


# --- drops -----------------------------------------------------------------

def test_drop_ceiling_floor_direct_scalar_and_array():
    assert drop_m("ceiling", 1.6, 2.4) == pytest.approx(0.8)   # hand-worked: 2.4-1.6
    assert drop_m("floor", 1.6, 2.4) == pytest.approx(1.6)     # hand-worked: height above floor
    assert drop_m("direct", 1.6, 2.4) == 0.0                   # hand-worked: route is whole path
    arr = drop_m(["ceiling", "floor", "direct"], [0.45, 0.45, 0.45], [2.7, 2.7, 2.7])
    # hand-worked: 2.7-0.45=2.25; 0.45; 0
    np.testing.assert_allclose(arr, [2.25, 0.45, 0.0])


# --- radial routes -----------------------------------------------------------

def test_straight_radial_ceiling():
    c = circuit([(0, 0), (10, 0)], [Outlet(at=(10, 0), height_m=0.3, name="S1")])
    (cl,) = circuit_lengths(plan(c))
    assert cl.route_m == pytest.approx(10.0)          # hand-worked: 10-0
    # hand-worked: 2.4-1.6=0.8 board drop + 10 along + 2.4-0.3=2.1 own drop = 12.9
    assert cl.worst_m == pytest.approx(12.9)
    assert cl.total_m == pytest.approx(12.9)
    assert cl.worst_point == "S1"
    assert [p.name for p in cl.points] == ["S1"]      # outlet at the end: no separate end point
    assert cl.points[0].drop_m == pytest.approx(2.1)  # hand-worked: 2.4-0.3
    assert cl.points[0].ring_fraction is None


def test_l_shaped_route_with_allowance_and_extra():
    # the contract's example circuit: board at (0.5, 1.0), height 1.6, ceiling 2.4
    c = circuit([(0.5, 1.0), (0.5, 3.2), (5.4, 3.2)],
                [Outlet(at=(2.1, 3.2), height_m=0.45, name="S1"),
                 Outlet(at=(5.4, 3.2), height_m=1.10, name="S2")],
                allowance=0.15, extra_m=1.0)
    (cl,) = circuit_lengths(plan(c, boards=[board(at=(0.5, 1.0))]))
    p = points(cl)
    assert cl.route_m == pytest.approx(7.1)            # hand-worked: 3.2-1.0=2.2 + 5.4-0.5=4.9
    assert p["S1"].along_m == pytest.approx(3.8)       # hand-worked: 2.2 + 2.1-0.5=1.6
    assert p["S2"].along_m == pytest.approx(7.1)       # hand-worked: whole route
    # hand-worked: (0.8 board drop + 3.8 + 2.4-0.45=1.95) = 6.55; x1.15 = 7.5325; +1 = 8.5325
    assert p["S1"].cable_m == pytest.approx(8.5325)
    # hand-worked: (0.8 + 7.1 + 2x1.95 passed S1 + 2.4-1.1=1.3) = 13.1; x1.15 = 15.065; +1 = 16.065
    assert p["S2"].cable_m == pytest.approx(16.065)
    assert cl.worst_point == "S2" and cl.worst_m == pytest.approx(16.065)


def test_rectangular_floor_run_orders_outlets_along_route_and_adds_end():
    # floor run; board at (0,0) 1.2 m high; U-shaped route (0,0)-(4,0)-(4,3)-(0,3)
    outlets = [Outlet(at=(2, 3), height_m=0.3, name="A"),      # listed first, lies farther
               Outlet(at=(4, 1.5), height_m=0.3, name="B")]
    c = circuit([(0, 0), (4, 0), (4, 3), (0, 3)], outlets, run="floor")
    (cl,) = circuit_lengths(plan(c, boards=[board(height_m=1.2)]))
    assert cl.route_m == pytest.approx(11.0)                    # hand-worked: 4+3+4
    assert [p.name for p in cl.points] == ["B", "A", "end"]     # order along the route
    p = points(cl)
    assert p["B"].along_m == pytest.approx(5.5)                 # hand-worked: 4+1.5
    assert p["A"].along_m == pytest.approx(9.0)                 # hand-worked: 4+3+2
    # hand-worked: 1.2 board drop (floor run) + 5.5 + 0.3 own drop = 7.0
    assert p["B"].cable_m == pytest.approx(7.0)
    # hand-worked: 1.2 + 9 + 2x0.3 passed B + 0.3 = 11.1
    assert p["A"].cable_m == pytest.approx(11.1)
    # hand-worked: 1.2 + 11 + 2x0.3 (B) + 2x0.3 (A) + 0 own drop = 13.4
    assert p["end"].cable_m == pytest.approx(13.4)
    assert p["end"].drop_m == 0.0
    assert cl.worst_point == "end"
    assert cl.worst_m == pytest.approx(13.4) and cl.total_m == pytest.approx(13.4)


def test_direct_run_has_no_drops():
    c = circuit([(0, 0), (3, 4)], [Outlet(at=(3, 4), height_m=1.0, name="F1")],
                run="direct", allowance=0.10, extra_m=0.5)
    (cl,) = circuit_lengths(plan(c))
    # hand-worked: 3-4-5 triangle, 5 m, no drops; 5 x 1.1 = 5.5; + 0.5 = 6.0
    assert cl.worst_m == pytest.approx(6.0)
    assert cl.points[0].drop_m == 0.0


def test_outlet_passed_on_the_way_adds_its_drop_twice():
    near = Outlet(at=(2, 0), height_m=0.4, name="near")          # drop 2.4-0.4 = 2.0
    far = Outlet(at=(6, 0), height_m=0.4, name="far")
    (alone,) = circuit_lengths(plan(circuit([(0, 0), (6, 0)], [far])))
    (both,) = circuit_lengths(plan(circuit([(0, 0), (6, 0)], [near, far])))
    # hand-worked: 0.8 + 6 + 2.0 = 8.8 alone
    assert points(alone)["far"].cable_m == pytest.approx(8.8)
    # hand-worked: 0.8 + 6 + 2x2.0 (down to near and back up) + 2.0 = 12.8
    assert points(both)["far"].cable_m == pytest.approx(12.8)
    assert points(both)["far"].cable_m - points(alone)["far"].cable_m == pytest.approx(4.0)


def test_outlet_order_does_not_depend_on_yaml_order():
    outs = [Outlet(at=(x, 0), height_m=h, name=f"S{x}") for x, h in
            [(1, 0.3), (3, 1.1), (5, 0.45), (7, 0.3)]]
    route = [(0, 0), (8, 0)]
    (a,) = circuit_lengths(plan(circuit(route, outs)))
    (b,) = circuit_lengths(plan(circuit(route, outs[::-1])))
    (c,) = circuit_lengths(plan(circuit(route, [outs[2], outs[0], outs[3], outs[1]])))
    assert a == b == c
    assert [p.name for p in a.points] == ["S1", "S3", "S5", "S7", "end"]


def test_allowance_multiplies_and_extra_adds():
    route, outs = [(0, 0), (5, 0)], [Outlet(at=(5, 0), height_m=1.4, name="L1")]
    (plain,) = circuit_lengths(plan(circuit(route, outs)))
    (more,) = circuit_lengths(plan(circuit(route, outs, allowance=0.2, extra_m=1.5)))
    # hand-worked: 0.8 + 5 + 2.4-1.4=1.0 = 6.8
    assert plain.worst_m == pytest.approx(6.8)
    # hand-worked: 6.8 x 1.2 = 8.16; + 1.5 = 9.66
    assert more.worst_m == pytest.approx(9.66)


def test_end_point_only_when_no_outlet_lies_at_the_end():
    route = [(0, 0), (10, 0)]
    (at_end,) = circuit_lengths(plan(circuit(route, [Outlet(at=(9.8, 0), height_m=0.3, name="S")])))
    (short,) = circuit_lengths(plan(circuit(route, [Outlet(at=(9.5, 0), height_m=0.3, name="S")])))
    assert [p.name for p in at_end.points] == ["S"]     # 0.2 m from the end: within 0.3 m
    assert [p.name for p in short.points] == ["S", "end"]   # 0.5 m from the end
    # hand-worked: 0.8 + 10 + 2x2.1 passed S + 0 = 15.0
    assert short.worst_m == pytest.approx(15.0)
    assert short.worst_point == "end"


def test_radial_without_outlets_measures_to_the_end():
    (cl,) = circuit_lengths(plan(circuit([(0, 0), (0, 4), (3, 4)], [], run="floor")))
    # hand-worked: 1.6 board drop (floor) + 4 + 3 = 8.6
    assert cl.worst_m == pytest.approx(8.6)
    assert cl.worst_point == "end"


# --- rings -------------------------------------------------------------------

RING = [(0, 0), (6, 0), (6, 4), (0, 4), (0, 0)]
RING_OUTLETS = [Outlet(at=(3, 4), height_m=0.4, name="S2"),     # along 6+4+3 = 13
                Outlet(at=(6, 2), height_m=0.4, name="S1"),     # along 6+2 = 8
                Outlet(at=(0, 2), height_m=0.4, name="S3")]     # along 6+4+6+2 = 18


def test_ring_whole_length_points_and_worst():
    c = circuit(RING, RING_OUTLETS, topology="ring", allowance=0.1, extra_m=0.5)
    (cl,) = circuit_lengths(plan(c))
    assert cl.route_m == pytest.approx(20.0)          # hand-worked: 2 x (6 + 4)
    # hand-worked: ring = 2x0.8 board drops + 20 + 2x(3 x 2.0 drops) = 33.6; x1.1 = 36.96; +0.5
    assert cl.worst_m == pytest.approx(37.46)
    assert cl.total_m == pytest.approx(37.46)
    assert [p.name for p in cl.points] == ["S1", "S2", "S3"]
    p = points(cl)
    # hand-worked forward: S1 0.8+8+2.0 = 10.8; S2 0.8+13+2x2.0+2.0 = 19.8;
    #                      S3 0.8+18+2x(2.0+2.0)+2.0 = 28.8
    assert p["S1"].ring_fraction == pytest.approx(10.8 / 33.6)    # hand-worked: 0.3214
    assert p["S2"].ring_fraction == pytest.approx(19.8 / 33.6)    # hand-worked: 0.5893
    assert p["S3"].ring_fraction == pytest.approx(28.8 / 33.6)    # hand-worked: 0.8571
    # shorter way round, x1.1 + 0.5:
    # hand-worked: S1 min(10.8, 33.6-10.8=22.8) = 10.8 -> 12.38
    assert p["S1"].cable_m == pytest.approx(12.38)
    # hand-worked: S2 min(19.8, 13.8) = 13.8 -> 15.68
    assert p["S2"].cable_m == pytest.approx(15.68)
    # hand-worked: S3 back the other way: 0.8 + 2 along the left side + 2.0 own drop = 4.8 -> 5.78
    assert p["S3"].cable_m == pytest.approx(5.78)
    # nearest the middle of the ring: |0.589-0.5| < |0.321-0.5| < |0.857-0.5|
    assert cl.worst_point == "S2"


def test_ring_not_closed_is_an_error():
    c = circuit(RING[:-1], RING_OUTLETS, topology="ring")
    with pytest.raises(PlanError) as e:
        circuit_lengths(plan(c))
    msg = str(e.value)
    assert "ends 4.000 m from board 'CU1'" in msg       # hand-worked: (0,4) to (0,0)
    assert "test-plan.yaml:10" in msg


# --- errors ----------------------------------------------------------------

def test_route_not_starting_at_board_names_gap_circuit_board_file_line():
    c = circuit([(1, 0), (5, 0)], ref="7", name="Garage")
    with pytest.raises(PlanError) as e:
        circuit_lengths(plan(c))
    (prob,) = e.value.problems
    assert prob.file == "test-plan.yaml" and prob.line == 10
    assert prob.path == "circuits[7].route"
    assert "'7'" in prob.message and "Garage" in prob.message and "'CU1'" in prob.message
    assert "starts 1.000 m from board" in prob.message   # hand-worked: (1,0) to (0,0)


def test_start_gap_within_tolerance_is_accepted_and_tolerance_is_an_option():
    c = circuit([(0.2, 0), (5, 0)])
    (cl,) = circuit_lengths(plan(c))       # 0.2 m <= default 0.3 m
    assert cl.route_m == pytest.approx(4.8)   # hand-worked: 5-0.2; the gap is not added
    far = circuit([(0.5, 0), (5, 0)])
    with pytest.raises(PlanError, match="0.500 m"):
        circuit_lengths(plan(far))
    assert circuit_lengths(plan(far), tolerance_m=0.6)[0].route_m == pytest.approx(4.5)


def test_outlet_off_its_route_names_outlet_and_distance():
    c = circuit([(0, 0), (5, 0)], [Outlet(at=(2, 0.5), height_m=0.3, name="S9")])
    with pytest.raises(PlanError) as e:
        circuit_lengths(plan(c))
    (prob,) = e.value.problems
    assert "'S9'" in prob.message
    assert "0.500 m from the route" in prob.message   # hand-worked: 0.5 off the line y=0
    assert prob.path == "circuits[1].outlets[0]"


def test_heights_above_ceiling_are_errors():
    c = circuit([(0, 0), (5, 0)], [Outlet(at=(5, 0), height_m=2.6, name="High")])
    with pytest.raises(PlanError, match="'High' at height 2.6 m lies above the ceiling"):
        circuit_lengths(plan(c))
    with pytest.raises(PlanError, match="board 'CU1' at height 2.5 m lies above the ceiling"):
        circuit_lengths(plan(circuit([(0, 0), (5, 0)]), boards=[board(height_m=2.5)]))


@pytest.mark.parametrize("route, words", [
    (None, "has no route"),
    ([(0, 0)], "has 1 point(s)"),
    ([(0, 0), (0, 0)], "zero length"),
    ([(0, 0), (math.nan, 1)], "non-finite"),
    ([(0, 0), (math.inf, 1)], "non-finite"),
])
def test_unusable_routes(route, words):
    with pytest.raises(PlanError) as e:
        circuit_lengths(plan(circuit(route)))
    assert words in str(e.value)
    assert "'1'" in str(e.value)


def test_unknown_board_is_an_error():
    with pytest.raises(PlanError, match="no board 'DB9'"):
        circuit_lengths(plan(circuit([(0, 0), (1, 0)], board="DB9")))


def test_all_problems_are_reported_at_once_in_circuit_order():
    bad1 = circuit([(3, 4), (5, 0)], ref="1")                                   # gap 5 m
    good = circuit([(0, 0), (5, 0)], ref="2")
    bad3 = circuit([(0, 0), (5, 0)], [Outlet(at=(1, 2), height_m=0.3)], ref="3")  # off by 2 m
    with pytest.raises(PlanError) as e:
        circuit_lengths(plan(bad3, good, bad1))
    msgs = [p.message for p in e.value.problems]
    assert len(msgs) == 2
    assert "'3'" in msgs[0] and "2.000 m from the route" in msgs[0]   # hand-worked: y=2
    assert "'1'" in msgs[1] and "starts 5.000 m" in msgs[1]           # hand-worked: 3-4-5


# --- vectorised core ---------------------------------------------------------

def test_route_lengths():
    got = route_lengths([[(0, 0), (3, 4)],              # hand-worked: 3-4-5 triangle
                         np.array([[0, 0], [0, 2], [5, 2]]),   # hand-worked: 2+5
                         [(1, 1)], [], [(0, 0), (np.nan, 0)]])
    np.testing.assert_allclose(got[:2], [5.0, 7.0])
    assert np.isnan(got[2:]).all()


def test_many_circuits_at_once_equal_one_by_one():
    rng = np.random.default_rng(7)
    boards = [board("CU1", (0.0, 0.0)), board("DB2", (10.0, 5.0), 1.2)]
    circuits = []
    for i in range(30):
        b = boards[i % 2]
        steps = rng.uniform(-4, 4, size=(int(rng.integers(2, 6)), 2))
        pts = np.vstack([b.at, np.add(b.at, np.cumsum(steps, axis=0))])
        ring = i % 3 == 0
        if ring:
            pts = np.vstack([pts, b.at])
        line = shapely.linestrings(pts)
        outs = [Outlet(at=tuple(shapely.get_coordinates(
                    shapely.line_interpolate_point(line, f, normalized=True))[0]),
                       height_m=float(rng.uniform(0, 2.3)), name=f"o{k}")
                for k, f in enumerate(rng.uniform(0, 1, size=int(rng.integers(0, 5))))]
        circuits.append(circuit(pts, outs, ref=str(i), board=b.ref,
                                topology="ring" if ring else "radial",
                                run=["ceiling", "floor", "direct"][i % 3],
                                allowance=0.05 * (i % 4), extra_m=0.25 * (i % 5)))
    together = circuit_lengths(plan(*circuits, boards=boards))
    one_by_one = [circuit_lengths(plan(c, boards=boards))[0] for c in circuits]
    assert together == one_by_one


# --- properties --------------------------------------------------------------

steps = st.lists(st.tuples(st.floats(-10, 10), st.floats(-10, 10)), min_size=1, max_size=6)
fractions = st.lists(st.floats(0, 1), max_size=5)
heights = st.floats(0, 2.4)


def _radial(route, fracs, hs, run, allowance, extra, topology="radial"):
    line = shapely.linestrings(route)
    outs = []
    for k, f in enumerate(fracs):
        with np.errstate(divide="ignore", invalid="ignore"):
            xy = shapely.get_coordinates(
                shapely.line_interpolate_point(line, f, normalized=True))[0]
        outs.append(Outlet(at=tuple(xy), height_m=hs[k % len(hs)], name=f"o{k}"))
    return circuit(route, outs, run=run, allowance=allowance, extra_m=extra, topology=topology)


def _unambiguous(c):
    """Every outlet projects to one place: the same from either end of the route.

    Where a route runs over itself (out and back along one line, or an
    outlet at the board of a ring) an outlet lies on two legs at once and
    which leg it is taken on is a tie; the properties below are about
    length, not about breaking that tie.
    """
    line = shapely.linestrings(c.route)
    back = shapely.reverse(line)
    total = shapely.length(line)
    if not c.outlets:
        return True
    p = shapely.points([o.at for o in c.outlets])
    with np.errstate(divide="ignore", invalid="ignore"):   # 1e-300 m segments
        ends = shapely.line_locate_point(line, p) + shapely.line_locate_point(back, p)
    return bool(np.all(np.abs(ends - total) <= 1e-9))


def _no_shorter(before, after):
    # 1 nm of slack for floating-point noise (9.199999999999998 against 9.2 m)
    tol = 1e-9
    assert after.route_m >= before.route_m - tol
    assert after.worst_m >= before.worst_m - tol
    assert after.total_m >= before.total_m - tol
    new = points(after)
    for p in before.points:
        if p.name in new:
            assert new[p.name].cable_m >= p.cable_m - tol


@settings(max_examples=150, deadline=None)
@given(steps, st.tuples(st.floats(-10, 10), st.floats(-10, 10)), fractions,
       st.lists(heights, min_size=1, max_size=5), st.sampled_from(["ceiling", "floor", "direct"]),
       st.floats(0, 0.5), st.floats(0, 3))
def test_appending_a_point_never_shortens(steps_, extra_pt, fracs, hs, run, allowance, extra):
    # a physical law of the method: a longer route cannot need less cable
    route = np.vstack([(0, 0), np.cumsum(steps_, axis=0)])
    if shapely.length(shapely.linestrings(route)) < 0.01:
        return
    base = _radial(route, fracs, hs, run, allowance, extra)
    longer = circuit(np.vstack([route, route[-1] + extra_pt]), base.outlets,
                     run=run, allowance=allowance, extra_m=extra)
    assume(_unambiguous(longer))
    (a,) = circuit_lengths(plan(base))
    (b,) = circuit_lengths(plan(longer))
    _no_shorter(a, b)


@settings(max_examples=150, deadline=None)
@given(steps, fractions, st.lists(heights, min_size=1, max_size=5),
       st.sampled_from(["ceiling", "floor", "direct"]), st.floats(0, 0.5), st.floats(0, 3),
       st.booleans(), st.floats(1.01, 10))
def test_scaling_up_never_shortens(steps_, fracs, hs, run, allowance, extra, ring, k):
    route = np.vstack([(0, 0), np.cumsum(steps_, axis=0)])
    if ring:
        route = np.vstack([route, (0, 0)])
    if shapely.length(shapely.linestrings(route)) < 0.01:
        return
    topology = "ring" if ring else "radial"
    base = _radial(route, fracs, hs, run, allowance, extra, topology)
    scaled = circuit(route * k, [Outlet(at=(o.at[0] * k, o.at[1] * k), height_m=o.height_m,
                                        name=o.name) for o in base.outlets],
                     run=run, allowance=allowance, extra_m=extra, topology=topology)
    assume(_unambiguous(base) and _unambiguous(scaled))
    (a,) = circuit_lengths(plan(base))
    (b,) = circuit_lengths(plan(scaled))
    _no_shorter(a, b)

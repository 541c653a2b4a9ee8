"""Cable take-off: sums per cable type, per board and in total, rounded up.

Plans are invented and built directly from the model dataclasses; lengths are
given as CircuitLengths so that the sums can be worked by hand.
"""
from __future__ import annotations

import pytest

from zsplan.geometry import CircuitLengths, circuit_lengths
from zsplan.model import (Board, Cable, Circuit, Device, Outlet, Plan, SubMain,
                          Supply)
from zsplan.takeoff import cable_takeoff, order_metres

MCB = Device(type="mcb", family="mcb", rating_a=32, curve="B")
T_E_25 = Cable(line_mm2=2.5, cpc_mm2=1.5)
T_E_10 = Cable(line_mm2=1.0, cpc_mm2=1.0)
SUB = Cable(line_mm2=16, cpc_mm2=6)
AL_90 = Cable(line_mm2=16, cpc_mm2=16, material="aluminium", temp_rating_c=90,
              insulation="thermosetting")


def _c(ref, board, cable, route=((0.0, 0.0), (1.0, 0.0))):
    return Circuit(ref=ref, board=board, device=MCB, cable=cable, route=route)


def _len(c, total):
    return CircuitLengths(c.board, c.ref, 0.0, total, total, "end", ())


@pytest.fixture
def plan_and_lengths():
    boards = (Board("CU1", (0.0, 0.0)),
              Board("DB2", (8.0, 0.0),
                    fed_from=SubMain(board="CU1", cable=SUB, length_m=18.0, device=MCB)))
    circuits = (_c("1", "CU1", T_E_25), _c("2", "CU1", T_E_25), _c("3", "CU1", T_E_10),
                _c("1", "DB2", T_E_25), _c("2", "DB2", AL_90))
    plan = Plan("takeoff-test.yaml", Supply(ze_ohm=0.35), boards, circuits)
    totals = [12.3, 7.4, 5.0, 10.2, 3.05]
    return plan, [_len(c, t) for c, t in zip(circuits, totals)]


def _rows(rows):
    return {(r.board, r.line_mm2, r.cpc_mm2, r.material): r for r in rows}


def test_per_board_sums_round_up_and_include_sub_main(plan_and_lengths):
    plan, lengths = plan_and_lengths
    t = _rows(cable_takeoff(plan, lengths).per_board)
    assert set(t) == {("CU1", 2.5, 1.5, "copper"), ("CU1", 1.0, 1.0, "copper"),
                      ("CU1", 16, 6, "copper"), ("DB2", 2.5, 1.5, "copper"),
                      ("DB2", 16, 16, "aluminium")}
    r = t["CU1", 2.5, 1.5, "copper"]
    assert r.metres_exact == pytest.approx(19.7)   # hand-worked: 12.3 + 7.4
    assert r.metres_order == 20                    # hand-worked: ceil(19.7)
    assert r.runs == 2
    r = t["CU1", 1.0, 1.0, "copper"]
    assert (r.metres_exact, r.metres_order) == (5.0, 5)   # hand-worked: whole metres stay
    r = t["CU1", 16, 6, "copper"]                  # the sub-main, on the board that feeds DB2
    assert (r.metres_exact, r.metres_order, r.runs) == (18.0, 18, 1)
    r = t["DB2", 2.5, 1.5, "copper"]
    assert r.metres_order == 11                    # hand-worked: ceil(10.2)
    r = t["DB2", 16, 16, "aluminium"]
    assert r.metres_order == 4                     # hand-worked: ceil(3.05)
    assert (r.insulation, r.temp_rating_c) == ("thermosetting", 90)
    assert "Al" in r.cable_label and "thermosetting" in r.cable_label
    # boards in plan order
    assert [row.board for row in cable_takeoff(plan, lengths).per_board] == \
        ["CU1"] * 3 + ["DB2"] * 2


def test_totals_round_the_type_sum_not_each_board(plan_and_lengths):
    plan, lengths = plan_and_lengths
    t = _rows(cable_takeoff(plan, lengths).totals)
    r = t[None, 2.5, 1.5, "copper"]
    assert r.metres_exact == pytest.approx(29.9)   # hand-worked: 12.3 + 7.4 + 10.2
    assert r.metres_order == 30                    # hand-worked: ceil(29.9); not 20 + 11 = 31
    assert r.runs == 3
    assert t[None, 16, 6, "copper"].metres_order == 18
    assert len(t) == 4


def test_order_metres_rounds_up_without_float_noise():
    assert order_metres(12.01) == 13              # hand-worked: any part of a metre -> next metre
    assert order_metres(0.2 + 2.2 + 0.6) == 3     # hand-worked: 3.0 (float sum 3.0000000000000004)
    assert order_metres(0.0) == 0


def test_missing_lengths_are_refused(plan_and_lengths):
    plan, lengths = plan_and_lengths
    with pytest.raises(ValueError, match="no cable length"):
        cable_takeoff(plan, lengths[:-1])


def test_lengths_computed_from_routes_when_omitted():
    # ceiling 2.4, board 1.6 high: board drop 0.8; route 10 m; outlet 0.3 m high: drop 2.1
    c = Circuit(ref="1", board="CU1", device=MCB, cable=T_E_25,
                route=((0.0, 0.0), (10.0, 0.0)),
                outlets=(Outlet(at=(10.0, 0.0), height_m=0.3, name="S1"),), allowance=0.1)
    plan = Plan("takeoff-test.yaml", Supply(ze_ohm=0.35), (Board("CU1", (0.0, 0.0)),), (c,))
    (row,) = cable_takeoff(plan).totals
    # hand-worked: (0.8 + 10 + 2.1) = 12.9 x 1.1 = 14.19 -> order 15
    assert row.metres_exact == pytest.approx(14.19)
    assert row.metres_order == 15
    assert cable_takeoff(plan, circuit_lengths(plan)) == cable_takeoff(plan)

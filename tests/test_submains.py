"""Sub-mains: Ze propagated over two levels, distribution-circuit times, cumulative drop."""
import json

import pytest

from zsplan.boards import board_ze
from zsplan.check import check
from zsplan.model import Board, Cable, Circuit, Device, Plan, SubMain, Supply

# hand-worked with IEC 60228 Table 2 resistances at 20 °C and the BS 7671 1.20 factor (70 °C):
# DB1 from CU0: 16/6 mm2, 20 m: R1+R2 = 20 x (1.15 + 3.08) x 1.2 / 1000 = 0.10152 ohm
# DB2 from DB1: 10/4 mm2, 15 m: R1+R2 = 15 x (1.83 + 4.61) x 1.2 / 1000 = 0.11592 ohm
ZE0 = 0.35
ZE1 = ZE0 + 0.10152
ZE2 = ZE1 + 0.11592
# voltage drop (70 °C r only, single-phase, load at the far end):
# sub-main 1: 40 A x (2 x 1.15 x 1.2 = 2.76 mV/A/m) x 20 m / 1000 = 2.208 V = 0.96 %
# sub-main 2: 25 A x (2 x 1.83 x 1.2 = 4.392 mV/A/m) x 15 m / 1000 = 1.647 V = 0.71609 %
VD1 = 100 * 2.208 / 230
VD2 = 100 * 1.647 / 230


def plan(earthing="TN-S", sub2_device=Device("mcb", "mcb", 32, "B"), sub2_load=25.0, ze0=ZE0, rcd_a=None,
         electrode=None):
    boards = (
        Board("CU0", (0.0, 0.0), 2.4),
        Board("DB1", (20.0, 0.0), 2.4, SubMain("CU0", Cable(16.0, 6.0), 20.0, Device("fuse", "bs88-3", 63), 40.0,
                                                rcd_a=rcd_a)),
        Board("DB2", (20.0, 15.0), 2.4, SubMain("DB1", Cable(10.0, 4.0), 15.0, sub2_device, sub2_load,
                                                rcd_a=rcd_a)),
    )
    # a 10 m radial on DB2: 2.5/1.5 mm2, 10 A: 10 x 17.784 x 10 / 1000 = 1.7784 V = 0.77322 %
    c = Circuit("1", "DB2", Device("mcb", "mcb", 16, "B"), Cable(2.5, 1.5), use="sockets", load_a=10.0,
                rcd_a=0.03 if earthing == "TT" else None, run="direct", route=((20.0, 15.0), (30.0, 15.0)))
    return Plan("mem.yaml", Supply(ze_ohm=ze0, earthing=earthing, electrode_ohm=electrode), boards, (c,))


def test_ze_propagates_over_two_levels():
    ze = board_ze(plan())
    assert ze["CU0"] == ZE0
    assert ze["DB1"] == pytest.approx(ZE1, rel=1e-12)
    assert ze["DB2"] == pytest.approx(ZE2, rel=1e-12)


def test_sub_board_ze_equals_upstream_zs_at_the_submain_end():
    r = check(plan())
    s = r.submains
    assert s["boards"] == ["DB1", "DB2"]
    # the Zs at each sub-main's far end is the sub-board's Ze
    assert s["zs_ohm"].tolist() == pytest.approx([ZE1, ZE2], rel=1e-12)
    assert s["board_ze_ohm"].tolist() == pytest.approx([ZE0, ZE1], rel=1e-12)
    # the circuit on DB2 starts from DB2's Ze: Zs = Ze2 + 10 x 19.51 x 1.2 / 1000
    assert r.circuits["zs_ohm"][0] == pytest.approx(ZE2 + 10 * 19.51 * 1.2 / 1000, rel=1e-9)


def test_submains_are_distribution_circuits():
    # BS 7671:2018 Regulations 411.3.2.3 (TN: 5 s) and 411.3.2.4 (TT: 1 s)
    assert check(plan("TN-C-S")).submains["disconnect_limit_s"].tolist() == [5.0, 5.0]
    assert check(plan("TT")).submains["disconnect_limit_s"].tolist() == [1.0, 1.0]


def test_voltage_drop_accumulates():
    r = check(plan())
    s = r.submains
    assert s["own_vdrop_pct"].tolist() == pytest.approx([VD1, VD2], rel=1e-9)
    assert s["vdrop_pct"].tolist() == pytest.approx([VD1, VD1 + VD2], rel=1e-9)
    assert s["board_vdrop_pct"] == pytest.approx({"CU0": 0.0, "DB1": VD1, "DB2": VD1 + VD2})
    own = 100 * 10 * (2 * 7.41 * 1.2) * 10 / 1000 / 230
    assert r.circuits["board_vdrop_pct"][0] == pytest.approx(VD1 + VD2)
    assert r.circuits["vdrop_pct"][0] == pytest.approx(VD1 + VD2 + own, rel=1e-9)


def test_json_carries_submains():
    doc = check(plan()).to_dict()
    json.dumps(doc)                                  # serialisable
    subs = doc["submains"]
    assert [s["board"] for s in subs] == ["DB1", "DB2"]
    assert subs[1]["fed_from"] == "DB1"
    assert set(subs[0]["checks"]) == {"disconnection", "vdrop", "adiabatic", "capacity"}
    assert subs[1]["ze_ohm"] >= ZE1                  # rounded up, never down
    assert subs[1]["vdrop_pct"] >= VD1 + VD2
    assert doc["summary"] == {"pass": 1, "tight": 0, "fail": 0}


def test_failing_submain_fails_the_run():
    # a 32 A device on a sub-main with a 40 A load: Ib > In
    r = check(plan(sub2_load=40.0))
    assert r.submains["checks"][1]["capacity"] == "fail"
    assert r.submains["status"][1] == "fail"
    assert r.any_fail
    # the circuit on DB2 is told, though its own checks pass
    assert any("sub-main feeding board 'DB2'" in m for m in r.messages[0])
    assert r.status[0] == "pass"


def test_submain_without_load_uses_rating():
    r = check(plan(sub2_load=None))
    assert r.submains["ib_a"][1] == 32.0
    assert any("Ib = In = 32 A" in m for m in r.submains["messages"][1])


def test_plan_without_submains():
    p = plan()
    flat = Plan(p.path, p.supply, (Board("CU0", (0.0, 0.0), 2.4),),
                (Circuit("1", "CU0", Device("mcb", "mcb", 16, "B"), Cable(2.5, 1.5), load_a=10.0, run="direct",
                         route=((0.0, 0.0), (5.0, 0.0))),))
    r = check(flat)
    assert r.submains["boards"] == [] and r.to_dict()["submains"] == []
    assert r.circuits["board_vdrop_pct"][0] == 0.0
    assert not r.any_fail


def test_tt_submain_needs_its_own_rcd():
    # TT, Ze 64 ohm: the sub-mains' own devices cannot disconnect within 1 s (Regulation 411.3.2.4)
    bare = check(plan("TT", ze0=64.0, electrode=63.0))
    assert [c["disconnection"] for c in bare.submains["checks"]] == ["fail", "fail"]
    # a 100 mA time-delayed RCD ahead of each: Zs <= 50 / 0.1 = 500 ohm (BS 7671:2018 Table 41.5);
    # If = 218.5 / 64.1 = 3.4 A >= 5 x 0.1 A: type S operates within 0.15 s (BS EN 61008-1 Table 1) <= 1 s;
    # RA x IΔn = 63 x 0.1 = 6.3 V <= 50 V (Regulation 411.5.3)
    r = check(plan("TT", ze0=64.0, electrode=63.0, rcd_a=0.1))
    s = r.submains
    assert s["disconnection_by"].tolist() == ["rcd", "rcd"]
    assert s["zs_max_ohm"].tolist() == pytest.approx([500.0, 500.0])
    assert s["disconnect_s"].tolist() == [0.15, 0.15]
    assert s["rcd_touch_v"].tolist() == pytest.approx([6.3, 6.3])
    assert [c["disconnection"] for c in s["checks"]] == ["pass", "pass"]
    assert [c["rcd"] for c in s["checks"]] == ["pass", "pass"]
    assert r.to_dict()["submains"][0]["disconnection_by"] == "rcd"

"""RCDs and TT: 50 V / IΔn limits, break times, which device decides."""
import doctest

import numpy as np
import pytest

from conftest import round_half_up
from zsplan import rcd
from zsplan.check import check
from zsplan.model import Board, Cable, Circuit, Device, Plan, Supply


@pytest.mark.parametrize("idn, tabulated", [
    (0.03, 1667),    # BS 7671:2018 Table 41.5 and Regulation 411.5.3: RA max 1667 ohm at 30 mA
    (0.1, 500),      # BS 7671:2018 Table 41.5: 500 ohm at 100 mA
    (0.3, 167),      # BS 7671:2018 Table 41.5: 167 ohm at 300 mA (derived, 50/0.3)
    (0.5, 100),      # BS 7671:2018 Table 41.5: 100 ohm at 500 mA (derived, 50/0.5)
])
def test_max_resistance_table_41_5(idn, tabulated):
    assert round_half_up(rcd.max_resistance(idn), 0) == tabulated
    # RA x IΔn = 50 V exactly at the unrounded limit (Regulation 411.5.3)
    assert rcd.touch_voltage(rcd.max_resistance(idn), idn) == pytest.approx(50.0)


def test_unrounded_limit_is_compared():
    # 50 / 0.3 = 166.67 ohm: a 167 ohm electrode fails though the table prints 167
    assert rcd.touch_voltage(167.0, 0.3) > rcd.TOUCH_VOLTAGE_V


def test_break_times():
    # BS EN 61008-1 / BS EN 61009-1 Table 1, general type: 0.3 s at IΔn, 0.15 s at 2 IΔn, 0.04 s at 5 IΔn
    t = rcd.operating_time([0.029, 0.03, 0.059, 0.06, 0.149, 0.15, 10.0], 0.03)
    assert t.tolist() == [np.inf, 0.3, 0.3, 0.15, 0.15, 0.04, 0.04]
    # time-delayed type S: 0.5 s, 0.2 s, 0.15 s (same Table 1)
    assert rcd.operating_time([0.1, 0.2, 0.5], 0.1, "selective").tolist() == [0.5, 0.2, 0.15]


def test_current_for_time_round_trip():
    for t in (0.04, 0.15, 0.2, 0.3, 0.4, 5.0):
        ia = rcd.current_for_time(0.03, t)
        assert rcd.operating_time(ia, 0.03) <= t
    assert rcd.current_for_time(0.03, 0.2) == pytest.approx(0.06)   # 2 IΔn within TT's 0.2 s
    assert rcd.current_for_time(0.03, 0.01) == np.inf


def test_table_41_5_limit_meets_tt_time():
    # at Zs = 50/IΔn the fault current 218.5 V / Zs is 4.37 IΔn: the RCD operates within 0.15 s,
    # inside the 0.2 s of BS 7671:2018 Table 41.1 (TT, 230 V)
    i = 218.5 / rcd.max_resistance(0.03)
    assert i / 0.03 == pytest.approx(4.37)
    assert rcd.operating_time(i, 0.03) <= 0.2


def test_doctests():
    assert doctest.testmod(rcd).failed == 0


# -- through check() -------------------------------------------------------------

def _plan(earthing="TT", ze=21.0, electrode=None, rcd_a=0.03, flag=None):
    c = Circuit("1", "CU1", Device("mcb", "mcb", 20, "B"), Cable(2.5, 1.5), use="sockets", load_a=16.0,
                rcd_a=rcd_a, rcd_fault_protection=flag, run="direct", route=((0.0, 0.0), (20.0, 0.0)))
    return Plan("mem.yaml", Supply(ze_ohm=ze, earthing=earthing, electrode_ohm=electrode),
                (Board("CU1", (0.0, 0.0), 2.4),), (c,))


def test_tt_with_rcd_passes_by_rcd():
    # TT, Ze 21 ohm (typical declared value, one published source): the B20 alone needs
    # Zs <= 2.19 ohm (BS 7671:2018 Table 41.3) and fails, the 30 mA RCD decides
    r = check(_plan(electrode=200.0))
    assert r.checks[0] == {"disconnection": "pass", "vdrop": "pass", "adiabatic": "pass",
                           "capacity": "pass", "rcd": "pass"}
    a = r.circuits
    assert a["disconnection_by"][0] == "rcd"
    assert a["zs_max_ohm"][0] == pytest.approx(50 / 0.03)          # BS 7671:2018 Table 41.5
    assert a["disconnect_limit_s"][0] == 0.2                        # BS 7671:2018 Table 41.1, TT
    assert a["disconnect_s"][0] == 0.04                             # If = 218.5/21.47 A >= 5 x 30 mA
    assert a["rcd_touch_v"][0] == pytest.approx(200 * 0.03)         # RA x IΔn = 6 V
    assert r.status[0] == "pass"
    assert r.to_dict()["circuits"][0]["disconnection_by"] == "rcd"
    # the points follow the deciding device
    assert r.points["zs_max_ohm"][0] == pytest.approx(50 / 0.03)


def test_tt_electrode_too_high_fails_rcd_check():
    # RA = 2000 ohm: RA x IΔn = 60 V > 50 V (BS 7671:2018 Regulation 411.5.3)
    r = check(_plan(ze=2000.0, electrode=2000.0))
    assert r.checks[0]["rcd"] == "fail"
    assert r.status[0] == "fail"
    assert any("RA x IΔn" in m for m in r.messages[0])


def test_tt_without_electrode_bounds_ra_by_ze():
    r = check(_plan(ze=21.0, electrode=None))
    assert r.circuits["rcd_touch_v"][0] == pytest.approx(21.0 * 0.03)


def test_tt_without_rcd_uses_overcurrent_device_and_fails():
    r = check(_plan(rcd_a=None))
    assert r.circuits["disconnection_by"][0] == "device"
    assert r.checks[0]["disconnection"] == "fail"
    assert "rcd" not in r.checks[0]


def test_tn_rcd_is_additional_unless_flagged():
    tn = check(_plan("TN-C-S", ze=0.35))
    assert tn.circuits["disconnection_by"][0] == "device"
    assert tn.circuits["zs_max_ohm"][0] == pytest.approx(218.5 / 100)   # BS 7671:2018 Table 41.3, B20
    flagged = check(_plan("TN-C-S", ze=0.35, flag=True))
    assert flagged.circuits["disconnection_by"][0] == "rcd"
    # Regulation 411.4.5: Zs x IΔn <= 50 V
    assert flagged.circuits["rcd_touch_v"][0] == pytest.approx(flagged.circuits["zs_ohm"][0] * 0.03)
    assert flagged.circuits["disconnect_limit_s"][0] == 0.4

"""The earth-fault loop engine: worked examples, physical laws and properties."""
import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from zsplan import loop, protection as p
from zsplan.disconnection import required_time
from zsplan.model import Device

B32 = Device("mcb", "mcb", 32, "B")
PAIRS = [(1.0, 1.0), (1.5, 1.0), (1.5, 1.5), (2.5, 1.5), (2.5, 2.5), (4, 1.5), (6, 2.5), (10, 4), (16, 6)]


def run(devices, **kw):
    cs, idx = p.CurveSet.from_devices(devices)
    kw.setdefault("t_required_s", 0.4)
    return loop.evaluate(curves=cs, curve_index=idx, **kw)


def test_worked_radial_b32():
    # hand-worked with published inputs: 2.5/1.5 mm2 R1+R2 = 19.51 mohm/m (IET On-Site Guide
    # Table I1), x 1.20 at 70 °C (BS 7671 practice), 30 m:
    # R1+R2 = 30 x 19.51 x 1.20 / 1000 = 0.70236 ohm; Zs = 0.35 + 0.70236 = 1.05236 ohm
    # If = 0.95 x 230 / 1.05236 = 207.63 A (BS 7671:2018 Reg 411.4.4, Cmin 0.95)
    # Zs max = 218.5 / 160 = 1.365625 ohm (BS 7671:2018 Table 41.3 prints 1.37)
    r = run([B32], length_m=[30.0], line_mm2=2.5, cpc_mm2=1.5, ze_ohm=0.35)
    assert r["r1r2_ohm"][0] == pytest.approx(0.70236, rel=1e-12)
    assert r["zs_ohm"][0] == pytest.approx(1.05236, rel=1e-12)
    assert r["fault_current_a"][0] == pytest.approx(207.6285, rel=1e-6)
    assert r["zs_max_ohm"][0] == pytest.approx(1.365625, rel=1e-12)
    assert r["margin"][0] == pytest.approx(1 - 1.05236 / 1.365625, rel=1e-12)
    assert r["disconnect_s"][0] == pytest.approx(0.1)     # above 5 In: instantaneous region
    # expected test reading at 20 °C: 30 x 19.51 / 1000 = 0.5853 ohm (IET On-Site Guide Table I1)
    assert r["r1r2_test_ohm"][0] == pytest.approx(0.5853, rel=1e-12)
    # BS 7671:2018 Appendix 3: measured Zs should not exceed 0.8 x 1.37 = 1.09 ohm
    assert r["zs_test_max_ohm"][0] == pytest.approx(0.8 * 1.365625)


def test_ring_worst_point_is_a_quarter():
    # BS 7671 practice (IET Guidance Note 3): ring R1+R2 at the mid-point = (r1 + r2) / 4
    radial = run([B32], length_m=[60.0], line_mm2=2.5, cpc_mm2=1.5, ze_ohm=0.2)
    ring = run([B32], length_m=[60.0], line_mm2=2.5, cpc_mm2=1.5, ze_ohm=0.2, ring=True)
    assert ring["r1r2_ohm"][0] == pytest.approx(radial["r1r2_ohm"][0] / 4)
    # hand-worked: 60 m of 2.5/1.5 ring: (60 x 19.51 x 1.2/1000)/4 = 0.35118 ohm
    assert ring["r1r2_ohm"][0] == pytest.approx(0.35118, rel=1e-9)


def test_separate_cpc_at_30_c():
    # BS 7671:2018 Table 54.2: a cpc not incorporated or bunched starts at 30 °C (factor 1.04)
    r = run([B32], length_m=[10.0], line_mm2=2.5, cpc_mm2=1.5, ze_ohm=0.2, cpc_with_line=False)
    # hand-worked: 10 x (7.41 x 1.20 + 12.1 x 1.04) / 1000 = 0.21476 ohm
    assert r["r1r2_ohm"][0] == pytest.approx(0.21476, rel=1e-12)


def test_temperature_ratio_test_limit():
    # temperature-ratio method: Zs_test_max = Ze + (Zs_max - Ze) x R20/R70 = 0.35 + (1.365625-0.35)/1.2
    r = run([B32], length_m=[10.0], line_mm2=2.5, cpc_mm2=1.5, ze_ohm=0.35, test_limit="temperature-ratio")
    assert r["zs_test_max_ohm"][0] == pytest.approx(0.35 + (1.365625 - 0.35) / 1.2)
    with pytest.raises(ValueError, match="test-limit"):
        run([B32], length_m=[10.0], line_mm2=2.5, cpc_mm2=1.5, ze_ohm=0.35, test_limit="guess")


def test_fault_current_is_ohms_law():
    # Ohm's law with the IEC 60909-0 Table 1 minimum voltage factor cmin = 0.95
    assert loop.fault_current(0.5, 0.5, 230, 0.95) == pytest.approx(218.5)
    assert loop.fault_current(0.5, 0.5, 230, 1.0) == pytest.approx(230.0)


def test_failing_circuit_fails_and_unbounded_device_fails():
    r = run([B32], length_m=[200.0], line_mm2=2.5, cpc_mm2=1.5, ze_ohm=0.8)
    assert r["margin"][0] < 0 and r["zs_ohm"][0] > r["zs_max_ohm"][0]
    # a fuse whose data stop at 0.4 s cannot be shown to clear within 0.2 s (TT final circuit)
    r = run([Device("fuse", "bs88-3", 32)], length_m=[5.0], line_mm2=6, cpc_mm2=2.5, ze_ohm=0.1,
            t_required_s=0.2)
    assert r["zs_max_ohm"][0] == 0 and r["margin"][0] == -np.inf


@pytest.mark.parametrize("u0,earthing,use,rating,expected", [
    (230, "TN-C-S", "sockets", 32, 0.4),   # BS 7671:2018 Table 41.1, TN 120 V < U0 <= 230 V
    (230, "TN-S", "sockets", 63, 0.4),     # Reg 411.3.2.2: sockets up to 63 A
    (230, "TN-S", "sockets", 80, 5.0),     # Reg 411.3.2.3: other circuits 5 s (TN)
    (230, "TN-S", "fixed", 32, 0.4),       # Reg 411.3.2.2: fixed equipment up to 32 A
    (230, "TN-S", "fixed", 40, 5.0),       # Reg 411.3.2.3
    (230, "TN-S", "lighting", 6, 0.4),     # lighting is fixed equipment
    (230, "TN-S", "distribution", 32, 5.0),  # Reg 411.3.2.3
    (230, "TT", "sockets", 32, 0.2),       # BS 7671:2018 Table 41.1, TT 120 V < U0 <= 230 V
    (230, "TT", "distribution", 100, 1.0),  # Reg 411.3.2.4
    (110, "TN-S", "sockets", 16, 0.8),     # Table 41.1, TN 50 V < U0 <= 120 V
    (110, "TT", "sockets", 16, 0.3),       # Table 41.1, TT 50 V < U0 <= 120 V
    (400, "TN-S", "sockets", 16, 0.2),     # Table 41.1, TN 230 V < U0 <= 400 V
    (400, "TT", "sockets", 16, 0.07),      # Table 41.1, TT 230 V < U0 <= 400 V
    (690, "TN-S", "sockets", 16, 0.1),     # Table 41.1, TN U0 > 400 V
    (690, "TT", "sockets", 16, 0.04),      # Table 41.1, TT U0 > 400 V
])
def test_table_41_1(u0, earthing, use, rating, expected):
    assert required_time(u0, earthing, use, rating) == expected


def test_no_time_at_50_v():
    with pytest.raises(ValueError, match="50 V"):
        required_time(48, "TN-S", "sockets", 16)


ALL = [Device("mcb", "mcb", r, c) for c in "BCD" for r in (6, 16, 32)] + \
      [Device("fuse", f, r) for f, r in (("bs88-2", 20), ("bs88-3", 32), ("bs3036", 15), ("bs1362", 13))]


@settings(max_examples=60, deadline=None)
@given(st.integers(0, len(ALL) - 1), st.sampled_from(PAIRS), st.floats(0.01, 2.0),
       st.floats(0.1, 300), st.floats(0.1, 300), st.booleans(), st.booleans())
def test_longer_run_never_lowers_zs_nor_speeds_disconnection(k, pair, ze, a, b, ring, with_line):
    lo, hi = sorted((a, b))
    r = run([ALL[k]] * 2, length_m=[lo, hi], line_mm2=pair[0], cpc_mm2=pair[1], ze_ohm=ze,
            ring=ring, cpc_with_line=with_line)
    assert r["zs_ohm"][1] >= r["zs_ohm"][0]
    assert r["fault_current_a"][1] <= r["fault_current_a"][0]
    assert r["disconnect_s"][1] >= r["disconnect_s"][0]
    assert r["margin"][1] <= r["margin"][0]


@settings(max_examples=40, deadline=None)
@given(st.sampled_from(PAIRS), st.sampled_from(PAIRS), st.floats(1, 100))
def test_larger_conductors_never_raise_r1r2(p1, p2, length):
    if p1[0] <= p2[0] and p1[1] <= p2[1]:
        r = run([B32] * 2, length_m=[length] * 2, line_mm2=[p1[0], p2[0]], cpc_mm2=[p1[1], p2[1]], ze_ohm=0.3)
        assert r["r1r2_ohm"][1] <= r["r1r2_ohm"][0]


def test_n_at_once_equals_one_by_one():
    rng = np.random.default_rng(11)
    n = 300
    k = rng.integers(0, len(ALL), n)
    pair = np.array(PAIRS)[rng.integers(0, len(PAIRS), n)]
    args = dict(length_m=rng.uniform(1, 120, n), line_mm2=pair[:, 0], cpc_mm2=pair[:, 1],
                ze_ohm=rng.uniform(0.05, 1.5, n), ring=rng.random(n) < 0.3,
                cpc_with_line=rng.random(n) < 0.8, t_required_s=rng.choice([0.2, 0.4, 1.0, 5.0], n),
                test_temperature_c=rng.uniform(5, 30, n))
    allr = run([ALL[j] for j in k], **args)
    for i in range(0, n, 17):
        one = run([ALL[k[i]]], **{key: np.asarray(v)[i:i + 1] for key, v in args.items()})
        for key in allr:
            np.testing.assert_allclose(one[key], allr[key][i:i + 1], rtol=1e-12, err_msg=key)

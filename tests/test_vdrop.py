"""Voltage drop: published mV/A/m from resistance, hand-worked drops, circuit laws."""
import doctest

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from zsplan import vdrop
from zsplan.check import check
from zsplan.model import Board, Cable, Circuit, Device, Outlet, Plan, Settings, Supply

# BS 7671:2018 Table 4D1B (single-core 70 °C thermoplastic, copper, in conduit/trunking)
# column 3 (two cables, single-phase a.c.) and column 4 (three or four cables, three-phase),
# r values in mV/A/m, one published reproduction of the table
TABLE_4D1B = {  # csa: (col 3, col 4)
    1.0: (44, 38), 1.5: (29, 25), 2.5: (18, 15), 4: (11, 9.5), 6: (7.3, 6.4), 10: (4.4, 3.8), 16: (2.8, 2.4)}


@pytest.mark.parametrize("csa", sorted(TABLE_4D1B))
def test_mv_per_a_m_reproduces_table_4d1b(csa):
    one, three = TABLE_4D1B[csa]                 # BS 7671:2018 Table 4D1B cols 3 and 4
    # the table prints two significant figures on a slightly different resistance basis:
    # 2 x R20 x 1.20 reproduces it within 3 %
    assert vdrop.mv_per_a_m(csa) == pytest.approx(one, rel=0.03)
    assert vdrop.mv_per_a_m(csa, phases=3) == pytest.approx(three, rel=0.03)


def test_mv_per_a_m_headline_values():
    # BS 7671:2018 Table 4D1B col 3 / Table 4D5: 2.5 mm2 -> 18, 1.5 mm2 -> 29 mV/A/m
    # hand-worked: 2 x 7.41 x 1.20 = 17.784; 2 x 12.1 x 1.20 = 29.04 (IEC 60228 Table 2 R20)
    assert vdrop.mv_per_a_m(2.5) == pytest.approx(17.784, rel=1e-12)
    assert vdrop.mv_per_a_m(1.5) == pytest.approx(29.04, rel=1e-12)
    assert round(vdrop.mv_per_a_m(2.5)) == 18
    assert round(vdrop.mv_per_a_m(1.5)) == 29


def test_three_phase_is_root3_over_2_of_single_phase():
    # physical law: balanced three-phase line-to-line drop sqrt(3) I r L vs single-phase 2 I r L
    a = vdrop.mv_per_a_m([1.5, 2.5, 35.0], construction="single-core")
    b = vdrop.mv_per_a_m([1.5, 2.5, 35.0], phases=3, construction="single-core")
    assert np.allclose(b / a, np.sqrt(3) / 2)


class TestReactanceFromMemory:
    """Values from memory: BS 7671:2018 Table 4D1B col 3 x and z for 25 mm2 and above."""

    def test_small_sizes_and_twin_have_no_reactance(self):
        # BS 7671:2018 Tables 4D1B and 4D5 give r only up to 16 mm2
        assert vdrop.reactance([1.5, 16.0], "single-core").tolist() == [0.0, 0.0]
        assert vdrop.reactance(25.0, "twin-and-cpc") == 0.0

    def test_25_mm2_single_core(self):
        # from memory: BS 7671:2018 Table 4D1B col 3, 25 mm2: r 1.8, x 0.33, z 1.8 mV/A/m
        z = vdrop.mv_per_a_m(25.0, construction="single-core")
        r = vdrop.mv_per_a_m(25.0, construction="single-core", with_reactance=False)
        assert r == pytest.approx(1.8, rel=0.04)   # hand-worked: 2 x 0.727 x 1.2 = 1.745
        assert z == pytest.approx(1.8, rel=0.03)   # hand-worked: hypot(1.745, 0.33) = 1.776
        assert z > r


def test_worked_radial_drop():
    # hand-worked: 2.5 mm2 radial, 20 A at the end of 30 m of cable
    # Vd = 20 A x 17.784 mV/A/m x 30 m / 1000 = 10.6704 V; 10.6704 / 230 = 4.639 %
    vd = vdrop.voltage_drop(20.0, vdrop.mv_per_a_m(2.5), vdrop.effective_length(30.0))
    assert vd == pytest.approx(10.6704, rel=1e-12)
    assert vdrop.percent(vd) == pytest.approx(4.6393, rel=1e-4)
    # under the 5 % limit for other uses, over the 3 % for lighting (BS 7671:2018 Table 4Ab)
    assert vdrop.percent(vd) <= vdrop.limit_pct("sockets")
    assert vdrop.percent(vd) > vdrop.limit_pct("lighting")


def test_limits():
    # BS 7671:2018 Appendix 4 section 6.4 / Table 4Ab: public LV supply 3 % lighting, 5 % other
    assert vdrop.LIMITS_PCT["public"] == {"lighting": 3.0, "other": 5.0}
    # from memory: private LV supply 6 % lighting, 8 % other
    assert vdrop.LIMITS_PCT["private"] == {"lighting": 6.0, "other": 8.0}
    assert vdrop.limit_pct(["lighting", "fixed"], 6.0, 8.0).tolist() == [6.0, 8.0]


def test_three_phase_percent_on_400_v():
    # hand-worked: a 20 V line-to-line drop on 230/400 V is 20 / (sqrt(3) x 230) = 5.02 %,
    # BS 7671:2018 Table 4Ab: 5 % is 20 V at 400 V
    assert vdrop.percent(20.0, 230.0, 3) == pytest.approx(100 * 20 / (np.sqrt(3) * 230))


def test_ring_factors():
    # hand-worked (module docstring): centred load 1/4, uniform load 1/8 of the radial drop
    L = 64.0
    assert vdrop.effective_length(L, True, "concentrated") == pytest.approx(16.0)
    assert vdrop.effective_length(L, True, "uniform") == pytest.approx(8.0)
    assert vdrop.effective_length(L, False, "uniform") == pytest.approx(32.0)


def test_radial_outlets_equal_segment_sum():
    # hand-worked: outlets at 10, 20, 30 m of cable, Ib 15 A shared (5 A each):
    # segment currents 15, 10, 5 A over 10 m each -> sum I x L = 150 + 100 + 50 = 300 A m
    mean = vdrop.radial_outlet_mean([0, 0, 0], [10.0, 20.0, 30.0], 1)
    assert 15.0 * mean[0] == pytest.approx(300.0)


def test_ring_outlets_hand_worked():
    # hand-worked: outlets at a = 1/4, 1/2, 3/4 round the ring; at b = 1/2:
    # sum(min(a, b) - a b) = 0.125 + 0.25 + 0.125 = 0.5, /3 = 1/6 (b = 1/4 gives 0.375/3 = 1/8)
    f = vdrop.ring_outlet_factor([0, 0, 0], [0.25, 0.5, 0.75], 1)
    assert f[0] == pytest.approx(1 / 6)
    # one outlet at the middle: the centred load, 1/4
    assert vdrop.ring_outlet_factor([0], [0.5], 1)[0] == pytest.approx(0.25)
    # no outlets: NaN, and effective_length falls back to the concentrated model
    f = vdrop.ring_outlet_factor(np.zeros(0, int), np.zeros(0), 1)
    assert np.isnan(f[0])
    assert vdrop.effective_length(40.0, True, "outlets", np.nan, f[0]) == pytest.approx(10.0)


def _ring_nodal_max_drop(a, L=1.0, z=1.0, each=1.0):
    """Kirchhoff: solve the ring as a resistor network fed at both ends (independent of vdrop)."""
    pos = np.concatenate([[0.0], np.sort(a), [1.0]])
    n = len(pos)
    g = 1.0 / (np.diff(pos) * L * z)               # segment conductances
    G = np.zeros((n, n))
    for k, gk in enumerate(g):
        G[k, k] += gk
        G[k + 1, k + 1] += gk
        G[k, k + 1] -= gk
        G[k + 1, k] -= gk
    inj = np.zeros(n)
    inj[1:-1] = each                               # each outlet draws `each`
    inner = slice(1, n - 1)                        # both ends held at the source (drop 0)
    drop = np.linalg.solve(G[inner, inner], inj[inner])
    return drop.max()


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(1, 99), min_size=1, max_size=8, unique=True))
def test_ring_outlets_match_kirchhoff(cents):
    # physical law: superposition on the ring equals the nodal solution of the network
    a = [c / 100 for c in cents]
    n = len(a)
    f = vdrop.ring_outlet_factor(np.zeros(n, int), a, 1)[0]
    ib = 1.0
    assert ib * f == pytest.approx(_ring_nodal_max_drop(a, each=ib / n), rel=1e-9)


def test_many_outlets_tend_to_uniform():
    # the uniform load is the limit of many equal outlets: 1/8 (ring), 1/2 (radial)
    m = 2000
    a = (np.arange(m) + 0.5) / m
    assert vdrop.ring_outlet_factor(np.zeros(m, int), a, 1)[0] == pytest.approx(1 / 8, rel=1e-3)
    assert vdrop.radial_outlet_mean(np.zeros(m, int), a * 40.0, 1)[0] == pytest.approx(20.0, rel=1e-3)


def test_outlet_helpers_vectorised_equal_one_by_one():
    rng = np.random.default_rng(7)
    owner = rng.integers(0, 5, 30)
    a = rng.uniform(0.01, 0.99, 30)
    together = vdrop.ring_outlet_factor(owner, a, 5)
    for i in range(5):
        sel = owner == i
        alone = vdrop.ring_outlet_factor(np.zeros(sel.sum(), int), a[sel], 1)[0]
        assert together[i] == pytest.approx(alone) if sel.any() else np.isnan(together[i])


def test_unknown_model_rejected():
    with pytest.raises(ValueError, match="load model"):
        vdrop.effective_length(10.0, model="guess")


def test_doctests():
    assert doctest.testmod(vdrop).failed == 0


# -- through check(): limits, missing load, load models -----------------------

def _plan(circuits, settings=Settings()):
    return Plan("mem.yaml", Supply(ze_ohm=0.35), (Board("CU1", (0.0, 0.0), 2.4),), tuple(circuits),
                settings=settings)


def _radial(ref, length, load=None, use="sockets", csa=2.5, outlets=()):
    return Circuit(ref, "CU1", Device("mcb", "mcb", 20, "B"), Cable(csa, 1.5), use=use, load_a=load,
                   run="direct", route=((0.0, 0.0), (length, 0.0)), outlets=tuple(outlets))


def test_check_fills_vdrop_fields():
    # hand-worked: 30 m direct radial, 16 A on 2.5 mm2: 16 x 17.784 x 30 / 1000 = 8.536 V = 3.711 %
    r = check(_plan([_radial("1", 30.0, 16.0), _radial("2", 30.0, 16.0, use="lighting")]))
    assert r.circuits["vdrop_pct"][0] == pytest.approx(100 * 16 * 17.784 * 30 / 1000 / 230)
    assert r.checks[0]["vdrop"] == "pass" and r.checks[1]["vdrop"] == "fail"   # 5 % / 3 %
    assert r.status[1] == "fail"
    assert any("3 % limit for lighting" in m for m in r.messages[1])
    rec = r.to_dict()["circuits"][0]
    assert rec["vdrop_limit_pct"] == 5.0 and rec["vdrop_pct"] == pytest.approx(3.72, abs=0.005)


def test_missing_load_uses_rating():
    # no load given: Ib = In = 20 A (documented, conservative)
    r = check(_plan([_radial("1", 10.0)]))
    assert r.circuits["ib_a"][0] == 20.0
    assert any("Ib = In = 20 A" in m for m in r.messages[0])


def test_outlets_model_through_check():
    outs = [Outlet((10.0, 0.0), 0.0, "A"), Outlet((20.0, 0.0), 0.0, "B"), Outlet((30.0, 0.0), 0.0, "C")]
    c = _radial("1", 30.0, 15.0, outlets=outs)
    end = check(_plan([c])).circuits["vdrop_v"][0]
    shared = check(_plan([c], Settings(vdrop_load="outlets"))).circuits["vdrop_v"][0]
    # hand-worked: end 15 x 30 = 450 A m; shared 300 A m (see test_radial_outlets_equal_segment_sum)
    assert end == pytest.approx(15 * 30 * 17.784 / 1000)
    assert shared == pytest.approx(300 * 17.784 / 1000)

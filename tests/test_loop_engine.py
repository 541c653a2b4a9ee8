"""loop.evaluate against its formulas written out plainly, circuit by circuit.

evaluate arranges the formulas of zsplan.loop's module docstring for few passes
over the arrays (look-up tables, one product for both temperatures, a ring's
quarter by the binary exponent).  Here every circuit is also worked the plain
way from the same functions (resistance_20c, temperature_factor,
operating_time, current_for_time, zs_limit), each checked against published
tables in its own tests; the two must agree to rounding.
"""
import numpy as np
import pytest

from zsplan import loop, protection as p
from zsplan.conductors import resistance_20c, temperature_factor
from zsplan.model import Device

DEVICES = [Device("mcb", "mcb", r, c) for c in "BCD" for r in (6, 16, 32)] + \
          [Device("fuse", f, r) for f, r in (("bs88-2", 20), ("bs88-3", 32), ("bs3036", 15), ("bs1362", 13))]
PAIRS = [(1.0, 1.0), (1.5, 1.0), (2.5, 1.5), (4, 1.5), (6, 2.5), (10, 4), (16, 6), (25, 16), (35, 16),
         (70, 35), (185, 95)]


def plain(cs, k, *, length_m, line_mm2, cpc_mm2, ze_ohm, t_required_s, material="copper",
          temp_rating_c=70.0, cpc_with_line=True, ring=False, spur_m=0.0, u0_v=230.0, cmin=0.95,
          test_temperature_c=20.0, alpha="bs7671", test_limit="rule-of-0.8"):
    """One circuit by the module docstring's formulas, step by step."""
    r1, r2 = resistance_20c(line_mm2, material), resistance_20c(cpc_mm2, material)
    line_c = temp_rating_c
    cpc_c = temp_rating_c if cpc_with_line else 30.0          # BS 7671:2018 Table 54.2
    f1, f2 = temperature_factor(line_c, material, alpha), temperature_factor(cpc_c, material, alpha)
    ft = temperature_factor(test_temperature_c, material, alpha)
    length = (length_m / 4 if ring else length_m) + spur_m
    rr = length / 1000 * (r1 * f1 + r2 * f2)
    rr_test = length / 1000 * (r1 + r2) * ft
    zs = ze_ohm + rr
    i_f = cmin * u0_v / zs
    ia = float(p.current_for_time(cs, [k], [t_required_s])[0])
    zs_max = float(loop.zs_limit(ia, u0_v, cmin))
    ratio = (r1 + r2) * ft / (r1 * f1 + r2 * f2)
    zs_test = float(loop.test_zs_limit(zs_max, ze_ohm, ratio, test_limit))
    return {"r1r2_ohm": rr, "r1r2_test_ohm": rr_test, "zs_ohm": zs, "fault_current_a": i_f,
            "disconnect_s": float(p.operating_time(cs, [k], [i_f])[0]),
            "disconnect_limit_s": t_required_s, "ia_a": ia, "zs_max_ohm": zs_max,
            "zs_test_max_ohm": zs_test, "margin": 1 - zs / zs_max if zs_max > 0 else -np.inf,
            "line_c": line_c, "cpc_c": cpc_c}


def circuits(n, seed, *, materials=("copper",), times=(0.4, 5.0)):
    rng = np.random.default_rng(seed)
    pair = np.array(PAIRS)[rng.integers(0, len(PAIRS), n)]
    mat = rng.choice(materials, n)
    al = mat == "aluminium"                    # IEC 60228 lists aluminium from 10 mm2
    pair[al] = np.maximum(pair[al], 10.0)
    return dict(length_m=rng.uniform(0.5, 150, n), line_mm2=pair[:, 0], cpc_mm2=pair[:, 1],
                ze_ohm=rng.uniform(0.02, 1.5, n), ring=rng.random(n) < 0.3,
                cpc_with_line=rng.random(n) < 0.8, t_required_s=rng.choice(times, n),
                temp_rating_c=rng.choice([70.0, 90.0], n), test_temperature_c=rng.uniform(5, 30, n),
                material=mat)


#: agreement to rounding: a few units in the last place; t(I) scales an error in If by
#: the curve's log-log slope (up to about 20), the margin is a difference near 0
TOLERANCE = {"disconnect_s": dict(rel=1e-13), "margin": dict(rel=4e-15, abs=1e-14)}


def close(value, key):
    return pytest.approx(value, **TOLERANCE.get(key, dict(rel=4e-15, abs=0)))


def check_against_plain(cs, idx, args, every=1, **scalars):
    out = loop.evaluate(curves=cs, curve_index=idx, **args, **scalars)
    n = len(idx)
    for i in range(0, n, every):
        row = {k: (v[i] if isinstance(v, np.ndarray) else v) for k, v in args.items()}
        one = plain(cs, int(idx[i]), **row, **scalars)
        for key, value in one.items():
            assert out[key][i] == close(value, key), (key, i)
    return out


@pytest.mark.parametrize("alpha", ["bs7671", "iec60228"])
@pytest.mark.parametrize("test_limit", ["rule-of-0.8", "temperature-ratio"])
def test_engine_equals_the_formulas(alpha, test_limit):
    pick = np.random.default_rng(1).integers(0, len(DEVICES), 400)
    cs, idx = p.CurveSet.from_devices([DEVICES[k] for k in pick])
    check_against_plain(cs, idx, circuits(400, 2), every=3, alpha=alpha, test_limit=test_limit)


def test_all_cpcs_with_their_lines_and_spurs():
    args = circuits(300, 4)
    args["cpc_with_line"] = np.ones(300, dtype=bool)
    args["spur_m"] = np.where(args["ring"], np.random.default_rng(5).uniform(0, 20, 300), 0.0)
    cs, idx = p.CurveSet.from_devices([DEVICES[k % len(DEVICES)] for k in range(300)])
    check_against_plain(cs, idx, args, every=2)


def test_mixed_materials_and_per_circuit_supply():
    args = circuits(200, 6, materials=("copper", "aluminium"))
    cs, idx = p.CurveSet.from_devices([DEVICES[k % len(DEVICES)] for k in range(200)])
    u0 = np.where(np.arange(200) % 2, 230.0, 240.0)
    out = loop.evaluate(curves=cs, curve_index=idx, u0_v=u0, cmin=0.95, **args)
    for i in range(0, 200, 7):
        one = plain(cs, int(idx[i]), u0_v=float(u0[i]), **{k: v[i] for k, v in args.items()})
        for key, value in one.items():
            assert out[key][i] == close(value, key), (key, i)


def test_many_distinct_required_times():
    args = circuits(300, 8, times=tuple(np.linspace(0.05, 5.0, 100)))
    cs, idx = p.CurveSet.from_devices([DEVICES[k % len(DEVICES)] for k in range(300)])
    check_against_plain(cs, idx, args, every=5)


def test_fault_currents_beyond_the_cell_range():
    # Ze and the run nearly zero: If of the order of 1e9 A, outside the cells (2^24 A)
    cs, idx = p.CurveSet.from_devices(DEVICES[:3])
    args = dict(length_m=np.array([0.0, 10.0, 0.001]), line_mm2=np.array([2.5, 2.5, 2.5]),
                cpc_mm2=np.array([1.5, 1.5, 1.5]), ze_ohm=np.array([1e-7, 0.3, 1e-9]),
                t_required_s=np.array([0.4, 0.4, 0.4]))
    out = check_against_plain(cs, idx, args)
    assert out["fault_current_a"][0] > 2.0 ** 24


def test_shapes():
    cs, idx = p.CurveSet.from_devices(DEVICES[:2])
    scalar = loop.evaluate(length_m=30.0, line_mm2=2.5, cpc_mm2=1.5, ze_ohm=0.35, curves=cs,
                           curve_index=0, t_required_s=0.4)
    assert all(v.shape == () for v in scalar.values())
    grid = loop.evaluate(length_m=np.array([[10.0], [20.0]]), line_mm2=2.5, cpc_mm2=1.5,
                         ze_ohm=np.array([0.1, 0.2, 0.3]), curves=cs, curve_index=np.array([0, 1, 0]),
                         t_required_s=[0.4, 5.0, 0.4], ring=[True, False, False])
    assert all(v.shape == (2, 3) for v in grid.values())
    one = loop.evaluate(length_m=np.array([20.0]), line_mm2=2.5, cpc_mm2=1.5, ze_ohm=np.array([0.2]),
                        curves=cs, curve_index=np.array([1]), t_required_s=5.0)
    for key in grid:
        assert grid[key][1, 1] == one[key][0], key
    empty = loop.evaluate(length_m=np.zeros(0), line_mm2=np.zeros(0), cpc_mm2=np.zeros(0),
                          ze_ohm=np.zeros(0), curves=cs, curve_index=np.zeros(0, dtype=np.intp),
                          t_required_s=np.zeros(0))
    assert all(v.shape == (0,) for v in empty.values())


def test_inputs_untouched_and_repeated_inputs_read_only():
    args = circuits(50, 9)
    cs, idx = p.CurveSet.from_devices([DEVICES[k % len(DEVICES)] for k in range(50)])
    before = {k: v.copy() for k, v in args.items()}
    out = loop.evaluate(curves=cs, curve_index=idx, **args)
    for k, v in args.items():
        assert np.array_equal(v, before[k]), k
    for key in ("disconnect_limit_s", "line_c"):
        with pytest.raises(ValueError):
            out[key][0] = 1.0


def test_two_calls_same_results():
    # the curves keep look-up tables between calls (cells, Ia by required time)
    args = circuits(200, 10)
    cs, idx = p.CurveSet.from_devices([DEVICES[k % len(DEVICES)] for k in range(200)])
    a = loop.evaluate(curves=cs, curve_index=idx, **args)
    b = loop.evaluate(curves=cs, curve_index=idx, **args)
    c = loop.evaluate(curves=cs, curve_index=idx, **dict(args, t_required_s=np.full(200, 0.2)))
    for key in a:
        assert np.array_equal(a[key], b[key]), key
    assert not np.array_equal(a["ia_a"], c["ia_a"])

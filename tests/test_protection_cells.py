"""t(I) by the current-cell look-up (CurveSet.cells) against the search of the curve's points.

operating_time answers a 1-d query from per-curve tables of current cells and
evaluates the segment's line only where the curve slopes; a 2-d query takes
the plain search (count the points at or below the current).  The search is
checked against the published tables in tests/test_protection.py; here the
look-up must give the same times to the bit.
"""
import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from zsplan import protection as p
from zsplan.model import Device

ALL = [Device("mcb" if f.kind == "breaker" else "fuse", f.name, r, c)
       for f in p.families().values() for (c, r) in f.curves]
CS, IDX = p.CurveSet.from_devices(ALL)


def searched(cs, idx, current):
    """t(I) by the search alone (a 2-d query does not use the cells)."""
    return p.operating_time(cs, np.asarray(idx)[:, None], np.asarray(current, dtype=float)[:, None])[:, 0]


def points_and_neighbours(cs):
    """Every tabulated current of every curve, and the floats just below and above it."""
    k = np.concatenate([np.full(cs.npts[j], j) for j in range(cs.size)])
    cur = np.concatenate([cs.cur[j, :cs.npts[j]] for j in range(cs.size)])
    return (np.concatenate([k, k, k]),
            np.concatenate([cur, np.nextafter(cur, 0), np.nextafter(cur, np.inf)]))


def test_cells_equal_the_search_over_all_devices():
    rng = np.random.default_rng(5)
    k = rng.integers(0, CS.size, 50_000)
    cur = np.exp(rng.uniform(math.log(0.01), math.log(1e6), 50_000))
    kp, cp = points_and_neighbours(CS)
    k, cur = np.concatenate([k, kp]), np.concatenate([cur, cp])
    fast = p.operating_time(CS, IDX[k], cur)
    assert np.array_equal(fast, searched(CS, IDX[k], cur))


@settings(max_examples=200, deadline=None)
@given(st.integers(0, len(ALL) - 1), st.floats(1e-3, 1e7))
def test_one_current_as_the_search(k, current):
    assert p.operating_time(CS, IDX[[k]], [current])[0] == searched(CS, IDX[[k]], [current])[0]


def test_at_each_point_its_own_time():
    # the curve passes through its points: at a point's current (not the foot of a
    # vertical step) t is that point's time, exactly (slope times zero)
    for j, curve in enumerate(CS.curves):
        cur, tim = np.array(curve.current_a), np.array(curve.time_s)
        on = np.r_[cur[1:] != cur[:-1], True]          # not followed by a point of the same current
        t = p.operating_time(CS, np.full(on.sum(), j), cur[on])
        assert np.array_equal(t, tim[on]), ALL[list(IDX).index(j)]


def test_currents_beyond_the_cells_and_odd_values():
    odd = np.array([0.0, -5.0, np.nan, np.inf, 1e-9, 2.0 ** -16 * 0.999, 2.0 ** 24, 1e12])
    k = np.arange(len(odd)) % CS.size
    cur = np.concatenate([odd, [50.0, 500.0]])          # with ordinary currents in the same call
    k = np.concatenate([k, [0, 1]])
    fast = p.operating_time(CS, IDX[k], cur)
    np.testing.assert_array_equal(fast, searched(CS, IDX[k], cur))
    last = np.array([CS.curves[j].time_s[-1] for j in IDX[k[:4]]])
    assert math.isinf(fast[0]) and math.isinf(fast[1]) and math.isinf(fast[2])   # no current: no operation
    assert fast[3] == last[3]                      # beyond the last point: its time bounds t


def test_points_closer_than_a_cell(tmp_path, monkeypatch):
    # invented curve: two points 0.8 % apart (one cell holds both) and a vertical step
    (tmp_path / "close.yaml").write_text(
        "family: closefuse\nkind: curve\ntitle: Invented test curve\n"
        "ratings:\n  10:\n    - [20, 100]\n    - [50, 10]\n    - [50.4, 5]\n    - [80, 1]\n"
        "    - [80, 0.1]\n    - [200, 0.01]\n")
    monkeypatch.setenv("ZSPLAN_DEVICE_PATH", str(tmp_path))
    p.families.cache_clear()
    try:
        cs, idx = p.CurveSet.from_devices([Device("fuse", "closefuse", 10)])
        cur = np.concatenate([np.linspace(49, 52, 3001), np.linspace(79, 81, 2001),
                              np.nextafter([50.0, 50.4, 80.0], 0), [50.0, 50.4, 80.0]])
        idx = np.zeros(len(cur), dtype=np.intp)
        assert np.array_equal(p.operating_time(cs, idx, cur), searched(cs, idx, cur))
        # invented curve: at 50.4 A its own point (5 s); at the step (80 A) the faster time
        assert p.operating_time(cs, [0], [50.4])[0] == 5.0
        assert p.operating_time(cs, [0], [80.0])[0] == 0.1
    finally:
        monkeypatch.delenv("ZSPLAN_DEVICE_PATH")
        p.families.cache_clear()


def test_cell_tables_hold_only_flat_ends():
    # a cell answers t only below the first point (inf) or beyond the last (the last time)
    n, times, slots, split = CS.cells()
    held = times[len(times) - CS.size * n:]
    lasts = {c.time_s[-1] for c in CS.curves}
    assert all(math.isnan(v) or math.isinf(v) or v in lasts for v in np.unique(held))
    assert np.isnan(held).any() and np.isinf(held).any()


@pytest.mark.parametrize("n", [1, 7, 1000])
def test_out_array_receives_the_times(n):
    rng = np.random.default_rng(n)
    k = rng.integers(0, CS.size, n)
    cur = rng.uniform(1, 2000, n)
    out = np.full(n, -1.0)
    t = p.operating_time(CS, IDX[k], cur, out=out)
    assert t is out and np.array_equal(out, searched(CS, IDX[k], cur))

"""Grouping from the plan's geometry: found where routes run together, not where they part."""
import doctest

import numpy as np
import pytest
import shapely

from zsplan import capacity, grouping
from zsplan.check import check
from zsplan.model import Board, Cable, Circuit, Device, Plan, Supply


def parallel(n=4, spacing=0.05, length=5.0):
    # hand-worked geometry: n straight routes `spacing` apart, `length` long
    return [shapely.LineString([(0.0, k * spacing), (length, k * spacing)]) for k in range(n)]


def fan(n=4, degrees=20.0, length=5.0):
    # routes leaving one point `degrees` apart: within 0.1 m of the next for 0.1/sin(20 deg) = 0.29 m
    a = np.radians(np.arange(n) * degrees)
    return [shapely.LineString([(0.0, 0.0), (length * np.cos(t), length * np.sin(t))]) for t in a]


def test_four_parallel_routes_are_grouped():
    size = grouping.group_sizes(parallel())
    assert size.tolist() == [4, 4, 4, 4]
    # BS 7671:2018 Table 4C1 row 1 (bunched), 4 circuits: 0.65 (from memory)
    assert capacity.grouping_factor(size).tolist() == [0.65] * 4


def test_diverging_routes_are_not_grouped():
    assert grouping.group_sizes(fan()).tolist() == [1, 1, 1, 1]


def test_far_apart_routes_are_not_grouped():
    # 0.3 m apart, above the 0.1 m default distance
    assert grouping.group_sizes(parallel(spacing=0.3)).tolist() == [1, 1, 1, 1]


def test_short_shared_length_is_not_grouped():
    # 0.4 m side by side is under the 0.5 m default length; 0.6 m is over it
    assert grouping.group_sizes(parallel(2, length=0.4)).tolist() == [1, 1]
    assert grouping.group_sizes(parallel(2, length=0.6)).tolist() == [2, 2]


def test_settings_move_the_thresholds():
    assert grouping.group_sizes(parallel(spacing=0.3), distance_m=0.35).tolist() == [4, 4, 4, 4]
    assert grouping.group_sizes(parallel(2, length=0.6), min_length_m=1.0).tolist() == [1, 1]


def test_groups_are_local_along_a_route():
    # hand-worked: B (y = 0, 0..10 m); A alongside B on 0..5 m; C alongside B on 6..10 m:
    # two groups of two, not one of three
    a = shapely.LineString([(0, 0.05), (5, 0.05)])
    b = shapely.LineString([(0, 0), (10, 0)])
    c = shapely.LineString([(6, 0.05), (10, 0.05)])
    assert grouping.group_sizes([a, b, c]).tolist() == [2, 2, 2]
    # ... and one group of three where the stretches overlap (4..5 m)
    c2 = shapely.LineString([(4, 0.05), (10, 0.05)])
    assert grouping.group_sizes([a, b, c2]).tolist() == [3, 3, 3]


def test_levels_keep_ceiling_and_floor_apart():
    lines = parallel(2)
    assert grouping.group_sizes(lines, level=["ceiling", "floor"]).tolist() == [1, 1]
    assert grouping.group_sizes(lines, level=["ceiling", "ceiling"]).tolist() == [2, 2]


def test_missing_routes_and_uncounted_members():
    lines = parallel(3) + [None]
    assert grouping.group_sizes(lines).tolist() == [3, 3, 3, 1]
    # a lightly loaded cable does not count in the others' groups, but its own group is full
    assert grouping.group_sizes(lines, counted=[True, True, False, True]).tolist() == [2, 2, 3, 1]


def test_order_does_not_matter():
    lines = parallel(3) + fan(3, length=4.0)
    perm = np.random.default_rng(3).permutation(len(lines))
    a = grouping.group_sizes(lines)
    b = grouping.group_sizes([lines[k] for k in perm])
    assert b.tolist() == a[perm].tolist()


def test_only_candidate_pairs_are_measured(monkeypatch):
    # 200 short routes on a 20 x 10 grid, none near another: the STRtree finds no candidate pair,
    # so no pair is measured (never all 39 800 ordered pairs)
    lines = [shapely.LineString([(x * 2.0, y * 2.0), (x * 2.0 + 1.0, y * 2.0)]) for x in range(20) for y in range(10)]
    calls = []
    real = grouping.segment_within
    monkeypatch.setattr(grouping, "segment_within", lambda p0, *a: calls.append(len(p0)) or real(p0, *a))
    assert grouping.group_sizes(lines).max() == 1
    assert sum(calls) == 0
    # two of them moved alongside: exactly the two ordered pairs are measured
    lines[1] = shapely.LineString([(0.0, 0.05), (1.0, 0.05)])
    assert grouping.group_sizes(lines)[[0, 1]].tolist() == [2, 2]
    assert sum(calls) == 2


def test_segment_within_hand_worked():
    # hand-worked: p from (0, 0) to (10, 0); q from (2, 0.05) to (6, 0.05), d = 0.1:
    # within the strip over 2..6 m, and the end caps add sqrt(0.1^2 - 0.05^2) = 0.0866 m each side
    t0, t1, ok = grouping.segment_within([[0, 0]], [[10, 0]], [[2, 0.05]], [[6, 0.05]], 0.1)
    assert ok[0] and t0[0] * 10 == pytest.approx(2 - np.sqrt(0.0075)) and t1[0] * 10 == pytest.approx(6 + np.sqrt(0.0075))
    # crossing at right angles: only 2 d of p lies within d
    t0, t1, ok = grouping.segment_within([[0, 0]], [[10, 0]], [[5, -3]], [[5, 3]], 0.1)
    assert (t1[0] - t0[0]) * 10 == pytest.approx(0.2)
    # parallel 0.2 m apart: nothing within 0.1 m
    assert not grouping.segment_within([[0, 0]], [[10, 0]], [[0, 0.2]], [[10, 0.2]], 0.1)[2][0]


def test_segment_within_agrees_with_buffer_intersection():
    # property: the closed form agrees with shapely's buffered intersection (polygonal caps,
    # so to a small tolerance) on random segments
    rng = np.random.default_rng(11)
    p0, p1, q0, q1 = (rng.uniform(0, 2, (300, 2)) for _ in range(4))
    t0, t1, ok = grouping.segment_within(p0, p1, q0, q1, 0.3)
    segs_p = shapely.linestrings(np.stack([p0, p1], axis=1))
    segs_q = shapely.linestrings(np.stack([q0, q1], axis=1))
    inside = shapely.length(shapely.intersection(segs_p, shapely.buffer(segs_q, 0.3, quad_segs=64)))
    got = np.where(ok, (t1 - t0) * np.hypot(*(p1 - p0).T), 0.0)
    assert np.allclose(got, inside, atol=2e-3)


def test_doctests():
    assert doctest.testmod(grouping).failed == 0


# -- through check(): Cg from the drawn routes ----------------------------------

def test_check_groups_circuits_on_a_synthetic_plan():
    # four radials leave the board together and run 5 m side by side 50 mm apart, then part
    routes = [((0.0, 0.0), (0.0, 0.05 * k), (5.0, 0.05 * k), (5.0 + 3.0 * k, 4.0)) for k in range(4)]
    cs = tuple(Circuit(str(k), "CU1", Device("mcb", "mcb", 16, "B"), Cable(2.5, 1.5), use="fixed",
                       load_a=13.0, run="direct", route=r) for k, r in enumerate(routes))
    plan = Plan("mem.yaml", Supply(ze_ohm=0.35), (Board("CU1", (0.0, 0.0), 2.4),), cs)
    r = check(plan)
    assert r.circuits["group_size"].tolist() == [4, 4, 4, 4]
    # Iz = 27 x 1.00 x 0.65 = 17.55 A >= 16 A (Tables 4D5, 4B1 at 30 °C, 4C1; from memory)
    assert r.circuits["iz_a"] == pytest.approx([17.55] * 4)
    assert [c["capacity"] for c in r.checks] == ["pass"] * 4
    assert any("runs alongside" in m for m in r.messages[0])
    assert r.to_dict()["circuits"][0]["group_size"] == 4


# -- large plans: batches and exact merging --------------------------------------

def test_batches_do_not_change_the_runs(monkeypatch):
    # property: taking the routes a few segments at a time (whole routes per batch) finds
    # exactly the runs found in one batch
    rng = np.random.default_rng(5)
    lines = []
    for k in range(60):
        x, y = rng.uniform(0, 6, 2)
        steps = rng.choice([-1.0, 1.0], (4, 1)) * rng.uniform(0.5, 2.0, (4, 1)) * np.array([[1, 0], [0, 1]] * 2)
        lines.append(shapely.LineString(np.cumsum(np.vstack([[x, y], steps]), axis=0)))
    whole = grouping.shared_runs(lines, level=["ceiling", "floor"] * 30)
    monkeypatch.setattr(grouping, "_BATCH_SEGMENTS", 3)
    parts = grouping.shared_runs(lines, level=["ceiling", "floor"] * 30)
    assert whole.a.size > 50
    for f in ("a", "b", "start_m", "end_m"):
        assert np.array_equal(getattr(whole, f), getattr(parts, f))


def test_touching_intervals_merge_on_a_large_plan():
    # hand-worked: route a has a vertex at 0.31 m and runs 1.13 m alongside the straight route b,
    # 50 mm away: one run 0..1.13 m each way, for every one of 2000 such pairs, although one
    # long pair (5 km) lies far away (a running maximum offset by pair x 5 km, in floating
    # point, would lose the 1e-9 m needed to join the two intervals of a at its vertex)
    lines = [shapely.LineString([(0, 1000), (5000, 1000)]), shapely.LineString([(0, 1000.05), (5000, 1000.05)])]
    for i in range(2000):
        x = 10.0 * i
        lines.append(shapely.LineString([(x, 0.0), (x + 0.31, 0.0), (x + 1.13, 0.0)]))
        lines.append(shapely.LineString([(x, 0.05), (x + 1.13, 0.05)]))
    runs = grouping.shared_runs(lines)
    assert runs.a.size == 2 + 2 * 2000
    short = runs.a >= 2
    assert np.allclose(runs.start_m[short], 0.0) and np.allclose(runs.end_m[short], 1.13)


def test_running_max_restarts_exactly():
    # property: agrees with a plain loop, exactly, on values ~13 m with 100 000 restarts
    rng = np.random.default_rng(2)
    v = 13.0 + rng.uniform(0, 1, 300_000)
    restart = np.r_[True, rng.uniform(size=v.size - 1) < 1 / 3]
    got = grouping._running_max(v, restart)
    want = np.empty_like(v)
    for i in range(v.size):
        want[i] = v[i] if restart[i] else max(want[i - 1], v[i])
    assert np.array_equal(got, want)


def test_components_are_least_members():
    # hand-worked: edges 5-3, 3-4, 0-2 and a chain 9-8-7-6 over nodes 0..9; node 1 alone
    u, v = np.array([5, 3, 0, 9, 8, 7]), np.array([3, 4, 2, 8, 7, 6])
    assert grouping._components(10, u, v).tolist() == [0, 1, 0, 3, 3, 3, 6, 6, 6, 6]

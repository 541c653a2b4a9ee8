"""The cover grid of zsplan.labels: what it proves must be true by shapely's own
predicates, and with it label placement on a crowded sheet comes out the same."""
from __future__ import annotations

import numpy as np
import pytest
import shapely
from shapely.geometry import LineString, Polygon, box

import zsplan.labels as L
from zsplan.labels import LabelSpec, label_polygons, place_labels


def _scene(seed: int, n: int = 400, size: float = 120.0):
    """Axis-aligned boxes of 0.3 to 6 mm, some touching or overlapping."""
    rng = np.random.default_rng(seed)
    x0, y0 = rng.uniform(0, size, n), rng.uniform(0, size, n)
    w, h = rng.uniform(0.3, 6.0, n), rng.uniform(0.3, 6.0, n)
    return [box(a, b, a + c, b + d) for a, b, c, d in zip(x0, y0, w, h)]


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_a_box_proved_blocked_does_touch_an_obstacle(seed):
    obstacles = _scene(seed)
    cover = L._Cover.of(obstacles)
    tree = shapely.STRtree(obstacles)
    rng = np.random.default_rng(100 + seed)
    n, proved = 3000, 0
    for width, height in ((1.0, 1.0), (12.0, 3.1), (30.0, 2.2), (4.0, 9.0)):
        cx, cy = rng.uniform(0, 120, n), rng.uniform(0, 120, n)
        angles = rng.choice([0.0, -90.0, 90.0, 180.0, -180.0, 30.0, 45.0], n)
        blocked = cover.blocks(cx, cy, width, height, angles)
        polys = label_polygons(cx, cy, width, height, angles)
        hit = np.zeros(n, dtype=bool)
        hit[tree.query(polys, predicate="intersects")[0]] = True
        assert not (blocked & ~hit).any()        # never a collision that is not there
        assert not blocked[np.isin(angles, (30.0, 45.0))].any()    # turned boxes: not judged
        proved += blocked.sum()
    assert proved > 4 * n // 10                  # and a good share proved (else it is no use)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_a_leader_proved_crossing_does_cross_an_obstacle(seed):
    obstacles = _scene(seed)
    cover = L._Cover.of(obstacles)
    rng = np.random.default_rng(200 + seed)
    n = 3000
    starts = rng.uniform(0, 120, (n, 2))
    ends = starts + rng.normal(0, 8, (n, 2))
    crossed = cover.crosses(starts, ends)
    lines = shapely.linestrings(np.stack([starts, ends], axis=1))
    truth = shapely.STRtree(obstacles).query(lines, predicate="crosses")
    hit = np.zeros(n, dtype=bool)
    hit[truth[0]] = True
    assert crossed.sum() > n // 10
    assert not (crossed & ~hit).any()


def test_a_leader_inside_one_box_does_not_cross_it():
    # hand-worked: a line wholly inside a box lies within it; "crosses" needs a
    # part outside too (DE-9IM T*T******, line/area)
    cover = L._Cover.of([box(0, 0, 10, 10)])
    starts = np.array([[2.0, 2.0], [2.0, 2.0], [-1.0, 5.0], [5.0, 5.0]])
    ends = np.array([[8.0, 8.0], [12.0, 2.0], [11.0, 5.0], [10.0, 5.0]])
    got = cover.crosses(starts, ends)
    truth = [LineString([s, e]).crosses(box(0, 0, 10, 10)) for s, e in zip(starts, ends)]
    assert truth == [False, True, True, False]
    assert list(got) == [False, True, True, False]


def test_only_axis_aligned_rectangles_make_the_cover():
    tri = Polygon([(0, 0), (4, 0), (0, 4)])
    turned = shapely.affinity.rotate(box(0, 0, 4, 4), 30)
    bow_tie = Polygon([(0, 0), (4, 4), (4, 0), (0, 4)])
    with_hole = Polygon([(0, 0), (9, 0), (9, 9), (0, 9)], [[(1, 1), (8, 1), (8, 8), (1, 8)]])
    assert L._Cover.of([tri, turned, bow_tie, with_hole, LineString([(0, 0), (5, 5)])]) is None
    cover = L._Cover.of([tri, box(20, 20, 30, 30), turned])
    assert cover.boxes.tolist() == [[20.0, 20.0, 30.0, 30.0]]
    # the hole of the ring is no obstacle: a label in it is not proved blocked
    cover = L._Cover.of([with_hole, box(50, 50, 54, 54)])
    assert cover.blocks([4.5, 52.0], [4.5, 52.0], 6.0, 4.0, 0.0).tolist() == [False, True]


def _crowded():
    """Routes on a grid with a symbol every 6 mm along them: a crowded sheet."""
    specs, obstacles, lines = [], [], []
    for k in range(24):
        y = 8.0 + 6.5 * k
        x0 = 5.0 + 3.0 * (k % 5)
        route = ((x0, y), (x0 + 150.0, y), (x0 + 150.0, y + 4.0))
        text = f"DB1/{k + 1} · {20 + k}.0 m · Zs 0.{40 + k}/1.37 Ω"
        specs.append(LabelSpec(f"DB1/{k + 1}", text, route, 2.5, clearance=0.9))
        lines.append(LineString(route))
        obstacles += [box(x - 2.5, y - 2.5, x + 2.5, y + 2.5) for x in np.arange(x0, x0 + 150, 6.0)]
    return specs, obstacles, lines


@pytest.mark.parametrize("budget, leader_cap", [(100_000, 1_000), (3_000, 400), (None, 200)])
def test_placement_is_the_same_with_and_without_the_cover(monkeypatch, budget, leader_cap):
    specs, obstacles, lines = _crowded()
    kw = dict(obstacles=obstacles, bounds=(0, 0, 220, 180), lines=lines, budget=budget,
              leader_cap=leader_cap)
    proved = []

    def counted(method):
        def run(self, *args):
            got = method(self, *args)
            proved.append(int(got.sum()))
            return got
        return run

    monkeypatch.setattr(L._Cover, "blocks", counted(L._Cover.blocks))
    monkeypatch.setattr(L._Cover, "crosses", counted(L._Cover.crosses))
    with_cover = place_labels(specs, **kw)
    assert sum(proved) > 0                          # the cover did prove collisions here
    monkeypatch.setattr(L._Cover, "of", classmethod(lambda cls, geoms: None))
    without = place_labels(specs, **kw)
    assert with_cover == without
    assert 0 < len(with_cover)


def test_obstacles_far_apart_give_a_coarser_grid_not_a_huge_one():
    far = [box(0, 0, 4, 4), box(1e9, 1e9, 1e9 + 4, 1e9 + 4), box(0, 1e9, 4, 1e9 + 4)]
    cover = L._Cover.of(far)
    assert cover.owner.size <= 1.01 * L._Cover.MAX_CELLS
    # still sound: labels placed with a budget keep clear of the obstacles
    spec = LabelSpec("A", "DB1/1 · 5.0 m", ((-20.0, 2.0), (30.0, 2.0)), 2.5)
    (p,) = place_labels([spec], obstacles=far, budget=10_000)
    assert not p.polygon.intersects(far[0])

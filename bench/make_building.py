"""Write a synthetic plan of a whole building: N circuits over many boards and floors.

Run:  python bench/make_building.py N OUT.yaml [--seed S]

The plan is invented, seeded random data for timing only (the building, its
address and every value in it are made up).  It is a valid plan file, format
version 1 (docs/plan-format.md), that ``zsplan check`` reads without error:

* one main switchboard ``MSB`` on the ground floor; on every floor (about
  1000 circuits a floor, 3 to 60 floors) a floor board ``Lnn-DB0`` fed from
  ``MSB`` by a sub-main (the riser) and sub-boards ``Lnn-DBk`` fed from the
  floor board, each board serving its own zone of the floor plate;
* 12 to 36 circuits per board, refs ``1``, ``2``, ... within each board;
* routes of 3 to 15 vertices starting at the board (within 0.28 m),
  running at right angles within the board's zone; rings (about one
  socket circuit in three) return to their board;
* 2 to 8 outlets per circuit, placed on the route;
* devices: circuit-breakers (mcb, rcbo) of types B, C and D in several
  ratings, and a few BS 88-2 / BS 88-3 fuses; cables of IEC 60228 sizes
  matched to the device; uses sockets, lighting, fixed and distribution;
  runs in the ceiling void and in the floor.

Floors are laid side by side on the plan, in a square grid of 80 m x 50 m
floor plates 10 m apart.
The same N and seed always give the same file.
"""
from __future__ import annotations

import argparse
import math
import os
import sys
from pathlib import Path

import numpy as np

DEFAULT_SEED = 9
FLOOR_W_M, FLOOR_D_M, FLOOR_GAP_M = 80.0, 50.0, 10.0   # invented floor plate
MARGIN_M = 2.0
CIRCUITS_PER_BOARD = (12, 36)
CEILING_M = 2.7          # invented building: ceiling-void run height

# (use, weight, options); each option: (weight, device, cable, heights, ring?)
# Device/cable pairings are typical choices for an invented building
# (common practice (no published source)); sizes are IEC 60228 Table 2 sizes and
# ratings are those in zsplan's device data.
_B = "{type: %s, curve: %s, rating: %d A}"
_F = "{type: fuse, standard: %s, rating: %d A}"
_CAB = ("%s", "%s")   # line, cpc [mm2]
USES = [
    ("lighting", 0.35, [
        (0.45, _B % ("mcb", "B", 6), ("1.5", "1.0"), False),
        (0.20, _B % ("mcb", "B", 10), ("1.5", "1.0"), False),
        (0.20, _B % ("rcbo", "B", 6), ("1.0", "1.0"), False),
        (0.10, _B % ("rcbo", "C", 10), ("1.5", "1.5"), False),
        (0.05, _F % ("bs88-3", 5), ("1.0", "1.0"), False),
    ]),
    ("sockets", 0.40, [
        (0.20, _B % ("mcb", "B", 32), ("2.5", "1.5"), True),
        (0.15, _B % ("rcbo", "B", 32), ("2.5", "1.5"), True),
        (0.25, _B % ("rcbo", "B", 20), ("2.5", "1.5"), False),
        (0.15, _B % ("mcb", "B", 16), ("2.5", "1.5"), False),
        (0.15, _B % ("mcb", "C", 32), ("4", "1.5"), False),
        (0.05, _F % ("bs88-3", 32), ("4", "2.5"), False),
        (0.05, _F % ("bs88-2", 20), ("2.5", "1.5"), False),
    ]),
    ("fixed", 0.22, [
        (0.20, _B % ("mcb", "C", 16), ("2.5", "1.5"), False),
        (0.15, _B % ("mcb", "C", 20), ("2.5", "1.5"), False),
        (0.10, _B % ("mcb", "D", 16), ("2.5", "2.5"), False),
        (0.10, _B % ("mcb", "D", 32), ("6", "2.5"), False),
        (0.15, _B % ("mcb", "B", 40), ("10", "4"), False),
        (0.10, _B % ("rcbo", "C", 25), ("4", "2.5"), False),
        (0.10, _F % ("bs88-2", 32), ("6", "2.5"), False),
        (0.10, _F % ("bs88-3", 16), ("2.5", "1.5"), False),
    ]),
    ("distribution", 0.03, [
        (0.40, _B % ("mcb", "C", 63), ("16", "6"), False),
        (0.30, _F % ("bs88-2", 63), ("16", "10"), False),
        (0.30, _F % ("bs88-3", 45), ("10", "4"), False),
    ]),
]
RATING_OF = {}   # device text -> rating, for design currents


def _rating(device: str) -> int:
    r = RATING_OF.get(device)
    if r is None:
        r = RATING_OF[device] = int(device.split("rating: ")[1].split(" ")[0])
    return r


# outlet heights above floor [m] by use  # common practice (no published source)
HEIGHTS = {"lighting": (2.4, 2.6), "sockets": (0.45, 1.1), "fixed": (0.45, 1.2, 1.8),
           "distribution": (1.6,)}
PREFIX = {"lighting": "L", "sockets": "S", "fixed": "F", "distribution": "D"}


def _f(x: float) -> str:
    return f"{x:.2f}"          # centimetres, as drawn


def _walk(rng, start, n_vertices, box, axis, close_at=None):
    """An orthogonal route of ``n_vertices`` points from ``start`` inside ``box``.

    Each step runs 0.5-3.5 m along x or y (alternately), turned back where the
    floor's edge is nearer than the step.  With ``close_at`` the last vertex
    is that point (a ring back at its board).
    """
    lo, hi = (box[0], box[1]), (box[2], box[3])
    p = [float(start[0]), float(start[1])]
    pts = [tuple(p)]
    body = n_vertices - 1 if close_at is None else n_vertices - 2
    for _ in range(body):
        step = float(rng.uniform(0.5, 3.5))
        up, down = hi[axis] - p[axis], p[axis] - lo[axis]
        sign = 1.0 if rng.random() < 0.5 else -1.0
        if (up if sign > 0 else down) < step:
            sign = -sign
        step = min(step, up if sign > 0 else down)
        p[axis] += sign * step
        pts.append(tuple(p))
        axis = 1 - axis
    if close_at is not None:
        pts.append(tuple(close_at))
    return pts


def _along(pts, dist):
    """Points at distances ``dist`` along the polyline ``pts``."""
    p = np.asarray(pts, dtype=float)
    seg = np.hypot(*np.diff(p, axis=0).T)
    cum = np.concatenate([[0.0], np.cumsum(seg)])
    k = np.clip(np.searchsorted(cum, dist, side="right") - 1, 0, len(seg) - 1)
    t = np.where(seg[k] > 0, (dist - cum[k]) / np.where(seg[k] > 0, seg[k], 1.0), 0.0)
    return p[k] + (p[k + 1] - p[k]) * t[:, None], cum[-1]


def building(n: int, seed: int = DEFAULT_SEED) -> str:
    """The plan text (YAML) of an invented building with ``n`` circuits."""
    rng = np.random.default_rng(seed)
    # circuits per board, boards over floors
    counts = []
    while sum(counts) < n:
        counts.append(int(rng.integers(CIRCUITS_PER_BOARD[0], CIRCUITS_PER_BOARD[1] + 1)))
    if counts:
        counts[-1] -= sum(counts) - n
        if counts[-1] <= 0:
            counts.pop()
    n_boards = len(counts)
    n_floors = int(min(max(3, math.ceil(n / 1000)), 60))
    n_floors = max(1, min(n_floors, n_boards))
    per_floor = np.array_split(np.arange(n_boards), n_floors)

    out = [
        "# Invented building for zsplan's benchmarks (bench/make_building.py):",
        f"# {n} circuits, seed {seed}.  Synthetic data for timing only.",
        "zsplan: 1",
        "title: Harrowgate Yard Teaching Hospital, East Wing (invented)",
        "supply:",
        "  u0: 230 V",
        "  earthing: TN-C-S",
        "  ze: 0.12 ohm",
        "  cmin: 0.95",
        "defaults:",
        f"  ceiling: {CEILING_M} m",
        "  allowance: 10 %",
        "  extra: 0.5 m",
        "  ambient: 25 degC",
        "  test_temperature: 20 degC",
        "boards:",
        "  - ref: MSB",
        "    at: [3.000, 3.000]",
        "    height: 1.8 m",
    ]
    board_of = []   # (ref, (x, y), height, the board's zone)
    grid = math.ceil(math.sqrt(n_floors))      # floors side by side on the plan
    for f, ids in enumerate(per_floor):
        x_off = (f % grid) * (FLOOR_W_M + FLOOR_GAP_M)
        y_off = (f // grid) * (FLOOR_D_M + FLOOR_GAP_M)
        # each board serves its own zone of the floor plate (a grid of cells)
        cols = max(1, math.ceil(math.sqrt(len(ids) * FLOOR_W_M / FLOOR_D_M)))
        rows = max(1, math.ceil(len(ids) / cols))
        cw, ch = (FLOOR_W_M - 2 * MARGIN_M) / cols, (FLOOR_D_M - 2 * MARGIN_M) / rows
        riser = 6.0 + 3.8 * f          # invented: storey height 3.8 m
        for k, b in enumerate(ids):
            cx = x_off + MARGIN_M + (k % cols) * cw
            cy = y_off + MARGIN_M + (k // cols) * ch
            zone = (cx + 0.25, cy + 0.25, cx + cw - 0.25, cy + ch - 0.25)
            ref = f"L{f:02d}-DB{k}"
            at = (float(rng.uniform(cx + 0.3 * cw, cx + 0.7 * cw)),
                  float(rng.uniform(cy + 0.3 * ch, cy + 0.7 * ch)))
            h = float(rng.choice([1.4, 1.6, 1.8]))
            board_of.append((ref, at, h, zone))
            out += [f"  - ref: {ref}",
                    f"    at: [{_f(at[0])}, {_f(at[1])}]",
                    f"    height: {h} m"]
            if k == 0:
                out.append(f"    fed_from: {{board: MSB, cable: {{line: 70 mm2, cpc: 35 mm2}}, "
                           f"length: {riser:.1f} m, device: {{type: fuse, standard: bs88-2, "
                           f"rating: 200 A}}, load: 120 A}}")
            else:
                length = float(rng.uniform(8.0, 45.0))
                out.append(f"    fed_from: {{board: L{f:02d}-DB0, cable: {{line: 16 mm2, cpc: 16 mm2}}, "
                           f"length: {length:.1f} m, device: {{type: fuse, standard: bs88-2, "
                           f"rating: 63 A}}, load: 40 A}}")

    out.append("circuits:")
    use_w = np.array([u[1] for u in USES])
    use_k = rng.choice(len(USES), size=n, p=use_w / use_w.sum())
    option = [np.array([o[0] for o in u[2]]) for u in USES]
    i = 0
    for b, cnt in enumerate(counts):
        ref_b, at_b, h_b, box = board_of[b]
        for r in range(1, cnt + 1):
            use, _, opts = USES[use_k[i]]
            w = option[use_k[i]]
            _, device, cable, ring_ok = opts[int(rng.choice(len(opts), p=w / w.sum()))]
            ring = ring_ok and rng.random() < 0.85
            # leave the board a little to one side (within the 0.3 m drawing tolerance)
            side = float(rng.uniform(-0.28, 0.28))
            axis0 = int(rng.integers(0, 2))
            start = (at_b[0] + side, at_b[1]) if axis0 else (at_b[0], at_b[1] + side)
            if ring:
                nv = int(rng.integers(5, 16))
                back = rng.uniform(-0.12, 0.12, 2)
                route = _walk(rng, start, nv, box, axis0, close_at=(at_b[0] + back[0], at_b[1] + back[1]))
            else:
                nv = int(rng.integers(3, 16))
                route = _walk(rng, start, nv, box, axis0)
            k_out = int(rng.integers(2, 9))
            total = float(np.sum(np.hypot(*np.diff(np.asarray(route), axis=0).T)))
            dist = np.sort(rng.uniform(0.05, 1.0, k_out)) * total
            if not ring and rng.random() < 0.6:
                dist[-1] = total            # most radials end at an outlet
            opts_xy, _ = _along(route, dist)
            run = "floor" if (use == "sockets" and rng.random() < 0.4) else "ceiling"
            heights = HEIGHTS[use]
            lines = [f'  - ref: "{r}"',
                     f"    board: {ref_b}",
                     f"    name: {use.capitalize()} {ref_b}/{r}",
                     f"    use: {use}"]
            if ring:
                lines.append("    topology: ring")
            lines.append(f"    device: {device}")
            if "rcbo" in device or (use == "sockets" and rng.random() < 0.5):
                lines.append("    rcd: 30 mA")
            hot = ", temp_rating: 90 degC" if rng.random() < 0.1 else ""
            lines.append(f"    cable: {{line: {cable[0]} mm2, cpc: {cable[1]} mm2{hot}}}")
            if rng.random() < 0.7:
                load = round(float(rng.uniform(0.2, 0.9)) * _rating(device) * 2) / 2
                lines.append(f"    load: {max(load, 0.5):g} A")
            if run != "ceiling":
                lines.append(f"    run: {run}")
            lines.append("    route: [" + ", ".join(f"[{_f(x)}, {_f(y)}]" for x, y in route) + "]")
            lines.append("    outlets:")
            pre = PREFIX[use]
            for j, (x, y) in enumerate(opts_xy):
                h = heights[int(rng.integers(0, len(heights)))]
                lines.append(f"      - {{at: [{_f(x)}, {_f(y)}], height: {h} m, name: {pre}{j + 1}}}")
            out += lines
            i += 1
    return "\n".join(out) + "\n"


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("n", type=int, help="number of circuits")
    p.add_argument("out", type=Path, help="plan file to write (YAML)")
    p.add_argument("--seed", type=int, default=DEFAULT_SEED, help=f"random seed (default {DEFAULT_SEED})")
    a = p.parse_args(argv)
    if a.n < 1:
        p.error("N must be at least 1")
    text = building(a.n, a.seed)
    tmp = a.out.with_name(a.out.name + ".part")
    tmp.write_text(text, encoding="utf-8")
    os.replace(tmp, a.out)              # no partial file if interrupted
    print(f"{a.out}: {a.n} circuits, {len(text) / 1e6:.1f} MB", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())

"""Throughput of the earth-fault loop engine (zsplan.loop.evaluate).

Run:  python bench/engine.py [--sizes 1000 10000 ...] [--repeats 20] [--profile N]

For each N it builds N random circuits (seeded; invented data for timing only):
mixed circuit-breakers (types B, C, D; several ratings), RCBOs and fuses of
every bundled fuse family, mixed cables, lengths 1-120 m, Ze 0.05-1.5 ohm,
one circuit in five a ring, 0.4 s or 5 s disconnection limits.  It times:

pack      CurveSet.from_devices on the N Device objects (device -> curve packing),
          median of the repeats
evaluate  loop.evaluate on the packed curves (the whole chain, all outputs), best of
          the repeats after one call that builds the curves' look-up tables
bare      the bare formula on the same arrays, plain numpy, best of the repeats:
          Zs = Ze + L (r1 + r2) 1.2 / 1000,  If = Cmin U0 / Zs
ratio     evaluate / bare

evaluate and bare take turns, call by call, so that both meet the same machine
state (load, caches, allocator).

With ``--profile N`` it also profiles 200 evaluates of N circuits (cProfile,
after one that builds the tables) and prints the functions that dominate.
"""
from __future__ import annotations

import argparse
import cProfile
import io
import pstats
import statistics
import sys
import time
from pathlib import Path

import numpy as np

try:
    import zsplan  # noqa: F401
except ImportError:                        # run from a checkout without installing
    sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "src"))

from zsplan import loop, protection
from zsplan.conductors import resistance_20c
from zsplan.model import Device

SEED = 20240607
# invented mix, for timing only
DEVICES = (
    [Device("mcb", "mcb", r, "B") for r in (6, 10, 16, 20, 32, 40)]
    + [Device("mcb", "mcb", r, "C") for r in (10, 16, 32, 63)]
    + [Device("mcb", "mcb", r, "D") for r in (16, 32)]
    + [Device("rcbo", "rcbo", r, "B") for r in (16, 32)]
    + [Device("fuse", "bs88-3", r) for r in (5, 16, 20, 32, 45)]
    + [Device("fuse", "bs88-2", r) for r in (6, 10, 16, 20, 32, 63)]
    + [Device("fuse", "bs3036", r) for r in (5, 15, 30)]
    + [Device("fuse", "bs1362", r) for r in (3, 13)]
)
PAIRS = np.array([(1.0, 1.0), (1.5, 1.0), (1.5, 1.5), (2.5, 1.5), (2.5, 2.5), (4.0, 1.5),
                  (6.0, 2.5), (10.0, 4.0), (16.0, 6.0)])


def circuits(n: int, rng: np.random.Generator) -> dict:
    pair = PAIRS[rng.integers(0, len(PAIRS), n)]
    dev = rng.integers(0, len(DEVICES), n)
    return {
        "devices": [DEVICES[k] for k in dev],
        "length_m": rng.uniform(1.0, 120.0, n),
        "line_mm2": pair[:, 0],
        "cpc_mm2": pair[:, 1],
        "ze_ohm": rng.uniform(0.05, 1.5, n),
        "ring": rng.random(n) < 0.2,
        "t_required_s": np.where(rng.random(n) < 0.7, 0.4, 5.0),
    }


def run_evaluate(c, cs, idx):
    return loop.evaluate(length_m=c["length_m"], line_mm2=c["line_mm2"], cpc_mm2=c["cpc_mm2"],
                         ze_ohm=c["ze_ohm"], curves=cs, curve_index=idx,
                         t_required_s=c["t_required_s"], ring=c["ring"])


def bare(ze, length_m, r1, r2, u0=230.0, cmin=0.95):
    zs = ze + length_m * (r1 + r2) * 1.2 / 1000.0
    return cmin * u0 / zs


def best_in_turns(fns, repeats: int) -> list[float]:
    """Best time of each function, calling them in turn ``repeats`` times."""
    best = [float("inf")] * len(fns)
    for _ in range(repeats):
        for k, fn in enumerate(fns):
            t0 = time.perf_counter()
            fn()
            best[k] = min(best[k], time.perf_counter() - t0)
    return best


def median_time(fn, repeats: int) -> tuple[float, object]:
    times, out = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), out


def bench(n: int, repeats: int) -> dict:
    rng = np.random.default_rng(SEED + n)
    c = circuits(n, rng)
    t_pack, (cs, idx) = median_time(lambda: protection.CurveSet.from_devices(c["devices"]), repeats)
    res = run_evaluate(c, cs, idx)          # builds the curves' tables (once per curve set)
    r1 = resistance_20c(c["line_mm2"])      # table look-up outside the bare timing
    r2 = resistance_20c(c["cpc_mm2"])
    t_eval, t_bare = best_in_turns([lambda: run_evaluate(c, cs, idx),
                                    lambda: bare(c["ze_ohm"], c["length_m"], r1, r2)], repeats)
    i_bare = bare(c["ze_ohm"], c["length_m"], r1, r2)
    radial = ~c["ring"]                     # sanity: the engine and the bare formula agree
    assert np.allclose(res["fault_current_a"][radial], i_bare[radial], rtol=1e-12)
    return {"n": n, "pack": t_pack, "eval": t_eval, "bare": t_bare, "curves": cs.size,
            "points": cs.log_i.shape[1]}


def profile(n: int, top: int = 12) -> str:
    c = circuits(n, np.random.default_rng(SEED + n))
    cs, idx = protection.CurveSet.from_devices(c["devices"])
    run_evaluate(c, cs, idx)                # builds the curves' tables (once per curve set)
    pr = cProfile.Profile()
    pr.enable()
    for _ in range(200):
        run_evaluate(c, cs, idx)
    pr.disable()
    buf = io.StringIO()
    pstats.Stats(pr, stream=buf).sort_stats("tottime").print_stats(top)
    return buf.getvalue()


def fmt_s(t: float) -> str:
    if t < 1e-3:
        return f"{t * 1e6:9.1f} us"
    return f"{t * 1e3:9.2f} ms" if t < 1 else f"{t:9.3f} s "


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[10**3, 10**4, 10**5, 10**6])
    ap.add_argument("--repeats", type=int, default=20)
    ap.add_argument("--profile", type=int, default=0, metavar="N",
                    help="also profile 200 evaluates of N circuits")
    a = ap.parse_args(argv)

    print(f"zsplan engine benchmark  (numpy {np.__version__}, python {sys.version.split()[0]}, "
          f"best of {a.repeats}, evaluate and bare in turns)")
    head = (f"{'N':>9} | {'pack':>12} | {'evaluate':>12} | {'circuits/s':>11} | "
            f"{'bare':>12} | {'bare circ/s':>11} | {'eval/bare':>9}")
    print(head)
    print("-" * len(head))
    for n in a.sizes:
        r = bench(n, a.repeats)
        print(f"{n:>9,} | {fmt_s(r['pack']):>12} | {fmt_s(r['eval']):>12} | "
              f"{n / r['eval']:>11.3g} | {fmt_s(r['bare']):>12} | {n / r['bare']:>11.3g} | "
              f"{r['eval'] / r['bare']:>8.0f}x")
    print(f"({r['curves']} distinct curves, padded to {r['points']} points; "
          "pack = CurveSet.from_devices, not included in evaluate)")
    if a.profile:
        print(f"\ncProfile of 200 evaluates, N = {a.profile:,}:")
        print(profile(a.profile))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

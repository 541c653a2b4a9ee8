"""A whole building through zsplan: time and peak memory of every step.

Run:  python bench/run.py [--sizes 1000 10000 50000] [--repeats R] [--workdir DIR]
                          [--peer-max N] [--seed S]

For each N it writes the invented building of ``bench/make_building.py``
(cached in the work folder) and times, each in a fresh Python process so that
the peak resident memory (``ru_maxrss``) belongs to that step alone:

load       zsplan.load_plan (YAML, validation, units) of the plan file
geometry   zsplan.geometry.circuit_lengths on the loaded plan
engine     zsplan.loop.evaluate on the circuits' arrays (as zsplan.check builds
           them with check.circuit_inputs): R1+R2, Zs, If, Ia, t, limits, margin
check      zsplan.check on the loaded plan: geometry, engine for circuits,
           points and sub-mains, the other checks and the verdicts
render     zsplan.render.render_svg of the checked plan ('n/a' when absent)
json       json.dumps(results.to_dict()) of the checked plan
e2e        ``zsplan check --json PLAN`` as a subprocess, stdout to a file

and, in the same run, the floors:

yaml-C     yaml.load of the same file with PyYAML's C loader (CSafeLoader)
bare       the bare numpy formula on the engine's arrays:
           Zs = Ze + L (r1 + r2) 1.2 / 1000,  If = Cmin U0 / Zs
           (conductor resistances looked up beforehand, not timed)

and the peer: the same circuits through pandapower's IEC 60909-0 minimum
line-to-earth short-circuit calculation (tests/test_crosscheck_pandapower.py
gives the equivalent network), run in chunks of islands, with the largest
relative difference of the fault currents and the time ratio
pandapower / zsplan engine.

Peak memory is the process's maximum resident set; every step's process
also holds what the step needs (the loaded plan, the results), so it is the
peak of the pipeline up to and including that step.  Times are wall-clock,
the best of ``--repeats`` processes (the
machine may be shared: the least disturbed run is the estimate); the engine and the bare formula are
each the best of several calls within one process (they take milliseconds).
"""
from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
SRC = HERE.parent / "src"
STAGES = ("yaml-C", "load", "geometry", "engine", "check", "render", "json", "e2e")
PEER_CHUNK = 2000          # circuits per pandapower network (islands, see peer())

# targets of the issue (ratios within one run on one machine)
E2E_OVER_YAML_C = 1.5
ENGINE_OVER_BARE = 5.0
RENDER_10K_S = 3.0
SCALING_50K_10K = 5.5
PEAK_50K_MB = 1024.0


# -----------------------------------------------------------------------------
# the worker: one stage in this (fresh) process
# -----------------------------------------------------------------------------

def _rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0   # Linux: KiB


def _best(fn, k: int = 5) -> float:
    best = float("inf")
    for _ in range(k):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def _engine_arrays(plan):
    """The circuit arrays zsplan.check hands to loop.evaluate."""
    import numpy as np
    from zsplan.check import circuit_inputs
    from zsplan.geometry import circuit_lengths
    from zsplan.protection import CurveSet

    lengths = circuit_lengths(plan)
    inp = circuit_inputs(plan)
    curves, idx = CurveSet.from_devices(c.device for c in plan.circuits)
    length = np.array([L.worst_m for L in lengths], dtype=float)
    keys = ("line_mm2", "cpc_mm2", "material", "temp_rating_c", "cpc_with_line", "ring",
            "test_temperature_c", "t_required_s")
    kw = dict(length_m=length, ze_ohm=inp["board_ze_ohm"], curve_index=idx, curves=curves,
              u0_v=plan.supply.u0_v, cmin=plan.supply.cmin, alpha=plan.settings.alpha,
              test_limit=plan.settings.test_limit, **{k: inp[k] for k in keys})
    return kw


def _lift(size: int) -> str:
    """Code that lets the loader read a plan of ``size`` bytes (it refuses large ones by default)."""
    return ("import zsplan.loader as _l; _d = getattr(_l.load_plan, '__kwdefaults__', None) or {}; "
            f"'max_bytes' in _d and _d.update(max_bytes=max(_d['max_bytes'], {int(size) + 1}))")


def _lift_size_limit(path) -> None:
    exec(_lift(os.path.getsize(path)), {})


def stage(name: str, plan_path: str) -> dict:
    """Run one stage here and return its time and this process's peak memory."""
    out: dict = {}
    if name == "yaml-C":
        import yaml
        t = time.perf_counter()
        with open(plan_path, encoding="utf-8") as fh:
            yaml.load(fh.read(), Loader=yaml.CSafeLoader)
        out["t"] = time.perf_counter() - t
        out["rss"] = _rss_mb()
        return out

    import zsplan
    from zsplan.loader import load_plan
    _lift_size_limit(plan_path)
    t = time.perf_counter()
    plan = load_plan(plan_path)
    t_load = time.perf_counter() - t
    if name == "load":
        out["t"] = t_load
    elif name == "geometry":
        from zsplan.geometry import circuit_lengths
        t = time.perf_counter()
        circuit_lengths(plan)
        out["t"] = time.perf_counter() - t
    elif name == "engine":
        import numpy as np
        from zsplan import loop
        from zsplan.conductors import resistance_20c
        kw = _engine_arrays(plan)
        res = loop.evaluate(**kw)
        ze, L = kw["ze_ohm"], kw["length_m"]
        r1 = resistance_20c(kw["line_mm2"], kw["material"])
        r2 = resistance_20c(kw["cpc_mm2"], kw["material"])
        u0, cmin = kw["u0_v"], kw["cmin"]

        def bare():
            zs = ze + L * (r1 + r2) * 1.2 / 1000.0
            return cmin * u0 / zs

        # the engine (every step from the circuits' arrays to all its results) and the bare
        # formula take turns, 20 calls each, so both meet the same machine state; the best
        # call of each is the estimate (t_first5: the engine's best of its first 5 calls)
        t_engine, t_bare = [], []
        for _ in range(20):
            t_engine.append(_best(lambda: loop.evaluate(**kw), 1))
            t_bare.append(_best(bare, 1))
        out["t"], out["bare"] = min(t_engine), min(t_bare)
        out["t_first5"] = min(t_engine[:5])
        # a broken engine must not post a good time: same If where the bare formula applies
        same = ~kw["ring"] & (kw["temp_rating_c"] == 70.0) & kw["cpc_with_line"]
        if plan.settings.alpha == "bs7671" and same.any():
            err = np.max(np.abs(res["fault_current_a"][same] / bare()[same] - 1.0))
            if not err < 1e-12:
                raise SystemExit(f"engine and bare formula disagree by {err:.3g}")
        out["n_curves"] = kw["curves"].size
    elif name == "check":
        t = time.perf_counter()
        zsplan.check(plan)
        out["t"] = time.perf_counter() - t
    elif name == "render":
        try:
            from zsplan.render import render_svg
        except ImportError:
            out["t"] = None
        else:
            res = zsplan.check(plan)
            t = time.perf_counter()
            # a whole building on one sheet: A0, scaled to fill it
            svg = render_svg(res, sheet="A0", scale="exact")
            out["t"] = time.perf_counter() - t
            out["bytes"] = len(svg)
    elif name == "json":
        res = zsplan.check(plan)
        t = time.perf_counter()
        doc = json.dumps(res.to_dict())
        out["t"] = time.perf_counter() - t
        out["bytes"] = len(doc)
    elif name == "peer":
        out.update(peer(plan))
    else:
        raise SystemExit(f"unknown stage {name!r}")
    out["rss"] = _rss_mb()
    return out


def peer(plan) -> dict:
    """The circuits' worst-point fault currents by pandapower (IEC 60909-0) and by zsplan.

    Each circuit is an island: a source bus whose ext_grid has the
    phase-earth loop impedance of the circuit's board (the board's Ze,
    sub-mains included, as zsplan computes it) and the circuit's cable to the
    worst point (a ring: its two halves in parallel to the midpoint).  The
    mapping and its derivation are those of tests/test_crosscheck_pandapower.py:
    s_sc_min_mva = cmin Un^2 / Ze, rx_min = r0x0_min = 1e4, x0x_min = 1,
    lines with r0 = r1 + 3 r2 and endtemp_degree = the design temperature,
    calc_sc(fault='1ph', case='min', lv_tol_percent=6, inverse_y=False).

    With inverse_y=False pandapower solves the whole system once per fault
    bus, so one network's time grows with the square of its size; the
    islands are therefore run in networks of PEER_CHUNK circuits.
    """
    import warnings

    import numpy as np
    import pandas as pd
    import pandapower as pp
    from pandapower.shortcircuit import calc_sc

    from zsplan import loop
    from zsplan.conductors import resistance_20c

    kw = _engine_arrays(plan)
    zs_res = loop.evaluate(**kw)
    t_zs = _best(lambda: loop.evaluate(**kw))
    if plan.settings.alpha != "bs7671" or not np.all(kw["cpc_with_line"]):
        return {"skip": "peer needs alpha bs7671 and every cpc with its line conductors"}

    n = len(kw["length_m"])
    u0, cmin = plan.supply.u0_v, plan.supply.cmin
    vn_kv = np.sqrt(3.0) * u0 / 1000.0
    r1 = np.asarray(resistance_20c(kw["line_mm2"], kw["material"]), dtype=float)   # mohm/m = ohm/km
    r2 = np.asarray(resistance_20c(kw["cpc_mm2"], kw["material"]), dtype=float)
    ring = np.asarray(kw["ring"], dtype=bool)
    temp = np.asarray(kw["temp_rating_c"], dtype=float)
    length_km = np.where(ring, kw["length_m"] / 2.0, kw["length_m"]) / 1000.0
    s_sc = cmin * vn_kv ** 2 / kw["ze_ohm"]          # |Z1Q| = cmin Un^2 / S''kQ = Ze
    rx = 1e4

    ik = np.empty(n)
    t_build = t_calc = 0.0
    for a in range(0, n, PEER_CHUNK):
        sl = slice(a, min(n, a + PEER_CHUNK))
        m = sl.stop - sl.start
        t0 = time.perf_counter()
        net = pp.create_empty_network()
        src = np.asarray(pp.create_buses(net, m, vn_kv=vn_kv))
        far = np.asarray(pp.create_buses(net, m, vn_kv=vn_kv))
        # one ext_grid per island, written as one table (create_ext_grid per row
        # takes about a millisecond each)
        pp.create_ext_grid(net, int(src[0]), s_sc_min_mva=float(s_sc[sl][0]), rx_min=rx, x0x_min=1.0,
                           r0x0_min=rx, s_sc_max_mva=float(s_sc[sl][0]), rx_max=rx, x0x_max=1.0,
                           r0x0_max=rx)
        row = net.ext_grid.iloc[[0] * m].reset_index(drop=True)
        row["bus"] = src
        row["s_sc_min_mva"] = s_sc[sl]
        row["s_sc_max_mva"] = s_sc[sl]
        row["name"] = None
        net.ext_grid = row.astype(net.ext_grid.dtypes.to_dict())
        legs = np.concatenate([np.arange(m), np.flatnonzero(ring[sl])])   # a ring's second half
        g = legs + sl.start
        pp.create_lines_from_parameters(
            net, src[legs], far[legs], length_km=length_km[g], r_ohm_per_km=r1[g],
            x_ohm_per_km=np.zeros(len(g)), c_nf_per_km=np.zeros(len(g)), max_i_ka=np.ones(len(g)),
            r0_ohm_per_km=r1[g] + 3.0 * r2[g], x0_ohm_per_km=np.zeros(len(g)),
            c0_nf_per_km=np.zeros(len(g)), endtemp_degree=temp[g])
        t1 = time.perf_counter()
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            calc_sc(net, bus=far, fault="1ph", case="min", lv_tol_percent=6, inverse_y=False)
        t2 = time.perf_counter()
        ik[sl] = net.res_bus_sc.loc[far, "ikss_ka"].to_numpy() * 1000.0
        t_build += t1 - t0
        t_calc += t2 - t1
    err = np.abs(zs_res["fault_current_a"] / ik - 1.0)
    return {"t": t_build + t_calc, "build": t_build, "calc": t_calc, "zsplan": t_zs,
            "max_rel_err": float(np.max(err)), "n": n, "chunk": PEER_CHUNK,
            "pandas": pd.__version__, "pandapower": pp.__version__}


# -----------------------------------------------------------------------------
# the driver
# -----------------------------------------------------------------------------

def _env() -> dict:
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join([str(SRC)] + [p for p in env.get("PYTHONPATH", "").split(os.pathsep) if p])
    return env


class TimedOut(Exception):
    pass


def _wait(cmd, stdout, timeout=None) -> tuple[int, float, float]:
    """Run ``cmd``; its exit code, wall time and peak memory (MB) from wait4.

    Raises TimedOut when it runs longer than ``timeout`` seconds (it is killed).
    """
    t = time.perf_counter()
    p = subprocess.Popen(cmd, stdout=stdout, stderr=subprocess.PIPE, env=_env())
    killer = threading.Timer(timeout, p.kill) if timeout else None
    if killer:
        killer.start()
    err = p.stderr.read()
    _, status, ru = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t
    if killer:
        killer.cancel()
    p.returncode = os.waitstatus_to_exitcode(status)
    p.stderr.close()
    if killer and p.returncode == -9 and wall >= timeout:
        raise TimedOut(f"{timeout:g} s")
    if p.returncode not in (0, 1) or (p.returncode == 1 and b"Traceback" in err):
        raise RuntimeError(f"{' '.join(map(str, cmd))} failed ({p.returncode}):\n{err.decode(errors='replace')}")
    return p.returncode, wall, ru.ru_maxrss / 1024.0


def run_stage(name: str, plan: Path, timeout=None) -> dict:
    if name == "e2e":
        return e2e(plan)
    with tempfile.TemporaryFile() as fh:
        try:
            _wait([sys.executable, str(Path(__file__).resolve()), "--stage", name, "--plan", str(plan)],
                  fh, timeout)
        except TimedOut:
            return {"t": None, "rss": 0.0, "timeout": timeout}
        fh.seek(0)
        lines = fh.read().decode().strip().splitlines()
        if not lines:
            raise RuntimeError(f"step {name} printed nothing")
        return json.loads(lines[-1])


def _size_limit_in_child() -> int | None:
    r = subprocess.run([sys.executable, "-c", "from zsplan.loader import MAX_PLAN_BYTES as m; print(m)"],
                       env=_env(), capture_output=True, text=True)
    return int(r.stdout) if r.returncode == 0 else None


def _cli_available() -> bool:
    r = subprocess.run([sys.executable, "-c", "import zsplan.cli"], env=_env(), capture_output=True)
    return r.returncode == 0


def e2e(plan: Path) -> dict:
    """``zsplan check --json PLAN`` in a subprocess (the installed CLI's code)."""
    limit = _size_limit_in_child()
    lift = limit is not None and plan.stat().st_size > limit
    pre = _lift(plan.stat().st_size) + "; " if lift else ""
    if _cli_available():
        code = pre + "import sys; from zsplan.cli import main; sys.exit(main(sys.argv[1:]))"
        cmd = [sys.executable, "-c", code, "check", "--json", str(plan)]
        how = "zsplan check --json"
    else:
        code = (pre + "import sys, json, zsplan; "
                "print(json.dumps(zsplan.check(sys.argv[1]).to_dict()))")
        cmd = [sys.executable, "-c", code, str(plan)]
        how = "python -c zsplan.check (no zsplan.cli)"
    if lift:
        how += f" (the loader's {limit:,}-byte plan-size limit lifted for this file)"
    with tempfile.TemporaryFile() as fh:
        rc, wall, rss = _wait(cmd, fh)
        size = fh.seek(0, os.SEEK_END)
    return {"t": wall, "rss": rss, "how": how, "exit": rc, "bytes": size}


def _best_of(runs: list[dict], key: str = "t"):
    vals = [r[key] for r in runs if r.get(key) is not None]
    return min(vals) if vals else None


def measure(n: int, plan: Path, repeats: int, peer_on: bool, log, timeout) -> dict:
    res: dict = {}
    for name in STAGES:
        runs = [run_stage(name, plan, timeout)]
        if runs[0].get("timeout") is None:
            runs += [run_stage(name, plan, timeout) for _ in range(repeats - 1)]
        res[name] = {"t": _best_of(runs), "rss": max(r["rss"] for r in runs), **{
            k: v for k, v in runs[0].items() if k not in ("t", "rss")}}
        if name == "engine":
            res[name]["bare"] = _best_of(runs, "bare")
        log(f"  N={n:>6} {name:<9} {_fmt_t(res[name]['t'], res[name].get('timeout')):>10}  {res[name]['rss']:7.0f} MB")
    if peer_on:
        res["peer"] = run_stage("peer", plan)
        log(f"  N={n:>6} peer      {_fmt_t(res['peer'].get('t')):>10}  err {res['peer'].get('max_rel_err')}")
    return res


def _fmt_t(t, timeout=None) -> str:
    if t is None:
        return f">{timeout:g} s" if timeout else "     n/a"
    return f"{t:8.3f}" if t >= 0.01 else f"{t * 1000:6.3f}ms"


def report(all_res: dict, sizes: list[int], plans: dict) -> str:
    lines = []
    w = lambda s="": lines.append(s)  # noqa: E731
    w(f"zsplan bench/run.py - python {sys.version.split()[0]}, {os.cpu_count()} CPU(s)")
    w("Times: wall seconds (best of the runs); memory: peak RSS of the step's process, MB.")
    w()
    head = f"{'step':<10}" + "".join(f"{f'N={n:,}':>22}" for n in sizes)
    w(head)
    w(f"{'':<10}" + "".join(f"{'time s':>12}{'peak MB':>10}" for _ in sizes))
    names = {"yaml-C": "yaml-C *", "engine": "engine", "e2e": "e2e"}
    for name in STAGES:
        row = f"{names.get(name, name):<10}"
        for n in sizes:
            r = all_res[n][name]
            row += f"{_fmt_t(r['t'], r.get('timeout')):>12}{r['rss']:>10.0f}"
        w(row)
    row = f"{'bare *':<10}"
    for n in sizes:
        row += f"{_fmt_t(all_res[n]['engine']['bare']):>12}{'':>10}"
    w(row)
    if any("peer" in all_res[n] for n in sizes):
        row = f"{'peer':<10}"
        for n in sizes:
            p = all_res[n].get("peer")
            row += f"{_fmt_t(p.get('t')) if p else '     n/a':>12}{p['rss'] if p else 0:>10.0f}"
        w(row)
    w("(* floors: bare PyYAML C-loader parse of the same file; bare numpy Zs/If formula)")
    w()
    w("plan files: " + ", ".join(f"N={n:,}: {plans[n].stat().st_size / 1e6:.1f} MB" for n in sizes))
    for n in sizes:
        e = all_res[n]["e2e"]
        w(f"e2e N={n:,}: {e['how']}, exit code {e['exit']} (1: some circuits fail, as the plan intends)")
    w()
    w("Ratios")
    for n in sizes:
        r = all_res[n]
        parts = []
        if r["yaml-C"]["t"]:
            parts.append(f"e2e/yaml-C {r['e2e']['t'] / r['yaml-C']['t']:.2f}")
            parts.append(f"load/yaml-C {r['load']['t'] / r['yaml-C']['t']:.2f}")
        parts.append(f"engine/bare {r['engine']['t'] / r['engine']['bare']:.1f}")
        p = r.get("peer")
        if p and p.get("t"):
            parts.append(f"pandapower/engine {p['t'] / p['zsplan']:.0f}"
                         f" (calc_sc only {p['calc'] / p['zsplan']:.0f})")
            parts.append(f"max |If zsplan / Ik1 pandapower - 1| {p['max_rel_err']:.1e}")
        w(f"  N={n:>6,}: " + "; ".join(parts))
    if 10000 in all_res and 50000 in all_res:
        a, b = all_res[10000], all_res[50000]
        w("  time(50k)/time(10k): " + ", ".join(
            f"{s} {b[s]['t'] / a[s]['t']:.2f}" for s in STAGES if a[s]["t"] and b[s]["t"]))
    w()
    w("Targets")
    verdict = lambda ok: "met" if ok else "MISSED"  # noqa: E731
    if 10000 in all_res:
        r = all_res[10000]
        x = r["e2e"]["t"] / r["yaml-C"]["t"]
        w(f"  e2e check --json at 10k within {E2E_OVER_YAML_C}x the yaml-C parse: {x:.2f}x  {verdict(x <= E2E_OVER_YAML_C)}")
        if r["render"].get("timeout"):
            w(f"  SVG render of 10k routes under {RENDER_10K_S:g} s: stopped after {r['render']['timeout']:g} s  MISSED")
        elif r["render"]["t"] is not None:
            w(f"  SVG render of 10k routes under {RENDER_10K_S:g} s: {r['render']['t']:.2f} s  "
              f"{verdict(r['render']['t'] < RENDER_10K_S)}")
        else:
            w("  SVG render of 10k routes: n/a (zsplan.render.render_svg not available)")
    big = [n for n in sizes if n >= 10000] or sizes
    for n in big:
        r = all_res[n]["engine"]
        x = r["t"] / r["bare"]
        w(f"  engine within {ENGINE_OVER_BARE:g}x the bare formula at N={n:,}: {x:.1f}x  {verdict(x <= ENGINE_OVER_BARE)}")
    if 10000 in all_res and 50000 in all_res:
        x = all_res[50000]["e2e"]["t"] / all_res[10000]["e2e"]["t"]
        w(f"  time(50k)/time(10k) <= {SCALING_50K_10K} (e2e): {x:.2f}  {verdict(x <= SCALING_50K_10K)}")
    if 50000 in all_res:
        # zsplan's own steps: the yaml-C floor builds the whole document as Python objects
        own = [s for s in STAGES if s != "yaml-C"]
        step = max(own, key=lambda s: all_res[50000][s]["rss"])
        peak = all_res[50000][step]["rss"]
        w(f"  peak memory at 50k under {PEAK_50K_MB:g} MB (largest zsplan step, {step}): {peak:.0f} MB  "
          f"{verdict(peak < PEAK_50K_MB)}")
    for n in sizes:
        p = all_res[n].get("peer")
        if p and "max_rel_err" in p:
            w(f"  pandapower agreement within 0.1 % at N={n:,}: {p['max_rel_err']:.1e}  "
              f"{verdict(p['max_rel_err'] < 1e-3)}")
    return "\n".join(lines)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[1000, 10000, 50000])
    ap.add_argument("--repeats", type=int, default=None,
                    help="processes per step (default 3 up to 10k circuits, 1 above)")
    ap.add_argument("--workdir", type=Path, default=Path(tempfile.gettempdir()) / "zsplan-bench")
    ap.add_argument("--seed", type=int, default=None)
    ap.add_argument("--peer-max", type=int, default=50000,
                    help="run the pandapower peer up to this N (default 50000)")
    ap.add_argument("--timeout", type=float, default=600.0,
                    help="stop a step's process after this many seconds (default 600)")
    ap.add_argument("--json-out", type=Path, default=None, help="also write the raw numbers here")
    ap.add_argument("--stage", help=argparse.SUPPRESS)
    ap.add_argument("--plan", help=argparse.SUPPRESS)
    a = ap.parse_args(argv)
    if a.stage:
        sys.path.insert(0, str(SRC))
        print(json.dumps(stage(a.stage, a.plan)))
        return 0

    sys.path.insert(0, str(HERE))
    import make_building
    seed = make_building.DEFAULT_SEED if a.seed is None else a.seed
    a.workdir.mkdir(parents=True, exist_ok=True)
    log = lambda s: print(s, file=sys.stderr, flush=True)  # noqa: E731
    plans, all_res = {}, {}
    for n in a.sizes:
        path = a.workdir / f"building-{n}-seed{seed}.yaml"
        if not path.exists():
            tmp = path.with_name(path.name + ".part")
            tmp.write_text(make_building.building(n, seed), encoding="utf-8")
            os.replace(tmp, path)
        plans[n] = path
        reps = a.repeats if a.repeats is not None else (3 if n <= 10000 else 1)
        all_res[n] = measure(n, path, reps, n <= a.peer_max, log, a.timeout)
    text = report(all_res, a.sizes, plans)
    print(text)
    if a.json_out:
        a.json_out.write_text(json.dumps({str(k): v for k, v in all_res.items()}, indent=1))
    return 0


if __name__ == "__main__":
    sys.exit(main())

"""Longer fuzz runs of the plan loader and the SVG route reader.

Runs the strategies of ``tests/test_fuzz.py`` with a larger budget and, unlike
the test, does not stop at the first crash: every exception other than
:class:`zsplan.errors.PlanError` (and every broken promise: a PlanError
without a file or with a multi-line message, a verdict resting on NaN) is
recorded under its kind and place, with the smallest example seen, and the
run goes on.  Prints, per target, the examples run, how many loaded, how many
were refused with a PlanError, and the crashes.

Run from the repository root::

    PYTHONPATH=src:tests python bench/fuzz.py                    # 20 000 examples per target
    PYTHONPATH=src:tests python bench/fuzz.py --examples 2000 --targets plans drawings
    PYTHONPATH=src:tests python bench/fuzz.py --seed 7           # another random stream

Exit status: 0 when no crash was found, 1 otherwise.
"""
from __future__ import annotations

import argparse
import re
import sys
import tempfile
import time
import traceback
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path[:0] = [str(HERE.parent / "src"), str(HERE.parent / "tests")]

from hypothesis import HealthCheck, given, settings, strategies as st  # noqa: E402

import test_fuzz as tf  # noqa: E402  (the strategies and checks of the test suite)


def _signature(exc: BaseException) -> str:
    """Kind and innermost zsplan frame of an exception."""
    frames = [f for f in traceback.extract_tb(exc.__traceback__) if "zsplan" in f.filename]
    where = f"{Path(frames[-1].filename).name}:{frames[-1].lineno}" if frames else "?"
    text = str(exc).splitlines()[0] if str(exc) else ""
    # one signature per kind of failure, not per value: quoted text and numbers out
    text = re.sub(r"#x[0-9a-fA-F]+|[-+]?\d[\d.e+-]*", "N", text)
    text = re.sub(r"(?<=[\s(])'[^']*'", "'…'", text)
    return f"{type(exc).__name__} at {where}: {text[:100]}"


TARGETS = {
    "yaml-documents": (tf.VALUES, lambda doc, d: tf.run_plan(tf._dump(doc), d)),
    "plan-key-documents": (st.dictionaries(st.sampled_from(tf.PLAN_KEYS), tf.SCHEMA_DOCS, max_size=8),
                           lambda doc, d: tf.run_plan(tf._dump({"zsplan": 1, **doc}), d)),
    "text": (st.text(max_size=400), tf.run_plan),
    "plans": (tf.mutated_plans(), tf.run_plan),
    "drawn-plans": (tf.mutated_plans(tf.BASE_DRAWN), None),
    "drawings": (tf.mutated_drawings(), tf.run_drawing),
}


def run_target(name: str, examples: int, folder: Path, seed: int | None) -> dict:
    strategy, fn = TARGETS[name]
    if name == "drawn-plans":
        (folder / "base-floorplan.svg").write_text(tf.BASE_SVG, encoding="utf-8")
        fn = tf.run_plan
    counts = {"examples": 0, "ok": 0, "error": 0, "crashes": {}}

    @settings(max_examples=examples, deadline=None, database=None, derandomize=False,
              suppress_health_check=list(HealthCheck))
    @given(strategy)
    def body(value):
        counts["examples"] += 1
        try:
            counts[fn(value, folder)] += 1
        except Exception as exc:        # noqa: BLE001 - recorded, the run goes on
            sig = _signature(exc)
            seen = counts["crashes"].setdefault(sig, [0, value])
            seen[0] += 1
            if len(repr(value)) < len(repr(seen[1])):
                seen[1] = value

    if seed is not None:
        from hypothesis import seed as hseed
        body = hseed(seed)(body)
    body()
    return counts


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--examples", type=int, default=20000, help="examples per target (default 20000)")
    ap.add_argument("--targets", nargs="+", choices=sorted(TARGETS), default=list(TARGETS))
    ap.add_argument("--seed", type=int, default=None, help="seed of the random stream")
    ap.add_argument("--show", action="store_true", help="print the smallest example of each crash")
    a = ap.parse_args(argv)
    total = {"examples": 0, "crashes": 0}
    print(f"{'target':<20}{'examples':>10}{'loaded':>10}{'refused':>10}{'crashes':>9}{'time s':>9}")
    found = {}
    with tempfile.TemporaryDirectory(prefix="zsplan-fuzz-") as d:
        for name in a.targets:
            t0 = time.perf_counter()
            c = run_target(name, a.examples, Path(d), a.seed)
            dt = time.perf_counter() - t0
            n_crash = sum(v[0] for v in c["crashes"].values())
            print(f"{name:<20}{c['examples']:>10}{c['ok']:>10}{c['error']:>10}{n_crash:>9}{dt:>9.1f}",
                  flush=True)
            total["examples"] += c["examples"]
            total["crashes"] += n_crash
            for sig, (n, example) in c["crashes"].items():
                found.setdefault(sig, [0, example, name])[0] += n
    print(f"{'total':<20}{total['examples']:>10}{'':>20}{total['crashes']:>9}")
    if found:
        print(f"\n{len(found)} distinct crash(es):")
        for sig, (n, example, name) in sorted(found.items(), key=lambda kv: -kv[1][0]):
            print(f"  {n:>6} x [{name}] {sig}")
            if a.show:
                print("         example:", repr(example)[:2000])
    return 1 if found else 0


if __name__ == "__main__":
    sys.exit(main())

"""The bundled demo plans and ``zsplan demo``.

The demo plans are invented scenarios; their intended verdicts are part of
what they demonstrate, so they are pinned here.
"""
from __future__ import annotations

import json
import os
import subprocess
import sys
from importlib import resources
from pathlib import Path

import pytest

from zsplan import CAUTION
from zsplan.check import check
from zsplan.demo import DEMOS, demo_path

ROOT = Path(__file__).resolve().parents[1]


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "zsplan.cli", *map(str, args)],
                          capture_output=True, text=True, encoding="utf-8", cwd=cwd,
                          timeout=300, env=dict(os.environ))


def _copy(tmp_path: Path, name: str) -> Path:
    for f in DEMOS[name].inputs:
        (tmp_path / f).write_bytes(demo_path(f).read_bytes())
    return tmp_path / DEMOS[name].plan


def _statuses(results):
    return {f"{c.board}/{c.ref}": str(s) for c, s in zip(results.plan.circuits, results.status)}


def test_demo_files_are_installed_with_the_package():
    # run against an installed (non-editable) package in CI: the files must be in the wheel
    folder = resources.files("zsplan").joinpath("demo")
    for d in DEMOS.values():
        for f in d.inputs:
            assert folder.joinpath(f).is_file(), f


def test_plans_folder_is_the_packaged_demo_folder():
    plans = ROOT / "plans"
    if not plans.exists():
        pytest.skip("not run from a source checkout")
    assert plans.resolve() == (ROOT / "src" / "zsplan" / "demo").resolve()


def test_flat_has_exactly_one_tight_circuit(tmp_path):
    r = check(str(_copy(tmp_path, "flat")))
    assert _statuses(r) == {"CU1/1": "pass", "CU1/2": "pass", "CU1/3": "pass", "CU1/4": "pass",
                            "CU1/5": "tight", "CU1/6": "pass", "CU1/7": "pass"}
    m = float(r.circuits["margin"][4])
    assert 0 < m < 0.2
    assert r.plan.supply.earthing == "TN-C-S"
    assert {c.topology for c in r.plan.circuits} == {"ring", "radial"}
    assert {c.use for c in r.plan.circuits} >= {"sockets", "lighting"}
    assert {c.device.type for c in r.plan.circuits} == {"mcb"}


def test_workshop_fails_only_the_compressor(tmp_path):
    r = check(str(_copy(tmp_path, "workshop")))
    assert _statuses(r) == {"DB1/1": "pass", "DB1/2": "pass", "DB1/3": "pass", "DB1/4": "fail",
                            "DB2/1": "pass", "DB2/2": "pass"}
    assert r.plan.supply.earthing == "TT"
    assert {c.device.family for c in r.plan.circuits if c.board == "DB1"} == {"bs3036", "bs88-3"}
    feed = r.plan.board("DB2").fed_from
    assert feed.board == "DB1"
    # the sub-main's own time-delayed 100 mA RCD gives its fault protection on TT
    assert feed.rcd_a == pytest.approx(0.1) and feed.rcd_kind == "selective"
    subs = r.submains
    assert list(subs["boards"]) == ["DB2"] and list(subs["status"]) == ["pass"]
    assert list(subs["disconnection_by"]) == ["rcd"]
    # BS 7671:2018 Regulation 411.5.3 (from memory): RA x IΔn <= 50 V; hand-worked 50 V / 0.1 A = 500 ohm
    assert float(subs["zs_max_ohm"][0]) == pytest.approx(500.0)
    assert r.any_fail          # DB1/4 still fails


def test_drawn_routes_are_read_from_the_floor_plans(tmp_path):
    for name in DEMOS:
        r = check(str(_copy(tmp_path, name)))
        assert all(c.route is not None and len(c.route) >= 2 for c in r.plan.circuits)
        assert not r.plan.extra.get("warnings")


def test_demo_writes_every_file_and_refuses_to_overwrite(tmp_path):
    folder = tmp_path / "out" / "demo"
    p = run("demo", folder)
    assert p.returncode == 0, p.stderr
    assert "Traceback" not in p.stderr
    d = DEMOS["flat"]
    for f in d.files:
        assert (folder / f).stat().st_size > 0, f
    assert (folder / d.plan).read_bytes() == demo_path(d.plan).read_bytes()
    o = {k: folder / v for k, v in d.outputs.items()}
    assert o["pdf"].read_bytes().startswith(b"%PDF-")
    assert o["png"].read_bytes().startswith(b"\x89PNG\r\n\x1a\n")
    doc = json.loads(o["check_json"].read_text(encoding="utf-8"))
    assert doc["zsplan"] == 1 and doc["summary"] == {"pass": 6, "tight": 1, "fail": 0}
    text = o["check_text"].read_text(encoding="utf-8")
    assert "\x1b[" not in text and CAUTION in text and "CU1/5" in text
    assert "<!DOCTYPE html>" in o["schedule_html"].read_text(encoding="utf-8")
    assert "Board,Ref,Name" in o["schedule_csv"].read_text(encoding="utf-8-sig")
    assert "7 circuits: 6 pass, 1 tight, 0 fail" in p.stdout

    # a second run does not replace them silently
    stamp = {f: (folder / f).stat().st_mtime_ns for f in d.files}
    p = run("demo", folder)
    assert p.returncode == 2 and "--force" in p.stderr and "Traceback" not in p.stderr
    assert {f: (folder / f).stat().st_mtime_ns for f in d.files} == stamp
    p = run("demo", folder, "--force", "--plan", "flat")
    assert p.returncode == 0, p.stderr


def test_demo_refuses_an_unknown_plan(tmp_path):
    p = run("demo", tmp_path, "--plan", "castle")
    assert p.returncode == 2 and "flat" in p.stderr and "workshop" in p.stderr
    assert list(tmp_path.iterdir()) == []

"""The command line, run as a user runs it: a separate process, its streams and exit code.

Plans are the bundled demo (invented) or small invented plans written here
whose numbers are worked by hand.
"""
from __future__ import annotations

import io
import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from zsplan import CAUTION
from zsplan.demo import DEMOS, demo_path
from zsplan.terminal import Progress, colour_wanted, progress_wanted

CONTRACT_KEYS = {"ref", "board", "status", "length_m", "r1r2_ohm", "r1r2_test_ohm", "zs_ohm",
                 "zs_max_ohm", "zs_test_max_ohm", "fault_current_a", "disconnect_s",
                 "disconnect_limit_s", "margin", "vdrop_pct", "vdrop_limit_pct", "checks",
                 "messages"}
NUMBER_KEYS = CONTRACT_KEYS - {"ref", "board", "status", "checks", "messages"}


def run(*args, cwd=None, env=None):
    """``zsplan ARGS`` through the current interpreter; returns the CompletedProcess."""
    e = dict(os.environ)
    e.pop("NO_COLOR", None)
    e.update(env or {})
    return subprocess.run([sys.executable, "-m", "zsplan.cli", *map(str, args)],
                          capture_output=True, text=True, encoding="utf-8", cwd=cwd, env=e,
                          timeout=120)


def copy_demo(tmp_path: Path, name: str = "flat") -> Path:
    d = DEMOS[name]
    for f in d.inputs:
        (tmp_path / f).write_bytes(demo_path(f).read_bytes())
    return tmp_path / d.plan


# An invented bench plan: one radial of 2.5/1.5 mm² copper, 100 m, laid "direct"
# (no drops, no allowance), on a B20 breaker, Ze 0.35 ohm.
LONG_RADIAL = """\
zsplan: 1
title: Test bench, long radial (invented)
supply: {earthing: TN-C-S, ze: 0.35 ohm}
boards:
  - {ref: CU1, at: [0, 0]}
circuits:
  - ref: "1"
    board: CU1
    name: Long radial
    use: sockets
    device: {type: mcb, curve: B, rating: 20 A}
    cable: {line: 2.5 mm2, cpc: 1.5 mm2}
    run: direct
    route: [[0, 0], [60, 0], [60, 40]]
"""


@pytest.fixture(scope="module")
def flat(tmp_path_factory):
    return copy_demo(tmp_path_factory.mktemp("flat"))


# ---------------------------------------------------------------------------
# check: exit codes and the table
# ---------------------------------------------------------------------------

def test_check_exit_0_and_plain_table_when_no_circuit_fails(flat):
    p = run("check", flat)
    assert p.returncode == 0, p.stderr
    out = p.stdout
    assert "\x1b[" not in out                       # piped: no colour
    assert "CU1/5" in out and "tight" in out
    assert "7 circuits: 6 pass, 1 tight, 0 fail" in out
    assert f"Caution: {CAUTION}" in out
    assert "Traceback" not in p.stderr


def test_check_exit_1_when_a_circuit_fails(tmp_path):
    plan = tmp_path / "long.yaml"
    plan.write_text(LONG_RADIAL, encoding="utf-8")
    p = run("check", plan)
    assert p.returncode == 1, p.stderr
    assert "FAIL" in p.stdout
    assert "1 circuit: 0 pass, 0 tight, 1 fail" in p.stdout


def test_check_json_hand_worked_failing_radial(tmp_path):
    plan = tmp_path / "long.yaml"
    plan.write_text(LONG_RADIAL, encoding="utf-8")
    p = run("check", plan, "--json")
    assert p.returncode == 1
    c = json.loads(p.stdout)["circuits"][0]
    # hand-worked: L = 60 + 40 = 100 m; r1 + r2 = 7.41 + 12.10 = 19.51 mOhm/m at 20 degC
    # (IEC 60228 Table 2), x 1.20 at 70 degC (BS 7671 Appendix 3 multiplier):
    # R1+R2 = 100 x 19.51 x 1.20 / 1000 = 2.3412 ohm; Zs = 0.35 + 2.3412 = 2.6912 ohm
    assert c["length_m"] == pytest.approx(100.0)
    assert c["r1r2_ohm"] == pytest.approx(2.3412, abs=1e-4)
    assert c["zs_ohm"] == pytest.approx(2.6912, abs=1e-4)
    # Zs max = 0.95 x 230 / (5 x 20) = 2.185 ohm (BS 7671:2018 Reg 411.4.4, Table 41.3: B20 2.19)
    assert c["zs_max_ohm"] == pytest.approx(2.185, abs=1e-4)
    # If = 218.5 / 2.6912 = 81.19 A, shown rounded down; margin 1 - 2.6912/2.185 = -0.2317
    assert c["fault_current_a"] == pytest.approx(81.1)
    assert c["margin"] == pytest.approx(-0.232)
    assert c["status"] == "fail" and c["checks"]["disconnection"] == "fail"


def test_check_json_follows_the_contract(flat):
    p = run("check", flat, "--json")
    assert p.returncode == 0, p.stderr
    doc = json.loads(p.stdout)
    assert doc["zsplan"] == 1 and doc["plan"] == str(flat)
    assert len(doc["circuits"]) == 7
    for c in doc["circuits"]:
        assert CONTRACT_KEYS <= set(c)
        assert isinstance(c["ref"], str) and isinstance(c["board"], str)
        assert c["status"] in ("pass", "tight", "fail")
        for k in NUMBER_KEYS:
            assert c[k] is None or isinstance(c[k], (int, float)), k
        assert isinstance(c["checks"], dict) and all(v in ("pass", "fail") for v in c["checks"].values())
        assert isinstance(c["messages"], list) and all(isinstance(m, str) for m in c["messages"])
        # physical law of the contract: Zs = Ze + R1+R2 (each shown rounded up to 1e-4)
        assert c["zs_ohm"] == pytest.approx(c["ze_ohm"] + c["r1r2_ohm"], abs=3e-4)
        # If = Cmin U0 / Zs, rounded down to 0.1 A
        assert 218.5 / c["zs_ohm"] - 0.2 <= c["fault_current_a"] <= 218.5 / c["zs_ohm"] + 0.1
    counts = {k: sum(c["status"] == k for c in doc["circuits"]) for k in ("pass", "tight", "fail")}
    assert doc["summary"] == counts == {"pass": 6, "tight": 1, "fail": 0}


def test_check_json_is_exactly_results_to_dict_and_deterministic(flat):
    from zsplan.check import check

    p1, p2 = run("check", flat, "--json"), run("check", flat, "--json")
    assert p1.stdout == p2.stdout
    assert json.loads(p1.stdout) == json.loads(json.dumps(check(str(flat)).to_dict()))


def test_check_order_worst_puts_the_lowest_margin_first(flat):
    p = run("check", flat, "--order", "worst")
    rows = [line for line in p.stdout.splitlines() if line.startswith("CU1/")]
    assert len(rows) == 7 and rows[0].startswith("CU1/5")
    board = [line for line in run("check", flat).stdout.splitlines() if line.startswith("CU1/")]
    assert [r.split()[0] for r in board] == [f"CU1/{k}" for k in range(1, 8)]


# ---------------------------------------------------------------------------
# unusable input: exit 2, one clean message, no traceback, no output
# ---------------------------------------------------------------------------

def test_bad_plan_gives_one_clean_message_with_the_key_path(tmp_path):
    bad = tmp_path / "bad.yaml"
    bad.write_text(LONG_RADIAL.replace("cpc: 1.5 mm2", "cpc: 1.5 mm3"), encoding="utf-8")
    for args in (("check", bad), ("check", bad, "--json"), ("schedule", bad)):
        p = run(*args)
        assert p.returncode == 2
        assert "Traceback" not in p.stderr
        assert "circuits[0].cable.cpc" in p.stderr
        assert str(bad) in p.stderr
        assert p.stderr.count("error:") == 1
        assert p.stdout == ""


def test_missing_file_and_bad_options_exit_2(tmp_path):
    p = run("check", tmp_path / "nowhere.yaml")
    assert p.returncode == 2 and "no such file" in p.stderr and "Traceback" not in p.stderr
    p = run("check")
    assert p.returncode == 2 and "Traceback" not in p.stderr
    p = run("limits", "mcb", "--fault", "250 V")
    assert p.returncode == 2 and "--fault" in p.stderr and "Traceback" not in p.stderr


def test_outputs_never_overwrite_the_plan_or_its_floor_plan(flat):
    svg = flat.with_name(DEMOS["flat"].floorplan)
    before = flat.read_bytes(), svg.read_bytes()
    for args in (("schedule", flat, "-o", flat), ("render", flat, "-o", svg)):
        p = run(*args)
        assert p.returncode == 2 and "Traceback" not in p.stderr
    assert "input" in p.stderr          # the floor plan is refused as an input file
    assert (flat.read_bytes(), svg.read_bytes()) == before


def test_unknown_schedule_suffix_is_refused_without_writing(flat, tmp_path):
    out = tmp_path / "schedule.txt"
    p = run("schedule", flat, "-o", out)
    assert p.returncode == 2 and ".csv" in p.stderr
    assert not out.exists()


# ---------------------------------------------------------------------------
# render
# ---------------------------------------------------------------------------

def test_render_writes_svg_by_suffix(flat, tmp_path):
    out = tmp_path / "plan.svg"
    p = run("render", flat, "-o", out, "--sheet", "a3", "--scale", "1:50")
    assert p.returncode == 0, p.stderr
    text = out.read_text(encoding="utf-8")
    assert text.lstrip().startswith(("<?xml", "<svg"))
    assert "CU1/5" in text
    assert "Caution" in p.stdout


def test_render_default_is_a_pdf_in_the_current_folder(flat, tmp_path):
    p = run("render", flat, cwd=tmp_path)
    assert p.returncode == 0, p.stderr
    assert (tmp_path / "flat-plan.pdf").read_bytes().startswith(b"%PDF-")
    assert not (flat.parent / "flat-plan.pdf").exists()


def test_render_refuses_unknown_suffix(flat, tmp_path):
    p = run("render", flat, "-o", tmp_path / "plan.jpg")
    assert p.returncode == 2 and "Traceback" not in p.stderr


# ---------------------------------------------------------------------------
# colour and progress: only for a person at a terminal
# ---------------------------------------------------------------------------

class _Tty(io.StringIO):
    def isatty(self):
        return True


def test_colour_follows_the_terminal_and_no_color():
    assert colour_wanted(_Tty(), environ={"TERM": "xterm"})
    assert not colour_wanted(io.StringIO(), environ={"TERM": "xterm"})
    assert not colour_wanted(_Tty(), environ={"TERM": "xterm", "NO_COLOR": "1"})
    assert not colour_wanted(_Tty(), environ={"TERM": "dumb"})


def test_progress_only_on_a_terminal_outside_ci():
    assert progress_wanted(_Tty(), environ={"TERM": "xterm"})
    assert not progress_wanted(_Tty(), environ={"TERM": "xterm", "CI": "true"})
    assert not progress_wanted(io.StringIO(), environ={})
    tty = _Tty()
    with Progress(tty, enabled=True) as p:
        p.step("drawing the plan", 3, 6)
        assert "[3/6] drawing the plan" in tty.getvalue()
        with p.busy("checking"):
            pass
    assert tty.getvalue().endswith("\r\x1b[2K")       # the line is cleared at the end
    piped = io.StringIO()
    with Progress(piped) as p:
        p.step("drawing", 1, 2)
    assert piped.getvalue() == ""


@pytest.mark.skipif(not hasattr(os, "openpty"), reason="needs a pseudo-terminal")
def test_colour_on_a_pseudo_terminal_and_none_with_no_color(flat):
    def at_terminal(extra_env):
        master, slave = os.openpty()
        env = {k: v for k, v in os.environ.items() if k != "NO_COLOR"}
        env.update({"TERM": "xterm", "COLUMNS": "200"}, **extra_env)
        proc = subprocess.Popen([sys.executable, "-m", "zsplan.cli", "check", str(flat)],
                                stdin=slave, stdout=slave, stderr=slave, env=env)
        os.close(slave)
        chunks = []
        while True:
            try:
                data = os.read(master, 65536)
            except OSError:
                break
            if not data:
                break
            chunks.append(data)
        os.close(master)
        assert proc.wait(timeout=120) == 0
        return b"".join(chunks).decode("utf-8", "replace")

    coloured = at_terminal({})
    assert "\x1b[38;5;214" in coloured            # the tight band's colour
    plain = at_terminal({"NO_COLOR": "1"})
    assert "\x1b[38;5" not in plain
    assert "7 circuits: 6 pass, 1 tight, 0 fail" in plain

"""The README's two Quick-start commands: the test command is CI's, the demo command works.

The README is parsed, not copied, so that it cannot drift from what CI runs
and from what the demo does.
"""
from __future__ import annotations

import os
import re
import shlex
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"
CI = ROOT / ".ci" / "run"

pytestmark = pytest.mark.skipif(not README.is_file() or not CI.is_file(),
                                reason="not run from a source checkout")


def quick_start_commands() -> list[str]:
    text = README.read_text(encoding="utf-8")
    m = re.search(r"^## Quick start\s*$(.*?)^## ", text, flags=re.M | re.S)
    assert m, "README has no '## Quick start' section followed by another section"
    blocks = re.findall(r"^```sh\n(.*?)^```", m.group(1), flags=re.M | re.S)
    return [b.strip("\n") for b in blocks]


def test_quick_start_has_exactly_two_one_line_commands():
    cmds = quick_start_commands()
    assert len(cmds) == 2
    assert all("\n" not in c and c.strip() == c for c in cmds)


def test_readme_test_command_is_what_ci_runs():
    ci_last = [line for line in CI.read_text(encoding="utf-8").splitlines() if line.strip()][-1]
    assert quick_start_commands()[1] == ci_last


def test_readme_opens_with_the_job_then_the_caution():
    text = README.read_text(encoding="utf-8")
    paras = [p for p in re.split(r"\n\s*\n", text) if p.strip() and not p.startswith("#")]
    assert "electricians and designers" in paras[0] and "BS 7671" in paras[0]
    assert "design aid" in paras[1] and "qualified" in paras[1] and "electrician" in paras[1]
    assert (ROOT / "docs" / "plan-format.md").is_file()


def test_readme_demo_command_runs(tmp_path):
    cmd = quick_start_commands()[0]
    parts = [shlex.split(p) for p in cmd.split("&&")]
    demo = next(p for p in parts if len(p) > 1 and p[0].endswith("zsplan") and p[1] == "demo")
    # the same invocation through the interpreter running the tests, in a scratch folder
    p = subprocess.run([sys.executable, "-m", "zsplan.cli", *demo[1:]], cwd=tmp_path,
                       capture_output=True, text=True, encoding="utf-8", timeout=300,
                       env=dict(os.environ))
    assert p.returncode == 0, p.stderr
    from zsplan.demo import DEMOS

    folder = tmp_path / demo[2] if len(demo) > 2 else tmp_path / "zsplan-demo"
    for f in DEMOS["flat"].files:
        assert (folder / f).is_file(), f
    # the README promises these files by name
    text = README.read_text(encoding="utf-8")
    for f in DEMOS["flat"].outputs.values():
        assert f"`{f}`" in text, f

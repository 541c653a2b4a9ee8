"""Atomic output writes and safe display rounding."""
import os

import pytest
from hypothesis import given, strategies as st

from zsplan.errors import PlanError
from zsplan.outputs import write_atomic
from zsplan.results import safe_round


def test_write_replaces_whole_file(tmp_path):
    out = tmp_path / "report.csv"
    write_atomic(out, "first\n")
    write_atomic(out, "second\n")
    assert out.read_text() == "second\n"
    assert [p.name for p in tmp_path.iterdir()] == ["report.csv"]   # no temporary left behind


def test_refuses_to_overwrite_an_input(tmp_path):
    plan = tmp_path / "plan.yaml"
    plan.write_text("zsplan: 1\n")
    with pytest.raises(PlanError, match="input"):
        write_atomic(plan, "x", inputs=[plan])
    with pytest.raises(PlanError, match="input"):
        write_atomic(tmp_path / "." / "plan.yaml", "x", inputs=[str(plan)])
    assert plan.read_text() == "zsplan: 1\n"


def test_missing_folder_is_a_clear_error(tmp_path):
    with pytest.raises(PlanError, match="does not exist"):
        write_atomic(tmp_path / "nope" / "a.svg", "x")


def test_failed_write_leaves_old_file(tmp_path, monkeypatch):
    out = tmp_path / "plan.svg"
    out.write_text("old")

    def boom(*a, **k):
        raise OSError("disk full")
    monkeypatch.setattr(os, "replace", boom)
    with pytest.raises(OSError):
        write_atomic(out, "new")
    assert out.read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["plan.svg"]


@given(st.floats(0.01, 50), st.floats(0.01, 50))
def test_display_rounding_never_turns_a_fail_into_a_pass(zs, zs_max):
    # the safety rule of this project: computed Zs rounds up, limits round down
    shown_zs = safe_round("zs_ohm", zs)
    shown_max = safe_round("zs_max_ohm", zs_max)
    if zs > zs_max:
        assert shown_zs >= shown_max
    assert shown_zs >= zs - 1e-9 * zs and shown_max <= zs_max + 1e-9 * zs_max


def test_exact_decimals_stay_put():
    assert safe_round("zs_max_ohm", 1.37) == 1.37       # B32 limit, BS 7671:2018 Table 41.3: not nudged down
    assert safe_round("disconnect_s", 0.4) == 0.4       # BS 7671:2018 Table 41.1 time
    assert safe_round("zs_ohm", 1.36562) == 1.3657
    assert safe_round("zs_max_ohm", 1.365625) == 1.3656
    assert safe_round("margin", float("-inf")) is None


def test_outputs_are_ordinary_readable_files(tmp_path):
    old = os.umask(0o022)
    try:
        out = write_atomic(tmp_path / "plan.svg", "<svg/>")
    finally:
        os.umask(old)
    assert (out.stat().st_mode & 0o777) == 0o644   # not the 0600 of a temporary file

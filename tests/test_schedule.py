"""The installers' schedule: contents for the demo, rounding toward safety, escaping.

The demo plan is invented; the figures checked here are worked by hand from
the drawing and from published tables.
"""
from __future__ import annotations

import csv
import io
import math
import os
import subprocess
import sys
from pathlib import Path

import pytest

from zsplan import CAUTION
from zsplan.check import check
from zsplan.demo import DEMOS, demo_path
from zsplan.schedule import (md_escape, schedule_rows, submain_rows, to_csv, to_html,
                             to_markdown)


def _copy(tmp_path: Path, name: str) -> Path:
    for f in DEMOS[name].inputs:
        (tmp_path / f).write_bytes(demo_path(f).read_bytes())
    return tmp_path / DEMOS[name].plan


@pytest.fixture(scope="module")
def flat(tmp_path_factory):
    return check(str(_copy(tmp_path_factory.mktemp("flat"), "flat")))


@pytest.fixture(scope="module")
def workshop(tmp_path_factory):
    return check(str(_copy(tmp_path_factory.mktemp("workshop"), "workshop")))


def _row(rows, ref):
    return next(r for r in rows if r.ref == ref)


def test_shower_row_hand_worked_from_the_drawing(flat):
    shower = _row(schedule_rows(flat), "4")
    # hand-worked from flat-floorplan.svg (1:50, 20 drawing mm per metre): route
    # (25,128) (25,100) (128,100) (128,32) (147,32) mm = 1.40 + 5.15 + 3.40 + 0.95 = 10.90 m;
    # board drop 2.4 - 1.4 = 1.0 m, shower drop 2.4 - 1.8 = 0.6 m;
    # (1.0 + 10.90 + 0.6) x 1.10 + 0.5 = 14.25 m, shown rounded up: 14.3
    assert shower.length_m == 14.3
    # expected R1+R2 at 20 degC: 14.25 x (1.83 + 4.61) / 1000 = 0.0918 ohm (IEC 60228 Table 2:
    # 10 mm2 1.83, 4 mm2 4.61 mOhm/m), rounded up to 0.01: 0.10
    assert shower.r1r2_test_ohm == 0.10
    # B40 on fixed equipment over 32 A: 5 s (BS 7671 Table 41.1 / Reg 411.3.2.3);
    # Zs max 0.95 x 230 / (5 x 40) = 1.0925; measured limit 0.8 x 1.0925 = 0.874 -> 0.87
    assert shower.disconnect_limit_s == 5
    assert shower.zs_test_max_ohm == 0.87
    assert shower.test_at == "Shower" and shower.device == "MCB B40"


def test_ring_row_measured_limit_is_rounded_down(flat):
    ring = _row(schedule_rows(flat), "1")
    # 0.8 x 0.95 x 230 / (5 x 32) = 1.0925 (BS 7671:2018 Reg 411.4.4, Table 41.3 k = 5,
    # Appendix 3 rule of 0.8): shown 1.09, never 1.10
    assert ring.zs_test_max_ohm == 1.09
    assert ring.disconnect_limit_s == 0.4          # BS 7671 Table 41.1, TN, 230 V


def test_every_number_is_rounded_toward_safety(flat):
    a = flat.circuits
    for i, r in enumerate(schedule_rows(flat)):
        assert r.length_m >= a["length_m"][i] and r.length_m - a["length_m"][i] < 0.1
        assert r.r1r2_test_ohm >= a["r1r2_test_ohm"][i]
        assert r.zs_test_max_ohm <= a["zs_test_max_ohm"][i]
        assert r.fault_current_a <= a["fault_current_a"][i]


def test_takeoff_orders_whole_metres_of_each_cable(flat):
    md = to_markdown(flat)
    take = md[md.index("## Cable take-off"):]
    # the shower is the only 10/4 cable: 14.25 m (hand-worked above) -> order 15 m
    assert "| 10/4 mm² 70°C thermoplastic | 1 | 14.3 | 15 |" in take
    # the 2.5/1.5 cable serves circuits 1, 2 and 5: the order is the sum rounded up once
    total = sum(L.total_m for L, c in zip(flat.lengths, flat.plan.circuits)
                if c.cable.line_mm2 == 2.5)
    assert "| 2.5/1.5 mm² 70°C thermoplastic | 3 | " in take
    assert f"| {math.ceil(round(total, 6))} |" in take


def test_markdown_has_every_circuit_and_the_caution(flat):
    md = to_markdown(flat)
    assert md.count("\n| CU1 | ") == 7
    assert CAUTION in md.replace("\\", "")
    assert "7 circuits: 6 pass, 1 tight, 0 fail" in md
    assert "Expected R1+R2 at 20 °C" in md


def test_csv_parses_as_a_spreadsheet_would(flat):
    text = to_csv(flat)
    assert text.startswith("\ufeff")                  # UTF-8 byte-order mark for spreadsheets
    rows = list(csv.reader(io.StringIO(text.lstrip("\ufeff"))))
    head = next(i for i, r in enumerate(rows) if r and r[0] == "Board")
    body = rows[head + 1: head + 8]
    assert [r[1] for r in body] == [str(k) for k in range(1, 8)]
    cols = rows[head]
    assert body[4][cols.index("Design status")] == "tight"
    assert float(body[3][cols.index("Length (m)")]) == 14.3
    assert any(r and r[0].startswith("Caution:") for r in rows)


def test_workshop_has_its_sub_main_and_per_board_takeoff(workshop):
    subs = submain_rows(workshop)
    assert [(s.fed_from, s.board) for s in subs] == [("DB1", "DB2")]
    assert subs[0].length_m == 26.0 and subs[0].disconnect_limit_s == 1   # TT distribution, BS 7671 Table 41.1
    md = to_markdown(workshop)
    assert "## Sub-mains" in md and "### Board DB1" in md and "### Board DB2" in md
    # the sub-main's 26 m of 10/4 cable is counted on the board that feeds it
    db1 = md[md.index("### Board DB1"):md.index("### Board DB2")]
    assert "| 10/4 mm² 70°C thermoplastic | 1 | 26.0 | 26 |" in db1


def _hostile_plan(tmp_path: Path) -> Path:
    text = demo_path("flat.yaml").read_text(encoding="utf-8")
    text = text.replace("name: Cooker", 'name: "=cmd() <script>alert(1)</script> | *x*"')
    (tmp_path / "flat-floorplan.svg").write_bytes(demo_path("flat-floorplan.svg").read_bytes())
    p = tmp_path / "hostile.yaml"
    p.write_text(text, encoding="utf-8")
    return p


def test_user_text_is_escaped_in_every_format(tmp_path):
    r = check(str(_hostile_plan(tmp_path)))
    html = to_html(r)
    assert "<script>" not in html and "&lt;script&gt;" in html
    assert html.count("Caution:") >= 1 and "http" not in html.replace("http-equiv", "")
    md = to_markdown(r)
    assert "<script>" not in md and "\\|" in md and "\\*x\\*" in md
    rows = list(csv.reader(io.StringIO(to_csv(r).lstrip("\ufeff"))))
    names = [row[2] for row in rows if len(row) > 2 and row[0] == "CU1"]
    assert "'=cmd() <script>alert(1)</script> | *x*" in names     # not run as a formula


def test_csv_neutralises_formulas():
    from zsplan.schedule import csv_text

    assert csv_text("=HYPERLINK(1)") == "'=HYPERLINK(1)"
    assert csv_text("+1") == "'+1" and csv_text("@a") == "'@a"
    assert csv_text("Kitchen") == "Kitchen"


def test_md_escape_keeps_table_cells_whole():
    assert md_escape("a | b\nc") == "a \\| b c"
    assert md_escape("<b>") == "&lt;b&gt;"


def test_schedule_command_writes_html_and_prints_markdown(tmp_path):
    plan = _copy(tmp_path, "flat")
    env = {k: v for k, v in os.environ.items()}
    p = subprocess.run([sys.executable, "-m", "zsplan.cli", "schedule", str(plan)],
                       capture_output=True, text=True, encoding="utf-8", env=env, timeout=120)
    assert p.returncode == 0, p.stderr
    assert p.stdout.startswith("# Installation schedule: Flat 4, 27 Amberlowe Street")
    out = tmp_path / "schedule.html"
    p = subprocess.run([sys.executable, "-m", "zsplan.cli", "schedule", str(plan), "-o", str(out)],
                       capture_output=True, text=True, encoding="utf-8", env=env, timeout=120)
    assert p.returncode == 0, p.stderr
    html = out.read_text(encoding="utf-8")
    assert html.startswith("<!DOCTYPE html>") and "@media print" in html
    assert "<script" not in html and " src=" not in html and "<link" not in html   # self-contained
    assert CAUTION.replace("'", "&#x27;") in html or CAUTION in html

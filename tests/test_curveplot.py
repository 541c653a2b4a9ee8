"""Zs limits per rating and the time-current plot, against published tables and log-log geometry."""
from __future__ import annotations

import math
import os
import subprocess
import sys
import xml.etree.ElementTree as ET

import pytest

from zsplan import CAUTION
from zsplan.curveplot import curve_svg, limits_table
from zsplan.protection import family

SVG = "{http://www.w3.org/2000/svg}"


def _row(rows, rating):
    return next(r for r in rows if r.rating_a == rating)


@pytest.mark.parametrize("curve, rating, published", [
    ("B", 6, 7.28),    # BS 7671:2018 Table 41.3, type B 6 A: 7.28 ohm
    ("B", 32, 1.37),   # BS 7671:2018 Table 41.3, type B 32 A: 1.37 ohm
    ("C", 20, 1.09),   # BS 7671:2018 Table 41.3, type C 20 A: 1.09 ohm
    ("D", 16, 0.68),   # BS 7671:2018 Table 41.3, type D 16 A: 0.68 ohm
])
def test_breaker_limits_match_table_41_3_rounded_down(curve, rating, published):
    row = _row(limits_table("mcb", curve), rating)
    exact = 0.95 * 230 / ({"B": 5, "C": 10, "D": 20}[curve] * rating)   # Reg 411.4.4, Cmin U0 / Ia
    # the table rounds to the nearest 0.01; zsplan rounds down, never above the exact limit
    assert row.zs_max_ohm[0] == math.floor(exact * 100 + 1e-9) / 100
    assert row.zs_max_ohm[0] <= exact
    assert abs(row.zs_max_ohm[0] - published) <= 0.01 + 1e-9
    assert row.zs_test_max_ohm[0] == math.floor(0.8 * exact * 100 + 1e-9) / 100   # Appendix 3, 0.8


def test_fuse_limits_match_tables_41_2_and_41_4():
    row = _row(limits_table("bs3036", times=(0.4, 5.0)), 30)
    assert row.zs_max_ohm[0] == 1.04      # BS 7671:2018 Table 41.2, BS 3036 30 A at 0.4 s: 1.04 ohm
    assert row.zs_max_ohm[1] == 2.51      # BS 7671:2018 Table 41.4, BS 3036 30 A at 5 s: 2.51 ohm (from memory)
    row = _row(limits_table("bs88-3"), 32)
    assert row.zs_max_ohm[0] == 0.91      # BS 7671:2018 Table 41.2, BS 88-3 32 A at 0.4 s: 0.91 ohm


def test_a_time_the_data_do_not_reach_has_no_limit():
    # the fuse data stop at 0.4 s: no current is shown to clear within 0.2 s
    row = limits_table("bs88-3", times=(0.2,), rating=32)[0]
    assert row.zs_max_ohm == (None,) and row.ia_a == (None,)


def test_unknown_family_type_and_rating_are_named():
    with pytest.raises(KeyError, match="unknown device family"):
        limits_table("nonesuch")
    with pytest.raises(KeyError, match="no type 'Z'"):
        limits_table("mcb", "Z")
    with pytest.raises(KeyError, match="no rating 33 A"):
        limits_table("mcb", "B", rating=33)


def _parse(svg: str) -> ET.Element:
    return ET.fromstring(svg)


def _x_of_current(root) -> dict[float, float]:
    """x of each decade gridline, from the tick labels under the axis."""
    axes = root.find(f".//{SVG}g[@id='axes']")
    out = {}
    for t in axes.findall(f"{SVG}text"):
        if t.get("text-anchor") == "middle" and t.text and t.text.replace("\u2009", "").replace(".", "").isdigit():
            out[float(t.text.replace("\u2009", ""))] = float(t.get("x"))
    return out


def test_plot_has_log_log_axes_and_one_curve_per_rating():
    svg = curve_svg("mcb", "B", fault_a=250, time_s=0.4)
    root = _parse(svg)
    lines = root.findall(f".//{SVG}g[@id='curves']/{SVG}polyline")
    assert [float(p.get("data-rating")) for p in lines] == family("mcb").ratings("B")
    xs = _x_of_current(root)
    decades = sorted(xs)
    # decades equally spaced: a logarithmic axis
    steps = [xs[b] - xs[a] for a, b in zip(decades, decades[1:])]
    assert max(steps) - min(steps) < 0.02
    # the B32 curve's vertical step sits at 5 x 32 = 160 A (IEC 60898-1 type B upper limit):
    # on a log axis, x(160) = x(10) + log10(16) x decade width  # hand-worked
    b32 = next(p for p in lines if p.get("data-rating") == "32")
    pts = [tuple(map(float, xy.split(","))) for xy in b32.get("points").split()]
    step_x = [x for (x, y), (x2, y2) in zip(pts, pts[1:]) if abs(x - x2) < 1e-6][0]
    assert step_x == pytest.approx(xs[10] + math.log10(16) * steps[0], abs=0.02)
    assert "If = 250 A" in svg and "t = 0.4 s" in svg
    assert "Caution:" in svg and CAUTION.split()[0] in svg


def test_plot_of_one_rating_marks_ia_and_the_operating_time():
    svg = curve_svg("bs88-3", rating=32, fault_a=250, time_s=0.4)
    root = _parse(svg)
    assert len(root.findall(f".//{SVG}g[@id='curves']/{SVG}polyline")) == 1
    # Ia(0.4 s) = 240 A -> Zs max = 218.5 / 240 = 0.910 (BS 7671:2018 Table 41.2: 0.91 ohm)
    assert "Ia(0.4 s) = 240 A" in svg and "0.91 ohm" in svg
    assert len(root.findall(f".//{SVG}g[@id='marks']/{SVG}circle")) == 2


def test_plot_is_deterministic():
    a = curve_svg("bs3036", fault_a=120, time_s=5)
    assert a == curve_svg("bs3036", fault_a=120, time_s=5)


def test_limits_command_prints_the_table_and_writes_the_plot(tmp_path):
    out = tmp_path / "b.svg"
    p = subprocess.run([sys.executable, "-m", "zsplan.cli", "limits", "mcb", "--type", "B",
                        "--fault", "250A", "--time", "0.2 s", "-o", str(out)],
                       capture_output=True, text=True, encoding="utf-8", timeout=120,
                       env=dict(os.environ))
    assert p.returncode == 0, p.stderr
    lines = p.stdout.splitlines()
    row32 = next(line for line in lines if line.split() and line.split()[0] == "32")
    # In, then Ia, Zs max and 0.8 Zs max at 0.4 s, 5 s and the asked 0.2 s
    assert row32.split() == ["32", "160", "1.36", "1.09", "160", "1.36", "1.09", "160", "1.36", "1.09"]
    assert f"Caution: {CAUTION}" in p.stdout
    assert _parse(out.read_text(encoding="utf-8")).tag == f"{SVG}svg"
    p = subprocess.run([sys.executable, "-m", "zsplan.cli", "limits", "nonesuch"],
                       capture_output=True, text=True, encoding="utf-8", timeout=120)
    assert p.returncode == 2 and "unknown device family" in p.stderr and "Traceback" not in p.stderr

"""Tests of zsplan.sheets: ISO 216 sizes, layout, scale choice, fit errors,
scale bar, and true-scale output through cairosvg."""
from __future__ import annotations

import io
import re

import numpy as np
import pytest

from zsplan import sheets as sh
from zsplan.errors import PlanError


# ISO 216:2007 Table 1, A series trimmed sizes (mm)
@pytest.mark.parametrize("name, short, long_", [
    ("A0", 841, 1189),   # ISO 216:2007 Table 1
    ("A1", 594, 841),    # ISO 216:2007 Table 1
    ("A2", 420, 594),    # ISO 216:2007 Table 1
    ("A3", 297, 420),    # ISO 216:2007 Table 1
    ("A4", 210, 297),    # ISO 216:2007 Table 1
])
def test_iso_216_sizes_and_orientation(name, short, long_):
    land = sh.sheet(name, "landscape")
    port = sh.sheet(name.lower(), "Portrait")
    assert (land.width_mm, land.height_mm) == (long_, short)
    assert (port.width_mm, port.height_mm) == (short, long_)


def test_iso_216_series_properties():
    # ISO 216: A0 has an area of 1 m2, sides in ratio sqrt(2), and each size
    # is the previous one halved (sides rounded down to whole millimetres)
    a0 = sh.SHEET_SIZES_MM["A0"]
    assert a0[0] * a0[1] / 1e6 == pytest.approx(1.0, rel=2e-3)
    names = ["A0", "A1", "A2", "A3", "A4"]
    for big, small in zip(names, names[1:]):
        s, l = sh.SHEET_SIZES_MM[big]
        assert sh.SHEET_SIZES_MM[small] == (l // 2, s)
        assert l / s == pytest.approx(2 ** 0.5, rel=3e-3)


def test_sheet_errors_name_the_place():
    with pytest.raises(PlanError, match=r"job\.yaml: output\.sheet: sheet 'B5' is not known"):
        sh.sheet("B5", file="job.yaml", path="output.sheet")
    with pytest.raises(PlanError, match="orientation 'sideways'"):
        sh.sheet("A3", "sideways")


def test_svg_attrs_are_millimetres():
    assert sh.sheet("A3").svg_attrs() == {"width": "420mm", "height": "297mm", "viewBox": "0 0 420 297"}


@pytest.mark.parametrize("text, expected", [
    ("1:50", 50.0), (" 1 : 100 ", 100.0), ("20", 20.0), (250, 250.0), (12.5, 12.5),
    ("fit", "fit"), ("EXACT", "exact"),
])
def test_parse_scale(text, expected):
    assert sh.parse_scale(text) == expected


@pytest.mark.parametrize("bad", ["1/50", "1:0", "0", -50, "1:-5", "scale", None, True, float("nan")])
def test_parse_scale_refuses(bad):
    with pytest.raises(PlanError, match="expected 1:N"):
        sh.parse_scale(bad, file="plan.yaml", path="drawing.scale")


def test_layout_areas_on_a3_landscape():
    lay = sh.fit((10.0, 5.0), "A3", "landscape", "1:50")
    # hand-worked: frame = 420 - 2 x 10 by 297 - 2 x 10; drawing area height
    # = 277 - 30 (title block) - 5 (gap) = 242
    assert (lay.frame.x, lay.frame.y, lay.frame.width, lay.frame.height) == (10, 10, 400, 277)
    assert (lay.drawing_area.width, lay.drawing_area.height) == (400, 242)
    assert lay.title_block.bottom == pytest.approx(287) and lay.title_block.height == 30
    assert lay.drawing_area.bottom <= lay.title_block.y
    # hand-worked: 1:50 -> 20 mm per metre; 10 m x 5 m -> 200 x 100 mm, centred
    assert lay.mm_per_m == 20.0 and lay.scale_label == "1:50"
    assert (lay.drawing.width, lay.drawing.height) == (200.0, 100.0)
    assert lay.drawing.centre == pytest.approx(lay.drawing_area.centre)
    assert lay.fits


def test_to_paper_maps_corners_and_is_vectorised():
    lay = sh.fit((2.0, 1.0, 12.0, 6.0), "A3", "landscape", 50)
    x, y = lay.to_paper([2.0, 12.0, 7.0], [1.0, 6.0, 3.5])
    np.testing.assert_allclose(x, [lay.drawing.x, lay.drawing.right, lay.drawing.centre[0]])
    np.testing.assert_allclose(y, [lay.drawing.y, lay.drawing.bottom, lay.drawing.centre[1]])
    xu, yu = lay.to_paper(2.0, 1.0, y_up=True)   # plan origin at the bottom-left
    assert (float(xu), float(yu)) == pytest.approx((lay.drawing.x, lay.drawing.bottom))
    # hand-worked: 1 m along x at 1:50 is 20 mm on paper
    x2, _ = lay.to_paper([3.0, 4.0], [1.0, 1.0])
    assert x2[1] - x2[0] == pytest.approx(20.0)


def test_fit_picks_the_largest_standard_scale_that_fits():
    # 23.4 m wide on A3 landscape (400 mm): 1:50 needs 468 mm, 1:100 needs 234 mm (hand-worked)
    assert sh.fit((23.4, 8.0), "A3", "landscape", "fit").scale == 100
    # 7 m x 4 m: 1:20 needs 350 x 200 mm, fits 400 x 242 (hand-worked)
    assert sh.fit((7.0, 4.0), "A3", "landscape", "fit").scale == 20
    # 7 m x 5 m: 1:20 needs 250 mm high > 242, so 1:25 (280 x 200 mm)
    assert sh.fit((7.0, 5.0), "A3", "landscape", "fit").scale == 25
    assert sh.fit((0.0, 0.0), "A4", "portrait", "fit").scale == 10


def test_exact_fit_fills_the_limiting_side():
    lay = sh.fit((23.4, 8.0), "A3", "landscape", "exact")
    # hand-worked: N = max(23400 / 400, 8000 / 242) = max(58.5, 33.06) = 58.5
    assert lay.scale == pytest.approx(58.5)
    assert lay.drawing.width == pytest.approx(lay.drawing_area.width)
    assert lay.drawing.height < lay.drawing_area.height


def test_fit_error_says_what_is_needed_and_what_to_try():
    with pytest.raises(PlanError) as exc:
        sh.fit((23.4, 8.0), "A3", "landscape", "1:50", file="larch.yaml", path="output.scale")
    msg = str(exc.value)
    # hand-worked: 23.4 m x 1000 / 50 = 468 mm; A3 landscape frame 420 - 20 = 400 mm;
    # A2 landscape frame 594 - 20 = 574 mm >= 468 mm
    assert msg == ("larch.yaml: output.scale: the plan is 23.4 m wide; at 1:50 it needs 468 mm "
                   "but A3 landscape has 400 mm; try --scale 1:100 or --sheet A2")


def test_fit_error_for_height_suggests_turning_the_sheet():
    with pytest.raises(PlanError, match=r"15\.0 m high; at 1:50 it needs 300 mm but A3 landscape "
                                         r"has 242 mm above the title block; try --scale 1:100 "
                                         r"or --sheet A3 portrait"):
        sh.fit((12.0, 15.0), "A3", "landscape", "1:50")


def test_fit_error_when_no_standard_scale_fits():
    with pytest.raises(PlanError, match=r"even at 1:500.*try --sheet A1 or --scale exact"):
        sh.fit((300.0, 200.0), "A3", "landscape", "fit")
    lay = sh.fit((300.0, 200.0), "A3", "landscape", "fit", strict=False)
    assert not lay.fits and "1:500" in lay.problem


def test_fit_needs_never_understated():
    # 400.4 mm needed on a 400 mm frame: reported as 401, not 400 (hand-worked: 20.02 m at 1:50)
    with pytest.raises(PlanError, match="needs 401 mm but A3 landscape has 400 mm"):
        sh.fit((20.02, 1.0), "A3", "landscape", 50)
    assert sh.fit((20.0, 1.0), "A3", "landscape", 50).fits   # exactly 400 mm fits


def test_bad_extent_is_refused():
    with pytest.raises(ValueError):
        sh.fit((5.0, 5.0, 1.0, 1.0))
    with pytest.raises(ValueError):
        sh.fit((float("nan"), 2.0))


@pytest.mark.parametrize("n, sheet_name, expected_m", [
    (20, "A3", 2.0),    # 50 mm/m, limit 100 mm -> 2 m = 100 mm (hand-worked)
    (50, "A3", 5.0),    # 20 mm/m -> 5 m = 100 mm
    (100, "A3", 10.0),  # 10 mm/m -> 10 m = 100 mm
    (200, "A4", 5.0),   # 5 mm/m, limit 190 / 4 = 47.5 mm -> 5 m = 25 mm (10 m = 50 mm too long)
    (58.5, "A3", 5.0),  # 17.09 mm/m -> 5 m = 85.5 mm (10 m = 171 mm too long)
])
def test_scale_bar_round_length(n, sheet_name, expected_m):
    lay = sh.fit((1.0, 1.0), sheet_name, "portrait" if sheet_name == "A4" else "landscape", n)
    length_m, length_mm, ticks = sh.scale_bar(lay)
    assert length_m == expected_m
    assert length_mm == pytest.approx(length_m * 1000.0 / n, rel=1e-12)
    assert ticks[0] == (0.0, 0.0)
    assert ticks[-1][0] == pytest.approx(length_m) and ticks[-1][1] == pytest.approx(length_mm)
    assert len(ticks) in (5, 6)
    assert np.allclose(np.diff([t[1] for t in ticks]), length_mm / (len(ticks) - 1))


def _bar_svg(lay, length_mm):
    attrs = " ".join(f'{k}="{v}"' for k, v in lay.sheet.svg_attrs().items())
    x, y = lay.title_block.x + 5, lay.title_block.y + 10
    return (f'<svg xmlns="http://www.w3.org/2000/svg" {attrs}>'
            f'<rect width="100%" height="100%" fill="white"/>'
            f'<rect x="{x}" y="{y}" width="{length_mm}" height="2" fill="black"/></svg>')


@pytest.mark.parametrize("n", [20, 50, 100])
def test_scale_bar_prints_at_true_length(n):
    """Rasterise a true-scale A4 sheet with cairosvg and measure the bar."""
    cairosvg = pytest.importorskip("cairosvg")
    from PIL import Image

    lay = sh.fit((1.0, 1.0), "A4", "portrait", n)
    length_m, length_mm, _ = sh.scale_bar(lay)
    dpi = 127.0                                      # 5 px per mm (25.4 mm per inch)
    png = cairosvg.svg2png(bytestring=_bar_svg(lay, length_mm).encode(), dpi=dpi)
    img = np.asarray(Image.open(io.BytesIO(png)).convert("L"), dtype=float)
    # whole sheet is 210 x 297 mm -> 1050 x 1485 px
    assert img.shape == (1485, 1050)
    ink = (255.0 - img) / 255.0                      # coverage per pixel, antialiased edges count partly
    row = ink[int((lay.title_block.y + 11) * dpi / 25.4)]
    drawn_mm = row.sum() / (dpi / 25.4)
    expected_mm = length_m * 1000.0 / n              # length_m at 1:N
    assert drawn_mm == pytest.approx(expected_mm, rel=0.005)


def test_pdf_page_is_the_true_sheet_size():
    cairosvg = pytest.importorskip("cairosvg")
    lay = sh.fit((10.0, 5.0), "A3", "landscape", 50)
    pdf = cairosvg.svg2pdf(bytestring=_bar_svg(lay, 100).encode())
    box = re.search(rb"/MediaBox\s*\[\s*([0-9. ]+)\]", pdf).group(1).split()
    w_pt, h_pt = float(box[2]) - float(box[0]), float(box[3]) - float(box[1])
    # 1 pt = 25.4 / 72 mm (PostScript point); A3 = 420 x 297 mm (ISO 216)
    assert w_pt * 25.4 / 72 == pytest.approx(420.0, abs=0.2)
    assert h_pt * 25.4 / 72 == pytest.approx(297.0, abs=0.2)

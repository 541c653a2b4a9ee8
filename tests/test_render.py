"""The marked-up plan (zsplan.render): structure, colours, scale, safety, determinism."""
import dataclasses
import io
import re
from pathlib import Path

import numpy as np
import pytest
from defusedxml import ElementTree as SafeET
from shapely.geometry import box

from zsplan import CAUTION, palette
from zsplan.check import check
from zsplan.errors import PlanError
from zsplan.labels import count_overlaps, label_polygon
from zsplan.loader import load_plan, load_plan_text
from zsplan.render import render_svg, schedule_svg, svg_to_png, write_drawing
from zsplan.results import safe_round
from zsplan.sheets import SHEET_SIZES_MM

HERE = Path(__file__).parent
DATA = HERE / "data" / "render"
DEMO = HERE.parent / "src" / "zsplan" / "demo" / "flat.yaml"
NS = "{http://www.w3.org/2000/svg}"
MM_PER_PT = 25.4 / 72          # 1 pt = 1/72 in (PDF user space), 1 in = 25.4 mm


@pytest.fixture(scope="module")
def demo():
    return check(load_plan(DEMO))


@pytest.fixture(scope="module")
def demo_svg(demo):
    return render_svg(demo)


@pytest.fixture(scope="module")
def dense():
    return check(load_plan(DATA / "dense.yaml"))


@pytest.fixture(scope="module")
def hostile():
    return check(load_plan(DATA / "hostile" / "plan.yaml"))


def parse(svg: str):
    return SafeET.fromstring(svg.encode("utf-8"))


def routes_of(root):
    return [e for e in root.iter(f"{NS}polyline") if "route" in (e.get("class") or "").split()]


def page_sizes_mm(pdf: bytes):
    boxes = re.findall(rb"/MediaBox\s*\[\s*([-\d.]+)\s+([-\d.]+)\s+([-\d.]+)\s+([-\d.]+)\s*\]", pdf)
    return [((float(x1) - float(x0)) * MM_PER_PT, (float(y1) - float(y0)) * MM_PER_PT)
            for x0, y0, x1, y1 in boxes]


# --------------------------------------------------------------------------- structure

def test_one_route_per_circuit_in_its_band_style(demo, demo_svg):
    root = parse(demo_svg)
    assert root.get("width") == "420mm" and root.get("height") == "297mm"   # ISO 216 A3
    routes = routes_of(root)
    plan = demo.plan
    assert sorted(r.get("data-circuit") for r in routes) == sorted(f"{c.board}/{c.ref}" for c in plan.circuits)
    by_key = {r.get("data-circuit"): r for r in routes}
    for i, c in enumerate(plan.circuits):
        el = by_key[f"{c.board}/{c.ref}"]
        m = float(demo.circuits["margin"][i])
        band = str(palette.band(m, plan.settings.tight))
        dash, width = palette.style(band)
        assert el.get("stroke") == palette.colour(m, plan.settings.tight)
        assert el.get("stroke-dasharray") == dash
        assert float(el.get("stroke-width")) == pytest.approx(width)
        assert f"route-{band}" in el.get("class")
        assert el.get("data-status") == demo.circuits["status"][i]
        # the polyline has the route's points, in order
        pts = el.get("points").split()
        assert len(pts) == len(c.route)


def test_route_geometry_is_at_scale(demo, demo_svg):
    # every route segment on paper is its plan length x 1000 / N (hand-worked: at
    # 1:50 one metre is 20 mm), N read from the title block
    root = parse(demo_svg)
    label = "".join(root.find(f".//{NS}g[@id='zs-scale']").itertext())
    n = float(re.search(r"Scale 1:(\d+(?:\.\d+)?)", label).group(1))
    for el in routes_of(root):
        c = next(c for c in demo.plan.circuits if f"{c.board}/{c.ref}" == el.get("data-circuit"))
        xy = np.array([[float(v) for v in p.split(",")] for p in el.get("points").split()])
        plan_len = np.hypot(*np.diff(np.array(c.route), axis=0).T).sum()
        paper_len = np.hypot(*np.diff(xy, axis=0).T).sum()
        assert paper_len == pytest.approx(plan_len * 1000 / n, abs=0.01)


def test_failing_circuit_is_drawn_in_the_fail_band(tmp_path):
    # DB1/9: 32 A type B on 2.5/1.5 mm² over a 59 m route: Zs far above its limit
    text = (DATA / "fail.yaml").read_text(encoding="utf-8")
    res = check(load_plan_text(text, file=str(tmp_path / "fail.yaml"), base_dir=tmp_path))
    i = [c.ref for c in res.plan.circuits].index("9")
    assert res.circuits["status"][i] == "fail" and res.circuits["margin"][i] < 0
    root = parse(render_svg(res))
    el = next(e for e in routes_of(root) if e.get("data-circuit") == "DB1/9")
    fail_colours = set(palette.colour(np.linspace(-1.0, -1e-9, 200)))
    assert el.get("stroke") in fail_colours
    assert el.get("stroke") == palette.colour(float(res.circuits["margin"][i]))
    assert "route-fail" in el.get("class") and el.get("data-status") == "fail"
    assert el.get("stroke-dasharray") is None                       # solid
    assert float(el.get("stroke-width")) == pytest.approx(palette.style("fail")[1])
    # drawn last (on top of the others)
    assert routes_of(root)[-1] is el
    # and counted in the title block
    count = root.find(f".//{NS}text[@data-band='fail']")
    assert count.get("data-count") == str(int(np.sum(res.circuits["status"] == "fail")))


def test_labels_show_safely_rounded_figures(demo, demo_svg):
    root = parse(demo_svg)
    labels = {g.get("data-circuit"): "".join(g.itertext()) for g in root.iter(f"{NS}g")
              if "label" in (g.get("class") or "").split()}
    a = demo.circuits
    for i, c in enumerate(demo.plan.circuits):
        key = f"{c.board}/{c.ref}"
        zs = safe_round("zs_ohm", float(a["zs_ohm"][i]), 2)            # rounded up
        zmax = safe_round("zs_max_ohm", float(a["zs_max_ohm"][i]), 2)  # rounded down
        assert zs >= a["zs_ohm"][i] and zmax <= a["zs_max_ohm"][i]
        assert f"Zs {zs:.2f}/{zmax:.2f} Ω" in labels[key]
        assert labels[key].startswith(key)


def test_other_failing_check_marks_the_route(demo):
    res = dataclasses.replace(demo, checks=[dict(ch) for ch in demo.checks])
    res.checks[1]["vdrop"] = "fail"
    root = parse(render_svg(res))
    key = f"{res.plan.circuits[1].board}/{res.plan.circuits[1].ref}"
    g = next(g for g in root.iter(f"{NS}g") if g.get("data-circuit") == key
             and "label" in (g.get("class") or "").split())
    assert g.find(f"{NS}g[@class='warning']") is not None
    assert "voltage drop" in "".join(g.itertext())


def test_title_block_has_caution_counts_and_no_date_unless_asked(demo, demo_svg):
    root = parse(demo_svg)
    caution = " ".join("".join(root.find(f".//{NS}g[@id='zs-caution']").itertext()).split())
    assert " ".join(CAUTION.split()) in caution.replace("Caution: ", "", 1).replace(" ", " ")
    info = "".join(root.find(f".//{NS}text[@class='sheet-info']").itertext())
    assert "A3 landscape" in info and "1:50" in info
    assert "date" not in info
    assert not re.search(r"\b20\d\d-\d\d-\d\d\b", demo_svg)
    dated = render_svg(demo, date="2031-05-17")
    assert "date 2031-05-17" in dated
    s = demo.summary()
    for band in ("pass", "tight", "fail"):
        assert root.find(f".//{NS}text[@data-band='{band}']").get("data-count") == str(s[band])


def test_underlay_lines_up_with_the_routes(demo, demo_svg):
    # the demo floor plan draws board CU1 as a rect centred on (25, 128) units
    # (1:50, 1 unit = 1 mm: 1.25 m, 6.4 m), where the plan puts the board
    root = parse(demo_svg)
    g = root.find(f".//{NS}g[@id='zs-floorplan']")
    a, b, c, d, e, f = (float(v) for v in re.findall(r"[-\d.]+", g.get("transform")))
    use = root.find(f".//{NS}use[@data-board='CU1']")
    cx = float(use.get("x")) + float(use.get("width")) / 2
    cy = float(use.get("y")) + float(use.get("height")) / 2
    assert (a * 25 + e, d * 128 + f) == pytest.approx((cx, cy), abs=1e-3)
    # the drawn routes, boards and outlets layers are not copied (they are redrawn)
    assert g.find(f".//{NS}g[@id='fp-cable_routes']") is None
    assert g.find(f".//{NS}g[@id='fp-outlets']") is None
    assert g.find(f".//{NS}g[@id='fp-floor_plan']") is not None


# --------------------------------------------------------------------------- scale

def test_scale_bar_measures_its_length_in_the_svg(demo_svg):
    root = parse(demo_svg)
    bar = root.find(f".//{NS}g[@id='zs-scale-bar']")
    label = "".join(root.find(f".//{NS}g[@id='zs-scale']").itertext())
    n = float(re.search(r"Scale 1:(\d+)", label).group(1))
    length_m = float(bar.get("data-length-m"))
    outline = bar.find(f"{NS}rect[@class='scale-bar-outline']")
    # the last tick label states the length
    assert "".join(bar[-1].itertext()) == f"{length_m:g} m"
    assert float(outline.get("width")) == pytest.approx(length_m * 1000 / n, rel=0.005)


def test_scale_bar_measures_its_length_when_printed(demo_svg):
    # rasterise at 300 dpi and measure a black division of the bar in pixels:
    # mm = px x 25.4 / dpi; division = length / parts at 1:N
    from PIL import Image

    dpi = 300
    root = parse(demo_svg)
    bar = root.find(f".//{NS}g[@id='zs-scale-bar']")
    rects = [r for r in bar.findall(f"{NS}rect") if r.get("class") is None]
    n = float(re.search(r"1:(\d+)", "".join(root.find(f".//{NS}g[@id='zs-scale']").itertext())).group(1))
    parts = len(rects)
    length_m = float(bar.get("data-length-m"))
    third = rects[2]                    # black, with white divisions either side
    x0, y0 = float(third.get("x")), float(third.get("y"))
    w_mm, h_mm = float(third.get("width")), float(third.get("height"))
    img = Image.open(io.BytesIO(svg_to_png(demo_svg, dpi))).convert("L")
    px = lambda mm: mm * dpi / 25.4   # noqa: E731
    row = int(px(y0 + h_mm / 2))
    lo, hi = round(px(x0 - w_mm / 2)), round(px(x0 + 1.5 * w_mm))
    line = np.asarray(img, dtype=float)[row, lo:hi]
    # coverage of each pixel by the division: 0 on paper white, 1 on full ink
    # (anti-aliased edge pixels in between); the window runs from the middle of
    # the white division before to the middle of the one after
    ink = line.min()
    coverage = (255.0 - line) / (255.0 - ink)
    measured_mm = coverage.sum() * 25.4 / dpi
    expected_mm = length_m / parts * 1000 / n
    assert measured_mm == pytest.approx(expected_mm, rel=0.005)


def test_orientation_follows_the_plan_shape(tmp_path):
    tall = (DATA / "fail.yaml").read_text(encoding="utf-8")
    res = check(load_plan_text(tall, file=str(tmp_path / "p.yaml"), base_dir=tmp_path))
    plan = res.plan
    # turn every point by 90 degrees: x' = y, y' = x (the plan becomes tall)
    flip = lambda p: (p[1], p[0])   # noqa: E731
    turned = dataclasses.replace(plan, boards=tuple(dataclasses.replace(b, at=flip(b.at)) for b in plan.boards),
                                 circuits=tuple(dataclasses.replace(c, route=tuple(map(flip, c.route)),
                                                                    outlets=tuple(dataclasses.replace(o, at=flip(o.at)) for o in c.outlets))
                                                for c in plan.circuits))
    wide = parse(render_svg(res, sheet="A4"))
    tall_root = parse(render_svg(dataclasses.replace(res, plan=turned), sheet="A4"))
    assert wide.get("width") == "297mm"      # ISO 216 A4 landscape
    assert tall_root.get("width") == "210mm"  # ISO 216 A4 portrait


def test_plan_that_does_not_fit_says_so(demo):
    with pytest.raises(PlanError) as exc:
        render_svg(demo, sheet="A4", scale="1:20")
    assert "1:20" in str(exc.value) and "try" in str(exc.value)


# --------------------------------------------------------------------------- labels

def _label_polygons(root):
    polys = []
    for g in root.iter(f"{NS}g"):
        if "label" not in (g.get("class") or "").split():
            continue
        tx, ty, ang = (float(v) for v in re.match(
            r"translate\(([-\d.]+) ([-\d.]+)\) rotate\(([-\d.]+)\)", g.get("transform")).groups())
        r = g.find(f"{NS}rect")
        w, h = float(r.get("width")), float(r.get("height"))
        assert float(r.get("x")) == pytest.approx(-w / 2, abs=1e-3)
        assert float(r.get("y")) == pytest.approx(-h / 2, abs=1e-3)
        polys.append((g, label_polygon(tx, ty, w, h, ang)))
    return polys


def _symbol_boxes(root):
    out = []
    for u in root.iter(f"{NS}use"):
        if u.get("data-circuit") or u.get("data-board"):
            x, y, w, h = (float(u.get(k)) for k in ("x", "y", "width", "height"))
            out.append(box(x, y, x + w, y + h))
    return out


@pytest.mark.parametrize("sheet", ["A3", "A4"])
def test_dense_plan_labels_do_not_overlap(dense, sheet):
    # 30 circuits from one board in a 9 m x 6.5 m flat
    svg = render_svg(dense, sheet=sheet)
    root = parse(svg)
    polys = _label_polygons(root)
    assert len(polys) == 30
    overlaps = count_overlaps([p for _, p in polys], _symbol_boxes(root))
    assert overlaps == 0
    # every label inside the drawing area (above the title block, inside the frame)
    clip = root.find(f".//{NS}clipPath[@id='zs-clip-drawing']/{NS}rect")
    x, y, w, h = (float(clip.get(k)) for k in ("x", "y", "width", "height"))
    area = box(x, y, x + w, y + h)
    assert all(area.contains(p) for _, p in polys)


def test_label_boxes_hold_their_text(demo_svg):
    cairocffi = pytest.importorskip("cairocffi")
    surf = cairocffi.ImageSurface(cairocffi.FORMAT_ARGB32, 4, 4)
    ctx = cairocffi.Context(surf)
    ctx.select_font_face("DejaVu Sans")
    for g, _ in _label_polygons(parse(demo_svg)):
        t = g.find(f"{NS}text")
        ctx.set_font_size(float(t.get("font-size")) * 100)
        width = ctx.text_extents(t.text)[4] / 100      # as the font sets it
        assert width <= float(g.find(f"{NS}rect").get("width"))


# --------------------------------------------------------------------------- print

def test_pdf_pages_match_the_sheets(demo, tmp_path):
    out = tmp_path / "plan.pdf"
    write_drawing(demo, out)
    pdf = out.read_bytes()
    assert pdf.startswith(b"%PDF-")
    sizes = page_sizes_mm(pdf)
    pages = 1 + len(schedule_svg(demo))
    assert len(sizes) == pages
    a3, a4 = SHEET_SIZES_MM["A3"], SHEET_SIZES_MM["A4"]        # ISO 216:2007 Table 1
    assert sizes[0] == pytest.approx((a3[1], a3[0]), abs=0.5)   # A3 landscape
    for s in sizes[1:]:
        assert s == pytest.approx(a4, abs=0.5)                  # schedule: A4 portrait
    out2 = tmp_path / "portrait.pdf"
    write_drawing(demo, out2, sheet="A2", orientation="portrait")
    assert page_sizes_mm(out2.read_bytes())[0] == pytest.approx(SHEET_SIZES_MM["A2"], abs=0.5)


def test_png_golden_structure(demo, tmp_path):
    from PIL import Image

    out = tmp_path / "plan.png"
    write_drawing(demo, out)                      # 150 dpi
    img = Image.open(out)
    # A3 landscape at 150 dpi: 420 mm x 150 / 25.4 = 2480.3 px, 297 mm -> 1753.9 px
    assert img.size[0] == pytest.approx(420 / 25.4 * 150, abs=1)
    assert img.size[1] == pytest.approx(297 / 25.4 * 150, abs=1)
    rgb = np.asarray(img.convert("RGB")).reshape(-1, 3)
    assert (rgb != 255).any(axis=1).mean() > 0.02           # a drawing, not a blank page
    root = parse(render_svg(demo))
    colours = {e.get("stroke") for e in routes_of(root)}
    for col in colours:
        want = np.array([int(col[i:i + 2], 16) for i in (1, 3, 5)])
        hits = np.all(np.abs(rgb - want) <= 2, axis=1).sum()
        assert hits > 200, col                          # each route colour is on the sheet


# --------------------------------------------------------------------------- safety

BANNED = ("passwd", "198.51.100.7", "<script", "script>", "onload", "onclick", "inside.png",
          "foreignObject", "javascript", "@import", "file:")


def test_hostile_underlay_leaks_nothing_into_svg(hostile):
    svg = render_svg(hostile)
    for s in BANNED:
        assert s not in svg, s
    root = parse(svg)
    fp = root.find(f".//{NS}g[@id='zs-floorplan']")
    assert fp is not None and fp.find(f".//{NS}rect[@class='wall']") is not None   # walls kept
    # its ids cannot shadow ours, its style sheets reach only inside it
    ids = [e.get("id") for e in fp.iter() if e.get("id")]
    assert ids and all(i == "zs-floorplan" or i.startswith("fp-") for i in ids)
    for st in root.iter(f"{NS}style"):
        rules = [r for r in st.text.split("}") if r.strip()]
        assert all(all(sel.strip().startswith("#zs-floorplan ") for sel in r.split("{")[0].split(","))
                   for r in rules)


def test_hostile_underlay_cannot_restyle_the_plan(hostile):
    # its style sheet paints polylines, labels and the paper red and hides the
    # routes; its symbol redefines ours in red; its images would be red
    from PIL import Image

    svg = render_svg(hostile)
    img = np.asarray(Image.open(io.BytesIO(svg_to_png(svg, 60))).convert("RGB")).astype(int)
    red = (img[..., 0] > 200) & (img[..., 1] < 80) & (img[..., 2] < 80)
    assert red.sum() == 0
    root = parse(svg)
    for col in {e.get("stroke") for e in routes_of(root)}:
        want = np.array([int(col[i:i + 2], 16) for i in (1, 3, 5)])
        assert np.all(np.abs(img - want) <= 2, axis=-1).sum() > 20   # routes still drawn


def test_hostile_underlay_fetches_nothing_for_pdf(hostile, tmp_path, monkeypatch):
    import urllib.request

    import cairosvg.url

    fetched = []

    def record(url, *args, **kwargs):
        fetched.append(str(getattr(url, "full_url", url)))
        raise OSError("fetching is not allowed in this test")

    monkeypatch.setattr(urllib.request, "urlopen", record)
    monkeypatch.setattr(cairosvg.url, "urlopen", record)
    out = tmp_path / "hostile.pdf"
    write_drawing(hostile, out)
    assert fetched == []
    pdf = out.read_bytes()
    for s in (b"passwd", b"198.51.100.7", b"inside.png", b"javascript"):
        assert s not in pdf


def test_underlay_with_entities_is_refused_and_nothing_written(tmp_path):
    plan = load_plan(DATA / "entity" / "plan.yaml")      # the loader does not parse the drawing
    res = check(plan)
    out = tmp_path / "x.pdf"
    with pytest.raises(PlanError) as exc:
        write_drawing(res, out)
    msg = str(exc.value)
    assert "entity.svg" in msg and "entity" in msg.lower()
    assert not out.exists() and list(tmp_path.iterdir()) == []


def test_underlay_outside_the_plan_folder_is_refused(hostile, tmp_path):
    outside = tmp_path / "elsewhere.svg"
    outside.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="10mm" height="10mm"/>')
    plan = dataclasses.replace(hostile.plan, drawing=dataclasses.replace(
        hostile.plan.drawing, floorplan=str(outside)))
    with pytest.raises(PlanError) as exc:
        render_svg(dataclasses.replace(hostile, plan=plan))
    assert "outside" in str(exc.value)


def test_outputs_never_overwrite_inputs_and_need_a_known_type(demo, tmp_path):
    plan_text = Path(demo.plan.path).read_bytes()
    with pytest.raises(PlanError):
        write_drawing(demo, demo.plan.path.replace(".yaml", ".yaml"))   # the plan itself
    with pytest.raises(PlanError):
        write_drawing(demo, demo.plan.drawing.floorplan)                # the floor plan
    extra = tmp_path / "notes.svg"
    extra.write_text("keep")
    with pytest.raises(PlanError):
        write_drawing(demo, extra, inputs=[extra])
    assert extra.read_text() == "keep"
    assert Path(demo.plan.path).read_bytes() == plan_text
    with pytest.raises(PlanError) as exc:
        write_drawing(demo, tmp_path / "plan.docx")
    assert ".svg, .pdf or .png" in str(exc.value)
    assert not (tmp_path / "plan.docx").exists()


# --------------------------------------------------------------------------- determinism

def test_svg_is_byte_identical_from_run_to_run(demo, demo_svg, tmp_path):
    again = render_svg(check(load_plan(DEMO)))
    assert again == demo_svg
    a, b = tmp_path / "a.svg", tmp_path / "b.svg"
    write_drawing(demo, a)
    write_drawing(demo, b)
    assert a.read_bytes() == b.read_bytes() == demo_svg.encode("utf-8")
    # coordinates carry at most three decimals
    assert not re.search(r"\d\.\d{4,}", re.sub(r"matrix\([^)]*\)", "", demo_svg.split("zs-floorplan")[0]))


def test_pdf_is_byte_identical_from_run_to_run(demo, tmp_path):
    a, b = tmp_path / "a.pdf", tmp_path / "b.pdf"
    write_drawing(demo, a)
    write_drawing(demo, b)
    assert a.read_bytes() == b.read_bytes()


# --------------------------------------------------------------------------- measured

def test_measured_margins_colour_the_routes(demo):
    c0, c1 = demo.plan.circuits[0], demo.plan.circuits[1]
    measured = {(c0.board, c0.ref): -0.1, (c1.board, c1.ref): 0.05}
    root = parse(render_svg(demo, measured=measured))
    by_key = {e.get("data-circuit"): e for e in routes_of(root)}
    assert by_key[f"{c0.board}/{c0.ref}"].get("stroke") == palette.colour(-0.1)
    assert "route-fail" in by_key[f"{c0.board}/{c0.ref}"].get("class")
    assert "route-tight" in by_key[f"{c1.board}/{c1.ref}"].get("class")
    others = [e for k, e in by_key.items() if k not in (f"{c0.board}/{c0.ref}", f"{c1.board}/{c1.ref}")]
    assert others and all(e.get("stroke") == palette.NO_RESULT_COLOUR for e in others)
    legend = "".join(root.find(f".//{NS}g[@id='zs-legend']").itertext())
    assert "Measured" in legend


# --------------------------------------------------------------------------- schedule

def test_schedule_rows_values_and_caution(demo):
    pages = schedule_svg(demo)
    assert len(pages) == 1
    root = parse(pages[0])
    assert root.get("width") == "210mm" and root.get("height") == "297mm"   # A4 portrait
    rows = [g for g in root.iter(f"{NS}g") if g.get("class") == "row"]
    assert [g.get("data-circuit") for g in rows] == [f"{c.board}/{c.ref}" for c in demo.plan.circuits]
    a = demo.circuits
    for i, g in enumerate(rows):
        cell = {t.get("class"): t.text for t in g.iter(f"{NS}text") if t.get("class")}
        assert float(cell["zs_max"]) == safe_round("zs_max_ohm", float(a["zs_max_ohm"][i]), 2)
        assert float(cell["zs_test"]) <= a["zs_test_max_ohm"][i]       # limit rounded down
        assert float(cell["r1r2"]) >= a["r1r2_test_ohm"][i]            # impedance rounded up
        assert float(cell["length"]) >= a["length_m"][i]
        status = g.find(f".//{NS}text[@data-status]").get("data-status")
        assert status == a["status"][i]
    foot = " ".join("".join(root.find(f".//{NS}g[@id='zs-caution']").itertext()).split())
    assert " ".join(CAUTION.split()) in foot


def test_schedule_paginates_and_keeps_every_circuit_once(dense):
    pages = schedule_svg(dense, sheet="A4", orientation="landscape")
    assert len(pages) >= 2
    keys = []
    for n, page in enumerate(pages, start=1):
        root = parse(page)
        assert root.get("width") == "297mm"
        keys += [g.get("data-circuit") for g in root.iter(f"{NS}g") if g.get("class") == "row"]
        assert f"Sheet {n} of {len(pages)}" in page
        assert root.find(f".//{NS}g[@id='zs-caution']") is not None
    assert keys == [f"{c.board}/{c.ref}" for c in dense.plan.circuits]


def test_dense_sheet_label_budget_lists_the_labels_left_out(dense, monkeypatch):
    import zsplan.render as R
    monkeypatch.setattr(R, "DENSE_LABELS", 1)       # treat the 30-circuit plan as dense
    monkeypatch.setattr(R, "LABEL_BUDGET", 300)     # room for only a few labels
    svg = render_svg(dense, sheet="A4")
    assert render_svg(dense, sheet="A4") == svg     # deterministic
    root = parse(svg)
    polys = _label_polygons(root)
    labelled = {g.get("data-circuit") for g, _ in polys}
    note = root.find(f".//{NS}g[@id='zs-unlabelled']")
    assert note is not None
    keys = [f"{c.board}/{c.ref}" for c in dense.plan.circuits]
    left_out = [k for k in keys if k not in labelled]
    assert 0 < len(polys) < 30 and int(note.get("data-count")) == len(left_out)
    text = "".join(note.itertext())
    assert text.startswith("Not labelled on the plan")
    shown = re.findall(r"[\w-]+/[\w-]+", text)
    assert shown and set(shown) <= set(left_out) and len(set(shown)) == len(shown)
    assert count_overlaps([p for _, p in polys], _symbol_boxes(root)) == 0
    # every route is still drawn
    assert len(routes_of(root)) == 30


def test_sparse_sheet_has_no_unlabelled_note(demo_svg):
    assert "zs-unlabelled" not in demo_svg

"""Tests of zsplan.symbols: the package's SVG symbols parse, carry the
promised ids and geometry, and land centred on their insertion point."""
from __future__ import annotations

import io
from importlib import resources

import defusedxml.ElementTree as SafeET
import numpy as np
import pytest

from zsplan import symbols as sy

SVG = "{http://www.w3.org/2000/svg}"
KINDS = ["socket", "light", "switch", "spur", "fixed", "board"]


def test_every_outlet_kind_of_the_model_has_a_symbol():
    # plan model: Outlet.kind is socket | light | switch | spur | fixed; boards are drawn too
    assert sorted(sy.SYMBOL_IDS) == sorted(KINDS)
    assert len(set(sy.SYMBOL_IDS.values())) == len(KINDS)
    assert all(v.startswith("zs-sym-") for v in sy.SYMBOL_IDS.values())


def test_package_holds_exactly_these_files():
    files = {p.name for p in resources.files("zsplan").joinpath("symbols").iterdir()
             if p.name.endswith(".svg")}
    assert files == {f"{k}.svg" for k in KINDS}


@pytest.mark.parametrize("kind", KINDS)
def test_symbol_file_is_small_centred_stroke_only_svg(kind):
    root = SafeET.fromstring(sy.symbol_svg(kind).encode())
    assert root.tag == f"{SVG}svg"
    assert (root.get("width"), root.get("height")) == ("5mm", "5mm")
    x, y, w, h = (float(v) for v in root.get("viewBox").split())
    assert (x + w / 2, y + h / 2) == (0.0, 0.0)       # insertion point at the centre
    assert w == h == sy.SYMBOL_SIZE_MM
    assert root.find(f"{SVG}title").text
    shapes = [e for e in root.iter() if e.tag.split("}")[1] in ("path", "circle", "rect", "line")]
    assert shapes
    for el in root.iter():
        assert el.get("fill") in (None, "none")          # stroke only
        assert el.get("stroke") in (None, "currentColor")
        assert not any(k.endswith("href") for k in el.attrib)  # nothing external


@pytest.mark.parametrize("kind", KINDS)
def test_symbols_stay_inside_their_box(kind):
    svgelements = pytest.importorskip("svgelements")
    doc = svgelements.SVG.parse(io.StringIO(sy.symbol_svg(kind)), reify=True)
    boxes = [e.bbox() for e in doc.elements() if isinstance(e, svgelements.Shape)]
    boxes = [b for b in boxes if b is not None]
    assert boxes
    # svgelements applies the viewBox and reports CSS px (96 per inch); the
    # document is 5 mm wide, so 1 mm = 96 / 25.4 px and the centre is 2.5 mm in
    px = 96.0 / 25.4
    xmin = min(b[0] for b in boxes) / px - 2.5
    ymin = min(b[1] for b in boxes) / px - 2.5
    xmax = max(b[2] for b in boxes) / px - 2.5
    ymax = max(b[3] for b in boxes) / px - 2.5
    # geometry (without stroke) within the box less half the 0.25 mm stroke
    assert -2.375 <= xmin and xmax <= 2.375 and -2.375 <= ymin and ymax <= 2.375
    # and it fills a fair part of it: at least 3 mm across one way
    assert max(xmax - xmin, ymax - ymin) >= 3.0


def test_symbol_defs_has_all_ids():
    frag = sy.symbol_defs()
    root = SafeET.fromstring(f'<svg xmlns="http://www.w3.org/2000/svg">{frag}</svg>'.encode())
    defs = root.find(f"{SVG}defs")
    ids = [s.get("id") for s in defs.findall(f"{SVG}symbol")]
    assert ids == [sy.SYMBOL_IDS[k] for k in sy.SYMBOL_IDS]
    for s in defs.findall(f"{SVG}symbol"):
        assert s.get("viewBox") == "-2.5 -2.5 5 5"
        assert len(list(s.iter())) > 2
    assert "ns0:" not in frag
    one = sy.symbol_defs(["light"])
    assert 'id="zs-sym-light"' in one and "zs-sym-socket" not in one
    with pytest.raises(ValueError, match="no symbol for kind 'heater'"):
        sy.symbol_defs(["heater"])


@pytest.mark.parametrize("kind", KINDS)
def test_use_places_the_symbol_centred_and_coloured(kind):
    """Rasterise with cairosvg: the ink's bounding box is centred on the
    insertion point and drawn in the requested colour."""
    cairosvg = pytest.importorskip("cairosvg")
    from PIL import Image

    cx, cy = 20.0, 10.0
    doc = ('<svg xmlns="http://www.w3.org/2000/svg" width="40mm" height="20mm" viewBox="0 0 40 20">'
           f'{sy.symbol_defs()}<rect width="40" height="20" fill="white"/>'
           f'{sy.use(kind, cx, cy, colour="#0000ff")}</svg>')
    px = 20.0                                                   # px per mm at 508 dpi
    img = np.asarray(Image.open(io.BytesIO(cairosvg.svg2png(bytestring=doc.encode(), dpi=25.4 * px)))
                     .convert("RGB"), dtype=int)
    ink = img.sum(axis=2) < 600
    ys, xs = np.nonzero(ink)
    assert xs.size > 0
    # drawn within the 5 mm box round the insertion point
    assert xs.min() / px >= cx - 2.5 and (xs.max() + 1) / px <= cx + 2.5
    assert ys.min() / px >= cy - 2.5 and (ys.max() + 1) / px <= cy + 2.5
    # and symmetric about it where the drawing is (socket/switch are not symmetric vertically)
    assert (xs.min() + xs.max() + 1) / 2 / px == pytest.approx(cx, abs=0.35)
    darkest = img[ink].mean(axis=0)
    assert darkest[2] > darkest[0] + 100 and darkest[2] > darkest[1] + 100   # blue, via currentColor


def test_use_refuses_unknown_kind():
    with pytest.raises(ValueError):
        sy.use("heater", 0, 0)

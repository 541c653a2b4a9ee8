"""Tests of zsplan.colourscience (published formulas and test data) and of the
margin palette built on it (bands, continuity, colour-vision separation,
monochrome styles, legend, documentation figures)."""
from __future__ import annotations

import re
import warnings
from pathlib import Path

import defusedxml.ElementTree as SafeET
import numpy as np
import pytest

from zsplan import colourscience as cs
from zsplan import palette as pal

DOCS = Path(__file__).resolve().parents[1] / "docs"

# ----------------------------------------------------------------- CIEDE2000
# Sharma, Wu & Dalal (2005), Color Res. Appl. 30(1) 21-30, Table 1: all 34
# pairs, columns L1 a1 b1 L2 a2 b2 dE00 (the authors' supplementary test data).
SHARMA_2005_TABLE_1 = [
    (50.0000, 2.6772, -79.7751, 50.0000, 0.0000, -82.7485, 2.0425),    # Sharma 2005 Table 1, pair 1
    (50.0000, 3.1571, -77.2803, 50.0000, 0.0000, -82.7485, 2.8615),    # Sharma 2005 Table 1, pair 2
    (50.0000, 2.8361, -74.0200, 50.0000, 0.0000, -82.7485, 3.4412),    # Sharma 2005 Table 1, pair 3
    (50.0000, -1.3802, -84.2814, 50.0000, 0.0000, -82.7485, 1.0000),   # Sharma 2005 Table 1, pair 4
    (50.0000, -1.1848, -84.8006, 50.0000, 0.0000, -82.7485, 1.0000),   # Sharma 2005 Table 1, pair 5
    (50.0000, -0.9009, -85.5211, 50.0000, 0.0000, -82.7485, 1.0000),   # Sharma 2005 Table 1, pair 6
    (50.0000, 0.0000, 0.0000, 50.0000, -1.0000, 2.0000, 2.3669),       # Sharma 2005 Table 1, pair 7
    (50.0000, -1.0000, 2.0000, 50.0000, 0.0000, 0.0000, 2.3669),       # Sharma 2005 Table 1, pair 8
    (50.0000, 2.4900, -0.0010, 50.0000, -2.4900, 0.0009, 7.1792),      # Sharma 2005 Table 1, pair 9
    (50.0000, 2.4900, -0.0010, 50.0000, -2.4900, 0.0010, 7.1792),      # Sharma 2005 Table 1, pair 10
    (50.0000, 2.4900, -0.0010, 50.0000, -2.4900, 0.0011, 7.2195),      # Sharma 2005 Table 1, pair 11
    (50.0000, 2.4900, -0.0010, 50.0000, -2.4900, 0.0012, 7.2195),      # Sharma 2005 Table 1, pair 12
    (50.0000, -0.0010, 2.4900, 50.0000, 0.0009, -2.4900, 4.8045),      # Sharma 2005 Table 1, pair 13
    (50.0000, -0.0010, 2.4900, 50.0000, 0.0010, -2.4900, 4.8045),      # Sharma 2005 Table 1, pair 14
    (50.0000, -0.0010, 2.4900, 50.0000, 0.0011, -2.4900, 4.7461),      # Sharma 2005 Table 1, pair 15
    (50.0000, 2.5000, 0.0000, 50.0000, 0.0000, -2.5000, 4.3065),       # Sharma 2005 Table 1, pair 16
    (50.0000, 2.5000, 0.0000, 73.0000, 25.0000, -18.0000, 27.1492),    # Sharma 2005 Table 1, pair 17
    (50.0000, 2.5000, 0.0000, 61.0000, -5.0000, 29.0000, 22.8977),     # Sharma 2005 Table 1, pair 18
    (50.0000, 2.5000, 0.0000, 56.0000, -27.0000, -3.0000, 31.9030),    # Sharma 2005 Table 1, pair 19
    (50.0000, 2.5000, 0.0000, 58.0000, 24.0000, 15.0000, 19.4535),     # Sharma 2005 Table 1, pair 20
    (50.0000, 2.5000, 0.0000, 50.0000, 3.1736, 0.5854, 1.0000),        # Sharma 2005 Table 1, pair 21
    (50.0000, 2.5000, 0.0000, 50.0000, 3.2972, 0.0000, 1.0000),        # Sharma 2005 Table 1, pair 22
    (50.0000, 2.5000, 0.0000, 50.0000, 1.8634, 0.5757, 1.0000),        # Sharma 2005 Table 1, pair 23
    (50.0000, 2.5000, 0.0000, 50.0000, 3.2592, 0.3350, 1.0000),        # Sharma 2005 Table 1, pair 24
    (60.2574, -34.0099, 36.2677, 60.4626, -34.1751, 39.4387, 1.2644),  # Sharma 2005 Table 1, pair 25
    (63.0109, -31.0961, -5.8663, 62.8187, -29.7946, -4.0864, 1.2630),  # Sharma 2005 Table 1, pair 26
    (61.2901, 3.7196, -5.3901, 61.4292, 2.2480, -4.9620, 1.8731),      # Sharma 2005 Table 1, pair 27
    (35.0831, -44.1164, 3.7933, 35.0232, -40.0716, 1.5901, 1.8645),    # Sharma 2005 Table 1, pair 28
    (22.7233, 20.0904, -46.6940, 23.0331, 14.9730, -42.5619, 2.0373),  # Sharma 2005 Table 1, pair 29
    (36.4612, 47.8580, 18.3852, 36.2715, 50.5065, 21.2231, 1.4146),    # Sharma 2005 Table 1, pair 30
    (90.8027, -2.0831, 1.4410, 91.1528, -1.6435, 0.0447, 1.4441),      # Sharma 2005 Table 1, pair 31
    (90.9257, -0.5406, -0.9208, 88.6381, -0.8985, -0.7239, 1.5381),    # Sharma 2005 Table 1, pair 32
    (6.7747, -0.2908, -2.4247, 5.8714, -0.0985, -2.2286, 0.6377),      # Sharma 2005 Table 1, pair 33
    (2.0776, 0.0795, -1.1350, 0.9033, -0.0636, -0.5514, 0.9082),       # Sharma 2005 Table 1, pair 34
]


@pytest.mark.parametrize("row", SHARMA_2005_TABLE_1, ids=[f"pair{i + 1}" for i in range(34)])
def test_ciede2000_sharma_pairs(row):
    lab1, lab2, expected = np.array(row[:3]), np.array(row[3:6]), row[6]
    # the table is printed to 4 decimals
    assert cs.ciede2000(lab1, lab2) == pytest.approx(expected, abs=1e-4)
    # Sharma 2005, "mathematical observations": the formula is symmetric
    assert cs.ciede2000(lab2, lab1) == pytest.approx(expected, abs=1e-4)


def test_ciede2000_vectorised_equals_one_by_one():
    d = np.array(SHARMA_2005_TABLE_1)
    together = cs.ciede2000(d[:, :3], d[:, 3:6])
    alone = [float(cs.ciede2000(r[:3], r[3:6])) for r in d]
    np.testing.assert_allclose(together, alone, rtol=0, atol=1e-12)
    assert cs.ciede2000(d[:, :3], d[:, :3]).max() == 0.0   # identical colours: zero difference


# ----------------------------------------------------------------- sRGB / Lab

def test_srgb_transfer_published_breakpoints_and_round_trip():
    # IEC 61966-2-1:1999: the two branches meet at C = 0.04045 <-> C_lin = 0.0031308
    assert cs.srgb_to_linear(0.04045) == pytest.approx(0.0031308, rel=1e-4)
    assert cs.linear_to_srgb(0.0031308) == pytest.approx(0.04045, rel=1e-4)
    # hand-worked: ((0.5 + 0.055) / 1.055) ** 2.4 = 0.526066 ** 2.4 = 0.214041
    assert cs.srgb_to_linear(0.5) == pytest.approx(0.214041, abs=1e-6)
    v = np.linspace(0, 1, 1001)
    np.testing.assert_allclose(cs.linear_to_srgb(cs.srgb_to_linear(v)), v, atol=1e-12)


def test_lab_of_white_black_and_mid_grey():
    # CIE 15:2004 8.2.1: the reference white has L* = 100, a* = b* = 0
    np.testing.assert_allclose(cs.srgb_to_lab([1.0, 1.0, 1.0]), [100.0, 0.0, 0.0], atol=1e-9)
    np.testing.assert_allclose(cs.srgb_to_lab([0.0, 0.0, 0.0]), [0.0, 0.0, 0.0], atol=1e-9)
    # hand-worked: grey 0.5 -> Y = 0.214041 (matrix rows sum to Y_white = 1),
    # L* = 116 * 0.214041 ** (1/3) - 16 = 116 * 0.598177 - 16 = 53.389
    lab = cs.srgb_to_lab([0.5, 0.5, 0.5])
    assert lab[0] == pytest.approx(53.389, abs=2e-3)
    assert abs(lab[1]) < 1e-9 and abs(lab[2]) < 1e-9


def test_lab_branches_meet_and_hex_round_trip():
    # CIE 15:2004: f(t) is continuous at t = (6/29)^3 (both branches give 6/29 = 4/29 + 2/29)
    t = (6 / 29) ** 3
    below = cs.xyz_to_lab(np.array([1.0, t * (1 - 1e-12), 1.0]) * cs.WHITE_D65)
    above = cs.xyz_to_lab(np.array([1.0, t * (1 + 1e-12), 1.0]) * cs.WHITE_D65)
    assert below[0] == pytest.approx(above[0], abs=1e-8)
    assert above[0] == pytest.approx(116 * 6 / 29 - 16, abs=1e-8)  # hand-worked: L* = 8.0
    rng = np.random.default_rng(7)
    rgb = rng.integers(0, 256, size=(500, 3)) / 255.0
    hexes = cs.srgb_to_hex(rgb)
    assert cs.srgb_to_hex(cs.lab_to_srgb(cs.srgb_to_lab(cs.hex_to_srgb(hexes)))) == hexes


def test_hex_parsing_rejects_bad_text():
    with pytest.raises(ValueError, match="#rrggbb"):
        cs.hex_to_srgb("#12345")
    assert cs.srgb_to_hex(cs.hex_to_srgb("#A1b2C3")) == "#a1b2c3"


# ----------------------------------------------------------------- CVD model

@pytest.mark.parametrize("kind", ["protanopia", "deuteranopia", "tritanopia"])
def test_machado_matrices_keep_neutrals(kind):
    # Machado et al. 2009: the simulation maps the achromatic axis onto itself
    # (each row of the published matrices sums to 1 within rounding)
    np.testing.assert_allclose(cs.MACHADO_2009[kind].sum(axis=1), 1.0, atol=2e-6)
    greys = np.linspace(0, 1, 11)[:, None] * np.ones(3)
    np.testing.assert_allclose(cs.simulate_cvd(greys, kind), greys, atol=1e-5)


@pytest.mark.parametrize("kind", ["protanopia", "deuteranopia"])
def test_red_green_dichromacy_collapses_one_dimension(kind):
    # A dichromat has two cone types, so the severity-1.0 protan and deutan
    # matrices of Machado et al. 2009 are of rank 2 (determinant ~ 0), and
    # colours differing along the null direction look the same.
    m = cs.MACHADO_2009[kind]
    assert abs(np.linalg.det(m)) < 1e-5
    null = np.linalg.svd(m)[2][-1]
    base = np.array([0.3, 0.3, 0.3])
    a, b = base + 0.1 * null, base - 0.1 * null
    assert np.abs(a - b).max() > 0.05                       # different colours ...
    np.testing.assert_allclose(a @ m.T, b @ m.T, atol=1e-6)   # ... seen as one


def test_unknown_vision_is_refused():
    with pytest.raises(ValueError, match="colour-vision"):
        cs.simulate_cvd([0.5, 0.5, 0.5], "achromatopsia")


def test_cross_check_with_colour_science():
    """Independent implementation (colour-science package), when installed."""
    colour = pytest.importorskip("colour")
    rng = np.random.default_rng(11)
    rgb1, rgb2 = rng.uniform(size=(300, 3)), rng.uniform(size=(300, 3))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        d65 = colour.CCS_ILLUMINANTS["CIE 1931 2 Degree Standard Observer"]["D65"]
        lab_ref = colour.XYZ_to_Lab(colour.sRGB_to_XYZ(rgb1), d65)
        lab1, lab2 = cs.srgb_to_lab(rgb1), cs.srgb_to_lab(rgb2)
        de_ref = colour.delta_E(lab1, lab2, method="CIE 2000")
        for ours, theirs in (("protanopia", "Protanomaly"), ("deuteranopia", "Deuteranomaly"),
                             ("tritanopia", "Tritanomaly")):
            np.testing.assert_allclose(cs.MACHADO_2009[ours],
                                       colour.blindness.matrix_cvd_Machado2009(theirs, 1.0),
                                       atol=1e-9)
    # white points differ in the 4th decimal (matrix row sums vs x,y = 0.3127, 0.3290)
    np.testing.assert_allclose(lab1, lab_ref, atol=0.02)
    np.testing.assert_allclose(cs.ciede2000(lab1, lab2), de_ref, atol=1e-9)


# ----------------------------------------------------------------- bands

def test_band_edges():
    # BS 7671:2018 Regulation 411.4.4 accepts Zs <= Zs max, so margin 0 is not a fail
    got = pal.band([-1.0, -1e-12, 0.0, 0.1999999, 0.2, 0.5, np.inf, -np.inf, np.nan])
    assert got.tolist() == ["fail", "fail", "tight", "tight", "pass", "pass", "pass", "fail", "none"]
    assert pal.band(0.25, tight=0.3) == "tight"
    assert pal.band(0.3, tight=0.3) == "pass"


def test_band_and_colour_scalar_and_array_agree():
    m = np.array([[-0.7, -0.1], [0.05, 0.35]])
    b = pal.band(m)
    assert b.shape == (2, 2)
    assert [pal.band(x).item() for x in m.ravel()] == b.ravel().tolist()
    cols = pal.colour(m)
    assert np.array(cols).shape == (2, 2)
    assert [pal.colour(x) for x in m.ravel()] == np.array(cols).ravel().tolist()
    assert isinstance(pal.colour(0.1), str)


@pytest.mark.parametrize("bad", [0.0, 1.0, -0.1, float("nan")])
def test_bad_tight_threshold_is_refused(bad):
    with pytest.raises(ValueError, match="tight threshold"):
        pal.band(0.1, tight=bad)


# ----------------------------------------------------------------- colour vision requirement

EPS = 1e-9
NEIGHBOURS = [("fail", "tight"), ("tight", "pass")]
MIN_SEPARATION = 15.0   # zsplan palette requirement, CIEDE2000 units (design target, no published source)


def _seen(hexes, vision):
    return cs.srgb_to_lab(cs.simulate_cvd(cs.hex_to_srgb(hexes), vision))


def _spans(t):
    return {"fail": (-0.6, -EPS), "tight": (0.0, t - EPS), "pass": (t, pal.pass_full(t) + 0.1)}


@pytest.mark.parametrize("tight", [0.1, 0.2, 0.3])
@pytest.mark.parametrize("vision", ["normal", "deuteranopia", "protanopia", "tritanopia"])
def test_neighbouring_bands_stay_apart(vision, tight):
    # edges: the colours just either side of margin 0 and of margin = tight
    for lo, hi in ((-EPS, 0.0), (tight - EPS, tight)):
        a, b = pal.colour([lo, hi], tight)
        assert pal.band([lo, hi], tight)[0] != pal.band([lo, hi], tight)[1]
        assert cs.ciede2000(_seen(a, vision), _seen(b, vision)) >= MIN_SEPARATION
    # band centres
    centres = {"fail": -0.25, "tight": tight / 2, "pass": (tight + pal.pass_full(tight)) / 2}
    for a, b in NEIGHBOURS:
        ca, cb = pal.colour([centres[a], centres[b]], tight)
        assert cs.ciede2000(_seen(ca, vision), _seen(cb, vision)) >= MIN_SEPARATION
    # and every colour of one band against every colour of its neighbour
    # (fail and pass too: they may lie side by side on a plan)
    lab = {k: _seen(pal.colour(np.linspace(*s, 41), tight), vision) for k, s in _spans(tight).items()}
    for a, b in NEIGHBOURS + [("fail", "pass")]:
        d = cs.ciede2000(lab[a][:, None, :], lab[b][None, :, :])
        assert d.min() >= MIN_SEPARATION, (vision, a, b, d.min())


@pytest.mark.parametrize("vision", ["normal", "deuteranopia", "protanopia", "tritanopia"])
def test_no_result_grey_is_set_apart(vision):
    # design target for the grey (no published source): >= 10; the dotted
    # thin line style (style("none")) tells it apart as well
    grey = _seen(pal.NO_RESULT.sample, vision)
    for k, s in _spans(0.2).items():
        d = cs.ciede2000(_seen(pal.colour(np.linspace(*s, 41)), vision), grey)
        assert d.min() >= 10.0, (vision, k, d.min())


# ----------------------------------------------------------------- within a band

def test_colour_is_continuous_and_monotone_within_each_band():
    t = 0.2
    for key, (lo, hi) in {"fail": (-0.5, -EPS), "tight": (0.0, t - EPS), "pass": (t, 0.6)}.items():
        m = np.linspace(lo, hi, 401)
        lab = pal.colour_lab(m, t)
        steps = cs.ciede2000(lab[1:], lab[:-1])
        assert steps.max() < 0.5, key                      # continuous: no jumps inside a band
        edge_end = lab[-1] if key == "fail" else lab[0]     # the end touching the tighter band
        d = cs.ciede2000(lab, edge_end[None, :])
        d = d[::-1] if key == "fail" else d
        assert np.all(np.diff(d) >= -1e-9), key             # monotone: farther margin, farther colour
        assert d[-1] > 15.0, key                            # and the ramp is visible
        # after 8-bit rounding the hex colours still move steadily
        hexd = cs.ciede2000(_seen(pal.colour(m, t), "normal")[1:], _seen(pal.colour(m, t), "normal")[:-1])
        assert hexd.max() < 1.0, key


def test_lightness_direction_of_the_ramps():
    L = lambda m: pal.colour_lab(m)[..., 0]  # noqa: E731
    assert L(-0.5) < L(-0.25) < L(-EPS)      # fails darken as they get worse
    assert L(0.0) < L(0.1) < L(0.2 - EPS)    # tight lightens towards a pass
    assert L(0.2) > L(0.4) > L(0.6)          # passes deepen with margin


def test_colour_clamps_at_the_ends():
    assert pal.colour(-0.5) == pal.colour(-3.0) == pal.colour(-np.inf)
    assert pal.colour(0.6) == pal.colour(5.0) == pal.colour(np.inf)
    assert pal.colour(-0.45) != pal.colour(-0.5)
    assert pal.colour(0.55) != pal.colour(0.6)
    # with tight = 0.5 the pass ramp runs to 0.7 = tight + 0.2
    assert pal.pass_full(0.5) == pytest.approx(0.7)
    assert pal.colour(0.69, 0.5) != pal.colour(0.7, 0.5) == pal.colour(0.9, 0.5)
    assert pal.colour(np.nan) == pal.NO_RESULT.sample


def test_anchor_colours_lie_inside_srgb():
    # the ramps are what was designed only if no channel is clipped
    for a, b in pal._ANCHORS_LAB.values():
        for lab in (a, b, (a + b) / 2):
            lin = cs.xyz_to_linear(cs.lab_to_xyz(lab))
            assert lin.min() >= 0.0 and lin.max() <= 1.0


# ----------------------------------------------------------------- monochrome and legend

def _dash(d):
    return () if d is None else tuple(float(x) for x in d.split())


def test_monochrome_styles_differ_between_bands():
    keys = ["fail", "tight", "pass", "none"]
    styles = [pal.style(k) for k in keys]
    dashes = [_dash(d) for d, _ in styles]
    assert len(set(dashes)) == 4                            # every dash pattern different
    widths = [w for _, w in styles]
    assert widths == sorted(widths, reverse=True) and len(set(widths)) == 4   # fail heaviest
    for d in dashes:
        assert all(x > 0 for x in d) and len(d) % 2 == 0
    # ISO 128-20:1996 line-width series (from memory): 0.13 0.18 0.25 0.35 0.5 0.7 1 1.4 2 mm
    assert set(widths) <= {0.13, 0.18, 0.25, 0.35, 0.5, 0.7, 1.0, 1.4, 2.0}
    with pytest.raises(ValueError):
        pal.style("marginal")


def test_bands_constant_matches_functions():
    assert list(pal.BANDS) == ["fail", "tight", "pass"]
    centre = {"fail": -0.25, "tight": 0.1, "pass": 0.4}
    for k, info in pal.BANDS.items():
        assert info.key == k
        assert info.sample == pal.colour(centre[k])
        assert (info.dash, info.width_mm) == pal.style(k)
        assert pal.band(centre[k]) == k
    grey = cs.srgb_to_lab(cs.hex_to_srgb(pal.NO_RESULT.sample))
    assert abs(grey[1]) < 0.01 and abs(grey[2]) < 0.01     # neutral
    assert "20 %" in pal.BANDS["tight"].describe(0.2)


def test_legend_stops_follow_colour():
    legend = pal.legend_stops(tight=0.25, n=6)
    assert [b.key for b in legend] == ["fail", "tight", "pass"]
    assert (legend[0].lo, legend[0].hi) == (-0.5, 0.0)
    assert (legend[1].lo, legend[1].hi) == (0.0, 0.25)
    assert legend[2].lo == 0.25 and legend[2].hi == pytest.approx(0.6)
    for b in legend:
        offs = [o for o, _ in b.stops]
        assert offs[0] == 0.0 and offs[-1] == 1.0 and np.all(np.diff(offs) > 0)
        cols = [c for _, c in b.stops]
        # every stop colour belongs to this band (its own ramp, not a neighbour's)
        own = pal.colour(np.linspace(b.lo, b.hi, 201)[1:-1], 0.25)
        own_lab = _seen(own, "normal")
        for c in cols:
            assert cs.ciede2000(_seen(c, "normal")[None, :], own_lab).min() < 1.5
        # an SVG gradient (sRGB interpolation between stops) stays within
        # 1 CIEDE2000 unit of the palette at the midpoints
        o = np.array(offs)
        rgb = cs.hex_to_srgb(cols)
        mids = (o[1:] + o[:-1]) / 2
        true = cs.hex_to_srgb(pal.colour(b.lo + (b.hi - b.lo) * mids, 0.25))
        interp = (rgb[1:] + rgb[:-1]) / 2
        assert cs.ciede2000(cs.srgb_to_lab(interp), cs.srgb_to_lab(true)).max() < 1.0


# ----------------------------------------------------------------- documentation

def test_swatch_is_svg_in_millimetres():
    svg = pal.swatch_svg()
    root = SafeET.fromstring(svg.encode())
    assert root.tag == "{http://www.w3.org/2000/svg}svg"
    assert root.get("width").endswith("mm") and root.get("height").endswith("mm")
    for k in pal.BAND_KEYS:
        assert pal.BANDS[k].sample in svg


def test_docs_swatch_is_current():
    path = DOCS / "palette-swatch.svg"
    if not path.exists():
        pytest.skip("docs not present (installed package)")
    assert path.read_text(encoding="utf-8") == pal.swatch_svg(), \
        "regenerate docs/palette-swatch.svg (see docs/palette.md)"


def test_docs_table_matches_measurement():
    path = DOCS / "palette.md"
    if not path.exists():
        pytest.skip("docs not present (installed package)")
    rows = re.findall(r"^\|\s*(normal|deuteranopia|protanopia|tritanopia)\s*\|\s*([a-z]+ / [a-z]+)\s*\|"
                      r"\s*([0-9.]+|-)\s*\|\s*([0-9.]+)\s*\|\s*([0-9.]+)\s*\|",
                      path.read_text(encoding="utf-8"), flags=re.M)
    measured = {(r["vision"], r["pair"].replace("/", " / ")): r for r in pal.separation_table()}
    assert len(rows) == len(measured)
    for vision, pair, edge, centre, low in rows:
        r = measured[(vision, pair)]
        if edge != "-":
            assert float(edge) == pytest.approx(r["edge"], abs=0.051)
        assert float(centre) == pytest.approx(r["centre"], abs=0.051)
        assert float(low) == pytest.approx(r["min"], abs=0.051)

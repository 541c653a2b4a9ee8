"""The plan-file loader: contract example, units, defaults and every error path.

All plans here are invented (made-up addresses and rooms).  Error tests
assert that a mistake gives exactly one problem naming the key path and the
line, the line being found independently by searching the test's own text.
Unit conversions carry their source beside them; the rest is structural.
"""
from __future__ import annotations

import dataclasses
import os
import textwrap
from pathlib import Path
from types import SimpleNamespace

import pytest
import yaml
from hypothesis import given, settings, strategies as st

from zsplan import loader, yaml_compose
from zsplan.errors import PlanError
from zsplan.loader import load_plan, load_plan_text
from zsplan.model import Device, Settings

PLANS = Path(__file__).parent / "data" / "plans"


@pytest.fixture(autouse=True)
def no_device_data(monkeypatch):
    """Isolate the loader from the device tables (tests below opt back in)."""
    monkeypatch.setattr(loader, "_device_checker", lambda: None)
    monkeypatch.setattr(loader, "_conductor_checker", lambda: None)


# --- helpers -------------------------------------------------------------------

PLAN = """\
zsplan: 1
title: 11 Sedge Walk, flat 2
supply:
  earthing: TN-C-S
  ze: 0.35 ohm
boards:
  - ref: CU1
    at: [0.5, 1.0]
circuits:
  - ref: "1"
    board: CU1
    name: Hall lights
    use: lighting
    device: {type: mcb, curve: B, rating: 6 A}
    cable: {line: 1.5 mm2, cpc: 1.0 mm2}
    route: [[0.5, 1.0], [0.5, 3.0], [4.0, 3.0]]
    outlets:
      - {at: [4.0, 3.0], height: 2.4 m, name: L1}
  - ref: "2"
    board: CU1
    name: Bedroom sockets
    device: {type: mcb, curve: B, rating: 32 A}
    cable: {line: 2.5 mm2, cpc: 1.5 mm2}
    route: [[0.5, 1.0], [6.0, 1.0]]
"""


def edit(old: str, new: str, text: str = PLAN) -> str:
    assert text.count(old) == 1, old
    return text.replace(old, new)


def line_of(text: str, marker: str, nth: int = 1) -> int:
    """1-based line of the nth line containing ``marker`` (found independently)."""
    hits = [i for i, ln in enumerate(text.splitlines(), 1) if marker in ln]
    return hits[nth - 1]


def problems(text: str, **kw):
    with pytest.raises(PlanError) as info:
        load_plan_text(text, file="plan.yaml", **kw)
    for p in info.value.problems:
        assert p.file in ("plan.yaml",) or p.file.endswith(".svg")
    return info.value.problems


def one_problem(text: str, **kw):
    found = problems(text, **kw)
    assert len(found) == 1, "\n".join(map(str, found))
    return found[0]


# --- the contract example ------------------------------------------------------

def test_contract_example_loads():
    plan = load_plan(PLANS / "example.yaml")
    text = (PLANS / "example.yaml").read_text()
    assert plan.version == 1 and plan.title == "4 Tansy Close, ground floor"
    s = plan.supply
    assert (s.u0_v, s.earthing, s.ze_ohm, s.cmin) == (230.0, "TN-C-S", 0.35, 0.95)
    (cu1,) = plan.boards
    assert cu1.ref == "CU1" and cu1.at == (0.5, 1.0) and cu1.height_m == 1.6
    assert cu1.where.line == line_of(text, "- ref: CU1")
    c3, c4 = plan.circuits
    assert c3.key == ("CU1", "3") and c3.name == "Kitchen worktop sockets"
    assert (c3.use, c3.topology, c3.run) == ("sockets", "radial", "ceiling")
    assert c3.device == Device(type="mcb", family="mcb", rating_a=32.0, curve="B")
    assert c3.rcd_a == pytest.approx(0.030)        # 30 mA = 0.030 A (SI prefix milli = 1e-3)
    cab = c3.cable
    assert (cab.line_mm2, cab.cpc_mm2, cab.material, cab.temp_rating_c) == (4.0, 1.5, "copper", 70.0)
    assert cab.cpc_with_line is True and cab.insulation == "thermoplastic"
    assert c3.ambient_c == 25.0 and c3.load_a == 24.0
    assert c3.route == ((0.5, 1.0), (0.5, 3.2), (5.4, 3.2))
    assert [(o.at, o.height_m, o.name, o.kind) for o in c3.outlets] == [
        ((2.1, 3.2), 0.45, "S1", "socket"), ((5.4, 3.2), 1.10, "S2", "socket")]
    assert c3.allowance == pytest.approx(0.15)     # 15 % = 0.15
    assert c3.extra_m == 1.0
    assert c3.ceiling_m == 2.4 and c3.test_temperature_c == 20.0   # from defaults
    assert c3.where == loader.Where(str(PLANS / "example.yaml"), "circuits[0]",
                                    line_of(text, 'ref: "3"'))
    # the second circuit inherits what it does not give
    assert c4.device == Device(type="fuse", family="bs88-3", rating_a=32.0)
    assert c4.allowance == pytest.approx(0.10) and c4.ambient_c == 20.0
    assert c4.use == "fixed" and c4.outlets == () and c4.rcd_a is None


def test_contract_example_devices_known_to_the_device_tables(monkeypatch):
    protection = pytest.importorskip("zsplan.protection")
    monkeypatch.setattr(loader, "_device_checker", lambda: protection.check_device)
    assert len(load_plan(PLANS / "example.yaml").circuits) == 2


def test_model_is_immutable():
    plan = load_plan(PLANS / "example.yaml")
    assert isinstance(plan.boards, tuple) and isinstance(plan.circuits, tuple)
    assert isinstance(plan.circuits[0].route, tuple) and isinstance(plan.circuits[0].outlets, tuple)
    with pytest.raises(dataclasses.FrozenInstanceError):
        plan.circuits[0].ref = "9"
    hash(plan.circuits[0])


def test_pure_python_yaml_gives_the_same_plan_and_lines(monkeypatch):
    fast = load_plan(PLANS / "example.yaml")
    bad = edit("ze: 0.35 ohm", "ze: 30 m")
    fast_problem = one_problem(bad)
    monkeypatch.setattr(yaml_compose, "LOADER", yaml.SafeLoader)
    assert load_plan(PLANS / "example.yaml") == fast
    assert one_problem(bad) == fast_problem


# --- quantities and units ------------------------------------------------------

def test_units_file():
    plan = load_plan(PLANS / "units.yaml")
    assert plan.supply.ze_ohm == pytest.approx(0.35)     # 350 mohm = 0.35 ohm (SI prefix milli = 1e-3)
    assert plan.supply.u0_v == 230.0                     # bare number: the key's unit, volt
    b = plan.boards[0]
    assert b.at == pytest.approx((3.048, 0.6096))        # 10 ft = 3.048 m, 24 in = 0.6096 m:
    # 1 ft = 0.3048 m and 1 in = 0.0254 m exactly (international yard and pound agreement, 1959)
    assert b.height_m == pytest.approx(1.5)              # 1500 mm = 1.5 m (SI prefix milli)
    (c,) = plan.circuits
    assert c.cable.line_mm2 == 1.5 and c.cable.cpc_mm2 == 1.0          # mm^2 and mm2 alike
    assert c.cable.temp_rating_c == 90.0 and c.cable.insulation == "thermosetting"
    assert c.route[1][0] == pytest.approx(1.0668)        # 3 ft 6 in = 0.9144 + 0.1524 m (1959 agreement)
    assert c.outlets[0].height_m == pytest.approx(2.1336)  # 7 ft = 7 x 0.3048 m (1959 agreement)
    assert c.outlets[0].kind == "light"                  # a lighting circuit's outlets default to lights
    assert c.extra_m == pytest.approx(0.3048)            # 12 in = 0.3048 m (1959 agreement)
    assert c.rcd_a == pytest.approx(0.03)                # bare number: the key's unit, ampere
    assert c.device == Device("rcbo", "rcbo", 6.0, "C")


@pytest.mark.parametrize("written, metres", [
    ("30 m", 30.0),
    ("98 ft", 29.8704),       # 98 x 0.3048 m (international foot, 1959 agreement)
    ("450 mm", 0.45),         # SI prefix milli = 1e-3
    ("18 in", 0.4572),        # 18 x 0.0254 m (international inch, 1959 agreement)
    ("12.5", 12.5),           # bare number in metres (plan contract)
])
def test_length_units(written, metres):
    plan = load_plan_text(edit("board: CU1\n    name: Bedroom", f"board: CU1\n    extra: {written}\n    name: Bedroom"))
    assert plan.circuits[1].extra_m == pytest.approx(metres)


@pytest.mark.parametrize("written", ["2.5 mm2", "2.5 mm^2", "2.5 mm²", "2.5"])
def test_area_spellings(written):
    plan = load_plan_text(edit("line: 2.5 mm2", f"line: {written}"))
    assert plan.circuits[1].cable.line_mm2 == 2.5


def test_scalars_keep_their_source_text():
    # YAML 1.1 would read 03 as the integer 3 and 1:50 as the sexagesimal 110
    text = edit('ref: "2"', "ref: 03")
    text = edit("boards:", "drawing: {scale: 1:50}\nboards:", text)
    plan = load_plan_text(text)
    assert plan.circuits[1].ref == "03"
    assert plan.drawing.scale == 50.0


# --- defaults -------------------------------------------------------------------

def test_contract_defaults_when_absent():
    plan = load_plan_text(PLAN)
    assert plan.supply.u0_v == 230.0 and plan.supply.cmin == 0.95
    assert plan.settings == Settings()
    assert plan.boards[0].height_m == 1.6
    c = plan.circuits[1]
    assert c.allowance == 0.0 and c.extra_m == 0.0 and c.ceiling_m == 2.4
    assert c.ambient_c == 30.0 and c.test_temperature_c == 20.0
    assert (c.use, c.topology, c.run) == ("sockets", "radial", "ceiling")
    assert (c.cable.material, c.cable.temp_rating_c, c.cable.cpc_with_line,
            c.cable.insulation) == ("copper", 70.0, True, "thermoplastic")
    assert c.rcd_a is None and c.load_a is None


def test_defaults_inherited_and_overridden():
    text = edit("boards:", textwrap.dedent("""\
        defaults:
          ceiling: 2.7 m
          allowance: 10 %
          extra: 0.5 m
          ambient: 25 degC
          test_temperature: 15 degC
          run: floor
          cable: {material: aluminium, temp_rating: 90 degC}
          cpc_with_line: false
        boards:"""))
    text = edit("    route: [[0.5, 1.0], [6.0, 1.0]]",
                "    route: [[0.5, 1.0], [6.0, 1.0]]\n    run: direct\n    allowance: 0 %\n"
                "    ambient: 35 degC\n    ceiling: 2.4 m", text)
    text = edit("cable: {line: 2.5 mm2, cpc: 1.5 mm2}",
                "cable: {line: 2.5 mm2, cpc: 1.5 mm2, material: copper}", text)
    inherit, override = load_plan_text(text).circuits
    assert (inherit.ceiling_m, inherit.allowance, inherit.extra_m) == (2.7, pytest.approx(0.10), 0.5)
    assert (inherit.ambient_c, inherit.test_temperature_c, inherit.run) == (25.0, 15.0, "floor")
    assert inherit.cable.material == "aluminium" and inherit.cable.temp_rating_c == 90.0
    assert inherit.cable.insulation == "thermosetting" and inherit.cable.cpc_with_line is False
    assert inherit.cable.line_mm2 == 1.5          # the circuit's own keys, merged key by key
    assert (override.run, override.allowance, override.ambient_c, override.ceiling_m) == (
        "direct", 0.0, 35.0, 2.4)
    assert override.extra_m == 0.5                # not overridden: inherited
    assert override.cable.material == "copper" and override.cable.temp_rating_c == 90.0


def test_circuit_may_take_its_whole_cable_from_defaults():
    text = edit("boards:", "defaults:\n  cable: {line: 2.5 mm2, cpc: 1.5 mm2}\nboards:")
    text = edit("    cable: {line: 2.5 mm2, cpc: 1.5 mm2}\n", "", text)
    assert load_plan_text(text).circuits[1].cable.line_mm2 == 2.5


def test_settings():
    text = edit("boards:", "settings: {tight: 25 %, alpha: iec60228, test_limit: "
                "temperature-ratio, vdrop_lighting: 4 %, vdrop_other: 6 %}\nboards:")
    s = load_plan_text(text).settings
    assert s == Settings(tight=pytest.approx(0.25), alpha="iec60228",
                         test_limit="temperature-ratio", vdrop_lighting_pct=4.0,
                         vdrop_other_pct=6.0)


def test_enum_values_are_case_insensitive():
    text = edit("earthing: TN-C-S", "earthing: tn-s")
    text = edit("{type: mcb, curve: B, rating: 32 A}", "{type: MCB, curve: c, rating: 32 A}", text)
    plan = load_plan_text(text)
    assert plan.supply.earthing == "TN-S"
    assert plan.circuits[1].device == Device("mcb", "mcb", 32.0, "C")


def test_fuse_and_own_family_devices():
    text = edit("{type: mcb, curve: B, rating: 32 A}", "{type: fuse, standard: bs1362, rating: 13}")
    text = edit("{type: mcb, curve: B, rating: 6 A}", "{type: mcb, curve: B, family: site-b6, rating: 6 A}", text)
    c1, c2 = load_plan_text(text).circuits
    assert c2.device == Device("fuse", "bs1362", 13.0, None)
    assert c1.device == Device("mcb", "site-b6", 6.0, "B")


def test_sub_main():
    text = edit("boards:\n", textwrap.dedent("""\
        boards:
          - ref: DB2
            at: [8, 1]
            height: 2.0 m
            fed_from:
              board: CU1
              cable: {line: 16 mm2, cpc: 6 mm2}
              length: 18 m
              device: {type: mcb, curve: C, rating: 63 A}
              load: 40 A
        """))
    plan = load_plan_text(text)
    db2 = plan.board("DB2")
    assert db2.fed_from.board == "CU1" and db2.fed_from.length_m == 18.0
    assert db2.fed_from.cable.line_mm2 == 16.0 and db2.fed_from.device.rating_a == 63.0
    assert db2.fed_from.load_a == 40.0 and db2.height_m == 2.0
    assert db2.where.path == "boards[0]" and db2.where.line == line_of(text, "ref: DB2")


def test_anchors_merge_keys_and_own_keys():
    text = textwrap.dedent("""\
        zsplan: 1
        x-common: &ring
          board: CU1
          topology: ring
          device: {type: mcb, curve: B, rating: 32 A}
          cable: {line: 2.5 mm2, cpc: 1.5 mm2}
        x-notes: {surveyed: "2031-04-01", by: [A, B]}
        supply: {earthing: TT, ze: 21 ohm, electrode: 40 ohm}
        boards: [{ref: CU1, at: [0, 0], x-colour: grey}]
        circuits:
          - <<: *ring
            ref: K1
            route: [[0, 0], [3, 0], [0, 0]]
          - <<: *ring
            ref: K2
            topology: radial
            route: [[0, 0], [2, 0]]
        """)
    plan = load_plan_text(text)
    k1, k2 = plan.circuits
    assert (k1.board, k1.topology, k1.cable.line_mm2) == ("CU1", "ring", 2.5)
    assert k2.topology == "radial"                 # the circuit's own key wins
    assert plan.supply.electrode_ohm == 40.0
    assert plan.extra["x-notes"] == {"surveyed": "2031-04-01", "by": ["A", "B"]}


# --- one mistake, one problem, with key path and line -------------------------

BAD = [
    # (old, new, path, line marker, message fragment)
    ("ze: 0.35 ohm", "ze: 30 m", "supply.ze", "ze: 30 m", "not an impedance"),
    ("ze: 0.35 ohm", "ze: 0 ohm", "supply.ze", "ze: 0", "greater than zero"),
    ("ze: 0.35 ohm", "ze: -0.2", "supply.ze", "ze: -0.2", "greater than zero"),
    ("ze: 0.35 ohm", "ze: .nan", "supply.ze", "ze: .nan", "finite"),
    ("ze: 0.35 ohm", "ze: .inf", "supply.ze", "ze: .inf", "finite"),
    ("ze: 0.35 ohm", "ze: -.Inf", "supply.ze", "ze: -.Inf", "finite"),
    ("ze: 0.35 ohm", "ze: nan ohm", "supply.ze", "ze: nan", "impedance"),
    ("ze: 0.35 ohm", "ze: 1e999 ohm", "supply.ze", "ze: 1e999", "finite"),
    ("ze: 0.35 ohm", "ze: [0.35]", "supply.ze", "ze: [", "got a list"),
    ("ze: 0.35 ohm", "ze:", "supply.ze", "ze:", "got nothing"),
    # a missing key is reported at the first line of the mapping that lacks it
    ("  ze: 0.35 ohm\n", "", "supply.ze", "earthing:", "missing required key 'ze'"),
    ("earthing: TN-C-S", "earthing: TN-X", "supply.earthing", "TN-X", "TN-S, TN-C-S, TT"),
    ("  earthing: TN-C-S\n", "  earthing: TN-C-S\n  cmin: 1.2\n", "supply.cmin", "cmin", "at most 1"),
    ("  earthing: TN-C-S\n", "  earthing: TN-C-S\n  u0: 230 A\n", "supply.u0", "u0", "voltage"),
    ("  earthing: TN-C-S\n", "  earthing: TN-C-S\n  electrode: 40 ohm\n", "supply.electrode",
     "electrode", "TT earthing only"),
    ("zsplan: 1\n", "zsplan: 1\nsuply: {}\n", "suply", "suply", "did you mean 'supply'?"),
    ("    cable: {line: 1.5 mm2, cpc: 1.0 mm2}", "    cable: {line: 1.5 mm2, cpc: 1.0 mm2}\n    lenght: 3 m",
     "circuits[0].lenght", "lenght", "unknown key 'lenght'"),
    ("{line: 2.5 mm2, cpc: 1.5 mm2}", "{line: 2.5 mm2, cpc: 1.5 mm2, cpcc: 1 mm2}",
     "circuits[1].cable.cpcc", "cpcc", "did you mean 'cpc'?"),
    ("use: lighting", "use: lightning", "circuits[0].use", "lightning", "did you mean 'lighting'?"),
    ("use: lighting", "use: lighting\n    topology: loop", "circuits[0].topology", "loop",
     "radial, ring"),
    ("use: lighting", "use: lighting\n    run: attic", "circuits[0].run", "attic",
     "ceiling, floor, direct"),
    ("{type: mcb, curve: B, rating: 32 A}", "{type: breaker, curve: B, rating: 32 A}",
     "circuits[1].device.type", "breaker", "mcb, rcbo, fuse"),
    ("{type: mcb, curve: B, rating: 32 A}", "{type: mcb, curve: K, rating: 32 A}",
     "circuits[1].device.curve", "curve: K", "B, C, D"),
    ("{type: mcb, curve: B, rating: 32 A}", "{type: mcb, rating: 32 A}",
     "circuits[1].device.curve", "rating: 32 A", "missing required key 'curve'"),
    ("{type: mcb, curve: B, rating: 32 A}", "{type: mcb, curve: B, rating: 0 A}",
     "circuits[1].device.rating", "rating: 0 A", "greater than zero"),
    ("{type: mcb, curve: B, rating: 32 A}", "{type: mcb, curve: B, rating: 32 V}",
     "circuits[1].device.rating", "rating: 32 V", "not a current"),
    ("{type: mcb, curve: B, rating: 32 A}", "{type: fuse, rating: 32 A}",
     "circuits[1].device.standard", "type: fuse", "bs88-2, bs88-3, bs3036, bs1362"),
    ("{type: mcb, curve: B, rating: 32 A}", "{type: fuse, standard: bs88-4, rating: 32 A}",
     "circuits[1].device.standard", "bs88-4", "unknown fuse standard"),
    ("{type: mcb, curve: B, rating: 32 A}", "{type: fuse, standard: bs88-3, curve: B, rating: 32 A}",
     "circuits[1].device.curve", "bs88-3", "not fuses"),
    ("{type: mcb, curve: B, rating: 32 A}", "{type: mcb, curve: B, standard: bs88-3, rating: 32 A}",
     "circuits[1].device.standard", "bs88-3", "applies to fuses"),
    ("{type: mcb, curve: B, rating: 32 A}", "mcb B32", "circuits[1].device", "mcb B32",
     "expected a protective device"),
    ("    device: {type: mcb, curve: B, rating: 32 A}\n", "", "circuits[1].device",
     'ref: "2"', "missing required key 'device'"),
    ("    board: CU1\n    name: Bed", "    name: Bed", "circuits[1].board", 'ref: "2"',
     "missing required key 'board'"),
    ('  - ref: "2"\n    board', "  - board", "circuits[1].ref", "- board",
     "missing required key 'ref'"),
    ("    cable: {line: 2.5 mm2, cpc: 1.5 mm2}\n", "", "circuits[1].cable", 'ref: "2"',
     "missing required key 'cable'"),
    ("{line: 2.5 mm2, cpc: 1.5 mm2}", "{line: 2.5 mm2}", "circuits[1].cable.cpc",
     "{line: 2.5 mm2}", "missing required key 'cpc'"),
    ("{line: 2.5 mm2, cpc: 1.5 mm2}", "{line: 0 mm2, cpc: 1.5 mm2}", "circuits[1].cable.line",
     "line: 0 mm2", "greater than zero"),
    ("{line: 2.5 mm2, cpc: 1.5 mm2}", "{line: 2.5 mm2, cpc: 1.5 mm2, material: copperr}",
     "circuits[1].cable.material", "copperr", "did you mean 'copper'?"),
    ("{line: 2.5 mm2, cpc: 1.5 mm2}", "{line: 2.5 mm2, cpc: 1.5 mm2, temp_rating: 80 degC}",
     "circuits[1].cable.temp_rating", "80 degC", "70 degC or 90 degC"),
    ("{line: 2.5 mm2, cpc: 1.5 mm2}", "{line: 2.5 mm2, cpc: 1.5 mm2, cpc_with_line: maybe}",
     "circuits[1].cable.cpc_with_line", "maybe", "true or false"),
    ("{line: 2.5 mm2, cpc: 1.5 mm2}", "{line: 2.5 mm2, cpc: 1.5 mm2, insulation: rubber}",
     "circuits[1].cable.insulation", "rubber", "thermoplastic, thermosetting"),
    ("use: lighting", "use: lighting\n    rcd: 30 mV", "circuits[0].rcd", "30 mV", "current"),
    ("use: lighting", "use: lighting\n    load: -2 A", "circuits[0].load", "-2 A", "zero or more"),
    ("use: lighting", "use: lighting\n    extra: -1 m", "circuits[0].extra", "-1 m", "zero or more"),
    ("use: lighting", "use: lighting\n    allowance: -5 %", "circuits[0].allowance", "-5 %",
     "zero or more"),
    ("use: lighting", "use: lighting\n    ceiling: 0 m", "circuits[0].ceiling", "ceiling: 0",
     "greater than zero"),
    ("use: lighting", "use: lighting\n    ambient: 75 degC", "circuits[0].ambient", "75 degC",
     "not below the cable's maximum operating temperature 70"),
    ("use: lighting", "use: lighting\n    test_temperature: -300 degC",
     "circuits[0].test_temperature", "-300 degC", "above absolute zero"),
    ("[[0.5, 1.0], [6.0, 1.0]]", "[[0.5, 1.0]]", "circuits[1].route", "[[0.5, 1.0]]",
     "at least 2 points"),
    ("[[0.5, 1.0], [6.0, 1.0]]", "[[0.5, 1.0], [6.0, .nan]]", "circuits[1].route[1][1]",
     ".nan", "finite"),
    ("[[0.5, 1.0], [6.0, 1.0]]", "[[0.5, 1.0], [6.0, 2 A]]", "circuits[1].route[1][1]",
     "[6.0, 2 A]", "length"),
    ("[[0.5, 1.0], [6.0, 1.0]]", "[[0.5, 1.0], [6.0, 1.0, 2.0]]", "circuits[1].route[1]",
     "2.0]]", "expected a point [x, y]"),
    ("[[0.5, 1.0], [6.0, 1.0]]", "0.5, 1.0", "circuits[1].route", "route: 0.5",
     "expected a list of points"),
    ("    route: [[0.5, 1.0], [6.0, 1.0]]\n", "", "circuits[1].route", 'ref: "2"',
     "has no route"),
    ("height: 2.4 m, name: L1", "name: L1", "circuits[0].outlets[0].height", "name: L1",
     "missing required key 'height'"),
    ("height: 2.4 m, name: L1", "height: 2.4 m, name: L1, kind: lamp",
     "circuits[0].outlets[0].kind", "lamp", "socket, light, switch, spur, fixed"),
    ("{at: [4.0, 3.0], height: 2.4 m, name: L1}", "{at: 4.0, height: 2.4 m, name: L1}",
     "circuits[0].outlets[0].at", "at: 4.0", "expected a point [x, y]"),
    ("    at: [0.5, 1.0]\n", "", "boards[0].at", "- ref: CU1", "missing required key 'at'"),
    ("    at: [0.5, 1.0]\n", "    at: [0.5, 1.0]\n    height: -1.6 m\n", "boards[0].height",
     "-1.6 m", "zero or more"),
    ("  - ref: CU1\n", "  - ref: CU1\n    heigth: 1.6 m\n", "boards[0].heigth", "heigth",
     "did you mean 'height'?"),
    ("boards:\n", "boards:\n  - {ref: CU1, at: [9, 9]}\n", "boards[1].ref", "- ref: CU1",
     "used twice"),
    ('    board: CU1\n    name: Bed', "    board: CU2\n    name: Bed", "circuits[1].board",
     "CU2", "unknown board 'CU2'; did you mean 'CU1'?"),
    ('ref: "2"', "ref: '1'", "circuits[1].ref", "ref: '1'", "used twice on board CU1"),
    ('ref: "2"', "ref: 2\n    ref: 3", "circuits[1].ref", "ref: 3", "appears twice"),
    ("boards:", "settings: {tight: 100 %}\nboards:", "settings.tight", "tight", "below 100 %"),
    ("boards:", "settings: {alpha: 0.004}\nboards:", "settings.alpha", "alpha",
     "bs7671, iec60228"),
    ("boards:", "settings: {test_limit: rule-of-0.75}\nboards:", "settings.test_limit",
     "test_limit", "did you mean 'rule-of-0.8'?"),
    ("boards:", "drawing: {scale: 50}\nboards:", "drawing.scale", "scale", "such as '1:50'"),
    ("boards:", "drawing: {scale: 1:50, units_per_metre: 20}\nboards:", "drawing",
     "scale", "only one of"),
    ("boards:", "drawing: {routes_layer: cable routes}\nboards:", "drawing.routes_layer",
     "routes_layer", "needs a floorplan"),
    ("boards:", "drawing: {calibrate: {from: [0, 0], to: [0, 0], length: 3 m}}\nboards:",
     "drawing.calibrate", "calibrate", "same point"),
    ("boards:", "drawing: {calibrate: {from: [0, 0], to: [10, 0]}}\nboards:",
     "drawing.calibrate.length", "calibrate", "missing required key 'length'"),
    ("boards:", "defaults: {cpc_with_line: 1}\nboards:", "defaults.cpc_with_line",
     "cpc_with_line", "true or false"),
    ("boards:", "defaults: {allowance: 10 m}\nboards:", "defaults.allowance",
     "allowance", "percent"),
    # inherited by both circuits, reported once where it is written
    ("boards:", "defaults: {ambient: 75 degC}\nboards:", "defaults.ambient",
     "ambient", "not below the cable's maximum operating temperature 70"),
]


@pytest.mark.parametrize("old, new, path, marker, fragment", BAD,
                         ids=[f"{b[2]}:{b[4][:24]}" for b in BAD])
def test_one_mistake_one_problem(old, new, path, marker, fragment):
    text = edit(old, new)
    p = one_problem(text)
    assert p.path == path
    assert p.line == line_of(text, marker)
    assert fragment in p.message
    assert str(p).startswith(f"plan.yaml:{p.line}: {path}: ")


def test_fed_from_unknown_board_self_and_loop():
    fed = "    fed_from: {{board: {up}, cable: {{line: 16 mm2, cpc: 6 mm2}}, length: 9 m, " \
          "device: {{type: fuse, standard: bs88-2, rating: 63 A}}}}\n"
    boards = ("boards:\n  - ref: DB1\n    at: [0, 0]\n" + fed.format(up="DB3") +
              "  - ref: DB2\n    at: [1, 0]\n" + fed.format(up="DB1") +
              "  - ref: DB3\n    at: [2, 0]\n" + fed.format(up="DB2"))
    text = edit("boards:\n", boards + "  - ref: DB4\n    at: [3, 0]\n" + fed.format(up="DB4") +
                "  - ref: DB5\n    at: [4, 0]\n" + fed.format(up="DB9"))
    found = problems(text)
    assert len(found) == 3, "\n".join(map(str, found))
    by_path = {p.path: p for p in found}
    loop = by_path["boards[0].fed_from.board"]            # one problem for the whole loop
    assert "loop" in loop.message and "DB1 <- DB3 <- DB2 <- DB1" in loop.message
    assert loop.line == line_of(text, "board: DB3")
    itself = by_path["boards[3].fed_from.board"]
    assert "fed from itself" in itself.message and itself.line == line_of(text, "board: DB4")
    unknown = by_path["boards[4].fed_from.board"]
    assert "unknown board 'DB9'" in unknown.message and unknown.line == line_of(text, "board: DB9")


def test_several_problems_listed_together():
    text = edit("ze: 0.35 ohm", "ze: 30 m")
    text = edit("cable: {line: 2.5 mm2", "cabel: {line: 2.5 mm2", text)
    text = edit("{type: mcb, curve: B, rating: 6 A}", "{type: mcb, curve: Q, rating: 6 A}", text)
    found = problems(text)
    got = {(p.path, p.line) for p in found}
    assert got == {
        ("supply.ze", line_of(text, "ze: 30 m")),
        ("circuits[1].cabel", line_of(text, "cabel")),
        ("circuits[1].cable", line_of(text, 'ref: "2"')),     # hence: no cable at all
        ("circuits[0].device.curve", line_of(text, "curve: Q")),
    }
    message = str(PlanError(found))
    assert message.startswith("4 problems found:") and "did you mean 'cable'?" in message


def test_same_mistake_in_many_circuits_is_reported_for_each():
    text = PLAN.replace("rating: 6 A", "rating: -6 A") + PLAN[PLAN.index('  - ref: "1"'):].replace(
        '"1"', '"3"').replace('"2"', '"4"').replace("rating: 6 A", "rating: -6 A")
    found = problems(text)
    assert [p.path for p in found] == ["circuits[0].device.rating", "circuits[2].device.rating"]


# --- the file as a whole -----------------------------------------------------------

def test_yaml_syntax_error_gives_line_and_column():
    text = edit("    board: CU1\n    name: Bed", "    board: [CU1\n    name: Bed")
    p = one_problem(text)
    assert p.message.startswith("YAML syntax error:")
    assert "column" in p.message
    assert line_of(text, "board: [CU1") <= p.line <= line_of(text, "board: [CU1") + 2


def test_tab_indentation_error_line():
    text = edit("  ze: 0.35 ohm", "\tze: 0.35 ohm")
    p = one_problem(text)
    assert "YAML syntax error" in p.message and p.line == line_of(text, "\tze")


@pytest.mark.parametrize("text, fragment", [
    ("", "the plan is empty"),
    ("# only a comment\n", "the plan is empty"),
    ("- zsplan: 1\n", "must be a mapping"),
    ("just words\n", "must be a mapping"),
])
def test_empty_or_not_a_mapping(text, fragment):
    p = one_problem(text)
    assert fragment in p.message and p.line == 1


@pytest.mark.parametrize("version", ["2", "0", "1.1", "one"])
def test_other_format_version_refused_alone(version):
    text = edit("zsplan: 1", f"zsplan: {version}") + "bogus: key\n"
    p = one_problem(text)
    assert p.path == "zsplan" and p.line == 1
    assert "not supported" in p.message and "version 1" in p.message


def test_missing_version_and_sections():
    p = problems("title: Nothing else\n")
    assert {(x.path, x.line) for x in p} == {("zsplan", 1), ("supply", 1), ("boards", 1),
                                             ("circuits", 1)}


def test_load_plan_missing_file(tmp_path):
    with pytest.raises(PlanError) as info:
        load_plan(tmp_path / "nowhere.yaml")
    assert "no such file" in str(info.value)


def test_load_plan_not_utf8(tmp_path):
    bad = tmp_path / "plan.yaml"
    bad.write_bytes(b"zsplan: 1\ntitle: caf\xe9\n")
    with pytest.raises(PlanError) as info:
        load_plan(bad)
    assert "UTF-8" in str(info.value)


def test_user_keys_are_ignored_anywhere():
    text = edit("    name: Hall lights", "    name: Hall lights\n    x-installer-note: loft hatch")
    assert load_plan_text(text).circuits[0].name == "Hall lights"


# --- devices known to the device tables ------------------------------------------------

def test_device_check_message_has_path_and_line(monkeypatch):
    calls = []

    def check(device):   # stands in for zsplan.protection.check_device
        calls.append(device)
        return None if device.rating_a != 33 else "no rating 33 A for mcb type B"

    monkeypatch.setattr(loader, "_device_checker", lambda: check)
    text = edit("{type: mcb, curve: B, rating: 32 A}", "{type: mcb, curve: B, rating: 33 A}")
    text += PLAN[PLAN.index('  - ref: "2"'):].replace('"2"', '"3"')   # a third circuit, B32
    p = one_problem(text)
    assert (p.path, p.line) == ("circuits[1].device", line_of(text, "rating: 33 A"))
    assert p.message == "no rating 33 A for mcb type B"
    assert sorted(d.rating_a for d in calls) == [6.0, 32.0, 33.0]     # each device checked once


# --- the floor plan ------------------------------------------------------------------

def _drawing_plan(floorplan: str, more: str = "") -> str:
    return edit("boards:", f"drawing:\n  floorplan: {floorplan}\n  scale: 1:50\n{more}boards:")


def test_floorplan_inside_the_plan_folder(tmp_path):
    (tmp_path / "plans" / "svg").mkdir(parents=True)
    svg = tmp_path / "plans" / "svg" / "ground.svg"
    svg.write_text((PLANS / "floorplan.svg").read_text())
    plan_file = tmp_path / "plans" / "home.yaml"
    plan_file.write_text(_drawing_plan("svg/ground.svg"))
    plan = load_plan(plan_file)
    assert plan.drawing.floorplan == str(svg.resolve())
    assert plan.drawing.scale == 50.0 and plan.drawing.routes_layer is None


@pytest.mark.parametrize("where", ["../outside.svg", "ABSOLUTE", "sub/../../outside.svg",
                                   "link.svg"])
def test_floorplan_escaping_the_plan_folder(tmp_path, where):
    (tmp_path / "plans" / "sub").mkdir(parents=True)
    outside = tmp_path / "outside.svg"
    outside.write_text((PLANS / "floorplan.svg").read_text())
    if where == "ABSOLUTE":
        where = str(outside)
    if where == "link.svg":
        if not hasattr(os, "symlink"):
            pytest.skip("no symbolic links here")
        (tmp_path / "plans" / "link.svg").symlink_to(outside)
    text = _drawing_plan(where)
    p = one_problem(text, base_dir=tmp_path / "plans")
    assert p.path == "drawing.floorplan" and p.line == line_of(text, "floorplan:")
    assert "outside the plan file's folder" in p.message


@pytest.mark.parametrize("name, fragment", [("missing.svg", "not found"),
                                            ("example.yaml", "expected an SVG file")])
def test_floorplan_missing_or_not_svg(name, fragment):
    text = _drawing_plan(name)
    p = one_problem(text, base_dir=PLANS)
    assert p.path == "drawing.floorplan" and fragment in p.message


def test_drawing_scale_forms():
    for written, value in [("1:50", 50.0), ("1 : 100", 100.0), ("2:1", 0.5)]:
        text = edit("boards:", f"drawing: {{scale: '{written}'}}\nboards:")
        assert load_plan_text(text).drawing.scale == value
    text = edit("boards:", "drawing: {calibrate: {from: [10, 20], to: [110, 20], length: 3.6 m}}\nboards:")
    assert load_plan_text(text).drawing.calibrate == ((10.0, 20.0), (110.0, 20.0), 3.6)
    text = edit("boards:", "drawing: {units_per_metre: 20}\nboards:")
    assert load_plan_text(text).drawing.units_per_metre == 20.0


# --- routes, boards and outlets from the drawing ----------------------------------------

DRAWN = """\
zsplan: 1
supply: {earthing: TN-S, ze: 0.8 ohm}
drawing:
  floorplan: floorplan.svg
  scale: 1:50
  routes_layer: cable routes
boards:
  - ref: CU1
  - ref: DB2
    at: [9, 9]
circuits:
  - ref: "1"
    board: CU1
    device: {type: mcb, curve: B, rating: 6 A}
    cable: {line: 1.5 mm2, cpc: 1.0 mm2}
    use: lighting
  - ref: "2"
    board: CU1
    device: {type: mcb, curve: B, rating: 32 A}
    cable: {line: 2.5 mm2, cpc: 1.5 mm2}
    outlets: [{at: [3, 1], height: 0.45 m, name: S1}]
  - ref: "2"
    board: DB2
    device: {type: mcb, curve: B, rating: 20 A}
    cable: {line: 2.5 mm2, cpc: 1.5 mm2}
    route: [[9, 9], [9, 12]]
"""


def _drawn(routes=None, boards=None, outlets=()):
    return SimpleNamespace(
        routes={"1": ((1.0, 1.0), (1.0, 4.0)), "CU1/2": ((1.0, 1.0), (3.0, 1.0))}
        if routes is None else routes,
        boards={"CU1": (1.0, 1.0)} if boards is None else boards,
        outlets=tuple(outlets), warnings=("layer 'furniture' hidden",))


def _outlet(circuit, at, name, kind=None, height_m=2.3):
    return SimpleNamespace(circuit=circuit, at=at, name=name, kind=kind, height_m=height_m)


def test_routes_boards_and_outlets_taken_from_the_drawing(monkeypatch):
    seen = {}

    def read_drawing(svg_path, **kw):   # stands in for zsplan.svgplan.read_drawing
        seen.update(kw, svg=svg_path)
        return _drawn(outlets=[_outlet("1", (1.0, 4.0), "L1")])

    monkeypatch.setattr(loader, "_read_drawing", read_drawing)
    plan = load_plan_text(DRAWN, file=str(PLANS / "drawn.yaml"), base_dir=PLANS)
    assert seen == {"svg": str((PLANS / "floorplan.svg").resolve()), "scale": 50.0,
                    "units_per_metre": None, "calibrate": None,
                    "routes_layer": "cable routes", "plan_file": str(PLANS / "drawn.yaml")}
    assert plan.board("CU1").at == (1.0, 1.0) and plan.board("DB2").at == (9.0, 9.0)
    c1, c2, d2 = plan.circuits
    assert c1.route == ((1.0, 1.0), (1.0, 4.0))          # plain "1": unique across boards
    assert c1.outlets[0].name == "L1" and c1.outlets[0].height_m == 2.3
    assert c1.outlets[0].kind == "light"                 # lighting circuit's default kind
    assert c2.route == ((1.0, 1.0), (3.0, 1.0))          # "CU1/2" names the board
    assert c2.outlets[0].name == "S1"                    # its own outlets from the plan file
    assert d2.route == ((9.0, 9.0), (9.0, 12.0))
    assert plan.extra["warnings"] == ("layer 'furniture' hidden",)


@pytest.mark.parametrize("drawn, fragment, where", [
    (_drawn(routes={"1": ((1, 1), (1, 4)), "CU1/2": ((1, 1), (3, 1)), "7": ((0, 0), (1, 1))}),
     "matches no circuit", "drawn route '7'"),
    (_drawn(routes={"1": ((1, 1), (1, 4)), "CU1/2": ((1, 1), (3, 1)), "2": ((1, 1), (3, 1))}),
     "could be any of CU1/2, DB2/2", "drawn route '2'"),
    (_drawn(routes={"1": ((1, 1), (1, 4)), "CU1/2": ((1, 1), (3, 1)), "DB2/2": ((9, 9), (5, 9))}),
     "route in the plan file", "drawn route 'DB2/2'"),
    (_drawn(routes={"1": ((1, 1), (1, 4)), "CU1/1": ((1, 1), (1, 4)), "CU1/2": ((1, 1), (3, 1))}),
     "drawn twice", "drawn route 'CU1/1'"),
    (_drawn(boards={"CU1": (1, 1), "CU7": (0, 0)}), "drawn board 'CU7' is not among", "drawn board 'CU7'"),
    (_drawn(boards={"CU1": (1, 1), "DB2": (9, 9)}), "position in the plan file", "drawn board 'DB2'"),
    (_drawn(outlets=[_outlet("CU1/1", (1, 4), "L1", height_m=None)]), "has no height",
     "drawn outlet 'L1'"),
    (_drawn(outlets=[_outlet("CU1/2", (2, 1), "S9")]), "lists outlets in the plan file",
     "drawn outlet 'S9'"),
])
def test_drawing_problems_name_the_drawn_element(monkeypatch, drawn, fragment, where):
    monkeypatch.setattr(loader, "_read_drawing", lambda *a, **k: drawn)
    p = one_problem(DRAWN, base_dir=PLANS)
    assert p.file == str((PLANS / "floorplan.svg").resolve())
    assert fragment in p.message and p.path == where


def test_circuit_with_neither_typed_nor_drawn_route(monkeypatch):
    monkeypatch.setattr(loader, "_read_drawing",
                        lambda *a, **k: _drawn(routes={"CU1/2": ((1, 1), (3, 1))}))
    p = one_problem(DRAWN, base_dir=PLANS)
    assert (p.path, p.line) == ("circuits[0].route", line_of(DRAWN, 'ref: "1"'))
    assert "no route" in p.message


def test_board_with_neither_typed_nor_drawn_position(monkeypatch):
    monkeypatch.setattr(loader, "_read_drawing", lambda *a, **k: _drawn(boards={}))
    p = one_problem(DRAWN, base_dir=PLANS)
    assert (p.path, p.line) == ("boards[0].at", line_of(DRAWN, "- ref: CU1"))


def test_drawing_reader_problems_are_passed_on(monkeypatch):
    from zsplan.errors import Problem

    def read_drawing(svg_path, **kw):
        raise PlanError(Problem(svg_path, "no layer 'cable routes'; layers are walls, doors"))

    monkeypatch.setattr(loader, "_read_drawing", read_drawing)
    p = one_problem(DRAWN, base_dir=PLANS)      # and no "no route" noise on top
    assert "no layer 'cable routes'" in p.message


# --- no traceback, whatever the file holds ----------------------------------------------

JUNK = [".nan", "-1", "0", "abc", "[1, 2]", "{a: 1}", "~", "yes", "1:50", "''", "30 m",
        "1e999", "[[0, 0]]", "*nowhere", "&a [*a]", "!!binary AAAA", "2031-01-01", "{", "- x"]


@settings(max_examples=300, deadline=None)
@given(st.data())
def test_any_edit_gives_a_plan_or_a_plan_error(data):
    """Property: replacing any value, or dropping any line, never escapes as a traceback."""
    lines = PLAN.splitlines()
    i = data.draw(st.integers(0, len(lines) - 1))
    if data.draw(st.booleans()):
        del lines[i]
    elif ":" in lines[i]:
        key, _, _ = lines[i].partition(":")
        lines[i] = f"{key}: {data.draw(st.sampled_from(JUNK))}"
    try:
        load_plan_text("\n".join(lines) + "\n")
    except PlanError as exc:
        assert exc.problems and all(p.message for p in exc.problems)

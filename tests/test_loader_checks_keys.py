"""Plan keys for the electrical checks beyond the loop: voltage drop, current
rating, grouping and RCDs.

Each key is read into the model, its absence gives the model's default, and
one bad value gives exactly one problem naming the key path and the line (the
line found independently by searching the test's own text).  The plans are
invented (made-up addresses and rooms).
"""
from __future__ import annotations

import pytest

from zsplan import capacity, vdrop
from zsplan.errors import PlanError
from zsplan.loader import load_plan_text

PLAN = """\
zsplan: 1
title: 4 Osier Lane, studio (invented)
supply:
  earthing: TN-C-S
  ze: 0.35 ohm
defaults:
  ambient: 25 degC
boards:
  - ref: CU1
    at: [0.5, 1.0]
  - ref: DB2
    at: [9.0, 1.0]
    fed_from:
      board: CU1
      cable: {line: 10 mm2, cpc: 4 mm2}
      length: 12 m
      device: {type: mcb, curve: B, rating: 40 A}
circuits:
  - ref: "1"
    board: CU1
    name: Studio sockets
    device: {type: mcb, curve: B, rating: 32 A}
    rcd: 30 mA
    cable: {line: 2.5 mm2, cpc: 1.5 mm2}
    route: [[0.5, 1.0], [6.0, 1.0]]
  - ref: "1"
    board: DB2
    name: Kiln
    use: fixed
    device: {type: mcb, curve: B, rating: 16 A}
    cable: {line: 2.5 mm2, cpc: 1.5 mm2}
    route: [[9.0, 1.0], [9.0, 4.0]]
"""

# every new key, each given a value other than its default
FULL = (PLAN
        .replace("  ze: 0.35 ohm\n", "  ze: 0.35 ohm\n  private: true\n")
        .replace("      device: {type: mcb, curve: B, rating: 40 A}\n",
                 "      device: {type: mcb, curve: B, rating: 40 A}\n"
                 "      method: A\n"
                 "      phases: 3\n"
                 "      ambient: 35 degC\n"
                 "      rcd: 100 mA\n"
                 "      rcd_type: general\n"
                 "      cable: {line: 10 mm2, cpc: 4 mm2, construction: single-core}\n", 1)
        .replace("      cable: {line: 10 mm2, cpc: 4 mm2}\n", "", 1)
        .replace("    rcd: 30 mA\n",
                 "    rcd: 30 mA\n"
                 "    method: 101\n"
                 "    insulation_length: 400 mm\n"
                 "    rcd_fault_protection: true\n"
                 "    rcd_type: selective\n", 1)
        .replace("    use: fixed\n", "    use: fixed\n    phases: 3\n    method: B\n", 1)
        .replace("    cable: {line: 2.5 mm2, cpc: 1.5 mm2}\n    route: [[9.0",
                 "    cable: {line: 2.5 mm2, cpc: 1.5 mm2, construction: single-core}\n"
                 "    route: [[9.0", 1)
        + "settings:\n"
          "  vdrop_load: uniform\n"
          "  group_distance: 50 mm\n"
          "  group_min_length: 2 m\n"
          "  grouping: single-layer\n")


def edit(old: str, new: str, text: str = PLAN) -> str:
    assert text.count(old) == 1, old
    return text.replace(old, new)


def line_of(text: str, marker: str, nth: int = 1) -> int:
    """1-based line of the nth line containing ``marker`` (found independently)."""
    hits = [i for i, ln in enumerate(text.splitlines(), 1) if marker in ln]
    return hits[nth - 1]


def one_problem(text: str):
    with pytest.raises(PlanError) as info:
        load_plan_text(text, file="plan.yaml")
    probs = info.value.problems
    assert len(probs) == 1, [str(p) for p in probs]
    assert probs[0].file == "plan.yaml"
    return probs[0]


def test_absent_keys_give_the_model_defaults():
    plan = load_plan_text(PLAN, file="plan.yaml")
    for c in plan.circuits:
        assert c.method == "C"                 # zsplan's choice: BS 7671 Appendix 4 method C (clipped direct)
        assert c.insulation_m == 0.0
        assert c.phases == 1
        assert c.rcd_fault_protection is None  # the RCD gives fault protection on TT only
        assert c.rcd_kind == "general"
        assert c.cable.construction == "twin-and-cpc"
    sub = plan.board("DB2").fed_from
    assert (sub.method, sub.phases, sub.rcd_a, sub.rcd_kind) == ("C", 1, None, "selective")
    assert sub.cable.construction == "twin-and-cpc"
    assert sub.ambient_c == 25.0               # taken from defaults.ambient, as written above
    assert plan.supply.private is False
    s = plan.settings
    assert s.vdrop_load == "concentrated"
    assert (s.group_distance_m, s.group_min_length_m) == (0.1, 0.5)
    assert s.grouping_arrangement == "bunched"
    assert (s.vdrop_lighting_pct, s.vdrop_other_pct) == (3.0, 5.0)   # BS 7671:2018 Appendix 4 Table 4Ab


def test_sub_main_ambient_without_defaults_is_the_reference_30_degc():
    plan = load_plan_text(edit("defaults:\n  ambient: 25 degC\n", ""), file="plan.yaml")
    # BS 7671:2018 Appendix 4 Table 4B1: ratings tabulated for a 30 °C ambient  # from memory
    assert plan.board("DB2").fed_from.ambient_c == 30.0


def test_every_key_is_read():
    plan = load_plan_text(FULL, file="plan.yaml")
    c1, c2 = plan.circuits
    assert c1.method == "101" and c1.phases == 1
    assert c1.insulation_m == pytest.approx(0.4)     # SI prefix: 400 mm = 0.4 m
    assert c1.rcd_fault_protection is True and c1.rcd_kind == "selective"
    assert c1.rcd_a == pytest.approx(0.03)           # SI prefix: 30 mA = 0.03 A
    assert c2.method == "B" and c2.phases == 3
    assert c2.cable.construction == "single-core" and c1.cable.construction == "twin-and-cpc"
    sub = plan.board("DB2").fed_from
    assert (sub.method, sub.phases, sub.rcd_kind) == ("A", 3, "general")
    assert sub.rcd_a == pytest.approx(0.1)           # SI prefix: 100 mA = 0.1 A
    assert sub.ambient_c == 35.0
    assert sub.cable.construction == "single-core"
    assert plan.supply.private is True
    s = plan.settings
    assert s.vdrop_load == "uniform" and s.grouping_arrangement == "single-layer"
    assert s.group_distance_m == pytest.approx(0.05)  # SI prefix: 50 mm = 0.05 m
    assert s.group_min_length_m == 2.0


def test_private_supply_takes_the_private_limits_unless_settings_give_them():
    plan = load_plan_text(FULL, file="plan.yaml")
    # private LV supply: 6 % lighting, 8 % other  # from memory (zsplan.vdrop.LIMITS_PCT)
    assert (plan.settings.vdrop_lighting_pct, plan.settings.vdrop_other_pct) == (6.0, 8.0)
    assert vdrop.LIMITS_PCT["private"] == {"lighting": 6.0, "other": 8.0}
    plan = load_plan_text(FULL + "  vdrop_other: 4 %\n", file="plan.yaml")
    assert (plan.settings.vdrop_lighting_pct, plan.settings.vdrop_other_pct) == (6.0, 4.0)
    plan = load_plan_text(edit("  ze: 0.35 ohm\n", "  ze: 0.35 ohm\n  private: false\n"),
                          file="plan.yaml")
    assert (plan.settings.vdrop_lighting_pct, plan.settings.vdrop_other_pct) == (3.0, 5.0)


def test_choices_ignore_case_and_come_from_the_engine():
    text = edit("    rcd: 30 mA\n", "    rcd: 30 mA\n    method: c\n    rcd_type: SELECTIVE\n")
    text = edit("{line: 10 mm2, cpc: 4 mm2}", "{line: 10 mm2, cpc: 4 mm2, construction: Single-Core}",
                text)
    plan = load_plan_text(text + "settings:\n  grouping: Bunched\n  vdrop_load: OUTLETS\n",
                          file="plan.yaml")
    assert plan.circuits[0].method == "C" and plan.circuits[0].rcd_kind == "selective"
    assert plan.board("DB2").fed_from.cable.construction == "single-core"
    assert plan.settings.grouping_arrangement == "bunched" and plan.settings.vdrop_load == "outlets"
    # every engine choice is accepted (the loader offers what the engine has tables for)
    for name in capacity.constructions():
        text = edit("{line: 2.5 mm2, cpc: 1.5 mm2}\n    route: [[0.5",
                    "{line: 2.5 mm2, cpc: 1.5 mm2, construction: " + name + "}\n    route: [[0.5")
        assert load_plan_text(text, file="plan.yaml").circuits[0].cable.construction == name
    for name in vdrop.load_models():
        assert load_plan_text(PLAN + f"settings:\n  vdrop_load: {name}\n",
                              file="plan.yaml").settings.vdrop_load == name


C_RCD = "    rcd: 30 mA\n"
SUB_DEV = "      device: {type: mcb, curve: B, rating: 40 A}\n"


@pytest.mark.parametrize("old, new, path, marker, fragment", [
    (C_RCD, C_RCD + "    method: Q\n", "circuits[0].method", "method: Q",
     "unknown installation method 'Q'"),
    (C_RCD, C_RCD + "    insulation_length: -1 m\n", "circuits[0].insulation_length",
     "insulation_length", "zero or more"),
    (C_RCD, C_RCD + "    phases: 2\n", "circuits[0].phases", "phases: 2", "expected one of: 1, 3"),
    (C_RCD, C_RCD + "    rcd_fault_protection: maybe\n", "circuits[0].rcd_fault_protection",
     "rcd_fault_protection", "true or false"),
    (C_RCD, C_RCD + "    rcd_type: selectiv\n", "circuits[0].rcd_type", "rcd_type",
     "did you mean 'selective'"),
    ("{line: 2.5 mm2, cpc: 1.5 mm2}\n    route: [[0.5",
     "{line: 2.5 mm2, cpc: 1.5 mm2, construction: twin-and-cp}\n    route: [[0.5",
     "circuits[0].cable.construction", "twin-and-cp}", "did you mean 'twin-and-cpc'"),
    (SUB_DEV, SUB_DEV + "      method: Z\n", "boards[1].fed_from.method", "method: Z",
     "unknown installation method 'Z'"),
    (SUB_DEV, SUB_DEV + "      phases: 0\n", "boards[1].fed_from.phases", "phases: 0",
     "number of phases"),
    (SUB_DEV, SUB_DEV + "      ambient: 30 m\n", "boards[1].fed_from.ambient", "ambient: 30 m",
     "temperature"),
    (SUB_DEV, SUB_DEV + "      rcd: 100 ohm\n", "boards[1].fed_from.rcd", "rcd: 100 ohm",
     "current"),
    (SUB_DEV, SUB_DEV + "      rcd: 100 mA\n      rcd_type: genral\n",
     "boards[1].fed_from.rcd_type", "genral", "did you mean 'general'"),
    ("{line: 10 mm2, cpc: 4 mm2}", "{line: 10 mm2, cpc: 4 mm2, construction: flex}",
     "boards[1].fed_from.cable.construction", "flex", "expected one of: single-core, twin-and-cpc"),
    ("  ze: 0.35 ohm\n", "  ze: 0.35 ohm\n  private: perhaps\n", "supply.private", "perhaps",
     "true or false"),
])
def test_one_bad_value_one_problem(old, new, path, marker, fragment):
    text = edit(old, new)
    p = one_problem(text)
    assert p.path == path
    assert p.line == line_of(text, marker)
    assert fragment in p.message


@pytest.mark.parametrize("key, value, fragment", [
    ("vdrop_load", "uniformm", "did you mean 'uniform'"),
    ("group_distance", "0 m", "greater than zero"),
    ("group_min_length", "5 A", "not a length"),
    ("grouping", "bunch", "did you mean 'bunched'"),
])
def test_one_bad_setting_one_problem(key, value, fragment):
    text = PLAN + "settings:\n  tight: 20 %\n" + f"  {key}: {value}\n"
    p = one_problem(text)
    assert p.path == f"settings.{key}"
    assert p.line == line_of(text, f"{key}: {value}")
    assert fragment in p.message


@pytest.mark.parametrize("old, new, path, marker, fragment", [
    # flat twin-and-cpc cable has one line conductor: no three-phase rating
    ("    use: fixed\n", "    use: fixed\n    phases: 3\n", "circuits[1].phases", "phases: 3",
     "expected phases: 1"),
    # BS 7671 Table 4D5 (flat twin and cpc) has no method B column  # from memory
    ("    use: fixed\n", "    use: fixed\n    method: B\n", "circuits[1].method", "method: B",
     "no current ratings for twin-and-cpc cable in installation method B"),
    (SUB_DEV, SUB_DEV + "      method: B\n", "boards[1].fed_from.method", "method: B",
     "installation method B"),
    (C_RCD, "    rcd_type: general\n", "circuits[0].rcd_type", "rcd_type",
     "has no 'rcd'"),
    (C_RCD, "    rcd_fault_protection: true\n", "circuits[0].rcd_fault_protection",
     "rcd_fault_protection", "has no 'rcd'"),
    (SUB_DEV, SUB_DEV + "      rcd_type: selective\n", "boards[1].fed_from.rcd_type",
     "rcd_type", "has no 'rcd'"),
    # ambient must be below the cable's 70 °C rating (BS 7671:2018 Table 54.3: 70 °C thermoplastic)
    (SUB_DEV, SUB_DEV + "      ambient: 70 degC\n", "boards[1].fed_from.ambient", "70 degC",
     "not below the cable's maximum operating temperature 70"),
])
def test_combinations_without_a_rating_or_an_rcd(old, new, path, marker, fragment):
    text = edit(old, new)
    p = one_problem(text)
    assert p.path == path
    assert p.line == line_of(text, marker)
    assert fragment in p.message


def test_rcd_fault_protection_false_or_null_needs_no_rcd():
    plan = load_plan_text(edit(C_RCD, "    rcd_fault_protection: false\n"), file="plan.yaml")
    assert plan.circuits[0].rcd_fault_protection is False and plan.circuits[0].rcd_a is None
    plan = load_plan_text(edit(C_RCD, C_RCD + "    rcd_fault_protection: null\n"), file="plan.yaml")
    assert plan.circuits[0].rcd_fault_protection is None


def test_construction_is_inherited_from_defaults_cable():
    text = edit("  ambient: 25 degC\n", "  ambient: 25 degC\n  cable: {construction: single-core}\n")
    plan = load_plan_text(text, file="plan.yaml")
    assert {c.cable.construction for c in plan.circuits} == {"single-core"}
    # the circuit's own cable key wins
    text = edit("{line: 2.5 mm2, cpc: 1.5 mm2}\n    route: [[0.5",
                "{line: 2.5 mm2, cpc: 1.5 mm2, construction: twin-and-cpc}\n    route: [[0.5", text)
    plan = load_plan_text(text, file="plan.yaml")
    assert [c.cable.construction for c in plan.circuits] == ["twin-and-cpc", "single-core"]

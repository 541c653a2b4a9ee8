"""The array look-up of conductor resistance (resistances_20c) and the material check.

resistances_20c finds exactly tabulated sizes by their float bits and hands
anything else to resistance_20c's tolerant look-up; both must give the same
resistances (checked against IEC 60228 in tests/test_conductors.py) and refuse
the same sizes.
"""
import numpy as np
import pytest

from zsplan.conductors import (csa_available, one_material, resistance_20c, resistances_20c,
                               temperature_factor)


@pytest.mark.parametrize("material,cls", [("copper", 2), ("copper", 1), ("aluminium", 2)])
def test_arrays_equal_one_by_one(material, cls):
    sizes = np.array(csa_available(material, cls))
    rng = np.random.default_rng(3)
    line, cpc = rng.choice(sizes, 500), rng.choice(sizes, 500)
    r1, r2 = resistances_20c(line, cpc, material=material, conductor_class=cls)
    assert np.array_equal(r1, [resistance_20c(c, material, cls) for c in line])
    assert np.array_equal(r2, [resistance_20c(c, material, cls) for c in cpc])


def test_sizes_off_by_rounding_take_the_tolerant_look_up():
    # a size a few ulp from 2.5 mm2 (as a unit conversion may leave it) is 2.5 mm2
    near = np.array([2.5 * (1 + 4e-16), 2.5 * (1 - 4e-16), 1.5])
    assert not np.array_equal(near[:2], [2.5, 2.5])
    r, = resistances_20c(near)
    assert r.tolist() == [7.41, 7.41, 12.1]        # IEC 60228:2004 Table 2, copper class 2


@pytest.mark.parametrize("bad,shown", [(3.0, "3 mm²"), (-2.5, "-2.5 mm²"), (0.0, "0 mm²"),
                                       (np.nan, "nan mm²"), (2.6, "2.6 mm²"), (1e300, "mm²")])
def test_unknown_sizes_refused(bad, shown):
    with pytest.raises(ValueError, match=shown):
        resistances_20c(np.array([2.5, 1.5]), np.array([1.5, bad]))


def test_out_rows_receive_the_resistances():
    out = np.zeros((2, 3))
    rows = resistances_20c(np.array([1.0, 2.5, 4.0]), np.array([1.0, 1.5, 1.5]), out=out)
    # IEC 60228:2004 Table 2, copper class 2: 18.1, 7.41, 4.61 and 18.1, 12.1, 12.1 mohm/m
    assert out.tolist() == [[18.1, 7.41, 4.61], [18.1, 12.1, 12.1]]
    assert all(np.shares_memory(r, out) for r in rows)


def test_one_material():
    assert one_material("copper") == "copper"
    assert one_material(np.array(["copper"] * 5)) == "copper"
    assert one_material(np.array(["aluminium"] * 4)) == "aluminium"
    assert one_material(np.array([["copper", "copper"], ["copper", "copper"]])) == "copper"
    assert one_material(np.array(["copper", "aluminium", "copper"])) is None
    # same first letters, different word; and a longer word padded next to a shorter one
    assert one_material(np.array(["copper", "copper", "coppe"])) is None
    assert one_material(np.array(["copper", "copper", "copperx"])) is None
    assert one_material(np.array(["copper", "aluminium"], dtype=object)) is None
    assert one_material(np.array(["copper"] * 3, dtype=object)) == "copper"
    assert one_material(np.array([], dtype="<U6")) is None


def test_scaled_temperature_factor():
    theta = np.array([70.0, 90.0, 30.0, 20.0])
    # BS 7671 multipliers 1.20, 1.28, 1.04, 1.00 (IET On-Site Guide Table I3), per 1000
    g = temperature_factor(theta, "copper", "bs7671", scale=1e-3)
    np.testing.assert_allclose(g, [1.2e-3, 1.28e-3, 1.04e-3, 1e-3], rtol=1e-15)
    np.testing.assert_allclose(g, temperature_factor(theta) / 1000, rtol=1e-15)
    assert temperature_factor(70.0, "copper", "bs7671", scale=1e-3) == pytest.approx(1.2e-3, rel=1e-15)

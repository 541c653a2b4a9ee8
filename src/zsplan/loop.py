"""The earth-fault loop: R1+R2, Zs, fault current, disconnection time, margin.

All functions take numpy arrays (or scalars) and broadcast; :func:`evaluate`
runs the whole chain for N circuits at once with no per-circuit Python loop.

.. math::

    R_1 + R_2 &= \\frac{L}{1000}\\,[r_1 (1 + \\alpha(\\theta_1 - 20))
                 + r_2 (1 + \\alpha(\\theta_2 - 20))]
                 \\quad\\text{(radial; a ring's worst point takes } L/4)\\\\
    Z_s &= Z_e + (R_1 + R_2)\\\\
    I_f &= C_{min} U_0 / Z_s\\\\
    Z_{s,max} &= C_{min} U_0 / I_a(t_{req})\\\\
    \\text{margin} &= 1 - Z_s / Z_{s,max}

with r1, r2 the IEC 60228 resistances at 20 °C [mΩ/m], θ the design
conductor temperatures, and Ia(t) the current that operates the device within
the required time (BS 7671 Regulation 411.4.4: Zs × Ia ≤ U0 × Cmin) [1]_.

The highest measured Zs to accept at the test temperature is, by the named
``test_limit`` method,

``"rule-of-0.8"`` (default)
    0.8 × Zs,max — BS 7671:2018 Appendix 3 [1]_.
``"temperature-ratio"``
    Ze + (Zs,max − Ze) × R(θ_test) / R(θ_design): the measured R1+R2,
    scaled from the test temperature to the design temperature, must keep Zs
    within Zs,max (the exact form of the same correction).

References
----------
.. [1] BS 7671:2018+A2:2022, Regulation 411.4.4, Tables 41.2-41.4 and
   Appendix 3.
.. [2] IEC 60909-0:2016, Table 1: voltage factor cmin = 0.95 for low voltage.
"""
from __future__ import annotations

import numpy as np

from .conductors import design_temperatures, one_material, resistance_20c, temperature_factor
from .protection import CurveSet, current_for_time, operating_time

__all__ = [
    "TEST_LIMIT_METHODS", "r1r2", "fault_current", "zs_limit", "test_zs_limit",
    "margin", "evaluate",
]

TEST_LIMIT_METHODS = ("rule-of-0.8", "temperature-ratio")

#: BS 7671:2018 Appendix 3: measured Zs should not exceed 0.8 x the tabulated value.
RULE_OF_EIGHT_TENTHS = 0.8


def r1r2(length_m, r1_mohm_per_m, r2_mohm_per_m, f1=1.0, f2=1.0, ring=False, spur_m=0.0):
    """Resistance of line plus protective conductor over a run. [Ω]

    Parameters
    ----------
    length_m : array-like
        Cable length to the point (radial) or the ring's whole length. [m]
    r1_mohm_per_m, r2_mohm_per_m : array-like
        Line and cpc resistance at 20 °C. [mΩ/m]
    f1, f2 : array-like
        Temperature factors R_θ/R_20 of line and cpc. [-]
    ring : array-like of bool
        Ring final circuit: the worst point (mid-ring) sees
        (r1 + r2)/4 where r1, r2 are the end-to-end ring resistances.
    spur_m : array-like
        Length of an unfused spur from the ring, added in full. [m]
    """
    per_m = (np.asarray(r1_mohm_per_m) * f1 + np.asarray(r2_mohm_per_m) * f2) / 1000.0
    length = np.asarray(length_m, dtype=float)
    main = np.where(ring, length / 4.0, length)
    return per_m * (main + np.asarray(spur_m, dtype=float))


def fault_current(ze_ohm, r1r2_ohm, u0_v=230.0, cmin=0.95):
    """Minimum prospective earth fault current I_f = Cmin·U0 / (Ze + R1+R2). [A]"""
    return np.asarray(cmin) * np.asarray(u0_v) / (np.asarray(ze_ohm) + np.asarray(r1r2_ohm))


def zs_limit(ia_a, u0_v=230.0, cmin=0.95):
    """Maximum Zs = Cmin·U0 / Ia (BS 7671 Regulation 411.4.4). [Ω]

    Zero where Ia is infinite (the device cannot be shown to operate in time).
    """
    ia = np.asarray(ia_a, dtype=float)
    with np.errstate(divide="ignore"):
        return np.where(np.isfinite(ia), np.asarray(cmin) * np.asarray(u0_v) / ia, 0.0)


def test_zs_limit(zs_max_ohm, ze_ohm=None, ratio_test_to_design=None, method="rule-of-0.8"):
    """Highest measured Zs to accept at the test temperature. [Ω]

    See the module docstring for the two methods.
    """
    if method == "rule-of-0.8":
        return RULE_OF_EIGHT_TENTHS * np.asarray(zs_max_ohm, dtype=float)
    if method == "temperature-ratio":
        ze = np.asarray(ze_ohm, dtype=float)
        return ze + (np.asarray(zs_max_ohm) - ze) * np.asarray(ratio_test_to_design)
    raise ValueError(f"unknown test-limit method {method!r}; choose one of {TEST_LIMIT_METHODS}")


def margin(zs_ohm, zs_max_ohm):
    """1 − Zs/Zs,max: positive passes, negative fails; −inf where Zs,max is 0."""
    zs_max = np.asarray(zs_max_ohm, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(zs_max > 0, 1.0 - np.asarray(zs_ohm) / zs_max, -np.inf)


def evaluate(*, length_m, line_mm2, cpc_mm2, ze_ohm, curves: CurveSet, curve_index,
             t_required_s, material="copper", temp_rating_c=70.0, cpc_with_line=True,
             ring=False, spur_m=0.0, u0_v=230.0, cmin=0.95, test_temperature_c=20.0,
             alpha="bs7671", test_limit="rule-of-0.8") -> dict[str, np.ndarray]:
    """Evaluate N circuits (or points) at once.

    Every argument broadcasts to the common shape; ``curves`` and
    ``curve_index`` come from :meth:`zsplan.protection.CurveSet.from_devices`.

    The formulas are those of the module docstring.  Ia and Zs,max depend
    only on the device and the required time, so they are found once per
    distinct (curve, time) pair and then looked up; the test-temperature
    R1+R2 is the design R1+R2 scaled by R(θ_test)/R(θ_design).

    Returns
    -------
    dict of numpy.ndarray
        ``r1r2_ohm`` (design temperature), ``r1r2_test_ohm`` (test
        temperature), ``zs_ohm``, ``fault_current_a``, ``disconnect_s``,
        ``disconnect_limit_s``, ``ia_a``, ``zs_max_ohm``, ``zs_test_max_ohm``,
        ``margin``, ``line_c``, ``cpc_c``.
    """
    if test_limit not in TEST_LIMIT_METHODS:
        raise ValueError(f"unknown test-limit method {test_limit!r}; choose one of {TEST_LIMIT_METHODS}")
    mat = one_material(material)
    if mat is None:     # copper and aluminium mixed: per-element material
        mat = np.asarray(material)
    shape = np.broadcast_shapes(*(np.shape(a) for a in (
        length_m, line_mm2, cpc_mm2, ze_ohm, curve_index, t_required_s, material, temp_rating_c,
        cpc_with_line, ring, spur_m, u0_v, cmin, test_temperature_c)))
    b = lambda a: np.broadcast_to(np.asarray(a, dtype=float), shape)  # noqa: E731

    # resistance per metre at the design temperature, and its test/design ratio
    r1 = resistance_20c(line_mm2, mat)
    r2 = resistance_20c(cpc_mm2, mat)
    line_c, cpc_c = design_temperatures(temp_rating_c, cpc_with_line)
    f1 = temperature_factor(line_c, mat, alpha)
    ft = temperature_factor(test_temperature_c, mat, alpha)
    if np.all(np.asarray(cpc_with_line)):      # cpc at the line's temperature
        cpc_c = line_c
        per_m = np.add(r1, r2)
        per_m *= f1
        ratio = np.divide(ft, f1)
    else:
        f2 = temperature_factor(cpc_c, mat, alpha)
        per_m = np.multiply(r1, f1)
        per_m += np.multiply(r2, f2)
        ratio = np.add(r1, r2)
        ratio *= ft
        ratio /= per_m
    per_m /= 1000.0

    # R1+R2 over the run: a ring's worst point takes a quarter of the ring
    length = np.asarray(length_m, dtype=float)
    ring = np.asarray(ring, dtype=bool)
    if ring.ndim == 0:
        main = length / 4.0 if ring else length
    elif ring.any():
        main = np.array(np.broadcast_to(length, np.broadcast_shapes(length.shape, ring.shape)))
        np.divide(main, 4.0, out=main, where=ring)
    else:
        main = length
    spur = np.asarray(spur_m, dtype=float)
    if spur.ndim or spur != 0.0:
        main = main + spur
    rr = np.multiply(per_m, main)
    rr_test = np.multiply(rr, ratio)
    zs = np.add(ze_ohm, rr)
    i_f = fault_current(ze_ohm, rr, u0_v, cmin) if np.ndim(u0_v) or np.ndim(cmin) else \
        np.divide(float(cmin) * float(u0_v), zs)

    ia, zs_max, zs_test_max = _limits(curves, curve_index, t_required_s, u0_v, cmin, test_limit,
                                      ze_ohm, ratio, shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        m = np.asarray(np.divide(zs, zs_max))
        np.subtract(1.0, m, out=m)
    off = np.asarray(zs_max) <= 0
    if off.any():
        m = np.where(off, -np.inf, m)
    return {
        "r1r2_ohm": b(rr),
        "r1r2_test_ohm": b(rr_test),
        "zs_ohm": b(zs),
        "fault_current_a": b(i_f),
        "disconnect_s": b(operating_time(curves, curve_index, i_f)),
        "disconnect_limit_s": b(t_required_s),
        "ia_a": b(ia),
        "zs_max_ohm": b(zs_max),
        "zs_test_max_ohm": b(zs_test_max),
        "margin": b(m),
        "line_c": b(line_c),
        "cpc_c": b(cpc_c),
    }


def _limits(curves: CurveSet, curve_index, t_required_s, u0_v, cmin, test_limit, ze_ohm, ratio, shape):
    """Ia, Zs,max and the test limit of every circuit.

    Ia(t) is found once for each distinct (curve, required time) pair, by
    :func:`zsplan.protection.current_for_time`, and looked up: the required
    time takes few values (0.4 s, 5 s, ...), so the table is small.
    """
    idx = np.broadcast_to(np.asarray(curve_index, dtype=np.intp), shape)
    t = np.broadcast_to(np.asarray(t_required_s, dtype=float), shape)
    k_n = curves.size
    values = code = None
    if t.size == 0:
        values, code = np.zeros(1), 0
    else:
        lo, hi = t.min(), t.max()
        if lo == hi or not np.isfinite(lo) or not np.isfinite(hi):
            if lo == hi:
                values, code = np.array([lo]), 0
        else:
            upper = t == hi
            if np.count_nonzero(upper) + np.count_nonzero(t == lo) == t.size:
                values, code = np.array([lo, hi]), upper
    if values is None:      # many distinct times, or NaN among them
        values, code = np.unique(t, return_inverse=True)
        code = code.reshape(shape)
    table_curve = np.repeat(np.arange(k_n), len(values))
    table_time = np.tile(values, k_n)
    ia_table = current_for_time(curves, table_curve, table_time)
    slot = idx * len(values)
    if not np.isscalar(code) or code != 0:
        slot = slot + code
    ia = np.take(ia_table, slot, mode="clip")
    if np.ndim(u0_v) == 0 and np.ndim(cmin) == 0:
        zs_table = zs_limit(ia_table, u0_v, cmin)
        zs_max = np.take(zs_table, slot, mode="clip")
        if test_limit == "rule-of-0.8":
            return ia, zs_max, np.take(test_zs_limit(zs_table), slot, mode="clip")
    else:
        zs_max = zs_limit(ia, u0_v, cmin)
    return ia, zs_max, test_zs_limit(zs_max, ze_ohm, ratio, test_limit)

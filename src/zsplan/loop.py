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

from .conductors import design_temperatures, resistance_20c, temperature_factor
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

    Returns
    -------
    dict of numpy.ndarray
        ``r1r2_ohm`` (design temperature), ``r1r2_test_ohm`` (test
        temperature), ``zs_ohm``, ``fault_current_a``, ``disconnect_s``,
        ``disconnect_limit_s``, ``ia_a``, ``zs_max_ohm``, ``zs_test_max_ohm``,
        ``margin``, ``line_c``, ``cpc_c``.
    """
    r1 = resistance_20c(line_mm2, material)
    r2 = resistance_20c(cpc_mm2, material)
    line_c, cpc_c = design_temperatures(temp_rating_c, cpc_with_line)
    f1 = temperature_factor(line_c, material, alpha)
    f2 = temperature_factor(cpc_c, material, alpha)
    ft = temperature_factor(test_temperature_c, material, alpha)
    rr = r1r2(length_m, r1, r2, f1, f2, ring, spur_m)
    rr_test = r1r2(length_m, r1, r2, ft, ft, ring, spur_m)
    zs = np.asarray(ze_ohm, dtype=float) + rr
    i_f = fault_current(ze_ohm, rr, u0_v, cmin)
    t_req = np.broadcast_to(np.asarray(t_required_s, dtype=float), np.shape(zs))
    ia = current_for_time(curves, curve_index, t_req)
    zs_max = zs_limit(ia, u0_v, cmin)
    ratio = (r1 * ft + r2 * ft) / (r1 * f1 + r2 * f2)
    zs_test_max = test_zs_limit(zs_max, ze_ohm, ratio, test_limit)
    shape = np.shape(zs)
    b = lambda a: np.broadcast_to(np.asarray(a, dtype=float), shape)  # noqa: E731
    return {
        "r1r2_ohm": b(rr),
        "r1r2_test_ohm": b(rr_test),
        "zs_ohm": zs,
        "fault_current_a": b(i_f),
        "disconnect_s": b(operating_time(curves, curve_index, i_f)),
        "disconnect_limit_s": b(t_req),
        "ia_a": b(ia),
        "zs_max_ohm": b(zs_max),
        "zs_test_max_ohm": b(zs_test_max),
        "margin": b(margin(zs, zs_max)),
        "line_c": b(line_c),
        "cpc_c": b(cpc_c),
    }

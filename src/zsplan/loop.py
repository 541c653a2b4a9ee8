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

from .conductors import design_temperatures, one_material, resistances_20c, temperature_factor
from .protection import CurveSet, cell_times, current_for_time, operating_time

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
    return _over_run(per_m, length_m, ring, spur_m)


def _over_run(per_m, length_m, ring, spur_m, out=None):
    """``per_m`` times the length that counts: L (radial), L/4 (a ring), plus any spur.

    A ring's quarter is taken by lowering the binary exponent by two
    (``ldexp``), which is exact: per_m·L/4 equals (per_m·L)/4 to the bit.
    """
    length = np.asarray(length_m, dtype=float)
    ring = np.asarray(ring, dtype=bool)
    quarter = None
    if ring.ndim == 0:
        quarter = -2 if ring else None
    elif np.count_nonzero(ring):
        # exponent step 0 or -2, as int32 (ldexp is fast with int32 exponents)
        quarter = np.multiply(ring.view(np.int8), np.int32(-2))
    if type(spur_m) is not float or spur_m != 0.0:
        spur = np.asarray(spur_m, dtype=float)
        if spur.ndim or spur != 0.0:      # the spur adds in full: form the length first
            if quarter is not None:
                length = np.ldexp(length, quarter)
            return np.multiply(per_m, length + spur, out=out)
    run = np.multiply(per_m, length, out=out)
    if quarter is not None:
        if run.ndim and np.shape(quarter) in ((), run.shape):
            np.ldexp(run, quarter, out=run)
        else:
            run = np.ldexp(run, quarter)
    return run


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
        m = np.divide(zs_ohm, zs_max)
        return _margin_finish(m, zs_max, zs_max.size == 0 or zs_max.min() > 0)    # NaN fails


def _margin_finish(ratio, zs_max, positive: bool):
    """1 − ratio (in place for an array; ratio = Zs/Zs,max), −inf where Zs,max is not positive
    (``positive``: known to be positive everywhere)."""
    if type(ratio) is np.ndarray and ratio.ndim:
        np.subtract(1.0, ratio, out=ratio)
    else:
        ratio = np.subtract(1.0, ratio)
    if positive:
        return ratio
    return np.where(zs_max > 0, ratio, -np.inf)


def evaluate(*, length_m, line_mm2, cpc_mm2, ze_ohm, curves: CurveSet, curve_index,
             t_required_s, material="copper", temp_rating_c=70.0, cpc_with_line=True,
             ring=False, spur_m=0.0, u0_v=230.0, cmin=0.95, test_temperature_c=20.0,
             alpha="bs7671", test_limit="rule-of-0.8") -> dict[str, np.ndarray]:
    r"""Evaluate N circuits (or points) at once.

    Every argument broadcasts to the common shape; ``curves`` and
    ``curve_index`` come from :meth:`zsplan.protection.CurveSet.from_devices`.

    The formulas are those of the module docstring, arranged for few passes
    over the arrays: with g = (1 + α(θ − 20))/1000 (the temperature factor
    per 1000, mΩ to Ω) and L the length that counts (L/4 on a ring, plus a
    spur),

    .. math::

        R_1 + R_2 = L\,(r_1 g_1 + r_2 g_2), \qquad
        (R_1 + R_2)_{test} = L\,(r_1 + r_2)\,g_{test}

    — one product L·(r1 + r2) serves both when every cpc is at its line's
    temperature.  Ia and Zs,max depend only on the device and the required
    time, so they are found once per distinct (curve, time) pair, kept with
    the curves, and looked up; t(I) comes from
    :func:`zsplan.protection.operating_time`.

    Returns
    -------
    dict of numpy.ndarray
        ``r1r2_ohm`` (design temperature), ``r1r2_test_ohm`` (test
        temperature), ``zs_ohm``, ``fault_current_a``, ``disconnect_s``,
        ``disconnect_limit_s``, ``ia_a``, ``zs_max_ohm``, ``zs_test_max_ohm``,
        ``margin``, ``line_c``, ``cpc_c``.  The computed ones are views
        into one block (keeping one keeps the block); those that repeat an
        input are read-only views of it.
    """
    if test_limit not in TEST_LIMIT_METHODS:
        raise ValueError(f"unknown test-limit method {test_limit!r}; choose one of {TEST_LIMIT_METHODS}")
    args = [length_m, line_mm2, cpc_mm2, ze_ohm, curve_index, t_required_s, material, temp_rating_c,
            cpc_with_line, ring, spur_m, test_temperature_c, u0_v, cmin]
    n = _flat_length(args)
    if n is not None:
        with np.errstate(all="ignore"):
            return _evaluate_flat(n, *args, curves, alpha, test_limit)
    # any other shapes: broadcast to one shape, evaluate flat, give the results that shape
    shape = np.broadcast_shapes(*(np.shape(a) for a in args))
    size = int(np.prod(shape))
    flat = [np.broadcast_to(np.asarray(a, dtype=_AS_ARRAY[k]), shape).reshape(size) if k in _AS_ARRAY
            else a if np.ndim(a) == 0 else np.broadcast_to(a, shape).reshape(size)
            for k, a in enumerate(args)]
    with np.errstate(all="ignore"):
        out = _evaluate_flat(size, *flat, curves, alpha, test_limit)
    return {k: v.reshape(shape) for k, v in out.items()}


#: arguments (by position in ``evaluate``'s list) that the flat evaluation needs as arrays, and their type
_AS_ARRAY = {0: float, 3: float, 4: np.intp}


def _flat_length(args) -> int | None:
    """N when length, Ze and curve index are 1-d arrays of N elements (float, float, intp)
    and every other argument is such an array or a scalar; else None."""
    length, ze, idx = args[0], args[3], args[4]
    if type(length) is not np.ndarray or type(ze) is not np.ndarray or type(idx) is not np.ndarray:
        return None
    shape = length.shape
    if len(shape) != 1 or ze.shape != shape or idx.shape != shape or length.dtype != np.float64 \
            or ze.dtype != np.float64 or idx.dtype != np.intp:
        return None
    for a in args:
        if type(a) is np.ndarray:
            if a.shape != shape:
                return None
        elif not isinstance(a, (float, int, str, np.generic)):
            return None
    return shape[0]


def _evaluate_flat(n, length, line, cpc, ze, idx, t_req, material, theta, with_line, ring, spur,
                   theta_test, u0, cmin, curves, alpha, test_limit):
    """:func:`evaluate` on 1-d arrays of ``n`` elements (or scalars).

    Results and the larger intermediates share one allocation (13 rows of
    ``n``): one large block per call instead of many medium ones, so the
    allocator reuses it from call to call.
    """
    mat = one_material(material)
    if mat is None:     # copper and aluminium mixed: per-element material
        mat = np.asarray(material)
    work = np.empty((13, n))
    rr, rr_test, zs, i_f, t_off, zs_test, marg = work[:7]
    found = work[7:9].reshape(-1).view(complex)     # Ia and Zs,max, see _limits
    r = work[9:11]
    g1 = work[11]
    base = work[12].view(np.int64)
    # resistance at 20 °C [mΩ/m], temperature factors per 1000 [Ω/mΩ]
    r1, r2 = resistances_20c(line, cpc, material=mat, out=r)
    line_c, cpc_c = design_temperatures(theta, with_line)
    g1 = temperature_factor(line_c, mat, alpha, scale=1e-3, out=g1 if type(mat) is str else None)
    gt = temperature_factor(theta_test, mat, alpha, scale=1e-3)
    if cpc_c is line_c:         # every cpc at its line's temperature
        both = np.add(r1, r2, out=r1)
        run = _over_run(both, length, ring, spur, out=both)          # L (r1 + r2)
        np.multiply(run, g1, out=rr)
        design = None
    else:
        g2 = temperature_factor(cpc_c, mat, alpha, scale=1e-3)
        design = np.multiply(r1, g1)
        design += np.multiply(r2, g2)
        _over_run(design, length, ring, spur, out=rr)
        both = np.add(r1, r2)
        run = _over_run(both, length, ring, spur, out=r1)
    np.multiply(run, gt, out=rr_test)
    np.add(ze, rr, out=zs)
    if type(u0) is np.ndarray or type(cmin) is np.ndarray:
        i_f[...] = fault_current(ze, rr, u0, cmin)
    else:
        np.divide(float(cmin) * float(u0), zs, out=i_f)
    # each circuit's first entry in the curves' tables (cells for t(I), and Ia by required time)
    stride = curves.cells()[0]
    np.multiply(idx, stride, out=base)
    if cell_times(curves, base, i_f, out=t_off) is None:     # a current beyond the cells' range
        operating_time(curves, idx, i_f, out=t_off)
    ia, zs_max, positive = _limits(curves, base, stride, t_req, u0, cmin, found)
    if test_limit == "rule-of-0.8":
        np.multiply(RULE_OF_EIGHT_TENTHS, zs_max, out=zs_test)
    else:   # R(θ_test)/R(θ_design) = (r1 + r2) g_test / (r1 g1 + r2 g2)
        ratio = np.divide(gt, g1) if design is None else np.divide(np.multiply(both, gt), design)
        zs_test[...] = test_zs_limit(zs_max, ze, ratio, test_limit)
    np.divide(zs, zs_max, out=marg)
    marg = _margin_finish(marg, zs_max, positive)
    return {
        "r1r2_ohm": rr,
        "r1r2_test_ohm": rr_test,
        "zs_ohm": zs,
        "fault_current_a": i_f,
        "disconnect_s": t_off,
        "disconnect_limit_s": _given(t_req, n),
        "ia_a": ia,
        "zs_max_ohm": zs_max,
        "zs_test_max_ohm": zs_test,
        "margin": marg,
        "line_c": _given(line_c, n),
        "cpc_c": _given(cpc_c, n),
    }


def _given(a, n: int) -> np.ndarray:
    """An input (or a scalar) as a read-only float array of ``n`` elements."""
    if type(a) is np.ndarray and a.dtype == np.float64 and a.shape == (n,):
        view = a.view()
        view.flags.writeable = False
        return view
    return np.broadcast_to(np.asarray(a, dtype=float), (n,))


def _time_codes(t: np.ndarray):
    """The distinct required times and each element's index among them.

    The required time takes few values (0.4 s, 5 s, ...): one value, or
    two told apart by one comparison, are found without sorting.
    """
    if t.ndim == 0:
        return t.reshape(1), 0
    if t.size == 0:
        return np.zeros(1), 0
    first = t[0]
    other = t != first
    k = np.count_nonzero(other)
    if k == 0:
        return np.array([first]), 0
    second = t[other.argmax()]
    if k == np.count_nonzero(t == second):
        return np.array([first, second]), other
    values, code = np.unique(t, return_inverse=True)      # many distinct times, or NaN among them
    return values, code.reshape(t.shape)


def _limits(curves: CurveSet, base, stride: int, t_required_s, u0_v, cmin, out=None):
    """Ia and Zs,max of every circuit, and whether every Zs,max is positive.

    Ia(t) is found once for each distinct (curve, required time) pair, by
    :func:`zsplan.protection.current_for_time`, and looked up: the required
    time takes few values (0.4 s, 5 s, ...), so the table is small, and it
    is kept with the curves for later calls with the same times.  Its row
    for curve k starts at ``k * stride`` (``base`` holds that per circuit),
    and each entry holds Ia and Zs,max together (as one complex number), so
    one look-up finds both.
    """
    t = t_required_s if type(t_required_s) is np.ndarray else np.asarray(t_required_s, dtype=float)
    values, code = _time_codes(t)
    nv = len(values)
    scalar = type(u0_v) is not np.ndarray and type(cmin) is not np.ndarray

    def build():
        ia = _ia_table(curves, values)
        zs = zs_limit(ia, u0_v, cmin) if scalar else np.zeros_like(ia)
        table = np.zeros((curves.size, stride), dtype=complex)
        table[:, :nv].real = ia.reshape(curves.size, nv)
        table[:, :nv].imag = zs.reshape(curves.size, nv)
        return table.reshape(-1), bool(scalar and zs.min() > 0)

    if nv <= 64 and nv <= stride:
        key = ("limits", stride, tuple(values.tolist()), float(u0_v) if scalar else None,
               float(cmin) if scalar else None)
        table, positive = curves.cached(key, build)
    else:
        return _limits_unique(curves, base // stride, values, code, u0_v, cmin)
    found = table.take(base if nv == 1 else np.add(base, code), out=out, mode="wrap")
    if scalar:
        return found.real, found.imag, positive
    return found.real, zs_limit(found.real, u0_v, cmin), False


def _ia_table(curves: CurveSet, values) -> np.ndarray:
    """Ia(t) of every curve at every required time in ``values``: curve k's
    entries are ``k * len(values)`` onwards."""
    nv = len(values)
    return current_for_time(curves, np.repeat(np.arange(curves.size), nv), np.tile(values, curves.size))


def _limits_unique(curves: CurveSet, idx, values, code, u0_v, cmin):
    """:func:`_limits` for many distinct required times: a table per call."""
    nv = len(values)
    ia_table = _ia_table(curves, values)
    slot = idx * nv + code
    ia = ia_table.take(slot)
    zs_max = zs_limit(ia, u0_v, cmin)
    return ia, zs_max, False

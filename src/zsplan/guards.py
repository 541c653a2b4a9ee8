"""Guard rails: warnings for plan values outside physical sense.

The loader refuses what cannot be computed (a negative length, a conductor
size no standard lists, a value beyond any installation's).  What can be
computed but is unusual enough to suggest a slip (a Ze in ohms that belongs
to a TT electrode, a final circuit a kilometre long, a 1 mm² cable on a
125 A breaker) still gets a result, and :func:`plan_warnings` says why the
inputs deserve a second look.  A warning never changes a verdict.

Each threshold below names its source; most are rules of thumb, marked so.

References
----------
.. [1] BS 7671:2018+A2:2022, Table 41.1 (disconnection times), Table 41.5
   note (earth electrode resistance above 200 ohm may not be stable),
   Appendix 4 (current ratings, voltage drop), Appendix 3 (Cmin).
.. [2] IEC 60038:2009, standard voltages: 230 V nominal to earth.
"""
from __future__ import annotations

import math

from .model import Circuit, Plan

__all__ = ["plan_warnings", "TN_ZE_MAX_OHM", "DECLARED_ZE_OHM", "TT_RA_STABLE_OHM",
           "FINAL_CIRCUIT_MAX_M", "AMBIENT_RANGE_C", "TEST_TEMPERATURE_RANGE_C", "U0_RANGE_V",
           "RCD_IDN_A", "ALLOWANCE_MAX", "EXTRA_MAX_M", "CEILING_MAX_M", "CMIN_MIN",
           "RATING_OVER_CAPACITY"]

#: Ze above this on a TN supply is no TN earth path (a TT electrode's figure,
#: or ohms typed for milliohms). [ohm]  # common practice (no published source)
TN_ZE_MAX_OHM = 200.0
#: Ze that UK distribution network operators typically declare as the most
#: their supply will present, by earthing arrangement; a higher Ze is not an
#: error but unusual. [ohm]  # common practice (no published source)
DECLARED_ZE_OHM = {"TN-C-S": 0.35, "TN-S": 0.8}
#: An earth electrode resistance RA above this may not be stable.
#: [ohm]  # BS 7671:2018 Table 41.5 note 2 - from memory
TT_RA_STABLE_OHM = 200.0
#: A final circuit's cable longer than this is unusual. [m]  # common practice (no published source)
FINAL_CIRCUIT_MAX_M = 1000.0
#: Ambient temperatures of ordinary installations. [degC]  # common practice (no published source)
AMBIENT_RANGE_C = (-40.0, 80.0)
#: Conductor temperatures at which circuits are usually tested. [degC]  # common practice (no published source)
TEST_TEMPERATURE_RANGE_C = (0.0, 40.0)
#: Nominal 230 V to earth with its +/-10 % supply tolerance. [V]  # IEC 60038:2009 Table 1 - from memory
U0_RANGE_V = (207.0, 253.0)
#: Rated residual operating currents IΔn of general-purpose RCDs. [A]  # IEC 61008-1:2010 5.2.3 - from memory
RCD_IDN_A = (0.006, 0.01, 0.03, 0.1, 0.3, 0.5)
#: A routing allowance above this is unusual. [fraction]  # common practice (no published source)
ALLOWANCE_MAX = 0.5
#: A fixed extra length above this is unusual. [m]  # common practice (no published source)
EXTRA_MAX_M = 20.0
#: A ceiling-void run higher than this is unusual. [m]  # common practice (no published source)
CEILING_MAX_M = 20.0
#: Cmin below this is unusual (BS 7671 takes 0.95). # BS 7671:2018 Appendix 3 - from memory
CMIN_MIN = 0.9
#: A device rated above this many times the highest tabulated current of its
#: line conductor (any reference method) is absurd: a slip in the rating or the
#: size.  # common practice (no published source)
RATING_OVER_CAPACITY = 2.0


def _circuit(c: Circuit) -> str:
    w = c.where
    where = f"{w.file}:{w.line}: " if w.file and w.line else (f"{w.file}: " if w.file else "")
    path = f"{w.path} " if w.path else ""
    return f"{where}{path}(circuit {c.board}/{c.ref})"


def _best_capacity_a(csa_mm2: float, material: str) -> float | None:
    """Highest tabulated It of a line conductor over every table and method, or None."""
    try:
        from .capacity import capacity_table
    except ImportError:            # pragma: no cover - capacity is part of the package
        return None
    best = None
    for key, (sizes, it, _) in capacity_table().items():
        if key[2] != material:
            continue
        for s, i in zip(sizes.tolist(), it.tolist()):
            if abs(s - csa_mm2) <= 1e-9 and (best is None or i > best):
                best = i
    return best


def plan_warnings(plan: Plan, lengths=None) -> list[str]:
    """Warnings for values that can be computed but are outside physical sense.

    Parameters
    ----------
    plan : zsplan.model.Plan
        A loaded plan.
    lengths : list of zsplan.geometry.CircuitLengths, optional
        The circuits' cable lengths, as :func:`zsplan.geometry.circuit_lengths`
        gives them (and :func:`zsplan.check.check` has them).  Without them,
        the cable-length warning is left out.

    Returns
    -------
    list of str
        One message per finding, naming the file, the place and the value,
        and saying why it is unusual.  Empty for an ordinary plan.

    Notes
    -----
    Thresholds: Ze above 200 ohm on a TN supply; Ze above the typically
    declared 0.35 ohm (TN-C-S) or 0.8 ohm (TN-S); RA above 200 ohm (TT); U0
    outside 230 V +/-10 %; Cmin below 0.9; ambient outside -40..+80 degC;
    test temperature outside 0..40 degC; a final circuit (or sub-main)
    longer than 1 km; a device rated above twice the best tabulated current
    of its line conductor; a cpc larger than its line conductor; an IΔn that
    is not a standard value; a routing allowance above 50 %, an extra length
    above 20 m or a ceiling run above 20 m.  The sources are given where each
    threshold is defined.

    Examples
    --------
    >>> from zsplan.model import Plan, Supply
    >>> plan_warnings(Plan("p.yaml", Supply(ze_ohm=0.35, earthing="TN-C-S"), (), ()))
    []
    >>> plan_warnings(Plan("p.yaml", Supply(ze_ohm=350.0, earthing="TN-S"), (), ()))[0][:42]
    'p.yaml: supply.ze: Ze 350 ohm on a TN-S su'
    """
    out: list[str] = []
    s = plan.supply
    at = f"{plan.path}: " if plan.path else ""

    # -- the supply
    if s.earthing in ("TN-S", "TN-C-S") and s.ze_ohm > TN_ZE_MAX_OHM:
        out.append(f"{at}supply.ze: Ze {s.ze_ohm:g} ohm on a {s.earthing} supply is above "
                   f"{TN_ZE_MAX_OHM:g} ohm, no TN earth path's figure; check the earthing "
                   "arrangement (a TT installation?) and the unit (mohm for ohm?)")
    elif s.earthing in DECLARED_ZE_OHM and s.ze_ohm > DECLARED_ZE_OHM[s.earthing]:
        out.append(f"{at}supply.ze: Ze {s.ze_ohm:g} ohm is above the {DECLARED_ZE_OHM[s.earthing]:g} "
                   f"ohm typically declared for a {s.earthing} supply (a UK network operator's "
                   "usual maximum; common practice, no published source); not an error, but "
                   "confirm it by measurement or with the network operator")
    ra = s.electrode_ohm
    if s.earthing == "TT" and ra is not None and ra > TT_RA_STABLE_OHM:
        out.append(f"{at}supply.electrode: RA {ra:g} ohm is above {TT_RA_STABLE_OHM:g} ohm; an "
                   "earth electrode resistance this high may not be stable (BS 7671 Table 41.5 "
                   "note)")
    if not U0_RANGE_V[0] <= s.u0_v <= U0_RANGE_V[1]:
        out.append(f"{at}supply.u0: U0 {s.u0_v:g} V is outside {U0_RANGE_V[0]:g}-{U0_RANGE_V[1]:g} V "
                   "(230 V +/-10 %, IEC 60038); check the nominal voltage to earth")
    if s.cmin < CMIN_MIN:
        out.append(f"{at}supply.cmin: Cmin {s.cmin:g} is below {CMIN_MIN:g}; BS 7671 takes 0.95")

    # -- sub-mains
    for b in plan.boards:
        f = b.fed_from
        if f is not None and f.length_m > FINAL_CIRCUIT_MAX_M:
            w = b.where
            where = f"{w.file}:{w.line}: " if w.file and w.line else at
            out.append(f"{where}{w.path}.fed_from.length: the sub-main to board {b.ref} is "
                       f"{f.length_m:g} m long, more than {FINAL_CIRCUIT_MAX_M:g} m; check the "
                       "length and its unit")

    # -- circuits: one warning per kind and value, naming the first circuit and
    # counting the others (a value inherited from defaults is one slip, not fifty)
    groups: dict[tuple, list] = {}

    def note(kind, value, c, message):
        groups.setdefault((kind, value), [c, message, 0])[2] += 1

    by_key = {}
    if lengths is not None:
        by_key = {(L.board, L.ref): L for L in lengths}
    best_cache: dict = {}
    for c in plan.circuits:
        L = by_key.get((c.board, c.ref))
        if L is not None and math.isfinite(L.worst_m) and L.worst_m > FINAL_CIRCUIT_MAX_M:
            note("length", c.key, c, f"the cable is {L.worst_m:.0f} m long, more than "
                 f"{FINAL_CIRCUIT_MAX_M:g} m for a final circuit; check the route, the "
                 "drawing's scale and the units")
        lo, hi = AMBIENT_RANGE_C
        if not lo <= c.ambient_c <= hi:
            note("ambient", c.ambient_c, c, f"ambient {c.ambient_c:g} degC is outside "
                 f"{lo:g}..{hi:g} degC, the range of ordinary installations; check the value "
                 "and its unit")
        lo, hi = TEST_TEMPERATURE_RANGE_C
        if not lo <= c.test_temperature_c <= hi:
            note("test", c.test_temperature_c, c, f"test temperature {c.test_temperature_c:g} "
                 f"degC is outside {lo:g}..{hi:g} degC, where circuits are usually tested")
        cab, dev = c.cable, c.device
        mat_key = (cab.line_mm2, cab.material)
        if mat_key not in best_cache:
            best_cache[mat_key] = _best_capacity_a(cab.line_mm2, cab.material)
        best = best_cache[mat_key]
        if best is not None and dev.rating_a > RATING_OVER_CAPACITY * best:
            note("rating", (mat_key, dev.rating_a), c, f"a {dev.rating_a:g} A device on "
                 f"{cab.line_mm2:g} mm² {cab.material} conductors: more than "
                 f"{RATING_OVER_CAPACITY:g} times the {best:g} A the conductor is rated for in "
                 "the best tabulated installation (BS 7671 Appendix 4); check the rating and "
                 "the size")
        if cab.cpc_mm2 > cab.line_mm2:
            note("cpc", (cab.line_mm2, cab.cpc_mm2), c, f"the cpc ({cab.cpc_mm2:g} mm²) is "
                 f"larger than the line conductor ({cab.line_mm2:g} mm²); unusual - check that "
                 "the two are not swapped")
        if c.rcd_a is not None and not any(math.isclose(c.rcd_a, v, rel_tol=1e-6) for v in RCD_IDN_A):
            shown = ", ".join(f"{v * 1000:g}" for v in RCD_IDN_A)
            note("rcd", c.rcd_a, c, f"IΔn {c.rcd_a * 1000:g} mA is not a standard RCD rating "
                 f"({shown} mA); check the value and its unit")
        if c.allowance > ALLOWANCE_MAX:
            note("allowance", c.allowance, c, f"routing allowance {c.allowance * 100:g} % is "
                 f"above {ALLOWANCE_MAX * 100:g} %; check the value")
        if c.extra_m > EXTRA_MAX_M:
            note("extra", c.extra_m, c, f"extra length {c.extra_m:g} m is above "
                 f"{EXTRA_MAX_M:g} m; check the value and its unit")
        if c.run == "ceiling" and c.ceiling_m > CEILING_MAX_M:
            note("ceiling", c.ceiling_m, c, f"ceiling run at {c.ceiling_m:g} m is above "
                 f"{CEILING_MAX_M:g} m; check the value and its unit")
    for first, message, count in groups.values():
        more = f" (and {count - 1} more circuit{'s' if count > 2 else ''})" if count > 1 else ""
        out.append(f"{_circuit(first)}{more}: {message}")
    return out

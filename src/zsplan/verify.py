"""Verify the readings taken on site against the design.

After installation every circuit is tested.  zsplan already knows what each
reading should be; :func:`verify` compares the two, circuit by circuit, and
gives each circuit a status:

``fail``
    the measured Zs exceeds the highest acceptable value at the recorded
    temperature (or, scaled to the design temperature, exceeds Zs,max), or
    the RCD is slower than its standard allows;
``missing``
    no row for the circuit, or a row with neither Zs nor R1+R2;
``suspect``
    the readings pass but do not fit the design: R1+R2 outside the ratio
    band, a ring whose end-to-end readings disagree, a measured Ze above the
    design Ze, a reading left out;
``pass``
    everything measured fits the design.

Checks
------
Zs (``zs``)
    The plan's highest acceptable measured Zs (``zs_test_max_ohm``) holds at
    the plan's test temperature θp.  A reading taken at another conductor
    temperature θ gets the limit at θ, by the plan's ``test_limit`` method
    (:func:`zsplan.loop.test_zs_limit`):

    * ``"temperature-ratio"``: :math:`Z_e + (Z_{s,max} - Z_e)\\,R(\\theta)/R(\\theta_d)`,
      with :math:`R(\\theta)/R(\\theta_d)` the ratio of R1+R2 at θ to R1+R2 at
      the design temperatures — exact;
    * ``"rule-of-0.8"``: :math:`0.8\\,Z_{s,max} \\times f(\\theta)/f(\\theta_p)`
      with :math:`f(\\theta) = 1 + \\alpha(\\theta - 20)`
      (:func:`zsplan.conductors.temperature_factor`): the rule's limit taken
      at the plan's test temperature and scaled with the conductors'
      resistance, the form of the ambient-temperature correction factors
      published with the rule [2]_ (from memory).

    Either way a warmer test raises the limit (warmer conductors read
    higher).  The measured Zs is also scaled to the design temperature,
    :math:`Z_{s,d} = Z_e + (Z_s - Z_e)\\,R(\\theta_d)/R(\\theta)`, and the
    circuit fails if :math:`Z_{s,d} > Z_{s,max}`; :math:`1 - Z_{s,d}/Z_{s,max}`
    is the measured margin (:func:`measured_margins`).  Where Zs is not
    recorded but R1+R2 is, Zs is taken as :math:`Z_e + (R_1 + R_2)` (measured
    Ze where recorded, else the design Ze) and a message says so.
R1+R2 (``r1r2``)
    measured / expected at the recorded temperature; outside ``ratio_band``
    (default 0.7–1.3, common practice (no published source)) and more than
    0.05 Ω away (instrument resolution and test-lead error; common practice
    (no published source)) the circuit is suspect, with the likely cause.
Ring (``ring``, ring final circuits)
    from the end-to-end readings r1 (line), rn (neutral), r2 (cpc):
    r1 ≈ rn within 0.05 Ω; r2/r1 within 10 % of the conductors' resistance
    ratio :math:`R_{cpc}/R_{line}` from IEC 60228 [3]_ (12.1/7.41 = 1.63 for
    2.5/1.5 mm² copper; "about 1.67" in common practice, the ratio of the
    areas 2.5/1.5); the measured R1+R2 ≈ (r1 + r2)/4 within 0.05 Ω.  The
    tolerances are common practice (no published source).
Ze (``ze``)
    Ze measured at the origin against the plan's Ze: higher is suspect (the
    design's Zs rests on a lower Ze).
RCD (``rcd``)
    operating time at IΔn ≤ 300 ms, the maximum break time of a general
    (non-delayed) RCD at IΔn (BS EN 61008-1 and BS EN 61009-1, Table 1 [4]_;
    ``data/rcd_times.yaml``), verified under BS 7671 Regulation 643.7 /
    643.8 (regulation numbers from memory).

Every verdict is taken on unrounded numbers; displayed numbers are rounded
toward the safe side (:func:`zsplan.results.safe_round`).

References
----------
.. [1] BS 7671:2018+A2:2022, Regulation 411.4.4, Part 6 (inspection and
   testing) and Appendix 3 (the 0.8 rule for measured Zs).
.. [2] IET Guidance Note 3 / On-Site Guide: ambient-temperature correction
   factors for the maximum measured Zs (1.04 at 20 °C, 1.08 at 30 °C,
   relative to 10 °C; from memory).
.. [3] IEC 60228:2004, Table 2 (maximum resistance at 20 °C).
.. [4] BS EN 61008-1:2012 and BS EN 61009-1:2012, Table 1.
"""
from __future__ import annotations

import csv
import io
import json
import math
import os
from dataclasses import dataclass, field
from typing import Iterable

import numpy as np

from . import CAUTION
from .conductors import resistance_20c, temperature_factor
from .errors import PlanError, Problem
from .loop import margin as loop_margin, test_zs_limit
from .readings import Reading, ReadingList, read_results, read_results_text  # noqa: F401 (re-exported)
from .results import Results, safe_round

__all__ = [
    "STATUSES", "RATIO_BAND", "CircuitVerification", "Verification", "Reading", "ReadingList",
    "read_results", "read_results_text", "verify", "verify_files", "to_dict", "to_json",
    "format_table", "table_lines", "to_csv", "measured_margins", "rcd_limit_ms", "main",
]

STATUSES = ("pass", "suspect", "fail", "missing")

#: measured/expected R1+R2 outside this band is suspect; common practice (no published source)
RATIO_BAND = (0.7, 1.3)
#: R1+R2 differences smaller than this are not flagged (instrument resolution, test
#: leads); common practice (no published source)
R1R2_FLOOR_OHM = 0.05
#: ring: r1 and rn agree within this; common practice (no published source)
RING_MATCH_OHM = 0.05
#: ring: r2/r1 within this fraction of R(cpc)/R(line); common practice (no published source)
RING_RATIO_TOLERANCE = 0.10
#: ring: measured R1+R2 within this of (r1 + r2)/4; common practice (no published source)
RING_QUARTER_OHM = 0.05

_NAN = float("nan")


def rcd_limit_ms() -> float:
    """Maximum break time of a general RCD at IΔn. [ms]

    BS EN 61008-1:2012 / BS EN 61009-1:2012 Table 1 (``data/rcd_times.yaml``): 300 ms.
    """
    from .rcd import break_times
    t = break_times()["general"]
    return float(t[t[:, 0] == 1.0][0, 1]) * 1000.0


@dataclass
class CircuitVerification:
    """The verification of one circuit.  NaN: not measured or not applicable.

    Impedances in Ω, temperatures in °C, times in ms.
    """

    index: int
    board: str
    ref: str
    name: str
    topology: str
    status: str
    line: int | None                    # the reading's row in the results file
    temperature_c: float                # the temperature the comparison is made at
    temperature_recorded: bool
    zs_measured: float = _NAN
    zs_derived: bool = False            # Zs taken as Ze + measured R1+R2
    zs_limit: float = _NAN              # highest acceptable measured Zs at temperature_c
    zs_max: float = _NAN                # design limit at the design temperature
    zs_at_design: float = _NAN          # measured Zs scaled to the design temperature
    margin_measured: float = _NAN
    r1r2_measured: float = _NAN
    r1r2_expected: float = _NAN
    ratio: float = _NAN
    ze_measured: float = _NAN
    ze_design: float = _NAN             # the plan's Ze at the origin
    r1: float = _NAN
    rn: float = _NAN
    r2: float = _NAN
    r1_expected: float = _NAN
    r2_expected: float = _NAN
    ring_ratio: float = _NAN
    ring_ratio_expected: float = _NAN
    rcd_ms: float = _NAN
    rcd_limit_ms: float = _NAN
    checks: dict[str, str] = field(default_factory=dict)
    messages: list[str] = field(default_factory=list)

    @property
    def key(self) -> tuple[str, str]:
        return (self.board, self.ref)


@dataclass
class Verification:
    """The outcome of :func:`verify`: one record per circuit of the plan, in plan order."""

    results: Results
    circuits: list[CircuitVerification]
    source: str = ""
    ratio_band: tuple[float, float] = RATIO_BAND
    warnings: list[str] = field(default_factory=list)

    @property
    def plan(self):
        return self.results.plan

    def summary(self) -> dict[str, int]:
        st = [c.status for c in self.circuits]
        return {k: st.count(k) for k in STATUSES}

    @property
    def any_fail(self) -> bool:
        return any(c.status == "fail" for c in self.circuits)


# ---------------------------------------------------------------------------
# the comparison
# ---------------------------------------------------------------------------

def _value(v) -> float:
    return _NAN if v is None else float(v)


def _expected(results: Results, temperature_c: np.ndarray) -> dict[str, np.ndarray]:
    """Expected readings and limits of every circuit at the given temperatures (NaN: plan's)."""
    plan = results.plan
    a = results.circuits
    cs = plan.circuits
    method, alpha = plan.settings.test_limit, plan.settings.alpha
    mat = np.array([c.cable.material for c in cs])
    theta_p = np.array([c.test_temperature_c for c in cs], dtype=float)
    theta = np.where(np.isfinite(temperature_c), temperature_c, theta_p)
    # R(θ)/R(θp) of the conductors: f(θ)/f(θp), f = 1 + α(θ − 20)
    k = np.asarray(temperature_factor(theta, mat, alpha)) / np.asarray(temperature_factor(theta_p, mat, alpha))
    rr_exp = a["r1r2_test_ohm"] * k
    rr_design = a["r1r2_ohm"]
    with np.errstate(divide="ignore", invalid="ignore"):
        to_test = np.where(rr_design > 0, rr_exp / rr_design, 1.0)   # R1+R2(θ) / R1+R2(design), as check.py
    ze_board = a["board_ze_ohm"]
    limit = np.asarray(test_zs_limit(a["zs_max_ohm"], ze_board, to_test, method), dtype=float)
    if method == "rule-of-0.8":
        limit = limit * k        # the rule's limit holds at θp; scale with the conductors
    # ring: the conductors' resistance ratio (same material, so α cancels)
    line = np.array([c.cable.line_mm2 for c in cs], dtype=float)
    cpc = np.array([c.cable.cpc_mm2 for c in cs], dtype=float)
    ring_ratio = np.asarray(resistance_20c(cpc, mat)) / np.asarray(resistance_20c(line, mat))
    # a ring's R1+R2 is (r1 + r2)/4 with r2 = ratio x r1
    r1_exp = 4.0 * rr_exp / (1.0 + ring_ratio)
    return {"theta": theta, "k": k, "r1r2_expected": rr_exp, "to_test": to_test, "limit": limit,
            "ring_ratio": ring_ratio, "r1_expected": r1_exp, "r2_expected": r1_exp * ring_ratio,
            "ze_board": ze_board}


def verify(results: Results, readings: Iterable[Reading], *, ratio_band=RATIO_BAND,
           r1r2_floor_ohm: float = R1R2_FLOOR_OHM, ring_match_ohm: float = RING_MATCH_OHM,
           ring_ratio_tolerance: float = RING_RATIO_TOLERANCE,
           ring_quarter_ohm: float = RING_QUARTER_OHM, source: str | None = None) -> Verification:
    """Compare the readings with the design, circuit by circuit.

    Parameters
    ----------
    results : Results
        The design, from :func:`zsplan.check`.
    readings : iterable of Reading
        From :func:`read_results`.
    ratio_band : (float, float)
        Lowest and highest measured/expected R1+R2 taken as fitting the design. [-]
    r1r2_floor_ohm : float
        R1+R2 differences below this are never flagged. [Ω]
    ring_match_ohm, ring_ratio_tolerance, ring_quarter_ohm : float
        Ring tolerances: r1 vs rn [Ω], r2/r1 vs the conductor ratio [fraction],
        R1+R2 vs (r1 + r2)/4 [Ω].
    source : str, optional
        The results file's name for messages (default: the readings' file).

    Returns
    -------
    Verification

    Raises
    ------
    zsplan.errors.PlanError
        For a reading of a circuit the plan does not have (naming its row),
        or two readings of one circuit (naming both rows).
    """
    lo, hi = (float(x) for x in ratio_band)
    if not (0 < lo <= 1 <= hi):
        raise ValueError(f"ratio_band must contain 1 with 0 < low <= 1 <= high, got {ratio_band!r}")
    readings = list(readings) if not isinstance(readings, list) else readings
    plan = results.plan
    if source is None:
        source = getattr(readings, "file", "") or (readings[0].file if readings else "")
    index = {c.key: i for i, c in enumerate(plan.circuits)}
    problems: list[Problem] = []
    by_circuit: dict[int, Reading] = {}
    for rd in readings:
        i = index.get(rd.key)
        if i is None:
            problems.append(Problem(rd.file or source, _unknown(plan, rd), f"row {rd.line}", rd.line))
        elif i in by_circuit:
            first = by_circuit[i]
            problems.append(Problem(rd.file or source,
                                    f"a second row for circuit {rd.board}/{rd.ref} (the first is on line "
                                    f"{first.line}); keep one row per circuit",
                                    f"rows {first.line} and {rd.line}", rd.line))
        else:
            by_circuit[i] = rd
    if problems:
        raise PlanError(problems)

    n = len(plan.circuits)
    temps = np.array([_value(by_circuit[i].temperature_c) if i in by_circuit else _NAN for i in range(n)],
                     dtype=float)
    e = _expected(results, temps) if n else {}
    a = results.circuits
    by_rcd = a.get("by_rcd", np.zeros(n, dtype=bool))
    ze_origin = plan.supply.ze_ohm
    rcd_lim = rcd_limit_ms()
    out = []
    for i, c in enumerate(plan.circuits):
        rd = by_circuit.get(i)
        cv = CircuitVerification(
            index=i, board=c.board, ref=c.ref, name=c.name, topology=c.topology, status="missing",
            line=None if rd is None else rd.line, temperature_c=float(e["theta"][i]),
            temperature_recorded=rd is not None and rd.temperature_c is not None,
            zs_limit=float(e["limit"][i]), zs_max=float(a["zs_max_ohm"][i]),
            r1r2_expected=float(e["r1r2_expected"][i]), ze_design=ze_origin,
            rcd_limit_ms=rcd_lim if c.rcd_a is not None else _NAN)
        if c.topology == "ring":
            cv.r1_expected, cv.r2_expected = float(e["r1_expected"][i]), float(e["r2_expected"][i])
            cv.ring_ratio_expected = float(e["ring_ratio"][i])
        if rd is None:
            cv.messages.append("no reading in the results file")
        else:
            _compare(cv, rd, c, e, i, bool(by_rcd[i]), ze_origin,
                     (lo, hi), r1r2_floor_ohm, ring_match_ohm, ring_ratio_tolerance, ring_quarter_ohm)
        out.append(cv)

    warnings = []
    ignored = getattr(readings, "ignored_columns", ())
    if ignored:
        warnings.append("column" + ("s " if len(ignored) > 1 else " ") + ", ".join(repr(x) for x in ignored)
                        + " not used by the verification")
    subs = results.submains.get("boards", ()) if results.submains else ()
    if len(subs):
        warnings.append("sub-mains (to " + ", ".join(subs) + ") are not verified: the results file holds "
                        "final circuits only; check their Zs against the design's sub-main table")
    return Verification(results, out, source=source or "", ratio_band=(lo, hi), warnings=warnings)


def _unknown(plan, rd: Reading) -> str:
    refs = [c.ref for c in plan.circuits if c.board == rd.board]
    if refs:
        known = f"board {rd.board} has circuits {', '.join(refs)}"
    else:
        known = "the plan's boards are " + ", ".join(b.ref for b in plan.boards)
    return f"a reading for circuit {rd.board}/{rd.ref}, which the plan does not have ({known})"


def _r(name: str, v: float, d: int = 3) -> str:
    x = safe_round(name, float(v), d)
    return "–" if x is None else f"{x:.{d}f}"


def _compare(cv: CircuitVerification, rd: Reading, c, e: dict, i: int, by_rcd: bool, ze_origin: float,
             band, floor, ring_match, ring_tol, ring_quarter) -> None:
    msgs, ch = cv.messages, cv.checks
    t = f"{cv.temperature_c:g} °C"
    if not cv.temperature_recorded:
        t += " (the plan's test temperature; none recorded)"

    # -- Ze at the origin
    ze_board = float(e["ze_board"][i])
    if rd.ze_ohm is not None:
        cv.ze_measured = rd.ze_ohm
        ze_board = ze_board + (rd.ze_ohm - ze_origin)          # the board's Ze moves with the origin's
        if rd.ze_ohm > ze_origin * (1 + 1e-9):
            ch["ze"] = "suspect"
            zs_d = ze_board + float(e["r1r2_expected"][i]) / float(e["to_test"][i])
            msgs.append(f"measured Ze {_r('zs_ohm', rd.ze_ohm)} ohm is above the design Ze "
                        f"{_r('zs_ohm', ze_origin)} ohm: the design's Zs rests on a lower Ze; with the "
                        f"measured Ze the design Zs is {_r('zs_ohm', zs_d)} ohm against Zs max "
                        f"{_r('zs_max_ohm', cv.zs_max)} ohm" + (" (exceeds it)" if zs_d > cv.zs_max else ""))
        else:
            ch["ze"] = "pass"

    # -- Zs
    zs = rd.zs_ohm
    if zs is None and rd.r1r2_ohm is not None:
        zs = ze_board + rd.r1r2_ohm
        cv.zs_derived = True
        src = "the measured Ze" if rd.ze_ohm is not None else "the design Ze"
        msgs.append(f"Zs not recorded: taken as Ze + measured R1+R2 = {_r('zs_ohm', zs)} ohm, with {src}")
    if zs is None:
        ch["zs"] = "not measured"
    else:
        cv.zs_measured = zs
        to_test = float(e["to_test"][i])
        cv.zs_at_design = ze_board + max(zs - ze_board, 0.0) / to_test
        cv.margin_measured = float(loop_margin(cv.zs_at_design, cv.zs_max))
        if not cv.zs_limit > 0:
            ch["zs"] = "fail"
            msgs.append("no measured Zs can be accepted: the design shows the device cannot disconnect "
                        "in the required time at any Zs (see zsplan check)")
        elif zs > cv.zs_limit:
            ch["zs"] = "fail"
            msgs.append(f"measured Zs {_r('zs_ohm', zs)} ohm exceeds the highest acceptable "
                        f"{_r('zs_test_max_ohm', cv.zs_limit)} ohm at {t} (Zs max "
                        f"{_r('zs_max_ohm', cv.zs_max)} ohm at the design temperature, BS 7671 "
                        f"Regulation 411.4.4)")
        elif cv.zs_at_design > cv.zs_max:
            ch["zs"] = "fail"
            msgs.append(f"measured Zs {_r('zs_ohm', zs)} ohm, scaled to the design temperature, is "
                        f"{_r('zs_ohm', cv.zs_at_design)} ohm and exceeds Zs max {_r('zs_max_ohm', cv.zs_max)} ohm")
        else:
            ch["zs"] = "pass"
        if zs < ze_board and not cv.zs_derived:
            msgs.append(f"measured Zs {_r('zs_ohm', zs)} ohm is below the Ze at the board "
                        f"({_r('zs_ohm', ze_board)} ohm): parallel earth paths likely")

    # -- R1+R2
    if rd.r1r2_ohm is None:
        ch["r1r2"] = "not measured"
        msgs.append("R1+R2 not recorded: continuity of the protective conductor not shown")
    else:
        cv.r1r2_measured = rd.r1r2_ohm
        exp = cv.r1r2_expected
        cv.ratio = rd.r1r2_ohm / exp if exp > 0 else _NAN
        lo, hi = band
        off = abs(rd.r1r2_ohm - exp) > floor
        if math.isfinite(cv.ratio) and cv.ratio > hi and off:
            ch["r1r2"] = "suspect"
            msgs.append(f"R1+R2 {_r('r1r2_ohm', rd.r1r2_ohm)} ohm is {cv.ratio:.2f} x the expected "
                        f"{_r('r1r2_test_ohm', exp)} ohm at {cv.temperature_c:g} °C (band {lo:g}-{hi:g}): "
                        "a longer route than planned, a smaller cpc than designed, or a poor connection")
        elif math.isfinite(cv.ratio) and cv.ratio < lo and off:
            ch["r1r2"] = "suspect"
            msgs.append(f"R1+R2 {_r('r1r2_ohm', rd.r1r2_ohm)} ohm is {cv.ratio:.2f} x the expected "
                        f"{_r('r1r2_test_ohm', exp)} ohm at {cv.temperature_c:g} °C (band {lo:g}-{hi:g}): "
                        "a shorter route than planned, a larger cable than designed, or a parallel "
                        "earth path (metal conduit, trunking, bonding)")
        elif not math.isfinite(cv.ratio):
            ch["r1r2"] = "suspect" if off else "pass"
            if off:
                msgs.append(f"R1+R2 {_r('r1r2_ohm', rd.r1r2_ohm)} ohm where the design expects none")
        else:
            ch["r1r2"] = "pass"

    # -- ring
    ring_vals = (rd.r1_ohm, rd.rn_ohm, rd.r2_ohm)
    if c.topology == "ring":
        _ring(cv, rd, ring_match, ring_tol, ring_quarter)
    elif any(v is not None for v in ring_vals):
        msgs.append("end-to-end ring readings (r1, rn, r2) given for a radial circuit: not used")

    # -- RCD
    if rd.rcd_ms is not None:
        cv.rcd_ms = rd.rcd_ms
        if c.rcd_a is None:
            ch["rcd"] = "suspect"
            msgs.append(f"RCD time {rd.rcd_ms:g} ms recorded, but the plan shows no RCD on this circuit")
        elif rd.rcd_ms > cv.rcd_limit_ms:
            ch["rcd"] = "fail"
            msgs.append(f"RCD operating time {rd.rcd_ms:g} ms at IΔn exceeds {cv.rcd_limit_ms:g} ms "
                        "(general RCD, BS EN 61008-1 / BS EN 61009-1 Table 1)")
        else:
            ch["rcd"] = "pass"
    elif c.rcd_a is not None:
        ch["rcd"] = "not measured"
        msgs.append("RCD operating time not recorded" +
                    (": the RCD provides fault protection on this circuit" if by_rcd else ""))

    # -- status
    if rd.zs_ohm is None and rd.r1r2_ohm is None and "fail" not in ch.values():
        cv.status = "missing"
        msgs.insert(0, f"row {rd.line} records neither Zs nor R1+R2")
    elif "fail" in ch.values():
        cv.status = "fail"
    elif ("suspect" in ch.values() or ch.get("r1r2") == "not measured"
          or (by_rcd and ch.get("rcd") == "not measured")):
        cv.status = "suspect"
    else:
        cv.status = "pass"


def _ring(cv: CircuitVerification, rd: Reading, match: float, tol: float, quarter: float) -> None:
    msgs, ch = cv.messages, cv.checks
    vals = {"r1": rd.r1_ohm, "rn": rd.rn_ohm, "r2": rd.r2_ohm}
    absent = [k for k, v in vals.items() if v is None]
    if absent:
        ch["ring"] = "suspect"
        msgs.append(f"ring end-to-end reading{'s' if len(absent) > 1 else ''} {', '.join(absent)} not "
                    "recorded: ring continuity not verified")
    cv.r1, cv.rn, cv.r2 = (_value(v) for v in vals.values())
    bad = []
    if rd.r1_ohm is not None and rd.rn_ohm is not None and abs(rd.r1_ohm - rd.rn_ohm) > match:
        bad.append(f"r1 {_r('ring_ohm', rd.r1_ohm)} and rn {_r('ring_ohm', rd.rn_ohm)} ohm differ by more than "
                   f"{match:g} ohm: a poor connection or a break on one conductor, or a conductor "
                   "crossed or interconnected with another on the ring")
    if rd.r1_ohm is not None and rd.r2_ohm is not None:
        cv.ring_ratio = rd.r2_ohm / rd.r1_ohm if rd.r1_ohm > 0 else _NAN
        want = cv.ring_ratio_expected
        if not (math.isfinite(cv.ring_ratio) and abs(cv.ring_ratio / want - 1.0) <= tol):
            shown = "–" if not math.isfinite(cv.ring_ratio) else f"{cv.ring_ratio:.2f}"
            bad.append(f"r2/r1 = {shown} where the conductors give {want:.2f} (IEC 60228 R(cpc)/R(line), "
                       f"within {100 * tol:g} %): line and cpc may be crossed on the ring (each end-to-end "
                       "reading then runs partly on the other conductor and the ratio moves toward 1), or "
                       "the cpc is not the size designed, or a connection is poor")
    if (rd.r1_ohm is not None and rd.r2_ohm is not None and rd.r1r2_ohm is not None):
        q = (rd.r1_ohm + rd.r2_ohm) / 4.0
        if abs(rd.r1r2_ohm - q) > quarter:
            bad.append(f"R1+R2 {_r('r1r2_ohm', rd.r1r2_ohm)} ohm differs from (r1 + r2)/4 = "
                       f"{_r('r1r2_ohm', q)} ohm by more than {quarter:g} ohm: the highest reading is on a "
                       "spur, or the ring's ends are not cross-connected correctly")
    if bad:
        ch["ring"] = "suspect"
        msgs.extend(bad)
    elif not absent:
        ch["ring"] = "pass"


# ---------------------------------------------------------------------------
# outputs
# ---------------------------------------------------------------------------

#: JSON/CSV field -> safe_round field name (direction) and decimals
_ROUND = {
    "zs_measured": ("zs_ohm", 3), "zs_limit": ("zs_test_max_ohm", 3), "zs_max": ("zs_max_ohm", 3),
    "zs_at_design": ("zs_ohm", 3), "margin_measured": ("margin", 3),
    "r1r2_measured": ("r1r2_ohm", 3), "r1r2_expected": ("r1r2_test_ohm", 3), "ratio": ("ratio", 3),
    "ze_measured": ("zs_ohm", 3), "ze_design": ("zs_ohm", 3),
    "r1": ("ring_ohm", 3), "rn": ("ring_ohm", 3), "r2": ("ring_ohm", 3),   # as recorded
    "r1_expected": ("r1r2_test_ohm", 3), "r2_expected": ("r1r2_test_ohm", 3),
    "ring_ratio": ("ratio", 3), "ring_ratio_expected": ("ratio", 3),
    "rcd_ms": ("disconnect_s", 1), "rcd_limit_ms": ("disconnect_limit_s", 1),
    "temperature_c": ("temperature_c", 1),
}


def _record(cv: CircuitVerification) -> dict:
    rec = {"board": cv.board, "ref": cv.ref, "name": cv.name, "status": cv.status, "row": cv.line}
    for k, (name, d) in _ROUND.items():
        rec[k] = safe_round(name, float(getattr(cv, k)), d)
    rec["temperature_recorded"] = cv.temperature_recorded
    rec["zs_derived"] = cv.zs_derived
    rec["checks"] = dict(cv.checks)
    rec["messages"] = list(cv.messages)
    return rec


def to_dict(verification: Verification) -> dict:
    """The verification as a JSON-ready dict.

    ``{"zsplan": 1, "plan", "results", "circuits": [...], "summary": {...},
    "warnings": [...], "settings": {...}, "caution"}``; each circuit has
    ``board``, ``ref``, ``name``, ``status`` (``pass`` | ``fail`` |
    ``suspect`` | ``missing``), ``row`` (line of its reading), the numbers of
    :class:`CircuitVerification` (ohm, °C, ms; ``null`` where not measured),
    ``checks`` and ``messages``.  Numbers are rounded toward the safe side.
    """
    v = verification
    return {
        "zsplan": 1,
        "plan": v.plan.path,
        "results": v.source,
        "circuits": [_record(c) for c in v.circuits],
        "summary": v.summary(),
        "warnings": list(v.warnings),
        "settings": {"ratio_band": list(v.ratio_band), "test_limit": v.plan.settings.test_limit,
                     "alpha": v.plan.settings.alpha},
        "caution": CAUTION,
    }


def to_json(verification: Verification) -> str:
    """:func:`to_dict` as indented JSON text."""
    return json.dumps(to_dict(verification), indent=2, ensure_ascii=False)


_STATUS_WORD = {"pass": "pass", "fail": "FAIL", "suspect": "suspect", "missing": "missing"}
_STATUS_BAND = {"pass": "pass", "fail": "fail", "suspect": "tight"}


def table_lines(verification: Verification, *, colour: bool = False, glyphs=None,
                width: int | None = None) -> list[str]:
    """The verification as lines of text: heading, table, notes, tally and caution.

    ``colour`` (default off) paints the status column with the band colours
    of :mod:`zsplan.terminal` (suspect in the tight colour); the status is
    always written as a word as well.
    """
    from .terminal import BOLD, DIM, Cell, Glyphs, band_sgr, paint, render_table

    g = glyphs or Glyphs()
    v = verification
    plan = v.plan
    title = plan.title or plan.path
    lines = [paint(f"Verification: {title}", BOLD, colour),
             f"plan {plan.path}; readings {v.source or '<readings>'}",
             f"design Ze {_r('zs_ohm', plan.supply.ze_ohm, 2)} {g.ohm} at the origin; measured Zs limits by "
             f"{plan.settings.test_limit}; R1+R2 band {v.ratio_band[0]:g}-{v.ratio_band[1]:g}", ""]

    def num(name, x, d):
        r = safe_round(name, float(x), d)
        return g.none if r is None else f"{r:.{d}f}"

    rows = []
    for cv in v.circuits:
        ring = g.none
        if cv.topology == "ring":
            ring = " / ".join(num("ring_ohm", x, 2) for x in (cv.r1, cv.rn, cv.r2))
        temp = g.none if cv.status == "missing" and cv.line is None else (
            f"{cv.temperature_c:g}" + ("" if cv.temperature_recorded else "*"))
        zs_txt = num("zs_ohm", cv.zs_measured, 2) + ("†" if cv.zs_derived and g.ohm == "Ω" else
                                                       "+" if cv.zs_derived else "")
        st = cv.status
        sgr = band_sgr(_STATUS_BAND.get(st, "")) if st != "missing" else DIM
        rows.append([
            f"{cv.board}/{cv.ref}", cv.name, temp, zs_txt,
            num("zs_test_max_ohm", cv.zs_limit, 2) if cv.zs_limit > 0 else g.none,
            num("r1r2_ohm", cv.r1r2_measured, 2), num("r1r2_test_ohm", cv.r1r2_expected, 2),
            g.none if not math.isfinite(cv.ratio) else f"{cv.ratio:.2f}", ring,
            num("disconnect_s", cv.rcd_ms, 0),
            Cell(_STATUS_WORD.get(st, st), (sgr + ";1") if sgr and st == "fail" else sgr)])
    headers = ["Circuit", "Name", "°C" if g.ohm == "Ω" else "degC", f"Zs {g.ohm}", f"limit {g.ohm}",
               f"R1+R2 {g.ohm}", f"expected {g.ohm}", "ratio", f"ring r1/rn/r2 {g.ohm}", "RCD ms", "Status"]
    lines += render_table(headers, rows, align="lllrrrrrrrl", colour=colour, max_width=width, shrink=1,
                          glyphs=g)
    marks = []
    if any(not cv.temperature_recorded and cv.line is not None for cv in v.circuits):
        marks.append("* no temperature recorded: the plan's test temperature is used")
    if any(cv.zs_derived for cv in v.circuits):
        marks.append(("†" if g.ohm == "Ω" else "+") + " Zs not recorded: Ze + measured R1+R2")
    if marks:
        lines += [""] + marks

    notes = [f"  {cv.board}/{cv.ref}: {m}" for cv in v.circuits for m in cv.messages]
    notes += [f"  {w}" for w in v.warnings]
    if notes:
        lines += ["", "Notes:"] + notes
    s = v.summary()
    n = len(v.circuits)
    tally = f"{n} circuit{'s' if n != 1 else ''}: " + ", ".join(
        paint(f"{s[k]} {k}", band_sgr(_STATUS_BAND.get(k, "")) if k != "missing" else DIM, colour)
        for k in ("pass", "suspect", "fail", "missing"))
    lines += ["", tally, paint(f"Caution: {CAUTION}", DIM, colour)]
    return lines


def format_table(verification: Verification, *, glyphs=None, width: int | None = None) -> str:
    """The verification as a readable plain-text table (no colour), caution included."""
    return "\n".join(table_lines(verification, colour=False, glyphs=glyphs, width=width))


_CSV_COLUMNS = [
    ("board", "board"), ("ref", "ref"), ("name", "name"), ("status", "status"), ("row", "row"),
    ("temperature_c", "temperature [degC]"), ("zs_measured", "zs measured [ohm]"),
    ("zs_derived", "zs from Ze + R1+R2"), ("zs_limit", "zs limit [ohm]"), ("zs_max", "zs max design [ohm]"),
    ("zs_at_design", "zs at design temperature [ohm]"), ("margin_measured", "measured margin"),
    ("r1r2_measured", "r1r2 measured [ohm]"), ("r1r2_expected", "r1r2 expected [ohm]"),
    ("ratio", "r1r2 ratio"), ("ze_measured", "ze measured [ohm]"), ("ze_design", "ze design [ohm]"),
    ("r1", "r1 [ohm]"), ("rn", "rn [ohm]"), ("r2", "r2 [ohm]"), ("r1_expected", "r1 expected [ohm]"),
    ("r2_expected", "r2 expected [ohm]"), ("ring_ratio", "r2/r1"), ("ring_ratio_expected", "r2/r1 expected"),
    ("rcd_ms", "rcd [ms]"), ("rcd_limit_ms", "rcd limit [ms]"), ("messages", "messages"),
]


def to_csv(verification: Verification) -> str:
    """The verification sheet as CSV: one row per circuit, then the tally and the caution.

    Numbers are plain (units in the headers), empty where not measured;
    text that a spreadsheet would run as a formula is neutralised.  The text
    starts with a UTF-8 byte-order mark so spreadsheet programs read it as
    UTF-8.
    """
    from .schedule import csv_text   # the one CSV-injection guard of the package

    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow([h for _, h in _CSV_COLUMNS])
    for cv in verification.circuits:
        rec = _record(cv)
        row = []
        for k, _ in _CSV_COLUMNS:
            x = rec.get(k)
            if k == "messages":
                row.append(csv_text("; ".join(x)))
            elif isinstance(x, bool):
                row.append("yes" if x else "")
            elif x is None:
                row.append("")
            elif isinstance(x, str):
                row.append(csv_text(x))
            else:
                row.append(str(x))
        w.writerow(row)
    w.writerow([])
    s = verification.summary()
    w.writerow([csv_text(f"{len(verification.circuits)} circuits: " +
                          ", ".join(f"{s[k]} {k}" for k in STATUSES))])
    for warn in verification.warnings:
        w.writerow([csv_text(warn)])
    w.writerow([f"Caution: {CAUTION}"])
    return "\ufeff" + buf.getvalue()


def measured_margins(verification: Verification) -> dict[tuple[str, str], float]:
    """Margin of every circuit from its measured Zs, for ``render(..., measured=...)``.

    .. math:: m = 1 - Z_{s,d} / Z_{s,max}

    with :math:`Z_{s,d}` the measured Zs scaled to the design temperature
    (module docstring).  NaN where Zs was not measured (drawn as "not
    measured").
    """
    return {cv.key: float(cv.margin_measured) for cv in verification.circuits}


def verify_files(plan_path, results_path, **kwargs) -> Verification:
    """Load the plan, check it, read the results file and :func:`verify`."""
    from .check import check
    from .loader import load_plan

    results = check(load_plan(plan_path))
    readings = read_results(results_path)
    return verify(results, readings, **kwargs)


def main(plan_path, results_path, *, json_out: bool = False, out=None, ratio_band=RATIO_BAND,
         stream=None) -> int:
    """Verify a results file against a plan and print the outcome.

    Parameters
    ----------
    plan_path, results_path : path
        The plan file and the results file (CSV).
    json_out : bool
        Print :func:`to_dict` as JSON instead of the table.
    out : path, optional
        Also write the verification sheet (:func:`to_csv`) there, atomically;
        the plan and results files are never overwritten.
    ratio_band : (float, float)
        See :func:`verify`.
    stream : text stream, optional
        Where to print (default standard output).

    Returns
    -------
    int
        1 when any circuit fails, else 0.

    Raises
    ------
    zsplan.errors.PlanError
        For unusable input (the command line turns it into exit code 2).
    """
    import sys

    from .outputs import check_output_path, write_atomic

    stream = stream or sys.stdout
    inputs = [os.fspath(plan_path), os.fspath(results_path)]
    if out is not None:
        check_output_path(out, inputs)          # refuse a bad output before any work
    v = verify_files(plan_path, results_path, ratio_band=ratio_band)
    if out is not None:
        write_atomic(out, to_csv(v), inputs=inputs + _floorplan(v))
    if json_out:
        print(to_json(v), file=stream)
    else:
        print(format_table(v), file=stream)
    return 1 if v.any_fail else 0


def _floorplan(v: Verification) -> list[str]:
    fp = v.plan.drawing.floorplan
    return [fp] if fp else []

"""Join the steps: plan -> lengths -> engine arrays -> other checks -> results.

:func:`check` is the one call the command line, the renderers and the QGIS
plugin use.  It does no physics of its own: it gathers each circuit's data
into arrays, calls :func:`zsplan.loop.evaluate` once for all circuits, once
for all their points and once for all sub-mains, then the other steps
(:mod:`zsplan.vdrop`, :mod:`zsplan.adiabatic`, :mod:`zsplan.rcd`,
:mod:`zsplan.grouping`, :mod:`zsplan.capacity`), and turns the numbers into
verdicts.

A point on a ring at fraction x of the ring's length sees the two arms in
parallel, :math:`R_x = R_{ring}\\,x(1-x)`, which is the ring formula's
:math:`R_{ring}/4` at x = ½; the engine's ring branch (L/4) is reused with an
effective length :math:`4x(1-x)L`.

Checks per circuit (the ``checks`` map of the results):

``disconnection``
    Zs ≤ Zs,max of the overcurrent device (BS 7671 Regulation 411.4.4), or,
    where an RCD provides fault protection (:func:`zsplan.rcd.gives_fault_protection`),
    Zs ≤ 50 V / IΔn (Table 41.5) and the RCD's time at the fault current
    within the required time.  ``disconnection_by`` names the device.
``vdrop``
    drop from the origin (sub-mains included) ≤ the limit (:mod:`zsplan.vdrop`).
``adiabatic``
    cpc csa ≥ √(I²t)/k at the fault current and the deciding device's time
    (:mod:`zsplan.adiabatic`).
``capacity``
    Ib ≤ In and Iz ≥ In/c_f, or Iz ≥ 20 A for a ring (:mod:`zsplan.capacity`),
    with Cg from the routes (:mod:`zsplan.grouping`); absent where zsplan has
    no current rating table for the cable (a message says so).
``rcd``
    where an RCD provides fault protection: R·IΔn ≤ 50 V, R = RA in TT
    (Regulation 411.5.3), R = Zs otherwise (Regulation 411.4.5).

A circuit with no design current (``load``) is checked at Ib = In
(conservative), and a message says so.

Sub-mains (boards with ``fed_from``) are checked as distribution circuits
(5 s TN, 1 s TT) with their own device, or in TT with an RCD ahead of them
(time-delayed by default) by that RCD; the Zs at a sub-main's far end is the
sub-board's Ze (:func:`zsplan.boards.board_ze`), and the voltage drop at each
board (percent) is added to the drop of every circuit it feeds.  Circuits fed
through a failing sub-main are told so in their messages.
"""
from __future__ import annotations

import os
from typing import Union

import numpy as np

from . import adiabatic, capacity, grouping, rcd, vdrop
from ._runtime import gc_paused
from .boards import board_levels, board_ze
from .disconnection import required_time
from .guards import plan_warnings
from .geometry import DEFAULT_TOLERANCE_M, circuit_lengths
from .loop import evaluate, margin as loop_margin, test_zs_limit
from .model import Plan
from .protection import CurveSet
from .results import Results, safe_round

__all__ = ["check", "circuit_inputs", "submain_results"]

_NAN = float("nan")


def circuit_inputs(plan: Plan) -> dict[str, np.ndarray]:
    """Per-circuit engine inputs (everything but the lengths) as arrays."""
    cs = plan.circuits
    ze_at = board_ze(plan)
    s = plan.supply
    n = len(cs)
    rating = np.array([c.device.rating_a for c in cs], dtype=float)
    use = np.array([c.use for c in cs], dtype=object)
    return {
        "board_ze_ohm": np.array([ze_at[c.board] for c in cs], dtype=float),
        "line_mm2": np.array([c.cable.line_mm2 for c in cs], dtype=float),
        "cpc_mm2": np.array([c.cable.cpc_mm2 for c in cs], dtype=float),
        "material": np.array([c.cable.material for c in cs]),
        "temp_rating_c": np.array([c.cable.temp_rating_c for c in cs], dtype=float),
        "cpc_with_line": np.array([c.cable.cpc_with_line for c in cs], dtype=bool),
        "ring": np.array([c.topology == "ring" for c in cs], dtype=bool),
        "test_temperature_c": np.array([c.test_temperature_c for c in cs], dtype=float),
        "t_required_s": np.asarray(required_time(np.full(n, s.u0_v), np.full(n, s.earthing), use, rating),
                                   dtype=float).reshape(n),
        # for the other checks
        "rating_a": rating,
        "use": use,
        "family": np.array([c.device.family for c in cs], dtype=object),
        "load_a": np.array([_NAN if c.load_a is None else c.load_a for c in cs], dtype=float),
        "rcd_a": np.array([_NAN if c.rcd_a is None else c.rcd_a for c in cs], dtype=float),
        "rcd_flag": np.array([c.rcd_fault_protection for c in cs], dtype=object),
        "rcd_kind": np.array([c.rcd_kind for c in cs]),
        "insulation": np.array([c.cable.insulation for c in cs]),
        "construction": np.array([c.cable.construction for c in cs]),
        "method": np.array([str(c.method) for c in cs]),
        "phases": np.array([c.phases for c in cs], dtype=int),
        "ambient_c": np.array([c.ambient_c for c in cs], dtype=float),
        "insulation_m": np.array([c.insulation_m for c in cs], dtype=float),
    }


def check(plan: Union[Plan, str, os.PathLike], *, tolerance_m: float = DEFAULT_TOLERANCE_M) -> Results:
    """Check every circuit (and sub-main) of a plan.

    Parameters
    ----------
    plan : Plan or path
        A loaded plan, or the path of a plan file.
    tolerance_m : float
        Drawing tolerance for routes and outlets. [m]

    Returns
    -------
    Results

    Raises
    ------
    zsplan.errors.PlanError
        For unusable input, naming file and place.
    """
    if not isinstance(plan, Plan):
        from .loader import load_plan
        plan = load_plan(plan)
    # arrays, geometries and records by the hundred thousand, no reference
    # cycles: collections started by those allocations would walk the whole
    # plan model each time (the time of a check then grows faster than the plan)
    with gc_paused():
        return _check(plan, tolerance_m)


def _check(plan: Plan, tolerance_m: float) -> Results:
    lengths = circuit_lengths(plan, tolerance_m=tolerance_m)
    n = len(plan.circuits)
    subs = submain_results(plan)

    if n == 0:
        empty = {k: np.zeros(0) for k in ("length_m", "zs_ohm", "margin")}
        return Results(plan, [], {**empty, "status": np.zeros(0, dtype="<U5")},
                       {**empty, "circuit": np.zeros(0, int), "name": np.zeros(0, dtype=object)}, [], [],
                       submains=subs, warnings=plan_warnings(plan, []))

    inp = circuit_inputs(plan)
    curves, idx = CurveSet.from_devices(c.device for c in plan.circuits)
    common = dict(
        curves=curves, u0_v=plan.supply.u0_v, cmin=plan.supply.cmin,
        alpha=plan.settings.alpha, test_limit=plan.settings.test_limit)
    keys = ("line_mm2", "cpc_mm2", "material", "temp_rating_c", "cpc_with_line", "ring",
            "test_temperature_c", "t_required_s")

    length = np.array([L.worst_m for L in lengths], dtype=float)
    circ = evaluate(length_m=length, ze_ohm=inp["board_ze_ohm"], curve_index=idx,
                    **{k: inp[k] for k in keys}, **common)
    circ = dict(circ, length_m=length, board_ze_ohm=inp["board_ze_ohm"])

    # every point of every circuit, in one call
    owner = np.array([i for i, L in enumerate(lengths) for _ in L.points], dtype=np.intp)
    names = np.array([p.name for L in lengths for p in L.points], dtype=object)
    p_len = np.array([p.cable_m for L in lengths for p in L.points], dtype=float)
    frac = np.array([np.nan if p.ring_fraction is None else p.ring_fraction
                     for L in lengths for p in L.points], dtype=float)
    ring_pt = inp["ring"][owner]
    eff = np.where(ring_pt, 4.0 * np.nan_to_num(frac) * (1 - np.nan_to_num(frac)) * length[owner], p_len)
    pts = evaluate(length_m=eff, ze_ohm=inp["board_ze_ohm"][owner], curve_index=idx[owner],
                   **{k: inp[k][owner] for k in keys}, **common)
    pts = dict(pts, circuit=owner, name=names, length_m=p_len)

    # the first len(outlets) points of a circuit are its outlets, in order along the route
    is_outlet = np.array([k < len(c.outlets) for L, c in zip(lengths, plan.circuits)
                          for k in range(len(L.points))], dtype=bool)
    _rcd_step(plan, inp, circ, pts)
    _vdrop_step(plan, inp, circ, owner[is_outlet], p_len[is_outlet], frac[is_outlet],
                subs["board_vdrop_pct"])
    _adiabatic_step(inp, circ)
    circ["curve_end_a"] = _curve_end(curves, idx)
    _capacity_step(plan, inp, circ)

    status, checks, messages = _verdicts(plan, circ, inp)
    _note_failing_feeds(plan, subs, messages)
    circ["status"] = status
    return Results(plan, lengths, circ, pts, checks, messages, submains=subs,
                   warnings=plan_warnings(plan, lengths))


# -- the steps on circuits ----------------------------------------------------

def _design_current(load_a, rating_a):
    """Ib: the given load, else In (conservative)."""
    return np.where(np.isfinite(load_a), load_a, rating_a)


def _rcd_step(plan: Plan, inp: dict, circ: dict, pts: dict | None = None) -> None:
    """Where an RCD provides fault protection, it decides the disconnection check.

    ``inp`` needs ``rcd_a``, ``rcd_flag``, ``rcd_kind`` and ``board_ze_ohm``;
    ``circ`` (and ``pts``, the points, when given) are updated in place.
    """
    idn = inp["rcd_a"]
    kind = inp["rcd_kind"]
    by_rcd = rcd.gives_fault_protection(plan.supply.earthing, idn, inp["rcd_flag"])
    circ["by_rcd"] = by_rcd
    circ["disconnection_by"] = np.where(by_rcd, "rcd", "device").astype(object)
    circ["device_zs_max_ohm"] = circ["zs_max_ohm"].copy()
    n = len(idn)
    if plan.supply.earthing == "TT":
        # RA: the electrode; where none is given, the board's Ze bounds it from above
        ra = plan.supply.electrode_ohm
        ra_used = np.full(n, float(ra)) if ra is not None else inp["board_ze_ohm"]
    else:
        ra_used = circ["zs_ohm"]                 # Regulation 411.4.5: Zs x IΔn <= 50 V
    circ["rcd_r_ohm"] = np.where(by_rcd, ra_used, np.nan)
    circ["rcd_touch_v"] = np.where(by_rcd, rcd.touch_voltage(np.where(by_rcd, ra_used, 0.0),
                                                             np.nan_to_num(idn)), np.nan)
    if not np.any(by_rcd):
        return
    safe_idn = np.where(by_rcd, idn, 1.0)
    _rcd_override(plan, circ, by_rcd, safe_idn, kind, circ["zs_ohm"], inp["board_ze_ohm"],
                  circ["r1r2_ohm"], circ["r1r2_test_ohm"])
    if pts is not None:
        owner = pts["circuit"]
        _rcd_override(plan, pts, by_rcd[owner], safe_idn[owner], kind[owner], pts["zs_ohm"],
                      inp["board_ze_ohm"][owner], pts["r1r2_ohm"], pts["r1r2_test_ohm"])


def _rcd_override(plan, a: dict, sel, idn, kind, zs, ze, rr, rr_test) -> None:
    zs_max = rcd.max_resistance(idn)
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = np.where(rr > 0, rr_test / rr, 1.0)
    zs_test = test_zs_limit(zs_max, ze, ratio, plan.settings.test_limit)
    t = rcd.operating_time(a["fault_current_a"], idn, kind)
    ia = rcd.current_for_time(idn, a["disconnect_limit_s"], kind)
    for key, value in (("zs_max_ohm", zs_max), ("zs_test_max_ohm", zs_test), ("disconnect_s", t),
                       ("ia_a", ia), ("margin", loop_margin(zs, zs_max))):
        a[key] = np.where(sel, value, a[key])


def _vdrop_step(plan: Plan, inp: dict, circ: dict, o_owner, o_len, o_frac, board_vd: dict) -> None:
    n = len(plan.circuits)
    s = plan.settings
    model = s.vdrop_load
    ib = _design_current(inp["load_a"], inp["rating_a"])
    z = vdrop.mv_per_a_m(inp["line_mm2"], inp["material"], circ["line_c"], inp["phases"],
                         inp["construction"], s.alpha)
    mean = vdrop.radial_outlet_mean(o_owner, o_len, n)
    rf = vdrop.ring_outlet_factor(o_owner, o_frac, n)
    l_eff = vdrop.effective_length(circ["length_m"], inp["ring"], model, mean, rf)
    vd = vdrop.voltage_drop(ib, z, l_eff)
    up = np.array([board_vd.get(c.board, 0.0) for c in plan.circuits], dtype=float)
    circ["ib_a"] = ib
    circ["vdrop_mv_per_a_m"] = np.broadcast_to(z, (n,)).astype(float)
    circ["vdrop_v"] = np.asarray(vd, dtype=float).reshape(n)
    circ["board_vdrop_pct"] = up
    circ["vdrop_pct"] = up + np.asarray(vdrop.percent(vd, plan.supply.u0_v, inp["phases"])).reshape(n)
    circ["vdrop_limit_pct"] = np.asarray(
        vdrop.limit_pct(inp["use"].astype(str), s.vdrop_lighting_pct, s.vdrop_other_pct), dtype=float).reshape(n)


def _curve_end(curves: CurveSet, idx) -> np.ndarray:
    """Current of each device's last tabulated point (beyond it only a time bound is known). [A]"""
    idx = np.asarray(idx, dtype=np.intp)
    return curves.cur[idx, curves.npts[idx] - 1]


def _adiabatic_step(inp: dict, circ: dict) -> None:
    k = adiabatic.k_for_cpc(inp["material"], inp["insulation"], inp["temp_rating_c"],
                            inp["cpc_with_line"], inp["cpc_mm2"])
    i2t = adiabatic.let_through(circ["fault_current_a"], circ["disconnect_s"])
    circ["k"] = np.asarray(k, dtype=float)
    circ["i2t_a2s"] = np.asarray(i2t, dtype=float)
    circ["cpc_min_mm2"] = np.asarray(adiabatic.min_csa(i2t, k), dtype=float)


def _capacity_step(plan: Plan, inp: dict, circ: dict) -> None:
    s = plan.settings
    lines = grouping.route_lines([c.route for c in plan.circuits])
    level = np.array([c.run for c in plan.circuits], dtype=object)
    runs = grouping.shared_runs(lines, s.group_distance_m, s.group_min_length_m, level)
    groups = grouping.run_groups(lines, runs, s.group_distance_m)
    size = grouping.group_sizes(lines, s.group_distance_m, s.group_min_length_m, level, groups=groups)
    it = capacity.tabulated_current(inp["line_mm2"], inp["method"], inp["construction"], inp["phases"],
                                    inp["insulation"], inp["material"])
    ca = capacity.ambient_factor(inp["ambient_c"], inp["insulation"])
    ci = capacity.insulation_factor(inp["insulation_m"])
    # a circuit with a given load of no more than 30 % of its grouped rating is
    # left out of the others' groups (one pass, judged at the full group's Cg)
    grouped_iz = capacity.current_capacity(it, ca, capacity.grouping_factor(size, s.grouping_arrangement), ci)
    light = np.isfinite(inp["load_a"]) & (size > 1) & (inp["load_a"] <= capacity.LIGHT_LOAD_FRACTION * grouped_iz)
    if np.any(light):
        size = grouping.group_sizes(lines, s.group_distance_m, s.group_min_length_m, level,
                                    groups=groups, counted=~light)
    cg = capacity.grouping_factor(size, s.grouping_arrangement)
    circ["lightly_loaded"] = light
    circ["group_size"] = size
    circ["grouped_with"] = _partners(len(plan.circuits), runs)
    circ["it_a"], circ["ca"], circ["cg"], circ["ci"] = it, ca, cg, ci
    circ["iz_a"] = capacity.current_capacity(it, ca, cg, ci)
    circ["iz_required_a"] = capacity.required_iz(inp["rating_a"], inp["family"].astype(str), inp["ring"])


def _partners(n: int, runs) -> np.ndarray:
    """Per circuit, the indices of the circuits its route runs alongside (a list)."""
    out = np.empty(n, dtype=object)
    out[:] = [[] for _ in range(n)]
    if runs.a.size:
        key = np.unique(runs.a.astype(np.int64) * (n + 1) + runs.b)
        a, b = key // (n + 1), key % (n + 1)
        heads = np.flatnonzero(np.r_[True, a[1:] != a[:-1]])
        for i, others in zip(a[heads].tolist(), np.split(b, heads[1:])):
            out[i] = others.tolist()
    return out


# -- sub-mains ----------------------------------------------------------------

def submain_results(plan: Plan) -> dict:
    """Check every sub-main as a distribution circuit.

    Returns
    -------
    dict
        ``boards`` (refs of the sub-boards, by level from the origin),
        per-sub-main arrays (the engine's fields plus ``vdrop_pct`` — the
        cumulative drop at the sub-board —, ``cpc_min_mm2``, ``iz_a``,
        ``status``), ``checks`` and ``messages`` lists, and
        ``board_vdrop_pct``: the cumulative drop at every board (0 at the
        origin's boards).
    """
    levels = board_levels(plan)
    refs = [r for level in levels[1:] for r in level]
    board_vd = {r: 0.0 for r in (levels[0] if levels else [])}
    out: dict = {"boards": refs, "checks": [], "messages": [], "board_vdrop_pct": board_vd}
    if not refs:
        out["status"] = np.zeros(0, dtype="<U5")
        return out
    s = plan.supply
    ze_at = board_ze(plan)
    feeds = [plan.board(r).fed_from for r in refs]
    m = len(refs)
    rating = np.array([f.device.rating_a for f in feeds], dtype=float)
    cab = [f.cable for f in feeds]
    curves, idx = CurveSet.from_devices(f.device for f in feeds)
    up = np.array([ze_at[f.board] for f in feeds], dtype=float)
    t_req = np.asarray(required_time(np.full(m, s.u0_v), np.full(m, s.earthing), np.full(m, "distribution"),
                                     rating), dtype=float).reshape(m)
    material = np.array([c.material for c in cab])
    a = evaluate(length_m=np.array([f.length_m for f in feeds], dtype=float),
                 line_mm2=np.array([c.line_mm2 for c in cab], dtype=float),
                 cpc_mm2=np.array([c.cpc_mm2 for c in cab], dtype=float),
                 ze_ohm=up, curves=curves, curve_index=idx, t_required_s=t_req, material=material,
                 temp_rating_c=np.array([c.temp_rating_c for c in cab], dtype=float),
                 cpc_with_line=np.array([c.cpc_with_line for c in cab], dtype=bool),
                 u0_v=s.u0_v, cmin=s.cmin, alpha=plan.settings.alpha,
                 test_limit=plan.settings.test_limit)
    a = {k: np.asarray(v, dtype=float).copy() for k, v in a.items()}
    sub_inp = {"rcd_a": np.array([_NAN if f.rcd_a is None else f.rcd_a for f in feeds], dtype=float),
               "rcd_flag": np.full(m, None, dtype=object),
               "rcd_kind": np.array([f.rcd_kind for f in feeds]),
               "board_ze_ohm": up}
    _rcd_step(plan, sub_inp, a)
    a["rcd_a"] = sub_inp["rcd_a"]
    a["length_m"] = np.array([f.length_m for f in feeds], dtype=float)
    a["board_ze_ohm"] = up
    a["sub_ze_ohm"] = np.array([ze_at[r] for r in refs], dtype=float)
    load = np.array([_NAN if f.load_a is None else f.load_a for f in feeds], dtype=float)
    phases = np.array([f.phases for f in feeds], dtype=int)
    construction = np.array([c.construction for c in cab])
    insulation = np.array([c.insulation for c in cab])
    ib = _design_current(load, rating)
    z = vdrop.mv_per_a_m(np.array([c.line_mm2 for c in cab], dtype=float), material,
                         a["line_c"], phases, construction, plan.settings.alpha)
    own = np.asarray(vdrop.percent(vdrop.voltage_drop(ib, z, a["length_m"]), s.u0_v, phases)).reshape(m)
    for r, f, d in zip(refs, feeds, own.tolist()):      # refs are in level order
        board_vd[r] = board_vd.get(f.board, 0.0) + d
    a["ib_a"] = ib
    a["own_vdrop_pct"] = own
    a["vdrop_pct"] = np.array([board_vd[r] for r in refs], dtype=float)
    a["vdrop_limit_pct"] = np.full(m, plan.settings.vdrop_other_pct)
    k = adiabatic.k_for_cpc(material, insulation, [c.temp_rating_c for c in cab],
                            [c.cpc_with_line for c in cab], [c.cpc_mm2 for c in cab])
    i2t = adiabatic.let_through(a["fault_current_a"], a["disconnect_s"])
    a["k"], a["i2t_a2s"] = np.asarray(k, float), np.asarray(i2t, float)
    a["cpc_min_mm2"] = np.asarray(adiabatic.min_csa(i2t, k), float)
    a["cpc_mm2"] = np.array([c.cpc_mm2 for c in cab], dtype=float)
    it = capacity.tabulated_current([c.line_mm2 for c in cab], [str(f.method) for f in feeds], construction,
                                    phases, insulation, material)
    ca = capacity.ambient_factor([f.ambient_c for f in feeds], insulation)
    a["it_a"], a["ca"] = it, ca
    a["iz_a"] = capacity.current_capacity(it, ca)
    a["iz_required_a"] = capacity.required_iz(rating, np.array([f.device.family for f in feeds]))
    a["curve_end_a"] = _curve_end(curves, idx)
    a["rating_a"] = rating
    a["load_a"] = load
    status, checks, messages = [], [], []
    for i, r in enumerate(refs):
        by_rcd = bool(a["by_rcd"][i])
        ch, msgs = _circuit_checks(a, i, plan, has_load=bool(np.isfinite(load[i])), by_rcd=by_rcd,
                                   what="sub-main", idn=float(a["rcd_a"][i]))
        if by_rcd:
            _rcd_check(plan, a, i, ch, msgs)
        checks.append(ch)
        messages.append(msgs)
        status.append(_status(ch, a["margin"][i], plan.settings.tight))
    out.update(a)
    out["status"] = np.array(status, dtype="<U5")
    out["checks"], out["messages"] = checks, messages
    out["devices"] = [f.device.label for f in feeds]
    out["cables"] = [c.label for c in cab]
    out["fed_from"] = [f.board for f in feeds]
    return out


# -- verdicts -----------------------------------------------------------------

def _note_failing_feeds(plan: Plan, subs: dict, messages: list) -> None:
    """Tell each circuit whose board is fed, directly or further up, by a failing sub-main."""
    failing = {b for b, st in zip(subs.get("boards", []), subs.get("status", [])) if st == "fail"}
    if not failing:
        return
    feed = {b.ref: (b.fed_from.board if b.fed_from else None) for b in plan.boards}
    for i, c in enumerate(plan.circuits):
        node, bad = c.board, []
        while node is not None:
            if node in failing:
                bad.append(node)
            node = feed.get(node)
        if bad:
            messages[i].append("the sub-main feeding board " + ", ".join(repr(b) for b in bad)
                               + " fails its checks (see submains)")


def _status(ch: dict, margin: float, tight: float) -> str:
    if any(v == "fail" for v in ch.values()):
        return "fail"
    return "tight" if margin < tight else "pass"


def _circuit_checks(a: dict, i: int, plan: Plan, *, has_load: bool, by_rcd: bool,
                    what: str = "circuit", idn: float = _NAN, use: str = "") -> tuple[dict, list]:
    """The checks map and messages of item i, from unrounded numbers."""
    ch: dict[str, str] = {}
    msgs: list[str] = []
    zs, zs_max = a["zs_ohm"][i], a["zs_max_ohm"][i]
    t, t_lim = a["disconnect_s"][i], a["disconnect_limit_s"][i]
    r = lambda name, v, d=None: safe_round(name, float(v), d)  # noqa: E731
    # disconnection
    if by_rcd:
        ok = bool(np.isfinite(zs) and zs <= zs_max and t <= t_lim)
        ch["disconnection"] = "pass" if ok else "fail"
        label = f"{idn * 1000:g} mA RCD"
        if not ok:
            if not zs <= zs_max:
                msgs.append(f"Zs {r('zs_ohm', zs, 3)} ohm exceeds 50 V / IΔn = {r('zs_max_ohm', zs_max, 1)} ohm "
                            f"for the {label} (BS 7671 Table 41.5)")
            else:
                msgs.append(f"the {label} is not shown to operate within {t_lim:g} s at "
                            f"{r('fault_current_a', a['fault_current_a'][i], 3)} A")
        dev_max = a["device_zs_max_ohm"][i]
        if not dev_max > 0:
            msgs.append(f"fault protection by the {label}: the overcurrent device alone is not shown "
                        f"to operate within {t_lim:g} s")
        elif np.isfinite(zs) and not zs <= dev_max:
            msgs.append(f"fault protection by the {label}: the overcurrent device alone would need "
                        f"Zs <= {r('zs_max_ohm', dev_max, 3)} ohm")
    else:
        ok = bool(np.isfinite(zs) and np.isfinite(zs_max) and zs <= zs_max and zs_max > 0)
        ch["disconnection"] = "pass" if ok else "fail"
        if not ok:
            if zs_max <= 0:
                msgs.append(f"the device's data do not show operation within {t_lim:g} s at any current")
            else:
                msgs.append(f"Zs {r('zs_ohm', zs, 3)} ohm exceeds the {t_lim:g} s limit "
                            f"{r('zs_max_ohm', zs_max, 3)} ohm: fault current "
                            f"{r('fault_current_a', a['fault_current_a'][i], 0):g} A is below Ia {a['ia_a'][i]:g} A")
    if not has_load:
        msgs.append(f"no design current given: voltage drop and current rating checked at "
                    f"Ib = In = {a['rating_a'][i]:g} A")
    # voltage drop
    vd, vlim = a["vdrop_pct"][i], a["vdrop_limit_pct"][i]
    ch["vdrop"] = "pass" if vd <= vlim else "fail"
    if vd > vlim:
        kind = "lighting" if use == "lighting" else "other uses"
        msgs.append(f"voltage drop {r('vdrop_pct', vd)} % from the origin exceeds the {vlim:g} % "
                    f"limit for {kind}" if what == "circuit" else
                    f"voltage drop {r('vdrop_pct', vd)} % at the sub-board already exceeds {vlim:g} %")
    # adiabatic
    smin, cpc = a["cpc_min_mm2"][i], a["cpc_mm2"][i]
    ch["adiabatic"] = "pass" if smin <= cpc else "fail"
    if not smin <= cpc:
        if not np.isfinite(smin):
            msgs.append("cpc adiabatic check: the device is not shown to clear the earth fault current, "
                        "so the fault energy is unbounded")
        else:
            msgs.append(f"cpc {cpc:g} mm² is below the adiabatic minimum {r('cpc_min_mm2', smin)} mm² "
                        f"(I²t = {r('i2t_a2s', a['i2t_a2s'][i], 0):g} A²s, k = {r('k', a['k'][i], 1):g})")
            end = a.get("curve_end_a")
            if not by_rcd and end is not None and a["fault_current_a"][i] >= end[i]:
                msgs.append(f"the device data end at {end[i]:g} A ({t:g} s): at the fault current the "
                            f"device operates within {t:g} s at most, so If² x {t:g} s overstates the "
                            f"fault energy; the device's published let-through I²t would refine this")
    # capacity
    it = a["it_a"][i]
    if np.isfinite(it):
        ib, In, iz, need = a["ib_a"][i], a["rating_a"][i], a["iz_a"][i], a["iz_required_a"][i]
        ok = bool(ib <= In and iz >= need)
        ch["capacity"] = "pass" if ok else "fail"
        if ib > In:
            msgs.append(f"design current Ib {ib:g} A exceeds the device rating In {In:g} A")
        if not iz >= need:
            msgs.append(f"current rating Iz {r('iz_a', iz, 1)} A is below the {r('iz_required_a', need, 1)} A "
                        f"the device calls for (It {it:g} A x Ca {a['ca'][i]:g} x Cg {a['cg'][i] if 'cg' in a else 1:g}"
                        f" x Ci {a['ci'][i] if 'ci' in a else 1:g})")
    else:
        msgs.append("current rating not assessed: zsplan has no current rating table for this cable "
                    "and installation method")
    return ch, msgs


def _rcd_check(plan: Plan, a: dict, i: int, ch: dict, msgs: list) -> None:
    """The ``rcd`` check: R x IΔn <= 50 V (RA in TT, Regulation 411.5.3; else Zs, 411.4.5)."""
    v, lim = a["rcd_touch_v"][i], rcd.TOUCH_VOLTAGE_V
    ch["rcd"] = "pass" if v <= lim else "fail"
    if not v <= lim:
        what = "RA" if plan.supply.earthing == "TT" else "Zs"
        msgs.append(f"{what} x IΔn = {safe_round('rcd_touch_v', float(v), 1)} V exceeds {lim:g} V "
                    f"(BS 7671 Regulation {'411.5.3' if what == 'RA' else '411.4.5'})")


def _verdicts(plan: Plan, a: dict, inp: dict) -> tuple[np.ndarray, list, list]:
    """Status, checks and messages per circuit from the unrounded numbers."""
    n = len(a["zs_ohm"])
    a = dict(a, cpc_mm2=inp["cpc_mm2"], rating_a=inp["rating_a"])
    checks, messages, status = [], [], []
    for i in range(n):
        by_rcd = bool(a["by_rcd"][i])
        ch, msgs = _circuit_checks(a, i, plan, has_load=bool(np.isfinite(inp["load_a"][i])), by_rcd=by_rcd,
                                   idn=float(inp["rcd_a"][i]), use=str(inp["use"][i]))
        if by_rcd:
            _rcd_check(plan, a, i, ch, msgs)
        g = int(a["group_size"][i])
        partners = a["grouped_with"][i]
        if partners:
            others = ", ".join(repr(plan.circuits[j].ref) for j in partners)
            light = [repr(plan.circuits[j].ref) for j in partners if a["lightly_loaded"][j]]
            note = f" ({', '.join(light)} lightly loaded, not counted)" if light else ""
            msgs.append(f"runs alongside {others}{note}: group of {g} circuit{'s' if g > 1 else ''}, "
                        f"Cg {a['cg'][i]:g} (BS 7671 Table 4C1)")
        if a["lightly_loaded"][i]:
            msgs.append("carries no more than 30 % of its grouped rating: not counted in the other "
                        "circuits' groups")
        if g > 20:
            msgs.append("more than 20 circuits grouped: BS 7671 Table 4C1 ends at 20; the 20-circuit factor is used")
        checks.append(ch)
        messages.append(msgs)
        status.append(_status(ch, a["margin"][i], plan.settings.tight))
    return np.array(status, dtype="<U5"), checks, messages

"""Join the steps: plan -> lengths -> engine arrays -> results.

:func:`check` is the one call the command line, the renderers and the QGIS
plugin use.  It does no physics of its own: it gathers each circuit's data
into arrays, calls :func:`zsplan.loop.evaluate` once for all circuits and
once for all their points, and turns the numbers into verdicts.

A point on a ring at fraction x of the ring's length sees the two arms in
parallel, :math:`R_x = R_{ring}\\,x(1-x)`, which is the ring formula's
:math:`R_{ring}/4` at x = ½; the engine's ring branch (L/4) is reused with an
effective length :math:`4x(1-x)L`.
"""
from __future__ import annotations

import os
from typing import Union

import numpy as np

from .boards import board_ze
from .disconnection import required_time
from .geometry import DEFAULT_TOLERANCE_M, circuit_lengths
from .loop import evaluate
from .model import Plan
from .protection import CurveSet
from .results import Results, safe_round

__all__ = ["check", "circuit_inputs"]


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
    }


def check(plan: Union[Plan, str, os.PathLike], *, tolerance_m: float = DEFAULT_TOLERANCE_M) -> Results:
    """Check every circuit of a plan.

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
    lengths = circuit_lengths(plan, tolerance_m=tolerance_m)
    n = len(plan.circuits)
    inp = circuit_inputs(plan)
    curves, idx = CurveSet.from_devices(c.device for c in plan.circuits) if n else (None, np.zeros(0, int))
    common = dict(
        curves=curves, u0_v=plan.supply.u0_v, cmin=plan.supply.cmin,
        alpha=plan.settings.alpha, test_limit=plan.settings.test_limit)
    keys = ("line_mm2", "cpc_mm2", "material", "temp_rating_c", "cpc_with_line", "ring",
            "test_temperature_c", "t_required_s")

    if n == 0:
        empty = {k: np.zeros(0) for k in ("length_m", "zs_ohm", "margin")}
        return Results(plan, [], {**empty, "status": np.zeros(0, dtype="<U5")},
                       {**empty, "circuit": np.zeros(0, int), "name": np.zeros(0, dtype=object)}, [], [])

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

    status, checks, messages = _verdicts(plan, circ)
    circ["status"] = status
    return Results(plan, lengths, circ, pts, checks, messages)


def _verdicts(plan: Plan, a: dict) -> tuple[np.ndarray, list, list]:
    """Status per circuit from the unrounded numbers."""
    zs, zs_max, m = a["zs_ohm"], a["zs_max_ohm"], a["margin"]
    finite = np.isfinite(zs) & np.isfinite(zs_max)
    disc_ok = finite & (zs <= zs_max) & (zs_max > 0)
    tight = disc_ok & (m < plan.settings.tight)
    status = np.where(~disc_ok, "fail", np.where(tight, "tight", "pass"))
    checks, messages = [], []
    for i in range(len(zs)):
        msgs = []
        if not disc_ok[i]:
            if zs_max[i] <= 0:
                msgs.append(f"the device's data do not show operation within "
                            f"{a['disconnect_limit_s'][i]:g} s at any current")
            else:
                msgs.append(f"Zs {safe_round('zs_ohm', zs[i], 3)} ohm exceeds the "
                            f"{a['disconnect_limit_s'][i]:g} s limit {safe_round('zs_max_ohm', zs_max[i], 3)} ohm: "
                            f"fault current {safe_round('fault_current_a', a['fault_current_a'][i], 0):g} A "
                            f"is below Ia {a['ia_a'][i]:g} A")
        checks.append({"disconnection": "pass" if disc_ok[i] else "fail"})
        messages.append(msgs)
    return status, checks, messages

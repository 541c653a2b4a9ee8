"""Results of a check: per-circuit and per-point arrays, verdicts, JSON.

The engine's numbers stay unrounded in :attr:`Results.circuits` and every
verdict is taken on them.  Rounding happens only for display and JSON, and
always toward the safe side: impedances and times are rounded up, limits,
currents and margins down (:func:`safe_round`), so a printed figure never
makes a failing circuit look like a pass.
"""
from __future__ import annotations

import json
import math
from dataclasses import dataclass, field

import numpy as np

from ._runtime import gc_paused
from .geometry import CircuitLengths
from .model import Plan

__all__ = ["Results", "safe_round", "STATUSES", "ROUND_UP", "ROUND_DOWN"]

STATUSES = ("pass", "tight", "fail")

#: Fields rounded up for display (larger is worse).
ROUND_UP = {"r1r2_ohm", "r1r2_test_ohm", "zs_ohm", "disconnect_s", "vdrop_pct",
            "cpc_min_mm2", "length_m", "ib_a", "iz_required_a", "i2t_a2s", "rcd_touch_v",
            "board_vdrop_pct", "own_vdrop_pct", "vdrop_v"}
#: Fields rounded down for display (smaller is worse).
ROUND_DOWN = {"zs_max_ohm", "zs_test_max_ohm", "fault_current_a", "margin",
              "disconnect_limit_s", "vdrop_limit_pct", "iz_a", "k", "device_zs_max_ohm"}

_DECIMALS = {"length_m": 2, "fault_current_a": 1, "margin": 3, "vdrop_pct": 2,
             "vdrop_limit_pct": 2, "disconnect_s": 3, "disconnect_limit_s": 3,
             "cpc_min_mm2": 2, "ib_a": 2, "iz_a": 2, "iz_required_a": 2, "i2t_a2s": 0,
             "rcd_touch_v": 2, "board_vdrop_pct": 2, "own_vdrop_pct": 2, "vdrop_v": 2, "k": 1}


def safe_round(name: str, value: float, decimals: int | None = None):
    """Round ``value`` of field ``name`` toward the safe side; ``None`` if not finite."""
    if value is None or not math.isfinite(value):
        return None
    d = _DECIMALS.get(name, 4) if decimals is None else decimals
    scale = 10.0 ** d
    x = value * scale
    if not math.isfinite(x):
        return value
    # a nudge of a relative 1e-12 keeps exact decimals (0.4, 1.37) from moving
    # by one unit through binary representation error, and is far too small
    # to hide a real difference; it never carries a value across zero
    eps = min(0.25, 1e-12 * max(1.0, abs(x)))
    if name in ROUND_UP:
        r = math.ceil(x - eps)
        if value > 0 >= r:
            r = math.ceil(x)
        return r / scale
    if name in ROUND_DOWN:
        r = math.floor(x + eps)
        if value < 0 <= r:
            r = math.floor(x)
        return r / scale
    return round(value, d)


@dataclass
class Results:
    """The outcome of :func:`zsplan.check` for one plan.

    Attributes
    ----------
    plan : Plan
    lengths : list of CircuitLengths
        One per circuit, in plan order.
    circuits : dict of numpy.ndarray
        Engine fields per circuit (unrounded), plus ``status`` and ``board_ze_ohm``.
    points : dict of numpy.ndarray
        Engine fields per outlet/point, with ``circuit`` (index into the
        circuit arrays) and ``name``.
    checks : list of dict
        Per circuit: check name -> "pass" | "fail".
    messages : list of list of str
        Per circuit: explanations (why a check failed, warnings).
    submains : dict
        From :func:`zsplan.check.submain_results`: ``boards`` (sub-board
        refs), per-sub-main arrays (``status`` and the engine's fields),
        ``checks``, ``messages``, ``board_vdrop_pct``.
    """

    plan: Plan
    lengths: list[CircuitLengths]
    circuits: dict[str, np.ndarray]
    points: dict[str, np.ndarray]
    checks: list[dict[str, str]]
    messages: list[list[str]]
    warnings: list[str] = field(default_factory=list)
    submains: dict = field(default_factory=dict)

    @property
    def status(self) -> np.ndarray:
        return self.circuits["status"]

    def summary(self) -> dict[str, int]:
        s = self.status
        return {k: int(np.count_nonzero(s == k)) for k in STATUSES}

    @property
    def any_fail(self) -> bool:
        """True where any circuit or any sub-main fails."""
        subs = self.submains.get("status", np.zeros(0))
        return bool(np.any(self.status == "fail") or np.any(subs == "fail"))

    def _points_of(self, i: int) -> np.ndarray:
        """Indices of circuit ``i``'s points (one sort for all circuits, then slices)."""
        cache = self.__dict__.get("_point_slices")
        if cache is None:
            owner = np.asarray(self.points["circuit"], dtype=np.intp)
            order = np.argsort(owner, kind="stable")
            bounds = np.searchsorted(owner[order], np.arange(len(self.plan.circuits) + 1))
            cache = self.__dict__["_point_slices"] = (order, bounds)
        order, bounds = cache
        return order[bounds[i]:bounds[i + 1]]

    def circuit_record(self, i: int) -> dict:
        """The JSON record of circuit ``i`` (contract fields, safely rounded)."""
        c = self.plan.circuits[i]
        a = self.circuits
        rec = {"ref": c.ref, "board": c.board, "status": str(a["status"][i])}
        for name in ("length_m", "r1r2_ohm", "r1r2_test_ohm", "zs_ohm", "zs_max_ohm",
                     "zs_test_max_ohm", "fault_current_a", "disconnect_s",
                     "disconnect_limit_s", "margin", "vdrop_pct", "vdrop_limit_pct"):
            rec[name] = safe_round(name, float(a[name][i])) if name in a else None
        rec["checks"] = dict(self.checks[i])
        rec["messages"] = list(self.messages[i])
        # additions to the version-1 contract (documented in docs/plan-format.md)
        rec["name"] = c.name
        rec["device"] = c.device.label
        rec["cable"] = c.cable.label
        rec["ze_ohm"] = safe_round("zs_ohm", float(a["board_ze_ohm"][i]))
        rec["worst_point"] = self.lengths[i].worst_point
        for name in ("board_vdrop_pct", "ib_a", "cpc_min_mm2", "k", "iz_a", "iz_required_a"):
            rec[name] = safe_round(name, float(a[name][i])) if name in a else None
        if "group_size" in a:
            rec["group_size"] = int(a["group_size"][i])
            rec["cg"] = float(a["cg"][i])
        if "disconnection_by" in a:
            rec["disconnection_by"] = str(a["disconnection_by"][i])
        pts = self.points
        sel = self._points_of(i)
        rec["points"] = [
            {"name": str(pts["name"][k]),
             "length_m": safe_round("length_m", float(pts["length_m"][k])),
             "zs_ohm": safe_round("zs_ohm", float(pts["zs_ohm"][k])),
             "margin": safe_round("margin", float(pts["margin"][k]))}
            for k in sel]
        return rec

    def submain_record(self, i: int) -> dict:
        """The JSON record of sub-main ``i`` (an addition to the version-1 contract)."""
        s = self.submains
        rec = {"board": s["boards"][i], "fed_from": s["fed_from"][i], "status": str(s["status"][i])}
        for name in ("length_m", "r1r2_ohm", "zs_ohm", "zs_max_ohm", "fault_current_a", "disconnect_s",
                     "disconnect_limit_s", "margin", "own_vdrop_pct", "vdrop_pct", "vdrop_limit_pct",
                     "ib_a", "cpc_min_mm2", "iz_a", "iz_required_a"):
            rec[name] = safe_round(name, float(s[name][i]))
        rec["ze_ohm"] = safe_round("zs_ohm", float(s["board_ze_ohm"][i]))
        rec["checks"] = dict(s["checks"][i])
        rec["messages"] = list(s["messages"][i])
        rec["device"] = s["devices"][i]
        rec["cable"] = s["cables"][i]
        if "disconnection_by" in s:
            rec["disconnection_by"] = str(s["disconnection_by"][i])
        return rec

    def to_dict(self) -> dict:
        """The results document of the version-1 contract.

        Addition: ``submains``, one record per board fed by a sub-main (the
        sub-main checked as a distribution circuit), in order from the origin.
        """
        subs = [self.submain_record(i) for i in range(len(self.submains.get("boards", ())))]
        with gc_paused():          # many small records, no reference cycles
            records = [self.circuit_record(i) for i in range(len(self.plan.circuits))]
        return {"zsplan": 1, "plan": self.plan.path,
                "circuits": records,
                "submains": subs,
                "summary": self.summary()}

    def json_pieces(self, batch: int = 500):
        """The results document (:meth:`to_dict`) as JSON text, in pieces.

        The document's keys each start a line and every circuit and sub-main
        record stands on a line of its own (readable, and a line per circuit
        to search or compare); the pieces hold ``batch`` circuits each, so
        neither the text nor all the records are held at once and a plan of
        any size is written in bounded memory.  ``json.loads`` of the joined
        pieces equals :meth:`to_dict`.
        """
        def dumps(value):
            return json.dumps(value, ensure_ascii=False, allow_nan=False)

        def records(make, start, stop):
            with gc_paused():      # many small records, no reference cycles
                return ",\n    ".join(dumps(make(i)) for i in range(start, stop))

        n = len(self.plan.circuits)
        yield f'{{\n  "zsplan": 1,\n  "plan": {dumps(self.plan.path)},\n  "circuits": ['
        for start in range(0, n, batch):
            yield ",\n    " if start else "\n    "
            yield records(self.circuit_record, start, min(n, start + batch))
        k = len(self.submains.get("boards", ()))
        yield ("\n  ]" if n else "]") + ',\n  "submains": ['
        if k:
            yield "\n    " + records(self.submain_record, 0, k) + "\n  "
        yield f'],\n  "summary": {dumps(self.summary())}\n}}'

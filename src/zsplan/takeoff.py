"""Cable take-off: metres of each cable type to order.

Each circuit contributes its ``total_m`` from :mod:`zsplan.geometry` (radial:
to the far end; ring: the whole ring), which already includes the routing
allowance and the fixed extra length.  Each sub-main contributes its typed
length (``Board.fed_from.length_m``), taken as given, to the board that feeds
it.  Lengths are summed per cable type, per board and over the whole plan;
each sum is then rounded up to whole metres for ordering:

.. math::

   M_{order} = \\lceil \\textstyle\\sum_c L_c \\rceil

Rounding is applied to each sum, never to each circuit, so the totals do not
carry one rounding per circuit (the per-board orders may add up to a metre or
so more than the total's order for the same type).

A cable type is (line csa, cpc csa, conductor material, insulation,
maximum operating temperature).

References
----------
.. [1] zsplan plan-file contract, version 1, "Conventions" (cable length).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Iterable

from .geometry import CircuitLengths, circuit_lengths
from .model import Cable, Plan

__all__ = ["TakeoffRow", "Takeoff", "cable_takeoff", "order_metres"]


@dataclass(frozen=True)
class TakeoffRow:
    """Metres of one cable type, for one board or for the whole plan.

    Attributes
    ----------
    board : str or None
        The board whose circuits (and outgoing sub-mains) use this cable;
        ``None`` in the plan's totals.
    cable_label : str
        Human-readable cable type, e.g. ``2.5/1.5 mm² 70°C thermoplastic``.
    line_mm2, cpc_mm2 : float
        Conductor cross-sectional areas. [mm²]
    material : str
        ``copper`` or ``aluminium``.
    insulation : str
        ``thermoplastic`` or ``thermosetting``.
    temp_rating_c : float
        Maximum operating temperature of the insulation. [°C]
    runs : int
        Number of circuits and sub-mains summed in this row.
    metres_exact : float
        Sum of the cable lengths, allowance and extra included. [m]
    metres_order : int
        ``metres_exact`` rounded up to whole metres. [m]
    """

    board: str | None
    cable_label: str
    line_mm2: float
    cpc_mm2: float
    material: str
    insulation: str
    temp_rating_c: float
    runs: int
    metres_exact: float
    metres_order: int


@dataclass(frozen=True)
class Takeoff:
    """The take-off of a plan: rows per board, and totals over all boards."""

    per_board: tuple[TakeoffRow, ...]
    totals: tuple[TakeoffRow, ...]


def order_metres(metres: float) -> int:
    """Round a length up to whole metres for ordering.

    The sum is first rounded to the micrometre so that floating-point noise
    (``12.000000000000002``) does not add a whole metre.

    Examples
    --------
    >>> order_metres(29.9), order_metres(5.0), order_metres(0.2 + 2.2 + 0.6)
    (30, 5, 3)
    """
    return math.ceil(round(metres, 6))


def _key(cable: Cable) -> tuple:
    return (cable.line_mm2, cable.cpc_mm2, cable.material, cable.insulation,
            cable.temp_rating_c)


def _row(board: str | None, cable: Cable, runs: int, metres: float) -> TakeoffRow:
    return TakeoffRow(board, f"{cable.label} {cable.insulation}", cable.line_mm2,
                      cable.cpc_mm2, cable.material, cable.insulation,
                      cable.temp_rating_c, runs, metres, order_metres(metres))


def _sum(items: Iterable[tuple[str, Cable, float]]):
    """{(board, key): [cable, runs, metres]} and {key: [cable, runs, metres]}."""
    per_board: dict[tuple, list] = {}
    totals: dict[tuple, list] = {}
    for board, cable, metres in items:
        for acc, k in ((per_board, (board, _key(cable))), (totals, _key(cable))):
            slot = acc.setdefault(k, [cable, 0, 0.0])
            slot[1] += 1
            slot[2] += metres
    return per_board, totals


def cable_takeoff(plan: Plan, lengths: list[CircuitLengths] | None = None) -> Takeoff:
    """Metres of each cable type per board and in total, rounded up to order.

    .. math::

       M_{exact} = \\sum_{c \\in \\text{type}} L_c, \\qquad
       M_{order} = \\lceil M_{exact} \\rceil

    Parameters
    ----------
    plan : zsplan.model.Plan
    lengths : list of CircuitLengths, optional
        From :func:`zsplan.geometry.circuit_lengths`; computed when omitted.
        Each circuit contributes its ``total_m``. [m]

    Returns
    -------
    Takeoff
        ``per_board`` in the plan's board order (boards named only by a
        sub-main follow), then by cable size; ``totals`` by cable size.

    Raises
    ------
    ValueError
        When ``lengths`` lacks a circuit of the plan.

    References
    ----------
    .. [1] zsplan plan-file contract, version 1, "Conventions".
    """
    if lengths is None:
        lengths = circuit_lengths(plan)
    total_m = {(cl.board, cl.ref): cl.total_m for cl in lengths}
    missing = [c.key for c in plan.circuits if c.key not in total_m]
    if missing:
        raise ValueError(f"no cable length for circuit(s) {missing}")

    items = [(c.board, c.cable, total_m[c.key]) for c in plan.circuits]
    items += [(b.fed_from.board, b.fed_from.cable, b.fed_from.length_m)
              for b in plan.boards if b.fed_from is not None]
    per_board, totals = _sum(items)

    board_order = {b.ref: i for i, b in enumerate(plan.boards)}

    def board_rank(board: str) -> tuple:
        return (board_order.get(board, len(board_order)), board)

    per_rows = tuple(_row(board, *v) for (board, _), v in
                     sorted(per_board.items(), key=lambda kv: (board_rank(kv[0][0]), kv[0][1])))
    total_rows = tuple(_row(None, *v) for _, v in sorted(totals.items()))
    return Takeoff(per_rows, total_rows)

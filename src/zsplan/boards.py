"""External loop impedance at each board, through sub-mains.

A board fed from another board by a sub-main sees

.. math::

    Z_{e,\\text{sub}} = Z_{e,\\text{up}} + (R_1 + R_2)_{\\text{sub-main}}

the earth fault loop impedance at the far end of the sub-main, with the
sub-main's R1+R2 at its design conductor temperature (BS 7671:2018
Regulation 411.4.4 applied to the distribution circuit; the sub-board's
"Ze" is the upstream Zs at that point).  Boards are evaluated level by level
from the origin, each level as one array operation.
"""
from __future__ import annotations

import numpy as np

from .conductors import design_temperatures, resistance_20c, temperature_factor
from .errors import PlanError, Problem
from .loop import r1r2
from .model import Plan

__all__ = ["board_levels", "board_ze", "submain_r1r2"]


def board_levels(plan: Plan) -> list[list[str]]:
    """Boards grouped by depth from the origin (level 0 has no ``fed_from``)."""
    parent = {b.ref: (b.fed_from.board if b.fed_from else None) for b in plan.boards}
    depth: dict[str, int] = {}
    for ref in parent:
        seen, node, d = set(), ref, 0
        while parent.get(node) is not None:
            if node in seen:
                b = plan.board(ref)
                raise PlanError(Problem(b.where.file or plan.path, "boards feed each other in a loop",
                                        b.where.path, b.where.line))
            seen.add(node)
            node = parent[node]
            d += 1
        depth[ref] = d
    levels: list[list[str]] = [[] for _ in range(max(depth.values(), default=-1) + 1)]
    for b in plan.boards:
        levels[depth[b.ref]].append(b.ref)
    return levels


def submain_r1r2(plan: Plan, refs, alpha: str = "bs7671") -> np.ndarray:
    """R1+R2 of the sub-mains feeding ``refs`` at their design temperature. [Ω]"""
    subs = [plan.board(r).fed_from for r in refs]
    mat = np.array([s.cable.material for s in subs])
    line_c, cpc_c = design_temperatures([s.cable.temp_rating_c for s in subs],
                                        [s.cable.cpc_with_line for s in subs])
    return r1r2([s.length_m for s in subs],
                resistance_20c([s.cable.line_mm2 for s in subs], mat),
                resistance_20c([s.cable.cpc_mm2 for s in subs], mat),
                temperature_factor(line_c, mat, alpha), temperature_factor(cpc_c, mat, alpha))


def board_ze(plan: Plan) -> dict[str, float]:
    """Ze at every board: the supply's Ze at the origin, plus sub-mains downstream. [Ω]"""
    levels = board_levels(plan)
    ze = {ref: plan.supply.ze_ohm for ref in (levels[0] if levels else [])}
    for level in levels[1:]:
        up = np.array([ze[plan.board(r).fed_from.board] for r in level])
        values = up + submain_r1r2(plan, level, plan.settings.alpha)
        ze.update(zip(level, values.tolist()))
    return ze

"""Drawn routes to cable lengths.

A circuit's route is a polyline in plan metres (x to the right, y downwards)
starting at its board.  The cable runs horizontally along the route at the
level of the run (``ceiling``, ``floor`` or ``direct``) and drops from that
level to the board and to each outlet.  This module turns every route of a
plan into cable lengths in one pass of array operations (shapely 2 ufuncs and
numpy), so that tens of thousands of circuits are measured at once.

Definitions (the plan-file contract, made precise):

* drop of a point at height :math:`h` above the floor, for a run at
  ceiling height :math:`c`:

  .. math::

     d = \\begin{cases} c - h & \\text{ceiling run} \\\\
                        h     & \\text{floor run} \\\\
                        0     & \\text{direct (the route is the whole path)}
         \\end{cases}

* cable length from the board to point :math:`i` of a route, the points
  ordered by their distance :math:`s_i` along the route:

  .. math::

     L_i = \\Bigl(d_b + s_i + 2\\sum_{j<i} d_j + d_i\\Bigr)(1 + a) + e

  with :math:`d_b` the board drop, :math:`a` the routing allowance
  (fraction) and :math:`e` the fixed extra length.  Every outlet passed on
  the way adds its drop twice: down to the outlet and back up.

* a ring's whole length, its route starting and ending at the board:

  .. math::

     L_{ring} = \\Bigl(2 d_b + S + 2\\sum_j d_j\\Bigr)(1 + a) + e

  with :math:`S` the route's horizontal length.

References
----------
.. [1] zsplan plan-file contract, version 1, "Conventions" (cable length of
   a point).
.. [2] shapely 2 documentation: ``shapely.linestrings`` (``indices``),
   ``shapely.length``, ``shapely.line_locate_point``, ``shapely.distance``.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np
import shapely

from .errors import PlanError, Problem
from .model import Circuit, Plan
from ._runtime import gc_paused

__all__ = [
    "PointLength",
    "CircuitLengths",
    "circuit_lengths",
    "route_lengths",
    "drop_m",
    "DEFAULT_TOLERANCE_M",
]

#: How far (metres) a route may start from its board, a ring may end from
#: it, or an outlet may lie from its route.  A drawing tolerance of about a
#: hand's width.  # common practice (no published source)
DEFAULT_TOLERANCE_M = 0.3


@dataclass(frozen=True)
class PointLength:
    """Cable length from the board to one point of a circuit.

    Attributes
    ----------
    name : str
        The outlet's name (``outlets[k]`` when it has none), or ``"end"`` for
        the end of a radial route where no outlet lies.
    along_m : float
        Horizontal distance along the route from the board. [m]
    cable_m : float
        Cable length from the board to this point, allowance and extra
        included.  For a ring, along the shorter way round. [m]
    drop_m : float
        The point's own drop from the run level. [m]
    ring_fraction : float or None
        Ring circuits only: the point's position round the ring, as the
        fraction (0..1) of the ring's cable length (drops included, before
        allowance and extra) from the route's start.  ``None`` for radials.
    """

    name: str
    along_m: float
    cable_m: float
    drop_m: float
    ring_fraction: float | None = None


@dataclass(frozen=True)
class CircuitLengths:
    """Cable lengths of one circuit.

    Attributes
    ----------
    board, ref : str
        The circuit's key.
    route_m : float
        Horizontal length of the drawn route. [m]
    worst_m : float
        Radial: cable length to the worst point (the longest cable, hence the
        highest Zs).  Ring: the ring's whole cable length (the loop engine
        takes a quarter of the end-to-end R1+R2 for the worst point). [m]
    total_m : float
        Cable to order for this circuit: radial, to the far end; ring, the
        whole ring. [m]
    worst_point : str
        Name of the worst point (ring: the outlet nearest the middle of the
        ring's cable; ``"midpoint"`` for a ring without outlets).
    points : tuple of PointLength
        The outlets in order along the route, then (radial) the route's end
        when no outlet lies there.
    """

    board: str
    ref: str
    route_m: float
    worst_m: float
    total_m: float
    worst_point: str
    points: tuple[PointLength, ...]


def drop_m(run, height_m, ceiling_m):
    """Vertical cable between the horizontal run and a point.

    .. math::

       d = c - h \\;\\text{(ceiling)},\\quad d = h \\;\\text{(floor)},
       \\quad d = 0 \\;\\text{(direct)}

    Parameters
    ----------
    run : str or array_like of str
        ``"ceiling"``, ``"floor"`` or ``"direct"``.
    height_m : float or array_like
        Height of the point above the finished floor. [m]
    ceiling_m : float or array_like
        Height of a ceiling-void run above the finished floor. [m]

    Returns
    -------
    float or numpy.ndarray
        The drop. [m]  Negative where the point lies above the ceiling run
        (or below the floor): the caller reports that as an error.

    References
    ----------
    .. [1] zsplan plan-file contract, version 1, "Conventions".

    Examples
    --------
    >>> round(float(drop_m("ceiling", 1.6, 2.4)), 9)   # hand-worked: 2.4 - 1.6
    0.8
    >>> drop_m(["floor", "direct"], [0.45, 1.1], 2.4).tolist()
    [0.45, 0.0]
    """
    run = np.asarray(run)
    h = np.asarray(height_m, dtype=float)
    c = np.asarray(ceiling_m, dtype=float)
    d = np.select([run == "ceiling", run == "floor"], [c - h, h], 0.0)
    return d if d.ndim else d[()]


def _build_lines(coords: np.ndarray, counts: np.ndarray):
    """All routes as one array of LineStrings, with their lengths.

    Routes with fewer than two points or any non-finite coordinate get no
    line (``None``) and a NaN length; ``ok`` marks the others.
    """
    m = len(counts)
    owner = np.repeat(np.arange(m), counts)
    bad_pt = ~np.isfinite(coords).all(axis=1) if len(coords) else np.zeros(0, bool)
    bad = np.bincount(owner, weights=bad_pt, minlength=m) > 0
    ok = (counts >= 2) & ~bad
    lines = np.full(m, None, dtype=object)
    lengths = np.full(m, np.nan)
    if ok.any():
        keep = ok[owner]
        renumber = np.cumsum(ok) - 1
        lines[ok] = shapely.linestrings(coords[keep], indices=renumber[owner[keep]])
        lengths[ok] = shapely.length(lines[ok])
    return lines, lengths, ok


def route_lengths(routes: Sequence) -> np.ndarray:
    """Horizontal lengths of many polylines at once.

    .. math::

       S = \\sum_k \\lVert p_{k+1} - p_k \\rVert

    Parameters
    ----------
    routes : sequence of array_like, each of shape (n_i, 2)
        Polylines in plan metres.

    Returns
    -------
    numpy.ndarray of shape (len(routes),)
        Lengths [m]; NaN for a route with fewer than two points or a
        non-finite coordinate.

    References
    ----------
    .. [1] shapely 2 documentation, ``shapely.linestrings`` and
       ``shapely.length``.

    Examples
    --------
    >>> route_lengths([[(0, 0), (3, 4)], [(0, 0), (0, 2), (5, 2)]]).tolist()
    [5.0, 7.0]
    """
    arrays = [np.asarray(r, dtype=float).reshape(-1, 2) for r in routes]
    counts = np.array([len(a) for a in arrays], dtype=np.intp)
    coords = np.concatenate(arrays) if arrays else np.zeros((0, 2))
    return _build_lines(coords, counts)[1]




def _drops_either_side(drop: np.ndarray, n_out: np.ndarray, start: np.ndarray):
    """Per outlet, the sum of the drops before it and after it on its route.

    ``drop`` holds the outlets grouped by circuit (``start``, ``n_out``) and
    ordered along each route.  The sums run position by position over all
    circuits at once, each circuit summed on its own, so a circuit's lengths
    do not depend on the rest of the plan even in the last bit.  Returns
    ``(before, after, total per circuit)``.
    """
    before = np.zeros_like(drop)
    after = np.zeros_like(drop)
    fwd = np.zeros(len(n_out))
    bwd = np.zeros(len(n_out))
    by_count = np.argsort(-n_out, kind="stable")
    neg_count = -n_out[by_count]                        # ascending
    for r in range(int(n_out.max(initial=0))):
        c = by_count[:np.searchsorted(neg_count, -r, side="left")]   # n_out > r
        j = start[c] + r
        before[j] = fwd[c]
        fwd[c] += drop[j]
        j = start[c] + n_out[c] - 1 - r
        after[j] = bwd[c]
        bwd[c] += drop[j]
    return before, after, fwd


def _xy(p) -> str:
    return f"[{p[0]:g}, {p[1]:g}]"


def _label(c: Circuit) -> str:
    name = f" ({c.name})" if c.name else ""
    return f"circuit {c.ref!r}{name} on board {c.board!r}"


def circuit_lengths(plan: Plan, *, tolerance_m: float = DEFAULT_TOLERANCE_M
                    ) -> list[CircuitLengths]:
    """Cable lengths of every circuit of a plan.

    Radial: each outlet is placed along the route by projection; the points
    are the outlets in order along the route and the route's end (unless an
    outlet lies within ``tolerance_m`` of the end along the route).  The
    cable to point :math:`i` is

    .. math::

       L_i = \\Bigl(d_b + s_i + 2\\sum_{j<i} d_j + d_i\\Bigr)(1 + a) + e

    and, drops being non-negative, it grows along the route, so the worst
    point is the last one.

    Ring: the route starts and ends at the board.  Its whole length is

    .. math::

       L_{ring} = \\Bigl(2 d_b + S + 2\\sum_j d_j\\Bigr)(1 + a) + e

    Each outlet's cable from the board the shorter way round is
    :math:`\\min(F_i, B_i)(1 + a) + e`, with :math:`F_i` the bracket of
    :math:`L_i` (forward from the route's start) and

    .. math::

       B_i = d_b + (S - s_i) + 2\\sum_{j>i} d_j + d_i

    the same the other way round (:math:`F_i + B_i` is the bracket of
    :math:`L_{ring}`); its ``ring_fraction`` is :math:`F_i / (F_i + B_i)`.

    Parameters
    ----------
    plan : zsplan.model.Plan
        Every circuit must have a route (the loader fills drawn routes in).
    tolerance_m : float, optional
        How far a route may start from its board, a ring may end from it and
        an outlet may lie from its route. [m]  Default 0.3 m.

    Returns
    -------
    list of CircuitLengths
        In ``plan.circuits`` order.

    Raises
    ------
    PlanError
        With every problem found: a missing route or board, a route with
        fewer than two distinct points or a non-finite coordinate, a route
        not starting at its board (the gap in metres), a ring not ending at
        its board, an outlet off its route (its distance), a board or outlet
        above the ceiling run.

    References
    ----------
    .. [1] zsplan plan-file contract, version 1, "Conventions".
    .. [2] shapely 2 documentation, ``shapely.line_locate_point``.
    """
    tol = float(tolerance_m)
    if not np.isfinite(tol) or tol < 0:
        raise ValueError(f"tolerance_m must be a finite length >= 0, got {tolerance_m!r}")
    with gc_paused():
        return _circuit_lengths(plan, tol)


def _circuit_lengths(plan: Plan, tol: float) -> list[CircuitLengths]:
    circuits = plan.circuits
    n = len(circuits)
    if n == 0:
        return []
    boards = {b.ref: b for b in plan.boards}
    problems: list[tuple[int, int, Problem]] = []   # (circuit, order, problem)

    def add(i: int, message: str, suffix: str = "", order: int = 0) -> None:
        w = circuits[i].where
        path = ".".join(p for p in (w.path, suffix) if p)
        problems.append((i, order, Problem(w.file or plan.path, message, path, w.line)))

    # -- gather flat arrays (a light Python loop over the model objects) ---
    pts: list = []
    counts = np.zeros(n, dtype=np.intp)
    board_xy = np.full((n, 2), np.nan)
    board_h = np.zeros(n)
    ceiling = np.empty(n)
    allowance = np.empty(n)
    extra = np.empty(n)
    runs = []
    is_ring = np.zeros(n, dtype=bool)
    out_xy: list = []
    out_h: list = []
    out_owner: list = []
    out_k: list = []
    out_name: list = []
    have_board = np.zeros(n, dtype=bool)
    for i, c in enumerate(circuits):
        b = boards.get(c.board)
        if b is None:
            add(i, f"{_label(c)}: no board {c.board!r} in the plan; "
                   f"expected one of {sorted(boards)}", "board")
        else:
            have_board[i] = True
            board_xy[i] = b.at
            board_h[i] = b.height_m
        if c.route is None:
            add(i, f"{_label(c)} has no route: expected `route` as a list of "
                   f"[x, y] points in metres, or a path drawn on the routes layer",
                "route")
        else:
            pts.extend(c.route)
            counts[i] = len(c.route)
        ceiling[i] = c.ceiling_m
        allowance[i] = c.allowance
        extra[i] = c.extra_m
        runs.append(c.run)
        is_ring[i] = c.topology == "ring"
        for k, o in enumerate(c.outlets):
            out_xy.append(o.at)
            out_h.append(o.height_m)
            out_owner.append(i)
            out_k.append(k)
            out_name.append(o.name or f"outlets[{k}]")
    coords = np.array(pts, dtype=float).reshape(-1, 2)
    runs_a = np.array(runs, dtype=object)
    out_xy = np.array(out_xy, dtype=float).reshape(-1, 2)
    out_h = np.array(out_h, dtype=float)
    out_owner = np.array(out_owner, dtype=np.intp)
    out_k = np.array(out_k, dtype=np.intp)

    # -- all routes at once -------------------------------------------------
    lines, route_m, ok = _build_lines(coords, counts)
    first = np.cumsum(counts) - counts
    last = first + counts - 1
    has_route = counts > 0
    for i in np.flatnonzero(has_route & ~ok):
        if counts[i] < 2:
            add(i, f"{_label(circuits[i])}: the route has {counts[i]} point(s); "
                   f"expected at least 2 distinct [x, y] points", "route")
        else:
            add(i, f"{_label(circuits[i])}: the route has a non-finite coordinate; "
                   f"expected finite [x, y] numbers in metres", "route")
    zero = ok & ~(route_m > 0)
    for i in np.flatnonzero(zero):
        add(i, f"{_label(circuits[i])}: the route has zero length (fewer than 2 "
               f"distinct points); expected a route leaving the board", "route")
    usable = ok & ~zero

    # route start and (ring) end against the board
    safe_first = np.where(has_route, first, 0)
    safe_last = np.where(has_route, last, 0)
    start_gap = np.full(n, np.nan)
    end_gap = np.full(n, np.nan)
    if len(coords):
        start_gap = np.hypot(*(coords[safe_first] - board_xy).T)
        end_gap = np.hypot(*(coords[safe_last] - board_xy).T)
    check = usable & have_board
    for i in np.flatnonzero(check & (start_gap > tol)):
        c = circuits[i]
        add(i, f"{_label(c)}: the route starts {start_gap[i]:.3f} m from board "
               f"{c.board!r} at {_xy(board_xy[i])}; expected it to start at the "
               f"board (within {tol:g} m)", "route", 1)
    for i in np.flatnonzero(check & is_ring & (end_gap > tol)):
        c = circuits[i]
        add(i, f"{_label(c)}: the ring's route ends {end_gap[i]:.3f} m from board "
               f"{c.board!r}; expected a ring to start and end at its board "
               f"(within {tol:g} m)", "route", 2)

    # drops
    board_drop = drop_m(runs_a, board_h, ceiling)

    def off_run(i: int) -> str:
        if circuits[i].run == "ceiling":
            return f"above the ceiling run at {ceiling[i]:g} m"
        return "below the floor"

    for i in np.flatnonzero(have_board & (board_drop < 0)):
        c = circuits[i]
        add(i, f"{_label(c)}: board {c.board!r} at height {board_h[i]:g} m lies "
               f"{off_run(i)}; expected the board between floor and ceiling", "run", 3)
    out_drop = drop_m(runs_a[out_owner], out_h, ceiling[out_owner])

    # -- all outlets at once ------------------------------------------------
    o_use = usable[out_owner]
    along = np.full(len(out_owner), np.nan)
    dist = np.full(len(out_owner), np.nan)
    if o_use.any():
        geoms = lines[out_owner[o_use]]
        opts = shapely.points(out_xy[o_use])
        # segments of near-zero length (1e-300 m) raise floating-point flags
        # inside the projection; the results stay exact, so keep quiet
        with np.errstate(divide="ignore", invalid="ignore"):
            along[o_use] = shapely.line_locate_point(geoms, opts)
            dist[o_use] = shapely.distance(geoms, opts)
        # on a ring, a point projected onto the route's end (back at the
        # board) may land an ulp short of it: snap it to the end, so that the
        # way back round measures the same at any scale
        ring_o = o_use & is_ring[out_owner]
        s_route = route_m[out_owner[ring_o]]
        a = along[ring_o]
        along[ring_o] = np.where(np.abs(s_route - a) <= 1e-12 * s_route, s_route, a)
    for j in np.flatnonzero(o_use & ~(dist <= tol)):
        i, k = out_owner[j], out_k[j]
        add(i, f"{_label(circuits[i])}: outlet {out_name[j]!r} at "
               f"{_xy(out_xy[j])} lies {dist[j]:.3f} m from the route; expected "
               f"it on the route (within {tol:g} m)", f"outlets[{k}]", 10 + k)
    for j in np.flatnonzero(out_drop < 0):
        i, k = out_owner[j], out_k[j]
        add(i, f"{_label(circuits[i])}: outlet {out_name[j]!r} at height {out_h[j]:g} m "
               f"lies {off_run(i)}; expected it between floor and ceiling",
            f"outlets[{k}].height", 10 + k)

    if problems:
        problems.sort(key=lambda t: (t[0], t[1]))
        raise PlanError([p for _, _, p in problems])

    # -- lengths (no problems: every route and outlet is usable) ------------
    order = np.lexsort((out_k, along, out_owner))     # by circuit, then along the route
    s_owner = out_owner[order]
    s_along = along[order]
    s_drop = out_drop[order]
    n_out = np.bincount(out_owner, minlength=n)
    o_start = np.cumsum(n_out) - n_out
    before, after, drops_total = _drops_either_side(s_drop, n_out, o_start)

    factor = 1.0 + allowance
    db = board_drop[s_owner]
    forward = db + s_along + 2.0 * before + s_drop
    end_raw = board_drop + route_m + 2.0 * drops_total
    ring_raw = 2.0 * board_drop + route_m + 2.0 * drops_total
    end_cable = end_raw * factor + extra
    ring_cable = ring_raw * factor + extra

    fraction = np.full(len(order), np.nan)
    pt_cable = forward * factor[s_owner] + extra[s_owner]
    r = is_ring[s_owner]
    if r.any():
        # the other way round, summed on its own so that an outlet at the
        # board measures the same whichever end of the ring it projects to
        backward = (db[r] + (route_m[s_owner[r]] - s_along[r]) + 2.0 * after[r]
                    + s_drop[r])
        fraction[r] = forward[r] / (forward[r] + backward)
        shorter = np.minimum(forward[r], backward)
        pt_cable[r] = shorter * factor[s_owner[r]] + extra[s_owner[r]]

    # radial: the route's end is a point unless the last outlet lies there
    last_along = np.full(n, -np.inf)
    has_out = n_out > 0
    last_along[has_out] = s_along[(o_start + n_out - 1)[has_out]]
    add_end = ~is_ring & (last_along < route_m - tol)

    # -- assemble the small per-circuit results -----------------------------
    names = np.array(out_name, dtype=object)[order].tolist() if len(order) else []
    s_along_l, pt_cable_l, s_drop_l = s_along.tolist(), pt_cable.tolist(), s_drop.tolist()
    frac_l = fraction.tolist()
    mid_key = np.abs(fraction - 0.5)
    result: list[CircuitLengths] = []
    for i, c in enumerate(circuits):
        a, z = int(o_start[i]), int(o_start[i] + n_out[i])
        ring = bool(is_ring[i])
        pts_i = [PointLength(names[j], s_along_l[j], pt_cable_l[j], s_drop_l[j],
                             frac_l[j] if ring else None) for j in range(a, z)]
        if ring:
            total = worst = float(ring_cable[i])
            worst_point = names[a + int(np.argmin(mid_key[a:z]))] if z > a else "midpoint"
        else:
            if add_end[i]:
                pts_i.append(PointLength("end", float(route_m[i]), float(end_cable[i]), 0.0))
            # cable grows along the route (drops >= 0), so the last point is worst
            total = worst = pts_i[-1].cable_m
            worst_point = pts_i[-1].name
        result.append(CircuitLengths(c.board, c.ref, float(route_m[i]), worst, total,
                                     worst_point, tuple(pts_i)))
    return result

"""Grouping of circuits from the plan's geometry, for the grouping factor Cg.

Two circuits are *grouped* where their routes run within ``distance_m`` of
each other for a continuous length of at least ``min_length_m``.  The number
of circuits in a group selects Cg in BS 7671 Table 4C1 [1]_; a cable's
group is the largest it belongs to anywhere along its route (its rating is
limited by its worst stretch).

Method (vectorised, never all pairs):

1. candidate pairs: the routes are cut into their straight segments, and one
   ``shapely.STRtree`` over the segments [2]_, queried with each segment's
   box grown by ``distance_m``, returns only segments that may come within
   ``distance_m`` of each other; the segments are taken in batches of whole
   routes, so the pairs held at once stay bounded on a large plan;
2. for each candidate pair of segments (p on route a, q on route b), the
   part of p within ``distance_m`` of q, in closed form: the distance from
   :math:`P(t) = P_0 + tD` to the segment q is a convex function of t, so the
   set :math:`\\{t : d(P(t), q) \\le d\\}` is one interval, the union of the
   intervals where P(t) lies within d of q's two end points (quadratics in t)
   and within d of q's line while projecting inside q (linear in t);
3. the intervals of each pair (a, b), placed along route a, are merged into
   continuous runs; runs shorter than ``min_length_m`` (crossings, the common
   start at a board) are dropped (:func:`shared_runs`);
4. runs are joined into groups (:func:`group_sizes`): a run of a along b
   with the run of b along a at the same place, and runs along the same
   route whose stretches overlap (a sorted sweep per route); the groups are
   the connected components of these links, so cables side by side form one
   group even where the outer ones lie further apart than ``distance_m``,
   while stretches in different places stay apart.

Routes are compared only with routes at the same level (the plan's ``run``:
a ceiling run and a floor run over the same line are not grouped).  The
vertical drops are not modelled.

Defaults: 0.1 m and 0.5 m, zsplan's choice (common practice, no published
source): routes drawn 0.1 m apart on a floor plan run in the same void or
bundle, and cables side by side for less than half a metre (a crossing, a
cable entry) exchange little heat.  Both are settings of the plan.

References
----------
.. [1] BS 7671:2018+A2:2022, Appendix 4, Table 4C1 (rating factors for groups
   of more than one circuit).
.. [2] shapely 2 documentation: ``STRtree.query``, ``linestrings``,
   ``get_coordinates``, ``line_interpolate_point``, ``line_locate_point``.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

from ._runtime import gc_paused

__all__ = ["DEFAULT_DISTANCE_M", "DEFAULT_MIN_LENGTH_M", "SharedRuns", "route_lines",
           "segment_within", "shared_runs", "group_sizes", "RunGroups", "run_groups"]

#: Routes closer than this run together. [m]  # common practice (no published source)
DEFAULT_DISTANCE_M = 0.1
#: ... for at least this continuous length. [m]  # common practice (no published source)
DEFAULT_MIN_LENGTH_M = 0.5

#: Gap along a route below which two intervals are one run (rounding at vertices). [m]
_JOIN_M = 1e-9
#: Segments taken together in :func:`shared_runs` (bounds the candidate pairs held at once).
_BATCH_SEGMENTS = 8192


@dataclass(frozen=True)
class SharedRuns:
    """Continuous runs of route ``a`` alongside route ``b`` (one row per run).

    Every run appears once per direction: (a, b) along route a and (b, a)
    along route b.

    Attributes
    ----------
    a, b : numpy.ndarray of int
        Route indices.
    start_m, end_m : numpy.ndarray
        The run's interval along route a. [m]
    """

    a: np.ndarray
    b: np.ndarray
    start_m: np.ndarray
    end_m: np.ndarray

    @property
    def length_m(self) -> np.ndarray:
        return self.end_m - self.start_m


_EMPTY = SharedRuns(np.zeros(0, np.intp), np.zeros(0, np.intp), np.zeros(0), np.zeros(0))


# route_lines, shared_runs and run_groups run with the cyclic collector paused
# (gc_paused as a decorator): they make one geometry per route or segment
# (hundreds of thousands on a building) and no reference cycles, and
# collections started by those allocations would walk the whole plan model
# each time (at 50 000 circuits: 4 s instead of 0.25 s for the boxes of the
# segment search).


@gc_paused()
def route_lines(routes) -> np.ndarray:
    """LineStrings for routes (sequences of [x, y]); ``None`` where a route is missing.

    Built in one call (``shapely.linestrings`` with ``indices``).
    """
    n = len(routes)
    out = np.full(n, None, dtype=object)
    arrays = [np.asarray(r, dtype=float).reshape(-1, 2) if r is not None else np.zeros((0, 2)) for r in routes]
    counts = np.array([len(a) for a in arrays], dtype=np.intp)
    ok = counts >= 2
    if ok.any():
        coords = np.concatenate([a for a, k in zip(arrays, ok) if k])
        idx = np.repeat(np.arange(int(ok.sum())), counts[ok])
        out[ok] = shapely.linestrings(coords, indices=idx)
    return out


def _interval_union(lo, hi, ok, lo2, hi2, ok2):
    """Hull of two intervals (each possibly empty); the caller knows the union is convex."""
    lo_o = np.where(ok & ok2, np.minimum(lo, lo2), np.where(ok, lo, lo2))
    hi_o = np.where(ok & ok2, np.maximum(hi, hi2), np.where(ok, hi, hi2))
    return lo_o, hi_o, ok | ok2


def _disk(p0, d, c, r):
    """t-interval where |p0 + t d - c| <= r (a quadratic in t)."""
    w = p0 - c
    qa = np.einsum("ij,ij->i", d, d)
    qb = 2.0 * np.einsum("ij,ij->i", d, w)
    qc = np.einsum("ij,ij->i", w, w) - r * r
    disc = qb * qb - 4.0 * qa * qc
    ok = (disc >= 0) & (qa > 0)
    root = np.sqrt(np.where(ok, disc, 0.0))
    safe = np.where(qa > 0, qa, 1.0)
    return (-qb - root) / (2 * safe), (-qb + root) / (2 * safe), ok


def segment_within(p0, p1, q0, q1, distance):
    """Part of each segment p within ``distance`` of the matching segment q.

    .. math::

        T = \\{t \\in [0, 1] : \\operatorname{dist}(P_0 + t(P_1 - P_0), [Q_0, Q_1]) \\le d\\}

    is an interval (the distance to a convex set is convex along a line):
    the hull of the parts within d of :math:`Q_0`, of :math:`Q_1`, and of
    q's line where the foot of the perpendicular falls inside q.

    Parameters
    ----------
    p0, p1, q0, q1 : array-like of shape (n, 2)
        End points of the segments. [m]
    distance : float
        [m]

    Returns
    -------
    (t0, t1, ok) : numpy.ndarray
        The interval as fractions of p, and whether it is non-empty.

    Examples
    --------
    >>> t0, t1, ok = segment_within([[0, 0]], [[10, 0]], [[2, 0.05]], [[6, 0.05]], 0.1)
    >>> [round(float(t0[0]), 4), round(float(t1[0]), 4), bool(ok[0])]   # hand-worked: 2 - 0.0866 .. 6 + 0.0866
    [0.1913, 0.6087, True]
    """
    p0, p1, q0, q1 = (np.atleast_2d(np.asarray(x, dtype=float)) for x in (p0, p1, q0, q1))
    r = float(distance)
    d = p1 - p0
    e = q1 - q0
    lo, hi, ok = _disk(p0, d, q0, r)
    lo2, hi2, ok2 = _disk(p0, d, q1, r)
    lo, hi, ok = _interval_union(lo, hi, ok, lo2, hi2, ok2)
    # the strip along q: |cross(e, p(t) - q0)| <= r |e| and 0 <= e.(p(t) - q0) <= |e|^2
    ee = np.einsum("ij,ij->i", e, e)
    le = np.sqrt(ee)
    w = p0 - q0
    c0 = e[:, 0] * w[:, 1] - e[:, 1] * w[:, 0]
    c1 = e[:, 0] * d[:, 1] - e[:, 1] * d[:, 0]
    m0 = np.einsum("ij,ij->i", e, w)
    m1 = np.einsum("ij,ij->i", e, d)
    with np.errstate(divide="ignore", invalid="ignore"):
        a_lo, a_hi = _linear_band(c0, c1, -r * le, r * le)
        b_lo, b_hi = _linear_band(m0, m1, 0.0, ee)
    s_lo, s_hi = np.maximum(a_lo, b_lo), np.minimum(a_hi, b_hi)
    s_ok = (ee > 0) & (s_lo <= s_hi)
    lo, hi, ok = _interval_union(lo, hi, ok, s_lo, s_hi, s_ok)
    lo, hi = np.maximum(lo, 0.0), np.minimum(hi, 1.0)
    return lo, hi, ok & (lo <= hi)


def _linear_band(v0, v1, lower, upper):
    """t-interval where lower <= v0 + t v1 <= upper (all t, or none, where v1 = 0)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        ta = (lower - v0) / v1
        tb = (upper - v0) / v1
    flat = v1 == 0
    inside = (v0 >= lower) & (v0 <= upper)
    lo = np.where(flat, np.where(inside, -np.inf, np.inf), np.minimum(ta, tb))
    hi = np.where(flat, np.where(inside, np.inf, -np.inf), np.maximum(ta, tb))
    return lo, hi


@gc_paused()
def shared_runs(lines, distance_m=DEFAULT_DISTANCE_M, min_length_m=DEFAULT_MIN_LENGTH_M,
                level=None) -> SharedRuns:
    """Where routes run within ``distance_m`` of each other for ``min_length_m`` or more.

    The routes are taken a few thousand segments at a time (whole routes in
    each batch), so the candidate pairs held at once stay bounded however
    large the plan: time and memory grow with the number of routes.

    Parameters
    ----------
    lines : array-like of shapely.LineString or None
        One route per circuit, plan metres.
    distance_m : float
        Largest distance between routes that run together. [m]
    min_length_m : float
        Least continuous length alongside. [m]
    level : array-like, optional
        A label per route (e.g. the run: ceiling/floor); only routes with
        equal labels are compared.

    Returns
    -------
    SharedRuns
        Sorted by route a, then route b, then start.
    """
    lines = np.asarray(lines, dtype=object)
    dist = float(distance_m)
    valid = np.flatnonzero(~shapely.is_missing(lines))
    if valid.size < 2:
        return _EMPTY
    coords, owner = shapely.get_coordinates(lines[valid], return_index=True)
    owner = valid[owner]
    # segments: consecutive coordinates of the same route, of non-zero length
    same = owner[1:] == owner[:-1]
    s0, s1, sown = coords[:-1][same], coords[1:][same], owner[:-1][same]
    seg_len = np.hypot(*(s1 - s0).T)
    keep = seg_len > 0
    # distance along the route to each segment's start
    along = np.concatenate([[0.0], np.cumsum(np.hypot(*(coords[1:] - coords[:-1]).T) * same)])
    first = np.r_[True, owner[1:] != owner[:-1]]
    route_start = np.maximum.accumulate(np.where(first, np.arange(len(owner)), 0))
    seg_along = (along - along[route_start])[:-1][same]
    s0, s1, sown, seg_len, seg_along = s0[keep], s1[keep], sown[keep], seg_len[keep], seg_along[keep]
    if sown.size < 2:
        return _EMPTY
    tree = shapely.STRtree(shapely.linestrings(np.stack([s0, s1], axis=1)))
    lo_xy, hi_xy = np.minimum(s0, s1) - dist, np.maximum(s0, s1) + dist
    code = None if level is None else _level_codes(level)
    # batches of whole routes (sown is sorted): every run of route a comes from one batch
    cuts = np.unique(np.r_[np.searchsorted(sown, sown[::_BATCH_SEGMENTS], side="left"), sown.size])
    parts = []
    for c0, c1 in zip(cuts[:-1], cuts[1:]):
        boxes = shapely.box(lo_xy[c0:c1, 0], lo_xy[c0:c1, 1], hi_xy[c0:c1, 0], hi_xy[c0:c1, 1])
        qi, qj = tree.query(boxes)                   # box overlap only: cheap
        qi += c0
        a, b = sown[qi], sown[qj]
        pick = a != b
        if code is not None:
            pick &= code[a] == code[b]
        qi, qj = qi[pick], qj[pick]
        if qi.size == 0:
            continue
        t0, t1, ok = segment_within(s0[qi], s1[qi], s0[qj], s1[qj], dist)
        qi, qj, t0, t1 = qi[ok], qj[ok], t0[ok], t1[ok]
        if qi.size:
            parts.append(_merge_runs(sown[qi], sown[qj], seg_along[qi] + t0 * seg_len[qi],
                                     seg_along[qi] + t1 * seg_len[qi], float(min_length_m)))
    if not parts:
        return _EMPTY
    return SharedRuns(*(np.concatenate(x) for x in zip(*parts)))


def _level_codes(level) -> np.ndarray:
    """An integer per route, equal where the (string) labels are equal; other labels as given."""
    lv = np.asarray(level, dtype=object)
    if not all(isinstance(x, str) for x in lv):
        return lv                                    # compared as given, with ==
    codes: dict = {}
    return np.array([codes.setdefault(x, len(codes)) for x in lv], dtype=np.intp)


def _merge_runs(a, b, start, end, min_length):
    """Intervals (start, end) of route a alongside route b merged into runs of ``min_length`` or more."""
    order = np.lexsort((start, b, a))
    a, b, start, end = a[order], b[order], start[order], end[order]
    pair_new = np.r_[True, (a[1:] != a[:-1]) | (b[1:] != b[:-1])]
    reach = _running_max(end, pair_new)              # furthest end so far, per pair
    run_new = pair_new | np.r_[True, start[1:] > reach[:-1] + _JOIN_M]
    heads = np.flatnonzero(run_new)
    r_start = start[heads]
    r_end = np.maximum.reduceat(end, heads)
    long = (r_end - r_start) >= min_length
    return a[heads[long]], b[heads[long]], r_start[long], r_end[long]


def _running_max(values, restart):
    """Running maximum of ``values``, starting afresh where ``restart`` is True (exact).

    Each value is replaced by its rank, offset by its segment's number times
    the count, so one ``np.maximum.accumulate`` over integers serves every
    segment without rounding.
    """
    m = values.size
    ranked = np.sort(values)
    seg = (np.cumsum(restart) - 1).astype(np.int64) * m
    top = np.maximum.accumulate(seg + np.searchsorted(ranked, values))
    return ranked[top - seg]


def _components(n: int, u: np.ndarray, v: np.ndarray) -> np.ndarray:
    """Connected-component label of each of n nodes given edges (u, v): its least node.

    A forest in which every node points to a smaller one: each round hooks
    the larger root of every edge whose ends have different roots onto the
    smaller, then jumps pointers until every node points at its root.
    """
    label = np.arange(n)
    while u.size:
        lu, lv = label[u], label[v]
        differ = lu != lv
        if not differ.any():
            break
        u, v, lu, lv = u[differ], v[differ], lu[differ], lv[differ]
        np.minimum.at(label, np.maximum(lu, lv), np.minimum(lu, lv))
        while True:                                  # pointer jumping
            up = label[label]
            if np.array_equal(up, label):
                break
            label = up
    return label


def _is_sorted(a, b, s) -> bool:
    """Whether rows are in (a, b, s) order."""
    da, db = np.diff(a), np.diff(b)
    return bool(np.all((da > 0) | ((da == 0) & ((db > 0) | ((db == 0) & (s[1:] >= s[:-1]))))))


def group_sizes(lines, distance_m=DEFAULT_DISTANCE_M, min_length_m=DEFAULT_MIN_LENGTH_M,
                level=None, runs: SharedRuns | None = None, counted=None,
                groups: RunGroups | None = None) -> np.ndarray:
    """Number of circuits in each route's largest group (1: not grouped).

    The runs of :func:`shared_runs` are joined into groups: a run of a along
    b joins the run of b along a at the same place (the one containing the
    point of b nearest the middle of a's run), and runs along the same route
    join where their stretches of it overlap.  A group's size is the number
    of routes among its runs; a route's size is that of its largest group.
    So four cables side by side 50 mm apart form one group of four although
    the outer two lie 150 mm apart, while a cable alongside one neighbour in
    the hall and another in the kitchen is in two groups of two.  (A chain of
    overlapping runs counts as one group: the safe side.)

    Parameters
    ----------
    lines, distance_m, min_length_m, level
        As :func:`shared_runs`.
    runs : SharedRuns, optional
        Reuse runs already found.
    counted : array-like of bool, optional
        Which routes count towards their neighbours' groups (default all).
        A route not counted still has its own group size, itself included:
        BS 7671 lets a cable carrying no more than 30 % of its grouped rating
        be ignored when rating the rest of the group (Appendix 4; from memory).
    groups : RunGroups, optional
        Reuse the groups of :func:`run_groups` (for several ``counted``).

    Returns
    -------
    numpy.ndarray of int, shape (len(lines),)

    Examples
    --------
    >>> import shapely
    >>> lines = [shapely.LineString([(0, y), (5, y)]) for y in (0, 0.05, 0.1, 0.15)]
    >>> group_sizes(lines).tolist()     # hand-worked: side by side 50 mm apart, 5 m long
    [4, 4, 4, 4]
    """
    n = len(lines)
    if groups is None:
        if runs is None:
            runs = shared_runs(np.asarray(lines, dtype=object), distance_m, min_length_m, level)
        groups = run_groups(lines, runs, distance_m)
    size = np.ones(n, dtype=np.intp)
    if groups.comp.size == 0:
        return size
    A, B, comp = groups.a, groups.b, groups.comp
    k = comp.size
    # routes per group, then each route's largest group
    mkey = np.unique(_pair_key(np.concatenate([comp, comp]), np.concatenate([A, B]), n))
    g_of, r_of = mkey // (n + 1), mkey % (n + 1)      # (group, route), each once
    cnt = np.ones(n, dtype=bool) if counted is None else np.asarray(counted, dtype=bool)
    per_group = np.bincount(g_of, weights=cnt[r_of], minlength=k).astype(np.intp)
    best = np.zeros(n, dtype=np.intp)
    np.maximum.at(best, r_of, per_group[g_of] + ~cnt[r_of])
    return np.maximum(size, best)


@dataclass(frozen=True)
class RunGroups:
    """Runs joined into groups: run i (route ``a[i]`` alongside ``b[i]``) is in group ``comp[i]``."""

    a: np.ndarray
    b: np.ndarray
    comp: np.ndarray


@gc_paused()
def run_groups(lines, runs: SharedRuns, distance_m=DEFAULT_DISTANCE_M) -> RunGroups:
    """Join the runs of :func:`shared_runs` into groups (see :func:`group_sizes`)."""
    lines = np.asarray(lines, dtype=object)
    n = len(lines)
    k = runs.a.size
    if k == 0:
        return RunGroups(runs.a, runs.b, np.zeros(0, dtype=np.intp))
    # runs sorted by (route, partner, start), for look-ups
    A, B, S, E = runs.a, runs.b, runs.start_m, runs.end_m
    if not _is_sorted(A, B, S):                     # as shared_runs gives them, or sort
        order = np.lexsort((S, B, A))
        A, B, S, E = A[order], B[order], S[order], E[order]
    # 1. the run of a along b meets the run of b along a containing the point of b
    #    nearest the middle of a's run
    mid = shapely.line_interpolate_point(lines[A], (S + E) / 2.0)
    u = shapely.line_locate_point(lines[B], mid)
    pk = _pair_key(A, B, n)
    pair_new = np.r_[True, pk[1:] != pk[:-1]]        # pk is sorted
    pairs, rank = pk[pair_new], np.cumsum(pair_new) - 1
    span = float(np.max(E)) + 1.0
    composite = rank + S / span                       # sorted: by pair, then by start
    mk = _pair_key(B, A, n)
    mrank = np.searchsorted(pairs, mk)
    has_mirror = (mrank < pairs.size) & (pairs[np.minimum(mrank, pairs.size - 1)] == mk)
    lo = np.searchsorted(composite, mrank, side="left")
    hi = np.searchsorted(composite, mrank + 1.0, side="left")
    pos = np.searchsorted(composite, mrank + np.clip(u, 0, None) / span, side="right") - 1
    hit = has_mirror & (pos >= lo) & (pos < hi)
    pos_c = np.clip(pos, 0, k - 1)
    hit &= u <= E[pos_c] + _JOIN_M + float(distance_m)
    eu, ev = [np.flatnonzero(hit)], [pos_c[hit]]
    # 2. runs along the same route whose stretches overlap (a sweep per route)
    by_start = np.lexsort((S, A))
    host = A[by_start]
    reach = np.maximum.accumulate(E[by_start] + host * span) - host * span
    overlap = (host[1:] == host[:-1]) & (S[by_start][1:] < reach[:-1])
    eu.append(by_start[1:][overlap])
    ev.append(by_start[:-1][overlap])
    return RunGroups(A, B, _components(k, np.concatenate(eu), np.concatenate(ev)))


def _pair_key(a: np.ndarray, b: np.ndarray, n: int) -> np.ndarray:
    return a.astype(np.int64) * (n + 1) + b

"""Protective devices: time-current characteristics, t(I) and Ia(t).

Every device (a family, a type for circuit-breakers, and a rating) is
described by points of its *longest operating time* — the upper edge of its
time-current band — joined by straight lines on log-log axes:

.. math::

    \\log t = \\log t_j + (\\log I - \\log I_j)
              \\frac{\\log t_{j+1} - \\log t_j}{\\log I_{j+1} - \\log I_j}

Two consecutive points may share a current: a vertical step, as at the upper
instantaneous limit of a circuit-breaker (the time drops to 0.1 s there).

* :func:`operating_time` gives t(I), the longest time the device may take to
  operate at current I: infinite below the first point (no operation is
  guaranteed), the last point's time above the last point (the curve is not
  tabulated beyond it; the device operates within at most that time).
* :func:`current_for_time` gives Ia(t) = min{I : t(I) ≤ t}, the current that
  makes the device operate within t; infinite when t is shorter than the last
  tabulated time.  The two are mutually consistent: t(Ia(t)) = t wherever the
  curve is not vertical at Ia(t), and t(Ia(t)) < t on a vertical step.

Data files in ``zsplan/data/devices`` hold one family each, with their
sources at the top.  Circuit-breaker files (``kind: breaker``) give the
instantaneous band and the standard's thermal test points, from which
:func:`breaker_points` builds the curve; fuse files (``kind: fuse``) and
users' own files (``kind: curve``) list points per rating.  Users add their
own families by putting a file in a folder named by the environment variable
``ZSPLAN_DEVICE_PATH`` (os.pathsep-separated) or by :func:`register_family_file`.

References
----------
.. [1] IEC 60898-1:2015, Table 7 (time-current operating characteristic).
.. [2] BS 7671:2018+A2:2022, Appendix 3 and Tables 41.2-41.4.
.. [3] IEC 60269-1:2006+A2:2014, Table 2 (conventional times and currents).
"""
from __future__ import annotations

import functools
import math
import os
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Iterable, Sequence

import numpy as np
import yaml

__all__ = [
    "Curve", "DeviceFamily", "families", "family", "curve_for", "check_device",
    "breaker_points", "CurveSet", "operating_time", "cell_times", "current_for_time",
    "register_family_file",
]


@dataclass(frozen=True)
class Curve:
    """Longest-operating-time points of one device: currents [A] and times [s]."""

    current_a: tuple[float, ...]
    time_s: tuple[float, ...]
    sources: tuple[str, ...] = ()

    def __post_init__(self):
        i, t = np.asarray(self.current_a), np.asarray(self.time_s)
        if len(i) < 2 or len(i) != len(t):
            raise ValueError("a curve needs at least two (current, time) points")
        if not (np.all(np.isfinite(i)) and np.all(np.isfinite(t)) and np.all(i > 0) and np.all(t > 0)):
            raise ValueError("curve currents and times must be positive and finite")
        if np.any(np.diff(i) < 0):
            raise ValueError("curve currents must not decrease from one point to the next")
        if np.any(np.diff(t) >= 0):
            raise ValueError("curve times must fall strictly from one point to the next")


@dataclass(frozen=True)
class DeviceFamily:
    name: str
    kind: str                     # breaker | fuse | curve
    title: str
    curves: dict                  # (curve letter or None, rating) -> Curve
    path: str = ""

    def ratings(self, curve: str | None = None) -> list[float]:
        return sorted(r for c, r in self.curves if c == curve)

    def types(self) -> list[str | None]:
        return sorted({c for c, _ in self.curves}, key=lambda c: c or "")


def _lookup(table: dict, rating: float) -> float:
    """Value for a rating from a {upper-bound rating: value} map."""
    for bound in sorted(table):
        if rating <= bound:
            return float(table[bound])
    return float(table[max(table)])


def breaker_points(rating_a: float, instantaneous: Sequence[float], five_second: float,
                   thermal: dict, instantaneous_time_s: float = 0.1) -> Curve:
    """Longest-operating-time curve of a circuit-breaker.

    Straight lines on log-log axes through the conventional tripping point
    (1.45 In, 1 h or 2 h) and test c (2.55 In, 60 s or 120 s) of IEC 60898-1
    Table 7 [1]_, then through (k5 In, 5 s) where k5 In is the current BS 7671
    Table 41.3 [2]_ takes for 5 s, continued at the same slope to the upper
    instantaneous limit k In, where the time drops to ``instantaneous_time_s``.

    The thermal model is an engineering assumption (documented, not a
    published curve): between the standard's points a real breaker operates
    sooner; the line is an upper bound consistent with them.
    """
    k_high = float(instantaneous[1])   # the lower limit of the band gives no upper bound
    i1 = float(thermal["conventional_tripping"]) * rating_a
    t1 = _lookup(thermal["conventional_time_s"], rating_a)
    i2 = float(thermal["test_c_multiple"]) * rating_a
    t2 = _lookup(thermal["test_c_time_s"], rating_a)
    i5 = float(five_second) * rating_a
    ih = k_high * rating_a
    cur = [i1, i2, i5]
    tim = [t1, t2, 5.0]
    if ih > i5:
        slope = math.log(t2 / 5.0) / math.log(i5 / i2)
        cur.append(ih)
        tim.append(5.0 * (ih / i5) ** (-slope))
    cur.append(ih)
    tim.append(float(instantaneous_time_s))
    return Curve(tuple(cur), tuple(tim), ("IEC 60898-1 Table 7; BS 7671:2018 Table 41.3",))


def _read_family(text: str, path: str) -> DeviceFamily:
    doc = yaml.safe_load(text)
    if not isinstance(doc, dict) or "family" not in doc or "kind" not in doc:
        raise ValueError(f"{path}: a device file needs 'family' and 'kind' keys")
    name, kind = str(doc["family"]), str(doc["kind"])
    curves: dict = {}
    if kind == "breaker":
        for letter, spec in doc["curves"].items():
            for rating in doc["ratings"]:
                curves[(str(letter), float(rating))] = breaker_points(
                    float(rating), spec["instantaneous"], spec["five_second"], doc["thermal"],
                    doc.get("instantaneous_time_s", 0.1))
    elif kind in ("fuse", "curve"):
        sources = doc.get("sources", {}) or {}
        for rating, pts in doc["ratings"].items():
            pts = sorted(pts, key=lambda p: (float(p[0]), -float(p[1])))
            curves[(None, float(rating))] = Curve(
                tuple(float(p[0]) for p in pts), tuple(float(p[1]) for p in pts),
                tuple(str(sources.get(p[2], p[2])) if len(p) > 2 else "" for p in pts))
    else:
        raise ValueError(f"{path}: unknown device kind {kind!r}; expected breaker, fuse or curve")
    return DeviceFamily(name, kind, str(doc.get("title", name)), curves, path)


_extra_files: list[str] = []


def register_family_file(path: str | os.PathLike) -> DeviceFamily:
    """Add a user's device file (e.g. a manufacturer's curve) for this process."""
    fam = _read_family(Path(path).read_text(encoding="utf-8"), str(path))
    _extra_files.append(str(path))
    families.cache_clear()
    return fam


@functools.lru_cache(maxsize=1)
def families() -> dict[str, DeviceFamily]:
    """All device families: the bundled ones, then the user's (which may override)."""
    out: dict[str, DeviceFamily] = {}
    folder = resources.files("zsplan").joinpath("data", "devices")
    for entry in sorted(folder.iterdir(), key=lambda e: e.name):
        if entry.name.endswith(".yaml"):
            fam = _read_family(entry.read_text(encoding="utf-8"), f"zsplan/data/devices/{entry.name}")
            out[fam.name] = fam
    user_dirs = [d for d in os.environ.get("ZSPLAN_DEVICE_PATH", "").split(os.pathsep) if d]
    user_files = [str(p) for d in user_dirs for p in sorted(Path(d).glob("*.yaml"))] + _extra_files
    for p in user_files:
        fam = _read_family(Path(p).read_text(encoding="utf-8"), p)
        out[fam.name] = fam
    return out


def family(name: str) -> DeviceFamily:
    try:
        return families()[name]
    except KeyError:
        raise KeyError(f"unknown device family {name!r}; known: {', '.join(sorted(families()))}") from None


def _problem(family_name: str, curve: str | None, rating_a: float) -> str | None:
    fams = families()
    if family_name not in fams:
        return f"unknown device family {family_name!r}; known: {', '.join(sorted(fams))}"
    fam = fams[family_name]
    if fam.kind == "breaker" and curve not in fam.types():
        return f"{fam.title}: no type {curve!r}; types are {', '.join(map(str, fam.types()))}"
    key = (curve if fam.kind == "breaker" else None, float(rating_a))
    if key not in fam.curves:
        listed = ", ".join(f"{r:g}" for r in fam.ratings(key[0]))
        what = f"type {curve} " if key[0] else ""
        return f"{fam.title}: no {what}rating {rating_a:g} A; ratings are {listed} A"
    return None


def _curve(family_name: str, curve: str | None, rating_a: float) -> Curve:
    msg = _problem(family_name, curve, rating_a)
    if msg:
        raise KeyError(msg)
    fam = families()[family_name]
    return fam.curves[(curve if fam.kind == "breaker" else None, float(rating_a))]


def check_device(device) -> str | None:
    """``None`` when zsplan has data for ``device`` (a :class:`zsplan.model.Device`), else why not."""
    return _problem(device.family, device.curve, device.rating_a)


def curve_for(device) -> Curve:
    """The :class:`Curve` of a :class:`zsplan.model.Device`."""
    return _curve(device.family, device.curve, device.rating_a)


#: :meth:`CurveSet.cells` keys a current by its float64 bits shifted right by
#: this many: sign, exponent and 5 mantissa bits remain (32 cells an octave).
_CELL_SHIFT = 47
#: Currents :meth:`CurveSet.cells` covers [A]; others take the exact search.
_CELL_RANGE_A = (2.0 ** -16, 2.0 ** 24)


class CurveSet:
    """Many curves packed into padded arrays, for vectorised evaluation.

    ``CurveSet.from_devices(devices)`` returns the set and, for each device,
    the index of its curve; identical devices share one curve.
    """

    def __init__(self, curves: Sequence[Curve]):
        n = max(len(c.current_a) for c in curves)
        self.size = len(curves)
        self.npts = np.array([len(c.current_a) for c in curves])
        self.cur = np.full((len(curves), n), np.inf)
        self.tim = np.zeros((len(curves), n))
        for k, c in enumerate(curves):
            self.cur[k, : len(c.current_a)] = c.current_a
            self.tim[k, : len(c.time_s)] = c.time_s
        with np.errstate(divide="ignore"):
            self.log_i = np.log(self.cur)
            self.log_t = np.log(self.tim)     # padding: -inf
        self.width = n
        self.curves = tuple(curves)
        self._segments = None
        self._cells = None
        self._tables: dict = {}

    def cached(self, key, build):
        """``build()``, kept under ``key`` for later calls: for tables of this
        set's curves (their size grows with the number of curves, not of circuits)."""
        table = self._tables.get(key)
        if table is None:
            table = self._tables[key] = build()
        return table

    def segments(self):
        """Flat look-up tables for :func:`operating_time`, built on first use.

        Slot ``j`` of curve ``k`` (at ``k * (width + 1) + j``) holds the
        segment that starts at the curve's point ``j - 1``, for a current at or
        above exactly ``j`` of the curve's points: its first time ``t0`` [s],
        its first log current ``x0`` and its log-log slope ``s``, so that
        ``t = t0 * exp(s * (log I - x0))``.  Slot 0 (below the first point)
        holds ``t0 = inf``; slots from ``npts`` on (beyond the last point) hold
        the last time with ``s = 0``.  Returns ``(t0, x0, s, columns)``, with
        ``columns`` the curves' currents column by column (padding: inf).
        """
        if getattr(self, "_segments", None) is None:
            k_n, w = self.size, self.width
            t0 = np.full((k_n, w + 1), np.inf)
            x0 = np.zeros((k_n, w + 1))
            slope = np.zeros((k_n, w + 1))
            for k in range(k_n):
                n = int(self.npts[k])
                li, lt = self.log_i[k, :n], self.log_t[k, :n]
                di = np.diff(li)
                t0[k, 1:n] = self.tim[k, : n - 1]
                x0[k, 1:n] = li[:-1]
                # a vertical step (equal currents) is never selected: no slope
                slope[k, 1:n] = np.where(di != 0, np.diff(lt) / np.where(di != 0, di, 1.0), 0.0)
                t0[k, n:] = self.tim[k, n - 1]
            self._segments = (t0.ravel(), x0.ravel(), slope.ravel(),
                              [np.ascontiguousarray(c) for c in self.cur.T])
        return self._segments

    def cells(self):
        """Look-up tables of t(I) by current cell, for :func:`cell_times`; built on first use.

        A cell is the range of currents whose float64 bit patterns agree but
        for the last 47 bits (sign, exponent and 5 mantissa bits: 32 cells an
        octave), from 2^-16 A to 2^24 A.  Where a cell holds none of a
        curve's points, every current in it is at or above the same points of
        that curve, so it lies on one segment (a slot of :meth:`segments`);
        if that is below the first point, t = inf, if beyond the last, t = the
        last time (the flat ends of :func:`operating_time`).  Where a cell
        holds points of one current (one point, or the two of a vertical
        step), a current below them is on the slot before them, one from
        them on on the slot after them.

        Returns ``(n, times, slots, split)``: curve ``k``'s cell for a
        current whose key (bits >> 47) is ``key`` sits at ``k * n + key`` in
        ``times`` and ``slots`` (both start with unused entries up to the
        first key).  ``times`` holds t on the flat ends and NaN elsewhere;
        ``slots`` the segment's slot, or ``-1 - j`` for a cell that holds
        points, described by element ``j`` of the arrays ``split = (current,
        slot below, slot from it on)`` (current NaN: points of several
        currents, to be counted).  The tables' size grows with the number of
        curves: about 20 kB a curve.
        """
        if getattr(self, "_cells", None) is None:
            first, last = (int(np.float64(a).view(np.int64) >> _CELL_SHIFT) for a in _CELL_RANGE_A)
            n = last - first
            edges = (np.arange(first, last + 1, dtype=np.int64) << _CELL_SHIFT).view(np.float64)
            # the entries before the first key are never read: left as allocated (not touched)
            times, slots = np.empty(first + self.size * n), np.empty(first + self.size * n, dtype=np.intp)
            times[first:] = np.nan
            split = ([], [], [])
            for k, c in enumerate(self.curves):
                cur = np.asarray(c.current_a)
                below = np.searchsorted(cur, edges[:-1], side="right")      # points <= lower edge
                inside = np.searchsorted(cur, edges[1:], side="left") - below   # points within
                row = slice(first + k * n, first + (k + 1) * n)
                times[row][(inside == 0) & (below == 0)] = np.inf
                times[row][(inside == 0) & (below >= len(cur))] = c.time_s[-1]
                slots[row] = k * (self.width + 1) + below
                held = np.flatnonzero(inside)
                lo, hi = cur[below[held]], cur[below[held] + inside[held] - 1]
                slots[row][held] = -1 - (len(split[0]) + np.arange(len(held)))
                split[0].extend(np.where(lo == hi, lo, np.nan))
                split[1].extend(k * (self.width + 1) + below[held])
                split[2].extend(k * (self.width + 1) + below[held] + inside[held])
            split = (np.array(split[0], dtype=float), np.array(split[1], dtype=np.intp),
                     np.array(split[2], dtype=np.intp))
            self._cells = (n, times, slots, split)
        return self._cells

    @classmethod
    def from_devices(cls, devices: Iterable) -> tuple["CurveSet", np.ndarray]:
        index: dict = {}
        idx = []
        for d in devices:
            key = (d.family, d.curve, float(d.rating_a))
            if key not in index:
                index[key] = len(index)
            idx.append(index[key])
        curves = [_curve(*key) for key in index]      # dicts keep insertion order
        return cls(curves), np.asarray(idx, dtype=np.intp)


def operating_time(curves: CurveSet, index, current_a, out=None):
    """Longest operating time t(I) of each device at its current. [s]

    Parameters
    ----------
    curves : CurveSet
    index : array-like of int
        Curve of each query.
    current_a : array-like
        Current through each device. [A]
    out : numpy.ndarray, optional
        Array for the result (1-d queries).

    Returns
    -------
    numpy.ndarray
        ``inf`` below the first tabulated point; the last point's time
        beyond the last point.

    Notes
    -----
    Currents on a flat end of their curve (below the first point, beyond
    the last) are answered from :meth:`CurveSet.cells` with one look-up; the
    others take their segment from the cell (or, in a cell that holds a
    point, count the curve's points at or below the current) and evaluate
    the segment's log-log line.
    """
    index = np.asarray(index, dtype=np.intp)
    current = np.asarray(current_a, dtype=float)
    if current.ndim == 1 and index.shape == current.shape and current.size:
        t = cell_times(curves, index * curves.cells()[0], current, out)
        if t is not None:
            return t
    current, index = np.broadcast_arrays(current, index)
    shape = current.shape
    current, index = current.reshape(-1), index.reshape(-1)
    slot = _count_slot(curves, index, current)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        t = _on_segment(curves, slot, current)
        odd = ~np.isfinite(np.log(current))
    if odd.any():     # log I = -inf or nan: below the curve; +inf: beyond it
        t[odd] = curves.segments()[0][slot[odd]]
    t = t.reshape(shape)
    if out is not None:
        out[...] = t
        return out
    return t


def cell_times(curves: CurveSet, base, current, out=None):
    """t(I) of 1-d currents by :meth:`CurveSet.cells`, or None when a current lies outside their range.

    ``base`` is each query's curve index times ``curves.cells()[0]`` (its
    first cell), so that a caller who needs it for other tables too forms it
    once.  One look-up answers the flat ends; the others find their segment
    from the cell and evaluate its line.
    """
    if not current.size:
        return np.empty(0) if out is None else out
    if not (current.min() >= _CELL_RANGE_A[0] and current.max() < _CELL_RANGE_A[1]):    # (NaN fails)
        return None
    n, times, slots, split = curves.cells()
    cell = current.view(np.int64) >> _CELL_SHIFT
    cell += base
    t = times.take(cell, out=out, mode="wrap")
    rest = np.isnan(t).nonzero()[0]
    if rest.size:
        slot = slots.take(cell[rest])
        part = current[rest]
        held = (slot < 0).nonzero()[0]      # in a cell that holds points: below them or from them on
        if held.size:
            j = -1 - slot[held]
            at = split[0].take(j)
            slot[held] = np.where(part[held] >= at, split[2].take(j), split[1].take(j))
            several = held[np.isnan(at)]    # points of several currents in the cell: count them
            if several.size:
                slot[several] = _count_slot(curves, base[rest[several]] // n, part[several])
        t[rest] = _on_segment(curves, slot, part)
    return t


def _count_slot(curves: CurveSet, index, current):
    """Slot (see :meth:`CurveSet.segments`) of each 1-d query: its curve's points at or below it, counted."""
    columns = curves.segments()[3]
    # counted column by column into small reused buffers (no N x P table)
    buf = np.empty(current.shape)
    hit = np.empty(current.shape, dtype=bool)
    j = np.zeros(current.shape, dtype=np.int8 if curves.width < 127 else np.intp)
    for col in columns:
        np.take(col, index, out=buf, mode="clip")
        np.less_equal(buf, current, out=hit)
        j += hit
    slot = index * (curves.width + 1)
    slot += j
    return slot


def _on_segment(curves: CurveSet, slot, current):
    """t = t0 exp(s (log I - x0)) on each query's segment (exact at the points).

    A current of 0, inf or NaN gives NaN (and warnings): the caller answers those.
    """
    t0, x0, slope, _ = curves.segments()
    buf = np.log(current)
    buf -= x0.take(slot)
    buf *= slope.take(slot)
    np.exp(buf, out=buf)
    buf *= t0.take(slot)
    return buf


def current_for_time(curves: CurveSet, index, time_s):
    """Ia(t): the least current that makes each device operate within t. [A]

    ``inf`` where t is shorter than the device's last tabulated time; the
    first point's current where t is longer than its first time.
    """
    index = np.asarray(index, dtype=np.intp)
    with np.errstate(divide="ignore"):
        y = np.log(np.asarray(time_s, dtype=float))
    y, index = np.broadcast_arrays(y, index)
    n = curves.npts[index]
    first = curves.cur[:, 0][index]
    return _walk(y, index, curves.log_t, True, curves.cur, curves.log_i, n, first, np.inf)


def _walk(q, index, keys, descending, vals, log_vals, n, before, after):
    """Locate each query ``q`` on its curve and interpolate log-log.

    ``keys`` (log current, ascending, or log time, descending) are counted
    column by column, which touches N elements per point instead of copying
    an N x P table.  ``before``/``after`` are the results before the first
    and after the last point.  Exact at the points themselves.
    """
    width = keys.shape[1]
    j = np.zeros(q.shape, dtype=np.intp)
    for col in keys.T:
        j += (col[index] > q) if descending else (col[index] <= q)
    base = index * width
    a = base + np.clip(j - 1, 0, width - 1)
    b = base + np.minimum(j, n - 1)
    k, v, lv = keys.ravel(), vals.ravel(), log_vals.ravel()
    k0, k1, v0, v1 = k[a], k[b], v[a], v[b]
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        frac = np.where(k1 != k0, (q - k0) / (k1 - k0), 0.0)
        val = v0 * np.exp(frac * (lv[b] - lv[a]))
    val = np.where(frac <= 0, v0, np.where(frac >= 1, v1, val))
    return np.where(j == 0, before, np.where(j >= n, after, val))

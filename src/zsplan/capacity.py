"""Current-carrying capacity: Iz from the tables and rating factors; Ib ≤ In ≤ Iz.

.. math::

    I_z = I_t\\, C_a\\, C_g\\, C_i, \\qquad I_b \\le I_n \\le c_f\\, I_z

with :math:`I_t` the tabulated current-carrying capacity for the cable and
reference installation method (``data/cable_capacity.csv``: BS 7671
Table 4D5, flat twin-and-cpc cable, methods C, A and 100-103; Table 4D1A,
single-core cables, methods A, B and C, single- and three-phase; copper,
70 °C thermoplastic), :math:`C_a` the ambient-temperature factor
(Table 4B1), :math:`C_g` the grouping factor (Table 4C1, the number of
circuits from :mod:`zsplan.grouping`), :math:`C_i` the factor for a cable
totally surrounded by thermal insulation (Table 52.2), and
:math:`c_f = 0.725` where a semi-enclosed fuse to BS 3036 gives overload
protection (Regulation 433.1.202: :math:`I_n \\le 0.725 I_z`; 0.725 =
1.45/2, the BS 3036 fusing factor being up to 2), else 1 [1]_.  The other
devices (BS EN 60898, BS 88, BS 1362) operate at :math:`I_2 \\le 1.45 I_n`,
so :math:`I_n \\le I_z` also satisfies :math:`I_2 \\le 1.45 I_z`
(Regulation 433.1.1).

A ring final circuit of :math:`I_n` ≤ 32 A needs :math:`I_z \\ge 20` A
(Regulation 433.1.204) rather than :math:`I_n \\le I_z`: the load divides
between the ring's two arms.

Between table rows zsplan takes the row on the safe side: the next hotter
ambient, the next larger group, the next longer length in insulation.  All
table values are from memory (see the data files) and are marked so in the
results; verify against BS 7671 before relying on them.

References
----------
.. [1] BS 7671:2018+A2:2022, Regulations 433.1.1, 433.1.202, 433.1.204 and
   523.9; Appendix 4 Tables 4B1, 4C1, 4D1A, 4D5 and 52.2.
"""
from __future__ import annotations

import csv
import functools
from importlib import resources

import numpy as np
import yaml

__all__ = [
    "BS3036_FACTOR", "RING_MIN_IZ_A", "RING_MAX_IN_A", "LIGHT_LOAD_FRACTION", "capacity_table", "factor_tables", "tabulated_current",
    "ambient_factor", "grouping_factor", "insulation_factor", "overload_factor",
    "current_capacity", "required_iz", "table_name", "methods", "constructions", "arrangements",
]

#: BS 7671:2018 Regulation 433.1.202: In <= 0.725 Iz where a BS 3036 fuse gives overload protection.
BS3036_FACTOR = 0.725
#: BS 7671:2018 Regulation 433.1.204: Iz >= 20 A for a 30 A or 32 A ring final circuit.
RING_MIN_IZ_A = 20.0
#: A cable expected to carry no more than this fraction of its grouped rating may be ignored
#: when rating the rest of the group: BS 7671:2018 Appendix 4, notes to Table 4C1 (from memory).
LIGHT_LOAD_FRACTION = 0.3
#: Largest device rating to which the ring rule is applied (Regulation 433.1.204: 30 A or 32 A). [A]
RING_MAX_IN_A = 32.0


@functools.lru_cache(maxsize=1)
def capacity_table() -> dict[tuple, tuple[np.ndarray, np.ndarray, str]]:
    """``(construction, insulation, material, method, phases) -> (csa, It, table name)``."""
    text = resources.files("zsplan").joinpath("data", "cable_capacity.csv").read_text("utf-8")
    rows = csv.DictReader(line for line in text.splitlines() if not line.startswith("#"))
    grouped: dict[tuple, list] = {}
    for r in rows:
        key = (r["construction"], r["insulation"], r["material"], r["method"], int(r["phases"]))
        grouped.setdefault(key, []).append((float(r["csa_mm2"]), float(r["it_a"]), r["table"]))
    return {k: (np.array([a for a, _, _ in v]), np.array([b for _, b, _ in v]), v[0][2])
            for k, v in grouped.items()}


@functools.lru_cache(maxsize=1)
def factor_tables() -> dict:
    """The contents of ``data/capacity_factors.yaml``."""
    text = resources.files("zsplan").joinpath("data", "capacity_factors.yaml").read_text("utf-8")
    return yaml.safe_load(text)


def tabulated_current(csa_mm2, method="C", construction="twin-and-cpc", phases=1,
                      insulation="thermoplastic", material="copper"):
    """Tabulated current-carrying capacity It. [A]

    Parameters
    ----------
    csa_mm2 : float or array-like
        Line conductor csa. [mm²]
    method : str or array-like
        Reference installation method: ``"A"``, ``"B"``, ``"C"``, or
        ``"100"``-``"103"`` (flat twin-and-cpc only).
    construction : str or array-like
        ``"twin-and-cpc"`` or ``"single-core"``.
    phases : int or array-like
        1 or 3 (single-core cables only have three-phase columns).
    insulation, material : str or array-like

    Returns
    -------
    float or numpy.ndarray
        NaN where zsplan has no table for the combination.

    Examples
    --------
    >>> float(tabulated_current(2.5, "C"))      # BS 7671:2018 Table 4D5, method C (from memory)
    27.0
    """
    csa, meth, cons, ph, ins, mat = np.broadcast_arrays(
        np.asarray(csa_mm2, dtype=float), np.asarray(method, dtype=str), np.asarray(construction),
        np.asarray(phases, dtype=int), np.asarray(insulation), np.asarray(material))
    out = np.full(csa.shape, np.nan)
    for key, (sizes, it, _) in capacity_table().items():
        sel = (cons == key[0]) & (ins == key[1]) & (mat == key[2]) & (meth == key[3]) & (ph == key[4])
        if np.any(sel):
            hit = np.isclose(csa[sel][..., None], sizes, rtol=0, atol=1e-9)
            out[sel] = np.where(hit.any(-1), (hit * it).sum(-1), np.nan)
    return out if out.ndim else float(out)


def methods(construction: str | None = None) -> list[str]:
    """Reference installation methods zsplan has current ratings for (optionally for one construction)."""
    return sorted({k[3] for k in capacity_table() if construction in (None, k[0])})


def constructions() -> list[str]:
    """Cable constructions zsplan has current ratings for."""
    return sorted({k[0] for k in capacity_table()})


def arrangements() -> list[str]:
    """Rows of BS 7671 Table 4C1 available for the grouping factor (the first is the default)."""
    t = factor_tables()["grouping"]
    return [k for k in t if k not in ("source", "circuits")]


def table_name(method="C", construction="twin-and-cpc", phases=1, insulation="thermoplastic",
               material="copper") -> str | None:
    """The BS 7671 table behind :func:`tabulated_current` for one combination, or None."""
    hit = capacity_table().get((construction, insulation, material, str(method), int(phases)))
    return hit[2] if hit else None


def _safe_row(x, rows, values):
    """Value of the first row at or beyond x (x clipped to the first row)."""
    rows = np.asarray(rows, dtype=float)
    values = np.asarray(values, dtype=float)
    x = np.asarray(x, dtype=float)
    j = np.searchsorted(rows, x * (1 - 1e-12), side="left")
    out = np.where(j >= len(rows), values[-1], values[np.minimum(j, len(rows) - 1)])
    return out


def ambient_factor(ambient_c, insulation="thermoplastic"):
    """Ca, BS 7671:2018 Table 4B1 (ambient air; from memory).

    The next hotter row; below 25 °C the 25 °C value; 0 beyond the table
    (the cable may not be used there).

    Examples
    --------
    >>> float(ambient_factor(30))      # BS 7671:2018 Table 4B1: 1.00 at the reference 30 °C
    1.0
    >>> float(ambient_factor(38))      # next hotter row, 40 °C: 0.87 (Table 4B1, from memory)
    0.87
    """
    t = factor_tables()["ambient"]
    amb, ins = np.broadcast_arrays(np.asarray(ambient_c, dtype=float), np.asarray(insulation))
    out = np.empty(amb.shape)
    for name in ("thermoplastic", "thermosetting"):
        sel = ins != "thermosetting" if name == "thermoplastic" else ins == "thermosetting"
        rows = np.asarray(t["ambient_c"], dtype=float)
        v = _safe_row(amb[sel], rows, t[name])
        out[sel] = np.where(amb[sel] > rows[-1], 0.0, v)
    return out if out.ndim else float(out)


def grouping_factor(n_circuits, arrangement="bunched"):
    """Cg for a group of n circuits, BS 7671:2018 Table 4C1.

    The next larger tabulated group; beyond 20 circuits the 20-circuit value
    (the table ends there: the caller notes it).

    Examples
    --------
    >>> grouping_factor([1, 2, 4, 8, 20]).tolist()   # BS 7671:2018 Table 4C1 row 1
    [1.0, 0.8, 0.65, 0.52, 0.38]
    """
    t = factor_tables()["grouping"]
    out = _safe_row(np.maximum(np.asarray(n_circuits, dtype=float), 1), t["circuits"], t[arrangement])
    return out if out.ndim else float(out)


def insulation_factor(length_m):
    """Ci for a cable totally surrounded by thermal insulation, BS 7671:2018 Table 52.2.

    The next longer tabulated length; 0.5 from 0.5 m up.

    Examples
    --------
    >>> insulation_factor([0.0, 0.1, 0.15, 2.0]).tolist()   # BS 7671:2018 Table 52.2 (from memory)
    [1.0, 0.78, 0.63, 0.5]
    """
    t = factor_tables()["thermal_insulation"]
    out = _safe_row(np.maximum(np.asarray(length_m, dtype=float), 0), t["length_m"], t["factor"])
    return out if out.ndim else float(out)


def overload_factor(family):
    """c_f: 0.725 for a BS 3036 fuse (Regulation 433.1.202), else 1."""
    out = np.where(np.asarray(family) == "bs3036", BS3036_FACTOR, 1.0)
    return out if out.ndim else float(out)


def current_capacity(it_a, ca=1.0, cg=1.0, ci=1.0):
    """:math:`I_z = I_t C_a C_g C_i`. [A]

    Examples
    --------
    >>> round(float(current_capacity(27.0, 0.94, 0.65, 1.0)), 3)   # hand-worked: 27 x 0.94 x 0.65
    16.497
    """
    out = np.asarray(it_a, dtype=float) * np.asarray(ca) * np.asarray(cg) * np.asarray(ci)
    return out if out.ndim else float(out)


def required_iz(rating_a, family="mcb", ring=False):
    """Least Iz the device calls for. [A]

    :math:`I_n / c_f` (:func:`overload_factor`); for a ring of
    :math:`I_n` ≤ 32 A, 20 A (Regulation 433.1.204).

    Examples
    --------
    >>> required_iz([32, 32, 15], ["mcb", "mcb", "bs3036"], [False, True, False]).round(2).tolist()
    [32.0, 20.0, 20.69]
    """
    In = np.asarray(rating_a, dtype=float)
    ring = np.asarray(ring, dtype=bool)
    out = np.where(ring & (In <= RING_MAX_IN_A), RING_MIN_IZ_A, In / overload_factor(family))
    return out if out.ndim else float(out)

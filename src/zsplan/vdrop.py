"""Voltage drop from the origin to the load, and its limits.

The drop per ampere and metre of a circuit is computed from the conductor
resistance at its operating temperature (the same IEC 60228 resistances and
temperature factors as the earth-fault loop):

.. math::

    r_\\theta &= r_{20}\\,[1 + \\alpha(\\theta - 20)] \\quad [m\\Omega/m]\\\\
    z &= k_p \\sqrt{r_\\theta^2 + x^2}, \\qquad
    k_p = 2 \\text{ (single-phase)}, \\; \\sqrt{3} \\text{ (three-phase, balanced)}

so that :math:`z` is BS 7671's "mV/A/m" [1]_: 2 × 7.41 × 1.20 = 17.8 ≈ 18
for 2.5 mm² and 2 × 12.1 × 1.20 = 29.0 ≈ 29 for 1.5 mm² (Table 4D1B
column 3, Table 4D5).  The reactance :math:`x` of one conductor is taken
from BS 7671 Table 4D1B (single-core cables, 25 mm² and above; from memory,
see ``data/cable_reactance.csv``); BS 7671 tabulates r only for 16 mm² and
below and for flat twin-and-cpc cable, and zsplan takes x = 0 there.  The
power factor of the load being unknown, the magnitude
:math:`\\sqrt{r^2 + x^2}` is used (its largest value over all power factors;
conservative).  The resistance is taken at the conductor's maximum operating
temperature (70 °C or 90 °C), as BS 7671's tables are; the lower temperature
of a lightly loaded cable is not credited.

The drop at the worst point of a circuit carrying the design current
:math:`I_b` is

.. math::

    V_d = I_b\\, z\\, L_{eff} / 1000 \\quad [V], \\qquad
    V_d\\% = 100\\,V_d / U, \\quad U = U_0 \\text{ (single-phase)},
    \\; \\sqrt{3} U_0 \\text{ (three-phase)}

with the *effective length* :math:`L_{eff}` of the load model (named
option, default ``"concentrated"``):

``"concentrated"`` (default, conservative)
    radial: all of :math:`I_b` at the far end, :math:`L_{eff} = L`;
    ring: all of :math:`I_b` at the ring's mid-point, each arm of length
    :math:`L/2` carrying :math:`I_b/2`, :math:`L_{eff} = L/4` [2]_.
``"uniform"``
    the load spread evenly along the cable.  Radial: the current at distance
    s is :math:`I_b(1 - s/L)`, so
    :math:`V_d = \\int_0^L I_b (1 - s/L) z\\,ds = I_b z L/2`,
    :math:`L_{eff} = L/2`.  Ring: by symmetry no current crosses the
    mid-point; each half is a radial of length :math:`L/2` with
    :math:`I_b/2` spread along it, :math:`V_d = (I_b/2) z (L/2)/2`,
    :math:`L_{eff} = L/8` (hand-worked).
``"outlets"``
    each of the circuit's n outlets draws :math:`I_b/n`.  The drop is the
    sum over the cable's segments of the current in the segment times the
    segment's impedance; by superposition that equals the sum over the loads
    of each load's current times the impedance of the path it shares with the
    worst point.  Radial (worst point: the last outlet, whose path contains
    every other outlet's): :math:`L_{eff} = \\frac1n \\sum_i L_i` with
    :math:`L_i` the cable length to outlet i.  Ring, outlet i at fraction
    :math:`a_i` of the ring's length: a load I at a splits into
    :math:`I(1-a)` over the arm of length :math:`aL` and :math:`Ia` over the
    other, so the drop at point b is
    :math:`I z L\\,(\\min(a, b) - a b)`; the worst point is the outlet that
    maximises :math:`L_{eff} = \\frac{L}{n}\\sum_i (\\min(a_i, b) - a_i b)`
    (a concave function of b that vanishes at the board, so its maximum lies
    at an outlet).  With no outlets the ``"concentrated"`` model is used.

Through sub-mains the percentages add: the drop at a sub-board (its
sub-main's drop plus the drop at the board feeding it) is added to the drop
of each circuit it feeds, the limits applying from the origin to the load
(BS 7671:2018 Appendix 4 section 6.4) [1]_.

Limits (percent of the nominal voltage), :data:`LIMITS_PCT`:
3 % lighting, 5 % other uses for an installation supplied from a public LV
network [1]_; 6 % and 8 % for a private supply (from memory).  The optional
0.005 %/m extension beyond 100 m of wiring (from memory) is not applied
(conservative).  A circuit with no design current given is checked at
:math:`I_b = I_n`, the device rating (conservative; noted in the results).

References
----------
.. [1] BS 7671:2018+A2:2022, Appendix 4 section 6.4, Table 4Ab (voltage drop
   limits), Tables 4D1B and 4D5 (mV/A/m); Regulation 525.
.. [2] BS 7671 practice (IET Guidance Note 1 / On-Site Guide): a ring's
   end-to-end resistance is seen as one quarter at its mid-point, the same
   parallel-arm result as :func:`zsplan.loop.r1r2` uses for R1+R2.
"""
from __future__ import annotations

import csv
import functools
from importlib import resources

import numpy as np

from .conductors import resistance_20c, temperature_factor

__all__ = [
    "LOAD_MODELS", "LIMITS_PCT", "load_models", "reactance", "mv_per_a_m",
    "effective_length", "radial_outlet_mean", "ring_outlet_factor",
    "voltage_drop", "percent", "limit_pct",
]

#: The load models of :func:`effective_length` (the first is the default).
LOAD_MODELS = ("concentrated", "uniform", "outlets")

#: Voltage-drop limits, percent of the nominal voltage.
LIMITS_PCT = {
    # BS 7671:2018 Appendix 4 section 6.4 / Table 4Ab, installations supplied from a public LV network
    "public": {"lighting": 3.0, "other": 5.0},
    # private LV supply: 6 % lighting, 8 % other uses - from memory
    "private": {"lighting": 6.0, "other": 8.0},
}

_SQRT3 = float(np.sqrt(3.0))


def load_models() -> list[str]:
    """Names of the voltage-drop load models (the first is the default)."""
    return list(LOAD_MODELS)


@functools.lru_cache(maxsize=1)
def _reactance_table() -> dict[str, tuple[np.ndarray, np.ndarray]]:
    text = resources.files("zsplan").joinpath("data", "cable_reactance.csv").read_text("utf-8")
    rows = csv.DictReader(line for line in text.splitlines() if not line.startswith("#"))
    out: dict[str, list] = {}
    for r in rows:
        out.setdefault(r["construction"], []).append(
            (float(r["csa_mm2"]), float(r["x_mv_per_a_m_1ph"])))
    return {k: (np.array([a for a, _ in v]), np.array([b for _, b in v])) for k, v in out.items()}


def reactance(csa_mm2, construction="twin-and-cpc"):
    """Reactance of one conductor [mΩ/m]; 0 where BS 7671 tabulates r only.

    Half the single-phase (mV/A/m)x of BS 7671 Table 4D1B column 3 (two
    conductors), for single-core cables of 25 mm² and above (from memory);
    0 for smaller sizes and for flat twin-and-cpc cable (Table 4D5 gives r
    only).

    Parameters
    ----------
    csa_mm2 : float or array-like
        Line conductor csa. [mm²]
    construction : str or array-like of str
        ``"twin-and-cpc"`` or ``"single-core"``.

    Returns
    -------
    float or numpy.ndarray
        [mΩ/m]
    """
    csa, cons = np.broadcast_arrays(np.asarray(csa_mm2, dtype=float), np.asarray(construction))
    out = np.zeros(csa.shape)
    for name, (sizes, x) in _reactance_table().items():
        sel = cons == name
        if np.any(sel):
            hit = np.isclose(csa[sel][..., None], sizes, rtol=0, atol=1e-9)
            out[sel] = np.where(hit.any(-1), (hit * x).sum(-1) / 2.0, 0.0)
    return out if out.ndim else float(out)


def mv_per_a_m(csa_mm2, material="copper", conductor_c=70.0, phases=1,
               construction="twin-and-cpc", alpha="bs7671", with_reactance=True):
    """Voltage drop per ampere and metre of run, BS 7671's "mV/A/m". [mV/(A·m)]

    .. math::

        z = k_p \\sqrt{(r_{20}[1 + \\alpha(\\theta - 20)])^2 + x^2},
        \\quad k_p = 2 \\;(1\\text{-phase}),\\; \\sqrt 3 \\;(3\\text{-phase})

    Parameters
    ----------
    csa_mm2 : float or array-like
        Line conductor csa. [mm²]
    material : str or array-like of str
        ``"copper"`` or ``"aluminium"``.
    conductor_c : float or array-like
        Conductor temperature. [°C]  BS 7671's tables use the maximum
        operating temperature (70 °C thermoplastic).
    phases : int or array-like
        1 (line and neutral) or 3 (balanced three-phase, line-to-line drop).
    construction : str or array-like of str
        For the reactance, see :func:`reactance`.
    alpha : str
        Temperature-coefficient method, see :func:`zsplan.conductors.temperature_factor`.
    with_reactance : bool
        False to use the resistive component alone.

    Returns
    -------
    float or numpy.ndarray

    References
    ----------
    .. [1] BS 7671:2018+A2:2022, Appendix 4, Tables 4D1B and 4D5.

    Examples
    --------
    >>> round(float(mv_per_a_m(2.5)), 2)      # BS 7671 Table 4D1B col 3 prints 18
    17.78
    >>> round(float(mv_per_a_m(1.5)), 2)      # BS 7671 Table 4D1B col 3 prints 29
    29.04
    """
    r = np.asarray(resistance_20c(csa_mm2, material)) * temperature_factor(conductor_c, material, alpha)
    x = reactance(csa_mm2, construction) if with_reactance else 0.0
    k = np.where(np.asarray(phases) == 3, _SQRT3, 2.0)
    out = k * np.hypot(r, x)
    return out if np.ndim(out) else float(out)


def radial_outlet_mean(owner, cable_m, n):
    """Per circuit, the mean cable length to its outlets :math:`\\frac1n\\sum_i L_i`. [m]

    Parameters
    ----------
    owner : array-like of int
        Circuit index of each outlet.
    cable_m : array-like
        Cable length from the board to each outlet. [m]
    n : int
        Number of circuits.

    Returns
    -------
    numpy.ndarray of shape (n,)
        NaN for a circuit with no outlets.
    """
    owner = np.asarray(owner, dtype=np.intp)
    count = np.bincount(owner, minlength=n).astype(float)
    total = np.bincount(owner, weights=np.asarray(cable_m, dtype=float), minlength=n)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(count > 0, total / count, np.nan)


def ring_outlet_factor(owner, fraction, n):
    """Per ring, :math:`\\max_b \\frac1n \\sum_i (\\min(a_i, b) - a_i b)` over its outlets.

    ``fraction`` holds each outlet's position :math:`a_i` round the ring
    (0..1 of the ring's length from the board; NaN entries are ignored).  The worst point b is sought
    among the outlets; with the outlets sorted, :math:`\\sum_i \\min(a_i, a_k)
    = \\sum_{i \\le k} a_i + (n - k)\\,a_k`.

    Returns
    -------
    numpy.ndarray of shape (n,)
        NaN for a circuit with no outlets; 1/4 for a single outlet at the
        mid-point (the ``"concentrated"`` ring).
    """
    owner = np.asarray(owner, dtype=np.intp)
    a = np.asarray(fraction, dtype=float)
    keep = np.isfinite(a)
    owner, a = owner[keep], a[keep]
    out = np.full(n, np.nan)
    if owner.size == 0:
        return out
    order = np.lexsort((a, owner))
    o, a = owner[order], a[order]
    count = np.bincount(o, minlength=n)
    start = np.cumsum(count) - count
    rank = np.arange(o.size) - start[o] + 1                    # k, 1-based within the ring
    csum = np.cumsum(a)
    before = csum - (csum[start[o]] - a[start[o]])             # sum of a_i for i <= k
    total = np.bincount(o, weights=a, minlength=n)
    f = (before + (count[o] - rank) * a - a * total[o]) / count[o]
    best = np.full(n, -np.inf)
    np.maximum.at(best, o, f)
    return np.where(count > 0, best, np.nan)


def effective_length(length_m, ring=False, model="concentrated", outlet_mean_m=np.nan,
                     ring_factor=np.nan):
    """Length which, carrying the whole design current, gives the circuit's worst drop. [m]

    See the module docstring for the load models.

    Parameters
    ----------
    length_m : array-like
        Radial: cable length to the far end; ring: the ring's whole length. [m]
    ring : array-like of bool
    model : str
        ``"concentrated"``, ``"uniform"`` or ``"outlets"``.
    outlet_mean_m : array-like
        From :func:`radial_outlet_mean` (``"outlets"`` only). [m]
    ring_factor : array-like
        From :func:`ring_outlet_factor` (``"outlets"`` only).

    Examples
    --------
    >>> effective_length([40.0, 40.0], [False, True]).tolist()
    [40.0, 10.0]
    >>> effective_length([40.0, 40.0], [False, True], "uniform").tolist()
    [20.0, 5.0]
    """
    if model not in LOAD_MODELS:
        raise ValueError(f"unknown voltage-drop load model {model!r}; choose one of {load_models()}")
    L = np.asarray(length_m, dtype=float)
    ring = np.asarray(ring, dtype=bool)
    radial_f, ring_f = (1.0, 0.25) if model != "uniform" else (0.5, 0.125)
    out = L * np.where(ring, ring_f, radial_f)
    if model == "outlets":
        mean = np.broadcast_to(np.asarray(outlet_mean_m, dtype=float), out.shape)
        rf = np.broadcast_to(np.asarray(ring_factor, dtype=float), out.shape)
        by_outlets = np.where(ring, L * rf, mean)
        out = np.where(np.isfinite(by_outlets), by_outlets, out)
    return out


def voltage_drop(current_a, mv_per_a_m_, length_m):
    """:math:`V_d = I\\,z\\,L / 1000`. [V]

    Parameters
    ----------
    current_a : array-like
        Design current. [A]
    mv_per_a_m_ : array-like
        From :func:`mv_per_a_m`. [mV/(A·m)]
    length_m : array-like
        Effective length, :func:`effective_length`. [m]

    Examples
    --------
    >>> round(float(voltage_drop(20.0, 18.0, 30.0)), 2)   # hand-worked: 20 x 18 x 30 / 1000
    10.8
    """
    out = np.asarray(current_a, dtype=float) * np.asarray(mv_per_a_m_) * np.asarray(length_m) / 1000.0
    return out if out.ndim else float(out)


def percent(vd_v, u0_v=230.0, phases=1):
    """Drop as percent of the nominal voltage: U0 single-phase, √3·U0 three-phase. [%]"""
    u = np.asarray(u0_v, dtype=float) * np.where(np.asarray(phases) == 3, _SQRT3, 1.0)
    out = 100.0 * np.asarray(vd_v, dtype=float) / u
    return out if out.ndim else float(out)


def limit_pct(use, lighting_pct=LIMITS_PCT["public"]["lighting"],
              other_pct=LIMITS_PCT["public"]["other"]):
    """The limit for each circuit: ``lighting_pct`` for lighting, else ``other_pct``. [%]

    Examples
    --------
    >>> limit_pct(["lighting", "sockets"]).tolist()    # BS 7671:2018 Appendix 4 Table 4Ab
    [3.0, 5.0]
    """
    out = np.where(np.asarray(use) == "lighting", float(lighting_pct), float(other_pct))
    return out if out.ndim else float(out)

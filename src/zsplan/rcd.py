"""Residual current devices: fault protection in TT systems and by RCD.

Where an RCD provides fault protection (automatic disconnection), BS 7671
requires the touch voltage at the rated residual operating current
:math:`I_{\\Delta n}` not to exceed 50 V [1]_:

.. math::

    R_A\\, I_{\\Delta n} \\le 50\\ \\text{V} \\quad \\text{(TT, Regulation 411.5.3)},
    \\qquad Z_s\\, I_{\\Delta n} \\le 50\\ \\text{V} \\quad
    \\text{(Regulation 411.4.5, Table 41.5)}

so :math:`R_{A,max} = Z_{s,max} = 50/I_{\\Delta n}`: 1667 Ω at 30 mA, 500 Ω at
100 mA, 167 Ω at 300 mA, 100 Ω at 500 mA (Table 41.5; zsplan compares the
unrounded 50/IΔn).  :math:`R_A` is the sum of the resistances of the earth
electrode and the protective conductor to the exposed-conductive-parts;
zsplan takes the plan's electrode resistance (the protective conductor adds
milliohms to tens of ohms), or, where none is given, the board's Ze — an
upper bound, since the fault loop in a TT system includes the electrode.

An RCD operates within 0.3 s at :math:`I_{\\Delta n}`, 0.15 s at
:math:`2 I_{\\Delta n}` and 0.04 s at :math:`5 I_{\\Delta n}` (general,
non-delayed type; BS EN 61008-1 and BS EN 61009-1, Table 1) [2]_;
:func:`operating_time` steps through those points.  With
:math:`Z_s \\le 50/I_{\\Delta n}` at 230 V the earth fault current
:math:`C_{min} U_0/Z_s \\ge 4.37\\, I_{\\Delta n}` and the RCD operates
within 0.15 s, inside TT's 0.2 s.

Which device decides the disconnection check (:func:`gives_fault_protection`):
in a TT system an RCD on the circuit provides fault protection (the
overcurrent device seldom can at a TT loop impedance); in TN systems the
overcurrent device's check stays primary and an RCD is additional protection
(Regulation 415.1), unless the plan says the RCD provides fault protection
(Regulation 411.4.5).

References
----------
.. [1] BS 7671:2018+A2:2022, Regulations 411.4.5, 411.5.3, 415.1 and
   Table 41.5.
.. [2] BS EN 61008-1:2012 and BS EN 61009-1:2012, Table 1 (maximum break
   times); ``data/rcd_times.yaml``.
"""
from __future__ import annotations

import functools
from importlib import resources

import numpy as np
import yaml

__all__ = [
    "TOUCH_VOLTAGE_V", "max_resistance", "touch_voltage", "break_times",
    "operating_time", "current_for_time", "gives_fault_protection",
]

#: Conventional touch voltage limit, BS 7671:2018 Regulations 411.4.5 and 411.5.3. [V]
TOUCH_VOLTAGE_V = 50.0


def max_resistance(idn_a, touch_v=TOUCH_VOLTAGE_V):
    """Largest :math:`R_A` (TT) or :math:`Z_s` (RCD fault protection): :math:`50/I_{\\Delta n}`. [Ω]

    Examples
    --------
    >>> round(float(max_resistance(0.03)))     # BS 7671:2018 Table 41.5: 1667 ohm
    1667
    >>> float(max_resistance(0.1))             # BS 7671:2018 Table 41.5: 500 ohm
    500.0
    """
    out = float(touch_v) / np.asarray(idn_a, dtype=float)
    return out if np.ndim(out) else float(out)


def touch_voltage(resistance_ohm, idn_a):
    """:math:`R\\, I_{\\Delta n}`, compared with 50 V. [V]"""
    out = np.asarray(resistance_ohm, dtype=float) * np.asarray(idn_a, dtype=float)
    return out if out.ndim else float(out)


@functools.lru_cache(maxsize=1)
def break_times() -> dict[str, np.ndarray]:
    """Maximum break times per RCD kind: rows of (multiple of IΔn, time s)."""
    text = resources.files("zsplan").joinpath("data", "rcd_times.yaml").read_text("utf-8")
    return {k: np.asarray(v, dtype=float) for k, v in yaml.safe_load(text).items()}


def _by_kind(kind, shape, fn):
    """Apply fn(table, mask) for each RCD kind present (kind scalar or array)."""
    kinds = np.broadcast_to(np.asarray(kind), shape)
    out = np.empty(shape)
    for k in np.unique(kinds):
        try:
            table = break_times()[str(k)]
        except KeyError:
            raise ValueError(f"unknown RCD kind {str(k)!r}; choose one of {sorted(break_times())}") from None
        sel = kinds == k
        out[sel] = fn(table, sel)
    return out


def operating_time(residual_current_a, idn_a, kind="general"):
    """Longest time an RCD may take at a residual current. [s]

    The time of the highest tabulated multiple of :math:`I_{\\Delta n}` not
    above the current (a step function: between the standard's test points
    only the lower point's time is guaranteed); ``inf`` below
    :math:`I_{\\Delta n}`.

    Parameters
    ----------
    residual_current_a, idn_a : array-like
        Residual (earth fault) current and rated residual operating current. [A]
    kind : str or array-like of str
        ``"general"`` (non-delayed) or ``"selective"`` (time-delayed, type S).

    Examples
    --------
    >>> operating_time([0.02, 0.03, 0.1, 0.2], 0.03).tolist()   # BS EN 61008-1 Table 1
    [inf, 0.3, 0.15, 0.04]
    """
    ratio = np.asarray(residual_current_a, dtype=float) / np.asarray(idn_a, dtype=float)

    def fn(table, sel):
        j = np.searchsorted(table[:, 0], ratio[sel] * (1 + 1e-12), side="right")   # rows at or below
        return np.where(j > 0, table[np.maximum(j - 1, 0), 1], np.inf)

    out = _by_kind(kind, ratio.shape, fn)
    return out if out.ndim else float(out)


def current_for_time(idn_a, time_s, kind="general"):
    """Least residual current that makes the RCD operate within t. [A]

    ``inf`` where t is shorter than the fastest tabulated time.
    """
    t, idn = np.broadcast_arrays(np.asarray(time_s, dtype=float), np.asarray(idn_a, dtype=float))

    def fn(table, sel):
        ok = table[:, 1][None, :] <= t[sel][:, None]
        first = np.where(ok.any(-1), np.argmax(ok, axis=-1), -1)
        return np.where(first >= 0, table[np.maximum(first, 0), 0], np.inf) * idn[sel]

    out = _by_kind(kind, t.shape, fn)
    return out if out.ndim else float(out)


def gives_fault_protection(earthing, idn_a, flag=None):
    """Whether each circuit's RCD provides fault protection (decides disconnection).

    Parameters
    ----------
    earthing : str or array-like
        ``"TN-S"``, ``"TN-C-S"`` or ``"TT"``.
    idn_a : array-like
        Rated residual operating current; NaN where the circuit has no RCD.
    flag : array-like of {True, False, None}, optional
        The plan's choice per circuit; ``None`` (default) means "TT only".

    Examples
    --------
    >>> gives_fault_protection(["TT", "TN-C-S", "TN-C-S"], [0.03, 0.03, 0.03],
    ...                        [None, None, True]).tolist()
    [True, False, True]
    """
    idn = np.asarray(idn_a, dtype=float)
    has = np.isfinite(idn) & (idn > 0)
    tt = np.asarray(earthing) == "TT"
    if flag is None:
        return has & tt
    f = np.asarray(flag, dtype=object)
    f = np.broadcast_to(f, np.broadcast_shapes(f.shape, has.shape))
    auto = np.array([v is None for v in f.ravel()], dtype=bool).reshape(f.shape)
    chosen = np.array([bool(v) for v in f.ravel()], dtype=bool).reshape(f.shape)
    return has & np.where(auto, tt, chosen)

"""Protective conductor: the adiabatic check of its cross-section.

A protective conductor must carry the earth fault current for the time the
device takes to clear it without its insulation exceeding its limiting
temperature.  With no heat lost during the fault (adiabatic), BS 7671
Regulation 543.1.3 [1]_ requires

.. math::

    S \\ge S_{min} = \\frac{\\sqrt{I^2 t}}{k}

with :math:`I^2 t` the energy let through in the fault [A²s] and k the
factor of IEC 60364-5-54 Annex A [2]_:

.. math::

    k = \\sqrt{\\frac{Q_c(\\beta + 20)}{\\rho_{20}}
        \\ln\\frac{\\beta + \\theta_f}{\\beta + \\theta_i}}

(:math:`Q_c` volumetric heat capacity [J/(°C·mm³)], β the reciprocal of the
temperature coefficient at 0 °C [°C], :math:`\\rho_{20}` resistivity at
20 °C [Ω·mm], :math:`\\theta_i, \\theta_f` initial and final temperatures
[°C]; constants in ``data/kvalues.yaml``).  It reproduces BS 7671's
tabulated k: 115/143/176 for copper and 76/94/116 for aluminium (Tables
43.1 and 54.2-54.4).

Temperatures (:func:`cpc_temperatures`): a cpc incorporated in a cable or
bunched with cables starts at the cable's maximum operating temperature
(70 °C thermoplastic, 90 °C thermosetting; Table 54.3); a separate cpc starts
at 30 °C (Table 54.2).  It may reach 160 °C (thermoplastic; 140 °C above
300 mm²) or 250 °C (thermosetting).

Fault energy (:func:`let_through`): :math:`I^2 t = I_f^2\\,t(I_f)`, with
:math:`I_f` the circuit's minimum prospective earth fault current
(:math:`C_{min} U_0 / Z_s` at its worst point, from the loop engine) and
:math:`t(I_f)` the device's longest operating time at that current from its
characteristic.  A lower current gives a longer time, and for fuses (whose
:math:`I^2 t` falls as the current rises towards their pre-arcing region)
the far-end fault is usually the worse case.  Where the current reaches a
circuit-breaker's instantaneous region the characteristic gives t = 0.1 s,
and :math:`I_f^2 \\cdot 0.1` overstates the energy a current-limiting device
lets through (conservative).  A device's published let-through energy may
be passed instead (``let_through_a2s``); zsplan's device files do not carry
it yet (a documented extension).

References
----------
.. [1] BS 7671:2018+A2:2022, Regulation 543.1.3, Tables 43.1 and 54.2-54.5.
.. [2] IEC 60364-5-54:2011, Annex A (method for deriving the factor k).
"""
from __future__ import annotations

import functools
from importlib import resources

import numpy as np
import yaml

__all__ = [
    "constants", "k_factor", "cpc_temperatures", "k_for_cpc", "let_through",
    "min_csa", "INSTANTANEOUS_TIME_S",
]

#: Operating time that marks a circuit-breaker's instantaneous region in the
#: device data (IEC 60898-1 Table 7 test e: trips in less than 0.1 s). [s]
INSTANTANEOUS_TIME_S = 0.1


@functools.lru_cache(maxsize=1)
def constants() -> dict:
    """The contents of ``data/kvalues.yaml``."""
    text = resources.files("zsplan").joinpath("data", "kvalues.yaml").read_text("utf-8")
    return yaml.safe_load(text)


def _per_material(material, key):
    mats = constants()["materials"]
    m = np.asarray(material)
    if m.ndim == 0:
        return float(mats[str(m)][key])
    out = np.empty(m.shape)
    for name in np.unique(m):
        out[m == name] = mats[str(name)][key]
    return out


def k_factor(material, theta_i_c, theta_f_c):
    """The adiabatic factor k, IEC 60364-5-54 Annex A. [A·s^0.5/mm²]

    .. math::

        k = \\sqrt{\\frac{Q_c(\\beta + 20)}{\\rho_{20}}
            \\ln\\frac{\\beta + \\theta_f}{\\beta + \\theta_i}}

    Parameters
    ----------
    material : str or array-like of str
        ``"copper"``, ``"aluminium"`` or ``"steel"``.
    theta_i_c, theta_f_c : float or array-like
        Initial and final conductor temperatures. [°C]

    References
    ----------
    .. [1] IEC 60364-5-54:2011, Annex A.

    Examples
    --------
    >>> round(float(k_factor("copper", 70, 160)), 1)   # BS 7671:2018 Table 54.3 prints 115
    114.8
    """
    beta = _per_material(material, "beta_c")
    qc = _per_material(material, "qc_j_per_c_mm3")
    rho = _per_material(material, "rho20_ohm_mm")
    ti = np.asarray(theta_i_c, dtype=float)
    tf = np.asarray(theta_f_c, dtype=float)
    out = np.sqrt(qc * (beta + 20.0) / rho * np.log((beta + tf) / (beta + ti)))
    return out if np.ndim(out) else float(out)


def cpc_temperatures(insulation="thermoplastic", temp_rating_c=70.0, cpc_with_line=True,
                     cpc_mm2=1.0):
    """Initial and final temperatures of a protective conductor in a fault. [°C]

    Incorporated or bunched (BS 7671:2018 Table 54.3): θi = the cable's
    maximum operating temperature.  Separate (Table 54.2): θi = 30 °C.
    θf = 160 °C thermoplastic (140 °C above 300 mm²), 250 °C thermosetting.

    Returns
    -------
    (theta_i, theta_f) : tuple of float or numpy.ndarray
    """
    data = constants()
    ins, rating, with_line, csa = np.broadcast_arrays(
        np.asarray(insulation), np.asarray(temp_rating_c, dtype=float),
        np.asarray(cpc_with_line, dtype=bool), np.asarray(cpc_mm2, dtype=float))
    fin = data["final_c"]
    big = csa > 300.0
    tf = np.where(ins == "thermosetting",
                  np.where(big, fin["thermosetting"]["above_300_mm2"], fin["thermosetting"]["up_to_300_mm2"]),
                  np.where(big, fin["thermoplastic"]["above_300_mm2"], fin["thermoplastic"]["up_to_300_mm2"]))
    ti = np.where(with_line, rating, float(data["separate_initial_c"]))
    if ti.ndim == 0:
        return float(ti), float(tf)
    return ti.astype(float), tf.astype(float)


def k_for_cpc(material="copper", insulation="thermoplastic", temp_rating_c=70.0,
              cpc_with_line=True, cpc_mm2=1.0):
    """k of a protective conductor from its material, insulation and situation.

    :func:`k_factor` at the temperatures of :func:`cpc_temperatures`.

    Examples
    --------
    >>> round(float(k_for_cpc("copper", "thermosetting", 90, False)))   # BS 7671 Table 54.2: 176
    176
    """
    ti, tf = cpc_temperatures(insulation, temp_rating_c, cpc_with_line, cpc_mm2)
    return k_factor(material, ti, tf)


def let_through(fault_current_a, time_s, let_through_a2s=None):
    """Fault energy :math:`I^2 t`. [A²s]

    Parameters
    ----------
    fault_current_a : array-like
        Earth fault current. [A]
    time_s : array-like
        The device's operating time at that current (``inf`` where it is not
        shown to operate: the energy is then infinite). [s]
    let_through_a2s : array-like, optional
        The device's published let-through energy at that current; used,
        where finite, in place of :math:`I^2 t` when t is in the
        instantaneous region (t ≤ 0.1 s).

    Examples
    --------
    >>> float(let_through(400.0, 0.1))     # hand-worked: 400^2 x 0.1
    16000.0
    """
    i = np.asarray(fault_current_a, dtype=float)
    t = np.asarray(time_s, dtype=float)
    with np.errstate(invalid="ignore"):
        out = np.where(np.isinf(t), np.inf, i * i * t)
    if let_through_a2s is not None:
        lt = np.asarray(let_through_a2s, dtype=float)
        out = np.where(np.isfinite(lt) & (t <= INSTANTANEOUS_TIME_S), lt, out)
    return out if out.ndim else float(out)


def min_csa(i2t_a2s, k):
    """Least protective-conductor csa :math:`S = \\sqrt{I^2 t}/k`. [mm²]

    Examples
    --------
    >>> round(float(min_csa(16000.0, 115.0)), 3)   # hand-worked: sqrt(16000)/115
    1.1
    """
    out = np.sqrt(np.asarray(i2t_a2s, dtype=float)) / np.asarray(k, dtype=float)
    return out if out.ndim else float(out)

"""Required disconnection time of a circuit, BS 7671 Table 41.1.

A final circuit of rating In ≤ 63 A with socket-outlets, or In ≤ 32 A
supplying only fixed equipment (lighting counts as fixed equipment), must
disconnect within the Table 41.1 time for its earthing system and nominal
voltage to earth U0 (0.4 s TN and 0.2 s TT at 230 V).  Distribution circuits
and larger final circuits must disconnect within 5 s (TN) or 1 s (TT).

References
----------
.. [1] BS 7671:2018+A2:2022, Regulations 411.3.2.2-411.3.2.4 and Table 41.1.
.. [2] IEC 60364-4-41:2005, Table 41.1.
"""
from __future__ import annotations

import functools
from importlib import resources

import numpy as np
import yaml

__all__ = ["required_time", "table"]


@functools.lru_cache(maxsize=1)
def table() -> dict:
    """The Table 41.1 data file as a dict."""
    text = resources.files("zsplan").joinpath("data", "disconnection_times.yaml").read_text("utf-8")
    return yaml.safe_load(text)


def _system(earthing):
    e = np.asarray(earthing)
    return np.where(e == "TT", "TT", "TN")


def required_time(u0_v, earthing, use, rating_a):
    """Maximum disconnection time [s] for each circuit.

    Parameters
    ----------
    u0_v : float or array-like
        Nominal a.c. voltage to earth. [V]
    earthing : str or array-like
        ``"TN-S"``, ``"TN-C-S"`` or ``"TT"``.
    use : str or array-like
        ``"sockets"``, ``"fixed"``, ``"lighting"`` or ``"distribution"``.
    rating_a : float or array-like
        Rated current In of the protective device. [A]

    Returns
    -------
    numpy.ndarray or float

    Raises
    ------
    ValueError
        For U0 of 50 V or less, where Table 41.1 sets no time.

    Examples
    --------
    >>> float(required_time(230, "TN-C-S", "sockets", 32))   # BS 7671 Table 41.1
    0.4
    >>> float(required_time(230, "TT", "fixed", 40))          # Regulation 411.3.2.4
    1.0
    """
    data = table()
    u0, sysname, use_a, rating = np.broadcast_arrays(
        np.asarray(u0_v, float), _system(earthing), np.asarray(use), np.asarray(rating_a, float))
    if np.any(u0 <= 50):
        raise ValueError("BS 7671 Table 41.1 sets no disconnection time for U0 of 50 V or less")
    lim = data["final_circuit_limits"]
    final = ((use_a == "sockets") & (rating <= lim["sockets_max_a"])) | (
        np.isin(use_a, ("fixed", "lighting")) & (rating <= lim["fixed_max_a"]))
    tn = np.empty(u0.shape)
    tt = np.empty(u0.shape)
    for band in data["bands"]:
        sel = (u0 > band["u0_above"]) & (u0 <= float(band["u0_max"]))
        tn[sel], tt[sel] = band["TN"], band["TT"]
    table_time = np.where(sysname == "TT", tt, tn)
    other = np.where(sysname == "TT", data["other_circuits"]["TT"], data["other_circuits"]["TN"])
    out = np.where(final, table_time, other)
    return out if out.ndim else float(out)

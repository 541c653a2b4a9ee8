"""Conductor resistance: tabulated values at 20 °C and temperature correction.

The resistance of a conductor at temperature θ is

.. math::

    R_\\theta = R_{20}\\,[1 + \\alpha\\,(\\theta - 20)]

with :math:`R_{20}` the maximum DC resistance of IEC 60228 [1]_ and α the
resistance-temperature coefficient.  Two named methods give α:

``"bs7671"`` (default)
    α = 0.004 /K for copper and aluminium: the rounded coefficient behind the
    multipliers of BS 7671 practice — 1.20 at 70 °C, 1.28 at 90 °C, 1.04 at
    30 °C and the test-temperature factors 0.96 (10 °C) and 1.02 (25 °C) [2]_.
``"iec60228"``
    α = 0.00393 /K for annealed copper and 0.00403 /K for aluminium,
    IEC 60228 Annex B [1]_.

References
----------
.. [1] IEC 60228:2004, *Conductors of insulated cables*, Tables 1 and 2 and
   Annex B.
.. [2] BS 7671:2018+A2:2022, Appendix 3 and IET On-Site Guide Appendix I,
   operating-temperature multipliers (1 + 0.004 (θ − 20)); the multipliers are
   derived arithmetic, the 0.004 /K coefficient behind them is from memory.
"""
from __future__ import annotations

import csv
import functools
from importlib import resources

import numpy as np

__all__ = [
    "ALPHA", "alpha_methods", "temperature_factor", "resistance_20c",
    "csa_available", "check_conductor", "design_temperatures", "one_material", "resistances_20c",
]

#: α per method and material [1/K].
ALPHA: dict[str, dict[str, float]] = {
    "bs7671": {"copper": 0.004, "aluminium": 0.004},       # BS 7671 practice (see module doc)
    "iec60228": {"copper": 0.00393, "aluminium": 0.00403},  # IEC 60228:2004 Annex B
}

#: Temperature of a protective conductor not incorporated in a cable and not
#: bunched with live conductors [°C]: BS 7671:2018 Table 54.2 initial
#: temperature 30 °C.
SEPARATE_CPC_TEMPERATURE_C = 30.0


def one_material(material) -> str | None:
    """The material of ``material`` when it is one string or an array of one value, else None."""
    if type(material) is str:
        return material
    if np.ndim(material) == 0:
        return str(material)
    m = np.asarray(material)
    if m.size == 0:
        return None
    first = m.flat[0]
    if m.dtype.kind == "U" and m.flags.c_contiguous:
        # every element equals the one before it: compare the raw characters as
        # integers, shifted by one element (a string comparison costs ten times more)
        words = m.reshape(-1).view(np.uint64 if m.itemsize % 8 == 0 else np.uint32)
        step = len(words) // m.size
        same = not np.count_nonzero(np.not_equal(words[step:], words[:-step]))
    else:
        same = bool(np.all(m == first))
    return str(first) if same else None


def alpha_methods() -> list[str]:
    """Names of the available α methods (the first is the default)."""
    return list(ALPHA)


def temperature_factor(theta_c, material="copper", method: str = "bs7671", scale: float = 1.0, out=None):
    """Ratio :math:`R_\\theta / R_{20} = 1 + \\alpha(\\theta - 20)`.

    Parameters
    ----------
    theta_c : float or array-like
        Conductor temperature. [°C]
    material : str or array-like of str
        ``"copper"`` or ``"aluminium"``.
    method : str
        ``"bs7671"`` (α = 0.004 /K) or ``"iec60228"``.
    scale : float
        A constant the factor is multiplied by (``1/1000`` turns mΩ/m into
        Ω/m); other than 1, an array factor is formed as
        ``θ·(α·scale) + (1 − 20α)·scale``, two array operations instead of four.
    out : numpy.ndarray, optional
        Array for an array result of one material.

    Returns
    -------
    float or numpy.ndarray
        The dimensionless factor (times ``scale``).

    Examples
    --------
    >>> round(float(temperature_factor(70)), 4)   # BS 7671 multiplier 1.20
    1.2
    """
    try:
        table = ALPHA[method]
    except KeyError:
        raise ValueError(f"unknown alpha method {method!r}; choose one of {alpha_methods()}") from None
    theta = np.asarray(theta_c, dtype=float)
    mat = material if type(material) is str else np.asarray(material)
    if type(mat) is str or mat.ndim == 0:
        alpha = table[mat if type(mat) is str else str(mat.item())]
        if theta.ndim == 0:
            return (1.0 + alpha * (float(theta) - 20.0)) * scale
        if scale != 1.0:
            out = np.multiply(theta, alpha * scale, out=out)
            out += (1.0 - 20.0 * alpha) * scale
            return out
        out = np.subtract(theta, 20.0, out=out)
        out *= alpha
        out += 1.0
        return out
    alpha = np.where(mat == "aluminium", table["aluminium"], table["copper"])
    out = 1.0 + alpha * (theta - 20.0)
    if scale != 1.0:
        out = out * scale
    return out if out.ndim else float(out)


@functools.lru_cache(maxsize=1)
def _table() -> dict[tuple[str, int], tuple[np.ndarray, np.ndarray]]:
    text = resources.files("zsplan").joinpath("data", "conductors.csv").read_text(encoding="utf-8")
    rows = csv.DictReader(line for line in text.splitlines() if not line.startswith("#"))
    grouped: dict[tuple[str, int], list[tuple[float, float]]] = {}
    for r in rows:
        grouped.setdefault((r["material"], int(r["class"])), []).append(
            (float(r["csa_mm2"]), float(r["r_mohm_per_m_20c"])))
    return {k: (np.array([a for a, _ in v]), np.array([b for _, b in v])) for k, v in grouped.items()}


def csa_available(material: str = "copper", conductor_class: int = 2) -> list[float]:
    """Cross-sectional areas tabulated for a material and class. [mm²]"""
    return _table()[(material, conductor_class)][0].tolist()


def check_conductor(csa_mm2: float, material: str = "copper", conductor_class: int = 2) -> str | None:
    """``None`` when the conductor is tabulated, else a message saying what is."""
    key = (material, conductor_class)
    if key not in _table():
        return f"no conductor data for {material} class {conductor_class}"
    sizes = _table()[key][0]
    if not np.any(np.isclose(sizes, csa_mm2, rtol=0, atol=1e-9)):
        listed = ", ".join(f"{s:g}" for s in sizes)
        return f"no {material} conductor of {csa_mm2:g} mm²; IEC 60228 sizes are {listed} mm²"
    return None


def resistance_20c(csa_mm2, material="copper", conductor_class: int = 2):
    """Maximum DC resistance at 20 °C per metre, IEC 60228 [1]_.

    Parameters
    ----------
    csa_mm2 : float or array-like
        Nominal cross-sectional area. [mm²]
    material : str or array-like of str
        ``"copper"`` or ``"aluminium"``.
    conductor_class : int
        1 (solid) or 2 (stranded); they differ only from 185 mm².

    Returns
    -------
    float or numpy.ndarray
        Resistance. [mΩ/m]

    Raises
    ------
    ValueError
        For a size that IEC 60228 does not list for the material.
    """
    m = one_material(material)
    if m is not None:
        # one material (the usual case): a single look-up in the table
        sizes, res = _table()[(m, conductor_class)]
        csa = np.asarray(csa_mm2, dtype=float)
        if csa.ndim:
            exact = _exact_r20((csa,), m, conductor_class)
            if exact is not None:
                return exact[0]
        if csa.ndim == 0:
            idx = min(int(np.searchsorted(sizes + 1e-9, float(csa))), len(sizes) - 1)
            if not abs(sizes[idx] - float(csa)) <= 1e-9:
                raise ValueError(check_conductor(float(csa), m, conductor_class))
            return float(res[idx])
        idx = _size_index(sizes, csa, m, conductor_class)
        out = np.take(sizes, idx, mode="wrap")
        out -= csa
        np.abs(out, out=out)
        ok = out <= 1e-9
        if not ok.all():
            raise ValueError(check_conductor(float(csa[~ok].ravel()[0]), m, conductor_class))
        return np.take(res, idx, out=out, mode="wrap")
    csa, mat = np.broadcast_arrays(np.asarray(csa_mm2, dtype=float), np.asarray(material))
    out = np.full(csa.shape, np.nan)
    for m in np.unique(mat):
        sizes, res = _table()[(str(m), conductor_class)]
        sel = mat == m
        idx = np.searchsorted(sizes, csa[sel])
        idx = np.clip(idx, 0, len(sizes) - 1)
        ok = np.isclose(sizes[idx], csa[sel], rtol=0, atol=1e-9)
        if not np.all(ok):
            bad = np.asarray(csa[sel])[~ok].ravel()[0]
            raise ValueError(check_conductor(float(bad), str(m), conductor_class))
        out[sel] = res[idx]
    return out if out.ndim else float(out)


def resistances_20c(*csa_mm2, material="copper", conductor_class: int = 2, out=None):
    """:func:`resistance_20c` of several csa arrays of the same material(s) at once. [mΩ/m]

    Equal to ``[resistance_20c(c, material, conductor_class) for c in csa_mm2]``;
    when every csa is exactly a tabulated size, one check covers them all.
    ``out``, an array of ``len(csa_mm2)`` rows of the csa arrays' shape,
    receives the results (returned as its rows).
    """
    m = one_material(material)
    if m is not None:
        arrays = [c if type(c) is np.ndarray and c.dtype == np.float64 else np.asarray(c, dtype=float)
                  for c in csa_mm2]
        shape = arrays[0].shape
        if shape and all(a.shape == shape for a in arrays):
            exact = _exact_r20(arrays, m, conductor_class, out)
            if exact is not None:
                return exact
    found = [resistance_20c(c, material, conductor_class) for c in csa_mm2]
    if out is None:
        return found
    for row, r in zip(out, found):
        row[...] = r
    return list(out)


#: The exact look-up keys a float64 csa by its bit pattern shifted right by this
#: many bits: sign, exponent and the 8 leading mantissa bits remain.
_KEY_SHIFT = 44


@functools.lru_cache(maxsize=None)
def _by_bits(material: str, conductor_class: int):
    """R20 indexed by ``csa bits >> 44`` (NaN where no size), or None when that cannot name every size.

    Every IEC 60228 size (1, 1.5, 2.5, 4, ... 300 mm²) has at most 8
    significant mantissa bits: a csa that is exactly a tabulated size has zeros
    in its 44 low bits, and its 20 high bits name the size.  The first and the
    last entry are NaN, so clipped keys (negative or too large) find no size.
    """
    sizes, res = _table()[(material, conductor_class)]
    bits = np.ascontiguousarray(sizes, dtype=float).view(np.int64)
    if np.any(sizes <= 0) or np.any(bits & ((1 << _KEY_SHIFT) - 1)):
        return None
    keys = bits >> _KEY_SHIFT
    table = np.full(int(keys.max()) + 2, np.nan)
    table[keys] = res
    table[0] = np.nan
    return table


def _exact_r20(arrays, material: str, conductor_class: int, out=None):
    """R20 of same-shape csa arrays that are all exactly tabulated sizes, else None (then the
    tolerant look-up decides).

    One shift per array and one look-up for all (see :func:`_by_bits`), a
    check of the low bits, and a maximum that is NaN if any size is unknown.
    """
    table = _by_bits(material, conductor_class)
    if table is None:
        return None
    bits = [a.view(np.int64) for a in arrays]
    low = 0
    for b in bits:
        low |= int(np.bitwise_or.reduce(b, axis=None))
    if low & ((1 << _KEY_SHIFT) - 1):       # a low bit set somewhere: not exactly a size
        return None
    keys = np.empty((len(bits),) + bits[0].shape, dtype=np.int64)
    for b, k in zip(bits, keys):
        np.right_shift(b, _KEY_SHIFT, out=k)
    out = table.take(keys, out=out, mode="clip")
    if out.size and np.isnan(np.maximum.reduce(out, axis=None)):      # (NaN wins a maximum)
        return None
    return list(out)


@functools.lru_cache(maxsize=None)
def _dense(material: str, conductor_class: int):
    """Sizes on a quarter-mm² grid: ``grid[round(4 csa)]`` is the index of that size, or -1.

    Every IEC 60228 size is a whole number of quarter square millimetres
    (0.5, 0.75, 1, 1.5, ...), so a csa finds its row by one rounding and one
    look-up instead of a search.
    """
    sizes = _table()[(material, conductor_class)][0]
    grid = np.full(int(round(4 * sizes[-1])) + 2, len(sizes) - 1, dtype=np.intp)
    quarter = np.round(4 * sizes).astype(np.intp)
    if np.all(np.abs(quarter - 4 * sizes) < 1e-9):
        grid[:] = -1
        grid[quarter] = np.arange(len(sizes))
        return grid
    return None


def _size_index(sizes: np.ndarray, csa: np.ndarray, material: str, conductor_class: int) -> np.ndarray:
    """Index of the tabulated size nearest each csa (to be checked by the caller)."""
    grid = _dense(material, conductor_class)
    if grid is None:            # a table off the quarter-mm² grid: sorted search
        idx = np.searchsorted(sizes + 1e-9, csa)
        np.minimum(idx, len(sizes) - 1, out=idx)
        return idx
    q = np.multiply(csa, 4.0)
    np.rint(q, out=q)
    np.clip(q, 0, len(grid) - 1, out=q)      # NaN stays NaN: caught by the check
    with np.errstate(invalid="ignore"):
        key = q.astype(np.intp)
    np.clip(key, 0, len(grid) - 1, out=key)
    return np.take(grid, key)             # -1 (off the grid) wraps to the last size: caught


def design_temperatures(temp_rating_c, cpc_with_line):
    """Conductor temperatures for the design loop impedance. [°C]

    The line conductor is taken at the maximum operating temperature of its
    insulation (70 °C thermoplastic, 90 °C thermosetting; BS 7671:2018
    Table 52.1).  The cpc is taken at the same temperature when incorporated
    in the cable or bunched with live conductors, otherwise at 30 °C
    (BS 7671:2018 Table 54.2 initial temperature).

    Returns
    -------
    (line_c, cpc_c) : tuple of float or numpy.ndarray
        The same object twice when every cpc is with its line.
    """
    rating = temp_rating_c if type(temp_rating_c) is np.ndarray and temp_rating_c.dtype == np.float64 \
        else np.asarray(temp_rating_c, dtype=float)
    with_line = np.asarray(cpc_with_line, dtype=bool)
    if with_line.shape == rating.shape or with_line.ndim == 0:
        if np.count_nonzero(with_line) == with_line.size:     # every cpc with its line
            line = float(rating) if rating.ndim == 0 else rating
            return line, line
    rating, with_line = np.broadcast_arrays(rating, with_line)
    if with_line.all():
        return (rating, rating)
    cpc = np.where(with_line, rating, SEPARATE_CPC_TEMPERATURE_C)
    if rating.ndim == 0:
        return float(rating), float(cpc)
    return rating, cpc

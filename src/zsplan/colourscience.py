"""Colour arithmetic for the marked-up plan: sRGB, CIELAB, CIEDE2000 and
simulated colour-vision deficiency.

The palette (:mod:`zsplan.palette`) is designed and checked with these
functions.  Everything is implemented here from the published formulas, on
numpy arrays (the last axis holds the three components), so that the checks
do not depend on any colour library.

Chain used throughout::

    hex  ->  sRGB (0..1)  ->  linear RGB  ->  XYZ (D65)  ->  CIELAB
                               |
                               +-- CVD simulation (linear RGB, 3x3 matrix)

References
----------
.. [1] IEC 61966-2-1:1999, Multimedia systems and equipment - Colour
   measurement and management - Part 2-1: Default RGB colour space - sRGB,
   clause 5 (encoding transformations: transfer function and RGB <-> XYZ
   matrices).
.. [2] CIE 15:2004, Colorimetry, 3rd edition, clause 8.2.1 (CIE 1976
   L*a*b* colour space).
.. [3] G. Sharma, W. Wu and E. N. Dalal, "The CIEDE2000 color-difference
   formula: implementation notes, supplementary test data, and mathematical
   observations", Color Research and Application 30(1), 21-30, 2005.
.. [4] G. M. Machado, M. M. Oliveira and L. A. F. Fernandes, "A
   physiologically-based model for simulation of color vision deficiency",
   IEEE Transactions on Visualization and Computer Graphics 15(6),
   1291-1298, 2009.
"""
from __future__ import annotations

import re

import numpy as np

__all__ = [
    "CVD_KINDS",
    "MACHADO_2009",
    "SRGB_TO_XYZ",
    "WHITE_D65",
    "ciede2000",
    "delta_e_hex",
    "hex_to_srgb",
    "lab_to_srgb",
    "lab_to_xyz",
    "linear_to_srgb",
    "linear_to_xyz",
    "simulate_cvd",
    "srgb_to_hex",
    "srgb_to_lab",
    "srgb_to_linear",
    "xyz_to_lab",
    "xyz_to_linear",
]

# IEC 61966-2-1:1999 clause 5 (RGB -> XYZ): linear sRGB -> CIE XYZ (D65), Y of white = 1.
SRGB_TO_XYZ = np.array([
    [0.4124, 0.3576, 0.1805],  # IEC 61966-2-1:1999 clause 5
    [0.2126, 0.7152, 0.0722],  # IEC 61966-2-1:1999 clause 5
    [0.0193, 0.1192, 0.9505],  # IEC 61966-2-1:1999 clause 5
])
# The inverse is taken exactly (the standard prints it rounded to 4 decimals:
# 3.2406 -1.5372 -0.4986 / -0.9689 1.8758 0.0415 / 0.0557 -0.2040 1.0570) so
# that hex -> Lab -> hex round-trips.
XYZ_TO_SRGB = np.linalg.inv(SRGB_TO_XYZ)

# Reference white: the XYZ of sRGB white (1, 1, 1), i.e. the row sums of the
# matrix above (0.9505, 1.0000, 1.0890).  This is D65 as encoded by
# IEC 61966-2-1:1999 (CIE 15:2004 Table T.3 gives x = 0.31272, y = 0.32903 - from memory),
# and it makes sRGB white map to exactly L* = 100, a* = b* = 0.
WHITE_D65 = SRGB_TO_XYZ.sum(axis=1)

# Machado, Oliveira & Fernandes (2009) [4], simulation matrices for severity 1.0
# (dichromacy), to be applied to linear RGB.  Values as tabulated by the
# authors (supplementary table on the paper's web page, severity 1.0 rows).
MACHADO_2009 = {
    "protanopia": np.array([
        [0.152286, 1.052583, -0.204868],   # Machado et al. 2009, protanomaly, severity 1.0
        [0.114503, 0.786281, 0.099216],    # Machado et al. 2009, protanomaly, severity 1.0
        [-0.003882, -0.048116, 1.051998],  # Machado et al. 2009, protanomaly, severity 1.0
    ]),
    "deuteranopia": np.array([
        [0.367322, 0.860646, -0.227968],   # Machado et al. 2009, deuteranomaly, severity 1.0
        [0.280085, 0.672501, 0.047413],    # Machado et al. 2009, deuteranomaly, severity 1.0
        [-0.011820, 0.042940, 0.968881],   # Machado et al. 2009, deuteranomaly, severity 1.0
    ]),
    "tritanopia": np.array([
        [1.255528, -0.076749, -0.178779],  # Machado et al. 2009, tritanomaly, severity 1.0
        [-0.078411, 0.930809, 0.147602],   # Machado et al. 2009, tritanomaly, severity 1.0
        [0.004733, 0.691367, 0.303900],    # Machado et al. 2009, tritanomaly, severity 1.0
    ]),
}

#: Names accepted by :func:`simulate_cvd` ("normal" is the identity).
CVD_KINDS = ("normal", "deuteranopia", "protanopia", "tritanopia")

_HEX = re.compile(r"^#?([0-9a-fA-F]{6})$")


# --------------------------------------------------------------------------- sRGB

def srgb_to_linear(v):
    r"""Decode sRGB component values to linear light.

    .. math::

        C_\mathrm{lin} = \begin{cases} C / 12.92 & C \le 0.04045 \\
        \left(\dfrac{C + 0.055}{1.055}\right)^{2.4} & C > 0.04045 \end{cases}

    Parameters
    ----------
    v : array_like
        Non-linear sRGB values. [0..1]

    Returns
    -------
    numpy.ndarray
        Linear RGB values. [0..1]

    References
    ----------
    .. [1] IEC 61966-2-1:1999, clause 5 (RGB -> XYZ transformation).
    """
    v = np.asarray(v, dtype=float)
    return np.where(v <= 0.04045, v / 12.92, ((v + 0.055) / 1.055) ** 2.4)


def linear_to_srgb(v):
    r"""Encode linear light as sRGB component values (inverse of
    :func:`srgb_to_linear`).

    .. math::

        C = \begin{cases} 12.92\,C_\mathrm{lin} & C_\mathrm{lin} \le 0.0031308 \\
        1.055\,C_\mathrm{lin}^{1/2.4} - 0.055 & C_\mathrm{lin} > 0.0031308 \end{cases}

    Values outside 0..1 are clipped first.

    Parameters
    ----------
    v : array_like
        Linear RGB values. [0..1]

    Returns
    -------
    numpy.ndarray
        Non-linear sRGB values. [0..1]

    References
    ----------
    .. [1] IEC 61966-2-1:1999, clause 5 (XYZ -> RGB transformation).
    """
    v = np.clip(np.asarray(v, dtype=float), 0.0, 1.0)
    return np.where(v <= 0.0031308, 12.92 * v, 1.055 * v ** (1.0 / 2.4) - 0.055)


def hex_to_srgb(colours):
    """Parse ``#rrggbb`` strings to sRGB triples.

    Parameters
    ----------
    colours : str or sequence of str
        Colours written ``#rrggbb`` (the ``#`` is optional).

    Returns
    -------
    numpy.ndarray
        Shape ``(3,)`` for one string, ``(n, 3)`` for a sequence. [0..1]

    Raises
    ------
    ValueError
        If a string is not six hexadecimal digits.
    """
    single = isinstance(colours, str)
    items = [colours] if single else list(colours)
    out = np.empty((len(items), 3))
    for i, c in enumerate(items):
        m = _HEX.match(str(c).strip())
        if m is None:
            raise ValueError(f"colour {c!r} is not written #rrggbb")
        h = m.group(1)
        out[i] = [int(h[k:k + 2], 16) / 255.0 for k in (0, 2, 4)]
    return out[0] if single else out


def srgb_to_hex(rgb):
    """Write sRGB triples as ``#rrggbb`` (rounded to the nearest 8-bit step).

    Parameters
    ----------
    rgb : array_like
        sRGB values, last axis of length 3; clipped to 0..1. [0..1]

    Returns
    -------
    str or list of str
        One string for one triple, else a flat list in C order.
    """
    rgb = np.asarray(rgb, dtype=float)
    q = np.rint(np.clip(rgb, 0.0, 1.0) * 255.0).astype(int)
    if q.ndim == 1:
        return "#{:02x}{:02x}{:02x}".format(*q)
    return ["#{:02x}{:02x}{:02x}".format(*row) for row in q.reshape(-1, 3)]


# --------------------------------------------------------------------------- XYZ / Lab

def linear_to_xyz(rgb):
    """Linear sRGB to CIE XYZ (D65, Y of white = 1) with the IEC 61966-2-1
    matrix :data:`SRGB_TO_XYZ`.

    Parameters
    ----------
    rgb : array_like
        Linear RGB, last axis of length 3. [0..1]

    Returns
    -------
    numpy.ndarray
        XYZ tristimulus values, same shape. [relative, Y_white = 1]

    References
    ----------
    .. [1] IEC 61966-2-1:1999, clause 5 (RGB -> XYZ transformation).
    """
    return np.asarray(rgb, dtype=float) @ SRGB_TO_XYZ.T


def xyz_to_linear(xyz):
    """CIE XYZ (D65) to linear sRGB (exact inverse of :func:`linear_to_xyz`;
    no clipping).

    References
    ----------
    .. [1] IEC 61966-2-1:1999, clause 5 (XYZ -> RGB transformation).
    """
    return np.asarray(xyz, dtype=float) @ XYZ_TO_SRGB.T


_EPS = (6.0 / 29.0) ** 3          # CIE 15:2004 clause 8.2.1: (24/116)^3 = 0.008856
_KAPPA = (29.0 / 6.0) ** 2 / 3.0  # CIE 15:2004 clause 8.2.1: slope 841/108 = 7.787


def xyz_to_lab(xyz, white=WHITE_D65):
    r"""CIE XYZ to CIE 1976 L*a*b*.

    .. math::

        L^* = 116 f(Y/Y_n) - 16,\quad a^* = 500[f(X/X_n) - f(Y/Y_n)],\quad
        b^* = 200[f(Y/Y_n) - f(Z/Z_n)]

    with :math:`f(t) = t^{1/3}` for :math:`t > (6/29)^3`, else
    :math:`f(t) = \frac{841}{108} t + \frac{16}{116}`.

    Parameters
    ----------
    xyz : array_like
        Tristimulus values, last axis of length 3. [relative, Y_white = 1]
    white : array_like, optional
        Reference white. Default :data:`WHITE_D65`.

    Returns
    -------
    numpy.ndarray
        L*, a*, b* on the last axis.

    References
    ----------
    .. [1] CIE 15:2004, Colorimetry, clause 8.2.1.
    """
    t = np.asarray(xyz, dtype=float) / np.asarray(white, dtype=float)
    f = np.where(t > _EPS, np.cbrt(t), _KAPPA * t + 16.0 / 116.0)
    L = 116.0 * f[..., 1] - 16.0
    a = 500.0 * (f[..., 0] - f[..., 1])
    b = 200.0 * (f[..., 1] - f[..., 2])
    return np.stack([L, a, b], axis=-1)


def lab_to_xyz(lab, white=WHITE_D65):
    """CIE 1976 L*a*b* to CIE XYZ (inverse of :func:`xyz_to_lab`).

    References
    ----------
    .. [1] CIE 15:2004, Colorimetry, clause 8.2.1 (inverted).
    """
    lab = np.asarray(lab, dtype=float)
    fy = (lab[..., 0] + 16.0) / 116.0
    fx = fy + lab[..., 1] / 500.0
    fz = fy - lab[..., 2] / 200.0
    f = np.stack([fx, fy, fz], axis=-1)
    t = np.where(f > 6.0 / 29.0, f ** 3, (f - 16.0 / 116.0) / _KAPPA)
    return t * np.asarray(white, dtype=float)


def srgb_to_lab(rgb):
    """sRGB (0..1, non-linear) to CIELAB (D65): decode, matrix, Lab.

    References
    ----------
    .. [1] IEC 61966-2-1:1999, clause 5.
    .. [2] CIE 15:2004, clause 8.2.1.
    """
    return xyz_to_lab(linear_to_xyz(srgb_to_linear(rgb)))


def lab_to_srgb(lab):
    """CIELAB (D65) to sRGB (0..1).  Colours outside the sRGB gamut are
    clipped per channel in linear light, so check :func:`srgb_to_lab` of the
    result when gamut matters.

    References
    ----------
    .. [1] CIE 15:2004, clause 8.2.1.
    .. [2] IEC 61966-2-1:1999, clause 5.
    """
    return linear_to_srgb(xyz_to_linear(lab_to_xyz(lab)))


# --------------------------------------------------------------------------- CIEDE2000

def ciede2000(lab1, lab2, kL=1.0, kC=1.0, kH=1.0):
    r"""CIEDE2000 colour difference :math:`\Delta E_{00}` between two CIELAB
    colours, vectorised over leading axes.

    Follows the three computation steps of Sharma, Wu & Dalal [1]_, section
    "Implementation notes", equation by equation:

    .. math::

        \Delta E_{00} = \sqrt{\left(\frac{\Delta L'}{k_L S_L}\right)^2
        + \left(\frac{\Delta C'}{k_C S_C}\right)^2
        + \left(\frac{\Delta H'}{k_H S_H}\right)^2
        + R_T \frac{\Delta C'}{k_C S_C}\frac{\Delta H'}{k_H S_H}}

    including the paper's conventions for the hue of neutral colours
    (:math:`h' = 0` when :math:`C' = 0`), the hue difference when one chroma
    is zero, and the mean hue across the 0/360 degree wrap.

    Parameters
    ----------
    lab1, lab2 : array_like
        CIELAB colours, last axis L*, a*, b*.
    kL, kC, kH : float, optional
        Parametric weighting factors (1 under reference conditions).

    Returns
    -------
    numpy.ndarray
        :math:`\Delta E_{00}` (scalar array for single colours).

    References
    ----------
    .. [1] G. Sharma, W. Wu and E. N. Dalal, "The CIEDE2000 color-difference
       formula: implementation notes, supplementary test data, and
       mathematical observations", Color Res. Appl. 30(1), 21-30, 2005.
    """
    lab1 = np.asarray(lab1, dtype=float)
    lab2 = np.asarray(lab2, dtype=float)
    L1, a1, b1 = lab1[..., 0], lab1[..., 1], lab1[..., 2]
    L2, a2, b2 = lab2[..., 0], lab2[..., 1], lab2[..., 2]

    # step 1: C*, G, a', C', h'
    C1s = np.hypot(a1, b1)
    C2s = np.hypot(a2, b2)
    Cbar7 = ((C1s + C2s) / 2.0) ** 7
    G = 0.5 * (1.0 - np.sqrt(Cbar7 / (Cbar7 + 25.0 ** 7)))
    a1p = (1.0 + G) * a1
    a2p = (1.0 + G) * a2
    C1p = np.hypot(a1p, b1)
    C2p = np.hypot(a2p, b2)
    h1p = np.where((a1p == 0) & (b1 == 0), 0.0, np.degrees(np.arctan2(b1, a1p)) % 360.0)
    h2p = np.where((a2p == 0) & (b2 == 0), 0.0, np.degrees(np.arctan2(b2, a2p)) % 360.0)

    # step 2: dL', dC', dh', dH'
    dLp = L2 - L1
    dCp = C2p - C1p
    zero = (C1p * C2p) == 0
    dh = h2p - h1p
    dh = np.where(dh > 180.0, dh - 360.0, np.where(dh < -180.0, dh + 360.0, dh))
    dhp = np.where(zero, 0.0, dh)
    dHp = 2.0 * np.sqrt(C1p * C2p) * np.sin(np.radians(dhp / 2.0))

    # step 3: means, T, dtheta, RC, SL, SC, SH, RT, dE00
    Lbarp = (L1 + L2) / 2.0
    Cbarp = (C1p + C2p) / 2.0
    hsum = h1p + h2p
    far = np.abs(h1p - h2p) > 180.0
    hbarp = np.where(
        zero, hsum,
        np.where(~far, hsum / 2.0,
                 np.where(hsum < 360.0, (hsum + 360.0) / 2.0, (hsum - 360.0) / 2.0)))
    T = (1.0 - 0.17 * np.cos(np.radians(hbarp - 30.0))
         + 0.24 * np.cos(np.radians(2.0 * hbarp))
         + 0.32 * np.cos(np.radians(3.0 * hbarp + 6.0))
         - 0.20 * np.cos(np.radians(4.0 * hbarp - 63.0)))
    dtheta = 30.0 * np.exp(-(((hbarp - 275.0) / 25.0) ** 2))
    Cbarp7 = Cbarp ** 7
    RC = 2.0 * np.sqrt(Cbarp7 / (Cbarp7 + 25.0 ** 7))
    L50 = (Lbarp - 50.0) ** 2
    SL = 1.0 + 0.015 * L50 / np.sqrt(20.0 + L50)
    SC = 1.0 + 0.045 * Cbarp
    SH = 1.0 + 0.015 * Cbarp * T
    RT = -np.sin(np.radians(2.0 * dtheta)) * RC

    tL = dLp / (kL * SL)
    tC = dCp / (kC * SC)
    tH = dHp / (kH * SH)
    return np.sqrt(tL ** 2 + tC ** 2 + tH ** 2 + RT * tC * tH)


# --------------------------------------------------------------------------- CVD

def simulate_cvd(rgb, kind):
    r"""Simulate how a dichromat sees sRGB colours.

    The Machado, Oliveira & Fernandes model at severity 1.0 [1]_: decode to
    linear RGB, multiply by the 3x3 matrix of the deficiency
    (:data:`MACHADO_2009`), clip to 0..1, encode back to sRGB.

    .. math:: \mathbf{c}_\mathrm{sim} = \mathrm{clip}(M_\mathrm{kind}\,\mathbf{c}_\mathrm{lin})

    Parameters
    ----------
    rgb : array_like
        sRGB colours, last axis of length 3. [0..1]
    kind : {"normal", "deuteranopia", "protanopia", "tritanopia"}
        Deficiency to simulate; "normal" returns the input.

    Returns
    -------
    numpy.ndarray
        Simulated sRGB colours, same shape. [0..1]

    Notes
    -----
    The authors state that their model is less well founded for tritanopia
    than for the red-green deficiencies; results for "tritanopia" are a
    guide only.

    References
    ----------
    .. [1] G. M. Machado, M. M. Oliveira and L. A. F. Fernandes, "A
       physiologically-based model for simulation of color vision
       deficiency", IEEE TVCG 15(6), 1291-1298, 2009.
    """
    rgb = np.asarray(rgb, dtype=float)
    if kind == "normal":
        return rgb
    try:
        m = MACHADO_2009[kind]
    except KeyError:
        raise ValueError(f"unknown colour-vision kind {kind!r}; expected one of {CVD_KINDS}") from None
    lin = srgb_to_linear(rgb) @ m.T
    return linear_to_srgb(np.clip(lin, 0.0, 1.0))


def delta_e_hex(colour1, colour2, vision="normal"):
    """CIEDE2000 difference between ``#rrggbb`` colours as seen with the given
    colour vision (see :func:`simulate_cvd`).

    Parameters
    ----------
    colour1, colour2 : str or sequence of str
        Colours (sequences are compared element by element).
    vision : str, optional
        One of :data:`CVD_KINDS`. Default "normal".

    Returns
    -------
    numpy.ndarray
        :math:`\\Delta E_{00}`.
    """
    c1 = simulate_cvd(hex_to_srgb(colour1), vision)
    c2 = simulate_cvd(hex_to_srgb(colour2), vision)
    return ciede2000(srgb_to_lab(c1), srgb_to_lab(c2))

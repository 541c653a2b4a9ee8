"""Quantities at the boundary: text with units in, plain floats out.

zsplan uses pint only here.  One registry serves the whole program (building
one takes about 0.15 s), each distinct string is parsed once
(:func:`functools.lru_cache`), and the engine only ever sees floats in the
base units below.

=========== ================= ==========================
kind        internal unit     accepted examples
=========== ================= ==========================
length      metre             ``30 m``, ``98 ft``, ``3 ft 6 in``, ``450 mm``
area        square millimetre ``2.5 mm2``, ``2.5 mm^2``, ``2.5 mm²``
impedance   ohm               ``0.35 ohm``, ``350 mohm``, ``40 Ω``
current     ampere            ``32 A``, ``30 mA``
voltage     volt              ``230 V``
temperature degree Celsius    ``25 degC``, ``77 degF``, ``298 K``
fraction    percent           ``10 %``, ``10 percent``
time        second            ``0.4 s``, ``400 ms``
=========== ================= ==========================

A bare number is taken in the key's default unit (the internal unit).
"""
from __future__ import annotations

import functools
import math
import re

__all__ = ["KINDS", "parse", "UnitProblem", "registry"]

#: kind -> (internal unit as pint understands it, pint dimensionality string)
KINDS: dict[str, tuple[str, str]] = {
    "length": ("m", "[length]"),
    "area": ("mm**2", "[length] ** 2"),
    "impedance": ("ohm", "[mass] * [length] ** 2 / [current] ** 2 / [time] ** 3"),
    "current": ("A", "[current]"),
    "voltage": ("V", "[mass] * [length] ** 2 / [current] / [time] ** 3"),
    "temperature": ("degC", "[temperature]"),
    "percent": ("percent", "dimensionless"),
    "time": ("s", "[time]"),
}

EXAMPLES = {
    "length": "'12 m', '40 ft' or '3 ft 6 in'",
    "area": "'2.5 mm2'",
    "impedance": "'0.35 ohm' or '350 mohm'",
    "current": "'32 A' or '30 mA'",
    "voltage": "'230 V'",
    "temperature": "'25 degC'",
    "percent": "'10 %'",
    "time": "'0.4 s'",
}


def _a(kind: str) -> str:
    return ("an " if kind[0] in "aeiou" else "a ") + kind


class UnitProblem(ValueError):
    """A quantity string that cannot be read as the expected kind."""


@functools.lru_cache(maxsize=1)
def registry():
    """The program's single pint registry (built on first use)."""
    import pint

    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    ureg.define("mohm = milliohm")
    return ureg


_NUMBER = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
_SPLIT = re.compile(rf"^\s*({_NUMBER})\s*(.*?)\s*$")
_FEET_INCHES = re.compile(
    rf"^\s*({_NUMBER})\s*(?:ft|feet|foot|')\s*({_NUMBER})\s*(?:in|inch|inches|\")\s*$"
)
_POWER = re.compile(r"([A-Za-zµ])([23])\b")
_ALIASES = {"Ω": "ohm", "²": "**2", "³": "**3", "%": "percent", "°C": "degC",
            "°F": "degF", "mΩ": "mohm", "in": "inch", "'": "ft", '"': "inch"}


def _normalise_unit(text: str) -> str:
    if text in _ALIASES:
        return _ALIASES[text]
    for a in ("mΩ", "Ω", "²", "³", "°C", "°F", "%"):
        text = text.replace(a, _ALIASES[a])
    text = _POWER.sub(r"\1**\2", text)
    return text


@functools.lru_cache(maxsize=4096)
def _parse_cached(text: str, kind: str) -> float:
    unit, _ = KINDS[kind]
    m = _FEET_INCHES.match(text)
    if m and kind == "length":
        return float(m.group(1)) * 0.3048 + float(m.group(2)) * 0.0254
    m = _SPLIT.match(text)
    if not m:
        raise UnitProblem(f"expected {_a(kind)} such as {EXAMPLES[kind]}, got {text!r}")
    number, unit_text = float(m.group(1)), m.group(2)
    if not unit_text:
        return number
    ureg = registry()
    try:
        q = ureg.Quantity(number, _normalise_unit(unit_text))
        value = q.to(unit).magnitude
    except Exception as exc:  # pint raises several unrelated types
        name = type(exc).__name__
        if name == "DimensionalityError":
            raise UnitProblem(
                f"expected {_a(kind)} such as {EXAMPLES[kind]}, got {text!r} "
                f"(unit {unit_text!r} is not {_a(kind)})") from None
        raise UnitProblem(
            f"expected {_a(kind)} such as {EXAMPLES[kind]}, got {text!r} "
            f"(unknown unit {unit_text!r})") from None
    return float(value)


def parse(value, kind: str) -> float:
    """Read ``value`` (a number or a string with a unit) as ``kind``.

    Returns a float in the kind's internal unit (see the module table).
    Raises :class:`UnitProblem` with a message stating what was expected.
    Non-finite results are refused here, so NaN and infinity never reach
    the engine.
    """
    if kind not in KINDS:
        raise KeyError(kind)
    if isinstance(value, bool) or value is None:
        raise UnitProblem(f"expected {_a(kind)} such as {EXAMPLES[kind]}, got {value!r}")
    if isinstance(value, (int, float)):
        out = float(value)
    elif isinstance(value, str):
        out = _parse_cached(value.strip(), kind)
    else:
        raise UnitProblem(f"expected {_a(kind)} such as {EXAMPLES[kind]}, got {value!r}")
    if not math.isfinite(out):
        raise UnitProblem(f"expected a finite {kind}, got {value!r}")
    return out

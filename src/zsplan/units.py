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


#: Longest quantity text read: real ones are short ('3 ft 6 in', '350 mohm'),
#: and a bound keeps the parsing time and the messages bounded. [characters]
MAX_TEXT = 80
#: Longest unit text handed to pint. [characters]
MAX_UNIT = 32


def _shown(value, limit: int = 40) -> str:
    """A value quoted for a message: control characters escaped, long text cut."""
    text = value if isinstance(value, str) else repr(value)
    if len(text) > limit:
        text = text[:limit] + f"... ({len(text):,} characters)"
    return repr(text)


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
        raise UnitProblem(f"expected {_a(kind)} such as {EXAMPLES[kind]}, got {_shown(text)}")
    number, unit_text = float(m.group(1)), m.group(2)
    if not unit_text:
        return number
    if len(unit_text) > MAX_UNIT or not unit_text.isprintable():
        raise UnitProblem(f"expected {_a(kind)} such as {EXAMPLES[kind]}, got {_shown(text)} "
                          f"(unknown unit {_shown(unit_text)})")
    ureg = registry()
    try:
        q = ureg.Quantity(number, _normalise_unit(unit_text))
        value = q.to(unit).magnitude
    except Exception as exc:  # pint raises several unrelated types
        name = type(exc).__name__
        if name == "DimensionalityError":
            raise UnitProblem(
                f"expected {_a(kind)} such as {EXAMPLES[kind]}, got {_shown(text)} "
                f"(unit {_shown(unit_text)} is not {_a(kind)})") from None
        raise UnitProblem(
            f"expected {_a(kind)} such as {EXAMPLES[kind]}, got {_shown(text)} "
            f"(unknown unit {_shown(unit_text)})") from None
    try:
        return float(value)
    except (TypeError, ValueError, OverflowError):   # a complex or odd magnitude
        raise UnitProblem(f"expected {_a(kind)} such as {EXAMPLES[kind]}, got {_shown(text)}") from None


def parse(value, kind: str) -> float:
    """Read ``value`` (a number or a string with a unit) as ``kind``.

    Returns a float in the kind's internal unit (see the module table).
    Raises :class:`UnitProblem` with a message stating what was expected.
    Non-finite results are refused here, so NaN and infinity never reach
    the engine; so are texts longer than :data:`MAX_TEXT` characters (a
    quantity is short, and the bound keeps parsing time and messages bounded)
    and integers beyond the floating-point range.
    """
    if kind not in KINDS:
        raise KeyError(kind)
    if isinstance(value, bool) or value is None:
        raise UnitProblem(f"expected {_a(kind)} such as {EXAMPLES[kind]}, got {value!r}")
    if isinstance(value, (int, float)):
        try:
            out = float(value)
        except OverflowError:            # an int beyond the float range
            raise UnitProblem(f"expected a finite {kind}, got {_shown(value)}") from None
    elif isinstance(value, str):
        text = value.strip()
        if len(text) > MAX_TEXT:
            raise UnitProblem(f"expected {_a(kind)} such as {EXAMPLES[kind]}, got "
                              f"{_shown(text)} (too long for a quantity)")
        out = _parse_cached(text, kind)
    else:
        raise UnitProblem(f"expected {_a(kind)} such as {EXAMPLES[kind]}, got {_shown(value)}")
    if not math.isfinite(out):
        raise UnitProblem(f"expected a finite {kind}, got {_shown(value)}")
    return out

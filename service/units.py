"""Unit handling at the boundary: one shared pint registry and a cache of parsed strings.

The engine works on plain floats in mm, N·m, bar, K and kV. Anything a client writes
with units ("0.75 in", "18 ft-lb", "45 degC") is turned into those floats here, once:
pint needs hundreds of microseconds per parse, and build lists repeat the same strings
on thousands of lines, so parses are cached by (text, kind).

pint evaluates what it is given as an expression, with Python's big integers: left to
it, `9**9**8 mm` holds a worker for half a minute and `10**10000 mm` overflows. So no
text reaches pint unless it matches the quantity grammar below (`QUANTITY_GRAMMAR`, the
accepted forms), at most `MAX_QUANTITY_TEXT` characters long: a sign, a number (decimal,
a fraction `3/4` or a mixed number `1 1/4`), and a unit expression of unit names joined
by `*` or `/` with exponents up to 3 (the trade's `ft-lb`, `N·m`, `°C` are rewritten
to such names first). Everything else is refused before pint sees it, in microseconds.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import lru_cache
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # pragma: no cover
    import pint

# 1 in = 25.4 mm exactly (NIST SP 811, 2008, B.8).
MM_PER_INCH = 25.4
# 1 lbf·ft = 1.355 818 N·m (NIST SP 811, 2008, B.8); pint derives the same from the
# exact pound-mass and standard gravity, so the registry is the source we use.


class UnitError(ValueError):
    """A value the boundary cannot turn into the quantity asked for; the message is
    written for the client and names what was expected."""


@dataclass(frozen=True, slots=True)
class Kind:
    """A quantity kind: the canonical unit the engine works in, the unit a bare
    number means, the pint dimensionality it must have, and examples of what a client
    may write (shown when a text is refused)."""

    name: str
    canonical: str
    bare: str
    dimensionality: str
    examples: str


LENGTH = Kind("length", "mm", "mm", "[length]", "19, '19 mm', '0.75 in', '3/4 in' or '1 1/4 in'")
TORQUE = Kind("torque", "N*m", "N*m", "[length] ** 2 * [mass] / [time] ** 2",
              "25, '25 N*m', '18 ft-lb' or '160 in-lb'")
PRESSURE = Kind("pressure", "bar", "bar", "[mass] / [length] / [time] ** 2", "1.2, '1.2 bar', '17 psi' or '120 kPa'")
TEMPERATURE = Kind("temperature", "K", "degC", "[temperature]", "45, '45 degC', '113 degF' or '320 K'")
VOLTAGE = Kind("voltage", "kV", "kV", "[length] ** 2 * [mass] / [current] / [time] ** 3", "30, '30 kV' or '30000 V'")
ANGLE = Kind("angle", "deg", "deg", "", "15 or '15 deg'")
# An engine's speed: revolutions per minute only. pint counts a revolution as 2π radians,
# so it would read "150 Hz" (150 revolutions a second to most people) as 150 rad/s, 1,432
# rpm: a speed six times too low, and a rod stretch forty times too small. Any other
# unit is refused (`_SPEED_UNITS`).
SPEED = Kind("speed", "rpm", "rpm", "1 / [time]", "7000, '7000 rpm' or '7000 r/min'")
MASS = Kind("mass", "g", "g", "[mass]", "450, '450 g', '0.45 kg' or '1 lb'")
AREA = Kind("area", "mm**2", "mm**2", "[length] ** 2", "150, '150 mm**2', '1.5 cm**2' or '0.25 in**2'")
KINDS = {k.name: k for k in (LENGTH, TORQUE, PRESSURE, TEMPERATURE, VOLTAGE, ANGLE, SPEED, MASS, AREA)}

# Output units per unit system; ASCII and pint-parsable, as the contract asks.
# Masses stay in grams in both: pistons and rods are weighed in grams in every shop.
OUTPUT_UNITS = {
    "metric": {"length": "mm", "torque": "N*m", "pressure": "bar", "voltage": "kV",
               "force": "N", "stress": "MPa", "area": "mm**2", "temperature": "K", "speed": "rpm", "mass": "g"},
    "imperial": {"length": "in", "torque": "lbf*ft", "pressure": "psi", "voltage": "kV",
                 "force": "lbf", "stress": "psi", "area": "in**2", "temperature": "K", "speed": "rpm", "mass": "g"},
}

# The trade writes torque as ft-lb, lb-ft, ft·lbf, in-lb, lbs.ft …; pint would read
# "ft-lb" as a subtraction and "lb" as a mass, so these spellings are rewritten first.
_TORQUE_SPELLINGS = [
    (re.compile(r"\b(?:foot|feet)[- ]pounds?(?:[- ]force)?\b", re.IGNORECASE), "lbf*ft"),
    (re.compile(r"\binch(?:es)?[- ]pounds?(?:[- ]force)?\b", re.IGNORECASE), "lbf*inch"),
    (re.compile(r"\b(?:ft|foot|feet)\s*[-·.*× ]?\s*(?:lbf|lbs|lb)\b", re.IGNORECASE), "lbf*ft"),
    (re.compile(r"\b(?:lbf|lbs|lb)\s*[-·.*× ]?\s*(?:ft|foot|feet)\b", re.IGNORECASE), "lbf*ft"),
    (re.compile(r"\b(?:in|inch|inches)\s*[-·.*× ]?\s*(?:lbf|lbs|lb)\b", re.IGNORECASE), "lbf*inch"),
    (re.compile(r"\b(?:lbf|lbs|lb)\s*[-·.*× ]?\s*(?:in|inch|inches)\b", re.IGNORECASE), "lbf*inch"),
    (re.compile(r"\bN\s*[-·.× ]?\s*m\b"), "N*m"),
    (re.compile(r"\bNm\b"), "N*m"),
]
_GENERAL_SPELLINGS = [
    (re.compile(r"·"), "*"),
    (re.compile(r"°\s*C\b"), "degC"),
    (re.compile(r"°\s*F\b"), "degF"),
    (re.compile(r"(?<=\d)\s*\"$"), " in"),
    (re.compile(r"\bdeg\s*C\b"), "degC"),
]
# How the trade writes revolutions per minute; each is read as pint's `rpm`.
_SPEED_SPELLINGS = [
    (re.compile(r"\b(?:r|rev|revs|revolutions?)\s*/\s*min(?:ute)?\b", re.IGNORECASE), "rpm"),
    (re.compile(r"\b(?:rpm|RPM|Rpm)\b"), "rpm"),
]
_SPEED_UNITS = frozenset({"rpm"})


# A pressure string may say which zero it counts from: "15 psig", "2.5 bara", "1.5 bar gauge",
# "250 kPa (absolute)". The marker is split off before the unit is read; the field it was
# given in decides whether the reading is gauge or absolute, and refuses the other.
_PRESSURE_REFERENCE_WORD = re.compile(r"\(?\s*\b(gauge|gage|absolute|abs)\b\.?\s*\)?\s*$", re.IGNORECASE)
_PRESSURE_REFERENCE_SUFFIX = re.compile(r"\b(psi|bar)([ag])\s*$", re.IGNORECASE)


def pressure_reference(text: str) -> tuple[str, str | None]:
    """A pressure string without its gauge/absolute marker, and the marker's meaning
    ("gauge", "absolute", or None when it says neither): "15 psig" -> ("15 psi", "gauge").
    Text over the quantity cap is left whole for `parse_quantity` to refuse: a search from
    every position of a long run of spaces costs time that grows with its length."""
    if len(text) > MAX_QUANTITY_TEXT:
        return text, None
    word = _PRESSURE_REFERENCE_WORD.search(text)
    if word:
        return text[:word.start()].rstrip(), "absolute" if word.group(1).lower().startswith("abs") else "gauge"
    suffix = _PRESSURE_REFERENCE_SUFFIX.search(text)
    if suffix:
        return text[:suffix.start()] + suffix.group(1), "absolute" if suffix.group(2).lower() == "a" else "gauge"
    return text, None


_NOT_FINITE = re.compile(r"^[-+]?(?:nan|inf|infinity)\b", re.IGNORECASE)
_STARTS_WITH_NUMBER = re.compile(r"^\(?\s*[-+]?(?:\d|\.\d)")

# The longest text read as a quantity ("0.7501 in", "18 ft-lb" are under 12): a cap
# with a message of its own, checked before anything else.
MAX_QUANTITY_TEXT = 64

# The quantity grammar, matched against the text after the trade spellings have been
# rewritten (`_normalise`). ASCII digits only. A unit name is letters (and µ, °);
# `mm2` or `in2` are not names, write `mm**2`. The number is one of:
_DECIMAL = r"(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][-+]?[0-9]+)?"   # 19, 0.75, .5, 1e3
_FRACTION = r"[0-9]+/[0-9]+"                                          # 3/4
_MIXED = r"(?P<whole>[0-9]+)\s+(?P<numerator>[0-9]+)/(?P<denominator>[0-9]+)"  # 1 1/4
_UNIT_FACTOR = r"(?:[A-Za-zµμ°]+)(?:(?:\*\*|\^)[1-3]|[²³])?"          # mm, in**2, mm³
_UNIT = rf"{_UNIT_FACTOR}(?:\s*[*/]\s*{_UNIT_FACTOR})*"                 # lbf*ft, N/mm**2
QUANTITY_GRAMMAR = re.compile(
    rf"(?P<sign>[-+]?)(?:{_MIXED}|(?P<number>{_FRACTION}|{_DECIMAL}))\s*(?P<unit>{_UNIT})?", re.ASCII)


@lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """The one registry of the project, built on first use (never at import time)."""
    import pint

    reg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True, cache_folder=None)
    return reg


def _normalise(text: str, kind: Kind) -> str:
    out = text.strip()
    for pattern, repl in _GENERAL_SPELLINGS:
        out = pattern.sub(repl, out)
    if kind is TORQUE:
        for pattern, repl in _TORQUE_SPELLINGS:
            out = pattern.sub(repl, out)
    elif kind is SPEED:
        for pattern, repl in _SPEED_SPELLINGS:
            out = pattern.sub(repl, out)
    return out


def check_finite(value: float, kind_name: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise UnitError(f"expected a number or a string with {kind_name} units")
    try:
        number = float(value)
    except OverflowError:  # an integer of hundreds of digits
        number = math.inf
    if math.isnan(number) or math.isinf(number):
        raise UnitError(_NOT_FINITE_MESSAGE)
    return number


_NOT_FINITE_MESSAGE = "must be a finite number, not NaN, infinity or a number too large to hold (above 1e308)"


@lru_cache(maxsize=65536)
def parse_quantity(text: str, kind_name: str) -> float:
    """Parse `text` as a quantity of `kind_name` and return it in the canonical unit.

    A bare number in the string ("19") means the kind's bare unit (mm, N·m, bar, °C, kV).
    Text that does not match `QUANTITY_GRAMMAR` is refused before pint sees it.
    Cached: the same text is parsed by pint only once per process.
    """
    kind = KINDS[kind_name]
    if len(text) > MAX_QUANTITY_TEXT:
        raise UnitError(f"{_a(kind.name)} written as text may be at most {MAX_QUANTITY_TEXT} characters "
                        f"long; write a number or a number and a unit, such as {kind.examples}")
    try:  # a plain number (most cells of a long list): the spellings below cannot apply
        number = float(text)
    except ValueError:
        pass
    else:
        return convert(check_finite(number, kind.name), kind.bare, kind.canonical)
    normalised = _normalise(text, kind)
    if not normalised:
        raise UnitError(f"empty {kind.name}")
    try:
        number = float(normalised)
    except ValueError:
        number = None
    if number is not None:
        return convert(check_finite(number, kind.name), kind.bare, kind.canonical)
    if _NOT_FINITE.match(normalised):
        raise UnitError(_NOT_FINITE_MESSAGE)
    if not _STARTS_WITH_NUMBER.match(normalised):
        raise UnitError(f"{text!r} has no number; give a {kind.name} such as '19 mm'")
    expression = _expression(normalised, text, kind)
    reg = registry()
    try:
        quantity = reg.Quantity(expression)
    except Exception as exc:  # pint raises many types for unknown names, 1/0, offset units
        raise _unreadable(text, kind) from exc
    if not isinstance(quantity, reg.Quantity):
        raise UnitError(f"{text!r} has no unit; give a number or {_a(kind.name)} with units")
    magnitude = quantity.magnitude
    if isinstance(magnitude, complex) or not isinstance(magnitude, (int, float)):
        raise _unreadable(text, kind)
    if math.isnan(magnitude) or math.isinf(magnitude):
        raise UnitError(_NOT_FINITE_MESSAGE)
    if kind is ANGLE and quantity.dimensionless:
        return check_finite(quantity.to("deg").magnitude, kind.name)
    if quantity.dimensionality != reg.get_dimensionality(kind.dimensionality):
        raise UnitError(f"{text!r} is not {_a(kind.name)} (expected units like {kind.bare})")
    return check_finite(quantity.to(kind.canonical).magnitude, kind.name)  # 1e308 in is past 1e308 mm


def _a(noun: str) -> str:
    """The noun with its indefinite article: "a length", "an area"."""
    return f"{'an' if noun[0] in 'aeiou' else 'a'} {noun}"


def _unreadable(text: str, kind: Kind) -> UnitError:
    return UnitError(f"cannot read {text!r} as {_a(kind.name)}; write a number or a number and a unit, "
                     f"such as {kind.examples}")


def _expression(normalised: str, text: str, kind: Kind) -> str:
    """The text pint may evaluate: `normalised` itself when it matches the grammar (so
    pint computes exactly what it always did), a mixed number rewritten as one fraction
    (`1 1/4 in` is 5/4 in, where pint alone would multiply: 1 × 1/4 in). A fraction with
    no unit is refused: `3/4` alone is almost surely inches, not 0.75 mm."""
    match = QUANTITY_GRAMMAR.fullmatch(normalised)
    if match is None:
        raise _unreadable(text, kind)
    if not match["unit"] and "/" in normalised:
        raise UnitError(f"{text!r} is a fraction without a unit; write the unit, such as '3/4 in'")
    if kind is SPEED and match["unit"] not in _SPEED_UNITS:
        raise UnitError(f"{text!r}: give an engine speed in revolutions per minute, such as {kind.examples} "
                        "(Hz and rad/s are not read: pint counts a revolution as 2π radians)")
    if match["whole"] is None:
        return normalised
    numerator = int(match["whole"]) * int(match["denominator"]) + int(match["numerator"])
    return f"{match['sign']}{numerator}/{match['denominator']} {match['unit'] or ''}"


@lru_cache(maxsize=4096)
def _factor(from_unit: str, to_unit: str) -> tuple[float, float]:
    """Linear conversion factor and offset from one unit to another (offset for °C)."""
    reg = registry()
    zero = reg.Quantity(0.0, from_unit).to(to_unit).magnitude
    one = reg.Quantity(1.0, from_unit).to(to_unit).magnitude
    return one - zero, zero


def convert(value: float, from_unit: str, to_unit: str) -> float:
    """Convert a float between two units; the factor is looked up once per unit pair."""
    if from_unit == to_unit:
        return value
    scale, offset = _factor(from_unit, to_unit)
    return value * scale + offset


def output_unit(kind: str, system: str) -> str:
    """The unit a value of `kind` is reported in for a unit system; kinds without a
    unit (ratios, counts, angles in degrees) report their own name-free unit."""
    return OUTPUT_UNITS[system].get(kind, _PLAIN_UNITS.get(kind, ""))


_PLAIN_UNITS = {"ratio": "", "count": "", "angle": "deg", "kinematic": ""}


def from_canonical(value: float, kind: str, system: str) -> float:
    """A canonical engine value (mm, N·m, bar, K, kV, N, MPa, mm²) in the output unit."""
    unit = output_unit(kind, system)
    canonical = _CANONICAL_OUT.get(kind)
    if canonical is None or canonical == unit:
        return value
    return convert(value, canonical, unit)


_CANONICAL_OUT = {"length": "mm", "torque": "N*m", "pressure": "bar", "voltage": "kV",
                  "force": "N", "stress": "MPa", "area": "mm**2", "temperature": "K", "speed": "rpm", "mass": "g"}

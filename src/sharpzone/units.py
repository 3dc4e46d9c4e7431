"""Distances and lengths as people write them, in one place.

Inside the program every length is in millimetres (float, ``math.inf`` for infinity).
People write distances with units (``3m``, ``250cm``, ``10ft``, ``6in``, ``inf``); a bare
number on the command line is metres. Output is metric unless imperial is asked for.
"""

from __future__ import annotations

import math
import re

from sharpzone.errors import InvalidValue

# Exact by definition (international yard and pound agreement, 1959): 1 in = 25.4 mm.
MM_PER_INCH = 25.4
MM_PER_FOOT = 12 * MM_PER_INCH

_DISTANCE_UNITS_MM = {
    "mm": 1.0,
    "cm": 10.0,
    "m": 1000.0,
    "km": 1_000_000.0,
    "in": MM_PER_INCH,
    '"': MM_PER_INCH,
    "ft": MM_PER_FOOT,
    "'": MM_PER_FOOT,
}
_INFINITY_WORDS = {"inf", "infinity", "∞"}
_NUMBER_WITH_UNIT = re.compile(r"^\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*([a-zA-Z\"']*)\s*$")
_FEET_AND_INCHES = re.compile(r"^\s*(\d+(?:\.\d*)?)\s*(?:ft|')\s*(\d+(?:\.\d*)?)\s*(?:in|\")?\s*$")

DISTANCE_HELP = "a distance with a unit: 3m, 250cm, 800mm, 10ft, 6in, 5ft6in or inf; a bare number is metres"


def parse_distance(text: str | float | int, *, default_unit: str = "m", what: str = "distance") -> float:
    """Parse a distance such as ``3m``, ``250cm``, ``10ft``, ``5ft6in`` or ``inf`` into mm.

    A bare number takes ``default_unit`` (metres unless said). Negative values are refused;
    zero is allowed here and range checks belong to the caller.
    """
    if isinstance(text, (int, float)):
        value_mm = float(text) * _DISTANCE_UNITS_MM[default_unit]
        return _checked(value_mm, text, what)
    raw = str(text).strip()
    if raw.lower() in _INFINITY_WORDS:
        return math.inf
    feet_inches = _FEET_AND_INCHES.match(raw.lower())
    if feet_inches:
        value_mm = float(feet_inches.group(1)) * MM_PER_FOOT + float(feet_inches.group(2)) * MM_PER_INCH
        return _checked(value_mm, text, what)
    match = _NUMBER_WITH_UNIT.match(raw)
    if not match:
        raise InvalidValue(f"{what} {text!r} is not a distance: expected {DISTANCE_HELP}")
    number, unit = float(match.group(1)), match.group(2).lower() or default_unit
    if unit not in _DISTANCE_UNITS_MM:
        known = ", ".join(u for u in _DISTANCE_UNITS_MM if u.isalpha())
        raise InvalidValue(f"{what} {text!r} has an unknown unit {unit!r}: expected one of {known}")
    return _checked(number * _DISTANCE_UNITS_MM[unit], text, what)


def _checked(value_mm: float, original: object, what: str) -> float:
    if math.isnan(value_mm) or value_mm < 0:
        raise InvalidValue(f"{what} {original!r} must not be negative")
    return value_mm


def parse_length_mm(text: str | float | int, *, what: str = "length") -> float:
    """Parse a small optical length (focal length, CoC, pixel pitch): a bare number is mm."""
    try:
        return parse_distance(text, default_unit="mm", what=what)
    except InvalidValue as error:
        if "is not a distance" in error.message:
            raise InvalidValue(f"{what} {text!r} is not a length: expected millimetres such as 50 or 0.03mm") from None
        raise


def format_distance(value_mm: float | None, *, imperial: bool = False, digits: int = 3) -> str:
    """Format a distance for people: metres (or feet and inches) with a sensible precision.

    ``None`` (unknown) prints as an em dash, infinity as ``∞``. ``digits`` is the number of
    significant figures.
    """
    if value_mm is None or (isinstance(value_mm, float) and math.isnan(value_mm)):
        return "—"
    if math.isinf(value_mm):
        return "∞"
    if imperial:
        return _format_imperial(value_mm, digits)
    if value_mm < 10:
        return f"{_significant(value_mm, digits)} mm"
    if value_mm < 1000:
        return f"{_significant(value_mm / 10, digits)} cm"
    if value_mm >= 1_000_000:
        return f"{_significant(value_mm / 1_000_000, digits)} km"
    return f"{_significant(value_mm / 1000, digits)} m"


def _format_imperial(value_mm: float, digits: int) -> str:
    inches = value_mm / MM_PER_INCH
    if inches < 12:
        return f"{_significant(inches, digits)} in"
    feet = inches / 12
    if feet < 10:
        whole_feet = int(feet)
        rest_inches = round(inches - whole_feet * 12, 1)
        if rest_inches >= 12:
            whole_feet, rest_inches = whole_feet + 1, 0.0
        return f"{whole_feet} ft {rest_inches:g} in"
    if feet >= 5280 * 10:
        return f"{_significant(feet / 5280, digits)} mi"
    return f"{_significant(feet, digits)} ft"


def format_length_mm(value_mm: float | None, *, digits: int = 3) -> str:
    """Format a small optical length (focal length, CoC, Airy disk) in millimetres."""
    if value_mm is None:
        return "—"
    if math.isinf(value_mm):
        return "∞"
    return f"{_significant(value_mm, digits)} mm"


def format_f_number(f_number: float | None) -> str:
    """``f/8``, ``f/5.6``, ``f/1.4``: as marked on lenses, one decimal below f/10."""
    if f_number is None or math.isnan(f_number):
        return "—"
    if f_number >= 10:
        return f"f/{f_number:.0f}"
    return f"f/{f_number:.1f}".replace(".0", "") if f_number == round(f_number) else f"f/{f_number:.1f}"


def _significant(value: float, digits: int) -> str:
    if value == 0:
        return "0"
    magnitude = math.floor(math.log10(abs(value)))
    decimals = max(0, digits - 1 - magnitude)
    return f"{value:.{decimals}f}"


def metres_or_inf(value_mm: float | None) -> float | str | None:
    """The machine interface's form of a distance: metres, ``"inf"``, or ``None`` if unknown."""
    if value_mm is None:
        return None
    value_mm = float(value_mm)
    if math.isnan(value_mm):
        return None
    if math.isinf(value_mm):
        return "inf"
    return value_mm / 1000.0


def format_zone(near_mm: float | None, far_mm: float | None, imperial: bool = False) -> str:
    """'near – far' with units, ∞ for infinity. A shallow zone (close-up work) gets the
    extra figures that resolve about a fifth of its depth, so it reads 39.99 cm – 40.01 cm
    rather than 40.0 cm – 40.0 cm (at most six figures)."""
    digits = 3
    if near_mm and far_mm and math.isfinite(far_mm) and far_mm > near_mm > 0:
        digits = min(6, max(3, math.ceil(math.log10(5 * far_mm / (far_mm - near_mm)))))
    return (f"{format_distance(near_mm, imperial=imperial, digits=digits)} – "
            f"{format_distance(far_mm, imperial=imperial, digits=digits)}")


_F_NUMBER = re.compile(r"^\s*(?:f\s*/?\s*)?((?:\d+(?:\.\d*)?|\.\d+))\s*$", re.IGNORECASE)


def parse_f_number(text: str | float | int, *, what: str = "f-number") -> float:
    """Parse an f-number written as ``8``, ``f8``, ``f/8`` or ``F/5.6``."""
    if isinstance(text, (int, float)):
        return float(text)
    match = _F_NUMBER.match(str(text))
    if not match:
        raise InvalidValue(f"{what} {text!r} is not an f-number: expected a number such as 8, f8 or f/5.6")
    return float(match.group(1))


def format_round_distance(value_mm: float, *, imperial: bool = False) -> str:
    """A round distance (a focus-scale step) without trailing zeros: ``1.5 m``, ``38 cm``,
    ``2 ft``, ``∞``; other distances as ``format_distance`` gives them."""
    text = format_distance(value_mm, imperial=imperial)
    text = re.sub(r"(\d+\.\d*?)0+(?=\s)", r"\1", text)
    text = re.sub(r"\.(?=\s)", "", text)
    return text.replace(" ft 0 in", " ft")

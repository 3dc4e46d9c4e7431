"""Distances and lengths as people write them, in one place.

Inside the program every length is in millimetres (float, ``math.inf`` for infinity).
People write distances with units (``3m``, ``250cm``, ``10ft``, ``6in``, ``inf``); a bare
number on the command line is metres. Output is metric unless imperial is asked for.
"""

from __future__ import annotations

import math
import re

from sharpzone.errors import InvalidValue
from sharpzone.limits import check_distance_mm, check_length_mm, too_far

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

    A bare number takes ``default_unit`` (metres unless said). Negative, tiny and
    astronomical values are refused (``sharpzone.limits``); zero is allowed here and range
    checks belong to the caller.
    """
    value_mm = _distance_mm(text, default_unit, what)
    return check_distance_mm(value_mm, text, what)


def _distance_mm(text: str | float | int, default_unit: str, what: str) -> float:
    if isinstance(text, (int, float)):
        value_mm = float(text) * _DISTANCE_UNITS_MM[default_unit]
        if math.isinf(value_mm) and math.isfinite(text):  # so large it overflowed
            raise too_far(text, what)
        return value_mm
    raw = str(text).strip()
    if raw.lower() in _INFINITY_WORDS:
        return math.inf
    feet_inches = _FEET_AND_INCHES.match(raw.lower())
    if feet_inches:
        return float(feet_inches.group(1)) * MM_PER_FOOT + float(feet_inches.group(2)) * MM_PER_INCH
    match = _NUMBER_WITH_UNIT.match(raw)
    if not match:
        raise InvalidValue(what=what, value=text, problem="is not a distance", expected=DISTANCE_HELP)
    number, unit = float(match.group(1)), match.group(2).lower() or default_unit
    if unit not in _DISTANCE_UNITS_MM:
        known = ", ".join(u for u in _DISTANCE_UNITS_MM if u.isalpha())
        raise InvalidValue(what=what, value=text, problem=f"has an unknown unit {unit!r}", expected=f"one of {known}")
    value_mm = number * _DISTANCE_UNITS_MM[unit]
    if math.isinf(value_mm):  # a number so large it overflowed: not a way to write infinity
        raise too_far(text, what)
    return value_mm


def parse_length_mm(text: str | float | int, *, what: str = "length") -> float:
    """Parse a small optical length (focal length, CoC, pixel pitch): a bare number is mm."""
    try:
        value_mm = _distance_mm(text, "mm", what)
    except InvalidValue as error:
        if error.problem == "is not a distance":
            raise InvalidValue(what=what, value=text, problem="is not a length",
                               expected="millimetres such as 50 or 0.03mm") from None
        raise
    return check_length_mm(value_mm, text, what)


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


# Imperial in one style: below 10 ft, feet and inches to the nearest half inch (``5 ft``,
# ``5 ft 6½ in``, ``8½ in``); from 10 ft, feet with one decimal (``20.0 ft``); from 100 ft
# whole feet, from a mile miles to three figures. Below an inch (a close-up's depth),
# hundredths of an inch. ``digits`` above 3 (a shallow zone's near and far limits) gives
# the inches that many more decimals instead of half inches.
FEET_AND_INCHES_BELOW_FT = 10
FEET_PER_MILE = 5280


def _format_imperial(value_mm: float, digits: int) -> str:
    inches = value_mm / MM_PER_INCH
    if inches < 1:
        return f"{_significant(inches, max(2, digits - 1))} in"
    extra = max(0, digits - 3)
    total = round(inches, extra) if extra else round(inches * 2) / 2
    if total < 12 * FEET_AND_INCHES_BELOW_FT:
        feet, rest = divmod(total, 12)
        rest_text = _inches_text(rest, extra)
        if feet == 0:
            return f"{rest_text} in"
        return f"{feet:.0f} ft" if rest == 0 else f"{feet:.0f} ft {rest_text} in"
    feet = inches / 12
    if round(feet, 1) < 100:
        return f"{feet:.1f} ft"
    if feet < FEET_PER_MILE:
        return f"{feet:.0f} ft"
    return f"{_significant(feet / FEET_PER_MILE, digits)} mi"


def _inches_text(inches: float, decimals: int) -> str:
    """Inches with ``decimals`` places, or whole and half inches (``6``, ``6½``) when 0."""
    if decimals:
        return f"{inches:.{decimals}f}"
    whole = int(inches)
    return f"{whole}½" if inches - whole >= 0.25 else f"{whole}"


def format_focal_length(focal_mm: float | None) -> str:
    """A focal length as lenses are marked: ``35 mm``, ``4.5 mm``, ``85 mm`` (three figures
    at most, no trailing zeros); ``—`` when unknown."""
    return "—" if focal_mm is None else f"{focal_mm:.3g} mm"


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
        raise InvalidValue(what=what, value=text, problem="is not an f-number", expected="a number such as 8, f8 or f/5.6")
    return float(match.group(1))


def format_round_distance(value_mm: float, *, imperial: bool = False) -> str:
    """A round distance (a focus-scale step) without trailing zeros: ``1.5 m``, ``38 cm``,
    ``2 ft``, ``∞``; other distances as ``format_distance`` gives them."""
    text = format_distance(value_mm, imperial=imperial)
    text = re.sub(r"(\d+\.\d*?)0+(?=\s)", r"\1", text)
    text = re.sub(r"\.(?=\s)", "", text)
    return text.replace(" ft 0 in", " ft")

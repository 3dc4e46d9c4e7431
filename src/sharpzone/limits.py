"""The bounds of what a value can mean, each decided here once.

Parsers (``sharpzone.units``), the catalogue's services and the optics core ask this module
rather than writing their own numbers, and help texts quote the same constants. Bounds are
generous: they refuse only what no photographer can have meant (a distance of 1e308 m, a
50 mm lens that cannot focus closer than 45 m), and say what was probably meant.
"""

from __future__ import annotations

import math

from sharpzone.errors import InvalidValue

# Distances (focus, near and far limits, plan depths), millimetres. Below a hundredth of a
# millimetre nothing is measurable on a focus scale; beyond 10,000 km the answer is "inf".
DISTANCE_MIN_MM = 0.01
DISTANCE_MAX_MM = 1e10

# Small optical lengths (focal length, CoC, pixel pitch), millimetres: from a tenth of a
# micrometre (finer than any pixel) to 100 m (longer than any lens).
LENGTH_MIN_MM = 1e-4
LENGTH_MAX_MM = 1e5

# A focus stack's overlap: the share of each frame's depth its neighbour repeats.
OVERLAP_MIN = 0.0
OVERLAP_MAX = 0.9
OVERLAP_HELP = f"{OVERLAP_MIN:g} to {OVERLAP_MAX:g}"

# A lens's closest focus (from the sensor) is at most this many focal lengths, or
# CLOSE_FOCUS_FLOOR_MM for short lenses. Common practice: long telephotos focus no closer
# than roughly 8–12 focal lengths, normal lenses within a metre.
CLOSE_FOCUS_FOCAL_LENGTHS = 20
CLOSE_FOCUS_FLOOR_MM = 2000.0


def _metres_text(value_mm: float) -> str:
    return f"{value_mm / 1000:g} m"


def check_distance_mm(value_mm: float, original: object, what: str = "distance") -> float:
    """``value_mm`` when it is a distance someone can mean: 0, ``DISTANCE_MIN_MM`` to
    ``DISTANCE_MAX_MM``, or infinity. Negative, NaN, tiny and astronomical values are refused."""
    if math.isnan(value_mm) or value_mm < 0:
        raise InvalidValue(what=what, value=original, problem="must not be negative",
                           expected="a distance of 0 or more, or inf")
    if math.isinf(value_mm):
        return value_mm
    if value_mm > DISTANCE_MAX_MM:
        raise too_far(original, what)
    if 0 < value_mm < DISTANCE_MIN_MM:
        raise InvalidValue(what=what, value=original, problem="is too small to mean anything",
                           expected=f"0 or at least {DISTANCE_MIN_MM:g} mm")
    return value_mm


def too_far(original: object, what: str = "distance") -> InvalidValue:
    """The error for a number too large to be a distance (say ``inf`` for infinity)."""
    return InvalidValue(what=what, value=original, problem="is farther than any distance the sharp zone can use",
                        expected=f"at most {DISTANCE_MAX_MM / 1e6:,.0f} km", hint="write inf for infinity")


def check_length_mm(value_mm: float, original: object, what: str = "length") -> float:
    """``value_mm`` when it is an optical length someone can mean (0 is left to the caller)."""
    if math.isnan(value_mm) or value_mm < 0:
        raise InvalidValue(what=what, value=original, problem="must not be negative",
                           expected="millimetres such as 50 or 0.03mm")
    if math.isinf(value_mm) or value_mm > LENGTH_MAX_MM:
        raise InvalidValue(what=what, value=original, problem="is longer than any lens or sensor",
                           expected=f"at most {LENGTH_MAX_MM:g} mm")
    if 0 < value_mm < LENGTH_MIN_MM:
        raise InvalidValue(what=what, value=original, problem="is too small to mean anything",
                           expected=f"at least {LENGTH_MIN_MM:g} mm")
    return value_mm


def check_overlap(overlap: float) -> float:
    """A focus stack's overlap, ``OVERLAP_MIN`` to ``OVERLAP_MAX``."""
    if not (OVERLAP_MIN <= overlap <= OVERLAP_MAX):
        hint = f"did you mean {overlap / 100:g}?" if OVERLAP_MIN <= overlap / 100 <= OVERLAP_MAX else None
        raise InvalidValue(what="stack overlap", value=overlap, problem="is outside the range the overlap can take",
                           expected=f"a fraction from {OVERLAP_HELP}", hint=hint)
    return overlap


def longest_close_focus_mm(focal_mm: float) -> float:
    """The farthest a lens of focal length ``focal_mm`` can have its closest focus."""
    return max(CLOSE_FOCUS_FLOOR_MM, CLOSE_FOCUS_FOCAL_LENGTHS * focal_mm)


def check_close_focus(close_focus_mm: float | None, focal_max_mm: float, what: str = "close-focus distance") -> float | None:
    """``close_focus_mm`` unless it is farther than a lens of ``focal_max_mm`` can mean;
    the hint reads the number as centimetres or millimetres (a bare number is metres)."""
    if close_focus_mm is None or close_focus_mm <= longest_close_focus_mm(focal_max_mm):
        return close_focus_mm
    limit = longest_close_focus_mm(focal_max_mm)
    metres = close_focus_mm / 1000
    hint = None
    for unit, factor in (("cm", 10.0), ("mm", 1.0)):
        if metres * factor <= limit:
            hint = f"did you mean {metres:g} {unit}?"
            break
    raise InvalidValue(what=what, value=_metres_text(close_focus_mm),
                       problem=f"is farther than a {focal_max_mm:g} mm lens's closest focus can be",
                       expected=f"at most {_metres_text(limit)}", hint=hint)

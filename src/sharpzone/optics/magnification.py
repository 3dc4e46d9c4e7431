"""A lens's magnification as people write it and read it (``1:2``, ``0.25×``), apart from the
close-focusing model in ``optics.macro`` so the catalogue's tables and options need no numpy."""

from __future__ import annotations

import math
import re

from sharpzone.errors import InvalidValue

__all__ = ["MAX_MAGNIFICATION", "parse_magnification", "format_magnification"]

# Photographic lenses go up to about 5× (from memory: the highest-magnification lenses made
# for cameras without extension); anything beyond 10× is a typing error.
MAX_MAGNIFICATION = 10.0


def parse_magnification(text: str | float | int, *, what: str = "maximum magnification") -> float:
    """A magnification as people write it: ``1``, ``0.25``, ``0.25x``, ``0.25×``, ``1:2``
    or ``2:1``. Checked to lie above 0 and at most ``MAX_MAGNIFICATION``."""
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        value = float(text)
    else:
        cleaned = str(text).strip().lower().replace(" ", "")
        ratio = re.fullmatch(r"(\d+(?:\.\d+)?):(\d+(?:\.\d+)?)", cleaned)
        number = re.fullmatch(r"(\d+(?:\.\d+)?|\.\d+)(?:x|×)?", cleaned)
        if ratio:
            image, subject = float(ratio.group(1)), float(ratio.group(2))
            value = image / subject if subject > 0 else math.inf
        elif number:
            value = float(number.group(1))
        else:
            raise InvalidValue(f"{what} {text!r} is not valid: expected e.g. 1:1, 1:2, 0.25x or 0.5")
    if not (math.isfinite(value) and 0 < value <= MAX_MAGNIFICATION):
        raise InvalidValue(f"{what} {text!r} is not valid: expected above 0 and at most {MAX_MAGNIFICATION:g}×")
    return value


def format_magnification(value: float) -> str:
    """``1:1`` style for the usual round ratios (1:1, 1:2, 1:4, 2:1 …), else ``0.35×``."""
    if value >= 1 and abs(value - round(value)) < 1e-9:
        return f"{round(value)}:1"
    if value < 1 and abs(1 / value - round(1 / value)) < 1e-6:
        return f"1:{round(1 / value)}"
    return f"{value:.3g}×"

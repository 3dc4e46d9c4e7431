"""Sensor (film) formats as the optics sees them: a frame of width × height millimetres."""

from __future__ import annotations

import math
from dataclasses import dataclass

from sharpzone.errors import InvalidValue
from sharpzone.optics.limits import DIAGONAL_DIVISOR

# The 36 × 24 mm frame: the reference for "35 mm equivalent" focal lengths (EXIF
# FocalLengthIn35mmFilm, CIPA DC-008) and crop factors.
FULL_FRAME_DIAGONAL_MM = math.hypot(36.0, 24.0)


@dataclass(frozen=True)
class SensorFormat:
    """A named image area; ``coc_divisor`` is the default diagonal / k rule for this format."""

    name: str
    width_mm: float
    height_mm: float
    coc_divisor: float = DIAGONAL_DIVISOR

    def __post_init__(self) -> None:
        if not self.name or not self.name.strip():
            raise InvalidValue("a sensor format needs a name")
        for label, value in (("width", self.width_mm), ("height", self.height_mm)):
            if not (isinstance(value, (int, float)) and math.isfinite(value) and value > 0):
                raise InvalidValue(f"format {self.name!r}: {label} {value!r} mm must be a positive number")
        if not (math.isfinite(self.coc_divisor) and self.coc_divisor > 0):
            raise InvalidValue(f"format {self.name!r}: CoC divisor {self.coc_divisor!r} must be positive")

    @property
    def diagonal_mm(self) -> float:
        return math.hypot(self.width_mm, self.height_mm)

    @property
    def crop_factor(self) -> float:
        """How much smaller the diagonal is than 36 × 24 mm (1.0 for that frame)."""
        return FULL_FRAME_DIAGONAL_MM / self.diagonal_mm


def pixel_pitch_mm(fmt: SensorFormat, pixel_width: int | None, pixel_height: int | None = None) -> float | None:
    """Distance between pixel centres (mm): the format's long side over the pixels along it.

    Taking the long side of both makes a body recorded in portrait orientation give the same
    answer. ``None`` when the pixel count is unknown.
    """
    pixels = max(pixel_width or 0, pixel_height or 0)
    if pixels <= 0:
        return None
    return max(fmt.width_mm, fmt.height_mm) / pixels

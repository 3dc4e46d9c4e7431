"""Circle-of-confusion policies: how large a blur still counts as sharp.

The CoC is not a property of the lens but of how the picture will be looked at. Five
policies, each a frozen dataclass with a text form that round-trips through
``parse_coc_policy`` (so a shoot can store its policy and a command can take one):

==============================  =======================================================
``diagonal``                    the format's own rule (diagonal / 1500 unless the
                                catalogue says otherwise) — the default
``diagonal/K``                  format diagonal / K (1500 modern, 1000 traditional)
``fixed:0.03mm``                one value for every format
``print:10x8in@50cm``           from output intent: print size and viewing distance
``pixels:2``                    K × pixel pitch, for pixel-level (100 %) viewing
==============================  =======================================================
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from sharpzone.errors import InvalidValue
from sharpzone.optics.formats import SensorFormat

# Normal eyesight resolves about 5 line pairs per mm, a 0.2 mm blur, at the 250 mm near
# viewing distance (encyclopedia article "Circle of confusion", citing Ray, Applied
# Photographic Optics).
ACUITY_BLUR_MM = 0.2
NEAR_VIEWING_DISTANCE_MM = 250.0

POLICY_HELP = (
    "circle-of-confusion policy: 'diagonal' (the format's rule, diagonal/1500 by default), "
    "'diagonal/K', 'fixed:0.03mm', 'print:10x8in@50cm' (print size @ viewing distance) or "
    "'pixels:K' (K × pixel pitch)"
)


def _require_positive(label: str, value: float, unit: str = "", expected: str = "above 0") -> None:
    """``InvalidValue`` unless ``value`` is a finite number above 0 (``unit`` shown after it)."""
    if not (math.isfinite(value) and value > 0):
        raise InvalidValue(f"{label} {value!r}{unit} is not valid: expected {expected}")


class CocPolicy:
    """Base of the policies: ``coc_mm`` gives the value for a format, ``spec`` the text form."""

    spec: str

    def coc_mm(self, fmt: SensorFormat, pixel_pitch_mm: float | None = None) -> float:
        raise NotImplementedError

    def describe(self) -> str:
        """A short phrase for people, e.g. 'diagonal / 1500'."""
        raise NotImplementedError


@dataclass(frozen=True)
class DiagonalFraction(CocPolicy):
    """CoC = format diagonal / ``divisor``; ``None`` uses the format's own divisor."""

    divisor: float | None = None

    def __post_init__(self) -> None:
        if self.divisor is not None:
            _require_positive("CoC divisor", self.divisor, expected="a number above 0")

    @property
    def spec(self) -> str:  # type: ignore[override]
        return "diagonal" if self.divisor is None else f"diagonal/{self.divisor:g}"

    def coc_mm(self, fmt: SensorFormat, pixel_pitch_mm: float | None = None) -> float:
        return fmt.diagonal_mm / (self.divisor if self.divisor is not None else fmt.coc_divisor)

    def describe(self) -> str:
        return "format diagonal / its own divisor" if self.divisor is None else f"diagonal / {self.divisor:g}"


@dataclass(frozen=True)
class FixedCoc(CocPolicy):
    """One CoC (mm) whatever the format."""

    value_mm: float

    def __post_init__(self) -> None:
        _require_positive("circle of confusion", self.value_mm, " mm", "above 0 mm")

    @property
    def spec(self) -> str:  # type: ignore[override]
        return f"fixed:{self.value_mm:g}mm"

    def coc_mm(self, fmt: SensorFormat, pixel_pitch_mm: float | None = None) -> float:
        return self.value_mm

    def describe(self) -> str:
        return f"fixed {self.value_mm:g} mm"


@dataclass(frozen=True)
class PrintIntent(CocPolicy):
    """CoC from output intent: a print of ``width × height`` mm viewed from ``viewing_mm``.

    c = 0.2 mm × (viewing distance / 250 mm) / enlargement, the enlargement taken as print
    diagonal over format diagonal (common practice; an 8 × 10 in print from 36 × 24 mm is
    about 7.5×, giving c ≈ 0.026 mm at 25 cm).
    """

    print_width_mm: float
    print_height_mm: float
    viewing_mm: float = NEAR_VIEWING_DISTANCE_MM

    def __post_init__(self) -> None:
        for label, value in (("print width", self.print_width_mm), ("print height", self.print_height_mm),
                             ("viewing distance", self.viewing_mm)):
            _require_positive(label, value, " mm", "above 0 mm")

    @property
    def spec(self) -> str:  # type: ignore[override]
        return f"print:{self.print_width_mm:g}x{self.print_height_mm:g}mm@{self.viewing_mm:g}mm"

    def coc_mm(self, fmt: SensorFormat, pixel_pitch_mm: float | None = None) -> float:
        enlargement = math.hypot(self.print_width_mm, self.print_height_mm) / fmt.diagonal_mm
        return ACUITY_BLUR_MM * (self.viewing_mm / NEAR_VIEWING_DISTANCE_MM) / enlargement

    def describe(self) -> str:
        return (f"print {self.print_width_mm:g} × {self.print_height_mm:g} mm "
                f"viewed at {self.viewing_mm / 10:g} cm")


@dataclass(frozen=True)
class PixelPitch(CocPolicy):
    """CoC = ``multiplier`` × pixel pitch: sharp when inspected pixel for pixel."""

    multiplier: float = 2.0

    def __post_init__(self) -> None:
        _require_positive("pixel multiplier", self.multiplier)

    @property
    def spec(self) -> str:  # type: ignore[override]
        return f"pixels:{self.multiplier:g}"

    def coc_mm(self, fmt: SensorFormat, pixel_pitch_mm: float | None = None) -> float:
        if pixel_pitch_mm is None or not pixel_pitch_mm > 0:
            raise InvalidValue(
                f"CoC policy {self.spec!r} needs the pixel pitch, but the body's pixel width is unknown",
                hint="give the body its pixel dimensions, or choose another CoC policy",
            )
        return self.multiplier * pixel_pitch_mm

    def describe(self) -> str:
        return f"{self.multiplier:g} × pixel pitch"


DEFAULT_POLICY = DiagonalFraction()

_POSITIVE_NUMBER = r"(\d+(?:\.\d*)?|\.\d+)"


def parse_coc_policy(text: str | None) -> CocPolicy:
    """Parse a policy's text form (see the module doc); ``None`` or '' gives the default."""
    from sharpzone.units import parse_distance, parse_length_mm

    if text is None or not str(text).strip():
        return DEFAULT_POLICY
    raw = str(text).strip().lower()
    if raw == "diagonal":
        return DiagonalFraction()
    if match := re.fullmatch(rf"diagonal\s*/\s*{_POSITIVE_NUMBER}", raw):
        return DiagonalFraction(float(match.group(1)))
    if match := re.fullmatch(r"(?:fixed:)?\s*(\S+?mm|\d.*)", raw):
        if raw.startswith("fixed:") or raw.endswith("mm"):
            return FixedCoc(parse_length_mm(match.group(1), what="circle of confusion"))
    if match := re.fullmatch(r"print:\s*(\S+?)\s*x\s*(\S+?)\s*@\s*(\S+)", raw):
        width, height, viewing = match.groups()
        unit = re.sub(r"[\d.]+", "", height)  # "10x8in": the unit written once applies to both
        if unit and not re.search(r"[a-z\"']", width):
            width += unit
        return PrintIntent(
            parse_distance(width, default_unit="mm", what="print width"),
            parse_distance(height, default_unit="mm", what="print height"),
            parse_distance(viewing, default_unit="mm", what="viewing distance"),
        )
    if match := re.fullmatch(rf"pixels?\s*:\s*{_POSITIVE_NUMBER}", raw):
        return PixelPitch(float(match.group(1)))
    raise InvalidValue(f"CoC policy {text!r} is not valid: expected {POLICY_HELP}")

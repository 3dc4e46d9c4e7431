"""f-number series as marked on lenses, and rounding a needed f-number to a marked stop.

Each step of a full stop halves the light, so f-numbers grow by √2 per stop: the exact
values are 2^(k/2) (full), 2^(k/4) (half) and 2^(k/6) (third stops). Lenses and cameras
mark rounded labels: full stops 1, 1.4, 2, 2.8, 4, 5.6, 8, 11, 16, 22, 32, 45 (a film
maker's pamphlet "Optical Formulas and Their Applications", AA-26); third stops 1, 1.1,
1.2, 1.4, 1.6, 1.8, 2, 2.2, 2.5, 2.8, 3.2, 3.5, 4, 4.5, 5, 5.6, 6.3, 7.1, 8, 9, 10, 11, 13,
14, 16, 18, 20, 22 (encyclopedia article "F-number").
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

from sharpzone.errors import InvalidValue

Scale = Literal["full", "half", "third"]
STEPS_PER_STOP = {"full": 1, "half": 2, "third": 3}

# Engraved labels from f/0.5 to f/128, one per step; the exact value of step k is
# 2^(k / (2·steps)) counted from f/0.5. Full and third stops match the published series in
# the module doc; half stops and the ends beyond f/1 and f/22 are the usual markings (from
# memory).
_LABELS: dict[str, tuple[float, ...]] = {
    "full": (0.5, 0.7, 1, 1.4, 2, 2.8, 4, 5.6, 8, 11, 16, 22, 32, 45, 64, 90, 128),
    "half": (0.5, 0.6, 0.7, 0.85, 1, 1.2, 1.4, 1.7, 2, 2.4, 2.8, 3.3, 4, 4.8, 5.6, 6.7, 8, 9.5,
             11, 13, 16, 19, 22, 27, 32, 38, 45, 54, 64, 76, 90, 107, 128),
    "third": (0.5, 0.56, 0.63, 0.7, 0.8, 0.9, 1, 1.1, 1.2, 1.4, 1.6, 1.8, 2, 2.2, 2.5, 2.8, 3.2,
              3.5, 4, 4.5, 5, 5.6, 6.3, 7.1, 8, 9, 10, 11, 13, 14, 16, 18, 20, 22, 25, 29, 32,
              36, 40, 45, 51, 57, 64, 72, 80, 90, 101, 114, 128),
}


@dataclass(frozen=True)
class Stop:
    """One marked stop: ``label`` as engraved (5.6) and ``exact`` = 2^(k/(2·steps)) (5.657)."""

    label: float
    exact: float

    @property
    def value(self) -> float:
        """The conservative value to compute with: the smaller of label and exact."""
        return min(self.label, self.exact)


def check_scale(scale: str) -> Scale:
    if scale not in STEPS_PER_STOP:
        raise InvalidValue(f"stop scale {scale!r} is not valid: expected 'full', 'half' or 'third'")
    return scale  # type: ignore[return-value]


def _all_stops(scale: Scale) -> tuple[Stop, ...]:
    steps = 2 * STEPS_PER_STOP[scale]
    return tuple(Stop(float(label), 0.5 * 2.0 ** (k / steps)) for k, label in enumerate(_LABELS[scale]))


def stop_series(scale: str = "third", widest: float = 0.5, narrowest: float = 128.0) -> list[Stop]:
    """The marked stops of ``scale`` whose labels lie from ``widest`` to ``narrowest``."""
    scale = check_scale(scale)
    if not (0 < widest <= narrowest):
        raise InvalidValue(f"f-number range {widest:g}–{narrowest:g} is not valid: expected widest ≤ narrowest")
    return [stop for stop in _all_stops(scale) if widest - 1e-9 <= stop.label <= narrowest + 1e-9]


def marked_f_numbers(scale: str = "third", widest: float = 1.0, narrowest: float = 64.0) -> list[float]:
    """The engraved labels of ``scale`` between two f-numbers, e.g. [1, 1.4, 2, …] for full."""
    return [stop.label for stop in stop_series(scale, widest, narrowest)]


def round_up_to_stop(needed_f_number: float, scale: str = "third") -> Stop | None:
    """The widest marked stop that still gives at least ``needed_f_number``.

    Compares with the smaller of label and exact value, so a remedy of "f/5.6" holds whether
    the camera uses 5.6 or 2^(5/2) = 5.657. ``None`` when past f/128.
    """
    if not (needed_f_number > 0):
        raise InvalidValue(f"f-number {needed_f_number!r} is not valid: expected above 0")
    for stop in stop_series(scale, 0.5, 128.0):
        if stop.value >= needed_f_number * (1 - 1e-12):
            return stop
    return None


def stop_difference(from_f_number: float, to_f_number: float) -> float:
    """How many stops lie between two f-numbers (positive when stopping down): 2 log2(N2/N1)."""
    return 2.0 * math.log2(to_f_number / from_f_number)


def round_up_to_stops(needed_f_numbers, scale: str = "third"):
    """Vectorised ``round_up_to_stop``: (labels, values) arrays; NaN where past f/128 or unknown.

    ``values`` are the conservative numbers to compute with (see ``Stop.value``).
    """
    import numpy as np

    stops = _all_stops(check_scale(scale))
    values = np.array([stop.value for stop in stops])
    labels = np.array([stop.label for stop in stops])
    needed = np.asarray(needed_f_numbers, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        index = np.searchsorted(values, np.where(np.isnan(needed), np.inf, needed) * (1 - 1e-12), side="left")
    inside = index < len(values)
    safe = np.minimum(index, len(values) - 1)
    return np.where(inside, labels[safe], np.nan), np.where(inside, values[safe], np.nan)

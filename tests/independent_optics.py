"""The exact thin-lens sharp zone written out on its own, from published forms, for tests to
check the code against (scalars, plain ``math``; pupil magnification 1).

Open Photographic Society, "Hyperfocal distance": H = f²/(N c) + f; near = s (H − f) / (H + s − 2f);
far = s (H − f) / (H − s), with s measured from the lens. A distance D from the sensor is s + v
with 1/s + 1/v = 1/f (the Gaussian lens formula), so s = (D + √(D² − 4 f D)) / 2.
"""

from __future__ import annotations

import math
from typing import NamedTuple

# One-third stops as marked (encyclopedia article "F-number"; past f/22 the usual markings,
# from memory); the exact value of the k-th is 2^(k/6) from f/1.
THIRD_STOPS = (1, 1.1, 1.2, 1.4, 1.6, 1.8, 2, 2.2, 2.5, 2.8, 3.2, 3.5, 4, 4.5, 5, 5.6, 6.3, 7.1, 8, 9, 10, 11,
               13, 14, 16, 18, 20, 22, 25, 29, 32, 36, 40, 45, 51, 57, 64)


class MarkedStop(NamedTuple):
    label: float
    exact: float
    value: float


def stop_values():
    """(label, value to compute with) of each third stop: the smaller of label and exact."""
    return [(label, min(label, 2 ** (k / 6))) for k, label in enumerate(THIRD_STOPS)]


def third_stop_wider(stop) -> MarkedStop | None:
    """The third stop marked one step wider than ``stop`` (by its ``label``), or ``None`` at
    f/1 and for a label outside ``THIRD_STOPS``."""
    if stop.label not in THIRD_STOPS or stop.label == THIRD_STOPS[0]:
        return None
    k = THIRD_STOPS.index(stop.label) - 1
    exact = 2 ** (k / 6)
    return MarkedStop(THIRD_STOPS[k], exact, min(THIRD_STOPS[k], exact))


def lens_distance(sensor_mm: float, f: float) -> float:
    if math.isinf(sensor_mm):
        return math.inf
    return (sensor_mm + math.sqrt(sensor_mm * sensor_mm - 4 * f * sensor_mm)) / 2


def zone_from_sensor(f: float, n: float, c: float, sensor_mm: float) -> tuple[float, float]:
    """(near, far) in mm from the sensor for focus ``sensor_mm`` from the sensor."""
    h = f * f / (n * c) + f
    s = lens_distance(sensor_mm, f)
    if math.isinf(s):
        return h, math.inf  # focused at infinity: near limit at H - f from the lens, plus v = f
    v = s * f / (s - f)
    near = s * (h - f) / (h + s - 2 * f) + v
    far = s * (h - f) / (h - s) + v if s < h else math.inf
    return near, far


def holds_range(f, n, c, sensor_mm, near_target, far_target) -> bool:
    near, far = zone_from_sensor(f, n, c, sensor_mm)
    return near <= near_target * (1 + 1e-9) and far >= far_target * (1 - 1e-9)


def holds_depth(f, n, c, sensor_mm, front, back) -> bool:
    return holds_range(f, n, c, sensor_mm, sensor_mm - front, sensor_mm + back)


def magnification(sensor_mm: float, f: float) -> float:
    s = lens_distance(sensor_mm, f)
    return 0.0 if math.isinf(s) else f / (s - f)


def share_holding(holds, f: float, nearest: float, farthest: float, samples: int = 20001) -> float:
    """The share of [nearest, farthest] (in magnification) at whose focus ``holds(D)`` is true,
    by sampling evenly in magnification."""
    m_high, m_low = magnification(nearest, f), magnification(farthest, f)
    good = 0
    for i in range(samples):
        m = m_low + (m_high - m_low) * (i + 0.5) / samples
        sensor = math.inf if m <= 0 else f * (1 + m) ** 2 / m
        good += holds(sensor)
    return good / samples

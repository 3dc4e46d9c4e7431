"""Lenses that focus close by changing their focal length: the focal length a lens really has
at each focus distance, from its nominal focal length, close-focus distance and maximum
magnification.

A simple thin lens of focal length f, focused at D from the sensor (subject to sensor),
images at magnification m with

    D = f (1 + m)² / m          so          f = D m / (1 + m)²

(object distance f (1 + 1/m), image distance f (1 + m); their sum is D). It cannot focus
nearer than D = 4 f, at 1:1. Real macro and many close-focusing lenses move an inner group
to focus: their focal length shortens as they focus close, so a 100 mm lens reaches 1:1 at
about 30 cm, which a 100 mm thin lens never could. The lens's specification pins the end
point: at its close-focus distance D_c it reaches its maximum magnification M, so there its
focal length is

    f_c = D_c M / (1 + M)².

Between infinity (m = 0, f = f₀, the nominal focal length) and close focus (m = M, f = f_c)
the model lets the focal length change **linearly in magnification**:

    f(m) = f₀ + (f_c − f₀) m / M.

Why magnification: the focus distance in a photographer's hands runs from D_c to infinity,
but almost all the change of an internally focusing lens happens close up; in magnification
(or equally in subject dioptres near infinity, where m ≈ f/D) the change is spread evenly
over the focus travel, so f stays within a fraction of a percent of f₀ at portrait
distances and reaches f_c exactly at close focus. A blend linear in D would move f by most
of its change at distances where real lenses barely change. The sensor-to-subject
distance D(m) = f(m)(1 + m)²/m must fall steadily as m grows from 0 to M, so that every
focus distance from D_c to infinity has exactly one magnification; ``check_macro_spec``
refuses a specification for which it does not (the one place that validates the pair).

Given D, m is the one root in (0, M] of D(m) = D (found by bisection, vectorised); the
focal length is then f(m), and every thin-lens relation of ``dof`` holds with it: at one
focus setting the lens is one fixed optical system, so the near and far limits of that
frame use that one focal length. The hyperfocal distance is where m ≈ f/H is a few
thousandths, so f there differs from f₀ by far less than the catalogue's precision.

Where a lens records no maximum magnification, nothing here applies and the nominal focal
length is used, as before. The model is a paraxial estimate of a real lens; checked against
a two-group internally focusing lens traced with ray-transfer matrices in the tests.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from sharpzone.errors import InvalidValue
from sharpzone.optics._checks import all_scalar, as_array, scalar_or_array
from sharpzone.optics.magnification import format_magnification, parse_magnification

# Samples of m at which the monotonicity of D(m) is checked (log-spaced up to M).
_CHECK_SAMPLES = 400
_BISECTIONS = 80


def close_focus_focal_mm(close_focus_mm, max_magnification):
    """f_c = D_c M / (1 + M)²: the thin-lens focal length that reaches M at D_c (sensor)."""
    d = np.asarray(close_focus_mm, dtype=np.float64)
    m = np.asarray(max_magnification, dtype=np.float64)
    return d * m / (1 + m) ** 2


@dataclass(frozen=True)
class MacroSpec:
    """A lens's focusing as the model needs it: nominal focal length (mm), close-focus
    distance (mm from the sensor) and the maximum magnification reached there."""

    focal_mm: float
    close_focus_mm: float
    max_magnification: float

    @property
    def close_focus_focal_mm(self) -> float:
        return float(close_focus_focal_mm(self.close_focus_mm, self.max_magnification))

    def describe(self) -> str:
        """E.g. '1:1 at 30 cm: about 75 mm there, 100 mm towards infinity'."""
        return (f"{format_magnification(self.max_magnification)} at close focus: focal length "
                f"{self.close_focus_focal_mm:.0f} mm there, {self.focal_mm:g} mm towards infinity")


def check_macro_spec(focal_mm: float, close_focus_mm: float | None, max_magnification: float | None,
                     *, what: str = "lens") -> MacroSpec | None:
    """The one validation of a lens's (focal length, close focus, maximum magnification):
    ``None`` when no maximum magnification is recorded (the nominal model applies), else a
    ``MacroSpec``. Raises ``InvalidValue`` naming the problem: a magnification without a
    close-focus distance, one out of range, or a pair the model cannot follow smoothly."""
    if max_magnification is None:
        return None
    m_max = parse_magnification(max_magnification)
    if close_focus_mm is None:
        raise InvalidValue(f"{what}: a maximum magnification needs the close-focus distance it is reached at")
    if not (focal_mm > 0 and close_focus_mm > 0 and math.isfinite(close_focus_mm)):
        raise InvalidValue(f"{what}: focal length and close-focus distance must be above 0 mm")
    f_c = float(close_focus_focal_mm(close_focus_mm, m_max))
    k = (f_c - focal_mm) / m_max
    m = np.geomspace(m_max * 1e-4, m_max, _CHECK_SAMPLES)
    focal = focal_mm + k * m
    # d ln D / dm = f'/f + 2/(1 + m) − 1/m must stay below 0: D falls as m rises.
    slope = k / focal + 2 / (1 + m) - 1 / m
    if np.any(focal <= 0) or np.any(slope >= 0):
        raise InvalidValue(
            f"{what}: maximum magnification {format_magnification(m_max)} at {close_focus_mm / 10:g} cm is not "
            f"one a {focal_mm:g} mm lens can reach while focusing steadily closer "
            "(check the close-focus distance and the magnification)")
    return MacroSpec(float(focal_mm), float(close_focus_mm), m_max)


def _sensor_distance(f0, k, m):
    focal = f0 + k * m
    with np.errstate(divide="ignore"):
        return focal * (1 + m) ** 2 / m


def magnification_at_focus(spec: MacroSpec, focus_mm):
    """The magnification m at focus distance ``focus_mm`` (mm from the sensor; ``inf`` gives
    0). Distances nearer than the close-focus distance raise ``InvalidValue``."""
    scalar = all_scalar(focus_mm)
    d = as_array(focus_mm, "focus distance")
    near = d < spec.close_focus_mm * (1 - 1e-9)
    if np.any(near):
        raise InvalidValue(
            f"focus distance {float(d[near].flat[0]):g} mm is nearer than the lens's close-focus distance "
            f"{spec.close_focus_mm:g} mm (from the sensor)")
    f0, m_max = spec.focal_mm, spec.max_magnification
    k = (spec.close_focus_focal_mm - f0) / m_max
    lo = np.full(d.shape, m_max * 1e-12)
    hi = np.full(d.shape, m_max)
    for _ in range(_BISECTIONS):
        mid = np.sqrt(lo * hi)
        too_far = _sensor_distance(f0, k, mid) > d  # D falls as m grows: need larger m
        lo = np.where(too_far, mid, lo)
        hi = np.where(too_far, hi, mid)
    m = np.where(np.isinf(d), 0.0, np.where(d <= spec.close_focus_mm, m_max, np.sqrt(lo * hi)))
    return scalar_or_array(m, scalar)


def effective_focal_mm(spec: MacroSpec | None, focal_mm, focus_mm):
    """The focal length (mm) the lens has while focused at ``focus_mm`` (from the sensor):
    ``focal_mm`` itself without a ``spec``, else f(m) of the module's model."""
    if spec is None:
        scalar = all_scalar(focal_mm, focus_mm)
        shape = np.broadcast_shapes(np.shape(focal_mm), np.shape(focus_mm))
        return scalar_or_array(np.broadcast_to(np.asarray(focal_mm, dtype=np.float64), shape).copy(), scalar)
    scalar = all_scalar(focus_mm)
    m = np.asarray(magnification_at_focus(spec, focus_mm))
    k = (spec.close_focus_focal_mm - spec.focal_mm) / spec.max_magnification
    return scalar_or_array(spec.focal_mm + k * m, scalar)


def sharp_zone_focusing(spec: MacroSpec | None, focal_mm, f_number, coc_mm, focus_mm, *, reference="sensor",
                        pupil_magnification=1.0):
    """``dof.sharp_zone`` with the focal length the lens has at each focus distance.

    Without a ``spec`` it is ``dof.sharp_zone`` itself. With one, distances are from the
    sensor (the model is defined there; ``reference="lens"`` raises ``InvalidValue``): at
    magnification m the lens sits v = f(1 + m) in front of the sensor and the subject
    s = f(1 + 1/m) in front of the lens, which also holds beyond 1:1, where the thin-lens
    conversion from D alone would pick the other root.
    """
    from dataclasses import replace

    from sharpzone.optics.dof import sharp_zone

    if spec is None:
        return sharp_zone(focal_mm, f_number, coc_mm, focus_mm, reference=reference,
                          pupil_magnification=pupil_magnification)
    if reference != "sensor":
        raise InvalidValue("a lens's maximum magnification is modelled with distances from the sensor: "
                           "use --reference sensor")
    scalar = all_scalar(f_number, coc_mm, focus_mm, pupil_magnification)
    d = as_array(focus_mm, "focus distance")
    m = np.asarray(magnification_at_focus(spec, d))
    k = (spec.close_focus_focal_mm - spec.focal_mm) / spec.max_magnification
    f = spec.focal_mm + k * m
    with np.errstate(divide="ignore"):
        s = np.where(m > 0, f * (1 + 1 / np.where(m > 0, m, 1.0)), np.inf)
    v = f * (1 + m)
    zone = sharp_zone(f, f_number, coc_mm, s, reference="lens", pupil_magnification=pupil_magnification)
    at_infinity = sharp_zone(spec.focal_mm, f_number, coc_mm, np.inf, reference="sensor")
    near = np.asarray(zone.near_mm) + v
    far = np.where(np.isinf(zone.far_mm), np.inf, np.asarray(zone.far_mm) + v)
    with np.errstate(invalid="ignore"):
        total = np.where(np.isinf(far), np.inf, far - near)
        behind = np.where(np.isinf(far), np.inf, far - d)
    shape = np.shape(np.asarray(zone.near_mm))

    def out(values):
        return scalar_or_array(np.broadcast_to(np.asarray(values, dtype=np.float64), shape).copy(), scalar)

    return replace(zone, focus_mm=out(d), near_mm=out(near), far_mm=out(far), total_mm=out(total),
                   front_mm=out(d - near), behind_mm=out(behind),
                   hyperfocal_mm=out(at_infinity.hyperfocal_mm), reference="sensor")


def focus_for_near_limit(spec: MacroSpec, f_number, coc_mm, target_mm, pupil_magnification=1.0):
    """Focus distances (mm from the sensor) whose zone starts at ``target_mm`` (from the
    sensor), with the focal length following the focus: ``inf`` where even focus at infinity
    starts farther, the close-focus distance where the target is nearer than it reaches.

    Bisection on the magnification, where every quantity is in closed form: at m the lens
    is f(m), the front limit from the sensor f(1 + m) + f(1 + 1/m′) with
    m′ = P (f m + N c) / (P f − N c) (``dof``), and it moves away as m falls.
    """
    from sharpzone.optics.dof import zone_limits_lens_mm

    n, c, p, target = np.broadcast_arrays(*(np.asarray(x, dtype=np.float64)
                                            for x in (f_number, coc_mm, pupil_magnification, target_mm)))
    f0, m_max = spec.focal_mm, spec.max_magnification
    k = (spec.close_focus_focal_mm - f0) / m_max

    def near_from_sensor(m):
        f = f0 + k * m
        near, _far, _m = zone_limits_lens_mm(f, n, c, f * (1 + 1 / m), p)
        return near + f * (1 + m)

    at_infinity = np.asarray(zone_limits_lens_mm(f0, n, c, np.inf, p)[0]) + f0
    lo = np.full(target.shape, m_max * 1e-12)
    hi = np.full(target.shape, m_max)
    for _ in range(_BISECTIONS):
        mid = np.sqrt(lo * hi)
        too_near = near_from_sensor(mid) < target  # the zone starts short of the target: less m
        hi = np.where(too_near, mid, hi)
        lo = np.where(too_near, lo, mid)
    m = np.sqrt(lo * hi)
    focus = (f0 + k * m) * (1 + m) ** 2 / m
    focus = np.where(target >= at_infinity, np.inf, np.maximum(focus, spec.close_focus_mm))
    return focus


def effective_focal_rows(focal_mm, close_focus_mm, max_magnification, focus_mm) -> np.ndarray:
    """Per row (arrays of equal length): the focal length the lens has at ``focus_mm`` (from
    the sensor). Rows without a maximum magnification, or with a pair ``check_macro_spec``
    refuses, keep ``focal_mm``; a focus nearer than the close-focus distance (a recorded
    distance the lens cannot have had) takes the close-focus focal length. Each distinct
    lens is worked out once."""
    focal = np.asarray(focal_mm, dtype=np.float64)
    close = np.asarray(close_focus_mm, dtype=np.float64)
    m_max = np.asarray(max_magnification, dtype=np.float64)
    focus = np.asarray(focus_mm, dtype=np.float64)
    result = focal.copy()
    with np.errstate(invalid="ignore"):
        usable = (m_max > 0) & (close > 0) & (focal > 0) & ~np.isnan(focus)
    if not usable.any():
        return result
    keys = np.column_stack([focal[usable], close[usable], m_max[usable]])
    rows = np.flatnonzero(usable)
    for key in np.unique(keys, axis=0):
        try:
            spec = check_macro_spec(float(key[0]), float(key[1]), float(key[2]))
        except InvalidValue:
            continue
        these = rows[np.all(keys == key, axis=1)]
        result[these] = effective_focal_mm(spec, spec.focal_mm, np.maximum(focus[these], spec.close_focus_mm))
    return result

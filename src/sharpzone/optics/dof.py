"""Sharp zone (depth of field) of a lens focused at a distance: exact Gaussian optics.

All lengths are millimetres. ``focal_mm`` f, ``f_number`` N, ``coc_mm`` c, focus distance s.

The model works in magnification space. A lens focused at lens distance s images that
plane at magnification m = f / (s − f). A point whose own magnification is m′ comes to
focus elsewhere and, with an exit pupil P·f/N wide (P the pupil magnification, exit over
entrance pupil diameter), blurs on the sensor into a disc of diameter
``(P f / N) |m − m′| / (m′ + P)``. Setting that equal to c gives the limits:

    m′_near = P (f m + N c) / (P f − N c)      m′_far = P (f m − N c) / (P f + N c)

and a distance u = f (1 + 1/m′) from the front principal plane. With P = 1 these reduce to
the exact thin-lens forms (Open Photographic Society, "Hyperfocal distance"):
H = f²/(N c) + f; near = s (H − f) / (H + s − 2f); far = s (H − f) / (H − s). Unlike the
common approximations (near ≈ H s / (H + s)) they stay right as s approaches f, which is
where close-up work lives. P ≠ 1 (asymmetric designs) matters above about 0.1×
(P. A. van Walree, "Derivation of the DOF equations").

Distances people give (lens scales, EXIF SubjectDistance) are measured from the sensor
plane; published worked examples measure from the lens. Every function takes the
reference explicitly and reports in the same one.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

from sharpzone.errors import InvalidValue
from sharpzone.optics._checks import all_scalar, as_array, require, scalar_or_array

Reference = Literal["lens", "sensor"]
REFERENCES: tuple[str, ...] = ("lens", "sensor")

from sharpzone.optics.limits import MIN_F_NUMBER  # noqa: E402 - the one home of the floor


def check_reference(reference: str) -> Reference:
    """Validate a distance reference name: ``"lens"`` or ``"sensor"``."""
    if reference not in REFERENCES:
        raise InvalidValue(f"distance reference {reference!r} is not valid: expected 'lens' or 'sensor'")
    return reference  # type: ignore[return-value]


def validate_lens_inputs(focal_mm, f_number, coc_mm, pupil_magnification=1.0):
    """Arrays of the four basic inputs, each checked; raises ``InvalidValue`` naming a bad value."""
    f = as_array(focal_mm, "focal length")
    n = as_array(f_number, "f-number")
    c = as_array(coc_mm, "circle of confusion")
    p = as_array(pupil_magnification, "pupil magnification")
    require(f, (f > 0) & np.isfinite(f), "focal length {value:g} mm is not valid: expected a length above 0 mm")
    require(n, (n >= MIN_F_NUMBER) & np.isfinite(n), "f-number {value:g} is not valid: expected f/0.5 or more")
    require(c, (c > 0) & np.isfinite(c), "circle of confusion {value:g} mm is not valid: expected above 0 mm")
    require(p, (p > 0) & np.isfinite(p), "pupil magnification {value:g} is not valid: expected above 0")
    return f, n, c, p


def lens_distance_array(distance_mm, focal_mm, what: str = "focus distance") -> np.ndarray:
    """``distance_mm`` (from the lens) as an array, checked to lie beyond the focal length:
    a lens images only subjects farther away than f."""
    distance = as_array(distance_mm, what)
    require(distance, distance > focal_mm, what + " {value:g} mm is not beyond the focal length: "
            "a lens focuses only on subjects farther than its focal length")
    return distance


def hyperfocal_mm(focal_mm, f_number, coc_mm):
    """Hyperfocal distance H = f²/(N c) + f in mm, measured from the lens.

    Focused at H, everything from about H/2 to infinity is acceptably sharp. The ``+ f`` term
    makes it the exact thin-lens value (the near limit at s = H is then exactly H/2).
    """
    scalar = all_scalar(focal_mm, f_number, coc_mm)
    f, n, c, _ = validate_lens_inputs(focal_mm, f_number, coc_mm)
    return scalar_or_array(f * f / (n * c) + f, scalar)


def image_distance_mm(lens_distance_mm, focal_mm):
    """Lens-to-image distance v for a subject s in front of the lens: 1/s + 1/v = 1/f."""
    s = np.asarray(lens_distance_mm, dtype=np.float64)
    f = np.asarray(focal_mm, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        v = np.where(np.isinf(s), f, s * f / (s - f))
    return v


def sensor_to_lens_distance(sensor_distance_mm, focal_mm):
    """Convert a subject distance measured from the sensor plane (D) to one from the lens (s).

    With D = s + v and 1/s + 1/v = 1/f, s is the larger root of s² − D s + f D = 0:
    s = (D + √(D² − 4 f D)) / 2. A real image needs D ≥ 4f (1:1 is the closest a simple
    lens can focus with the sensor at D = 4f). Infinity stays infinity.
    """
    scalar = all_scalar(sensor_distance_mm, focal_mm)
    d = as_array(sensor_distance_mm, "focus distance")
    f = as_array(focal_mm, "focal length")
    require(d, (d >= 4 * f), "focus distance {value:g} mm from the sensor is too close for this focal "
            "length: a lens cannot focus nearer than 4 × its focal length from the sensor")
    with np.errstate(invalid="ignore"):
        s = np.where(np.isinf(d), np.inf, (d + np.sqrt(np.maximum(d * d - 4 * f * d, 0.0))) / 2)
    return scalar_or_array(s, scalar)


def lens_to_sensor_distance(lens_distance_mm, focal_mm):
    """Convert a subject distance from the lens (s > f) to one from the sensor: D = s + v."""
    scalar = all_scalar(lens_distance_mm, focal_mm)
    f = as_array(focal_mm, "focal length")
    s = lens_distance_array(lens_distance_mm, f)
    return scalar_or_array(np.where(np.isinf(s), np.inf, s + image_distance_mm(s, f)), scalar)


@dataclass(frozen=True)
class SharpZone:
    """The sharp zone of one or many exposures; every length in mm, in the caller's reference.

    ``far_mm`` and ``total_mm`` are ``inf`` when the zone reaches infinity; ``magnification``
    is the image scale at the focus plane; ``effective_f_number`` is N (1 + m/P), the
    f-number that governs exposure and diffraction in close-up work.
    """

    focus_mm: np.ndarray | float
    near_mm: np.ndarray | float
    far_mm: np.ndarray | float
    hyperfocal_mm: np.ndarray | float
    total_mm: np.ndarray | float
    front_mm: np.ndarray | float
    behind_mm: np.ndarray | float
    magnification: np.ndarray | float
    effective_f_number: np.ndarray | float
    reference: Reference


def _distance_from_magnification(m_prime, f):
    """u = f (1 + 1/m′) from the front principal plane; m′ ≤ 0 means infinity."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(m_prime > 0, f * (1 + 1 / m_prime), np.inf)


def zone_limits_lens_mm(focal_mm, f_number, coc_mm, lens_distance_mm, pupil_magnification=1.0):
    """Near and far limits (mm from the lens) for arrays already validated; see module doc."""
    f, n, c, p = (np.asarray(x, dtype=np.float64) for x in (focal_mm, f_number, coc_mm, pupil_magnification))
    s = np.asarray(lens_distance_mm, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        m = np.where(np.isinf(s), 0.0, f / (s - f))
        nc = n * c
        # When N c ≥ P f the blur tolerance exceeds the aperture itself: everything from
        # the lens onwards would pass; treat the near limit as the focal plane.
        near_m = np.where(p * f > nc, p * (f * m + nc) / (p * f - nc), np.inf)
        far_m = p * (f * m - nc) / (p * f + nc)
        # Focused at (or a rounding error short of) H, the far limit is infinity.
        far_m = np.where(f * m - nc <= 1e-12 * (f * m + nc), 0.0, far_m)
    near = _distance_from_magnification(near_m, f)
    far = _distance_from_magnification(far_m, f)
    return near, far, m


def sharp_zone(
    focal_mm,
    f_number,
    coc_mm,
    focus_mm,
    *,
    reference: Reference = "sensor",
    pupil_magnification=1.0,
) -> SharpZone:
    """The sharp zone for a lens of ``focal_mm`` at ``f_number`` focused at ``focus_mm``.

    Any argument may be a scalar or an array (broadcast together). ``reference`` says where
    ``focus_mm`` is measured from, and the limits come back in the same reference. With a
    scalar in every argument the fields are Python floats.
    """
    check_reference(reference)
    scalar = all_scalar(focal_mm, f_number, coc_mm, focus_mm, pupil_magnification)
    f, n, c, p = validate_lens_inputs(focal_mm, f_number, coc_mm, pupil_magnification)
    focus = as_array(focus_mm, "focus distance")
    if reference == "sensor":
        s = np.asarray(sensor_to_lens_distance(focus, f))
    else:
        s = lens_distance_array(focus, f)
    near, far, m = zone_limits_lens_mm(f, n, c, s, p)
    hyperfocal = f * f / (n * c) + f
    if reference == "sensor":
        # The lens sits v in front of the sensor while focused at s; every limit moves by v.
        v = image_distance_mm(s, f)
        near, far = near + v, np.where(np.isinf(far), np.inf, far + v)
        # Focused at the hyperfocal distance, the scale reads H + v(H).
        hyperfocal = hyperfocal + image_distance_mm(hyperfocal, f)
    with np.errstate(invalid="ignore"):
        total = np.where(np.isinf(far), np.inf, far - near)
        behind = np.where(np.isinf(far), np.inf, far - focus)
    front = focus - near
    effective = n * (1 + m / p)
    shape = np.broadcast_shapes(f.shape, n.shape, c.shape, focus.shape, p.shape)

    def out(values):
        return scalar_or_array(np.broadcast_to(values, shape).astype(np.float64), scalar)

    return SharpZone(
        focus_mm=out(focus),
        near_mm=out(near),
        far_mm=out(far),
        hyperfocal_mm=out(hyperfocal),
        total_mm=out(total),
        front_mm=out(front),
        behind_mm=out(behind),
        magnification=out(m),
        effective_f_number=out(effective),
        reference=reference,
    )


def blur_diameter_mm(focal_mm, f_number, focus_mm, subject_mm, *, pupil_magnification=1.0):
    """Diameter (mm, on the sensor) of the blur disc of a point at ``subject_mm`` while focused
    at ``focus_mm``; both measured from the lens.

    With P = 1 this is C = f² |So/Soa − 1| / (N (So − f)) (D. Jacobson, "Photographic Lenses
    Tutorial", section 04).
    """
    scalar = all_scalar(focal_mm, f_number, focus_mm, subject_mm, pupil_magnification)
    f, n, _, p = validate_lens_inputs(focal_mm, f_number, 1.0, pupil_magnification)
    s = lens_distance_array(focus_mm, f)
    x = lens_distance_array(subject_mm, f, "subject distance")
    with np.errstate(divide="ignore", invalid="ignore"):
        m = np.where(np.isinf(s), 0.0, f / (s - f))
        m_subject = np.where(np.isinf(x), 0.0, f / (x - f))
        blur = (p * f / n) * np.abs(m - m_subject) / (m_subject + p)
    return scalar_or_array(blur, scalar)


def magnification_at(focal_mm, lens_distance_mm):
    """Image scale m = f / (s − f) of a subject ``lens_distance_mm`` from the lens (0 at ∞)."""
    scalar = all_scalar(focal_mm, lens_distance_mm)
    f = as_array(focal_mm, "focal length")
    s = lens_distance_array(lens_distance_mm, f)
    with np.errstate(divide="ignore"):
        return scalar_or_array(np.where(np.isinf(s), 0.0, f / (s - f)), scalar)


def effective_f_number(f_number, magnification, pupil_magnification=1.0):
    """Working f-number N (1 + m/P): what exposure and diffraction see at magnification m
    (D. Jacobson, "Photographic Lenses Tutorial", section 04: Ne = N (1 + M/p))."""
    scalar = all_scalar(f_number, magnification, pupil_magnification)
    n = as_array(f_number, "f-number")
    m = as_array(magnification, "magnification")
    p = as_array(pupil_magnification, "pupil magnification")
    require(m, m >= 0, "magnification {value:g} is not valid: expected 0 or more")
    return scalar_or_array(n * (1 + m / p), scalar)


def closeup_total_depth_mm(f_number, coc_mm, magnification, pupil_magnification=1.0):
    """Total depth of field in close-up work, 2 N c (1 + m/P) / m² (mm).

    The usual macro approximation: it ignores the hyperfocal term, so it is good at high
    magnification (about 0.1× and above) and useless towards infinity, where m → 0.
    """
    scalar = all_scalar(f_number, coc_mm, magnification, pupil_magnification)
    n = as_array(f_number, "f-number")
    c = as_array(coc_mm, "circle of confusion")
    m = as_array(magnification, "magnification")
    p = as_array(pupil_magnification, "pupil magnification")
    require(m, m > 0, "magnification {value:g} is not valid: expected above 0")
    require(c, c > 0, "circle of confusion {value:g} mm is not valid: expected above 0 mm")
    return scalar_or_array(2 * n * c * (1 + m / p) / (m * m), scalar)


# Above this image scale the close-up figures (effective f-number, macro depth) are worth
# showing next to the distance limits: the light loss reaches about a third of a stop.
CLOSEUP_MAGNIFICATION = 0.1

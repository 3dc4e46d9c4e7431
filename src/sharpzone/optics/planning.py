"""Planning: which f-number, which focus distance, or how many focus-stacked frames hold a
range of distances [near_target, far_target] sharp.

Built on the magnification-space limits of ``dof`` (exact, pupil magnification P): a point
at magnification m′ is held while focused at m when

    N ≥ P f (m_near_target − m) / (c (P + m_near_target))     (near end)
    N ≥ P f (m − m_far_target) / (c (P + m_far_target))       (far end)

The first rises as focus moves away, the second falls, so the least stopping down is where
they are equal; for a range reaching infinity with P = 1 that is focus at twice the near
end (common practice: "focus at twice the near distance", here exact).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sharpzone.errors import InvalidValue
from sharpzone.optics._checks import all_scalar, as_array, require, scalar_or_array
from sharpzone.optics.macro import MacroSpec, effective_focal_mm, focus_for_near_limit, sharp_zone_focusing
from sharpzone.optics.dof import (
    Reference,
    check_reference,
    image_distance_mm,
    lens_distance_array,
    sensor_to_lens_distance,
    validate_lens_inputs,
)

from sharpzone.optics.planning_limits import DEFAULT_STACK_OVERLAP, MAX_STACK_FRAMES, MAX_STACK_OVERLAP


def _check_range(near_target, far_target, focal, reference: Reference):
    a = as_array(near_target, "near end of the range")
    b = as_array(far_target, "far end of the range")
    nearest = 4 * focal if reference == "sensor" else focal
    require(a, a > nearest, "near end {value:g} mm is too close: a lens cannot focus that near")
    require(b, np.broadcast_to(b, np.broadcast_shapes(a.shape, b.shape)) > a,
            "far end {value:g} mm is not beyond the near end of the range")
    return a, b


def _magnification(distance, f):
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(np.isinf(distance), 0.0, f / (distance - f))


def _needed_f_numbers_lens(f, c, p, s, a, b):
    """(needed for the near end, needed for the far end) with lens-referenced distances."""
    m = _magnification(s, f)
    with np.errstate(divide="ignore", invalid="ignore"):
        m_a = np.where(a > f, f / (a - f), np.inf)
        m_b = _magnification(b, f)
        for_near = np.where(np.isinf(m_a), np.inf, p * f * (m_a - m) / (c * (p + m_a)))
        for_far = p * f * (m - m_b) / (c * (p + m_b))
    return for_near, for_far


def f_number_for_range(
    focal_mm, coc_mm, focus_mm, near_target_mm, far_target_mm, *, reference: Reference = "sensor",
    pupil_magnification=1.0,
):
    """The least f-number that holds [near_target, far_target] sharp when focused at ``focus_mm``.

    Exact (not rounded to a marked stop: see ``stops.round_up_to_stop``). Comes back below
    the lens's widest aperture when any aperture would do; ``inf`` when no f-number can
    (a target nearer than the lens can image).
    """
    check_reference(reference)
    scalar = all_scalar(focal_mm, coc_mm, focus_mm, near_target_mm, far_target_mm, pupil_magnification)
    f, _, c, p = validate_lens_inputs(focal_mm, 1.0, coc_mm, pupil_magnification)
    a, b = _check_range(near_target_mm, far_target_mm, f, reference)
    focus = as_array(focus_mm, "focus distance")
    if reference == "sensor":
        s = np.asarray(sensor_to_lens_distance(focus, f))
        v = image_distance_mm(s, f)
        a, b = a - v, b - v
    else:
        s = lens_distance_array(focus, f)
    for_near, for_far = _needed_f_numbers_lens(f, c, p, s, a, b)
    return scalar_or_array(np.maximum(np.maximum(for_near, for_far), 0.0), scalar)


def _bisect_increasing(func, target, lo, hi, iterations=90):
    """Vectorised geometric bisection: the x in [lo, hi] where increasing ``func`` meets ``target``."""
    lo = np.array(lo, dtype=np.float64, copy=True)
    hi = np.array(hi, dtype=np.float64, copy=True)
    for _ in range(iterations):
        mid = np.sqrt(lo * hi)
        below = func(mid) < target
        lo = np.where(below, mid, lo)
        hi = np.where(below, hi, mid)
    return np.sqrt(lo * hi)


@dataclass(frozen=True)
class FocusPlan:
    """Where to focus to hold a range with the least stopping down, and that f-number (exact)."""

    focus_mm: np.ndarray | float
    f_number: np.ndarray | float
    reference: Reference


def best_focus_for_range(
    focal_mm, coc_mm, near_target_mm, far_target_mm, *, reference: Reference = "sensor",
    pupil_magnification=1.0,
) -> FocusPlan:
    """The focus distance that holds [near_target, far_target] with the least stopping down.

    Lens-referenced it is the closed form where both ends need the same f-number; measured
    from the sensor the lens moves as it focuses, so the same balance is found by bisection.
    """
    check_reference(reference)
    scalar = all_scalar(focal_mm, coc_mm, near_target_mm, far_target_mm, pupil_magnification)
    f, _, c, p = validate_lens_inputs(focal_mm, 1.0, coc_mm, pupil_magnification)
    a, b = _check_range(near_target_mm, far_target_mm, f, reference)
    f, c, p, a, b = np.broadcast_arrays(f, c, p, a, b)
    if reference == "lens":
        m_a, m_b = _magnification(a, f), _magnification(b, f)
        m = (m_a * (p + m_b) + m_b * (p + m_a)) / (2 * p + m_a + m_b)
        focus = f + f / m
        needed = f_number_for_range(f, c, focus, a, b, reference="lens", pupil_magnification=p)
    else:
        def imbalance(distance):
            s = np.asarray(sensor_to_lens_distance(distance, f))
            v = image_distance_mm(s, f)
            for_near, for_far = _needed_f_numbers_lens(f, c, p, s, a - v, b - v)
            return for_near - for_far

        upper = np.where(np.isinf(b), 8 * a + 8 * f, b)
        focus = _bisect_increasing(imbalance, 0.0, a, upper)
        needed = f_number_for_range(f, c, focus, a, b, reference="sensor", pupil_magnification=p)
    return FocusPlan(scalar_or_array(focus, scalar), scalar_or_array(needed, scalar), reference)


@dataclass(frozen=True)
class StackPlan:
    """A focus stack at one f-number: frames in order from near to far (mm, caller's reference)."""

    f_number: float
    focus_mm: tuple[float, ...]
    near_mm: tuple[float, ...]
    far_mm: tuple[float, ...]
    overlap: float
    reference: Reference
    # Per frame: image scale, working f-number N (1 + m/P) and the focal length the lens has
    # there (the nominal one unless the lens records a maximum magnification).
    magnification: tuple[float, ...] = ()
    effective_f_number: tuple[float, ...] = ()
    focal_mm: tuple[float, ...] = ()

    @property
    def frame_count(self) -> int:
        return len(self.focus_mm)


def _focus_for_near_limit(f, n, c, p, target_near, reference: Reference):
    """Focus distances whose near limit lands on ``target_near`` (inf where even ∞ is not enough).

    Lens-referenced this inverts m′_near = P (f m + N c)/(P f − N c) in closed form. From the
    sensor the lens moves by v = f (1 + m) as it focuses, so the target is re-expressed from
    the lens and the inversion repeated until v settles (a contraction: v changes far less
    than the distances it shifts).
    """
    target = np.asarray(target_near, dtype=np.float64)
    nc = n * c

    def focus_from_lens_target(lens_target):
        with np.errstate(divide="ignore", invalid="ignore"):
            m_target = np.where(lens_target > f, f / (lens_target - f), np.inf)
            m = (m_target * (p * f - nc) / p - nc) / f
            return np.where(m > 0, f + f / m, np.inf), m

    if reference == "lens":
        focus, _ = focus_from_lens_target(target)
        return focus
    v = f * np.ones_like(target)
    for _ in range(60):
        focus_lens, m = focus_from_lens_target(target - v)
        v_next = np.where(np.isfinite(focus_lens), f * (1 + np.maximum(m, 0.0)), f)
        if np.allclose(v_next, v, rtol=1e-13, atol=0):
            v = v_next
            break
        v = v_next
    focus_lens, _ = focus_from_lens_target(target - v)
    with np.errstate(invalid="ignore"):
        return np.where(np.isfinite(focus_lens), focus_lens + image_distance_mm(focus_lens, f), np.inf)


def stack_frame_counts(
    focal_mm, f_number, coc_mm, near_target_mm, far_target_mm, *, reference: Reference = "sensor",
    pupil_magnification=1.0, overlap: float = DEFAULT_STACK_OVERLAP,
):
    """How many focus-stacked frames at ``f_number`` cover [near_target, far_target] (vectorised).

    Each frame's near limit sits ``overlap`` (a fraction of the previous frame's depth) inside
    the previous frame's far limit. Rows needing more than ``MAX_STACK_FRAMES`` give -1.
    """
    counts, _ = _walk_stack(focal_mm, f_number, coc_mm, near_target_mm, far_target_mm,
                            reference, pupil_magnification, overlap, keep_frames=False)
    return counts


def plan_focus_stack(
    focal_mm: float, f_number: float, coc_mm: float, near_target_mm: float, far_target_mm: float, *,
    reference: Reference = "sensor", pupil_magnification: float = 1.0, overlap: float = DEFAULT_STACK_OVERLAP,
    macro: MacroSpec | None = None,
) -> StackPlan:
    """A focus stack at ``f_number`` that holds [near_target, far_target]: the frames' focus
    distances and limits, from near to far. One frame when one frame is enough.

    ``macro`` (``optics.macro.check_macro_spec``) lets the focal length follow the lens's
    close focusing, so the stack reaches as near as the lens does (distances from the sensor).
    """
    counts, frames = _walk_stack(focal_mm, f_number, coc_mm, near_target_mm, far_target_mm,
                                 reference, pupil_magnification, overlap, keep_frames=True, macro=macro)
    if int(np.asarray(counts).flat[0]) < 0:
        raise InvalidValue(
            f"the range needs more than {MAX_STACK_FRAMES} frames at f/{f_number:g}",
            hint="stop down, step back, or split the range",
        )
    focus, near, far, m, effective, focal = (tuple(float(np.asarray(x).flat[0]) for x in column)
                                             for column in zip(*frames))
    return StackPlan(float(f_number), focus, near, far, overlap, reference, m, effective, focal)


def check_overlap(overlap: float) -> float:
    """A stack overlap, checked: a fraction from 0 to ``MAX_STACK_OVERLAP``."""
    if not (isinstance(overlap, (int, float)) and 0 <= overlap <= MAX_STACK_OVERLAP):
        raise InvalidValue(f"stack overlap {overlap!r} is not valid: expected a fraction from 0 to {MAX_STACK_OVERLAP:g}")
    return float(overlap)


def _walk_stack(focal_mm, f_number, coc_mm, near_target_mm, far_target_mm, reference, pupil, overlap,
                keep_frames, macro: MacroSpec | None = None):
    check_reference(reference)
    overlap = check_overlap(overlap)
    f, n, c, p = validate_lens_inputs(focal_mm, f_number, coc_mm, pupil)
    if macro is None:
        a, b = _check_range(near_target_mm, far_target_mm, f, reference)
    else:
        if reference != "sensor":
            raise InvalidValue("a lens's maximum magnification is modelled with distances from the sensor: "
                               "use --reference sensor")
        a, b = _check_range(near_target_mm, far_target_mm, macro.close_focus_focal_mm / 4.0001, reference)
        closest = sharp_zone_focusing(macro, f, n, c, macro.close_focus_mm, pupil_magnification=p)
        reach = np.asarray(closest.near_mm)
        too_near = a < reach * (1 - 1e-9)
        if np.any(too_near):
            raise InvalidValue(
                f"near end {float(np.asarray(a)[too_near].flat[0]):g} mm is nearer than this lens reaches: at its "
                f"close focus ({macro.close_focus_mm:g} mm) the zone starts at {float(reach.flat[0]):.1f} mm")
    f, n, c, p, a, b = (np.array(x, dtype=np.float64) for x in np.broadcast_arrays(f, n, c, p, a, b))
    shape = f.shape
    f, n, c, p, a, b = (x.reshape(-1) for x in (f, n, c, p, a, b))
    counts = np.zeros(f.shape, dtype=np.int64)
    # Only rows still short of their far end are worked on in each round.
    active = np.arange(f.size)
    target = a.copy()
    frames = []
    while active.size:
        fa, na, ca, pa = f[active], n[active], c[active], p[active]
        if macro is None:
            focus = _focus_for_near_limit(fa, na, ca, pa, target, reference)
        else:
            focus = focus_for_near_limit(macro, na, ca, target, pa)
        at_infinity = np.isinf(focus)
        zone = sharp_zone_focusing(macro, fa, na, ca, focus, reference=reference, pupil_magnification=pa)
        near, far = np.atleast_1d(zone.near_mm), np.atleast_1d(zone.far_mm)
        counts[active] += 1
        if keep_frames:
            focal_there = effective_focal_mm(macro, fa, focus)
            frames.append((focus, near, far, zone.magnification, zone.effective_f_number, focal_there))
        done = (far >= b[active] * (1 - 1e-12)) | at_infinity
        too_many = counts[active] >= MAX_STACK_FRAMES
        counts[active[too_many & ~done]] = -1
        keep = ~done & ~too_many
        with np.errstate(invalid="ignore"):
            target = (far - overlap * (far - near))[keep]
        active = active[keep]
    counts = counts.reshape(shape)
    return counts, frames

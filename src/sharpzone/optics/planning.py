"""Planning: which f-number, which focus distance, or how many focus-stacked frames hold a
range of distances [near_target, far_target] sharp.

Built on the magnification-space limits of ``dof`` (exact, pupil magnification P): a point
at magnification m′ is held while focused at m when

    N ≥ P f (m_near_target − m) / (c (P + m_near_target))     (near end)
    N ≥ P f (m − m_far_target) / (c (P + m_far_target))       (far end)

The first rises as focus moves away, the second falls, so the least stopping down is where
they are equal; for a range reaching infinity with P = 1 that is focus at twice the near
end (common practice: "focus at twice the near distance", here exact).

Zone limits are affine in the focus magnification m (module doc of ``dof``):

    m′_near = α m + β,  α = P f / (P f − N c),  β = P N c / (P f − N c)
    m′_far  = γ m − δ,  γ = P f / (P f + N c),  δ = P N c / (P f + N c)

so every inversion below is closed form. Measured from the lens, a limit at distance u has
u = f (1 + 1/m′). Measured from the sensor the lens itself sits f (1 + m) in front of it, so
a limit lies at D = f (2 + m + 1/m′); setting D to a target and clearing the fraction gives
a quadratic in m whose smaller root is the physical focus (the larger one puts the lens
beyond the target).

Focus stacks: with the next frame's near limit on the previous frame's far limit less an
overlap o of the previous frame's depth *in magnification* (dioptres from the front focal
point, m = f / (s − f)), consecutive focus magnifications obey m_{i+1} = r m_i − q with
r = (γ + o (α − γ)) / α and q = (1 − o)(β + δ) / α: a geometric progression towards the
fixed point m* = −q / (1 − r) < 0, m_i − m* = rⁱ (m_0 − m*). The frame count is the first i
with m_i at or beyond the focus whose far limit reaches the far target, a logarithm; no
walk. Measured from the sensor the lens moves back by f (m_i − m_{i+1}) between frames,
which only adds overlap (the next near limit comes nearer than the previous far limit), so
the plan never leaves a gap; the first frame's near limit and the last frame's far limit
are exact. Near the close focus that costs frames: up to about 15 % more than the tightest
frame-by-frame plan at 0.2–0.3× (tests/optics/test_stack_closed_form.py), none far off.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from sharpzone.errors import InvalidValue
from sharpzone.limits import check_overlap
from sharpzone.optics._checks import all_scalar, as_array, require, scalar_or_array
from sharpzone.optics.macro import MacroSpec, effective_focal_mm, focus_for_near_limit, sharp_zone_focusing
from sharpzone.optics.dof import (
    Reference,
    check_reference,
    image_distance_mm,
    lens_distance_array,
    sensor_to_lens_distance,
    sharp_zone,
    validate_lens_inputs,
)

from sharpzone.optics.planning_limits import DEFAULT_STACK_OVERLAP, MAX_STACK_FRAMES


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
    pupil_magnification=1.0, focus_far_mm=None,
):
    """The least f-number that holds [near_target, far_target] sharp when focused at ``focus_mm``.

    With ``focus_far_mm`` the focus is only known to lie somewhere from ``focus_mm`` to
    ``focus_far_mm``: the f-number then holds for every focus in that bracket. Near and far
    limits both move away with focus, so the near end is hardest at the farthest focus and
    the far end at the nearest: the answer is the larger of those two needs, in closed form.

    Exact (not rounded to a marked stop: see ``stops.round_up_to_stop``). Comes back below
    the lens's widest aperture when any aperture would do; ``inf`` when no f-number can
    (a target nearer than the lens can image).
    """
    check_reference(reference)
    scalar = all_scalar(focal_mm, coc_mm, focus_mm, near_target_mm, far_target_mm, pupil_magnification,
                        focus_far_mm if focus_far_mm is not None else 0.0)
    f, _, c, p = validate_lens_inputs(focal_mm, 1.0, coc_mm, pupil_magnification)
    a, b = _check_range(near_target_mm, far_target_mm, f, reference)
    nearest = as_array(focus_mm, "focus distance")
    farthest = nearest if focus_far_mm is None else as_array(focus_far_mm, "farthest focus distance")
    require(farthest, np.broadcast_to(farthest >= nearest, np.broadcast_shapes(farthest.shape, nearest.shape)),
            "farthest focus distance {value:g} mm is nearer than the nearest")

    def needs(focus):
        if reference == "sensor":
            s = np.asarray(sensor_to_lens_distance(focus, f))
            v = image_distance_mm(s, f)
            return _needed_f_numbers_lens(f, c, p, s, a - v, b - v)
        return _needed_f_numbers_lens(f, c, p, lens_distance_array(focus, f), a, b)

    at_nearest = needs(nearest)
    at_farthest = needs(farthest) if focus_far_mm is not None else at_nearest
    for_near, for_far = at_farthest[0], at_nearest[1]
    return scalar_or_array(np.maximum(np.maximum(for_near, for_far), 0.0), scalar)


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

    Lens-referenced it is the closed form where both ends need the same f-number. Measured
    from the sensor the lens sits v = f (1 + m) in front of it, so the targets seen from the
    lens depend on the focus itself: the same closed form is applied to the targets less v and
    v updated from its answer, a fixed number of times. Each round shrinks v's error by about
    m² (the target moves by v, the answer's magnification by m²/f per mm), so sixteen rounds
    settle any focus short of 1:1; the f-number is then exact for the focus found.
    """
    check_reference(reference)
    scalar = all_scalar(focal_mm, coc_mm, near_target_mm, far_target_mm, pupil_magnification)
    f, _, c, p = validate_lens_inputs(focal_mm, 1.0, coc_mm, pupil_magnification)
    a, b = _check_range(near_target_mm, far_target_mm, f, reference)
    f, c, p, a, b = np.broadcast_arrays(f, c, p, a, b)

    def balanced_m(near_lens, far_lens):
        m_a, m_b = _magnification(near_lens, f), _magnification(far_lens, f)
        return (m_a * (p + m_b) + m_b * (p + m_a)) / (2 * p + m_a + m_b)

    if reference == "lens":
        m = balanced_m(a, b)
        focus = f + f / m
    else:
        v = np.array(f, dtype=np.float64, copy=True)
        for _ in range(16):
            m = balanced_m(a - v, b - v)
            v = f * (1 + m)
        focus = f + f / m + v
    needed = f_number_for_range(f, c, focus, a, b, reference=reference, pupil_magnification=p)
    return FocusPlan(scalar_or_array(focus, scalar), scalar_or_array(needed, scalar), reference)

def _zone_coefficients(f, n, c, p):
    """(α, β, γ, δ) of the affine limit maps (module doc); α, β inf where N c ≥ P f."""
    nc = n * c
    with np.errstate(divide="ignore", invalid="ignore"):
        wide = p * f > nc
        alpha = np.where(wide, p * f / (p * f - nc), np.inf)
        beta = np.where(wide, p * nc / (p * f - nc), np.inf)
    gamma = p * f / (p * f + nc)
    delta = p * nc / (p * f + nc)
    return alpha, beta, gamma, delta


def _focus_m_for_near_limit(f, n, c, p, target, reference: Reference):
    """Focus magnification whose near limit lands on ``target``; ≤ 0 where even ∞ is near
    enough (every focus holds the near end)."""
    alpha, beta, _, _ = _zone_coefficients(f, n, c, p)
    target = np.asarray(target, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if reference == "lens":
            m_target = np.where(target > f, f / (target - f), np.inf)
            m = (m_target - beta) / alpha
        else:
            # f (2 + m + 1/(α m + β)) = target, k = target/f − 2: α m² − (α k − β) m − (β k − 1) = 0.
            k = target / f - 2
            root = np.sqrt(np.maximum((alpha * k + beta) ** 2 - 4 * alpha, 0.0))
            m = 2 * (1 - beta * k) / ((alpha * k - beta) + root)
        return np.where(np.isfinite(alpha), m, -1.0)


def _focus_m_for_far_limit(f, n, c, p, target, reference: Reference):
    """Focus magnification whose far limit lands on ``target`` (∞ allowed): the far end is
    held for every focus at this magnification or smaller (farther)."""
    _, _, gamma, delta = _zone_coefficients(f, n, c, p)
    target = np.asarray(target, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if reference == "lens":
            m_target = _magnification(target, f)
            return (m_target + delta) / gamma
        # f (2 + m + 1/(γ m − δ)) = target: γ m² − (γ k + δ) m + (δ k + 1) = 0.
        k = target / f - 2
        square = (gamma * k - delta) ** 2 - 4 * gamma
        root = np.sqrt(np.maximum(square, 0.0))
        m = np.where(np.isinf(k), delta / gamma, 2 * (delta * k + 1) / ((gamma * k + delta) + root))
        # No real root: the far limit never comes as near as the target.
        return np.where(np.isinf(k) | (square >= 0), m, np.inf)


def _focus_from_m(m, f, reference: Reference):
    """Focus distance of focus magnification m (∞ where m ≤ 0), in ``reference``."""
    with np.errstate(divide="ignore", invalid="ignore"):
        if reference == "lens":
            return np.where(m > 0, f * (1 + 1 / m), np.inf)
        return np.where(m > 0, f * (1 + m) ** 2 / m, np.inf)


def focus_magnification(focus_mm, focal_mm, reference: Reference = "sensor"):
    """Magnification m = f / (s − f) of a focus distance (0 at ∞): the scale in which the
    zone's limits are affine (dioptres from the front focal point, times f)."""
    f = np.asarray(focal_mm, dtype=np.float64)
    focus = np.asarray(focus_mm, dtype=np.float64)
    if reference == "sensor":
        with np.errstate(invalid="ignore"):
            s = np.where(np.isinf(focus), np.inf,
                         (focus + np.sqrt(np.maximum(focus * focus - 4 * f * focus, 0.0))) / 2)
    else:
        s = focus
    return _magnification(s, f)


@dataclass(frozen=True)
class FocusInterval:
    """The focus distances (caller's reference) at which one f-number holds a range:
    every focus from ``nearest_mm`` to ``farthest_mm``; empty when nearest > farthest. Also
    as magnifications (``m_low`` for the farthest focus, ``m_high`` for the nearest)."""

    nearest_mm: np.ndarray | float
    farthest_mm: np.ndarray | float
    m_low: np.ndarray | float
    m_high: np.ndarray | float


def focus_interval_for_range(
    focal_mm, f_number, coc_mm, near_target_mm, far_target_mm, *, reference: Reference = "sensor",
    pupil_magnification=1.0,
) -> FocusInterval:
    """Where to focus so that ``f_number`` holds [near_target, far_target] (closed form).

    Near limits and far limits both move away as focus moves away, so the near end holds for
    every focus up to one distance and the far end from another distance on.
    """
    check_reference(reference)
    scalar = all_scalar(focal_mm, f_number, coc_mm, near_target_mm, far_target_mm, pupil_magnification)
    f, n, c, p = validate_lens_inputs(focal_mm, f_number, coc_mm, pupil_magnification)
    a, b = _check_range(near_target_mm, far_target_mm, f, reference)
    # The near end holds for every focus at m ≥ m_near (near enough), the far end for m ≤ m_far.
    m_near = np.maximum(_focus_m_for_near_limit(f, n, c, p, a, reference), 0.0)
    m_far = _focus_m_for_far_limit(f, n, c, p, b, reference)
    return FocusInterval(
        nearest_mm=scalar_or_array(_focus_from_m(m_far, f, reference), scalar),
        farthest_mm=scalar_or_array(_focus_from_m(m_near, f, reference), scalar),
        m_low=scalar_or_array(np.asarray(m_near, dtype=np.float64), scalar),
        m_high=scalar_or_array(np.asarray(m_far, dtype=np.float64), scalar),
    )


def nearest_focus_for_depth(focal_mm, f_number, coc_mm, front_mm, back_mm, *, pupil_magnification=1.0):
    """The nearest subject distance (from the lens, mm) at which ``f_number`` holds ``front_mm``
    in front of and ``back_mm`` behind the focused subject; every farther subject is held too.

    With x = s − f, the near limit lies at or before s − front when
    P N c x² + N c (f − P front) x − P front f² ≥ 0, and the far limit at or beyond s + back
    when P N c x² + N c (f + P back) x − P back f² ≥ 0 (from m′_near, m′_far of ``dof``);
    each has one positive root. Front and back are the same from the lens and the sensor.
    """
    scalar = all_scalar(focal_mm, f_number, coc_mm, front_mm, back_mm, pupil_magnification)
    f, n, c, p = validate_lens_inputs(focal_mm, f_number, coc_mm, pupil_magnification)
    front = as_array(front_mm, "depth in front")
    back = as_array(back_mm, "depth behind")
    require(front, front >= 0, "depth in front {value:g} mm is not valid: expected 0 or more")
    require(back, back >= 0, "depth behind {value:g} mm is not valid: expected 0 or more")
    nc = n * c

    def positive_root(linear, constant):
        quadratic = p * nc
        disc = np.sqrt(linear * linear + 4 * quadratic * constant)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(linear >= 0, 2 * constant / (linear + disc), (disc - linear) / (2 * quadratic))

    x = np.maximum(positive_root(nc * (f - p * front), p * front * f * f),
                   positive_root(nc * (f + p * back), p * back * f * f))
    return scalar_or_array(f + x, scalar)


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


def stack_frame_counts(
    focal_mm, f_number, coc_mm, near_target_mm, far_target_mm, *, reference: Reference = "sensor",
    pupil_magnification=1.0, overlap: float = DEFAULT_STACK_OVERLAP,
):
    """How many focus-stacked frames at ``f_number`` cover [near_target, far_target] (vectorised,
    closed form: see the module doc).

    Each frame's near limit sits ``overlap`` (a fraction of the previous frame's depth, in
    magnification) inside the previous frame's far limit. Rows needing more than
    ``MAX_STACK_FRAMES`` give -1.
    """
    scalar = all_scalar(focal_mm, f_number, coc_mm, near_target_mm, far_target_mm, pupil_magnification)
    counts, _ = _stack_progression(focal_mm, f_number, coc_mm, near_target_mm, far_target_mm, reference,
                                   pupil_magnification, overlap)
    return int(counts) if scalar else counts


def plan_focus_stack(
    focal_mm: float, f_number: float, coc_mm: float, near_target_mm: float, far_target_mm: float, *,
    reference: Reference = "sensor", pupil_magnification: float = 1.0, overlap: float = DEFAULT_STACK_OVERLAP,
    macro: MacroSpec | None = None,
) -> StackPlan:
    """A focus stack at ``f_number`` that holds [near_target, far_target]: the frames' focus
    distances and limits, from near to far. One frame when one frame is enough.

    Without ``macro`` the frames follow in closed form (the module doc). ``macro``
    (``optics.macro.check_macro_spec``) lets the focal length follow the lens's close
    focusing, so the stack reaches as near as the lens does (distances from the sensor);
    its frames are found one after another, since the focal length changes from frame to
    frame (a plan, not a per-frame remedy: the loop runs once per planned frame).
    """
    if macro is not None:
        return _plan_macro_stack(focal_mm, f_number, coc_mm, near_target_mm, far_target_mm, reference,
                                 pupil_magnification, overlap, macro)
    counts, progression = _stack_progression(focal_mm, f_number, coc_mm, near_target_mm, far_target_mm,
                                             reference, pupil_magnification, overlap)
    count = int(np.asarray(counts).flat[0])
    if count < 0:
        raise InvalidValue(
            f"the range needs more than {MAX_STACK_FRAMES} frames at f/{f_number:g}",
            hint="stop down, step back, or split the range",
        )
    f, n, c, p, m_first, m_fixed, ratio = (float(np.asarray(x).flat[0]) for x in progression)
    steps = np.arange(count, dtype=np.float64)
    if count == 1:
        m = np.array([m_first])
    else:
        m = np.maximum(m_fixed + ratio ** steps * (m_first - m_fixed), 0.0)
    focus = _focus_from_m(m, f, reference)
    zone = sharp_zone(f, n, c, focus, reference=reference, pupil_magnification=p)
    near, far = np.atleast_1d(zone.near_mm), np.atleast_1d(zone.far_mm)
    magnification = np.atleast_1d(zone.magnification) * np.ones(count)
    effective = np.atleast_1d(zone.effective_f_number) * np.ones(count)
    return StackPlan(float(f_number), tuple(map(float, focus)), tuple(map(float, near)), tuple(map(float, far)),
                     overlap, reference, tuple(map(float, magnification)), tuple(map(float, effective)),
                     (f,) * count)


def _stack_progression(focal_mm, f_number, coc_mm, near_target_mm, far_target_mm, reference, pupil, overlap):
    """Frame counts and the progression (f, N, c, P, m_0, m*, r) of the stack (module doc)."""
    check_reference(reference)
    check_overlap(overlap)
    f, n, c, p = validate_lens_inputs(focal_mm, f_number, coc_mm, pupil)
    a, b = _check_range(near_target_mm, far_target_mm, f, reference)
    f, n, c, p, a, b = (np.array(x, dtype=np.float64) for x in np.broadcast_arrays(f, n, c, p, a, b))
    alpha, beta, gamma, delta = _zone_coefficients(f, n, c, p)
    m_first = _focus_m_for_near_limit(f, n, c, p, a, reference)
    m_last = _focus_m_for_far_limit(f, n, c, p, b, reference)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        ratio = (gamma + overlap * (alpha - gamma)) / alpha
        shift = (1 - overlap) * (beta + delta) / alpha
        m_fixed = -shift / (1 - ratio)
        one = (m_first <= m_last) | ~np.isfinite(alpha)
        steps = np.log((m_last - m_fixed) / (m_first - m_fixed)) / np.log(ratio)
        # A hair's tolerance keeps a frame that lands exactly on the far end from adding one.
        later = np.ceil(np.where(one, 0.0, steps) - 1e-9)
    counts = np.where(one, 1, 1 + np.maximum(later, 1)).astype(np.float64)
    counts = np.where(counts > MAX_STACK_FRAMES, -1, counts).astype(np.int64)
    return counts, (f, n, c, p, np.maximum(m_first, 0.0), m_fixed, ratio)


def _plan_macro_stack(focal_mm, f_number, coc_mm, near_target_mm, far_target_mm, reference, pupil, overlap,
                      macro: MacroSpec) -> StackPlan:
    """A stack with the close-focusing model: each frame's near limit is the last one's far
    limit less the overlap, found with the focal length the lens has at that focus."""
    if reference != "sensor":
        raise InvalidValue("a lens's maximum magnification is modelled with distances from the sensor: "
                           "use --reference sensor")
    overlap = check_overlap(overlap)
    f, n, c, p = (float(np.asarray(x).flat[0]) for x in validate_lens_inputs(focal_mm, f_number, coc_mm, pupil))
    a, b = (float(np.asarray(x).flat[0]) for x in
            _check_range(near_target_mm, far_target_mm, macro.close_focus_focal_mm / 4.0001, reference))
    closest = sharp_zone_focusing(macro, f, n, c, macro.close_focus_mm, pupil_magnification=p)
    reach = float(np.asarray(closest.near_mm).flat[0])
    if a < reach * (1 - 1e-9):
        raise InvalidValue(
            f"near end {a:g} mm is nearer than this lens reaches: at its close focus "
            f"({macro.close_focus_mm:g} mm) the zone starts at {reach:.1f} mm")
    frames, target = [], a
    while True:
        focus = float(np.asarray(focus_for_near_limit(macro, n, c, target, p)).flat[0])
        zone = sharp_zone_focusing(macro, f, n, c, focus, reference=reference, pupil_magnification=p)
        near, far = float(np.asarray(zone.near_mm).flat[0]), float(np.asarray(zone.far_mm).flat[0])
        frames.append((focus, near, far, float(np.asarray(zone.magnification).flat[0]),
                       float(np.asarray(zone.effective_f_number).flat[0]),
                       float(np.asarray(effective_focal_mm(macro, f, focus)).flat[0])))
        if far >= b * (1 - 1e-12) or math.isinf(focus):
            break
        if len(frames) >= MAX_STACK_FRAMES:
            raise InvalidValue(f"the range needs more than {MAX_STACK_FRAMES} frames at f/{f_number:g}",
                               hint="stop down, step back, or split the range")
        target = far - overlap * (far - near)
    focus, near, far, m, effective, focal = (tuple(column) for column in zip(*frames))
    return StackPlan(float(f_number), focus, near, far, overlap, reference, m, effective, focal)

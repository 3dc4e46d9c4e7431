"""Checks: which frames' sharp zones missed what the shoot needed, why, and what would have
worked. One vectorised pass over the frames DataFrame (with zones from ``zones.add_zones``).

A requirement is either an absolute range (everything from ``near`` to ``far``, measured from
the sensor) or a subject depth around each frame's focus point (``front`` in front of it,
``back`` behind it). It comes from the command line or from each frame's shoot plan.

Verdict codes (the machine interface; words for people come from ``report.verdicts.describe_flag``):

``distance-unknown``    no focus distance: cannot judge
``settings-unknown``    focal length, f-number or format unknown: cannot judge
``no-requirement``      neither the command nor the shoot's plan says what had to be sharp
``too-wide-open``       stopping down at this focus would have held it (needed f-number given)
``focus-misplaced``     focusing elsewhere would have held it (focus distance given); also a
                        frame focused at infinity when the plan wanted a subject held
``out-of-reach``        no aperture of this lens (before diffraction) holds it at this focal
                        length with one frame (stack given)
``past-diffraction``    stopped down past the format's diffraction limit
``outside-plan``        the subject lies outside the zone the plan's settings give
``distance-uncertain``  the camera records the focus distance only as a bracket, and the
                        zone holds over part of it (the share, and a remedy for all of it)

One coherent verdict per frame: of too-wide-open, focus-misplaced and out-of-reach at most
one is given, with the achievable remedy (within the lens's apertures and before
diffraction). A missed frame whose single-frame f-number is reachable at its own focus is
too-wide-open; when refocusing alone (at the frame's f-number) holds it, focus-misplaced
comes first; when only refocusing *and* stopping down is reachable, focus-misplaced with
that f-number; otherwise out-of-reach, a focus stack, and the unreachable f-number named only
as the reason for it.

Distance brackets: a frame passes only when its zone holds the requirement for every focus
distance in its bracket (``focus_near_mm``…``focus_far_mm``; both missing means exact); it gets
the ordinary verdict when it holds for none, and ``distance-uncertain`` otherwise. Near and
far limits both move away as focus moves away, so for a range the worst cases are the two
ends of the bracket, and for a subject depth (which grows with distance) the nearest end.
``holds_share`` measures the part of the bracket that holds in focus magnification
m = f / (s − f), i.e. in dioptres counted from the front focal point: the zone's limits are
exact affine functions of m (``optics.planning``), so a zone and a focus error are the same
size wherever they sit; a focus encoder's error is about even in dioptres rather than in
metres; and a bracket reaching infinity has a finite length (m = 0 at infinity). Remedies
for uncertain and missed frames hold over the whole bracket.

Each verdict's kind (``FLAG_KINDS``) says what it does to the frame's ``outcome``: ``missed``
flags the frame, ``uncertain`` makes it uncertain, ``unjudged`` leaves it not judged, and
``note`` changes nothing. Every share flagged (``check``, ``stats``) is flagged frames over
judged frames (passed + flagged + uncertain), from ``flagged_share``.

The blur verdicts measured from the pixels (``analysis.blur_checks.BLUR_FLAGS``) join them:
``focus-missed`` and ``soft-all-over`` flag a frame; ``sharp-at-focus`` is good news, and on a
frame the optics could not judge (no distance, say) it makes the frame passed; a frame
``not-measurable`` is left as the optics judged it.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from sharpzone.analysis.blur_checks import BLUR_FLAGS, blur_flags
from sharpzone.optics.dof import sharp_zone
from sharpzone.optics.planning import (
    best_focus_for_range,
    f_number_for_range,
    focus_interval_for_range,
    focus_magnification,
    nearest_focus_for_depth,
    stack_frame_counts,
)
from sharpzone.optics.stops import round_up_to_stops, stop_series

if TYPE_CHECKING:
    import pandas as pd

FLAGS = (
    "distance-unknown", "settings-unknown", "no-requirement", "too-wide-open", "focus-misplaced",
    "out-of-reach", "past-diffraction", "outside-plan", "distance-uncertain",
) + BLUR_FLAGS
# What each verdict does to a frame's outcome (see the module doc). A new verdict adds its
# code to FLAGS and its kind here.
FLAG_KINDS = {
    "distance-unknown": "unjudged", "settings-unknown": "unjudged", "no-requirement": "unjudged",
    "too-wide-open": "missed", "focus-misplaced": "missed", "out-of-reach": "missed",
    "past-diffraction": "missed", "outside-plan": "missed", "distance-uncertain": "uncertain",
    "focus-missed": "missed", "soft-all-over": "missed", "sharp-at-focus": "sharp", "not-measurable": "note",
}
OUTCOMES = ("passed", "flagged", "uncertain", "unjudged")
from sharpzone.optics.limits import ASSUMED_MIN_APERTURE, MIN_F_NUMBER  # noqa: E402, F401 - one home

from sharpzone.analysis.requirement import Requirement  # noqa: E402 - its own light module, for the options

REQUIREMENT_COLUMNS = ("plan_kind", "plan_near_mm", "plan_far_mm", "plan_front_mm", "plan_back_mm")


def _requirement_columns(frames: pd.DataFrame, requirement: Requirement | None):
    """Per row (kind, near, far, front, back): the command's requirement or each shoot's plan."""
    count = len(frames)
    if requirement is not None:
        def filled(value):
            return np.full(count, value if value is not None else np.nan, dtype=float)
        kinds = np.full(count, requirement.kind, dtype=object)
        return (kinds, filled(requirement.near_mm), filled(requirement.far_mm), filled(requirement.front_mm),
                filled(requirement.back_mm))
    kinds = frames["plan_kind"].to_numpy(dtype=object)
    return (kinds, *(frames[c].to_numpy(dtype=float) for c in REQUIREMENT_COLUMNS[1:]))


def _focus_brackets(frames: pd.DataFrame, focus, focal):
    """(nearest, farthest) focus distance each frame's record can mean, mm from the sensor:
    the stored bracket, or the nominal distance where there is none (exact). A lens focuses no
    nearer than 4 f from the sensor, so a bracket is clipped there."""
    count = len(frames)
    nearest = frames["focus_near_mm"].to_numpy(dtype=float) if "focus_near_mm" in frames else np.full(count, np.nan)
    farthest = frames["focus_far_mm"].to_numpy(dtype=float) if "focus_far_mm" in frames else np.full(count, np.nan)
    with np.errstate(invalid="ignore"):
        nearest = np.where(np.isnan(nearest), focus, np.fmin(nearest, focus))
        farthest = np.where(np.isnan(farthest), focus, np.fmax(farthest, focus))
        nearest = np.fmax(nearest, 4 * focal)
    return nearest, farthest


def _round_down_to_stops(f_numbers):
    """The narrowest marked third stop at or below each f-number (NaN below f/0.5)."""
    series = stop_series("third", MIN_F_NUMBER, 128.0)
    labels = np.array([stop.label for stop in series])
    index = np.searchsorted(labels, np.asarray(f_numbers, dtype=float) * (1 + 1e-9), side="right") - 1
    return np.where(index >= 0, labels[np.maximum(index, 0)], np.nan)


def outcomes_from_flags(flag_matrix: np.ndarray, codes: tuple[str, ...]) -> np.ndarray:
    """Each row's outcome (one of ``OUTCOMES``) from a boolean matrix with one column per code."""
    def any_of(kind):
        columns = [i for i, code in enumerate(codes) if FLAG_KINDS.get(code, "missed") == kind]
        return flag_matrix[:, columns].any(axis=1) if columns else np.zeros(len(flag_matrix), dtype=bool)

    # Pixels that show the focus point sharp pass a frame the optics could not judge.
    unjudged = any_of("unjudged") & ~any_of("sharp")
    return np.select([any_of("missed"), any_of("uncertain"), unjudged],
                     ["flagged", "uncertain", "unjudged"], default="passed").astype(object)


def count_problems(flags) -> int:
    """How many of a frame's verdicts are problems: every kind but the good news
    (``FLAG_KINDS`` "note" and "sharp", e.g. ``sharp-at-focus``)."""
    return sum(1 for flag in flags if FLAG_KINDS.get(flag, "missed") not in ("note", "sharp"))


def flagged_share(outcomes) -> float | None:
    """Flagged frames over judged frames (passed, flagged or uncertain); ``None`` when none
    was judged. The one definition behind every share flagged."""
    outcomes = np.asarray(outcomes, dtype=object)
    judged = (outcomes == "passed") | (outcomes == "flagged") | (outcomes == "uncertain")
    return float((outcomes == "flagged").sum()) / float(judged.sum()) if judged.any() else None


def check_frames(frames: pd.DataFrame, requirement: Requirement | None = None) -> pd.DataFrame:
    """``frames`` (with zones) plus ``flags`` (a list of codes per row, empty = passed),
    ``outcome`` (one of ``OUTCOMES``), the required range, and the remedy numbers:

    ``remedy`` ("stop-down", "refocus", "stack", "focus-on-subject" or empty), ``needed_f_number`` (where stopping down is the
    remedy: a marked third stop that holds over the whole focus bracket at this focus), ``better_focus_mm`` with
    ``better_f_number`` (a refocus, or the alternative to stopping down when it saves a stop),
    ``stack_frames`` at ``stack_f_number``, ``single_frame_f_number`` (the least f-number one
    frame would need, the reason for a stack), ``holds_share`` (the share of the focus bracket
    that holds, 0…1, in dioptres: see the module doc), ``max_f_number`` (the lens's
    narrowest), ``diffraction_f_number`` (the marked f-number where diffraction starts to
    soften this frame)."""
    # A shallow copy: the new columns are added to it alone, the caller's frame stays as it was.
    result = frames.copy(deep=False)
    count = len(result)
    # The focal length the zone was computed with (shorter close up for a macro lens).
    focal = result["effective_focal_mm" if "effective_focal_mm" in result else "focal_mm"].to_numpy(dtype=float)
    f_number = result["f_number"].to_numpy(dtype=float)
    focus = result["focus_mm"].to_numpy(dtype=float)
    coc = result["coc_mm"].to_numpy(dtype=float)
    pupil = result["pupil_magnification"].fillna(1.0).to_numpy(dtype=float)
    near = result["near_mm"].to_numpy(dtype=float)
    far = result["far_mm"].to_numpy(dtype=float)
    magnification = np.nan_to_num(result["magnification"].to_numpy(dtype=float))
    lens_min = result["lens_min_aperture"].to_numpy(dtype=float) if "lens_min_aperture" in result else np.full(count, np.nan)
    max_f_number = np.where(np.isnan(lens_min), ASSUMED_MIN_APERTURE, lens_min)
    diffraction_marked = result["diffraction_limited_f_number"].to_numpy(dtype=float) / (1 + magnification / pupil)
    kinds, plan_near, plan_far, plan_front, plan_back = _requirement_columns(result, requirement)
    is_depth, is_range = kinds == "depth", kinds == "range"
    focus_nearest, focus_farthest = _focus_brackets(result, focus, focal)
    smallest = 4.0001 * np.nan_to_num(focal, nan=1.0)

    def clip_range(low, high):
        # The nearest a subject can be imaged is 4f from the sensor; a requirement nearer than
        # that is clipped there (the frame is then judged out of reach below).
        with np.errstate(invalid="ignore"):
            low = np.fmax(low, smallest)
            return low, np.where(high <= low, low * 1.0001, high)

    # The required range at the recorded focus (shown), and at the bracket's worst end (judged).
    with np.errstate(invalid="ignore"):
        required_near = np.where(is_range, plan_near, np.where(is_depth, focus - plan_front, np.nan))
        required_far = np.where(is_range, plan_far, np.where(is_depth, focus + plan_back, np.nan))
        worst_near = np.where(is_depth, focus_nearest - plan_front, required_near)
        worst_far = np.where(is_depth, focus_nearest + plan_back, required_far)
    settings_known = ~np.isnan(result["hyperfocal_mm"].to_numpy(dtype=float))
    focus_known = ~np.isnan(near)
    has_requirement = ~np.isnan(required_near) & ~np.isnan(required_far)
    required_near, required_far = clip_range(required_near, required_far)
    worst_near, worst_far = clip_range(worst_near, worst_far)
    judged = settings_known & focus_known & has_requirement
    # Focused at infinity while the plan wanted a subject held: the camera missed the subject.
    missed_subject = judged & is_depth & np.isinf(focus)
    judged_zone = judged & ~missed_subject
    bracketed = judged_zone & (focus_farthest > focus_nearest * (1 + 1e-9))

    # Held over the whole bracket: the near end at the farthest focus (a range) or the nearest
    # (a depth), the far end at the nearest focus.
    near_worst, far_worst = near.copy(), far.copy()
    if bracketed.any():
        rows = bracketed
        at_nearest = sharp_zone(focal[rows], f_number[rows], coc[rows], focus_nearest[rows], reference="sensor",
                                pupil_magnification=pupil[rows])
        at_farthest = sharp_zone(focal[rows], f_number[rows], coc[rows], focus_farthest[rows], reference="sensor",
                                 pupil_magnification=pupil[rows])
        near_worst[rows] = np.where(is_depth[rows], at_nearest.near_mm, at_farthest.near_mm)
        far_worst[rows] = at_nearest.far_mm
    with np.errstate(invalid="ignore"):
        held_all = judged_zone & (near_worst <= worst_near * (1 + 1e-9)) & (far_worst >= worst_far * (1 - 1e-9))
    share = np.where(judged_zone, held_all.astype(float), np.nan)
    partly = bracketed & ~held_all
    if partly.any():
        share[partly] = _bracket_share(focal[partly], f_number[partly], coc[partly], pupil[partly],
                                       focus_nearest[partly], focus_farthest[partly], is_depth[partly],
                                       plan_front[partly], plan_back[partly], required_near[partly],
                                       required_far[partly])
    uncertain = partly & (share > 1e-9)
    missed = (judged_zone & ~held_all & ~uncertain) | missed_subject
    share = np.where(missed_subject, 0.0, share)

    remedy, columns = _remedies(missed & ~missed_subject, uncertain, focal, f_number, coc, pupil, focus_nearest,
                                focus_farthest, is_depth, plan_front, plan_back, worst_near, worst_far,
                                max_f_number, diffraction_marked, bracketed)
    remedy[missed_subject] = "focus-on-subject"
    planned_focus = result["planned_focus_mm"].to_numpy(dtype=float) if "planned_focus_mm" in result else np.full(count, np.nan)
    columns["better_focus_mm"] = np.where(missed_subject, planned_focus, columns["better_focus_mm"])

    with np.errstate(invalid="ignore"):
        past_diffraction = settings_known & (result["effective_f_number"].to_numpy(dtype=float)
                                             > result["diffraction_limited_f_number"].to_numpy(dtype=float))
    # A frame that missed its subject says so once, not again as outside the plan's zone.
    outside_plan = _outside_plan(result, focus, coc, pupil, settings_known & focus_known) & ~missed_subject

    flag_columns = {
        "distance-unknown": settings_known & ~focus_known,
        "settings-unknown": ~settings_known,
        "no-requirement": settings_known & focus_known & ~has_requirement,
        "too-wide-open": missed & (remedy == "stop-down"),
        "focus-misplaced": missed & ((remedy == "refocus") | (remedy == "focus-on-subject")),
        "out-of-reach": missed & (remedy == "stack"),
        "past-diffraction": past_diffraction,
        "outside-plan": outside_plan,
        "distance-uncertain": uncertain,
    }
    # Further verdicts merge their boolean columns here: add the code to FLAGS and FLAG_KINDS
    # and an entry to ``flag_columns``.
    flag_columns.update(blur_flags(result))  # the blur measured from the pixels, if any
    _set_flags(result, flag_columns)
    result["focus_nearest_mm"] = focus_nearest
    result["focus_farthest_mm"] = focus_farthest
    result["required_near_mm"] = required_near
    result["required_far_mm"] = required_far
    result["holds_share"] = share
    result["missed_subject"] = missed_subject
    result["remedy"] = remedy
    for name, values in columns.items():
        result[name] = values
    result["max_f_number"] = max_f_number
    result["lens_min_known"] = ~np.isnan(lens_min)
    result["diffraction_f_number"] = diffraction_marked
    return result


def _set_flags(result: pd.DataFrame, flag_columns: dict[str, np.ndarray]) -> None:
    """Add ``flags`` (a list of codes per row, in ``FLAGS`` order) and ``outcome``."""
    codes = tuple(code for code in FLAGS if code in flag_columns)
    count = len(result)
    matrix = (np.column_stack([flag_columns[code] for code in codes]) if count
              else np.zeros((0, len(codes)), dtype=bool))
    # Few distinct flag combinations occur: build each list once and share it between rows
    # (treat them as read-only).
    keys = matrix.astype(np.int64) @ (1 << np.arange(len(codes), dtype=np.int64))
    combinations = {int(key): [codes[i] for i in range(len(codes)) if key >> i & 1] for key in np.unique(keys)}
    result["flags"] = [combinations[key] for key in keys.tolist()]
    result["outcome"] = outcomes_from_flags(matrix, codes)


def _bracket_share(focal, f_number, coc, pupil, focus_nearest, focus_farthest, is_depth, front, back,
                   required_near, required_far):
    """The share (0…1, in focus magnification) of each bracket at whose focus the zone holds."""
    m_low = focus_magnification(focus_farthest, focal)
    m_high = focus_magnification(focus_nearest, focal)
    hold_low = np.zeros(len(focal))
    hold_high = np.zeros(len(focal))
    ranges = ~is_depth
    if ranges.any():
        interval = focus_interval_for_range(focal[ranges], f_number[ranges], coc[ranges], required_near[ranges],
                                            required_far[ranges], reference="sensor",
                                            pupil_magnification=pupil[ranges])
        hold_low[ranges], hold_high[ranges] = interval.m_low, interval.m_high
    if is_depth.any():
        rows = is_depth
        nearest_lens = nearest_focus_for_depth(focal[rows], f_number[rows], coc[rows], front[rows], back[rows],
                                               pupil_magnification=pupil[rows])
        hold_high[rows] = focal[rows] / (nearest_lens - focal[rows])
    held = np.clip(np.fmin(m_high, hold_high) - np.fmax(m_low, hold_low), 0.0, None)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.clip(held / (m_high - m_low), 0.0, 1.0)


def _remedies(missed, uncertain, focal, f_number, coc, pupil, focus_nearest, focus_farthest, is_depth, front,
              back, worst_near, worst_far, max_f_number, diffraction_marked, bracketed):
    """(remedy codes, remedy columns) for missed and uncertain rows; see ``check_frames``."""
    count = len(focal)
    remedy = np.full(count, "", dtype=object)
    columns = {name: np.full(count, np.nan) for name in (
        "needed_f_number", "better_focus_mm", "better_f_number", "stack_frames", "stack_f_number",
        "single_frame_f_number")}
    rows = missed | uncertain
    if not rows.any():
        return remedy, columns
    # The least f-number that holds at this focus over the whole bracket (a depth is hardest
    # at the nearest end of the bracket, a range at both ends).
    needed_exact = np.full(count, np.nan)
    needed_exact[rows] = f_number_for_range(
        focal[rows], coc[rows], focus_nearest[rows], worst_near[rows], worst_far[rows], reference="sensor",
        pupil_magnification=pupil[rows], focus_far_mm=np.where(is_depth, focus_nearest, focus_farthest)[rows])
    needed, needed_value = round_up_to_stops(np.maximum(needed_exact, MIN_F_NUMBER))
    # Where to focus with the least stopping down (a known distance, so no bracket): for a
    # range, and for a depth whose subject distance is exact.
    refocusable = rows & (~is_depth | ~bracketed)
    best_focus = np.full(count, np.nan)
    best_exact = np.full(count, np.nan)
    if refocusable.any():
        plan = best_focus_for_range(focal[refocusable], coc[refocusable], worst_near[refocusable],
                                    worst_far[refocusable], reference="sensor",
                                    pupil_magnification=pupil[refocusable])
        best_focus[refocusable], best_exact[refocusable] = plan.focus_mm, plan.f_number
    best, best_value = round_up_to_stops(np.maximum(best_exact, MIN_F_NUMBER))

    def reachable(label, value):
        # Within the lens's apertures and before diffraction softens the plane of focus.
        with np.errstate(invalid="ignore"):
            return (label <= max_f_number * (1 + 1e-9)) & (value <= diffraction_marked * (1 + 1e-9))

    stop_ok = rows & reachable(needed, needed_value)
    refocus_ok = refocusable & reachable(best, best_value)
    own_ok = reachable(f_number, f_number)
    with np.errstate(invalid="ignore"):
        focus_alone = missed & refocus_ok & (best <= f_number * (1 + 1e-9))
        # Under an uncertain distance the f-number comes first: it guards against the error.
        stop = rows & ~focus_alone & stop_ok
        refocus = focus_alone | (rows & ~stop & refocus_ok)
        stack = rows & ~stop & ~refocus
        # Refocusing is worth naming beside stopping down only when it saves a stop or more.
        alternative = stop & refocus_ok & (best * 2 ** 0.5 <= needed * (1 + 1e-9))
    remedy[stop] = "stop-down"
    remedy[refocus] = "refocus"
    remedy[stack] = "stack"
    columns["needed_f_number"] = np.where(stop, needed, np.nan)
    shown_focus = refocus | alternative
    columns["better_focus_mm"] = np.where(shown_focus, best_focus, np.nan)
    columns["better_f_number"] = np.where(focus_alone & own_ok, f_number, np.where(shown_focus, best, np.nan))
    columns["single_frame_f_number"] = np.where(stack, np.where(refocusable, best, needed), np.nan)
    if stack.any():
        # At the frame's own f-number when that is reachable, else at the narrowest that is.
        ceiling = _round_down_to_stops(np.fmin(max_f_number, diffraction_marked))
        stack_n = np.where(own_ok, f_number, ceiling)
        stack_near = np.where(is_depth, focus_nearest - front, worst_near)
        with np.errstate(invalid="ignore"):
            stack_far = np.where(is_depth, focus_farthest + back, worst_far)
        usable = stack & (stack_n >= MIN_F_NUMBER)
        low, high = stack_near[usable], stack_far[usable]
        low = np.fmax(low, 4.0001 * focal[usable])
        high = np.where(high <= low, low * 1.0001, high)
        columns["stack_f_number"][usable] = stack_n[usable]
        columns["stack_frames"][usable] = stack_frame_counts(
            focal[usable], stack_n[usable], coc[usable], low, high, reference="sensor",
            pupil_magnification=pupil[usable])
    return remedy, columns


def _outside_plan(frames: pd.DataFrame, focus, coc, pupil, usable) -> np.ndarray:
    """Frames whose subject (at the focus distance) lies outside the zone of the plan's settings."""
    columns = ("planned_focal_mm", "planned_f_number", "planned_focus_mm")
    if not all(c in frames for c in columns):
        return np.zeros(len(frames), dtype=bool)
    planned_focal, planned_n, planned_focus = (frames[c].to_numpy(dtype=float) for c in columns)
    with np.errstate(invalid="ignore"):
        rows = usable & (planned_focal > 0) & (planned_n >= MIN_F_NUMBER) & (planned_focus >= 4 * planned_focal)
    outside = np.zeros(len(frames), dtype=bool)
    if rows.any():
        zone = sharp_zone(planned_focal[rows], planned_n[rows], coc[rows], planned_focus[rows],
                          reference="sensor", pupil_magnification=pupil[rows])
        subject = focus[rows]
        outside[rows] = (subject < zone.near_mm * (1 - 1e-9)) | (subject > zone.far_mm * (1 + 1e-9))
    return outside

"""Checks: which frames' sharp zones missed what the shoot needed, why, and what would have
worked. One vectorised pass over the frames DataFrame (with zones from ``zones.add_zones``).

A requirement is either an absolute range (everything from ``near`` to ``far``, measured from
the sensor) or a subject depth around each frame's focus point (``front`` in front of it,
``back`` behind it). It comes from the command line or from each frame's shoot plan.

Verdict codes (the machine interface; words for people come from ``report.verdicts.describe_flag``):

``distance-unknown``  no focus distance: cannot judge
``settings-unknown``  focal length, f-number or format unknown: cannot judge
``no-requirement``    neither the command nor the shoot's plan says what had to be sharp
``too-wide-open``     stopping down at this focus would have held it (needed f-number given)
``focus-misplaced``   focusing elsewhere would have held it (focus distance given)
``out-of-reach``      no aperture of this lens holds it at this focal length (stack given)
``past-diffraction``  stopped down past the format's diffraction limit
``outside-plan``      the subject lies outside the zone the plan's settings give
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from sharpzone.errors import InvalidValue
from sharpzone.optics.dof import sharp_zone
from sharpzone.optics.planning import best_focus_for_range, f_number_for_range, stack_frame_counts
from sharpzone.optics.stops import round_up_to_stops
from sharpzone.units import format_distance

if TYPE_CHECKING:
    import pandas as pd

FLAGS = (
    "distance-unknown", "settings-unknown", "no-requirement", "too-wide-open", "focus-misplaced",
    "out-of-reach", "past-diffraction", "outside-plan",
)
from sharpzone.optics.limits import ASSUMED_MIN_APERTURE, MIN_F_NUMBER  # noqa: E402, F401 - one home

REQUIREMENT_COLUMNS = ("plan_kind", "plan_near_mm", "plan_far_mm", "plan_front_mm", "plan_back_mm")


@dataclass(frozen=True)
class Requirement:
    """What had to be sharp, in mm from the sensor: a ``range`` or a ``depth`` around focus."""

    kind: str
    near_mm: float | None = None
    far_mm: float | None = None
    front_mm: float | None = None
    back_mm: float | None = None

    def __post_init__(self) -> None:
        if self.kind == "range":
            if self.near_mm is None or self.far_mm is None:
                raise InvalidValue("a range requirement needs both --near and --far")
            if not self.far_mm > self.near_mm:
                raise InvalidValue(
                    f"--far {format_distance(self.far_mm)} is not beyond --near {format_distance(self.near_mm)}")
        elif self.kind == "depth":
            if self.front_mm is None or self.back_mm is None:
                raise InvalidValue("a depth requirement needs both --front and --back")
        else:
            raise InvalidValue(f"requirement kind {self.kind!r} is not valid: expected 'range' or 'depth'")

    @classmethod
    def from_options(cls, *, near_mm=None, far_mm=None, front_mm=None, back_mm=None) -> Requirement | None:
        """The requirement the command line gives, ``None`` when it gives none."""
        if near_mm is not None or far_mm is not None:
            if front_mm is not None or back_mm is not None:
                raise InvalidValue("give either --near/--far (a range) or --front/--back (a depth), not both")
            return cls("range", near_mm=near_mm, far_mm=far_mm)
        if front_mm is not None or back_mm is not None:
            return cls("depth", front_mm=front_mm, back_mm=back_mm)
        return None

    def describe(self, imperial: bool = False) -> str:
        if self.kind == "range":
            return f"sharp from {format_distance(self.near_mm, imperial=imperial)} to {format_distance(self.far_mm, imperial=imperial)}"
        return (f"{format_distance(self.front_mm, imperial=imperial)} in front of and "
                f"{format_distance(self.back_mm, imperial=imperial)} behind the focus point")


def _required_ranges(frames: pd.DataFrame, requirement: Requirement | None):
    """Per row (near, far) in mm from the sensor, NaN where nothing is required."""
    count = len(frames)
    focus = frames["focus_mm"].to_numpy(dtype=float)
    if requirement is not None:
        kinds = np.full(count, requirement.kind, dtype=object)
        near = np.full(count, requirement.near_mm if requirement.near_mm is not None else np.nan, dtype=float)
        far = np.full(count, requirement.far_mm if requirement.far_mm is not None else np.nan, dtype=float)
        front = np.full(count, requirement.front_mm if requirement.front_mm is not None else np.nan, dtype=float)
        back = np.full(count, requirement.back_mm if requirement.back_mm is not None else np.nan, dtype=float)
    else:
        kinds = frames["plan_kind"].to_numpy(dtype=object)
        near, far, front, back = (frames[c].to_numpy(dtype=float) for c in REQUIREMENT_COLUMNS[1:])
    is_depth = kinds == "depth"
    is_range = kinds == "range"
    with np.errstate(invalid="ignore"):
        required_near = np.where(is_range, near, np.where(is_depth, focus - front, np.nan))
        required_far = np.where(is_range, far, np.where(is_depth, focus + back, np.nan))
    return required_near, required_far


def check_frames(frames: pd.DataFrame, requirement: Requirement | None = None) -> pd.DataFrame:
    """``frames`` (with zones) plus ``flags`` (a list of codes per row, empty = passed), the
    required range, and the remedy numbers: ``needed_f_number`` at this focus (a marked third
    stop), ``better_focus_mm`` with ``better_f_number``, ``stack_frames`` at the frame's own
    f-number, ``max_f_number`` (the lens's narrowest), ``diffraction_f_number`` (the marked
    f-number where diffraction starts to soften this frame)."""
    result = frames.copy()
    count = len(result)
    focal = result["focal_mm"].to_numpy(dtype=float)
    f_number = result["f_number"].to_numpy(dtype=float)
    focus = result["focus_mm"].to_numpy(dtype=float)
    coc = result["coc_mm"].to_numpy(dtype=float)
    pupil = result["pupil_magnification"].fillna(1.0).to_numpy(dtype=float)
    near = result["near_mm"].to_numpy(dtype=float)
    far = result["far_mm"].to_numpy(dtype=float)
    magnification = np.nan_to_num(result["magnification"].to_numpy(dtype=float))
    lens_min = result["lens_min_aperture"].to_numpy(dtype=float) if "lens_min_aperture" in result else np.full(count, np.nan)
    max_f_number = np.where(np.isnan(lens_min), ASSUMED_MIN_APERTURE, lens_min)
    required_near, required_far = _required_ranges(result, requirement)

    settings_known = ~np.isnan(result["hyperfocal_mm"].to_numpy(dtype=float))
    focus_known = ~np.isnan(near)
    has_requirement = ~np.isnan(required_near) & ~np.isnan(required_far)
    # The nearest a subject can be imaged is 4f from the sensor; a requirement nearer than
    # that is clipped there (the frame is then judged out of reach below).
    with np.errstate(invalid="ignore"):
        required_near = np.where(has_requirement, np.maximum(required_near, 4.0001 * np.nan_to_num(focal, nan=1.0)),
                                 required_near)
        required_far = np.where(has_requirement & (required_far <= required_near), required_near * 1.0001, required_far)
    judged = settings_known & focus_known & has_requirement
    with np.errstate(invalid="ignore"):
        covered = judged & (near <= required_near * (1 + 1e-9)) & (far >= required_far * (1 - 1e-9))
    missed = judged & ~covered

    needed = np.full(count, np.nan)
    needed_label = np.full(count, np.nan)
    better_focus = np.full(count, np.nan)
    better_label = np.full(count, np.nan)
    stack = np.full(count, np.nan)
    if missed.any():
        rows = missed
        needed[rows] = f_number_for_range(focal[rows], coc[rows], focus[rows], required_near[rows],
                                          required_far[rows], reference="sensor", pupil_magnification=pupil[rows])
        needed_label[rows], _ = round_up_to_stops(np.maximum(needed[rows], 0.5))
        plan = best_focus_for_range(focal[rows], coc[rows], required_near[rows], required_far[rows],
                                    reference="sensor", pupil_magnification=pupil[rows])
        better_focus[rows] = plan.focus_mm
        better_label[rows], _ = round_up_to_stops(np.maximum(plan.f_number, 0.5))
    # Which remedy applies (each only on missed rows):
    with np.errstate(invalid="ignore"):
        focus_alone = missed & (better_label <= f_number * (1 + 1e-9))
        out_of_reach = missed & ~focus_alone & ~(better_label <= max_f_number * (1 + 1e-9))
        too_wide = missed & ~focus_alone & (needed_label > f_number)
        # Refocusing is worth naming next to stopping down only when it saves a stop or more.
        refocus_and_stop_down = missed & ~focus_alone & ~out_of_reach & (better_label * 2 ** 0.5 <= needed_label * (1 + 1e-9))
    if out_of_reach.any():
        rows = out_of_reach
        stack[rows] = stack_frame_counts(focal[rows], f_number[rows], coc[rows], required_near[rows],
                                         required_far[rows], reference="sensor", pupil_magnification=pupil[rows])

    diffraction_marked = result["diffraction_limited_f_number"].to_numpy(dtype=float) / (1 + magnification / pupil)
    with np.errstate(invalid="ignore"):
        past_diffraction = settings_known & (result["effective_f_number"].to_numpy(dtype=float)
                                             > result["diffraction_limited_f_number"].to_numpy(dtype=float))
    outside_plan = _outside_plan(result, focus, coc, pupil, settings_known & focus_known)

    flag_columns = {
        "distance-unknown": settings_known & ~focus_known,
        "settings-unknown": ~settings_known,
        "no-requirement": settings_known & focus_known & ~has_requirement,
        "too-wide-open": too_wide,
        "focus-misplaced": focus_alone | refocus_and_stop_down,
        "out-of-reach": out_of_reach,
        "past-diffraction": past_diffraction,
        "outside-plan": outside_plan,
    }
    flag_matrix = np.column_stack([flag_columns[name] for name in FLAGS]) if count else np.zeros((0, len(FLAGS)), bool)
    # Few distinct flag combinations occur: build each list once and share it between rows
    # (treat them as read-only).
    codes = flag_matrix.astype(np.int64) @ (1 << np.arange(len(FLAGS), dtype=np.int64))
    combinations = {int(code): [FLAGS[i] for i in range(len(FLAGS)) if code >> i & 1] for code in np.unique(codes)}
    result["flags"] = [combinations[code] for code in codes.tolist()]
    result["required_near_mm"] = required_near
    result["required_far_mm"] = required_far
    result["needed_f_number"] = needed_label
    result["better_focus_mm"] = np.where(focus_alone | refocus_and_stop_down, better_focus, np.nan)
    result["better_f_number"] = np.where(focus_alone, f_number, np.where(refocus_and_stop_down, better_label, np.nan))
    result["stack_frames"] = stack
    result["max_f_number"] = max_f_number
    result["lens_min_known"] = ~np.isnan(lens_min)
    result["diffraction_f_number"] = diffraction_marked
    return result


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

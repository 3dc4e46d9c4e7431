"""Verdicts and remedies on hand-computed cases; every remedy is re-checked by recomputing
the zone at the suggested setting (it must hold; one third stop wider must not)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from sharpzone.analysis.checks import Requirement, check_frames
from sharpzone.analysis.zones import add_zones
from sharpzone.optics import plan_focus_stack, sharp_zone
from sharpzone.optics.coc import FixedCoc
from sharpzone.optics.stops import next_wider, round_up_to_stop
from sharpzone.report.verdicts import describe_flag
from tests.analysis.frames_factory import frames_frame

COC = FixedCoc(0.03)


def checked(requirement, *rows, policy=COC):
    return check_frames(add_zones(frames_frame(*rows), policy), requirement)


def holds(focal, n, focus, near, far, coc=0.03):
    zone = sharp_zone(focal, n, coc, focus, reference="sensor")
    return zone.near_mm <= near * (1 + 1e-9) and zone.far_mm >= far * (1 - 1e-9)


def lens_to_sensor(s, f):
    # Gaussian lens formula, written here independently: D = s + s f / (s − f).
    return s + s * f / (s - f)


def test_zone_from_the_exact_form_matches_a_hand_computation():
    # Open Photographic Society exact forms (lens reference): 50 mm f/8 c 0.03 at s = 3 m gives
    # near 2337.9 mm and far 4185.3 mm; from the sensor the same subject plane is D = s + v.
    s = 3000.0
    row = add_zones(frames_frame({"focus_mm": lens_to_sensor(s, 50)}), COC).iloc[0]
    v = s * 50 / (s - 50)
    assert row["near_mm"] == pytest.approx(2337.905 + v, abs=0.01)
    assert row["far_mm"] == pytest.approx(4185.268 + v, abs=0.01)


def test_a_frame_that_holds_the_range_passes():
    result = checked(Requirement("range", near_mm=2500, far_mm=4000), {"f_number": 8.0, "focus_mm": 3000})
    assert result.iloc[0]["flags"] == []


def test_too_wide_open_and_its_remedy_holds():
    requirement = Requirement("range", near_mm=2500, far_mm=4000)
    row = checked(requirement, {"f_number": 2.8, "focus_mm": 3000}).iloc[0]
    assert "too-wide-open" in row["flags"]
    needed = row["needed_f_number"]
    stop = round_up_to_stop(needed)
    assert stop.label == needed
    assert holds(50, stop.value, 3000, 2500, 4000)
    wider = next_wider(stop)
    assert not holds(50, wider.exact, 3000, 2500, 4000)
    assert "would have held it" in describe_flag("too-wide-open", row)


def test_focus_placed_wrong_and_its_remedy_holds():
    requirement = Requirement("range", near_mm=2500, far_mm=4000)
    row = checked(requirement, {"f_number": 8.0, "focus_mm": 2300}).iloc[0]
    assert row["flags"] == ["focus-misplaced"]
    assert holds(50, 8.0, row["better_focus_mm"], 2500, 4000)
    assert "focusing at" in describe_flag("focus-misplaced", row)


def test_out_of_reach_gives_a_stack_that_works():
    requirement = Requirement("range", near_mm=450, far_mm=2000)
    row = checked(requirement, {"focal_mm": 100.0, "f_number": 2.8, "focus_mm": 600, "lens_min_aperture": 22}).iloc[0]
    assert "out-of-reach" in row["flags"]
    plan = plan_focus_stack(100, 2.8, 0.03, 450, 2000, reference="sensor")
    assert row["stack_frames"] == plan.frame_count > 1
    assert "focus stack of" in describe_flag("out-of-reach", row)


def test_needed_past_the_lens_minimum_is_said():
    # 100 mm at 60 cm: holding 56–66 cm needs about f/100 at this focus (computed).
    requirement = Requirement("range", near_mm=560, far_mm=660)
    row = checked(requirement, {"focal_mm": 100.0, "f_number": 2.8, "focus_mm": 600}).iloc[0]
    assert {"too-wide-open", "out-of-reach"} <= set(row["flags"])
    assert holds(100, round_up_to_stop(row["needed_f_number"]).value, 600, 560, 660)
    assert "past this lens's narrowest f/22" in describe_flag("too-wide-open", row)


def test_unknown_infinite_and_absurd_distances():
    requirement = Requirement("range", near_mm=10_000, far_mm=math.inf)
    result = checked(
        requirement,
        {"focal_mm": 24.0, "f_number": 11.0, "focus_mm": math.nan, "focus_source": "none"},
        {"focal_mm": 24.0, "f_number": 11.0, "focus_mm": math.inf},
        {"focal_mm": 24.0, "f_number": 11.0, "focus_mm": 0.5},  # half a millimetre: absurd
    )
    assert result.iloc[0]["flags"] == ["distance-unknown"]
    assert result.iloc[1]["flags"] == []  # focused at infinity, near limit ≈ H − f < 10 m
    assert result.iloc[2]["flags"] == ["distance-unknown"]
    assert "cannot judge" in describe_flag("distance-unknown", result.iloc[0])


def test_depth_requirement_around_the_focus_point():
    requirement = Requirement("depth", front_mm=400, back_mm=600)
    result = checked(requirement, {"f_number": 8.0, "focus_mm": 3000}, {"f_number": 1.8, "focus_mm": 3000})
    assert result.iloc[0]["flags"] == []
    assert "too-wide-open" in result.iloc[1]["flags"]
    assert result.iloc[1]["required_near_mm"] == 2600 and result.iloc[1]["required_far_mm"] == 3600


def test_diffraction_is_flagged_past_the_limit():
    # The limit for c = 0.03 mm is f/22.4 (computed: c / (2.44 × 0.00055 mm)).
    result = checked(Requirement("range", near_mm=2000, far_mm=5000), {"f_number": 32.0}, {"f_number": 16.0})
    assert "past-diffraction" in result.iloc[0]["flags"]
    assert "past-diffraction" not in result.iloc[1]["flags"]


def test_subject_outside_the_planned_zone():
    row = {"plan_kind": "depth", "plan_front_mm": 100, "plan_back_mm": 100, "planned_focal_mm": 85.0,
           "planned_f_number": 4.0, "planned_focus_mm": 2000.0, "focal_mm": 85.0, "f_number": 4.0}
    result = checked(None, {**row, "focus_mm": 2000.0}, {**row, "focus_mm": 5000.0})
    assert "outside-plan" not in result.iloc[0]["flags"]
    assert "outside-plan" in result.iloc[1]["flags"]


def test_no_requirement_and_unknown_settings():
    result = checked(None, {}, {"format_name": None, "format_width_mm": math.nan, "format_height_mm": math.nan})
    assert result.iloc[0]["flags"] == ["no-requirement"]
    assert result.iloc[1]["flags"] == ["settings-unknown"]


def test_changed_policy_changes_every_frame():
    rows = frames_frame({"f_number": 4.0}, {"f_number": 8.0})
    strict = add_zones(rows, FixedCoc(0.015))
    lenient = add_zones(rows, FixedCoc(0.06))
    assert (strict["total_mm"] < lenient["total_mm"]).all()
    default = add_zones(rows)
    assert np.allclose(default["coc_mm"], math.hypot(36, 24) / 1500)
    assert list(default["coc_from"]) == ["format", "format"]


def test_requirement_options_are_validated():
    with pytest.raises(ValueError, match="not both"):
        Requirement.from_options(near_mm=1, far_mm=2, front_mm=3, back_mm=4)
    with pytest.raises(ValueError, match="not beyond"):
        Requirement.from_options(near_mm=5000, far_mm=2000)
    assert Requirement.from_options() is None

"""Verdicts and remedies on hand-computed cases; every remedy is re-checked by recomputing
the zone at the suggested setting with the published exact forms written out in
``tests.independent_optics`` (it must hold over the whole focus bracket; one third stop wider
must not)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sharpzone.analysis.checks import FLAGS, FLAG_KINDS, Requirement, check_frames, flagged_share
from sharpzone.analysis.frames import CheckResult
from sharpzone.analysis.stats import _group_stats
from sharpzone.analysis.zones import add_zones
from sharpzone.optics import plan_focus_stack
from sharpzone.optics.coc import FixedCoc
from sharpzone.optics.stops import stop_series
from sharpzone.report.verdicts import describe_flag
from tests.analysis.frames_factory import frames_frame
from tests.independent_optics import (
    holds_depth,
    holds_range,
    share_holding,
    stop_values,
    third_stop_wider,
    zone_from_sensor,
)

COC = FixedCoc(0.03)


def checked(requirement, *rows, policy=COC):
    return check_frames(add_zones(frames_frame(*rows), policy), requirement)


def marked(label):
    """The marked third stop engraved ``label``."""
    return next(stop for stop in stop_series("third") if stop.label == label)


def holds(focal, n, focus, near, far, coc=0.03):
    return holds_range(focal, n, coc, focus, near, far)


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
    assert row["flags"] == ["too-wide-open"]
    # The first marked third stop at which the published exact forms hold 2.5–4 m at 3 m
    # (50 mm, c 0.03 mm): found by walking the stops with the independent forms.
    expected = next(label for label, value in stop_values() if holds_range(50, value, 0.03, 3000, 2500, 4000))
    assert expected == 8
    needed = row["needed_f_number"]
    assert needed == expected
    stop = marked(needed)
    assert holds(50, stop.value, 3000, 2500, 4000)
    wider = third_stop_wider(stop)
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
    assert row["flags"] == ["out-of-reach"]
    plan = plan_focus_stack(100, 2.8, 0.03, 450, 2000, reference="sensor")
    assert row["stack_frames"] == plan.frame_count > 1 and row["stack_f_number"] == 2.8
    # The frames' zones, recomputed with the published forms, cover 45 cm–2 m without a gap.
    zones = [zone_from_sensor(100, 2.8, 0.03, focus) for focus in plan.focus_mm]
    assert zones[0][0] <= 450 * (1 + 1e-9) and zones[-1][1] >= 2000 * (1 - 1e-9)
    assert all(following[0] <= previous[1] * (1 + 1e-9) for previous, following in zip(zones, zones[1:]))
    assert "focus stack of" in describe_flag("out-of-reach", row)


def test_an_unreachable_f_number_is_only_the_reason_for_a_stack():
    # 100 mm at 60 cm: holding 56–66 cm needs about f/29 at the best focus (independent forms
    # below), past the lens's f/22: one verdict, a stack, and the f-number only as its reason.
    requirement = Requirement("range", near_mm=560, far_mm=660)
    row = checked(requirement, {"focal_mm": 100.0, "f_number": 2.8, "focus_mm": 600}).iloc[0]
    assert row["flags"] == ["out-of-reach"]
    single = row["single_frame_f_number"]
    assert single > 22
    # No single focus holds it at f/22 (searched every 0.5 mm with the published forms).
    assert not any(holds_range(100, 22, 0.03, d / 2, 560, 660) for d in range(1000, 1400))
    assert np.isnan(row["needed_f_number"])
    words = describe_flag("out-of-reach", row)
    assert "focus stack of" in words and "past this lens's narrowest f/22" in words
    assert "would have held it" not in words


def test_a_workable_refocus_is_given_alone_not_beside_an_unreachable_f_number():
    # At 6 m, holding 2.5–4 m needs f/22 (past this lens's f/16); focusing nearer with f/7.1 does.
    requirement = Requirement("range", near_mm=2500, far_mm=4000)
    row = checked(requirement, {"f_number": 4.0, "focus_mm": 6000, "lens_min_aperture": 16}).iloc[0]
    assert not holds_range(50, 16, 0.03, 6000, 2500, 4000)
    assert row["flags"] == ["focus-misplaced"]
    better_focus, better = row["better_focus_mm"], marked(row["better_f_number"])
    assert better.label <= 16
    assert holds_range(50, better.value, 0.03, better_focus, 2500, 4000)
    assert not holds_range(50, third_stop_wider(better).exact, 0.03, better_focus, 2500, 4000)
    assert "f/16" not in describe_flag("focus-misplaced", row)


def test_stopping_down_into_diffraction_is_not_offered():
    # c = 0.01 mm: diffraction softens the plane of focus past f/7.45 (745.2 c, REFERENCES.md,
    # computed). Holding 2.8–3.3 m at 3 m needs f/9 with the published forms: not offered.
    requirement = Requirement("range", near_mm=2800, far_mm=3300)
    expected = next(label for label, value in stop_values() if holds_range(50, value, 0.01, 3000, 2800, 3300))
    assert expected > 7.45
    row = check_frames(add_zones(frames_frame({"f_number": 2.8}), FixedCoc(0.01)), requirement).iloc[0]
    assert row["flags"] in (["focus-misplaced"], ["out-of-reach"])
    if row["flags"] == ["focus-misplaced"]:
        assert row["better_f_number"] <= 7.45
    else:
        assert row["stack_f_number"] <= 7.45


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
    with pytest.raises(ValueError, match="far limit 2.00 m must be beyond the near limit 5.00 m"):
        Requirement.from_options(near_mm=5000, far_mm=2000)
    with pytest.raises(ValueError, match="needs both --near and --far"):
        Requirement.from_options(near_mm=5000)
    with pytest.raises(ValueError, match="needs both --front and --back"):
        Requirement.from_options(back_mm=50)


def test_a_requirement_follows_the_plan_rules_of_a_shoot():
    # One home for the plan checks (catalog.rules.plan_values): what a shoot's plan may not
    # be, a requirement may not be either.
    from sharpzone.catalog.rules import plan_values

    for kind, limits in (("sideways", {}), ("range", {"near_mm": -1.0, "far_mm": 2.0}),
                         ("depth", {"front_mm": 0.0, "back_mm": 0.0}), ("depth", {"front_mm": -5.0, "back_mm": 9.0})):
        with pytest.raises(ValueError):
            plan_values("plan", kind, limits.get("near_mm"), limits.get("far_mm"), limits.get("front_mm"),
                        limits.get("back_mm"))
        with pytest.raises(ValueError):
            Requirement(kind, **limits)
    assert Requirement.from_plan("depth", math.nan, math.nan, 30.0, 60.0) == Requirement("depth", front_mm=30.0,
                                                                                            back_mm=60.0)
    assert Requirement.from_plan(None, math.nan, math.nan, math.nan, math.nan) is None
    assert Requirement.from_options() is None


# --- focus-distance brackets (issue 10 part 7) -------------------------------------------

RANGE = Requirement("range", near_mm=2500, far_mm=4000)


def bracket_ends(nearest, farthest, points=41):
    """Focus distances across a bracket, both ends included, evenly in magnification."""
    from tests.independent_optics import magnification

    low, high = magnification(farthest, 50), magnification(nearest, 50)
    ms = [low + (high - low) * i / (points - 1) for i in range(points)]
    return [math.inf if m <= 0 else 50 * (1 + m) ** 2 / m for m in ms]


def test_a_frame_held_over_its_whole_bracket_passes():
    row = checked(RANGE, {"f_number": 11.0, "focus_mm": 3000, "focus_near_mm": 2950, "focus_far_mm": 3100}).iloc[0]
    assert all(holds(50, 11, d, 2500, 4000) for d in bracket_ends(2950, 3100))
    assert row["flags"] == [] and row["outcome"] == "passed" and row["holds_share"] == 1.0


def test_a_frame_held_over_part_of_its_bracket_is_uncertain_with_the_share_and_a_remedy():
    # 50 mm f/8 at 3 m holds 2.5–4 m; the camera's bracket 2.8–3.3 m reaches past where it holds.
    row = checked(RANGE, {"f_number": 8.0, "focus_mm": 3000, "focus_near_mm": 2800, "focus_far_mm": 3300}).iloc[0]
    assert row["flags"] == ["distance-uncertain"] and row["outcome"] == "uncertain"
    # Share by sampling the bracket evenly in magnification with the published forms.
    expected = share_holding(lambda d: holds(50, 8, d, 2500, 4000), 50, 2800, 3300)
    assert 0.05 < expected < 0.95
    assert row["holds_share"] == pytest.approx(expected, abs=2e-4)
    stop = marked(row["needed_f_number"])
    assert row["remedy"] == "stop-down"
    assert all(holds(50, stop.value, d, 2500, 4000) for d in bracket_ends(2800, 3300))
    wider = third_stop_wider(stop)
    assert not all(holds(50, wider.value, d, 2500, 4000) for d in bracket_ends(2800, 3300))
    words = describe_flag("distance-uncertain", row)
    assert "2.80 m–3.30 m" in words and f"{row['holds_share']:.0%}" in words and "for any distance in it" in words


def test_a_frame_missed_over_its_whole_bracket_gets_the_ordinary_verdict_for_all_of_it():
    row = checked(RANGE, {"f_number": 4.0, "focus_mm": 3000, "focus_near_mm": 2900, "focus_far_mm": 3200}).iloc[0]
    assert not any(holds(50, 4, d, 2500, 4000) for d in bracket_ends(2900, 3200))
    assert row["flags"] == ["too-wide-open"] and row["holds_share"] == 0.0
    stop = marked(row["needed_f_number"])
    assert all(holds(50, stop.value, d, 2500, 4000) for d in bracket_ends(2900, 3200))
    # (at the wider stop's conservative value: the smaller of label and exact)
    assert not all(holds(50, third_stop_wider(stop).value, d, 2500, 4000) for d in bracket_ends(2900, 3200))
    assert "for any distance in the camera's bracket" in describe_flag("too-wide-open", row)


def test_a_bracket_reaching_infinity_has_a_finite_share():
    # 50 mm f/8: holding 6 m to infinity; the camera says "8 m or farther".
    requirement = Requirement("range", near_mm=6000, far_mm=math.inf)
    row = checked(requirement, {"f_number": 8.0, "focus_mm": 8000, "focus_near_mm": 8000,
                                "focus_far_mm": math.inf}).iloc[0]
    expected = share_holding(lambda d: holds_range(50, 8, 0.03, d, 6000, math.inf), 50, 8000, math.inf)
    assert 0 < expected < 1
    assert row["flags"] == ["distance-uncertain"]
    assert row["holds_share"] == pytest.approx(expected, abs=2e-4)


def test_a_subject_depth_under_a_bracket_is_judged_at_its_nearest_end():
    # 85 mm f/2.8, 10 cm in front and 15 cm behind the subject; the subject is 3.5–5 m away.
    requirement = Requirement("depth", front_mm=100, back_mm=150)
    row = checked(requirement, {"focal_mm": 85.0, "f_number": 2.8, "focus_mm": 4000, "focus_near_mm": 3500,
                                "focus_far_mm": 5000}).iloc[0]
    expected = share_holding(lambda d: holds_depth(85, 2.8, 0.03, d, 100, 150), 85, 3500, 5000)
    assert 0 < expected < 1
    assert row["flags"] == ["distance-uncertain"]
    assert row["holds_share"] == pytest.approx(expected, abs=2e-4)
    stop = marked(row["needed_f_number"])
    ends = (3500, 3750, 4000, 4500, 5000)
    assert all(holds_depth(85, stop.value, 0.03, d, 100, 150) for d in ends)
    assert not holds_depth(85, third_stop_wider(stop).value, 0.03, 3500, 100, 150)


def test_a_row_without_a_bracket_is_exact():
    rows = checked(RANGE, {"f_number": 8.0, "focus_near_mm": math.nan, "focus_far_mm": math.nan},
                   {"f_number": 8.0})
    assert list(rows["flags"]) == [[], []]
    assert list(rows["focus_nearest_mm"]) == list(rows["focus_farthest_mm"]) == [3000.0, 3000.0]


def test_focused_at_infinity_in_a_portrait_plan_missed_the_subject():
    row = {"plan_kind": "depth", "plan_front_mm": 80, "plan_back_mm": 120, "planned_focal_mm": 85.0,
           "planned_f_number": 5.6, "planned_focus_mm": 2500.0, "focal_mm": 85.0, "f_number": 2.0,
           "focus_mm": math.inf}
    result = checked(None, row).iloc[0]
    assert result["flags"] == ["focus-misplaced"] and result["remedy"] == "focus-on-subject"
    words = describe_flag("focus-misplaced", result)
    assert "focused at infinity" in words and "missed the subject" in words and "2.50 m" in words


def test_check_and_stats_give_the_same_share_flagged():
    # One passed, one flagged, one without a distance: 1 of 2 judged frames flagged (50 %),
    # whichever command counts.
    frames = checked(RANGE, {"f_number": 8.0}, {"f_number": 2.8}, {"focus_mm": math.nan, "focus_source": "none"})
    assert list(frames["outcome"]) == ["passed", "flagged", "unjudged"]
    by_lens = CheckResult(frames, RANGE, None).summary_by_lens()
    assert by_lens[0]["share_flagged"] == 0.5
    assert _group_stats("lens", "Korvath 50/1.8", frames).share_flagged == 0.5
    assert flagged_share(["unjudged"]) is None


def test_every_verdict_has_a_kind_and_words():
    assert set(FLAG_KINDS) == set(FLAGS)
    row = checked(RANGE, {"f_number": 8.0, "focus_mm": 3000, "focus_near_mm": 2800, "focus_far_mm": 3300}).iloc[0]
    for flag in FLAGS:
        assert describe_flag(flag, row)


@settings(max_examples=40, deadline=None)
@given(st.sampled_from([24.0, 35.0, 50.0, 85.0, 135.0]), st.sampled_from([2.8, 4.0, 5.6, 8.0, 11.0]),
       st.floats(min_value=15, max_value=150), st.floats(min_value=1.05, max_value=2.5),
       st.floats(min_value=0.6, max_value=1.6), st.floats(min_value=1.01, max_value=1.5))
def test_the_share_matches_sampling_the_bracket(focal, n, near_factor, spread, centre, width):
    # Any range and bracket: the closed-form share against sampling with the published forms.
    near = near_factor * focal
    far = near * spread
    focus = math.sqrt(near * far) * centre
    nearest, farthest = max(focus / width, 4.01 * focal), focus * width
    requirement = Requirement("range", near_mm=near, far_mm=far)
    row = checked(requirement, {"focal_mm": focal, "f_number": n, "focus_mm": focus, "focus_near_mm": nearest,
                                "focus_far_mm": farthest}).iloc[0]
    expected = share_holding(lambda d: holds_range(focal, n, 0.03, d, near, far), focal, nearest, farthest, 4001)
    assert row["holds_share"] == pytest.approx(expected, abs=2e-3)
    if row["flags"] == []:
        assert expected == 1.0
    if row["outcome"] == "flagged":
        assert expected == 0.0

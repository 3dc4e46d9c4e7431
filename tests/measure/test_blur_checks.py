"""The blur verdicts from stored measurements: thresholds, the CoC judged at query time, the
hand-holding hint and the comparison with a recorded focus distance."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from sharpzone.analysis.blur_checks import FOCUS_MARGIN, PREVIEW_FLOOR_PX, blur_flags, where_in_frame
from sharpzone.analysis.checks import count_problems
from sharpzone.report.verdicts import describe_flag

COC_FULL_FRAME = math.hypot(36, 24) / 1500  # diagonal / 1500 (common practice)


def _row(**values):
    row = {"blur_analysed_long_px": 4800, "blur_focus_px": 2.0, "blur_best_px": 2.0, "blur_best_x": 0.1,
           "blur_best_y": 0.1, "blur_median_px": 5.0, "blur_regions_measured": 24, "format_width_mm": 36.0,
           "format_height_mm": 24.0, "coc_mm": COC_FULL_FRAME, "exposure_s": 1 / 250, "focal_mm": 50.0,
           "focal_35mm_mm": np.nan, "focus_mm": np.nan, "focus_point_x": 0.5}
    row.update(values)
    return row


def _judge(*rows):
    frames = pd.DataFrame(list(rows))
    flags = blur_flags(frames)
    return [sorted(flag for flag, column in flags.items() if column[i]) for i in range(len(frames))], frames


def test_thresholds_around_the_limit():
    # 4,800 px across 36 mm: the CoC of 0.0288 mm is 3.85 px, above the preview floor of 3 px.
    limit = COC_FULL_FRAME / 36 * 4800
    assert limit > PREVIEW_FLOOR_PX
    flags, frames = _judge(
        _row(blur_focus_px=limit * 0.9),
        _row(blur_focus_px=limit * FOCUS_MARGIN * 1.1),
        _row(blur_focus_px=limit * 1.2),  # borderline: no blur verdict
        _row(blur_focus_px=limit * 3, blur_best_px=limit * 1.5),
        _row(blur_focus_px=np.nan),
        _row(blur_analysed_long_px=np.nan),  # never measured
    )
    assert flags == [["sharp-at-focus"], ["focus-missed"], [], ["soft-all-over"], ["not-measurable"], []]
    assert frames["blur_limit_px"][0] == pytest.approx(limit)
    assert frames["blur_focus_coc"][1] == pytest.approx(FOCUS_MARGIN * 1.1)
    assert frames["blur_where"][1] == "upper left"


def test_a_larger_coc_changes_the_verdict_without_measuring_again():
    stored = _row(blur_focus_px=8.0)
    strict, _ = _judge(stored)
    lenient, _ = _judge({**stored, "coc_mm": 0.07})  # 9.3 px
    assert strict == [["focus-missed"]] and lenient == [["sharp-at-focus"]]


def test_small_previews_are_judged_at_their_own_floor():
    # 480 px across 36 mm: the CoC is 0.38 px, far below what the preview shows.
    flags, frames = _judge(_row(blur_analysed_long_px=480, blur_focus_px=2.5, blur_best_px=2.5))
    assert flags == [["sharp-at-focus"]] and frames["blur_limit_px"][0] == PREVIEW_FLOOR_PX


def test_hand_holding_hint():
    # Common practice: hand-held exposures no longer than 1/(35 mm equivalent focal length) s.
    soft = dict(blur_focus_px=20.0, blur_best_px=15.0)
    _, frames = _judge(_row(exposure_s=1 / 15, **soft), _row(exposure_s=1 / 500, **soft),
                       _row(exposure_s=1 / 15, focal_35mm_mm=75.0, **soft))
    slow, fast, cropped = (describe_flag("soft-all-over", row) for row in frames.to_dict("records"))
    assert "1/15 s is slower than the hand-holding rule's 1/50 s" in slow and "shake is likely" in slow
    assert "1/500 s is within the hand-holding rule's 1/50 s" in fast and "motion or a missed focus" in fast
    assert "rule's 1/75 s" in cropped


def test_a_recorded_focus_distance_that_the_pixels_contradict_is_named():
    _, frames = _judge(_row(blur_focus_px=20.0, focus_mm=3000.0), _row(blur_focus_px=20.0))
    with_distance, without = (describe_flag("focus-missed", row) for row in frames.to_dict("records"))
    assert frames["blur_disagrees"].tolist() == [True, False]
    assert "recorded focus distance 3.00 m" in with_distance and "disagree" in with_distance
    assert "disagree" not in without


def test_the_centre_stands_in_for_a_missing_focus_point():
    _, frames = _judge(_row(focus_point_x=np.nan))
    assert "the centre (no focus point recorded)" in describe_flag("sharp-at-focus", frames.to_dict("records")[0])


def test_sharp_at_focus_is_a_note_not_a_problem():
    assert count_problems(["sharp-at-focus"]) == 0
    assert count_problems(["sharp-at-focus", "distance-unknown"]) == 1


@pytest.mark.parametrize("x, y, words", [(0.1, 0.1, "upper left"), (0.5, 0.5, "centre"), (0.9, 0.5, "right"),
                                          (0.5, 0.95, "lower centre"), (None, 0.5, "—")])
def test_where_in_frame(x, y, words):
    assert where_in_frame(x, y) == words

"""The catalogue's rules on their own: what a reader hands over is made to fit them."""

from __future__ import annotations

import math

import pytest

from sharpzone.catalog.rules import check_row, frame_values_checker, whole_number
from sharpzone.errors import InvalidValue


def frame_within_rules(values: dict, warnings: list[str]) -> dict:
    """The checker the ingest uses, applied to one frame given as a dict."""
    columns = tuple(values)
    return dict(zip(columns, frame_values_checker(columns)(list(values.values()), warnings)))


def test_values_a_reader_got_wrong_are_dropped_with_a_warning():
    warnings: list[str] = []
    cleaned = frame_within_rules({"path": "/a.jpg", "focus_source": "telepathy", "iso": 0, "f_number": 0.2,
                                  "focal_mm": 50.0, "focus_point_x": 1.5, "focus_mm": 3000.0,
                                  "focus_near_mm": 4000.0, "focus_far_mm": math.inf}, warnings)
    assert cleaned["focus_source"] == "none"
    assert cleaned["iso"] is None and cleaned["f_number"] is None and cleaned["focus_point_x"] is None
    assert cleaned["focal_mm"] == 50.0 and cleaned["focus_mm"] == 3000.0
    assert cleaned["focus_near_mm"] is None and cleaned["focus_far_mm"] is None
    assert len(warnings) == 5 and all("\n" not in w for w in warnings)
    assert check_row("frame", cleaned) == cleaned  # now within every rule


def test_a_good_frame_passes_untouched():
    values = {"path": "/a.jpg", "focus_source": "makernote", "focus_mm": 3000.0, "focus_near_mm": 2500.0,
              "focus_far_mm": math.inf, "focus_point_x": 0.0, "focus_point_w": 1.0, "iso": 100}
    warnings: list[str] = []
    assert frame_within_rules(values, warnings) == values and warnings == []


@pytest.mark.parametrize("value", [True, 1.5, "3", 2**31])
def test_whole_numbers_are_whole_and_in_range(value):
    with pytest.raises(InvalidValue):
        whole_number(value, "count", low=0)


def test_a_stored_policy_the_program_cannot_read_is_an_error_not_an_unknown_coc():
    # Before 0004 an imported bundle could store one; every verdict then turned into a
    # wrong "settings-unknown" remedy.
    from sharpzone.analysis.zones import add_zones
    from tests.analysis.frames_factory import frames_frame

    with pytest.raises(InvalidValue, match=r"CoC policy 'blurry-ish' is not valid"):
        add_zones(frames_frame({"shoot_coc_policy": "blurry-ish"}))


def test_each_shared_number_is_written_in_one_place_only():
    # The f/0.5 floor, the 1/1500 diagonal rule, the assumed f/22, the SubjectDistance
    # infinity code: one definition each (issue: seven, four, two and three copies).
    import re
    import tokenize
    from pathlib import Path

    import sharpzone

    homes = {
        r"(MIN_F_NUMBER = |>= |< )0\.5\b": "optics/limits.py",
        r"\b1500(\.0)?\b": "optics/limits.py",
        r"\b22\.0\b": "optics/limits.py",
        r"0xFFFFFFFF": "vocabulary.py",
    }
    root = Path(sharpzone.__file__).parent
    for pattern, home in homes.items():
        found = set()
        for path in root.rglob("*.py"):
            with path.open("rb") as source:  # the code only: no comments, strings or docstrings
                code = " ".join(token.string for token in tokenize.tokenize(source.readline)
                                if token.type not in (tokenize.COMMENT, tokenize.STRING, tokenize.ENCODING))
            if re.search(pattern, code):
                found.add(path.relative_to(root).as_posix())
        assert found == {home}, (pattern, found)


# Each value at the edge of its rule: kept (True) or dropped with a warning (False). The
# bounds are the catalogue's CHECK constraints (rules.CHECKS): above 0, f/0.5 or more (the
# optics core's floor), fractions 0..1, ±24 h of UTC offset, 32-bit whole numbers;
# infinity is a focus distance (CIPA DC-008 SubjectDistance 0xFFFFFFFF) and nothing else.
EDGES = [
    ("focal_mm", 50.0, True), ("focal_mm", 50, True), ("focal_mm", 0.0, False), ("focal_mm", -35.0, False),
    ("focal_mm", math.inf, False), ("focal_mm", math.nan, False), ("focal_mm", True, False),
    ("f_number", 0.5, True), ("f_number", 0.49, False), ("f_number", math.inf, False),
    ("exposure_s", 1e-4, True), ("exposure_s", 0, False),
    ("iso", 100, True), ("iso", 400.0, True), ("iso", 0, False), ("iso", 2**31, False), ("iso", 2.5, False),
    ("iso", False, False),
    ("utc_offset_minutes", -330, True), ("utc_offset_minutes", 1440, True), ("utc_offset_minutes", 1441, False),
    ("utc_offset_minutes", 60.5, False),
    ("focus_mm", math.inf, True), ("focus_mm", 5e-324, True), ("focus_mm", 0.0, False), ("focus_mm", -math.inf, False),
    ("focus_point_x", 0, True), ("focus_point_x", 1.0, True), ("focus_point_x", 1.0000001, False),
    ("focus_point_h", -0.01, False), ("subject_distance_range", "close", True), ("subject_distance_range", "far", False),
    ("width_px", 6000, True), ("width_px", -1, False), ("height_px", 4000.0, True),
]


@pytest.mark.parametrize(("column", "value", "kept"), EDGES)
def test_each_value_at_the_edge_of_its_rule_is_kept_or_dropped(column, value, kept):
    warnings: list[str] = []
    cleaned = frame_within_rules({"path": "/a.jpg", "focus_source": "exif", column: value}, warnings)
    if kept:
        assert cleaned[column] is value and warnings == []
        assert check_row("frame", cleaned) == cleaned
    else:
        assert cleaned[column] is None and len(warnings) == 1 and warnings[0].endswith(": ignored")


def test_rows_as_lists_are_checked_like_rows_as_dicts():
    from sharpzone.catalog.rules import frame_values_checker

    columns = ("path", "iso", "focus_source", "focus_near_mm", "focus_mm", "focus_far_mm", "f_number")
    check = frame_values_checker(columns)
    assert check is frame_values_checker(columns)  # built once per set of columns
    warnings: list[str] = []
    values = check(["/a.jpg", 0, "telepathy", 4000.0, 3000.0, math.inf, 8.0], warnings)
    assert values == ["/a.jpg", None, "none", None, 3000.0, None, 8.0]
    assert len(warnings) == 3 and "bracket ignored" in warnings[2]

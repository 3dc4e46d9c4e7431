"""``describe_flags`` says each distinct sentence once (issue 16 part 2): over frames of every
kind of verdict its words are, frame by frame, the words ``describe_flag`` gives that frame on
its own, in metric and imperial, and each verdict's words read only the values its key names
(``FLAG_INPUTS``), so two frames with the same key cannot need different words. Invented data."""

from __future__ import annotations

import itertools
import math

import pytest

from sharpzone.analysis.checks import Requirement, check_frames
from sharpzone.analysis.zones import add_zones
from sharpzone.report.verdicts import DERIVED_INPUTS, FLAG_INPUTS, describe_flag, describe_flags
from tests.analysis.frames_factory import frames_frame

PLANS = (
    {"plan_kind": "range", "plan_near_mm": 2000.0, "plan_far_mm": 6000.0},
    {"plan_kind": "depth", "plan_front_mm": 80.0, "plan_back_mm": 150.0},
    {"plan_kind": "range", "plan_near_mm": 2000.0, "plan_far_mm": 6000.0, "planned_focal_mm": 50.0,
     "planned_f_number": 8.0, "planned_focus_mm": 3000.0},
    {},  # no plan
)


def _varied_frames():
    rows = []
    for focal, n, focus, spread, plan in itertools.product(
            (24.0, 100.0, 200.0), (2.8, 8.0, 32.0), (None, 150.0, 450.0, 1500.0, 2900.0, 9000.0, math.inf),
            (None, 0.04, 0.3), PLANS):
        row = {"focal_mm": focal, "f_number": n, "focus_mm": focus, **plan}
        if focus is not None and math.isfinite(focus) and spread:
            row.update(focus_near_mm=focus / (1 + spread), focus_far_mm=focus * (1 + spread),
                       focus_key="Exif.Invented.FocusDistance")
        rows.append(row)
    rows.append({"format_name": None, "format_width_mm": math.nan, "format_height_mm": math.nan})
    rows.append({"body": None, "format_name": None, "format_width_mm": math.nan, "format_height_mm": math.nan})
    rows.append({"focus_mm": None, "subject_distance_range": "distant"})
    return check_frames(add_zones(frames_frame(*rows)))


@pytest.fixture(scope="module")
def varied():
    return _varied_frames()


def _one_by_one(frames, imperial):
    rows = frames.to_dict("records")
    return [[{"flag": flag, "text": describe_flag(flag, row, imperial=imperial)} for flag in row["flags"]]
            for row in rows]


def test_the_frames_cover_every_optical_verdict(varied):
    seen = {flag for flags in varied["flags"] for flag in flags}
    assert set(FLAG_INPUTS) <= seen, set(FLAG_INPUTS) - seen


@pytest.mark.parametrize("imperial", [False, True])
def test_each_frame_gets_the_words_it_gets_on_its_own(varied, imperial):
    assert describe_flags(varied, imperial=imperial) == _one_by_one(varied, imperial)


def test_a_command_requirement_gives_the_same_words_too():
    frames = frames_frame(*({"focus_mm": focus, "f_number": n} for focus in (1200.0, 2500.0, 7000.0)
                            for n in (2.8, 5.6, 16.0)))
    checked = check_frames(add_zones(frames), Requirement("depth", front_mm=40.0, back_mm=90.0))
    assert describe_flags(checked) == _one_by_one(checked, False)


class _Reading(dict):
    """A row that remembers which values were read."""

    def __init__(self, *args):
        super().__init__(*args)
        self.read: set[str] = set()

    def __getitem__(self, key):
        self.read.add(key)
        return super().__getitem__(key)

    def get(self, key, default=None):
        self.read.add(key)
        return super().get(key, default)

    def __contains__(self, key):
        self.read.add(key)
        return super().__contains__(key)


def test_each_verdicts_words_read_only_what_its_key_names(varied):
    for row in varied.to_dict("records"):
        for flag in row["flags"]:
            inputs = FLAG_INPUTS.get(flag)
            if inputs is None:
                continue
            allowed = set()
            for name, _ in inputs:
                allowed.update(DERIVED_INPUTS.get(name, (name,)))
            reading = _Reading(row)
            describe_flag(flag, reading)
            describe_flag(flag, reading, imperial=True)
            assert reading.read <= allowed, (flag, reading.read - allowed)


def test_rows_are_numbered_by_their_values_even_past_64_bits():
    # Five columns of 2**20 possible numbers each: their product passes 2**62, so the
    # numbering is renumbered on the way; rows equal throughout still share a number, and
    # rows that differ in the first column only (which 64-bit arithmetic would lose) do not.
    import numpy as np

    from sharpzone.report.verdicts import _numbered

    rows = np.array([[1, 2, 3, 4, 5], [1, 2, 3, 4, 6], [1, 2, 3, 4, 5], [0, 0, 0, 0, 0], [1, 0, 0, 0, 0],
                     [1048575] * 5])
    numbers = _numbered((rows[:, column], 2**20) for column in range(5)).tolist()
    assert numbers[0] == numbers[2] and len(set(numbers)) == 5 and sorted(set(numbers)) == [0, 1, 2, 3, 4]


def test_a_blur_finer_than_the_preview_resolves_is_said_as_a_bound_in_the_table_too():
    """The frames table, like the verdict's words, says "under X µm" for a blur at or below
    what the analysed preview resolves (3 px of it), never a finer figure the preview does
    not have; larger blurs keep their figure and CoC multiple."""
    from sharpzone.report.frames_render import _blur_at_focus
    from sharpzone.report.verdicts import measured_blur

    fine = {"blur_focus_px": 0.25, "blur_floor_mm": 0.225, "blur_focus_mm": 0.019, "blur_focus_coc": 0.66}
    assert _blur_at_focus(fine) == "under 225 µm"
    assert measured_blur(fine, "focus") == "under 225 µm, the finest this preview shows"
    coarse = {"blur_focus_px": 12.8, "blur_floor_mm": 0.225, "blur_focus_mm": 0.962, "blur_focus_coc": 33.3}
    assert _blur_at_focus(coarse) == "962 µm (33.3× CoC)"


def test_a_rows_values_are_those_pandas_gives():
    """The values the words read (``_column_values``) are, column by column, what pandas'
    ``Series.iloc[...].tolist()`` gives: numbers, flags, text, lists, times, nullable counts."""
    import numpy as np
    import pandas as pd

    from sharpzone.report.verdicts import _column_values

    positions = [3, 0, 2, 2]
    columns = [pd.Series([1.5, math.nan, math.inf, -0.0]), pd.Series([1, 2, 3, 4]), pd.Series([True, False] * 2),
               pd.Series(["a", None, ["x"], math.nan], dtype=object), pd.Series([1, None, 3, 4], dtype="Int64"),
               pd.to_datetime(pd.Series(["2026-05-01 10:00:00", None, "2026-05-02 00:00:00", "2026-05-03 11:30:01"])),
               pd.Series(np.array([1, 2, 3, 4], dtype=np.uint16))]
    for column in columns:
        got, expected = _column_values(column, positions), column.iloc[positions].tolist()
        assert [type(value) for value in got] == [type(value) for value in expected]
        assert [repr(value) for value in got] == [repr(value) for value in expected]


@pytest.mark.parametrize("form", [".0f", ".0%", ".1f"])
def test_values_are_keyed_together_exactly_when_format_prints_them_the_same(form):
    """``_key_codes`` finds equal prints of whole-number forms by rounding first: rows get
    one number exactly when Python's own ``format`` (what the words print) prints them the
    same, ties, signed zeros, infinity and NaN included."""
    import numpy as np
    import pandas as pd
    from hypothesis import given, settings
    from hypothesis import strategies as st

    from sharpzone.report.verdicts import _key_codes

    special = [0.5, 1.5, 2.5, -0.5, -0.4, 0.005, 0.015, 0.125, 0.285, 0.575, 0.995, 1e300, 5e-324, -0.0, 0.0,
               math.inf, -math.inf, math.nan]

    @settings(max_examples=300, deadline=None)
    @given(st.lists(st.one_of(st.sampled_from(special), st.floats(-100, 100), st.floats(width=64)), min_size=1,
                    max_size=40))
    def check(values):
        frames = pd.DataFrame({"share": values})
        positions = np.arange(len(values))
        codes, size = _key_codes(frames, "share", form, positions, False,
                                 lambda name: frames[name].to_numpy(dtype=float))
        printed = [None if value != value else format(value, form) for value in values]
        assert size == len(set(printed))
        for a, b in itertools.combinations(range(len(values)), 2):
            assert (codes[a] == codes[b]) == (printed[a] == printed[b]), (values[a], values[b])

    check()

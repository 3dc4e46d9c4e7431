"""``sharpzone.limits``: each bound in one place, refused with a hint."""

from __future__ import annotations

import pytest

from sharpzone.errors import InvalidValue
from sharpzone.limits import OVERLAP_MAX, check_close_focus, check_overlap


def test_close_focus_of_45_m_for_a_50_mm_lens_hints_centimetres():
    # A normal lens focuses within a metre (common practice); 45 m was surely 45 cm.
    with pytest.raises(InvalidValue) as caught:
        check_close_focus(45_000.0, 50.0)
    assert caught.value.hint == "did you mean 45 cm?"
    assert "'45 m'" in caught.value.message


def test_long_telephoto_close_focus_is_accepted():
    # A 600 mm telephoto focusing no closer than about 4.5 m: common practice, from memory.
    assert check_close_focus(4500.0, 600.0) == 4500.0
    assert check_close_focus(None, 50.0) is None


@pytest.mark.parametrize("overlap", [-0.1, OVERLAP_MAX + 0.01, 10.0])
def test_overlap_outside_the_help_is_refused(overlap):
    with pytest.raises(InvalidValue):
        check_overlap(overlap)


def test_overlap_given_as_percent_hints_the_fraction():
    with pytest.raises(InvalidValue) as caught:
        check_overlap(10.0)
    assert caught.value.hint == "did you mean 0.1?"

"""The shipped sensor formats are valid and the loader refuses bad rows."""

from __future__ import annotations

import pytest

from sharpzone.errors import InvalidValue, NotFound
from sharpzone.seed import find_shipped_format, parse_sensor_formats, shipped_formats


def test_every_shipped_row_is_valid_and_sourced():
    formats = shipped_formats()
    assert len(formats) >= 20
    for shipped in formats:
        assert shipped.source
        assert shipped.format.width_mm >= shipped.format.height_mm


def test_full_frame_is_36_by_24():
    # ISO 1007: the 135 film frame is 36 × 24 mm.
    fmt = find_shipped_format("full-frame")
    assert (fmt.width_mm, fmt.height_mm) == (36.0, 24.0)
    assert fmt.crop_factor == 1.0


@pytest.mark.parametrize("alias, crop", [("aps-c", 1.53), ("four-thirds", 2.0), ("1-inch", 2.7)])
def test_crop_factors_from_memory(alias, crop):
    # Commonly quoted crop factors (from memory).
    assert find_shipped_format(alias).crop_factor == pytest.approx(crop, abs=0.05)


def test_unknown_format_names_the_choices():
    with pytest.raises(NotFound, match="no sensor format 'huge'.*36x24"):
        find_shipped_format("huge")


@pytest.mark.parametrize(
    "row, words",
    [
        ("x,0,24,1500,,,src", "width 0.0"),
        ("x,36,24,1500,,,", "no source"),
        ("36x24,36,24,1500,,,src", "used twice"),
    ],
)
def test_bad_rows_are_refused(row, words):
    text = "name,width_mm,height_mm,coc_divisor,aliases,description,source\n36x24,36,24,1500,,,src\n" + row
    with pytest.raises(InvalidValue, match=words):
        parse_sensor_formats(text)

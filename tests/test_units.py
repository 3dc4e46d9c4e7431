"""``sharpzone.units``: imperial in one style, checked against hand conversions.

Every expected value below was converted by hand from the definition 1 in = 25.4 mm exactly
(1 ft = 0.3048 m), fixed by the international yard and pound agreement of 1959; none is
recomputed with the code under test.
"""

from __future__ import annotations

import math

import pytest

from sharpzone.errors import InvalidValue
from sharpzone.units import format_distance, format_round_distance, parse_distance, parse_length_mm


@pytest.mark.parametrize(
    ("mm", "text"),
    [
        (304.8, "1 ft"),            # exactly one foot
        (1524.0, "5 ft"),           # exactly 5 ft: never "5 ft 0 in"
        (1689.1, "5 ft 6½ in"),     # 66.5 in × 25.4
        (1676.4, "5 ft 6 in"),      # 66 in × 25.4
        (215.9, "8½ in"),           # 8.5 in × 25.4
        (450.0, "1 ft 5½ in"),      # 17.72 in, nearest half inch 17.5
        (3048.0, "10.0 ft"),        # exactly 10 ft: feet with one decimal from here
        (6096.0, "20.0 ft"),        # exactly 20 ft
        (10000.0, "32.8 ft"),       # 10 m / 0.3048 = 32.808 ft
        (100000.0, "328 ft"),       # 100 m = 328.08 ft: whole feet past 100 ft
        (1609344.0, "1.00 mi"),     # 5280 ft × 0.3048 m: one international mile
        (3.0, "0.12 in"),           # 3 mm / 25.4 = 0.118 in: a close-up depth keeps hundredths
    ],
)
def test_imperial_in_one_style(mm, text):
    assert format_distance(mm, imperial=True) == text


def test_imperial_never_shows_zero_inches_or_spurious_precision():
    # 2.5 ft to 40 ft in one column: no "0 in", no inch decimals, at most one foot decimal.
    texts = [format_distance(feet * 304.8, imperial=True) for feet in (2.5, 5, 7, 9.99, 12, 20, 40)]
    assert not any(" 0 in" in t for t in texts), texts
    assert texts[:3] == ["2 ft 6 in", "5 ft", "7 ft"]
    assert texts[-3:] == ["12.0 ft", "20.0 ft", "40.0 ft"]


def test_round_distance_drops_trailing_zeros_in_feet():
    assert format_round_distance(6096.0, imperial=True) == "20 ft"
    assert format_round_distance(1524.0, imperial=True) == "5 ft"


@pytest.mark.parametrize(("text", "mm"), [("10ft", 3048.0), ("5ft6in", 1676.4), ("6in", 152.4), ("3m", 3000.0),
                                          ("inf", math.inf)])
def test_parse_distance_by_definition(text, mm):
    assert parse_distance(text) == pytest.approx(mm)


@pytest.mark.parametrize("text", ["1e308", "1e300km", "1e-300", "-1m", "1e-6mm"])
def test_distances_no_one_can_mean_are_refused(text):
    with pytest.raises(InvalidValue) as caught:
        parse_distance(text)
    assert repr(text) in str(caught.value)


@pytest.mark.parametrize("number", [1e308, 1e-300, -1.0])
def test_numbers_no_one_can_mean_are_refused(number):
    with pytest.raises(InvalidValue):
        parse_distance(number)
    assert parse_distance(math.inf) == math.inf


def test_a_huge_distance_hints_at_inf():
    with pytest.raises(InvalidValue) as caught:
        parse_distance("1e308")
    assert caught.value.hint == "write inf for infinity"


@pytest.mark.parametrize("text", ["1e-300", "1e308", "-50"])
def test_lengths_no_one_can_mean_are_refused(text):
    with pytest.raises(InvalidValue):
        parse_length_mm(text)

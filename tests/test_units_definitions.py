"""Distances and lengths as people write them (units.py), against the definitions of the units.

1 in = 25.4 mm and 1 ft = 12 in exactly (international yard and pound agreement, 1959); the
metric prefixes by SI. The expected values are written as numbers, not taken from units.py.
"""

from __future__ import annotations

import math

import pytest

from sharpzone.errors import InvalidValue
from sharpzone.units import (
    format_distance,
    format_f_number,
    format_length_mm,
    format_round_distance,
    format_zone,
    metres_or_inf,
    parse_distance,
    parse_f_number,
    parse_length_mm,
)


@pytest.mark.parametrize(
    ("text", "mm"),
    [("3", 3000), ("3m", 3000), ("250cm", 2500), ("38 mm", 38), ("1.5km", 1_500_000), ("10ft", 3048),
     ("6in", 152.4), ('6"', 152.4), ("2'", 609.6), (".5m", 500), ("1e1m", 10_000), (2, 2000)],
)
def test_parse_distance_by_the_unit_definitions(text, mm):
    assert parse_distance(text) == pytest.approx(mm, rel=1e-12)


@pytest.mark.parametrize("text", ["inf", "Infinity", "∞"])
def test_infinity_words(text):
    assert math.isinf(parse_distance(text))


@pytest.mark.parametrize("text", ["", "far", "3 parsecs", "-2m", "nan", "1,5m"])
def test_bad_distances_are_one_line_errors(text):
    with pytest.raises(InvalidValue) as refused:
        parse_distance(text)
    assert "\n" not in str(refused.value)


def test_a_bare_length_is_millimetres():
    assert parse_length_mm("50") == 50 and parse_length_mm("5cm") == 50


@pytest.mark.parametrize(
    ("mm", "metric", "imperial"),
    [
        (5, "5.00 mm", "0.20 in"),  # 5 / 25.4 = 0.197 in: hundredths below an inch
        (380, "38.0 cm", "1 ft 3 in"),  # 380 / 25.4 = 14.96 in = 1 ft 2.96 in
        (2500, "2.50 m", "8 ft 2½ in"),  # 2500 / 304.8 = 8.202 ft = 8 ft 2.43 in, to the half inch
        (3048, "3.05 m", "10.0 ft"),
        (2_000_000, "2.00 km", "1.24 mi"),  # 2 km / 0.3048 m = 6561.7 ft = 1.243 mi (5280 ft)
        (1_609_344 * 20, "32.2 km", "20.0 mi"),  # 1 mi = 1609.344 m
    ],
)
def test_format_distance_metric_and_imperial(mm, metric, imperial):
    assert format_distance(mm) == metric
    assert format_distance(mm, imperial=True) == imperial


def test_unknown_and_infinite_distances():
    assert format_distance(None) == format_distance(math.nan) == "—"
    assert format_distance(math.inf) == format_distance(math.inf, imperial=True) == "∞"
    assert format_length_mm(None) == "—" and format_length_mm(0.0301) == "0.0301 mm"


def test_metres_for_the_machine_interface():
    assert metres_or_inf(2500) == 2.5
    assert metres_or_inf(math.inf) == "inf"
    assert metres_or_inf(None) is None and metres_or_inf(math.nan) is None


def test_a_shallow_zone_keeps_near_and_far_apart():
    # 0.2 mm of depth at 40 cm: three figures would print 40.0 cm twice.
    assert format_zone(399.9, 400.1) == "39.990 cm – 40.010 cm"
    assert format_zone(2337.9, math.inf) == "2.34 m – ∞"
    assert format_zone(None, None) == "— – —"


@pytest.mark.parametrize(("text", "number"), [("8", 8), ("f8", 8), ("f/5.6", 5.6), ("F/1.4", 1.4), (11, 11)])
def test_parse_f_number(text, number):
    assert parse_f_number(text) == number


def test_f_numbers_are_written_as_marked_on_lenses():
    assert [format_f_number(n) for n in (1.4, 2, 5.6, 8, 11, 22)] == ["f/1.4", "f/2", "f/5.6", "f/8", "f/11", "f/22"]
    assert format_f_number(None) == "—"
    with pytest.raises(InvalidValue):
        parse_f_number("fast")


def test_round_distances_lose_trailing_zeros():
    assert format_round_distance(1500) == "1.5 m"
    assert format_round_distance(2 * 304.8, imperial=True) == "2 ft"
    assert format_round_distance(math.inf) == "∞"

"""Properties the sharp zone must have whatever the numbers (hypothesis)."""

from __future__ import annotations

import math
import subprocess
import sys

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from sharpzone.errors import InvalidValue
from sharpzone.optics import (
    best_focus_for_range,
    f_number_for_range,
    hyperfocal_mm,
    lens_to_sensor_distance,
    plan_focus_stack,
    round_up_to_stop,
    sensor_to_lens_distance,
    sharp_zone,
    stack_frame_counts,
)
from tests.independent_optics import third_stop_wider

focals = st.floats(min_value=4, max_value=800)
f_numbers = st.floats(min_value=0.7, max_value=64)
cocs = st.floats(min_value=0.002, max_value=0.2)
pupils = st.floats(min_value=0.3, max_value=3)
references = st.sampled_from(["lens", "sensor"])


def _focus(focal, factor, reference):
    return (4 if reference == "sensor" else 1.01) * focal * factor


@settings(max_examples=300, deadline=None)
@given(focals, f_numbers, cocs, st.floats(min_value=1.0, max_value=5000), references, pupils)
def test_near_before_focus_before_far(focal, n, coc, factor, reference, pupil):
    focus = _focus(focal, factor, reference)
    zone = sharp_zone(focal, n, coc, focus, reference=reference, pupil_magnification=pupil)
    assert zone.near_mm <= focus * (1 + 1e-9)
    assert focus <= zone.far_mm * (1 + 1e-9)


@settings(max_examples=300, deadline=None)
@given(focals, f_numbers, cocs, st.floats(min_value=1.05, max_value=500), references)
def test_depth_grows_as_you_stop_down(focal, n, coc, factor, reference):
    focus = _focus(focal, factor, reference)
    wide = sharp_zone(focal, n, coc, focus, reference=reference)
    narrow = sharp_zone(focal, n * 1.26, coc, focus, reference=reference)
    assert narrow.near_mm <= wide.near_mm * (1 + 1e-12)
    assert narrow.far_mm >= wide.far_mm * (1 - 1e-12)
    assert narrow.total_mm >= wide.total_mm * (1 - 1e-12)


@settings(max_examples=200, deadline=None)
@given(focals, f_numbers, cocs)
def test_near_limit_at_hyperfocal_is_half_of_it(focal, n, coc):
    assume(n * coc < focal / 2)  # a CoC as wide as the aperture itself is no photograph
    hyperfocal = hyperfocal_mm(focal, n, coc)
    zone = sharp_zone(focal, n, coc, hyperfocal, reference="lens")
    assert zone.near_mm == pytest.approx(hyperfocal / 2, rel=1e-9)
    assert math.isinf(zone.far_mm)


@settings(max_examples=300, deadline=None)
@given(focals, st.floats(min_value=1.0001, max_value=1e6))
def test_sensor_lens_conversion_round_trips(focal, factor):
    distance = 4 * focal * factor
    back = lens_to_sensor_distance(sensor_to_lens_distance(distance, focal), focal)
    assert back == pytest.approx(distance, rel=1e-9)


@settings(max_examples=200, deadline=None)
@given(focals, cocs, st.floats(min_value=1.5, max_value=200), st.floats(min_value=1.05, max_value=3),
       st.floats(min_value=0.3, max_value=1.0), references)
def test_needed_f_number_holds_and_a_third_stop_wider_does_not(focal, coc, near_factor, spread, position, reference):
    near = _focus(focal, near_factor, reference)
    far = near * spread
    focus = near + position * (far - near)
    assume(focus > near * 1.001)
    needed = f_number_for_range(focal, coc, focus, near, far, reference=reference)
    stop = round_up_to_stop(max(needed, 0.5))
    assume(stop is not None)
    zone = sharp_zone(focal, stop.value, coc, focus, reference=reference)
    assert zone.near_mm <= near * (1 + 1e-9) and zone.far_mm >= far * (1 - 1e-9)
    wider = third_stop_wider(stop)
    assume(wider is not None and wider.exact < needed * (1 - 1e-9))
    too_wide = sharp_zone(focal, wider.exact, coc, focus, reference=reference)
    assert too_wide.near_mm > near or too_wide.far_mm < far


@settings(max_examples=100, deadline=None)
@given(focals, cocs, st.floats(min_value=1.5, max_value=200), st.floats(min_value=1.05, max_value=10), references)
def test_best_focus_beats_its_neighbours(focal, coc, near_factor, spread, reference):
    near = _focus(focal, near_factor, reference)
    far = near * spread
    plan = best_focus_for_range(focal, coc, near, far, reference=reference)
    assert near < plan.focus_mm < far
    for nudge in (0.98, 1.02):
        other = plan.focus_mm * nudge
        if near < other < far:
            assert f_number_for_range(focal, coc, other, near, far, reference=reference) >= plan.f_number * (1 - 1e-6)


def test_range_to_infinity_is_best_focused_at_twice_the_near_end():
    # Lens-referenced and P = 1 this is exact (common practice: "focus at twice the near distance").
    plan = best_focus_for_range(35, 0.03, 2000, math.inf, reference="lens")
    assert plan.focus_mm == pytest.approx(4000)
    assert hyperfocal_mm(35, plan.f_number, 0.03) == pytest.approx(4000)


@settings(max_examples=60, deadline=None)
@given(st.floats(min_value=35, max_value=200), st.floats(min_value=2, max_value=16), references,
       st.floats(min_value=0.0, max_value=0.5))
def test_stack_covers_the_range_without_gaps(focal, n, reference, overlap):
    near = 8 * focal
    far = near * 1.3
    plan = plan_focus_stack(focal, n, 0.03, near, far, reference=reference, overlap=overlap)
    assert plan.near_mm[0] == pytest.approx(near, rel=1e-6)
    assert plan.far_mm[-1] >= far * (1 - 1e-9)
    for previous_far, next_near in zip(plan.far_mm, plan.near_mm[1:]):
        assert next_near <= previous_far * (1 + 1e-9)
    assert list(plan.focus_mm) == sorted(plan.focus_mm)
    assert stack_frame_counts(focal, n, 0.03, near, far, reference=reference, overlap=overlap) == plan.frame_count


def test_one_frame_when_one_frame_is_enough():
    plan = plan_focus_stack(24, 11, 0.03, 2000, 5000)
    assert plan.frame_count == 1


def test_vectorised_equals_scalar():
    rng = np.random.default_rng(7)
    focal = rng.uniform(10, 300, 500)
    n = rng.uniform(1.4, 22, 500)
    focus = focal * 4 * rng.uniform(1.1, 200, 500)
    column = sharp_zone(focal, n, 0.03, focus)
    for i in range(0, 500, 37):
        one = sharp_zone(float(focal[i]), float(n[i]), 0.03, float(focus[i]))
        assert one.near_mm == pytest.approx(column.near_mm[i], rel=1e-12)
        assert one.far_mm == pytest.approx(column.far_mm[i], rel=1e-12)
    assert isinstance(sharp_zone(50, 8, 0.03, 3000).near_mm, float)


@pytest.mark.parametrize(
    "kwargs, words",
    [
        ({"focal_mm": 0}, "focal length 0"),
        ({"f_number": 0}, "f-number 0"),
        ({"coc_mm": -0.01}, "circle of confusion -0.01"),
        ({"focus_mm": 30, "reference": "lens"}, "not beyond the focal length"),
        ({"focus_mm": 150}, "too close"),
        ({"reference": "middle"}, "'middle'"),
    ],
)
def test_bad_inputs_name_the_value(kwargs, words):
    args = {"focal_mm": 50, "f_number": 8, "coc_mm": 0.03, "focus_mm": 3000, **kwargs}
    with pytest.raises(InvalidValue, match=words):
        sharp_zone(args.pop("focal_mm"), args.pop("f_number"), args.pop("coc_mm"), args.pop("focus_mm"), **args)


def test_range_must_run_near_to_far():
    with pytest.raises(InvalidValue, match="not beyond the near end"):
        f_number_for_range(50, 0.03, 3000, 4000, 2000)


def test_importing_the_core_loads_no_heavy_library():
    code = (
        "import sys, sharpzone.optics; "
        "print(','.join(m for m in ('sqlalchemy','pandas','typer','rich','matplotlib','alembic','exifread') "
        "if m in sys.modules))"
    )
    loaded = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.strip()
    assert loaded == ""

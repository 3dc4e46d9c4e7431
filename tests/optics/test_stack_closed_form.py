"""The focus stack in closed form (``optics.planning``) against published figures and an
independent frame-by-frame walk written with the published exact forms."""

from __future__ import annotations

import math

import pytest

from sharpzone.optics.planning import (
    f_number_for_range,
    focus_interval_for_range,
    nearest_focus_for_depth,
    plan_focus_stack,
    stack_frame_counts,
)
from tests.independent_optics import holds_depth, holds_range, lens_distance, zone_from_sensor


def walk_lens_referenced(f, n, c, near_target, far_target):
    """Frames of a stack with zero overlap, one at a time (Open Photographic Society exact
    forms, lens-referenced): each frame's near limit on the previous one's far limit."""
    h = f * f / (n * c) + f
    near, frames = near_target, 0
    while True:
        frames += 1
        # Invert near = s (H − f) / (H + s − 2f) for s; at or past H/2-ish even ∞ is near enough.
        if near >= h - f:
            return frames
        s = near * (h - 2 * f) / (h - f - near)
        if s >= h:
            return frames
        far = s * (h - f) / (h - s)
        if far >= far_target * (1 - 1e-12):
            return frames
        near = far


@pytest.mark.parametrize("focal, n, near, far", [
    (50, 8, 1000, 5000), (100, 2.8, 450, 2000), (24, 4, 500, math.inf), (200, 5.6, 3000, 3500),
    (100, 16, 300, 310), (85, 1.4, 1000, 1300),
])
def test_closed_form_count_matches_the_frame_by_frame_walk(focal, n, near, far):
    assert stack_frame_counts(focal, n, 0.03, near, far, reference="lens", overlap=0) == \
        walk_lens_referenced(focal, n, 0.03, near, far)


@pytest.mark.parametrize("fraction, frames", [(7.5, 4), (8.5, 5), (3.9, 2), (1.8, 1)])
def test_stack_to_infinity_follows_the_hyperfocal_fractions(fraction, frames):
    # D. Jacobson, "Photographic Lenses FAQ" (Q10/Q11), approximate forms: focused at H/8 a
    # subject is sharp from H/9 to H/7; in general focused at H/(2k − 1) from H/(2k) to
    # H/(2k − 2), so zero-overlap frames from H/x to infinity number ⌈x/2⌉. The exact forms
    # differ from the approximate ones by f/H here, far from any frame boundary.
    f, n, c = 50, 8, 0.03
    h = f * f / (n * c) + f
    assert stack_frame_counts(f, n, c, h / fraction, math.inf, reference="lens", overlap=0) == frames


@pytest.mark.parametrize("focal, n, near, far", [
    (50, 8, 1000, 5000), (100, 2.8, 450, 2000), (100, 2.8, 600, 700), (50, 2.8, 300, 400), (35, 11, 800, math.inf),
])
def test_sensor_referenced_stack_leaves_no_gap(focal, n, near, far):
    # Recomputed with the published forms: first near limit on the target, no gaps, far end held.
    plan = plan_focus_stack(focal, n, 0.03, near, far, reference="sensor", overlap=0.1)
    zones = [zone_from_sensor(focal, n, 0.03, focus) for focus in plan.focus_mm]
    assert zones[0][0] == pytest.approx(near, rel=1e-9)
    assert zones[-1][1] >= far * (1 - 1e-9)
    assert all(b[0] <= a[1] * (1 + 1e-9) for a, b in zip(zones, zones[1:]))


def test_sensor_referenced_count_is_within_a_tenth_of_the_tightest_walk():
    # The tightest stack measured from the sensor (each near limit exactly on the previous far
    # limit, zero overlap), walked with the published forms by bisection for each frame:
    # the closed form adds the lens's own travel as overlap, so it may use a few more frames.
    f, n, c, near_target, far_target = 100, 2.8, 0.03, 450, 2000

    def focus_with_near_at(target):
        low, high = target, 1e9
        for _ in range(200):
            middle = math.sqrt(low * high)
            if zone_from_sensor(f, n, c, middle)[0] < target:
                low = middle
            else:
                high = middle
        return low

    frames, near = 0, near_target
    while True:
        frames += 1
        far = zone_from_sensor(f, n, c, focus_with_near_at(near))[1]
        if far >= far_target:
            break
        near = far
    closed = stack_frame_counts(f, n, c, near_target, far_target, reference="sensor", overlap=0)
    assert frames <= closed <= math.ceil(frames * 1.1)


def test_focus_interval_ends_hold_exactly():
    interval = focus_interval_for_range(50, 8, 0.03, 2500, 4000, reference="sensor")
    assert zone_from_sensor(50, 8, 0.03, interval.nearest_mm)[1] == pytest.approx(4000, rel=1e-9)
    assert zone_from_sensor(50, 8, 0.03, interval.farthest_mm)[0] == pytest.approx(2500, rel=1e-9)
    assert holds_range(50, 8, 0.03, (interval.nearest_mm + interval.farthest_mm) / 2, 2500, 4000)


def test_nearest_focus_for_a_depth():
    s = nearest_focus_for_depth(85, 2.8, 0.03, 100, 100)
    v = s * 85 / (s - 85)
    sensor = s + v
    assert holds_depth(85, 2.8, 0.03, sensor * 1.0001, 100, 100)
    assert not holds_depth(85, 2.8, 0.03, sensor * 0.999, 100, 100)
    assert lens_distance(sensor, 85) == pytest.approx(s, rel=1e-9)


def test_f_number_over_a_bracket_holds_at_both_ends():
    needed = f_number_for_range(50, 0.03, 2900, 2500, 4000, focus_far_mm=3200)
    assert holds_range(50, needed * 1.0001, 0.03, 2900, 2500, 4000)
    assert holds_range(50, needed * 1.0001, 0.03, 3200, 2500, 4000)
    assert not (holds_range(50, needed * 0.999, 0.03, 2900, 2500, 4000)
                and holds_range(50, needed * 0.999, 0.03, 3200, 2500, 4000))

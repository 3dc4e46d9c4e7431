"""Properties of the close-focusing model (optics.macro) whatever the specification (hypothesis)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from sharpzone.errors import InvalidValue
from sharpzone.optics.macro import (
    check_macro_spec,
    effective_focal_mm,
    magnification_at_focus,
    sharp_zone_focusing,
)
from sharpzone.optics.planning import plan_focus_stack


def _spec(focal, close_factor, magnification):
    try:
        return check_macro_spec(focal, focal * close_factor, magnification)
    except InvalidValue:
        assume(False)


specs = st.tuples(st.floats(min_value=20, max_value=300), st.floats(min_value=2.2, max_value=12),
                  st.floats(min_value=0.1, max_value=2.0))


@settings(max_examples=150, deadline=None)
@given(specs)
def test_magnification_falls_and_focal_length_runs_between_the_ends(spec_args):
    spec = _spec(*spec_args)
    distances = spec.close_focus_mm * np.geomspace(1, 1e4, 60)
    m = np.asarray(magnification_at_focus(spec, distances))
    assert m[0] == pytest.approx(spec.max_magnification, rel=1e-6)
    assert np.all(np.diff(m) < 0)
    focal = np.asarray(effective_focal_mm(spec, spec.focal_mm, distances))
    low, high = sorted((spec.focal_mm, spec.close_focus_focal_mm))
    assert np.all((focal >= low * (1 - 1e-9)) & (focal <= high * (1 + 1e-9)))
    assert float(effective_focal_mm(spec, spec.focal_mm, math.inf)) == spec.focal_mm


@settings(max_examples=150, deadline=None)
@given(specs, st.floats(min_value=1.4, max_value=32), st.floats(min_value=1, max_value=1000))
def test_focus_lies_inside_its_zone(spec_args, n, factor):
    spec = _spec(*spec_args)
    focus = spec.close_focus_mm * factor
    zone = sharp_zone_focusing(spec, spec.focal_mm, n, 0.03, focus)
    assert zone.near_mm <= focus * (1 + 1e-9) <= zone.far_mm * (1 + 2e-9)
    assert zone.effective_f_number == pytest.approx(n * (1 + zone.magnification), rel=1e-9)


@settings(max_examples=60, deadline=None)
@given(specs, st.floats(min_value=2.8, max_value=16), st.floats(min_value=1.0, max_value=3.0),
       st.floats(min_value=1.01, max_value=1.3))
def test_macro_stacks_cover_the_range_without_gaps(spec_args, n, start, stretch):
    spec = _spec(*spec_args)
    near = spec.close_focus_mm * start
    plan = plan_focus_stack(spec.focal_mm, n, 0.03, near, near * stretch, macro=spec)
    assume(plan.frame_count < 400)
    assert plan.near_mm[0] == pytest.approx(near, rel=1e-6)
    assert plan.far_mm[-1] >= near * stretch * (1 - 1e-9)
    for before, after in zip(plan.far_mm, plan.near_mm[1:]):
        assert after <= before * (1 + 1e-9)

"""Frames taken with a lens that records its maximum magnification: the zone uses the focal
length the lens has at the recorded focus (optics.macro)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from sharpzone.analysis.checks import check_frames
from sharpzone.analysis.zones import add_zones
from tests.analysis.frames_factory import frames_frame


def test_a_macro_frame_at_one_to_one_is_computed_with_the_short_focal_length():
    frames = frames_frame(
        # 1:1 at 30 cm: f = D m / (1 + m)² = 300 / 4 = 75 mm (thin lens, hand-worked:
        # s_o = s_i = 150 mm, 1/150 + 1/150 = 1/75 — Gaussian lens formula, Hecht, "Optics" ch. 5).
        {"focal_mm": 100.0, "focus_mm": 300.0, "lens_close_focus_mm": 300.0, "lens_max_magnification": 1.0},
        # The same lens without a recorded maximum magnification: 30 cm is nearer than 4 f.
        {"focal_mm": 100.0, "focus_mm": 300.0, "lens_close_focus_mm": 300.0, "lens_max_magnification": math.nan},
        # Far away the focal length is the nominal one to within a fraction of a percent.
        {"focal_mm": 100.0, "focus_mm": 10_000.0, "lens_close_focus_mm": 300.0, "lens_max_magnification": 1.0},
    )
    zones = add_zones(frames)
    assert zones["effective_focal_mm"].iloc[0] == pytest.approx(75.0, rel=1e-9)
    assert zones["magnification"].iloc[0] == pytest.approx(1.0, rel=1e-6)
    # Working f-number N (1 + m) = 16 (D. Jacobson, "Photographic Lenses Tutorial", §04).
    assert zones["effective_f_number"].iloc[0] == pytest.approx(16.0, rel=1e-6)
    assert np.isnan(zones["near_mm"].iloc[1])  # today's model: out of reach, no zone
    assert zones["effective_focal_mm"].iloc[2] == pytest.approx(100.0, rel=0.01)
    checked = check_frames(zones)
    assert "distance-unknown" not in checked["flags"].iloc[0]


def test_frames_without_the_focusing_columns_keep_the_nominal_focal_length():
    zones = add_zones(frames_frame({"focal_mm": 50.0, "focus_mm": 3000.0}))
    assert zones["effective_focal_mm"].iloc[0] == 50.0

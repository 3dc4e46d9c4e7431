"""Sensor-format geometry: diagonal, crop factor, pixel pitch."""

from __future__ import annotations

import math

import pytest

from sharpzone.analysis.zones import add_zones
from sharpzone.optics.coc import PixelPitch
from sharpzone.optics.formats import SensorFormat, pixel_pitch_mm
from tests.analysis.frames_factory import frames_frame

FULL_FRAME = SensorFormat("36x24", 36, 24)


def test_diagonal_and_crop_factor():
    assert FULL_FRAME.diagonal_mm == pytest.approx(math.hypot(36, 24))  # 43.27 mm
    assert SensorFormat("apsc", 23.6, 15.7).crop_factor == pytest.approx(1.53, abs=0.01)  # from memory


def test_pixel_pitch_either_orientation():
    # 36 mm across 6000 pixels: 6 µm (computed).
    assert pixel_pitch_mm(FULL_FRAME, 6000, 4000) == pytest.approx(0.006)
    assert pixel_pitch_mm(FULL_FRAME, 4000, 6000) == pytest.approx(0.006)
    assert pixel_pitch_mm(FULL_FRAME, None, None) is None


def test_pixel_policy_in_the_zones_uses_the_same_pitch():
    zones = add_zones(frames_frame({"pixel_width": 4000, "pixel_height": 6000}), PixelPitch(2))
    assert zones.iloc[0]["coc_mm"] == pytest.approx(0.012)
    unknown = add_zones(frames_frame({"pixel_width": None, "pixel_height": None}), PixelPitch(2))
    assert math.isnan(unknown.iloc[0]["coc_mm"])

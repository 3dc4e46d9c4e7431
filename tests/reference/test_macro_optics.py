"""The close-focusing model (optics.macro) against sources outside the project.

1. Thin-lens relations worked by hand from the Gaussian lens formula 1/s_o + 1/s_i = 1/f and
   the lateral magnification m = s_i / s_o (E. Hecht, "Optics", chapter 5, thin lenses;
   the minimum object-to-image distance 4f at 1:1 is the textbook result, from memory).
2. A lens that focuses by moving one of its two groups, traced paraxially with the
   ray-transfer matrices of sympy.physics.optics (a general-purpose library; the matrices are
   the standard ones of A. Gerrard and J. M. Burch, "Introduction to Matrix Methods in
   Optics"). Its effective focal length and magnification at each focus position are compared
   with what our model predicts from the three numbers a lens specification gives: the focal
   length at infinity, the close-focus distance and the maximum magnification.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from sharpzone.errors import InvalidValue
from sharpzone.optics import sharp_zone
from sharpzone.optics.macro import (
    check_macro_spec,
    close_focus_focal_mm,
    effective_focal_mm,
    magnification_at_focus,
    sharp_zone_focusing,
)
from sharpzone.optics.magnification import parse_magnification

optics = pytest.importorskip("sympy.physics.optics")


# ---- 1. thin-lens relations, by hand ------------------------------------------------

def test_focal_length_from_distance_and_magnification_hand_worked():
    # f = 50 mm at m = 0.5: s_o = f (1 + 1/m) = 150 mm, s_i = f (1 + m) = 75 mm;
    # check 1/150 + 1/75 = 3/150 = 1/50 and m = 75/150 = 0.5 (Gaussian lens formula, Hecht ch. 5).
    # Sensor to subject D = 150 + 75 = 225 mm, so f = D m / (1 + m)² = 225 × 0.5 / 2.25 = 50 mm.
    assert close_focus_focal_mm(225.0, 0.5) == pytest.approx(50.0, rel=1e-12)
    # At 1:1 object and image both sit 2f away: D = 4f (Hecht, from memory): 300 mm → 75 mm.
    assert close_focus_focal_mm(300.0, 1.0) == pytest.approx(75.0, rel=1e-12)
    # 2:1: s_o = 1.5 f, s_i = 3 f, D = 4.5 f; with f = 40 mm, D = 180 mm.
    assert close_focus_focal_mm(180.0, 2.0) == pytest.approx(40.0, rel=1e-12)


def test_a_spec_that_is_a_thin_lens_changes_nothing():
    # 50 mm reaching 0.5× at 225 mm is exactly a 50 mm thin lens (hand-worked above): the
    # model must then give the nominal thin-lens zone at every distance.
    spec = check_macro_spec(50, 225, 0.5)
    distances = np.array([225.0, 300.0, 500.0, 2000.0, 10_000.0])
    assert np.allclose(effective_focal_mm(spec, 50, distances), 50.0, rtol=1e-12)
    ours = sharp_zone_focusing(spec, 50, 8, 0.03, distances)
    plain = sharp_zone(50, 8, 0.03, distances, reference="sensor")
    assert np.allclose(ours.near_mm, plain.near_mm, rtol=1e-9)
    assert np.allclose(ours.far_mm, plain.far_mm, rtol=1e-9)
    # m = 0.5 at 225 mm by hand (above).
    assert float(magnification_at_focus(spec, 225.0)) == pytest.approx(0.5, rel=1e-9)


def test_beyond_one_to_one_the_near_root_is_taken():
    # 2:1 at 180 mm with a 40 mm focal length there (hand-worked above): s_o = 60 mm, s_i = 120 mm.
    spec = check_macro_spec(60, 180, 2.0)
    zone = sharp_zone_focusing(spec, 60, 8, 0.02, 180.0)
    assert zone.magnification == pytest.approx(2.0, rel=1e-9)
    assert zone.near_mm < 180 < zone.far_mm
    # Working f-number N (1 + m) = 8 × 3 = 24 (D. Jacobson, "Photographic Lenses Tutorial", §04).
    assert zone.effective_f_number == pytest.approx(24.0, rel=1e-9)


@pytest.mark.parametrize("text, value", [("1:1", 1.0), ("1:2", 0.5), ("2:1", 2.0), ("0.25x", 0.25),
                                         ("0.25×", 0.25), ("0.5", 0.5), (".35", 0.35)])
def test_magnification_forms(text, value):
    assert parse_magnification(text) == pytest.approx(value)


@pytest.mark.parametrize("text", ["0", "-1", "1:0", "many", "20x"])
def test_bad_magnifications_are_refused(text):
    with pytest.raises(InvalidValue):
        parse_magnification(text)


# ---- 2. a two-group lens traced with ray-transfer matrices --------------------------------

# Front group +500 mm fixed, rear group +100 mm moving, sensor fixed 170 mm behind the front
# group: the rear group moves forward to focus closer. (Our own design, scaled to about 98 mm.)
F1, F2, SENSOR = 500, 100, 170


def _trace(x):
    """(sensor-to-subject distance, effective focal length, magnification) with the rear group
    ``x`` mm behind the front group, from the system's ray-transfer matrix."""
    import sympy

    lens = optics.ThinLens(F2) * optics.FreeSpace(x) * optics.ThinLens(F1)
    to_sensor = optics.FreeSpace(SENSOR - x) * lens
    a, b = float(to_sensor[0, 0]), float(to_sensor[0, 1])
    u = -b / a  # object distance in front of the front group that images on the sensor (B = 0)
    full = to_sensor * optics.FreeSpace(sympy.Float(u))
    return u + SENSOR, -1 / float(lens[1, 0]), -float(full[0, 0])


def _position_for(predicate_value, target, lo, hi):
    """The rear-group position where ``predicate_value`` (monotone on [lo, hi]) meets ``target``."""
    f_lo = predicate_value(lo) - target
    for _ in range(60):
        mid = (lo + hi) / 2
        if (predicate_value(mid) - target) * f_lo > 0:
            lo, f_lo = mid, predicate_value(mid) - target
        else:
            hi = mid
    return (lo + hi) / 2


@pytest.fixture(scope="module")
def traced():
    # Infinity focus: the matrix's A element vanishes (object at infinity images on the sensor);
    # close focus: the position where the lens reaches 1:1.
    def a_element(x):
        lens = optics.ThinLens(F2) * optics.FreeSpace(x) * optics.ThinLens(F1)
        return float((optics.FreeSpace(SENSOR - x) * lens)[0, 0])

    x_infinity = _position_for(a_element, 0.0, 50.0, 150.0)
    focal_infinity = -1 / float((optics.ThinLens(F2) * optics.FreeSpace(x_infinity) * optics.ThinLens(F1))[1, 0])
    x_close = _position_for(lambda x: _trace(x)[2], 1.0, 1.0, x_infinity - 1)
    close_distance, close_focal, close_m = _trace(x_close)
    return focal_infinity, close_distance, close_focal, close_m, x_infinity, x_close


def test_traced_lens_end_points(traced):
    focal_infinity, close_distance, close_focal, close_m, *_ = traced
    assert close_m == pytest.approx(1.0, abs=1e-9)
    assert 95 < focal_infinity < 100 and 80 < close_focal < 88 and 320 < close_distance < 350


def test_model_follows_the_traced_lens_between_the_ends(traced):
    focal_infinity, close_distance, _close_focal, close_m, x_infinity, x_close = traced
    spec = check_macro_spec(focal_infinity, close_distance, close_m)
    worst_focal = worst_m = worst_nominal_m = 0.0
    for x in np.linspace(x_close, x_infinity - 5, 12):
        distance, focal, m = _trace(float(x))
        ours_focal = float(effective_focal_mm(spec, focal_infinity, distance))
        ours_m = float(magnification_at_focus(spec, distance))
        worst_focal = max(worst_focal, abs(ours_focal / focal - 1))
        worst_m = max(worst_m, abs(ours_m / m - 1))
        if distance >= 4 * focal_infinity:
            nominal = sharp_zone(focal_infinity, 8, 0.03, distance, reference="sensor").magnification
            worst_nominal_m = max(worst_nominal_m, abs(nominal / m - 1))
    # Measured: focal length within 1 %, magnification within 6 %; the nominal thin lens,
    # where it can focus at all, is out by about half near its closest distance.
    assert worst_focal < 0.012
    assert worst_m < 0.06
    assert worst_nominal_m > 0.3


def test_zone_of_the_traced_lens_at_close_focus(traced):
    # At 1:1 the total depth is close to the macro approximation 2 N c (1 + m) / m²
    # (common practice; D. Jacobson, "Photographic Lenses Tutorial", §04): 2 × 8 × 0.03 × 2 = 0.96 mm.
    focal_infinity, close_distance, _f, close_m, *_ = traced
    spec = check_macro_spec(focal_infinity, close_distance, close_m)
    zone = sharp_zone_focusing(spec, focal_infinity, 8, 0.03, close_distance)
    assert zone.total_mm == pytest.approx(0.96, rel=0.01)
    assert zone.effective_f_number == pytest.approx(16.0, rel=1e-6)
    assert math.isfinite(zone.far_mm)

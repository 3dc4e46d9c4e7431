"""The optics core against published worked examples, standards and handbook values.

Each check names its source. "computed" = worked out here from the source's own formula
written independently of the code under test; "common practice" = a rule of thumb;
"from memory" = recalled without a source at hand.
"""

from __future__ import annotations

import math

import pytest

from sharpzone.optics import (
    DiagonalFraction,
    PrintIntent,
    SensorFormat,
    airy_disk_diameter_mm,
    blur_diameter_mm,
    closeup_total_depth_mm,
    diffraction_limited_f_number,
    effective_f_number,
    hyperfocal_mm,
    lens_to_sensor_distance,
    marked_f_numbers,
    parse_coc_policy,
    sensor_to_lens_distance,
    sharp_zone,
)

FULL_FRAME = SensorFormat("36x24", 36.0, 24.0)


# --- Open Photographic Society, "Hyperfocal distance" (optics section): exact forms -------
# H = f²/(N c) + f; near = s(H − f)/(H + s − 2f); far = s(H − f)/(H − s), s from the lens.
# The expected numbers were worked out once from those forms with a pocket calculation
# (rounded to 0.01 mm) and are written here as numbers, so the check does not run the
# formula it checks.
@pytest.mark.parametrize(
    "focal, n, coc, s, hyperfocal, near, far",
    [
        (50, 8, 0.03, 3000, 10_466.67, 2_337.91, 4_185.27),
        (24, 11, 0.03, 1500, 1_769.45, 812.73, 9_716.60),
        (200, 2.8, 0.03, 10_000, 476_390.48, 9_798.35, 10_210.12),
        (35, 5.6, 0.02, 800, 10_972.50, 747.70, 860.16),
    ],
)
def test_exact_thin_lens_limits_open_photographic_society(focal, n, coc, s, hyperfocal, near, far):
    zone = sharp_zone(focal, n, coc, s, reference="lens")
    assert zone.hyperfocal_mm == pytest.approx(hyperfocal, abs=0.006)
    assert zone.near_mm == pytest.approx(near, abs=0.006)
    assert zone.far_mm == pytest.approx(far, abs=0.006)


def test_fifty_at_f8_three_metres_worked_numbers():
    # 50 mm, f/8, c = 0.03 mm, s = 3 m from the lens, by hand from the same exact forms:
    # H = 2500/0.24 + 50 = 10 466.7 mm; near = 3000·10 416.7/13 366.7 = 2 337.9 mm;
    # far = 3000·10 416.7/7 466.7 = 4 185.3 mm.
    zone = sharp_zone(50, 8, 0.03, 3000, reference="lens")
    assert zone.hyperfocal_mm == pytest.approx(10_466.7, abs=0.1)
    assert zone.near_mm == pytest.approx(2_337.9, abs=0.1)
    assert zone.far_mm == pytest.approx(4_185.3, abs=0.1)


# --- Published worked examples in feet and inches (1 in = 25.4 mm, 1 ft = 304.8 mm exactly,
# 1959 international yard and pound agreement; written as numbers here, not taken from the
# code under test). Their figures use H = f²/(N c) without the "+ f" term and are rounded
# as stated, which sets each tolerance. ------------------------------------------------------
FOOT_MM = 304.8
INCH_MM = 25.4


@pytest.mark.parametrize("reference", ["lens", "sensor"])
def test_us_navy_basic_photography_155mm_at_f2_8_focused_at_ten_feet(reference):
    # US Navy, "Photography (Basic)", NAVEDTRA 14209, chapter 1 (hyperfocal distance and
    # depth of field examples): a 155 mm (6.1 in) lens at f/2.8 has a hyperfocal distance
    # of 554 ft; focused at 10 ft it is sharp from 9.8 ft to 10.2 ft (0.1 ft rounding; the
    # distances are from "the camera", so both references must round the same). Its 554 ft
    # implies c = 0.002 in, the value the US Army subcourse below states for 35 mm.
    coc = 0.002 * INCH_MM
    zone = sharp_zone(155, 2.8, coc, 10 * FOOT_MM, reference=reference)
    assert (hyperfocal_mm(155, 2.8, coc) - 155) / FOOT_MM == pytest.approx(554, abs=0.5)
    assert round(zone.near_mm / FOOT_MM, 1) == 9.8
    assert round(zone.far_mm / FOOT_MM, 1) == 10.2


def test_us_navy_basic_photography_focus_for_a_range():
    # Same manual: to hold 9.8 ft to 10.2 ft sharp, focus at P = 2Dd/(D + d) = 10 ft.
    from sharpzone.optics import best_focus_for_range

    plan = best_focus_for_range(155, 0.002 * INCH_MM, 9.8 * FOOT_MM, 10.2 * FOOT_MM, reference="lens")
    assert plan.focus_mm / FOOT_MM == pytest.approx(10.0, abs=0.05)
    # The rounded range is a little wider than f/2.8 holds exactly, so a little more is needed.
    assert 2.8 <= plan.f_number <= 4


def test_us_army_subcourse_hyperfocal_50mm_at_f8():
    # US Army Signal School subcourse SS0507, lesson "Calculate hyperfocal distance"
    # (learning event 10): a 35 mm camera (c = 0.002 in) with a 50 mm lens taken as 2 in, at
    # f/8: the hyperfocal distance is 20.8 ft, and focused there the depth of field runs
    # from 10.4 ft to infinity. The exact near limit differs from the published one by the
    # omitted f (2 in), hence 0.1 ft.
    focal, coc = 2 * INCH_MM, 0.002 * INCH_MM
    assert (hyperfocal_mm(focal, 8, coc) - focal) / FOOT_MM == pytest.approx(20.8, abs=0.05)
    zone = sharp_zone(focal, 8, coc, 20.8 * FOOT_MM, reference="lens")
    assert zone.near_mm / FOOT_MM == pytest.approx(10.4, abs=0.1)
    assert zone.far_mm / FOOT_MM > 1000  # "to infinity" for any print


def test_barnet_book_of_photography_six_inch_lens_at_f8():
    # "The Barnet Book of Photography", chapter "Depth" (early 20th-century handbook): with
    # a confusion limit of 1/100 in, the hyperfocal distance is 100 f²/N; a six-inch lens
    # at f/8 gives 450 in, 37½ ft, "the distance of the nearest object in approximate focus
    # when we focus sharply on an infinite distance".
    zone = sharp_zone(6 * INCH_MM, 8, 0.01 * INCH_MM, math.inf, reference="lens")
    assert zone.near_mm / INCH_MM == pytest.approx(450, abs=0.01)
    assert zone.near_mm / FOOT_MM == pytest.approx(37.5, abs=0.01)
    assert math.isinf(zone.far_mm)


# --- D. Jacobson, "Photographic Lenses FAQ", Q10–Q11: a subject at 1/8 of the hyperfocal
# distance is sharp from 8/9 to 8/7 of its distance. With h = f²/(Nc) and the subject
# distance counted from the front principal point as s − f = h/8, the ratios are exact. ----
@pytest.mark.parametrize("focal, n, coc", [(50, 8, 0.03), (90, 4, 0.025), (21, 16, 0.019)])
def test_one_eighth_of_hyperfocal_jacobson_faq(focal, n, coc):
    h = focal**2 / (n * coc)
    s = focal + h / 8
    zone = sharp_zone(focal, n, coc, s, reference="lens")
    assert zone.near_mm / s == pytest.approx(8 / 9, rel=1e-12)
    assert zone.far_mm / s == pytest.approx(8 / 7, rel=1e-12)


# --- D. Jacobson, "Photographic Lenses Tutorial", section 04: blur-circle diameter
# C = f² (So/Soa − 1) / (N (So − f)) -----------------------------------------------------------
@pytest.mark.parametrize("focal, n, so, soa", [(50, 8, 3000, 5000), (100, 2.8, 1000, 900), (28, 4, 2000, 1e7)])
def test_blur_circle_jacobson_tutorial(focal, n, so, soa):
    expected = focal**2 * abs(so / soa - 1) / (n * (so - focal))  # computed from the tutorial's formula
    assert blur_diameter_mm(focal, n, so, soa) == pytest.approx(expected, rel=1e-12)


def test_blur_at_the_limits_equals_the_coc():
    # Consequence of the same source: the limits are where the blur reaches c.
    zone = sharp_zone(85, 2.8, 0.03, 2500, reference="lens")
    assert blur_diameter_mm(85, 2.8, 2500, zone.near_mm) == pytest.approx(0.03, rel=1e-9)
    assert blur_diameter_mm(85, 2.8, 2500, zone.far_mm) == pytest.approx(0.03, rel=1e-9)


# --- Close-up: M. McNamee, "Marvellous Macro" (2007): at 1:1 and f/2.8 the depth is "a mere
# 0.3 mm" on 36×24; 2Nc(1 + m/P)/m² = 0.336 mm with c = 0.03 (computed). -------------------
def test_macro_depth_mcnamee():
    assert closeup_total_depth_mm(2.8, 0.03, 1.0) == pytest.approx(0.336, abs=1e-9)
    # The exact zone of a 100 mm lens focused at 1:1 (s = 2f from the lens) agrees to 1 %.
    zone = sharp_zone(100, 2.8, 0.03, 200, reference="lens")
    assert zone.magnification == pytest.approx(1.0)
    assert zone.total_mm == pytest.approx(0.336, rel=0.01)
    assert round(zone.total_mm, 1) == 0.3  # "a mere 0.3 mm"


# --- Jacobson tutorial section 04: effective f-number Ne = N (1 + M/p) -------------------
def test_effective_f_number_jacobson():
    assert effective_f_number(2.8, 1.0) == pytest.approx(5.6)  # 1:1 costs two stops
    assert effective_f_number(4, 0.5, 0.5) == pytest.approx(8.0)  # p = 0.5 doubles it at 0.5×


# --- P. A. van Walree, "Derivation of the DOF equations": P matters above about 0.1× ------
def test_pupil_magnification_matters_only_close_up():
    far_away = [sharp_zone(50, 8, 0.03, 5000, reference="lens", pupil_magnification=p).total_mm for p in (0.5, 1, 2)]
    assert max(far_away) / min(far_away) == pytest.approx(1.0, abs=0.02)  # m = 0.01: under 2 %
    close = [sharp_zone(100, 8, 0.03, 200, reference="lens", pupil_magnification=p).total_mm for p in (0.5, 2)]
    assert close[0] / close[1] > 1.4  # (1 + 1/0.5)/(1 + 1/2) = 2 by the close-up form


# --- Encyclopedia article "Depth of field", derivation section: the approximate forms fail
# as the subject distance approaches the focal length. -----------------------------------
def test_approximate_forms_fail_close_to_the_focal_length():
    focal, n, coc, s = 100, 8, 0.03, 130  # s = 1.3 f
    h = focal**2 / (n * coc)
    approx_near = h * s / (h + s)  # the common approximation (from memory)
    exact = sharp_zone(focal, n, coc, s, reference="lens")
    assert blur_diameter_mm(focal, n, s, exact.near_mm) == pytest.approx(coc, rel=1e-9)
    assert abs(blur_diameter_mm(focal, n, s, approx_near) - coc) / coc > 0.1


# --- Circle of confusion ----------------------------------------------------------------
def test_modern_diagonal_criterion_lens_maker_newsletter():
    # "43 mm / 1500 ≈ 0.030 mm for 36×24" (lens maker's newsletter, 2007; R. F. Lyon, 2006).
    assert DiagonalFraction(1500).coc_mm(FULL_FRAME) == pytest.approx(43.27 / 1500, rel=1e-3)
    assert DiagonalFraction(1500).coc_mm(FULL_FRAME) == pytest.approx(0.030, abs=0.0015)
    # The traditional 1/1000 criterion (same newsletter): 0.043 mm.
    assert DiagonalFraction(1000).coc_mm(FULL_FRAME) == pytest.approx(0.0433, abs=0.0005)


def test_print_intent_common_practice():
    # 0.2 mm at 25 cm (encyclopedia "Circle of confusion", citing Ray); an 8×10 in print from
    # 36×24 mm is about 7.5× and gives c ≈ 0.026 mm (common practice). Inputs in inches.
    policy = parse_coc_policy("print:10x8in@25cm")
    assert isinstance(policy, PrintIntent)
    assert policy.coc_mm(FULL_FRAME) == pytest.approx(0.026, abs=0.001)
    # Viewing from twice as far doubles the allowed blur.
    assert parse_coc_policy("print:10x8in@50cm").coc_mm(FULL_FRAME) == pytest.approx(2 * policy.coc_mm(FULL_FRAME))


# --- Diffraction ------------------------------------------------------------------------
def test_airy_disk_hutchinson():
    # I. Hutchinson: about 1.9 µm at f/1.4 and 29.3 µm at f/22, mid-spectrum; at 550 nm
    # 2.44 λ N gives 1.88 and 29.5 µm (computed); first zero at radius 1.22 λ N (Jacobson,
    # tutorial section 05).
    assert airy_disk_diameter_mm(1.4) * 1000 == pytest.approx(1.88, abs=0.01)
    assert airy_disk_diameter_mm(22) * 1000 == pytest.approx(29.5, abs=0.05)
    assert airy_disk_diameter_mm(22) * 1000 == pytest.approx(29.3, rel=0.01)


def test_diffraction_limited_f_number_computed():
    # N = c / (2.44 × 0.00055 mm) = 745.2 c: f/22.4 for c = 0.030 mm (computed).
    assert diffraction_limited_f_number(0.030) == pytest.approx(22.4, abs=0.05)
    assert diffraction_limited_f_number(1.0) == pytest.approx(745.2, abs=0.1)


# --- Gaussian lens formula 1/f = 1/s + 1/v and the sensor-plane reference ---------------
def test_sensor_reference_obeys_the_lens_formula():
    for focal, distance in [(50, 3000), (100, 400), (24, 250)]:
        s = sensor_to_lens_distance(distance, focal)
        v = distance - s
        assert 1 / s + 1 / v == pytest.approx(1 / focal, rel=1e-12)
        assert lens_to_sensor_distance(s, focal) == pytest.approx(distance, rel=1e-12)


def test_unit_magnification_at_four_focal_lengths():
    # At 1:1 the object–image distance is its minimum, 4f, with s = v = 2f (from memory;
    # any optics text on the thin lens).
    assert sensor_to_lens_distance(400, 100) == pytest.approx(200)


# --- f-number series ---------------------------------------------------------------------
def test_full_stops_aa26():
    # "Optical Formulas and Their Applications" (AA-26): 1, 1.4, 2 … 45.
    assert marked_f_numbers("full", 1, 45) == [1, 1.4, 2, 2.8, 4, 5.6, 8, 11, 16, 22, 32, 45]


def test_third_stops_encyclopedia_f_number():
    # Encyclopedia article "F-number", one-third-stop scale.
    assert marked_f_numbers("third", 1, 22) == [
        1, 1.1, 1.2, 1.4, 1.6, 1.8, 2, 2.2, 2.5, 2.8, 3.2, 3.5, 4, 4.5, 5, 5.6, 6.3, 7.1, 8, 9, 10,
        11, 13, 14, 16, 18, 20, 22,
    ]


def test_hyperfocal_of_fifty_at_f8_worked_number():
    # 50²/(8 × 0.03) + 50 = 10 416.67 + 50 mm, worked out by hand (Open Photographic Society form).
    assert hyperfocal_mm(50, 8, 0.03) == pytest.approx(10_466.67, abs=0.006)

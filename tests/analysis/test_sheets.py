"""The sheet service: its numbers against the optics core, the exact thin-lens forms and
the ``dof`` command; its choice of focal lengths, f-numbers and focus distances."""

from __future__ import annotations

import json
import math

import pytest
from typer.testing import CliRunner

from sharpzone.analysis.setting import choose_coc
from sharpzone.analysis.sheets import (
    MAX_LADDER_ROWS,
    LensSpec,
    build_sheet,
    focus_ladder_mm,
    sheet_f_numbers,
    sheet_focal_lengths,
)
from sharpzone.cli.app import app
from sharpzone.errors import InvalidValue
from sharpzone.units import MM_PER_FOOT

ZOOM = LensSpec("Altamira 24-70/2.8", 24, 70, 2.8, 2.8, 22, 380)
SLOW_ZOOM = LensSpec("Altamira 24-105/3.5-5.6", 24, 105, 3.5, 5.6, 22, 450)
PRIME = LensSpec("Korvath 50/1.8", 50, 50, 1.8, 1.8, 22, 450, pupil_magnification=0.8)


def _exact_thin_lens_from_sensor(f, n, c, d):
    """Near and far limits (mm from the sensor) by the exact thin-lens forms of the Open
    Photographic Society ("Hyperfocal distance"): H = f²/(N c) + f, near = s (H − f)/(H + s − 2f),
    far = s (H − f)/(H − s), with s = (D + √(D² − 4 f D))/2 from the lens and v = s f/(s − f)
    the lens-to-sensor distance (Gaussian lens formula) added back. Typed out here, apart
    from the code under test (which works in magnification space)."""
    s = (d + math.sqrt(d * d - 4 * f * d)) / 2
    h = f * f / (n * c) + f
    v = s * f / (s - f)
    near = s * (h - f) / (h + s - 2 * f) + v
    far = s * (h - f) / (h - s) + v if s < h else math.inf
    return near, far


def test_cells_match_the_published_exact_forms():
    sheet = build_sheet(ZOOM, choose_coc(sensor="36x24"))
    coc = sheet.coc.coc_mm
    assert coc == pytest.approx(43.2666 / 1500, rel=1e-4)  # 36 × 24 mm diagonal / 1500
    for table in sheet.tables:
        for row, focus in enumerate(table.focus_mm):
            if not math.isfinite(focus):
                continue
            for column, f_number in enumerate(table.f_numbers):
                near, far = _exact_thin_lens_from_sensor(table.focal_mm, f_number, coc, float(focus))
                assert table.near_mm[row, column] == pytest.approx(near, rel=1e-9)
                if math.isfinite(far):
                    assert table.far_mm[row, column] == pytest.approx(far, rel=1e-9)
                else:
                    assert math.isinf(table.far_mm[row, column])


def test_lens_reference_matches_the_exact_thin_lens_forms():
    # Exact thin-lens forms (Open Photographic Society, "Hyperfocal distance"; the forms in
    # DESIGN.md): H = f²/(N c) + f, near = s(H − f)/(H + s − 2f), far = s(H − f)/(H − s),
    # worked here by hand for f = 50 mm, c = 0.03 mm, s = 3 m from the lens.
    sheet = build_sheet(LensSpec("Korvath 50/2", 50, 50, 2, 2, 22, 450), choose_coc(coc_mm=0.03),
                        distances=[3000.0], reference="lens")
    (table,) = sheet.tables
    f, c, s = 50.0, 0.03, 3000.0
    for column, n in enumerate(table.f_numbers):
        h = f * f / (n * c) + f
        assert table.hyperfocal_mm[column] == pytest.approx(h, rel=1e-12)
        assert table.near_mm[0, column] == pytest.approx(s * (h - f) / (h + s - 2 * f), rel=1e-9)
        expected_far = s * (h - f) / (h - s) if s < h else math.inf
        assert table.far_mm[0, column] == pytest.approx(expected_far, rel=1e-9)
        # Focused at H the near limit is exactly H/2 (same source).
        assert table.hyperfocal_near_mm[column] == pytest.approx(h / 2, rel=1e-9)
    f8 = table.f_numbers.index(8.0)
    # The worked example: H = 10.4667 m, near 2.3379 m, far 4.1853 m at f/8.
    assert table.hyperfocal_mm[f8] / 1000 == pytest.approx(10.46667, abs=1e-5)
    assert table.near_mm[0, f8] / 1000 == pytest.approx(2.33790, abs=1e-5)
    assert table.far_mm[0, f8] / 1000 == pytest.approx(4.18527, abs=1e-5)


@pytest.mark.parametrize("f_number, focus", [(1.8, "70cm"), (8.0, "3m"), (16.0, "inf"), (22.0, "10m")])
def test_sheet_equals_the_dof_command(f_number, focus):
    from sharpzone.units import parse_distance

    sheet = build_sheet(PRIME, choose_coc(sensor="aps-c"), distances=[parse_distance(focus)])
    (table,) = sheet.tables
    column = table.f_numbers.index(f_number)
    result = CliRunner().invoke(app, ["dof", "--focal", "50", "--aperture", str(f_number), "--distance", focus,
                                      "--sensor", "aps-c", "--pupil", "0.8", "--json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)

    def metres(value_mm):
        return "inf" if math.isinf(value_mm) else pytest.approx(value_mm / 1000, rel=1e-12)

    assert data["coc_mm"] == pytest.approx(sheet.coc.coc_mm, rel=1e-15)
    assert data["near_m"] == metres(float(table.near_mm[0, column]))
    assert data["far_m"] == metres(float(table.far_mm[0, column]))
    assert data["total_m"] == metres(float(table.total_mm[0, column]))
    assert data["hyperfocal_m"] == metres(float(table.hyperfocal_mm[column]))
    assert data["diffraction_limited_f_number"] == pytest.approx(sheet.diffraction_limited_f_number)


def test_focal_lengths_of_primes_and_zooms():
    assert sheet_focal_lengths(PRIME) == [50.0]
    assert sheet_focal_lengths(ZOOM) == [24.0, 35.0, 50.0, 70.0]
    long_zoom = sheet_focal_lengths(SLOW_ZOOM)
    assert long_zoom[0] == 24.0 and long_zoom[-1] == 105.0 and 3 <= len(long_zoom) <= 5
    assert all(24 < f < 105 for f in long_zoom[1:-1])
    assert sheet_focal_lengths(ZOOM, [50, 28, 50]) == [28.0, 50.0]
    with pytest.raises(InvalidValue, match="focal length 200 mm is outside .*24–70 mm"):
        sheet_focal_lengths(ZOOM, [200])


def test_f_number_columns_start_wide_open_and_follow_the_scale():
    # Full stops 1.4, 2, 2.8, 4, 5.6, 8, 11, 16, 22 (AA-26 series in optics/stops.py).
    assert sheet_f_numbers(PRIME, 50) == [1.8, 2.8, 4, 5.6, 8, 11, 16, 22]
    assert sheet_f_numbers(ZOOM, 35, "half")[:4] == [2.8, 3.3, 4, 4.8]
    assert sheet_f_numbers(PRIME, 50, "third")[:4] == [1.8, 2, 2.2, 2.5]
    # Between the ends of a variable-aperture zoom: f/3.5 + (50 − 24)/(105 − 24) × 2.1 =
    # f/4.17, rounded up to the third stop f/4.5 so the sheet never claims more than the lens.
    assert sheet_f_numbers(SLOW_ZOOM, 50)[0] == 4.5
    assert sheet_f_numbers(SLOW_ZOOM, 24)[0] == 3.5
    assert sheet_f_numbers(SLOW_ZOOM, 105)[0] == 5.6
    assert sheet_f_numbers(SLOW_ZOOM, 105)[-1] == 22
    with pytest.raises(InvalidValue, match="stop scale 'quarter'"):
        sheet_f_numbers(PRIME, 50, "quarter")


def test_columns_past_the_diffraction_limit_are_marked():
    # N = c / (2.44 λ), λ = 550 nm (D. Jacobson, "Photographic Lenses Tutorial", section 05).
    sheet = build_sheet(PRIME, choose_coc(coc_mm=0.02))
    limit = 0.02 / (2.44 * 550e-6)
    assert sheet.diffraction_limited_f_number == pytest.approx(limit)
    (table,) = sheet.tables
    assert table.past_diffraction_limit == tuple(n > limit for n in table.f_numbers)
    assert table.past_diffraction_limit[-1] and not table.past_diffraction_limit[0]


def test_default_ladder_runs_from_close_focus_to_infinity():
    sheet = build_sheet(PRIME, choose_coc())
    (table,) = sheet.tables
    rows = list(table.focus_mm)
    assert rows[0] == 450.0 and math.isinf(rows[-1])
    assert rows == sorted(rows) and len(rows) <= MAX_LADDER_ROWS + 2
    # The usual portrait distances are rows (common practice: 2 to 5 m).
    assert {2000.0, 2500.0, 3000.0, 4000.0, 5000.0} <= set(rows)
    # The ladder reaches the widest aperture's hyperfocal distance, no farther.
    assert rows[-2] <= table.hyperfocal_mm.max() < rows[-2] * 2


def test_imperial_ladder_is_round_feet():
    ladder = focus_ladder_mm(457.2, 30_000, imperial=True)
    assert ladder[0] == 457.2 and math.isinf(ladder[-1])
    feet = [d / MM_PER_FOOT for d in ladder[1:-1]]
    assert feet[:3] == [2.0, 3.0, 5.0]
    assert all(abs(f * 2 - round(f * 2)) < 1e-9 for f in feet)


def test_long_ranges_thin_the_ladder():
    ladder = focus_ladder_mm(2700, 2_000_000)
    assert len(ladder) <= MAX_LADDER_ROWS + 1
    # 1-2-5 steps, with the portrait distances from 2700 × 1.15 mm up kept among them.
    assert ladder[1:5] == [4000.0, 5000.0, 10_000.0, 20_000.0]


def test_imperial_ladder_has_the_portrait_distances_in_feet():
    feet = [d / MM_PER_FOOT for d in focus_ladder_mm(457.2, 30_000, imperial=True)[1:-1]]
    assert {7.0, 8.0, 10.0, 12.0, 15.0} <= {round(f, 9) for f in feet}


def test_reference_lens_starts_at_the_close_focus_converted_from_the_sensor():
    sheet = build_sheet(PRIME, choose_coc(), reference="lens")
    # D = s + v with 1/s + 1/v = 1/f (DESIGN.md): s = (D + √(D² − 4 f D)) / 2.
    d, f = 450.0, 50.0
    assert sheet.tables[0].focus_mm[0] == pytest.approx((d + math.sqrt(d * d - 4 * f * d)) / 2)


def test_unknown_close_focus_starts_at_ten_focal_lengths_and_says_so():
    lens = LensSpec("Korvath 85/1.4", 85, 85, 1.4, 1.4, 16)
    sheet = build_sheet(lens, choose_coc())
    assert sheet.close_focus_assumed
    assert sheet.tables[0].focus_mm[0] == 850.0


def test_requested_distances_nearer_than_close_focus_are_refused():
    with pytest.raises(InvalidValue, match="nearer than the close-focus distance"):
        build_sheet(PRIME, choose_coc(), distances=[300.0, 2000.0])
    sheet = build_sheet(PRIME, choose_coc(), distances=[math.inf, 2000.0, 1000.0])
    assert list(sheet.tables[0].focus_mm) == [1000.0, 2000.0, math.inf]


def test_chart_curves_are_the_same_limits_sampled_densely():
    lens = LensSpec("Korvath 50/1.8", 50, 50, 1.8, 1.8, 22, 450)
    sheet = build_sheet(lens, choose_coc())
    (table,) = sheet.tables
    for index in (0, len(table.curve_focus_mm) // 2, len(table.curve_focus_mm) - 1):
        for column in (0, len(table.f_numbers) - 1):
            near, far = _exact_thin_lens_from_sensor(50, table.f_numbers[column], sheet.coc.coc_mm,
                                                     float(table.curve_focus_mm[index]))
            assert table.curve_near_mm[index, column] == pytest.approx(near, rel=1e-9)
            assert math.isinf(far) == math.isinf(table.curve_far_mm[index, column])


@pytest.mark.parametrize(
    "fields, words",
    [
        ({"min_aperture": 1.4}, "minimum aperture f/1.4 is wider"),
        ({"focal_max_mm": 20}, "longest focal length 20 mm is shorter"),
        ({"max_aperture_wide": 0}, "maximum aperture 0"),
        ({"close_focus_mm": -1.0}, "close-focus distance"),
    ],
)
def test_bad_lens_specs_are_refused(fields, words):
    values = {"name": "Korvath 24-70", "focal_min_mm": 24, "focal_max_mm": 70, "max_aperture_wide": 2.8,
              "max_aperture_tele": 2.8, "min_aperture": 22, **fields}
    with pytest.raises(InvalidValue, match=words):
        LensSpec(**values)


def test_macro_close_focus_below_four_focal_lengths_starts_where_the_model_can():
    # A thin lens images 1:1 with the subject 4 f from the sensor, its nearest focus
    # (D = s + v with s = v = 2f; DESIGN.md).
    macro = LensSpec("Korvath Macro 100/2.8", 100, 100, 2.8, 2.8, 32, 300, pupil_magnification=0.7)
    (table,) = build_sheet(macro, choose_coc()).tables
    assert table.close_focus_raised and table.focus_mm[0] == 400.0
    assert table.magnification[0] == pytest.approx(1.0)
    (ordinary,) = build_sheet(PRIME, choose_coc()).tables
    assert not ordinary.close_focus_raised

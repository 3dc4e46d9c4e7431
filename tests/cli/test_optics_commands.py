"""``sharpzone dof`` and ``sharpzone stack`` through typer's CliRunner."""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

from sharpzone.cli.app import app

runner = CliRunner()


def invoke(*args: str):
    return runner.invoke(app, list(args))


def test_dof_json_matches_the_exact_form():
    # Open Photographic Society exact forms, lens-referenced, c = 0.03 mm (computed):
    # H = 10.4667 m, near 2.3379 m, far 4.1853 m for 50 mm f/8 at 3 m.
    result = invoke("dof", "--focal", "50", "--aperture", "8", "--distance", "3m", "--coc", "0.03",
                    "--reference", "lens", "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert data["hyperfocal_m"] == pytest.approx(10.46667, abs=1e-5)
    assert data["near_m"] == pytest.approx(2.33790, abs=1e-5)
    assert data["far_m"] == pytest.approx(4.18527, abs=1e-5)
    assert data["total_m"] == pytest.approx(data["far_m"] - data["near_m"])
    assert data["coc_mm"] == 0.03


def test_dof_json_contract_with_a_sensor():
    result = invoke("dof", "--focal", "50", "--aperture", "8", "--distance", "3m", "--sensor", "36x24", "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    for key in ("hyperfocal_m", "near_m", "far_m", "total_m", "coc_mm"):
        assert isinstance(data[key], float)
    assert data["coc_mm"] == pytest.approx(43.2666 / 1500, rel=1e-4)
    assert data["sensor"] == "36x24" and data["reference"] == "sensor"


def test_infinity_is_the_string_inf():
    result = invoke("dof", "-f", "24", "-a", "11", "-d", "inf", "--json")
    data = json.loads(result.stdout)
    assert data["far_m"] == "inf" and data["total_m"] == "inf" and data["focus_m"] == "inf"


def test_human_output_carries_units_and_imperial_on_request():
    metric = invoke("dof", "-f", "50", "-a", "8", "-d", "3m")
    assert metric.exit_code == 0
    assert "Hyperfocal distance" in metric.stdout and " m" in metric.stdout
    imperial = invoke("dof", "-f", "50", "-a", "8", "-d", "10ft", "--imperial")
    assert "ft" in imperial.stdout


def test_closeup_and_diffraction_are_said():
    result = invoke("dof", "-f", "100", "-a", "22", "-d", "40cm")
    assert "Effective f-number" in result.stdout
    assert "diffraction limit" in result.stdout


@pytest.mark.parametrize(
    "args, words",
    [
        (("-f", "50", "-a", "0", "-d", "3m"), "f-number 0"),
        (("-f", "50", "-a", "8", "-d", "abc"), "'abc' is not a distance"),
        (("-f", "50", "-a", "8", "-d", "10cm"), "too close"),
        (("-f", "50", "-a", "8", "-d", "3m", "--reference", "middle"), "expected one of 'sensor', 'lens'"),
        (("-f", "50", "-a", "8", "-d", "3m", "--sensor", "nosuch"), "no sensor format 'nosuch'"),
        (("-f", "50", "-a", "8", "-d", "3m", "--coc-policy", "blurry"), "CoC policy 'blurry'"),
        (("-f", "fifty", "-a", "8", "-d", "3m"), "'fifty'"),
    ],
)
def test_bad_input_is_one_clear_line(args, words):
    result = invoke("dof", *args)
    assert result.exit_code in (1, 2)
    assert result.stdout == ""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and words in lines[0] and "Traceback" not in result.stderr


def test_bad_values_exit_with_two():
    assert invoke("dof", "-f", "50", "-a", "0", "-d", "3m").exit_code == 2
    assert invoke("dof", "-f", "50", "-a", "8").exit_code == 2  # missing option: usage


def test_stack_plan_json():
    result = invoke("stack", "-f", "100", "-a", "8", "--near", "50cm", "--far", "60cm", "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert data["frame_count"] == len(data["frames"]) > 1
    assert data["frames"][0]["near_m"] == pytest.approx(0.5)
    assert data["frames"][-1]["far_m"] >= 0.6


def test_stack_refuses_an_inverted_range():
    result = invoke("stack", "-f", "100", "-a", "8", "--near", "60cm", "--far", "50cm")
    assert result.exit_code == 2
    assert "not beyond the near end" in result.stderr


def test_dof_finds_a_format_added_to_the_catalogue(tmp_path):
    catalog = str(tmp_path / "c.sqlite")
    added = runner.invoke(app, ["--catalog", catalog, "format", "add", "pinhole-box", "--width", "100", "--height", "80"])
    assert added.exit_code == 0, added.output
    result = runner.invoke(app, ["--catalog", catalog, "dof", "-f", "150", "-a", "22", "-d", "5m",
                                 "--sensor", "pinhole-box", "--json"])
    assert result.exit_code == 0, result.output
    assert json.loads(result.stdout)["coc_mm"] == pytest.approx(128.06 / 1500, rel=1e-3)


def test_dof_does_not_create_a_catalogue_for_an_unknown_format(tmp_path):
    catalog = tmp_path / "none.sqlite"
    result = runner.invoke(app, ["--catalog", str(catalog), "dof", "-f", "50", "-a", "8", "-d", "3m", "--sensor", "nosuch"])
    assert result.exit_code == 1 and "no sensor format 'nosuch'" in result.stderr
    assert not catalog.exists()


# ---- product and macro work ----------------------------------------------------------------

PRODUCT = ("stack", "-f", "100", "-a", "8", "--near", "40cm", "--far", "45cm", "--coc", "0.03")


def test_the_close_product_stack_is_refused_without_a_maximum_magnification():
    result = invoke(*PRODUCT)
    assert result.exit_code == 2
    assert "--max-magnification" in result.output  # the hint names the way out


def test_the_close_product_stack_plans_with_a_macro_lens():
    result = invoke(*PRODUCT, "--max-magnification", "1:1", "--close-focus", "30cm", "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    frames = data["frames"]
    assert data["max_magnification"] == 1.0 and data["close_focus_m"] == 0.3
    assert frames[0]["near_m"] == pytest.approx(0.40, abs=1e-9) and frames[-1]["far_m"] >= 0.45
    # Each frame starts inside the one before (10 % overlap) and the steps are millimetres.
    for before, after in zip(frames, frames[1:]):
        assert after["near_m"] < before["far_m"]
        assert 1.0 < after["step_mm"] < 10.0
    # Macro approximation, total depth ≈ 2 N c (1 + m)/m² (common practice; D. Jacobson,
    # "Photographic Lenses Tutorial", §04): at m ≈ 0.48, 2·8·0.03·1.48/0.48² ≈ 3.1 mm.
    first_depth_mm = (frames[0]["far_m"] - frames[0]["near_m"]) * 1000
    m = frames[0]["magnification"]
    assert first_depth_mm == pytest.approx(2 * 8 * 0.03 * (1 + m) / m**2, rel=0.03)
    # Working f-number N (1 + m/P) (Jacobson §04), every frame.
    for frame in frames:
        assert frame["effective_f_number"] == pytest.approx(8 * (1 + frame["magnification"]), rel=1e-9)
    assert data["rail"]["step_mm"] == pytest.approx(data["rail"]["depth_mm"] * 0.9)


def test_stack_rows_carry_the_precision_the_step_needs():
    result = invoke(*PRODUCT, "--max-magnification", "1", "--close-focus", "30cm")
    assert result.exit_code == 0, result.output
    focus_cells = [line.split("│")[2].strip() for line in result.stdout.splitlines() if line.startswith("│")]
    assert len(focus_cells) == len(set(focus_cells)) > 3  # no "45.2 cm" four times
    assert "focusing rail" in result.stdout and "mm per" in result.stdout


def test_stack_warns_where_diffraction_softens_every_frame():
    # 1:1 at f/16 works at f/32: Airy disk 2.44 × 0.00055 × 32 = 0.043 mm > 0.03 mm.
    result = invoke("stack", "-f", "100", "-a", "16", "--near", "30cm", "--far", "31cm", "--coc", "0.03",
                    "--max-magnification", "1", "--close-focus", "30cm")
    assert result.exit_code == 0, result.output
    assert "diffraction softens every frame" in result.stdout and "‡" in result.stdout


def test_stack_from_a_catalogued_macro_lens(tmp_path):
    catalog = str(tmp_path / "c.db")
    added = invoke("--catalog", catalog, "lens", "add", "Vale Macro 100", "--focal", "100", "--aperture", "2.8",
                   "--close-focus", "30cm", "--max-magnification", "1:1")
    assert added.exit_code == 0, added.output
    result = invoke("--catalog", catalog, "stack", "--lens", "Vale Macro 100", "-a", "8", "--near", "40cm",
                    "--far", "45cm", "--json")
    assert result.exit_code == 0, result.output
    assert json.loads(result.stdout)["max_magnification"] == 1.0
    dof = invoke("--catalog", catalog, "dof", "--lens", "Vale Macro 100", "-a", "8", "-d", "30cm", "--json")
    assert dof.exit_code == 0, dof.output
    assert json.loads(dof.stdout)["magnification"] == pytest.approx(1.0, rel=1e-6)


def test_overlap_limit_in_the_help_is_the_enforced_one():
    from sharpzone.limits import OVERLAP_MAX as MAX_STACK_OVERLAP

    assert f"0 to {MAX_STACK_OVERLAP:g}" in " ".join(invoke("stack", "--help").stdout.split())
    refused = invoke("stack", "-f", "50", "-a", "8", "--near", "2m", "--far", "3m", "--overlap", "0.95")
    assert refused.exit_code == 2 and f"0 to {MAX_STACK_OVERLAP:g}" in refused.output
    assert invoke("stack", "-f", "50", "-a", "8", "--near", "2m", "--far", "3m", "--overlap", "0.9").exit_code == 0

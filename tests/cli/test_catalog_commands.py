"""The catalogue commands through typer's CliRunner: output, JSON, and refusals that write
nothing and say one line on stderr."""

from __future__ import annotations

import json

import pytest
from sqlalchemy import func, select
from typer.testing import CliRunner

from sharpzone.catalog.engine import create_catalog_engine, open_catalog
from sharpzone.catalog.models import Body, Lens, Shoot
from sharpzone.cli.app import app

runner = CliRunner()


@pytest.fixture
def cli(tmp_path):
    """``cli(*args)`` runs sharpzone on a temporary catalogue file."""
    path = tmp_path / "cli.sqlite"

    def invoke(*args: str):
        return runner.invoke(app, ["--catalog", str(path), *args], env={"COLUMNS": "200"})

    invoke.path = path
    with open_catalog(path):  # the catalogue exists before each check (read commands never create one)
        pass
    assert invoke("catalog", "info").exit_code == 0
    return invoke


def _rows(path, model) -> int:
    engine = create_catalog_engine(f"sqlite:///{path}")
    with engine.connect() as connection:
        count = connection.execute(select(func.count()).select_from(model)).scalar()
    engine.dispose()
    return count


def _refused(result, code: int, words: str) -> None:
    assert result.exit_code == code, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert words in lines[0] and "Traceback" not in result.stderr
    assert lines[0].startswith("sharpzone: error: ")


def test_format_list_shows_the_shipped_formats(cli):
    result = cli("format", "list", "--json")
    assert result.exit_code == 0, result.output
    formats = {row["name"]: row for row in json.loads(result.stdout)}
    assert formats["36x24"]["width_mm"] == 36 and formats["36x24"]["height_mm"] == 24
    assert formats["36x24"]["coc_mm"] == pytest.approx(43.2666 / 1500, rel=1e-4)
    table = cli("format", "list").stdout
    assert "Sensor formats" in table and "36 × 24 mm" in table


def test_lens_add_show_and_json_units(cli):
    result = cli("lens", "add", "Altamira 24-105", "--focal", "24-105", "--aperture", "f/3.5-5.6",
                 "--close-focus", "45cm", "--exif-name", "ALT 24-105mm")
    assert result.exit_code == 0, result.output
    assert "24–105 mm" in result.stdout and "45.0 cm" in result.stdout
    data = json.loads(cli("lens", "show", "altamira 24-105", "--json").stdout)
    assert data == {
        "name": "Altamira 24-105", "focal_min_mm": 24.0, "focal_max_mm": 105.0, "max_aperture_wide": 3.5,
        "max_aperture_tele": 5.6, "min_aperture": 22.0, "close_focus_m": 0.45, "max_magnification": None,
        "pupil_magnification": 1.0, "exif_names": ["ALT 24-105mm"], "confirmed": True,
    }
    assert "1 ft 5½ in" in cli("lens", "show", "Altamira 24-105", "--imperial").stdout


def test_lens_edit_alias_and_remove(cli):
    cli("lens", "add", "A50", "--focal", "50", "--aperture", "1.8")
    assert cli("lens", "edit", "A50", "--name", "Altamira 50", "--min-aperture", "16", "--pupil", "0.7").exit_code == 0
    assert cli("lens", "add-alias", "Altamira 50", "ALT 50mm").exit_code == 0
    data = json.loads(cli("lens", "list", "--json").stdout)
    assert [(d["name"], d["min_aperture"], d["pupil_magnification"], d["exif_names"]) for d in data] == [
        ("Altamira 50", 16.0, 0.7, ["ALT 50mm"])]
    assert cli("lens", "remove-alias", "ALT 50mm").exit_code == 0
    assert cli("lens", "remove", "Altamira 50").exit_code == 0
    assert _rows(cli.path, Lens) == 0


@pytest.mark.parametrize(
    ("args", "code", "words"),
    [
        (("lens", "add", "Bad", "--focal", "70-24", "--aperture", "2.8"), 2, "--focal: '70-24' runs backwards: expected the smaller number first (did you mean 24-70?)"),
        (("lens", "add", "Bad", "--focal", "50", "--aperture", "2.8", "--min-aperture", "2"), 2, "minimum aperture f/2 is wider"),
        (("lens", "add", "Bad", "--focal", "fifty", "--aperture", "2.8"), 2, "--focal: 'fifty' is not a length"),
        (("lens", "add", "Bad", "--focal", "50", "--aperture", "1.4", "--close-focus", "45"), 2, "(did you mean 45 cm?)"),
        (("lens", "add", "Bad", "--focal", "24-70", "--aperture", "5.6-1.4"), 2, "(did you mean 1.4-5.6?)"),
        (("lens", "add", "Bad", "--focal", "50"), 2, "lens add needs --focal"),
        (("lens", "add", "Bad", "--focal", "50", "--aperture", "2", "--close-focus", "-1m"), 2, "--close-focus"),
        (("lens", "add", "Bad", "--focal", "50", "--aperture", "2", "--min-aperture", "0"), 2, "minimum aperture 0.0 is not a valid f-number"),
        (("format", "add", "test-x", "--width", "0", "--height", "24"), 2, "width 0.0 mm must be a positive number"),
        (("format", "add", "test-x", "--width", "36", "--height", "24", "--coc-divisor", "0"), 2, "CoC divisor 0.0 must be positive"),
        (("format", "add", "36X24", "--width", "36", "--height", "24"), 1, "already answers to the name '36X24'"),
        (("body", "add", "K1", "--make", "Korvath", "--model", "K1", "--format", "half-plate"), 2, "no sensor format 'half-plate'"),
        (("body", "add", "K1", "--make", "Korvath", "--model", "K1", "--format", "36x24", "--pixels", "big"), 2, "--pixels: 'big'"),
        (("shoot", "add", "S", "--near", "9m", "--far", "4m"), 2, "far limit 4.00 m must be beyond the near limit 9.00 m"),
        (("shoot", "add", "S", "--near", "4m", "--far", "9m", "--front", "1m", "--back", "1m"), 2, "not both"),
        (("shoot", "add", "S", "--near", "four metres", "--far", "9m"), 2, "--near: 'four metres' is not a distance"),
        (("shoot", "add", "S", "--coc-policy", "crisp"), 2, "CoC policy 'crisp' is not valid"),
        (("lens", "show", "Nope"), 1, "no lens named 'Nope'"),
        (("catalog", "import", "missing.json"), 2, "bundle missing.json does not exist"),
    ],
)
def test_bad_input_is_one_line_and_writes_nothing(cli, args, code, words):
    _refused(cli(*args), code, words)
    for model in (Lens, Body, Shoot):
        assert _rows(cli.path, model) == 0
    assert "test-x" not in cli("format", "list").stdout


def test_body_commands_and_the_serial_rule(cli):
    assert cli("body", "add", "Studio K7", "--make", "Korvath", "--model", "K7", "--format", "aps-c",
               "--pixels", "6000x4000").exit_code == 0
    _refused(cli("body", "add", "Other", "--make", "Korvath", "--model", "K7", "--format", "36x24"), 1,
             "body 'Studio K7' already is Korvath K7 with no serial")
    assert cli("body", "add", "Mine", "--make", "Korvath", "--model", "K7", "--serial", "0042",
               "--format", "36x24", "--unconfirmed").exit_code == 0
    assert cli("body", "edit", "Mine", "--confirmed", "--format", "aps-c-1.6").exit_code == 0
    bodies = {b["name"]: b for b in json.loads(cli("body", "list", "--json").stdout)}
    assert bodies["Mine"]["format"] == "aps-c-22.3x14.9" and bodies["Mine"]["confirmed"] is True
    assert bodies["Studio K7"]["serial"] is None and bodies["Studio K7"]["pixel_width"] == 6000
    assert cli("body", "remove", "Mine").exit_code == 0
    assert _rows(cli.path, Body) == 1


def test_shoot_plan_round_trip_in_metres(cli):
    assert cli("shoot", "add", "Stage", "--near", "4m", "--far", "inf", "--aperture", "8",
               "--focus", "15ft", "--coc-policy", "diagonal/1000", "--notes", "front row").exit_code == 0
    data = json.loads(cli("shoot", "show", "Stage", "--json").stdout)
    assert (data["plan_kind"], data["plan_near_m"], data["plan_far_m"]) == ("range", 4.0, "inf")
    assert data["planned_focus_m"] == pytest.approx(4.572) and data["planned_f_number"] == 8
    edited = cli("shoot", "edit", "Stage", "--front", "40cm", "--back", "0.6")
    assert edited.exit_code == 0 and "40.0 cm in front of the focus point, 60.0 cm behind" in edited.stdout
    assert cli("shoot", "remove", "Stage").exit_code == 0
    assert _rows(cli.path, Shoot) == 0


def test_catalog_info_export_and_import(cli, tmp_path):
    cli("lens", "add", "Altamira 35", "--focal", "35", "--aperture", "2", "--exif-name", "ALT 35")
    info = json.loads(cli("catalog", "info", "--json").stdout)
    assert info["revision"] == info["newest_revision"] == "0005"
    assert info["row_counts"]["lens"] == 1 and info["path"] == str(cli.path)
    assert "Schema revision" in cli("catalog", "info").stdout

    bundle = tmp_path / "out.zip"
    result = cli("catalog", "export", str(bundle))
    assert result.exit_code == 0 and bundle.is_file() and "lens_alias" in result.stdout
    other = tmp_path / "other.sqlite"
    imported = runner.invoke(app, ["--catalog", str(other), "catalog", "import", str(bundle)])
    assert imported.exit_code == 0, imported.output
    assert _rows(other, Lens) == 1


def test_environment_variable_picks_the_catalogue(tmp_path, monkeypatch):
    target = tmp_path / "from-env.sqlite"
    monkeypatch.setenv("SHARPZONE_CATALOG", str(target))
    result = runner.invoke(app, ["lens", "add", "Altamira 85", "--focal", "85", "--aperture", "1.8"])
    assert result.exit_code == 0, result.output
    assert _rows(target, Lens) == 1


def test_newer_catalogue_is_refused_on_the_command_line(cli):
    import sqlite3

    cli("format", "list")
    connection = sqlite3.connect(cli.path)
    connection.execute("UPDATE alembic_version SET version_num = '0099'")
    connection.commit()
    connection.close()
    _refused(cli("lens", "list"), 1, "unknown schema revision")


def test_every_catalogue_command_and_option_has_help():
    import typer.main

    group = typer.main.get_command(app)
    for group_name in ("format", "body", "lens", "shoot", "catalog"):
        sub = group.commands[group_name]
        assert sub.help, group_name
        for name, command in sub.commands.items():
            assert command.help, f"{group_name} {name}"
            for parameter in command.params:
                if parameter.name != "ctx":
                    assert getattr(parameter, "help", None), f"{group_name} {name} {parameter.name}"



def test_catalogue_commands_load_no_database_library_until_run():
    import subprocess
    import sys

    code = "import sys, sharpzone.cli.app; print(sorted(m for m in ('sqlalchemy', 'alembic', 'pandas') if m in sys.modules))"
    output = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert output.strip() == "[]"


def test_lens_max_magnification_forms_edit_clear_and_refusals(cli):
    # The specification's forms: 1:1, 0.5x, 0.25 (one parser, optics.magnification.parse_magnification).
    assert cli("lens", "add", "Vale Macro 100", "--focal", "100", "--aperture", "2.8", "--close-focus", "30cm",
               "--max-magnification", "1:1").exit_code == 0
    data = json.loads(cli("lens", "show", "Vale Macro 100", "--json").stdout)
    assert data["max_magnification"] == 1.0 and data["close_focus_m"] == 0.3
    assert "1:1" in cli("lens", "show", "Vale Macro 100").stdout
    assert cli("lens", "edit", "Vale Macro 100", "--max-magnification", "0.5x").exit_code == 0
    assert json.loads(cli("lens", "list", "--json").stdout)[0]["max_magnification"] == 0.5
    assert cli("lens", "edit", "Vale Macro 100", "--max-magnification", "0").exit_code == 0
    assert json.loads(cli("lens", "list", "--json").stdout)[0]["max_magnification"] is None
    bad = cli("lens", "edit", "Vale Macro 100", "--max-magnification", "a lot")
    assert bad.exit_code == 2 and "--max-magnification" in bad.output
    # A magnification needs the close-focus distance it is reached at.
    lonely = cli("lens", "add", "Vale 50", "--focal", "50", "--aperture", "2", "--max-magnification", "0.15")
    assert lonely.exit_code == 2 and "close-focus" in lonely.output
    # 1:1 at 1 m would need a 250 mm thin lens: not a 100 mm lens focusing steadily closer.
    odd = cli("lens", "edit", "Vale Macro 100", "--close-focus", "1m", "--max-magnification", "1:1")
    assert odd.exit_code == 2 and "focusing steadily closer" in odd.output

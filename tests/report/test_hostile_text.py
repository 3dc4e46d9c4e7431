"""Text from files and users is shown as written by every renderer: never parsed as rich
markup, never obeyed as a terminal control sequence.

One list of hostile strings goes into every text field a photographer's files or commands
can fill (file name, EXIF Make, Model and LensModel, shoot, body, lens and format names,
notes), and every table and message is rendered from it.
"""

from __future__ import annotations

import re

import pytest
from typer.testing import CliRunner

from sharpzone.cli.app import app
from tests.ingest.images import exif_block, jpeg

HOSTILE = [
    "Korvath 50mm [/] Art",           # a closing tag with nothing open: crashed rich
    "wedding [final]",                # a tag-like word that rich silently swallowed
    "[bold red]loud[/bold red]",      # real markup
    "\x1b[31mred\x1b[0m",             # an ANSI colour sequence
    "\x1b]0;owned\x07",               # an OSC sequence that retitles the terminal
    "back\x08\x08space\rreturn",      # backspace and carriage return overwrite what was shown
    "rtl\u202eevil\u202c",            # a right-to-left override
    "=cmd|' /C calc'!A0",             # a spreadsheet formula
]
RAW_CONTROLS = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u202a-\u202e]")
runner = CliRunner()


def _file_safe(text: str) -> str:
    return text.replace("/", "_").replace("\x00", "")


def _run(catalog, *args, columns=200):
    result = runner.invoke(app, ["--catalog", catalog, *args], env={"COLUMNS": str(columns)})
    assert result.exception is None or isinstance(result.exception, SystemExit), result.exception
    assert "Traceback" not in result.output
    return result


@pytest.fixture(params=HOSTILE, ids=lambda text: repr(text)[:24])
def hostile_catalog(request, tmp_path):
    text = request.param
    encoded = text.encode("utf-8")
    card = tmp_path / "card"
    card.mkdir()
    (card / f"{_file_safe(text)}.jpg").write_bytes(
        jpeg(exif_block(lens_model=encoded, extra_0th={271: encoded, 272: encoded})))
    catalog = str(tmp_path / "catalog.sqlite")
    assert _run(catalog, "shoot", "add", text, "--near", "2m", "--far", "4m", "--notes", text).exit_code == 0
    assert _run(catalog, "format", "add", text, "--width", "36", "--height", "24").exit_code == 0
    result = _run(catalog, "ingest", str(card), "--shoot", text)
    assert result.exit_code == 0, result.output
    return catalog, text


COMMANDS = [
    ("frames",), ("frames", "--wide"), ("check",), ("check", "--all"), ("stats",), ("lens", "list"),
    ("body", "list"), ("shoot", "list"), ("format", "list", "--wide"), ("ingest",),
]


def test_every_table_and_message_shows_hostile_text_inert(hostile_catalog, tmp_path):
    for columns in (80, 200):
        _every_renderer(*hostile_catalog, tmp_path, columns)
    if "\x1b" in hostile_catalog[1]:
        assert "\\x1b" in _run(hostile_catalog[0], "shoot", "list").output  # shown as its escape


def _every_renderer(catalog, text, tmp_path, columns):
    outputs = []
    for command in COMMANDS:
        if command == ("ingest",):
            command = ("ingest", str(tmp_path / "card"), "--shoot", text)
        result = _run(catalog, *command, columns=columns)
        assert result.exit_code == 0, (command, result.output)
        assert not RAW_CONTROLS.search(result.output), (command, result.output)
        outputs.append(result.output)
    for command in (("shoot", "show", text), ("format", "show", text), ("dof", "-f", "50", "-a", "8", "-d", "3m",
                                                                        "--sensor", text)):
        result = _run(catalog, *command, columns=columns)
        assert result.exit_code == 0, (command, result.output)
        assert not RAW_CONTROLS.search(result.output), (command, result.output)
        outputs.append(result.output)
    error = _run(catalog, "lens", "show", text + "?", columns=columns)
    assert error.exit_code != 0 and not RAW_CONTROLS.search(error.output)
    if columns == 200 and not RAW_CONTROLS.search(text):
        # As written: the markup-looking names and the file name appear whole.
        everything = "\n".join(outputs)
        assert text in everything
        assert f"{_file_safe(text)}.jpg" in everything

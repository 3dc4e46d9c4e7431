"""Every command has help text and a line in README.md's command reference."""

from __future__ import annotations

from pathlib import Path

import typer
from typer.testing import CliRunner

from sharpzone.cli.app import app

README = Path(__file__).resolve().parents[2] / "README.md"


def _command_paths(group, prefix=()):
    command = typer.main.get_command(group) if isinstance(group, typer.Typer) else group
    for name, sub in getattr(command, "commands", {}).items():
        path = (*prefix, name)
        if getattr(sub, "commands", None):
            yield path, sub
            yield from _command_paths(sub, path)
        else:
            yield path, sub


def test_every_command_has_help_and_is_in_the_readme():
    readme = README.read_text(encoding="utf-8")
    paths = list(_command_paths(app))
    assert len(paths) >= 5
    for path, command in paths:
        assert (command.help or "").strip(), f"{' '.join(path)} has no help text"
        assert f"sharpzone {' '.join(path)}" in readme, f"README.md does not mention 'sharpzone {' '.join(path)}'"
        result = CliRunner().invoke(app, [*path, "--help"])
        assert result.exit_code == 0, result.output


def test_every_option_has_help():
    for path, command in _command_paths(app):
        for parameter in getattr(command, "params", []):
            if getattr(parameter, "param_type_name", "") == "option" and parameter.name != "help":
                assert (parameter.help or "").strip(), f"{' '.join(path)} {parameter.opts} has no help"


def test_no_arguments_prints_help():
    result = CliRunner().invoke(app, [])
    assert result.exit_code == 0 and "Usage" in result.stdout

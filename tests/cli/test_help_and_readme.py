"""Help reads like the trade, and README.md's command reference is the commands' own help."""

from __future__ import annotations

import importlib.util
import re
import shlex
from pathlib import Path

import pytest
import typer
from typer.testing import CliRunner

from sharpzone.cli.app import app

ROOT = Path(__file__).resolve().parents[2]
README = ROOT / "README.md"
runner = CliRunner()


def _command_paths(group, prefix=()):
    command = typer.main.get_command(group) if isinstance(group, typer.Typer) else group
    for name, sub in getattr(command, "commands", {}).items():
        path = (*prefix, name)
        if getattr(sub, "commands", None):
            yield path, sub
            yield from _command_paths(sub, path)
        else:
            yield path, sub


def _leaf_commands():
    return [(path, command) for path, command in _command_paths(app) if not getattr(command, "commands", None)]


def _tool():
    spec = importlib.util.spec_from_file_location("command_reference", ROOT / "tools" / "command_reference.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_readme_command_reference_is_generated_from_the_help():
    tool = _tool()
    readme = README.read_text(encoding="utf-8")
    assert tool.updated(readme) == readme, "README.md drifted: run python tools/command_reference.py"
    for path, _ in _leaf_commands():
        assert f"`sharpzone {' '.join(path)}" in readme


def test_every_command_has_help():
    paths = list(_command_paths(app))
    assert len(paths) >= 5
    for path, command in paths:
        assert (command.help or "").strip(), f"{' '.join(path)} has no help text"
        result = runner.invoke(app, [*path, "--help"])
        assert result.exit_code == 0, result.output


@pytest.mark.parametrize(("path", "command"), _leaf_commands(), ids=lambda value: " ".join(value)
                         if isinstance(value, tuple) else "")
def test_help_has_readable_placeholders_and_one_example_that_parses(path, command):
    text = runner.invoke(app, [*path, "--help"], env={"COLUMNS": "200"}).output
    assert not re.search(r"<\w|\{\w", text), text  # no <str>, <float>, <list[Path]>, {name}
    examples = re.findall(r"^\s+(sharpzone .+)$", text.split("Example:")[-1], re.MULTILINE) if "Example:" in text else []
    assert len(examples) == 1, f"{' '.join(path)}: expected one example in its help"
    words = shlex.split(examples[0])[1:]
    assert words[:len(path)] == list(path)
    command.make_context(path[-1], words[len(path):])  # the example's options exist and parse


def test_every_option_has_help():
    for path, command in _command_paths(app):
        for parameter in getattr(command, "params", []):
            if getattr(parameter, "param_type_name", "") == "option" and parameter.name != "help":
                assert (parameter.help or "").strip(), f"{' '.join(path)} {parameter.opts} has no help"


def test_no_arguments_prints_help():
    result = runner.invoke(app, [])
    assert result.exit_code == 0 and "Usage" in result.stdout


def test_version():
    from importlib.metadata import version

    result = runner.invoke(app, ["--version"])
    assert result.exit_code == 0 and result.stdout.strip() == f"sharpzone {version('sharpzone')}"


@pytest.mark.parametrize(
    ("args", "line"),
    [
        (("ingest", "--jobs", "x", "folder"),
         "sharpzone: error: --jobs: 'x' is not valid: expected a whole number (see 'sharpzone ingest --help')"),
        (("stack", "-f", "50", "-a", "8", "--near", "1m", "--far", "2m", "--overlap", "abc"),
         "sharpzone: error: --overlap: 'abc' is not valid: expected a number (see 'sharpzone stack --help')"),
        (("dof", "--focal", "50"),
         "sharpzone: error: --aperture is missing: expected --aperture N (see 'sharpzone dof --help')"),
        (("dof", "--foca", "50"),
         "sharpzone: error: --foca is not an option of 'sharpzone dof' (did you mean --coc or --focal?)"),
    ],
)
def test_usage_errors_are_one_line_in_our_words(args, line):
    result = runner.invoke(app, list(args))
    assert result.exit_code == 2
    assert result.stderr.strip() == line
    assert "Input should" not in result.stderr and "sharpzone dof: " not in result.stderr


def test_a_group_without_a_command_shows_its_help():
    result = runner.invoke(app, ["lens"])
    assert result.exit_code == 0 and "Usage: sharpzone lens" in result.stdout

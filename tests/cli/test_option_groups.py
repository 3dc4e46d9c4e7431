"""Options declared once and shared by commands (``sharpzone.cli.option_groups``): every
command that takes a group shows the very same options, and a group's values arrive built."""

from __future__ import annotations

from typing import Annotated, Optional

import pytest
import typer
from typer.testing import CliRunner

from sharpzone.cli.app import app
from sharpzone.cli.option_groups import OptionGroup, uses

runner = CliRunner()


def _options(path: tuple[str, ...]) -> list[tuple[str, str]]:
    command = typer.main.get_command(app)
    for name in path:
        command = command.commands[name]
    return [(p.opts[0], p.help) for p in command.params if p.param_type_name == "option"]


@pytest.mark.parametrize("path", [("frames",), ("check",), ("stats",), ("report",)])
def test_frame_commands_take_the_filters_and_the_judging_options_in_one_order(path):
    options = _options(path)
    names = [name for name, _ in options]
    filters = ["--shoot", "--body", "--lens", "--from", "--to", "--f-min", "--f-max", "--focal-min", "--focal-max"]
    judging = ["--coc-policy", "--near", "--far", "--front", "--back"]
    start = names.index("--shoot")
    assert names[start:start + len(filters)] == filters
    start = names.index("--coc-policy")
    assert names[start:start + len(judging)] == judging
    assert ("--verdict" in names) == (path != ("stats",))


SHARED = {"--shoot", "--body", "--lens", "--from", "--to", "--f-min", "--f-max", "--focal-min", "--focal-max",
          "--coc-policy", "--near", "--far", "--front", "--back"}


def test_shared_options_have_one_help_text_everywhere():
    helps = {}
    for path in [("frames",), ("check",), ("stats",), ("report",)]:
        for name, text in _options(path):
            if name in SHARED:
                helps.setdefault(name, set()).add(text)
    assert set(helps) == SHARED and all(len(texts) == 1 for texts in helps.values()), helps


def test_dof_and_stack_share_their_lens_and_blur_options():
    shared = ["--focal", "--lens", "--max-magnification", "--close-focus", "--sensor", "--coc", "--coc-policy",
              "--reference", "--pupil"]
    dof = dict(_options(("dof",)))
    stack = dict(_options(("stack",)))
    assert all(dof[name] == stack[name] for name in shared)


def test_a_group_hands_the_command_its_built_value_and_checks_its_parameter():
    group = OptionGroup("pair", (
        ("left", Annotated[Optional[str], typer.Option("--left", help="Left.")]),
        ("right", Annotated[str, typer.Option("--right", help="Right.")], "r"),
    ), lambda left=None, right=None: (left, right))
    seen = []
    little = typer.Typer()

    @little.command()
    @uses(group)
    def run(pair, loud: Annotated[bool, typer.Option("--loud", help="Loud.")] = False) -> None:
        seen.append((pair, loud))

    result = runner.invoke(little, ["--left", "l", "--loud"])
    assert result.exit_code == 0, result.output
    assert seen == [(("l", "r"), True)]
    with pytest.raises(TypeError, match="pair"):
        uses(group)(lambda other: None)


def test_a_bad_filter_value_names_its_option(tmp_path):
    result = runner.invoke(app, ["--catalog", str(tmp_path / "c.sqlite"), "stack", "-f", "50", "-a", "8",
                                 "--near", "1m", "--far", "2m", "--reference", "middle"])
    assert result.exit_code == 2
    assert "--reference" in result.output

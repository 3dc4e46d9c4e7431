"""The typer application and its global options. Command groups register themselves here."""

from __future__ import annotations

from typing import Annotated, Optional

import typer

from sharpzone.cli.main import SharpzoneGroup
from sharpzone.cli.state import CliState


def _show_version(value: bool) -> None:
    if value:
        from importlib.metadata import version

        typer.echo(f"sharpzone {version('sharpzone')}")
        raise typer.Exit(0)


def main(
    ctx: typer.Context,
    catalog: Annotated[
        Optional[str],
        typer.Option(
            "--catalog",
            envvar="SHARPZONE_CATALOG",
            help="Catalogue to use: a SQLite file path or a SQLAlchemy URL "
            "(postgresql+psycopg://…). Default: a file in your user data folder.",
            show_default=False,
        ),
    ] = None,
    debug: Annotated[bool, typer.Option("--debug", help="Show a traceback when something fails.")] = False,
    version: Annotated[Optional[bool], typer.Option("--version", is_eager=True, callback=_show_version,
                                                    help="Print sharpzone's version and exit.")] = None,
) -> None:
    """Which frames of a shoot held the subject sharp, why not, and what would have worked."""
    ctx.obj = CliState(catalog=catalog, debug=debug)
    if ctx.invoked_subcommand is None:
        typer.echo(ctx.get_help())
        raise typer.Exit(0)


# Each command module adds its commands or sub-groups to an app: which module holds which
# top-level command, in the order ``sharpzone --help`` lists them. Imports stay light (heavy
# libraries are imported inside the commands that need them).
COMMAND_MODULES = {
    "dof": "optics_commands", "stack": "optics_commands", "ingest": "ingest_commands",
    "measure": "measure_commands", "frames": "frames_commands", "check": "frames_commands",
    "stats": "frames_commands", "format": "format_commands", "body": "body_commands", "lens": "lens_commands",
    "shoot": "shoot_commands", "catalog": "catalog_commands", "sheet": "sheet_commands",
    "report": "report_commands", "demo": "demo_commands",
}


def make_app(command: str | None = None) -> typer.Typer:
    """The sharpzone application: every command, or only the modules that ``command`` (a
    top-level command name) needs, so one command starts without building all the others."""
    import importlib

    application = typer.Typer(
        cls=SharpzoneGroup,
        name="sharpzone",
        help="Which frames of a shoot held the subject sharp, why not, and what would have worked.",
        invoke_without_command=True,
        add_completion=False,
        pretty_exceptions_enable=False,
        rich_markup_mode=None,
        context_settings={"help_option_names": ["-h", "--help"]},
    )
    application.callback()(main)
    wanted = [COMMAND_MODULES[command]] if command in COMMAND_MODULES else COMMAND_MODULES.values()
    for module in dict.fromkeys(wanted):
        importlib.import_module(f"sharpzone.cli.{module}").register(application)
    return application


def __getattr__(name: str):
    # ``app``, the whole application, is made on first use (tests, tools/command_reference.py);
    # the console script makes only the part a command needs (``sharpzone.cli.main.run``).
    if name == "app":
        globals()["app"] = application = make_app()
        return application
    raise AttributeError(name)

"""The typer application and its global options. Command groups register themselves here."""

from __future__ import annotations

from typing import Annotated, Optional

import typer

from sharpzone.cli.main import SharpzoneGroup
from sharpzone.cli.state import CliState

app = typer.Typer(
    cls=SharpzoneGroup,
    name="sharpzone",
    help="Which frames of a shoot held the subject sharp, why not, and what would have worked.",
    invoke_without_command=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
    context_settings={"help_option_names": ["-h", "--help"]},
)


def _show_version(value: bool) -> None:
    if value:
        from importlib.metadata import version

        typer.echo(f"sharpzone {version('sharpzone')}")
        raise typer.Exit(0)


@app.callback()
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


def _register_commands() -> None:
    # Each command module adds its commands or sub-groups to ``app``; imports stay light
    # (heavy libraries are imported inside the commands that need them).
    from sharpzone.cli import (
        body_commands,
        catalog_commands,
        demo_commands,
        format_commands,
        frames_commands,
        ingest_commands,
        lens_commands,
        measure_commands,
        optics_commands,
        report_commands,
        sheet_commands,
        shoot_commands,
    )

    optics_commands.register(app)
    ingest_commands.register(app)
    measure_commands.register(app)
    frames_commands.register(app)
    format_commands.register(app)
    body_commands.register(app)
    lens_commands.register(app)
    shoot_commands.register(app)
    catalog_commands.register(app)
    sheet_commands.register(app)
    report_commands.register(app)
    demo_commands.register(app)


_register_commands()

"""``sharpzone catalog …``: the catalogue itself, where it is, export and import.

Each command parses its options, calls one service function from ``sharpzone.catalog.service``
inside one unit of work, and hands the result to ``sharpzone.report.catalog_tables``.
"""

from __future__ import annotations

from typing import Annotated

import typer

from sharpzone.cli.noun_commands import JsonOpt, service, tables
from sharpzone.cli.state import catalog_session, echo_json

catalog_app = typer.Typer(help="The catalogue itself: where it is, export and import.", no_args_is_help=True)


def register(app: typer.Typer) -> None:
    app.add_typer(catalog_app, name="catalog")


BundleArg = Annotated[str, typer.Argument(help="Bundle file: NAME.json (one JSON file) or NAME.zip (one CSV per table).")]


@catalog_app.command("info")
def catalog_info_command(ctx: typer.Context, json: JsonOpt = False) -> None:
    """Where the catalogue is, its schema revision and how many rows it holds."""
    with catalog_session(ctx) as session:
        info = service().catalog_info(session)
    if json:
        echo_json(tables().info_json(info))
    else:
        tables().render_info(info)


@catalog_app.command("export")
def catalog_export(ctx: typer.Context, bundle: BundleArg) -> None:
    """Write the whole catalogue to a bundle file (nothing is lost; see the bundle format in docs)."""
    with catalog_session(ctx) as session:
        counts = service().export_catalog(session, bundle)
    tables().render_counts(f"Exported to {bundle}", {"Rows": counts})


@catalog_app.command("import")
def catalog_import(
    ctx: typer.Context,
    bundle: BundleArg,
    replace: Annotated[bool, typer.Option("--replace", help="Overwrite rows that exist with other values (default: refuse).")] = False,
) -> None:
    """Add a bundle's rows to the catalogue: identical rows are kept, new ones added."""
    with catalog_session(ctx) as session:
        result = service().import_catalog(session, bundle, replace=replace)
    tables().render_counts(f"Imported {bundle}", {"Added": result.added, "Replaced": result.replaced,
                                                  "Unchanged": result.unchanged})

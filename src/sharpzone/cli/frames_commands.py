"""``sharpzone frames``, ``check`` and ``stats``: every frame's sharp zone, the verdicts with
remedies, and per-lens/per-body statistics."""

from __future__ import annotations

from typing import Annotated

import typer

from sharpzone.cli.option_groups import FILTERS, FILTERS_WITH_VERDICT, JUDGING, uses
from sharpzone.cli.options import ImperialOpt, JsonOpt, WideOpt
from sharpzone.cli.state import catalog_session, echo_json

CsvOpt = Annotated[bool, typer.Option("--csv", help="Print CSV instead of a table.")]
JsonlOpt = Annotated[bool, typer.Option("--jsonl", help="Print one JSON object a line (the machine interface's objects).")]
AllOpt = Annotated[bool, typer.Option("--all", help="Detail every flagged frame (default: the worst 20, after the summary).")]


def register(app: typer.Typer) -> None:
    app.command("frames")(frames)
    app.command("check")(check)
    app.command("stats")(stats)


@uses(FILTERS_WITH_VERDICT, JUDGING)
def frames(
    ctx: typer.Context, where, judging, imperial: ImperialOpt = False, json: JsonOpt = False, jsonl: JsonlOpt = False,
    csv: CsvOpt = False, wide: WideOpt = False,
) -> None:
    """Every frame's sharp zone: near and far limits, hyperfocal distance, CoC used."""
    def render(result) -> None:
        from sharpzone.report import frames_render

        frames_render.render_frames(result.frames, imperial=imperial, wide=wide)

    _frames_or_check(ctx, where, judging, checked=False, json=json, jsonl=jsonl, csv=csv, render=render)


def _frames_or_check(ctx, where, judging, *, checked: bool, json: bool, jsonl: bool, csv: bool, render,
                     list_all: bool = False) -> None:
    """Call the service of ``frames`` or (``checked``) ``check``: streamed for machine output
    (written a chunk of frames at a time) and for ``check``'s report (``frames_render.
    check_report``: the worst frames that did not pass kept, all with ``list_all``), else
    whole; what is not written as it streams is handed to ``render``."""
    import contextlib

    from sharpzone.analysis import frames as service

    options = {"coc_policy": judging.coc_policy, "requirement": judging.requirement}
    machine = json or jsonl or csv
    with catalog_session(ctx) as session:
        if not (machine or checked):
            result = service.frames_with_zones(session, where, **options)
        else:
            chunks = (service.iter_check_shoot if checked else service.iter_checked)(session, where, **options)
            # Closed while the catalogue is still open, also when the reader goes away
            # (``| head``): its cursor is then closed in order, not after the database.
            with contextlib.closing(chunks):
                if machine:
                    return _stream(chunks, json=json, jsonl=jsonl, checked=checked)
                from sharpzone.report.frames_render import CHECK_DETAIL_ROWS, check_report

                result = check_report(chunks, **options, keep=None if list_all else CHECK_DETAIL_ROWS)
    render(result)


def _stream(chunks, *, json: bool, jsonl: bool, checked: bool) -> None:
    """Write machine output as each chunk of frames is computed (what exists before the first
    chunk kept out of the garbage collector's passes, ``collector``: each chunk makes tens
    of thousands of tuples)."""
    import sys

    from sharpzone.collector import existing_objects_frozen
    from sharpzone.report import frames_machine

    if json:
        pieces = frames_machine.stream_json(chunks, checked)
    elif jsonl:
        pieces = frames_machine.stream_jsonl(chunks, checked)
    else:
        pieces = frames_machine.stream_csv(chunks)
    # JSON comes as UTF-8 for the binary stream; a text-only stdout (a caller's StringIO) gets text.
    text_only = getattr(sys.stdout, "buffer", None) is None
    with existing_objects_frozen():
        for piece in pieces:
            typer.echo(piece.decode() if text_only and isinstance(piece, bytes) else piece, nl=False)


@uses(FILTERS_WITH_VERDICT, JUDGING)
def check(
    ctx: typer.Context, where, judging, imperial: ImperialOpt = False, json: JsonOpt = False, jsonl: JsonlOpt = False,
    csv: CsvOpt = False, wide: WideOpt = False, all_frames: AllOpt = False,
) -> None:
    """Which frames' sharp zones missed what the shoot needed, and what would have worked."""
    def render(report) -> None:
        from sharpzone.report import frames_render

        frames_render.render_check(report, imperial=imperial, show_all=all_frames, wide=wide)

    _frames_or_check(ctx, where, judging, checked=True, json=json, jsonl=jsonl, csv=csv, render=render,
                     list_all=all_frames)


@uses(FILTERS, JUDGING)
def stats(
    ctx: typer.Context, where, judging, imperial: ImperialOpt = False, json: JsonOpt = False, wide: WideOpt = False,
) -> None:
    """Per lens and body: frames, f-numbers used, share flagged, typical focus distances."""
    from sharpzone.analysis.stats import shoot_stats

    with catalog_session(ctx) as session:
        result = shoot_stats(session, where, coc_policy=judging.coc_policy, requirement=judging.requirement)
    if json:
        from sharpzone.report.frames_machine import stats_json

        echo_json(stats_json(result))
    else:
        from sharpzone.report import frames_render

        frames_render.render_stats(result, imperial=imperial, wide=wide)

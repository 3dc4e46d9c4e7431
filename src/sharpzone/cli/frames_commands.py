"""``sharpzone frames``, ``check`` and ``stats``: every frame's sharp zone, the verdicts with
remedies, and per-lens/per-body statistics."""

from __future__ import annotations

from typing import Annotated, Optional

import typer

from sharpzone.cli.options import (
    ImperialOpt,
    JsonOpt,
    WideOpt,
    date_option,
    optional_distance,
    optional_f_number,
    optional_length,
)
from sharpzone.cli.state import catalog_session, echo_json
from sharpzone.optics.coc import POLICY_HELP
from sharpzone.units import DISTANCE_HELP

Text = Optional[str]
ShootOpt = Annotated[Text, typer.Option("--shoot", help="Only frames of this shoot.")]
BodyOpt = Annotated[Text, typer.Option("--body", help="Only frames from this body.")]
LensOpt = Annotated[Text, typer.Option("--lens", help="Only frames through this lens.")]
FromOpt = Annotated[Text, typer.Option("--from", help="Only frames captured on or after this date (YYYY-MM-DD).")]
ToOpt = Annotated[Text, typer.Option("--to", help="Only frames captured on or before this date (YYYY-MM-DD).")]
FMinOpt = Annotated[Text, typer.Option("--f-min", help="Only frames at this f-number or narrower, e.g. 2.8.")]
FMaxOpt = Annotated[Text, typer.Option("--f-max", help="Only frames at this f-number or wider, e.g. 11.")]
FocalMinOpt = Annotated[Text, typer.Option("--focal-min", help="Only frames at this focal length (mm) or longer.")]
FocalMaxOpt = Annotated[Text, typer.Option("--focal-max", help="Only frames at this focal length (mm) or shorter.")]
VerdictOpt = Annotated[Text, typer.Option("--verdict", help="Only frames with this verdict: passed, flagged, or a verdict code.")]
CocPolicyOpt = Annotated[Text, typer.Option("--coc-policy", help=POLICY_HELP[0].upper() + POLICY_HELP[1:] + "; overrides the shoot's.")]
NearOpt = Annotated[Text, typer.Option("--near", help=f"Required range starts here ({DISTANCE_HELP}).")]
FarOpt = Annotated[Text, typer.Option("--far", help="Required range ends here (a distance or inf).")]
FrontOpt = Annotated[Text, typer.Option("--front", help="Required depth in front of each frame's focus point.")]
BackOpt = Annotated[Text, typer.Option("--back", help="Required depth behind each frame's focus point.")]
CsvOpt = Annotated[bool, typer.Option("--csv", help="Print CSV instead of a table.")]
JsonlOpt = Annotated[bool, typer.Option("--jsonl", help="Print one JSON object a line (the machine interface's objects).")]
AllOpt = Annotated[bool, typer.Option("--all", help="Detail every flagged frame (default: the worst 20, after the summary).")]


def register(app: typer.Typer) -> None:
    app.command("frames")(frames)
    app.command("check")(check)
    app.command("stats")(stats)


def _filter(shoot, body, lens, date_from, date_to, f_min, f_max, focal_min, focal_max, verdict=None):
    from sharpzone.analysis.frames import FrameFilter

    return FrameFilter(
        shoot=shoot, body=body, lens=lens, date_from=date_option(date_from, "--from"),
        date_to=date_option(date_to, "--to"), f_number_min=optional_f_number(f_min, "--f-min"),
        f_number_max=optional_f_number(f_max, "--f-max"), focal_min_mm=optional_length(focal_min, "--focal-min"),
        focal_max_mm=optional_length(focal_max, "--focal-max"), verdict=verdict,
    )


def _requirement(near, far, front, back):
    from sharpzone.analysis.checks import Requirement

    return Requirement.from_options(
        near_mm=optional_distance(near, "--near"), far_mm=optional_distance(far, "--far"),
        front_mm=optional_distance(front, "--front"), back_mm=optional_distance(back, "--back"),
    )


def frames(
    ctx: typer.Context, shoot: ShootOpt = None, body: BodyOpt = None, lens: LensOpt = None,
    date_from: FromOpt = None, date_to: ToOpt = None, f_min: FMinOpt = None, f_max: FMaxOpt = None,
    focal_min: FocalMinOpt = None, focal_max: FocalMaxOpt = None, verdict: VerdictOpt = None,
    coc_policy: CocPolicyOpt = None, near: NearOpt = None, far: FarOpt = None, front: FrontOpt = None,
    back: BackOpt = None, imperial: ImperialOpt = False, json: JsonOpt = False, jsonl: JsonlOpt = False,
    csv: CsvOpt = False, wide: WideOpt = False,
) -> None:
    """Every frame's sharp zone: near and far limits, hyperfocal distance, CoC used."""
    from sharpzone.analysis.frames import frames_with_zones, iter_checked

    where = _filter(shoot, body, lens, date_from, date_to, f_min, f_max, focal_min, focal_max, verdict)
    requirement = _requirement(near, far, front, back)
    with catalog_session(ctx) as session:
        if json or jsonl or csv:  # streamed: written a chunk of frames at a time
            chunks = iter_checked(session, where, coc_policy=coc_policy, requirement=requirement)
            return _stream(chunks, json=json, jsonl=jsonl, checked=False)
        result = frames_with_zones(session, where, coc_policy=coc_policy, requirement=requirement)
    from sharpzone.report import frames_render

    frames_render.render_frames(result.frames, imperial=imperial, wide=wide)


def _stream(chunks, *, json: bool, jsonl: bool, checked: bool) -> None:
    """Write machine output as each chunk of frames is computed."""
    from sharpzone.report import frames_render

    records = frames_render.check_records if checked else frames_render.frames_records
    if json:
        pieces = frames_render.stream_json(chunks, records)
    elif jsonl:
        pieces = frames_render.stream_jsonl(chunks, records)
    else:
        pieces = frames_render.stream_csv(chunks)
    for piece in pieces:
        typer.echo(piece, nl=False)


def check(
    ctx: typer.Context, shoot: ShootOpt = None, body: BodyOpt = None, lens: LensOpt = None,
    date_from: FromOpt = None, date_to: ToOpt = None, f_min: FMinOpt = None, f_max: FMaxOpt = None,
    focal_min: FocalMinOpt = None, focal_max: FocalMaxOpt = None, verdict: VerdictOpt = None,
    coc_policy: CocPolicyOpt = None, near: NearOpt = None, far: FarOpt = None, front: FrontOpt = None,
    back: BackOpt = None, imperial: ImperialOpt = False, json: JsonOpt = False, jsonl: JsonlOpt = False,
    csv: CsvOpt = False, wide: WideOpt = False, all_frames: AllOpt = False,
) -> None:
    """Which frames' sharp zones missed what the shoot needed, and what would have worked."""
    from sharpzone.analysis.frames import check_shoot, iter_check_shoot

    where = _filter(shoot, body, lens, date_from, date_to, f_min, f_max, focal_min, focal_max, verdict)
    requirement = _requirement(near, far, front, back)
    with catalog_session(ctx) as session:
        if json or jsonl or csv:  # streamed: written a chunk of frames at a time
            chunks = iter_check_shoot(session, where, requirement=requirement, coc_policy=coc_policy)
            return _stream(chunks, json=json, jsonl=jsonl, checked=True)
        result = check_shoot(session, where, requirement=requirement, coc_policy=coc_policy)
    from sharpzone.report import frames_render

    frames_render.render_check(result, imperial=imperial, show_all=all_frames, wide=wide)


def stats(
    ctx: typer.Context, shoot: ShootOpt = None, body: BodyOpt = None, lens: LensOpt = None,
    date_from: FromOpt = None, date_to: ToOpt = None, f_min: FMinOpt = None, f_max: FMaxOpt = None,
    focal_min: FocalMinOpt = None, focal_max: FocalMaxOpt = None, coc_policy: CocPolicyOpt = None,
    near: NearOpt = None, far: FarOpt = None, front: FrontOpt = None, back: BackOpt = None,
    imperial: ImperialOpt = False, json: JsonOpt = False, wide: WideOpt = False,
) -> None:
    """Per lens and body: frames, f-numbers used, share flagged, typical focus distances."""
    from sharpzone.analysis.stats import shoot_stats

    where = _filter(shoot, body, lens, date_from, date_to, f_min, f_max, focal_min, focal_max)
    with catalog_session(ctx) as session:
        result = shoot_stats(session, where, coc_policy=coc_policy, requirement=_requirement(near, far, front, back))
    from sharpzone.report import frames_render

    if json:
        echo_json(frames_render.stats_json(result))
    else:
        frames_render.render_stats(result, imperial=imperial, wide=wide)

"""``sharpzone dof`` and ``sharpzone stack``: one-off answers from the optics core."""

from __future__ import annotations

from typing import Annotated

import typer

from sharpzone.cli.options import (
    CocOpt,
    CocPolicyOpt,
    ImperialOpt,
    JsonOpt,
    ReferenceOpt,
    SensorOpt,
    choice_option,
    distance_option,
    f_number_option,
    length_option,
)
from sharpzone.cli.state import catalog_location, echo_json
from sharpzone.errors import InvalidValue
from sharpzone.limits import OVERLAP_HELP, check_overlap
from sharpzone.units import DISTANCE_HELP

PupilOpt = Annotated[float, typer.Option("--pupil", help="Pupil magnification (exit / entrance pupil diameter); 1 for a symmetric lens.")]
FocalOpt = Annotated[str, typer.Option("--focal", "-f", help="Focal length in mm (the real one, not the 35 mm equivalent).")]
ApertureOpt = Annotated[str, typer.Option("--aperture", "-a", help="f-number, e.g. 8 or f/5.6.")]


def register(app: typer.Typer) -> None:
    app.command("dof")(dof)
    app.command("stack")(stack)


def _common(coc: str | None, reference: str) -> tuple[float | None, str]:
    coc_mm = length_option(coc, "--coc") if coc is not None else None
    return coc_mm, choice_option(reference, "--reference", ("sensor", "lens"))


def dof(
    ctx: typer.Context,
    focal: FocalOpt,
    aperture: ApertureOpt,
    distance: Annotated[str, typer.Option("--distance", "-d", help=f"Focus distance: {DISTANCE_HELP}.")],
    sensor: SensorOpt = None,
    coc: CocOpt = None,
    coc_policy: CocPolicyOpt = None,
    reference: ReferenceOpt = "sensor",
    pupil: PupilOpt = 1.0,
    imperial: ImperialOpt = False,
    json: JsonOpt = False,
) -> None:
    """The sharp zone of one setting: near and far limits, depth of field, hyperfocal distance."""
    from sharpzone.analysis.setting import evaluate_setting, format_lookup

    coc_mm, reference = _common(coc, reference)
    report = evaluate_setting(
        length_option(focal, "--focal"), f_number_option(aperture, "--aperture"),
        distance_option(distance, "--distance"), sensor=sensor, coc_mm=coc_mm, coc_policy=coc_policy,
        reference=reference, pupil_magnification=pupil, lookup=format_lookup(catalog_location(ctx)),
    )
    if json:
        from sharpzone.report.machine import setting_json

        echo_json(setting_json(report))
    else:
        from sharpzone.report.console import render_setting

        render_setting(report, imperial=imperial)


def stack(
    ctx: typer.Context,
    focal: FocalOpt,
    aperture: ApertureOpt,
    near: Annotated[str, typer.Option("--near", help=f"Nearest point that must be sharp: {DISTANCE_HELP}.")],
    far: Annotated[str, typer.Option("--far", help=f"Farthest point that must be sharp: {DISTANCE_HELP}.")],
    overlap: Annotated[float, typer.Option("--overlap", help=f"Share of each frame's depth that neighbouring frames repeat ({OVERLAP_HELP}).")] = 0.1,
    sensor: SensorOpt = None,
    coc: CocOpt = None,
    coc_policy: CocPolicyOpt = None,
    reference: ReferenceOpt = "sensor",
    pupil: PupilOpt = 1.0,
    imperial: ImperialOpt = False,
    json: JsonOpt = False,
) -> None:
    """A focus-stack plan: how many frames, focused where, hold a near–far range sharp."""
    from sharpzone.analysis.setting import format_lookup, plan_stack

    coc_mm, reference = _common(coc, reference)
    try:
        check_overlap(overlap)
    except InvalidValue as error:
        raise error.with_option("--overlap") from None
    report = plan_stack(
        length_option(focal, "--focal"), f_number_option(aperture, "--aperture"),
        distance_option(near, "--near"), distance_option(far, "--far"), sensor=sensor, coc_mm=coc_mm,
        coc_policy=coc_policy, reference=reference, pupil_magnification=pupil, overlap=overlap,
        lookup=format_lookup(catalog_location(ctx)),
    )
    if json:
        from sharpzone.report.machine import stack_json

        echo_json(stack_json(report))
    else:
        from sharpzone.report.console import render_stack

        render_stack(report, imperial=imperial)

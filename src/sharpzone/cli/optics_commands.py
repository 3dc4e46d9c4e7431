"""``sharpzone dof`` and ``sharpzone stack``: one-off answers from the optics core."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Annotated, Optional

import typer

from sharpzone.cli.option_groups import OptionGroup, uses
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
from sharpzone.optics.planning_limits import DEFAULT_STACK_OVERLAP
from sharpzone.units import DISTANCE_HELP

PupilOpt = Annotated[Optional[float], typer.Option("--pupil", help="Pupil magnification (exit / entrance pupil diameter); 1 for a symmetric lens (default, or the catalogued lens's).")]
FocalOpt = Annotated[Optional[str], typer.Option("--focal", "-f", help="Focal length in mm (the real one, not the 35 mm equivalent); a catalogued prime's own with --lens.")]
LensOpt = Annotated[Optional[str], typer.Option("--lens", "-l", help="A catalogued lens (name or EXIF name): its close focus, maximum magnification and pupil magnification apply.")]
MaxMagOpt = Annotated[Optional[str], typer.Option("--max-magnification", help="The lens's maximum magnification at --close-focus (1:1, 0.5x …): the focal length then shortens towards close focus as the lens's does.")]
CloseFocusOpt = Annotated[Optional[str], typer.Option("--close-focus", help=f"The lens's closest focus from the sensor, with --max-magnification: {DISTANCE_HELP}.")]
ApertureOpt = Annotated[str, typer.Option("--aperture", "-a", help="f-number, e.g. 8 or f/5.6.")]


def register(app: typer.Typer) -> None:
    app.command("dof")(dof)
    app.command("stack")(stack)


@dataclass(frozen=True)
class _LensOptions:
    """The lens options as given (text, ``None`` when not given)."""

    focal: str | None
    lens: str | None
    max_magnification: str | None
    close_focus: str | None


_LENS = OptionGroup("lens_options", (
    ("focal", FocalOpt), ("lens", LensOpt), ("max_magnification", MaxMagOpt), ("close_focus", CloseFocusOpt),
), _LensOptions)


@dataclass(frozen=True)
class _Blur:
    """The blur options parsed: sensor format name, a fixed CoC (mm), a CoC policy (text),
    where distances are measured from, and the pupil magnification as given."""

    sensor: str | None
    coc_mm: float | None
    coc_policy: str | None
    reference: str
    pupil: float | None


def _blur(sensor=None, coc=None, coc_policy=None, reference="sensor", pupil=None) -> _Blur:
    coc_mm = length_option(coc, "--coc") if coc is not None else None
    return _Blur(sensor, coc_mm, coc_policy, choice_option(reference, "--reference", ("sensor", "lens")), pupil)


_BLUR = OptionGroup("blur", (
    ("sensor", SensorOpt), ("coc", CocOpt), ("coc_policy", CocPolicyOpt), ("reference", ReferenceOpt, "sensor"),
    ("pupil", PupilOpt),
), _blur)


@dataclass(frozen=True)
class _Lens:
    focal_mm: float
    close_focus_mm: float | None
    max_magnification: float | None
    pupil: float


def _lens(ctx, given: _LensOptions, pupil: float | None) -> _Lens:
    """Focal length and focusing from the options, a catalogued lens filling the gaps."""
    focal, lens, max_magnification, close_focus = given.focal, given.lens, given.max_magnification, given.close_focus
    from sharpzone.errors import InvalidValue
    from sharpzone.optics.magnification import parse_magnification

    found = None
    if lens is not None:
        from sharpzone.analysis.setting import catalog_lens_optics

        found = catalog_lens_optics(lens, catalog_location(ctx))
    focal_mm = length_option(focal, "--focal") if focal is not None else (found.focal_mm if found else None)
    if focal_mm is None:
        raise InvalidValue("--focal is needed (a zoom's focal length, or give a catalogued prime with --lens)")
    magnification = None
    if max_magnification is not None:
        try:
            magnification = parse_magnification(max_magnification, what="value")
        except InvalidValue as error:
            raise InvalidValue(f"--max-magnification: {error.message}") from None
    elif found is not None and abs(focal_mm - found.focal_max_mm) <= 1e-6 * focal_mm:
        # A zoom's maximum magnification is its long end's; elsewhere the nominal model stays.
        magnification = found.max_magnification
    close_mm = distance_option(close_focus, "--close-focus") if close_focus is not None else (
        found.close_focus_mm if found else None)
    pupil_value = pupil if pupil is not None else (found.pupil_magnification if found else 1.0)
    return _Lens(focal_mm, close_mm if magnification is not None else None, magnification, pupil_value)


@uses(_LENS, _BLUR)
def dof(
    ctx: typer.Context,
    aperture: ApertureOpt,
    distance: Annotated[str, typer.Option("--distance", "-d", help=f"Focus distance: {DISTANCE_HELP}.")],
    lens_options,
    blur,
    imperial: ImperialOpt = False,
    json: JsonOpt = False,
) -> None:
    """The sharp zone of one setting: near and far limits, depth of field, hyperfocal distance."""
    from sharpzone.analysis.setting import evaluate_setting, format_lookup

    chosen = _lens(ctx, lens_options, blur.pupil)
    report = evaluate_setting(
        chosen.focal_mm, f_number_option(aperture, "--aperture"),
        distance_option(distance, "--distance"), sensor=blur.sensor, coc_mm=blur.coc_mm, coc_policy=blur.coc_policy,
        reference=blur.reference, pupil_magnification=chosen.pupil, close_focus_mm=chosen.close_focus_mm,
        max_magnification=chosen.max_magnification, lookup=format_lookup(catalog_location(ctx)),
    )
    if json:
        from sharpzone.report.machine import setting_json

        echo_json(setting_json(report))
    else:
        from sharpzone.report.console import render_setting

        render_setting(report, imperial=imperial)


@uses(_LENS, _BLUR)
def stack(
    ctx: typer.Context,
    *,
    aperture: ApertureOpt,
    near: Annotated[str, typer.Option("--near", help=f"Nearest point that must be sharp: {DISTANCE_HELP}.")],
    far: Annotated[str, typer.Option("--far", help=f"Farthest point that must be sharp: {DISTANCE_HELP}.")],
    lens_options,
    overlap: Annotated[float, typer.Option("--overlap", help="Share of each frame's depth, in dioptres, that "
                                           f"neighbouring frames repeat ({OVERLAP_HELP}).")] = DEFAULT_STACK_OVERLAP,
    blur,
    imperial: ImperialOpt = False,
    json: JsonOpt = False,
) -> None:
    """A focus-stack plan: how many frames, focused where, hold a near–far range sharp."""
    from sharpzone.analysis.setting import format_lookup, plan_stack

    try:
        check_overlap(overlap)
    except InvalidValue as error:
        raise error.with_option("--overlap") from None
    chosen = _lens(ctx, lens_options, blur.pupil)
    report = plan_stack(
        chosen.focal_mm, f_number_option(aperture, "--aperture"),
        distance_option(near, "--near"), distance_option(far, "--far"), sensor=blur.sensor, coc_mm=blur.coc_mm,
        coc_policy=blur.coc_policy, reference=blur.reference, pupil_magnification=chosen.pupil, overlap=overlap,
        close_focus_mm=chosen.close_focus_mm, max_magnification=chosen.max_magnification,
        lookup=format_lookup(catalog_location(ctx)),
    )
    if json:
        from sharpzone.report.machine import stack_json

        echo_json(stack_json(report))
    else:
        from sharpzone.report.console import render_stack

        render_stack(report, imperial=imperial)

"""Options that several commands take together, declared once and given to each command by a
decorator: ``@uses(FILTERS)`` puts the filter options where the command's ``where`` parameter
stands and hands the command one built value in their place.

    @uses(FILTERS_WITH_VERDICT, JUDGING)
    def frames(ctx: typer.Context, where, judging, json: JsonOpt = False) -> None: ...

Typer reads the command's signature, so the options (their names, order, help and
placeholders) are exactly as if written out in each command.
"""

from __future__ import annotations

import functools
import inspect
from collections.abc import Callable
from dataclasses import dataclass
from typing import Annotated, Any, Optional

import typer

from sharpzone.cli.options import date_option, optional_distance, optional_f_number, optional_length
from sharpzone.optics.coc import POLICY_HELP
from sharpzone.units import DISTANCE_HELP


@dataclass(frozen=True)
class OptionGroup:
    """Options that travel together: the parameter they stand in for (``name``), the options
    themselves (``(name, Annotated type)`` or ``(name, Annotated type, default)`` in order;
    the default is ``None`` unless given), and how their values become the one value the
    command receives."""

    name: str
    options: tuple[tuple[str, Any], ...]
    build: Callable[..., Any]

    def parameters(self) -> list[inspect.Parameter]:
        return [inspect.Parameter(option[0], inspect.Parameter.KEYWORD_ONLY, annotation=option[1],
                                  default=option[2] if len(option) > 2 else None) for option in self.options]


def _resolved(func, parameter: inspect.Parameter) -> inspect.Parameter:
    annotation = parameter.annotation
    if isinstance(annotation, str):  # ``from __future__ import annotations``
        annotation = eval(annotation, func.__globals__)  # noqa: S307 - the module's own annotation text
    return parameter.replace(annotation=annotation)


def uses(*groups: OptionGroup):
    """Give a command the options of ``groups``; each group's parameter (by its name) in the
    command's signature is replaced by the group's options, and receives their built value."""

    def decorate(func):
        by_name = {group.name: group for group in groups}
        signature = inspect.signature(func)
        missing = set(by_name) - set(signature.parameters)
        if missing:
            raise TypeError(f"{func.__name__} has no parameter {', '.join(sorted(missing))} for its option group")
        parameters: list[inspect.Parameter] = []
        for parameter in signature.parameters.values():
            group = by_name.get(parameter.name)
            parameters.extend(group.parameters() if group else [_resolved(func, parameter)])
        # Typer passes every value by keyword; keyword-only parameters may come in any order.
        parameters = [p.replace(kind=inspect.Parameter.KEYWORD_ONLY) for p in parameters]

        @functools.wraps(func)
        def command(**values):
            for group in groups:
                given = {option[0]: values.pop(option[0]) for option in group.options}
                values[group.name] = group.build(**given)
            return func(**values)

        command.__signature__ = signature.replace(parameters=parameters)
        command.__annotations__ = {p.name: p.annotation for p in parameters}
        del command.__wrapped__  # typer must read the new signature, not the original's
        return command

    return decorate


Text = Optional[str]


def _frame_filter(shoot=None, body=None, lens=None, date_from=None, date_to=None, f_min=None, f_max=None,
                  focal_min=None, focal_max=None, verdict=None):
    from sharpzone.analysis.frames import FrameFilter

    return FrameFilter(
        shoot=shoot, body=body, lens=lens, date_from=date_option(date_from, "--from"),
        date_to=date_option(date_to, "--to"), f_number_min=optional_f_number(f_min, "--f-min"),
        f_number_max=optional_f_number(f_max, "--f-max"), focal_min_mm=optional_length(focal_min, "--focal-min"),
        focal_max_mm=optional_length(focal_max, "--focal-max"), verdict=verdict,
    )


_FILTER_OPTIONS = (
    ("shoot", Annotated[Text, typer.Option("--shoot", help="Only frames of this shoot.")]),
    ("body", Annotated[Text, typer.Option("--body", help="Only frames from this body.")]),
    ("lens", Annotated[Text, typer.Option("--lens", help="Only frames through this lens.")]),
    ("date_from", Annotated[Text, typer.Option("--from", help="Only frames captured on or after this date (YYYY-MM-DD).")]),
    ("date_to", Annotated[Text, typer.Option("--to", help="Only frames captured on or before this date (YYYY-MM-DD).")]),
    ("f_min", Annotated[Text, typer.Option("--f-min", help="Only frames at this f-number or narrower, e.g. 2.8.")]),
    ("f_max", Annotated[Text, typer.Option("--f-max", help="Only frames at this f-number or wider, e.g. 11.")]),
    ("focal_min", Annotated[Text, typer.Option("--focal-min", help="Only frames at this focal length (mm) or longer.")]),
    ("focal_max", Annotated[Text, typer.Option("--focal-max", help="Only frames at this focal length (mm) or shorter.")]),
)
_VERDICT_OPTION = ("verdict", Annotated[Text, typer.Option(
    "--verdict", help="Only frames with this verdict: passed, flagged, or a verdict code.")])

#: Which frames: ``--shoot … --focal-max`` → a ``FrameFilter`` as ``where``.
FILTERS = OptionGroup("where", _FILTER_OPTIONS, _frame_filter)
#: The same and ``--verdict``.
FILTERS_WITH_VERDICT = OptionGroup("where", (*_FILTER_OPTIONS, _VERDICT_OPTION), _frame_filter)


@dataclass(frozen=True)
class Judging:
    """What frames are judged against: the required range (``Requirement``) and a CoC policy
    overriding the shoot's (text, ``None`` for the shoot's own)."""

    requirement: Any
    coc_policy: str | None


def _judging(coc_policy=None, near=None, far=None, front=None, back=None) -> Judging:
    from sharpzone.analysis.requirement import Requirement

    requirement = Requirement.from_options(
        near_mm=optional_distance(near, "--near"), far_mm=optional_distance(far, "--far"),
        front_mm=optional_distance(front, "--front"), back_mm=optional_distance(back, "--back"),
    )
    return Judging(requirement, coc_policy)


#: ``--coc-policy`` and the required range ``--near/--far`` or ``--front/--back`` → ``judging``.
JUDGING = OptionGroup("judging", (
    ("coc_policy", Annotated[Text, typer.Option("--coc-policy", help=POLICY_HELP[0].upper() + POLICY_HELP[1:]
                                                + "; overrides the shoot's.")]),
    ("near", Annotated[Text, typer.Option("--near", help=f"Required range starts here ({DISTANCE_HELP}).")]),
    ("far", Annotated[Text, typer.Option("--far", help="Required range ends here (a distance or inf).")]),
    ("front", Annotated[Text, typer.Option("--front", help="Required depth in front of each frame's focus point.")]),
    ("back", Annotated[Text, typer.Option("--back", help="Required depth behind each frame's focus point.")]),
), _judging)

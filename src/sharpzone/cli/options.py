"""Option parsing shared by commands: every field type is parsed in ``sharpzone.units`` and
every bad value names the option it came from."""

from __future__ import annotations

from typing import Annotated, Optional

import typer

from sharpzone.errors import InvalidValue
from sharpzone.optics.coc import POLICY_HELP
from sharpzone.units import parse_distance, parse_f_number, parse_length_mm

REFERENCE_HELP = (
    "where distances are measured from: 'sensor' (the focal-plane mark, as lens scales and "
    "EXIF give them) or 'lens' (as optics texts give them)"
)


def _sentence(text: str) -> str:
    return text[0].upper() + text[1:] + "."


# Options that several command groups share, declared once.
SensorOpt = Annotated[
    Optional[str],
    typer.Option("--sensor", "-s", help="Sensor format name (see 'sharpzone format list'); default 36x24."),
]
CocOpt = Annotated[Optional[str], typer.Option("--coc", help="A fixed circle of confusion in mm (overrides the policy).")]
CocPolicyOpt = Annotated[Optional[str], typer.Option("--coc-policy", help=_sentence(POLICY_HELP))]
ReferenceOpt = Annotated[str, typer.Option("--reference", help=_sentence(REFERENCE_HELP))]
ImperialOpt = Annotated[bool, typer.Option("--imperial", help="Show distances in feet and inches.")]
JsonOpt = Annotated[bool, typer.Option("--json", help="Print JSON (the machine interface) instead of a table.")]
WideOpt = Annotated[bool, typer.Option("--wide", help="Show every column, however wide the table gets (default: "
                                       "minor columns give way to fit the terminal).")]


def _named(option: str, error: InvalidValue) -> InvalidValue:
    return error.with_option(option)


def distance_option(value: str, option: str) -> float:
    """A distance option (``3m``, ``10ft``, ``inf``; bare number = metres) in mm."""
    try:
        return parse_distance(value, what="value")
    except InvalidValue as error:
        raise _named(option, error) from None


def length_option(value: str, option: str) -> float:
    """A small length option (focal length, CoC; bare number = mm) in mm."""
    try:
        return parse_length_mm(value, what="value")
    except InvalidValue as error:
        raise _named(option, error) from None


def f_number_option(value: str, option: str) -> float:
    """An f-number option (``8``, ``f/8``)."""
    try:
        return parse_f_number(value, what="value")
    except InvalidValue as error:
        raise _named(option, error) from None


def choice_option(value: str, option: str, choices: tuple[str, ...]) -> str:
    """One of a fixed set of words, case-insensitive."""
    lowered = value.strip().lower()
    if lowered not in choices:
        expected = ", ".join(repr(c) for c in choices)
        raise InvalidValue(option=option, what="value", value=value, expected=f"one of {expected}")
    return lowered


def date_option(value: str | None, option: str):
    """A calendar date option written YYYY-MM-DD; ``None`` passes through."""
    import datetime as dt

    if value is None:
        return None
    try:
        return dt.date.fromisoformat(value.strip())
    except ValueError:
        raise InvalidValue(option=option, what="value", value=value, problem="is not a date",
                           expected="YYYY-MM-DD") from None


def optional_distance(value: str | None, option: str) -> float | None:
    return None if value is None else distance_option(value, option)


def optional_length(value: str | None, option: str) -> float | None:
    return None if value is None else length_option(value, option)


def optional_f_number(value: str | None, option: str) -> float | None:
    return None if value is None else f_number_option(value, option)

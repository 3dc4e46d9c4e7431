"""Command-line values of plain types without pydantic.

Typer turns each option's text into its Python value through a pydantic ``TypeAdapter``,
built on first use; importing pydantic and building the adapters costs about a tenth of a
second at every start, most of what ``sharpzone dof`` spends beyond Python itself. Every
value sharpzone takes is text, a whole number, a number, a yes/no flag or a path (or a
list of them), and each command parses its text itself (``sharpzone.cli.options``), so
these need no validation library: ``use_plain_values`` gives such parameters a converter
of their own and leaves any other to typer. If typer's internals move, nothing is replaced
and typer's own conversion runs, only slower.
"""

from __future__ import annotations

from pathlib import Path

_PLAIN = {str: str, int: int, float: float, Path: Path}


def _plain_kind(parameter):
    """The converter for ``parameter``'s values, or ``None`` when typer must convert them."""
    from typing import get_args, get_origin

    descriptor = getattr(parameter, "type_descriptor", None)
    if descriptor is None or descriptor.file_annotation is not None:
        return None
    info = descriptor.parameter_info
    if getattr(info, "parser", None) is not None or getattr(info, "click_type", None) is not None:
        return None
    if getattr(info, "min", None) is not None or getattr(info, "max", None) is not None:
        return None
    annotation = descriptor.annotation
    if get_origin(annotation) is list and len(get_args(annotation)) == 1:
        annotation = get_args(annotation)[0]
    if annotation is Path and (getattr(info, "exists", False) or getattr(info, "resolve_path", False)
                               or getattr(info, "writable", False) or not getattr(info, "readable", True)):
        return None
    if annotation is bool:
        return bool
    return _PLAIN.get(annotation)


def _converter_class():
    from dataclasses import dataclass

    from typer._click.exceptions import BadParameter
    from typer._coercion import RuntimeParam

    @dataclass(frozen=True)
    class PlainValue(RuntimeParam):
        """Converts each value to ``kind``; a value it cannot take is a usage error on ``param``."""

        kind: type = str

        def _coerce_value(self, value, param, ctx):
            if isinstance(value, (list, tuple)):
                return type(value)(self._one(item, param, ctx) for item in value)
            return self._one(value, param, ctx)

        def _one(self, value, param, ctx):
            if isinstance(value, self.kind):
                return value
            if self.kind is bool:
                raise BadParameter(f"{value!r} is not yes or no", ctx=ctx, param=param)
            try:
                return self.kind(value)
            except (TypeError, ValueError):
                raise BadParameter(f"{value!r} is not valid", ctx=ctx, param=param) from None

    return PlainValue


def use_plain_values(command) -> None:
    """Give every plain-typed parameter of ``command`` and of each command under it a
    converter that needs no pydantic (see the module's note)."""
    try:
        converter = _converter_class()
    except ImportError:
        return
    help_names = (getattr(command, "context_settings", None) or {}).get("help_option_names", ["--help"])
    _apply(command, converter, help_names)


def _help_option(command, help_names):
    """The command's ``--help`` option, made now as click would make it on first use (click
    caches it), so that its flag's value needs no pydantic either."""
    try:
        return command.get_help_option(command.context_class(command, help_option_names=list(help_names)))
    except (AttributeError, TypeError):
        return None


def _apply(command, converter, help_names) -> None:
    for parameter in (*getattr(command, "params", ()), _help_option(command, help_names)):
        kind = _plain_kind(parameter) if parameter is not None else None
        if parameter is None or kind is None or not hasattr(parameter, "_runtime_param"):
            continue
        descriptor = parameter.type_descriptor
        parameter._runtime_param = converter(parameter_info=descriptor.parameter_info,
                                             annotation=descriptor.annotation, kind=kind)
    for sub in (getattr(command, "commands", None) or {}).values():
        _apply(sub, converter, help_names)

"""Help that reads like the trade: the placeholder each option takes, and one example per
command, in one place; ``polish`` applies them to the built command tree.

A placeholder is chosen by the option's name (``--focal`` takes ``MM``), with a few
commands where the same name takes something else (``ingest --distances FILE.csv``);
an option not listed gets its own name in capitals. A command's example is its epilog.
"""

from __future__ import annotations

DISTANCE = "DISTANCE"
METAVARS = {
    "--catalog": "PATH|URL",
    "--focal": "MM", "--coc": "MM", "--width": "MM", "--height": "MM", "--focal-min": "MM", "--focal-max": "MM",
    "--aperture": "N", "--min-aperture": "N", "--f-min": "N", "--f-max": "N", "--jobs": "N",
    "--distance": DISTANCE, "--near": DISTANCE, "--far": DISTANCE, "--front": DISTANCE, "--back": DISTANCE,
    "--focus": DISTANCE, "--close-focus": DISTANCE, "--distances": "DISTANCE,…",
    "--sensor": "FORMAT", "--format": "FORMAT", "--shoot": "NAME", "--body": "NAME", "--lens": "NAME",
    "--name": "NEW_NAME", "--reassign-to": "NAME", "--alias": "NAME",
    "--exif-name": "TEXT", "--make": "TEXT", "--model": "TEXT", "--serial": "TEXT", "--description": "TEXT",
    "--source": "TEXT", "--notes": "TEXT",
    "--coc-policy": "POLICY", "--coc-divisor": "K", "--pupil": "RATIO", "--overlap": "FRACTION",
    "--reference": "sensor|lens", "--stops": "full|half|third", "--verdict": "VERDICT",
    "--from": "YYYY-MM-DD", "--to": "YYYY-MM-DD", "--pixels": "WIDTHxHEIGHT", "--folder": "FOLDER",
    "--out": "FILE",
}
# (command path, option) → placeholder, where a command's option means something else.
METAVARS_IN = {
    ("ingest", "--distances"): "FILE.csv",
    ("lens add", "--focal"): "MM[-MM]", ("lens edit", "--focal"): "MM[-MM]",
    ("lens add", "--aperture"): "N[-N]", ("lens edit", "--aperture"): "N[-N]",
}
ARGUMENTS = {"name": "NAME", "paths": "PATH", "lens": "LENS", "bundle": "FILE", "exif_name": "EXIF_TEXT"}

EXAMPLES = {
    "dof": "sharpzone dof --focal 50 --aperture 8 --distance 3m",
    "stack": "sharpzone stack --focal 100 --aperture 8 --near 30cm --far 35cm",
    "ingest": "sharpzone ingest /media/card1 --shoot 'Harbour portraits'",
    "frames": "sharpzone frames --shoot 'Harbour portraits' --lens 'Korvath 50/1.8'",
    "check": "sharpzone check --shoot 'Harbour portraits' --near 2.5m --far 4m",
    "stats": "sharpzone stats --shoot 'Harbour portraits'",
    "measure": "sharpzone measure --shoot 'Harbour portraits'",
    "report": "sharpzone report --shoot 'Harbour portraits' --out harbour-portraits.html",
    "sheet": "sharpzone sheet 'Korvath 50/1.8' --body 'Korvath K7' --out korvath-50.pdf",
    "demo": "sharpzone demo --folder sharpzone-demo",
    "format list": "sharpzone format list",
    "format show": "sharpzone format show 36x24",
    "format add": "sharpzone format add 33x44 --width 43.8 --height 32.9",
    "format edit": "sharpzone format edit 33x44 --coc-divisor 1730",
    "format remove": "sharpzone format remove 33x44",
    "body list": "sharpzone body list",
    "body show": "sharpzone body show 'Korvath K7'",
    "body add": "sharpzone body add 'Korvath K7' --make Korvath --model K7 --format 36x24 --pixels 6000x4000",
    "body edit": "sharpzone body edit 'Korvath K7' --serial 0042",
    "body remove": "sharpzone body remove 'Korvath K7' --reassign-to 'Korvath K8'",
    "lens list": "sharpzone lens list",
    "lens show": "sharpzone lens show 'Korvath 50/1.8'",
    "lens add": "sharpzone lens add 'Korvath 24-70/2.8' --focal 24-70 --aperture 2.8 --close-focus 38cm",
    "lens edit": "sharpzone lens edit 'Korvath 24-70/2.8' --min-aperture 22",
    "lens remove": "sharpzone lens remove 'Korvath 24-70/2.8' --reassign-to 'Korvath 24-70/2.8 II'",
    "lens add-alias": "sharpzone lens add-alias 'Korvath 50/1.8' 'KV 50mm F1.8'",
    "lens remove-alias": "sharpzone lens remove-alias 'KV 50mm F1.8'",
    "shoot list": "sharpzone shoot list",
    "shoot show": "sharpzone shoot show 'Harbour portraits'",
    "shoot add": "sharpzone shoot add 'Harbour portraits' --front 8cm --back 12cm",
    "shoot edit": "sharpzone shoot edit 'Harbour portraits' --near 2.5m --far 4m",
    "shoot remove": "sharpzone shoot remove 'Harbour portraits' --with-frames",
    "catalog info": "sharpzone catalog info",
    "catalog export": "sharpzone catalog export backup.zip",
    "catalog import": "sharpzone catalog import backup.zip",
}


def _argument_usage(metavar: str, required: bool, many: bool):
    text = metavar + ("…" if many else "")
    return lambda: text if required else f"[{text}]"


def _polish_params(command, path: str) -> None:
    for param in command.params:
        if param.param_type_name == "argument":
            metavar = ARGUMENTS.get(param.name, param.name.upper())
            param.metavar = metavar
            param._usage_display_name = _argument_usage(metavar, param.required, param.nargs != 1)
            param.display_type_rich = lambda ctx: None
        elif param.param_type_name == "option" and not getattr(param, "is_flag", False) and param.name != "help":
            option = param.opts[0] if param.opts[0].startswith("--") else param.opts[-1]
            param.metavar = METAVARS_IN.get((path, option)) or METAVARS.get(option) or param.name.upper()


def polish(command, path: str = "") -> None:
    """Give ``command`` and every command under it readable placeholders and its example."""
    _polish_params(command, path)
    example = EXAMPLES.get(path)
    if example and not command.epilog:
        command.epilog = f"\b\nExample:\n  {example}"
    for name, sub in (getattr(command, "commands", None) or {}).items():
        polish(sub, f"{path} {name}".strip())


# What a value of each built-in type should look like, for the usage errors below.
_EXPECTED_BY_TYPE = {"int": "a whole number", "float": "a number", "Path": "a path", "bool": "yes or no"}


def _given_value(argv: list[str], opts: list[str]) -> str | None:
    for index, arg in enumerate(argv):
        for opt in opts:
            if arg == opt and index + 1 < len(argv):
                return argv[index + 1]
            if arg.startswith(opt + "="):
                return arg.split("=", 1)[1]
    return None


def usage_error(error, argv: list[str]):
    """A click/typer usage error as our one-line ``SharpzoneError``: the option, the value
    given and what was expected, and where to read more — never the validator's wording."""
    from sharpzone.errors import InvalidValue

    context = getattr(error, "ctx", None)
    command = context.command_path if context is not None else "sharpzone"
    hint = f"see '{command} --help'"
    param = getattr(error, "param", None)
    kind = type(error).__name__
    if kind == "NoSuchOption":
        possibilities = sorted(set(getattr(error, "possibilities", None) or []) - {"--help"})
        if possibilities:
            hint = f"did you mean {' or '.join(possibilities)}?"
        return InvalidValue(what=error.option_name, problem=f"is not an option of '{command}'", hint=hint)
    if param is not None:
        is_option = param.param_type_name == "option"
        name = param.opts[0] if is_option else (param.metavar or param.name.upper())
        placeholder = param.metavar or param.name.upper()
        if kind == "MissingParameter":
            expected = f"--{param.name.replace('_', '-')} {placeholder}" if is_option else placeholder
            return InvalidValue(what=name, problem="is missing", expected=None if not is_option else expected,
                                hint=hint)
        type_name = getattr(getattr(param, "type_descriptor", None), "annotation", None)
        type_name = getattr(type_name, "__name__", str(type_name))
        expected = _EXPECTED_BY_TYPE.get(type_name, placeholder)
        value = _given_value(argv, list(param.opts)) if is_option else None
        if value is None:
            return InvalidValue(option=name, problem="is not valid", expected=expected, hint=hint)
        return InvalidValue(option=name, what="value", value=value, problem="is not valid", expected=expected,
                            hint=hint)
    message = " ".join(str(error.message if hasattr(error, "message") else error).split())
    return InvalidValue(message.rstrip("."), hint=hint)

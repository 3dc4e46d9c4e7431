"""Entry point: runs the typer app and renders every user-facing error exactly once."""

from __future__ import annotations

import atexit
import os
import sys
from typing import NoReturn

import typer
from typer.core import TyperGroup

from sharpzone.errors import Interrupted, SharpzoneError

PROG = "sharpzone"


def _say_error(message: str) -> None:
    from sharpzone.report.inert import inert

    typer.echo(f"{PROG}: error: {inert(message, newlines=False)}", err=True)


def _one_line(text: str) -> str:
    return " ".join(str(text).split())


def _catalog_location(argv: list[str]) -> str | None:
    """The catalogue named by ``--catalog`` in ``argv`` or by the environment, if any."""
    for index, arg in enumerate(argv):
        if arg == "--catalog" and index + 1 < len(argv):
            return argv[index + 1]
        if arg.startswith("--catalog="):
            return arg.split("=", 1)[1]
    return os.environ.get("SHARPZONE_CATALOG")


def _scrubbed(text: str, argv: list[str]) -> str:
    """``text`` without the catalogue URL's password, whoever wrote it."""
    from sharpzone.catalog.location import scrub_secrets

    return scrub_secrets(text, _catalog_location(argv))


def _print_traceback(error: BaseException, argv: list[str]) -> None:
    """The traceback of ``error`` on stderr with the catalogue password scrubbed out: the
    drivers' messages inside it are not ours to word."""
    import traceback

    text = "".join(traceback.format_exception(error))
    sys.stderr.write(_scrubbed(text, argv))


class SharpzoneGroup(TyperGroup):
    """The top-level command group: one clear line on stderr for any error we can explain.

    Exit codes: 0 success, 1 a ``SharpzoneError`` (2 for bad values and usage), 130 on
    Ctrl-C (143 on SIGTERM during an ingest), 1 with one line for a bug. A traceback
    is shown only with ``--debug``. A closed pipe (``| head``) is quiet.
    """

    def __init__(self, *args, **kwargs) -> None:
        super().__init__(*args, **kwargs)
        from sharpzone.cli.help import polish
        from sharpzone.cli.plain_values import use_plain_values

        polish(self)
        use_plain_values(self)

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):  # noqa: D102
        argv = list(sys.argv[1:] if args is None else args)
        debug = "--debug" in argv
        try:
            result = super().main(argv, prog_name or PROG, complete_var, standalone_mode=False, **extra)
            code = result if isinstance(result, int) else 0
        except typer.Exit as exit_:
            code = exit_.exit_code
        except (typer.Abort, KeyboardInterrupt):
            code = 130
        except typer.TyperException as error:
            # Usage errors (unknown option, missing value, bad type) carry exit code 2; they
            # are said in our words, naming the option, the value and what was expected.
            from sharpzone.cli.help import usage_error

            if type(error).__name__ == "NoArgsIsHelpError":  # a group given no command: its help
                typer.echo(error.format_message())
                code = 0
            else:
                _say_error(_one_line(str(usage_error(error, argv))))
                code = getattr(error, "exit_code", 2)
        except Interrupted as error:
            # Ctrl-C or SIGTERM during a long run: what was kept and how to finish, one line.
            typer.echo(f"{PROG}: {_one_line(error)}", err=True)
            code = error.exit_code
        except SharpzoneError as error:
            if debug:
                _print_traceback(error, argv)
            _say_error(_one_line(_scrubbed(str(error), argv)))
            code = error.exit_code
        except BrokenPipeError:
            # The reader went away (``sharpzone frames | head``): say nothing, and keep
            # Python from complaining again when it flushes stdout at exit.
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
            code = 1
        except Exception as error:  # noqa: BLE001 - a bug: one line, its traceback with --debug
            if debug:
                _print_traceback(error, argv)
            detail = _one_line(_scrubbed(f"{type(error).__name__}: {error}", argv))
            _say_error(f"internal error: {detail}; run again with --debug and report it")
            code = 1
        if standalone_mode:
            sys.exit(code)
        return code


def _command_named(argv: list[str]) -> str | None:
    """The top-level command ``argv`` runs, when the global options before it are plain
    (``--catalog``, ``--debug``); ``None`` for anything else (help, version, a typo)."""
    index = 0
    while index < len(argv):
        arg = argv[index]
        if arg == "--catalog":
            index += 2
        elif arg.startswith("--catalog=") or arg == "--debug":
            index += 1
        else:
            return None if arg.startswith("-") else arg
    return None


def run() -> NoReturn:
    """Console-script entry point (``sharpzone``): builds only the command being run (all of
    them for the top-level help or a name it does not know), runs it, and ends the process
    with its exit code (``leave``)."""
    from sharpzone.cli.app import make_app

    try:
        make_app(_command_named(sys.argv[1:]))()
        code: object = 0
    except SystemExit as exit_:
        code = exit_.code
    leave(code)


def leave(code: object) -> NoReturn:
    """End the process with ``code`` (an ``int``; ``None`` is 0, anything else is printed on
    stderr and gives 1, as ``sys.exit`` does) once the exit handlers have run and stdout and
    stderr are flushed, without the interpreter's teardown. Everything a command writes is
    closed and committed by then; the teardown would only free, one by one, the objects of
    every module loaded: 50–80 ms once the database library is in, which a user would wait
    for after every command."""
    if code is None:
        code = 0
    elif not isinstance(code, int):
        sys.stderr.write(f"{code}\n")
        code = 1
    try:
        atexit._run_exitfuncs()  # what ``sys.exit`` would run: temporary folders, pools, logging
    finally:
        for stream in (sys.stdout, sys.stderr):
            try:
                stream.flush()
            except (OSError, ValueError):  # a reader gone away (``| head``), or a stream closed
                pass
        os._exit(code & 0xFF)

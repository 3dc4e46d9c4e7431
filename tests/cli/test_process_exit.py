"""How the console script ends its process (``sharpzone.cli.main.leave``): as ``sys.exit``
would end it (Python's documentation of ``sys.exit``: ``None`` is 0, another object is
printed on stderr and gives 1; POSIX ``_exit``: the status is the low eight bits), with every
exit handler run and all output out, but without the interpreter's teardown."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap

import pytest

# ``leave(code)`` in a fresh interpreter with buffered output (PYTHONUNBUFFERED unset), an
# exit handler, and an object whose finaliser would speak only in the interpreter's teardown.
LEAVE = textwrap.dedent("""
    import atexit, sys
    from sharpzone.cli.main import leave

    class Finalised:
        def __del__(self):
            sys.__stderr__.write("torn down\\n")

    kept = Finalised()
    atexit.register(lambda: sys.stderr.write("handler ran\\n"))
    sys.stdout.write("x" * 100_000 + "\\n")  # more than one buffer, unflushed
    leave(eval(sys.argv[1]))
""")


def _leave(code: str) -> subprocess.CompletedProcess:
    env = {key: value for key, value in os.environ.items() if key != "PYTHONUNBUFFERED"}
    return subprocess.run([sys.executable, "-c", LEAVE, code], capture_output=True, text=True, env=env)


@pytest.mark.parametrize(("code", "status"), [("0", 0), ("None", 0), ("2", 2), ("130", 130), ("256 + 3", 3)])
def test_the_status_is_what_sys_exit_would_give(code, status):
    done = _leave(code)
    assert done.returncode == status
    assert done.stdout == "x" * 100_000 + "\n"  # all of it, though nothing flushed it
    assert done.stderr == "handler ran\n"  # and no teardown: the finaliser never spoke


def test_any_other_object_is_printed_and_gives_1():
    done = _leave("'no such shoot'")
    assert done.returncode == 1
    assert done.stderr.splitlines() == ["no such shoot", "handler ran"]


def test_a_command_through_the_console_script_keeps_its_output_and_status(tmp_path):
    env = {key: value for key, value in os.environ.items() if key != "PYTHONUNBUFFERED"}
    env["SHARPZONE_CATALOG"] = str(tmp_path / "none-yet.sqlite")
    good = subprocess.run([sys.executable, "-m", "sharpzone", "dof", "-f", "50", "-a", "8", "-d", "3m", "--json"],
                          capture_output=True, text=True, env=env)
    assert good.returncode == 0, good.stderr
    assert json.loads(good.stdout)  # the whole document reached the pipe
    bad = subprocess.run([sys.executable, "-m", "sharpzone", "dof", "-f", "50", "-a", "8", "-d", "3 parsecs"],
                         capture_output=True, text=True, env=env)
    assert bad.returncode == 2
    assert bad.stderr.startswith("sharpzone: error:") and "parsecs" in bad.stderr

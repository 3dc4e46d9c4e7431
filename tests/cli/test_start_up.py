"""Start-up loads only what a command needs (no timing here: the figures are in
``tests/benchmarks/test_bench_startup.py``)."""

from __future__ import annotations

import json
import os
import subprocess
import sys

import pytest

from sharpzone.cli.main import _command_named

# What a process has imported once the command ran, printed as JSON on stderr's last line.
PROBE = (
    "import atexit, json, sys\n"
    "atexit.register(lambda: sys.stderr.write(json.dumps(sorted(m for m in sys.modules)) + '\\n'))\n"
    "from sharpzone.cli.main import run\n"
    "sys.argv = ['sharpzone', *sys.argv[1:]]\n"
    "run()\n"
)


def _modules(args: list[str], catalog) -> set[str]:
    env = {**os.environ, "SHARPZONE_CATALOG": str(catalog), "COLUMNS": "120"}
    result = subprocess.run([sys.executable, "-c", PROBE, *args], capture_output=True, text=True, env=env)
    assert result.returncode == 0, result.stderr
    return set(json.loads(result.stderr.strip().splitlines()[-1]))


@pytest.mark.parametrize(("argv", "command"), [
    (["dof", "-f", "50"], "dof"),
    (["--catalog", "x.sqlite", "--debug", "lens", "list"], "lens"),
    (["--catalog=x.sqlite", "frames"], "frames"),
    (["--help"], None),
    (["--version"], None),
    ([], None),
    (["--catalog"], None),
])
def test_the_command_to_build_is_read_from_the_global_options(argv, command):
    assert _command_named(argv) == command


def test_dof_without_a_catalogue_needs_no_database_table_or_validation_library(tmp_path):
    loaded = _modules(["dof", "-f", "50", "-a", "8", "-d", "3m", "--json"], tmp_path / "none-yet.sqlite")
    for heavy in ("sqlalchemy", "pandas", "pydantic", "rich", "alembic", "matplotlib"):
        assert heavy not in loaded, heavy
    assert "sharpzone.cli.frames_commands" not in loaded  # only the command run is built


def test_a_read_command_builds_only_its_own_group(tmp_path):
    catalog = tmp_path / "c.sqlite"
    _modules(["shoot", "add", "Harbour"], catalog)
    loaded = _modules(["shoot", "list", "--json"], catalog)
    assert "sqlalchemy" in loaded and "pydantic" not in loaded and "pandas" not in loaded
    assert "sharpzone.cli.shoot_commands" in loaded and "sharpzone.cli.sheet_commands" not in loaded

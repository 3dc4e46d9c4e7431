"""Each command imports only what it needs (issue 16 part 3), checked by the modules loaded,
not by timing: ``--help`` and ``dof`` without a catalogue load no database library, the
catalogue's list commands no pandas, no numpy and no bundle code, and no read command on a
current catalogue loads Alembic, pandas or numpy when no frame matches. Each runs in a fresh
interpreter, as the console script does."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap

import pytest

# The console script ends its process once the command is done (``cli.main.leave``), so
# what was loaded is told from an exit handler, on the real stdout.
LOADED = textwrap.dedent("""
    import atexit, io, json, sys
    sys.argv = ["sharpzone", *sys.argv[1:]]
    heavy = ("sqlalchemy", "pandas", "numpy", "alembic", "rich", "sharpzone.catalog.service.bundle")

    def tell():
        sys.__stdout__.write(json.dumps({"loaded": [name for name in heavy if name in sys.modules]}) + "\\n")
        sys.__stdout__.flush()

    atexit.register(tell)
    sys.stdout = io.StringIO()  # the command's own output is not wanted here
    from sharpzone.cli.main import run
    run()
""")


def _loaded(env: dict[str, str], *args: str) -> set[str]:
    done = subprocess.run([sys.executable, "-c", LOADED, *args], capture_output=True, text=True, env=env, check=True)
    figures = json.loads(done.stdout.strip().splitlines()[-1])
    return set(figures["loaded"])


@pytest.fixture(scope="module")
def env(tmp_path_factory):
    folder = tmp_path_factory.mktemp("budget")
    environment = {**os.environ, "SHARPZONE_CATALOG": str(folder / "empty.sqlite"), "COLUMNS": "120"}
    subprocess.run([sys.executable, "-m", "sharpzone", "shoot", "add", "Empty"], check=True, capture_output=True,
                   env=environment)
    # A lens with a maximum magnification, which the lens tables show as 1:1.
    subprocess.run([sys.executable, "-m", "sharpzone", "lens", "add", "Close 100/2.8", "--focal", "100", "--aperture",
                    "2.8", "--close-focus", "30cm", "--max-magnification", "1:1"], check=True, capture_output=True,
                   env=environment)
    return environment


def test_help_loads_no_library_of_the_commands(env):
    assert not _loaded(env, "--help") & {"sqlalchemy", "pandas", "numpy", "alembic", "rich"}


def test_dof_without_a_catalogue_loads_no_database_library(env, tmp_path):
    none_yet = {**env, "SHARPZONE_CATALOG": str(tmp_path / "none-yet.sqlite")}
    assert not _loaded(none_yet, "dof", "-f", "50", "-a", "8", "-d", "3m", "--json") & {"sqlalchemy", "pandas",
                                                                                         "alembic"}


@pytest.mark.parametrize("options", [[], ["--sensor", "APS-C"]])
def test_dof_with_a_current_catalogue_loads_no_database_library(env, options):
    # The catalogue's formats are read through sqlite3 (``catalog.peek.sensor_format``).
    assert not _loaded(env, "dof", "-f", "50", "-a", "8", "-d", "3m", *options, "--json") & {"sqlalchemy", "pandas",
                                                                                             "alembic"}


@pytest.mark.parametrize("command", [["body", "list"], ["format", "list"], ["shoot", "show", "Empty"],
                                     ["catalog", "info"], ["lens", "list"], ["lens", "show", "Close 100/2.8"]])
def test_catalogue_lists_load_neither_pandas_numpy_nor_the_bundle_code(env, command):
    assert not _loaded(env, *command) & {"pandas", "numpy", "alembic", "sharpzone.catalog.service.bundle"}


@pytest.mark.parametrize("command", [["frames", "--json"], ["frames", "--csv"], ["check", "--json"],
                                     ["check", "--jsonl"], ["stats"], ["stats", "--json"]])
def test_read_commands_with_no_frame_to_read_load_neither_pandas_numpy_nor_alembic(env, command):
    assert not _loaded(env, *command) & {"pandas", "numpy", "alembic"}


@pytest.mark.parametrize("command", [["frames", "--json"], ["frames", "--csv"], ["check", "--jsonl"],
                                     ["stats", "--json"]])
def test_machine_output_loads_no_table_renderer(env, command):
    # A script's command: the machine interface (report.frames_machine) draws nothing.
    assert "rich" not in _loaded(env, *command)


def test_lens_list_loads_no_pandas_nor_alembic(env):
    assert not _loaded(env, "lens", "list") & {"pandas", "alembic"}


def test_an_ingest_that_registers_a_body_and_a_lens_loads_neither_numpy_nor_pandas(env, tmp_path):
    """A lens registered from frames has no maximum magnification, so its close-up check
    (numpy) is not needed: loading numpy cost the first batch of an ingest about 0.2 s. A
    new catalogue is stamped without Alembic, and the process that writes reads no file,
    so it loads no metadata reader (the workers do); with ``--json`` nothing is drawn, so
    it loads no rich either."""
    from tests.ingest.images import exif_block, jpeg

    card = tmp_path / "card"
    card.mkdir()
    for number in range(3):
        (card / f"IMG_{number}.JPG").write_bytes(jpeg(exif_block(subject_distance=(2000 + number, 1000))))
    assert not _loaded(env, "ingest", str(card), "--shoot", "Card", "--json") & {
        "pandas", "numpy", "alembic", "rich", "exiv2", "exifread", "sharpzone.ingest.capture"}
    done = subprocess.run([sys.executable, "-m", "sharpzone", "lens", "list", "--json"], env=env,
                          capture_output=True, text=True, check=True)
    assert json.loads(done.stdout), "the card's lens was registered"

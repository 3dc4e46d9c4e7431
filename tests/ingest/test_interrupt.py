"""Ctrl-C, SIGTERM and SIGKILL during a parallel ingest, through the real command in a
subprocess: one line, the right exit code, no worker tracebacks, and a rerun finishes
(issue 11 part 2). The signal is sent once some batches are committed."""

from __future__ import annotations

import os
import re
import signal
import subprocess
import sys
import textwrap
import time

import pytest

from sharpzone.catalog.engine import open_catalog
from tests.ingest.images import exif_block, jpeg
from tests.ingest.test_pipeline import _frame_count

FILES = 300

# The command as a user runs it, with a reader slowed to 20 ms a file and batches of 20 so
# the run is still going when the signal comes.
COMMAND = textwrap.dedent("""
    import sys
    import sharpzone.ingest.pipeline as pipeline
    from tests.ingest.readers import slow_reader
    pipeline.READER = slow_reader
    pipeline.BATCH_SIZE = 20
    from sharpzone.cli.main import run
    sys.argv = ["sharpzone", *sys.argv[1:]]
    run()
""")


@pytest.fixture
def card(tmp_path, written):
    folder = tmp_path / "card"
    data = jpeg(exif_block())
    for number in range(FILES):
        written(f"IMG_{number:04d}.JPG", data, folder)
    return folder


def _start(url, card):
    root = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
    env = {**os.environ, "PYTHONPATH": root}
    return subprocess.Popen([sys.executable, "-c", COMMAND, "--catalog", url, "ingest", str(card), "--jobs", "2",
                             "--shoot", "Card"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env,
                            start_new_session=True)


def _wait_for_frames(url, at_least: int) -> None:
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and _frame_count(url) < at_least:
        time.sleep(0.05)


def _group_gone(pgid: int, within_s: float = 5.0) -> bool:
    deadline = time.monotonic() + within_s
    while time.monotonic() < deadline:
        try:
            os.killpg(pgid, 0)
        except ProcessLookupError:
            return True
        time.sleep(0.05)
    return False


@pytest.fixture
def sqlite_url(tmp_path):
    url = f"sqlite:///{tmp_path / 'cat.sqlite'}"
    with open_catalog(url):
        pass
    return url


@pytest.mark.parametrize(("number", "to_group", "code"), [(signal.SIGINT, True, 130), (signal.SIGTERM, False, 143)])
def test_interrupt_says_one_line_and_a_rerun_finishes(card, sqlite_url, number, to_group, code):
    process = _start(sqlite_url, card)
    _wait_for_frames(sqlite_url, 40)
    if to_group:
        os.killpg(process.pid, number)  # Ctrl-C reaches the workers too
    else:
        process.send_signal(number)
    out, err = process.communicate(timeout=60)
    assert process.returncode == code, err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    match = re.fullmatch(r"sharpzone: interrupted: (\d+) frames saved; rerun the same command to finish", lines[0])
    assert match, lines[0]
    saved = int(match.group(1))
    assert 40 <= saved < FILES and saved == _frame_count(sqlite_url)
    assert _group_gone(process.pid)
    rerun = _start(sqlite_url, card)
    out, err = rerun.communicate(timeout=120)
    assert rerun.returncode == 0 and err == "", err
    assert _frame_count(sqlite_url) == FILES


def test_sigkill_of_the_parent_leaves_no_worker_output(card, sqlite_url):
    process = _start(sqlite_url, card)
    _wait_for_frames(sqlite_url, 40)
    process.send_signal(signal.SIGKILL)
    out, err = process.communicate(timeout=60)
    assert _group_gone(process.pid), "workers must leave when their parent is gone"
    assert err == ""

"""Start-up of whole commands, as a user waits for them, against a bare ``import numpy``.

Run: ``python -m pytest tests/benchmarks/test_bench_startup.py -m benchmark -s``.
Goals (issue 16 part 3): ``sharpzone --help`` and ``sharpzone dof … --json`` within 2× of
``python -c "import numpy"``; every read command on an empty catalogue, and on a 300,000-frame
one each command whose answer does not read every frame, within 0.5 s (≤ 4× ``import
numpy``). Each figure is the best of several runs, all taken in the same run so the ratios
compare like with like on a busy machine.

The commands run as installed, with their bytecode compiled (``conftest.installed_bytecode``).
"""

from __future__ import annotations

import os
import subprocess
import sys
import time

import pytest

from tests.benchmarks.test_bench_check import FILL

pytestmark = pytest.mark.benchmark

RUNS = 7
SHARPZONE = [sys.executable, "-m", "sharpzone"]
# Read commands (``sharpzone.cli.state.READ_COMMANDS``), on an empty catalogue.
READ_COMMANDS = [
    ["format", "list"], ["body", "list"], ["lens", "list", "--json"], ["shoot", "show", "Empty"],
    ["catalog", "info"], ["frames", "--json"], ["check", "--json"], ["stats"],
]


# On a 300,000-frame catalogue: the commands whose answer does not read every frame.
BIG_FRAMES = int(os.environ.get("SHARPZONE_BENCH_FRAMES", "300000").split(",")[0])
BIG_COMMANDS = [
    ["format", "list"], ["body", "list"], ["lens", "list", "--json"], ["shoot", "show", "Empty"],
    ["catalog", "info"], ["frames", "--json", "--shoot", "Empty"], ["check", "--json", "--shoot", "Empty"],
    ["stats", "--shoot", "Empty"],
]


def _best_of(command: list[str], env: dict[str, str]) -> float:
    subprocess.run(command, check=True, capture_output=True, env=env)  # warm the file cache
    times = []
    for _ in range(RUNS):
        start = time.perf_counter()
        subprocess.run(command, check=True, capture_output=True, env=env)
        times.append(time.perf_counter() - start)
    return min(times)


@pytest.fixture(scope="module")
def env(tmp_path_factory):
    """An environment whose catalogue is an empty one (one shoot to show), made once."""
    folder = tmp_path_factory.mktemp("startup")
    environment = {**os.environ, "SHARPZONE_CATALOG": str(folder / "empty.sqlite"), "COLUMNS": "120"}
    subprocess.run([*SHARPZONE, "shoot", "add", "Empty"], check=True, capture_output=True, env=environment)
    return environment


def test_start_up_ratios(env, tmp_path):
    numpy = _best_of([sys.executable, "-c", "import numpy"], env)
    nothing = _best_of([sys.executable, "-c", "pass"], env)
    no_catalogue = {**env, "SHARPZONE_CATALOG": str(tmp_path / "none-yet.sqlite")}
    figures = {
        "--help": _best_of([*SHARPZONE, "--help"], env),
        "dof --json (no catalogue yet)": _best_of([*SHARPZONE, "dof", "-f", "50", "-a", "8", "-d", "3m", "--json"],
                                                  no_catalogue),
        "dof --json (a catalogue)": _best_of([*SHARPZONE, "dof", "-f", "50", "-a", "8", "-d", "3m", "--json"], env),
    }
    for command in READ_COMMANDS:
        figures[" ".join(command)] = _best_of([*SHARPZONE, *command], env)
    big = {**env, "SHARPZONE_CATALOG": f"sqlite:///{tmp_path / 'big.sqlite'}"}
    subprocess.run([sys.executable, "-c", FILL, big["SHARPZONE_CATALOG"], str(BIG_FRAMES)], check=True)
    subprocess.run([*SHARPZONE, "shoot", "add", "Empty"], check=True, capture_output=True, env=big)
    for command in BIG_COMMANDS:
        figures[f"{' '.join(command)} ({BIG_FRAMES:,} frames)"] = _best_of([*SHARPZONE, *command], big)
    print(f"\npython -c pass: {nothing:.3f} s; python -c 'import numpy': {numpy:.3f} s (best of {RUNS})")
    for name, seconds in figures.items():
        print(f"  sharpzone {name:<56} {seconds:.3f} s  {seconds / numpy:4.1f}× import numpy")
    assert figures["--help"] <= 2 * numpy
    assert figures["dof --json (no catalogue yet)"] <= 2 * numpy
    slow = {name: seconds for name, seconds in figures.items() if name.split()[0] != "dof" and seconds > 0.5}
    assert not slow, f"read commands over 0.5 s: {slow}"
